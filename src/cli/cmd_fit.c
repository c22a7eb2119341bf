/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap fit: parse the options, calibrate a readings file, a stored run or a lot through the
** library (bg_calibrate_*), and print the result (print_fit.c). */
#include <getopt.h>
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
    "                   picks by BIC and says why); for other sensors: ptc, ptc-lin,\n"
    "                   cvd, cvd2 (platinum), vbe, dvbe, cheb:N (junction volts), ic,\n"
    "                   ic:N (reported_c), ic-code (code); see docs/methods.md\n"
    "  --param N=V      a kind's held parameter: p=8 (dvbe), lsb_k=0.0625 (ic, ic-code)\n"
    "  --bound DT       fit in ranges, each holding |residual| <= DT (e.g. 10mK): a range\n"
    "                   that does not is halved at its middle reading (a named model)\n"
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
    "  --coverage-k K   expanded uncertainty U = K u with this coverage factor (e.g. 2),\n"
    "                   its coverage probability stated; default: K from Student's t for\n"
    "                   the fit's degrees of freedom at 95.45 % (JCGM 100:2008, G.3)\n"
    "  --resolution DT  the readings' temperature resolution (e.g. 1mK): residuals are not\n"
    "                   studentized by a scale below DT / sqrt(12) (default 10uK), so\n"
    "                   noise-free readings raise no outlier warning\n"
    "  --unit U         unit for printed temperatures: C (default), K or F\n"
    "  --residuals all  print every residual; above 1000 readings the text shows the\n"
    "                   20 largest and a count by studentized residual (--json: all)\n"
    "  --json           one JSON object\n"
    "  --probe SERIAL   fit the probe's latest run (or --run N) in the database and store\n"
    "                   the fit; the readings excluded with 'bandgap exclude' are left out.\n"
    "                   A fit identical to one the run has (same readings, model and\n"
    "                   options) is not stored again: the stored one is named\n"
    "  --dry-run        with --probe: fit and print, store nothing (a preview)\n"
    "  --store-again    with --probe: store the fit even when the run has an identical one\n"
    "                   (it then becomes the run's newest, chosen fit again)\n"
    "  --lot CODE       fit the latest run of every probe of the lot in one transaction:\n"
    "                   all fits are stored, or none when any probe fails\n"
    "Readings CSV: a header naming columns temp_c|temp_k|temp_f, ohms (or volts,\n"
    "reported_c, code), and optionally u_temp_k, u_ohms|u_volts, excite_a, time, note\n"
    "(docs/readings-csv.md).\n"
    "Results hold only inside the calibrated range and the stated uncertainty; for medical,\n"
    "food-safety or process-safety use follow local regulations and accredited practice.\n";

enum { O_MODEL = 1, O_T0, O_PAIR, O_UTEMP, O_AT, O_LINEAR, O_NOINFL, O_UNIT, O_JSON, O_PROBE,
       O_RUN, O_LOT, O_DRY, O_AGAIN, O_COVK, O_RESOL, O_RESID, O_PARAM, O_BOUND };

/* The options of 'fit' beyond the library's request. */
struct fit_cli {
    bg_calib_request rq;
    bg_temp_unit unit;
    const char *serial, *lot;
    long long run_id;
    int all_residuals;
    double bound_k;        /* --bound: fit in ranges that each hold it; 0: one fit */
    const char **pnames;   /* --param NAME=VALUE, room for every argument */
    double *pvalues;
};

static const struct option fit_opts[] = {
    { "model", required_argument, NULL, O_MODEL }, { "t0", required_argument, NULL, O_T0 },
    { "pair", required_argument, NULL, O_PAIR },   { "u-temp", required_argument, NULL, O_UTEMP },
    { "at", required_argument, NULL, O_AT },       { "linear", no_argument, NULL, O_LINEAR },
    { "no-inflate", no_argument, NULL, O_NOINFL }, { "unit", required_argument, NULL, O_UNIT },
    { "json", no_argument, NULL, O_JSON },         { "help", no_argument, NULL, 'h' },
    { "probe", required_argument, NULL, O_PROBE }, { "run", required_argument, NULL, O_RUN },
    { "lot", required_argument, NULL, O_LOT },     { "dry-run", no_argument, NULL, O_DRY },
    { "store-again", no_argument, NULL, O_AGAIN }, { "coverage-k", required_argument, NULL, O_COVK },
    { "resolution", required_argument, NULL, O_RESOL },
    { "residuals", required_argument, NULL, O_RESID },
    { "param", required_argument, NULL, O_PARAM },
    { "bound", required_argument, NULL, O_BOUND }, { NULL, 0, NULL, 0 },
};

/* Take one option; BG_OK, or the usage error's code. */
static int fit_option(struct fit_cli *fc, int c, char **argv, double *at_k, struct cli_ctx *ctx)
{
    bg_calib_request *rq = &fc->rq;
    bg_model probe;
    bg_error err = BG_ERROR_INIT;

    switch (c) {
    case O_MODEL:
        if (strcmp(optarg, "auto") != 0 && bg_model_parse(optarg, &probe, &err) != BG_OK)
            return cli_usage_error("fit", "--model: %s", err.msg);
        rq->model = optarg;
        return BG_OK;
    case O_T0:
        if (bg_units_parse_temp(optarg, BG_UNIT_NONE, &rq->t0_k, &err) != BG_OK)
            return cli_usage_error("fit", "--t0: %s", err.msg);
        return BG_OK;
    case O_PAIR:
        if (bg_model_parse_pair(optarg, &rq->pair_t1_k, &rq->pair_t2_k, &err) != BG_OK)
            return cli_usage_error("fit", "--pair: %s", err.msg);
        return BG_OK;
    case O_UTEMP:
        if (bg_units_parse_tdiff(optarg, &rq->u_t_default_k, &err) != BG_OK)
            return cli_usage_error("fit", "--u-temp: %s", err.msg);
        return BG_OK;
    case O_AT: /* 'at_k' has room for every argument */
        if (bg_units_parse_temp(optarg, BG_UNIT_NONE, &at_k[rq->ncheck], &err) != BG_OK)
            return cli_usage_error("fit", "--at: %s", err.msg);
        rq->ncheck++;
        return BG_OK;
    case O_DRY: rq->store_flags |= BG_CALIB_DRY_RUN; return BG_OK;
    case O_AGAIN: rq->store_flags |= BG_CALIB_STORE_SAME; return BG_OK;
    case O_LINEAR: rq->linear_only = 1; return BG_OK;
    case O_NOINFL: rq->no_inflate = 1; return BG_OK;
    case O_COVK: {
        char *end;
        rq->coverage_k = strtod(optarg, &end);
        if (end == optarg || *end || !(rq->coverage_k > 0.0 && rq->coverage_k < 100.0))
            return cli_usage_error("fit", "--coverage-k: '%s': give a coverage factor such as 2",
                                   optarg);
        return BG_OK;
    }
    case O_RESOL:
        if (bg_units_parse_tdiff(optarg, &rq->resolution_k, &err) != BG_OK ||
            !(rq->resolution_k > 0.0))
            return cli_usage_error("fit", "--resolution: %s", err.msg[0] ? err.msg :
                                   "must be above 0");
        return BG_OK;
    case O_UNIT:
        if (bg_units_parse_unit(optarg, &fc->unit, &err) != BG_OK)
            return cli_usage_error("fit", "--unit: %s", err.msg);
        return BG_OK;
    case O_JSON: ctx->json = 1; return BG_OK;
    case O_RESID:
        if (strcmp(optarg, "all") != 0)
            return cli_usage_error("fit", "--residuals: '%s': the only value is 'all'", optarg);
        fc->all_residuals = 1;
        return BG_OK;
    case O_PARAM: {
        char *eq = strchr(optarg, '='), *end;
        if (!eq || eq == optarg)
            return cli_usage_error("fit", "--param: '%s': write NAME=VALUE (p=8, lsb_k=0.0625)",
                                   optarg);
        *eq = '\0';
        fc->pvalues[rq->nparams] = strtod(eq + 1, &end);
        if (end == eq + 1 || *end)
            return cli_usage_error("fit", "--param %s: '%s': not a number", optarg, eq + 1);
        fc->pnames[rq->nparams++] = optarg;
        return BG_OK;
    }
    case O_BOUND:
        if (bg_units_parse_tdiff(optarg, &fc->bound_k, &err) != BG_OK || !(fc->bound_k > 0.0))
            return cli_usage_error("fit", "--bound: %s", err.msg[0] ? err.msg :
                                   "must be above 0");
        return BG_OK;
    case O_PROBE: fc->serial = optarg; return BG_OK;
    case O_LOT: fc->lot = optarg; return BG_OK;
    case O_RUN:
        if (cli_parse_id(optarg, &fc->run_id) != BG_OK)
            return cli_usage_error("fit", "--run: '%s': not a run id", optarg);
        return BG_OK;
    case ':': return cli_usage_error("fit", "option '%s' needs a value", argv[optind - 1]);
    default: return cli_unknown_option("fit", argv[optind - 1], fit_opts);
    }
}

/* The arguments left after the options: a file, or --probe / --lot. */
static int fit_check_args(const struct fit_cli *fc, int argc)
{
    if (fc->rq.store_flags && !fc->serial)
        return cli_usage_error("fit", "--dry-run and --store-again go with --probe");
    if (fc->rq.store_flags == (BG_CALIB_DRY_RUN | BG_CALIB_STORE_SAME))
        return cli_usage_error("fit", "give --dry-run or --store-again, not both");
    if ((fc->serial || fc->lot) && fc->bound_k > 0.0)
        return cli_usage_error("fit", "--bound goes with a readings file");
    if (fc->serial || fc->lot) {
        if (fc->serial && fc->lot)
            return cli_usage_error("fit", "give --probe or --lot, not both");
        if (fc->run_id && !fc->serial)
            return cli_usage_error("fit", "--run goes with --probe");
        if (optind < argc)
            return cli_usage_error("fit", "a readings file and --probe/--lot exclude each other");
        return BG_OK;
    }
    if (fc->run_id)
        return cli_usage_error("fit", "--run goes with --probe");
    if (fc->bound_k > 0.0 && (fc->rq.ncheck || fc->all_residuals))
        return cli_usage_error("fit", "--bound does not go with --at or --residuals");
    if (optind + 1 != argc)
        return cli_usage_error("fit", optind >= argc ? "no readings file given (or --probe, "
                               "--lot)" : "more than one readings file given");
    return BG_OK;
}

/* Calibrate the file, the stored probe or the lot of 'fc' and print the result. */
static int fit_run(const struct fit_cli *fc, const char *path, struct cli_ctx *ctx)
{
    bg_error err = BG_ERROR_INIT;
    bg_store *st = NULL;
    bg_calib_result r = BG_CALIB_RESULT_INIT;
    bg_calib_lot lot = BG_CALIB_LOT_INIT;
    int rc;

    if (path && fc->bound_k > 0.0) {
        bg_fit_ranges sp;
        rc = bg_calibrate_file_split(path, &fc->rq, fc->bound_k, &sp, &err);
        if (rc == BG_OK)
            print_fit_split(&sp, fc->unit, ctx->json);
        else
            cli_fail(NULL, &err);
        bg_fit_split_release(&sp);
        return rc;
    }
    if (!path && (rc = cli_open_store(ctx, 0, &st)) != BG_OK)
        return rc;
    if (fc->lot) {
        bg_calib_request rq = fc->rq;
        rq.progress = print_fit_progress;
        rc = bg_calibrate_lot(st, fc->lot, &rq, &lot, &err);
        rc = print_fit_lot(&lot, rc, &err, ctx->json);
    } else {
        rc = path ? bg_calibrate_file(path, &fc->rq, &r, &err)
                  : bg_calibrate_probe(st, fc->serial, fc->run_id, &fc->rq, &r, &err);
        if (rc == BG_OK)
            print_fit(&r, fc->unit, ctx->json, fc->all_residuals);
        else
            cli_fail(NULL, &err);
    }
    bg_calib_lot_release(&lot);
    bg_calib_result_release(&r);
    bg_store_close(st);
    return rc;
}

int cmd_fit(int argc, char **argv, struct cli_ctx *ctx)
{
    struct fit_cli fc;
    double *at_k = malloc((size_t)(argc > 0 ? argc : 1) * sizeof *at_k);
    int c, rc = BG_OK;

    memset(&fc, 0, sizeof fc);
    fc.pnames = malloc((size_t)(argc > 0 ? argc : 1) * sizeof *fc.pnames);
    fc.pvalues = malloc((size_t)(argc > 0 ? argc : 1) * sizeof *fc.pvalues);
    if (!at_k || !fc.pnames || !fc.pvalues) {
        free(at_k), free(fc.pnames), free(fc.pvalues);
        return cli_fail(NULL, &(bg_error){ BG_ENOMEM, "out of memory" });
    }
    fc.rq = bg_calib_default_request();
    fc.rq.check_t_k = at_k;
    fc.rq.param_names = fc.pnames, fc.rq.param_values = fc.pvalues;
    fc.unit = BG_UNIT_C;
    opterr = 0;
    while (rc == BG_OK && (c = getopt_long(argc, argv, ":h", fit_opts, NULL)) != -1) {
        if (c == 'h') {
            fputs(fit_usage, stdout);
            free(at_k), free(fc.pnames), free(fc.pvalues);
            return BG_OK;
        }
        rc = fit_option(&fc, c, argv, at_k, ctx);
    }
    if (rc == BG_OK && (rc = fit_check_args(&fc, argc)) == BG_OK)
        rc = fit_run(&fc, fc.serial || fc.lot ? NULL : argv[optind], ctx);
    free(at_k), free(fc.pnames), free(fc.pvalues);
    return rc;
}
