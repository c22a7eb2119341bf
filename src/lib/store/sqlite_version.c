/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The SQLite backend's versions of references, lots and probes (schema db/008-versions.sql):
** rows only ever added, each with its validity, reason, author and time. */
#include <string.h>

#include "bandgap/bandgap.h"
#include "sqlite_int.h"

int bgi_sqlite_ref_version_add(bgi_conn *c, long long ref_id, const bg_ref_version *rv,
                               const char *now, long long *id, bg_error *err)
{
    const bg_ref *ref = &rv->ref;
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(c, "INSERT INTO reference_version(reference_id, valid_from, "
                         "certificate, due_date, correction, lin_c0_k, lin_c1, lin_t0_k, "
                         "cvd_r0_ohm, cvd_a, cvd_b, cvd_c, why, by_whom, created_at, "
                         BGI_ITS90_COLS ") VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?)",
                         &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, ref_id);
    sqlite3_bind_text(q, 2, rv->v.valid_from, -1, SQLITE_TRANSIENT);
    sqlite3_bind_text(q, 3, ref->certificate, -1, SQLITE_TRANSIENT);
    bgi_bind_text_or_null(q, 4, ref->due_date);
    sqlite3_bind_text(q, 5, bg_ref_kind_name(ref->kind), -1, SQLITE_STATIC);
    if (ref->kind == BG_REF_LINEAR) {
        sqlite3_bind_double(q, 6, ref->lin_c0_k);
        sqlite3_bind_double(q, 7, ref->lin_c1);
        sqlite3_bind_double(q, 8, ref->lin_t0_k);
    } else if (ref->kind == BG_REF_CVD) {
        sqlite3_bind_double(q, 9, ref->cvd_r0_ohm);
        sqlite3_bind_double(q, 10, ref->cvd_a);
        sqlite3_bind_double(q, 11, ref->cvd_b);
        sqlite3_bind_double(q, 12, ref->cvd_c);
    }
    sqlite3_bind_text(q, 13, rv->v.why, -1, SQLITE_TRANSIENT);
    sqlite3_bind_text(q, 14, rv->v.by, -1, SQLITE_TRANSIENT);
    sqlite3_bind_text(q, 15, now, -1, SQLITE_TRANSIENT);
    bgi_bind_its90(q, 16, ref);
    if (sqlite3_step(q) != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot add the reference version");
    else if (id)
        *id = sqlite3_last_insert_rowid(c->db);
    sqlite3_finalize(q);
    return rc;
}

static void ref_version_row(sqlite3_stmt *q, bg_ref_version *rv)
{
    bg_ref *r = &rv->ref;
    memset(rv, 0, sizeof *rv);
    rv->v.id = sqlite3_column_int64(q, 0);
    bgi_copy_text(rv->v.valid_from, sizeof rv->v.valid_from, q, 1);
    bgi_copy_text(r->certificate, sizeof r->certificate, q, 2);
    bgi_copy_text(r->due_date, sizeof r->due_date, q, 3);
    bgi_ref_correction_row(q, 4, 15, r);
    r->lin_c0_k = sqlite3_column_double(q, 5);
    r->lin_c1 = sqlite3_column_double(q, 6);
    r->lin_t0_k = sqlite3_column_double(q, 7);
    r->cvd_r0_ohm = sqlite3_column_double(q, 8);
    r->cvd_a = sqlite3_column_double(q, 9);
    r->cvd_b = sqlite3_column_double(q, 10);
    r->cvd_c = sqlite3_column_double(q, 11);
    bgi_copy_text(rv->v.why, sizeof rv->v.why, q, 12);
    bgi_copy_text(rv->v.by, sizeof rv->v.by, q, 13);
    bgi_copy_text(rv->v.created_at, sizeof rv->v.created_at, q, 14);
}

int bgi_sqlite_ref_version_each(bgi_conn *c, long long ref_id, bg_ref_version_cb cb, void *ctx,
                                bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_ref_version rv;
    int rc = bgi_prepare(c, "SELECT id, valid_from, certificate, due_date, correction, "
                         "lin_c0_k, lin_c1, lin_t0_k, cvd_r0_ohm, cvd_a, cvd_b, cvd_c, why, "
                         "by_whom, created_at, " BGI_ITS90_COLS " FROM reference_version "
                         "WHERE reference_id = ? "
                         "ORDER BY id", &q, err), s;
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, ref_id);
    while ((s = sqlite3_step(q)) == SQLITE_ROW) {
        ref_version_row(q, &rv);
        if (cb(&rv, ctx))
            break;
    }
    if (s != SQLITE_ROW && s != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot read reference versions");
    sqlite3_finalize(q);
    return rc;
}

int bgi_sqlite_lot_version_add(bgi_conn *c, long long lot_id, const bg_lot_version *lv,
                               const char *now, long long *id, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(c, "INSERT INTO lot_version(lot_id, valid_from, tol_r25, tol_beta, "
                         "note, why, by_whom, created_at) VALUES (?,?,?,?,?,?,?,?)", &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, lot_id);
    sqlite3_bind_text(q, 2, lv->v.valid_from, -1, SQLITE_TRANSIENT);
    bgi_bind_double_or_null(q, 3, lv->lot.tol_r25); /* NaN: none (a lot of another kind) */
    bgi_bind_double_or_null(q, 4, lv->lot.tol_beta);
    bgi_bind_text_or_null(q, 5, lv->lot.note);
    sqlite3_bind_text(q, 6, lv->v.why, -1, SQLITE_TRANSIENT);
    sqlite3_bind_text(q, 7, lv->v.by, -1, SQLITE_TRANSIENT);
    sqlite3_bind_text(q, 8, now, -1, SQLITE_TRANSIENT);
    if (sqlite3_step(q) != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot add the lot version");
    else if (id)
        *id = sqlite3_last_insert_rowid(c->db);
    sqlite3_finalize(q);
    return rc;
}

int bgi_sqlite_lot_version_each(bgi_conn *c, long long lot_id, bg_lot_version_cb cb, void *ctx,
                                bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_lot_version lv;
    int rc = bgi_prepare(c, "SELECT id, valid_from, tol_r25, tol_beta, note, why, by_whom, "
                         "created_at FROM lot_version WHERE lot_id = ? ORDER BY id", &q, err), s;
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, lot_id);
    while ((s = sqlite3_step(q)) == SQLITE_ROW) {
        memset(&lv, 0, sizeof lv);
        lv.v.id = sqlite3_column_int64(q, 0);
        bgi_copy_text(lv.v.valid_from, sizeof lv.v.valid_from, q, 1);
        lv.lot.tol_r25 = bgi_column_double_or_nan(q, 2);
        lv.lot.tol_beta = bgi_column_double_or_nan(q, 3);
        bgi_copy_text(lv.lot.note, sizeof lv.lot.note, q, 4);
        bgi_copy_text(lv.v.why, sizeof lv.v.why, q, 5);
        bgi_copy_text(lv.v.by, sizeof lv.v.by, q, 6);
        bgi_copy_text(lv.v.created_at, sizeof lv.v.created_at, q, 7);
        if (cb(&lv, ctx))
            break;
    }
    if (s != SQLITE_ROW && s != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot read lot versions");
    sqlite3_finalize(q);
    return rc;
}

/* bgi_time(TEXT): the seconds of an ISO 8601 time as bg_time_parse reads it, NULL when the
** value is not one; SQL compares a move's validity with a run's start through it. */
static void time_fn(sqlite3_context *ctx, int argc, sqlite3_value **argv)
{
    const unsigned char *s = sqlite3_value_text(argv[0]);
    double t;
    (void)argc;
    if (s && bg_time_parse((const char *)s, &t, NULL) == BG_OK)
        sqlite3_result_double(ctx, t);
    else
        sqlite3_result_null(ctx);
}

int bgi_sqlite_time_function(sqlite3 *db)
{
    return sqlite3_create_function_v2(db, "bgi_time", 1,
                                      SQLITE_UTF8 | SQLITE_DETERMINISTIC | SQLITE_INNOCUOUS,
                                      NULL, time_fn, NULL, NULL, NULL);
}

int bgi_sqlite_probe_version_add(bgi_conn *c, long long probe_id, const bg_probe_version *pv,
                                 const char *now, long long *id, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(c, "INSERT INTO probe_version(probe_id, valid_from, lot_id, why, "
                         "by_whom, created_at) VALUES (?,?,?,?,?,?)", &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, probe_id);
    sqlite3_bind_text(q, 2, pv->v.valid_from, -1, SQLITE_TRANSIENT);
    sqlite3_bind_int64(q, 3, pv->probe.lot_id);
    sqlite3_bind_text(q, 4, pv->v.why, -1, SQLITE_TRANSIENT);
    sqlite3_bind_text(q, 5, pv->v.by, -1, SQLITE_TRANSIENT);
    sqlite3_bind_text(q, 6, now, -1, SQLITE_TRANSIENT);
    if (sqlite3_step(q) != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot add the probe version");
    else if (id)
        *id = sqlite3_last_insert_rowid(c->db);
    sqlite3_finalize(q);
    return rc;
}

int bgi_sqlite_probe_version_each(bgi_conn *c, long long probe_id, bg_probe_version_cb cb,
                                  void *ctx, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_probe_version pv;
    /* the row itself (version 0), then the versions; columns: version id, valid from, lot id
    ** and code, why, by, recorded at, the probe's serial, note and creation time */
    int rc = bgi_prepare(c, "SELECT 0, p.created_at, p.lot_id, l.code, NULL, NULL, "
                         "p.created_at, p.serial, p.note, p.created_at FROM probe p JOIN lot l "
                         "ON l.id = p.lot_id WHERE p.id = ?1 UNION ALL SELECT v.id, "
                         "v.valid_from, v.lot_id, l.code, v.why, v.by_whom, v.created_at, "
                         "p.serial, p.note, p.created_at FROM probe_version v JOIN lot l ON "
                         "l.id = v.lot_id JOIN probe p ON p.id = v.probe_id WHERE v.probe_id = "
                         "?1 ORDER BY 1", &q, err), s;
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, probe_id);
    while ((s = sqlite3_step(q)) == SQLITE_ROW) {
        memset(&pv, 0, sizeof pv);
        pv.v.id = sqlite3_column_int64(q, 0);
        bgi_copy_text(pv.v.valid_from, sizeof pv.v.valid_from, q, 1);
        pv.probe.id = probe_id;
        pv.probe.lot_id = sqlite3_column_int64(q, 2);
        bgi_copy_text(pv.probe.lot_code, sizeof pv.probe.lot_code, q, 3);
        bgi_copy_text(pv.v.why, sizeof pv.v.why, q, 4);
        bgi_copy_text(pv.v.by, sizeof pv.v.by, q, 5);
        bgi_copy_text(pv.v.created_at, sizeof pv.v.created_at, q, 6);
        bgi_copy_text(pv.probe.serial, sizeof pv.probe.serial, q, 7);
        bgi_copy_text(pv.probe.note, sizeof pv.probe.note, q, 8);
        bgi_copy_text(pv.probe.created_at, sizeof pv.probe.created_at, q, 9);
        if (cb(&pv, ctx))
            break;
    }
    if (s != SQLITE_ROW && s != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot read probe versions");
    sqlite3_finalize(q);
    return rc;
}
