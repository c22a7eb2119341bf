/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Uniform firmware tables: breakpoint values against the divider law and the beta equation
** computed here, and the emitted C compiled with the system compiler (-std=c99 -pedantic
** -Werror), run over every code, against bg_lut_eval and the reported error. */
#include <unistd.h>

#include "testutil.h"

static bg_lut_spec spec_10k(unsigned shift, bg_lut_format fmt)
{
    bg_lut_spec s;
    double c[2] = { 10000, 3950 };
    memset(&s, 0, sizeof s);
    s.circuit.kind = BG_CIRCUIT_DIVIDER_LOW, s.circuit.fixed_ohm = 10000;
    s.circuit.adc_bits = 12, s.circuit.full_scale_pow2 = 1;
    bg_model_parse("beta", &s.model, NULL);
    bg_model_set_coef(&s.model, c, 2, NULL);
    s.t_lo_k = 273.15 - 40.0, s.t_hi_k = 273.15 + 125.0;
    s.shift = shift, s.format = fmt;
    return s;
}

/* Independent: T at a code of the 10k low-side divider on 12 bits with beta 10k/3950. */
static double t_indep(double code)
{
    double x = code / 4096.0, r = 10000.0 * x / (1.0 - x);
    return 1.0 / (1.0 / 298.15 + log(r / 10000.0) / 3950.0);
}

static void breakpoints_and_error(void **state)
{
    (void)state;
    bg_lut_spec s = spec_10k(4, BG_LUT_CENTI);
    bg_lut t = BG_LUT_INIT;
    assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
    /* the range's codes: -40 degC and 125 degC on the divider (computed here) */
    double r_hot = 10000.0 * exp(3950.0 * (1.0 / 398.15 - 1.0 / 298.15));
    double r_cold = 10000.0 * exp(3950.0 * (1.0 / 233.15 - 1.0 / 298.15));
    assert_int_equal(t.code_lo, (long)ceil(4096.0 * r_hot / (r_hot + 10000.0)));
    assert_int_equal(t.code_hi, (long)floor(4096.0 * r_cold / (r_cold + 10000.0)));
    for (size_t i = 0; i < t.n; i++) {
        double code = (double)t.code_lo + 16.0 * (double)i;
        assert_int_equal(t.y[i], (int32_t)lround(100.0 * (t_indep(code) - 273.15)));
    }
    /* the reported error, recomputed here over every code from bg_lut_eval */
    double mx = 0.0, ss = 0.0;
    for (long c = t.code_lo; c <= t.code_hi; c++) {
        int st;
        double e = bg_lut_eval(&t, c, &st) / 100.0 + 273.15 - t_indep((double)c);
        assert_int_equal(st, BG_LUT_OK);
        mx = fmax(mx, fabs(e)), ss += e * e;
    }
    assert_close(t.max_err_k, mx, 1e-9, 0);
    assert_close(t.rms_err_k, sqrt(ss / (double)(t.code_hi - t.code_lo + 1)), 1e-9, 0);
    assert_true(t.max_err_k >= 0.005 - 1e-12); /* at least the output rounding at some code */
    /* a finer step is never worse */
    bg_lut t2 = BG_LUT_INIT;
    s.shift = 2;
    assert_int_equal(bg_lut_build(&s, &t2, NULL), BG_OK);
    assert_true(t2.max_err_k <= t.max_err_k);
    int st;
    bg_lut_eval(&t, t.code_lo - 1, &st);
    assert_int_equal(st, BG_LUT_BELOW);
    bg_lut_eval(&t, t.code_hi + 1, &st);
    assert_int_equal(st, BG_LUT_ABOVE);
    bg_lut_release(&t);
    bg_lut_release(&t2);
}

static void emitted_c_agrees(void **state)
{
    (void)state;
    static const bg_lut_format fmts[3] = { BG_LUT_DECI, BG_LUT_CENTI, BG_LUT_MILLI };
    static const unsigned shifts[3] = { 5, 3, 0 };
    char dir[] = "/tmp/bandgap-lut-XXXXXX", path[256], cmd[1024];
    assert_non_null(mkdtemp(dir));
    for (int k = 0; k < 3; k++) {
        bg_lut_spec s = spec_10k(shifts[k], fmts[k]);
        bg_lut t = BG_LUT_INIT;
        s.kelvin = k == 2;
        assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
        snprintf(path, sizeof path, "%s/ntc.c", dir);
        FILE *f = fopen(path, "w");
        assert_non_null(f);
        assert_int_equal(bg_lut_emit_c(&t, &s, "ntc", "test", f, NULL), BG_OK);
        fclose(f);
        snprintf(path, sizeof path, "%s/main.c", dir);
        f = fopen(path, "w");
        fprintf(f, "#include <stdio.h>\n#include <stdint.h>\nint32_t ntc_lookup(uint32_t code);\n"
                   "int main(void) { long c; for (c = %ld; c <= %ld; c++) printf(\"%%ld\\n\", "
                   "(long)ntc_lookup((uint32_t)c)); return 0; }\n", t.code_lo - 2, t.code_hi + 2);
        fclose(f);
        snprintf(cmd, sizeof cmd, "cc -std=c99 -Wall -Wextra -pedantic -Werror -Wconversion "
                 "-O2 %s/ntc.c %s/main.c -o %s/run && %s/run > %s/out.txt", dir, dir, dir, dir,
                 dir);
        assert_int_equal(system(cmd), 0);
        snprintf(path, sizeof path, "%s/out.txt", dir);
        f = fopen(path, "r");
        assert_non_null(f);
        double mx = 0.0, ss = 0.0, scale = k == 0 ? 10.0 : k == 1 ? 100.0 : 1000.0;
        for (long c = t.code_lo - 2; c <= t.code_hi + 2; c++) {
            long v;
            int st;
            assert_int_equal(fscanf(f, "%ld", &v), 1);
            int32_t want = bg_lut_eval(&t, c, &st);
            if (st == BG_LUT_BELOW)
                assert_true(v == -2147483647L - 1);
            else if (st == BG_LUT_ABOVE)
                assert_true(v == 2147483647L);
            else {
                assert_true(v == (long)want);
                double e = (double)v / scale + (s.kelvin ? 0.0 : 273.15) - t_indep((double)c);
                mx = fmax(mx, fabs(e)), ss += e * e;
            }
        }
        fclose(f);
        /* the reported figures are the compiled code's, to the last digit printed */
        assert_close(t.max_err_k, mx, 1e-9, 0);
        assert_close(t.rms_err_k, sqrt(ss / (double)(t.code_hi - t.code_lo + 1)), 1e-9, 0);
        bg_lut_release(&t);
    }
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
    assert_int_equal(system(cmd), 0);
}

static void bad_requests(void **state)
{
    (void)state;
    bg_lut t = BG_LUT_INIT;
    bg_error err = BG_ERROR_INIT;
    bg_lut_spec s = spec_10k(13, BG_LUT_CENTI);
    assert_int_equal(bg_lut_build(&s, &t, &err), BG_EINVAL);
    s = spec_10k(4, BG_LUT_CENTI);
    s.t_lo_k = 273.15 - 150.0; /* teraohms: the last breakpoint needs a code past 4095 */
    assert_int_equal(bg_lut_build(&s, &t, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "beyond the ADC's codes"));
    /* a 100 uA current source against 2.5 V saturates below about 25 kOhm's temperature */
    s = spec_10k(4, BG_LUT_CENTI);
    s.circuit.kind = BG_CIRCUIT_CURRENT, s.circuit.current_a = 100e-6, s.circuit.vref_v = 2.5;
    assert_int_equal(bg_lut_build(&s, &t, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "rails"));
    s = spec_10k(4, BG_LUT_CENTI);
    s.circuit.fixed_ohm = 0;
    assert_int_equal(bg_lut_build(&s, &t, &err), BG_EINVAL);
    s = spec_10k(4, BG_LUT_CENTI);
    assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
    assert_int_equal(bg_lut_emit_c(&t, &s, "2bad", "test", stdout, &err), BG_EINVAL);
    bg_lut_release(&t);
}

static void budget_by_hand(void **state)
{
    (void)state;
    bg_lut_spec s = spec_10k(4, BG_LUT_CENTI);
    bg_lut t = BG_LUT_INIT;
    double cov[4] = { 1.0, 0.0, 0.0, 4.0 }; /* var(R0) = 1 ohm^2, var(beta) = 4 K^2 (invented) */
    bg_budget_opts o = { cov, 0.001, 3.3, 2e-3 };
    bg_budget_row row, worst;
    double at = 298.15, T = 298.15, B = 3950.0;
    assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
    assert_int_equal(bg_lut_budget(&s, &t, &o, &at, 1, &row, &worst, NULL), BG_OK);
    /* at 25 degC the divider sits at half scale, code 2048 (divider law) */
    int st;
    double table = fabs(bg_lut_eval(&t, 2048, &st) / 100.0 + 273.15 - t_indep(2048.0));
    assert_close(row.table_k, table, 1e-9, 1e-12);
    /* half an LSB: 0.5 |dT/dR dR/dcode|, dT/dR = -T^2/(B R), dR/dcode = Rf / FS / (1 - x)^2 */
    double adc = 0.5 * T * T / (B * 10000.0) * 10000.0 / 4096.0 / 0.25;
    assert_close(row.adc_k, adc, 1e-6, 0);
    /* the fixed resistor 0.1 % high: the firmware reads R (1 + 0.001) as R */
    double t2 = 1.0 / (1.0 / T + log(1.001) / B);
    assert_close(row.resistor_k, fabs(t2 - T), 1e-9, 0);
    /* 3.3 V over 10k + 10k: 1.65 V across the thermistor, 272.25 uW, over 2 mW/K */
    assert_close(row.selfheat_k, 1.65 * 1.65 / 10000.0 / 2e-3, 1e-12, 0);
    /* U(k=2) of the beta curve at R = R0: only R0's variance counts, T^2 / (B R0) per ohm */
    assert_close(row.fit_k, 2.0 * T * T / (B * 10000.0), 1e-9, 0);
    double sum = row.table_k + adc + row.resistor_k + row.selfheat_k + row.fit_k;
    assert_close(row.sum_k, sum, 1e-6, 0);
    assert_close(row.rss_k, sqrt(row.table_k * row.table_k + adc * adc +
                                 row.resistor_k * row.resistor_k +
                                 row.selfheat_k * row.selfheat_k + row.fit_k * row.fit_k),
                 1e-6, 0);
    /* the worst case over the range is at least the value at any temperature */
    assert_true(worst.sum_k >= row.sum_k && worst.adc_k >= row.adc_k);
    assert_close(worst.table_k, t.max_err_k, 1e-9, 0);
    bg_lut_release(&t);
}

int main(void)
{
    gsl_set_error_handler(test_gsl_handler);
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(breakpoints_and_error),
        cmocka_unit_test(emitted_c_agrees),
        cmocka_unit_test(bad_requests),
        cmocka_unit_test(budget_by_hand),
    };
    return cmocka_run_group_tests_name("lut", tests, NULL, NULL);
}
