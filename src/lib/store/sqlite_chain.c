/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The SQLite backend's record chain (schema db/007-record-chain.sql): each appended record is
** chained to the one before it by SHA-256 (GNU Nettle, through sha256.c), and the chain, the
** database's own checks and the tables are verified together.  The encoding is chain.c's,
** shared with the PostgreSQL backend:
**
** The hash of record number 'seq' is SHA-256 over
**     "bandgap record chain 1\n" PREV "\n" KIND "\n" ID "\n" ROW [READINGS]
** where PREV is the previous record's hash in hex (64 '0' for the first), KIND the table and
** ID the row's id.  ROW encodes the row's columns in the order of their names, skipping NULL
** (so a column added later with no value leaves old hashes as they were), each as
**     NAME "\0" TYPE VALUE "\n"
** with TYPE 'i' and VALUE the integer in decimal, 'r' and the IEEE 754 double's 64 bits in 16
** hex digits (exact: no rounding), 't' or 'b' and LENGTH ":" and the bytes.  A run's record
** adds each of its readings, in id order, as "reading\n" ROW. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "bandgap/bandgap.h"
#include "sqlite_int.h"

/* The chained tables are chain.c's (bgi_chain_kinds); the connection keeps one statement and
** one column order per table, and one for a run's readings after them. */
_Static_assert(BGI_CHAIN_KINDS == BGI_CHAIN_NKINDS, "sqlite_int.h's BGI_CHAIN_KINDS is the "
               "number of chain.c's bgi_chain_kinds");

/* The columns of statement 'q' in the order of their names (insertion sort; a few dozen). */
static void name_order(sqlite3_stmt *q, int *order, int n)
{
    for (int i = 0; i < n; i++) {
        int j = i;
        while (j > 0 && strcmp(sqlite3_column_name(q, order[j - 1]), sqlite3_column_name(q, i)) > 0) {
            order[j] = order[j - 1];
            j--;
        }
        order[j] = i;
    }
}

/* A column hashed from the table rather than from the statement: an issued report's content,
** which can be a hundred megabytes.  The statement selects typeof(content) in its place
** (SQLite does not load a value for typeof), and the bytes are read in pieces through the
** incremental blob interface, so hashing a report never holds it whole. */
struct streamed {
    sqlite3 *db;
    const char *table, *column;
    long long rowid;
};

static int hash_streamed(struct bgi_sha256 *h, const struct streamed *sc, const char *type,
                         bg_error *err)
{
    if (strcmp(type, "blob") != 0 && strcmp(type, "text") != 0)
        return bg_error_set(err, BG_EINVAL, "%s %lld: its %s is of type %s, which the schema "
                            "does not allow", sc->table, sc->rowid, sc->column, type);
    sqlite3_blob *b = NULL;
    if (sqlite3_blob_open(sc->db, "main", sc->table, sc->column, sc->rowid, 0, &b) != SQLITE_OK) {
        sqlite3_blob_close(b);
        return bg_error_set(err, BG_EIO, "cannot read %s %lld's %s: %s", sc->table, sc->rowid,
                            sc->column, sqlite3_errmsg(sc->db));
    }
    int n = sqlite3_blob_bytes(b), rc = BG_OK;
    enum { PIECE = 1 << 18 };
    unsigned char *buf = malloc(PIECE);
    if (!buf)
        rc = bg_error_set(err, BG_ENOMEM, "out of memory reading %s %lld", sc->table, sc->rowid);
    else
        bgi_chain_bytes_head(h, sc->column, strcmp(type, "text") == 0, (size_t)n);
    for (int at = 0; rc == BG_OK && at < n; at += PIECE) {
        int len = n - at < PIECE ? n - at : PIECE;
        if (sqlite3_blob_read(b, buf, len, at) != SQLITE_OK)
            rc = bg_error_set(err, BG_EIO, "cannot read %s %lld's %s: %s", sc->table,
                              sc->rowid, sc->column, sqlite3_errmsg(sc->db));
        else
            bgi_sha256_update(h, buf, (size_t)len);
    }
    if (rc == BG_OK)
        bgi_sha256_update(h, "\n", 1);
    free(buf);
    sqlite3_blob_close(b);
    return rc;
}

/* The current row of 'q', canonically encoded, into the hash (chain.c); the column named
** sc->column (sc not NULL) from the table (hash_streamed). */
static int put_row(struct bgi_sha256 *h, sqlite3_stmt *q, const int *order, int n,
                   const struct streamed *sc, bg_error *err)
{
    for (int k = 0; k < n; k++) {
        int i = order[k];
        int type = sqlite3_column_type(q, i);
        if (type == SQLITE_NULL)
            continue;
        const char *name = sqlite3_column_name(q, i);
        if (sc && strcmp(name, sc->column) == 0) {
            const char *t = (const char *)sqlite3_column_text(q, i);
            int rc = strcmp(t ? t : "null", "null") == 0 ? BG_OK
                                                         : hash_streamed(h, sc, t, err);
            if (rc != BG_OK)
                return rc;
        } else if (type == SQLITE_INTEGER)
            bgi_chain_int(h, name, (long long)sqlite3_column_int64(q, i));
        else if (type == SQLITE_FLOAT)
            bgi_chain_real(h, name, sqlite3_column_double(q, i));
        else {
            const void *p = type == SQLITE_TEXT ? (const void *)sqlite3_column_text(q, i)
                                                : sqlite3_column_blob(q, i);
            int nb = sqlite3_column_bytes(q, i);
            bgi_chain_bytes(h, name, type == SQLITE_TEXT, p, (size_t)nb);
        }
    }
    return BG_OK;
}

/* The statement over one row of table 'k' (its SQL into 'sql'): every column, except that an
** artifact's content is typeof(content) under the same name (hash_streamed reads it). */
static int row_sql(bgi_conn *c, int k, char *sql, size_t size, bg_error *err)
{
    const char *table = bgi_chain_kinds[k];
    if (strcmp(table, "artifact") != 0 || c->chain_ncol[k] != 0) { /* prepared already */
        snprintf(sql, size, "SELECT * FROM %s WHERE rowid = ?1", table);
        return BG_OK;
    }
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(c, "SELECT group_concat(CASE WHEN name = 'content' THEN "
                         "'typeof(content) AS content' ELSE '\"' || name || '\"' END, ', ') "
                         "FROM pragma_table_info('artifact')", &q, err);
    if (rc != BG_OK)
        return rc;
    const char *cols = sqlite3_step(q) == SQLITE_ROW ? (const char *)sqlite3_column_text(q, 0)
                                                     : NULL;
    if (!cols || (size_t)snprintf(sql, size, "SELECT %s FROM artifact WHERE rowid = ?1", cols)
        >= size)
        rc = bg_error_set(err, BG_EINTERNAL, "cannot list the columns of the artifact table");
    sqlite3_finalize(q);
    return rc;
}

/* A statement over one table's rows, its columns in name order (kept on the connection). */
static int row_stmt(bgi_conn *c, int which, const char *sql, sqlite3_stmt **q, bg_error *err)
{
    int rc = bgi_cached(c, STMT_CHAIN_ROW0 + which, sql, q, err);
    if (rc == BG_OK && c->chain_ncol[which] == 0) {
        int n = sqlite3_column_count(*q);
        if (n > BGI_CHAIN_MAXCOL)
            return bg_error_set(err, BG_EINTERNAL, "table %s has %d columns, more than the "
                                "record chain encodes (%d)", which < BGI_CHAIN_KINDS ?
                                bgi_chain_kinds[which] : "reading", n, BGI_CHAIN_MAXCOL);
        name_order(*q, c->chain_order[which], n);
        c->chain_ncol[which] = n;
    }
    return rc;
}

/* The hash of record (kind 'k', row 'id') after 'prev', into 'hex'.  BG_EINVAL when the row
** is missing. */
static int record_hash(bgi_conn *c, int k, long long id, const char prev[65], char hex[65],
                       bg_error *err)
{
    char sql[1024];
    sqlite3_stmt *q;
    struct bgi_sha256 h;
    unsigned char d[32];
    int rc, s;
    if ((rc = row_sql(c, k, sql, sizeof sql, err)) != BG_OK ||
        (rc = row_stmt(c, k, sql, &q, err)) != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, id);
    if ((s = sqlite3_step(q)) != SQLITE_ROW) {
        sqlite3_reset(q);
        return s == SQLITE_DONE ? bg_error_set(err, BG_EINVAL, "%s %lld is missing",
                                               bgi_chain_kinds[k], id)
                                : bgi_db_fail(c, err, "cannot read a record");
    }
    bgi_chain_start(&h, prev, bgi_chain_kinds[k], id);
    struct streamed sc = { c->db, bgi_chain_kinds[k], "content", id };
    rc = put_row(&h, q, c->chain_order[k], c->chain_ncol[k],
                 strcmp(bgi_chain_kinds[k], "artifact") == 0 ? &sc : NULL, err);
    sqlite3_reset(q);
    if (rc != BG_OK)
        return rc;
    if (strcmp(bgi_chain_kinds[k], "run") == 0) {
        /* the run's readings through its id range (first_reading, nreadings: the run's own
        ** row, hashed above) rather than a scan of the whole table, which has no index on
        ** run_id; verify's stray_readings finds a reading of the run outside that range */
        if ((rc = row_stmt(c, BGI_CHAIN_KINDS, "SELECT g.* FROM run r JOIN reading g ON g.id "
                           "BETWEEN r.first_reading AND r.first_reading + r.nreadings - 1 AND "
                           "g.run_id = r.id WHERE r.id = ?1 ORDER BY g.id", &q, err)) != BG_OK)
            return rc;
        sqlite3_bind_int64(q, 1, id);
        while ((s = sqlite3_step(q)) == SQLITE_ROW) {
            bgi_chain_reading(&h);
            /* no streamed column: cannot fail */
            (void)put_row(&h, q, c->chain_order[BGI_CHAIN_KINDS],
                          c->chain_ncol[BGI_CHAIN_KINDS], NULL, NULL);
        }
        sqlite3_reset(q);
        if (s != SQLITE_DONE)
            return bgi_db_fail(c, err, "cannot read a run's readings");
    }
    bgi_sha256_final(&h, d);
    bgi_sha256_hex(d, hex);
    return BG_OK;
}

int bgi_sqlite_chain_head(bgi_conn *c, long long *seq, char hex[65], bg_error *err)
{
    sqlite3_stmt *q;
    int rc = bgi_cached(c, STMT_CHAIN_HEAD, "SELECT seq, hash FROM chain ORDER BY seq DESC "
                        "LIMIT 1", &q, err);
    if (rc != BG_OK)
        return rc;
    int s = sqlite3_step(q);
    if (s == SQLITE_ROW) {
        *seq = sqlite3_column_int64(q, 0);
        bgi_copy_text(hex, 65, q, 1);
    } else if (s == SQLITE_DONE) {
        *seq = 0;
        memset(hex, '0', 64);
        hex[64] = '\0';
    } else {
        rc = bgi_db_fail(c, err, "cannot read the record chain");
    }
    sqlite3_reset(q);
    return rc;
}

int bgi_sqlite_chain_append(bgi_conn *c, const char *kind, long long id, bg_error *err)
{
    char prev[65], hex[65];
    long long seq;
    sqlite3_stmt *q;
    int k = bgi_chain_kind_index(kind), rc;
    if (k < 0)
        return bg_error_set(err, BG_EINTERNAL, "no record chain for '%s'", kind);
    if ((rc = bgi_sqlite_chain_head(c, &seq, prev, err)) != BG_OK ||
        (rc = record_hash(c, k, id, prev, hex, err)) != BG_OK ||
        (rc = bgi_cached(c, STMT_CHAIN_INSERT, "INSERT INTO chain (seq, kind, row_id, hash) "
                         "VALUES (?1, ?2, ?3, ?4)", &q, err)) != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, seq + 1);
    sqlite3_bind_text(q, 2, bgi_chain_kinds[k], -1, SQLITE_STATIC);
    sqlite3_bind_int64(q, 3, id);
    sqlite3_bind_text(q, 4, hex, 64, SQLITE_STATIC);
    rc = sqlite3_step(q) == SQLITE_DONE ? BG_OK : bgi_db_fail(c, err, "cannot extend the "
                                                              "record chain");
    sqlite3_reset(q);
    return rc;
}

int bgi_sqlite_chain_check(bgi_conn *c, const char *kind, long long id, bg_error *err)
{
    char prev[65], stored[65], hex[65];
    sqlite3_stmt *q = NULL;
    long long seq = 0;
    int k = bgi_chain_kind_index(kind), rc;
    if (k < 0)
        return bg_error_set(err, BG_EINTERNAL, "no record chain for '%s'", kind);
    if ((rc = bgi_prepare(c, "SELECT c.seq, c.hash, p.hash FROM chain c LEFT JOIN chain p ON "
                          "p.seq = c.seq - 1 WHERE c.kind = ?1 AND c.row_id = ?2", &q, err))
        != BG_OK)
        return rc;
    sqlite3_bind_text(q, 1, bgi_chain_kinds[k], -1, SQLITE_STATIC);
    sqlite3_bind_int64(q, 2, id);
    if (sqlite3_step(q) == SQLITE_ROW) {
        seq = sqlite3_column_int64(q, 0);
        bgi_copy_text(stored, sizeof stored, q, 1);
        if (sqlite3_column_type(q, 2) == SQLITE_NULL)
            memset(prev, '0', 64), prev[64] = '\0';
        else
            bgi_copy_text(prev, sizeof prev, q, 2);
    }
    sqlite3_finalize(q);
    if (seq == 0)
        return bg_error_set(err, BG_EINVAL, "%s %lld is not in the record chain (added "
                            "outside bandgap; run 'bandgap verify')", bgi_chain_kinds[k], id);
    if ((rc = record_hash(c, k, id, prev, hex, err)) != BG_OK)
        return rc;
    if (strcmp(hex, stored) != 0)
        return bg_error_set(err, BG_EINVAL, "%s %lld does not match its record %lld in the "
                            "chain: changed after it was recorded (run 'bandgap verify')",
                            bgi_chain_kinds[k], id, seq);
    return BG_OK;
}

/* Chain the rows of a database made before the chain: table by table, in id order (run
** inside the upgrade's transaction).  The tables of later schema versions (the versions of
** schema 8) do not exist yet then, and are skipped. */
int bgi_sqlite_chain_backfill(bgi_conn *c, bg_error *err)
{
    int rc = BG_OK;
    for (int k = 0; k < BGI_CHAIN_KINDS && rc == BG_OK; k++) {
        char sql[96];
        sqlite3_stmt *q = NULL;
        int exists = 0;
        snprintf(sql, sizeof sql, "SELECT 1 FROM sqlite_schema WHERE type = 'table' AND "
                 "name = '%s'", bgi_chain_kinds[k]);
        if ((rc = bgi_prepare(c, sql, &q, err)) != BG_OK)
            return rc;
        exists = sqlite3_step(q) == SQLITE_ROW;
        sqlite3_finalize(q);
        q = NULL;
        if (!exists)
            continue;
        snprintf(sql, sizeof sql, "SELECT rowid FROM %s ORDER BY rowid", bgi_chain_kinds[k]);
        if ((rc = bgi_prepare(c, sql, &q, err)) != BG_OK)
            return rc;
        int s;
        while (rc == BG_OK && (s = sqlite3_step(q)) == SQLITE_ROW)
            rc = bgi_sqlite_chain_append(c, bgi_chain_kinds[k], sqlite3_column_int64(q, 0), err);
        if (rc == BG_OK && s != SQLITE_DONE)
            rc = bgi_db_fail(c, err, "cannot chain the existing records");
        sqlite3_finalize(q);
    }
    return rc;
}

/* The first message of a checking pragma that is not "ok" (integrity_check), or the first
** row at all (foreign_key_check), into 'out'; 0 when clean. */
static int pragma_problem(bgi_conn *c, const char *sql, int fk, char *out, size_t size,
                          bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(c, sql, &q, err), found = 0;
    if (rc != BG_OK)
        return -1;
    if (sqlite3_step(q) == SQLITE_ROW) {
        const char *a = (const char *)sqlite3_column_text(q, 0);
        if (fk) {
            snprintf(out, size, "foreign_key_check: %s row %lld refers to a missing %s row",
                     a ? a : "?", (long long)sqlite3_column_int64(q, 1),
                     (const char *)sqlite3_column_text(q, 2));
            found = 1;
        } else if (!a || strcmp(a, "ok") != 0) {
            snprintf(out, size, "integrity_check: %s", a ? a : "failed");
            found = 1;
        }
    }
    sqlite3_finalize(q);
    return found;
}

/* Walk the chain: contiguous numbers, each hash recomputed from the one before (judged by
** chain.c, as on the server). */
static int walk(bgi_conn *c, bg_store_check *out, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    char prev[65];
    int rc = bgi_prepare(c, "SELECT seq, kind, row_id, hash FROM chain ORDER BY seq", &q, err);
    if (rc != BG_OK)
        return rc;
    memset(prev, '0', 64);
    prev[64] = '\0';
    while (rc == BG_OK && !out->bad && sqlite3_step(q) == SQLITE_ROW) {
        char stored[65];
        struct bgi_chain_rec rec = { sqlite3_column_int64(q, 0), sqlite3_column_int64(q, 2),
                                     (const char *)sqlite3_column_text(q, 1), stored };
        bgi_copy_text(stored, sizeof stored, q, 3);
        rc = bgi_chain_judge(c, record_hash, &rec, prev, out, err);
    }
    sqlite3_finalize(q);
    memcpy(out->head, prev, sizeof out->head);
    return rc;
}

/* Every row of every chained table is in the chain. */
static int unchained(bgi_conn *c, bg_store_check *out, bg_error *err)
{
    for (int k = 0; k < BGI_CHAIN_KINDS && !out->bad; k++) {
        char sql[200];
        sqlite3_stmt *q = NULL;
        snprintf(sql, sizeof sql, "SELECT rowid FROM %s WHERE rowid NOT IN (SELECT row_id FROM "
                 "chain WHERE kind = '%s') ORDER BY rowid LIMIT 1", bgi_chain_kinds[k],
                 bgi_chain_kinds[k]);
        int rc = bgi_prepare(c, sql, &q, err);
        if (rc != BG_OK)
            return rc;
        if (sqlite3_step(q) == SQLITE_ROW) {
            out->bad_id = sqlite3_column_int64(q, 0), out->bad = 1;
            snprintf(out->bad_kind, sizeof out->bad_kind, "%s", bgi_chain_kinds[k]);
            snprintf(out->problem, sizeof out->problem, "%s %lld is not in the record chain "
                     "(added outside bandgap)", bgi_chain_kinds[k], out->bad_id);
        }
        sqlite3_finalize(q);
    }
    return BG_OK;
}

/* Every reading lies in its run's id range, so that the run's record (which reads its
** readings through that range) covers all of them: a reading added outside bandgap to a run
** is found here. */
static int stray_readings(bgi_conn *c, bg_store_check *out, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(c, "SELECT g.id, r.id FROM reading g JOIN run r ON r.id = g.run_id "
                         "WHERE g.id NOT BETWEEN r.first_reading AND r.first_reading + "
                         "r.nreadings - 1 ORDER BY g.id LIMIT 1", &q, err);
    if (rc != BG_OK)
        return rc;
    int s = sqlite3_step(q);
    if (s == SQLITE_ROW) {
        long long g = sqlite3_column_int64(q, 0), run = sqlite3_column_int64(q, 1);
        out->bad = 1, out->bad_seq = 0, out->bad_id = run;
        snprintf(out->bad_kind, sizeof out->bad_kind, "run");
        snprintf(out->problem, sizeof out->problem, "reading %lld of run %lld lies outside "
                 "the run's own readings (added outside bandgap)", g, run);
    } else if (s != SQLITE_DONE) {
        rc = bgi_db_fail(c, err, "cannot read the readings");
    }
    sqlite3_finalize(q);
    return rc;
}

int bgi_sqlite_verify(bgi_conn *c, bg_store_check *out, bg_error *err)
{
    int found;
    memset(out, 0, sizeof *out);
    if ((found = pragma_problem(c, "PRAGMA integrity_check", 0, out->problem,
                                sizeof out->problem, err)) != 0)
        return found < 0 ? BG_EDB : (out->bad = 1, BG_OK);
    out->integrity_ok = 1;
    if ((found = pragma_problem(c, "PRAGMA foreign_key_check", 1, out->problem,
                                sizeof out->problem, err)) != 0)
        return found < 0 ? BG_EDB : (out->bad = 1, BG_OK);
    out->foreign_keys_ok = 1;
    int rc = walk(c, out, err);
    if (rc == BG_OK && !out->bad)
        rc = unchained(c, out, err);
    if (rc == BG_OK && !out->bad)
        rc = stray_readings(c, out, err);
    return rc;
}
