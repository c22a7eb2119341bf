/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Sensor front ends: how an ADC code follows from the thermistor's resistance, and back.
** A voltage divider with the thermistor on the low or high side of a fixed resistor (an
** optional resistor in parallel with the thermistor and one in series with that pair), read
** ratiometrically; a constant current read against an absolute reference; or resistance
** itself (an instrument's reading).  A 2-wire sensor's leads add their loop resistance to the
** sensor's.  Beside resistance sensors: a junction's voltage (at its constant bias current)
** through an amplifier, V_adc = gain V + offset, into an ADC against an absolute reference;
** and an IC sensor's digital readout, a two's-complement word of N bits whose value n counts
** the reported temperature in 'device_lsb' degC (or is the device's code itself), read as
** the offset-binary code n + 2^(N-1) (the word with its top bit flipped), so that the codes
** of a table run 0 .. 2^N - 1 like an ADC's.  Codes are real numbers here; rounding is the
** ADC's (or the device's). */
#ifndef BANDGAP_CIRCUIT_H
#define BANDGAP_CIRCUIT_H

#include <stddef.h>

#include "bandgap/error.h"
#include "bandgap/model.h"

typedef enum bg_circuit_kind {
    BG_CIRCUIT_DIVIDER_LOW = 0, /* thermistor branch between the ADC input and ground */
    BG_CIRCUIT_DIVIDER_HIGH,    /* thermistor branch between the reference and the ADC input */
    BG_CIRCUIT_CURRENT,         /* constant current through the branch, absolute reference */
    BG_CIRCUIT_OHMS,            /* the code is the resistance in units of 'ohms_per_code' */
    BG_CIRCUIT_JUNCTION,        /* a junction's voltage: code = (gain V + offset) / vref x FS */
    BG_CIRCUIT_DEVICE           /* an IC sensor's readout: code = x / device_lsb + 2^(N-1) */
} bg_circuit_kind;

typedef struct bg_circuit {
    bg_circuit_kind kind;
    double fixed_ohm;        /* divider: the fixed resistor */
    double parallel_ohm;     /* across the thermistor; 0 = none */
    double series_ohm;       /* in series with the thermistor (and its parallel resistor) */
    unsigned adc_bits;       /* 8 .. 24 */
    int full_scale_pow2;     /* 1: full scale is 2^N codes; 0: 2^N - 1 */
    double current_a, vref_v; /* current source */
    double ohms_per_code;    /* resistance input */
    double lead_ohm;         /* a 2-wire sensor's total lead (loop) resistance, added to the
                             ** sensor's own before the parallel and series resistors; 0 = none */
    double gain, offset_v;   /* junction: the amplifier, V_adc = gain V + offset (gain != 0;
                             ** 'current_a' is the stated bias, 0 = not stated) */
    double device_lsb;       /* device readout: the reading per count (degC for a reported
                             ** temperature, 1 for a device code); 'adc_bits' is the word */
} bg_circuit;

/* A divider's sensor side, "low" or "high" ("" for the other kinds), and back: BG_EINVAL
** "say low or high" for anything else. */
BG_API const char *bg_circuit_side_name(bg_circuit_kind kind);
BG_API int bg_circuit_side_parse(const char *s, bg_circuit_kind *kind, bg_error *err);
/* Full scale: "pow2" (2^N codes) or "pow2-1" (2^N - 1), and back (BG_EINVAL otherwise). */
BG_API const char *bg_circuit_full_scale_name(int full_scale_pow2);
BG_API int bg_circuit_full_scale_parse(const char *s, int *full_scale_pow2, bg_error *err);

/* Check the circuit's values (resistors > 0, bits 8..24, ...).  BG_EINVAL with the reason. */
BG_API int bg_circuit_check(const bg_circuit *c, bg_error *err);

/* Full scale: 2^N or 2^N - 1 (the resistance input has none: 0). */
BG_API double bg_circuit_full_scale(const bg_circuit *c);

/* Whether the front end reads the quantity model 'm' reads (bg_model_quantity): a divider,
** a current source and the resistance input read ohm; the junction front end volts; the
** device readout a reported temperature or a device code.  BG_EINVAL naming what does not go
** together otherwise.  The table builder checks it. */
BG_API int bg_circuit_check_for(const bg_circuit *c, const bg_model *m, bg_error *err);

/* The (real-valued) code for the reading 'x' in the front end's quantity (ohm, V, degC or
** device counts), and back; BG_EINVAL when a code means no reading (see bg_circuit_ohms_of). */
BG_API int bg_circuit_code_of_reading(const bg_circuit *c, double x, double *code,
                                      bg_error *err);
BG_API int bg_circuit_reading_of(const bg_circuit *c, double code, double *x, bg_error *err);

/* The (real-valued) code for thermistor resistance 'r_ohm'. */
BG_API int bg_circuit_code_of(const bg_circuit *c, double r_ohm, double *code, bg_error *err);

/* The thermistor resistance for a code; BG_EINVAL when the code means no positive
** resistance (an open or shorted sensor, or a code at the rails). */
BG_API int bg_circuit_ohms_of(const bg_circuit *c, double code, double *r_ohm, bg_error *err);

/* Temperature (K) and sensitivity dT/dcode (K per LSB) at a code through model 'm' (any
** kind whose quantity the front end reads). */
BG_API int bg_circuit_temp_of(const bg_circuit *c, const bg_model *m, double code, double *t_k,
                              double *k_per_lsb, bg_error *err);

/* One line describing the circuit ("divider, thermistor on the low side, fixed 10000 ohm,
** 12-bit ADC, full scale 2^N"), for provenance blocks and reports; returns 'buf'. */
BG_API char *bg_circuit_describe(const bg_circuit *c, char *buf, size_t size);

#endif
