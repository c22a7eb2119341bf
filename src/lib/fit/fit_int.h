/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Internal: the small dense least-squares solver shared by the fit code. */
#ifndef BANDGAP_FIT_INT_H
#define BANDGAP_FIT_INT_H

#include <stddef.h>

#include "bandgap/fit.h"
#include "bandgap/linfit.h"

/* Solve min ||A c - b|| for the column-major n x p matrix 'A' (already row-weighted; column j
** is A[j n .. j n + n - 1]); 'A' and 'b'
** are overwritten.  'colscale' (p) and 'work' (p) are scratch.  Fills out->c, out->cov =
** (A^T A)^-1, out->rcond, out->rank; not out->chisq.  Returns BG_OK, or BG_ENUM when the
** estimated reciprocal condition is below 'min_rcond' or a column is zero. */
int bgi_lin_qr(double *A, double *b, size_t n, size_t p, double min_rcond, double *colscale,
               double *work, bg_linfit *out);

#endif
