/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* As-found drift arithmetic: the temperature a device still using the earlier coefficients
** would read for the resistance the later calibration gives, minus the true temperature; the
** activation energy of a B constant. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "bandgap/csv.h"
#include "bandgap/drift.h"
#include "bandgap/units.h"

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

int bg_drift_round_points(double lo_k, double hi_k, size_t min_n, double *at_k, size_t max,
                          size_t *n, bg_error *err)
{
    static const double mant[3] = { 5.0, 2.0, 1.0 };
    double lo = lo_k - BG_ZERO_C_K, hi = hi_k - BG_ZERO_C_K;
    if (min_n == 0 || min_n > max)
        return bg_error_set(err, BG_EINVAL, "%zu round check temperatures asked for (1 .. %zu)",
                            min_n, max);
    if (!(hi >= lo) || !isfinite(lo) || !isfinite(hi))
        return bg_error_set(err, BG_EINVAL, "no check temperatures in an empty range "
                            "(%.3f .. %.3f K)", lo_k, hi_k);
    /* from 1000 degC down to 0.01 degC; counts are taken on the step's integer grid, with a
    ** hair of slack so that a range ending on a multiple keeps it */
    for (int e = 3; e >= -2; e--)
        for (int k = 0; k < 3; k++) {
            double step = mant[k] * pow(10.0, e);
            double first = ceil(lo / step - 1e-9), last = floor(hi / step + 1e-9);
            if (last - first + 1.0 < (double)min_n)
                continue;
            size_t cnt = (size_t)(last - first + 1.0);
            if (cnt > max)
                return bg_error_set(err, BG_EINVAL, "%zu round check temperatures at %g degC "
                                    "steps; room for %zu", cnt, step, max);
            for (size_t i = 0; i < cnt; i++) {
                double t = (first + (double)i) * step;
                at_k[i] = (fabs(t) < step * 1e-9 ? 0.0 : t) + BG_ZERO_C_K;
            }
            *n = cnt;
            return BG_OK;
        }
    return bg_error_set(err, BG_EINVAL, "the range %.3f .. %.3f degC is too narrow for %zu "
                        "check temperatures 0.01 degC apart", lo, hi, min_n);
}

int bg_drift_prepare(const bg_model *m, double pair_t1_k, double pair_t2_k, double t_unix_s,
                     bg_drift_cal *out, bg_error *err)
{
    int rc;
    out->model = *m;
    out->t_unix_s = t_unix_s;
    if ((rc = bg_model_x_from_t(m, BG_T0_DEFAULT_K, &out->r25_ohm, err)) != BG_OK)
        return rc;
    out->b_k = NAN; /* a B value is the NTC kinds' (1/T in ln R) only */
    if (!(bg_model_flags(m) & BG_MODEL_INV_POLY))
        return BG_OK;
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

int bg_drift_compare(const bg_model *old, const bg_model *cur, const bg_drift_at *at,
                     double years, bg_drift *out, bg_error *err)
{
    bg_drift_cal a, b;
    int rc;
    if ((rc = as_found(old, cur, at->at_k, at->nat, out, err)) != BG_OK ||
        (rc = bg_drift_prepare(old, at->pair_t1_k, at->pair_t2_k, 0.0, &a, err)) != BG_OK ||
        (rc = bg_drift_prepare(cur, at->pair_t1_k, at->pair_t2_k, 0.0, &b, err)) != BG_OK)
        return rc;
    finish(&a, &b, years, out);
    return BG_OK;
}

double bg_activation_energy_ev(double b_k)
{
    return BG_BOLTZMANN_EV_PER_K * b_k;
}
