/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap list runs|fits: the calibration history, optionally of one probe or one lot. */
#include <getopt.h>
#include <stdio.h>
#include <string.h>

#include "cli.h"

static const char list_usage[] =
    "Usage: bandgap list runs|fits [--probe SERIAL | --lot CODE] [--json]\n"
    "List calibration runs or stored fits, oldest first.\n";

int cmd_list(int argc, char **argv, struct cli_ctx *ctx)
{
    static const struct option opts[] = {
        { "probe", required_argument, NULL, 'p' }, { "lot", required_argument, NULL, 'l' },
        { "json", no_argument, NULL, 'j' },        { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 },
    };
    bg_error err = BG_ERROR_INIT;
    bg_store *st = NULL;
    const char *serial = NULL, *lot = NULL;
    json_out j;
    int c, rc, runs;

    opterr = 0;
    while ((c = getopt_long(argc, argv, ":h", opts, NULL)) != -1) {
        switch (c) {
        case 'h': fputs(list_usage, stdout); return BG_OK;
        case 'p': serial = optarg; break;
        case 'l': lot = optarg; break;
        case 'j': ctx->json = 1; break;
        case ':': return cli_usage_error("list", "option '%s' needs a value", argv[optind - 1]);
        default: return cli_unknown_option("list", argv[optind - 1], opts);
        }
    }
    if (optind + 1 != argc || (strcmp(argv[optind], "runs") && strcmp(argv[optind], "fits")))
        return cli_usage_error("list", "say runs or fits");
    if (serial && lot)
        return cli_usage_error("list", "give --probe or --lot, not both");
    runs = argv[optind][0] == 'r';
    if ((rc = cli_open_store(ctx, 0, &st)) != BG_OK)
        return rc;
    if (ctx->json) {
        json_begin(&j, stdout);
        json_arr(&j, NULL);
    }
    rc = runs ? bg_store_run_each(st, serial, lot, cli_print_run_line, ctx->json ? &j : NULL, &err)
              : bg_store_fit_each(st, serial, lot, cli_print_fit_line, ctx->json ? &j : NULL, &err);
    if (ctx->json) {
        json_arr_end(&j);
        json_end(&j);
    }
    if (rc != BG_OK)
        cli_fail("list", &err);
    bg_store_close(st);
    return rc;
}
