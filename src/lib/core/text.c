/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Clean text: UTF-8 decoding by the rules of RFC 3629 (section 3 and its table of well-formed
** byte sequences) and the characters a record's text may not hold. */
#include <stdio.h>

#include "bandgap/text.h"

size_t bg_utf8_decode(const unsigned char *s, size_t n, uint32_t *cp)
{
    static const uint32_t min[5] = { 0, 0, 0x80, 0x800, 0x10000 };
    size_t len;
    uint32_t v;
    *cp = n ? s[0] : 0;
    if (n == 0)
        return 0;
    if (s[0] < 0x80)
        return 1;
    if (s[0] >= 0xc2 && s[0] <= 0xdf)
        len = 2, v = s[0] & 0x1fu;
    else if (s[0] >= 0xe0 && s[0] <= 0xef)
        len = 3, v = s[0] & 0x0fu;
    else if (s[0] >= 0xf0 && s[0] <= 0xf4)
        len = 4, v = s[0] & 0x07u;
    else
        return 0; /* a continuation byte, C0/C1 (overlong two-byte) or F5..FF */
    if (n < len)
        return 0;
    for (size_t i = 1; i < len; i++) {
        if ((s[i] & 0xc0) != 0x80)
            return 0;
        v = (v << 6) | (s[i] & 0x3fu);
    }
    if (v < min[len] || v > 0x10ffff || (v >= 0xd800 && v <= 0xdfff))
        return 0;
    *cp = v;
    return len;
}

int bg_text_forbidden(uint32_t cp)
{
    return (cp < 0x20 && cp != '\t') || (cp >= 0x7f && cp <= 0x9f) ||
           (cp >= 0x202a && cp <= 0x202e) || (cp >= 0x2066 && cp <= 0x2069);
}

int bg_text_check(const char *field, const char *s, size_t n, bg_error *err)
{
    const unsigned char *p = (const unsigned char *)s;
    for (size_t i = 0; i < n;) {
        uint32_t cp;
        size_t len = bg_utf8_decode(p + i, n - i, &cp);
        if (len == 0)
            return bg_error_set(err, BG_EINVAL, "%s: not valid UTF-8 at byte %zu (0x%02X)", field,
                                i + 1, (unsigned)p[i]);
        if (bg_text_forbidden(cp)) {
            if (cp < 0x80)
                return bg_error_set(err, BG_EINVAL, "%s: control character 0x%02X at byte %zu "
                                    "(only tab is allowed)", field, (unsigned)cp, i + 1);
            return bg_error_set(err, BG_EINVAL, "%s: %s U+%04X at byte %zu", field,
                                cp <= 0x9f ? "control character" : "bidirectional control",
                                (unsigned)cp, i + 1);
        }
        i += len;
    }
    return BG_OK;
}
