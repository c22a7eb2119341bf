/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Calibration fits: weighted linear least squares in 1/T, nonlinear refinement in T, full
** covariance, residuals, curve uncertainty and model comparison. */
#ifndef BANDGAP_FIT_H
#define BANDGAP_FIT_H

#include <stddef.h>

#include "bandgap/error.h"
#include "bandgap/model.h"
#include "bandgap/readings.h"

/* bg_point, one calibration point, is in readings.h. */

/* ---- Calibration fits -------------------------------------------------------------------- */

typedef struct bg_fit_opts {
    bg_model model;        /* kind, degree and (beta) T0 of the model; coefficients ignored */
    int refine;            /* 1 (default): minimise temperature residuals; 0: linear in 1/T only */
    int inflate;           /* 1 (default): with stated uncertainties, scale the covariance by
                           ** max(1, chi2/dof) (Birge ratio squared) */
    double min_rcond;      /* refuse designs worse than this (default 1e-13) */
    double student_limit;  /* warn above this |studentized residual| (default 3) */
    double mono_gap_k;     /* NTC check: two readings further apart than this must have R
                           ** falling with T (default 0.05 K) */
    unsigned max_iter;     /* refinement iterations (default 50) */
    double xtol;           /* refinement stops at a relative step below this (default 1e-12) */
    double coverage;       /* coverage probability for the Student-t factor (default 0.9545) */
    double setpoint_gap_k; /* readings closer than this in temperature are taken at one
                           ** setpoint when distinct temperatures are counted (default 0.05 K) */
    double resolution_k;   /* the readings' temperature resolution: the scale of the
                           ** studentized residuals is never taken below resolution_k / sqrt(12),
                           ** the standard deviation of rounding to it (JCGM 100:2008, F.2.2.1),
                           ** so that noise-free readings raise no outlier warning (default
                           ** 1e-6 K: finer than thermometer readouts in use, coarser than the
                           ** fit's own rounding, about 1e-10 K) */
    const char *source;    /* file name used in messages (not kept); NULL = "point" */
    int quantity;          /* bg_fit_compare: what the points' readings are (a bg_quantity;
                           ** default 0, resistance); the candidates read it, with the
                           ** parameters of 'model' copied to those of the same name */
} bg_fit_opts;

/* The defaults above for 'model' (sh3 when NULL). */
BG_API bg_fit_opts bg_fit_default_opts(const bg_model *model);

typedef enum bg_note_kind {
    BG_NOTE_OUTLIER = 1, BG_NOTE_NODOF, BG_NOTE_CHI2, BG_NOTE_MONOTONIC, BG_NOTE_EXTRAPOLATION,
    BG_NOTE_CHI2_LOW,    /* residuals far inside the stated uncertainties (p > 0.99) */
    BG_NOTE_REPEATED,    /* identical repeated readings (same T and R), kept as readings */
    BG_NOTE_REF_OVERDUE  /* the run's reference was used past its calibration due date */
} bg_note_kind;

typedef struct bg_note {
    bg_note_kind kind;
    size_t line;       /* the reading concerned, 0 for the whole fit */
    char msg[240];     /* a complete message, starting with "FILE:LINE: " where known */
} bg_note;

typedef struct bg_fit {
    bg_model model;                 /* fitted model */
    size_t n, npar, dof;
    int weighted;                   /* 1 when the points carried uncertainties */
    double cov[BG_MODEL_MAXPAR * BG_MODEL_MAXPAR]; /* of model->coef, row-major; NaN if dof = 0 */
    double pcov[BG_MODEL_MAXPAR * BG_MODEL_MAXPAR]; /* of bg_model_inv_poly's a[0..5] */
    double chi2;                    /* weighted sum of squared temperature residuals */
    double reduced_chi2;            /* chi2 / dof (NaN when dof = 0) */
    double p_value;                 /* set only with a BG_NOTE_CHI2 note; use bg_fit_p_value() */
    double cov_scale;               /* factor applied to (J^T W J)^-1 */
    double rms_mk, max_abs_mk;      /* of the residuals, over n */
    double aic, bic;                /* see docs/methods.md */
    double rcond;                   /* of the final design */
    double t_min_k, t_max_k;        /* calibrated range */
    size_t ndistinct;               /* distinct temperatures (setpoints, see setpoint_gap_k) */
    unsigned iterations;
    double *resid_mk;               /* n: measured minus fitted temperature, mK (input order) */
    double *student;                /* n: internally studentized residuals (NaN if undefined) */
    double *u_k;                    /* n: standard uncertainty used as the weight, K */
    size_t *line;                   /* n: the points' lines */
    bg_note *notes;                 /* warnings, 'nnotes' of them */
    size_t nnotes, cap, notecap;
} bg_fit;

#define BG_FIT_INIT { 0 }
BG_API void bg_fit_init(bg_fit *f);
BG_API void bg_fit_release(bg_fit *f);

/* A reusable fitter: workspaces kept between fits (one fitter for every probe of a lot). */
typedef struct bg_fitter bg_fitter;
BG_API bg_fitter *bg_fitter_new(void);
BG_API void bg_fitter_free(bg_fitter *fitter);

/* Fit 'o->model' to 'n' points.  Guard rails: BG_EINVAL for fewer points than coefficients,
** fewer distinct temperatures (setpoints) than coefficients, a non-finite or non-positive
** value, resistance rising with temperature, or a design too ill-conditioned for the model
** (reciprocal condition below 'min_rcond'); BG_ENUM when the refinement does not converge;
** BG_EINTERNAL when a coefficient or the covariance comes out non-finite.  Identical repeated
** readings are kept, with a BG_NOTE_REPEATED note.  Warnings (outliers, no degrees of freedom,
** chi2 too large or too small, non-monotonic curve) go to 'out->notes'.  'out' is
** initialised or reused; release it with bg_fit_release().  Keeps no pointer to 'pts'. */
BG_API int bg_fitter_run(bg_fitter *fitter, const bg_point *pts, size_t n, const bg_fit_opts *o,
                         bg_fit *out, bg_error *err);

/* The same with a fitter made and freed inside. */
BG_API int bg_fit_points(const bg_point *pts, size_t n, const bg_fit_opts *o, bg_fit *out,
                         bg_error *err);

/* Fit 'o->model' to 'nprobes' point sets of 'n' points each (probe p's points are
** pts[p * n .. p * n + n - 1]) as a batch: the numerical work (linear start, Gauss-Newton
** steps, the QR solves) runs on the probes side by side, the probes as the vector lane, with no
** allocation per probe.  out[p] and errs[p] get what bg_fitter_run would give for probe p
** alone (errs[p].code is its status, BG_OK or an error with its message): the same operations
** in the same order, so the same numbers.  A probe the batch cannot follow (points stating
** u(R), a step that must be halved, a design refused, no convergence) is fitted by
** bg_fitter_run itself, so its result or error is the per-probe one, and it never disturbs the
** other probes.  'sources' (nprobes names, or NULL: o->source for all) names each probe's
** points in messages.  'out' (nprobes, initialised or reused) and 'errs' (nprobes) must not be
** NULL.  Returns BG_OK (each probe's status in errs[p].code), or BG_ENOMEM. */
BG_API int bg_fitter_run_batch(bg_fitter *fitter, const bg_point *pts, size_t nprobes, size_t n,
                               const bg_fit_opts *o, const char *const *sources, bg_fit *out,
                               bg_error *errs);

/* Standard uncertainty u(T) in K of the fitted curve at 't_k', from the full covariance:
** u^2(T) = T^4 g^T V g, g = (L^i).  NaN when dof = 0.  '*extrapolated' (may be NULL) is set
** to 1 when 't_k' lies outside the calibrated range. */
BG_API int bg_fit_u_t(const bg_fit *fit, double t_k, double *u_k, int *extrapolated,
                      bg_error *err);

/* The p-value P(chi2' > chi2) for the fit's degrees of freedom when the points carried
** uncertainties (NaN otherwise or when dof = 0). */
BG_API double bg_fit_p_value(const bg_fit *fit);

/* The standard uncertainty of coefficient 'i', the square root of its variance in the fit's
** (scaled) covariance, in the coefficient's unit; NaN when there is none (no degrees of
** freedom) or 'i' is out of range. */
BG_API double bg_fit_coef_u(const bg_fit *fit, size_t i);

/* The same at resistance 'r_ohm' (no inversion of the model): u(T(R)) in K. */
BG_API int bg_fit_u_at_r(const bg_fit *fit, double r_ohm, double *u_k, bg_error *err);

/* Coverage factor from Student's t for the fit's degrees of freedom and 'coverage' (e.g.
** 0.9545 gives 4.53 for 2 dof, about 2 for many).  NaN when dof = 0. */
BG_API double bg_fit_coverage_k(const bg_fit *fit, double coverage);

/* The coverage probability of U = k u with 'dof' degrees of freedom, Student's t:
** 2 F_t(k; dof) - 1 (0.8165 for k = 2 and 2 dof).  NaN when dof = 0 or k <= 0.
** (coverage.c) */
BG_API double bg_fit_coverage_prob(double k, size_t dof);

/* ---- Coverage: the rule that turns a standard uncertainty u into U = k u (coverage.c) ---- */

typedef struct bg_coverage_rule {
    double p;          /* coverage probability aimed at with Student's t (default 0.9545, "about
                       ** 95 %", the p for which k tends to 2 as the degrees of freedom grow) */
    double k_fixed;    /* > 0: use this k whatever the degrees of freedom (e.g. 2), and state
                       ** the coverage probability it gives; 0 (default): k from Student's t */
} bg_coverage_rule;

/* The default rule: k = t_p(nu_eff) with p = 0.9545. */
BG_API bg_coverage_rule bg_coverage_default(void);

typedef struct bg_coverage {
    double k;          /* the coverage factor (NaN when there is no degree of freedom) */
    double p;          /* its coverage probability: the rule's p with Student's t; with a fixed
                       ** k, 2 F_t(k; nu_eff) - 1 */
    double nu_eff;     /* the effective degrees of freedom used (INFINITY: u known exactly) */
    int fixed;         /* 1: k is the rule's k_fixed */
} bg_coverage;

/* The coverage factor under 'rule' for 'nu_eff' effective degrees of freedom: Student's
** t_p(nu) (JCGM 100:2008, G.3.4 and G.4.1; a non-integer nu_eff is truncated to the next lower
** integer, G.4.1 note 1), or the rule's fixed k with its coverage probability (G.3.2).
** BG_EINVAL for p outside (0, 1), a negative or non-finite fixed k, or a negative nu_eff;
** nu_eff < 1 gives k = NaN and p = NaN (no degree of freedom). */
BG_API int bg_coverage_eval(const bg_coverage_rule *rule, double nu_eff, bg_coverage *out,
                            bg_error *err);

/* The Welch-Satterthwaite effective degrees of freedom of u_c^2 = sum u[i]^2 (JCGM 100:2008,
** G.4.1, formula G.2b): u_c^4 / sum (u[i]^4 / nu[i]); a component with nu[i] = INFINITY (or
** u[i] = 0) adds nothing to the sum.  INFINITY when every component is known exactly; NaN when
** a u[i] or nu[i] is negative or NaN, or nu[i] is 0 for u[i] > 0. */
BG_API double bg_coverage_nu_eff(const double *u, const double *nu, size_t n);

/* ---- Ranges: one series per range where one cannot hold a bound (fit_split.c) -------- */

typedef struct bg_fit_range {
    bg_fit fit;          /* the fit over this range's readings */
    double x_lo, x_hi;   /* the range in the reading (its first and last reading) */
    int holds;           /* 1: every |residual| is within the bound */
} bg_fit_range;

typedef struct bg_fit_ranges {
    bg_fit_range *range; /* 'n' ranges in rising reading; neighbours share one reading */
    size_t n, cap;
    int all_hold;        /* 1: every range holds the bound */
    double bound_k;
} bg_fit_ranges;

/* Fit 'o->model' to the 'n' points over their whole range, and halve any range whose largest
** |residual| exceeds 'bound_k' at its middle reading (shared by the two halves) until every
** range holds it, or a range has too few readings to halve (fewer than 2 npar + 1) or six
** halvings were made: that range keeps its fit with 'holds' 0.  '*out' is filled (release
** with bg_fit_split_release), or left empty on an error (as bg_fitter_run's, or BG_EINVAL for
** a bound that is not above 0). */
BG_API int bg_fit_split(bg_fitter *fitter, const bg_point *pts, size_t n, const bg_fit_opts *o,
                        double bound_k, bg_fit_ranges *out, bg_error *err);
BG_API void bg_fit_split_release(bg_fit_ranges *s);

/* ---- Model comparison ----------------------------------------------------------------------- */

#define BG_CMP_MAX 6

typedef struct bg_cmp_row {
    bg_model model;
    int ok;                 /* 0: not fitted (too few points or failed), see 'why' */
    size_t npar;
    double rms_mk, max_abs_mk, chi2, aic, bic;
    double loo_rms_mk;      /* leave-one-out RMS: each point predicted by a fit without it, in
                            ** closed form from the leverages (see bg_cmp.loo_one_step) */
    char why[160];
} bg_cmp_row;

typedef struct bg_cmp {
    bg_cmp_row row[BG_CMP_MAX];
    size_t nrows;
    int chosen;             /* index into row, -1 if none */
    int loo_one_step;       /* 1: the refined fits' leave-one-out residuals are the one-step
                            ** (leverage) form r_i / (1 - h_i), an approximation of refitting;
                            ** 0: linear fits, where e_i / (1 - h_i) is exact */
    char reason[240];
} bg_cmp;

/* Fit the candidates beta, sh3, poly:2, sh4, poly:4, poly:5 with the options 'o' (its model is
** ignored but for its parameters) and choose one -- for resistances that fall as the
** temperature rises; for other readings, or resistances that rise, the kinds
** bg_model_candidates lists for o->quantity and that direction: among the models whose BIC
** is within 2 of the lowest, the one with fewest coefficients (Kass & Raftery 1995).  A model needs at least npar + 2 points to be
** compared (one degree of freedom after leaving a point out).  BG_EINVAL when no candidate can
** be fitted. */
BG_API int bg_fit_compare(bg_fitter *fitter, const bg_point *pts, size_t n, const bg_fit_opts *o,
                          bg_cmp *out, bg_error *err);

#endif
