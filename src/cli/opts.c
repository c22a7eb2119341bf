/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The options several commands share: the curve a command works on (--fit N, --probe SERIAL
** or a model given inline: --model, --coef, --r25/--r0, --beta, --t0) and the output choice
** (--csv or --json). */
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

void cli_inline_init(struct cli_inline *in)
{
    in->model = NULL;
    in->ncoef = 0;
    in->have_coef = 0;
    in->r25 = NAN, in->beta = NAN, in->t0_k = BG_T0_DEFAULT_K;
    in->nparam = 0;
}

/* --param NAME=VALUE into 'in'. */
static int inline_param(struct cli_inline *in, const char *arg, const char *cmd)
{
    const char *eq = strchr(arg, '=');
    char *end;
    size_t len = eq ? (size_t)(eq - arg) : 0;
    if (!eq || len == 0 || len >= sizeof in->pname[0])
        return cli_usage_error(cmd, "--param: '%s': write NAME=VALUE (p=8, lsb_k=0.0625)", arg);
    if (in->nparam == sizeof in->pval / sizeof in->pval[0])
        return cli_usage_error(cmd, "--param: at most %zu", in->nparam);
    in->pval[in->nparam] = strtod(eq + 1, &end);
    if (end == eq + 1 || *end)
        return cli_usage_error(cmd, "--param: '%s': not a number after '='", arg);
    memcpy(in->pname[in->nparam], arg, len);
    in->pname[in->nparam++][len] = '\0';
    return BG_OK;
}

int cli_inline_given(const struct cli_inline *in)
{
    return in->model || in->have_coef || isfinite(in->r25) || isfinite(in->beta);
}

int cli_inline_option(struct cli_inline *in, int opt, const char *arg, const char *cmd)
{
    bg_error err = BG_ERROR_INIT;
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
        if (bg_units_parse_si(arg, "K", &in->beta, &err) != BG_OK)
            return cli_usage_error(cmd, "--beta: %s", err.msg);
        return BG_OK;
    case CLI_IN_PARAM:
        return inline_param(in, arg, cmd);
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
    if ((bg_model_flags(m) & BG_MODEL_R0_BETA) && !in->have_coef) {
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
    for (size_t i = 0; i < in->nparam; i++)
        if (bg_model_set_param(m, in->pname[i], in->pval[i], &err) != BG_OK)
            return cli_usage_error(cmd, "--param: %s", err.msg);
    if (bg_model_check_params(m, &err) != BG_OK)
        return cli_usage_error(cmd, "%s", err.msg);
    return BG_OK;
}

/* Which fit --probe chose, and why: one line on stderr. */
static void say_current(const char *cmd, const struct cli_fit_used *u)
{
    fprintf(stderr, "bandgap: %s: probe %s: current fit %lld (%s), the newest fit of its latest "
            "run %lld (started %s)\n", cmd, u->serial, u->fit_id, u->model, u->run_id,
            u->started_at);
}

int cli_stored_fit(bg_store *st, const char *serial, long long fit_id, const char *cmd,
                   bg_fit_row *fit, struct cli_fit_used *used, bg_error *err)
{
    bg_error e2 = BG_ERROR_INIT;
    bg_fit_row cur;
    bg_run run;
    int rc = serial ? bg_store_current_fit(st, serial, fit, &run, err)
                    : bg_store_fit_get(st, fit_id, fit, err);
    if (rc == BG_OK && !serial)
        rc = bg_store_run_get(st, fit->run_id, &run, err);
    if (rc != BG_OK)
        return rc;
    memset(used, 0, sizeof *used);
    used->fit_id = fit->id, used->run_id = fit->run_id, used->current = serial != NULL;
    snprintf(used->serial, sizeof used->serial, "%s", fit->serial);
    snprintf(used->started_at, sizeof used->started_at, "%s", run.started_at);
    snprintf(used->created_at, sizeof used->created_at, "%s", fit->created_at);
    bg_model_name(&fit->model, used->model, sizeof used->model);
    if (serial)
        say_current(cmd, used);
    else if (bg_store_current_fit(st, fit->serial, &cur, &run, &e2) == BG_OK && cur.id != fit->id)
        fprintf(stderr, "bandgap: %s: note: fit %lld (run %lld, started %s) is not the current "
                "fit of probe %s, which is fit %lld of run %lld (started %s)\n", cmd, fit->id,
                fit->run_id, used->started_at, fit->serial, cur.id, cur.run_id, run.started_at);
    return BG_OK;
}

void cli_json_fit_used(json_out *j, const struct cli_fit_used *used)
{
    json_int(j, "fit_id", used->fit_id);
    json_int(j, "run_id", used->run_id);
    json_str(j, "probe", used->serial);
    json_str(j, "run_started_at", used->started_at);
    json_str(j, "fit_created_at", used->created_at);
    json_str(j, "fit_chosen", used->current ? "current fit of the probe" : "named with --fit");
}

void cli_source_init(struct cli_source *s)
{
    cli_inline_init(&s->in);
    s->fit_id = 0;
    s->probe = NULL;
}

int cli_source_option(struct cli_source *s, int opt, const char *arg, const char *cmd,
                      int *rc)
{
    switch (opt) {
    case CLI_IN_MODEL: case CLI_IN_COEF: case CLI_IN_R25: case CLI_IN_BETA: case CLI_IN_T0:
    case CLI_IN_PARAM:
        *rc = cli_inline_option(&s->in, opt, arg, cmd);
        return 1;
    case CLI_SRC_FIT:
        *rc = BG_OK;
        if (cli_parse_id(arg, &s->fit_id) != BG_OK)
            *rc = cli_usage_error(cmd, "--fit: '%s': not a fit id (a whole number from 1 to "
                                  "9223372036854775807)", arg);
        return 1;
    case CLI_SRC_PROBE:
        s->probe = arg;
        *rc = BG_OK;
        return 1;
    default: return 0;
    }
}

int cli_source_check(const struct cli_source *s, const char *cmd)
{
    if ((s->fit_id != 0) + (s->probe != NULL) + cli_inline_given(&s->in) != 1)
        return cli_usage_error(cmd, "give one of --fit, --probe or a model (--model ...)");
    return BG_OK;
}

bg_curve_src cli_curve_src_of_fit(const bg_fit_row *f)
{
    bg_curve_src s = bg_curve_src_of_model(&f->model);
    s.has_cov = f->has_cov;
    if (f->has_cov)
        memcpy(s.cov, f->cov, f->npar * f->npar * sizeof f->cov[0]);
    s.has_range = 1;
    s.t_min_k = f->t_min_k, s.t_max_k = f->t_max_k;
    s.dof = f->dof;
    return s;
}

/* The stored fit 's' names (by id, or the current fit of its probe) as a curve source. */
static int source_stored(struct cli_source *s, struct cli_ctx *ctx, const char *cmd,
                         bg_curve_src *out)
{
    bg_error err = BG_ERROR_INIT;
    bg_store *st = NULL;
    bg_fit_row fr;
    int rc = cli_open_store(ctx, 0, &st);
    if (rc != BG_OK)
        return rc;
    rc = cli_stored_fit(st, s->probe, s->fit_id, cmd, &fr, &s->used, &err);
    if (rc == BG_OK)
        s->fit_id = fr.id;
    bg_store_close(st);
    if (rc != BG_OK)
        return cli_fail(cmd, &err);
    *out = cli_curve_src_of_fit(&fr);
    return BG_OK;
}

int cli_source_resolve(struct cli_source *s, struct cli_ctx *ctx, const char *cmd,
                       bg_curve_src *out)
{
    bg_model m;
    int rc;
    if (s->fit_id || s->probe)
        return source_stored(s, ctx, cmd, out);
    if ((rc = cli_inline_model(&s->in, cmd, &m)) != BG_OK)
        return rc;
    *out = bg_curve_src_of_model(&m);
    return BG_OK;
}

int cli_output_option(struct cli_output *o, int opt)
{
    if (opt == CLI_OUT_CSV)
        o->csv = 1;
    else if (opt == CLI_OUT_JSON)
        o->json = 1;
    else
        return 0;
    return 1;
}

int cli_output_choose(const struct cli_output *o, const struct cli_ctx *ctx, int required,
                      const char *cmd, enum cli_format *fmt)
{
    int json = o->json || (ctx->json && !(required && o->csv));
    if (required && o->csv == json)
        return cli_usage_error(cmd, "give --csv or --json");
    if (o->csv && json)
        return cli_usage_error(cmd, "give --csv or --json, not both");
    *fmt = o->csv ? CLI_FMT_CSV : json ? CLI_FMT_JSON : CLI_FMT_TEXT;
    return BG_OK;
}

int cli_unknown_option(const char *cmd, const char *arg, const struct option *opts)
{
    const char *names[64], *word = arg, *near;
    size_t n = 0, len;
    while (*word == '-')
        word++;
    len = strcspn(word, "=");
    for (; opts && opts[n].name && n < sizeof names / sizeof names[0]; n++)
        names[n] = opts[n].name;
    near = word != arg + 1 ? bg_suggest(word, len, names, n) : NULL; /* not for "-x" */
    if (near)
        return cli_usage_error(cmd, "unknown option '%s' (did you mean '--%s'?)", arg, near);
    return cli_usage_error(cmd, "unknown option '%s'", arg);
}
