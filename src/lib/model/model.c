/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The table of model types and the public bg_model_* functions, which check their arguments
** and dispatch to the kind's slots (one file per kind: sh3.c, sh4.c, beta.c, poly.c); the B
** pair and the platinum reference equation. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "bandgap/reference.h"
#include "bandgap/units.h"
#include "model_int.h"

/* The kinds of model, in the order the unknown-model message lists them.  A new kind is one
** file defining its bg_model_type and one row here. */
static const bg_model_type *const model_types[] = {
    &bgi_model_sh3,
    &bgi_model_sh4,
    &bgi_model_beta,
    &bgi_model_poly,
    &bgi_model_ptc,
    &bgi_model_ptc_lin,
    &bgi_model_cvd,
    &bgi_model_cvd2,
    &bgi_model_vbe,
    &bgi_model_dvbe,
    &bgi_model_ic,
    &bgi_model_ic_code,
    &bgi_model_cheb,
};
#define NTYPES (sizeof model_types / sizeof model_types[0])

size_t bg_model_type_count(void)
{
    return NTYPES;
}

const bg_model_type *bg_model_type_at(size_t i)
{
    return i < NTYPES ? model_types[i] : NULL;
}

const char *bg_model_type_name(const bg_model_type *t)
{
    return t->name;
}

/* A model without a type (zeroed) is of the table's first kind, sh3. */
static const bg_model_type *type_of(const bg_model *m)
{
    return m->type ? m->type : model_types[0];
}

const bg_model_type *bg_model_type_of(const bg_model *m)
{
    return type_of(m);
}

const char *bg_model_formula(const bg_model *m)
{
    return type_of(m)->formula;
}

unsigned bg_model_flags(const bg_model *m)
{
    const bg_model_type *t = type_of(m);
    return t->flags | (t->inv_poly ? BG_MODEL_INV_POLY : 0u) |
           (t->from_basis ? 0u : BG_MODEL_BASIS_COEF);
}

int bg_model_parse(const char *name, bg_model *m, bg_error *err)
{
    char known[sizeof err->msg];
    size_t len = 0;

    memset(m, 0, sizeof *m);
    m->t0_k = BG_T0_DEFAULT_K;
    for (size_t i = 0; i < NTYPES; i++) {
        const bg_model_type *t = model_types[i];
        if (t->parse ? t->parse(name, m) : strcmp(name, t->name) == 0) {
            m->type = t;
            return BG_OK;
        }
    }
    /* The list is as long as the message it goes into can show. */
    known[0] = '\0';
    for (size_t i = 0; i < NTYPES && len < sizeof known; i++)
        len += (size_t)snprintf(known + len, sizeof known - len, "%s%s", i ? ", " : "",
                                model_types[i]->spelling);
    return bg_error_set(err, BG_EINVAL, "unknown model '%s' (known: %s)", name, known);
}

size_t bg_model_npar(const bg_model *m)
{
    return type_of(m)->npar(m);
}

char *bg_model_name(const bg_model *m, char *buf, size_t size)
{
    const bg_model_type *t = type_of(m);
    if (t->write_name)
        t->write_name(m, buf, size);
    else if (size > 0) { /* as snprintf would, without parsing a format once per fit */
        size_t n = strlen(t->name);
        n = n < size - 1 ? n : size - 1;
        memcpy(buf, t->name, n);
        buf[n] = '\0';
    }
    return buf;
}

const char *bg_model_coef_name(const bg_model *m, size_t i)
{
    const bg_model_type *t = type_of(m);
    return i < t->npar(m) ? t->coef_name(m, i) : "?";
}

int bg_model_set_coef(bg_model *m, const double *coef, size_t n, bg_error *err)
{
    const bg_model_type *t = type_of(m);
    char name[16];
    size_t np = t->npar(m);
    int rc;

    if (n != np)
        return bg_error_set(err, BG_EINVAL, "model '%s' takes %zu coefficients, got %zu",
                            bg_model_name(m, name, sizeof name), np, n);
    for (size_t i = 0; i < n; i++)
        if (!isfinite(coef[i]))
            return bg_error_set(err, BG_EINVAL, "coefficient '%s' is not a finite number",
                                t->coef_name(m, i));
    if (t->check_coef && (rc = t->check_coef(m, coef, err)) != BG_OK)
        return rc;
    memset(m->coef, 0, sizeof m->coef);
    memcpy(m->coef, coef, n * sizeof coef[0]);
    return BG_OK;
}

static const char *non_finite_word(double v)
{
    return isnan(v) ? "NaN" : v > 0 ? "+Inf" : "-Inf";
}

int bg_model_check_finite(const bg_model *m, const double *cov, bg_error *err)
{
    const bg_model_type *t = type_of(m);
    size_t np = t->npar(m);
    for (size_t i = 0; i < np; i++)
        if (!isfinite(m->coef[i]))
            return bg_error_set(err, BG_EINVAL, "coefficient '%s' came out as %s, not a finite "
                                "number: the computation overflowed", t->coef_name(m, i),
                                non_finite_word(m->coef[i]));
    for (size_t i = 0; cov && i < np * np; i++)
        if (!isfinite(cov[i]))
            return bg_error_set(err, BG_EINVAL, "the covariance of '%s' and '%s' came out as "
                                "%s, not a finite number: the computation overflowed",
                                t->coef_name(m, i / np), t->coef_name(m, i % np),
                                non_finite_word(cov[i]));
    return BG_OK;
}

void bg_model_inv_poly(const bg_model *m, double a[BG_MODEL_MAXPAR])
{
    if (type_of(m)->inv_poly)
        type_of(m)->inv_poly(m, a);
    else
        for (size_t i = 0; i < BG_MODEL_MAXPAR; i++)
            a[i] = NAN; /* not of that form */
}

static int check_r(double r_ohm, bg_error *err)
{
    if (!(r_ohm > 0.0) || !isfinite(r_ohm))
        return bg_error_set(err, BG_EINVAL, "resistance %g ohm: must be a finite number > 0",
                            r_ohm);
    return BG_OK;
}

static int check_t(double t_k, bg_error *err)
{
    if (!(t_k > 0.0) || !isfinite(t_k))
        return bg_error_set(err, BG_EINVAL, "temperature %g K: must be a finite number > 0",
                            t_k);
    return BG_OK;
}

/* A result that is not a finite number is an error, never a value: coefficients that are
** finite one by one can still overflow together (A = 1e300 in sh3 gives 1/T = 1e300). */
static int finite_at(int rc, double v, const char *what, const char *unit, double at,
                     const char *at_unit, bg_error *err)
{
    if (rc == BG_OK && !isfinite(v))
        return bg_error_set(err, BG_EINVAL, "%s at %g %s is not a finite number (%g %s): the "
                            "model overflows there", what, at, at_unit, v, unit);
    return rc;
}

/* A quantity of the NTC kinds asked of another kind. */
static int not_inv_poly(const bg_model *m, const char *what, bg_error *err)
{
    char name[16];
    return bg_error_set(err, BG_EINVAL, "%s is defined for the NTC kinds (1/T in ln R), not "
                        "for model '%s'", what, bg_model_name(m, name, sizeof name));
}

static const char *const qty_column[BG_QTY_COUNT] = { "ohms", "volts", "reported_c", "code" };
static const char *const qty_unit[BG_QTY_COUNT] = { "ohm", "V", "degC", "LSB" };
static const char *const qty_symbol[BG_QTY_COUNT] = { "R", "V", "T_rep", "N" };

const char *bg_quantity_column(bg_quantity q)
{
    return (unsigned)q < BG_QTY_COUNT ? qty_column[q] : "?";
}

const char *bg_quantity_unit(bg_quantity q)
{
    return (unsigned)q < BG_QTY_COUNT ? qty_unit[q] : "?";
}

const char *bg_quantity_symbol(bg_quantity q)
{
    return (unsigned)q < BG_QTY_COUNT ? qty_symbol[q] : "?";
}

bg_quantity bg_model_quantity(const bg_model *m)
{
    return type_of(m)->quantity;
}

int bg_model_direction(const bg_model *m)
{
    return type_of(m)->direction ? type_of(m)->direction : -1;
}

size_t bg_model_nparam(const bg_model *m)
{
    size_t n = 0;
    const char *const *p = type_of(m)->params;
    while (p && p[n])
        n++;
    return n;
}

const char *bg_model_param_name(const bg_model *m, size_t i)
{
    return i < bg_model_nparam(m) ? type_of(m)->params[i] : "?";
}

double bg_model_param(const bg_model *m, size_t i)
{
    return i < bg_model_nparam(m) ? m->par[i] : NAN;
}

int bg_model_set_param(bg_model *m, const char *name, double value, bg_error *err)
{
    char kn[16], list[200] = "";
    size_t np = bg_model_nparam(m), len = 0;
    for (size_t i = 0; i < np; i++)
        if (strcmp(name, type_of(m)->params[i]) == 0) {
            if (!isfinite(value))
                return bg_error_set(err, BG_EINVAL, "parameter '%s' must be a finite number",
                                    name);
            m->par[i] = value;
            return BG_OK;
        }
    for (size_t i = 0; i < np && len < sizeof list; i++)
        len += (size_t)snprintf(list + len, sizeof list - len, "%s%s", i ? ", " : "",
                                type_of(m)->params[i]);
    return bg_error_set(err, BG_EINVAL, "model '%s' has no parameter '%s' (%s%s)",
                        bg_model_name(m, kn, sizeof kn), name, np ? "its parameters: " :
                        "it has none beyond T0", list);
}

int bg_model_check_params(const bg_model *m, bg_error *err)
{
    const bg_model_type *t = type_of(m);
    return t->check_params ? t->check_params(m, err) : BG_OK;
}

size_t bg_model_candidates(bg_quantity q, int dir, const char **names, size_t max)
{
    size_t n = 0;
    for (size_t i = 0; i < NTYPES; i++) {
        const bg_model_type *t = model_types[i];
        int tdir = t->direction ? t->direction : -1;
        if (t->quantity != q || (dir != 0 && tdir != dir) || !t->candidates)
            continue;
        /* a kind lists the whole family once (the first of the family in the table) */
        int seen = 0;
        for (size_t j = 0; j < i; j++)
            if (model_types[j]->candidates == t->candidates)
                seen = 1;
        for (size_t k = 0; !seen && t->candidates[k]; k++, n++)
            if (n < max)
                names[n] = t->candidates[k];
    }
    return n;
}

/* The reading checked against the kind's domain. */
static int check_x(const bg_model *m, double x, bg_error *err)
{
    const bg_model_type *t = type_of(m);
    if (!isfinite(x))
        return bg_error_set(err, BG_EINVAL, "reading %g %s: must be a finite number", x,
                            qty_unit[t->quantity]);
    if (t->x_ok && !t->x_ok(m, x))
        return bg_error_set(err, BG_EINVAL, "%s %g %s: outside the model's domain",
                            qty_column[t->quantity], x, qty_unit[t->quantity]);
    return BG_OK;
}

/* Solve f(T) = x by Newton's method safeguarded by bisection, in 0.01 .. 5000 K (kinds
** x = f(T), monotonic in the kind's direction over a calibrated range). */
static int solve_t(const bg_model *m, double x, double *t_out, bg_error *err)
{
    const bg_model_type *t = type_of(m);
    double lo = 1.0, hi = 2000.0, flo, fhi, tt, f, d;
    if (t->xfun(m, lo, &flo, &d, NULL) != BG_OK || t->xfun(m, hi, &fhi, &d, NULL) != BG_OK)
        flo = fhi = NAN;
    flo -= x, fhi -= x;
    if (!(flo * fhi <= 0.0))
        return bg_error_set(err, BG_EINVAL, "%s %g %s: no temperature in 1 .. 2000 K gives it "
                            "(or the curve is not monotonic there)", qty_column[t->quantity], x,
                            qty_unit[t->quantity]);
    /* first guess: the secant between the ends, then Newton inside the bracket */
    tt = (flo != fhi) ? lo - flo * (hi - lo) / (fhi - flo) : 0.5 * (lo + hi);
    if (m->t0_k > lo && m->t0_k < hi)
        tt = m->t0_k;
    for (int it = 0; it < 300; it++) {
        double xt, nt;
        if (t->xfun(m, tt, &xt, &d, NULL) != BG_OK)
            return bg_error_set(err, BG_EINVAL, "%s %g %s: the model is not defined on the way "
                                "to it (%g K)", qty_column[t->quantity], x,
                                qty_unit[t->quantity], tt);
        f = xt - x;
        if (f == 0.0)
            break;
        if ((f < 0.0) == (flo < 0.0))
            lo = tt, flo = f;
        else
            hi = tt;
        nt = d != 0.0 ? tt - f / d : NAN;
        if (!(nt > lo && nt < hi))
            nt = 0.5 * (lo + hi);
        if (fabs(nt - tt) <= 1e-14 * tt) {
            tt = nt;
            break;
        }
        tt = nt;
        if (hi - lo <= 1e-14 * tt)
            break;
    }
    *t_out = tt;
    return BG_OK;
}

/* Solve g(x) = T for x (kinds T = g(x)): Newton from the kind's guess, safeguarded by a
** bracket grown from it. */
static int solve_x(const bg_model *m, double t_k, double *x_out, bg_error *err)
{
    const bg_model_type *t = type_of(m);
    double x = t->x_guess(m, t_k), tt, d;
    for (int it = 0; it < 100; it++) {
        if (t->tfun(m, x, &tt, &d, NULL) != BG_OK || !(d != 0.0))
            break;
        double step = (tt - t_k) / d;
        x -= step;
        if (fabs(step) <= 1e-14 * fmax(1.0, fabs(x))) {
            *x_out = x;
            return BG_OK;
        }
    }
    return bg_error_set(err, BG_EINVAL, "temperature %g K: no reading of the model gives it "
                        "(the series is not monotonic there)", t_k);
}

int bg_model_t_from_x(const bg_model *m, double x, double *t_k, bg_error *err)
{
    const bg_model_type *t = type_of(m);
    double v = NAN, d;
    if (!t->xfun && !t->tfun)
        return bg_model_t_from_r(m, x, t_k, err);
    int rc = check_x(m, x, err);
    if (rc == BG_OK)
        rc = t->tfun ? t->tfun(m, x, &v, &d, NULL) : solve_t(m, x, &v, err);
    if (rc != BG_OK && t->tfun)
        rc = bg_error_set(err, BG_EINVAL, "%s %g %s: outside the model's domain",
                          qty_column[t->quantity], x, qty_unit[t->quantity]);
    rc = finite_at(rc, v, "the temperature", "K", x, qty_unit[t->quantity], err);
    if (rc == BG_OK && !(v > 0.0))
        rc = bg_error_set(err, BG_EINVAL, "%s %g %s: the model gives %g K, not above absolute "
                          "zero", qty_column[t->quantity], x, qty_unit[t->quantity], v);
    if (rc == BG_OK)
        *t_k = v;
    return rc;
}

int bg_model_x_from_t(const bg_model *m, double t_k, double *x, bg_error *err)
{
    const bg_model_type *t = type_of(m);
    double v = NAN, d;
    if (!t->xfun && !t->tfun)
        return bg_model_r_from_t(m, t_k, x, err);
    int rc = check_t(t_k, err);
    if (rc == BG_OK && t->xfun && t->xfun(m, t_k, &v, &d, NULL) != BG_OK)
        rc = bg_error_set(err, BG_EINVAL, "temperature %g K: outside the model's domain", t_k);
    else if (rc == BG_OK && t->tfun)
        rc = solve_x(m, t_k, &v, err);
    rc = finite_at(rc, v, "the reading", qty_unit[t->quantity], t_k, "K", err);
    if (rc == BG_OK && check_x(m, v, NULL) != BG_OK)
        rc = bg_error_set(err, BG_EINVAL, "temperature %g K: the model gives %s %g %s, outside "
                          "its domain", t_k, qty_column[t->quantity], v, qty_unit[t->quantity]);
    if (rc == BG_OK)
        *x = v;
    return rc;
}

/* dT/dx and dT/dc at reading 'x' (dtdc may be NULL). */
static int slopes(const bg_model *m, double x, double *dtdx, double *dtdc, bg_error *err)
{
    const bg_model_type *t = type_of(m);
    double tk, v, d, dc[BG_MODEL_MAXPAR];
    size_t np = t->npar(m);
    int rc = bg_model_t_from_x(m, x, &tk, err);
    if (rc != BG_OK)
        return rc;
    if (t->tfun) {
        t->tfun(m, x, &v, dtdx, dtdc);
        return BG_OK;
    }
    t->xfun(m, tk, &v, &d, dc);
    if (d == 0.0)
        return bg_error_set(err, BG_EINVAL, "%s %g %s: the model is flat there",
                            qty_column[t->quantity], x, qty_unit[t->quantity]);
    *dtdx = 1.0 / d;
    for (size_t i = 0; dtdc && i < np; i++)
        dtdc[i] = -dc[i] / d; /* implicit function: dT/dc = -(df/dc) / (df/dT) */
    return BG_OK;
}

int bg_model_dtdx(const bg_model *m, double x, double *dtdx, bg_error *err)
{
    const bg_model_type *t = type_of(m);
    double v = NAN;
    if (!t->xfun && !t->tfun)
        return bg_model_dtdr(m, x, dtdx, err);
    int rc = slopes(m, x, &v, NULL, err);
    rc = finite_at(rc, v, "the slope dT/dx", "K per unit", x, qty_unit[t->quantity], err);
    if (rc == BG_OK)
        *dtdx = v;
    return rc;
}

int bg_model_grad_t(const bg_model *m, double x, double *g, bg_error *err)
{
    const bg_model_type *t = type_of(m);
    size_t np = t->npar(m);
    double tk, d;
    int rc;
    if (t->xfun || t->tfun)
        rc = slopes(m, x, &d, g, err);
    else if ((rc = bg_model_t_from_r(m, x, &tk, err)) == BG_OK) {
        t->grad_inv_t(m, log(x), g);
        for (size_t i = 0; i < np; i++)
            g[i] *= -tk * tk;
    }
    for (size_t i = 0; rc == BG_OK && i < np; i++)
        rc = finite_at(rc, g[i], "the gradient of T", "", x, qty_unit[t->quantity], err);
    return rc;
}

/* alpha = (1/x) dx/dT for a kind read in ohm; not defined for other quantities. */
static int generic_alpha(const bg_model *m, double t_k, double *alpha_per_k, bg_error *err)
{
    double x, d;
    int rc;
    if (type_of(m)->quantity != BG_QTY_RESISTANCE)
        return not_inv_poly(m, "alpha = (1/R) dR/dT", err);
    if ((rc = bg_model_x_from_t(m, t_k, &x, err)) != BG_OK ||
        (rc = bg_model_dtdx(m, x, &d, err)) != BG_OK)
        return rc;
    double a = 1.0 / (x * d);
    if ((rc = finite_at(rc, a, "alpha", "1/K", t_k, "K", err)) != BG_OK)
        return rc;
    *alpha_per_k = a;
    return BG_OK;
}

/* The gradient of 1/T of a kind not of that form: -(dT/dc) / T^2. */
static int generic_grad_inv_t(const bg_model *m, double x, double *g, bg_error *err)
{
    double t;
    int rc = bg_model_t_from_x(m, x, &t, err);
    if (rc == BG_OK)
        rc = bg_model_grad_t(m, x, g, err);
    for (size_t i = 0; rc == BG_OK && i < bg_model_npar(m); i++)
        g[i] = -g[i] / (t * t);
    return rc;
}

/* u(T) = sqrt(g^T cov g), g = dT/dc at x(T). */
static int generic_u_t(const bg_model *m, const double *cov, double t_k, double *u_k,
                       bg_error *err)
{
    double x, g[BG_MODEL_MAXPAR], s = 0.0;
    size_t np = bg_model_npar(m);
    int rc = bg_model_x_from_t(m, t_k, &x, err);
    if (rc == BG_OK)
        rc = bg_model_grad_t(m, x, g, err);
    if (rc != BG_OK)
        return rc;
    for (size_t i = 0; i < np; i++)
        for (size_t j = 0; j < np; j++)
            s += g[i] * cov[i * np + j] * g[j];
    if (!(s >= 0.0))
        return bg_error_set(err, BG_EINVAL, "u(T) at %g K: the covariance gives a variance of "
                            "%g, not a number >= 0", t_k, s);
    *u_k = sqrt(s);
    return BG_OK;
}

int bg_model_t_from_r(const bg_model *m, double r_ohm, double *t_k, bg_error *err)
{
    double t = NAN;
    if (type_of(m)->xfun || type_of(m)->tfun)
        return bg_model_t_from_x(m, r_ohm, t_k, err);
    int rc = check_r(r_ohm, err);
    if (rc == BG_OK)
        rc = type_of(m)->t_from_r(m, r_ohm, &t, err);
    rc = finite_at(rc, t, "the temperature", "K", r_ohm, "ohm", err);
    if (rc == BG_OK && !(t > 0.0))
        rc = bg_error_set(err, BG_EINVAL, "resistance %g ohm: the model gives %g K, not above "
                          "absolute zero", r_ohm, t);
    if (rc == BG_OK)
        *t_k = t;
    return rc;
}

/* L at temperature 't_k' for any model. */
static int l_from_t(const bg_model *m, double t_k, double *l_out, bg_error *err)
{
    int rc = check_t(t_k, err);
    return rc != BG_OK ? rc : type_of(m)->l_from_t(m, t_k, l_out, err);
}

int bg_model_r_from_t(const bg_model *m, double t_k, double *r_ohm, bg_error *err)
{
    double L;
    if (type_of(m)->xfun || type_of(m)->tfun)
        return bg_model_x_from_t(m, t_k, r_ohm, err);
    int rc = l_from_t(m, t_k, &L, err);
    if (rc != BG_OK)
        return rc;
    if (!(L > BGI_L_LOWEST && L < BGI_L_HIGHEST))
        return bg_error_set(err, BG_EINVAL,
                            "temperature %g K: no resistance in 1e-9 .. 1e26 ohm gives it", t_k);
    *r_ohm = exp(L);
    return BG_OK;
}

int bg_model_dtdr(const bg_model *m, double r_ohm, double *dtdr, bg_error *err)
{
    double v = NAN;
    if (type_of(m)->xfun || type_of(m)->tfun)
        return bg_model_dtdx(m, r_ohm, dtdr, err);
    int rc = check_r(r_ohm, err);
    if (rc == BG_OK)
        rc = type_of(m)->dtdr(m, r_ohm, &v, err);
    rc = finite_at(rc, v, "the slope dT/dR", "K/ohm", r_ohm, "ohm", err);
    if (rc == BG_OK)
        *dtdr = v;
    return rc;
}

int bg_model_beta_local(const bg_model *m, double t_k, double *beta_k, bg_error *err)
{
    double v = NAN;
    int rc = check_t(t_k, err);
    if (rc == BG_OK && !type_of(m)->beta_local)
        return not_inv_poly(m, "the local beta", err);
    if (rc == BG_OK)
        rc = type_of(m)->beta_local(m, t_k, &v, err);
    rc = finite_at(rc, v, "the local beta", "K", t_k, "K", err);
    if (rc == BG_OK)
        *beta_k = v;
    return rc;
}

/* alpha = (1/R) dR/dT = dL/dT = -beta / T^2 by the definition of the local beta, whatever
** the kind. */
int bg_model_alpha(const bg_model *m, double t_k, double *alpha_per_k, bg_error *err)
{
    double beta;
    if (type_of(m)->xfun || type_of(m)->tfun)
        return generic_alpha(m, t_k, alpha_per_k, err);
    int rc = bg_model_beta_local(m, t_k, &beta, err);
    double alpha = -beta / (t_k * t_k);
    if ((rc = finite_at(rc, alpha, "alpha", "1/K", t_k, "K", err)) != BG_OK)
        return rc;
    *alpha_per_k = alpha;
    return BG_OK;
}

int bg_model_b_pair(const bg_model *m, double t1_k, double t2_k, double *b_k, bg_error *err)
{
    double l1, l2;
    int rc;

    if (!type_of(m)->l_from_t)
        return not_inv_poly(m, "a B value", err);
    if (t1_k == t2_k)
        return bg_error_set(err, BG_EINVAL, "B value needs two different temperatures");
    if ((rc = l_from_t(m, t1_k, &l1, err)) != BG_OK || (rc = l_from_t(m, t2_k, &l2, err)) != BG_OK)
        return rc;
    double b = (l1 - l2) / (1.0 / t1_k - 1.0 / t2_k);
    if ((rc = finite_at(rc, b, "the B value", "K", t1_k, "K", err)) != BG_OK)
        return rc;
    *b_k = b;
    return BG_OK;
}

int bg_model_grad_inv_t(const bg_model *m, double r_ohm, double *g, bg_error *err)
{
    if (!type_of(m)->grad_inv_t)
        return generic_grad_inv_t(m, r_ohm, g, err);
    int rc = check_r(r_ohm, err);
    if (rc != BG_OK)
        return rc;
    type_of(m)->grad_inv_t(m, log(r_ohm), g);
    for (size_t i = 0; i < type_of(m)->npar(m); i++)
        if ((rc = finite_at(rc, g[i], "the gradient of 1/T", "", r_ohm, "ohm", err)) != BG_OK)
            return rc;
    return BG_OK;
}

size_t bg_model_basis(const bg_model *m, unsigned pw[BG_MODEL_MAXPAR])
{
    return type_of(m)->basis ? type_of(m)->basis(m, pw) : 0;
}

void bg_model_from_basis(bg_model *m, const double *c, const double *cov_c, double *cov)
{
    const bg_model_type *t = type_of(m);
    size_t np = t->npar(m);
    if (t->from_basis) {
        t->from_basis(m, c, cov_c, cov);
        return;
    }
    for (size_t j = 0; j < np; j++)
        m->coef[j] = c[j];
    for (size_t i = 0; i < np * np; i++)
        cov[i] = cov_c[i];
}

int bg_model_parse_pair(const char *s, double *t1_k, double *t2_k, bg_error *err)
{
    const char *slash = strchr(s, '/');
    char *a;
    size_t n;
    int rc;

    if (!slash || strchr(slash + 1, '/') || slash == s || !slash[1])
        return bg_error_set(err, BG_EINVAL, "'%s': a B pair is written T1/T2, e.g. 25/85", s);
    n = (size_t)(slash - s);
    if (!(a = malloc(n + 1))) /* the temperatures may be decimals of any length */
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    memcpy(a, s, n);
    a[n] = '\0';
    /* In a B-pair a bare number means degC: "B25/85" is the trade's notation. */
    rc = bg_units_parse_temp(a, BG_UNIT_C, t1_k, err);
    free(a);
    if (rc != BG_OK || bg_units_parse_temp(slash + 1, BG_UNIT_C, t2_k, err) != BG_OK) {
        bg_error_prefix(err, "B pair '%s'", s);
        return BG_EINVAL;
    }
    if (*t1_k == *t2_k)
        return bg_error_set(err, BG_EINVAL, "'%s': the two temperatures must differ", s);
    return BG_OK;
}

/* IEC 60751 Callendar-Van Dusen equation; t in degC inside. */
double bg_cvd_r_from_t(double r0_ohm, double a, double b, double c, double t_k)
{
    double t = t_k - BG_ZERO_C_K;
    double f = 1.0 + a * t + b * t * t;
    if (t < 0.0)
        f += c * (t - 100.0) * t * t * t;
    return r0_ohm * f;
}

int bg_cvd_t_from_r(double r0_ohm, double a, double b, double c, double r_ohm, double *t_k,
                    bg_error *err)
{
    double w, t, disc;

    if (!(r0_ohm > 0.0) || !(r_ohm > 0.0) || !isfinite(r_ohm))
        return bg_error_set(err, BG_EINVAL, "platinum reference: resistance %g ohm (R0 %g ohm) "
                            "is not usable", r_ohm, r0_ohm);
    w = r_ohm / r0_ohm;
    /* Above 0 degC the equation is quadratic; its root is also the first guess below. */
    disc = a * a - 4.0 * b * (1.0 - w);
    if (b != 0.0 && disc >= 0.0)
        t = (-a + sqrt(disc)) / (2.0 * b);
    else
        t = (w - 1.0) / a;
    if (t < 0.0) {
        for (int it = 0; it < 50; it++) {
            double f = 1.0 + a * t + b * t * t + c * (t - 100.0) * t * t * t - w;
            double d = a + 2.0 * b * t + c * (4.0 * t * t * t - 300.0 * t * t);
            double dt = f / d;
            t -= dt;
            if (fabs(dt) < 1e-10)
                break;
        }
    }
    if (!isfinite(t) || t < -200.0 - 1e-6 || t > 850.0 + 1e-6)
        return bg_error_set(err, BG_EINVAL, "platinum reference: %g ohm is outside -200 .. "
                            "850 degC for R0 = %g ohm", r_ohm, r0_ohm);
    *t_k = t + BG_ZERO_C_K;
    return BG_OK;
}

int bg_model_u_t(const bg_model *m, const double *cov, double t_k, double *u_k, bg_error *err)
{
    double r, g[BG_MODEL_MAXPAR], s = 0.0;
    size_t np = bg_model_npar(m);
    if (type_of(m)->xfun || type_of(m)->tfun)
        return generic_u_t(m, cov, t_k, u_k, err);
    int rc = bg_model_r_from_t(m, t_k, &r, err);
    if (rc == BG_OK)
        rc = bg_model_grad_inv_t(m, r, g, err);
    if (rc != BG_OK)
        return rc;
    for (size_t i = 0; i < np; i++)
        for (size_t j = 0; j < np; j++)
            s += g[i] * cov[i * np + j] * g[j];
    if (!(s >= 0.0))
        return bg_error_set(err, BG_EINVAL, "u(T) at %g K: the covariance gives a variance of "
                            "%g, not a number >= 0", t_k, s);
    double u = t_k * t_k * sqrt(s);
    if ((rc = finite_at(rc, u, "u(T)", "K", t_k, "K", err)) != BG_OK)
        return rc;
    *u_k = u;
    return BG_OK;
}

size_t bg_model_derived(const bg_model *m, const double *cov, double t_min_k, double t_max_k,
                        bg_derived *out, size_t max)
{
    const bg_model_type *t = type_of(m);
    return t->derived ? t->derived(m, cov, t_min_k, t_max_k, out, max) : 0;
}

void bg_model_fit_params(bg_model *m, double x_min, double x_max)
{
    if (type_of(m)->fit_params)
        type_of(m)->fit_params(m, x_min, x_max);
}

int bg_model_lin_form(const bg_model *m)
{
    const bg_model_type *t = type_of(m);
    return t->lin_row ? t->lin_in_x : -1;
}

void bg_model_lin_row(const bg_model *m, double v, double *phi, double *fixed)
{
    const bg_model_type *t = type_of(m);
    t->lin_row(m, v, phi);
    if (fixed)
        *fixed = t->lin_fixed ? t->lin_fixed(m, v) : 0.0;
}

int bg_model_from_lin(bg_model *m, const double *c, bg_error *err)
{
    const bg_model_type *t = type_of(m);
    if (t->from_lin)
        return t->from_lin(m, c, err);
    for (size_t i = 0; i < t->npar(m); i++)
        m->coef[i] = c[i];
    return BG_OK;
}
