/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The bandgap program: global options, the command table, and the one mapping from results
** to sysexits(3) exit statuses. */
#include <getopt.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sysexits.h>

#include "cli.h"

struct command {
    const char *name;
    cmd_fn fn;
    const char *summary;
};

/* The only list of commands; 'bandgap --help' prints from it and the tests walk it. */
static const struct command commands[] = {
    { "init",    cmd_init,    "create the calibration database" },
    { "lot",     cmd_lot,     "add, list and show production lots" },
    { "part",    cmd_part,    "a part's nominal curve, tolerance in kelvin and QA defaults" },
    { "probe",   cmd_probe,   "add, list and show probes" },
    { "ref",     cmd_ref,     "add and list reference thermometers" },
    { "import",  cmd_import,  "create a calibration run from a readings CSV file" },
    { "fit",     cmd_fit,     "fit a model to a readings file, a stored probe or a whole lot" },
    { "list",    cmd_list,    "list calibration runs or stored fits" },
    { "show",    cmd_show,    "show one run with its readings, or one stored fit" },
    { "exclude", cmd_exclude, "keep a reading out of future fits, with the reason" },
    { "export",  cmd_export,  "export readings and fits as CSV or JSON, losslessly" },
    { "drift",   cmd_drift,   "as-found drift of a probe, lot statistics, control charts" },
    { "report",  cmd_report,  "calibration and lot reports as HTML, issued once and stored" },
    { "lut",     cmd_lut,     "a firmware lookup table (ADC code -> temperature) as C, CSV or JSON" },
    { "eval",    cmd_eval,    "evaluate a model given inline: resistance to temperature and back" },
    { "curve",   cmd_curve,   "the R-T table of a stored fit or an inline model, with U" },
    { "verify",  cmd_verify,  "check the whole record: integrity and the hash chain" },
    { "copy",    cmd_copy,    "copy a whole database into an empty one (a file to a server and back)" },
    { "sequence", cmd_sequence, "drive the bath and instruments through a calibration sequence" },
    { "demo",    cmd_demo,    "run the whole job on built-in invented data" },
};
#define NCOMMANDS (sizeof commands / sizeof commands[0])

static void usage(FILE *f)
{
    fprintf(f, "Usage: bandgap [--db PATH] [--json] COMMAND [ARGS]\n"
               "Calibrate NTC thermistors: fit R-T models to bath readings, with residuals\n"
               "and uncertainty.\n\nCommands:\n");
    for (size_t i = 0; i < NCOMMANDS; i++)
        fprintf(f, "  %-8s %s\n", commands[i].name, commands[i].summary);
    fprintf(f, "\nGlobal options:\n"
               "  --db PATH    calibration database: a file, or postgresql://... on a server\n"
               "               (default $BANDGAP_DB, else the server PGSERVICE, PGDATABASE\n"
               "               or PGHOST names, else ./bandgap.db)\n"
               "  --json       machine-readable output\n"
               "  --busy-timeout SECONDS  how long to wait for another process's lock on the\n"
               "               database before giving up with status 75 (default 30)\n"
               "  --help       this help;  bandgap COMMAND --help for a command\n"
               "  --version    program and library versions\n"
               "\nExit status: 0 success, 64 usage, 65 bad data (a constraint of the record\n"
               "included), 66 missing input, 70 internal, 73 cannot create or write (an output\n"
               "file, a read-only database or its directory), 74 i/o error or full disk,\n"
               "75 database locked past the busy timeout: try again (sysexits.h);\n"
               "drift: 1 when it flags.\n"
               "Results hold only inside the calibrated range and the stated uncertainty.\n");
}

static void version(void)
{
    printf("bandgap %s\n", bg_version());
    printf("GSL %s\nSQLite %s\n", bg_gsl_version(), bg_sqlite_version());
    printf("Copyright (C) 2026 the bandgap developers.\n"
           "License GPLv3+: GNU GPL version 3 or later <https://gnu.org/licenses/gpl.html>.\n"
           "This is free software: you are free to change and redistribute it.\n"
           "There is NO WARRANTY, to the extent permitted by law.\n");
}

/* The one place where results become exit statuses. */
static int exit_status(int rc)
{
    switch (rc) {
    case BG_OK: return EX_OK;
    case BG_EINVAL: return EX_DATAERR;
    case BG_ENOENT: return EX_NOINPUT;
    case BG_EIO: return EX_IOERR;
    case BG_ECANTCREAT: return EX_CANTCREAT;
    case BG_EBUSY: return EX_TEMPFAIL;
    case BG_EUNAVAIL: return EX_UNAVAILABLE;
    case BG_ESTOPPED: return EX_TEMPFAIL;
    case CLI_EUSAGE: return EX_USAGE;
    case CLI_ECANTCREAT: return EX_CANTCREAT;
    case CLI_FLAGGED: return 1; /* drift: something was flagged */
    default: return EX_SOFTWARE;
    }
}

/* Every exit passes here: standard output flushed and closed (a failed write is EX_IOERR),
** and both filtered streams closed. */
static int finish(int status)
{
    int bad = fflush(stdout) != 0 || ferror(stdout);
    if (fclose(stdout) != 0 || bad) {
        perror("bandgap: cannot write the output");
        status = status == EX_OK ? EX_IOERR : status;
    }
    fclose(stderr);
    return status;
}

static int run(int argc, char **argv);

/* The database without --db or $BANDGAP_DB: a PostgreSQL server when libpq's environment
** names one (PGSERVICE, PGDATABASE or PGHOST; libpq reads them, and a service file), else the
** file ./bandgap.db. */
static const char *cli_default_db(void)
{
    static const char *const vars[] = { "PGSERVICE", "PGDATABASE", "PGHOST" };
    for (size_t i = 0; i < sizeof vars / sizeof vars[0]; i++) {
        const char *v = getenv(vars[i]);
        if (v && *v)
            return "postgresql://";
    }
    return "bandgap.db";
}

int main(int argc, char **argv)
{
    bg_gsl_handler_off();
    cli_safe_streams();
    return finish(run(argc, argv));
}

static int run(int argc, char **argv)
{
    static const struct option opts[] = {
        { "db", required_argument, NULL, 'd' }, { "json", no_argument, NULL, 'j' },
        { "help", no_argument, NULL, 'h' },     { "version", no_argument, NULL, 'V' },
        { "busy-timeout", required_argument, NULL, 'B' }, { NULL, 0, NULL, 0 },
    };
    struct cli_ctx ctx = { NULL, 0, -1.0 };
    char *end;
    int c;

    ctx.db_path = getenv("BANDGAP_DB");
    if (!ctx.db_path || !*ctx.db_path)
        ctx.db_path = cli_default_db();
    opterr = 0;
    while ((c = getopt_long(argc, argv, "+:h", opts, NULL)) != -1) {
        switch (c) {
        case 'd': ctx.db_path = optarg; break;
        case 'j': ctx.json = 1; break;
        case 'B':
            ctx.busy_timeout_s = strtod(optarg, &end);
            if (end == optarg || *end || !(ctx.busy_timeout_s >= 0 &&
                                           ctx.busy_timeout_s <= 3600))
                return exit_status(cli_usage_error(NULL, "option '--busy-timeout': '%s' is "
                                                   "not a number of seconds from 0 to 3600",
                                                   optarg));
            break;
        case 'h': usage(stdout); return EX_OK;
        case 'V': version(); return EX_OK;
        case ':': return exit_status(cli_usage_error(NULL, "option '%s' needs a value",
                                                     argv[optind - 1]));
        default: return exit_status(cli_unknown_option(NULL, argv[optind - 1], opts));
        }
    }
    if (optind >= argc) {
        usage(stderr);
        return exit_status(CLI_EUSAGE);
    }
    for (size_t i = 0; i < NCOMMANDS; i++) {
        if (strcmp(argv[optind], commands[i].name) == 0) {
            int sub_argc = argc - optind;
            char **sub_argv = argv + optind;
            optind = 0; /* glibc: 0 re-initialises getopt for the command's own options */
            return exit_status(commands[i].fn(sub_argc, sub_argv, &ctx));
        }
    }
    const char *names[NCOMMANDS];
    for (size_t i = 0; i < NCOMMANDS; i++)
        names[i] = commands[i].name;
    const char *near = bg_suggest(argv[optind], strlen(argv[optind]), names, NCOMMANDS);
    if (near)
        return exit_status(cli_usage_error(NULL, "unknown command '%s' (did you mean '%s'?)",
                                           argv[optind], near));
    return exit_status(cli_usage_error(NULL, "unknown command '%s'", argv[optind]));
}
