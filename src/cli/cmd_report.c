/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap report: calibration reports of a run and QA reports of a lot, as self-contained
** HTML, issued once and stored in the database; a reissue is a new report that names the one
** it replaces.  --get writes the stored bytes of a report again; --list lists them. */
#include <errno.h>
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_cdf.h>

#include "cli.h"
#include "../lib/report/html_int.h"

static const char report_usage[] =
    "Usage: bandgap report --run N [--fit M] [--lab TEXT] [--customer TEXT]\n"
    "                      [--dissipation mW/K] [--reissue ID --why TEXT] -o FILE.html\n"
    "       bandgap report --lot CODE [--lab TEXT] [--reissue ID --why TEXT] -o FILE.html\n"
    "       bandgap report --get ID -o FILE.html\n"
    "       bandgap report --list [--json]\n"
    "A calibration report of a run (its newest fit unless --fit): the probe and lot, the\n"
    "reference thermometer, the method and conditions, the readings with residuals, the\n"
    "model with standard uncertainties, the expanded uncertainty with k and the coverage\n"
    "probability, the validity range, an R-T table and a residual chart with the U (k = 2)\n"
    "band.  A lot report: the lot statistics with a histogram and the control charts of\n"
    "the part's lots, and each probe's drift.  One self-contained HTML file (no network,\n"
    "inline SVG, prints on A4 and Letter).  A report, once issued, is stored and never\n"
    "changes: a second report of the same run or lot is refused unless --reissue names the\n"
    "newest one, with the reason in --why; --get writes a stored report again, byte for byte.\n"
    "--dissipation gives the probe's dissipation constant for the self-heating estimate.\n";

struct report_opts {
    const char *lab, *customer, *why;
    long long replaces;
    double dissipation_w_per_k;
};

struct reading_buf {
    bg_reading_row *r;
    size_t n, cap;
};

static int reading_keep(const bg_reading_row *row, void *ctx)
{
    struct reading_buf *b = ctx;
    if (b->n == b->cap) {
        size_t cap = b->cap ? 2 * b->cap : 32;
        bg_reading_row *p = realloc(b->r, cap * sizeof *p);
        if (!p)
            return 1;
        b->r = p, b->cap = cap;
    }
    b->r[b->n++] = *row;
    return 0;
}

struct newest_of_run {
    long long run_id, fit_id;
};

static int newest_of_run_cb(const bg_fit_row *f, void *ctx)
{
    struct newest_of_run *n = ctx;
    if (f->run_id == n->run_id && f->id > n->fit_id)
        n->fit_id = f->id;
    return 0;
}

struct run_report {
    const struct report_opts *o;
    bg_run run;
    bg_probe probe;
    bg_lot lot;
    bg_ref ref;
    int have_ref;
    bg_fit_row fit;
    struct reading_buf rd;
};

/* "10 uA", "0.1mA", "2 V": the value in A or V and which */
static int parse_excitation(const char *s, double *v, int *is_current)
{
    char *end;
    double x = strtod(s, &end);
    if (end == s || !(x > 0.0))
        return 0;
    while (*end == ' ')
        end++;
    double mul = 1.0;
    if (strncmp(end, "\xc2\xb5", 2) == 0)
        mul = 1e-6, end += 2;
    else if (*end == 'u' || *end == 'n' || (*end == 'm' && end[1]))
        mul = *end == 'u' ? 1e-6 : *end == 'n' ? 1e-9 : 1e-3, end++;
    if (strcmp(end, "A") == 0)
        *is_current = 1;
    else if (strcmp(end, "V") == 0)
        *is_current = 0;
    else
        return 0;
    *v = x * mul;
    return 1;
}

static void kv(FILE *f, const char *k, const char *v)
{
    fputs("<tr><th>", f);
    bgi_html_esc(f, k);
    fputs("</th><td>", f);
    bgi_html_esc(f, v && *v ? v : "not recorded");
    fputs("</td></tr>\n", f);
}

static double cdeg(double t_k)
{
    return t_k - BG_ZERO_C_K;
}

static void report_head(FILE *f, const char *title, const char *rid, const char *issued,
                        const struct report_opts *o)
{
    bgi_html_begin(f, title, rid);
    fprintf(f, "<h1>");
    bgi_html_esc(f, title);
    fprintf(f, "</h1>\n<table class=\"kv\" id=\"identity\">\n");
    kv(f, "Report", rid);
    kv(f, "Issued", issued);
    if (o->replaces) {
        char buf[64];
        snprintf(buf, sizeof buf, "%lld", o->replaces);
        fprintf(f, "<tr><th>Replaces</th><td id=\"replaces\" data-v=\"%lld\">report %s; "
                   "reason: ", o->replaces, buf);
        bgi_html_esc(f, o->why);
        fputs("</td></tr>\n", f);
    }
    kv(f, "Laboratory", o->lab);
    if (o->customer)
        kv(f, "Customer", o->customer);
    char by[64];
    snprintf(by, sizeof by, "bandgap %s", bg_version());
    kv(f, "Issued by", by);
    fputs("</table>\n", f);
}

/* The start of a report: the page into memory, its identifier (PREFIX-000042) and head. */
static FILE *report_open(char **content, size_t *len, const char *prefix, long long id,
                         const char *title, const char *issued, const struct report_opts *o,
                         char *rid, size_t rid_size, bg_error *err)
{
    FILE *f = open_memstream(content, len);
    if (!f) {
        bg_error_set(err, BG_ENOMEM, "out of memory for the report");
        return NULL;
    }
    snprintf(rid, rid_size, "%s-%06lld", prefix, id);
    report_head(f, title, rid, issued, o);
    return f;
}

static int run_report_gen(long long id, const char *issued, void *vctx, char **content,
                          size_t *len, bg_error *err)
{
    struct run_report *r = vctx;
    const bg_fit_row *ft = &r->fit;
    const bg_model *m = &ft->model;
    char rid[40], name[16], b1[32], buf[256];
    FILE *f = report_open(content, len, "BG-CAL", id, "Calibration report", issued, r->o, rid,
                          sizeof rid, err);
    if (!f)
        return BG_ENOMEM;

    fputs("<h2>Item calibrated</h2>\n<table class=\"kv\" id=\"item\">\n", f);
    kv(f, "Probe serial", r->probe.serial);
    kv(f, "Production lot", r->lot.code);
    kv(f, "Part", r->lot.part);
    snprintf(buf, sizeof buf, "R25 %s ohm (tolerance %.3g %%), B%.0f/%.0f %.0f K (tolerance "
             "%.3g %%)", bg_units_format_ohms(r->lot.r25_ohm, 6, b1, sizeof b1),
             100.0 * r->lot.tol_r25, cdeg(r->lot.pair_t1_k), cdeg(r->lot.pair_t2_k),
             r->lot.beta_k, 100.0 * r->lot.tol_beta);
    kv(f, "Nominal", buf);
    fputs("</table>\n<h2>Reference thermometer</h2>\n<table class=\"kv\" id=\"reference\">\n",
          f);
    if (r->have_ref) {
        kv(f, "Identifier", r->ref.ident);
        kv(f, "Traceability (certificate)", r->ref.certificate);
        kv(f, "Calibration due", r->ref.due_date);
        if (r->ref.kind == BG_REF_LINEAR)
            snprintf(buf, sizeof buf, "linear: t = t_read %s %.6g K %s %.6g (t_read - %.3f degC)",
                     r->ref.lin_c0_k < 0 ? "-" : "+", fabs(r->ref.lin_c0_k),
                     r->ref.lin_c1 < 0 ? "-" : "+", fabs(r->ref.lin_c1), cdeg(r->ref.lin_t0_k));
        else if (r->ref.kind == BG_REF_CVD)
            snprintf(buf, sizeof buf, "read as a platinum resistance, IEC 60751 "
                     "Callendar-Van Dusen: R0 %.9g ohm, A %.6g, B %.6g, C %.6g",
                     r->ref.cvd_r0_ohm, r->ref.cvd_a, r->ref.cvd_b, r->ref.cvd_c);
        else
            snprintf(buf, sizeof buf, "none (readings used as given)");
        kv(f, "Correction applied on import", buf);
    } else
        kv(f, "Identifier", "none recorded: the readings' temperatures were used as given");
    fputs("</table>\n", f);

    /* method and conditions, with the self-heating estimate */
    double t_lo = INFINITY, t_hi = -INFINITY, r_max = 0.0;
    for (size_t i = 0; i < r->rd.n; i++) {
        t_lo = fmin(t_lo, r->rd.r[i].t_k), t_hi = fmax(t_hi, r->rd.r[i].t_k);
        r_max = fmax(r_max, r->rd.r[i].r_ohm);
    }
    fputs("<h2>Method and conditions</h2>\n<table class=\"kv\" id=\"conditions\">\n", f);
    kv(f, "Run", (snprintf(buf, sizeof buf, "%lld, started %s, %lld readings (%lld excluded)",
                           r->run.id, r->run.started_at, r->run.nreadings, r->run.nexcluded),
                  buf));
    kv(f, "Operator", r->run.operator_name);
    kv(f, "Medium", r->run.medium);
    kv(f, "Ambient", r->run.ambient);
    kv(f, "Excitation", r->run.excitation);
    double ex;
    int is_i;
    fputs("<tr><th>Self-heating estimate</th><td id=\"selfheat\">", f);
    if (parse_excitation(r->run.excitation, &ex, &is_i) && is_i) {
        double p = ex * ex * r_max; /* the largest power: at the largest resistance */
        fprintf(f, "at most ");
        bgi_html_num(f, "span", "power-uw", "%.3g", 1e6 * p);
        fprintf(f, " &#181;W (I&#178;R at the largest resistance read)");
        if (r->o->dissipation_w_per_k > 0.0) {
            fprintf(f, ", over %.3g mW/K: ", 1e3 * r->o->dissipation_w_per_k);
            bgi_html_num(f, "span", "selfheat-mk", "%.3g", 1e3 * p / r->o->dissipation_w_per_k);
            fprintf(f, " mK");
        } else
            fprintf(f, "; the temperature rise P/&#948; needs the dissipation constant "
                       "&#948; (--dissipation)");
    } else
        fprintf(f, "not estimated (needs the excitation as a current, e.g. 10 uA)");
    fputs("</td></tr>\n", f);
    bg_model_name(m, name, sizeof name);
    snprintf(buf, sizeof buf, "least squares in temperature, model %s, %s; %zu readings used, "
             "%zu degrees of freedom; fit %lld", name, ft->weighted ? "weighted by the stated "
             "uncertainties" : "unweighted", ft->n, ft->dof, ft->id);
    kv(f, "Method", buf);
    fputs("</table>\n", f);

    /* the model */
    fputs("<h2>Fitted model and coefficients</h2>\n<table class=\"data\" id=\"coefficients\">\n"
          "<tr><th>coefficient</th><th class=\"n\">value</th><th class=\"n\">standard "
          "uncertainty</th></tr>\n", f);
    for (size_t i = 0; i < ft->npar; i++) {
        fprintf(f, "<tr><td>%s</td>", bg_model_coef_name(m, i));
        bgi_html_num(f, "td", "n coef", "%.10g", m->coef[i]);
        bgi_html_num(f, "td", "n u", "%.3g", ft->has_cov ? sqrt(ft->cov[i * ft->npar + i]) : NAN);
        fputs("</tr>\n", f);
    }
    fputs("</table>\n", f);
    if (m->kind == BG_MODEL_BETA)
        fprintf(f, "<p>Reference temperature T0 = %.2f degC.</p>\n", cdeg(m->t0_k));
    fprintf(f, "<p id=\"fitstats\">RMS residual ");
    bgi_html_num(f, "span", "rms", "%.3f", ft->rms_mk);
    fprintf(f, " mK, largest ");
    bgi_html_num(f, "span", "maxabs", "%.3f", ft->max_abs_mk);
    fprintf(f, " mK, &#967;&#178; %.4g.</p>\n", ft->chi2);

    /* expanded uncertainty: the curve's U (k = 2) over the range */
    double u_worst = NAN;
    enum { NB = 41 };
    double bx[NB], blo[NB], bhi[NB];
    for (int i = 0; i < NB; i++) {
        double t = ft->t_min_k + (ft->t_max_k - ft->t_min_k) * i / (NB - 1.0), u = NAN;
        if (ft->has_cov && bg_model_u_t(m, ft->cov, t, &u, NULL) == BG_OK)
            u_worst = isnan(u_worst) ? u : fmax(u_worst, u);
        bx[i] = cdeg(t), bhi[i] = 2e3 * u, blo[i] = -2e3 * u;
    }
    fputs("<h2>Uncertainty and validity</h2>\n<table class=\"kv\" id=\"uncertainty\">\n", f);
    fprintf(f, "<tr><th>Validity range</th><td>");
    bgi_html_num(f, "span", "tmin", "%.2f", cdeg(ft->t_min_k));
    fputs(" degC to ", f);
    bgi_html_num(f, "span", "tmax", "%.2f", cdeg(ft->t_max_k));
    fputs(" degC (the readings' span)</td></tr>\n", f);
    fprintf(f, "<tr><th>Expanded uncertainty</th><td>");
    if (isfinite(u_worst)) {
        double cover = ft->dof > 0 ? 2.0 * gsl_cdf_tdist_P(2.0, (double)ft->dof) - 1.0 : NAN;
        fputs("U = ", f);
        bgi_html_sig2(f, "U", 1e3 * bgi_html_round_up2(2.0 * u_worst));
        fprintf(f, " mK at most over the range, coverage factor k = 2, coverage probability "
                   "about ");
        bgi_html_num(f, "span", "coverage", "%.0f", 100.0 * cover);
        fprintf(f, " %% (Student t, %zu degrees of freedom). U is that of the fitted curve "
                   "from the coefficients' covariance%s; it includes the reference only as far "
                   "as the stated reading uncertainties do.", ft->dof,
                ft->weighted ? " (the readings' stated uncertainties, scaled up when the "
                "scatter is larger)" : " (from the scatter of the residuals)");
    } else
        fputs("not available: the fit has no degrees of freedom", f);
    fputs("</td></tr>\n</table>\n", f);

    /* readings with residuals */
    fputs("<h2>Readings and residuals</h2>\n<table class=\"data\" id=\"readings\">\n<tr>"
          "<th class=\"n\">line</th><th class=\"n\">T ref / degC</th><th class=\"n\">R / ohm"
          "</th><th class=\"n\">T fit / degC</th><th class=\"n\">residual / mK</th><th>note"
          "</th></tr>\n", f);
    double *rx = malloc((r->rd.n + 1) * sizeof *rx), *ry = malloc((r->rd.n + 1) * sizeof *ry);
    int *rf = malloc((r->rd.n + 1) * sizeof *rf);
    double ylo = 0.0, yhi = 0.0;
    if (!rx || !ry || !rf) {
        free(rx), free(ry), free(rf);
        fclose(f);
        return bg_error_set(err, BG_ENOMEM, "out of memory for the report");
    }
    for (size_t i = 0; i < r->rd.n; i++) {
        const bg_reading_row *g = &r->rd.r[i];
        double tf = NAN;
        bg_model_t_from_r(m, g->r_ohm, &tf, NULL);
        double res = 1e3 * (g->t_k - tf);
        fprintf(f, "<tr class=\"reading%s\" data-id=\"%lld\"><td class=\"n\">%zu</td>",
                g->excluded ? " excluded" : "", g->id, g->line);
        bgi_html_num(f, "td", "n t", "%.4f", cdeg(g->t_k));
        bgi_html_num(f, "td", "n r", "%.6g", g->r_ohm);
        bgi_html_num(f, "td", "n tfit", "%.4f", cdeg(tf));
        bgi_html_num(f, "td", "n resid", "%.2f", res);
        fputs("<td>", f);
        if (g->excluded) {
            fputs("excluded: ", f);
            bgi_html_esc(f, g->excl_reason);
        } else
            bgi_html_esc(f, g->note);
        fputs("</td></tr>\n", f);
        rx[i] = cdeg(g->t_k), ry[i] = res, rf[i] = g->excluded;
        ylo = fmin(ylo, res), yhi = fmax(yhi, res);
    }
    fputs("</table>\n", f);
    for (int i = 0; i < NB; i++)
        if (isfinite(bhi[i]))
            ylo = fmin(ylo, blo[i]), yhi = fmax(yhi, bhi[i]);
    bgi_html_chart c = { "residuals", "Residuals (measured - fitted) against temperature",
                     "temperature / degC", "residual / mK", 0, 0, 0, 0, 0 };
    bgi_html_chart_begin(f, &c, fmin(t_lo, ft->t_min_k) - BG_ZERO_C_K,
                     fmax(t_hi, ft->t_max_k) - BG_ZERO_C_K, ylo, yhi);
    if (isfinite(u_worst))
        bgi_html_chart_band(f, &c, bx, blo, bhi, NB);
    bgi_html_chart_hline(f, &c, 0.0, NULL, 0);
    bgi_html_chart_points(f, &c, rx, ry, rf, r->rd.n);
    bgi_html_chart_end(f, &c, "Shaded: the curve's U (k = 2); dots: readings used; open squares: "
                          "excluded readings");
    free(rx), free(ry), free(rf);

    /* the R-T table over the validity range, at a round step */
    double span = ft->t_max_k - ft->t_min_k, step = 1.0;
    static const double steps[] = { 1, 2, 5, 10, 20, 25, 50 };
    for (size_t i = 0; i < sizeof steps / sizeof steps[0]; i++)
        if (span / steps[i] <= 24.0) {
            step = steps[i];
            break;
        }
    double from = ceil(cdeg(ft->t_min_k) / step - 1e-9) * step;
    double to = floor(cdeg(ft->t_max_k) / step + 1e-9) * step;
    fprintf(f, "<h2>Resistance&#8211;temperature table</h2>\n<table class=\"data\" id=\"rt\" "
               "data-from=\"%.17g\" data-to=\"%.17g\" data-step=\"%.17g\">\n<tr><th class=\"n\">"
               "T / degC</th><th class=\"n\">R / ohm</th><th class=\"n\">&#945; / (%%/K)</th>"
               "<th class=\"n\">U (k = 2) / mK</th></tr>\n", from, to, step);
    for (double t = from; t <= to + 1e-9; t += step) {
        double tk = t + BG_ZERO_C_K, rr = NAN, al = NAN, u = NAN;
        bg_model_r_from_t(m, tk, &rr, NULL);
        bg_model_alpha(m, tk, &al, NULL);
        if (ft->has_cov && bg_model_u_t(m, ft->cov, tk, &u, NULL) == BG_OK)
            u *= 2.0;
        else
            u = NAN;
        fputs("<tr class=\"rt\">", f);
        bgi_html_num(f, "td", "n t", "%.1f", t);
        bgi_html_num(f, "td", "n r", "%.6g", rr);
        bgi_html_num(f, "td", "n alpha", "%.4f", 100.0 * al);
        bgi_html_num(f, "td", "n U", "%.2f", 1e3 * u);
        fputs("</tr>\n", f);
    }
    fputs("</table>\n", f);
    bgi_html_cautions(f);
    fprintf(f, "<p class=\"meta\">Report %s, generated from fit %lld of run %lld by bandgap "
               "%s. Issued reports are stored in the calibration database and never change; a "
               "correction is issued as a new report that names this one.</p>\n", rid, ft->id,
            r->run.id, ft->program_version);
    bgi_html_end(f);
    if (fclose(f) != 0)
        return bg_error_set(err, BG_ENOMEM, "out of memory for the report");
    return BG_OK;
}

struct lot_report {
    const struct report_opts *o;
    bg_store *st;
    bg_lot lot;
    int flagged;
};

static int lot_report_gen(long long id, const char *issued, void *vctx, char **content,
                          size_t *len, bg_error *err)
{
    struct lot_report *r = vctx;
    char rid[40];
    FILE *f = report_open(content, len, "BG-LOT", id, "Production lot report", issued, r->o,
                          rid, sizeof rid, err);
    if (!f)
        return BG_ENOMEM;
    fputs("<table class=\"kv\" id=\"lot\">\n", f);
    kv(f, "Lot", r->lot.code);
    kv(f, "Part", r->lot.part);
    fputs("</table>\n", f);
    bg_qa_lot_summary qs = BG_QA_LOT_SUMMARY_INIT;
    int rc = bg_qa_lot_summarize(r->st, r->lot.code, &qs, err);
    if (rc == BG_OK && (rc = bg_report_lot_sections(f, &qs, err)) == BG_OK)
        r->flagged |= qs.flagged;
    bg_qa_lot_summary_release(&qs);
    fprintf(f, "<p id=\"verdict\" data-flagged=\"%d\"><strong>%s</strong></p>\n", r->flagged,
            r->flagged ? "Something is flagged: see the marked rows and points above." :
                         "Nothing is flagged.");
    bgi_html_cautions(f);
    fprintf(f, "<p class=\"meta\">Report %s. Issued reports are stored in the calibration "
               "database and never change; a correction is issued as a new report that names "
               "this one.</p>\n", rid);
    bgi_html_end(f);
    if (fclose(f) != 0 && rc == BG_OK)
        rc = bg_error_set(err, BG_ENOMEM, "out of memory for the report");
    if (rc != BG_OK) {
        free(*content);
        *content = NULL;
    }
    return rc;
}

static int issue(bg_store *st, const char *kind, const char *subject, long long fit_id,
                 const char *spec, const struct report_opts *o, bg_artifact_gen gen, void *gctx,
                 const char *out_path);

/* What a report is made from, as JSON (malloc'd; NULL when out of memory): its subject and
** the lot, or the run, fit and probe. */
static char *report_spec(const char *subject, const char *lot, long long run, long long fit,
                         const char *probe)
{
    char *spec = NULL;
    size_t len = 0;
    FILE *sf = open_memstream(&spec, &len);
    json_out j;
    if (!sf)
        return NULL;
    json_begin(&j, sf);
    json_obj(&j, NULL);
    json_str(&j, "subject", subject);
    if (lot)
        json_str(&j, "lot", lot);
    else {
        json_int(&j, "run", run);
        json_int(&j, "fit", fit);
        json_str(&j, "probe", probe);
    }
    json_obj_end(&j);
    if (fclose(sf) != 0) {
        free(spec);
        return NULL;
    }
    return spec;
}

static int lot_report(bg_store *st, const char *code, const struct report_opts *o,
                      const char *out_path)
{
    struct lot_report r;
    bg_error err = BG_ERROR_INIT;
    char subject[BG_TEXT + 8];
    memset(&r, 0, sizeof r);
    r.o = o, r.st = st;
    if (bg_store_lot_get(st, code, &r.lot, &err) != BG_OK)
        return cli_fail("report", &err);
    snprintf(subject, sizeof subject, "lot %s", code);
    char *spec = report_spec(subject, code, 0, 0, NULL);
    if (!spec) {
        bg_error_set(&err, BG_ENOMEM, "out of memory");
        return cli_fail("report", &err);
    }
    int rc = issue(st, "report-lot", subject, 0, spec, o, lot_report_gen, &r, out_path);
    free(spec);
    return rc;
}

/* Open 'path' for the report ("-": standard output), before anything is stored. */
static int open_out(const char *path, FILE **f)
{
    *f = strcmp(path, "-") ? fopen(path, "wb") : stdout;
    if (!*f) {
        cli_error("report: cannot create '%s': %s", path, strerror(errno));
        return CLI_ECANTCREAT;
    }
    return BG_OK;
}

/* Write 'len' bytes and close; 'id' (0: none) names the stored copy in the message. */
static int write_out(FILE *f, const char *path, const char *content, size_t len, long long id)
{
    size_t w = fwrite(content, 1, len, f);
    int bad = w != len || ferror(f);
    if (f != stdout)
        bad |= fclose(f) != 0;
    else
        bad |= fflush(f) != 0;
    if (bad) {
        if (id)
            cli_error("report: cannot write '%s'; the report is stored as report %lld "
                      "(bandgap report --get %lld -o FILE writes it again)", path, id, id);
        else
            cli_error("report: cannot write '%s'", path);
        return BG_EIO;
    }
    return BG_OK;
}

/* Close and remove an output file that will not be written. */
static void drop_out(FILE *f, const char *path)
{
    if (f != stdout) {
        fclose(f);
        remove(path);
    }
}

struct list_ctx {
    int json;
    json_out *j;
};

static int list_cb(const bg_artifact *a, void *vctx)
{
    struct list_ctx *l = vctx;
    if (strncmp(a->kind, "report-", 7) != 0)
        return 0;
    if (l->json) {
        json_obj(l->j, NULL);
        json_int(l->j, "id", a->id);
        json_str(l->j, "kind", a->kind + 7);
        json_str(l->j, "spec", a->spec);
        if (a->replaces_id)
            json_int(l->j, "replaces", a->replaces_id);
        else
            json_null(l->j, "replaces");
        if (a->replaced_by)
            json_int(l->j, "replaced_by", a->replaced_by);
        else
            json_null(l->j, "replaced_by");
        json_int(l->j, "bytes", (long long)a->len);
        json_str(l->j, "created_at", a->created_at);
        json_obj_end(l->j);
    } else {
        char rep[32] = "-", by[32] = "-";
        if (a->replaces_id)
            snprintf(rep, sizeof rep, "%lld", a->replaces_id);
        if (a->replaced_by)
            snprintf(by, sizeof by, "%lld", a->replaced_by);
        printf("%6lld  %-6s %-22s %-9s %-11s %8zu  %s\n", a->id, a->kind + 7, a->created_at,
               rep, by, a->len, a->spec);
    }
    return 0;
}

static int issue(bg_store *st, const char *kind, const char *subject, long long fit_id,
                 const char *spec, const struct report_opts *o, bg_artifact_gen gen, void *gctx,
                 const char *out_path)
{
    bg_error err = BG_ERROR_INIT;
    long long id = 0;
    bg_artifact a;
    FILE *f;
    int rc = open_out(out_path, &f); /* a file that cannot be made stores nothing */
    if (rc != BG_OK)
        return rc;
    rc = bg_store_artifact_issue(st, kind, subject, fit_id, spec, o->replaces, bg_version(), gen,
                                 gctx, &id, &err);
    if (rc == BG_OK)
        rc = bg_store_artifact_get(st, id, &a, &err);
    if (rc != BG_OK) {
        drop_out(f, out_path);
        rc = cli_fail("report", &err);
        if (strstr(err.msg, "already has report"))
            fprintf(stderr, "  (bandgap report ... --reissue ID --why TEXT issues a new one; "
                            "bandgap report --get ID -o FILE writes the stored copy)\n");
        return rc;
    }
    rc = write_out(f, out_path, a.content, a.len, id);
    if (rc == BG_OK && strcmp(out_path, "-"))
        printf("issued report %lld (%s): %s\n", id, subject, out_path);
    bg_artifact_release(&a);
    return rc;
}

int cmd_report(int argc, char **argv, struct cli_ctx *ctx)
{
    enum { O_RUN = 1, O_FIT, O_LOT, O_GET, O_LIST, O_LAB, O_CUST, O_DISS, O_REISSUE, O_WHY,
           O_JSON };
    static const struct option opts[] = {
        { "run", required_argument, NULL, O_RUN },      { "fit", required_argument, NULL, O_FIT },
        { "lot", required_argument, NULL, O_LOT },      { "get", required_argument, NULL, O_GET },
        { "list", no_argument, NULL, O_LIST },          { "lab", required_argument, NULL, O_LAB },
        { "customer", required_argument, NULL, O_CUST },
        { "dissipation", required_argument, NULL, O_DISS },
        { "reissue", required_argument, NULL, O_REISSUE },
        { "why", required_argument, NULL, O_WHY },      { "json", no_argument, NULL, O_JSON },
        { "output", required_argument, NULL, 'o' },     { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 },
    };
    struct report_opts o = { NULL, NULL, NULL, 0, 0.0 };
    const char *lot = NULL, *out_path = NULL;
    long long run_id = 0, fit_id = 0, get_id = 0;
    int c, list = 0, rc;
    char *end;
    bg_error err = BG_ERROR_INIT;

    opterr = 0;
    while ((c = getopt_long(argc, argv, ":ho:", opts, NULL)) != -1) {
        switch (c) {
        case 'h': fputs(report_usage, stdout); return BG_OK;
        case O_RUN: case O_FIT: case O_GET: case O_REISSUE: {
            long long *p = c == O_RUN ? &run_id : c == O_FIT ? &fit_id : c == O_GET ? &get_id
                                                                                : &o.replaces;
            if (cli_parse_id(optarg, p) != BG_OK)
                return cli_usage_error("report", "'%s': not an id", optarg);
            break;
        }
        case O_LOT: lot = optarg; break;
        case O_LIST: list = 1; break;
        case O_LAB: o.lab = optarg; break;
        case O_CUST: o.customer = optarg; break;
        case O_WHY: o.why = optarg; break;
        case O_JSON: ctx->json = 1; break;
        case O_DISS: {
            double v = strtod(optarg, &end);
            if (strcmp(end, "mW/K") == 0)
                end += 4;
            if (*end || !(v > 0.0) || !isfinite(v))
                return cli_usage_error("report", "--dissipation: '%s': expected mW/K > 0",
                                       optarg);
            o.dissipation_w_per_k = v * 1e-3;
            break;
        }
        case 'o': out_path = optarg; break;
        case ':': return cli_usage_error("report", "option '%s' needs a value", argv[optind - 1]);
        default: return cli_usage_error("report", "unknown option '%s'", argv[optind - 1]);
        }
    }
    if (optind < argc)
        return cli_usage_error("report", "unexpected argument '%s'", argv[optind]);
    if ((run_id != 0) + (lot != NULL) + (get_id != 0) + list != 1)
        return cli_usage_error("report", "give one of --run, --lot, --get or --list");
    if (!list && !out_path)
        return cli_usage_error("report", "-o FILE.html is required (- for standard output)");
    if (fit_id && !run_id)
        return cli_usage_error("report", "--fit goes with --run");
    if ((o.replaces != 0) != (o.why != NULL))
        return cli_usage_error("report", "--reissue ID and --why TEXT go together");
    if (o.why && !*o.why)
        return cli_usage_error("report", "--why: say why the report is reissued");

    bg_store *st = NULL;
    if ((rc = cli_open_store(ctx, 0, &st)) != BG_OK)
        return rc;
    if (list) {
        json_out j;
        struct list_ctx l = { ctx->json, &j };
        if (ctx->json) {
            json_begin(&j, stdout);
            json_arr(&j, NULL);
        } else
            printf("%6s  %-6s %-22s %-9s %-11s %8s  %s\n", "report", "kind", "issued",
                   "replaces", "replaced by", "bytes", "made from");
        rc = bg_store_artifact_each(st, list_cb, &l, &err);
        if (ctx->json) {
            json_arr_end(&j);
            json_end(&j);
        }
        bg_store_close(st);
        return rc == BG_OK ? BG_OK : cli_fail("report", &err);
    }
    if (get_id) {
        bg_artifact a;
        rc = bg_store_artifact_get(st, get_id, &a, &err);
        bg_store_close(st);
        if (rc == BG_OK && strncmp(a.kind, "report-", 7) != 0)
            rc = bg_error_set(&err, BG_EINVAL, "artifact %lld is not a report", get_id);
        if (rc != BG_OK) {
            bg_artifact_release(&a);
            return cli_fail("report", &err);
        }
        if (a.replaced_by)
            cli_warn("report: report %lld was replaced by report %lld", get_id, a.replaced_by);
        FILE *f;
        if ((rc = open_out(out_path, &f)) == BG_OK)
            rc = write_out(f, out_path, a.content, a.len, 0);
        bg_artifact_release(&a);
        return rc;
    }
    if (lot) {
        rc = lot_report(st, lot, &o, out_path);
        bg_store_close(st);
        return rc;
    }

    struct run_report r;
    memset(&r, 0, sizeof r);
    r.o = &o;
    if ((rc = bg_store_run_get(st, run_id, &r.run, &err)) != BG_OK)
        goto fail;
    if (!fit_id) {
        struct newest_of_run nr = { run_id, 0 };
        if ((rc = bg_store_fit_each(st, r.run.serial, NULL, newest_of_run_cb, &nr, &err)) !=
            BG_OK)
            goto fail;
        if (!nr.fit_id) {
            rc = bg_error_set(&err, BG_EINVAL, "run %lld has no fit (bandgap fit --probe %s "
                              "--run %lld)", run_id, r.run.serial, run_id);
            goto fail;
        }
        fit_id = nr.fit_id;
    }
    if ((rc = bg_store_fit_get(st, fit_id, &r.fit, &err)) != BG_OK)
        goto fail;
    if (r.fit.run_id != run_id) {
        rc = bg_error_set(&err, BG_EINVAL, "fit %lld is not a fit of run %lld", fit_id, run_id);
        goto fail;
    }
    if ((rc = bg_store_probe_get(st, r.run.serial, &r.probe, &err)) != BG_OK ||
        (rc = bg_store_lot_get(st, r.probe.lot_code, &r.lot, &err)) != BG_OK)
        goto fail;
    if (r.run.reference_id) {
        if ((rc = bg_store_ref_get(st, r.run.ref_ident, &r.ref, &err)) != BG_OK)
            goto fail;
        r.have_ref = 1;
    }
    if ((rc = bg_store_reading_each(st, run_id, reading_keep, &r.rd, &err)) != BG_OK)
        goto fail;
    char subject[64];
    snprintf(subject, sizeof subject, "run %lld", run_id);
    char *spec = report_spec(subject, NULL, run_id, fit_id, r.run.serial);
    if (!spec) {
        rc = bg_error_set(&err, BG_ENOMEM, "out of memory");
        goto fail;
    }
    rc = issue(st, "report-run", subject, fit_id, spec, &o, run_report_gen, &r, out_path);
    free(spec);
    free(r.rd.r);
    bg_store_close(st);
    return rc;
fail:
    free(r.rd.r);
    bg_store_close(st);
    return cli_fail("report", &err);
}
