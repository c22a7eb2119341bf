/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Tables of every sensor kind on its front end: the codes of the range and the exact
** temperature at every code recomputed here from the published equations and the front-end
** algebra written out in this file (not the library's), the reported error against that
** recomputation over every code, and the refusals (a front end that does not read the
** model's quantity, a curve that runs the wrong way or turns over inside the range). */
#include "testutil.h"

/* CODATA 2018 (exact in the 2019 SI): k = 1.380649e-23 J/K, q = 1.602176634e-19 C. */
#define K_OVER_Q (1.380649e-23 / 1.602176634e-19)

/* IEC 60751 nominal Pt100 (../shared/refdata/REFERENCES.md section 3). */
#define IEC_A 3.9083e-3
#define IEC_B (-5.775e-7)
#define IEC_C (-4.183e-12)

static bg_lut_spec base_spec(const char *kind, const double *coef, size_t n, double t_lo_c,
                             double t_hi_c)
{
    bg_lut_spec s;
    memset(&s, 0, sizeof s);
    assert_int_equal(bg_model_parse(kind, &s.model, NULL), BG_OK);
    s.model.t0_k = 298.15;
    assert_int_equal(bg_model_set_coef(&s.model, coef, n, NULL), BG_OK);
    s.t_lo_k = 273.15 + t_lo_c, s.t_hi_k = 273.15 + t_hi_c;
    s.format = BG_LUT_CENTI, s.frac_bits = -1;
    return s;
}

/* The table's error at every code against 'tex' (K, computed here), and its range. */
typedef double (*t_exact_fn)(double code);
static void check_every_code(const bg_lut *t, t_exact_fn tex, long lo, long hi)
{
    double mx = 0.0, ss = 0.0;
    assert_int_equal(t->code_lo, lo);
    assert_int_equal(t->code_hi, hi);
    for (long c = t->code_lo; c <= t->code_hi; c++) {
        int st;
        double e = bg_lut_value(t, c, &st) + 273.15 - tex((double)c);
        assert_int_equal(st, BG_LUT_OK);
        mx = fmax(mx, fabs(e)), ss += e * e;
    }
    /* the library's exact inverse agrees with this file's to well below the rounding */
    assert_close(t->max_err_k, mx, 0.0, 1e-7);
    assert_close(t->rms_err_k, sqrt(ss / (double)(t->code_hi - t->code_lo + 1)), 0.0, 1e-7);
}

/* ---- a Pt100 (cvd, IEC nominal) on 1 mA against 0.5 V, 16 bits, 0.8 ohm of leads ---- */

static double cvd_r(double t_c)
{
    double r = 1.0 + IEC_A * t_c + IEC_B * t_c * t_c;
    if (t_c < 0.0)
        r += IEC_C * (t_c - 100.0) * t_c * t_c * t_c;
    return 100.0 * r;
}

/* t(R): the quadratic's root at and above 0 degC, bisection below (monotonic there). */
static double cvd_t(double r)
{
    if (r >= 100.0)
        return (-IEC_A + sqrt(IEC_A * IEC_A - 4.0 * IEC_B * (1.0 - r / 100.0))) / (2.0 * IEC_B);
    double lo = -250.0, hi = 0.0;
    for (int i = 0; i < 200; i++) {
        double mid = 0.5 * (lo + hi);
        if (cvd_r(mid) < r)
            lo = mid;
        else
            hi = mid;
    }
    return 0.5 * (lo + hi);
}

static double prt_t_at(double code) /* code = (R + 0.8) 1 mA / 0.5 V 65536 */
{
    return 273.15 + cvd_t(code / 65536.0 * 0.5 / 1e-3 - 0.8);
}

static void prt_leads_current(void **state)
{
    (void)state;
    /* the published table first: R(100 degC) = 138.5055, R(-100 degC) = 60.25584 ohm
    ** (REFERENCES.md section 3) through the library's model */
    double c[4] = { 100.0, IEC_A, IEC_B, IEC_C }, r;
    bg_lut_spec s = base_spec("cvd", c, 4, -50.0, 200.0);
    assert_int_equal(bg_model_x_from_t(&s.model, 373.15, &r, NULL), BG_OK);
    assert_close(r, 138.5055, 1e-9, 0);
    assert_int_equal(bg_model_x_from_t(&s.model, 173.15, &r, NULL), BG_OK);
    assert_close(r, 60.25584, 1e-7, 0);
    s.circuit.kind = BG_CIRCUIT_CURRENT, s.circuit.current_a = 1e-3, s.circuit.vref_v = 0.5;
    s.circuit.adc_bits = 16, s.circuit.full_scale_pow2 = 1, s.circuit.lead_ohm = 0.8;
    s.strategy = BG_LUT_INDEXED, s.max_err_k = 0.05;
    bg_lut t = BG_LUT_INIT;
    assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
    long lo = (long)ceil((cvd_r(-50.0) + 0.8) * 1e-3 / 0.5 * 65536.0);
    long hi = (long)floor((cvd_r(200.0) + 0.8) * 1e-3 / 0.5 * 65536.0);
    check_every_code(&t, prt_t_at, lo, hi);
    assert_true(t.max_err_k <= 0.05);
    /* a platinum sensor's resistance rises: the code rises with the temperature */
    int st;
    assert_true(bg_lut_value(&t, t.code_hi, &st) > bg_lut_value(&t, t.code_lo, &st));
    /* the leads matter: without them the same code reads (0.8 ohm / 0.39 ohm/K) hotter */
    double t1, t2;
    bg_circuit c2 = s.circuit;
    c2.lead_ohm = 0.0;
    assert_int_equal(bg_circuit_temp_of(&s.circuit, &s.model, 20000.0, &t1, NULL, NULL), BG_OK);
    assert_int_equal(bg_circuit_temp_of(&c2, &s.model, 20000.0, &t2, NULL, NULL), BG_OK);
    assert_close(t2 - t1, cvd_t(20000.0 / 65536.0 * 500.0) - cvd_t(20000.0 / 65536.0 * 500.0 -
                                                                    0.8), 1e-9, 0);
    bg_lut_release(&t);
}

/* ---- a silicon PTC (ptc) on the high side of a divider with a parallel resistor and leads */

static double ptc_t_at(double code) /* R = 1000 (1 + A d + B d^2), d = T - 298.15 */
{
    double x = code / 4096.0, rb = 2000.0 * (1.0 - x) / x; /* high side: Rf / (Rb + Rf) */
    double arm = 1.0 / (1.0 / rb - 1.0 / 50000.0), r = arm - 1.5;
    double a = 7.8e-3, b = 1.9e-5;
    double d = (-a + sqrt(a * a - 4.0 * b * (1.0 - r / 1000.0))) / (2.0 * b);
    return 298.15 + d;
}

static double ptc_r(double t_c)
{
    double d = t_c - 25.0;
    return 1000.0 * (1.0 + 7.8e-3 * d + 1.9e-5 * d * d);
}

static void ptc_divider_high(void **state)
{
    (void)state;
    double c[3] = { 1000.0, 7.8e-3, 1.9e-5 };
    bg_lut_spec s = base_spec("ptc", c, 3, -40.0, 125.0);
    s.circuit.kind = BG_CIRCUIT_DIVIDER_HIGH, s.circuit.fixed_ohm = 2000.0;
    s.circuit.parallel_ohm = 50000.0, s.circuit.lead_ohm = 1.5;
    s.circuit.adc_bits = 12, s.circuit.full_scale_pow2 = 1;
    s.shift = 5;
    bg_lut t = BG_LUT_INIT;
    assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
    /* high side: the code falls as the PTC's resistance rises */
    double arm_hot = (ptc_r(125.0) + 1.5) * 50000.0 / (ptc_r(125.0) + 1.5 + 50000.0);
    double arm_cold = (ptc_r(-40.0) + 1.5) * 50000.0 / (ptc_r(-40.0) + 1.5 + 50000.0);
    long lo = (long)ceil(4096.0 * 2000.0 / (arm_hot + 2000.0));
    long hi = (long)floor(4096.0 * 2000.0 / (arm_cold + 2000.0));
    check_every_code(&t, ptc_t_at, lo, hi);
    int st;
    assert_true(bg_lut_value(&t, t.code_lo, &st) > bg_lut_value(&t, t.code_hi, &st));
    bg_lut_release(&t);
}

/* ---- a junction (vbe) through an inverting amplifier: V_adc = -1.5 V + 2.2 V ---- */

static double vbe_v(double tk) /* Vg0 1.2 V, V0 0.6 V at 298.15 K, eta 3.5 */
{
    return 1.2 * (1.0 - tk / 298.15) + 0.6 * tk / 298.15 - 3.5 * K_OVER_Q * tk * log(tk / 298.15);
}

static double vbe_t_at(double code) /* the front end undone, then bisection on V(T) */
{
    double v = (code / 4095.0 * 2.5 - 2.2) / -1.5, lo = 150.0, hi = 450.0;
    for (int i = 0; i < 200; i++) {
        double mid = 0.5 * (lo + hi);
        if (vbe_v(mid) > v) /* V falls with T */
            lo = mid;
        else
            hi = mid;
    }
    return 0.5 * (lo + hi);
}

static void junction_inverting(void **state)
{
    (void)state;
    double c[3] = { 1.2, 0.6, 3.5 };
    bg_lut_spec s = base_spec("vbe", c, 3, -40.0, 125.0);
    s.circuit.kind = BG_CIRCUIT_JUNCTION, s.circuit.gain = -1.5, s.circuit.offset_v = 2.2;
    s.circuit.vref_v = 2.5, s.circuit.adc_bits = 12, s.circuit.full_scale_pow2 = 0;
    s.strategy = BG_LUT_MINIMAL, s.max_err_k = 0.2;
    bg_lut t = BG_LUT_INIT;
    assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
    /* inverted: the code rises with the temperature although V falls */
    long lo = (long)ceil((-1.5 * vbe_v(233.15) + 2.2) / 2.5 * 4095.0);
    long hi = (long)floor((-1.5 * vbe_v(398.15) + 2.2) / 2.5 * 4095.0);
    check_every_code(&t, vbe_t_at, lo, hi);
    assert_true(t.max_err_k <= 0.2);
    int st;
    assert_true(bg_lut_value(&t, t.code_hi, &st) > bg_lut_value(&t, t.code_lo, &st));
    /* the same junction, not inverted: the code falls with the temperature */
    s.circuit.gain = 1.5, s.circuit.offset_v = 0.0;
    bg_lut t2 = BG_LUT_INIT;
    assert_int_equal(bg_lut_build(&s, &t2, NULL), BG_OK);
    assert_true(bg_lut_value(&t2, t2.code_hi, &st) < bg_lut_value(&t2, t2.code_lo, &st));
    bg_lut_release(&t2);
    /* self-heating of the junction: bias current times its voltage over the constant */
    bg_budget_opts o = { 0 };
    bg_budget_row row;
    double at = 298.15;
    o.dissipation_w_per_k = 2e-3, s.circuit.current_a = 10e-6;
    s.circuit.gain = -1.5, s.circuit.offset_v = 2.2;
    assert_int_equal(bg_lut_budget(&s, &t, &o, &at, 1, &row, NULL, NULL), BG_OK);
    assert_close(row.selfheat_k, 10e-6 * 0.6 / 2e-3, 1e-9, 0);
    bg_lut_release(&t);
}

/* ---- two junctions at p = 8 (dvbe): V = gain (k/q) ln(p) T + offset, gain 30 ---- */

static double dvbe_t_at(double code)
{
    double v = (code / 65536.0 * 3.3 - 0.1) / 30.0; /* V_adc = 30 V + 0.1 V, 16 bits */
    return (v - 1e-4) / (1.02 * K_OVER_Q * log(8.0));
}

static void junction_pair(void **state)
{
    (void)state;
    double c[2] = { 1.02, 1e-4 };
    bg_lut_spec s = base_spec("dvbe", c, 2, -40.0, 125.0);
    assert_int_equal(bg_model_set_param(&s.model, "p", 8.0, NULL), BG_OK);
    s.circuit.kind = BG_CIRCUIT_JUNCTION, s.circuit.gain = 30.0, s.circuit.offset_v = 0.1;
    s.circuit.vref_v = 3.3, s.circuit.adc_bits = 16, s.circuit.full_scale_pow2 = 1;
    s.shift = 10, s.format = BG_LUT_Q, s.qbits = 6;
    bg_lut t = BG_LUT_INIT;
    assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
    double g = 1.02 * K_OVER_Q * log(8.0);
    long lo = (long)ceil((30.0 * (g * 233.15 + 1e-4) + 0.1) / 3.3 * 65536.0);
    long hi = (long)floor((30.0 * (g * 398.15 + 1e-4) + 0.1) / 3.3 * 65536.0);
    check_every_code(&t, dvbe_t_at, lo, hi);
    bg_lut_release(&t);
}

/* ---- a Chebyshev series over volts (cheb:2): T = a0 + a1 z + a2 (2 z^2 - 1) ---- */

static double cheb_t_at(double code)
{
    double v = code / 4096.0 * 1.0, z = ((v - 0.4) - (0.75 - v)) / (0.75 - 0.4);
    return 315.0 - 85.0 * z + 1.0 * (2.0 * z * z - 1.0);
}

static void junction_chebyshev(void **state)
{
    (void)state;
    double c[3] = { 315.0, -85.0, 1.0 };
    bg_lut_spec s = base_spec("cheb:2", c, 3, -20.0, 100.0);
    assert_int_equal(bg_model_set_param(&s.model, "x_lo", 0.4, NULL), BG_OK);
    assert_int_equal(bg_model_set_param(&s.model, "x_hi", 0.75, NULL), BG_OK);
    s.circuit.kind = BG_CIRCUIT_JUNCTION, s.circuit.gain = 1.0, s.circuit.vref_v = 1.0;
    s.circuit.adc_bits = 12, s.circuit.full_scale_pow2 = 1;
    s.strategy = BG_LUT_INDEXED, s.max_err_k = 0.1;
    bg_lut t = BG_LUT_INIT;
    assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
    /* the codes of the range: z where T = 253.15 and 373.15 K, from the quadratic in z */
    double zc = (85.0 - sqrt(85.0 * 85.0 - 8.0 * (314.0 - 253.15))) / 4.0;
    double zh = (85.0 - sqrt(85.0 * 85.0 - 8.0 * (314.0 - 373.15))) / 4.0;
    long lo = (long)ceil((0.4 + (zh + 1.0) * 0.35 / 2.0) * 4096.0);
    long hi = (long)floor((0.4 + (zc + 1.0) * 0.35 / 2.0) * 4096.0);
    check_every_code(&t, cheb_t_at, lo, hi);
    bg_lut_release(&t);
    /* a series that turns over inside the range is refused: with a2 = 30,
    ** T = 285 - 85 z + 60 z^2 has its least value 285 - 85^2 / 240 = 254.896 K at
    ** z = 85 / 120 (V = 0.699 V), inside -17 .. 27 degC */
    c[2] = 30.0;
    assert_int_equal(bg_model_set_coef(&s.model, c, 3, NULL), BG_OK);
    s.t_lo_k = 273.15 - 17.0, s.t_hi_k = 273.15 + 27.0;
    bg_error err = BG_ERROR_INIT;
    assert_int_equal(bg_lut_build(&s, &t, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "not monotonic"));
    assert_non_null(strstr(err.msg, "254.8958"));
    /* just below the turning point the reading rises with T: the kind's direction refused */
    s.t_lo_k = 273.15 - 18.0, s.t_hi_k = 273.15 - 5.0;
    assert_int_equal(bg_lut_build(&s, &t, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "this kind's falls"));
}

/* ---- IC sensors: a reported temperature in 1/16 degC, 13 bits; a code of 1/128 K ---- */

static double ic_t_at(double code) /* T = T_rep + 0.3 + 0.002 d + 1e-5 d^2, d = T_rep - T0 */
{
    double trep = (code - 4096.0) * 0.0625 + 273.15, d = trep - 298.15;
    return trep + 0.3 + 0.002 * d + 1e-5 * d * d;
}

static double ic_code_t_at(double code)
{
    double trep = (code - 32768.0) * 0.0078125 + 273.15, d = trep - 298.15;
    return trep + 0.3 + 0.002 * d + 1e-5 * d * d;
}

/* the reported temperature (K) that the correction takes to 't_k' */
static double ic_rep_of(double t_k)
{
    double lo = t_k - 5.0, hi = t_k + 5.0;
    for (int i = 0; i < 200; i++) {
        double mid = 0.5 * (lo + hi), d = mid - 298.15;
        if (mid + 0.3 + 0.002 * d + 1e-5 * d * d < t_k)
            lo = mid;
        else
            hi = mid;
    }
    return 0.5 * (lo + hi);
}

static void ic_readouts(void **state)
{
    (void)state;
    double c[3] = { 0.3, 0.002, 1e-5 };
    bg_lut_spec s = base_spec("ic", c, 3, -40.0, 125.0);
    s.circuit.kind = BG_CIRCUIT_DEVICE, s.circuit.adc_bits = 13, s.circuit.device_lsb = 0.0625;
    s.shift = 3;
    bg_lut t = BG_LUT_INIT;
    assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
    long lo = (long)ceil((ic_rep_of(233.15) - 273.15) / 0.0625 + 4096.0);
    long hi = (long)floor((ic_rep_of(398.15) - 273.15) / 0.0625 + 4096.0);
    check_every_code(&t, ic_t_at, lo, hi);
    /* a word below 0 degC: -40.1875 degC is the word -643, the table's code 3453 */
    assert_true(lo <= 3453);
    bg_lut_release(&t);

    bg_lut_spec s2 = base_spec("ic-code", c, 3, -40.0, 125.0);
    assert_int_equal(bg_model_set_param(&s2.model, "lsb_k", 0.0078125, NULL), BG_OK);
    s2.circuit.kind = BG_CIRCUIT_DEVICE, s2.circuit.adc_bits = 16, s2.circuit.device_lsb = 1.0;
    s2.strategy = BG_LUT_MINIMAL, s2.max_err_k = 0.01;
    assert_int_equal(bg_lut_build(&s2, &t, NULL), BG_OK);
    lo = (long)ceil((ic_rep_of(233.15) - 273.15) / 0.0078125 + 32768.0);
    hi = (long)floor((ic_rep_of(398.15) - 273.15) / 0.0078125 + 32768.0);
    check_every_code(&t, ic_code_t_at, lo, hi);
    bg_lut_release(&t);
    /* a code model read with a step other than 1 is refused */
    s2.circuit.device_lsb = 0.5;
    assert_int_equal(bg_lut_build(&s2, &t, NULL), BG_EINVAL);
}

/* ---- refusals: the front end and the model's quantity, the kind's direction ---- */

static void refusals(void **state)
{
    (void)state;
    bg_error err = BG_ERROR_INIT;
    bg_lut t = BG_LUT_INIT;
    double cv[3] = { 1.2, 0.6, 3.5 }, cp[3] = { 1000.0, 7.8e-3, 1.9e-5 };
    /* a junction in a divider */
    bg_lut_spec s = base_spec("vbe", cv, 3, -40.0, 125.0);
    s.circuit.kind = BG_CIRCUIT_DIVIDER_LOW, s.circuit.fixed_ohm = 10000.0;
    s.circuit.adc_bits = 12, s.shift = 4;
    assert_int_equal(bg_lut_build(&s, &t, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "reads a resistance, but the model reads volts"));
    /* a PTC on the junction front end */
    s = base_spec("ptc", cp, 3, -40.0, 125.0);
    s.circuit.kind = BG_CIRCUIT_JUNCTION, s.circuit.gain = 1.0, s.circuit.vref_v = 2.5;
    s.circuit.adc_bits = 12, s.shift = 4;
    assert_int_equal(bg_lut_build(&s, &t, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "junction front end reads volts"));
    /* a PTC whose fitted A is negative falls: not the kind's way */
    cp[1] = -7.8e-3;
    s = base_spec("ptc", cp, 3, -40.0, 125.0);
    s.circuit.kind = BG_CIRCUIT_DIVIDER_LOW, s.circuit.fixed_ohm = 2000.0;
    s.circuit.adc_bits = 12, s.shift = 4;
    assert_int_equal(bg_lut_build(&s, &t, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "this kind's rises"));
    /* a junction front end with resistors, or a gain of 0 */
    bg_circuit c = { 0 };
    c.kind = BG_CIRCUIT_JUNCTION, c.adc_bits = 12, c.vref_v = 2.5, c.gain = 0.0;
    assert_int_equal(bg_circuit_check(&c, NULL), BG_EINVAL);
    c.gain = 1.0, c.series_ohm = 10.0;
    assert_int_equal(bg_circuit_check(&c, NULL), BG_EINVAL);
    c.series_ohm = 0.0;
    assert_int_equal(bg_circuit_check(&c, NULL), BG_OK);
    /* the device readout and the round trip of its offset-binary code */
    c.kind = BG_CIRCUIT_DEVICE, c.device_lsb = 0.0625, c.gain = 0.0, c.vref_v = 0.0;
    double code, x;
    assert_int_equal(bg_circuit_code_of_reading(&c, -0.0625, &code, NULL), BG_OK);
    assert_close(code, 2047.0, 0, 0);
    assert_int_equal(bg_circuit_reading_of(&c, 0.0, &x, NULL), BG_OK);
    assert_close(x, -2048.0 * 0.0625, 0, 0);
    /* leads that exceed what a code reads: no positive sensor resistance */
    bg_circuit o = { 0 };
    o.kind = BG_CIRCUIT_OHMS, o.ohms_per_code = 1.0, o.lead_ohm = 5.0;
    assert_int_equal(bg_circuit_ohms_of(&o, 4.0, &x, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "leads"));
}

int main(void)
{
    gsl_set_error_handler(test_gsl_handler);
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(prt_leads_current),
        cmocka_unit_test(ptc_divider_high),
        cmocka_unit_test(junction_inverting),
        cmocka_unit_test(junction_pair),
        cmocka_unit_test(junction_chebyshev),
        cmocka_unit_test(ic_readouts),
        cmocka_unit_test(refusals),
    };
    return cmocka_run_group_tests_name("lut_kinds", tests, NULL, NULL);
}
