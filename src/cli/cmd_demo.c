/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap demo: the whole job on built-in invented data: write a lot's readings, build a
** calibration database, import, fit one probe with the full report and the whole lot. */
#include <errno.h>
#include <getopt.h>
#include <stdio.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "cli.h"

static const char demo_usage[] =
    "Usage: bandgap demo [--dir DIR]\n"
    "Run the whole job on built-in invented data: write the readings of two invented lots\n"
    "of 12 soil probes to DIR (default: bandgap-demo), create the calibration database\n"
    "DIR/demo.db (replacing an earlier one), add the lots, probes and reference thermometer,\n"
    "import and fit a calibration round, print one probe's full report and the lots, then\n"
    "import a second round of the first lot six months later (one probe has drifted; the\n"
    "second lot is off its nominal curve) and print the drift, lot and part reports.\n"
    "The scenario and every number in it are invented.\n";

#define DEMO_LOT "GH-LOT-2611"
#define DEMO_PROBE "GH-0417"
#define DEMO_LOT2 "GH-LOT-2705"

/* Run one command of the program in this process, as a user would type it. */
static int run(struct cli_ctx *ctx, cmd_fn fn, const char *const *args)
{
    char *argv[32];
    int argc = 0;
    while (args[argc] && argc < 31) {
        argv[argc] = (char *)args[argc];
        argc++;
    }
    argv[argc] = NULL;
    optind = 0;
    return fn(argc, argv, ctx);
}

struct line_find {
    size_t line;
    long long id;
};

static int line_find_cb(const bg_reading_row *row, void *ctx)
{
    struct line_find *lf = ctx;
    if (row->line == lf->line)
        lf->id = row->id;
    return lf->id != 0;
}

/* The id of the reading on file line 'line' of the newest run of probe 'serial'. */
static int demo_reading_id(struct cli_ctx *dctx, const char *serial, size_t line,
                           long long *id)
{
    bg_store *st = NULL;
    bg_probe pr;
    bg_error err = BG_ERROR_INIT;
    long long run_id = 0;
    struct line_find lf = { line, 0 };
    int rc = cli_open_store(dctx, 0, &st);
    if (rc != BG_OK)
        return rc;
    if ((rc = bg_store_probe_get(st, serial, &pr, &err)) == BG_OK &&
        (rc = bg_store_run_latest(st, pr.id, &run_id, &err)) == BG_OK)
        rc = bg_store_reading_each(st, run_id, line_find_cb, &lf, &err);
    bg_store_close(st);
    if (rc == BG_OK && !lf.id)
        rc = bg_error_set(&err, BG_EINTERNAL, "no line %zu in the demo run", line);
    if (rc != BG_OK)
        return cli_fail("demo", &err);
    *id = lf.id;
    return BG_OK;
}

int cmd_demo(int argc, char **argv, struct cli_ctx *ctx)
{
    static const struct option opts[] = {
        { "dir", required_argument, NULL, 'd' }, { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 },
    };
    const char *dir = "bandgap-demo";
    char path[4096], db[4096];
    struct cli_ctx dctx = *ctx;
    int c, rc;

    opterr = 0;
    while ((c = getopt_long(argc, argv, ":h", opts, NULL)) != -1) {
        switch (c) {
        case 'h': fputs(demo_usage, stdout); return BG_OK;
        case 'd': dir = optarg; break;
        case ':': return cli_usage_error("demo", "option '%s' needs a value", argv[optind - 1]);
        default: return cli_usage_error("demo", "unknown option '%s'", argv[optind - 1]);
        }
    }
    if (optind < argc)
        return cli_usage_error("demo", "unexpected argument '%s'", argv[optind]);
    if (mkdir(dir, 0777) != 0 && errno != EEXIST) {
        cli_error("demo: cannot create '%s': %s", dir, strerror(errno));
        return CLI_ECANTCREAT;
    }
    printf("INVENTED DEMO DATA: the (invented) Lindqvist glasshouse cooperative calibrates\n"
           "two deliveries of its soil probes, lots %s and %s (12 probes each, in a stirred\n"
           "bath beside reference thermometer REF-7, 18 readings from -20 to 60 degC), and\n"
           "recalibrates the first lot six months later.\n\n", DEMO_LOT, DEMO_LOT2);
    size_t nfiles = 0;
    for (const struct demo_file *df = demo_files; df->name; df++, nfiles++) {
        FILE *f;
        snprintf(path, sizeof path, "%s/%s", dir, df->name);
        if (!(f = fopen(path, "w"))) {
            cli_error("demo: cannot create '%s': %s", path, strerror(errno));
            return CLI_ECANTCREAT;
        }
        if (fputs(df->text, f) == EOF || fclose(f) != 0) {
            cli_error("demo: cannot write '%s': %s", path, strerror(errno));
            return BG_EIO;
        }
    }
    printf("wrote %zu readings files to %s/\n", nfiles, dir);
    snprintf(db, sizeof db, "%s/demo.db", dir);
    if (unlink(db) != 0 && errno != ENOENT) {
        cli_error("demo: cannot replace '%s': %s", db, strerror(errno));
        return CLI_ECANTCREAT;
    }
    dctx.db_path = db;
    dctx.json = 0;
    {
        const char *a_init[] = { "init", NULL };
        const char *a_lot[] = { "lot", "add", DEMO_LOT, "--part", "SOIL-NTC-10K", "--r25", "10k",
                                "--beta", "3950", "--pair", "25/85", "--tol-r25", "1%",
                                "--tol-beta", "0.5%", "--note", "invented demo lot", NULL };
        const char *a_lot2[] = { "lot", "add", DEMO_LOT2, "--part", "SOIL-NTC-10K", "--r25",
                                 "10k", "--beta", "3950", "--pair", "25/85", "--tol-r25", "1%",
                                 "--tol-beta", "0.5%", "--note", "invented demo lot", NULL };
        const char *a_ref[] = { "ref", "add", "REF-7", "--cert", "INVENTED-CAL-2026-0117",
                                "--due", "2027-09-30", "--linear", "0.0042,-0.00011,20", NULL };
        if ((rc = run(&dctx, cmd_init, a_init)) != BG_OK ||
            (rc = run(&dctx, cmd_lot, a_lot)) != BG_OK ||
            (rc = run(&dctx, cmd_lot, a_lot2)) != BG_OK ||
            (rc = run(&dctx, cmd_ref, a_ref)) != BG_OK)
            return rc;
    }
    /* First rounds: probe-SERIAL.csv; the second lot's serials start GH-05. */
    for (int round = 1; round <= 2; round++) {
        if (round == 2) {
            printf("\n== calibration report of probe %s (model chosen automatically) ==\n\n",
                   DEMO_PROBE);
            const char *a_fit[] = { "fit", "--probe", DEMO_PROBE, NULL };
            const char *a_l1[] = { "fit", "--lot", DEMO_LOT, "--model", "sh3", NULL };
            const char *a_l2[] = { "fit", "--lot", DEMO_LOT2, "--model", "sh3", NULL };
            if ((rc = run(&dctx, cmd_fit, a_fit)) != BG_OK)
                return rc;
            printf("\n== lots %s and %s, Steinhart-Hart (sh3) for every probe ==\n\n",
                   DEMO_LOT, DEMO_LOT2);
            if ((rc = run(&dctx, cmd_fit, a_l1)) != BG_OK ||
                (rc = run(&dctx, cmd_fit, a_l2)) != BG_OK)
                return rc;
            printf("\n== six months later: the second round of lot %s ==\n\n", DEMO_LOT);
        }
        const char *prefix = round == 1 ? "probe-" : "recal-";
        for (const struct demo_file *df = demo_files; df->name; df++) {
            char serial[64];
            size_t pl = strlen(prefix);
            if (strncmp(df->name, prefix, pl) != 0)
                continue;
            /* probe-GH-0417.csv -> GH-0417 */
            snprintf(serial, sizeof serial, "%.*s", (int)(strlen(df->name) - pl - 4),
                     df->name + pl);
            snprintf(path, sizeof path, "%s/%s", dir, df->name);
            const char *lot = strncmp(serial, "GH-05", 5) == 0 ? DEMO_LOT2 : DEMO_LOT;
            const char *a_probe[] = { "probe", "add", serial, "--lot", lot, NULL };
            const char *a_imp[] = { "import", path, "--probe", serial, "--ref", "REF-7",
                                    "--operator", "I. Nventa", "--medium", "stirred water-glycol",
                                    "--ambient", "21 degC", "--excitation", "10 uA", NULL };
            if ((round == 1 && (rc = run(&dctx, cmd_probe, a_probe)) != BG_OK) ||
                (rc = run(&dctx, cmd_import, a_imp)) != BG_OK)
                return rc;
        }
    }
    {
        const char *a_l1[] = { "fit", "--lot", DEMO_LOT, "--model", "sh3", NULL };
        const char *a_dp[] = { "drift", "--probe", DEMO_PROBE, "--limit", "50mK", NULL };
        const char *a_dl[] = { "drift", "--lot", DEMO_LOT2, NULL };
        const char *a_dpart[] = { "drift", "--part", "SOIL-NTC-10K", "--baseline", "1", NULL };
        /* the operator noted that the second -20 degC reading of GH-0417's recalibration
        ** was taken before the bath had settled: it is excluded, with the reason */
        long long excl = 0;
        if ((rc = demo_reading_id(&dctx, DEMO_PROBE, 8, &excl)) != BG_OK)
            return rc;
        char excl_id[32];
        snprintf(excl_id, sizeof excl_id, "%lld", excl);
        const char *a_ex[] = { "exclude", excl_id, "--why", "bath not settled (operator's note)",
                               "--by", "I. Nventa", NULL };
        printf("\n== one reading of %s's recalibration excluded, then the lot refitted ==\n\n",
               DEMO_PROBE);
        if ((rc = run(&dctx, cmd_exclude, a_ex)) != BG_OK ||
            (rc = run(&dctx, cmd_fit, a_l1)) != BG_OK)
            return rc;
        /* The drift reports flag what the invented data hold; that is the demo, not a failure. */
        printf("\n== drift of probe %s between the rounds ==\n\n", DEMO_PROBE);
        if ((rc = run(&dctx, cmd_drift, a_dp)) != BG_OK && rc != CLI_FLAGGED)
            return rc;
        printf("\n== lot %s against its nominal curve ==\n\n", DEMO_LOT2);
        if ((rc = run(&dctx, cmd_drift, a_dl)) != BG_OK && rc != CLI_FLAGGED)
            return rc;
        printf("\n== the part across its lots ==\n\n");
        if ((rc = run(&dctx, cmd_drift, a_dpart)) != BG_OK && rc != CLI_FLAGGED)
            return rc;
        /* An invented board: the probe on the low side of a 10k divider, 12-bit ADC. */
        char cfile[4200], tfile[4200];
        snprintf(cfile, sizeof cfile, "%s/glasshouse_ntc.c", dir);
        snprintf(tfile, sizeof tfile, "%s/table-report.html", dir);
        const char *a_lut[] = { "lut", "--probe", DEMO_PROBE, "--fixed", "10k", "--sensor-side",
                                "low", "--adc-bits", "12", "--range", "-15C:55C", "--max-error",
                                "0.05C", "--symbol", "glasshouse_ntc", "--fixed-tol", "0.1%",
                                "--excitation", "3.3", "--dissipation", "1.5mW/K", "-o", cfile,
                                "--report", tfile, NULL };
        printf("\n== a firmware table for an invented board (probe %s on the low side of a 10k"
               "\n   divider, 12-bit ADC, 3.3 V): %s ==\n\n", DEMO_PROBE, cfile);
        if ((rc = run(&dctx, cmd_lut, a_lut)) != BG_OK)
            return rc;
        /* the reports: the probe's newest calibration, the recalibrated lot, the table */
        bg_store *st = NULL;
        bg_probe pr;
        bg_error err = BG_ERROR_INIT;
        long long run_id = 0;
        if ((rc = cli_open_store(&dctx, 0, &st)) != BG_OK)
            return rc;
        rc = bg_store_probe_get(st, DEMO_PROBE, &pr, &err);
        if (rc == BG_OK)
            rc = bg_store_run_latest(st, pr.id, &run_id, &err);
        bg_store_close(st);
        if (rc != BG_OK)
            return cli_fail("demo", &err);
        char rid[32], rfile[4200], lfile[4200];
        snprintf(rid, sizeof rid, "%lld", run_id);
        snprintf(rfile, sizeof rfile, "%s/calibration-report.html", dir);
        snprintf(lfile, sizeof lfile, "%s/lot-report.html", dir);
        const char *a_rr[] = { "report", "--run", rid, "--lab", "Lindqvist cooperative test "
                               "bench (invented)", "--customer", "Lindqvist glasshouse "
                               "cooperative (invented)", "--dissipation", "1.5mW/K", "-o",
                               rfile, NULL };
        const char *a_lr[] = { "report", "--lot", DEMO_LOT, "--lab", "Lindqvist cooperative "
                               "test bench (invented)", "-o", lfile, NULL };
        printf("\n== reports (self-contained HTML; open them in a browser or print them) ==\n\n");
        if ((rc = run(&dctx, cmd_report, a_rr)) != BG_OK ||
            (rc = run(&dctx, cmd_report, a_lr)) != BG_OK)
            return rc;
        printf("table report: %s\n", tfile);
    }
    printf("\ndatabase: %s  (try: bandgap --db %s list fits)\n", db, db);
    return BG_OK;
}
