/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* JSON string escaping (RFC 8259, section 7), always valid JSON whatever the bytes: a byte
** that does not start valid UTF-8 (RFC 3629) is written as U+FFFD, and the characters a text
** field may not hold (bg_text_forbidden) as \uXXXX escapes, never raw. */
#include <stdint.h>
#include <stdio.h>
#include <string.h>

#include "bandgap/json.h"
#include "bandgap/text.h"

void bg_json_write_string(FILE *f, const char *s)
{
    const unsigned char *p = (const unsigned char *)(s ? s : "");
    size_t n = strlen((const char *)p);
    fputc('"', f);
    for (size_t i = 0; i < n;) {
        uint32_t cp;
        size_t len = bg_utf8_decode(p + i, n - i, &cp);
        if (len == 0) {
            fputs("\\ufffd", f);
            i++;
            continue;
        }
        switch (cp) {
        case '"': fputs("\\\"", f); break;
        case '\\': fputs("\\\\", f); break;
        case '\n': fputs("\\n", f); break;
        case '\r': fputs("\\r", f); break;
        case '\t': fputs("\\t", f); break;
        default:
            if (bg_text_forbidden(cp))
                fprintf(f, "\\u%04x", (unsigned)cp);
            else
                fwrite(p + i, 1, len, f);
        }
        i += len;
    }
    fputc('"', f);
}
