/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap export: readings and fits of a probe or a lot, lossless (each number in the shortest
** form that reads back exactly, bg_num_shortest), as one CSV table or one JSON object. */
#include <errno.h>
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

static const char export_usage[] =
    "Usage: bandgap export (--probe SERIAL | --lot CODE) (--csv | --json) [-o FILE]\n"
    "Export every run, reading (with exclusions) and stored fit of a probe or of all probes\n"
    "of a lot.  Each number is written with the fewest digits that read back exactly\n"
    "(at most 17 significant digits: 0.0025, not 0.0025000000000000001).\n"
    "--csv writes one table whose first column 'kind' is 'reading' or 'fit' (the columns\n"
    "that do not apply are empty); --json writes {\"probes\": [...]}.  Missing values are\n"
    "empty in CSV and null in JSON; NaN and infinities are never written.\n";

static const char csv_header[] =
    "kind,probe,lot,run,reading,line,t_raw,t_raw_unit,t_k,ohms,u_temp_k,u_ohms,time,note,"
    "excluded_reason,fit,model,t0_k,c0,c1,c2,c3,c4,c5,n,dof,chi2,rms_mk,max_abs_mk,"
    "t_min_k,t_max_k,created_at,quantity,value,u_value,value_unit\n";

struct ex {
    bg_store *st;
    FILE *out;
    json_out j;
    int json;
    char serial[BG_TEXT], lot[BG_TEXT]; /* the probe being written */
};

static void csv_text(FILE *f, const char *s)
{
    if (s && strpbrk(s, ",\"\n\r")) {
        fputc('"', f);
        for (; *s; s++) {
            if (*s == '"')
                fputc('"', f);
            fputc(*s, f);
        }
        fputc('"', f);
    } else if (s)
        fputs(s, f);
    fputc(',', f);
}

static void csv_num(FILE *f, double v)
{
    char b[CLI_NUM];
    if (isfinite(v))
        fputs(bg_num_shortest(b, sizeof b, v), f);
    fputc(',', f);
}

static int reading_cb(const bg_reading_row *g, void *p)
{
    struct ex *e = p;
    if (e->json) {
        cli_json_reading(&e->j, g);
        return 0;
    }
    FILE *f = e->out;
    csv_text(f, "reading");
    csv_text(f, e->serial);
    csv_text(f, e->lot);
    fprintf(f, "%lld,%lld,%zu,", g->run_id, g->id, g->line);
    csv_num(f, g->t_raw);
    csv_text(f, g->t_raw_unit);
    csv_num(f, g->t_k);
    int ohm = g->quantity == BG_QTY_RESISTANCE; /* other quantities: in value, u_value */
    csv_num(f, ohm ? g->r_ohm : NAN);
    csv_num(f, g->u_t_k);
    csv_num(f, ohm ? g->u_r_ohm : NAN);
    csv_text(f, g->time);
    csv_text(f, g->note);
    csv_text(f, g->excluded ? g->excl_reason : "");
    fputs(",,,,,,,,,,,,,,,,", f); /* the 17 fit columns */
    csv_text(f, bg_store_quantity_name(g->quantity));
    csv_num(f, g->r_ohm);
    csv_num(f, g->u_r_ohm);
    fprintf(f, "%s\n", bg_quantity_unit((bg_quantity)g->quantity));
    return 0;
}

static int run_cb(const bg_run *r, void *p)
{
    struct ex *e = p;
    if (e->json) {
        json_obj(&e->j, NULL);
        cli_json_run_fields(&e->j, r);
        json_arr(&e->j, "readings");
    }
    return 0;
}

static int run_end_cb(const bg_run *r, void *p)
{
    struct ex *e = p;
    (void)r;
    if (e->json) {
        json_arr_end(&e->j);
        json_obj_end(&e->j);
    }
    return 0;
}

static int fit_cb(const bg_fit_row *f, void *p)
{
    struct ex *e = p;
    char name[16];
    bg_model_name(&f->model, name, sizeof name);
    if (e->json) {
        cli_json_fit(&e->j, f, CLI_FIT_COV);
        return 0;
    }
    FILE *o = e->out;
    csv_text(o, "fit");
    csv_text(o, e->serial);
    csv_text(o, e->lot);
    fprintf(o, "%lld,,,,,,,,,,,,%lld,", f->run_id, f->id);
    csv_text(o, name);
    csv_num(o, (bg_model_flags(&f->model) & BG_MODEL_HAS_T0) ? f->model.t0_k : NAN);
    for (size_t i = 0; i < BG_MODEL_MAXPAR; i++)
        csv_num(o, i < f->npar ? f->model.coef[i] : NAN);
    fprintf(o, "%zu,%zu,", f->n, f->dof);
    csv_num(o, f->chi2);
    csv_num(o, f->rms_mk);
    csv_num(o, f->max_abs_mk);
    csv_num(o, f->t_min_k);
    csv_num(o, f->t_max_k);
    fprintf(o, "%s,,,,\n", f->created_at); /* the 4 reading value columns */
    return 0;
}

static int probe_cb(const bg_probe *p, void *ctx)
{
    struct ex *e = ctx;
    snprintf(e->serial, sizeof e->serial, "%s", p->serial);
    snprintf(e->lot, sizeof e->lot, "%s", p->lot_code);
    if (e->json) {
        json_obj(&e->j, NULL);
        json_str(&e->j, "serial", p->serial);
        json_str(&e->j, "lot", p->lot_code);
        json_arr(&e->j, "runs");
    }
    return 0;
}

static int fits_cb(const bg_probe *p, void *ctx)
{
    struct ex *e = ctx;
    (void)p;
    if (e->json) {
        json_arr_end(&e->j);
        json_arr(&e->j, "fits");
    }
    return 0;
}

static int probe_end_cb(const bg_probe *p, void *ctx)
{
    struct ex *e = ctx;
    (void)p;
    if (e->json) {
        json_arr_end(&e->j);
        json_obj_end(&e->j);
    }
    return 0;
}

int cmd_export(int argc, char **argv, struct cli_ctx *ctx)
{
    static const struct option opts[] = {
        { "probe", required_argument, NULL, 'p' }, { "lot", required_argument, NULL, 'l' },
        CLI_OUTPUT_OPTIONS,
        { "output", required_argument, NULL, 'o' }, { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 },
    };
    bg_error err = BG_ERROR_INIT;
    struct ex xs;
    struct cli_out file; /* -o FILE, written whole or not at all */
    struct cli_output out = { 0, 0 };
    enum cli_format fmt;
    const char *serial = NULL, *lot = NULL, *path = NULL;
    int c, rc;

    memset(&xs, 0, sizeof xs);
    opterr = 0;
    while ((c = getopt_long(argc, argv, ":ho:", opts, NULL)) != -1) {
        if (cli_output_option(&out, c))
            continue;
        switch (c) {
        case 'h': fputs(export_usage, stdout); return BG_OK;
        case 'p': serial = optarg; break;
        case 'l': lot = optarg; break;
        case 'o': path = optarg; break;
        case ':': return cli_usage_error("export", "option '%s' needs a value", argv[optind - 1]);
        default: return cli_unknown_option("export", argv[optind - 1], opts);
        }
    }
    if (optind < argc)
        return cli_usage_error("export", "unexpected argument '%s'", argv[optind]);
    if (!serial == !lot)
        return cli_usage_error("export", "give --probe SERIAL or --lot CODE");
    if ((rc = cli_output_choose(&out, ctx, 1, "export", &fmt)) != BG_OK)
        return rc;
    if ((rc = cli_open_store(ctx, 0, &xs.st)) != BG_OK)
        return rc;
    /* an unknown probe or lot is reported before the output is created */
    if (serial) {
        bg_probe p;
        rc = bg_store_probe_get(xs.st, serial, &p, &err);
    } else {
        bg_lot l;
        rc = bg_store_lot_get(xs.st, lot, &l, &err);
    }
    if (rc != BG_OK) {
        cli_fail("export", &err);
        goto done;
    }
    if ((rc = cli_out_open(&file, path, "export")) != BG_OK)
        goto done;
    xs.out = file.f;
    xs.json = fmt == CLI_FMT_JSON;
    if (xs.json) {
        json_begin(&xs.j, xs.out);
        json_obj(&xs.j, NULL);
        json_arr(&xs.j, "probes");
    } else
        fputs(csv_header, xs.out);
    static const bg_export_cbs cbs = { probe_cb, run_cb, reading_cb, run_end_cb, fits_cb,
                                       fit_cb, probe_end_cb };
    if ((rc = bg_store_export_each(xs.st, serial, lot, &cbs, &xs, &err)) != BG_OK)
        cli_fail("export", &err);
    if (xs.json) {
        json_arr_end(&xs.j);
        json_obj_end(&xs.j);
        json_end(&xs.j);
    }
    if (rc != BG_OK)
        cli_out_discard(&file);
    else if (path)
        rc = cli_out_commit(&file, "export");
done:
    bg_store_close(xs.st);
    return rc;
}
