/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The SQLite backend's part specifications (table part_spec, schema version 5): rows are
** appended, never changed; the newest row of a part is its specification. */
#include <math.h>
#include <string.h>

#include "sqlite_int.h"

static void bind_pos_or_null(sqlite3_stmt *q, int i, double v)
{
    if (v > 0.0)
        sqlite3_bind_double(q, i, v);
    else
        sqlite3_bind_null(q, i);
}

/* The model columns model, t0_k, npar, c0 .. c5 from bind index 'b'. */
static void bind_model(sqlite3_stmt *q, int b, const bg_part_spec *p)
{
    char name[16];
    size_t n = p->have_model ? bg_model_npar(&p->model) : 0;
    if (!p->have_model) {
        for (int i = 0; i < 9; i++)
            sqlite3_bind_null(q, b + i);
        return;
    }
    sqlite3_bind_text(q, b, bg_model_name(&p->model, name, sizeof name), -1, SQLITE_TRANSIENT);
    if (bg_model_flags(&p->model) & BG_MODEL_HAS_T0)
        sqlite3_bind_double(q, b + 1, p->model.t0_k);
    else
        sqlite3_bind_null(q, b + 1);
    sqlite3_bind_int64(q, b + 2, (sqlite3_int64)n);
    for (size_t i = 0; i < 6; i++)
        if (i < n)
            sqlite3_bind_double(q, b + 3 + (int)i, p->model.coef[i]);
        else
            sqlite3_bind_null(q, b + 3 + (int)i);
}

/* The schema-12 columns sensor .. iec_class from bind index 'b' (all NULL for an NTC). */
static void bind_sensor(sqlite3_stmt *q, int b, const bg_part_spec *p)
{
    for (int i = 0; i < 7; i++)
        sqlite3_bind_null(q, b + i);
    if (p->sensor == BG_PART_NTC)
        return;
    sqlite3_bind_text(q, b, bg_part_sensor_name(p->sensor), -1, SQLITE_STATIC);
    sqlite3_bind_double(q, b + 1, p->nom_t_k);
    sqlite3_bind_double(q, b + 2, p->nom_x);
    if (p->sensor == BG_PART_PRT) {
        sqlite3_bind_text(q, b + 6, p->iec_class, -1, SQLITE_TRANSIENT);
        return;
    }
    sqlite3_bind_double(q, b + 3, p->tol_x);
    sqlite3_bind_double(q, b + 4, p->nom_s);
    sqlite3_bind_double(q, b + 5, p->tol_s);
}

int bgi_sqlite_part_spec_add(bgi_conn *c, const bg_part_spec *p, const char *now, long long *id,
                             bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(c, "INSERT INTO part_spec(part, model, t0_k, npar, c0, c1, c2, c3, c4, "
                         "c5, source, tol_k, tol_lo_k, tol_hi_k, baseline, limit_k, rate_k, "
                         "note, created_at, sensor, nom_t_k, nom_x, tol_x, nom_s, tol_s, "
                         "iec_class) VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?)",
                         &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_text(q, 1, p->part, -1, SQLITE_TRANSIENT);
    bind_model(q, 2, p);
    bgi_bind_text_or_null(q, 11, p->source);
    bind_pos_or_null(q, 12, p->tol_k);
    bind_pos_or_null(q, 13, p->tol_k > 0.0 ? p->tol_lo_k : 0.0);
    bind_pos_or_null(q, 14, p->tol_k > 0.0 ? p->tol_hi_k : 0.0);
    if (p->baseline)
        sqlite3_bind_int64(q, 15, (sqlite3_int64)p->baseline);
    else
        sqlite3_bind_null(q, 15);
    bind_pos_or_null(q, 16, p->limit_k);
    bind_pos_or_null(q, 17, p->rate_k);
    bgi_bind_text_or_null(q, 18, p->note);
    sqlite3_bind_text(q, 19, now, -1, SQLITE_TRANSIENT);
    bind_sensor(q, 20, p);
    int s = sqlite3_step(q);
    if ((s & 0xff) == SQLITE_CONSTRAINT)
        rc = bg_error_set(err, BG_EINVAL, "part '%s': %s", p->part, sqlite3_errmsg(c->db));
    else if (s != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot add the part specification");
    else if (id)
        *id = sqlite3_last_insert_rowid(c->db);
    sqlite3_finalize(q);
    return rc;
}

static double col_or_zero(sqlite3_stmt *q, int col)
{
    return sqlite3_column_type(q, col) == SQLITE_NULL ? 0.0 : sqlite3_column_double(q, col);
}

static int spec_row(sqlite3_stmt *q, bg_part_spec *p, bg_error *err)
{
    memset(p, 0, sizeof *p);
    p->id = sqlite3_column_int64(q, 0);
    bgi_copy_text(p->part, sizeof p->part, q, 1);
    if (sqlite3_column_type(q, 2) != SQLITE_NULL) {
        char name[16];
        bgi_copy_text(name, sizeof name, q, 2);
        if (bg_model_parse(name, &p->model, err) != BG_OK)
            return BG_EDB;
        if (sqlite3_column_type(q, 3) != SQLITE_NULL)
            p->model.t0_k = sqlite3_column_double(q, 3);
        size_t n = (size_t)sqlite3_column_int64(q, 4);
        if (n != bg_model_npar(&p->model))
            return bg_error_set(err, BG_EDB, "part specification %lld: %zu coefficients for "
                                "model '%s'", p->id, n, name);
        for (size_t i = 0; i < n; i++)
            p->model.coef[i] = sqlite3_column_double(q, 5 + (int)i);
        p->have_model = 1;
    }
    bgi_copy_text(p->source, sizeof p->source, q, 11);
    p->tol_k = col_or_zero(q, 12), p->tol_lo_k = col_or_zero(q, 13);
    p->tol_hi_k = col_or_zero(q, 14);
    p->baseline = (size_t)sqlite3_column_int64(q, 15);
    p->limit_k = col_or_zero(q, 16), p->rate_k = col_or_zero(q, 17);
    bgi_copy_text(p->note, sizeof p->note, q, 18);
    bgi_copy_text(p->created_at, sizeof p->created_at, q, 19);
    if (sqlite3_column_type(q, 20) != SQLITE_NULL) {
        char name[16];
        bgi_copy_text(name, sizeof name, q, 20);
        if (bg_part_sensor_parse(name, &p->sensor, err) != BG_OK)
            return BG_EDB;
        p->nom_t_k = col_or_zero(q, 21), p->nom_x = col_or_zero(q, 22);
        p->tol_x = col_or_zero(q, 23), p->nom_s = col_or_zero(q, 24);
        p->tol_s = col_or_zero(q, 25);
        bgi_copy_text(p->iec_class, sizeof p->iec_class, q, 26);
    }
    return BG_OK;
}

int bgi_sqlite_part_spec_each(bgi_conn *c, const char *part, int newest_only,
                              bg_part_spec_cb cb, void *ctx, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_part_spec p;
    int which = newest_only ? STMT_PART_SPEC_NEWEST : STMT_PART_SPEC;
    int s, rc = bgi_stmt(c, which, newest_only ?
        "SELECT id, part, model, t0_k, npar, c0, c1, c2, c3, c4, c5, source, tol_k, tol_lo_k, "
        "tol_hi_k, baseline, limit_k, rate_k, note, created_at, sensor, nom_t_k, nom_x, tol_x, "
        "nom_s, tol_s, iec_class FROM part_spec WHERE part = ? "
        "ORDER BY created_at DESC, id DESC LIMIT 1" :
        "SELECT id, part, model, t0_k, npar, c0, c1, c2, c3, c4, c5, source, tol_k, tol_lo_k, "
        "tol_hi_k, baseline, limit_k, rate_k, note, created_at, sensor, nom_t_k, nom_x, tol_x, "
        "nom_s, tol_s, iec_class FROM part_spec WHERE part = ? "
        "ORDER BY created_at, id", &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_text(q, 1, part, -1, SQLITE_TRANSIENT);
    while ((s = sqlite3_step(q)) == SQLITE_ROW) {
        if ((rc = spec_row(q, &p, err)) != BG_OK || cb(&p, ctx))
            break;
    }
    if (rc == BG_OK && s != SQLITE_ROW && s != SQLITE_DONE)
        rc = bgi_db_fail(c, err, "cannot read part specifications");
    bgi_stmt_done(c, which, q);
    return rc;
}
