/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap ref add|list: reference thermometers, their certificates and corrections. */
#include <getopt.h>
#include <stdio.h>
#include <string.h>

#include "cli.h"

static const char ref_usage[] =
    "Usage: bandgap ref add ID --cert TEXT [--due DATE] [--linear Y1,Y2,T0 | --cvd R0,A,B,C]\n"
    "                  [--note TEXT]\n"
    "       bandgap ref list [--json]\n"
    "A reference thermometer with its calibration certificate and, optionally, a correction\n"
    "applied to every reading imported with --ref ID:\n"
    "  --linear Y1,Y2,T0   t = t_read + Y1 + Y2 (t_read - T0): Y1 a correction with its unit\n"
    "                      (-0.1712K, 4.2mK), Y2 in K/K, T0 a temperature with its unit (20C)\n"
    "                      (the form of the GUM, JCGM 100:2008 H.3)\n"
    "  --cvd R0,A,B,C      the reference is a platinum resistance thermometer read in ohm (the\n"
    "                      readings file has a ref_ohms column); IEC 60751 Callendar-Van Dusen\n"
    "                      coefficients, R0 with its unit (100R), A, B, C per degC^n\n";

/* Copy the part of 's' before its first comma into 'buf' and return what follows the comma
** (NULL when there is no comma or the part does not fit). */
static const char *first_field(const char *s, char *buf, size_t size)
{
    const char *c = strchr(s, ',');
    if (!c || (size_t)(c - s) >= size)
        return NULL;
    memcpy(buf, s, (size_t)(c - s));
    buf[c - s] = '\0';
    return c + 1;
}

/* --linear Y1,Y2,T0: Y1 a temperature correction with its unit, Y2 in K/K, T0 a temperature
** with its unit. */
static int parse_linear(const char *s, bg_ref *ref)
{
    bg_error err = BG_ERROR_INIT;
    char y1[64], y2[64];
    const char *rest = first_field(s, y1, sizeof y1), *t0 = NULL;
    double v;
    size_t n;
    if (rest)
        t0 = first_field(rest, y2, sizeof y2);
    if (!t0 || strchr(t0, ','))
        return cli_usage_error("ref", "--linear: '%s': expected Y1,Y2,T0, e.g. -0.1712K,0.00218,"
                               "20C (Y1 with its unit, Y2 in K/K, T0 with its unit)", s);
    if (bg_units_parse_tcorr(y1, &ref->lin_c0_k, &err) != BG_OK ||
        bg_units_parse_temp(t0, BG_UNIT_NONE, &ref->lin_t0_k, &err) != BG_OK)
        return cli_usage_error("ref", "--linear: %s", err.msg);
    if (cli_parse_list(y2, &v, 1, &n, &err) != BG_OK)
        return cli_usage_error("ref", "--linear: Y2 (K/K): %s", err.msg);
    ref->lin_c1 = v;
    ref->kind = BG_REF_LINEAR;
    return BG_OK;
}

/* --cvd R0,A,B,C: R0 a resistance with its unit, A, B, C the coefficients per degC^n. */
static int parse_cvd(const char *s, bg_ref *ref)
{
    bg_error err = BG_ERROR_INIT;
    char r0[64];
    const char *rest = first_field(s, r0, sizeof r0);
    double v[3];
    size_t n = 0;
    if (!rest || cli_parse_list(rest, v, 3, &n, &err) != BG_OK || n != 3)
        return cli_usage_error("ref", "--cvd: '%s': expected R0,A,B,C, e.g. 100R,3.9083e-3,"
                               "-5.775e-7,-4.183e-12 (R0 with its unit)", s);
    if (bg_units_parse_ohms(r0, &ref->cvd_r0_ohm, &err) != BG_OK)
        return cli_usage_error("ref", "--cvd: R0: %s", err.msg);
    ref->cvd_a = v[0], ref->cvd_b = v[1], ref->cvd_c = v[2];
    ref->kind = BG_REF_CVD;
    return BG_OK;
}

/* Parse the options into 'ref'; -1 after --help. */
static int ref_parse(int argc, char **argv, bg_ref *ref, struct cli_ctx *ctx)
{
    enum { O_CERT = 1, O_DUE, O_LIN, O_CVD, O_NOTE, O_JSON };
    static const struct option opts[] = {
        { "cert", required_argument, NULL, O_CERT }, { "due", required_argument, NULL, O_DUE },
        { "linear", required_argument, NULL, O_LIN }, { "cvd", required_argument, NULL, O_CVD },
        { "note", required_argument, NULL, O_NOTE }, { "json", no_argument, NULL, O_JSON },
        { "help", no_argument, NULL, 'h' },          { NULL, 0, NULL, 0 },
    };
    int c, rc;

    opterr = 0;
    while ((c = getopt_long(argc, argv, ":h", opts, NULL)) != -1) {
        switch (c) {
        case 'h': fputs(ref_usage, stdout); return -1;
        case O_CERT:
            if (strlen(optarg) >= sizeof ref->certificate)
                return cli_usage_error("ref", "--cert is too long");
            snprintf(ref->certificate, sizeof ref->certificate, "%s", optarg);
            break;
        case O_DUE:
            if (strlen(optarg) >= sizeof ref->due_date || !bg_csv_valid_time(optarg))
                return cli_usage_error("ref", "--due: '%s': not an ISO 8601 date", optarg);
            snprintf(ref->due_date, sizeof ref->due_date, "%s", optarg);
            break;
        case O_LIN: case O_CVD:
            if (ref->kind != BG_REF_NONE)
                return cli_usage_error("ref", "give either --linear or --cvd");
            if ((rc = c == O_LIN ? parse_linear(optarg, ref) : parse_cvd(optarg, ref)) != BG_OK)
                return rc;
            break;
        case O_NOTE:
            if (strlen(optarg) >= sizeof ref->note)
                return cli_usage_error("ref", "--note is too long");
            snprintf(ref->note, sizeof ref->note, "%s", optarg);
            break;
        case O_JSON: ctx->json = 1; break;
        case ':': return cli_usage_error("ref", "option '%s' needs a value", argv[optind - 1]);
        default: return cli_unknown_option("ref", argv[optind - 1], opts);
        }
    }
    if (optind >= argc)
        return cli_usage_error("ref", "say add or list");
    return BG_OK;
}

static int ref_add(bg_ref *ref, const char *ident, struct cli_ctx *ctx)
{
    bg_error err = BG_ERROR_INIT;
    bg_store *st = NULL;
    long long id;
    int rc;

    if (strlen(ident) >= sizeof ref->ident)
        return cli_usage_error("ref", "identifier is too long");
    snprintf(ref->ident, sizeof ref->ident, "%s", ident);
    if (!ref->certificate[0])
        return cli_usage_error("ref", "add needs --cert (the calibration certificate)");
    if ((rc = cli_open_store(ctx, 0, &st)) != BG_OK)
        return rc;
    rc = bg_store_ref_add(st, ref, &id, &err);
    if (rc != BG_OK)
        cli_fail("ref add", &err);
    else if (ctx->json)
        printf("{\"id\":%lld}\n", id);
    else
        printf("added reference %s (id %lld)\n", ref->ident, id);
    bg_store_close(st);
    return rc;
}

static int ref_list(struct cli_ctx *ctx)
{
    bg_error err = BG_ERROR_INIT;
    bg_store *st = NULL;
    json_out j;
    int rc;

    if ((rc = cli_open_store(ctx, 0, &st)) != BG_OK)
        return rc;
    if (ctx->json) {
        json_begin(&j, stdout);
        json_arr(&j, NULL);
    }
    rc = bg_store_ref_each(st, cli_print_ref, ctx->json ? &j : NULL, &err);
    if (ctx->json) {
        json_arr_end(&j);
        json_end(&j);
    }
    if (rc != BG_OK)
        cli_fail("ref list", &err);
    bg_store_close(st);
    return rc;
}

int cmd_ref(int argc, char **argv, struct cli_ctx *ctx)
{
    bg_ref ref;
    int rc;

    memset(&ref, 0, sizeof ref);
    if ((rc = ref_parse(argc, argv, &ref, ctx)) != BG_OK)
        return rc < 0 ? BG_OK : rc;
    if (strcmp(argv[optind], "add") == 0) {
        if (optind + 2 != argc)
            return cli_usage_error("ref", "add takes one identifier");
        return ref_add(&ref, argv[optind + 1], ctx);
    }
    if (strcmp(argv[optind], "list") == 0) {
        if (optind + 1 != argc)
            return cli_usage_error("ref", "list takes no arguments");
        return ref_list(ctx);
    }
    return cli_usage_error("ref", "unknown action '%s' (add or list)", argv[optind]);
}
