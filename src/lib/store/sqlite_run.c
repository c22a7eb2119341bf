/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The SQLite backend's runs, readings and exclusions.  An import writes the run and its
** readings, 64 to a statement, with contiguous ids, taking them one at a time from the
** import's source (store.c checks and corrects them). */
#include <math.h>
#include <stdio.h>
#include <stddef.h>
#include <stdlib.h>
#include <string.h>

#include "bandgap/bandgap.h"
#include "sqlite_int.h"

/* The run's row; its readings get the ids from '*first' on (read here, under the write lock). */
static int insert_run(bgi_conn *c, const struct bgi_import *imp, long long *first,
                      long long *rid, bg_error *err)
{
    const bg_run *meta = imp->meta;
    sqlite3_stmt *q = NULL;
    int rc;

    if ((rc = bgi_prepare(c, "SELECT coalesce(max(id), 0) + 1 FROM reading", &q, err)) != BG_OK)
        return rc;
    if (sqlite3_step(q) != SQLITE_ROW)
        rc = bgi_db_fail(c, err, "cannot read the readings");
    else
        *first = sqlite3_column_int64(q, 0);
    sqlite3_finalize(q);
    q = NULL;
    if (rc != BG_OK ||
        (rc = bgi_prepare(c, "INSERT INTO run(probe_id, reference_id, operator, medium, "
                          "ambient, excitation, started_at, source, note, imported_at, "
                          "t_raw_unit, first_reading, nreadings, readings_sha256, "
                          "repeats_run, ref_overdue, measuring_current_a, measuring_voltage_v, "
                          "reference_version_id, quantity, quantity_unit) "
                          "VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?)", &q, err))
        != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, imp->probe_id);
    if (imp->ref_id)
        sqlite3_bind_int64(q, 2, imp->ref_id);
    else
        sqlite3_bind_null(q, 2);
    bgi_bind_text_or_null(q, 3, meta->operator_name);
    bgi_bind_text_or_null(q, 4, meta->medium);
    bgi_bind_text_or_null(q, 5, meta->ambient);
    bgi_bind_text_or_null(q, 6, meta->excitation);
    sqlite3_bind_text(q, 7, imp->started_at, -1, SQLITE_TRANSIENT);
    sqlite3_bind_text(q, 8, imp->src, -1, SQLITE_TRANSIENT);
    bgi_bind_text_or_null(q, 9, meta->note);
    sqlite3_bind_text(q, 10, imp->now, -1, SQLITE_TRANSIENT);
    sqlite3_bind_text(q, 11, imp->unit, -1, SQLITE_STATIC);
    sqlite3_bind_int64(q, 12, *first);
    sqlite3_bind_int64(q, 13, (sqlite3_int64)imp->n);
    sqlite3_bind_text(q, 14, imp->sha256, -1, SQLITE_TRANSIENT);
    if (imp->repeats_run)
        sqlite3_bind_int64(q, 15, imp->repeats_run);
    else
        sqlite3_bind_null(q, 15);
    bgi_bind_text_or_null(q, 16, imp->ref_overdue);
    if (imp->excite_a > 0.0)
        sqlite3_bind_double(q, 17, imp->excite_a);
    else if (meta->measuring_current_a > 0.0)
        sqlite3_bind_double(q, 17, meta->measuring_current_a);
    if (meta->measuring_voltage_v > 0.0)
        sqlite3_bind_double(q, 18, meta->measuring_voltage_v);
    if (imp->ref_version)
        sqlite3_bind_int64(q, 19, imp->ref_version);
    if (imp->quantity != BG_QTY_RESISTANCE) { /* a resistance stays NULL, as before schema 11 */
        sqlite3_bind_text(q, 20, bgi_quantity_name(imp->quantity), -1, SQLITE_STATIC);
        sqlite3_bind_text(q, 21, bg_quantity_unit((bg_quantity)imp->quantity), -1,
                          SQLITE_STATIC);
    }
    if (sqlite3_step(q) != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot create the run");
    else
        *rid = sqlite3_last_insert_rowid(c->db);
    sqlite3_finalize(q);
    return rc;
}

/* BATCH readings per statement: one step instead of BATCH (a third less time for a large
** file); the rest one by one.  The readings come one at a time from the import's source, so
** the texts are bound as copies. */
enum { BATCH = 64, NCOL = 9 };

/* Bind the next reading of 'imp' as row 'k' of 'q' ('*line' its line). */
static int bind_next(const struct bgi_import *imp, sqlite3_stmt *q, int k, long long rid,
                     size_t *line, bg_error *err)
{
    const bg_reading *r;
    double t_k;
    int b = k * NCOL, rc = imp->next(imp->ctx, &r, &t_k, err);

    if (rc != BG_OK)
        return rc;
    if (!r)
        return bg_error_set(err, BG_EIO, "%s: fewer readings than when it was read first: "
                            "the file changed while it was imported", imp->src);
    *line = r->pt.line;
    sqlite3_bind_int64(q, b + 1, rid);
    sqlite3_bind_int64(q, b + 2, (sqlite3_int64)r->pt.line);
    sqlite3_bind_double(q, b + 3, r->t_raw);
    sqlite3_bind_double(q, b + 4, t_k);
    sqlite3_bind_double(q, b + 5, r->pt.r_ohm);
    sqlite3_bind_double(q, b + 6, r->pt.u_t_k);
    sqlite3_bind_double(q, b + 7, r->pt.u_r_ohm);
    if (r->time[0])
        sqlite3_bind_text(q, b + 8, r->time, -1, SQLITE_TRANSIENT);
    else
        sqlite3_bind_null(q, b + 8);
    if (r->note)
        sqlite3_bind_text(q, b + 9, r->note, -1, SQLITE_TRANSIENT);
    else
        sqlite3_bind_null(q, b + 9);
    return BG_OK;
}

static int insert_readings(bgi_conn *c, const struct bgi_import *imp, long long rid,
                           bg_error *err)
{
    sqlite3_stmt *batch = NULL, *ins = NULL;
    int rc = BG_OK;

    if (imp->n >= BATCH) {
        char sql[128 + BATCH * 32];
        size_t len = (size_t)snprintf(sql, sizeof sql, "INSERT INTO reading(id, run_id, line, "
                                      "t_raw, t_k, r_ohm, u_t_k, u_r_ohm, time, note) VALUES ");
        for (int k = 0; k < BATCH; k++)
            len += (size_t)snprintf(sql + len, sizeof sql - len, "%s(NULL,?,?,?,?,?,?,?,?,?)",
                                    k ? "," : "");
        if ((rc = bgi_cached(c, STMT_INSERT_READINGS, sql, &batch, err)) != BG_OK)
            return rc;
    }
    if ((rc = bgi_cached(c, STMT_INSERT_READING, "INSERT INTO reading(id, run_id, line, t_raw, "
                         "t_k, r_ohm, u_t_k, u_r_ohm, time, note) VALUES (NULL,?,?,?,?,?,?,?,"
                         "?,?)", &ins, err)) != BG_OK)
        return rc;
    for (size_t i = 0; i < imp->n && rc == BG_OK;) {
        size_t nb = batch && imp->n - i >= BATCH ? BATCH : 1, first = 0, last = 0;
        sqlite3_stmt *qi = nb > 1 ? batch : ins;
        sqlite3_reset(qi);
        for (size_t k = 0; k < nb && rc == BG_OK; k++)
            rc = bind_next(imp, qi, (int)k, rid, k ? &last : &first, err);
        if (rc != BG_OK)
            break;
        if (sqlite3_step(qi) != SQLITE_DONE) {
            /* only a row the record refuses is the file's fault; a full disk, a lock or a
            ** read-only file is not, and names no line */
            if ((sqlite3_extended_errcode(c->db) & 0xff) != SQLITE_CONSTRAINT)
                rc = bgi_db_fail(c, err, nb > 1 ? "cannot store the readings"
                                                : "cannot store the reading");
            else if (nb > 1)
                rc = bg_error_set(err, BG_EINVAL, "%s:%zu..%zu: cannot store the readings: %s",
                                  imp->src, first, last, sqlite3_errmsg(c->db));
            else
                rc = bg_error_set(err, BG_EINVAL, "%s:%zu: cannot store the reading: %s",
                                  imp->src, first, sqlite3_errmsg(c->db));
        }
        i += nb;
    }
    if (batch) {
        sqlite3_reset(batch);
        sqlite3_clear_bindings(batch);
    }
    sqlite3_reset(ins);
    sqlite3_clear_bindings(ins);
    return rc;
}

int bgi_sqlite_import(bgi_conn *c, const struct bgi_import *imp, long long *run_id,
                      bg_error *err)
{
    long long first = 1, rid = 0;
    int rc = insert_run(c, imp, &first, &rid, err);
    if (rc == BG_OK)
        rc = insert_readings(c, imp, rid, err);
    if (rc != BG_OK)
        return rc;
    /* Ids are assigned by SQLite as the largest plus one (cheaper than explicit ids), which
    ** under the write lock gives exactly first, first + 1, ... */
    if (sqlite3_last_insert_rowid(c->db) != first + (long long)imp->n - 1)
        return bg_error_set(err, BG_EDB, "%s: the readings did not get contiguous ids",
                            imp->src);
    if (run_id)
        *run_id = rid;
    return BG_OK;
}

void bgi_run_row(sqlite3_stmt *q, bg_run *r)
{
    memset(r, 0, sizeof *r);
    r->id = sqlite3_column_int64(q, 0);
    r->probe_id = sqlite3_column_int64(q, 1);
    r->reference_id = sqlite3_column_int64(q, 2);
    bgi_copy_text(r->serial, sizeof r->serial, q, 3);
    bgi_copy_text(r->ref_ident, sizeof r->ref_ident, q, 4);
    bgi_copy_text(r->operator_name, sizeof r->operator_name, q, 5);
    bgi_copy_text(r->medium, sizeof r->medium, q, 6);
    bgi_copy_text(r->ambient, sizeof r->ambient, q, 7);
    bgi_copy_text(r->excitation, sizeof r->excitation, q, 8);
    bgi_copy_text(r->started_at, sizeof r->started_at, q, 9);
    bgi_copy_text(r->source, sizeof r->source, q, 10);
    bgi_copy_text(r->note, sizeof r->note, q, 11);
    bgi_copy_text(r->imported_at, sizeof r->imported_at, q, 12);
    r->nreadings = sqlite3_column_int64(q, 13);
    r->nexcluded = sqlite3_column_int64(q, 14);
    r->nfits = sqlite3_column_int64(q, 15);
    bgi_copy_text(r->readings_sha256, sizeof r->readings_sha256, q, 16);
    r->repeats_run = sqlite3_column_int64(q, 17);
    bgi_copy_text(r->ref_due_date, sizeof r->ref_due_date, q, 18);
    bgi_copy_text(r->ref_overdue, sizeof r->ref_overdue, q, 19);
    r->new_run = 0;
    r->measuring_current_a = sqlite3_column_double(q, 20);
    r->measuring_voltage_v = sqlite3_column_double(q, 21);
    r->ref_version = sqlite3_column_int64(q, 22);
    r->quantity = sqlite3_column_int(q, 23);
}

void bgi_reading_row(sqlite3_stmt *q, bg_reading_row *g)
{
    g->id = sqlite3_column_int64(q, 0);
    g->run_id = sqlite3_column_int64(q, 1);
    g->line = (size_t)sqlite3_column_int64(q, 2);
    g->t_raw = sqlite3_column_double(q, 3);
    bgi_copy_text(g->t_raw_unit, sizeof g->t_raw_unit, q, 4);
    g->t_k = sqlite3_column_double(q, 5);
    g->r_ohm = sqlite3_column_double(q, 6);
    g->u_t_k = sqlite3_column_double(q, 7);
    g->u_r_ohm = sqlite3_column_double(q, 8);
    bgi_copy_text(g->time, sizeof g->time, q, 9);
    bgi_copy_text(g->note, sizeof g->note, q, 10);
    g->excluded = sqlite3_column_int(q, 11);
    bgi_copy_text(g->excl_reason, sizeof g->excl_reason, q, 12);
    bgi_copy_text(g->excl_by, sizeof g->excl_by, q, 13);
    bgi_copy_text(g->excl_at, sizeof g->excl_at, q, 14);
    g->quantity = sqlite3_column_int(q, 15);
}

int bgi_sqlite_run_get(bgi_conn *c, long long run_id, bg_run *out, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(c, "SELECT " BGI_RUN_COLS BGI_RUN_FROM "WHERE r.id = ?", &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, run_id);
    int s = sqlite3_step(q);
    if (s == SQLITE_ROW)
        bgi_run_row(q, out);
    else if (s == SQLITE_DONE)
        rc = bg_error_set(err, BG_EINVAL, "no run %lld", run_id);
    else
        rc = bgi_db_fail(c, err, "cannot read runs");
    sqlite3_finalize(q);
    return rc;
}

int bgi_sqlite_run_latest(bgi_conn *c, long long probe_id, long long *run_id, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(c, "SELECT run_id FROM probe_latest_run WHERE probe_id = ?", &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, probe_id);
    int s = sqlite3_step(q);
    if (s == SQLITE_ROW && sqlite3_column_type(q, 0) != SQLITE_NULL)
        *run_id = sqlite3_column_int64(q, 0);
    else if (s == SQLITE_ROW || s == SQLITE_DONE)
        rc = bg_error_set(err, BG_EINVAL, "the probe has no calibration runs (import one with "
                          "'bandgap import FILE --probe SERIAL')");
    else
        rc = bgi_db_fail(c, err, "cannot read runs");
    sqlite3_finalize(q);
    return rc;
}

int bgi_sqlite_run_by_digest(bgi_conn *c, long long probe_id, const char *sha256,
                             long long *run_id, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(c, "SELECT id FROM run WHERE probe_id = ? AND readings_sha256 = ? "
                         "ORDER BY id LIMIT 1", &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, probe_id);
    sqlite3_bind_text(q, 2, sha256, -1, SQLITE_TRANSIENT);
    int s = sqlite3_step(q);
    *run_id = s == SQLITE_ROW ? sqlite3_column_int64(q, 0) : 0;
    if (s != SQLITE_ROW && s != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot read runs");
    sqlite3_finalize(q);
    return rc;
}

int bgi_sqlite_check_filter(bgi_conn *c, const char *serial, const char *lot_code, bg_error *err)
{
    int rc = BG_OK;
    if (serial) {
        bg_probe p;
        rc = bgi_sqlite_probe_get(c, serial, &p, err);
    }
    if (rc == BG_OK && lot_code) {
        bg_lot l;
        rc = bgi_sqlite_lot_get(c, lot_code, &l, err);
    }
    return rc;
}

int bgi_sqlite_run_each(bgi_conn *c, const char *serial, const char *lot_code, bg_run_cb cb,
                        void *ctx, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_run r;
    int rc = bgi_sqlite_check_filter(c, serial, lot_code, err), s;
    if (rc != BG_OK)
        return rc;
    /* a lot's runs: those that count toward it */
    rc = bgi_prepare(c, "SELECT " BGI_RUN_COLS BGI_RUN_FROM "JOIN lot l ON l.id = "
                     BGI_LOT_AT_RUN("r", "p") " "
                     "WHERE (?1 IS NULL OR p.serial = ?1) AND (?2 IS NULL OR l.code = ?2) "
                     "ORDER BY r.id", &q, err);
    if (rc != BG_OK)
        return rc;
    bgi_bind_text_or_null(q, 1, serial);
    bgi_bind_text_or_null(q, 2, lot_code);
    while ((s = sqlite3_step(q)) == SQLITE_ROW) {
        bgi_run_row(q, &r);
        if (cb(&r, ctx))
            break;
    }
    if (s != SQLITE_ROW && s != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot read runs");
    sqlite3_finalize(q);
    return rc;
}

int bgi_sqlite_reading_each(bgi_conn *c, long long run_id, bg_reading_cb cb, void *ctx,
                            bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_reading_row row;
    int rc = bgi_prepare(c, BGI_READINGS_OF_RUN, &q, err), s;
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, run_id);
    while ((s = sqlite3_step(q)) == SQLITE_ROW) {
        bgi_reading_row(q, &row);
        if (cb(&row, ctx))
            break;
    }
    if (s != SQLITE_ROW && s != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot read readings");
    sqlite3_finalize(q);
    return rc;
}

/* Append the point in columns col .. col+5 (id, t_k, r_ohm, u_t_k, u_r_ohm, line) of 'q'. */
static int points_push(bg_store_points *sp, sqlite3_stmt *q, int col)
{
    if (sp->n == sp->cap) {
        size_t cap = sp->cap ? 2 * sp->cap : 64;
        bg_point *p = realloc(sp->pts, cap * sizeof *p);
        if (p)
            sp->pts = p;
        long long *ids = realloc(sp->ids, cap * sizeof *ids);
        if (ids)
            sp->ids = ids;
        if (!p || !ids)
            return BG_ENOMEM;
        sp->cap = cap;
    }
    bg_point *pt = &sp->pts[sp->n];
    sp->ids[sp->n] = sqlite3_column_int64(q, col);
    pt->t_k = sqlite3_column_double(q, col + 1);
    pt->r_ohm = sqlite3_column_double(q, col + 2);
    pt->u_t_k = sqlite3_column_double(q, col + 3);
    pt->u_r_ohm = sqlite3_column_double(q, col + 4);
    pt->line = (size_t)sqlite3_column_int64(q, col + 5);
    sp->n++;
    return BG_OK;
}

int bgi_sqlite_run_points(bgi_conn *c, long long run_id, bg_store_points *out, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_cached(c, STMT_RUN_POINTS, "SELECT g.id, g.t_k, g.r_ohm, g.u_t_k, g.u_r_ohm, "
                    "g.line FROM run r JOIN reading g ON g.id BETWEEN r.first_reading AND "
                    "r.first_reading + r.nreadings - 1 AND g.run_id = r.id WHERE r.id = ? AND "
                    "NOT EXISTS (SELECT 1 FROM exclusion e WHERE e.reading_id = g.id) "
                    "ORDER BY g.id", &q, err), s;
    if (rc != BG_OK)
        return rc;
    out->n = 0;
    sqlite3_bind_int64(q, 1, run_id);
    while ((s = sqlite3_step(q)) == SQLITE_ROW)
        if (points_push(out, q, 0) != BG_OK) {
            sqlite3_reset(q);
            return bg_error_set(err, BG_ENOMEM, "out of memory reading run %lld", run_id);
        }
    if (s != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot read readings");
    sqlite3_reset(q);
    return rc;
}

int bgi_sqlite_exclude(bgi_conn *c, long long reading_id, const char *why, const char *by,
                       const char *now, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(c, "SELECT (SELECT count(*) FROM reading WHERE id = ?1), "
                     "(SELECT count(*) FROM exclusion WHERE reading_id = ?1)", &q, err);
    if (rc == BG_OK) {
        sqlite3_bind_int64(q, 1, reading_id);
        if (sqlite3_step(q) != SQLITE_ROW)
            rc = bgi_db_fail(c, err, "cannot read readings");
        else if (sqlite3_column_int(q, 0) == 0)
            rc = bg_error_set(err, BG_EINVAL, "no reading %lld", reading_id);
        else if (sqlite3_column_int(q, 1) != 0)
            rc = bg_error_set(err, BG_EINVAL, "reading %lld is already excluded", reading_id);
        sqlite3_finalize(q);
        q = NULL;
    }
    if (rc == BG_OK)
        rc = bgi_prepare(c, "INSERT INTO exclusion(reading_id, reason, by_whom, at) "
                         "VALUES (?,?,?,?)", &q, err);
    if (rc == BG_OK) {
        sqlite3_bind_int64(q, 1, reading_id);
        sqlite3_bind_text(q, 2, why, -1, SQLITE_TRANSIENT);
        sqlite3_bind_text(q, 3, by && *by ? by : "unknown", -1, SQLITE_TRANSIENT);
        sqlite3_bind_text(q, 4, now, -1, SQLITE_TRANSIENT);
        if (sqlite3_step(q) != SQLITE_DONE)
            rc = bgi_db_fail(c, err, "cannot record the exclusion");
    }
    sqlite3_finalize(q);
    return rc;
}


/* ---- calibration sequences (db/010-sequence.sql) ---- */

static int step_done(bgi_conn *c, sqlite3_stmt *q, const char *what, bg_error *err)
{
    int rc = BG_OK;
    if (sqlite3_step(q) != SQLITE_DONE) {
        if ((sqlite3_extended_errcode(c->db) & 0xff) == SQLITE_CONSTRAINT)
            rc = bg_error_set(err, BG_EINVAL, "%s: %s", what, sqlite3_errmsg(c->db));
        else
            rc = bgi_db_fail(c, err, what);
    }
    sqlite3_finalize(q);
    return rc;
}

int bgi_sqlite_seq_add(bgi_conn *c, const bg_seq_head *h, const char *text, long long ref_id,
                       long long *id, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(c, "INSERT INTO sequence(file, file_sha256, file_text, idn, criterion, "
                         "reference_id, started_at) VALUES (?,?,?,?,?,?,?)", &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_text(q, 1, h->file, -1, SQLITE_TRANSIENT);
    sqlite3_bind_text(q, 2, h->sha256, -1, SQLITE_TRANSIENT);
    sqlite3_bind_text(q, 3, text, -1, SQLITE_TRANSIENT);
    sqlite3_bind_text(q, 4, h->idn, -1, SQLITE_TRANSIENT);
    sqlite3_bind_text(q, 5, h->criterion, -1, SQLITE_TRANSIENT);
    sqlite3_bind_int64(q, 6, ref_id);
    sqlite3_bind_text(q, 7, h->started_at, -1, SQLITE_TRANSIENT);
    rc = step_done(c, q, "cannot record the sequence", err);
    if (rc == BG_OK)
        *id = sqlite3_last_insert_rowid(c->db);
    return rc;
}

int bgi_sqlite_seq_unfinished(bgi_conn *c, bg_seq_head *out, int *found, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(c, "SELECT id, file, file_sha256, started_at, idn, criterion FROM "
                         "sequence s WHERE NOT EXISTS (SELECT 1 FROM sequence_end e WHERE "
                         "e.sequence_id = s.id) ORDER BY id DESC LIMIT 1", &q, err), s;
    if (rc != BG_OK)
        return rc;
    memset(out, 0, sizeof *out);
    *found = 0;
    if ((s = sqlite3_step(q)) == SQLITE_ROW) {
        out->id = sqlite3_column_int64(q, 0);
        bgi_copy_text(out->file, sizeof out->file, q, 1);
        bgi_copy_text(out->sha256, sizeof out->sha256, q, 2);
        bgi_copy_text(out->started_at, sizeof out->started_at, q, 3);
        bgi_copy_text(out->idn, sizeof out->idn, q, 4);
        bgi_copy_text(out->criterion, sizeof out->criterion, q, 5);
        *found = 1;
    } else if (s != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot read sequences");
    sqlite3_finalize(q);
    return rc;
}

static void bind_real_or_null(sqlite3_stmt *q, int i, double v)
{
    if (isfinite(v))
        sqlite3_bind_double(q, i, v);
    else
        sqlite3_bind_null(q, i);
}

int bgi_sqlite_seq_settle(bgi_conn *c, long long seq_id, const bg_seq_settle *s, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(c, "INSERT INTO sequence_settle(sequence_id, setpoint, setpoint_k, "
                         "settled, slope_k_s, scatter_k, mean_k, window_s, waited_s, samples, "
                         "at) VALUES (?,?,?,?,?,?,?,?,?,?,?)", &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, seq_id);
    sqlite3_bind_int64(q, 2, (sqlite3_int64)s->sp);
    sqlite3_bind_double(q, 3, s->setpoint_k);
    sqlite3_bind_int(q, 4, s->settled);
    bind_real_or_null(q, 5, s->slope_k_s);
    bind_real_or_null(q, 6, s->scatter_k);
    bind_real_or_null(q, 7, s->mean_k);
    sqlite3_bind_double(q, 8, s->window_s);
    sqlite3_bind_double(q, 9, s->waited_s);
    sqlite3_bind_int64(q, 10, (sqlite3_int64)s->samples);
    sqlite3_bind_text(q, 11, s->at, -1, SQLITE_TRANSIENT);
    return step_done(c, q, "cannot record the settling", err);
}

int bgi_sqlite_seq_reading(bgi_conn *c, long long seq_id, const bg_seq_reading *r,
                           bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(c, "INSERT INTO sequence_reading(sequence_id, setpoint, probe, k, "
                         "channel, setpoint_k, r_ohm, ref_raw, time, meter_reply, ref_reply) "
                         "VALUES (?,?,?,?,?,?,?,?,?,?,?)", &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, seq_id);
    sqlite3_bind_int64(q, 2, (sqlite3_int64)r->sp);
    sqlite3_bind_int64(q, 3, (sqlite3_int64)r->ch);
    sqlite3_bind_int64(q, 4, (sqlite3_int64)r->k);
    sqlite3_bind_text(q, 5, r->channel, -1, SQLITE_TRANSIENT);
    sqlite3_bind_double(q, 6, r->setpoint_k);
    sqlite3_bind_double(q, 7, r->r_ohm);
    sqlite3_bind_double(q, 8, r->ref_raw);
    sqlite3_bind_text(q, 9, r->time, -1, SQLITE_TRANSIENT);
    sqlite3_bind_text(q, 10, r->meter_reply, -1, SQLITE_TRANSIENT);
    sqlite3_bind_text(q, 11, r->ref_reply, -1, SQLITE_TRANSIENT);
    return step_done(c, q, "cannot store the reading", err);
}

int bgi_sqlite_seq_readings(bgi_conn *c, long long seq_id, bg_seq_reading_cb cb, void *ctx,
                            bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_seq_reading r;
    int rc = bgi_prepare(c, "SELECT id, setpoint, probe, k, channel, setpoint_k, r_ohm, ref_raw, "
                         "time, meter_reply, ref_reply FROM sequence_reading WHERE "
                         "sequence_id = ? ORDER BY setpoint, probe, k", &q, err), s;
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, seq_id);
    while ((s = sqlite3_step(q)) == SQLITE_ROW) {
        memset(&r, 0, sizeof r);
        r.id = sqlite3_column_int64(q, 0);
        r.sp = (size_t)sqlite3_column_int64(q, 1);
        r.ch = (size_t)sqlite3_column_int64(q, 2);
        r.k = (size_t)sqlite3_column_int64(q, 3);
        bgi_copy_text(r.channel, sizeof r.channel, q, 4);
        r.setpoint_k = sqlite3_column_double(q, 5);
        r.r_ohm = sqlite3_column_double(q, 6);
        r.ref_raw = sqlite3_column_double(q, 7);
        bgi_copy_text(r.time, sizeof r.time, q, 8);
        bgi_copy_text(r.meter_reply, sizeof r.meter_reply, q, 9);
        bgi_copy_text(r.ref_reply, sizeof r.ref_reply, q, 10);
        if (cb(&r, ctx))
            break;
    }
    if (s != SQLITE_ROW && s != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot read the sequence's readings");
    sqlite3_finalize(q);
    return rc;
}

static double column_real(sqlite3_stmt *q, int i)
{
    return sqlite3_column_type(q, i) == SQLITE_NULL ? NAN : sqlite3_column_double(q, i);
}

int bgi_sqlite_seq_settles(bgi_conn *c, long long seq_id, bg_seq_settle_cb cb, void *ctx,
                           bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_seq_settle t;
    int rc = bgi_prepare(c, "SELECT setpoint, setpoint_k, settled, slope_k_s, scatter_k, mean_k, "
                         "window_s, waited_s, samples, at FROM sequence_settle WHERE "
                         "sequence_id = ? ORDER BY id", &q, err), s;
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, seq_id);
    while ((s = sqlite3_step(q)) == SQLITE_ROW) {
        memset(&t, 0, sizeof t);
        t.sp = (size_t)sqlite3_column_int64(q, 0);
        t.setpoint_k = sqlite3_column_double(q, 1);
        t.settled = sqlite3_column_int(q, 2);
        t.slope_k_s = column_real(q, 3);
        t.scatter_k = column_real(q, 4);
        t.mean_k = column_real(q, 5);
        t.window_s = sqlite3_column_double(q, 6);
        t.waited_s = sqlite3_column_double(q, 7);
        t.samples = (size_t)sqlite3_column_int64(q, 8);
        bgi_copy_text(t.at, sizeof t.at, q, 9);
        if (cb(&t, ctx))
            break;
    }
    if (s != SQLITE_ROW && s != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot read the sequence's settling records");
    sqlite3_finalize(q);
    return rc;
}

int bgi_sqlite_seq_end(bgi_conn *c, long long seq_id, const char *now, long long first_run,
                       long long last_run, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(c, "INSERT INTO sequence_end(sequence_id, finished_at, first_run, "
                         "last_run) VALUES (?,?,?,?)", &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, seq_id);
    sqlite3_bind_text(q, 2, now, -1, SQLITE_TRANSIENT);
    sqlite3_bind_int64(q, 3, first_run);
    sqlite3_bind_int64(q, 4, last_run);
    return step_done(c, q, "cannot mark the sequence finished", err);
}
