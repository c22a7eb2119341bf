/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap lut: a firmware lookup table (ADC code -> temperature) for a circuit, from a stored
** fit or an inline model, as C99, CSV or JSON, with its error measured over every code. */
#include <errno.h>
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

static const char lut_usage[] =
    "Usage: bandgap lut (--fit N | --probe SERIAL | MODEL OPTIONS) CIRCUIT --range T1:T2\n"
    "                   (--step CODES | --max-error DT) [--resolution 0.1|0.01|0.001] [--kelvin]\n"
    "                   [--format c|csv|json] [--symbol PREFIX] [-o FILE] [--allow-extrapolation]\n"
    "A table of temperatures at breakpoints every CODES codes (a power of two), read with\n"
    "integer linear interpolation; --max-error picks the largest power-of-two step whose\n"
    "error, measured over every code of the range, stays within DT.  Circuit:\n"
    "  --fixed OHMS --sensor-side low|high   divider (low: thermistor between the ADC input\n"
    "                                        and ground), with --parallel OHMS, --series OHMS\n"
    "  --current AMPS --vref VOLTS           constant current, absolute reference\n"
    "  --ohms-input [--ohms-per-code R]      resistance input (default 1 ohm per code)\n"
    "  --adc-bits N (8..24, default 12)  --full-scale pow2|pow2-1 (default pow2)\n"
    "Values are signed integers in --resolution degC (default 0.01), or K with --kelvin;\n"
    "codes outside the range return named sentinels, never a clamped temperature.\n"
    "The reported error is that of the table and its rounding.  The error budget adds, at\n"
    "--budget-at T1,T2,... (default: the ends and middle of the range) and as the worst case\n"
    "over the range: half an LSB of the ADC, the stored fit's U(k=2), the fixed resistor at\n"
    "--fixed-tol PCT, and self-heating at --excitation VOLTS (divider supply) over\n"
    "--dissipation mW/K; combined as root-sum-square and as a worst-case sum.  With a stored\n"
    "fit the range must lie inside the calibrated range unless --allow-extrapolation.\n";

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

int cmd_lut(int argc, char **argv, struct cli_ctx *ctx)
{
    enum { O_FIT = 1, O_PROBE, O_FIXED, O_SIDE, O_PAR, O_SER, O_BITS, O_FS, O_CUR, O_VREF,
           O_OHMSIN, O_OPC, O_RANGE, O_STEP, O_MAXERR, O_RES, O_KELVIN, O_FORMAT, O_SYMBOL,
           O_OUT, O_EXTRA, O_JSON, O_BAT, O_FTOL, O_EXC, O_DISS };
    static const struct option opts[] = {
        CLI_INLINE_OPTIONS,
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
        { "excitation", required_argument, NULL, O_EXC },
        { "dissipation", required_argument, NULL, O_DISS },
        { "json", no_argument, NULL, O_JSON },           { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 },
    };
    bg_error err = BG_ERROR_INIT;
    struct cli_inline in;
    bg_lut_spec s;
    bg_lut t = BG_LUT_INIT;
    const char *probe = NULL, *format = "c", *symbol = "ntc", *out_path = NULL;
    long long fit_id = 0;
    double max_err = NAN, cal_lo = -INFINITY, cal_hi = INFINITY, v;
    long step = -1;
    int c, rc, have_range = 0, allow = 0, side_set = 0, current = 0, ohms_in = 0;
    char *end;
    bg_fit_row fr;
    int have_cov = 0;
    bg_budget_opts bo = { NULL, 0.0, 0.0, 0.0 };
    double bat[16];
    size_t nbat = 0;

    cli_inline_init(&in);
    memset(&s, 0, sizeof s);
    s.circuit.kind = BG_CIRCUIT_DIVIDER_LOW, s.circuit.adc_bits = 12;
    s.circuit.full_scale_pow2 = 1, s.circuit.ohms_per_code = 1.0;
    s.format = BG_LUT_CENTI;
    opterr = 0;
    while ((c = getopt_long(argc, argv, ":ho:", opts, NULL)) != -1) {
        switch (c) {
        case 'h': fputs(lut_usage, stdout); return BG_OK;
        case CLI_IN_MODEL: case CLI_IN_COEF: case CLI_IN_R25: case CLI_IN_BETA: case CLI_IN_T0:
            if ((rc = cli_inline_option(&in, c, optarg, "lut")) != BG_OK)
                return rc;
            break;
        case O_FIT:
            if (cli_parse_id(optarg, &fit_id) != BG_OK)
                return cli_usage_error("lut", "--fit: '%s': not a fit id", optarg);
            break;
        case O_PROBE: probe = optarg; break;
        case O_FIXED: case O_PAR: case O_SER:
            if (bg_units_parse_ohms(optarg, &v, &err) != BG_OK)
                return cli_usage_error("lut", "--%s: %s", c == O_FIXED ? "fixed" :
                                       c == O_PAR ? "parallel" : "series", err.msg);
            *(c == O_FIXED ? &s.circuit.fixed_ohm : c == O_PAR ? &s.circuit.parallel_ohm
                                                               : &s.circuit.series_ohm) = v;
            break;
        case O_SIDE:
            if (strcmp(optarg, "low") && strcmp(optarg, "high"))
                return cli_usage_error("lut", "--sensor-side: say low or high");
            s.circuit.kind = optarg[0] == 'l' ? BG_CIRCUIT_DIVIDER_LOW : BG_CIRCUIT_DIVIDER_HIGH;
            side_set = 1;
            break;
        case O_BITS:
            s.circuit.adc_bits = (unsigned)strtoul(optarg, &end, 10);
            if (*end || s.circuit.adc_bits < 8 || s.circuit.adc_bits > 24)
                return cli_usage_error("lut", "--adc-bits: '%s': 8 .. 24", optarg);
            break;
        case O_FS:
            if (strcmp(optarg, "pow2") && strcmp(optarg, "pow2-1"))
                return cli_usage_error("lut", "--full-scale: say pow2 or pow2-1");
            s.circuit.full_scale_pow2 = strcmp(optarg, "pow2") == 0;
            break;
        case O_CUR: case O_VREF: case O_OPC:
            v = strtod(optarg, &end);
            if (*end || !(v > 0.0) || !isfinite(v))
                return cli_usage_error("lut", "'%s': expected a number > 0", optarg);
            *(c == O_CUR ? &s.circuit.current_a : c == O_VREF ? &s.circuit.vref_v
                                                              : &s.circuit.ohms_per_code) = v;
            current |= c != O_OPC;
            break;
        case O_OHMSIN: ohms_in = 1; break;
        case O_RANGE:
            if (parse_range(optarg, &s.t_lo_k, &s.t_hi_k, &err) != BG_OK)
                return cli_usage_error("lut", "--range: %s", err.msg);
            have_range = 1;
            break;
        case O_STEP:
            step = strtol(optarg, &end, 10);
            if (*end || step < 1 || step > 4096 || (step & (step - 1)))
                return cli_usage_error("lut", "--step: '%s': a power of two from 1 to 4096 "
                                       "codes", optarg);
            break;
        case O_MAXERR:
            if (bg_units_parse_tdiff(optarg, &max_err, &err) != BG_OK)
                return cli_usage_error("lut", "--max-error: %s", err.msg);
            break;
        case O_RES:
            if (strcmp(optarg, "0.1") == 0) s.format = BG_LUT_DECI;
            else if (strcmp(optarg, "0.01") == 0) s.format = BG_LUT_CENTI;
            else if (strcmp(optarg, "0.001") == 0) s.format = BG_LUT_MILLI;
            else return cli_usage_error("lut", "--resolution: say 0.1, 0.01 or 0.001");
            break;
        case O_KELVIN: s.kelvin = 1; break;
        case O_FORMAT:
            if (strcmp(optarg, "c") && strcmp(optarg, "csv") && strcmp(optarg, "json"))
                return cli_usage_error("lut", "--format: say c, csv or json");
            format = optarg;
            break;
        case O_JSON: format = "json"; break;
        case O_SYMBOL: symbol = optarg; break;
        case 'o': case O_OUT: out_path = optarg; break;
        case O_EXTRA: allow = 1; break;
        case O_BAT:
            if (cli_parse_temps(optarg, bat, 16, &nbat, &err) != BG_OK)
                return cli_usage_error("lut", "--budget-at: %s", err.msg);
            break;
        case O_FTOL:
            if (bg_units_parse_fraction(optarg, &bo.fixed_tol, &err) != BG_OK)
                return cli_usage_error("lut", "--fixed-tol: %s", err.msg);
            break;
        case O_EXC: case O_DISS:
            v = strtod(optarg, &end);
            if (c == O_DISS && strcmp(end, "mW/K") == 0)
                end += 4;
            if (*end || !(v > 0.0) || !isfinite(v))
                return cli_usage_error("lut", "--%s: '%s': expected a number > 0",
                                       c == O_EXC ? "excitation" : "dissipation", optarg);
            if (c == O_EXC)
                bo.excitation_v = v;
            else
                bo.dissipation_w_per_k = v * 1e-3; /* given in mW/K */
            break;
        case ':': return cli_usage_error("lut", "option '%s' needs a value", argv[optind - 1]);
        default: return cli_usage_error("lut", "unknown option '%s'", argv[optind - 1]);
        }
    }
    if (optind < argc)
        return cli_usage_error("lut", "unexpected argument '%s'", argv[optind]);
    if ((fit_id != 0) + (probe != NULL) + cli_inline_given(&in) != 1)
        return cli_usage_error("lut", "give one of --fit, --probe or a model (--model ...)");
    if (!have_range)
        return cli_usage_error("lut", "--range T1:T2 is required");
    if ((step > 0) == isfinite(max_err))
        return cli_usage_error("lut", "give --step or --max-error");
    if (current + ohms_in + (s.circuit.fixed_ohm > 0.0 || side_set) != 1)
        return cli_usage_error("lut", "give one circuit: --fixed (divider), --current and "
                               "--vref, or --ohms-input");
    if (current) {
        if (!(s.circuit.current_a > 0.0 && s.circuit.vref_v > 0.0))
            return cli_usage_error("lut", "a current source needs --current and --vref");
        s.circuit.kind = BG_CIRCUIT_CURRENT;
    } else if (ohms_in)
        s.circuit.kind = BG_CIRCUIT_OHMS;
    if (bg_circuit_check(&s.circuit, &err) != BG_OK)
        return cli_usage_error("lut", "%s", err.msg);
    if (fit_id || probe) {
        bg_store *st = NULL;
        if ((rc = cli_open_store(ctx, 0, &st)) != BG_OK)
            return rc;
        if (probe)
            rc = cli_newest_fit(st, probe, &fit_id, &err);
        if (rc == BG_OK)
            rc = bg_store_fit_get(st, fit_id, &fr, &err);
        bg_store_close(st);
        if (rc != BG_OK)
            return cli_fail("lut", &err);
        s.model = fr.model;
        have_cov = fr.has_cov;
        cal_lo = fr.t_min_k, cal_hi = fr.t_max_k;
        if (!allow && (s.t_lo_k < cal_lo - 1e-9 || s.t_hi_k > cal_hi + 1e-9)) {
            cli_error("lut: the range %.3f .. %.3f degC is outside fit %lld's calibrated range "
                      "%.3f .. %.3f degC (--allow-extrapolation to build it anyway)",
                      s.t_lo_k - BG_ZERO_C_K, s.t_hi_k - BG_ZERO_C_K, fit_id,
                      cal_lo - BG_ZERO_C_K, cal_hi - BG_ZERO_C_K);
            return BG_EINVAL;
        }
    } else if ((rc = cli_inline_model(&in, "lut", &s.model)) != BG_OK)
        return rc;

    if (step > 0) {
        s.shift = 0;
        while ((1L << s.shift) < step)
            s.shift++;
        if ((rc = bg_lut_build(&s, &t, &err)) != BG_OK)
            return cli_fail("lut", &err);
    } else {
        /* the largest power-of-two step within the bound: the error grows with the step */
        double rounding = 0.5 / (s.format == BG_LUT_DECI ? 10.0 : s.format == BG_LUT_CENTI ?
                                 100.0 : 1000.0);
        if (max_err < rounding) {
            cli_error("lut: --max-error %.6g K is below the output's rounding (%.6g K at this "
                      "resolution)", max_err, rounding);
            return BG_EINVAL;
        }
        int found = 0;
        for (int sh = 12; sh >= 0 && !found; sh--) {
            bg_lut cand = BG_LUT_INIT;
            bg_error e2 = BG_ERROR_INIT;
            s.shift = (unsigned)sh;
            if (bg_lut_build(&s, &cand, &e2) != BG_OK) {
                if (sh == 0) {
                    err = e2;
                    return cli_fail("lut", &err);
                }
                continue;
            }
            if (cand.max_err_k <= max_err) {
                t = cand, found = 1;
            } else
                bg_lut_release(&cand);
        }
        if (!found) {
            cli_error("lut: even a breakpoint at every code misses --max-error %.6g K: the ADC "
                      "cannot resolve that here (use more bits or a finer resolution)", max_err);
            return BG_EINVAL;
        }
    }

    /* the error budget: at --budget-at (default the ends and the middle of the range) */
    bg_budget_row brow[16], bworst;
    if (nbat == 0)
        bat[0] = s.t_lo_k, bat[1] = 0.5 * (s.t_lo_k + s.t_hi_k), bat[2] = s.t_hi_k, nbat = 3;
    bo.cov = have_cov ? fr.cov : NULL;
    if ((rc = bg_lut_budget(&s, &t, &bo, bat, nbat, brow, &bworst, &err)) != BG_OK) {
        bg_lut_release(&t);
        return cli_fail("lut", &err);
    }

    FILE *f = out_path ? fopen(out_path, "w") : stdout;
    if (!f) {
        cli_error("lut: cannot create '%s': %s", out_path, strerror(errno));
        bg_lut_release(&t);
        return CLI_ECANTCREAT;
    }
    rc = BG_OK;
    if (strcmp(format, "c") == 0)
        rc = bg_lut_emit_c(&t, &s, symbol, bg_version(), f, &err);
    else if (strcmp(format, "csv") == 0) {
        fprintf(f, "# generated by bandgap %s; breakpoints every %lu codes from code %ld; "
                   "values in %s %s; max error %.6f K, RMS %.6f K over codes %ld .. %ld\n",
                bg_version(), 1ul << t.shift, t.code_lo,
                s.format == BG_LUT_DECI ? "0.1" : s.format == BG_LUT_CENTI ? "0.01" : "0.001",
                s.kelvin ? "K" : "degC", t.max_err_k, t.rms_err_k, t.code_lo, t.code_hi);
        fprintf(f, "index,code,value\n");
        for (size_t i = 0; i < t.n; i++)
            fprintf(f, "%zu,%ld,%ld\n", i, t.code_lo + (long)(i << t.shift), (long)t.y[i]);
    } else {
        json_out j;
        json_begin(&j, f);
        json_obj(&j, NULL);
        json_str(&j, "generator", "bandgap");
        json_str(&j, "version", bg_version());
        json_str(&j, "strategy", "uniform");
        json_int(&j, "entries", (long long)t.n);
        json_int(&j, "step_codes", 1LL << t.shift);
        json_int(&j, "code_lo", t.code_lo);
        json_int(&j, "code_hi", t.code_hi);
        json_num(&j, "counts_per_degree", t.counts_per_k);
        json_bool(&j, "kelvin", s.kelvin);
        json_num(&j, "max_error_c", t.max_err_k);
        json_num(&j, "rms_error_c", t.rms_err_k);
        json_arr(&j, "table");
        for (size_t i = 0; i < t.n; i++)
            json_int(&j, NULL, t.y[i]);
        json_arr_end(&j);
        json_arr(&j, "budget");
        for (size_t i = 0; i <= nbat; i++) {
            const bg_budget_row *b = i < nbat ? &brow[i] : &bworst;
            json_obj(&j, NULL);
            if (i < nbat)
                json_num(&j, "t_k", b->t_k);
            else
                json_str(&j, "at", "worst over the range");
            json_num(&j, "table_k", b->table_k);
            json_num(&j, "adc_k", b->adc_k);
            json_num(&j, "fit_U_k2_k", b->fit_k);
            json_num(&j, "fixed_resistor_k", b->resistor_k);
            json_num(&j, "self_heating_k", b->selfheat_k);
            json_num(&j, "rss_k", b->rss_k);
            json_num(&j, "sum_k", b->sum_k);
            json_obj_end(&j);
        }
        json_arr_end(&j);
        json_obj_end(&j);
        json_end(&j);
    }
    if (out_path && fclose(f) != 0 && rc == BG_OK)
        rc = bg_error_set(&err, BG_EIO, "cannot write '%s'", out_path);
    if (rc != BG_OK)
        cli_fail("lut", &err);
    else if (strcmp(format, "json") != 0 || out_path) {
        /* the summary and budget: on standard output when the table went to a file */
        FILE *b = out_path ? stdout : stderr;
        fprintf(b, "%s%zu entries every %lu codes, max error %.4f K, RMS %.4f K (table and "
                "rounding)\n", out_path ? "" : "bandgap: lut: ", t.n, 1ul << t.shift,
                t.max_err_k, t.rms_err_k);
        fprintf(b, "error budget (K): %10s %8s %8s %10s %10s %10s %8s %8s\n", "T/degC", "table",
                "ADC", "fit U", "resistor", "self-heat", "RSS", "sum");
        for (size_t i = 0; i <= nbat; i++) {
            const bg_budget_row *r = i < nbat ? &brow[i] : &bworst;
            char at[32];
            if (i < nbat)
                snprintf(at, sizeof at, "%10.3f", r->t_k - BG_ZERO_C_K);
            else
                snprintf(at, sizeof at, "%10s", "worst");
            fprintf(b, "                  %s %8.4f %8.4f %10.4f %10.4f %10.4f %8.4f %8.4f\n", at,
                    r->table_k, r->adc_k, r->fit_k, r->resistor_k, r->selfheat_k, r->rss_k,
                    r->sum_k);
        }
        fprintf(b, "(the fit term needs a stored fit; resistor and self-heating need --fixed-tol,"
                " --excitation and --dissipation)\n");
    }
    bg_lut_release(&t);
    return rc;
}
