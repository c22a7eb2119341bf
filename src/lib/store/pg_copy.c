/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The PostgreSQL backend's part of the whole-database copy (copy.c): rows read and written as
** they are stored, column by column.  The table names come from copy.c's fixed list, the
** column names from the server's own schema; every value is a parameter. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "pg_int.h"

/* the server's type numbers (pg_type.oid) of the columns the migrations use */
enum { OID_BYTEA = 17, OID_INT8 = 20, OID_INT2 = 21, OID_INT4 = 23, OID_FLOAT4 = 700,
       OID_FLOAT8 = 701 };
/* rows read per statement (keyset pages: one snapshot, bounded memory) */
#define PAGE 5000

static int pgc_snapshot_begin(bgi_conn *c, int *own, bg_error *err)
{
    return bgi_pg_read_begin(c, own, err);
}

static void pgc_snapshot_end(bgi_conn *c, int own)
{
    bgi_pg_read_end(c, own);
}

/* Row 'r' of 'res' as cells; bytea values decoded into 'blobs' (freed by the caller). */
static int page_row(const PGresult *res, int r, struct bgi_row *row, unsigned char **blobs,
                    bg_error *err)
{
    for (int k = 0; k < (int)row->ncol; k++) {
        struct bgi_cell *v = &row->cell[k];
        memset(v, 0, sizeof *v);
        blobs[k] = NULL;
        if (PQgetisnull(res, r, k))
            continue;
        const char *s = PQgetvalue(res, r, k);
        switch (PQftype(res, k)) {
        case OID_INT8: case OID_INT4: case OID_INT2:
            v->type = BGI_CELL_INT, v->i = strtoll(s, NULL, 10);
            break;
        case OID_FLOAT8: case OID_FLOAT4:
            v->type = BGI_CELL_REAL, v->d = strtod(s, NULL);
            break;
        case OID_BYTEA:
            v->type = BGI_CELL_BLOB;
            if (!(blobs[k] = pgv_bytes(res, r, k, &v->n)))
                return bg_error_set(err, BG_ENOMEM, "out of memory (a stored value)");
            v->p = (const char *)blobs[k];
            break;
        default:
            v->type = BGI_CELL_TEXT, v->p = s, v->n = (size_t)PQgetlength(res, r, k);
        }
    }
    return BG_OK;
}

static int page_each(const PGresult *res, bgi_row_cb cb, void *ctx, int kkey, long long *last,
                     bg_error *err)
{
    struct bgi_row row;
    unsigned char *blobs[BGI_ROW_MAXCOL];
    int rc = BG_OK, nf = PQnfields(res);
    if (nf > BGI_ROW_MAXCOL)
        return bg_error_set(err, BG_EINTERNAL, "a table of %d columns", nf);
    memset(&row, 0, sizeof row);
    row.ncol = (size_t)nf;
    for (int k = 0; k < nf; k++)
        row.name[k] = PQfname(res, k);
    for (int r = 0; r < PQntuples(res) && rc == BG_OK; r++) {
        rc = page_row(res, r, &row, blobs, err);
        if (rc == BG_OK) {
            *last = row.cell[kkey].i;
            rc = cb(&row, ctx, err);
        }
        for (int k = 0; k < nf; k++)
            free(blobs[k]);
    }
    return rc;
}

static int pgc_rows_each(bgi_conn *c, const char *table, const char *key, bgi_row_cb cb,
                         void *ctx, bg_error *err)
{
    char sql[200], what[120];
    long long last = -1;
    int rc = BG_OK, more = 1;
    struct pgp p;
    snprintf(what, sizeof what, "cannot read table '%s'", table);
    snprintf(sql, sizeof sql, "SELECT * FROM \"%s\" WHERE \"%s\" > $1 ORDER BY \"%s\" LIMIT %d",
             table, key, key, PAGE);
    if (pgp_init(&p, 1) != BG_OK)
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    while (more && rc == BG_OK) {
        p.n = 0;
        pgp_int(&p, last);
        PGresult *res = bgi_pg_exec(c, -1, sql, &p, &rc, err, what);
        if (!res)
            break;
        int kkey = -1;
        for (int k = 0; k < PQnfields(res); k++)
            if (strcmp(PQfname(res, k), key) == 0)
                kkey = k;
        if (kkey < 0)
            rc = bg_error_set(err, BG_EINTERNAL, "%s: no column '%s'", what, key);
        else
            rc = page_each(res, cb, ctx, kkey, &last, err);
        more = PQntuples(res) == PAGE;
        PQclear(res);
    }
    pgp_free(&p);
    return rc;
}

static int pgc_rows_count(bgi_conn *c, const char *table, long long *n, bg_error *err)
{
    char sql[120];
    int rc;
    snprintf(sql, sizeof sql, "SELECT count(*) FROM \"%s\"", table);
    PGresult *res = bgi_pg_exec(c, -1, sql, NULL, &rc, err, "cannot count rows");
    if (res)
        *n = pgv_ll(res, 0, 0);
    PQclear(res);
    return rc;
}

static void put_cell(struct pgp *p, const struct bgi_cell *v)
{
    switch (v->type) {
    case BGI_CELL_INT: pgp_int(p, v->i); break;
    case BGI_CELL_REAL: pgp_dbl(p, v->d); break;
    case BGI_CELL_TEXT: pgp_text(p, v->p); break;
    case BGI_CELL_BLOB: pgp_bin(p, v->n ? v->p : "", v->n); break;
    default: pgp_null(p);
    }
}

/* INSERT INTO table(cols) VALUES ($1, ...), (...), ... for 'n' rows of 'ncol' columns. */
static char *insert_sql(const char *table, const struct bgi_row *row, size_t n)
{
    size_t cap = 64 + strlen(table) + row->ncol * (40 + n * 10), len;
    char *sql = malloc(cap);
    if (!sql)
        return NULL;
    len = (size_t)snprintf(sql, cap, "INSERT INTO \"%s\"(", table);
    for (size_t k = 0; k < row->ncol; k++)
        len += (size_t)snprintf(sql + len, cap - len, "%s\"%s\"", k ? ", " : "", row->name[k]);
    len += (size_t)snprintf(sql + len, cap - len, ") VALUES ");
    for (size_t r = 0, i = 1; r < n; r++)
        for (size_t k = 0; k < row->ncol; k++, i++)
            len += (size_t)snprintf(sql + len, cap - len, "%s$%zu%s", k ? ", " : r ? ", (" : "(",
                                    i, k + 1 == row->ncol ? ")" : "");
    return sql;
}

static int pgc_rows_insert(bgi_conn *c, const char *table, const struct bgi_row *rows, size_t n,
                           bg_error *err)
{
    char what[120];
    struct pgp p;
    int rc = BG_OK;
    if (n == 0)
        return BG_OK;
    snprintf(what, sizeof what, "cannot copy into table '%s'", table);
    char *sql = insert_sql(table, &rows[0], n);
    if (!sql || pgp_init(&p, (int)(n * rows[0].ncol)) != BG_OK) {
        free(sql);
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    }
    for (size_t r = 0; r < n; r++)
        for (size_t k = 0; k < rows[r].ncol; k++)
            put_cell(&p, &rows[r].cell[k]);
    PGresult *res = bgi_pg_exec(c, -1, sql, &p, &rc, err, what);
    PQclear(res);
    pgp_free(&p);
    free(sql);
    return rc;
}

const struct bgi_copy_backend bgi_copy_pg = {
    &bgi_store_pg, pgc_snapshot_begin, pgc_snapshot_end, pgc_rows_each, pgc_rows_count,
    pgc_rows_insert,
};
