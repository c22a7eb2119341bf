/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The R-T curve of a model, point by point: temperature and resistance, the slope dT/dR,
** alpha = (1/R) dR/dT, the local beta and, when the covariance of the coefficients is known,
** the standard and expanded uncertainty U = k u of the curve, k from the coverage rule of fit.h
** (Student's t for the fit's degrees of freedom by default); rows outside the calibrated range
** are marked as extrapolated and carry no U.  Every value comes from the model functions of
** model.h. */
#ifndef BANDGAP_CURVE_H
#define BANDGAP_CURVE_H

#include <stddef.h>

#include "bandgap/error.h"
#include "bandgap/fit.h"
#include "bandgap/model.h"
/* The most rows bg_curve_grid makes; more is refused with a message that names the limit. */
#define BG_CURVE_MAX_ROWS 1000000

/* What a curve is of: a model, optionally the covariance of its coefficients (npar x npar,
** row-major, in the model's coefficient order) and the temperature range it was calibrated
** over, and optionally a pair of temperatures for a two-point B value. */
typedef struct bg_curve_src {
    bg_model model;
    int has_cov;
    double cov[BG_MODEL_MAXPAR * BG_MODEL_MAXPAR];
    int has_range;
    double t_min_k, t_max_k;
    double b_pair_t1_k, b_pair_t2_k; /* 0, 0: no B value wanted */
    size_t dof;                 /* degrees of freedom of the covariance (n - p of its fit):
                                ** the effective degrees of freedom of U; 0: not known, and then
                                ** U is given only with a fixed k */
    bg_coverage_rule rule;      /* how U is expanded from u (default bg_coverage_default()) */
} bg_curve_src;

/* A curve source of 'm' alone: no covariance, no known range, no B pair, the default coverage
** rule. */
BG_API bg_curve_src bg_curve_src_of_model(const bg_model *m);

/* One point of the curve is asked for by a temperature (K) or a resistance (ohm). */
typedef enum bg_curve_given { BG_CURVE_AT_TEMP = 0, BG_CURVE_AT_OHMS } bg_curve_given;

typedef struct bg_curve_query {
    bg_curve_given given;
    double value; /* t_k for BG_CURVE_AT_TEMP, r_ohm for BG_CURVE_AT_OHMS */
} bg_curve_query;

typedef struct bg_curve_row {
    bg_curve_given given;
    int ok;               /* 0 only in bg_curve_span rows where the model cannot be evaluated */
    double t_k, r_ohm;
    double dtdr_k_per_ohm;
    double alpha_per_k;   /* (1/R) dR/dT, 1/K */
    double beta_local_k;  /* 1 / (d(1/T)/dL), K */
    double u_k;           /* standard uncertainty of the curve at t_k; NaN without covariance
                          ** or where it cannot be evaluated */
    double U_k;           /* expanded uncertainty cover.k * u_k; NaN where u_k is, and for an
                          ** extrapolated row: outside the range the covariance says nothing
                          ** about the curve's error */
    int extrapolated;     /* the source has a range and t_k is outside it (by more than 1 nK) */
} bg_curve_row;

/* A computed curve.  Caller-owned: bg_curve_init (or BG_CURVE_INIT) before use,
** bg_curve_release after; a function filling it releases what it held first. */
typedef struct bg_curve {
    bg_curve_row *rows;
    size_t n;
    double b_pair_k; /* two-point B for the source's pair, K; NaN when not asked for or when
                     ** the model cannot be evaluated at the pair */
    int b_pair_extrapolated; /* the source has a range and the pair lies outside it */
    bg_coverage cover;       /* the coverage factor of every row's U (k NaN without one) */
} bg_curve;
#define BG_CURVE_INIT { NULL, 0, 0.0, 0, { 0.0, 0.0, 0.0, 0 } }
BG_API void bg_curve_init(bg_curve *c);
BG_API void bg_curve_release(bg_curve *c);

/* The curve at 'n' points asked for by 'q', in that order.  BG_EINVAL with the model's
** message when one cannot be evaluated (a temperature no resistance gives, R <= 0), or for a
** bad coverage rule, BG_ENOMEM.  On error '*out' is empty.  Keeps no pointer to 'q' or 'src'. */
BG_API int bg_curve_eval(const bg_curve_src *src, const bg_curve_query *q, size_t n,
                         bg_curve *out, bg_error *err);

/* The curve at the temperatures from_k, from_k + step_k, ... up to to_k (included within
** 1e-9 of a step).  BG_EINVAL when to_k < from_k, step_k <= 0, a value is not finite, or
** the grid has more than BG_CURVE_MAX_ROWS rows; otherwise as bg_curve_eval. */
BG_API int bg_curve_grid(const bg_curve_src *src, double from_k, double to_k, double step_k,
                         bg_curve *out, bg_error *err);

/* The curve at the resistances 'r_ohm' (n of them), as bg_curve_eval. */
BG_API int bg_curve_at_ohms(const bg_curve_src *src, const double *r_ohm, size_t n,
                            bg_curve *out, bg_error *err);

/* 'npoints' >= 2 temperatures evenly spaced over the calibrated range, both ends included:
** the uncertainty profile of a stored fit.  A row where the model cannot be evaluated has
** ok = 0 and NaN values instead of failing the whole profile.  BG_EINVAL without a range or
** with fewer than 2 points, BG_ENOMEM. */
BG_API int bg_curve_span(const bg_curve_src *src, size_t npoints, bg_curve *out,
                         bg_error *err);

#endif
