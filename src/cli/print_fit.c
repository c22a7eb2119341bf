/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Printers of calibration results (bg_calib_result, bg_calib_lot): the report as text or
** JSON, the lot's table, and their warnings and errors on stderr.  Shared by 'fit' and 'demo'. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "cli.h"

void print_fit_warnings(const bg_calib_result *r, bg_temp_unit unit)
{
    char b1[64], b2[64];
    for (size_t i = 0; i < r->fit.nnotes; i++)
        cli_warn("%s", r->fit.notes[i].msg);
    for (size_t i = 0; i < r->nchecks; i++) {
        const bg_calib_check *c = &r->checks[i];
        if (!c->ok)
            cli_warn("--at %s: %s", bg_units_format_temp(c->t_k, unit, 3, b1, sizeof b1),
                     c->why);
        else if (c->extrapolated)
            cli_warn("--at %s: outside the calibrated range: extrapolated, not calibrated",
                     bg_units_format_temp(c->t_k, unit, 3, b1, sizeof b1));
    }
    if (r->b_pair_extrapolated && isfinite(r->b_pair_k))
        cli_warn("B(%s / %s): the pair lies outside the calibrated range: B is extrapolated",
                 bg_units_format_temp(r->pair_t1_k, BG_UNIT_C, 2, b1, sizeof b1),
                 bg_units_format_temp(r->pair_t2_k, BG_UNIT_C, 2, b2, sizeof b2));
}

/* How the fitted model was picked: "as asked" or by the auto policy. */
static const char *fitted_how(const bg_calib_result *r)
{
    return r->auto_chosen ? "chosen by the auto policy" : "as asked";
}

/* The model the comparison recommends, or NULL when there was none. */
static const char *recommended(const bg_calib_result *r, char *buf, size_t size)
{
    if (!r->compared || r->cmp.chosen < 0)
        return NULL;
    return bg_model_name(&r->cmp.row[r->cmp.chosen].model, buf, size);
}

/* 1 for the NTC kinds, whose output is as it always was. */
static int is_ntc(const bg_fit *f)
{
    return (bg_model_flags(&f->model) & BG_MODEL_INV_POLY) != 0;
}

/* A reading of the fit's quantity as text: a resistance as ohms are written, else %.7g. */
static const char *reading_text(const bg_fit *f, double x, char *buf, size_t size)
{
    if (bg_model_quantity(&f->model) == BG_QTY_RESISTANCE)
        return bg_units_format_ohms(x, 7, buf, size);
    snprintf(buf, size, "%.7g", x);
    return buf;
}

/* ---- JSON ---- */

/* What other kinds add: the quantity read, the kind's parameters and the derived values. */
static void json_kind(json_out *j, const bg_fit *f)
{
    bg_derived d[8];
    size_t nd = bg_model_derived(&f->model, f->dof ? f->cov : NULL, f->t_min_k, f->t_max_k, d,
                                 8);
    bg_quantity q = bg_model_quantity(&f->model);
    json_str(j, "quantity", bg_quantity_column(q));
    json_str(j, "unit", bg_quantity_unit(q));
    json_int(j, "direction", bg_model_direction(&f->model));
    json_obj(j, "parameters");
    for (size_t i = 0; i < bg_model_nparam(&f->model); i++)
        json_num(j, bg_model_param_name(&f->model, i), bg_model_param(&f->model, i));
    json_obj_end(j);
    json_arr(j, "derived");
    for (size_t i = 0; i < nd && i < 8; i++) {
        json_obj(j, NULL);
        json_str(j, "name", d[i].name);
        json_num(j, "value", d[i].value);
        json_num(j, "u", d[i].u);
        json_str(j, "unit", d[i].unit);
        if (d[i].text[0])
            json_str(j, "text", d[i].text);
        json_str(j, "note", d[i].note);
        json_obj_end(j);
    }
    json_arr_end(j);
}

/* The fit itself: model, coefficients, covariance and statistics. */
static void json_fit(json_out *j, const bg_calib_result *r)
{
    const bg_fit *f = &r->fit;
    char name[16];

    json_str(j, "model", bg_model_name(&f->model, name, sizeof name));
    json_str(j, "requested_model", r->requested);
    json_str(j, "fitted", fitted_how(r));
    if (recommended(r, name, sizeof name))
        json_str(j, "recommended_model", name);
    else
        json_null(j, "recommended_model");
    json_arr(j, "coefficient_names");
    for (size_t i = 0; i < f->npar; i++)
        json_str(j, NULL, bg_model_coef_name(&f->model, i));
    json_arr_end(j);
    json_nums(j, "coefficients", f->model.coef, f->npar);
    json_arr(j, "u_coefficients");
    for (size_t i = 0; i < f->npar; i++)
        json_num(j, NULL, bg_fit_coef_u(f, i));
    json_arr_end(j);
    if (f->dof > 0) {
        json_arr(j, "covariance");
        for (size_t i = 0; i < f->npar; i++)
            json_nums(j, NULL, &f->cov[i * f->npar], f->npar);
        json_arr_end(j);
    } else
        json_null(j, "covariance");
    if (bg_model_flags(&f->model) & BG_MODEL_HAS_T0)
        json_num(j, "t0_k", f->model.t0_k);
    if (!is_ntc(f))
        json_kind(j, f);
    json_int(j, "n", (long long)f->n);
    json_int(j, "dof", (long long)f->dof);
    json_bool(j, "weighted", f->weighted);
    json_num(j, "chi2", f->chi2);
    json_num(j, "reduced_chi2", f->reduced_chi2);
    json_num(j, "p_value", bg_fit_p_value(f));
    json_num(j, "cov_scale", f->cov_scale);
    json_num(j, "rms_mk", f->rms_mk);
    json_num(j, "max_abs_mk", f->max_abs_mk);
    json_num(j, "aic", f->aic);
    json_num(j, "bic", f->bic);
    json_num(j, "rcond", f->rcond);
    json_int(j, "iterations", f->iterations);
    json_nums(j, "residuals_mk", f->resid_mk, f->n);
    json_nums(j, "studentized", f->student, f->n);
    json_nums(j, "u_k", f->u_k, f->n);
    json_arr(j, "lines");
    for (size_t i = 0; i < f->n; i++)
        json_int(j, NULL, (long long)f->line[i]);
    json_arr_end(j);
}

/* The range, the curve's uncertainty, the B pair and the check temperatures. */
static void json_curve(json_out *j, const bg_calib_result *r)
{
    const bg_fit *f = &r->fit;

    json_obj(j, "range");
    json_num(j, "t_min_k", f->t_min_k);
    json_num(j, "t_max_k", f->t_max_k);
    json_num(j, "t_min_c", bg_units_from_k(f->t_min_k, BG_UNIT_C));
    json_num(j, "t_max_c", bg_units_from_k(f->t_max_k, BG_UNIT_C));
    json_obj_end(j);
    json_obj(j, "coverage");
    json_str(j, "rule", r->cover.fixed ? "fixed k" : "Student t");
    json_num(j, "k", r->cover.k);
    json_num(j, "probability", r->cover.p);
    json_num(j, "nu_eff", r->cover.nu_eff);
    json_obj_end(j);
    json_num(j, "coverage_probability", r->coverage);
    json_num(j, "k_student", r->k_student);
    json_num(j, "U_max_k", r->U_max_k);
    json_arr(j, "uncertainty");
    for (size_t i = 0; i < r->ntable; i++) {
        json_obj(j, NULL);
        json_num(j, "t_k", r->table_t_k[i]);
        json_num(j, "u_k", r->table_u_k[i]);
        json_num(j, "U_k", r->table_U_k[i]);
        json_obj_end(j);
    }
    json_arr_end(j);
    json_obj(j, "b_pair");
    json_num(j, "t1_k", r->pair_t1_k);
    json_num(j, "t2_k", r->pair_t2_k);
    json_num(j, "b_k", r->b_pair_k);
    json_bool(j, "extrapolated", r->b_pair_extrapolated);
    json_obj_end(j);
    if (r->nchecks) {
        json_arr(j, "at");
        for (size_t i = 0; i < r->nchecks; i++) {
            json_obj(j, NULL);
            json_num(j, "t_k", r->checks[i].t_k);
            json_num(j, bg_quantity_column(bg_model_quantity(&f->model)), r->checks[i].r_ohm);
            json_num(j, "u_k", r->checks[i].u_k);
            json_num(j, "U_k", r->checks[i].U_k);
            json_bool(j, "extrapolated", r->checks[i].extrapolated);
            json_obj_end(j);
        }
        json_arr_end(j);
    }
}

static void json_comparison(json_out *j, const bg_calib_result *r)
{
    char name[16];

    if (!r->compared) {
        json_null(j, "comparison");
        return;
    }
    json_obj(j, "comparison");
    json_arr(j, "models");
    for (size_t i = 0; i < r->cmp.nrows; i++) {
        const bg_cmp_row *row = &r->cmp.row[i];
        json_obj(j, NULL);
        json_str(j, "model", bg_model_name(&row->model, name, sizeof name));
        json_int(j, "npar", (long long)row->npar);
        json_bool(j, "fitted", row->ok);
        if (row->ok) {
            json_num(j, "rms_mk", row->rms_mk);
            json_num(j, "max_abs_mk", row->max_abs_mk);
            json_num(j, "loo_rms_mk", row->loo_rms_mk);
            json_num(j, "aic", row->aic);
            json_num(j, "bic", row->bic);
        } else
            json_str(j, "why", row->why);
        json_obj_end(j);
    }
    json_arr_end(j);
    json_str(j, "recommended", bg_model_name(&r->cmp.row[r->cmp.chosen].model, name,
                                             sizeof name));
    json_str(j, "reason", r->cmp.reason);
    json_str(j, "loo_method", r->cmp.loo_one_step ? "one-step leverage" : "closed form");
    json_obj_end(j);
}

static void print_fit_json(const bg_calib_result *r)
{
    json_out j;

    json_begin(&j, stdout);
    json_obj(&j, NULL);
    json_str(&j, "source", r->source);
    if (r->run_id) {
        if (r->fit_id)
            json_int(&j, "fit_id", r->fit_id);
        else
            json_null(&j, "fit_id");
        json_int(&j, "run_id", r->run_id);
        json_str(&j, "probe", r->serial);
        json_bool(&j, "stored", r->stored);
        if (r->same_fit_id)
            json_int(&j, "identical_to_fit", r->same_fit_id);
        else
            json_null(&j, "identical_to_fit");
        if (r->run_fit_id)
            json_int(&j, "run_chosen_fit", r->run_fit_id);
        else
            json_null(&j, "run_chosen_fit");
    }
    json_fit(&j, r);
    json_curve(&j, r);
    json_comparison(&j, r);
    json_arr(&j, "warnings");
    for (size_t i = 0; i < r->fit.nnotes; i++)
        json_str(&j, NULL, r->fit.notes[i].msg);
    json_arr_end(&j);
    json_obj_end(&j);
    json_end(&j);
}

/* ---- text ---- */

static const char *t_heading(bg_temp_unit un)
{
    return bg_units_symbol(un, 1)[0] == 'K' ? "T/K" : un == BG_UNIT_F ? "T/degF" : "T/degC";
}

static void resid_line(const bg_calib_result *r, size_t i, bg_temp_unit un)
{
    const bg_point *p = &r->pts[i];
    char b1[64];
    printf("  %6zu  %12.4f  %12s  %11.4f  %8.2f\n", p->line, bg_units_from_k(p->t_k, un),
           reading_text(&r->fit, p->r_ohm, b1, sizeof b1), r->fit.resid_mk[i],
           r->fit.student[i]);
}

/* Above CLI_RESID_ALL_MAX readings: the CLI_RESID_TOP largest |residuals| (largest first),
** then how many studentized residuals fall in each band, and how to see them all. */
static void text_resid_summary(const bg_calib_result *r, bg_temp_unit un)
{
    const bg_fit *f = &r->fit;
    size_t top[CLI_RESID_TOP], ntop = 0, band[4] = { 0, 0, 0, 0 };
    for (size_t i = 0; i < f->n; i++) {
        double a = fabs(f->resid_mk[i]), s = fabs(f->student[i]);
        size_t k = ntop < CLI_RESID_TOP ? ntop++ : CLI_RESID_TOP;
        while (k > 0 && fabs(f->resid_mk[top[k - 1]]) < a) { /* ties: the earlier line first */
            if (k < CLI_RESID_TOP)
                top[k] = top[k - 1];
            k--;
        }
        if (k < CLI_RESID_TOP)
            top[k] = i;
        band[!(s < 1.0) + !(s < 2.0) + !(s < 3.0)]++; /* NaN counts as 3 and above */
    }
    for (size_t k = 0; k < ntop; k++)
        resid_line(r, top[k], un);
    printf("  (%zu readings: the %zu largest |residuals| are shown, largest first; every "
           "one with --residuals all or --json)\n", f->n, ntop);
    printf("  |student| below 1: %zu, 1 to 2: %zu, 2 to 3: %zu, 3 and above: %zu\n", band[0],
           band[1], band[2], band[3]);
}

/* The quantities derived from the coefficients (other kinds than the NTC ones). */
static void text_derived(const bg_fit *f)
{
    bg_derived d[8];
    size_t nd = bg_model_derived(&f->model, f->dof ? f->cov : NULL, f->t_min_k, f->t_max_k, d,
                                 8);
    for (size_t i = 0; i < nd && i < 8; i++) {
        if (d[i].text[0])
            printf("  %s: %s\n", d[i].name, d[i].text);
        else if (isfinite(d[i].u))
            printf("  %s = %.7g %s, u = %.2g %s\n", d[i].name, d[i].value, d[i].unit, d[i].u,
                   d[i].unit);
        else
            printf("  %s = %.7g %s\n", d[i].name, d[i].value, d[i].unit);
        if (d[i].note[0])
            printf("      (%s)\n", d[i].note);
    }
}

/* The readings, the model with its coefficients, the weights and the residuals. */
static void text_fit(const bg_calib_result *r, bg_temp_unit un, int all_residuals)
{
    const bg_fit *f = &r->fit;
    char name[16], b1[64], b2[64];

    printf("readings: %s, %zu points, %s .. %s\n", r->source, f->n,
           bg_units_format_temp(f->t_min_k, un, 3, b1, sizeof b1),
           bg_units_format_temp(f->t_max_k, un, 3, b2, sizeof b2));
    printf("fitted: %s (%s)   %s,  %sT in K\n",
           bg_model_name(&f->model, name, sizeof name), fitted_how(r),
           bg_model_formula(&f->model), is_ntc(f) ? "L = ln(R / 1 ohm), " : "");
    if (!is_ntc(f))
        printf("  reads: %s in %s (column '%s')\n",
               bg_quantity_symbol(bg_model_quantity(&f->model)),
               bg_quantity_unit(bg_model_quantity(&f->model)),
               bg_quantity_column(bg_model_quantity(&f->model)));
    if (bg_model_flags(&f->model) & BG_MODEL_HAS_T0)
        printf("  T0 = %s\n", bg_units_format_temp(f->model.t0_k, un, 3, b1, sizeof b1));
    for (size_t i = 0; i < bg_model_nparam(&f->model); i++)
        printf("  %s = %.10g (held)\n", bg_model_param_name(&f->model, i),
               bg_model_param(&f->model, i));
    for (size_t i = 0; i < f->npar; i++) {
        double u = bg_fit_coef_u(f, i);
        if (isfinite(u))
            printf("  %-5s = %18.10e   u = %.2e\n", bg_model_coef_name(&f->model, i),
                   f->model.coef[i], u);
        else
            printf("  %-5s = %18.10e   u = n/a\n", bg_model_coef_name(&f->model, i),
                   f->model.coef[i]);
    }
    text_derived(f);
    if (f->weighted)
        printf("weights: stated uncertainties; chi2 = %.4g for %zu dof (reduced %.4g, p = %.3g)"
               "%s\n", f->chi2, f->dof, f->reduced_chi2, bg_fit_p_value(f),
               f->cov_scale > 1.0 ? "; covariance scaled by reduced chi2" : "");
    else
        printf("weights: equal (no uncertainties given); covariance from the residual "
               "scatter, %zu dof\n", f->dof);
    printf("\nresiduals (measured - fitted):\n");
    char xh[32];
    snprintf(xh, sizeof xh, "%s/%s", bg_quantity_symbol(bg_model_quantity(&f->model)),
             bg_quantity_unit(bg_model_quantity(&f->model)));
    printf("  %6s  %12s  %12s  %11s  %8s\n", "line", t_heading(un), xh, "resid/mK",
           "student");
    if (f->n <= CLI_RESID_ALL_MAX || all_residuals) {
        for (size_t i = 0; i < f->n; i++)
            resid_line(r, i, un);
    } else {
        text_resid_summary(r, un);
    }
    printf("  RMS %.4f mK, max |residual| %.4f mK\n", f->rms_mk, f->max_abs_mk);
}

/* The B pair, the uncertainty table and the check temperatures. */
static void text_curve(const bg_calib_result *r, bg_temp_unit un)
{
    const bg_fit *f = &r->fit;
    char b1[64], b2[64];

    if (isfinite(r->b_pair_k)) {
        bg_units_format_temp(r->pair_t1_k, BG_UNIT_C, 2, b1, sizeof b1);
        bg_units_format_temp(r->pair_t2_k, BG_UNIT_C, 2, b2, sizeof b2);
        printf("B(%s / %s) = %.2f K%s\n", b1, b2, r->b_pair_k, r->b_pair_extrapolated ?
               "   EXTRAPOLATED: the pair lies outside the calibrated range" : "");
    }
    if (f->dof > 0) {
        printf("\ncurve uncertainty, U = k u with k = %.2f%s (coverage probability %s%.2f %%):\n",
               r->cover.k, r->cover.fixed ? " as asked" : "", r->cover.fixed ? "about " : "",
               100.0 * r->cover.p);
        printf("  %s Student's t for %zu effective degrees of freedom (JCGM 100:2008, G.3)\n",
               r->cover.fixed ? "the probability from" : "k from", f->dof);
        printf("  %12s  %10s  %10s\n", t_heading(un), "u/mK", "U/mK");
        for (size_t i = 0; i < r->ntable; i++)
            printf("  %12.3f  %10.4f  %10.4f\n", bg_units_from_k(r->table_t_k[i], un),
                   1e3 * r->table_u_k[i], 1e3 * r->table_U_k[i]);
    } else
        printf("\ncurve uncertainty: n/a (no degrees of freedom left)\n");
    for (size_t i = 0; i < r->nchecks; i++) {
        const bg_calib_check *c = &r->checks[i];
        char b3[32] = "n/a";
        if (!c->ok)
            continue;
        if (isfinite(c->U_k))
            snprintf(b3, sizeof b3, "%.4f mK", 1e3 * c->U_k);
        bg_quantity q = bg_model_quantity(&f->model);
        if (c->extrapolated)
            printf("at %s: %s = %s %s, U: none   EXTRAPOLATED: outside the calibrated range\n",
                   bg_units_format_temp(c->t_k, un, 3, b1, sizeof b1), bg_quantity_symbol(q),
                   reading_text(f, c->r_ohm, b2, sizeof b2), bg_quantity_unit(q));
        else
            printf("at %s: %s = %s %s, U = %s\n",
                   bg_units_format_temp(c->t_k, un, 3, b1, sizeof b1), bg_quantity_symbol(q),
                   reading_text(f, c->r_ohm, b2, sizeof b2), bg_quantity_unit(q), b3);
    }
}

static void text_comparison(const bg_calib_result *r)
{
    char name[16], fitted[16];

    printf("\nmodel comparison:\n");
    if (!r->compared) {
        printf("  not available: %s\n", r->cmp_why);
        return;
    }
    printf("  %-7s %4s  %10s  %10s  %10s  %10s  %10s\n", "model", "npar", "RMS/mK", "max/mK",
           "LOO/mK", "AIC", "BIC");
    bg_model_name(&r->fit.model, fitted, sizeof fitted);
    for (size_t i = 0; i < r->cmp.nrows; i++) {
        const bg_cmp_row *row = &r->cmp.row[i];
        bg_model_name(&row->model, name, sizeof name);
        if (row->ok)
            printf("  %-7s %4zu  %10.4f  %10.4f  %10.4f  %10.2f  %10.2f%s%s\n", name,
                   row->npar, row->rms_mk, row->max_abs_mk, row->loo_rms_mk, row->aic, row->bic,
                   (int)i == r->cmp.chosen ? "  <- recommended" : "",
                   strcmp(name, fitted) == 0 ? "  <- fitted" : "");
        else
            printf("  %-7s %4zu  not compared: %s\n", name, row->npar, row->why);
    }
    printf("  leave-one-out: %s\n", r->cmp.loo_one_step
           ? "one-step (leverage) form r/(1 - h) at the refined fit, not refitted"
           : "closed form e/(1 - h) of the linear fit (exact)");
    printf("  recommended: %s: %s\n", recommended(r, name, sizeof name), r->cmp.reason);
    if (strcmp(name, fitted) != 0)
        printf("  fitted: %s (as asked), not the recommended model\n", fitted);
}

static void print_fit_text(const bg_calib_result *r, bg_temp_unit un, int all_residuals)
{
    char b1[64], b2[64];

    if (r->run_id)
        printf("probe %s, %s (%s)\n", r->serial, r->source, r->started_at);
    text_fit(r, un, all_residuals);
    text_curve(r, un);
    text_comparison(r);
    printf("\nValid only inside the calibrated range (%s .. %s) and within the stated\n"
           "uncertainty.  Not an accredited certificate; for medical, food-safety or\n"
           "process-safety use follow local regulations and accredited practice.\n",
           bg_units_format_temp(r->fit.t_min_k, un, 3, b1, sizeof b1),
           bg_units_format_temp(r->fit.t_max_k, un, 3, b2, sizeof b2));
    if (r->stored)
        printf("stored as fit %lld\n", r->fit_id);
    else if (r->fit_id)
        printf("not stored: the run already has this fit, identical (same readings and model, "
               "the same numbers), as fit %lld%s\n", r->fit_id, r->run_fit_id == r->fit_id ? ""
               : " (not its newest: --store-again makes it the run's chosen fit again)");
    else if (r->run_id && r->same_fit_id)
        printf("not stored (a preview, --dry-run); the run has this fit already, identical, as "
               "fit %lld\n",
               r->same_fit_id);
    else if (r->run_id)
        printf("not stored (a preview, --dry-run)\n");
}

void print_fit(const bg_calib_result *r, bg_temp_unit unit, int json, int all_residuals)
{
    print_fit_warnings(r, unit);
    if (json)
        print_fit_json(r);
    else
        print_fit_text(r, unit, all_residuals);
}

/* ---- a lot ---- */

/* Each probe's warnings and failures, in the lot's order, on stderr (the first 20 failures). */
static void lot_messages(const bg_calib_lot *lot)
{
    size_t nfail = 0;
    for (size_t i = 0; i < lot->nrows; i++) {
        const bg_calib_lot_row *row = &lot->rows[i];
        if (row->status == BG_CALIB_FAILED) {
            if (++nfail <= 20)
                cli_error("probe '%s': %s", row->serial, row->why);
            else if (nfail == 21)
                cli_error("... (further failures not shown)");
        }
        for (size_t k = 0; k < row->nnotes; k++)
            cli_warn("probe '%s': %s", row->serial, lot->notes[row->note0 + k].msg);
    }
}

static void lot_json(const bg_calib_lot *lot)
{
    json_out j;
    char name[16];

    json_begin(&j, stdout);
    json_obj(&j, NULL);
    json_str(&j, "lot", lot->lot.code);
    json_arr(&j, "probes");
    for (size_t i = 0; i < lot->nrows; i++) {
        const bg_calib_lot_row *row = &lot->rows[i];
        json_obj(&j, NULL);
        json_str(&j, "probe", row->serial);
        if (row->status != BG_CALIB_FITTED) {
            json_str(&j, "status", "no runs");
            json_obj_end(&j);
            continue;
        }
        json_str(&j, "status", "fitted");
        json_int(&j, "run_id", row->run_id);
        json_int(&j, "fit_id", row->fit_id);
        json_bool(&j, "stored", lot->stored && !row->identical);
        if (row->identical)
            json_int(&j, "identical_to_fit", row->fit_id);
        else
            json_null(&j, "identical_to_fit");
        json_str(&j, "model", bg_model_name(&row->model, name, sizeof name));
        json_nums(&j, "coefficients", row->model.coef, row->npar);
        json_int(&j, "n", (long long)row->n);
        json_num(&j, "rms_mk", row->rms_mk);
        json_num(&j, "max_abs_mk", row->max_abs_mk);
        json_num(&j, "max_U_mk", 1e3 * row->U_max_k);
        json_num(&j, "k", row->cover.k);
        json_num(&j, "coverage_probability", row->cover.p);
        json_num(&j, "r25_ohm", row->r25_ohm);
        json_num(&j, "b_k", row->b_k);
        json_bool(&j, "b_extrapolated", row->b_extrapolated);
        json_obj_end(&j);
    }
    json_arr_end(&j);
    json_int(&j, "fitted", (long long)lot->nfitted);
    json_int(&j, "identical_not_stored", (long long)lot->nidentical);
    json_int(&j, "without_runs", (long long)lot->nnoruns);
    json_obj_end(&j);
    json_end(&j);
}

static void lot_text(const bg_calib_lot *lot)
{
    char name[16], rb[32], b1[64], b2[64];

    int extra = 0, any_b = 0;
    printf("%-20s %6s %6s %-7s %4s %10s %10s %8s %5s %12s %10s\n", "probe", "run", "fit",
           "model", "n", "RMS/mK", "max/mK", "U/mK", "k", "R25/ohm", "B/K");
    for (size_t i = 0; i < lot->nrows; i++) {
        const bg_calib_lot_row *row = &lot->rows[i];
        if (row->status != BG_CALIB_FITTED) {
            printf("%-20s   no calibration runs: not fitted\n", row->serial);
            continue;
        }
        char fid[32];
        snprintf(fid, sizeof fid, "%lld%s", row->fit_id, row->identical ? "=" : "");
        char bb[32] = "-"; /* R25 and B: an NTC's only ("-" for the other kinds) */
        if (isfinite(row->b_k))
            snprintf(bb, sizeof bb, "%.2f", row->b_k);
        printf("%-20s %6lld %6s %-7s %4zu %10.4f %10.4f %8.4f %5.2f %12s %10s%s\n",
               row->serial, row->run_id, fid,
               bg_model_name(&row->model, name, sizeof name), row->n, row->rms_mk,
               row->max_abs_mk, 1e3 * row->U_max_k, row->cover.k,
               isfinite(row->r25_ohm) ? bg_units_format_ohms(row->r25_ohm, 7, rb, sizeof rb)
               : "-", bb,
               row->b_extrapolated ? " *" : "");
        extra |= row->b_extrapolated;
        any_b |= isfinite(row->b_k);
    }
    if (extra)
        printf("* B extrapolated: the lot's pair lies outside the probe's calibrated range\n");
    if (lot->nidentical)
        printf("= %zu of the fits are identical to one the run already had (same readings, "
               "model and numbers): nothing new was stored for them\n", lot->nidentical);
    if (lot->rule.k_fixed > 0.0)
        printf("U = k u at the largest u, k = %.2f as asked\n", lot->rule.k_fixed);
    else
        printf("U = k u at the largest u, k from Student's t for each fit's degrees of freedom "
               "(coverage probability %.2f %%)\n", 100.0 * lot->rule.p);
    printf("lot %s: %zu probes fitted, %zu without runs", lot->lot.code, lot->nfitted,
           lot->nnoruns);
    if (any_b)
        printf("; B for %s / %s",
               bg_units_format_temp(lot->lot.pair_t1_k, BG_UNIT_C, 2, b1, sizeof b1),
               bg_units_format_temp(lot->lot.pair_t2_k, BG_UNIT_C, 2, b2, sizeof b2));
    else if (lot->nfitted)
        printf(" (B belongs to an NTC: not computed for these fits' kinds)");
    printf("\n");
}

int print_fit_lot(const bg_calib_lot *lot, int rc, const bg_error *err, int json)
{
    lot_messages(lot);
    if (rc != BG_OK)
        return cli_fail(NULL, err);
    if (json)
        lot_json(lot);
    else
        lot_text(lot);
    return BG_OK;
}

/* cli_progress for bg_calibrate_lot. */
int print_fit_progress(size_t done, size_t total, void *ctx)
{
    (void)ctx;
    cli_progress("fitting", done, total);
    return 0;
}

/* ---- a fit in ranges ---- */

static void split_json(const bg_fit_ranges *s)
{
    json_out j;
    char name[16];
    json_begin(&j, stdout);
    json_obj(&j, NULL);
    json_num(&j, "bound_k", s->bound_k);
    json_bool(&j, "all_hold", s->all_hold);
    json_arr(&j, "ranges");
    for (size_t i = 0; i < s->n; i++) {
        const bg_fit *f = &s->range[i].fit;
        json_obj(&j, NULL);
        json_str(&j, "model", bg_model_name(&f->model, name, sizeof name));
        json_num(&j, "x_lo", s->range[i].x_lo);
        json_num(&j, "x_hi", s->range[i].x_hi);
        json_num(&j, "t_min_k", f->t_min_k);
        json_num(&j, "t_max_k", f->t_max_k);
        json_bool(&j, "holds", s->range[i].holds);
        json_nums(&j, "coefficients", f->model.coef, f->npar);
        json_arr(&j, "u_coefficients");
        for (size_t k = 0; k < f->npar; k++)
            json_num(&j, NULL, bg_fit_coef_u(f, k));
        json_arr_end(&j);
        json_kind(&j, f);
        json_int(&j, "n", (long long)f->n);
        json_num(&j, "rms_mk", f->rms_mk);
        json_num(&j, "max_abs_mk", f->max_abs_mk);
        json_obj_end(&j);
    }
    json_arr_end(&j);
    json_obj_end(&j);
    json_end(&j);
}

void print_fit_split(const bg_fit_ranges *s, bg_temp_unit unit, int json)
{
    char name[16], b1[64], b2[64];
    if (json) {
        split_json(s);
        return;
    }
    printf("%zu range%s, each to hold |residual| <= %.4g mK: %s\n", s->n, s->n == 1 ? "" : "s",
           1e3 * s->bound_k, s->all_hold ? "all hold it" : "NOT ALL HOLD IT (see below)");
    for (size_t i = 0; i < s->n; i++) {
        const bg_fit *f = &s->range[i].fit;
        bg_quantity q = bg_model_quantity(&f->model);
        printf("\nrange %zu: %s %.7g .. %.7g %s (%s .. %s), %zu readings, model %s\n", i + 1,
               bg_quantity_symbol(q), s->range[i].x_lo, s->range[i].x_hi, bg_quantity_unit(q),
               bg_units_format_temp(f->t_min_k, unit, 3, b1, sizeof b1),
               bg_units_format_temp(f->t_max_k, unit, 3, b2, sizeof b2), f->n,
               bg_model_name(&f->model, name, sizeof name));
        for (size_t k = 0; k < bg_model_nparam(&f->model); k++)
            printf("  %s = %.10g (held)\n", bg_model_param_name(&f->model, k),
                   bg_model_param(&f->model, k));
        for (size_t k = 0; k < f->npar; k++)
            printf("  %-5s = %18.10e   u = %.2e\n", bg_model_coef_name(&f->model, k),
                   f->model.coef[k], bg_fit_coef_u(f, k));
        printf("  RMS %.4f mK, max |residual| %.4f mK%s\n", f->rms_mk, f->max_abs_mk,
               s->range[i].holds ? "" : "   EXCEEDS THE BOUND: too few readings to split "
               "further");
        for (size_t k = 0; k < f->nnotes; k++)
            printf("  note: %s\n", f->notes[k].msg);
    }
    printf("\nValid only inside each range; neighbouring ranges share their end reading.\n");
}
