/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap list runs|fits: the calibration history, optionally of one probe or one lot. */
#include <getopt.h>
#include <stdio.h>
#include <string.h>

#include "cli.h"

static const char list_usage[] =
    "Usage: bandgap list runs|fits [--probe SERIAL | --lot CODE] [--json]\n"
    "List calibration runs or stored fits, oldest first.\n";

static int run_line(const bg_run *r, void *ctx)
{
    json_out *j = ctx;
    if (j) {
        json_obj(j, NULL);
        cli_json_run_fields(j, r);
        json_obj_end(j);
    } else
        printf("%6lld  %-20s %-20s %5lld readings %3lld excluded %3lld fits  ref %s\n", r->id,
               r->serial, r->started_at, r->nreadings, r->nexcluded, r->nfits,
               cli_or_dash(r->ref_ident));
    return 0;
}

static int fit_line(const bg_fit_row *f, void *ctx)
{
    json_out *j = ctx;
    char name[16];
    bg_model_name(&f->model, name, sizeof name);
    if (j)
        cli_json_fit_brief(j, f);
    else
        printf("%6lld  run %-6lld %-20s %-7s n %-3zu RMS %9.4f mK  max %9.4f mK  %s\n", f->id,
               f->run_id, f->serial, name, f->n, f->rms_mk, f->max_abs_mk, f->created_at);
    return 0;
}

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
        default: return cli_usage_error("list", "unknown option '%s'", argv[optind - 1]);
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
    rc = runs ? bg_store_run_each(st, serial, lot, run_line, ctx->json ? &j : NULL, &err)
              : bg_store_fit_each(st, serial, lot, fit_line, ctx->json ? &j : NULL, &err);
    if (ctx->json) {
        json_arr_end(&j);
        json_end(&j);
    }
    if (rc != BG_OK)
        cli_fail("list", &err);
    bg_store_close(st);
    return rc;
}
