/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Internal: the SQLite backend's connection and the helpers its files share (sqlite.c,
** sqlite_run.c, sqlite_fit.c, sqlite_artifact.c: the only files that include sqlite3.h). */
#ifndef BANDGAP_SQLITE_INT_H
#define BANDGAP_SQLITE_INT_H

#include <sqlite3.h>

#include "store_int.h"

/* The record chain (sqlite_chain.c): the chained tables, and the most columns a row has. */
#define BGI_CHAIN_KINDS 11
#define BGI_CHAIN_MAXCOL 48

enum { STMT_INSERT_READING, STMT_INSERT_READINGS, STMT_RUN_POINTS, STMT_INSERT_FIT,
       STMT_INSERT_FIT_ID, STMT_INSERT_FITS,
       /* the read paths (bgi_stmt) */
       STMT_LOT_GET, STMT_PROBE_GET, STMT_PROBE_ID, STMT_REF_GET, STMT_FIT_GET, STMT_FIT_NEWEST,
       STMT_PROBE_RUNS, STMT_LOT_LATEST, STMT_LOT_HISTORIES, STMT_LOT_LATEST_PLAIN,
       STMT_LOT_HISTORIES_PLAIN, STMT_LOT_MOVED, STMT_PART_SPEC,
       STMT_PART_SPEC_NEWEST, STMT_EXPORT_RUNS, STMT_EXPORT_READINGS, STMT_EXPORT_FITS,
       /* the record chain */
       STMT_CHAIN_HEAD, STMT_CHAIN_INSERT,
       STMT_CHAIN_ROW0, /* one per chained table, and the readings of a run after them */
       STMT_COUNT = STMT_CHAIN_ROW0 + BGI_CHAIN_KINDS + 1 };

struct bgi_conn {
    sqlite3 *db;
    char *path;  /* the file as named to bg_store_open (messages) */
    int busy_ms; /* the busy timeout (messages) */
    sqlite3_stmt *cache[STMT_COUNT]; /* statements reused in loops, finalized at close */
    /* the record chain: each chained table's columns in the order of their names */
    int chain_order[BGI_CHAIN_KINDS + 1][BGI_CHAIN_MAXCOL];
    int chain_ncol[BGI_CHAIN_KINDS + 1];
};

/* A failed SQLite call on the connection, as a status with a message that names the cause,
** from the extended result code (the one place where SQLite's codes become bg_status):
** SQLITE_FULL and SQLITE_IOERR* are BG_EIO (a full disk says so), SQLITE_READONLY* and
** SQLITE_CANTOPEN are BG_ECANTCREAT naming the file or the directory that cannot be written,
** SQLITE_BUSY and SQLITE_LOCKED are BG_EBUSY (locked past the busy timeout), a constraint
** is BG_EINVAL naming it, out of memory BG_ENOMEM, anything else BG_EDB.  'what' comes first
** in the message.  Returns the status. */
int bgi_db_fail(bgi_conn *c, bg_error *err, const char *what);
/* The same for a result code 'xrc' of a handle 'db' (may be NULL) that is not a connection
** yet, for file 'path' (may be NULL), with busy timeout 'busy_ms'. */
int bgi_status_fail(sqlite3 *db, const char *path, int busy_ms, int xrc, bg_error *err,
                    const char *what);
int bgi_prepare(bgi_conn *c, const char *sql, sqlite3_stmt **stmt, bg_error *err);
/* A statement kept on the connection (prepared once, reset and cleared here). */
int bgi_cached(bgi_conn *c, int which, const char *sql, sqlite3_stmt **q, bg_error *err);
/* The statement 'which' of the connection's cache for a read: prepared once (persistent) and
** kept until the connection closes.  When it is in use further up the call stack (a callback
** that queries again), a fresh statement is prepared instead.  Hand it back with bgi_stmt_done
** at once, whatever happened (a failed step included): it is reset, its bindings cleared (or
** the fresh one finalized), so no cached statement holds a read transaction open. */
int bgi_stmt(bgi_conn *c, int which, const char *sql, sqlite3_stmt **q, bg_error *err);
void bgi_stmt_done(bgi_conn *c, int which, sqlite3_stmt *q);
void bgi_copy_text(char *dst, size_t size, sqlite3_stmt *stmt, int col);

/* The ITS-90 columns of 'reference' and 'reference_version' (db/009), in this order. */
#define BGI_ITS90_COLS "its90_rtpw_ohm, its90_range, its90_a, its90_b, its90_c, its90_d, " \
                       "its90_w_al"
#define BGI_ITS90_NCOLS 7
void bgi_bind_its90(sqlite3_stmt *q, int first, const bg_ref *ref);
void bgi_ref_correction_row(sqlite3_stmt *q, int kcol, int first, bg_ref *r);
void bgi_bind_text_or_null(sqlite3_stmt *stmt, int i, const char *s);
/* A double bound as NULL when it is NaN, and a NULL column read as NaN (schema 13: the values
** a lot of another kind than NTC does not hold). */
void bgi_bind_double_or_null(sqlite3_stmt *stmt, int i, double v);
double bgi_column_double_or_nan(sqlite3_stmt *stmt, int col);

/* The backend's functions shared between its files (the table is in sqlite.c). */
int bgi_sqlite_ref_version_add(bgi_conn *c, long long ref_id, const bg_ref_version *rv,
                               const char *now, long long *id, bg_error *err);
int bgi_sqlite_ref_version_each(bgi_conn *c, long long ref_id, bg_ref_version_cb cb, void *ctx,
                                bg_error *err);
int bgi_sqlite_lot_version_add(bgi_conn *c, long long lot_id, const bg_lot_version *lv,
                               const char *now, long long *id, bg_error *err);
int bgi_sqlite_lot_version_each(bgi_conn *c, long long lot_id, bg_lot_version_cb cb, void *ctx,
                                bg_error *err);
int bgi_sqlite_lot_get(bgi_conn *c, const char *code, bg_lot *out, bg_error *err);
int bgi_sqlite_probe_get(bgi_conn *c, const char *serial, bg_probe *out, bg_error *err);
int bgi_sqlite_probe_id(bgi_conn *c, const char *serial, long long *id, bg_error *err);
int bgi_sqlite_import(bgi_conn *c, const struct bgi_import *imp, long long *run_id,
                      bg_error *err);
int bgi_sqlite_run_get(bgi_conn *c, long long run_id, bg_run *out, bg_error *err);
int bgi_sqlite_seq_add(bgi_conn *c, const bg_seq_head *h, const char *text, long long ref_id,
                       long long *id, bg_error *err);
int bgi_sqlite_seq_unfinished(bgi_conn *c, bg_seq_head *out, int *found, bg_error *err);
int bgi_sqlite_seq_settle(bgi_conn *c, long long seq_id, const bg_seq_settle *s, bg_error *err);
int bgi_sqlite_seq_reading(bgi_conn *c, long long seq_id, const bg_seq_reading *r,
                           bg_error *err);
int bgi_sqlite_seq_readings(bgi_conn *c, long long seq_id, bg_seq_reading_cb cb, void *ctx,
                            bg_error *err);
int bgi_sqlite_seq_settles(bgi_conn *c, long long seq_id, bg_seq_settle_cb cb, void *ctx,
                           bg_error *err);
int bgi_sqlite_seq_end(bgi_conn *c, long long seq_id, const char *now, long long first_run,
                       long long last_run, bg_error *err);
int bgi_sqlite_run_latest(bgi_conn *c, long long probe_id, long long *run_id, bg_error *err);
int bgi_sqlite_run_by_digest(bgi_conn *c, long long probe_id, const char *sha256,
                             long long *run_id, bg_error *err);
int bgi_sqlite_fit_newest_of_run(bgi_conn *c, long long run_id, long long *fit_id,
                                 bg_error *err);
int bgi_sqlite_fit_same(bgi_conn *c, const struct bgi_fitrow *r, long long *fit_id,
                        bg_error *err);
int bgi_sqlite_run_each(bgi_conn *c, const char *serial, const char *lot_code, bg_run_cb cb,
                        void *ctx, bg_error *err);
int bgi_sqlite_reading_each(bgi_conn *c, long long run_id, bg_reading_cb cb, void *ctx,
                            bg_error *err);
int bgi_sqlite_run_points(bgi_conn *c, long long run_id, bg_store_points *out, bg_error *err);
int bgi_sqlite_lot_points_each(bgi_conn *c, const bg_lot *lot, bg_lot_points_cb cb, void *ctx,
                               bg_error *err);
int bgi_sqlite_exclude(bgi_conn *c, long long reading_id, const char *why, const char *by,
                       const char *now, bg_error *err);
/* A listing filtered by probe or lot names one that exists, or says so. */
int bgi_sqlite_check_filter(bgi_conn *c, const char *serial, const char *lot_code,
                            bg_error *err);
int bgi_sqlite_fit_next_id(bgi_conn *c, long long *id, bg_error *err);
int bgi_sqlite_fit_insert(bgi_conn *c, struct bgi_fitrow *rows, size_t n, const char *now,
                          bg_error *err);
int bgi_sqlite_fit_get(bgi_conn *c, long long fit_id, bg_fit_row *out, bg_error *err);
int bgi_sqlite_fit_each(bgi_conn *c, const char *serial, const char *lot_code, bg_fit_cb cb,
                        void *ctx, bg_error *err);
int bgi_sqlite_fit_readings(bgi_conn *c, long long fit_id, long long *ids, size_t max,
                            size_t *n, bg_error *err);
int bgi_sqlite_probe_history(bgi_conn *c, long long probe_id, const char *since,
                             bg_history_cb cb, void *ctx, bg_error *err);
int bgi_sqlite_lot_latest_fits(bgi_conn *c, long long lot_id, const char *since,
                               bg_latest_cb cb, void *ctx, bg_error *err);
int bgi_sqlite_lot_history(bgi_conn *c, long long lot_id, const char *since,
                           bg_lot_history_cb cb, void *ctx, bg_error *err);
/* Schema 8, a probe moved to another lot (probe_version), in SQL over the probe alias 'p':
** the lot it is in now (its newest move, else its row's lot: a move is never valid later than
** when it was recorded), and the lot a run of it (alias 'r') counts toward: the lot the probe
** belonged to when the run started (the newest move valid from at or before the run's start,
** the two times compared as instants by bgi_time(), registered on each connection; else the
** row's lot).  BGI_PROBE_NOW_IN(p, LOT): probe p is in lot LOT (an SQL expression) now;
** BGI_PROBE_OF(p, LOT): p is in LOT now or has a run that counts toward it.  Both find the
** candidates by index (probe_lot_serial, probe_version_lot) before they look at moves. */
#define BGI_LOT_NOW(p) "coalesce((SELECT pv.lot_id FROM probe_version pv WHERE pv.probe_id = " \
    p ".id ORDER BY pv.id DESC LIMIT 1), " p ".lot_id)"
#define BGI_LOT_AT_RUN(r, p) "coalesce((SELECT pv.lot_id FROM probe_version pv WHERE " \
    "pv.probe_id = " p ".id AND bgi_time(pv.valid_from) <= bgi_time(" r ".started_at) " \
    "ORDER BY pv.id DESC LIMIT 1), " p ".lot_id)"
#define BGI_PROBE_WAS_IN(p, lot) "(" p ".lot_id = " lot " OR " p ".id IN (SELECT " \
    "pv.probe_id FROM probe_version pv WHERE pv.lot_id = " lot "))"
#define BGI_PROBE_NOW_IN(p, lot) "(" BGI_PROBE_WAS_IN(p, lot) " AND " BGI_LOT_NOW(p) " = " \
    lot ")"
#define BGI_PROBE_OF(p, lot) "(" BGI_PROBE_WAS_IN(p, lot) " AND (" BGI_LOT_NOW(p) " = " lot \
    " OR EXISTS (SELECT 1 FROM run rr WHERE rr.probe_id = " p ".id AND " \
    BGI_LOT_AT_RUN("rr", p) " = " lot ")))"
/* The same three over a lot that no move concerns (bgi_sqlite_lot_moved says 0): no probe of
** it has a version, and no version names it, so every run of a probe of its row counts toward
** it and no other run does; the plain probe.lot_id gives the same rows by the probe_lot_serial index,
** without a subquery per row.  A lot-wide read picks one set per command. */
#define BGI_PLAIN_AT_RUN(r, p) p ".lot_id"
#define BGI_PLAIN_WAS_IN(p, lot) "(" p ".lot_id = " lot ")"
#define BGI_PLAIN_OF(p, lot) BGI_PLAIN_WAS_IN(p, lot)
/* Whether a move concerns lot 'lot_id': a probe version names it, or a probe whose row is in
** it has a version.  *moved: 1 or 0. */
int bgi_sqlite_lot_moved(bgi_conn *c, long long lot_id, int *moved, bg_error *err);
/* Register bgi_time(TEXT) on connection 'db': an ISO 8601 time as seconds since the epoch
** (bg_time_parse, so SQL compares times as the library does), NULL when it is not one. */
int bgi_sqlite_time_function(sqlite3 *db);
/* A probe's versions (sqlite_version.c): add one (pv->probe.lot_id set), and each in id
** order, the row itself first (id 0, its lot and creation time), with the lot codes. */
int bgi_sqlite_probe_version_add(bgi_conn *c, long long probe_id, const bg_probe_version *pv,
                                 const char *now, long long *id, bg_error *err);
int bgi_sqlite_probe_version_each(bgi_conn *c, long long probe_id, bg_probe_version_cb cb,
                                  void *ctx, bg_error *err);
/* The columns of a probe row (p: the probe, l: its lot, the lot it is in now) and the row. */
#define BGI_PROBE_COLS "p.id, l.id, p.serial, l.code, p.note, p.created_at, " \
    "(SELECT count(*) FROM run r WHERE r.probe_id = p.id), " \
    "(SELECT count(*) FROM fit f JOIN run r ON f.run_id = r.id WHERE r.probe_id = p.id)"
void bgi_sqlite_probe_row(sqlite3_stmt *q, bg_probe *p);
/* The export walk (sqlite_export.c): probe 'serial', or the probes of lot 'lot_id'. */
int bgi_sqlite_export_each(bgi_conn *c, const char *serial, long long lot_id,
                           const bg_export_cbs *cbs, void *ctx, bg_error *err);
/* A lot's histories in one query (store.h, bg_store_lot_histories). */
int bgi_sqlite_lot_histories(bgi_conn *c, long long lot_id, const char *since,
                             bg_lot_histories_cb cb, void *ctx, bg_error *err);
/* The columns of a whole fit row (f: fit, r: its run, p: its probe), 25 of them, and the row
** read from column 'b' on. */
#define BGI_FIT_COLS "f.id, f.run_id, r.probe_id, p.serial, f.model, f.t0_k, f.npar, f.c0, " \
    "f.c1, f.c2, f.c3, f.c4, f.c5, f.cov, f.n, f.dof, f.weighted, f.chi2, f.cov_scale, " \
    "f.rms_mk, f.max_abs_mk, f.t_min_k, f.t_max_k, f.program_version, f.created_at"
int bgi_sqlite_fit_row(sqlite3_stmt *q, int b, bg_fit_row *f, bg_error *err);
int bgi_sqlite_artifact_next(bgi_conn *c, const char *kind, const char *subject, long long *id,
                             long long *latest, bg_error *err);
int bgi_sqlite_artifact_insert(bgi_conn *c, const struct bgi_artifact_row *row, bg_error *err);
int bgi_sqlite_artifact_get(bgi_conn *c, long long id, bg_artifact *out, bg_error *err);
int bgi_sqlite_artifact_each(bgi_conn *c, bg_artifact_cb cb, void *ctx, bg_error *err);

/* A part's specifications (sqlite_part.c). */
int bgi_sqlite_part_spec_add(bgi_conn *c, const bg_part_spec *p, const char *now, long long *id,
                             bg_error *err);
int bgi_sqlite_part_spec_each(bgi_conn *c, const char *part, int newest_only,
                              bg_part_spec_cb cb, void *ctx, bg_error *err);

/* A run row as bg_store_run_get gives it, and a reading row with its exclusion (aliases: r
** run, p probe, x reference, g reading, e exclusion); their readers (sqlite_run.c). */
#define BGI_RUN_COLS "r.id, r.probe_id, coalesce(r.reference_id, 0), p.serial, " \
    "coalesce(x.ident, ''), r.operator, r.medium, r.ambient, r.excitation, r.started_at, " \
    "r.source, r.note, r.imported_at, " \
    "r.nreadings, " \
    "(SELECT count(*) FROM exclusion e WHERE e.reading_id BETWEEN r.first_reading " \
    "  AND r.first_reading + r.nreadings - 1), " \
    "(SELECT count(*) FROM fit f WHERE f.run_id = r.id), " \
    "r.readings_sha256, coalesce(r.repeats_run, 0), " \
    "CASE WHEN r.reference_version_id IS NULL THEN x.due_date ELSE " \
    "  (SELECT v.due_date FROM reference_version v WHERE v.id = r.reference_version_id) END, " \
    "r.ref_overdue, " \
    "coalesce(r.measuring_current_a, 0), coalesce(r.measuring_voltage_v, 0), " \
    "coalesce(r.reference_version_id, 0), " \
    "CASE r.quantity WHEN 'voltage' THEN 1 WHEN 'reported_temperature' THEN 2 " \
    "  WHEN 'code' THEN 3 ELSE 0 END"
#define BGI_RUN_FROM " FROM run r JOIN probe p ON r.probe_id = p.id " \
    "LEFT JOIN reference x ON r.reference_id = x.id "
#define BGI_READING_COLS "g.id, g.run_id, g.line, g.t_raw, r.t_raw_unit, g.t_k, g.r_ohm, " \
    "g.u_t_k, g.u_r_ohm, g.time, g.note, e.reading_id IS NOT NULL, e.reason, e.by_whom, e.at, " \
    "CASE r.quantity WHEN 'voltage' THEN 1 WHEN 'reported_temperature' THEN 2 " \
    "  WHEN 'code' THEN 3 ELSE 0 END"
/* The readings of run ?1 in id order, each with its exclusion (through the run's id range). */
#define BGI_READINGS_OF_RUN "SELECT " BGI_READING_COLS " FROM run r JOIN reading g ON g.id " \
    "BETWEEN r.first_reading AND r.first_reading + r.nreadings - 1 AND g.run_id = r.id " \
    "LEFT JOIN exclusion e ON e.reading_id = g.id WHERE r.id = ?1 ORDER BY g.id"
void bgi_run_row(sqlite3_stmt *q, bg_run *r);
void bgi_reading_row(sqlite3_stmt *q, bg_reading_row *g);

/* The record chain (sqlite_chain.c). */
int bgi_sqlite_chain_head(bgi_conn *c, long long *seq, char hex[65], bg_error *err);
int bgi_sqlite_chain_append(bgi_conn *c, const char *kind, long long id, bg_error *err);
int bgi_sqlite_chain_backfill(bgi_conn *c, bg_error *err);
int bgi_sqlite_chain_check(bgi_conn *c, const char *kind, long long id, bg_error *err);
int bgi_sqlite_verify(bgi_conn *c, bg_store_check *out, bg_error *err);

#endif
