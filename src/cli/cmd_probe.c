/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap probe add|list|show: the probes of the lots, with their runs and fits. */
#include <getopt.h>
#include <stdio.h>
#include <string.h>

#include "cli.h"

static const char probe_usage[] =
    "Usage: bandgap probe add SERIAL --lot CODE [--note TEXT]\n"
    "       bandgap probe list [--lot CODE] [--json]\n"
    "       bandgap probe show SERIAL [--json]\n"
    "A probe belongs to one lot.  Serials are stored and printed exactly as given.\n";

int cmd_probe(int argc, char **argv, struct cli_ctx *ctx)
{
    static const struct option opts[] = {
        { "lot", required_argument, NULL, 'l' }, { "note", required_argument, NULL, 'n' },
        { "json", no_argument, NULL, 'j' },      { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 },
    };
    bg_error err = BG_ERROR_INIT;
    bg_store *st = NULL;
    const char *lot = NULL, *note = NULL, *verb;
    int c, rc;

    opterr = 0;
    while ((c = getopt_long(argc, argv, ":h", opts, NULL)) != -1) {
        switch (c) {
        case 'h': fputs(probe_usage, stdout); return BG_OK;
        case 'l': lot = optarg; break;
        case 'n': note = optarg; break;
        case 'j': ctx->json = 1; break;
        case ':': return cli_usage_error("probe", "option '%s' needs a value", argv[optind - 1]);
        default: return cli_unknown_option("probe", argv[optind - 1], opts);
        }
    }
    if (optind >= argc)
        return cli_usage_error("probe", "say add, list or show");
    verb = argv[optind];
    if (strcmp(verb, "add") == 0) {
        long long id;
        if (optind + 2 != argc)
            return cli_usage_error("probe", "add takes one serial");
        if (!lot)
            return cli_usage_error("probe", "add needs --lot CODE");
        if ((rc = cli_open_store(ctx, 0, &st)) != BG_OK)
            return rc;
        rc = bg_store_probe_add(st, argv[optind + 1], lot, note, &id, &err);
        if (rc != BG_OK)
            cli_fail("probe add", &err);
        else if (ctx->json)
            printf("{\"id\":%lld}\n", id);
        else
            printf("added probe %s to lot %s (id %lld)\n", argv[optind + 1], lot, id);
        bg_store_close(st);
        return rc;
    }
    if (strcmp(verb, "list") == 0 || strcmp(verb, "show") == 0) {
        int show = verb[0] == 's';
        json_out j;
        json_out *jp = ctx->json ? &j : NULL;
        if (optind + (show ? 2 : 1) != argc)
            return cli_usage_error("probe", show ? "show takes one serial"
                                                 : "list takes no arguments");
        if ((rc = cli_open_store(ctx, 0, &st)) != BG_OK)
            return rc;
        if (jp)
            json_begin(jp, stdout);
        if (show) {
            bg_probe p;
            const char *serial = argv[optind + 1];
            rc = bg_store_probe_get(st, serial, &p, &err);
            if (rc == BG_OK && jp) {
                json_obj(jp, NULL);
                json_str(jp, "serial", p.serial);
                json_str(jp, "lot", p.lot_code);
                json_str(jp, "note", p.note[0] ? p.note : NULL);
                json_arr(jp, "runs");
                rc = bg_store_run_each(st, serial, NULL, cli_print_probe_run, jp, &err);
                json_arr_end(jp);
                json_arr(jp, "fits");
                if (rc == BG_OK)
                    rc = bg_store_fit_each(st, serial, NULL, cli_print_probe_fit, jp, &err);
                json_arr_end(jp);
                json_obj_end(jp);
                json_end(jp);
            } else if (rc == BG_OK) {
                printf("probe %s, lot %s%s%s\n", p.serial, p.lot_code, p.note[0] ? ": " : "",
                       p.note);
                if (p.nruns == 0)
                    printf("  no runs yet (bandgap import FILE --probe SERIAL)\n");
                rc = bg_store_run_each(st, serial, NULL, cli_print_probe_run, NULL, &err);
                if (rc == BG_OK)
                    rc = bg_store_fit_each(st, serial, NULL, cli_print_probe_fit, NULL, &err);
            }
        } else {
            if (jp)
                json_arr(jp, NULL);
            rc = bg_store_probe_each(st, lot, cli_print_probe, jp, &err);
            if (jp) {
                json_arr_end(jp);
                json_end(jp);
            }
        }
        if (rc != BG_OK)
            cli_fail(show ? "probe show" : "probe list", &err);
        bg_store_close(st);
        return rc;
    }
    return cli_usage_error("probe", "unknown action '%s' (add, list or show)", verb);
}
