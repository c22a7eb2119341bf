/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap probe add|move|list|show: the probes of the lots, with their runs and fits, and their
** moves from lot to lot (each a new version of the probe). */
#include <getopt.h>
#include <stdio.h>
#include <string.h>

#include "cli.h"

static const char probe_usage[] =
    "Usage: bandgap probe add SERIAL --lot CODE [--note TEXT]\n"
    "       bandgap probe move SERIAL --lot CODE --why TEXT [--by NAME] [--from TIME]\n"
    "       bandgap probe list [--lot CODE] [--json]\n"
    "       bandgap probe show SERIAL [--json]\n"
    "A probe belongs to one lot.  Serials are stored and printed exactly as given.\n"
    "move records that the probe belongs to lot CODE (of the same part) from TIME on (ISO\n"
    "8601; default now, never later), with the reason and who (default $USER, else the login\n"
    "name of the user id), as a new version: a calibration run counts toward the lot its probe\n"
    "belonged to when the run started.\n";

struct probe_args {
    const char *lot, *note, *why, *by, *from;
};

/* Parse the options into 'a'; -1 after --help. */
static int probe_parse(int argc, char **argv, struct probe_args *a, struct cli_ctx *ctx)
{
    enum { O_LOT = 1, O_NOTE, O_JSON, O_WHY, O_BY, O_FROM };
    static const struct option opts[] = {
        { "lot", required_argument, NULL, O_LOT }, { "note", required_argument, NULL, O_NOTE },
        { "json", no_argument, NULL, O_JSON },     { "why", required_argument, NULL, O_WHY },
        { "by", required_argument, NULL, O_BY },   { "from", required_argument, NULL, O_FROM },
        { "help", no_argument, NULL, 'h' },        { NULL, 0, NULL, 0 },
    };
    int c;

    opterr = 0;
    while ((c = getopt_long(argc, argv, ":h", opts, NULL)) != -1) {
        switch (c) {
        case 'h': fputs(probe_usage, stdout); return -1;
        case O_LOT: a->lot = optarg; break;
        case O_NOTE: a->note = optarg; break;
        case O_JSON: ctx->json = 1; break;
        case O_WHY: a->why = optarg; break;
        case O_BY: a->by = optarg; break;
        case O_FROM:
            if (strlen(optarg) >= BG_TIME || !bg_csv_valid_time(optarg))
                return cli_usage_error("probe", "--from: '%s': not an ISO 8601 date-time",
                                       optarg);
            a->from = optarg;
            break;
        case ':': return cli_usage_error("probe", "option '%s' needs a value", argv[optind - 1]);
        default: return cli_unknown_option("probe", argv[optind - 1], opts);
        }
    }
    if (optind >= argc)
        return cli_usage_error("probe", "say add, move, list or show");
    return BG_OK;
}

static int probe_add(const struct probe_args *a, const char *serial, struct cli_ctx *ctx)
{
    bg_error err = BG_ERROR_INIT;
    bg_store *st = NULL;
    long long id;
    int rc;

    if (!a->lot)
        return cli_usage_error("probe", "add needs --lot CODE");
    if (a->why || a->by || a->from)
        return cli_usage_error("probe", "--why, --by and --from are for move");
    if ((rc = cli_open_store(ctx, 0, &st)) != BG_OK)
        return rc;
    rc = bg_store_probe_add(st, serial, a->lot, a->note, &id, &err);
    if (rc != BG_OK)
        cli_fail("probe add", &err);
    else if (ctx->json)
        printf("{\"id\":%lld}\n", id);
    else
        printf("added probe %s to lot %s (id %lld)\n", serial, a->lot, id);
    bg_store_close(st);
    return rc;
}

static void probe_moved(const bg_probe_version *pv, const bg_probe_move_result *r, int json)
{
    if (json) {
        json_out j;
        json_begin(&j, stdout);
        json_obj(&j, NULL);
        json_str(&j, "serial", pv->probe.serial);
        json_str(&j, "lot", pv->probe.lot_code);
        json_str(&j, "from_lot", r->from_lot);
        json_int(&j, "version", r->id);
        json_str(&j, "valid_from", r->valid_from);
        json_int(&j, "runs_moved", (long long)r->runs_moved);
        json_obj_end(&j);
        json_end(&j);
        return;
    }
    printf("moved probe %s from lot %s to lot %s, valid from %s (version %lld)\n",
           pv->probe.serial, r->from_lot, pv->probe.lot_code, r->valid_from, r->id);
    printf("  runs started from then on count toward lot %s; earlier runs keep their lot\n",
           pv->probe.lot_code);
    if (r->runs_moved)
        printf("  %zu recorded run%s started at or after then now count%s toward lot %s instead "
               "of %s\n", r->runs_moved, r->runs_moved == 1 ? "" : "s",
               r->runs_moved == 1 ? "s" : "", pv->probe.lot_code, r->from_lot);
}

static int probe_move(struct probe_args *a, const char *serial, struct cli_ctx *ctx)
{
    bg_error err = BG_ERROR_INIT;
    bg_probe_version pv;
    bg_probe_move_result res;
    bg_store *st = NULL;
    char who[BG_TEXT], how[128];
    int rc;

    if (!a->lot || !*a->lot)
        return cli_usage_error("probe", "move needs --lot CODE (the lot it moves to)");
    if (a->note)
        return cli_usage_error("probe", "--note is for add (a move records --why)");
    if (!a->why || !*a->why)
        return cli_usage_error("probe", "move needs --why TEXT (the reason for the new "
                               "version)");
    a->by = cli_who(a->by, who, sizeof who, how, sizeof how);
    if (!*a->by)
        return cli_usage_error("probe", "--by needs a name");
    memset(&pv, 0, sizeof pv);
    if (strlen(serial) >= sizeof pv.probe.serial || strlen(a->lot) >= sizeof pv.probe.lot_code ||
        strlen(a->why) >= sizeof pv.v.why || strlen(a->by) >= sizeof pv.v.by)
        return cli_usage_error("probe", "the serial, --lot, --why or --by is too long");
    snprintf(pv.probe.serial, sizeof pv.probe.serial, "%s", serial);
    snprintf(pv.probe.lot_code, sizeof pv.probe.lot_code, "%s", a->lot);
    snprintf(pv.v.why, sizeof pv.v.why, "%s", a->why);
    snprintf(pv.v.by, sizeof pv.v.by, "%s", a->by);
    snprintf(pv.v.valid_from, sizeof pv.v.valid_from, "%s", a->from ? a->from : "");
    if ((rc = cli_open_store(ctx, 0, &st)) != BG_OK)
        return rc;
    if ((rc = bg_store_probe_move(st, &pv, &res, &err)) != BG_OK)
        cli_fail("probe move", &err);
    else {
        cli_who_note(pv.v.by, how);
        probe_moved(&pv, &res, ctx->json);
    }
    bg_store_close(st);
    return rc;
}

/* The moves of a probe (version 0, the lot it was added to, is shown above them). */
static int print_probe_version(const bg_probe_version *pv, void *ctx)
{
    json_out *j = ctx;
    if (pv->v.id == 0)
        return 0;
    if (!j) {
        printf("  version %lld, valid from %s: moved to lot %s\n    recorded %s by %s: %s\n",
               pv->v.id, pv->v.valid_from, pv->probe.lot_code, pv->v.created_at, pv->v.by,
               pv->v.why);
        return 0;
    }
    json_obj(j, NULL);
    json_int(j, "version", pv->v.id);
    json_str(j, "valid_from", pv->v.valid_from);
    json_str(j, "lot", pv->probe.lot_code);
    json_str(j, "why", pv->v.why);
    json_str(j, "by", pv->v.by);
    json_str(j, "recorded_at", pv->v.created_at);
    json_obj_end(j);
    return 0;
}

/* The lot the probe was added to (its version 0). */
static int first_lot(const bg_probe_version *pv, void *ctx)
{
    snprintf(ctx, BG_TEXT, "%s", pv->probe.lot_code);
    return 1;
}

static int probe_show(bg_store *st, const char *serial, json_out *jp, bg_error *err)
{
    bg_probe p;
    char added[BG_TEXT] = "";
    int rc = bg_store_probe_get(st, serial, &p, err);
    if (rc == BG_OK)
        rc = bg_store_probe_versions(st, serial, first_lot, added, err);
    if (rc != BG_OK)
        return rc;
    if (jp) {
        json_obj(jp, NULL);
        json_str(jp, "serial", p.serial);
        json_str(jp, "lot", p.lot_code);
        json_str(jp, "added_to_lot", added);
        json_str(jp, "note", p.note[0] ? p.note : NULL);
        json_arr(jp, "versions");
        rc = bg_store_probe_versions(st, serial, print_probe_version, jp, err);
        json_arr_end(jp);
        json_arr(jp, "runs");
        if (rc == BG_OK)
            rc = bg_store_run_each(st, serial, NULL, cli_print_probe_run, jp, err);
        json_arr_end(jp);
        json_arr(jp, "fits");
        if (rc == BG_OK)
            rc = bg_store_fit_each(st, serial, NULL, cli_print_probe_fit, jp, err);
        json_arr_end(jp);
        json_obj_end(jp);
        json_end(jp);
        return rc;
    }
    printf("probe %s, lot %s%s%s\n", p.serial, p.lot_code, p.note[0] ? ": " : "", p.note);
    if (strcmp(added, p.lot_code) != 0)
        printf("  added to lot %s\n", added);
    if ((rc = bg_store_probe_versions(st, serial, print_probe_version, NULL, err)) != BG_OK)
        return rc;
    if (p.nruns == 0)
        printf("  no runs yet (bandgap import FILE --probe SERIAL)\n");
    rc = bg_store_run_each(st, serial, NULL, cli_print_probe_run, NULL, err);
    if (rc == BG_OK)
        rc = bg_store_fit_each(st, serial, NULL, cli_print_probe_fit, NULL, err);
    return rc;
}

static int probe_list_show(const struct probe_args *a, const char *serial, struct cli_ctx *ctx)
{
    bg_error err = BG_ERROR_INIT;
    bg_store *st = NULL;
    json_out j;
    json_out *jp = ctx->json ? &j : NULL;
    int rc;

    if ((rc = cli_open_store(ctx, 0, &st)) != BG_OK)
        return rc;
    if (jp)
        json_begin(jp, stdout);
    if (serial)
        rc = probe_show(st, serial, jp, &err);
    else {
        if (jp)
            json_arr(jp, NULL);
        rc = bg_store_probe_each(st, a->lot, cli_print_probe, jp, &err);
        if (jp) {
            json_arr_end(jp);
            json_end(jp);
        }
    }
    if (rc != BG_OK)
        cli_fail(serial ? "probe show" : "probe list", &err);
    bg_store_close(st);
    return rc;
}

int cmd_probe(int argc, char **argv, struct cli_ctx *ctx)
{
    struct probe_args a = { NULL, NULL, NULL, NULL, NULL };
    const char *verb;
    int rc;

    if ((rc = probe_parse(argc, argv, &a, ctx)) != BG_OK)
        return rc < 0 ? BG_OK : rc;
    verb = argv[optind];
    if (strcmp(verb, "add") == 0 || strcmp(verb, "move") == 0) {
        if (optind + 2 != argc)
            return cli_usage_error("probe", "%s takes one serial", verb);
        return verb[0] == 'a' ? probe_add(&a, argv[optind + 1], ctx)
                              : probe_move(&a, argv[optind + 1], ctx);
    }
    if (strcmp(verb, "list") == 0 || strcmp(verb, "show") == 0) {
        int show = verb[0] == 's';
        if (optind + (show ? 2 : 1) != argc)
            return cli_usage_error("probe", show ? "show takes one serial"
                                                 : "list takes no arguments");
        if (a.why || a.by || a.from || a.note || (show && a.lot))
            return cli_usage_error("probe", "%s takes %s", verb, show ? "no options but --json"
                                   : "--lot and --json only");
        return probe_list_show(&a, show ? argv[optind + 1] : NULL, ctx);
    }
    return cli_usage_error("probe", "unknown action '%s' (add, move, list or show)", verb);
}
