/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap lot add|list|show: production lots with their nominal curve and tolerances. */
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

static const char lot_usage[] =
    "Usage: bandgap lot add CODE --part P --r25 OHMS --beta K [--pair T1/T2]\n"
    "                   --tol-r25 PCT --tol-beta PCT [--note TEXT]\n"
    "       bandgap lot list [--json]\n"
    "       bandgap lot show CODE [--json]\n"
    "A production lot: part number, nominal R25 and B (for the pair, default 25/85 degC)\n"
    "and their tolerances (1% or 0.01).  Codes are stored exactly as given.\n";

static void lot_json(json_out *j, const char *key, const bg_lot *l)
{
    json_obj(j, key);
    json_int(j, "id", l->id);
    json_str(j, "code", l->code);
    json_str(j, "part", l->part);
    json_num(j, "r25_ohm", l->r25_ohm);
    json_num(j, "beta_k", l->beta_k);
    json_num(j, "pair_t1_k", l->pair_t1_k);
    json_num(j, "pair_t2_k", l->pair_t2_k);
    json_num(j, "tol_r25", l->tol_r25);
    json_num(j, "tol_beta", l->tol_beta);
    json_str(j, "note", l->note[0] ? l->note : NULL);
    json_str(j, "created_at", l->created_at);
    json_int(j, "probes", l->nprobes);
    json_obj_end(j);
}

static void lot_text(const bg_lot *l)
{
    char b1[64], b2[64], r[64];
    bg_units_format_temp(l->pair_t1_k, BG_UNIT_C, 2, b1, sizeof b1);
    bg_units_format_temp(l->pair_t2_k, BG_UNIT_C, 2, b2, sizeof b2);
    printf("%-16s part %s, R25 %s ohm +-%.3g %%, B(%s / %s) %.2f K +-%.3g %%, %lld probes\n",
           l->code, l->part, bg_units_format_ohms(l->r25_ohm, 6, r, sizeof r),
           100.0 * l->tol_r25, b1, b2, l->beta_k, 100.0 * l->tol_beta, l->nprobes);
}

struct list_ctx { json_out *j; size_t n; };

static int list_one(const bg_lot *l, void *p)
{
    struct list_ctx *lc = p;
    if (lc->j)
        lot_json(lc->j, NULL, l);
    else
        lot_text(l);
    lc->n++;
    return 0;
}

static int probe_line(const bg_probe *p, void *ctx)
{
    json_out *j = ctx;
    if (j) {
        json_obj(j, NULL);
        json_str(j, "serial", p->serial);
        json_int(j, "runs", p->nruns);
        json_int(j, "fits", p->nfits);
        json_obj_end(j);
    } else
        printf("  probe %-20s %lld runs, %lld fits\n", p->serial, p->nruns, p->nfits);
    return 0;
}

int cmd_lot(int argc, char **argv, struct cli_ctx *ctx)
{
    enum { O_PART = 1, O_R25, O_BETA, O_PAIR, O_TOLR, O_TOLB, O_NOTE, O_JSON };
    static const struct option opts[] = {
        { "part", required_argument, NULL, O_PART }, { "r25", required_argument, NULL, O_R25 },
        { "beta", required_argument, NULL, O_BETA }, { "pair", required_argument, NULL, O_PAIR },
        { "tol-r25", required_argument, NULL, O_TOLR },
        { "tol-beta", required_argument, NULL, O_TOLB },
        { "note", required_argument, NULL, O_NOTE }, { "json", no_argument, NULL, O_JSON },
        { "help", no_argument, NULL, 'h' },          { NULL, 0, NULL, 0 },
    };
    bg_error err = BG_ERROR_INIT;
    bg_lot lot;
    bg_store *st = NULL;
    int c, rc, have_r25 = 0, have_beta = 0, have_tr = 0, have_tb = 0;
    char *end;

    memset(&lot, 0, sizeof lot);
    lot.pair_t1_k = 298.15, lot.pair_t2_k = 358.15;
    opterr = 0;
    while ((c = getopt_long(argc, argv, ":h", opts, NULL)) != -1) {
        switch (c) {
        case 'h': fputs(lot_usage, stdout); return BG_OK;
        case O_PART: snprintf(lot.part, sizeof lot.part, "%s", optarg); break;
        case O_R25:
            if (bg_units_parse_ohms(optarg, &lot.r25_ohm, &err) != BG_OK)
                return cli_usage_error("lot", "--r25: %s", err.msg);
            have_r25 = 1;
            break;
        case O_BETA:
            lot.beta_k = strtod(optarg, &end);
            if (*end || !(lot.beta_k > 0.0) || !isfinite(lot.beta_k))
                return cli_usage_error("lot", "--beta: '%s': expected B in K > 0", optarg);
            have_beta = 1;
            break;
        case O_PAIR:
            if (bg_model_parse_pair(optarg, &lot.pair_t1_k, &lot.pair_t2_k, &err) != BG_OK)
                return cli_usage_error("lot", "--pair: %s", err.msg);
            break;
        case O_TOLR: case O_TOLB:
            if (bg_units_parse_fraction(optarg, c == O_TOLR ? &lot.tol_r25 : &lot.tol_beta,
                                        &err) != BG_OK)
                return cli_usage_error("lot", "--%s: %s", c == O_TOLR ? "tol-r25" : "tol-beta",
                                       err.msg);
            *(c == O_TOLR ? &have_tr : &have_tb) = 1;
            break;
        case O_NOTE:
            if (strlen(optarg) >= sizeof lot.note)
                return cli_usage_error("lot", "--note is longer than %zu bytes",
                                       sizeof lot.note - 1);
            snprintf(lot.note, sizeof lot.note, "%s", optarg);
            break;
        case O_JSON: ctx->json = 1; break;
        case ':': return cli_usage_error("lot", "option '%s' needs a value", argv[optind - 1]);
        default: return cli_usage_error("lot", "unknown option '%s'", argv[optind - 1]);
        }
    }
    if (optind >= argc)
        return cli_usage_error("lot", "say add, list or show");
    const char *verb = argv[optind];
    if (strcmp(verb, "add") == 0) {
        if (optind + 2 != argc)
            return cli_usage_error("lot", "add takes one lot code");
        if (strlen(argv[optind + 1]) >= sizeof lot.code)
            return cli_usage_error("lot", "lot code is longer than %zu bytes",
                                   sizeof lot.code - 1);
        snprintf(lot.code, sizeof lot.code, "%s", argv[optind + 1]);
        if (!lot.part[0] || !have_r25 || !have_beta || !have_tr || !have_tb)
            return cli_usage_error("lot", "add needs --part, --r25, --beta, --tol-r25 and "
                                   "--tol-beta");
        if ((rc = cli_open_store(ctx, 0, &st)) != BG_OK)
            return rc;
        long long id;
        rc = bg_store_lot_add(st, &lot, &id, &err);
        if (rc == BG_OK) {
            if (ctx->json) {
                json_out j;
                json_begin(&j, stdout);
                json_obj(&j, NULL);
                json_int(&j, "id", id);
                json_str(&j, "code", lot.code);
                json_obj_end(&j);
                json_end(&j);
            } else
                printf("added lot %s (id %lld)\n", lot.code, id);
        } else
            cli_fail("lot add", &err);
        bg_store_close(st);
        return rc;
    }
    if (strcmp(verb, "list") == 0 || strcmp(verb, "show") == 0) {
        int show = verb[0] == 's';
        json_out j;
        struct list_ctx lc = { ctx->json ? &j : NULL, 0 };
        if (optind + (show ? 2 : 1) != argc)
            return cli_usage_error("lot", show ? "show takes one lot code"
                                               : "list takes no arguments");
        if ((rc = cli_open_store(ctx, 0, &st)) != BG_OK)
            return rc;
        if (ctx->json)
            json_begin(&j, stdout);
        if (show)
            rc = bg_store_lot_get(st, argv[optind + 1], &lot, &err);
        if (show && rc == BG_OK && ctx->json) {
            json_obj(&j, NULL);
            lot_json(&j, "lot", &lot);
            json_arr(&j, "probes");
            rc = bg_store_probe_each(st, lot.code, probe_line, &j, &err);
            json_arr_end(&j);
            json_obj_end(&j);
            json_end(&j);
        } else if (show && rc == BG_OK) {
            lot_text(&lot);
            if (lot.note[0])
                printf("  note: %s\n", lot.note);
            rc = bg_store_probe_each(st, lot.code, probe_line, NULL, &err);
        } else if (!show) {
            if (ctx->json)
                json_arr(&j, NULL);
            rc = bg_store_lot_each(st, list_one, &lc, &err);
            if (ctx->json) {
                json_arr_end(&j);
                json_end(&j);
            } else if (rc == BG_OK && lc.n == 0)
                printf("no lots (add one with 'bandgap lot add')\n");
        }
        if (rc != BG_OK)
            cli_fail(show ? "lot show" : "lot list", &err);
        bg_store_close(st);
        return rc;
    }
    return cli_usage_error("lot", "unknown action '%s' (add, list or show)", verb);
}
