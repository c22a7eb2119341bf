/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* QA arithmetic.  As-found error: the temperature a device still using the earlier coefficients
** would read for the resistance the later calibration gives, minus the true temperature.
** Statistics: Grubbs (1969) for outliers, Shewhart X-bar/s charts with the constants from c4
** (ASTM E2587), Western Electric run rules (1956). */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_sf_gamma.h>

#include "bandgap/csv.h"
#include "bandgap/drift.h"

static int two(const char *s) { return (s[0] - '0') * 10 + (s[1] - '0'); }

/* Days since 1970-01-01 of a proleptic Gregorian date (H. Hinnant, "chrono-compatible
** low-level date algorithms", days_from_civil). */
static long long days_from_civil(long long y, int m, int d)
{
    y -= m <= 2;
    long long era = (y >= 0 ? y : y - 399) / 400;
    long long yoe = y - era * 400;
    long long doy = (153 * (m + (m > 2 ? -3 : 9)) + 2) / 5 + d - 1;
    long long doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    return era * 146097 + doe - 719468;
}

int bg_time_parse(const char *iso, double *unix_s, bg_error *err)
{
    const char *s = iso;
    double t;
    if (!bg_csv_valid_time(iso))
        return bg_error_set(err, BG_EINVAL, "'%s': not an ISO 8601 date or date-time", iso);
    t = 86400.0 * (double)days_from_civil(atoi(s), two(s + 5), two(s + 8));
    s += 10;
    if (*s == 'T' || *s == ' ') {
        s++;
        t += 3600.0 * two(s) + 60.0 * two(s + 3);
        s += 5;
        if (*s == ':') {
            t += two(s + 1);
            s += 3;
            if (*s == '.' || *s == ',') {
                double scale = 0.1;
                for (s++; *s >= '0' && *s <= '9'; s++, scale /= 10.0)
                    t += (*s - '0') * scale;
            }
        }
        if (*s == '+' || *s == '-') {
            int sign = *s == '-' ? -1 : 1;
            s++;
            double off = 3600.0 * two(s);
            s += 2;
            if (*s == ':')
                s++;
            off += 60.0 * two(s);
            t -= sign * off; /* 10:00+02:00 is 08:00Z */
        }
    }
    *unix_s = t;
    return BG_OK;
}

int bg_drift_check_points(double lo1, double hi1, double lo2, double hi2, size_t n, double *at_k,
                          bg_error *err)
{
    double lo = lo1 > lo2 ? lo1 : lo2, hi = hi1 < hi2 ? hi1 : hi2;
    if (n == 0 || n > BG_DRIFT_MAXAT)
        return bg_error_set(err, BG_EINVAL, "%zu check temperatures (1 .. %d allowed)", n,
                            BG_DRIFT_MAXAT);
    if (!(hi >= lo))
        return bg_error_set(err, BG_EINVAL, "the calibrated ranges do not overlap "
                            "(%.3f .. %.3f K and %.3f .. %.3f K)", lo1, hi1, lo2, hi2);
    for (size_t i = 0; i < n; i++)
        at_k[i] = n == 1 ? 0.5 * (lo + hi) : lo + (hi - lo) * (double)i / (double)(n - 1);
    return BG_OK;
}

int bg_drift_prepare(const bg_model *m, double pair_t1_k, double pair_t2_k, double t_unix_s,
                     bg_drift_cal *out, bg_error *err)
{
    int rc;
    out->model = *m;
    out->t_unix_s = t_unix_s;
    if ((rc = bg_model_r_from_t(m, BG_T0_DEFAULT_K, &out->r25_ohm, err)) != BG_OK)
        return rc;
    return bg_model_b_pair(m, pair_t1_k, pair_t2_k, &out->b_k, err);
}

static int as_found(const bg_model *old, const bg_model *cur, const double *at_k, size_t nat,
                    bg_drift *out, bg_error *err)
{
    int rc;
    memset(out, 0, sizeof *out);
    if (nat > BG_DRIFT_MAXAT)
        return bg_error_set(err, BG_EINVAL, "too many check temperatures (%zu)", nat);
    for (size_t i = 0; i < nat; i++) {
        double r, t;
        if ((rc = bg_model_r_from_t(cur, at_k[i], &r, err)) != BG_OK ||
            (rc = bg_model_t_from_r(old, r, &t, err)) != BG_OK)
            return rc;
        out->at_k[i] = at_k[i];
        out->err_mk[i] = 1e3 * (t - at_k[i]);
        if (fabs(out->err_mk[i]) > out->max_abs_err_mk)
            out->max_abs_err_mk = fabs(out->err_mk[i]);
    }
    out->nat = nat;
    return BG_OK;
}

static void finish(const bg_drift_cal *old, const bg_drift_cal *cur, double years, bg_drift *out)
{
    out->d_r25_pct = 100.0 * (cur->r25_ohm - old->r25_ohm) / old->r25_ohm;
    out->d_b_k = cur->b_k - old->b_k;
    out->years = years;
    out->rate_mk_per_year = years > 0.0 ? out->max_abs_err_mk / years : NAN;
}

int bg_drift_compare_cal(const bg_drift_cal *old, const bg_drift_cal *cur, const double *at_k,
                         size_t nat, bg_drift *out, bg_error *err)
{
    int rc = as_found(&old->model, &cur->model, at_k, nat, out, err);
    if (rc == BG_OK)
        finish(old, cur, (cur->t_unix_s - old->t_unix_s) / (365.2425 * 86400.0), out);
    return rc;
}

int bg_drift_compare(const bg_model *old, const bg_model *cur, const double *at_k, size_t nat,
                     double pair_t1_k, double pair_t2_k, double years, bg_drift *out,
                     bg_error *err)
{
    bg_drift_cal a, b;
    int rc;
    if ((rc = as_found(old, cur, at_k, nat, out, err)) != BG_OK ||
        (rc = bg_drift_prepare(old, pair_t1_k, pair_t2_k, 0.0, &a, err)) != BG_OK ||
        (rc = bg_drift_prepare(cur, pair_t1_k, pair_t2_k, 0.0, &b, err)) != BG_OK)
        return rc;
    finish(&a, &b, years, out);
    return BG_OK;
}

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

double bg_activation_energy_ev(double b_k)
{
    return BG_BOLTZMANN_EV_PER_K * b_k;
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
