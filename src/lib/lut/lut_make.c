/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* A table as the program asks for it, in one call: the strategy (a uniform step, the one
** named, or the smallest in bytes), the error budget at chosen temperatures and as the worst
** case, and for the table report the error of the table at every code of its range. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "bandgap/units.h"
#include "lut_int.h"

char *bg_lut_value_unit(const bg_lut_spec *s, char *buf, size_t n)
{
    const char *u = s->kelvin ? "K" : "degC";
    if (s->format == BG_LUT_FLOAT)
        snprintf(buf, n, "%s (float)", u);
    else if (s->format == BG_LUT_Q)
        snprintf(buf, n, "1/%lu %s (Q%u)", 1ul << s->qbits, u, s->qbits);
    else
        snprintf(buf, n, "%s %s", s->format == BG_LUT_DECI ? "0.1" : s->format == BG_LUT_CENTI ?
                 "0.01" : "0.001", u);
    return buf;
}

void bg_lut_result_release(bg_lut_result *r)
{
    if (!r)
        return;
    bg_lut_release(&r->table);
    free(r->budget);
    free(r->curve);
    memset(r, 0, sizeof *r);
}

/* The table itself: the uniform step, the strategy named, or the smallest in bytes. */
static int make_table(const bg_lut_request *rq, bg_lut_result *out, bg_error *err)
{
    bg_lut_spec *s = &out->spec;
    int rc;
    s->frac_bits = -1, s->oncurve_min = rq->oncurve_count ? 1 : BG_LUT_ONCURVE_AUTO;
    if (rq->step_codes > 0) {
        s->shift = 0;
        while ((1L << s->shift) < rq->step_codes)
            s->shift++;
        rc = bg_lut_build(s, &out->table, err);
    } else {
        s->max_err_k = rq->max_err_k;
        if (rq->strategy >= 0) {
            s->strategy = (bg_lut_strategy)rq->strategy;
            rc = bg_lut_build(s, &out->table, err);
        } else {
            rc = bg_lut_build_smallest(s, &out->table, out->sizes, err);
            out->chosen = rc == BG_OK;
        }
    }
    if (rc == BG_OK)
        s->strategy = out->table.strategy, s->shift = out->table.shift;
    return rc;
}

/* The table's error at every code: table - model in K, kept per band of codes as its least
** and largest value (the chart draws that envelope; every code is in exactly one band). */
static int make_curve(bg_lut_result *out, bg_error *err)
{
    const bg_lut *t = &out->table;
    long nc = t->code_hi - t->code_lo + 1;
    long per = (nc + BG_LUT_ERROR_BANDS - 1) / BG_LUT_ERROR_BANDS;
    size_t nb = (size_t)((nc + per - 1) / per);
    if (!(out->curve = malloc(nb * sizeof *out->curve)))
        return bg_error_set(err, BG_ENOMEM, "out of memory for the error of %ld codes", nc);
    out->ncurve = nb, out->codes_per_band = per;
    out->curve_lo_k = 0.0, out->curve_hi_k = 0.0;
    for (size_t k = 0; k < nb; k++) {
        bg_lut_error_band *b = &out->curve[k];
        b->code_lo = t->code_lo + (long)k * per;
        b->code_hi = b->code_lo + per - 1 < t->code_hi ? b->code_lo + per - 1 : t->code_hi;
        b->min_k = INFINITY, b->max_k = -INFINITY;
        for (long code = b->code_lo; code <= b->code_hi; code++) {
            int st;
            double tk = NAN;
            bg_circuit_temp_of(&out->spec.circuit, &out->spec.model, (double)code, &tk, NULL,
                               NULL);
            double e = bg_lut_value(t, code, &st) + t->offset_k - tk;
            if (code == b->code_lo)
                b->t_lo_k = tk;
            if (code == b->code_hi)
                b->t_hi_k = tk;
            b->min_k = fmin(b->min_k, e), b->max_k = fmax(b->max_k, e);
        }
        out->curve_lo_k = fmin(out->curve_lo_k, b->min_k);
        out->curve_hi_k = fmax(out->curve_hi_k, b->max_k);
    }
    return BG_OK;
}

/* Which terms the budget's inputs allow; a term not given becomes NaN (not 0) in every row. */
static void budget_terms(bg_lut_result *out)
{
    const bg_budget_opts *o = &out->budget_opts;
    bg_circuit_kind kind = out->spec.circuit.kind;
    int divider = kind == BG_CIRCUIT_DIVIDER_LOW || kind == BG_CIRCUIT_DIVIDER_HIGH;
    unsigned t = 0;
    if (o->cov)
        t |= BG_BUDGET_FIT;
    if (!divider)
        t |= BG_BUDGET_NO_RESISTOR | BG_BUDGET_RESISTOR;
    else if (o->fixed_tol > 0.0)
        t |= BG_BUDGET_RESISTOR;
    if (o->dissipation_w_per_k > 0.0 &&
        (kind == BG_CIRCUIT_CURRENT || (divider && o->excitation_v > 0.0) ||
         (kind == BG_CIRCUIT_JUNCTION && out->spec.circuit.current_a > 0.0)))
        t |= BG_BUDGET_SELFHEAT;
    out->budget_terms = t;
    for (size_t i = 0; i <= out->nbudget; i++) {
        bg_budget_row *w = i < out->nbudget ? &out->budget[i] : &out->worst;
        if (!(t & BG_BUDGET_FIT))
            w->fit_k = NAN;
        if (!(t & BG_BUDGET_RESISTOR) || (t & BG_BUDGET_NO_RESISTOR))
            w->resistor_k = NAN; /* not given, or not applicable (no fixed resistor: its 0
                                 ** was in RSS and sum, which are so unchanged without it) */
        if (!(t & BG_BUDGET_SELFHEAT))
            w->selfheat_k = NAN;
    }
}

int bg_lut_make(const bg_lut_request *rq, bg_lut_result *out, bg_error *err)
{
    const bg_lut_spec *s = &rq->spec;
    int rc;
    memset(out, 0, sizeof *out);
    out->spec = rq->spec;
    out->spec.source = NULL;
    if (s->stamp) {
        if (strlen(s->stamp) >= sizeof out->stamp)
            return bg_error_set(err, BG_EINVAL, "the table's time stamp is longer than %zu "
                                "bytes", sizeof out->stamp - 1);
        memcpy(out->stamp, s->stamp, strlen(s->stamp) + 1);
        out->spec.stamp = out->stamp;
    }
    out->budget_opts = rq->budget;
    out->budget_opts.cov = NULL;
    if (rq->fit_id) {
        out->fit_id = rq->fit_id;
        const char *serial = rq->fit_serial ? rq->fit_serial : "";
        const char *started = rq->fit_started_at ? rq->fit_started_at : "";
        if (strlen(serial) >= sizeof out->fit_serial || strlen(started) >= sizeof out->fit_started_at)
            return bg_error_set(err, BG_EINVAL, "the stored fit's serial or start time is longer "
                                "than the record allows (%d and %d bytes)", BG_TEXT - 1,
                                BG_TIME - 1);
        out->fit_run_id = rq->fit_run_id, out->fit_current = rq->fit_current;
        snprintf(out->fit_serial, sizeof out->fit_serial, "%s", serial);
        snprintf(out->fit_started_at, sizeof out->fit_started_at, "%s", started);
        snprintf(out->source, sizeof out->source, "stored fit %lld of probe %s, run %lld%s%s%s",
                 rq->fit_id, serial, rq->fit_run_id, started[0] ? " started " : "", started,
                 rq->fit_current ? ", the probe's current fit" : "");
        out->spec.source = out->source;
        if (rq->fit_cov) {
            size_t np = bg_model_npar(&s->model);
            bg_coverage_rule rule = rq->coverage;
            if (rule.p == 0.0 && rule.k_fixed == 0.0)
                rule = bg_coverage_default();
            if ((rc = bg_coverage_eval(&rule, (double)rq->fit_dof, &out->fit_cover, err)) !=
                BG_OK)
                return rc;
            if (isfinite(out->fit_cover.k)) { /* no degree of freedom: no fit term */
                memcpy(out->cov, rq->fit_cov, np * np * sizeof *out->cov);
                out->budget_opts.cov = out->cov;
                out->budget_opts.fit_k = out->fit_cover.k;
            }
        }
        if (!rq->allow_extrapolation && (s->t_lo_k < rq->fit_t_min_k - 1e-9 ||
                                         s->t_hi_k > rq->fit_t_max_k + 1e-9))
            return bg_error_set(err, BG_EINVAL, "the range %.3f .. %.3f degC is outside fit "
                                "%lld's calibrated range %.3f .. %.3f degC "
                                "(--allow-extrapolation to build it anyway)",
                                s->t_lo_k - BG_ZERO_C_K, s->t_hi_k - BG_ZERO_C_K, rq->fit_id,
                                rq->fit_t_min_k - BG_ZERO_C_K, rq->fit_t_max_k - BG_ZERO_C_K);
    }
    if ((rc = make_table(rq, out, err)) != BG_OK)
        goto fail;

    /* the budget: at the temperatures asked for, by default the ends and the middle */
    double mid[3] = { s->t_lo_k, 0.5 * (s->t_lo_k + s->t_hi_k), s->t_hi_k };
    const double *at = rq->nbudget_at ? rq->budget_at_k : mid;
    size_t nat = rq->nbudget_at ? rq->nbudget_at : 3;
    out->budget = calloc(nat, sizeof *out->budget);
    if (!out->budget) {
        rc = bg_error_set(err, BG_ENOMEM, "out of memory for the error budget");
        goto fail;
    }
    out->nbudget = nat;
    rc = bg_lut_budget(&out->spec, &out->table, &out->budget_opts, at, nat, out->budget,
                       &out->worst, err);
    if (rc == BG_OK)
        budget_terms(out);
    if (rc == BG_OK && rq->error_curve)
        rc = make_curve(out, err);
    if (rc == BG_OK)
        return BG_OK;
fail:
    bg_lut_result_release(out);
    return rc;
}
