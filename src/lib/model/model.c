/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* R-T models.  Steinhart & Hart, Deep-Sea Research 15 (1968) 497-503; the sh3 inverse is the
** real root of the depressed cubic C L^3 + B L + (A - 1/T) = 0 by Cardano's formula, then one
** Newton step to polish it.  Other inverses: Newton on L safeguarded by bisection inside a
** bracket, stopped when the step is below 1e-14 in L (1e-14 relative in R). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "bandgap/model.h"
#include "bandgap/reference.h"
#include "bandgap/units.h"

#define L_LOWEST  (-20.7) /* ln(1e-9 ohm) */
#define L_HIGHEST 59.9    /* ln(1e26 ohm) */

int bg_model_parse(const char *name, bg_model *m, bg_error *err)
{
    memset(m, 0, sizeof *m);
    m->t0_k = BG_T0_DEFAULT_K;
    if (strcmp(name, "sh3") == 0)
        m->kind = BG_MODEL_SH3;
    else if (strcmp(name, "sh4") == 0)
        m->kind = BG_MODEL_SH4;
    else if (strcmp(name, "beta") == 0)
        m->kind = BG_MODEL_BETA;
    else if (strncmp(name, "poly:", 5) == 0 && name[5] >= '1' && name[5] <= '5' && !name[6]) {
        m->kind = BG_MODEL_POLY;
        m->degree = (unsigned)(name[5] - '0');
    } else
        return bg_error_set(err, BG_EINVAL,
                            "unknown model '%s' (known: sh3, sh4, beta, poly:1 .. poly:5)", name);
    return BG_OK;
}

size_t bg_model_npar(const bg_model *m)
{
    switch (m->kind) {
    case BG_MODEL_SH3: return 3;
    case BG_MODEL_SH4: return 4;
    case BG_MODEL_BETA: return 2;
    default: return m->degree + 1;
    }
}

char *bg_model_name(const bg_model *m, char *buf, size_t size)
{
    switch (m->kind) {
    case BG_MODEL_SH3: snprintf(buf, size, "sh3"); break;
    case BG_MODEL_SH4: snprintf(buf, size, "sh4"); break;
    case BG_MODEL_BETA: snprintf(buf, size, "beta"); break;
    default: snprintf(buf, size, "poly:%u", m->degree); break;
    }
    return buf;
}

const char *bg_model_coef_name(const bg_model *m, size_t i)
{
    static const char *abcd[] = { "A", "B", "C", "D" };
    static const char *poly[] = { "a0", "a1", "a2", "a3", "a4", "a5" };
    static const char *beta[] = { "R0", "beta" };
    if (i >= bg_model_npar(m))
        return "?";
    switch (m->kind) {
    case BG_MODEL_BETA: return beta[i];
    case BG_MODEL_POLY: return poly[i];
    default: return abcd[i];
    }
}

int bg_model_set_coef(bg_model *m, const double *coef, size_t n, bg_error *err)
{
    char name[16];
    size_t np = bg_model_npar(m);

    if (n != np)
        return bg_error_set(err, BG_EINVAL, "model '%s' takes %zu coefficients, got %zu",
                            bg_model_name(m, name, sizeof name), np, n);
    for (size_t i = 0; i < n; i++)
        if (!isfinite(coef[i]))
            return bg_error_set(err, BG_EINVAL, "coefficient '%s' is not a finite number",
                                bg_model_coef_name(m, i));
    if (m->kind == BG_MODEL_BETA && !(coef[0] > 0.0 && coef[1] > 0.0))
        return bg_error_set(err, BG_EINVAL, "beta model needs R0 > 0 and beta > 0");
    memset(m->coef, 0, sizeof m->coef);
    memcpy(m->coef, coef, n * sizeof coef[0]);
    return BG_OK;
}

void bg_model_inv_poly(const bg_model *m, double a[BG_MODEL_MAXPAR])
{
    memset(a, 0, BG_MODEL_MAXPAR * sizeof a[0]);
    switch (m->kind) {
    case BG_MODEL_SH3:
        a[0] = m->coef[0], a[1] = m->coef[1], a[3] = m->coef[2];
        break;
    case BG_MODEL_BETA:
        a[1] = 1.0 / m->coef[1];
        a[0] = 1.0 / m->t0_k - log(m->coef[0]) * a[1];
        break;
    default:
        memcpy(a, m->coef, bg_model_npar(m) * sizeof a[0]);
        break;
    }
}

/* f(L) = 1/T and f'(L) by Horner's rule. */
static double poly_eval(const double a[BG_MODEL_MAXPAR], double L, double *dfdl)
{
    double f = a[5], d = 0.0;
    for (int i = BG_MODEL_MAXPAR - 2; i >= 0; i--) {
        d = d * L + f;
        f = f * L + a[i];
    }
    if (dfdl)
        *dfdl = d;
    return f;
}

int bg_model_t_from_r(const bg_model *m, double r_ohm, double *t_k, bg_error *err)
{
    double a[BG_MODEL_MAXPAR], inv_t;

    if (!(r_ohm > 0.0) || !isfinite(r_ohm))
        return bg_error_set(err, BG_EINVAL, "resistance %g ohm: must be a finite number > 0",
                            r_ohm);
    bg_model_inv_poly(m, a);
    inv_t = poly_eval(a, log(r_ohm), NULL);
    if (!(inv_t > 0.0) || !isfinite(inv_t))
        return bg_error_set(err, BG_EINVAL,
                            "resistance %g ohm: outside the model's range (1/T = %g 1/K)",
                            r_ohm, inv_t);
    *t_k = 1.0 / inv_t;
    return BG_OK;
}

/* Solve f(L) = y for L: Newton safeguarded by bisection inside a bracket.  The bracket is grown
** from a first guess until f changes sign, within L_LOWEST .. L_HIGHEST. */
static int solve_l(const double a[BG_MODEL_MAXPAR], double y, double guess, double *l_out)
{
    double lo, hi, flo, fhi, x, step = 0.5;

    if (!isfinite(guess) || guess < L_LOWEST || guess > L_HIGHEST)
        guess = 9.0;
    lo = guess - step, hi = guess + step;
    flo = poly_eval(a, lo, NULL) - y, fhi = poly_eval(a, hi, NULL) - y;
    while (flo * fhi > 0.0) {
        step *= 2.0;
        if (lo <= L_LOWEST && hi >= L_HIGHEST)
            return BG_EINVAL;
        /* NTC: f rises with L, so both ends above y means the root lies below 'lo'.  Move
        ** that end while it can move, otherwise the other one. */
        int move_lo = (flo > 0.0) ? lo > L_LOWEST : !(hi < L_HIGHEST);
        if (move_lo)
            lo = fmax(L_LOWEST, lo - step), flo = poly_eval(a, lo, NULL) - y;
        else
            hi = fmin(L_HIGHEST, hi + step), fhi = poly_eval(a, hi, NULL) - y;
    }
    if (flo == 0.0) { *l_out = lo; return BG_OK; }
    if (fhi == 0.0) { *l_out = hi; return BG_OK; }
    x = (guess > lo && guess < hi) ? guess : 0.5 * (lo + hi);
    for (int it = 0; it < 200; it++) {
        double d, fx = poly_eval(a, x, &d) - y, nx;
        if (fx == 0.0) {
            *l_out = x;
            return BG_OK;
        }
        if ((fx < 0.0) == (flo < 0.0))
            lo = x, flo = fx;
        else
            hi = x;
        nx = (d != 0.0) ? x - fx / d : NAN;
        if (!(nx > lo && nx < hi))
            nx = 0.5 * (lo + hi);
        if (fabs(nx - x) <= 1e-14 * fmax(1.0, fabs(x))) {
            x = nx;
            *l_out = x;
            return BG_OK;
        }
        x = nx;
        if (hi - lo <= 1e-14 * fmax(1.0, fabs(x)))
            break;
    }
    *l_out = x;
    return (hi - lo <= 1e-12 * fmax(1.0, fabs(x))) ? BG_OK : BG_ENUM;
}

/* L at temperature 't_k' for any model. */
static int l_from_t(const bg_model *m, double t_k, double *l_out, bg_error *err)
{
    double a[BG_MODEL_MAXPAR], y, L = NAN;
    int rc;

    if (!(t_k > 0.0) || !isfinite(t_k))
        return bg_error_set(err, BG_EINVAL, "temperature %g K: must be a finite number > 0",
                            t_k);
    y = 1.0 / t_k;
    bg_model_inv_poly(m, a);
    if (m->kind == BG_MODEL_BETA) {
        *l_out = log(m->coef[0]) + m->coef[1] * (y - 1.0 / m->t0_k);
        return BG_OK;
    }
    if (m->kind == BG_MODEL_SH3 && m->coef[2] > 0.0 && m->coef[1] > 0.0) {
        /* Newton from the root without the cubic term: A + B L + C L^3 is increasing, and
        ** for real thermistors C L^3 is a few per cent of B L, so a few steps reach the root
        ** to rounding (cheaper than the cube roots below, which remain the fallback). */
        double A = m->coef[0], B = m->coef[1], C = m->coef[2];
        L = (y - A) / B;
        L = (y - A - C * L * L * L) / B; /* one fixed-point step folds the cubic term in */
        for (int it = 0; it < 8; it++) {
            double d = B + 3.0 * C * L * L, step = (A + B * L + C * L * L * L - y) / d;
            L -= step;
            /* the error left after a Newton step is about f''/(2 f') step^2 */
            if (fabs(3.0 * C * L / d) * step * step <= 1e-17 * fabs(L) + 1e-300) {
                *l_out = L;
                return BG_OK;
            }
        }
    }
    if (m->kind == BG_MODEL_SH3 && m->coef[2] > 0.0) {
        double A = m->coef[0], B = m->coef[1], C = m->coef[2];
        double x = (A - y) / C, q = B / (3.0 * C);
        double s = sqrt(q * q * q + 0.25 * x * x);
        double d;
        L = cbrt(s - 0.5 * x) - cbrt(s + 0.5 * x);
        /* One Newton step removes the cancellation error of the difference of cube roots. */
        d = B + 3.0 * C * L * L;
        if (isfinite(L) && d > 0.0)
            L -= (A + B * L + C * L * L * L - y) / d;
        if (isfinite(L)) {
            *l_out = L;
            return BG_OK;
        }
    } else if (m->kind == BG_MODEL_SH3 && m->coef[2] == 0.0 && m->coef[1] != 0.0) {
        *l_out = (y - m->coef[0]) / m->coef[1];
        return BG_OK;
    }
    if (a[1] > 0.0)
        L = (y - a[0]) / a[1]; /* first guess from the linear part */
    rc = solve_l(a, y, L, l_out);
    if (rc == BG_EINVAL)
        return bg_error_set(err, BG_EINVAL,
                            "temperature %g K: no resistance in 1e-9 .. 1e26 ohm gives it", t_k);
    if (rc != BG_OK)
        return bg_error_set(err, BG_ENUM, "temperature %g K: inverse did not converge", t_k);
    return BG_OK;
}

int bg_model_r_from_t(const bg_model *m, double t_k, double *r_ohm, bg_error *err)
{
    double L;
    int rc = l_from_t(m, t_k, &L, err);
    if (rc != BG_OK)
        return rc;
    if (!(L > L_LOWEST && L < L_HIGHEST))
        return bg_error_set(err, BG_EINVAL,
                            "temperature %g K: no resistance in 1e-9 .. 1e26 ohm gives it", t_k);
    *r_ohm = exp(L);
    return BG_OK;
}

int bg_model_dtdr(const bg_model *m, double r_ohm, double *dtdr, bg_error *err)
{
    double a[BG_MODEL_MAXPAR], d, t_k;
    int rc = bg_model_t_from_r(m, r_ohm, &t_k, err);
    if (rc != BG_OK)
        return rc;
    bg_model_inv_poly(m, a);
    poly_eval(a, log(r_ohm), &d);
    /* 1/T = f(L)  =>  dT/dR = -T^2 f'(L) / R */
    *dtdr = -t_k * t_k * d / r_ohm;
    return BG_OK;
}

int bg_model_beta_local(const bg_model *m, double t_k, double *beta_k, bg_error *err)
{
    double a[BG_MODEL_MAXPAR], L, d;
    int rc = l_from_t(m, t_k, &L, err);
    if (rc != BG_OK)
        return rc;
    bg_model_inv_poly(m, a);
    poly_eval(a, L, &d);
    if (d == 0.0)
        return bg_error_set(err, BG_EINVAL, "temperature %g K: the model is flat there", t_k);
    *beta_k = 1.0 / d;
    return BG_OK;
}

int bg_model_alpha(const bg_model *m, double t_k, double *alpha_per_k, bg_error *err)
{
    double beta;
    int rc = bg_model_beta_local(m, t_k, &beta, err);
    if (rc != BG_OK)
        return rc;
    *alpha_per_k = -beta / (t_k * t_k);
    return BG_OK;
}

int bg_model_b_pair(const bg_model *m, double t1_k, double t2_k, double *b_k, bg_error *err)
{
    double l1, l2;
    int rc;

    if (t1_k == t2_k)
        return bg_error_set(err, BG_EINVAL, "B value needs two different temperatures");
    if ((rc = l_from_t(m, t1_k, &l1, err)) != BG_OK || (rc = l_from_t(m, t2_k, &l2, err)) != BG_OK)
        return rc;
    *b_k = (l1 - l2) / (1.0 / t1_k - 1.0 / t2_k);
    return BG_OK;
}

int bg_model_parse_pair(const char *s, double *t1_k, double *t2_k, bg_error *err)
{
    char a[64], b[64];
    const char *slash = strchr(s, '/');
    size_t n;

    if (!slash || strchr(slash + 1, '/'))
        return bg_error_set(err, BG_EINVAL, "'%s': a B pair is written T1/T2, e.g. 25/85", s);
    n = (size_t)(slash - s);
    if (n == 0 || n >= sizeof a || strlen(slash + 1) >= sizeof b || !slash[1])
        return bg_error_set(err, BG_EINVAL, "'%s': a B pair is written T1/T2, e.g. 25/85", s);
    memcpy(a, s, n);
    a[n] = '\0';
    strcpy(b, slash + 1);
    /* In a B-pair a bare number means degC: "B25/85" is the trade's notation. */
    if (bg_units_parse_temp(a, BG_UNIT_C, t1_k, err) != BG_OK ||
        bg_units_parse_temp(b, BG_UNIT_C, t2_k, err) != BG_OK) {
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

int bg_model_grad_inv_t(const bg_model *m, double r_ohm, double *g, bg_error *err)
{
    double L;
    size_t np = bg_model_npar(m);
    if (!(r_ohm > 0.0) || !isfinite(r_ohm))
        return bg_error_set(err, BG_EINVAL, "resistance %g ohm: must be a finite number > 0",
                            r_ohm);
    L = log(r_ohm);
    switch (m->kind) {
    case BG_MODEL_SH3:
        g[0] = 1.0, g[1] = L, g[2] = L * L * L;
        break;
    case BG_MODEL_BETA: {
        /* 1/T = 1/T0 + (L - ln R0) / beta */
        double r0 = m->coef[0], beta = m->coef[1];
        g[0] = -1.0 / (beta * r0);
        g[1] = -(L - log(r0)) / (beta * beta);
        break;
    }
    default: {
        double p = 1.0;
        for (size_t i = 0; i < np; i++, p *= L)
            g[i] = p;
        break;
    }
    }
    return BG_OK;
}

int bg_model_u_t(const bg_model *m, const double *cov, double t_k, double *u_k, bg_error *err)
{
    double r, g[BG_MODEL_MAXPAR], s = 0.0;
    size_t np = bg_model_npar(m);
    int rc = bg_model_r_from_t(m, t_k, &r, err);
    if (rc == BG_OK)
        rc = bg_model_grad_inv_t(m, r, g, err);
    if (rc != BG_OK)
        return rc;
    for (size_t i = 0; i < np; i++)
        for (size_t j = 0; j < np; j++)
            s += g[i] * cov[i * np + j] * g[j];
    *u_k = s >= 0.0 ? t_k * t_k * sqrt(s) : NAN;
    return BG_OK;
}
