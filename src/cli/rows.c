/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* JSON fields of stored records, shared by list, probe, show and export; and the model given
** inline on the command line, shared by eval and curve. */
#include <math.h>
#include <stdlib.h>

#include "cli.h"

void cli_inline_init(struct cli_inline *in)
{
    in->model = NULL;
    in->ncoef = 0;
    in->have_coef = 0;
    in->r25 = NAN, in->beta = NAN, in->t0_k = BG_T0_DEFAULT_K;
}

int cli_inline_given(const struct cli_inline *in)
{
    return in->model || in->have_coef || isfinite(in->r25) || isfinite(in->beta);
}

int cli_inline_option(struct cli_inline *in, int opt, const char *arg, const char *cmd)
{
    bg_error err = BG_ERROR_INIT;
    char *end;
    switch (opt) {
    case CLI_IN_MODEL: in->model = arg; return BG_OK;
    case CLI_IN_COEF:
        if (cli_parse_list(arg, in->coef, BG_MODEL_MAXPAR, &in->ncoef, &err) != BG_OK)
            return cli_usage_error(cmd, "--coef %s", err.msg);
        in->have_coef = 1;
        return BG_OK;
    case CLI_IN_R25:
        if (bg_units_parse_ohms(arg, &in->r25, &err) != BG_OK)
            return cli_usage_error(cmd, "--r25: %s", err.msg);
        return BG_OK;
    case CLI_IN_BETA:
        in->beta = strtod(arg, &end);
        if (*end || !(in->beta > 0.0) || !isfinite(in->beta))
            return cli_usage_error(cmd, "--beta: '%s': expected a B constant in K > 0", arg);
        return BG_OK;
    default:
        if (bg_units_parse_temp(arg, BG_UNIT_NONE, &in->t0_k, &err) != BG_OK)
            return cli_usage_error(cmd, "--t0: %s", err.msg);
        return BG_OK;
    }
}

int cli_inline_model(const struct cli_inline *in, const char *cmd, bg_model *m)
{
    bg_error err = BG_ERROR_INIT;
    double coef[BG_MODEL_MAXPAR];
    size_t n = in->ncoef;
    const char *name = in->model;
    int beta_given = isfinite(in->r25) || isfinite(in->beta);

    if (!name)
        name = (!in->have_coef && beta_given) ? "beta" : NULL;
    if (!name)
        return cli_usage_error(cmd, "--model is required");
    if (bg_model_parse(name, m, &err) != BG_OK)
        return cli_usage_error(cmd, "--model: %s", err.msg);
    m->t0_k = in->t0_k;
    for (size_t i = 0; i < n; i++)
        coef[i] = in->coef[i];
    if (m->kind == BG_MODEL_BETA && !in->have_coef) {
        if (!isfinite(in->r25) || !isfinite(in->beta))
            return cli_usage_error(cmd, "the beta model needs --r25 and --beta (or --coef "
                                   "R0,beta)");
        coef[0] = in->r25, coef[1] = in->beta, n = 2;
    } else if (!in->have_coef)
        return cli_usage_error(cmd, "model '%s' needs --coef", name);
    else if (beta_given)
        return cli_usage_error(cmd, "--r25 and --beta go with the beta model instead of --coef");
    if (bg_model_set_coef(m, coef, n, &err) != BG_OK)
        return cli_usage_error(cmd, "%s", err.msg);
    return BG_OK;
}

void cli_json_reading(json_out *j, const bg_reading_row *g)
{
    json_obj(j, NULL);
    json_int(j, "id", g->id);
    json_int(j, "line", (long long)g->line);
    json_num(j, "t_raw", g->t_raw);
    json_str(j, "t_raw_unit", g->t_raw_unit);
    json_num(j, "t_k", g->t_k);
    json_num(j, "ohms", g->r_ohm);
    json_num(j, "u_temp_k", g->u_t_k);
    json_num(j, "u_ohms", g->u_r_ohm);
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
    json_str(j, "operator", r->operator_name[0] ? r->operator_name : NULL);
    json_str(j, "medium", r->medium[0] ? r->medium : NULL);
    json_str(j, "ambient", r->ambient[0] ? r->ambient : NULL);
    json_str(j, "excitation", r->excitation[0] ? r->excitation : NULL);
    json_str(j, "started_at", r->started_at);
    json_str(j, "source", r->source);
    json_str(j, "note", r->note[0] ? r->note : NULL);
    json_str(j, "imported_at", r->imported_at);
    json_int(j, "readings", r->nreadings);
    json_int(j, "excluded", r->nexcluded);
    json_int(j, "fits", r->nfits);
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
    if (f->model.kind == BG_MODEL_BETA)
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
