/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Sensor front ends.  Voltage divider law: for the branch Rb = Rs + (R || Rp) against the fixed
** Rf, V/Vref = Rb / (Rb + Rf) with the branch low, Rf / (Rb + Rf) with it high; a current
** source gives V = I Rb; the code is V / Vref times the full scale (common practice).
** The inverse solves the same relations for Rb, then R = 1 / (1/(Rb - Rs) - 1/Rp). */
#include <math.h>
#include <stdio.h>

#include "bandgap/circuit.h"

int bg_circuit_check(const bg_circuit *c, bg_error *err)
{
    if (c->kind == BG_CIRCUIT_OHMS) {
        if (!(c->ohms_per_code > 0.0) || !isfinite(c->ohms_per_code))
            return bg_error_set(err, BG_EINVAL, "resistance input needs ohms per code > 0");
        return BG_OK;
    }
    if (c->adc_bits < 8 || c->adc_bits > 24)
        return bg_error_set(err, BG_EINVAL, "ADC of %u bits (8 .. 24 allowed)", c->adc_bits);
    if (c->parallel_ohm < 0.0 || c->series_ohm < 0.0 || !isfinite(c->parallel_ohm) ||
        !isfinite(c->series_ohm))
        return bg_error_set(err, BG_EINVAL, "parallel and series resistors must be >= 0 ohm "
                            "(0 = none)");
    if (c->kind == BG_CIRCUIT_CURRENT) {
        if (!(c->current_a > 0.0) || !(c->vref_v > 0.0))
            return bg_error_set(err, BG_EINVAL, "current source needs a current and a "
                                "reference voltage > 0");
        return BG_OK;
    }
    if (!(c->fixed_ohm > 0.0) || !isfinite(c->fixed_ohm))
        return bg_error_set(err, BG_EINVAL, "the divider's fixed resistor must be > 0 ohm");
    return BG_OK;
}

double bg_circuit_full_scale(const bg_circuit *c)
{
    if (c->kind == BG_CIRCUIT_OHMS)
        return 0.0;
    double p = ldexp(1.0, (int)c->adc_bits);
    return c->full_scale_pow2 ? p : p - 1.0;
}

static double branch_of(const bg_circuit *c, double r)
{
    double rp = c->parallel_ohm > 0.0 ? r * c->parallel_ohm / (r + c->parallel_ohm) : r;
    return c->series_ohm + rp;
}

int bg_circuit_code_of(const bg_circuit *c, double r_ohm, double *code, bg_error *err)
{
    double rb, x;
    int rc = bg_circuit_check(c, err);
    if (rc != BG_OK)
        return rc;
    if (!(r_ohm > 0.0) || !isfinite(r_ohm))
        return bg_error_set(err, BG_EINVAL, "resistance %g ohm: must be > 0", r_ohm);
    if (c->kind == BG_CIRCUIT_OHMS) {
        x = r_ohm / c->ohms_per_code;
        if (!isfinite(x))
            return bg_error_set(err, BG_EINVAL, "resistance %g ohm: %g ohm per code gives a "
                                "code that is not a finite number", r_ohm, c->ohms_per_code);
        *code = x;
        return BG_OK;
    }
    rb = branch_of(c, r_ohm);
    switch (c->kind) {
    case BG_CIRCUIT_DIVIDER_LOW: x = rb / (rb + c->fixed_ohm); break;
    case BG_CIRCUIT_DIVIDER_HIGH: x = c->fixed_ohm / (rb + c->fixed_ohm); break;
    default: x = c->current_a * rb / c->vref_v; break;
    }
    x *= bg_circuit_full_scale(c);
    if (!isfinite(x)) /* e.g. a reference voltage of 1e-320 V */
        return bg_error_set(err, BG_EINVAL, "resistance %g ohm: the circuit gives a code that is "
                            "not a finite number (current %g A, reference %g V)", r_ohm,
                            c->current_a, c->vref_v);
    *code = x;
    return BG_OK;
}

int bg_circuit_ohms_of(const bg_circuit *c, double code, double *r_ohm, bg_error *err)
{
    double fs, x, rb, rpar;
    int rc = bg_circuit_check(c, err);
    if (rc != BG_OK)
        return rc;
    if (c->kind == BG_CIRCUIT_OHMS) {
        if (!(code > 0.0))
            return bg_error_set(err, BG_EINVAL, "code %g: no positive resistance", code);
        *r_ohm = code * c->ohms_per_code;
        return BG_OK;
    }
    fs = bg_circuit_full_scale(c);
    x = code / fs;
    switch (c->kind) {
    case BG_CIRCUIT_DIVIDER_LOW:
        rb = (x > 0.0 && x < 1.0) ? c->fixed_ohm * x / (1.0 - x) : NAN;
        break;
    case BG_CIRCUIT_DIVIDER_HIGH:
        rb = (x > 0.0 && x < 1.0) ? c->fixed_ohm * (1.0 - x) / x : NAN;
        break;
    default:
        rb = (x > 0.0 && x < 1.0) ? x * c->vref_v / c->current_a : NAN;
        break;
    }
    rpar = rb - c->series_ohm;
    if (!(rpar > 0.0))
        return bg_error_set(err, BG_EINVAL, "code %g: no positive sensor resistance (shorted "
                            "sensor or a code at the rail)", code);
    if (c->parallel_ohm > 0.0) {
        if (!(rpar < c->parallel_ohm))
            return bg_error_set(err, BG_EINVAL, "code %g: the branch reads at least the "
                                "parallel resistor (open sensor)", code);
        *r_ohm = 1.0 / (1.0 / rpar - 1.0 / c->parallel_ohm);
    } else
        *r_ohm = rpar;
    return BG_OK;
}

int bg_circuit_temp_of(const bg_circuit *c, const bg_model *m, double code, double *t_k,
                       double *k_per_lsb, bg_error *err)
{
    double r, r1, r2, t1, t2, h = 1e-3;
    int rc;
    if ((rc = bg_circuit_ohms_of(c, code, &r, err)) != BG_OK ||
        (rc = bg_model_t_from_r(m, r, t_k, err)) != BG_OK)
        return rc;
    if (k_per_lsb) {
        /* central difference over a thousandth of a code: the curve is smooth on that scale */
        if (bg_circuit_ohms_of(c, code + h, &r1, NULL) != BG_OK ||
            bg_circuit_ohms_of(c, code - h, &r2, NULL) != BG_OK ||
            bg_model_t_from_r(m, r1, &t1, NULL) != BG_OK ||
            bg_model_t_from_r(m, r2, &t2, NULL) != BG_OK)
            *k_per_lsb = NAN;
        else
            *k_per_lsb = (t1 - t2) / (2.0 * h);
    }
    return BG_OK;
}

char *bg_circuit_describe(const bg_circuit *c, char *buf, size_t size)
{
    int n;
    switch (c->kind) {
    case BG_CIRCUIT_DIVIDER_LOW:
    case BG_CIRCUIT_DIVIDER_HIGH:
        n = snprintf(buf, size, "divider, thermistor on the %s side, fixed %.9g ohm",
                     c->kind == BG_CIRCUIT_DIVIDER_LOW ? "low" : "high", c->fixed_ohm);
        break;
    case BG_CIRCUIT_CURRENT:
        n = snprintf(buf, size, "current source %.9g A, reference %.9g V", c->current_a,
                     c->vref_v);
        break;
    default:
        n = snprintf(buf, size, "resistance input, %.9g ohm per code", c->ohms_per_code);
        break;
    }
    size_t len = n < 0 ? 0 : (size_t)n < size ? (size_t)n : size;
    if (c->kind != BG_CIRCUIT_OHMS && len < size) {
        if (c->parallel_ohm > 0.0 && len < size)
            len += (size_t)snprintf(buf + len, size - len, ", parallel %.9g ohm", c->parallel_ohm);
        if (c->series_ohm > 0.0 && len < size)
            len += (size_t)snprintf(buf + len, size - len, ", series %.9g ohm", c->series_ohm);
        if (len < size)
            snprintf(buf + len, size - len, ", %u-bit ADC, full scale %s", c->adc_bits,
                     c->full_scale_pow2 ? "2^N" : "2^N - 1");
    }
    return buf;
}
