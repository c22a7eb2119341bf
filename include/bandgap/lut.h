/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Firmware lookup tables: ADC code -> temperature as scaled integers, interpolated linearly
** between breakpoints every 2^shift codes.  bg_lut_eval performs exactly the integer
** arithmetic of the emitted C, and the reported error is measured with it over every code. */
#ifndef BANDGAP_LUT_H
#define BANDGAP_LUT_H

#include <stdint.h>
#include <stdio.h>

#include "bandgap/circuit.h"
#include "bandgap/error.h"
#include "bandgap/model.h"

typedef enum bg_lut_format {
    BG_LUT_DECI = 0, /* 0.1 degree per count */
    BG_LUT_CENTI,    /* 0.01 */
    BG_LUT_MILLI     /* 0.001 */
} bg_lut_format;

typedef struct bg_lut_spec {
    bg_circuit circuit;
    bg_model model;
    double t_lo_k, t_hi_k;   /* temperature range the table must cover */
    unsigned shift;          /* breakpoints every 2^shift codes (0 .. 12) */
    bg_lut_format format;
    int kelvin;              /* values in kelvin instead of degC */
} bg_lut_spec;

enum { BG_LUT_OK = 0, BG_LUT_BELOW = 1, BG_LUT_ABOVE = 2 }; /* eval status: code out of range */

typedef struct bg_lut {
    long code_lo, code_hi;   /* every code in [code_lo, code_hi] is inside the range */
    unsigned shift;
    size_t n;                /* breakpoints at code_lo + i 2^shift, i = 0 .. n-1 */
    int32_t *y;              /* values in counts */
    int wide;                /* 1: values need int32_t; 0: they fit int16_t */
    double counts_per_k, offset_k; /* value = counts_per_k (T - offset_k) */
    double max_err_k, rms_err_k;   /* over every code of the range, against the model */
    long worst_code;
} bg_lut;

#define BG_LUT_INIT { 0, 0, 0, 0, NULL, 0, 0, 0, 0, 0, 0 }
BG_API void bg_lut_release(bg_lut *t);

/* Build the uniform table of 'spec' and measure its error.  BG_EINVAL when the range is not
** inside the circuit's codes, a breakpoint falls on the ADC's rails, or the values overflow
** 32 bits.  Release with bg_lut_release(). */
BG_API int bg_lut_build(const bg_lut_spec *spec, bg_lut *out, bg_error *err);

/* The value the emitted lookup function returns for 'code' (counts), with '*status' BG_LUT_OK,
** or BG_LUT_BELOW / BG_LUT_ABOVE for codes outside [code_lo, code_hi]. */
BG_API int32_t bg_lut_eval(const bg_lut *t, long code, int *status);

/* Write the table as C99 source for 'symbol' (a C identifier prefix).  BG_EIO on a write
** error, BG_EINVAL for a bad symbol. */
BG_API int bg_lut_emit_c(const bg_lut *t, const bg_lut_spec *spec, const char *symbol,
                         const char *version, FILE *f, bg_error *err);

/* ---- the error budget of a table in its circuit ---- */

typedef struct bg_budget_opts {
    const double *cov;          /* the model's coefficient covariance (npar x npar) or NULL */
    double fixed_tol;           /* the fixed resistor's tolerance, a fraction; 0 = ignore */
    double excitation_v;        /* divider supply for self-heating, V; 0 = ignore */
    double dissipation_w_per_k; /* the thermistor's dissipation constant; 0 = ignore */
} bg_budget_opts;

typedef struct bg_budget_row {
    double t_k;
    double table_k;    /* |table - model| at the code of t (interpolation and rounding) */
    double adc_k;      /* half an LSB through the slope: 0.5 |dT/dcode| */
    double fit_k;      /* expanded uncertainty U (k = 2) of the fitted curve */
    double resistor_k; /* the fixed resistor at its tolerance: |T' - T| at the same code */
    double selfheat_k; /* power in the thermistor over the dissipation constant */
    double rss_k, sum_k; /* combined: root-sum-square and worst-case sum */
} bg_budget_row;

/* The budget at 'nat' temperatures and, in '*worst', the largest of each term and of each
** combination over every code of the table's range. */
BG_API int bg_lut_budget(const bg_lut_spec *spec, const bg_lut *t, const bg_budget_opts *o,
                         const double *at_k, size_t nat, bg_budget_row *rows,
                         bg_budget_row *worst, bg_error *err);

#endif
