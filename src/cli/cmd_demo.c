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
    "A second bench then calibrates three junction sensors (read in volts) and three\n"
    "platinum thermometers in the same bath and database: fit, lot statistics against\n"
    "their parts' nominal values, a table for a platinum thermometer and two reports.\n"
    "The scenario and every number in it are invented.\n";

#define DEMO_LOT "GH-LOT-2611"
#define DEMO_PROBE "GH-0417"
#define DEMO_LOT2 "GH-LOT-2705"

/* Run one command of the program in this process, as a user would type it. */
static int run(struct cli_ctx *ctx, cmd_fn fn, const char *const *args)
{
    char *argv[32];
    int argc = 0;
    while (args[argc]) {
        if (argc == 31) {
            cli_error("demo: more than 31 arguments for '%s'", args[0]);
            return BG_EINTERNAL;
        }
        argv[argc] = (char *)args[argc];
        argc++;
    }
    argv[argc] = NULL;
    optind = 0;
    return fn(argc, argv, ctx);
}

/* Preview the calibration of probe 'serial' (its latest run, the model chosen automatically;
** nothing stored) or, with 'lot_code', calibrate every probe of that lot with 'model', store
** the fits and print them. */
static int demo_fit(struct cli_ctx *dctx, const char *serial, const char *lot_code,
                    const char *model)
{
    bg_calib_request rq = bg_calib_default_request();
    bg_calib_result r = BG_CALIB_RESULT_INIT;
    bg_calib_lot lot = BG_CALIB_LOT_INIT;
    bg_error err = BG_ERROR_INIT;
    bg_store *st = NULL;
    int rc = cli_open_store(dctx, 0, &st);

    if (rc != BG_OK)
        return rc;
    if (model)
        rq.model = model;
    /* the lot's fit stores this probe's fit; a stored preview would be a second copy */
    rq.store_flags = BG_CALIB_DRY_RUN;
    if (lot_code) {
        rq.progress = print_fit_progress;
        rc = bg_calibrate_lot(st, lot_code, &rq, &lot, &err);
        rc = print_fit_lot(&lot, rc, &err, 0);
    } else if ((rc = bg_calibrate_probe(st, serial, 0, &rq, &r, &err)) == BG_OK)
        print_fit(&r, BG_UNIT_C, 0, 0);
    else
        cli_fail(NULL, &err);
    bg_calib_lot_release(&lot);
    bg_calib_result_release(&r);
    bg_store_close(st);
    return rc;
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

/* The readings files of every round into 'dir'. */
static int demo_write_files(const char *dir)
{
    char path[4096];
    size_t nfiles = 0;
    for (const struct demo_file *df = demo_files; df->name; df++, nfiles++) {
        struct cli_out f;
        int rc;
        snprintf(path, sizeof path, "%s/%s", dir, df->name);
        if ((rc = cli_out_open(&f, path, "demo")) != BG_OK)
            return rc;
        fputs(df->text, f.f); /* an error shows in the commit */
        if ((rc = cli_out_commit(&f, "demo")) != BG_OK)
            return rc;
    }
    printf("wrote %zu readings files to %s/\n", nfiles, dir);
    return BG_OK;
}

/* A new database with the two lots and the reference thermometer. */
static int demo_database(struct cli_ctx *dctx)
{
    const char *a_init[] = { "init", NULL };
    const char *a_lot[] = { "lot", "add", DEMO_LOT, "--part", "SOIL-NTC-10K", "--r25", "10k",
                            "--beta", "3950K", "--pair", "25/85", "--tol-r25", "1%",
                            "--tol-beta", "0.5%", "--note", "invented demo lot", NULL };
    const char *a_lot2[] = { "lot", "add", DEMO_LOT2, "--part", "SOIL-NTC-10K", "--r25",
                             "10k", "--beta", "3950K", "--pair", "25/85", "--tol-r25", "1%",
                             "--tol-beta", "0.5%", "--note", "invented demo lot", NULL };
    const char *a_ref[] = { "ref", "add", "REF-7", "--cert", "INVENTED-CAL-2026-0117",
                            "--due", "2027-09-30", "--linear", "0.0042K,-0.00011,20C", NULL };
    /* the part's invented nominal curve (sh3), its tolerance in kelvin and QA defaults: the
    ** lot report then judges against a curve of the right shape and flags GH-0417's drift */
    const char *a_part[] = { "part", "set", "SOIL-NTC-10K", "--model", "sh3", "--coef",
                             "1.11198e-3,2.36143e-4,8.60692e-8", "--tol", "0.3K", "--over",
                             "-20/60", "--baseline", "1", "--limit", "50mK", "--note",
                             "invented nominal curve", NULL };
    int rc;
    if ((rc = run(dctx, cmd_init, a_init)) != BG_OK || (rc = run(dctx, cmd_lot, a_lot)) != BG_OK ||
        (rc = run(dctx, cmd_lot, a_lot2)) != BG_OK || (rc = run(dctx, cmd_part, a_part)) != BG_OK ||
        (rc = run(dctx, cmd_ref, a_ref)) != BG_OK)
        return rc;
    return BG_OK;
}

/* Import one round: probe-SERIAL.csv (round 1, adding the probes; the second lot's serials
** start GH-05) or recal-SERIAL.csv (round 2). */
static int demo_import_round(struct cli_ctx *dctx, const char *dir, int round)
{
    const char *prefix = round == 1 ? "probe-" : "recal-";
    size_t pl = strlen(prefix);
    char path[4096];
    int rc;
    for (const struct demo_file *df = demo_files; df->name; df++) {
        char serial[64];
        if (strncmp(df->name, prefix, pl) != 0)
            continue;
        /* probe-GH-0417.csv -> GH-0417 */
        snprintf(serial, sizeof serial, "%.*s", (int)(strlen(df->name) - pl - 4), df->name + pl);
        snprintf(path, sizeof path, "%s/%s", dir, df->name);
        const char *lot = strncmp(serial, "GH-05", 5) == 0 ? DEMO_LOT2 : DEMO_LOT;
        const char *a_probe[] = { "probe", "add", serial, "--lot", lot, NULL };
        const char *a_imp[] = { "import", path, "--probe", serial, "--ref", "REF-7",
                                "--operator", "I. Nventa", "--medium", "stirred water-glycol",
                                "--ambient", "21 degC", "--measuring-current", "10uA", NULL };
        if ((round == 1 && (rc = run(dctx, cmd_probe, a_probe)) != BG_OK) ||
            (rc = run(dctx, cmd_import, a_imp)) != BG_OK)
            return rc;
    }
    return BG_OK;
}

/* The first round fitted: one probe's full report, then both lots. */
static int demo_first_fits(struct cli_ctx *dctx)
{
    int rc;
    printf("\n== calibration report of probe %s (model chosen automatically; a preview, "
           "stored\n   with its lot below) ==\n\n", DEMO_PROBE);
    if ((rc = demo_fit(dctx, DEMO_PROBE, NULL, NULL)) != BG_OK)
        return rc;
    printf("\n== lots %s and %s, Steinhart-Hart (sh3) for every probe ==\n\n", DEMO_LOT,
           DEMO_LOT2);
    if ((rc = demo_fit(dctx, NULL, DEMO_LOT, "sh3")) != BG_OK ||
        (rc = demo_fit(dctx, NULL, DEMO_LOT2, "sh3")) != BG_OK)
        return rc;
    return BG_OK;
}

/* The second round: one reading excluded, the lot refitted, and the drift reports. */
static int demo_second_round(struct cli_ctx *dctx)
{
    const char *a_dp[] = { "drift", "--probe", DEMO_PROBE, "--limit", "50mK", NULL };
    const char *a_dl[] = { "drift", "--lot", DEMO_LOT2, NULL };
    const char *a_dpart[] = { "drift", "--part", "SOIL-NTC-10K", "--baseline", "1", NULL };
    long long excl = 0;
    char excl_id[32];
    int rc;
    /* the operator noted that the second -20 degC reading of GH-0417's recalibration was taken
    ** before the bath had settled: it is excluded, with the reason */
    if ((rc = demo_reading_id(dctx, DEMO_PROBE, 8, &excl)) != BG_OK)
        return rc;
    snprintf(excl_id, sizeof excl_id, "%lld", excl);
    const char *a_ex[] = { "exclude", excl_id, "--why", "bath not settled (operator's note)",
                           "--by", "I. Nventa", NULL };
    printf("\n== one reading of %s's recalibration excluded, then the lot refitted ==\n\n",
           DEMO_PROBE);
    if ((rc = run(dctx, cmd_exclude, a_ex)) != BG_OK ||
        (rc = demo_fit(dctx, NULL, DEMO_LOT, "sh3")) != BG_OK)
        return rc;
    /* The drift reports flag what the invented data hold; that is the demo, not a failure. */
    printf("\n== drift of probe %s between the rounds ==\n\n", DEMO_PROBE);
    if ((rc = run(dctx, cmd_drift, a_dp)) != BG_OK && rc != CLI_FLAGGED)
        return rc;
    printf("\n== lot %s against its nominal curve ==\n\n", DEMO_LOT2);
    if ((rc = run(dctx, cmd_drift, a_dl)) != BG_OK && rc != CLI_FLAGGED)
        return rc;
    printf("\n== the part across its lots ==\n\n");
    if ((rc = run(dctx, cmd_drift, a_dpart)) != BG_OK && rc != CLI_FLAGGED)
        return rc;
    return BG_OK;
}

/* A firmware table for an invented board: the probe on the low side of a 10k divider, 12-bit
** ADC; its table report goes to 'tfile'. */
static int demo_table(struct cli_ctx *dctx, const char *dir, const char *tfile)
{
    char cfile[4200];
    snprintf(cfile, sizeof cfile, "%s/glasshouse_ntc.c", dir);
    const char *a_lut[] = { "lut", "--probe", DEMO_PROBE, "--fixed", "10k", "--sensor-side",
                            "low", "--adc-bits", "12", "--range", "-15C:55C", "--max-error",
                            "0.05C", "--symbol", "glasshouse_ntc", "--fixed-tol", "0.1%",
                            "--supply", "3.3V", "--dissipation", "1.5mW/K", "-o", cfile,
                            "--report", tfile, NULL };
    printf("\n== a firmware table for an invented board (probe %s on the low side of a 10k"
           "\n   divider, 12-bit ADC, 3.3 V): %s ==\n\n", DEMO_PROBE, cfile);
    return run(dctx, cmd_lut, a_lut);
}

/* The newest run of probe 'serial', as text into 'rid'. */
static int demo_latest_run(struct cli_ctx *dctx, const char *serial, char rid[32])
{
    bg_store *st = NULL;
    bg_probe pr;
    bg_error err = BG_ERROR_INIT;
    long long run_id = 0;
    int rc;
    if ((rc = cli_open_store(dctx, 0, &st)) != BG_OK)
        return rc;
    rc = bg_store_probe_get(st, serial, &pr, &err);
    if (rc == BG_OK)
        rc = bg_store_run_latest(st, pr.id, &run_id, &err);
    bg_store_close(st);
    if (rc != BG_OK)
        return cli_fail("demo", &err);
    snprintf(rid, 32, "%lld", run_id);
    return BG_OK;
}

/* The reports: the probe's newest calibration and the recalibrated lot. */
static int demo_reports(struct cli_ctx *dctx, const char *dir)
{
    char rid[32], rfile[4200], lfile[4200];
    int rc;
    if ((rc = demo_latest_run(dctx, DEMO_PROBE, rid)) != BG_OK)
        return rc;
    snprintf(rfile, sizeof rfile, "%s/calibration-report.html", dir);
    snprintf(lfile, sizeof lfile, "%s/lot-report.html", dir);
    const char *a_rr[] = { "report", "--run", rid, "--lab", "Lindqvist cooperative test "
                           "bench (invented)", "--customer", "Lindqvist glasshouse "
                           "cooperative (invented)", "--dissipation", "1.5mW/K", "-o",
                           rfile, NULL };
    const char *a_lr[] = { "report", "--lot", DEMO_LOT, "--lab", "Lindqvist cooperative "
                           "test bench (invented)", "-o", lfile, NULL };
    printf("\n== reports (self-contained HTML; open them in a browser or print them) ==\n\n");
    if ((rc = run(dctx, cmd_report, a_rr)) != BG_OK || (rc = run(dctx, cmd_report, a_lr)) != BG_OK)
        return rc;
    return BG_OK;
}

/* The second bench: lot 'lot' of part 'part' (of the sensor kind 'spec' gives), its probes
** GH-<prefix>01..03 imported from '<file>-GH-<prefix>0N.csv' beside REF-7 and fitted with
** 'model', then its statistics against the part's nominal values. */
static int demo_bench2_lot(struct cli_ctx *dctx, const char *dir, const char *lot,
                           const char *part, const char *const *spec, const char *file,
                           char prefix, const char *model)
{
    /* a junction or platinum lot holds no nominal values of its own: it takes its kind from
    ** the part's specification (the output says so) and is judged against the part's */
    const char *a_lot[] = { "lot", "add", lot, "--part", part, "--note", "invented demo lot",
                            NULL };
    const char *a_drift[] = { "drift", "--lot", lot, NULL };
    char path[4200], serial[16];
    int rc;
    if ((rc = run(dctx, cmd_part, spec)) != BG_OK || (rc = run(dctx, cmd_lot, a_lot)) != BG_OK)
        return rc;
    for (int i = 1; i <= 3; i++) {
        snprintf(serial, sizeof serial, "GH-%c%02d", prefix, i);
        snprintf(path, sizeof path, "%s/%s-%s.csv", dir, file, serial);
        const char *a_probe[] = { "probe", "add", serial, "--lot", lot, NULL };
        const char *a_imp[] = { "import", path, "--probe", serial, "--ref", "REF-7",
                                "--operator", "I. Nventa", "--medium", "stirred water-glycol",
                                "--ambient", "21 degC", NULL };
        if ((rc = run(dctx, cmd_probe, a_probe)) != BG_OK ||
            (rc = run(dctx, cmd_import, a_imp)) != BG_OK)
            return rc;
    }
    printf("\n== lot %s (%s), %s for every sensor ==\n\n", lot, part, model);
    if ((rc = demo_fit(dctx, NULL, lot, model)) != BG_OK)
        return rc;
    printf("\n== lot %s against part %s's nominal values ==\n\n", lot, part);
    if ((rc = run(dctx, cmd_drift, a_drift)) != BG_OK && rc != CLI_FLAGGED)
        return rc;
    return BG_OK;
}

/* The second bench: junction sensors and platinum thermometers beside the soil probes, a
** table for one thermometer on a current source and one for a junction through an amplifier,
** and a report of each kind. */
static int demo_bench2(struct cli_ctx *dctx, const char *dir)
{
    const char *p_jn[] = { "part", "set", "BENCH2-JN", "--sensor", "junction", "--v-ref",
                           "600mV", "--dvdt", "-2.3mV/K", "--tol-v", "5mV", "--tol-dvdt",
                           "0.1mV/K", "--note", "invented nominal values", NULL };
    const char *p_pt[] = { "part", "set", "BENCH2-PT100", "--sensor", "prt", "--r0-nominal",
                           "100R", "--class", "A", "--note", "invented part", NULL };
    char cfile[4200], tfile[4200], jfile[4200], pfile[4200];
    int rc;
    printf("\n== INVENTED: the second bench, junction sensors and platinum thermometers in the "
           "same bath ==\n");
    if ((rc = demo_bench2_lot(dctx, dir, "GH-LOT-J2612", "BENCH2-JN", p_jn, "diode", 'J',
                              "vbe")) != BG_OK ||
        (rc = demo_bench2_lot(dctx, dir, "GH-LOT-R2612", "BENCH2-PT100", p_pt, "prt", 'R',
                              "cvd")) != BG_OK)
        return rc;
    snprintf(cfile, sizeof cfile, "%s/bench2_pt100.c", dir);
    snprintf(tfile, sizeof tfile, "%s/pt100-table-report.html", dir);
    snprintf(jfile, sizeof jfile, "%s/junction-report.html", dir);
    snprintf(pfile, sizeof pfile, "%s/pt100-report.html", dir);
    const char *a_lut[] = { "lut", "--probe", "GH-R01", "--current", "1mA", "--vref", "2.5V",
                            "--adc-bits", "16", "--range", "-15C:55C", "--max-error", "0.05C",
                            "--symbol", "bench2_pt100", "-o", cfile, "--report", tfile, NULL };
    printf("\n== a table for thermometer GH-R01 on a 1 mA current source, 16-bit ADC, 2.5 V: "
           "%s ==\n\n", cfile);
    if ((rc = run(dctx, cmd_lut, a_lut)) != BG_OK)
        return rc;
    char dfile[4200];
    snprintf(dfile, sizeof dfile, "%s/bench2_diode.c", dir);
    const char *a_lj[] = { "lut", "--probe", "GH-J01", "--vref", "1.0V", "--gain", "4",
                           "--offset", "-1.9V", "--current", "10uA", "--adc-bits", "12",
                           "--range", "-15C:55C", "--max-error", "0.1C", "--symbol",
                           "bench2_diode", "-o", dfile, NULL };
    printf("\n== a table for junction GH-J01 through an amplifier (gain 4, offset -1.9 V) into a "
           "12-bit ADC, 1.0 V: %s ==\n\n", dfile);
    if ((rc = run(dctx, cmd_lut, a_lj)) != BG_OK)
        return rc;
    char jrun[32], prun[32];
    if ((rc = demo_latest_run(dctx, "GH-J01", jrun)) != BG_OK ||
        (rc = demo_latest_run(dctx, "GH-R01", prun)) != BG_OK)
        return rc;
    const char *a_rj[] = { "report", "--run", jrun, "--lab", "Lindqvist cooperative test "
                           "bench (invented)", "-o", jfile, NULL };
    const char *a_rp[] = { "report", "--run", prun, "--lab", "Lindqvist cooperative test "
                           "bench (invented)", "-o", pfile, NULL };
    printf("\n== reports of junction GH-J01 and thermometer GH-R01 ==\n\n");
    if ((rc = run(dctx, cmd_report, a_rj)) != BG_OK || (rc = run(dctx, cmd_report, a_rp)) != BG_OK)
        return rc;
    printf("table report: %s\n", tfile);
    return BG_OK;
}

/* The scenario after the options: files, database, two rounds, table and reports. */
static int demo_scenario(struct cli_ctx *dctx, const char *dir, const char *db)
{
    char tfile[4200];
    int rc;
    printf("INVENTED DEMO DATA: the (invented) Lindqvist glasshouse cooperative calibrates\n"
           "two deliveries of its soil probes, lots %s and %s (12 probes each, in a stirred\n"
           "bath beside reference thermometer REF-7, 18 readings from -20 to 60 degC), and\n"
           "recalibrates the first lot six months later.\n\n", DEMO_LOT, DEMO_LOT2);
    if ((rc = demo_write_files(dir)) != BG_OK)
        return rc;
    if (unlink(db) != 0 && errno != ENOENT) {
        cli_error("demo: cannot replace '%s': %s", db, strerror(errno));
        return CLI_ECANTCREAT;
    }
    snprintf(tfile, sizeof tfile, "%s/table-report.html", dir);
    if ((rc = demo_database(dctx)) != BG_OK || (rc = demo_import_round(dctx, dir, 1)) != BG_OK ||
        (rc = demo_first_fits(dctx)) != BG_OK)
        return rc;
    printf("\n== six months later: the second round of lot %s ==\n\n", DEMO_LOT);
    if ((rc = demo_import_round(dctx, dir, 2)) != BG_OK ||
        (rc = demo_second_round(dctx)) != BG_OK || (rc = demo_table(dctx, dir, tfile)) != BG_OK ||
        (rc = demo_reports(dctx, dir)) != BG_OK)
        return rc;
    printf("table report: %s\n", tfile);
    if ((rc = demo_bench2(dctx, dir)) != BG_OK)
        return rc;
    printf("\ndatabase: %s  (try: bandgap --db %s list fits)\n", db, db);
    return BG_OK;
}

int cmd_demo(int argc, char **argv, struct cli_ctx *ctx)
{
    static const struct option opts[] = {
        { "dir", required_argument, NULL, 'd' }, { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 },
    };
    const char *dir = "bandgap-demo";
    char db[4096];
    struct cli_ctx dctx = *ctx;
    int c;

    opterr = 0;
    while ((c = getopt_long(argc, argv, ":h", opts, NULL)) != -1) {
        switch (c) {
        case 'h': fputs(demo_usage, stdout); return BG_OK;
        case 'd': dir = optarg; break;
        case ':': return cli_usage_error("demo", "option '%s' needs a value", argv[optind - 1]);
        default: return cli_unknown_option("demo", argv[optind - 1], opts);
        }
    }
    if (optind < argc)
        return cli_usage_error("demo", "unexpected argument '%s'", argv[optind]);
    if (mkdir(dir, 0777) != 0 && errno != EEXIST) {
        cli_error("demo: cannot create '%s': %s", dir, strerror(errno));
        return CLI_ECANTCREAT;
    }
    snprintf(db, sizeof db, "%s/demo.db", dir);
    dctx.db_path = db;
    dctx.json = 0;
    return demo_scenario(&dctx, dir, db);
}
