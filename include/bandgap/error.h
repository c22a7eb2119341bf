/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap error reporting: a status code plus a message, filled by every fallible call. */
#ifndef BANDGAP_ERROR_H
#define BANDGAP_ERROR_H

#include <stddef.h>

#if defined(__GNUC__)
#define BG_API __attribute__((visibility("default")))
#define BG_PRINTF(a, b) __attribute__((format(printf, a, b)))
#else
#define BG_API
#define BG_PRINTF(a, b)
#endif

/* Status codes returned by every fallible call.  BG_OK is 0. */
typedef enum bg_status {
    BG_OK = 0,
    BG_EINVAL,   /* bad input data or argument (maps to EX_DATAERR in the program) */
    BG_ENOENT,   /* missing input (EX_NOINPUT) */
    BG_EIO,      /* read or write failure, a full disk included (EX_IOERR) */
    BG_ENOMEM,   /* out of memory */
    BG_ENUM,     /* numerical failure: singular design, no convergence */
    BG_EDB,      /* database error */
    BG_EINTERNAL, /* a bug in bandgap */
    /* Added after the first eight, which keep their values. */
    BG_ECANTCREAT, /* a file or its directory cannot be written: a read-only database, a
                   ** directory where its journal cannot be created (EX_CANTCREAT) */
    BG_EBUSY,      /* a temporary failure: the database stayed locked by another process
                   ** past the busy timeout; trying again may succeed (EX_TEMPFAIL) */
    BG_EUNAVAIL,   /* a service is unavailable: the database server cannot be reached, the
                   ** backend does not offer the operation, or an instrument does not answer,
                   ** answers garbage or reports an error (EX_UNAVAILABLE) */
    BG_ESTOPPED    /* a calibration sequence stopped before its end; it can be resumed
                   ** (EX_TEMPFAIL) */
} bg_status;

typedef struct bg_error {
    bg_status code;
    char msg[512];
} bg_error;

#define BG_ERROR_INIT { BG_OK, { 0 } }

/* Fill '*err' (if not NULL) with 'code' and a printf-style message, and return 'code', so
** callers write: return bg_error_set(err, BG_EINVAL, "...").  Messages say what failed, then
** why, with no capital and no final period. */
BG_API int bg_error_set(bg_error *err, bg_status code, const char *fmt, ...) BG_PRINTF(3, 4);

/* Prefix the message in '*err' with "PREFIX: " (printf-style); keeps the code.  NULL-safe. */
BG_API void bg_error_prefix(bg_error *err, const char *fmt, ...) BG_PRINTF(2, 3);

/* A short constant name for a status ("invalid input", ...). */
BG_API const char *bg_status_name(int code);

#endif
