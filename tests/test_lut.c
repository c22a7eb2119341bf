/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Firmware tables: breakpoint values against the divider law and the beta equation computed
** here; the emitted C of every strategy and value format compiled with the system compiler
** (-std=c99 -pedantic -Werror), run over every code, against bg_lut_eval and the reported
** error; the segment count against an exhaustive search on small ranges. */
#include <unistd.h>

#include "testutil.h"
#include "../src/lib/lut/lut_int.h"

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

/* Compile the emitted C of 't', run it over every code of the range and two beyond each end,
** and check every output against the library and the reported max and RMS error against the
** outputs and the independent temperatures. */
static void compile_and_compare(const bg_lut *t, const bg_lut_spec *s)
{
    char dir[] = "/tmp/bandgap-lut-XXXXXX", path[256], cmd[1024];
    int flt = t->format == BG_LUT_FLOAT;
    assert_non_null(mkdtemp(dir));
    snprintf(path, sizeof path, "%s/ntc.c", dir);
    FILE *f = fopen(path, "w");
    assert_non_null(f);
    assert_int_equal(bg_lut_emit_c(t, s, "ntc", "test", f, NULL), BG_OK);
    fclose(f);
    snprintf(path, sizeof path, "%s/main.c", dir);
    f = fopen(path, "w");
    assert_non_null(f);
    /* the sentinels by name: a code below NTC_CODE_LO prints "below", above NTC_CODE_HI
    ** "above" (the emitted file is included, so the names must exist and be constants) */
    fprintf(f, "#include <stdio.h>\n#include \"ntc.c\"\nint main(void) { long c; for (c = %ld; "
               "c <= %ld; c++) { %s v = ntc_lookup((uint32_t)c); if (v == NTC_CODE_BELOW_RANGE) "
               "puts(\"below\"); else if (v == NTC_CODE_ABOVE_RANGE) puts(\"above\"); else "
               "printf(\"%s\\n\", %sv); } return 0; }\n", t->code_lo - 2, t->code_hi + 2,
            flt ? "float" : "int32_t", flt ? "%.9g" : "%ld", flt ? "(double)" : "(long)");
    fclose(f);
    snprintf(cmd, sizeof cmd, "cc -std=c99 -Wall -Wextra -pedantic -Werror -Wconversion "
             "-ffp-contract=off -O2 -I%s %s/main.c -o %s/run && %s/run > %s/out.txt", dir, dir,
             dir, dir, dir);
    assert_int_equal(system(cmd), 0);
    /* the flash the table claims: the compiler's sizes of its const objects (nm -S) */
    snprintf(cmd, sizeof cmd, "cc -std=c99 -O2 -c %s/ntc.c -o %s/ntc.o && nm -S --radix=d %s/ntc.o | "
             "awk '$3 ~ /^[rR]$/ && $4 ~ /^ntc_/ { s += $2 + 0 } END { print s }' "
             "> %s/size.txt", dir, dir, dir, dir);
    assert_int_equal(system(cmd), 0);
    snprintf(path, sizeof path, "%s/size.txt", dir);
    f = fopen(path, "r");
    assert_non_null(f);
    unsigned long objbytes = 0;
    assert_int_equal(fscanf(f, "%lu", &objbytes), 1);
    fclose(f);
    assert_int_equal(objbytes, t->bytes);
    snprintf(path, sizeof path, "%s/out.txt", dir);
    f = fopen(path, "r");
    assert_non_null(f);
    double mx = 0.0, ss = 0.0, scale = t->counts_per_k;
    for (long c = t->code_lo - 2; c <= t->code_hi + 2; c++) {
        double v;
        int st;
        char word[64];
        assert_int_equal(fscanf(f, "%63s", word), 1);
        if (strcmp(word, "below") == 0 || strcmp(word, "above") == 0) {
            if (flt)
                bg_lut_eval_float(t, c, &st);
            else
                bg_lut_eval(t, c, &st);
            assert_int_equal(st, word[0] == 'b' ? BG_LUT_BELOW : BG_LUT_ABOVE);
            assert_true(word[0] == 'b' ? c < t->code_lo : c > t->code_hi);
            continue;
        }
        v = strtod(word, NULL);
        if (flt) {
            float want = bg_lut_eval_float(t, c, &st);
            assert_int_equal(st, BG_LUT_OK);
            assert_true((float)v == want);
            v = (double)want; /* the float itself, not its 9-digit decimal */
        } else {
            int32_t want = bg_lut_eval(t, c, &st);
            assert_int_equal(st, BG_LUT_OK);
            assert_true(v == (double)want);
            v /= scale;
        }
        double e = v + (s->kelvin ? 0.0 : 273.15) - t_indep((double)c);
        mx = fmax(mx, fabs(e)), ss += e * e;
    }
    fclose(f);
    /* the reported figures are the compiled code's, to the last digit printed */
    assert_close(t->max_err_k, mx, 1e-9, 1e-12);
    assert_close(t->rms_err_k, sqrt(ss / (double)(t->code_hi - t->code_lo + 1)), 1e-9, 1e-12);
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
    assert_int_equal(system(cmd), 0);
}

static void emitted_c_agrees(void **state)
{
    (void)state;
    static const bg_lut_format fmts[3] = { BG_LUT_DECI, BG_LUT_CENTI, BG_LUT_MILLI };
    static const unsigned shifts[3] = { 5, 3, 0 };
    for (int k = 0; k < 3; k++) {
        bg_lut_spec s = spec_10k(shifts[k], fmts[k]);
        bg_lut t = BG_LUT_INIT;
        s.kelvin = k == 2;
        assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
        compile_and_compare(&t, &s);
        bg_lut_release(&t);
    }
}

/* The sentinels name the ADC code; the emitted comment says what temperature each means on
** the circuit.  On the low-side divider a lower code is a lower R, so hotter (t_indep, the
** divider law and the beta equation); on the high side the other way round. */
static void sentinels_say_which_way(void **state)
{
    (void)state;
    for (int high = 0; high <= 1; high++) {
        bg_lut_spec s = spec_10k(4, BG_LUT_CENTI);
        bg_lut t = BG_LUT_INIT;
        char *text = NULL, want[160];
        size_t len = 0;
        if (high)
            s.circuit.kind = BG_CIRCUIT_DIVIDER_HIGH;
        assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
        /* the high-side divider reads 4096 - code of the low side's */
        double t_lo = t_indep(high ? 4096.0 - (double)t.code_lo : (double)t.code_lo);
        double t_hi = t_indep(high ? 4096.0 - (double)t.code_hi : (double)t.code_hi);
        int below_is_hot = t_lo > t_hi;
        assert_int_equal(below_is_hot, !high);
        FILE *f = open_memstream(&text, &len);
        assert_int_equal(bg_lut_emit_c(&t, &s, "ntc", "test", f, NULL), BG_OK);
        fclose(f);
        snprintf(want, sizeof want, " *   NTC_CODE_BELOW_RANGE: code < NTC_CODE_LO, on this "
                 "circuit\n *     %s than %s degC\n", below_is_hot ? "hotter" : "colder",
                 below_is_hot ? "125.000" : "-40.000");
        assert_non_null(strstr(text, want));
        snprintf(want, sizeof want, " *   NTC_CODE_ABOVE_RANGE: code > NTC_CODE_HI, on this "
                 "circuit\n *     %s than %s degC\n", below_is_hot ? "colder" : "hotter",
                 below_is_hot ? "-40.000" : "125.000");
        assert_non_null(strstr(text, want));
        assert_null(strstr(text, "NTC_BELOW"));
        assert_null(strstr(text, "NTC_ABOVE"));
        free(text);
        bg_lut_release(&t);
    }
}

/* Every strategy in every value format: the compiled C agrees with the library, the bound
** holds, and the segment tables are never longer than the on-curve minimum. */
static void strategies_and_formats(void **state)
{
    (void)state;
    static const bg_lut_strategy strat[3] = { BG_LUT_UNIFORM, BG_LUT_MINIMAL, BG_LUT_INDEXED };
    static const bg_lut_format fmts[5] = { BG_LUT_DECI, BG_LUT_CENTI, BG_LUT_MILLI, BG_LUT_Q,
                                           BG_LUT_FLOAT };
    static const double bound[5] = { 0.1, 0.05, 0.02, 0.03, 0.02 };
    for (int i = 0; i < 3; i++)
        for (int k = 0; k < 5; k++) {
            bg_lut_spec s = spec_10k(0, fmts[k]);
            bg_lut t = BG_LUT_INIT;
            bg_error err = BG_ERROR_INIT;
            s.strategy = strat[i], s.max_err_k = bound[k], s.qbits = 8;
            s.kelvin = k == 3, s.frac_bits = -1, s.oncurve_min = 1;
            /* a serial is any text: it must not end the provenance comment */
            s.source = "stored fit 1 of probe 'x*/ int broken;\n/*'";
            if (k == 4)
                s.circuit.kind = BG_CIRCUIT_DIVIDER_LOW; /* float on the same divider */
            int rc = bg_lut_build(&s, &t, &err);
            if (rc != BG_OK)
                print_error("strategy %d format %d: %s\n", i, k, err.msg);
            assert_int_equal(rc, BG_OK);
            assert_true(t.max_err_k <= bound[k]);
            if (strat[i] != BG_LUT_UNIFORM && fmts[k] != BG_LUT_FLOAT) {
                assert_true(t.oncurve_min > 0);
                assert_true(t.n <= t.oncurve_min);
            }
            compile_and_compare(&t, &s);
            bg_lut_release(&t);
        }
}

/* Float segments at tight bounds: the float rounding never takes the table past the bound
** (the build would refuse it), and the measured error uses most of it. */
static void float_segments_keep_the_bound(void **state)
{
    (void)state;
    static const double bounds[4] = { 0.0012, 0.003, 0.01, 0.04 };
    for (int b = 0; b < 4; b++) {
        bg_lut_spec s = spec_10k(0, BG_LUT_FLOAT);
        bg_lut t = BG_LUT_INIT;
        bg_error err = BG_ERROR_INIT;
        s.strategy = BG_LUT_MINIMAL, s.max_err_k = bounds[b], s.frac_bits = -1;
        s.circuit.adc_bits = 16;
        int rc = bg_lut_build(&s, &t, &err);
        if (rc != BG_OK)
            print_error("bound %g: %s\n", bounds[b], err.msg);
        assert_int_equal(rc, BG_OK);
        assert_true(t.max_err_k <= bounds[b]);
        assert_true(t.max_err_k >= 0.9 * bounds[b]);
        bg_lut_release(&t);
    }
}

/* ---- exhaustive checks of the segment search on small ranges ---- */

/* Bands computed here: the outputs within 'e' of the beta curve at each code of an 8-bit
** divider (10k on 10k), in 'cpk' counts per K. */
static void test_bands(long lo, long n, double cpk, double e, bgi_band *b)
{
    for (long c = 0; c < n; c++) {
        double x = (double)(lo + c) / 256.0, r = 10000.0 * x / (1.0 - x);
        double t = 1.0 / (1.0 / 298.15 + log(r / 10000.0) / 3950.0) - 273.15;
        b[c].lo = (long long)ceil(cpk * (t - e));
        b[c].hi = (long long)floor(cpk * (t + e));
    }
}

/* Brute force: is there a line (Y, m) at 'frac' bits over codes s .. e?  Every slope from -M to
** M, and for each the interval of starts, code by code. */
static int brute_feasible(const bgi_band *b, long s, long e, unsigned frac, long long yoff,
                          long long M)
{
    long long one = 1LL << frac;
    for (long long m = -M; m <= M; m++) {
        long long g = -(1LL << 62), h = 1LL << 62;
        for (long c = s; c <= e; c++) {
            long long lo = (b[c].lo - yoff) * one - m * (c - s);
            long long hi = (b[c].hi - yoff + 1) * one - 1 - m * (c - s);
            g = lo > g ? lo : g;
            h = hi < h ? hi : h;
        }
        if (g <= h)
            return 1;
    }
    return 0;
}

static void segments_are_minimal(void **state)
{
    (void)state;
    /* small ranges on an 8-bit ADC around the curve's ends and middle; bounds that need a few
    ** segments; 2 and 3 fractional bits so that the brute force stays small */
    static const struct { long lo, n; double cpk, e; unsigned frac; } cases[] = {
        { 20, 40, 10.0, 0.21, 2 }, { 200, 40, 10.0, 0.17, 3 }, { 100, 60, 10.0, 0.06, 2 },
        { 225, 25, 100.0, 0.23, 1 }, { 60, 48, 10.0, 0.12, 3 },
    };
    for (size_t k = 0; k < sizeof cases / sizeof cases[0]; k++) {
        long n = cases[k].n;
        bgi_band b[64];
        test_bands(cases[k].lo, n, cases[k].cpk, cases[k].e, b);
        bg_lut t = BG_LUT_INIT;
        t.code_lo = cases[k].lo, t.code_hi = cases[k].lo + n - 1;
        assert_int_equal(bgi_lut_segments(&t, b, (int)cases[k].frac, NULL), BG_OK);
        long long yoff = t.yoff, top = 0, M;
        for (long c = 0; c < n; c++)
            top = b[c].hi > top ? b[c].hi : top;
        M = (top - yoff + 2) << cases[k].frac;
        /* the exact test agrees with the brute force on every sub-range */
        int feas[64][64];
        for (long s = 0; s < n; s++)
            for (long e = s; e < n; e++) {
                long long y, m;
                feas[s][e] = brute_feasible(b, s, e, cases[k].frac, yoff, M);
                assert_int_equal(bgi_lut_feasible(b, s, e, cases[k].frac, yoff, &y, &m),
                                 feas[s][e]);
            }
        /* the fewest segments over all segmentations (dynamic programming on the brute
        ** force), against the greedy count */
        int best[65];
        best[0] = 0;
        for (long e = 0; e < n; e++) {
            best[e + 1] = 1 << 20;
            for (long s = 0; s <= e; s++)
                if (feas[s][e] && best[s] + 1 < best[e + 1])
                    best[e + 1] = best[s] + 1;
        }
        assert_true(best[n] >= 3); /* the case is not trivial */
        assert_int_equal((int)t.n, best[n]);
        /* the segments' outputs lie in the bands */
        t.strategy = BG_LUT_MINIMAL;
        for (long c = 0; c < n; c++) {
            int st;
            int32_t v = bg_lut_eval(&t, t.code_lo + c, &st);
            assert_true(v >= b[c].lo && v <= b[c].hi);
        }
        bg_lut_release(&t);
    }
}

/* Brute force for values on the curve: every subset of breakpoints. */
/* The on-curve count costs time quadratic in the codes: by default (BG_LUT_ONCURVE_AUTO) it is
** counted up to BG_LUT_ONCURVE_AUTO_CODES codes, above that left out and said so; asked for
** (1) it is counted at any size, and never (0) is not reported as left out.  The sizes are
** the 10k divider at 12 bits (3855 codes) and at 15 bits (about 30,800 codes). */
static void oncurve_count_by_size(void **state)
{
    (void)state;
    static const struct { unsigned bits; int ask, counted, skipped; } cases[] = {
        { 12, BG_LUT_ONCURVE_AUTO, 1, 0 }, { 15, BG_LUT_ONCURVE_AUTO, 0, 1 },
        { 15, 1, 1, 0 }, { 15, 0, 0, 0 },
    };
    for (size_t k = 0; k < sizeof cases / sizeof cases[0]; k++) {
        bg_lut_spec s = spec_10k(0, BG_LUT_CENTI);
        bg_lut t = BG_LUT_INIT, t2 = BG_LUT_INIT;
        size_t bytes[3];
        s.circuit.adc_bits = cases[k].bits;
        s.strategy = BG_LUT_MINIMAL, s.max_err_k = 0.05, s.frac_bits = -1;
        s.oncurve_min = cases[k].ask;
        assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
        assert_int_equal(t.code_hi - t.code_lo + 1 > BG_LUT_ONCURVE_AUTO_CODES,
                         cases[k].bits == 15);
        assert_int_equal(t.oncurve_min > 0, cases[k].counted);
        assert_int_equal(t.oncurve_skipped, cases[k].skipped);
        if (cases[k].counted)
            assert_true(t.n <= t.oncurve_min);
        /* the smallest table carries the same answer */
        assert_int_equal(bg_lut_build_smallest(&s, &t2, bytes, NULL), BG_OK);
        assert_int_equal(t2.strategy != BG_LUT_UNIFORM, 1);
        assert_int_equal(t2.oncurve_min, t.oncurve_min);
        assert_int_equal(t2.oncurve_skipped, cases[k].skipped);
        bg_lut_release(&t);
        bg_lut_release(&t2);
    }
}

static void oncurve_minimum_exhaustive(void **state)
{
    (void)state;
    static const struct { long lo, n; double e; } cases[] = {
        { 30, 18, 0.15 }, { 120, 18, 0.009 }, { 215, 16, 0.3 }, { 60, 17, 0.08 },
    };
    for (size_t k = 0; k < sizeof cases / sizeof cases[0]; k++) {
        long n = cases[k].n;
        bgi_band b[32];
        long long on[32];
        test_bands(cases[k].lo, n, 100.0, cases[k].e, b);
        for (long c = 0; c < n; c++) {
            double x = (double)(cases[k].lo + c) / 256.0, r = 10000.0 * x / (1.0 - x);
            on[c] = llround(100.0 * (1.0 / (1.0 / 298.15 + log(r / 10000.0) / 3950.0) - 273.15));
        }
        int fewest = 1 << 20;
        for (unsigned long mask = 0; mask < (1ul << (n - 2)); mask++) {
            /* breakpoints: the ends and the codes whose bit is set */
            int cnt = 2, ok = 1;
            long prev = 0;
            for (long c = 1; c < n && ok; c++) {
                if (c < n - 1 && !(mask >> (c - 1) & 1))
                    continue;
                for (long d = prev + 1; d < c; d++) {
                    long long num = (on[c] - on[prev]) * (d - prev), den = c - prev;
                    long long q = num >= 0 ? (num + den / 2) / den : -((-num + den / 2) / den);
                    long long o = on[prev] + q;
                    if (o < b[d].lo || o > b[d].hi)
                        ok = 0;
                }
                if (c < n - 1)
                    cnt++;
                prev = c;
            }
            if (ok && cnt < fewest)
                fewest = cnt;
        }
        if (fewest < 3)
            print_error("case %zu: %d\n", k, fewest);
        assert_true(fewest >= 3);
        assert_int_equal((int)bgi_lut_oncurve_min(on, b, (size_t)n), fewest);
    }
}

/* The index: each bucket changes segment at most once, so one comparison finds it; checked
** here code by code against a plain search. */
static void index_is_exact(void **state)
{
    (void)state;
    static const double bounds[3] = { 0.02, 0.05, 0.2 };
    for (int b = 0; b < 3; b++) {
        bg_lut_spec s = spec_10k(0, BG_LUT_CENTI);
        bg_lut t = BG_LUT_INIT;
        s.strategy = BG_LUT_INDEXED, s.max_err_k = bounds[b], s.frac_bits = -1;
        assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
        assert_true(t.nidx < (size_t)(t.code_hi - t.code_lo + 1));
        assert_true(t.icmp == 1 || t.icmp == 2);
        for (long c = t.code_lo; c <= t.code_hi; c++) {
            size_t seg = 0;
            while (t.sx[seg + 1] <= c)
                seg++;
            size_t i = t.idx[(c - t.code_lo) >> t.ishift];
            assert_true(seg >= i && seg <= i + t.icmp);
        }
        /* a coarser index would need more comparisons somewhere (the shift is the largest
        ** for its count), counted here bucket by bucket */
        if (t.ishift < 24) {
            long bucket = 1L << (t.ishift + 1);
            int broken = 0;
            for (long b0 = 0; b0 <= t.code_hi - t.code_lo && !broken; b0 += bucket) {
                long changes = 0;
                for (size_t j = 1; j < t.n; j++)
                    if (t.sx[j] - t.code_lo > b0 && t.sx[j] - t.code_lo <= b0 + bucket - 1)
                        changes++;
                broken = changes > (long)t.icmp;
            }
            assert_true(broken);
        }
        bg_lut_release(&t);
    }
}

/* The automatic choice: the smallest of the three tables built one by one, ties to uniform
** then indexed; the sizes it reports are theirs. */
static void smallest_is_chosen(void **state)
{
    (void)state;
    static const double bounds[5] = { 0.5, 0.1, 0.05, 0.02, 0.05 };
    int chosen[3] = { 0, 0, 0 };
    for (int b = 0; b < 5; b++) {
        size_t bytes[3], each[3];
        bg_lut_spec s = spec_10k(0, BG_LUT_CENTI);
        bg_lut t = BG_LUT_INIT;
        s.max_err_k = bounds[b], s.frac_bits = -1;
        if (b == 4) /* a narrow range, where a uniform table is the smallest */
            s.t_lo_k = 273.15 - 15.0, s.t_hi_k = 273.15 + 55.0, s.circuit.adc_bits = 10;
        for (int k = 0; k < 3; k++) {
            bg_lut u = BG_LUT_INIT;
            s.strategy = (bg_lut_strategy)k;
            assert_int_equal(bg_lut_build(&s, &u, NULL), BG_OK);
            each[k] = u.bytes;
            bg_lut_release(&u);
        }
        assert_int_equal(bg_lut_build_smallest(&s, &t, bytes, NULL), BG_OK);
        size_t least = each[0];
        bg_lut_strategy want = BG_LUT_UNIFORM;
        if (each[BG_LUT_INDEXED] < least)
            least = each[BG_LUT_INDEXED], want = BG_LUT_INDEXED;
        if (each[BG_LUT_MINIMAL] < least)
            least = each[BG_LUT_MINIMAL], want = BG_LUT_MINIMAL;
        for (int k = 0; k < 3; k++)
            assert_int_equal(bytes[k], each[k]);
        assert_int_equal(t.strategy, want);
        assert_int_equal(t.bytes, least);
        assert_true(t.max_err_k <= bounds[b]);
        chosen[t.strategy]++;
        bg_lut_release(&t);
    }
    assert_true(chosen[BG_LUT_UNIFORM] > 0 && chosen[BG_LUT_MINIMAL] > 0);
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
    bg_budget_opts o = { cov, 0.001, 3.3, 2e-3, 0.0 }; /* fit_k 0: k = 2 */
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
    /* with a coverage factor given, U = k u: k = 2.4288090813825196, Student's t at 95.45 % for
    ** 7 degrees of freedom (scipy.stats.t.ppf(0.97725, 7), scipy 1.10.1, computed 2026-12-02) */
    bg_budget_opts o7 = o;
    bg_budget_row row7, worst7;
    o7.fit_k = 2.4288090813825196;
    assert_int_equal(bg_lut_budget(&s, &t, &o7, &at, 1, &row7, &worst7, NULL), BG_OK);
    assert_close(row7.fit_k, 2.4288090813825196 * T * T / (B * 10000.0), 1e-9, 0);
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

/* Tables for a target (lut --target): the names both ways; segments at 8 fractional bits
** with every slope in int16_t, compiled here and checked code by code against the beta
** equation computed here and against the flash they claim (the narrow slopes: 6 bytes a
** segment beside the start); the AVR file reads its tables from flash with sign-keeping
** reads (the firmware check in tests/firmware runs it on an ATmega328P). */
static void targets(void **state)
{
    (void)state;
    const char *names[] = { "host", "avr", "cortex-m0", "cortex-m4" };
    for (int k = 0; k < 4; k++) {
        bg_lut_target tg = BG_LUT_HOST;
        assert_int_equal(bg_lut_target_parse(names[k], &tg, NULL), BG_OK);
        assert_int_equal((int)tg, k);
        assert_string_equal(bg_lut_target_name(tg), names[k]);
    }
    bg_lut_target bad;
    bg_error err = BG_ERROR_INIT;
    assert_int_equal(bg_lut_target_parse("pic16", &bad, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "avr"));
    for (int k = 1; k < 4; k++)
        for (int st = BG_LUT_MINIMAL; st <= BG_LUT_INDEXED; st++) {
            bg_lut_spec s = spec_10k(0, BG_LUT_CENTI);
            bg_lut t = BG_LUT_INIT, h = BG_LUT_INIT;
            s.strategy = (bg_lut_strategy)st, s.max_err_k = 0.05, s.frac_bits = -1;
            assert_int_equal(bg_lut_build(&s, &h, NULL), BG_OK);
            s.target = (bg_lut_target)k;
            /* the minimal table's compact form (by flash the chained form is smaller:
            ** tests/test_lut_target.c checks that one) */
            s.optimize = st == BG_LUT_MINIMAL ? BG_LUT_OPT_TIME : BG_LUT_OPT_FLASH;
            assert_int_equal(bg_lut_build(&s, &t, NULL), BG_OK);
            assert_int_equal(h.narrow, 0);
            assert_int_equal(t.narrow, 1);
            assert_int_equal(t.frac, 8);
            for (size_t i = 0; i < t.n; i++)
                assert_true(t.sm[i] >= -32768 && t.sm[i] <= 32767);
            assert_true(t.max_err_k <= 0.05 + 1e-12);
            assert_true(t.bytes < h.bytes);
            if (k != BG_LUT_AVR) {
                compile_and_compare(&t, &s);
            } else {
                char *buf = NULL;
                size_t len = 0;
                FILE *f = open_memstream(&buf, &len);
                assert_int_equal(bg_lut_emit_c(&t, &s, "ntc", "test", f, NULL), BG_OK);
                fclose(f);
                assert_non_null(strstr(buf, "#include <avr/pgmspace.h>"));
                assert_non_null(strstr(buf, "#define NTC_ATTR PROGMEM"));
                assert_non_null(strstr(buf, "#define NTC_READ_S16(p) ((int16_t)pgm_read_word(p))"));
                assert_non_null(strstr(buf, "static const int16_t ntc_slope["));
                free(buf);
            }
            bg_lut_release(&t), bg_lut_release(&h);
        }
    /* the automatic choice on the AVR: the least flash (table and code) is the minimal
    ** table, the least time the indexed one in its aligned form; the host reports no cost */
    bg_lut_spec s = spec_10k(0, BG_LUT_CENTI);
    bg_lut t = BG_LUT_INIT;
    size_t sizes[3];
    bg_lut_target_cost c;
    s.max_err_k = 0.05, s.frac_bits = -1, s.target = BG_LUT_AVR;
    assert_int_equal(bg_lut_build_smallest(&s, &t, sizes, NULL), BG_OK);
    assert_int_equal(t.strategy, BG_LUT_MINIMAL);
    assert_int_equal(bg_lut_cost_on(&t, BG_LUT_AVR, &c, NULL), BG_OK);
    assert_int_equal(c.flash_bytes, c.table_bytes + c.code_bytes);
    assert_int_equal(c.table_bytes, t.bytes);
    assert_string_equal(c.unit, "cycles");
    bg_lut_release(&t);
    s.optimize = BG_LUT_OPT_TIME;
    assert_int_equal(bg_lut_build_smallest(&s, &t, sizes, NULL), BG_OK);
    assert_int_equal(t.strategy, BG_LUT_INDEXED); /* the aligned form, faster than uniform */
    assert_int_equal(t.aligned, 1);
    assert_int_equal(bg_lut_cost_on(&t, BG_LUT_HOST, &c, NULL), BG_OK);
    assert_true(c.unit == NULL && c.code_bytes == 0 && c.per_call == 0.0);
    bg_lut_release(&t);
}

int main(void)
{
    gsl_set_error_handler(test_gsl_handler);
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(breakpoints_and_error),
        cmocka_unit_test(emitted_c_agrees),
        cmocka_unit_test(sentinels_say_which_way),
        cmocka_unit_test(strategies_and_formats),
        cmocka_unit_test(segments_are_minimal),
        cmocka_unit_test(oncurve_minimum_exhaustive),
        cmocka_unit_test(oncurve_count_by_size),
        cmocka_unit_test(index_is_exact),
        cmocka_unit_test(smallest_is_chosen),
        cmocka_unit_test(float_segments_keep_the_bound),
        cmocka_unit_test(bad_requests),
        cmocka_unit_test(budget_by_hand),
        cmocka_unit_test(targets),
    };
    return cmocka_run_group_tests_name("lut", tests, NULL, NULL);
}
