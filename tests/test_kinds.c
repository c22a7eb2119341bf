/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The sensor kinds beside the NTC ones (PTC, platinum, junction, IC sensor, Chebyshev): each
** evaluated both ways round with its derivatives against central finite differences (derived),
** the IEC 60751 tolerance classes at their limits, and the readings file's new columns.  The
** fits are checked against numpy/scipy and mpmath in tests/xcheck_kinds.py. */
#include "testutil.h"

/* Every kind, invented coefficients, parameters and a temperature span it is monotonic over. */
static const struct kcase {
    const char *name;
    size_t n;
    double coef[BG_MODEL_MAXPAR];
    const char *param;
    double pvalue;
    const char *param2;
    double pvalue2;
    double t_lo, t_hi;
} KC[] = {
    { "ptc", 3, { 1000.0, 7.8e-3, 1.9e-5 }, NULL, 0, NULL, 0, 220.0, 430.0 },
    { "ptc-lin", 2, { 2000.0, 7.6e-3 }, NULL, 0, NULL, 0, 220.0, 430.0 },
    { "cvd", 4, { 100.0, 3.9083e-3, -5.775e-7, -4.183e-12 }, NULL, 0, NULL, 0, 75.0, 1100.0 },
    { "cvd2", 3, { 1000.0, 3.9083e-3, -5.775e-7 }, NULL, 0, NULL, 0, 273.15, 1100.0 },
    { "vbe", 3, { 1.2063, 0.6021, 3.6 }, NULL, 0, NULL, 0, 200.0, 420.0 },
    { "dvbe", 2, { 0.998, 3e-4 }, "p", 8.0, NULL, 0, 100.0, 420.0 },
    { "ic", 3, { 0.4, -3e-3, 1e-6 }, "lsb_k", 0.0625, NULL, 0, 220.0, 420.0 },
    { "ic:1", 2, { 0.4, -3e-3 }, NULL, 0, NULL, 0, 220.0, 420.0 },
    { "ic-code", 3, { 0.4, -3e-3, 1e-6 }, "lsb_k", 0.0625, NULL, 0, 220.0, 420.0 },
    { "cheb:3", 4, { 200.0, -120.0, 6.0, -0.5 }, "x_lo", 0.3, "x_hi", 1.1, 85.0, 315.0 },
};
#define NK (sizeof KC / sizeof KC[0])

static bg_model kc_model(const struct kcase *k)
{
    bg_model m;
    assert_int_equal(bg_model_parse(k->name, &m, NULL), BG_OK);
    if (k->param)
        assert_int_equal(bg_model_set_param(&m, k->param, k->pvalue, NULL), BG_OK);
    if (k->param2)
        assert_int_equal(bg_model_set_param(&m, k->param2, k->pvalue2, NULL), BG_OK);
    assert_int_equal(bg_model_set_coef(&m, k->coef, k->n, NULL), BG_OK);
    assert_int_equal(bg_model_check_params(&m, NULL), BG_OK);
    return m;
}

static void kinds_both_ways(void **state)
{
    (void)state;
    for (size_t k = 0; k < NK; k++) {
        bg_model m = kc_model(&KC[k]);
        char name[16];
        assert_string_equal(bg_model_name(&m, name, sizeof name), KC[k].name);
        assert_false(bg_model_flags(&m) & BG_MODEL_INV_POLY);
        for (int i = 0; i <= 40; i++) {
            double t = KC[k].t_lo + (KC[k].t_hi - KC[k].t_lo) * i / 40.0, x, t2, x2;
            assert_int_equal(bg_model_x_from_t(&m, t, &x, NULL), BG_OK);
            assert_int_equal(bg_model_t_from_x(&m, x, &t2, NULL), BG_OK);
            assert_close(t2, t, 1e-11, 1e-9);
            assert_int_equal(bg_model_x_from_t(&m, t2, &x2, NULL), BG_OK);
            assert_close(x2, x, 1e-10, 1e-12);
        }
    }
}

/* dT/dx and dT/dc against central differences of T(x) (derived); the direction declared. */
static void kinds_derivatives(void **state)
{
    (void)state;
    for (size_t k = 0; k < NK; k++) {
        bg_model m = kc_model(&KC[k]);
        size_t np = bg_model_npar(&m);
        for (int i = 1; i <= 5; i++) {
            double t = KC[k].t_lo + (KC[k].t_hi - KC[k].t_lo) * i / 6.0, x, d, tp, tm;
            double g[BG_MODEL_MAXPAR], h, x1;
            assert_int_equal(bg_model_x_from_t(&m, t, &x, NULL), BG_OK);
            assert_int_equal(bg_model_x_from_t(&m, t + 1.0, &x1, NULL), BG_OK);
            assert_int_equal((x1 > x) ? 1 : -1, bg_model_direction(&m));
            h = 1e-6 * fabs(x1 - x);
            assert_int_equal(bg_model_dtdx(&m, x, &d, NULL), BG_OK);
            assert_int_equal(bg_model_t_from_x(&m, x + h, &tp, NULL), BG_OK);
            assert_int_equal(bg_model_t_from_x(&m, x - h, &tm, NULL), BG_OK);
            assert_close(d, (tp - tm) / (2.0 * h), 1e-5, 0);
            assert_int_equal(bg_model_grad_t(&m, x, g, NULL), BG_OK);
            for (size_t j = 0; j < np; j++) {
                bg_model mp = m, mm = m;
                double c = m.coef[j], hc = 1e-6 * fabs(c);
                mp.coef[j] = c + hc, mm.coef[j] = c - hc;
                assert_int_equal(bg_model_t_from_x(&mp, x, &tp, NULL), BG_OK);
                assert_int_equal(bg_model_t_from_x(&mm, x, &tm, NULL), BG_OK);
                assert_close_at(g[j], (tp - tm) / (2.0 * hc), 1e-5, 1e-13 * t / hc,
                                KC[k].name, __FILE__, __LINE__);
            }
        }
    }
}

/* IEC 60751 tolerance classes: AA +-(0.1 + 0.0017|t|), A +-(0.15 + 0.002|t|),
** B +-(0.3 + 0.005|t|), C +-(0.6 + 0.01|t|) degC (refdata section 8, from memory; the
** standard could not be read here to confirm them). */
static void iec60751_classes(void **state)
{
    (void)state;
    assert_close(bg_iec60751_tolerance_k("AA", 0.0), 0.1, 1e-15, 0);
    assert_close(bg_iec60751_tolerance_k("AA", 100.0), 0.27, 1e-15, 0);
    assert_close(bg_iec60751_tolerance_k("A", 100.0), 0.35, 1e-15, 0);
    assert_close(bg_iec60751_tolerance_k("A", -100.0), 0.35, 1e-15, 0);
    assert_close(bg_iec60751_tolerance_k("B", 100.0), 0.8, 1e-15, 0);
    assert_close(bg_iec60751_tolerance_k("C", 600.0), 6.6, 1e-15, 0);
    assert_true(isnan(bg_iec60751_tolerance_k("D", 0.0)));
    /* a Pt100 whose R0 is 0.05 ohm high deviates by 0.05 / (100 A) = 0.128 K at 0 degC
    ** (IEC 60751 A = 3.9083e-3): beyond AA (0.1 K), within A (0.15 K) */
    bg_model m;
    double c[4] = { 100.05, 3.9083e-3, -5.775e-7, -4.183e-12 }, dev;
    bg_derived d[4];
    assert_int_equal(bg_model_parse("cvd", &m, NULL), BG_OK);
    assert_int_equal(bg_model_set_coef(&m, c, 4, NULL), BG_OK);
    assert_int_equal(bg_iec60751_deviation(&m, 100.0, 273.15, &dev, NULL), BG_OK);
    assert_close(dev, 0.05 / (100.0 * 3.9083e-3), 1e-3, 0);
    assert_int_equal(bg_model_derived(&m, NULL, 263.15, 283.15, d, 4), 2);
    assert_string_equal(d[1].text, "A");
    /* the limits are from memory: every verdict says they must be checked against the
    ** standard before a certificate relies on them */
    assert_non_null(strstr(d[1].note, "Limits from memory: check them against IEC 60751 "
                                      "before a certificate relies on them"));
    c[0] = 100.02; /* 0.051 K: AA */
    assert_int_equal(bg_model_set_coef(&m, c, 4, NULL), BG_OK);
    assert_int_equal(bg_model_derived(&m, NULL, 263.15, 283.15, d, 4), 2);
    assert_string_equal(d[1].text, "AA");
    c[0] = 100.5; /* 1.28 K: none at 0 degC (C allows 0.6 K) */
    assert_int_equal(bg_model_set_coef(&m, c, 4, NULL), BG_OK);
    assert_int_equal(bg_model_derived(&m, NULL, 263.15, 283.15, d, 4), 2);
    assert_string_equal(d[1].text, "none");
}

/* The physical constants (2019 SI, exact): (k/q) ln 8 at 300 K. */
static void dvbe_ideal_slope(void **state)
{
    (void)state;
    bg_model m;
    double c[2] = { 1.0, 0.0 }, x;
    assert_int_equal(bg_model_parse("dvbe", &m, NULL), BG_OK);
    assert_int_not_equal(bg_model_check_params(&m, NULL), BG_OK); /* p not given */
    assert_int_equal(bg_model_set_param(&m, "p", 8.0, NULL), BG_OK);
    assert_int_equal(bg_model_set_coef(&m, c, 2, NULL), BG_OK);
    assert_int_equal(bg_model_x_from_t(&m, 300.0, &x, NULL), BG_OK);
    /* k = 1.380649e-23 J/K, e = 1.602176634e-19 C (exact): 86.17333262 uV/K (refdata 9) */
    assert_close(x, 300.0 * 1.380649e-23 / 1.602176634e-19 * log(8.0), 1e-15, 0);
    assert_close(x / (300.0 * log(8.0)), 86.17333262e-6, 1e-9, 0);
    bg_error err = BG_ERROR_INIT;
    assert_int_equal(bg_model_set_param(&m, "q", 1.0, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "no parameter 'q'"));
}

/* The readings file's columns for other quantities, and their refusals. */
static void csv_quantities(void **state)
{
    (void)state;
    bg_readings rs = BG_READINGS_INIT;
    bg_error err = BG_ERROR_INIT;
    const char *v = "temp_k,volts,u_volts,excite_a\n300,0.59,1e-6,1e-5\n310,0.57,1e-6,1e-5\n";
    assert_int_equal(bg_csv_parse(v, strlen(v), "j.csv", &rs, &err), BG_OK);
    assert_int_equal(rs.quantity, BG_QTY_VOLTAGE);
    assert_int_equal(rs.n, 2);
    assert_close(rs.v[1].pt.r_ohm, 0.57, 0, 0);
    assert_close(rs.v[1].pt.u_r_ohm, 1e-6, 0, 0);
    assert_close(rs.v[0].excite_a, 1e-5, 0, 0);
    bg_readings_release(&rs);
    const char *r = "temp_c,reported_c\n25,-0.5\n";
    assert_int_equal(bg_csv_parse(r, strlen(r), "ic.csv", &rs, &err), BG_OK);
    assert_int_equal(rs.quantity, BG_QTY_REPORTED_T);
    assert_close(rs.v[0].pt.r_ohm, -0.5, 0, 0);
    bg_readings_release(&rs);
    const char *bad[][2] = {
        { "temp_c,ohms,volts\n25,1,1\n", "j.csv:1: more than one reading column" },
        { "temp_c,ohms,u_volts\n25,1,1\n", "j.csv:1: column 'u_volts' goes with 'volts'" },
        { "temp_c,code,excite_a\n25,1,1\n", "j.csv:1: column 'excite_a'" },
        { "temp_c,volts,excite_a\n25,0.6,0\n", "j.csv:2: field 'excite_a': must be greater" },
        { "temp_c,volts\n25,nan\n", "j.csv:2: field 'volts'" },
    };
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        assert_int_equal(bg_csv_parse(bad[i][0], strlen(bad[i][0]), "j.csv", &rs, &err),
                         BG_EINVAL);
        assert_non_null(strstr(err.msg, bad[i][1]));
    }
}

/* The guard rails follow the kind: a PTC's resistance must rise, a junction's voltage fall. */
static void fit_direction_rails(void **state)
{
    (void)state;
    bg_point pts[5];
    bg_fit f = BG_FIT_INIT;
    bg_error err = BG_ERROR_INIT;
    bg_fit_opts o;
    bg_model m;
    for (int i = 0; i < 5; i++) {
        memset(&pts[i], 0, sizeof pts[i]);
        pts[i].t_k = 280.0 + 10.0 * i, pts[i].r_ohm = 1000.0 - 8.0 * i, pts[i].line = (size_t)i + 2;
    }
    assert_int_equal(bg_model_parse("ptc", &m, NULL), BG_OK);
    o = bg_fit_default_opts(&m);
    o.source = "p.csv";
    assert_int_equal(bg_fit_points(pts, 5, &o, &f, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "p.csv:3: the ohms reading falls or stays"));
    for (int i = 0; i < 5; i++)
        pts[i].r_ohm = 0.6 + 0.002 * i;
    assert_int_equal(bg_model_parse("vbe", &m, NULL), BG_OK);
    o = bg_fit_default_opts(&m);
    o.source = "v.csv";
    assert_int_equal(bg_fit_points(pts, 5, &o, &f, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "v.csv:3: the volts reading rises or stays"));
    bg_fit_release(&f);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(kinds_both_ways),   cmocka_unit_test(kinds_derivatives),
        cmocka_unit_test(iec60751_classes),  cmocka_unit_test(dvbe_ideal_slope),
        cmocka_unit_test(csv_quantities),    cmocka_unit_test(fit_direction_rails),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
