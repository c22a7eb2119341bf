/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Times as ISO 8601 UTC text (ISO 8601-1:2019, the extended format with "Z"). */
#include <stdio.h>
#include <time.h>

#include "bandgap/time.h"

char *bg_time_format(time_t t, char *buf, size_t size)
{
    struct tm tm;
    if (size == 0)
        return buf;
    if (!gmtime_r(&t, &tm) || strftime(buf, size, "%Y-%m-%dT%H:%M:%SZ", &tm) == 0)
        buf[0] = '\0';
    return buf;
}
