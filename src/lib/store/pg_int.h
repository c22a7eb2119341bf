/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Internal: the PostgreSQL backend's connection and the helpers its files share (pg.c,
** pg_run.c, pg_fit.c, pg_chain.c, pg_seq.c: the only files that include libpq-fe.h).  Every
** statement that carries a value is sent with its values as parameters (PQexecParams or a
** prepared statement): no value is ever spliced into SQL text. */
#ifndef BANDGAP_PG_INT_H
#define BANDGAP_PG_INT_H

#include <libpq-fe.h>

#include "store_int.h"

/* libpq's functions, loaded on first use (pg_load.c): the PQ names below call them. */
struct bgi_pq_api {
    int loaded;
    PGconn *(*connectdbParams)(const char *const *keys, const char *const *vals, int expand);
    void (*finish)(PGconn *c);
    ConnStatusType (*status)(const PGconn *c);
    char *(*errorMessage)(const PGconn *c);
    char *(*user)(const PGconn *c);
    PGTransactionStatusType (*transactionStatus)(const PGconn *c);
    PQnoticeProcessor (*setNoticeProcessor)(PGconn *c, PQnoticeProcessor p, void *arg);
    PQnoticeReceiver (*setNoticeReceiver)(PGconn *c, PQnoticeReceiver p, void *arg);
    PGresult *(*exec)(PGconn *c, const char *sql);
    PGresult *(*execParams)(PGconn *c, const char *sql, int n, const Oid *types,
                            const char *const *vals, const int *lens, const int *fmts,
                            int rfmt);
    PGresult *(*prepare)(PGconn *c, const char *name, const char *sql, int n,
                         const Oid *types);
    PGresult *(*execPrepared)(PGconn *c, const char *name, int n, const char *const *vals,
                              const int *lens, const int *fmts, int rfmt);
    ExecStatusType (*resultStatus)(const PGresult *r);
    char *(*resultErrorField)(const PGresult *r, int code);
    void (*clear)(PGresult *r);
    int (*ntuples)(const PGresult *r);
    int (*nfields)(const PGresult *r);
    char *(*fname)(const PGresult *r, int k);
    Oid (*ftype)(const PGresult *r, int k);
    char *(*getvalue)(const PGresult *r, int i, int k);
    int (*getlength)(const PGresult *r, int i, int k);
    int (*getisnull)(const PGresult *r, int i, int k);
    int (*libVersion)(void);
};
extern struct bgi_pq_api bgi_pq;
/* Load libpq once (BG_EUNAVAIL naming why it cannot be). */
int bgi_pq_load(bg_error *err);
#define PQconnectdbParams (bgi_pq.connectdbParams)
#define PQfinish (bgi_pq.finish)
#define PQstatus (bgi_pq.status)
#define PQerrorMessage (bgi_pq.errorMessage)
#define PQuser (bgi_pq.user)
#define PQtransactionStatus (bgi_pq.transactionStatus)
#define PQsetNoticeProcessor (bgi_pq.setNoticeProcessor)
#define PQsetNoticeReceiver (bgi_pq.setNoticeReceiver)
#define PQexec (bgi_pq.exec)
#define PQexecParams (bgi_pq.execParams)
#define PQprepare (bgi_pq.prepare)
#define PQexecPrepared (bgi_pq.execPrepared)
#define PQresultStatus (bgi_pq.resultStatus)
#define PQresultErrorField (bgi_pq.resultErrorField)
#define PQclear(r) ((r) ? bgi_pq.clear(r) : (void)0)
#define PQntuples (bgi_pq.ntuples)
#define PQnfields (bgi_pq.nfields)
#define PQfname (bgi_pq.fname)
#define PQftype (bgi_pq.ftype)
#define PQgetvalue (bgi_pq.getvalue)
#define PQgetlength (bgi_pq.getlength)
#define PQgetisnull (bgi_pq.getisnull)

/* The prepared statements kept on the connection (prepared on first use). */
enum { PGS_INSERT_READINGS, PGS_INSERT_READING, PGS_RUN_POINTS, PGS_INSERT_FITS,
       PGS_INSERT_FIT, PGS_CHAIN_HEAD, PGS_CHAIN_INSERT, PGS_FIT_GET, PGS_FIT_NEWEST,
       PGS_EXPORT_RUNS, PGS_EXPORT_READINGS, PGS_EXPORT_FITS, PGS_LOT_GET, PGS_PROBE_GET,
       PGS_PROBE_ID, PGS_COUNT };

struct bgi_conn {
    PGconn *db;
    char *name;       /* the target as the user named it, a password left out (messages) */
    int busy_ms;      /* how long a write waits for the writers' lock */
    int version;      /* the schema version of the database */
    unsigned char prepared[PGS_COUNT];
};

/* Parameters of one statement, as text (NULL: SQL NULL); bytea in binary. */
struct pgp {
    int n, cap;
    const char **v;
    int *len, *fmt;
    char (*num)[32];
};
int pgp_init(struct pgp *p, int cap);    /* BG_ENOMEM */
void pgp_free(struct pgp *p);
void pgp_text(struct pgp *p, const char *s);   /* NULL: NULL */
void pgp_text0(struct pgp *p, const char *s);  /* NULL or "": NULL */
void pgp_int(struct pgp *p, long long v);
void pgp_int0(struct pgp *p, long long v);     /* 0: NULL */
void pgp_dbl(struct pgp *p, double v);         /* NaN: NULL (as SQLite stores it) */
void pgp_null(struct pgp *p);
void pgp_bin(struct pgp *p, const void *b, size_t n);

/* Run 'sql' with 'p' (may be NULL); a statement that failed is NULL with '*rc' set from the
** server's SQLSTATE (bgi_pg_fail), 'what' first in the message.  'stmt' >= 0: the prepared
** statement of that number (prepared from 'sql' on first use). */
PGresult *bgi_pg_exec(bgi_conn *c, int stmt, const char *sql, const struct pgp *p, int *rc,
                      bg_error *err, const char *what);
/* A failed result (NULL: the connection's own error) as a status: constraint 23xxx BG_EINVAL
** naming it; serialization failure, deadlock and lock timeout BG_EBUSY; insufficient
** privilege BG_ECANTCREAT naming the role; disk full and i/o errors BG_EIO; out of memory
** BG_ENOMEM; a lost or refused connection BG_EUNAVAIL; others BG_EDB. */
int bgi_pg_fail(bgi_conn *c, PGresult *res, bg_error *err, const char *what);

/* Values of row 'r', column 'k' (text format): NULL reads as 0, 0.0 or "". */
int pgv_null(const PGresult *res, int r, int k);
long long pgv_ll(const PGresult *res, int r, int k);
double pgv_dbl(const PGresult *res, int r, int k);
void pgv_text(char *dst, size_t size, const PGresult *res, int r, int k);
/* A bytea column (hex text) decoded into a malloc'd buffer ('*n' bytes); NULL: none or no
** memory ('*n' 0). */
unsigned char *pgv_bytes(const PGresult *res, int r, int k, size_t *n);

/* The backend's functions (the table is in pg.c). */
int bgi_pg_lot_get(bgi_conn *c, const char *code, bg_lot *out, bg_error *err);
int bgi_pg_probe_get(bgi_conn *c, const char *serial, bg_probe *out, bg_error *err);
int bgi_pg_probe_id(bgi_conn *c, const char *serial, long long *id, bg_error *err);
int bgi_pg_check_filter(bgi_conn *c, const char *serial, const char *lot_code, bg_error *err);
void bgi_pg_probe_row(const PGresult *res, int r, bg_probe *p);
/* The columns of a probe row (p: the probe, l: the lot it is in now, BGI_PG_LOT_NOW). */
#define BGI_PG_PROBE_COLS "p.id, l.id, p.serial, l.code, p.note, p.created_at, " \
    "(SELECT count(*) FROM run r WHERE r.probe_id = p.id), " \
    "(SELECT count(*) FROM fit f JOIN run r ON f.run_id = r.id WHERE r.probe_id = p.id)"

/* Schema 8, a probe moved to another lot (probe_version), as sqlite_int.h's BGI_LOT_NOW ...
** in the server's SQL over the probe alias 'p': the lot it is in now (its newest move, else
** its row's lot), and the lot a run of it (alias 'r') counts toward: the lot it belonged to
** when the run started (the newest move valid from at or before the run's start, the two
** times compared as instants, else the row's lot).  BGI_PG_TIME(x) is the ISO 8601 text x
** (as bg_csv_valid_time accepts it: a date alone is midnight UTC, no offset is UTC, an offset
** is applied, a decimal point or comma) as exact seconds since the epoch (numeric; the days
** by the proleptic Gregorian days-from-civil count, so no server date type, time zone
** setting or year range is involved), NULL when it is not one: the same instants
** bg_time_parse gives the SQLite backend's bgi_time(). */
#define BGI_PG_TIME(x) "(SELECT (365 * t.y + floor(t.y / 4.0) - floor(t.y / 100.0) + " \
    "floor(t.y / 400.0) + (153 * t.mp + 2) / 5 + t.d - 719469) * 86400 + t.hh * 3600 + " \
    "t.mi * 60 + t.ss - t.off FROM (SELECT m[1]::int - (m[2]::int <= 2)::int AS y, " \
    "(m[2]::int + 9) % 12 AS mp, m[3]::int AS d, coalesce(m[4]::int, 0) AS hh, " \
    "coalesce(m[5]::int, 0) AS mi, coalesce(replace(m[6], ',', '.')::numeric, 0) AS ss, " \
    "coalesce(CASE m[8] WHEN '-' THEN -1 ELSE 1 END * (m[9]::int * 3600 + m[10]::int * 60), " \
    "0) AS off FROM regexp_match(" x ", '^([0-9]{4})-([0-9]{2})-([0-9]{2})(?:[T ]([0-9]{2}):" \
    "([0-9]{2})(?::([0-9]{2}(?:[.,][0-9]+)?))?(Z|([+-])([0-9]{2}):?([0-9]{2}))?)?$') AS m) t)"
#define BGI_PG_LOT_NOW(p) "coalesce((SELECT pv.lot_id FROM probe_version pv WHERE " \
    "pv.probe_id = " p ".id ORDER BY pv.id DESC LIMIT 1), " p ".lot_id)"
#define BGI_PG_LOT_AT_RUN(r, p) "coalesce((SELECT pv.lot_id FROM probe_version pv WHERE " \
    "pv.probe_id = " p ".id AND " BGI_PG_TIME("pv.valid_from") " <= " \
    BGI_PG_TIME(r ".started_at") " ORDER BY pv.id DESC LIMIT 1), " p ".lot_id)"
/* Probe p was ever in lot LOT, is in it now, or is in it now or has a run that counts toward
** it (the candidates found by index: probe's lot, probe_version_lot). */
#define BGI_PG_PROBE_WAS_IN(p, lot) "(" p ".lot_id = " lot " OR " p ".id IN (SELECT " \
    "pv.probe_id FROM probe_version pv WHERE pv.lot_id = " lot "))"
#define BGI_PG_PROBE_NOW_IN(p, lot) "(" BGI_PG_PROBE_WAS_IN(p, lot) " AND " \
    BGI_PG_LOT_NOW(p) " = " lot ")"
#define BGI_PG_PROBE_OF(p, lot) "(" BGI_PG_PROBE_WAS_IN(p, lot) " AND (" BGI_PG_LOT_NOW(p) \
    " = " lot " OR EXISTS (SELECT 1 FROM run rr WHERE rr.probe_id = " p ".id AND " \
    BGI_PG_LOT_AT_RUN("rr", p) " = " lot ")))"
/* The same over a lot no move concerns (bgi_pg_lot_moved says 0): the plain probe.lot_id
** gives the same rows without a subquery per row. */
#define BGI_PG_PLAIN_AT_RUN(r, p) p ".lot_id"
#define BGI_PG_PLAIN_WAS_IN(p, lot) "(" p ".lot_id = " lot ")"
#define BGI_PG_PLAIN_OF(p, lot) BGI_PG_PLAIN_WAS_IN(p, lot)
/* Whether a move concerns lot 'lot_id' (a version names it, or a probe of its row has one). */
int bgi_pg_lot_moved(bgi_conn *c, long long lot_id, int *moved, bg_error *err);

int bgi_pg_import(bgi_conn *c, const struct bgi_import *imp, long long *run_id, bg_error *err);
int bgi_pg_run_get(bgi_conn *c, long long run_id, bg_run *out, bg_error *err);
int bgi_pg_run_latest(bgi_conn *c, long long probe_id, long long *run_id, bg_error *err);
int bgi_pg_run_each(bgi_conn *c, const char *serial, const char *lot_code, bg_run_cb cb,
                    void *ctx, bg_error *err);
int bgi_pg_reading_each(bgi_conn *c, long long run_id, bg_reading_cb cb, void *ctx,
                        bg_error *err);
int bgi_pg_run_points(bgi_conn *c, long long run_id, bg_store_points *out, bg_error *err);
int bgi_pg_lot_points_each(bgi_conn *c, const bg_lot *lot, bg_lot_points_cb cb, void *ctx,
                           bg_error *err);
int bgi_pg_exclude(bgi_conn *c, long long reading_id, const char *why, const char *by,
                   const char *now, bg_error *err);
int bgi_pg_run_by_digest(bgi_conn *c, long long probe_id, const char *sha256,
                         long long *run_id, bg_error *err);
/* The run and reading columns (aliases as sqlite_int.h's) and their readers; a run's
** quantity (run.quantity, schema 11) as its bg_quantity number. */
#define BGI_PG_QUANTITY "CASE r.quantity WHEN 'voltage' THEN 1 WHEN 'reported_temperature' " \
    "THEN 2 WHEN 'code' THEN 3 ELSE 0 END"
#define BGI_PG_RUN_COLS "r.id, r.probe_id, coalesce(r.reference_id, 0), p.serial, " \
    "coalesce(x.ident, ''), r.operator, r.medium, r.ambient, r.excitation, r.started_at, " \
    "r.source, r.note, r.imported_at, r.nreadings, " \
    "(SELECT count(*) FROM exclusion e WHERE e.reading_id BETWEEN r.first_reading " \
    "  AND r.first_reading + r.nreadings - 1), " \
    "(SELECT count(*) FROM fit f WHERE f.run_id = r.id), " \
    "r.readings_sha256, coalesce(r.repeats_run, 0), " \
    "CASE WHEN r.reference_version_id IS NULL THEN x.due_date ELSE " \
    "  (SELECT v.due_date FROM reference_version v WHERE v.id = r.reference_version_id) END, " \
    "r.ref_overdue, coalesce(r.measuring_current_a, 0), coalesce(r.measuring_voltage_v, 0), " \
    "coalesce(r.reference_version_id, 0), " BGI_PG_QUANTITY
#define BGI_PG_RUN_FROM " FROM run r JOIN probe p ON r.probe_id = p.id " \
    "LEFT JOIN reference x ON r.reference_id = x.id "
#define BGI_PG_READINGS_OF_RUN "SELECT g.id, g.run_id, g.line, g.t_raw, r.t_raw_unit, g.t_k, " \
    "g.r_ohm, g.u_t_k, g.u_r_ohm, g.time, g.note, (e.reading_id IS NOT NULL)::int, e.reason, " \
    "e.by_whom, e.at, " BGI_PG_QUANTITY " FROM run r JOIN reading g ON g.id BETWEEN " \
    "r.first_reading AND r.first_reading + r.nreadings - 1 AND g.run_id = r.id LEFT JOIN " \
    "exclusion e ON e.reading_id = g.id WHERE r.id = $1 ORDER BY g.id"
void bgi_pg_run_row(const PGresult *res, int r, bg_run *out);
void bgi_pg_reading_row(const PGresult *res, int r, bg_reading_row *g);

int bgi_pg_fit_next_id(bgi_conn *c, long long *id, bg_error *err);
int bgi_pg_fit_insert(bgi_conn *c, struct bgi_fitrow *rows, size_t n, const char *now,
                      bg_error *err);
int bgi_pg_fit_get(bgi_conn *c, long long fit_id, bg_fit_row *out, bg_error *err);
int bgi_pg_fit_each(bgi_conn *c, const char *serial, const char *lot_code, bg_fit_cb cb,
                    void *ctx, bg_error *err);
int bgi_pg_fit_readings(bgi_conn *c, long long fit_id, long long *ids, size_t max, size_t *n,
                        bg_error *err);
int bgi_pg_fit_newest_of_run(bgi_conn *c, long long run_id, long long *fit_id, bg_error *err);
int bgi_pg_fit_same(bgi_conn *c, const struct bgi_fitrow *r, long long *fit_id, bg_error *err);
int bgi_pg_probe_history(bgi_conn *c, long long probe_id, const char *since, bg_history_cb cb,
                         void *ctx, bg_error *err);
int bgi_pg_lot_latest_fits(bgi_conn *c, long long lot_id, const char *since, bg_latest_cb cb,
                           void *ctx, bg_error *err);
int bgi_pg_lot_history(bgi_conn *c, long long lot_id, const char *since, bg_lot_history_cb cb,
                       void *ctx, bg_error *err);
int bgi_pg_lot_histories(bgi_conn *c, long long lot_id, const char *since,
                         bg_lot_histories_cb cb, void *ctx, bg_error *err);
int bgi_pg_export_each(bgi_conn *c, const char *serial, long long lot_id,
                       const bg_export_cbs *cbs, void *ctx, bg_error *err);
#define BGI_PG_FIT_COLS "f.id, f.run_id, r.probe_id, p.serial, f.model, f.t0_k, f.npar, f.c0, " \
    "f.c1, f.c2, f.c3, f.c4, f.c5, f.cov, f.n, f.dof, f.weighted, f.chi2, f.cov_scale, " \
    "f.rms_mk, f.max_abs_mk, f.t_min_k, f.t_max_k, f.program_version, f.created_at"
int bgi_pg_fit_row(const PGresult *res, int r, int b, bg_fit_row *f, bg_error *err);

/* A read of several statements in one snapshot (REPEATABLE READ, read only) unless a
** transaction is open; '*own' says whether it began one; end it with bgi_pg_read_end. */
int bgi_pg_read_begin(bgi_conn *c, int *own, bg_error *err);
void bgi_pg_read_end(bgi_conn *c, int own);

/* Calibration sequences (pg_seq.c; store_int.h's seq_* functions). */
int bgi_pg_seq_add(bgi_conn *c, const bg_seq_head *h, const char *text, long long ref_id,
                   long long *id, bg_error *err);
int bgi_pg_seq_unfinished(bgi_conn *c, bg_seq_head *out, int *found, bg_error *err);
int bgi_pg_seq_settle(bgi_conn *c, long long seq_id, const bg_seq_settle *s, bg_error *err);
int bgi_pg_seq_reading(bgi_conn *c, long long seq_id, const bg_seq_reading *r, bg_error *err);
int bgi_pg_seq_readings(bgi_conn *c, long long seq_id, bg_seq_reading_cb cb, void *ctx,
                        bg_error *err);
int bgi_pg_seq_settles(bgi_conn *c, long long seq_id, bg_seq_settle_cb cb, void *ctx,
                       bg_error *err);
int bgi_pg_seq_end(bgi_conn *c, long long seq_id, const char *now, long long first_run,
                   long long last_run, bg_error *err);

int bgi_pg_chain_append(bgi_conn *c, const char *kind, long long id, bg_error *err);
int bgi_pg_chain_head(bgi_conn *c, long long *records, char hex[65], bg_error *err);
int bgi_pg_verify(bgi_conn *c, bg_store_check *out, bg_error *err);
int bgi_pg_chain_check(bgi_conn *c, const char *kind, long long id, bg_error *err);

#endif
