/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The lot report's sections, rendered from a lot summary (qa.h): the probes and the lot
** statistics, the histogram of R25 deviations, the deviation from the nominal curve, each
** probe's drift, and the control charts of the part.  Only presentation happens here. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include "bandgap/report.h"
#include "report/html_int.h"
#include "report/report_int.h"

/* The labels of a lot's two values: an NTC's R25 deviation and B, else the sensor kind's
** (qa.h, bg_qa_lot.v1_name ...), "name / unit". */
static void value_labels(int sensor, const char *n1, const char *u1, const char *n2,
                         const char *u2, char l1[72], char l2[72])
{
    if (sensor == BG_PART_NTC) {
        snprintf(l1, 72, "R25 deviation / %%");
        snprintf(l2, 72, "B / K");
        return;
    }
    snprintf(l1, 72, "%s / %s", n1, u1);
    snprintf(l2, 72, "%s / %s", n2, u2);
}

static void lot_labels(const bg_qa_lot *l, char l1[72], char l2[72])
{
    value_labels(l->sensor, l->v1_name, l->v1_unit, l->v2_name, l->v2_unit, l1, l2);
}

/* A lot of a sensor kind other than the NTC, judged against its part's nominal values. */
static void kind_nominal_para(FILE *f, const bg_qa_lot *l)
{
    const bg_part_spec *sp = &l->spec;
    fputs("Nominal values: part ", f);
    bgi_html_esc(f, sp->part);
    fprintf(f, " is a %s sensor, specification %lld of ", bg_part_sensor_name(l->sensor), sp->id);
    bgi_html_esc(f, sp->created_at);
    fprintf(f, "; at %.2f \xc2\xb0" "C: %s 0 &#177;%.4g %s, %s %.6g &#177;%.4g %s. The "
               "deviation below is from %s.%s",
            sp->nom_t_k - BG_ZERO_C_K, l->v1_name, l->v1_tol, l->v1_unit, l->v2_name,
            l->v2_nominal, l->v2_tol, l->v2_unit, l->sensor == BG_PART_PRT ?
            "the IEC 60751 curve with the part's R0, against the class's tolerance (the "
            "class limits are from memory, not checked against a copy of IEC 60751: check "
            "them against the standard before a certificate relies on them)" :
            l->sensor == BG_PART_IC ? "the part's nominal correction" :
            "the line through the nominal value with the nominal slope",
            l->lot.sensor == BG_PART_NTC ? " (The lot's own R25 and B are not used.)" : "");
}

/* What the lot was judged against: the part's nominal curve, or the lot's beta curve. */
static void nominal_para(FILE *f, const bg_qa_lot *l)
{
    const bg_part_spec *sp = &l->spec;
    char name[32];
    fputs("<p id=\"nominal\">", f);
    if (l->sensor != BG_PART_NTC && !sp->have_model) {
        kind_nominal_para(f, l);
    } else if (l->nominal_is_beta) {
        fputs("Nominal curve: the lot's R25 and B as a beta curve (the part stores no nominal "
              "curve). <strong>The deviation from it includes the beta model's shape error and "
              "is not a verdict</strong>; only the R25 and B tolerances flag a probe.", f);
    } else {
        fputs("Nominal curve: part ", f);
        bgi_html_esc(f, sp->part);
        fprintf(f, "'s %s, specification %lld of ", bg_model_name(&sp->model, name, sizeof name),
                sp->id);
        bgi_html_esc(f, sp->created_at);
        fputs(" (", f);
        bgi_html_esc(f, sp->source);
        if (l->sensor != BG_PART_NTC) {
            fputs(").", f);
        } else {
            fputs("): R25 ", f);
            bgi_html_num(f, "span", "nomr25", "%.6g", l->nominal_r25_ohm);
            fputs(" \xce\xa9, B ", f);
            bgi_html_num(f, "span", "nomb", "%.2f", l->nominal_b_k);
            fputs(" K.", f);
        }
    }
    if (sp->tol_k > 0.0)
        fprintf(f, " Tolerance &#177;%.1f mK from %.2f to %.2f \xc2\xb0" "C, judged over the part of it "
                   "each probe's calibration covers (%zu probe(s) do not cover all of it).",
                1e3 * sp->tol_k, sp->tol_lo_k - BG_ZERO_C_K, sp->tol_hi_k - BG_ZERO_C_K,
                l->nuncovered);
    fputs("</p>\n", f);
}

static void probes_table(FILE *f, const bg_qa_lot *l)
{
    int tol = l->spec.tol_k > 0.0;
    char l1[72], l2[72];
    lot_labels(l, l1, l2);
    fprintf(f, "<h2>Probes (newest fit of each)</h2>\n");
    nominal_para(f, l);
    fprintf(f, "<table class=\"data\" id=\"probes\">\n"
               "<tr><th>probe</th><th class=\"n\">fit</th><th class=\"n\">%s"
               "</th><th class=\"n\">%s</th><th class=\"n\">max |deviation| / mK</th>%s"
               "<th>flags</th></tr>\n", l1, l2, tol ? "<th class=\"n\">over the tolerance "
                                                     "range / mK</th>" : "");
    for (size_t i = 0; i < l->n; i++) {
        unsigned fl = l->flags[i];
        int out = (fl & BG_QA_OUT_OF_TOL) != 0, outl = (fl & BG_QA_OUTLIER) != 0;
        int band = (fl & BG_QA_OUT_OF_BAND) != 0;
        fprintf(f, "<tr class=\"probe%s\"><td>", out || outl || band ? " flag" : "");
        bgi_html_esc(f, l->serial[i]);
        fprintf(f, "</td><td class=\"n\">%lld</td>", l->fit_id[i]);
        bgi_html_num(f, "td", "n r25dev", "%+.4f", l->r25_dev_pct[i]);
        bgi_html_num(f, "td", fl & BG_QA_B_EXTRAPOLATED ? "n b extrap" : "n b",
                     fl & BG_QA_B_EXTRAPOLATED ? "%.2f*" : "%.2f", l->b_k[i]);
        bgi_html_num(f, "td", "n maxdev", "%.3f", l->max_abs_dev_mk[i]);
        if (tol)
            bgi_html_num(f, "td", "n toldev", "%.3f", l->tol_dev_mk[i]);
        fprintf(f, "<td>%s%s%s</td></tr>\n", out ? "out of tolerance " : "",
                band ? "beyond the kelvin tolerance " : "", outl ? "outlier (Grubbs)" : "");
    }
}

static void grubbs_para(FILE *f, const bg_qa_lot *l, const char *n1, const char *n2)
{
    fputs("<p id=\"grubbs\">Outliers by Grubbs' test (two-sided, significance ", f);
    bgi_html_num(f, "span", "alpha", "%.3g", l->alpha);
    fputs("): G(", f);
    bgi_html_esc(f, n1);
    fputs(") ", f);
    bgi_html_num(f, "span", "g_r25", "%.3f", l->g_r25);
    fputs(", G(", f);
    bgi_html_esc(f, n2);
    fputs(") ", f);
    bgi_html_num(f, "span", "g_b", "%.3f", l->g_b);
    fputs(", critical value ", f);
    bgi_html_num(f, "span", "g_crit", "%.3f", l->g_crit);
    fputs(".</p>\n", f);
}

static void stats_table(FILE *f, const bg_qa_lot *l)
{
    const bg_lot *lot = &l->lot;
    fprintf(f, "</table>\n<h2>Lot statistics</h2>\n<table class=\"data\" id=\"stats\">\n"
               "<tr><th></th><th class=\"n\">mean</th><th class=\"n\">sd</th><th class=\"n\">"
               "min</th><th class=\"n\">max</th><th class=\"n\">Cpk</th></tr>\n");
    const bg_stats *st[2] = { &l->r25_dev, &l->b };
    const double cp[2] = { l->cpk_r25, l->cpk_b };
    char l1[72], l2[72];
    lot_labels(l, l1, l2);
    const char *nm[2] = { l1, l2 }, *id[2] = { l->v1_key, l->v2_key };
    for (int k = 0; k < 2; k++) {
        fprintf(f, "<tr class=\"stat\" data-key=\"%s\"><td>%s</td>", id[k], nm[k]);
        bgi_html_num(f, "td", "n mean", "%.4f", st[k]->mean);
        bgi_html_num(f, "td", "n sd", "%.4f", st[k]->sd);
        bgi_html_num(f, "td", "n min", "%.4f", st[k]->min);
        bgi_html_num(f, "td", "n max", "%.4f", st[k]->max);
        bgi_html_num(f, "td", "n cpk", "%.2f", cp[k]);
        fputs("</tr>\n", f);
    }
    fputs("</table>\n", f);
    if (l->sensor != BG_PART_NTC) {
        if (l->nb_extrap)
            fprintf(f, "<p id=\"bextrap\">* A value is read outside the calibrated range of "
                       "%zu of %zu probes.</p>\n", l->nb_extrap, l->n);
        fprintf(f, "<p id=\"energy\">%zu probe(s) out of tolerance.</p>\n", l->nout);
        grubbs_para(f, l, l->v1_name, l->v2_name);
        return;
    }
    if (l->nb_extrap)
        fprintf(f, "<p id=\"bextrap\">* B%.0f/%.0f is extrapolated for %zu of %zu probes: the "
                   "pair lies outside their calibrated range, so their B, its statistics and the "
                   "B chart rest on the fitted curve beyond the readings.</p>\n",
                l->lot.pair_t1_k - BG_ZERO_C_K, l->lot.pair_t2_k - BG_ZERO_C_K, l->nb_extrap,
                l->n);
    fputs("<p id=\"energy\">Apparent activation energy E = kB = ", f);
    bgi_html_num(f, "span", "ea", "%.4f", l->activation_energy_ev);
    fprintf(f, " eV (k the Boltzmann constant, B the lot's mean B%.0f/%.0f). Nominal: R25 %.6g "
               "\xce\xa9 &#177;%.3g %%, B %.2f K &#177;%.3g %%. %zu probe(s) out of tolerance.</p>\n",
            lot->pair_t1_k - BG_ZERO_C_K, lot->pair_t2_k - BG_ZERO_C_K, lot->r25_ohm,
            100 * lot->tol_r25, lot->beta_k, 100 * lot->tol_beta, l->nout);
    grubbs_para(f, l, "R25", "B");
}

/* The histogram of R25 deviations; the axis spans at least the tolerance limits. */
static void histogram(FILE *f, const bg_qa_lot *l)
{
    enum { NBIN = 12 };
    double tol = l->v1_tol; /* an NTC's: 100 tol_r25 */
    char l1[72], l2[72], title[120];
    lot_labels(l, l1, l2);
    snprintf(title, sizeof title, "%s of the lot's probes", l->sensor == BG_PART_NTC ?
             "R25 deviation" : l->v1_name);
    double lo = fmin(l->r25_dev.min, -tol), hi = fmax(l->r25_dev.max, tol);
    double edges[NBIN + 1];
    size_t cnt[NBIN] = { 0 }, top = 1;
    for (int k = 0; k <= NBIN; k++)
        edges[k] = lo + (hi - lo) * k / NBIN;
    for (size_t i = 0; i < l->n; i++) {
        double q = hi > lo ? (l->r25_dev_pct[i] - lo) / (hi - lo) * NBIN : 0.0;
        if (isnan(q)) /* no number (a damaged record's): no bin; clamp before converting */
            continue;
        cnt[q < 1.0 ? 0 : q >= NBIN ? NBIN - 1 : (int)q]++;
    }
    for (int k = 0; k < NBIN; k++)
        top = cnt[k] > top ? cnt[k] : top;
    bgi_html_chart hc = { "histogram", title, l1, "probes", 0, 0, 0, 0, 0 };
    bgi_html_chart_begin(f, &hc, lo, hi, 0.0, (double)top);
    bgi_html_chart_bars(f, &hc, edges, cnt, NBIN);
    bgi_html_chart_end(f, &hc, l->sensor == BG_PART_NTC ? "Bars: probes per bin; the axis spans "
                       "at least the R25 tolerance" : "Bars: probes per bin; the axis spans at "
                       "least the tolerance");
}

static void band_table(FILE *f, const bg_qa_lot *l)
{
    fputs("<h2>Deviation from the nominal curve</h2>\n<table class=\"data\" id=\"band\">\n"
          "<tr><th class=\"n\">T / \xc2\xb0" "C</th><th class=\"n\">measured min / mK</th>"
          "<th class=\"n\">measured max / mK</th><th class=\"n\">band low / mK</th>"
          "<th class=\"n\">band high / mK</th></tr>\n", f);
    for (size_t k = 0; k < l->nat; k++) {
        fputs("<tr class=\"bandrow\">", f);
        bgi_html_num(f, "td", "n t", "%.3f", l->at_k[k] - BG_ZERO_C_K);
        bgi_html_num(f, "td", "n mn", "%+.2f", l->dev_min_mk[k]);
        bgi_html_num(f, "td", "n mx", "%+.2f", l->dev_max_mk[k]);
        bgi_html_num(f, "td", "n blo", "%+.2f", l->band_lo_mk[k]);
        bgi_html_num(f, "td", "n bhi", "%+.2f", l->band_hi_mk[k]);
        fputs("</tr>\n", f);
    }
    if (l->spec.tol_k > 0.0)
        fputs("</table>\n<p class=\"meta\">The band is the part's tolerance in kelvin "
              "(&#8212;: outside its range).</p>\n", f);
    else if (l->sensor == BG_PART_PRT && !l->spec.have_model)
        fputs("</table>\n<p class=\"meta\">The band is the tolerance of the part's IEC 60751 "
              "class at each temperature.</p>\n", f);
    else if (l->sensor != BG_PART_NTC)
        fputs("</table>\n<p class=\"meta\">The band is what the tolerances of the part's two "
              "nominal values allow (first order).</p>\n", f);
    else if (l->nominal_is_beta)
        fputs("</table>\n<p class=\"meta\">The band is the nominal curve at the corners of the "
              "R25 and B tolerances. The measured deviation also holds the difference in shape "
              "between a real curve and the beta model, so it is not a verdict.</p>\n", f);
    else
        fputs("</table>\n<p class=\"meta\">The band is the part's nominal curve at the "
              "corners of the lot's R25 and B tolerances.</p>\n", f);
}

/* One probe's rows of the drift table: each calibration against the one before. */
static void drift_rows(FILE *f, const bg_qa_probe *p)
{
    if (p->n < 2) {
        fprintf(f, "<tr class=\"drift single\"><td>");
        bgi_html_esc(f, p->serial);
        fprintf(f, "</td><td colspan=\"8\">%s</td></tr>\n", p->n == 1 ?
                "only one calibration: nothing to compare yet" : "no fitted calibration");
    }
    for (size_t i = 0; i < p->nprev; i++) {
        const bg_qa_compare *c = &p->since_previous[i];
        const bg_fit_row *fa = &p->fits[c->from], *fb = &p->fits[c->to];
        fprintf(f, "<tr class=\"drift%s\"><td>", c->flag_limit || c->flag_rate ? " flag" : "");
        bgi_html_esc(f, fa->serial);
        fprintf(f, "</td><td class=\"n\">%lld</td><td class=\"n\">%lld</td>", fa->id, fb->id);
        bgi_html_num(f, "td", "n years", "%.3f", c->d.years);
        bgi_html_num(f, "td", "n maxabs", "%.3f", c->d.max_abs_err_mk);
        bgi_html_num(f, "td", "n dr25", "%+.4f", c->d.d_r25_pct);
        bgi_html_num(f, "td", "n db", "%+.3f", c->d.d_b_k);
        bgi_html_num(f, "td", "n rate", "%.3f", c->d.rate_mk_per_year);
        fprintf(f, "<td>%s%s</td></tr>\n", c->flag_limit ? "beyond the limit " : "",
                c->flag_rate ? "drift rate beyond the limit" : "");
    }
}

static void drift_head(FILE *f, const bg_qa_lot_summary *s)
{
    int ntc = s->stats.sensor == BG_PART_NTC;
    fprintf(f, "<h2>Drift of each probe since its previous calibration</h2>\n<table "
               "class=\"data\" id=\"drift\">\n<tr><th>probe</th><th class=\"n\">from fit</th>"
               "<th class=\"n\">to fit</th><th class=\"n\">years</th><th class=\"n\">max "
               "|as-found| / mK</th><th class=\"n\">%s</th><th class=\"n\">%s</th>"
               "<th class=\"n\">rate / (mK/year)</th><th>flags</th></tr>\n",
            ntc ? "&#916;R25 / %" : "&#916;reading at 25 \xc2\xb0" "C / %",
            ntc ? "&#916;B / K" : "&#916;B (NTC only)");
}

static void drift_tail(FILE *f, const bg_qa_lot_summary *s)
{
    static const char *const from[4] = { "from the lot's R25 tolerance", "as given",
                                         "the part's default", "from the tolerance of the part's "
                                         "sensor kind at its reference temperature" };
    static const char *const rfrom[3] = { "the as-found limit", "as given", "the part's default" };
    fprintf(f, "</table>\n<p class=\"meta\" id=\"limits\">As-found error: what a device still "
               "using the earlier coefficients would read, minus the true temperature, largest "
               "over five check temperatures spread over the common range. Limit %.1f mK (%s); "
               "rate limit %.1f mK/year (%s).</p>\n", 1e3 * s->limit_k, from[s->limit_from % 4],
            1e3 * s->rate_k, rfrom[s->rate_from % 3]);
}

/* The value of chart 'c' at point i, and the rules it breaks there. */
static double chart_value(const bg_qa_part *p, int c, size_t i, unsigned *rules)
{
    const bg_qa_part_lot *l = &p->lots[c < 4 ? i : p->asfound[i].lot];
    *rules = c < 4 ? l->rules[c] : p->asfound[i].rules[c - 4];
    switch (c) {
    case BG_QA_CHART_XBAR_R25: return l->r25_mean_pct;
    case BG_QA_CHART_S_R25: return l->r25_sd_pct;
    case BG_QA_CHART_XBAR_B: return l->b_mean_k;
    case BG_QA_CHART_S_B: return l->b_sd_k;
    case BG_QA_CHART_XBAR_ASFOUND: return l->asfound_mean_mk;
    default: return l->asfound_sd_mk;
    }
}

static int one_chart(FILE *f, const bg_qa_part *p, int c)
{
    static const char *const ids[6] = { "xbar_r25", "s_r25", "xbar_b", "s_b", "xbar_asfound",
                                         "s_asfound" };
    static const char *const titles[6] = { "X-bar chart of the lots' mean R25 deviation",
                                           "s chart of the lots' R25 deviation",
                                           "X-bar chart of the lots' mean B",
                                           "s chart of the lots' B",
                                           "X-bar chart of the lots' mean as-found drift",
                                           "s chart of the lots' as-found drift" };
    static const char *const units[6] = { "mean R25 deviation / %", "sd / %", "mean B / K",
                                          "sd / K", "mean as-found / mK", "sd / mK" };
    const bg_chart *ch = &p->chart[c];
    size_t n = c < 4 ? p->nlots : p->nasfound;
    char l1[72], l2[72], kt[120], ku[80];
    value_labels(p->sensor, p->v1_name, p->v1_unit, p->v2_name, p->v2_unit, l1, l2);
    const char *title = titles[c], *unit = units[c];
    if (p->sensor != BG_PART_NTC && c < 4) { /* the kind's two values */
        snprintf(kt, sizeof kt, "%s chart of the lots' %s%s", c % 2 ? "s" : "X-bar",
                 c % 2 ? "" : "mean ", c < 2 ? p->v1_name : p->v2_name);
        snprintf(ku, sizeof ku, "%s%s", c % 2 ? "sd of " : "mean ", c < 2 ? l1 : l2);
        title = kt, unit = ku;
    }
    double *x = malloc((n + 1) * sizeof *x), *y = malloc((n + 1) * sizeof *y);
    int *fg = malloc((n + 1) * sizeof *fg);
    double lo = ch->lcl, hi = ch->ucl;
    if (!x || !y || !fg) {
        free(x), free(y), free(fg);
        return BG_ENOMEM;
    }
    for (size_t i = 0; i < n; i++) {
        unsigned rules;
        x[i] = (double)(i + 1), y[i] = chart_value(p, c, i, &rules), fg[i] = rules != 0;
        lo = fmin(lo, y[i]), hi = fmax(hi, y[i]);
    }
    const char **names = malloc((n + 1) * sizeof *names);
    if (!names) {
        free(x), free(y), free(fg);
        return BG_ENOMEM;
    }
    for (size_t i = 0; i < n; i++)
        names[i] = p->lots[c < 4 ? i : p->asfound[i].lot].code;
    bgi_html_chart hc = { ids[c], title, "lot (in order of creation)", unit, 0, 0, 0, 0, 0 };
    bgi_html_chart_begin_named(f, &hc, names, n, lo, hi);
    bgi_html_chart_hline(f, &hc, ch->center, "centre", 0);
    bgi_html_chart_hline(f, &hc, ch->ucl, "UCL", 1);
    bgi_html_chart_hline(f, &hc, ch->lcl, "LCL", 1);
    bgi_html_chart_line(f, &hc, x, y, n);
    bgi_html_chart_points(f, &hc, x, y, fg, n);
    bgi_html_chart_end(f, &hc, NULL);
    free(x), free(y), free(fg), free(names);
    return BG_OK;
}

static void lots_table(FILE *f, const bg_qa_part *p)
{
    static const char *const rule[4] = { "beyond 3 sigma", "2 of 3 beyond 2 sigma",
                                         "4 of 5 beyond 1 sigma", "8 on one side" };
    static const char *const cn[4] = { "X-bar 1", "s 1", "X-bar 2", "s 2" };
    static const char *const cn_ntc[4] = { "X-bar R25", "s R25", "X-bar B", "s B" };
    char l1[72], l2[72];
    value_labels(p->sensor, p->v1_name, p->v1_unit, p->v2_name, p->v2_unit, l1, l2);
    if (p->sensor == BG_PART_NTC)
        fputs("<table class=\"data\" id=\"lots\"><tr><th class=\"n\">#</th><th>lot</th>"
              "<th class=\"n\">probes</th><th class=\"n\">mean R25 dev / %</th>"
              "<th class=\"n\">mean B / K</th><th>run rules broken</th></tr>\n", f);
    else
        fprintf(f, "<table class=\"data\" id=\"lots\"><tr><th class=\"n\">#</th><th>lot</th>"
                   "<th class=\"n\">probes</th><th class=\"n\">mean %s</th>"
                   "<th class=\"n\">mean %s</th><th>run rules broken (1: %s, 2: %s)</th>"
                   "</tr>\n", l1, l2, p->v1_name, p->v2_name);
    for (size_t i = 0; i < p->nlots; i++) {
        const bg_qa_part_lot *l = &p->lots[i];
        unsigned any = l->rules[0] | l->rules[1] | l->rules[2] | l->rules[3];
        fprintf(f, "<tr class=\"lot%s\"><td class=\"n\">%zu</td><td>", any ? " flag" : "",
                i + 1);
        bgi_html_esc(f, l->code);
        fprintf(f, "</td><td class=\"n\">%zu</td>", l->n);
        bgi_html_num(f, "td", "n mr", "%+.4f", l->r25_mean_pct);
        bgi_html_num(f, "td", "n mb", "%.2f", l->b_mean_k);
        fputs("<td>", f);
        for (int c = 0; c < 4; c++)
            for (int r = 0; r < 4; r++)
                if (l->rules[c] & (1u << r))
                    fprintf(f, "%s: %s; ", p->sensor == BG_PART_NTC ? cn_ntc[c] : cn[c],
                            rule[r]);
        fputs("</td></tr>\n", f);
    }
    fputs("</table>\n", f);
}

static int part_charts(FILE *f, const bg_qa_lot_summary *s)
{
    const bg_qa_part *p = &s->part;
    int rc = BG_OK;
    for (size_t i = 0; i < p->nskipped; i++) {
        fputs("<p>Lot ", f);
        bgi_html_esc(f, p->skipped[i].code);
        fputs(": not charted (", f);
        bgi_html_esc(f, p->skipped[i].why);
        fputs(").</p>\n", f);
    }
    if (s->part_rc != BG_OK) {
        fprintf(f, "<h2>Control charts</h2>\n<p>Not charted: ");
        bgi_html_esc(f, s->part_err.msg);
        fputs(".</p>\n", f);
        return BG_OK;
    }
    fprintf(f, "<h2>Control charts of part ");
    bgi_html_esc(f, p->part);
    static const char *const from[3] = { "all lots", "as given", "the part's default" };
    fprintf(f, "</h2>\n<p id=\"baseline\">Limits at 3 sigma from the first %zu lot(s) of %zu "
               "(%s), subgroup size %zu; points that break a run rule are drawn as open squares "
               "and listed below.</p>\n", p->baseline, p->nlots, from[p->baseline_from % 3],
            p->subgroup);
    if (p->provisional)
        fprintf(f, "<p id=\"provisional\" data-provisional=\"1\"><strong>Provisional limits"
                   "</strong>: computed from %zu lot(s), fewer than the customary %d subgroups "
                   "for trial control limits (20 to 25; D. C. Montgomery, Introduction to "
                   "Statistical Quality Control). Treat a flag as a prompt to look, not as a "
                   "verdict on the process.</p>\n", p->baseline, BG_QA_CUSTOMARY_SUBGROUPS);
    for (int c = 0; c < BG_QA_NCHART && rc == BG_OK; c++)
        if (c < 4 || p->have_asfound)
            rc = one_chart(f, p, c);
    if (!p->have_asfound)
        fputs("<p>As-found drift: not charted (fewer than two lots with recalibrated "
              "probes).</p>\n", f);
    lots_table(f, p);
    return rc;
}

/* The sections before the drift table's rows: the lot's probes and statistics. */
static void first_sections(FILE *f, const bg_qa_lot_summary *s)
{
    probes_table(f, &s->stats);
    stats_table(f, &s->stats);
    histogram(f, &s->stats);
    band_table(f, &s->stats);
    drift_head(f, s);
}

/* The sections after the drift table's rows: its limits and the part's control charts. */
static int last_sections(FILE *f, const bg_qa_lot_summary *s, bg_error *err)
{
    drift_tail(f, s);
    if (part_charts(f, s) != BG_OK)
        return bg_error_set(err, BG_ENOMEM, "out of memory drawing the control charts");
    if (ferror(f))
        return bg_error_set(err, BG_EIO, "cannot write the lot report");
    return BG_OK;
}

static void stream_ready(const bg_qa_lot_summary *s, void *ctx)
{
    first_sections(ctx, s);
}

static void stream_probe(const bg_qa_lot_summary *s, const bg_qa_probe *p, void *ctx)
{
    (void)s;
    drift_rows(ctx, p);
}

/* The sections of the page, from the summary made already or while the lot is read. */
static int lot_sections(FILE *f, const bg_lot_report *r, int *flagged, bg_error *err)
{
    if (r->summary) {
        first_sections(f, r->summary);
        for (size_t i = 0; i < r->summary->nprobes; i++)
            drift_rows(f, &r->summary->probes[i]);
        *flagged = r->summary->flagged;
        return last_sections(f, r->summary, err);
    }
    if (!r->st)
        return bg_error_set(err, BG_EINVAL, "the lot report has no lot summary");
    bg_qa_lot_summary s = BG_QA_LOT_SUMMARY_INIT;
    bg_qa_lot_sink sink = { stream_ready, stream_probe, f };
    int rc = bg_qa_lot_summarize_each(r->st, r->lot.code, r->qa, &sink, &s, err);
    if (rc == BG_OK) {
        *flagged = s.flagged;
        rc = last_sections(f, &s, err);
    }
    bg_qa_lot_summary_release(&s);
    return rc;
}

/* The page: the identity, the lot, the sections, the verdict, the cautions. */
static int lot_generate(const void *result, const bg_report_head *h, FILE *f, bg_error *err)
{
    const bg_lot_report *r = result;
    char rid[40];
    int flagged = 0, rc;
    bgi_report_begin(f, &bgi_report_lot, h, rid, sizeof rid);
    fputs("<table class=\"kv\" id=\"lot\">\n", f);
    bgi_report_kv(f, "Lot", r->lot.code);
    bgi_report_kv(f, "Part", r->lot.part);
    fputs("</table>\n", f);
    rc = lot_sections(f, r, &flagged, err);
    /* the verdict, the cautions and the note stay together on the last printed page */
    bgi_html_closing_begin(f);
    fprintf(f, "<p id=\"verdict\" data-flagged=\"%d\"><strong>%s</strong></p>\n", flagged,
            flagged ? "Something is flagged: see the marked rows and points above." :
                      "Nothing is flagged.");
    char note[240];
    snprintf(note, sizeof note, "Report %s. Issued reports are stored in the calibration database "
             "and never change; a correction is issued as a new report that names this one.", rid);
    bgi_html_closing_end(f, note);
    bgi_html_end(f);
    return rc;
}

const bg_report_kind bgi_report_lot = {
    "lot", "BG-LOT", "Production lot report", "report-lot", lot_generate,
};
