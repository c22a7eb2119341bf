/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* ptc and ptc-lin: silicon PTC (spreading-resistance) sensors,
** R(T) = R0 [1 + A (T - T0) + B (T - T0)^2] and its B-free linear form for narrow ranges, the
** second-order polynomial in T of the trade (common practice).  R rises with T.  Linear in
** (R0, R0 A, R0 B), so a linear fit of R starts the least squares in temperature; the nominal
** values are R0 at T0 (R25 with T0 = 25 degC) and alpha = A. */
#include <math.h>
#include <stdio.h>

#include "model_int.h"

static size_t ptc_npar(const bg_model *m)
{
    return m->type == &bgi_model_ptc_lin ? 2 : 3;
}

static const char *ptc_coef_name(const bg_model *m, size_t i)
{
    static const char *names[] = { "R0", "A", "B" };
    (void)m;
    return names[i];
}

static int ptc_check_coef(const bg_model *m, const double *coef, bg_error *err)
{
    (void)m;
    if (!(coef[0] > 0.0))
        return bg_error_set(err, BG_EINVAL, "a PTC model needs R0 > 0");
    return BG_OK;
}

static int ptc_xfun(const bg_model *m, double t_k, double *x, double *dxdt, double *dxdc)
{
    double d = t_k - m->t0_k, r0 = m->coef[0], a = m->coef[1];
    double b = ptc_npar(m) == 3 ? m->coef[2] : 0.0;
    double f = 1.0 + a * d + b * d * d;
    *x = r0 * f;
    *dxdt = r0 * (a + 2.0 * b * d);
    if (dxdc) {
        dxdc[0] = f, dxdc[1] = r0 * d;
        if (ptc_npar(m) == 3)
            dxdc[2] = r0 * d * d;
    }
    return BG_OK;
}

static void ptc_lin_row(const bg_model *m, double t_k, double *phi)
{
    double d = t_k - m->t0_k;
    phi[0] = 1.0, phi[1] = d;
    if (ptc_npar(m) == 3)
        phi[2] = d * d;
}

static int ptc_from_lin(bg_model *m, const double *c, bg_error *err)
{
    if (!(c[0] > 0.0))
        return bg_error_set(err, BG_EINVAL, "the linear start gives R0 = %g ohm, not above 0",
                            c[0]);
    m->coef[0] = c[0], m->coef[1] = c[1] / c[0];
    if (ptc_npar(m) == 3)
        m->coef[2] = c[2] / c[0];
    return BG_OK;
}

static int ptc_x_ok(const bg_model *m, double x)
{
    (void)m;
    return x > 0.0;
}

/* R0 and alpha = (1/R0) dR/dT at T0 = A: the part's nominal values. */
static size_t ptc_derived(const bg_model *m, const double *cov, double t_min_k, double t_max_k,
                          bg_derived *out, size_t max)
{
    (void)t_min_k, (void)t_max_k;
    if (max < 1)
        return 1;
    snprintf(out[0].name, sizeof out[0].name, "alpha at T0");
    out[0].value = m->coef[1];
    out[0].u = cov ? sqrt(cov[1 * ptc_npar(m) + 1]) : NAN;
    snprintf(out[0].unit, sizeof out[0].unit, "1/K");
    out[0].text[0] = '\0';
    snprintf(out[0].note, sizeof out[0].note, "(1/R) dR/dT at T0, the nominal temperature "
             "coefficient beside R0 (common practice)");
    return 1;
}

static const char *const ptc_candidates[] = { "ptc-lin", "ptc", "cvd2", "cvd", NULL };

const bg_model_type bgi_model_ptc = {
    .name = "ptc",
    .spelling = "ptc",
    .formula = "R = R0 [1 + A (T - T0) + B (T - T0)^2]",
    .flags = BG_MODEL_HAS_T0,
    .npar = ptc_npar,
    .coef_name = ptc_coef_name,
    .check_coef = ptc_check_coef,
    .quantity = BG_QTY_RESISTANCE,
    .direction = +1,
    .candidates = ptc_candidates,
    .xfun = ptc_xfun,
    .lin_in_x = 0,
    .lin_row = ptc_lin_row,
    .from_lin = ptc_from_lin,
    .x_ok = ptc_x_ok,
    .derived = ptc_derived,
};

const bg_model_type bgi_model_ptc_lin = {
    .name = "ptc-lin",
    .spelling = "ptc-lin",
    .formula = "R = R0 [1 + A (T - T0)]",
    .flags = BG_MODEL_HAS_T0,
    .npar = ptc_npar,
    .coef_name = ptc_coef_name,
    .check_coef = ptc_check_coef,
    .quantity = BG_QTY_RESISTANCE,
    .direction = +1,
    .candidates = ptc_candidates,
    .xfun = ptc_xfun,
    .lin_in_x = 0,
    .lin_row = ptc_lin_row,
    .from_lin = ptc_from_lin,
    .x_ok = ptc_x_ok,
    .derived = ptc_derived,
};
