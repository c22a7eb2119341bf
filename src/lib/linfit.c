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

int bgi_lin_qr(double *A, double *b, size_t n, size_t p, double min_rcond, double *colscale,
               double *work, bg_linfit *out)
{
    size_t perm[BG_LIN_MAXP];
    double R[BG_LIN_MAXP * BG_LIN_MAXP], Ri[BG_LIN_MAXP * BG_LIN_MAXP], z[BG_LIN_MAXP];

    out->n = n, out->p = p, out->rank = 0, out->rcond = 0.0;
    for (size_t j = 0; j < p; j++) {
        double s = 0.0;
        for (size_t i = 0; i < n; i++)
            s += A[i * p + j] * A[i * p + j];
        s = sqrt(s);
        if (!(s > 0.0) || !isfinite(s))
            return BG_ENUM;
        colscale[j] = s;
        for (size_t i = 0; i < n; i++)
            A[i * p + j] /= s;
        perm[j] = j;
    }
    for (size_t k = 0; k < p; k++) {
        /* Pivot: the remaining column with the largest norm below row k. */
        size_t best = k;
        double bestn = -1.0;
        for (size_t j = k; j < p; j++) {
            double s = 0.0;
            for (size_t i = k; i < n; i++)
                s += A[i * p + j] * A[i * p + j];
            work[j] = s;
            if (s > bestn)
                bestn = s, best = j;
        }
        if (best != k) {
            size_t t = perm[k];
            perm[k] = perm[best], perm[best] = t;
            for (size_t i = 0; i < n; i++) {
                double v = A[i * p + k];
                A[i * p + k] = A[i * p + best], A[i * p + best] = v;
            }
        }
        double norm = sqrt(bestn);
        if (!(norm > 0.0))
            return BG_ENUM;
        double alpha = A[k * p + k] > 0.0 ? -norm : norm;
        /* v = x - alpha e1, stored in column k below the diagonal; vtv = 2 norm (norm + |x0|) */
        A[k * p + k] -= alpha;
        double vtv = 0.0;
        for (size_t i = k; i < n; i++)
            vtv += A[i * p + k] * A[i * p + k];
        for (size_t j = k + 1; j < p; j++) {
            double d = 0.0;
            for (size_t i = k; i < n; i++)
                d += A[i * p + k] * A[i * p + j];
            d = 2.0 * d / vtv;
            for (size_t i = k; i < n; i++)
                A[i * p + j] -= d * A[i * p + k];
        }
        double d = 0.0;
        for (size_t i = k; i < n; i++)
            d += A[i * p + k] * b[i];
        d = 2.0 * d / vtv;
        for (size_t i = k; i < n; i++)
            b[i] -= d * A[i * p + k];
        A[k * p + k] = alpha;
    }
    memset(R, 0, sizeof R);
    for (size_t i = 0; i < p; i++)
        for (size_t j = i; j < p; j++)
            R[i * p + j] = A[i * p + j];
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
    memset(Ri, 0, sizeof Ri);
    for (size_t j = 0; j < p; j++) {
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
        for (size_t j = 0; j < p; j++) {
            double s = 0.0;
            for (size_t k = (i > j ? i : j); k < p; k++)
                s += Ri[i * p + k] * Ri[j * p + k];
            out->cov[perm[i] * p + perm[j]] = s / (colscale[perm[i]] * colscale[perm[j]]);
        }
    }
    return BG_OK;
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
            A[i * p + j] = sw * X[i * p + j];
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
