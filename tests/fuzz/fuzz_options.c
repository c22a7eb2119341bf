/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Fuzz target: the program's option and list parsers.  The input is an option (its first
** byte picks a command and one of its options taking a value) and the value (the rest, up to
** a NUL byte; what follows a NUL is a second value).  The command runs as
** "CMD --OPTION VALUE --help", so that its own parser takes the value and then stops at
** --help; the shared parsers (lists, temperatures, ids, pairs, quantities with units, names)
** take the value directly and must give a finite number whenever they accept it; and an
** inline model built from the two values ("--model V1 --coef V2", or --r25 V1 --beta V2) is
** evaluated through 'eval'.  Links the program's files but main.c (and the demo). */
#include <getopt.h>
#include <math.h>
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "fuzz_util.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

struct opt_case {
    const char *cmd, *opt;
    cmd_fn fn;
};

static const struct opt_case cases[] = {
    { "curve", "from", cmd_curve },        { "curve", "to", cmd_curve },
    { "curve", "step", cmd_curve },        { "curve", "ohms", cmd_curve },
    { "curve", "unit", cmd_curve },        { "curve", "coverage-k", cmd_curve },
    { "curve", "fit", cmd_curve },         { "curve", "coef", cmd_curve },
    { "drift", "at", cmd_drift },          { "drift", "limit", cmd_drift },
    { "drift", "rate-limit", cmd_drift },  { "drift", "since", cmd_drift },
    { "drift", "baseline", cmd_drift },    { "drift", "alpha", cmd_drift },
    { "eval", "pair", cmd_eval },          { "eval", "ohms", cmd_eval },
    { "eval", "temp", cmd_eval },          { "eval", "unit", cmd_eval },
    { "eval", "r25", cmd_eval },           { "eval", "beta", cmd_eval },
    { "eval", "t0", cmd_eval },            { "eval", "coef", cmd_eval },
    { "fit", "model", cmd_fit },           { "fit", "t0", cmd_fit },
    { "fit", "pair", cmd_fit },            { "fit", "u-temp", cmd_fit },
    { "fit", "at", cmd_fit },              { "fit", "unit", cmd_fit },
    { "fit", "run", cmd_fit },             { "fit", "coverage-k", cmd_fit },
    { "fit", "resolution", cmd_fit },      { "lut", "fit", cmd_lut },
    { "lut", "fixed", cmd_lut },           { "lut", "sensor-side", cmd_lut },
    { "lut", "parallel", cmd_lut },        { "lut", "series", cmd_lut },
    { "lut", "adc-bits", cmd_lut },        { "lut", "full-scale", cmd_lut },
    { "lut", "current", cmd_lut },         { "lut", "vref", cmd_lut },
    { "lut", "ohms-per-code", cmd_lut },   { "lut", "range", cmd_lut },
    { "lut", "step", cmd_lut },            { "lut", "max-error", cmd_lut },
    { "lut", "resolution", cmd_lut },      { "lut", "format", cmd_lut },
    { "lut", "budget-at", cmd_lut },       { "lut", "fixed-tol", cmd_lut },
    { "lut", "supply", cmd_lut },          { "lut", "dissipation", cmd_lut },
    { "lut", "strategy", cmd_lut },        { "lut", "coverage-k", cmd_lut },
    { "lut", "symbol", cmd_lut },          { "lut", "coef", cmd_lut },
    { "lot", "r25", cmd_lot },             { "lot", "beta", cmd_lot },
    { "lot", "pair", cmd_lot },            { "lot", "tol-r25", cmd_lot },
    { "lot", "tol-beta", cmd_lot },        { "part", "tol", cmd_part },
    { "part", "over", cmd_part },          { "part", "baseline", cmd_part },
    { "part", "limit", cmd_part },         { "part", "rate-limit", cmd_part },
    { "part", "coef", cmd_part },          { "ref", "due", cmd_ref },
    { "ref", "linear", cmd_ref },          { "ref", "cvd", cmd_ref },
    { "report", "run", cmd_report },       { "report", "fit", cmd_report },
    { "report", "get", cmd_report },       { "report", "dissipation", cmd_report },
    { "report", "reissue", cmd_report },   { "report", "baseline", cmd_report },
    { "report", "limit", cmd_report },     { "report", "rate-limit", cmd_report },
    { "import", "measuring-current", cmd_import },
    { "import", "measuring-voltage", cmd_import },
    { "import", "at", cmd_import },
};
#define NCASES (sizeof cases / sizeof cases[0])

/* A database path that cannot exist, so that no command can create or open one. */
static struct cli_ctx ctx = { "/nonexistent-bandgap-fuzz/none.db", 0, -1.0 };

static void run_cmd(cmd_fn fn, int argc, char **argv)
{
    optind = 0; /* glibc: re-initialise getopt, as main() does for each command */
    fn(argc, argv, &ctx);
}

static void must_be_finite(const char *what, const char *arg, double v)
{
    if (!isfinite(v))
        fuzz_fail(what, arg, strlen(arg), 0);
}

/* The shared parsers on 'arg': whatever they accept must be finite. */
static void parse_direct(const char *arg)
{
    bg_error err = BG_ERROR_INIT;
    double v[16], w;
    size_t n;
    long long id;
    bg_temp_unit u;
    bg_circuit_kind kind;
    bg_lut_format fmt;
    bg_lut_strategy strat;
    unsigned qbits;
    int fs;
    static const char *const si_units[] = { "A", "V", "K", "W/K" };

    if (cli_parse_list(arg, v, BG_MODEL_MAXPAR, &n, &err) == BG_OK)
        for (size_t i = 0; i < n; i++)
            must_be_finite("cli_parse_list", arg, v[i]);
    if (cli_parse_temps(arg, v, 16, &n, &err) == BG_OK)
        for (size_t i = 0; i < n; i++)
            if (!(v[i] >= 0.0) || !isfinite(v[i]))
                fuzz_fail("cli_parse_temps: not a temperature", arg, strlen(arg), 0);
    if (cli_parse_id(arg, &id) == BG_OK && id <= 0)
        fuzz_fail("cli_parse_id", arg, strlen(arg), 0);
    if (bg_model_parse_pair(arg, &v[0], &w, &err) == BG_OK)
        must_be_finite("bg_model_parse_pair", arg, v[0] + w);
    if (bg_units_parse_temp(arg, BG_UNIT_NONE, &v[0], &err) == BG_OK)
        must_be_finite("bg_units_parse_temp", arg, v[0]);
    if (bg_units_parse_tdiff(arg, &v[0], &err) == BG_OK)
        must_be_finite("bg_units_parse_tdiff", arg, v[0]);
    if (bg_units_parse_tcorr(arg, &v[0], &err) == BG_OK)
        must_be_finite("bg_units_parse_tcorr", arg, v[0]);
    if (bg_units_parse_ohms(arg, &v[0], &err) == BG_OK)
        must_be_finite("bg_units_parse_ohms", arg, v[0]);
    if (bg_units_parse_fraction(arg, &v[0], &err) == BG_OK)
        must_be_finite("bg_units_parse_fraction", arg, v[0]);
    for (size_t i = 0; i < sizeof si_units / sizeof si_units[0]; i++)
        if (bg_units_parse_si(arg, si_units[i], &v[0], &err) == BG_OK)
            must_be_finite("bg_units_parse_si", arg, v[0]);
    bg_units_parse_unit(arg, &u, &err);
    bg_circuit_side_parse(arg, &kind, &err);
    bg_circuit_full_scale_parse(arg, &fs, &err);
    bg_lut_format_parse(arg, &fmt, &qbits, &err);
    bg_lut_strategy_parse(arg, &strat, &err);
}

/* The inline model of 'v1' and 'v2' (a model name and coefficients, or R25 and B) through
** the shared option code and then through 'eval'. */
static void inline_model(int beta, char *v1, char *v2)
{
    struct cli_inline in;
    bg_model m;
    double t_k, r_ohm;
    bg_error err = BG_ERROR_INIT;

    cli_inline_init(&in);
    if (cli_inline_option(&in, beta ? CLI_IN_R25 : CLI_IN_MODEL, v1, "fuzz") != BG_OK ||
        cli_inline_option(&in, beta ? CLI_IN_BETA : CLI_IN_COEF, v2, "fuzz") != BG_OK)
        return;
    if (cli_inline_model(&in, "fuzz", &m) != BG_OK)
        return;
    if (bg_model_t_from_r(&m, 1e4, &t_k, &err) == BG_OK && !(t_k > 0.0 && isfinite(t_k)))
        fuzz_fail("bg_model_t_from_r: not a temperature", v2, strlen(v2), 0);
    if (bg_model_r_from_t(&m, 298.15, &r_ohm, &err) == BG_OK && !(r_ohm > 0.0 && isfinite(r_ohm)))
        fuzz_fail("bg_model_r_from_t: not a resistance", v2, strlen(v2), 0);

    char a0[] = "eval", a1[] = "--model", a2[] = "--coef", a3[] = "--r25", a4[] = "--beta",
         a5[] = "--ohms", a6[] = "10k", a7[] = "--temp", a8[] = "25C", a9[] = "--json";
    char *argv[] = { a0, beta ? a3 : a1, v1, beta ? a4 : a2, v2, a5, a6, a7, a8, a9, NULL };
    run_cmd(cmd_eval, 10, argv);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    char v1[300], v2[300], opt[64], cmd[16];
    size_t i, k;

    fuzz_quiet();
    if (size < 1)
        return 0;
    const struct opt_case *c = &cases[data[0] % NCASES];
    int beta = data[0] >= 128;
    for (i = 1, k = 0; i < size && data[i] && k + 1 < sizeof v1; i++)
        v1[k++] = (char)data[i];
    v1[k] = '\0';
    for (i++, k = 0; i < size && k + 1 < sizeof v2; i++)
        v2[k++] = data[i] ? (char)data[i] : ' ';
    v2[k] = '\0';

    /* CMD --OPTION VALUE --help, and CMD --OPTION=VALUE --help */
    snprintf(cmd, sizeof cmd, "%s", c->cmd);
    snprintf(opt, sizeof opt, "--%s", c->opt);
    char help[] = "--help";
    char *argv[] = { cmd, opt, v1, help, NULL };
    run_cmd(c->fn, 4, argv);
    char joined[sizeof opt + sizeof v1];
    snprintf(joined, sizeof joined, "--%s=%s", c->opt, v1);
    char *argv2[] = { cmd, joined, help, NULL };
    run_cmd(c->fn, 3, argv2);

    parse_direct(v1);
    inline_model(beta, v1, v2);
    return 0;
}
