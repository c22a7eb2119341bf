/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The SQLite backend's fits: batched inserts of queued fits, reads of one fit or many, and the
** calibration histories QA reads in one pass. */
#include <math.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "bandgap/bandgap.h"
#include "sqlite_int.h"

/* ---- fits ---- */

/* The covariance as little-endian IEEE doubles (bgi_fitrow). */
static double get_le_double(const unsigned char *p)
{
    unsigned long long u = 0;
    double v;
    for (int i = 7; i >= 0; i--)
        u = (u << 8) | p[i];
    memcpy(&v, &u, sizeof v);
    return v;
}

enum { FIT_NCOL = 23 };
#define FIT_INSERT "INSERT INTO fit(run_id, model, t0_k, npar, c0, c1, c2, c3, c4, c5, cov, " \
    "n, dof, weighted, chi2, cov_scale, rms_mk, max_abs_mk, t_min_k, t_max_k, reading_ids, " \
    "program_version, created_at, id) VALUES "

/* Bind row 'r' at parameter offset 'b'; with 'with_id', the id goes last. */
static void fitrow_bind(sqlite3_stmt *q, int b, const struct bgi_fitrow *r, const char *now,
                        int with_id)
{
    sqlite3_bind_int64(q, b + 1, r->run_id);
    sqlite3_bind_text(q, b + 2, r->model, -1, SQLITE_STATIC);
    if (isnan(r->t0_k))
        sqlite3_bind_null(q, b + 3);
    else
        sqlite3_bind_double(q, b + 3, r->t0_k);
    sqlite3_bind_int64(q, b + 4, (sqlite3_int64)r->npar);
    for (size_t i = 0; i < BG_MODEL_MAXPAR; i++) {
        if (i < r->npar)
            sqlite3_bind_double(q, b + (int)(5 + i), r->coef[i]);
        else
            sqlite3_bind_null(q, b + (int)(5 + i));
    }
    if (r->covlen)
        sqlite3_bind_blob(q, b + 11, r->cov, (int)r->covlen, SQLITE_STATIC);
    else
        sqlite3_bind_null(q, b + 11);
    sqlite3_bind_int64(q, b + 12, (sqlite3_int64)r->n);
    sqlite3_bind_int64(q, b + 13, (sqlite3_int64)r->dof);
    sqlite3_bind_int(q, b + 14, r->weighted);
    sqlite3_bind_double(q, b + 15, r->chi2);
    if (isfinite(r->cov_scale))
        sqlite3_bind_double(q, b + 16, r->cov_scale);
    else
        sqlite3_bind_null(q, b + 16);
    sqlite3_bind_double(q, b + 17, r->rms_mk);
    sqlite3_bind_double(q, b + 18, r->max_abs_mk);
    sqlite3_bind_double(q, b + 19, r->t_min_k);
    sqlite3_bind_double(q, b + 20, r->t_max_k);
    sqlite3_bind_text(q, b + 21, r->ids, -1, SQLITE_STATIC);
    sqlite3_bind_text(q, b + 22, bg_version(), -1, SQLITE_STATIC);
    sqlite3_bind_text(q, b + 23, now, -1, SQLITE_TRANSIENT);
    if (with_id)
        sqlite3_bind_int64(q, b + 24, r->id);
}

int bgi_sqlite_fit_next_id(bgi_conn *c, long long *id, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(c, "SELECT coalesce(max(id), 0) + 1 FROM fit", &q, err);
    if (rc != BG_OK)
        return rc;
    *id = 0;
    if (sqlite3_step(q) == SQLITE_ROW)
        *id = sqlite3_column_int64(q, 0);
    sqlite3_finalize(q);
    if (!*id)
        return bgi_db_fail(c, err, "cannot read the fits");
    return BG_OK;
}

/* One row; without an id SQLite assigns it and it is written back. */
static int insert_one(bgi_conn *c, struct bgi_fitrow *r, const char *now, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_cached(c, r->id ? STMT_INSERT_FIT_ID : STMT_INSERT_FIT, r->id ?
                        FIT_INSERT "(?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?)" :
                        FIT_INSERT "(?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,NULL)", &q,
                        err);
    if (rc != BG_OK)
        return rc;
    fitrow_bind(q, 0, r, now, r->id != 0);
    if (sqlite3_step(q) != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot store the fit");
    else if (!r->id)
        r->id = sqlite3_last_insert_rowid(c->db);
    sqlite3_reset(q);
    return rc;
}

int bgi_sqlite_fit_insert(bgi_conn *c, struct bgi_fitrow *rows, size_t n, const char *now,
                          bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = BG_OK;
    if (n != BGI_FITQ) {
        for (size_t i = 0; rc == BG_OK && i < n; i++)
            rc = insert_one(c, &rows[i], now, err);
        return rc;
    }
    char sql[512 + BGI_FITQ * 80];
    size_t len = (size_t)snprintf(sql, sizeof sql, "%s", FIT_INSERT);
    for (size_t k = 0; k < BGI_FITQ; k++)
        len += (size_t)snprintf(sql + len, sizeof sql - len, "%s(?,?,?,?,?,?,?,?,?,?,"
                                "?,?,?,?,?,?,?,?,?,?,?,?,?,?)", k ? "," : "");
    if ((rc = bgi_cached(c, STMT_INSERT_FITS, sql, &q, err)) != BG_OK)
        return rc;
    for (size_t k = 0; k < n; k++)
        fitrow_bind(q, (int)(k * (FIT_NCOL + 1)), &rows[k], now, 1);
    if (sqlite3_step(q) != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot store the fits");
    sqlite3_reset(q);
    return rc;
}

#define FIT_COLS BGI_FIT_COLS
#define FIT_FROM " FROM fit f JOIN run r ON f.run_id = r.id JOIN probe p ON r.probe_id = p.id "

/* The model of a fit row from columns col .. col + 8: name, t0_k, npar, c0 .. c5. */
static int row_model(sqlite3_stmt *q, int col, bg_fit_row *f, bg_error *err)
{
    char name[16];
    bgi_copy_text(name, sizeof name, q, col);
    if (bg_model_parse(name, &f->model, err) != BG_OK) {
        /* a row bandgap could not have written: name it, for 'bandgap verify' and the fix */
        bg_error_prefix(err, "fit %lld (run %lld) is unreadable", f->id, f->run_id);
        return BG_EINVAL;
    }
    if (sqlite3_column_type(q, col + 1) != SQLITE_NULL)
        f->model.t0_k = sqlite3_column_double(q, col + 1);
    f->npar = (size_t)sqlite3_column_int64(q, col + 2);
    if (f->npar != bg_model_npar(&f->model))
        return bg_error_set(err, BG_EDB, "fit %lld (run %lld) is unreadable: %zu coefficients "
                            "for model '%s'", f->id, f->run_id, f->npar, name);
    for (size_t i = 0; i < f->npar; i++)
        f->model.coef[i] = sqlite3_column_double(q, col + 3 + (int)i);
    return BG_OK;
}

int bgi_sqlite_fit_row(sqlite3_stmt *q, int b, bg_fit_row *f, bg_error *err)
{
    memset(f, 0, sizeof *f);
    f->id = sqlite3_column_int64(q, b + 0);
    f->run_id = sqlite3_column_int64(q, b + 1);
    f->probe_id = sqlite3_column_int64(q, b + 2);
    bgi_copy_text(f->serial, sizeof f->serial, q, b + 3);
    int rc = row_model(q, b + 4, f, err);
    if (rc != BG_OK)
        return rc;
    const unsigned char *cov = sqlite3_column_blob(q, b + 13);
    if (cov && (size_t)sqlite3_column_bytes(q, b + 13) == 8 * f->npar * f->npar) {
        for (size_t k = 0; k < f->npar * f->npar; k++)
            f->cov[k] = get_le_double(cov + 8 * k);
        f->has_cov = 1;
    } else {
        for (size_t i = 0; i < f->npar * f->npar; i++)
            f->cov[i] = NAN;
    }
    f->n = (size_t)sqlite3_column_int64(q, b + 14);
    f->dof = (size_t)sqlite3_column_int64(q, b + 15);
    f->weighted = sqlite3_column_int(q, b + 16);
    f->chi2 = sqlite3_column_double(q, b + 17);
    f->cov_scale = sqlite3_column_type(q, b + 18) == SQLITE_NULL ? NAN
                                                                : sqlite3_column_double(q, b + 18);
    f->rms_mk = sqlite3_column_double(q, b + 19);
    f->max_abs_mk = sqlite3_column_double(q, b + 20);
    f->t_min_k = sqlite3_column_double(q, b + 21);
    f->t_max_k = sqlite3_column_double(q, b + 22);
    bgi_copy_text(f->program_version, sizeof f->program_version, q, b + 23);
    bgi_copy_text(f->created_at, sizeof f->created_at, q, b + 24);
    return BG_OK;
}

static int fit_row(sqlite3_stmt *q, bg_fit_row *f, bg_error *err)
{
    return bgi_sqlite_fit_row(q, 0, f, err);
}

int bgi_sqlite_fit_get(bgi_conn *c, long long fit_id, bg_fit_row *out, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_stmt(c, STMT_FIT_GET, "SELECT " FIT_COLS FIT_FROM "WHERE f.id = ?", &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, fit_id);
    int s = sqlite3_step(q);
    if (s == SQLITE_ROW)
        rc = fit_row(q, out, err);
    else if (s == SQLITE_DONE)
        rc = bg_error_set(err, BG_EINVAL, "no fit %lld", fit_id);
    else
        rc = bgi_db_fail(c, err, "cannot read fits");
    bgi_stmt_done(c, STMT_FIT_GET, q);
    return rc;
}

int bgi_sqlite_fit_each(bgi_conn *c, const char *serial, const char *lot_code, bg_fit_cb cb,
                        void *ctx, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_fit_row f;
    int rc = bgi_sqlite_check_filter(c, serial, lot_code, err), s;
    if (rc != BG_OK)
        return rc;
    /* a lot's fits: those of the runs that count toward it */
    rc = bgi_prepare(c, "SELECT " FIT_COLS FIT_FROM "JOIN lot l ON l.id = "
                     BGI_LOT_AT_RUN("r", "p") " "
                     "WHERE (?1 IS NULL OR p.serial = ?1) AND (?2 IS NULL OR l.code = ?2) "
                     "ORDER BY f.id", &q, err);
    if (rc != BG_OK)
        return rc;
    bgi_bind_text_or_null(q, 1, serial);
    bgi_bind_text_or_null(q, 2, lot_code);
    while ((s = sqlite3_step(q)) == SQLITE_ROW) {
        if ((rc = fit_row(q, &f, err)) != BG_OK || cb(&f, ctx))
            break;
    }
    if (rc == BG_OK && s != SQLITE_ROW && s != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot read fits");
    sqlite3_finalize(q);
    return rc;
}

int bgi_sqlite_fit_newest_of_run(bgi_conn *c, long long run_id, long long *fit_id,
                                 bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_stmt(c, STMT_FIT_NEWEST, "SELECT max(id) FROM fit WHERE run_id = ?", &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, run_id);
    *fit_id = 0;
    if (sqlite3_step(q) == SQLITE_ROW)
        *fit_id = sqlite3_column_int64(q, 0); /* NULL (no fit) reads as 0 */
    else
        rc = bgi_db_fail(c, err, "cannot read fits");
    bgi_stmt_done(c, STMT_FIT_NEWEST, q);
    return rc;
}

int bgi_sqlite_fit_same(bgi_conn *c, const struct bgi_fitrow *r, long long *fit_id,
                        bg_error *err)
{
    sqlite3_stmt *q = NULL;
    /* the parameters of fitrow_bind; REAL and BLOB values compare exactly, IS matches NULLs;
    ** the program version and the time are not compared (their bindings, 22 and 23, fall
    ** outside the statement's parameters and are ignored) */
    int rc = bgi_prepare(c, "SELECT id FROM fit WHERE run_id = ?1 AND model = ?2 AND "
                         "t0_k IS ?3 AND npar = ?4 AND c0 IS ?5 AND c1 IS ?6 AND c2 IS ?7 AND "
                         "c3 IS ?8 AND c4 IS ?9 AND c5 IS ?10 AND cov IS ?11 AND n = ?12 AND "
                         "dof = ?13 AND weighted = ?14 AND chi2 IS ?15 AND cov_scale IS ?16 AND "
                         "rms_mk IS ?17 AND max_abs_mk IS ?18 AND t_min_k IS ?19 AND "
                         "t_max_k IS ?20 AND reading_ids = ?21 "
                         "ORDER BY id LIMIT 1", &q, err);
    if (rc != BG_OK)
        return rc;
    fitrow_bind(q, 0, r, "", 0);
    int s = sqlite3_step(q);
    *fit_id = s == SQLITE_ROW ? sqlite3_column_int64(q, 0) : 0;
    if (s != SQLITE_ROW && s != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot read fits");
    sqlite3_finalize(q);
    return rc;
}

int bgi_sqlite_fit_readings(bgi_conn *c, long long fit_id, long long *ids, size_t max,
                            size_t *n, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(c, "SELECT reading_ids FROM fit WHERE id = ?", &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, fit_id);
    *n = 0;
    int s = sqlite3_step(q);
    if (s == SQLITE_ROW) {
        const char *p = (const char *)sqlite3_column_text(q, 0);
        while (p && *p && *n < max) {
            char *end;
            if (*p == '[' || *p == ',' || *p == ' ') {
                p++;
                continue;
            }
            if (*p == ']')
                break;
            long long v = strtoll(p, &end, 10);
            if (end == p) {
                rc = bg_error_set(err, BG_EDB, "fit %lld: unreadable list of readings", fit_id);
                break;
            }
            ids[(*n)++] = v;
            p = end;
        }
    } else if (s == SQLITE_DONE)
        rc = bg_error_set(err, BG_EINVAL, "no fit %lld", fit_id);
    else
        rc = bgi_db_fail(c, err, "cannot read the fit's readings");
    sqlite3_finalize(q);
    return rc;
}

/* A lot-wide query written once over the lot's relation (sqlite_int.h): AT(r, p) the lot a run
** counts toward, WAS(p, lot) / OF(p, lot) the candidate probes; the move-aware set
** (BGI_LOT_AT_RUN ...) or the plain one (BGI_PLAIN_...) when no move concerns the lot. */
#define LOT_POINTS_SQL(AT, OF) "SELECT p.id, p.serial, coalesce((SELECT r.id FROM run r WHERE " \
    "r.probe_id = p.id AND " AT("r", "p") " = ?1 ORDER BY r.started_at DESC, r.id DESC " \
    "LIMIT 1), 0) FROM probe p WHERE " OF("p", "?1") " ORDER BY p.id"

int bgi_sqlite_lot_moved(bgi_conn *c, long long lot_id, int *moved, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_stmt(c, STMT_LOT_MOVED, "SELECT EXISTS (SELECT 1 FROM probe_version pv "
                      "WHERE pv.lot_id = ?1) OR EXISTS (SELECT 1 FROM probe_version pv JOIN "
                      "probe p ON p.id = pv.probe_id WHERE p.lot_id = ?1)", &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, lot_id);
    *moved = 1; /* the move-aware reading unless the question is answered */
    if (sqlite3_step(q) == SQLITE_ROW)
        *moved = sqlite3_column_int(q, 0) != 0;
    else
        rc = bgi_db_fail(c, err, "cannot read the lot's probe moves");
    bgi_stmt_done(c, STMT_LOT_MOVED, q);
    return rc;
}

int bgi_sqlite_lot_points_each(bgi_conn *c, const bg_lot *lot, bg_lot_points_cb cb, void *ctx,
                               bg_error *err)
{
    struct lp { long long probe, run; char serial[BG_TEXT]; } *list = NULL;
    sqlite3_stmt *q = NULL;
    bg_store_points sp = BG_STORE_POINTS_INIT;
    size_t n = 0, cap = 0;
    int rc = BG_OK, s;

    /* One read transaction: a consistent view of the lot, and no file locking per query. */
    int own = sqlite3_get_autocommit(c->db);
    if (own && sqlite3_exec(c->db, "BEGIN", NULL, NULL, NULL) != SQLITE_OK)
        return bgi_db_fail(c, err, "cannot start a read transaction");
    /* First the lot's probes with their newest runs, in the order the probes were added;
    ** then each run's points by the range of its reading ids. */
    int moved = 1;
    if ((rc = bgi_sqlite_lot_moved(c, lot->id, &moved, err)) != BG_OK)
        goto end;
    rc = bgi_prepare(c, moved ? LOT_POINTS_SQL(BGI_LOT_AT_RUN, BGI_PROBE_OF) :
                     LOT_POINTS_SQL(BGI_PLAIN_AT_RUN, BGI_PLAIN_OF), &q, err);
    if (rc != BG_OK)
        goto end;
    sqlite3_bind_int64(q, 1, lot->id);
    while ((s = sqlite3_step(q)) == SQLITE_ROW) {
        if (n == cap) {
            size_t nc = cap ? 2 * cap : 256;
            struct lp *nl = realloc(list, nc * sizeof *nl);
            if (!nl) {
                rc = bg_error_set(err, BG_ENOMEM, "out of memory reading lot '%s'", lot->code);
                break;
            }
            list = nl, cap = nc;
        }
        list[n].probe = sqlite3_column_int64(q, 0);
        bgi_copy_text(list[n].serial, sizeof list[n].serial, q, 1);
        list[n].run = sqlite3_column_int64(q, 2);
        n++;
    }
    if (rc == BG_OK && s != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot read the lot's probes");
    sqlite3_finalize(q);
    for (size_t i = 0; rc == BG_OK && i < n; i++) {
        sp.n = 0;
        if (list[i].run && (rc = bgi_sqlite_run_points(c, list[i].run, &sp, err)) != BG_OK)
            break;
        if (cb(list[i].serial, list[i].probe, list[i].run, &sp, ctx))
            break;
    }
    free(list);
    free(sp.pts);
    free(sp.ids);
end:
    if (own && !sqlite3_get_autocommit(c->db))
        sqlite3_exec(c->db, rc == BG_OK ? "COMMIT" : "ROLLBACK", NULL, NULL, NULL);
    return rc;
}

/* The newest fit of run 'r' joined beside it (NULL columns when the run has none): the fit
** index finds it, so a history is read in one query without a lookup per run. */
#define NEWEST_FIT "LEFT JOIN fit f ON f.id = (SELECT max(f2.id) FROM fit f2 WHERE " \
    "f2.run_id = r.id) "

int bgi_sqlite_probe_history(bgi_conn *c, long long pid, const char *since,
                             bg_history_cb cb, void *ctx, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_fit_row f;
    char when[BG_TIME];
    int rc, s;

    /* columns: the run's id and start, then the fit (FIT_COLS) from column 2 */
    rc = bgi_stmt(c, STMT_PROBE_RUNS, "SELECT r.id, r.started_at, " FIT_COLS " FROM run r "
                  "JOIN probe p ON p.id = r.probe_id " NEWEST_FIT "WHERE r.probe_id = ?1 AND "
                  "(?2 IS NULL OR r.started_at >= ?2) ORDER BY r.started_at, r.id", &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, pid);
    bgi_bind_text_or_null(q, 2, since);
    while ((s = sqlite3_step(q)) == SQLITE_ROW) {
        int fitted = sqlite3_column_type(q, 2) != SQLITE_NULL;
        if (fitted && (rc = bgi_sqlite_fit_row(q, 2, &f, err)) != BG_OK)
            break;
        bgi_copy_text(when, sizeof when, q, 1);
        if (cb(when, sqlite3_column_int64(q, 0), fitted ? &f : NULL, ctx))
            break;
    }
    if (rc == BG_OK && s != SQLITE_ROW && s != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot read runs");
    bgi_stmt_done(c, STMT_PROBE_RUNS, q);
    return rc;
}

#define LOT_LATEST_SQL(AT, OF) "SELECT p.serial, " FIT_COLS " FROM probe p LEFT JOIN fit f " \
    "ON f.id = (SELECT max(f2.id) FROM fit f2 WHERE f2.run_id = (SELECT r2.id FROM run r2 " \
    "WHERE r2.probe_id = p.id AND (?2 IS NULL OR r2.started_at >= ?2) AND " AT("r2", "p") \
    " = ?1 ORDER BY r2.started_at DESC, r2.id DESC LIMIT 1)) LEFT JOIN run r ON r.id = " \
    "f.run_id WHERE " OF("p", "?1") " ORDER BY p.id"

int bgi_sqlite_lot_latest_fits(bgi_conn *c, long long lot_id, const char *since,
                               bg_latest_cb cb, void *ctx, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_fit_row f;
    char serial[BG_TEXT];
    int rc, s;

    /* the current fit: the newest fit of the latest run (of those since 'since'), read in the
    ** same query (the run_probe_time and fit_run indexes find both); the serial in column 0,
    ** the fit (FIT_COLS, NULL when none) from column 1 */
    int moved = 1, which;
    if ((rc = bgi_sqlite_lot_moved(c, lot_id, &moved, err)) != BG_OK)
        return rc;
    which = moved ? STMT_LOT_LATEST : STMT_LOT_LATEST_PLAIN;
    rc = bgi_stmt(c, which, moved ? LOT_LATEST_SQL(BGI_LOT_AT_RUN, BGI_PROBE_OF) :
                  LOT_LATEST_SQL(BGI_PLAIN_AT_RUN, BGI_PLAIN_OF), &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, lot_id);
    bgi_bind_text_or_null(q, 2, since);
    while ((s = sqlite3_step(q)) == SQLITE_ROW) {
        int fitted = sqlite3_column_type(q, 1) != SQLITE_NULL;
        if (fitted && (rc = bgi_sqlite_fit_row(q, 1, &f, err)) != BG_OK)
            break;
        bgi_copy_text(serial, sizeof serial, q, 0);
        if (cb(serial, fitted ? &f : NULL, ctx))
            break;
    }
    if (rc == BG_OK && s != SQLITE_ROW && s != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot read the lot's fits");
    bgi_stmt_done(c, which, q);
    return rc;
}

#define LOT_HISTORIES_SQL(AT, OF) "SELECT p.id, p.serial, r.id, r.started_at, " FIT_COLS \
    " FROM probe p LEFT JOIN run r ON r.probe_id = p.id AND (?2 IS NULL OR r.started_at >= " \
    "?2) AND " AT("r", "p") " = ?1 " NEWEST_FIT "WHERE " OF("p", "?1") " " \
    "ORDER BY p.serial, r.started_at, r.id"

int bgi_sqlite_lot_histories(bgi_conn *c, long long lot_id, const char *since,
                             bg_lot_histories_cb cb, void *ctx, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    struct bgi_hist_buf h = { NULL, NULL, 0, 0, 0 };
    long long probe = 0;
    char serial[BG_TEXT] = "";
    int rc, s, stop = 0;

    /* every probe of the lot (by serial) with each of its runs since 'since' (oldest first;
    ** none: one row of NULLs) and the run's newest fit; columns: the probe's id and serial,
    ** the run's id and start, the fit (FIT_COLS) from column 4 */
    int moved = 1, which;
    if ((rc = bgi_sqlite_lot_moved(c, lot_id, &moved, err)) != BG_OK)
        return rc;
    which = moved ? STMT_LOT_HISTORIES : STMT_LOT_HISTORIES_PLAIN;
    rc = bgi_stmt(c, which, moved ? LOT_HISTORIES_SQL(BGI_LOT_AT_RUN, BGI_PROBE_OF) :
                  LOT_HISTORIES_SQL(BGI_PLAIN_AT_RUN, BGI_PLAIN_OF), &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, lot_id);
    bgi_bind_text_or_null(q, 2, since);
    while ((s = sqlite3_step(q)) == SQLITE_ROW) {
        long long pid = sqlite3_column_int64(q, 0);
        if (pid != probe) {
            if (probe && cb(serial, h.fits, h.when, h.n, h.unfitted, ctx)) {
                stop = 1;
                break;
            }
            probe = pid, h.n = h.unfitted = 0;
            bgi_copy_text(serial, sizeof serial, q, 1);
        }
        if (sqlite3_column_type(q, 2) == SQLITE_NULL)
            continue; /* a probe without runs */
        if (sqlite3_column_type(q, 4) == SQLITE_NULL) {
            h.unfitted++;
            continue;
        }
        if (bgi_hist_buf_push(&h) != BG_OK) {
            rc = bg_error_set(err, BG_ENOMEM, "out of memory reading the history of probe "
                              "'%s'", serial);
            break;
        }
        if ((rc = bgi_sqlite_fit_row(q, 4, &h.fits[h.n], err)) != BG_OK)
            break;
        bgi_copy_text(h.when[h.n], BG_TIME, q, 3);
        h.n++;
    }
    if (rc == BG_OK && !stop && s != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot read the lot's history");
    bgi_stmt_done(c, which, q);
    if (rc == BG_OK && !stop && probe)
        cb(serial, h.fits, h.when, h.n, h.unfitted, ctx);
    free(h.fits);
    free(h.when);
    return rc;
}

/* A QA history row: what drift needs (model, range, ids, counts), not the covariance or the
** statistics; the serial comes from the probe query beside it. */
#define HIST_COLS "f.id, f.run_id, r.probe_id, f.model, f.t0_k, f.npar, f.c0, f.c1, f.c2, " \
    "f.c3, f.c4, f.c5, f.n, f.dof, f.t_min_k, f.t_max_k, r.started_at"

static int hist_row(sqlite3_stmt *q, bg_fit_row *f, bg_error *err)
{
    /* the fields before the covariance; the covariance stays as zeroed when the buffer grew */
    memset(f, 0, offsetof(bg_fit_row, cov));
    f->id = sqlite3_column_int64(q, 0);
    f->run_id = sqlite3_column_int64(q, 1);
    f->probe_id = sqlite3_column_int64(q, 2);
    int rc = row_model(q, 3, f, err);
    if (rc != BG_OK)
        return rc;
    f->n = (size_t)sqlite3_column_int64(q, 12);
    f->dof = (size_t)sqlite3_column_int64(q, 13);
    f->t_min_k = sqlite3_column_double(q, 14);
    f->t_max_k = sqlite3_column_double(q, 15);
    f->chi2 = f->cov_scale = f->rms_mk = f->max_abs_mk = NAN;
    f->program_version[0] = f->created_at[0] = '\0';
    return BG_OK;
}

#define LOT_HISTORY_SQL(AT, WAS) "SELECT " HIST_COLS FIT_FROM "WHERE " WAS("p", "?1") \
    " AND " AT("r", "p") " = ?1 AND (?2 IS NULL OR r.started_at >= ?2) " \
    "ORDER BY p.id, r.started_at, r.id, f.id"
#define LOT_SERIALS_SQL(WAS) "SELECT p.id, p.serial FROM probe p WHERE " WAS("p", "?1") \
    " ORDER BY p.id"

int bgi_sqlite_lot_history(bgi_conn *c, long long lot_id, const char *since,
                           bg_lot_history_cb cb, void *ctx, bg_error *err)
{
    sqlite3_stmt *q = NULL, *pq = NULL;
    bg_fit_row *fits = NULL;
    char (*when)[BG_TIME] = NULL;
    size_t n = 0, cap = 0;
    long long probe = -1;
    char serial[BG_TEXT] = "";
    int rc, s = SQLITE_DONE, stop = 0;

    /* every fit of the lot's runs, a run's fits oldest first: the newest one of a run
    ** replaces the ones before it below (cheaper than asking SQL for it per row); the
    ** serials from the lot's probes in the same order */
    int moved = 1;
    if ((rc = bgi_sqlite_lot_moved(c, lot_id, &moved, err)) != BG_OK)
        return rc;
    if ((rc = bgi_prepare(c, moved ? LOT_HISTORY_SQL(BGI_LOT_AT_RUN, BGI_PROBE_WAS_IN) :
                          LOT_HISTORY_SQL(BGI_PLAIN_AT_RUN, BGI_PLAIN_WAS_IN), &q, err)) != BG_OK ||
        (rc = bgi_prepare(c, moved ? LOT_SERIALS_SQL(BGI_PROBE_WAS_IN) :
                          LOT_SERIALS_SQL(BGI_PLAIN_WAS_IN), &pq, err)) != BG_OK) {
        sqlite3_finalize(q);
        return rc;
    }
    sqlite3_bind_int64(q, 1, lot_id);
    bgi_bind_text_or_null(q, 2, since);
    sqlite3_bind_int64(pq, 1, lot_id);
    while (!stop && (s = sqlite3_step(q)) == SQLITE_ROW) {
        long long pid = sqlite3_column_int64(q, 2);
        if (pid != probe) {
            if (probe >= 0 && cb(serial, fits, when, n, ctx))
                stop = 1;
            probe = pid, n = 0;
            while (sqlite3_step(pq) == SQLITE_ROW && sqlite3_column_int64(pq, 0) < pid)
                ;
            bgi_copy_text(serial, sizeof serial, pq, 1);
        }
        if (stop)
            break;
        if (n > 0 && fits[n - 1].run_id == sqlite3_column_int64(q, 1))
            n--; /* a newer fit of the same run */
        if (n == cap) {
            size_t nc = cap ? 2 * cap : 8;
            bg_fit_row *nf = realloc(fits, nc * sizeof *nf);
            if (nf) {
                fits = nf;
                memset(fits + cap, 0, (nc - cap) * sizeof *nf);
            }
            char (*nw)[BG_TIME] = realloc(when, nc * sizeof *nw);
            if (nw)
                when = nw;
            if (!nf || !nw) {
                rc = bg_error_set(err, BG_ENOMEM, "out of memory");
                break;
            }
            cap = nc;
        }
        if ((rc = hist_row(q, &fits[n], err)) != BG_OK)
            break;
        memcpy(fits[n].serial, serial, strlen(serial) + 1);
        bgi_copy_text(when[n], BG_TIME, q, 16);
        n++;
    }
    if (rc == BG_OK && !stop && s != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot read the lot's fits");
    if (rc == BG_OK && !stop && probe >= 0)
        cb(serial, fits, when, n, ctx);
    sqlite3_finalize(q);
    sqlite3_finalize(pq);
    free(fits);
    free(when);
    return rc;
}
