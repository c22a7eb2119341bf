/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap demo: write the built-in invented readings to a folder, fit them, print the report. */
#include <errno.h>
#include <getopt.h>
#include <stdio.h>
#include <string.h>
#include <sys/stat.h>

#include "cli.h"

static const char demo_usage[] =
    "Usage: bandgap demo [--dir DIR] [--json]\n"
    "Run the whole job on built-in invented data: write the readings of one invented probe\n"
    "to DIR (default: bandgap-demo), fit them with the automatic model choice and print the\n"
    "calibration report.  The scenario and every number in it are invented.\n";

int cmd_demo(int argc, char **argv, struct cli_ctx *ctx)
{
    static const struct option opts[] = {
        { "dir", required_argument, NULL, 'd' }, { "json", no_argument, NULL, 'j' },
        { "help", no_argument, NULL, 'h' },      { NULL, 0, NULL, 0 },
    };
    const char *dir = "bandgap-demo";
    char path[4096];
    struct fit_request rq;
    int c;

    opterr = 0;
    while ((c = getopt_long(argc, argv, ":h", opts, NULL)) != -1) {
        switch (c) {
        case 'h': fputs(demo_usage, stdout); return BG_OK;
        case 'd': dir = optarg; break;
        case 'j': ctx->json = 1; break;
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
    for (const struct demo_file *df = demo_files; df->name; df++) {
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
        if (!ctx->json)
            printf("wrote %s\n", path);
    }
    snprintf(path, sizeof path, "%s/%s", dir, "probe-GH-0417.csv");
    if (!ctx->json)
        printf("\nINVENTED DEMO DATA: calibration of soil probe GH-0417 of the (invented)\n"
               "Lindqvist glasshouse cooperative, stirred-bath comparison against a\n"
               "reference thermometer.  Fitting %s:\n\n", path);
    fit_request_init(&rq);
    return fit_report_file(path, &rq, ctx);
}
