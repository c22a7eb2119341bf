/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Calibration: a request (the model or "auto", the default uncertainty, the coverage, the B
** pair, check temperatures) and its result, for one point set, a readings file, a stored run
** (fit and store it) or the latest run of every probe of a lot (all stored in one transaction,
** or none). */
#ifndef BANDGAP_CALIB_H
#define BANDGAP_CALIB_H

#include <stddef.h>

#include "bandgap/error.h"
#include "bandgap/fit.h"
#include "bandgap/model.h"
#include "bandgap/store.h"

/* Called by bg_calibrate_lot() before each probe: 'done' counts the probes so far with this
** one, 'total' is the lot's number of probes.  Return 0 to go on; anything else stops the lot
** (BG_EINVAL "stopped", nothing stored). */
typedef int (*bg_calib_progress_fn)(size_t done, size_t total, void *ctx);

typedef struct bg_calib_request {
    const char *model;          /* "sh3", "sh4", "beta", "poly:N" or "auto" (default): among
                                ** the models within 2 of the lowest BIC, the one with fewest
                                ** coefficients (bg_fit_compare) */
    double t0_k;                /* beta: temperature of R0, K (default BG_T0_DEFAULT_K) */
    double pair_t1_k, pair_t2_k; /* the B value reported for this pair, K (default 298.15 and
                                ** 358.15, B25/85); the lot fit uses the lot's own pair */
    double u_t_default_k;       /* standard uncertainty in K given to every reading that states
                                ** none (u_t_k 0), whatever its u_r_ohm; 0 (default): none */
    int linear_only;            /* 1: linear fit in 1/T only, no refinement (default 0) */
    int no_inflate;             /* 1: keep the covariance of the stated uncertainties even when
                                ** chi2/dof > 1 (default 0) */
    double coverage;            /* coverage probability of the Student-t factor (default 0.9545) */
    double resolution_k;        /* the readings' temperature resolution, K: the floor of the
                                ** residuals' scale (bg_fit_opts.resolution_k, default 1e-6) */
    double coverage_k;          /* 0 (default): U = k u with k = t_p(nu_eff) from Student's t
                                ** for p = 'coverage' and the fit's effective degrees of freedom,
                                ** nu_eff = n - p for a fit alone (JCGM 100:2008, G.3, G.4);
                                ** > 0: this k (e.g. 2) whatever nu_eff, its coverage probability
                                ** stated in 'cover.p' */
    const double *check_t_k;    /* 'ncheck' temperatures in K at which to evaluate the curve
                                ** (default none); not kept */
    size_t ncheck;
    size_t ntable;              /* points of the u(T) table across the calibrated range, both
                                ** ends included (default 9; at least 2) */
    bg_calib_progress_fn progress; /* bg_calibrate_lot only (default NULL) */
    void *progress_ctx;
    unsigned store_flags;       /* bg_calibrate_probe only: BG_CALIB_* below (default 0) */
    int quantity;               /* what the readings are (a bg_quantity of model.h; default 0,
                                ** resistance; bg_calibrate_file takes the file's): a named
                                ** model must read it, and "auto" compares the kinds that do */
    const char *const *param_names; /* 'nparams' kind parameters ("p", "lsb_k") and their */
    const double *param_values;     /* values for the model (bg_model_set_param); default none */
    size_t nparams;
} bg_calib_request;

enum {
    BG_CALIB_DRY_RUN = 1 << 0,   /* a preview: fit and compare, store nothing */
    BG_CALIB_STORE_SAME = 1 << 1 /* store even when an identical fit of the run exists (it
                                 ** then becomes the run's newest, chosen fit again) */
};

/* The defaults above. */
BG_API bg_calib_request bg_calib_default_request(void);

/* The curve at one check temperature. */
typedef struct bg_calib_check {
    double t_k;
    int ok;                     /* 0: not evaluated, see 'why' */
    double r_ohm, u_k;          /* R(T) and the curve's standard u(T) (NaN when 'ok' is 0;
                                ** u_k NaN when no degree of freedom is left) */
    double U_k;                 /* expanded uncertainty cover.k * u_k; NaN when extrapolated */
    int extrapolated;           /* 1 when 't_k' lies outside the calibrated range */
    char why[240];
} bg_calib_check;

typedef struct bg_calib_result {
    char *source;               /* name of the points in messages and reports (malloc'd) */
    char requested[16];         /* the request's model, e.g. "auto" */
    bg_fit fit;                 /* the fit of the model used */
    bg_point *pts;              /* the 'npts' points fitted, default u(T) applied, input order */
    size_t npts;
    int compared;               /* 1: 'cmp' holds the model comparison; 0: see 'cmp_why' */
    bg_cmp cmp;                 /* with a model chosen by "auto": cmp.chosen and cmp.reason */
    char cmp_why[512];
    int auto_chosen;            /* 1 when the model was chosen by the "auto" policy */
    double coverage, k_student; /* Student-t factor for fit.dof (NaN when dof = 0) */
    bg_coverage cover;          /* the request's rule applied: the k of every U below, its
                                ** coverage probability and nu_eff */
    double pair_t1_k, pair_t2_k, b_pair_k; /* B for the pair, K (NaN when not defined) */
    int b_pair_extrapolated;    /* 1 when a temperature of the pair lies outside the calibrated
                                ** range: B is an extrapolation of the curve */
    double r25_ohm;             /* R at 25 degC */
    double u_max_k;             /* the largest u(T) at the readings (NaN when dof = 0) */
    double U_max_k;             /* cover.k * u_max_k */
    double *table_t_k, *table_u_k, *table_U_k; /* 'ntable' temperatures evenly across the
                                ** range, u(T) and U(T) = cover.k u(T) */
    size_t ntable;
    bg_calib_check *checks;     /* one per check temperature of the request, in its order */
    size_t nchecks;
    long long fit_id, run_id;   /* bg_calibrate_probe: the stored fit and its run; else 0 */
    char serial[BG_TEXT], started_at[BG_TIME]; /* bg_calibrate_probe: the probe, run start */
    int stored;                 /* bg_calibrate_probe: 1 when this call stored the fit */
    long long same_fit_id;      /* bg_calibrate_probe: the oldest stored fit of the run
                                ** identical to this one (0: none); unless stored anyway,
                                ** 'fit_id' is that fit */
    long long run_fit_id;       /* bg_calibrate_probe: the run's chosen fit (its newest) after
                                ** the call; 0: none */
    char ref_overdue[240];      /* bg_calibrate_probe: when the run's reference was used past
                                ** its due date, what the run records (also a fit note) */
} bg_calib_result;

#define BG_CALIB_RESULT_INIT { 0 }
BG_API void bg_calib_result_init(bg_calib_result *r);
BG_API void bg_calib_result_release(bg_calib_result *r);

/* Calibrate 'n' points: apply the default u(T), compare the models, fit the requested one (or
** the one "auto" chooses) and work out the derived quantities.  'source' names the points in
** messages (NULL: "points").  Returns BG_OK and fills '*out' (initialised, or reused after an
** earlier call; release it with bg_calib_result_release), or BG_EINVAL for an unknown model,
** bad options or data the fit refuses (the message names the line), BG_ENUM, BG_ENOMEM.
** On an error '*out' holds no result.  Keeps no pointer to 'pts' or 'rq'. */
BG_API int bg_calibrate(const bg_point *pts, size_t n, const char *source,
                        const bg_calib_request *rq, bg_calib_result *out, bg_error *err);

/* The same for the readings file 'path' ("-" reads standard input, named "<stdin>"): errors as
** bg_csv_read_file(); a file of reference resistances ('ref_ohms') is BG_EINVAL, since it
** needs a reference thermometer from the database. */
BG_API int bg_calibrate_file(const char *path, const bg_calib_request *rq, bg_calib_result *out,
                             bg_error *err);

/* The readings file 'path' fitted by the request's model (a named one, not "auto") in ranges
** that each hold 'bound_k' (bg_fit_split): the file read and checked as bg_calibrate_file
** does, the default u(T) applied.  BG_EINVAL for "auto" or as bg_fit_split. */
BG_API int bg_calibrate_file_split(const char *path, const bg_calib_request *rq, double bound_k,
                                   bg_fit_ranges *out, bg_error *err);

/* Calibrate run 'run_id' of probe 'serial' (0: its latest run), leaving out the excluded
** readings, and store the fit; '*out' gets fit_id, run_id, serial, started_at, stored,
** same_fit_id and run_fit_id too.  A fit identical to one the run already has (the same
** readings, model and options give the same numbers) is not stored again: '*out' names the
** stored one (same_fit_id, fit_id) with 'stored' 0, unless 'rq->store_flags' has
** BG_CALIB_STORE_SAME.  With BG_CALIB_DRY_RUN nothing is stored (fit_id 0).  A run whose
** reference was used past its due date gets a note (BG_NOTE_REF_OVERDUE) saying so.
** BG_EINVAL for an unknown probe, a probe without runs, a run of another probe, or as
** bg_calibrate(); nothing is stored on any error. */
BG_API int bg_calibrate_probe(bg_store *st, const char *serial, long long run_id,
                              const bg_calib_request *rq, bg_calib_result *out, bg_error *err);

/* ---- a whole lot -------------------------------------------------------------------------- */

typedef enum bg_calib_status {
    BG_CALIB_FITTED = 1,        /* fitted (and stored when the lot's 'stored' is 1) */
    BG_CALIB_NO_RUNS,           /* the probe has no calibration run: not fitted */
    BG_CALIB_FAILED             /* the fit refused the data: 'why' */
} bg_calib_status;

typedef struct bg_calib_lot_row {
    char serial[BG_TEXT];
    bg_calib_status status;
    long long run_id;           /* the probe's latest run (0: none) */
    long long fit_id;           /* the stored fit; 0 unless the lot was stored */
    int identical;              /* 1: the run had an identical fit (same readings, model and
                                ** numbers): 'fit_id' names it and nothing new was stored */
    bg_model model;             /* BG_CALIB_FITTED: the fitted model */
    size_t npar, n;
    double rms_mk, max_abs_mk;  /* of the residuals */
    double u_max_k;             /* the largest u(T) at the readings (NaN when dof = 0) */
    bg_coverage cover;          /* the request's coverage rule for this probe's fit */
    double U_max_k;             /* cover.k * u_max_k */
    double r25_ohm, b_k;        /* R at 25 degC; B for the lot's pair */
    int b_extrapolated;         /* 1 when the lot's pair lies outside this probe's range */
    size_t note0, nnotes;       /* its warnings: notes[note0 .. note0 + nnotes) of the lot */
    char *why;                  /* BG_CALIB_FAILED: the message (malloc'd); else NULL */
} bg_calib_lot_row;

typedef struct bg_calib_lot {
    bg_lot lot;                 /* the lot as stored (its code, part, B pair ...) */
    bg_calib_lot_row *rows;     /* one per probe reached, in the order the probes were added */
    size_t nrows, cap;
    bg_note *notes;             /* every fitted probe's warnings, by row */
    size_t nnotes, notecap;
    size_t nfitted, nnoruns, nfailed;
    size_t nidentical;          /* fitted rows whose run already had an identical fit */
    bg_coverage_rule rule;      /* the request's coverage rule, applied to every row */
    int stored;                 /* 1: every fit is stored (committed); 0: none is */
} bg_calib_lot;

#define BG_CALIB_LOT_INIT { 0 }
BG_API void bg_calib_lot_init(bg_calib_lot *lot);
BG_API void bg_calib_lot_release(bg_calib_lot *lot);

/* Calibrate the latest run of every probe of lot 'lot_code' with one fitter and store the fits
** in one transaction: all of them, or none.  "auto" compares the models per probe; a named model
** is fitted without comparison.  When any probe's fit fails, the others are still tried (so that
** every failure is in a row) and then nothing is stored: BG_EINVAL "N of M probes could not be
** fitted".  Any other failure (database, memory, the progress callback) also rolls the whole
** lot back and is returned.  On every error '*out' keeps the rows reached, with 'stored' 0 and
** no fit ids, so that a caller can say what failed; an unknown lot or one without probes is
** BG_EINVAL.  'rq->check_t_k' and 'rq->pair_*' are not used. */
BG_API int bg_calibrate_lot(bg_store *st, const char *lot_code, const bg_calib_request *rq,
                            bg_calib_lot *out, bg_error *err);

#endif
