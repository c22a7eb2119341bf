/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Evaluation shared by the kinds of the form 1/T = f(L) = sum a_i L^i.  T(R) is f by Horner's
** rule; R(T) solves f(L) = 1/T by Newton's method safeguarded by bisection inside a bracket,
** stopped when the step is below 1e-14 in L (1e-14 relative in R).  Derivatives from f':
** dT/dR = -T^2 f'(L) / R and local beta = 1 / f'(L). */
#include <math.h>

#include "model_int.h"

int bgi_invpoly_t_from_r(const double a[BG_MODEL_MAXPAR], double r_ohm, double *t_k,
                         bg_error *err)
{
    double inv_t = bgi_poly_eval(a, log(r_ohm), NULL);
    if (!(inv_t > 0.0) || !isfinite(inv_t))
        return bg_error_set(err, BG_EINVAL,
                            "resistance %g ohm: outside the model's range (1/T = %g 1/K)",
                            r_ohm, inv_t);
    *t_k = 1.0 / inv_t;
    return BG_OK;
}

/* Solve f(L) = y for L: Newton safeguarded by bisection inside a bracket.  The bracket is grown
** from a first guess until f changes sign, within BGI_L_LOWEST .. BGI_L_HIGHEST. */
static int solve_l(const double a[BG_MODEL_MAXPAR], double y, double guess, double *l_out)
{
    double lo, hi, flo, fhi, x, step = 0.5;

    if (!isfinite(guess) || guess < BGI_L_LOWEST || guess > BGI_L_HIGHEST)
        guess = 9.0;
    lo = guess - step, hi = guess + step;
    flo = bgi_poly_eval(a, lo, NULL) - y, fhi = bgi_poly_eval(a, hi, NULL) - y;
    while (flo * fhi > 0.0) {
        step *= 2.0;
        if (lo <= BGI_L_LOWEST && hi >= BGI_L_HIGHEST)
            return BG_EINVAL;
        /* NTC: f rises with L, so both ends above y means the root lies below 'lo'.  Move
        ** that end while it can move, otherwise the other one. */
        int move_lo = (flo > 0.0) ? lo > BGI_L_LOWEST : !(hi < BGI_L_HIGHEST);
        if (move_lo)
            lo = fmax(BGI_L_LOWEST, lo - step), flo = bgi_poly_eval(a, lo, NULL) - y;
        else
            hi = fmin(BGI_L_HIGHEST, hi + step), fhi = bgi_poly_eval(a, hi, NULL) - y;
    }
    if (flo == 0.0) { *l_out = lo; return BG_OK; }
    if (fhi == 0.0) { *l_out = hi; return BG_OK; }
    x = (guess > lo && guess < hi) ? guess : 0.5 * (lo + hi);
    for (int it = 0; it < 200; it++) {
        double d, fx = bgi_poly_eval(a, x, &d) - y, nx;
        if (fx == 0.0) {
            *l_out = x;
            return BG_OK;
        }
        if ((fx < 0.0) == (flo < 0.0))
            lo = x, flo = fx;
        else
            hi = x;
        nx = (d != 0.0) ? x - fx / d : NAN;
        if (!(nx > lo && nx < hi))
            nx = 0.5 * (lo + hi);
        if (fabs(nx - x) <= 1e-14 * fmax(1.0, fabs(x))) {
            x = nx;
            *l_out = x;
            return BG_OK;
        }
        x = nx;
        if (hi - lo <= 1e-14 * fmax(1.0, fabs(x)))
            break;
    }
    *l_out = x;
    return (hi - lo <= 1e-12 * fmax(1.0, fabs(x))) ? BG_OK : BG_ENUM;
}

int bgi_invpoly_l_from_t(const double a[BG_MODEL_MAXPAR], double t_k, double *l,
                         bg_error *err)
{
    double y = 1.0 / t_k, guess = NAN;
    int rc;

    if (a[1] > 0.0)
        guess = (y - a[0]) / a[1]; /* first guess from the linear part */
    rc = solve_l(a, y, guess, l);
    if (rc == BG_EINVAL)
        return bg_error_set(err, BG_EINVAL,
                            "temperature %g K: no resistance in 1e-9 .. 1e26 ohm gives it", t_k);
    if (rc != BG_OK)
        return bg_error_set(err, BG_ENUM, "temperature %g K: inverse did not converge", t_k);
    return BG_OK;
}

int bgi_invpoly_dtdr(const double a[BG_MODEL_MAXPAR], double r_ohm, double *dtdr,
                     bg_error *err)
{
    double d, t_k;
    int rc = bgi_invpoly_t_from_r(a, r_ohm, &t_k, err);
    if (rc != BG_OK)
        return rc;
    bgi_poly_eval(a, log(r_ohm), &d);
    /* 1/T = f(L)  =>  dT/dR = -T^2 f'(L) / R */
    *dtdr = -t_k * t_k * d / r_ohm;
    return BG_OK;
}

int bgi_invpoly_beta_local(const double a[BG_MODEL_MAXPAR], double L, double t_k,
                           double *beta_k, bg_error *err)
{
    double d;
    bgi_poly_eval(a, L, &d);
    if (d == 0.0)
        return bg_error_set(err, BG_EINVAL, "temperature %g K: the model is flat there", t_k);
    *beta_k = 1.0 / d;
    return BG_OK;
}

void bgi_invpoly_grad(const unsigned *pw, size_t nb, double L, double *g)
{
    double pows[BG_MODEL_MAXPAR];
    pows[0] = 1.0;
    for (size_t k = 1; k < BG_MODEL_MAXPAR; k++)
        pows[k] = pows[k - 1] * L;
    for (size_t j = 0; j < nb; j++)
        g[j] = pows[pw[j]];
}
