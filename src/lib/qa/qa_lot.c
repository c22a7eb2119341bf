/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* A lot's statistics against the part's nominal curve (the part's stored specification, any
** model kind; without one, the lot's R25 and B as a beta curve): each probe's newest fit gives
** its R25 deviation, its B and its deviation from the nominal curve at the check temperatures;
** over the lot, mean, sd, Cpk (stats.h), Grubbs' test, the band the tolerances allow, and the
** probes beyond a tolerance in kelvin. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../core/mem_int.h"
#include "qa_int.h"

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
    /* a lot of 100,000 probes holds some 100 MB here: in huge pages where the system can */
    char (*s)[BG_TEXT] = bgi_mem_grow(l->serial, l->n * sizeof *s, cap * sizeof *s);
    if (s)
        l->serial = s;
    bg_fit_row *f = bgi_mem_grow(d->fit, l->n * sizeof *f, cap * sizeof *f);
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

/* The check temperatures: the options', or round ones over the range every fit covers. */
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
    if ((rc = bg_drift_round_points(lo, hi, 5, l->at_k, BG_DRIFT_MAXAT, &l->nat, err)) != BG_OK)
        bg_error_prefix(err, "lot '%s'", l->lot.code);
    return rc;
}

/* The largest |T_nom(R(T)) - T| over the part of the kelvin tolerance's range that the fit
** 'f' covers (41 points, mK); NaN when it covers none of it. */
static double tol_dev(const bg_qa_lot *l, const bg_fit_row *f, const bg_model *nom, int *partial)
{
    const bg_part_spec *sp = &l->spec;
    double lo = fmax(sp->tol_lo_k, f->t_min_k), hi = fmin(sp->tol_hi_k, f->t_max_k), mx = 0.0;
    *partial = lo > sp->tol_lo_k + 1e-9 || hi < sp->tol_hi_k - 1e-9;
    if (!(hi >= lo))
        return NAN;
    for (int k = 0; k <= 40; k++) {
        double t = lo + (hi - lo) * k / 40.0, r, tn;
        if (!l->spec.have_model && l->sensor != BG_PART_NTC) {
            if (bgi_qa_kind_dev(l, &f->model, t, &tn, NULL) != BG_OK)
                return NAN;
            tn += t;
        } else if (bg_model_x_from_t(&f->model, t, &r, NULL) != BG_OK ||
                   bg_model_t_from_x(nom, r, &tn, NULL) != BG_OK)
            return NAN;
        mx = fmax(mx, fabs(tn - t));
    }
    return 1e3 * mx;
}

/* The deviation T_nom(x(T)) - T of fit 'f' at the check temperatures (mK), into row i: from
** the part's nominal curve when it stores one ('nom'), else from the kind's nominal values. */
static int kind_devs(bg_qa_lot *l, size_t i, const bg_fit_row *f, const bg_model *nom,
                     bg_error *err)
{
    for (size_t k = 0; k < l->nat; k++) {
        double x, t, dev;
        int rc;
        if (l->spec.have_model) {
            if ((rc = bg_model_x_from_t(&f->model, l->at_k[k], &x, err)) != BG_OK ||
                (rc = bg_model_t_from_x(nom, x, &t, err)) != BG_OK)
                return rc;
            dev = t - l->at_k[k];
        } else if ((rc = bgi_qa_kind_dev(l, &f->model, l->at_k[k], &dev, err)) != BG_OK)
            return rc;
        l->dev_mk[i * l->nat + k] = 1e3 * dev;
    }
    return BG_OK;
}

/* Probe i: R25 deviation, B, deviation from the nominal curve 'nom' (an NTC), or the kind's
** two values and deviation (the others). */
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
    l->fit_id[i] = f->id;
    l->flags[i] = 0;
    if (l->sensor != BG_PART_NTC) {
        int extrap = 0;
        if ((rc = bgi_qa_kind_values(l, f, &l->r25_dev_pct[i], &l->b_k[i], &extrap, err)) !=
                BG_OK ||
            (rc = kind_devs(l, i, f, nom, err)) != BG_OK) {
            bg_error_prefix(err, "probe '%s'", l->serial[i]);
            return rc;
        }
        if (extrap)
            l->flags[i] |= BG_QA_B_EXTRAPOLATED, l->nb_extrap++;
    } else {
        if ((rc = bg_model_r_from_t(&f->model, BG_T0_DEFAULT_K, &rr, err)) != BG_OK ||
            (rc = bg_model_b_pair(&f->model, lot->pair_t1_k, lot->pair_t2_k, &l->b_k[i],
                                  err)) != BG_OK)
            return rc;
        l->r25_dev_pct[i] = 100.0 * (rr - lot->r25_ohm) / lot->r25_ohm;
        bg_drift_at where = { l->at_k, nat, lot->pair_t1_k, lot->pair_t2_k };
        if ((rc = bg_drift_compare(nom, &f->model, &where, 0.0, &dd, err)) != BG_OK)
            return rc;
        memcpy(&l->dev_mk[i * nat], dd.err_mk, nat * sizeof l->dev_mk[0]);
        if (lot->pair_t1_k < f->t_min_k - 1e-9 || lot->pair_t1_k > f->t_max_k + 1e-9 ||
            lot->pair_t2_k < f->t_min_k - 1e-9 || lot->pair_t2_k > f->t_max_k + 1e-9)
            l->flags[i] |= BG_QA_B_EXTRAPOLATED, l->nb_extrap++;
    }
    l->tol_dev_mk[i] = NAN;
    if (l->spec.tol_k > 0.0) {
        int partial;
        l->tol_dev_mk[i] = tol_dev(l, f, nom, &partial);
        l->nuncovered += partial || isnan(l->tol_dev_mk[i]);
        if (l->tol_dev_mk[i] > 1e3 * l->spec.tol_k)
            l->flags[i] |= BG_QA_OUT_OF_BAND, l->nband++;
    } else if (l->sensor == BG_PART_PRT) { /* the class's tolerance at each check temperature */
        for (size_t k = 0; k < nat; k++)
            if (fabs(l->dev_mk[i * nat + k]) > 1e3 * bgi_qa_kind_band_k(l, l->at_k[k])) {
                l->flags[i] |= BG_QA_OUT_OF_BAND, l->nband++;
                break;
            }
    }
    return BG_OK;
}

/* The interchangeability band: +-tol_k inside the range of a kelvin tolerance, else the
** nominal curve at the corners of the R25 and B tolerances, R(T) = R_nom(T) (1 +- tol_R25)
** exp(+-tol_B B (1/T - 1/T25)), read back through the nominal curve. */
static void band(bg_qa_lot *l, const bg_model *nom)
{
    const bg_lot *lot = &l->lot;
    const bg_part_spec *sp = &l->spec;
    for (size_t k = 0; k < l->nat; k++) {
        double t = l->at_k[k], lo = INFINITY, hi = -INFINITY, rn;
        if (sp->tol_k > 0.0) {
            int in = t >= sp->tol_lo_k - 1e-9 && t <= sp->tol_hi_k + 1e-9;
            l->band_lo_mk[k] = in ? -1e3 * sp->tol_k : NAN;
            l->band_hi_mk[k] = in ? 1e3 * sp->tol_k : NAN;
            continue;
        }
        if (l->sensor != BG_PART_NTC) {
            double h = bgi_qa_kind_band_k(l, t);
            l->band_lo_mk[k] = -1e3 * h, l->band_hi_mk[k] = 1e3 * h;
            continue;
        }
        if (bg_model_r_from_t(nom, t, &rn, NULL) != BG_OK)
            rn = NAN;
        for (int sr25 = -1; sr25 <= 1; sr25 += 2)
            for (int sbeta = -1; sbeta <= 1; sbeta += 2) {
                double r = rn * (1 + sr25 * lot->tol_r25) *
                           exp(sbeta * lot->tol_beta * lot->beta_k * (1 / t - 1 / BG_T0_DEFAULT_K));
                double tc;
                if (bg_model_t_from_r(nom, r, &tc, NULL) == BG_OK)
                    lo = fmin(lo, 1e3 * (tc - t)), hi = fmax(hi, 1e3 * (tc - t));
            }
        l->band_lo_mk[k] = isfinite(lo) ? lo : NAN;
        l->band_hi_mk[k] = isfinite(hi) ? hi : NAN;
    }
}

/* Statistics, Grubbs, flags and the extremes of the deviations, from the per-probe values. */
static void summarize(bg_qa_lot *l, double alpha)
{
    size_t n = l->n, nat = l->nat;
    bg_stats_of(l->r25_dev_pct, n, &l->r25_dev);
    bg_stats_of(l->b_k, n, &l->b);
    l->cpk_r25 = bg_stats_cpk(&l->r25_dev, -l->v1_tol, l->v1_tol);
    l->cpk_b = bg_stats_cpk(&l->b, l->v2_nominal - l->v2_tol, l->v2_nominal + l->v2_tol);
    l->activation_energy_ev = l->sensor == BG_PART_NTC ? bg_activation_energy_ev(l->b.mean) : NAN;
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
        if (fabs(l->r25_dev_pct[i]) > l->v1_tol ||
            fabs(l->b_k[i] - l->v2_nominal) > l->v2_tol)
            l->flags[i] |= BG_QA_OUT_OF_TOL, l->nout++;
        if ((l->outlier_r25 && l->ioutlier_r25 == i) || (l->outlier_b && l->ioutlier_b == i))
            l->flags[i] |= BG_QA_OUTLIER;
    }
    l->flagged = l->nout > 0 || l->nband > 0 || l->outlier_r25 || l->outlier_b;
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
    l->tol_dev_mk = malloc(n * sizeof *l->tol_dev_mk);
    if (!l->fit_id || !l->r25_dev_pct || !l->b_k || !l->dev_mk || !l->max_abs_dev_mk ||
        !l->flags || !l->tol_dev_mk)
        return bg_error_set(err, BG_ENOMEM, "out of memory for the statistics of %zu probes",
                            n);
    return BG_OK;
}

/* The start of each run that counts toward the lot, by run id (bg_store_run_each gives them in
** id order). */
struct run_starts {
    long long *id;
    char (*at)[BG_TIME];
    size_t n, cap;
    int oom;
};

static int keep_start(const bg_run *r, void *ctx)
{
    struct run_starts *s = ctx;
    if (s->n == s->cap) {
        size_t cap = s->cap ? 2 * s->cap : 64;
        long long *id = realloc(s->id, cap * sizeof *id);
        if (id)
            s->id = id;
        char (*at)[BG_TIME] = realloc(s->at, cap * sizeof *at);
        if (at)
            s->at = at;
        if (!id || !at)
            return s->oom = 1;
        s->cap = cap;
    }
    s->id[s->n] = r->id;
    memcpy(s->at[s->n++], r->started_at, BG_TIME);
    return 0;
}

static const char *start_of(const struct run_starts *s, long long run_id)
{
    size_t lo = 0, hi = s->n;
    while (lo < hi) {
        size_t mid = lo + (hi - lo) / 2;
        if (s->id[mid] < run_id)
            lo = mid + 1;
        else
            hi = mid;
    }
    return lo < s->n && s->id[lo] == run_id ? s->at[lo] : "";
}

/* A probe is out of tolerance against the tolerances of the lot version in force at its
** calibration's start: a corrected tolerance judges the calibrations from its validity on, and
** leaves the earlier ones as they were.  The versions are read once and the runs' starts in
** one query; a lot without later versions is not read again.  (Cpk and the band use the
** tolerances in force now.) */
static int tolerances_in_force(bg_store *st, bg_qa_lot *l, const bg_fit_row *fit,
                               bg_error *err)
{
    struct bgi_lot_versions lv;
    struct run_starts rs = { NULL, NULL, 0, 0, 0 };
    if (l->sensor != BG_PART_NTC) /* judged against the part's values, not the lot's */
        return BG_OK;
    int rc = bgi_qa_lot_versions_load(st, l->lot.code, &lv, err);
    if (rc == BG_OK && lv.n >= 2) {
        rc = bg_store_run_each(st, NULL, l->lot.code, keep_start, &rs, err);
        if (rc == BG_OK && rs.oom)
            rc = bg_error_set(err, BG_ENOMEM, "out of memory reading the runs of lot '%s'",
                              l->lot.code);
    }
    if (rc == BG_OK && lv.n >= 2) {
        l->nout = 0;
        for (size_t i = 0; i < l->n; i++) {
            const bg_lot *v = bgi_qa_lot_version_at(&lv, start_of(&rs, fit[i].run_id));
            l->flags[i] &= ~(unsigned)BG_QA_OUT_OF_TOL;
            if (fabs(l->r25_dev_pct[i]) > 100.0 * v->tol_r25 ||
                fabs(l->b_k[i] - l->lot.beta_k) > l->lot.beta_k * v->tol_beta)
                l->flags[i] |= BG_QA_OUT_OF_TOL, l->nout++;
        }
        l->flagged = l->nout > 0 || l->nband > 0 || l->outlier_r25 || l->outlier_b;
    }
    bgi_qa_lot_versions_free(&lv);
    free(rs.id);
    free(rs.at);
    return rc;
}

/* The nominal curve: the part's, else the lot's R25 and B as a beta curve (no verdict). */
static int nominal(bg_store *st, bg_qa_lot *l, bg_model *nom, bg_error *err)
{
    int rc = bg_store_part_spec_get(st, l->lot.part, &l->spec, err);
    if (rc != BG_OK || (rc = bgi_qa_lot_kind_check(&l->lot, &l->spec, err)) != BG_OK)
        return rc;
    bgi_qa_kind_setup(l);
    l->nominal_is_beta = !l->spec.have_model && l->sensor == BG_PART_NTC;
    if (l->spec.have_model)
        *nom = l->spec.model;
    else
        beta_model(l->lot.r25_ohm, l->lot.beta_k, nom);
    if (l->sensor != BG_PART_NTC) { /* no R25 or B of the lot's pair */
        l->nominal_r25_ohm = l->nominal_b_k = NAN;
        return BG_OK;
    }
    if (bg_model_r_from_t(nom, BG_T0_DEFAULT_K, &l->nominal_r25_ohm, NULL) != BG_OK)
        l->nominal_r25_ohm = NAN;
    if (bg_model_b_pair(nom, l->lot.pair_t1_k, l->lot.pair_t2_k, &l->nominal_b_k, NULL) != BG_OK)
        l->nominal_b_k = NAN;
    return BG_OK;
}

/* The stored lot's nominal values and tolerances, which every statistic divides by or scales
** with: a row the program could not have written (a damaged or edited file) is refused. */
static int lot_check(const bg_lot *lot, bg_error *err)
{
    if (lot->sensor != BG_PART_NTC) /* schema 13: it holds none (bgi_qa_lot_kind_check) */
        return BG_OK;
    if (!(lot->r25_ohm > 0.0 && isfinite(lot->r25_ohm) && lot->beta_k > 0.0 &&
          isfinite(lot->beta_k) && lot->tol_r25 >= 0.0 && lot->tol_r25 < 1.0 &&
          lot->tol_beta >= 0.0 && lot->tol_beta < 1.0 && lot->pair_t1_k > 0.0 &&
          isfinite(lot->pair_t1_k) && lot->pair_t2_k > 0.0 && isfinite(lot->pair_t2_k)))
        return bg_error_set(err, BG_EINVAL, "lot '%s': the stored nominal R25 %g ohm, B %g K, "
                            "pair %g K/%g K or tolerances %g, %g are not valid (a damaged "
                            "record)", lot->code, lot->r25_ohm, lot->beta_k, lot->pair_t1_k,
                            lot->pair_t2_k, lot->tol_r25, lot->tol_beta);
    return BG_OK;
}

int bg_qa_lot_stats(bg_store *st, const char *code, const bg_qa_opts *o, bg_qa_lot *out,
                    bg_error *err)
{
    struct latest d = { out, NULL, 0, 0 };
    bg_model nom;
    int rc;

    if ((rc = bg_store_lot_get(st, code, &out->lot, err)) != BG_OK)
        goto done;
    if ((rc = lot_check(&out->lot, err)) != BG_OK ||
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
    if ((rc = nominal(st, out, &nom, err)) != BG_OK)
        goto done;
    if ((rc = check_points(out, d.fit, o, err)) != BG_OK || (rc = alloc_values(out, err)) != BG_OK)
        goto done;
    for (size_t i = 0; i < out->n; i++)
        if ((rc = one_probe(out, i, &d.fit[i], &nom, err)) != BG_OK)
            goto done;
    summarize(out, o->alpha);
    if ((rc = tolerances_in_force(st, out, d.fit, err)) != BG_OK)
        goto done;
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
    free(l->tol_dev_mk);
    memset(l, 0, sizeof *l);
}
