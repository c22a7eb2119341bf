/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap lut: a firmware lookup table (ADC code -> temperature) for a circuit, from a stored
** fit or an inline model, as C99, CSV or JSON, with its error measured over every code. */
#include <errno.h>
#include <stdarg.h>
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

static const char lut_usage[] =
    "Usage: bandgap lut (--fit N | --probe SERIAL | MODEL OPTIONS) FRONT-END --range T1:T2\n"
    "                   (--step CODES | --max-error DT [--strategy uniform|minimal|indexed])\n"
    "                   [--resolution 0.1|0.01|0.001|qN|float] [--kelvin] [--format c|csv|json|codes]\n"
    "                   [--symbol PREFIX] [-o FILE] [--report FILE.html] [--timestamp]\n"
    "                   [--allow-extrapolation] [--oncurve-count]\n"
    "                   [--target host|avr|cortex-m0|cortex-m4]\n"
    "                   [--optimize flash|time|weighted:W]\n"
    "A table that turns ADC codes into temperatures, its error measured over every code of\n"
    "the range.  Strategies: uniform (values every CODES codes, a power of two, read with\n"
    "integer interpolation; --max-error picks the largest step within DT); minimal (the\n"
    "fewest straight segments within DT, found by a binary search); indexed (the same\n"
    "segments with a small index: one read and one or two comparisons).  With\n"
    "--max-error and no --strategy, the smallest table in bytes is chosen and named.\n"
    "Segment tables also give the fewest breakpoints a table with values on the curve\n"
    "would need; its time grows with the square of the codes, so above 16384 codes it is\n"
    "counted only with --oncurve-count (the output says when it was not).\n"
    "Front end (CIRCUIT for a resistance sensor):\n"
    "  --fixed OHMS --sensor-side low|high   divider (low: thermistor between the ADC input\n"
    "                                        and ground), with --parallel OHMS, --series OHMS\n"
    "  --current AMPS --vref VOLTS           constant current, absolute reference (100uA,\n"
    "                                        2.5V)\n"
    "  --ohms-input [--ohms-per-code OHMS]   resistance input (default 1R per code)\n"
    "  --adc-bits N (8..24, default 12)  --full-scale pow2|pow2-1 (default pow2)\n"
    "  --leads OHMS                          a 2-wire sensor's total lead (loop) resistance,\n"
    "                                        in series with the sensor (PTC or platinum)\n"
    "  --vref VOLTS [--gain G] [--offset V] [--current AMPS]   a junction (a model read in\n"
    "                                        volts: vbe, dvbe, cheb:N) through an amplifier,\n"
    "                                        V_adc = G V + offset (default 1 and 0V; G may be\n"
    "                                        negative), into the ADC; --current states the\n"
    "                                        bias (the model holds at its calibration current)\n"
    "  --device-bits N [--device-lsb DT]     an IC sensor's readout (ic: reported degC, with\n"
    "                                        --device-lsb the degrees per count, 0.0625C;\n"
    "                                        ic-code: the code, its LSB the model's lsb_k):\n"
    "                                        an N-bit two's-complement word; the table's code\n"
    "                                        is the word + 2^(N-1) (its top bit flipped)\n"
    "The front end must read what the model reads (ohms, volts, a reported temperature or a\n"
    "code): the others' options are refused by name.  Over the range the reading must run\n"
    "the kind's way (a PTC's or platinum sensor's resistance and an IC sensor's reading rise,\n"
    "an NTC's resistance and a junction's voltage fall) and the temperature must be monotonic\n"
    "in the code.  --param NAME=VALUE sets an inline model's held parameters (p, lsb_k, x_lo,\n"
    "x_hi).  The C symbol defaults to ntc for an NTC thermistor, tsens otherwise.\n"
    "Values are signed integers in --resolution degC (default 0.01), qN a fixed point with N\n"
    "fractional bits (1..16), or float; K with --kelvin.  Out-of-range\n"
    "codes return named sentinels, never a clamped temperature.\n"
    "The reported error is that of the table and its rounding.  The error budget adds, at\n"
    "--budget-at T1,T2,... (default: the ends and middle of the range) and as the worst case\n"
    "over the range: half an LSB of the ADC, the stored fit's U = k u (k from Student's t for\n"
    "its degrees of freedom at 95.45 %, as fit and curve; --coverage-k K a fixed k), the\n"
    "fixed resistor at\n"
    "--fixed-tol REL (0.1% or 1000ppm), and self-heating at --supply VOLTS (the divider's\n"
    "supply, 3.3V) over --dissipation W/K (1.5mW/K); combined as root-sum-square and as a\n"
    "worst-case sum.  Every value takes its unit; a bare number is refused.  With a stored\n"
    "fit the range must lie inside the calibrated range unless --allow-extrapolation.\n"
    "Output is reproducible byte for byte; --timestamp adds the time of generation.\n"
    "--json, before or after 'lut', is --format json (with another --format: a usage error).\n"
    "--target avr|cortex-m0|cortex-m4 writes the C for that core (host: portable C99): on the\n"
    "AVR the tables in flash read with pgm_read_*, 16-bit arithmetic where the values allow;\n"
    "on every target int16_t segment slopes where they fit.  make check runs each on its\n"
    "core in a simulator, every code, against the library's values.  With a target the\n"
    "automatic choice minimises --optimize flash (table and code, the default), time (per\n"
    "conversion) or weighted:W (flash + W x time), from measurements on that core, printed\n"
    "with the toolchain that measured them.  On a target core a minimal table by flash\n"
    "takes its chained form when smaller (each segment starts where the previous ends,\n"
    "3 bytes, read by a walk: few bytes, many cycles); --optimize time keeps the binary\n"
    "search, and with --strategy indexed on the AVR takes the aligned form.\n"
    "--format codes lists every ADC code with what the emitted function returns for it (the\n"
    "sentinel outside the range): the reference to check a port of the table against.\n"
    "--report FILE.html also writes a table report: the error at every code against\n"
    "temperature and the budget, as one self-contained HTML file (not stored).\n";

static int parse_range(const char *s, double *lo, double *hi, bg_error *err)
{
    const char *c = strchr(s, ':');
    char a[64];
    if (!c || (size_t)(c - s) >= sizeof a)
        return bg_error_set(err, BG_EINVAL, "'%s': a range is T1:T2, e.g. -40C:125C", s);
    memcpy(a, s, (size_t)(c - s));
    a[c - s] = '\0';
    if (bg_units_parse_temp(a, BG_UNIT_NONE, lo, err) != BG_OK ||
        bg_units_parse_temp(c + 1, BG_UNIT_NONE, hi, err) != BG_OK)
        return BG_EINVAL;
    return *hi > *lo ? BG_OK : bg_error_set(err, BG_EINVAL, "'%s': T2 must be above T1", s);
}

enum { O_FIT = 1, O_PROBE, O_FIXED, O_SIDE, O_PAR, O_SER, O_BITS, O_FS, O_CUR, O_VREF,
       O_OHMSIN, O_OPC, O_RANGE, O_STEP, O_MAXERR, O_RES, O_KELVIN, O_FORMAT, O_SYMBOL,
       O_OUT, O_EXTRA, O_JSON, O_BAT, O_FTOL, O_EXC, O_DISS, O_STRAT, O_REPORT, O_SUPPLY,
       O_STAMP, O_COVK, O_TARGET, O_OPTIMIZE, O_ONCURVE, O_LEADS, O_GAIN, O_OFFSET, O_DBITS,
       O_DLSB };

static const struct option lut_opts[] = {
    CLI_INLINE_OPTIONS, CLI_INLINE_PARAM_OPTION,
    { "leads", required_argument, NULL, O_LEADS },   { "gain", required_argument, NULL, O_GAIN },
    { "offset", required_argument, NULL, O_OFFSET },
    { "device-bits", required_argument, NULL, O_DBITS },
    { "device-lsb", required_argument, NULL, O_DLSB },
    { "fit", required_argument, NULL, O_FIT },       { "probe", required_argument, NULL, O_PROBE },
    { "fixed", required_argument, NULL, O_FIXED },   { "sensor-side", required_argument, NULL, O_SIDE },
    { "parallel", required_argument, NULL, O_PAR },  { "series", required_argument, NULL, O_SER },
    { "adc-bits", required_argument, NULL, O_BITS }, { "full-scale", required_argument, NULL, O_FS },
    { "current", required_argument, NULL, O_CUR },   { "vref", required_argument, NULL, O_VREF },
    { "ohms-input", no_argument, NULL, O_OHMSIN },   { "ohms-per-code", required_argument, NULL, O_OPC },
    { "range", required_argument, NULL, O_RANGE },   { "step", required_argument, NULL, O_STEP },
    { "max-error", required_argument, NULL, O_MAXERR },
    { "resolution", required_argument, NULL, O_RES }, { "kelvin", no_argument, NULL, O_KELVIN },
    { "format", required_argument, NULL, O_FORMAT }, { "symbol", required_argument, NULL, O_SYMBOL },
    { "output", required_argument, NULL, O_OUT },
    { "allow-extrapolation", no_argument, NULL, O_EXTRA },
    { "budget-at", required_argument, NULL, O_BAT },
    { "fixed-tol", required_argument, NULL, O_FTOL },
    { "supply", required_argument, NULL, O_SUPPLY },
    { "excitation", required_argument, NULL, O_EXC }, /* the old spelling, refused by name */
    { "dissipation", required_argument, NULL, O_DISS },
    { "strategy", required_argument, NULL, O_STRAT },
    { "report", required_argument, NULL, O_REPORT },
    { "timestamp", no_argument, NULL, O_STAMP },
    { "oncurve-count", no_argument, NULL, O_ONCURVE },
    { "target", required_argument, NULL, O_TARGET },
    { "optimize", required_argument, NULL, O_OPTIMIZE },
    { "coverage-k", required_argument, NULL, O_COVK },
    { "json", no_argument, NULL, O_JSON },           { "help", no_argument, NULL, 'h' },
    { NULL, 0, NULL, 0 },
};

/* What the options say: the request for the library, and where the results go. */
struct lut_args {
    bg_lut_request rq;
    struct cli_inline in;
    const char *probe, *format, *symbol, *out_path, *report;
    long step;
    int have_range, side_set, current, ohms_in, help, format_set, optimize_set;
    int bits_set, fs_set, dbits_set, symbol_set, cur_set, vref_set;
    const char *junction_opt, *device_opt, *resist_opt; /* an option of that front end */
    char stamp[BG_TIME];
    double bat[16];
    bg_fit_row fit;
    struct cli_fit_used used;
};

/* An option of the other front ends and the 2-wire leads: --leads, --gain, --offset,
** --device-bits, --device-lsb. */
static int front_option(struct lut_args *a, int c, const char *arg)
{
    bg_circuit *ci = &a->rq.spec.circuit;
    bg_error err = BG_ERROR_INIT;
    char *end;
    switch (c) {
    case O_LEADS:
        if (bg_units_parse_ohms(arg, &ci->lead_ohm, &err) != BG_OK)
            return cli_usage_error("lut", "--leads: %s", err.msg);
        a->resist_opt = "--leads";
        break;
    case O_GAIN:
        errno = 0;
        ci->gain = strtod(arg, &end);
        if (end == arg || *end || errno || !isfinite(ci->gain) || ci->gain == 0.0)
            return cli_usage_error("lut", "--gain: '%s': a number that is not 0 (V at the ADC "
                                   "per V of the junction)", arg);
        a->junction_opt = "--gain";
        break;
    case O_OFFSET: { /* signed: the magnitude in volts after an optional sign; 0V is none */
        const char *mag = arg + (arg[0] == '-' || arg[0] == '+');
        double v = 0.0;
        if (strcmp(mag, "0V") != 0 && bg_units_parse_si(mag, "V", &v, &err) != BG_OK)
            return cli_usage_error("lut", "--offset: %s (a signed voltage: -0.1V, 25mV, 0V)",
                                   err.msg);
        ci->offset_v = arg[0] == '-' ? -v : v;
        a->junction_opt = "--offset";
        break;
    }
    case O_DBITS:
        ci->adc_bits = (unsigned)strtoul(arg, &end, 10);
        if (*end || end == arg || ci->adc_bits < 8 || ci->adc_bits > 24)
            return cli_usage_error("lut", "--device-bits: '%s': 8 .. 24", arg);
        a->device_opt = "--device-bits", a->dbits_set = 1;
        break;
    default: /* O_DLSB */
        if (bg_units_parse_tdiff(arg, &ci->device_lsb, &err) != BG_OK)
            return cli_usage_error("lut", "--device-lsb: %s", err.msg);
        a->device_opt = "--device-lsb";
        break;
    }
    return BG_OK;
}

/* An option of the circuit (--fixed ... --ohms-input). */
static int circuit_option(struct lut_args *a, int c, const char *arg)
{
    bg_circuit *ci = &a->rq.spec.circuit;
    bg_error err = BG_ERROR_INIT;
    char *end;
    double v;
    switch (c) {
    case O_FIXED: case O_PAR: case O_SER:
        if (bg_units_parse_ohms(arg, &v, &err) != BG_OK)
            return cli_usage_error("lut", "--%s: %s", c == O_FIXED ? "fixed" :
                                   c == O_PAR ? "parallel" : "series", err.msg);
        *(c == O_FIXED ? &ci->fixed_ohm : c == O_PAR ? &ci->parallel_ohm : &ci->series_ohm) = v;
        a->resist_opt = c == O_FIXED ? "--fixed" : c == O_PAR ? "--parallel" : "--series";
        break;
    case O_SIDE:
        if (bg_circuit_side_parse(arg, &ci->kind, &err) != BG_OK)
            return cli_usage_error("lut", "--sensor-side: %s", err.msg);
        a->side_set = 1, a->resist_opt = "--sensor-side";
        break;
    case O_BITS:
        ci->adc_bits = (unsigned)strtoul(arg, &end, 10);
        if (*end || ci->adc_bits < 8 || ci->adc_bits > 24)
            return cli_usage_error("lut", "--adc-bits: '%s': 8 .. 24", arg);
        a->bits_set = 1;
        break;
    case O_FS:
        if (bg_circuit_full_scale_parse(arg, &ci->full_scale_pow2, &err) != BG_OK)
            return cli_usage_error("lut", "--full-scale: %s", err.msg);
        a->fs_set = 1;
        break;
    case O_CUR: case O_VREF: case O_OPC:
        if ((c == O_OPC ? bg_units_parse_ohms(arg, &v, &err)
                        : bg_units_parse_si(arg, c == O_CUR ? "A" : "V", &v, &err)) != BG_OK)
            return cli_usage_error("lut", "--%s: %s", c == O_CUR ? "current" : c == O_VREF ?
                                   "vref" : "ohms-per-code", err.msg);
        *(c == O_CUR ? &ci->current_a : c == O_VREF ? &ci->vref_v : &ci->ohms_per_code) = v;
        a->current |= c != O_OPC;
        a->cur_set |= c == O_CUR, a->vref_set |= c == O_VREF;
        if (c == O_OPC)
            a->resist_opt = "--ohms-per-code";
        break;
    case O_OHMSIN: a->ohms_in = 1, a->resist_opt = "--ohms-input"; break;
    default: return front_option(a, c, arg);
    }
    return BG_OK;
}

/* An option of the table's shape: --range, --step, --max-error, --resolution, --strategy. */
static int shape_option(struct lut_args *a, int c, const char *arg)
{
    bg_lut_spec *s = &a->rq.spec;
    bg_error err = BG_ERROR_INIT;
    char *end;
    switch (c) {
    case O_RANGE:
        if (parse_range(arg, &s->t_lo_k, &s->t_hi_k, &err) != BG_OK)
            return cli_usage_error("lut", "--range: %s", err.msg);
        a->have_range = 1;
        break;
    case O_STEP:
        a->step = strtol(arg, &end, 10);
        if (*end || a->step < 1 || a->step > 4096 || (a->step & (a->step - 1)))
            return cli_usage_error("lut", "--step: '%s': a power of two from 1 to 4096 "
                                   "codes", arg);
        break;
    case O_MAXERR:
        if (bg_units_parse_tdiff(arg, &a->rq.max_err_k, &err) != BG_OK)
            return cli_usage_error("lut", "--max-error: %s", err.msg);
        break;
    case O_RES:
        if (bg_lut_format_parse(arg, &s->format, &s->qbits, &err) != BG_OK)
            return cli_usage_error("lut", "--resolution: %s", err.msg);
        break;
    default: { /* O_STRAT */
        bg_lut_strategy st;
        if (bg_lut_strategy_parse(arg, &st, &err) != BG_OK)
            return cli_usage_error("lut", "--strategy: %s", err.msg);
        a->rq.strategy = (int)st;
        break;
    }
    }
    return BG_OK;
}

/* The other options: the model's source, the output and the budget's terms. */
static int other_option(struct lut_args *a, int c, const char *arg)
{
    bg_budget_opts *bo = &a->rq.budget;
    bg_error err = BG_ERROR_INIT;
    switch (c) {
    case O_FIT:
        if (cli_parse_id(arg, &a->rq.fit_id) != BG_OK)
            return cli_usage_error("lut", "--fit: '%s': not a fit id (a whole number from 1 "
                                   "to 9223372036854775807)", arg);
        break;
    case O_PROBE: a->probe = arg; break;
    case O_REPORT: a->report = arg; break;
    case O_STAMP: a->rq.spec.stamp = bg_time_format(cli_clock(), a->stamp, sizeof a->stamp); break;
    case O_KELVIN: a->rq.spec.kelvin = 1; break;
    case O_ONCURVE: a->rq.oncurve_count = 1; break;
    case O_OPTIMIZE:
        if (strcmp(arg, "flash") == 0)
            a->rq.spec.optimize = BG_LUT_OPT_FLASH;
        else if (strcmp(arg, "time") == 0)
            a->rq.spec.optimize = BG_LUT_OPT_TIME;
        else if (strncmp(arg, "weighted:", 9) == 0) {
            char *end;
            errno = 0;
            double w = strtod(arg + 9, &end);
            if (end == arg + 9 || *end || errno || !(w >= 0.0) || !isfinite(w))
                return cli_usage_error("lut", "--optimize weighted:W: W is the bytes one cycle "
                                       "(or instruction) is worth, a number >= 0, not '%s'",
                                       arg + 9);
            a->rq.spec.optimize = BG_LUT_OPT_WEIGHTED, a->rq.spec.time_weight = w;
        } else
            return cli_usage_error("lut", "--optimize: say flash, time or weighted:W");
        a->optimize_set = 1;
        break;
    case O_TARGET:
        if (bg_lut_target_parse(arg, &a->rq.spec.target, &err) != BG_OK)
            return cli_usage_error("lut", "--target: %s", err.msg);
        break;
    case O_FORMAT: case O_JSON:
        if (c == O_JSON)
            arg = "json";
        if (strcmp(arg, "c") && strcmp(arg, "csv") && strcmp(arg, "json") &&
            strcmp(arg, "codes"))
            return cli_usage_error("lut", "--format: say c, csv, json or codes");
        if (a->format_set && strcmp(a->format, arg) != 0)
            return cli_usage_error("lut", "two output formats asked for (%s and %s): give "
                                   "one", a->format, arg);
        a->format = arg, a->format_set = 1;
        break;
    case O_SYMBOL: a->symbol = arg, a->symbol_set = 1; break;
    case O_OUT: a->out_path = arg; break;
    case O_EXTRA: a->rq.allow_extrapolation = 1; break;
    case O_BAT:
        if (cli_parse_temps(arg, a->bat, 16, &a->rq.nbudget_at, &err) != BG_OK)
            return cli_usage_error("lut", "--budget-at: %s", err.msg);
        a->rq.budget_at_k = a->bat;
        break;
    case O_FTOL:
        if (bg_units_parse_fraction(arg, &bo->fixed_tol, &err) != BG_OK)
            return cli_usage_error("lut", "--fixed-tol: %s", err.msg);
        break;
    case O_COVK: {
        char *end;
        double k = strtod(arg, &end);
        if (end == arg || *end || !(k > 0.0 && k < 100.0))
            return cli_usage_error("lut", "--coverage-k: '%s': give a coverage factor such as "
                                   "2", arg);
        a->rq.coverage = bg_coverage_default();
        a->rq.coverage.k_fixed = k;
        break;
    }
    case O_EXC:
        return cli_usage_error("lut", "--excitation is now --supply: the divider's supply "
                               "voltage with its unit, e.g. --supply 3.3V");
    default: /* O_SUPPLY, O_DISS */
        if (bg_units_parse_si(arg, c == O_SUPPLY ? "V" : "W/K", c == O_SUPPLY ?
                              &bo->excitation_v : &bo->dissipation_w_per_k, &err) != BG_OK)
            return cli_usage_error("lut", "--%s: %s", c == O_SUPPLY ? "supply" : "dissipation",
                                   err.msg);
        break;
    }
    return BG_OK;
}

/* Whether the options make one table from one model in one circuit; sets the circuit's kind. */
static int check_args(struct lut_args *a)
{
    bg_circuit *ci = &a->rq.spec.circuit;
    bg_error err = BG_ERROR_INIT;
    if ((a->rq.fit_id != 0) + (a->probe != NULL) + cli_inline_given(&a->in) != 1)
        return cli_usage_error("lut", "give one of --fit, --probe or a model (--model ...)");
    if (!a->have_range)
        return cli_usage_error("lut", "--range T1:T2 is required");
    if ((a->step > 0) == isfinite(a->rq.max_err_k))
        return cli_usage_error("lut", "give --step or --max-error");
    if (a->current + a->ohms_in + (ci->fixed_ohm > 0.0 || a->side_set) +
        (a->device_opt != NULL) != 1)
        return cli_usage_error("lut", "give one circuit: --fixed (divider), --current and "
                               "--vref (or --vref alone for a junction), --ohms-input, or "
                               "--device-bits (an IC sensor's readout)");
    (void)err;
    return BG_OK;
}

static int lut_parse_args(int argc, char **argv, const struct cli_ctx *ctx, struct lut_args *a)
{
    bg_lut_spec *s = &a->rq.spec;
    int c, rc;
    memset(a, 0, sizeof *a);
    cli_inline_init(&a->in);
    s->circuit.kind = BG_CIRCUIT_DIVIDER_LOW, s->circuit.adc_bits = 12;
    s->circuit.full_scale_pow2 = 1, s->circuit.ohms_per_code = 1.0;
    s->format = BG_LUT_CENTI;
    a->rq.max_err_k = NAN, a->rq.strategy = -1, a->step = -1;
    a->format = "c", a->symbol = "ntc";
    opterr = 0;
    while ((c = getopt_long(argc, argv, ":ho:", lut_opts, NULL)) != -1) {
        switch (c) {
        case 'h': a->help = 1; return BG_OK;
        case ':': return cli_usage_error("lut", "option '%s' needs a value", argv[optind - 1]);
        case CLI_IN_MODEL: case CLI_IN_COEF: case CLI_IN_R25: case CLI_IN_BETA: case CLI_IN_T0:
        case CLI_IN_PARAM:
            rc = cli_inline_option(&a->in, c, optarg, "lut");
            break;
        case O_FIXED: case O_SIDE: case O_PAR: case O_SER: case O_BITS: case O_FS: case O_CUR:
        case O_VREF: case O_OHMSIN: case O_OPC: case O_LEADS: case O_GAIN: case O_OFFSET:
        case O_DBITS: case O_DLSB:
            rc = circuit_option(a, c, optarg);
            break;
        case O_RANGE: case O_STEP: case O_MAXERR: case O_RES: case O_STRAT:
            rc = shape_option(a, c, optarg);
            break;
        default:
            if (c != 'o' && !(c >= O_FIT && c <= O_ONCURVE))
                return cli_unknown_option("lut", argv[optind - 1], lut_opts);
            rc = other_option(a, c == 'o' ? O_OUT : c, optarg);
            break;
        }
        if (rc != BG_OK)
            return rc;
    }
    if (optind < argc)
        return cli_usage_error("lut", "unexpected argument '%s'", argv[optind]);
    /* the global --json is --format json, as for every command with JSON output */
    if (ctx->json && (rc = other_option(a, O_JSON, NULL)) != BG_OK)
        return rc;
    return check_args(a);
}

/* The model: a stored fit (--fit, or the probe's current fit) or the inline one. */
static int resolve_model(struct lut_args *a, struct cli_ctx *ctx)
{
    bg_lut_request *rq = &a->rq;
    bg_error err = BG_ERROR_INIT;
    int rc = BG_OK;
    if (!rq->fit_id && !a->probe)
        return cli_inline_model(&a->in, "lut", &rq->spec.model);
    bg_store *st = NULL;
    if ((rc = cli_open_store(ctx, 0, &st)) != BG_OK)
        return rc;
    rc = cli_stored_fit(st, a->probe, rq->fit_id, "lut", &a->fit, &a->used, &err);
    bg_store_close(st);
    if (rc != BG_OK)
        return cli_fail("lut", &err);
    rq->fit_id = a->fit.id;
    rq->fit_started_at = a->used.started_at, rq->fit_current = a->used.current;
    rq->spec.model = a->fit.model;
    rq->fit_run_id = a->fit.run_id, rq->fit_serial = a->fit.serial;
    rq->fit_cov = a->fit.has_cov ? a->fit.cov : NULL;
    rq->fit_dof = a->fit.dof;
    rq->fit_t_min_k = a->fit.t_min_k, rq->fit_t_max_k = a->fit.t_max_k;
    return BG_OK;
}

/* A front end that does not go with the model's kind: a usage error (64) for a model given
** inline, a data error (65) for a stored fit, whose kind the data decided. */
static int mismatch(const struct lut_args *a, const char *fmt, ...) BG_PRINTF(2, 3);
static int mismatch(const struct lut_args *a, const char *fmt, ...)
{
    char msg[400];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    if (!a->rq.fit_id)
        return cli_usage_error("lut", "%s", msg);
    bg_error err = BG_ERROR_INIT;
    bg_error_set(&err, BG_EINVAL, "fit %lld: %s", a->rq.fit_id, msg);
    return cli_fail("lut", &err);
}

/* The front end for the model's quantity: the resistance circuits for a resistance sensor,
** the junction front end for volts, the device readout for an IC sensor; the options of the
** others refused by name. */
static int front_end(struct lut_args *a)
{
    bg_circuit *ci = &a->rq.spec.circuit;
    const bg_model *m = &a->rq.spec.model;
    bg_quantity q = bg_model_quantity(m);
    char name[24];
    const char *what = bg_quantity_column(q);
    bg_error err = BG_ERROR_INIT;
    bg_model_name(m, name, sizeof name);
    if (q == BG_QTY_RESISTANCE) {
        if (a->junction_opt || a->device_opt)
            return mismatch(a, "%s: model %s reads a resistance (ohms): its front end is a "
                            "divider, a current source or --ohms-input, not this option",
                            a->junction_opt ?
                            a->junction_opt : a->device_opt, name);
        if (a->current) {
            if (!(ci->current_a > 0.0 && ci->vref_v > 0.0))
                return cli_usage_error("lut", "a current source needs --current and --vref");
            ci->kind = BG_CIRCUIT_CURRENT;
        } else if (a->ohms_in)
            ci->kind = BG_CIRCUIT_OHMS;
    } else if (q == BG_QTY_VOLTAGE) {
        if (a->resist_opt || a->device_opt || a->rq.budget.fixed_tol > 0.0 ||
            a->rq.budget.excitation_v > 0.0)
            return mismatch(a, "%s: model %s reads a junction's %s: its front end is --vref with "
                            "--gain, --offset and --current (the bias), not this option",
                            a->resist_opt ? a->resist_opt :
                            a->device_opt ? a->device_opt : a->rq.budget.fixed_tol > 0.0 ?
                            "--fixed-tol" : "--supply", name, what);
        if (!a->vref_set)
            return mismatch(a, "model %s reads a junction's volts: the junction front end "
                            "needs --vref (the ADC's reference)", name);
        ci->kind = BG_CIRCUIT_JUNCTION;
        if (ci->gain == 0.0) /* not given (--gain refuses 0): unity, as --help says */
            ci->gain = 1.0;
    } else {
        const char *bad = a->resist_opt ? a->resist_opt : a->junction_opt ? a->junction_opt :
                          a->current ? (a->cur_set ? "--current" : "--vref") :
                          a->bits_set ? "--adc-bits" : a->fs_set ? "--full-scale" :
                          a->rq.budget.fixed_tol > 0.0 ? "--fixed-tol" :
                          a->rq.budget.excitation_v > 0.0 ? "--supply" :
                          a->rq.budget.dissipation_w_per_k > 0.0 ? "--dissipation" : NULL;
        if (bad)
            return mismatch(a, "%s: model %s reads an IC sensor's %s: its readout is "
                            "--device-bits (and --device-lsb for a reported temperature), not "
                            "this option", bad, name, what);
        if (!a->dbits_set)
            return mismatch(a, "model %s reads an IC sensor's %s: give --device-bits, the width "
                            "of the device's two's-complement word", name, what);
        if (q == BG_QTY_REPORTED_T && !(ci->device_lsb > 0.0))
            return mismatch(a, "model %s reads a reported temperature: give --device-lsb, the "
                            "degrees per count of the device's word (0.0625C)", name);
        if (q == BG_QTY_CODE) {
            if (ci->device_lsb > 0.0)
                return mismatch(a, "--device-lsb: model %s reads the device's code and holds "
                                "its LSB itself (--param lsb_k=...)", name);
            ci->device_lsb = 1.0;
        }
        ci->kind = BG_CIRCUIT_DEVICE;
    }
    if (bg_circuit_check_for(ci, m, &err) != BG_OK)
        return mismatch(a, "%s", err.msg);
    if (!a->symbol_set) /* the default name: ntc for an NTC thermistor's table, as before */
        a->symbol = q == BG_QTY_RESISTANCE && bg_model_direction(m) < 0 ? "ntc" : "tsens";
    return BG_OK;
}

/* The table report (not stored): error at every code and the budget, as HTML. */
static int write_report(const char *path, const bg_lut_result *r)
{
    bg_error err = BG_ERROR_INIT;
    char now[BG_TIME], *html = NULL;
    size_t len = 0;
    bg_report_head h = { 0, bg_time_format(cli_clock(), now, sizeof now), NULL, NULL, 0, NULL,
                         NULL };
    int rc = bg_report_render(bg_report_kind_find("table"), r, &h, &html, &len, &err);
    if (rc != BG_OK)
        return cli_fail("lut", &err);
    struct cli_out out;
    if ((rc = cli_out_open(&out, path, "lut")) == BG_OK) {
        fwrite(html, 1, len, out.f); /* an error shows in the commit */
        rc = cli_out_commit(&out, "lut");
    }
    free(html);
    return rc;
}

/* Every ADC code of the converter and what the emitted function returns for it (the
** sentinel outside the range), computed by the library: the reference a port of the table
** to a target is checked against, code for code. */
static void print_codes(const bg_lut_result *r, FILE *f)
{
    const bg_lut *t = &r->table;
    char vu[48];
    /* a resistance input has no converter width: its codes up to one past the range */
    long n = r->spec.circuit.kind == BG_CIRCUIT_OHMS ? t->code_hi + 2
                                                      : 1L << r->spec.circuit.adc_bits;
    static const char *where[] = { "in", "below", "above" };
    fprintf(f, "# generated by bandgap %s; %s table; what the emitted lookup returns for every "
               "code 0 .. %ld, in %s (status below/above: the sentinel)%s%s\n", bg_version(),
            bg_lut_strategy_name(t->strategy), n - 1, bg_lut_value_unit(&r->spec, vu, sizeof vu),
            r->spec.stamp ? "; generated at " : "", r->spec.stamp ? r->spec.stamp : "");
    fputs("code,value,status\n", f);
    for (long c = 0; c < n; c++) {
        int st = BG_LUT_OK;
        if (t->format == BG_LUT_FLOAT) {
            float v = bg_lut_eval_float(t, c, &st);
            fprintf(f, "%ld,%.9g,%s\n", c, (double)v, where[st]);
        } else {
            int32_t v = bg_lut_eval(t, c, &st);
            if (st != BG_LUT_OK) /* the emitted sentinels: the extreme int32_t values */
                v = st == BG_LUT_BELOW ? INT32_MIN : INT32_MAX;
            fprintf(f, "%ld,%ld,%s\n", c, (long)v, where[st]);
        }
    }
}

/* The table in its format to -o FILE or standard output, then the summary and budget. */
static int write_table(const struct lut_args *a, const bg_lut_result *r)
{
    bg_error err = BG_ERROR_INIT;
    struct cli_out out;
    FILE *f;
    int rc = a->out_path ? cli_out_open(&out, a->out_path, "lut") : BG_OK;
    if (rc != BG_OK)
        return rc;
    f = a->out_path ? out.f : stdout;
    if (strcmp(a->format, "c") == 0)
        rc = bg_lut_emit_c(&r->table, &r->spec, a->symbol, bg_version(), f, &err);
    else if (strcmp(a->format, "csv") == 0)
        lut_print_csv(r, f);
    else if (strcmp(a->format, "codes") == 0)
        print_codes(r, f);
    else
        lut_print_json(r, f);
    if (rc != BG_OK) {
        if (a->out_path)
            cli_out_discard(&out);
        return cli_fail("lut", &err);
    }
    if (a->out_path && (rc = cli_out_commit(&out, "lut")) != BG_OK)
        return rc;
    /* the summary and budget: on standard output when the table went to a file */
    if (strcmp(a->format, "json") != 0 || a->out_path)
        lut_print_summary(r, a->out_path ? "" : "bandgap: lut: ",
                          a->out_path ? stdout : stderr);
    return BG_OK;
}

int cmd_lut(int argc, char **argv, struct cli_ctx *ctx)
{
    struct lut_args a;
    bg_lut_result r = BG_LUT_RESULT_INIT;
    bg_error err = BG_ERROR_INIT;
    int rc = lut_parse_args(argc, argv, ctx, &a);
    if (rc != BG_OK)
        return rc;
    if (a.help) {
        fputs(lut_usage, stdout);
        return BG_OK;
    }
    if ((rc = resolve_model(&a, ctx)) != BG_OK || (rc = front_end(&a)) != BG_OK)
        return rc;
    if (a.step > 0 && a.rq.strategy > BG_LUT_UNIFORM)
        return cli_usage_error("lut", "--step is for the uniform strategy; the others take "
                               "--max-error");
    if (a.optimize_set && (a.step > 0 || a.rq.strategy == BG_LUT_UNIFORM))
        return cli_usage_error("lut", "--optimize is for the automatic choice (and the minimal "
                               "and indexed tables' forms): give --max-error without --strategy "
                               "or --step");
    if (a.optimize_set && a.rq.spec.target == BG_LUT_HOST && a.rq.spec.optimize != BG_LUT_OPT_FLASH)
        return cli_usage_error("lut", "--optimize %s needs --target avr, cortex-m0 or cortex-m4: "
                               "times are measured on those cores, not on the host",
                               a.rq.spec.optimize == BG_LUT_OPT_TIME ? "time" : "weighted");
    a.rq.step_codes = a.step > 0 ? a.step : 0;
    a.rq.error_curve = a.report != NULL;
    if (bg_lut_make(&a.rq, &r, &err) != BG_OK)
        return cli_fail("lut", &err);
    rc = a.report ? write_report(a.report, &r) : BG_OK;
    if (rc == BG_OK)
        rc = write_table(&a, &r);
    bg_lut_result_release(&r);
    return rc;
}
