/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Strict decimal number scanning: the grammar is checked here, the conversion is strtod's in
** the "C" locale form (the text is copied with '.' as the decimal mark). */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "num_int.h"

static int is_digit(char c) { return c >= '0' && c <= '9'; }

size_t bgi_num_scan(const char *s, size_t len, char dec_mark, double *v)
{
    char buf[128];
    size_t i = 0, nd = 0;

    if (i < len && (s[i] == '+' || s[i] == '-'))
        i++;
    while (i < len && is_digit(s[i]))
        i++, nd++;
    if (i < len && s[i] == dec_mark) {
        size_t j = i + 1, nf = 0;
        while (j < len && is_digit(s[j]))
            j++, nf++;
        if (nd + nf > 0)
            i = j, nd += nf;
    }
    if (nd == 0)
        return 0;
    if (i < len && (s[i] == 'e' || s[i] == 'E')) {
        size_t j = i + 1, ne = 0;
        if (j < len && (s[j] == '+' || s[j] == '-'))
            j++;
        while (j < len && is_digit(s[j]))
            j++, ne++;
        if (ne > 0)
            i = j;
    }
    if (i >= sizeof buf)
        return 0;
    memcpy(buf, s, i);
    buf[i] = '\0';
    if (dec_mark != '.') {
        char *p = strchr(buf, dec_mark);
        if (p)
            *p = '.';
    }
    *v = strtod(buf, NULL);
    if (!isfinite(*v))
        return 0;
    return i;
}
