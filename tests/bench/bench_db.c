/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Benchmark helper for the database: build a lot of invented probes with one run each, or
** scan the readings back with a plain SQL query (the baseline for 'bandgap fit --lot').
** Usage: bench_db setup DB NPROBES NREADINGS | bench_db scan|read|fit|scanfits DB
**        | bench_db setup3 DB NPROBES | bench_db drift DB NPROBES */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include <gsl/gsl_errno.h>
#include <sqlite3.h>

#include "bandgap/bandgap.h"

static double now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static int setup(const char *path, size_t np, size_t nr)
{
    bg_store *st = NULL;
    bg_error err = BG_ERROR_INIT;
    bg_lot lot;
    bg_model m;
    double c[3] = { 1.1384e-3, 2.3245e-4, 9.4871e-8 }; /* invented */
    bg_readings rs = BG_READINGS_INIT;
    bg_run meta;

    if (bg_store_open(path, BG_STORE_CREATE, &st, &err) != BG_OK)
        goto fail;
    memset(&lot, 0, sizeof lot);
    strcpy(lot.code, "BENCH"), strcpy(lot.part, "P");
    lot.r25_ohm = 10000, lot.beta_k = 3950, lot.pair_t1_k = 298.15, lot.pair_t2_k = 358.15;
    lot.tol_r25 = lot.tol_beta = 0.01;
    bg_model_parse("sh3", &m, NULL);
    bg_model_set_coef(&m, c, 3, NULL);
    rs.v = calloc(nr, sizeof *rs.v);
    rs.n = rs.cap = nr;
    rs.t_unit = BG_UNIT_K, rs.has_u_t = 1;
    for (size_t i = 0; i < nr; i++) {
        rs.v[i].pt.t_k = rs.v[i].t_raw = 253.15 + 100.0 * (double)i / (double)(nr - 1);
        bg_model_r_from_t(&m, rs.v[i].pt.t_k, &rs.v[i].pt.r_ohm, NULL);
        rs.v[i].pt.u_t_k = 0.002;
        rs.v[i].pt.line = i + 2;
    }
    if (bg_store_begin(st, &err) != BG_OK || bg_store_lot_add(st, &lot, NULL, &err) != BG_OK)
        goto fail;
    memset(&meta, 0, sizeof meta);
    strcpy(meta.source, "bench");
    for (size_t p = 0; p < np; p++) {
        snprintf(meta.serial, sizeof meta.serial, "B%07zu", p);
        /* a little noise so that every probe's fit differs */
        for (size_t i = 0; i < nr; i++)
            rs.v[i].pt.t_k = rs.v[i].t_raw + 0.001 * ((double)((p * 7 + i * 13) % 5) - 2.0);
        if (bg_store_probe_add(st, meta.serial, "BENCH", NULL, NULL, &err) != BG_OK ||
            bg_store_import(st, &rs, &meta, NULL, &err) != BG_OK)
            goto fail;
    }
    if (bg_store_commit(st, &err) != BG_OK)
        goto fail;
    free(rs.v);
    bg_store_close(st);
    return 0;
fail:
    fprintf(stderr, "bench_db: %s\n", err.msg);
    return 1;
}

static int scan(const char *path)
{
    sqlite3 *db;
    sqlite3_stmt *q;
    double t0 = now(), s = 0.0;
    long long n = 0;
    if (sqlite3_open_v2(path, &db, SQLITE_OPEN_READONLY, NULL) != SQLITE_OK ||
        sqlite3_prepare_v2(db, "SELECT g.run_id, g.t_k, g.r_ohm, g.u_t_k, g.u_r_ohm FROM reading g "
                           "ORDER BY g.id", -1, &q, NULL) != SQLITE_OK) {
        fprintf(stderr, "bench_db: %s\n", sqlite3_errmsg(db));
        return 1;
    }
    while (sqlite3_step(q) == SQLITE_ROW) {
        s += sqlite3_column_double(q, 1) + sqlite3_column_double(q, 2) +
             sqlite3_column_double(q, 3) + sqlite3_column_double(q, 4);
        n++;
    }
    sqlite3_finalize(q);
    sqlite3_close(db);
    printf("SCAN_S %.6f\nscanned %lld readings (checksum %.6g) in %.3f s\n", now() - t0, n, s,
           now() - t0);
    return 0;
}

static int count_cb(const char *serial, long long probe_id, long long run_id,
                    bg_store_points *pts, void *ctx)
{
    double *acc = ctx;
    (void)serial, (void)probe_id, (void)run_id;
    for (size_t i = 0; i < pts->n; i++)
        acc[0] += pts->pts[i].t_k + pts->pts[i].r_ohm, acc[1] += 1.0;
    return 0;
}

/* The rows read back the way 'fit --lot' reads them, with nothing done to them. */
static int readback(const char *path)
{
    bg_store *st = NULL;
    bg_error err = BG_ERROR_INIT;
    double acc[2] = { 0, 0 }, t0 = now();
    if (bg_store_open(path, 0, &st, &err) != BG_OK ||
        bg_store_lot_points_each(st, "BENCH", count_cb, acc, &err) != BG_OK) {
        fprintf(stderr, "bench_db: %s\n", err.msg);
        return 1;
    }
    bg_store_close(st);
    printf("READ_S %.6f\nread back %.0f readings of the lot (checksum %.6g) in %.3f s\n",
           now() - t0, acc[1], acc[0], now() - t0);
    return 0;
}

struct fitctx { bg_store *st; bg_fitter *fr; bg_fit fit; bg_fit_opts o; size_t n; int rc; };

static int fit_cb(const char *serial, long long probe_id, long long run_id, bg_store_points *pts,
                  void *ctx)
{
    struct fitctx *fc = ctx;
    bg_error err = BG_ERROR_INIT;
    (void)serial, (void)probe_id;
    if (bg_fitter_run(fc->fr, pts->pts, pts->n, &fc->o, &fc->fit, &err) != BG_OK ||
        bg_store_fit_queue(fc->st, run_id, &fc->fit, pts->ids, NULL, &err) != BG_OK) {
        fprintf(stderr, "bench_db: %s\n", err.msg);
        fc->rc = 1;
        return 1;
    }
    fc->n++;
    return 0;
}

/* Fitting the lot through the library: read, fit and store every probe in one transaction,
** as 'bandgap fit --lot' does, without printing the table. */
static int fitlot(const char *path)
{
    struct fitctx fc;
    bg_error err = BG_ERROR_INIT;
    bg_model m;
    double t0 = now();
    memset(&fc, 0, sizeof fc);
    bg_model_parse("sh3", &m, NULL);
    fc.o = bg_fit_default_opts(&m);
    fc.fr = bg_fitter_new();
    bg_fit_init(&fc.fit);
    if (bg_store_open(path, 0, &fc.st, &err) != BG_OK || bg_store_begin(fc.st, &err) != BG_OK ||
        bg_store_lot_points_each(fc.st, "BENCH", fit_cb, &fc, &err) != BG_OK || fc.rc ||
        bg_store_commit(fc.st, &err) != BG_OK) {
        fprintf(stderr, "bench_db: %s\n", err.msg);
        return 1;
    }
    bg_store_close(fc.st);
    bg_fit_release(&fc.fit);
    bg_fitter_free(fc.fr);
    printf("FIT_S %.6f\nfitted and stored %zu probes in %.3f s\n", now() - t0, fc.n, now() - t0);
    return 0;
}

/* A lot of 'np' probes calibrated three times (invented dates), every run fitted. */
static int setup3(const char *path, size_t np)
{
    static const char *when[3] = { "2025-01-15T09:00:00Z", "2025-07-15T09:00:00Z",
                                   "2026-01-15T09:00:00Z" };
    bg_store *st = NULL;
    bg_error err = BG_ERROR_INIT;
    bg_lot lot;
    bg_model m;
    double c[3] = { 1.1384e-3, 2.3245e-4, 9.4871e-8 }; /* invented */
    bg_readings rs = BG_READINGS_INIT;
    bg_run meta;
    bg_store_points sp = BG_STORE_POINTS_INIT;
    bg_fitter *fr = bg_fitter_new();
    bg_fit fit = BG_FIT_INIT;
    size_t nr = 10;
    long long run;

    if (bg_store_open(path, BG_STORE_CREATE, &st, &err) != BG_OK)
        goto fail;
    memset(&lot, 0, sizeof lot);
    strcpy(lot.code, "BENCH"), strcpy(lot.part, "P");
    lot.r25_ohm = 12000, lot.beta_k = 3700, lot.pair_t1_k = 298.15, lot.pair_t2_k = 358.15;
    lot.tol_r25 = lot.tol_beta = 0.01;
    bg_model_parse("sh3", &m, NULL);
    bg_model_set_coef(&m, c, 3, NULL);
    bg_fit_opts o = bg_fit_default_opts(&m);
    rs.v = calloc(nr, sizeof *rs.v);
    rs.n = rs.cap = nr;
    rs.t_unit = BG_UNIT_K, rs.has_u_t = 1;
    if (bg_store_begin(st, &err) != BG_OK || bg_store_lot_add(st, &lot, NULL, &err) != BG_OK)
        goto fail;
    memset(&meta, 0, sizeof meta);
    strcpy(meta.source, "bench");
    for (size_t p = 0; p < np; p++) {
        snprintf(meta.serial, sizeof meta.serial, "D%07zu", p);
        if (bg_store_probe_add(st, meta.serial, "BENCH", NULL, NULL, &err) != BG_OK)
            goto fail;
        for (int k = 0; k < 3; k++) {
            /* the resistance creeps up by 0.02 % a calibration (invented drift) */
            for (size_t i = 0; i < nr; i++) {
                double t = 253.15 + 100.0 * (double)i / (double)(nr - 1);
                rs.v[i].t_raw = t;
                rs.v[i].pt.t_k = t + 0.001 * ((double)((p * 7 + i * 13 + (size_t)k) % 5) - 2.0);
                bg_model_r_from_t(&m, t, &rs.v[i].pt.r_ohm, NULL);
                rs.v[i].pt.r_ohm *= 1.0 + 2e-4 * k;
                rs.v[i].pt.u_t_k = 0.002;
                rs.v[i].pt.line = i + 2;
            }
            strcpy(meta.started_at, when[k]);
            if (bg_store_import(st, &rs, &meta, &run, &err) != BG_OK ||
                bg_store_run_points(st, run, &sp, &err) != BG_OK ||
                bg_fitter_run(fr, sp.pts, sp.n, &o, &fit, &err) != BG_OK ||
                bg_store_fit_save(st, run, &fit, sp.ids, NULL, &err) != BG_OK)
                goto fail;
        }
    }
    if (bg_store_commit(st, &err) != BG_OK)
        goto fail;
    free(rs.v);
    bg_store_points_release(&sp);
    bg_fit_release(&fit);
    bg_fitter_free(fr);
    bg_store_close(st);
    return 0;
fail:
    fprintf(stderr, "bench_db: %s\n", err.msg);
    return 1;
}

struct driftctx { double *r25, *b; size_t n, pairs; double worst; };

static int drift_cb(const char *serial, const bg_fit_row *f, char (*when)[BG_TIME], size_t n,
                    void *ctx)
{
    struct driftctx *dc = ctx;
    bg_drift_cal cal[16];
    (void)serial;
    if (n > 16)
        n = 16;
    for (size_t i = 0; i < n; i++) {
        double t;
        bg_time_parse(when[i], &t, NULL);
        bg_drift_prepare(&f[i].model, 298.15, 358.15, t, &cal[i], NULL);
    }
    for (size_t i = 1; i < n; i++)
        for (size_t from = 0; from < (i >= 2 ? 2u : 1u); from++) {
            size_t a = from == 0 ? i - 1 : 0;
            double at[5];
            bg_drift d;
            bg_drift_check_points(f[a].t_min_k, f[a].t_max_k, f[i].t_min_k, f[i].t_max_k, 5, at,
                                  NULL);
            if (bg_drift_compare_cal(&cal[a], &cal[i], at, 5, &d, NULL) == BG_OK) {
                dc->pairs++;
                if (d.max_abs_err_mk > dc->worst)
                    dc->worst = d.max_abs_err_mk;
            }
        }
    if (n) {
        dc->r25[dc->n] = cal[n - 1].r25_ohm;
        dc->b[dc->n] = cal[n - 1].b_k;
        dc->n++;
    }
    return 0;
}

/* Drift of every probe against its previous and first calibration, and the lot statistics
** of the newest fits, through the library in one pass over the lot's fits. */
static int driftlot(const char *path, size_t np)
{
    bg_store *st = NULL;
    bg_error err = BG_ERROR_INIT;
    struct driftctx dc = { malloc(np * sizeof(double)), malloc(np * sizeof(double)), 0, 0, 0 };
    bg_stats sr, sb;
    double g, gc, t0 = now();
    size_t idx;
    if (bg_store_open(path, 0, &st, &err) != BG_OK ||
        bg_store_lot_history(st, "BENCH", NULL, drift_cb, &dc, &err) != BG_OK) {
        fprintf(stderr, "bench_db: %s\n", err.msg);
        return 1;
    }
    bg_stats_of(dc.r25, dc.n, &sr);
    bg_stats_of(dc.b, dc.n, &sb);
    bg_grubbs(dc.r25, dc.n, 0.05, &g, &gc, &idx, NULL);
    bg_store_close(st);
    printf("DRIFT_S %.6f\n%zu comparisons, worst as-found %.3f mK, lot R25 %.6g +- %.3g ohm, "
           "in %.3f s\n", now() - t0, dc.pairs, dc.worst, sr.mean, sr.sd, now() - t0);
    free(dc.r25), free(dc.b);
    return 0;
}

/* The baseline: a plain SQL scan of the same fit rows with their runs' start times. */
static int scanfits(const char *path)
{
    sqlite3 *db;
    sqlite3_stmt *q;
    double t0 = now(), s = 0.0;
    long long n = 0;
    if (sqlite3_open_v2(path, &db, SQLITE_OPEN_READONLY, NULL) != SQLITE_OK ||
        sqlite3_prepare_v2(db, "SELECT r.probe_id, r.started_at, f.c0, f.c1, f.c2, f.cov, "
                           "f.t_min_k, f.t_max_k FROM fit f JOIN run r ON f.run_id = r.id "
                           "ORDER BY r.probe_id, r.started_at", -1, &q, NULL) != SQLITE_OK) {
        fprintf(stderr, "bench_db: %s\n", sqlite3_errmsg(db));
        return 1;
    }
    while (sqlite3_step(q) == SQLITE_ROW) {
        s += sqlite3_column_double(q, 2) + sqlite3_column_double(q, 6);
        n++;
    }
    sqlite3_finalize(q);
    printf("SCANFITS_S %.6f\nscanned %lld fits (checksum %.6g) in %.3f s\n", now() - t0, n, s,
           now() - t0);
    /* the same rows whole: every column of each fit and its run's start, each one read */
    t0 = now(), s = 0.0, n = 0;
    if (sqlite3_prepare_v2(db, "SELECT f.*, r.started_at FROM fit f JOIN run r ON f.run_id = "
                           "r.id ORDER BY r.probe_id, r.started_at", -1, &q, NULL) != SQLITE_OK)
        return 1;
    int nc = sqlite3_column_count(q);
    while (sqlite3_step(q) == SQLITE_ROW) {
        for (int c = 0; c < nc; c++)
            s += sqlite3_column_type(q, c) == SQLITE_FLOAT ? sqlite3_column_double(q, c)
                                                           : (double)sqlite3_column_bytes(q, c);
        n++;
    }
    sqlite3_finalize(q);
    sqlite3_close(db);
    printf("SCANROWS_S %.6f\nscanned %lld whole fit rows (checksum %.6g)\n", now() - t0, n, s);
    return 0;
}

int main(int argc, char **argv)
{
    gsl_set_error_handler_off();
    if (argc == 5 && strcmp(argv[1], "setup") == 0)
        return setup(argv[2], strtoul(argv[3], NULL, 10), strtoul(argv[4], NULL, 10));
    if (argc == 3 && strcmp(argv[1], "scan") == 0)
        return scan(argv[2]);
    if (argc == 3 && strcmp(argv[1], "read") == 0)
        return readback(argv[2]);
    if (argc == 3 && strcmp(argv[1], "fit") == 0)
        return fitlot(argv[2]);
    if (argc == 4 && strcmp(argv[1], "setup3") == 0)
        return setup3(argv[2], strtoul(argv[3], NULL, 10));
    if (argc == 4 && strcmp(argv[1], "drift") == 0)
        return driftlot(argv[2], strtoul(argv[3], NULL, 10));
    if (argc == 3 && strcmp(argv[1], "scanfits") == 0)
        return scanfits(argv[2]);
    fprintf(stderr, "usage: bench_db setup DB NPROBES NREADINGS | bench_db scan DB\n");
    return 64;
}
