/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* QA statistics: summary statistics, process capability, Grubbs' outlier test, the Shewhart
** constants, X-bar and s control charts, and the Western Electric run rules. */
#ifndef BANDGAP_STATS_H
#define BANDGAP_STATS_H

#include <stddef.h>

#include "bandgap/error.h"

typedef struct bg_stats {
    size_t n;
    double mean, sd, min, max; /* sd with n - 1; NaN for n < 2 */
} bg_stats;

/* Mean, sd (n - 1), min and max of 'n' values in one pass (Welford).  For n = 0 the mean is
** NaN and min/max are +inf/-inf. */
BG_API void bg_stats_of(const double *x, size_t n, bg_stats *out);

/* Process capability against the limits: min(usl - mean, mean - lsl) / (3 sd). */
BG_API double bg_stats_cpk(const bg_stats *s, double lsl, double usl);

/* Grubbs' test for one outlier, two-sided at significance 'alpha' (Grubbs, Technometrics 11
** (1969) 1-21): G = max |x_i - mean| / sd, against G_crit = (n-1)/sqrt(n) sqrt(t^2/(n-2+t^2))
** with t the upper alpha/(2n) point of Student's t with n-2 degrees of freedom.  Needs n >= 3.
** '*index' is the most extreme value; it is an outlier when G > G_crit. */
BG_API int bg_grubbs(const double *x, size_t n, double alpha, double *g, double *g_crit,
                     size_t *index, bg_error *err);

/* ---- control charts ---- */

/* Shewhart constants for subgroups of size m >= 2 from c4(m) = sqrt(2/(m-1))
** Gamma(m/2)/Gamma((m-1)/2): A3 = 3/(c4 sqrt(m)), B3 = max(0, 1 - 3 sqrt(1-c4^2)/c4),
** B4 = 1 + 3 sqrt(1-c4^2)/c4 (ASTM E2587; NIST/SEMATECH e-Handbook 6.3.2).  Any output may
** be NULL. */
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
