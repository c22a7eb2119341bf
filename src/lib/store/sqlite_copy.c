/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The SQLite backend's part of the whole-database copy (copy.c): rows read and written as they
** are stored, column by column.  The table names come from copy.c's fixed list and the column
** names from the database's own schema; every value is bound as a parameter. */
#include <stdio.h>
#include <string.h>

#include "sqlite_int.h"

/* A read-only connection (PRAGMA query_only) inside one read transaction: one snapshot. */
static int sq_snapshot_begin(bgi_conn *c, int *own, bg_error *err)
{
    *own = 0;
    if (sqlite3_exec(c->db, "PRAGMA query_only = 1", NULL, NULL, NULL) != SQLITE_OK)
        return bgi_db_fail(c, err, "cannot make the source read-only");
    if (!sqlite3_get_autocommit(c->db))
        return BG_OK;
    if (sqlite3_exec(c->db, "BEGIN DEFERRED", NULL, NULL, NULL) != SQLITE_OK)
        return bgi_db_fail(c, err, "cannot start a read transaction");
    *own = 1;
    return BG_OK;
}

static void sq_snapshot_end(bgi_conn *c, int own)
{
    if (own)
        sqlite3_exec(c->db, "ROLLBACK", NULL, NULL, NULL);
}

static int sq_rows_each(bgi_conn *c, const char *table, const char *key, bgi_row_cb cb,
                        void *ctx, bg_error *err)
{
    char sql[200], what[120];
    sqlite3_stmt *q = NULL;
    struct bgi_row row;
    char names[BGI_ROW_MAXCOL][64]; /* SQLite's own may move when the statement re-prepares */
    int rc, src;
    snprintf(what, sizeof what, "cannot read table '%s'", table);
    snprintf(sql, sizeof sql, "SELECT * FROM \"%s\" ORDER BY \"%s\"", table, key);
    if ((rc = bgi_prepare(c, sql, &q, err)) != BG_OK)
        return bg_error_prefix(err, "%s", what), rc;
    int ncol = sqlite3_column_count(q);
    if (ncol > BGI_ROW_MAXCOL) {
        sqlite3_finalize(q);
        return bg_error_set(err, BG_EINTERNAL, "%s: %d columns", what, ncol);
    }
    memset(&row, 0, sizeof row);
    row.ncol = (size_t)ncol;
    for (int k = 0; k < ncol; k++) {
        const char *name = sqlite3_column_name(q, k);
        snprintf(names[k], sizeof names[k], "%s", name ? name : "");
        row.name[k] = names[k];
    }
    while ((src = sqlite3_step(q)) == SQLITE_ROW) {
        for (int k = 0; k < ncol; k++) {
            struct bgi_cell *v = &row.cell[k];
            memset(v, 0, sizeof *v);
            switch (sqlite3_column_type(q, k)) {
            case SQLITE_INTEGER:
                v->type = BGI_CELL_INT, v->i = sqlite3_column_int64(q, k);
                break;
            case SQLITE_FLOAT:
                v->type = BGI_CELL_REAL, v->d = sqlite3_column_double(q, k);
                break;
            case SQLITE_TEXT:
                v->type = BGI_CELL_TEXT, v->p = (const char *)sqlite3_column_text(q, k);
                v->n = (size_t)sqlite3_column_bytes(q, k);
                break;
            case SQLITE_BLOB:
                v->type = BGI_CELL_BLOB, v->p = sqlite3_column_blob(q, k);
                v->n = (size_t)sqlite3_column_bytes(q, k);
                break;
            default:
                v->type = BGI_CELL_NULL;
            }
        }
        if ((rc = cb(&row, ctx, err)) != BG_OK)
            break;
    }
    if (rc == BG_OK && src != SQLITE_DONE)
        rc = bgi_db_fail(c, err, what);
    sqlite3_finalize(q);
    return rc;
}

static int sq_rows_count(bgi_conn *c, const char *table, long long *n, bg_error *err)
{
    char sql[120];
    sqlite3_stmt *q = NULL;
    int rc;
    snprintf(sql, sizeof sql, "SELECT count(*) FROM \"%s\"", table);
    if ((rc = bgi_prepare(c, sql, &q, err)) != BG_OK)
        return rc;
    if (sqlite3_step(q) == SQLITE_ROW)
        *n = sqlite3_column_int64(q, 0);
    else
        rc = bgi_db_fail(c, err, "cannot count rows");
    sqlite3_finalize(q);
    return rc;
}

static void bind_cell(sqlite3_stmt *q, int i, const struct bgi_cell *v)
{
    switch (v->type) {
    case BGI_CELL_INT: sqlite3_bind_int64(q, i, v->i); break;
    case BGI_CELL_REAL: sqlite3_bind_double(q, i, v->d); break;
    case BGI_CELL_TEXT: sqlite3_bind_text(q, i, v->p, (int)v->n, SQLITE_STATIC); break;
    case BGI_CELL_BLOB: sqlite3_bind_blob(q, i, v->p, (int)v->n, SQLITE_STATIC); break;
    default: sqlite3_bind_null(q, i);
    }
}

static int sq_rows_insert(bgi_conn *c, const char *table, const struct bgi_row *rows, size_t n,
                          bg_error *err)
{
    char sql[4096], what[120];
    size_t len;
    sqlite3_stmt *q = NULL;
    int rc = BG_OK;
    if (n == 0)
        return BG_OK;
    snprintf(what, sizeof what, "cannot copy into table '%s'", table);
    len = (size_t)snprintf(sql, sizeof sql, "INSERT INTO \"%s\"(", table);
    for (size_t k = 0; k < rows[0].ncol && len < sizeof sql; k++)
        len += (size_t)snprintf(sql + len, sizeof sql - len, "%s\"%s\"", k ? ", " : "",
                                rows[0].name[k]);
    for (size_t k = 0; k < rows[0].ncol && len < sizeof sql; k++)
        len += (size_t)snprintf(sql + len, sizeof sql - len, "%s", k ? ", ?" : ") VALUES (?");
    if (len + 2 >= sizeof sql)
        return bg_error_set(err, BG_EINTERNAL, "%s: too many columns", what);
    memcpy(sql + len, ")", 2);
    if ((rc = bgi_prepare(c, sql, &q, err)) != BG_OK)
        return bg_error_prefix(err, "%s", what), rc;
    for (size_t r = 0; r < n && rc == BG_OK; r++) {
        sqlite3_reset(q);
        sqlite3_clear_bindings(q);
        for (size_t k = 0; k < rows[r].ncol; k++)
            bind_cell(q, (int)k + 1, &rows[r].cell[k]);
        if (sqlite3_step(q) != SQLITE_DONE)
            rc = bgi_db_fail(c, err, what);
    }
    sqlite3_finalize(q);
    return rc;
}

const struct bgi_copy_backend bgi_copy_sqlite = {
    &bgi_store_sqlite, sq_snapshot_begin, sq_snapshot_end, sq_rows_each, sq_rows_count,
    sq_rows_insert,
};
