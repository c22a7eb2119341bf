/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap show run N | fit N: one run with its readings, or one stored fit. */
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

static const char show_usage[] =
    "Usage: bandgap show run N [--json]\n"
    "       bandgap show fit N [--json]\n"
    "A run: its probe, reference, conditions and every reading (raw and corrected, with\n"
    "exclusions).  A fit: model, coefficients with standard uncertainties, covariance,\n"
    "statistics, the readings it used and U(k=2) across its calibrated range.\n";

static int reading_out(const bg_reading_row *g, void *ctx)
{
    json_out *j = ctx;
    if (j) {
        cli_json_reading(j, g);
    } else {
        char rb[32];
        printf("  %8lld %6zu %14.6f %-3s %12.4f %14s %9.4g %9.4g%s%s\n", g->id, g->line,
               g->t_raw, g->t_raw_unit, g->t_k - BG_ZERO_C_K,
               bg_units_format_ohms(g->r_ohm, 8, rb, sizeof rb), g->u_t_k, g->u_r_ohm,
               g->excluded ? "  EXCLUDED: " : "", g->excluded ? g->excl_reason : "");
    }
    return 0;
}

static int show_run(bg_store *st, long long id, struct cli_ctx *ctx, bg_error *err)
{
    bg_run r;
    json_out j;
    int rc = bg_store_run_get(st, id, &r, err);
    if (rc != BG_OK)
        return rc;
    if (ctx->json) {
        json_begin(&j, stdout);
        json_obj(&j, NULL);
        cli_json_run_fields(&j, &r);
        json_arr(&j, "readings");
        rc = bg_store_reading_each(st, id, reading_out, &j, err);
        json_arr_end(&j);
        json_obj_end(&j);
        json_end(&j);
        return rc;
    }
    printf("run %lld of probe %s, started %s, imported %s from %s\n", r.id, r.serial,
           r.started_at, r.imported_at, r.source);
    printf("  reference %s, operator %s, medium %s, ambient %s, excitation %s\n",
           cli_or_dash(r.ref_ident), cli_or_dash(r.operator_name), cli_or_dash(r.medium),
           cli_or_dash(r.ambient), cli_or_dash(r.excitation));
    if (r.note[0])
        printf("  note: %s\n", r.note);
    printf("  %lld readings, %lld excluded, %lld fits\n", r.nreadings, r.nexcluded, r.nfits);
    printf("  %8s %6s %18s %12s %14s %9s %9s\n", "reading", "line", "raw", "T/degC",
           "R/ohm", "u(T)/K", "u(R)/ohm");
    return bg_store_reading_each(st, id, reading_out, NULL, err);
}

static int show_fit(bg_store *st, long long id, struct cli_ctx *ctx, bg_error *err)
{
    bg_fit_row f;
    long long *ids = NULL;
    size_t nids = 0;
    char name[16];
    double ut[9], tt[9];
    int rc = bg_store_fit_get(st, id, &f, err);
    if (rc != BG_OK)
        return rc;
    ids = malloc((f.n ? f.n : 1) * sizeof *ids);
    if (!ids)
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    if ((rc = bg_store_fit_readings(st, id, ids, f.n, &nids, err)) != BG_OK)
        goto done;
    for (int i = 0; i < 9; i++) {
        tt[i] = f.t_min_k + (f.t_max_k - f.t_min_k) * i / 8.0;
        if (!f.has_cov || bg_model_u_t(&f.model, f.cov, tt[i], &ut[i], NULL) != BG_OK)
            ut[i] = NAN;
    }
    bg_model_name(&f.model, name, sizeof name);
    if (ctx->json) {
        json_out j;
        json_begin(&j, stdout);
        json_obj(&j, NULL);
        json_int(&j, "fit_id", f.id);
        json_int(&j, "run_id", f.run_id);
        json_str(&j, "probe", f.serial);
        json_str(&j, "model", name);
        json_arr(&j, "coefficient_names");
        for (size_t i = 0; i < f.npar; i++)
            json_str(&j, NULL, bg_model_coef_name(&f.model, i));
        json_arr_end(&j);
        json_nums(&j, "coefficients", f.model.coef, f.npar);
        if (f.model.kind == BG_MODEL_BETA)
            json_num(&j, "t0_k", f.model.t0_k);
        if (f.has_cov) {
            json_arr(&j, "covariance");
            for (size_t i = 0; i < f.npar; i++)
                json_nums(&j, NULL, &f.cov[i * f.npar], f.npar);
            json_arr_end(&j);
        } else
            json_null(&j, "covariance");
        json_int(&j, "n", (long long)f.n);
        json_int(&j, "dof", (long long)f.dof);
        json_bool(&j, "weighted", f.weighted);
        json_num(&j, "chi2", f.chi2);
        json_num(&j, "cov_scale", f.cov_scale);
        json_num(&j, "rms_mk", f.rms_mk);
        json_num(&j, "max_abs_mk", f.max_abs_mk);
        json_obj(&j, "range");
        json_num(&j, "t_min_k", f.t_min_k);
        json_num(&j, "t_max_k", f.t_max_k);
        json_obj_end(&j);
        json_arr(&j, "uncertainty");
        for (int i = 0; i < 9; i++) {
            json_obj(&j, NULL);
            json_num(&j, "t_k", tt[i]);
            json_num(&j, "u_k", ut[i]);
            json_num(&j, "U_k2", 2.0 * ut[i]);
            json_obj_end(&j);
        }
        json_arr_end(&j);
        json_arr(&j, "readings");
        for (size_t i = 0; i < nids; i++)
            json_int(&j, NULL, ids[i]);
        json_arr_end(&j);
        json_str(&j, "program_version", f.program_version);
        json_str(&j, "created_at", f.created_at);
        json_obj_end(&j);
        json_end(&j);
        goto done;
    }
    printf("fit %lld of probe %s, run %lld, made %s by bandgap %s\n", f.id, f.serial, f.run_id,
           f.created_at, f.program_version);
    printf("model %s%s", name, f.model.kind == BG_MODEL_BETA ? "" : "\n");
    if (f.model.kind == BG_MODEL_BETA)
        printf(", T0 = %.3f degC\n", f.model.t0_k - BG_ZERO_C_K);
    for (size_t i = 0; i < f.npar; i++) {
        double u = f.has_cov ? sqrt(f.cov[i * f.npar + i]) : NAN;
        char ub[32] = "n/a";
        if (isfinite(u))
            snprintf(ub, sizeof ub, "%.2e", u);
        printf("  %-5s = %18.10e   u = %s\n", bg_model_coef_name(&f.model, i), f.model.coef[i],
               ub);
    }
    printf("%zu readings, %zu dof, chi2 %.4g, RMS %.4f mK, max |residual| %.4f mK\n", f.n,
           f.dof, f.chi2, f.rms_mk, f.max_abs_mk);
    printf("calibrated range %.3f .. %.3f degC\n", f.t_min_k - BG_ZERO_C_K,
           f.t_max_k - BG_ZERO_C_K);
    if (f.has_cov) {
        printf("  %12s %12s\n", "T/degC", "U(k=2)/mK");
        for (int i = 0; i < 9; i++)
            printf("  %12.3f %12.4f\n", tt[i] - BG_ZERO_C_K, 2e3 * ut[i]);
    }
    printf("readings used:");
    for (size_t i = 0; i < nids; i++)
        printf(" %lld", ids[i]);
    printf("\n");
done:
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
        return cli_usage_error("show", "unknown option '%s'", argv[optind - 1]);
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
