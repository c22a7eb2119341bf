/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The calibration database on SQLite: opening, schema migrations, transactions, and the
** lot, probe and reference records.  Rollback journal (not WAL) keeps the database one file
** that also works on network shares; every connection sets foreign keys, defensive mode and
** a busy timeout (SQLite documentation: pragma.html, lang_transaction.html). */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>

#include <sqlite3.h>

#include "bandgap/bandgap.h"
#include "bandgap/store.h"
#include "store_int.h"
#include "store_priv.h"

int bgi_db_fail(bg_store *st, bg_error *err, const char *what)
{
    /* Copy the message at once: the next SQLite call overwrites it. */
    return bg_error_set(err, BG_EDB, "%s: %s", what, sqlite3_errmsg(st->db));
}

int bgi_prepare(bg_store *st, const char *sql, sqlite3_stmt **stmt, bg_error *err)
{
    if (sqlite3_prepare_v3(st->db, sql, -1, 0, stmt, NULL) != SQLITE_OK)
        return bgi_db_fail(st, err, "cannot prepare a query");
    return BG_OK;
}

void bgi_copy_text(char *dst, size_t size, sqlite3_stmt *stmt, int col)
{
    const unsigned char *t = sqlite3_column_text(stmt, col);
    int n = sqlite3_column_bytes(stmt, col);
    size_t len = t ? (size_t)n : 0;
    if (len >= size)
        len = size - 1;
    if (len)
        memcpy(dst, t, len);
    dst[len] = '\0';
}

int bgi_check_text(const char *what, const char *s, size_t max, int required, bg_error *err)
{
    size_t n = s ? strlen(s) : 0;
    if (required && n == 0)
        return bg_error_set(err, BG_EINVAL, "%s must not be empty", what);
    if (n >= max)
        return bg_error_set(err, BG_EINVAL, "%s is longer than %zu bytes", what, max - 1);
    return BG_OK;
}

void bgi_bind_text_or_null(sqlite3_stmt *stmt, int i, const char *s)
{
    if (s && *s)
        sqlite3_bind_text(stmt, i, s, -1, SQLITE_TRANSIENT);
    else
        sqlite3_bind_null(stmt, i);
}

char *bg_store_now(char *buf, size_t size)
{
    const char *sde = getenv("SOURCE_DATE_EPOCH");
    time_t t = time(NULL);
    struct tm tm;
    /* The same second again (a lot of fits in one pass): reuse the text. */
    static _Thread_local time_t last = (time_t)-1;
    static _Thread_local char last_text[BG_TIME];
    if (sde && *sde) {
        char *end;
        long long v = strtoll(sde, &end, 10);
        if (*end == '\0' && v >= 0)
            t = (time_t)v;
    }
    if (t != last) {
        gmtime_r(&t, &tm);
        strftime(last_text, sizeof last_text, "%Y-%m-%dT%H:%M:%SZ", &tm);
        last = t;
    }
    snprintf(buf, size, "%s", last_text);
    return buf;
}

int bgi_tx_begin(bg_store *st, int *own, bg_error *err)
{
    *own = 0;
    if (!sqlite3_get_autocommit(st->db))
        return BG_OK;
    if (sqlite3_exec(st->db, "BEGIN IMMEDIATE", NULL, NULL, NULL) != SQLITE_OK)
        return bgi_db_fail(st, err, "cannot start a write transaction");
    *own = 1;
    return BG_OK;
}

int bgi_tx_end(bg_store *st, int own, int rc, bg_error *err)
{
    if (!own)
        return rc;
    if (rc == BG_OK) {
        if (sqlite3_exec(st->db, "COMMIT", NULL, NULL, NULL) == SQLITE_OK)
            return BG_OK;
        rc = bgi_db_fail(st, err, "cannot commit");
    }
    if (!sqlite3_get_autocommit(st->db))
        sqlite3_exec(st->db, "ROLLBACK", NULL, NULL, NULL);
    return rc;
}

int bg_store_begin(bg_store *st, bg_error *err)
{
    if (sqlite3_exec(st->db, "BEGIN IMMEDIATE", NULL, NULL, NULL) != SQLITE_OK)
        return bgi_db_fail(st, err, "cannot start a write transaction");
    return BG_OK;
}

int bg_store_commit(bg_store *st, bg_error *err)
{
    int frc = bgi_fitq_flush(st, err);
    st->next_fit_id = 0;
    if (frc != BG_OK) {
        bg_store_rollback(st);
        return frc;
    }
    if (sqlite3_exec(st->db, "COMMIT", NULL, NULL, NULL) != SQLITE_OK) {
        int rc = bgi_db_fail(st, err, "cannot commit");
        bg_store_rollback(st);
        return rc;
    }
    return BG_OK;
}

void bg_store_rollback(bg_store *st)
{
    if (st) {
        bgi_fitq_drop(st);
        st->next_fit_id = 0;
    }
    if (st && !sqlite3_get_autocommit(st->db))
        sqlite3_exec(st->db, "ROLLBACK", NULL, NULL, NULL);
}

static int pragma_int(bg_store *st, const char *sql, int *v, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(st, sql, &q, err);
    if (rc != BG_OK)
        return rc;
    if (sqlite3_step(q) == SQLITE_ROW)
        *v = sqlite3_column_int(q, 0);
    else
        rc = bgi_db_fail(st, err, "cannot read the database header");
    sqlite3_finalize(q);
    return rc;
}

int bg_store_schema_known(void)
{
    int n = 0;
    while (bgi_migrations[n].name)
        n++;
    return n;
}

int bg_store_schema_version(bg_store *st)
{
    int v = -1;
    pragma_int(st, "PRAGMA user_version", &v, NULL);
    return v;
}

const char *bg_store_backup_path(const bg_store *st)
{
    return st->backup;
}

/* Copy the open database to 'path' with the online backup API. */
static int backup_to(bg_store *st, const char *path, bg_error *err)
{
    sqlite3 *dst = NULL;
    sqlite3_backup *b;
    int rc = BG_OK;

    if (sqlite3_open_v2(path, &dst, SQLITE_OPEN_READWRITE | SQLITE_OPEN_CREATE, NULL) !=
        SQLITE_OK) {
        rc = bg_error_set(err, BG_EIO, "cannot create the backup '%s': %s", path,
                          dst ? sqlite3_errmsg(dst) : "out of memory");
        goto done;
    }
    b = sqlite3_backup_init(dst, "main", st->db, "main");
    if (!b) {
        rc = bg_error_set(err, BG_EIO, "cannot back up to '%s': %s", path, sqlite3_errmsg(dst));
        goto done;
    }
    int s = sqlite3_backup_step(b, -1);
    sqlite3_backup_finish(b);
    if (s != SQLITE_DONE)
        rc = bg_error_set(err, BG_EIO, "backup to '%s' failed: %s", path, sqlite3_errstr(s));
done:
    sqlite3_close_v2(dst);
    return rc;
}

/* Apply migrations from the file's version to the newest, one transaction each.  The version
** is read again inside the transaction, so two processes opening an old file at once upgrade
** it once. */
static int migrate(bg_store *st, bg_error *err)
{
    int known = bg_store_schema_known();
    for (;;) {
        int v = 0, rc;
        char sql[96];
        if (sqlite3_exec(st->db, "BEGIN IMMEDIATE", NULL, NULL, NULL) != SQLITE_OK)
            return bgi_db_fail(st, err, "cannot start the schema upgrade");
        if ((rc = pragma_int(st, "PRAGMA user_version", &v, err)) != BG_OK) {
            bg_store_rollback(st);
            return rc;
        }
        if (v >= known) {
            sqlite3_exec(st->db, "COMMIT", NULL, NULL, NULL);
            return BG_OK;
        }
        snprintf(sql, sizeof sql, "PRAGMA application_id = %d; PRAGMA user_version = %d;",
                 BG_STORE_APP_ID, v + 1);
        if (sqlite3_exec(st->db, bgi_migrations[v].text, NULL, NULL, NULL) != SQLITE_OK ||
            sqlite3_exec(st->db, sql, NULL, NULL, NULL) != SQLITE_OK) {
            rc = bg_error_set(err, BG_EDB, "schema migration '%s' failed: %s",
                              bgi_migrations[v].name, sqlite3_errmsg(st->db));
            bg_store_rollback(st);
            return rc;
        }
        if (sqlite3_exec(st->db, "COMMIT", NULL, NULL, NULL) != SQLITE_OK) {
            rc = bgi_db_fail(st, err, "cannot commit the schema upgrade");
            bg_store_rollback(st);
            return rc;
        }
    }
}

int bg_store_open(const char *path, int flags, bg_store **out, bg_error *err)
{
    bg_store *st = NULL;
    struct stat sb;
    int rc = BG_OK, app = 0, ver = 0, ntables = 0, exists = stat(path, &sb) == 0;

    *out = NULL;
    if (!exists && !(flags & BG_STORE_CREATE))
        return bg_error_set(err, BG_ENOENT, "database '%s' does not exist (create it with "
                            "'bandgap --db %s init')", path, path);
    st = calloc(1, sizeof *st);
    if (!st)
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    snprintf(st->path, sizeof st->path, "%s", path);
    if (sqlite3_open_v2(path, &st->db,
                        /* NOMUTEX: a handle is never shared between threads */
                        SQLITE_OPEN_READWRITE | SQLITE_OPEN_EXRESCODE | SQLITE_OPEN_NOMUTEX |
                            ((flags & BG_STORE_CREATE) ? SQLITE_OPEN_CREATE : 0),
                        NULL) != SQLITE_OK) {
        rc = bg_error_set(err, BG_EIO, "cannot %s database '%s': %s",
                          exists ? "open" : "create", path,
                          st->db ? sqlite3_errmsg(st->db) : "out of memory");
        goto fail;
    }
    sqlite3_busy_timeout(st->db, 30000);
    sqlite3_db_config(st->db, SQLITE_DBCONFIG_DEFENSIVE, 1, NULL);
    sqlite3_db_config(st->db, SQLITE_DBCONFIG_DQS_DML, 0, NULL);
    sqlite3_db_config(st->db, SQLITE_DBCONFIG_DQS_DDL, 0, NULL);
    sqlite3_db_config(st->db, SQLITE_DBCONFIG_TRUSTED_SCHEMA, 0, NULL);
    if (sqlite3_exec(st->db, "PRAGMA foreign_keys = ON; PRAGMA synchronous = FULL;", NULL,
                     NULL, NULL) != SQLITE_OK) {
        rc = bg_error_set(err, exists ? BG_EINVAL : BG_EIO, "'%s': %s", path,
                          sqlite3_errmsg(st->db));
        goto fail;
    }
    if (pragma_int(st, "PRAGMA application_id", &app, err) != BG_OK ||
        pragma_int(st, "PRAGMA user_version", &ver, err) != BG_OK ||
        pragma_int(st, "SELECT count(*) FROM sqlite_schema", &ntables, err) != BG_OK) {
        rc = bg_error_set(err, BG_EINVAL, "'%s' is not a bandgap database (%s)", path,
                          err ? err->msg : "unreadable");
        goto fail;
    }
    if (app != BG_STORE_APP_ID && (app != 0 || ntables > 0)) {
        rc = bg_error_set(err, BG_EINVAL, "'%s' is not a bandgap database (application id "
                          "%d, %d schema objects)", path, app, ntables);
        goto fail;
    }
    if (ver > bg_store_schema_known()) {
        rc = bg_error_set(err, BG_EINVAL, "database '%s' has schema version %d, newer than "
                          "this program knows (%d): use a newer bandgap", path, ver,
                          bg_store_schema_known());
        goto fail;
    }
    if (ntables == 0 && (flags & BG_STORE_CREATE) &&
        sqlite3_exec(st->db, "PRAGMA page_size = 8192", NULL, NULL, NULL) != SQLITE_OK) {
        rc = bg_error_set(err, BG_EIO, "'%s': %s", path, sqlite3_errmsg(st->db));
        goto fail;
    }
    {
        /* The journal mode is a property of the file: keep it a rollback journal. */
        sqlite3_stmt *q = NULL;
        if (bgi_prepare(st, "PRAGMA journal_mode = DELETE", &q, err) != BG_OK) {
            rc = BG_EDB;
            goto fail;
        }
        int ok = sqlite3_step(q) == SQLITE_ROW &&
                 sqlite3_stricmp((const char *)sqlite3_column_text(q, 0), "delete") == 0;
        sqlite3_finalize(q);
        if (!ok) {
            rc = bg_error_set(err, BG_EDB, "'%s': cannot use a rollback journal", path);
            goto fail;
        }
    }
    if (app == 0 && !(flags & BG_STORE_CREATE)) {
        rc = bg_error_set(err, BG_EINVAL, "'%s' is an empty file, not a bandgap database "
                          "(create one with 'bandgap --db %s init')", path, path);
        goto fail;
    }
    if (ver > 0 && ver < bg_store_schema_known()) {
        snprintf(st->backup, sizeof st->backup, "%s.v%d.bak", path, ver);
        if ((rc = backup_to(st, st->backup, err)) != BG_OK)
            goto fail;
    }
    if (ver < bg_store_schema_known() && (rc = migrate(st, err)) != BG_OK)
        goto fail;
    *out = st;
    return BG_OK;
fail:
    bg_store_close(st);
    return rc;
}

void bg_store_close(bg_store *st)
{
    if (!st)
        return;
    bgi_fitq_drop(st);
    for (size_t i = 0; i < sizeof st->cache / sizeof st->cache[0]; i++)
        sqlite3_finalize(st->cache[i]);
    sqlite3_close_v2(st->db);
    free(st);
}

/* Row id of a lot or probe by its code or serial, for writes (no counts); 0 when absent. */
static long long id_of(bg_store *st, const char *sql, const char *key, bg_error *err, int *rc)
{
    sqlite3_stmt *q = NULL;
    long long id = 0;
    if ((*rc = bgi_prepare(st, sql, &q, err)) != BG_OK)
        return 0;
    sqlite3_bind_text(q, 1, key, -1, SQLITE_TRANSIENT);
    int s = sqlite3_step(q);
    if (s == SQLITE_ROW)
        id = sqlite3_column_int64(q, 0);
    else if (s != SQLITE_DONE)
        *rc = bgi_db_fail(st, err, "cannot read the database");
    sqlite3_finalize(q);
    return id;
}

long long bgi_probe_id(bg_store *st, const char *serial, bg_error *err, int *rc)
{
    long long id = id_of(st, "SELECT id FROM probe WHERE serial = ?", serial, err, rc);
    if (*rc == BG_OK && id == 0)
        *rc = bg_error_set(err, BG_EINVAL, "unknown probe '%s' (add it with 'bandgap probe add "
                           "SERIAL --lot CODE')", serial);
    return id;
}

/* ---- lots ---- */

int bg_store_lot_add(bg_store *st, const bg_lot *lot, long long *id, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    char now[BG_TIME];
    int rc, own;

    if ((rc = bgi_check_text("lot code", lot->code, BG_TEXT, 1, err)) != BG_OK ||
        (rc = bgi_check_text("part", lot->part, BG_TEXT, 1, err)) != BG_OK ||
        (rc = bgi_check_text("note", lot->note, BG_NOTE, 0, err)) != BG_OK)
        return rc;
    if (!(lot->r25_ohm > 0.0) || !(lot->beta_k > 0.0) || !isfinite(lot->r25_ohm) ||
        !isfinite(lot->beta_k))
        return bg_error_set(err, BG_EINVAL, "lot '%s': nominal R25 and B must be > 0",
                            lot->code);
    if (!(lot->tol_r25 >= 0.0 && lot->tol_r25 < 1.0 && lot->tol_beta >= 0.0 &&
          lot->tol_beta < 1.0))
        return bg_error_set(err, BG_EINVAL, "lot '%s': tolerances must be between 0 and 100 %%",
                            lot->code);
    if ((rc = bgi_tx_begin(st, &own, err)) != BG_OK)
        return rc;
    rc = bgi_prepare(st, "INSERT INTO lot(code, part, r25_ohm, beta_k, pair_t1_k, pair_t2_k, "
                     "tol_r25, tol_beta, note, created_at) VALUES (?,?,?,?,?,?,?,?,?,?)",
                     &q, err);
    if (rc == BG_OK) {
        sqlite3_bind_text(q, 1, lot->code, -1, SQLITE_TRANSIENT);
        sqlite3_bind_text(q, 2, lot->part, -1, SQLITE_TRANSIENT);
        sqlite3_bind_double(q, 3, lot->r25_ohm);
        sqlite3_bind_double(q, 4, lot->beta_k);
        sqlite3_bind_double(q, 5, lot->pair_t1_k);
        sqlite3_bind_double(q, 6, lot->pair_t2_k);
        sqlite3_bind_double(q, 7, lot->tol_r25);
        sqlite3_bind_double(q, 8, lot->tol_beta);
        bgi_bind_text_or_null(q, 9, lot->note);
        sqlite3_bind_text(q, 10, bg_store_now(now, sizeof now), -1, SQLITE_TRANSIENT);
        int s = sqlite3_step(q);
        if (s == SQLITE_CONSTRAINT_UNIQUE)
            rc = bg_error_set(err, BG_EINVAL, "lot '%s' already exists", lot->code);
        else if ((s & 0xff) == SQLITE_CONSTRAINT)
            rc = bg_error_set(err, BG_EINVAL, "lot '%s': %s", lot->code, sqlite3_errmsg(st->db));
        else if (s != SQLITE_DONE)
            rc = bgi_db_fail(st, err, "cannot add the lot");
        else if (id)
            *id = sqlite3_last_insert_rowid(st->db);
    }
    sqlite3_finalize(q);
    return bgi_tx_end(st, own, rc, err);
}

#define LOT_COLS "l.id, l.code, l.part, l.r25_ohm, l.beta_k, l.pair_t1_k, l.pair_t2_k, " \
                 "l.tol_r25, l.tol_beta, l.note, l.created_at, " \
                 "(SELECT count(*) FROM probe p WHERE p.lot_id = l.id)"

static void lot_row(sqlite3_stmt *q, bg_lot *l)
{
    l->id = sqlite3_column_int64(q, 0);
    bgi_copy_text(l->code, sizeof l->code, q, 1);
    bgi_copy_text(l->part, sizeof l->part, q, 2);
    l->r25_ohm = sqlite3_column_double(q, 3);
    l->beta_k = sqlite3_column_double(q, 4);
    l->pair_t1_k = sqlite3_column_double(q, 5);
    l->pair_t2_k = sqlite3_column_double(q, 6);
    l->tol_r25 = sqlite3_column_double(q, 7);
    l->tol_beta = sqlite3_column_double(q, 8);
    bgi_copy_text(l->note, sizeof l->note, q, 9);
    bgi_copy_text(l->created_at, sizeof l->created_at, q, 10);
    l->nprobes = sqlite3_column_int64(q, 11);
}

int bg_store_lot_get(bg_store *st, const char *code, bg_lot *out, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(st, "SELECT " LOT_COLS " FROM lot l WHERE l.code = ?", &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_text(q, 1, code, -1, SQLITE_TRANSIENT);
    int s = sqlite3_step(q);
    if (s == SQLITE_ROW)
        lot_row(q, out);
    else if (s == SQLITE_DONE)
        rc = bg_error_set(err, BG_EINVAL, "unknown lot '%s' (add it with 'bandgap lot add')",
                          code);
    else
        rc = bgi_db_fail(st, err, "cannot read lots");
    sqlite3_finalize(q);
    return rc;
}

int bg_store_lot_each(bg_store *st, bg_lot_cb cb, void *ctx, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_lot l;
    int rc = bgi_prepare(st, "SELECT " LOT_COLS " FROM lot l ORDER BY l.code", &q, err), s;
    if (rc != BG_OK)
        return rc;
    while ((s = sqlite3_step(q)) == SQLITE_ROW) {
        lot_row(q, &l);
        if (cb(&l, ctx))
            break;
    }
    if (s != SQLITE_ROW && s != SQLITE_DONE)
        rc = bgi_db_fail(st, err, "cannot read lots");
    sqlite3_finalize(q);
    return rc;
}

/* ---- probes ---- */

int bg_store_probe_add(bg_store *st, const char *serial, const char *lot_code, const char *note,
                       long long *id, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_lot lot;
    char now[BG_TIME];
    int rc, own;

    if ((rc = bgi_check_text("serial", serial, BG_TEXT, 1, err)) != BG_OK ||
        (rc = bgi_check_text("note", note, BG_NOTE, 0, err)) != BG_OK)
        return rc;
    if ((rc = bgi_tx_begin(st, &own, err)) != BG_OK)
        return rc;
    lot.id = id_of(st, "SELECT id FROM lot WHERE code = ?", lot_code, err, &rc);
    if (rc == BG_OK && lot.id == 0)
        rc = bg_error_set(err, BG_EINVAL, "unknown lot '%s' (add it with 'bandgap lot add')",
                          lot_code);
    if (rc != BG_OK)
        return bgi_tx_end(st, own, rc, err);
    rc = bgi_prepare(st, "INSERT INTO probe(serial, lot_id, note, created_at) VALUES (?,?,?,?)",
                     &q, err);
    if (rc == BG_OK) {
        sqlite3_bind_text(q, 1, serial, -1, SQLITE_TRANSIENT);
        sqlite3_bind_int64(q, 2, lot.id);
        bgi_bind_text_or_null(q, 3, note);
        sqlite3_bind_text(q, 4, bg_store_now(now, sizeof now), -1, SQLITE_TRANSIENT);
        int s = sqlite3_step(q);
        if (s == SQLITE_CONSTRAINT_UNIQUE)
            rc = bg_error_set(err, BG_EINVAL, "probe '%s' already exists", serial);
        else if (s != SQLITE_DONE)
            rc = bgi_db_fail(st, err, "cannot add the probe");
        else if (id)
            *id = sqlite3_last_insert_rowid(st->db);
    }
    sqlite3_finalize(q);
    return bgi_tx_end(st, own, rc, err);
}

#define PROBE_COLS "p.id, p.lot_id, p.serial, l.code, p.note, p.created_at, " \
                   "(SELECT count(*) FROM run r WHERE r.probe_id = p.id), " \
                   "(SELECT count(*) FROM fit f JOIN run r ON f.run_id = r.id " \
                   "  WHERE r.probe_id = p.id)"

static void probe_row(sqlite3_stmt *q, bg_probe *p)
{
    p->id = sqlite3_column_int64(q, 0);
    p->lot_id = sqlite3_column_int64(q, 1);
    bgi_copy_text(p->serial, sizeof p->serial, q, 2);
    bgi_copy_text(p->lot_code, sizeof p->lot_code, q, 3);
    bgi_copy_text(p->note, sizeof p->note, q, 4);
    bgi_copy_text(p->created_at, sizeof p->created_at, q, 5);
    p->nruns = sqlite3_column_int64(q, 6);
    p->nfits = sqlite3_column_int64(q, 7);
}

int bg_store_probe_get(bg_store *st, const char *serial, bg_probe *out, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(st, "SELECT " PROBE_COLS " FROM probe p JOIN lot l ON p.lot_id = l.id "
                         "WHERE p.serial = ?", &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_text(q, 1, serial, -1, SQLITE_TRANSIENT);
    int s = sqlite3_step(q);
    if (s == SQLITE_ROW)
        probe_row(q, out);
    else if (s == SQLITE_DONE)
        rc = bg_error_set(err, BG_EINVAL, "unknown probe '%s' (add it with 'bandgap probe add "
                          "SERIAL --lot CODE')", serial);
    else
        rc = bgi_db_fail(st, err, "cannot read probes");
    sqlite3_finalize(q);
    return rc;
}

int bg_store_probe_each(bg_store *st, const char *lot_code, bg_probe_cb cb, void *ctx,
                        bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_probe p;
    int rc, s;
    if (lot_code) {
        bg_lot lot;
        if ((rc = bg_store_lot_get(st, lot_code, &lot, err)) != BG_OK)
            return rc;
    }
    rc = bgi_prepare(st, "SELECT " PROBE_COLS " FROM probe p JOIN lot l ON p.lot_id = l.id "
                     "WHERE ?1 IS NULL OR l.code = ?1 ORDER BY p.serial", &q, err);
    if (rc != BG_OK)
        return rc;
    bgi_bind_text_or_null(q, 1, lot_code);
    while ((s = sqlite3_step(q)) == SQLITE_ROW) {
        probe_row(q, &p);
        if (cb(&p, ctx))
            break;
    }
    if (s != SQLITE_ROW && s != SQLITE_DONE)
        rc = bgi_db_fail(st, err, "cannot read probes");
    sqlite3_finalize(q);
    return rc;
}

/* ---- reference thermometers ---- */

static const char *ref_kind_name(bg_ref_kind k)
{
    return k == BG_REF_LINEAR ? "linear" : k == BG_REF_CVD ? "cvd" : "none";
}

int bg_store_ref_add(bg_store *st, const bg_ref *ref, long long *id, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    char now[BG_TIME];
    int rc, own;

    if ((rc = bgi_check_text("reference identifier", ref->ident, BG_TEXT, 1, err)) != BG_OK ||
        (rc = bgi_check_text("certificate", ref->certificate, BG_TEXT, 1, err)) != BG_OK ||
        (rc = bgi_check_text("note", ref->note, BG_NOTE, 0, err)) != BG_OK)
        return rc;
    if (ref->due_date[0] && !bg_csv_valid_time(ref->due_date))
        return bg_error_set(err, BG_EINVAL, "due date '%s': not an ISO 8601 date",
                            ref->due_date);
    if (ref->kind == BG_REF_CVD && !(ref->cvd_r0_ohm > 0.0 && isfinite(ref->cvd_a) &&
                                     ref->cvd_a != 0.0 && isfinite(ref->cvd_b) &&
                                     isfinite(ref->cvd_c)))
        return bg_error_set(err, BG_EINVAL, "reference '%s': Callendar-Van Dusen needs R0 > 0 "
                            "and finite A (not 0), B, C", ref->ident);
    if (ref->kind == BG_REF_LINEAR && !(isfinite(ref->lin_c0_k) && isfinite(ref->lin_c1) &&
                                        ref->lin_t0_k > 0.0))
        return bg_error_set(err, BG_EINVAL, "reference '%s': the linear correction needs "
                            "finite c0, c1 and t0", ref->ident);
    if ((rc = bgi_tx_begin(st, &own, err)) != BG_OK)
        return rc;
    rc = bgi_prepare(st, "INSERT INTO reference(ident, certificate, due_date, correction, "
                     "lin_c0_k, lin_c1, lin_t0_k, cvd_r0_ohm, cvd_a, cvd_b, cvd_c, note, "
                     "created_at) VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?)", &q, err);
    if (rc == BG_OK) {
        sqlite3_bind_text(q, 1, ref->ident, -1, SQLITE_TRANSIENT);
        sqlite3_bind_text(q, 2, ref->certificate, -1, SQLITE_TRANSIENT);
        bgi_bind_text_or_null(q, 3, ref->due_date);
        sqlite3_bind_text(q, 4, ref_kind_name(ref->kind), -1, SQLITE_STATIC);
        for (int i = 5; i <= 11; i++)
            sqlite3_bind_null(q, i);
        if (ref->kind == BG_REF_LINEAR) {
            sqlite3_bind_double(q, 5, ref->lin_c0_k);
            sqlite3_bind_double(q, 6, ref->lin_c1);
            sqlite3_bind_double(q, 7, ref->lin_t0_k);
        } else if (ref->kind == BG_REF_CVD) {
            sqlite3_bind_double(q, 8, ref->cvd_r0_ohm);
            sqlite3_bind_double(q, 9, ref->cvd_a);
            sqlite3_bind_double(q, 10, ref->cvd_b);
            sqlite3_bind_double(q, 11, ref->cvd_c);
        }
        bgi_bind_text_or_null(q, 12, ref->note);
        sqlite3_bind_text(q, 13, bg_store_now(now, sizeof now), -1, SQLITE_TRANSIENT);
        int s = sqlite3_step(q);
        if (s == SQLITE_CONSTRAINT_UNIQUE)
            rc = bg_error_set(err, BG_EINVAL, "reference '%s' already exists", ref->ident);
        else if (s != SQLITE_DONE)
            rc = bgi_db_fail(st, err, "cannot add the reference");
        else if (id)
            *id = sqlite3_last_insert_rowid(st->db);
    }
    sqlite3_finalize(q);
    return bgi_tx_end(st, own, rc, err);
}

#define REF_COLS "id, ident, certificate, due_date, correction, lin_c0_k, lin_c1, lin_t0_k, " \
                 "cvd_r0_ohm, cvd_a, cvd_b, cvd_c, note, created_at"

static void ref_row(sqlite3_stmt *q, bg_ref *r)
{
    char kind[16];
    memset(r, 0, sizeof *r);
    r->id = sqlite3_column_int64(q, 0);
    bgi_copy_text(r->ident, sizeof r->ident, q, 1);
    bgi_copy_text(r->certificate, sizeof r->certificate, q, 2);
    bgi_copy_text(r->due_date, sizeof r->due_date, q, 3);
    bgi_copy_text(kind, sizeof kind, q, 4);
    r->kind = strcmp(kind, "linear") == 0 ? BG_REF_LINEAR
            : strcmp(kind, "cvd") == 0 ? BG_REF_CVD : BG_REF_NONE;
    r->lin_c0_k = sqlite3_column_double(q, 5);
    r->lin_c1 = sqlite3_column_double(q, 6);
    r->lin_t0_k = sqlite3_column_double(q, 7);
    r->cvd_r0_ohm = sqlite3_column_double(q, 8);
    r->cvd_a = sqlite3_column_double(q, 9);
    r->cvd_b = sqlite3_column_double(q, 10);
    r->cvd_c = sqlite3_column_double(q, 11);
    bgi_copy_text(r->note, sizeof r->note, q, 12);
    bgi_copy_text(r->created_at, sizeof r->created_at, q, 13);
}

int bg_store_ref_get(bg_store *st, const char *ident, bg_ref *out, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(st, "SELECT " REF_COLS " FROM reference WHERE ident = ?", &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_text(q, 1, ident, -1, SQLITE_TRANSIENT);
    int s = sqlite3_step(q);
    if (s == SQLITE_ROW)
        ref_row(q, out);
    else if (s == SQLITE_DONE)
        rc = bg_error_set(err, BG_EINVAL, "unknown reference thermometer '%s' (add it with "
                          "'bandgap ref add')", ident);
    else
        rc = bgi_db_fail(st, err, "cannot read references");
    sqlite3_finalize(q);
    return rc;
}

int bg_store_ref_each(bg_store *st, bg_ref_cb cb, void *ctx, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_ref r;
    int rc = bgi_prepare(st, "SELECT " REF_COLS " FROM reference ORDER BY ident", &q, err), s;
    if (rc != BG_OK)
        return rc;
    while ((s = sqlite3_step(q)) == SQLITE_ROW) {
        ref_row(q, &r);
        if (cb(&r, ctx))
            break;
    }
    if (s != SQLITE_ROW && s != SQLITE_DONE)
        rc = bgi_db_fail(st, err, "cannot read references");
    sqlite3_finalize(q);
    return rc;
}

int bg_store_part_lots(bg_store *st, const char *part, bg_lot_cb cb, void *ctx, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_lot l;
    size_t n = 0;
    int rc = bgi_prepare(st, "SELECT " LOT_COLS " FROM lot l WHERE l.part = ? "
                         "ORDER BY l.created_at, l.id", &q, err), s;
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_text(q, 1, part, -1, SQLITE_TRANSIENT);
    while ((s = sqlite3_step(q)) == SQLITE_ROW) {
        lot_row(q, &l);
        n++;
        if (cb(&l, ctx))
            break;
    }
    if (s != SQLITE_ROW && s != SQLITE_DONE)
        rc = bgi_db_fail(st, err, "cannot read lots");
    else if (n == 0)
        rc = bg_error_set(err, BG_EINVAL, "no lots of part '%s'", part);
    sqlite3_finalize(q);
    return rc;
}

const char *bg_sqlite_version(void)
{
    return sqlite3_libversion();
}
