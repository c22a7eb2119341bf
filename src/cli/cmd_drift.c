/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap drift: as-found drift of a probe between its calibrations, the spread of a lot
** around its nominal curve, and control charts across the lots of a part (computed by
** qa.h); this file parses the options and prints.  Exit status 1 when anything is flagged. */
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

static const char drift_usage[] =
    "Usage: bandgap drift (--probe SERIAL | --lot CODE | --part PART) [--at T1,T2,...]\n"
    "                     [--limit DT] [--rate-limit DT] [--since DATE] [--baseline N]\n"
    "                     [--alpha A] [--csv | --json]\n"
    "--probe: for each calibration after the first, the as-found error a device still using\n"
    "  the previous (and the first) coefficients would show at the check temperatures (five\n"
    "  over the overlap of the two calibrated ranges unless --at), the change of R25 (%) and\n"
    "  of B for the lot's pair, and the drift per year.  Flags: |as-found| above --limit\n"
    "  (default: the part's, else the temperature equivalent of the lot's R25 tolerance at\n"
    "  25 degC) and a drift rate above --rate-limit per year (default: the part's, else the\n"
    "  limit).\n"
    "--lot: for each probe's newest fit, R25, B and the deviation from the part's nominal\n"
    "  curve (bandgap part set; without one the lot's beta curve, whose shape error the\n"
    "  deviation then holds: no verdict) at round check temperatures over the range every\n"
    "  probe covers (or --at); mean, sd, min, max and Cpk against the tolerances; Grubbs'\n"
    "  outlier test (two-sided, --alpha, default 0.05); probes out of tolerance or beyond the\n"
    "  part's tolerance in kelvin; B pairs outside a probe's range (extrapolated, marked *);\n"
    "  the activation energy E = k B; the interchangeability band.  --csv: one row per probe\n"
    "  and check temperature with the lot in each row, so that lots' files stack.\n"
    "--part: X-bar and s charts of the lots' R25 deviation (%) and B, 3-sigma limits from the\n"
    "  first --baseline lots (default: the part's, else all; fewer than 20 lots: provisional),\n"
    "  with the Western Electric run rules.  --csv: one row per lot and chart.\n"
    "--since DATE uses only the runs started on or after DATE.\n"
    "Exit status: 0 when nothing is flagged, 1 when something is, 64/65/66 on errors.\n";

static const char *const rule_names[4] = { "beyond 3 sigma", "2 of 3 beyond 2 sigma",
                                           "4 of 5 beyond 1 sigma", "8 on one side" };

enum { OUT_TEXT, OUT_CSV, OUT_JSON };

/* Where a limit came from; 'dflt' names the built-in default. */
static const char *drift_from(int from, const char *dflt)
{
    return from == BG_QA_FROM_OPTION ? "as given" : from == BG_QA_FROM_PART ? "the part's default"
         : from == BG_QA_FROM_KIND ? "the tolerance of the part's sensor kind at its reference "
                                     "temperature" : dflt;
}

#define DRIFT_LIMIT_DEFAULT "the lot's R25 tolerance at 25 degC"
#define DRIFT_RATE_DEFAULT "the as-found limit"

/* ---------------- one probe ---------------- */

static void compare_json(json_out *j, const bg_qa_probe *p, const bg_qa_compare *c)
{
    const bg_drift *d = &c->d;
    json_obj(j, NULL);
    json_int(j, "from_fit", p->fits[c->from].id);
    json_int(j, "to_fit", p->fits[c->to].id);
    json_str(j, "from_time", p->started_at[c->from]);
    json_str(j, "to_time", p->started_at[c->to]);
    json_num(j, "years", d->years);
    json_nums(j, "at_k", d->at_k, d->nat);
    json_nums(j, "as_found_mk", d->err_mk, d->nat);
    json_num(j, "max_abs_mk", d->max_abs_err_mk);
    json_num(j, "d_r25_pct", d->d_r25_pct);
    json_num(j, "d_b_k", d->d_b_k);
    json_num(j, "rate_mk_per_year", d->rate_mk_per_year);
    json_bool(j, "flag_limit", c->flag_limit);
    json_bool(j, "flag_rate", c->flag_rate);
    json_obj_end(j);
}

static void probe_json(const bg_qa_probe *p)
{
    json_out j;
    json_begin(&j, stdout);
    json_obj(&j, NULL);
    json_str(&j, "probe", p->serial);
    json_str(&j, "lot", p->lot.code);
    json_int(&j, "calibrations", (long long)p->n);
    json_int(&j, "runs_without_fit", (long long)p->unfitted);
    json_num(&j, "limit_mk", 1e3 * p->limit_k);
    json_num(&j, "rate_limit_mk_per_year", 1e3 * p->rate_k);
    json_str(&j, "limit_from", drift_from(p->limit_from, DRIFT_LIMIT_DEFAULT));
    json_str(&j, "rate_limit_from", drift_from(p->rate_from, DRIFT_RATE_DEFAULT));
    json_arr(&j, "since_previous");
    for (size_t i = 0; i < p->nprev; i++)
        compare_json(&j, p, &p->since_previous[i]);
    json_arr_end(&j);
    json_arr(&j, "since_first");
    for (size_t i = 0; i < p->nfirst; i++)
        compare_json(&j, p, &p->since_first[i]);
    json_arr_end(&j);
    json_bool(&j, "flagged", p->flagged);
    json_obj_end(&j);
    json_end(&j);
}

static void compare_csv(const bg_qa_probe *p, const bg_qa_compare *c)
{
    const bg_drift *d = &c->d;
    for (size_t i = 0; i < d->nat; i++)
        printf("%s,%lld,%lld,%.17g,%.17g,%.17g,%.17g,%.17g,%.17g,%d,%d\n", p->serial,
               p->fits[c->from].id, p->fits[c->to].id, d->years, d->at_k[i] - BG_ZERO_C_K,
               d->err_mk[i], d->d_r25_pct, d->d_b_k, d->rate_mk_per_year, c->flag_limit,
               c->flag_rate);
}

static void compare_text(const bg_qa_probe *p, const bg_qa_compare *c)
{
    const bg_drift *d = &c->d;
    printf("  fit %lld (%s) -> fit %lld (%s), %.3f years\n", p->fits[c->from].id,
           p->started_at[c->from], p->fits[c->to].id, p->started_at[c->to], d->years);
    for (size_t i = 0; i < d->nat; i++)
        printf("    %10.3f degC  as-found %+10.3f mK\n", d->at_k[i] - BG_ZERO_C_K, d->err_mk[i]);
    char rate[64] = "drift rate n/a (same date)";
    if (isfinite(d->rate_mk_per_year))
        snprintf(rate, sizeof rate, "drift rate %.3f mK/year", d->rate_mk_per_year);
    if (isnan(d->d_b_k)) /* not an NTC: the reading at 25 degC in its own quantity */
        printf("    max |as-found| %.3f mK, reading at 25 degC %+.4f %%, %s\n",
               d->max_abs_err_mk, d->d_r25_pct, rate);
    else
        printf("    max |as-found| %.3f mK, R25 %+.4f %%, B %+.3f K, %s\n", d->max_abs_err_mk,
               d->d_r25_pct, d->d_b_k, rate);
    if (c->flag_limit)
        printf("    FLAG: |as-found| beyond the limit of %.1f mK\n", 1e3 * c->limit_k);
    if (c->flag_rate)
        printf("    FLAG: drift rate beyond the limit of %.1f mK/year\n", 1e3 * c->rate_k);
}

/* Text and CSV show what was computed before an error too, as far as it got. */
static void probe_text(const bg_qa_probe *p, int csv)
{
    if (csv)
        printf("probe,from_fit,to_fit,years,t_c,as_found_mk,d_r25_pct,d_b_k,rate_mk_per_year,"
               "flag_limit,flag_rate\n");
    else {
        printf("probe %s (lot %s): %zu fitted calibrations", p->serial, p->lot.code, p->n);
        if (p->unfitted)
            printf(", %zu runs not fitted", p->unfitted);
        printf("; limit %.1f mK (%s), rate limit %.1f mK/year (%s)\n", 1e3 * p->limit_k,
               drift_from(p->limit_from, DRIFT_LIMIT_DEFAULT), 1e3 * p->rate_k,
               drift_from(p->rate_from, DRIFT_RATE_DEFAULT));
        if (p->n == 1)
            printf("  only one calibration: nothing to compare yet\n");
        if (p->n == 0)
            printf("  no fitted calibration (bandgap fit --probe %s)\n", p->serial);
    }
    for (size_t i = 0; i < p->nprev; i++)
        csv ? compare_csv(p, &p->since_previous[i]) : compare_text(p, &p->since_previous[i]);
    if (!csv && p->n > 2 && p->nprev == p->n - 1)
        printf("  against the first calibration:\n");
    for (size_t i = 0; i < p->nfirst; i++)
        csv ? compare_csv(p, &p->since_first[i]) : compare_text(p, &p->since_first[i]);
}

static int drift_probe(bg_store *st, const char *serial, const bg_qa_opts *o, int out,
                       int *flagged, bg_error *err)
{
    bg_qa_probe p = BG_QA_PROBE_INIT;
    int rc = bg_qa_probe_drift(st, serial, o, &p, err);
    if (rc == BG_OK && out == OUT_JSON)
        probe_json(&p);
    else if (p.have_history && out != OUT_JSON)
        probe_text(&p, out == OUT_CSV);
    *flagged |= p.flagged;
    bg_qa_probe_release(&p);
    return rc;
}

/* ---------------- one lot ---------------- */

static void stat_json(json_out *j, const char *key, const bg_stats *s, double cpk)
{
    json_obj(j, key);
    json_int(j, "n", (long long)s->n);
    json_num(j, "mean", s->mean);
    json_num(j, "sd", s->sd);
    json_num(j, "min", s->min);
    json_num(j, "max", s->max);
    json_num(j, "cpk", cpk);
    json_obj_end(j);
}

/* The nominal curve a lot was judged against, as JSON. */
static void nominal_json(json_out *j, const bg_qa_lot *l)
{
    char name[32];
    json_obj(j, "nominal");
    if (l->nominal_is_beta) {
        json_str(j, "curve", "beta from the lot's R25 and B");
        json_null(j, "spec_id");
        json_str(j, "note", "the deviation includes the beta model's shape error and is not a "
                            "verdict");
    } else if (l->sensor != BG_PART_NTC && !l->spec.have_model) {
        json_str(j, "curve", l->sensor == BG_PART_PRT ? "IEC 60751 with the part's R0" :
                             l->sensor == BG_PART_IC ? "the part's nominal correction" :
                             "linear through the part's nominal value and slope");
        json_int(j, "spec_id", l->spec.id);
        json_str(j, "spec_created_at", l->spec.created_at);
    } else {
        json_str(j, "curve", bg_model_name(&l->spec.model, name, sizeof name));
        json_int(j, "spec_id", l->spec.id);
        json_str(j, "spec_created_at", l->spec.created_at);
        json_nums(j, "coef", l->spec.model.coef, bg_model_npar(&l->spec.model));
        json_str(j, "source", l->spec.source);
    }
    json_num(j, "r25_ohm", l->nominal_r25_ohm);
    json_num(j, "b_k", l->nominal_b_k);
    if (l->spec.tol_k > 0.0) {
        json_num(j, "tol_mk", 1e3 * l->spec.tol_k);
        json_num(j, "tol_from_k", l->spec.tol_lo_k);
        json_num(j, "tol_to_k", l->spec.tol_hi_k);
    } else
        json_null(j, "tol_mk");
    json_obj_end(j);
}

/* The two values of a lot of a sensor kind other than the NTC: names, units, tolerances. */
static void kind_json(json_out *j, const bg_qa_lot *l)
{
    json_obj(j, "values");
    json_str(j, "value1", l->v1_key);
    json_str(j, "value1_name", l->v1_name);
    json_str(j, "value1_unit", l->v1_unit);
    json_num(j, "value1_tol", l->v1_tol);
    json_str(j, "value2", l->v2_key);
    json_str(j, "value2_name", l->v2_name);
    json_str(j, "value2_unit", l->v2_unit);
    json_num(j, "value2_nominal", l->v2_nominal);
    json_num(j, "value2_tol", l->v2_tol);
    json_num(j, "t_ref_k", l->spec.nom_t_k);
    json_obj_end(j);
}

static void stats_json(const bg_qa_lot *l)
{
    json_out j;
    json_begin(&j, stdout);
    json_obj(&j, NULL);
    json_str(&j, "lot", l->lot.code);
    json_str(&j, "part", l->lot.part);
    json_str(&j, "sensor", bg_part_sensor_name(l->sensor));
    if (l->sensor == BG_PART_NTC) {
        json_num(&j, "nominal_r25_ohm", l->lot.r25_ohm);
        json_num(&j, "nominal_b_k", l->lot.beta_k);
    } else
        kind_json(&j, l);
    nominal_json(&j, l);
    json_nums(&j, "at_k", l->at_k, l->nat);
    json_arr(&j, "probes");
    for (size_t i = 0; i < l->n; i++) {
        json_obj(&j, NULL);
        json_str(&j, "probe", l->serial[i]);
        json_int(&j, "fit", l->fit_id[i]);
        json_num(&j, l->v1_key, l->r25_dev_pct[i]);
        json_num(&j, l->v2_key, l->b_k[i]);
        json_bool(&j, "b_extrapolated", (l->flags[i] & BG_QA_B_EXTRAPOLATED) != 0);
        json_nums(&j, "deviation_mk", &l->dev_mk[i * l->nat], l->nat);
        json_num(&j, "tol_dev_mk", l->tol_dev_mk[i]);
        json_bool(&j, "out_of_tolerance", (l->flags[i] & BG_QA_OUT_OF_TOL) != 0);
        json_bool(&j, "out_of_band", (l->flags[i] & BG_QA_OUT_OF_BAND) != 0);
        json_bool(&j, "outlier", (l->flags[i] & BG_QA_OUTLIER) != 0);
        json_obj_end(&j);
    }
    json_arr_end(&j);
    stat_json(&j, l->v1_key, &l->r25_dev, l->cpk_r25);
    stat_json(&j, l->v2_key, &l->b, l->cpk_b);
    json_num(&j, "activation_energy_ev", l->activation_energy_ev);
    json_obj(&j, "grubbs");
    json_num(&j, "alpha", l->alpha);
    json_num(&j, "g_r25", l->g_r25);
    json_num(&j, "g_b", l->g_b);
    json_num(&j, "g_crit", l->g_crit);
    json_obj_end(&j);
    json_nums(&j, "band_lo_mk", l->band_lo_mk, l->nat);
    json_nums(&j, "band_hi_mk", l->band_hi_mk, l->nat);
    json_int(&j, "probes_without_fit", (long long)l->nofit);
    json_int(&j, "out_of_tolerance", (long long)l->nout);
    json_int(&j, "out_of_band", (long long)l->nband);
    json_int(&j, "b_extrapolated", (long long)l->nb_extrap);
    json_bool(&j, "flagged", l->flagged);
    json_obj_end(&j);
    json_end(&j);
}

/* One row per probe and check temperature, with the lot in every row and the same columns
** for every lot, so that the files of several lots stack. */
static void stats_csv(const bg_qa_lot *l)
{
    printf("lot,probe,fit,%s,%s,%s,t_c,dev_mk,band_lo_mk,band_hi_mk,"
           "nominal,out_of_tolerance,out_of_band,outlier\n", l->v1_key, l->v2_key,
           l->sensor == BG_PART_NTC ? "b_extrapolated" : "extrapolated");
    for (size_t i = 0; i < l->n; i++)
        for (size_t k = 0; k < l->nat; k++)
            printf("%s,%s,%lld,%.17g,%.17g,%d,%.17g,%.17g,%.17g,%.17g,%s,%d,%d,%d\n",
                   l->lot.code, l->serial[i], l->fit_id[i], l->r25_dev_pct[i], l->b_k[i],
                   (l->flags[i] & BG_QA_B_EXTRAPOLATED) != 0, l->at_k[k] - BG_ZERO_C_K,
                   l->dev_mk[i * l->nat + k], l->band_lo_mk[k], l->band_hi_mk[k],
                   l->nominal_is_beta ? "beta" : l->spec.have_model ? "part" :
                   bg_part_sensor_name(l->sensor), (l->flags[i] & BG_QA_OUT_OF_TOL) != 0,
                   (l->flags[i] & BG_QA_OUT_OF_BAND) != 0, (l->flags[i] & BG_QA_OUTLIER) != 0);
}

static void nominal_text(const bg_qa_lot *l)
{
    const bg_part_spec *sp = &l->spec;
    char name[32];
    if (l->sensor != BG_PART_NTC && !sp->have_model)
        printf("  nominal curve: part %s's %s values (specification %lld of %s)%s\n", sp->part,
               bg_part_sensor_name(l->sensor), sp->id, sp->created_at,
               l->sensor == BG_PART_PRT ? ": the IEC 60751 curve with its R0" :
               l->sensor == BG_PART_IC ? ": T = T_rep + c0 + c1 (T_rep - T_r)" :
               ": linear through the nominal value with the nominal slope");
    else if (l->sensor != BG_PART_NTC)
        printf("  nominal curve: part %s's %s (specification %lld of %s; %s)\n", sp->part,
               bg_model_name(&sp->model, name, sizeof name), sp->id, sp->created_at,
               sp->source[0] ? sp->source : "coefficients");
    else if (l->nominal_is_beta)
        printf("  nominal curve: the lot's R25 and B as a beta curve (part %s stores none); the "
               "deviation below\n  includes the beta model's shape error and is not a verdict "
               "(bandgap part set %s gives the part its curve)\n", l->lot.part, l->lot.part);
    else
        printf("  nominal curve: part %s's %s (specification %lld of %s; %s): R25 %.6g ohm, "
               "B %.2f K\n", sp->part, bg_model_name(&sp->model, name, sizeof name), sp->id,
               sp->created_at, sp->source[0] ? sp->source : "coefficients",
               l->nominal_r25_ohm, l->nominal_b_k);
    if (sp->tol_k > 0.0)
        printf("  tolerance: +-%.1f mK from %.2f to %.2f degC (judged over each probe's "
               "calibrated part of it)\n", 1e3 * sp->tol_k, sp->tol_lo_k - BG_ZERO_C_K,
               sp->tol_hi_k - BG_ZERO_C_K);
}

static void stats_probes_text(const bg_qa_lot *l)
{
    int tol = l->spec.tol_k > 0.0;
    char h1[64] = "R25 dev/%", h2[64] = "B/K";
    if (l->sensor != BG_PART_NTC) {
        snprintf(h1, sizeof h1, "%s/%s", l->v1_name, l->v1_unit);
        snprintf(h2, sizeof h2, "%s/%s", l->v2_name, l->v2_unit);
    }
    printf("  %-20s %10s %10s %13s%s  %s\n", "probe", h1, h2, "max dev/mK",
           tol ? "  tol dev/mK" : "", "flags");
    for (size_t i = 0; i < l->n; i++) {
        printf("  %-20s %+10.4f %10.2f%s %13.3f", l->serial[i], l->r25_dev_pct[i], l->b_k[i],
               l->flags[i] & BG_QA_B_EXTRAPOLATED ? "*" : " ", l->max_abs_dev_mk[i]);
        if (tol)
            printf("  %11.3f", l->tol_dev_mk[i]);
        printf("  %s%s%s\n", l->flags[i] & BG_QA_OUT_OF_TOL ? "OUT OF TOLERANCE " : "",
               l->flags[i] & BG_QA_OUT_OF_BAND ? "BEYOND THE KELVIN TOLERANCE " : "",
               l->flags[i] & BG_QA_OUTLIER ? "OUTLIER (Grubbs)" : "");
    }
    if (l->nb_extrap && l->sensor != BG_PART_NTC)
        printf("  * extrapolated: a value is read outside the calibrated range of %zu of %zu "
               "probes\n", l->nb_extrap, l->n);
    else if (l->nb_extrap)
        printf("  * B%.0f/%.0f extrapolated: the pair lies outside the calibrated range of %zu "
               "of %zu probes\n", l->lot.pair_t1_k - BG_ZERO_C_K, l->lot.pair_t2_k - BG_ZERO_C_K,
               l->nb_extrap, l->n);
}

static void stats_text_ntc(const bg_qa_lot *l);
static void stats_text_flags(const bg_qa_lot *l);

/* A lot of a sensor kind other than the NTC: its header and its two values' statistics. */
static void kind_text_head(const bg_qa_lot *l)
{
    printf("lot %s (part %s, %s): %zu probes with fits%s; nominal at %.2f degC: %s 0 +-%.4g "
           "%s, %s %.6g +-%.4g %s\n", l->lot.code, l->lot.part, bg_part_sensor_name(l->sensor),
           l->n, l->nofit ? ", some without" : "", l->spec.nom_t_k - BG_ZERO_C_K, l->v1_name,
           l->v1_tol, l->v1_unit, l->v2_name, l->v2_nominal, l->v2_tol, l->v2_unit);
    if (l->lot.sensor == BG_PART_NTC) /* a lot added before schema 13 with R25 and B */
        printf("  (the lot's own R25 and B are not used: part %s is of kind %s)\n",
               l->lot.part, bg_part_sensor_name(l->sensor));
}

static void kind_text_stats(const bg_qa_lot *l)
{
    printf("  %s: mean %+.6g %s, sd %.4g %s, min %+.6g, max %+.6g, Cpk %.2f\n", l->v1_name,
           l->r25_dev.mean, l->v1_unit, l->r25_dev.sd, l->v1_unit, l->r25_dev.min,
           l->r25_dev.max, l->cpk_r25);
    printf("  %s: mean %.6g %s, sd %.4g %s, min %.6g, max %.6g, Cpk %.2f\n", l->v2_name,
           l->b.mean, l->v2_unit, l->b.sd, l->v2_unit, l->b.min, l->b.max, l->cpk_b);
    if (l->have_grubbs)
        printf("  Grubbs (two-sided, alpha %.3g): G(%s) %.3f, G(%s) %.3f, critical %.3f\n",
               l->alpha, l->v1_name, l->g_r25, l->v2_name, l->g_b, l->g_crit);
    printf("  deviation from the nominal curve (mK) against the %s:\n",
           l->spec.tol_k > 0.0 ? "kelvin tolerance" : l->sensor == BG_PART_PRT ?
           "IEC 60751 class tolerance" : "band of the kind's tolerances");
    if (l->sensor == BG_PART_PRT && !(l->spec.tol_k > 0.0))
        printf("  (the class limits are from memory, not checked against a copy of IEC 60751: "
               "check them against the standard before a certificate relies on them)\n");
}

static void stats_text(const bg_qa_lot *l)
{
    if (l->sensor != BG_PART_NTC) {
        kind_text_head(l);
        nominal_text(l);
        stats_probes_text(l);
        kind_text_stats(l);
    } else {
        stats_text_ntc(l);
    }
    for (size_t k = 0; k < l->nat; k++)
        printf("    %10.3f degC  measured %+9.2f .. %+9.2f   band %+9.2f .. %+9.2f\n",
               l->at_k[k] - BG_ZERO_C_K, l->dev_min_mk[k], l->dev_max_mk[k], l->band_lo_mk[k],
               l->band_hi_mk[k]);
    stats_text_flags(l);
}

static void stats_text_ntc(const bg_qa_lot *l)
{
    const bg_lot *lot = &l->lot;
    printf("lot %s (part %s): %zu probes with fits%s; nominal R25 %.6g ohm +-%.3g %%, "
           "B %.2f K +-%.3g %%\n", lot->code, lot->part, l->n, l->nofit ? ", some without" : "",
           lot->r25_ohm, 100 * lot->tol_r25, lot->beta_k, 100 * lot->tol_beta);
    nominal_text(l);
    stats_probes_text(l);
    printf("  R25 deviation: mean %+.4f %%, sd %.4f %%, min %+.4f, max %+.4f, Cpk %.2f\n",
           l->r25_dev.mean, l->r25_dev.sd, l->r25_dev.min, l->r25_dev.max, l->cpk_r25);
    printf("  B: mean %.2f K, sd %.2f K, min %.2f, max %.2f, Cpk %.2f; activation energy "
           "E = kB = %.4f eV\n", l->b.mean, l->b.sd, l->b.min, l->b.max, l->cpk_b,
           l->activation_energy_ev);
    if (l->have_grubbs)
        printf("  Grubbs (two-sided, alpha %.3g): G(R25) %.3f, G(B) %.3f, critical %.3f\n",
               l->alpha, l->g_r25, l->g_b, l->g_crit);
    printf("  deviation from the nominal curve (mK) against the %s:\n",
           l->spec.tol_k > 0.0 ? "kelvin tolerance" : "band of the R25 and B tolerances");
}

static void stats_text_flags(const bg_qa_lot *l)
{
    if (l->nuncovered)
        printf("  note: %zu probes' calibrations do not cover the whole tolerance range\n",
               l->nuncovered);
    if (l->nout)
        printf("  FLAG: %zu probes out of tolerance\n", l->nout);
    if (l->nband)
        printf("  FLAG: %zu probes beyond the kelvin tolerance of the nominal curve\n", l->nband);
    if (l->outlier_r25 || l->outlier_b)
        printf("  FLAG: Grubbs outlier: probe %s\n",
               l->serial[l->outlier_r25 ? l->ioutlier_r25 : l->ioutlier_b]);
}

static int drift_lot(bg_store *st, const char *code, const bg_qa_opts *o, int out, int *flagged,
                     bg_error *err)
{
    bg_qa_lot l = BG_QA_LOT_INIT;
    int rc = bg_qa_lot_stats(st, code, o, &l, err);
    if (rc == BG_OK) {
        *flagged |= l.flagged;
        if (out == OUT_JSON)
            stats_json(&l);
        else if (out == OUT_CSV)
            stats_csv(&l);
        else
            stats_text(&l);
    }
    bg_qa_lot_release(&l);
    return rc;
}

/* ---------------- a part ---------------- */

static void chart_json(json_out *j, const char *key, const bg_chart *c)
{
    json_obj(j, key);
    json_num(j, "center", c->center);
    json_num(j, "lcl", c->lcl);
    json_num(j, "ucl", c->ucl);
    json_obj_end(j);
}

static void part_json(const bg_qa_part *p)
{
    static const char *const names[4] = { "xbar_r25_dev_pct", "s_r25_dev_pct", "xbar_b_k",
                                          "s_b_k" };
    json_out j;
    json_begin(&j, stdout);
    json_obj(&j, NULL);
    json_str(&j, "part", p->part);
    json_str(&j, "sensor", bg_part_sensor_name(p->sensor));
    if (p->sensor != BG_PART_NTC) { /* the r25 and b keys below hold these two values */
        json_obj(&j, "values");
        json_str(&j, "r25_dev_name", p->v1_name), json_str(&j, "r25_dev_unit", p->v1_unit);
        json_str(&j, "b_name", p->v2_name), json_str(&j, "b_unit", p->v2_unit);
        json_obj_end(&j);
    }
    json_int(&j, "baseline_lots", (long long)p->baseline);
    json_str(&j, "baseline_from", drift_from(p->baseline_from, "all lots"));
    json_bool(&j, "provisional", p->provisional);
    json_int(&j, "customary_baseline_lots", BG_QA_CUSTOMARY_SUBGROUPS);
    json_int(&j, "subgroup_size", (long long)p->subgroup);
    for (int c = 0; c < 4; c++)
        chart_json(&j, names[c], &p->chart[c]);
    json_arr(&j, "lots");
    for (size_t i = 0; i < p->nlots; i++) {
        const bg_qa_part_lot *l = &p->lots[i];
        json_obj(&j, NULL);
        json_str(&j, "lot", l->code);
        json_int(&j, "n", (long long)l->n);
        json_num(&j, "r25_dev_mean_pct", l->r25_mean_pct);
        json_num(&j, "r25_dev_sd_pct", l->r25_sd_pct);
        json_num(&j, "b_mean_k", l->b_mean_k);
        json_num(&j, "b_sd_k", l->b_sd_k);
        json_int(&j, "b_extrapolated", (long long)l->nb_extrap);
        json_int(&j, "rules", (long long)(l->rules[0] | l->rules[1] << 4 | l->rules[2] << 8 |
                                          l->rules[3] << 12));
        json_obj_end(&j);
    }
    json_arr_end(&j);
    if (p->have_asfound) {
        chart_json(&j, "xbar_as_found_mk", &p->chart[BG_QA_CHART_XBAR_ASFOUND]);
        json_arr(&j, "as_found_lots");
        for (size_t i = 0; i < p->nasfound; i++) {
            const bg_qa_part_lot *l = &p->lots[p->asfound[i].lot];
            json_obj(&j, NULL);
            json_str(&j, "lot", l->code);
            json_int(&j, "n", (long long)l->nasfound);
            json_num(&j, "mean_mk", l->asfound_mean_mk);
            json_num(&j, "sd_mk", l->asfound_sd_mk);
            json_int(&j, "rules", (long long)(p->asfound[i].rules[0] |
                                              p->asfound[i].rules[1] << 4));
            json_obj_end(&j);
        }
        json_arr_end(&j);
    } else
        json_null(&j, "xbar_as_found_mk");
    json_bool(&j, "flagged", p->flagged);
    json_obj_end(&j);
    json_end(&j);
}

static void part_asfound_text(const bg_qa_part *p)
{
    const bg_chart *cx = &p->chart[BG_QA_CHART_XBAR_ASFOUND];
    if (!p->have_asfound) {
        printf("  as-found drift: not charted (fewer than two lots with recalibrated "
               "probes)\n");
        return;
    }
    printf("  as-found drift (mK, newest two calibrations, middle of the range): X-bar centre "
           "%+.3f, limits %+.3f .. %+.3f\n", cx->center, cx->lcl, cx->ucl);
    for (size_t i = 0; i < p->nasfound; i++) {
        const bg_qa_part_lot *l = &p->lots[p->asfound[i].lot];
        printf("  %-16s n %3zu  as-found %+.3f mK (s %.3f)", l->code, l->nasfound,
               l->asfound_mean_mk, l->asfound_sd_mk);
        for (int r = 0; r < 4; r++) {
            if (p->asfound[i].rules[0] & (1u << r))
                printf("  FLAG: X-bar as-found %s", rule_names[r]);
            if (p->asfound[i].rules[1] & (1u << r))
                printf("  FLAG: s as-found %s", rule_names[r]);
        }
        printf("\n");
    }
}

static void part_text(const bg_qa_part *p)
{
    static const char *const cn[4] = { "X-bar R25", "s R25", "X-bar B", "s B" };
    const bg_chart *c = p->chart;
    printf("part %s: %zu lots charted, limits from the first %zu (%s), subgroup size %zu\n",
           p->part, p->nlots, p->baseline, drift_from(p->baseline_from, "all lots"), p->subgroup);
    if (p->provisional)
        printf("  PROVISIONAL limits: from %zu lot(s), fewer than the customary %d (trial limits "
               "want 20 to 25 subgroups)\n", p->baseline, BG_QA_CUSTOMARY_SUBGROUPS);
    int ntc = p->sensor == BG_PART_NTC;
    const char *n1 = ntc ? "R25 dev" : p->v1_name, *u1 = ntc ? "%" : p->v1_unit;
    const char *n2 = ntc ? "B" : p->v2_name, *u2 = ntc ? "K" : p->v2_unit;
    if (!ntc)
        printf("  sensor kind %s: the charts follow the part's nominal values\n",
               bg_part_sensor_name(p->sensor));
    printf("  X-bar %s: centre %+.4f %s, limits %+.4f .. %+.4f;  s: centre %.4f, limits "
           "%.4f .. %.4f\n", n1, c[0].center, u1, c[0].lcl, c[0].ucl, c[1].center, c[1].lcl,
           c[1].ucl);
    printf("  X-bar %s: centre %.2f %s, limits %.2f .. %.2f;  s: centre %.3f, limits %.3f .. "
           "%.3f\n", n2, c[2].center, u2, c[2].lcl, c[2].ucl, c[3].center, c[3].lcl, c[3].ucl);
    for (size_t i = 0; i < p->nlots; i++) {
        const bg_qa_part_lot *l = &p->lots[i];
        printf("  %-16s n %3zu  %s %+.4f %s (s %.4f)  %s %.2f %s%s (s %.3f)", l->code, l->n,
               n1, l->r25_mean_pct, u1, l->r25_sd_pct, n2, l->b_mean_k, u2,
               l->nb_extrap ? "*" : "", l->b_sd_k);
        for (int k = 0; k < 4; k++)
            for (int r = 0; r < 4; r++)
                if (l->rules[k] & (1u << r))
                    printf("  FLAG: %s %s", cn[k], rule_names[r]);
        printf("\n");
    }
    part_asfound_text(p);
    for (size_t i = 0; i < p->nlots; i++)
        if (p->lots[i].nb_extrap) {
            printf(ntc ? "  * B extrapolated: its pair lies outside the calibrated range of some "
                   "probes\n" : "  * extrapolated: a value is read outside the calibrated "
                   "range of some probes\n");
            break;
        }
}

/* One row per lot and chart (the limits repeated), so that parts and runs stack. */
static void part_csv(const bg_qa_part *p)
{
    static const char *const names[BG_QA_NCHART] = { "xbar_r25_dev_pct", "s_r25_dev_pct",
                                                     "xbar_b_k", "s_b_k", "xbar_as_found_mk",
                                                     "s_as_found_mk" };
    printf("part,lot,index,n,chart,value,center,lcl,ucl,rules,baseline_lots,provisional,"
           "b_extrapolated\n");
    for (int c = 0; c < BG_QA_NCHART; c++) {
        size_t n = c < 4 ? p->nlots : p->have_asfound ? p->nasfound : 0;
        for (size_t i = 0; i < n; i++) {
            size_t li = c < 4 ? i : p->asfound[i].lot;
            const bg_qa_part_lot *l = &p->lots[li];
            const double v[BG_QA_NCHART] = { l->r25_mean_pct, l->r25_sd_pct, l->b_mean_k,
                                             l->b_sd_k, l->asfound_mean_mk, l->asfound_sd_mk };
            unsigned rules = c < 4 ? l->rules[c] : p->asfound[i].rules[c - 4];
            printf("%s,%s,%zu,%zu,%s,%.17g,%.17g,%.17g,%.17g,%u,%zu,%d,%zu\n", p->part, l->code,
                   li + 1, c < 4 ? l->n : l->nasfound, names[c], v[c], p->chart[c].center,
                   p->chart[c].lcl, p->chart[c].ucl, rules, p->baseline, p->provisional,
                   l->nb_extrap);
        }
    }
}

static int drift_part(bg_store *st, const char *part, const bg_qa_opts *o, int out,
                      int *flagged, bg_error *err)
{
    bg_qa_part p = BG_QA_PART_INIT;
    int rc = bg_qa_part_charts(st, part, o, &p, err);
    if (out == OUT_TEXT)
        for (size_t i = 0; i < p.nskipped; i++)
            printf("lot %s: not charted (%s)\n", p.skipped[i].code, p.skipped[i].why);
    if (rc == BG_OK) {
        *flagged |= p.flagged;
        if (out == OUT_JSON)
            part_json(&p);
        else if (out == OUT_CSV)
            part_csv(&p);
        else
            part_text(&p);
    }
    bg_qa_part_release(&p);
    return rc;
}

int cmd_drift(int argc, char **argv, struct cli_ctx *ctx)
{
    enum { O_PROBE = 1, O_LOT, O_PART, O_AT, O_LIMIT, O_RATE, O_SINCE, O_BASE, O_ALPHA, O_CSV,
           O_JSON };
    static const struct option opts[] = {
        { "probe", required_argument, NULL, O_PROBE }, { "lot", required_argument, NULL, O_LOT },
        { "part", required_argument, NULL, O_PART },   { "at", required_argument, NULL, O_AT },
        { "limit", required_argument, NULL, O_LIMIT },
        { "rate-limit", required_argument, NULL, O_RATE },
        { "since", required_argument, NULL, O_SINCE },
        { "baseline", required_argument, NULL, O_BASE },
        { "alpha", required_argument, NULL, O_ALPHA }, { "csv", no_argument, NULL, O_CSV },
        { "json", no_argument, NULL, O_JSON },         { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 },
    };
    bg_qa_opts o = bg_qa_default_opts();
    bg_error err = BG_ERROR_INIT;
    bg_store *st = NULL;
    const char *probe = NULL, *lot = NULL, *part = NULL;
    long long base;
    char *end;
    int c, rc, out, flagged = 0;

    int csv = 0, json = ctx->json;
    opterr = 0;
    while ((c = getopt_long(argc, argv, ":h", opts, NULL)) != -1) {
        switch (c) {
        case 'h': fputs(drift_usage, stdout); return BG_OK;
        case O_PROBE: probe = optarg; break;
        case O_LOT: lot = optarg; break;
        case O_PART: part = optarg; break;
        case O_AT:
            if (cli_parse_temps(optarg, o.at_k, BG_DRIFT_MAXAT, &o.nat, &err) != BG_OK)
                return cli_usage_error("drift", "--at: %s", err.msg);
            break;
        case O_LIMIT: case O_RATE:
            if (bg_units_parse_tdiff(optarg, c == O_LIMIT ? &o.limit_k : &o.rate_k, &err) != BG_OK)
                return cli_usage_error("drift", "--%s: %s", c == O_LIMIT ? "limit" : "rate-limit",
                                       err.msg);
            break;
        case O_SINCE:
            if (!bg_csv_valid_time(optarg))
                return cli_usage_error("drift", "--since: '%s': not an ISO 8601 date", optarg);
            o.since = optarg;
            break;
        case O_BASE:
            if (cli_parse_id(optarg, &base) != BG_OK)
                return cli_usage_error("drift", "--baseline: '%s': not a number of lots", optarg);
            o.baseline = (size_t)base;
            break;
        case O_ALPHA:
            o.alpha = strtod(optarg, &end);
            if (*end || !(o.alpha > 0.0 && o.alpha < 0.5))
                return cli_usage_error("drift", "--alpha: '%s': expected 0 < alpha < 0.5",
                                       optarg);
            break;
        case O_CSV: csv = 1; break;
        case O_JSON: json = 1; break;
        case ':': return cli_usage_error("drift", "option '%s' needs a value", argv[optind - 1]);
        default: return cli_unknown_option("drift", argv[optind - 1], opts);
        }
    }
    if (optind < argc)
        return cli_usage_error("drift", "unexpected argument '%s'", argv[optind]);
    if ((probe != NULL) + (lot != NULL) + (part != NULL) != 1)
        return cli_usage_error("drift", "give one of --probe, --lot or --part");
    if (csv && json)
        return cli_usage_error("drift", "give --csv or --json, not both");
    if ((rc = cli_open_store(ctx, 0, &st)) != BG_OK)
        return rc;
    out = json ? OUT_JSON : csv ? OUT_CSV : OUT_TEXT;
    rc = probe ? drift_probe(st, probe, &o, out, &flagged, &err)
         : lot ? drift_lot(st, lot, &o, out, &flagged, &err)
               : drift_part(st, part, &o, out, &flagged, &err);
    bg_store_close(st);
    if (rc != BG_OK)
        return cli_fail("drift", &err);
    return flagged ? CLI_FLAGGED : BG_OK;
}
