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

static void table_head(FILE *f, const bg_lut_result *r, const bg_report_head *h)
{
    const bg_lut *t = &r->table;
    const bg_lut_spec *s = &r->spec;
    char name[16], vu[48], cd[256];
    bg_model_name(&s->model, name, sizeof name);
    bg_lut_value_unit(s, vu, sizeof vu);
    fputs("<h1>Firmware table report</h1>\n<table class=\"kv\" id=\"table\">\n", f);
    fprintf(f, "<tr><th>Generated</th><td>%s by bandgap %s</td></tr>\n", h->issued ? h->issued
            : "", bg_version());
    fprintf(f, "<tr><th>Model</th><td>%s", name);
    for (size_t i = 0; i < bg_model_npar(&s->model); i++)
        fprintf(f, " %s=%.10g", bg_model_coef_name(&s->model, i), s->model.coef[i]);
    if (r->fit_id)
        fprintf(f, " (stored fit %lld)", r->fit_id);
    fputs("</td></tr>\n", f);
    fprintf(f, "<tr><th>Circuit</th><td>%s", bg_circuit_describe(&s->circuit, cd, sizeof cd));
    fprintf(f, "</td></tr>\n<tr><th>Range</th><td>%.3f to %.3f degC, codes %ld to %ld</td></tr>"
               "\n", s->t_lo_k - BG_ZERO_C_K, s->t_hi_k - BG_ZERO_C_K, t->code_lo, t->code_hi);
    fprintf(f, "<tr><th>Table</th><td>%s, %zu %s, %zu bytes, values in ",
            bg_lut_strategy_name(t->strategy), t->n,
            t->strategy == BG_LUT_UNIFORM ? "entries" : "segments", t->bytes);
    bgi_html_esc(f, vu);
    fputs("</td></tr>\n<tr><th>Table error</th><td>max ", f);
    bgi_html_num(f, "span", "maxerr", "%.4f", t->max_err_k);
    fputs(" K, RMS ", f);
    bgi_html_num(f, "span", "rmserr", "%.4f", t->rms_err_k);
    fputs(" K over every code (table and output rounding)</td></tr>\n</table>\n", f);
}

static void budget(FILE *f, const bg_lut_result *r)
{
    const bg_budget_opts *bo = &r->budget_opts;
    fputs("<h2>Error budget</h2>\n<table class=\"data\" id=\"budget\">\n<tr><th class=\"n\">"
          "T / degC</th><th class=\"n\">table</th><th class=\"n\">ADC &#189; LSB</th>"
          "<th class=\"n\">fit U (k = 2)</th><th class=\"n\">fixed resistor</th>"
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
        bgi_html_num(f, "td", "n fit", "%.4f", w->fit_k);
        bgi_html_num(f, "td", "n resistor", "%.4f", w->resistor_k);
        bgi_html_num(f, "td", "n selfheat", "%.4f", w->selfheat_k);
        bgi_html_num(f, "td", "n rss", "%.4f", w->rss_k);
        bgi_html_num(f, "td", "n sum", "%.4f", w->sum_k);
        fputs("</tr>\n", f);
    }
    fprintf(f, "</table>\n<p class=\"meta\">All terms in K. Fixed resistor tolerance %.3g %%, "
               "excitation %.3g V, dissipation constant %.3g mW/K (0: not included); the fit "
               "term needs a stored fit with its covariance.</p>\n", 100.0 * bo->fixed_tol,
            bo->excitation_v, 1e3 * bo->dissipation_w_per_k);
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
    budget(f, r);
    bgi_html_cautions(f);
    bgi_html_end(f);
    return BG_OK;
}

const bg_report_kind bgi_report_table = {
    "table", "table", "Firmware table report", NULL, table_generate,
};
