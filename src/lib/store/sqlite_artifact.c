/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The SQLite backend's issued artifacts (reports): stored once, never changed or deleted (the
** schema's triggers refuse both); a reissue is a new row naming the one it replaces. */
#include <stdlib.h>
#include <string.h>

#include "sqlite_int.h"

int bgi_sqlite_artifact_next(bgi_conn *c, const char *kind, const char *subject, long long *id,
                             long long *latest, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(c, "SELECT coalesce(max(id), 0) + 1, (SELECT id FROM artifact WHERE "
                         "kind = ?1 AND json_extract(spec, '$.subject') = ?2 ORDER BY id DESC "
                         "LIMIT 1) FROM artifact", &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_text(q, 1, kind, -1, SQLITE_TRANSIENT);
    sqlite3_bind_text(q, 2, subject, -1, SQLITE_TRANSIENT);
    if (sqlite3_step(q) != SQLITE_ROW)
        rc = bgi_db_fail(c, err, "cannot read the issued reports");
    else
        *id = sqlite3_column_int64(q, 0), *latest = sqlite3_column_int64(q, 1);
    sqlite3_finalize(q);
    return rc;
}

int bgi_sqlite_artifact_insert(bgi_conn *c, const struct bgi_artifact_row *row, bg_error *err)
{
    const bg_artifact_req *req = row->req;
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(c, "INSERT INTO artifact(id, kind, fit_id, spec, content, "
                         "replaces_id, program_version, created_at) VALUES (?,?,?,?,?,?,?,?)",
                         &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, row->id);
    sqlite3_bind_text(q, 2, req->kind, -1, SQLITE_TRANSIENT);
    if (req->fit_id)
        sqlite3_bind_int64(q, 3, req->fit_id);
    else
        sqlite3_bind_null(q, 3);
    sqlite3_bind_text(q, 4, req->spec, -1, SQLITE_TRANSIENT);
    /* the content outlives the statement's step: bound without a copy (a report can be
    ** a hundred megabytes) */
    sqlite3_bind_blob64(q, 5, row->content, (sqlite3_uint64)row->len, SQLITE_STATIC);
    if (req->replaces_id)
        sqlite3_bind_int64(q, 6, req->replaces_id);
    else
        sqlite3_bind_null(q, 6);
    sqlite3_bind_text(q, 7, req->version, -1, SQLITE_TRANSIENT);
    sqlite3_bind_text(q, 8, row->now, -1, SQLITE_TRANSIENT);
    if (sqlite3_step(q) != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot store the report");
    sqlite3_finalize(q);
    return rc;
}

int bgi_sqlite_artifact_get(bgi_conn *c, long long id, bg_artifact *a, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc;
    memset(a, 0, sizeof *a);
    rc = bgi_prepare(c, "SELECT kind, coalesce(fit_id, 0), spec, content, "
                     "coalesce(replaces_id, 0), program_version, created_at, "
                     "coalesce((SELECT max(b.id) FROM artifact b WHERE b.replaces_id = a.id), 0)"
                     " FROM artifact a WHERE id = ?", &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, id);
    int s = sqlite3_step(q);
    if (s == SQLITE_ROW) {
        const void *blob = sqlite3_column_blob(q, 3);
        a->id = id;
        bgi_copy_text(a->kind, sizeof a->kind, q, 0);
        a->fit_id = sqlite3_column_int64(q, 1);
        const char *spec = (const char *)sqlite3_column_text(q, 2); /* NULL if forged */
        a->spec = strdup(spec ? spec : "");
        a->len = (size_t)sqlite3_column_bytes(q, 3);
        a->content = malloc(a->len + 1);
        if (a->content) {
            if (a->len)
                memcpy(a->content, blob, a->len);
            a->content[a->len] = '\0';
        }
        a->replaces_id = sqlite3_column_int64(q, 4);
        bgi_copy_text(a->version, sizeof a->version, q, 5);
        bgi_copy_text(a->created_at, sizeof a->created_at, q, 6);
        a->replaced_by = sqlite3_column_int64(q, 7);
        if (!a->spec || !a->content)
            rc = bg_error_set(err, BG_ENOMEM, "out of memory for report %lld", id);
    } else if (s == SQLITE_DONE)
        rc = bg_error_set(err, BG_EINVAL, "no report %lld", id);
    else
        rc = bgi_db_fail(c, err, "cannot read the report");
    sqlite3_finalize(q);
    if (rc != BG_OK)
        free(a->spec), free(a->content), memset(a, 0, sizeof *a);
    return rc;
}

int bgi_sqlite_artifact_each(bgi_conn *c, bg_artifact_cb cb, void *ctx, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(c, "SELECT id, kind, coalesce(fit_id, 0), spec, "
                         "coalesce(replaces_id, 0), program_version, created_at, length(content),"
                         " coalesce((SELECT max(b.id) FROM artifact b WHERE b.replaces_id = "
                         "a.id), 0) FROM artifact a ORDER BY id", &q, err);
    if (rc != BG_OK)
        return rc;
    int s;
    while ((s = sqlite3_step(q)) == SQLITE_ROW) {
        bg_artifact a;
        memset(&a, 0, sizeof a);
        a.id = sqlite3_column_int64(q, 0);
        bgi_copy_text(a.kind, sizeof a.kind, q, 1);
        a.fit_id = sqlite3_column_int64(q, 2);
        a.spec = (char *)sqlite3_column_text(q, 3);
        a.replaces_id = sqlite3_column_int64(q, 4);
        bgi_copy_text(a.version, sizeof a.version, q, 5);
        bgi_copy_text(a.created_at, sizeof a.created_at, q, 6);
        a.len = (size_t)sqlite3_column_int64(q, 7);
        a.replaced_by = sqlite3_column_int64(q, 8);
        if (cb(&a, ctx))
            break;
    }
    if (s != SQLITE_ROW && s != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot list the reports");
    sqlite3_finalize(q);
    return rc;
}
