/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* A probe's drift between its calibrations: the whole history read from the store (the buffer
** grows; nothing is dropped), each calibration compared with the one before and the first. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "qa_int.h"

bg_qa_opts bg_qa_default_opts(void)
{
    bg_qa_opts o;
    memset(&o, 0, sizeof o);
    o.alpha = 0.05;
    o.since_first = 1;
    return o;
}

double bg_qa_tol_limit_k(const bg_lot *lot)
{
    return lot->tol_r25 * BG_T0_DEFAULT_K * BG_T0_DEFAULT_K / lot->beta_k;
}

struct hist_ctx {
    bg_qa_probe *p;
    int oom;
};

static int hist_cb(const char *started_at, long long run_id, const bg_fit_row *fit, void *vctx)
{
    struct hist_ctx *c = vctx;
    bg_qa_probe *p = c->p;
    (void)run_id;
    if (!fit) {
        p->unfitted++;
        return 0;
    }
    if (p->n == p->cap) {
        size_t cap = p->cap ? 2 * p->cap : 16;
        bg_fit_row *f = realloc(p->fits, cap * sizeof *f);
        if (f)
            p->fits = f;
        char (*w)[BG_TIME] = realloc(p->started_at, cap * sizeof *w);
        if (w)
            p->started_at = w;
        if (!f || !w) {
            c->oom = 1;
            return 1;
        }
        p->cap = cap;
    }
    p->fits[p->n] = *fit;
    snprintf(p->started_at[p->n], BG_TIME, "%s", started_at);
    p->n++;
    return 0;
}

/* Compare calibration 'a' with the later 'b' into '*c'. */
static int compare(const bg_qa_probe *p, size_t a, size_t b, const bg_qa_opts *o,
                   bg_qa_compare *c, bg_error *err)
{
    double at[BG_DRIFT_MAXAT], ta, tb, years;
    size_t nat = o->nat;
    int rc;
    const bg_fit_row *fa = &p->fits[a], *fb = &p->fits[b];

    if (nat)
        memcpy(at, o->at_k, nat * sizeof at[0]);
    else if ((rc = bg_drift_check_points(fa->t_min_k, fa->t_max_k, fb->t_min_k, fb->t_max_k, 5,
                                         at, err)) != BG_OK)
        return rc;
    else
        nat = 5;
    for (size_t i = 0; i < nat; i++)
        if (at[i] < fmax(fa->t_min_k, fb->t_min_k) - 1e-9 ||
            at[i] > fmin(fa->t_max_k, fb->t_max_k) + 1e-9)
            return bg_error_set(err, BG_EINVAL, "check temperature %.3f degC is outside the "
                                "calibrated ranges of fits %lld and %lld", at[i] - BG_ZERO_C_K,
                                fa->id, fb->id);
    if ((rc = bg_time_parse(p->started_at[a], &ta, err)) != BG_OK ||
        (rc = bg_time_parse(p->started_at[b], &tb, err)) != BG_OK)
        return rc;
    years = (tb - ta) / (365.2425 * 86400.0);
    bg_drift_at where = { at, nat, p->lot.pair_t1_k, p->lot.pair_t2_k };
    if ((rc = bg_drift_compare(&fa->model, &fb->model, &where, years, &c->d, err)) != BG_OK)
        return rc;
    c->from = a, c->to = b;
    c->limit_k = p->limit_k, c->rate_k = p->rate_k;
    if (p->limit_at && p->limit_from == BG_QA_FROM_DEFAULT)
        c->limit_k = p->limit_at[b];
    if (p->limit_at && p->rate_from == BG_QA_FROM_DEFAULT)
        c->rate_k = c->limit_k;
    c->flag_limit = c->d.max_abs_err_mk > 1e3 * c->limit_k;
    c->flag_rate = isfinite(c->d.rate_mk_per_year) && c->d.rate_mk_per_year > 1e3 * c->rate_k;
    return BG_OK;
}

void bgi_qa_limits(const bg_qa_opts *o, const bg_part_spec *spec, bg_qa_probe *p)
{
    if (o->limit_k > 0.0)
        p->limit_k = o->limit_k, p->limit_from = BG_QA_FROM_OPTION;
    else if (spec->limit_k > 0.0)
        p->limit_k = spec->limit_k, p->limit_from = BG_QA_FROM_PART;
    else if (spec->sensor != BG_PART_NTC)
        p->limit_k = bg_qa_spec_limit_k(spec), p->limit_from = BG_QA_FROM_KIND;
    else
        p->limit_k = bg_qa_tol_limit_k(&p->lot), p->limit_from = BG_QA_FROM_DEFAULT;
    if (o->rate_k > 0.0)
        p->rate_k = o->rate_k, p->rate_from = BG_QA_FROM_OPTION;
    else if (spec->rate_k > 0.0)
        p->rate_k = spec->rate_k, p->rate_from = BG_QA_FROM_PART;
    else
        p->rate_k = p->limit_k, p->rate_from = BG_QA_FROM_DEFAULT;
}

int bgi_qa_probe_compare(bg_qa_probe *p, const bg_qa_opts *o, bg_error *err)
{
    int rc;
    if (p->n >= 2) {
        /* the comparisons with the first only when asked for (a lot report does not) */
        p->since_previous = calloc(p->n - 1, sizeof *p->since_previous);
        p->since_first = o->since_first ? calloc(p->n - 1, sizeof *p->since_first) : NULL;
        if (!p->since_previous || (o->since_first && !p->since_first))
            return bg_error_set(err, BG_ENOMEM, "out of memory comparing %zu calibrations",
                                p->n);
    }
    for (size_t i = 1; i < p->n; i++) {
        if ((rc = compare(p, i - 1, i, o, &p->since_previous[p->nprev], err)) != BG_OK)
            return rc;
        bg_qa_compare *c = &p->since_previous[p->nprev++];
        p->flagged |= c->flag_limit || c->flag_rate;
    }
    for (size_t i = 2; o->since_first && i < p->n; i++) {
        if ((rc = compare(p, 0, i, o, &p->since_first[p->nfirst], err)) != BG_OK)
            return rc;
        bg_qa_compare *c = &p->since_first[p->nfirst++];
        p->flagged |= c->flag_limit || c->flag_rate;
    }
    return BG_OK;
}

/* A default limit comes from the R25 tolerance in force at each calibration's start, of the
** lot the probe belonged to then (bg_store_probe_at, bg_store_lot_at): a lot version that
** corrects the tolerance judges the calibrations from its validity on, and a probe moved to
** another lot is judged by the lot each calibration counts toward. */
static int limits_in_force(bg_store *st, bg_qa_probe *p, bg_error *err)
{
    bg_lot_version lv;
    bg_probe_version pv;
    int rc;
    if (p->limit_from != BG_QA_FROM_DEFAULT || p->n == 0)
        return BG_OK;
    if (!(p->limit_at = malloc(p->n * sizeof *p->limit_at)))
        return bg_error_set(err, BG_ENOMEM, "out of memory for %zu calibrations", p->n);
    for (size_t i = 0; i < p->n; i++) {
        if ((rc = bg_store_probe_at(st, p->serial, p->started_at[i], &pv, err)) != BG_OK ||
            (rc = bg_store_lot_at(st, pv.probe.lot_code, p->started_at[i], &lv, err)) != BG_OK)
            return rc;
        p->limit_at[i] = bg_qa_tol_limit_k(&lv.lot);
    }
    return BG_OK;
}

int bg_qa_probe_drift(bg_store *st, const char *serial, const bg_qa_opts *o, bg_qa_probe *out,
                      bg_error *err)
{
    struct hist_ctx hc = { out, 0 };
    bg_probe pr;
    bg_part_spec spec;
    int rc;

    snprintf(out->serial, sizeof out->serial, "%s", serial);
    if ((rc = bg_store_probe_get(st, serial, &pr, err)) != BG_OK ||
        (rc = bg_store_lot_get(st, pr.lot_code, &out->lot, err)) != BG_OK ||
        (rc = bg_store_probe_history(st, serial, o->since, hist_cb, &hc, err)) != BG_OK)
        return rc;
    if (hc.oom)
        return bg_error_set(err, BG_ENOMEM, "out of memory reading the %zu calibrations of "
                            "probe '%s'", out->n, serial);
    if ((rc = bg_store_part_spec_get(st, out->lot.part, &spec, err)) != BG_OK ||
        (rc = bgi_qa_lot_kind_check(&out->lot, &spec, err)) != BG_OK)
        return rc;
    bgi_qa_limits(o, &spec, out);
    out->have_history = 1;
    if ((rc = limits_in_force(st, out, err)) != BG_OK)
        return rc;
    return bgi_qa_probe_compare(out, o, err);
}

void bg_qa_probe_release(bg_qa_probe *p)
{
    if (!p)
        return;
    free(p->fits);
    free(p->started_at);
    free(p->since_previous);
    free(p->since_first);
    free(p->limit_at);
    memset(p, 0, sizeof *p);
}
