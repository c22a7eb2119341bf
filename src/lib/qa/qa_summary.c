/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Everything the lot report shows, computed in one call: the lot's statistics, each probe's
** drift since its previous calibration, and the control charts of the lot's part. */
#include <stdlib.h>
#include <string.h>

#include "bandgap/qa.h"

/* The serials of the lot's probes, in the order added. */
struct serials {
    char (*s)[BG_TEXT];
    size_t n, cap;
    int oom;
};

static int serial_cb(const bg_probe *p, void *ctx)
{
    struct serials *l = ctx;
    if (l->n == l->cap) {
        size_t cap = l->cap ? 2 * l->cap : 64;
        char (*s)[BG_TEXT] = realloc(l->s, cap * sizeof *s);
        if (!s) {
            l->oom = 1;
            return 1;
        }
        l->s = s, l->cap = cap;
    }
    memcpy(l->s[l->n++], p->serial, BG_TEXT);
    return 0;
}

static int probes(bg_store *st, const char *code, const bg_qa_opts *qo, bg_qa_lot_summary *out,
                  bg_error *err)
{
    struct serials l = { NULL, 0, 0, 0 };
    bg_qa_opts o = *qo;
    int rc;
    o.since_first = 0;
    if ((rc = bg_store_probe_each(st, code, serial_cb, &l, err)) != BG_OK)
        goto done;
    if (l.oom || (l.n && !(out->probes = calloc(l.n, sizeof *out->probes)))) {
        rc = bg_error_set(err, BG_ENOMEM, "out of memory listing the probes of lot '%s'", code);
        goto done;
    }
    out->capprobes = l.n;
    for (size_t i = 0; i < l.n; i++) {
        bg_qa_probe *p = &out->probes[out->nprobes++];
        if ((rc = bg_qa_probe_drift(st, l.s[i], &o, p, err)) != BG_OK)
            goto done;
        out->flagged |= p->flagged;
        out->limit_k = p->limit_k, out->rate_k = p->rate_k; /* the same for every probe */
        out->limit_from = p->limit_from, out->rate_from = p->rate_from;
    }
done:
    free(l.s);
    return rc;
}

int bg_qa_lot_summarize(bg_store *st, const char *code, const bg_qa_opts *qo,
                        bg_qa_lot_summary *out, bg_error *err)
{
    bg_qa_opts o = qo ? *qo : bg_qa_default_opts();
    int rc;

    if ((rc = bg_qa_lot_stats(st, code, &o, &out->stats, err)) != BG_OK)
        return rc;
    out->flagged = out->stats.flagged;
    /* a lot without probes still says which limits it would use */
    out->limit_k = o.limit_k > 0.0 ? o.limit_k : out->stats.spec.limit_k > 0.0 ?
                   out->stats.spec.limit_k : bg_qa_tol_limit_k(&out->stats.lot);
    out->rate_k = o.rate_k > 0.0 ? o.rate_k : out->stats.spec.rate_k > 0.0 ?
                  out->stats.spec.rate_k : out->limit_k;
    if ((rc = probes(st, code, &o, out, err)) != BG_OK)
        return rc;
    out->part_err = (bg_error)BG_ERROR_INIT;
    out->part_rc = bg_qa_part_charts(st, out->stats.lot.part, &o, &out->part, &out->part_err);
    if (out->part_rc == BG_OK)
        out->flagged |= out->part.flagged;
    else if (out->part_rc != BG_EINVAL) {
        if (err)
            *err = out->part_err;
        return out->part_rc;
    }
    return BG_OK;
}

void bg_qa_lot_summary_release(bg_qa_lot_summary *s)
{
    if (!s)
        return;
    bg_qa_lot_release(&s->stats);
    for (size_t i = 0; i < s->nprobes; i++)
        bg_qa_probe_release(&s->probes[i]);
    free(s->probes);
    bg_qa_part_release(&s->part);
    memset(s, 0, sizeof *s);
}
