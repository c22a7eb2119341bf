/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Coverage: the factor k of an expanded uncertainty U = k u from Student's t for the effective
** degrees of freedom (JCGM 100:2008, G.3 and G.4, Welch-Satterthwaite formula G.2b), or a
** fixed k with the coverage probability it gives, P(|t| <= k) = 2 F_t(k; nu) - 1 (G.3.2). */
#include <math.h>

#include <gsl/gsl_cdf.h>

#include "bandgap/fit.h"

double bg_fit_coverage_prob(double k, size_t dof)
{
    if (dof == 0 || !(k > 0.0))
        return NAN;
    return 2.0 * gsl_cdf_tdist_P(k, (double)dof) - 1.0;
}

bg_coverage_rule bg_coverage_default(void)
{
    bg_coverage_rule r = { 0.9545, 0.0 };
    return r;
}

int bg_coverage_eval(const bg_coverage_rule *rule, double nu_eff, bg_coverage *out,
                     bg_error *err)
{
    double nu;
    if (!(rule->p > 0.0 && rule->p < 1.0))
        return bg_error_set(err, BG_EINVAL, "coverage probability %g: must lie between 0 and 1",
                            rule->p);
    if (!(rule->k_fixed >= 0.0 && isfinite(rule->k_fixed)))
        return bg_error_set(err, BG_EINVAL, "coverage factor %g: must be above 0 (or 0 for "
                            "Student's t)", rule->k_fixed);
    if (!(nu_eff >= 0.0))
        return bg_error_set(err, BG_EINVAL, "effective degrees of freedom %g: must not be "
                            "negative", nu_eff);
    nu = isinf(nu_eff) ? nu_eff : floor(nu_eff);
    out->nu_eff = nu_eff;
    out->fixed = rule->k_fixed > 0.0;
    if (nu < 1.0) {
        out->k = NAN, out->p = NAN; /* nothing can be stated without a degree of freedom */
        return BG_OK;
    }
    if (out->fixed) {
        out->k = rule->k_fixed;
        out->p = isinf(nu) ? 2.0 * gsl_cdf_ugaussian_P(out->k) - 1.0
                           : 2.0 * gsl_cdf_tdist_P(out->k, nu) - 1.0;
    } else {
        out->p = rule->p;
        out->k = isinf(nu) ? gsl_cdf_ugaussian_Pinv(0.5 + 0.5 * rule->p)
                           : gsl_cdf_tdist_Pinv(0.5 + 0.5 * rule->p, nu);
    }
    return BG_OK;
}

double bg_coverage_nu_eff(const double *u, const double *nu, size_t n)
{
    double uc2 = 0.0, den = 0.0;
    for (size_t i = 0; i < n; i++) {
        if (!(u[i] >= 0.0) || !(nu[i] >= 0.0))
            return NAN;
        if (u[i] > 0.0 && nu[i] == 0.0)
            return NAN;
        uc2 += u[i] * u[i];
        if (u[i] > 0.0 && !isinf(nu[i]))
            den += u[i] * u[i] * u[i] * u[i] / nu[i];
    }
    return den > 0.0 ? uc2 * uc2 / den : INFINITY;
}
