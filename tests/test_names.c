/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The one spelling of table strategies, value formats, sensor sides and full scales: every
** name parses back to what printed it, and anything else is refused with the accepted words.
** The names are the program's own (docs/commands/lut.md), not values from outside. */
#include "testutil.h"

static void strategies_round_trip(void **state)
{
    (void)state;
    bg_lut_strategy all[] = { BG_LUT_UNIFORM, BG_LUT_MINIMAL, BG_LUT_INDEXED }, got;
    for (size_t i = 0; i < 3; i++) {
        assert_int_equal(bg_lut_strategy_parse(bg_lut_strategy_name(all[i]), &got, NULL), BG_OK);
        assert_int_equal(got, all[i]);
    }
    bg_error err = BG_ERROR_INIT;
    assert_int_equal(bg_lut_strategy_parse("Uniform", &got, &err), BG_EINVAL);
    assert_string_equal(err.msg, "say uniform, minimal or indexed");
    assert_int_equal(bg_lut_strategy_parse(NULL, &got, NULL), BG_EINVAL);
}

static void formats_round_trip(void **state)
{
    (void)state;
    bg_lut_format all[] = { BG_LUT_DECI, BG_LUT_CENTI, BG_LUT_MILLI, BG_LUT_FLOAT }, f;
    const char *names[] = { "0.1", "0.01", "0.001", "float" };
    char buf[16];
    unsigned q = 0;
    for (size_t i = 0; i < 4; i++) {
        assert_string_equal(bg_lut_format_name(all[i], 0, buf, sizeof buf), names[i]);
        assert_int_equal(bg_lut_format_parse(buf, &f, &q, NULL), BG_OK);
        assert_int_equal(f, all[i]);
    }
    for (unsigned bits = 1; bits <= 16; bits++) {
        bg_lut_format_name(BG_LUT_Q, bits, buf, sizeof buf);
        assert_int_equal(bg_lut_format_parse(buf, &f, &q, NULL), BG_OK);
        assert_int_equal(f, BG_LUT_Q);
        assert_int_equal(q, bits);
    }
    const char *bad[] = { "q0", "q17", "q", "q1x", "q-1", "0.10", "", "Float" };
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        bg_error err = BG_ERROR_INIT;
        assert_int_equal(bg_lut_format_parse(bad[i], &f, &q, &err), BG_EINVAL);
        assert_string_equal(err.msg, "say 0.1, 0.01, 0.001, q1 .. q16 or float");
    }
}

static void sides_and_full_scale_round_trip(void **state)
{
    (void)state;
    bg_circuit_kind k;
    int pow2 = -1;
    assert_int_equal(bg_circuit_side_parse(bg_circuit_side_name(BG_CIRCUIT_DIVIDER_LOW), &k, NULL),
                     BG_OK);
    assert_int_equal(k, BG_CIRCUIT_DIVIDER_LOW);
    assert_int_equal(bg_circuit_side_parse(bg_circuit_side_name(BG_CIRCUIT_DIVIDER_HIGH), &k,
                                           NULL), BG_OK);
    assert_int_equal(k, BG_CIRCUIT_DIVIDER_HIGH);
    assert_string_equal(bg_circuit_side_name(BG_CIRCUIT_CURRENT), "");
    assert_int_equal(bg_circuit_side_parse("", &k, NULL), BG_EINVAL);
    assert_int_equal(bg_circuit_full_scale_parse(bg_circuit_full_scale_name(1), &pow2, NULL), BG_OK);
    assert_int_equal(pow2, 1);
    assert_int_equal(bg_circuit_full_scale_parse(bg_circuit_full_scale_name(0), &pow2, NULL), BG_OK);
    assert_int_equal(pow2, 0);
    bg_error err = BG_ERROR_INIT;
    assert_int_equal(bg_circuit_full_scale_parse("pow3", &pow2, &err), BG_EINVAL);
    assert_string_equal(err.msg, "say pow2 or pow2-1");
}

int main(void)
{
    gsl_set_error_handler(test_gsl_handler);
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(strategies_round_trip),
        cmocka_unit_test(formats_round_trip),
        cmocka_unit_test(sides_and_full_scale_round_trip),
    };
    return cmocka_run_group_tests_name("names", tests, NULL, NULL);
}
