/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* QA arithmetic against independent values: dates against the C library's gmtime, as-found
** error against a direct evaluation of the models in this file, Grubbs critical values and
** control chart constants against published tables, run rules on hand-built series. */
#include <time.h>

#include "testutil.h"

static void iso_times(void **state)
{
    (void)state;
    /* independent: gmtime_r + strftime of known instants, read back */
    static const long long secs[] = { 0, 951782400, 1709164800, 1764547200, 1795000007,
                                      4102444799LL };
    for (size_t i = 0; i < sizeof secs / sizeof secs[0]; i++) {
        char buf[64];
        struct tm tm;
        time_t t = (time_t)secs[i];
        double v;
        gmtime_r(&t, &tm);
        strftime(buf, sizeof buf, "%Y-%m-%dT%H:%M:%SZ", &tm);
        assert_int_equal(bg_time_parse(buf, &v, NULL), BG_OK);
        assert_close(v, (double)secs[i], 0, 1e-6);
    }
    double a, b;
    assert_int_equal(bg_time_parse("2026-11-24T10:00:00+02:00", &a, NULL), BG_OK);
    assert_int_equal(bg_time_parse("2026-11-24T08:00:00Z", &b, NULL), BG_OK);
    assert_close(a, b, 0, 0);
    assert_int_equal(bg_time_parse("2026-11-24", &a, NULL), BG_OK);
    assert_close(b - a, 8 * 3600.0, 0, 0);
    bg_error err = BG_ERROR_INIT;
    assert_int_equal(bg_time_parse("24.11.2026", &a, &err), BG_EINVAL);
}

static void check_points_over_the_overlap(void **state)
{
    (void)state;
    double at[5];
    bg_error err = BG_ERROR_INIT;
    assert_int_equal(bg_drift_check_points(253.15, 333.15, 263.15, 353.15, 5, at, NULL), BG_OK);
    assert_close(at[0], 263.15, 1e-15, 0);
    assert_close(at[2], 298.15, 1e-15, 0);
    assert_close(at[4], 333.15, 1e-15, 0);
    assert_int_equal(bg_drift_check_points(253.15, 273.15, 283.15, 353.15, 5, at, &err),
                     BG_EINVAL);
    assert_non_null(strstr(err.msg, "do not overlap"));
}

/* Direct evaluation of 1/T = A + B L + C L^3 in this file, independent of the model code. */
static double t_of_r(const double *c, double r)
{
    double L = log(r);
    return 1.0 / (c[0] + c[1] * L + c[2] * L * L * L);
}

static void as_found_of_a_resistance_drift(void **state)
{
    (void)state;
    /* invented coefficients; the later calibration reads d = +0.37 % more resistance at every
    ** temperature: L' = L + delta, which is the sh4 curve with the coefficients below */
    const double c[3] = { 1.1384e-3, 2.3245e-4, 9.4871e-8 }, d = 0.0037, dl = log1p(d);
    double c4[4] = { c[0] - c[1] * dl - c[2] * dl * dl * dl, c[1] + 3 * c[2] * dl * dl,
                     -3 * c[2] * dl, c[2] };
    bg_model old, cur;
    bg_drift dr;
    double at[5];
    bg_model_parse("sh3", &old, NULL);
    bg_model_set_coef(&old, c, 3, NULL);
    bg_model_parse("sh4", &cur, NULL);
    bg_model_set_coef(&cur, c4, 4, NULL);
    assert_int_equal(bg_drift_check_points(253.15, 353.15, 253.15, 353.15, 5, at, NULL), BG_OK);
    bg_drift_at where = { at, 5, 298.15, 358.15 };
    assert_int_equal(bg_drift_compare(&old, &cur, &where, 1.5, &dr, NULL), BG_OK);
    double worst = 0.0;
    for (int i = 0; i < 5; i++) {
        double r_old;
        bg_model_r_from_t(&old, at[i], &r_old, NULL);
        double expect = 1e3 * (t_of_r(c, r_old * (1 + d)) - at[i]); /* independent */
        assert_close(dr.err_mk[i], expect, 1e-6, 0);
        assert_true(dr.err_mk[i] < 0.0); /* more resistance reads colder for an NTC */
        worst = fmax(worst, fabs(expect));
    }
    assert_close(dr.max_abs_err_mk, worst, 1e-6, 0);
    assert_close(dr.d_r25_pct, 100 * d, 1e-9, 0);  /* a constant factor: R25 by d */
    assert_close(dr.d_b_k, 0.0, 0, 1e-8);          /* and B unchanged (definition of B) */
    assert_close(dr.rate_mk_per_year, worst / 1.5, 1e-6, 0);
}

static void as_found_of_a_beta_change(void **state)
{
    (void)state;
    bg_model a, b;
    bg_drift dr;
    double at[3] = { 273.15, 298.15, 323.15 };
    double ca[2] = { 10000, 3950 }, cb[2] = { 10000, 3962.5 };
    bg_model_parse("beta", &a, NULL);
    bg_model_set_coef(&a, ca, 2, NULL);
    bg_model_parse("beta", &b, NULL);
    bg_model_set_coef(&b, cb, 2, NULL);
    bg_drift_at where = { at, 3, 298.15, 358.15 };
    assert_int_equal(bg_drift_compare(&a, &b, &where, 0.0, &dr, NULL), BG_OK);
    assert_close(dr.d_b_k, 12.5, 1e-9, 0);
    assert_close(dr.d_r25_pct, 0.0, 0, 1e-10);
    assert_close(dr.err_mk[1], 0.0, 0, 1e-9); /* both pass through R25 at 25 degC */
    /* independent: T = 1 / (1/T0 + ln(R/R0)/B_old) with R from the new beta curve */
    double r = 10000 * exp(3962.5 * (1 / 273.15 - 1 / 298.15));
    assert_close(dr.err_mk[0], 1e3 * (1 / (1 / 298.15 + log(r / 10000) / 3950) - 273.15), 1e-9, 0);
    assert_true(isnan(dr.rate_mk_per_year)); /* no time between them */
}

static void statistics(void **state)
{
    (void)state;
    const double x[5] = { 1, 2, 3, 4, 5 };
    bg_stats s;
    bg_stats_of(x, 5, &s);
    assert_close(s.mean, 3.0, 1e-15, 0);
    assert_close(s.sd, sqrt(2.5), 1e-15, 0); /* sample sd, n - 1 (definition) */
    assert_close(s.min, 1.0, 0, 0);
    assert_close(s.max, 5.0, 0, 0);
    assert_close(bg_stats_cpk(&s, 0.0, 10.0), 3.0 / (3.0 * sqrt(2.5)), 1e-15, 0);
    /* activation energy: k = 8.617333262e-5 eV/K (CODATA 2018, exact) */
    assert_close(bg_activation_energy_ev(3950.0), 0.3403846638, 1e-9, 0);
}

static void grubbs_against_the_table(void **state)
{
    (void)state;
    /* Critical values of Grubbs' statistic, two-sided, alpha = 0.05 (published tables: Grubbs
    ** 1969 and ASTM E178; values from memory, checked here against the formula) */
    static const size_t n[] = { 3, 4, 5, 6, 7, 8, 9, 10, 15, 20 };
    static const double g[] = { 1.155, 1.481, 1.715, 1.887, 2.020, 2.127, 2.215, 2.290, 2.549,
                                2.709 };
    double x[20];
    for (size_t k = 0; k < sizeof n / sizeof n[0]; k++) {
        double gv, gc;
        size_t idx;
        for (size_t i = 0; i < n[k]; i++)
            x[i] = sin(1.7 * (double)i) + 0.01 * (double)i; /* any spread */
        assert_int_equal(bg_grubbs(x, n[k], 0.05, &gv, &gc, &idx, NULL), BG_OK);
        assert_close(gc, g[k], 0, 0.0015);
    }
    /* a hand-built lot with one far value */
    const double lot[8] = { 10.01, 9.98, 10.02, 10.00, 9.99, 10.03, 9.97, 10.40 };
    double gv, gc;
    size_t idx;
    assert_int_equal(bg_grubbs(lot, 8, 0.05, &gv, &gc, &idx, NULL), BG_OK);
    assert_int_equal(idx, 7);
    assert_true(gv > gc);
    bg_stats s;
    bg_stats_of(lot, 8, &s);
    assert_close(gv, (10.40 - s.mean) / s.sd, 1e-12, 0);
    bg_error err = BG_ERROR_INIT;
    assert_int_equal(bg_grubbs(lot, 2, 0.05, &gv, &gc, &idx, &err), BG_EINVAL);
}

static void chart_constants_against_the_table(void **state)
{
    (void)state;
    /* Shewhart constants (published: ASTM E2587 table; NIST/SEMATECH e-Handbook 6.3.2) */
    static const size_t m[] = { 2, 5, 10, 25 };
    static const double c4[] = { 0.7979, 0.9400, 0.9727, 0.9896 };
    static const double a3[] = { 2.659, 1.427, 0.975, 0.606 };
    static const double b3[] = { 0.0, 0.0, 0.284, 0.565 };
    static const double b4[] = { 3.267, 2.089, 1.716, 1.435 };
    for (size_t k = 0; k < 4; k++) {
        double c, a, bb3, bb4;
        assert_int_equal(bg_chart_constants(m[k], &c, &a, &bb3, &bb4, NULL), BG_OK);
        assert_close(c, c4[k], 0, 0.00005);
        assert_close(a, a3[k], 0, 0.0005);
        assert_close(bb3, b3[k], 0, 0.0005);
        assert_close(bb4, b4[k], 0, 0.0005);
    }
}

static void limits_and_run_rules(void **state)
{
    (void)state;
    /* four baseline lots of five probes: means and sds (hand-built) */
    const double means[4] = { 0.10, -0.05, 0.02, -0.07 }, sds[4] = { 0.20, 0.24, 0.18, 0.22 };
    bg_chart xb, sc;
    assert_int_equal(bg_chart_xbar_s(means, sds, 4, 5, &xb, &sc, NULL), BG_OK);
    /* by hand: x-bar-bar = 0, s-bar = 0.21; A3(5) = 1.427, B4(5) = 2.089, B3(5) = 0 */
    assert_close(xb.center, 0.0, 0, 1e-15);
    assert_close(xb.ucl, 1.427 * 0.21, 0.0005, 0);
    assert_close(sc.center, 0.21, 1e-12, 0);
    assert_close(sc.ucl, 2.089 * 0.21, 0.0005, 0);
    assert_close(sc.lcl, 0.0, 0, 0);
    /* a hand-built series in units of sigma: the expected flags are known */
    bg_chart c = { 0.0, 3.0, -3.0, 1.0 };
    const double x[16] = { 0.5, 3.4,            /* 1: rule 1 */
                           -2.5, 0.1, -2.2,      /* 4: rule 2 (two of three below -2) */
                           0.2, 1.5, 1.2, 1.8, 1.1,           /* 9: rule 3 (four of five > 1) */
                           0.3, 0.4, 0.2, 0.6, 0.5, 0.7 };   /* 12: rule 4 (eight above) */
    unsigned f[16];
    bg_chart_rules(&c, x, 16, f);
    assert_int_equal(f[0], 0);
    assert_true(f[1] & BG_RULE_3SIGMA);
    assert_true(f[4] & BG_RULE_2OF3);
    assert_false(f[3] & BG_RULE_2OF3);
    assert_true(f[9] & BG_RULE_4OF5);
    assert_false(f[8] & BG_RULE_8SIDE);
    /* above the centre from index 5 on: the eighth such point is index 12 */
    assert_false(f[11] & BG_RULE_8SIDE);
    assert_true(f[12] & BG_RULE_8SIDE);
    assert_true(f[15] & BG_RULE_8SIDE);
    for (int i = 0; i < 16; i++)
        if (i != 1)
            assert_false(f[i] & BG_RULE_3SIGMA);
}

/* Round check temperatures: the multiples of the largest 1, 2, 5 x 10^n degC step with at
** least five in the range (values worked out by hand from that rule). */
static void round_check_points(void **state)
{
    (void)state;
    double at[BG_DRIFT_MAXAT];
    size_t n = 0;
    bg_error err = BG_ERROR_INIT;
    /* -19.995 .. 59.99 degC: 20 degC steps give 0, 20, 40 (3); 10 degC steps -10 .. 50 (7) */
    assert_int_equal(bg_drift_round_points(253.155, 333.14, 5, at, BG_DRIFT_MAXAT, &n, NULL),
                     BG_OK);
    assert_int_equal(n, 7);
    for (size_t i = 0; i < n; i++)
        assert_close(at[i], 273.15 - 10.0 + 10.0 * (double)i, 1e-12, 0);
    /* a range ending on a multiple keeps it: -20 .. 60 degC at 20 degC steps (5) */
    assert_int_equal(bg_drift_round_points(253.15, 333.15, 5, at, BG_DRIFT_MAXAT, &n, NULL),
                     BG_OK);
    assert_int_equal(n, 5);
    assert_close(at[0], 253.15, 1e-12, 0);
    assert_close(at[4], 333.15, 1e-12, 0);
    /* two lots over nearly the same span get the same temperatures */
    double at2[BG_DRIFT_MAXAT];
    size_t n2 = 0;
    assert_int_equal(bg_drift_round_points(253.14, 333.16, 5, at2, BG_DRIFT_MAXAT, &n2, NULL),
                     BG_OK);
    assert_int_equal(n2, n);
    assert_memory_equal(at, at2, n * sizeof at[0]);
    /* a narrow range: 25.000 .. 25.030 degC at 0.01 degC steps gives four: refused */
    assert_int_equal(bg_drift_round_points(298.15, 298.18, 5, at, BG_DRIFT_MAXAT, &n, &err),
                     BG_EINVAL);
    assert_non_null(strstr(err.msg, "too narrow"));
    assert_int_equal(bg_drift_round_points(333.15, 253.15, 5, at, BG_DRIFT_MAXAT, &n, NULL),
                     BG_EINVAL);
}

int main(void)
{
    gsl_set_error_handler(test_gsl_handler);
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(iso_times),
        cmocka_unit_test(check_points_over_the_overlap),
        cmocka_unit_test(round_check_points),
        cmocka_unit_test(as_found_of_a_resistance_drift),
        cmocka_unit_test(as_found_of_a_beta_change),
        cmocka_unit_test(statistics),
        cmocka_unit_test(grubbs_against_the_table),
        cmocka_unit_test(chart_constants_against_the_table),
        cmocka_unit_test(limits_and_run_rules),
    };
    return cmocka_run_group_tests_name("drift", tests, NULL, NULL);
}
