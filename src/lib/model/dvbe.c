/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* dvbe: the difference of two junctions run at a current-density ratio p, read in volts:
** dV = gain (k/q) ln(p) T + offset.  The ideal difference is (k T / q) ln p (published in the
** device textbooks, e.g. P. R. Gray, P. J. Hurst, S. H. Lewis, R. G. Meyer, Analysis and
** Design of Analog Integrated Circuits, ch. 4, from memory); gain (ideally 1) and offset
** (ideally 0 V) are fitted, linear in both.  k and q exact in the 2019 SI; p is the kind's
** parameter (p > 1). */
#include <math.h>
#include <stdio.h>

#include "model_int.h"

static const char *const dvbe_params[] = { "p", NULL };

static size_t dvbe_npar(const bg_model *m)
{
    (void)m;
    return 2;
}

static const char *dvbe_coef_name(const bg_model *m, size_t i)
{
    static const char *names[] = { "gain", "offset" };
    (void)m;
    return names[i];
}

static int dvbe_check_params(const bg_model *m, bg_error *err)
{
    if (!(m->par[0] > 1.0))
        return bg_error_set(err, BG_EINVAL, "model 'dvbe' needs the current-density ratio p "
                            "> 1 (give it: p=8)");
    return BG_OK;
}

static void dvbe_phi(const bg_model *m, double t_k, double *phi)
{
    phi[0] = BGI_K_OVER_Q * log(m->par[0]) * t_k;
    phi[1] = 1.0;
}

static int dvbe_xfun(const bg_model *m, double t_k, double *x, double *dxdt, double *dxdc)
{
    double phi[2], s = BGI_K_OVER_Q * log(m->par[0]);
    if (!(m->par[0] > 1.0))
        return BG_EINVAL;
    dvbe_phi(m, t_k, phi);
    *x = m->coef[0] * phi[0] + m->coef[1];
    *dxdt = m->coef[0] * s;
    if (dxdc)
        dxdc[0] = phi[0], dxdc[1] = 1.0;
    return BG_OK;
}

static size_t dvbe_derived(const bg_model *m, const double *cov, double t_min_k,
                           double t_max_k, bg_derived *out, size_t max)
{
    double s = BGI_K_OVER_Q * log(m->par[0]);
    (void)t_min_k, (void)t_max_k;
    if (max < 1)
        return 1;
    snprintf(out[0].name, sizeof out[0].name, "d(dV)/dT");
    out[0].value = m->coef[0] * s;
    out[0].u = cov ? s * sqrt(cov[0]) : NAN;
    snprintf(out[0].unit, sizeof out[0].unit, "V/K");
    out[0].text[0] = '\0';
    snprintf(out[0].note, sizeof out[0].note, "ideal (k/q) ln p = %.6g V/K for p = %g "
             "(k = 1.380649e-23 J/K, q = 1.602176634e-19 C, exact)", s, m->par[0]);
    return 1;
}

static const char *const volt_rising[] = { "dvbe", NULL };

const bg_model_type bgi_model_dvbe = {
    .name = "dvbe",
    .spelling = "dvbe",
    .formula = "dV = gain (k/q) ln(p) T + offset",
    .npar = dvbe_npar,
    .coef_name = dvbe_coef_name,
    .quantity = BG_QTY_VOLTAGE,
    .direction = +1,
    .params = dvbe_params,
    .check_params = dvbe_check_params,
    .candidates = volt_rising,
    .xfun = dvbe_xfun,
    .lin_in_x = 0,
    .lin_row = dvbe_phi,
    .derived = dvbe_derived,
};
