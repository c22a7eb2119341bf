/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Internal: a hint for the large arrays of one fit (a million readings and more). */
#ifndef BANDGAP_MEM_INT_H
#define BANDGAP_MEM_INT_H

#include <stddef.h>

/* Ask the system to back the 'bytes' at 'p' (a malloc'd array about to be filled) with huge
** pages where it can.  The first touch of every 4 KiB page is a page fault, which on a
** virtual machine costs microseconds: at a million readings the faults of a fit's arrays took
** a fifth of its time.  Linux only (madvise MADV_HUGEPAGE, honoured when transparent huge
** pages are 'madvise' or 'always'); elsewhere, and below 4 MiB, nothing.  Changes no value. */
void bgi_mem_hint_huge(void *p, size_t bytes);

/* realloc for an array that grows by doubling to many megabytes: the block 'p' holding
** 'used' bytes made 'bytes' long.  A large block is taken afresh, offered huge pages and the
** bytes copied, rather than moved by realloc: Linux moves a large block by remapping it, and
** a remapped block is not given huge pages (measured here: 100 MB grown by realloc took
** 36,000 page faults with the hint and 25,600 without; taken afresh with it, some 600).
** NULL when out of memory, 'p' then untouched, as realloc. */
void *bgi_mem_grow(void *p, size_t used, size_t bytes);

#endif
