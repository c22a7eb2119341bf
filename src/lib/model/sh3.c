/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* sh3: 1/T = A + B L + C L^3, Steinhart & Hart, Deep-Sea Research 15 (1968) 497-503.  The
** inverse is Newton's method from the root without the cubic term when B, C > 0, else the
** real root of the depressed cubic C L^3 + B L + (A - 1/T) = 0 by Cardano's formula polished
** by one Newton step, else the shared safeguarded solver (invpoly.c). */
#include <math.h>

#include "model_int.h"

static const unsigned sh3_pw[] = { 0, 1, 3 };

static size_t sh3_npar(const bg_model *m)
{
    (void)m;
    return 3;
}

static const char *sh3_coef_name(const bg_model *m, size_t i)
{
    static const char *names[] = { "A", "B", "C" };
    (void)m;
    return names[i];
}

static void sh3_inv_poly(const bg_model *m, double a[BG_MODEL_MAXPAR])
{
    for (size_t i = 0; i < BG_MODEL_MAXPAR; i++)
        a[i] = 0.0;
    a[0] = m->coef[0], a[1] = m->coef[1], a[3] = m->coef[2];
}

static int sh3_t_from_r(const bg_model *m, double r_ohm, double *t_k, bg_error *err)
{
    double a[BG_MODEL_MAXPAR];
    sh3_inv_poly(m, a);
    return bgi_invpoly_t_from_r(a, r_ohm, t_k, err);
}

/* Newton from the root without the cubic term: A + B L + C L^3 is increasing, and for real
** thermistors C L^3 is a few per cent of B L, so a few steps reach the root to rounding
** (cheaper than the cube roots, which remain the fallback).  0 if it did not settle. */
static int newton_l(double A, double B, double C, double y, double *l_out)
{
    double L = (y - A) / B;
    L = (y - A - C * L * L * L) / B; /* one fixed-point step folds the cubic term in */
    for (int it = 0; it < 8; it++) {
        double d = B + 3.0 * C * L * L, step = (A + B * L + C * L * L * L - y) / d;
        L -= step;
        /* the error left after a Newton step is about f''/(2 f') step^2 */
        if (fabs(3.0 * C * L / d) * step * step <= 1e-17 * fabs(L) + 1e-300) {
            *l_out = L;
            return 1;
        }
    }
    return 0;
}

static int sh3_l_from_t(const bg_model *m, double t_k, double *l_out, bg_error *err)
{
    double A = m->coef[0], B = m->coef[1], C = m->coef[2], y = 1.0 / t_k, a[BG_MODEL_MAXPAR];

    if (C > 0.0 && B > 0.0 && newton_l(A, B, C, y, l_out))
        return BG_OK;
    if (C > 0.0) {
        double x = (A - y) / C, q = B / (3.0 * C);
        double s = sqrt(q * q * q + 0.25 * x * x);
        double d, L = cbrt(s - 0.5 * x) - cbrt(s + 0.5 * x);
        /* One Newton step removes the cancellation error of the difference of cube roots. */
        d = B + 3.0 * C * L * L;
        if (isfinite(L) && d > 0.0)
            L -= (A + B * L + C * L * L * L - y) / d;
        if (isfinite(L)) {
            *l_out = L;
            return BG_OK;
        }
    } else if (C == 0.0 && B != 0.0) {
        *l_out = (y - A) / B;
        return BG_OK;
    }
    sh3_inv_poly(m, a);
    return bgi_invpoly_l_from_t(a, t_k, l_out, err);
}

static int sh3_dtdr(const bg_model *m, double r_ohm, double *dtdr, bg_error *err)
{
    double a[BG_MODEL_MAXPAR];
    sh3_inv_poly(m, a);
    return bgi_invpoly_dtdr(a, r_ohm, dtdr, err);
}

static int sh3_beta_local(const bg_model *m, double t_k, double *beta_k, bg_error *err)
{
    double a[BG_MODEL_MAXPAR], L;
    int rc = sh3_l_from_t(m, t_k, &L, err);
    if (rc != BG_OK)
        return rc;
    sh3_inv_poly(m, a);
    return bgi_invpoly_beta_local(a, L, t_k, beta_k, err);
}

static void sh3_grad(const bg_model *m, double L, double *g)
{
    (void)m;
    bgi_invpoly_grad(sh3_pw, 3, L, g);
}

static size_t sh3_basis(const bg_model *m, unsigned pw[BG_MODEL_MAXPAR])
{
    (void)m;
    for (size_t j = 0; j < 3; j++)
        pw[j] = sh3_pw[j];
    return 3;
}

const bg_model_type bgi_model_sh3 = {
    .name = "sh3",
    .spelling = "sh3",
    .formula = "1/T = A + B L + C L^3",
    .flags = BG_MODEL_SLOPE_MONOTONIC,
    .npar = sh3_npar,
    .coef_name = sh3_coef_name,
    .inv_poly = sh3_inv_poly,
    .t_from_r = sh3_t_from_r,
    .l_from_t = sh3_l_from_t,
    .dtdr = sh3_dtdr,
    .beta_local = sh3_beta_local,
    .grad_inv_t = sh3_grad,
    .basis = sh3_basis,
};
