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
    "                             [--sensor KIND [--t-ref T] NOMINAL VALUES]\n"
    "       bandgap part show PART [--json]\n"
    "set: a new specification of part PART (the lots name their part).  The nominal curve is\n"
    "any model the tool fits: coefficients (--model sh3 --coef ...), a beta curve (--r25,\n"
    "--beta), or an R-T table in the readings CSV format (temp_c and ohms columns) fitted\n"
    "with --model (default sh3) in temperature, equal weights.  --tol 0.2K --over -20/70\n"
    "(degC): the interchangeability tolerance in kelvin over a range.  --baseline, --limit and\n"
    "--rate-limit: the defaults of drift and report for the part's lots.  Each set stores a\n"
    "whole new row (what is not given is not set); the older rows stay, and reports issued\n"
    "before keep the curve they show.\n"
    "--sensor ntc|ptc|junction|prt|ic: the kind of sensor and its nominal values, which its\n"
    "lots are judged against (ntc, the default: each lot's R25 and B, bandgap lot add):\n"
    "  ptc       --r-ref OHMS --alpha 0.79%/K --tol-r REL --tol-alpha REL (of alpha)\n"
    "  junction  --v-ref VOLTS --dvdt -2mV/K --tol-v VOLTS --tol-dvdt SLOPE\n"
    "  prt       --r0-nominal OHMS --class AA|A|B|C (IEC 60751; at 0 degC)\n"
    "  ic        --offset DT --gain REL --tol-offset DT --tol-gain REL (the correction\n"
    "            T_true = T_rep + c0 + c1 (T_rep - T_r): c0 the offset, c1 the gain)\n"
    "--t-ref T: where the ptc, junction and ic values are (default 25 degC, said so).\n"
    "show: every specification of the part, oldest first; the newest is in force.\n";

/* The nominal values of each sensor kind: the option, its kind, and where it goes. */
enum { O_SENSOR = 9, O_TREF, O_RREF, O_ALPHA, O_TOLR, O_TOLA, O_VREF, O_DVDT, O_TOLV, O_TOLD,
       O_R0NOM, O_CLASS, O_OFFSET, O_GAIN, O_TOLO, O_TOLG, O_LAST = O_TOLG };
static const struct kind_opt {
    const char *name;
    int kind;
} kind_opts[O_LAST - O_RREF + 1] = {
    { "r-ref", BG_PART_PTC },        { "alpha", BG_PART_PTC },
    { "tol-r", BG_PART_PTC },        { "tol-alpha", BG_PART_PTC },
    { "v-ref", BG_PART_JUNCTION },   { "dvdt", BG_PART_JUNCTION },
    { "tol-v", BG_PART_JUNCTION },   { "tol-dvdt", BG_PART_JUNCTION },
    { "r0-nominal", BG_PART_PRT },   { "class", BG_PART_PRT },
    { "offset", BG_PART_IC },        { "gain", BG_PART_IC },
    { "tol-offset", BG_PART_IC },    { "tol-gain", BG_PART_IC },
};

struct part_args {
    bg_part_spec spec;
    struct cli_inline in;
    const char *table;
    int json, help;
    int have_sensor, have_tref;
    unsigned given;              /* bit (c - O_RREF): a nominal value option was given */
};

/* A signed value: an optional '-' before what 'parse' takes. */
static int parse_signed(const char *arg, int (*parse)(const char *, double *, bg_error *),
                        double *v, bg_error *err)
{
    int neg = arg[0] == '-';
    int rc = parse(arg + neg, v, err);
    if (rc == BG_OK && neg)
        *v = -*v;
    return rc;
}

static int parse_volts(const char *s, double *v, bg_error *err)
{
    return bg_units_parse_si(s, "V", v, err);
}

static int parse_slope(const char *s, double *v, bg_error *err)
{
    return bg_units_parse_si(s, "V/K", v, err);
}

/* A temperature coefficient "0.79%/K" or "7900ppm/K" in 1/K. */
static int parse_per_k(const char *s, double *v, bg_error *err)
{
    char buf[64];
    size_t n = strlen(s);
    if (n < 3 || n >= sizeof buf || strcmp(s + n - 2, "/K") != 0)
        return bg_error_set(err, BG_EINVAL, "'%s': give a coefficient per kelvin, such as "
                            "0.79%%/K or 7900ppm/K", s);
    memcpy(buf, s, n - 2);
    buf[n - 2] = '\0';
    return bg_units_parse_fraction(buf, v, err);
}

/* A nominal value option of a sensor kind into 'a' (its kind is checked after parsing). */
static int kind_option(struct part_args *a, int c, const char *arg)
{
    bg_error err = BG_ERROR_INIT;
    bg_part_spec *p = &a->spec;
    const char *nm = c == O_SENSOR ? "sensor" : c == O_TREF ? "t-ref" : kind_opts[c - O_RREF].name;
    int rc = BG_OK;
    switch (c) {
    case O_SENSOR:
        a->have_sensor = 1;
        rc = bg_part_sensor_parse(arg, &p->sensor, &err);
        break;
    case O_TREF:
        a->have_tref = 1;
        rc = bg_units_parse_temp(arg, BG_UNIT_NONE, &p->nom_t_k, &err);
        break;
    case O_RREF: case O_R0NOM: rc = bg_units_parse_ohms(arg, &p->nom_x, &err); break;
    case O_ALPHA: rc = parse_per_k(arg, &p->nom_s, &err); break;
    case O_TOLR: case O_TOLG: rc = bg_units_parse_fraction(arg, c == O_TOLR ? &p->tol_x :
                                                           &p->tol_s, &err); break;
    case O_TOLA: rc = bg_units_parse_fraction(arg, &p->tol_s, &err); break;
    case O_VREF: rc = parse_volts(arg, &p->nom_x, &err); break;
    case O_TOLV: rc = parse_volts(arg, &p->tol_x, &err); break;
    case O_DVDT: rc = parse_signed(arg, parse_slope, &p->nom_s, &err); break;
    case O_TOLD: rc = parse_slope(arg, &p->tol_s, &err); break;
    case O_OFFSET: rc = bg_units_parse_tcorr(arg, &p->nom_x, &err); break;
    case O_TOLO: rc = bg_units_parse_tdiff(arg, &p->tol_x, &err); break;
    case O_GAIN: rc = parse_signed(arg, bg_units_parse_fraction, &p->nom_s, &err); break;
    default: /* O_CLASS */
        if (!isfinite(bg_iec60751_tolerance_k(arg, 0.0)))
            return cli_usage_error("part", "--class: '%s': an IEC 60751 class is AA, A, B or C",
                                   arg);
        snprintf(p->iec_class, sizeof p->iec_class, "%s", arg);
    }
    if (rc != BG_OK)
        return cli_usage_error("part", "--%s: %s", nm, err.msg);
    if (c >= O_RREF)
        a->given |= 1u << (c - O_RREF);
    return BG_OK;
}

/* Every nominal value given belongs to the --sensor kind, and the kind has all of its own. */
static int kind_check(struct part_args *a)
{
    bg_part_spec *p = &a->spec;
    const char *k = bg_part_sensor_name(p->sensor);
    for (int i = 0; i <= O_LAST - O_RREF; i++) {
        const struct kind_opt *o = &kind_opts[i];
        if (!(a->given & (1u << i)) || o->kind == p->sensor)
            continue;
        if (!a->have_sensor)
            return cli_usage_error("part", "--%s is a %s part's nominal value: give --sensor %s",
                                   o->name, bg_part_sensor_name(o->kind),
                                   bg_part_sensor_name(o->kind));
        return cli_usage_error("part", "--%s is a %s part's nominal value, not a %s part's",
                               o->name, bg_part_sensor_name(o->kind), k);
    }
    if (a->have_tref && (p->sensor == BG_PART_NTC || p->sensor == BG_PART_PRT))
        return cli_usage_error("part", "--t-ref: a%s %s part's nominal values are at %s", 
                               p->sensor == BG_PART_NTC ? "n" : "", k, p->sensor == BG_PART_NTC
                               ? "the lot's (bandgap lot add)" : "0 degC (R0)");
    for (int i = 0; i <= O_LAST - O_RREF; i++)
        if (kind_opts[i].kind == p->sensor && !(a->given & (1u << i)))
            return cli_usage_error("part", "--sensor %s needs --%s", k, kind_opts[i].name);
    if (p->sensor != BG_PART_NTC && !a->have_tref)
        p->nom_t_k = p->sensor == BG_PART_PRT ? BG_ZERO_C_K : BG_T0_DEFAULT_K;
    return BG_OK;
}

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
        { "sensor", required_argument, NULL, O_SENSOR }, { "t-ref", required_argument, NULL, O_TREF },
        { "r-ref", required_argument, NULL, O_RREF }, { "alpha", required_argument, NULL, O_ALPHA },
        { "tol-r", required_argument, NULL, O_TOLR }, { "tol-alpha", required_argument, NULL, O_TOLA },
        { "v-ref", required_argument, NULL, O_VREF }, { "dvdt", required_argument, NULL, O_DVDT },
        { "tol-v", required_argument, NULL, O_TOLV }, { "tol-dvdt", required_argument, NULL, O_TOLD },
        { "r0-nominal", required_argument, NULL, O_R0NOM },
        { "class", required_argument, NULL, O_CLASS },
        { "offset", required_argument, NULL, O_OFFSET }, { "gain", required_argument, NULL, O_GAIN },
        { "tol-offset", required_argument, NULL, O_TOLO },
        { "tol-gain", required_argument, NULL, O_TOLG },
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
        else if (c >= O_SENSOR && c <= O_LAST)
            rc = kind_option(a, c, optarg);
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
    return kind_check(a);
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

/* The sensor kind's nominal values, each in its own unit (the key says it). */
static void sensor_json(json_out *j, const bg_part_spec *p)
{
    json_str(j, "sensor", bg_part_sensor_name(p->sensor));
    switch (p->sensor) {
    case BG_PART_PTC:
        json_num(j, "t_ref_k", p->nom_t_k);
        json_num(j, "r_ref_ohm", p->nom_x), json_num(j, "tol_r_frac", p->tol_x);
        json_num(j, "alpha_per_k", p->nom_s), json_num(j, "tol_alpha_frac", p->tol_s);
        break;
    case BG_PART_JUNCTION:
        json_num(j, "t_ref_k", p->nom_t_k);
        json_num(j, "v_ref_v", p->nom_x), json_num(j, "tol_v_v", p->tol_x);
        json_num(j, "dvdt_v_per_k", p->nom_s), json_num(j, "tol_dvdt_v_per_k", p->tol_s);
        break;
    case BG_PART_PRT:
        json_num(j, "r0_ohm", p->nom_x), json_str(j, "iec_class", p->iec_class);
        break;
    case BG_PART_IC:
        json_num(j, "t_ref_k", p->nom_t_k);
        json_num(j, "offset_k", p->nom_x), json_num(j, "tol_offset_k", p->tol_x);
        json_num(j, "gain", p->nom_s), json_num(j, "tol_gain", p->tol_s);
        break;
    default:
        break;
    }
}

static void sensor_text(const bg_part_spec *p, const char *pre)
{
    double tc = p->nom_t_k - BG_ZERO_C_K;
    switch (p->sensor) {
    case BG_PART_PTC:
        printf("%s  sensor: ptc; at %.2f degC R %.6g ohm +-%.4g %%, alpha %.6g %%/K +-%.4g %% "
               "of it\n", pre, tc, p->nom_x, 100 * p->tol_x, 100 * p->nom_s, 100 * p->tol_s);
        break;
    case BG_PART_JUNCTION:
        printf("%s  sensor: junction; at %.2f degC V %.6g mV +-%.4g mV, dV/dT %.6g mV/K "
               "+-%.4g mV/K\n", pre, tc, 1e3 * p->nom_x, 1e3 * p->tol_x, 1e3 * p->nom_s,
               1e3 * p->tol_s);
        break;
    case BG_PART_PRT:
        printf("%s  sensor: prt; R0 %.6g ohm, IEC 60751 class %s\n", pre, p->nom_x,
               p->iec_class);
        break;
    case BG_PART_IC:
        printf("%s  sensor: ic; at T_r %.2f degC offset c0 %+.4g mK +-%.4g mK, gain c1 "
               "%+.4g %% +-%.4g %%\n", pre, tc, 1e3 * p->nom_x, 1e3 * p->tol_x, 100 * p->nom_s,
               100 * p->tol_s);
        break;
    default:
        break;
    }
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
    sensor_json(j, p);
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
        printf("%s  nominal curve: %s\n", pre, p->sensor == BG_PART_NTC ? "none (each lot's R25 "
               "and B as a beta curve)" : "none (the sensor kind's nominal values below)");
    sensor_text(p, pre);
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
