/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The calibration database's SQLite backend (scheme "sqlite:"): opening, schema migrations,
** transactions, the lot, probe and reference records, and the backend's table.  A rollback
** journal (not WAL) keeps the database one file (no -wal/-shm side files); every
** connection sets foreign keys, defensive mode and a busy timeout (SQLite documentation:
** pragma.html, lang_transaction.html). */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "bandgap/bandgap.h"
#include "sqlite_int.h"

/* Why 'path' (NULL: none) cannot be written, for SQLITE_READONLY and SQLITE_CANTOPEN: the file
** itself, or its directory, where SQLite creates the rollback journal beside the file (or a new
** database).  access() also sees a read-only mount (EROFS), which binds root too. */
static void why_readonly(const char *path, char *buf, size_t size)
{
    char dir[512]; /* err->msg holds 512 bytes in all */
    const char *slash = path ? strrchr(path, '/') : NULL;
    int exists = path && access(path, F_OK) == 0;

    if (!path) {
        snprintf(buf, size, "the database cannot be written");
        return;
    }
    if (exists && access(path, W_OK) != 0) {
        snprintf(buf, size, "the database file '%s' is not writable (%s)", path,
                 strerror(errno));
        return;
    }
    if (!slash)
        snprintf(dir, sizeof dir, ".");
    else
        snprintf(dir, sizeof dir, "%.*s", slash == path ? 1 : (int)(slash - path), path);
    if (access(dir, W_OK) != 0 && errno != ENOENT)
        snprintf(buf, size, exists ? "the directory '%s' is not writable (%s), so SQLite "
                 "cannot create its journal there" : "the directory '%s' is not writable "
                 "(%s), so the database cannot be created there", dir, strerror(errno));
    else if (access(dir, F_OK) != 0)
        snprintf(buf, size, "the directory '%s' does not exist", dir);
    else
        snprintf(buf, size, "'%s' cannot be written", path);
}

int bgi_status_fail(sqlite3 *db, const char *path, int busy_ms, int xrc, bg_error *err,
                    const char *what)
{
    char why[1024], msg[256];
    int sys = db ? sqlite3_system_errno(db) : 0;

    /* Copy the message at once: the next SQLite call overwrites it. */
    snprintf(msg, sizeof msg, "%s", db ? sqlite3_errmsg(db) : sqlite3_errstr(xrc));
    switch (xrc & 0xff) {
    case SQLITE_FULL:
        return bg_error_set(err, BG_EIO, "%s: the disk holding '%s' is full", what,
                            path ? path : "the database");
    case SQLITE_IOERR:
        if (xrc == SQLITE_IOERR_NOMEM)
            return bg_error_set(err, BG_ENOMEM, "%s: out of memory", what);
        if (sys == ENOSPC || sys == EDQUOT)
            return bg_error_set(err, BG_EIO, "%s: the disk holding '%s' is full (%s)", what,
                                path ? path : "the database", strerror(sys));
        return bg_error_set(err, BG_EIO, "%s: i/o error on '%s' (%s%s%s)", what,
                            path ? path : "", msg, sys ? ": " : "", sys ? strerror(sys) : "");
    case SQLITE_READONLY:
    case SQLITE_CANTOPEN:
        why_readonly(path, why, sizeof why);
        return bg_error_set(err, BG_ECANTCREAT, "%s: %s", what, why);
    case SQLITE_BUSY:
    case SQLITE_LOCKED:
        return bg_error_set(err, BG_EBUSY, "%s: the database '%s' is locked by another "
                            "process (waited %g s); try again", what, path ? path : "",
                            busy_ms / 1000.0);
    case SQLITE_CONSTRAINT:
        /* SQLite's message names the constraint ("CHECK constraint failed: r25_ohm > 0") */
        return bg_error_set(err, BG_EINVAL, "%s: the record refuses it: %s", what, msg);
    case SQLITE_NOMEM:
        return bg_error_set(err, BG_ENOMEM, "%s: out of memory", what);
    case SQLITE_CORRUPT:
    case SQLITE_NOTADB:
        /* the bytes of the file are not the database that was written: storage trouble (a
        ** failing disk, a truncated copy, another program writing into it), reported as an
        ** i/o error is; nothing is written to it */
        if ((xrc & 0xff) == SQLITE_NOTADB)
            return bg_error_set(err, BG_EIO, "%s: '%s' is not a database file, or its header "
                                "is damaged: if it is the database, restore it from a backup",
                                what, path ? path : "");
        return bg_error_set(err, BG_EIO, "%s: the database file '%s' is damaged (%s): restore "
                            "it from a backup ('bandgap --db %s verify' says what is found)",
                            what, path ? path : "", msg, path ? path : "FILE");
    default:
        return bg_error_set(err, BG_EDB, "%s: %s", what, msg);
    }
}

int bgi_db_fail(bgi_conn *c, bg_error *err, const char *what)
{
    return bgi_status_fail(c->db, c->path, c->busy_ms, sqlite3_extended_errcode(c->db), err,
                           what);
}

int bgi_prepare(bgi_conn *c, const char *sql, sqlite3_stmt **stmt, bg_error *err)
{
    if (sqlite3_prepare_v3(c->db, sql, -1, 0, stmt, NULL) != SQLITE_OK)
        return bgi_db_fail(c, err, "cannot prepare a query");
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

void bgi_bind_text_or_null(sqlite3_stmt *stmt, int i, const char *s)
{
    if (s && *s)
        sqlite3_bind_text(stmt, i, s, -1, SQLITE_TRANSIENT);
    else
        sqlite3_bind_null(stmt, i);
}

void bgi_bind_double_or_null(sqlite3_stmt *stmt, int i, double v)
{
    if (isnan(v))
        sqlite3_bind_null(stmt, i);
    else
        sqlite3_bind_double(stmt, i, v);
}

double bgi_column_double_or_nan(sqlite3_stmt *stmt, int col)
{
    return sqlite3_column_type(stmt, col) == SQLITE_NULL ? NAN : sqlite3_column_double(stmt, col);
}

int bgi_cached(bgi_conn *c, int which, const char *sql, sqlite3_stmt **q, bg_error *err)
{
    if (!c->cache[which] && sqlite3_prepare_v3(c->db, sql, -1, SQLITE_PREPARE_PERSISTENT,
                                               &c->cache[which], NULL) != SQLITE_OK)
        return bgi_db_fail(c, err, "cannot prepare a query");
    *q = c->cache[which];
    sqlite3_reset(*q);
    sqlite3_clear_bindings(*q);
    return BG_OK;
}

int bgi_stmt(bgi_conn *c, int which, const char *sql, sqlite3_stmt **q, bg_error *err)
{
    if (c->cache[which] && sqlite3_stmt_busy(c->cache[which]))
        return bgi_prepare(c, sql, q, err);
    if (!c->cache[which] && sqlite3_prepare_v3(c->db, sql, -1, SQLITE_PREPARE_PERSISTENT,
                                               &c->cache[which], NULL) != SQLITE_OK)
        return bgi_db_fail(c, err, "cannot prepare a query");
    *q = c->cache[which];
    return BG_OK;
}

void bgi_stmt_done(bgi_conn *c, int which, sqlite3_stmt *q)
{
    if (q && q == c->cache[which]) {
        sqlite3_reset(q);
        sqlite3_clear_bindings(q);
    } else
        sqlite3_finalize(q);
}

static int sq_in_tx(bgi_conn *c)
{
    return !sqlite3_get_autocommit(c->db);
}

static int sq_begin(bgi_conn *c, bg_error *err)
{
    if (sqlite3_exec(c->db, "BEGIN IMMEDIATE", NULL, NULL, NULL) != SQLITE_OK)
        return bgi_db_fail(c, err, "cannot start a write transaction");
    return BG_OK;
}

static int sq_commit(bgi_conn *c, bg_error *err)
{
    if (sqlite3_exec(c->db, "COMMIT", NULL, NULL, NULL) != SQLITE_OK)
        return bgi_db_fail(c, err, "cannot commit");
    return BG_OK;
}

static void sq_rollback(bgi_conn *c)
{
    if (!sqlite3_get_autocommit(c->db))
        sqlite3_exec(c->db, "ROLLBACK", NULL, NULL, NULL);
}

static int pragma_int(bgi_conn *c, const char *sql, int *v, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(c, sql, &q, err);
    if (rc != BG_OK)
        return rc;
    if (sqlite3_step(q) == SQLITE_ROW)
        *v = sqlite3_column_int(q, 0);
    else
        rc = bgi_db_fail(c, err, "cannot read the database header");
    sqlite3_finalize(q);
    return rc;
}

static int sq_schema_known(void)
{
    int n = 0;
    while (bgi_migrations[n].name)
        n++;
    return n;
}

static int sq_schema_version(bgi_conn *c)
{
    int v = -1;
    pragma_int(c, "PRAGMA user_version", &v, NULL);
    return v;
}

/* Copy the open database to 'path' with the online backup API. */
static int backup_to(bgi_conn *c, const char *path, bg_error *err)
{
    sqlite3 *dst = NULL;
    sqlite3_backup *b;
    int rc = BG_OK;

    char what[256];
    int s;

    snprintf(what, sizeof what, "cannot make the backup '%s' before the upgrade", path);
    s = sqlite3_open_v2(path, &dst, SQLITE_OPEN_READWRITE | SQLITE_OPEN_CREATE |
                        SQLITE_OPEN_EXRESCODE, NULL);
    if (s != SQLITE_OK) {
        rc = bgi_status_fail(dst, path, c->busy_ms, dst ? s : SQLITE_NOMEM, err, what);
        goto done;
    }
    b = sqlite3_backup_init(dst, "main", c->db, "main");
    if (!b) {
        rc = bgi_status_fail(dst, path, c->busy_ms, sqlite3_extended_errcode(dst), err, what);
        goto done;
    }
    s = sqlite3_backup_step(b, -1);
    sqlite3_backup_finish(b);
    if (s != SQLITE_DONE)
        rc = bgi_status_fail(NULL, path, c->busy_ms, s, err, what);
done:
    sqlite3_close_v2(dst);
    return rc;
}

/* Apply migrations from the file's version to the newest, one transaction each.  The version
** is read again inside the transaction, so two processes opening an old file at once upgrade
** it once. */
static int migrate_steps(bgi_conn *c, bg_error *err);
/* Foreign keys are off while migrating (a migration may make a table again, SQLite's procedure
** for a changed table; it checks the references itself before its commit). */
static int migrate(bgi_conn *c, bg_error *err)
{
    sqlite3_exec(c->db, "PRAGMA foreign_keys = OFF", NULL, NULL, NULL);
    int rc = migrate_steps(c, err);
    /* a migration may add columns to a chained table: its column order is read again */
    memset(c->chain_ncol, 0, sizeof c->chain_ncol);
    if (sqlite3_exec(c->db, "PRAGMA foreign_keys = ON", NULL, NULL, NULL) != SQLITE_OK && !rc)
        rc = bgi_db_fail(c, err, "cannot turn foreign keys on");
    return rc;
}

static int migrate_steps(bgi_conn *c, bg_error *err)
{
    int known = sq_schema_known();
    for (;;) {
        int v = 0, rc;
        char sql[96];
        if (sqlite3_exec(c->db, "BEGIN IMMEDIATE", NULL, NULL, NULL) != SQLITE_OK)
            return bgi_db_fail(c, err, "cannot start the schema upgrade");
        if ((rc = pragma_int(c, "PRAGMA user_version", &v, err)) != BG_OK) {
            sq_rollback(c);
            return rc;
        }
        if (v >= known) {
            sqlite3_exec(c->db, "COMMIT", NULL, NULL, NULL);
            return BG_OK;
        }
        snprintf(sql, sizeof sql, "PRAGMA application_id = %d; PRAGMA user_version = %d;",
                 BG_STORE_APP_ID, v + 1);
        if (sqlite3_exec(c->db, bgi_migrations[v].text, NULL, NULL, NULL) != SQLITE_OK ||
            sqlite3_exec(c->db, sql, NULL, NULL, NULL) != SQLITE_OK) {
            char what[128];
            snprintf(what, sizeof what, "schema migration '%s' failed", bgi_migrations[v].name);
            rc = bgi_db_fail(c, err, what);
            sq_rollback(c);
            return rc;
        }
        /* the migration that adds the record chain chains the rows already there */
        if (strstr(bgi_migrations[v].name, "-record-chain.sql") &&
            (rc = bgi_sqlite_chain_backfill(c, err)) != BG_OK) {
            bg_error_prefix(err, "schema migration '%s'", bgi_migrations[v].name);
            sq_rollback(c);
            return rc;
        }
        if (sqlite3_exec(c->db, "COMMIT", NULL, NULL, NULL) != SQLITE_OK) {
            rc = bgi_db_fail(c, err, "cannot commit the schema upgrade");
            sq_rollback(c);
            return rc;
        }
    }
}

static void sq_close(bgi_conn *c);

/* A failure reading the header of an existing file: the lock, the disk or the memory when
** that is the cause (bgi_db_fail's status kept), else the file is no bandgap database. */
static int not_ours(const char *path, int rc, bg_error *err)
{
    if (rc == BG_EBUSY || rc == BG_EIO || rc == BG_ECANTCREAT || rc == BG_ENOMEM)
        return rc;
    return bg_error_set(err, BG_EINVAL, "'%s' is not a bandgap database (%s)", path,
                        err ? err->msg : "unreadable");
}

static int sq_open(const char *path, int flags, bgi_conn **out, char *backup, size_t size,
                   bg_error *err)
{
    bgi_conn *c = NULL;
    struct stat sb;
    int rc = BG_OK, app = 0, ver = 0, ntables = 0, exists = stat(path, &sb) == 0;

    *out = NULL;
    if (!exists && !(flags & BG_STORE_CREATE))
        return bg_error_set(err, BG_ENOENT, "database '%s' does not exist (create it with "
                            "'bandgap --db %s init')", path, path);
    if (exists && access(path, R_OK) != 0)
        return bg_error_set(err, BG_ENOENT, "cannot open database '%s': %s", path,
                            strerror(errno));
    c = calloc(1, sizeof *c);
    if (!c || !(c->path = strdup(path))) {
        free(c);
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    }
    c->busy_ms = flags >> BGI_OPEN_BUSY_SHIFT;
    if ((rc = sqlite3_open_v2(path, &c->db,
                              /* NOMUTEX: a handle is never shared between threads */
                              SQLITE_OPEN_READWRITE | SQLITE_OPEN_EXRESCODE |
                                  SQLITE_OPEN_NOMUTEX |
                                  ((flags & BG_STORE_CREATE) ? SQLITE_OPEN_CREATE : 0),
                              NULL)) != SQLITE_OK) {
        char what[128];
        snprintf(what, sizeof what, "cannot %s database '%s'", exists ? "open" : "create",
                 path);
        rc = bgi_status_fail(c->db, path, c->busy_ms, c->db ? rc : SQLITE_NOMEM, err, what);
        goto fail;
    }
    sqlite3_busy_timeout(c->db, c->busy_ms);
    sqlite3_db_config(c->db, SQLITE_DBCONFIG_DEFENSIVE, 1, NULL);
    sqlite3_db_config(c->db, SQLITE_DBCONFIG_DQS_DML, 0, NULL);
    sqlite3_db_config(c->db, SQLITE_DBCONFIG_DQS_DDL, 0, NULL);
    sqlite3_db_config(c->db, SQLITE_DBCONFIG_TRUSTED_SCHEMA, 0, NULL);
    if (bgi_sqlite_time_function(c->db) != SQLITE_OK ||
        sqlite3_exec(c->db, "PRAGMA foreign_keys = ON; PRAGMA synchronous = FULL;", NULL,
                     NULL, NULL) != SQLITE_OK) {
        rc = bgi_db_fail(c, err, "cannot open the database");
        rc = exists ? not_ours(path, rc, err) : rc;
        goto fail;
    }
    if ((rc = pragma_int(c, "PRAGMA application_id", &app, err)) != BG_OK ||
        (rc = pragma_int(c, "PRAGMA user_version", &ver, err)) != BG_OK ||
        (rc = pragma_int(c, "SELECT count(*) FROM sqlite_schema", &ntables, err)) != BG_OK) {
        rc = not_ours(path, rc, err);
        goto fail;
    }
    if (app != BG_STORE_APP_ID && (app != 0 || ntables > 0)) {
        rc = bg_error_set(err, BG_EINVAL, "'%s' is not a bandgap database (application id "
                          "%d, %d schema objects)", path, app, ntables);
        goto fail;
    }
    if (ver > sq_schema_known()) {
        rc = bg_error_set(err, BG_EINVAL, "database '%s' has schema version %d, newer than "
                          "this program knows (%d): use a newer bandgap", path, ver,
                          sq_schema_known());
        goto fail;
    }
    if (ntables == 0 && (flags & BG_STORE_CREATE) &&
        sqlite3_exec(c->db, "PRAGMA page_size = 8192", NULL, NULL, NULL) != SQLITE_OK) {
        rc = bgi_db_fail(c, err, "cannot set the page size");
        goto fail;
    }
    {
        /* The journal mode is a property of the file: keep it a rollback journal. */
        sqlite3_stmt *q = NULL;
        if ((rc = bgi_prepare(c, "PRAGMA journal_mode = DELETE", &q, err)) != BG_OK)
            goto fail;
        int s = sqlite3_step(q), ok = s == SQLITE_ROW &&
            sqlite3_stricmp((const char *)sqlite3_column_text(q, 0), "delete") == 0;
        if (s != SQLITE_ROW)
            rc = bgi_db_fail(c, err, "cannot set the rollback journal");
        else if (!ok)
            rc = bg_error_set(err, BG_EDB, "'%s': cannot use a rollback journal", path);
        sqlite3_finalize(q);
        if (rc != BG_OK)
            goto fail;
    }
    if (app == 0 && !(flags & BG_STORE_CREATE)) {
        rc = bg_error_set(err, BG_EINVAL, "'%s' is an empty file, not a bandgap database "
                          "(create one with 'bandgap --db %s init')", path, path);
        goto fail;
    }
    if (ver > 0 && ver < sq_schema_known()) {
        snprintf(backup, size, "%s.v%d.bak", path, ver);
        if ((rc = backup_to(c, backup, err)) != BG_OK)
            goto fail;
    }
    if (ver < sq_schema_known() && (rc = migrate(c, err)) != BG_OK)
        goto fail;
    *out = c;
    return BG_OK;
fail:
    sq_close(c);
    return rc;
}

static void sq_close(bgi_conn *c)
{
    if (!c)
        return;
    for (size_t i = 0; i < sizeof c->cache / sizeof c->cache[0]; i++)
        sqlite3_finalize(c->cache[i]);
    sqlite3_close_v2(c->db);
    free(c->path);
    free(c);
}

/* Row id of a lot or probe by its code or serial, for writes (no counts); 0 when absent.
** 'which': the statement's place in the cache, or -1 for none. */
static long long id_of(bgi_conn *c, int which, const char *sql, const char *key, bg_error *err,
                       int *rc)
{
    sqlite3_stmt *q = NULL;
    long long id = 0;
    if ((*rc = which < 0 ? bgi_prepare(c, sql, &q, err) : bgi_stmt(c, which, sql, &q, err)) !=
        BG_OK)
        return 0;
    sqlite3_bind_text(q, 1, key, -1, SQLITE_TRANSIENT);
    int s = sqlite3_step(q);
    if (s == SQLITE_ROW)
        id = sqlite3_column_int64(q, 0);
    else if (s != SQLITE_DONE)
        *rc = bgi_db_fail(c, err, "cannot read the database");
    if (which < 0)
        sqlite3_finalize(q);
    else
        bgi_stmt_done(c, which, q);
    return id;
}

int bgi_sqlite_probe_id(bgi_conn *c, const char *serial, long long *id, bg_error *err)
{
    int rc = BG_OK;
    *id = id_of(c, STMT_PROBE_ID, "SELECT id FROM probe WHERE serial = ?", serial, err, &rc);
    if (rc == BG_OK && *id == 0)
        rc = bg_error_set(err, BG_EINVAL, "unknown probe '%s' (add it with 'bandgap probe add "
                          "SERIAL --lot CODE')", serial);
    return rc;
}

/* ---- lots ---- */

static int sq_lot_add(bgi_conn *c, const bg_lot *lot, const char *now, long long *id,
                      bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(c, "INSERT INTO lot(code, part, r25_ohm, beta_k, pair_t1_k, pair_t2_k, "
                     "tol_r25, tol_beta, note, created_at, sensor) VALUES (?,?,?,?,?,?,?,?,?,?,?)",
                     &q, err);
    if (rc == BG_OK) {
        sqlite3_bind_text(q, 1, lot->code, -1, SQLITE_TRANSIENT);
        sqlite3_bind_text(q, 2, lot->part, -1, SQLITE_TRANSIENT);
        /* schema 13: a lot of a kind other than NTC holds none of these (NaN: NULL) */
        const double v[6] = { lot->r25_ohm, lot->beta_k, lot->pair_t1_k, lot->pair_t2_k,
                              lot->tol_r25, lot->tol_beta };
        for (int k = 0; k < 6; k++)
            bgi_bind_double_or_null(q, 3 + k, v[k]);
        bgi_bind_text_or_null(q, 9, lot->note);
        sqlite3_bind_text(q, 10, now, -1, SQLITE_TRANSIENT);
        bgi_bind_text_or_null(q, 11, lot->sensor == BG_PART_NTC ? NULL
                                                               : bg_part_sensor_name(lot->sensor));
        int s = sqlite3_step(q);
        if (s == SQLITE_CONSTRAINT_UNIQUE)
            rc = bg_error_set(err, BG_EINVAL, "lot '%s' already exists", lot->code);
        else if ((s & 0xff) == SQLITE_CONSTRAINT)
            rc = bg_error_set(err, BG_EINVAL, "lot '%s': %s", lot->code, sqlite3_errmsg(c->db));
        else if (s != SQLITE_DONE)
            rc = bgi_db_fail(c, err, "cannot add the lot");
        else if (id)
            *id = sqlite3_last_insert_rowid(c->db);
    }
    sqlite3_finalize(q);
    return rc;
}

#define LOT_COLS "l.id, l.code, l.part, l.r25_ohm, l.beta_k, l.pair_t1_k, l.pair_t2_k, " \
                 "l.tol_r25, l.tol_beta, l.note, l.created_at, " \
                 "(SELECT count(*) FROM probe p WHERE " BGI_PROBE_NOW_IN("p", "l.id") "), " \
                 "l.sensor"

static void lot_row(sqlite3_stmt *q, bg_lot *l)
{
    l->id = sqlite3_column_int64(q, 0);
    bgi_copy_text(l->code, sizeof l->code, q, 1);
    bgi_copy_text(l->part, sizeof l->part, q, 2);
    l->r25_ohm = bgi_column_double_or_nan(q, 3);
    l->beta_k = bgi_column_double_or_nan(q, 4);
    l->pair_t1_k = bgi_column_double_or_nan(q, 5);
    l->pair_t2_k = bgi_column_double_or_nan(q, 6);
    l->tol_r25 = bgi_column_double_or_nan(q, 7);
    l->tol_beta = bgi_column_double_or_nan(q, 8);
    bgi_copy_text(l->note, sizeof l->note, q, 9);
    bgi_copy_text(l->created_at, sizeof l->created_at, q, 10);
    l->nprobes = sqlite3_column_int64(q, 11);
    l->sensor = BG_PART_NTC; /* NULL (schema 13): an NTC lot; the CHECK allows only the names */
    if (sqlite3_column_type(q, 12) != SQLITE_NULL &&
        bg_part_sensor_parse((const char *)sqlite3_column_text(q, 12), &l->sensor, NULL) != BG_OK)
        l->sensor = -1;
}

int bgi_sqlite_lot_get(bgi_conn *c, const char *code, bg_lot *out, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_stmt(c, STMT_LOT_GET, "SELECT " LOT_COLS " FROM lot l WHERE l.code = ?", &q,
                      err);
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
        rc = bgi_db_fail(c, err, "cannot read lots");
    bgi_stmt_done(c, STMT_LOT_GET, q);
    return rc;
}

static int sq_lot_each(bgi_conn *c, bg_lot_cb cb, void *ctx, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_lot l;
    int rc = bgi_prepare(c, "SELECT " LOT_COLS " FROM lot l ORDER BY l.code", &q, err), s;
    if (rc != BG_OK)
        return rc;
    while ((s = sqlite3_step(q)) == SQLITE_ROW) {
        lot_row(q, &l);
        if (cb(&l, ctx))
            break;
    }
    if (s != SQLITE_ROW && s != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot read lots");
    sqlite3_finalize(q);
    return rc;
}

/* ---- probes ---- */

static int sq_probe_add(bgi_conn *c, const char *serial, const char *lot_code,
                        const char *note, const char *now, long long *id, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_lot lot;
    int rc = BG_OK;

    lot.id = id_of(c, -1, "SELECT id FROM lot WHERE code = ?", lot_code, err, &rc);
    if (rc == BG_OK && lot.id == 0)
        rc = bg_error_set(err, BG_EINVAL, "unknown lot '%s' (add it with 'bandgap lot add')",
                          lot_code);
    if (rc != BG_OK)
        return rc;
    rc = bgi_prepare(c, "INSERT INTO probe(serial, lot_id, note, created_at) VALUES (?,?,?,?)",
                     &q, err);
    if (rc == BG_OK) {
        sqlite3_bind_text(q, 1, serial, -1, SQLITE_TRANSIENT);
        sqlite3_bind_int64(q, 2, lot.id);
        bgi_bind_text_or_null(q, 3, note);
        sqlite3_bind_text(q, 4, now, -1, SQLITE_TRANSIENT);
        int s = sqlite3_step(q);
        if (s == SQLITE_CONSTRAINT_UNIQUE)
            rc = bg_error_set(err, BG_EINVAL, "probe '%s' already exists", serial);
        else if (s != SQLITE_DONE)
            rc = bgi_db_fail(c, err, "cannot add the probe");
        else if (id)
            *id = sqlite3_last_insert_rowid(c->db);
    }
    sqlite3_finalize(q);
    return rc;
}

#define PROBE_COLS BGI_PROBE_COLS

void bgi_sqlite_probe_row(sqlite3_stmt *q, bg_probe *p)
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

int bgi_sqlite_probe_get(bgi_conn *c, const char *serial, bg_probe *out, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_stmt(c, STMT_PROBE_GET, "SELECT " PROBE_COLS " FROM probe p JOIN lot l ON "
                      "l.id = " BGI_LOT_NOW("p") " WHERE p.serial = ?", &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_text(q, 1, serial, -1, SQLITE_TRANSIENT);
    int s = sqlite3_step(q);
    if (s == SQLITE_ROW)
        bgi_sqlite_probe_row(q, out);
    else if (s == SQLITE_DONE)
        rc = bg_error_set(err, BG_EINVAL, "unknown probe '%s' (add it with 'bandgap probe add "
                          "SERIAL --lot CODE')", serial);
    else
        rc = bgi_db_fail(c, err, "cannot read probes");
    bgi_stmt_done(c, STMT_PROBE_GET, q);
    return rc;
}

static int sq_probe_each(bgi_conn *c, const char *lot_code, bg_probe_cb cb, void *ctx,
                         bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_probe p;
    int rc, s;
    if (lot_code) {
        bg_lot lot;
        if ((rc = bgi_sqlite_lot_get(c, lot_code, &lot, err)) != BG_OK)
            return rc;
    }
    rc = bgi_prepare(c, "SELECT " PROBE_COLS " FROM probe p JOIN lot l ON l.id = "
                     BGI_LOT_NOW("p") " WHERE ?1 IS NULL OR l.code = ?1 ORDER BY p.serial", &q, err);
    if (rc != BG_OK)
        return rc;
    bgi_bind_text_or_null(q, 1, lot_code);
    while ((s = sqlite3_step(q)) == SQLITE_ROW) {
        bgi_sqlite_probe_row(q, &p);
        if (cb(&p, ctx))
            break;
    }
    if (s != SQLITE_ROW && s != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot read probes");
    sqlite3_finalize(q);
    return rc;
}

/* ---- reference thermometers ---- */

/* The ITS-90 columns of a reference or reference version (db/009), bound from 'first' on:
** R(273.16 K), sub-range, a, b, c, d, W(Al); NULL unless the correction is 'its90'. */
void bgi_bind_its90(sqlite3_stmt *q, int first, const bg_ref *ref)
{
    for (int i = 0; i < BGI_ITS90_NCOLS; i++)
        sqlite3_bind_null(q, first + i);
    if (ref->kind != BG_REF_ITS90)
        return;
    const bg_its90_dev *d = &ref->its90;
    sqlite3_bind_double(q, first, ref->its90_rtpw_ohm);
    sqlite3_bind_text(q, first + 1, bg_its90_range_name(d->range, NULL, NULL), -1, SQLITE_STATIC);
    sqlite3_bind_double(q, first + 2, d->a);
    sqlite3_bind_double(q, first + 3, d->b);
    sqlite3_bind_double(q, first + 4, d->c);
    sqlite3_bind_double(q, first + 5, d->d);
    if (d->range == BG_ITS90_TPW_AG)
        sqlite3_bind_double(q, first + 6, d->w_al);
}

/* The correction named 'kind' in column 'kcol' and, for ITS-90, the columns from 'first'. */
void bgi_ref_correction_row(sqlite3_stmt *q, int kcol, int first, bg_ref *r)
{
    char kind[16], range[16];
    bgi_copy_text(kind, sizeof kind, q, kcol);
    r->kind = strcmp(kind, "linear") == 0 ? BG_REF_LINEAR
            : strcmp(kind, "cvd") == 0    ? BG_REF_CVD
            : strcmp(kind, "its90") == 0  ? BG_REF_ITS90
                                          : BG_REF_NONE;
    if (r->kind != BG_REF_ITS90)
        return;
    r->its90_rtpw_ohm = sqlite3_column_double(q, first);
    bgi_copy_text(range, sizeof range, q, first + 1);
    if (bg_its90_range_parse(range, &r->its90.range, NULL) != BG_OK)
        r->its90.range = BG_ITS90_NRANGE; /* refused by bg_ref_check where it is used */
    r->its90.a = sqlite3_column_double(q, first + 2);
    r->its90.b = sqlite3_column_double(q, first + 3);
    r->its90.c = sqlite3_column_double(q, first + 4);
    r->its90.d = sqlite3_column_double(q, first + 5);
    r->its90.w_al = sqlite3_column_double(q, first + 6);
}

static int sq_ref_add(bgi_conn *c, const bg_ref *ref, const char *now, long long *id,
                      bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc;

    rc = bgi_prepare(c, "INSERT INTO reference(ident, certificate, due_date, correction, "
                     "lin_c0_k, lin_c1, lin_t0_k, cvd_r0_ohm, cvd_a, cvd_b, cvd_c, note, "
                     "created_at, " BGI_ITS90_COLS ") VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,"
                     "?,?,?,?,?,?,?)", &q, err);
    if (rc == BG_OK) {
        sqlite3_bind_text(q, 1, ref->ident, -1, SQLITE_TRANSIENT);
        sqlite3_bind_text(q, 2, ref->certificate, -1, SQLITE_TRANSIENT);
        bgi_bind_text_or_null(q, 3, ref->due_date);
        sqlite3_bind_text(q, 4, bg_ref_kind_name(ref->kind), -1, SQLITE_STATIC);
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
        sqlite3_bind_text(q, 13, now, -1, SQLITE_TRANSIENT);
        bgi_bind_its90(q, 14, ref);
        int s = sqlite3_step(q);
        if (s == SQLITE_CONSTRAINT_UNIQUE)
            rc = bg_error_set(err, BG_EINVAL, "reference '%s' already exists", ref->ident);
        else if (s != SQLITE_DONE)
            rc = bgi_db_fail(c, err, "cannot add the reference");
        else if (id)
            *id = sqlite3_last_insert_rowid(c->db);
    }
    sqlite3_finalize(q);
    return rc;
}

#define REF_COLS "id, ident, certificate, due_date, correction, lin_c0_k, lin_c1, lin_t0_k, " \
                 "cvd_r0_ohm, cvd_a, cvd_b, cvd_c, note, created_at, " BGI_ITS90_COLS

static void ref_row(sqlite3_stmt *q, bg_ref *r)
{
    memset(r, 0, sizeof *r);
    r->id = sqlite3_column_int64(q, 0);
    bgi_copy_text(r->ident, sizeof r->ident, q, 1);
    bgi_copy_text(r->certificate, sizeof r->certificate, q, 2);
    bgi_copy_text(r->due_date, sizeof r->due_date, q, 3);
    bgi_ref_correction_row(q, 4, 14, r);
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

static int sq_ref_get(bgi_conn *c, const char *ident, bg_ref *out, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_stmt(c, STMT_REF_GET, "SELECT " REF_COLS " FROM reference WHERE ident = ?", &q,
                      err);
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
        rc = bgi_db_fail(c, err, "cannot read references");
    bgi_stmt_done(c, STMT_REF_GET, q);
    return rc;
}

static int sq_ref_each(bgi_conn *c, bg_ref_cb cb, void *ctx, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_ref r;
    int rc = bgi_prepare(c, "SELECT " REF_COLS " FROM reference ORDER BY ident", &q, err), s;
    if (rc != BG_OK)
        return rc;
    while ((s = sqlite3_step(q)) == SQLITE_ROW) {
        ref_row(q, &r);
        if (cb(&r, ctx))
            break;
    }
    if (s != SQLITE_ROW && s != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot read references");
    sqlite3_finalize(q);
    return rc;
}

static int sq_part_lots(bgi_conn *c, const char *part, bg_lot_cb cb, void *ctx,
                        bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_lot l;
    size_t n = 0;
    int rc = bgi_prepare(c, "SELECT " LOT_COLS " FROM lot l WHERE l.part = ? "
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
        rc = bgi_db_fail(c, err, "cannot read lots");
    else if (n == 0)
        rc = bg_error_set(err, BG_EINVAL, "no lots of part '%s'", part);
    sqlite3_finalize(q);
    return rc;
}

/* ---- names, for "did you mean" ---- */

static int sq_names(bgi_conn *c, enum bgi_name_kind kind, bgi_name_cb cb, void *ctx,
                    bg_error *err)
{
    static const char *const sql[] = {
        "SELECT serial FROM probe ORDER BY serial",
        "SELECT code FROM lot ORDER BY code",
        "SELECT ident FROM reference ORDER BY ident",
        "SELECT DISTINCT part FROM lot ORDER BY part",
    };
    sqlite3_stmt *q = NULL;
    int rc, s;
    if ((size_t)kind >= sizeof sql / sizeof sql[0])
        return bg_error_set(err, BG_EINVAL, "no names of kind %d", (int)kind);
    if ((rc = bgi_prepare(c, sql[kind], &q, err)) != BG_OK)
        return rc;
    while ((s = sqlite3_step(q)) == SQLITE_ROW) {
        const unsigned char *name = sqlite3_column_text(q, 0);
        if (name && cb((const char *)name, ctx))
            break;
    }
    if (s != SQLITE_ROW && s != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot read names");
    sqlite3_finalize(q);
    return rc;
}

const char *bg_sqlite_version(void)
{
    return sqlite3_libversion();
}

const struct bgi_store_backend bgi_store_sqlite = {
    BGI_STORE_BACKEND_VERSION,
    "sqlite",
    sq_open, sq_close, sq_schema_version, sq_schema_known,
    sq_in_tx, sq_begin, sq_commit, sq_rollback,
    sq_lot_add, bgi_sqlite_lot_get, sq_lot_each, sq_part_lots,
    sq_probe_add, bgi_sqlite_probe_get, bgi_sqlite_probe_id, sq_probe_each,
    sq_ref_add, sq_ref_get, sq_ref_each,
    bgi_sqlite_import, bgi_sqlite_run_get, bgi_sqlite_run_latest, bgi_sqlite_run_each,
    bgi_sqlite_reading_each, bgi_sqlite_run_points, bgi_sqlite_lot_points_each,
    bgi_sqlite_exclude,
    bgi_sqlite_fit_next_id, bgi_sqlite_fit_insert, bgi_sqlite_fit_get, bgi_sqlite_fit_each,
    bgi_sqlite_fit_readings, bgi_sqlite_probe_history, bgi_sqlite_lot_latest_fits,
    bgi_sqlite_lot_history,
    bgi_sqlite_artifact_next, bgi_sqlite_artifact_insert, bgi_sqlite_artifact_get,
    bgi_sqlite_artifact_each,
    bgi_sqlite_run_by_digest, bgi_sqlite_fit_newest_of_run, bgi_sqlite_fit_same,
    bgi_sqlite_part_spec_add, bgi_sqlite_part_spec_each,
    sq_names,
    bgi_sqlite_chain_append, bgi_sqlite_chain_head, bgi_sqlite_verify, bgi_sqlite_chain_check,
    bgi_sqlite_lot_histories, bgi_sqlite_export_each,
    bgi_sqlite_ref_version_add, bgi_sqlite_ref_version_each,
    bgi_sqlite_lot_version_add, bgi_sqlite_lot_version_each,
    bgi_sqlite_probe_version_add, bgi_sqlite_probe_version_each,
    bgi_sqlite_seq_add, bgi_sqlite_seq_unfinished, bgi_sqlite_seq_settle,
    bgi_sqlite_seq_reading, bgi_sqlite_seq_readings, bgi_sqlite_seq_settles,
    bgi_sqlite_seq_end,
};
