/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The curve tables (bg_curve_*) checked against values from outside the project: the
** encyclopedia Steinhart-Hart example and the beta tables of ../shared/refdata, and curve
** uncertainties computed independently with numpy (law of propagation, GUM 5.1.2). */
#include "testutil.h"

/* Wikipedia "Thermistor", Steinhart-Hart section (published): A, B, C for a ~3 kOhm part. */
static const double SH_COEF[3] = { 1.40e-3, 2.37e-4, 9.90e-8 };
/* R at t (derived in 40-digit arithmetic from those coefficients; refdata section 1). */
static const double SH_T[] = { 0, 10, 20, 30, 40, 50, 60, 70, 80, 90, 100 };
static const double SH_R[] = { 10030.2176, 6110.382219, 3833.327593, 2470.600113, 1632.375100,
                               1103.547411, 762.005731, 536.581242, 384.768785, 280.598155,
                               207.861671 };

/* An invented covariance of (A, B, C), positive definite (M M^T, M lower triangular with
** diagonal 2e-7, 1e-8, 5e-12 and below it -3e-8, 1e-10, -2e-11). */
static const double SH_COV[9] = { 4e-14,  -6e-15,    2e-17,  -6e-15,     1e-15,
                                  -3.2e-18, 2e-17,   -3.2e-18, 1.0425e-20 };

static bg_curve_src sh3_src(int with_cov)
{
    bg_model m;
    assert_int_equal(bg_model_parse("sh3", &m, NULL), BG_OK);
    assert_int_equal(bg_model_set_coef(&m, SH_COEF, 3, NULL), BG_OK);
    bg_curve_src s = bg_curve_src_of_model(&m);
    if (with_cov) {
        s.has_cov = 1;
        memcpy(s.cov, SH_COV, sizeof SH_COV);
    }
    return s;
}

static void grid_matches_published_table(void **state)
{
    (void)state;
    bg_curve_src s = sh3_src(0);
    bg_curve c = BG_CURVE_INIT;
    assert_int_equal(bg_curve_grid(&s, 273.15, 373.15, 10.0, &c, NULL), BG_OK);
    assert_int_equal(c.n, 11);
    for (size_t i = 0; i < c.n; i++) {
        assert_close(c.rows[i].t_k, SH_T[i] + 273.15, 0, 1e-9);
        assert_close(c.rows[i].r_ohm, SH_R[i], 1e-6, 0); /* refdata 1, derived */
        assert_true(c.rows[i].ok);
        assert_false(c.rows[i].extrapolated); /* no range known: nothing is extrapolated */
        assert_true(isnan(c.rows[i].u_k));    /* no covariance: no uncertainty */
        assert_true(c.rows[i].dtdr_k_per_ohm < 0 && c.rows[i].alpha_per_k < 0);
    }
    assert_true(isnan(c.b_pair_k)); /* no pair asked for */
    bg_curve_release(&c);
    assert_null(c.rows);
    assert_int_equal(c.n, 0);
}

static void inverse_slope_beta_and_pair(void **state)
{
    (void)state;
    bg_curve_src s = sh3_src(0);
    bg_curve c = BG_CURVE_INIT;
    bg_curve_query q[2] = { { BG_CURVE_AT_OHMS, 3000.0 }, { BG_CURVE_AT_TEMP, 298.15 } };
    s.b_pair_t1_k = 298.15, s.b_pair_t2_k = 358.15;
    assert_int_equal(bg_curve_eval(&s, q, 2, &c, NULL), BG_OK);
    assert_int_equal(c.n, 2);
    assert_int_equal(c.rows[0].given, BG_CURVE_AT_OHMS);
    assert_close(c.rows[0].t_k, 298.6573936, 0, 1e-7);  /* refdata 1: T(3000 ohm), derived */
    assert_close(c.rows[0].r_ohm, 3000.0, 0, 0);
    assert_close(c.rows[1].r_ohm, 3067.500051, 1e-9, 0); /* refdata 1: R at 25 degC */
    assert_close(c.rows[1].dtdr_k_per_ohm, -0.00742283, 1e-5, 0); /* refdata 1, derived */
    assert_close(c.rows[1].beta_local_k, 3904.05, 0, 0.01);      /* refdata 1, derived */
    /* alpha = -beta_local / T^2 (definition, refdata 2) */
    assert_close(c.rows[1].alpha_per_k, -3904.05 / (298.15 * 298.15), 1e-6, 0);
    assert_close(c.b_pair_k, 3979.1852, 0, 1e-4); /* refdata 1: B25/85, derived */
    bg_curve_release(&c);
}

static void uncertainty_against_numpy(void **state)
{
    (void)state;
    bg_curve_src s = sh3_src(1);
    bg_curve c = BG_CURVE_INIT;
    /* u(T) = T^2 sqrt(g^T cov g), g = (1, L, L^3), L = ln R(T), R(T) from the published
    ** closed-form inverse: numpy 1.24 (Debian), computed for this test. */
    static const double u_k[] = { 0.0057161742004342205, 0.006296001734679035,
                                  0.007067906993115659, 0.008357944297757295 };
    /* U = k u, k from Student's t for the fit's 6 degrees of freedom at 95.45 %:
    ** scipy.stats.t.ppf(0.977250, 6) = 2.516528344704834 (scipy 1.10.1, run 2026-12-02) */
    s.dof = 6;
    assert_int_equal(bg_curve_grid(&s, 273.15, 348.15, 25.0, &c, NULL), BG_OK);
    assert_int_equal(c.n, 4);
    assert_close(c.cover.k, 2.516528344704834, 1e-8, 0);
    assert_close(c.cover.p, 0.9545, 0, 0);
    for (size_t i = 0; i < 4; i++) {
        assert_close(c.rows[i].u_k, u_k[i], 1e-9, 0);
        assert_close(c.rows[i].U_k, 2.516528344704834 * u_k[i], 1e-8, 0);
    }
    /* k = 2 on request, its probability stated: 2 t.cdf(2, 6) - 1 = 0.907573688468325 (scipy
    ** 1.10.1, run 2026-12-02) */
    s.rule.k_fixed = 2.0;
    assert_int_equal(bg_curve_grid(&s, 273.15, 348.15, 25.0, &c, NULL), BG_OK);
    assert_close(c.cover.p, 0.907573688468325, 1e-9, 0);
    for (size_t i = 0; i < 4; i++)
        assert_close(c.rows[i].U_k, 2.0 * u_k[i], 1e-9, 0);
    /* without degrees of freedom Student's t gives no k */
    s.rule.k_fixed = 0.0, s.dof = 0;
    assert_int_equal(bg_curve_grid(&s, 273.15, 348.15, 25.0, &c, NULL), BG_OK);
    assert_true(isnan(c.rows[0].U_k) && c.rows[0].u_k > 0);
    bg_curve_release(&c);
}

static void beta_uncertainty_and_inverse(void **state)
{
    (void)state;
    bg_model m;
    double coef[2] = { 10000.0, 3435.0 }, r = 5000.0;
    bg_curve c = BG_CURVE_INIT;
    assert_int_equal(bg_model_parse("beta", &m, NULL), BG_OK);
    assert_int_equal(bg_model_set_coef(&m, coef, 2, NULL), BG_OK);
    bg_curve_src s = bg_curve_src_of_model(&m);
    /* An invented covariance of (R0, beta): u(R0) = 5 ohm, u(beta) = 0.3 K, correlation
    ** 0.533. */
    s.has_cov = 1;
    s.cov[0] = 25.0, s.cov[1] = 0.8, s.cov[2] = 0.8, s.cov[3] = 0.09;
    assert_int_equal(bg_curve_at_ohms(&s, &r, 1, &c, NULL), BG_OK);
    assert_close(c.rows[0].t_k - 273.15, 44.08605046, 0, 1e-7); /* refdata 2, derived */
    bg_curve_release(&c);
    /* Gradient of 1/T in (R0, beta): (-1/(beta R0), -ln(R/R0)/beta^2); numpy 1.24, computed
    ** for this test; R from refdata 2 (28704.29039 ohm at 0 degC). */
    assert_int_equal(bg_curve_grid(&s, 273.15, 298.15, 25.0, &c, NULL), BG_OK);
    assert_close(c.rows[0].r_ohm, 28704.29039, 1e-9, 0); /* refdata 2, derived */
    assert_close(c.rows[0].u_k, 0.01204666522928359, 1e-9, 0);
    assert_close(c.rows[1].u_k, 0.012939362809315862, 1e-9, 0);
    assert_close(c.rows[1].alpha_per_k, -0.0386418, 1e-5, 0); /* refdata 2: -3.86418 %/K */
    bg_curve_release(&c);
}

static void range_and_span(void **state)
{
    (void)state;
    bg_curve_src s = sh3_src(1);
    bg_curve c = BG_CURVE_INIT;
    s.has_range = 1, s.t_min_k = 283.15, s.t_max_k = 353.15, s.dof = 8;
    s.b_pair_t1_k = 298.15, s.b_pair_t2_k = 358.15; /* 85 degC lies outside */
    assert_int_equal(bg_curve_grid(&s, 273.15, 373.15, 10.0, &c, NULL), BG_OK);
    for (size_t i = 0; i < c.n; i++) { /* 0 and 90, 100 degC lie outside 10 .. 80 degC */
        int out = i == 0 || i >= 9;
        assert_int_equal(c.rows[i].extrapolated, out);
        /* an extrapolated row has a u from the covariance but no U: not a calibrated value */
        assert_true(c.rows[i].u_k > 0);
        assert_int_equal(isnan(c.rows[i].U_k) != 0, out);
    }
    assert_int_equal(c.b_pair_extrapolated, 1);
    s.b_pair_t2_k = 348.15;
    assert_int_equal(bg_curve_grid(&s, 273.15, 373.15, 10.0, &c, NULL), BG_OK);
    assert_int_equal(c.b_pair_extrapolated, 0);
    assert_int_equal(bg_curve_span(&s, 9, &c, NULL), BG_OK); /* releases the grid first */
    assert_int_equal(c.n, 9);
    assert_close(c.rows[0].t_k, 283.15, 0, 0);
    assert_close(c.rows[8].t_k, 353.15, 0, 1e-12);
    assert_close(c.rows[4].t_k, 318.15, 0, 1e-12);
    for (size_t i = 0; i < c.n; i++) {
        assert_true(c.rows[i].ok && !c.rows[i].extrapolated);
        assert_true(c.rows[i].u_k > 0);
    }
    bg_curve_release(&c);
}

static void errors_leave_an_empty_curve(void **state)
{
    (void)state;
    bg_curve_src s = sh3_src(0);
    bg_curve c = BG_CURVE_INIT;
    bg_error err = BG_ERROR_INIT;
    double bad[2] = { 1000.0, -5.0 };
    assert_int_equal(bg_curve_grid(&s, 300.0, 290.0, 1.0, &c, &err), BG_EINVAL);
    assert_int_equal(bg_curve_grid(&s, 290.0, 300.0, 0.0, &c, &err), BG_EINVAL);
    assert_int_equal(bg_curve_grid(&s, 0.0, 1e7, 1.0, &c, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "1000000"));
    assert_int_equal(bg_curve_at_ohms(&s, bad, 2, &c, &err), BG_EINVAL);
    assert_null(c.rows);
    assert_int_equal(c.n, 0);
    assert_int_equal(bg_curve_span(&s, 9, &c, &err), BG_EINVAL); /* no range */
    s.has_range = 1, s.t_min_k = 280.0, s.t_max_k = 300.0;
    assert_int_equal(bg_curve_span(&s, 1, &c, &err), BG_EINVAL);
    assert_int_equal(bg_curve_at_ohms(&s, bad, 0, &c, &err), BG_OK); /* an empty table */
    assert_int_equal(c.n, 0);
    bg_curve_release(&c);
    bg_curve_release(NULL);
}

int main(void)
{
    gsl_set_error_handler(test_gsl_handler);
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(grid_matches_published_table),
        cmocka_unit_test(inverse_slope_beta_and_pair),
        cmocka_unit_test(uncertainty_against_numpy),
        cmocka_unit_test(beta_uncertainty_and_inverse),
        cmocka_unit_test(range_and_span),
        cmocka_unit_test(errors_leave_an_empty_curve),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
