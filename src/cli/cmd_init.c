/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap init: create the calibration database (or confirm an existing one). */
#include <getopt.h>
#include <stdio.h>
#include <sys/stat.h>

#include "cli.h"

static const char init_usage[] =
    "Usage: bandgap init   (bandgap [--db PATH] init)\n"
    "Create the calibration database PATH (default $BANDGAP_DB or ./bandgap.db), a single\n"
    "SQLite file with a rollback journal, so that it stays one file (keep it on a local\n"
    "disk: SQLite's documentation warns against database files on network shares).  On an\n"
    "existing bandgap database it upgrades an older schema (keeping a copy)\n"
    "and otherwise changes nothing.\n";

int cmd_init(int argc, char **argv, struct cli_ctx *ctx)
{
    static const struct option opts[] = {
        { "help", no_argument, NULL, 'h' }, { "json", no_argument, NULL, 'j' },
        { NULL, 0, NULL, 0 },
    };
    struct stat sb;
    bg_store *st = NULL;
    int c, existed, rc;

    opterr = 0;
    while ((c = getopt_long(argc, argv, ":h", opts, NULL)) != -1) {
        if (c == 'h') {
            fputs(init_usage, stdout);
            return BG_OK;
        }
        if (c == 'j') {
            ctx->json = 1;
            continue;
        }
        return cli_unknown_option("init", argv[optind - 1], opts);
    }
    if (optind < argc)
        return cli_usage_error("init", "unexpected argument '%s'", argv[optind]);
    existed = stat(ctx->db_path, &sb) == 0;
    if ((rc = cli_open_store(ctx, 1, &st)) != BG_OK)
        return rc;
    if (ctx->json) {
        json_out j;
        json_begin(&j, stdout);
        json_obj(&j, NULL);
        json_str(&j, "database", ctx->db_path);
        json_bool(&j, "created", !existed);
        json_int(&j, "schema_version", bg_store_schema_version(st));
        json_obj_end(&j);
        json_end(&j);
    } else
        printf("%s %s (schema version %d)\n", existed ? "opened existing" : "created",
               ctx->db_path, bg_store_schema_version(st));
    bg_store_close(st);
    return BG_OK;
}
