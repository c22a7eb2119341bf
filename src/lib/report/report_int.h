/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Internal to the report module: the kinds of the table (one const struct each, defined in
** the kind's file) and the head and foot that the stored reports share (report.c). */
#ifndef BANDGAP_REPORT_INT_H
#define BANDGAP_REPORT_INT_H

#include <stdio.h>

#include "bandgap/report.h"

extern const bg_report_kind bgi_report_calib; /* calib.c */
extern const bg_report_kind bgi_report_lot;   /* lot.c */
extern const bg_report_kind bgi_report_table; /* table.c */

/* One row of a key-value table: the key, and the value escaped ("not recorded" if empty). */
void bgi_report_kv(FILE *f, const char *k, const char *v);

/* The page's start, its identifier "PREFIX-000042" into 'rid' (at least 40 bytes) and the
** identity table (report, issued, replaces, laboratory, customer, issued by). */
void bgi_report_begin(FILE *f, const bg_report_kind *k, const bg_report_head *h, char *rid,
                      size_t rid_size);

/* The page a report is written into (page.c): bgi_page_open gives a FILE that writes into
** '*p' (set up by the call); after fclose, p->buf holds p->len bytes and a NUL (the caller
** frees it; NULL when the page could not be opened), and p->oom says the memory ran out. */
struct bgi_page {
    char *buf;
    size_t len, cap;
    int oom;
};
FILE *bgi_page_open(struct bgi_page *p);

#endif
