/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The SQLite backend's export walk (bg_store_export_each): a probe's runs, readings and fits
** read by statements prepared once and kept on the connection, each found through an index
** (run_probe, the reading id range of a run, fit_run), so a lot of N probes costs N index
** lookups, not N scans of the record. */
#include <stdio.h>
#include <string.h>

#include "bandgap/bandgap.h"
#include "sqlite_int.h"

/* The readings of run 'r', by id; '*stop' when a callback said so. */
static int run_readings(bgi_conn *c, const bg_run *r, const bg_export_cbs *cbs, void *ctx,
                        int *stop, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_reading_row g;
    int rc = bgi_stmt(c, STMT_EXPORT_READINGS, BGI_READINGS_OF_RUN, &q, err), s;
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, r->id);
    while ((s = sqlite3_step(q)) == SQLITE_ROW) {
        bgi_reading_row(q, &g);
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
    int rc = bgi_stmt(c, STMT_EXPORT_RUNS, "SELECT " BGI_RUN_COLS " FROM run r JOIN probe p ON "
                      "r.probe_id = p.id LEFT JOIN reference x ON r.reference_id = x.id "
                      "WHERE r.probe_id = ? ORDER BY r.id", &q, err), s = SQLITE_DONE;
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, p->id);
    while (rc == BG_OK && !*stop && (s = sqlite3_step(q)) == SQLITE_ROW) {
        bgi_run_row(q, &r);
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
    /* a lot's probes: those in it now */
    rc = bgi_prepare(c, serial ? "SELECT " BGI_PROBE_COLS " FROM probe p JOIN lot l ON "
                     "l.id = " BGI_LOT_NOW("p") " WHERE p.serial = ?1" :
                     "SELECT " BGI_PROBE_COLS " FROM probe p JOIN lot l ON l.id = "
                     BGI_LOT_NOW("p") " WHERE " BGI_PROBE_NOW_IN("p", "?2") " ORDER BY p.serial",
                     &q, err);
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
