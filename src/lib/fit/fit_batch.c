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
#include <float.h>
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
/* Every lane loop touches element l of its arrays only (no lane reads another's element
** that the loop writes), so the compiler is told that the iterations are independent: it
** would otherwise keep a scalar copy of each loop for the arrays it cannot prove apart. */
#if defined(__clang__)
/* clang reports each lane loop it leaves scalar (at -O1, as in the fuzz build) as a warning;
** the loops are correct either way */
#pragma clang diagnostic ignored "-Wpass-failed"
#define BG_LANES_INDEPENDENT _Pragma("clang loop vectorize(assume_safety)")
#elif defined(__GNUC__)
#define BG_LANES_INDEPENDENT _Pragma("GCC ivdep")
#else
#define BG_LANES_INDEPENDENT
#endif
#define EACH(l) BG_LANES_INDEPENDENT for (size_t l = 0; l < LANES; l++)

/* The lanes' arrays in the fitter's batch area, for 'n' points and 'nb' columns. */
struct lanes {
    size_t n, nb;
    double *t, *u, *L, *tm, *G, *A, *b; /* point arrays: [i][l]; G [i][j][l]; A [j][i][l] */
    double *r;                          /* (tm - t) / u of the fitted temperatures, [i][l] */
    lane c[MAXB], step[MAXB], scale[MAXB], cov[MAXB * MAXB];
    lane rcond, bad, chi2, prev, run, halve, keep;
};

/* The QR's results and scratch for the lanes (as qr_core's locals). */
struct qr_lanes {
    lane colscale[MAXB], work[MAXB], perm[MAXB], R[MAXB * MAXB], Ri[MAXB * MAXB], z[MAXB];
};

/* Swap columns 'k' and 'j' of the lanes where best == j (qr_core's pivot swap). */
BG_INLINE void pivot_swap(double *const *col, struct qr_lanes *q, const double *best, size_t n,
                          size_t k, size_t j)
{
    double *restrict ck = col[k], *restrict cj = col[j];
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

/* pivot_swap when every lane takes column 'j': the columns' pointers are exchanged, as
** qr_core does, not their elements. */
BG_INLINE void pivot_all(double **col, struct qr_lanes *q, size_t k, size_t j)
{
    double *c = col[k];
    col[k] = col[j], col[j] = c;
    EACH(l) {
        double pk = q->perm[k][l], wk = q->work[k][l];
        q->perm[k][l] = q->perm[j][l], q->perm[j][l] = pk;
        q->work[k][l] = q->work[j][l], q->work[j][l] = wk;
    }
}

/* Undo the pivoting (the end of qr_lanes): position i holds column perm[i], whose norm is
** cs[i]; the solution into 'c', the covariance from R^-1 ('q->Ri') into 'cov'.  When every
** lane has the same permutation (the usual case) it is applied as indices, without selects. */
BG_INLINE void unpivot_lanes(const struct qr_lanes *q, size_t p, lane *c, lane *cov)
{
    lane cs[MAXB]; /* each set in full below: no zeroing of the array (a string store) */
    size_t pm[MAXB];
    int same = 1;
    for (size_t i = 0; i < p; i++) {
        EACH(l) same &= q->perm[i][l] == q->perm[i][0];
        pm[i] = (size_t)q->perm[i][0];
    }
    for (size_t i = 0; i < p; i++)
        EACH(l) {
            double v = 0.0;
            for (size_t col = 0; col < p; col++)
                v = q->perm[i][l] == (double)col ? q->colscale[col][l] : v;
            cs[i][l] = v;
        }
    for (size_t i = 0; i < p; i++) {
        lane v;
        EACH(l) v[l] = q->z[i][l] / cs[i][l];
        if (same)
            EACH(l) c[pm[i]][l] = v[l];
        else
            for (size_t col = 0; col < p; col++)
                EACH(l) c[col][l] = q->perm[i][l] == (double)col ? v[l] : c[col][l];
        for (size_t j = i; j < p; j++) {
            lane s = { 0 };
            for (size_t k = j; k < p; k++)
                EACH(l) s[l] += q->Ri[i * p + k][l] * q->Ri[j * p + k][l];
            EACH(l) s[l] /= cs[i][l] * cs[j][l];
            if (same) {
                EACH(l) cov[pm[i] * p + pm[j]][l] = s[l];
                EACH(l) cov[pm[j] * p + pm[i]][l] = s[l];
                continue;
            }
            for (size_t ci = 0; ci < p; ci++)
                for (size_t cj = 0; cj < p; cj++)
                    EACH(l) {
                        int m = q->perm[i][l] == (double)ci && q->perm[j][l] == (double)cj;
                        cov[ci * p + cj][l] = m ? s[l] : cov[ci * p + cj][l];
                        cov[cj * p + ci][l] = m ? s[l] : cov[cj * p + ci][l];
                    }
        }
    }
}

/* Long on purpose: linfit.c's qr_core for LANES probes at once, step for step (equilibration,
** pivoted Householder sweep, condition estimate, back substitution, (R^T R)^-1), with the
** lane loop innermost; split up it would pass the same scratch to every part and lose the
** unrolling over the few columns.  'A' (columns [j][i][l]) and 'b' ([i][l]) are overwritten;
** the solution goes to 'c', the unscaled covariance to 'cov', the column norms to 'scale';
** bad[l] becomes 1 where qr_core would return BG_ENUM. */
BG_INLINE void qr_lanes(double *restrict A, double *restrict b, size_t n, size_t p,
                        double min_rcond, struct qr_lanes *restrict q, lane *c, lane *cov,
                        lane *scale, double *restrict rcond, double *restrict bad)
{
    double *col[MAXB]; /* column j of the design: the pivots exchange these */
    EACH(l) bad[l] = 0.0;
    for (size_t j = 0; j < p; j++)
        col[j] = A + j * n * LANES;
    for (size_t j = 0; j < p; j++) {
        double *restrict cl = col[j];
        lane s = { 0 }, inv;
        for (size_t i = 0; i < n; i++)
            EACH(l) s[l] += cl[i * LANES + l] * cl[i * LANES + l];
        EACH(l) s[l] = sqrt(s[l]);
        EACH(l) bad[l] = s[l] > 0.0 ? bad[l] : 1.0;
        EACH(l) bad[l] = fabs(s[l]) <= DBL_MAX ? bad[l] : 1.0; /* isfinite, without a call */
        EACH(l) q->colscale[j][l] = s[l], inv[l] = 1.0 / s[l];
        EACH(l) q->perm[j][l] = (double)j, q->work[j][l] = 1.0;
        for (size_t i = 0; i < n; i++)
            EACH(l) cl[i * LANES + l] *= inv[l];
    }
    for (size_t k = 0; k < p; k++) {
        lane best, bw, norm2 = { 0 }, alpha, vtv;
        EACH(l) best[l] = (double)k, bw[l] = q->work[k][l];
        for (size_t j = k + 1; j < p; j++)
            EACH(l) {
                int m = q->work[j][l] > bw[l];
                best[l] = m ? (double)j : best[l], bw[l] = m ? q->work[j][l] : bw[l];
            }
        int same = 1;
        EACH(l) same &= best[l] == best[0];
        if (!same)
            for (size_t j = k + 1; j < p; j++)
                pivot_swap(col, q, best, n, k, j);
        else if ((size_t)best[0] != k) /* every lane pivots alike, the usual case: no selects */
            pivot_all(col, q, k, (size_t)best[0]);
        double *restrict v = col[k];
        for (size_t i = k; i < n; i++)
            EACH(l) norm2[l] += v[i * LANES + l] * v[i * LANES + l];
        EACH(l) norm2[l] = sqrt(norm2[l]); /* the norm */
        EACH(l) bad[l] = norm2[l] > 0.0 ? bad[l] : 1.0;
        EACH(l) {
            double norm = norm2[l];
            alpha[l] = v[k * LANES + l] > 0.0 ? -norm : norm;
            v[k * LANES + l] -= alpha[l];
            vtv[l] = 2.0 * norm * (norm + fabs(v[k * LANES + l] + alpha[l]));
        }
        for (size_t j = k + 1; j < p; j++) {
            double *restrict cj = col[j];
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
            EACH(l) q->R[i * p + j][l] = j >= i ? col[j][i * LANES + l] : 0.0;
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
    unpivot_lanes(q, p, c, cov);
    for (size_t j = 0; j < p; j++)
        EACH(l) scale[j][l] = q->colscale[j][l];
}

/* The weighted linear fit in 1/T (fit.c's linear_step) into lf's lanes. */
BG_INLINE void linear_lanes(struct lanes *z, struct qr_lanes *q, double min_rcond, size_t p)
{
    size_t n = z->n;
    const double *restrict T = z->t, *restrict U = z->u, *restrict G = z->G;
    double *restrict A = z->A, *restrict B = z->b;
    for (size_t i = 0; i < n; i++) { /* one loop over the lanes per statement: vectorised */
        lane sw;
        EACH(l) {
            double t = T[i * LANES + l];
            sw[l] = t * t / U[i * LANES + l];
            B[i * LANES + l] = sw[l] / t;
        }
        for (size_t j = 0; j < p; j++)
            EACH(l) A[(j * n + i) * LANES + l] = G[(i * p + j) * LANES + l] * sw[l];
    }
    qr_lanes(z->A, z->b, n, p, min_rcond, q, z->c, z->cov, z->scale, z->rcond, z->bad);
}

/* fit.c's t_chi2 at the coefficients 'c' into 'chi2'; the fitted temperatures are written to
** z->tm, and their weighted residuals (tm - t) / u to z->r, only in the lanes where 'write' is
** non-zero. */
BG_INLINE void chi2_lanes(struct lanes *z, const lane *c, size_t p, const double *write,
                          double *chi2)
{
    lane s = { 0 }, fin;
    const double *restrict T = z->t, *restrict U = z->u, *restrict G = z->G;
    double *restrict TM = z->tm, *restrict RW = z->r;
    EACH(l) fin[l] = 1.0;
    for (size_t i = 0; i < z->n; i++) {
        lane f = { 0 };
        for (size_t j = 0; j < p; j++)
            EACH(l) f[l] += c[j][l] * G[(i * p + j) * LANES + l];
        EACH(l) {
            double tm = 1.0 / f[l], r = (tm - T[i * LANES + l]) / U[i * LANES + l];
            fin[l] = f[l] > 0.0 ? fin[l] : 0.0;
            TM[i * LANES + l] = write[l] != 0.0 ? tm : TM[i * LANES + l];
            RW[i * LANES + l] = write[l] != 0.0 ? r : RW[i * LANES + l];
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
        const double *restrict T = z->t, *restrict U = z->u, *restrict G = z->G;
        const double *restrict TM = z->tm;
        double *restrict A = z->A, *restrict B = z->b;
        for (size_t i = 0; i < n; i++) {
            lane t2;
            EACH(l) {
                double tm = TM[i * LANES + l], u = U[i * LANES + l];
                t2[l] = tm * tm / u;
                B[i * LANES + l] = -(tm - T[i * LANES + l]) / u;
            }
            for (size_t j = 0; j < p; j++)
                EACH(l) A[(j * n + i) * LANES + l] = -t2[l] * G[(i * p + j) * LANES + l];
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


/* What the finish works out across the lanes (finish_lanes, monotonic_lanes, verdict_lanes)
** for the per-lane writing (finish_lane). */
struct fin_lanes {
    lane chi2, ss, mx, tmin, tmax, lmin, lmax, flag, weighted;
    lane rms;  /* fit_statistics' 1e3 sqrt(ss / n) */
    lane mono; /* 1 where monotonic_note's test passes (the curve's slope stays positive) */
    lane red, sc;           /* reduced chi2 and the covariance scale (fit_statistics) */
    lane scv[MAXB * MAXB];  /* the basis' covariance times sc (fit_coefficients' pcov) */
    lane fin;               /* 1 where the coefficients and scv are finite */
    lane ok;                /* 1 where the lane has nothing to remark (verdict_lanes) */
};

enum { LANE_BATCH, LANE_ALONE, LANE_DONE };

/* A block of LANES probes as the kernel sees it: where their points and results are, what
** each lane does, and what the kernel leaves for the per-lane finish. */
struct block {
    bg_fitter *fr;
    const bg_fit_opts *o;
    const bg_point *pts; /* lane l's points: pts[l * n .. l * n + n - 1] */
    bg_fit *out;         /* lane l's result: out[l] */
    size_t npar;
    double log_n;        /* ln n, for the BIC */
    int mode[LANES];     /* LANE_BATCH, LANE_ALONE or LANE_DONE */
    int done[LANES];     /* 1 where finish_lane wrote the lane's result */
    unsigned iters[LANES];
    unsigned pw[MAXB];   /* the basis' powers */
    int ident;           /* 1: the model's coefficients are the basis' (BG_MODEL_BASIS_COEF) */
    int kernel;          /* the kernel that runs (kernel_of) */
    struct fin_lanes f;
};

/* fit.c's monotonic_note's test on every lane, with the basis coefficients z->c in power
** slots: f->mono[l] = 1 when the slope stays positive over the lane's calibrated range (the
** same points, the same sums in the same order as monotonic_note). */
BG_INLINE void monotonic_lanes(const struct lanes *z, const bg_fit_opts *o, size_t p,
                               const unsigned *pw, struct fin_lanes *f)
{
    lane a[MAXB], mono; /* each set in full: no zeroing of the array (a string store) */
    for (size_t kk = 0; kk < MAXB; kk++) {
        size_t jj = p; /* the column of power kk, or none */
        for (size_t j = 0; j < p; j++)
            jj = pw[j] == kk ? j : jj;
        const double *restrict cj = z->c[jj < p ? jj : 0];
        double keep = jj < p ? 1.0 : 0.0;
        EACH(l) {
            double x = cj[l];
            a[kk][l] = keep != 0.0 ? x : 0.0;
        }
    }
    int steps = (bg_model_flags(&o->model) & BG_MODEL_SLOPE_MONOTONIC) ? 1 : 64;
    EACH(l) mono[l] = 1.0;
    for (int s = 0; s <= steps; s++) {
        lane L, d, pwr;
        EACH(l) {
            L[l] = f->lmin[l] + (f->lmax[l] - f->lmin[l]) * s / (double)steps;
            d[l] = 0.0, pwr[l] = 1.0;
        }
        for (size_t k = 1; k < MAXB; k++) {
            EACH(l) d[l] += (double)k * a[k][l] * pwr[l];
            EACH(l) pwr[l] *= L[l];
        }
        EACH(l) mono[l] = d[l] > 0.0 ? mono[l] : 0.0;
    }
    EACH(l) f->mono[l] = mono[l];
}

/* fit.c's fit_statistics and studentize across the lanes: the sums in the same order, the
** studentized residuals into z->b ([i][l], free once the solve is done), then the residuals in
** mK into z->A; flag[l] becomes 1 where a residual exceeds the outlier limit (a note is due:
** bgi_fit_finish writes it); and monotonic_lanes. */
BG_INLINE void finish_lanes(struct lanes *z, const bg_fit_opts *o, size_t p, size_t dof,
                            const unsigned *pw, struct fin_lanes *f)
{
    size_t n = z->n;
    const double *restrict T = z->t, *restrict tm = z->tm, *restrict U = z->u, *restrict G = z->G;
    double *restrict st = z->b, *restrict rs = z->A, floor_k = o->resolution_k / sqrt(12.0);
    double dd = (double)(dof - 1);
    int dof_ok = dof > 1;
    const double *restrict RW = z->r;
    lane chi2, ss = { 0 }, mx = { 0 }, tmin, tmax, lmin, lmax, wt, flag = { 0 };
    /* fit_statistics' chi2 is the sum chi2_lanes made, of the same squares in the same order:
    ** ((t - tm) / u)^2 = ((tm - t) / u)^2 exactly; a lane still here has it finite */
    EACH(l) chi2[l] = z->chi2[l];
    EACH(l) tmin[l] = INFINITY, tmax[l] = -INFINITY, wt[l] = f->weighted[l];
    EACH(l) lmin[l] = INFINITY, lmax[l] = -INFINITY;
    for (size_t i = 0; i < n; i++)
        EACH(l) {
            double t = T[i * LANES + l], r = t - tm[i * LANES + l];
            double a = fabs(r);
            ss[l] += r * r;
            mx[l] = a > mx[l] ? a : mx[l];
            tmin[l] = t < tmin[l] ? t : tmin[l];
            tmax[l] = t > tmax[l] ? t : tmax[l];
            double L = z->L[i * LANES + l]; /* for fit.c's monotonic_note */
            lmin[l] = L < lmin[l] ? L : lmin[l], lmax[l] = L > lmax[l] ? L : lmax[l];
        }
    for (size_t i = 0; i < n; i++) {
        lane h = { 0 };
        const double *restrict g = G + i * p * LANES;
        for (size_t j = 0; j < p; j++) { /* fit.c's hat, in its order */
            lane row = { 0 };
            for (size_t k = 0; k < p; k++)
                EACH(l) row[l] += z->cov[j * p + k][l] * g[k * LANES + l];
            EACH(l) h[l] += g[j * LANES + l] * row[l];
        }
        /* fmax(x, fl^2) as a select (fl^2 is no NaN); the square root below, per element,
        ** since it is a library call that stops the vectoriser. */
        EACH(l) {
            double tmi = tm[i * LANES + l], u = U[i * LANES + l], w = tmi * tmi / u;
            double hh = h[l] * (w * w), r = -RW[i * LANES + l], fl = floor_k / u;
            double x = (chi2[l] - r * r / (1.0 - hh)) / dd, m = x > fl * fl ? x : fl * fl;
            double s2 = (dof_ok & (1.0 - hh > 1e-10)) ? m : NAN;
            s2 = ((wt[l] != 0.0) & (s2 < 1.0)) ? 1.0 : s2;
            double q = s2 * (1.0 - hh);
            st[i * LANES + l] = s2 > 0.0 ? q : NAN;
            rs[i * LANES + l] = r;
        }
    }
    double limit = o->student_limit;
    for (size_t i = 0; i < n; i++) {
        EACH(l) {
            double q = st[i * LANES + l];
            st[i * LANES + l] = q == q ? rs[i * LANES + l] / sqrt(q) : NAN;
        }
        EACH(l) flag[l] = fabs(st[i * LANES + l]) > limit ? 1.0 : flag[l];
        /* the residuals in mK as fit_statistics writes them, over the weighted ones (used) */
        EACH(l) rs[i * LANES + l] = 1e3 * (T[i * LANES + l] - tm[i * LANES + l]);
    }
    EACH(l) {
        f->chi2[l] = chi2[l], f->ss[l] = ss[l], f->mx[l] = mx[l];
        f->tmin[l] = tmin[l], f->tmax[l] = tmax[l], f->flag[l] = flag[l];
        f->lmin[l] = lmin[l], f->lmax[l] = lmax[l];
        f->rms[l] = 1e3 * sqrt(ss[l] / (double)n);
    }
    monotonic_lanes(z, o, p, pw, f);
}

/* What finish_lane decides, across the lanes (after finish_lanes): fit_statistics' reduced chi2
** and covariance scale (fmax(1, red) as a select: the same for every red, NaN too), the scaled
** covariance of fit_coefficients, bg_model_check_finite's test on the basis' coefficients and
** scaled covariance (|x| <= DBL_MAX), and whether a note is due (none: ok[l] = 1): no degrees
** of freedom, an outlier, a curve not monotonic, chi2 beyond either limit or a limit not yet
** known (bgi_fit_finish's chi2_notes). */
BG_INLINE void verdict_lanes(const struct lanes *z, struct block *k, size_t p)
{
    struct fin_lanes *f = &k->f;
    const bg_fitter *fr = k->fr;
    size_t dof = z->n - k->npar;
    double dd = (double)dof, hi = dof < NCRIT ? fr->crit[dof] : 0.0;
    double lo = dof < NCRIT ? fr->crit_lo[dof] : 0.0, big = DBL_MAX;
    int known = dof > 0 && hi != 0.0 && lo != 0.0, dof_ok = dof > 0, inflate = k->o->inflate;
    lane fin;
    EACH(l) {
        double chi2 = f->chi2[l], red = chi2 / dd;
        int wt = f->weighted[l] != 0.0;
        f->red[l] = red;
        f->sc[l] = wt ? (inflate ? (red > 1.0 ? red : 1.0) : 1.0) : red;
        int lim = (!wt) | (known & !(chi2 > hi) & !(chi2 < lo));
        f->ok[l] = (dof_ok & (f->flag[l] == 0.0) & (f->mono[l] != 0.0) & lim) ? 1.0 : 0.0;
        fin[l] = 1.0;
    }
    for (size_t j = 0; j < p; j++)
        EACH(l) fin[l] = fabs(z->c[j][l]) <= big ? fin[l] : 0.0;
    for (size_t i = 0; i < p * p; i++)
        EACH(l) {
            double v = z->cov[i][l] * f->sc[l];
            f->scv[i][l] = v;
            fin[l] = fabs(v) <= big ? fin[l] : 0.0;
        }
    EACH(l) f->fin[l] = fin[l];
}

/* Lane 'l''s results into 'out' exactly as bgi_fit_finish writes them, when it has nothing to
** remark (verdict_lanes), with 'nb' (the basis' size) a constant where inlined, so that its
** loops unroll.  Inside the kernel (compiled for each target), so that the covariances' zeroing
** memsets become vector stores where the target has them; the result is written in the order
** of its fields from the lanes and never read back (loads just after a store of other width
** wait for it).  Returns 0 when a note or an error is due: then bgi_fit_finish does the lane
** over and says so. */
BG_INLINE int finish_lane(const struct lanes *z, const struct block *k, size_t l, size_t nb)
{
    const struct fin_lanes *f = &k->f;
    size_t n = z->n, npar = k->npar, dof = n - npar, np2 = npar * npar;
    if (f->ok[l] == 0.0 || (k->ident && f->fin[l] == 0.0))
        return 0;
    bg_fit *out = &k->out[l];
    double chi2 = f->chi2[l], sc = f->sc[l];
    out->model = k->o->model;
    if (k->ident) { /* npar = nb: fit_coefficients' copy, then the scale */
        for (size_t j = 0; j < nb; j++)
            out->model.coef[j] = z->c[j][l];
        memset(out->cov, 0, sizeof out->cov);
        for (size_t i = 0; i < nb * nb; i++)
            out->cov[i] = f->scv[i][l];
    } else { /* bg_model_from_basis, then the scale and bg_model_check_finite's test */
        double c[MAXB], cv[MAXB * MAXB], cm[MAXB * MAXB];
        int finite = 1;
        for (size_t j = 0; j < nb; j++)
            c[j] = z->c[j][l];
        for (size_t i = 0; i < nb * nb; i++)
            cv[i] = z->cov[i][l];
        bg_model_from_basis(&out->model, c, cv, cm); /* coef[0 .. npar), cm[0 .. npar^2) */
        for (size_t i = 0; i < np2; i++) {
            cm[i] *= sc;
            finite &= fabs(cm[i]) <= DBL_MAX;
        }
        for (size_t j = 0; j < npar; j++)
            finite &= fabs(out->model.coef[j]) <= DBL_MAX;
        if (!finite)
            return 0;
        for (size_t i = 0; i < MAXB * MAXB; i++)
            out->cov[i] = i < np2 ? cm[i] : 0.0;
    }
    for (size_t j = npar; j < MAXB; j++)
        out->model.coef[j] = 0.0;
    out->n = n, out->npar = npar, out->dof = dof, out->weighted = f->weighted[l] != 0.0;
    memset(out->pcov, 0, sizeof out->pcov);
    for (size_t a = 0; a < nb; a++)
        for (size_t b = 0; b < nb; b++)
            out->pcov[k->pw[a] * MAXB + k->pw[b]] = f->scv[a * nb + b][l]; /* cv sc */
    double dn = (double)n, kp = (double)npar, ss = f->ss[l];
    double m2ll = out->weighted ? chi2 : dn * log(fmax(ss, dn * 1e-18) / dn);
    out->chi2 = chi2, out->reduced_chi2 = f->red[l], out->p_value = NAN, out->cov_scale = sc;
    out->rms_mk = f->rms[l], out->max_abs_mk = 1e3 * f->mx[l];
    out->aic = m2ll + 2.0 * kp, out->bic = m2ll + kp * k->log_n;
    out->rcond = z->rcond[l];
    out->t_min_k = f->tmin[l], out->t_max_k = f->tmax[l];
    out->iterations = k->iters[l];
    const bg_point *pts = k->pts + l * n;
    double *restrict rm = out->resid_mk, *restrict st = out->student, *restrict uk = out->u_k;
    size_t *restrict ln = out->line;
    for (size_t i = 0; i < n; i++) {
        rm[i] = z->A[i * LANES + l], st[i] = z->b[i * LANES + l];
        uk[i] = z->u[i * LANES + l], ln[i] = pts[i].line;
    }
    return 1;
}

/* Room for the lanes of 'n' points and 'nb' columns in the fitter's batch area. */
static int batch_reserve(bg_fitter *fr, size_t n, size_t nb)
{
    size_t need = (6 + 2 * nb) * n * LANES;
    if (need <= fr->batch_cap)
        return BG_OK;
    double *v = realloc(fr->batch, need * sizeof *v);
    if (!v)
        return BG_ENOMEM;
    fr->batch = v, fr->batch_cap = need;
    return BG_OK;
}

/* The readings of the probes p0 .. p0 + m - 1 (m <= LANES) into the lanes as they are: T into
** z->t, R into z->L, u(T) into z->u, u(R) into z->tm; a lane past 'm' carries lane 0's. */
BG_INLINE void gather_lanes(struct lanes *z, const bg_point *pts, size_t p0, size_t m)
{
    size_t n = z->n;
    const bg_point *pp[LANES];
    for (size_t l = 0; l < LANES; l++)
        pp[l] = pts + (p0 + (l < m ? l : 0)) * n;
    for (size_t i = 0; i < n; i++) { /* each lane vector stored whole: check_lanes loads them */
        EACH(l) z->t[i * LANES + l] = pp[l][i].t_k;
        EACH(l) z->L[i * LANES + l] = pp[l][i].r_ohm;
        EACH(l) z->u[i * LANES + l] = pp[l][i].u_t_k;
        EACH(l) z->tm[i * LANES + l] = pp[l][i].u_r_ohm;
    }
}

/* quick_check's guard rails on every lane at once, for the shape of a calibration whose
** answer needs no counting: every reading finite, R > 0, u(T) >= 0, no u(R), T rising from
** above 0 K by more than both the setpoint gap and the monotonicity gap at every step (then
** each reading is its own setpoint, ndistinct = n, and the reading a monotonicity check
** compares with is the one before), R falling at every step, u(T) stated on every reading or
** on none.  ok[l] = 1 where lane l passes, has_u[l] = 1 where it states u(T); a lane that does
** not pass goes through quick_check and bgi_fit_check, which decide it as before. */
BG_INLINE void check_lanes(const struct lanes *z, const bg_fit_opts *o, double *restrict ok,
                       double *restrict has_u)
{
    size_t n = z->n;
    const double *restrict T = z->t, *restrict R = z->L, *restrict UT = z->u, *restrict UR = z->tm;
    double sg = o->setpoint_gap_k, mg = o->mono_gap_k, big = DBL_MAX;
    lane good, all;
    EACH(l) good[l] = T[l] > 0.0 ? 1.0 : 0.0, has_u[l] = 0.0, all[l] = 1.0;
    for (size_t i = 0; i < n; i++) {
        EACH(l) {
            double t = T[i * LANES + l], r = R[i * LANES + l], ut = UT[i * LANES + l];
            int g = (fabs(t) <= big) & (fabs(r) <= big) & (fabs(ut) <= big) & (r > 0.0) &
                    (ut >= 0.0) & (UR[i * LANES + l] == 0.0);
            good[l] = g ? good[l] : 0.0;
        }
        EACH(l) has_u[l] = UT[i * LANES + l] > 0.0 ? 1.0 : has_u[l];
        EACH(l) all[l] = UT[i * LANES + l] > 0.0 ? all[l] : 0.0;
    }
    for (size_t i = 1; i < n; i++)
        EACH(l) {
            double d = T[i * LANES + l] - T[(i - 1) * LANES + l];
            int g = (d > 0.0) & (d > sg) & (d > mg) & (R[i * LANES + l] < R[(i - 1) * LANES + l]);
            good[l] = g ? good[l] : 0.0;
        }
    EACH(l) ok[l] = ((good[l] != 0.0) & (has_u[l] == all[l])) ? 1.0 : 0.0;
}

/* The lanes gathered by gather_lanes made ready for the kernel: a lane that is not fitted here
** takes lane 'first''s readings, so that it computes on sound numbers; then L = ln R with the C
** library's log, as the per-probe path; w[l] = 1 where the lane is weighted. */
static void load_lanes(struct lanes *z, const int *mode, const int *weighted, size_t first,
                       double *w)
{
    size_t n = z->n;
    for (size_t l = 0; l < LANES; l++) {
        size_t src = mode[l] == LANE_BATCH ? l : first;
        w[l] = weighted[src] ? 1.0 : 0.0;
        if (src != l)
            for (size_t i = 0; i < n; i++) {
                z->t[i * LANES + l] = z->t[i * LANES + src];
                z->L[i * LANES + l] = z->L[i * LANES + src];
                z->u[i * LANES + l] = z->u[i * LANES + src];
            }
    }
    for (size_t k = 0; k < n * LANES; k++)
        z->L[k] = log(z->L[k]);
}

/* The weights u (u(T) where the lane's probe states it, else 1 K; 1 K throughout when 'w' says
** unweighted) and the basis rows G of the columns 'pw', as fit.c's fit_start makes them. */
BG_INLINE void basis_lanes(struct lanes *z, const double *w, const unsigned *pw)
{
    size_t n = z->n, nb = z->nb;
    double *restrict U = z->u, *restrict G = z->G;
    const double *restrict Lr = z->L;
    for (size_t i = 0; i < n; i++) {
        lane pows[MAXB];
        EACH(l) U[i * LANES + l] = ((w[l] != 0.0) & (U[i * LANES + l] > 0.0)) ? U[i * LANES + l]
                                                                             : 1.0;
        EACH(l) pows[0][l] = 1.0;
        for (size_t k = 1; k < MAXB; k++)
            EACH(l) pows[k][l] = pows[k - 1][l] * Lr[i * LANES + l];
        for (size_t j = 0; j < nb; j++)
            EACH(l) G[(i * nb + j) * LANES + l] = pows[pw[j]][l];
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
BG_INLINE void fit_lanes(struct lanes *z, const bg_fit_opts *o, int *mode, unsigned *iters)
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

/* finish_lane on every lane the batch fitted, into k->done. */
BG_INLINE void finish_each(const struct lanes *z, struct block *k, size_t nb)
{
    for (size_t l = 0; l < LANES; l++)
        k->done[l] = k->mode[l] == LANE_BATCH && finish_lane(z, k, l, nb);
}

/* The numerical work of a block: fit_lanes, then finish_lanes on the lanes, and the results of
** the lanes with nothing to remark written.  Compiled three times: as portable C11, and, where
** GCC or Clang target x86, once more for AVX2 and once for AVX-512 (4 or 8 lanes to a vector
** instead of SSE2's 2), chosen at run time by what the processor runs.  All do the same
** operations in the same order on each lane (neither brings FMA into use: ISO C mode does not
** contract), so they give the same numbers; the tests run each. */
BG_INLINE void kernel_body(struct lanes *z, struct block *k)
{
    size_t dof = z->n - k->npar;
    basis_lanes(z, k->f.weighted, k->pw);
    fit_lanes(z, k->o, k->mode, k->iters);
    switch (z->nb) { /* the column count as a constant, so that the loops over it unroll */
    case 2:
        finish_lanes(z, k->o, 2, dof, k->pw, &k->f);
        verdict_lanes(z, k, 2);
        finish_each(z, k, 2);
        break;
    case 3:
        finish_lanes(z, k->o, 3, dof, k->pw, &k->f);
        verdict_lanes(z, k, 3);
        finish_each(z, k, 3);
        break;
    case 4:
        finish_lanes(z, k->o, 4, dof, k->pw, &k->f);
        verdict_lanes(z, k, 4);
        finish_each(z, k, 4);
        break;
    default:
        finish_lanes(z, k->o, z->nb, dof, k->pw, &k->f);
        verdict_lanes(z, k, z->nb);
        finish_each(z, k, z->nb);
    }
}

static void kernel_portable(struct lanes *z, struct block *k)
{
    kernel_body(z, k);
}

#if defined(__GNUC__) && (defined(__x86_64__) || defined(__i386__))
#define BG_HAVE_AVX2 1
__attribute__((target("avx2"))) static void kernel_avx2(struct lanes *z, struct block *k)
{
    kernel_body(z, k);
}

#define BG_HAVE_AVX512 1
#if defined(__clang__) /* clang takes no vector width in the target attribute */
#define BG_AVX512_TARGET "avx512f"
#else
#define BG_AVX512_TARGET "avx512f,prefer-vector-width=512"
#endif
__attribute__((target(BG_AVX512_TARGET))) static void kernel_avx512(struct lanes *z,
                                                                    struct block *k)
{
    kernel_body(z, k);
}
#endif

/* gather_lanes and check_lanes, compiled for each target as the kernels are. */
static void intake_portable(struct lanes *z, const bg_point *pts, size_t p0, size_t m,
                            const bg_fit_opts *o, double *ok, double *has_u)
{
    gather_lanes(z, pts, p0, m);
    check_lanes(z, o, ok, has_u);
}

#ifdef BG_HAVE_AVX2
__attribute__((target("avx2"))) static void intake_avx2(struct lanes *z, const bg_point *pts,
                                                        size_t p0, size_t m,
                                                        const bg_fit_opts *o, double *ok,
                                                        double *has_u)
{
    gather_lanes(z, pts, p0, m);
    check_lanes(z, o, ok, has_u);
}

__attribute__((target(BG_AVX512_TARGET))) static void
intake_avx512(struct lanes *z, const bg_point *pts, size_t p0, size_t m, const bg_fit_opts *o,
              double *ok, double *has_u)
{
    gather_lanes(z, pts, p0, m);
    check_lanes(z, o, ok, has_u);
}
#endif

int bgi_batch_kernel_usable(int kernel)
{
    switch (kernel) {
    case BGI_KERNEL_AUTO:
    case BGI_KERNEL_PORTABLE: return 1;
#ifdef BG_HAVE_AVX2
    case BGI_KERNEL_AVX2: __builtin_cpu_init(); return __builtin_cpu_supports("avx2") != 0;
    case BGI_KERNEL_AVX512:
        __builtin_cpu_init();
        return __builtin_cpu_supports("avx512f") != 0;
#endif
    default: return 0;
    }
}

/* The kernel 'fr->batch_kernel' asks for, or by the processor when BGI_KERNEL_AUTO (one the
** processor cannot run counts as BGI_KERNEL_PORTABLE). */
static int kernel_of(const bg_fitter *fr)
{
#ifdef BG_HAVE_AVX2
    int kn = fr->batch_kernel;
    if (kn == BGI_KERNEL_AUTO)
        kn = bgi_batch_kernel_usable(BGI_KERNEL_AVX512) ? BGI_KERNEL_AVX512 : BGI_KERNEL_AVX2;
    if ((kn == BGI_KERNEL_AVX512 || kn == BGI_KERNEL_AVX2) && bgi_batch_kernel_usable(kn))
        return kn;
#else
    (void)fr;
#endif
    return BGI_KERNEL_PORTABLE;
}

/* The kernel k->kernel (kernel_of). */
static void run_kernel(struct lanes *z, struct block *k)
{
    switch (k->kernel) {
#ifdef BG_HAVE_AVX2
    case BGI_KERNEL_AVX512: kernel_avx512(z, k); break;
    case BGI_KERNEL_AVX2: kernel_avx2(z, k); break;
#endif
    default: kernel_portable(z, k);
    }
}

/* Room for 'n' points in 'f' (as fit.c's fit_reserve: the result's arrays grow, never shrink). */
static int out_reserve(bg_fit *f, size_t n)
{
    if (n <= f->cap)
        return BG_OK;
    double *r = realloc(f->resid_mk, n * sizeof *r);
    if (r) f->resid_mk = r;
    double *s = realloc(f->student, n * sizeof *s);
    if (s) f->student = s;
    double *u = realloc(f->u_k, n * sizeof *u);
    if (u) f->u_k = u;
    size_t *ln = realloc(f->line, n * sizeof *ln);
    if (ln) f->line = ln;
    if (!r || !s || !u || !ln)
        return BG_ENOMEM;
    f->cap = n;
    return BG_OK;
}

/* bgi_fit_check's guard rails in one pass for points given in rising temperature, the usual
** order of a calibration: then the sorted order is the given one, no two readings repeat, and
** the distinct temperatures and the NTC direction are counted on the points as they are.
** Returns 1 when the probe passes (setting '*weighted', out->ndistinct, no notes), 0 when
** bgi_fit_check must decide (another order, or anything it would remark on). */
static int quick_check(const bg_fitter *fr, const bg_point *pts, size_t n, const bg_fit_opts *o,
                       size_t npar, int *weighted, bg_fit *out)
{
    int ok = 1, any_u = 0, all_u = 1;
    double prev = 0.0; /* above 0 K, and each point above the last */
    if (fr->cap < n || n < npar || n == 0 || out_reserve(out, n) != BG_OK)
        return 0;
    for (size_t i = 0; i < n; i++) { /* without branches: isfinite(x) is |x| <= DBL_MAX */
        double t = pts[i].t_k, r = pts[i].r_ohm, ut = pts[i].u_t_k, ur = pts[i].u_r_ohm;
        ok &= (fabs(t) <= DBL_MAX) & (fabs(r) <= DBL_MAX) & (fabs(ut) <= DBL_MAX) &
              (fabs(ur) <= DBL_MAX) & (r > 0.0) & (t > prev) & (ut >= 0.0) & (ur >= 0.0);
        int has = (ut > 0.0) | (ur > 0.0);
        any_u |= has, all_u &= has, prev = t;
    }
    if (!ok)
        return 0;
    if (any_u && !all_u)
        return 0;
    size_t nd = 1, start = 0;
    for (size_t j = 1; j < n; j++)
        if (pts[j].t_k - pts[start].t_k > o->setpoint_gap_k)
            nd++, start = j;
    if (nd < npar)
        return 0;
    for (size_t j = 1, i = 0; j < n; j++) {
        while (i + 1 < j && pts[j].t_k - pts[i + 1].t_k > o->mono_gap_k)
            i++;
        if (pts[j].t_k - pts[i].t_k > o->mono_gap_k && !(pts[j].r_ohm < pts[i].r_ohm))
            return 0;
    }
    *weighted = any_u, out->nnotes = 0, out->ndistinct = nd;
    return 1;
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

/* The lanes fitted here that the kernel did not finish (something to remark): through
** bgi_fit_finish, which writes the notes. */
static void finish_block(struct lanes *z, const struct block *k, const struct batch_job *jb,
                         size_t p0, const int *weighted)
{
    size_t n = z->n;
    bg_fit_opts op = *jb->o;
    for (size_t l = 0; l < LANES; l++) {
        size_t p = p0 + l;
        if (k->mode[l] != LANE_BATCH || k->done[l])
            continue;
        struct bgi_solution sol = { .iters = k->iters[l], .weighted = weighted[l] };
        op.source = jb->sources ? jb->sources[p] : jb->o->source;
        unload_lane(k->fr, z, l, &sol.lf);
        bgi_fit_finish(k->fr, jb->pts + p * n, n, &op, &sol, &jb->out[p], &jb->errs[p]);
    }
}

/* The probes p0 .. p0 + m - 1 (m <= LANES). */
static void fit_block(bg_fitter *fr, const struct batch_job *jb, size_t p0, size_t m)
{
    struct lanes z;
    struct block k;
    int weighted[LANES] = { 0 };
    size_t first = LANES, n = jb->n;
    const bg_point *pts = jb->pts;
    bg_fit_opts op = *jb->o;
    size_t npar = bg_model_npar(&op.model);
    int *mode = k.mode;

    lane ok, has_u;
    double *v = fr->batch;
    k.fr = fr, k.o = jb->o, k.pts = pts + p0 * n, k.out = jb->out + p0, k.npar = npar;
    k.log_n = log((double)n), k.kernel = kernel_of(fr);
    z.n = n, z.nb = bg_model_basis(&op.model, k.pw);
    k.ident = (bg_model_flags(&op.model) & BG_MODEL_BASIS_COEF) && npar == z.nb;
    z.t = v, z.u = v + n * LANES, z.L = v + 2 * n * LANES, z.tm = v + 3 * n * LANES;
    z.b = v + 4 * n * LANES, z.G = v + 5 * n * LANES, z.A = z.G + z.nb * n * LANES;
    z.r = z.A + z.nb * n * LANES;
    switch (k.kernel) {
#ifdef BG_HAVE_AVX2
    case BGI_KERNEL_AVX512: intake_avx512(&z, pts, p0, m, &op, ok, has_u); break;
    case BGI_KERNEL_AVX2: intake_avx2(&z, pts, p0, m, &op, ok, has_u); break;
#endif
    default: intake_portable(&z, pts, p0, m, &op, ok, has_u);
    }
    for (size_t l = 0; l < LANES; l++) {
        size_t p = p0 + l;
        mode[l] = LANE_DONE;
        if (l >= m)
            continue;
        jb->errs[p].code = BG_OK, jb->errs[p].msg[0] = '\0';
        bg_fit *out = &jb->out[p];
        if (ok[l] != 0.0 && fr->cap >= n && n >= npar &&
            (n <= out->cap || out_reserve(out, n) == BG_OK)) {
            weighted[l] = has_u[l] != 0.0, out->nnotes = 0, out->ndistinct = n;
            mode[l] = LANE_BATCH;
            first = first == LANES ? l : first;
            continue;
        }
        op.source = jb->sources ? jb->sources[p] : jb->o->source;
        if (!quick_check(fr, pts + p * n, n, &op, npar, &weighted[l], out) &&
            bgi_fit_check(fr, pts + p * n, n, &op, &weighted[l], out, &jb->errs[p]) != BG_OK)
            continue;
        mode[l] = LANE_BATCH;
        for (size_t i = 0; i < n && weighted[l]; i++)
            if (pts[p * n + i].u_r_ohm > 0.0) /* u(R) through the slope: per probe */
                mode[l] = LANE_ALONE;
        if (mode[l] == LANE_BATCH && first == LANES)
            first = l;
    }
    if (first < LANES) {
        load_lanes(&z, mode, weighted, first, k.f.weighted);
        run_kernel(&z, &k);
        finish_block(&z, &k, jb, p0, weighted);
    }
    for (size_t l = 0; l < m; l++) {
        size_t p = p0 + l;
        op.source = jb->sources ? jb->sources[p] : jb->o->source;
        if (mode[l] == LANE_ALONE)
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
