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
    return bgi_num_scan_finite(s, len, dec_mark, v, NULL);
}

size_t bgi_num_scan_finite(const char *s, size_t len, char dec_mark, double *v, int *overflow)
{
    char small[128], *buf = small;
    size_t i = 0, nd = 0;

    if (overflow)
        *overflow = 0;

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
    {
        /* Exact fast path (Clinger, "How to read floating point numbers accurately", PLDI
        ** 1990): a decimal with at most 15 significant digits and a power of ten up to 22 is
        ** one correctly rounded multiplication or division of two exact doubles. */
        static const double p10[23] = { 1e0,  1e1,  1e2,  1e3,  1e4,  1e5,  1e6,  1e7,
                                        1e8,  1e9,  1e10, 1e11, 1e12, 1e13, 1e14, 1e15,
                                        1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22 };
        unsigned long long m = 0;
        int sig = 0, e10 = 0, neg = 0, ok = 1;
        size_t k = 0;
        if (s[k] == '+' || s[k] == '-')
            neg = s[k++] == '-';
        for (; k < i && is_digit(s[k]); k++)
            if (m || s[k] != '0') {
                if (++sig > 15)
                    ok = 0;
                m = m * 10 + (unsigned)(s[k] - '0');
            }
        if (k < i && s[k] == dec_mark)
            for (k++; k < i && is_digit(s[k]); k++) {
                if (m || s[k] != '0') {
                    if (++sig > 15)
                        ok = 0;
                    m = m * 10 + (unsigned)(s[k] - '0');
                }
                e10--;
            }
        if (k < i)
            ok = 0; /* an exponent: leave it to strtod */
        if (ok && e10 >= -22) {
            double d = (double)m;
            d = e10 < 0 ? d / p10[-e10] : d;
            *v = neg ? -d : d;
            return i;
        }
    }
    /* A decimal of any length is read: a long one in a copy of its own size. */
    if (i >= sizeof small && !(buf = malloc(i + 1)))
        return 0;
    memcpy(buf, s, i);
    buf[i] = '\0';
    if (dec_mark != '.') {
        char *p = strchr(buf, dec_mark);
        if (p)
            *p = '.';
    }
    *v = strtod(buf, NULL);
    if (buf != small)
        free(buf);
    if (!isfinite(*v)) {
        if (overflow)
            *overflow = 1;
        return 0;
    }
    return i;
}
