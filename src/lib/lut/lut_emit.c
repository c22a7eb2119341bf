/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The emitted C99: a generated-file line, the provenance block, the tables and one lookup
** function whose arithmetic bg_lut_eval / bg_lut_eval_float repeat exactly.  Only <stdint.h>,
** 32-bit arithmetic through int32_t/uint32_t (safe with a 16-bit int), right shifts of
** unsigned values only, and hooks to place the tables in program memory. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "bandgap/lut.h"
#include "bandgap/units.h"
#include "lut_int.h"

static int ident_ok(const char *s)
{
    if (!s || !*s || (*s >= '0' && *s <= '9'))
        return 0;
    for (; *s; s++)
        if (!((*s >= 'a' && *s <= 'z') || (*s >= 'A' && *s <= 'Z') || (*s >= '0' && *s <= '9') ||
              *s == '_'))
            return 0;
    return 1;
}

/* Text inside the provenance comment: no comment start or end, no line breaks, ASCII only,
** and no trigraph (gcc -Wall reports one that splices lines, "??/" before a newline). */
static int comment_char(unsigned char ch)
{
    return ch < 0x20 || ch >= 0x7f ? '?' : ch;
}

static void comment_text(FILE *f, const char *s)
{
    int prev = 0;
    for (; *s; s++) {
        unsigned char ch = (unsigned char)*s;
        int out = comment_char(ch);
        if ((ch == '*' && s[1] == '/') || (ch == '/' && s[1] == '*')) {
            fputc(ch, f), fputc(' ', f), prev = ' ';
            continue;
        }
        if (out == '?' && prev == '?' && s[1] &&
            strchr("=/'()!<>-", comment_char((unsigned char)s[1])))
            fputc(' ', f);
        fputc(out, f), prev = out;
    }
}

static void value_format(const bg_lut_spec *s, char *buf, size_t n)
{
    static const char *fmt[] = { "0.1", "0.01", "0.001" };
    const char *unit = s->kelvin ? "K" : "degC";
    if (s->format == BG_LUT_FLOAT)
        snprintf(buf, n, "single-precision float, %s", unit);
    else if (s->format == BG_LUT_Q)
        snprintf(buf, n, "Q%u fixed point, 1/%lu %s per count", s->qbits, 1ul << s->qbits, unit);
    else
        snprintf(buf, n, "%s %s per count", fmt[s->format], unit);
}

/* Which way the temperature runs with the code on this circuit: the sentinels name the code,
** and the comment says what temperature each means (on a low-side divider, a code below
** the range is hotter than the range). */
static void sentinel_doc(const bg_lut *t, const bg_lut_spec *s, const char *up, FILE *f)
{
    int st;
    int falling = bg_lut_value(t, t->code_lo, &st) > bg_lut_value(t, t->code_hi, &st);
    double hot_c = s->t_hi_k - BG_ZERO_C_K, cold_c = s->t_lo_k - BG_ZERO_C_K;
    fprintf(f, " * Valid inside the range only.  Outside it the function returns a sentinel, never\n"
               " * a clamped temperature; the sentinels are named after the ADC code, not the\n"
               " * temperature:\n"
               " *   %s_CODE_BELOW_RANGE: code < %s_CODE_LO, on this circuit\n"
               " *     %s than %.3f degC\n"
               " *   %s_CODE_ABOVE_RANGE: code > %s_CODE_HI, on this circuit\n"
               " *     %s than %.3f degC\n"
               " * (or a sensor that is open or shorted: check for both before using a value).\n",
            up, up, falling ? "hotter" : "colder", falling ? hot_c : cold_c, up, up,
            falling ? "colder" : "hotter", falling ? cold_c : hot_c);
}

/* The range test of the indexed and chained lookups: one unsigned comparison, then which
** sentinel. */
static void range_test(const char *up, FILE *f)
{
    fprintf(f, "    if (code - (uint32_t)%s_CODE_LO > (uint32_t)(%s_CODE_HI - %s_CODE_LO))\n"
               "        return code < (uint32_t)%s_CODE_LO ? %s_CODE_BELOW_RANGE : "
               "%s_CODE_ABOVE_RANGE;\n", up, up, up, up, up, up);
}

static void provenance(const bg_lut *t, const bg_lut_spec *s, const char *up, FILE *f)
{
    char name[16], vf[64];
    const bg_circuit *c = &s->circuit;
    bg_model_name(&s->model, name, sizeof name);
    value_format(s, vf, sizeof vf);
    if (t->strategy == BG_LUT_UNIFORM)
        fprintf(f, "/*\n * ADC code -> temperature, %s, linear interpolation between\n"
                   " * breakpoints every %lu codes (uniform table).\n", vf, 1ul << t->shift);
    else if (t->chained)
        fprintf(f, "/*\n * ADC code -> temperature, %s, %zu straight segments\n"
                   " * (minimal table, chained form: each segment starts where the previous one\n"
                   " * ends and spans at most 255 codes; read by a walk from the first), within\n"
                   " * %.6g K at every code.\n", vf, t->n, s->max_err_k);
    else if (t->aligned)
        fprintf(f, "/*\n * ADC code -> temperature, %s, %zu straight segments\n"
                   " * (indexed table, aligned form: every segment starts on a grid of %lu codes\n"
                   " * and spans at most 256, so the index alone finds it), the fewest on that\n"
                   " * grid that keep every code within %.6g K.\n", vf, t->n, 1ul << t->ishift,
                s->max_err_k);
    else
        fprintf(f, "/*\n * ADC code -> temperature, %s, %zu straight segments\n"
                   " * (%s table%s), the fewest that keep every code within %.6g K.\n", vf,
                t->n, bg_lut_strategy_name(t->strategy),
                t->strategy == BG_LUT_INDEXED ? ", found through an index" : ", binary search",
                s->max_err_k);
    fprintf(f, " * model %s (", name);
    comment_text(f, s->source ? s->source : "given inline");
    fprintf(f, "):");
    for (size_t i = 0; i < bg_model_npar(&s->model); i++)
        fprintf(f, " %s=%.17g", bg_model_coef_name(&s->model, i), s->model.coef[i]);
    if (bg_model_flags(&s->model) & BG_MODEL_HAS_T0)
        fprintf(f, " T0=%.17g K", s->model.t0_k);
    /* the kind's held parameters (a Chebyshev series' x_lo and x_hi, a junction pair's current
    ** ratio p, an IC code's lsb_k): with the coefficients, all the table is rebuilt from */
    for (size_t i = 0; i < bg_model_nparam(&s->model); i++)
        fprintf(f, " %s=%.17g", bg_model_param_name(&s->model, i), bg_model_param(&s->model, i));
    char cd[256];
    fprintf(f, "\n * circuit: %s", bg_circuit_describe(c, cd, sizeof cd));
    fprintf(f, "\n * range: %.3f .. %.3f degC, codes %ld .. %ld\n", s->t_lo_k - BG_ZERO_C_K,
            s->t_hi_k - BG_ZERO_C_K, t->code_lo, t->code_hi);
    if (s->stamp) {
        fputs(" * generated at ", f);
        comment_text(f, s->stamp);
        fputs("\n", f);
    }
    fprintf(f, " * measured over every code against the model: max |error| %.6f K (at code %ld),"
               "\n * RMS %.6f K; table and output rounding only (not the ADC, the fit or the\n"
               " * components).\n", t->max_err_k, t->worst_code, t->rms_err_k);
    sentinel_doc(t, s, up, f);
    if (t->format == BG_LUT_FLOAT)
        fprintf(f, " * Float arithmetic one operation at a time: on targets with a fused\n"
                   " * multiply-add, compile with -ffp-contract=off to get these exact values.\n");
    if (s->target != BG_LUT_HOST)
        fprintf(f, " * Written for %s%s.\n", bg_lut_target_name(s->target),
                s->target == BG_LUT_AVR ? ": tables in program memory, read with pgm_read_*"
                                          " (avr-libc)" : "");
    fprintf(f, " */\n#include <stdint.h>\n%s\n", s->target == BG_LUT_AVR ?
            "#include <avr/pgmspace.h>\n" : "");
    if (s->target == BG_LUT_AVR)
        fprintf(f, "#ifndef %s_ATTR\n#define %s_ATTR PROGMEM\n#endif\n", up, up);
    else
        fprintf(f, "#ifndef %s_ATTR\n#define %s_ATTR /* e.g. PROGMEM on AVR */\n#endif\n", up,
                up);
}

/* A read hook: (*(p)) with the AVR reading named in a comment, or on the AVR that reading
** with the cast that keeps the entry's type ('cast', "" for none). */
static void hook(FILE *f, const bg_lut_spec *s, const char *up, const char *name,
                 const char *avr, const char *cast)
{
    if (s->target == BG_LUT_AVR)
        fprintf(f, "#ifndef %s_%s\n#define %s_%s(p) (%s%s(p))\n#endif\n", up, name, up, name,
                cast, avr);
    else
        fprintf(f, "#ifndef %s_%s\n#define %s_%s(p) (*(p)) /* e.g. %s%s(p) on AVR */\n#endif\n",
                up, name, up, name, cast, avr);
}

static void sentinels(const bg_lut *t, const char *up, FILE *f)
{
    int flt = t->format == BG_LUT_FLOAT;
    fprintf(f, "#define %s_CODE_BELOW_RANGE %s /* code < %s_CODE_LO */\n", up,
            flt ? "(-3.40282347e+38f)" : "((int32_t)-2147483647L - 1)", up);
    fprintf(f, "#define %s_CODE_ABOVE_RANGE %s /* code > %s_CODE_HI */\n\n", up,
            flt ? "(3.40282347e+38f)" : "((int32_t)2147483647L)", up);
}

static void longs(FILE *f, const char *decl, size_t n, const long *v, const int32_t *w,
                  const float *x, const uint16_t *u)
{
    fprintf(f, "%s = {\n", decl);
    for (size_t i = 0; i < n; i++) {
        const char *sep = i + 1 == n ? "\n" : i % 8 == 7 ? ",\n" : ",";
        const char *ind = i % 8 == 0 ? "    " : " ";
        if (v)
            fprintf(f, "%s%ld%s", ind, v[i], sep);
        else if (w)
            fprintf(f, "%s%ld%s", ind, (long)w[i], sep);
        else if (x)
            fprintf(f, "%s%.9gf%s", ind, (double)x[i], sep);
        else
            fprintf(f, "%s%u%s", ind, (unsigned)u[i], sep);
    }
    fprintf(f, "};\n");
}

/* The uniform lookup's body for the AVR when every step between breakpoints times the
** largest fraction fits 16 bits: 16-bit arithmetic only (int is 16 bits there), the same
** values as the 32-bit body.  0 (nothing written) when it does not fit. */
static int uniform_body_avr(const bg_lut *t, const char *sym, const char *up, FILE *f)
{
    long maxd = 0;
    if (!bgi_lut_uniform16(t))
        return 0;
    for (size_t i = 0; i + 1 < t->n; i++) {
        long d = labs((long)t->y[i + 1] - (long)t->y[i]);
        maxd = d > maxd ? d : maxd;
    }
    fprintf(f, "    uint16_t off, i;\n    int16_t y0, d, p, q;\n");
    fprintf(f, "    if (code < (uint32_t)%s_CODE_LO)\n        return %s_CODE_BELOW_RANGE;\n", up, up);
    fprintf(f, "    if (code > (uint32_t)%s_CODE_HI)\n        return %s_CODE_ABOVE_RANGE;\n", up, up);
    fprintf(f, "    off = (uint16_t)((uint16_t)code - (uint16_t)%s_CODE_LO);\n", up);
    fprintf(f, "    i = (uint16_t)(off >> %s_SHIFT);\n", up);
    fprintf(f, "    y0 = %s_READ(&%s_table[i]);\n", up, sym);
    fprintf(f, "    off &= (uint16_t)((1u << %s_SHIFT) - 1u);\n", up);
    fprintf(f, "    if (off == 0u)\n        return y0;\n");
    fprintf(f, "    /* |d| <= %ld and the fraction below 2^%u: the product fits 16 bits */\n",
            maxd, t->shift);
    fprintf(f, "    d = (int16_t)(%s_READ(&%s_table[i + 1u]) - y0);\n", up, sym);
    fprintf(f, "    p = (int16_t)(d * (int16_t)off);\n");
    fprintf(f, "    /* round half away from zero; shift only non-negative values */\n"
               "    if (p >= 0)\n        q = (int16_t)(((uint16_t)p + (1u << (%s_SHIFT - 1))) >> "
               "%s_SHIFT);\n    else\n        q = (int16_t)-(int16_t)(((uint16_t)-p + (1u << "
               "(%s_SHIFT - 1))) >> %s_SHIFT);\n", up, up, up, up);
    fprintf(f, "    return (int16_t)(y0 + q); /* between two entries: fits 16 bits */\n}\n");
    return 1;
}

static void emit_uniform(const bg_lut *t, const bg_lut_spec *s, const char *sym, const char *up,
                         FILE *f)
{
    int flt = t->format == BG_LUT_FLOAT;
    const char *ty = flt ? "float" : t->wide ? "int32_t" : "int16_t";
    hook(f, s, up, "READ", flt ? "pgm_read_float" : t->wide ? "pgm_read_dword" : "pgm_read_word",
         flt ? "" : t->wide ? "(int32_t)" : "(int16_t)");
    fprintf(f, "\n#define %s_CODE_LO %ldL\n#define %s_CODE_HI %ldL\n#define %s_SHIFT %u\n", up,
            t->code_lo, up, t->code_hi, up, t->shift);
    if (!flt) {
        char vf[64];
        value_format(s, vf, sizeof vf);
        fprintf(f, "#define %s_COUNTS_PER_DEGREE %.0f /* %s */\n", up, t->counts_per_k, vf);
    }
    sentinels(t, up, f);
    fprintf(f, "static const %s %s_table[%zu] %s_ATTR = {\n", ty, sym, t->n, up);
    for (size_t i = 0; i < t->n; i++) {
        if (flt)
            fprintf(f, "%s%.9gf", i % 8 == 0 ? "    " : " ", (double)t->yf[i]);
        else
            fprintf(f, "%s%ld", i % 10 == 0 ? "    " : " ", (long)t->y[i]);
        fprintf(f, "%s", i + 1 == t->n ? "\n" : i % (flt ? 8 : 10) == (flt ? 7u : 9u) ? ",\n"
                                                                                   : ",");
    }
    fprintf(f, "};\n\n");
    fprintf(f, "/* Temperature %sfor an ADC code, or %s_CODE_BELOW_RANGE /\n"
               " * %s_CODE_ABOVE_RANGE when the code is outside the range. */\n",
            flt ? "" : "in counts ", up, up);
    fprintf(f, "%s %s_lookup(uint32_t code);\n", flt ? "float" : "int32_t", sym);
    fprintf(f, "%s %s_lookup(uint32_t code)\n{\n", flt ? "float" : "int32_t", sym);
    if (s->target == BG_LUT_AVR && uniform_body_avr(t, sym, up, f))
        return;
    if (flt)
        fprintf(f, "    uint32_t off, i, f;\n    float y0, d, w, p;\n");
    else
        fprintf(f, "    uint32_t off, i, f;\n    int32_t y0, d, p, q;\n");
    fprintf(f, "    if (code < (uint32_t)%s_CODE_LO)\n        return %s_CODE_BELOW_RANGE;\n", up, up);
    fprintf(f, "    if (code > (uint32_t)%s_CODE_HI)\n        return %s_CODE_ABOVE_RANGE;\n", up, up);
    fprintf(f, "    off = code - (uint32_t)%s_CODE_LO;\n", up);
    fprintf(f, "    i = off >> %s_SHIFT;\n", up);
    fprintf(f, "    f = off & ((UINT32_C(1) << %s_SHIFT) - 1u);\n", up);
    fprintf(f, "    y0 = %s%s_READ(&%s_table[i]);\n", flt ? "" : "(int32_t)", up, sym);
    fprintf(f, "    if (f == 0u)\n        return y0;\n");
    if (flt) {
        fprintf(f, "    d = %s_READ(&%s_table[i + 1u]) - y0;\n", up, sym);
        fprintf(f, "    w = (float)f / %lu.0f;\n    p = d * w;\n    return y0 + p;\n}\n",
                1ul << t->shift);
        return;
    }
    fprintf(f, "    d = (int32_t)%s_READ(&%s_table[i + 1u]) - y0;\n", up, sym);
    fprintf(f, "    p = d * (int32_t)f;\n");
    if (t->shift)
        fprintf(f, "    /* round half away from zero; shift only non-negative values */\n"
                   "    if (p >= 0)\n        q = (int32_t)(((uint32_t)p + (UINT32_C(1) << "
                   "(%s_SHIFT - 1))) >> %s_SHIFT);\n    else\n        q = -(int32_t)(((uint32_t)"
                   "(-p) + (UINT32_C(1) << (%s_SHIFT - 1))) >> %s_SHIFT);\n", up, up, up, up);
    else
        fprintf(f, "    q = p;\n");
    fprintf(f, "    return y0 + q;\n}\n");
}

/* The lookup's body, 32-bit arithmetic (any target).  Indexed: one unsigned comparison for
** the range, and a pointer that walks the start codes (no index arithmetic repeated); on
** the Cortex-M0 that saves 7 of 42 instructions per conversion. */
static void segment_body(const bg_lut *t, const char *sym, const char *up, const char *xt,
                         FILE *f)
{
    int flt = t->format == BG_LUT_FLOAT;
    const char *at = "&%s_start[i]";
    if (t->strategy == BG_LUT_MINIMAL) {
        fprintf(f, "    uint32_t i = 0u, hi = %s_SEGMENTS - 1u, mid;\n", up);
        fprintf(f, flt ? "    float w, p;\n" : "    int32_t v;\n");
        fprintf(f, "    if (code < (uint32_t)%s_CODE_LO)\n        return %s_CODE_BELOW_RANGE;\n",
                up, up);
        fprintf(f, "    if (code > (uint32_t)%s_CODE_HI)\n        return %s_CODE_ABOVE_RANGE;\n",
                up, up);
        fprintf(f, "    while (i < hi) { /* the last segment starting at or below code */\n"
                   "        mid = (i + hi + 1u) >> 1;\n"
                   "        if ((uint32_t)%s_READ_CODE(&%s_start[mid]) <= code)\n"
                   "            i = mid;\n        else\n            hi = mid - 1u;\n    }\n",
                up, sym);
    } else {
        at = "s";
        fprintf(f, "    const %s *s;\n    uint32_t i;\n", xt);
        fprintf(f, flt ? "    float w, p;\n" : "    int32_t v;\n");
        range_test(up, f);
        fprintf(f, "    /* the start of the bucket's first segment, then of the code's */\n"
                   "    s = &%s_start[%s_READ_INDEX(&%s_index[(code - (uint32_t)%s_CODE_LO) >> "
                   "%s_INDEX_SHIFT])];\n", sym, up, sym, up, up);
        for (unsigned k = 0; k < t->icmp; k++)
            fprintf(f, "    if (code >= (uint32_t)%s_READ_CODE(&s[1]))\n        s++;\n", up);
        fprintf(f, "    i = (uint32_t)(s - %s_start);\n", sym);
    }
    char start[64];
    snprintf(start, sizeof start, at, sym);
    if (flt)
        fprintf(f, "    w = (float)(code - (uint32_t)%s_READ_CODE(%s));\n"
                   "    p = %s_READ_F32(&%s_slope[i]) * w;\n"
                   "    return %s_READ_F32(&%s_base[i]) + p;\n}\n", up, start, up, sym, up, sym);
    else
        fprintf(f, "    /* in 0 .. 2^30 by construction: shift a non-negative value */\n"
                   "    v = %s_READ_S32(&%s_base[i]) + (int32_t)%s_READ_S%s(&%s_slope[i]) *\n"
                   "        (int32_t)(code - (uint32_t)%s_READ_CODE(%s));\n"
                   "    return %s_VALUE_OFFSET + (int32_t)((uint32_t)v >> %s_FRAC);\n}\n",
                up, sym, up, t->narrow ? "16" : "32", sym, up, start, up, up);
}

/* The lookup's body for the AVR (16-bit int): the code in 16 bits once it is inside the
** range, the segment number in 8 bits when there are fewer than 256, and a 16 x 16 -> 32
** multiply when the slopes are narrow.  The same values as segment_body at every code. */
static void segment_body_avr(const bg_lut *t, const char *sym, const char *up, FILE *f)
{
    const char *it = t->n <= 255 ? "uint8_t" : "uint16_t";
    if (t->strategy == BG_LUT_MINIMAL)
        fprintf(f, "    %s i = 0u, hi = %s_SEGMENTS - 1u, mid;\n", it, up);
    else
        fprintf(f, "    %s i;\n", it);
    fprintf(f, "    uint16_t c;\n    uint32_t v;\n");
    fprintf(f, "    if (code < (uint32_t)%s_CODE_LO)\n        return %s_CODE_BELOW_RANGE;\n", up, up);
    fprintf(f, "    if (code > (uint32_t)%s_CODE_HI)\n        return %s_CODE_ABOVE_RANGE;\n", up, up);
    fprintf(f, "    c = (uint16_t)code;\n");
    if (t->strategy == BG_LUT_MINIMAL && t->n <= 128)
        /* i + hi + 1 < 2^8: the midpoint in 8 bits (10 bytes and 22 cycles fewer) */
        fprintf(f, "    while (i < hi) { /* the last segment starting at or below code */\n"
                   "        mid = (uint8_t)((uint8_t)((unsigned)i + (unsigned)hi + 1u) >> 1);\n"
                   "        if (%s_READ_CODE(&%s_start[mid]) <= c)\n"
                   "            i = mid;\n        else\n            hi = (uint8_t)(mid - 1u);\n    }\n",
                up, sym);
    else if (t->strategy == BG_LUT_MINIMAL)
        fprintf(f, "    while (i < hi) { /* the last segment starting at or below code */\n"
                   "        mid = (%s)(((unsigned)i + (unsigned)hi + 1u) >> 1);\n"
                   "        if (%s_READ_CODE(&%s_start[mid]) <= c)\n"
                   "            i = mid;\n        else\n            hi = (%s)((unsigned)mid - 1u);\n    }\n",
                it, up, sym, it);
    else {
        if (t->ishift < 8 && t->nidx <= 256)
            /* the bucket is the high byte of the offset shifted left: a shift by 8 costs
            ** nothing on an 8-bit core, a right shift by INDEX_SHIFT one loop per bit
            ** (the offset is below 2^(8 + INDEX_SHIFT), so no bit is lost) */
            fprintf(f, "    i = (%s)%s_READ_INDEX(&%s_index[(uint8_t)((uint16_t)((uint16_t)"
                       "(c - (uint16_t)%s_CODE_LO) << (8 - %s_INDEX_SHIFT)) >> 8)]);\n", it, up,
                    sym, up, up);
        else
            fprintf(f, "    i = (%s)%s_READ_INDEX(&%s_index[(uint16_t)(c - (uint16_t)%s_CODE_LO) >> "
                       "%s_INDEX_SHIFT]);\n", it, up, sym, up, up);
        for (unsigned k = 0; k < t->icmp; k++)
            fprintf(f, "    if (c >= %s_READ_CODE(&%s_start[i + 1u]))\n        i++;\n", up, sym);
    }
    /* indexed: the product first, the start value then added to the multiply's result
    ** registers (avr-gcc 5.4 -Os saves no registers for it: 5 cycles fewer); minimal: the
    ** start value first (6 bytes and 5 cycles fewer there) */
    char base[192];
    snprintf(base, sizeof base, "(uint32_t)%s_READ_S32(&%s_base[i])%s", up, sym,
             t->strategy == BG_LUT_MINIMAL ? " + " : "");
    fprintf(f, "    /* in 0 .. 2^30 by construction: the sum is taken modulo 2^32 */\n"
               "    v = %s(uint32_t)(", t->strategy == BG_LUT_MINIMAL ? base : "");
    if (t->narrow)
        fprintf(f, "(int32_t)%s_READ_S16(&%s_slope[i]) *\n"
                   "        (int32_t)(uint16_t)(c - %s_READ_CODE(&%s_start[i])));\n", up, sym, up, sym);
    else
        fprintf(f, "%s_READ_S32(&%s_slope[i]) *\n"
                   "        (int32_t)(uint16_t)(c - %s_READ_CODE(&%s_start[i])));\n", up, sym, up, sym);
    if (t->strategy != BG_LUT_MINIMAL)
        fprintf(f, "    v += %s;\n", base);
    /* every value in 16 bits: the offset and the shifted sum added in 16 bits */
    long long top = 0;
    for (size_t i = 0; i < t->n; i++) {
        long long last = (long long)t->sy[i] + (long long)t->sm[i] * (t->sx[i + 1] - 1 - t->sx[i]);
        top = (t->sy[i] > top ? t->sy[i] : top), top = last > top ? last : top;
    }
    top >>= t->frac;
    if (t->yoff >= -32768 && top <= 32767 && t->yoff + top <= 32767)
        fprintf(f, "    return (int16_t)((int16_t)%s_VALUE_OFFSET + (int16_t)(v >> %s_FRAC));\n}\n",
                up, up);
    else
        fprintf(f, "    return %s_VALUE_OFFSET + (int32_t)(v >> %s_FRAC);\n}\n", up, up);
}

/* The byte split of the aligned form (see lut_seg.c): the start value's whole counts from
** VALUE_OFFSET and its 2^-8 fraction, the slope's high byte (floor(m / 256), signed) and
** low byte, and the low byte of the first code's offset from CODE_LO. */
static void aligned_tables(const bg_lut *t, const char *sym, const char *up, FILE *f)
{
    static const char *what[5] = { "int16_t %s_base", "uint8_t %s_frac", "int8_t %s_slope_hi",
                                   "uint8_t %s_slope_lo", "uint8_t %s_first" };
    long *v = malloc((t->n ? t->n : 1) * sizeof *v);
    char name[96], decl[192];
    fprintf(f, "/* per segment: the value at its first code (counts) and 2^-8 counts more;\n"
               " * the slope in 2^-8 counts per code, high byte (signed) and low byte; the low\n"
               " * byte of its first code less %s_CODE_LO */\n", up);
    for (int k = 0; k < 5 && v; k++) {
        for (size_t i = 0; i < t->n; i++) {
            long sy = t->sy[i], sm = t->sm[i], mh = sm >= 0 ? sm / 256 : -((-sm + 255) / 256);
            v[i] = k == 0 ? (long)t->yoff + sy / 256 : k == 1 ? sy % 256 : k == 2 ? mh
                 : k == 3 ? sm - 256 * mh : (t->sx[i] - t->code_lo) & 255;
        }
        snprintf(name, sizeof name, what[k], sym);
        snprintf(decl, sizeof decl, "static const %s[%zu] %s_ATTR", name, t->n, up);
        longs(f, decl, t->n, v, NULL, NULL, NULL);
    }
    free(v);
}

/* The aligned form's lookup on the AVR: the segment straight from the index, one byte of
** offset, two 8 x 8 multiplies and 16-bit sums (lut_seg.c shows the value is exact). */
static void aligned_body_avr(const bg_lut *t, const char *sym, const char *up, FILE *f)
{
    unsigned k = t->ishift;
    char pos[160];
    if (t->nidx > 256 || k > 8)
        snprintf(pos, sizeof pos, "off >> %s_INDEX_SHIFT", up);
    else if (k == 8)
        snprintf(pos, sizeof pos, "(uint8_t)(off >> 8)");
    else if (k == 0)
        snprintf(pos, sizeof pos, "(uint8_t)off");
    else /* off < 2^(8 + k): the high byte's bits and the low byte's, in 8-bit shifts */
        snprintf(pos, sizeof pos, "(uint8_t)((uint8_t)((uint8_t)(off >> 8) << %u) | lo)", 8 - k);
    fprintf(f, "    uint16_t off;\n    uint8_t i, d%s;\n", pos[0] == '(' && k < 8 && k ? ", lo" : "");
    fprintf(f, "    if (code < (uint32_t)%s_CODE_LO)\n        return %s_CODE_BELOW_RANGE;\n", up, up);
    fprintf(f, "    if (code > (uint32_t)%s_CODE_HI)\n        return %s_CODE_ABOVE_RANGE;\n", up, up);
    fprintf(f, "    off = (uint16_t)((uint16_t)code - (uint16_t)%s_CODE_LO);\n", up);
    if (strstr(pos, "| lo)")) /* a byte variable: avr-gcc then shifts it in 8 bits */
        fprintf(f, "    lo = (uint8_t)off;\n    lo = (uint8_t)(lo >> %u);\n", k);
    fprintf(f, "    /* the segment, with no comparison: every one starts on the index's grid */\n"
               "    i = %s_READ_U8(&%s_index[%s]);\n", up, sym, pos);
    fprintf(f, "    d = (uint8_t)((uint8_t)off - %s_READ_U8(&%s_first[i])); /* below 256 */\n",
            up, sym);
    fprintf(f, "    /* base + floor((frac + slope d) / 256), the slope split in bytes: the low\n"
               "     * byte's part lies in 0 .. 65280 and every sum fits 16 bits */\n");
    fprintf(f, "    return (int16_t)(%s_READ_S16(&%s_base[i]) + %s_READ_S8(&%s_slope_hi[i]) * d +\n"
               "        (uint8_t)((uint16_t)(%s_READ_U8(&%s_frac[i]) +\n"
               "                             (uint16_t)%s_READ_U8(&%s_slope_lo[i]) * d) >> 8));\n"
               "}\n", up, sym, up, sym, up, sym, up, sym);
}

static void emit_aligned(const bg_lut *t, const bg_lut_spec *s, const char *sym, const char *up,
                         FILE *f)
{
    char vf[64], decl[160];
    hook(f, s, up, "READ_U8", "pgm_read_byte", "");
    hook(f, s, up, "READ_S8", "pgm_read_byte", "(int8_t)");
    hook(f, s, up, "READ_S16", "pgm_read_word", "(int16_t)");
    value_format(s, vf, sizeof vf);
    fprintf(f, "\n#define %s_CODE_LO %ldL\n#define %s_CODE_HI %ldL\n#define %s_SEGMENTS %zuu\n"
               "#define %s_COUNTS_PER_DEGREE %.0f /* %s */\n#define %s_INDEX_SHIFT %u\n", up,
            t->code_lo, up, t->code_hi, up, t->n, up, t->counts_per_k, vf, up, t->ishift);
    sentinels(t, up, f);
    aligned_tables(t, sym, up, f);
    fprintf(f, "/* the segment of the codes %s_CODE_LO + k 2^%s_INDEX_SHIFT onwards: every\n"
               " * segment starts on this grid */\n", up, up);
    snprintf(decl, sizeof decl, "static const uint8_t %s_index[%zu] %s_ATTR", sym, t->nidx, up);
    longs(f, decl, t->nidx, NULL, NULL, NULL, t->idx);
    fprintf(f, "\n/* Temperature in counts for an ADC code, or %s_CODE_BELOW_RANGE /\n"
               " * %s_CODE_ABOVE_RANGE when the code is outside the range. */\n", up, up);
    fprintf(f, "int32_t %s_lookup(uint32_t code);\nint32_t %s_lookup(uint32_t code)\n{\n", sym,
            sym);
    aligned_body_avr(t, sym, up, f);
}

/* The chained form's walk in C (lut_chain.c): the slope's bytes, the state as whole counts and
** a fraction byte, every sum in 32 bits (so also right with a 16-bit int). */
static void chained_c_body(const char *sym, const char *up, FILE *f)
{
    fprintf(f, "    const uint8_t *p = %s_chain;\n"
               "    uint32_t d, len, x, frac = %s_START_FRAC;\n"
               "    int32_t y = %s_START_VALUE, mh;\n", sym, up, up);
    range_test(up, f);
    fprintf(f, "    d = code - (uint32_t)%s_CODE_LO;\n"
               "    for (;;) { /* from the first segment: at most %s_SEGMENTS steps */\n"
               "        len = %s_READ_U8(p);\n"
               "        mh = (int32_t)%s_READ_U8(p + 1); /* the slope's high byte, signed */\n"
               "        if (mh > 127)\n            mh -= 256;\n"
               "        x = d < len ? d : len;\n"
               "        frac += (uint32_t)%s_READ_U8(p + 2) * x; /* 0 .. 65280 */\n"
               "        y += mh * (int32_t)x + (int32_t)(frac >> 8);\n"
               "        if (d <= len) /* the code lies in this segment */\n"
               "            return y;\n"
               "        frac &= 255u; /* the next segment starts here, at this value */\n"
               "        d -= len;\n        p += 3;\n    }\n", up, up, up, up, up);
}

/* The same walk in C for the AVR (int is 16 bits): the registers of the assembly below, 8 x 8
** products and 16-bit sums (a partial sum lies at most 256 counts below the value, and every
** value at least 256 above the least int16_t: lut_chain.c). */
static void chained_c_body_avr(const char *sym, const char *up, FILE *f)
{
    fprintf(f, "    const uint8_t *p = %s_chain;\n    uint16_t d, q;\n"
               "    int16_t y = (int16_t)%s_START_VALUE;\n"
               "    uint8_t frac = %s_START_FRAC, len, x;\n", sym, up, up);
    range_test(up, f);
    fprintf(f, "    d = (uint16_t)(code - (uint32_t)%s_CODE_LO);\n"
               "    for (;;) { /* from the first segment: at most %s_SEGMENTS steps */\n"
               "        len = %s_READ_U8(p);\n"
               "        x = len;\n        if (d < len)\n            x = (uint8_t)d;\n"
               "        q = (uint16_t)(frac + (uint16_t)%s_READ_U8(p + 2) * x); /* 0 .. 65280 */\n"
               "        y = (int16_t)(y + %s_READ_S8(p + 1) * x + (int16_t)(q >> 8));\n"
               "        if (d <= len) /* the code lies in this segment */\n"
               "            return y;\n"
               "        frac = (uint8_t)q; /* the next segment starts here, at this value */\n"
               "        d = (uint16_t)(d - len);\n        p += 3;\n    }\n", up, up, up, up, up);
}

/* The same walk in AVR assembly, for cores with the hardware multiplier: the code in r22..r25
** (where avr-gcc passes it and returns the value), the table pointer in Z.  The value in
** r22:r23 (y), the fraction in r20, the offset left in r26:r27; per segment the length r18
** (then x), the slope's bytes r19 (high, signed) and r21; T set on the last segment. */
static void chained_asm(const bg_lut *t, const char *sym, const char *up, FILE *f)
{
    int32_t whole;
    unsigned frac;
    unsigned long lo = (unsigned long)t->code_lo, nc = (unsigned long)(t->code_hi - t->code_lo + 1);
    bgi_lut_chain_start(t, &whole, &frac);
    unsigned long w = (unsigned long)whole & 0xffffUL;
    fprintf(f, "#if defined(__GNUC__) && defined(__AVR_HAVE_MUL__) && !defined(%s_PORTABLE_C)\n"
               "    /* %s_START_VALUE, %s_START_FRAC, %s_CODE_LO and %s_CODE_HI are written\n"
               "     * into the instructions below */\n"
               "    register uint32_t r __asm__(\"r22\") = code;\n"
               "    const uint8_t *p = %s_chain;\n    __asm__ volatile(\n", up, up, up, up, up, sym);
    fprintf(f, "        \"subi r22, %lu\\n\\tsbci r23, %lu\\n\\tsbci r24, %lu\\n\\tsbci r25, %lu\\n\\t\"\n"
               "        \"brcs 2f\\n\\t\" /* below the range: C = 1 */\n"
               "        \"mov r0, r24\\n\\tor r0, r25\\n\\tbrne 2f\\n\\t\" /* above: C = 0 */\n"
               "        \"cpi r22, %lu\\n\\tldi r18, %lu\\n\\tcpc r23, r18\\n\\tbrcc 2f\\n\\t\"\n",
            lo & 255, (lo >> 8) & 255, (lo >> 16) & 255, (lo >> 24) & 255, nc & 255,
            (nc >> 8) & 255);
    fprintf(f, "        \"movw r26, r22\\n\\tldi r22, %lu\\n\\tldi r23, %lu\\n\\tldi r20, %u\\n\\t\"\n",
            w & 255, w >> 8, frac);
    fprintf(f, "        \"1: lpm r18, Z+\\n\\tlpm r19, Z+\\n\\tlpm r21, Z+\\n\\t\" /* len, slope */\n"
               "        \"sub r26, r18\\n\\tsbc r27, r1\\n\\tclt\\n\\t\" /* d -= len */\n"
               "        \"breq 3f\\n\\tbrcc 4f\\n\\t\" /* d > len: x = len, go on */\n"
               "        \"add r18, r26\\n\\t\" /* d < len: x = d */\n"
               "        \"3: set\\n\\t\" /* the last segment */\n"
               "        \"4: mul r21, r18\\n\\tadd r20, r0\\n\\tadc r22, r1\\n\\tclr r1\\n\\t\"\n"
               "        \"adc r23, r1\\n\\t\" /* y += (frac + lo x) >> 8 */\n"
               "        \"mulsu r19, r18\\n\\tadd r22, r0\\n\\tadc r23, r1\\n\\tclr r1\\n\\t\"\n"
               "        \"brtc 1b\\n\\t\" /* y += hi x */\n"
               "        \"mov r24, r23\\n\\tlsl r24\\n\\tsbc r24, r24\\n\\tmov r25, r24\\n\\t\"\n"
               "        \"rjmp 5f\\n\\t\" /* y to 32 bits */\n"
               "        \"2: sbc r22, r22\\n\\tcom r22\\n\\tmov r23, r22\\n\\tmovw r24, r22\\n\\t\"\n"
               "        \"subi r25, 0x80\\n\\t\" /* C = 1: INT32_MIN, C = 0: INT32_MAX */\n"
               "        \"5:\"\n"
               "        : \"+r\"(r), \"+z\"(p)\n        :\n"
               "        : \"r0\", \"r18\", \"r19\", \"r20\", \"r21\", \"r26\", \"r27\", \"cc\");\n"
               "    return (int32_t)r;\n#else\n");
}

/* The chained form of a minimal table (lut_chain.c): one start state, then per segment a
** length byte and the slope's two bytes; the lookup walks them from the first. */
static void emit_chained(const bg_lut *t, const bg_lut_spec *s, const char *sym, const char *up,
                         FILE *f)
{
    char vf[64];
    int32_t whole;
    unsigned frac;
    bgi_lut_chain_start(t, &whole, &frac);
    hook(f, s, up, "READ_U8", "pgm_read_byte", "");
    if (s->target == BG_LUT_AVR)
        hook(f, s, up, "READ_S8", "pgm_read_byte", "(int8_t)");
    value_format(s, vf, sizeof vf);
    fprintf(f, "\n#define %s_CODE_LO %ldL\n#define %s_CODE_HI %ldL\n#define %s_SEGMENTS %zuu\n"
               "#define %s_COUNTS_PER_DEGREE %.0f /* %s */\n", up, t->code_lo, up, t->code_hi,
            up, t->n, up, t->counts_per_k, vf);
    fprintf(f, "/* the value at %s_CODE_LO: whole counts and 2^-8 counts more */\n"
               "#define %s_START_VALUE %ldL\n#define %s_START_FRAC %uu\n", up, up, (long)whole,
            up, frac);
    sentinels(t, up, f);
    fprintf(f, "/* The chained form of the minimal table: each segment starts at the code and\n"
               " * the value where the previous one ends, so the lookup walks them from the\n"
               " * first (no binary search) and the segments are found for this arithmetic\n"
               " * (not the fewest of any arithmetic).  Per segment: its length in codes, then\n"
               " * its slope in 2^-8 counts per code as the high byte (two's complement) and the\n"
               " * low byte. */\n"
               "static const uint8_t %s_chain[%zu] %s_ATTR = {\n", sym, t->n * 3, up);
    for (size_t i = 0; i < t->n; i++) {
        unsigned len, ml;
        int mh;
        bgi_lut_chain_bytes(t, i, &len, &mh, &ml);
        fprintf(f, "%s%u, %u, %u%s", i % 6 == 0 ? "    " : " ", len, (unsigned)mh & 255u, ml,
                i + 1 == t->n ? "\n" : i % 6 == 5 ? ",\n" : ",");
    }
    fprintf(f, "};\n\n/* Temperature in counts for an ADC code, or %s_CODE_BELOW_RANGE /\n"
               " * %s_CODE_ABOVE_RANGE when the code is outside the range.  A linear walk: the\n"
               " * time grows with the segments before the code's. */\n", up, up);
    fprintf(f, "int32_t %s_lookup(uint32_t code);\nint32_t %s_lookup(uint32_t code)\n{\n", sym,
            sym);
    if (s->target == BG_LUT_AVR) {
        chained_asm(t, sym, up, f);
        chained_c_body_avr(sym, up, f);
    } else
        chained_c_body(sym, up, f);
    fprintf(f, "%s}\n", s->target == BG_LUT_AVR ? "#endif\n" : "");
}

static void emit_segments(const bg_lut *t, const bg_lut_spec *s, const char *sym,
                          const char *up, FILE *f)
{
    int flt = t->format == BG_LUT_FLOAT, wide_x = t->code_hi + 1 > 65535;
    int idx8 = t->n <= 256;
    char decl[160], vf[64];
    const char *xt = wide_x ? "uint32_t" : "uint16_t";
    if (t->aligned && s->target == BG_LUT_AVR && !flt && !wide_x && idx8) {
        emit_aligned(t, s, sym, up, f);
        return;
    }
    if (t->chained) {
        emit_chained(t, s, sym, up, f);
        return;
    }
    hook(f, s, up, "READ_CODE", wide_x ? "pgm_read_dword" : "pgm_read_word", "");
    hook(f, s, up, flt ? "READ_F32" : "READ_S32", flt ? "pgm_read_float" : "pgm_read_dword",
         flt ? "" : "(int32_t)");
    if (t->narrow)
        hook(f, s, up, "READ_S16", "pgm_read_word", "(int16_t)");
    if (t->strategy == BG_LUT_INDEXED)
        hook(f, s, up, "READ_INDEX", idx8 ? "pgm_read_byte" : "pgm_read_word", "");
    fprintf(f, "\n#define %s_CODE_LO %ldL\n#define %s_CODE_HI %ldL\n#define %s_SEGMENTS %zuu\n",
            up, t->code_lo, up, t->code_hi, up, t->n);
    value_format(s, vf, sizeof vf);
    if (!flt)
        fprintf(f, "#define %s_COUNTS_PER_DEGREE %.0f /* %s */\n#define %s_FRAC %u\n"
                   "#define %s_VALUE_OFFSET %ldL\n", up, t->counts_per_k, vf, up, t->frac, up,
                (long)t->yoff);
    if (t->strategy == BG_LUT_INDEXED)
        fprintf(f, "#define %s_INDEX_SHIFT %u\n", up, t->ishift);
    sentinels(t, up, f);
    fprintf(f, "/* the first code of each segment, then %s_CODE_HI + 1 */\n", up);
    snprintf(decl, sizeof decl, "static const %s %s_start[%zu] %s_ATTR", xt, sym, t->n + 1, up);
    longs(f, decl, t->n + 1, t->sx, NULL, NULL, NULL);
    if (flt) {
        fprintf(f, "/* the value at the segment's first code, and per code after it */\n");
        snprintf(decl, sizeof decl, "static const float %s_base[%zu] %s_ATTR", sym, t->n, up);
        longs(f, decl, t->n, NULL, NULL, t->syf, NULL);
        snprintf(decl, sizeof decl, "static const float %s_slope[%zu] %s_ATTR", sym, t->n, up);
        longs(f, decl, t->n, NULL, NULL, t->smf, NULL);
    } else {
        fprintf(f, "/* at the segment's first code, and per code after it: 2^-%u counts above "
                   "%s_VALUE_OFFSET */\n", t->frac, up);
        snprintf(decl, sizeof decl, "static const int32_t %s_base[%zu] %s_ATTR", sym, t->n, up);
        longs(f, decl, t->n, NULL, t->sy, NULL, NULL);
        snprintf(decl, sizeof decl, "static const %s %s_slope[%zu] %s_ATTR",
                 t->narrow ? "int16_t" : "int32_t", sym, t->n, up);
        longs(f, decl, t->n, NULL, t->sm, NULL, NULL);
    }
    if (t->strategy == BG_LUT_INDEXED) {
        fprintf(f, "/* the segment of code %s_CODE_LO + k 2^%s_INDEX_SHIFT; at most %s more\n"
                   " * segment%s inside each such bucket */\n", up, up,
                t->icmp > 1 ? "two" : "one", t->icmp > 1 ? "s start" : " starts");
        snprintf(decl, sizeof decl, "static const %s %s_index[%zu] %s_ATTR",
                 idx8 ? "uint8_t" : "uint16_t", sym, t->nidx, up);
        longs(f, decl, t->nidx, NULL, NULL, NULL, t->idx);
    }
    fprintf(f, "\n/* Temperature %sfor an ADC code, or %s_CODE_BELOW_RANGE /\n"
               " * %s_CODE_ABOVE_RANGE when the code is outside the range. */\n",
            flt ? "" : "in counts ", up, up);
    fprintf(f, "%s %s_lookup(uint32_t code);\n", flt ? "float" : "int32_t", sym);
    fprintf(f, "%s %s_lookup(uint32_t code)\n{\n", flt ? "float" : "int32_t", sym);
    if (s->target == BG_LUT_AVR && !flt && !wide_x)
        segment_body_avr(t, sym, up, f);
    else
        segment_body(t, sym, up, xt, f);
}

int bg_lut_emit_c(const bg_lut *t, const bg_lut_spec *s, const char *sym, const char *version,
                  FILE *f, bg_error *err)
{
    char up[64];
    size_t k;

    if (!ident_ok(sym) || strlen(sym) >= sizeof up - 1)
        return bg_error_set(err, BG_EINVAL, "symbol '%s': not a C identifier", sym ? sym : "");
    for (k = 0; sym[k]; k++)
        up[k] = (char)(sym[k] >= 'a' && sym[k] <= 'z' ? sym[k] - 'a' + 'A' : sym[k]);
    up[k] = '\0';
    fprintf(f, "/* Code generated by bandgap %s; DO NOT EDIT. */\n", version);
    provenance(t, s, up, f);
    if (t->strategy == BG_LUT_UNIFORM)
        emit_uniform(t, s, sym, up, f);
    else
        emit_segments(t, s, sym, up, f);
    if (ferror(f))
        return bg_error_set(err, BG_EIO, "cannot write the table");
    return BG_OK;
}
