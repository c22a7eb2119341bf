/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Calibration points and readings: one point of a fit, a reading as read from a file, and a
** set of readings with the shape of the file they came from (csv.h parses them, store.h
** stores them). */
#ifndef BANDGAP_READINGS_H
#define BANDGAP_READINGS_H

#include <stddef.h>

#include "bandgap/error.h"
#include "bandgap/units.h"

#define BG_TIME 40   /* room for an ISO 8601 date-time with fraction and offset */
#define BG_TEXT 201  /* serials, codes, names: at most 200 bytes */
#define BG_NOTE 1024 /* notes: at most 1023 bytes */

/* One calibration point.  'u_t_k' and 'u_r_ohm' are standard uncertainties (0 = not given);
** 'line' is the reading's line in its file (0 = unknown), used in messages.  'r_ohm' holds
** the reading in the quantity its file or run states (bg_readings.quantity, model.h): a
** resistance in ohm, a voltage in V, a reported temperature in degC or a code; 'u_r_ohm' its
** standard uncertainty in the same unit. */
typedef struct bg_point {
    double t_k, r_ohm, u_t_k, u_r_ohm;
    size_t line;
} bg_point;

typedef struct bg_reading {
    bg_point pt;        /* t_k, r_ohm, u_t_k (0 = none), u_r_ohm (0 = none), line; t_k is NaN
                        ** for a 'ref_ohms' file until the reference's coefficients apply */
    double t_raw;       /* the reference as written: temperature in 't_unit', or ohm */
    char time[BG_TIME]; /* ISO 8601 as written, "" if none */
    char *note;         /* NULL if none; owned by the bg_readings */
    double excite_a;    /* the excitation current of a voltage reading, A (0 = not given) */
} bg_reading;

typedef struct bg_readings {
    bg_reading *v;
    size_t n, cap;
    char delim;              /* ',', ';' or '\t' */
    bg_temp_unit t_unit;     /* unit of the temperature column; BG_UNIT_NONE with ref_ohms */
    int ref_ohms;            /* 1: the reference is given as a platinum resistance (ref_ohms) */
    int has_u_t, has_u_r, has_time, has_note;
    int quantity;            /* what the readings are (a bg_quantity of model.h: 0 ohms,
                             ** 1 volts, 2 reported_c, 3 code) */
    int has_excite;          /* the file states an excitation current (excite_a) */
} bg_readings;

#define BG_READINGS_INIT { NULL, 0, 0, ',', BG_UNIT_NONE, 0, 0, 0, 0, 0, 0, 0 }
BG_API void bg_readings_init(bg_readings *rs);
BG_API void bg_readings_release(bg_readings *rs);

/* Copy the readings' points into 'pts' (room for rs->n). */
BG_API void bg_readings_points(const bg_readings *rs, bg_point *pts);

#endif
