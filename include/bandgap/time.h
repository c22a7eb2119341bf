/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Times as ISO 8601 text.  The library never reads the clock's source from the environment:
** a program passes the time (or sets it on a store handle, bg_store_set_clock). */
#ifndef BANDGAP_TIME_H
#define BANDGAP_TIME_H

#include <stddef.h>
#include <time.h>

#include "bandgap/error.h"

/* Seconds since 1970-01-01T00:00:00Z of an ISO 8601 date or date-time accepted by
** bg_csv_valid_time (a date alone is midnight UTC; an offset is applied).  BG_EINVAL else. */
BG_API int bg_time_parse(const char *iso, double *unix_s, bg_error *err);

/* Write 't' (seconds since the epoch) as ISO 8601 UTC, "2026-12-01T10:00:00Z", into 'buf'
** ('size' bytes; 21 are enough, shorter truncates) and return 'buf'. */
BG_API char *bg_time_format(time_t t, char *buf, size_t size);

#endif
