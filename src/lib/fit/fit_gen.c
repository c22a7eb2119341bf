/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The fit of the kinds that are not 1/T = sum a_i L^i (PTC, platinum, junction, IC sensor,
** Chebyshev): least squares in temperature, the residual of reading i being
** T_i - T(x_i; c).  A kind linear in its coefficients as T = h(x) + sum c_j phi_j(x) is solved
** by one weighted linear fit (the Gauss-Newton step that follows is zero to rounding and gives
** the covariance); a kind linear as x = sum c_j phi_j(T) starts from the linear fit of x and
** goes on by Gauss-Newton on the temperature residuals with step halving, the Jacobian
** dT/dc = -(dx/dc)/(dx/dT) from the kind (implicit function).  The covariance is
** (J^T W J)^-1 at the solution, scaled as the NTC fit's (fit.c); everything after the solution
** (statistics, studentized residuals, notes) is bgi_fit_finish's, shared with the NTC kinds. */
#include <math.h>
#include <string.h>

#include "bandgap/fit.h"
#include "fit_int.h"

#define MAXB BG_MODEL_MAXPAR

/* Fitted temperatures into fr->tm at the model 'm' and the weighted chi2; +inf when the model
** cannot be evaluated at a reading. */
static double gen_chi2(bg_fitter *fr, const bg_point *pts, size_t n, const bg_model *m)
{
    double s = 0.0;
    for (size_t i = 0; i < n; i++) {
        if (bg_model_t_from_x(m, pts[i].r_ohm, &fr->tm[i], NULL) != BG_OK)
            return INFINITY;
        double r = (pts[i].t_k - fr->tm[i]) / fr->u[i];
        s += r * r;
    }
    return s;
}

/* The weighted Jacobian dT/dc / u into fr->A (column-major) and the weighted residuals into
** fr->b; the rows g / T^2 into fr->G, as the leverages of fit.c read them. */
static int gen_jacobian(bg_fitter *fr, const bg_point *pts, size_t n, const bg_model *m,
                        size_t np)
{
    double g[MAXB];
    for (size_t i = 0; i < n; i++) {
        if (bg_model_grad_t(m, pts[i].r_ohm, g, NULL) != BG_OK)
            return BG_ENUM;
        for (size_t j = 0; j < np; j++) {
            fr->A[j * n + i] = g[j] / fr->u[i];
            fr->G[i * np + j] = g[j] / (fr->tm[i] * fr->tm[i]);
        }
        fr->b[i] = (pts[i].t_k - fr->tm[i]) / fr->u[i];
    }
    return BG_OK;
}

/* The linear start: coefficients of 'm' from the kind's linear form. */
static int gen_start(bg_fitter *fr, const bg_point *pts, size_t n, const bg_fit_opts *o,
                     bg_model *m, bg_error *err)
{
    size_t np = bg_model_npar(m);
    int in_x = bg_model_lin_form(m) == 1;
    double phi[MAXB], scale[MAXB], work[MAXB], h;
    char name[16];
    bg_linfit lf;

    for (size_t i = 0; i < n; i++) {
        /* in x: rows phi(x)/u, target (T - h(x))/u; in T: rows phi(T), target x (unweighted:
        ** the weights in x are not known before the slope is) */
        bg_model_lin_row(m, in_x ? pts[i].r_ohm : pts[i].t_k, phi, &h);
        double w = in_x ? 1.0 / fr->u[i] : 1.0;
        for (size_t j = 0; j < np; j++)
            fr->A[j * n + i] = phi[j] * w;
        fr->b[i] = (in_x ? pts[i].t_k - h : pts[i].r_ohm) * w;
    }
    bg_model_name(m, name, sizeof name);
    if (bgi_lin_qr(fr->A, fr->b, n, np, o->min_rcond, scale, work, &lf) != BG_OK)
        return bg_error_set(err, BG_EINVAL, "model '%s': the design is rank-deficient or "
                            "ill-conditioned for these points (reciprocal condition %.2g, "
                            "limit %.2g): too many coefficients for the range, or no readings "
                            "where a coefficient acts?", name, lf.rcond, o->min_rcond);
    if (bg_model_from_lin(m, lf.c, err) != BG_OK) {
        bg_error_prefix(err, "model '%s'", name);
        return BG_EINVAL;
    }
    return BG_OK;
}

/* Gauss-Newton with step halving on the temperature residuals from the coefficients of 'm';
** leaves the solution in 'm', fr->tm, fr->G, and the covariance in 'lf'. */
static int gen_refine(bg_fitter *fr, const bg_point *pts, size_t n, const bg_fit_opts *o,
                      bg_model *m, bg_linfit *lf, unsigned *iters)
{
    size_t np = bg_model_npar(m);
    double scale[MAXB], work[MAXB], s = gen_chi2(fr, pts, n, m), prev_dmax = INFINITY;

    if (!isfinite(s))
        return BG_ENUM;
    for (unsigned it = 1; it <= o->max_iter; it++) {
        bg_linfit step;
        bg_model trial = *m;
        double cmax = 0.0, dmax = 0.0, st = INFINITY, lambda = 1.0;
        if (gen_jacobian(fr, pts, n, m, np) != BG_OK ||
            bgi_lin_qr(fr->A, fr->b, n, np, o->min_rcond, scale, work, &step) != BG_OK)
            return BG_ENUM;
        *lf = step;
        for (size_t j = 0; j < np; j++) {
            cmax = fmax(cmax, fabs(m->coef[j]) * scale[j]);
            dmax = fmax(dmax, fabs(step.c[j]) * scale[j]);
        }
        int small = dmax <= 1e-6 * cmax;
        for (int half = 0; half < 40; half++, lambda *= 0.5) {
            for (size_t j = 0; j < np; j++)
                trial.coef[j] = m->coef[j] + lambda * step.c[j];
            st = gen_chi2(fr, pts, n, &trial);
            if (st <= s || (small && isfinite(st)))
                break;
        }
        *iters = it;
        int taken = st <= s || (small && isfinite(st));
        if (taken)
            *m = trial, s = st;
        int stalled = small && dmax > 0.5 * prev_dmax;
        prev_dmax = dmax;
        if (!taken || lambda * dmax <= o->xtol * cmax || stalled) {
            /* the covariance and the rows at the solution itself */
            gen_chi2(fr, pts, n, m);
            if (gen_jacobian(fr, pts, n, m, np) != BG_OK ||
                bgi_lin_qr(fr->A, fr->b, n, np, 0.0, scale, work, lf) != BG_OK)
                return BG_ENUM;
            for (size_t j = 0; j < np; j++)
                lf->c[j] = m->coef[j];
            return BG_OK;
        }
    }
    return BG_ENUM;
}

/* u(T) of each reading: its u_t, and its u(x) through the slope dT/dx of the start. */
static void gen_weights(bg_fitter *fr, const bg_point *pts, size_t n, int weighted,
                        const bg_model *m)
{
    for (size_t i = 0; i < n; i++) {
        double ut = weighted ? (pts[i].u_t_k > 0.0 ? pts[i].u_t_k : 1.0) : 1.0, d;
        if (m && weighted && pts[i].u_r_ohm > 0.0 &&
            bg_model_dtdx(m, pts[i].r_ohm, &d, NULL) == BG_OK) {
            double ux = d * pts[i].u_r_ohm;
            ut = sqrt(pts[i].u_t_k * pts[i].u_t_k + ux * ux);
        }
        fr->u[i] = ut;
    }
}

int bgi_fit_generic(bg_fitter *fr, const bg_point *pts, size_t n, const bg_fit_opts *o,
                    bg_fit *out, bg_error *err)
{
    bg_fit_opts oo = *o;
    struct bgi_solution sol = { .iters = 0, .weighted = 0, .with_leverages = 1 };
    double xmin = INFINITY, xmax = -INFINITY;
    char name[16];
    int rc, any_ux = 0;

    for (size_t i = 0; i < n; i++) {
        xmin = fmin(xmin, pts[i].r_ohm), xmax = fmax(xmax, pts[i].r_ohm);
        any_ux |= pts[i].u_r_ohm > 0.0;
    }
    bg_model_fit_params(&oo.model, xmin, xmax);
    bg_model_name(&oo.model, name, sizeof name);
    if ((rc = bg_model_check_params(&oo.model, err)) != BG_OK ||
        (rc = bgi_fit_check(fr, pts, n, &oo, &sol.weighted, out, err)) != BG_OK)
        return rc;
    gen_weights(fr, pts, n, sol.weighted, NULL);
    if ((rc = gen_start(fr, pts, n, &oo, &oo.model, err)) != BG_OK)
        return rc;
    if (sol.weighted && any_ux) {
        gen_weights(fr, pts, n, sol.weighted, &oo.model);
        if ((rc = gen_start(fr, pts, n, &oo, &oo.model, err)) != BG_OK)
            return rc;
    }
    if (gen_refine(fr, pts, n, &oo, &oo.model, &sol.lf, &sol.iters) != BG_OK)
        return bg_error_set(err, BG_ENUM, "model '%s': the least squares in temperature did "
                            "not converge in %u iterations (or the curve cannot be evaluated "
                            "at a reading)", name, o->max_iter);
    return bgi_fit_finish(fr, pts, n, &oo, &sol, out, err);
}
