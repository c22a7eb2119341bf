/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Benchmark helper for the database (invented data): build a lot BENCH of invented probes, and
** time the library calls the lot commands make beside plain SQL scans of the same rows.
** Each mode prints NAME_S SECONDS on its first line, then a line for people.
**   setup DB NPROBES NREADINGS  a lot of NPROBES probes, one run of NREADINGS readings each
**   setup3 DB NPROBES           a lot of NPROBES probes, three runs of 10 readings each
**                               (invented dates half a year apart), every run fitted (sh3)
**   scan DB      SCAN_S      plain SQL scan of the readings (the anchor of 'fit --lot')
**   read DB      READ_S      the readings of the lot as 'fit --lot' reads them
**   fit DB       FIT_S       read, fit and store every probe as 'fit --lot' does
**   scanfits DB  SCANFITS_S  plain SQL scan of the fit rows with their runs' start times,
**                SCANROWS_S  then of the whole fit rows (the anchors of drift and report)
**   drift DB     DRIFT_S     bg_qa_lot_stats: what 'drift --lot' computes (NPROBES after DB,
**                            once needed, is accepted and not used)
**   summary DB   SUMMARY_S   bg_qa_lot_summarize: what 'report --lot' renders
**   export DB    EXPORT_S    bg_store_export_each: the walk 'export --lot' writes
** The commands themselves, and sqlite3 as a process for the anchors, are timed by run.sh. */
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

/* 'drift --lot' without its printing: the library call the command makes (bg_qa_lot_stats:
** every probe's current fit, the lot's statistics against the nominal curve). */
static int driftlot(const char *path)
{
    bg_store *st = NULL;
    bg_error err = BG_ERROR_INIT;
    bg_qa_opts o = bg_qa_default_opts();
    bg_qa_lot l = BG_QA_LOT_INIT;
    double t0 = now();
    if (bg_store_open(path, 0, &st, &err) != BG_OK ||
        bg_qa_lot_stats(st, "BENCH", &o, &l, &err) != BG_OK) {
        fprintf(stderr, "bench_db: %s\n", err.msg);
        return 1;
    }
    double t = now() - t0;
    printf("DRIFT_S %.6f\n%zu probes, R25 deviation %.6g +- %.3g %%, B %.6g +- %.3g K, in %.3f s\n",
           t, l.n, l.r25_dev.mean, l.r25_dev.sd, l.b.mean, l.b.sd, t);
    bg_qa_lot_release(&l);
    bg_store_close(st);
    return 0;
}

/* 'report --lot' without the page: the library call whose result the report renders
** (bg_qa_lot_summarize: the lot's statistics, every probe's drift, the part's charts). */
static int summary(const char *path)
{
    bg_store *st = NULL;
    bg_error err = BG_ERROR_INIT;
    bg_qa_opts o = bg_qa_default_opts();
    bg_qa_lot_summary s = BG_QA_LOT_SUMMARY_INIT;
    double t0 = now();
    size_t ncmp = 0;
    if (bg_store_open(path, 0, &st, &err) != BG_OK ||
        bg_qa_lot_summarize(st, "BENCH", &o, &s, &err) != BG_OK) {
        fprintf(stderr, "bench_db: %s\n", err.msg);
        return 1;
    }
    double t = now() - t0;
    for (size_t i = 0; i < s.nprobes; i++)
        ncmp += s.probes[i].nprev;
    printf("SUMMARY_S %.6f\n%zu probes, %zu comparisons, in %.3f s\n", t, s.nprobes, ncmp, t);
    bg_qa_lot_summary_release(&s);
    bg_store_close(st);
    return 0;
}

/* 'export --lot' without the writing: the walk the command makes (bg_store_export_each),
** every value touched. */
struct exsum { double s; size_t nread, nfit; };

static int ex_reading(const bg_reading_row *g, void *ctx)
{
    struct exsum *e = ctx;
    e->s += g->t_k + g->r_ohm + g->u_t_k, e->nread++;
    return 0;
}

static int ex_fit(const bg_fit_row *f, void *ctx)
{
    struct exsum *e = ctx;
    e->s += f->model.coef[0] + f->cov[0] + f->rms_mk, e->nfit++;
    return 0;
}

static int exportlot(const char *path)
{
    static const bg_export_cbs cbs = { NULL, NULL, ex_reading, NULL, NULL, ex_fit, NULL };
    bg_store *st = NULL;
    bg_error err = BG_ERROR_INIT;
    struct exsum e = { 0, 0, 0 };
    double t0 = now();
    if (bg_store_open(path, 0, &st, &err) != BG_OK ||
        bg_store_export_each(st, NULL, "BENCH", &cbs, &e, &err) != BG_OK) {
        fprintf(stderr, "bench_db: %s\n", err.msg);
        return 1;
    }
    double t = now() - t0;
    printf("EXPORT_S %.6f\n%zu readings and %zu fits walked (checksum %.6g) in %.3f s\n", t,
           e.nread, e.nfit, e.s, t);
    bg_store_close(st);
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
    if ((argc == 3 || argc == 4) && strcmp(argv[1], "drift") == 0)
        return driftlot(argv[2]); /* NPROBES, once needed, is accepted and not used */
    if (argc == 3 && strcmp(argv[1], "summary") == 0)
        return summary(argv[2]);
    if (argc == 3 && strcmp(argv[1], "export") == 0)
        return exportlot(argv[2]);
    if (argc == 3 && strcmp(argv[1], "scanfits") == 0)
        return scanfits(argv[2]);
    fprintf(stderr, "usage: bench_db setup DB NPROBES NREADINGS | setup3 DB NPROBES\n"
                    "       | scan|read|fit|scanfits|drift|summary|export DB\n");
    return 64;
}
