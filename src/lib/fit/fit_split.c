/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* A calibration split into ranges where one series cannot hold a bound (bg_fit_split): the
** readings sorted by their reading, a fit over the whole, and each range whose largest
** |residual| exceeds the bound halved at its middle reading (shared by both halves, so the
** ranges meet at a reading), until every range holds the bound or is too small to halve (it
** then keeps its fit, marked as not holding the bound).  The way a wide cryogenic diode or
** resistance thermometer calibration is given as several Chebyshev series (Rubin, Brandt and
** Sample, Cryogenics 22 (1982) 491, from memory), applied to any kind. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "bandgap/fit.h"
#include "fit_int.h"

void bg_fit_split_release(bg_fit_ranges *s)
{
    if (!s)
        return;
    for (size_t i = 0; i < s->n; i++)
        bg_fit_release(&s->range[i].fit);
    free(s->range);
    memset(s, 0, sizeof *s);
}

static int cmp_x(const void *a, const void *b)
{
    const bg_point *p = a, *q = b;
    if (p->r_ohm != q->r_ohm)
        return (p->r_ohm > q->r_ohm) - (p->r_ohm < q->r_ohm);
    if (p->t_k != q->t_k)
        return (p->t_k > q->t_k) - (p->t_k < q->t_k);
    return (p->line > q->line) - (p->line < q->line);
}

/* What every range of one split shares. */
struct split_job {
    bg_fitter *fr;
    const bg_point *pts;   /* sorted by reading */
    const bg_fit_opts *o;
    double bound_k;
    bg_fit_ranges *out;
    bg_error *err;
};

/* Fit pts[lo .. hi] (inclusive) into a new range of 'out', halving while the bound is not held. */
static int split_range(const struct split_job *jb, size_t lo, size_t hi, size_t depth)
{
    bg_fitter *fr = jb->fr;
    const bg_point *pts = jb->pts;
    const bg_fit_opts *o = jb->o;
    double bound_k = jb->bound_k;
    bg_fit_ranges *out = jb->out;
    bg_error *err = jb->err;
    size_t n = hi - lo + 1, np = bg_model_npar(&o->model);
    bg_fit f = BG_FIT_INIT;
    int rc = bg_fitter_run(fr, pts + lo, n, o, &f, err);
    if (rc != BG_OK) {
        bg_fit_release(&f);
        return rc;
    }
    int holds = f.max_abs_mk <= 1e3 * bound_k;
    /* halves of at least np + 1 readings each, and at most 6 levels (64 ranges) */
    if (!holds && n >= 2 * np + 1 && depth < 6) {
        size_t mid = lo + (n - 1) / 2;
        bg_fit_release(&f);
        if ((rc = split_range(jb, lo, mid, depth + 1)) != BG_OK)
            return rc;
        return split_range(jb, mid, hi, depth + 1);
    }
    if (out->n == out->cap) {
        size_t cap = out->cap ? 2 * out->cap : 4;
        bg_fit_range *r = realloc(out->range, cap * sizeof *r);
        if (!r) {
            bg_fit_release(&f);
            return bg_error_set(err, BG_ENOMEM, "out of memory");
        }
        out->range = r, out->cap = cap;
    }
    bg_fit_range *r = &out->range[out->n++];
    r->fit = f;
    r->x_lo = pts[lo].r_ohm, r->x_hi = pts[hi].r_ohm;
    r->holds = holds;
    if (!holds)
        out->all_hold = 0;
    return BG_OK;
}

int bg_fit_split(bg_fitter *fr, const bg_point *pts, size_t n, const bg_fit_opts *o,
                 double bound_k, bg_fit_ranges *out, bg_error *err)
{
    bg_point *s;
    int rc;
    memset(out, 0, sizeof *out);
    out->all_hold = 1;
    out->bound_k = bound_k;
    if (!(bound_k > 0.0) || !isfinite(bound_k))
        return bg_error_set(err, BG_EINVAL, "the bound must be a temperature above 0 K");
    if (n == 0)
        return bg_error_set(err, BG_EINVAL, "no readings");
    if (!(s = malloc(n * sizeof *s)))
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    memcpy(s, pts, n * sizeof *s);
    qsort(s, n, sizeof *s, cmp_x);
    struct split_job jb = { fr, s, o, bound_k, out, err };
    rc = split_range(&jb, 0, n - 1, 0);
    free(s);
    if (rc != BG_OK)
        bg_fit_split_release(out);
    return rc;
}
