/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* A lot's statistics against the part's nominal beta curve: each probe's newest fit gives its
** R25 deviation, its B and its deviation from the nominal curve at the check temperatures;
** over the lot, mean, sd, Cpk (stats.h), Grubbs' test, and the band the tolerances allow. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "bandgap/qa.h"

/* The newest fit of each probe, collected in buffers that grow. */
struct latest {
    bg_qa_lot *l;
    bg_fit_row *fit;
    size_t cap;
    int oom;
};

static int grow(struct latest *d)
{
    bg_qa_lot *l = d->l;
    size_t cap = d->cap ? 2 * d->cap : 64;
    char (*s)[BG_TEXT] = realloc(l->serial, cap * sizeof *s);
    if (s)
        l->serial = s;
    bg_fit_row *f = realloc(d->fit, cap * sizeof *f);
    if (f)
        d->fit = f;
    if (!s || !f)
        return BG_ENOMEM;
    d->cap = cap;
    return BG_OK;
}

static int latest_cb(const char *serial, const bg_fit_row *fit, void *ctx)
{
    struct latest *d = ctx;
    bg_qa_lot *l = d->l;
    if (!fit) {
        l->nofit++;
        return 0;
    }
    if (l->n == d->cap && grow(d) != BG_OK) {
        d->oom = 1;
        return 1;
    }
    snprintf(l->serial[l->n], BG_TEXT, "%s", serial);
    d->fit[l->n++] = *fit;
    return 0;
}

static void beta_model(double r25_ohm, double beta_k, bg_model *m)
{
    double c[2] = { r25_ohm, beta_k };
    bg_model_parse("beta", m, NULL);
    bg_model_set_coef(m, c, 2, NULL);
}

/* The check temperatures: the options', or five over the range every fit covers. */
static int check_points(bg_qa_lot *l, const bg_fit_row *fit, const bg_qa_opts *o, bg_error *err)
{
    double lo = -INFINITY, hi = INFINITY;
    int rc;
    if (o->nat) {
        memcpy(l->at_k, o->at_k, o->nat * sizeof l->at_k[0]);
        l->nat = o->nat;
        return BG_OK;
    }
    for (size_t i = 0; i < l->n; i++)
        lo = fmax(lo, fit[i].t_min_k), hi = fmin(hi, fit[i].t_max_k);
    if ((rc = bg_drift_check_points(lo, hi, lo, hi, 5, l->at_k, err)) != BG_OK) {
        bg_error_prefix(err, "lot '%s'", l->lot.code);
        return rc;
    }
    l->nat = 5;
    return BG_OK;
}

/* Probe i: R25 deviation, B, deviation from the nominal curve 'nom'. */
static int one_probe(bg_qa_lot *l, size_t i, const bg_fit_row *f, const bg_model *nom,
                     bg_error *err)
{
    const bg_lot *lot = &l->lot;
    size_t nat = l->nat;
    double rr;
    bg_drift dd;
    int rc;
    for (size_t k = 0; k < nat; k++)
        if (l->at_k[k] < f->t_min_k - 1e-9 || l->at_k[k] > f->t_max_k + 1e-9)
            return bg_error_set(err, BG_EINVAL, "check temperature %.3f degC is outside the "
                                "calibrated range of probe '%s'", l->at_k[k] - BG_ZERO_C_K,
                                l->serial[i]);
    if ((rc = bg_model_r_from_t(&f->model, BG_T0_DEFAULT_K, &rr, err)) != BG_OK ||
        (rc = bg_model_b_pair(&f->model, lot->pair_t1_k, lot->pair_t2_k, &l->b_k[i], err)) !=
            BG_OK)
        return rc;
    l->r25_dev_pct[i] = 100.0 * (rr - lot->r25_ohm) / lot->r25_ohm;
    bg_drift_at where = { l->at_k, nat, lot->pair_t1_k, lot->pair_t2_k };
    if ((rc = bg_drift_compare(nom, &f->model, &where, 0.0, &dd, err)) != BG_OK)
        return rc;
    memcpy(&l->dev_mk[i * nat], dd.err_mk, nat * sizeof l->dev_mk[0]);
    l->fit_id[i] = f->id;
    return BG_OK;
}

/* The interchangeability band: the nominal curve at its tolerance corners. */
static void band(bg_qa_lot *l, const bg_model *nom)
{
    const bg_lot *lot = &l->lot;
    bg_drift_at where = { l->at_k, l->nat, lot->pair_t1_k, lot->pair_t2_k };
    for (size_t k = 0; k < l->nat; k++)
        l->band_lo_mk[k] = INFINITY, l->band_hi_mk[k] = -INFINITY;
    for (int sr25 = -1; sr25 <= 1; sr25 += 2)
        for (int sbeta = -1; sbeta <= 1; sbeta += 2) {
            bg_model corner;
            bg_drift dd;
            beta_model(lot->r25_ohm * (1 + sr25 * lot->tol_r25),
                       lot->beta_k * (1 + sbeta * lot->tol_beta), &corner);
            if (bg_drift_compare(nom, &corner, &where, 0.0, &dd, NULL) == BG_OK)
                for (size_t k = 0; k < l->nat; k++)
                    l->band_lo_mk[k] = fmin(l->band_lo_mk[k], dd.err_mk[k]),
                    l->band_hi_mk[k] = fmax(l->band_hi_mk[k], dd.err_mk[k]);
        }
}

/* Statistics, Grubbs, flags and the extremes of the deviations, from the per-probe values. */
static void summarize(bg_qa_lot *l, double alpha)
{
    const bg_lot *lot = &l->lot;
    size_t n = l->n, nat = l->nat;
    bg_stats_of(l->r25_dev_pct, n, &l->r25_dev);
    bg_stats_of(l->b_k, n, &l->b);
    l->cpk_r25 = bg_stats_cpk(&l->r25_dev, -100.0 * lot->tol_r25, 100.0 * lot->tol_r25);
    l->cpk_b = bg_stats_cpk(&l->b, lot->beta_k * (1 - lot->tol_beta),
                            lot->beta_k * (1 + lot->tol_beta));
    l->activation_energy_ev = bg_activation_energy_ev(l->b.mean);
    l->alpha = alpha;
    l->g_r25 = l->g_b = l->g_crit = NAN;
    l->have_grubbs = n >= 3 && l->r25_dev.sd > 0.0 && l->b.sd > 0.0;
    if (l->have_grubbs) {
        double gc_b;
        bg_grubbs(l->r25_dev_pct, n, alpha, &l->g_r25, &l->g_crit, &l->ioutlier_r25, NULL);
        bg_grubbs(l->b_k, n, alpha, &l->g_b, &gc_b, &l->ioutlier_b, NULL);
        l->outlier_r25 = l->g_r25 > l->g_crit;
        l->outlier_b = l->g_b > gc_b;
    }
    for (size_t k = 0; k < nat; k++)
        l->dev_min_mk[k] = INFINITY, l->dev_max_mk[k] = -INFINITY;
    for (size_t i = 0; i < n; i++) {
        double mx = 0.0;
        for (size_t k = 0; k < nat; k++) {
            double v = l->dev_mk[i * nat + k];
            mx = fmax(mx, fabs(v));
            l->dev_min_mk[k] = fmin(l->dev_min_mk[k], v);
            l->dev_max_mk[k] = fmax(l->dev_max_mk[k], v);
        }
        l->max_abs_dev_mk[i] = mx;
        l->flags[i] = 0;
        if (fabs(l->r25_dev_pct[i]) > 100.0 * lot->tol_r25 ||
            fabs(l->b_k[i] - lot->beta_k) > lot->beta_k * lot->tol_beta)
            l->flags[i] |= BG_QA_OUT_OF_TOL, l->nout++;
        if ((l->outlier_r25 && l->ioutlier_r25 == i) || (l->outlier_b && l->ioutlier_b == i))
            l->flags[i] |= BG_QA_OUTLIER;
    }
    l->flagged = l->nout > 0 || l->outlier_r25 || l->outlier_b;
}

static int alloc_values(bg_qa_lot *l, bg_error *err)
{
    size_t n = l->n;
    l->fit_id = malloc(n * sizeof *l->fit_id);
    l->r25_dev_pct = malloc(n * sizeof *l->r25_dev_pct);
    l->b_k = malloc(n * sizeof *l->b_k);
    l->dev_mk = malloc(n * l->nat * sizeof *l->dev_mk);
    l->max_abs_dev_mk = malloc(n * sizeof *l->max_abs_dev_mk);
    l->flags = malloc(n * sizeof *l->flags);
    if (!l->fit_id || !l->r25_dev_pct || !l->b_k || !l->dev_mk || !l->max_abs_dev_mk ||
        !l->flags)
        return bg_error_set(err, BG_ENOMEM, "out of memory for the statistics of %zu probes",
                            n);
    return BG_OK;
}

int bg_qa_lot_stats(bg_store *st, const char *code, const bg_qa_opts *o, bg_qa_lot *out,
                    bg_error *err)
{
    struct latest d = { out, NULL, 0, 0 };
    bg_model nom;
    int rc;

    if ((rc = bg_store_lot_get(st, code, &out->lot, err)) != BG_OK ||
        (rc = bg_store_lot_latest_fits(st, code, o->since, latest_cb, &d, err)) != BG_OK)
        goto done;
    if (d.oom) {
        rc = bg_error_set(err, BG_ENOMEM, "out of memory reading the fits of lot '%s' (%zu "
                          "probes read)", code, out->n);
        goto done;
    }
    if (out->n == 0) {
        rc = bg_error_set(err, BG_EINVAL, "lot '%s' has no fitted probes (bandgap fit --lot %s)",
                          code, code);
        goto done;
    }
    beta_model(out->lot.r25_ohm, out->lot.beta_k, &nom);
    if ((rc = check_points(out, d.fit, o, err)) != BG_OK || (rc = alloc_values(out, err)) != BG_OK)
        goto done;
    for (size_t i = 0; i < out->n; i++)
        if ((rc = one_probe(out, i, &d.fit[i], &nom, err)) != BG_OK)
            goto done;
    summarize(out, o->alpha);
    band(out, &nom);
done:
    free(d.fit);
    return rc;
}

void bg_qa_lot_release(bg_qa_lot *l)
{
    if (!l)
        return;
    free(l->serial);
    free(l->fit_id);
    free(l->r25_dev_pct);
    free(l->b_k);
    free(l->dev_mk);
    free(l->max_abs_dev_mk);
    free(l->flags);
    memset(l, 0, sizeof *l);
}
