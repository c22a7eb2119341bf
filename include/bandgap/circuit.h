/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Sensor front ends: how an ADC code follows from the thermistor's resistance, and back.
** A voltage divider with the thermistor on the low or high side of a fixed resistor (an
** optional resistor in parallel with the thermistor and one in series with that pair), read
** ratiometrically; a constant current read against an absolute reference; or resistance
** itself (an instrument's reading).  Codes are real numbers here; rounding is the ADC's. */
#ifndef BANDGAP_CIRCUIT_H
#define BANDGAP_CIRCUIT_H

#include <stddef.h>

#include "bandgap/error.h"
#include "bandgap/model.h"

typedef enum bg_circuit_kind {
    BG_CIRCUIT_DIVIDER_LOW = 0, /* thermistor branch between the ADC input and ground */
    BG_CIRCUIT_DIVIDER_HIGH,    /* thermistor branch between the reference and the ADC input */
    BG_CIRCUIT_CURRENT,         /* constant current through the branch, absolute reference */
    BG_CIRCUIT_OHMS             /* the code is the resistance in units of 'ohms_per_code' */
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

/* The (real-valued) code for thermistor resistance 'r_ohm'. */
BG_API int bg_circuit_code_of(const bg_circuit *c, double r_ohm, double *code, bg_error *err);

/* The thermistor resistance for a code; BG_EINVAL when the code means no positive
** resistance (an open or shorted sensor, or a code at the rails). */
BG_API int bg_circuit_ohms_of(const bg_circuit *c, double code, double *r_ohm, bg_error *err);

/* Temperature (K) and sensitivity dT/dcode (K per LSB) at a code through model 'm'. */
BG_API int bg_circuit_temp_of(const bg_circuit *c, const bg_model *m, double code, double *t_k,
                              double *k_per_lsb, bg_error *err);

/* One line describing the circuit ("divider, thermistor on the low side, fixed 10000 ohm,
** 12-bit ADC, full scale 2^N"), for provenance blocks and reports; returns 'buf'. */
BG_API char *bg_circuit_describe(const bg_circuit *c, char *buf, size_t size);

#endif
