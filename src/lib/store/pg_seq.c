/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The PostgreSQL backend's calibration sequences (db/pg/010-sequence.sql; as sqlite_run.c's):
** a sequence, its settling records and readings, each committed as taken (store.c opens the
** write transaction, whose writers' lock makes the largest id plus one safe), and its end. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "bandgap/bandgap.h"
#include "pg_int.h"

/* Run an INSERT with 'p'; a refused row (a duplicate reading) is BG_EINVAL naming 'what'. */
static int insert(bgi_conn *c, const char *sql, struct pgp *p, long long *id, const char *what,
                  bg_error *err)
{
    int rc;
    PGresult *res = bgi_pg_exec(c, -1, sql, p, &rc, err, what);
    if (res && id)
        *id = PQntuples(res) == 1 ? pgv_ll(res, 0, 0) : 0;
    PQclear(res);
    pgp_free(p);
    return rc;
}

/* A query of one id parameter. */
static PGresult *of_seq(bgi_conn *c, const char *sql, long long seq_id, int *rc, bg_error *err,
                        const char *what)
{
    char buf[32];
    const char *v[1] = { buf };
    struct pgp p = { 1, 1, v, NULL, NULL, NULL };
    snprintf(buf, sizeof buf, "%lld", seq_id);
    return bgi_pg_exec(c, -1, sql, &p, rc, err, what);
}

/* A finite value, else NULL (as the SQLite backend binds it). */
static void dbl_or_null(struct pgp *p, double v)
{
    if (isfinite(v))
        pgp_dbl(p, v);
    else
        pgp_null(p);
}

static double dbl_or_nan(const PGresult *res, int i, int k)
{
    return pgv_null(res, i, k) ? NAN : pgv_dbl(res, i, k);
}

int bgi_pg_seq_add(bgi_conn *c, const bg_seq_head *h, const char *text, long long ref_id,
                   long long *id, bg_error *err)
{
    struct pgp p;
    if (pgp_init(&p, 7) != BG_OK)
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    pgp_text(&p, h->file);
    pgp_text(&p, h->sha256);
    pgp_text(&p, text);
    pgp_text(&p, h->idn);
    pgp_text(&p, h->criterion);
    pgp_int(&p, ref_id);
    pgp_text(&p, h->started_at);
    return insert(c, "INSERT INTO sequence(id, file, file_sha256, file_text, idn, criterion, "
                  "reference_id, started_at) SELECT coalesce(max(id), 0) + 1, $1, $2, $3, $4, "
                  "$5, $6, $7 FROM sequence RETURNING id", &p, id, "cannot record the sequence",
                  err);
}

int bgi_pg_seq_unfinished(bgi_conn *c, bg_seq_head *out, int *found, bg_error *err)
{
    int rc;
    PGresult *res = bgi_pg_exec(c, -1, "SELECT id, file, file_sha256, started_at, idn, "
                                "criterion FROM sequence s WHERE NOT EXISTS (SELECT 1 FROM "
                                "sequence_end e WHERE e.sequence_id = s.id) ORDER BY id DESC "
                                "LIMIT 1", NULL, &rc, err, "cannot read sequences");
    memset(out, 0, sizeof *out);
    *found = 0;
    if (res && PQntuples(res) == 1) {
        out->id = pgv_ll(res, 0, 0);
        pgv_text(out->file, sizeof out->file, res, 0, 1);
        pgv_text(out->sha256, sizeof out->sha256, res, 0, 2);
        pgv_text(out->started_at, sizeof out->started_at, res, 0, 3);
        pgv_text(out->idn, sizeof out->idn, res, 0, 4);
        pgv_text(out->criterion, sizeof out->criterion, res, 0, 5);
        *found = 1;
    }
    PQclear(res);
    return rc;
}

int bgi_pg_seq_settle(bgi_conn *c, long long seq_id, const bg_seq_settle *s, bg_error *err)
{
    struct pgp p;
    if (pgp_init(&p, 11) != BG_OK)
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    pgp_int(&p, seq_id);
    pgp_int(&p, (long long)s->sp);
    pgp_dbl(&p, s->setpoint_k);
    pgp_int(&p, s->settled);
    dbl_or_null(&p, s->slope_k_s);
    dbl_or_null(&p, s->scatter_k);
    dbl_or_null(&p, s->mean_k);
    pgp_dbl(&p, s->window_s);
    pgp_dbl(&p, s->waited_s);
    pgp_int(&p, (long long)s->samples);
    pgp_text(&p, s->at);
    return insert(c, "INSERT INTO sequence_settle(id, sequence_id, setpoint, setpoint_k, "
                  "settled, slope_k_s, scatter_k, mean_k, window_s, waited_s, samples, at) "
                  "SELECT coalesce(max(id), 0) + 1, $1, $2, $3, $4, $5, $6, $7, $8, $9, $10, "
                  "$11 FROM sequence_settle", &p, NULL, "cannot record the settling", err);
}

int bgi_pg_seq_reading(bgi_conn *c, long long seq_id, const bg_seq_reading *r, bg_error *err)
{
    struct pgp p;
    if (pgp_init(&p, 11) != BG_OK)
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    pgp_int(&p, seq_id);
    pgp_int(&p, (long long)r->sp);
    pgp_int(&p, (long long)r->ch);
    pgp_int(&p, (long long)r->k);
    pgp_text(&p, r->channel);
    pgp_dbl(&p, r->setpoint_k);
    pgp_dbl(&p, r->r_ohm);
    pgp_dbl(&p, r->ref_raw);
    pgp_text(&p, r->time);
    pgp_text(&p, r->meter_reply);
    pgp_text(&p, r->ref_reply);
    return insert(c, "INSERT INTO sequence_reading(id, sequence_id, setpoint, probe, k, "
                  "channel, setpoint_k, r_ohm, ref_raw, time, meter_reply, ref_reply) SELECT "
                  "coalesce(max(id), 0) + 1, $1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11 FROM "
                  "sequence_reading", &p, NULL, "cannot store the reading", err);
}

int bgi_pg_seq_readings(bgi_conn *c, long long seq_id, bg_seq_reading_cb cb, void *ctx,
                        bg_error *err)
{
    bg_seq_reading r;
    int rc;
    PGresult *res = of_seq(c, "SELECT id, setpoint, probe, k, channel, setpoint_k, r_ohm, "
                           "ref_raw, time, meter_reply, ref_reply FROM sequence_reading WHERE "
                           "sequence_id = $1 ORDER BY setpoint, probe, k", seq_id, &rc, err,
                           "cannot read the sequence's readings");
    for (int i = 0; res && i < PQntuples(res); i++) {
        memset(&r, 0, sizeof r);
        r.id = pgv_ll(res, i, 0);
        r.sp = (size_t)pgv_ll(res, i, 1);
        r.ch = (size_t)pgv_ll(res, i, 2);
        r.k = (size_t)pgv_ll(res, i, 3);
        pgv_text(r.channel, sizeof r.channel, res, i, 4);
        r.setpoint_k = pgv_dbl(res, i, 5);
        r.r_ohm = pgv_dbl(res, i, 6);
        r.ref_raw = pgv_dbl(res, i, 7);
        pgv_text(r.time, sizeof r.time, res, i, 8);
        pgv_text(r.meter_reply, sizeof r.meter_reply, res, i, 9);
        pgv_text(r.ref_reply, sizeof r.ref_reply, res, i, 10);
        if (cb(&r, ctx))
            break;
    }
    PQclear(res);
    return rc;
}

int bgi_pg_seq_settles(bgi_conn *c, long long seq_id, bg_seq_settle_cb cb, void *ctx,
                       bg_error *err)
{
    bg_seq_settle t;
    int rc;
    PGresult *res = of_seq(c, "SELECT setpoint, setpoint_k, settled, slope_k_s, scatter_k, "
                           "mean_k, window_s, waited_s, samples, at FROM sequence_settle WHERE "
                           "sequence_id = $1 ORDER BY id", seq_id, &rc, err,
                           "cannot read the sequence's settling records");
    for (int i = 0; res && i < PQntuples(res); i++) {
        memset(&t, 0, sizeof t);
        t.sp = (size_t)pgv_ll(res, i, 0);
        t.setpoint_k = pgv_dbl(res, i, 1);
        t.settled = (int)pgv_ll(res, i, 2);
        t.slope_k_s = dbl_or_nan(res, i, 3);
        t.scatter_k = dbl_or_nan(res, i, 4);
        t.mean_k = dbl_or_nan(res, i, 5);
        t.window_s = pgv_dbl(res, i, 6);
        t.waited_s = pgv_dbl(res, i, 7);
        t.samples = (size_t)pgv_ll(res, i, 8);
        pgv_text(t.at, sizeof t.at, res, i, 9);
        if (cb(&t, ctx))
            break;
    }
    PQclear(res);
    return rc;
}

int bgi_pg_seq_end(bgi_conn *c, long long seq_id, const char *now, long long first_run,
                   long long last_run, bg_error *err)
{
    struct pgp p;
    if (pgp_init(&p, 4) != BG_OK)
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    pgp_int(&p, seq_id);
    pgp_text(&p, now);
    pgp_int(&p, first_run);
    pgp_int(&p, last_run);
    return insert(c, "INSERT INTO sequence_end(sequence_id, finished_at, first_run, last_run) "
                  "VALUES ($1, $2, $3, $4)", &p, NULL, "cannot mark the sequence finished",
                  err);
}
