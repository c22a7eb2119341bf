/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* QA statistics: Welford's one-pass mean and sd, Cpk, Grubbs (1969) for one outlier,
** Shewhart X-bar/s charts with the constants from c4 (ASTM E2587; NIST/SEMATECH e-Handbook
** 6.3.2), Western Electric run rules (1956). */
#include <math.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_sf_gamma.h>

#include "bandgap/stats.h"

void bg_stats_of(const double *x, size_t n, bg_stats *out)
{
    double m = 0.0, ss = 0.0;
    out->n = n;
    out->min = INFINITY, out->max = -INFINITY;
    /* Welford's update: one pass, no cancellation (Welford, Technometrics 4 (1962) 419). */
    for (size_t i = 0; i < n; i++) {
        double d = x[i] - m;
        m += d / (double)(i + 1);
        ss += d * (x[i] - m);
        if (x[i] < out->min)
            out->min = x[i];
        if (x[i] > out->max)
            out->max = x[i];
    }
    out->mean = n ? m : NAN;
    out->sd = n >= 2 ? sqrt(ss / (double)(n - 1)) : NAN;
}

double bg_stats_cpk(const bg_stats *s, double lsl, double usl)
{
    double a = usl - s->mean, b = s->mean - lsl;
    return (a < b ? a : b) / (3.0 * s->sd);
}

int bg_grubbs(const double *x, size_t n, double alpha, double *g, double *g_crit, size_t *index,
              bg_error *err)
{
    bg_stats s;
    double worst = -1.0, t, dn = (double)n;
    if (n < 3)
        return bg_error_set(err, BG_EINVAL, "Grubbs' test needs at least 3 values, got %zu", n);
    if (!(alpha > 0.0 && alpha < 1.0))
        return bg_error_set(err, BG_EINVAL, "significance level %g: must be in (0, 1)", alpha);
    bg_stats_of(x, n, &s);
    if (!(s.sd > 0.0))
        return bg_error_set(err, BG_EINVAL, "Grubbs' test: all %zu values are equal", n);
    for (size_t i = 0; i < n; i++)
        if (fabs(x[i] - s.mean) > worst)
            worst = fabs(x[i] - s.mean), *index = i;
    *g = worst / s.sd;
    t = gsl_cdf_tdist_Qinv(alpha / (2.0 * dn), dn - 2.0);
    *g_crit = (dn - 1.0) / sqrt(dn) * sqrt(t * t / (dn - 2.0 + t * t));
    return BG_OK;
}

int bg_chart_constants(size_t m, double *c4, double *a3, double *b3, double *b4, bg_error *err)
{
    double dm = (double)m, c, w;
    if (m < 2)
        return bg_error_set(err, BG_EINVAL, "control charts need subgroups of 2 or more");
    c = sqrt(2.0 / (dm - 1.0)) * exp(gsl_sf_lngamma(dm / 2.0) - gsl_sf_lngamma((dm - 1.0) / 2.0));
    w = 3.0 * sqrt(1.0 - c * c) / c;
    if (c4)
        *c4 = c;
    if (a3)
        *a3 = 3.0 / (c * sqrt(dm));
    if (b3)
        *b3 = 1.0 - w > 0.0 ? 1.0 - w : 0.0;
    if (b4)
        *b4 = 1.0 + w;
    return BG_OK;
}

int bg_chart_xbar_s(const double *means, const double *sds, size_t k, size_t m, bg_chart *xbar,
                    bg_chart *s, bg_error *err)
{
    double a3, b3, b4, xbb = 0.0, sbar = 0.0;
    int rc;
    if (k == 0)
        return bg_error_set(err, BG_EINVAL, "control limits need at least one baseline lot");
    if ((rc = bg_chart_constants(m, NULL, &a3, &b3, &b4, err)) != BG_OK)
        return rc;
    for (size_t i = 0; i < k; i++)
        xbb += means[i], sbar += sds[i];
    xbb /= (double)k, sbar /= (double)k;
    xbar->center = xbb, xbar->ucl = xbb + a3 * sbar, xbar->lcl = xbb - a3 * sbar;
    xbar->sigma = a3 * sbar / 3.0;
    s->center = sbar, s->ucl = b4 * sbar, s->lcl = b3 * sbar;
    s->sigma = (b4 - 1.0) * sbar / 3.0;
    return BG_OK;
}

void bg_chart_rules(const bg_chart *c, const double *x, size_t n, unsigned *flags)
{
    for (size_t i = 0; i < n; i++) {
        double z = (x[i] - c->center) / c->sigma;
        flags[i] = 0;
        if (fabs(z) > 3.0)
            flags[i] |= BG_RULE_3SIGMA;
        for (int side = -1; side <= 1; side += 2) {
            /* counts over the window ending at i, on this side */
            size_t beyond2 = 0, beyond1 = 0, same = 0;
            for (size_t k = 0; k < 3 && k <= i; k++)
                beyond2 += side * (x[i - k] - c->center) / c->sigma > 2.0;
            for (size_t k = 0; k < 5 && k <= i; k++)
                beyond1 += side * (x[i - k] - c->center) / c->sigma > 1.0;
            for (size_t k = 0; k < 8 && k <= i; k++)
                same += side * (x[i - k] - c->center) > 0.0;
            /* the point that completes the pattern must itself be part of it */
            if (i >= 2 && beyond2 >= 2 && side * z > 2.0)
                flags[i] |= BG_RULE_2OF3;
            if (i >= 4 && beyond1 >= 4 && side * z > 1.0)
                flags[i] |= BG_RULE_4OF5;
            if (i >= 7 && same == 8)
                flags[i] |= BG_RULE_8SIDE;
        }
    }
}
