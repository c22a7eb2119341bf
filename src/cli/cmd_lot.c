/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap lot add|set|list|show: production lots with their nominal curve and tolerances,
** and their versions (a corrected tolerance adds one). */
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

static const char lot_usage[] =
    "Usage: bandgap lot add CODE --part P --r25 OHMS --beta B [--pair T1/T2]\n"
    "                   --tol-r25 REL --tol-beta REL [--note TEXT]\n"
    "       bandgap lot add CODE --part P --sensor ptc|junction|prt|ic [--note TEXT]\n"
    "       bandgap lot set CODE [--tol-r25 REL] [--tol-beta REL] [--note TEXT] --why TEXT\n"
    "                   [--by NAME] [--from TIME]\n"
    "       bandgap lot list [--json]\n"
    "       bandgap lot show CODE [--json]\n"
    "A production lot: part number, nominal R25 (10k, 4k7, 470R, 3000ohm) and B in kelvin\n"
    "(3950K) for the pair (default 25/85, in degC), and their tolerances with their unit\n"
    "(1%, 0.5% or 5000ppm; a bare number is refused).  Codes are stored exactly as given.\n"
    "A lot of another kind (--sensor, or the kind of the part's specification in force)\n"
    "holds no R25, B or tolerances: its nominal values and tolerances are the part's\n"
    "(bandgap part set P --sensor KIND ...), and the NTC options are refused for it.\n"
    "set corrects the tolerances or the note as a new version (what is not given is kept),\n"
    "valid from TIME (ISO 8601; default now), with the reason and who (default $USER, else\n"
    "the login name of the user id): each calibration is judged against the tolerances in\n"
    "force at its start.\n";

struct lot_args {
    bg_lot lot;
    int have_r25, have_beta, have_tr, have_tb, have_pair, have_sensor;
    const char *why, *by, *from;
};

/* Parse the options into 'a'; -1 after --help. */
static int lot_parse(int argc, char **argv, struct lot_args *a, struct cli_ctx *ctx)
{
    enum { O_PART = 1, O_R25, O_BETA, O_PAIR, O_TOLR, O_TOLB, O_NOTE, O_JSON, O_WHY, O_BY,
           O_FROM, O_SENSOR };
    static const struct option opts[] = {
        { "part", required_argument, NULL, O_PART }, { "r25", required_argument, NULL, O_R25 },
        { "beta", required_argument, NULL, O_BETA }, { "pair", required_argument, NULL, O_PAIR },
        { "tol-r25", required_argument, NULL, O_TOLR },
        { "tol-beta", required_argument, NULL, O_TOLB },
        { "note", required_argument, NULL, O_NOTE }, { "json", no_argument, NULL, O_JSON },
        { "why", required_argument, NULL, O_WHY },   { "by", required_argument, NULL, O_BY },
        { "from", required_argument, NULL, O_FROM },
        { "sensor", required_argument, NULL, O_SENSOR },
        { "help", no_argument, NULL, 'h' },          { NULL, 0, NULL, 0 },
    };
    bg_error err = BG_ERROR_INIT;
    bg_lot *lot = &a->lot;
    int c;

    opterr = 0;
    while ((c = getopt_long(argc, argv, ":h", opts, NULL)) != -1) {
        switch (c) {
        case 'h': fputs(lot_usage, stdout); return -1;
        case O_PART: snprintf(lot->part, sizeof lot->part, "%s", optarg); break;
        case O_R25:
            if (bg_units_parse_ohms(optarg, &lot->r25_ohm, &err) != BG_OK)
                return cli_usage_error("lot", "--r25: %s", err.msg);
            a->have_r25 = 1;
            break;
        case O_BETA:
            if (bg_units_parse_si(optarg, "K", &lot->beta_k, &err) != BG_OK)
                return cli_usage_error("lot", "--beta: %s", err.msg);
            a->have_beta = 1;
            break;
        case O_PAIR:
            if (bg_model_parse_pair(optarg, &lot->pair_t1_k, &lot->pair_t2_k, &err) != BG_OK)
                return cli_usage_error("lot", "--pair: %s", err.msg);
            a->have_pair = 1;
            break;
        case O_SENSOR:
            if (bg_part_sensor_parse(optarg, &lot->sensor, &err) != BG_OK)
                return cli_usage_error("lot", "--sensor: %s", err.msg);
            a->have_sensor = 1;
            break;
        case O_TOLR: case O_TOLB:
            if (bg_units_parse_fraction(optarg, c == O_TOLR ? &lot->tol_r25 : &lot->tol_beta,
                                        &err) != BG_OK)
                return cli_usage_error("lot", "--%s: %s", c == O_TOLR ? "tol-r25" : "tol-beta",
                                       err.msg);
            *(c == O_TOLR ? &a->have_tr : &a->have_tb) = 1;
            break;
        case O_NOTE:
            if (strlen(optarg) >= sizeof lot->note)
                return cli_usage_error("lot", "--note is longer than %zu bytes",
                                       sizeof lot->note - 1);
            snprintf(lot->note, sizeof lot->note, "%s", optarg);
            break;
        case O_JSON: ctx->json = 1; break;
        case O_WHY: a->why = optarg; break;
        case O_BY: a->by = optarg; break;
        case O_FROM:
            if (strlen(optarg) >= BG_TIME || !bg_csv_valid_time(optarg))
                return cli_usage_error("lot", "--from: '%s': not an ISO 8601 date-time", optarg);
            a->from = optarg;
            break;
        case ':': return cli_usage_error("lot", "option '%s' needs a value", argv[optind - 1]);
        default: return cli_unknown_option("lot", argv[optind - 1], opts);
        }
    }
    if (optind >= argc)
        return cli_usage_error("lot", "say add, set, list or show");
    return BG_OK;
}

/* The first NTC option given ("--r25", ...), or NULL. */
static const char *lot_ntc_option(const struct lot_args *a)
{
    return a->have_r25 ? "--r25" : a->have_beta ? "--beta" : a->have_pair ? "--pair" :
           a->have_tr ? "--tol-r25" : a->have_tb ? "--tol-beta" : NULL;
}

/* The lot's kind: --sensor, else the kind of its part's specification in force (said), else
** an NTC lot; a lot of another kind takes none of the NTC options.  '*said' is set to what
** the output says about where the kind came from. */
static int lot_kind(struct lot_args *a, bg_store *st, const char **said)
{
    bg_error err = BG_ERROR_INIT;
    bg_part_spec spec;
    bg_lot *lot = &a->lot;
    const char *opt = lot_ntc_option(a);
    int rc;

    *said = a->have_sensor ? "--sensor" : "no specification of another kind: an NTC lot";
    if (!a->have_sensor) {
        if ((rc = bg_store_part_spec_get(st, lot->part, &spec, &err)) != BG_OK) {
            cli_fail("lot add", &err);
            return rc;
        }
        lot->sensor = spec.id ? spec.sensor : BG_PART_NTC;
        if (spec.id && spec.sensor != BG_PART_NTC)
            *said = "the part's specification in force";
    }
    if (lot->sensor == BG_PART_NTC) {
        if (!a->have_r25 || !a->have_beta || !a->have_tr || !a->have_tb)
            return cli_usage_error("lot", "an NTC lot needs --r25, --beta, --tol-r25 and "
                                   "--tol-beta (part %s has %s; --sensor KIND for a lot of "
                                   "another kind)", lot->part, a->have_sensor ? "--sensor ntc"
                                   : "no specification of another kind");
        return BG_OK;
    }
    if (opt)
        return cli_usage_error("lot", "%s is an NTC lot's option; lot %s is a %s lot (%s), "
                               "whose nominal values and tolerances are part %s's (bandgap "
                               "part show %s)", opt, lot->code,
                               bg_part_sensor_name(lot->sensor), *said, lot->part, lot->part);
    lot->r25_ohm = lot->beta_k = lot->pair_t1_k = lot->pair_t2_k = NAN;
    lot->tol_r25 = lot->tol_beta = NAN;
    return BG_OK;
}

static int lot_add(struct lot_args *a, const char *code, struct cli_ctx *ctx)
{
    bg_error err = BG_ERROR_INIT;
    bg_store *st = NULL;
    const char *said;
    long long id;
    int rc;

    if (strlen(code) >= sizeof a->lot.code)
        return cli_usage_error("lot", "lot code is longer than %zu bytes",
                               sizeof a->lot.code - 1);
    snprintf(a->lot.code, sizeof a->lot.code, "%s", code);
    if (!a->lot.part[0])
        return cli_usage_error("lot", "add needs --part");
    if (a->have_sensor && a->lot.sensor == BG_PART_NTC &&
        (!a->have_r25 || !a->have_beta || !a->have_tr || !a->have_tb))
        return cli_usage_error("lot", "an NTC lot needs --r25, --beta, --tol-r25 and "
                               "--tol-beta");
    if (a->have_sensor && a->lot.sensor != BG_PART_NTC && lot_ntc_option(a))
        return cli_usage_error("lot", "%s is an NTC lot's option, not a %s lot's (whose "
                               "nominal values and tolerances are its part's: bandgap part "
                               "show %s)", lot_ntc_option(a), bg_part_sensor_name(a->lot.sensor),
                               a->lot.part);
    if ((rc = cli_open_store(ctx, 0, &st)) != BG_OK)
        return rc;
    if ((rc = lot_kind(a, st, &said)) != BG_OK) {
        bg_store_close(st);
        return rc;
    }
    rc = bg_store_lot_add(st, &a->lot, &id, &err);
    if (rc == BG_OK && ctx->json) {
        json_out j;
        json_begin(&j, stdout);
        json_obj(&j, NULL);
        json_int(&j, "id", id);
        json_str(&j, "code", a->lot.code);
        json_str(&j, "sensor", bg_part_sensor_name(a->lot.sensor));
        json_str(&j, "sensor_from", a->have_sensor ? "option" : a->lot.sensor != BG_PART_NTC
                                    ? "part" : "default");
        json_obj_end(&j);
        json_end(&j);
    } else if (rc == BG_OK && a->lot.sensor != BG_PART_NTC) {
        printf("added %s lot %s (id %lld; kind from %s); its nominal values and tolerances "
               "are part %s's\n", bg_part_sensor_name(a->lot.sensor), a->lot.code, id, said,
               a->lot.part);
    } else if (rc == BG_OK)
        printf("added lot %s (id %lld)\n", a->lot.code, id);
    else
        cli_fail("lot add", &err);
    bg_store_close(st);
    return rc;
}

static int lot_set(struct lot_args *a, const char *code, struct cli_ctx *ctx)
{
    bg_error err = BG_ERROR_INIT;
    bg_lot_version lv;
    bg_store *st = NULL;
    long long id;
    int rc;

    if (a->lot.part[0] || a->have_r25 || a->have_beta || a->have_pair || a->have_sensor)
        return cli_usage_error("lot", "set changes --tol-r25, --tol-beta and --note only (the "
                               "nominal curve and the kind of a lot are not changed)");
    if (!a->why || !*a->why)
        return cli_usage_error("lot", "set needs --why TEXT (the reason for the new version)");
    char who[BG_TEXT], how[128];
    a->by = cli_who(a->by, who, sizeof who, how, sizeof how);
    if (!*a->by)
        return cli_usage_error("lot", "--by needs a name");
    memset(&lv, 0, sizeof lv);
    if (strlen(code) >= sizeof lv.lot.code || strlen(a->why) >= sizeof lv.v.why ||
        strlen(a->by) >= sizeof lv.v.by)
        return cli_usage_error("lot", "the lot code, --why or --by is too long");
    snprintf(lv.lot.code, sizeof lv.lot.code, "%s", code);
    lv.lot.tol_r25 = a->have_tr ? a->lot.tol_r25 : -1.0;
    lv.lot.tol_beta = a->have_tb ? a->lot.tol_beta : -1.0;
    memcpy(lv.lot.note, a->lot.note, sizeof lv.lot.note);
    snprintf(lv.v.why, sizeof lv.v.why, "%s", a->why);
    snprintf(lv.v.by, sizeof lv.v.by, "%s", a->by);
    if ((rc = cli_open_store(ctx, 0, &st)) != BG_OK)
        return rc;
    bg_lot now;
    if ((a->have_tr || a->have_tb) && bg_store_lot_get(st, code, &now, &err) == BG_OK &&
        now.sensor != BG_PART_NTC) { /* (an unknown lot: bg_store_lot_set says so) */
        bg_store_close(st);
        return cli_usage_error("lot", "%s is an NTC lot's option; lot %s is a %s lot, whose "
                               "tolerances are part %s's (bandgap part set %s ...)",
                               a->have_tr ? "--tol-r25" : "--tol-beta", now.code,
                               bg_part_sensor_name(now.sensor), now.part, now.part);
    }
    if (a->from)
        snprintf(lv.v.valid_from, sizeof lv.v.valid_from, "%s", a->from);
    else /* valid from now: the time is said below */
        bg_store_time(st, lv.v.valid_from, sizeof lv.v.valid_from);
    if ((rc = bg_store_lot_set(st, &lv, &id, &err)) != BG_OK) {
        cli_fail("lot set", &err);
    } else if (cli_who_note(lv.v.by, how), ctx->json) {
        json_out j;
        json_begin(&j, stdout);
        json_obj(&j, NULL);
        json_str(&j, "code", lv.lot.code);
        json_int(&j, "version", id);
        json_str(&j, "valid_from", lv.v.valid_from);
        json_obj_end(&j);
        json_end(&j);
    } else {
        printf("added version %lld of lot %s, valid from %s\n", id, lv.lot.code,
               lv.v.valid_from);
    }
    bg_store_close(st);
    return rc;
}

/* The later versions of a lot (version 0 is the lot shown above them). */
static int print_lot_version(const bg_lot_version *lv, void *ctx)
{
    json_out *j = ctx;
    if (lv->v.id == 0)
        return 0;
    if (!j && isnan(lv->lot.tol_r25)) { /* a lot of another kind: a note only */
        printf("  version %lld, valid from %s: note: %s\n    recorded %s by %s: %s\n",
               lv->v.id, lv->v.valid_from, lv->lot.note, lv->v.created_at, lv->v.by,
               lv->v.why);
        return 0;
    }
    if (!j) {
        printf("  version %lld, valid from %s: tolerance R25 %.4g %%, B %.4g %%%s%s\n"
               "    recorded %s by %s: %s\n", lv->v.id, lv->v.valid_from,
               100.0 * lv->lot.tol_r25, 100.0 * lv->lot.tol_beta, lv->lot.note[0] ? "; note: "
               : "", lv->lot.note, lv->v.created_at, lv->v.by, lv->v.why);
        return 0;
    }
    json_obj(j, NULL);
    json_int(j, "version", lv->v.id);
    json_str(j, "valid_from", lv->v.valid_from);
    json_num(j, "tol_r25", lv->lot.tol_r25);
    json_num(j, "tol_beta", lv->lot.tol_beta);
    json_str(j, "note", lv->lot.note[0] ? lv->lot.note : NULL);
    json_str(j, "why", lv->v.why);
    json_str(j, "by", lv->v.by);
    json_str(j, "recorded_at", lv->v.created_at);
    json_obj_end(j);
    return 0;
}

struct list_ctx { json_out *j; size_t n; };

static int list_one(const bg_lot *l, void *p)
{
    struct list_ctx *lc = p;
    cli_print_lot(lc->j, NULL, l);
    lc->n++;
    return 0;
}

static int lot_show(bg_store *st, const char *code, json_out *j, bg_error *err)
{
    bg_lot lot;
    int rc = bg_store_lot_get(st, code, &lot, err);
    if (rc != BG_OK)
        return rc;
    if (!j) {
        cli_print_lot(NULL, NULL, &lot);
        if (lot.note[0])
            printf("  note: %s\n", lot.note);
        if ((rc = bg_store_lot_versions(st, lot.code, print_lot_version, NULL, err)) != BG_OK)
            return rc;
        return bg_store_probe_each(st, lot.code, cli_print_lot_probe, NULL, err);
    }
    json_obj(j, NULL);
    cli_print_lot(j, "lot", &lot);
    json_arr(j, "versions");
    rc = bg_store_lot_versions(st, lot.code, print_lot_version, j, err);
    json_arr_end(j);
    json_arr(j, "probes");
    if (rc == BG_OK)
        rc = bg_store_probe_each(st, lot.code, cli_print_lot_probe, j, err);
    json_arr_end(j);
    json_obj_end(j);
    json_end(j);
    return rc;
}

/* 'lot list' ('code' NULL) or 'lot show CODE'. */
static int lot_list_show(const char *code, struct cli_ctx *ctx)
{
    bg_error err = BG_ERROR_INIT;
    bg_store *st = NULL;
    json_out j;
    struct list_ctx lc = { ctx->json ? &j : NULL, 0 };
    int rc;

    if ((rc = cli_open_store(ctx, 0, &st)) != BG_OK)
        return rc;
    if (ctx->json)
        json_begin(&j, stdout);
    if (code)
        rc = lot_show(st, code, lc.j, &err);
    else {
        if (ctx->json)
            json_arr(&j, NULL);
        rc = bg_store_lot_each(st, list_one, &lc, &err);
        if (ctx->json) {
            json_arr_end(&j);
            json_end(&j);
        } else if (rc == BG_OK && lc.n == 0)
            printf("no lots (add one with 'bandgap lot add')\n");
    }
    if (rc != BG_OK)
        cli_fail(code ? "lot show" : "lot list", &err);
    bg_store_close(st);
    return rc;
}

int cmd_lot(int argc, char **argv, struct cli_ctx *ctx)
{
    struct lot_args a;
    const char *verb;
    int rc;

    memset(&a, 0, sizeof a);
    a.by = NULL;
    a.lot.pair_t1_k = 298.15, a.lot.pair_t2_k = 358.15;
    if ((rc = lot_parse(argc, argv, &a, ctx)) != BG_OK)
        return rc < 0 ? BG_OK : rc;
    verb = argv[optind];
    if (strcmp(verb, "add") == 0) {
        if (optind + 2 != argc)
            return cli_usage_error("lot", "add takes one lot code");
        if (a.why || a.from)
            return cli_usage_error("lot", "--why and --from are for set");
        return lot_add(&a, argv[optind + 1], ctx);
    }
    if (strcmp(verb, "set") == 0) {
        if (optind + 2 != argc)
            return cli_usage_error("lot", "set takes one lot code");
        return lot_set(&a, argv[optind + 1], ctx);
    }
    if (strcmp(verb, "list") == 0 || strcmp(verb, "show") == 0) {
        int show = verb[0] == 's';
        if (optind + (show ? 2 : 1) != argc)
            return cli_usage_error("lot", show ? "show takes one lot code"
                                               : "list takes no arguments");
        return lot_list_show(show ? argv[optind + 1] : NULL, ctx);
    }
    return cli_usage_error("lot", "unknown action '%s' (add, set, list or show)", verb);
}
