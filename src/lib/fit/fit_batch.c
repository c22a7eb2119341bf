/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Batched fitting: many probes with the same number of points and model, fitted side by side.
** The data of LANES probes are laid out as a structure of arrays with the probe as the
** innermost index, and every loop over the probes has the constant trip count LANES, so that
** the compiler turns it into vector instructions on portable C11 (checked with
** -fopt-info-vec).  Each probe goes through the same operations in the same order as the
** per-probe path in fit.c (the Householder QR of linfit.c, the Gauss-Newton loop of fit.c's
** refine): the selections a probe makes (pivot columns, convergence) are taken per lane with
** conditional assignments, never by branching on one probe for all.  What the batch does not
** follow (step halving, a refused design, u(R) carried through the slope) is left to
** bg_fitter_run for that probe alone.  The results come out through fit.c's own finishing
** code, so they equal the per-probe path's. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "fit_int.h"

#define LANES 8
#define MAXB BG_MODEL_MAXPAR

#if defined(__GNUC__)
#define BG_INLINE static inline __attribute__((always_inline))
#else
#define BG_INLINE static inline
#endif

/* One lane-wide vector: element l belongs to the probe in lane l. */
typedef double lane[LANES];
#define EACH(l) for (size_t l = 0; l < LANES; l++)

/* The lanes' arrays in the fitter's batch area, for 'n' points and 'nb' columns. */
struct lanes {
    size_t n, nb;
    double *t, *u, *L, *tm, *G, *A, *b; /* point arrays: [i][l]; G [i][j][l]; A [j][i][l] */
    lane c[MAXB], step[MAXB], scale[MAXB], cov[MAXB * MAXB];
    lane rcond, bad, chi2, prev, run, halve, keep;
};

/* The QR's results and scratch for the lanes (as qr_core's locals). */
struct qr_lanes {
    lane colscale[MAXB], work[MAXB], perm[MAXB], R[MAXB * MAXB], Ri[MAXB * MAXB], z[MAXB];
};

/* Swap columns 'k' and 'j' of the lanes where best == j (qr_core's pivot swap). */
BG_INLINE void pivot_swap(double *restrict A, struct qr_lanes *q, const double *best, size_t n,
                          size_t k, size_t j)
{
    double *restrict ck = A + k * n * LANES, *restrict cj = A + j * n * LANES;
    EACH(l) {
        int m = best[l] == (double)j;
        double pk = q->perm[k][l], pj = q->perm[j][l], wk = q->work[k][l], wj = q->work[j][l];
        q->perm[k][l] = m ? pj : pk, q->perm[j][l] = m ? pk : pj;
        q->work[k][l] = m ? wj : wk, q->work[j][l] = m ? wk : wj;
    }
    for (size_t i = 0; i < n; i++)
        EACH(l) {
            int m = best[l] == (double)j;
            double vk = ck[i * LANES + l], vj = cj[i * LANES + l];
            ck[i * LANES + l] = m ? vj : vk, cj[i * LANES + l] = m ? vk : vj;
        }
}

/* Long on purpose: linfit.c's qr_core for LANES probes at once, step for step (equilibration,
** pivoted Householder sweep, condition estimate, back substitution, (R^T R)^-1), with the
** lane loop innermost; split up it would pass the same scratch to every part and lose the
** unrolling over the few columns.  'A' (columns [j][i][l]) and 'b' ([i][l]) are overwritten;
** the solution goes to 'c', the unscaled covariance to 'cov', the column norms to 'scale';
** bad[l] becomes 1 where qr_core would return BG_ENUM. */
BG_INLINE void qr_lanes(double *restrict A, double *restrict b, size_t n, size_t p,
                        double min_rcond, struct qr_lanes *q, lane *c, lane *cov, lane *scale,
                        double *rcond, double *bad)
{
    EACH(l) bad[l] = 0.0;
    for (size_t j = 0; j < p; j++) {
        double *restrict col = A + j * n * LANES;
        lane s = { 0 }, inv;
        for (size_t i = 0; i < n; i++)
            EACH(l) s[l] += col[i * LANES + l] * col[i * LANES + l];
        EACH(l) {
            s[l] = sqrt(s[l]);
            bad[l] = (!(s[l] > 0.0) || !isfinite(s[l])) ? 1.0 : bad[l];
            q->colscale[j][l] = s[l], inv[l] = 1.0 / s[l];
            q->perm[j][l] = (double)j, q->work[j][l] = 1.0;
        }
        for (size_t i = 0; i < n; i++)
            EACH(l) col[i * LANES + l] *= inv[l];
    }
    for (size_t k = 0; k < p; k++) {
        lane best, bw, norm2 = { 0 }, alpha, vtv;
        EACH(l) best[l] = (double)k, bw[l] = q->work[k][l];
        for (size_t j = k + 1; j < p; j++)
            EACH(l) {
                int m = q->work[j][l] > bw[l];
                best[l] = m ? (double)j : best[l], bw[l] = m ? q->work[j][l] : bw[l];
            }
        for (size_t j = k + 1; j < p; j++)
            pivot_swap(A, q, best, n, k, j);
        double *restrict v = A + k * n * LANES;
        for (size_t i = k; i < n; i++)
            EACH(l) norm2[l] += v[i * LANES + l] * v[i * LANES + l];
        EACH(l) {
            double norm = sqrt(norm2[l]);
            bad[l] = !(norm > 0.0) ? 1.0 : bad[l];
            alpha[l] = v[k * LANES + l] > 0.0 ? -norm : norm;
            v[k * LANES + l] -= alpha[l];
            vtv[l] = 2.0 * norm * (norm + fabs(v[k * LANES + l] + alpha[l]));
        }
        for (size_t j = k + 1; j < p; j++) {
            double *restrict cj = A + j * n * LANES;
            lane d = { 0 }, s2 = { 0 };
            for (size_t i = k; i < n; i++)
                EACH(l) d[l] += v[i * LANES + l] * cj[i * LANES + l];
            EACH(l) d[l] = 2.0 * d[l] / vtv[l];
            for (size_t i = k; i < n; i++)
                EACH(l) cj[i * LANES + l] -= d[l] * v[i * LANES + l];
            EACH(l) q->work[j][l] -= cj[k * LANES + l] * cj[k * LANES + l];
            for (size_t i = k + 1; i < n; i++)
                EACH(l) s2[l] += cj[i * LANES + l] * cj[i * LANES + l];
            EACH(l) q->work[j][l] = q->work[j][l] < 1e-4 ? s2[l] : q->work[j][l];
        }
        lane d = { 0 };
        for (size_t i = k; i < n; i++)
            EACH(l) d[l] += v[i * LANES + l] * b[i * LANES + l];
        EACH(l) d[l] = 2.0 * d[l] / vtv[l];
        for (size_t i = k; i < n; i++)
            EACH(l) b[i * LANES + l] -= d[l] * v[i * LANES + l];
        EACH(l) v[k * LANES + l] = alpha[l];
    }
    for (size_t i = 0; i < p; i++)
        for (size_t j = 0; j < p; j++)
            EACH(l) q->R[i * p + j][l] = j >= i ? A[(j * n + i) * LANES + l] : 0.0;
    EACH(l) {
        double r00 = q->R[0][l];
        rcond[l] = fabs(q->R[(p - 1) * p + (p - 1)][l]) / fabs(r00);
        bad[l] = !(rcond[l] >= min_rcond) ? 1.0 : bad[l];
    }
    for (size_t k = 0; k < p; k++)
        EACH(l) {
            double rkk = q->R[k * p + k][l];
            bad[l] = !(rkk != 0.0 && fabs(rkk) >= 1e-15 * fabs(q->R[0][l])) ? 1.0 : bad[l];
        }
    for (size_t ii = p; ii-- > 0;) {
        lane s;
        EACH(l) s[l] = b[ii * LANES + l];
        for (size_t j = ii + 1; j < p; j++)
            EACH(l) s[l] -= q->R[ii * p + j][l] * q->z[j][l];
        EACH(l) q->z[ii][l] = s[l] / q->R[ii * p + ii][l];
    }
    for (size_t j = 0; j < p; j++) {
        for (size_t ii = j + 1; ii < p; ii++)
            EACH(l) q->Ri[ii * p + j][l] = 0.0;
        EACH(l) q->Ri[j * p + j][l] = 1.0 / q->R[j * p + j][l];
        for (size_t ii = j; ii-- > 0;) {
            lane s = { 0 };
            for (size_t k = ii + 1; k <= j; k++)
                EACH(l) s[l] += q->R[ii * p + k][l] * q->Ri[k * p + j][l];
            EACH(l) q->Ri[ii * p + j][l] = -s[l] / q->R[ii * p + ii][l];
        }
    }
    /* Undo the pivoting lane by lane: position i holds column perm[i], whose norm is cs[i]. */
    lane cs[MAXB];
    for (size_t i = 0; i < p; i++)
        for (size_t col = 0; col < p; col++)
            EACH(l) cs[i][l] = q->perm[i][l] == (double)col ? q->colscale[col][l] : cs[i][l];
    for (size_t i = 0; i < p; i++) {
        lane v;
        EACH(l) v[l] = q->z[i][l] / cs[i][l];
        for (size_t col = 0; col < p; col++)
            EACH(l) c[col][l] = q->perm[i][l] == (double)col ? v[l] : c[col][l];
        for (size_t j = i; j < p; j++) {
            lane s = { 0 };
            for (size_t k = j; k < p; k++)
                EACH(l) s[l] += q->Ri[i * p + k][l] * q->Ri[j * p + k][l];
            EACH(l) s[l] /= cs[i][l] * cs[j][l];
            for (size_t ci = 0; ci < p; ci++)
                for (size_t cj = 0; cj < p; cj++)
                    EACH(l) {
                        int m = q->perm[i][l] == (double)ci && q->perm[j][l] == (double)cj;
                        cov[ci * p + cj][l] = m ? s[l] : cov[ci * p + cj][l];
                        cov[cj * p + ci][l] = m ? s[l] : cov[cj * p + ci][l];
                    }
        }
    }
    for (size_t j = 0; j < p; j++)
        EACH(l) scale[j][l] = q->colscale[j][l];
}

/* The weighted linear fit in 1/T (fit.c's linear_step) into lf's lanes. */
BG_INLINE void linear_lanes(struct lanes *z, struct qr_lanes *q, double min_rcond, size_t p)
{
    size_t n = z->n;
    for (size_t i = 0; i < n; i++)
        EACH(l) {
            double t = z->t[i * LANES + l], sw = t * t / z->u[i * LANES + l];
            for (size_t j = 0; j < p; j++)
                z->A[(j * n + i) * LANES + l] = z->G[(i * p + j) * LANES + l] * sw;
            z->b[i * LANES + l] = sw / t;
        }
    qr_lanes(z->A, z->b, n, p, min_rcond, q, z->c, z->cov, z->scale, z->rcond, z->bad);
}

/* fit.c's t_chi2 at the coefficients 'c' into 'chi2'; the fitted temperatures are written to
** z->tm only in the lanes where 'write' is non-zero. */
BG_INLINE void chi2_lanes(struct lanes *z, const lane *c, size_t p, const double *write,
                          double *chi2)
{
    lane s = { 0 }, fin;
    EACH(l) fin[l] = 1.0;
    for (size_t i = 0; i < z->n; i++) {
        lane f = { 0 };
        for (size_t j = 0; j < p; j++)
            EACH(l) f[l] += c[j][l] * z->G[(i * p + j) * LANES + l];
        EACH(l) {
            double tm = 1.0 / f[l], r = (tm - z->t[i * LANES + l]) / z->u[i * LANES + l];
            fin[l] = !(f[l] > 0.0) ? 0.0 : fin[l];
            z->tm[i * LANES + l] = write[l] != 0.0 ? tm : z->tm[i * LANES + l];
            s[l] += r * r;
        }
    }
    EACH(l) chi2[l] = fin[l] != 0.0 ? s[l] : INFINITY;
}

/* Long on purpose: fit.c's refine for the lanes still running (run[l] = 1), one Gauss-Newton
** iteration per pass, every lane stopping on its own; a lane whose full step would not be
** taken gets halve[l] = 1 and is left to the per-probe path (as is one that does not converge
** in max_iter).  Kept in one piece so that the state it updates under the lane masks reads in
** the order refine does it. */
BG_INLINE void refine_lanes(struct lanes *z, struct qr_lanes *q, const bg_fit_opts *o, size_t p,
                            unsigned *iters)
{
    size_t n = z->n;
    lane st;
    EACH(l) z->prev[l] = INFINITY, z->halve[l] = 0.0;
    for (unsigned it = 1; it <= o->max_iter; it++) {
        int any = 0;
        EACH(l) any |= z->run[l] != 0.0;
        if (!any)
            return;
        for (size_t i = 0; i < n; i++)
            EACH(l) {
                double tm = z->tm[i * LANES + l], u = z->u[i * LANES + l], t2 = tm * tm / u;
                for (size_t j = 0; j < p; j++)
                    z->A[(j * n + i) * LANES + l] = -t2 * z->G[(i * p + j) * LANES + l];
                z->b[i * LANES + l] = -(tm - z->t[i * LANES + l]) / u;
            }
        lane cov[MAXB * MAXB], rcond, bad, cmax = { 0 }, dmax = { 0 }, trial[MAXB];
        qr_lanes(z->A, z->b, n, p, o->min_rcond, q, z->step, cov, z->scale, rcond, bad);
        for (size_t j = 0; j < p; j++)
            EACH(l) {
                double cj = fabs(z->c[j][l]) * z->scale[j][l];
                double dj = fabs(z->step[j][l]) * z->scale[j][l];
                cmax[l] = cj > cmax[l] ? cj : cmax[l];
                dmax[l] = dj > dmax[l] ? dj : dmax[l];
                trial[j][l] = z->c[j][l] + 1.0 * z->step[j][l];
            }
        chi2_lanes(z, trial, p, z->run, st); /* a lane that runs on takes these tm[] */
        EACH(l) {
            int run = z->run[l] != 0.0, small = dmax[l] <= 1e-6 * cmax[l];
            int taken = st[l] <= z->chi2[l] || (small && isfinite(st[l]));
            int halve = run && (bad[l] != 0.0 || !taken);
            int stalled = small && dmax[l] > 0.5 * z->prev[l];
            int conv = run && !halve && (dmax[l] <= o->xtol * cmax[l] || stalled);
            z->halve[l] = halve ? 1.0 : z->halve[l];
            z->run[l] = (run && !halve && !conv) ? 1.0 : 0.0;
            z->prev[l] = dmax[l];
            iters[l] = run ? it : iters[l];
            z->keep[l] = (run && !halve) ? 1.0 : 0.0; /* takes the step and covariance */
        }
        for (size_t j = 0; j < p; j++)
            EACH(l) z->c[j][l] = z->keep[l] != 0.0 ? trial[j][l] : z->c[j][l];
        for (size_t k = 0; k < p * p; k++)
            EACH(l) z->cov[k][l] = z->keep[l] != 0.0 ? cov[k][l] : z->cov[k][l];
        EACH(l) {
            z->rcond[l] = z->keep[l] != 0.0 ? rcond[l] : z->rcond[l];
            z->chi2[l] = z->keep[l] != 0.0 ? st[l] : z->chi2[l];
        }
    }
    EACH(l) z->halve[l] = z->run[l] != 0.0 ? 1.0 : z->halve[l]; /* not converged */
}

enum { LANE_BATCH, LANE_ALONE, LANE_DONE };

/* Room for the lanes of 'n' points and 'nb' columns in the fitter's batch area. */
static int batch_reserve(bg_fitter *fr, size_t n, size_t nb)
{
    size_t need = (5 + 2 * nb) * n * LANES;
    if (need <= fr->batch_cap)
        return BG_OK;
    double *v = realloc(fr->batch, need * sizeof *v);
    if (!v)
        return BG_ENOMEM;
    fr->batch = v, fr->batch_cap = need;
    return BG_OK;
}

/* Fill the lanes from the probes p0 .. p0 + LANES - 1; a lane that is not fitted here carries
** a copy of lane 'first' so that it computes on sound numbers. */
static void load_lanes(struct lanes *z, const bg_point *pts, size_t p0, const int *mode,
                       const int *weighted, size_t first, const unsigned *pw)
{
    size_t n = z->n, nb = z->nb;
    for (size_t l = 0; l < LANES; l++) {
        size_t src = mode[l] == LANE_BATCH ? l : first;
        const bg_point *pp = pts + (p0 + src) * n;
        for (size_t i = 0; i < n; i++) {
            double L = log(pp[i].r_ohm), pows[MAXB];
            z->t[i * LANES + l] = pp[i].t_k;
            z->L[i * LANES + l] = L;
            z->u[i * LANES + l] = weighted[src] ? (pp[i].u_t_k > 0.0 ? pp[i].u_t_k : 1.0) : 1.0;
            pows[0] = 1.0;
            for (size_t k = 1; k < MAXB; k++)
                pows[k] = pows[k - 1] * L;
            for (size_t j = 0; j < nb; j++)
                z->G[(i * nb + j) * LANES + l] = pows[pw[j]];
        }
    }
}

/* Lane 'l' into the fitter's per-probe arrays and 'lf', as the per-probe path leaves them. */
static void unload_lane(bg_fitter *fr, const struct lanes *z, size_t l, bg_linfit *lf)
{
    size_t n = z->n, nb = z->nb;
    for (size_t i = 0; i < n; i++) {
        fr->L[i] = z->L[i * LANES + l], fr->u[i] = z->u[i * LANES + l];
        fr->tm[i] = z->tm[i * LANES + l];
        for (size_t j = 0; j < nb; j++)
            fr->G[i * nb + j] = z->G[(i * nb + j) * LANES + l];
    }
    memset(lf, 0, sizeof *lf);
    lf->n = n, lf->p = nb, lf->rank = nb, lf->rcond = z->rcond[l];
    for (size_t j = 0; j < nb; j++)
        lf->c[j] = z->c[j][l];
    for (size_t k = 0; k < nb * nb; k++)
        lf->cov[k] = z->cov[k][l];
}

/* The numerical work of the lanes in mode LANE_BATCH; a lane the batch cannot follow turns
** LANE_ALONE. */
static void fit_lanes(struct lanes *z, const bg_fit_opts *o, int *mode, unsigned *iters)
{
    struct qr_lanes q;
    lane all;
    size_t nb = z->nb;
    EACH(l) all[l] = 1.0;
    switch (nb) { /* the column count as a constant, so that the loops over it unroll */
    case 2: linear_lanes(z, &q, o->min_rcond, 2); chi2_lanes(z, z->c, 2, all, z->chi2); break;
    case 3: linear_lanes(z, &q, o->min_rcond, 3); chi2_lanes(z, z->c, 3, all, z->chi2); break;
    case 4: linear_lanes(z, &q, o->min_rcond, 4); chi2_lanes(z, z->c, 4, all, z->chi2); break;
    default: linear_lanes(z, &q, o->min_rcond, nb); chi2_lanes(z, z->c, nb, all, z->chi2);
    }
    for (size_t l = 0; l < LANES; l++) {
        if (mode[l] == LANE_BATCH && (z->bad[l] != 0.0 || !isfinite(z->chi2[l])))
            mode[l] = LANE_ALONE;
        z->run[l] = mode[l] == LANE_BATCH ? 1.0 : 0.0;
        iters[l] = 0;
    }
    if (!o->refine)
        return;
    switch (nb) {
    case 2: refine_lanes(z, &q, o, 2, iters); break;
    case 3: refine_lanes(z, &q, o, 3, iters); break;
    case 4: refine_lanes(z, &q, o, 4, iters); break;
    default: refine_lanes(z, &q, o, nb, iters);
    }
    for (size_t l = 0; l < LANES; l++)
        if (mode[l] == LANE_BATCH && z->halve[l] != 0.0)
            mode[l] = LANE_ALONE;
}

/* What bg_fitter_run_batch was given. */
struct batch_job {
    const bg_point *pts;
    size_t n;
    const bg_fit_opts *o;
    const char *const *sources;
    bg_fit *out;
    bg_error *errs;
};

/* The probes p0 .. p0 + m - 1 (m <= LANES). */
static void fit_block(bg_fitter *fr, const struct batch_job *jb, size_t p0, size_t m)
{
    struct lanes z;
    unsigned pw[MAXB], iters[LANES];
    int mode[LANES], weighted[LANES] = { 0 };
    size_t first = LANES, n = jb->n;
    const bg_point *pts = jb->pts;
    bg_fit_opts op = *jb->o;

    z.n = n, z.nb = bg_model_basis(&op.model, pw);
    for (size_t l = 0; l < LANES; l++) {
        size_t p = p0 + l;
        mode[l] = LANE_DONE;
        if (l >= m)
            continue;
        op.source = jb->sources ? jb->sources[p] : jb->o->source;
        jb->errs[p].code = BG_OK, jb->errs[p].msg[0] = '\0';
        if (bgi_fit_check(fr, pts + p * n, n, &op, &weighted[l], &jb->out[p], &jb->errs[p]) !=
            BG_OK)
            continue;
        mode[l] = LANE_BATCH;
        for (size_t i = 0; i < n && weighted[l]; i++)
            if (pts[p * n + i].u_r_ohm > 0.0) /* u(R) through the slope: per probe */
                mode[l] = LANE_ALONE;
        if (mode[l] == LANE_BATCH && first == LANES)
            first = l;
    }
    if (first < LANES) {
        double *v = fr->batch;
        z.t = v, z.u = v + n * LANES, z.L = v + 2 * n * LANES, z.tm = v + 3 * n * LANES;
        z.b = v + 4 * n * LANES, z.G = v + 5 * n * LANES, z.A = z.G + z.nb * n * LANES;
        load_lanes(&z, pts, p0, mode, weighted, first, pw);
        fit_lanes(&z, jb->o, mode, iters);
    }
    for (size_t l = 0; l < m; l++) {
        size_t p = p0 + l;
        op.source = jb->sources ? jb->sources[p] : jb->o->source;
        if (mode[l] == LANE_BATCH) {
            struct bgi_solution sol = { .iters = iters[l], .weighted = weighted[l] };
            unload_lane(fr, &z, l, &sol.lf);
            bgi_fit_finish(fr, pts + p * n, n, &op, &sol, &jb->out[p], &jb->errs[p]);
        } else if (mode[l] == LANE_ALONE)
            bg_fitter_run(fr, pts + p * n, n, &op, &jb->out[p], &jb->errs[p]);
    }
}

int bg_fitter_run_batch(bg_fitter *fr, const bg_point *pts, size_t nprobes, size_t n,
                        const bg_fit_opts *o, const char *const *sources, bg_fit *out,
                        bg_error *errs)
{
    unsigned pw[MAXB];
    size_t nb = bg_model_basis(&o->model, pw);
    if (nb == 0 || nb > MAXB || n < nb) { /* bg_fitter_run says why, per probe */
        bg_fit_opts op = *o;
        for (size_t p = 0; p < nprobes; p++) {
            op.source = sources ? sources[p] : o->source;
            errs[p].code = BG_OK, errs[p].msg[0] = '\0';
            bg_fitter_run(fr, pts + p * n, n, &op, &out[p], &errs[p]);
        }
        return BG_OK;
    }
    if (batch_reserve(fr, n, nb) != BG_OK)
        return BG_ENOMEM;
    struct batch_job jb = { pts, n, o, sources, out, errs };
    for (size_t p0 = 0; p0 < nprobes; p0 += LANES)
        fit_block(fr, &jb, p0, nprobes - p0 < LANES ? nprobes - p0 : LANES);
    return BG_OK;
}
