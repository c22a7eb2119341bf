/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap report: calibration reports of a run and QA reports of a lot, as self-contained
** HTML, issued once and stored in the database; a reissue is a new report that names the one
** it replaces.  --get writes the stored bytes of a report again; --list lists them. */
#include <errno.h>
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

static const char report_usage[] =
    "Usage: bandgap report --run N [--fit M] [--lab TEXT] [--customer TEXT]\n"
    "                      [--dissipation mW/K] [--reissue ID --why TEXT] -o FILE.html\n"
    "       bandgap report --lot CODE [--baseline N] [--limit DT] [--rate-limit DT]\n"
    "                      [--lab TEXT] [--reissue ID --why TEXT] -o FILE.html\n"
    "       bandgap report --get ID -o FILE.html\n"
    "       bandgap report --list [--json]\n"
    "A calibration report of a run (its newest fit unless --fit): the probe and lot, the\n"
    "reference thermometer, the method and conditions, the readings with residuals, the\n"
    "model with standard uncertainties, the expanded uncertainty with k and the coverage\n"
    "probability, the validity range, an R-T table and a residual chart with the U\n"
    "band.  A lot report: the lot statistics with a histogram and the control charts of\n"
    "the part's lots, and each probe's drift.  One self-contained HTML file (no network,\n"
    "inline SVG, prints on A4 and Letter).  A report, once issued, is stored and never\n"
    "changes: a second report of the same run or lot is refused unless --reissue names the\n"
    "newest one, with the reason in --why; --get writes a stored report again, byte for byte.\n"
    "--dissipation gives the probe's dissipation constant for the self-heating estimate.\n"
    "--baseline, --limit and --rate-limit (lot reports) mean what they mean for drift; not\n"
    "given, the part's defaults (bandgap part set) apply, else the built-in ones.\n";

/* Open 'path' for the report ("-": standard output), before anything is stored; the file
** appears whole or not at all (cli_out_open). */
static int open_out(const char *path, struct cli_out *f)
{
    return cli_out_open(f, path, "report");
}

/* Write 'len' bytes and complete the file; 'id' (0: none) names the stored copy in the
** message. */
static int write_out(struct cli_out *f, const char *content, size_t len, long long id)
{
    fwrite(content, 1, len, f->f); /* an error shows in the commit */
    int rc = cli_out_commit(f, "report");
    if (rc != BG_OK && id)
        cli_error("report: the report is stored as report %lld (bandgap report --get %lld -o "
                  "FILE writes it again)", id, id);
    return rc;
}

/* Abandon an output file that will not be written (a file that was there stays as it was). */
static void drop_out(struct cli_out *f)
{
    cli_out_discard(f);
}

struct list_ctx {
    int json;
    json_out *j;
};

static int list_cb(const bg_artifact *a, void *vctx)
{
    struct list_ctx *l = vctx;
    if (strncmp(a->kind, "report-", 7) != 0)
        return 0;
    if (l->json) {
        json_obj(l->j, NULL);
        json_int(l->j, "id", a->id);
        json_str(l->j, "kind", a->kind + 7);
        /* the spec is JSON (store.h): nested as itself, never as a string of JSON */
        if (json_raw(l->j, "spec", a->spec) != BG_OK) {
            cli_warn("report: report %lld: its stored spec is not JSON; given as "
                     "\"spec_text\"", a->id);
            json_null(l->j, "spec");
            json_str(l->j, "spec_text", a->spec);
        }
        if (a->replaces_id)
            json_int(l->j, "replaces", a->replaces_id);
        else
            json_null(l->j, "replaces");
        if (a->replaced_by)
            json_int(l->j, "replaced_by", a->replaced_by);
        else
            json_null(l->j, "replaced_by");
        json_int(l->j, "bytes", (long long)a->len);
        json_str(l->j, "created_at", a->created_at);
        json_obj_end(l->j);
    } else {
        char rep[32] = "-", by[32] = "-";
        if (a->replaces_id)
            snprintf(rep, sizeof rep, "%lld", a->replaces_id);
        if (a->replaced_by)
            snprintf(by, sizeof by, "%lld", a->replaced_by);
        printf("%6lld  %-6s %-22s %-9s %-11s %8zu  %s\n", a->id, a->kind + 7, a->created_at,
               rep, by, a->len, a->spec);
    }
    return 0;
}

/* Issue the report of run 'run_id' (fit 'fit_id') or of lot 'lot', store it and write it to
** 'out_path'; the file is made first, so a path that cannot be made stores nothing. */
static int issue(bg_store *st, long long run_id, long long fit_id, const char *lot,
                 const bg_report_opts *o, const char *out_path)
{
    bg_error err = BG_ERROR_INIT;
    bg_artifact a;
    struct cli_out f;
    int rc = open_out(out_path, &f);
    if (rc != BG_OK)
        return rc;
    if (lot)
        rc = bg_report_issue_lot(st, lot, o, &a, &err);
    else
        rc = bg_report_issue_run(st, run_id, fit_id, o, &a, &err);
    if (rc != BG_OK) {
        drop_out(&f);
        bg_artifact_release(&a);
        rc = cli_fail("report", &err);
        if (strstr(err.msg, "already has report"))
            fprintf(stderr, "  (bandgap report ... --reissue ID --why TEXT issues a new one; "
                            "bandgap report --get ID -o FILE writes the stored copy)\n");
        return rc;
    }
    rc = write_out(&f, a.content, a.len, a.id);
    if (rc == BG_OK && strcmp(out_path, "-") && lot)
        printf("issued report %lld (lot %s): %s\n", a.id, lot, out_path);
    else if (rc == BG_OK && strcmp(out_path, "-"))
        printf("issued report %lld (run %lld, fit %lld): %s\n", a.id, run_id, a.fit_id, out_path);
    bg_artifact_release(&a);
    return rc;
}

struct report_args {
    bg_report_opts o;
    bg_qa_opts qa;                  /* --baseline, --limit, --rate-limit of a lot report */
    int have_qa;
    const char *lot, *out_path;
    long long run_id, fit_id, get_id;
    int list, help;
};

/* A lot report's --baseline (which 0), --limit (1) or --rate-limit (2), as drift reads them. */
static int report_lot_option(struct report_args *a, int which, const char *arg)
{
    static const char *const nm[3] = { "baseline", "limit", "rate-limit" };
    bg_error err = BG_ERROR_INIT;
    long long n;
    if (!a->have_qa)
        a->qa = bg_qa_default_opts(), a->have_qa = 1;
    if (which == 0 && cli_parse_id(arg, &n) == BG_OK) {
        a->qa.baseline = (size_t)n;
        return BG_OK;
    }
    if (which == 0)
        return cli_usage_error("report", "--baseline: '%s': not a number of lots", arg);
    double *v = which == 1 ? &a->qa.limit_k : &a->qa.rate_k;
    if (bg_units_parse_tdiff(arg, v, &err) != BG_OK || !(*v > 0.0))
        return cli_usage_error("report", "--%s: %s", nm[which],
                               err.msg[0] ? err.msg : "expected a value above 0");
    return BG_OK;
}

/* The options into '*a'; BG_OK, or the usage error's code. */
static int report_parse_args(int argc, char **argv, struct cli_ctx *ctx, struct report_args *a)
{
    enum { O_RUN = 1, O_FIT, O_LOT, O_GET, O_LIST, O_LAB, O_CUST, O_DISS, O_REISSUE, O_WHY,
           O_JSON, O_BASE, O_LIMIT, O_RATE };
    static const struct option opts[] = {
        { "run", required_argument, NULL, O_RUN },      { "fit", required_argument, NULL, O_FIT },
        { "lot", required_argument, NULL, O_LOT },      { "get", required_argument, NULL, O_GET },
        { "list", no_argument, NULL, O_LIST },          { "lab", required_argument, NULL, O_LAB },
        { "customer", required_argument, NULL, O_CUST },
        { "dissipation", required_argument, NULL, O_DISS },
        { "reissue", required_argument, NULL, O_REISSUE },
        { "why", required_argument, NULL, O_WHY },      { "json", no_argument, NULL, O_JSON },
        { "baseline", required_argument, NULL, O_BASE },
        { "limit", required_argument, NULL, O_LIMIT },
        { "rate-limit", required_argument, NULL, O_RATE },
        { "output", required_argument, NULL, 'o' },     { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 },
    };
    bg_report_opts *o = &a->o;
    int c;

    opterr = 0;
    while ((c = getopt_long(argc, argv, ":ho:", opts, NULL)) != -1) {
        switch (c) {
        case 'h': a->help = 1; return BG_OK;
        case O_RUN: case O_FIT: case O_GET: case O_REISSUE: {
            long long *p = c == O_RUN ? &a->run_id : c == O_FIT ? &a->fit_id :
                           c == O_GET ? &a->get_id : &o->replaces;
            if (cli_parse_id(optarg, p) != BG_OK)
                return cli_usage_error("report", "'%s': not an id", optarg);
            break;
        }
        case O_LOT: a->lot = optarg; break;
        case O_LIST: a->list = 1; break;
        case O_LAB: o->lab = optarg; break;
        case O_CUST: o->customer = optarg; break;
        case O_WHY: o->why = optarg; break;
        case O_JSON: ctx->json = 1; break;
        case O_DISS: {
            bg_error err = BG_ERROR_INIT;
            if (bg_units_parse_si(optarg, "W/K", &o->dissipation_w_per_k, &err) != BG_OK)
                return cli_usage_error("report", "--dissipation: %s", err.msg);
            break;
        }
        case O_BASE: case O_LIMIT: case O_RATE:
            if (report_lot_option(a, c == O_BASE ? 0 : c == O_LIMIT ? 1 : 2, optarg) != BG_OK)
                return CLI_EUSAGE;
            break;
        case 'o': a->out_path = optarg; break;
        case ':': return cli_usage_error("report", "option '%s' needs a value", argv[optind - 1]);
        default: return cli_unknown_option("report", argv[optind - 1], opts);
        }
    }
    if (optind < argc)
        return cli_usage_error("report", "unexpected argument '%s'", argv[optind]);
    if ((a->run_id != 0) + (a->lot != NULL) + (a->get_id != 0) + a->list != 1)
        return cli_usage_error("report", "give one of --run, --lot, --get or --list");
    if (!a->list && !a->out_path)
        return cli_usage_error("report", "-o FILE.html is required (- for standard output)");
    if (a->fit_id && !a->run_id)
        return cli_usage_error("report", "--fit goes with --run");
    if (a->have_qa && !a->lot)
        return cli_usage_error("report", "--baseline, --limit and --rate-limit go with --lot");
    if (a->have_qa)
        o->qa = &a->qa;
    if ((o->replaces != 0) != (o->why != NULL))
        return cli_usage_error("report", "--reissue ID and --why TEXT go together");
    if (o->why && !*o->why)
        return cli_usage_error("report", "--why: say why the report is reissued");
    return BG_OK;
}

static int list_reports(bg_store *st, int json)
{
    bg_error err = BG_ERROR_INIT;
    json_out j;
    struct list_ctx l = { json, &j };
    if (json) {
        json_begin(&j, stdout);
        json_arr(&j, NULL);
    } else
        printf("%6s  %-6s %-22s %-9s %-11s %8s  %s\n", "report", "kind", "issued",
               "replaces", "replaced by", "bytes", "made from");
    int rc = bg_store_artifact_each(st, list_cb, &l, &err);
    if (json) {
        json_arr_end(&j);
        json_end(&j);
    }
    return rc == BG_OK ? BG_OK : cli_fail("report", &err);
}

/* Write the stored bytes of report 'id' again. */
static int get_report(bg_store *st, long long id, const char *out_path)
{
    bg_error err = BG_ERROR_INIT;
    bg_artifact a;
    int rc = bg_store_artifact_get(st, id, &a, &err);
    if (rc == BG_OK && strncmp(a.kind, "report-", 7) != 0)
        rc = bg_error_set(&err, BG_EINVAL, "artifact %lld is not a report", id);
    if (rc != BG_OK) {
        bg_artifact_release(&a);
        return cli_fail("report", &err);
    }
    if (a.replaced_by)
        cli_warn("report: report %lld was replaced by report %lld", id, a.replaced_by);
    struct cli_out f;
    if ((rc = open_out(out_path, &f)) == BG_OK)
        rc = write_out(&f, a.content, a.len, 0);
    bg_artifact_release(&a);
    return rc;
}

int cmd_report(int argc, char **argv, struct cli_ctx *ctx)
{
    struct report_args a;
    bg_store *st = NULL;
    memset(&a, 0, sizeof a);
    int rc = report_parse_args(argc, argv, ctx, &a);
    if (rc != BG_OK)
        return rc;
    if (a.help) {
        fputs(report_usage, stdout);
        return BG_OK;
    }
    if ((rc = cli_open_store(ctx, 0, &st)) != BG_OK)
        return rc;
    if (a.list)
        rc = list_reports(st, ctx->json);
    else if (a.get_id)
        rc = get_report(st, a.get_id, a.out_path);
    else
        rc = issue(st, a.run_id, a.fit_id, a.lot, &a.o, a.out_path);
    bg_store_close(st);
    return rc;
}
