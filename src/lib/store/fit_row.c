/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* What a stored fit row gives beyond its columns: the coefficients' standard uncertainties;
** and the growing buffer both backends gather a probe's history in. */
#include <math.h>
#include <stdlib.h>

#include "bandgap/store.h"
#include "store_int.h"

double bg_fit_row_coef_u(const bg_fit_row *f, size_t i)
{
    if (!f || !f->has_cov || i >= f->npar)
        return NAN;
    return sqrt(f->cov[i * f->npar + i]);
}

int bgi_hist_buf_push(struct bgi_hist_buf *h)
{
    if (h->n < h->cap)
        return BG_OK;
    size_t cap = h->cap ? 2 * h->cap : 8;
    bg_fit_row *f = realloc(h->fits, cap * sizeof *f);
    if (f)
        h->fits = f;
    char (*w)[BG_TIME] = realloc(h->when, cap * sizeof *w);
    if (w)
        h->when = w;
    if (!f || !w)
        return BG_ENOMEM;
    h->cap = cap;
    return BG_OK;
}
