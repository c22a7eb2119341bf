/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* QA arithmetic: as-found error between two calibrations of a probe, lot statistics (Cpk,
** Grubbs' outlier test), the material's activation energy, and Shewhart control charts with
** the Western Electric run rules.  The database and command line around it come later. */
#ifndef BANDGAP_DRIFT_H
#define BANDGAP_DRIFT_H

#include <stddef.h>

#include "bandgap/error.h"
#include "bandgap/model.h"

#define BG_DRIFT_MAXAT 32
#define BG_BOLTZMANN_EV_PER_K 8.617333262e-5 /* CODATA 2018, exact since the 2019 SI */

/* Seconds since 1970-01-01T00:00:00Z of an ISO 8601 date or date-time accepted by
** bg_csv_valid_time (a date alone is midnight UTC; an offset is applied).  BG_EINVAL else. */
BG_API int bg_time_parse(const char *iso, double *unix_s, bg_error *err);

/* 'n' check temperatures spread evenly over the overlap of [lo1, hi1] and [lo2, hi2] (K),
** ends included.  BG_EINVAL when the ranges do not overlap or n is 0 or too large. */
BG_API int bg_drift_check_points(double lo1_k, double hi1_k, double lo2_k, double hi2_k,
                                 size_t n, double *at_k, bg_error *err);

typedef struct bg_drift {
    size_t nat;
    double at_k[BG_DRIFT_MAXAT];
    double err_mk[BG_DRIFT_MAXAT]; /* as-found: T_old(R_new(T)) - T, mK */
    double max_abs_err_mk;
    double d_r25_pct;              /* (R25_new - R25_old) / R25_old, % */
    double d_b_k;                  /* B_new - B_old for the pair, K */
    double years;                  /* between the two calibrations */
    double rate_mk_per_year;       /* max |as-found| / years; NaN when years <= 0 */
} bg_drift;

/* Compare the earlier calibration 'old' with the later 'cur' at 'nat' temperatures: what a
** device still using 'old' would read for the resistance 'cur' gives at each temperature, the
** change of R25 and of B for the pair (t1, t2), and the rate over 'years'. */
BG_API int bg_drift_compare(const bg_model *old, const bg_model *cur, const double *at_k,
                            size_t nat, double pair_t1_k, double pair_t2_k, double years,
                            bg_drift *out, bg_error *err);

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

typedef struct bg_stats {
    size_t n;
    double mean, sd, min, max; /* sd with n - 1; NaN for n < 2 */
} bg_stats;

BG_API void bg_stats_of(const double *x, size_t n, bg_stats *out);

/* Process capability against the limits: min(usl - mean, mean - lsl) / (3 sd). */
BG_API double bg_stats_cpk(const bg_stats *s, double lsl, double usl);

/* Grubbs' test for one outlier, two-sided at significance 'alpha' (Grubbs, Technometrics 11
** (1969) 1-21): G = max |x_i - mean| / sd, against G_crit = (n-1)/sqrt(n) sqrt(t^2/(n-2+t^2))
** with t the upper alpha/(2n) point of Student's t with n-2 degrees of freedom.  Needs n >= 3.
** '*index' is the most extreme value; it is an outlier when G > G_crit. */
BG_API int bg_grubbs(const double *x, size_t n, double alpha, double *g, double *g_crit,
                     size_t *index, bg_error *err);

/* Activation energy E = k B in eV for a B constant in K. */
BG_API double bg_activation_energy_ev(double b_k);

/* ---- control charts ---- */

/* Shewhart constants for subgroups of size m >= 2 from c4(m) = sqrt(2/(m-1))
** Gamma(m/2)/Gamma((m-1)/2): A3 = 3/(c4 sqrt(m)), B3 = max(0, 1 - 3 sqrt(1-c4^2)/c4),
** B4 = 1 + 3 sqrt(1-c4^2)/c4 (ASTM E2587; NIST/SEMATECH e-Handbook 6.3.2). */
BG_API int bg_chart_constants(size_t m, double *c4, double *a3, double *b3, double *b4,
                              bg_error *err);

typedef struct bg_chart {
    double center, ucl, lcl, sigma; /* sigma: the distance from centre to a 1-sigma line */
} bg_chart;

/* X-bar and s charts from baseline subgroups: 'means' and 'sds' of 'k' subgroups of size 'm'.
** X-bar: centre = mean of means, limits +- A3 s-bar; s: centre s-bar, limits B3, B4 s-bar. */
BG_API int bg_chart_xbar_s(const double *means, const double *sds, size_t k, size_t m,
                           bg_chart *xbar, bg_chart *s, bg_error *err);

/* Western Electric rules (Western Electric Statistical Quality Control Handbook, 1956):
** 1: a point beyond 3 sigma; 2: two of three successive points beyond 2 sigma on one side;
** 3: four of five successive points beyond 1 sigma on one side; 4: eight successive points on
** one side of the centre.  'flags[i]' gets bit (r - 1) set for each rule r that point i
** completes. */
enum { BG_RULE_3SIGMA = 1 << 0, BG_RULE_2OF3 = 1 << 1, BG_RULE_4OF5 = 1 << 2,
       BG_RULE_8SIDE = 1 << 3 };
BG_API void bg_chart_rules(const bg_chart *c, const double *x, size_t n, unsigned *flags);

#endif
