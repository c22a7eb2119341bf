/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The linear least-squares core under every calibration fit: weighted Householder QR with
** column equilibration and pivoting (src/lib/fit/linfit.c; docs/methods.md). */
#ifndef BANDGAP_LINFIT_H
#define BANDGAP_LINFIT_H

#include <stddef.h>

#include "bandgap/error.h"

#define BG_LIN_MAXP 12

typedef struct bg_linfit {
    size_t n, p, rank;
    double c[BG_LIN_MAXP];                  /* coefficients */
    double cov[BG_LIN_MAXP * BG_LIN_MAXP];  /* (X^T W X)^-1, row-major, NOT scaled by chi2/dof */
    double chisq;                           /* sum w_i (y_i - x_i c)^2 */
    double rcond;                           /* estimate of 1/cond of the column-scaled design */
} bg_linfit;

/* Minimise sum w_i (y_i - sum_j X_ij c_j)^2 over 'c' for the n x p row-major design 'X'
** (p <= BG_LIN_MAXP, n >= p), weights 'w' (NULL = all 1; each > 0).  Householder QR with column
** equilibration and column pivoting.  A design whose estimated reciprocal condition number is
** below 'min_rcond' (rank-deficient or ill-conditioned) is refused with BG_ENUM; pass 0 to
** accept any full-rank design.  Returns BG_OK, BG_EINVAL, BG_ENUM or BG_ENOMEM. */
BG_API int bg_linfit_solve(const double *X, const double *y, const double *w, size_t n, size_t p,
                           double min_rcond, bg_linfit *out, bg_error *err);

#endif
