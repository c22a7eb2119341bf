/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The AVR's aligned form of an indexed table (lut_seg.c): segments on the index's grid, at
** most 256 codes each, read with the slope split into bytes.  Checked here at 12, 14 and 16
** bits: the grid and the lengths; the byte-split arithmetic of the emitted lookup, redone in
** this file with every intermediate held to 16 bits, against bg_lut_eval at every code; the
** error at every code against the beta equation and the divider law computed here; and the
** choice between the aligned and the compact form by --optimize.  (The emitted file itself
** runs on an ATmega328P under simavr in tests/firmware/run.sh, every code.) */
#include "testutil.h"
#include "../src/lib/lut/lut_int.h"

static bg_lut_spec spec_avr(unsigned bits, bg_lut_format fmt, unsigned qbits)
{
    bg_lut_spec s;
    double c[2] = { 10000, 3950 };
    memset(&s, 0, sizeof s);
    s.circuit.kind = BG_CIRCUIT_DIVIDER_LOW, s.circuit.fixed_ohm = 10000;
    s.circuit.adc_bits = bits, s.circuit.full_scale_pow2 = 1;
    bg_model_parse("beta", &s.model, NULL);
    bg_model_set_coef(&s.model, c, 2, NULL);
    s.t_lo_k = 273.15 - 40.0, s.t_hi_k = 273.15 + 125.0;
    s.format = fmt, s.qbits = qbits;
    s.strategy = BG_LUT_INDEXED, s.max_err_k = 0.05, s.frac_bits = -1;
    s.target = BG_LUT_AVR, s.optimize = BG_LUT_OPT_TIME;
    return s;
}

/* Independent: T (K) at a code of the 10k low-side divider with beta 10k / 3950 K (the beta
** equation, common practice; the divider law R = Rf x / (1 - x), x = code / 2^bits). */
static double t_indep(double code, unsigned bits)
{
    double x = code / ldexp(1.0, (int)bits), r = 10000.0 * x / (1.0 - x);
    return 1.0 / (1.0 / 298.15 + log(r / 10000.0) / 3950.0);
}

static int in16(long v)
{
    return v >= -32768 && v <= 32767;
}

/* The emitted AVR lookup's arithmetic at one code, each step checked to fit its C type there
** (int is 16 bits): base + hi * d + (uint8_t)((frac + lo * d) >> 8). */
static long byte_split(const bg_lut *t, size_t i, long code)
{
    long sy = t->sy[i], sm = t->sm[i];
    long mh = sm >= 0 ? sm / 256 : -((-sm + 255) / 256), ml = sm - 256 * mh;
    long base = (long)t->yoff + sy / 256, frac = sy % 256;
    long d = (code - t->code_lo) % 256 - (t->sx[i] - t->code_lo) % 256;
    d = (d + 256) % 256; /* the emitted (uint8_t) difference of the low bytes */
    assert_int_equal(d, code - t->sx[i]);
    assert_true(mh >= -128 && mh <= 127 && ml >= 0 && ml <= 255 && frac >= 0 && frac <= 255);
    assert_true(in16(base));
    long p = mh * d, q = frac + ml * d;
    assert_true(in16(p) && q >= 0 && q <= 65535);
    long sum = base + p;
    assert_true(in16(sum) && in16(sum + (q >> 8)));
    return sum + (q >> 8);
}

static void check_aligned(const bg_lut_spec *s)
{
    bg_lut t = BG_LUT_INIT;
    assert_int_equal(bg_lut_build(s, &t, NULL), BG_OK);
    assert_int_equal(t.aligned, 1);
    assert_int_equal(t.icmp, 0);
    assert_int_equal(t.frac, 8);
    assert_true(t.ishift <= 8 && t.n <= 256);
    assert_int_equal(t.bytes, t.n * 6 + t.nidx);
    long grid = 1L << t.ishift;
    for (size_t i = 0; i < t.n; i++) {
        assert_int_equal((t.sx[i] - t.code_lo) % grid, 0);
        assert_true(t.sx[i + 1] - t.sx[i] >= 1 && t.sx[i + 1] - t.sx[i] <= 256);
    }
    double mx = 0.0;
    size_t seg = 0;
    for (long c = t.code_lo; c <= t.code_hi; c++) {
        int st;
        while (t.sx[seg + 1] <= c)
            seg++;
        /* the index alone names the segment */
        assert_int_equal(t.idx[(c - t.code_lo) >> t.ishift], seg);
        long v = bg_lut_eval(&t, c, &st);
        assert_int_equal(st, BG_LUT_OK);
        assert_int_equal(byte_split(&t, seg, c), v);
        double e = (double)v / t.counts_per_k + 273.15 - t_indep((double)c, s->circuit.adc_bits);
        mx = fmax(mx, fabs(e));
    }
    assert_true(mx <= 0.05 + 1e-9);
    assert_close(t.max_err_k, mx, 1e-9, 0);
    bg_lut_release(&t);
}

static void aligned_form_is_exact(void **state)
{
    (void)state;
    static const unsigned bits[3] = { 12, 14, 16 };
    for (int b = 0; b < 3; b++) {
        bg_lut_spec s = spec_avr(bits[b], BG_LUT_CENTI, 0);
        check_aligned(&s);
    }
    bg_lut_spec s = spec_avr(12, BG_LUT_DECI, 0);
    check_aligned(&s);
    s = spec_avr(12, BG_LUT_Q, 8);
    check_aligned(&s);
}

/* The form follows --optimize: flash keeps the compact form (fewer bytes), time the aligned
** one (fewer cycles); values beyond int16_t (0.001 degC over 165 K) keep the compact form;
** other targets never get it. */
static void form_follows_optimize(void **state)
{
    (void)state;
    bg_lut_spec s = spec_avr(12, BG_LUT_CENTI, 0);
    bg_lut fast = BG_LUT_INIT, small = BG_LUT_INIT, t = BG_LUT_INIT;
    bg_lut_target_cost cf, cs;
    assert_int_equal(bg_lut_build(&s, &fast, NULL), BG_OK);
    s.optimize = BG_LUT_OPT_FLASH;
    assert_int_equal(bg_lut_build(&s, &small, NULL), BG_OK);
    assert_int_equal(fast.aligned, 1);
    assert_int_equal(small.aligned, 0);
    assert_true(small.icmp >= 1);
    assert_int_equal(bg_lut_cost_on(&fast, BG_LUT_AVR, &cf, NULL), BG_OK);
    assert_int_equal(bg_lut_cost_on(&small, BG_LUT_AVR, &cs, NULL), BG_OK);
    assert_true(cf.per_call < cs.per_call && cf.per_call <= 120.0);
    assert_true(cs.flash_bytes < cf.flash_bytes);
    /* weighted: a cycle worth many bytes picks the fast form, a cycle worth none the small */
    s.optimize = BG_LUT_OPT_WEIGHTED, s.time_weight = 100.0;
    assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
    assert_int_equal(t.aligned, 1);
    bg_lut_release(&t);
    s.time_weight = 0.01;
    assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
    assert_int_equal(t.aligned, 0);
    bg_lut_release(&t);
    s = spec_avr(12, BG_LUT_MILLI, 0);
    assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
    assert_int_equal(t.aligned, 0);
    bg_lut_release(&t);
    s = spec_avr(12, BG_LUT_CENTI, 0);
    s.target = BG_LUT_CORTEX_M0;
    assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
    assert_int_equal(t.aligned, 0);
    bg_lut_release(&t);
    bg_lut_release(&fast), bg_lut_release(&small);
}

/* The emitted file of the aligned form: the byte tables, the index and no comparison. */
static void aligned_emission(void **state)
{
    (void)state;
    bg_lut_spec s = spec_avr(12, BG_LUT_CENTI, 0);
    bg_lut t = BG_LUT_INIT;
    char *buf = NULL;
    size_t len = 0;
    assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
    FILE *f = open_memstream(&buf, &len);
    assert_int_equal(bg_lut_emit_c(&t, &s, "ntc", "test", f, NULL), BG_OK);
    fclose(f);
    assert_non_null(strstr(buf, "static const int8_t ntc_slope_hi["));
    assert_non_null(strstr(buf, "static const uint8_t ntc_slope_lo["));
    assert_non_null(strstr(buf, "static const uint8_t ntc_index["));
    assert_non_null(strstr(buf, "#define NTC_READ_S8(p) ((int8_t)pgm_read_byte(p))"));
    assert_null(strstr(buf, "ntc_start[")); /* no start codes to compare with */
    assert_null(strstr(buf, "int32_t v")); /* no 32-bit sum */
    free(buf);
    bg_lut_release(&t);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(aligned_form_is_exact),
        cmocka_unit_test(form_follows_optimize),
        cmocka_unit_test(aligned_emission),
    };
    return cmocka_run_group_tests_name("lut_target", tests, NULL, NULL);
}
