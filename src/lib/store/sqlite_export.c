/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The SQLite backend's export walk (bg_store_export_each): a probe's runs, readings and fits
** read by statements prepared once and kept on the connection, each found through an index
** (run_probe, the reading id range of a run, fit_run), so a lot of N probes costs N index
** lookups, not N scans of the record. */
#include <stdio.h>
#include <string.h>

#include "bandgap/bandgap.h"
#include "sqlite_int.h"

/* A run row as bg_store_run_get gives it (sqlite_run.c reads the same columns). */
#define RUN_COLS "r.id, r.probe_id, coalesce(r.reference_id, 0), p.serial, " \
    "coalesce(x.ident, ''), r.operator, r.medium, r.ambient, r.excitation, r.started_at, " \
    "r.source, r.note, r.imported_at, r.nreadings, " \
    "(SELECT count(*) FROM exclusion e WHERE e.reading_id BETWEEN r.first_reading " \
    "  AND r.first_reading + r.nreadings - 1), " \
    "(SELECT count(*) FROM fit f WHERE f.run_id = r.id), " \
    "r.readings_sha256, coalesce(r.repeats_run, 0), " \
    "CASE WHEN r.reference_version_id IS NULL THEN x.due_date ELSE " \
    "  (SELECT v.due_date FROM reference_version v WHERE v.id = r.reference_version_id) END, " \
    "r.ref_overdue, " \
    "coalesce(r.measuring_current_a, 0), coalesce(r.measuring_voltage_v, 0), " \
    "coalesce(r.reference_version_id, 0)"

static void run_row(sqlite3_stmt *q, bg_run *r)
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
}

static void reading_row(sqlite3_stmt *q, bg_reading_row *g)
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
}

/* The readings of run 'r', by id; '*stop' when a callback said so. */
static int run_readings(bgi_conn *c, const bg_run *r, const bg_export_cbs *cbs, void *ctx,
                        int *stop, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_reading_row g;
    int rc = bgi_stmt(c, STMT_EXPORT_READINGS, "SELECT g.id, g.run_id, g.line, g.t_raw, "
                      "r.t_raw_unit, g.t_k, g.r_ohm, g.u_t_k, g.u_r_ohm, g.time, g.note, "
                      "e.reading_id IS NOT NULL, e.reason, e.by_whom, e.at FROM run r JOIN "
                      "reading g ON g.id BETWEEN r.first_reading AND r.first_reading + "
                      "r.nreadings - 1 AND g.run_id = r.id LEFT JOIN exclusion e ON "
                      "e.reading_id = g.id WHERE r.id = ? ORDER BY g.id", &q, err), s;
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, r->id);
    while ((s = sqlite3_step(q)) == SQLITE_ROW) {
        reading_row(q, &g);
        if (cbs->reading && cbs->reading(&g, ctx)) {
            *stop = 1;
            break;
        }
    }
    if (!*stop && s != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot read readings");
    bgi_stmt_done(c, STMT_EXPORT_READINGS, q);
    return rc;
}

/* The runs of probe 'p' (by id), each with its readings. */
static int probe_runs(bgi_conn *c, const bg_probe *p, const bg_export_cbs *cbs, void *ctx,
                      int *stop, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_run r;
    int rc = bgi_stmt(c, STMT_EXPORT_RUNS, "SELECT " RUN_COLS " FROM run r JOIN probe p ON "
                      "r.probe_id = p.id LEFT JOIN reference x ON r.reference_id = x.id "
                      "WHERE r.probe_id = ? ORDER BY r.id", &q, err), s = SQLITE_DONE;
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, p->id);
    while (rc == BG_OK && !*stop && (s = sqlite3_step(q)) == SQLITE_ROW) {
        run_row(q, &r);
        if ((cbs->run && cbs->run(&r, ctx)) ||
            (rc = run_readings(c, &r, cbs, ctx, stop, err)) != BG_OK || *stop ||
            (cbs->run_end && cbs->run_end(&r, ctx)))
            *stop = 1;
    }
    if (rc == BG_OK && !*stop && s != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot read runs");
    bgi_stmt_done(c, STMT_EXPORT_RUNS, q);
    return rc;
}

/* The fits of probe 'p' (by id), whole rows. */
static int probe_fits(bgi_conn *c, const bg_probe *p, const bg_export_cbs *cbs, void *ctx,
                      int *stop, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_fit_row f;
    int rc = bgi_stmt(c, STMT_EXPORT_FITS, "SELECT " BGI_FIT_COLS " FROM fit f JOIN run r ON "
                      "f.run_id = r.id JOIN probe p ON r.probe_id = p.id WHERE r.probe_id = ? "
                      "ORDER BY f.id", &q, err), s = SQLITE_DONE;
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, p->id);
    while (rc == BG_OK && (s = sqlite3_step(q)) == SQLITE_ROW) {
        if ((rc = bgi_sqlite_fit_row(q, 0, &f, err)) != BG_OK)
            break;
        if (cbs->fit && cbs->fit(&f, ctx)) {
            *stop = 1;
            break;
        }
    }
    if (rc == BG_OK && !*stop && s != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot read fits");
    bgi_stmt_done(c, STMT_EXPORT_FITS, q);
    return rc;
}

static int one_probe(bgi_conn *c, const bg_probe *p, const bg_export_cbs *cbs, void *ctx,
                     int *stop, bg_error *err)
{
    int rc = BG_OK;
    if ((cbs->probe && cbs->probe(p, ctx)) ||
        (rc = probe_runs(c, p, cbs, ctx, stop, err)) != BG_OK || *stop ||
        (cbs->fits && cbs->fits(p, ctx)) ||
        (rc = probe_fits(c, p, cbs, ctx, stop, err)) != BG_OK || *stop ||
        (cbs->probe_end && cbs->probe_end(p, ctx)))
        *stop = 1;
    return rc;
}

int bgi_sqlite_export_each(bgi_conn *c, const char *serial, long long lot_id,
                           const bg_export_cbs *cbs, void *ctx, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_probe p;
    int rc, s = SQLITE_DONE, stop = 0;

    /* One read transaction: a consistent view, and no file locking per query. */
    int own = sqlite3_get_autocommit(c->db);
    if (own && sqlite3_exec(c->db, "BEGIN", NULL, NULL, NULL) != SQLITE_OK)
        return bgi_db_fail(c, err, "cannot start a read transaction");
    rc = bgi_prepare(c, serial ? "SELECT " BGI_PROBE_COLS " FROM probe p JOIN lot l ON "
                     "p.lot_id = l.id WHERE p.serial = ?1" :
                     "SELECT " BGI_PROBE_COLS " FROM probe p JOIN lot l ON p.lot_id = l.id "
                     "WHERE p.lot_id = ?2 ORDER BY p.serial", &q, err);
    if (rc == BG_OK) {
        if (serial)
            sqlite3_bind_text(q, 1, serial, -1, SQLITE_TRANSIENT);
        else
            sqlite3_bind_int64(q, 2, lot_id);
        while (rc == BG_OK && !stop && (s = sqlite3_step(q)) == SQLITE_ROW) {
            bgi_sqlite_probe_row(q, &p);
            rc = one_probe(c, &p, cbs, ctx, &stop, err);
        }
        if (rc == BG_OK && !stop && s != SQLITE_DONE)
            rc = bgi_db_fail(c, err, "cannot read probes");
    }
    sqlite3_finalize(q);
    if (own && !sqlite3_get_autocommit(c->db))
        sqlite3_exec(c->db, rc == BG_OK ? "COMMIT" : "ROLLBACK", NULL, NULL, NULL);
    return rc;
}
