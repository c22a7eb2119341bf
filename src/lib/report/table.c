/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The firmware table report: the table's provenance, its error at every code against
** temperature (a chart) and its error budget, from a bg_lut_result made with 'error_curve'.
** It is not stored: the table is reproducible from its command. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include "bandgap/bandgap.h"
#include "report/html_int.h"
#include "report/report_int.h"

/* The core the C is written for and what the table costs there: flash bytes (table and
** lookup code), cycles or instructions per conversion, and the toolchain and simulator that
** measured them (bg_lut_cost_on, the same figures as lut's summary and JSON). */
static void target_row(FILE *f, const bg_lut_result *r)
{
    bg_lut_target_cost c;
    const char *tn = bg_lut_target_name(r->spec.target);
    fputs("<tr><th>Target</th><td id=\"target\">", f);
    if (r->spec.target == BG_LUT_HOST) {
        fprintf(f, "%s: portable C99; no cost shown, the host's compiler is not known "
                   "(--target avr, cortex-m0 or cortex-m4 for figures measured there)</td></tr>\n",
                tn);
        return;
    }
    if (bg_lut_cost_on(&r->table, r->spec.target, &c, NULL) != BG_OK || c.per_call <= 0) {
        fprintf(f, "%s: %zu bytes of table; its code and time there were not measured</td></tr>"
                   "\n", tn, r->table.bytes);
        return;
    }
    fprintf(f, "%s: ", tn);
    bgi_html_num(f, "span", "flash", "%.0f", (double)c.flash_bytes);
    fputs(" bytes of flash (table ", f);
    bgi_html_num(f, "span", "tablebytes", "%.0f", (double)c.table_bytes);
    fputs(", lookup code ", f);
    bgi_html_num(f, "span", "codebytes", "%.0f", (double)c.code_bytes);
    fputs("), about ", f);
    bgi_html_num(f, "span", "percall", "%.0f", c.per_call);
    fprintf(f, " <span class=\"unit\">%s</span> per conversion%s; measured on a reference table "
               "by make bench-firmware with <span class=\"toolchain\">", c.unit,
            r->table.chained ? " (by the segments it walks)"
            : r->table.strategy == BG_LUT_MINIMAL ? " (scaled by its search steps)" : "");
    bgi_html_esc(f, c.measured);
    fputs("</span></td></tr>\n", f);
}

static void table_head(FILE *f, const bg_lut_result *r, const bg_report_head *h)
{
    const bg_lut *t = &r->table;
    const bg_lut_spec *s = &r->spec;
    char name[16], vu[48], cd[256];
    bg_model_name(&s->model, name, sizeof name);
    bg_lut_value_unit(s, vu, sizeof vu);
    fputs("<h1>Firmware table report</h1>\n<table class=\"kv\" id=\"table\">\n", f);
    fputs("<tr><th>Generated</th><td>", f);
    bgi_html_esc(f, h->issued ? h->issued : "");
    fprintf(f, " by bandgap %s</td></tr>\n", bg_version());
    fprintf(f, "<tr><th>Model</th><td>%s", name);
    for (size_t i = 0; i < bg_model_npar(&s->model); i++)
        fprintf(f, " %s = %.9e", bg_model_coef_name(&s->model, i), s->model.coef[i]);
    if (s->source) {
        fputs(" (", f);
        bgi_html_esc(f, s->source);
        fputc(')', f);
    } else if (r->fit_id) {
        fprintf(f, " (stored fit %lld)", r->fit_id);
    }
    fputs("</td></tr>\n", f);
    fputs("<tr><th>Circuit</th><td>", f);
    bgi_html_esc_units(f, bg_circuit_describe(&s->circuit, cd, sizeof cd));
    fprintf(f, "</td></tr>\n<tr><th>Range</th><td>%.3f to %.3f \xc2\xb0" "C, codes %ld to %ld</td></tr>"
               "\n", s->t_lo_k - BG_ZERO_C_K, s->t_hi_k - BG_ZERO_C_K, t->code_lo, t->code_hi);
    fprintf(f, "<tr><th>Table</th><td>%s, %zu %s, %zu bytes, values in ",
            bg_lut_strategy_name(t->strategy), t->n,
            t->strategy == BG_LUT_UNIFORM ? "entries" : "segments", t->bytes);
    bgi_html_esc_units(f, vu);
    fputs("</td></tr>\n<tr><th>Table error</th><td>max ", f);
    bgi_html_num(f, "span", "maxerr", "%.4f", t->max_err_k);
    fputs(" K, RMS ", f);
    bgi_html_num(f, "span", "rmserr", "%.4f", t->rms_err_k);
    fputs(" K over every code (table and output rounding)</td></tr>\n", f);
    target_row(f, r);
    fputs("</table>\n", f);
}

/* A term of the budget: its value, or "not given" when its inputs were not given. */
static void term(FILE *f, const char *cls, double v, int given)
{
    if (given)
        bgi_html_num(f, "td", cls, "%.4f", v);
    else
        fprintf(f, "<td class=\"n %s missing\">not given</td>", cls);
}

/* The inputs of the budget that were given, in one sentence. */
static void budget_inputs(FILE *f, const bg_lut_result *r)
{
    const bg_budget_opts *bo = &r->budget_opts;
    unsigned t = r->budget_terms;
    fputs("<p>Terms in K at each temperature, and the largest of each over every code of the "
          "range", f);
    if (t & BG_BUDGET_FIT)
        fprintf(f, "; fit U from stored fit %lld's covariance", r->fit_id);
    if ((t & BG_BUDGET_RESISTOR) && !(t & BG_BUDGET_NO_RESISTOR))
        fprintf(f, "; fixed resistor at &#177;%.3g %%", 100.0 * bo->fixed_tol);
    if (t & BG_BUDGET_SELFHEAT) {
        if (bo->excitation_v > 0.0)
            fprintf(f, "; self-heating at %.3g V", bo->excitation_v);
        fprintf(f, "%s dissipation constant %.3g mW/K", bo->excitation_v > 0.0 ? "," :
                "; self-heating at the circuit's current,", 1e3 * bo->dissipation_w_per_k);
    }
    if (t & BG_BUDGET_NO_RESISTOR)
        fputs("; the fixed resistor term does not apply: the front end has none (left out "
              "of the RSS and the sum)", f);
    fputs(".</p>\n", f);
}

static void budget(FILE *f, const bg_lut_result *r)
{
    unsigned t = r->budget_terms;
    fputs("<h2>Error budget</h2>\n", f);
    budget_inputs(f, r);
    fputs("<table class=\"data\" id=\"budget\">\n<tr><th class=\"n\">T / \xc2\xb0" "C</th>"
          "<th class=\"n\">table</th><th class=\"n\">ADC &#189; LSB</th>"
          "<th class=\"n\">fit U", f);
    if (t & BG_BUDGET_FIT)
        fprintf(f, " (k = %.2f)", r->fit_cover.k);
    fputs("</th><th class=\"n\">fixed resistor</th>"
          "<th class=\"n\">self-heating</th><th class=\"n\">RSS</th><th class=\"n\">sum</th>"
          "</tr>\n", f);
    for (size_t i = 0; i <= r->nbudget; i++) {
        const bg_budget_row *w = i < r->nbudget ? &r->budget[i] : &r->worst;
        fputs("<tr class=\"budget\">", f);
        if (i < r->nbudget)
            bgi_html_num(f, "td", "n t", "%.3f", w->t_k - BG_ZERO_C_K);
        else
            fputs("<td class=\"n\">worst over the range</td>", f);
        bgi_html_num(f, "td", "n table", "%.4f", w->table_k);
        bgi_html_num(f, "td", "n adc", "%.4f", w->adc_k);
        term(f, "fit", w->fit_k, t & BG_BUDGET_FIT);
        if (t & BG_BUDGET_NO_RESISTOR)
            fputs("<td class=\"n resistor na\">not applicable</td>", f);
        else
            term(f, "resistor", w->resistor_k, t & BG_BUDGET_RESISTOR);
        term(f, "selfheat", w->selfheat_k, t & BG_BUDGET_SELFHEAT);
        bgi_html_num(f, "td", "n rss", "%.4f", w->rss_k);
        bgi_html_num(f, "td", "n sum", "%.4f", w->sum_k);
        fputs("</tr>\n", f);
    }
    fputs("</table>\n", f);
    if ((t & (BG_BUDGET_FIT | BG_BUDGET_RESISTOR | BG_BUDGET_SELFHEAT)) ==
        (BG_BUDGET_FIT | BG_BUDGET_RESISTOR | BG_BUDGET_SELFHEAT))
        return;
    fputs("<p class=\"meta\" id=\"budget-missing\">Not given, so left out of the RSS and the "
          "sum (which then understate the error):", f);
    const char *sepr = " ";
    if (!(t & BG_BUDGET_FIT))
        fprintf(f, "%sfit U (needs a stored fit with its covariance: --fit or --probe)", sepr),
            sepr = "; ";
    if (!(t & BG_BUDGET_RESISTOR))
        fprintf(f, "%sfixed resistor (needs its tolerance: --fixed-tol)", sepr), sepr = "; ";
    if (!(t & BG_BUDGET_SELFHEAT))
        fprintf(f, "%sself-heating (needs --dissipation and, for a divider, --supply)", sepr);
    fputs(".</p>\n", f);
}

/* The error chart: the least and largest error of each band of codes, as an envelope. */
static int error_chart(FILE *f, const bg_lut_result *r, bg_error *err)
{
    const bg_lut *t = &r->table;
    size_t nb = r->ncurve;
    double *x0 = malloc(4 * nb * sizeof *x0), *x1 = x0 + nb, *lo = x1 + nb, *hi = lo + nb;
    char cap[200];
    if (!x0)
        return bg_error_set(err, BG_ENOMEM, "out of memory for the table report");
    double xl = INFINITY, xh = -INFINITY;
    for (size_t i = 0; i < nb; i++) {
        const bg_lut_error_band *b = &r->curve[i];
        x0[i] = b->t_lo_k - BG_ZERO_C_K, x1[i] = b->t_hi_k - BG_ZERO_C_K;
        lo[i] = b->min_k, hi[i] = b->max_k;
        xl = fmin(xl, fmin(x0[i], x1[i])), xh = fmax(xh, fmax(x0[i], x1[i]));
    }
    fprintf(f, "<div id=\"error\" data-codes=\"%ld\" data-codes-per-band=\"%ld\">\n",
            t->code_hi - t->code_lo + 1, r->codes_per_band);
    bgi_html_chart ch = { "table_error", "Table error against temperature, every code",
                          "temperature / \xc2\xb0" "C", "table \xe2\x88\x92 model / K", 0, 0, 0, 0,
                          0 };
    bgi_html_chart_begin(f, &ch, xl, xh, r->curve_lo_k, r->curve_hi_k);
    bgi_html_chart_hline(f, &ch, t->max_err_k, "max", 1);
    bgi_html_chart_hline(f, &ch, -t->max_err_k, NULL, 1);
    bgi_html_chart_envelope(f, &ch, x0, x1, lo, hi, nb);
    if (r->codes_per_band > 1)
        snprintf(cap, sizeof cap, "Shaded: the least to the largest error of each band of %ld "
                 "consecutive codes (%zu bands, %ld codes in all); dashed: the measured "
                 "maximum", r->codes_per_band, nb, t->code_hi - t->code_lo + 1);
    else
        snprintf(cap, sizeof cap, "The error at each of the %ld codes; dashed: the measured "
                 "maximum", t->code_hi - t->code_lo + 1);
    bgi_html_chart_end(f, &ch, cap);
    fputs("</div>\n", f);
    free(x0);
    return BG_OK;
}

static int table_generate(const void *result, const bg_report_head *h, FILE *f, bg_error *err)
{
    const bg_lut_result *r = result;
    const bg_lut *t = &r->table;
    char rid[64];
    if (r->ncurve == 0 || !r->curve)
        return bg_error_set(err, BG_EINVAL, "the table report needs the table's error at "
                            "every code (bg_lut_make with 'error_curve')");
    snprintf(rid, sizeof rid, "%s %s %zu entries", bgi_report_table.id_prefix,
             bg_lut_strategy_name(t->strategy), t->n);
    bgi_html_begin(f, bgi_report_table.title, rid);
    table_head(f, r, h);
    int rc = error_chart(f, r, err);
    if (rc != BG_OK)
        return rc;
    bgi_html_closing_begin(f);
    budget(f, r);
    bgi_html_closing_end(f, "This table report is not stored: the table is reproducible byte for "
                        "byte from its command.");
    bgi_html_end(f);
    return BG_OK;
}

const bg_report_kind bgi_report_table = {
    "table", "table", "Firmware table report", NULL, table_generate,
};
