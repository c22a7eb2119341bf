/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* QA results read from the calibration record: a probe's drift between its calibrations, a
** lot's statistics against the part's nominal curve, the control charts across a part's lots,
** and all three together for the lot report.  Each is a value with a _release; nothing here
** prints.  The arithmetic underneath is in drift.h and stats.h. */
#ifndef BANDGAP_QA_H
#define BANDGAP_QA_H

#include <stddef.h>

#include "bandgap/drift.h"
#include "bandgap/error.h"
#include "bandgap/stats.h"
#include "bandgap/store.h"

/* What a QA computation uses.  Start from bg_qa_default_opts(). */
typedef struct bg_qa_opts {
    double at_k[BG_DRIFT_MAXAT]; /* check temperatures, K; nat 0: a probe's drift: five spread */
    size_t nat;                  /* over the common calibrated range of the fits compared; a
                                    lot: round ones (bg_drift_round_points, at least five) over
                                    the range every probe covers */
    double limit_k;              /* |as-found| limit, K; <= 0: the part's default, else the
                                    lot's R25 tolerance at 25 C */
    double rate_k;               /* drift rate limit, K per year; <= 0: the part's default, else
                                    the |as-found| limit */
    double alpha;                /* Grubbs' significance, two-sided (default 0.05) */
    const char *since;           /* only runs started on or after this ISO 8601 date; NULL: all */
    size_t baseline;             /* control limits from the first 'baseline' lots; 0: the
                                    part's default, else all */
    int since_first;             /* compare each calibration with the first too (default 1) */
} bg_qa_opts;

/* Where a limit or a baseline came from. */
enum { BG_QA_FROM_DEFAULT = 0, /* the built-in default (the R25 tolerance; all lots) */
       BG_QA_FROM_OPTION,      /* bg_qa_opts, as the caller gave it */
       BG_QA_FROM_PART,        /* the part's specification (bg_store_part_spec_get) */
       BG_QA_FROM_KIND };      /* the tolerance of the part's sensor kind (not an NTC) at its
                                  reference temperature, in kelvin (bg_qa_spec_limit_k) */

/* Control limits from fewer baseline subgroups (lots) than this are provisional: trial limits
** want 20 to 25 subgroups (D. C. Montgomery, Introduction to Statistical Quality Control,
** Wiley, the chapter on X-bar and s charts; cited from memory). */
#define BG_QA_CUSTOMARY_SUBGROUPS 20

BG_API bg_qa_opts bg_qa_default_opts(void);

/* The temperature equivalent of the lot's R25 tolerance at 25 degC: tol R25 T0^2 / B, in K
** (the default drift limit). */
BG_API double bg_qa_tol_limit_k(const bg_lot *lot);
/* The default drift limit of a part of a sensor kind other than the NTC: its first nominal
** value's tolerance in kelvin at its reference temperature (PTC tol_r / alpha, junction
** tol_v / |dV/dT|, PRT the class's tolerance at 0 degC, IC the offset's tolerance); NaN for
** an NTC (the lot's R25 tolerance applies, bg_qa_tol_limit_k). */
BG_API double bg_qa_spec_limit_k(const bg_part_spec *spec);

/* ---- a part's specification ---- */

/* What bg_qa_part_set stored: the row (with its id and time) and, for a table, the fit. */
typedef struct bg_qa_part_set {
    bg_part_spec spec;
    size_t table_n;              /* points of the table fitted; 0: coefficients were given */
    double table_max_mk;         /* largest |residual| of the table's fit, mK */
    double table_lo_k, table_hi_k; /* the table's temperature range */
} bg_qa_part_set_result;

/* Store a new specification of part 'spec->part' (store.h, bg_store_part_spec_add).  With
** 'table_path' (a readings CSV file of temperature and resistance, "-" is not accepted) the
** nominal curve is fitted to that table with the kind of 'spec->model' (unweighted, in
** temperature; spec->have_model must be set, its coefficients are ignored) and the source
** records the file, its points, range and largest residual; without it spec->model is stored
** as given.  BG_EINVAL for a bad file (file:line), a failed fit, or a specification the store
** refuses; nothing is stored then. */
BG_API int bg_qa_part_set(bg_store *st, const bg_part_spec *spec, const char *table_path,
                          bg_qa_part_set_result *out, bg_error *err);

/* ---- one probe's drift ---- */

/* One comparison of an earlier calibration 'from' with a later one 'to' (indices into the
** probe's history). */
typedef struct bg_qa_compare {
    size_t from, to;
    bg_drift d;                  /* as-found error, change of R25 and B, years, rate */
    int flag_limit, flag_rate;   /* max |as-found| above the limit; rate above the rate limit */
    double limit_k, rate_k;      /* the limits this comparison was judged against: a default
                                 ** from the lot's tolerance is the lot version's in force at
                                 ** the later calibration's start */
} bg_qa_compare;

typedef struct bg_qa_probe {
    char serial[BG_TEXT];
    bg_lot lot;
    double limit_k, rate_k;      /* the limits used (the defaults worked out) */
    int limit_from, rate_from;   /* BG_QA_FROM_* */
    int have_history;            /* the history below was read */
    bg_fit_row *fits;            /* newest fit of each fitted run, oldest run first: n of them */
    char (*started_at)[BG_TIME]; /* the runs' start times */
    size_t n, cap;
    size_t unfitted;             /* runs without a fit */
    bg_qa_compare *since_previous; /* calibration i against i - 1: nprev of n - 1 */
    size_t nprev;
    bg_qa_compare *since_first;  /* calibration i >= 2 against the first: nfirst of n - 2 */
    size_t nfirst;
    int flagged;                 /* a flag in any comparison */
    double *limit_at;            /* bg_qa_probe_drift: the default limit (K) from the lot
                                 ** version in force at each calibration's start (n of them);
                                 ** NULL: limit_k for every comparison */
} bg_qa_probe;
#define BG_QA_PROBE_INIT { 0 }

/* The drift of probe 'serial' between its calibrations (the newest fit of each fitted run,
** every one of them, oldest first): each against the one before and, with o->since_first,
** each from the third on against the first.  BG_EINVAL for an unknown probe, a check
** temperature outside the calibrated ranges of a pair (named) or ranges that do not overlap;
** BG_ENOMEM; a store error.  After an error in a comparison '*out' still holds the history,
** the limits and the comparisons made before it (have_history is set), so that a caller can
** show how far it got.  Release '*out' (initialised with BG_QA_PROBE_INIT) in every case. */
BG_API int bg_qa_probe_drift(bg_store *st, const char *serial, const bg_qa_opts *o,
                             bg_qa_probe *out, bg_error *err);
BG_API void bg_qa_probe_release(bg_qa_probe *p);

/* ---- one lot's statistics ---- */

/* A probe's flags: R25 or B outside the lot's tolerances; Grubbs' outlier; the deviation from
** the part's nominal curve beyond its tolerance in kelvin; B for a pair outside the probe's
** calibrated range (extrapolated: a note, not a failure). */
enum { BG_QA_OUT_OF_TOL = 1 << 0, BG_QA_OUTLIER = 1 << 1, BG_QA_OUT_OF_BAND = 1 << 2,
       BG_QA_B_EXTRAPOLATED = 1 << 3 };

typedef struct bg_qa_lot {
    bg_lot lot;
    size_t n;                    /* probes with a fit */
    size_t nofit;                /* probes without one */
    char (*serial)[BG_TEXT];     /* n each, in the order the probes were added: */
    long long *fit_id;           /*   the probe's newest fit */
    double *r25_dev_pct;         /*   (R25 - nominal R25) / nominal R25, % */
    double *b_k;                 /*   B for the lot's pair, K */
    double *dev_mk;              /*   n x nat, row-major: T_nominal(R(T)) - T, mK */
    double *max_abs_dev_mk;      /*   largest |dev_mk| over the check temperatures */
    unsigned *flags;             /*   BG_QA_OUT_OF_TOL, _OUTLIER, _OUT_OF_BAND, _B_EXTRAPOLATED */
    double *tol_dev_mk;          /*   largest |deviation| over the part of the kelvin tolerance's
                                      range the probe's calibration covers (41 points); NaN
                                      without a kelvin tolerance or when nothing is covered */
    bg_part_spec spec;           /* the part's specification used (spec.id 0: none) */
    int nominal_is_beta;         /* no nominal curve stored for the part: the lot's R25 and B
                                    as a beta curve, whose shape error is in every deviation
                                    (so the deviation is no verdict) */
    double nominal_r25_ohm, nominal_b_k; /* of the nominal curve: R at 25 C; B for the pair */
    size_t nat;
    double at_k[BG_DRIFT_MAXAT]; /* the check temperatures, K */
    double dev_min_mk[BG_DRIFT_MAXAT], dev_max_mk[BG_DRIFT_MAXAT]; /* over the probes */
    double band_lo_mk[BG_DRIFT_MAXAT], band_hi_mk[BG_DRIFT_MAXAT]; /* the interchangeability
                                    band: +-tol_k inside the kelvin tolerance's range (NaN
                                    outside) when the part has one, else the nominal curve at
                                    the corners of the lot's R25 and B tolerances */
    bg_stats r25_dev, b;         /* of r25_dev_pct and b_k */
    double cpk_r25, cpk_b;       /* against the lot's tolerances */
    double activation_energy_ev; /* k times the mean B */
    double alpha;
    int have_grubbs;             /* n >= 3 and both sds > 0 */
    double g_r25, g_b, g_crit;   /* NaN without have_grubbs */
    int outlier_r25, outlier_b;  /* G above the critical value */
    size_t ioutlier_r25, ioutlier_b; /* the most extreme probe, when an outlier */
    size_t nout;                 /* probes out of tolerance (R25 or B) */
    size_t nband;                /* probes beyond the kelvin tolerance */
    size_t nuncovered;           /* probes whose calibration does not cover the whole range of
                                    the kelvin tolerance (judged where it does) */
    size_t nb_extrap;            /* probes whose B pair lies outside their calibrated range */
    int flagged;                 /* nout > 0, nband > 0 or an outlier */
    /* what the two values above are, following the part's sensor kind (schema 12): for an
    ** NTC (the default) r25_dev_pct is the R25 deviation in % and b_k the B of the lot's pair
    ** in K, against the lot's R25 and B; for the other kinds they hold the kind's two values
    ** against the part's nominal values (PTC: R_ref deviation %, alpha ppm/K; junction: V
    ** deviation mV, dV/dT mV/K; PRT: R0 deviation %, alpha(0..100 degC) ppm/K; IC: offset c0
    ** deviation mK, gain c1 %), and B_EXTRAPOLATED marks a value read outside the calibrated
    ** range */
    int sensor;                  /* BG_PART_* */
    char v1_name[48], v1_unit[16], v1_key[32]; /* "R25 deviation", "%", "r25_dev_pct" */
    char v2_name[48], v2_unit[16], v2_key[32]; /* "B25/85", "K", "b_k" */
    double v1_tol;               /* |value 1| above it: out of tolerance (its nominal is 0) */
    double v2_nominal, v2_tol;   /* |value 2 - nominal| above v2_tol: out of tolerance */
} bg_qa_lot;
#define BG_QA_LOT_INIT { 0 }

/* The statistics of lot 'code' over each probe's newest fit (of the runs since o->since):
** R25 deviation and B (against the lot's nominal R25 and B), the deviation from the part's
** nominal curve (its stored specification; without one the lot's beta curve) at the check
** temperatures (o->at_k, or round ones over the range every fit covers), mean, sd, min, max
** and Cpk, Grubbs' test at o->alpha, the interchangeability band and the probes beyond a
** kelvin tolerance, B pairs outside a probe's range, the activation energy.  BG_EINVAL for an unknown lot,
** a lot without fitted probes, or a check temperature outside a probe's range (named);
** BG_ENOMEM; a store error.  Release '*out' (initialised with BG_QA_LOT_INIT) in every case. */
BG_API int bg_qa_lot_stats(bg_store *st, const char *code, const bg_qa_opts *o, bg_qa_lot *out,
                           bg_error *err);
BG_API void bg_qa_lot_release(bg_qa_lot *l);

/* ---- a part's control charts ---- */

enum { BG_QA_CHART_XBAR_R25, BG_QA_CHART_S_R25, BG_QA_CHART_XBAR_B, BG_QA_CHART_S_B,
       BG_QA_CHART_XBAR_ASFOUND, BG_QA_CHART_S_ASFOUND, BG_QA_NCHART };

/* A lot on the charts: its statistics and the run rules (BG_RULE_*) each point breaks. */
typedef struct bg_qa_part_lot {
    char code[BG_TEXT];
    size_t n;                       /* fitted probes */
    double r25_mean_pct, r25_sd_pct, b_mean_k, b_sd_k;
    unsigned rules[4];              /* X-bar R25, s R25, X-bar B, s B */
    size_t nasfound;                /* probes with two calibrations or more */
    double asfound_mean_mk, asfound_sd_mk;
    size_t nb_extrap;               /* probes whose B is extrapolated (their B pair outside
                                       their calibrated range) */
} bg_qa_part_lot;

/* A lot left off the charts, and why. */
typedef struct bg_qa_part_skip {
    char code[BG_TEXT];
    char why[512];
} bg_qa_part_skip;

/* A point of the as-found charts: a lot with two recalibrated probes or more. */
typedef struct bg_qa_part_asfound {
    size_t lot;                     /* index into lots */
    unsigned rules[2];              /* X-bar, s */
} bg_qa_part_asfound;

typedef struct bg_qa_part {
    char part[BG_TEXT];
    bg_qa_part_lot *lots;           /* charted, oldest first */
    size_t nlots, caplots;
    bg_qa_part_skip *skipped;       /* not charted (fewer than 2 fitted probes, or an error) */
    size_t nskipped, capskipped;
    size_t baseline, subgroup;      /* lots the limits come from; subgroup size (mean lot size) */
    int baseline_from;              /* BG_QA_FROM_* */
    int provisional;                /* baseline < BG_QA_CUSTOMARY_SUBGROUPS */
    bg_chart chart[BG_QA_NCHART];
    int have_asfound;               /* the as-found charts exist (2 lots or more with data) */
    bg_qa_part_asfound *asfound;
    size_t nasfound;
    size_t asfound_subgroup;
    int flagged;                    /* a run rule broken on any chart */
    int sensor;                     /* BG_PART_*: what the charted values are (as bg_qa_lot's) */
    char v1_name[48], v1_unit[16], v2_name[48], v2_unit[16];
} bg_qa_part;
#define BG_QA_PART_INIT { 0 }

/* X-bar and s charts of the lots of 'part' (oldest first): each lot's R25 deviation (%) and B
** (from bg_qa_lot_stats with 'o'), and the as-found drift of its probes between their two
** newest calibrations at the middle of their common range (mK); 3-sigma limits from the first
** o->baseline lots (0: the part's stored default, else all; provisional below
** BG_QA_CUSTOMARY_SUBGROUPS), the Western Electric rules.  A lot with fewer than 2 fitted probes or whose
** statistics fail with BG_EINVAL is skipped with the reason; a probe whose two newest ranges
** do not overlap has no as-found value.  BG_EINVAL for a part without lots or with fewer than
** 2 charted lots; BG_ENOMEM; a store error.  After an error '*out' keeps the lots skipped so
** far.  Release '*out' (initialised with BG_QA_PART_INIT) in every case. */
BG_API int bg_qa_part_charts(bg_store *st, const char *part, const bg_qa_opts *o,
                             bg_qa_part *out, bg_error *err);
BG_API void bg_qa_part_release(bg_qa_part *p);

/* ---- everything the lot report shows ---- */

typedef struct bg_qa_lot_summary {
    bg_qa_lot stats;                /* with the default options */
    bg_qa_probe *probes;            /* each probe of the lot, in the order added, compared with
                                       its previous calibration only */
    size_t nprobes, capprobes;
    double limit_k, rate_k;         /* the drift limits used */
    int limit_from, rate_from;      /* BG_QA_FROM_* */
    bg_qa_part part;                /* the control charts of the lot's part */
    int part_rc;                    /* BG_OK, or why there are no charts: */
    bg_error part_err;
    int flagged;                    /* the lot's statistics, a probe's drift since its previous
                                       calibration, or a run rule on the charts */
} bg_qa_lot_summary;
#define BG_QA_LOT_SUMMARY_INIT { 0 }

/* The lot report's content for lot 'code' with the options 'o' (NULL: bg_qa_default_opts;
** limits and baseline fall back on the part's defaults as in the functions above): its
** statistics, each probe's drift since its previous calibration, and the control charts of
** its part (when those cannot be drawn, part_rc and part_err say why and the summary is
** still made, unless the reason is BG_ENOMEM or a store error).  Errors as bg_qa_lot_stats
** and bg_qa_probe_drift.  Release '*out' (initialised with BG_QA_LOT_SUMMARY_INIT) in every
** case. */
BG_API int bg_qa_lot_summarize(bg_store *st, const char *code, const bg_qa_opts *o,
                               bg_qa_lot_summary *out, bg_error *err);

/* Where bg_qa_lot_summarize_each hands what it reads: 'ready' once the lot's statistics and
** limits are in the summary (before the first probe), then 'probe' with each probe, in the
** summary's order, once it is compared; the probe is released after the call (copy what you
** keep).  Either may be NULL. */
typedef struct bg_qa_lot_sink {
    void (*ready)(const bg_qa_lot_summary *s, void *ctx);
    void (*probe)(const bg_qa_lot_summary *s, const bg_qa_probe *p, void *ctx);
    void *ctx;
} bg_qa_lot_sink;

/* bg_qa_lot_summarize for a lot of any size: the same summary, except that the probes are
** handed to 'sink' one at a time and not kept (out->probes stays NULL; out->nprobes counts
** them), so that the memory it takes does not grow with the lot.  Errors and release as
** bg_qa_lot_summarize's. */
BG_API int bg_qa_lot_summarize_each(bg_store *st, const char *code, const bg_qa_opts *o,
                                    const bg_qa_lot_sink *sink, bg_qa_lot_summary *out,
                                    bg_error *err);
BG_API void bg_qa_lot_summary_release(bg_qa_lot_summary *s);

#endif
