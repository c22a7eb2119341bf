/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap eval: evaluate a model given inline, resistance to temperature and back: the
** values come from bg_curve_eval and are printed by cli_print_eval. */
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include "cli.h"

static const char eval_usage[] =
    "Usage: bandgap eval --model MODEL (--coef LIST | --r25 OHMS --beta K [--t0 TEMP])\n"
    "                    (--ohms OHMS | --temp TEMP)... [--unit C|K|F] [--pair T1/T2] [--json]\n"
    "Evaluate an R-T model: each --ohms gives the temperature, each --temp the resistance,\n"
    "with the slope dT/dR, alpha = (1/R) dR/dT and the local beta at that point.\n\n"
    "  --model M      sh3, sh4, beta or poly:N (N = 1..5)\n"
    "  --coef LIST    coefficients, comma-separated, in the order A,B,C (sh3), A,B,C,D (sh4:\n"
    "                 1/T = A + B L + C L^2 + D L^3), a0,...,aN (poly:N), R0,beta (beta)\n"
    "  --r25 OHMS     beta model: resistance at T0 (also --r0); 10k, 4k7, 1.5M accepted\n"
    "  --beta K       beta model: B constant in kelvin\n"
    "  --t0 TEMP      beta model: reference temperature (default 25C)\n"
    "  --pair T1/T2   also print the two-point B value for this pair (default 25/85, degC)\n"
    "  --ohms OHMS    a resistance to convert (repeatable)\n"
    "  --temp TEMP    a temperature to convert, with unit: 25C, 298.15K, 77F (repeatable)\n"
    "  --unit U       unit for printed temperatures: C (default), K or F\n"
    "  --json         one JSON object\n"
    "Other kinds (ptc, cvd, vbe, dvbe, ic, cheb:N; docs/methods.md): --reading X converts a\n"
    "reading in the model's quantity (V, reported degC, code; --ohms for a resistance);\n"
    "--param NAME=VALUE sets a held parameter (p=8, lsb_k=0.0625, x_lo=0.3).\n"
    "L = ln(R / 1 ohm), T in kelvin.  A model evaluated outside the range it was calibrated\n"
    "over gives numbers without meaning: this command does not know that range.\n";

struct eval_args {
    struct cli_inline in;
    double p1, p2;
    bg_temp_unit unit;
    bg_curve_query *q;
    size_t nq, cap;
};

/* Append a query, growing the array. */
static int add_query(struct eval_args *a, bg_curve_given given, double value)
{
    if (a->nq == a->cap) {
        size_t cap = a->cap ? 2 * a->cap : 8;
        bg_curve_query *q = realloc(a->q, cap * sizeof *q);
        if (!q) {
            cli_error("eval: out of memory for %zu values", cap);
            return BG_ENOMEM;
        }
        a->q = q, a->cap = cap;
    }
    a->q[a->nq].given = given;
    a->q[a->nq++].value = value;
    return BG_OK;
}

/* Parse the options into 'a'; -1 after --help. */
static int eval_parse(int argc, char **argv, struct eval_args *a, struct cli_ctx *ctx)
{
    enum { O_PAIR = 1, O_OHMS, O_TEMP, O_UNIT, O_JSON, O_READING };
    static const struct option opts[] = {
        CLI_INLINE_OPTIONS, CLI_INLINE_PARAM_OPTION,
        { "reading", required_argument, NULL, O_READING },
        { "pair", required_argument, NULL, O_PAIR },   { "ohms", required_argument, NULL, O_OHMS },
        { "temp", required_argument, NULL, O_TEMP },   { "unit", required_argument, NULL, O_UNIT },
        { "json", no_argument, NULL, O_JSON },         { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 },
    };
    bg_error err = BG_ERROR_INIT;
    double v;
    int c, rc;

    opterr = 0;
    while ((c = getopt_long(argc, argv, ":h", opts, NULL)) != -1) {
        switch (c) {
        case 'h': fputs(eval_usage, stdout); return -1;
        case CLI_IN_MODEL: case CLI_IN_COEF: case CLI_IN_R25: case CLI_IN_BETA: case CLI_IN_T0:
        case CLI_IN_PARAM:
            if ((rc = cli_inline_option(&a->in, c, optarg, "eval")) != BG_OK)
                return rc;
            break;
        case O_PAIR:
            if (bg_model_parse_pair(optarg, &a->p1, &a->p2, &err) != BG_OK)
                return cli_usage_error("eval", "--pair: %s", err.msg);
            break;
        case O_OHMS: case O_TEMP:
            if (c == O_OHMS && bg_units_parse_ohms(optarg, &v, &err) != BG_OK)
                return cli_usage_error("eval", "--ohms: %s", err.msg);
            if (c == O_TEMP && bg_units_parse_temp(optarg, BG_UNIT_NONE, &v, &err) != BG_OK)
                return cli_usage_error("eval", "--temp: %s", err.msg);
            if ((rc = add_query(a, c == O_TEMP ? BG_CURVE_AT_TEMP : BG_CURVE_AT_OHMS, v)) !=
                BG_OK)
                return rc;
            break;
        case O_READING: {
            char *end;
            v = strtod(optarg, &end);
            if (end == optarg || *end || !isfinite(v))
                return cli_usage_error("eval", "--reading: '%s': a number in the model's "
                                       "quantity (volts, reported degC, code)", optarg);
            if ((rc = add_query(a, BG_CURVE_AT_OHMS, v)) != BG_OK)
                return rc;
            break;
        }
        case O_UNIT:
            if (bg_units_parse_unit(optarg, &a->unit, &err) != BG_OK)
                return cli_usage_error("eval", "--unit: %s", err.msg);
            break;
        case O_JSON: ctx->json = 1; break;
        case ':': return cli_usage_error("eval", "option '%s' needs a value", argv[optind - 1]);
        default: return cli_unknown_option("eval", argv[optind - 1], opts);
        }
    }
    if (optind < argc)
        return cli_usage_error("eval", "unexpected argument '%s'", argv[optind]);
    return BG_OK;
}

/* Build the model, check the queries and evaluate them with the B value of the pair. */
static int eval_compute(struct eval_args *a, bg_curve_src *src, bg_curve *c)
{
    bg_error err = BG_ERROR_INIT;
    bg_model m;
    int rc;

    if ((rc = cli_inline_model(&a->in, "eval", &m)) != BG_OK)
        return rc;
    if (bg_model_flags(&m) & BG_MODEL_R0_BETA)
        m.pair_t1_k = a->p1, m.pair_t2_k = a->p2;
    if (a->nq == 0)
        return cli_usage_error("eval", "give at least one --ohms, --reading or --temp");
    *src = bg_curve_src_of_model(&m);
    src->b_pair_t1_k = a->p1, src->b_pair_t2_k = a->p2;
    if (bg_curve_eval(src, a->q, a->nq, c, &err) != BG_OK)
        return cli_fail("eval", &err);
    return BG_OK;
}

int cmd_eval(int argc, char **argv, struct cli_ctx *ctx)
{
    struct eval_args a = { .p1 = 298.15, .p2 = 358.15, .unit = BG_UNIT_C };
    bg_curve_src src;
    bg_curve c = BG_CURVE_INIT;
    int rc;

    cli_inline_init(&a.in);
    rc = eval_parse(argc, argv, &a, ctx);
    if (rc == BG_OK && (rc = eval_compute(&a, &src, &c)) == BG_OK)
        cli_print_eval(&src, &c, a.unit, ctx->json);
    bg_curve_release(&c);
    free(a.q);
    return rc < 0 ? BG_OK : rc;
}
