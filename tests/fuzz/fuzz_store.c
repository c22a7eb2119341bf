/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Fuzz target: reading back a database whose rows were forged.  The library creates a
** database once per process (a file under /tmp: bg_store_open has no in-memory form, since
** it insists on a rollback journal); its triggers are then dropped and its tables remade
** with the same columns but no types and no constraints, as anyone holding the file can.
** For each input, a copy gets a small invented record (two lots, three probes, a reference,
** runs, readings, an exclusion, fits, a part's specification and an issued report) in
** which the input replaces any value by NULL, a huge, negative or non-finite number, a
** number where text belongs, or text of its own (overlong, invalid UTF-8, control
** characters, markup).  Then every read path runs: each lot, probe, reference, run,
** reading and fit, one by one and by listing; the current fits; the histories; the drift of
** each probe and the statistics, summary and charts of each lot and part; the verification
** of the record chain; the calibration
** and lot reports (which must be well-formed HTML); every text through the JSON string
** writer (which must give valid JSON).  Nothing may crash, leak or overflow. */
#include <math.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <sqlite3.h>

#include "bandgap/bandgap.h"
#include "fuzz_util.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static char db_path[128];
static char *tpl;          /* the prepared database's bytes */
static size_t tpl_len;

static void cleanup(void)
{
    char p[160];
    unlink(db_path);
    snprintf(p, sizeof p, "%s-journal", db_path);
    unlink(p);
}

static void die(const char *what, const char *why)
{
    fprintf(stderr, "fuzz_store: %s: %s\n", what, why ? why : "?");
    abort();
}

static void exec(sqlite3 *db, const char *sql)
{
    char *msg = NULL;
    if (sqlite3_exec(db, sql, NULL, NULL, &msg) != SQLITE_OK)
        die(sql, msg);
}

/* Remake table 't' with its columns but no types and no constraints ('id' stays the rowid). */
static void loosen(sqlite3 *db, const char *t)
{
    char sql[2048], cols[1500] = "";
    sqlite3_stmt *q;
    size_t len = 0;
    snprintf(sql, sizeof sql, "PRAGMA table_info(%s)", t);
    if (sqlite3_prepare_v2(db, sql, -1, &q, NULL) != SQLITE_OK)
        die(sql, sqlite3_errmsg(db));
    while (sqlite3_step(q) == SQLITE_ROW) {
        const char *c = (const char *)sqlite3_column_text(q, 1);
        len += (size_t)snprintf(cols + len, sizeof cols - len, "%s%s%s", len ? ", " : "", c,
                                strcmp(c, "id") == 0 ? " INTEGER PRIMARY KEY" : "");
    }
    sqlite3_finalize(q);
    snprintf(sql, sizeof sql, "DROP TABLE %s; CREATE TABLE %s (%s);", t, t, cols);
    exec(db, sql);
}

static const char *const tables[] = { "exclusion", "artifact", "fit", "reading", "run",
                                      "reference", "probe", "lot", "part_spec" };

/* Once: the library's database, made loose, kept in memory as bytes. */
static void prepare(void)
{
    bg_store *st = NULL;
    bg_error err = BG_ERROR_INIT;
    sqlite3 *db;
    FILE *f;

    snprintf(db_path, sizeof db_path, "/tmp/bandgap-fuzz-store-%ld.db", (long)getpid());
    cleanup();
    if (bg_store_open(db_path, BG_STORE_CREATE, &st, &err) != BG_OK)
        die("bg_store_open", err.msg);
    bg_store_close(st);
    if (sqlite3_open(db_path, &db) != SQLITE_OK)
        die("sqlite3_open", db_path);
    exec(db, "PRAGMA foreign_keys = OFF; BEGIN");
    {
        sqlite3_stmt *q;
        char names[32][128];
        int n = 0;
        if (sqlite3_prepare_v2(db, "SELECT name FROM sqlite_schema WHERE type = 'trigger'", -1,
                               &q, NULL) != SQLITE_OK)
            die("triggers", sqlite3_errmsg(db));
        while (sqlite3_step(q) == SQLITE_ROW && n < 32)
            snprintf(names[n++], sizeof names[0], "%s", sqlite3_column_text(q, 0));
        sqlite3_finalize(q);
        for (int i = 0; i < n; i++) {
            char sql[160];
            snprintf(sql, sizeof sql, "DROP TRIGGER %.127s", names[i]);
            exec(db, sql);
        }
    }
    for (size_t i = 0; i < sizeof tables / sizeof tables[0]; i++)
        loosen(db, tables[i]);
    exec(db, "COMMIT");
    sqlite3_close(db);
    if (!(f = fopen(db_path, "rb")))
        die("reading", db_path);
    fseek(f, 0, SEEK_END);
    tpl_len = (size_t)ftell(f);
    rewind(f);
    tpl = malloc(tpl_len);
    if (!tpl || fread(tpl, 1, tpl_len, f) != tpl_len)
        die("reading", db_path);
    fclose(f);
    atexit(cleanup);
}

/* ---- the invented record, each value open to the input ---- */

/* A value of the skeleton: NULL (n), an integer (i), a real (r), text (t) or a blob (b). */
struct val {
    char type;
    const char *text;
    double num;
};

static void bind_val(sqlite3_stmt *q, int k, const struct val *v, fuzz_in *in)
{
    char buf[1200];
    unsigned b = fuzz_byte(in);
    if (b < 0xb0) { /* the skeleton's value */
        switch (v->type) {
        case 'i': sqlite3_bind_int64(q, k, (sqlite3_int64)v->num); return;
        case 'r': sqlite3_bind_double(q, k, v->num); return;
        case 't': sqlite3_bind_text(q, k, v->text, -1, SQLITE_TRANSIENT); return;
        case 'b': sqlite3_bind_blob(q, k, v->text, (int)v->num, SQLITE_TRANSIENT); return;
        default: sqlite3_bind_null(q, k); return;
        }
    }
    switch (b & 7) {
    case 0: sqlite3_bind_null(q, k); return;
    case 1: { /* an integer: huge, negative, or any */
        sqlite3_int64 i = 0;
        for (int j = 0; j < 8; j++)
            i = (sqlite3_int64)((uint64_t)i << 8 | fuzz_byte(in));
        sqlite3_bind_int64(q, k, i);
        return;
    }
    case 2: sqlite3_bind_double(q, k, fuzz_double(in, v->num != 0.0 ? v->num : 1.0)); return;
    case 3: case 4: /* text of the input's own */
        fuzz_text(in, buf, sizeof buf);
        sqlite3_bind_text(q, k, buf, -1, SQLITE_TRANSIENT);
        return;
    case 5: /* a blob, with NUL bytes allowed */ {
        size_t len = fuzz_byte(in);
        if (len > in->n)
            len = in->n;
        sqlite3_bind_blob(q, k, in->p, (int)len, SQLITE_TRANSIENT);
        in->p += len, in->n -= len;
        return;
    }
    case 6: /* the value as text (a number where text belongs, or the other way) */
        if (v->type == 't')
            sqlite3_bind_double(q, k, 12.5);
        else {
            snprintf(buf, sizeof buf, "%.17g", v->num);
            sqlite3_bind_text(q, k, buf, -1, SQLITE_TRANSIENT);
        }
        return;
    default: /* a text just longer than the library's buffers */
        memset(buf, 'X', 1100);
        buf[1100] = '\0';
        sqlite3_bind_text(q, k, buf, -1, SQLITE_TRANSIENT);
        return;
    }
}

static void insert(sqlite3 *db, const char *table, const char *cols, const struct val *v,
                   size_t n, fuzz_in *in)
{
    char sql[1024];
    size_t len = (size_t)snprintf(sql, sizeof sql, "INSERT INTO %s (%s) VALUES (", table, cols);
    sqlite3_stmt *q;
    for (size_t i = 0; i < n; i++)
        len += (size_t)snprintf(sql + len, sizeof sql - len, "%s?", i ? ", " : "");
    snprintf(sql + len, sizeof sql - len, ")");
    if (sqlite3_prepare_v2(db, sql, -1, &q, NULL) != SQLITE_OK)
        die(sql, sqlite3_errmsg(db));
    for (size_t i = 0; i < n; i++)
        bind_val(q, (int)i + 1, &v[i], in);
    sqlite3_step(q); /* a duplicate id, say, is refused: the row is then left out */
    sqlite3_finalize(q);
}

#define R(x) { 'r', NULL, (x) }
#define I(x) { 'i', NULL, (double)(x) }
#define T(x) { 't', (x), 0.0 }
#define N { 'n', NULL, 0.0 }
#define COUNT(a) (sizeof(a) / sizeof(a)[0])

/* Invented values: a beta curve R0 10 kohm at 25 degC, B 3950 K, read at 0 .. 100 degC. */
static double beta_r(double t_k, double b)
{
    return 1e4 * exp(b * (1.0 / t_k - 1.0 / 298.15));
}

static void fill(sqlite3 *db, fuzz_in *in)
{
    static const double cov[4] = { 25.0, 0.5, 0.5, 100.0 }; /* little-endian on x86 */
    static const char *const lots[2] = { "L-1", "L-2" };
    char when[3][32] = { "2026-01-05T09:00:00Z", "2026-06-05T09:00:00Z", "2026-02-01T08:00:00Z" };
    for (int l = 0; l < 2; l++) {
        struct val v[] = { I(l + 1), T(lots[l]), T("NTC-FUZZ"), R(1e4), R(3950.0), R(298.15),
                           R(358.15), R(0.01), R(0.02), T("a note"), T("2026-01-01T00:00:00Z") };
        insert(db, "lot", "id, code, part, r25_ohm, beta_k, pair_t1_k, pair_t2_k, tol_r25, "
               "tol_beta, note, created_at", v, COUNT(v), in);
    }
    for (int p = 0; p < 3; p++) {
        char serial[16];
        snprintf(serial, sizeof serial, "P-%d", p + 1);
        struct val v[] = { I(p + 1), T(serial), I(p < 2 ? 1 : 2), T("probe note"),
                           T("2026-01-01T00:00:00Z") };
        insert(db, "probe", "id, serial, lot_id, note, created_at", v, COUNT(v), in);
    }
    {
        struct val v[] = { I(1), T("REF-1"), T("CERT-1"), T("2027-01-01"), T("linear"),
                           R(0.01), R(1e-4), R(273.15), N, N, N, N, T("ref note"),
                           T("2026-01-01T00:00:00Z") };
        insert(db, "reference", "id, ident, certificate, due_date, correction, lin_c0_k, lin_c1, "
               "lin_t0_k, cvd_r0_ohm, cvd_a, cvd_b, cvd_c, note, created_at", v, COUNT(v), in);
    }
    /* runs: probe 1 twice, probe 2 once; five readings each */
    for (int r = 0; r < 3; r++) {
        struct val v[] = { I(r + 1), I(r < 2 ? 1 : 2), I(1), T("operator"), T("oil bath"),
                           T("22 C"), N, T(when[r]), T("run.csv"), T("C"), I(5 * r + 1), I(5),
                           T("run note"), T("2026-06-06T00:00:00Z"), N, N, N, R(1e-5), N };
        insert(db, "run", "id, probe_id, reference_id, operator, medium, ambient, excitation, "
               "started_at, source, t_raw_unit, first_reading, nreadings, note, imported_at, "
               "readings_sha256, repeats_run, ref_overdue, measuring_current_a, "
               "measuring_voltage_v", v, COUNT(v), in);
        for (int i = 0; i < 5; i++) {
            double t = 273.15 + 25.0 * i, b = 3950.0 + 3.0 * r;
            struct val g[] = { I(5 * r + i + 1), I(r + 1), I(i + 2), R(t - 273.15), R(t),
                               R(beta_r(t, b)), R(0.002), R(0.5), T(when[r]), T("reading") };
            insert(db, "reading", "id, run_id, line, t_raw, t_k, r_ohm, u_t_k, u_r_ohm, time, "
                   "note", g, COUNT(g), in);
        }
        char ids[64];
        snprintf(ids, sizeof ids, "[%d,%d,%d,%d,%d]", 5 * r + 1, 5 * r + 2, 5 * r + 3,
                 5 * r + 4, 5 * r + 5);
        struct val f[] = { I(r + 1), I(r + 1), T("beta"), R(298.15), I(2), R(1e4),
                           R(3950.0 + 3.0 * r), N, N, N, N, { 'b', (const char *)cov, 32.0 },
                           I(5), I(3), I(1), R(1.5), R(1.0), R(0.8), R(1.5), R(273.15),
                           R(373.15), T(ids), T("0.1.0"), T("2026-06-06T00:00:00Z") };
        insert(db, "fit", "id, run_id, model, t0_k, npar, c0, c1, c2, c3, c4, c5, cov, n, dof, "
               "weighted, chi2, cov_scale, rms_mk, max_abs_mk, t_min_k, t_max_k, reading_ids, "
               "program_version, created_at", f, COUNT(f), in);
    }
    {
        struct val v[] = { I(3), T("reading 3 was taken too early"), T("fuzz"),
                           T("2026-06-07T00:00:00Z") };
        insert(db, "exclusion", "reading_id, reason, by_whom, at", v, COUNT(v), in);
    }
    {
        struct val v[] = { I(1), T("NTC-FUZZ"), T("beta"), R(298.15), I(2), R(1e4), R(3950.0),
                           N, N, N, N, T("catalogue"), R(0.5), R(273.15), R(343.15), I(2),
                           R(0.1), R(0.05), T("spec note"), T("2026-01-02T00:00:00Z") };
        insert(db, "part_spec", "id, part, model, t0_k, npar, c0, c1, c2, c3, c4, c5, source, "
               "tol_k, tol_lo_k, tol_hi_k, baseline, limit_k, rate_k, note, created_at", v,
               COUNT(v), in);
    }
    {
        struct val v[] = { I(1), T("report-run"), I(1), T("{\"subject\": \"run 1\"}"),
                           T("<!DOCTYPE html><p>issued</p>"), R(0.1), N, T("0.1.0"),
                           T("2026-06-08T00:00:00Z") };
        insert(db, "artifact", "id, kind, fit_id, spec, content, max_error_k, replaces_id, "
               "program_version, created_at", v, COUNT(v), in);
    }
}

/* ---- reading it all back ---- */

struct seen {
    char lots[4][BG_TEXT], parts[4][BG_TEXT], probes[6][BG_TEXT], refs[4][BG_TEXT];
    size_t nlots, nparts, nprobes, nrefs;
    long long runs[8], fits[8];
    size_t nruns, nfits, nreports;
    FILE *json;             /* every text, as JSON strings in an array */
    size_t nstr;
};

static void json_text(struct seen *s, const char *t)
{
    if (!s->json)
        return;
    fputs(s->nstr++ ? ",\n" : "", s->json);
    bg_json_write_string(s->json, t);
}

static int on_lot(const bg_lot *l, void *ctx)
{
    struct seen *s = ctx;
    json_text(s, l->code), json_text(s, l->part), json_text(s, l->note);
    json_text(s, l->created_at);
    if (s->nlots < 4)
        snprintf(s->lots[s->nlots++], BG_TEXT, "%s", l->code);
    if (s->nparts < 4)
        snprintf(s->parts[s->nparts++], BG_TEXT, "%s", l->part);
    return 0;
}

static int on_probe(const bg_probe *p, void *ctx)
{
    struct seen *s = ctx;
    json_text(s, p->serial), json_text(s, p->lot_code), json_text(s, p->note);
    json_text(s, p->created_at);
    if (s->nprobes < 6)
        snprintf(s->probes[s->nprobes++], BG_TEXT, "%s", p->serial);
    return 0;
}

static int on_ref(const bg_ref *r, void *ctx)
{
    struct seen *s = ctx;
    json_text(s, r->ident), json_text(s, r->certificate), json_text(s, r->due_date);
    if (s->nrefs < 4)
        snprintf(s->refs[s->nrefs++], BG_TEXT, "%s", r->ident);
    return 0;
}

static int on_run(const bg_run *r, void *ctx)
{
    struct seen *s = ctx;
    char buf[BG_NOTE + 64];
    json_text(s, r->serial), json_text(s, r->ref_ident), json_text(s, r->operator_name);
    json_text(s, r->medium), json_text(s, r->ambient), json_text(s, r->excitation);
    json_text(s, r->started_at), json_text(s, r->source), json_text(s, r->note);
    json_text(s, r->imported_at), json_text(s, r->readings_sha256);
    json_text(s, r->ref_due_date), json_text(s, r->ref_overdue);
    json_text(s, bg_store_run_measuring(r, buf, sizeof buf));
    if (s->nruns < 8)
        s->runs[s->nruns++] = r->id;
    return 0;
}

static int on_reading(const bg_reading_row *g, void *ctx)
{
    struct seen *s = ctx;
    json_text(s, g->t_raw_unit), json_text(s, g->time), json_text(s, g->note);
    json_text(s, g->excl_reason), json_text(s, g->excl_by), json_text(s, g->excl_at);
    return 0;
}

static int on_fit(const bg_fit_row *f, void *ctx)
{
    struct seen *s = ctx;
    char name[32];
    json_text(s, f->serial), json_text(s, f->program_version), json_text(s, f->created_at);
    json_text(s, bg_model_name(&f->model, name, sizeof name));
    for (size_t i = 0; i < f->npar && i < BG_MODEL_MAXPAR; i++)
        (void)bg_fit_row_coef_u(f, i);
    if (s->nfits < 8)
        s->fits[s->nfits++] = f->id;
    return 0;
}

static int on_history(const char *started_at, long long run_id, const bg_fit_row *fit,
                      void *ctx)
{
    (void)run_id;
    json_text(ctx, started_at);
    return fit ? on_fit(fit, ctx) : 0;
}

static int on_latest(const char *serial, const bg_fit_row *fit, void *ctx)
{
    json_text(ctx, serial);
    return fit ? on_fit(fit, ctx) : 0;
}

static int on_lot_history(const char *serial, const bg_fit_row *fits,
                          char (*started_at)[BG_TIME], size_t n, void *ctx)
{
    json_text(ctx, serial);
    for (size_t i = 0; i < n; i++) {
        json_text(ctx, started_at[i]);
        on_fit(&fits[i], ctx);
    }
    return 0;
}

static int on_points(const char *serial, long long probe_id, long long run_id,
                     bg_store_points *points, void *ctx)
{
    (void)probe_id, (void)run_id, (void)points;
    json_text(ctx, serial);
    return 0;
}

static int on_artifact(const bg_artifact *a, void *ctx)
{
    json_text(ctx, a->kind), json_text(ctx, a->version), json_text(ctx, a->created_at);
    if (a->spec)
        json_text(ctx, a->spec);
    return 0;
}

static int on_spec(const bg_part_spec *p, void *ctx)
{
    json_text(ctx, p->part), json_text(ctx, p->source), json_text(ctx, p->note);
    json_text(ctx, p->created_at);
    return 0;
}

static void check_html(const char *what, const char *html, size_t len)
{
    size_t at = fuzz_html_check(html, len);
    if (at)
        fuzz_fail(what, html, len, at - 1);
}

static void reports(bg_store *st, struct seen *s)
{
    bg_error err = BG_ERROR_INIT;
    bg_report_head h = { 1, "2026-06-09T00:00:00Z", "Invented lab", NULL, 0, NULL, NULL };
    char *html = NULL;
    size_t len = 0;

    for (size_t i = 0; i < s->nruns; i++) {
        bg_calib_report r = BG_CALIB_REPORT_INIT;
        if (bg_calib_report_load(st, s->runs[i], 0, 1.5e-3, &r, &err) == BG_OK &&
            bg_report_render(bg_report_kind_find("calibration"), &r, &h, &html, &len, &err) ==
                BG_OK) {
            check_html("calibration report: not well formed", html, len);
            s->nreports++;
            free(html);
            html = NULL;
        }
        bg_calib_report_release(&r);
    }
    for (size_t i = 0; i < s->nlots; i++) {
        bg_qa_lot_summary qs = BG_QA_LOT_SUMMARY_INIT;
        bg_lot_report lr;
        memset(&lr, 0, sizeof lr);
        if (bg_store_lot_get(st, s->lots[i], &lr.lot, &err) == BG_OK &&
            bg_qa_lot_summarize(st, s->lots[i], NULL, &qs, &err) == BG_OK) {
            lr.summary = &qs;
            if (bg_report_render(bg_report_kind_find("lot"), &lr, &h, &html, &len, &err) ==
                BG_OK) {
                check_html("lot report: not well formed", html, len);
                s->nreports++;
                free(html);
                html = NULL;
            }
        }
        bg_qa_lot_summary_release(&qs);
    }
}

static void read_all(bg_store *st, struct seen *s)
{
    bg_error err = BG_ERROR_INIT;
    bg_lot lot;
    bg_probe probe;
    bg_ref ref;
    bg_run run;
    bg_fit_row fit;
    bg_part_spec spec;
    bg_artifact art;
    bg_store_points pts = BG_STORE_POINTS_INIT;
    long long ids[16], id;
    size_t n;

    bg_store_lot_each(st, on_lot, s, &err);
    bg_store_probe_each(st, NULL, on_probe, s, &err);
    bg_store_ref_each(st, on_ref, s, &err);
    bg_store_run_each(st, NULL, NULL, on_run, s, &err);
    bg_store_fit_each(st, NULL, NULL, on_fit, s, &err);
    bg_store_artifact_each(st, on_artifact, s, &err);
    for (size_t i = 0; i < s->nlots; i++) {
        if (bg_store_lot_get(st, s->lots[i], &lot, &err) == BG_OK)
            on_lot(&lot, &(struct seen){ .json = s->json, .nstr = 1, .nlots = 4, .nparts = 4 });
        bg_store_probe_each(st, s->lots[i], on_probe, &(struct seen){ .nprobes = 6 }, &err);
        bg_store_run_each(st, NULL, s->lots[i], on_run, &(struct seen){ .nruns = 8 }, &err);
        bg_store_fit_each(st, NULL, s->lots[i], on_fit, &(struct seen){ .nfits = 8 }, &err);
        bg_store_lot_latest_fits(st, s->lots[i], NULL, on_latest,
                                 &(struct seen){ .nfits = 8 }, &err);
        bg_store_lot_history(st, s->lots[i], NULL, on_lot_history,
                             &(struct seen){ .nfits = 8 }, &err);
        bg_store_lot_points_each(st, s->lots[i], on_points, &(struct seen){ 0 }, &err);
        bg_qa_lot ql = BG_QA_LOT_INIT;
        bg_qa_opts qo = bg_qa_default_opts();
        bg_qa_lot_stats(st, s->lots[i], &qo, &ql, &err);
        bg_qa_lot_release(&ql);
    }
    for (size_t i = 0; i < s->nparts; i++) {
        bg_qa_part qp = BG_QA_PART_INIT;
        bg_qa_opts o = bg_qa_default_opts();
        bg_store_part_lots(st, s->parts[i], on_lot, &(struct seen){ .nlots = 4, .nparts = 4 },
                           &err);
        if (bg_store_part_spec_get(st, s->parts[i], &spec, &err) == BG_OK)
            on_spec(&spec, &(struct seen){ 0 });
        bg_store_part_spec_each(st, s->parts[i], on_spec, &(struct seen){ 0 }, &err);
        bg_qa_part_charts(st, s->parts[i], &o, &qp, &err);
        bg_qa_part_release(&qp);
    }
    for (size_t i = 0; i < s->nprobes; i++) {
        bg_qa_probe qp = BG_QA_PROBE_INIT;
        if (bg_store_probe_get(st, s->probes[i], &probe, &err) == BG_OK)
            bg_store_run_latest(st, probe.id, &id, &err);
        bg_store_current_fit(st, s->probes[i], &fit, &run, &err);
        bg_store_probe_history(st, s->probes[i], NULL, on_history, &(struct seen){ .nfits = 8 },
                               &err);
        bg_store_run_each(st, s->probes[i], NULL, on_run, &(struct seen){ .nruns = 8 }, &err);
        bg_qa_opts qo = bg_qa_default_opts();
        bg_qa_probe_drift(st, s->probes[i], &qo, &qp, &err);
        bg_qa_probe_release(&qp);
    }
    for (size_t i = 0; i < s->nrefs; i++)
        bg_store_ref_get(st, s->refs[i], &ref, &err);
    for (size_t i = 0; i < s->nruns; i++) {
        if (bg_store_run_get(st, s->runs[i], &run, &err) == BG_OK)
            on_run(&run, &(struct seen){ .nruns = 8 });
        bg_store_reading_each(st, s->runs[i], on_reading, s, &err);
        bg_store_run_points(st, s->runs[i], &pts, &err);
        bg_store_run_fit(st, s->runs[i], &id, &err);
    }
    for (size_t i = 0; i < s->nfits; i++) {
        if (bg_store_fit_get(st, s->fits[i], &fit, &err) == BG_OK) {
            bg_curve_src src = bg_curve_src_of_model(&fit.model);
            bg_curve c = BG_CURVE_INIT;
            src.has_cov = fit.has_cov;
            memcpy(src.cov, fit.cov, sizeof src.cov);
            src.has_range = 1, src.t_min_k = fit.t_min_k, src.t_max_k = fit.t_max_k;
            bg_curve_span(&src, 5, &c, &err);
            bg_curve_release(&c);
        }
        bg_store_fit_readings(st, s->fits[i], ids, 16, &n, &err);
    }
    {
        bg_store_check chk;
        long long records;
        char head[65];
        if (bg_store_verify(st, &chk, &err) == BG_OK)
            json_text(s, chk.problem), json_text(s, chk.bad_kind);
        bg_store_chain_head(st, &records, head, &err);
    }
    memset(&art, 0, sizeof art);
    if (bg_store_artifact_get(st, 1, &art, &err) == BG_OK)
        on_artifact(&art, s);
    bg_artifact_release(&art);
    bg_store_points_release(&pts);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    fuzz_in in = { data, size };
    bg_store *st = NULL;
    bg_error err = BG_ERROR_INIT;
    sqlite3 *db;
    FILE *f;
    struct seen s;
    char *json = NULL;
    size_t jlen = 0;

    if (!tpl)
        prepare();
    cleanup();
    if (!(f = fopen(db_path, "wb")) || fwrite(tpl, 1, tpl_len, f) != tpl_len || fclose(f))
        die("writing", db_path);
    if (sqlite3_open(db_path, &db) != SQLITE_OK)
        die("sqlite3_open", db_path);
    exec(db, "PRAGMA foreign_keys = OFF; PRAGMA synchronous = OFF; BEGIN");
    fill(db, &in);
    exec(db, "COMMIT");
    sqlite3_close(db);

    if (bg_store_open(db_path, 0, &st, &err) != BG_OK)
        die("bg_store_open", err.msg);
    memset(&s, 0, sizeof s);
    s.json = open_memstream(&json, &jlen);
    if (s.json)
        fputc('[', s.json);
    read_all(st, &s);
    reports(st, &s);
    bg_store_close(st);
    if (getenv("FUZZ_STORE_DEBUG")) /* what the input reached */
        fprintf(stderr, "lots %zu, probes %zu, runs %zu, fits %zu, reports %zu\n", s.nlots,
                s.nprobes, s.nruns, s.nfits, s.nreports);
    if (s.json) {
        fputs("]\n", s.json);
        fclose(s.json);
        size_t at = fuzz_json_check(json, jlen);
        if (at)
            fuzz_fail("bg_json_write_string: not JSON", json, jlen, at - 1);
    }
    free(json);
    return 0;
}
