/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap fit: fit a model to a readings CSV file and print the calibration report. */
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

static const char fit_usage[] =
    "Usage: bandgap fit FILE [--model MODEL] [--unit C|K|F] [--at TEMP]... [--json]\n"
    "       bandgap [--db PATH] fit --probe SERIAL [--run N] [OPTIONS]\n"
    "       bandgap [--db PATH] fit --lot CODE [OPTIONS]\n"
    "Fit an R-T model to the readings in FILE (a CSV; '-' reads standard input) and print\n"
    "the coefficients with standard uncertainties, the residuals, the curve's expanded\n"
    "uncertainty across the calibrated range, and a comparison of models.\n\n"
    "  --model M        sh3, sh4, beta, poly:N (N = 1..5) or auto (default: auto, which\n"
    "                   picks by BIC and says why)\n"
    "  --t0 TEMP        beta model: reference temperature of R0 (default 25C)\n"
    "  --pair T1/T2     B value reported for this pair (default 25/85, degC)\n"
    "  --u-temp DT      standard uncertainty for readings without a u_temp_k column\n"
    "                   (e.g. 5mK); without it and without the column, equal weights are\n"
    "                   used and the covariance comes from the scatter of the residuals\n"
    "  --at TEMP        also evaluate the fitted curve here (repeatable); outside the\n"
    "                   calibrated range this is an extrapolation and is flagged\n"
    "  --linear         linear fit in 1/T only, no refinement in temperature\n"
    "  --no-inflate     keep the covariance from the stated uncertainties even when the\n"
    "                   residuals are larger than they allow\n"
    "  --unit U         unit for printed temperatures: C (default), K or F\n"
    "  --json           one JSON object\n"
    "  --probe SERIAL   fit the probe's latest run (or --run N) in the database and store\n"
    "                   the fit; the readings excluded with 'bandgap exclude' are left out\n"
    "  --lot CODE       fit the latest run of every probe of the lot in one transaction:\n"
    "                   all fits are stored, or none when any probe fails\n"
    "Readings CSV: a header naming columns temp_c|temp_k|temp_f, ohms, and optionally\n"
    "u_temp_k, u_ohms, time, note (docs/readings-csv.md).\n"
    "Results hold only inside the calibrated range and the stated uncertainty; for medical,\n"
    "food-safety or process-safety use follow local regulations and accredited practice.\n";

void fit_request_init(struct fit_request *rq)
{
    memset(rq, 0, sizeof *rq);
    rq->model = "auto";
    rq->t0_k = BG_T0_DEFAULT_K;
    rq->pair_t1_k = 298.15, rq->pair_t2_k = 358.15;
    rq->unit = BG_UNIT_C;
}

int cmd_fit(int argc, char **argv, struct cli_ctx *ctx)
{
    enum { O_MODEL = 1, O_T0, O_PAIR, O_UTEMP, O_AT, O_LINEAR, O_NOINFL, O_UNIT, O_JSON,
           O_PROBE, O_RUN, O_LOT };
    static const struct option opts[] = {
        { "model", required_argument, NULL, O_MODEL }, { "t0", required_argument, NULL, O_T0 },
        { "pair", required_argument, NULL, O_PAIR },   { "u-temp", required_argument, NULL, O_UTEMP },
        { "at", required_argument, NULL, O_AT },       { "linear", no_argument, NULL, O_LINEAR },
        { "no-inflate", no_argument, NULL, O_NOINFL }, { "unit", required_argument, NULL, O_UNIT },
        { "json", no_argument, NULL, O_JSON },         { "help", no_argument, NULL, 'h' },
        { "probe", required_argument, NULL, O_PROBE }, { "run", required_argument, NULL, O_RUN },
        { "lot", required_argument, NULL, O_LOT },     { NULL, 0, NULL, 0 },
    };
    struct fit_request rq;
    const char *serial = NULL, *lot = NULL;
    long long run_id = 0;
    bg_error err = BG_ERROR_INIT;
    bg_model probe;
    int c;

    fit_request_init(&rq);
    opterr = 0;
    while ((c = getopt_long(argc, argv, ":h", opts, NULL)) != -1) {
        switch (c) {
        case 'h': fputs(fit_usage, stdout); return BG_OK;
        case O_MODEL:
            if (strcmp(optarg, "auto") != 0 && bg_model_parse(optarg, &probe, &err) != BG_OK)
                return cli_usage_error("fit", "--model: %s", err.msg);
            rq.model = optarg;
            break;
        case O_T0:
            if (bg_units_parse_temp(optarg, BG_UNIT_NONE, &rq.t0_k, &err) != BG_OK)
                return cli_usage_error("fit", "--t0: %s", err.msg);
            break;
        case O_PAIR:
            if (bg_model_parse_pair(optarg, &rq.pair_t1_k, &rq.pair_t2_k, &err) != BG_OK)
                return cli_usage_error("fit", "--pair: %s", err.msg);
            break;
        case O_UTEMP:
            if (bg_units_parse_tdiff(optarg, &rq.u_temp_k, &err) != BG_OK)
                return cli_usage_error("fit", "--u-temp: %s", err.msg);
            break;
        case O_AT:
            if (rq.nat == sizeof rq.at_k / sizeof rq.at_k[0])
                return cli_usage_error("fit", "too many --at values");
            if (bg_units_parse_temp(optarg, BG_UNIT_NONE, &rq.at_k[rq.nat], &err) != BG_OK)
                return cli_usage_error("fit", "--at: %s", err.msg);
            rq.nat++;
            break;
        case O_LINEAR: rq.linear_only = 1; break;
        case O_NOINFL: rq.no_inflate = 1; break;
        case O_UNIT:
            if (bg_units_parse_unit(optarg, &rq.unit, &err) != BG_OK)
                return cli_usage_error("fit", "--unit: %s", err.msg);
            break;
        case O_JSON: ctx->json = 1; break;
        case O_PROBE: serial = optarg; break;
        case O_LOT: lot = optarg; break;
        case O_RUN:
            if (cli_parse_id(optarg, &run_id) != BG_OK)
                return cli_usage_error("fit", "--run: '%s': not a run id", optarg);
            break;
        case ':': return cli_usage_error("fit", "option '%s' needs a value", argv[optind - 1]);
        default: return cli_usage_error("fit", "unknown option '%s'", argv[optind - 1]);
        }
    }
    if (serial || lot) {
        if (serial && lot)
            return cli_usage_error("fit", "give --probe or --lot, not both");
        if (run_id && !serial)
            return cli_usage_error("fit", "--run goes with --probe");
        if (optind < argc)
            return cli_usage_error("fit", "a readings file and --probe/--lot exclude each other");
        return serial ? fit_stored_probe(serial, run_id, &rq, ctx)
                      : fit_stored_lot(lot, &rq, ctx);
    }
    if (run_id)
        return cli_usage_error("fit", "--run goes with --probe");
    if (optind + 1 != argc)
        return cli_usage_error("fit", optind >= argc ? "no readings file given (or --probe, "
                               "--lot)" : "more than one readings file given");
    return fit_report_file(argv[optind], &rq, ctx);
}

static const char *model_formula(const bg_model *m)
{
    switch (m->kind) {
    case BG_MODEL_SH3: return "1/T = A + B L + C L^3";
    case BG_MODEL_SH4: return "1/T = A + B L + C L^2 + D L^3";
    case BG_MODEL_BETA: return "R = R0 exp(beta (1/T - 1/T0))";
    default: return "1/T = sum a_i L^i";
    }
}

#define NU 9 /* points of the uncertainty table across the range */

struct report {
    const bg_point *pts;
    long long fit_id, run_id;   /* 0 when not stored */
    const char *serial;
    const bg_fit *fit;
    const bg_cmp *cmp;
    int cmp_ok;
    char cmp_msg[512];
    double k_t, b_pair;
    double ut_t[NU], ut_u[NU];
    double at_r[32], at_u[32];
    int at_extra[32], at_ok[32];
};

static void print_json(const struct report *r, const struct fit_request *rq, const char *path)
{
    const bg_fit *f = r->fit;
    char name[16];
    json_out j;

    json_begin(&j, stdout);
    json_obj(&j, NULL);
    json_str(&j, "source", path);
    if (r->fit_id) {
        json_int(&j, "fit_id", r->fit_id);
        json_int(&j, "run_id", r->run_id);
        json_str(&j, "probe", r->serial);
    }
    json_str(&j, "model", bg_model_name(&f->model, name, sizeof name));
    json_str(&j, "requested_model", rq->model);
    json_arr(&j, "coefficient_names");
    for (size_t i = 0; i < f->npar; i++)
        json_str(&j, NULL, bg_model_coef_name(&f->model, i));
    json_arr_end(&j);
    json_nums(&j, "coefficients", f->model.coef, f->npar);
    json_arr(&j, "u_coefficients");
    for (size_t i = 0; i < f->npar; i++)
        json_num(&j, NULL, sqrt(f->cov[i * f->npar + i]));
    json_arr_end(&j);
    if (f->dof > 0) {
        json_arr(&j, "covariance");
        for (size_t i = 0; i < f->npar; i++)
            json_nums(&j, NULL, &f->cov[i * f->npar], f->npar);
        json_arr_end(&j);
    } else
        json_null(&j, "covariance");
    if (f->model.kind == BG_MODEL_BETA)
        json_num(&j, "t0_k", f->model.t0_k);
    json_int(&j, "n", (long long)f->n);
    json_int(&j, "dof", (long long)f->dof);
    json_bool(&j, "weighted", f->weighted);
    json_num(&j, "chi2", f->chi2);
    json_num(&j, "reduced_chi2", f->reduced_chi2);
    json_num(&j, "p_value", bg_fit_p_value(f));
    json_num(&j, "cov_scale", f->cov_scale);
    json_num(&j, "rms_mk", f->rms_mk);
    json_num(&j, "max_abs_mk", f->max_abs_mk);
    json_num(&j, "aic", f->aic);
    json_num(&j, "bic", f->bic);
    json_num(&j, "rcond", f->rcond);
    json_int(&j, "iterations", f->iterations);
    json_nums(&j, "residuals_mk", f->resid_mk, f->n);
    json_nums(&j, "studentized", f->student, f->n);
    json_nums(&j, "u_k", f->u_k, f->n);
    json_arr(&j, "lines");
    for (size_t i = 0; i < f->n; i++)
        json_int(&j, NULL, (long long)f->line[i]);
    json_arr_end(&j);
    json_obj(&j, "range");
    json_num(&j, "t_min_k", f->t_min_k);
    json_num(&j, "t_max_k", f->t_max_k);
    json_num(&j, "t_min_c", bg_units_from_k(f->t_min_k, BG_UNIT_C));
    json_num(&j, "t_max_c", bg_units_from_k(f->t_max_k, BG_UNIT_C));
    json_obj_end(&j);
    json_num(&j, "coverage_probability", 0.9545);
    json_num(&j, "k_student", r->k_t);
    json_arr(&j, "uncertainty");
    for (size_t i = 0; i < NU; i++) {
        json_obj(&j, NULL);
        json_num(&j, "t_k", r->ut_t[i]);
        json_num(&j, "u_k", r->ut_u[i]);
        json_num(&j, "U_k2", 2.0 * r->ut_u[i]);
        json_num(&j, "U_student", r->k_t * r->ut_u[i]);
        json_obj_end(&j);
    }
    json_arr_end(&j);
    json_obj(&j, "b_pair");
    json_num(&j, "t1_k", rq->pair_t1_k);
    json_num(&j, "t2_k", rq->pair_t2_k);
    json_num(&j, "b_k", r->b_pair);
    json_obj_end(&j);
    if (rq->nat) {
        json_arr(&j, "at");
        for (size_t i = 0; i < rq->nat; i++) {
            json_obj(&j, NULL);
            json_num(&j, "t_k", rq->at_k[i]);
            json_num(&j, "ohms", r->at_ok[i] ? r->at_r[i] : NAN);
            json_num(&j, "u_k", r->at_ok[i] ? r->at_u[i] : NAN);
            json_bool(&j, "extrapolated", r->at_extra[i]);
            json_obj_end(&j);
        }
        json_arr_end(&j);
    }
    if (r->cmp_ok) {
        json_obj(&j, "comparison");
        json_arr(&j, "models");
        for (size_t i = 0; i < r->cmp->nrows; i++) {
            const bg_cmp_row *row = &r->cmp->row[i];
            json_obj(&j, NULL);
            json_str(&j, "model", bg_model_name(&row->model, name, sizeof name));
            json_int(&j, "npar", (long long)row->npar);
            json_bool(&j, "fitted", row->ok);
            if (row->ok) {
                json_num(&j, "rms_mk", row->rms_mk);
                json_num(&j, "max_abs_mk", row->max_abs_mk);
                json_num(&j, "loo_rms_mk", row->loo_rms_mk);
                json_num(&j, "aic", row->aic);
                json_num(&j, "bic", row->bic);
            } else
                json_str(&j, "why", row->why);
            json_obj_end(&j);
        }
        json_arr_end(&j);
        json_str(&j, "chosen", bg_model_name(&r->cmp->row[r->cmp->chosen].model, name,
                                             sizeof name));
        json_str(&j, "reason", r->cmp->reason);
        json_obj_end(&j);
    } else
        json_null(&j, "comparison");
    json_arr(&j, "warnings");
    for (size_t i = 0; i < f->nnotes; i++)
        json_str(&j, NULL, f->notes[i].msg);
    json_arr_end(&j);
    json_obj_end(&j);
    json_end(&j);
}

static void print_text(const struct report *r, const struct fit_request *rq, const char *path)
{
    const bg_fit *f = r->fit;
    bg_temp_unit un = rq->unit;
    const char *us = bg_units_symbol(un, 1);
    char name[16], b1[64], b2[64];

    printf("readings: %s, %zu points, %s .. %s\n", path, f->n,
           bg_units_format_temp(f->t_min_k, un, 3, b1, sizeof b1),
           bg_units_format_temp(f->t_max_k, un, 3, b2, sizeof b2));
    printf("model: %s   %s,  L = ln(R / 1 ohm), T in K\n",
           bg_model_name(&f->model, name, sizeof name), model_formula(&f->model));
    if (f->model.kind == BG_MODEL_BETA)
        printf("  T0 = %s\n", bg_units_format_temp(f->model.t0_k, un, 3, b1, sizeof b1));
    for (size_t i = 0; i < f->npar; i++) {
        double u = sqrt(f->cov[i * f->npar + i]);
        if (isfinite(u))
            printf("  %-5s = %18.10e   u = %.2e\n", bg_model_coef_name(&f->model, i),
                   f->model.coef[i], u);
        else
            printf("  %-5s = %18.10e   u = n/a\n", bg_model_coef_name(&f->model, i),
                   f->model.coef[i]);
    }
    if (f->weighted)
        printf("weights: stated uncertainties; chi2 = %.4g for %zu dof (reduced %.4g, p = %.3g)"
               "%s\n", f->chi2, f->dof, f->reduced_chi2, bg_fit_p_value(f),
               f->cov_scale > 1.0 ? "; covariance scaled by reduced chi2" : "");
    else
        printf("weights: equal (no uncertainties given); covariance from the residual "
               "scatter, %zu dof\n", f->dof);
    printf("\nresiduals (measured - fitted):\n");
    printf("  %6s  %12s  %12s  %11s  %8s\n", "line", us[0] == 'K' ? "T/K" :
           un == BG_UNIT_F ? "T/degF" : "T/degC", "R/ohm", "resid/mK", "student");
    for (size_t i = 0; i < f->n; i++) {
        const bg_point *p = &r->pts[i];
        printf("  %6zu  %12.4f  %12s  %11.4f  %8.2f\n", p->line, bg_units_from_k(p->t_k, un),
               bg_units_format_ohms(p->r_ohm, 7, b1, sizeof b1), f->resid_mk[i], f->student[i]);
    }
    printf("  RMS %.4f mK, max |residual| %.4f mK\n", f->rms_mk, f->max_abs_mk);
    if (isfinite(r->b_pair)) {
        bg_units_format_temp(rq->pair_t1_k, BG_UNIT_C, 2, b1, sizeof b1);
        bg_units_format_temp(rq->pair_t2_k, BG_UNIT_C, 2, b2, sizeof b2);
        printf("B(%s / %s) = %.2f K\n", b1, b2, r->b_pair);
    }
    if (f->dof > 0) {
        printf("\ncurve uncertainty (coverage 95.45 %%: k = 2, Student-t k = %.2f for %zu dof):\n",
               r->k_t, f->dof);
        printf("  %12s  %10s  %12s  %12s\n", us[0] == 'K' ? "T/K" : un == BG_UNIT_F ?
               "T/degF" : "T/degC", "u/mK", "U(k=2)/mK", "U(t)/mK");
        for (size_t i = 0; i < NU; i++)
            printf("  %12.3f  %10.4f  %12.4f  %12.4f\n", bg_units_from_k(r->ut_t[i], un),
                   1e3 * r->ut_u[i], 2e3 * r->ut_u[i], 1e3 * r->k_t * r->ut_u[i]);
    } else
        printf("\ncurve uncertainty: n/a (no degrees of freedom left)\n");
    for (size_t i = 0; i < rq->nat; i++) {
        if (!r->at_ok[i])
            continue;
        char b3[32] = "n/a";
        if (isfinite(r->at_u[i]))
            snprintf(b3, sizeof b3, "%.4f mK", 2e3 * r->at_u[i]);
        printf("at %s: R = %s ohm, U(k=2) = %s%s\n",
               bg_units_format_temp(rq->at_k[i], un, 3, b1, sizeof b1),
               bg_units_format_ohms(r->at_r[i], 7, b2, sizeof b2), b3,
               r->at_extra[i] ? "   EXTRAPOLATED: outside the calibrated range" : "");
    }
    printf("\nmodel comparison:\n");
    if (r->cmp_ok) {
        printf("  %-7s %4s  %10s  %10s  %10s  %10s  %10s\n", "model", "npar", "RMS/mK",
               "max/mK", "LOO/mK", "AIC", "BIC");
        for (size_t i = 0; i < r->cmp->nrows; i++) {
            const bg_cmp_row *row = &r->cmp->row[i];
            bg_model_name(&row->model, name, sizeof name);
            if (row->ok)
                printf("  %-7s %4zu  %10.4f  %10.4f  %10.4f  %10.2f  %10.2f%s\n", name,
                       row->npar, row->rms_mk, row->max_abs_mk, row->loo_rms_mk, row->aic,
                       row->bic, (int)i == r->cmp->chosen ? "  <- chosen" : "");
            else
                printf("  %-7s %4zu  not compared: %s\n", name, row->npar, row->why);
        }
        printf("  choice: %s\n", r->cmp->reason);
    } else
        printf("  not available: %s\n", r->cmp_msg);
    printf("\nValid only inside the calibrated range (%s .. %s) and within the stated\n"
           "uncertainty.  Not an accredited certificate; for medical, food-safety or\n"
           "process-safety use follow local regulations and accredited practice.\n",
           bg_units_format_temp(f->t_min_k, un, 3, b1, sizeof b1),
           bg_units_format_temp(f->t_max_k, un, 3, b2, sizeof b2));
}

/* Compare models, fit the requested one and work out everything the report prints.  'fit' and
** 'cmp' belong to the caller; warnings are printed unless 'quiet'. */
static int compute(bg_fitter *fr, const bg_point *pts, size_t n, const char *source,
                   const struct fit_request *rq, int quiet, bg_fit *fit, bg_cmp *cmp,
                   struct report *r, bg_error *err)
{
    bg_error cerr = BG_ERROR_INIT;
    bg_fit_opts o = bg_fit_default_opts(NULL);
    int rc;

    memset(r, 0, sizeof *r);
    o.model.t0_k = rq->t0_k;
    o.refine = !rq->linear_only;
    o.inflate = !rq->no_inflate;
    o.source = source;
    if (strcmp(rq->model, "auto") == 0 || !quiet) {
        r->cmp_ok = bg_fit_compare(fr, pts, n, &o, cmp, &cerr) == BG_OK;
        snprintf(r->cmp_msg, sizeof r->cmp_msg, "%s", cerr.msg);
        if (!r->cmp_ok && cerr.code != BG_EINVAL) {
            *err = cerr;
            return cerr.code;
        }
    }
    if (strcmp(rq->model, "auto") == 0) {
        if (!r->cmp_ok) {
            /* Data errors surface here with their line; otherwise say why auto cannot work. */
            *err = cerr;
            return BG_EINVAL;
        }
        o.model = cmp->row[cmp->chosen].model;
    } else {
        bg_model_parse(rq->model, &o.model, NULL);
        o.model.t0_k = rq->t0_k;
    }
    if ((rc = bg_fitter_run(fr, pts, n, &o, fit, err)) != BG_OK)
        return rc;
    r->pts = pts, r->fit = fit, r->cmp = cmp;
    r->k_t = quiet ? NAN : bg_fit_coverage_k(fit, 0.9545); /* the lot table does not show it */
    if (quiet || bg_model_b_pair(&fit->model, rq->pair_t1_k, rq->pair_t2_k, &r->b_pair,
                                 NULL) != BG_OK)
        r->b_pair = NAN; /* the lot table prints B for the lot's own pair */
    for (size_t i = 0; i < NU && !quiet; i++) { /* the lot table needs only the largest */
        r->ut_t[i] = fit->t_min_k + (fit->t_max_k - fit->t_min_k) * (double)i / (NU - 1);
        if (bg_fit_u_t(fit, r->ut_t[i], &r->ut_u[i], NULL, NULL) != BG_OK)
            r->ut_u[i] = NAN;
    }
    for (size_t i = 0; i < fit->nnotes && !quiet; i++)
        cli_warn("%s", fit->notes[i].msg);
    for (size_t i = 0; i < rq->nat; i++) {
        char b1[64];
        bg_error e2 = BG_ERROR_INIT;
        r->at_ok[i] = bg_model_r_from_t(&fit->model, rq->at_k[i], &r->at_r[i], &e2) == BG_OK &&
                      bg_fit_u_t(fit, rq->at_k[i], &r->at_u[i], &r->at_extra[i], &e2) == BG_OK;
        if (quiet)
            continue;
        if (!r->at_ok[i])
            cli_warn("--at %s: %s", bg_units_format_temp(rq->at_k[i], rq->unit, 3, b1,
                                                          sizeof b1), e2.msg);
        else if (r->at_extra[i])
            cli_warn("--at %s: outside the calibrated range: extrapolated, not calibrated",
                     bg_units_format_temp(rq->at_k[i], rq->unit, 3, b1, sizeof b1));
    }
    return BG_OK;
}

int fit_report_file(const char *path, const struct fit_request *rq, struct cli_ctx *ctx)
{
    bg_readings rs = BG_READINGS_INIT;
    bg_error err = BG_ERROR_INIT;
    bg_fitter *fr = NULL;
    bg_point *pts = NULL;
    bg_fit fit = BG_FIT_INIT;
    bg_cmp cmp;
    struct report r;
    const char *source = strcmp(path, "-") == 0 ? "<stdin>" : path;
    int rc;

    if ((rc = bg_csv_read_file(path, &rs, &err)) != BG_OK)
        return cli_fail(NULL, &err);
    pts = malloc((rs.n ? rs.n : 1) * sizeof *pts);
    fr = bg_fitter_new();
    if (!pts || !fr) {
        rc = bg_error_set(&err, BG_ENOMEM, "out of memory");
        goto fail;
    }
    if (rs.ref_ohms) {
        rc = bg_error_set(&err, BG_EINVAL, "%s: column 'ref_ohms' needs the reference "
                          "thermometer's Callendar-Van Dusen coefficients: import the file with "
                          "'bandgap import FILE --probe SERIAL --ref ID'", path);
        goto fail;
    }
    bg_readings_points(&rs, pts);
    if (rq->u_temp_k > 0.0 && !rs.has_u_t)
        for (size_t i = 0; i < rs.n; i++)
            pts[i].u_t_k = rq->u_temp_k;
    if ((rc = compute(fr, pts, rs.n, source, rq, 0, &fit, &cmp, &r, &err)) != BG_OK)
        goto fail;
    if (ctx->json)
        print_json(&r, rq, source);
    else
        print_text(&r, rq, source);
    goto done;
fail:
    cli_fail(NULL, &err);
done:
    bg_fit_release(&fit);
    bg_fitter_free(fr);
    free(pts);
    bg_readings_release(&rs);
    return rc;
}

/* Points of a stored run, with the request's default uncertainty where none was recorded. */
static int load_points(bg_store *st, long long run_id, const struct fit_request *rq,
                       bg_store_points *sp, bg_error *err)
{
    int rc = bg_store_run_points(st, run_id, sp, err), any_u = 0;
    if (rc != BG_OK)
        return rc;
    for (size_t i = 0; i < sp->n; i++)
        any_u |= sp->pts[i].u_t_k > 0.0 || sp->pts[i].u_r_ohm > 0.0;
    if (!any_u && rq->u_temp_k > 0.0)
        for (size_t i = 0; i < sp->n; i++)
            sp->pts[i].u_t_k = rq->u_temp_k;
    return BG_OK;
}

int fit_stored_probe(const char *serial, long long run_id, const struct fit_request *rq,
                     struct cli_ctx *ctx)
{
    bg_error err = BG_ERROR_INIT;
    bg_store *st = NULL;
    bg_store_points sp = BG_STORE_POINTS_INIT;
    bg_fitter *fr = bg_fitter_new();
    bg_fit fit = BG_FIT_INIT;
    bg_probe probe;
    bg_run run;
    bg_cmp cmp;
    struct report r;
    char source[BG_TEXT + 32];
    long long fit_id = 0;
    int rc;

    if (!fr)
        return cli_fail(NULL, &(bg_error){ BG_ENOMEM, "out of memory" });
    if ((rc = cli_open_store(ctx, 0, &st)) != BG_OK)
        goto done;
    if ((rc = bg_store_probe_get(st, serial, &probe, &err)) != BG_OK)
        goto fail;
    if (run_id == 0 && (rc = bg_store_run_latest(st, probe.id, &run_id, &err)) != BG_OK) {
        bg_error_prefix(&err, "probe '%s'", serial);
        goto fail;
    }
    if ((rc = bg_store_run_get(st, run_id, &run, &err)) != BG_OK)
        goto fail;
    if (run.probe_id != probe.id) {
        rc = bg_error_set(&err, BG_EINVAL, "run %lld belongs to probe '%s', not '%s'", run_id,
                          run.serial, serial);
        goto fail;
    }
    if ((rc = load_points(st, run_id, rq, &sp, &err)) != BG_OK)
        goto fail;
    snprintf(source, sizeof source, "run %lld", run_id);
    if ((rc = compute(fr, sp.pts, sp.n, source, rq, 0, &fit, &cmp, &r, &err)) != BG_OK ||
        (rc = bg_store_fit_save(st, run_id, &fit, sp.ids, &fit_id, &err)) != BG_OK)
        goto fail;
    r.fit_id = fit_id, r.run_id = run_id, r.serial = serial;
    if (ctx->json)
        print_json(&r, rq, source);
    else {
        printf("probe %s, %s (%s)\n", serial, source, run.started_at);
        print_text(&r, rq, source);
        printf("stored as fit %lld\n", fit_id);
    }
    goto done;
fail:
    cli_fail(NULL, &err);
done:
    bg_fit_release(&fit);
    bg_fitter_free(fr);
    bg_store_points_release(&sp);
    bg_store_close(st);
    return rc;
}

struct lot_pass {
    bg_store *st;
    const struct fit_request *rq;
    struct cli_ctx *ctx;
    const bg_lot *lot;
    bg_fitter *fr;
    bg_fit fit;
    bg_cmp cmp;
    struct report r;
    FILE *out;
    json_out j;
    size_t nprobes, nfit, nskip, nfail;
    int rc;
    bg_error err;
};

/* One probe of the lot: fit its points and store the fit, or note why not. */
static int lot_probe(const char *serial, long long probe_id, long long run_id,
                     bg_store_points *sp, void *p)
{
    struct lot_pass *lp = p;
    bg_error e2 = BG_ERROR_INIT;
    long long fit_id;
    char source[64], name[16], rb[32];
    (void)probe_id;

    lp->nprobes++;
    cli_progress("fitting", lp->nprobes, (size_t)lp->lot->nprobes);
    if (run_id == 0) {
        lp->nskip++;
        if (lp->ctx->json) {
            json_obj(&lp->j, NULL);
            json_str(&lp->j, "probe", serial);
            json_str(&lp->j, "status", "no runs");
            json_obj_end(&lp->j);
        } else
            fprintf(lp->out, "%-20s   no calibration runs: not fitted\n", serial);
        return 0;
    }
    snprintf(source, sizeof source, "run %lld", run_id);
    if (lp->rq->u_temp_k > 0.0) {
        int any_u = 0;
        for (size_t i = 0; i < sp->n; i++)
            any_u |= sp->pts[i].u_t_k > 0.0 || sp->pts[i].u_r_ohm > 0.0;
        for (size_t i = 0; i < sp->n && !any_u; i++)
            sp->pts[i].u_t_k = lp->rq->u_temp_k;
    }
    if (compute(lp->fr, sp->pts, sp->n, source, lp->rq, 1, &lp->fit, &lp->cmp, &lp->r,
                &e2) != BG_OK) {
        if (++lp->nfail <= 20)
            cli_error("probe '%s': %s", serial, e2.msg);
        else if (lp->nfail == 21)
            cli_error("... (further failures not shown)");
        return 0;
    }
    for (size_t k = 0; k < lp->fit.nnotes; k++)
        cli_warn("probe '%s': %s", serial, lp->fit.notes[k].msg);
    if ((lp->rc = bg_store_fit_queue(lp->st, run_id, &lp->fit, sp->ids, &fit_id, &lp->err)) !=
        BG_OK)
        return 1;
    lp->nfit++;
    double r25 = NAN, b = NAN, umax = 0.0;
    bg_model_r_from_t(&lp->fit.model, BG_T0_DEFAULT_K, &r25, NULL);
    bg_model_b_pair(&lp->fit.model, lp->lot->pair_t1_k, lp->lot->pair_t2_k, &b, NULL);
    /* The largest U over the calibrated range, taken at the readings (which include both
    ** ends, where it is largest for these curves). */
    for (size_t k = 0; k < sp->n; k++) {
        double u;
        if (bg_fit_u_at_r(&lp->fit, sp->pts[k].r_ohm, &u, NULL) == BG_OK && u > umax)
            umax = u;
    }
    bg_model_name(&lp->fit.model, name, sizeof name);
    if (lp->ctx->json) {
        json_out *j = &lp->j;
        json_obj(j, NULL);
        json_str(j, "probe", serial);
        json_str(j, "status", "fitted");
        json_int(j, "run_id", run_id);
        json_int(j, "fit_id", fit_id);
        json_str(j, "model", name);
        json_nums(j, "coefficients", lp->fit.model.coef, lp->fit.npar);
        json_int(j, "n", (long long)lp->fit.n);
        json_num(j, "rms_mk", lp->fit.rms_mk);
        json_num(j, "max_abs_mk", lp->fit.max_abs_mk);
        json_num(j, "max_U_k2_mk", lp->fit.dof ? 2e3 * umax : NAN);
        json_num(j, "r25_ohm", r25);
        json_num(j, "b_k", b);
        json_obj_end(j);
    } else
        fprintf(lp->out, "%-20s %6lld %6lld %-7s %4zu %10.4f %10.4f %11.4f %12s %10.2f\n",
                serial, run_id, fit_id, name, lp->fit.n, lp->fit.rms_mk, lp->fit.max_abs_mk,
                lp->fit.dof ? 2e3 * umax : NAN, bg_units_format_ohms(r25, 7, rb, sizeof rb), b);
    return 0;
}

int fit_stored_lot(const char *lot_code, const struct fit_request *rq, struct cli_ctx *ctx)
{
    struct lot_pass lp;
    bg_lot lot;
    char *outbuf = NULL;
    size_t outlen = 0;
    int rc, in_tx = 0;

    memset(&lp, 0, sizeof lp);
    lp.rq = rq, lp.ctx = ctx, lp.lot = &lot;
    bg_fit_init(&lp.fit);
    lp.fr = bg_fitter_new();
    /* The table is printed only when the whole lot succeeded. */
    lp.out = open_memstream(&outbuf, &outlen);
    if (!lp.fr || !lp.out) {
        rc = bg_error_set(&lp.err, BG_ENOMEM, "out of memory");
        goto fail;
    }
    if ((rc = cli_open_store(ctx, 0, &lp.st)) != BG_OK)
        goto done;
    if ((rc = bg_store_lot_get(lp.st, lot_code, &lot, &lp.err)) != BG_OK)
        goto fail;
    if (lot.nprobes == 0) {
        rc = bg_error_set(&lp.err, BG_EINVAL, "lot '%s' has no probes (add them with 'bandgap "
                          "probe add SERIAL --lot %s')", lot_code, lot_code);
        goto fail;
    }
    /* One transaction for the whole lot: all fits are stored, or none. */
    if ((rc = bg_store_begin(lp.st, &lp.err)) != BG_OK)
        goto fail;
    in_tx = 1;
    if (ctx->json) {
        json_begin(&lp.j, lp.out);
        json_obj(&lp.j, NULL);
        json_str(&lp.j, "lot", lot_code);
        json_arr(&lp.j, "probes");
    } else
        fprintf(lp.out, "%-20s %6s %6s %-7s %4s %10s %10s %11s %12s %10s\n", "probe", "run",
                "fit", "model", "n", "RMS/mK", "max/mK", "U(k=2)/mK", "R25/ohm", "B/K");
    rc = bg_store_lot_points_each(lp.st, lot_code, lot_probe, &lp, &lp.err);
    if (rc == BG_OK && lp.rc != BG_OK)
        rc = lp.rc;
    if (rc != BG_OK)
        goto fail;
    if (lp.nfail) {
        rc = bg_error_set(&lp.err, BG_EINVAL, "lot '%s': %zu of %zu probes could not be "
                          "fitted; nothing was stored", lot_code, lp.nfail, lp.nprobes);
        goto fail;
    }
    if ((rc = bg_store_commit(lp.st, &lp.err)) != BG_OK) {
        in_tx = 0;
        goto fail;
    }
    in_tx = 0;
    if (ctx->json) {
        json_arr_end(&lp.j);
        json_int(&lp.j, "fitted", (long long)lp.nfit);
        json_int(&lp.j, "without_runs", (long long)lp.nskip);
        json_obj_end(&lp.j);
        json_end(&lp.j);
    } else {
        char b1[64], b2[64];
        fprintf(lp.out, "lot %s: %zu probes fitted, %zu without runs; B for %s / %s\n",
                lot_code, lp.nfit, lp.nskip,
                bg_units_format_temp(lot.pair_t1_k, BG_UNIT_C, 2, b1, sizeof b1),
                bg_units_format_temp(lot.pair_t2_k, BG_UNIT_C, 2, b2, sizeof b2));
    }
    fclose(lp.out);
    lp.out = NULL;
    fwrite(outbuf, 1, outlen, stdout);
    goto done;
fail:
    if (in_tx)
        bg_store_rollback(lp.st);
    cli_fail(NULL, &lp.err);
done:
    if (lp.out)
        fclose(lp.out);
    free(outbuf);
    bg_fit_release(&lp.fit);
    bg_fitter_free(lp.fr);
    bg_store_close(lp.st);
    return rc;
}
