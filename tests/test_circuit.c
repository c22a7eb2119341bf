/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Sensor front ends against hand calculation with the voltage divider law and Ohm's law
** (common practice), and round trips code -> resistance -> code. */
#include "testutil.h"

static bg_circuit divider(bg_circuit_kind k, double rf, double rp, double rs, unsigned bits,
                          int pow2)
{
    bg_circuit c;
    memset(&c, 0, sizeof c);
    c.kind = k, c.fixed_ohm = rf, c.parallel_ohm = rp, c.series_ohm = rs;
    c.adc_bits = bits, c.full_scale_pow2 = pow2;
    return c;
}

static void divider_by_hand(void **state)
{
    (void)state;
    double code, r;
    /* 10k fixed, 10k thermistor: half scale */
    bg_circuit c = divider(BG_CIRCUIT_DIVIDER_LOW, 10000, 0, 0, 12, 1);
    assert_int_equal(bg_circuit_code_of(&c, 10000, &code, NULL), BG_OK);
    assert_close(code, 2048.0, 1e-15, 0);
    c.full_scale_pow2 = 0;
    assert_int_equal(bg_circuit_code_of(&c, 10000, &code, NULL), BG_OK);
    assert_close(code, 4095.0 / 2.0, 1e-15, 0);
    /* low side, 4k7 fixed, thermistor 22k with 100k across it and 330 ohm in series:
    ** branch = 330 + 22000*100000/122000 = 18362.2951 ohm; x = Rb / (Rb + 4700) */
    c = divider(BG_CIRCUIT_DIVIDER_LOW, 4700, 100000, 330, 16, 1);
    double rb = 330.0 + 22000.0 * 100000.0 / 122000.0;
    assert_int_equal(bg_circuit_code_of(&c, 22000, &code, NULL), BG_OK);
    assert_close(code, 65536.0 * rb / (rb + 4700.0), 1e-14, 0);
    assert_int_equal(bg_circuit_ohms_of(&c, code, &r, NULL), BG_OK);
    assert_close(r, 22000.0, 1e-12, 0);
    /* high side: x = Rf / (Rb + Rf) */
    c = divider(BG_CIRCUIT_DIVIDER_HIGH, 10000, 0, 0, 10, 0);
    assert_int_equal(bg_circuit_code_of(&c, 30000, &code, NULL), BG_OK);
    assert_close(code, 1023.0 * 10000.0 / 40000.0, 1e-15, 0);
}

static void current_source_and_ohms(void **state)
{
    (void)state;
    double code, r;
    bg_circuit c;
    memset(&c, 0, sizeof c);
    /* 100 uA through 10 kOhm is 1.000 V; against 2.5 V on 12 bits: 0.4 of 4096 */
    c.kind = BG_CIRCUIT_CURRENT, c.current_a = 100e-6, c.vref_v = 2.5, c.adc_bits = 12;
    c.full_scale_pow2 = 1;
    assert_int_equal(bg_circuit_code_of(&c, 10000, &code, NULL), BG_OK);
    assert_close(code, 1638.4, 1e-14, 0);
    assert_int_equal(bg_circuit_ohms_of(&c, 1638.4, &r, NULL), BG_OK);
    assert_close(r, 10000.0, 1e-12, 0);
    memset(&c, 0, sizeof c);
    c.kind = BG_CIRCUIT_OHMS, c.ohms_per_code = 0.5;
    assert_int_equal(bg_circuit_code_of(&c, 10000, &code, NULL), BG_OK);
    assert_close(code, 20000.0, 1e-15, 0);
}

static void round_trips_and_rails(void **state)
{
    (void)state;
    bg_error err = BG_ERROR_INIT;
    static const bg_circuit_kind k[3] = { BG_CIRCUIT_DIVIDER_LOW, BG_CIRCUIT_DIVIDER_HIGH,
                                          BG_CIRCUIT_CURRENT };
    for (int i = 0; i < 3; i++) {
        bg_circuit c = divider(k[i], 10000, 470000, 150, 14, i & 1);
        c.current_a = 50e-6, c.vref_v = 3.3;
        for (double r = 500; r < 60000; r *= 1.37) {
            double code, back;
            assert_int_equal(bg_circuit_code_of(&c, r, &code, NULL), BG_OK);
            assert_int_equal(bg_circuit_ohms_of(&c, code, &back, NULL), BG_OK);
            assert_close(back, r, 1e-9, 0);
        }
        double r;
        assert_int_equal(bg_circuit_ohms_of(&c, 0.0, &r, &err), BG_EINVAL);
        assert_int_equal(bg_circuit_ohms_of(&c, bg_circuit_full_scale(&c), &r, &err), BG_EINVAL);
    }
    bg_circuit bad = divider(BG_CIRCUIT_DIVIDER_LOW, 0, 0, 0, 12, 1);
    double code;
    assert_int_equal(bg_circuit_code_of(&bad, 1000, &code, &err), BG_EINVAL);
    assert_string_equal(err.msg, "the divider's fixed resistor must be > 0 ohm");
    bad = divider(BG_CIRCUIT_DIVIDER_LOW, 1000, 0, 0, 30, 1);
    assert_int_equal(bg_circuit_code_of(&bad, 1000, &code, &err), BG_EINVAL);
}

static void sensitivity(void **state)
{
    (void)state;
    /* beta 10k / 3950 on a 10k low-side divider, 12 bits: at 25 degC the code is 2048 and
    ** dT/dcode = dT/dR * dR/dcode with dR/dcode = Rf / FS / (1 - x)^2 and dT/dR = -T^2/(B R)
    ** (differentiating the divider law and the beta equation; common practice) */
    bg_model m;
    double cf[2] = { 10000, 3950 }, t, k;
    bg_model_parse("beta", &m, NULL);
    bg_model_set_coef(&m, cf, 2, NULL);
    bg_circuit c = divider(BG_CIRCUIT_DIVIDER_LOW, 10000, 0, 0, 12, 1);
    assert_int_equal(bg_circuit_temp_of(&c, &m, 2048.0, &t, &k, NULL), BG_OK);
    assert_close(t, 298.15, 1e-12, 0);
    double drdc = 10000.0 / 4096.0 / 0.25, dtdr = -298.15 * 298.15 / (3950.0 * 10000.0);
    assert_close(k, dtdr * drdc, 1e-6, 0);
}

int main(void)
{
    gsl_set_error_handler(test_gsl_handler);
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(divider_by_hand), cmocka_unit_test(current_source_and_ohms),
        cmocka_unit_test(round_trips_and_rails), cmocka_unit_test(sensitivity),
    };
    return cmocka_run_group_tests_name("circuit", tests, NULL, NULL);
}
