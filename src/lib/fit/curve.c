/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The R-T curve of a model as a table of rows, each from the model functions of model.h:
** u(T) = T^2 sqrt(g^T cov g) with g the gradient of 1/T in the coefficients (GUM, JCGM
** 100:2008, 5.1.2, law of propagation of uncertainty), U = k u with k from the source's coverage
** rule for its degrees of freedom (bg_coverage_eval); no U outside the calibrated range. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "bandgap/curve.h"

/* Tolerance, in kelvin, of the calibrated-range test and, in steps, of the grid's end. */
#define RANGE_TOL_K 1e-9
#define GRID_TOL_STEPS 1e-9

bg_curve_src bg_curve_src_of_model(const bg_model *m)
{
    bg_curve_src s;
    memset(&s, 0, sizeof s);
    s.model = *m;
    s.t_min_k = -INFINITY, s.t_max_k = INFINITY;
    s.rule = bg_coverage_default();
    return s;
}

void bg_curve_init(bg_curve *c)
{
    c->rows = NULL;
    c->n = 0;
    c->b_pair_k = NAN;
    c->b_pair_extrapolated = 0;
    memset(&c->cover, 0, sizeof c->cover);
    c->cover.k = c->cover.p = NAN;
}

void bg_curve_release(bg_curve *c)
{
    if (!c)
        return;
    free(c->rows);
    bg_curve_init(c);
}

/* Empty '*out', give it room for 'n' rows and work out the coverage factor of 'src'. */
static int curve_alloc(const bg_curve_src *src, bg_curve *out, size_t n, bg_error *err)
{
    bg_curve_release(out);
    if (bg_coverage_eval(&src->rule, src->dof ? (double)src->dof : 0.0, &out->cover, err) !=
        BG_OK)
        return BG_EINVAL;
    if (src->dof == 0 && src->rule.k_fixed > 0.0)
        out->cover.k = src->rule.k_fixed; /* its probability is not known without a dof */
    out->rows = calloc(n ? n : 1, sizeof *out->rows);
    if (!out->rows)
        return bg_error_set(err, BG_ENOMEM, "out of memory for a curve of %zu rows", n);
    return BG_OK;
}

/* Fill 'row' from 'q': both ends of the curve, the slope, alpha, the local beta, and the
** uncertainty (NaN where it cannot be evaluated, as the row is still a value of the model). */
static int row_eval(const bg_curve_src *src, double k, const bg_curve_query *q,
                    bg_curve_row *row, bg_error *err)
{
    const bg_model *m = &src->model;
    int rc;

    row->given = q->given;
    row->u_k = NAN;
    if (q->given == BG_CURVE_AT_OHMS) {
        row->r_ohm = q->value;
        rc = bg_model_t_from_r(m, row->r_ohm, &row->t_k, err);
    } else {
        row->t_k = q->value;
        rc = bg_model_r_from_t(m, row->t_k, &row->r_ohm, err);
    }
    if (rc == BG_OK)
        rc = bg_model_dtdr(m, row->r_ohm, &row->dtdr_k_per_ohm, err);
    if (rc == BG_OK && !(bg_model_flags(m) & BG_MODEL_INV_POLY)) {
        /* a kind other than the NTC ones: alpha for a resistance, no local beta */
        row->beta_local_k = NAN;
        if (bg_model_quantity(m) != BG_QTY_RESISTANCE ||
            bg_model_alpha(m, row->t_k, &row->alpha_per_k, NULL) != BG_OK)
            row->alpha_per_k = NAN;
        if (src->has_cov && bg_model_u_t(m, src->cov, row->t_k, &row->u_k, NULL) != BG_OK)
            row->u_k = NAN;
        row->extrapolated = src->has_range && (row->t_k < src->t_min_k - RANGE_TOL_K ||
                                               row->t_k > src->t_max_k + RANGE_TOL_K);
        row->U_k = row->extrapolated ? NAN : k * row->u_k;
        row->ok = 1;
        return BG_OK;
    }
    if (rc == BG_OK)
        rc = bg_model_alpha(m, row->t_k, &row->alpha_per_k, err);
    if (rc == BG_OK)
        rc = bg_model_beta_local(m, row->t_k, &row->beta_local_k, err);
    if (rc != BG_OK)
        return rc;
    /* (other kinds: alpha and the local beta are not theirs, NaN; see curve_kind) */
    if (src->has_cov && bg_model_u_t(m, src->cov, row->t_k, &row->u_k, NULL) != BG_OK)
        row->u_k = NAN;
    row->extrapolated = src->has_range && (row->t_k < src->t_min_k - RANGE_TOL_K ||
                                           row->t_k > src->t_max_k + RANGE_TOL_K);
    row->U_k = row->extrapolated ? NAN : k * row->u_k;
    row->ok = 1;
    return BG_OK;
}

static void b_pair(const bg_curve_src *src, bg_curve *out)
{
    out->b_pair_k = NAN;
    if ((src->b_pair_t1_k != 0.0 || src->b_pair_t2_k != 0.0) &&
        bg_model_b_pair(&src->model, src->b_pair_t1_k, src->b_pair_t2_k, &out->b_pair_k,
                        NULL) != BG_OK)
        out->b_pair_k = NAN;
    out->b_pair_extrapolated =
        src->has_range && isfinite(out->b_pair_k) &&
        (fmin(src->b_pair_t1_k, src->b_pair_t2_k) < src->t_min_k - RANGE_TOL_K ||
         fmax(src->b_pair_t1_k, src->b_pair_t2_k) > src->t_max_k + RANGE_TOL_K);
}

int bg_curve_eval(const bg_curve_src *src, const bg_curve_query *q, size_t n, bg_curve *out,
                  bg_error *err)
{
    int rc = curve_alloc(src, out, n, err);
    if (rc != BG_OK)
        return rc;
    for (size_t i = 0; i < n; i++) {
        if ((rc = row_eval(src, out->cover.k, &q[i], &out->rows[i], err)) != BG_OK) {
            bg_curve_release(out);
            return rc;
        }
        out->n = i + 1;
    }
    b_pair(src, out);
    return BG_OK;
}

int bg_curve_grid(const bg_curve_src *src, double from_k, double to_k, double step_k,
                  bg_curve *out, bg_error *err)
{
    bg_curve_query *q;
    double count;
    size_t n;
    int rc;

    if (!isfinite(from_k) || !isfinite(to_k) || !(step_k > 0.0) || !isfinite(step_k))
        return bg_error_set(err, BG_EINVAL, "a curve grid needs a finite start and end and a "
                            "step > 0");
    if (to_k < from_k)
        return bg_error_set(err, BG_EINVAL, "the end of a curve grid is below its start");
    count = floor((to_k - from_k) / step_k + GRID_TOL_STEPS) + 1;
    if (!(count <= BG_CURVE_MAX_ROWS))
        return bg_error_set(err, BG_EINVAL, "more than %d rows: use a larger step",
                            BG_CURVE_MAX_ROWS);
    n = (size_t)count;
    q = malloc(n * sizeof *q);
    if (!q)
        return bg_error_set(err, BG_ENOMEM, "out of memory for a curve of %zu rows", n);
    for (size_t i = 0; i < n; i++)
        q[i].given = BG_CURVE_AT_TEMP, q[i].value = from_k + step_k * (double)i;
    rc = bg_curve_eval(src, q, n, out, err);
    free(q);
    return rc;
}

int bg_curve_at_ohms(const bg_curve_src *src, const double *r_ohm, size_t n, bg_curve *out,
                     bg_error *err)
{
    bg_curve_query *q = malloc((n ? n : 1) * sizeof *q);
    int rc;
    if (!q)
        return bg_error_set(err, BG_ENOMEM, "out of memory for a curve of %zu rows", n);
    for (size_t i = 0; i < n; i++)
        q[i].given = BG_CURVE_AT_OHMS, q[i].value = r_ohm[i];
    rc = bg_curve_eval(src, q, n, out, err);
    free(q);
    return rc;
}

int bg_curve_span(const bg_curve_src *src, size_t npoints, bg_curve *out, bg_error *err)
{
    int rc;
    if (!src->has_range || !isfinite(src->t_min_k) || !isfinite(src->t_max_k))
        return bg_error_set(err, BG_EINVAL, "the curve's calibrated range is not known");
    if (npoints < 2)
        return bg_error_set(err, BG_EINVAL, "a span needs at least 2 points, got %zu",
                            npoints);
    if ((rc = curve_alloc(src, out, npoints, err)) != BG_OK)
        return rc;
    for (size_t i = 0; i < npoints; i++) {
        bg_curve_query q = { BG_CURVE_AT_TEMP, src->t_min_k + (src->t_max_k - src->t_min_k) *
                                                   (double)i / (double)(npoints - 1) };
        bg_curve_row *row = &out->rows[i];
        if (row_eval(src, out->cover.k, &q, row, NULL) != BG_OK) {
            memset(row, 0, sizeof *row);
            row->t_k = q.value;
            row->r_ohm = row->dtdr_k_per_ohm = row->alpha_per_k = NAN;
            row->beta_local_k = row->u_k = row->U_k = NAN;
        }
    }
    out->n = npoints;
    b_pair(src, out);
    return BG_OK;
}
