/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* beta: R = R0 exp(beta (1/T - 1/T0)), i.e. 1/T = 1/T0 + (L - ln R0) / beta, the two-parameter
** NTC model (common practice).  It is fitted linearly as 1/T = a0 + a1 L and converted:
** beta = 1/a1, ln R0 = (1/T0 - a0) beta, with the covariance propagated through that
** Jacobian (JCGM 100:2008, 5.1.2); R(T) is closed-form. */
#include <math.h>

#include "model_int.h"

static size_t beta_npar(const bg_model *m)
{
    (void)m;
    return 2;
}

static const char *beta_coef_name(const bg_model *m, size_t i)
{
    static const char *names[] = { "R0", "beta" };
    (void)m;
    return names[i];
}

static int beta_check_coef(const bg_model *m, const double *coef, bg_error *err)
{
    (void)m;
    if (!(coef[0] > 0.0 && coef[1] > 0.0))
        return bg_error_set(err, BG_EINVAL, "beta model needs R0 > 0 and beta > 0");
    return BG_OK;
}

static void beta_inv_poly(const bg_model *m, double a[BG_MODEL_MAXPAR])
{
    for (size_t i = 0; i < BG_MODEL_MAXPAR; i++)
        a[i] = 0.0;
    a[1] = 1.0 / m->coef[1];
    a[0] = 1.0 / m->t0_k - log(m->coef[0]) * a[1];
}

static int beta_t_from_r(const bg_model *m, double r_ohm, double *t_k, bg_error *err)
{
    double a[BG_MODEL_MAXPAR];
    beta_inv_poly(m, a);
    return bgi_invpoly_t_from_r(a, r_ohm, t_k, err);
}

static int beta_l_from_t(const bg_model *m, double t_k, double *l, bg_error *err)
{
    (void)err;
    *l = log(m->coef[0]) + m->coef[1] * (1.0 / t_k - 1.0 / m->t0_k);
    return BG_OK;
}

static int beta_dtdr(const bg_model *m, double r_ohm, double *dtdr, bg_error *err)
{
    double a[BG_MODEL_MAXPAR];
    beta_inv_poly(m, a);
    return bgi_invpoly_dtdr(a, r_ohm, dtdr, err);
}

static int beta_beta_local(const bg_model *m, double t_k, double *beta_k, bg_error *err)
{
    double a[BG_MODEL_MAXPAR], L;
    beta_l_from_t(m, t_k, &L, err);
    beta_inv_poly(m, a);
    return bgi_invpoly_beta_local(a, L, t_k, beta_k, err);
}

static void beta_grad(const bg_model *m, double L, double *g)
{
    /* 1/T = 1/T0 + (L - ln R0) / beta */
    double r0 = m->coef[0], beta = m->coef[1];
    g[0] = -1.0 / (beta * r0);
    g[1] = -(L - log(r0)) / (beta * beta);
}

static size_t beta_basis(const bg_model *m, unsigned pw[BG_MODEL_MAXPAR])
{
    (void)m;
    pw[0] = 0, pw[1] = 1;
    return 2;
}

static void beta_from_basis(bg_model *m, const double *c, const double *cov_c, double *cov)
{
    double beta = 1.0 / c[1], lnr0 = (1.0 / m->t0_k - c[0]) * beta;
    double r0 = exp(lnr0), jm[2][2];
    m->coef[0] = r0, m->coef[1] = beta;
    /* d(R0, beta)/d(a0, a1) */
    jm[0][0] = -r0 * beta, jm[0][1] = -r0 * lnr0 * beta;
    jm[1][0] = 0.0, jm[1][1] = -beta * beta;
    for (size_t i = 0; i < 2; i++)
        for (size_t j = 0; j < 2; j++) {
            double s = 0.0;
            for (size_t k = 0; k < 2; k++)
                for (size_t l = 0; l < 2; l++)
                    s += jm[i][k] * cov_c[k * 2 + l] * jm[j][l];
            cov[i * 2 + j] = s;
        }
}

const bg_model_type bgi_model_beta = {
    .name = "beta",
    .spelling = "beta",
    .formula = "R = R0 exp(beta (1/T - 1/T0))",
    .flags = BG_MODEL_HAS_T0 | BG_MODEL_R0_BETA | BG_MODEL_SLOPE_MONOTONIC,
    .npar = beta_npar,
    .coef_name = beta_coef_name,
    .check_coef = beta_check_coef,
    .inv_poly = beta_inv_poly,
    .t_from_r = beta_t_from_r,
    .l_from_t = beta_l_from_t,
    .dtdr = beta_dtdr,
    .beta_local = beta_beta_local,
    .grad_inv_t = beta_grad,
    .basis = beta_basis,
    .from_basis = beta_from_basis,
};
