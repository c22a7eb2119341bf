/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap show run N | fit N: one run with its readings, or one stored fit with its
** uncertainty profile (bg_curve_span); printed by print_store.c. */
#include <getopt.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

static const char show_usage[] =
    "Usage: bandgap show run N [--json]\n"
    "       bandgap show fit N [--json]\n"
    "A run: its probe, reference, conditions and every reading (raw and corrected, with\n"
    "exclusions).  A fit: model, coefficients with standard uncertainties, covariance,\n"
    "statistics, the readings it used and U (k from Student's t) across its calibrated range.\n";

static int show_run(bg_store *st, long long id, struct cli_ctx *ctx, bg_error *err)
{
    bg_run r;
    json_out j;
    int rc = bg_store_run_get(st, id, &r, err);
    if (rc != BG_OK)
        return rc;
    if (!ctx->json) {
        cli_print_run_head(&r);
        return bg_store_reading_each(st, id, cli_print_reading, NULL, err);
    }
    json_begin(&j, stdout);
    json_obj(&j, NULL);
    cli_json_run_fields(&j, &r);
    json_arr(&j, "readings");
    rc = bg_store_reading_each(st, id, cli_print_reading, &j, err);
    json_arr_end(&j);
    json_obj_end(&j);
    json_end(&j);
    return rc;
}

/* The stored fit, the readings it used and its uncertainty profile over the calibrated
** range, at 9 temperatures (bg_curve_span). */
static int show_fit(bg_store *st, long long id, struct cli_ctx *ctx, bg_error *err)
{
    bg_fit_row f;
    bg_curve_src src;
    bg_curve u = BG_CURVE_INIT;
    long long *ids = NULL;
    size_t nids = 0;
    int rc = bg_store_fit_get(st, id, &f, err);
    if (rc != BG_OK)
        return rc;
    ids = malloc((f.n ? f.n : 1) * sizeof *ids);
    if (!ids)
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    if ((rc = bg_store_fit_readings(st, id, ids, f.n, &nids, err)) != BG_OK)
        goto done;
    src = cli_curve_src_of_fit(&f);
    if ((rc = bg_curve_span(&src, 9, &u, err)) != BG_OK)
        goto done;
    cli_print_fit(&f, ids, nids, &u, ctx->json);
    bg_run r;
    if ((rc = bg_store_run_get(st, f.run_id, &r, err)) == BG_OK && r.ref_overdue[0])
        cli_warn("fit %lld: its run %lld used reference '%s' past its calibration due date "
                 "(%s); the override recorded: %s", id, r.id, r.ref_ident, r.ref_due_date,
                 r.ref_overdue);
done:
    bg_curve_release(&u);
    free(ids);
    return rc;
}

int cmd_show(int argc, char **argv, struct cli_ctx *ctx)
{
    static const struct option opts[] = {
        { "json", no_argument, NULL, 'j' }, { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 },
    };
    bg_error err = BG_ERROR_INIT;
    bg_store *st = NULL;
    long long id;
    int c, rc;

    opterr = 0;
    while ((c = getopt_long(argc, argv, ":h", opts, NULL)) != -1) {
        if (c == 'h') {
            fputs(show_usage, stdout);
            return BG_OK;
        }
        if (c == 'j') {
            ctx->json = 1;
            continue;
        }
        return cli_unknown_option("show", argv[optind - 1], opts);
    }
    if (optind + 2 != argc || (strcmp(argv[optind], "run") && strcmp(argv[optind], "fit")))
        return cli_usage_error("show", "say 'run N' or 'fit N'");
    if (cli_parse_id(argv[optind + 1], &id) != BG_OK)
        return cli_usage_error("show", "'%s': not an id", argv[optind + 1]);
    if ((rc = cli_open_store(ctx, 0, &st)) != BG_OK)
        return rc;
    rc = argv[optind][0] == 'r' ? show_run(st, id, ctx, &err) : show_fit(st, id, ctx, &err);
    if (rc != BG_OK)
        cli_fail("show", &err);
    bg_store_close(st);
    return rc;
}
