/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Linear least squares by Householder QR with column equilibration and column pivoting
** (Businger & Golub, Numer. Math. 7 (1965) 269-276; Golub & Van Loan, Matrix Computations,
** 4th ed., sections 5.2 and 5.4.2).  The condition estimate is |R_pp| / |R_11| of the pivoted
** factor of the equilibrated design.  Written here rather than calling GSL because a
** calibration fit has p <= 6 columns and GSL's SVD path costs more than the whole fit should
** (see tests/bench); the tests check it against NIST StRD certified values. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "fit_int.h"

/* The solver, inlined into specialisations for the small column counts of the models (the
** loops over columns then unroll); see bgi_lin_qr. */
#if defined(__GNUC__)
#define BG_INLINE static inline __attribute__((always_inline))
#else
#define BG_INLINE static inline
#endif

/* d[j]: the squared norm of each of the 'p' columns 'c' (one accumulator each, rows' order). */
BG_INLINE void col_sums(size_t p, double *const *c, size_t n, double *d)
{
    double a[BG_LIN_MAXP];
    for (size_t j = 0; j < p; j++)
        a[j] = 0.0;
    for (size_t i = 0; i < n; i++)
        for (size_t j = 0; j < p; j++)
            a[j] += c[j][i] * c[j][i];
    for (size_t j = 0; j < p; j++)
        d[j] = a[j];
}

/* Column j of the 'p' columns 'c' times inv[j]; nrm[j]: its squared norm after. */
BG_INLINE void col_scale(size_t p, double *const *c, size_t n, const double *inv, double *nrm)
{
    double a[BG_LIN_MAXP];
    for (size_t j = 0; j < p; j++)
        a[j] = 0.0;
    for (size_t i = 0; i < n; i++)
        for (size_t j = 0; j < p; j++) {
            c[j][i] *= inv[j];
            a[j] += c[j][i] * c[j][i];
        }
    for (size_t j = 0; j < p; j++)
        nrm[j] = a[j];
}

/* The sums of the sweep over rows k .. n-1 for the 'm' columns 'c' that follow the reflector
** 'v': d[j] = v . c[j], and d[m] = v . b; one accumulator each, added in the rows' order.
** Inlined with 'm' a constant, so that the accumulators stay in registers. */
BG_INLINE void sweep_dots(size_t m, const double *v, double *const *c, const double *b,
                          size_t k, size_t n, double *d)
{
    double a[BG_LIN_MAXP + 1];
    for (size_t j = 0; j <= m; j++)
        a[j] = 0.0;
    for (size_t i = k; i < n; i++) {
        for (size_t j = 0; j < m; j++)
            a[j] += v[i] * c[j][i];
        a[m] += v[i] * b[i];
    }
    for (size_t j = 0; j <= m; j++)
        d[j] = a[j];
}

/* The reflection of the 'm' columns 'c' and of b by 'v' with the factors 'd' (as sweep_dots),
** rows k .. n-1, and into nrm[j] the squared norm of column j below row k (rows' order). */
BG_INLINE void sweep_apply(size_t m, const double *v, double *const *c, double *b, size_t k,
                           size_t n, const double *d, double *nrm)
{
    double a[BG_LIN_MAXP];
    for (size_t j = 0; j < m; j++) {
        a[j] = 0.0;
        c[j][k] -= d[j] * v[k];
    }
    b[k] -= d[m] * v[k];
    for (size_t i = k + 1; i < n; i++) {
        for (size_t j = 0; j < m; j++) {
            c[j][i] -= d[j] * v[i];
            a[j] += c[j][i] * c[j][i];
        }
        b[i] -= d[m] * v[i];
    }
    for (size_t j = 0; j < m; j++)
        nrm[j] = a[j];
}

/* sweep_dots and sweep_apply with the column count as a constant. */
BG_INLINE void sweep(size_t m, const double *v, double *const *c, double *b, size_t k,
                     size_t n, double vtv, double *nrm)
{
    double d[BG_LIN_MAXP + 1];
    switch (m) {
    case 0: sweep_dots(0, v, c, b, k, n, d); break;
    case 1: sweep_dots(1, v, c, b, k, n, d); break;
    case 2: sweep_dots(2, v, c, b, k, n, d); break;
    case 3: sweep_dots(3, v, c, b, k, n, d); break;
    case 4: sweep_dots(4, v, c, b, k, n, d); break;
    case 5: sweep_dots(5, v, c, b, k, n, d); break;
    default: sweep_dots(m, v, c, b, k, n, d);
    }
    for (size_t j = 0; j <= m; j++)
        d[j] = 2.0 * d[j] / vtv;
    switch (m) {
    case 0: sweep_apply(0, v, c, b, k, n, d, nrm); break;
    case 1: sweep_apply(1, v, c, b, k, n, d, nrm); break;
    case 2: sweep_apply(2, v, c, b, k, n, d, nrm); break;
    case 3: sweep_apply(3, v, c, b, k, n, d, nrm); break;
    case 4: sweep_apply(4, v, c, b, k, n, d, nrm); break;
    case 5: sweep_apply(5, v, c, b, k, n, d, nrm); break;
    default: sweep_apply(m, v, c, b, k, n, d, nrm);
    }
}

/* Long on purpose: equilibration, the pivoted Householder sweep, the condition estimate, the
** back substitution and (R^T R)^-1 share one set of scratch arrays and loop bounds; split into
** functions they would need the same eight arguments each and lose the unrolling that makes a
** 10 x 3 fit cost about a microsecond (DEVELOPERS.md, "the least-squares core is our own").
** The passes over the rows are fused: each sum of the sweep (the column norms, the products
** of the reflector with every remaining column and with b, the norms of the columns below the
** next row) has its own accumulator, added in the order of the rows as a loop of its own would
** add it, so the result is the same to the last bit; fused, the sums run side by side instead
** of each waiting on its own additions, and a 1,000,000-point design is read a few times per
** solve instead of a dozen.  A pivot exchanges the columns' pointers, not their elements. */
BG_INLINE int qr_core(double *A, double *b, size_t n, size_t p, double min_rcond,
                      double *colscale, double *work, bg_linfit *out)
{
    size_t perm[BG_LIN_MAXP];
    double R[BG_LIN_MAXP * BG_LIN_MAXP], Ri[BG_LIN_MAXP * BG_LIN_MAXP], z[BG_LIN_MAXP];
    double *col[BG_LIN_MAXP], nrm[BG_LIN_MAXP], d[BG_LIN_MAXP + 1], inv[BG_LIN_MAXP];

    /* 'A' is column-major: column j is A[j*n .. j*n+n-1]. */
    if (p == 0 || n < p)
        return BG_ENUM;
    out->n = n, out->p = p, out->rank = 0, out->rcond = 0.0;
    for (size_t j = 0; j < p; j++)
        col[j] = A + j * n;
    col_sums(p, col, n, d);
    for (size_t j = 0; j < p; j++) {
        double s = sqrt(d[j]);
        if (!(s > 0.0) || !isfinite(s))
            return BG_ENUM;
        colscale[j] = s;
        inv[j] = 1.0 / s;
        perm[j] = j;
        work[j] = 1.0; /* squared norm of the remaining part of column j */
    }
    col_scale(p, col, n, inv, nrm); /* equilibrate; nrm[j]: the norm^2 of the rows from 0 */
    for (size_t k = 0; k < p; k++) {
        /* Pivot: the remaining column with the largest norm below row k (norms downdated,
        ** and recomputed when cancellation makes the downdate unreliable). */
        size_t best = k;
        for (size_t j = k + 1; j < p; j++)
            if (work[j] > work[best])
                best = j;
        if (best != k) {
            size_t t = perm[k];
            perm[k] = perm[best], perm[best] = t;
            double w = work[k];
            work[k] = work[best], work[best] = w;
            w = nrm[k], nrm[k] = nrm[best], nrm[best] = w;
            double *c = col[k];
            col[k] = col[best], col[best] = c;
        }
        double *v = col[k], norm = sqrt(nrm[k]); /* nrm[k]: rows k .. n-1 of column k */
        if (!(norm > 0.0))
            return BG_ENUM;
        double alpha = v[k] > 0.0 ? -norm : norm;
        /* v = x - alpha e1 in place; v^T v = 2 norm (norm + |x_k|) */
        v[k] -= alpha;
        double vtv = 2.0 * norm * (norm + fabs(v[k] + alpha));
        sweep(p - k - 1, v, col + k + 1, b, k, n, vtv, nrm + k + 1);
        for (size_t j = k + 1; j < p; j++) {
            work[j] -= col[j][k] * col[j][k];
            if (work[j] < 1e-4) /* recompute after heavy cancellation */
                work[j] = nrm[j];
        }
        v[k] = alpha;
    }
    for (size_t i = 0; i < p; i++)
        for (size_t j = 0; j < p; j++)
            R[i * p + j] = j >= i ? col[j][i] : 0.0;
    out->rcond = fabs(R[(p - 1) * p + (p - 1)]) / fabs(R[0]);
    for (size_t k = 0; k < p; k++)
        if (R[k * p + k] != 0.0 && fabs(R[k * p + k]) >= 1e-15 * fabs(R[0]))
            out->rank++;
    if (out->rank < p || !(out->rcond >= min_rcond))
        return BG_ENUM;
    /* Back substitution R z = (Q^T b)[0..p-1]. */
    for (size_t ii = p; ii-- > 0;) {
        double s = b[ii];
        for (size_t j = ii + 1; j < p; j++)
            s -= R[ii * p + j] * z[j];
        z[ii] = s / R[ii * p + ii];
    }
    /* Ri = R^-1 (upper triangular), column by column. */
    for (size_t j = 0; j < p; j++) {
        for (size_t ii = j + 1; ii < p; ii++)
            Ri[ii * p + j] = 0.0;
        Ri[j * p + j] = 1.0 / R[j * p + j];
        for (size_t ii = j; ii-- > 0;) {
            double s = 0.0;
            for (size_t k = ii + 1; k <= j; k++)
                s += R[ii * p + k] * Ri[k * p + j];
            Ri[ii * p + j] = -s / R[ii * p + ii];
        }
    }
    for (size_t i = 0; i < p; i++) {
        out->c[perm[i]] = z[i] / colscale[perm[i]];
        for (size_t j = i; j < p; j++) {
            double s = 0.0;
            for (size_t k = j; k < p; k++)
                s += Ri[i * p + k] * Ri[j * p + k];
            s /= colscale[perm[i]] * colscale[perm[j]];
            out->cov[perm[i] * p + perm[j]] = s;
            out->cov[perm[j] * p + perm[i]] = s;
        }
    }
    return BG_OK;
}

int bgi_lin_qr(double *A, double *b, size_t n, size_t p, double min_rcond, double *colscale,
               double *work, bg_linfit *out)
{
    switch (p) {
    case 2: return qr_core(A, b, n, 2, min_rcond, colscale, work, out);
    case 3: return qr_core(A, b, n, 3, min_rcond, colscale, work, out);
    case 4: return qr_core(A, b, n, 4, min_rcond, colscale, work, out);
    case 5: return qr_core(A, b, n, 5, min_rcond, colscale, work, out);
    case 6: return qr_core(A, b, n, 6, min_rcond, colscale, work, out);
    default: return qr_core(A, b, n, p, min_rcond, colscale, work, out);
    }
}

int bg_linfit_solve(const double *X, const double *y, const double *w, size_t n, size_t p,
                    double min_rcond, bg_linfit *out, bg_error *err)
{
    double *A = NULL, *b = NULL, scale[BG_LIN_MAXP], work[BG_LIN_MAXP];
    int rc = BG_OK;

    if (p == 0 || p > BG_LIN_MAXP)
        return bg_error_set(err, BG_EINVAL, "linear fit: %zu columns (1 .. %d allowed)", p,
                            BG_LIN_MAXP);
    if (n < p)
        return bg_error_set(err, BG_EINVAL, "linear fit: %zu parameters need at least %zu "
                            "points, got %zu", p, p, n);
    A = malloc(n * p * sizeof *A);
    b = malloc(n * sizeof *b);
    if (!A || !b) {
        rc = bg_error_set(err, BG_ENOMEM, "linear fit: out of memory for %zu points", n);
        goto done;
    }
    for (size_t i = 0; i < n; i++) {
        double wi = w ? w[i] : 1.0, sw;
        if (!(wi > 0.0) || !isfinite(wi) || !isfinite(y[i])) {
            rc = bg_error_set(err, BG_EINVAL, "linear fit: point %zu: weight must be > 0 and "
                              "values finite", i + 1);
            goto done;
        }
        sw = sqrt(wi);
        for (size_t j = 0; j < p; j++) {
            if (!isfinite(X[i * p + j])) {
                rc = bg_error_set(err, BG_EINVAL, "linear fit: point %zu: design value not "
                                  "finite", i + 1);
                goto done;
            }
            A[j * n + i] = sw * X[i * p + j]; /* column-major for the solver */
        }
        b[i] = sw * y[i];
    }
    memset(out, 0, sizeof *out);
    if (bgi_lin_qr(A, b, n, p, min_rcond, scale, work, out) != BG_OK) {
        rc = bg_error_set(err, BG_ENUM, "linear fit: design is rank-deficient or "
                          "ill-conditioned (reciprocal condition %.3g, limit %.3g)",
                          out->rcond, min_rcond);
        goto done;
    }
    out->chisq = 0.0;
    for (size_t i = 0; i < n; i++) {
        double r = y[i];
        for (size_t j = 0; j < p; j++)
            r -= X[i * p + j] * out->c[j];
        out->chisq += (w ? w[i] : 1.0) * r * r;
    }
done:
    free(A);
    free(b);
    return rc;
}
