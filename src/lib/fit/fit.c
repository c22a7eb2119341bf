/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Calibration fits of R-T models.  Method (docs/methods.md):
** 1. weighted linear least squares in y = 1/T on the basis L^k of the model, weights
**    1/u^2(1/T) with u(1/T) = u(T)/T^2 (JCGM 100:2008, 5.1.2);
** 2. resistance uncertainty folded in by effective variance u^2 = u_T^2 + (dT/dR u_R)^2 with the
**    slope of step 1 (Orear, Am. J. Phys. 50 (1982) 912);
** 3. Gauss-Newton refinement of sum ((T_model(R_i) - T_i)/u_i)^2 from the linear solution, with
**    step halving, and covariance (J^T J)^-1 of the weighted Jacobian (Bates & Watts,
**    Nonlinear Regression Analysis, 1988, ch. 2).  The problem is nearly linear, so it converges
**    in two or three steps; GSL's trust-region solver is used in the tests as a cross-check. */
#include <math.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_cdf.h>

#include "bandgap/fit.h"
#include "fit_int.h"
#include "../core/mem_int.h"

#define MAXB BG_MODEL_MAXPAR

/* The chi2 test's tail probability on either side: a fit whose chi2 has p < CHI2_TAIL, or
** p > 1 - CHI2_TAIL, against the stated uncertainties gets a warning. */
#define CHI2_TAIL 0.01

bg_fit_opts bg_fit_default_opts(const bg_model *model)
{
    bg_fit_opts o;
    memset(&o, 0, sizeof o);
    if (model)
        o.model = *model;
    else
        bg_model_parse("sh3", &o.model, NULL);
    o.refine = 1;
    o.inflate = 1;
    o.min_rcond = 1e-13;
    o.student_limit = 3.0;
    o.mono_gap_k = 0.05;
    o.max_iter = 50;
    o.xtol = 1e-12;
    o.coverage = 0.9545;
    o.setpoint_gap_k = 0.05;
    o.resolution_k = 1e-5;
    return o;
}

void bg_fit_init(bg_fit *f)
{
    memset(f, 0, sizeof *f);
}

void bg_fit_release(bg_fit *f)
{
    if (!f)
        return;
    free(f->resid_mk);
    free(f->student);
    free(f->u_k);
    free(f->line);
    free(f->notes);
    memset(f, 0, sizeof *f);
}

bg_fitter *bg_fitter_new(void)
{
    return calloc(1, sizeof(bg_fitter));
}

void bg_fitter_free(bg_fitter *fr)
{
    if (!fr)
        return;
    free(fr->L), free(fr->u), free(fr->A), free(fr->b), free(fr->tm), free(fr->G);
    free(fr->sorted), free(fr->lev), free(fr->batch), free(fr->tk), free(fr->rr);
    free(fr);
}

static int fitter_reserve(bg_fitter *fr, size_t n)
{
    if (n <= fr->cap)
        return BG_OK;
    size_t cap = n < 64 ? 64 : n;
    double *L = realloc(fr->L, cap * sizeof *L);
    if (L) fr->L = L;
    double *u = realloc(fr->u, cap * sizeof *u);
    if (u) fr->u = u;
    double *A = realloc(fr->A, cap * MAXB * sizeof *A);
    if (A) fr->A = A;
    double *b = realloc(fr->b, cap * sizeof *b);
    if (b) fr->b = b;
    double *tm = realloc(fr->tm, cap * sizeof *tm);
    if (tm) fr->tm = tm;
    double *G = realloc(fr->G, cap * MAXB * sizeof *G);
    if (G) fr->G = G;
    struct tsort *s = realloc(fr->sorted, cap * sizeof *s);
    if (s) fr->sorted = s;
    double *lev = realloc(fr->lev, cap * sizeof *lev);
    if (lev) fr->lev = lev;
    double *tk = realloc(fr->tk, cap * sizeof *tk);
    if (tk) fr->tk = tk;
    double *rr = realloc(fr->rr, cap * sizeof *rr);
    if (rr) fr->rr = rr;
    if (!L || !u || !A || !b || !tm || !G || !s || !lev || !tk || !rr)
        return BG_ENOMEM;
    fr->cap = cap;
    bgi_mem_hint_huge(fr->A, cap * MAXB * sizeof *A);
    bgi_mem_hint_huge(fr->G, cap * MAXB * sizeof *G);
    bgi_mem_hint_huge(fr->sorted, cap * sizeof *s);
    double *col[] = { fr->L, fr->u, fr->b, fr->tm, fr->lev, fr->tk, fr->rr };
    for (size_t k = 0; k < sizeof col / sizeof col[0]; k++)
        bgi_mem_hint_huge(col[k], cap * sizeof *col[k]);
    return BG_OK;
}

static int fit_reserve(bg_fit *f, size_t n)
{
    if (n <= f->cap)
        return BG_OK;
    double *r = realloc(f->resid_mk, n * sizeof *r);
    if (r) f->resid_mk = r;
    double *s = realloc(f->student, n * sizeof *s);
    if (s) f->student = s;
    double *u = realloc(f->u_k, n * sizeof *u);
    if (u) f->u_k = u;
    size_t *l = realloc(f->line, n * sizeof *l);
    if (l) f->line = l;
    if (!r || !s || !u || !l)
        return BG_ENOMEM;
    f->cap = n;
    bgi_mem_hint_huge(f->resid_mk, n * sizeof *r);
    bgi_mem_hint_huge(f->student, n * sizeof *s);
    bgi_mem_hint_huge(f->u_k, n * sizeof *u);
    bgi_mem_hint_huge(f->line, n * sizeof *l);
    return BG_OK;
}

/* A chi2 quantile at CHI2_TAIL, cached per degrees of freedom in 'cache' (NCRIT entries):
** 'inv' is gsl_cdf_chisq_Qinv (the upper limit) or gsl_cdf_chisq_Pinv (the lower). The p-value
** itself (an incomplete gamma function) is computed only for a fit beyond a limit. */
static double chi2_quantile(double *cache, size_t dof, double (*inv)(double, double))
{
    if (dof >= NCRIT)
        return inv(CHI2_TAIL, (double)dof);
    if (cache[dof] == 0.0)
        cache[dof] = inv(CHI2_TAIL, (double)dof);
    return cache[dof];
}

/* The chi2 whose upper tail probability is CHI2_TAIL, and the one below which it exceeds
** 1 - CHI2_TAIL. */
static double chi2_limit(bg_fitter *fr, size_t dof)
{
    return chi2_quantile(fr->crit, dof, gsl_cdf_chisq_Qinv);
}

static double chi2_limit_low(bg_fitter *fr, size_t dof)
{
    return chi2_quantile(fr->crit_lo, dof, gsl_cdf_chisq_Pinv);
}

double bg_fit_p_value(const bg_fit *fit)
{
    if (!fit->weighted || fit->dof == 0)
        return NAN;
    return gsl_cdf_chisq_Q(fit->chi2, (double)fit->dof);
}

/* "FILE:LINE", "line LINE" or "point I" for messages. */
static const char *where(const bg_fit_opts *o, const bg_point *p, size_t idx, char *buf,
                         size_t size)
{
    if (p->line && o->source)
        snprintf(buf, size, "%s:%zu", o->source, p->line);
    else if (p->line)
        snprintf(buf, size, "line %zu", p->line);
    else
        snprintf(buf, size, "point %zu", idx + 1);
    return buf;
}

static void add_note(bg_fit *f, bg_note_kind kind, size_t line, const char *fmt, ...)
    BG_PRINTF(4, 5);

static void add_note(bg_fit *f, bg_note_kind kind, size_t line, const char *fmt, ...)
{
    va_list ap;
    if (f->nnotes == f->notecap) {
        size_t cap = f->notecap ? 2 * f->notecap : 8;
        bg_note *nn = realloc(f->notes, cap * sizeof *nn);
        if (!nn)
            return; /* a lost warning is better than a lost fit; the count stays honest */
        f->notes = nn, f->notecap = cap;
    }
    bg_note *nt = &f->notes[f->nnotes++];
    nt->kind = kind, nt->line = line;
    va_start(ap, fmt);
    vsnprintf(nt->msg, sizeof nt->msg, fmt, ap);
    va_end(ap);
}

size_t bgi_fit_basis(const bg_model *m, unsigned pw[BG_MODEL_MAXPAR])
{
    size_t nb = bg_model_basis(m, pw);
    if (nb == 0 && bg_model_lin_form(m) >= 0) {
        nb = bg_model_npar(m);
        for (size_t j = 0; j < nb; j++)
            pw[j] = (unsigned)j;
    }
    return nb;
}

static void basis_row(double L, const unsigned *pw, size_t nb, double *g)
{
    double pows[MAXB];
    pows[0] = 1.0;
    for (size_t k = 1; k < MAXB; k++)
        pows[k] = pows[k - 1] * L;
    for (size_t j = 0; j < nb; j++)
        g[j] = pows[pw[j]];
}

/* The bits of a temperature as an unsigned key: for positive finite doubles (check_points
** has refused every other) the keys order as the values do (IEEE 754-2008, 3.4). */
static uint64_t t_key(double t)
{
    uint64_t k;
    memcpy(&k, &t, sizeof k);
    return k;
}

_Static_assert(MAXB * sizeof(double) >= sizeof(struct tsort),
               "the fitter's design matrix holds the sort's scratch");

/* Stable least-significant-digit radix sort of 'v' by temperature, 8 bits a pass, skipping
** the passes whose digit every key shares (Knuth, TAOCP vol. 3, 5.2.5); 'tmp' holds 'n'.
** Linear in n where a comparison sort is n log n.  Stable from the readings' order, it gives
** equal temperatures in the order of the readings: a total order, so the result depends on
** nothing but the points. */
static void radix_sort_t(struct tsort *v, struct tsort *tmp, size_t n)
{
    size_t count[8][256];
    struct tsort *src = v, *dst = tmp;

    memset(count, 0, sizeof count);
    for (size_t i = 0; i < n; i++) {
        uint64_t k = t_key(v[i].t);
        for (unsigned d = 0; d < 8; d++)
            count[d][(k >> (8 * d)) & 255]++;
    }
    for (unsigned d = 0; d < 8; d++) {
        size_t *c = count[d], sum = 0;
        if (c[(t_key(v[0].t) >> (8 * d)) & 255] == n) /* one digit for all: nothing to do */
            continue;
        for (size_t b = 0; b < 256; b++) {
            size_t x = c[b];
            c[b] = sum, sum += x;
        }
        for (size_t i = 0; i < n; i++)
            dst[c[(t_key(src[i].t) >> (8 * d)) & 255]++] = src[i];
        struct tsort *t = src;
        src = dst, dst = t;
    }
    if (src != v)
        memcpy(v, src, n * sizeof *v);
}

/* Sort the points by temperature into fr->sorted (readings already in rising temperature,
** as a slow ramp gives them, are left as they are in O(n)); fr->A, not yet in use (the fit
** starts after the checks), is the radix sort's scratch. */
static void sort_points(bg_fitter *fr, const bg_point *pts, size_t n)
{
    size_t rising = 1;
    for (size_t i = 0; i < n; i++) {
        fr->sorted[i].t = pts[i].t_k, fr->sorted[i].r = pts[i].r_ohm, fr->sorted[i].i = i;
        if (i > 0 && !(pts[i - 1].t_k <= pts[i].t_k))
            rising = 0;
    }
    if (rising)
        return;
    if (n <= 32) { /* insertion sort: the usual calibration has a dozen points */
        for (size_t i = 1; i < n; i++) {
            struct tsort v = fr->sorted[i];
            size_t j = i;
            while (j > 0 && fr->sorted[j - 1].t > v.t) {
                fr->sorted[j] = fr->sorted[j - 1];
                j--;
            }
            fr->sorted[j] = v;
        }
    } else
        radix_sort_t(fr->sorted, (struct tsort *)(void *)fr->A, n);
}

int bgi_sort_hold(bg_fitter *fr, int on)
{
    int was = fr->sort_hold;
    if (on && !was)
        fr->sort_pts = NULL, fr->checked.pts = NULL;
    fr->sort_hold = on;
    if (!on)
        fr->sort_pts = NULL, fr->checked.pts = NULL;
    return was;
}

/* On the sorted points: a note for each reading identical (same T and R) to an earlier one,
** and the number of distinct temperatures, a new one starting more than 'setpoint_gap_k' above
** the first reading of the last. */
static size_t setpoints(bg_fitter *fr, const bg_point *pts, size_t n, const bg_fit_opts *o,
                        bg_fit *out)
{
    char w1[300], w2[300];
    size_t nd = n ? 1 : 0, start = 0;
    for (size_t j = 1; j < n; j++) {
        const struct tsort *b = &fr->sorted[j];
        for (size_t k = j; k-- > 0 && fr->sorted[k].t == b->t;) {
            const struct tsort *a = &fr->sorted[k];
            if (a->r != b->r)
                continue;
            size_t first = a->i < b->i ? a->i : b->i, second = a->i < b->i ? b->i : a->i;
            add_note(out, BG_NOTE_REPEATED, pts[second].line, "%s: the same temperature and "
                     "resistance as %s: a repeated reading, kept (check that it was not entered "
                     "twice)", where(o, &pts[second], second, w1, sizeof w1),
                     where(o, &pts[first], first, w2, sizeof w2));
            break;
        }
        if (b->t - fr->sorted[start].t > o->setpoint_gap_k)
            nd++, start = j;
    }
    return nd;
}

/* Readings at as many distinct temperatures as the model has coefficients. */
static int enough_setpoints(const bg_fit_opts *o, size_t n, size_t nd, bg_error *err)
{
    size_t npar = bg_model_npar(&o->model);
    char name[16];
    if (nd >= npar)
        return BG_OK;
    return bg_error_set(err, BG_EINVAL, "%s: %zu readings at %zu distinct temperature%s "
                        "(readings within %g K count as one): model '%s' has %zu "
                        "coefficients and needs readings at %zu distinct temperatures at "
                        "least", o->source ? o->source : "points", n, nd, nd == 1 ? "" : "s",
                        o->setpoint_gap_k, bg_model_name(&o->model, name, sizeof name), npar,
                        npar);
}

/* Guard rails on the data: values, distinct temperatures and the NTC direction. */
static int check_points(bg_fitter *fr, const bg_point *pts, size_t n, const bg_fit_opts *o,
                        int *weighted, bg_fit *out, bg_error *err)
{
    char w1[300], w2[300];
    int any_u = 0, dir = bg_model_direction(&o->model);
    bg_quantity qty = bg_model_quantity(&o->model);

    for (size_t i = 0; i < n; i++) {
        const bg_point *p = &pts[i];
        if (!isfinite(p->t_k) || !isfinite(p->r_ohm) || !isfinite(p->u_t_k) ||
            !isfinite(p->u_r_ohm))
            return bg_error_set(err, BG_EINVAL, "%s: value is not a finite number",
                                where(o, p, i, w1, sizeof w1));
        if (!(p->r_ohm > 0.0) && qty == BG_QTY_RESISTANCE)
            return bg_error_set(err, BG_EINVAL, "%s: resistance must be greater than 0 ohm",
                                where(o, p, i, w1, sizeof w1));
        if (!(p->t_k > 0.0))
            return bg_error_set(err, BG_EINVAL, "%s: temperature must be above 0 K",
                                where(o, p, i, w1, sizeof w1));
        if (p->u_t_k < 0.0 || p->u_r_ohm < 0.0)
            return bg_error_set(err, BG_EINVAL, "%s: uncertainty must not be negative",
                                where(o, p, i, w1, sizeof w1));
        if (p->u_t_k > 0.0 || p->u_r_ohm > 0.0)
            any_u = 1;
    }
    if (any_u)
        for (size_t i = 0; i < n; i++)
            if (!(pts[i].u_t_k > 0.0 || pts[i].u_r_ohm > 0.0))
                return bg_error_set(err, BG_EINVAL, "%s: no uncertainty, while other points "
                                    "have one", where(o, &pts[i], i, w1, sizeof w1));
    *weighted = any_u;

    if (!(fr->sort_hold && fr->sort_pts == pts && fr->sort_n == n)) {
        sort_points(fr, pts, n);
        fr->sort_pts = fr->sort_hold ? pts : NULL, fr->sort_n = n;
    }
    out->ndistinct = setpoints(fr, pts, n, o, out);
    int rc = enough_setpoints(o, n, out->ndistinct, err);
    if (rc != BG_OK)
        return rc;
    /* An NTC's resistance falls as it warms (a PTC's, a platinum thermometer's rises; each
    ** kind states its direction): each point is compared with the nearest point that is
    ** colder by more than 'mono_gap_k' (closer pairs may cross within noise). */
    char w3[16];
    for (size_t j = 1, i = 0; j < n; j++) {
        const struct tsort *b = &fr->sorted[j];
        while (i + 1 < j && b->t - fr->sorted[i + 1].t > o->mono_gap_k)
            i++;
        const struct tsort *a = &fr->sorted[i];
        if (dir > 0 && b->t - a->t > o->mono_gap_k && !(b->r > a->r))
            return bg_error_set(err, BG_EINVAL, "%s: the %s reading falls or stays as the "
                                "temperature rises (%.6g %s at %.3f K, %s has %.6g %s at %.3f K): model "
                                "'%s' reads a quantity that rises with temperature, or columns "
                                "swapped", where(o, &pts[b->i], b->i, w1, sizeof w1),
                                bg_quantity_column(qty), b->r, bg_quantity_unit(qty), b->t,
                                where(o, &pts[a->i], a->i, w2, sizeof w2), a->r,
                                bg_quantity_unit(qty), a->t, bg_model_name(&o->model, w3,
                                sizeof w3));
        if (dir < 0 && qty != BG_QTY_RESISTANCE && b->t - a->t > o->mono_gap_k &&
            !(b->r < a->r))
            return bg_error_set(err, BG_EINVAL, "%s: the %s reading rises or stays as the "
                                "temperature rises (%.6g %s at %.3f K, %s has %.6g %s at %.3f K): model "
                                "'%s' reads a quantity that falls with temperature, or columns "
                                "swapped", where(o, &pts[b->i], b->i, w1, sizeof w1),
                                bg_quantity_column(qty), b->r, bg_quantity_unit(qty), b->t,
                                where(o, &pts[a->i], a->i, w2, sizeof w2), a->r,
                                bg_quantity_unit(qty), a->t, bg_model_name(&o->model, w3,
                                sizeof w3));
        if (dir < 0 && qty == BG_QTY_RESISTANCE && b->t - a->t > o->mono_gap_k && !(b->r < a->r))
            return bg_error_set(err, BG_EINVAL, "%s: resistance rises with temperature "
                                "(%.6g ohm at %.3f K, %s has %.6g ohm at %.3f K): not an NTC, "
                                "or columns swapped", where(o, &pts[b->i], b->i, w1, sizeof w1),
                                b->r, b->t, where(o, &pts[a->i], a->i, w2, sizeof w2), a->r,
                                a->t);
    }
    return BG_OK;
}

/* Weighted linear fit in 1/T with the current u[]. */
static int linear_step(bg_fitter *fr, const bg_point *pts, size_t n, size_t nb,
                       double min_rcond, bg_linfit *lf)
{
    double scale[MAXB], work[MAXB];
    for (size_t i = 0; i < n; i++) {
        double t = pts[i].t_k, sw = t * t / fr->u[i]; /* 1/u(1/T) */
        const double *g = &fr->G[i * nb];
        for (size_t j = 0; j < nb; j++)
            fr->A[j * n + i] = g[j] * sw;
        fr->b[i] = sw / t;
    }
    return bgi_lin_qr(fr->A, fr->b, n, nb, min_rcond, scale, work, lf);
}

#if defined(__GNUC__)
#define BG_INLINE static inline __attribute__((always_inline))
#else
#define BG_INLINE static inline
#endif

/* t_chi2 for 'nb' columns, inlined with 'nb' a constant so that the loop over it unrolls.
** First the fitted temperatures and the squared weighted residuals of every point (a loop the
** compiler may vectorise), then their sum in the points' order; a point with 1/T <= 0 makes
** the sum +inf (the temperatures are then not used). */
BG_INLINE double t_chi2_nb(bg_fitter *fr, const bg_point *pts, size_t n, size_t nb,
                           const double *c)
{
    const double *restrict G = fr->G, *restrict u = fr->u, *restrict tk = fr->tk;
    double *restrict tm = fr->tm, *restrict rr = fr->rr, s = 0.0;
    int bad = 0;
    (void)pts;
    for (size_t i = 0; i < n; i++) {
        double f = 0.0;
        for (size_t j = 0; j < nb; j++)
            f += c[j] * G[i * nb + j];
        bad |= !(f > 0.0);
        tm[i] = 1.0 / f;
        double r = (tm[i] - tk[i]) / u[i];
        rr[i] = r * r;
    }
    if (bad)
        return INFINITY;
    for (size_t i = 0; i < n; i++)
        s += rr[i];
    return s;
}

/* Weighted sum of squared temperature residuals at 'c'; +inf if the model leaves 1/T > 0. */
static double t_chi2(bg_fitter *fr, const bg_point *pts, size_t n, size_t nb, const double *c)
{
    switch (nb) {
    case 2: return t_chi2_nb(fr, pts, n, 2, c);
    case 3: return t_chi2_nb(fr, pts, n, 3, c);
    case 4: return t_chi2_nb(fr, pts, n, 4, c);
    case 5: return t_chi2_nb(fr, pts, n, 5, c);
    case 6: return t_chi2_nb(fr, pts, n, 6, c);
    default: return t_chi2_nb(fr, pts, n, nb, c);
    }
}

BG_INLINE void jacobian_nb(bg_fitter *fr, const bg_point *pts, size_t n, size_t nb)
{
    const double *restrict G = fr->G, *restrict u = fr->u, *restrict tk = fr->tk;
    const double *restrict tm = fr->tm;
    double *restrict A = fr->A, *restrict b = fr->b;
    (void)pts;
    for (size_t i = 0; i < n; i++) {
        double t2 = tm[i] * tm[i] / u[i];
        for (size_t j = 0; j < nb; j++)
            A[j * n + i] = -t2 * G[i * nb + j];
        b[i] = -(tm[i] - tk[i]) / u[i];
    }
}

/* Build the weighted Jacobian of T_model into A and -r into b at 'c' (tm[] must be current). */
static void jacobian(bg_fitter *fr, const bg_point *pts, size_t n, size_t nb)
{
    switch (nb) { /* the column count as a constant, so that the loop over it unrolls */
    case 2: jacobian_nb(fr, pts, n, 2); break;
    case 3: jacobian_nb(fr, pts, n, 3); break;
    case 4: jacobian_nb(fr, pts, n, 4); break;
    case 5: jacobian_nb(fr, pts, n, 5); break;
    case 6: jacobian_nb(fr, pts, n, 6); break;
    default: jacobian_nb(fr, pts, n, nb);
    }
}

/* Gauss-Newton with step halving from 'lf->c'; leaves the solution in 'lf->c' and the
** covariance (J^T J)^-1 of the last Jacobian in 'lf->cov'. */
static int refine(bg_fitter *fr, const bg_point *pts, size_t n, size_t nb, const bg_fit_opts *o,
                  bg_linfit *lf, unsigned *iters)
{
    double c[MAXB], scale[MAXB], work[MAXB], s = t_chi2(fr, pts, n, nb, lf->c);
    double prev_dmax = INFINITY;
    bg_linfit step;

    memcpy(c, lf->c, nb * sizeof c[0]);
    if (!isfinite(s))
        return BG_ENUM;
    for (unsigned it = 1; it <= o->max_iter; it++) {
        double cmax = 0.0, dmax = 0.0, trial[MAXB], st = INFINITY, lambda = 1.0;
        jacobian(fr, pts, n, nb);
        if (bgi_lin_qr(fr->A, fr->b, n, nb, o->min_rcond, scale, work, &step) != BG_OK)
            return BG_ENUM;
        memcpy(lf->cov, step.cov, sizeof lf->cov);
        lf->rcond = step.rcond, lf->rank = step.rank;
        /* Compare the step with the size of each term's contribution, in the scaled space. */
        for (size_t j = 0; j < nb; j++) {
            double cj = fabs(c[j]) * scale[j], dj = fabs(step.c[j]) * scale[j];
            cmax = cj > cmax ? cj : cmax;
            dmax = dj > dmax ? dj : dmax;
        }
        /* A small step is inside the region where the model is linear: take it whole, since
        ** the change of chi2 it brings can be below the rounding noise of chi2 itself.  A
        ** large step must lower chi2, halving it until it does. */
        int small = dmax <= 1e-6 * cmax;
        for (int half = 0; half < 40; half++, lambda *= 0.5) {
            for (size_t j = 0; j < nb; j++)
                trial[j] = c[j] + lambda * step.c[j];
            st = t_chi2(fr, pts, n, nb, trial);
            if (st <= s || (small && isfinite(st)))
                break;
        }
        *iters = it;
        int taken = st <= s || (small && isfinite(st));
        if (taken) {
            memcpy(c, trial, nb * sizeof c[0]);
            s = st;
        }
        /* Converged: the step is below 'xtol', or small steps stopped shrinking, which means
        ** they are rounding noise of an ill-conditioned design (Gauss-Newton steps shrink
        ** at least linearly while they carry information). */
        int stalled = small && dmax > 0.5 * prev_dmax;
        prev_dmax = dmax;
        if (!taken || lambda * dmax <= o->xtol * cmax || stalled) {
            memcpy(lf->c, c, nb * sizeof c[0]);
            if (!taken) /* a step taken left tm[] at the solution already */
                t_chi2(fr, pts, n, nb, c); /* leave tm[] at the solution */
            return BG_OK;
        }
    }
    return BG_ENUM;
}

/* The leverage w^2 g^T C g of a basis row 'g' with row weight 'w' (the diagonal element of
** the hat matrix A (A^T A)^-1 A^T, A the row-weighted design or Jacobian, C = (A^T A)^-1). */
BG_INLINE double hat_nb(const double *cov, const double *g, size_t nb, double w)
{
    double h = 0.0;
    for (size_t j = 0; j < nb; j++) {
        double row = 0.0;
        for (size_t k = 0; k < nb; k++)
            row += cov[j * nb + k] * g[k];
        h += g[j] * row;
    }
    return h * (w * w);
}

static double hat(const double *cov, const double *g, size_t nb, double w)
{
    switch (nb) { /* the column count as a constant, so that the loops over it unroll */
    case 2: return hat_nb(cov, g, 2, w);
    case 3: return hat_nb(cov, g, 3, w);
    case 4: return hat_nb(cov, g, 4, w);
    default: return hat_nb(cov, g, nb, w);
    }
}

/* Leverages for the leave-one-out residuals of bg_fit_compare: of the linear fit in 1/T
** (row weight T_i^2/u_i, as in linear_step), or, after refinement, of the weighted Jacobian
** at the solution (row weight T_model^2/u_i, as in jacobian). */
static void leverages(bg_fitter *fr, const bg_point *pts, size_t n, size_t nb, int refined,
                      const bg_linfit *lf)
{
    double cov[MAXB * MAXB]; /* a local copy: the stores to lev[] could alias lf->cov */
    memcpy(cov, lf->cov, nb * nb * sizeof cov[0]);
    for (size_t i = 0; i < n; i++) {
        double t = refined ? fr->tm[i] : pts[i].t_k;
        fr->lev[i] = hat(cov, &fr->G[i * nb], nb, t * t / fr->u[i]);
    }
    fr->lev_one_step = refined;
}

/* Externally studentized residuals t_i = r_i / (s_(i) sqrt(1 - h_i)), leverages
** h_i = j_i (J^T J)^-1 j_i^T, s_(i)^2 = (chi2 - r_i^2/(1 - h_i)) / (dof - 1): the scatter
** without point i (Belsley, Kuh & Welsch, Regression Diagnostics, 1980, 2.1).  Unlike the
** internally studentized form, which cannot exceed sqrt(dof), this one can flag a blunder
** in a small calibration.  The scale s_(i) never counts as smaller than the rounding of the
** readings, resolution / sqrt(12) (JCGM 100:2008, F.2.2.1): otherwise the residuals of
** noise-free readings, rounding noise of the arithmetic, would be studentized by themselves.
** With 'lev', the leverages go there too (they are those of the refined fit's Jacobian that
** 'leverages' would compute).  In the same pass the residuals, weights and lines go to 'out'. */
static void studentize(bg_fitter *fr, const bg_point *pts, const bg_fit_opts *o,
                       const bg_linfit *lf, size_t nb, bg_fit *out, double *lev)
{
    char w1[300];
    double floor_k = o->resolution_k / sqrt(12.0), cov[MAXB * MAXB];
    /* what the loop reads of 'out' and 'lf', in locals: through the pointers the compiler
    ** would load them again after every store to the arrays */
    const size_t n = out->n, dof = out->dof;
    const double chi2 = out->chi2, limit = o->student_limit;
    const int weighted = out->weighted;
    double *const student = out->student, *const resid = out->resid_mk, *const uk = out->u_k;
    size_t *const line = out->line;
    memcpy(cov, lf->cov, nb * nb * sizeof cov[0]);
    for (size_t i = 0; i < n; i++) {
        resid[i] = 1e3 * (pts[i].t_k - fr->tm[i]);
        uk[i] = fr->u[i];
        line[i] = pts[i].line;
        double h = hat(cov, &fr->G[i * nb], nb, fr->tm[i] * fr->tm[i] / fr->u[i]);
        if (lev)
            lev[i] = h;
        double r = (pts[i].t_k - fr->tm[i]) / fr->u[i], s2 = NAN, fl = floor_k / fr->u[i];
        if (dof > 1 && 1.0 - h > 1e-10)
            s2 = fmax((chi2 - r * r / (1.0 - h)) / (double)(dof - 1), fl * fl);
        /* With stated uncertainties the scale never counts as smaller than they are, as for
        ** the covariance: a reading far inside its own uncertainty is no outlier. */
        if (weighted && s2 < 1.0)
            s2 = 1.0;
        student[i] = (s2 > 0.0) ? r / sqrt(s2 * (1.0 - h)) : NAN;
        if (fabs(student[i]) > limit)
            add_note(out, BG_NOTE_OUTLIER, pts[i].line, "%s: studentized residual %.2f "
                     "exceeds %g (residual %.2f mK): check this reading",
                     where(o, &pts[i], i, w1, sizeof w1), student[i], limit, resid[i]);
    }
}

/* The chi2 test of a fit with stated uncertainties, on both sides: residuals too large for
** them, or so small (p > 0.99) that the uncertainties are likely overstated. */
static void chi2_notes(bg_fitter *fr, const bg_fit_opts *o, bg_fit *out)
{
    const char *src = o->source ? o->source : "fit";
    if (out->chi2 > chi2_limit(fr, out->dof)) {
        out->p_value = bg_fit_p_value(out);
        add_note(out, BG_NOTE_CHI2, 0, "%s: residuals exceed the stated uncertainties "
                 "(reduced chi2 = %.3g, p = %.2g)%s", src, out->reduced_chi2, out->p_value,
                 o->inflate ? "; the covariance is scaled up by reduced chi2" : "");
    } else if (out->chi2 < chi2_limit_low(fr, out->dof)) {
        out->p_value = bg_fit_p_value(out);
        add_note(out, BG_NOTE_CHI2_LOW, 0, "%s: residuals are far inside the stated "
                 "uncertainties (reduced chi2 = %.3g, p = %.4g > %g): the uncertainties are "
                 "probably overstated, and so is the curve's uncertainty, which comes from "
                 "them", src, out->reduced_chi2, out->p_value, 1.0 - CHI2_TAIL);
    }
}

/* A coefficient or covariance that is not finite is never a result: finite readings can still
** overflow (resistances near 1e308 ohm), and the message names what overflowed. */
static int check_finite(const bg_fit *out, const char *name, bg_error *err)
{
    int rc = bg_model_check_finite(&out->model, out->dof > 0 ? out->cov : NULL, err);
    if (rc != BG_OK)
        bg_error_prefix(err, "model '%s'", name);
    return rc;
}

/* The curve must stay monotonic over the calibrated range.  Where f' is monotonic in L > 0
** (beta: constant; sh3: B + 3 C L^2) the ends decide; other kinds are sampled on 65 points. */
static void monotonic_note(const bg_fitter *fr, const bg_fit_opts *o, const double *a,
                           const char *name, bg_fit *out)
{
    double lmin = INFINITY, lmax = -INFINITY;
    for (size_t i = 0; i < out->n; i++)
        lmin = fr->L[i] < lmin ? fr->L[i] : lmin, lmax = fr->L[i] > lmax ? fr->L[i] : lmax;
    int steps = (bg_model_flags(&o->model) & BG_MODEL_SLOPE_MONOTONIC) ? 1 : 64;
    for (int s = 0; s <= steps; s++) {
        double L = lmin + (lmax - lmin) * s / (double)steps, d = 0.0, pwr = 1.0;
        for (size_t k = 1; k < MAXB; k++, pwr *= L)
            d += (double)k * a[k] * pwr;
        if (!(d > 0.0)) {
            add_note(out, BG_NOTE_MONOTONIC, 0, "%s: the fitted '%s' curve is not monotonic "
                     "inside the calibrated range (near %.6g ohm): too many coefficients for "
                     "these points?", o->source ? o->source : "fit", name, exp(L));
            return;
        }
    }
}

/* The same for a kind of another form: dT/dx must keep the sign of the kind's direction
** over the readings' range (65 points). */
static void monotonic_note_x(const bg_point *pts, const bg_fit_opts *o, const char *name,
                             bg_fit *out)
{
    double lo = INFINITY, hi = -INFINITY, d;
    int dir = bg_model_direction(&out->model);
    for (size_t i = 0; i < out->n; i++)
        lo = fmin(lo, pts[i].r_ohm), hi = fmax(hi, pts[i].r_ohm);
    for (int s = 0; s <= 64; s++) {
        double x = lo + (hi - lo) * s / 64.0;
        if (bg_model_dtdx(&out->model, x, &d, NULL) != BG_OK || !(d * dir > 0.0)) {
            add_note(out, BG_NOTE_MONOTONIC, 0, "%s: the fitted '%s' curve is not monotonic "
                     "inside the calibrated range (near %.6g %s): too many coefficients for "
                     "these points?", o->source ? o->source : "fit", name, x,
                     bg_quantity_unit(bg_model_quantity(&out->model)));
            return;
        }
    }
}

/* The weighted linear fit in 1/T that starts the refinement: first with u(T) alone (1 K when
** none is given), then, when readings state u(R), again with u(R) carried through the first
** fit's slope.  Fills fr->L, fr->G and fr->u, and 'lf'. */
static int fit_start(bg_fitter *fr, const bg_point *pts, size_t n, const bg_fit_opts *o,
                     int weighted, bg_linfit *lf, bg_error *err)
{
    unsigned pw[MAXB];
    size_t nb = bg_model_basis(&o->model, pw);
    char name[16];
    int any_ur = 0;
    bg_model_name(&o->model, name, sizeof name);
    for (size_t i = 0; i < n; i++) {
        fr->L[i] = log(pts[i].r_ohm);
        fr->tk[i] = pts[i].t_k;
        basis_row(fr->L[i], pw, nb, &fr->G[i * nb]);
        if (pts[i].u_r_ohm > 0.0)
            any_ur = 1;
        fr->u[i] = weighted ? (pts[i].u_t_k > 0.0 ? pts[i].u_t_k : 1.0) : 1.0;
    }
    memset(lf, 0, sizeof *lf);
    /* An ill-conditioned design comes from the data and the model chosen for them, so it is
    ** reported as bad input (BG_EINVAL), not as a numerical failure of bandgap. */
    if (linear_step(fr, pts, n, nb, o->min_rcond, lf) != BG_OK)
        return bg_error_set(err, BG_EINVAL, "model '%s': the design is rank-deficient or "
                            "ill-conditioned for these points (reciprocal condition %.2g, "
                            "limit %.2g): too many coefficients for the range?", name, lf->rcond,
                            o->min_rcond);
    if (!(weighted && any_ur))
        return BG_OK;
    for (size_t i = 0; i < n; i++) {
        double f = 0.0, d = 0.0;
        const double *g = &fr->G[i * nb];
        for (size_t j = 0; j < nb; j++) {
            f += lf->c[j] * g[j];
            if (pw[j] > 0)
                d += lf->c[j] * pw[j] * g[j] / fr->L[i];
        }
        double t = 1.0 / f, slope = -t * t * d / pts[i].r_ohm; /* dT/dR, K/ohm */
        double ur = slope * pts[i].u_r_ohm;
        fr->u[i] = sqrt(pts[i].u_t_k * pts[i].u_t_k + ur * ur);
    }
    if (linear_step(fr, pts, n, nb, o->min_rcond, lf) != BG_OK)
        return bg_error_set(err, BG_EINVAL, "model '%s': the design is rank-deficient or "
                            "ill-conditioned for these points", name);
    return BG_OK;
}

/* Chi2, RMS, range, degrees of freedom, covariance scale and information criteria from the
** fitted temperatures fr->tm and the weights fr->u (the residuals themselves are written by
** studentize, in its pass over the readings). */
static void fit_statistics(const bg_fitter *fr, const bg_point *pts, size_t n,
                           const bg_fit_opts *o, int weighted, bg_fit *out)
{
    double ss = 0.0, mx = 0.0, chi2 = 0.0, tmin = INFINITY, tmax = -INFINITY;
    for (size_t i = 0; i < n; i++) {
        double r = pts[i].t_k - fr->tm[i];
        chi2 += (r / fr->u[i]) * (r / fr->u[i]);
        ss += r * r;
        if (fabs(r) > mx)
            mx = fabs(r);
        if (pts[i].t_k < tmin)
            tmin = pts[i].t_k;
        if (pts[i].t_k > tmax)
            tmax = pts[i].t_k;
    }
    out->chi2 = chi2, out->t_min_k = tmin, out->t_max_k = tmax;
    out->rms_mk = 1e3 * sqrt(ss / (double)n);
    out->max_abs_mk = 1e3 * mx;
    if (out->dof > 0) {
        out->reduced_chi2 = out->chi2 / (double)out->dof;
        out->p_value = NAN; /* computed by bg_fit_p_value() when asked for */
        out->cov_scale = weighted ? (o->inflate ? fmax(1.0, out->reduced_chi2) : 1.0)
                                  : out->reduced_chi2;
    } else {
        out->reduced_chi2 = NAN, out->p_value = NAN, out->cov_scale = NAN;
    }
    /* Information criteria: with stated uncertainties -2 ln L = chi2 + const; otherwise the
    ** Gaussian profile likelihood n ln(RSS/n), RSS floored at n (1 nK)^2. */
    double dn = (double)n, k = (double)out->npar;
    double m2ll = weighted ? out->chi2 : dn * log(fmax(ss, dn * 1e-18) / dn);
    out->aic = m2ll + 2.0 * k;
    out->bic = m2ll + k * log(dn);
}

/* Coefficients and covariance: in the basis (a[], pcov) first, then in the model's own terms
** (coef, cov), both scaled by out->cov_scale. */
static void fit_coefficients(const bg_linfit *lf, const unsigned *pw, size_t nb, double *a,
                             bg_fit *out)
{
    memset(a, 0, MAXB * sizeof *a);
    for (size_t j = 0; j < nb; j++)
        a[pw[j]] = lf->c[j];
    for (size_t i = 0; i < MAXB * MAXB; i++)
        out->pcov[i] = 0.0;
    for (size_t i = 0; i < nb; i++)
        for (size_t j = 0; j < nb; j++)
            out->pcov[pw[i] * MAXB + pw[j]] = lf->cov[i * nb + j] * out->cov_scale;
    for (size_t i = 0; i < MAXB * MAXB; i++)
        out->cov[i] = 0.0;
    bg_model_from_basis(&out->model, lf->c, lf->cov, out->cov);
    for (size_t i = 0; i < out->npar * out->npar; i++)
        out->cov[i] *= out->cov_scale;
    for (size_t j = out->npar; j < MAXB; j++)
        out->model.coef[j] = 0.0;
}

/* check_points, or, while the sort is held (bgi_sort_hold), its verdict on the same points
** with the same direction, quantity and gaps when that check passed without a remark. */
static int check_points_held(bg_fitter *fr, const bg_point *pts, size_t n,
                             const bg_fit_opts *o, int *weighted, bg_fit *out, bg_error *err)
{
    struct bgi_checked k = { pts, n, bg_model_direction(&o->model),
                             (int)bg_model_quantity(&o->model), o->setpoint_gap_k,
                             o->mono_gap_k, 0, 0 };
    struct bgi_checked *c = &fr->checked;
    if (fr->sort_hold && fr->sort_pts == pts && c->pts == pts && c->n == n && c->dir == k.dir &&
        c->qty == k.qty && c->gap == k.gap && c->mono == k.mono) {
        *weighted = c->weighted, out->ndistinct = c->nd;
        return enough_setpoints(o, n, c->nd, err);
    }
    c->pts = NULL;
    int rc = check_points(fr, pts, n, o, weighted, out, err);
    if (rc == BG_OK && fr->sort_hold && out->nnotes == 0) {
        k.weighted = *weighted, k.nd = out->ndistinct;
        *c = k;
    }
    return rc;
}

int bgi_fit_check(bg_fitter *fr, const bg_point *pts, size_t n, const bg_fit_opts *o,
                  int *weighted, bg_fit *out, bg_error *err)
{
    char name[16];
    unsigned pw[MAXB];
    size_t nb = bgi_fit_basis(&o->model, pw), npar = bg_model_npar(&o->model);

    bg_model_name(&o->model, name, sizeof name);
    if (nb == 0)
        return bg_error_set(err, BG_EINVAL, "model '%s' has no linear basis: the fitter "
                            "cannot start it", name);
    if (n < npar)
        return bg_error_set(err, BG_EINVAL, "model '%s' needs at least %zu points, got %zu",
                            name, npar, n);
    if (fitter_reserve(fr, n) != BG_OK || fit_reserve(out, n) != BG_OK)
        return bg_error_set(err, BG_ENOMEM, "out of memory fitting %zu points", n);
    out->nnotes = 0;
    return check_points_held(fr, pts, n, o, weighted, out, err);
}

int bgi_fit_finish(bg_fitter *fr, const bg_point *pts, size_t n, const bg_fit_opts *o,
                   const struct bgi_solution *sol, bg_fit *out, bg_error *err)
{
    const bg_linfit *lf = &sol->lf;
    int weighted = sol->weighted;
    char name[16];
    unsigned pw[MAXB];
    size_t nb = bgi_fit_basis(&o->model, pw), npar = bg_model_npar(&o->model);
    double a[MAXB];
    int rc;

    bg_model_name(&o->model, name, sizeof name);
    out->model = o->model;
    out->n = n, out->npar = npar, out->dof = n - npar, out->weighted = weighted;
    out->iterations = sol->iters, out->rcond = lf->rcond;
    fit_statistics(fr, pts, n, o, weighted, out);
    fit_coefficients(lf, pw, nb, a, out);
    int lev_here = sol->with_leverages && o->refine; /* the same leverages: kept once */
    if (fr->summary_on && !(out->bic <= fr->summary_bic)) { /* a row that cannot be chosen */
        if (sol->with_leverages)
            leverages(fr, pts, n, nb, o->refine != 0, lf);
    } else {
        studentize(fr, pts, o, lf, nb, out, lev_here ? fr->lev : NULL);
        if (lev_here)
            fr->lev_one_step = 1;
        else if (sol->with_leverages)
            leverages(fr, pts, n, nb, o->refine != 0, lf);
    }
    if (out->dof == 0) {
        for (size_t i = 0; i < MAXB * MAXB; i++)
            out->cov[i] = NAN, out->pcov[i] = NAN;
        add_note(out, BG_NOTE_NODOF, 0, "%s: %zu points for %zu coefficients: no degrees of "
                 "freedom left: uncertainty cannot be estimated",
                 o->source ? o->source : "fit", n, npar);
    } else if (weighted)
        chi2_notes(fr, o, out);
    if ((rc = check_finite(out, name, err)) != BG_OK)
        return rc;
    if (bg_model_basis(&o->model, pw) == 0)
        monotonic_note_x(pts, o, name, out);
    else
        monotonic_note(fr, o, a, name, out);
    return BG_OK;
}

int bg_fitter_run(bg_fitter *fr, const bg_point *pts, size_t n, const bg_fit_opts *o,
                  bg_fit *out, bg_error *err)
{
    char name[16];
    unsigned pw[MAXB];
    size_t nb = bg_model_basis(&o->model, pw);
    struct bgi_solution sol = { .iters = 0, .weighted = 0, .with_leverages = 1 };
    bg_linfit lf;
    int rc;

    if (nb == 0 && bg_model_lin_form(&o->model) >= 0)
        return bgi_fit_generic(fr, pts, n, o, out, err);
    bg_model_name(&o->model, name, sizeof name);
    if ((rc = bgi_fit_check(fr, pts, n, o, &sol.weighted, out, err)) != BG_OK ||
        (rc = fit_start(fr, pts, n, o, sol.weighted, &lf, err)) != BG_OK)
        return rc;
    if (o->refine) {
        if (refine(fr, pts, n, nb, o, &lf, &sol.iters) != BG_OK)
            return bg_error_set(err, BG_ENUM, "model '%s': refinement did not converge in %u "
                                "iterations", name, o->max_iter);
    } else if (!isfinite(t_chi2(fr, pts, n, nb, lf.c)))
        return bg_error_set(err, BG_ENUM, "model '%s': fitted curve gives 1/T <= 0 at a point",
                            name);
    /* fr->tm holds the fitted temperatures; lf.cov the unscaled covariance. */
    sol.lf = lf;
    return bgi_fit_finish(fr, pts, n, o, &sol, out, err);
}

int bg_fit_points(const bg_point *pts, size_t n, const bg_fit_opts *o, bg_fit *out,
                  bg_error *err)
{
    bg_fitter *fr = bg_fitter_new();
    int rc;
    if (!fr)
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    rc = bg_fitter_run(fr, pts, n, o, out, err);
    bg_fitter_free(fr);
    return rc;
}

/* T^2 sqrt(g^T V g) with g = (L^k), V the covariance of the a_k. */
static double u_of_l(const bg_fit *fit, double L, double t_k)
{
    double g[MAXB], s = 0.0;
    size_t top = 0;
    g[0] = 1.0;
    for (size_t k = 1; k < MAXB; k++)
        g[k] = g[k - 1] * L;
    for (size_t k = 0; k < MAXB; k++) /* highest power in use */
        if (fit->pcov[k * MAXB + k] != 0.0)
            top = k;
    for (size_t i = 0; i <= top; i++)
        for (size_t j = 0; j <= top; j++)
            s += g[i] * fit->pcov[i * MAXB + j] * g[j];
    return (s >= 0.0) ? t_k * t_k * sqrt(s) : NAN;
}

int bg_fit_u_t(const bg_fit *fit, double t_k, double *u_k, int *extrapolated, bg_error *err)
{
    double r;
    if (!(bg_model_flags(&fit->model) & BG_MODEL_INV_POLY)) {
        int rc = BG_OK;
        if (extrapolated)
            *extrapolated = t_k < fit->t_min_k || t_k > fit->t_max_k;
        if (fit->dof == 0)
            *u_k = NAN;
        else
            rc = bg_model_u_t(&fit->model, fit->cov, t_k, u_k, err);
        return rc;
    }
    int rc = bg_model_r_from_t(&fit->model, t_k, &r, err);
    if (rc != BG_OK)
        return rc;
    if (extrapolated)
        *extrapolated = t_k < fit->t_min_k || t_k > fit->t_max_k;
    *u_k = u_of_l(fit, log(r), t_k);
    return BG_OK;
}

int bg_fit_u_at_r(const bg_fit *fit, double r_ohm, double *u_k, bg_error *err)
{
    double t_k;
    int rc = bg_model_t_from_r(&fit->model, r_ohm, &t_k, err);
    if (rc != BG_OK)
        return rc;
    if (!(bg_model_flags(&fit->model) & BG_MODEL_INV_POLY))
        return bg_fit_u_t(fit, t_k, u_k, NULL, err);
    *u_k = u_of_l(fit, log(r_ohm), t_k);
    return BG_OK;
}

double bg_fit_coverage_k(const bg_fit *fit, double coverage)
{
    if (fit->dof == 0)
        return NAN;
    return gsl_cdf_tdist_Pinv(0.5 + 0.5 * coverage, (double)fit->dof);
}

/* Sum of squared leave-one-out temperature residuals of the last fit, in O(n), from the
** leverages h_i of fr->lev (Cook & Weisberg, Residuals and Influence in Regression, 1982,
** ch. 2, from memory: deleting case i changes its residual to e_i / (1 - h_i)).
** Linear fit in 1/T: the prediction without reading i is y_(i) = y_i - e_i / (1 - h_i) with
** e_i the residual in 1/T, exact for weighted linear least squares with the weights held fixed;
** the temperature residual is T_i - 1 / y_(i).  Refined fit: the same one-step form
** r_i / (1 - h_i) on the temperature residual with the leverage from the Gauss-Newton Jacobian
** at the solution, a first-order approximation of refitting without the reading.  Returns n,
** or the index of a reading whose left-out prediction is not defined. */
static size_t loo_ss(const bg_fitter *fr, const bg_point *pts, size_t n, double *ss)
{
    double s = 0.0;
    for (size_t i = 0; i < n; i++) {
        double h = fr->lev[i], t = pts[i].t_k, d;
        if (!(1.0 - h > 1e-10))
            return i;
        if (fr->lev_one_step)
            d = (t - fr->tm[i]) / (1.0 - h);
        else {
            double ey = 1.0 / t - 1.0 / fr->tm[i], y = 1.0 / t - ey / (1.0 - h);
            if (!(y > 0.0))
                return i;
            d = t - 1.0 / y;
        }
        s += d * d;
    }
    *ss = s;
    return n;
}

/* The candidates of a comparison when they are not the NTC kinds: readings other than
** resistances, or resistances that rise with temperature (by the sign of their covariance
** with it); 0 for the NTC kinds. */
static size_t candidates(const bg_point *pts, size_t n, const bg_fit_opts *o,
                         const char **names)
{
    double tm = 0.0, xm = 0.0, sxy = 0.0;
    for (size_t i = 0; i < n; i++)
        tm += pts[i].t_k / (double)n, xm += pts[i].r_ohm / (double)n;
    for (size_t i = 0; i < n; i++)
        sxy += (pts[i].t_k - tm) * (pts[i].r_ohm - xm);
    if (o->quantity == BG_QTY_RESISTANCE && !(sxy > 0.0))
        return 0;
    size_t k = bg_model_candidates((bg_quantity)o->quantity, sxy > 0.0 ? +1 : -1, names,
                                   BG_CMP_MAX);
    return k < BG_CMP_MAX ? k : BG_CMP_MAX;
}

/* The parameters of 'from' into those of 'to' with the same name. */
static void copy_params(const bg_model *from, bg_model *to)
{
    for (size_t i = 0; i < bg_model_nparam(to); i++)
        for (size_t j = 0; j < bg_model_nparam(from); j++)
            if (strcmp(bg_model_param_name(to, i), bg_model_param_name(from, j)) == 0)
                bg_model_set_param(to, bg_model_param_name(to, i), bg_model_param(from, j),
                                   NULL);
}

/* The fits kept by a comparison for its caller ('keep', one per row, or NULL): a row's fit is
** kept while the row can still be chosen (BIC within 2 of the lowest so far); the others are
** released as the lowest falls, the first of them into 'spare' when it holds no buffers (the
** next row's fit reuses them: no memory given back and taken again, page by page). */
static void keep_prune(bg_fit *keep, const bg_cmp *out, double best, bg_fit *spare)
{
    for (size_t m = 0; keep && m < out->nrows; m++)
        if (!out->row[m].ok || !(out->row[m].bic <= best + 2.0)) {
            if (spare->cap == 0 && keep[m].cap > 0) {
                bg_fit t = *spare;
                *spare = keep[m], keep[m] = t;
            }
            bg_fit_release(&keep[m]);
        }
}

int bg_fit_compare(bg_fitter *fr, const bg_point *pts, size_t n, const bg_fit_opts *o,
                   bg_cmp *out, bg_error *err)
{
    return bgi_fit_compare_keep(fr, pts, n, o, out, NULL, err);
}

int bgi_fit_compare_keep(bg_fitter *fr, const bg_point *pts, size_t n, const bg_fit_opts *o,
                         bg_cmp *out, bg_fit *keep, bg_error *err)
{
    static const char *ntc[BG_CMP_MAX] = { "beta", "sh3", "poly:2", "sh4", "poly:4", "poly:5" };
    const char *names[BG_CMP_MAX];
    size_t ncand = candidates(pts, n, o, names);
    bg_fit f = BG_FIT_INIT;
    bg_error e2 = BG_ERROR_INIT, first_bad = BG_ERROR_INIT;
    int rc = BG_OK;
    double best = INFINITY;

    int held = bgi_sort_hold(fr, 1); /* the candidates fit the same points: sorted once */
    if (ncand == 0)
        memcpy(names, ntc, sizeof ntc), ncand = BG_CMP_MAX;
    memset(out, 0, sizeof *out);
    out->chosen = -1;
    out->loo_one_step = o->refine != 0;
    for (size_t m = 0; m < ncand; m++) {
        bg_cmp_row *row = &out->row[out->nrows++];
        bg_fit_opts oo = *o;
        bg_model_parse(names[m], &row->model, NULL);
        row->model.t0_k = o->model.t0_k > 0.0 ? o->model.t0_k : BG_T0_DEFAULT_K;
        copy_params(&o->model, &row->model);
        oo.model = row->model;
        row->npar = bg_model_npar(&row->model);
        if (n < row->npar + 2) {
            snprintf(row->why, sizeof row->why, "needs at least %zu points", row->npar + 2);
            continue;
        }
        /* a row above the lowest BIC so far + 2 cannot be chosen: its summary will do */
        fr->summary_on = 1, fr->summary_bic = best + 2.0;
        if (bg_fitter_run(fr, pts, n, &oo, &f, &e2) != BG_OK) {
            /* Bad data fail every model alike; a design too ill-conditioned for one model
            ** (many coefficients on a narrow range) leaves that model out of the choice. */
            if (e2.code == BG_EINVAL && first_bad.code == BG_OK)
                first_bad = e2;
            snprintf(row->why, sizeof row->why, "%.150s", e2.msg);
            continue;
        }
        row->model = f.model;
        row->rms_mk = f.rms_mk, row->max_abs_mk = f.max_abs_mk, row->chi2 = f.chi2;
        row->aic = f.aic, row->bic = f.bic;
        double ss = 0.0;
        size_t bad = loo_ss(fr, pts, n, &ss);
        if (bad < n) {
            char w1[300];
            snprintf(row->why, sizeof row->why, "leave-one-out undefined: %.60s alone "
                     "sets the fit (leverage 1 or 1/T <= 0 without it)",
                     where(o, &pts[bad], bad, w1, sizeof w1));
            continue;
        }
        row->loo_rms_mk = 1e3 * sqrt(ss / (double)n);
        row->ok = 1;
        best = fmin(best, row->bic);
        /* this row's fit to the caller when it can be chosen: 'f' takes the slot's empty
        ** buffers (a row above the lowest BIC + 2 would be released at once: 'f' keeps it) */
        if (keep && row->bic <= best + 2.0) {
            bg_fit t = keep[m];
            keep[m] = f, f = t;
            keep_prune(keep, out, best, &f);
        }
    }
    for (size_t m = 0; m < out->nrows; m++) {
        const bg_cmp_row *row = &out->row[m];
        if (row->ok && row->bic <= best + 2.0 &&
            (out->chosen < 0 || row->npar < out->row[out->chosen].npar))
            out->chosen = (int)m;
    }
    if (out->chosen < 0 && first_bad.code != BG_OK) {
        rc = bg_error_set(err, first_bad.code, "%s", first_bad.msg);
        goto done;
    }
    if (out->chosen < 0) {
        rc = bg_error_set(err, BG_EINVAL, "no model could be compared on %zu points "
                          "(at least 4 are needed)", n);
        goto done;
    }
    {
        const bg_cmp_row *c = &out->row[out->chosen];
        char nm[16];
        bg_model_name(&c->model, nm, sizeof nm);
        if (c->bic == best)
            snprintf(out->reason, sizeof out->reason, "'%s' has the lowest BIC (%.2f); "
                     "leave-one-out RMS %.3g mK", nm, c->bic, c->loo_rms_mk);
        else
            snprintf(out->reason, sizeof out->reason, "'%s' is within 2 of the lowest BIC "
                     "(%.2f against %.2f) with fewer coefficients; leave-one-out RMS %.3g mK",
                     nm, c->bic, best, c->loo_rms_mk);
    }
done:
    fr->summary_on = 0;
    bgi_sort_hold(fr, held);
    bg_fit_release(&f);
    return rc;
}

double bg_fit_coef_u(const bg_fit *fit, size_t i)
{
    if (!fit || i >= fit->npar)
        return NAN;
    return sqrt(fit->cov[i * fit->npar + i]);
}
