/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* A whole database copied into an empty one, on the same backend or another (bg_store_copy):
** every table's rows as they are stored, parents first, in batches, inside one write
** transaction on the target; the source read in one snapshot on a read-only connection.
** Nothing is recomputed on the way, so ids, times, numbers, stored reports and the record
** chain arrive as they were; the target's counts, chain head and whole record are checked
** before the commit. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "store_int.h"

/* Every table of the schema (db/NNN-*.sql), parents before the rows that refer to them, with
** the column the rows are read in the order of.  tests/copy.sh checks that this is every
** table the schema has. */
static const struct {
    const char *name, *key;
} tables[BG_COPY_NTABLES] = {
    { "lot", "id" }, { "lot_version", "id" }, { "probe", "id" }, { "probe_version", "id" },
    { "reference", "id" }, { "reference_version", "id" }, { "part_spec", "id" },
    { "run", "id" }, { "reading", "id" }, { "exclusion", "reading_id" }, { "fit", "id" },
    { "artifact", "id" }, { "sequence", "id" }, { "sequence_settle", "id" },
    { "sequence_reading", "id" }, { "sequence_end", "sequence_id" }, { "chain", "seq" },
};

static const struct bgi_copy_backend *const copiers[] = { &bgi_copy_sqlite, &bgi_copy_pg };

static const struct bgi_copy_backend *copier_of(const bg_store *st)
{
    for (size_t i = 0; i < sizeof copiers / sizeof copiers[0]; i++)
        if (strcmp(copiers[i]->be->scheme, st->be->scheme) == 0 ||
            (copiers[i]->be == &bgi_store_pg && st->be == &bgi_store_pg_alias))
            return copiers[i];
    return NULL;
}

/* Rows gathered for one insert: up to BATCH rows, their text and blobs in one arena. */
#define BATCH 128
#define ARENA_FLUSH ((size_t)1 << 20)
struct batch {
    const struct bgi_copy_backend *to;
    bgi_conn *conn;
    const char *table;
    struct bgi_row rows[BATCH];
    char names[BGI_ROW_MAXCOL][64]; /* the columns of the rows gathered (the reader's own
                                    ** names last only as long as its read) */
    size_t n;
    char *arena;
    size_t used, cap;
    long long copied;
};

static int batch_flush(struct batch *b, bg_error *err)
{
    int rc = b->to->rows_insert(b->conn, b->table, b->rows, b->n, err);
    b->copied += (long long)b->n;
    b->n = 0;
    b->used = 0;
    return rc;
}

/* Room for 'need' more bytes in the arena; the cells already gathered point into it, so it
** grows only when empty (a batch is flushed first). */
static int arena_room(struct batch *b, size_t need, bg_error *err)
{
    if (b->used + need <= b->cap)
        return BG_OK;
    if (b->n) {
        int rc = batch_flush(b, err);
        if (rc != BG_OK)
            return rc;
    }
    if (need > b->cap) {
        size_t cap = need > 2 * ARENA_FLUSH ? need : 2 * ARENA_FLUSH;
        char *p = realloc(b->arena, cap);
        if (!p)
            return bg_error_set(err, BG_ENOMEM, "out of memory (a stored value of %zu bytes)",
                                need);
        b->arena = p, b->cap = cap;
    }
    return BG_OK;
}

static size_t row_bytes(const struct bgi_row *row)
{
    size_t need = 0;
    for (size_t k = 0; k < row->ncol; k++)
        if (row->cell[k].type == BGI_CELL_TEXT || row->cell[k].type == BGI_CELL_BLOB)
            need += row->cell[k].n + 1;
    return need;
}

static int gather(const struct bgi_row *row, void *ctx, bg_error *err)
{
    struct batch *b = ctx;
    int rc;
    size_t need = row_bytes(row);
    if ((rc = arena_room(b, need, err)) != BG_OK)
        return rc;
    if (b->n && b->rows[0].ncol != row->ncol)
        return bg_error_set(err, BG_EINTERNAL, "table '%s': rows of different widths", b->table);
    if (b->n == 0)
        for (size_t k = 0; k < row->ncol; k++)
            snprintf(b->names[k], sizeof b->names[k], "%s", row->name[k]);
    struct bgi_row *dst = &b->rows[b->n++];
    *dst = *row;
    for (size_t k = 0; k < row->ncol; k++) {
        dst->name[k] = b->names[k];
        struct bgi_cell *v = &dst->cell[k];
        if (v->type != BGI_CELL_TEXT && v->type != BGI_CELL_BLOB)
            continue;
        char *p = b->arena + b->used;
        if (v->n)
            memcpy(p, v->p, v->n);
        p[v->n] = '\0';
        v->p = p;
        b->used += v->n + 1;
    }
    if (b->n == BATCH || b->used >= ARENA_FLUSH)
        return batch_flush(b, err);
    return BG_OK;
}

/* The target holds no row in any table (copies never merge). */
static int check_empty(const struct bgi_copy_backend *to, bgi_conn *c, bg_error *err)
{
    for (size_t t = 0; t < BG_COPY_NTABLES; t++) {
        long long n = 0;
        int rc = to->rows_count(c, tables[t].name, &n, err);
        if (rc != BG_OK)
            return rc;
        if (n)
            return bg_error_set(err, BG_ECANTCREAT, "the target already holds data (%lld row%s "
                                "in table '%s'): a copy goes only into an empty database, it "
                                "never merges; name a new file or an empty server database",
                                n, n == 1 ? "" : "s", tables[t].name);
    }
    return BG_OK;
}

/* Each table copied, then counted on both ends. */
static int copy_tables(bg_store *from, const struct bgi_copy_backend *src, struct batch *b,
                       bg_store_copy_result *res, bg_error *err)
{
    int rc = BG_OK;
    for (size_t t = 0; t < BG_COPY_NTABLES && rc == BG_OK; t++) {
        long long n_src = 0, n_dst = 0;
        b->table = tables[t].name;
        b->copied = 0;
        rc = src->rows_each(from->conn, tables[t].name, tables[t].key, gather, b, err);
        if (rc == BG_OK && b->n)
            rc = batch_flush(b, err);
        if (rc == BG_OK)
            rc = src->rows_count(from->conn, tables[t].name, &n_src, err);
        if (rc == BG_OK)
            rc = b->to->rows_count(b->conn, tables[t].name, &n_dst, err);
        if (rc == BG_OK && (n_src != b->copied || n_dst != b->copied))
            rc = bg_error_set(err, BG_EINVAL, "table '%s': %lld rows in the source, %lld read, "
                              "%lld in the target: nothing was copied", tables[t].name, n_src,
                              b->copied, n_dst);
        res->table[t] = tables[t].name;
        res->rows[t] = b->copied;
        res->ntables = t + 1;
    }
    return rc;
}

/* The chain heads compared, and the target's whole record verified, before the commit. */
static int check_copy(bg_store *from, bg_store *to, bg_store_copy_result *res, bg_error *err)
{
    long long n_src = 0, n_dst = 0;
    char h_src[65], h_dst[65];
    bg_store_check chk;
    int rc;
    if ((rc = from->be->chain_head(from->conn, &n_src, h_src, err)) != BG_OK ||
        (rc = to->be->chain_head(to->conn, &n_dst, h_dst, err)) != BG_OK)
        return rc;
    if (n_src != n_dst || strcmp(h_src, h_dst) != 0)
        return bg_error_set(err, BG_EINVAL, "the target's record chain (%lld records, head "
                            "%s) is not the source's (%lld, %s): nothing was copied", n_dst,
                            h_dst, n_src, h_src);
    memset(&chk, 0, sizeof chk);
    if ((rc = to->be->verify(to->conn, &chk, err)) != BG_OK)
        return rc;
    if (chk.bad || chk.records != n_src || strcmp(chk.head, h_src) != 0)
        return bg_error_set(err, BG_EINVAL, "the copy does not verify (%s): nothing was copied; "
                            "run 'bandgap verify' on the source", chk.bad ? chk.problem :
                            "the chain verified to another head");
    res->records = n_src;
    memcpy(res->head, h_src, sizeof res->head);
    return BG_OK;
}

int bg_store_copy(bg_store *from, bg_store *to, bg_store_copy_result *res, bg_error *err)
{
    const struct bgi_copy_backend *src = copier_of(from), *dst = copier_of(to);
    struct batch *b;
    int rc, own = 0;
    memset(res, 0, sizeof *res);
    if (!src || !dst)
        return bg_error_set(err, BG_EINTERNAL, "no copy for the backend '%s'",
                            src ? to->be->scheme : from->be->scheme);
    if (from->be->schema_version(from->conn) != to->be->schema_version(to->conn))
        return bg_error_set(err, BG_EINVAL, "the source is at schema version %d, the target at "
                            "%d: open both with this bandgap first",
                            from->be->schema_version(from->conn),
                            to->be->schema_version(to->conn));
    if (!(b = calloc(1, sizeof *b)))
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    b->to = dst, b->conn = to->conn;
    if ((rc = src->snapshot_begin(from->conn, &own, err)) != BG_OK) {
        free(b);
        return rc;
    }
    if ((rc = to->be->begin(to->conn, err)) == BG_OK) {
        if ((rc = check_empty(dst, to->conn, err)) == BG_OK &&
            (rc = copy_tables(from, src, b, res, err)) == BG_OK &&
            (rc = check_copy(from, to, res, err)) == BG_OK)
            rc = to->be->commit(to->conn, err);
        if (rc != BG_OK)
            to->be->rollback(to->conn);
    }
    src->snapshot_end(from->conn, own);
    free(b->arena);
    free(b);
    return rc;
}
