/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Uniform firmware tables.  Breakpoints every 2^shift codes from the first code of the range;
** values on the curve, rounded half away from zero; lookup y = y0 + round(d f / 2^shift) with
** the product in 32 bits and shifts only of non-negative numbers (C99 6.5.7: right shifts of
** negative values are implementation-defined), so the arithmetic is the same on any
** conforming compiler, 16-bit int included. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "bandgap/lut.h"
#include "bandgap/units.h"

void bg_lut_release(bg_lut *t)
{
    if (!t)
        return;
    free(t->y);
    memset(t, 0, sizeof *t);
}

static double counts_per_k(bg_lut_format f)
{
    return f == BG_LUT_DECI ? 10.0 : f == BG_LUT_CENTI ? 100.0 : 1000.0;
}

/* Exact temperature at a code, through the circuit and the model. */
static int t_at(const bg_lut_spec *s, double code, double *t_k, bg_error *err)
{
    double r;
    int rc = bg_circuit_ohms_of(&s->circuit, code, &r, err);
    return rc == BG_OK ? bg_model_t_from_r(&s->model, r, t_k, err) : rc;
}

int32_t bg_lut_eval(const bg_lut *t, long code, int *status)
{
    if (code < t->code_lo) {
        *status = BG_LUT_BELOW;
        return 0;
    }
    if (code > t->code_hi) {
        *status = BG_LUT_ABOVE;
        return 0;
    }
    *status = BG_LUT_OK;
    uint32_t off = (uint32_t)(code - t->code_lo);
    uint32_t i = off >> t->shift, f = off & ((1u << t->shift) - 1u);
    int32_t y0 = t->y[i];
    if (f == 0)
        return y0;
    int32_t d = t->y[i + 1] - y0;
    int32_t p = d * (int32_t)f;
    int32_t half = t->shift ? (int32_t)(1u << (t->shift - 1)) : 0;
    int32_t q = p >= 0 ? (int32_t)(((uint32_t)p + (uint32_t)half) >> t->shift)
                       : -(int32_t)(((uint32_t)(-p) + (uint32_t)half) >> t->shift);
    return y0 + q;
}

int bg_lut_build(const bg_lut_spec *s, bg_lut *out, bg_error *err)
{
    double c1, c2, r1, r2, fs, lo, hi;
    int rc;

    memset(out, 0, sizeof *out);
    if (s->shift > 12)
        return bg_error_set(err, BG_EINVAL, "step of 2^%u codes: at most 2^12", s->shift);
    if (!(s->t_hi_k > s->t_lo_k))
        return bg_error_set(err, BG_EINVAL, "the range must run from a lower to a higher "
                            "temperature");
    if ((rc = bg_circuit_check(&s->circuit, err)) != BG_OK ||
        (rc = bg_model_r_from_t(&s->model, s->t_lo_k, &r1, err)) != BG_OK ||
        (rc = bg_model_r_from_t(&s->model, s->t_hi_k, &r2, err)) != BG_OK ||
        (rc = bg_circuit_code_of(&s->circuit, r1, &c1, err)) != BG_OK ||
        (rc = bg_circuit_code_of(&s->circuit, r2, &c2, err)) != BG_OK)
        return rc;
    fs = bg_circuit_full_scale(&s->circuit);
    lo = ceil(fmin(c1, c2)), hi = floor(fmax(c1, c2));
    if (!(hi > lo))
        return bg_error_set(err, BG_EINVAL, "the range spans less than one code of this "
                            "circuit");
    if (fs > 0.0 && (lo < 1.0 || hi > fs - 1.0))
        return bg_error_set(err, BG_EINVAL, "the range reaches the ADC's rails (codes %.0f .. "
                            "%.0f of %.0f): change the fixed resistor or the range", lo, hi, fs);
    out->code_lo = (long)lo, out->code_hi = (long)hi, out->shift = s->shift;
    unsigned long span = (unsigned long)(out->code_hi - out->code_lo);
    out->n = (size_t)(span >> s->shift) + 1 + ((span & ((1ul << s->shift) - 1)) ? 1 : 0);
    out->counts_per_k = counts_per_k(s->format);
    out->offset_k = s->kelvin ? 0.0 : BG_ZERO_C_K;
    out->y = malloc(out->n * sizeof *out->y);
    if (!out->y)
        return bg_error_set(err, BG_ENOMEM, "out of memory for %zu entries", out->n);
    for (size_t i = 0; i < out->n; i++) {
        double code = (double)out->code_lo + ldexp((double)i, (int)s->shift), t;
        if (fs > 0.0 && code > fs - 1.0) {
            bg_lut_release(out);
            return bg_error_set(err, BG_EINVAL, "the last breakpoint (code %.0f) falls beyond "
                                "the ADC's codes: use a smaller step", code);
        }
        if ((rc = t_at(s, code, &t, err)) != BG_OK) {
            bg_lut_release(out);
            return rc;
        }
        double v = round(out->counts_per_k * (t - out->offset_k));
        if (!(fabs(v) < 2147483647.0)) {
            bg_lut_release(out);
            return bg_error_set(err, BG_EINVAL, "a value overflows 32 bits");
        }
        out->y[i] = (int32_t)v;
        if (v < -32768.0 || v > 32767.0)
            out->wide = 1;
    }
    /* the interpolation's product d f must fit 32 bits: |d| 2^shift < 2^31 */
    for (size_t i = 0; i + 1 < out->n; i++)
        if (fabs((double)out->y[i + 1] - (double)out->y[i]) * ldexp(1.0, (int)s->shift) >=
            2147483647.0) {
            bg_lut_release(out);
            return bg_error_set(err, BG_EINVAL, "the step is too coarse for 32-bit arithmetic");
        }
    double ss = 0.0;
    for (long code = out->code_lo; code <= out->code_hi; code++) {
        int st;
        double t, e;
        if ((rc = t_at(s, (double)code, &t, err)) != BG_OK) {
            bg_lut_release(out);
            return rc;
        }
        e = (double)bg_lut_eval(out, code, &st) / out->counts_per_k + out->offset_k - t;
        ss += e * e;
        if (fabs(e) > out->max_err_k)
            out->max_err_k = fabs(e), out->worst_code = code;
    }
    out->rms_err_k = sqrt(ss / (double)(out->code_hi - out->code_lo + 1));
    return BG_OK;
}

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

int bg_lut_emit_c(const bg_lut *t, const bg_lut_spec *s, const char *sym, const char *version,
                  FILE *f, bg_error *err)
{
    char up[64], name[16];
    const char *unit = s->kelvin ? "K" : "degC";
    static const char *fmt[] = { "0.1", "0.01", "0.001" };
    size_t k;

    if (!ident_ok(sym) || strlen(sym) >= sizeof up - 1)
        return bg_error_set(err, BG_EINVAL, "symbol '%s': not a C identifier", sym ? sym : "");
    for (k = 0; sym[k]; k++)
        up[k] = (char)(sym[k] >= 'a' && sym[k] <= 'z' ? sym[k] - 'a' + 'A' : sym[k]);
    up[k] = '\0';
    bg_model_name(&s->model, name, sizeof name);
    fprintf(f, "/* Code generated by bandgap %s; DO NOT EDIT. */\n", version);
    fprintf(f, "/*\n * ADC code -> temperature, %s %s per count, linear interpolation between\n"
               " * breakpoints every %lu codes (uniform table).\n", fmt[s->format], unit,
            1ul << t->shift);
    fprintf(f, " * model %s:", name);
    for (size_t i = 0; i < bg_model_npar(&s->model); i++)
        fprintf(f, " %s=%.17g", bg_model_coef_name(&s->model, i), s->model.coef[i]);
    if (s->model.kind == BG_MODEL_BETA)
        fprintf(f, " T0=%.17g K", s->model.t0_k);
    fprintf(f, "\n * circuit: ");
    const bg_circuit *c = &s->circuit;
    switch (c->kind) {
    case BG_CIRCUIT_DIVIDER_LOW:
    case BG_CIRCUIT_DIVIDER_HIGH:
        fprintf(f, "divider, thermistor on the %s side, fixed %.9g ohm",
                c->kind == BG_CIRCUIT_DIVIDER_LOW ? "low" : "high", c->fixed_ohm);
        break;
    case BG_CIRCUIT_CURRENT:
        fprintf(f, "current source %.9g A, reference %.9g V", c->current_a, c->vref_v);
        break;
    default:
        fprintf(f, "resistance input, %.9g ohm per code", c->ohms_per_code);
        break;
    }
    if (c->kind != BG_CIRCUIT_OHMS) {
        if (c->parallel_ohm > 0.0)
            fprintf(f, ", parallel %.9g ohm", c->parallel_ohm);
        if (c->series_ohm > 0.0)
            fprintf(f, ", series %.9g ohm", c->series_ohm);
        fprintf(f, ", %u-bit ADC, full scale %s", c->adc_bits,
                c->full_scale_pow2 ? "2^N" : "2^N - 1");
    }
    fprintf(f, "\n * range: %.3f .. %.3f degC, codes %ld .. %ld\n", s->t_lo_k - BG_ZERO_C_K,
            s->t_hi_k - BG_ZERO_C_K, t->code_lo, t->code_hi);
    fprintf(f, " * measured over every code against the model: max |error| %.6f K (at code %ld),"
               "\n * RMS %.6f K; table and output rounding only (not the ADC, the fit or the\n"
               " * components).  Valid inside the range only; outside it the function returns\n"
               " * %s_BELOW or %s_ABOVE, never a clamped temperature.\n */\n",
            t->max_err_k, t->worst_code, t->rms_err_k, up, up);
    fprintf(f, "#include <stdint.h>\n\n");
    fprintf(f, "#ifndef %s_ATTR\n#define %s_ATTR /* e.g. PROGMEM on AVR */\n#endif\n", up, up);
    fprintf(f, "#ifndef %s_READ\n#define %s_READ(p) (*(p)) /* e.g. pgm_read_word(p) on AVR */\n"
               "#endif\n\n", up, up);
    const char *ty = t->wide ? "int32_t" : "int16_t";
    fprintf(f, "#define %s_CODE_LO %ldL\n#define %s_CODE_HI %ldL\n#define %s_SHIFT %u\n", up,
            t->code_lo, up, t->code_hi, up, t->shift);
    fprintf(f, "#define %s_COUNTS_PER_DEGREE %.0f /* %s %s per count */\n", up, t->counts_per_k,
            fmt[s->format], unit);
    fprintf(f, "#define %s_BELOW ((int32_t)-2147483647L - 1) /* code below the range */\n", up);
    fprintf(f, "#define %s_ABOVE ((int32_t)2147483647L)      /* code above the range */\n\n", up);
    fprintf(f, "static const %s %s_table[%zu] %s_ATTR = {\n", ty, sym, t->n, up);
    for (size_t i = 0; i < t->n; i++)
        fprintf(f, "%s%ld%s", i % 10 == 0 ? "    " : " ", (long)t->y[i],
                i + 1 == t->n ? "\n" : i % 10 == 9 ? ",\n" : ",");
    fprintf(f, "};\n\n");
    fprintf(f, "/* Temperature in counts for an ADC code, or %s_BELOW / %s_ABOVE. */\n", up, up);
    fprintf(f, "int32_t %s_lookup(uint32_t code);\n", sym);
    fprintf(f, "int32_t %s_lookup(uint32_t code)\n{\n", sym);
    fprintf(f, "    uint32_t off, i, f;\n    int32_t y0, d, p, q;\n");
    fprintf(f, "    if (code < (uint32_t)%s_CODE_LO)\n        return %s_BELOW;\n", up, up);
    fprintf(f, "    if (code > (uint32_t)%s_CODE_HI)\n        return %s_ABOVE;\n", up, up);
    fprintf(f, "    off = code - (uint32_t)%s_CODE_LO;\n", up);
    fprintf(f, "    i = off >> %s_SHIFT;\n", up);
    fprintf(f, "    f = off & ((UINT32_C(1) << %s_SHIFT) - 1u);\n", up);
    fprintf(f, "    y0 = (int32_t)%s_READ(&%s_table[i]);\n", up, sym);
    fprintf(f, "    if (f == 0u)\n        return y0;\n");
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
    if (ferror(f))
        return bg_error_set(err, BG_EIO, "cannot write the table");
    return BG_OK;
}

/* The budget's terms at one code (real-valued for the temperature of a row). */
static int budget_at(const bg_lut_spec *s, const bg_lut *t, const bg_budget_opts *o, double code,
                     bg_budget_row *r, bg_error *err)
{
    double rth, tk, k_lsb;
    int rc, st;
    memset(r, 0, sizeof *r);
    if ((rc = bg_circuit_ohms_of(&s->circuit, code, &rth, err)) != BG_OK ||
        (rc = bg_circuit_temp_of(&s->circuit, &s->model, code, &tk, &k_lsb, err)) != BG_OK)
        return rc;
    r->t_k = tk;
    long ic = lround(code);
    if (ic < t->code_lo)
        ic = t->code_lo;
    if (ic > t->code_hi)
        ic = t->code_hi;
    double tc;
    if ((rc = t_at(s, (double)ic, &tc, err)) != BG_OK)
        return rc;
    r->table_k = fabs((double)bg_lut_eval(t, ic, &st) / t->counts_per_k + t->offset_k - tc);
    r->adc_k = 0.5 * fabs(k_lsb);
    if (o->cov && bg_model_u_t(&s->model, o->cov, tk, &r->fit_k, NULL) == BG_OK)
        r->fit_k *= 2.0;
    else
        r->fit_k = 0.0;
    if (o->fixed_tol > 0.0 && s->circuit.kind != BG_CIRCUIT_CURRENT &&
        s->circuit.kind != BG_CIRCUIT_OHMS) {
        /* the same code read with the fixed resistor at its tolerance: what the firmware,
        ** assuming the nominal value, gets wrong */
        bg_circuit c2 = s->circuit;
        double r2, t2;
        c2.fixed_ohm *= 1.0 + o->fixed_tol;
        if (bg_circuit_ohms_of(&c2, code, &r2, NULL) == BG_OK &&
            bg_model_t_from_r(&s->model, r2, &t2, NULL) == BG_OK)
            r->resistor_k = fabs(t2 - tk);
    }
    if (o->dissipation_w_per_k > 0.0) {
        const bg_circuit *c = &s->circuit;
        double rb = c->series_ohm + (c->parallel_ohm > 0.0 ? rth * c->parallel_ohm /
                                                              (rth + c->parallel_ohm) : rth);
        double i = NAN;
        if (c->kind == BG_CIRCUIT_CURRENT)
            i = c->current_a;
        else if (o->excitation_v > 0.0 && c->kind != BG_CIRCUIT_OHMS)
            i = o->excitation_v / (rb + c->fixed_ohm);
        if (isfinite(i)) {
            /* the voltage across the thermistor (and its parallel resistor), squared over R */
            double v = i * (rb - c->series_ohm);
            r->selfheat_k = v * v / rth / o->dissipation_w_per_k;
        }
    }
    r->rss_k = sqrt(r->table_k * r->table_k + r->adc_k * r->adc_k + r->fit_k * r->fit_k +
                    r->resistor_k * r->resistor_k + r->selfheat_k * r->selfheat_k);
    r->sum_k = r->table_k + r->adc_k + r->fit_k + r->resistor_k + r->selfheat_k;
    return BG_OK;
}

int bg_lut_budget(const bg_lut_spec *s, const bg_lut *t, const bg_budget_opts *o,
                  const double *at_k, size_t nat, bg_budget_row *rows, bg_budget_row *worst,
                  bg_error *err)
{
    int rc;
    for (size_t k = 0; k < nat; k++) {
        double r, code;
        if (at_k[k] < s->t_lo_k - 1e-9 || at_k[k] > s->t_hi_k + 1e-9)
            return bg_error_set(err, BG_EINVAL, "budget temperature %.3f degC is outside the "
                                "table's range", at_k[k] - BG_ZERO_C_K);
        if ((rc = bg_model_r_from_t(&s->model, at_k[k], &r, err)) != BG_OK ||
            (rc = bg_circuit_code_of(&s->circuit, r, &code, err)) != BG_OK ||
            (rc = budget_at(s, t, o, code, &rows[k], err)) != BG_OK)
            return rc;
        rows[k].t_k = at_k[k];
    }
    if (worst) {
        memset(worst, 0, sizeof *worst);
        worst->t_k = NAN;
        for (long code = t->code_lo; code <= t->code_hi; code++) {
            bg_budget_row r;
            if ((rc = budget_at(s, t, o, (double)code, &r, err)) != BG_OK)
                return rc;
            worst->table_k = fmax(worst->table_k, r.table_k);
            worst->adc_k = fmax(worst->adc_k, r.adc_k);
            worst->fit_k = fmax(worst->fit_k, r.fit_k);
            worst->resistor_k = fmax(worst->resistor_k, r.resistor_k);
            worst->selfheat_k = fmax(worst->selfheat_k, r.selfheat_k);
            if (r.sum_k > worst->sum_k)
                worst->sum_k = r.sum_k, worst->t_k = r.t_k;
            worst->rss_k = fmax(worst->rss_k, r.rss_k);
        }
        /* the requested temperatures belong to the range too (they sit between codes) */
        for (size_t k = 0; k < nat; k++) {
            const bg_budget_row *r = &rows[k];
            worst->table_k = fmax(worst->table_k, r->table_k);
            worst->adc_k = fmax(worst->adc_k, r->adc_k);
            worst->fit_k = fmax(worst->fit_k, r->fit_k);
            worst->resistor_k = fmax(worst->resistor_k, r->resistor_k);
            worst->selfheat_k = fmax(worst->selfheat_k, r->selfheat_k);
            worst->rss_k = fmax(worst->rss_k, r->rss_k);
            if (r->sum_k > worst->sum_k)
                worst->sum_k = r->sum_k, worst->t_k = r->t_k;
        }
    }
    return BG_OK;
}
