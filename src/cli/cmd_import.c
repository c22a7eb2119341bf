/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap import: create a calibration run of a probe from a readings CSV, in one transaction. */
#include <getopt.h>
#include <stdio.h>
#include <string.h>

#include "cli.h"

static const char import_usage[] =
    "Usage: bandgap import FILE --probe SERIAL [--ref ID] [--operator NAME] [--medium TEXT]\n"
    "                      [--ambient TEXT] [--measuring-current AMPS |\n"
    "                      --measuring-voltage VOLTS] [--at TIME] [--note TEXT]\n"
    "                      [--new-run] [--ref-overdue WHY]\n"
    "Create a calibration run of probe SERIAL from the readings in FILE ('-' reads standard\n"
    "input; format in docs/readings-csv.md).  With --ref, the reference's correction is\n"
    "applied to every reading and the raw value kept.  The import is one transaction: any\n"
    "bad row is reported as FILE:LINE and nothing is written.  --at gives the start time\n"
    "(ISO 8601; default: the first reading's time, else now).  --measuring-current gives\n"
    "the current the probe was read with, with its unit (10uA, 0.1mA), or --measuring-voltage\n"
    "the voltage (100mV); a bare number is refused.\n"
    "The run keeps the SHA-256 of its readings: readings identical to an earlier run's of the\n"
    "same probe are refused (naming that run) unless --new-run says that this is a new run\n"
    "on purpose.  A reference thermometer past its calibration due date (a reading, or the\n"
    "start, later than the due date) is refused unless --ref-overdue gives the reason to use\n"
    "it anyway; the run records the reason and every fit and report of the run shows it.\n";

static int set_text(char *dst, size_t size, const char *what, const char *v)
{
    if (strlen(v) >= size)
        return cli_usage_error("import", "%s is longer than %zu bytes", what, size - 1);
    snprintf(dst, size, "%s", v);
    return BG_OK;
}

/* The new run: its id, readings and digest, and what it records beyond them. */
static int print_imported(bg_store *st, long long run_id, size_t n, int json)
{
    bg_error err = BG_ERROR_INIT;
    bg_run r;
    if (bg_store_run_get(st, run_id, &r, &err) != BG_OK)
        return cli_fail("import", &err);
    if (r.ref_overdue[0])
        cli_warn("import: run %lld: reference '%s' used past its calibration due date (%s); "
                 "the override is recorded: %s", run_id, r.ref_ident, r.ref_due_date,
                 r.ref_overdue);
    if (r.repeats_run)
        cli_warn("import: run %lld has the same readings as run %lld (a new run on purpose, "
                 "recorded as such)", run_id, r.repeats_run);
    if (json) {
        json_out j;
        json_begin(&j, stdout);
        json_obj(&j, NULL);
        json_int(&j, "run", run_id);
        json_int(&j, "readings", (long long)n);
        json_str(&j, "readings_sha256", r.readings_sha256);
        if (r.repeats_run)
            json_int(&j, "repeats_run", r.repeats_run);
        else
            json_null(&j, "repeats_run");
        if (r.ref_overdue[0])
            json_str(&j, "ref_overdue", r.ref_overdue);
        else
            json_null(&j, "ref_overdue");
        json_obj_end(&j);
        json_end(&j);
    } else
        printf("run %lld: %zu readings of probe %s imported from %s\n", run_id, n, r.serial,
               r.source);
    return BG_OK;
}

int cmd_import(int argc, char **argv, struct cli_ctx *ctx)
{
    enum { O_PROBE = 1, O_REF, O_OP, O_MED, O_AMB, O_EXC, O_AT, O_NOTE, O_JSON, O_NEW, O_OVERDUE,
           O_MCUR, O_MVOLT };
    static const struct option opts[] = {
        { "probe", required_argument, NULL, O_PROBE }, { "ref", required_argument, NULL, O_REF },
        { "operator", required_argument, NULL, O_OP }, { "medium", required_argument, NULL, O_MED },
        { "ambient", required_argument, NULL, O_AMB },
        { "measuring-current", required_argument, NULL, O_MCUR },
        { "measuring-voltage", required_argument, NULL, O_MVOLT },
        { "excitation", required_argument, NULL, O_EXC }, /* the old spelling, refused by name */
        { "at", required_argument, NULL, O_AT },       { "note", required_argument, NULL, O_NOTE },
        { "json", no_argument, NULL, O_JSON },         { "help", no_argument, NULL, 'h' },
        { "new-run", no_argument, NULL, O_NEW },
        { "ref-overdue", required_argument, NULL, O_OVERDUE },
        { NULL, 0, NULL, 0 },
    };
    bg_error err = BG_ERROR_INIT;
    bg_store *st = NULL;
    size_t n = 0;
    bg_run meta;
    long long run_id = 0;
    int c, rc = BG_OK;

    memset(&meta, 0, sizeof meta);
    opterr = 0;
    while ((c = getopt_long(argc, argv, ":h", opts, NULL)) != -1) {
        switch (c) {
        case 'h': fputs(import_usage, stdout); return BG_OK;
        case O_PROBE: rc = set_text(meta.serial, sizeof meta.serial, "--probe", optarg); break;
        case O_REF: rc = set_text(meta.ref_ident, sizeof meta.ref_ident, "--ref", optarg); break;
        case O_OP:
            rc = set_text(meta.operator_name, sizeof meta.operator_name, "--operator", optarg);
            break;
        case O_MED: rc = set_text(meta.medium, sizeof meta.medium, "--medium", optarg); break;
        case O_AMB: rc = set_text(meta.ambient, sizeof meta.ambient, "--ambient", optarg); break;
        case O_EXC:
            return cli_usage_error("import", "--excitation is now --measuring-current (e.g. "
                                   "10uA) or --measuring-voltage (e.g. 100mV), with its unit");
        case O_MCUR: case O_MVOLT:
            if (meta.measuring_current_a > 0.0 || meta.measuring_voltage_v > 0.0)
                return cli_usage_error("import", "give --measuring-current or "
                                       "--measuring-voltage once");
            if (bg_units_parse_si(optarg, c == O_MCUR ? "A" : "V", c == O_MCUR ?
                                  &meta.measuring_current_a : &meta.measuring_voltage_v,
                                  &err) != BG_OK)
                return cli_usage_error("import", "--measuring-%s: %s", c == O_MCUR ?
                                       "current" : "voltage", err.msg);
            break;
        case O_AT:
            if (!bg_csv_valid_time(optarg) || strlen(optarg) >= sizeof meta.started_at)
                return cli_usage_error("import", "--at: '%s': not an ISO 8601 date-time",
                                       optarg);
            snprintf(meta.started_at, sizeof meta.started_at, "%s", optarg);
            break;
        case O_NOTE: rc = set_text(meta.note, sizeof meta.note, "--note", optarg); break;
        case O_NEW: meta.new_run = 1; break;
        case O_OVERDUE:
            if (!*optarg)
                return cli_usage_error("import", "--ref-overdue: say why the reference is used "
                                       "past its due date");
            rc = set_text(meta.ref_overdue, sizeof meta.ref_overdue, "--ref-overdue", optarg);
            break;
        case O_JSON: ctx->json = 1; break;
        case ':': return cli_usage_error("import", "option '%s' needs a value", argv[optind - 1]);
        default: return cli_unknown_option("import", argv[optind - 1], opts);
        }
        if (rc != BG_OK)
            return rc;
    }
    if (optind + 1 != argc)
        return cli_usage_error("import", "give exactly one readings file");
    if (!meta.serial[0])
        return cli_usage_error("import", "--probe SERIAL is required");
    if (meta.ref_overdue[0] && !meta.ref_ident[0])
        return cli_usage_error("import", "--ref-overdue goes with --ref");
    /* Open the database first: a missing database is reported before the file is read. */
    if ((rc = cli_open_store(ctx, 0, &st)) != BG_OK)
        return rc;
    const char *path = argv[optind];
    snprintf(meta.source, sizeof meta.source, "%s", strcmp(path, "-") == 0 ? "<stdin>" : path);
    if ((rc = bg_store_import_file(st, path, &meta, &run_id, &n, &err)) != BG_OK)
        cli_fail(NULL, &err);
    else
        rc = print_imported(st, run_id, n, ctx->json);
    bg_store_close(st);
    return rc;
}
