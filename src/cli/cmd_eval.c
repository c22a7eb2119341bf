/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap eval: evaluate a model given inline, resistance to temperature and back. */
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "cli.h"

#define MAXQ 64

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
    "L = ln(R / 1 ohm), T in kelvin.  A model evaluated outside the range it was calibrated\n"
    "over gives numbers without meaning: this command does not know that range.\n";

struct query { int is_temp; double in; double t_k, r_ohm, dtdr, alpha, beta; };

int cmd_eval(int argc, char **argv, struct cli_ctx *ctx)
{
    enum { O_PAIR = 1, O_OHMS, O_TEMP, O_UNIT, O_JSON };
    static const struct option opts[] = {
        CLI_INLINE_OPTIONS,
        { "pair", required_argument, NULL, O_PAIR },   { "ohms", required_argument, NULL, O_OHMS },
        { "temp", required_argument, NULL, O_TEMP },   { "unit", required_argument, NULL, O_UNIT },
        { "json", no_argument, NULL, O_JSON },         { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 },
    };
    bg_error err = BG_ERROR_INIT;
    bg_model m;
    struct cli_inline in;
    double p1 = 298.15, p2 = 358.15, b_pair = NAN;
    size_t nq = 0, ncoef;
    int c, rc;
    bg_temp_unit unit = BG_UNIT_C;
    struct query q[MAXQ];
    char name[16], b1[64], b2[64];

    cli_inline_init(&in);
    opterr = 0;
    while ((c = getopt_long(argc, argv, ":h", opts, NULL)) != -1) {
        switch (c) {
        case 'h': fputs(eval_usage, stdout); return BG_OK;
        case CLI_IN_MODEL: case CLI_IN_COEF: case CLI_IN_R25: case CLI_IN_BETA: case CLI_IN_T0:
            if ((rc = cli_inline_option(&in, c, optarg, "eval")) != BG_OK)
                return rc;
            break;
        case O_PAIR:
            if (bg_model_parse_pair(optarg, &p1, &p2, &err) != BG_OK)
                return cli_usage_error("eval", "--pair: %s", err.msg);
            break;
        case O_OHMS: case O_TEMP:
            if (nq == MAXQ)
                return cli_usage_error("eval", "at most %d values", MAXQ);
            q[nq].is_temp = (c == O_TEMP);
            if (c == O_OHMS && bg_units_parse_ohms(optarg, &q[nq].in, &err) != BG_OK)
                return cli_usage_error("eval", "--ohms: %s", err.msg);
            if (c == O_TEMP && bg_units_parse_temp(optarg, BG_UNIT_NONE, &q[nq].in, &err) != BG_OK)
                return cli_usage_error("eval", "--temp: %s", err.msg);
            nq++;
            break;
        case O_UNIT:
            if (bg_units_parse_unit(optarg, &unit, &err) != BG_OK)
                return cli_usage_error("eval", "--unit: %s", err.msg);
            break;
        case O_JSON: ctx->json = 1; break;
        case ':': return cli_usage_error("eval", "option '%s' needs a value", argv[optind - 1]);
        default: return cli_usage_error("eval", "unknown option '%s'", argv[optind - 1]);
        }
    }
    if (optind < argc)
        return cli_usage_error("eval", "unexpected argument '%s'", argv[optind]);
    if ((rc = cli_inline_model(&in, "eval", &m)) != BG_OK)
        return rc;
    if (m.kind == BG_MODEL_BETA)
        m.pair_t1_k = p1, m.pair_t2_k = p2;
    ncoef = bg_model_npar(&m);
    if (nq == 0)
        return cli_usage_error("eval", "give at least one --ohms or --temp");

    for (size_t i = 0; i < nq; i++) {
        if (q[i].is_temp) {
            q[i].t_k = q[i].in;
            rc = bg_model_r_from_t(&m, q[i].t_k, &q[i].r_ohm, &err);
        } else {
            q[i].r_ohm = q[i].in;
            rc = bg_model_t_from_r(&m, q[i].r_ohm, &q[i].t_k, &err);
        }
        if (rc == BG_OK)
            rc = bg_model_dtdr(&m, q[i].r_ohm, &q[i].dtdr, &err);
        if (rc == BG_OK)
            rc = bg_model_alpha(&m, q[i].t_k, &q[i].alpha, &err);
        if (rc == BG_OK)
            rc = bg_model_beta_local(&m, q[i].t_k, &q[i].beta, &err);
        if (rc != BG_OK)
            return cli_fail("eval", &err);
    }
    if (bg_model_b_pair(&m, p1, p2, &b_pair, &err) != BG_OK)
        b_pair = NAN;

    bg_model_name(&m, name, sizeof name);
    if (ctx->json) {
        json_out j;
        json_begin(&j, stdout);
        json_obj(&j, NULL);
        json_str(&j, "model", name);
        json_arr(&j, "coefficient_names");
        for (size_t i = 0; i < ncoef; i++)
            json_str(&j, NULL, bg_model_coef_name(&m, i));
        json_arr_end(&j);
        json_nums(&j, "coefficients", m.coef, ncoef);
        if (m.kind == BG_MODEL_BETA)
            json_num(&j, "t0_k", m.t0_k);
        json_arr(&j, "results");
        for (size_t i = 0; i < nq; i++) {
            json_obj(&j, NULL);
            json_str(&j, "given", q[i].is_temp ? "temperature" : "resistance");
            json_num(&j, "ohms", q[i].r_ohm);
            json_num(&j, "t_k", q[i].t_k);
            json_num(&j, "t_c", bg_units_from_k(q[i].t_k, BG_UNIT_C));
            json_num(&j, "dtdr_k_per_ohm", q[i].dtdr);
            json_num(&j, "alpha_per_k", q[i].alpha);
            json_num(&j, "beta_local_k", q[i].beta);
            json_obj_end(&j);
        }
        json_arr_end(&j);
        json_obj(&j, "b_pair");
        json_num(&j, "t1_k", p1);
        json_num(&j, "t2_k", p2);
        json_num(&j, "b_k", b_pair);
        json_obj_end(&j);
        json_obj_end(&j);
        json_end(&j);
        return BG_OK;
    }
    printf("%12s  %12s  %13s  %9s  %9s\n", "R/ohm", bg_units_symbol(unit, 1)[0] == 'K' ?
           "T/K" : unit == BG_UNIT_F ? "T/degF" : "T/degC", "dT/dR K/ohm", "alpha %/K",
           "beta/K");
    for (size_t i = 0; i < nq; i++) {
        printf("%12s  %12.3f  %13.6g  %9.4f  %9.2f\n",
               bg_units_format_ohms(q[i].r_ohm, 6, b1, sizeof b1),
               bg_units_from_k(q[i].t_k, unit), q[i].dtdr, 100.0 * q[i].alpha, q[i].beta);
    }
    if (isfinite(b_pair)) {
        bg_units_format_temp(p1, BG_UNIT_C, 2, b1, sizeof b1);
        bg_units_format_temp(p2, BG_UNIT_C, 2, b2, sizeof b2);
        printf("B(%s / %s) = %.2f K\n", b1, b2, b_pair);
    }
    return BG_OK;
}
