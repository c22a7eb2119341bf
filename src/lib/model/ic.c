/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* ic, ic:1, ic:0 and ic-code: an IC temperature sensor that reports a temperature (in degC)
** or a code, corrected as
**   T = T_rep + c0 + c1 (T_rep - T0) + c2 (T_rep - T0)^2      (ic; ic:1 without c2, ic:0
** with c0 only), T_rep = reported degC + 273.15, or code * lsb_k + 273.15 for ic-code (a
** sensor whose code counts lsb_k kelvin from 0 degC, the usual two's-complement output;
** common practice).  T is linear in c0, c1, c2: a linear least-squares fit in temperature is
** the whole fit.  With lsb_k given the offset trim c0 is also shown in the device's LSB. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "bandgap/units.h"
#include "model_int.h"

static const char *const ic_params[] = { "lsb_k", NULL };

static int ic_parse(const char *name, bg_model *m)
{
    if (strcmp(name, "ic") == 0) {
        m->degree = 2;
        return 1;
    }
    if (strncmp(name, "ic:", 3) != 0 || name[3] < '0' || name[3] > '2' || name[4])
        return 0;
    m->degree = (unsigned)(name[3] - '0');
    return 1;
}

static void ic_write_name(const bg_model *m, char *buf, size_t size)
{
    if (m->degree == 2)
        snprintf(buf, size, "ic");
    else
        snprintf(buf, size, "ic:%u", m->degree);
}

static int ic_code_parse(const char *name, bg_model *m)
{
    if (strcmp(name, "ic-code") != 0)
        return 0;
    m->degree = 2;
    return 1;
}

static size_t ic_npar(const bg_model *m)
{
    return m->degree + 1;
}

static const char *ic_coef_name(const bg_model *m, size_t i)
{
    static const char *names[] = { "c0", "c1", "c2" };
    (void)m;
    return names[i];
}

static int is_code(const bg_model *m)
{
    return m->type == &bgi_model_ic_code;
}

static int ic_check_params(const bg_model *m, bg_error *err)
{
    if (is_code(m) && !(m->par[0] > 0.0))
        return bg_error_set(err, BG_EINVAL, "model 'ic-code' needs the device's LSB in kelvin "
                            "(give it: lsb_k=0.0625)");
    if (m->par[0] < 0.0)
        return bg_error_set(err, BG_EINVAL, "the LSB must be above 0 K");
    return BG_OK;
}

/* The reported temperature in K. */
static double t_rep(const bg_model *m, double x)
{
    return (is_code(m) ? x * m->par[0] : x) + BG_ZERO_C_K;
}

static int ic_tfun(const bg_model *m, double x, double *t_k, double *dtdx, double *dtdc)
{
    double tr = t_rep(m, x), u = tr - m->t0_k, s = is_code(m) ? m->par[0] : 1.0;
    double c1 = m->degree >= 1 ? m->coef[1] : 0.0, c2 = m->degree >= 2 ? m->coef[2] : 0.0;
    if (is_code(m) && !(s > 0.0))
        return BG_EINVAL;
    *t_k = tr + m->coef[0] + c1 * u + c2 * u * u;
    *dtdx = s * (1.0 + c1 + 2.0 * c2 * u);
    if (dtdc) {
        dtdc[0] = 1.0;
        if (m->degree >= 1)
            dtdc[1] = u;
        if (m->degree >= 2)
            dtdc[2] = u * u;
    }
    return BG_OK;
}

static double ic_x_guess(const bg_model *m, double t_k)
{
    double c = t_k - BG_ZERO_C_K - m->coef[0];
    return is_code(m) ? c / m->par[0] : c;
}

static void ic_lin_row(const bg_model *m, double x, double *phi)
{
    double u = t_rep(m, x) - m->t0_k;
    phi[0] = 1.0;
    if (m->degree >= 1)
        phi[1] = u;
    if (m->degree >= 2)
        phi[2] = u * u;
}

static double ic_lin_fixed(const bg_model *m, double x)
{
    return t_rep(m, x);
}

static size_t ic_derived(const bg_model *m, const double *cov, double t_min_k, double t_max_k,
                         bg_derived *out, size_t max)
{
    double lsb = m->par[0];
    (void)t_min_k, (void)t_max_k;
    if (!(lsb > 0.0))
        return 0;
    if (max < 1)
        return 1;
    snprintf(out[0].name, sizeof out[0].name, "offset trim c0");
    out[0].value = m->coef[0] / lsb;
    out[0].u = cov ? sqrt(cov[0]) / lsb : NAN;
    snprintf(out[0].unit, sizeof out[0].unit, "LSB");
    out[0].text[0] = '\0';
    snprintf(out[0].note, sizeof out[0].note, "c0 in the device's LSB of %g K (round to whole "
             "LSB for an offset register)", lsb);
    return 1;
}

static const char *const rep_candidates[] = { "ic:0", "ic:1", "ic", NULL };
static const char *const code_candidates[] = { "ic-code", NULL };

const bg_model_type bgi_model_ic = {
    .name = "ic",
    .spelling = "ic, ic:0, ic:1",
    .formula = "T = T_rep + c0 + c1 (T_rep - T0) + c2 (T_rep - T0)^2",
    .flags = BG_MODEL_HAS_T0,
    .parse = ic_parse,
    .write_name = ic_write_name,
    .npar = ic_npar,
    .coef_name = ic_coef_name,
    .quantity = BG_QTY_REPORTED_T,
    .direction = +1,
    .params = ic_params,
    .check_params = ic_check_params,
    .candidates = rep_candidates,
    .tfun = ic_tfun,
    .x_guess = ic_x_guess,
    .lin_in_x = 1,
    .lin_row = ic_lin_row,
    .lin_fixed = ic_lin_fixed,
    .derived = ic_derived,
};

const bg_model_type bgi_model_ic_code = {
    .name = "ic-code",
    .spelling = "ic-code",
    .formula = "T = T_rep + c0 + c1 (T_rep - T0) + c2 (T_rep - T0)^2, T_rep = N lsb_k + 273.15",
    .flags = BG_MODEL_HAS_T0,
    .parse = ic_code_parse,
    .npar = ic_npar,
    .coef_name = ic_coef_name,
    .quantity = BG_QTY_CODE,
    .direction = +1,
    .params = ic_params,
    .check_params = ic_check_params,
    .candidates = code_candidates,
    .tfun = ic_tfun,
    .x_guess = ic_x_guess,
    .lin_in_x = 1,
    .lin_row = ic_lin_row,
    .lin_fixed = ic_lin_fixed,
    .derived = ic_derived,
};
