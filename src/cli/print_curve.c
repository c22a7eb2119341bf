/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Printers of curves computed by the library (bg_curve): the table of 'curve' as text, CSV or
** JSON, and the point values of 'eval'.  Units are converted here for display only. */
#include <math.h>
#include <stdio.h>

#include "cli.h"

/* 1 for the NTC kinds, whose output is as it always was. */
static int ntc(const bg_model *m)
{
    return (bg_model_flags(m) & BG_MODEL_INV_POLY) != 0;
}

/* The reading column's heading and the slope's ("R/ohm", "dT/dR K/ohm"; "V/V", "dT/dV K/V"). */
/* The sensitivity column: alpha = (1/R) dR/dT in %/K for a resistance; for the other
** quantities the kind's own slope dx/dT = 1 / (dT/dx) (a junction's dV/dT in mV/K, an IC
** sensor's reported kelvin per kelvin, a code's LSB per kelvin), as alpha is not theirs. */
static const char *sens_head(const bg_model *m)
{
    switch (bg_model_quantity(m)) {
    case BG_QTY_VOLTAGE: return "dV/dT mV/K";
    case BG_QTY_REPORTED_T: return "dTrep/dT";
    case BG_QTY_CODE: return "dN/dT LSB/K";
    default: return "alpha %/K";
    }
}

static double sens_val(const bg_model *m, const bg_curve_row *r)
{
    switch (bg_model_quantity(m)) {
    case BG_QTY_VOLTAGE: return 1e3 / r->dtdr_k_per_ohm;
    case BG_QTY_REPORTED_T: case BG_QTY_CODE: return 1.0 / r->dtdr_k_per_ohm;
    default: return 100.0 * r->alpha_per_k;
    }
}

static void headings(const bg_model *m, char *x, size_t xs, char *d, size_t ds)
{
    bg_quantity q = bg_model_quantity(m);
    snprintf(x, xs, "%s/%s", bg_quantity_symbol(q), bg_quantity_unit(q));
    snprintf(d, ds, "dT/d%s K/%s", bg_quantity_symbol(q), bg_quantity_unit(q));
}

/* A reading as text: a resistance as ohms are written, anything else %.7g. */
static const char *xtext(const bg_model *m, double x, int sig, char *buf, size_t size)
{
    if (bg_model_quantity(m) == BG_QTY_RESISTANCE)
        return bg_units_format_ohms(x, sig, buf, size);
    snprintf(buf, size, "%.7g", x);
    return buf;
}

static void curve_json(const bg_curve_src *src, const struct cli_fit_used *used,
                       const bg_curve *c)
{
    char name[16];
    json_out j;
    json_begin(&j, stdout);
    json_obj(&j, NULL);
    json_str(&j, "model", bg_model_name(&src->model, name, sizeof name));
    json_nums(&j, "coefficients", src->model.coef, bg_model_npar(&src->model));
    if (used)
        cli_json_fit_used(&j, used);
    json_num(&j, "t_min_k", src->has_range ? src->t_min_k : NAN);
    json_num(&j, "t_max_k", src->has_range ? src->t_max_k : NAN);
    if (src->has_cov) {
        json_obj(&j, "coverage");
        json_str(&j, "rule", c->cover.fixed ? "fixed k" : "Student t");
        json_num(&j, "k", c->cover.k);
        json_num(&j, "probability", c->cover.p);
        json_int(&j, "nu_eff", (long long)src->dof);
        json_obj_end(&j);
    } else
        json_null(&j, "coverage");
    json_arr(&j, "rows");
    for (size_t i = 0; i < c->n; i++) {
        const bg_curve_row *r = &c->rows[i];
        json_obj(&j, NULL);
        json_num(&j, "t_k", r->t_k);
        json_num(&j, bg_quantity_column(bg_model_quantity(&src->model)), r->r_ohm);
        json_num(&j, ntc(&src->model) ? "dtdr_k_per_ohm" : "dtdx", r->dtdr_k_per_ohm);
        json_num(&j, "alpha_per_k", r->alpha_per_k);
        json_num(&j, "U_k", r->U_k);
        json_bool(&j, "extrapolated", r->extrapolated);
        json_obj_end(&j);
    }
    json_arr_end(&j);
    json_obj_end(&j);
    json_end(&j);
}

static void curve_csv(const bg_model *m, const bg_curve *c)
{
    if (ntc(m))
        printf("t_k,ohms,dtdr_k_per_ohm,alpha_per_k,U_k,extrapolated\n");
    else
        printf("t_k,%s,dtdx,alpha_per_k,U_k,extrapolated\n",
               bg_quantity_column(bg_model_quantity(m)));
    for (size_t i = 0; i < c->n; i++) {
        const bg_curve_row *r = &c->rows[i];
        printf("%.17g,%.17g,%.17g,%.17g,", r->t_k, r->r_ohm, r->dtdr_k_per_ohm, r->alpha_per_k);
        if (isfinite(r->U_k))
            printf("%.17g", r->U_k);
        printf(",%d\n", r->extrapolated);
    }
}

static void curve_text(const bg_curve_src *src, const struct cli_fit_used *used,
                       const bg_curve *c, bg_temp_unit unit)
{
    char name[16];
    const char *us = unit == BG_UNIT_K ? "T/K" : unit == BG_UNIT_F ? "T/degF" : "T/degC";
    bg_model_name(&src->model, name, sizeof name);
    if (used)
        printf("model %s, stored fit %lld (run %lld of probe %s, started %s), calibrated "
               "%.3f .. %.3f degC\n", name, used->fit_id, used->run_id, used->serial,
               used->started_at, src->t_min_k - BG_ZERO_C_K, src->t_max_k - BG_ZERO_C_K);
    else
        printf("model %s, given inline (its calibrated range is not known)\n", name);
    if (src->has_cov && c->cover.fixed)
        printf("U = k u with k = %.2f as asked (coverage probability about %.1f %%, Student t "
               "for %zu degrees of freedom); no U where extrapolated\n", c->cover.k,
               100.0 * c->cover.p, src->dof);
    else if (src->has_cov)
        printf("U = k u with k = %.2f from Student's t for %zu degrees of freedom (coverage "
               "probability %.2f %%); no U where extrapolated\n", c->cover.k, src->dof,
               100.0 * c->cover.p);
    char xh[32], dh[32];
    headings(&src->model, xh, sizeof xh, dh, sizeof dh);
    printf("%12s %14s %14s %10s %11s\n", us, xh, dh, sens_head(&src->model),
           src->has_cov ? "U/mK" : "");
    for (size_t i = 0; i < c->n; i++) {
        const bg_curve_row *r = &c->rows[i];
        char rb[32], ub[32] = "";
        if (isfinite(r->U_k))
            snprintf(ub, sizeof ub, "%.4f", 1e3 * r->U_k);
        else if (src->has_cov)
            snprintf(ub, sizeof ub, "-");
        printf("%12.3f %14s %14.6g %10.4f %11s%s\n", bg_units_from_k(r->t_k, unit),
               xtext(&src->model, r->r_ohm, 7, rb, sizeof rb), r->dtdr_k_per_ohm,
               sens_val(&src->model, r), ub, r->extrapolated ? "  EXTRAPOLATED" : "");
    }
}

void cli_print_curve(const bg_curve_src *src, const struct cli_fit_used *used,
                     const bg_curve *c, enum cli_format fmt, bg_temp_unit unit)
{
    if (fmt == CLI_FMT_JSON)
        curve_json(src, used, c);
    else if (fmt == CLI_FMT_CSV)
        curve_csv(&src->model, c);
    else
        curve_text(src, used, c, unit);
}

static void eval_json(const bg_curve_src *src, const bg_curve *c)
{
    const bg_model *m = &src->model;
    size_t ncoef = bg_model_npar(m);
    char name[16];
    json_out j;
    json_begin(&j, stdout);
    json_obj(&j, NULL);
    json_str(&j, "model", bg_model_name(m, name, sizeof name));
    json_arr(&j, "coefficient_names");
    for (size_t i = 0; i < ncoef; i++)
        json_str(&j, NULL, bg_model_coef_name(m, i));
    json_arr_end(&j);
    json_nums(&j, "coefficients", m->coef, ncoef);
    if (bg_model_flags(m) & BG_MODEL_HAS_T0)
        json_num(&j, "t0_k", m->t0_k);
    json_arr(&j, "results");
    for (size_t i = 0; i < c->n; i++) {
        const bg_curve_row *r = &c->rows[i];
        json_obj(&j, NULL);
        json_str(&j, "given", r->given == BG_CURVE_AT_TEMP ? "temperature"
                              : ntc(m) ? "resistance" : "reading");
        json_num(&j, bg_quantity_column(bg_model_quantity(m)), r->r_ohm);
        json_num(&j, "t_k", r->t_k);
        json_num(&j, "t_c", bg_units_from_k(r->t_k, BG_UNIT_C));
        json_num(&j, "dtdr_k_per_ohm", r->dtdr_k_per_ohm);
        json_num(&j, "alpha_per_k", r->alpha_per_k);
        json_num(&j, "beta_local_k", r->beta_local_k);
        json_obj_end(&j);
    }
    json_arr_end(&j);
    json_obj(&j, "b_pair");
    json_num(&j, "t1_k", src->b_pair_t1_k);
    json_num(&j, "t2_k", src->b_pair_t2_k);
    json_num(&j, "b_k", c->b_pair_k);
    json_obj_end(&j);
    json_obj_end(&j);
    json_end(&j);
}

void cli_print_eval(const bg_curve_src *src, const bg_curve *c, bg_temp_unit unit, int json)
{
    char b1[64], b2[64];
    if (json) {
        eval_json(src, c);
        return;
    }
    char xh[32], dh[32];
    headings(&src->model, xh, sizeof xh, dh, sizeof dh);
    printf("%12s  %12s  %13s  %9s  %9s\n", xh, bg_units_symbol(unit, 1)[0] == 'K' ?
           "T/K" : unit == BG_UNIT_F ? "T/degF" : "T/degC", dh, sens_head(&src->model),
           "beta/K");
    for (size_t i = 0; i < c->n; i++) {
        const bg_curve_row *r = &c->rows[i];
        printf("%12s  %12.3f  %13.6g  %9.4f  %9.2f\n",
               xtext(&src->model, r->r_ohm, 6, b1, sizeof b1),
               bg_units_from_k(r->t_k, unit), r->dtdr_k_per_ohm, sens_val(&src->model, r),
               r->beta_local_k);
    }
    if (isfinite(c->b_pair_k)) {
        bg_units_format_temp(src->b_pair_t1_k, BG_UNIT_C, 2, b1, sizeof b1);
        bg_units_format_temp(src->b_pair_t2_k, BG_UNIT_C, 2, b2, sizeof b2);
        printf("B(%s / %s) = %.2f K\n", b1, b2, c->b_pair_k);
    }
}
