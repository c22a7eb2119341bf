/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The program's standard output and error pass through one filter, so that no text from a
** file, a database or an argument can reach a terminal as a control sequence: a byte that does
** not start valid UTF-8 (RFC 3629) is shown as \xHH, a control character other than tab and
** newline as \xHH, and a C1 control or a bidirectional override as \uHHHH.  The program's own
** text has none of these, so clean output passes byte for byte.  (glibc's fopencookie and its
** assignable stdout and stderr; elsewhere the streams are left as they are.) */
#define _GNU_SOURCE 1
#include <errno.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cli.h"

#ifdef __GLIBC__
struct safe {
    int fd;
    unsigned char held[4]; /* the start of a sequence cut by the end of a write */
    size_t nheld;
};

static int put(int fd, const void *buf, size_t n)
{
    const char *p = buf;
    while (n > 0) {
        ssize_t w = write(fd, p, n);
        if (w < 0 && errno == EINTR)
            continue;
        if (w <= 0)
            return -1;
        p += w, n -= (size_t)w;
    }
    return 0;
}

/* The visible form of what may not pass: one invalid byte, or one forbidden character. */
static int put_escaped(int fd, const unsigned char *p, size_t len, uint32_t cp)
{
    char e[16];
    int n = len == 1 ? snprintf(e, sizeof e, "\\x%02X", (unsigned)p[0])
                     : snprintf(e, sizeof e, "\\u%04X", (unsigned)cp);
    return put(fd, e, (size_t)n);
}

/* Whether s[0..n) is the start of a valid sequence that the next write may complete. */
static int incomplete(const unsigned char *s, size_t n)
{
    size_t need = s[0] >= 0xf0 ? 4 : s[0] >= 0xe0 ? 3 : 2;
    if (s[0] < 0xc2 || s[0] > 0xf4 || n >= need)
        return 0;
    for (size_t i = 1; i < n; i++)
        if ((s[i] & 0xc0) != 0x80)
            return 0;
    return 1;
}

/* Filter s[0..n): clean runs pass in one write.  Returns how many bytes were taken (a cut
** sequence at the end is held back, and counts as taken), or -1. */
static ssize_t filter(struct safe *o, const unsigned char *s, size_t n)
{
    size_t start = 0, i = 0;
    while (i < n) {
        uint32_t cp;
        size_t len = s[i] >= 0x20 && s[i] < 0x7f ? 1 : bg_utf8_decode(s + i, n - i, &cp);
        if (len == 1 && (s[i] >= 0x20 && s[i] < 0x7f))
            cp = s[i];
        if (len > 0 && (!bg_text_forbidden(cp) || cp == '\n')) {
            i += len;
            continue;
        }
        if (put(o->fd, s + start, i - start) != 0)
            return -1;
        if (len == 0 && n - i < 4 && incomplete(s + i, n - i)) {
            memcpy(o->held, s + i, n - i);
            o->nheld = n - i;
            return (ssize_t)n;
        }
        if (put_escaped(o->fd, s + i, len ? len : 1, cp) != 0)
            return -1;
        i += len ? len : 1;
        start = i;
    }
    return put(o->fd, s + start, n - start) == 0 ? (ssize_t)n : -1;
}

static ssize_t safe_write(void *cookie, const char *buf, size_t n)
{
    struct safe *o = cookie;
    if (o->nheld == 0)
        return filter(o, (const unsigned char *)buf, n);
    /* a sequence was cut by the last write (rare): filter it joined to this one */
    unsigned char *joint = malloc(o->nheld + n);
    if (!joint)
        return -1;
    memcpy(joint, o->held, o->nheld);
    memcpy(joint + o->nheld, buf, n);
    size_t total = o->nheld + n;
    o->nheld = 0;
    ssize_t r = filter(o, joint, total);
    free(joint);
    return r < 0 ? -1 : (ssize_t)n;
}

static int safe_close(void *cookie)
{
    struct safe *o = cookie;
    int rc = 0;
    for (size_t i = 0; i < o->nheld; i++)
        rc |= put_escaped(o->fd, o->held + i, 1, 0);
    free(o);
    return rc;
}

static FILE *wrap(int fd, int mode)
{
    struct safe *o = calloc(1, sizeof *o);
    cookie_io_functions_t io = { NULL, safe_write, NULL, safe_close };
    FILE *f = o ? fopencookie(o, "w", io) : NULL;
    if (!f) {
        free(o);
        return NULL;
    }
    o->fd = fd;
    setvbuf(f, NULL, mode, mode == _IONBF ? 0 : BUFSIZ);
    return f;
}

void cli_safe_streams(void)
{
    FILE *out = wrap(STDOUT_FILENO, _IOFBF), *err = wrap(STDERR_FILENO, _IONBF);
    if (out && err) {
        fflush(stdout);
        stdout = out;
        stderr = err;
    } else {
        if (out)
            fclose(out);
        if (err)
            fclose(err);
    }
}
#else
void cli_safe_streams(void)
{
}
#endif
