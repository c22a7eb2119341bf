/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Model evaluation checked against published and derived values (../shared/refdata, copied
** in REFERENCES comments): the encyclopedia Steinhart-Hart example and the beta tables; and
** the table of model types: each kind once, both ways round, derivatives against central
** finite differences. */
#include "testutil.h"

/* Wikipedia "Thermistor", Steinhart-Hart section (published): A, B, C for a ~3 kOhm part. */
static const double SH_A = 1.40e-3, SH_B = 2.37e-4, SH_C = 9.90e-8;
/* R at t (derived in 40-digit arithmetic from those coefficients; refdata section 1). */
static const double SH_T[] = { -20, 0, 10, 20, 25, 30, 40, 50, 60, 70, 80, 90, 100 };
static const double SH_R[] = { 29837.6817,  10030.2176,  6110.382219, 3833.327593, 3067.500051,
                               2470.600113, 1632.375100, 1103.547411, 762.005731,  536.581242,
                               384.768785,  280.598155,  207.861671 };

static bg_model sh3_ref(void)
{
    bg_model m;
    double c[3] = { SH_A, SH_B, SH_C };
    assert_int_equal(bg_model_parse("sh3", &m, NULL), BG_OK);
    assert_int_equal(bg_model_set_coef(&m, c, 3, NULL), BG_OK);
    return m;
}

static bg_model beta_ref(double b)
{
    bg_model m;
    double c[2] = { 10000.0, b };
    assert_int_equal(bg_model_parse("beta", &m, NULL), BG_OK);
    assert_int_equal(bg_model_set_coef(&m, c, 2, NULL), BG_OK);
    return m;
}

static void sh3_table_both_ways(void **state)
{
    (void)state;
    bg_model m = sh3_ref();
    for (size_t i = 0; i < sizeof SH_T / sizeof SH_T[0]; i++) {
        double r, t;
        assert_int_equal(bg_model_r_from_t(&m, SH_T[i] + 273.15, &r, NULL), BG_OK);
        assert_close(r, SH_R[i], 1e-6, 0); /* refdata 1, derived */
        assert_int_equal(bg_model_t_from_r(&m, SH_R[i], &t, NULL), BG_OK);
        assert_close(t, SH_T[i] + 273.15, 1e-6, 0);
    }
}

static void sh3_point_values(void **state)
{
    (void)state;
    bg_model m = sh3_ref();
    double t, d, beta, b;
    assert_int_equal(bg_model_t_from_r(&m, 3000.0, &t, NULL), BG_OK);
    assert_close(t, 298.6573936, 1e-9, 0);           /* refdata 1: T(3000 ohm), derived */
    assert_int_equal(bg_model_dtdr(&m, 3067.500051, &d, NULL), BG_OK);
    assert_close(d, -0.00742283, 1e-6, 0);           /* refdata 1: dT/dR at 25 degC */
    assert_int_equal(bg_model_beta_local(&m, 298.15, &beta, NULL), BG_OK);
    assert_close(beta, 3904.05, 0, 0.005);           /* refdata 1: local beta at 25 degC */
    /* refdata 1: two-point B values, derived */
    assert_int_equal(bg_model_b_pair(&m, 298.15, 323.15, &b, NULL), BG_OK);
    assert_close(b, 3939.9558, 0, 1e-4);
    assert_int_equal(bg_model_b_pair(&m, 298.15, 358.15, &b, NULL), BG_OK);
    assert_close(b, 3979.1852, 0, 1e-4);
    assert_int_equal(bg_model_b_pair(&m, 298.15, 373.15, &b, NULL), BG_OK);
    assert_close(b, 3992.9233, 0, 1e-4);
    assert_int_equal(bg_model_b_pair(&m, 273.15, 323.15, &b, NULL), BG_OK);
    assert_close(b, 3896.2960, 0, 1e-4);
    /* R at 25 degC to the last bits: 3067.5000510747713163 ohm, derived by Newton's method
    ** on A + B L + C L^3 = 1/T in 50-digit decimal arithmetic (Python's decimal module) from
    ** the same double coefficients; and at -40 and 125 degC, where C L^3 matters most.  R =
    ** exp(L), so its relative error is L's absolute error: 2 ulps of L near 11.5 is 4e-15 */
    double r;
    assert_int_equal(bg_model_r_from_t(&m, 298.15, &r, NULL), BG_OK);
    assert_close(r, 3067.5000510747713163, 1e-15, 0);
    assert_int_equal(bg_model_r_from_t(&m, 233.15, &r, NULL), BG_OK);
    assert_close(r, 103475.53272821765881, 4e-15, 0);
    assert_int_equal(bg_model_r_from_t(&m, 398.15, &r, NULL), BG_OK);
    assert_close(r, 104.41854637738117325, 4e-15, 0);
}

static void sh4_kilohm_unit_trap(void **state)
{
    (void)state;
    /* refdata 1 (derived): with R in kOhm the same curve is sh4 with these coefficients. */
    double c[4] = { 3.06977017638e-3, 2.51171973649e-4, 2.05160331786e-6, 9.90e-8 };
    bg_model m;
    assert_int_equal(bg_model_parse("sh4", &m, NULL), BG_OK);
    assert_int_equal(bg_model_set_coef(&m, c, 4, NULL), BG_OK);
    for (size_t i = 0; i < sizeof SH_T / sizeof SH_T[0]; i++) {
        double t, r;
        assert_int_equal(bg_model_t_from_r(&m, SH_R[i] / 1000.0, &t, NULL), BG_OK);
        assert_close(t, SH_T[i] + 273.15, 1e-6, 0);
        /* sh4 has no closed-form inverse: this is the safeguarded Newton path */
        assert_int_equal(bg_model_r_from_t(&m, SH_T[i] + 273.15, &r, NULL), BG_OK);
        assert_close(r * 1000.0, SH_R[i], 1e-6, 0);
    }
}

static void beta_tables_both_ways(void **state)
{
    (void)state;
    /* refdata 2: R = R25 exp(B (1/T - 1/T0)), derived; B values common practice. */
    static const double t[] = { -40, -20, 0, 10, 25, 37, 50, 85, 100 };
    static const double r3435[] = { 248276.5246, 77522.54979, 28704.29039, 18410.43765, 10000,
                                    6403.372417, 4101.189901, 1451.347087, 987.0367685 };
    static const double r3950[] = { 401859.7246, 105384.6902, 33620.60372, 20174.57702, 10000,
                                    5989.411673, 3588.182582, 1086.670769, 697.519773 };
    bg_model m1 = beta_ref(3435.0), m2 = beta_ref(3950.0);
    for (size_t i = 0; i < sizeof t / sizeof t[0]; i++) {
        double r, tk;
        assert_int_equal(bg_model_r_from_t(&m1, t[i] + 273.15, &r, NULL), BG_OK);
        assert_close(r, r3435[i], 1e-9, 0);
        assert_int_equal(bg_model_r_from_t(&m2, t[i] + 273.15, &r, NULL), BG_OK);
        assert_close(r, r3950[i], 1e-9, 0);
        assert_int_equal(bg_model_t_from_r(&m1, r3435[i], &tk, NULL), BG_OK);
        assert_close(tk, t[i] + 273.15, 1e-9, 0);
        assert_int_equal(bg_model_t_from_r(&m2, r3950[i], &tk, NULL), BG_OK);
        assert_close(tk, t[i] + 273.15, 1e-9, 0);
    }
}

static void beta_point_values(void **state)
{
    (void)state;
    bg_model m1 = beta_ref(3435.0), m2 = beta_ref(3950.0);
    double t, a[BG_MODEL_MAXPAR], alpha, b;
    /* refdata 2: T(5000 ohm) */
    assert_int_equal(bg_model_t_from_r(&m1, 5000.0, &t, NULL), BG_OK);
    assert_close(t - 273.15, 44.08605046, 0, 1e-7);
    assert_int_equal(bg_model_t_from_r(&m2, 5000.0, &t, NULL), BG_OK);
    assert_close(t - 273.15, 41.4602348, 0, 1e-6);
    /* refdata 2: alpha at 25 degC = -B/T^2 */
    assert_int_equal(bg_model_alpha(&m1, 298.15, &alpha, NULL), BG_OK);
    assert_close(100.0 * alpha, -3.86418, 0, 1e-5);
    assert_int_equal(bg_model_alpha(&m2, 298.15, &alpha, NULL), BG_OK);
    assert_close(100.0 * alpha, -4.44352, 0, 1e-5);
    /* refdata 2: published identity a = 1/T0 - ln(R0)/B, b = 1/B */
    bg_model_inv_poly(&m1, a);
    assert_close(a[0], 6.7269463789e-4, 1e-10, 0);
    assert_close(a[1], 2.91120815138e-4, 1e-11, 0);
    bg_model_inv_poly(&m2, a);
    assert_close(a[0], 1.02228469494e-3, 1e-10, 0);
    assert_close(a[1], 2.53164556962e-4, 1e-11, 0);
    /* refdata 2: +1 % of R25 is about -0.2575 K (3435) and -0.2239 K (3950) at 25 degC.
    ** Those are first-order values, ln(1.01) T^2 / B; the exact shift differs by the
    ** second-order term (2e-4 K here), so "about" is taken as 0.5 mK. */
    assert_int_equal(bg_model_t_from_r(&m1, 10100.0, &t, NULL), BG_OK);
    assert_close(t - 298.15, -0.2575, 0, 5e-4);
    assert_int_equal(bg_model_t_from_r(&m2, 10100.0, &t, NULL), BG_OK);
    assert_close(t - 298.15, -0.2239, 0, 5e-4);
    /* the B value of a pure beta curve is beta for any pair (definition) */
    assert_int_equal(bg_model_b_pair(&m2, 273.15, 373.15, &b, NULL), BG_OK);
    assert_close(b, 3950.0, 1e-12, 0);
}

static void poly_newton_round_trip(void **state)
{
    (void)state;
    /* Invented poly:5 coefficients close to a 10 kOhm part; round trip T -> R -> T to 1e-12. */
    double c[6] = { 1.1384e-3, 2.3245e-4, 1.7012e-7, 9.4871e-8, -1.3e-10, 2.1e-12 };
    bg_model m;
    assert_int_equal(bg_model_parse("poly:5", &m, NULL), BG_OK);
    assert_int_equal(bg_model_set_coef(&m, c, 6, NULL), BG_OK);
    for (double tc = -55.0; tc <= 150.0; tc += 7.3) {
        double r, t, tk = tc + 273.15, a[6];
        assert_int_equal(bg_model_r_from_t(&m, tk, &r, NULL), BG_OK);
        assert_int_equal(bg_model_t_from_r(&m, r, &t, NULL), BG_OK);
        assert_close(t, tk, 1e-12, 0);
        /* independent: 1/T evaluated term by term at the returned R */
        bg_model_inv_poly(&m, a);
        double L = log(r), y = 0.0;
        for (int k = 5; k >= 0; k--)
            y = y * L + a[k];
        assert_close(1.0 / y, tk, 1e-12, 0);
    }
}

static void model_errors(void **state)
{
    (void)state;
    bg_model m;
    bg_error err = BG_ERROR_INIT;
    double c[3] = { 1.4e-3, 2.37e-4, NAN }, r;
    assert_int_equal(bg_model_parse("sh5", &m, &err), BG_EINVAL);
    assert_string_equal(err.msg, "unknown model 'sh5' (known: sh3, sh4, beta, poly:1 .. poly:5, "
                        "ptc, ptc-lin, cvd, cvd2, vbe, dvbe, ic, ic:0, ic:1, ic-code, "
                        "cheb:1 .. cheb:5)");
    assert_int_equal(bg_model_parse("poly:6", &m, &err), BG_EINVAL);
    assert_int_equal(bg_model_parse("sh3", &m, &err), BG_OK);
    assert_int_equal(bg_model_set_coef(&m, c, 2, &err), BG_EINVAL);
    assert_string_equal(err.msg, "model 'sh3' takes 3 coefficients, got 2");
    assert_int_equal(bg_model_set_coef(&m, c, 3, &err), BG_EINVAL);
    assert_string_equal(err.msg, "coefficient 'C' is not a finite number");
    m = sh3_ref();
    assert_int_equal(bg_model_t_from_r(&m, -5.0, &r, &err), BG_EINVAL);
    assert_int_equal(bg_model_r_from_t(&m, 0.0, &r, &err), BG_EINVAL);
    m = beta_ref(3950.0);
    /* far below any physical resistance: refused, not a silent number */
    assert_int_equal(bg_model_r_from_t(&m, 1e-3, &r, &err), BG_EINVAL);
    double p1, p2;
    assert_int_equal(bg_model_parse_pair("25/85", &p1, &p2, NULL), BG_OK);
    assert_close(p1, 298.15, 1e-15, 0);
    assert_close(p2, 358.15, 1e-15, 0);
    assert_int_equal(bg_model_parse_pair("25", &p1, &p2, &err), BG_EINVAL);
    assert_int_equal(bg_model_parse_pair("25/25", &p1, &p2, &err), BG_EINVAL);
}

/* ---- The table of model types ---------------------------------------------------------- */

/* Every name a model can have, and invented coefficients with many significant digits for it
** (each gives an NTC curve, 1/T rising with L, over 300 ohm .. 300 kOhm, 235 .. 410 K). */
static const struct kind_case {
    const char *name;
    size_t n;
    double coef[BG_MODEL_MAXPAR];
} KINDS[] = {
    { "sh3", 3, { 1.12874031928e-3, 2.34105277631e-4, 8.77561839452e-8 } },
    { "sh4", 4, { 1.09823647151e-3, 2.41382907165e-4, -9.26370418513e-7, 1.14590283767e-7 } },
    { "beta", 2, { 10473.9186207, 3977.31416529 } },
    { "poly:1", 2, { 1.13295062731e-3, 2.33748105269e-4 } },
    { "poly:2", 3, { 1.13295062731e-3, 2.33748105269e-4, -6.42913870155e-7 } },
    { "poly:3", 4, { 1.13295062731e-3, 2.33748105269e-4, -6.42913870155e-7, 1.27380461592e-7 } },
    { "poly:4", 5, { 1.13295062731e-3, 2.33748105269e-4, -6.42913870155e-7, 1.27380461592e-7,
                     -2.16047318854e-9 } },
    { "poly:5", 6, { 1.13295062731e-3, 2.33748105269e-4, -6.42913870155e-7, 1.27380461592e-7,
                     -2.16047318854e-9, 4.87152930646e-11 } },
};
#define NKINDS (sizeof KINDS / sizeof KINDS[0])

static bg_model kind_model(const struct kind_case *k)
{
    bg_model m;
    assert_int_equal(bg_model_parse(k->name, &m, NULL), BG_OK);
    assert_int_equal(bg_model_set_coef(&m, k->coef, k->n, NULL), BG_OK);
    return m;
}

static void model_table_each_kind_once(void **state)
{
    (void)state;
    size_t nt = bg_model_type_count(), hits[16] = { 0 };
    assert_true(nt >= 4 && nt <= 16);
    assert_null(bg_model_type_at(nt));
    for (size_t i = 0; i < nt; i++)
        for (size_t j = i + 1; j < nt; j++) {
            assert_true(bg_model_type_at(i) != bg_model_type_at(j));
            assert_string_not_equal(bg_model_type_name(bg_model_type_at(i)),
                                    bg_model_type_name(bg_model_type_at(j)));
        }
    /* every name parses to exactly one row, prints back as itself, and every row is reached */
    for (size_t k = 0; k < NKINDS; k++) {
        bg_model m = kind_model(&KINDS[k]);
        char name[16];
        size_t found = 0;
        assert_string_equal(bg_model_name(&m, name, sizeof name), KINDS[k].name);
        assert_int_equal(bg_model_npar(&m), KINDS[k].n);
        for (size_t i = 0; i < nt; i++)
            if (bg_model_type_at(i) == bg_model_type_of(&m))
                found++, hits[i]++;
        assert_int_equal(found, 1);
        assert_true(strlen(bg_model_formula(&m)) > 4);
    }
    /* every NTC row is reached here; the other kinds are tested in tests/xcheck_kinds.py */
    for (size_t i = 0; i < nt; i++) {
        bg_model m;
        char nm[32];
        snprintf(nm, sizeof nm, "%s:1", bg_model_type_name(bg_model_type_at(i)));
        if ((bg_model_parse(bg_model_type_name(bg_model_type_at(i)), &m, NULL) == BG_OK ||
             bg_model_parse(nm, &m, NULL) == BG_OK) &&
            !(bg_model_flags(&m) & BG_MODEL_INV_POLY))
            continue;
        assert_true(hits[i] > 0);
    }
    /* a zeroed model is sh3, as it was when the kind was an enumeration starting there */
    bg_model z;
    memset(&z, 0, sizeof z);
    assert_string_equal(bg_model_type_name(bg_model_type_of(&z)), "sh3");
}

/* BG_MODEL_BASIS_COEF says that bg_model_from_basis copies (the batched fit then writes the
** basis' coefficients and covariance as the model's without the call): checked on every kind
** of the table, with invented basis values; beta, whose coefficients are R0 and B, has it not
** (derived: its R0 = exp((1/T0 - a0) / a1) differs from a0). */
static void model_basis_coef_flag(void **state)
{
    (void)state;
    const double c[BG_MODEL_MAXPAR] = { 1.1e-3, 2.3e-4, -7.0e-7, 1.2e-7, -2.1e-9, 4.9e-11 };
    double cv[BG_MODEL_MAXPAR * BG_MODEL_MAXPAR], cov[BG_MODEL_MAXPAR * BG_MODEL_MAXPAR];
    for (size_t i = 0; i < BG_MODEL_MAXPAR * BG_MODEL_MAXPAR; i++)
        cv[i] = 1e-12 * (double)(i + 1);
    for (size_t k = 0; k < NKINDS; k++) {
        bg_model m = kind_model(&KINDS[k]);
        size_t np = bg_model_npar(&m);
        int copies = 1;
        for (size_t i = 0; i < np * np; i++)
            cov[i] = NAN;
        bg_model_from_basis(&m, c, cv, cov);
        for (size_t j = 0; j < np; j++)
            copies &= m.coef[j] == c[j];
        for (size_t i = 0; i < np * np; i++)
            copies &= cov[i] == cv[i];
        assert_int_equal((bg_model_flags(&m) & BG_MODEL_BASIS_COEF) != 0, copies);
        assert_int_equal(copies, strcmp(KINDS[k].name, "beta") != 0);
    }
}

static void model_types_round_trip(void **state)
{
    (void)state;
    for (size_t k = 0; k < NKINDS; k++) {
        bg_model m = kind_model(&KINDS[k]);
        /* R -> T -> R on 61 resistances, log-spaced; then T -> R -> T */
        for (int i = 0; i <= 60; i++) {
            double r = 300.0 * pow(1000.0, i / 60.0), t, r2, t2;
            assert_int_equal(bg_model_t_from_r(&m, r, &t, NULL), BG_OK);
            assert_true(t > 230.0 && t < 415.0);
            assert_int_equal(bg_model_r_from_t(&m, t, &r2, NULL), BG_OK);
            assert_close(r2, r, 1e-12, 0);
            assert_int_equal(bg_model_t_from_r(&m, r2, &t2, NULL), BG_OK);
            assert_close(t2, t, 1e-14, 0);
        }
    }
}

/* The derivatives against central finite differences of the evaluations (derived). */
static void model_types_derivatives(void **state)
{
    (void)state;
    for (size_t k = 0; k < NKINDS; k++) {
        bg_model m = kind_model(&KINDS[k]);
        size_t np = bg_model_npar(&m);
        for (int i = 0; i <= 6; i++) {
            double r = 500.0 * pow(400.0, i / 6.0), t, rp, rm, tp, tm, d, g[BG_MODEL_MAXPAR];
            double h = 1e-5 * r, beta, alpha, lp, lm, ht = 1e-3;
            assert_int_equal(bg_model_t_from_r(&m, r, &t, NULL), BG_OK);
            /* dT/dR */
            assert_int_equal(bg_model_dtdr(&m, r, &d, NULL), BG_OK);
            assert_int_equal(bg_model_t_from_r(&m, r + h, &tp, NULL), BG_OK);
            assert_int_equal(bg_model_t_from_r(&m, r - h, &tm, NULL), BG_OK);
            assert_close(d, (tp - tm) / (2.0 * h), 1e-7, 0);
            /* local beta = dL/d(1/T) and alpha = dL/dT, from R(T +- 1 mK) */
            assert_int_equal(bg_model_r_from_t(&m, t + ht, &rp, NULL), BG_OK);
            assert_int_equal(bg_model_r_from_t(&m, t - ht, &rm, NULL), BG_OK);
            lp = log(rp), lm = log(rm);
            assert_int_equal(bg_model_beta_local(&m, t, &beta, NULL), BG_OK);
            assert_close(beta, (lp - lm) / (1.0 / (t + ht) - 1.0 / (t - ht)), 1e-7, 0);
            assert_int_equal(bg_model_alpha(&m, t, &alpha, NULL), BG_OK);
            assert_close(alpha, (lp - lm) / (2.0 * ht), 1e-7, 0);
            /* gradient of 1/T in the coefficients, a relative step of 1e-6 each */
            assert_int_equal(bg_model_grad_inv_t(&m, r, g, NULL), BG_OK);
            for (size_t j = 0; j < np; j++) {
                bg_model mp = m, mm = m;
                double c = m.coef[j], hc = 1e-6 * fabs(c);
                mp.coef[j] = c + hc, mm.coef[j] = c - hc;
                assert_int_equal(bg_model_t_from_r(&mp, r, &tp, NULL), BG_OK);
                assert_int_equal(bg_model_t_from_r(&mm, r, &tm, NULL), BG_OK);
                /* rounding of 1/T (1e-16 relative) over the step bounds the difference */
                assert_close(g[j], (1.0 / tp - 1.0 / tm) / (2.0 * hc), 1e-6,
                             1e-8 / (t * fabs(c)));
            }
        }
    }
}

static void platinum_reference_iec60751(void **state)
{
    (void)state;
    /* IEC 60751 constants and table values (refdata section 3: published; the values to more
    ** digits are exact from the equation) */
    const double A = 3.9083e-3, B = -5.775e-7, C = -4.183e-12, R0 = 100.0;
    static const double t[] = { -200, -100, -40, 0, 50, 100, 200, 400, 850 };
    static const double r[] = { 18.52008, 60.25584, 84.27065203, 100.0, 119.397125, 138.5055,
                                175.856, 247.092, 390.481125 };
    for (size_t i = 0; i < sizeof t / sizeof t[0]; i++) {
        double tk;
        assert_close(bg_cvd_r_from_t(R0, A, B, C, t[i] + 273.15), r[i], 1e-7, 0);
        assert_int_equal(bg_cvd_t_from_r(R0, A, B, C, r[i], &tk, NULL), BG_OK);
        assert_close(tk - 273.15, t[i], 0, 2e-5);
    }
    /* alpha = (R100 - R0) / (100 R0) = 0.00385055 (refdata 3) */
    assert_close((bg_cvd_r_from_t(R0, A, B, C, 373.15) - R0) / (100.0 * R0), 0.00385055, 0,
                 5e-9);
    double tk;
    bg_error err = BG_ERROR_INIT;
    assert_int_equal(bg_cvd_t_from_r(R0, A, B, C, 5.0, &tk, &err), BG_EINVAL);
    assert_int_equal(bg_cvd_t_from_r(R0, A, B, C, -1.0, &tk, &err), BG_EINVAL);
}

/* Coefficients finite one by one can overflow together: every evaluation then refuses
** (BG_EINVAL, the quantity named, the output untouched) rather than give a number that is not
** finite; bg_model_check_finite names the coefficient or covariance entry. */
static void model_non_finite(void **state)
{
    (void)state;
    bg_error err = BG_ERROR_INIT;
    bg_model m;
    double v = -7.0, c[3] = { 1e300, 1e300, 1e300 }, cov[4] = { 1.0, 0.0, 0.0, 1.0 };
    assert_int_equal(bg_model_parse("sh3", &m, NULL), BG_OK);
    assert_int_equal(bg_model_set_coef(&m, c, 3, &err), BG_OK);
    /* 1/T = 1e300 (1 + L + L^3) at 10 kohm: T about 1.3e-303 K, finite; alpha = -beta/T^2
    ** overflows (derived: 1/T^2 > 1e605) */
    assert_int_equal(bg_model_alpha(&m, 1.2633809096937e-303, &v, &err), BG_EINVAL);
    assert_true(v == -7.0);
    assert_non_null(strstr(err.msg, "alpha at "));
    assert_non_null(strstr(err.msg, "is not a finite number"));
    /* 1/T = 1e300 (1 + L + L^3) overflows at 1e300 ohm (L = 690.8, L^3 = 3.3e8, derived) */
    assert_int_equal(bg_model_t_from_r(&m, 1e300, &v, &err), BG_EINVAL);
    assert_true(v == -7.0);

    /* beta: R0 = +Inf is refused by name, and so is a covariance entry */
    assert_int_equal(bg_model_parse("beta", &m, NULL), BG_OK);
    m.coef[0] = INFINITY, m.coef[1] = 3950.0;
    assert_int_equal(bg_model_check_finite(&m, NULL, &err), BG_EINVAL);
    assert_string_equal(err.msg, "coefficient 'R0' came out as +Inf, not a finite number: the "
                                 "computation overflowed");
    m.coef[0] = 10000.0;
    assert_int_equal(bg_model_check_finite(&m, cov, &err), BG_OK);
    cov[1] = NAN;
    assert_int_equal(bg_model_check_finite(&m, cov, &err), BG_EINVAL);
    assert_string_equal(err.msg, "the covariance of 'R0' and 'beta' came out as NaN, not a "
                                 "finite number: the computation overflowed");
    /* a covariance that is not positive semi-definite gives no u(T) (it used to give NaN) */
    double neg[4] = { -1.0, 0.0, 0.0, -1.0 };
    v = -7.0;
    assert_int_equal(bg_model_u_t(&m, neg, 298.15, &v, &err), BG_EINVAL);
    assert_true(v == -7.0);
}

int main(void)
{
    gsl_set_error_handler(test_gsl_handler);
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(sh3_table_both_ways),   cmocka_unit_test(sh3_point_values),
        cmocka_unit_test(sh4_kilohm_unit_trap),  cmocka_unit_test(beta_tables_both_ways),
        cmocka_unit_test(beta_point_values),     cmocka_unit_test(poly_newton_round_trip),
        cmocka_unit_test(model_errors),          cmocka_unit_test(platinum_reference_iec60751),
        cmocka_unit_test(model_table_each_kind_once), cmocka_unit_test(model_types_round_trip),
        cmocka_unit_test(model_types_derivatives), cmocka_unit_test(model_non_finite),
        cmocka_unit_test(model_basis_coef_flag),
    };
    return cmocka_run_group_tests_name("model", tests, NULL, NULL);
}
