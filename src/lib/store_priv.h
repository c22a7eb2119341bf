/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Internal: the store handle and helpers shared by store.c and store_run.c (the only files
** that include sqlite3.h, with store_artifact.c). */
#ifndef BANDGAP_STORE_PRIV_H
#define BANDGAP_STORE_PRIV_H

#include <sqlite3.h>

#include "bandgap/store.h"

enum { STMT_INSERT_READING, STMT_INSERT_READINGS, STMT_RUN_POINTS, STMT_INSERT_FIT, STMT_COUNT };

struct bg_store {
    sqlite3 *db;
    char path[4096];
    char backup[4200];
    sqlite3_stmt *cache[STMT_COUNT]; /* statements reused in loops */
};

int bgi_db_fail(bg_store *st, bg_error *err, const char *what);
int bgi_prepare(bg_store *st, const char *sql, sqlite3_stmt **stmt, bg_error *err);
void bgi_copy_text(char *dst, size_t size, sqlite3_stmt *stmt, int col);
int bgi_check_text(const char *what, const char *s, size_t max, int required, bg_error *err);
void bgi_bind_text_or_null(sqlite3_stmt *stmt, int i, const char *s);
/* Start a write transaction unless one is open ('*own' says which); end it with 'rc'. */
int bgi_tx_begin(bg_store *st, int *own, bg_error *err);
int bgi_tx_end(bg_store *st, int own, int rc, bg_error *err);
/* The probe's row id without the counts of bg_store_probe_get; BG_EINVAL in '*rc' if absent. */
long long bgi_probe_id(bg_store *st, const char *serial, bg_error *err, int *rc);

#endif
