/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* libbandgap: calibration of NTC thermistors.  Include this one header for the whole API.
**
** GSL's default error handler aborts the process.  The library checks every GSL status itself
** and never changes the handler behind your back: a program using libbandgap should turn it
** off once at start-up, with gsl_set_error_handler_off() or, in a program that does not use GSL
** itself, bg_gsl_handler_off() (the bandgap program and the tests do). */
#ifndef BANDGAP_BANDGAP_H
#define BANDGAP_BANDGAP_H

#include "bandgap/error.h"
#include "bandgap/json.h"
#include "bandgap/units.h"
#include "bandgap/time.h"
#include "bandgap/readings.h"
#include "bandgap/reference.h"
#include "bandgap/model.h"
#include "bandgap/linfit.h"
#include "bandgap/fit.h"
#include "bandgap/curve.h"
#include "bandgap/csv.h"
#include "bandgap/suggest.h"
#include "bandgap/text.h"
#include "bandgap/store.h"
#include "bandgap/drift.h"
#include "bandgap/stats.h"
#include "bandgap/qa.h"
#include "bandgap/circuit.h"
#include "bandgap/lut.h"
#include "bandgap/calib.h"
#include "bandgap/report.h"
#include "bandgap/bench.h"

/* The library's version, "MAJOR.MINOR.PATCH". */
BG_API const char *bg_version(void);
/* The versions of GSL and SQLite the library runs with (static strings). */
BG_API const char *bg_gsl_version(void);
BG_API const char *bg_sqlite_version(void);
/* gsl_set_error_handler_off(): GSL's process-wide handler, which aborts by default.  Call it
** once at start-up; the library reports every GSL failure through its own bg_error. */
BG_API void bg_gsl_handler_off(void);

#endif
