/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* As-found drift arithmetic: the error a device still using a probe's earlier coefficients
** shows against a later calibration, the check temperatures it is taken at, and the
** material's activation energy.  The statistics are in stats.h, the QA results in qa.h. */
#ifndef BANDGAP_DRIFT_H
#define BANDGAP_DRIFT_H

#include <stddef.h>

#include "bandgap/error.h"
#include "bandgap/model.h"
#include "bandgap/time.h"

#define BG_DRIFT_MAXAT 32
#define BG_BOLTZMANN_EV_PER_K 8.617333262e-5 /* CODATA 2018, exact since the 2019 SI */


/* 'n' check temperatures spread evenly over the overlap of [lo1, hi1] and [lo2, hi2] (K),
** ends included.  BG_EINVAL when the ranges do not overlap or n is 0 or too large. */
BG_API int bg_drift_check_points(double lo1_k, double hi1_k, double lo2_k, double hi2_k,
                                 size_t n, double *at_k, bg_error *err);

/* Round check temperatures inside [lo_k, hi_k]: the multiples of the largest step of 1, 2 or
** 5 times a power of ten degrees Celsius (0.01 degC at the least) of which at least 'min_n'
** lie in the range, ends included, at most 'max' of them; so that two lots calibrated over
** nearly the same range get the same temperatures.  Fills 'at_k' (K) and '*n'.  BG_EINVAL
** when the range is empty or too narrow for 'min_n' multiples of 0.01 degC, or min_n is 0 or
** above 'max'. */
BG_API int bg_drift_round_points(double lo_k, double hi_k, size_t min_n, double *at_k,
                                 size_t max, size_t *n, bg_error *err);

typedef struct bg_drift {
    size_t nat;
    double at_k[BG_DRIFT_MAXAT];
    double err_mk[BG_DRIFT_MAXAT]; /* as-found: T_old(R_new(T)) - T, mK */
    double max_abs_err_mk;
    double d_r25_pct;              /* (R25_new - R25_old) / R25_old, %: the reading at 25 degC,
                                      in the kind's quantity (a voltage, a code) for the others */
    double d_b_k;                  /* B_new - B_old for the pair, K; NaN for a kind not NTC */
    double years;                  /* between the two calibrations */
    double rate_mk_per_year;       /* max |as-found| / years; NaN when years <= 0 */
} bg_drift;

/* Where two calibrations are compared: 'nat' temperatures 'at_k' (K) and the pair (t1, t2)
** that names B (K). */
typedef struct bg_drift_at {
    const double *at_k;
    size_t nat;
    double pair_t1_k, pair_t2_k;
} bg_drift_at;

/* Compare the earlier calibration 'old' with the later 'cur' at 'at': what a device still
** using 'old' would read for the resistance 'cur' gives at each temperature, the change of
** R25 and of B for the pair, and the rate over 'years'. */
BG_API int bg_drift_compare(const bg_model *old, const bg_model *cur, const bg_drift_at *at,
                            double years, bg_drift *out, bg_error *err);

/* One calibration made ready for many comparisons: its R25, its B for the pair and its time,
** worked out once. */
typedef struct bg_drift_cal {
    bg_model model;
    double r25_ohm, b_k, t_unix_s;
} bg_drift_cal;

BG_API int bg_drift_prepare(const bg_model *m, double pair_t1_k, double pair_t2_k,
                            double t_unix_s, bg_drift_cal *out, bg_error *err);

/* bg_drift_compare for prepared calibrations; the years come from their times. */
BG_API int bg_drift_compare_cal(const bg_drift_cal *old, const bg_drift_cal *cur,
                                const double *at_k, size_t nat, bg_drift *out, bg_error *err);

/* Activation energy E = k B in eV for a B constant in K. */
BG_API double bg_activation_energy_ev(double b_k);

#endif
