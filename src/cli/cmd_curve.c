/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap curve: the R-T table of a stored fit or of a model given inline, with the slope,
** alpha and, for a stored fit, the expanded uncertainty of the curve; rows outside the
** calibrated range are marked as extrapolated. */
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "cli.h"

static const char curve_usage[] =
    "Usage: bandgap curve (--fit N | --probe SERIAL | MODEL OPTIONS) (--from T --to T --step DT\n"
    "                     | --ohms R1,R2,...) [--unit C|K|F] [--csv | --json]\n"
    "The R-T table of a stored fit (--fit N, or the newest fit of --probe) or of a model given\n"
    "inline as for 'bandgap eval' (--model, --coef, --r25, --beta, --t0): for each temperature\n"
    "from --from to --to in steps of --step (any unit: 5C, 1K, 9F), or for each resistance of\n"
    "--ohms, the resistance or temperature, dT/dR, alpha = (1/R) dR/dT and, for a stored fit\n"
    "with degrees of freedom, the expanded uncertainty U (k = 2) of the curve.  Rows outside\n"
    "the calibrated range are marked EXTRAPOLATED: they are not calibrated values.\n";

#define MAXROWS 10000

int cmd_curve(int argc, char **argv, struct cli_ctx *ctx)
{
    enum { O_FIT = 1, O_PROBE, O_FROM, O_TO, O_STEP, O_OHMS, O_UNIT, O_CSV, O_JSON };
    static const struct option opts[] = {
        CLI_INLINE_OPTIONS,
        { "fit", required_argument, NULL, O_FIT },     { "probe", required_argument, NULL, O_PROBE },
        { "from", required_argument, NULL, O_FROM },   { "to", required_argument, NULL, O_TO },
        { "step", required_argument, NULL, O_STEP },   { "ohms", required_argument, NULL, O_OHMS },
        { "unit", required_argument, NULL, O_UNIT },   { "csv", no_argument, NULL, O_CSV },
        { "json", no_argument, NULL, O_JSON },         { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 },
    };
    static double rows_in[MAXROWS];
    bg_error err = BG_ERROR_INIT;
    struct cli_inline in;
    bg_fit_row fr;
    bg_model m;
    bg_temp_unit unit = BG_UNIT_C;
    const char *probe = NULL, *ohms = NULL;
    long long fit_id = 0;
    double from = NAN, to = NAN, step = NAN, lo = -INFINITY, hi = INFINITY;
    size_t nrows = 0;
    int c, rc, have_cov = 0, csv = 0, json = ctx->json;

    cli_inline_init(&in);
    opterr = 0;
    while ((c = getopt_long(argc, argv, ":h", opts, NULL)) != -1) {
        switch (c) {
        case 'h': fputs(curve_usage, stdout); return BG_OK;
        case CLI_IN_MODEL: case CLI_IN_COEF: case CLI_IN_R25: case CLI_IN_BETA: case CLI_IN_T0:
            if ((rc = cli_inline_option(&in, c, optarg, "curve")) != BG_OK)
                return rc;
            break;
        case O_FIT:
            if (cli_parse_id(optarg, &fit_id) != BG_OK)
                return cli_usage_error("curve", "--fit: '%s': not a fit id", optarg);
            break;
        case O_PROBE: probe = optarg; break;
        case O_FROM: case O_TO:
            if (bg_units_parse_temp(optarg, BG_UNIT_NONE, c == O_FROM ? &from : &to, &err) !=
                BG_OK)
                return cli_usage_error("curve", "--%s: %s", c == O_FROM ? "from" : "to",
                                       err.msg);
            break;
        case O_STEP:
            if (bg_units_parse_tdiff(optarg, &step, &err) != BG_OK)
                return cli_usage_error("curve", "--step: %s", err.msg);
            break;
        case O_OHMS: ohms = optarg; break;
        case O_UNIT:
            if (bg_units_parse_unit(optarg, &unit, &err) != BG_OK)
                return cli_usage_error("curve", "--unit: %s", err.msg);
            break;
        case O_CSV: csv = 1; break;
        case O_JSON: json = 1; break;
        case ':': return cli_usage_error("curve", "option '%s' needs a value", argv[optind - 1]);
        default: return cli_usage_error("curve", "unknown option '%s'", argv[optind - 1]);
        }
    }
    if (optind < argc)
        return cli_usage_error("curve", "unexpected argument '%s'", argv[optind]);
    if ((fit_id != 0) + (probe != NULL) + cli_inline_given(&in) != 1)
        return cli_usage_error("curve", "give one of --fit, --probe or a model (--model ...)");
    if (csv && json)
        return cli_usage_error("curve", "give --csv or --json, not both");
    if (ohms) {
        if (isfinite(from) || isfinite(to) || isfinite(step))
            return cli_usage_error("curve", "give --ohms or --from/--to/--step, not both");
        char buf[64];
        for (const char *p = ohms;;) {
            const char *cm = strchr(p, ',');
            size_t len = cm ? (size_t)(cm - p) : strlen(p);
            if (len == 0 || len >= sizeof buf || nrows == MAXROWS)
                return cli_usage_error("curve", "--ohms: expected resistances like 10k,4k7");
            memcpy(buf, p, len);
            buf[len] = '\0';
            if (bg_units_parse_ohms(buf, &rows_in[nrows++], &err) != BG_OK)
                return cli_usage_error("curve", "--ohms: %s", err.msg);
            if (!cm)
                break;
            p = cm + 1;
        }
    } else {
        if (!isfinite(from) || !isfinite(to) || !isfinite(step))
            return cli_usage_error("curve", "give --from, --to and --step (or --ohms)");
        if (to < from)
            return cli_usage_error("curve", "--to must not be below --from");
        double n = floor((to - from) / step + 1e-9) + 1;
        if (n > MAXROWS)
            return cli_usage_error("curve", "more than %d rows: use a larger --step", MAXROWS);
        for (size_t i = 0; i < (size_t)n; i++)
            rows_in[nrows++] = from + step * (double)i;
    }
    if (fit_id || probe) {
        bg_store *st = NULL;
        if ((rc = cli_open_store(ctx, 0, &st)) != BG_OK)
            return rc;
        if (probe)
            rc = cli_newest_fit(st, probe, &fit_id, &err);
        if (rc == BG_OK)
            rc = bg_store_fit_get(st, fit_id, &fr, &err);
        bg_store_close(st);
        if (rc != BG_OK)
            return cli_fail("curve", &err);
        m = fr.model;
        have_cov = fr.has_cov;
        lo = fr.t_min_k, hi = fr.t_max_k;
    } else if ((rc = cli_inline_model(&in, "curve", &m)) != BG_OK)
        return rc;

    char name[16];
    json_out j;
    bg_model_name(&m, name, sizeof name);
    if (json) {
        json_begin(&j, stdout);
        json_obj(&j, NULL);
        json_str(&j, "model", name);
        json_nums(&j, "coefficients", m.coef, bg_model_npar(&m));
        if (fit_id)
            json_int(&j, "fit_id", fit_id);
        json_num(&j, "t_min_k", isfinite(lo) ? lo : NAN);
        json_num(&j, "t_max_k", isfinite(hi) ? hi : NAN);
        json_arr(&j, "rows");
    } else if (csv)
        printf("t_k,ohms,dtdr_k_per_ohm,alpha_per_k,U_k2_k,extrapolated\n");
    else {
        const char *us = unit == BG_UNIT_K ? "T/K" : unit == BG_UNIT_F ? "T/degF" : "T/degC";
        if (fit_id)
            printf("model %s, stored fit %lld, calibrated %.3f .. %.3f degC\n", name, fit_id,
                   lo - BG_ZERO_C_K, hi - BG_ZERO_C_K);
        else
            printf("model %s, given inline (its calibrated range is not known)\n", name);
        printf("%12s %14s %14s %10s %11s\n", us, "R/ohm", "dT/dR K/ohm", "alpha %/K",
               have_cov ? "U(k=2)/mK" : "");
    }
    for (size_t i = 0; i < nrows; i++) {
        double t, r, d, a, u = NAN;
        if (ohms) {
            r = rows_in[i];
            rc = bg_model_t_from_r(&m, r, &t, &err);
        } else {
            t = rows_in[i];
            rc = bg_model_r_from_t(&m, t, &r, &err);
        }
        if (rc == BG_OK)
            rc = bg_model_dtdr(&m, r, &d, &err);
        if (rc == BG_OK)
            rc = bg_model_alpha(&m, t, &a, &err);
        if (rc != BG_OK) {
            if (json) {
                json_arr_end(&j);
                json_obj_end(&j);
                json_end(&j);
            }
            return cli_fail("curve", &err);
        }
        if (have_cov && bg_model_u_t(&m, fr.cov, t, &u, NULL) != BG_OK)
            u = NAN;
        int extra = fit_id && (t < lo - 1e-9 || t > hi + 1e-9);
        if (json) {
            json_obj(&j, NULL);
            json_num(&j, "t_k", t);
            json_num(&j, "ohms", r);
            json_num(&j, "dtdr_k_per_ohm", d);
            json_num(&j, "alpha_per_k", a);
            json_num(&j, "U_k2_k", 2.0 * u);
            json_bool(&j, "extrapolated", extra);
            json_obj_end(&j);
        } else if (csv) {
            printf("%.17g,%.17g,%.17g,%.17g,", t, r, d, a);
            if (isfinite(u))
                printf("%.17g", 2.0 * u);
            printf(",%d\n", extra);
        } else {
            char rb[32], ub[32] = "";
            if (isfinite(u))
                snprintf(ub, sizeof ub, "%.4f", 2e3 * u);
            printf("%12.3f %14s %14.6g %10.4f %11s%s\n", bg_units_from_k(t, unit),
                   bg_units_format_ohms(r, 7, rb, sizeof rb), d, 100.0 * a, ub,
                   extra ? "  EXTRAPOLATED" : "");
        }
    }
    if (json) {
        json_arr_end(&j);
        json_obj_end(&j);
        json_end(&j);
    }
    return BG_OK;
}
