/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap verify: the whole record checked: the database's own integrity and foreign keys,
** the hash chain recomputed record by record, and every row in the chain. */
#include <getopt.h>
#include <stdio.h>

#include "cli.h"

static const char verify_usage[] =
    "Usage: bandgap verify [--json]   (bandgap [--db PATH] verify)\n"
    "Check the whole calibration record: SQLite's integrity_check and foreign_key_check,\n"
    "then the hash chain: every appended record (lot, probe, reference, part specification,\n"
    "run with its readings, exclusion, fit, issued report) carries the SHA-256 of its\n"
    "content and of the record before it, so a record changed, deleted or added outside\n"
    "bandgap breaks the chain there.  Prints the number of records and the chain's head (the\n"
    "hash each issued report shows as 'Record chain'), or names the first record that does\n"
    "not match and exits 65.  Reading only: it changes nothing.\n";

static void print_check(const struct cli_ctx *ctx, const bg_store_check *c)
{
    if (ctx->json) {
        json_out j;
        json_begin(&j, stdout);
        json_obj(&j, NULL);
        json_bool(&j, "ok", !c->bad);
        json_bool(&j, "integrity_check", c->integrity_ok);
        json_bool(&j, "foreign_key_check", c->foreign_keys_ok);
        json_int(&j, "records", c->records);
        json_str(&j, "head", c->head);
        if (c->bad) {
            json_str(&j, "problem", c->problem);
            if (c->bad_seq)
                json_int(&j, "record", c->bad_seq);
            if (c->bad_kind[0]) {
                json_str(&j, "table", c->bad_kind);
                json_int(&j, "row", c->bad_id);
            }
        }
        json_obj_end(&j);
        json_end(&j);
        return;
    }
    printf("integrity_check: %s\nforeign_key_check: %s\n", c->integrity_ok ? "ok" : "FAILED",
           c->foreign_keys_ok ? "ok" : c->integrity_ok ? "FAILED" : "not run");
    if (c->integrity_ok && c->foreign_keys_ok)
        printf("record chain: %lld record%s verified, head %s\n", c->records,
               c->records == 1 ? "" : "s", c->head);
    if (c->bad)
        fprintf(stderr, "bandgap: verify: %s\n", c->problem);
    else
        printf("the record is whole: nothing changed, deleted or added outside bandgap\n");
}

int cmd_verify(int argc, char **argv, struct cli_ctx *ctx)
{
    static const struct option opts[] = {
        { "help", no_argument, NULL, 'h' }, { "json", no_argument, NULL, 'j' },
        { NULL, 0, NULL, 0 },
    };
    bg_store *st = NULL;
    bg_store_check chk;
    bg_error err = BG_ERROR_INIT;
    int c, rc;

    opterr = 0;
    while ((c = getopt_long(argc, argv, ":h", opts, NULL)) != -1) {
        if (c == 'h') {
            fputs(verify_usage, stdout);
            return BG_OK;
        }
        if (c == 'j') {
            ctx->json = 1;
            continue;
        }
        return cli_unknown_option("verify", argv[optind - 1], opts);
    }
    if (optind < argc)
        return cli_usage_error("verify", "unexpected argument '%s'", argv[optind]);
    if ((rc = cli_open_store(ctx, 0, &st)) != BG_OK)
        return rc;
    rc = bg_store_verify(st, &chk, &err);
    bg_store_close(st);
    if (rc != BG_OK)
        return cli_fail("verify", &err);
    print_check(ctx, &chk);
    return chk.bad ? BG_EINVAL : BG_OK;
}
