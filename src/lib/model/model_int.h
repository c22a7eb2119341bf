/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Inside the model module: the model type (one const struct per kind, one file each, one row
** in model.c's table) and the evaluation shared by the kinds of the form 1/T = sum a_i L^i. */
#ifndef BANDGAP_MODEL_INT_H
#define BANDGAP_MODEL_INT_H

#include <stddef.h>

#include "bandgap/model.h"

#define BGI_L_LOWEST  (-20.7) /* ln(1e-9 ohm) */
#define BGI_L_HIGHEST 59.9    /* ln(1e26 ohm) */

/* A kind of model.  The dispatchers in model.c check their arguments (R and T finite and
** > 0, the number of coefficients, finite coefficients) before calling a slot, and hand each
** slot the model whose 'type' is this entry.  Slots marked "or NULL" have a default. */
struct bg_model_type {
    const char *name;      /* "sh3"; the family for parameterised kinds ("poly") */
    const char *spelling;  /* as listed among the known models: "sh3", "poly:1 .. poly:5" */
    const char *formula;   /* in L = ln(R / 1 ohm) and T in K */
    unsigned flags;        /* BG_MODEL_HAS_T0 ... */

    /* 1 if 'name' names this kind, after setting the kind's own fields of '*m' ('degree');
    ** or NULL: 'name' equals 'name' above. */
    int (*parse)(const char *name, bg_model *m);
    /* The model's full name ("poly:4") into 'buf'; or NULL: 'name' above. */
    void (*write_name)(const bg_model *m, char *buf, size_t size);
    size_t (*npar)(const bg_model *m);
    const char *(*coef_name)(const bg_model *m, size_t i); /* i < npar */
    /* Checks beyond finiteness on 'coef' (npar values) before bg_model_set_coef keeps them;
    ** or NULL: none. */
    int (*check_coef)(const bg_model *m, const double *coef, bg_error *err);

    /* The equivalent 1/T = sum a_i L^i (a[0..5], unused ones 0). */
    void (*inv_poly)(const bg_model *m, double a[BG_MODEL_MAXPAR]);
    /* T(R) in K at 'r_ohm' > 0. */
    int (*t_from_r)(const bg_model *m, double r_ohm, double *t_k, bg_error *err);
    /* L = ln(R / 1 ohm) at 't_k' > 0 (R(T) is exp(L), range-checked by the dispatcher). */
    int (*l_from_t)(const bg_model *m, double t_k, double *l, bg_error *err);
    /* dT/dR in K/ohm at 'r_ohm' > 0. */
    int (*dtdr)(const bg_model *m, double r_ohm, double *dtdr_k_per_ohm, bg_error *err);
    /* Local beta = 1 / (d(1/T)/dL) in K at 't_k' > 0; alpha = -beta / T^2 follows from it. */
    int (*beta_local)(const bg_model *m, double t_k, double *beta_k, bg_error *err);
    /* Gradient of 1/T with respect to the coefficients at L, into g[0 .. npar-1]. */
    void (*grad_inv_t)(const bg_model *m, double L, double *g);

    /* The linear basis: the powers of L (see bg_model_basis); 0 when there is none. */
    size_t (*basis)(const bg_model *m, unsigned pw[BG_MODEL_MAXPAR]);
    /* Basis coefficients and covariance to the model's (see bg_model_from_basis); or NULL:
    ** they are the model's coefficients. */
    void (*from_basis)(bg_model *m, const double *c, const double *cov_c, double *cov);

    /* ---- Kinds other than 1/T = sum a_i L^i (NULL for those) ---- */
    bg_quantity quantity;  /* what the kind reads (0: resistance) */
    int direction;         /* -1: the reading falls as T rises, +1 rises (0: -1, the NTC) */
    /* The kind's parameters beyond T0 (stored in m->par[i]), NULL-terminated; or NULL. */
    const char *const *params;
    /* BG_OK when the parameters are usable (a ratio p > 1, an x range of width > 0). */
    int (*check_params)(const bg_model *m, bg_error *err);
    /* Names a comparison tries for this kind's quantity and direction, NULL-terminated. */
    const char *const *candidates;
    /* The kind's function, one of two forms (the other NULL):
    ** xfun: x = f(T; c) at 't_k' > 0, with df/dT and, unless 'dxdc' is NULL, df/dc
    **       (npar values); T(x) is solved for by bgi_solve_t.
    ** tfun: T = g(x; c) at reading 'x', with dg/dx and, unless 'dtdc' is NULL, dg/dc; x(T)
    **       is solved for from the first guess 'x_guess' gives.
    ** Each returns BG_OK, or BG_EINVAL where the model is not defined. */
    int (*xfun)(const bg_model *m, double t_k, double *x, double *dxdt, double *dxdc);
    int (*tfun)(const bg_model *m, double x, double *t_k, double *dtdx, double *dtdc);
    double (*x_guess)(const bg_model *m, double t_k);
    /* The start of the fit: the kind is linear in 'lin_npar' basis coefficients either as
    ** T = sum c_j phi_j(x) (lin_in_x 1: a linear least-squares fit in temperature is the
    ** whole fit) or as x = sum c_j phi_j(T) (lin_in_x 0: a linear fit of x starts the
    ** nonlinear least squares in temperature).  'lin_row' writes phi(v) for v = x or T;
    ** 'from_lin' turns the basis coefficients into the model's (NULL: they are the same). */
    int lin_in_x;
    void (*lin_row)(const bg_model *m, double v, double *phi);
    int (*from_lin)(bg_model *m, const double *c, bg_error *err);
    /* Whether reading 'x' lies in the kind's domain (a resistance > 0); or NULL: any finite. */
    int (*x_ok)(const bg_model *m, double x);
    /* Of a T = g(x) kind: the part of T with no coefficient in it, h(x) (T = h(x) +
    ** sum c_j phi_j(x)); or NULL: none. */
    double (*lin_fixed)(const bg_model *m, double x);
    /* Parameters the fit sets from the readings (a Chebyshev series' x range), given the
    ** smallest and largest reading; or NULL. */
    void (*fit_params)(bg_model *m, double x_min, double x_max);
    /* Quantities derived from the coefficients (see bg_model_derived); or NULL. */
    size_t (*derived)(const bg_model *m, const double *cov, double t_min_k, double t_max_k,
                      bg_derived *out, size_t max);
};

/* The kinds, one file each (the table is in model.c). */
extern const bg_model_type bgi_model_sh3, bgi_model_sh4, bgi_model_beta, bgi_model_poly;
extern const bg_model_type bgi_model_ptc, bgi_model_ptc_lin, bgi_model_cvd, bgi_model_cvd2;
extern const bg_model_type bgi_model_vbe, bgi_model_dvbe, bgi_model_ic, bgi_model_ic_code;
extern const bg_model_type bgi_model_cheb;

/* CODATA 2018 (the 2019 SI): k and e are exact. */
#define BGI_K_BOLTZMANN 1.380649e-23  /* J/K */
#define BGI_Q_ELEMENTARY 1.602176634e-19 /* C */
#define BGI_K_OVER_Q (BGI_K_BOLTZMANN / BGI_Q_ELEMENTARY) /* V/K */



/* f(L) = sum a_i L^i and f'(L) by Horner's rule. */
static inline double bgi_poly_eval(const double a[BG_MODEL_MAXPAR], double L, double *dfdl)
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

/* The slots of a kind of the form 1/T = sum a_i L^i, given its a[] (invpoly.c).  'r_ohm' and
** 't_k' are checked by the caller.  bgi_invpoly_l_from_t solves by Newton safeguarded by
** bisection, from the first guess 'guess' (NAN: from the linear part). */
int bgi_invpoly_t_from_r(const double a[BG_MODEL_MAXPAR], double r_ohm, double *t_k,
                         bg_error *err);
int bgi_invpoly_l_from_t(const double a[BG_MODEL_MAXPAR], double t_k, double *l,
                         bg_error *err);
int bgi_invpoly_dtdr(const double a[BG_MODEL_MAXPAR], double r_ohm, double *dtdr,
                     bg_error *err);
int bgi_invpoly_beta_local(const double a[BG_MODEL_MAXPAR], double L, double t_k,
                           double *beta_k, bg_error *err);

/* Slots shared by the kinds whose coefficients are the a_i of their basis (sh3, sh4, poly):
** gradient and basis from the powers 'pw' the kind writes. */
void bgi_invpoly_grad(const unsigned *pw, size_t nb, double L, double *g);

#endif
