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

/* The reusable fitter (fit.c), shared with the batch (fit_batch.c). */
#define NCRIT 64
struct bg_fitter {
    size_t cap;
    double crit[NCRIT];  /* chi2 above which p < 0.01, by degrees of freedom (0: not known) */
    double crit_lo[NCRIT]; /* chi2 below which p > 0.99, by degrees of freedom (0: not known) */
    double *L, *u, *A, *b, *tm;
    double *G;          /* basis rows L_i^k, n x nb, computed once per fit */
    struct tsort { double t, r; size_t i; } *sorted;
    double *lev;        /* leverages h_i of the last fit, for the leave-one-out residuals */
    double *tk, *rr;    /* the points' temperatures (set with L); scratch of t_chi2 */
    int lev_one_step;   /* 1: lev[] from the Gauss-Newton Jacobian (refined fit); 0: linear */
    /* While a comparison runs (bgi_fit_compare_keep, 'summary_on' set): a fit whose BIC is not
    ** within 'summary_bic' (the lowest so far + 2) can no longer be chosen, and
    ** bgi_fit_finish gives it its summary and the leverages only, leaving the residuals,
    ** weights, lines and studentized residuals of 'out' unwritten. */
    int summary_on;
    double summary_bic;
    double *batch;      /* the batch's lanes (fit_batch.c), 'batch_cap' doubles */
    size_t batch_cap;
    int batch_kernel;   /* the batch's kernel: BGI_KERNEL_AUTO (0, by the processor) or one */
    /* The sort held across fits of the same points (bgi_sort_hold): while 'sort_hold' is set,
    ** 'sorted' holds the order of 'sort_pts' ('sort_n' points) once a fit has sorted them. */
    int sort_hold;
    const bg_point *sort_pts;
    size_t sort_n;
    /* and the guard rails' verdict on them (fit.c's check_points_held) */
    struct bgi_checked {
        const bg_point *pts;
        size_t n;
        int dir, qty;
        double gap, mono;
        int weighted;
        size_t nd;
    } checked;
};

/* Hold (on = 1) or drop (0) the sorted order of the points across the fits that follow, for
** callers that fit the same unchanged points several times (bg_fit_compare, then the chosen
** model); returns the previous state, for nesting.  Turning it on forgets any held order. */
int bgi_sort_hold(bg_fitter *fr, int on);

/* The batch's kernels (fit_batch.c): the same code compiled as portable C11 and, where the
** compiler can, for AVX2; AUTO takes AVX2 when the processor runs it. */
enum { BGI_KERNEL_AUTO, BGI_KERNEL_PORTABLE, BGI_KERNEL_AVX2, BGI_KERNEL_AVX512 };

/* 1 when this build and processor can run 'kernel'. */
int bgi_batch_kernel_usable(int kernel);

/* The first part of bg_fitter_run: the model's basis, the number of points, room for 'n'
** points in 'fr' and 'out', and the guard rails on the data (notes of repeated readings into
** 'out', out->ndistinct); '*weighted' says whether the points carry uncertainties. */
int bgi_fit_check(bg_fitter *fr, const bg_point *pts, size_t n, const bg_fit_opts *o,
                  int *weighted, bg_fit *out, bg_error *err);

/* A solution found: coefficients, unscaled covariance and rcond in 'lf'. */
struct bgi_solution {
    bg_linfit lf;
    unsigned iters;      /* Gauss-Newton iterations (0: linear fit) */
    int weighted;        /* the points carry uncertainties */
    int with_leverages;  /* keep the leverages in fr->lev for bg_fit_compare */
};

/* The last part: the results into 'out' from 'sol' with fr->L, fr->u, fr->G (n x nb) and
** fr->tm (the fitted temperatures) current. */
int bgi_fit_finish(bg_fitter *fr, const bg_point *pts, size_t n, const bg_fit_opts *o,
                   const struct bgi_solution *sol, bg_fit *out, bg_error *err);

/* bg_fit_compare, handing the fit of each row that can be chosen to the caller: keep[m] (of
** BG_CMP_MAX, each BG_FIT_INIT or released; 'keep' may be NULL) holds row m's fit when the row
** is ok and its BIC within 2 of the lowest, else nothing (released).  The caller releases them. */
int bgi_fit_compare_keep(bg_fitter *fr, const bg_point *pts, size_t n, const bg_fit_opts *o,
                         bg_cmp *out, bg_fit *keep, bg_error *err);

/* The fit of a kind that is not 1/T = sum a_i L^i (fit_gen.c), called by bg_fitter_run. */
int bgi_fit_generic(bg_fitter *fr, const bg_point *pts, size_t n, const bg_fit_opts *o,
                    bg_fit *out, bg_error *err);

/* The basis of 'm' as the fit uses it: the powers of L of an NTC kind, or 0 .. npar-1 (the
** coefficients themselves) for the other kinds; its size. */
size_t bgi_fit_basis(const bg_model *m, unsigned pw[BG_MODEL_MAXPAR]);

#endif
