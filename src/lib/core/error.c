/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bg_error: fill and prefix error messages. */
#include <stdarg.h>
#include <stdio.h>
#include <string.h>

#include "bandgap/error.h"

int bg_error_set(bg_error *err, bg_status code, const char *fmt, ...)
{
    if (err) {
        va_list ap;
        va_start(ap, fmt);
        err->code = code;
        vsnprintf(err->msg, sizeof err->msg, fmt, ap);
        va_end(ap);
    }
    return (int)code;
}

void bg_error_prefix(bg_error *err, const char *fmt, ...)
{
    char head[256], old[sizeof err->msg];
    va_list ap;

    if (!err)
        return;
    va_start(ap, fmt);
    vsnprintf(head, sizeof head, fmt, ap);
    va_end(ap);
    memcpy(old, err->msg, sizeof old);
    old[sizeof old - 1] = '\0';
    /* Truncation of a long message is acceptable; build it piece by piece. */
    size_t hl = strlen(head), cap = sizeof err->msg - 1, k = 0;
    for (size_t i = 0; i < hl && k < cap; i++)
        err->msg[k++] = head[i];
    for (const char *p = ": "; *p && k < cap; p++)
        err->msg[k++] = *p;
    for (size_t i = 0; old[i] && k < cap; i++)
        err->msg[k++] = old[i];
    err->msg[k] = '\0';
}

const char *bg_status_name(int code)
{
    switch (code) {
    case BG_OK: return "ok";
    case BG_EINVAL: return "invalid input";
    case BG_ENOENT: return "missing input";
    case BG_EIO: return "i/o error";
    case BG_ENOMEM: return "out of memory";
    case BG_ENUM: return "numerical failure";
    case BG_EDB: return "database error";
    case BG_ECANTCREAT: return "cannot write";
    case BG_EBUSY: return "busy";
    case BG_EUNAVAIL: return "instrument unavailable";
    case BG_ESTOPPED: return "stopped";
    default: return "internal error";
    }
}
