/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* What a stored fit row gives beyond its columns: the coefficients' standard uncertainties. */
#include <math.h>

#include "bandgap/store.h"

double bg_fit_row_coef_u(const bg_fit_row *f, size_t i)
{
    if (!f || !f->has_cov || i >= f->npar)
        return NAN;
    return sqrt(f->cov[i * f->npar + i]);
}
