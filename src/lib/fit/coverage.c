/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The coverage probability of an expanded uncertainty U = k u with 'dof' degrees of freedom:
** P(|t| <= k) = 2 F_t(k; dof) - 1, Student's t distribution (GUM, JCGM 100:2008, G.3). */
#include <math.h>

#include <gsl/gsl_cdf.h>

#include "bandgap/fit.h"

double bg_fit_coverage_prob(double k, size_t dof)
{
    if (dof == 0 || !(k > 0.0))
        return NAN;
    return 2.0 * gsl_cdf_tdist_P(k, (double)dof) - 1.0;
}
