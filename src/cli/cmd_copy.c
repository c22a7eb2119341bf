/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap copy: a whole calibration database into an empty one, a file to a server and
** back (bg_store_copy). */
#include <getopt.h>
#include <stdio.h>
#include <string.h>

#include "cli.h"

static const char copy_usage[] =
    "Usage: bandgap copy --from DATABASE --to DATABASE [--json]\n"
    "Copy a whole calibration database into an empty one: a bench's SQLite file up to a\n"
    "PostgreSQL server, or a server's record down to a file for an audit.  DATABASE takes\n"
    "the forms of --db: a path, sqlite:PATH, postgresql://... or 'postgresql:KEY=VALUE ...'.\n"
    "Every row arrives as it is stored: ids, times, readings, fits, exclusions, versions,\n"
    "issued reports, sequences and the record chain, so 'bandgap verify' prints the same\n"
    "head on both.  The source is only read (one snapshot); the target is written in one\n"
    "transaction, created when it is a new file, and must be empty: a copy never merges\n"
    "(a target that holds data exits 73).  Before committing, the row counts and the chain\n"
    "head are compared and the target's record is verified; on any failure nothing is\n"
    "written.\n"
    "  --from DATABASE   the database to copy (read only)\n"
    "  --to DATABASE     the empty database to copy into (a new file is created)\n"
    "  --json            the counts and the chain head as JSON\n";

static void print_copy(const struct cli_ctx *ctx, const bg_store_copy_result *r)
{
    long long total = 0;
    for (size_t t = 0; t < r->ntables; t++)
        total += r->rows[t];
    if (ctx->json) {
        json_out j;
        json_begin(&j, stdout);
        json_obj(&j, NULL);
        json_int(&j, "rows", total);
        json_obj(&j, "tables");
        for (size_t t = 0; t < r->ntables; t++)
            json_int(&j, r->table[t], r->rows[t]);
        json_obj_end(&j);
        json_int(&j, "records", r->records);
        json_str(&j, "head", r->head);
        json_obj_end(&j);
        json_end(&j);
        return;
    }
    printf("copied %lld row%s:\n", total, total == 1 ? "" : "s");
    for (size_t t = 0; t < r->ntables; t++)
        if (r->rows[t])
            printf("  %-18s %lld\n", r->table[t], r->rows[t]);
    printf("record chain: %lld record%s, head %s, the same on both; the target verifies\n",
           r->records, r->records == 1 ? "" : "s", r->head);
}

static int open_end(struct cli_ctx *ctx, const char *target, int create, bg_store **st)
{
    struct cli_ctx c = *ctx;
    c.db_path = target;
    return cli_open_store(&c, create, st);
}

int cmd_copy(int argc, char **argv, struct cli_ctx *ctx)
{
    static const struct option opts[] = {
        { "help", no_argument, NULL, 'h' }, { "json", no_argument, NULL, 'j' },
        { "from", required_argument, NULL, 'f' }, { "to", required_argument, NULL, 't' },
        { NULL, 0, NULL, 0 },
    };
    const char *from = NULL, *to = NULL;
    bg_store *src = NULL, *dst = NULL;
    bg_store_copy_result res;
    bg_error err = BG_ERROR_INIT;
    int c, rc;

    opterr = 0;
    while ((c = getopt_long(argc, argv, ":h", opts, NULL)) != -1) {
        if (c == 'h') {
            fputs(copy_usage, stdout);
            return BG_OK;
        }
        if (c == 'j')
            ctx->json = 1;
        else if (c == 'f')
            from = optarg;
        else if (c == 't')
            to = optarg;
        else if (c == ':')
            return cli_usage_error("copy", "option '%s' needs a database", argv[optind - 1]);
        else
            return cli_unknown_option("copy", argv[optind - 1], opts);
    }
    if (optind < argc)
        return cli_usage_error("copy", "unexpected argument '%s'", argv[optind]);
    if (!from || !to)
        return cli_usage_error("copy", "name both databases: --from DATABASE --to DATABASE");
    if (strcmp(from, to) == 0)
        return cli_usage_error("copy", "--from and --to name the same database");
    if ((rc = open_end(ctx, from, 0, &src)) != BG_OK)
        return rc;
    if ((rc = open_end(ctx, to, 1, &dst)) != BG_OK) {
        bg_store_close(src);
        return rc;
    }
    rc = bg_store_copy(src, dst, &res, &err);
    bg_store_close(dst);
    bg_store_close(src);
    if (rc != BG_OK)
        return cli_fail("copy", &err);
    print_copy(ctx, &res);
    return BG_OK;
}
