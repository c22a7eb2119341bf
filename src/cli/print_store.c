/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Printers of stored records (lots, probes, references, runs, readings, fits) as text lines
** or JSON, shared by lot, probe, ref, list, show and export. */
#include <math.h>
#include <stdio.h>

#include "cli.h"

void cli_json_reading(json_out *j, const bg_reading_row *g)
{
    json_obj(j, NULL);
    json_int(j, "id", g->id);
    json_int(j, "line", (long long)g->line);
    json_num(j, "t_raw", g->t_raw);
    json_str(j, "t_raw_unit", g->t_raw_unit);
    json_num(j, "t_k", g->t_k);
    /* the reading under its readings file's column: ohms, volts, reported_c or code */
    const char *col = bg_quantity_column((bg_quantity)g->quantity);
    char ucol[32];
    snprintf(ucol, sizeof ucol, "u_%s", col);
    json_num(j, col, g->r_ohm);
    json_num(j, "u_temp_k", g->u_t_k);
    json_num(j, ucol, g->u_r_ohm);
    json_str(j, "time", g->time[0] ? g->time : NULL);
    json_str(j, "note", g->note[0] ? g->note : NULL);
    if (g->excluded) {
        json_obj(j, "excluded");
        json_str(j, "reason", g->excl_reason);
        json_str(j, "by", g->excl_by);
        json_str(j, "at", g->excl_at);
        json_obj_end(j);
    } else
        json_null(j, "excluded");
    json_obj_end(j);
}

void cli_json_run_fields(json_out *j, const bg_run *r)
{
    json_int(j, "run", r->id);
    json_str(j, "probe", r->serial);
    json_str(j, "reference", r->ref_ident[0] ? r->ref_ident : NULL);
    if (r->ref_version) /* corrected with a later version of the reference (0: its row) */
        json_int(j, "ref_version", r->ref_version);
    json_str(j, "operator", r->operator_name[0] ? r->operator_name : NULL);
    json_str(j, "medium", r->medium[0] ? r->medium : NULL);
    json_str(j, "ambient", r->ambient[0] ? r->ambient : NULL);
    json_str(j, "excitation", r->excitation[0] ? r->excitation : NULL); /* schema < 4 only */
    json_str(j, "quantity", bg_store_quantity_name(r->quantity));
    json_str(j, "quantity_unit", bg_quantity_unit((bg_quantity)r->quantity));
    if (r->measuring_current_a > 0.0)
        json_num(j, "measuring_current_a", r->measuring_current_a);
    else
        json_null(j, "measuring_current_a");
    if (r->measuring_voltage_v > 0.0)
        json_num(j, "measuring_voltage_v", r->measuring_voltage_v);
    else
        json_null(j, "measuring_voltage_v");
    json_str(j, "started_at", r->started_at);
    json_str(j, "source", r->source);
    json_str(j, "note", r->note[0] ? r->note : NULL);
    json_str(j, "imported_at", r->imported_at);
    json_int(j, "readings", r->nreadings);
    json_int(j, "excluded", r->nexcluded);
    json_int(j, "fits", r->nfits);
    json_str(j, "readings_sha256", r->readings_sha256[0] ? r->readings_sha256 : NULL);
    if (r->repeats_run)
        json_int(j, "repeats_run", r->repeats_run);
    else
        json_null(j, "repeats_run");
    json_str(j, "ref_overdue", r->ref_overdue[0] ? r->ref_overdue : NULL);
}

void cli_json_fit(json_out *j, const bg_fit_row *f, unsigned with)
{
    char name[16];
    json_obj(j, NULL);
    json_int(j, "fit", f->id);
    json_int(j, "run", f->run_id);
    if (with & CLI_FIT_PROBE)
        json_str(j, "probe", f->serial);
    json_str(j, "model", bg_model_name(&f->model, name, sizeof name));
    if (bg_model_flags(&f->model) & BG_MODEL_HAS_T0)
        json_num(j, "t0_k", f->model.t0_k);
    json_nums(j, "coefficients", f->model.coef, f->npar);
    if ((with & CLI_FIT_COV) && f->has_cov) {
        json_arr(j, "covariance");
        for (size_t i = 0; i < f->npar; i++)
            json_nums(j, NULL, &f->cov[i * f->npar], f->npar);
        json_arr_end(j);
    } else if (with & CLI_FIT_COV)
        json_null(j, "covariance");
    json_int(j, "n", (long long)f->n);
    json_int(j, "dof", (long long)f->dof);
    json_num(j, "chi2", f->chi2);
    json_num(j, "rms_mk", f->rms_mk);
    json_num(j, "max_abs_mk", f->max_abs_mk);
    json_num(j, "t_min_k", f->t_min_k);
    json_num(j, "t_max_k", f->t_max_k);
    if (with & CLI_FIT_VERSION)
        json_str(j, "program_version", f->program_version);
    json_str(j, "created_at", f->created_at);
    json_obj_end(j);
}

void cli_json_fit_brief(json_out *j, const bg_fit_row *f)
{
    cli_json_fit(j, f, CLI_FIT_PROBE | CLI_FIT_VERSION);
}

void cli_print_lot(json_out *j, const char *key, const bg_lot *l)
{
    char b1[64], b2[64], r[64];
    if (j) {
        json_obj(j, key);
        json_int(j, "id", l->id);
        json_str(j, "code", l->code);
        json_str(j, "part", l->part);
        json_num(j, "r25_ohm", l->r25_ohm);
        json_num(j, "beta_k", l->beta_k);
        json_num(j, "pair_t1_k", l->pair_t1_k);
        json_num(j, "pair_t2_k", l->pair_t2_k);
        json_num(j, "tol_r25", l->tol_r25);
        json_num(j, "tol_beta", l->tol_beta);
        json_str(j, "note", l->note[0] ? l->note : NULL);
        json_str(j, "created_at", l->created_at);
        json_int(j, "probes", l->nprobes);
        json_str(j, "sensor", bg_part_sensor_name(l->sensor));
        json_obj_end(j);
        return;
    }
    if (l->sensor != BG_PART_NTC) { /* schema 13: its nominal values are its part's */
        printf("%-16s part %s, %s lot (nominal values and tolerances: the part's), %lld "
               "probes\n", l->code, l->part, bg_part_sensor_name(l->sensor), l->nprobes);
        return;
    }
    bg_units_format_temp(l->pair_t1_k, BG_UNIT_C, 2, b1, sizeof b1);
    bg_units_format_temp(l->pair_t2_k, BG_UNIT_C, 2, b2, sizeof b2);
    printf("%-16s part %s, R25 %s ohm +-%.3g %%, B(%s / %s) %.2f K +-%.3g %%, %lld probes\n",
           l->code, l->part, bg_units_format_ohms(l->r25_ohm, 6, r, sizeof r),
           100.0 * l->tol_r25, b1, b2, l->beta_k, 100.0 * l->tol_beta, l->nprobes);
}

int cli_print_lot_probe(const bg_probe *p, void *ctx)
{
    json_out *j = ctx;
    if (j) {
        json_obj(j, NULL);
        json_str(j, "serial", p->serial);
        json_int(j, "runs", p->nruns);
        json_int(j, "fits", p->nfits);
        json_obj_end(j);
    } else
        printf("  probe %-20s %lld runs, %lld fits\n", p->serial, p->nruns, p->nfits);
    return 0;
}

int cli_print_probe(const bg_probe *p, void *ctx)
{
    json_out *j = ctx;
    if (j) {
        json_obj(j, NULL);
        json_int(j, "id", p->id);
        json_str(j, "serial", p->serial);
        json_str(j, "lot", p->lot_code);
        json_int(j, "runs", p->nruns);
        json_int(j, "fits", p->nfits);
        json_str(j, "note", p->note[0] ? p->note : NULL);
        json_str(j, "created_at", p->created_at);
        json_obj_end(j);
    } else
        printf("%-20s lot %-14s %lld runs, %lld fits\n", p->serial, p->lot_code, p->nruns,
               p->nfits);
    return 0;
}

int cli_print_probe_run(const bg_run *r, void *ctx)
{
    json_out *j = ctx;
    if (j) {
        json_obj(j, NULL);
        cli_json_run_fields(j, r);
        json_obj_end(j);
    } else
        printf("  run %-6lld %s  %lld readings (%lld excluded), %lld fits\n", r->id,
               r->started_at, r->nreadings, r->nexcluded, r->nfits);
    return 0;
}

int cli_print_probe_fit(const bg_fit_row *f, void *ctx)
{
    json_out *j = ctx;
    char name[16];
    bg_model_name(&f->model, name, sizeof name);
    if (j)
        cli_json_fit_brief(j, f);
    else
        printf("  fit %-6lld run %-6lld %-7s RMS %.4f mK, max %.4f mK, %s\n", f->id, f->run_id,
               name, f->rms_mk, f->max_abs_mk, f->created_at);
    return 0;
}

int cli_print_run_line(const bg_run *r, void *ctx)
{
    json_out *j = ctx;
    if (j) {
        json_obj(j, NULL);
        cli_json_run_fields(j, r);
        json_obj_end(j);
    } else
        printf("%6lld  %-20s %-20s %5lld readings %3lld excluded %3lld fits  ref %s%s\n", r->id,
               r->serial, r->started_at, r->nreadings, r->nexcluded, r->nfits,
               cli_or_dash(r->ref_ident), r->ref_overdue[0] ? " (used past its due date: "
               "override recorded)" : "");
    return 0;
}

int cli_print_fit_line(const bg_fit_row *f, void *ctx)
{
    json_out *j = ctx;
    char name[16];
    bg_model_name(&f->model, name, sizeof name);
    if (j)
        cli_json_fit_brief(j, f);
    else
        printf("%6lld  run %-6lld %-20s %-7s n %-3zu RMS %9.4f mK  max %9.4f mK  %s\n", f->id,
               f->run_id, f->serial, name, f->n, f->rms_mk, f->max_abs_mk, f->created_at);
    return 0;
}

void cli_ref_values_text(const bg_ref *r)
{
    printf("certificate %s, due %s, correction %s", r->certificate, cli_or_dash(r->due_date),
           bg_ref_kind_name(r->kind));
    if (r->kind == BG_REF_LINEAR) {
        printf(" (y1 %.6g K, y2 %.6g, t0 %.4g degC)", r->lin_c0_k, r->lin_c1,
               r->lin_t0_k - BG_ZERO_C_K);
    } else if (r->kind == BG_REF_CVD) {
        printf(" (R0 %.6g ohm, A %.6g, B %.6g, C %.6g)", r->cvd_r0_ohm, r->cvd_a, r->cvd_b,
               r->cvd_c);
    } else if (r->kind == BG_REF_ITS90) {
        const bg_its90_dev *d = &r->its90;
        double pts[4];
        size_t n = bg_its90_range_points(d->range, pts);
        const double v[4] = { d->a, d->b, d->c, d->d };
        printf(" (sub-range %s, R(273.16 K) %.9g ohm", bg_its90_range_name(d->range, NULL, NULL),
               r->its90_rtpw_ohm);
        for (size_t i = 0; i < n; i++)
            printf(", %c %.9g", "abcd"[i], v[i]);
        if (d->range == BG_ITS90_TPW_AG)
            printf(", W(Al) %.9g", d->w_al);
        printf(")");
    }
}

void cli_ref_values_json(json_out *j, const bg_ref *r)
{
    json_str(j, "certificate", r->certificate);
    json_str(j, "due_date", r->due_date[0] ? r->due_date : NULL);
    json_str(j, "correction", bg_ref_kind_name(r->kind));
    if (r->kind == BG_REF_LINEAR) {
        json_num(j, "y1_k", r->lin_c0_k);
        json_num(j, "y2", r->lin_c1);
        json_num(j, "t0_k", r->lin_t0_k);
    } else if (r->kind == BG_REF_CVD) {
        json_num(j, "r0_ohm", r->cvd_r0_ohm);
        json_num(j, "a", r->cvd_a);
        json_num(j, "b", r->cvd_b);
        json_num(j, "c", r->cvd_c);
    } else if (r->kind == BG_REF_ITS90) {
        const bg_its90_dev *d = &r->its90;
        double pts[4];
        size_t n = bg_its90_range_points(d->range, pts);
        const double v[4] = { d->a, d->b, d->c, d->d };
        static const char *const names[4] = { "a", "b", "c", "d" };
        json_str(j, "its90_range", bg_its90_range_name(d->range, NULL, NULL));
        json_num(j, "rtpw_ohm", r->its90_rtpw_ohm);
        for (size_t i = 0; i < n; i++)
            json_num(j, names[i], v[i]);
        if (d->range == BG_ITS90_TPW_AG)
            json_num(j, "w_al", d->w_al);
    }
}

int cli_print_ref(const bg_ref *r, void *ctx)
{
    json_out *j = ctx;
    if (j) {
        json_obj(j, NULL);
        json_int(j, "id", r->id);
        json_str(j, "ident", r->ident);
        cli_ref_values_json(j, r);
        json_obj_end(j);
        return 0;
    }
    printf("%-16s ", r->ident);
    cli_ref_values_text(r);
    printf("\n");
    return 0;
}

int cli_print_reading(const bg_reading_row *g, void *ctx)
{
    json_out *j = ctx;
    if (j) {
        cli_json_reading(j, g);
    } else {
        char rb[32];
        if (g->quantity != BG_QTY_RESISTANCE) /* V, degC or LSB: the number as stored */
            snprintf(rb, sizeof rb, "%.8g", g->r_ohm);
        printf("  %8lld %6zu %14.6f %-3s %12.4f %14s %9.4g %9.4g%s%s\n", g->id, g->line,
               g->t_raw, g->t_raw_unit, g->t_k - BG_ZERO_C_K,
               g->quantity != BG_QTY_RESISTANCE ? rb
               : bg_units_format_ohms(g->r_ohm, 8, rb, sizeof rb), g->u_t_k, g->u_r_ohm,
               g->excluded ? "  EXCLUDED: " : "", g->excluded ? g->excl_reason : "");
    }
    return 0;
}

void cli_print_run_head(const bg_run *r)
{
    printf("run %lld of probe %s, started %s, imported %s from %s\n", r->id, r->serial,
           r->started_at, r->imported_at, r->source);
    char ms[BG_TEXT + 32];
    char rv[48] = "";
    if (r->ref_version)
        snprintf(rv, sizeof rv, " (version %lld)", r->ref_version);
    printf("  reference %s%s, operator %s, medium %s, ambient %s, %s\n",
           cli_or_dash(r->ref_ident), rv, cli_or_dash(r->operator_name),
           cli_or_dash(r->medium), cli_or_dash(r->ambient),
           bg_store_run_measuring(r, ms, sizeof ms));
    if (r->note[0])
        printf("  note: %s\n", r->note);
    if (r->ref_overdue[0])
        printf("  REFERENCE USED PAST ITS CALIBRATION DUE DATE (%s); override: %s\n",
               r->ref_due_date, r->ref_overdue);
    if (r->repeats_run)
        printf("  the same readings as run %lld, imported again as a new run on purpose\n",
               r->repeats_run);
    printf("  readings SHA-256 %s\n", r->readings_sha256[0] ? r->readings_sha256
           : "- (imported before schema 3)");
    printf("  %lld readings, %lld excluded, %lld fits\n", r->nreadings, r->nexcluded, r->nfits);
    bg_quantity q = (bg_quantity)r->quantity;
    char xh[32], uh[32];
    printf("  measured: %s in %s (column '%s')\n", bg_store_quantity_name(r->quantity),
           bg_quantity_unit(q), bg_quantity_column(q));
    snprintf(xh, sizeof xh, "%s/%s", bg_quantity_symbol(q), bg_quantity_unit(q));
    snprintf(uh, sizeof uh, "u(%s)/%s", bg_quantity_symbol(q), bg_quantity_unit(q));
    printf("  %8s %6s %18s %12s %14s %9s %9s\n", "reading", "line", "raw", "T/degC", xh,
           "u(T)/K", uh);
}

static void fit_json(const bg_fit_row *f, const long long *ids, size_t nids, const bg_curve *u)
{
    char name[16];
    json_out j;
    json_begin(&j, stdout);
    json_obj(&j, NULL);
    json_int(&j, "fit_id", f->id);
    json_int(&j, "run_id", f->run_id);
    json_str(&j, "probe", f->serial);
    json_str(&j, "model", bg_model_name(&f->model, name, sizeof name));
    json_arr(&j, "coefficient_names");
    for (size_t i = 0; i < f->npar; i++)
        json_str(&j, NULL, bg_model_coef_name(&f->model, i));
    json_arr_end(&j);
    json_nums(&j, "coefficients", f->model.coef, f->npar);
    if (bg_model_flags(&f->model) & BG_MODEL_HAS_T0)
        json_num(&j, "t0_k", f->model.t0_k);
    if (f->has_cov) {
        json_arr(&j, "covariance");
        for (size_t i = 0; i < f->npar; i++)
            json_nums(&j, NULL, &f->cov[i * f->npar], f->npar);
        json_arr_end(&j);
    } else
        json_null(&j, "covariance");
    json_int(&j, "n", (long long)f->n);
    json_int(&j, "dof", (long long)f->dof);
    json_bool(&j, "weighted", f->weighted);
    json_num(&j, "chi2", f->chi2);
    json_num(&j, "cov_scale", f->cov_scale);
    json_num(&j, "rms_mk", f->rms_mk);
    json_num(&j, "max_abs_mk", f->max_abs_mk);
    json_obj(&j, "range");
    json_num(&j, "t_min_k", f->t_min_k);
    json_num(&j, "t_max_k", f->t_max_k);
    json_obj_end(&j);
    json_num(&j, "k", u->cover.k);
    json_num(&j, "coverage_probability", u->cover.p);
    json_arr(&j, "uncertainty");
    for (size_t i = 0; i < u->n; i++) {
        json_obj(&j, NULL);
        json_num(&j, "t_k", u->rows[i].t_k);
        json_num(&j, "u_k", u->rows[i].u_k);
        json_num(&j, "U_k", u->rows[i].U_k);
        json_obj_end(&j);
    }
    json_arr_end(&j);
    json_arr(&j, "readings");
    for (size_t i = 0; i < nids; i++)
        json_int(&j, NULL, ids[i]);
    json_arr_end(&j);
    json_str(&j, "program_version", f->program_version);
    json_str(&j, "created_at", f->created_at);
    json_obj_end(&j);
    json_end(&j);
}

static void fit_text(const bg_fit_row *f, const long long *ids, size_t nids, const bg_curve *u)
{
    char name[16];
    printf("fit %lld of probe %s, run %lld, made %s by bandgap %s\n", f->id, f->serial,
           f->run_id, f->created_at, f->program_version);
    printf("model %s%s", bg_model_name(&f->model, name, sizeof name),
           (bg_model_flags(&f->model) & BG_MODEL_HAS_T0) ? "" : "\n");
    if (bg_model_flags(&f->model) & BG_MODEL_HAS_T0)
        printf(", T0 = %.3f degC\n", f->model.t0_k - BG_ZERO_C_K);
    for (size_t i = 0; i < f->npar; i++) {
        double su = bg_fit_row_coef_u(f, i);
        char ub[32] = "n/a";
        if (isfinite(su))
            snprintf(ub, sizeof ub, "%.2e", su);
        printf("  %-5s = %18.10e   u = %s\n", bg_model_coef_name(&f->model, i),
               f->model.coef[i], ub);
    }
    printf("%zu readings, %zu dof, chi2 %.4g, RMS %.4f mK, max |residual| %.4f mK\n", f->n,
           f->dof, f->chi2, f->rms_mk, f->max_abs_mk);
    printf("calibrated range %.3f .. %.3f degC\n", f->t_min_k - BG_ZERO_C_K,
           f->t_max_k - BG_ZERO_C_K);
    if (f->has_cov) {
        printf("  U = k u, k = %.2f from Student's t for %zu degrees of freedom (coverage "
               "probability %.2f %%)\n", u->cover.k, f->dof, 100.0 * u->cover.p);
        printf("  %12s %12s\n", "T/degC", "U/mK");
        for (size_t i = 0; i < u->n; i++)
            printf("  %12.3f %12.4f\n", u->rows[i].t_k - BG_ZERO_C_K, 1e3 * u->rows[i].U_k);
    }
    printf("readings used:");
    for (size_t i = 0; i < nids; i++)
        printf(" %lld", ids[i]);
    printf("\n");
}

void cli_print_fit(const bg_fit_row *f, const long long *ids, size_t nids, const bg_curve *u,
                   int json)
{
    if (json)
        fit_json(f, ids, nids, u);
    else
        fit_text(f, ids, nids, u);
}
