/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Fuzz target: the writers stay valid on hostile contents.  The input chooses texts (any
** bytes: markup, quotes, invalid UTF-8, control characters, comment closers, overlong) and
** numbers (NaN, infinities, extremes) for a calibration report, a lot report and a firmware
** table built here as tests/test_report.c builds them; then the three HTML reports must be
** well formed (tags known and balanced, attributes quoted, entities whole, valid UTF-8,
** no event handler), the C of the table must lex cleanly, and every text through the JSON
** string writer must give valid JSON (RFC 8259).  With FUZZ_C_DIR set (the replay in
** make sanitize), each C file is also written there so that a compiler can check it. */
#include <math.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "bandgap/bandgap.h"
#include "fuzz_util.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static const bg_report_head *head_of(fuzz_in *in, bg_report_head *h, char (*t)[300])
{
    static bg_chain_head chain;
    memset(h, 0, sizeof *h);
    if (fuzz_byte(in) & 1) { /* the record chain's head, as a caller gives it */
        chain.records = (long long)fuzz_byte(in);
        fuzz_text(in, chain.hash, sizeof chain.hash);
        h->chain = &chain;
    }
    h->id = (long long)fuzz_byte(in) << 24 | fuzz_byte(in);
    h->issued = fuzz_text(in, t[0], sizeof t[0]);
    h->lab = fuzz_text(in, t[1], sizeof t[1]);
    h->customer = fuzz_byte(in) & 1 ? fuzz_text(in, t[2], sizeof t[2]) : NULL;
    h->replaces = fuzz_byte(in);
    h->why = h->replaces ? fuzz_text(in, t[3], sizeof t[3]) : NULL;
    return h;
}

static void check_html(const char *what, char *html, size_t len)
{
    size_t at = fuzz_html_check(html, len);
    const char *dump = getenv("FUZZ_WRITERS_DUMP"); /* a failing page, to look at */
    FILE *d;
    if (at && dump && (d = fopen(dump, "w")) != NULL)
        fwrite(html, 1, len, d), fclose(d);
    if (at)
        fuzz_fail(what, html, len, at - 1);
    free(html);
}

static void render(const char *kind, const void *result, const bg_report_head *h)
{
    char *html = NULL;
    size_t len = 0;
    bg_error err = BG_ERROR_INIT;
    int rc = bg_report_render(bg_report_kind_find(kind), result, h, &html, &len, &err);
    if (getenv("FUZZ_WRITERS_DEBUG")) /* what the input reached */
        fprintf(stderr, "%s report: %s\n", kind, rc == BG_OK ? "rendered" : err.msg);
    if (rc == BG_OK)
        check_html(kind, html, len);
}

/* A text into a fixed field of 'size' bytes. */
#define TEXT(in, field) fuzz_text(in, field, sizeof(field))

/* ---- the calibration report ---- */

static void calib_report(fuzz_in *in, FILE *json)
{
    static const double c[2] = { 1e4, 3950.0 }; /* invented: beta 10 kohm, 3950 K */
    bg_calib_report r;
    bg_report_head h;
    char ht[4][300];
    bg_error err = BG_ERROR_INIT;

    memset(&r, 0, sizeof r);
    r.run.id = 1;
    TEXT(in, r.run.serial), TEXT(in, r.run.ref_ident), TEXT(in, r.run.operator_name);
    TEXT(in, r.run.medium), TEXT(in, r.run.ambient), TEXT(in, r.run.excitation);
    TEXT(in, r.run.started_at), TEXT(in, r.run.source), TEXT(in, r.run.note);
    TEXT(in, r.run.imported_at), TEXT(in, r.run.ref_overdue), TEXT(in, r.run.ref_due_date);
    r.run.measuring_current_a = fuzz_double(in, 1e-5);
    TEXT(in, r.probe.serial), TEXT(in, r.probe.lot_code), TEXT(in, r.probe.note);
    TEXT(in, r.lot.code), TEXT(in, r.lot.part), TEXT(in, r.lot.note);
    r.lot.r25_ohm = fuzz_double(in, 1e4), r.lot.beta_k = fuzz_double(in, 3950.0);
    r.lot.pair_t1_k = 298.15, r.lot.pair_t2_k = 358.15;
    r.have_ref = (int)(fuzz_byte(in) & 1);
    TEXT(in, r.ref.ident), TEXT(in, r.ref.certificate), TEXT(in, r.ref.due_date);
    bg_model_parse("beta", &r.fit.model, NULL);
    bg_model_set_coef(&r.fit.model, c, 2, NULL);
    r.fit.id = 2, r.fit.run_id = 1, r.fit.npar = 2, r.fit.n = 5, r.fit.dof = fuzz_byte(in) % 4;
    r.fit.has_cov = 1;
    r.fit.cov[0] = fuzz_double(in, 25.0), r.fit.cov[3] = fuzz_double(in, 100.0);
    r.fit.t_min_k = fuzz_double(in, 273.15), r.fit.t_max_k = fuzz_double(in, 373.15);
    r.fit.rms_mk = fuzz_double(in, 1.0), r.fit.chi2 = fuzz_double(in, 2.0);
    TEXT(in, r.fit.program_version), TEXT(in, r.fit.created_at), TEXT(in, r.fit.serial);
    r.dissipation_w_per_k = fuzz_double(in, 1.5e-3);
    r.nreadings = 1 + fuzz_byte(in) % 6;
    r.readings = calloc(r.nreadings, sizeof *r.readings);
    if (!r.readings)
        return;
    for (size_t i = 0; i < r.nreadings; i++) {
        bg_reading_row *g = &r.readings[i];
        double t = 273.15 + 20.0 * (double)i;
        g->id = 10 + (long long)i, g->run_id = 1, g->line = i + 2;
        g->t_k = fuzz_double(in, t);
        g->r_ohm = fuzz_double(in, 1e4 * exp(3950.0 * (1.0 / t - 1.0 / 298.15)));
        g->u_t_k = fuzz_double(in, 0.002);
        TEXT(in, g->time), TEXT(in, g->note);
        g->excluded = (int)(fuzz_byte(in) & 1);
        TEXT(in, g->excl_reason), TEXT(in, g->excl_by), TEXT(in, g->excl_at);
        bg_json_write_string(json, g->note), fputc(',', json);
        bg_json_write_string(json, g->excl_reason), fputc(',', json);
    }
    head_of(in, &h, ht);
    const char *texts[] = { r.run.serial, r.run.operator_name, r.run.medium, r.run.note,
                            r.run.source, r.probe.serial, r.lot.code, r.lot.note,
                            r.ref.certificate, h.lab };
    for (size_t i = 0; i < sizeof texts / sizeof texts[0]; i++)
        bg_json_write_string(json, texts[i]), fputc(',', json);
    if (bg_calib_report_compute(&r, &err) == BG_OK)
        render("calibration", &r, &h);
    bg_calib_report_release(&r);
}

/* ---- the lot report ---- */

static void lot_report(fuzz_in *in, FILE *json)
{
    bg_lot_report r;
    bg_qa_lot_summary qs = BG_QA_LOT_SUMMARY_INIT;
    bg_qa_lot *l = &qs.stats;
    bg_report_head h;
    char ht[4][300];
    size_t n = fuzz_byte(in) % 4, nat = fuzz_byte(in) % 4;

    memset(&r, 0, sizeof r);
    TEXT(in, r.lot.code), TEXT(in, r.lot.part), TEXT(in, r.lot.note);
    r.lot.r25_ohm = 1e4, r.lot.beta_k = 3950.0, r.lot.pair_t1_k = 298.15;
    r.lot.pair_t2_k = 358.15, r.lot.tol_r25 = 0.01, r.lot.tol_beta = 0.01;
    l->lot = r.lot;
    l->n = n, l->nat = nat;
    l->serial = calloc(n + 1, sizeof *l->serial);
    l->fit_id = calloc(n + 1, sizeof *l->fit_id);
    l->r25_dev_pct = calloc(n + 1, sizeof *l->r25_dev_pct);
    l->b_k = calloc(n + 1, sizeof *l->b_k);
    l->dev_mk = calloc(n * nat + 1, sizeof *l->dev_mk);
    l->max_abs_dev_mk = calloc(n + 1, sizeof *l->max_abs_dev_mk);
    l->flags = calloc(n + 1, sizeof *l->flags);
    l->tol_dev_mk = calloc(n + 1, sizeof *l->tol_dev_mk);
    if (!l->serial || !l->fit_id || !l->r25_dev_pct || !l->b_k || !l->dev_mk ||
        !l->max_abs_dev_mk || !l->flags || !l->tol_dev_mk)
        goto done;
    for (size_t i = 0; i < n; i++) {
        TEXT(in, l->serial[i]);
        bg_json_write_string(json, l->serial[i]), fputc(',', json);
        l->fit_id[i] = (long long)i + 1;
        l->r25_dev_pct[i] = fuzz_double(in, 0.3);
        l->b_k[i] = fuzz_double(in, 3950.0);
        l->max_abs_dev_mk[i] = fuzz_double(in, 20.0);
        l->flags[i] = fuzz_byte(in) & 15;
        l->tol_dev_mk[i] = fuzz_double(in, 10.0);
        for (size_t k = 0; k < nat; k++)
            l->dev_mk[i * nat + k] = fuzz_double(in, 10.0);
    }
    for (size_t k = 0; k < nat; k++) {
        l->at_k[k] = 273.15 + 25.0 * (double)k;
        l->dev_min_mk[k] = -5.0, l->dev_max_mk[k] = 5.0;
        l->band_lo_mk[k] = -50.0, l->band_hi_mk[k] = 50.0;
    }
    bg_stats_of(l->r25_dev_pct, n, &l->r25_dev);
    bg_stats_of(l->b_k, n, &l->b);
    l->nominal_r25_ohm = 1e4, l->nominal_b_k = 3950.0, l->nominal_is_beta = 1;
    l->alpha = 0.05;
    TEXT(in, l->spec.part), TEXT(in, l->spec.source), TEXT(in, l->spec.note);
    /* the part's charts could not be drawn, and lots were left off with their reasons */
    qs.part_rc = BG_EINVAL;
    TEXT(in, qs.part_err.msg);
    TEXT(in, qs.part.part);
    qs.part.nskipped = fuzz_byte(in) % 3;
    qs.part.skipped = calloc(qs.part.nskipped + 1, sizeof *qs.part.skipped);
    if (!qs.part.skipped)
        goto done;
    for (size_t i = 0; i < qs.part.nskipped; i++) {
        TEXT(in, qs.part.skipped[i].code), TEXT(in, qs.part.skipped[i].why);
        bg_json_write_string(json, qs.part.skipped[i].why), fputc(',', json);
    }
    qs.flagged = (int)(fuzz_byte(in) & 1);
    r.summary = &qs;
    head_of(in, &h, ht);
    bg_json_write_string(json, r.lot.code), fputc(',', json);
    bg_json_write_string(json, qs.part_err.msg), fputc(',', json);
    render("lot", &r, &h);
done:
    bg_qa_lot_summary_release(&qs);
}

/* ---- the table: C and its report ---- */

static void table(fuzz_in *in, FILE *json)
{
    static unsigned files;
    bg_lut_request rq;
    bg_lut_result r = BG_LUT_RESULT_INIT;
    bg_error err = BG_ERROR_INIT;
    char serial[300], started[300], stamp[100], symbol[80];
    double c[2];
    bg_report_head h;
    char ht[4][300];

    memset(&rq, 0, sizeof rq);
    c[0] = fuzz_double(in, 1e4), c[1] = fuzz_double(in, 3950.0);
    if (bg_model_parse("beta", &rq.spec.model, NULL) != BG_OK ||
        bg_model_set_coef(&rq.spec.model, c, 2, NULL) != BG_OK)
        return;
    rq.spec.circuit.kind = BG_CIRCUIT_DIVIDER_LOW, rq.spec.circuit.fixed_ohm = 1e4;
    rq.spec.circuit.adc_bits = 8 + fuzz_byte(in) % 3, rq.spec.circuit.full_scale_pow2 = 1;
    rq.spec.circuit.ohms_per_code = 1.0;
    rq.spec.t_lo_k = fuzz_double(in, 273.15), rq.spec.t_hi_k = fuzz_double(in, 343.15);
    rq.spec.format = (bg_lut_format)(fuzz_byte(in) % 5);
    rq.spec.qbits = 1 + fuzz_byte(in) % 16;
    rq.spec.kelvin = (int)(fuzz_byte(in) & 1);
    rq.spec.frac_bits = -1;
    rq.spec.stamp = fuzz_byte(in) & 1 ? fuzz_text(in, stamp, sizeof stamp) : NULL;
    rq.fit_id = fuzz_byte(in);
    rq.fit_run_id = 3;
    rq.fit_serial = fuzz_text(in, serial, sizeof serial);
    rq.fit_started_at = fuzz_text(in, started, sizeof started);
    rq.fit_t_min_k = 200.0, rq.fit_t_max_k = 400.0;
    rq.strategy = (int)(fuzz_byte(in) % 4) - 1;
    rq.step_codes = rq.strategy <= 0 && fuzz_byte(in) & 1 ? 4 : 0;
    rq.max_err_k = rq.step_codes ? NAN : fuzz_double(in, 0.2);
    rq.error_curve = 1;
    fuzz_text(in, symbol, sizeof symbol);
    bg_json_write_string(json, serial), fputc(',', json);
    bg_json_write_string(json, started), fputc(',', json);
    if (bg_lut_make(&rq, &r, &err) != BG_OK) {
        if (getenv("FUZZ_WRITERS_DEBUG"))
            fprintf(stderr, "table: %s\n", err.msg);
        return;
    }
    head_of(in, &h, ht);
    render("table", &r, &h);

    char *src = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&src, &len);
    if (f) {
        int rc = bg_lut_emit_c(&r.table, &r.spec, symbol[0] ? symbol : "ntc", "0.1.0", f, &err);
        fclose(f);
        if (getenv("FUZZ_WRITERS_DEBUG"))
            fprintf(stderr, "C: %s\n", rc == BG_OK ? "written" : err.msg);
        if (rc == BG_OK) {
            const char *dir = getenv("FUZZ_C_DIR");
            char path[512];
            FILE *o;
            snprintf(path, sizeof path, "%s/table-%u.c", dir ? dir : "", files++);
            if (dir && (o = fopen(path, "w")) != NULL) {
                fwrite(src, 1, len, o);
                fclose(o);
            }
            size_t at = fuzz_c_check(src, len);
            if (at)
                fuzz_fail("bg_lut_emit_c: does not lex as C", src, len, at - 1);
        }
        free(src);
    }
    bg_lut_result_release(&r);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    fuzz_in in = { data, size };
    char *json = NULL;
    size_t len = 0;
    FILE *j = open_memstream(&json, &len);
    if (!j)
        return 0;
    fputc('[', j);
    unsigned which = fuzz_byte(&in);
    if (which & 1)
        calib_report(&in, j);
    if (which & 2)
        lot_report(&in, j);
    if (which & 4)
        table(&in, j);
    fputs("null]", j);
    fclose(j);
    size_t at = fuzz_json_check(json, len);
    if (at)
        fuzz_fail("bg_json_write_string: not JSON", json, len, at - 1);
    free(json);
    return 0;
}
