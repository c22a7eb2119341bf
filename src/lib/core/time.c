/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Times as ISO 8601 UTC text (ISO 8601-1:2019, the extended format with "Z"), and ISO 8601
** dates and date-times read back as seconds since 1970-01-01T00:00:00Z. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "bandgap/csv.h"
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

static int two(const char *s) { return (s[0] - '0') * 10 + (s[1] - '0'); }

/* Days since 1970-01-01 of a proleptic Gregorian date (H. Hinnant, "chrono-compatible
** low-level date algorithms", days_from_civil). */
static long long days_from_civil(long long y, int m, int d)
{
    y -= m <= 2;
    long long era = (y >= 0 ? y : y - 399) / 400;
    long long yoe = y - era * 400;
    long long doy = (153 * (m + (m > 2 ? -3 : 9)) + 2) / 5 + d - 1;
    long long doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    return era * 146097 + doe - 719468;
}

int bg_time_parse(const char *iso, double *unix_s, bg_error *err)
{
    const char *s = iso;
    double t;
    if (!bg_csv_valid_time(iso))
        return bg_error_set(err, BG_EINVAL, "'%s': not an ISO 8601 date or date-time", iso);
    t = 86400.0 * (double)days_from_civil(atoi(s), two(s + 5), two(s + 8));
    s += 10;
    if (*s == 'T' || *s == ' ') {
        s++;
        t += 3600.0 * two(s) + 60.0 * two(s + 3);
        s += 5;
        if (*s == ':') {
            t += two(s + 1);
            s += 3;
            if (*s == '.' || *s == ',') {
                double scale = 0.1;
                for (s++; *s >= '0' && *s <= '9'; s++, scale /= 10.0)
                    t += (*s - '0') * scale;
            }
        }
        if (*s == '+' || *s == '-') {
            int sign = *s == '-' ? -1 : 1;
            s++;
            double off = 3600.0 * two(s);
            s += 2;
            if (*s == ':')
                s++;
            off += 60.0 * two(s);
            t -= sign * off; /* 10:00+02:00 is 08:00Z */
        }
    }
    *unix_s = t;
    return BG_OK;
}
