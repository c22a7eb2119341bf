/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The PostgreSQL backend's fits: batched inserts of queued fits, reads of one fit or many, the
** calibration histories QA reads in one query, and the export walk. */
#include <math.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "bandgap/bandgap.h"
#include "pg_int.h"

static double get_le_double(const unsigned char *p)
{
    unsigned long long u = 0;
    double v;
    for (int i = 7; i >= 0; i--)
        u = (u << 8) | p[i];
    memcpy(&v, &u, sizeof v);
    return v;
}

static PGresult *by_id(bgi_conn *c, int stmt, const char *sql, long long id, int *rc,
                       bg_error *err, const char *what)
{
    char buf[32];
    const char *v[1] = { buf };
    struct pgp p = { 1, 1, v, NULL, NULL, NULL };
    snprintf(buf, sizeof buf, "%lld", id);
    return bgi_pg_exec(c, stmt, sql, &p, rc, err, what);
}

/* An id and an optional text ('since': NULL or "" is NULL). */
static PGresult *by_id_since(bgi_conn *c, const char *sql, long long id, const char *since,
                             int *rc, bg_error *err, const char *what)
{
    char buf[32];
    const char *v[2] = { buf, since && *since ? since : NULL };
    struct pgp p = { 2, 2, v, NULL, NULL, NULL };
    snprintf(buf, sizeof buf, "%lld", id);
    return bgi_pg_exec(c, -1, sql, &p, rc, err, what);
}

enum { FIT_NCOL = 24 };
#define FIT_INSERT "INSERT INTO fit(run_id, model, t0_k, npar, c0, c1, c2, c3, c4, c5, cov, " \
    "n, dof, weighted, chi2, cov_scale, rms_mk, max_abs_mk, t_min_k, t_max_k, reading_ids, " \
    "program_version, created_at, id) VALUES "

/* Row 'r' as the next 24 parameters (the id last; 0 for the next one, given by the insert). */
static void fitrow_bind(struct pgp *p, const struct bgi_fitrow *r, const char *now)
{
    pgp_int(p, r->run_id);
    pgp_text(p, r->model);
    pgp_dbl(p, r->t0_k);
    pgp_int(p, (long long)r->npar);
    for (size_t i = 0; i < BG_MODEL_MAXPAR; i++)
        pgp_dbl(p, i < r->npar ? r->coef[i] : NAN);
    if (r->covlen)
        pgp_bin(p, r->cov, r->covlen);
    else
        pgp_null(p);
    pgp_int(p, (long long)r->n);
    pgp_int(p, (long long)r->dof);
    pgp_int(p, r->weighted);
    pgp_dbl(p, r->chi2);
    pgp_dbl(p, isfinite(r->cov_scale) ? r->cov_scale : NAN);
    pgp_dbl(p, r->rms_mk);
    pgp_dbl(p, r->max_abs_mk);
    pgp_dbl(p, r->t_min_k);
    pgp_dbl(p, r->t_max_k);
    pgp_text(p, r->ids);
    pgp_text(p, bg_version());
    pgp_text(p, now);
    pgp_int(p, r->id);
}

int bgi_pg_fit_next_id(bgi_conn *c, long long *id, bg_error *err)
{
    int rc;
    PGresult *res = bgi_pg_exec(c, -1, "SELECT coalesce(max(id), 0) + 1 FROM fit", NULL, &rc,
                                err, "cannot read the fits");
    if (res)
        *id = pgv_ll(res, 0, 0);
    PQclear(res);
    return rc;
}

int bgi_pg_fit_insert(bgi_conn *c, struct bgi_fitrow *rows, size_t n, const char *now,
                      bg_error *err)
{
    /* Each row's text: FIT_NCOL placeholders of at most "$9999," and the id's coalesce
     * (under 100 characters); the buffer is sized for that and each write is checked. */
    enum { ROW_MAX = FIT_NCOL * 6 + 128 };
    struct pgp p;
    int rc = BG_OK;
    size_t per = n == BGI_FITQ ? BGI_FITQ : 1;
    size_t cap = sizeof FIT_INSERT + per * ROW_MAX + 32;
    char *sql = malloc(cap);
    if (!sql)
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    size_t len = (size_t)snprintf(sql, cap, "%s", FIT_INSERT);
    for (size_t k = 0; k < per && len < cap; k++) {
        int b = (int)k * FIT_NCOL;
        len += (size_t)snprintf(sql + len, cap - len, "%s(", k ? "," : "");
        for (int j = 1; j <= FIT_NCOL && len < cap; j++)
            len += (size_t)snprintf(sql + len, cap - len, j < FIT_NCOL ? "$%d," :
                                    "coalesce(nullif($%d::bigint, 0), (SELECT coalesce(max(id), "
                                    "0) + 1 FROM fit)))", b + j);
    }
    if (per == 1 && len < cap)
        len += (size_t)snprintf(sql + len, cap - len, " RETURNING id");
    if (len >= cap) {
        free(sql);
        return bg_error_set(err, BG_EINTERNAL, "the statement storing fits is longer than its "
                            "buffer (%zu bytes)", cap);
    }
    if (pgp_init(&p, (int)per * FIT_NCOL) != BG_OK) {
        free(sql);
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    }
    for (size_t i = 0; i < n && rc == BG_OK; i += per) {
        p.n = 0;
        for (size_t k = 0; k < per; k++)
            fitrow_bind(&p, &rows[i + k], now);
        PGresult *res = bgi_pg_exec(c, per > 1 ? PGS_INSERT_FITS : PGS_INSERT_FIT, sql, &p, &rc,
                                    err, per > 1 ? "cannot store the fits" :
                                                   "cannot store the fit");
        if (res && per == 1)
            rows[i].id = pgv_ll(res, 0, 0);
        PQclear(res);
    }
    pgp_free(&p);
    free(sql);
    return rc;
}

#define FIT_COLS BGI_PG_FIT_COLS
#define FIT_FROM " FROM fit f JOIN run r ON f.run_id = r.id JOIN probe p ON r.probe_id = p.id "

/* The model of a fit row from columns col .. col + 8: name, t0_k, npar, c0 .. c5. */
static int row_model(const PGresult *res, int i, int col, bg_fit_row *f, bg_error *err)
{
    char name[16];
    pgv_text(name, sizeof name, res, i, col);
    if (bg_model_parse(name, &f->model, err) != BG_OK)
        return BG_EINVAL;
    if (!pgv_null(res, i, col + 1))
        f->model.t0_k = pgv_dbl(res, i, col + 1);
    f->npar = (size_t)pgv_ll(res, i, col + 2);
    if (f->npar != bg_model_npar(&f->model))
        return bg_error_set(err, BG_EDB, "fit %lld: %zu coefficients for model '%s'", f->id,
                            f->npar, name);
    for (size_t k = 0; k < f->npar; k++)
        f->model.coef[k] = pgv_dbl(res, i, col + 3 + (int)k);
    return BG_OK;
}

int bgi_pg_fit_row(const PGresult *res, int i, int b, bg_fit_row *f, bg_error *err)
{
    size_t nb = 0;
    memset(f, 0, sizeof *f);
    f->id = pgv_ll(res, i, b + 0);
    f->run_id = pgv_ll(res, i, b + 1);
    f->probe_id = pgv_ll(res, i, b + 2);
    pgv_text(f->serial, sizeof f->serial, res, i, b + 3);
    int rc = row_model(res, i, b + 4, f, err);
    if (rc != BG_OK)
        return rc;
    unsigned char *cov = pgv_bytes(res, i, b + 13, &nb);
    if (cov && nb == 8 * f->npar * f->npar) {
        for (size_t k = 0; k < f->npar * f->npar; k++)
            f->cov[k] = get_le_double(cov + 8 * k);
        f->has_cov = 1;
    } else {
        for (size_t k = 0; k < f->npar * f->npar; k++)
            f->cov[k] = NAN;
    }
    free(cov);
    f->n = (size_t)pgv_ll(res, i, b + 14);
    f->dof = (size_t)pgv_ll(res, i, b + 15);
    f->weighted = (int)pgv_ll(res, i, b + 16);
    f->chi2 = pgv_dbl(res, i, b + 17);
    f->cov_scale = pgv_null(res, i, b + 18) ? NAN : pgv_dbl(res, i, b + 18);
    f->rms_mk = pgv_dbl(res, i, b + 19);
    f->max_abs_mk = pgv_dbl(res, i, b + 20);
    f->t_min_k = pgv_dbl(res, i, b + 21);
    f->t_max_k = pgv_dbl(res, i, b + 22);
    pgv_text(f->program_version, sizeof f->program_version, res, i, b + 23);
    pgv_text(f->created_at, sizeof f->created_at, res, i, b + 24);
    return BG_OK;
}

int bgi_pg_fit_get(bgi_conn *c, long long fit_id, bg_fit_row *out, bg_error *err)
{
    int rc;
    PGresult *res = by_id(c, PGS_FIT_GET, "SELECT " FIT_COLS FIT_FROM "WHERE f.id = $1", fit_id,
                          &rc, err, "cannot read fits");
    if (!res)
        return rc;
    if (PQntuples(res) == 1)
        rc = bgi_pg_fit_row(res, 0, 0, out, err);
    else
        rc = bg_error_set(err, BG_EINVAL, "no fit %lld", fit_id);
    PQclear(res);
    return rc;
}

int bgi_pg_fit_each(bgi_conn *c, const char *serial, const char *lot_code, bg_fit_cb cb,
                    void *ctx, bg_error *err)
{
    const char *v[2] = { serial, lot_code };
    struct pgp p = { 2, 2, v, NULL, NULL, NULL };
    bg_fit_row f;
    int rc = bgi_pg_check_filter(c, serial, lot_code, err);
    if (rc != BG_OK)
        return rc;
    PGresult *res = bgi_pg_exec(c, -1, "SELECT " FIT_COLS FIT_FROM "JOIN lot l ON l.id = "
                                BGI_PG_LOT_AT_RUN("r", "p") " WHERE ($1::text IS NULL OR "
                                "p.serial = $1) AND ($2::text "
                                "IS NULL OR l.code = $2) ORDER BY f.id", &p, &rc, err,
                                "cannot read fits");
    for (int i = 0; res && i < PQntuples(res); i++)
        if ((rc = bgi_pg_fit_row(res, i, 0, &f, err)) != BG_OK || cb(&f, ctx))
            break;
    PQclear(res);
    return rc;
}

int bgi_pg_fit_newest_of_run(bgi_conn *c, long long run_id, long long *fit_id, bg_error *err)
{
    int rc;
    PGresult *res = by_id(c, PGS_FIT_NEWEST, "SELECT max(id) FROM fit WHERE run_id = $1",
                          run_id, &rc, err, "cannot read fits");
    *fit_id = res ? pgv_ll(res, 0, 0) : 0; /* NULL (no fit) reads as 0 */
    PQclear(res);
    return rc;
}

int bgi_pg_fit_same(bgi_conn *c, const struct bgi_fitrow *r, long long *fit_id, bg_error *err)
{
    struct pgp p;
    int rc;
    if (pgp_init(&p, FIT_NCOL) != BG_OK)
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    fitrow_bind(&p, r, "");
    p.n = 21; /* the program version, the time and the id are not compared */
    PGresult *res = bgi_pg_exec(c, -1, "SELECT id FROM fit WHERE run_id = $1 AND model = $2 AND "
                                "t0_k IS NOT DISTINCT FROM $3::float8 AND npar = $4 AND c0 IS "
                                "NOT DISTINCT FROM $5::float8 AND c1 IS NOT DISTINCT FROM "
                                "$6::float8 AND c2 IS NOT DISTINCT FROM $7::float8 AND c3 IS NOT "
                                "DISTINCT FROM $8::float8 AND c4 IS NOT DISTINCT FROM $9::float8 "
                                "AND c5 IS NOT DISTINCT FROM $10::float8 AND cov IS NOT DISTINCT "
                                "FROM $11::bytea AND n = $12 AND dof = $13 AND weighted = $14 "
                                "AND chi2 IS NOT DISTINCT FROM $15::float8 AND cov_scale IS NOT "
                                "DISTINCT FROM $16::float8 AND rms_mk IS NOT DISTINCT FROM "
                                "$17::float8 AND max_abs_mk IS NOT DISTINCT FROM $18::float8 AND "
                                "t_min_k IS NOT DISTINCT FROM $19::float8 AND t_max_k IS NOT "
                                "DISTINCT FROM $20::float8 AND reading_ids = $21 ORDER BY id "
                                "LIMIT 1", &p, &rc, err, "cannot read fits");
    *fit_id = res && PQntuples(res) ? pgv_ll(res, 0, 0) : 0;
    PQclear(res);
    pgp_free(&p);
    return rc;
}

int bgi_pg_fit_readings(bgi_conn *c, long long fit_id, long long *ids, size_t max, size_t *n,
                        bg_error *err)
{
    int rc;
    PGresult *res = by_id(c, -1, "SELECT reading_ids FROM fit WHERE id = $1", fit_id, &rc, err,
                          "cannot read the fit's readings");
    *n = 0;
    if (!res)
        return rc;
    if (PQntuples(res) == 1) {
        const char *s = PQgetvalue(res, 0, 0);
        while (*s && *n < max) {
            char *end;
            if (*s == '[' || *s == ',' || *s == ' ') {
                s++;
                continue;
            }
            if (*s == ']')
                break;
            long long v = strtoll(s, &end, 10);
            if (end == s) {
                rc = bg_error_set(err, BG_EDB, "fit %lld: unreadable list of readings", fit_id);
                break;
            }
            ids[(*n)++] = v;
            s = end;
        }
    } else
        rc = bg_error_set(err, BG_EINVAL, "no fit %lld", fit_id);
    PQclear(res);
    return rc;
}

#define NEWEST_FIT "LEFT JOIN fit f ON f.id = (SELECT max(f2.id) FROM fit f2 WHERE " \
    "f2.run_id = r.id) "

int bgi_pg_probe_history(bgi_conn *c, long long pid, const char *since, bg_history_cb cb,
                         void *ctx, bg_error *err)
{
    bg_fit_row f;
    char when[BG_TIME];
    int rc;
    PGresult *res = by_id_since(c, "SELECT r.id, r.started_at, " FIT_COLS " FROM run r JOIN "
                                "probe p ON p.id = r.probe_id " NEWEST_FIT "WHERE r.probe_id = "
                                "$1 AND ($2::text IS NULL OR r.started_at >= $2) ORDER BY "
                                "r.started_at, r.id", pid, since, &rc, err, "cannot read runs");
    for (int i = 0; res && i < PQntuples(res); i++) {
        int fitted = !pgv_null(res, i, 2);
        if (fitted && (rc = bgi_pg_fit_row(res, i, 2, &f, err)) != BG_OK)
            break;
        pgv_text(when, sizeof when, res, i, 1);
        if (cb(when, pgv_ll(res, i, 0), fitted ? &f : NULL, ctx))
            break;
    }
    PQclear(res);
    return rc;
}

int bgi_pg_lot_moved(bgi_conn *c, long long lot_id, int *moved, bg_error *err)
{
    int rc;
    PGresult *res = by_id(c, -1, "SELECT EXISTS (SELECT 1 FROM probe_version pv WHERE "
                          "pv.lot_id = $1) OR EXISTS (SELECT 1 FROM probe_version pv JOIN probe "
                          "p ON p.id = pv.probe_id WHERE p.lot_id = $1)", lot_id, &rc, err,
                          "cannot read the lot's probe moves");
    *moved = 1; /* the move-aware reading unless the question is answered */
    if (res && PQntuples(res) == 1)
        *moved = strcmp(PQgetvalue(res, 0, 0), "t") == 0;
    PQclear(res);
    return rc;
}

/* The lot-wide queries over the lot's relation (pg_int.h; as sqlite_fit.c's): AT(r, p) the
** lot a run counts toward, WAS(p, lot) / OF(p, lot) the candidate probes. */
#define LOT_LATEST_SQL(AT, OF) "SELECT p.serial, " FIT_COLS " FROM probe p LEFT JOIN fit f " \
    "ON f.id = (SELECT max(f2.id) FROM fit f2 WHERE f2.run_id = (SELECT r2.id FROM run r2 " \
    "WHERE r2.probe_id = p.id AND ($2::text IS NULL OR r2.started_at >= $2) AND " \
    AT("r2", "p") " = $1 ORDER BY r2.started_at DESC, r2.id DESC LIMIT 1)) LEFT JOIN run r " \
    "ON r.id = f.run_id WHERE " OF("p", "$1") " ORDER BY p.id"
#define LOT_HISTORIES_SQL(AT, OF) "SELECT p.id, p.serial, r.id, r.started_at, " FIT_COLS \
    " FROM probe p LEFT JOIN run r ON r.probe_id = p.id AND ($2::text IS NULL OR " \
    "r.started_at >= $2) AND " AT("r", "p") " = $1 " NEWEST_FIT "WHERE " OF("p", "$1") \
    " ORDER BY p.serial, r.started_at, r.id"
#define LOT_HISTORY_SQL(AT, WAS) "SELECT f.id, f.run_id, r.probe_id, f.model, f.t0_k, " \
    "f.npar, f.c0, f.c1, f.c2, f.c3, f.c4, f.c5, f.n, f.dof, f.t_min_k, f.t_max_k, " \
    "r.started_at, p.serial FROM run r JOIN probe p ON r.probe_id = p.id JOIN fit f ON " \
    "f.id = (SELECT max(f2.id) FROM fit f2 WHERE f2.run_id = r.id) WHERE " WAS("p", "$1") \
    " AND " AT("r", "p") " = $1 AND ($2::text IS NULL OR r.started_at >= $2) ORDER BY " \
    "p.id, r.started_at, r.id"

int bgi_pg_lot_latest_fits(bgi_conn *c, long long lot_id, const char *since, bg_latest_cb cb,
                           void *ctx, bg_error *err)
{
    bg_fit_row f;
    int moved = 1, rc = bgi_pg_lot_moved(c, lot_id, &moved, err);
    if (rc != BG_OK)
        return rc;
    PGresult *res = by_id_since(c, moved ? LOT_LATEST_SQL(BGI_PG_LOT_AT_RUN, BGI_PG_PROBE_OF) :
                                LOT_LATEST_SQL(BGI_PG_PLAIN_AT_RUN, BGI_PG_PLAIN_OF), lot_id,
                                since, &rc, err, "cannot read the lot's fits");
    for (int i = 0; res && i < PQntuples(res); i++) {
        int fitted = !pgv_null(res, i, 1);
        if (fitted && (rc = bgi_pg_fit_row(res, i, 1, &f, err)) != BG_OK)
            break;
        if (cb(PQgetvalue(res, i, 0), fitted ? &f : NULL, ctx))
            break;
    }
    PQclear(res);
    return rc;
}

int bgi_pg_lot_histories(bgi_conn *c, long long lot_id, const char *since,
                         bg_lot_histories_cb cb, void *ctx, bg_error *err)
{
    struct bgi_hist_buf h = { NULL, NULL, 0, 0, 0 };
    long long probe = 0;
    char serial[BG_TEXT] = "";
    int moved = 1, stop = 0, rc = bgi_pg_lot_moved(c, lot_id, &moved, err);
    if (rc != BG_OK)
        return rc;
    PGresult *res = by_id_since(c, moved ? LOT_HISTORIES_SQL(BGI_PG_LOT_AT_RUN, BGI_PG_PROBE_OF)
                                : LOT_HISTORIES_SQL(BGI_PG_PLAIN_AT_RUN, BGI_PG_PLAIN_OF),
                                lot_id, since, &rc, err, "cannot read the lot's history");
    for (int i = 0; res && i < PQntuples(res); i++) {
        long long pid = pgv_ll(res, i, 0);
        if (pid != probe) {
            if (probe && cb(serial, h.fits, h.when, h.n, h.unfitted, ctx)) {
                stop = 1;
                break;
            }
            probe = pid, h.n = h.unfitted = 0;
            pgv_text(serial, sizeof serial, res, i, 1);
        }
        if (pgv_null(res, i, 2))
            continue; /* a probe without runs */
        if (pgv_null(res, i, 4)) {
            h.unfitted++;
            continue;
        }
        if (bgi_hist_buf_push(&h) != BG_OK) {
            rc = bg_error_set(err, BG_ENOMEM, "out of memory reading the history of probe "
                              "'%s'", serial);
            break;
        }
        if ((rc = bgi_pg_fit_row(res, i, 4, &h.fits[h.n], err)) != BG_OK)
            break;
        pgv_text(h.when[h.n], BG_TIME, res, i, 3);
        h.n++;
    }
    PQclear(res);
    if (rc == BG_OK && !stop && probe)
        cb(serial, h.fits, h.when, h.n, h.unfitted, ctx);
    free(h.fits);
    free(h.when);
    return rc;
}

/* What QA history needs of a fit (as the SQLite backend's lot_history): no covariance, no
** statistics. */
static int hist_row(const PGresult *res, int i, bg_fit_row *f, bg_error *err)
{
    memset(f, 0, offsetof(bg_fit_row, cov));
    f->id = pgv_ll(res, i, 0);
    f->run_id = pgv_ll(res, i, 1);
    f->probe_id = pgv_ll(res, i, 2);
    pgv_text(f->serial, sizeof f->serial, res, i, 17);
    int rc = row_model(res, i, 3, f, err);
    if (rc != BG_OK)
        return rc;
    f->n = (size_t)pgv_ll(res, i, 12);
    f->dof = (size_t)pgv_ll(res, i, 13);
    f->t_min_k = pgv_dbl(res, i, 14);
    f->t_max_k = pgv_dbl(res, i, 15);
    f->chi2 = f->cov_scale = f->rms_mk = f->max_abs_mk = NAN;
    f->program_version[0] = f->created_at[0] = '\0';
    return BG_OK;
}

int bgi_pg_lot_history(bgi_conn *c, long long lot_id, const char *since, bg_lot_history_cb cb,
                       void *ctx, bg_error *err)
{
    bg_fit_row *fits = NULL;
    char (*when)[BG_TIME] = NULL;
    size_t n = 0, cap = 0;
    long long probe = -1;
    /* the newest fit of each run that counts toward the lot, a probe's runs oldest first */
    int moved = 1, stop = 0, rc = bgi_pg_lot_moved(c, lot_id, &moved, err);
    if (rc != BG_OK)
        return rc;
    PGresult *res = by_id_since(c, moved ? LOT_HISTORY_SQL(BGI_PG_LOT_AT_RUN, BGI_PG_PROBE_WAS_IN)
                                : LOT_HISTORY_SQL(BGI_PG_PLAIN_AT_RUN, BGI_PG_PLAIN_WAS_IN),
                                lot_id, since, &rc, err, "cannot read the lot's fits");
    for (int i = 0; res && i < PQntuples(res); i++) {
        long long pid = pgv_ll(res, i, 2);
        if (pid != probe) {
            if (probe >= 0 && cb(fits[0].serial, fits, when, n, ctx)) {
                stop = 1;
                break;
            }
            probe = pid, n = 0;
        }
        if (n == cap) {
            size_t nc = cap ? 2 * cap : 8;
            bg_fit_row *nf = realloc(fits, nc * sizeof *nf);
            if (nf) {
                fits = nf;
                memset(fits + cap, 0, (nc - cap) * sizeof *nf);
            }
            char (*nw)[BG_TIME] = realloc(when, nc * sizeof *nw);
            if (nw)
                when = nw;
            if (!nf || !nw) {
                rc = bg_error_set(err, BG_ENOMEM, "out of memory");
                break;
            }
            cap = nc;
        }
        if ((rc = hist_row(res, i, &fits[n], err)) != BG_OK)
            break;
        pgv_text(when[n], BG_TIME, res, i, 16);
        n++;
    }
    PQclear(res);
    if (rc == BG_OK && !stop && probe >= 0)
        cb(fits[0].serial, fits, when, n, ctx);
    free(fits);
    free(when);
    return rc;
}

/* ---- the export walk ---- */

static int run_readings(bgi_conn *c, const bg_run *r, const bg_export_cbs *cbs, void *ctx,
                        int *stop, bg_error *err)
{
    bg_reading_row g;
    int rc;
    PGresult *res = by_id(c, PGS_EXPORT_READINGS, BGI_PG_READINGS_OF_RUN, r->id, &rc, err,
                          "cannot read readings");
    for (int i = 0; res && i < PQntuples(res); i++) {
        bgi_pg_reading_row(res, i, &g);
        if (cbs->reading && cbs->reading(&g, ctx)) {
            *stop = 1;
            break;
        }
    }
    PQclear(res);
    return rc;
}

static int probe_runs(bgi_conn *c, const bg_probe *p, const bg_export_cbs *cbs, void *ctx,
                      int *stop, bg_error *err)
{
    bg_run r;
    int rc;
    PGresult *res = by_id(c, PGS_EXPORT_RUNS, "SELECT " BGI_PG_RUN_COLS BGI_PG_RUN_FROM
                          "WHERE r.probe_id = $1 ORDER BY r.id", p->id, &rc, err,
                          "cannot read runs");
    for (int i = 0; res && rc == BG_OK && !*stop && i < PQntuples(res); i++) {
        bgi_pg_run_row(res, i, &r);
        if ((cbs->run && cbs->run(&r, ctx)) ||
            (rc = run_readings(c, &r, cbs, ctx, stop, err)) != BG_OK || *stop ||
            (cbs->run_end && cbs->run_end(&r, ctx)))
            *stop = 1;
    }
    PQclear(res);
    return rc;
}

static int probe_fits(bgi_conn *c, const bg_probe *p, const bg_export_cbs *cbs, void *ctx,
                      int *stop, bg_error *err)
{
    bg_fit_row f;
    int rc;
    PGresult *res = by_id(c, PGS_EXPORT_FITS, "SELECT " FIT_COLS FIT_FROM "WHERE r.probe_id = "
                          "$1 ORDER BY f.id", p->id, &rc, err, "cannot read fits");
    for (int i = 0; res && i < PQntuples(res); i++) {
        if ((rc = bgi_pg_fit_row(res, i, 0, &f, err)) != BG_OK)
            break;
        if (cbs->fit && cbs->fit(&f, ctx)) {
            *stop = 1;
            break;
        }
    }
    PQclear(res);
    return rc;
}

static int one_probe(bgi_conn *c, const bg_probe *p, const bg_export_cbs *cbs, void *ctx,
                     int *stop, bg_error *err)
{
    int rc = BG_OK;
    if ((cbs->probe && cbs->probe(p, ctx)) ||
        (rc = probe_runs(c, p, cbs, ctx, stop, err)) != BG_OK || *stop ||
        (cbs->fits && cbs->fits(p, ctx)) ||
        (rc = probe_fits(c, p, cbs, ctx, stop, err)) != BG_OK || *stop ||
        (cbs->probe_end && cbs->probe_end(p, ctx)))
        *stop = 1;
    return rc;
}

int bgi_pg_export_each(bgi_conn *c, const char *serial, long long lot_id,
                       const bg_export_cbs *cbs, void *ctx, bg_error *err)
{
    char buf[32];
    const char *v[1] = { serial ? serial : buf };
    struct pgp p = { 1, 1, v, NULL, NULL, NULL };
    bg_probe pr;
    int own, stop = 0, rc = bgi_pg_read_begin(c, &own, err);
    if (rc != BG_OK)
        return rc;
    snprintf(buf, sizeof buf, "%lld", lot_id);
    /* a lot's probes: those in it now */
    PGresult *res = bgi_pg_exec(c, -1, serial ? "SELECT " BGI_PG_PROBE_COLS " FROM probe p "
                                "JOIN lot l ON l.id = " BGI_PG_LOT_NOW("p") " WHERE p.serial = "
                                "$1" : "SELECT " BGI_PG_PROBE_COLS " FROM probe p JOIN lot l ON "
                                "l.id = " BGI_PG_LOT_NOW("p") " WHERE " BGI_PG_PROBE_NOW_IN("p",
                                "$1::bigint") " ORDER BY p.serial", &p, &rc, err,
                                "cannot read probes");
    for (int i = 0; res && rc == BG_OK && !stop && i < PQntuples(res); i++) {
        bgi_pg_probe_row(res, i, &pr);
        rc = one_probe(c, &pr, cbs, ctx, &stop, err);
    }
    PQclear(res);
    bgi_pg_read_end(c, own);
    return rc;
}
