/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap drift: as-found drift of a probe between its calibrations, the spread of a lot
** around its nominal curve, and control charts across the lots of a part.  Exit status 1
** when anything is flagged. */
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "../lib/report/html_int.h"

static const char drift_usage[] =
    "Usage: bandgap drift (--probe SERIAL | --lot CODE | --part PART) [--at T1,T2,...]\n"
    "                     [--limit DT] [--rate-limit DT] [--since DATE] [--baseline N]\n"
    "                     [--alpha A] [--csv | --json]\n"
    "--probe: for each calibration after the first, the as-found error a device still using\n"
    "  the previous (and the first) coefficients would show at the check temperatures (five\n"
    "  over the overlap of the two calibrated ranges unless --at), the change of R25 (%) and\n"
    "  of B for the lot's pair, and the drift per year.  Flags: |as-found| above --limit\n"
    "  (default: the temperature equivalent of the lot's R25 tolerance at 25 degC) and a\n"
    "  drift rate above --rate-limit per year (default: the same value).\n"
    "--lot: for each probe's newest fit, R25, B and the deviation from the lot's nominal\n"
    "  curve at the check temperatures; mean, sd, min, max and Cpk against the tolerances;\n"
    "  Grubbs' outlier test (two-sided, --alpha, default 0.05); probes out of tolerance; the\n"
    "  activation energy E = k B; the interchangeability band of the nominal tolerances.\n"
    "--part: X-bar and s charts of the lots' R25 deviation (%) and B, 3-sigma limits from the\n"
    "  first --baseline lots (default: all), with the Western Electric run rules.\n"
    "--since DATE uses only the runs started on or after DATE.\n"
    "Exit status: 0 when nothing is flagged, 1 when something is, 64/65/66 on errors.\n";

#define MAXAT BG_DRIFT_MAXAT

struct dopt {
    double at_k[MAXAT];
    size_t nat;
    double limit_k, rate_k, alpha;
    const char *since;
    size_t baseline;
    int csv, json;
    FILE *html; /* the lot report: sections in HTML instead of text */
};


/* The temperature equivalent of an R25 tolerance at 25 degC: tol / |alpha(25 degC)|. */
static double tol_limit_k(const bg_lot *lot)
{
    return lot->tol_r25 * BG_T0_DEFAULT_K * BG_T0_DEFAULT_K / lot->beta_k;
}

static void nominal_model(const bg_lot *lot, bg_model *m)
{
    double c[2] = { lot->r25_ohm, lot->beta_k };
    bg_model_parse("beta", m, NULL);
    bg_model_set_coef(m, c, 2, NULL);
}

/* ---------------- one probe ---------------- */

struct hist {
    bg_fit_row fit[64];
    char when[64][BG_TIME];
    long long run[64];
    size_t n, unfitted;
};

static int hist_cb(const char *started_at, long long run_id, const bg_fit_row *fit, void *ctx)
{
    struct hist *h = ctx;
    if (!fit) {
        h->unfitted++;
        return 0;
    }
    if (h->n == 64)
        return 1;
    h->fit[h->n] = *fit;
    snprintf(h->when[h->n], BG_TIME, "%s", started_at);
    h->run[h->n++] = run_id;
    return 0;
}

static int compare_one(const struct hist *h, size_t a, size_t b, const bg_lot *lot,
                       const struct dopt *o, json_out *j, int *flagged, bg_error *err)
{
    bg_drift d;
    double at[MAXAT], ta, tb, years;
    size_t nat = o->nat;
    int rc;
    const bg_fit_row *fa = &h->fit[a], *fb = &h->fit[b];

    if (nat)
        memcpy(at, o->at_k, nat * sizeof at[0]);
    else if ((rc = bg_drift_check_points(fa->t_min_k, fa->t_max_k, fb->t_min_k, fb->t_max_k, 5,
                                         at, err)) != BG_OK)
        return rc;
    else
        nat = 5;
    for (size_t i = 0; i < nat; i++)
        if (at[i] < fmax(fa->t_min_k, fb->t_min_k) - 1e-9 ||
            at[i] > fmin(fa->t_max_k, fb->t_max_k) + 1e-9)
            return bg_error_set(err, BG_EINVAL, "check temperature %.3f degC is outside the "
                                "calibrated ranges of fits %lld and %lld", at[i] - BG_ZERO_C_K,
                                fa->id, fb->id);
    if ((rc = bg_time_parse(h->when[a], &ta, err)) != BG_OK ||
        (rc = bg_time_parse(h->when[b], &tb, err)) != BG_OK)
        return rc;
    years = (tb - ta) / (365.2425 * 86400.0);
    if ((rc = bg_drift_compare(&fa->model, &fb->model, at, nat, lot->pair_t1_k, lot->pair_t2_k,
                               years, &d, err)) != BG_OK)
        return rc;
    int f_abs = d.max_abs_err_mk > 1e3 * o->limit_k;
    int f_rate = isfinite(d.rate_mk_per_year) && d.rate_mk_per_year > 1e3 * o->rate_k;
    *flagged |= f_abs || f_rate;
    if (j) {
        json_obj(j, NULL);
        json_int(j, "from_fit", fa->id);
        json_int(j, "to_fit", fb->id);
        json_str(j, "from_time", h->when[a]);
        json_str(j, "to_time", h->when[b]);
        json_num(j, "years", d.years);
        json_nums(j, "at_k", d.at_k, d.nat);
        json_nums(j, "as_found_mk", d.err_mk, d.nat);
        json_num(j, "max_abs_mk", d.max_abs_err_mk);
        json_num(j, "d_r25_pct", d.d_r25_pct);
        json_num(j, "d_b_k", d.d_b_k);
        json_num(j, "rate_mk_per_year", d.rate_mk_per_year);
        json_bool(j, "flag_limit", f_abs);
        json_bool(j, "flag_rate", f_rate);
        json_obj_end(j);
    } else if (o->html) {
        FILE *f = o->html;
        fprintf(f, "<tr class=\"drift%s\"><td>", f_abs || f_rate ? " flag" : "");
        bgi_html_esc(f, fa->serial);
        fprintf(f, "</td><td class=\"n\">%lld</td><td class=\"n\">%lld</td>", fa->id, fb->id);
        bgi_html_num(f, "td", "n years", "%.3f", d.years);
        bgi_html_num(f, "td", "n maxabs", "%.3f", d.max_abs_err_mk);
        bgi_html_num(f, "td", "n dr25", "%+.4f", d.d_r25_pct);
        bgi_html_num(f, "td", "n db", "%+.3f", d.d_b_k);
        bgi_html_num(f, "td", "n rate", "%.3f", d.rate_mk_per_year);
        fprintf(f, "<td>%s%s</td></tr>\n", f_abs ? "beyond the limit " : "",
                f_rate ? "drift rate beyond the limit" : "");
    } else if (o->csv) {
        for (size_t i = 0; i < d.nat; i++)
            printf("%s,%lld,%lld,%.17g,%.17g,%.17g,%.17g,%.17g,%.17g,%d,%d\n", fa->serial,
                   fa->id, fb->id, d.years, d.at_k[i] - BG_ZERO_C_K, d.err_mk[i], d.d_r25_pct,
                   d.d_b_k, d.rate_mk_per_year, f_abs, f_rate);
    } else {
        printf("  fit %lld (%s) -> fit %lld (%s), %.3f years\n", fa->id, h->when[a], fb->id,
               h->when[b], d.years);
        for (size_t i = 0; i < d.nat; i++)
            printf("    %10.3f degC  as-found %+10.3f mK\n", d.at_k[i] - BG_ZERO_C_K,
                   d.err_mk[i]);
        char rate[64] = "drift rate n/a (same date)";
        if (isfinite(d.rate_mk_per_year))
            snprintf(rate, sizeof rate, "drift rate %.3f mK/year", d.rate_mk_per_year);
        printf("    max |as-found| %.3f mK, R25 %+.4f %%, B %+.3f K, %s\n", d.max_abs_err_mk,
               d.d_r25_pct, d.d_b_k, rate);
        if (f_abs)
            printf("    FLAG: |as-found| beyond the limit of %.1f mK\n", 1e3 * o->limit_k);
        if (f_rate)
            printf("    FLAG: drift rate beyond the limit of %.1f mK/year\n", 1e3 * o->rate_k);
    }
    return BG_OK;
}

static int drift_probe(bg_store *st, const char *serial, struct dopt *o, int *flagged,
                       bg_error *err)
{
    static struct hist h;
    bg_probe p;
    bg_lot lot;
    json_out j;
    int rc;

    memset(&h, 0, sizeof h);
    if ((rc = bg_store_probe_get(st, serial, &p, err)) != BG_OK ||
        (rc = bg_store_lot_get(st, p.lot_code, &lot, err)) != BG_OK ||
        (rc = bg_store_probe_history(st, serial, o->since, hist_cb, &h, err)) != BG_OK)
        return rc;
    if (o->limit_k <= 0.0)
        o->limit_k = tol_limit_k(&lot);
    if (o->rate_k <= 0.0)
        o->rate_k = o->limit_k;
    if (o->html) {
        if (h.n < 2) {
            fprintf(o->html, "<tr class=\"drift single\"><td>");
            bgi_html_esc(o->html, serial);
            fprintf(o->html, "</td><td colspan=\"8\">%s</td></tr>\n", h.n == 1 ?
                    "only one calibration: nothing to compare yet" : "no fitted calibration");
        }
    } else if (o->json) {
        json_begin(&j, stdout);
        json_obj(&j, NULL);
        json_str(&j, "probe", serial);
        json_str(&j, "lot", lot.code);
        json_int(&j, "calibrations", (long long)h.n);
        json_int(&j, "runs_without_fit", (long long)h.unfitted);
        json_num(&j, "limit_mk", 1e3 * o->limit_k);
        json_num(&j, "rate_limit_mk_per_year", 1e3 * o->rate_k);
        json_arr(&j, "since_previous");
    } else if (o->html)
        ;
    else if (o->csv)
        printf("probe,from_fit,to_fit,years,t_c,as_found_mk,d_r25_pct,d_b_k,rate_mk_per_year,"
               "flag_limit,flag_rate\n");
    else {
        printf("probe %s (lot %s): %zu fitted calibrations", serial, lot.code, h.n);
        if (h.unfitted)
            printf(", %zu runs not fitted", h.unfitted);
        printf("; limit %.1f mK, rate limit %.1f mK/year\n", 1e3 * o->limit_k, 1e3 * o->rate_k);
        if (h.n == 1)
            printf("  only one calibration: nothing to compare yet\n");
        if (h.n == 0)
            printf("  no fitted calibration (bandgap fit --probe %s)\n", serial);
    }
    for (size_t i = 1; i < h.n && rc == BG_OK; i++)
        rc = compare_one(&h, i - 1, i, &lot, o, o->json ? &j : NULL, flagged, err);
    if (o->json) {
        json_arr_end(&j);
        json_arr(&j, "since_first");
    } else if (!o->csv && !o->html && h.n > 2)
        printf("  against the first calibration:\n");
    for (size_t i = 2; i < h.n && rc == BG_OK && !o->html; i++)
        rc = compare_one(&h, 0, i, &lot, o, o->json ? &j : NULL, flagged, err);
    if (o->json) {
        json_arr_end(&j);
        json_bool(&j, "flagged", *flagged);
        json_obj_end(&j);
        json_end(&j);
    }
    return rc;
}

/* ---------------- one lot ---------------- */

#define MAXP 100000

struct lotdata {
    char (*serial)[BG_TEXT];
    bg_fit_row *fit;
    size_t n, nofit, cap;
};

static int latest_cb(const char *serial, const bg_fit_row *fit, void *ctx)
{
    struct lotdata *d = ctx;
    if (!fit) {
        d->nofit++;
        return 0;
    }
    if (d->n == d->cap) {
        size_t cap = d->cap ? 2 * d->cap : 64;
        char (*s)[BG_TEXT] = realloc(d->serial, cap * sizeof *s);
        if (s)
            d->serial = s;
        bg_fit_row *f = realloc(d->fit, cap * sizeof *f);
        if (f)
            d->fit = f;
        if (!s || !f)
            return 1;
        d->cap = cap;
    }
    snprintf(d->serial[d->n], BG_TEXT, "%s", serial);
    d->fit[d->n++] = *fit;
    return 0;
}

struct lotsum {
    bg_stats r25_dev, b;   /* R25 deviation from nominal in %, B in K */
    size_t n;
};

static void stat_json(json_out *j, const char *key, const bg_stats *s, double cpk)
{
    json_obj(j, key);
    json_int(j, "n", (long long)s->n);
    json_num(j, "mean", s->mean);
    json_num(j, "sd", s->sd);
    json_num(j, "min", s->min);
    json_num(j, "max", s->max);
    json_num(j, "cpk", cpk);
    json_obj_end(j);
}

/* The lot report's statistics section: the same numbers as the JSON of drift --lot. */
static void lot_html(FILE *f, const char *code, const bg_lot *lot, const struct lotdata *d,
                     const double *r25, const double *b, const double *dev, const double *at,
                     size_t nat, const bg_stats *sr, const bg_stats *sb, double cpk_r,
                     double cpk_b, double g_r, double g_b, double gc, double alpha, long ir,
                     long ib, const double *band_lo, const double *band_hi, size_t nout)
{
    fprintf(f, "<h2>Probes (newest fit of each)</h2>\n<table class=\"data\" id=\"probes\">\n"
               "<tr><th>probe</th><th class=\"n\">fit</th><th class=\"n\">R25 deviation / %%"
               "</th><th class=\"n\">B / K</th><th class=\"n\">max |deviation| / mK</th>"
               "<th>flags</th></tr>\n");
    for (size_t i = 0; i < d->n; i++) {
        int out = fabs(r25[i]) > 100.0 * lot->tol_r25 ||
                  fabs(b[i] - lot->beta_k) > lot->beta_k * lot->tol_beta;
        int outl = (long)i == ir || (long)i == ib;
        double mx = 0.0;
        for (size_t k = 0; k < nat; k++)
            mx = fmax(mx, fabs(dev[i * nat + k]));
        fprintf(f, "<tr class=\"probe%s\"><td>", out || outl ? " flag" : "");
        bgi_html_esc(f, d->serial[i]);
        fprintf(f, "</td><td class=\"n\">%lld</td>", d->fit[i].id);
        bgi_html_num(f, "td", "n r25dev", "%+.4f", r25[i]);
        bgi_html_num(f, "td", "n b", "%.2f", b[i]);
        bgi_html_num(f, "td", "n maxdev", "%.3f", mx);
        fprintf(f, "<td>%s%s</td></tr>\n", out ? "out of tolerance " : "",
                outl ? "outlier (Grubbs)" : "");
    }
    fprintf(f, "</table>\n<h2>Lot statistics</h2>\n<table class=\"data\" id=\"stats\">\n"
               "<tr><th></th><th class=\"n\">mean</th><th class=\"n\">sd</th><th class=\"n\">"
               "min</th><th class=\"n\">max</th><th class=\"n\">Cpk</th></tr>\n");
    const bg_stats *st[2] = { sr, sb };
    const double cp[2] = { cpk_r, cpk_b };
    const char *nm[2] = { "R25 deviation / %", "B / K" }, *id[2] = { "r25_dev_pct", "b_k" };
    for (int k = 0; k < 2; k++) {
        fprintf(f, "<tr class=\"stat\" data-key=\"%s\"><td>%s</td>", id[k], nm[k]);
        bgi_html_num(f, "td", "n mean", "%.4f", st[k]->mean);
        bgi_html_num(f, "td", "n sd", "%.4f", st[k]->sd);
        bgi_html_num(f, "td", "n min", "%.4f", st[k]->min);
        bgi_html_num(f, "td", "n max", "%.4f", st[k]->max);
        bgi_html_num(f, "td", "n cpk", "%.2f", cp[k]);
        fputs("</tr>\n", f);
    }
    fputs("</table>\n<p id=\"energy\">Apparent activation energy E = kB = ", f);
    bgi_html_num(f, "span", "ea", "%.4f", bg_activation_energy_ev(sb->mean));
    fprintf(f, " eV (k the Boltzmann constant, B the lot's mean B%.0f/%.0f). Nominal: R25 %.6g "
               "ohm &#177;%.3g %%, B %.2f K &#177;%.3g %%. %zu probe(s) out of tolerance.</p>\n",
            lot->pair_t1_k - BG_ZERO_C_K, lot->pair_t2_k - BG_ZERO_C_K, lot->r25_ohm,
            100 * lot->tol_r25, lot->beta_k, 100 * lot->tol_beta, nout);
    fputs("<p id=\"grubbs\">Outliers by Grubbs' test (two-sided, significance ", f);
    bgi_html_num(f, "span", "alpha", "%.3g", alpha);
    fputs("): G(R25) ", f);
    bgi_html_num(f, "span", "g_r25", "%.3f", g_r);
    fputs(", G(B) ", f);
    bgi_html_num(f, "span", "g_b", "%.3f", g_b);
    fputs(", critical value ", f);
    bgi_html_num(f, "span", "g_crit", "%.3f", gc);
    fputs(".</p>\n", f);
    /* the histogram of R25 deviations, with the tolerance limits */
    enum { NBIN = 12 };
    double lo = fmin(sr->min, -100.0 * lot->tol_r25), hi = fmax(sr->max, 100.0 * lot->tol_r25);
    double edges[NBIN + 1];
    size_t cnt[NBIN] = { 0 }, top = 1;
    for (int k = 0; k <= NBIN; k++)
        edges[k] = lo + (hi - lo) * k / NBIN;
    for (size_t i = 0; i < d->n; i++) {
        int k = hi > lo ? (int)floor((r25[i] - lo) / (hi - lo) * NBIN) : 0;
        k = k < 0 ? 0 : k >= NBIN ? NBIN - 1 : k;
        cnt[k]++;
    }
    for (int k = 0; k < NBIN; k++)
        top = cnt[k] > top ? cnt[k] : top;
    bgi_html_chart hc = { "histogram", "R25 deviation of the lot's probes", "R25 deviation / %",
                      "probes", 0, 0, 0, 0, 0 };
    bgi_html_chart_begin(f, &hc, lo, hi, 0.0, (double)top);
    bgi_html_chart_bars(f, &hc, edges, cnt, NBIN);
    bgi_html_chart_end(f, &hc, "Bars: probes per bin; the axis spans at least the R25 tolerance");
    /* deviation from the nominal curve against the interchangeability band */
    fputs("<h2>Deviation from the nominal curve</h2>\n<table class=\"data\" id=\"band\">\n"
          "<tr><th class=\"n\">T / degC</th><th class=\"n\">measured min / mK</th>"
          "<th class=\"n\">measured max / mK</th><th class=\"n\">band low / mK</th>"
          "<th class=\"n\">band high / mK</th></tr>\n", f);
    for (size_t k = 0; k < nat; k++) {
        double mn = INFINITY, mx = -INFINITY;
        for (size_t i = 0; i < d->n; i++)
            mn = fmin(mn, dev[i * nat + k]), mx = fmax(mx, dev[i * nat + k]);
        fputs("<tr class=\"bandrow\">", f);
        bgi_html_num(f, "td", "n t", "%.3f", at[k] - BG_ZERO_C_K);
        bgi_html_num(f, "td", "n mn", "%+.2f", mn);
        bgi_html_num(f, "td", "n mx", "%+.2f", mx);
        bgi_html_num(f, "td", "n blo", "%+.2f", band_lo[k]);
        bgi_html_num(f, "td", "n bhi", "%+.2f", band_hi[k]);
        fputs("</tr>\n", f);
    }
    fputs("</table>\n<p class=\"meta\">The band is the nominal curve at the corners of the R25 "
          "and B tolerances; the measured deviation also holds the difference in shape between "
          "a real curve and the beta model.</p>\n", f);
    (void)code;
}

static int lot_stats(bg_store *st, const char *code, struct dopt *o, int print, int *flagged,
                     struct lotsum *sum, bg_error *err)
{
    struct lotdata d = { NULL, NULL, 0, 0, 0 };
    bg_lot lot;
    bg_model nom;
    double *r25 = NULL, *dev = NULL, *b = NULL, at[MAXAT];
    size_t nat = o->nat;
    json_out j;
    int rc;

    if ((rc = bg_store_lot_get(st, code, &lot, err)) != BG_OK ||
        (rc = bg_store_lot_latest_fits(st, code, o->since, latest_cb, &d, err)) != BG_OK)
        goto done;
    if (d.n == 0) {
        rc = bg_error_set(err, BG_EINVAL, "lot '%s' has no fitted probes (bandgap fit --lot %s)",
                          code, code);
        goto done;
    }
    nominal_model(&lot, &nom);
    if (nat)
        memcpy(at, o->at_k, nat * sizeof at[0]);
    else {
        double lo = -INFINITY, hi = INFINITY;
        for (size_t i = 0; i < d.n; i++)
            lo = fmax(lo, d.fit[i].t_min_k), hi = fmin(hi, d.fit[i].t_max_k);
        if ((rc = bg_drift_check_points(lo, hi, lo, hi, 5, at, err)) != BG_OK) {
            bg_error_prefix(err, "lot '%s'", code);
            goto done;
        }
        nat = 5;
    }
    r25 = malloc(d.n * sizeof *r25), b = malloc(d.n * sizeof *b);
    dev = malloc(d.n * nat * sizeof *dev);
    if (!r25 || !b || !dev) {
        rc = bg_error_set(err, BG_ENOMEM, "out of memory");
        goto done;
    }
    for (size_t i = 0; i < d.n; i++) {
        const bg_fit_row *f = &d.fit[i];
        for (size_t k = 0; k < nat; k++)
            if (at[k] < f->t_min_k - 1e-9 || at[k] > f->t_max_k + 1e-9) {
                rc = bg_error_set(err, BG_EINVAL, "check temperature %.3f degC is outside the "
                                  "calibrated range of probe '%s'", at[k] - BG_ZERO_C_K,
                                  d.serial[i]);
                goto done;
            }
        double rr;
        if ((rc = bg_model_r_from_t(&f->model, BG_T0_DEFAULT_K, &rr, err)) != BG_OK ||
            (rc = bg_model_b_pair(&f->model, lot.pair_t1_k, lot.pair_t2_k, &b[i], err)) != BG_OK)
            goto done;
        r25[i] = 100.0 * (rr - lot.r25_ohm) / lot.r25_ohm;
        bg_drift dd;
        if ((rc = bg_drift_compare(&nom, &f->model, at, nat, lot.pair_t1_k, lot.pair_t2_k, 0.0,
                                   &dd, err)) != BG_OK)
            goto done;
        memcpy(&dev[i * nat], dd.err_mk, nat * sizeof dev[0]);
    }
    bg_stats sr, sb;
    bg_stats_of(r25, d.n, &sr);
    bg_stats_of(b, d.n, &sb);
    double cpk_r = bg_stats_cpk(&sr, -100.0 * lot.tol_r25, 100.0 * lot.tol_r25);
    double cpk_b = bg_stats_cpk(&sb, lot.beta_k * (1 - lot.tol_beta), lot.beta_k * (1 + lot.tol_beta));
    double g_r = NAN, gc_r = NAN, g_b = NAN, gc_b = NAN;
    size_t ir = 0, ib = 0;
    int have_g = d.n >= 3 && sr.sd > 0.0 && sb.sd > 0.0;
    if (have_g) {
        bg_grubbs(r25, d.n, o->alpha, &g_r, &gc_r, &ir, NULL);
        bg_grubbs(b, d.n, o->alpha, &g_b, &gc_b, &ib, NULL);
    }
    /* the interchangeability band: the nominal curve's tolerance corners */
    double band_lo[MAXAT], band_hi[MAXAT];
    for (size_t k = 0; k < nat; k++)
        band_lo[k] = INFINITY, band_hi[k] = -INFINITY;
    for (int sr25 = -1; sr25 <= 1; sr25 += 2)
        for (int sbeta = -1; sbeta <= 1; sbeta += 2) {
            bg_model corner;
            bg_drift dd;
            double c[2] = { lot.r25_ohm * (1 + sr25 * lot.tol_r25),
                            lot.beta_k * (1 + sbeta * lot.tol_beta) };
            bg_model_parse("beta", &corner, NULL);
            bg_model_set_coef(&corner, c, 2, NULL);
            if (bg_drift_compare(&nom, &corner, at, nat, lot.pair_t1_k, lot.pair_t2_k, 0.0, &dd,
                                 NULL) == BG_OK)
                for (size_t k = 0; k < nat; k++)
                    band_lo[k] = fmin(band_lo[k], dd.err_mk[k]),
                    band_hi[k] = fmax(band_hi[k], dd.err_mk[k]);
        }
    size_t nout = 0;
    for (size_t i = 0; i < d.n; i++)
        nout += fabs(r25[i]) > 100.0 * lot.tol_r25 || fabs(b[i] - lot.beta_k) > lot.beta_k * lot.tol_beta;
    int g_flag_r = have_g && g_r > gc_r, g_flag_b = have_g && g_b > gc_b;
    *flagged |= nout > 0 || g_flag_r || g_flag_b;
    if (sum) {
        sum->r25_dev = sr, sum->b = sb, sum->n = d.n;
    }
    if (!print)
        goto done;
    if (o->html) {
        lot_html(o->html, code, &lot, &d, r25, b, dev, at, nat, &sr, &sb, cpk_r, cpk_b,
                 have_g ? g_r : NAN, have_g ? g_b : NAN, gc_r, o->alpha,
                 g_flag_r ? (long)ir : -1, g_flag_b ? (long)ib : -1, band_lo, band_hi, nout);
        goto done;
    }
    if (o->json) {
        json_begin(&j, stdout);
        json_obj(&j, NULL);
        json_str(&j, "lot", code);
        json_str(&j, "part", lot.part);
        json_num(&j, "nominal_r25_ohm", lot.r25_ohm);
        json_num(&j, "nominal_b_k", lot.beta_k);
        json_nums(&j, "at_k", at, nat);
        json_arr(&j, "probes");
        for (size_t i = 0; i < d.n; i++) {
            int out = fabs(r25[i]) > 100.0 * lot.tol_r25 ||
                      fabs(b[i] - lot.beta_k) > lot.beta_k * lot.tol_beta;
            json_obj(&j, NULL);
            json_str(&j, "probe", d.serial[i]);
            json_int(&j, "fit", d.fit[i].id);
            json_num(&j, "r25_dev_pct", r25[i]);
            json_num(&j, "b_k", b[i]);
            json_nums(&j, "deviation_mk", &dev[i * nat], nat);
            json_bool(&j, "out_of_tolerance", out);
            json_bool(&j, "outlier", (g_flag_r && ir == i) || (g_flag_b && ib == i));
            json_obj_end(&j);
        }
        json_arr_end(&j);
        stat_json(&j, "r25_dev_pct", &sr, cpk_r);
        stat_json(&j, "b_k", &sb, cpk_b);
        json_num(&j, "activation_energy_ev", bg_activation_energy_ev(sb.mean));
        json_obj(&j, "grubbs");
        json_num(&j, "alpha", o->alpha);
        json_num(&j, "g_r25", g_r);
        json_num(&j, "g_b", g_b);
        json_num(&j, "g_crit", gc_r);
        json_obj_end(&j);
        json_nums(&j, "band_lo_mk", band_lo, nat);
        json_nums(&j, "band_hi_mk", band_hi, nat);
        json_int(&j, "probes_without_fit", (long long)d.nofit);
        json_int(&j, "out_of_tolerance", (long long)nout);
        json_bool(&j, "flagged", *flagged);
        json_obj_end(&j);
        json_end(&j);
        goto done;
    }
    if (o->csv) {
        printf("probe,fit,r25_dev_pct,b_k");
        for (size_t k = 0; k < nat; k++)
            printf(",dev_mk_at_%.3fC", at[k] - BG_ZERO_C_K);
        printf(",out_of_tolerance,outlier\n");
        for (size_t i = 0; i < d.n; i++) {
            printf("%s,%lld,%.17g,%.17g", d.serial[i], d.fit[i].id, r25[i], b[i]);
            for (size_t k = 0; k < nat; k++)
                printf(",%.17g", dev[i * nat + k]);
            printf(",%d,%d\n", fabs(r25[i]) > 100.0 * lot.tol_r25 ||
                   fabs(b[i] - lot.beta_k) > lot.beta_k * lot.tol_beta,
                   (g_flag_r && ir == i) || (g_flag_b && ib == i));
        }
        goto done;
    }
    printf("lot %s (part %s): %zu probes with fits%s; nominal R25 %.6g ohm +-%.3g %%, "
           "B %.2f K +-%.3g %%\n", code, lot.part, d.n, d.nofit ? ", some without" : "",
           lot.r25_ohm, 100 * lot.tol_r25, lot.beta_k, 100 * lot.tol_beta);
    printf("  %-20s %10s %10s %13s  %s\n", "probe", "R25 dev/%", "B/K", "max dev/mK", "flags");
    for (size_t i = 0; i < d.n; i++) {
        double mx = 0.0;
        for (size_t k = 0; k < nat; k++)
            mx = fmax(mx, fabs(dev[i * nat + k]));
        int out = fabs(r25[i]) > 100.0 * lot.tol_r25 ||
                  fabs(b[i] - lot.beta_k) > lot.beta_k * lot.tol_beta;
        printf("  %-20s %+10.4f %10.2f %13.3f  %s%s\n", d.serial[i], r25[i], b[i], mx,
               out ? "OUT OF TOLERANCE " : "",
               (g_flag_r && ir == i) || (g_flag_b && ib == i) ? "OUTLIER (Grubbs)" : "");
    }
    printf("  R25 deviation: mean %+.4f %%, sd %.4f %%, min %+.4f, max %+.4f, Cpk %.2f\n",
           sr.mean, sr.sd, sr.min, sr.max, cpk_r);
    printf("  B: mean %.2f K, sd %.2f K, min %.2f, max %.2f, Cpk %.2f; activation energy "
           "E = kB = %.4f eV\n", sb.mean, sb.sd, sb.min, sb.max, cpk_b,
           bg_activation_energy_ev(sb.mean));
    if (have_g)
        printf("  Grubbs (two-sided, alpha %.3g): G(R25) %.3f, G(B) %.3f, critical %.3f\n",
               o->alpha, g_r, g_b, gc_r);
    printf("  deviation from the nominal curve (mK) against the tolerance band:\n");
    for (size_t k = 0; k < nat; k++) {
        double lo = INFINITY, hi = -INFINITY;
        for (size_t i = 0; i < d.n; i++)
            lo = fmin(lo, dev[i * nat + k]), hi = fmax(hi, dev[i * nat + k]);
        printf("    %10.3f degC  measured %+9.2f .. %+9.2f   band %+9.2f .. %+9.2f\n",
               at[k] - BG_ZERO_C_K, lo, hi, band_lo[k], band_hi[k]);
    }
    if (nout)
        printf("  FLAG: %zu probes out of tolerance\n", nout);
    if (g_flag_r || g_flag_b)
        printf("  FLAG: Grubbs outlier: probe %s\n", d.serial[g_flag_r ? ir : ib]);
done:
    free(d.serial);
    free(d.fit);
    free(r25), free(b), free(dev);
    return rc;
}

/* ---------------- a part ---------------- */

/* The as-found drift of each probe of a lot between its two newest calibrations, at the middle
** of their common range (mK, signed), for the control chart of drift across lots. */
struct asf { double *v; size_t n, cap; };

static int asf_cb(const char *serial, const bg_fit_row *f, char (*when)[BG_TIME], size_t n,
                  void *ctx)
{
    struct asf *a = ctx;
    bg_drift_cal c0, c1;
    bg_drift d;
    double t0, t1, at;
    (void)serial;
    if (n < 2)
        return 0;
    if (bg_time_parse(when[n - 2], &t0, NULL) != BG_OK ||
        bg_time_parse(when[n - 1], &t1, NULL) != BG_OK ||
        bg_drift_prepare(&f[n - 2].model, 298.15, 358.15, t0, &c0, NULL) != BG_OK ||
        bg_drift_prepare(&f[n - 1].model, 298.15, 358.15, t1, &c1, NULL) != BG_OK ||
        bg_drift_check_points(f[n - 2].t_min_k, f[n - 2].t_max_k, f[n - 1].t_min_k,
                              f[n - 1].t_max_k, 1, &at, NULL) != BG_OK ||
        bg_drift_compare_cal(&c0, &c1, &at, 1, &d, NULL) != BG_OK)
        return 0;
    if (a->n == a->cap) {
        size_t cap = a->cap ? 2 * a->cap : 64;
        double *v = realloc(a->v, cap * sizeof *v);
        if (!v)
            return 1;
        a->v = v, a->cap = cap;
    }
    a->v[a->n++] = d.err_mk[0];
    return 0;
}

struct partdata {
    char code[256][BG_TEXT];
    size_t n;
};

static int part_cb(const bg_lot *l, void *ctx)
{
    struct partdata *p = ctx;
    if (p->n == 256)
        return 1;
    snprintf(p->code[p->n++], BG_TEXT, "%s", l->code);
    return 0;
}

static int drift_part(bg_store *st, const char *part, struct dopt *o, int *flagged,
                      bg_error *err)
{
    static struct partdata pd;
    static struct lotsum sum[256];
    double mr[256], sr[256], mb[256], sb[256], ma[256], sa_[256];
    size_t na[256];
    size_t k = 0, msum = 0;
    char used[256][BG_TEXT];
    int rc;

    pd.n = 0;
    if ((rc = bg_store_part_lots(st, part, part_cb, &pd, err)) != BG_OK)
        return rc;
    for (size_t i = 0; i < pd.n; i++) {
        int f = 0;
        bg_error e2 = BG_ERROR_INIT;
        if (lot_stats(st, pd.code[i], o, 0, &f, &sum[k], &e2) != BG_OK || sum[k].n < 2) {
            if (o->html)
                fprintf(o->html, "<p>Lot %s: not charted (%s).</p>\n", pd.code[i],
                        e2.msg[0] ? e2.msg : "fewer than 2 fitted probes");
            else if (!o->json && !o->csv)
                printf("lot %s: not charted (%s)\n", pd.code[i],
                       e2.msg[0] ? e2.msg : "fewer than 2 fitted probes");
            continue;
        }
        {
            struct asf a = { NULL, 0, 0 };
            bg_stats sa;
            bg_store_lot_history(st, pd.code[i], o->since, asf_cb, &a, NULL);
            bg_stats_of(a.v, a.n, &sa);
            ma[k] = sa.mean, sa_[k] = sa.sd, na[k] = a.n;
            free(a.v);
        }
        mr[k] = sum[k].r25_dev.mean, sr[k] = sum[k].r25_dev.sd;
        mb[k] = sum[k].b.mean, sb[k] = sum[k].b.sd;
        snprintf(used[k], BG_TEXT, "%s", pd.code[i]);
        msum += sum[k].n;
        k++;
    }
    if (k < 2)
        return bg_error_set(err, BG_EINVAL, "part '%s': control charts need at least 2 lots "
                            "with 2 or more fitted probes", part);
    size_t nb = o->baseline && o->baseline < k ? o->baseline : k;
    size_t m = (msum + k / 2) / k; /* subgroup size: the mean lot size */
    bg_chart cxr, csr, cxb, csb;
    if ((rc = bg_chart_xbar_s(mr, sr, nb, m, &cxr, &csr, err)) != BG_OK ||
        (rc = bg_chart_xbar_s(mb, sb, nb, m, &cxb, &csb, err)) != BG_OK)
        return rc;
    /* As-found drift: charted over the lots where at least two probes were recalibrated. */
    double am[256], as[256];
    size_t ka = 0, asum = 0, aidx[256];
    for (size_t i = 0; i < k; i++)
        if (na[i] >= 2)
            am[ka] = ma[i], as[ka] = sa_[i], aidx[ka] = i, asum += na[i], ka++;
    bg_chart cxa, csa;
    unsigned fxa[256], fsa[256];
    int have_a = 0;
    if (ka >= 2) {
        size_t nba = o->baseline && o->baseline < ka ? o->baseline : ka;
        have_a = bg_chart_xbar_s(am, as, nba, (asum + ka / 2) / ka, &cxa, &csa, NULL) == BG_OK;
        if (have_a) {
            bg_chart_rules(&cxa, am, ka, fxa);
            bg_chart_rules(&csa, as, ka, fsa);
            for (size_t i = 0; i < ka; i++)
                *flagged |= (fxa[i] | fsa[i]) != 0;
        }
    }
    unsigned fxr[256], fsr[256], fxb[256], fsb[256];
    bg_chart_rules(&cxr, mr, k, fxr);
    bg_chart_rules(&csr, sr, k, fsr);
    bg_chart_rules(&cxb, mb, k, fxb);
    bg_chart_rules(&csb, sb, k, fsb);
    for (size_t i = 0; i < k; i++)
        *flagged |= (fxr[i] | fsr[i] | fxb[i] | fsb[i]) != 0;
    if (o->html) {
        const bg_chart *ch[6] = { &cxr, &csr, &cxb, &csb, &cxa, &csa };
        const double *val[6] = { mr, sr, mb, sb, am, as };
        const unsigned *fl[6] = { fxr, fsr, fxb, fsb, fxa, fsa };
        static const char *ids[6] = { "xbar_r25", "s_r25", "xbar_b", "s_b", "xbar_asfound",
                                      "s_asfound" };
        static const char *titles[6] = { "X-bar chart of the lots' mean R25 deviation",
                                         "s chart of the lots' R25 deviation",
                                         "X-bar chart of the lots' mean B",
                                         "s chart of the lots' B",
                                         "X-bar chart of the lots' mean as-found drift",
                                         "s chart of the lots' as-found drift" };
        static const char *units[6] = { "mean R25 deviation / %", "sd / %", "mean B / K",
                                        "sd / K", "mean as-found / mK", "sd / mK" };
        FILE *f = o->html;
        fprintf(f, "<h2>Control charts of part ");
        bgi_html_esc(f, part);
        fprintf(f, "</h2>\n<p>Limits at 3 sigma from the first %zu lot(s) of %zu, subgroup size "
                   "%zu; points that break a run rule are drawn as open squares and listed "
                   "below.</p>\n", nb, k, m);
        for (int c = 0; c < 6; c++) {
            size_t n = c < 4 ? k : ka;
            if (c >= 4 && !have_a)
                break;
            double x[256], y[256], lo = ch[c]->lcl, hi = ch[c]->ucl;
            int fg[256];
            for (size_t i = 0; i < n; i++) {
                x[i] = (double)(i + 1), y[i] = val[c][i], fg[i] = fl[c][i] != 0;
                lo = fmin(lo, y[i]), hi = fmax(hi, y[i]);
            }
            bgi_html_chart hc = { ids[c], titles[c], "lot (in order of creation)", units[c], 0, 0, 0,
                              0, 0 };
            hc.xint = 1;
            bgi_html_chart_begin(f, &hc, 0.5, (double)n + 0.5, lo, hi);
            bgi_html_chart_hline(f, &hc, ch[c]->center, "centre", 0);
            bgi_html_chart_hline(f, &hc, ch[c]->ucl, "UCL", 1);
            bgi_html_chart_hline(f, &hc, ch[c]->lcl, "LCL", 1);
            bgi_html_chart_line(f, &hc, x, y, n);
            bgi_html_chart_points(f, &hc, x, y, fg, n);
            bgi_html_chart_end(f, &hc, NULL);
        }
        if (!have_a)
            fputs("<p>As-found drift: not charted (fewer than two lots with recalibrated "
                  "probes).</p>\n", f);
        fputs("<table class=\"data\" id=\"lots\"><tr><th class=\"n\">#</th><th>lot</th>"
              "<th class=\"n\">probes</th><th class=\"n\">mean R25 dev / %</th>"
              "<th class=\"n\">mean B / K</th><th>run rules broken</th></tr>\n", f);
        static const char *rule[4] = { "beyond 3 sigma", "2 of 3 beyond 2 sigma",
                                       "4 of 5 beyond 1 sigma", "8 on one side" };
        static const char *cn[4] = { "X-bar R25", "s R25", "X-bar B", "s B" };
        for (size_t i = 0; i < k; i++) {
            unsigned any = fxr[i] | fsr[i] | fxb[i] | fsb[i];
            fprintf(f, "<tr class=\"lot%s\"><td class=\"n\">%zu</td><td>", any ? " flag" : "",
                    i + 1);
            bgi_html_esc(f, used[i]);
            fprintf(f, "</td><td class=\"n\">%zu</td>", sum[i].n);
            bgi_html_num(f, "td", "n mr", "%+.4f", mr[i]);
            bgi_html_num(f, "td", "n mb", "%.2f", mb[i]);
            fputs("<td>", f);
            for (int c = 0; c < 4; c++)
                for (int r = 0; r < 4; r++)
                    if (fl[c][i] & (1u << r))
                        fprintf(f, "%s: %s; ", cn[c], rule[r]);
            fputs("</td></tr>\n", f);
        }
        fputs("</table>\n", f);
        return BG_OK;
    }
    if (o->json) {
        json_out j;
        json_begin(&j, stdout);
        json_obj(&j, NULL);
        json_str(&j, "part", part);
        json_int(&j, "baseline_lots", (long long)nb);
        json_int(&j, "subgroup_size", (long long)m);
        const bg_chart *ch[4] = { &cxr, &csr, &cxb, &csb };
        const char *names[4] = { "xbar_r25_dev_pct", "s_r25_dev_pct", "xbar_b_k", "s_b_k" };
        for (int c = 0; c < 4; c++) {
            json_obj(&j, names[c]);
            json_num(&j, "center", ch[c]->center);
            json_num(&j, "lcl", ch[c]->lcl);
            json_num(&j, "ucl", ch[c]->ucl);
            json_obj_end(&j);
        }
        json_arr(&j, "lots");
        for (size_t i = 0; i < k; i++) {
            json_obj(&j, NULL);
            json_str(&j, "lot", used[i]);
            json_int(&j, "n", (long long)sum[i].n);
            json_num(&j, "r25_dev_mean_pct", mr[i]);
            json_num(&j, "r25_dev_sd_pct", sr[i]);
            json_num(&j, "b_mean_k", mb[i]);
            json_num(&j, "b_sd_k", sb[i]);
            json_int(&j, "rules", (long long)(fxr[i] | fsr[i] << 4 | fxb[i] << 8 | fsb[i] << 12));
            json_obj_end(&j);
        }
        json_arr_end(&j);
        if (have_a) {
            json_obj(&j, "xbar_as_found_mk");
            json_num(&j, "center", cxa.center);
            json_num(&j, "lcl", cxa.lcl);
            json_num(&j, "ucl", cxa.ucl);
            json_obj_end(&j);
            json_arr(&j, "as_found_lots");
            for (size_t i = 0; i < ka; i++) {
                json_obj(&j, NULL);
                json_str(&j, "lot", used[aidx[i]]);
                json_int(&j, "n", (long long)na[aidx[i]]);
                json_num(&j, "mean_mk", am[i]);
                json_num(&j, "sd_mk", as[i]);
                json_int(&j, "rules", (long long)(fxa[i] | fsa[i] << 4));
                json_obj_end(&j);
            }
            json_arr_end(&j);
        } else
            json_null(&j, "xbar_as_found_mk");
        json_bool(&j, "flagged", *flagged);
        json_obj_end(&j);
        json_end(&j);
        return BG_OK;
    }
    printf("part %s: %zu lots charted, limits from the first %zu, subgroup size %zu\n", part, k,
           nb, m);
    printf("  X-bar R25 dev: centre %+.4f %%, limits %+.4f .. %+.4f;  s: centre %.4f, limits "
           "%.4f .. %.4f\n", cxr.center, cxr.lcl, cxr.ucl, csr.center, csr.lcl, csr.ucl);
    printf("  X-bar B: centre %.2f K, limits %.2f .. %.2f;  s: centre %.3f, limits %.3f .. "
           "%.3f\n", cxb.center, cxb.lcl, cxb.ucl, csb.center, csb.lcl, csb.ucl);
    static const char *rule[4] = { "beyond 3 sigma", "2 of 3 beyond 2 sigma",
                                   "4 of 5 beyond 1 sigma", "8 on one side" };
    for (size_t i = 0; i < k; i++) {
        printf("  %-16s n %3zu  R25 dev %+.4f %% (s %.4f)  B %.2f K (s %.3f)", used[i],
               sum[i].n, mr[i], sr[i], mb[i], sb[i]);
        const unsigned *fl[4] = { fxr, fsr, fxb, fsb };
        const char *cn[4] = { "X-bar R25", "s R25", "X-bar B", "s B" };
        for (int c = 0; c < 4; c++)
            for (int r = 0; r < 4; r++)
                if (fl[c][i] & (1u << r))
                    printf("  FLAG: %s %s", cn[c], rule[r]);
        printf("\n");
    }
    if (have_a) {
        printf("  as-found drift (mK, newest two calibrations, middle of the range): X-bar centre "
               "%+.3f, limits %+.3f .. %+.3f\n", cxa.center, cxa.lcl, cxa.ucl);
        for (size_t i = 0; i < ka; i++) {
            printf("  %-16s n %3zu  as-found %+.3f mK (s %.3f)", used[aidx[i]], na[aidx[i]],
                   am[i], as[i]);
            for (int r = 0; r < 4; r++) {
                if (fxa[i] & (1u << r))
                    printf("  FLAG: X-bar as-found %s", rule[r]);
                if (fsa[i] & (1u << r))
                    printf("  FLAG: s as-found %s", rule[r]);
            }
            printf("\n");
        }
    } else
        printf("  as-found drift: not charted (fewer than two lots with recalibrated probes)\n");
    return BG_OK;
}

struct lot_probes {
    char (*serial)[BG_TEXT];
    size_t n, cap;
};

static int lot_probe_cb(const bg_probe *p, void *ctx)
{
    struct lot_probes *l = ctx;
    if (l->n == l->cap) {
        size_t cap = l->cap ? 2 * l->cap : 64;
        char (*s)[BG_TEXT] = realloc(l->serial, cap * sizeof *s);
        if (!s)
            return 1;
        l->serial = s, l->cap = cap;
    }
    snprintf(l->serial[l->n++], BG_TEXT, "%s", p->serial);
    return 0;
}

int drift_lot_html(bg_store *st, const char *code, FILE *f, int *flagged, bg_error *err)
{
    struct dopt o;
    bg_lot lot;
    struct lot_probes lp = { NULL, 0, 0 };
    int rc;
    memset(&o, 0, sizeof o);
    o.alpha = 0.05, o.html = f;
    if ((rc = bg_store_lot_get(st, code, &lot, err)) != BG_OK ||
        (rc = lot_stats(st, code, &o, 1, flagged, NULL, err)) != BG_OK)
        return rc;
    fputs("<h2>Drift of each probe since its previous calibration</h2>\n<table class=\"data\" "
          "id=\"drift\">\n<tr><th>probe</th><th class=\"n\">from fit</th><th class=\"n\">"
          "to fit</th><th class=\"n\">years</th><th class=\"n\">max |as-found| / mK</th>"
          "<th class=\"n\">&#916;R25 / %</th><th class=\"n\">&#916;B / K</th><th class=\"n\">"
          "rate / (mK/year)</th><th>flags</th></tr>\n", f);
    if ((rc = bg_store_probe_each(st, code, lot_probe_cb, &lp, err)) == BG_OK)
        for (size_t i = 0; i < lp.n && rc == BG_OK; i++) {
            o.limit_k = o.rate_k = 0.0;
            rc = drift_probe(st, lp.serial[i], &o, flagged, err);
        }
    free(lp.serial);
    fprintf(f, "</table>\n<p class=\"meta\">As-found error: what a device still using the "
               "earlier coefficients would read, minus the true temperature, largest over five "
               "check temperatures spread over the common range; limit from the lot's R25 "
               "tolerance, %.1f mK.</p>\n", 1e3 * tol_limit_k(&lot));
    if (rc == BG_OK) {
        bg_error e2 = BG_ERROR_INIT;
        if (drift_part(st, lot.part, &o, flagged, &e2) != BG_OK) {
            fprintf(f, "<h2>Control charts</h2>\n<p>Not charted: ");
            bgi_html_esc(f, e2.msg);
            fputs(".</p>\n", f);
        }
    }
    return rc;
}

int cmd_drift(int argc, char **argv, struct cli_ctx *ctx)
{
    enum { O_PROBE = 1, O_LOT, O_PART, O_AT, O_LIMIT, O_RATE, O_SINCE, O_BASE, O_ALPHA, O_CSV,
           O_JSON };
    static const struct option opts[] = {
        { "probe", required_argument, NULL, O_PROBE }, { "lot", required_argument, NULL, O_LOT },
        { "part", required_argument, NULL, O_PART },   { "at", required_argument, NULL, O_AT },
        { "limit", required_argument, NULL, O_LIMIT },
        { "rate-limit", required_argument, NULL, O_RATE },
        { "since", required_argument, NULL, O_SINCE },
        { "baseline", required_argument, NULL, O_BASE },
        { "alpha", required_argument, NULL, O_ALPHA }, { "csv", no_argument, NULL, O_CSV },
        { "json", no_argument, NULL, O_JSON },         { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 },
    };
    struct dopt o;
    bg_error err = BG_ERROR_INIT;
    bg_store *st = NULL;
    const char *probe = NULL, *lot = NULL, *part = NULL;
    long long base;
    char *end;
    int c, rc, flagged = 0;

    memset(&o, 0, sizeof o);
    o.alpha = 0.05;
    o.json = ctx->json;
    opterr = 0;
    while ((c = getopt_long(argc, argv, ":h", opts, NULL)) != -1) {
        switch (c) {
        case 'h': fputs(drift_usage, stdout); return BG_OK;
        case O_PROBE: probe = optarg; break;
        case O_LOT: lot = optarg; break;
        case O_PART: part = optarg; break;
        case O_AT:
            if (cli_parse_temps(optarg, o.at_k, MAXAT, &o.nat, &err) != BG_OK)
                return cli_usage_error("drift", "--at: %s", err.msg);
            break;
        case O_LIMIT: case O_RATE:
            if (bg_units_parse_tdiff(optarg, c == O_LIMIT ? &o.limit_k : &o.rate_k, &err) != BG_OK)
                return cli_usage_error("drift", "--%s: %s", c == O_LIMIT ? "limit" : "rate-limit",
                                       err.msg);
            break;
        case O_SINCE:
            if (!bg_csv_valid_time(optarg))
                return cli_usage_error("drift", "--since: '%s': not an ISO 8601 date", optarg);
            o.since = optarg;
            break;
        case O_BASE:
            if (cli_parse_id(optarg, &base) != BG_OK)
                return cli_usage_error("drift", "--baseline: '%s': not a number of lots", optarg);
            o.baseline = (size_t)base;
            break;
        case O_ALPHA:
            o.alpha = strtod(optarg, &end);
            if (*end || !(o.alpha > 0.0 && o.alpha < 0.5))
                return cli_usage_error("drift", "--alpha: '%s': expected 0 < alpha < 0.5",
                                       optarg);
            break;
        case O_CSV: o.csv = 1; break;
        case O_JSON: o.json = 1; break;
        case ':': return cli_usage_error("drift", "option '%s' needs a value", argv[optind - 1]);
        default: return cli_usage_error("drift", "unknown option '%s'", argv[optind - 1]);
        }
    }
    if (optind < argc)
        return cli_usage_error("drift", "unexpected argument '%s'", argv[optind]);
    if ((probe != NULL) + (lot != NULL) + (part != NULL) != 1)
        return cli_usage_error("drift", "give one of --probe, --lot or --part");
    if (o.csv && o.json)
        return cli_usage_error("drift", "give --csv or --json, not both");
    if (part && o.csv)
        return cli_usage_error("drift", "--part has text and --json output only");
    if ((rc = cli_open_store(ctx, 0, &st)) != BG_OK)
        return rc;
    rc = probe ? drift_probe(st, probe, &o, &flagged, &err)
         : lot ? lot_stats(st, lot, &o, 1, &flagged, NULL, &err)
               : drift_part(st, part, &o, &flagged, &err);
    bg_store_close(st);
    if (rc != BG_OK)
        return cli_fail("drift", &err);
    return flagged ? CLI_FLAGGED : BG_OK;
}
