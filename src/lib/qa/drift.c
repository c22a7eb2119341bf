/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* As-found drift arithmetic: the temperature a device still using the earlier coefficients
** would read for the resistance the later calibration gives, minus the true temperature; ISO
** 8601 times as seconds; the activation energy of a B constant. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

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

double bg_activation_energy_ev(double b_k)
{
    return BG_BOLTZMANN_EV_PER_K * b_k;
}
