/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* sh4: 1/T = A + B L + C L^2 + D L^3, the Steinhart-Hart equation with its square term kept
** (Steinhart & Hart, Deep-Sea Research 15 (1968) 497-503, eq. 1).  Its coefficients are those
** of the polynomial in L, so every slot is the shared evaluation of invpoly.c. */
#include "model_int.h"

static const unsigned sh4_pw[] = { 0, 1, 2, 3 };

static size_t sh4_npar(const bg_model *m)
{
    (void)m;
    return 4;
}

static const char *sh4_coef_name(const bg_model *m, size_t i)
{
    static const char *names[] = { "A", "B", "C", "D" };
    (void)m;
    return names[i];
}

static void sh4_inv_poly(const bg_model *m, double a[BG_MODEL_MAXPAR])
{
    for (size_t i = 0; i < BG_MODEL_MAXPAR; i++)
        a[i] = i < 4 ? m->coef[i] : 0.0;
}

static int sh4_t_from_r(const bg_model *m, double r_ohm, double *t_k, bg_error *err)
{
    double a[BG_MODEL_MAXPAR];
    sh4_inv_poly(m, a);
    return bgi_invpoly_t_from_r(a, r_ohm, t_k, err);
}

static int sh4_l_from_t(const bg_model *m, double t_k, double *l, bg_error *err)
{
    double a[BG_MODEL_MAXPAR];
    sh4_inv_poly(m, a);
    return bgi_invpoly_l_from_t(a, t_k, l, err);
}

static int sh4_dtdr(const bg_model *m, double r_ohm, double *dtdr, bg_error *err)
{
    double a[BG_MODEL_MAXPAR];
    sh4_inv_poly(m, a);
    return bgi_invpoly_dtdr(a, r_ohm, dtdr, err);
}

static int sh4_beta_local(const bg_model *m, double t_k, double *beta_k, bg_error *err)
{
    double a[BG_MODEL_MAXPAR], L;
    int rc;
    sh4_inv_poly(m, a);
    if ((rc = bgi_invpoly_l_from_t(a, t_k, &L, err)) != BG_OK)
        return rc;
    return bgi_invpoly_beta_local(a, L, t_k, beta_k, err);
}

static void sh4_grad(const bg_model *m, double L, double *g)
{
    (void)m;
    bgi_invpoly_grad(sh4_pw, 4, L, g);
}

static size_t sh4_basis(const bg_model *m, unsigned pw[BG_MODEL_MAXPAR])
{
    (void)m;
    for (size_t j = 0; j < 4; j++)
        pw[j] = sh4_pw[j];
    return 4;
}

const bg_model_type bgi_model_sh4 = {
    .name = "sh4",
    .spelling = "sh4",
    .formula = "1/T = A + B L + C L^2 + D L^3",
    .npar = sh4_npar,
    .coef_name = sh4_coef_name,
    .inv_poly = sh4_inv_poly,
    .t_from_r = sh4_t_from_r,
    .l_from_t = sh4_l_from_t,
    .dtdr = sh4_dtdr,
    .beta_local = sh4_beta_local,
    .grad_inv_t = sh4_grad,
    .basis = sh4_basis,
};
