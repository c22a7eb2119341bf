/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Runs, readings, exclusions and fits in the calibration database.  An import is one
** transaction; readings carry both the raw reference value and the corrected temperature. */
#include <math.h>
#include <stdio.h>
#include <stddef.h>
#include <stdlib.h>
#include <string.h>

#include "bandgap/units.h"
#include "bandgap/bandgap.h"
#include "store_priv.h"

static int cached(bg_store *st, int which, const char *sql, sqlite3_stmt **q, bg_error *err)
{
    if (!st->cache[which] && sqlite3_prepare_v3(st->db, sql, -1, SQLITE_PREPARE_PERSISTENT,
                                                &st->cache[which], NULL) != SQLITE_OK)
        return bgi_db_fail(st, err, "cannot prepare a query");
    *q = st->cache[which];
    sqlite3_reset(*q);
    sqlite3_clear_bindings(*q);
    return BG_OK;
}

/* Apply the reference's correction to one reading: GUM H.3 style linear correction, or
** IEC 60751 for a platinum reference read in ohm. */
static int correct(const bg_ref *ref, const bg_readings *rs, const bg_reading *r, double *t_k,
                   bg_error *err)
{
    if (rs->ref_ohms)
        return bg_cvd_t_from_r(ref->cvd_r0_ohm, ref->cvd_a, ref->cvd_b, ref->cvd_c, r->t_raw,
                               t_k, err);
    *t_k = r->pt.t_k;
    if (ref && ref->kind == BG_REF_LINEAR)
        *t_k += ref->lin_c0_k + ref->lin_c1 * (r->pt.t_k - ref->lin_t0_k);
    if (!(*t_k > 0.0))
        return bg_error_set(err, BG_EINVAL, "the corrected temperature is at or below 0 K");
    return BG_OK;
}

int bg_store_import(bg_store *st, const bg_readings *rs, const bg_run *meta, long long *run_id,
                    bg_error *err)
{
    sqlite3_stmt *q = NULL, *ins = NULL;
    bg_probe probe;
    bg_ref ref;
    int have_ref = meta->ref_ident[0] != '\0', rc, own;
    char now[BG_TIME];
    const char *src = meta->source[0] ? meta->source : "-";
    const char *unit = rs->ref_ohms ? "ohm" : bg_units_symbol(rs->t_unit, 1);

    if (rs->n == 0)
        return bg_error_set(err, BG_EINVAL, "%s: no readings to import", src);
    if ((rc = bgi_check_text("operator", meta->operator_name, BG_TEXT, 0, err)) != BG_OK ||
        (rc = bgi_check_text("medium", meta->medium, BG_TEXT, 0, err)) != BG_OK ||
        (rc = bgi_check_text("note", meta->note, BG_NOTE, 0, err)) != BG_OK)
        return rc;
    if (meta->started_at[0] && !bg_csv_valid_time(meta->started_at))
        return bg_error_set(err, BG_EINVAL, "start time '%s': not an ISO 8601 date-time",
                            meta->started_at);
    if ((rc = bgi_tx_begin(st, &own, err)) != BG_OK)
        return rc;
    probe.id = bgi_probe_id(st, meta->serial, err, &rc);
    if (rc != BG_OK)
        goto done;
    if (have_ref && (rc = bg_store_ref_get(st, meta->ref_ident, &ref, err)) != BG_OK)
        goto done;
    if (rs->ref_ohms && !(have_ref && ref.kind == BG_REF_CVD)) {
        rc = bg_error_set(err, BG_EINVAL, "%s: column 'ref_ohms' needs a reference thermometer "
                          "with Callendar-Van Dusen coefficients (--ref)", src);
        goto done;
    }
    if (!rs->ref_ohms && have_ref && ref.kind == BG_REF_CVD) {
        rc = bg_error_set(err, BG_EINVAL, "%s: reference '%s' is read as a platinum resistance: "
                          "the file needs a 'ref_ohms' column", src, ref.ident);
        goto done;
    }
    /* The readings get the ids after the largest one: contiguous, since this transaction
    ** holds the write lock. */
    long long first = 1;
    if ((rc = bgi_prepare(st, "SELECT coalesce(max(id), 0) + 1 FROM reading", &q, err)) != BG_OK)
        goto done;
    if (sqlite3_step(q) != SQLITE_ROW) {
        rc = bgi_db_fail(st, err, "cannot read the readings");
        goto done;
    }
    first = sqlite3_column_int64(q, 0);
    sqlite3_finalize(q);
    q = NULL;
    if ((rc = bgi_prepare(st, "INSERT INTO run(probe_id, reference_id, operator, medium, "
                          "ambient, excitation, started_at, source, note, imported_at, "
                          "t_raw_unit, first_reading, nreadings) "
                          "VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?)", &q, err)) != BG_OK)
        goto done;
    sqlite3_bind_int64(q, 1, probe.id);
    if (have_ref)
        sqlite3_bind_int64(q, 2, ref.id);
    else
        sqlite3_bind_null(q, 2);
    bgi_bind_text_or_null(q, 3, meta->operator_name);
    bgi_bind_text_or_null(q, 4, meta->medium);
    bgi_bind_text_or_null(q, 5, meta->ambient);
    bgi_bind_text_or_null(q, 6, meta->excitation);
    bg_store_now(now, sizeof now);
    sqlite3_bind_text(q, 7, meta->started_at[0] ? meta->started_at
                            : rs->v[0].time[0] ? rs->v[0].time : now, -1, SQLITE_TRANSIENT);
    sqlite3_bind_text(q, 8, src, -1, SQLITE_TRANSIENT);
    bgi_bind_text_or_null(q, 9, meta->note);
    sqlite3_bind_text(q, 10, now, -1, SQLITE_TRANSIENT);
    sqlite3_bind_text(q, 11, unit, -1, SQLITE_STATIC);
    sqlite3_bind_int64(q, 12, first);
    sqlite3_bind_int64(q, 13, (sqlite3_int64)rs->n);
    if (sqlite3_step(q) != SQLITE_DONE) {
        rc = bgi_db_fail(st, err, "cannot create the run");
        goto done;
    }
    long long rid = sqlite3_last_insert_rowid(st->db);
    /* Ids are assigned by SQLite as the largest plus one (cheaper than explicit ids), which
    ** under the write lock gives exactly first, first + 1, ...; checked below. */
    /* BATCH readings per statement: one step instead of BATCH (a third less time for a
    ** large file); the rest one by one */
    enum { BATCH = 64, NCOL = 9 };
    sqlite3_stmt *batch = NULL;
    if (rs->n >= BATCH) {
        char sql[128 + BATCH * 32];
        size_t len = (size_t)snprintf(sql, sizeof sql, "INSERT INTO reading(id, run_id, line, "
                                      "t_raw, t_k, r_ohm, u_t_k, u_r_ohm, time, note) VALUES ");
        for (int k = 0; k < BATCH; k++)
            len += (size_t)snprintf(sql + len, sizeof sql - len, "%s(NULL,?,?,?,?,?,?,?,?,?)",
                                    k ? "," : "");
        if ((rc = cached(st, STMT_INSERT_READINGS, sql, &batch, err)) != BG_OK)
            goto done;
    }
    if ((rc = cached(st, STMT_INSERT_READING, "INSERT INTO reading(id, run_id, line, t_raw, "
                     "t_k, r_ohm, u_t_k, u_r_ohm, time, note) VALUES (NULL,?,?,?,?,?,?,?,?,?)",
                     &ins, err)) != BG_OK)
        goto done;
    for (size_t i = 0; i < rs->n;) {
        size_t nb = batch && rs->n - i >= BATCH ? BATCH : 1;
        sqlite3_stmt *qi = nb > 1 ? batch : ins;
        sqlite3_reset(qi);
        for (size_t k = 0; k < nb; k++) {
            const bg_reading *r = &rs->v[i + k];
            double t_k;
            int b = (int)(k * NCOL);
            if (correct(have_ref ? &ref : NULL, rs, r, &t_k, err) != BG_OK) {
                bg_error_prefix(err, "%s:%zu: field '%s'", src, r->pt.line,
                                rs->ref_ohms ? "ref_ohms" : "temperature");
                rc = BG_EINVAL;
                goto done;
            }
            sqlite3_bind_int64(qi, b + 1, rid);
            sqlite3_bind_int64(qi, b + 2, (sqlite3_int64)r->pt.line);
            sqlite3_bind_double(qi, b + 3, r->t_raw);
            sqlite3_bind_double(qi, b + 4, t_k);
            sqlite3_bind_double(qi, b + 5, r->pt.r_ohm);
            sqlite3_bind_double(qi, b + 6, r->pt.u_t_k);
            sqlite3_bind_double(qi, b + 7, r->pt.u_r_ohm);
            if (r->time[0])
                sqlite3_bind_text(qi, b + 8, r->time, -1, SQLITE_STATIC);
            else
                sqlite3_bind_null(qi, b + 8);
            if (r->note)
                sqlite3_bind_text(qi, b + 9, r->note, -1, SQLITE_STATIC);
            else
                sqlite3_bind_null(qi, b + 9);
        }
        if (sqlite3_step(qi) != SQLITE_DONE) {
            if (nb > 1)
                rc = bg_error_set(err, BG_EINVAL, "%s:%zu..%zu: cannot store the readings: %s",
                                  src, rs->v[i].pt.line, rs->v[i + nb - 1].pt.line,
                                  sqlite3_errmsg(st->db));
            else
                rc = bg_error_set(err, BG_EINVAL, "%s:%zu: cannot store the reading: %s", src,
                                  rs->v[i].pt.line, sqlite3_errmsg(st->db));
            goto done;
        }
        i += nb;
    }
    if (batch)
        sqlite3_reset(batch);
    sqlite3_reset(ins);
    if (sqlite3_last_insert_rowid(st->db) != first + (long long)rs->n - 1) {
        rc = bg_error_set(err, BG_EDB, "%s: the readings did not get contiguous ids", src);
        goto done;
    }
    if (run_id)
        *run_id = rid;
done:
    if (ins)
        sqlite3_reset(ins);
    sqlite3_finalize(q);
    return bgi_tx_end(st, own, rc, err);
}

#define RUN_COLS "r.id, r.probe_id, coalesce(r.reference_id, 0), p.serial, " \
    "coalesce(x.ident, ''), r.operator, r.medium, r.ambient, r.excitation, r.started_at, " \
    "r.source, r.note, r.imported_at, " \
    "r.nreadings, " \
    "(SELECT count(*) FROM exclusion e WHERE e.reading_id BETWEEN r.first_reading " \
    "  AND r.first_reading + r.nreadings - 1), " \
    "(SELECT count(*) FROM fit f WHERE f.run_id = r.id)"
#define RUN_FROM " FROM run r JOIN probe p ON r.probe_id = p.id " \
    "LEFT JOIN reference x ON r.reference_id = x.id "

static void run_row(sqlite3_stmt *q, bg_run *r)
{
    r->id = sqlite3_column_int64(q, 0);
    r->probe_id = sqlite3_column_int64(q, 1);
    r->reference_id = sqlite3_column_int64(q, 2);
    bgi_copy_text(r->serial, sizeof r->serial, q, 3);
    bgi_copy_text(r->ref_ident, sizeof r->ref_ident, q, 4);
    bgi_copy_text(r->operator_name, sizeof r->operator_name, q, 5);
    bgi_copy_text(r->medium, sizeof r->medium, q, 6);
    bgi_copy_text(r->ambient, sizeof r->ambient, q, 7);
    bgi_copy_text(r->excitation, sizeof r->excitation, q, 8);
    bgi_copy_text(r->started_at, sizeof r->started_at, q, 9);
    bgi_copy_text(r->source, sizeof r->source, q, 10);
    bgi_copy_text(r->note, sizeof r->note, q, 11);
    bgi_copy_text(r->imported_at, sizeof r->imported_at, q, 12);
    r->nreadings = sqlite3_column_int64(q, 13);
    r->nexcluded = sqlite3_column_int64(q, 14);
    r->nfits = sqlite3_column_int64(q, 15);
}

int bg_store_run_get(bg_store *st, long long run_id, bg_run *out, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(st, "SELECT " RUN_COLS RUN_FROM "WHERE r.id = ?", &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, run_id);
    int s = sqlite3_step(q);
    if (s == SQLITE_ROW)
        run_row(q, out);
    else if (s == SQLITE_DONE)
        rc = bg_error_set(err, BG_EINVAL, "no run %lld", run_id);
    else
        rc = bgi_db_fail(st, err, "cannot read runs");
    sqlite3_finalize(q);
    return rc;
}

int bg_store_run_latest(bg_store *st, long long probe_id, long long *run_id, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(st, "SELECT run_id FROM probe_latest_run WHERE probe_id = ?", &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, probe_id);
    int s = sqlite3_step(q);
    if (s == SQLITE_ROW && sqlite3_column_type(q, 0) != SQLITE_NULL)
        *run_id = sqlite3_column_int64(q, 0);
    else if (s == SQLITE_ROW || s == SQLITE_DONE)
        rc = bg_error_set(err, BG_EINVAL, "the probe has no calibration runs (import one with "
                          "'bandgap import FILE --probe SERIAL')");
    else
        rc = bgi_db_fail(st, err, "cannot read runs");
    sqlite3_finalize(q);
    return rc;
}

/* A listing filtered by probe or lot names one that exists, or says so. */
static int check_filter(bg_store *st, const char *serial, const char *lot_code, bg_error *err)
{
    int rc = BG_OK;
    if (serial) {
        bg_probe p;
        rc = bg_store_probe_get(st, serial, &p, err);
    }
    if (rc == BG_OK && lot_code) {
        bg_lot l;
        rc = bg_store_lot_get(st, lot_code, &l, err);
    }
    return rc;
}

int bg_store_run_each(bg_store *st, const char *serial, const char *lot_code, bg_run_cb cb,
                      void *ctx, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_run r;
    int rc = check_filter(st, serial, lot_code, err), s;
    if (rc != BG_OK)
        return rc;
    rc = bgi_prepare(st, "SELECT " RUN_COLS RUN_FROM "JOIN lot l ON p.lot_id = l.id "
                     "WHERE (?1 IS NULL OR p.serial = ?1) AND (?2 IS NULL OR l.code = ?2) "
                     "ORDER BY r.id", &q, err);
    if (rc != BG_OK)
        return rc;
    bgi_bind_text_or_null(q, 1, serial);
    bgi_bind_text_or_null(q, 2, lot_code);
    while ((s = sqlite3_step(q)) == SQLITE_ROW) {
        run_row(q, &r);
        if (cb(&r, ctx))
            break;
    }
    if (s != SQLITE_ROW && s != SQLITE_DONE)
        rc = bgi_db_fail(st, err, "cannot read runs");
    sqlite3_finalize(q);
    return rc;
}

int bg_store_reading_each(bg_store *st, long long run_id, bg_reading_cb cb, void *ctx,
                          bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_reading_row row;
    int rc = bgi_prepare(st, "SELECT g.id, g.run_id, g.line, g.t_raw, r.t_raw_unit, g.t_k, "
                         "g.r_ohm, g.u_t_k, g.u_r_ohm, g.time, g.note, e.reading_id IS NOT NULL, "
                         "e.reason, e.by_whom, e.at FROM run r JOIN reading g ON g.id BETWEEN "
                         "r.first_reading AND r.first_reading + r.nreadings - 1 AND g.run_id = "
                         "r.id LEFT JOIN exclusion e ON e.reading_id = g.id WHERE r.id = ? "
                         "ORDER BY g.id", &q, err), s;
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, run_id);
    while ((s = sqlite3_step(q)) == SQLITE_ROW) {
        row.id = sqlite3_column_int64(q, 0);
        row.run_id = sqlite3_column_int64(q, 1);
        row.line = (size_t)sqlite3_column_int64(q, 2);
        row.t_raw = sqlite3_column_double(q, 3);
        bgi_copy_text(row.t_raw_unit, sizeof row.t_raw_unit, q, 4);
        row.t_k = sqlite3_column_double(q, 5);
        row.r_ohm = sqlite3_column_double(q, 6);
        row.u_t_k = sqlite3_column_double(q, 7);
        row.u_r_ohm = sqlite3_column_double(q, 8);
        bgi_copy_text(row.time, sizeof row.time, q, 9);
        bgi_copy_text(row.note, sizeof row.note, q, 10);
        row.excluded = sqlite3_column_int(q, 11);
        bgi_copy_text(row.excl_reason, sizeof row.excl_reason, q, 12);
        bgi_copy_text(row.excl_by, sizeof row.excl_by, q, 13);
        bgi_copy_text(row.excl_at, sizeof row.excl_at, q, 14);
        if (cb(&row, ctx))
            break;
    }
    if (s != SQLITE_ROW && s != SQLITE_DONE)
        rc = bgi_db_fail(st, err, "cannot read readings");
    sqlite3_finalize(q);
    return rc;
}

void bg_store_points_release(bg_store_points *p)
{
    if (!p)
        return;
    free(p->pts);
    free(p->ids);
    memset(p, 0, sizeof *p);
}

/* Append the point in columns col .. col+5 (id, t_k, r_ohm, u_t_k, u_r_ohm, line) of 'q'. */
static int points_push(bg_store_points *sp, sqlite3_stmt *q, int col)
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
    sp->ids[sp->n] = sqlite3_column_int64(q, col);
    pt->t_k = sqlite3_column_double(q, col + 1);
    pt->r_ohm = sqlite3_column_double(q, col + 2);
    pt->u_t_k = sqlite3_column_double(q, col + 3);
    pt->u_r_ohm = sqlite3_column_double(q, col + 4);
    pt->line = (size_t)sqlite3_column_int64(q, col + 5);
    sp->n++;
    return BG_OK;
}

int bg_store_run_points(bg_store *st, long long run_id, bg_store_points *out, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = cached(st, STMT_RUN_POINTS, "SELECT g.id, g.t_k, g.r_ohm, g.u_t_k, g.u_r_ohm, "
                    "g.line FROM run r JOIN reading g ON g.id BETWEEN r.first_reading AND "
                    "r.first_reading + r.nreadings - 1 AND g.run_id = r.id WHERE r.id = ? AND "
                    "NOT EXISTS (SELECT 1 FROM exclusion e WHERE e.reading_id = g.id) "
                    "ORDER BY g.id", &q, err), s;
    if (rc != BG_OK)
        return rc;
    out->n = 0;
    sqlite3_bind_int64(q, 1, run_id);
    while ((s = sqlite3_step(q)) == SQLITE_ROW)
        if (points_push(out, q, 0) != BG_OK) {
            sqlite3_reset(q);
            return bg_error_set(err, BG_ENOMEM, "out of memory reading run %lld", run_id);
        }
    if (s != SQLITE_DONE)
        rc = bgi_db_fail(st, err, "cannot read readings");
    sqlite3_reset(q);
    return rc;
}

int bg_store_exclude(bg_store *st, long long reading_id, const char *why, const char *by,
                     bg_error *err)
{
    sqlite3_stmt *q = NULL;
    char now[BG_TIME];
    int rc, own;

    if ((rc = bgi_check_text("reason", why, BG_NOTE, 1, err)) != BG_OK ||
        (rc = bgi_check_text("name", by, BG_TEXT, 0, err)) != BG_OK)
        return rc;
    if ((rc = bgi_tx_begin(st, &own, err)) != BG_OK)
        return rc;
    rc = bgi_prepare(st, "SELECT (SELECT count(*) FROM reading WHERE id = ?1), "
                     "(SELECT count(*) FROM exclusion WHERE reading_id = ?1)", &q, err);
    if (rc == BG_OK) {
        sqlite3_bind_int64(q, 1, reading_id);
        if (sqlite3_step(q) != SQLITE_ROW)
            rc = bgi_db_fail(st, err, "cannot read readings");
        else if (sqlite3_column_int(q, 0) == 0)
            rc = bg_error_set(err, BG_EINVAL, "no reading %lld", reading_id);
        else if (sqlite3_column_int(q, 1) != 0)
            rc = bg_error_set(err, BG_EINVAL, "reading %lld is already excluded", reading_id);
        sqlite3_finalize(q);
        q = NULL;
    }
    if (rc == BG_OK)
        rc = bgi_prepare(st, "INSERT INTO exclusion(reading_id, reason, by_whom, at) "
                         "VALUES (?,?,?,?)", &q, err);
    if (rc == BG_OK) {
        sqlite3_bind_int64(q, 1, reading_id);
        sqlite3_bind_text(q, 2, why, -1, SQLITE_TRANSIENT);
        sqlite3_bind_text(q, 3, by && *by ? by : "unknown", -1, SQLITE_TRANSIENT);
        sqlite3_bind_text(q, 4, bg_store_now(now, sizeof now), -1, SQLITE_TRANSIENT);
        if (sqlite3_step(q) != SQLITE_DONE)
            rc = bgi_db_fail(st, err, "cannot record the exclusion");
    }
    sqlite3_finalize(q);
    return bgi_tx_end(st, own, rc, err);
}

/* ---- fits ---- */

/* The covariance as little-endian IEEE doubles: exact, and cheap to write for a whole lot. */
static void put_le_double(unsigned char *p, double v)
{
    unsigned long long u;
    memcpy(&u, &v, sizeof u);
    for (int i = 0; i < 8; i++)
        p[i] = (unsigned char)(u >> (8 * i));
}

static double get_le_double(const unsigned char *p)
{
    unsigned long long u = 0;
    double v;
    for (int i = 7; i >= 0; i--)
        u = (u << 8) | p[i];
    memcpy(&v, &u, sizeof v);
    return v;
}

/* The reading ids as a JSON array (ids are positive). */
static char *ids_json(const long long *ids, size_t n)
{
    size_t cap = n * 21 + 3, k = 0;
    char *s = malloc(cap), digits[24];
    if (!s)
        return NULL;
    s[k++] = '[';
    for (size_t i = 0; i < n; i++) {
        unsigned long long v = (unsigned long long)ids[i];
        size_t d = 0;
        if (i)
            s[k++] = ',';
        do
            digits[d++] = (char)('0' + v % 10);
        while ((v /= 10) != 0);
        while (d)
            s[k++] = digits[--d];
    }
    s[k++] = ']';
    s[k] = '\0';
    return s;
}

/* The values of a fit row, as bound by every insert below. */
static int fitrow_of(long long run_id, const bg_fit *fit, const long long *reading_ids,
                     struct bgi_fitrow *r, bg_error *err)
{
    r->run_id = run_id;
    bg_model_name(&fit->model, r->model, sizeof r->model);
    r->t0_k = fit->model.kind == BG_MODEL_BETA ? fit->model.t0_k : NAN;
    r->npar = fit->npar;
    for (size_t i = 0; i < BG_MODEL_MAXPAR; i++)
        r->coef[i] = i < fit->npar ? fit->model.coef[i] : 0.0;
    r->covlen = 0;
    if (fit->dof > 0) {
        for (size_t i = 0; i < fit->npar * fit->npar; i++)
            put_le_double(r->cov + 8 * i, fit->cov[i]);
        r->covlen = 8 * fit->npar * fit->npar;
    }
    r->n = fit->n, r->dof = fit->dof, r->weighted = fit->weighted;
    r->chi2 = fit->chi2, r->cov_scale = fit->cov_scale;
    r->rms_mk = fit->rms_mk, r->max_abs_mk = fit->max_abs_mk;
    r->t_min_k = fit->t_min_k, r->t_max_k = fit->t_max_k;
    if (!(r->ids = ids_json(reading_ids, fit->n)))
        return bg_error_set(err, BG_ENOMEM, "out of memory storing a fit");
    return BG_OK;
}

enum { FIT_NCOL = 23 };
#define FIT_INSERT "INSERT INTO fit(run_id, model, t0_k, npar, c0, c1, c2, c3, c4, c5, cov, " \
    "n, dof, weighted, chi2, cov_scale, rms_mk, max_abs_mk, t_min_k, t_max_k, reading_ids, " \
    "program_version, created_at, id) VALUES "

/* Bind row 'r' at parameter offset 'b'; with 'with_id', the id goes last. */
static void fitrow_bind(sqlite3_stmt *q, int b, const struct bgi_fitrow *r, const char *now,
                        int with_id)
{
    sqlite3_bind_int64(q, b + 1, r->run_id);
    sqlite3_bind_text(q, b + 2, r->model, -1, SQLITE_STATIC);
    if (isnan(r->t0_k))
        sqlite3_bind_null(q, b + 3);
    else
        sqlite3_bind_double(q, b + 3, r->t0_k);
    sqlite3_bind_int64(q, b + 4, (sqlite3_int64)r->npar);
    for (size_t i = 0; i < BG_MODEL_MAXPAR; i++) {
        if (i < r->npar)
            sqlite3_bind_double(q, b + (int)(5 + i), r->coef[i]);
        else
            sqlite3_bind_null(q, b + (int)(5 + i));
    }
    if (r->covlen)
        sqlite3_bind_blob(q, b + 11, r->cov, (int)r->covlen, SQLITE_STATIC);
    else
        sqlite3_bind_null(q, b + 11);
    sqlite3_bind_int64(q, b + 12, (sqlite3_int64)r->n);
    sqlite3_bind_int64(q, b + 13, (sqlite3_int64)r->dof);
    sqlite3_bind_int(q, b + 14, r->weighted);
    sqlite3_bind_double(q, b + 15, r->chi2);
    if (isfinite(r->cov_scale))
        sqlite3_bind_double(q, b + 16, r->cov_scale);
    else
        sqlite3_bind_null(q, b + 16);
    sqlite3_bind_double(q, b + 17, r->rms_mk);
    sqlite3_bind_double(q, b + 18, r->max_abs_mk);
    sqlite3_bind_double(q, b + 19, r->t_min_k);
    sqlite3_bind_double(q, b + 20, r->t_max_k);
    sqlite3_bind_text(q, b + 21, r->ids, -1, SQLITE_STATIC);
    sqlite3_bind_text(q, b + 22, bg_version(), -1, SQLITE_STATIC);
    sqlite3_bind_text(q, b + 23, now, -1, SQLITE_TRANSIENT);
    if (with_id)
        sqlite3_bind_int64(q, b + 24, r->id);
}

void bgi_fitq_drop(bg_store *st)
{
    for (size_t i = 0; i < st->nfitq; i++)
        free(st->fitq[i].ids);
    st->nfitq = 0;
}

int bgi_fitq_flush(bg_store *st, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    char now[BG_TIME];
    int rc = BG_OK;
    size_t done = 0;
    if (st->nfitq == 0)
        return BG_OK;
    bg_store_now(now, sizeof now);
    while (rc == BG_OK && done < st->nfitq) {
        size_t nb = st->nfitq - done == BGI_FITQ ? BGI_FITQ : 1;
        if (nb == BGI_FITQ) {
            char sql[512 + BGI_FITQ * 80];
            size_t len = (size_t)snprintf(sql, sizeof sql, "%s", FIT_INSERT);
            for (size_t k = 0; k < BGI_FITQ; k++)
                len += (size_t)snprintf(sql + len, sizeof sql - len, "%s(?,?,?,?,?,?,?,?,?,?,"
                                        "?,?,?,?,?,?,?,?,?,?,?,?,?,?)", k ? "," : "");
            rc = cached(st, STMT_INSERT_FITS, sql, &q, err);
        } else
            rc = cached(st, STMT_INSERT_FIT_ID, FIT_INSERT "(?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,"
                        "?,?,?,?,?,?)", &q, err);
        if (rc != BG_OK)
            break;
        for (size_t k = 0; k < nb; k++)
            fitrow_bind(q, (int)(k * (FIT_NCOL + 1)), &st->fitq[done + k], now, 1);
        if (sqlite3_step(q) != SQLITE_DONE)
            rc = bgi_db_fail(st, err, "cannot store the fits");
        sqlite3_reset(q);
        done += nb;
    }
    bgi_fitq_drop(st);
    return rc;
}

int bg_store_fit_queue(bg_store *st, long long run_id, const bg_fit *fit,
                       const long long *reading_ids, long long *fit_id, bg_error *err)
{
    int rc;
    if (sqlite3_get_autocommit(st->db))
        return bg_error_set(err, BG_EINTERNAL, "fits are queued inside bg_store_begin only");
    if (!st->next_fit_id) {
        /* under the write lock of the transaction nobody else inserts: ids from here on */
        sqlite3_stmt *q = NULL;
        if ((rc = bgi_prepare(st, "SELECT coalesce(max(id), 0) + 1 FROM fit", &q, err)) !=
            BG_OK)
            return rc;
        if (sqlite3_step(q) == SQLITE_ROW)
            st->next_fit_id = sqlite3_column_int64(q, 0);
        sqlite3_finalize(q);
        if (!st->next_fit_id)
            return bgi_db_fail(st, err, "cannot read the fits");
    }
    if (st->nfitq == BGI_FITQ && (rc = bgi_fitq_flush(st, err)) != BG_OK)
        return rc;
    struct bgi_fitrow *r = &st->fitq[st->nfitq];
    if ((rc = fitrow_of(run_id, fit, reading_ids, r, err)) != BG_OK)
        return rc;
    r->id = st->next_fit_id++;
    st->nfitq++;
    if (fit_id)
        *fit_id = r->id;
    return BG_OK;
}

int bg_store_fit_flush(bg_store *st, bg_error *err)
{
    return bgi_fitq_flush(st, err);
}

int bg_store_fit_save(bg_store *st, long long run_id, const bg_fit *fit,
                      const long long *reading_ids, long long *fit_id, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    char now[BG_TIME];
    struct bgi_fitrow r;
    int rc, own;

    if ((rc = bgi_tx_begin(st, &own, err)) != BG_OK)
        return rc;
    /* queued fits first: their ids come before this one's */
    if ((rc = bgi_fitq_flush(st, err)) != BG_OK)
        goto out;
    if ((rc = fitrow_of(run_id, fit, reading_ids, &r, err)) != BG_OK)
        goto out;
    r.id = st->next_fit_id ? st->next_fit_id++ : 0;
    if ((rc = cached(st, r.id ? STMT_INSERT_FIT_ID : STMT_INSERT_FIT, r.id ?
                     FIT_INSERT "(?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?)" :
                     FIT_INSERT "(?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,NULL)", &q,
                     err)) == BG_OK) {
        fitrow_bind(q, 0, &r, bg_store_now(now, sizeof now), r.id != 0);
        if (sqlite3_step(q) != SQLITE_DONE)
            rc = bgi_db_fail(st, err, "cannot store the fit");
        else if (fit_id)
            *fit_id = sqlite3_last_insert_rowid(st->db);
        sqlite3_reset(q);
    }
    free(r.ids);
out:
    return bgi_tx_end(st, own, rc, err);
}

#define FIT_COLS "f.id, f.run_id, r.probe_id, p.serial, f.model, f.t0_k, f.npar, f.c0, f.c1, " \
    "f.c2, f.c3, f.c4, f.c5, f.cov, f.n, f.dof, f.weighted, f.chi2, f.cov_scale, f.rms_mk, " \
    "f.max_abs_mk, f.t_min_k, f.t_max_k, f.program_version, f.created_at"
#define FIT_FROM " FROM fit f JOIN run r ON f.run_id = r.id JOIN probe p ON r.probe_id = p.id "

/* The model of a fit row from columns col .. col + 8: name, t0_k, npar, c0 .. c5. */
static int row_model(sqlite3_stmt *q, int col, bg_fit_row *f, bg_error *err)
{
    char name[16];
    bgi_copy_text(name, sizeof name, q, col);
    if (bg_model_parse(name, &f->model, err) != BG_OK)
        return BG_EINVAL;
    if (sqlite3_column_type(q, col + 1) != SQLITE_NULL)
        f->model.t0_k = sqlite3_column_double(q, col + 1);
    f->npar = (size_t)sqlite3_column_int64(q, col + 2);
    if (f->npar != bg_model_npar(&f->model))
        return bg_error_set(err, BG_EDB, "fit %lld: %zu coefficients for model '%s'", f->id,
                            f->npar, name);
    for (size_t i = 0; i < f->npar; i++)
        f->model.coef[i] = sqlite3_column_double(q, col + 3 + (int)i);
    return BG_OK;
}

static int fit_row(sqlite3_stmt *q, bg_fit_row *f, bg_error *err)
{
    memset(f, 0, sizeof *f);
    f->id = sqlite3_column_int64(q, 0);
    f->run_id = sqlite3_column_int64(q, 1);
    f->probe_id = sqlite3_column_int64(q, 2);
    bgi_copy_text(f->serial, sizeof f->serial, q, 3);
    int rc = row_model(q, 4, f, err);
    if (rc != BG_OK)
        return rc;
    const unsigned char *cov = sqlite3_column_blob(q, 13);
    if (cov && (size_t)sqlite3_column_bytes(q, 13) == 8 * f->npar * f->npar) {
        for (size_t k = 0; k < f->npar * f->npar; k++)
            f->cov[k] = get_le_double(cov + 8 * k);
        f->has_cov = 1;
    } else {
        for (size_t i = 0; i < f->npar * f->npar; i++)
            f->cov[i] = NAN;
    }
    f->n = (size_t)sqlite3_column_int64(q, 14);
    f->dof = (size_t)sqlite3_column_int64(q, 15);
    f->weighted = sqlite3_column_int(q, 16);
    f->chi2 = sqlite3_column_double(q, 17);
    f->cov_scale = sqlite3_column_type(q, 18) == SQLITE_NULL ? NAN : sqlite3_column_double(q, 18);
    f->rms_mk = sqlite3_column_double(q, 19);
    f->max_abs_mk = sqlite3_column_double(q, 20);
    f->t_min_k = sqlite3_column_double(q, 21);
    f->t_max_k = sqlite3_column_double(q, 22);
    bgi_copy_text(f->program_version, sizeof f->program_version, q, 23);
    bgi_copy_text(f->created_at, sizeof f->created_at, q, 24);
    return BG_OK;
}

int bg_store_fit_get(bg_store *st, long long fit_id, bg_fit_row *out, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(st, "SELECT " FIT_COLS FIT_FROM "WHERE f.id = ?", &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, fit_id);
    int s = sqlite3_step(q);
    if (s == SQLITE_ROW)
        rc = fit_row(q, out, err);
    else if (s == SQLITE_DONE)
        rc = bg_error_set(err, BG_EINVAL, "no fit %lld", fit_id);
    else
        rc = bgi_db_fail(st, err, "cannot read fits");
    sqlite3_finalize(q);
    return rc;
}

int bg_store_fit_each(bg_store *st, const char *serial, const char *lot_code, bg_fit_cb cb,
                      void *ctx, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    bg_fit_row f;
    int rc = check_filter(st, serial, lot_code, err), s;
    if (rc != BG_OK)
        return rc;
    rc = bgi_prepare(st, "SELECT " FIT_COLS FIT_FROM "JOIN lot l ON p.lot_id = l.id "
                     "WHERE (?1 IS NULL OR p.serial = ?1) AND (?2 IS NULL OR l.code = ?2) "
                     "ORDER BY f.id", &q, err);
    if (rc != BG_OK)
        return rc;
    bgi_bind_text_or_null(q, 1, serial);
    bgi_bind_text_or_null(q, 2, lot_code);
    while ((s = sqlite3_step(q)) == SQLITE_ROW) {
        if ((rc = fit_row(q, &f, err)) != BG_OK || cb(&f, ctx))
            break;
    }
    if (rc == BG_OK && s != SQLITE_ROW && s != SQLITE_DONE)
        rc = bgi_db_fail(st, err, "cannot read fits");
    sqlite3_finalize(q);
    return rc;
}

int bg_store_fit_readings(bg_store *st, long long fit_id, long long *ids, size_t max, size_t *n,
                          bg_error *err)
{
    sqlite3_stmt *q = NULL;
    int rc = bgi_prepare(st, "SELECT reading_ids FROM fit WHERE id = ?", &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, fit_id);
    *n = 0;
    int s = sqlite3_step(q);
    if (s == SQLITE_ROW) {
        const char *p = (const char *)sqlite3_column_text(q, 0);
        while (p && *p && *n < max) {
            char *end;
            if (*p == '[' || *p == ',' || *p == ' ') {
                p++;
                continue;
            }
            if (*p == ']')
                break;
            long long v = strtoll(p, &end, 10);
            if (end == p) {
                rc = bg_error_set(err, BG_EDB, "fit %lld: unreadable list of readings", fit_id);
                break;
            }
            ids[(*n)++] = v;
            p = end;
        }
    } else if (s == SQLITE_DONE)
        rc = bg_error_set(err, BG_EINVAL, "no fit %lld", fit_id);
    else
        rc = bgi_db_fail(st, err, "cannot read the fit's readings");
    sqlite3_finalize(q);
    return rc;
}

int bg_store_lot_points_each(bg_store *st, const char *lot_code, bg_lot_points_cb cb, void *ctx,
                             bg_error *err)
{
    struct lp { long long probe, run; char serial[BG_TEXT]; } *list = NULL;
    sqlite3_stmt *q = NULL;
    bg_store_points sp = BG_STORE_POINTS_INIT;
    size_t n = 0, cap = 0;
    int rc, s;
    bg_lot lot;

    /* One read transaction: a consistent view of the lot, and no file locking per query. */
    int own = sqlite3_get_autocommit(st->db);
    if (own && sqlite3_exec(st->db, "BEGIN", NULL, NULL, NULL) != SQLITE_OK)
        return bgi_db_fail(st, err, "cannot start a read transaction");
    if ((rc = bg_store_lot_get(st, lot_code, &lot, err)) != BG_OK)
        goto end;
    /* First the lot's probes with their newest runs, in the order the probes were added;
    ** then each run's points by the range of its reading ids. */
    rc = bgi_prepare(st, "SELECT p.id, p.serial, coalesce((SELECT r.id FROM run r WHERE "
                     "r.probe_id = p.id ORDER BY r.started_at DESC, r.id DESC LIMIT 1), 0) "
                     "FROM probe p WHERE p.lot_id = ? ORDER BY p.id", &q, err);
    if (rc != BG_OK)
        goto end;
    sqlite3_bind_int64(q, 1, lot.id);
    while ((s = sqlite3_step(q)) == SQLITE_ROW) {
        if (n == cap) {
            size_t nc = cap ? 2 * cap : 256;
            struct lp *nl = realloc(list, nc * sizeof *nl);
            if (!nl) {
                rc = bg_error_set(err, BG_ENOMEM, "out of memory reading lot '%s'", lot_code);
                break;
            }
            list = nl, cap = nc;
        }
        list[n].probe = sqlite3_column_int64(q, 0);
        bgi_copy_text(list[n].serial, sizeof list[n].serial, q, 1);
        list[n].run = sqlite3_column_int64(q, 2);
        n++;
    }
    if (rc == BG_OK && s != SQLITE_DONE)
        rc = bgi_db_fail(st, err, "cannot read the lot's probes");
    sqlite3_finalize(q);
    for (size_t i = 0; rc == BG_OK && i < n; i++) {
        sp.n = 0;
        if (list[i].run && (rc = bg_store_run_points(st, list[i].run, &sp, err)) != BG_OK)
            break;
        if (cb(list[i].serial, list[i].probe, list[i].run, &sp, ctx))
            break;
    }
    free(list);
    bg_store_points_release(&sp);
end:
    if (own && !sqlite3_get_autocommit(st->db))
        sqlite3_exec(st->db, rc == BG_OK ? "COMMIT" : "ROLLBACK", NULL, NULL, NULL);
    return rc;
}

/* Ids of fits found by a first query, then read one by one (a fit read is a join). */
struct idlist { long long *id; long long *aux; char (*text)[BG_TEXT]; size_t n, cap; };

static int idlist_push(struct idlist *l, long long id, long long aux, const char *text)
{
    if (l->n == l->cap) {
        size_t cap = l->cap ? 2 * l->cap : 64;
        long long *a = realloc(l->id, cap * sizeof *a);
        if (a)
            l->id = a;
        long long *b = realloc(l->aux, cap * sizeof *b);
        if (b)
            l->aux = b;
        char (*t)[BG_TEXT] = realloc(l->text, cap * sizeof *t);
        if (t)
            l->text = t;
        if (!a || !b || !t)
            return BG_ENOMEM;
        l->cap = cap;
    }
    l->id[l->n] = id, l->aux[l->n] = aux;
    snprintf(l->text[l->n], BG_TEXT, "%s", text ? text : "");
    l->n++;
    return BG_OK;
}

static void idlist_free(struct idlist *l)
{
    free(l->id), free(l->aux), free(l->text);
}

int bg_store_probe_history(bg_store *st, const char *serial, const char *since,
                           bg_history_cb cb, void *ctx, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    struct idlist l = { NULL, NULL, NULL, 0, 0 };
    long long pid;
    int rc = BG_OK, s;

    pid = bgi_probe_id(st, serial, err, &rc);
    if (rc != BG_OK)
        return rc;
    rc = bgi_prepare(st, "SELECT r.id, r.started_at, coalesce((SELECT f.id FROM fit f WHERE "
                     "f.run_id = r.id ORDER BY f.id DESC LIMIT 1), 0) FROM run r WHERE "
                     "r.probe_id = ?1 AND (?2 IS NULL OR r.started_at >= ?2) "
                     "ORDER BY r.started_at, r.id", &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, pid);
    bgi_bind_text_or_null(q, 2, since);
    while ((s = sqlite3_step(q)) == SQLITE_ROW)
        if (idlist_push(&l, sqlite3_column_int64(q, 2), sqlite3_column_int64(q, 0),
                        (const char *)sqlite3_column_text(q, 1)) != BG_OK) {
            rc = bg_error_set(err, BG_ENOMEM, "out of memory");
            break;
        }
    if (rc == BG_OK && s != SQLITE_DONE)
        rc = bgi_db_fail(st, err, "cannot read runs");
    sqlite3_finalize(q);
    for (size_t i = 0; rc == BG_OK && i < l.n; i++) {
        bg_fit_row f;
        if (l.id[i] && (rc = bg_store_fit_get(st, l.id[i], &f, err)) != BG_OK)
            break;
        if (cb(l.text[i], l.aux[i], l.id[i] ? &f : NULL, ctx))
            break;
    }
    idlist_free(&l);
    return rc;
}

int bg_store_lot_latest_fits(bg_store *st, const char *lot_code, const char *since,
                             bg_latest_cb cb, void *ctx, bg_error *err)
{
    sqlite3_stmt *q = NULL;
    struct idlist l = { NULL, NULL, NULL, 0, 0 };
    bg_lot lot;
    int rc, s;

    if ((rc = bg_store_lot_get(st, lot_code, &lot, err)) != BG_OK)
        return rc;
    rc = bgi_prepare(st, "SELECT p.serial, coalesce((SELECT f.id FROM run r JOIN fit f ON "
                     "f.run_id = r.id WHERE r.probe_id = p.id AND (?2 IS NULL OR "
                     "r.started_at >= ?2) ORDER BY r.started_at DESC, f.id DESC LIMIT 1), 0) "
                     "FROM probe p WHERE p.lot_id = ?1 ORDER BY p.id", &q, err);
    if (rc != BG_OK)
        return rc;
    sqlite3_bind_int64(q, 1, lot.id);
    bgi_bind_text_or_null(q, 2, since);
    while ((s = sqlite3_step(q)) == SQLITE_ROW)
        if (idlist_push(&l, sqlite3_column_int64(q, 1), 0,
                        (const char *)sqlite3_column_text(q, 0)) != BG_OK) {
            rc = bg_error_set(err, BG_ENOMEM, "out of memory");
            break;
        }
    if (rc == BG_OK && s != SQLITE_DONE)
        rc = bgi_db_fail(st, err, "cannot read the lot's fits");
    sqlite3_finalize(q);
    for (size_t i = 0; rc == BG_OK && i < l.n; i++) {
        bg_fit_row f;
        if (l.id[i] && (rc = bg_store_fit_get(st, l.id[i], &f, err)) != BG_OK)
            break;
        if (cb(l.text[i], l.id[i] ? &f : NULL, ctx))
            break;
    }
    idlist_free(&l);
    return rc;
}

/* A QA history row: what drift needs (model, range, ids, counts), not the covariance or the
** statistics; the serial comes from the probe query beside it. */
#define HIST_COLS "f.id, f.run_id, r.probe_id, f.model, f.t0_k, f.npar, f.c0, f.c1, f.c2, " \
    "f.c3, f.c4, f.c5, f.n, f.dof, f.t_min_k, f.t_max_k, r.started_at"

static int hist_row(sqlite3_stmt *q, bg_fit_row *f, bg_error *err)
{
    /* the fields before the covariance; the covariance stays as zeroed when the buffer grew */
    memset(f, 0, offsetof(bg_fit_row, cov));
    f->id = sqlite3_column_int64(q, 0);
    f->run_id = sqlite3_column_int64(q, 1);
    f->probe_id = sqlite3_column_int64(q, 2);
    int rc = row_model(q, 3, f, err);
    if (rc != BG_OK)
        return rc;
    f->n = (size_t)sqlite3_column_int64(q, 12);
    f->dof = (size_t)sqlite3_column_int64(q, 13);
    f->t_min_k = sqlite3_column_double(q, 14);
    f->t_max_k = sqlite3_column_double(q, 15);
    f->chi2 = f->cov_scale = f->rms_mk = f->max_abs_mk = NAN;
    f->program_version[0] = f->created_at[0] = '\0';
    return BG_OK;
}

int bg_store_lot_history(bg_store *st, const char *lot_code, const char *since,
                         bg_lot_history_cb cb, void *ctx, bg_error *err)
{
    sqlite3_stmt *q = NULL, *pq = NULL;
    bg_fit_row *fits = NULL;
    char (*when)[BG_TIME] = NULL;
    size_t n = 0, cap = 0;
    long long probe = -1;
    char serial[BG_TEXT] = "";
    bg_lot lot;
    int rc, s = SQLITE_DONE, stop = 0;

    if ((rc = bg_store_lot_get(st, lot_code, &lot, err)) != BG_OK)
        return rc;
    /* every fit of the lot's runs, a run's fits oldest first: the newest one of a run
    ** replaces the ones before it below (cheaper than asking SQL for it per row); the
    ** serials from the lot's probes in the same order */
    if ((rc = bgi_prepare(st, "SELECT " HIST_COLS FIT_FROM
                          "WHERE p.lot_id = ?1 AND (?2 IS NULL OR r.started_at >= ?2) "
                          "ORDER BY p.id, r.started_at, r.id, f.id", &q, err)) != BG_OK ||
        (rc = bgi_prepare(st, "SELECT id, serial FROM probe WHERE lot_id = ? ORDER BY id", &pq,
                          err)) != BG_OK) {
        sqlite3_finalize(q);
        return rc;
    }
    sqlite3_bind_int64(q, 1, lot.id);
    bgi_bind_text_or_null(q, 2, since);
    sqlite3_bind_int64(pq, 1, lot.id);
    while (!stop && (s = sqlite3_step(q)) == SQLITE_ROW) {
        long long pid = sqlite3_column_int64(q, 2);
        if (pid != probe) {
            if (probe >= 0 && cb(serial, fits, when, n, ctx))
                stop = 1;
            probe = pid, n = 0;
            while (sqlite3_step(pq) == SQLITE_ROW && sqlite3_column_int64(pq, 0) < pid)
                ;
            bgi_copy_text(serial, sizeof serial, pq, 1);
        }
        if (stop)
            break;
        if (n > 0 && fits[n - 1].run_id == sqlite3_column_int64(q, 1))
            n--; /* a newer fit of the same run */
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
        if ((rc = hist_row(q, &fits[n], err)) != BG_OK)
            break;
        memcpy(fits[n].serial, serial, strlen(serial) + 1);
        bgi_copy_text(when[n], BG_TIME, q, 16);
        n++;
    }
    if (rc == BG_OK && !stop && s != SQLITE_DONE)
        rc = bgi_db_fail(st, err, "cannot read the lot's fits");
    if (rc == BG_OK && !stop && probe >= 0)
        cb(serial, fits, when, n, ctx);
    sqlite3_finalize(q);
    sqlite3_finalize(pq);
    free(fits);
    free(when);
    return rc;
}
