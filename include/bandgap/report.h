/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Reports: self-contained HTML (inline CSS and SVG, no scripts, no request) rendered from
** result structs.  A report kind is one const struct (a name, an id prefix, a title, the
** artifact kind it is stored under, and a generator) and one row in the library's table of
** kinds (src/lib/report/report.c); look kinds up by name.  A generator takes the kind's
** result struct and writes the page; it neither reads the database nor parses options.
** Calibration and lot reports are issued once and stored as bytes in the artifact table
** (bg_store_artifact_issue); the table report is not stored. */
#ifndef BANDGAP_REPORT_H
#define BANDGAP_REPORT_H

#include <stddef.h>
#include <stdio.h>

#include "bandgap/error.h"
#include "bandgap/qa.h"
#include "bandgap/lut.h"
#include "bandgap/store.h"

/* What a report's head shows besides its subject.  Strings may be NULL (not shown, or "not
** recorded"); none is kept after the call. */
typedef struct bg_report_head {
    long long id;           /* the stored report's number: "BG-CAL-000042"; 0: not stored */
    const char *issued;     /* ISO 8601 time of issue (of generation, for the table report) */
    const char *lab;        /* laboratory ("not recorded" when NULL) */
    const char *customer;   /* shown only when given */
    long long replaces;     /* a reissue: the report it replaces; 0: none */
    const char *why;        /* a reissue: the reason */
    const bg_chain_head *chain; /* the record's chain head when issued (NULL: not shown) */
} bg_report_head;

/* Writes the report of 'result' (the kind's result struct) to 'f'.  BG_ENOMEM / BG_EIO or
** the result's own errors (BG_EINVAL) with a message in 'err'. */
typedef int (*bg_report_gen)(const void *result, const bg_report_head *head, FILE *f,
                             bg_error *err);

typedef struct bg_report_kind {
    const char *name;          /* "calibration", "lot", "table" */
    const char *id_prefix;     /* "BG-CAL", "BG-LOT"; "table" (the table report's identifier
                               ** is "table STRATEGY N entries": it is not stored) */
    const char *title;         /* the page's title and heading */
    const char *artifact_kind; /* the kind of its stored rows ("report-run"); NULL: not stored */
    bg_report_gen generate;
} bg_report_kind;

/* The kind called 'name', or NULL. */
BG_API const bg_report_kind *bg_report_kind_find(const char *name);
/* The i-th kind of the table (0, 1, ...), or NULL past the last. */
BG_API const bg_report_kind *bg_report_kind_at(size_t i);

/* The report into memory: '*html' (malloc'd, free() it; not NUL-terminated beyond '*len'
** bytes) and '*len'.  On error '*html' is NULL. */
BG_API int bg_report_render(const bg_report_kind *kind, const void *result,
                            const bg_report_head *head, char **html, size_t *len,
                            bg_error *err);

/* ---- the calibration report: one fit of one run ---- */

typedef struct bg_report_rt_row {
    double t_c, r_ohm;   /* the curve's resistance at t (degC, as the table shows it) */
    double alpha_per_k;  /* its temperature coefficient */
    double U_k;          /* expanded uncertainty U = cover.k u of the curve; NaN: none */
} bg_report_rt_row;

enum { BG_REPORT_BAND = 41 }; /* points of the U band over the validity range */

typedef struct bg_calib_report {
    /* what was calibrated, filled by the caller (or bg_calib_report_load) */
    bg_run run;
    bg_probe probe;
    bg_lot lot;
    int have_ref;                 /* 0: the run names no reference thermometer */
    bg_ref ref;
    bg_fit_row fit;
    bg_reading_row *readings;     /* the run's readings, excluded ones too (malloc'd) */
    size_t nreadings;
    double dissipation_w_per_k;   /* the probe's dissipation constant; 0: not given */
    bg_coverage_rule rule;        /* how U is expanded (p 0: bg_coverage_default(), as 'fit') */
    /* computed by bg_calib_report_compute */
    double *t_fit_k;              /* per reading: the fitted curve's T at its R (NaN: none) */
    double *resid_mk;             /* per reading: measured - fitted, mK */
    double t_lo_k, t_hi_k;        /* the readings' temperature span */
    double r_max_ohm;             /* the largest resistance read */
    int have_current;             /* the excitation parsed as a current */
    double excitation_a;          /* that current */
    double power_w;               /* I^2 R_max: the largest power in the thermistor */
    double selfheat_mk;           /* power over the dissipation constant; NaN: not given */
    double band_t_k[BG_REPORT_BAND], band_u_k[BG_REPORT_BAND]; /* u(T) of the curve (NaN) */
    double u_max_k;               /* the largest of band_u_k; NaN: no covariance */
    bg_coverage cover;            /* k of U for the fit's dof (nu_eff = n - p) by 'rule' */
    double coverage;              /* cover.p: the coverage probability of U */
    double rt_from_c, rt_to_c, rt_step_c; /* the R-T table: the validity range's ends
                                          ** (first and last rows) and the round step of
                                          ** the rows between them */
    bg_report_rt_row *rt;         /* malloc'd */
    size_t nrt;
} bg_calib_report;

#define BG_CALIB_REPORT_INIT { 0 }
BG_API void bg_calib_report_release(bg_calib_report *r);

/* Fill the computed part of '*r' from its fit and readings: residuals, span, self-heating
** from the run's excitation ("10 uA"), the u(T) band and its maximum, the coverage factor k
** by 'rule' (Student's t for the fit's degrees of freedom at 95.45 % by default, as 'fit'
** prints it) and the R-T table (the validity range's two ends and the multiples of a round
** step between them).
** BG_ENOMEM, or BG_EINVAL for a fit whose range is not finite, with a message. */
BG_API int bg_calib_report_compute(bg_calib_report *r, bg_error *err);

/* Load run 'run_id' and its fit 'fit_id' (0: the run's newest fit), probe, lot, reference
** and readings from 'st', and compute (bg_calib_report_compute).  BG_EINVAL when the run has
** no fit or the fit is not of the run.  Release with bg_calib_report_release. */
BG_API int bg_calib_report_load(bg_store *st, long long run_id, long long fit_id,
                                double dissipation_w_per_k, bg_calib_report *out,
                                bg_error *err);

/* ---- the lot report ---- */

/* What the lot report shows: the lot, and its statistics, drift and the part's control charts
** (bg_qa_lot_summarize); the report is flagged when the summary is.  With 'summary' NULL, the
** page is written while the lot is read from 'st' with the options 'qa'
** (bg_qa_lot_summarize_each: the same page, whose probes are never all held in memory). */
typedef struct bg_lot_report {
    bg_lot lot;
    const bg_qa_lot_summary *summary;
    bg_store *st;
    const bg_qa_opts *qa;
} bg_lot_report;

/* ---- the table report: a firmware table's error at every code and its budget ---- */

/* The result is a bg_lut_result made with 'error_curve' set (lut.h, bg_lut_make). */

/* ---- issuing: generate, store once, fetch the stored bytes ---- */

typedef struct bg_report_opts {
    const char *lab, *customer;  /* NULL: not recorded / not shown */
    long long replaces;          /* reissue: the newest report of the subject; 0: none */
    const char *why;             /* reissue: why */
    double dissipation_w_per_k;  /* calibration: the probe's dissipation constant; 0: none */
    const bg_qa_opts *qa;        /* lot: baseline and drift limits (NULL: the defaults, and the
                                    part's) */
} bg_report_opts;

/* Issue the calibration report of run 'run_id' (fit 'fit_id', 0: its newest) and store it:
** a subject ("run N") that already has a report is BG_EINVAL unless 'o->replaces' names its
** newest one.  Fills '*out' with the stored row and its bytes (bg_artifact_release). */
BG_API int bg_report_issue_run(bg_store *st, long long run_id, long long fit_id,
                               const bg_report_opts *o, bg_artifact *out, bg_error *err);

/* The same for the lot report of lot 'code': summarises the lot (bg_qa_lot_summarize) and
** issues its report ("lot CODE"). */
BG_API int bg_report_issue_lot(bg_store *st, const char *code, const bg_report_opts *o,
                               bg_artifact *out, bg_error *err);

#endif
