/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Sensor front ends.  Voltage divider law: for the branch Rb = Rs + (R || Rp) against the fixed
** Rf, V/Vref = Rb / (Rb + Rf) with the branch low, Rf / (Rb + Rf) with it high; a current
** source gives V = I Rb; the code is V / Vref times the full scale (common practice).
** The inverse solves the same relations for Rb, then R = 1 / (1/(Rb - Rs) - 1/Rp).  A 2-wire
** sensor's leads are in series with the sensor itself: the sensor's part of the branch is
** R + R_leads (common practice).  A junction: V_adc = gain V + offset, code = V_adc / Vref FS;
** a device readout: code = x / lsb + 2^(N-1) (offset binary of an N-bit two's-complement
** word); both inverted in closed form. */
#include <math.h>
#include <stdio.h>

#include "bandgap/circuit.h"

/* The resistors a front end other than a resistance sensor's must not have. */
static int no_resistors(const bg_circuit *c, const char *what, bg_error *err)
{
    if (c->fixed_ohm != 0.0 || c->parallel_ohm != 0.0 || c->series_ohm != 0.0 ||
        c->lead_ohm != 0.0)
        return bg_error_set(err, BG_EINVAL, "%s has no fixed, parallel, series or lead "
                            "resistors (those are for a resistance sensor)", what);
    return BG_OK;
}

static int check_junction(const bg_circuit *c, bg_error *err)
{
    int rc = no_resistors(c, "a junction front end", err);
    if (rc != BG_OK)
        return rc;
    if (!(c->vref_v > 0.0) || !isfinite(c->vref_v))
        return bg_error_set(err, BG_EINVAL, "a junction front end needs the ADC's reference "
                            "voltage > 0");
    if (!(c->gain != 0.0) || !isfinite(c->gain) || !isfinite(c->offset_v))
        return bg_error_set(err, BG_EINVAL, "a junction front end needs a gain that is not 0 "
                            "and a finite offset");
    if (!(c->current_a >= 0.0) || !isfinite(c->current_a))
        return bg_error_set(err, BG_EINVAL, "the junction's bias current must be > 0 (or 0: "
                            "not stated)");
    return BG_OK;
}

int bg_circuit_check(const bg_circuit *c, bg_error *err)
{
    if (c->kind == BG_CIRCUIT_JUNCTION || c->kind == BG_CIRCUIT_DEVICE) {
        if (c->adc_bits < 8 || c->adc_bits > 24)
            return bg_error_set(err, BG_EINVAL, "%s of %u bits (8 .. 24 allowed)",
                                c->kind == BG_CIRCUIT_DEVICE ? "device word" : "ADC",
                                c->adc_bits);
        if (c->kind == BG_CIRCUIT_JUNCTION)
            return check_junction(c, err);
        int rc = no_resistors(c, "a device readout", err);
        if (rc == BG_OK && (!(c->device_lsb > 0.0) || !isfinite(c->device_lsb)))
            rc = bg_error_set(err, BG_EINVAL, "a device readout needs the reading per count "
                              "> 0");
        return rc;
    }
    if (!(c->lead_ohm >= 0.0) || !isfinite(c->lead_ohm))
        return bg_error_set(err, BG_EINVAL, "the lead resistance must be >= 0 ohm (0 = none)");
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
    return c->full_scale_pow2 || c->kind == BG_CIRCUIT_DEVICE ? p : p - 1.0;
}

static double branch_of(const bg_circuit *c, double r)
{
    r += c->lead_ohm;
    double rp = c->parallel_ohm > 0.0 ? r * c->parallel_ohm / (r + c->parallel_ohm) : r;
    return c->series_ohm + rp;
}

int bg_circuit_check_for(const bg_circuit *c, const bg_model *m, bg_error *err)
{
    bg_quantity q = bg_model_quantity(m);
    int rc = bg_circuit_check(c, err);
    if (rc != BG_OK)
        return rc;
    switch (c->kind) {
    case BG_CIRCUIT_JUNCTION:
        if (q != BG_QTY_VOLTAGE)
            return bg_error_set(err, BG_EINVAL, "the junction front end reads volts, but the "
                                "model reads %s (%s)", bg_quantity_column(q),
                                bg_quantity_unit(q));
        return BG_OK;
    case BG_CIRCUIT_DEVICE:
        if (q != BG_QTY_REPORTED_T && q != BG_QTY_CODE)
            return bg_error_set(err, BG_EINVAL, "the device readout is for an IC sensor's "
                                "reported temperature or code, but the model reads %s (%s)",
                                bg_quantity_column(q), bg_quantity_unit(q));
        if (q == BG_QTY_CODE && c->device_lsb != 1.0)
            return bg_error_set(err, BG_EINVAL, "the model reads the device's code itself "
                                "(its LSB is the model's): the reading per count must be 1, "
                                "not %.9g", c->device_lsb);
        return BG_OK;
    default:
        if (q != BG_QTY_RESISTANCE)
            return bg_error_set(err, BG_EINVAL, "a %s reads a resistance, but the model reads "
                                "%s (%s)", c->kind == BG_CIRCUIT_CURRENT ? "current source" :
                                c->kind == BG_CIRCUIT_OHMS ? "resistance input" : "divider",
                                bg_quantity_column(q), bg_quantity_unit(q));
        return BG_OK;
    }
}

/* The code of a reading on the junction and device front ends (closed forms). */
static int code_of_other(const bg_circuit *c, double v, double *code, bg_error *err)
{
    double x;
    if (!isfinite(v))
        return bg_error_set(err, BG_EINVAL, "reading %g: must be a finite number", v);
    if (c->kind == BG_CIRCUIT_JUNCTION)
        x = (c->gain * v + c->offset_v) / c->vref_v * bg_circuit_full_scale(c);
    else
        x = v / c->device_lsb + ldexp(1.0, (int)c->adc_bits - 1);
    if (!isfinite(x))
        return bg_error_set(err, BG_EINVAL, "reading %g: the front end gives a code that is "
                            "not a finite number", v);
    *code = x;
    return BG_OK;
}

static int reading_of_other(const bg_circuit *c, double code, double *v, bg_error *err)
{
    double x;
    if (c->kind == BG_CIRCUIT_JUNCTION)
        x = (code / bg_circuit_full_scale(c) * c->vref_v - c->offset_v) / c->gain;
    else
        x = (code - ldexp(1.0, (int)c->adc_bits - 1)) * c->device_lsb;
    if (!isfinite(x))
        return bg_error_set(err, BG_EINVAL, "code %g: the front end gives a reading that is "
                            "not a finite number", code);
    *v = x;
    return BG_OK;
}

int bg_circuit_code_of_reading(const bg_circuit *c, double x, double *code, bg_error *err)
{
    int rc = bg_circuit_check(c, err);
    if (rc != BG_OK)
        return rc;
    if (c->kind == BG_CIRCUIT_JUNCTION || c->kind == BG_CIRCUIT_DEVICE)
        return code_of_other(c, x, code, err);
    return bg_circuit_code_of(c, x, code, err);
}

int bg_circuit_reading_of(const bg_circuit *c, double code, double *x, bg_error *err)
{
    int rc = bg_circuit_check(c, err);
    if (rc != BG_OK)
        return rc;
    if (c->kind == BG_CIRCUIT_JUNCTION || c->kind == BG_CIRCUIT_DEVICE)
        return reading_of_other(c, code, x, err);
    return bg_circuit_ohms_of(c, code, x, err);
}

int bg_circuit_code_of(const bg_circuit *c, double r_ohm, double *code, bg_error *err)
{
    double rb, x;
    int rc = bg_circuit_check(c, err);
    if (rc != BG_OK)
        return rc;
    if (c->kind == BG_CIRCUIT_JUNCTION || c->kind == BG_CIRCUIT_DEVICE)
        return bg_error_set(err, BG_EINVAL, "this front end does not read a resistance");
    if (!(r_ohm > 0.0) || !isfinite(r_ohm))
        return bg_error_set(err, BG_EINVAL, "resistance %g ohm: must be > 0", r_ohm);
    if (c->kind == BG_CIRCUIT_OHMS) {
        x = (r_ohm + c->lead_ohm) / c->ohms_per_code;
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
    if (c->kind == BG_CIRCUIT_JUNCTION || c->kind == BG_CIRCUIT_DEVICE)
        return bg_error_set(err, BG_EINVAL, "this front end does not read a resistance");
    if (c->kind == BG_CIRCUIT_OHMS) {
        if (!(code > 0.0))
            return bg_error_set(err, BG_EINVAL, "code %g: no positive resistance", code);
        rpar = code * c->ohms_per_code - c->lead_ohm;
        if (!(rpar > 0.0))
            return bg_error_set(err, BG_EINVAL, "code %g: no positive sensor resistance once "
                                "the leads' %g ohm are taken off", code, c->lead_ohm);
        *r_ohm = rpar;
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
        rpar = 1.0 / (1.0 / rpar - 1.0 / c->parallel_ohm);
    }
    rpar -= c->lead_ohm;
    if (!(rpar > 0.0))
        return bg_error_set(err, BG_EINVAL, "code %g: no positive sensor resistance once the "
                            "leads' %g ohm are taken off", code, c->lead_ohm);
    *r_ohm = rpar;
    return BG_OK;
}

int bg_circuit_temp_of(const bg_circuit *c, const bg_model *m, double code, double *t_k,
                       double *k_per_lsb, bg_error *err)
{
    double r, r1, r2, t1, t2, h = 1e-3;
    int rc;
    if ((rc = bg_circuit_check_for(c, m, err)) != BG_OK ||
        (rc = bg_circuit_reading_of(c, code, &r, err)) != BG_OK ||
        (rc = bg_model_t_from_x(m, r, t_k, err)) != BG_OK)
        return rc;
    if (k_per_lsb) {
        /* central difference over a thousandth of a code: the curve is smooth on that scale */
        if (bg_circuit_reading_of(c, code + h, &r1, NULL) != BG_OK ||
            bg_circuit_reading_of(c, code - h, &r2, NULL) != BG_OK ||
            bg_model_t_from_x(m, r1, &t1, NULL) != BG_OK ||
            bg_model_t_from_x(m, r2, &t2, NULL) != BG_OK)
            *k_per_lsb = NAN;
        else
            *k_per_lsb = (t1 - t2) / (2.0 * h);
    }
    return BG_OK;
}

/* Append to 'buf' (length '*len' of 'size'), never past its end. */
static void add(char *buf, size_t size, size_t *len, const char *fmt, double v)
{
    if (*len >= size)
        return;
    int n = snprintf(buf + *len, size - *len, fmt, v);
    *len = n < 0 ? *len : *len + (size_t)n < size ? *len + (size_t)n : size;
}

static void describe_other(const bg_circuit *c, char *buf, size_t size, size_t *len)
{
    if (c->kind == BG_CIRCUIT_DEVICE) {
        add(buf, size, len, "device readout, %.0f-bit two's-complement word", c->adc_bits);
        add(buf, size, len, ", %.9g per count", c->device_lsb);
        add(buf, size, len, ", table code = word + %.0f (top bit flipped)",
            ldexp(1.0, (int)c->adc_bits - 1));
        return;
    }
    add(buf, size, len, "junction voltage V, V_adc = %.9g V", c->gain);
    add(buf, size, len, c->offset_v < 0.0 ? " - %.9g V" : " + %.9g V", fabs(c->offset_v));
    add(buf, size, len, ", reference %.9g V", c->vref_v);
    if (c->current_a > 0.0)
        add(buf, size, len, ", bias %.9g A (the model holds at its calibration current)",
            c->current_a);
    add(buf, size, len, ", %.0f-bit ADC", c->adc_bits);
    add(buf, size, len, c->full_scale_pow2 ? ", full scale 2^N" : ", full scale 2^N - 1", 0.0);
}

char *bg_circuit_describe(const bg_circuit *c, char *buf, size_t size)
{
    size_t len = 0;
    if (size == 0)
        return buf;
    buf[0] = '\0';
    switch (c->kind) {
    case BG_CIRCUIT_DIVIDER_LOW:
    case BG_CIRCUIT_DIVIDER_HIGH:
        add(buf, size, &len, c->kind == BG_CIRCUIT_DIVIDER_LOW ? "divider, thermistor on the "
            "low side, fixed %.9g ohm" : "divider, thermistor on the high side, fixed %.9g ohm",
            c->fixed_ohm);
        break;
    case BG_CIRCUIT_CURRENT:
        add(buf, size, &len, "current source %.9g A", c->current_a);
        add(buf, size, &len, ", reference %.9g V", c->vref_v);
        break;
    case BG_CIRCUIT_OHMS:
        add(buf, size, &len, "resistance input, %.9g ohm per code", c->ohms_per_code);
        break;
    default:
        describe_other(c, buf, size, &len);
        return buf;
    }
    if (c->kind != BG_CIRCUIT_OHMS) {
        if (c->parallel_ohm > 0.0)
            add(buf, size, &len, ", parallel %.9g ohm", c->parallel_ohm);
        if (c->series_ohm > 0.0)
            add(buf, size, &len, ", series %.9g ohm", c->series_ohm);
    }
    if (c->lead_ohm > 0.0)
        add(buf, size, &len, ", leads %.9g ohm (2-wire loop, in series with the sensor)",
            c->lead_ohm);
    if (c->kind != BG_CIRCUIT_OHMS) {
        add(buf, size, &len, ", %.0f-bit ADC", c->adc_bits);
        add(buf, size, &len, c->full_scale_pow2 ? ", full scale 2^N" : ", full scale 2^N - 1",
            0.0);
    }
    return buf;
}
