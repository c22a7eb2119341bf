/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Models of temperature sensors, evaluated both ways: temperature T in kelvin from the
** measured quantity x (a resistance in ohm, a voltage in V, a reported temperature in degC or
** a code) and back.  Each kind of model is one entry of a table of model types
** (src/lib/model/, one file each); a bg_model points at its type, and the bg_model_*
** functions below dispatch through it.  The NTC kinds (sh3, sh4, beta, poly:N) are, or reduce
** to, 1/T = sum a_i L^i with L = ln(R / 1 ohm) (BG_MODEL_INV_POLY); the others (PTC, platinum,
** junction, IC sensor, Chebyshev) declare their quantity and direction.  The coefficients keep
** the published names and order. */
#ifndef BANDGAP_MODEL_H
#define BANDGAP_MODEL_H

#include <stddef.h>

#include "bandgap/error.h"

#define BG_MODEL_MAXPAR 6
#define BG_MODEL_MAXKP 3 /* kind parameters beyond T0 */
#define BG_T0_DEFAULT_K 298.15 /* 25 degC, the usual reference of R25 and B25/xx */

/* A kind of model: a constant entry of the library's table (opaque; walk the table with
** bg_model_type_count and bg_model_type_at). */
typedef struct bg_model_type bg_model_type;

typedef struct bg_model {
    const bg_model_type *type;     /* set by bg_model_parse; NULL (a zeroed model): sh3 */
    unsigned degree;               /* poly:N: N; 0 for the others */
    double coef[BG_MODEL_MAXPAR];  /* in the order of bg_model_coef_name; R0 in ohm, beta in K */
    double t0_k;                   /* kinds with BG_MODEL_HAS_T0: temperature at which R = R0 */
    double pair_t1_k, pair_t2_k;   /* beta: the pair that names B (B25/85: 298.15, 358.15); 0 = none */
    double par[BG_MODEL_MAXKP];    /* the kind's parameters beyond T0 (not fitted; see
                                   ** bg_model_param_name): the current ratio p of a junction
                                   ** pair, an IC sensor's LSB, a Chebyshev series' x range */
} bg_model;

/* What a model reads (bg_model_quantity). */
typedef enum bg_quantity {
    BG_QTY_RESISTANCE = 0, /* ohm (CSV column 'ohms') */
    BG_QTY_VOLTAGE,        /* V at a stated constant excitation current ('volts') */
    BG_QTY_REPORTED_T,     /* a temperature the device reports, degC ('reported_c') */
    BG_QTY_CODE            /* the device's output code, in its LSB ('code') */
} bg_quantity;
#define BG_QTY_COUNT 4

/* What a kind has beyond its coefficients (bits of bg_model_flags). */
#define BG_MODEL_HAS_T0 (1u << 0)    /* a reference temperature T0 in 't0_k', shown and stored
                                     ** beside the coefficients (beta) */
#define BG_MODEL_R0_BETA (1u << 1)   /* the coefficients are (R0 at T0 in ohm, B in K), so the
                                     ** trade's R25 and B values set them (beta) */
#define BG_MODEL_SLOPE_MONOTONIC (1u << 2) /* d(1/T)/dL is monotonic in L > 0 whatever the
                                     ** coefficients, so the ends of a range decide whether the
                                     ** curve is monotonic inside it (beta, sh3) */

#define BG_MODEL_INV_POLY (1u << 3) /* the kind is 1/T = sum a_i L^i in L = ln(R / 1 ohm) (the NTC
                                     ** kinds): bg_model_inv_poly, _basis, _beta_local and
                                     ** _b_pair apply */
#define BG_MODEL_BASIS_COEF (1u << 4) /* the coefficients are those of the fit's linear basis:
                                     ** bg_model_from_basis copies them and their covariance
                                     ** (every kind but beta) */

/* Number of kinds in the table, and kind 'i' (NULL when 'i' is out of range). */
BG_API size_t bg_model_type_count(void);
BG_API const bg_model_type *bg_model_type_at(size_t i);

/* The kind's name as the table lists it: "sh3", "sh4", "beta", "poly" (poly:N takes N). */
BG_API const char *bg_model_type_name(const bg_model_type *t);

/* The kind of 'm' (never NULL). */
BG_API const bg_model_type *bg_model_type_of(const bg_model *m);

/* The kind's formula as text in L = ln(R / 1 ohm) and T in K ("1/T = A + B L + C L^3"). */
BG_API const char *bg_model_formula(const bg_model *m);

/* The BG_MODEL_HAS_T0 / _R0_BETA / _SLOPE_MONOTONIC bits that hold for the kind of 'm'. */
BG_API unsigned bg_model_flags(const bg_model *m);

/* The powers k of L in the kind's linear basis 1/T = sum c_j L^(pw[j]), into 'pw'; returns
** their number, 0 when the kind has no linear basis.  A weighted linear fit of 1/T on that
** basis gives c_j, which bg_model_from_basis turns into the model's coefficients. */
BG_API size_t bg_model_basis(const bg_model *m, unsigned pw[BG_MODEL_MAXPAR]);

/* From the basis coefficients 'c' and their covariance 'cov_c' (nb x nb, row-major, nb from
** bg_model_basis) set the coefficients of 'm' (the others of coef[] are left alone) and their
** covariance into 'cov' (npar x npar, row-major), propagated to first order. */
BG_API void bg_model_from_basis(bg_model *m, const double *c, const double *cov_c, double *cov);

/* Set '*m' to the model named 'name' ("sh3", "sh4", "beta", "poly:N") with zero coefficients,
** T0 = 298.15 K and no B-pair.  BG_EINVAL for an unknown name, listing the known ones. */
BG_API int bg_model_parse(const char *name, bg_model *m, bg_error *err);

/* Number of coefficients of 'm' (3, 4, 2 or N + 1). */
BG_API size_t bg_model_npar(const bg_model *m);

/* The model's name ("sh3", "poly:4") into 'buf'; returns 'buf'. */
BG_API char *bg_model_name(const bg_model *m, char *buf, size_t size);

/* The name of coefficient 'i' ("A", "R0", "beta", "a2"); "?" when out of range. */
BG_API const char *bg_model_coef_name(const bg_model *m, size_t i);

/* Copy 'n' coefficients into 'm' after checking that 'n' matches the model, every value is
** finite, and for beta that R0 > 0 and beta > 0.  BG_EINVAL otherwise. */
BG_API int bg_model_set_coef(bg_model *m, const double *coef, size_t n, bg_error *err);

/* BG_OK when every coefficient of 'm' and, unless 'cov' is NULL, every entry of its covariance
** (bg_model_npar squared, row-major) is a finite number; otherwise BG_EINVAL naming the first
** that is not (a fit whose numbers overflowed, e.g. from resistances near 1e308 ohm). */
BG_API int bg_model_check_finite(const bg_model *m, const double *cov, bg_error *err);

/* The coefficients a[0..5] of 1/T = sum a_i L^i equivalent to 'm' (unused ones are 0).
** For beta: a0 = 1/T0 - ln(R0)/beta, a1 = 1/beta. */
BG_API void bg_model_inv_poly(const bg_model *m, double a[BG_MODEL_MAXPAR]);

/* The evaluations below never give a value that is not finite: where the model overflows
** (coefficients finite one by one can overflow together) they return BG_EINVAL naming the
** quantity and the point, and leave the output unchanged.
** Temperature (K) at resistance 'r_ohm' > 0.  BG_EINVAL when the model gives 1/T <= 0 there
** (outside any physical range). */
BG_API int bg_model_t_from_r(const bg_model *m, double r_ohm, double *t_k, bg_error *err);

/* Resistance (ohm) at temperature 't_k' > 0: closed form for sh3 (C >= 0) and beta, safeguarded
** Newton on L otherwise, converged to 1e-12 relative in R.  BG_EINVAL when no resistance in
** 1e-9 .. 1e26 ohm gives that temperature, BG_ENUM if the iteration fails. */
BG_API int bg_model_r_from_t(const bg_model *m, double t_k, double *r_ohm, bg_error *err);

/* Slope dT/dR in K/ohm at resistance 'r_ohm'. */
BG_API int bg_model_dtdr(const bg_model *m, double r_ohm, double *dtdr_k_per_ohm, bg_error *err);

/* Temperature coefficient alpha = (1/R) dR/dT in 1/K at 't_k' (negative for an NTC). */
BG_API int bg_model_alpha(const bg_model *m, double t_k, double *alpha_per_k, bg_error *err);

/* Local beta = -T^2 alpha = 1 / (d(1/T)/dL) in K at 't_k'. */
BG_API int bg_model_beta_local(const bg_model *m, double t_k, double *beta_k, bg_error *err);

/* Two-point B value B_{T1/T2} = ln(R1/R2) / (1/T1 - 1/T2) in K.  BG_EINVAL if T1 == T2. */
BG_API int bg_model_b_pair(const bg_model *m, double t1_k, double t2_k, double *b_k,
                           bg_error *err);

/* Parse a B-pair "25/85" (degC) or "298.15K/358.15K" into kelvin. */
BG_API int bg_model_parse_pair(const char *s, double *t1_k, double *t2_k, bg_error *err);

/* Gradient of 1/T with respect to the model's coefficients (in coef order) at resistance
** 'r_ohm', into 'g' (bg_model_npar entries). */
BG_API int bg_model_grad_inv_t(const bg_model *m, double r_ohm, double *g, bg_error *err);

/* Standard uncertainty of the curve at 't_k' from the covariance 'cov' (npar x npar,
** row-major) of the model's coefficients: u(T) = sqrt(g^T cov g) with g from bg_model_grad_t
** at the reading x(T) (for the NTC kinds written T^2 sqrt(h^T cov h), h from
** bg_model_grad_inv_t at R(T)).  BG_EINVAL when g^T cov g is negative (a covariance that is
** not positive semi-definite) or u(T) is not finite. */
BG_API int bg_model_u_t(const bg_model *m, const double *cov, double t_k, double *u_k,
                        bg_error *err);

/* ---- Every kind: the quantity read, its direction, evaluation both ways ---------------- */

/* The quantity 'm' reads, and for a quantity: the readings file's column ("ohms", "volts",
** "reported_c", "code"), its unit ("ohm", "V", "degC", "LSB") and symbol ("R", "V", "T_rep",
** "N"); "?" for a value out of range. */
BG_API bg_quantity bg_model_quantity(const bg_model *m);
BG_API const char *bg_quantity_column(bg_quantity q);
BG_API const char *bg_quantity_unit(bg_quantity q);
BG_API const char *bg_quantity_symbol(bg_quantity q);

/* The direction of the reading as the temperature rises: -1 falls (NTC, junction voltage),
** +1 rises (PTC, platinum, difference of two junctions, IC sensor). */
BG_API int bg_model_direction(const bg_model *m);

/* The kind's parameters beyond its coefficients and T0 (held, not fitted): their number, the
** name of parameter 'i' ("p", "lsb_k", "x_lo", "x_hi"; "?" out of range), its value, and
** setting one by name (BG_EINVAL for an unknown name, listing the kind's, or a value the kind
** refuses).  A parameter the kind needs that is left at 0 is named by bg_model_check_params. */
BG_API size_t bg_model_nparam(const bg_model *m);
BG_API const char *bg_model_param_name(const bg_model *m, size_t i);
BG_API double bg_model_param(const bg_model *m, size_t i);
BG_API int bg_model_set_param(bg_model *m, const char *name, double value, bg_error *err);
BG_API int bg_model_check_params(const bg_model *m, bg_error *err);

/* The kinds that read quantity 'q' with direction 'dir' (0: either), as the names
** bg_model_parse takes, in the order a comparison tries them ("poly:N" kinds at each degree
** the kind suggests); returns their number, at most 'max' written. */
BG_API size_t bg_model_candidates(bg_quantity q, int dir, const char **names, size_t max);

/* Temperature (K) at reading 'x' in the kind's quantity; for the NTC kinds the same as
** bg_model_t_from_r.  BG_EINVAL outside the model's domain (a resistance <= 0, a reading no
** temperature above 0 K gives). */
BG_API int bg_model_t_from_x(const bg_model *m, double x, double *t_k, bg_error *err);

/* The reading at temperature 't_k' (the same as bg_model_r_from_t for the NTC kinds). */
BG_API int bg_model_x_from_t(const bg_model *m, double t_k, double *x, bg_error *err);

/* The slope dT/dx at reading 'x', in K per unit of the quantity. */
BG_API int bg_model_dtdx(const bg_model *m, double x, double *dtdx, bg_error *err);

/* The gradient of T(x) with respect to the coefficients (in coef order) at reading 'x', in K
** per unit of each coefficient, into 'g' (bg_model_npar entries).  For the NTC kinds it is
** -T^2 times bg_model_grad_inv_t; for a kind of the form x = f(T; c) it is
** -(df/dc) / (df/dT) at T(x) (implicit function). */
BG_API int bg_model_grad_t(const bg_model *m, double x, double *g, bg_error *err);

/* A quantity derived from a model's coefficients: a sensor's nominal values (alpha at T0, the
** slope dV/dT at T0), the apparent band-gap voltage beside the published one, a platinum
** thermometer's deviation from the IEC 60751 curve and the class it meets, an IC sensor's
** trims in its LSB. */
typedef struct bg_derived {
    char name[48];     /* "Vg0", "dV/dT at T0", "IEC 60751 class" */
    double value, u;   /* value and standard uncertainty (NaN: none) in 'unit' */
    char unit[16];
    char text[48];     /* a value that is a word (a class: "A"), else "" */
    char note[240];    /* what it is and its source, "" if nothing to add */
} bg_derived;

/* The derived quantities of 'm' with the covariance 'cov' of its coefficients (NULL: no
** uncertainties) over the calibrated range 't_min_k' .. 't_max_k' (the class a platinum
** thermometer meets is judged there): their number, at most 'max' written. */
BG_API size_t bg_model_derived(const bg_model *m, const double *cov, double t_min_k,
                               double t_max_k, bg_derived *out, size_t max);

/* IEC 60751 platinum thermometers: the tolerance of class 'cls' ("AA", "A", "B", "C") at
** 't_c' degC, in K (NaN for another name); and the deviation t_IEC(R(T)) - T at 't_k' of
** the model 'm' (a resistance model) from the standard's nominal curve with R0 'r0_nominal'. */
BG_API double bg_iec60751_tolerance_k(const char *cls, double t_c);
BG_API int bg_iec60751_deviation(const bg_model *m, double r0_nominal, double t_k,
                                 double *dev_k, bg_error *err);

/* Set the parameters the fit takes from the readings (a Chebyshev series' x range) from the
** smallest and largest reading; nothing for other kinds. */
BG_API void bg_model_fit_params(bg_model *m, double x_min, double x_max);

/* Of a kind that is linear in its coefficients after a change of variable: whether T is
** linear in them (1: T = h(x) + sum c_j phi_j(x)) or x is (0: x = sum c_j phi_j(T)); -1 for
** the NTC kinds (bg_model_basis).  bg_model_lin_row writes phi at 'v' (x or T), and h(x) into
** '*fixed' (may be NULL); bg_model_from_lin sets the coefficients from the basis ones. */
BG_API int bg_model_lin_form(const bg_model *m);
BG_API void bg_model_lin_row(const bg_model *m, double v, double *phi, double *fixed);
BG_API int bg_model_from_lin(bg_model *m, const double *c, bg_error *err);

#endif
