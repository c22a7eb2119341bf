/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The PostgreSQL backend's runs, readings and exclusions.  An import writes the run and its
** readings, 256 to a prepared statement, with contiguous ids (given under the writers' lock),
** taking them one at a time from the import's source (store.c checks and corrects them). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "bandgap/bandgap.h"
#include "pg_int.h"

/* The run's row; its readings get the ids from '*first' on. */
static int insert_run(bgi_conn *c, const struct bgi_import *imp, long long *first,
                      long long *rid, bg_error *err)
{
    const bg_run *meta = imp->meta;
    struct pgp p;
    int rc;
    PGresult *res = bgi_pg_exec(c, -1, "SELECT coalesce(max(id), 0) + 1, (SELECT coalesce("
                                "max(id), 0) + 1 FROM run) FROM reading", NULL, &rc, err,
                                "cannot read the readings");
    if (!res)
        return rc;
    *first = pgv_ll(res, 0, 0);
    *rid = pgv_ll(res, 0, 1);
    PQclear(res);
    if (pgp_init(&p, 22) != BG_OK)
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    pgp_int(&p, *rid);
    pgp_int(&p, imp->probe_id);
    pgp_int0(&p, imp->ref_id);
    pgp_text0(&p, meta->operator_name);
    pgp_text0(&p, meta->medium);
    pgp_text0(&p, meta->ambient);
    pgp_text0(&p, meta->excitation);
    pgp_text(&p, imp->started_at);
    pgp_text(&p, imp->src);
    pgp_text0(&p, meta->note);
    pgp_text(&p, imp->now);
    pgp_text(&p, imp->unit);
    pgp_int(&p, *first);
    pgp_int(&p, (long long)imp->n);
    pgp_text(&p, imp->sha256);
    pgp_int0(&p, imp->repeats_run);
    pgp_text0(&p, imp->ref_overdue);
    pgp_dbl(&p, imp->excite_a > 0.0 ? imp->excite_a
                : meta->measuring_current_a > 0.0 ? meta->measuring_current_a : NAN);
    pgp_dbl(&p, meta->measuring_voltage_v > 0.0 ? meta->measuring_voltage_v : NAN);
    pgp_int0(&p, imp->ref_version);
    /* a resistance stays NULL, as before schema 11 (and as on SQLite) */
    pgp_text(&p, imp->quantity != BG_QTY_RESISTANCE ? bgi_quantity_name(imp->quantity) : NULL);
    pgp_text(&p, imp->quantity != BG_QTY_RESISTANCE
                     ? bg_quantity_unit((bg_quantity)imp->quantity) : NULL);
    res = bgi_pg_exec(c, -1, "INSERT INTO run(id, probe_id, reference_id, operator, medium, "
                      "ambient, excitation, started_at, source, note, imported_at, t_raw_unit, "
                      "first_reading, nreadings, readings_sha256, repeats_run, ref_overdue, "
                      "measuring_current_a, measuring_voltage_v, reference_version_id, quantity, "
                      "quantity_unit) VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, "
                      "$13, $14, $15, $16, $17, $18, $19, $20, $21, $22)", &p, &rc, err,
                      "cannot create the run");
    PQclear(res);
    pgp_free(&p);
    return rc;
}

enum { BATCH = 256, NCOL = 10 }; /* 2,560 parameters a statement (the limit is 65,535) */

/* The next reading of 'imp' as the next row of 'p' ('*line' its line); its id 'id'. */
static int bind_next(const struct bgi_import *imp, struct pgp *p, long long id, long long rid,
                     size_t *line, bg_error *err)
{
    const bg_reading *r;
    double t_k;
    int rc = imp->next(imp->ctx, &r, &t_k, err);
    if (rc != BG_OK)
        return rc;
    if (!r)
        return bg_error_set(err, BG_EIO, "%s: fewer readings than when it was read first: "
                            "the file changed while it was imported", imp->src);
    *line = r->pt.line;
    pgp_int(p, id);
    pgp_int(p, rid);
    pgp_int(p, (long long)r->pt.line);
    pgp_dbl(p, r->t_raw);
    pgp_dbl(p, t_k);
    pgp_dbl(p, r->pt.r_ohm);
    pgp_dbl(p, r->pt.u_t_k);
    pgp_dbl(p, r->pt.u_r_ohm);
    /* the texts are copied: the reading is valid only until the next call */
    size_t tl = strlen(r->time), nl = r->note ? strlen(r->note) : 0;
    char *t = r->time[0] ? malloc(tl + 1) : NULL, *n = r->note ? malloc(nl + 1) : NULL;
    if ((r->time[0] && !t) || (r->note && !n)) {
        free(t), free(n);
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    }
    if (t)
        memcpy(t, r->time, tl + 1);
    if (n)
        memcpy(n, r->note, nl + 1);
    pgp_text(p, t);
    pgp_text(p, n);
    return BG_OK;
}

/* Free the copied texts of the rows in 'p' and empty it. */
static void unbind(struct pgp *p)
{
    for (int i = 0; i < p->n; i++)
        if (i % NCOL >= 8)
            free((char *)p->v[i]);
    p->n = 0;
}

static int insert_readings(bgi_conn *c, const struct bgi_import *imp, long long first,
                           long long rid, bg_error *err)
{
    char batch_sql[96 + BATCH * 64];
    struct pgp p;
    int rc = BG_OK;
    {
        size_t len = (size_t)snprintf(batch_sql, sizeof batch_sql, "INSERT INTO reading(id, "
                                      "run_id, line, t_raw, t_k, r_ohm, u_t_k, u_r_ohm, time, "
                                      "note) VALUES ");
        for (int k = 0; k < BATCH; k++) {
            int b = k * NCOL;
            len += (size_t)snprintf(batch_sql + len, sizeof batch_sql - len, "%s($%d,$%d,$%d,"
                                    "$%d,$%d,$%d,$%d,$%d,$%d,$%d)", k ? "," : "", b + 1, b + 2,
                                    b + 3, b + 4, b + 5, b + 6, b + 7, b + 8, b + 9, b + 10);
        }
    }
    if (pgp_init(&p, BATCH * NCOL) != BG_OK)
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    for (size_t i = 0; i < imp->n && rc == BG_OK;) {
        size_t nb = imp->n - i >= BATCH ? BATCH : 1, lfirst = 0, llast = 0;
        for (size_t k = 0; k < nb && rc == BG_OK; k++)
            rc = bind_next(imp, &p, first + (long long)(i + k), rid, k ? &llast : &lfirst, err);
        if (rc == BG_OK) {
            PGresult *res = nb > 1
                ? bgi_pg_exec(c, PGS_INSERT_READINGS, batch_sql, &p, &rc, err,
                              "cannot store the readings")
                : bgi_pg_exec(c, PGS_INSERT_READING, "INSERT INTO reading(id, run_id, line, "
                              "t_raw, t_k, r_ohm, u_t_k, u_r_ohm, time, note) VALUES ($1, $2, "
                              "$3, $4, $5, $6, $7, $8, $9, $10)", &p, &rc, err,
                              "cannot store the reading");
            PQclear(res);
            /* only a row the record refuses is the file's fault, and names its lines */
            if (rc == BG_EINVAL && err) {
                char msg[sizeof err->msg];
                const char *why = strstr(err->msg, "the record refuses it");
                snprintf(msg, sizeof msg, "%s", why ? why : err->msg);
                if (nb > 1)
                    bg_error_set(err, BG_EINVAL, "%s:%zu..%zu: cannot store the readings: %s",
                                 imp->src, lfirst, llast, msg);
                else
                    bg_error_set(err, BG_EINVAL, "%s:%zu: cannot store the reading: %s",
                                 imp->src, lfirst, msg);
            }
        }
        unbind(&p);
        i += nb;
    }
    pgp_free(&p);
    return rc;
}

int bgi_pg_import(bgi_conn *c, const struct bgi_import *imp, long long *run_id, bg_error *err)
{
    long long first = 1, rid = 0;
    int rc = insert_run(c, imp, &first, &rid, err);
    if (rc == BG_OK)
        rc = insert_readings(c, imp, first, rid, err);
    if (rc == BG_OK && run_id)
        *run_id = rid;
    return rc;
}

void bgi_pg_run_row(const PGresult *res, int i, bg_run *r)
{
    memset(r, 0, sizeof *r);
    r->id = pgv_ll(res, i, 0);
    r->probe_id = pgv_ll(res, i, 1);
    r->reference_id = pgv_ll(res, i, 2);
    pgv_text(r->serial, sizeof r->serial, res, i, 3);
    pgv_text(r->ref_ident, sizeof r->ref_ident, res, i, 4);
    pgv_text(r->operator_name, sizeof r->operator_name, res, i, 5);
    pgv_text(r->medium, sizeof r->medium, res, i, 6);
    pgv_text(r->ambient, sizeof r->ambient, res, i, 7);
    pgv_text(r->excitation, sizeof r->excitation, res, i, 8);
    pgv_text(r->started_at, sizeof r->started_at, res, i, 9);
    pgv_text(r->source, sizeof r->source, res, i, 10);
    pgv_text(r->note, sizeof r->note, res, i, 11);
    pgv_text(r->imported_at, sizeof r->imported_at, res, i, 12);
    r->nreadings = pgv_ll(res, i, 13);
    r->nexcluded = pgv_ll(res, i, 14);
    r->nfits = pgv_ll(res, i, 15);
    pgv_text(r->readings_sha256, sizeof r->readings_sha256, res, i, 16);
    r->repeats_run = pgv_ll(res, i, 17);
    pgv_text(r->ref_due_date, sizeof r->ref_due_date, res, i, 18);
    pgv_text(r->ref_overdue, sizeof r->ref_overdue, res, i, 19);
    r->measuring_current_a = pgv_dbl(res, i, 20);
    r->measuring_voltage_v = pgv_dbl(res, i, 21);
    r->ref_version = pgv_ll(res, i, 22);
    r->quantity = (int)pgv_ll(res, i, 23);
}

void bgi_pg_reading_row(const PGresult *res, int i, bg_reading_row *g)
{
    g->id = pgv_ll(res, i, 0);
    g->run_id = pgv_ll(res, i, 1);
    g->line = (size_t)pgv_ll(res, i, 2);
    g->t_raw = pgv_dbl(res, i, 3);
    pgv_text(g->t_raw_unit, sizeof g->t_raw_unit, res, i, 4);
    g->t_k = pgv_dbl(res, i, 5);
    g->r_ohm = pgv_dbl(res, i, 6);
    g->u_t_k = pgv_dbl(res, i, 7);
    g->u_r_ohm = pgv_dbl(res, i, 8);
    pgv_text(g->time, sizeof g->time, res, i, 9);
    pgv_text(g->note, sizeof g->note, res, i, 10);
    g->excluded = (int)pgv_ll(res, i, 11);
    pgv_text(g->excl_reason, sizeof g->excl_reason, res, i, 12);
    pgv_text(g->excl_by, sizeof g->excl_by, res, i, 13);
    pgv_text(g->excl_at, sizeof g->excl_at, res, i, 14);
    g->quantity = (int)pgv_ll(res, i, 15);
}

/* A query of one integer parameter. */
static PGresult *by_id(bgi_conn *c, int stmt, const char *sql, long long id, int *rc,
                       bg_error *err, const char *what)
{
    char buf[32];
    const char *v[1] = { buf };
    struct pgp p = { 1, 1, v, NULL, NULL, NULL };
    snprintf(buf, sizeof buf, "%lld", id);
    return bgi_pg_exec(c, stmt, sql, &p, rc, err, what);
}

int bgi_pg_run_get(bgi_conn *c, long long run_id, bg_run *out, bg_error *err)
{
    int rc;
    PGresult *res = by_id(c, -1, "SELECT " BGI_PG_RUN_COLS BGI_PG_RUN_FROM "WHERE r.id = $1",
                          run_id, &rc, err, "cannot read runs");
    if (!res)
        return rc;
    if (PQntuples(res) == 1)
        bgi_pg_run_row(res, 0, out);
    else
        rc = bg_error_set(err, BG_EINVAL, "no run %lld", run_id);
    PQclear(res);
    return rc;
}

int bgi_pg_run_latest(bgi_conn *c, long long probe_id, long long *run_id, bg_error *err)
{
    int rc;
    PGresult *res = by_id(c, -1, "SELECT run_id FROM probe_latest_run WHERE probe_id = $1",
                          probe_id, &rc, err, "cannot read runs");
    if (!res)
        return rc;
    if (PQntuples(res) == 1 && !pgv_null(res, 0, 0))
        *run_id = pgv_ll(res, 0, 0);
    else
        rc = bg_error_set(err, BG_EINVAL, "the probe has no calibration runs (import one with "
                          "'bandgap import FILE --probe SERIAL')");
    PQclear(res);
    return rc;
}

int bgi_pg_run_by_digest(bgi_conn *c, long long probe_id, const char *sha256,
                         long long *run_id, bg_error *err)
{
    char buf[32];
    const char *v[2] = { buf, sha256 };
    struct pgp p = { 2, 2, v, NULL, NULL, NULL };
    int rc;
    snprintf(buf, sizeof buf, "%lld", probe_id);
    PGresult *res = bgi_pg_exec(c, -1, "SELECT id FROM run WHERE probe_id = $1 AND "
                                "readings_sha256 = $2 ORDER BY id LIMIT 1", &p, &rc, err,
                                "cannot read runs");
    if (res)
        *run_id = PQntuples(res) ? pgv_ll(res, 0, 0) : 0;
    PQclear(res);
    return rc;
}

int bgi_pg_run_each(bgi_conn *c, const char *serial, const char *lot_code, bg_run_cb cb,
                    void *ctx, bg_error *err)
{
    const char *v[2] = { serial, lot_code };
    struct pgp p = { 2, 2, v, NULL, NULL, NULL };
    bg_run r;
    int rc = bgi_pg_check_filter(c, serial, lot_code, err);
    if (rc != BG_OK)
        return rc;
    PGresult *res = bgi_pg_exec(c, -1, "SELECT " BGI_PG_RUN_COLS BGI_PG_RUN_FROM "JOIN lot l "
                                "ON l.id = " BGI_PG_LOT_AT_RUN("r", "p") " WHERE ($1::text IS "
                                "NULL OR p.serial = $1) "
                                "AND ($2::text IS NULL OR l.code = $2) ORDER BY r.id", &p, &rc,
                                err, "cannot read runs");
    for (int i = 0; res && i < PQntuples(res); i++) {
        bgi_pg_run_row(res, i, &r);
        if (cb(&r, ctx))
            break;
    }
    PQclear(res);
    return rc;
}

int bgi_pg_reading_each(bgi_conn *c, long long run_id, bg_reading_cb cb, void *ctx,
                        bg_error *err)
{
    bg_reading_row g;
    int rc;
    PGresult *res = by_id(c, -1, BGI_PG_READINGS_OF_RUN, run_id, &rc, err,
                          "cannot read readings");
    for (int i = 0; res && i < PQntuples(res); i++) {
        bgi_pg_reading_row(res, i, &g);
        if (cb(&g, ctx))
            break;
    }
    PQclear(res);
    return rc;
}

static int points_push(bg_store_points *sp, const PGresult *res, int i)
{
    if (sp->n == sp->cap) {
        size_t cap = sp->cap ? 2 * sp->cap : 64;
        bg_point *p = realloc(sp->pts, cap * sizeof *p);
        if (p)
            sp->pts = p;
        long long *ids = realloc(sp->ids, cap * sizeof *ids);
        if (ids)
            sp->ids = ids;
        if (!p || !ids)
            return BG_ENOMEM;
        sp->cap = cap;
    }
    bg_point *pt = &sp->pts[sp->n];
    sp->ids[sp->n] = pgv_ll(res, i, 0);
    pt->t_k = pgv_dbl(res, i, 1);
    pt->r_ohm = pgv_dbl(res, i, 2);
    pt->u_t_k = pgv_dbl(res, i, 3);
    pt->u_r_ohm = pgv_dbl(res, i, 4);
    pt->line = (size_t)pgv_ll(res, i, 5);
    sp->n++;
    return BG_OK;
}

int bgi_pg_run_points(bgi_conn *c, long long run_id, bg_store_points *out, bg_error *err)
{
    int rc;
    PGresult *res = by_id(c, PGS_RUN_POINTS, "SELECT g.id, g.t_k, g.r_ohm, g.u_t_k, g.u_r_ohm, "
                          "g.line FROM run r JOIN reading g ON g.id BETWEEN r.first_reading "
                          "AND r.first_reading + r.nreadings - 1 AND g.run_id = r.id WHERE "
                          "r.id = $1 AND NOT EXISTS (SELECT 1 FROM exclusion e WHERE "
                          "e.reading_id = g.id) ORDER BY g.id", run_id, &rc, err,
                          "cannot read readings");
    out->n = 0;
    for (int i = 0; res && i < PQntuples(res); i++)
        if (points_push(out, res, i) != BG_OK) {
            rc = bg_error_set(err, BG_ENOMEM, "out of memory reading run %lld", run_id);
            break;
        }
    PQclear(res);
    return rc;
}

/* A lot-wide query written once over the lot's relation (pg_int.h): AT(r, p) the lot a run
** counts toward, OF(p, lot) the candidate probes; the move-aware set or the plain one. */
#define LOT_POINTS_SQL(AT, OF) "SELECT p.id, p.serial, coalesce((SELECT r.id FROM run r WHERE " \
    "r.probe_id = p.id AND " AT("r", "p") " = $1 ORDER BY r.started_at DESC, r.id DESC " \
    "LIMIT 1), 0) FROM probe p WHERE " OF("p", "$1") " ORDER BY p.id"

int bgi_pg_lot_points_each(bgi_conn *c, const bg_lot *lot, bg_lot_points_cb cb, void *ctx,
                           bg_error *err)
{
    bg_store_points sp = BG_STORE_POINTS_INIT;
    int own, rc = bgi_pg_read_begin(c, &own, err);
    if (rc != BG_OK)
        return rc;
    /* the lot's probes with their newest runs that count toward it, in the order the probes
    ** were added; then each run's points */
    int moved = 1;
    if ((rc = bgi_pg_lot_moved(c, lot->id, &moved, err)) != BG_OK) {
        bgi_pg_read_end(c, own);
        return rc;
    }
    PGresult *res = by_id(c, -1, moved ? LOT_POINTS_SQL(BGI_PG_LOT_AT_RUN, BGI_PG_PROBE_OF) :
                          LOT_POINTS_SQL(BGI_PG_PLAIN_AT_RUN, BGI_PG_PLAIN_OF), lot->id, &rc,
                          err, "cannot read the lot's probes");
    for (int i = 0; res && rc == BG_OK && i < PQntuples(res); i++) {
        long long run = pgv_ll(res, i, 2);
        sp.n = 0;
        if (run && (rc = bgi_pg_run_points(c, run, &sp, err)) != BG_OK)
            break;
        if (cb(PQgetvalue(res, i, 1), pgv_ll(res, i, 0), run, &sp, ctx))
            break;
    }
    PQclear(res);
    free(sp.pts);
    free(sp.ids);
    bgi_pg_read_end(c, own);
    return rc;
}

int bgi_pg_exclude(bgi_conn *c, long long reading_id, const char *why, const char *by,
                   const char *now, bg_error *err)
{
    struct pgp p;
    int rc;
    PGresult *res = by_id(c, -1, "SELECT (SELECT count(*) FROM reading WHERE id = $1), "
                          "(SELECT count(*) FROM exclusion WHERE reading_id = $1)", reading_id,
                          &rc, err, "cannot read readings");
    if (!res)
        return rc;
    if (pgv_ll(res, 0, 0) == 0)
        rc = bg_error_set(err, BG_EINVAL, "no reading %lld", reading_id);
    else if (pgv_ll(res, 0, 1) != 0)
        rc = bg_error_set(err, BG_EINVAL, "reading %lld is already excluded", reading_id);
    PQclear(res);
    if (rc != BG_OK)
        return rc;
    if (pgp_init(&p, 4) != BG_OK)
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    pgp_int(&p, reading_id);
    pgp_text(&p, why);
    pgp_text(&p, by && *by ? by : "unknown");
    pgp_text(&p, now);
    res = bgi_pg_exec(c, -1, "INSERT INTO exclusion(reading_id, reason, by_whom, at) VALUES "
                      "($1, $2, $3, $4)", &p, &rc, err, "cannot record the exclusion");
    PQclear(res);
    pgp_free(&p);
    return rc;
}
