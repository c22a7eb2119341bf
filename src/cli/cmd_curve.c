/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap curve: the R-T table of a stored fit or of a model given inline, with the slope,
** alpha and, for a stored fit, the expanded uncertainty of the curve; rows outside the
** calibrated range are marked as extrapolated.  The table is computed by bg_curve_grid or
** bg_curve_at_ohms and printed by cli_print_curve. */
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

static const char curve_usage[] =
    "Usage: bandgap curve (--fit N | --probe SERIAL | MODEL OPTIONS) (--from T --to T --step DT\n"
    "                     | --ohms R1,R2,...) [--coverage-k K] [--unit C|K|F] [--csv | --json]\n"
    "The R-T table of a stored fit (--fit N, or the current fit of --probe) or of a model given\n"
    "inline as for 'bandgap eval' (--model, --coef, --r25, --beta, --t0): for each temperature\n"
    "from --from to --to in steps of --step (any unit: 5C, 1K, 9F), or for each resistance of\n"
    "--ohms, the resistance or temperature, dT/dR, alpha = (1/R) dR/dT and, for a stored fit\n"
    "with degrees of freedom, the expanded uncertainty U = k u of the curve, k from Student's\n"
    "t for the fit's degrees of freedom at 95.45 % coverage (--coverage-k K: a fixed k, e.g.\n"
    "2, with its coverage probability stated).  Rows outside the calibrated range are marked\n"
    "EXTRAPOLATED and have no U: they are not calibrated values.\n"
    "Other kinds (ptc, cvd, vbe, dvbe, ic, cheb:N; docs/methods.md): --readings X1,X2,...\n"
    "gives readings in the model's quantity (V, reported degC, code) instead of --ohms, and\n"
    "--param NAME=VALUE a held parameter (p=8, lsb_k=0.0625, x_lo=0.3, x_hi=1.1).\n";

struct curve_args {
    struct cli_source src;
    struct cli_output out;
    enum cli_format fmt;
    bg_temp_unit unit;
    const char *ohms;
    int plain;          /* --readings: plain numbers in the model's quantity, not ohms */
    double from, to, step;
    double coverage_k;
};

static int curve_parse(int argc, char **argv, struct curve_args *a)
{
    enum { O_FROM = 1, O_TO, O_STEP, O_OHMS, O_UNIT, O_COVK, O_READINGS };
    static const struct option opts[] = {
        CLI_SOURCE_OPTIONS, CLI_OUTPUT_OPTIONS, CLI_INLINE_PARAM_OPTION,
        { "readings", required_argument, NULL, O_READINGS },
        { "from", required_argument, NULL, O_FROM },   { "to", required_argument, NULL, O_TO },
        { "step", required_argument, NULL, O_STEP },   { "ohms", required_argument, NULL, O_OHMS },
        { "unit", required_argument, NULL, O_UNIT },   { "help", no_argument, NULL, 'h' },
        { "coverage-k", required_argument, NULL, O_COVK },
        { NULL, 0, NULL, 0 },
    };
    bg_error err = BG_ERROR_INIT;
    int c, rc;

    opterr = 0;
    while ((c = getopt_long(argc, argv, ":h", opts, NULL)) != -1) {
        rc = BG_OK;
        if (cli_source_option(&a->src, c, optarg, "curve", &rc) ||
            cli_output_option(&a->out, c)) {
            if (rc != BG_OK)
                return rc;
            continue;
        }
        switch (c) {
        case 'h': fputs(curve_usage, stdout); return -1;
        case O_FROM: case O_TO:
            if (bg_units_parse_temp(optarg, BG_UNIT_NONE, c == O_FROM ? &a->from : &a->to,
                                    &err) != BG_OK)
                return cli_usage_error("curve", "--%s: %s", c == O_FROM ? "from" : "to",
                                       err.msg);
            break;
        case O_STEP:
            if (bg_units_parse_tdiff(optarg, &a->step, &err) != BG_OK)
                return cli_usage_error("curve", "--step: %s", err.msg);
            break;
        case O_OHMS: a->ohms = optarg, a->plain = 0; break;
        case O_READINGS: a->ohms = optarg, a->plain = 1; break;
        case O_COVK: {
            char *end;
            a->coverage_k = strtod(optarg, &end);
            if (end == optarg || *end || !(a->coverage_k > 0.0 && a->coverage_k < 100.0))
                return cli_usage_error("curve", "--coverage-k: '%s': give a coverage factor "
                                       "such as 2", optarg);
            break;
        }
        case O_UNIT:
            if (bg_units_parse_unit(optarg, &a->unit, &err) != BG_OK)
                return cli_usage_error("curve", "--unit: %s", err.msg);
            break;
        case ':': return cli_usage_error("curve", "option '%s' needs a value", argv[optind - 1]);
        default: return cli_unknown_option("curve", argv[optind - 1], opts);
        }
    }
    if (optind < argc)
        return cli_usage_error("curve", "unexpected argument '%s'", argv[optind]);
    return BG_OK;
}

/* The resistances of --ohms ("10k,4k7") into a new array '*r' of '*n'. */
static int parse_ohms(const char *s, int plain, double **r, size_t *n)
{
    bg_error err = BG_ERROR_INIT;
    char buf[64];
    size_t k = 1;
    for (const char *p = s; (p = strchr(p, ',')) != NULL; p++)
        k++;
    if (!(*r = malloc(k * sizeof **r))) {
        cli_error("curve: out of memory for %zu resistances", k);
        return BG_ENOMEM;
    }
    *n = 0;
    for (const char *p = s;;) {
        const char *cm = strchr(p, ',');
        size_t len = cm ? (size_t)(cm - p) : strlen(p);
        if (len == 0 || len >= sizeof buf)
            return cli_usage_error("curve", "--ohms: expected resistances like 10k,4k7");
        memcpy(buf, p, len);
        buf[len] = '\0';
        if (plain) {
            char *end;
            double v = strtod(buf, &end);
            if (end == buf || *end || !isfinite(v))
                return cli_usage_error("curve", "--readings: '%s': not a number", buf);
            (*r)[(*n)++] = v;
        } else if (bg_units_parse_ohms(buf, &(*r)[(*n)++], &err) != BG_OK)
            return cli_usage_error("curve", "--ohms: %s", err.msg);
        if (!cm)
            return BG_OK;
        p = cm + 1;
    }
}

/* Check the combination of options, then compute the table into 'c'. */
static int curve_compute(struct curve_args *a, struct cli_ctx *ctx, bg_curve_src *src, bg_curve *c)
{
    bg_error err = BG_ERROR_INIT;
    double *r = NULL;
    size_t n = 0;
    int rc;

    if ((rc = cli_source_check(&a->src, "curve")) != BG_OK ||
        (rc = cli_output_choose(&a->out, ctx, 0, "curve", &a->fmt)) != BG_OK)
        return rc;
    if (a->ohms) {
        if (isfinite(a->from) || isfinite(a->to) || isfinite(a->step))
            return cli_usage_error("curve", "give --ohms or --from/--to/--step, not both");
        if ((rc = parse_ohms(a->ohms, a->plain, &r, &n)) != BG_OK)
            goto done;
    } else {
        if (!isfinite(a->from) || !isfinite(a->to) || !isfinite(a->step))
            return cli_usage_error("curve", "give --from, --to and --step (or --ohms)");
        if (a->to < a->from)
            return cli_usage_error("curve", "--to must not be below --from");
    }
    if ((rc = cli_source_resolve(&a->src, ctx, "curve", src)) != BG_OK)
        goto done;
    src->rule.k_fixed = a->coverage_k;
    rc = r ? bg_curve_at_ohms(src, r, n, c, &err)
           : bg_curve_grid(src, a->from, a->to, a->step, c, &err);
    if (rc != BG_OK)
        rc = cli_fail("curve", &err);
done:
    free(r);
    return rc;
}

int cmd_curve(int argc, char **argv, struct cli_ctx *ctx)
{
    struct curve_args a;
    bg_curve_src src;
    bg_curve c = BG_CURVE_INIT;
    int rc;

    memset(&a, 0, sizeof a);
    cli_source_init(&a.src);
    a.unit = BG_UNIT_C;
    a.from = a.to = a.step = NAN;
    if ((rc = curve_parse(argc, argv, &a)) != BG_OK)
        return rc < 0 ? BG_OK : rc;
    if ((rc = curve_compute(&a, ctx, &src, &c)) == BG_OK)
        cli_print_curve(&src, a.src.fit_id ? &a.src.used : NULL, &c, a.fmt, a.unit);
    bg_curve_release(&c);
    return rc;
}
