/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Firmware lookup tables: ADC code -> temperature.  Three strategies:
**  - uniform: values on the curve every 2^shift codes, linear interpolation by a shift;
**  - minimal: the fewest straight segments that keep every code within a bound; each segment
**    is a start code, a start value and a slope in fixed point, found by a binary search;
**  - indexed: the same segments with a small index on the top bits of the code, so that
**    lookup is one table read and one or two comparisons (O(1), no search); for the AVR,
**    when the cost model prefers it, the aligned form: segments on the index's grid and no
**    comparison (bg_lut.aligned); for a target core, when the cost model prefers it, the
**    minimal table's chained form: continuous segments of at most 255 codes, 3 bytes each,
**    read by a linear walk (bg_lut.chained).
** Segment values need not lie on the curve (each segment is the line that best spreads the
** error), and the segmentation is the exact minimum for the bound: see lut_seg.c.
** bg_lut_eval / bg_lut_eval_float perform exactly the arithmetic of the emitted C, and the
** reported error is measured with them over every code of the range. */
#ifndef BANDGAP_LUT_H
#define BANDGAP_LUT_H

#include <stdint.h>
#include <stdio.h>

#include "bandgap/circuit.h"
#include "bandgap/error.h"
#include "bandgap/fit.h"
#include "bandgap/model.h"
#include "bandgap/readings.h"

typedef enum bg_lut_format {
    BG_LUT_DECI = 0, /* 0.1 degree per count */
    BG_LUT_CENTI,    /* 0.01 */
    BG_LUT_MILLI,    /* 0.001 */
    BG_LUT_Q,        /* fixed point with 'qbits' fractional bits: 2^-qbits degree per count */
    BG_LUT_FLOAT     /* IEEE single precision */
} bg_lut_format;

typedef enum bg_lut_strategy {
    BG_LUT_UNIFORM = 0,
    BG_LUT_MINIMAL,
    BG_LUT_INDEXED
} bg_lut_strategy;

/* What the emitted C is written for (lut_emit.c, lut_target.c):
**  - host: portable C99, program-memory hooks left to the user;
**  - avr: 8-bit AVR (avr-gcc, avr-libc): tables in flash (PROGMEM) read with pgm_read_* that
**    keep the sign, 16-bit arithmetic where the values allow, segment slopes in int16_t at 8
**    fractional bits where they fit (a 16 x 16 multiply and a byte move instead of a 32-bit
**    multiply and shift); indexed tables in the aligned form where it costs less by
**    'optimize' (16-bit values, slopes split into bytes: two 8 x 8 multiplies, lut_seg.c);
**  - cortex-m0, cortex-m4: 32-bit C with the same narrow slopes where they fit (fewer bytes;
**    both cores have a single-instruction 32 x 32 -> 32 multiply, so the arithmetic stays). */
typedef enum bg_lut_target {
    BG_LUT_HOST = 0,
    BG_LUT_AVR,
    BG_LUT_CORTEX_M0,
    BG_LUT_CORTEX_M4
} bg_lut_target;

/* What the automatic strategy choice minimises on a target other than the host (lut_target.c):
** flash (table + lookup code), time per conversion, or flash + time_weight x time. */
typedef enum bg_lut_optimize {
    BG_LUT_OPT_FLASH = 0,
    BG_LUT_OPT_TIME,
    BG_LUT_OPT_WEIGHTED
} bg_lut_optimize;

typedef struct bg_lut_spec {
    bg_circuit circuit;
    bg_model model;
    double t_lo_k, t_hi_k;   /* temperature range the table must cover */
    bg_lut_strategy strategy;
    unsigned shift;          /* uniform: breakpoints every 2^shift codes (0 .. 12) */
    double max_err_k;        /* minimal, indexed: the bound on |table - model| at every code */
    bg_lut_format format;
    unsigned qbits;          /* BG_LUT_Q: fractional bits, 1 .. 16 */
    int kelvin;              /* values in kelvin instead of degC */
    int frac_bits;           /* segments: fixed-point bits of start and slope; -1 = automatic */
    int oncurve_min;         /* also count the fewest entries with values on the curve: 1
                             ** always, 0 never, BG_LUT_ONCURVE_AUTO when the range has at
                             ** most BG_LUT_ONCURVE_AUTO_CODES codes (the count's time grows
                             ** with the square of the codes) */
    const char *source;      /* where the model came from, for the provenance; NULL: inline */
    const char *stamp;       /* a time for the provenance; NULL: none (reproducible output) */
    bg_lut_target target;    /* what the emitted C is for (0: host, portable) */
    bg_lut_optimize optimize; /* the automatic choice on a target: see bg_lut_target_cost */
    double time_weight;      /* BG_LUT_OPT_WEIGHTED: bytes per cycle (or instruction) */
} bg_lut_spec;

enum { BG_LUT_ONCURVE_AUTO = -1, BG_LUT_ONCURVE_AUTO_CODES = 16384 };
enum { BG_LUT_OK = 0, BG_LUT_BELOW = 1, BG_LUT_ABOVE = 2 }; /* eval status: code out of range */

typedef struct bg_lut {
    bg_lut_strategy strategy;
    bg_lut_format format;
    long code_lo, code_hi;   /* every code in [code_lo, code_hi] is inside the range */
    size_t n;                /* entries: uniform breakpoints, or segments */
    /* uniform: breakpoints at code_lo + i 2^shift */
    unsigned shift;
    int32_t *y;              /* values in counts (integer formats) */
    float *yf;               /* values (BG_LUT_FLOAT) */
    int wide;                /* 1: values need int32_t; 0: they fit int16_t */
    /* minimal, indexed: segment i covers codes sx[i] .. sx[i+1]-1 (sx[n] = code_hi + 1) and
    ** gives yoff + ((sy[i] + sm[i] (code - sx[i])) >> frac), the sum always in 0 .. 2^30;
    ** floats: syf[i] + smf[i] (float)(code - sx[i]) */
    long *sx;
    int32_t *sy, *sm;
    float *syf, *smf;
    unsigned frac;
    int32_t yoff;
    int narrow;              /* 1: every slope fits int16_t (built for a target, frac 8) and
                             ** the emitted slopes are int16_t */
    /* indexed: idx[(code - code_lo) >> ishift] is the segment of the bucket's first code;
    ** at most 'icmp' (1 or 2) comparisons with the next starts finish the lookup */
    uint16_t *idx;
    size_t nidx;
    unsigned ishift, icmp;
    int aligned;             /* indexed, for the AVR: segments start on the index's grid and
                             ** span at most 256 codes, so icmp is 0 (no comparison) and the
                             ** AVR lookup splits each slope into bytes (lut_seg.c) */
    int chained;             /* minimal, for a target core: each segment starts where the
                             ** previous one ends, at the value it reached there (sy[i + 1] =
                             ** sy[i] + sm[i] (sx[i + 1] - sx[i]) exactly), and spans at most
                             ** 255 codes; stored as a length byte and a slope of two bytes,
                             ** read by a linear walk (lut_chain.c) */
    size_t oncurve_min;      /* the fewest entries with values on the curve (0: not counted) */
    int oncurve_skipped;     /* 1: not counted because the range has more than
                             ** BG_LUT_ONCURVE_AUTO_CODES codes and it was not asked for */
    size_t bytes;            /* flash for the tables (values, starts, slopes, index) */
    double counts_per_k, offset_k; /* value = counts_per_k (T - offset_k) */
    double max_err_k, rms_err_k;   /* over every code of the range, against the model */
    long worst_code;
} bg_lut;

#define BG_LUT_INIT { 0 }
BG_API void bg_lut_release(bg_lut *t);

/* Build the table of 'spec' and measure its error.  BG_EINVAL when the range is not inside
** the circuit's codes, a breakpoint falls on the ADC's rails, the values overflow 32 bits, or
** the bound is below the output's rounding.  Release with bg_lut_release(). */
BG_API int bg_lut_build(const bg_lut_spec *spec, bg_lut *out, bg_error *err);

/* The value the emitted lookup function returns for 'code' (counts; integer formats), with
** '*status' BG_LUT_OK, or BG_LUT_BELOW / BG_LUT_ABOVE for codes outside [code_lo, code_hi]. */
BG_API int32_t bg_lut_eval(const bg_lut *t, long code, int *status);

/* The same for BG_LUT_FLOAT tables: the float the emitted function returns. */
BG_API float bg_lut_eval_float(const bg_lut *t, long code, int *status);

/* The value at 'code' in degrees (degC, or K with 'kelvin'), any format. */
BG_API double bg_lut_value(const bg_lut *t, long code, int *status);

/* The smallest table (in bytes) that meets 'spec->max_err_k': tries every strategy and
** stores the others' sizes in 'bytes[3]' (indexed by bg_lut_strategy; 0 when one cannot be
** built).  Ties go to uniform, then indexed. */
BG_API int bg_lut_build_smallest(const bg_lut_spec *spec, bg_lut *out, size_t bytes[3],
                                 bg_error *err);

BG_API const char *bg_lut_strategy_name(bg_lut_strategy s);
/* "host", "avr", "cortex-m0", "cortex-m4" and back (BG_EINVAL "say ..." otherwise). */
BG_API const char *bg_lut_target_name(bg_lut_target t);
BG_API int bg_lut_target_parse(const char *s, bg_lut_target *out, bg_error *err);
/* The strategy named 's' ("uniform", "minimal", "indexed"): BG_EINVAL "say ..." otherwise. */
BG_API int bg_lut_strategy_parse(const char *s, bg_lut_strategy *out, bg_error *err);
/* A value format's name ("0.1", "0.01", "0.001", "q12", "float") into 'buf'; returns 'buf'. */
BG_API char *bg_lut_format_name(bg_lut_format format, unsigned qbits, char *buf, size_t size);
/* The format named 's' (the names above, Q from q1 to q16; '*qbits' set for Q only):
** BG_EINVAL "say ..." otherwise. */
BG_API int bg_lut_format_parse(const char *s, bg_lut_format *format, unsigned *qbits,
                               bg_error *err);

/* Write the table as C99 source for 'symbol' (a C identifier prefix).  BG_EIO on a write
** error, BG_EINVAL for a bad symbol.  (lut_emit.c) */
BG_API int bg_lut_emit_c(const bg_lut *t, const bg_lut_spec *spec, const char *symbol,
                         const char *version, FILE *f, bg_error *err);

/* ---- the cost on a target (lut_target.c) ---- */

typedef struct bg_lut_target_cost {
    size_t table_bytes;      /* the table's data (bg_lut.bytes) */
    size_t code_bytes;       /* the lookup function and the helpers it pulls in (measured) */
    size_t flash_bytes;      /* both */
    double per_call;         /* mean cycles (AVR) or instructions (Cortex-M) per conversion,
                             ** measured on a reference table; 0: not measured */
    const char *unit;        /* "cycles" or "instructions"; NULL for the host */
    const char *measured;    /* the toolchain, flags and simulator that measured them */
} bg_lut_target_cost;

/* What table 't' costs on 'target': its flash and its time per conversion, from
** measurements on that core (make bench-firmware); the host has no figures (code_bytes 0,
** per_call 0, unit NULL).  For a minimal table the time is scaled by its search steps. */
BG_API int bg_lut_cost_on(const bg_lut *t, bg_lut_target target, bg_lut_target_cost *out,
                           bg_error *err);

/* ---- the error budget of a table in its circuit ---- */

typedef struct bg_budget_opts {
    const double *cov;          /* the model's coefficient covariance (npar x npar) or NULL */
    double fixed_tol;           /* the fixed resistor's tolerance, a fraction; 0 = ignore */
    double excitation_v;        /* divider supply for self-heating, V; 0 = ignore */
    double dissipation_w_per_k; /* the thermistor's dissipation constant; 0 = ignore */
    double fit_k;               /* the coverage factor of the fit's term U = k u; 0: k = 2
                                ** (bg_lut_make sets it by the request's coverage rule) */
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

/* ---- a table with its budget, as the program makes it: one call ---- */

/* The unit of the table's values ("0.01 degC", "1/256 K (Q8)", "degC (float)") into 'buf';
** returns 'buf'. */
BG_API char *bg_lut_value_unit(const bg_lut_spec *spec, char *buf, size_t size);

typedef struct bg_lut_request {
    bg_lut_spec spec;         /* circuit, model, range, format, kelvin, stamp */
    long step_codes;          /* uniform: a power of two (1 .. 4096); 0: use 'max_err_k' */
    double max_err_k;         /* the bound for minimal/indexed or the automatic choice */
    int strategy;             /* with 'max_err_k': a bg_lut_strategy, or -1: the smallest */
    /* the stored fit the model came from (fit_id 0: an inline model, the rest unused) */
    long long fit_id, fit_run_id;
    const char *fit_serial;
    const double *fit_cov;    /* its covariance (npar x npar) or NULL */
    double fit_t_min_k, fit_t_max_k; /* its calibrated range */
    int allow_extrapolation;  /* build a range outside the calibrated one */
    bg_budget_opts budget;    /* tolerance, excitation, dissipation; 'cov' is 'fit_cov' */
    const double *budget_at_k; /* the budget's temperatures; NULL: the ends and the middle */
    size_t nbudget_at;
    int error_curve;          /* also the error at every code (for the table report) */
    int oncurve_count;        /* 1: count the on-curve minimum at any size (spec.oncurve_min
                              ** 1); 0: only up to BG_LUT_ONCURVE_AUTO_CODES codes */
    /* the stored fit's provenance: its run's start time (NULL: not said) and 1 when it is the
    ** probe's current fit (bg_store_current_fit), 0 when it was named */
    const char *fit_started_at;
    int fit_current;
    size_t fit_dof;           /* the stored fit's degrees of freedom, for its coverage factor */
    bg_coverage_rule coverage; /* k of the fit's U: as 'fit' and 'curve' (zeroed: the default,
                              ** Student's t at 95.45 %) */
} bg_lut_request;

/* The budget's terms that bg_lut_make computed (bg_lut_result.budget_terms).  A term whose
** inputs were not given is NaN in the rows, never 0, and the RSS and sum leave it out;
** BG_BUDGET_NO_RESISTOR: the circuit has no fixed resistor (a current source, a reading in
** ohms, a junction's amplifier, a device's word): the term does not apply, and is NaN too. */
enum { BG_BUDGET_FIT = 1 << 0, BG_BUDGET_RESISTOR = 1 << 1, BG_BUDGET_SELFHEAT = 1 << 2,
       BG_BUDGET_NO_RESISTOR = 1 << 3 };

/* The table's error over a band of consecutive codes (for the table report's chart). */
typedef struct bg_lut_error_band {
    long code_lo, code_hi;     /* the band's first and last code */
    double t_lo_k, t_hi_k;     /* the model's temperature at those codes */
    double min_k, max_k;       /* the least and the largest of table - model over the band */
} bg_lut_error_band;

enum { BG_LUT_ERROR_BANDS = 256 }; /* at most this many bands, each of the same count of codes */

typedef struct bg_lut_result {
    bg_lut table;
    bg_lut_spec spec;         /* the request's, with the strategy and step built; its
                              ** 'source' and 'stamp' point into this result */
    char source[BG_TEXT + 2 * BG_TIME + 96]; /* where the model came from; spec.source
                              ** points here */
    char stamp[64];           /* the request's stamp; spec.stamp points here */
    long long fit_id;         /* 0: an inline model */
    /* the stored fit's provenance, copied from the request (fit_id 0: unused) */
    long long fit_run_id;
    char fit_serial[BG_TEXT], fit_started_at[BG_TIME];
    int fit_current;
    double cov[BG_MODEL_MAXPAR * BG_MODEL_MAXPAR];
    size_t sizes[3];          /* the automatic choice: each strategy's bytes (0: impossible) */
    int chosen;               /* 1: the strategy was chosen as the smallest */
    bg_budget_opts budget_opts; /* the request's; 'cov' points into this result */
    bg_budget_row *budget;    /* at each budget temperature (malloc'd) */
    size_t nbudget;
    bg_budget_row worst;      /* the largest of each term over the range */
    unsigned budget_terms;    /* BG_BUDGET_* of the terms given; the others are NaN */
    bg_coverage fit_cover;    /* the coverage factor of the fit's term (BG_BUDGET_FIT) */
    /* error_curve: table - model at every code, as its least and largest value over each
    ** band of 'codes_per_band' consecutive codes (the last band may have fewer), so that the
    ** size stays small for 24-bit codes */
    bg_lut_error_band *curve;  /* malloc'd, 'ncurve' bands (at most BG_LUT_ERROR_BANDS) */
    size_t ncurve;
    long codes_per_band;
    double curve_lo_k, curve_hi_k;   /* the extremes over every code (and 0) */
} bg_lut_result;

#define BG_LUT_RESULT_INIT { 0 }
BG_API void bg_lut_result_release(bg_lut_result *r);

/* Build the table of 'rq' (the uniform step, the strategy asked for, or the smallest in
** bytes), its error budget and, with 'error_curve', its error at every code (kept as the
** least and largest value of each band of codes).  BG_EINVAL when
** a stored fit's calibrated range does not hold the table's (unless allow_extrapolation),
** or for bg_lut_build's reasons.  Release with bg_lut_result_release().  (lut_make.c) */
BG_API int bg_lut_make(const bg_lut_request *rq, bg_lut_result *out, bg_error *err);

#endif
