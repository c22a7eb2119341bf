/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Control charts across the lots of a part: X-bar and s charts (stats.h) of each lot's R25
** deviation, B and as-found drift, with the Western Electric run rules.  The lists grow with
** the part: there is no limit on the number of lots. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "qa_int.h"

/* The codes of the part's lots, oldest first. */
struct codes {
    char (*code)[BG_TEXT];
    size_t n, cap;
    int oom;
};

static int codes_cb(const bg_lot *l, void *ctx)
{
    struct codes *c = ctx;
    if (c->n == c->cap) {
        size_t cap = c->cap ? 2 * c->cap : 64;
        char (*s)[BG_TEXT] = realloc(c->code, cap * sizeof *s);
        if (!s) {
            c->oom = 1;
            return 1;
        }
        c->code = s, c->cap = cap;
    }
    snprintf(c->code[c->n++], BG_TEXT, "%s", l->code);
    return 0;
}

/* The as-found drift of each probe of a lot between its two newest calibrations, at the
** middle of their common range (mK, signed). */
struct asf {
    double *v;
    size_t n, cap;
    int oom;
};

int bgi_qa_asfound(const bg_fit_row *f, char (*when)[BG_TIME], size_t n, double *mk)
{
    bg_drift_cal c0, c1;
    bg_drift d;
    double t0, t1, at;
    if (n < 2)
        return 0;
    /* a pair whose ranges do not overlap has no as-found value at a common temperature */
    if (bg_time_parse(when[n - 2], &t0, NULL) != BG_OK ||
        bg_time_parse(when[n - 1], &t1, NULL) != BG_OK ||
        bg_drift_prepare(&f[n - 2].model, 298.15, 358.15, t0, &c0, NULL) != BG_OK ||
        bg_drift_prepare(&f[n - 1].model, 298.15, 358.15, t1, &c1, NULL) != BG_OK ||
        bg_drift_check_points(f[n - 2].t_min_k, f[n - 2].t_max_k, f[n - 1].t_min_k,
                              f[n - 1].t_max_k, 1, &at, NULL) != BG_OK ||
        bg_drift_compare_cal(&c0, &c1, &at, 1, &d, NULL) != BG_OK)
        return 0;
    *mk = d.err_mk[0];
    return 1;
}

static int asf_cb(const char *serial, const bg_fit_row *f, char (*when)[BG_TIME], size_t n,
                  void *ctx)
{
    struct asf *a = ctx;
    double v;
    (void)serial;
    if (!bgi_qa_asfound(f, when, n, &v))
        return 0;
    if (a->n == a->cap) {
        size_t cap = a->cap ? 2 * a->cap : 64;
        double *nv = realloc(a->v, cap * sizeof *nv);
        if (!nv) {
            a->oom = 1;
            return 1;
        }
        a->v = nv, a->cap = cap;
    }
    a->v[a->n++] = v;
    return 0;
}

static int push_skip(bg_qa_part *p, const char *code, const char *why, bg_error *err)
{
    if (p->nskipped == p->capskipped) {
        size_t cap = p->capskipped ? 2 * p->capskipped : 8;
        bg_qa_part_skip *s = realloc(p->skipped, cap * sizeof *s);
        if (!s)
            return bg_error_set(err, BG_ENOMEM, "out of memory listing the lots of part '%s'",
                                p->part);
        p->skipped = s, p->capskipped = cap;
    }
    snprintf(p->skipped[p->nskipped].code, BG_TEXT, "%s", code);
    snprintf(p->skipped[p->nskipped].why, sizeof p->skipped[0].why, "%s", why);
    p->nskipped++;
    return BG_OK;
}

/* Lot 'code' onto the charts, or into the skipped list when it cannot be charted; its
** statistics and as-found values from 'have' when it is that lot, else read here. */
static int add_lot(bg_store *st, const char *code, const bg_qa_opts *o,
                   const struct bgi_qa_have *have, bg_qa_part *p, bg_error *err)
{
    bg_qa_lot own = BG_QA_LOT_INIT;
    bg_error e2 = BG_ERROR_INIT;
    struct asf a = { NULL, 0, 0, 0 };
    int mine = !(have && strcmp(have->stats->lot.code, code) == 0);
    const bg_qa_lot *lp = mine ? &own : have->stats;
    int rc = mine ? bg_qa_lot_stats(st, code, o, &own, &e2) : BG_OK;
    if (rc == BG_EINVAL || (rc == BG_OK && lp->n < 2)) {
        bg_qa_lot_release(&own);
        return push_skip(p, code, e2.msg[0] ? e2.msg : "fewer than 2 fitted probes", err);
    }
    if (rc != BG_OK) {
        if (err)
            *err = e2;
        goto done;
    }
    if (mine && (rc = bg_store_lot_history(st, code, o->since, asf_cb, &a, err)) != BG_OK)
        goto done;
    if (a.oom) {
        rc = bg_error_set(err, BG_ENOMEM, "out of memory reading the history of lot '%s'", code);
        goto done;
    }
    if (p->nlots == p->caplots) {
        size_t cap = p->caplots ? 2 * p->caplots : 16;
        bg_qa_part_lot *nl = realloc(p->lots, cap * sizeof *nl);
        if (!nl) {
            rc = bg_error_set(err, BG_ENOMEM, "out of memory charting the lots of part '%s'",
                              p->part);
            goto done;
        }
        p->lots = nl, p->caplots = cap;
    }
    bg_qa_part_lot *pl = &p->lots[p->nlots++];
    bg_stats sa;
    memset(pl, 0, sizeof *pl);
    snprintf(pl->code, BG_TEXT, "%s", code);
    pl->n = lp->n;
    pl->r25_mean_pct = lp->r25_dev.mean, pl->r25_sd_pct = lp->r25_dev.sd;
    pl->b_mean_k = lp->b.mean, pl->b_sd_k = lp->b.sd;
    size_t na = mine ? a.n : have->nasf;
    bg_stats_of(mine ? a.v : have->asf, na, &sa);
    pl->nasfound = na, pl->asfound_mean_mk = sa.mean, pl->asfound_sd_mk = sa.sd;
    pl->nb_extrap = lp->nb_extrap;
    p->sensor = lp->sensor; /* the part's lots share its specification and so its kind */
    memcpy(p->v1_name, lp->v1_name, sizeof p->v1_name);
    memcpy(p->v1_unit, lp->v1_unit, sizeof p->v1_unit);
    memcpy(p->v2_name, lp->v2_name, sizeof p->v2_name);
    memcpy(p->v2_unit, lp->v2_unit, sizeof p->v2_unit);
done:
    free(a.v);
    bg_qa_lot_release(&own);
    return rc;
}

/* The as-found charts over the lots where at least two probes were recalibrated. */
static int asfound_charts(bg_qa_part *p, bg_error *err)
{
    size_t ka = 0, asum = 0;
    double *am = malloc((p->nlots + 1) * sizeof *am), *as = malloc((p->nlots + 1) * sizeof *as);
    unsigned *fx = malloc((p->nlots + 1) * sizeof *fx), *fs = malloc((p->nlots + 1) * sizeof *fs);
    int rc = BG_OK;
    p->asfound = malloc((p->nlots + 1) * sizeof *p->asfound);
    if (!am || !as || !fx || !fs || !p->asfound) {
        rc = bg_error_set(err, BG_ENOMEM, "out of memory charting the lots of part '%s'",
                          p->part);
        goto done;
    }
    for (size_t i = 0; i < p->nlots; i++)
        if (p->lots[i].nasfound >= 2) {
            am[ka] = p->lots[i].asfound_mean_mk, as[ka] = p->lots[i].asfound_sd_mk;
            p->asfound[ka].lot = i, asum += p->lots[i].nasfound, ka++;
        }
    p->nasfound = ka;
    if (ka < 2)
        goto done;
    size_t nba = p->baseline && p->baseline < ka ? p->baseline : ka;
    p->asfound_subgroup = (asum + ka / 2) / ka;
    p->have_asfound = bg_chart_xbar_s(am, as, nba, p->asfound_subgroup,
                                      &p->chart[BG_QA_CHART_XBAR_ASFOUND],
                                      &p->chart[BG_QA_CHART_S_ASFOUND], NULL) == BG_OK;
    if (!p->have_asfound)
        goto done;
    bg_chart_rules(&p->chart[BG_QA_CHART_XBAR_ASFOUND], am, ka, fx);
    bg_chart_rules(&p->chart[BG_QA_CHART_S_ASFOUND], as, ka, fs);
    for (size_t i = 0; i < ka; i++) {
        p->asfound[i].rules[0] = fx[i], p->asfound[i].rules[1] = fs[i];
        p->flagged |= (fx[i] | fs[i]) != 0;
    }
done:
    free(am), free(as), free(fx), free(fs);
    return rc;
}

/* The R25 and B charts of the charted lots, limits from the baseline. */
static int main_charts(bg_qa_part *p, bg_error *err)
{
    size_t k = p->nlots, msum = 0;
    double *v = malloc(4 * k * sizeof *v);
    unsigned *fl = malloc(4 * k * sizeof *fl);
    int rc = BG_OK;
    if (!v || !fl) {
        rc = bg_error_set(err, BG_ENOMEM, "out of memory charting the lots of part '%s'",
                          p->part);
        goto done;
    }
    for (size_t i = 0; i < k; i++) {
        v[i] = p->lots[i].r25_mean_pct, v[k + i] = p->lots[i].r25_sd_pct;
        v[2 * k + i] = p->lots[i].b_mean_k, v[3 * k + i] = p->lots[i].b_sd_k;
        msum += p->lots[i].n;
    }
    p->baseline = p->baseline && p->baseline < k ? p->baseline : k;
    p->provisional = p->baseline < BG_QA_CUSTOMARY_SUBGROUPS;
    p->subgroup = (msum + k / 2) / k; /* subgroup size: the mean lot size */
    if ((rc = bg_chart_xbar_s(v, v + k, p->baseline, p->subgroup, &p->chart[BG_QA_CHART_XBAR_R25],
                              &p->chart[BG_QA_CHART_S_R25], err)) != BG_OK ||
        (rc = bg_chart_xbar_s(v + 2 * k, v + 3 * k, p->baseline, p->subgroup,
                              &p->chart[BG_QA_CHART_XBAR_B], &p->chart[BG_QA_CHART_S_B],
                              err)) != BG_OK)
        goto done;
    for (size_t c = 0; c < 4; c++)
        bg_chart_rules(&p->chart[c], v + c * k, k, fl + c * k);
    for (size_t i = 0; i < k; i++)
        for (size_t c = 0; c < 4; c++) {
            p->lots[i].rules[c] = fl[c * k + i];
            p->flagged |= fl[c * k + i] != 0;
        }
done:
    free(v), free(fl);
    return rc;
}

/* The baseline asked for: the option's, else the part's default, else 0 (all lots). */
static int baseline(bg_store *st, const char *part, const bg_qa_opts *o, bg_qa_part *p,
                    bg_error *err)
{
    bg_part_spec spec;
    int rc = bg_store_part_spec_get(st, part, &spec, err);
    if (rc != BG_OK)
        return rc;
    if (o->baseline)
        p->baseline = o->baseline, p->baseline_from = BG_QA_FROM_OPTION;
    else if (spec.baseline)
        p->baseline = spec.baseline, p->baseline_from = BG_QA_FROM_PART;
    else
        p->baseline = 0, p->baseline_from = BG_QA_FROM_DEFAULT;
    return BG_OK;
}

int bg_qa_part_charts(bg_store *st, const char *part, const bg_qa_opts *o, bg_qa_part *out,
                      bg_error *err)
{
    return bgi_qa_part_charts_with(st, part, o, NULL, out, err);
}

int bgi_qa_part_charts_with(bg_store *st, const char *part, const bg_qa_opts *o,
                            const struct bgi_qa_have *have, bg_qa_part *out, bg_error *err)
{
    struct codes c = { NULL, 0, 0, 0 };
    int rc;

    snprintf(out->part, sizeof out->part, "%s", part);
    if ((rc = baseline(st, part, o, out, err)) != BG_OK ||
        (rc = bg_store_part_lots(st, part, codes_cb, &c, err)) != BG_OK)
        goto done;
    if (c.oom) {
        rc = bg_error_set(err, BG_ENOMEM, "out of memory listing the lots of part '%s'", part);
        goto done;
    }
    for (size_t i = 0; i < c.n; i++)
        if ((rc = add_lot(st, c.code[i], o, have, out, err)) != BG_OK)
            goto done;
    if (out->nlots < 2) {
        rc = bg_error_set(err, BG_EINVAL, "part '%s': control charts need at least 2 lots "
                          "with 2 or more fitted probes", part);
        goto done;
    }
    if ((rc = main_charts(out, err)) == BG_OK)
        rc = asfound_charts(out, err);
done:
    free(c.code);
    return rc;
}

void bg_qa_part_release(bg_qa_part *p)
{
    if (!p)
        return;
    free(p->lots);
    free(p->skipped);
    free(p->asfound);
    memset(p, 0, sizeof *p);
}
