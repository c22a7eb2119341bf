/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The page a report is written into: a FILE whose bytes grow in one block.  With the GNU C
** library the block is the module's own (fopencookie): it doubles, in huge pages where the
** system gives them (bgi_mem_grow).  Elsewhere it is open_memstream, whose growth copies the
** page into a new block each time and touches every new 4 KiB page once more: for the report
** of a lot of 100,000 probes, about 100 MB, that was some 80,000 page faults. */
#define _GNU_SOURCE 1 /* fopencookie is a GNU extension, not POSIX */
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/types.h>

#include "../core/mem_int.h"
#include "report/report_int.h"

#if defined(__GLIBC__)
enum { PAGE_FIRST = 1 << 16 };

static ssize_t page_write(void *cookie, const char *data, size_t n)
{
    struct bgi_page *p = cookie;
    if (n >= p->cap - p->len) { /* room for the bytes and the NUL */
        size_t cap = p->cap;
        while (n >= cap - p->len) {
            if (cap > SIZE_MAX / 2) {
                p->oom = 1;
                return -1;
            }
            cap *= 2;
        }
        char *b = bgi_mem_grow(p->buf, p->len + 1, cap);
        if (!b) {
            p->oom = 1;
            return -1;
        }
        p->buf = b, p->cap = cap;
    }
    memcpy(p->buf + p->len, data, n);
    p->len += n;
    p->buf[p->len] = '\0';
    return (ssize_t)n;
}

FILE *bgi_page_open(struct bgi_page *p)
{
    cookie_io_functions_t io = { NULL, page_write, NULL, NULL };
    memset(p, 0, sizeof *p);
    if (!(p->buf = malloc(PAGE_FIRST)))
        return NULL;
    p->buf[0] = '\0', p->cap = PAGE_FIRST;
    FILE *f = fopencookie(p, "w", io);
    if (!f) {
        free(p->buf);
        p->buf = NULL;
        return NULL;
    }
    (void)setvbuf(f, NULL, _IOFBF, PAGE_FIRST); /* fewer, larger writes; a hint only */
    return f;
}
#else
FILE *bgi_page_open(struct bgi_page *p)
{
    memset(p, 0, sizeof *p);
    return open_memstream(&p->buf, &p->len);
}
#endif
