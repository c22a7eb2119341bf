/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The PostgreSQL backend's record chain (db/pg/007-record-chain.sql): the same records and
** the same hashes as on SQLite (the encoding is chain.c's).  A column's type gives its
** encoding as SQLite's storage class does there: bigint 'i', double precision 'r', text 't',
** bytea 'b'; the columns are taken in the order of their names, NULLs skipped. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "bandgap/bandgap.h"
#include "pg_int.h"

/* Type oids (pg_type.h; stable across server versions). */
enum { OID_BOOL = 16, OID_BYTEA = 17, OID_INT8 = 20, OID_INT2 = 21, OID_INT4 = 23,
       OID_TEXT = 25, OID_FLOAT4 = 700, OID_FLOAT8 = 701, OID_VARCHAR = 1043 };

/* The key column of a chained table (the exclusion's is its reading). */
static const char *key_of(int k)
{
    return strcmp(bgi_chain_kinds[k], "exclusion") == 0 ? "reading_id" : "id";
}

/* Row 'i' of 'res' canonically encoded into the hash. */
static int put_row(struct bgi_sha256 *h, const PGresult *res, int i, bg_error *err)
{
    int n = PQnfields(res), order[64];
    if (n > 64)
        return bg_error_set(err, BG_EINTERNAL, "a chained table has %d columns", n);
    for (int a = 0; a < n; a++) {
        int j = a;
        while (j > 0 && strcmp(PQfname(res, order[j - 1]), PQfname(res, a)) > 0) {
            order[j] = order[j - 1];
            j--;
        }
        order[j] = a;
    }
    for (int a = 0; a < n; a++) {
        int col = order[a];
        const char *name = PQfname(res, col);
        Oid t = PQftype(res, col);
        if (PQgetisnull(res, i, col))
            continue;
        if (t == OID_INT8 || t == OID_INT4 || t == OID_INT2)
            bgi_chain_int(h, name, pgv_ll(res, i, col));
        else if (t == OID_FLOAT8 || t == OID_FLOAT4)
            bgi_chain_real(h, name, pgv_dbl(res, i, col));
        else if (t == OID_BYTEA) {
            size_t nb = 0;
            unsigned char *b = pgv_bytes(res, i, col, &nb);
            if (!b && PQgetlength(res, i, col) > 2)
                return bg_error_set(err, BG_ENOMEM, "out of memory");
            bgi_chain_bytes(h, name, 0, b, nb);
            free(b);
        } else if (t == OID_TEXT || t == OID_VARCHAR)
            bgi_chain_bytes(h, name, 1, PQgetvalue(res, i, col),
                            (size_t)PQgetlength(res, i, col));
        else
            return bg_error_set(err, BG_EINTERNAL, "column '%s' has a type the record chain "
                                "does not encode (oid %u)", name, (unsigned)t);
    }
    return BG_OK;
}

/* The hash of record (kind 'k', row 'id') after 'prev'.  BG_EINVAL when the row is missing. */
static int record_hash(bgi_conn *c, int k, long long id, const char prev[65], char hex[65],
                       bg_error *err)
{
    char sql[128], buf[32];
    const char *v[1] = { buf };
    struct pgp p = { 1, 1, v, NULL, NULL, NULL };
    struct bgi_sha256 h;
    unsigned char d[32];
    int rc;
    snprintf(buf, sizeof buf, "%lld", id);
    /* the table and its key are names of our own list, never a value */
    snprintf(sql, sizeof sql, "SELECT * FROM %s WHERE %s = $1", bgi_chain_kinds[k], key_of(k));
    PGresult *res = bgi_pg_exec(c, -1, sql, &p, &rc, err, "cannot read a record");
    if (!res)
        return rc;
    if (PQntuples(res) != 1) {
        PQclear(res);
        return bg_error_set(err, BG_EINVAL, "%s %lld is missing", bgi_chain_kinds[k], id);
    }
    bgi_chain_start(&h, prev, bgi_chain_kinds[k], id);
    rc = put_row(&h, res, 0, err);
    PQclear(res);
    if (rc == BG_OK && strcmp(bgi_chain_kinds[k], "run") == 0) {
        res = bgi_pg_exec(c, -1, "SELECT * FROM reading WHERE run_id = $1 ORDER BY id", &p,
                          &rc, err, "cannot read a run's readings");
        for (int i = 0; res && rc == BG_OK && i < PQntuples(res); i++) {
            bgi_chain_reading(&h);
            rc = put_row(&h, res, i, err);
        }
        PQclear(res);
    }
    if (rc != BG_OK)
        return rc;
    bgi_sha256_final(&h, d);
    bgi_sha256_hex(d, hex);
    return BG_OK;
}

int bgi_pg_chain_head(bgi_conn *c, long long *records, char hex[65], bg_error *err)
{
    int rc;
    PGresult *res = bgi_pg_exec(c, PGS_CHAIN_HEAD, "SELECT seq, hash FROM chain ORDER BY seq "
                                "DESC LIMIT 1", NULL, &rc, err, "cannot read the record chain");
    if (!res)
        return rc;
    if (PQntuples(res) == 1) {
        *records = pgv_ll(res, 0, 0);
        pgv_text(hex, 65, res, 0, 1);
    } else {
        *records = 0;
        memset(hex, '0', 64);
        hex[64] = '\0';
    }
    PQclear(res);
    return BG_OK;
}

int bgi_pg_chain_append(bgi_conn *c, const char *kind, long long id, bg_error *err)
{
    char prev[65], hex[65], sbuf[32], ibuf[32];
    const char *v[4] = { sbuf, NULL, ibuf, hex };
    struct pgp p = { 4, 4, v, NULL, NULL, NULL };
    long long seq;
    int k = bgi_chain_kind_index(kind), rc;
    if (k < 0)
        return bg_error_set(err, BG_EINTERNAL, "no record chain for '%s'", kind);
    if ((rc = bgi_pg_chain_head(c, &seq, prev, err)) != BG_OK ||
        (rc = record_hash(c, k, id, prev, hex, err)) != BG_OK)
        return rc;
    snprintf(sbuf, sizeof sbuf, "%lld", seq + 1);
    snprintf(ibuf, sizeof ibuf, "%lld", id);
    v[1] = bgi_chain_kinds[k];
    PGresult *res = bgi_pg_exec(c, PGS_CHAIN_INSERT, "INSERT INTO chain (seq, kind, row_id, "
                                "hash) VALUES ($1, $2, $3, $4)", &p, &rc, err,
                                "cannot extend the record chain");
    PQclear(res);
    return rc;
}

int bgi_pg_chain_check(bgi_conn *c, const char *kind, long long id, bg_error *err)
{
    char prev[65] = "", stored[65] = "", hex[65], ibuf[32];
    const char *v[2] = { kind, ibuf };
    struct pgp p = { 2, 2, v, NULL, NULL, NULL };
    long long seq = 0;
    int k = bgi_chain_kind_index(kind), rc;
    if (k < 0)
        return bg_error_set(err, BG_EINTERNAL, "no record chain for '%s'", kind);
    snprintf(ibuf, sizeof ibuf, "%lld", id);
    PGresult *res = bgi_pg_exec(c, -1, "SELECT c.seq, c.hash, p.hash FROM chain c LEFT JOIN "
                                "chain p ON p.seq = c.seq - 1 WHERE c.kind = $1 AND c.row_id = "
                                "$2", &p, &rc, err, "cannot read the record chain");
    if (!res)
        return rc;
    if (PQntuples(res) == 1) {
        seq = pgv_ll(res, 0, 0);
        pgv_text(stored, sizeof stored, res, 0, 1);
        if (pgv_null(res, 0, 2))
            memset(prev, '0', 64), prev[64] = '\0';
        else
            pgv_text(prev, sizeof prev, res, 0, 2);
    }
    PQclear(res);
    if (seq == 0)
        return bg_error_set(err, BG_EINVAL, "%s %lld is not in the record chain (added "
                            "outside bandgap; run 'bandgap verify')", kind, id);
    if ((rc = record_hash(c, k, id, prev, hex, err)) != BG_OK)
        return rc;
    if (strcmp(hex, stored) != 0)
        return bg_error_set(err, BG_EINVAL, "%s %lld does not match its record %lld in the "
                            "chain: changed after it was recorded (run 'bandgap verify')",
                            kind, id, seq);
    return BG_OK;
}

/* Walk the chain: contiguous numbers, each hash recomputed from the one before (judged by
** chain.c, as on SQLite). */
static int walk(bgi_conn *c, bg_store_check *out, bg_error *err)
{
    char prev[65];
    int rc;
    PGresult *res = bgi_pg_exec(c, -1, "SELECT seq, kind, row_id, hash FROM chain ORDER BY seq",
                                NULL, &rc, err, "cannot read the record chain");
    memset(prev, '0', 64);
    prev[64] = '\0';
    for (int i = 0; res && rc == BG_OK && !out->bad && i < PQntuples(res); i++) {
        char stored[65];
        struct bgi_chain_rec rec = { pgv_ll(res, i, 0), pgv_ll(res, i, 2),
                                     PQgetvalue(res, i, 1), stored };
        pgv_text(stored, sizeof stored, res, i, 3);
        rc = bgi_chain_judge(c, record_hash, &rec, prev, out, err);
    }
    PQclear(res);
    memcpy(out->head, prev, sizeof out->head);
    return rc;
}

/* Every row of every chained table is in the chain. */
static int unchained(bgi_conn *c, bg_store_check *out, bg_error *err)
{
    for (int k = 0; k < BGI_CHAIN_NKINDS && !out->bad; k++) {
        char sql[256];
        const char *v[1] = { bgi_chain_kinds[k] };
        struct pgp p = { 1, 1, v, NULL, NULL, NULL };
        int rc;
        snprintf(sql, sizeof sql, "SELECT %s FROM %s WHERE %s NOT IN (SELECT row_id FROM chain "
                 "WHERE kind = $1) ORDER BY %s LIMIT 1", key_of(k), bgi_chain_kinds[k],
                 key_of(k), key_of(k));
        PGresult *res = bgi_pg_exec(c, -1, sql, &p, &rc, err, "cannot read the record");
        if (!res)
            return rc;
        if (PQntuples(res) == 1) {
            out->bad_id = pgv_ll(res, 0, 0), out->bad = 1;
            snprintf(out->bad_kind, sizeof out->bad_kind, "%s", bgi_chain_kinds[k]);
            snprintf(out->problem, sizeof out->problem, "%s %lld is not in the record chain "
                     "(added outside bandgap)", bgi_chain_kinds[k], out->bad_id);
        }
        PQclear(res);
    }
    return BG_OK;
}

/* The server keeps its own integrity (no file to check) and enforces foreign keys on every
** write; verify reads the whole record in one snapshot. */
int bgi_pg_verify(bgi_conn *c, bg_store_check *out, bg_error *err)
{
    int own, rc;
    memset(out, 0, sizeof *out);
    if ((rc = bgi_pg_read_begin(c, &own, err)) != BG_OK)
        return rc;
    out->integrity_ok = 1;
    out->foreign_keys_ok = 1;
    rc = walk(c, out, err);
    if (rc == BG_OK && !out->bad)
        rc = unchained(c, out, err);
    bgi_pg_read_end(c, own);
    return rc;
}
