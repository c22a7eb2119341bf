/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Internal: the store handle and helpers shared by store.c and store_run.c (the only files
** that include sqlite3.h, with store_artifact.c). */
#ifndef BANDGAP_STORE_PRIV_H
#define BANDGAP_STORE_PRIV_H

#include <sqlite3.h>

#include "bandgap/store.h"

enum { STMT_INSERT_READING, STMT_INSERT_READINGS, STMT_RUN_POINTS, STMT_INSERT_FIT,
       STMT_INSERT_FIT_ID, STMT_INSERT_FITS, STMT_COUNT };

/* A fit waiting to be written (bg_store_fit_queue): the bound values. */
struct bgi_fitrow {
    long long id, run_id;
    char model[16];
    double t0_k;           /* NaN: NULL */
    size_t npar, n, dof;
    double coef[6];
    unsigned char cov[8 * 36];
    size_t covlen;         /* 0: NULL */
    int weighted;
    double chi2, cov_scale, rms_mk, max_abs_mk, t_min_k, t_max_k;
    char *ids;             /* the reading ids as JSON */
};
#define BGI_FITQ 32

struct bg_store {
    sqlite3 *db;
    struct bgi_fitrow fitq[BGI_FITQ];
    size_t nfitq;
    long long next_fit_id; /* 0: not read in this transaction */
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
/* Write the queued fits (store_run.c); bgi_fitq_drop forgets them (rollback, close). */
int bgi_fitq_flush(bg_store *st, bg_error *err);
void bgi_fitq_drop(bg_store *st);
/* The probe's row id without the counts of bg_store_probe_get; BG_EINVAL in '*rc' if absent. */
long long bgi_probe_id(bg_store *st, const char *serial, bg_error *err, int *rc);

#endif
