/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap exclude: keep a reading out of future fits, recording who, when and why. */
#include <getopt.h>
#include <stdio.h>
#include <stdlib.h>

#include "cli.h"

static const char exclude_usage[] =
    "Usage: bandgap exclude READING --why TEXT [--by NAME]\n"
    "Exclude reading READING (its id, as 'bandgap show run N' prints it) from future fits.\n"
    "The reading stays in the database with the reason, the name (default $USER, else the\n"
    "login name of the user id) and the time; fits already made are not changed.  Fit again\n"
    "to get a new fit without it.\n";

int cmd_exclude(int argc, char **argv, struct cli_ctx *ctx)
{
    static const struct option opts[] = {
        { "why", required_argument, NULL, 'w' }, { "by", required_argument, NULL, 'b' },
        { "json", no_argument, NULL, 'j' },      { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 },
    };
    bg_error err = BG_ERROR_INIT;
    bg_store *st = NULL;
    const char *why = NULL, *by = NULL;
    char who[BG_TEXT], how[128];
    long long id;
    int c, rc;

    opterr = 0;
    while ((c = getopt_long(argc, argv, ":h", opts, NULL)) != -1) {
        switch (c) {
        case 'h': fputs(exclude_usage, stdout); return BG_OK;
        case 'w': why = optarg; break;
        case 'b': by = optarg; break;
        case 'j': ctx->json = 1; break;
        case ':': return cli_usage_error("exclude", "option '%s' needs a value", argv[optind - 1]);
        default: return cli_unknown_option("exclude", argv[optind - 1], opts);
        }
    }
    if (optind + 1 != argc || cli_parse_id(argv[optind], &id) != BG_OK)
        return cli_usage_error("exclude", "give one reading id (a positive number)");
    if (!why || !*why)
        return cli_usage_error("exclude", "--why TEXT is required");
    by = cli_who(by, who, sizeof who, how, sizeof how);
    if ((rc = cli_open_store(ctx, 0, &st)) != BG_OK)
        return rc;
    rc = bg_store_exclude(st, id, why, by, &err);
    if (rc == BG_OK)
        cli_who_note(by, how);
    if (rc != BG_OK)
        cli_fail("exclude", &err);
    else if (ctx->json)
        printf("{\"excluded\":%lld}\n", id);
    else
        printf("reading %lld excluded from future fits\n", id);
    bg_store_close(st);
    return rc;
}
