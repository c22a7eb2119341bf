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

/* ---- the minimal table's chained form (lut_chain.c) ---- */

static bg_lut_spec spec_chain(unsigned bits, bg_lut_format fmt, unsigned qbits, bg_lut_target tg)
{
    bg_lut_spec s = spec_avr(bits, fmt, qbits);
    s.strategy = BG_LUT_MINIMAL, s.optimize = BG_LUT_OPT_FLASH, s.target = tg;
    return s;
}

static long fdiv256(long a)
{
    return a >= 0 ? a / 256 : -((-a + 255) / 256);
}

/* The emitted AVR walk at one code, redone here from the segments with the registers of its
** assembly: the value and the offset left in 16 bits, the fraction in 8, the length in a
** byte, the slope as a signed high byte (mulsu) and a low byte (mul). */
static long walk(const bg_lut *t, long code)
{
    long start = 256L * t->yoff + t->sy[0];
    long y = fdiv256(start) & 0xffff, frac = start - 256 * fdiv256(start);
    long d = (code - t->code_lo) & 0xffff;
    for (size_t i = 0; i < t->n; i++) {
        long len = i + 1 < t->n ? t->sx[i + 1] - t->sx[i] : t->code_hi - t->sx[i];
        long mh = fdiv256(t->sm[i]), ml = t->sm[i] - 256 * mh;
        assert_true(len >= 1 && len <= 255);
        assert_true(mh >= -128 && mh <= 127 && ml >= 0 && ml <= 255);
        long x = d < len ? d : len, q = frac + ml * x, p = mh * x;
        assert_true(q <= 65280 && in16(p));
        y = (y + p + (q >> 8)) & 0xffff;
        if (d <= len)
            return y >= 32768 ? y - 65536 : y;
        frac = q & 255, d -= len;
    }
    fail_msg("the walk ran past the last segment at code %ld", code);
    return 0;
}

static void check_chained(const bg_lut_spec *s, double bound)
{
    bg_lut t = BG_LUT_INIT;
    assert_int_equal(bg_lut_build(s, &t, NULL), BG_OK);
    assert_int_equal(t.chained, 1);
    assert_int_equal(t.aligned, 0);
    assert_int_equal(t.frac, 8);
    assert_int_equal(t.bytes, t.n * 3);
    /* continuous: each segment starts at the very state the previous one reached */
    for (size_t i = 0; i + 1 < t.n; i++)
        assert_int_equal((long)t.sy[i + 1], (long)t.sy[i] + (long)t.sm[i] * (t.sx[i + 1] - t.sx[i]));
    assert_int_equal(t.sx[0], t.code_lo);
    double mx = 0.0;
    size_t seg = 0;
    for (long c = t.code_lo; c <= t.code_hi; c++) {
        int st;
        while (t.sx[seg + 1] <= c)
            seg++;
        long v = bg_lut_eval(&t, c, &st);
        assert_int_equal(st, BG_LUT_OK);
        assert_int_equal(walk(&t, c), v);
        /* the same value from the segment's own line (floor of a non-negative sum) */
        long line = (long)t.sy[seg] + (long)t.sm[seg] * (c - t.sx[seg]);
        assert_true(line >= 0);
        assert_int_equal((long)t.yoff + (line >> 8), v);
        double e = (double)v / t.counts_per_k + 273.15 - t_indep((double)c, s->circuit.adc_bits);
        mx = fmax(mx, fabs(e));
    }
    assert_true(mx <= bound + 1e-9);
    assert_close(t.max_err_k, mx, 1e-9, 0);
    bg_lut_release(&t);
}

/* The chained form at 12 and 14 bits (at 16 bits its 3 bytes a segment lose to the compact
** form's 33 segments), 0.01 and 0.1 degC, Q8 and Q4, on the AVR and the Cortex-M:
** the walk redone here equals bg_lut_eval at every code, so does each segment's line, and
** the error at every code, against the beta equation and the divider law computed here,
** stays within the bound. */
static void chained_form_is_exact(void **state)
{
    (void)state;
    static const unsigned bits[2] = { 12, 14 };
    for (int b = 0; b < 2; b++) {
        bg_lut_spec s = spec_chain(bits[b], BG_LUT_CENTI, 0, BG_LUT_AVR);
        check_chained(&s, 0.05);
    }
    bg_lut_spec s = spec_chain(12, BG_LUT_DECI, 0, BG_LUT_AVR);
    check_chained(&s, 0.05);
    s = spec_chain(12, BG_LUT_Q, 8, BG_LUT_CORTEX_M0);
    check_chained(&s, 0.05);
    s = spec_chain(12, BG_LUT_Q, 4, BG_LUT_CORTEX_M4);
    s.max_err_k = 0.0625;
    check_chained(&s, 0.0625);
}

/* Where the chained form is taken: by flash on a target core (the reference table: 33
** segments, 99 bytes, within 256 bytes of AVR flash with its code by the cost model, which
** tests/firmware/run.sh holds to the measurement); by time, or a cycle worth many bytes, the
** compact form; never on the host, for floats or for values beyond int16_t. */
static void chained_follows_optimize(void **state)
{
    (void)state;
    bg_lut_spec s = spec_chain(12, BG_LUT_CENTI, 0, BG_LUT_AVR);
    bg_lut t = BG_LUT_INIT, compact = BG_LUT_INIT;
    bg_lut_target_cost c, cc;
    assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
    assert_int_equal(t.chained, 1);
    assert_true(t.n <= 33 && t.bytes == 3 * t.n);
    assert_int_equal(bg_lut_cost_on(&t, BG_LUT_AVR, &c, NULL), BG_OK);
    assert_int_equal(c.flash_bytes, t.bytes + c.code_bytes);
    assert_true(c.flash_bytes <= 256);
    s.optimize = BG_LUT_OPT_TIME;
    assert_int_equal(bg_lut_build(&s, &compact, NULL), BG_OK);
    assert_int_equal(compact.chained, 0);
    assert_int_equal(compact.n, 30); /* the exact minimum with free starts */
    assert_int_equal(bg_lut_cost_on(&compact, BG_LUT_AVR, &cc, NULL), BG_OK);
    assert_true(cc.per_call < c.per_call && c.flash_bytes < cc.flash_bytes);
    bg_lut_release(&t), bg_lut_release(&compact);
    s.optimize = BG_LUT_OPT_WEIGHTED, s.time_weight = 100.0;
    assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
    assert_int_equal(t.chained, 0);
    bg_lut_release(&t);
    s.time_weight = 0.01;
    assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
    assert_int_equal(t.chained, 1);
    bg_lut_release(&t);
    s = spec_chain(12, BG_LUT_CENTI, 0, BG_LUT_HOST);
    assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
    assert_int_equal(t.chained, 0);
    bg_lut_release(&t);
    s = spec_chain(12, BG_LUT_MILLI, 0, BG_LUT_AVR); /* up to 125000 counts */
    assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
    assert_int_equal(t.chained, 0);
    bg_lut_release(&t);
    s = spec_chain(12, BG_LUT_FLOAT, 0, BG_LUT_CORTEX_M0);
    assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
    assert_int_equal(t.chained, 0);
    bg_lut_release(&t);
    s = spec_chain(12, BG_LUT_CENTI, 0, BG_LUT_CORTEX_M0);
    assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
    assert_int_equal(t.chained, 1);
    bg_lut_release(&t);
    s = spec_chain(16, BG_LUT_CENTI, 0, BG_LUT_AVR); /* 33 compact segments are smaller */
    assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
    assert_int_equal(t.chained, 0);
    bg_lut_release(&t);
}

/* The emitted files of the chained form: one byte table, the assembly walk for an AVR with
** the multiplier and the C walk otherwise; on the Cortex-M the C walk alone. */
static void chained_emission(void **state)
{
    (void)state;
    bg_lut_spec s = spec_chain(12, BG_LUT_CENTI, 0, BG_LUT_AVR);
    bg_lut t = BG_LUT_INIT;
    char *buf = NULL;
    size_t len = 0;
    char want[64];
    assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
    FILE *f = open_memstream(&buf, &len);
    assert_int_equal(bg_lut_emit_c(&t, &s, "ntc", "test", f, NULL), BG_OK);
    fclose(f);
    snprintf(want, sizeof want, "static const uint8_t ntc_chain[%zu] NTC_ATTR", 3 * t.n);
    assert_non_null(strstr(buf, want));
    assert_non_null(strstr(buf, "defined(__AVR_HAVE_MUL__) && !defined(NTC_PORTABLE_C)"));
    assert_non_null(strstr(buf, "mulsu r19, r18"));
    assert_non_null(strstr(buf, "#define NTC_READ_U8(p) (pgm_read_byte(p))"));
    assert_null(strstr(buf, "ntc_start["));
    free(buf), buf = NULL;
    bg_lut_release(&t);
    s.target = BG_LUT_CORTEX_M0;
    assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
    f = open_memstream(&buf, &len);
    assert_int_equal(bg_lut_emit_c(&t, &s, "ntc", "test", f, NULL), BG_OK);
    fclose(f);
    assert_non_null(strstr(buf, "ntc_chain["));
    assert_null(strstr(buf, "__asm__"));
    free(buf);
    bg_lut_release(&t);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(aligned_form_is_exact),
        cmocka_unit_test(form_follows_optimize),
        cmocka_unit_test(aligned_emission),
        cmocka_unit_test(chained_form_is_exact),
        cmocka_unit_test(chained_follows_optimize),
        cmocka_unit_test(chained_emission),
    };
    return cmocka_run_group_tests_name("lut_target", tests, NULL, NULL);
}
