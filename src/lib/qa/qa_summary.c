/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Everything the lot report shows, computed in one call: the lot's statistics, each probe's
** drift since its previous calibration, and the control charts of the lot's part. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "qa_int.h"

/* A probe's as-found value for the part's charts, by its id (the charts sum them in probe id
** order, as bg_store_lot_history gives them). */
struct asf_pair {
    long long probe_id;
    double mk;
};

/* Each probe's drift, from the lot's histories read in one pass. */
struct probes_ctx {
    bg_qa_lot_summary *out;
    const bg_qa_opts *o;
    const struct bgi_lot_versions *lv;
    const bg_qa_lot_sink *sink;  /* NULL: keep each probe in out->probes */
    bg_qa_probe one;             /* the probe being handed to the sink */
    struct asf_pair *asf;
    size_t nasf, capasf;
    bg_error *err;
    int rc;
};

/* A default limit comes from the lot's R25 tolerance in force at each calibration's start, as
** drift --probe takes it: every calibration in the lot's histories counts toward this lot. */
static int limits_at(const struct bgi_lot_versions *lv, bg_qa_probe *p, bg_error *err)
{
    if (p->limit_from != BG_QA_FROM_DEFAULT || p->n == 0 || lv->n < 2)
        return BG_OK;
    if (!(p->limit_at = malloc(p->n * sizeof *p->limit_at)))
        return bg_error_set(err, BG_ENOMEM, "out of memory for %zu calibrations", p->n);
    for (size_t i = 0; i < p->n; i++)
        p->limit_at[i] = bg_qa_tol_limit_k(bgi_qa_lot_version_at(lv, p->started_at[i]));
    return BG_OK;
}

/* The next probe: a new element of out->probes, or the one reused for the sink. */
static bg_qa_probe *next_probe(struct probes_ctx *c)
{
    bg_qa_lot_summary *out = c->out;
    if (c->sink) {
        bg_qa_probe_release(&c->one);
        out->nprobes++;
        return &c->one;
    }
    if (out->nprobes == out->capprobes) {
        size_t cap = out->capprobes ? 2 * out->capprobes : 64;
        bg_qa_probe *np = realloc(out->probes, cap * sizeof *np);
        if (!np) {
            c->rc = bg_error_set(c->err, BG_ENOMEM, "out of memory listing the probes of lot "
                                 "'%s'", out->stats.lot.code);
            return NULL;
        }
        memset(np + out->capprobes, 0, (cap - out->capprobes) * sizeof *np);
        out->probes = np, out->capprobes = cap;
    }
    return &out->probes[out->nprobes++];
}

static int keep_asfound(struct probes_ctx *c, const bg_qa_probe *p)
{
    double mk;
    if (!bgi_qa_asfound(p->fits, p->started_at, p->n, &mk))
        return BG_OK;
    if (c->nasf == c->capasf) {
        size_t cap = c->capasf ? 2 * c->capasf : 64;
        struct asf_pair *na = realloc(c->asf, cap * sizeof *na);
        if (!na)
            return bg_error_set(c->err, BG_ENOMEM, "out of memory reading the history of "
                                "lot '%s'", c->out->stats.lot.code);
        c->asf = na, c->capasf = cap;
    }
    c->asf[c->nasf].probe_id = p->fits[0].probe_id, c->asf[c->nasf++].mk = mk;
    return BG_OK;
}

static int probe_cb(const char *serial, const bg_fit_row *fits, char (*started_at)[BG_TIME],
                    size_t n, size_t unfitted, void *vctx)
{
    struct probes_ctx *c = vctx;
    bg_qa_lot_summary *out = c->out;
    bg_qa_probe *p = next_probe(c);
    if (!p)
        return 1;
    snprintf(p->serial, sizeof p->serial, "%s", serial);
    p->lot = out->stats.lot;
    if (n) {
        p->fits = malloc(n * sizeof *p->fits);
        p->started_at = malloc(n * sizeof *p->started_at);
        if (!p->fits || !p->started_at) {
            c->rc = bg_error_set(c->err, BG_ENOMEM, "out of memory reading the %zu "
                                 "calibrations of probe '%s'", n, serial);
            return 1;
        }
        memcpy(p->fits, fits, n * sizeof *p->fits);
        memcpy(p->started_at, started_at, n * sizeof *p->started_at);
    }
    p->n = p->cap = n;
    p->unfitted = unfitted;
    bgi_qa_limits(c->o, &out->stats.spec, p);
    p->have_history = 1;
    if ((c->rc = limits_at(c->lv, p, c->err)) != BG_OK ||
        (c->rc = bgi_qa_probe_compare(p, c->o, c->err)) != BG_OK ||
        (c->rc = keep_asfound(c, p)) != BG_OK)
        return 1;
    out->flagged |= p->flagged;
    out->limit_k = p->limit_k, out->rate_k = p->rate_k; /* the same for every probe */
    out->limit_from = p->limit_from, out->rate_from = p->rate_from;
    if (c->sink && c->sink->probe)
        c->sink->probe(out, p, c->sink->ctx);
    return 0;
}

static int by_probe_id(const void *a, const void *b)
{
    long long x = ((const struct asf_pair *)a)->probe_id;
    long long y = ((const struct asf_pair *)b)->probe_id;
    return (x > y) - (x < y);
}

/* Every probe of the lot, by serial, compared with its previous calibration only: the probes
** and calibrations that count toward the lot (a calibration run counts toward the lot its probe
** belonged to when the run started); then the control charts of the lot's part, this lot's
** as-found values taken from the probes read here. */
static int probes_and_charts(bg_store *st, const char *code, const bg_qa_opts *qo,
                             const bg_qa_lot_sink *sink, bg_qa_lot_summary *out, bg_error *err)
{
    bg_qa_opts o = *qo;
    struct bgi_lot_versions lv;
    o.since_first = 0;
    struct probes_ctx c;
    memset(&c, 0, sizeof c);
    c.out = out, c.o = &o, c.lv = &lv, c.sink = sink, c.err = err, c.rc = BG_OK;
    int rc = bgi_qa_lot_versions_load(st, code, &lv, err);
    if (rc == BG_OK)
        rc = bg_store_lot_histories(st, code, o.since, probe_cb, &c, err);
    bgi_qa_lot_versions_free(&lv);
    bg_qa_probe_release(&c.one);
    if (rc == BG_OK)
        rc = c.rc;
    double *v = rc == BG_OK ? malloc((c.nasf + 1) * sizeof *v) : NULL;
    if (rc == BG_OK && !v)
        rc = bg_error_set(err, BG_ENOMEM, "out of memory reading the history of lot '%s'",
                          code);
    if (rc == BG_OK) {
        if (c.nasf) /* qsort must not be given NULL */
            qsort(c.asf, c.nasf, sizeof *c.asf, by_probe_id);
        for (size_t i = 0; i < c.nasf; i++)
            v[i] = c.asf[i].mk;
        struct bgi_qa_have have = { &out->stats, v, c.nasf };
        out->part_err = (bg_error)BG_ERROR_INIT;
        /* this lot's statistics and histories were read above with the same options: not
        ** again */
        out->part_rc = bgi_qa_part_charts_with(st, out->stats.lot.part, &o, &have, &out->part,
                                               &out->part_err);
        if (out->part_rc == BG_OK)
            out->flagged |= out->part.flagged;
        else if (out->part_rc != BG_EINVAL) {
            if (err)
                *err = out->part_err;
            rc = out->part_rc;
        }
    }
    free(v);
    free(c.asf);
    return rc;
}

static int summarize(bg_store *st, const char *code, const bg_qa_opts *qo,
                     const bg_qa_lot_sink *sink, bg_qa_lot_summary *out, bg_error *err)
{
    bg_qa_opts o = qo ? *qo : bg_qa_default_opts();
    int rc;

    if ((rc = bg_qa_lot_stats(st, code, &o, &out->stats, err)) != BG_OK)
        return rc;
    out->flagged = out->stats.flagged;
    /* a lot without probes still says which limits it would use */
    out->limit_k = o.limit_k > 0.0 ? o.limit_k : out->stats.spec.limit_k > 0.0 ?
                   out->stats.spec.limit_k : out->stats.sensor != BG_PART_NTC ?
                   bg_qa_spec_limit_k(&out->stats.spec) : bg_qa_tol_limit_k(&out->stats.lot);
    out->limit_from = o.limit_k > 0.0 ? BG_QA_FROM_OPTION : out->stats.spec.limit_k > 0.0 ?
                      BG_QA_FROM_PART : out->stats.sensor != BG_PART_NTC ? BG_QA_FROM_KIND :
                      BG_QA_FROM_DEFAULT;
    out->rate_k = o.rate_k > 0.0 ? o.rate_k : out->stats.spec.rate_k > 0.0 ?
                  out->stats.spec.rate_k : out->limit_k;
    if (sink && sink->ready)
        sink->ready(out, sink->ctx);
    return probes_and_charts(st, code, &o, sink, out, err);
}

int bg_qa_lot_summarize(bg_store *st, const char *code, const bg_qa_opts *qo,
                        bg_qa_lot_summary *out, bg_error *err)
{
    return summarize(st, code, qo, NULL, out, err);
}

int bg_qa_lot_summarize_each(bg_store *st, const char *code, const bg_qa_opts *qo,
                             const bg_qa_lot_sink *sink, bg_qa_lot_summary *out,
                             bg_error *err)
{
    static const bg_qa_lot_sink none = { NULL, NULL, NULL };
    return summarize(st, code, qo, sink ? sink : &none, out, err);
}

void bg_qa_lot_summary_release(bg_qa_lot_summary *s)
{
    if (!s)
        return;
    bg_qa_lot_release(&s->stats);
    for (size_t i = 0; s->probes && i < s->nprobes; i++) /* none kept by _each */
        bg_qa_probe_release(&s->probes[i]);
    free(s->probes);
    bg_qa_part_release(&s->part);
    memset(s, 0, sizeof *s);
}
