/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The readings file: a CSV of temperature-resistance points (format in docs/readings-csv.md);
** the types are in readings.h. */
#ifndef BANDGAP_CSV_H
#define BANDGAP_CSV_H

#include <stdio.h>

#include "bandgap/error.h"
#include "bandgap/readings.h"

/* Parse 'len' bytes of readings text.  'name' is used in messages ("FILE:LINE: field 'NAME':
** why").  On error returns BG_EINVAL (or BG_ENOMEM) and leaves 'out' empty. */
BG_API int bg_csv_parse(const char *text, size_t len, const char *name, bg_readings *out,
                        bg_error *err);

/* Read and parse a file; "-" reads 'stdin'.  BG_ENOENT when it cannot be opened, BG_EIO on a
** read error, else as bg_csv_parse(). */
BG_API int bg_csv_read_file(const char *path, bg_readings *out, bg_error *err);

/* Check an ISO 8601 date or date-time: YYYY-MM-DD[(T| )hh:mm[:ss[.f...]]][Z|(+|-)hh[:]mm]. */
BG_API int bg_csv_valid_time(const char *s);

#endif
