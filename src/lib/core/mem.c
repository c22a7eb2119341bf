/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The huge-page hint of mem_int.h: the one place that names madvise. */
#if defined(__linux__)
#define _DEFAULT_SOURCE 1 /* madvise and MADV_HUGEPAGE are not in POSIX (posix_madvise has no
                          ** such advice) */
#include <sys/mman.h>
#endif
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "mem_int.h"

/* Arrays smaller than this are left alone: a huge page is 2 MiB, and the call costs a system
** call and splits the mapping. */
#define HINT_MIN_BYTES ((size_t)4 << 20)

void bgi_mem_hint_huge(void *p, size_t bytes)
{
#if defined(__linux__) && defined(MADV_HUGEPAGE)
    long pg = sysconf(_SC_PAGESIZE);
    if (!p || bytes < HINT_MIN_BYTES || pg <= 0)
        return;
    uintptr_t a = (uintptr_t)p, page = (uintptr_t)pg;
    uintptr_t lo = (a + page - 1) / page * page, hi = (a + bytes) / page * page;
    if (hi > lo)
        (void)madvise((void *)lo, hi - lo, MADV_HUGEPAGE); /* a hint: failure changes nothing */
#else
    (void)p, (void)bytes;
#endif
}

void *bgi_mem_grow(void *p, size_t used, size_t bytes)
{
#if defined(__linux__) && defined(MADV_HUGEPAGE)
    if (bytes >= HINT_MIN_BYTES) {
        void *n = malloc(bytes);
        if (!n)
            return NULL;
        bgi_mem_hint_huge(n, bytes);
        if (p && used)
            memcpy(n, p, used);
        free(p);
        return n;
    }
#endif
    (void)used;
    return realloc(p, bytes);
}
