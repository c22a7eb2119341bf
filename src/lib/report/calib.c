/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The calibration report of one fit of one run: what it computes from the stored fit and
** readings (residuals, self-heating P = I^2 R at the largest resistance, the curve's u(T)
** band from the coefficients' covariance, U = k u with k from the coverage rule (Student's t
** for the fit's degrees of freedom, as 'fit' states it), an R-T table at a round step), and the
** page that shows it. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "bandgap/bandgap.h"
#include "report/html_int.h"
#include "report/report_int.h"

static double cdeg(double t_k)
{
    return t_k - BG_ZERO_C_K;
}

void bg_calib_report_release(bg_calib_report *r)
{
    if (!r)
        return;
    free(r->readings);
    free(r->t_fit_k);
    free(r->resid_mk);
    free(r->rt);
    memset(r, 0, sizeof *r);
}

/* The u(T) band over the validity range and its largest value. */
static void compute_band(bg_calib_report *r)
{
    const bg_fit_row *ft = &r->fit;
    r->u_max_k = NAN;
    for (int i = 0; i < BG_REPORT_BAND; i++) {
        double t = ft->t_min_k + (ft->t_max_k - ft->t_min_k) * i / (BG_REPORT_BAND - 1.0);
        double u = NAN;
        if (ft->has_cov && bg_model_u_t(&ft->model, ft->cov, t, &u, NULL) == BG_OK)
            r->u_max_k = isnan(r->u_max_k) ? u : fmax(r->u_max_k, u);
        r->band_t_k[i] = t, r->band_u_k[i] = u;
    }
    bg_coverage_rule rule = r->rule.p > 0.0 ? r->rule : bg_coverage_default();
    if (bg_coverage_eval(&rule, (double)ft->dof, &r->cover, NULL) != BG_OK)
        r->cover.k = r->cover.p = NAN;
    r->coverage = r->cover.p;
}

/* The R-T table over the validity range end to end: its two ends, and between them the
** multiples of the smallest round step giving 24 rows or fewer, less any within a quarter
** step of an end (so no two rows nearly repeat). */
static int compute_rt(bg_calib_report *r, bg_error *err)
{
    static const double steps[] = { 1, 2, 5, 10, 20, 25, 50 };
    const bg_fit_row *ft = &r->fit;
    double span = ft->t_max_k - ft->t_min_k, step = 1.0;
    if (!(isfinite(span) && span >= 0.0))
        return bg_error_set(err, BG_EINVAL, "fit %lld: its calibrated range %g .. %g K is not "
                            "a range (a damaged record)", ft->id, ft->t_min_k, ft->t_max_k);
    for (size_t i = 0; i < sizeof steps / sizeof steps[0]; i++)
        if (span / steps[i] <= 22.0) {
            step = steps[i];
            break;
        }
    while (span / step > 22.0) /* wider than any real range: 500, 5000 ... */
        step *= 10.0;
    r->rt_step_c = step;
    r->rt_from_c = cdeg(ft->t_min_k), r->rt_to_c = cdeg(ft->t_max_k);
    double first = ceil((r->rt_from_c + 0.25 * step) / step) * step;
    size_t inner = 0;
    /* at most 22 rows between the ends; the bound also ends the loop where the step is lost
    ** in rounding (temperatures of 1e17 K and more) */
    for (double t = first; t < r->rt_to_c - 0.25 * step && inner < 22; t += step)
        inner++;
    size_t n = span > 0.0 ? inner + 2 : 1;
    if (!(r->rt = malloc(n * sizeof *r->rt)))
        return bg_error_set(err, BG_ENOMEM, "out of memory for the R-T table (%zu rows)", n);
    for (r->nrt = 0; r->nrt < n; r->nrt++) {
        bg_report_rt_row *w = &r->rt[r->nrt];
        double t = r->nrt == 0 ? r->rt_from_c : r->nrt == n - 1 ? r->rt_to_c :
                   first + step * (double)(r->nrt - 1);
        double tk = r->nrt == 0 ? ft->t_min_k : r->nrt == n - 1 ? ft->t_max_k :
                    t + BG_ZERO_C_K, u = NAN;
        w->t_c = t, w->r_ohm = NAN, w->alpha_per_k = NAN;
        bg_model_r_from_t(&ft->model, tk, &w->r_ohm, NULL);
        bg_model_alpha(&ft->model, tk, &w->alpha_per_k, NULL);
        w->U_k = ft->has_cov && bg_model_u_t(&ft->model, ft->cov, tk, &u, NULL) == BG_OK ?
                 r->cover.k * u : NAN;
    }
    return BG_OK;
}

int bg_calib_report_compute(bg_calib_report *r, bg_error *err)
{
    size_t n = r->nreadings;
    free(r->t_fit_k), free(r->resid_mk), free(r->rt);
    r->rt = NULL, r->nrt = 0;
    r->t_fit_k = malloc((n + 1) * sizeof *r->t_fit_k);
    r->resid_mk = malloc((n + 1) * sizeof *r->resid_mk);
    if (!r->t_fit_k || !r->resid_mk)
        return bg_error_set(err, BG_ENOMEM, "out of memory for %zu residuals", n);
    r->t_lo_k = INFINITY, r->t_hi_k = -INFINITY, r->r_max_ohm = 0.0;
    for (size_t i = 0; i < n; i++) {
        const bg_reading_row *g = &r->readings[i];
        double tf = NAN;
        r->t_lo_k = fmin(r->t_lo_k, g->t_k), r->t_hi_k = fmax(r->t_hi_k, g->t_k);
        r->r_max_ohm = fmax(r->r_max_ohm, g->r_ohm);
        bg_model_t_from_r(&r->fit.model, g->r_ohm, &tf, NULL);
        r->t_fit_k[i] = tf;
        r->resid_mk[i] = 1e3 * (g->t_k - tf);
    }
    /* self-heating: the largest power is at the largest resistance */
    double ex = r->run.measuring_current_a; /* a number in A since schema 4 */
    /* an older run's free text is used when it reads as a current ("10 uA", "0.1mA") */
    r->have_current = ex > 0.0 || bg_units_parse_si(r->run.excitation, "A", &ex, NULL) == BG_OK;
    r->excitation_a = r->have_current ? ex : NAN;
    /* I^2 R for a resistance, I V for a junction's voltage; none for a device that reports */
    int qty = r->run.quantity;
    if (qty == BG_QTY_REPORTED_T || qty == BG_QTY_CODE)
        r->have_current = 0;
    r->power_w = !r->have_current ? NAN : qty == BG_QTY_VOLTAGE ? ex * r->r_max_ohm
               : ex * ex * r->r_max_ohm;
    r->selfheat_mk = r->have_current && r->dissipation_w_per_k > 0.0 ?
                     1e3 * r->power_w / r->dissipation_w_per_k : NAN;
    compute_band(r);
    return compute_rt(r, err);
}

/* ---- loading from the calibration record ---- */

struct reading_buf {
    bg_calib_report *r;
    size_t cap;
};

static int reading_keep(const bg_reading_row *row, void *ctx)
{
    struct reading_buf *b = ctx;
    if (b->r->nreadings == b->cap) {
        size_t cap = b->cap ? 2 * b->cap : 32;
        bg_reading_row *p = realloc(b->r->readings, cap * sizeof *p);
        if (!p)
            return 1;
        b->r->readings = p, b->cap = cap;
    }
    b->r->readings[b->r->nreadings++] = *row;
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

static int load(bg_store *st, long long run_id, long long fit_id, bg_calib_report *r,
                bg_error *err)
{
    int rc;
    if ((rc = bg_store_run_get(st, run_id, &r->run, err)) != BG_OK)
        return rc;
    if (!fit_id) {
        struct newest_of_run nr = { run_id, 0 };
        if ((rc = bg_store_fit_each(st, r->run.serial, NULL, newest_of_run_cb, &nr, err)) !=
            BG_OK)
            return rc;
        if (!nr.fit_id)
            return bg_error_set(err, BG_EINVAL, "run %lld has no fit (bandgap fit --probe %s "
                                "--run %lld)", run_id, r->run.serial, run_id);
        fit_id = nr.fit_id;
    }
    if ((rc = bg_store_fit_get(st, fit_id, &r->fit, err)) != BG_OK)
        return rc;
    if (r->fit.run_id != run_id)
        return bg_error_set(err, BG_EINVAL, "fit %lld is not a fit of run %lld", fit_id, run_id);
    /* the lot and the reference as they were for this run: the lot the probe belonged to at
    ** its start (a probe moved since counts this run toward its earlier lot), that lot's
    ** version in force then, the reference version its readings were corrected with */
    bg_lot_version lv;
    bg_probe_version pv;
    if ((rc = bg_store_probe_get(st, r->run.serial, &r->probe, err)) != BG_OK ||
        (rc = bg_store_probe_at(st, r->run.serial, r->run.started_at, &pv, err)) != BG_OK ||
        (rc = bg_store_lot_at(st, pv.probe.lot_code, r->run.started_at, &lv, err)) != BG_OK)
        return rc;
    r->probe.lot_id = pv.probe.lot_id;
    memcpy(r->probe.lot_code, pv.probe.lot_code, sizeof r->probe.lot_code);
    r->lot = lv.lot;
    if (r->run.reference_id) {
        bg_ref_version rv;
        if ((rc = bg_store_ref_version(st, r->run.ref_ident, r->run.ref_version, &rv, err))
            != BG_OK)
            return rc;
        r->ref = rv.ref;
        r->have_ref = 1;
    }
    struct reading_buf b = { r, 0 };
    return bg_store_reading_each(st, run_id, reading_keep, &b, err);
}

int bg_calib_report_load(bg_store *st, long long run_id, long long fit_id,
                         double dissipation_w_per_k, bg_calib_report *out, bg_error *err)
{
    memset(out, 0, sizeof *out);
    out->dissipation_w_per_k = dissipation_w_per_k;
    int rc = load(st, run_id, fit_id, out, err);
    if (rc == BG_OK)
        rc = bg_calib_report_compute(out, err);
    if (rc != BG_OK)
        bg_calib_report_release(out);
    return rc;
}

/* ---- the page ---- */

/* The unit of quantity 'q' as the page writes units (SI Brochure: the signs, not "ohm"). */
static const char *page_unit(bg_quantity q)
{
    return q == BG_QTY_RESISTANCE ? "\xce\xa9" : q == BG_QTY_REPORTED_T ? "\xc2\xb0" "C"
         : bg_quantity_unit(q);
}

static void item_and_reference(FILE *f, const bg_calib_report *r)
{
    char b1[32], buf[256];
    fputs("<h2>Item calibrated</h2>\n<table class=\"kv\" id=\"item\">\n", f);
    bgi_report_kv(f, "Probe serial", r->probe.serial);
    bgi_report_kv(f, "Production lot", r->lot.code);
    bgi_report_kv(f, "Part", r->lot.part);
    snprintf(buf, sizeof buf, "R25 %s \xce\xa9 (tolerance %.3g %%), B%.0f/%.0f %.0f K (tolerance "
             "%.3g %%)", bg_units_format_ohms(r->lot.r25_ohm, 6, b1, sizeof b1),
             100.0 * r->lot.tol_r25, cdeg(r->lot.pair_t1_k), cdeg(r->lot.pair_t2_k),
             r->lot.beta_k, 100.0 * r->lot.tol_beta);
    if (r->lot.sensor != BG_PART_NTC) /* schema 13: a lot of another kind holds none */
        snprintf(buf, sizeof buf, "those of the part's specification (a %s lot holds no "
                 "nominal values of its own)", bg_part_sensor_name(r->lot.sensor));
    else if (r->run.quantity != BG_QTY_RESISTANCE) /* the lot's values are a resistance's */
        snprintf(buf, sizeof buf, "not stated for this sensor (the lot's R25 and B are a "
                 "thermistor's and do not apply to readings in %s)",
                 page_unit((bg_quantity)r->run.quantity));
    bgi_report_kv(f, "Nominal", buf);
    fputs("</table>\n<h2>Reference thermometer</h2>\n<table class=\"kv\" id=\"reference\">\n",
          f);
    if (r->have_ref) {
        const bg_ref *ref = &r->ref;
        bgi_report_kv(f, "Identifier", ref->ident);
        bgi_report_kv(f, "Traceability (certificate)", ref->certificate);
        bgi_report_kv(f, "Calibration due", ref->due_date);
        if (r->run.ref_overdue[0]) /* an override recorded on import */
            bgi_report_kv(f, "USED PAST ITS CALIBRATION DUE DATE (override recorded with the "
                          "run)", r->run.ref_overdue);
        if (ref->kind == BG_REF_LINEAR)
            snprintf(buf, sizeof buf, "linear: t = t_read %s %.6g K %s %.6g (t_read - %.3f \xc2\xb0" "C)",
                     ref->lin_c0_k < 0 ? "-" : "+", fabs(ref->lin_c0_k),
                     ref->lin_c1 < 0 ? "-" : "+", fabs(ref->lin_c1), cdeg(ref->lin_t0_k));
        else if (ref->kind == BG_REF_CVD)
            snprintf(buf, sizeof buf, "read as a platinum resistance, IEC 60751 "
                     "Callendar-Van Dusen: R0 %.9g \xce\xa9, A %.9e, B %.9e, C %.9e",
                     ref->cvd_r0_ohm, ref->cvd_a, ref->cvd_b, ref->cvd_c);
        else if (ref->kind == BG_REF_ITS90)
            snprintf(buf, sizeof buf, "read as a standard platinum resistance, ITS-90 "
                     "(Preston-Thomas 1990) sub-range %s: R(273.16 K) %.9g \xce\xa9, "
                     "a %.9e, b %.9e, c %.9e, d %.9e",
                     bg_its90_range_name(ref->its90.range, NULL, NULL), ref->its90_rtpw_ohm,
                     ref->its90.a, ref->its90.b, ref->its90.c, ref->its90.d);
        else
            snprintf(buf, sizeof buf, "none (readings used as given)");
        bgi_report_kv(f, "Correction applied on import", buf);
    } else
        bgi_report_kv(f, "Identifier",
                      "none recorded: the readings' temperatures were used as given");
    fputs("</table>\n", f);
}

static void conditions(FILE *f, const bg_calib_report *r)
{
    const bg_fit_row *ft = &r->fit;
    char name[16], buf[256];
    fputs("<h2>Method and conditions</h2>\n<table class=\"kv\" id=\"conditions\">\n", f);
    snprintf(buf, sizeof buf, "%lld, started %s, %lld readings (%lld excluded)", r->run.id,
             r->run.started_at, r->run.nreadings, r->run.nexcluded);
    bgi_report_kv(f, "Run", buf);
    bgi_report_kv(f, "Operator", r->run.operator_name);
    bgi_report_kv(f, "Medium", r->run.medium);
    bgi_report_kv(f, "Ambient", r->run.ambient);
    if (r->run.measuring_current_a > 0.0 || r->run.measuring_voltage_v > 0.0) {
        int is_i = r->run.measuring_current_a > 0.0;
        bgi_report_kv(f, is_i ? "Measuring current" : "Measuring voltage",
                      bg_units_format_si(is_i ? r->run.measuring_current_a :
                                         r->run.measuring_voltage_v, is_i ? "A" : "V", 4,
                                         buf, sizeof buf));
    } else
        bgi_report_kv(f, "Excitation", r->run.excitation); /* free text, schema < 4 */
    fputs("<tr><th>Self-heating estimate</th><td id=\"selfheat\">", f);
    int qty = r->run.quantity;
    if (qty == BG_QTY_REPORTED_T || qty == BG_QTY_CODE)
        fprintf(f, "not estimated (the device reports a temperature or a code: its own "
                   "dissipation is part of what it reports)");
    else if (r->have_current) {
        fprintf(f, "at most ");
        bgi_html_num(f, "span", "power-uw", "%.3g", 1e6 * r->power_w);
        fprintf(f, qty == BG_QTY_VOLTAGE ? " &#181;W (I V at the largest voltage read)"
                                         : " &#181;W (I&#178;R at the largest resistance read)");
        if (r->dissipation_w_per_k > 0.0) {
            fprintf(f, ", over %.3g mW/K: ", 1e3 * r->dissipation_w_per_k);
            bgi_html_num(f, "span", "selfheat-mk", "%.3g", r->selfheat_mk);
            fprintf(f, " mK");
        } else
            fprintf(f, "; the temperature rise P/&#948; needs the dissipation constant "
                       "&#948; (--dissipation)");
    } else
        fprintf(f, "not estimated (needs the measuring current: import --measuring-current, "
                   "e.g. 10uA)");
    fputs("</td></tr>\n", f);
    bg_model_name(&ft->model, name, sizeof name);
    snprintf(buf, sizeof buf, "%s: %s", name, bg_model_formula(&ft->model));
    bgi_report_kv(f, "Sensor kind (model)", buf);
    bg_quantity q = (bg_quantity)r->run.quantity;
    snprintf(buf, sizeof buf, "%s in %s (readings column '%s')",
             bg_store_quantity_name(r->run.quantity), page_unit(q), bg_quantity_column(q));
    bgi_report_kv(f, "Measured quantity", buf);
    snprintf(buf, sizeof buf, "least squares in temperature, model %s, %s; %zu readings used, "
             "%zu degrees of freedom; fit %lld", name, ft->weighted ? "weighted by the stated "
             "uncertainties" : "unweighted", ft->n, ft->dof, ft->id);
    bgi_report_kv(f, "Method", buf);
    fputs("</table>\n", f);
}

/* The kind's derived values (bg_model_derived: nominal values, the apparent band gap, an
** IEC 60751 class, trims), with their uncertainties from the covariance; none for a kind
** that has none. */
static void derived(FILE *f, const bg_calib_report *r)
{
    const bg_fit_row *ft = &r->fit;
    bg_derived d[8];
    size_t n = bg_model_derived(&ft->model, ft->has_cov ? ft->cov : NULL, ft->t_min_k,
                                ft->t_max_k, d, sizeof d / sizeof d[0]);
    if (n > sizeof d / sizeof d[0])
        n = sizeof d / sizeof d[0];
    if (n == 0)
        return;
    fputs("<h2>Derived values</h2>\n<table class=\"data\" id=\"derived\">\n<tr><th>quantity"
          "</th><th class=\"n\">value</th><th class=\"n\">standard uncertainty</th><th>unit"
          "</th><th>note</th></tr>\n", f);
    for (size_t i = 0; i < n; i++) {
        fputs("<tr class=\"derived\"><td>", f);
        bgi_html_esc(f, d[i].name);
        fputs("</td>", f);
        if (d[i].text[0]) {
            fputs("<td class=\"n value\">", f);
            bgi_html_esc(f, d[i].text);
            fputs("</td>", f);
        } else
            bgi_html_num(f, "td", "n value", "%.6g", d[i].value);
        bgi_html_num(f, "td", "n u", "%.2e", d[i].u);
        fputs("<td>", f);
        bgi_html_esc(f, d[i].unit);
        fputs("</td><td>", f);
        bgi_html_esc(f, d[i].note);
        fputs("</td></tr>\n", f);
    }
    fputs("</table>\n", f);
}

static void model_and_uncertainty(FILE *f, const bg_calib_report *r)
{
    const bg_fit_row *ft = &r->fit;
    const bg_model *m = &ft->model;
    fprintf(f, "<h2>Fitted model and coefficients</h2>\n<table class=\"data\" "
               "id=\"coefficients\">\n<tr><th>coefficient</th><th class=\"n\">value</th>"
               "<th class=\"n\">standard uncertainty</th></tr>\n");
    for (size_t i = 0; i < ft->npar; i++) {
        fprintf(f, "<tr><td>%s</td>", bg_model_coef_name(m, i));
        bgi_html_coef(f, "td", "n coef", m->coef[i]);
        bgi_html_num(f, "td", "n u", "%.2e", ft->has_cov ? sqrt(ft->cov[i * ft->npar + i]) : NAN);
        fputs("</tr>\n", f);
    }
    fprintf(f, "</table>\n<p class=\"meta\" id=\"coef-digits\">Coefficients to %d significant "
               "digits and standard uncertainties to 3, in the units of the model's formula; "
               "the file keeps every digit of both.</p>\n", BGI_HTML_COEF_DIGITS);
    if (bg_model_flags(m) & BG_MODEL_HAS_T0)
        fprintf(f, "<p>Reference temperature T0 = %.2f \xc2\xb0" "C.</p>\n", cdeg(m->t0_k));
    fprintf(f, "<p id=\"fitstats\">RMS residual ");
    bgi_html_num(f, "span", "rms", "%.3f", ft->rms_mk);
    fprintf(f, " mK, largest ");
    bgi_html_num(f, "span", "maxabs", "%.3f", ft->max_abs_mk);
    fprintf(f, " mK, &#967;&#178; %.4g.</p>\n", ft->chi2);
    derived(f, r);

    fputs("<h2>Uncertainty and validity</h2>\n<table class=\"kv\" id=\"uncertainty\">\n", f);
    fprintf(f, "<tr><th>Validity range</th><td>");
    bgi_html_num(f, "span", "tmin", "%.2f", cdeg(ft->t_min_k));
    fputs(" \xc2\xb0" "C to ", f);
    bgi_html_num(f, "span", "tmax", "%.2f", cdeg(ft->t_max_k));
    fputs(" \xc2\xb0" "C (the readings' span)</td></tr>\n", f);
    fprintf(f, "<tr><th>Expanded uncertainty</th><td>");
    if (isfinite(r->u_max_k)) {
        fputs("U = ", f);
        bgi_html_sig2(f, "U", 1e3 * bgi_html_round_up2(r->cover.k * r->u_max_k));
        fprintf(f, " mK at most over the range, coverage factor k = ");
        bgi_html_num(f, "span", "k", "%.2f", r->cover.k);
        fprintf(f, " %s Student's t for %zu effective degrees of freedom, coverage probability "
                   "%s", r->cover.fixed ? "as asked; with" : "from", ft->dof,
                r->cover.fixed ? "about " : "");
        bgi_html_num(f, "span", "coverage", "%.2f", 100.0 * r->coverage);
        fprintf(f, " %% (JCGM 100:2008, G.3). U is that of the fitted curve "
                   "from the coefficients' covariance%s; it includes the reference only as far "
                   "as the stated reading uncertainties do.",
                ft->weighted ? " (the readings' stated uncertainties, scaled up when the "
                "scatter is larger)" : " (from the scatter of the residuals)");
    } else
        fputs("not available: the fit has no degrees of freedom", f);
    fputs("</td></tr>\n</table>\n", f);
}

/* The column head of the reading in the run's quantity: "R / ohm" (as the sign), "V / V" ... */
static const char *x_head(const bg_calib_report *r, char *buf, size_t size)
{
    bg_quantity q = (bg_quantity)r->run.quantity;
    if (q == BG_QTY_RESISTANCE)
        return "R / \xce\xa9";
    snprintf(buf, size, "%s / %s", bg_quantity_symbol(q),
             q == BG_QTY_REPORTED_T ? "\xc2\xb0" "C" : bg_quantity_unit(q));
    return buf;
}

static int readings(FILE *f, const bg_calib_report *r, bg_error *err)
{
    size_t n = r->nreadings;
    char xh[32];
    fprintf(f, "<h2>Readings and residuals</h2>\n<table class=\"data\" id=\"readings\">\n<tr>"
            "<th class=\"n\">line</th><th class=\"n\">T ref / \xc2\xb0" "C</th><th class=\"n\">"
            "%s</th><th class=\"n\">T fit / \xc2\xb0" "C</th><th class=\"n\">residual / mK</th>"
            "<th>note</th></tr>\n", x_head(r, xh, sizeof xh));
    double *rx = malloc((n + 1) * sizeof *rx);
    int *rf = malloc((n + 1) * sizeof *rf);
    double ylo = 0.0, yhi = 0.0, bx[BG_REPORT_BAND], blo[BG_REPORT_BAND], bhi[BG_REPORT_BAND];
    if (!rx || !rf) {
        free(rx), free(rf);
        return bg_error_set(err, BG_ENOMEM, "out of memory for the report");
    }
    for (size_t i = 0; i < n; i++) {
        const bg_reading_row *g = &r->readings[i];
        fprintf(f, "<tr class=\"reading%s\" data-id=\"%lld\"><td class=\"n\">%zu</td>",
                g->excluded ? " excluded" : "", g->id, g->line);
        bgi_html_num(f, "td", "n t", "%.4f", cdeg(g->t_k));
        bgi_html_num(f, "td", "n r", "%.6g", g->r_ohm);
        bgi_html_num(f, "td", "n tfit", "%.4f", cdeg(r->t_fit_k[i]));
        bgi_html_num(f, "td", "n resid", "%.2f", r->resid_mk[i]);
        fputs("<td>", f);
        if (g->excluded) {
            fputs("excluded: ", f);
            bgi_html_esc(f, g->excl_reason);
        } else
            bgi_html_esc(f, g->note);
        fputs("</td></tr>\n", f);
        rx[i] = cdeg(g->t_k), rf[i] = g->excluded;
        ylo = fmin(ylo, r->resid_mk[i]), yhi = fmax(yhi, r->resid_mk[i]);
    }
    fputs("</table>\n", f);
    for (int i = 0; i < BG_REPORT_BAND; i++) {
        bx[i] = cdeg(r->band_t_k[i]), bhi[i] = 1e3 * r->cover.k * r->band_u_k[i];
        blo[i] = -bhi[i];
        if (isfinite(bhi[i]))
            ylo = fmin(ylo, blo[i]), yhi = fmax(yhi, bhi[i]);
    }
    bgi_html_chart c = { "residuals", "Residuals (measured - fitted) against temperature",
                         "temperature / \xc2\xb0" "C", "residual / mK", 0, 0, 0, 0, 0 };
    bgi_html_chart_begin(f, &c, fmin(r->t_lo_k, r->fit.t_min_k) - BG_ZERO_C_K,
                         fmax(r->t_hi_k, r->fit.t_max_k) - BG_ZERO_C_K, ylo, yhi);
    if (isfinite(r->u_max_k))
        bgi_html_chart_band(f, &c, bx, blo, bhi, BG_REPORT_BAND);
    bgi_html_chart_hline(f, &c, 0.0, NULL, 0);
    bgi_html_chart_points(f, &c, rx, r->resid_mk, rf, n);
    char cap[200];
    snprintf(cap, sizeof cap, "Grey band: \xc2\xb1U (k = %.2f), the uncertainty of the fitted "
             "curve, not the scatter of the readings; dots: readings used; open squares: "
             "excluded readings", r->cover.k);
    bgi_html_chart_end(f, &c, cap);
    free(rx), free(rf);
    return BG_OK;
}

static void rt_table_x(FILE *f, const bg_calib_report *r, bg_quantity q);

static void rt_table(FILE *f, const bg_calib_report *r)
{
    bg_quantity q = (bg_quantity)r->run.quantity;
    if (q != BG_QTY_RESISTANCE) {
        rt_table_x(f, r, q);
        return;
    }
    fprintf(f, "<h2>Resistance&#8211;temperature table</h2>\n<table class=\"data\" id=\"rt\" "
               "data-from=\"%.17g\" data-to=\"%.17g\" data-step=\"%.17g\">\n<tr><th class=\"n\">"
               "T / \xc2\xb0" "C</th><th class=\"n\">R / \xce\xa9</th><th class=\"n\">&#945; / (%%/K)</th>"
               "<th class=\"n\">U (k = %.2f) / mK</th></tr>\n", r->rt_from_c, r->rt_to_c,
            r->rt_step_c, r->cover.k);
    for (size_t i = 0; i < r->nrt; i++) {
        const bg_report_rt_row *w = &r->rt[i];
        fputs("<tr class=\"rt\">", f);
        bgi_html_num(f, "td", "n t", "%.2f", w->t_c);
        bgi_html_num(f, "td", "n r", "%.6g", w->r_ohm);
        bgi_html_num(f, "td", "n alpha", "%.4f", 100.0 * w->alpha_per_k);
        bgi_html_num(f, "td", "n U", "%.2f", 1e3 * w->U_k);
        fputs("</tr>\n", f);
    }
    fputs("</table>\n", f);
}

/* The table of another quantity: the reading and the slope dx/dT (1 / bg_model_dtdx). */
static void rt_table_x(FILE *f, const bg_calib_report *r, bg_quantity q)
{
    char xh[32];
    const char *u = q == BG_QTY_REPORTED_T ? "\xc2\xb0" "C" : bg_quantity_unit(q);
    fprintf(f, "<h2>Reading&#8211;temperature table</h2>\n<table class=\"data\" id=\"rt\" "
               "data-from=\"%.17g\" data-to=\"%.17g\" data-step=\"%.17g\">\n<tr><th class=\"n\">"
               "T / \xc2\xb0" "C</th><th class=\"n\">%s</th><th class=\"n\">d%s/dT / (%s/K)"
               "</th><th class=\"n\">U (k = %.2f) / mK</th></tr>\n", r->rt_from_c, r->rt_to_c,
            r->rt_step_c, x_head(r, xh, sizeof xh), bg_quantity_symbol(q), u, r->cover.k);
    for (size_t i = 0; i < r->nrt; i++) {
        const bg_report_rt_row *w = &r->rt[i];
        double dtdx = NAN;
        bg_model_dtdx(&r->fit.model, w->r_ohm, &dtdx, NULL);
        fputs("<tr class=\"rt\">", f);
        bgi_html_num(f, "td", "n t", "%.2f", w->t_c);
        bgi_html_num(f, "td", "n x", "%.6g", w->r_ohm);
        bgi_html_num(f, "td", "n slope", "%.6g", 1.0 / dtdx);
        bgi_html_num(f, "td", "n U", "%.2f", 1e3 * w->U_k);
        fputs("</tr>\n", f);
    }
    fputs("</table>\n", f);
}

static int calib_generate(const void *result, const bg_report_head *h, FILE *f, bg_error *err)
{
    const bg_calib_report *r = result;
    char rid[40];
    if (!r->t_fit_k || !r->resid_mk || (!r->rt && r->nrt))
        return bg_error_set(err, BG_EINVAL, "the calibration report is not computed "
                            "(bg_calib_report_compute)");
    bgi_report_begin(f, &bgi_report_calib, h, rid, sizeof rid);
    item_and_reference(f, r);
    conditions(f, r);
    model_and_uncertainty(f, r);
    int rc = readings(f, r, err);
    if (rc != BG_OK)
        return rc;
    bgi_html_closing_begin(f);
    rt_table(f, r);
    char note[400];
    snprintf(note, sizeof note, "Report %s, generated from fit %lld of run %lld by bandgap %s. "
             "Issued reports are stored in the calibration database and never change; a "
             "correction is issued as a new report that names this one.", rid, r->fit.id,
             r->run.id, r->fit.program_version);
    bgi_html_closing_end(f, note);
    bgi_html_end(f);
    return BG_OK;
}

const bg_report_kind bgi_report_calib = {
    "calibration", "BG-CAL", "Calibration report", "report-run", calib_generate,
};
