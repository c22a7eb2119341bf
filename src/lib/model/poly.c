/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* poly:N: 1/T = sum a_i L^i, i = 0..N, N = 1..5: the Steinhart-Hart form carried to higher
** powers of L = ln(R / 1 ohm) (common practice).  Its coefficients are those of the
** polynomial, so every slot is the shared evaluation of invpoly.c. */
#include <stdio.h>
#include <string.h>

#include "model_int.h"

static int poly_parse(const char *name, bg_model *m)
{
    if (strncmp(name, "poly:", 5) != 0 || name[5] < '1' || name[5] > '5' || name[6])
        return 0;
    m->degree = (unsigned)(name[5] - '0');
    return 1;
}

static void poly_write_name(const bg_model *m, char *buf, size_t size)
{
    snprintf(buf, size, "poly:%u", m->degree);
}

static size_t poly_npar(const bg_model *m)
{
    return m->degree + 1;
}

static const char *poly_coef_name(const bg_model *m, size_t i)
{
    static const char *names[] = { "a0", "a1", "a2", "a3", "a4", "a5" };
    (void)m;
    return names[i];
}

static void poly_inv_poly(const bg_model *m, double a[BG_MODEL_MAXPAR])
{
    for (size_t i = 0; i < BG_MODEL_MAXPAR; i++)
        a[i] = i <= m->degree ? m->coef[i] : 0.0;
}

static int poly_t_from_r(const bg_model *m, double r_ohm, double *t_k, bg_error *err)
{
    double a[BG_MODEL_MAXPAR];
    poly_inv_poly(m, a);
    return bgi_invpoly_t_from_r(a, r_ohm, t_k, err);
}

static int poly_l_from_t(const bg_model *m, double t_k, double *l, bg_error *err)
{
    double a[BG_MODEL_MAXPAR];
    poly_inv_poly(m, a);
    return bgi_invpoly_l_from_t(a, t_k, l, err);
}

static int poly_dtdr(const bg_model *m, double r_ohm, double *dtdr, bg_error *err)
{
    double a[BG_MODEL_MAXPAR];
    poly_inv_poly(m, a);
    return bgi_invpoly_dtdr(a, r_ohm, dtdr, err);
}

static int poly_beta_local(const bg_model *m, double t_k, double *beta_k, bg_error *err)
{
    double a[BG_MODEL_MAXPAR], L;
    int rc;
    poly_inv_poly(m, a);
    if ((rc = bgi_invpoly_l_from_t(a, t_k, &L, err)) != BG_OK)
        return rc;
    return bgi_invpoly_beta_local(a, L, t_k, beta_k, err);
}

static size_t poly_basis(const bg_model *m, unsigned pw[BG_MODEL_MAXPAR])
{
    for (unsigned k = 0; k <= m->degree; k++)
        pw[k] = k;
    return m->degree + 1;
}

static void poly_grad(const bg_model *m, double L, double *g)
{
    unsigned pw[BG_MODEL_MAXPAR];
    size_t nb = poly_basis(m, pw);
    bgi_invpoly_grad(pw, nb, L, g);
}

const bg_model_type bgi_model_poly = {
    .name = "poly",
    .spelling = "poly:1 .. poly:5",
    .formula = "1/T = sum a_i L^i",
    .parse = poly_parse,
    .write_name = poly_write_name,
    .npar = poly_npar,
    .coef_name = poly_coef_name,
    .inv_poly = poly_inv_poly,
    .t_from_r = poly_t_from_r,
    .l_from_t = poly_l_from_t,
    .dtdr = poly_dtdr,
    .beta_local = poly_beta_local,
    .grad_inv_t = poly_grad,
    .basis = poly_basis,
};
