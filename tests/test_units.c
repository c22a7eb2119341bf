/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Units: temperature scales (ITS-90 offset, published) and resistance notation (common
** practice: SI prefixes, the "4k7" infix form of IEC 60062 resistor marking). */
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
    assert_int_equal(bg_units_parse_fraction("1%", &d, NULL), BG_OK);
    assert_close(d, 0.01, 1e-15, 0);
    assert_int_equal(bg_units_parse_fraction("0.5 %", &d, NULL), BG_OK);
    assert_close(d, 0.005, 1e-15, 0);
    assert_int_equal(bg_units_parse_fraction("1%%", &d, &err), BG_EINVAL);
}

static void resistances(void **state)
{
    (void)state;
    static const struct { const char *s; double v; } ok[] = {
        { "3000", 3000 },      { "10k", 10000 },      { "10K", 10000 },   { "4k7", 4700 },
        { "1.5M", 1.5e6 },     { "2R2", 2.2 },        { "470R", 470 },    { "10kohm", 10000 },
        { "10 k\xCE\xA9", 10000 }, { "100 ohms", 100 }, { "1M05", 1.05e6 }, { "2.2e3", 2200 },
        { "3k01", 3010 },      { "1G", 1e9 },
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
}

int main(void)
{
    gsl_set_error_handler(test_gsl_handler);
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(temperatures), cmocka_unit_test(temperature_rejects),
        cmocka_unit_test(differences),  cmocka_unit_test(resistances),
        cmocka_unit_test(formatting),
    };
    return cmocka_run_group_tests_name("units", tests, NULL, NULL);
}
