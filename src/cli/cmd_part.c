/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap part set|show: what a part number specifies (its nominal curve, a tolerance in
** kelvin over a range, the QA defaults of its lots), kept as rows that are only added. */
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

static const char part_usage[] =
    "Usage: bandgap part set PART [--model KIND --coef A,B,... | --r25 OHMS --beta K |\n"
    "                              --table FILE.csv [--model KIND]]\n"
    "                             [--tol DT --over T1/T2] [--baseline N] [--limit DT]\n"
    "                             [--rate-limit DT] [--note TEXT]\n"
    "       bandgap part show PART [--json]\n"
    "set: a new specification of part PART (the lots name their part).  The nominal curve is\n"
    "any model the tool fits: coefficients (--model sh3 --coef ...), a beta curve (--r25,\n"
    "--beta), or an R-T table in the readings CSV format (temp_c and ohms columns) fitted\n"
    "with --model (default sh3) in temperature, equal weights.  --tol 0.2K --over -20/70\n"
    "(degC): the interchangeability tolerance in kelvin over a range.  --baseline, --limit and\n"
    "--rate-limit: the defaults of drift and report for the part's lots.  Each set stores a\n"
    "whole new row (what is not given is not set); the older rows stay, and reports issued\n"
    "before keep the curve they show.\n"
    "show: every specification of the part, oldest first; the newest is in force.\n";

struct part_args {
    bg_part_spec spec;
    struct cli_inline in;
    const char *table;
    int json, help;
};

/* --tol, --over, --baseline, --limit, --rate-limit, --note into 'a'. */
static int part_option(struct part_args *a, int c, const char *arg)
{
    enum { O_TABLE = 1, O_TOL, O_OVER, O_BASE, O_LIMIT, O_RATE, O_NOTE };
    bg_error err = BG_ERROR_INIT;
    bg_part_spec *p = &a->spec;
    long long n;
    switch (c) {
    case O_TABLE: a->table = arg; return BG_OK;
    case O_TOL: case O_LIMIT: case O_RATE: {
        static const char *const nm[] = { "tol", "limit", "rate-limit" };
        int k = c == O_TOL ? 0 : c == O_LIMIT ? 1 : 2;
        double *v = k == 0 ? &p->tol_k : k == 1 ? &p->limit_k : &p->rate_k;
        if (bg_units_parse_tdiff(arg, v, &err) != BG_OK)
            return cli_usage_error("part", "--%s: %s", nm[k], err.msg);
        if (!(*v > 0.0))
            return cli_usage_error("part", "--%s: '%s': expected a value above 0", nm[k], arg);
        return BG_OK;
    }
    case O_OVER:
        if (bg_model_parse_pair(arg, &p->tol_lo_k, &p->tol_hi_k, &err) != BG_OK)
            return cli_usage_error("part", "--over: %s", err.msg);
        if (!(p->tol_hi_k > p->tol_lo_k))
            return cli_usage_error("part", "--over: '%s': give the lower temperature first", arg);
        return BG_OK;
    case O_BASE:
        if (cli_parse_id(arg, &n) != BG_OK)
            return cli_usage_error("part", "--baseline: '%s': not a number of lots", arg);
        p->baseline = (size_t)n;
        return BG_OK;
    default:
        if (strlen(arg) >= sizeof p->note)
            return cli_usage_error("part", "--note is longer than %zu bytes", sizeof p->note - 1);
        snprintf(p->note, sizeof p->note, "%s", arg);
        return BG_OK;
    }
}

static int part_parse(int argc, char **argv, struct part_args *a, struct cli_ctx *ctx)
{
    static const struct option opts[] = {
        CLI_INLINE_OPTIONS,
        { "table", required_argument, NULL, 1 },      { "tol", required_argument, NULL, 2 },
        { "over", required_argument, NULL, 3 },       { "baseline", required_argument, NULL, 4 },
        { "limit", required_argument, NULL, 5 },      { "rate-limit", required_argument, NULL, 6 },
        { "note", required_argument, NULL, 7 },       { "json", no_argument, NULL, 8 },
        { "help", no_argument, NULL, 'h' },           { NULL, 0, NULL, 0 },
    };
    int c, rc;
    a->json = ctx->json;
    opterr = 0;
    while ((c = getopt_long(argc, argv, ":h", opts, NULL)) != -1) {
        if (c == 'h') {
            a->help = 1;
            return BG_OK;
        } else if (c >= CLI_IN_MODEL && c <= CLI_IN_T0)
            rc = cli_inline_option(&a->in, c, optarg, "part");
        else if (c >= 1 && c <= 7)
            rc = part_option(a, c, optarg);
        else if (c == 8)
            a->json = 1, rc = BG_OK;
        else if (c == ':')
            return cli_usage_error("part", "option '%s' needs a value", argv[optind - 1]);
        else
            return cli_unknown_option("part", argv[optind - 1], opts);
        if (rc != BG_OK)
            return rc;
    }
    if (optind + 2 != argc)
        return cli_usage_error("part", "say set PART or show PART");
    if ((a->spec.tol_k > 0.0) != (a->spec.tol_hi_k > 0.0))
        return cli_usage_error("part", "--tol DT and --over T1/T2 go together");
    return BG_OK;
}

/* The nominal curve from the options: a model inline, or the kind to fit to --table. */
static int part_model(struct part_args *a)
{
    bg_error err = BG_ERROR_INIT;
    if (a->table) {
        if (a->in.have_coef || isfinite(a->in.r25) || isfinite(a->in.beta))
            return cli_usage_error("part", "--table is fitted: give --model KIND only");
        if (bg_model_parse(a->in.model ? a->in.model : "sh3", &a->spec.model, &err) != BG_OK)
            return cli_usage_error("part", "--model: %s", err.msg);
        a->spec.have_model = 1;
        return BG_OK;
    }
    if (!cli_inline_given(&a->in))
        return BG_OK;
    a->spec.have_model = 1;
    return cli_inline_model(&a->in, "part", &a->spec.model);
}

static void spec_json(json_out *j, const bg_part_spec *p)
{
    char name[32];
    json_obj(j, NULL);
    json_int(j, "id", p->id);
    json_str(j, "part", p->part);
    json_str(j, "created_at", p->created_at);
    if (p->have_model) {
        json_str(j, "model", bg_model_name(&p->model, name, sizeof name));
        json_nums(j, "coef", p->model.coef, bg_model_npar(&p->model));
        if (bg_model_flags(&p->model) & BG_MODEL_HAS_T0)
            json_num(j, "t0_k", p->model.t0_k);
        json_str(j, "source", p->source);
    } else
        json_null(j, "model");
    if (p->tol_k > 0.0) {
        json_num(j, "tol_mk", 1e3 * p->tol_k);
        json_num(j, "tol_from_k", p->tol_lo_k);
        json_num(j, "tol_to_k", p->tol_hi_k);
    } else
        json_null(j, "tol_mk");
    if (p->baseline)
        json_int(j, "baseline_lots", (long long)p->baseline);
    else
        json_null(j, "baseline_lots");
    p->limit_k > 0.0 ? json_num(j, "limit_mk", 1e3 * p->limit_k) : json_null(j, "limit_mk");
    p->rate_k > 0.0 ? json_num(j, "rate_limit_mk_per_year", 1e3 * p->rate_k)
                    : json_null(j, "rate_limit_mk_per_year");
    json_str(j, "note", p->note);
    json_obj_end(j);
}

static void spec_text(const bg_part_spec *p, const char *pre)
{
    char name[32];
    printf("%sspecification %lld of part %s, %s\n", pre, p->id, p->part, p->created_at);
    if (p->have_model) {
        printf("%s  nominal curve: %s (%s)\n%s   ", pre, bg_model_name(&p->model, name,
               sizeof name), p->source, pre);
        for (size_t i = 0; i < bg_model_npar(&p->model); i++)
            printf(" %s = %.10g", bg_model_coef_name(&p->model, i), p->model.coef[i]);
        printf("\n");
    } else
        printf("%s  nominal curve: none (each lot's R25 and B as a beta curve)\n", pre);
    if (p->tol_k > 0.0)
        printf("%s  tolerance: +-%.1f mK from %.2f to %.2f degC\n", pre, 1e3 * p->tol_k,
               p->tol_lo_k - BG_ZERO_C_K, p->tol_hi_k - BG_ZERO_C_K);
    if (p->baseline)
        printf("%s  control limits from the first %zu lot(s)\n", pre, p->baseline);
    if (p->limit_k > 0.0)
        printf("%s  drift limit %.1f mK\n", pre, 1e3 * p->limit_k);
    if (p->rate_k > 0.0)
        printf("%s  drift rate limit %.1f mK/year\n", pre, 1e3 * p->rate_k);
    if (p->note[0])
        printf("%s  note: %s\n", pre, p->note);
}

struct show_ctx {
    json_out *j;
    size_t n;
    long long last;
};

static int show_cb(const bg_part_spec *p, void *vctx)
{
    struct show_ctx *c = vctx;
    if (c->j)
        spec_json(c->j, p);
    else
        spec_text(p, "");
    c->n++, c->last = p->id;
    return 0;
}

static int part_set(struct part_args *a, struct cli_ctx *ctx)
{
    bg_qa_part_set_result r;
    bg_error err = BG_ERROR_INIT;
    bg_store *st = NULL;
    int rc = part_model(a);
    if (rc != BG_OK || (rc = cli_open_store(ctx, 0, &st)) != BG_OK)
        return rc;
    rc = bg_qa_part_set(st, &a->spec, a->table, &r, &err);
    bg_store_close(st);
    if (rc != BG_OK)
        return cli_fail("part set", &err);
    if (a->json) {
        json_out j;
        json_begin(&j, stdout);
        spec_json(&j, &r.spec);
        json_end(&j);
    } else
        spec_text(&r.spec, "stored ");
    return BG_OK;
}

static int part_show(struct part_args *a, struct cli_ctx *ctx)
{
    bg_error err = BG_ERROR_INIT;
    bg_store *st = NULL;
    json_out j;
    struct show_ctx c = { a->json ? &j : NULL, 0, 0 };
    int rc = cli_open_store(ctx, 0, &st);
    if (rc != BG_OK)
        return rc;
    if (a->json) {
        json_begin(&j, stdout);
        json_arr(&j, NULL);
    }
    rc = bg_store_part_spec_each(st, a->spec.part, show_cb, &c, &err);
    if (a->json) {
        json_arr_end(&j);
        json_end(&j);
    } else if (rc == BG_OK && c.n == 0)
        printf("part %s has no specification (bandgap part set %s ...)\n", a->spec.part,
               a->spec.part);
    else if (rc == BG_OK)
        printf("in force: specification %lld (the newest)\n", c.last);
    bg_store_close(st);
    return rc == BG_OK ? BG_OK : cli_fail("part show", &err);
}

int cmd_part(int argc, char **argv, struct cli_ctx *ctx)
{
    struct part_args a;
    memset(&a, 0, sizeof a);
    cli_inline_init(&a.in);
    int rc = part_parse(argc, argv, &a, ctx);
    if (rc != BG_OK || a.help) {
        if (a.help)
            fputs(part_usage, stdout);
        return rc;
    }
    const char *verb = argv[optind], *part = argv[optind + 1];
    if (strlen(part) >= sizeof a.spec.part)
        return cli_usage_error("part", "part is longer than %zu bytes", sizeof a.spec.part - 1);
    snprintf(a.spec.part, sizeof a.spec.part, "%s", part);
    if (strcmp(verb, "set") == 0)
        return part_set(&a, ctx);
    if (strcmp(verb, "show") == 0)
        return part_show(&a, ctx);
    return cli_usage_error("part", "unknown action '%s' (set or show)", verb);
}
