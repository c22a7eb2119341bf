/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Issued artifacts (reports): stored once, never changed or deleted (the schema's triggers
** refuse both); a reissue is a new row naming the one it replaces. */
#include <stdlib.h>
#include <string.h>

#include "store_priv.h"

void bg_artifact_release(bg_artifact *a)
{
    if (!a)
        return;
    free(a->spec);
    free(a->content);
    memset(a, 0, sizeof *a);
}

int bg_store_artifact_issue(bg_store *st, const char *kind, const char *subject,
                            long long fit_id, const char *spec, long long replaces_id,
                            const char *version, bg_artifact_gen gen, void *ctx,
                            long long *id_out, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    char now[BG_TIME];
    char *content = NULL;
    size_t len = 0;
    long long id = 0, latest = 0;
    int rc, own;

    if ((rc = bgi_tx_begin(st, &own, err)) != BG_OK)
        return rc;
    /* the identifier and the chain, read inside the write transaction */
    rc = bgi_prepare(st, "SELECT coalesce(max(id), 0) + 1, (SELECT id FROM artifact WHERE "
                     "kind = ?1 AND json_extract(spec, '$.subject') = ?2 ORDER BY id DESC "
                     "LIMIT 1) FROM artifact", &q, err);
    if (rc == BG_OK) {
        sqlite3_bind_text(q, 1, kind, -1, SQLITE_TRANSIENT);
        sqlite3_bind_text(q, 2, subject, -1, SQLITE_TRANSIENT);
        if (sqlite3_step(q) != SQLITE_ROW)
            rc = bgi_db_fail(st, err, "cannot read the issued reports");
        else
            id = sqlite3_column_int64(q, 0), latest = sqlite3_column_int64(q, 1);
        sqlite3_finalize(q);
        q = NULL;
    }
    if (rc == BG_OK && latest && replaces_id != latest)
        rc = bg_error_set(err, BG_EINVAL, "%s already has report %lld: reissue it (naming it "
                          "as replaced) or fetch the stored copy", subject, latest);
    if (rc == BG_OK && !latest && replaces_id)
        rc = bg_error_set(err, BG_EINVAL, "%s has no issued report to replace", subject);
    bg_store_now(now, sizeof now);
    if (rc == BG_OK)
        rc = gen(id, now, ctx, &content, &len, err);
    if (rc == BG_OK)
        rc = bgi_prepare(st, "INSERT INTO artifact(id, kind, fit_id, spec, content, "
                         "replaces_id, program_version, created_at) VALUES (?,?,?,?,?,?,?,?)",
                         &q, err);
    if (rc == BG_OK) {
        sqlite3_bind_int64(q, 1, id);
        sqlite3_bind_text(q, 2, kind, -1, SQLITE_TRANSIENT);
        if (fit_id)
            sqlite3_bind_int64(q, 3, fit_id);
        else
            sqlite3_bind_null(q, 3);
        sqlite3_bind_text(q, 4, spec, -1, SQLITE_TRANSIENT);
        sqlite3_bind_blob64(q, 5, content, (sqlite3_uint64)len, SQLITE_TRANSIENT);
        if (replaces_id)
            sqlite3_bind_int64(q, 6, replaces_id);
        else
            sqlite3_bind_null(q, 6);
        sqlite3_bind_text(q, 7, version, -1, SQLITE_TRANSIENT);
        sqlite3_bind_text(q, 8, now, -1, SQLITE_TRANSIENT);
        if (sqlite3_step(q) != SQLITE_DONE)
            rc = bgi_db_fail(st, err, "cannot store the report");
    }
    sqlite3_finalize(q);
    free(content);
    rc = bgi_tx_end(st, own, rc, err);
    if (rc == BG_OK && id_out)
        *id_out = id;
    return rc;
}

int bg_store_artifact_get(bg_store *st, long long id, bg_artifact *a, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc;
    memset(a, 0, sizeof *a);
    rc = bgi_prepare(st, "SELECT kind, coalesce(fit_id, 0), spec, content, "
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
        a->spec = strdup((const char *)sqlite3_column_text(q, 2));
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
        rc = bgi_db_fail(st, err, "cannot read the report");
    sqlite3_finalize(q);
    if (rc != BG_OK)
        bg_artifact_release(a);
    return rc;
}

int bg_store_artifact_each(bg_store *st, bg_artifact_cb cb, void *ctx, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(st, "SELECT id, kind, coalesce(fit_id, 0), spec, "
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
        rc = bgi_db_fail(st, err, "cannot list the reports");
    sqlite3_finalize(q);
    return rc;
}
