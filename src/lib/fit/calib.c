/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The calibration workflow: the default-uncertainty rule, the "auto" model choice (the policy
** itself is bg_fit_compare's), the quantities a calibration report shows, a stored run fitted
** and saved, and a whole lot fitted in one transaction, all or none. */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "bandgap/calib.h"
#include "bandgap/csv.h"
#include "fit_int.h"
#include "../core/mem_int.h"

/* Tolerance, in kelvin, of the calibrated-range test (as bg_curve's). */
#define RANGE_TOL_K 1e-9

bg_calib_request bg_calib_default_request(void)
{
    bg_calib_request rq;
    memset(&rq, 0, sizeof rq);
    rq.model = "auto";
    rq.t0_k = BG_T0_DEFAULT_K;
    rq.pair_t1_k = 298.15, rq.pair_t2_k = 358.15; /* B25/85 */
    rq.coverage = 0.9545;
    rq.resolution_k = bg_fit_default_opts(NULL).resolution_k;
    rq.ntable = 9;
    return rq;
}

void bg_calib_result_init(bg_calib_result *r)
{
    memset(r, 0, sizeof *r);
    bg_fit_init(&r->fit);
}

void bg_calib_result_release(bg_calib_result *r)
{
    if (!r)
        return;
    free(r->source);
    bg_fit_release(&r->fit);
    free(r->pts);
    free(r->table_t_k);
    free(r->table_u_k);
    free(r->table_U_k);
    free(r->checks);
    bg_calib_result_init(r);
}

void bg_calib_lot_init(bg_calib_lot *lot)
{
    memset(lot, 0, sizeof *lot);
}

void bg_calib_lot_release(bg_calib_lot *lot)
{
    if (!lot)
        return;
    for (size_t i = 0; i < lot->nrows; i++)
        free(lot->rows[i].why);
    free(lot->rows);
    free(lot->notes);
    bg_calib_lot_init(lot);
}

/* The one default-uncertainty rule, for files, stored runs and lots alike: each reading that
** states no u(T) (0) takes the request's, whether or not it states u(R). */
static void apply_default_u(bg_point *pts, size_t n, double u_t_default_k)
{
    if (u_t_default_k > 0.0)
        for (size_t i = 0; i < n; i++)
            if (pts[i].u_t_k == 0.0)
                pts[i].u_t_k = u_t_default_k;
}

/* Check 'rq' and turn it into fit options; '*is_auto' says whether the model is to be chosen. */
static int request_opts(const bg_calib_request *rq, bg_fit_opts *o, int *is_auto, bg_error *err)
{
    *o = bg_fit_default_opts(NULL);
    if (!rq->model)
        return bg_error_set(err, BG_EINVAL, "no model requested (a name or \"auto\")");
    if (strlen(rq->model) >= sizeof ((bg_calib_result *)0)->requested)
        return bg_error_set(err, BG_EINVAL, "model '%s': unknown (the name is too long)",
                            rq->model);
    if (!(rq->t0_k > 0.0 && isfinite(rq->t0_k)))
        return bg_error_set(err, BG_EINVAL, "T0 must be above 0 K");
    if (!(rq->u_t_default_k >= 0.0 && isfinite(rq->u_t_default_k)))
        return bg_error_set(err, BG_EINVAL, "default u(T) must be 0 (none) or above");
    if (!(rq->coverage > 0.0 && rq->coverage < 1.0))
        return bg_error_set(err, BG_EINVAL, "coverage probability must lie between 0 and 1");
    if (!(rq->coverage_k >= 0.0 && isfinite(rq->coverage_k)))
        return bg_error_set(err, BG_EINVAL, "coverage factor must be above 0 (or 0: Student's "
                            "t)");
    if (rq->ntable < 2)
        return bg_error_set(err, BG_EINVAL, "the u(T) table needs at least 2 points, got %zu",
                            rq->ntable);
    if (rq->ncheck && !rq->check_t_k)
        return bg_error_set(err, BG_EINVAL, "%zu check temperatures but no array", rq->ncheck);
    *is_auto = strcmp(rq->model, "auto") == 0;
    if (!*is_auto && bg_model_parse(rq->model, &o->model, err) != BG_OK)
        return BG_EINVAL;
    if (*is_auto && rq->quantity != BG_QTY_RESISTANCE) {
        /* the parameters go to the candidates through the first of them */
        const char *first[1];
        if (bg_model_candidates((bg_quantity)rq->quantity, 0, first, 1) == 0)
            return bg_error_set(err, BG_EINVAL, "no model reads %s",
                                bg_quantity_column((bg_quantity)rq->quantity));
        bg_model_parse(first[0], &o->model, NULL);
    }
    o->quantity = rq->quantity;
    if (!*is_auto && (int)bg_model_quantity(&o->model) != rq->quantity)
        return bg_error_set(err, BG_EINVAL, "model '%s' reads %s (column '%s'), but the "
                            "readings are %s (column '%s')", rq->model,
                            bg_quantity_unit(bg_model_quantity(&o->model)),
                            bg_quantity_column(bg_model_quantity(&o->model)),
                            bg_quantity_unit((bg_quantity)rq->quantity),
                            bg_quantity_column((bg_quantity)rq->quantity));
    for (size_t i = 0; i < rq->nparams; i++)
        if (bg_model_set_param(&o->model, rq->param_names[i], rq->param_values[i], err) !=
            BG_OK)
            return BG_EINVAL;
    o->model.t0_k = rq->t0_k;
    o->refine = !rq->linear_only;
    o->inflate = !rq->no_inflate;
    o->coverage = rq->coverage;
    if (!(rq->resolution_k > 0.0 && isfinite(rq->resolution_k)))
        return bg_error_set(err, BG_EINVAL, "the readings' resolution must be above 0 K");
    o->resolution_k = rq->resolution_k;
    return BG_OK;
}

/* The kind of model with the most coefficients that 'n' readings fit with a degree of freedom
** left (or, failing that, with none), below 'below' coefficients: its name into 'buf' and its
** number of coefficients, or 0 when none fits. */
static size_t fewer_coefficients(const bg_model *like, size_t n, size_t below, char *buf,
                                 size_t size)
{
    size_t best = 0;
    for (int exact = 0; exact < 2 && best == 0; exact++)
        for (size_t i = 0; i < bg_model_type_count(); i++) {
            bg_model m;
            const char *name = bg_model_type_name(bg_model_type_at(i));
            if (bg_model_parse(name, &m, NULL) != BG_OK) /* a kind that needs a degree */
                continue;
            /* of the same quantity and family (NTC or not) */
            if (bg_model_quantity(&m) != bg_model_quantity(like) ||
                bg_model_direction(&m) != bg_model_direction(like) ||
                (bg_model_flags(&m) & BG_MODEL_INV_POLY) !=
                    (bg_model_flags(like) & BG_MODEL_INV_POLY))
                continue;
            size_t np = bg_model_npar(&m);
            if (np < below && (exact ? np == n : np < n) && np > best) {
                best = np;
                snprintf(buf, size, "%s", name);
            }
        }
    return best;
}

/* Too few readings for the request: the file named, and a model with fewer coefficients. */
static int too_few(size_t n, const char *source, int is_auto, const bg_fit_opts *o,
                   bg_error *err)
{
    char name[16], alt[64], hint[200] = "";
    size_t npar = bg_model_npar(&o->model), need = is_auto ? 4 : npar;
    size_t np = fewer_coefficients(&o->model, n, is_auto ? SIZE_MAX : npar, alt, sizeof alt);

    if (n == 0)
        return bg_error_set(err, BG_EINVAL, "%s: no readings (a header only?)", source);
    if (n >= need)
        return BG_OK;
    if (np)
        snprintf(hint, sizeof hint, ": model '%s' (%zu coefficients) fits %zu readings with "
                 "%zu degree%s of freedom left", alt, np, n, n - np, n - np == 1 ? "" : "s");
    if (is_auto)
        return bg_error_set(err, BG_EINVAL, "%s: %zu reading%s: too few for 'auto', which "
                            "compares models from %zu readings on: give more readings, or name "
                            "a model with fewer coefficients%s", source, n, n == 1 ? "" : "s",
                            need, hint);
    return bg_error_set(err, BG_EINVAL, "%s: %zu reading%s, but model '%s' has %zu "
                        "coefficients: give more readings, or a model with fewer "
                        "coefficients%s", source, n, n == 1 ? "" : "s",
                        bg_model_name(&o->model, name, sizeof name), npar, hint);
}

/* The end of fit_model: the sort released, the kept fits too; returns 'rc'. */
static int fit_model_done(bg_fitter *fr, int held, bg_fit *keep, int rc)
{
    bgi_sort_hold(fr, held);
    for (size_t m = 0; m < BG_CMP_MAX; m++)
        bg_fit_release(&keep[m]);
    return rc;
}

/* Compare the models (always for "auto", else when 'compare'), then fit the requested or the
** chosen one into 'out->fit'.  A comparison that fails on data (BG_EINVAL) with a named model
** only leaves 'cmp_why'. */
static int fit_model(bg_fitter *fr, const bg_point *pts, size_t n, const bg_fit_opts *base,
                     int is_auto, int compare, bg_calib_result *out, bg_error *err)
{
    bg_fit_opts o = *base;
    bg_error cerr = BG_ERROR_INIT;
    bg_fit keep[BG_CMP_MAX];

    for (size_t m = 0; m < BG_CMP_MAX; m++)
        bg_fit_init(&keep[m]);
    out->compared = 0, out->auto_chosen = 0, out->cmp_why[0] = '\0';
    int held = bgi_sort_hold(fr, 1); /* the comparison and the fit sort the points once */
    if (is_auto || compare) {
        int rc = bgi_fit_compare_keep(fr, pts, n, &o, &out->cmp, is_auto ? keep : NULL, &cerr);
        out->compared = rc == BG_OK;
        memcpy(out->cmp_why, cerr.msg, sizeof out->cmp_why);
        if (rc != BG_OK && (is_auto || cerr.code != BG_EINVAL)) {
            if (err)
                *err = cerr;
            return fit_model_done(fr, held, keep, rc);
        }
    }
    if (is_auto) {
        if (out->cmp.chosen < 0)
            return fit_model_done(fr, held, keep, bg_error_set(err, BG_EINTERNAL,
                                                               "model comparison chose no model"));
        o.model = out->cmp.row[out->cmp.chosen].model;
        out->auto_chosen = 1;
        /* The comparison fitted the chosen model with these very options and points: a kind
        ** with a linear basis starts from the points alone (not from the model's coefficients),
        ** so fitting it again would give this same result; it is taken as it is. */
        bg_fit *k = &keep[out->cmp.chosen];
        unsigned pw[BG_MODEL_MAXPAR];
        if (k->n == n && bg_model_basis(&o.model, pw) > 0) {
            bg_fit t = out->fit;
            out->fit = *k, *k = t;
            return fit_model_done(fr, held, keep, BG_OK);
        }
    }
    return fit_model_done(fr, held, keep, bg_fitter_run(fr, pts, n, &o, &out->fit, err));
}

/* The request's coverage rule. */
static bg_coverage_rule request_rule(const bg_calib_request *rq)
{
    bg_coverage_rule rule = { rq->coverage, rq->coverage_k };
    return rule;
}

/* R25, B for the pair (and whether the pair is outside the range), the coverage factor and the
** largest u(T) and U(T) at the readings: what a lot's table shows. */
static void derive_brief(bg_calib_result *out, const bg_point *pts, size_t n,
                         const bg_calib_request *rq, double t1_k, double t2_k)
{
    const bg_fit *f = &out->fit;
    bg_coverage_rule rule = request_rule(rq);
    double umax = 0.0;

    /* a fit alone has one component with degrees of freedom: nu_eff = n - p (G.4.1) */
    if (bg_coverage_eval(&rule, (double)f->dof, &out->cover, NULL) != BG_OK)
        out->cover.k = out->cover.p = NAN;
    out->pair_t1_k = t1_k, out->pair_t2_k = t2_k;
    out->b_pair_extrapolated = fmin(t1_k, t2_k) < f->t_min_k - RANGE_TOL_K ||
                               fmax(t1_k, t2_k) > f->t_max_k + RANGE_TOL_K;
    if (bg_model_b_pair(&f->model, t1_k, t2_k, &out->b_pair_k, NULL) != BG_OK)
        out->b_pair_k = NAN;
    if (!isfinite(out->b_pair_k)) /* no B (a kind other than NTC): nothing extrapolated */
        out->b_pair_extrapolated = 0;
    if (bg_model_quantity(&f->model) != BG_QTY_RESISTANCE ||
        bg_model_r_from_t(&f->model, BG_T0_DEFAULT_K, &out->r25_ohm, NULL) != BG_OK)
        out->r25_ohm = NAN;
    /* Taken at the readings, which include both ends of the range, where u(T) of these curves
    ** is largest. */
    for (size_t k = 0; k < n; k++) {
        double u;
        if (bg_fit_u_at_r(f, pts[k].r_ohm, &u, NULL) == BG_OK && u > umax)
            umax = u;
    }
    out->u_max_k = f->dof ? umax : NAN;
    out->U_max_k = out->cover.k * out->u_max_k;
}

/* '*p' grown to 'n' elements of 'size' bytes (at least one); NULL, with '*p' kept, when out of
** memory. */
static void *grow(void *p, size_t n, size_t size)
{
    if (n > SIZE_MAX / size - 1)
        return NULL;
    return realloc(p, (n ? n : 1) * size);
}

#define GROW(p, n, err)                                                                        \
    do {                                                                                       \
        void *grown_ = grow((p), (n), sizeof *(p));                                            \
        if (!grown_)                                                                           \
            return bg_error_set((err), BG_ENOMEM, "out of memory: %zu elements", (size_t)(n)); \
        (p) = grown_;                                                                          \
    } while (0)

/* The coverage factor, the u(T) table across the range and the curve at the check points. */
static int derive_full(bg_calib_result *out, const bg_calib_request *rq, bg_error *err)
{
    const bg_fit *f = &out->fit;

    derive_brief(out, out->pts, out->npts, rq, rq->pair_t1_k, rq->pair_t2_k);
    out->coverage = out->cover.p;
    out->k_student = bg_fit_coverage_k(f, rq->coverage);
    GROW(out->table_t_k, rq->ntable, err);
    GROW(out->table_u_k, rq->ntable, err);
    GROW(out->table_U_k, rq->ntable, err);
    GROW(out->checks, rq->ncheck, err);
    out->ntable = rq->ntable;
    for (size_t i = 0; i < out->ntable; i++) {
        out->table_t_k[i] = f->t_min_k + (f->t_max_k - f->t_min_k) * (double)i /
                                             (double)(out->ntable - 1);
        if (bg_fit_u_t(f, out->table_t_k[i], &out->table_u_k[i], NULL, NULL) != BG_OK)
            out->table_u_k[i] = NAN;
        out->table_U_k[i] = out->cover.k * out->table_u_k[i];
    }
    out->nchecks = rq->ncheck;
    for (size_t i = 0; i < rq->ncheck; i++) {
        bg_calib_check *c = &out->checks[i];
        bg_error e2 = BG_ERROR_INIT;
        memset(c, 0, sizeof *c);
        c->t_k = rq->check_t_k[i];
        c->ok = bg_model_r_from_t(&f->model, c->t_k, &c->r_ohm, &e2) == BG_OK &&
                bg_fit_u_t(f, c->t_k, &c->u_k, &c->extrapolated, &e2) == BG_OK;
        if (!c->ok) {
            c->r_ohm = c->u_k = NAN;
            memcpy(c->why, e2.msg, sizeof c->why - 1);
        }
        /* outside the range the covariance says nothing about the curve's error */
        c->U_k = c->ok && !c->extrapolated ? out->cover.k * c->u_k : NAN;
    }
    return BG_OK;
}

/* Forget an earlier result's values, keeping its buffers. */
static int result_reset(bg_calib_result *out, const char *source, const char *model,
                        bg_error *err)
{
    size_t len = strlen(source);
    char *s = realloc(out->source, len + 1);
    if (!s)
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    memcpy(s, source, len + 1);
    out->source = s;
    snprintf(out->requested, sizeof out->requested, "%s", model);
    out->npts = out->ntable = out->nchecks = 0;
    out->fit_id = out->run_id = 0;
    out->serial[0] = out->started_at[0] = '\0';
    out->stored = 0, out->same_fit_id = out->run_fit_id = 0, out->ref_overdue[0] = '\0';
    return BG_OK;
}

/* bg_calibrate on points in '*pts' (n of them, from malloc), which 'out' takes as its own:
** '*pts' is then NULL (and out->pts's earlier buffer freed); left as it is on an error before. */
static int calibrate_owned(bg_point **pts, size_t n, const char *source,
                           const bg_calib_request *rq, bg_calib_result *out, bg_error *err)
{
    bg_fitter *fr = NULL;
    bg_fit_opts o;
    int is_auto, rc;

    if ((rc = request_opts(rq, &o, &is_auto, err)) != BG_OK ||
        (rc = result_reset(out, source, rq->model, err)) != BG_OK)
        return rc;
    free(out->pts);
    out->pts = *pts, *pts = NULL;
    out->npts = n;
    apply_default_u(out->pts, n, rq->u_t_default_k);
    if (!(fr = bg_fitter_new()))
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    o.source = out->source;
    if ((rc = too_few(n, out->source, is_auto, &o, err)) != BG_OK) {
        bg_fitter_free(fr);
        return rc;
    }
    rc = fit_model(fr, out->pts, n, &o, is_auto, 1, out, err);
    bg_fitter_free(fr);
    if (rc == BG_OK)
        rc = derive_full(out, rq, err);
    return rc;
}

int bg_calibrate(const bg_point *pts, size_t n, const char *source, const bg_calib_request *rq,
                 bg_calib_result *out, bg_error *err)
{
    bg_point *copy = grow(NULL, n, sizeof *copy);
    int rc;

    if (!copy)
        return bg_error_set(err, BG_ENOMEM, "out of memory: %zu elements", n);
    if (n)
        memcpy(copy, pts, n * sizeof *pts);
    rc = calibrate_owned(&copy, n, source ? source : "points", rq, out, err);
    free(copy);
    return rc;
}

/* A readings file as points: the readings streamed from the file (the rows, with their time
** and note, are never all held in memory), and what the callers check on the whole file. */
struct file_points {
    bg_point *pts;       /* 'n' points, room for 'cap' */
    size_t n, cap;
    int quantity;        /* the file's quantity (bg_readings.quantity) */
    int ref_ohms;        /* the reference is a resistance (bg_readings.ref_ohms) */
    double excite0_a;    /* the first reading's excitation current, and its line */
    size_t line0;
    double bad_a;        /* the first reading whose current differs, and its line (0: none) */
    size_t bad_line;
};

/* Read 'path' into 'fp' (released by the caller with free(fp->pts) whatever the outcome): every
** reading is parsed and checked as bg_csv_read_file does, with its messages. */
static int read_points(const char *path, struct file_points *fp, bg_error *err)
{
    bg_csv_reader *rd = NULL;
    const bg_reading *r;
    int rc, has_excite;

    memset(fp, 0, sizeof *fp);
    if ((rc = bg_csv_reader_open(path, 0, &rd, err)) != BG_OK)
        return rc;
    fp->quantity = bg_csv_reader_shape(rd)->quantity;
    fp->ref_ohms = bg_csv_reader_shape(rd)->ref_ohms;
    has_excite = bg_csv_reader_shape(rd)->has_excite;
    while ((rc = bg_csv_reader_next(rd, &r, err)) == BG_OK && r) {
        if (fp->n == fp->cap) {
            /* not realloc: a mapping split by the hint cannot be moved, and realloc would
            ** copy into pages that fault one by one */
            size_t cap = fp->cap ? 2 * fp->cap : 64;
            bg_point *p = cap > SIZE_MAX / sizeof *p ? NULL : malloc(cap * sizeof *p);
            if (!p) {
                rc = bg_error_set(err, BG_ENOMEM, "out of memory reading '%s'",
                                  bg_csv_reader_name(rd));
                break;
            }
            bgi_mem_hint_huge(p, cap * sizeof *p);
            if (fp->n)
                memcpy(p, fp->pts, fp->n * sizeof *p);
            free(fp->pts);
            fp->pts = p, fp->cap = cap;
        }
        if (fp->n == 0)
            fp->excite0_a = r->excite_a, fp->line0 = r->pt.line;
        else if (has_excite && !fp->bad_line &&
                 fabs(r->excite_a - fp->excite0_a) > 1e-6 * fp->excite0_a)
            fp->bad_a = r->excite_a, fp->bad_line = r->pt.line;
        fp->pts[fp->n++] = r->pt;
    }
    bg_csv_reader_free(rd);
    return rc;
}

/* A junction is calibrated at one constant current: an excitation current that changes from
** reading to reading (by more than 1e-6 relative) is refused, naming the line. */
static int same_excitation(const struct file_points *fp, const char *path, bg_error *err)
{
    if (fp->bad_line)
        return bg_error_set(err, BG_EINVAL, "%s:%zu: field 'excite_a': %g A, but line %zu "
                            "has %g A: a junction's model holds at one constant current; "
                            "calibrate each current apart", path, fp->bad_line, fp->bad_a,
                            fp->line0, fp->excite0_a);
    return BG_OK;
}

int bg_calibrate_file(const char *path, const bg_calib_request *rq, bg_calib_result *out,
                      bg_error *err)
{
    struct file_points fp;
    int rc;

    if ((rc = read_points(path, &fp, err)) != BG_OK)
        ;
    else if (fp.ref_ohms)
        rc = bg_error_set(err, BG_EINVAL, "%s: column 'ref_ohms' needs the reference "
                          "thermometer's Callendar-Van Dusen or ITS-90 coefficients: import the file with "
                          "'bandgap import FILE --probe SERIAL --ref ID'", path);
    else if ((rc = same_excitation(&fp, path, err)) == BG_OK) {
        bg_calib_request q = *rq;
        q.quantity = fp.quantity;
        rc = calibrate_owned(&fp.pts, fp.n, strcmp(path, "-") == 0 ? "<stdin>" : path, &q, out,
                             err);
    }
    free(fp.pts);
    return rc;
}

int bg_calibrate_file_split(const char *path, const bg_calib_request *rq, double bound_k,
                            bg_fit_ranges *out, bg_error *err)
{
    struct file_points fp;
    bg_calib_request q = *rq;
    bg_fitter *fr = NULL;
    bg_fit_opts o;
    int rc, is_auto = 0;

    memset(out, 0, sizeof *out);
    if ((rc = read_points(path, &fp, err)) != BG_OK) {
        free(fp.pts);
        return rc;
    }
    q.quantity = fp.quantity;
    if (fp.ref_ohms)
        rc = bg_error_set(err, BG_EINVAL, "%s: column 'ref_ohms' needs the reference "
                          "thermometer's coefficients: import the file first", path);
    else if ((rc = same_excitation(&fp, path, err)) == BG_OK &&
             (rc = request_opts(&q, &o, &is_auto, err)) == BG_OK && is_auto)
        rc = bg_error_set(err, BG_EINVAL, "fitting in ranges needs a named model (e.g. "
                          "cheb:5), not 'auto'");
    if (rc == BG_OK && !(fr = bg_fitter_new()))
        rc = bg_error_set(err, BG_ENOMEM, "out of memory");
    if (rc == BG_OK) {
        apply_default_u(fp.pts, fp.n, q.u_t_default_k);
        o.source = strcmp(path, "-") == 0 ? "<stdin>" : path;
        rc = bg_fit_split(fr, fp.pts, fp.n, &o, bound_k, out, err);
    }
    bg_fitter_free(fr);
    free(fp.pts);
    return rc;
}

/* The override of run 'run' (its reference used past its due date) as the result's record
** and a note of its fit, so that every printer of the fit shows it. */
static int note_ref_overdue(bg_calib_result *out, const bg_run *run, bg_error *err)
{
    bg_fit *f = &out->fit;
    /* the reason in full is the run's ('bandgap show run N'); a long one is cut here */
    snprintf(out->ref_overdue, sizeof out->ref_overdue, "reference '%.40s' used past its due "
             "date %.24s (run %lld): %.100s%s", run->ref_ident, run->ref_due_date, run->id,
             run->ref_overdue, strlen(run->ref_overdue) > 100 ? "..." : "");
    if (f->nnotes == f->notecap) {
        size_t cap = f->notecap ? 2 * f->notecap : 8;
        bg_note *nn = realloc(f->notes, cap * sizeof *nn);
        if (!nn)
            return bg_error_set(err, BG_ENOMEM, "out of memory");
        f->notes = nn, f->notecap = cap;
    }
    bg_note *nt = &f->notes[f->nnotes++];
    nt->kind = BG_NOTE_REF_OVERDUE, nt->line = 0;
    _Static_assert(sizeof nt->msg == sizeof out->ref_overdue, "a note holds the record");
    memcpy(nt->msg, out->ref_overdue, sizeof nt->msg);
    return BG_OK;
}

/* Store the fit of 'out' for run 'run_id' unless it is a preview or the run has an identical
** fit already; then the run's chosen fit.  One write transaction, so that the comparison and
** the write see the same fits. */
static int store_probe_fit(bg_store *st, long long run_id, const bg_store_points *sp,
                           unsigned flags, bg_calib_result *out, bg_error *err)
{
    int dry = (flags & BG_CALIB_DRY_RUN) != 0, rc;
    if (!dry && (rc = bg_store_begin(st, err)) != BG_OK)
        return rc;
    rc = bg_store_fit_find_same(st, run_id, &out->fit, sp->ids, &out->same_fit_id, err);
    if (rc == BG_OK && !dry && (!out->same_fit_id || (flags & BG_CALIB_STORE_SAME))) {
        if ((rc = bg_store_fit_save(st, run_id, &out->fit, sp->ids, &out->fit_id, err)) == BG_OK)
            out->stored = 1;
    } else if (rc == BG_OK && !dry)
        out->fit_id = out->same_fit_id;
    if (rc == BG_OK)
        rc = bg_store_run_fit(st, run_id, &out->run_fit_id, err);
    if (!dry && rc == BG_OK)
        rc = bg_store_commit(st, err);
    else if (!dry)
        bg_store_rollback(st);
    return rc;
}

int bg_calibrate_probe(bg_store *st, const char *serial, long long run_id,
                       const bg_calib_request *rq, bg_calib_result *out, bg_error *err)
{
    bg_store_points sp = BG_STORE_POINTS_INIT;
    bg_probe probe;
    bg_run run;
    char source[64];
    int rc;

    if ((rc = bg_store_probe_get(st, serial, &probe, err)) != BG_OK)
        return rc;
    if (run_id == 0 && (rc = bg_store_run_latest(st, probe.id, &run_id, err)) != BG_OK) {
        bg_error_prefix(err, "probe '%s'", serial);
        return rc;
    }
    if ((rc = bg_store_run_get(st, run_id, &run, err)) != BG_OK)
        return rc;
    if (run.probe_id != probe.id)
        return bg_error_set(err, BG_EINVAL, "run %lld belongs to probe '%s', not '%s'", run_id,
                            run.serial, serial);
    if ((rc = bg_store_run_points(st, run_id, &sp, err)) != BG_OK)
        goto done;
    snprintf(source, sizeof source, "run %lld", run_id);
    bg_calib_request q = *rq;
    q.quantity = run.quantity; /* the model must read what the run measured */
    if ((rc = bg_calibrate(sp.pts, sp.n, source, &q, out, err)) != BG_OK ||
        (run.ref_overdue[0] && (rc = note_ref_overdue(out, &run, err)) != BG_OK) ||
        (rc = store_probe_fit(st, run_id, &sp, rq->store_flags, out, err)) != BG_OK)
        goto done;
    out->run_id = run_id;
    snprintf(out->serial, sizeof out->serial, "%s", probe.serial);
    snprintf(out->started_at, sizeof out->started_at, "%s", run.started_at);
done:
    bg_store_points_release(&sp);
    return rc;
}

/* ---- a whole lot -------------------------------------------------------------------------- */

/* What the lot's runs held before the pass: the runs whose current fit exists (only they can
** already have an identical fit) and the runs imported with a reference past its due date. */
struct lot_prior {
    long long *fitted;     /* ascending run ids */
    size_t nfitted, capf;
    bg_run *overdue;       /* ascending by id */
    size_t noverdue, capo;
    struct run_qty { long long id; int quantity; } *qty; /* the runs that hold no resistance,
                                                         ** ascending by id */
    size_t nqty, capq;
    int oom;               /* a list could not grow: the pass must not go on */
};

/* Probes waiting to be fitted as one batch (a named model): the same number of points each,
** their rows, runs, points and reading ids copied, since the store's are valid during its
** callback only.  The buffers grow to LOT_BATCH probes once and are reused. */
#define LOT_BATCH 256
struct lot_batch {
    size_t count, n;             /* probes waiting, points each */
    size_t row[LOT_BATCH];       /* their rows in the lot */
    long long run[LOT_BATCH];
    char source[LOT_BATCH][32];  /* "run N" */
    const char *sources[LOT_BATCH];
    bg_point *pts;               /* LOT_BATCH * cap_n */
    long long *ids;
    size_t cap_n;
    bg_fit fits[LOT_BATCH];
    bg_error errs[LOT_BATCH];
};

struct lot_pass {
    struct lot_prior prior;
    struct lot_batch *batch;     /* NULL: "auto", one probe at a time */
    bg_store *st;
    const bg_calib_request *rq;
    bg_fit_opts o;
    int is_auto;
    bg_fitter *fr;
    bg_calib_result one;   /* reused for every probe */
    bg_calib_lot *out;
    size_t nprobes;
    int rc;
    bg_error *err;
};

/* A new row at the end of the lot's table, or NULL when out of memory. */
static bg_calib_lot_row *lot_row(bg_calib_lot *out, bg_error *err)
{
    if (out->nrows == out->cap) {
        size_t cap = out->cap ? 2 * out->cap : 64;
        bg_calib_lot_row *r = grow(out->rows, cap, sizeof *r);
        if (!r) {
            bg_error_set(err, BG_ENOMEM, "out of memory: %zu probes", cap);
            return NULL;
        }
        out->rows = r, out->cap = cap;
    }
    memset(&out->rows[out->nrows], 0, sizeof out->rows[0]);
    return &out->rows[out->nrows++];
}

/* Keep the warnings of the fit just made for 'row'. */
static int lot_notes(bg_calib_lot *out, bg_calib_lot_row *row, const bg_fit *fit, bg_error *err)
{
    row->note0 = out->nnotes, row->nnotes = fit->nnotes;
    if (out->nnotes + fit->nnotes > out->notecap) {
        size_t cap = 2 * (out->nnotes + fit->nnotes);
        bg_note *v = grow(out->notes, cap, sizeof *v);
        if (!v)
            return bg_error_set(err, BG_ENOMEM, "out of memory: %zu warnings", cap);
        out->notes = v, out->notecap = cap;
    }
    if (fit->nnotes)
        memcpy(&out->notes[out->nnotes], fit->notes, fit->nnotes * sizeof *fit->notes);
    out->nnotes += fit->nnotes;
    return BG_OK;
}

/* The row of a probe whose fit failed: the message is kept. */
static int lot_failed(struct lot_pass *lp, bg_calib_lot_row *row, const bg_error *e2)
{
    size_t len = strlen(e2->msg);
    row->status = BG_CALIB_FAILED;
    lp->out->nfailed++;
    if (!(row->why = malloc(len + 1)))
        return lp->rc = bg_error_set(lp->err, BG_ENOMEM, "out of memory");
    memcpy(row->why, e2->msg, len + 1);
    return 0;
}

/* One probe of the lot: fit its points and queue the fit, or note why not.  Returns non-zero
** to stop the pass (an error in 'lp->rc'). */
static int cmp_id(const void *a, const void *b)
{
    long long x = *(const long long *)a, y = *(const long long *)b;
    return (x > y) - (x < y);
}

static int prior_fitted(const char *serial, const bg_fit_row *fit, void *ctx)
{
    struct lot_prior *p = ctx;
    (void)serial;
    if (!fit)
        return 0;
    if (p->nfitted == p->capf) {
        size_t cap = p->capf ? 2 * p->capf : 64;
        long long *v = grow(p->fitted, cap, sizeof *v);
        if (!v)
            return (p->oom = 1);
        p->fitted = v, p->capf = cap;
    }
    p->fitted[p->nfitted++] = fit->run_id;
    return 0;
}

static int prior_overdue(const bg_run *run, void *ctx)
{
    struct lot_prior *p = ctx;
    if (run->quantity != BG_QTY_RESISTANCE) {
        if (p->nqty == p->capq) {
            size_t cap = p->capq ? 2 * p->capq : 8;
            struct run_qty *v = grow(p->qty, cap, sizeof *v);
            if (!v)
                return (p->oom = 1);
            p->qty = v, p->capq = cap;
        }
        p->qty[p->nqty].id = run->id, p->qty[p->nqty++].quantity = run->quantity;
    }
    if (!run->ref_overdue[0])
        return 0;
    if (p->noverdue == p->capo) {
        size_t cap = p->capo ? 2 * p->capo : 8;
        bg_run *v = grow(p->overdue, cap, sizeof *v);
        if (!v)
            return (p->oom = 1);
        p->overdue = v, p->capo = cap;
    }
    p->overdue[p->noverdue++] = *run;
    return 0;
}

/* Two passes of one query each, before the fits: no query per probe. */
static int lot_prior_load(bg_store *st, const char *lot_code, struct lot_prior *p, bg_error *err)
{
    int rc = bg_store_lot_latest_fits(st, lot_code, NULL, prior_fitted, p, err);
    if (rc == BG_OK)
        rc = bg_store_run_each(st, NULL, lot_code, prior_overdue, p, err);
    if (rc == BG_OK && p->oom)
        rc = bg_error_set(err, BG_ENOMEM, "out of memory reading lot '%s'", lot_code);
    if (p->nfitted) /* qsort and bsearch need a base even for no elements */
        qsort(p->fitted, p->nfitted, sizeof *p->fitted, cmp_id);
    if (p->noverdue)
        qsort(p->overdue, p->noverdue, sizeof *p->overdue, cmp_id); /* 'id' is bg_run's first */
    if (p->nqty)
        qsort(p->qty, p->nqty, sizeof *p->qty, cmp_id); /* 'id' is run_qty's first */
    return rc;
}

static void lot_prior_release(struct lot_prior *p)
{
    free(p->fitted);
    free(p->overdue);
    free(p->qty);
}

/* Queue the probe's fit, or, when its run already has an identical one, name that one. */
static int lot_store_one(struct lot_pass *lp, long long run_id, const bg_store_points *sp,
                         bg_calib_lot_row *row)
{
    long long same = 0;
    if (lp->prior.nfitted &&
        bsearch(&run_id, lp->prior.fitted, lp->prior.nfitted, sizeof run_id, cmp_id)) {
        int rc = bg_store_fit_find_same(lp->st, run_id, &lp->one.fit, sp->ids, &same, lp->err);
        if (rc != BG_OK)
            return rc;
    }
    if (same) {
        row->fit_id = same, row->identical = 1;
        lp->out->nidentical++;
        return BG_OK;
    }
    return bg_store_fit_queue(lp->st, run_id, &lp->one.fit, sp->ids, &row->fit_id, lp->err);
}

/* The probe of row 'ri' fitted into lp->one.fit: its notes, its fit queued, the row. */
static int lot_fitted(struct lot_pass *lp, size_t ri, long long run_id, const bg_point *pts,
                      size_t n, const long long *ids)
{
    bg_calib_lot *out = lp->out;
    bg_calib_lot_row *row = &out->rows[ri];
    bg_store_points sp = { (bg_point *)pts, (long long *)ids, n, n };
    row->status = BG_CALIB_FITTED;
    const bg_run *od = lp->prior.noverdue ? bsearch(&run_id, lp->prior.overdue,
                                                     lp->prior.noverdue,
                                                     sizeof *lp->prior.overdue, cmp_id)
                                          : NULL;
    if ((od && (lp->rc = note_ref_overdue(&lp->one, od, lp->err)) != BG_OK) ||
        (lp->rc = lot_notes(out, row, &lp->one.fit, lp->err)) != BG_OK ||
        (lp->rc = lot_store_one(lp, run_id, &sp, row)) != BG_OK)
        return 1;
    derive_brief(&lp->one, pts, n, lp->rq, out->lot.pair_t1_k, out->lot.pair_t2_k);
    row->model = lp->one.fit.model;
    row->npar = lp->one.fit.npar, row->n = lp->one.fit.n;
    row->rms_mk = lp->one.fit.rms_mk, row->max_abs_mk = lp->one.fit.max_abs_mk;
    row->u_max_k = lp->one.u_max_k;
    row->cover = lp->one.cover, row->U_max_k = lp->one.U_max_k;
    row->r25_ohm = lp->one.r25_ohm, row->b_k = lp->one.b_pair_k;
    row->b_extrapolated = lp->one.b_pair_extrapolated;
    out->nfitted++;
    return 0;
}

/* Fit the probes waiting in the batch, then finish each in order as a probe fitted alone.
** Returns non-zero to stop the pass (an error in 'lp->rc'). */
static int lot_flush(struct lot_pass *lp)
{
    struct lot_batch *b = lp->batch;
    size_t count = b->count;
    b->count = 0;
    if (count == 0)
        return 0;
    if (bg_fitter_run_batch(lp->fr, b->pts, count, b->n, &lp->o, b->sources, b->fits,
                            b->errs) != BG_OK)
        return (lp->rc = bg_error_set(lp->err, BG_ENOMEM, "out of memory")) != BG_OK;
    for (size_t k = 0; k < count; k++) {
        int stop;
        if (b->errs[k].code != BG_OK) {
            if (lot_failed(lp, &lp->out->rows[b->row[k]], &b->errs[k]) != 0)
                return 1;
            continue;
        }
        /* the batch's fit takes the place of the single result's, buffers and all */
        bg_fit t = lp->one.fit;
        lp->one.fit = b->fits[k], b->fits[k] = t;
        stop = lot_fitted(lp, b->row[k], b->run[k], b->pts + k * b->n, b->n,
                          b->ids + k * b->n);
        t = lp->one.fit, lp->one.fit = b->fits[k], b->fits[k] = t;
        if (stop)
            return 1;
    }
    return 0;
}

/* Queue a probe for the batch (flushing first when it is full or of another shape). */
static int lot_enqueue(struct lot_pass *lp, size_t ri, long long run_id,
                       const bg_store_points *sp)
{
    struct lot_batch *b = lp->batch;
    if (b->count && (b->count == LOT_BATCH || b->n != sp->n) && lot_flush(lp) != 0)
        return 1;
    if (sp->n > b->cap_n) {
        bg_point *p = grow(b->pts, LOT_BATCH * sp->n, sizeof *p);
        if (p)
            b->pts = p;
        long long *ids = grow(b->ids, LOT_BATCH * sp->n, sizeof *ids);
        if (ids)
            b->ids = ids;
        if (!p || !ids)
            return (lp->rc = bg_error_set(lp->err, BG_ENOMEM, "out of memory")) != BG_OK;
        b->cap_n = sp->n;
    }
    size_t k = b->count++;
    b->n = sp->n, b->row[k] = ri, b->run[k] = run_id;
    snprintf(b->source[k], sizeof b->source[k], "run %lld", run_id);
    b->sources[k] = b->source[k];
    if (sp->n) {
        memcpy(b->pts + k * sp->n, sp->pts, sp->n * sizeof *sp->pts);
        memcpy(b->ids + k * sp->n, sp->ids, sp->n * sizeof *sp->ids);
    }
    return 0;
}

static int lot_probe(const char *serial, long long probe_id, long long run_id,
                     bg_store_points *sp, void *p)
{
    struct lot_pass *lp = p;
    bg_calib_lot *out = lp->out;
    bg_calib_lot_row *row;
    bg_error e2 = BG_ERROR_INIT;
    char source[64];
    (void)probe_id;

    lp->nprobes++;
    if (lp->rq->progress &&
        lp->rq->progress(lp->nprobes, (size_t)out->lot.nprobes, lp->rq->progress_ctx) != 0)
        return (lp->rc = bg_error_set(lp->err, BG_EINVAL, "lot '%s': stopped after %zu probes",
                                      out->lot.code, lp->nprobes)) != BG_OK;
    if (!(row = lot_row(out, lp->err)))
        return (lp->rc = BG_ENOMEM) != BG_OK;
    snprintf(row->serial, sizeof row->serial, "%s", serial);
    row->run_id = run_id;
    if (run_id == 0) {
        row->status = BG_CALIB_NO_RUNS;
        out->nnoruns++;
        return 0;
    }
    const struct run_qty *rqty = lp->prior.nqty ? bsearch(&run_id, lp->prior.qty, lp->prior.nqty,
                                                        sizeof *lp->prior.qty, cmp_id) : NULL;
    int quantity = rqty ? rqty->quantity : BG_QTY_RESISTANCE;
    if (quantity != lp->o.quantity) { /* a run of another kind of sensor than the model's */
        bg_error_set(&e2, BG_EINVAL, "run %lld holds readings in %s (column '%s'), but the "
                     "model reads %s (column '%s')", run_id,
                     bg_quantity_unit((bg_quantity)quantity),
                     bg_quantity_column((bg_quantity)quantity),
                     bg_quantity_unit((bg_quantity)lp->o.quantity),
                     bg_quantity_column((bg_quantity)lp->o.quantity));
        return lot_failed(lp, row, &e2) != 0;
    }
    apply_default_u(sp->pts, sp->n, lp->rq->u_t_default_k);
    if (lp->batch)
        return lot_enqueue(lp, out->nrows - 1, run_id, sp);
    snprintf(source, sizeof source, "run %lld", run_id);
    lp->o.source = source;
    if (fit_model(lp->fr, sp->pts, sp->n, &lp->o, lp->is_auto, 0, &lp->one, &e2) != BG_OK)
        return lot_failed(lp, row, &e2) != 0;
    return lot_fitted(lp, out->nrows - 1, run_id, sp->pts, sp->n, sp->ids);
}

/* The pass over the lot inside the open transaction, and the verdict on it. */
static int lot_pass_run(struct lot_pass *lp, const char *lot_code)
{
    int rc = bg_store_lot_points_each(lp->st, lot_code, lot_probe, lp, lp->err);
    if (rc == BG_OK && lp->rc == BG_OK && lp->batch)
        lot_flush(lp);
    if (rc == BG_OK && lp->rc != BG_OK)
        rc = lp->rc;
    if (rc == BG_OK && lp->out->nfailed)
        rc = bg_error_set(lp->err, BG_EINVAL, "lot '%s': %zu of %zu probes could not be "
                          "fitted; nothing was stored", lot_code, lp->out->nfailed, lp->nprobes);
    return rc;
}

static void lot_batch_free(struct lot_batch *b)
{
    if (!b)
        return;
    for (size_t k = 0; k < LOT_BATCH; k++)
        bg_fit_release(&b->fits[k]);
    free(b->pts);
    free(b->ids);
    free(b);
}

int bg_calibrate_lot(bg_store *st, const char *lot_code, const bg_calib_request *rq,
                     bg_calib_lot *out, bg_error *err)
{
    struct lot_pass lp;
    bg_calib_request q = *rq;
    bg_model named;
    int rc, in_tx = 0;

    bg_calib_lot_release(out);
    memset(&lp, 0, sizeof lp);
    lp.st = st, lp.rq = &q, lp.out = out, lp.err = err;
    out->rule = request_rule(rq);
    bg_calib_result_init(&lp.one);
    /* a named model reads its own quantity: each probe's run must hold it (lot_probe) */
    if (q.model && strcmp(q.model, "auto") != 0 && bg_model_parse(q.model, &named, NULL) == BG_OK)
        q.quantity = (int)bg_model_quantity(&named);
    if ((rc = request_opts(&q, &lp.o, &lp.is_auto, err)) != BG_OK)
        return rc;
    if (!(lp.fr = bg_fitter_new()) || (!lp.is_auto && !(lp.batch = calloc(1, sizeof *lp.batch))))
    {
        bg_fitter_free(lp.fr);
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    }
    if ((rc = bg_store_lot_get(st, lot_code, &out->lot, err)) != BG_OK)
        goto done;
    if (out->lot.nprobes == 0) {
        rc = bg_error_set(err, BG_EINVAL, "lot '%s' has no probes (add them with 'bandgap "
                          "probe add SERIAL --lot %s')", lot_code, lot_code);
        goto done;
    }
    /* One transaction for the whole lot: all fits are stored, or none. */
    if ((rc = bg_store_begin(st, err)) != BG_OK)
        goto done;
    in_tx = 1;
    if ((rc = lot_prior_load(st, lot_code, &lp.prior, err)) != BG_OK)
        goto done;
    if (lp.is_auto && lp.prior.nqty) { /* "auto" compares the kinds of the lot's runs' quantity */
        q.quantity = lp.prior.qty[0].quantity;
        if ((rc = request_opts(&q, &lp.o, &lp.is_auto, err)) != BG_OK)
            goto done;
    }
    if ((rc = lot_pass_run(&lp, lot_code)) == BG_OK) {
        in_tx = 0; /* a failed commit has rolled back */
        rc = bg_store_commit(st, err);
    }
done:
    if (in_tx)
        bg_store_rollback(st);
    out->stored = rc == BG_OK;
    for (size_t i = 0; i < out->nrows && !out->stored; i++)
        out->rows[i].fit_id = 0, out->rows[i].identical = 0;
    bg_calib_result_release(&lp.one);
    bg_fitter_free(lp.fr);
    lot_batch_free(lp.batch);
    lot_prior_release(&lp.prior);
    return rc;
}
