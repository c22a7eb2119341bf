/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Units: temperature scales (ITS-90 offset, published), resistance notation (common
** practice: SI prefixes, the "4k7" infix form of IEC 60062 resistor marking), relative values
** (%, ppm) and SI quantities; every refusal of a bare number with its exact message. */
#include "testutil.h"

static void temperatures(void **state)
{
    (void)state;
    double t;
    /* t/degC = T/K - 273.15 exactly (Preston-Thomas 1990, published; refdata 4) */
    assert_int_equal(bg_units_parse_temp("25C", BG_UNIT_NONE, &t, NULL), BG_OK);
    assert_close(t, 298.15, 1e-15, 0);
    assert_int_equal(bg_units_parse_temp(" -38.8344 \xC2\xB0" "C", BG_UNIT_NONE, &t, NULL), BG_OK);
    assert_close(t, 234.3156, 1e-15, 0); /* mercury triple point, refdata 4 */
    assert_int_equal(bg_units_parse_temp("29.7646degC", BG_UNIT_NONE, &t, NULL), BG_OK);
    assert_close(t, 302.9146, 1e-15, 0); /* gallium melting point, refdata 4 */
    assert_int_equal(bg_units_parse_temp("273.16K", BG_UNIT_NONE, &t, NULL), BG_OK);
    assert_close(t, 273.16, 1e-15, 0);
    /* degF: 32 F = 0 C, 212 F = 100 C, -40 F = -40 C (definition, common practice) */
    assert_int_equal(bg_units_parse_temp("212F", BG_UNIT_NONE, &t, NULL), BG_OK);
    assert_close(t, 373.15, 1e-14, 0);
    assert_int_equal(bg_units_parse_temp("-40 \xC2\xB0" "F", BG_UNIT_NONE, &t, NULL), BG_OK);
    assert_close(t, 233.15, 1e-14, 0);
    assert_int_equal(bg_units_parse_temp("25", BG_UNIT_C, &t, NULL), BG_OK);
    assert_close(t, 298.15, 1e-15, 0);
}

static void temperature_rejects(void **state)
{
    (void)state;
    bg_error err = BG_ERROR_INIT;
    double t;
    assert_int_equal(bg_units_parse_temp("25", BG_UNIT_NONE, &t, &err), BG_EINVAL);
    assert_string_equal(err.msg, "'25': temperature needs a unit (K, C or F), e.g. '25C'");
    assert_int_equal(bg_units_parse_temp("300k", BG_UNIT_NONE, &t, &err), BG_EINVAL);
    assert_string_equal(err.msg, "'300k': ambiguous unit 'k' (kelvin is 'K')");
    assert_int_equal(bg_units_parse_temp("-274C", BG_UNIT_NONE, &t, &err), BG_EINVAL);
    assert_string_equal(err.msg, "'-274C': at or below absolute zero");
    assert_int_equal(bg_units_parse_temp("0K", BG_UNIT_NONE, &t, &err), BG_EINVAL);
    assert_int_equal(bg_units_parse_temp("nanC", BG_UNIT_NONE, &t, &err), BG_EINVAL);
    assert_int_equal(bg_units_parse_temp("infK", BG_UNIT_NONE, &t, &err), BG_EINVAL);
    assert_int_equal(bg_units_parse_temp("25 Celsius", BG_UNIT_NONE, &t, &err), BG_EINVAL);
    assert_int_equal(bg_units_parse_temp("0x10K", BG_UNIT_NONE, &t, &err), BG_EINVAL);
    assert_int_equal(bg_units_parse_temp("", BG_UNIT_NONE, &t, &err), BG_EINVAL);
}

static void differences(void **state)
{
    (void)state;
    double d;
    bg_error err = BG_ERROR_INIT;
    assert_int_equal(bg_units_parse_tdiff("50mK", &d, NULL), BG_OK);
    assert_close(d, 0.05, 1e-15, 0);
    assert_int_equal(bg_units_parse_tdiff("0.05C", &d, NULL), BG_OK);
    assert_close(d, 0.05, 1e-15, 0);
    assert_int_equal(bg_units_parse_tdiff("0.09F", &d, NULL), BG_OK);
    assert_close(d, 0.05, 1e-14, 0); /* 1 F interval = 5/9 K (definition) */
    assert_int_equal(bg_units_parse_tdiff("0.05", &d, &err), BG_EINVAL);
    assert_int_equal(bg_units_parse_tdiff("-1K", &d, &err), BG_EINVAL);
    assert_string_equal(err.msg, "'-1K': must be greater than zero");
    /* a signed correction (a reference's Y1): zero and negatives, still with a unit */
    assert_int_equal(bg_units_parse_tcorr("-0.1712K", &d, NULL), BG_OK);
    assert_close(d, -0.1712, 1e-15, 0);
    assert_int_equal(bg_units_parse_tcorr("-171.2mK", &d, NULL), BG_OK);
    assert_close(d, -0.1712, 1e-15, 0);
    assert_int_equal(bg_units_parse_tcorr("0K", &d, NULL), BG_OK);
    assert_true(d == 0.0);
    assert_int_equal(bg_units_parse_tcorr("-0.1712", &d, &err), BG_EINVAL);
    assert_string_equal(err.msg, "'-0.1712': temperature difference needs a unit (K, mK, C or F)");
}

/* 1 % = 1e-2 and 1 ppm = 1e-6 (definitions, ISO 80000-1 annex; common practice). */
static void relative_values(void **state)
{
    (void)state;
    static const struct { const char *s; double v; } ok[] = {
        { "1%", 0.01 },   { "0.5 %", 0.005 },  { "0.1%", 0.001 },    { "250ppm", 2.5e-4 },
        { "250 ppm", 2.5e-4 }, { " 50ppm ", 5e-5 }, { "0%", 0.0 }, { "1e2ppm", 1e-4 },
    };
    for (size_t i = 0; i < sizeof ok / sizeof ok[0]; i++) {
        double d = -1.0;
        assert_int_equal(bg_units_parse_fraction(ok[i].s, &d, NULL), BG_OK);
        assert_close(d, ok[i].v, 1e-15, 0);
    }
    /* stored as the double nearest the decimal fraction, not one rounding away from it */
    double d;
    assert_int_equal(bg_units_parse_fraction("0.5%", &d, NULL), BG_OK);
    assert_true(d == 0.005);
    assert_int_equal(bg_units_parse_fraction("5000ppm", &d, NULL), BG_OK);
    assert_true(d == 0.005);
    static const struct { const char *s, *msg; } bad[] = {
        { "0.5", "'0.5': a bare number is refused: a relative value needs its unit, % or ppm "
                 "(e.g. 1%, 0.05% or 250ppm)" },
        { "1", "'1': a bare number is refused: a relative value needs its unit, % or ppm "
               "(e.g. 1%, 0.05% or 250ppm)" },
        { "1%%", "'1%%': unknown unit '%%': a relative value takes % or ppm (e.g. 1%, 0.05% or "
                 "250ppm)" },
        { "0.005x", "'0.005x': unknown unit 'x': a relative value takes % or ppm (e.g. 1%, "
                    "0.05% or 250ppm)" },
        { "5ppb", "'5ppb': unknown unit 'ppb': a relative value takes % or ppm (e.g. 1%, "
                  "0.05% or 250ppm)" },
        { "%", "'%': not a relative value with its unit, % or ppm (e.g. 1%, 0.05% or 250ppm)" },
        { "-1%", "'-1%': must not be negative" },
        { "nan%", "'nan%': not a relative value with its unit, % or ppm (e.g. 1%, 0.05% or "
                  "250ppm)" },
    };
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        bg_error err = BG_ERROR_INIT;
        double u = -7.0;
        assert_int_equal(bg_units_parse_fraction(bad[i].s, &u, &err), BG_EINVAL);
        assert_string_equal(err.msg, bad[i].msg);
        assert_true(u == -7.0); /* untouched on error */
    }
}

/* SI prefixes (SI Brochure, 9th edition, table 7; published): 1 uA = 1e-6 A, 1 mV = 1e-3 V. */
static void si_quantities(void **state)
{
    (void)state;
    static const struct { const char *s, *unit; double v; } ok[] = {
        { "3.3V", "V", 3.3 },         { "3.3 V", "V", 3.3 },          { "10uA", "A", 1e-5 },
        { "10 uA", "A", 1e-5 },       { "10\xC2\xB5" "A", "A", 1e-5 },
        { "10 \xCE\xBC" "A", "A", 1e-5 },
        { "100mV", "V", 0.1 },        { "1.5mW/K", "W/K", 1.5e-3 },   { "3950K", "K", 3950.0 },
        { "3950 K", "K", 3950.0 },    { "2.5nA", "A", 2.5e-9 },       { "1kV", "V", 1e3 },
        { "0.2 W/K", "W/K", 0.2 },
    };
    for (size_t i = 0; i < sizeof ok / sizeof ok[0]; i++) {
        double v = -1.0;
        assert_int_equal(bg_units_parse_si(ok[i].s, ok[i].unit, &v, NULL), BG_OK);
        assert_close(v, ok[i].v, 1e-15, 0);
    }
    double x;
    assert_int_equal(bg_units_parse_si("10uA", "A", &x, NULL), BG_OK);
    assert_true(x == 1e-5); /* 10 * 1e-6 would be 1.0000000000000001e-05 */
    static const struct { const char *s, *unit, *msg; } bad[] = {
        { "3.3", "V", "'3.3': a bare number is refused: give the unit, V, optionally after an "
                      "SI prefix (p, n, u, m, k, M, G)" },
        { "3950", "K", "'3950': a bare number is refused: give the unit, K, optionally after "
                       "an SI prefix (p, n, u, m, k, M, G)" },
        { "1.5", "W/K", "'1.5': a bare number is refused: give the unit, W/K, optionally after "
                        "an SI prefix (p, n, u, m, k, M, G)" },
        { "3950k", "K", "'3950k': unknown unit 'k' (expected K, optionally after an SI prefix "
                        "p, n, u, m, k, M or G)" },
        { "10uV", "A", "'10uV': unknown unit 'uV' (expected A, optionally after an SI prefix "
                       "p, n, u, m, k, M or G)" },
        { "3.3VV", "V", "'3.3VV': unknown unit 'VV' (expected V, optionally after an SI prefix "
                        "p, n, u, m, k, M or G)" },
        { "0V", "V", "'0V': must be greater than zero" },
        { "-1mA", "A", "'-1mA': must be greater than zero" },
        { "V", "V", "'V': not a value in V" },
        { "", "A", "'': not a value in A" },
        { "1e999V", "V",
          "'1e999V': the number is beyond the largest finite value (about 1.8e308)" },
    };
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        bg_error err = BG_ERROR_INIT;
        double v = -7.0;
        assert_int_equal(bg_units_parse_si(bad[i].s, bad[i].unit, &v, &err), BG_EINVAL);
        assert_string_equal(err.msg, bad[i].msg);
        assert_true(v == -7.0);
    }
}

static void resistances(void **state)
{
    (void)state;
    static const struct { const char *s; double v; } ok[] = {
        { "3000R", 3000 },     { "10k", 10000 },      { "10K", 10000 },   { "4k7", 4700 },
        { "1.5M", 1.5e6 },     { "2R2", 2.2 },        { "470R", 470 },    { "10kohm", 10000 },
        { "10 k\xCE\xA9", 10000 }, { "100 ohms", 100 }, { "1M05", 1.05e6 }, { "2.2e3ohm", 2200 },
        { "3k01", 3010 },      { "1G", 1e9 },         { "3000 ohm ", 3000 }, { "0R5", 0.5 },
    };
    for (size_t i = 0; i < sizeof ok / sizeof ok[0]; i++) {
        double r;
        assert_int_equal(bg_units_parse_ohms(ok[i].s, &r, NULL), BG_OK);
        assert_close(r, ok[i].v, 1e-15, 0);
    }
    static const char *bad[] = { "1m", "1.5k7", "10kk", "-10k", "0", "k", "", "10 x",
                                 "4k7k", "nan", "1e999" };
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        double r;
        bg_error err = BG_ERROR_INIT;
        assert_int_equal(bg_units_parse_ohms(bad[i], &r, &err), BG_EINVAL);
        assert_true(err.msg[0] == '\'');
    }
    bg_error err = BG_ERROR_INIT;
    double r;
    bg_units_parse_ohms("1m", &r, &err);
    assert_string_equal(err.msg, "'1m': ambiguous prefix 'm' (use M for megaohm)");
    /* a bare number could be ohm or kilohm: refused, with the accepted forms */
    static const char *bare[] = { "3000", "10", " 2.2e3 ", "4.7\t" };
    for (size_t i = 0; i < sizeof bare / sizeof bare[0]; i++) {
        char want[256];
        assert_int_equal(bg_units_parse_ohms(bare[i], &r, &err), BG_EINVAL);
        snprintf(want, sizeof want, "'%s': a bare number is refused: give the unit, R or ohm, "
                 "or a prefix k, M or G (e.g. 470R, 100ohm, 10k, 4k7, 1M5)", bare[i]);
        assert_string_equal(err.msg, want);
    }
}

static void formatting(void **state)
{
    (void)state;
    char b[64];
    assert_string_equal(bg_units_format_temp(298.6573936, BG_UNIT_C, 3, b, sizeof b),
                        "25.507 \xC2\xB0" "C");
    assert_string_equal(bg_units_format_temp(273.1500001, BG_UNIT_C, 3, b, sizeof b),
                        "0.000 \xC2\xB0" "C");
    assert_string_equal(bg_units_format_temp(273.1499999, BG_UNIT_C, 3, b, sizeof b),
                        "0.000 \xC2\xB0" "C"); /* never "-0.000" */
    assert_string_equal(bg_units_format_temp(373.15, BG_UNIT_F, 1, b, sizeof b),
                        "212.0 \xC2\xB0" "F");
    assert_string_equal(bg_units_format_ohms(5989.411673, 6, b, sizeof b), "5989.41");
    assert_string_equal(bg_units_format_ohms(401859.7246, 6, b, sizeof b), "401860");
    assert_string_equal(bg_units_format_ohms(207.861671, 6, b, sizeof b), "207.862");
    assert_string_equal(bg_units_format_si(1e-5, "A", 3, b, sizeof b), "10 \xC2\xB5" "A");
    assert_string_equal(bg_units_format_si(0.1, "V", 3, b, sizeof b), "100 mV");
    assert_string_equal(bg_units_format_si(3.3, "V", 3, b, sizeof b), "3.3 V");
    assert_string_equal(bg_units_format_si(2.5e-9, "A", 3, b, sizeof b), "2.5 nA");
    assert_string_equal(bg_units_format_si(0.9996e-3, "A", 3, b, sizeof b), "1 mA");
    assert_string_equal(bg_units_format_si(1.5e-3, "W/K", 3, b, sizeof b), "1.5 mW/K");
}

/* Numbers of any length are read; infinities, NaN and values beyond the largest double are
** refused with a message that says so; a formatter given infinity does not convert it to int
** (undefined behaviour, caught by the sanitizer build). */
static void non_finite(void **state)
{
    (void)state;
    bg_error err = BG_ERROR_INIT;
    char text[300], b[64];
    double v;
    /* 137 characters: Python's float() of the same decimal gives 298.15 (derived) */
    snprintf(text, sizeof text, "298.15%0130dK", 1);
    assert_int_equal(strlen(text), 137);
    assert_int_equal(bg_units_parse_temp(text, BG_UNIT_NONE, &v, &err), BG_OK);
    assert_true(v == 298.15);
    /* 1 and 130 zeros ohm: float('1' + '0' * 130) = 1e+130 (Python, derived) */
    snprintf(text, sizeof text, "1%0130dR", 0);
    assert_int_equal(bg_units_parse_ohms(text, &v, &err), BG_OK);
    assert_true(v == 1e130);
    /* 0.333... with 140 threes and a unit: float() gives 0.3333333333333333 (Python, derived) */
    memset(text, '3', 142);
    memcpy(text, "0.", 2);
    strcpy(text + 142, "%");
    assert_int_equal(bg_units_parse_fraction(text, &v, &err), BG_OK);
    assert_true(v == 0.3333333333333333 / 100.0);

    static const struct { const char *s; int kind; } bad[] = {
        { "1e999K", 0 }, { "1e309C", 0 }, { "1e999mK", 1 }, { "1e999R", 2 }, { "1e300G", 2 },
        { "2e308k", 2 }, { "1e999%", 3 }, { "1e305GV", 4 }, { "1e999 V", 4 },
    };
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        int rc = bad[i].kind == 0   ? bg_units_parse_temp(bad[i].s, BG_UNIT_NONE, &v, &err)
                 : bad[i].kind == 1 ? bg_units_parse_tdiff(bad[i].s, &v, &err)
                 : bad[i].kind == 2 ? bg_units_parse_ohms(bad[i].s, &v, &err)
                 : bad[i].kind == 3 ? bg_units_parse_fraction(bad[i].s, &v, &err)
                                    : bg_units_parse_si(bad[i].s, "V", &v, &err);
        assert_int_equal(rc, BG_EINVAL);
        snprintf(text, sizeof text, "'%s': the number is beyond the largest finite value "
                 "(about 1.8e308)", bad[i].s);
        assert_string_equal(err.msg, text);
    }
    static const char *const words[] = { "inf K", "infC", "nanK", "NaN C", "infinity K",
                                         "-inf K", "0x1p8K" };
    for (size_t i = 0; i < sizeof words / sizeof words[0]; i++)
        assert_int_equal(bg_units_parse_temp(words[i], BG_UNIT_NONE, &v, &err), BG_EINVAL);
    assert_int_equal(bg_units_parse_ohms("infR", &v, &err), BG_EINVAL);
    assert_int_equal(bg_units_parse_ohms("nan k", &v, &err), BG_EINVAL);
    /* formatting a non-finite value never converts it to int */
    assert_string_equal(bg_units_format_ohms(INFINITY, 6, b, sizeof b), "inf");
    assert_string_equal(bg_units_format_ohms(NAN, 6, b, sizeof b), "nan");
}

int main(void)
{
    gsl_set_error_handler(test_gsl_handler);
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(temperatures), cmocka_unit_test(temperature_rejects),
        cmocka_unit_test(differences),  cmocka_unit_test(resistances),
        cmocka_unit_test(relative_values), cmocka_unit_test(si_quantities),
        cmocka_unit_test(formatting),   cmocka_unit_test(non_finite),
    };
    return cmocka_run_group_tests_name("units", tests, NULL, NULL);
}
