/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The readings file: a CSV of temperature-resistance points (format in docs/readings-csv.md). */
#ifndef BANDGAP_CSV_H
#define BANDGAP_CSV_H

#include <stdio.h>

#include "bandgap/fit.h"
#include "bandgap/units.h"

typedef struct bg_reading {
    bg_point pt;        /* t_k, r_ohm, u_t_k (0 = none), u_r_ohm (0 = none), line; t_k is NaN
                        ** for a 'ref_ohms' file until the reference's coefficients apply */
    double t_raw;       /* the reference as written: temperature in 't_unit', or ohm */
    char time[40];      /* ISO 8601 as written, "" if none */
    char *note;         /* NULL if none; owned by the bg_readings */
} bg_reading;

typedef struct bg_readings {
    bg_reading *v;
    size_t n, cap;
    char delim;              /* ',', ';' or '\t' */
    bg_temp_unit t_unit;     /* unit of the temperature column; BG_UNIT_NONE with ref_ohms */
    int ref_ohms;            /* 1: the reference is given as a platinum resistance (ref_ohms) */
    int has_u_t, has_u_r, has_time, has_note;
} bg_readings;

#define BG_READINGS_INIT { NULL, 0, 0, ',', BG_UNIT_NONE, 0, 0, 0, 0, 0 }
BG_API void bg_readings_init(bg_readings *rs);
BG_API void bg_readings_release(bg_readings *rs);

/* Parse 'len' bytes of readings text.  'name' is used in messages ("FILE:LINE: field 'NAME':
** why").  On error returns BG_EINVAL (or BG_ENOMEM) and leaves 'out' empty. */
BG_API int bg_csv_parse(const char *text, size_t len, const char *name, bg_readings *out,
                        bg_error *err);

/* Read and parse a file; "-" reads 'stdin'.  BG_ENOENT when it cannot be opened, BG_EIO on a
** read error, else as bg_csv_parse(). */
BG_API int bg_csv_read_file(const char *path, bg_readings *out, bg_error *err);

/* Copy the readings' points into 'pts' (room for rs->n). */
BG_API void bg_readings_points(const bg_readings *rs, bg_point *pts);

/* Check an ISO 8601 date or date-time: YYYY-MM-DD[(T| )hh:mm[:ss[.f...]]][Z|(+|-)hh[:]mm]. */
BG_API int bg_csv_valid_time(const char *s);

#endif
