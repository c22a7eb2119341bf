/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Building tables and reading them as the firmware does.  Uniform tables: values on the
** curve every 2^shift codes, rounded half away from zero; lookup y = y0 + round(d f / 2^shift)
** with the product in 32 bits and shifts only of non-negative numbers (C99 6.5.7: right shifts
** of negative values are implementation-defined), so the arithmetic is the same on any
** conforming compiler, 16-bit int included.  Segment tables: lut_seg.c.  Float tables use
** single-precision operations one at a time, as the emitted C does (no contraction). */
#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "bandgap/units.h"
#include "lut_int.h"

void bg_lut_release(bg_lut *t)
{
    if (!t)
        return;
    free(t->y);
    free(t->yf);
    free(t->sx);
    free(t->sy);
    free(t->sm);
    free(t->syf);
    free(t->smf);
    free(t->idx);
    memset(t, 0, sizeof *t);
}

const char *bg_lut_strategy_name(bg_lut_strategy s)
{
    return s == BG_LUT_UNIFORM ? "uniform" : s == BG_LUT_MINIMAL ? "minimal" : "indexed";
}

static double counts_per_k(const bg_lut_spec *s)
{
    switch (s->format) {
    case BG_LUT_DECI: return 10.0;
    case BG_LUT_CENTI: return 100.0;
    case BG_LUT_MILLI: return 1000.0;
    case BG_LUT_Q: return ldexp(1.0, (int)s->qbits);
    default: return 1.0;
    }
}

/* What to change when a range reaches the rails, by front end. */
static const char *rails_what(bg_circuit_kind k)
{
    switch (k) {
    case BG_CIRCUIT_CURRENT: return "current, the reference voltage";
    case BG_CIRCUIT_JUNCTION: return "gain, the offset, the reference voltage";
    case BG_CIRCUIT_DEVICE: return "device word's bits";
    default: return "fixed resistor";
    }
}

/* The guard rail of the kind: over the range the model's reading must run the way the kind's
** does (a PTC's resistance and an IC sensor's reading rise, a junction's voltage and an NTC's
** resistance fall: bg_model_direction), so that a fit that turned over is refused here, not
** tabled.  x_lo, x_hi: the readings at the range's ends. */
static int check_direction(const bg_lut_spec *s, double x_lo, double x_hi, bg_error *err)
{
    int dir = bg_model_direction(&s->model);
    bg_quantity q = bg_model_quantity(&s->model);
    if ((dir > 0 && x_hi > x_lo) || (dir < 0 && x_hi < x_lo))
        return BG_OK;
    return bg_error_set(err, BG_EINVAL, "over the range the model's reading (%s) %s from %.9g "
                        "to %.9g %s, but this kind's %s with temperature: not a curve to table",
                        bg_quantity_column(q), x_hi > x_lo ? "rises" : x_hi < x_lo ? "falls" :
                        "stays", x_lo, x_hi, bg_quantity_unit(q), dir > 0 ? "rises" : "falls");
}

/* The temperatures at consecutive codes must all rise or all fall (strictly): a table of a
** curve that turns over inside the range would give one code two temperatures. */
static int check_monotonic(const bg_lut *t, const double *tk, size_t nc, bg_error *err)
{
    int sign = 0;
    for (size_t c = 0; c + 1 < nc; c++) {
        double d = tk[c + 1] - tk[c];
        int sc = d > 0.0 ? 1 : d < 0.0 ? -1 : 0;
        if (sign == 0)
            sign = sc;
        if (sc == 0 || sc != sign)
            return bg_error_set(err, BG_EINVAL, "the temperature %s between codes %ld and %ld "
                                "(%.6f and %.6f K) while it %s before: the model is not "
                                "monotonic over the range", sc == 0 ? "stands still" :
                                sc > 0 ? "rises" : "falls", t->code_lo + (long)c,
                                t->code_lo + (long)c + 1, tk[c], tk[c + 1],
                                sign > 0 ? "rises" : "falls");
    }
    return BG_OK;
}

/* Exact temperature at a code, through the circuit and the model. */
static int t_at(const bg_lut_spec *s, double code, double *t_k, bg_error *err)
{
    double r;
    int rc = bg_circuit_reading_of(&s->circuit, code, &r, err);
    return rc == BG_OK ? bg_model_t_from_x(&s->model, r, t_k, err) : rc;
}

static int32_t uniform_eval(const bg_lut *t, uint32_t off)
{
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

/* The segment of a code: through the index and one comparison, or a binary search. */
static size_t segment_of(const bg_lut *t, long code)
{
    size_t i;
    if (t->strategy == BG_LUT_INDEXED) {
        i = t->idx[(uint32_t)(code - t->code_lo) >> t->ishift];
        if (code >= t->sx[i + 1])
            i++;
        if (t->icmp > 1 && code >= t->sx[i + 1])
            i++;
        return i;
    }
    size_t lo = 0, hi = t->n - 1;
    while (lo < hi) {
        size_t mid = (lo + hi + 1) / 2;
        if (t->sx[mid] <= code)
            lo = mid;
        else
            hi = mid - 1;
    }
    return lo;
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
    if (t->strategy == BG_LUT_UNIFORM)
        return uniform_eval(t, (uint32_t)(code - t->code_lo));
    if (t->chained) /* the walk, as the emitted lookup does it (lut_chain.c) */
        return bgi_lut_chain_eval(t, code);
    size_t i = segment_of(t, code);
    int32_t v = t->sy[i] + t->sm[i] * (int32_t)(code - t->sx[i]);
    return t->yoff + (int32_t)((uint32_t)v >> t->frac);
}

float bg_lut_eval_float(const bg_lut *t, long code, int *status)
{
    volatile float y0, d, w, p; /* one rounding per operation, as in the emitted C */
    if (code < t->code_lo) {
        *status = BG_LUT_BELOW;
        return -FLT_MAX;
    }
    if (code > t->code_hi) {
        *status = BG_LUT_ABOVE;
        return FLT_MAX;
    }
    *status = BG_LUT_OK;
    if (t->strategy == BG_LUT_UNIFORM) {
        uint32_t off = (uint32_t)(code - t->code_lo);
        uint32_t i = off >> t->shift, f = off & ((1u << t->shift) - 1u);
        y0 = t->yf[i];
        if (f == 0)
            return y0;
        d = t->yf[i + 1] - y0;
        w = (float)f / (float)(1u << t->shift);
        p = d * w;
        return y0 + p;
    }
    size_t i = segment_of(t, code);
    w = (float)(code - t->sx[i]);
    p = t->smf[i] * w;
    return t->syf[i] + p;
}

double bg_lut_value(const bg_lut *t, long code, int *status)
{
    if (t->format == BG_LUT_FLOAT)
        return (double)bg_lut_eval_float(t, code, status);
    return (double)bg_lut_eval(t, code, status) / t->counts_per_k;
}

/* The error of the table at every code against the exact temperatures 'tk'. */
static void measure(bg_lut *t, const double *tk)
{
    double ss = 0.0;
    t->max_err_k = 0.0, t->worst_code = t->code_lo;
    for (long code = t->code_lo; code <= t->code_hi; code++) {
        int st;
        double e = bg_lut_value(t, code, &st) + t->offset_k - tk[code - t->code_lo];
        ss += e * e;
        if (fabs(e) > t->max_err_k)
            t->max_err_k = fabs(e), t->worst_code = code;
    }
    t->rms_err_k = sqrt(ss / (double)(t->code_hi - t->code_lo + 1));
}

static int build_uniform(const bg_lut_spec *s, unsigned shift, const double *tk, bg_lut *out,
                         bg_error *err)
{
    double fs = bg_circuit_full_scale(&s->circuit);
    int rc;
    out->shift = shift;
    unsigned long span = (unsigned long)(out->code_hi - out->code_lo);
    out->n = (size_t)(span >> shift) + 1 + ((span & ((1ul << shift) - 1)) ? 1 : 0);
    if (s->format == BG_LUT_FLOAT)
        out->yf = malloc(out->n * sizeof *out->yf);
    else
        out->y = malloc(out->n * sizeof *out->y);
    if (!out->y && !out->yf)
        return bg_error_set(err, BG_ENOMEM, "out of memory for %zu entries", out->n);
    out->wide = 0;
    for (size_t i = 0; i < out->n; i++) {
        long code = out->code_lo + (long)(i << shift);
        double t;
        if (fs > 0.0 && (double)code > fs - 1.0)
            return bg_error_set(err, BG_EINVAL, "the last breakpoint (code %ld) falls beyond "
                                "the ADC's codes: use a smaller step", code);
        if (code <= out->code_hi)
            t = tk[code - out->code_lo];
        else if ((rc = t_at(s, (double)code, &t, err)) != BG_OK)
            return rc;
        if (s->format == BG_LUT_FLOAT) {
            out->yf[i] = (float)(t - out->offset_k);
            continue;
        }
        double v = round(out->counts_per_k * (t - out->offset_k));
        if (!(fabs(v) < 2147483647.0))
            return bg_error_set(err, BG_EINVAL, "a value overflows 32 bits");
        out->y[i] = (int32_t)v;
        if (v < -32768.0 || v > 32767.0)
            out->wide = 1;
    }
    /* the interpolation's product d f must fit 32 bits: |d| 2^shift < 2^31 */
    for (size_t i = 0; out->y && i + 1 < out->n; i++)
        if (fabs((double)out->y[i + 1] - (double)out->y[i]) * ldexp(1.0, (int)shift) >=
            2147483647.0)
            return bg_error_set(err, BG_EINVAL, "the step is too coarse for 32-bit arithmetic");
    out->bytes = out->n * (s->format == BG_LUT_FLOAT || out->wide ? 4u : 2u);
    measure(out, tk);
    return BG_OK;
}

int bgi_lut_make_bands(const bg_lut *t, const double *tk, double cpk, double off, double e,
                       bgi_band *b, bg_error *err)
{
    for (long c = 0; c <= t->code_hi - t->code_lo; c++) {
        double v = cpk * (tk[c] - off);
        if (!(fabs(v) + cpk * e < 2147483000.0))
            return bg_error_set(err, BG_EINVAL, "a value overflows 32 bits");
        long long lo = (long long)ceil(v - cpk * e), hi = (long long)floor(v + cpk * e);
        /* settle the ends with the very expression the measurement uses */
        while (lo <= hi && fabs((double)lo / cpk + off - tk[c]) > e)
            lo++;
        while (fabs((double)(lo - 1) / cpk + off - tk[c]) <= e)
            lo--;
        while (hi >= lo && fabs((double)hi / cpk + off - tk[c]) > e)
            hi--;
        while (fabs((double)(hi + 1) / cpk + off - tk[c]) <= e)
            hi++;
        b[c].lo = (int32_t)lo, b[c].hi = (int32_t)hi;
    }
    return BG_OK;
}

/* Segments for a target other than the host: 8 fractional bits first, so that the emitted
** slopes are int16_t and the shift a byte move; kept when every slope fits 16 bits (and the
** codes 16 bits), otherwise the automatic bits as for the host. */
static int target_segments(const bg_lut_spec *s, bg_lut *out, const bgi_band *b, bg_error *err)
{
    out->narrow = 0, out->aligned = 0, out->chained = 0;
    if (bgi_lut_aligned_try(s, out, b) || bgi_lut_chained_try(s, out, b))
        return BG_OK;
    if (s->target != BG_LUT_HOST && s->frac_bits < 0 && out->code_hi + 1 <= 65535 &&
        bgi_lut_segments(out, b, 8, NULL) == BG_OK) {
        int fits = 1;
        for (size_t i = 0; i < out->n; i++)
            fits = fits && out->sm[i] >= -32768 && out->sm[i] <= 32767;
        if (fits) {
            out->narrow = 1;
            return BG_OK;
        }
    }
    free(out->sx), free(out->sy), free(out->sm);
    out->sx = NULL, out->sy = NULL, out->sm = NULL, out->n = 0;
    return bgi_lut_segments(out, b, s->frac_bits, err);
}

static int build_segments(const bg_lut_spec *s, const double *tk, bg_lut *out, bg_error *err)
{
    size_t nc = (size_t)(out->code_hi - out->code_lo + 1);
    bgi_band *b = malloc(nc * sizeof *b);
    long long *on = NULL;
    int rc;
    if (!b)
        return bg_error_set(err, BG_ENOMEM, "out of memory for %zu codes", nc);
    if (s->format == BG_LUT_FLOAT) {
        /* integer segments at 2^-16 degree, within the bound less that step, less the float
        ** rounding of values up to the largest; converted to floats and measured */
        double cpk = 65536.0, big = 0.0;
        for (size_t c = 0; c < nc; c++)
            big = fmax(big, fabs(tk[c] - out->offset_k));
        double e = s->max_err_k - 1.0 / cpk - 4.0 * big * FLT_EPSILON;
        if (!(e > 0.0)) {
            free(b);
            return bg_error_set(err, BG_EINVAL, "--max-error %.6g K is below what single "
                                "precision resolves here", s->max_err_k);
        }
        rc = bgi_lut_make_bands(out, tk, cpk, out->offset_k, e, b, err);
        if (rc == BG_OK)
            rc = bgi_lut_segments(out, b, s->frac_bits, err);
        if (rc == BG_OK) {
            out->syf = malloc(out->n * sizeof *out->syf);
            out->smf = malloc(out->n * sizeof *out->smf);
            if (!out->syf || !out->smf)
                rc = bg_error_set(err, BG_ENOMEM, "out of memory for segments");
        }
        for (size_t i = 0; rc == BG_OK && i < out->n; i++) {
            double one = ldexp(1.0, (int)out->frac);
            /* the integer table outputs floor(v) in the band [L, U], so v is in [L, U + 1):
            ** half a count down centres the line in [L - 1/2, U + 1/2) */
            out->syf[i] = (float)(((double)out->yoff + (double)out->sy[i] / one - 0.5) / cpk);
            out->smf[i] = (float)((double)out->sm[i] / one / cpk);
        }
    } else {
        rc = bgi_lut_make_bands(out, tk, out->counts_per_k, out->offset_k, s->max_err_k, b, err);
        if (rc == BG_OK)
            rc = target_segments(s, out, b, err);
        /* the count's time grows with the square of the codes: by default only on small
        ** ranges, and the result says when it was left out */
        int count = s->oncurve_min > 0 ||
                    (s->oncurve_min == BG_LUT_ONCURVE_AUTO && nc <= BG_LUT_ONCURVE_AUTO_CODES);
        out->oncurve_skipped = s->oncurve_min == BG_LUT_ONCURVE_AUTO && !count;
        if (rc == BG_OK && count && (on = malloc(nc * sizeof *on)) != NULL) {
            for (size_t c = 0; c < nc; c++)
                on[c] = (long long)llround(out->counts_per_k * (tk[c] - out->offset_k));
            out->oncurve_min = bgi_lut_oncurve_min(on, b, nc);
        }
    }
    free(on);
    free(b);
    if (rc != BG_OK)
        return rc;
    size_t xb = out->code_hi + 1 <= 65535 ? 2u : 4u;
    out->bytes = out->aligned ? out->n * 6u : out->chained ? out->n * 3u
                                                            : out->n * (xb + (out->narrow ? 6u : 8u)) + xb;
    if (s->strategy == BG_LUT_INDEXED) {
        if (out->n > 65535)
            return bg_error_set(err, BG_EINVAL, "%zu segments: too many to index", out->n);
        if ((rc = bgi_lut_index(out, err)) != BG_OK)
            return rc;
        out->bytes += out->nidx * (out->n <= 256 ? 1u : 2u);
    }
    measure(out, tk);
    if (s->format == BG_LUT_FLOAT && out->max_err_k > s->max_err_k)
        return bg_error_set(err, BG_ENUM, "single-precision rounding took the table to %.6g K, "
                            "beyond --max-error", out->max_err_k);
    return BG_OK;
}

int bg_lut_build(const bg_lut_spec *s, bg_lut *out, bg_error *err)
{
    double c1, c2, r1, r2, fs, lo, hi;
    double *tk = NULL;
    int rc;

    memset(out, 0, sizeof *out);
    if (s->strategy == BG_LUT_UNIFORM && s->shift > 12 && !(s->max_err_k > 0.0))
        return bg_error_set(err, BG_EINVAL, "step of 2^%u codes: at most 2^12", s->shift);
    if (s->format == BG_LUT_Q && (s->qbits < 1 || s->qbits > 16))
        return bg_error_set(err, BG_EINVAL, "Q format with %u fractional bits: 1 .. 16",
                            s->qbits);
    if (s->strategy != BG_LUT_UNIFORM && !(s->max_err_k > 0.0))
        return bg_error_set(err, BG_EINVAL, "the %s strategy needs an error bound",
                            bg_lut_strategy_name(s->strategy));
    if (!(s->t_hi_k > s->t_lo_k))
        return bg_error_set(err, BG_EINVAL, "the range must run from a lower to a higher "
                            "temperature");
    if ((rc = bg_circuit_check_for(&s->circuit, &s->model, err)) != BG_OK ||
        (rc = bg_model_x_from_t(&s->model, s->t_lo_k, &r1, err)) != BG_OK ||
        (rc = bg_model_x_from_t(&s->model, s->t_hi_k, &r2, err)) != BG_OK ||
        (rc = check_direction(s, r1, r2, err)) != BG_OK ||
        (rc = bg_circuit_code_of_reading(&s->circuit, r1, &c1, err)) != BG_OK ||
        (rc = bg_circuit_code_of_reading(&s->circuit, r2, &c2, err)) != BG_OK)
        return rc;
    fs = bg_circuit_full_scale(&s->circuit);
    lo = ceil(fmin(c1, c2)), hi = floor(fmax(c1, c2));
    if (!(hi > lo))
        return bg_error_set(err, BG_EINVAL, "the range spans less than one code of this "
                            "circuit");
    if (fs > 0.0 && (lo < 1.0 || hi > fs - 1.0))
        return bg_error_set(err, BG_EINVAL, "the range reaches the %s (codes %.0f .. "
                            "%.0f of %.0f): change the %s or the range",
                            s->circuit.kind == BG_CIRCUIT_DEVICE ? "ends of the device's word" :
                            "ADC's rails", lo, hi, fs,
                            rails_what(s->circuit.kind));
    if (hi - lo >= 16777216.0)
        return bg_error_set(err, BG_EINVAL, "the range spans %.0f codes: at most 2^24", hi - lo);
    out->strategy = s->strategy, out->format = s->format;
    out->code_lo = (long)lo, out->code_hi = (long)hi;
    out->counts_per_k = counts_per_k(s);
    out->offset_k = s->kelvin ? 0.0 : BG_ZERO_C_K;
    size_t nc = (size_t)(out->code_hi - out->code_lo + 1);
    if (!(tk = malloc(nc * sizeof *tk)))
        return bg_error_set(err, BG_ENOMEM, "out of memory for %zu codes", nc);
    for (size_t c = 0; c < nc; c++)
        if ((rc = t_at(s, (double)out->code_lo + (double)c, &tk[c], err)) != BG_OK)
            goto fail;
    if ((rc = check_monotonic(out, tk, nc, err)) != BG_OK)
        goto fail;
    if (s->max_err_k > 0.0) {
        /* a bound no code of the range resolves: half an LSB is above it everywhere */
        double half_lsb = INFINITY;
        for (size_t c = 0; c + 1 < nc; c++)
            half_lsb = fmin(half_lsb, 0.5 * fabs(tk[c + 1] - tk[c]));
        if (s->max_err_k < half_lsb) {
            rc = bg_error_set(err, BG_EINVAL, "--max-error %.6g K is below what the ADC resolves"
                              " anywhere in the range (half an LSB is at least %.6g K)",
                              s->max_err_k, half_lsb);
            goto fail;
        }
        if (s->format != BG_LUT_FLOAT && s->max_err_k < 0.5 / out->counts_per_k) {
            rc = bg_error_set(err, BG_EINVAL, "--max-error %.6g K is below the output's "
                              "rounding (%.6g K at this resolution)", s->max_err_k,
                              0.5 / out->counts_per_k);
            goto fail;
        }
    }
    if (s->strategy != BG_LUT_UNIFORM)
        rc = build_segments(s, tk, out, err);
    else if (!(s->max_err_k > 0.0))
        rc = build_uniform(s, s->shift, tk, out, err);
    else {
        /* the largest power-of-two step within the bound: the error grows with the step */
        rc = BG_EINVAL;
        for (int sh = 12; sh >= 0; sh--) {
            bg_error e2 = BG_ERROR_INIT;
            bg_lut_release(out);
            out->strategy = s->strategy, out->format = s->format;
            out->code_lo = (long)lo, out->code_hi = (long)hi;
            out->counts_per_k = counts_per_k(s);
            out->offset_k = s->kelvin ? 0.0 : BG_ZERO_C_K;
            if (build_uniform(s, (unsigned)sh, tk, out, &e2) == BG_OK &&
                out->max_err_k <= s->max_err_k) {
                rc = BG_OK;
                break;
            }
        }
        if (rc != BG_OK)
            bg_error_set(err, BG_EINVAL, "even a breakpoint at every code misses --max-error "
                         "%.6g K (use more bits or a finer resolution)", s->max_err_k);
    }
fail:
    free(tk);
    if (rc != BG_OK)
        bg_lut_release(out);
    return rc;
}

int bg_lut_build_smallest(const bg_lut_spec *s, bg_lut *out, size_t bytes[3], bg_error *err)
{
    /* order of preference on equal size: uniform, indexed, minimal */
    static const bg_lut_strategy order[3] = { BG_LUT_UNIFORM, BG_LUT_INDEXED, BG_LUT_MINIMAL };
    bg_error first = BG_ERROR_INIT;
    size_t oncurve = 0;
    int found = 0, skipped = 0;
    memset(out, 0, sizeof *out);
    for (int k = 0; k < 3; k++) {
        bg_lut_spec s2 = *s;
        bg_lut cand = BG_LUT_INIT;
        bg_error e2 = BG_ERROR_INIT;
        s2.strategy = order[k];
        /* the on-curve count does not depend on the strategy: once, with the first segments */
        s2.oncurve_min = order[k] != BG_LUT_UNIFORM && !oncurve ? s->oncurve_min : 0;
        bytes[order[k]] = 0;
        if (bg_lut_build(&s2, &cand, &e2) != BG_OK) {
            if (first.code == BG_OK)
                first = e2;
            continue;
        }
        bytes[order[k]] = cand.bytes;
        if (cand.oncurve_min)
            oncurve = cand.oncurve_min;
        skipped |= cand.oncurve_skipped;
        if (!found || bgi_lut_choice_cost(s, &cand) < bgi_lut_choice_cost(s, out)) {
            bg_lut_release(out);
            *out = cand, found = 1;
        } else
            bg_lut_release(&cand);
    }
    if (!found) {
        if (err)
            *err = first;
        return first.code;
    }
    out->oncurve_min = out->strategy == BG_LUT_UNIFORM ? 0 : oncurve;
    out->oncurve_skipped = out->strategy != BG_LUT_UNIFORM && skipped;
    return BG_OK;
}

/* Self-heating at reading 'x' (K): the power in the sensor over the dissipation constant.
** A resistance sensor on a current source or a divider (with its supply): the current through
** the sensor's arm (leads included) squared times R; a junction: its bias current times its
** voltage.  0 where the inputs do not give it (budget_terms then shows NaN). */
static double selfheat(const bg_circuit *c, const bg_budget_opts *o, double x)
{
    if (!(o->dissipation_w_per_k > 0.0) || c->kind == BG_CIRCUIT_DEVICE)
        return 0.0;
    if (c->kind == BG_CIRCUIT_JUNCTION)
        return c->current_a > 0.0 ? c->current_a * fabs(x) / o->dissipation_w_per_k : 0.0;
    double arm = x + c->lead_ohm;
    double rb = c->series_ohm + (c->parallel_ohm > 0.0 ? arm * c->parallel_ohm /
                                                          (arm + c->parallel_ohm) : arm);
    double i = NAN;
    if (c->kind == BG_CIRCUIT_CURRENT)
        i = c->current_a;
    else if (o->excitation_v > 0.0 && c->kind != BG_CIRCUIT_OHMS)
        i = o->excitation_v / (rb + c->fixed_ohm);
    if (!isfinite(i))
        return 0.0;
    /* the voltage across the sensor's arm (and its parallel resistor), the arm's current */
    double ia = i * (rb - c->series_ohm) / arm;
    return ia * ia * x / o->dissipation_w_per_k;
}

/* The budget's terms at one code (real-valued for the temperature of a row). */
static int budget_at(const bg_lut_spec *s, const bg_lut *t, const bg_budget_opts *o, double code,
                     bg_budget_row *r, bg_error *err)
{
    double rth, tk, k_lsb;
    int rc, st;
    memset(r, 0, sizeof *r);
    if ((rc = bg_circuit_reading_of(&s->circuit, code, &rth, err)) != BG_OK ||
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
    r->table_k = fabs(bg_lut_value(t, ic, &st) + t->offset_k - tc);
    r->adc_k = 0.5 * fabs(k_lsb);
    r->fit_k = 0.0;
    if (o->cov) { /* a fit's uncertainty that cannot be evaluated is not taken as zero */
        if ((rc = bg_model_u_t(&s->model, o->cov, tk, &r->fit_k, err)) != BG_OK)
            return rc;
        r->fit_k *= o->fit_k > 0.0 ? o->fit_k : 2.0;
    }
    if (o->fixed_tol > 0.0 && (s->circuit.kind == BG_CIRCUIT_DIVIDER_LOW ||
                               s->circuit.kind == BG_CIRCUIT_DIVIDER_HIGH)) {
        /* the same code read with the fixed resistor at its tolerance: what the firmware,
        ** assuming the nominal value, gets wrong */
        bg_circuit c2 = s->circuit;
        double r2, t2;
        c2.fixed_ohm *= 1.0 + o->fixed_tol;
        if (bg_circuit_ohms_of(&c2, code, &r2, NULL) == BG_OK &&
            bg_model_t_from_r(&s->model, r2, &t2, NULL) == BG_OK)
            r->resistor_k = fabs(t2 - tk);
    }
    r->selfheat_k = selfheat(&s->circuit, o, rth);
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
        if ((rc = bg_model_x_from_t(&s->model, at_k[k], &r, err)) != BG_OK ||
            (rc = bg_circuit_code_of_reading(&s->circuit, r, &code, err)) != BG_OK ||
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
