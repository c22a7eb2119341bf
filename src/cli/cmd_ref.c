/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap ref add|set|show|list: reference thermometers, their certificates and corrections,
** and their versions (a recalibration adds one). */
#include <getopt.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

static const char ref_usage[] =
    "Usage: bandgap ref add ID --cert TEXT [--due DATE] [--linear Y1,Y2,T0 | --cvd R0,A,B,C |\n"
    "                  --its90 RANGE,RTPW,a[,b[,c[,d,W_AL]]]] [--note TEXT]\n"
    "       bandgap ref set ID --cert TEXT [--due DATE] (--linear Y1,Y2,T0 | --cvd R0,A,B,C |\n"
    "                  --its90 ... | --no-correction) --why TEXT [--by NAME] [--from TIME]\n"
    "       bandgap ref show ID [--json]\n"
    "       bandgap ref list [--json]\n"
    "A reference thermometer with its calibration certificate and, optionally, a correction\n"
    "applied to every reading imported with --ref ID:\n"
    "  --linear Y1,Y2,T0   t = t_read + Y1 + Y2 (t_read - T0): Y1 a correction with its unit\n"
    "                      (-0.1712K, 4.2mK), Y2 in K/K, T0 a temperature with its unit (20C)\n"
    "                      (the form of the GUM, JCGM 100:2008 H.3)\n"
    "  --cvd R0,A,B,C      the reference is a platinum resistance thermometer read in ohm (the\n"
    "                      readings file has a ref_ohms column); IEC 60751 Callendar-Van Dusen\n"
    "                      coefficients, R0 with its unit (100R), A, B, C per degC^n\n"
    "set records a recalibration as a new version (the earlier ones stay): its certificate,\n"
    "due date (none unless --due) and correction (stated: --no-correction for none), valid\n"
    "from TIME (ISO 8601; default now), with the reason and who (default $USER, else the\n"
    "login name of the user id).  An import corrects its readings with the version in force\n"
    "at the run's start and records which.\n"
    "show lists the versions; list shows each reference as in force now.\n";

/* What the options say: the reference (or version) and, for set, its reason and validity. */
struct ref_opts {
    bg_ref_version rv;
    const char *why, *by, *from;
    int no_correction;
};

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

/* --its90 RANGE,RTPW,a[,b[,c[,d,W_AL]]]: exactly the coefficients the sub-range has. */
static int parse_its90(const char *s, bg_ref *ref)
{
    bg_error err = BG_ERROR_INIT;
    char range[32], rtpw[64];
    const char *rest = first_field(s, range, sizeof range), *coefs = NULL;
    double v[5] = { 0 }, pts[4];
    size_t n = 0;
    if (rest)
        coefs = first_field(rest, rtpw, sizeof rtpw);
    if (!coefs)
        return cli_usage_error("ref", "--its90: '%s': expected RANGE,RTPW,a[,b[,c[,d,W_AL]]], "
                               "e.g. TPW-Zn,25.5012R,-1.2e-4,3.1e-6", s);
    if (bg_its90_range_parse(range, &ref->its90.range, &err) != BG_OK)
        return cli_usage_error("ref", "--its90: %s", err.msg);
    if (bg_units_parse_ohms(rtpw, &ref->its90_rtpw_ohm, &err) != BG_OK)
        return cli_usage_error("ref", "--its90: RTPW: %s", err.msg);
    size_t want = bg_its90_range_points(ref->its90.range, pts);
    want += ref->its90.range == BG_ITS90_TPW_AG; /* W at the aluminium point */
    if (cli_parse_list(coefs, v, 5, &n, &err) != BG_OK)
        return cli_usage_error("ref", "--its90: coefficients: %s", err.msg);
    if (n != want)
        return cli_usage_error("ref", "--its90: sub-range %s takes %zu value%s after RTPW (%s), "
                               "not %zu", range, want, want == 1 ? "" : "s",
                               want == 1 ? "a" : want == 2 ? "a,b" : want == 3 ? "a,b,c"
                                                                   : "a,b,c,d,W_AL", n);
    ref->its90.a = v[0], ref->its90.b = v[1], ref->its90.c = v[2], ref->its90.d = v[3];
    ref->its90.w_al = v[4];
    ref->kind = BG_REF_ITS90;
    return BG_OK;
}

/* Parse the options into 'o'; -1 after --help. */
static int ref_parse(int argc, char **argv, struct ref_opts *o, struct cli_ctx *ctx)
{
    enum { O_CERT = 1, O_DUE, O_LIN, O_CVD, O_NOTE, O_JSON, O_WHY, O_BY, O_FROM, O_NONE, O_ITS };
    static const struct option opts[] = {
        { "cert", required_argument, NULL, O_CERT }, { "due", required_argument, NULL, O_DUE },
        { "linear", required_argument, NULL, O_LIN }, { "cvd", required_argument, NULL, O_CVD },
        { "note", required_argument, NULL, O_NOTE }, { "json", no_argument, NULL, O_JSON },
        { "why", required_argument, NULL, O_WHY },   { "by", required_argument, NULL, O_BY },
        { "from", required_argument, NULL, O_FROM },
        { "no-correction", no_argument, NULL, O_NONE },
        { "its90", required_argument, NULL, O_ITS }, { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 },
    };
    bg_ref *ref = &o->rv.ref;
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
        case O_LIN: case O_CVD: case O_ITS:
            if (ref->kind != BG_REF_NONE || o->no_correction)
                return cli_usage_error("ref", "give one of --linear, --cvd, --its90 and "
                                       "--no-correction");
            rc = c == O_LIN ? parse_linear(optarg, ref)
               : c == O_CVD ? parse_cvd(optarg, ref)
                            : parse_its90(optarg, ref);
            if (rc != BG_OK)
                return rc;
            break;
        case O_NOTE:
            if (strlen(optarg) >= sizeof ref->note)
                return cli_usage_error("ref", "--note is too long");
            snprintf(ref->note, sizeof ref->note, "%s", optarg);
            break;
        case O_JSON: ctx->json = 1; break;
        case O_WHY: o->why = optarg; break;
        case O_BY: o->by = optarg; break;
        case O_FROM:
            if (strlen(optarg) >= sizeof o->rv.v.valid_from || !bg_csv_valid_time(optarg))
                return cli_usage_error("ref", "--from: '%s': not an ISO 8601 date-time", optarg);
            o->from = optarg;
            break;
        case O_NONE:
            if (ref->kind != BG_REF_NONE)
                return cli_usage_error("ref", "give one of --linear, --cvd, --its90 and "
                                       "--no-correction");
            o->no_correction = 1;
            break;
        case ':': return cli_usage_error("ref", "option '%s' needs a value", argv[optind - 1]);
        default: return cli_unknown_option("ref", argv[optind - 1], opts);
        }
    }
    if (optind >= argc)
        return cli_usage_error("ref", "say add, set, show or list");
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

static int ref_set(struct ref_opts *o, const char *ident, struct cli_ctx *ctx)
{
    bg_error err = BG_ERROR_INIT;
    bg_ref_version *rv = &o->rv;
    bg_store *st = NULL;
    long long id;
    int rc;

    if (strlen(ident) >= sizeof rv->ref.ident)
        return cli_usage_error("ref", "identifier is too long");
    snprintf(rv->ref.ident, sizeof rv->ref.ident, "%s", ident);
    if (!rv->ref.certificate[0])
        return cli_usage_error("ref", "set needs --cert (the new calibration certificate)");
    if (rv->ref.kind == BG_REF_NONE && !o->no_correction)
        return cli_usage_error("ref", "set needs the correction of the new certificate: "
                               "--linear, --cvd, --its90 or --no-correction");
    if (!o->why || !*o->why)
        return cli_usage_error("ref", "set needs --why TEXT (the reason for the new version)");
    if (rv->ref.note[0])
        return cli_usage_error("ref", "--note is for add (a version records --why)");
    char who[BG_TEXT], how[128];
    o->by = cli_who(o->by, who, sizeof who, how, sizeof how);
    if (!*o->by)
        return cli_usage_error("ref", "--by needs a name");
    if (strlen(o->why) >= sizeof rv->v.why || strlen(o->by) >= sizeof rv->v.by)
        return cli_usage_error("ref", "--why or --by is too long");
    snprintf(rv->v.why, sizeof rv->v.why, "%s", o->why);
    snprintf(rv->v.by, sizeof rv->v.by, "%s", o->by);
    snprintf(rv->v.valid_from, sizeof rv->v.valid_from, "%s", o->from ? o->from : "");
    if ((rc = cli_open_store(ctx, 0, &st)) != BG_OK)
        return rc;
    if (!rv->v.valid_from[0]) /* valid from now: the time is said below */
        bg_store_time(st, rv->v.valid_from, sizeof rv->v.valid_from);
    if ((rc = bg_store_ref_set(st, rv, &id, &err)) != BG_OK) {
        cli_fail("ref set", &err);
    } else if (cli_who_note(rv->v.by, how), ctx->json) {
        json_out j;
        json_begin(&j, stdout);
        json_obj(&j, NULL);
        json_str(&j, "ident", rv->ref.ident);
        json_int(&j, "version", id);
        json_str(&j, "valid_from", rv->v.valid_from);
        json_obj_end(&j);
        json_end(&j);
    } else {
        printf("added version %lld of reference %s, valid from %s: ", id, rv->ref.ident,
               rv->v.valid_from);
        cli_ref_values_text(&rv->ref);
        printf("\n");
    }
    bg_store_close(st);
    return rc;
}

static int print_version(const bg_ref_version *rv, void *ctx)
{
    json_out *j = ctx;
    const bg_ref *r = &rv->ref;
    if (!j) {
        if (rv->v.id == 0)
            printf("reference %s\n", r->ident);
        printf("version %lld, valid from %s: ", rv->v.id, rv->v.valid_from);
        cli_ref_values_text(r);
        if (rv->v.id)
            printf("\n  recorded %s by %s: %s", rv->v.created_at, rv->v.by, rv->v.why);
        printf("\n");
        return 0;
    }
    json_obj(j, NULL);
    json_int(j, "version", rv->v.id);
    json_str(j, "valid_from", rv->v.valid_from);
    cli_ref_values_json(j, r);
    json_str(j, "why", rv->v.id ? rv->v.why : NULL);
    json_str(j, "by", rv->v.id ? rv->v.by : NULL);
    json_str(j, "recorded_at", rv->v.created_at);
    json_obj_end(j);
    return 0;
}

static int ref_show(const char *ident, struct cli_ctx *ctx)
{
    bg_error err = BG_ERROR_INIT;
    bg_store *st = NULL;
    json_out j;
    int rc;

    if ((rc = cli_open_store(ctx, 0, &st)) != BG_OK)
        return rc;
    if (ctx->json) {
        json_begin(&j, stdout);
        json_obj(&j, NULL);
        json_str(&j, "ident", ident);
        json_arr(&j, "versions");
    }
    rc = bg_store_ref_versions(st, ident, print_version, ctx->json ? &j : NULL, &err);
    if (ctx->json) {
        json_arr_end(&j);
        json_obj_end(&j);
        json_end(&j);
    }
    if (rc != BG_OK)
        cli_fail("ref show", &err);
    bg_store_close(st);
    return rc;
}

int cmd_ref(int argc, char **argv, struct cli_ctx *ctx)
{
    struct ref_opts o;
    int rc;

    memset(&o, 0, sizeof o);
    o.by = NULL;
    if ((rc = ref_parse(argc, argv, &o, ctx)) != BG_OK)
        return rc < 0 ? BG_OK : rc;
    if (strcmp(argv[optind], "add") == 0) {
        if (optind + 2 != argc)
            return cli_usage_error("ref", "add takes one identifier");
        if (o.why || o.from || o.no_correction)
            return cli_usage_error("ref", "--why, --from and --no-correction are for set");
        return ref_add(&o.rv.ref, argv[optind + 1], ctx);
    }
    if (strcmp(argv[optind], "set") == 0) {
        if (optind + 2 != argc)
            return cli_usage_error("ref", "set takes one identifier");
        return ref_set(&o, argv[optind + 1], ctx);
    }
    if (strcmp(argv[optind], "show") == 0) {
        if (optind + 2 != argc)
            return cli_usage_error("ref", "show takes one identifier");
        return ref_show(argv[optind + 1], ctx);
    }
    if (strcmp(argv[optind], "list") == 0) {
        if (optind + 1 != argc)
            return cli_usage_error("ref", "list takes no arguments");
        return ref_list(ctx);
    }
    return cli_usage_error("ref", "unknown action '%s' (add, set, show or list)", argv[optind]);
}
