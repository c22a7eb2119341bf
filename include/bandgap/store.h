/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The calibration database: lots, probes, reference thermometers, runs, readings,
** exclusions, fits and generated artifacts, in one SQLite file (the backend behind
** bg_store_open's "sqlite:" scheme, the default).  History is append-only.  Every write is
** one transaction (BEGIN IMMEDIATE); any error leaves the database unchanged. */
#ifndef BANDGAP_STORE_H
#define BANDGAP_STORE_H

#include <stddef.h>
#include <time.h>

#include "bandgap/csv.h"
#include "bandgap/error.h"
#include "bandgap/fit.h"
#include "bandgap/model.h"
#include "bandgap/readings.h"
#include "bandgap/reference.h"

#define BG_STORE_APP_ID 0x42476170 /* "BGap" in PRAGMA application_id */

typedef struct bg_store bg_store;

enum { BG_STORE_CREATE = 1 << 0 };

/* Open the database named by 'target': "sqlite:PATH" or a plain PATH, a SQLite file.  A
** target that starts with a scheme, [a-z][a-z0-9+.-]+ and ':' (two characters at least, so
** a drive letter "C:" is a path), other than "sqlite:" is BG_EINVAL ("unknown database
** scheme"), unless a file of exactly that name exists (it is then opened as a path); write
** "./NAME" or "sqlite:NAME" for a new file whose name looks like a scheme.
** Without BG_STORE_CREATE a missing file is BG_ENOENT (with a
** hint to run init); with it a new file is created.  A file that is not a bandgap database
** (other application id, or tables of its own) is BG_EINVAL; a newer schema than this program
** knows is BG_EINVAL; an older one is copied to PATH.vN.bak with SQLite's backup API and then
** upgraded, each migration in its own transaction.  An existing file that cannot be read is
** BG_ENOENT; one that cannot be created BG_ECANTCREAT; see bg_store_open_with for the other
** causes.  Free with bg_store_close(). */
BG_API int bg_store_open(const char *target, int flags, bg_store **out, bg_error *err);

/* Options of bg_store_open_with; defaults from bg_store_default_opts(). */
typedef struct bg_store_opts {
    /* How long a call waits for a lock that another process holds before it fails with
    ** BG_EBUSY (a temporary failure: try again), in seconds, 0 to 3600; default 30. */
    double busy_timeout_s;
} bg_store_opts;
BG_API bg_store_opts bg_store_default_opts(void);
/* bg_store_open with options ('opts' NULL: the defaults); a busy timeout outside 0 to 3600 s
** is BG_EINVAL.  Failures of the database file name their cause and status: a full disk or an
** i/o error BG_EIO; a file, or its directory (where SQLite creates the rollback journal), that
** cannot be written BG_ECANTCREAT; a lock held past the busy timeout BG_EBUSY; a constraint of
** the record (CHECK, UNIQUE, a trigger) BG_EINVAL naming it.  Every call that writes says the
** same, and leaves the database unchanged when it fails. */
BG_API int bg_store_open_with(const char *target, int flags, const bg_store_opts *opts,
                              bg_store **out, bg_error *err);
BG_API void bg_store_close(bg_store *st);

/* The clock of the stored times (created_at, imported_at, exclusions, fits, reports): 'fixed'
** seconds since the epoch for every later write, or the system clock when 'fixed' is
** negative (the default).  The library reads no environment: a program that honours
** SOURCE_DATE_EPOCH passes it here. */
BG_API void bg_store_set_clock(bg_store *st, time_t fixed);
/* The handle's current time as ISO 8601 UTC ("2026-12-01T10:00:00Z") into 'buf'; returns
** 'buf'. */
BG_API char *bg_store_time(bg_store *st, char *buf, size_t size);

/* The schema version of the open file, and the newest this program knows. */
BG_API int bg_store_schema_version(bg_store *st);
BG_API int bg_store_schema_known(void);
/* Path of the backup made by the last upgrade on open, "" if none. */
BG_API const char *bg_store_backup_path(const bg_store *st);

/* Explicit transactions around several writes (bg_fit of a whole lot).  The write calls below
** join an open transaction instead of starting their own. */
BG_API int bg_store_begin(bg_store *st, bg_error *err);
BG_API int bg_store_commit(bg_store *st, bg_error *err);
BG_API void bg_store_rollback(bg_store *st);

/* ---- lots, probes, references ---- */

typedef struct bg_lot {
    long long id;
    char code[BG_TEXT], part[BG_TEXT];
    double r25_ohm, beta_k, pair_t1_k, pair_t2_k, tol_r25, tol_beta; /* tolerances: fractions;
                                      NaN (all six) for a lot of another kind than NTC, whose
                                      nominal values and tolerances are its part's */
    char note[BG_NOTE], created_at[BG_TIME];
    long long nprobes;
    int sensor; /* schema 13: the lot's sensor kind (BG_PART_NTC, BG_PART_JUNCTION, ...; below:
                ** the kinds a part can be); every lot added before schema 13 is an NTC lot */
} bg_lot;

typedef struct bg_probe {
    long long id, lot_id;
    char serial[BG_TEXT], lot_code[BG_TEXT], note[BG_NOTE], created_at[BG_TIME];
    long long nruns, nfits;
} bg_probe;

/* bg_ref, a reference thermometer with its correction, is in reference.h. */

/* Add a row; fills '*id'.  BG_EINVAL for a duplicate code/serial/ident, an unknown lot, an
** empty or too long text, or values that fail the physical checks. */
BG_API int bg_store_lot_add(bg_store *st, const bg_lot *lot, long long *id, bg_error *err);
BG_API int bg_store_probe_add(bg_store *st, const char *serial, const char *lot_code,
                              const char *note, long long *id, bg_error *err);
BG_API int bg_store_ref_add(bg_store *st, const bg_ref *ref, long long *id, bg_error *err);

/* Look up by code / serial / ident: BG_EINVAL "unknown ..." when absent.  A reference comes
** as in force now (the certificate, due date and correction of its newest version valid now;
** bg_store_ref_versions lists them); so does each of bg_store_ref_each. */
BG_API int bg_store_lot_get(bg_store *st, const char *code, bg_lot *out, bg_error *err);
BG_API int bg_store_probe_get(bg_store *st, const char *serial, bg_probe *out, bg_error *err);
BG_API int bg_store_ref_get(bg_store *st, const char *ident, bg_ref *out, bg_error *err);

/* Call 'cb' for each row (stop early by returning non-zero).  'lot_code' may be NULL. */
typedef int (*bg_lot_cb)(const bg_lot *lot, void *ctx);
typedef int (*bg_probe_cb)(const bg_probe *probe, void *ctx);
typedef int (*bg_ref_cb)(const bg_ref *ref, void *ctx);
BG_API int bg_store_lot_each(bg_store *st, bg_lot_cb cb, void *ctx, bg_error *err);
BG_API int bg_store_probe_each(bg_store *st, const char *lot_code, bg_probe_cb cb, void *ctx,
                               bg_error *err);
BG_API int bg_store_ref_each(bg_store *st, bg_ref_cb cb, void *ctx, bg_error *err);

/* ---- versions: a reference recalibrated, a lot's tolerances corrected, a probe moved ----
** A change is a new version, never an edit: what it changes, from when it is valid, who
** recorded it, when and why.  The first version of each is its row itself (version id 0,
** valid from its creation).  A verdict uses the version in force at the time of the
** calibration it judges: the newest version valid from at or before that time, else the row
** itself. */

typedef struct bg_version_head {
    long long id;                          /* 0: the first version, the row itself */
    char valid_from[BG_TIME];              /* ISO 8601; "" on adding: now */
    char why[BG_NOTE], by[BG_TEXT];        /* the reason and who recorded it ("" for id 0) */
    char created_at[BG_TIME];              /* when it was recorded */
} bg_version_head;

/* A version of a reference thermometer: 'ref' holds the identifier and, for this version, the
** certificate, due date and correction (the id, note and creation time are the row's). */
typedef struct bg_ref_version {
    bg_version_head v;
    bg_ref ref;
} bg_ref_version;

/* Add a version of reference 'rv->ref.ident' (a recalibration: certificate, due date and
** correction, all of them, as bg_store_ref_add checks them), valid from 'rv->v.valid_from'
** ("": now), with its reason 'why' and who 'by'; fills '*id'.  BG_EINVAL for an unknown
** reference (with "did you mean"), an empty reason or name, a validity that is not an ISO 8601
** time or is earlier than the reference's creation or than its newest version's validity;
** nothing is written then. */
BG_API int bg_store_ref_set(bg_store *st, const bg_ref_version *rv, long long *id,
                            bg_error *err);
/* Version 'version' of reference 'ident' (0: the row itself): what a run records it was
** corrected with (bg_run.ref_version).  BG_EINVAL when the reference has no such version. */
BG_API int bg_store_ref_version(bg_store *st, const char *ident, long long version,
                                bg_ref_version *out, bg_error *err);
/* Every version of reference 'ident', the first (the row itself) first. */
typedef int (*bg_ref_version_cb)(const bg_ref_version *rv, void *ctx);
BG_API int bg_store_ref_versions(bg_store *st, const char *ident, bg_ref_version_cb cb,
                                 void *ctx, bg_error *err);
/* The version of reference 'ident' in force at 'when' (ISO 8601; NULL or "": now). */
BG_API int bg_store_ref_at(bg_store *st, const char *ident, const char *when,
                           bg_ref_version *out, bg_error *err);

/* A version of a lot: 'lot' holds the code and, for this version, the tolerances and note
** (the nominal curve and the rest are the row's). */
typedef struct bg_lot_version {
    bg_version_head v;
    bg_lot lot;
} bg_lot_version;

/* Add a version of lot 'lv->lot.code' valid from 'lv->v.valid_from' ("": now), with its
** reason and author: the tolerances 'tol_r25' and 'tol_beta' (a negative value keeps the one
** in force before) and the note ("" keeps it).  Errors as bg_store_ref_set, and BG_EINVAL
** for a tolerance outside [0, 1) or a version that changes nothing. */
BG_API int bg_store_lot_set(bg_store *st, const bg_lot_version *lv, long long *id,
                            bg_error *err);
typedef int (*bg_lot_version_cb)(const bg_lot_version *lv, void *ctx);
/* Every version of lot 'code', the first (the row itself) first. */
BG_API int bg_store_lot_versions(bg_store *st, const char *code, bg_lot_version_cb cb,
                                 void *ctx, bg_error *err);
/* The version of lot 'code' in force at 'when' (ISO 8601; NULL or "": now). */
BG_API int bg_store_lot_at(bg_store *st, const char *code, const char *when,
                           bg_lot_version *out, bg_error *err);

/* A version of a probe: the lot it belongs to from 'v.valid_from' on (a move).  'probe'
** holds the serial and, for this version, the lot ('lot_id', 'lot_code'); the rest is the
** row's.  The first version (id 0) is the row itself, the lot the probe was added to. */
typedef struct bg_probe_version {
    bg_version_head v;
    bg_probe probe;
} bg_probe_version;

/* What a move changed: the recorded calibration runs of the probe that started at or after
** the move's validity, which counted toward 'from_lot' and now count toward the new lot. */
typedef struct bg_probe_move_result {
    long long id;                  /* the new version */
    char from_lot[BG_TEXT];        /* the lot the probe was in at the move's validity */
    char valid_from[BG_TIME];
    size_t runs_moved;             /* recorded runs that now count toward the new lot */
} bg_probe_move_result;

/* Move probe 'pv->probe.serial' to lot 'pv->probe.lot_code' from 'pv->v.valid_from' ("":
** now) on, with the reason 'why' and who 'by': a new version of the probe, never an edit (the
** probe row keeps the lot it was added to).  A calibration run counts toward the lot its
** probe belonged to when the run started (bg_store_probe_at): runs started before the
** validity stay with the lot they counted toward.  BG_EINVAL, with nothing written, for an
** unknown probe or lot (with "did you mean"), an empty reason or name, a validity that is not
** an ISO 8601 time, is later than now (a move is recorded once it has happened), or is
** earlier than the probe's creation or its newest version's validity; a move to the lot the
** probe is already in; a lot of another part; and a move that would take recorded runs
** (started at or after the validity) from or to a lot that has an issued lot report (the
** report's verdicts would no longer match the record: record the move valid from after those
** runs instead).  '*res' (may be NULL) says what changed. */
BG_API int bg_store_probe_move(bg_store *st, const bg_probe_version *pv,
                               bg_probe_move_result *res, bg_error *err);
typedef int (*bg_probe_version_cb)(const bg_probe_version *pv, void *ctx);
/* Every version of probe 'serial', the first (the row itself) first. */
BG_API int bg_store_probe_versions(bg_store *st, const char *serial, bg_probe_version_cb cb,
                                   void *ctx, bg_error *err);
/* The version of probe 'serial' in force at 'when' (ISO 8601; NULL or "": now): the lot it
** belonged to then. */
BG_API int bg_store_probe_at(bg_store *st, const char *serial, const char *when,
                             bg_probe_version *out, bg_error *err);

/* ---- runs and readings ---- */

typedef struct bg_run {
    long long id, probe_id, reference_id; /* reference_id 0: none */
    char serial[BG_TEXT], ref_ident[BG_TEXT];
    char operator_name[BG_TEXT], medium[BG_TEXT], ambient[BG_TEXT];
    char excitation[BG_TEXT]; /* free text of runs imported before schema 4, read only */
    char started_at[BG_TIME], source[BG_NOTE], note[BG_NOTE], imported_at[BG_TIME];
    long long nreadings, nexcluded, nfits;
    /* schema 3 */
    char readings_sha256[65];   /* SHA-256 of the readings as imported (hex; the canonical
                                ** form is in docs/commands/import.md); "" for a run imported
                                ** before schema 3 */
    long long repeats_run;      /* the earlier run with identical readings that this run
                                ** repeats on purpose ('new_run'); 0: none */
    char ref_due_date[BG_TIME]; /* the reference's calibration due date ("": none) */
    char ref_overdue[BG_NOTE];  /* the reason the reference was used past its due date ("":
                                ** it was not); on import, required when it is */
    int new_run;                /* import only: import readings identical to an earlier run's
                                ** of the probe as a new run on purpose */
    double measuring_current_a, measuring_voltage_v; /* the probe read with; 0: not given */
    /* schema 8 */
    long long ref_version;      /* the reference version the readings were corrected with,
                                ** the one in force at the run's start (0: the reference's
                                ** own row, or no reference) */
    /* schema 11 */
    int quantity;               /* what the readings are: a bg_quantity of model.h (0: a
                                ** resistance in ohm, every run before schema 11; 1: a voltage
                                ** in V, its excitation current in measuring_current_a when the
                                ** file stated one; 2: a reported temperature in degC; 3: a
                                ** code in LSB); a reading's r_ohm and u_r_ohm are in that
                                ** quantity.  Import takes it from the file, not from 'meta' */
} bg_run;

/* Create a run of probe 'meta->serial' from the readings 'rs' in one transaction.  Uses
** serial, ref_ident ("" for none), operator_name, medium, ambient, measuring_current_a or
** measuring_voltage_v (at most one, > 0; 0 for not given), started_at ("" takes the first
** reading's time, else now), source, note, ref_overdue and new_run from 'meta'.  A free-text
** 'excitation' is no longer stored: it is refused (BG_EINVAL), as is a current together with
** a voltage.  With a reference correction, each reading's temperature is corrected and the
** raw value kept.  The run keeps the SHA-256 of its readings.  Any problem is BG_EINVAL naming
** the file (and line where there is one), and nothing is written: an unknown probe or
** reference, a 'ref_ohms' file without a platinum reference, a reading the correction makes
** impossible; readings identical to an earlier run's of the same probe (the message names
** that run) unless 'meta->new_run'; a reading (or the run's start) later than the end of the
** reference's calibration due date (a date alone: the whole day, UTC) unless
** 'meta->ref_overdue' gives the reason, which is then recorded with the run; and a reason
** given when the reference is not past its due date. */
/* The name of a run's quantity (bg_run.quantity): "resistance", "voltage",
** "reported_temperature" or "code" (the values of run.quantity, NULL there for a resistance). */
BG_API const char *bg_store_quantity_name(int quantity);

BG_API int bg_store_import(bg_store *st, const bg_readings *rs, const bg_run *meta,
                           long long *run_id, bg_error *err);

/* The same from the readings file 'path' ("-" reads standard input) in memory independent of
** the file's size: the file is read twice, once to check every line and digest the readings
** before anything is written, then again inside the transaction to write them (standard
** input is copied to a temporary file for that; a file that changes in between is BG_EIO and
** nothing is written).  Errors as bg_csv_reader_open() and bg_csv_reader_next() ("FILE:LINE:
** field 'NAME': why"), then as bg_store_import(), in that order.  '*n' (may be NULL) gets
** the number of readings. */
BG_API int bg_store_import_file(bg_store *st, const char *path, const bg_run *meta,
                                long long *run_id, size_t *n, bg_error *err);

/* The same from the reader 'rd' positioned at its first reading, which is read to its end
** twice (rewound in between: a stream that cannot seek needs BG_CSV_TWICE). */
BG_API int bg_store_import_reader(bg_store *st, bg_csv_reader *rd, const bg_run *meta,
                                  long long *run_id, size_t *n, bg_error *err);

BG_API int bg_store_run_get(bg_store *st, long long run_id, bg_run *out, bg_error *err);
/* What run 'r' was measured with, for people: "measuring current 10 \xC2\xB5A", "measuring
** voltage 100 mV", an older run's free text as it was typed ("excitation 10 uA"), or
** "measuring current -" when none was given.  Writes into 'buf' of 'size' bytes; returns it. */
BG_API char *bg_store_run_measuring(const bg_run *r, char *buf, size_t size);
/* The newest run of a probe (the latest start time; of equal times the last imported):
** BG_EINVAL when it has none. */
BG_API int bg_store_run_latest(bg_store *st, long long probe_id, long long *run_id,
                               bg_error *err);
typedef int (*bg_run_cb)(const bg_run *run, void *ctx);
/* Runs of one probe, of one lot's probes, or all (both NULL). */
BG_API int bg_store_run_each(bg_store *st, const char *serial, const char *lot_code,
                             bg_run_cb cb, void *ctx, bg_error *err);

typedef struct bg_reading_row {
    long long id, run_id;
    size_t line;
    double t_raw;
    char t_raw_unit[4];            /* "K", "C", "F" or "ohm" */
    double t_k, r_ohm, u_t_k, u_r_ohm;
    char time[BG_TIME], note[BG_NOTE];
    int excluded;
    char excl_reason[BG_NOTE], excl_by[BG_TEXT], excl_at[BG_TIME];
    int quantity;                  /* the run's quantity (bg_run.quantity): r_ohm and u_r_ohm
                                   ** are in its unit (schema 11) */
} bg_reading_row;
typedef int (*bg_reading_cb)(const bg_reading_row *row, void *ctx);
BG_API int bg_store_reading_each(bg_store *st, long long run_id, bg_reading_cb cb, void *ctx,
                                 bg_error *err);

/* The points of a run that are not excluded, in file order, with their reading ids, into a
** reusable buffer (release with bg_store_points_release). */
typedef struct bg_store_points {
    bg_point *pts;
    long long *ids;
    size_t n, cap;
} bg_store_points;
#define BG_STORE_POINTS_INIT { NULL, NULL, 0, 0 }
BG_API int bg_store_run_points(bg_store *st, long long run_id, bg_store_points *out,
                               bg_error *err);
BG_API void bg_store_points_release(bg_store_points *p);

/* For each probe of lot 'lot_code', in the order the probes were added: its newest run (0 if none) and that run's
** points that are not excluded, read in one pass.  'cb' may store fits on the same handle;
** it stops the pass by returning non-zero.  The points are valid during the call only. */
typedef int (*bg_lot_points_cb)(const char *serial, long long probe_id, long long run_id,
                                bg_store_points *points, void *ctx);
BG_API int bg_store_lot_points_each(bg_store *st, const char *lot_code, bg_lot_points_cb cb,
                                    void *ctx, bg_error *err);

/* Exclude a reading from future fits: who, when (now) and why are recorded; the reading row
** stays.  BG_EINVAL for an unknown or already excluded reading or an empty reason or name
** (the library never invents who made a change). */
BG_API int bg_store_exclude(bg_store *st, long long reading_id, const char *why,
                            const char *by, bg_error *err);

/* ---- fits ---- */

typedef struct bg_fit_row {
    long long id, run_id, probe_id;
    char serial[BG_TEXT];
    bg_model model;
    size_t npar, n, dof;
    int weighted, has_cov;
    double cov[BG_MODEL_MAXPAR * BG_MODEL_MAXPAR]; /* npar x npar, row-major */
    double chi2, cov_scale, rms_mk, max_abs_mk, t_min_k, t_max_k;
    char program_version[BG_TIME], created_at[BG_TIME];
} bg_fit_row;

/* The standard uncertainty of a stored fit's coefficient 'i' (the square root of its
** variance); NaN without a covariance or when 'i' is out of range. */
BG_API double bg_fit_row_coef_u(const bg_fit_row *f, size_t i);

/* Store 'fit' of run 'run_id' made from the readings 'reading_ids' (fit->n of them). */
BG_API int bg_store_fit_save(bg_store *st, long long run_id, const bg_fit *fit,
                             const long long *reading_ids, long long *fit_id, bg_error *err);
/* The same for many fits in one open transaction (bg_store_begin): the row is queued and
** written with others in one statement, at the latest when bg_store_commit (or
** bg_store_fit_flush, or bg_store_fit_save) runs; '*fit_id' is its id at once.  Queued
** fits are not seen by queries until then; bg_store_rollback drops them.  Any error at the
** flush fails the commit and rolls the transaction back. */
BG_API int bg_store_fit_queue(bg_store *st, long long run_id, const bg_fit *fit,
                              const long long *reading_ids, long long *fit_id, bg_error *err);
BG_API int bg_store_fit_flush(bg_store *st, bg_error *err);
BG_API int bg_store_fit_get(bg_store *st, long long fit_id, bg_fit_row *out, bg_error *err);
typedef int (*bg_fit_cb)(const bg_fit_row *fit, void *ctx);
BG_API int bg_store_fit_each(bg_store *st, const char *serial, const char *lot_code,
                             bg_fit_cb cb, void *ctx, bg_error *err);
/* The reading ids a fit used, ascending, into 'ids' (room for fit->n). */
BG_API int bg_store_fit_readings(bg_store *st, long long fit_id, long long *ids, size_t max,
                                 size_t *n, bg_error *err);

/* The newest fit of run 'run_id' (the largest id) into '*fit_id', 0 when the run has none:
** the fit chosen for the run. */
BG_API int bg_store_run_fit(bg_store *st, long long run_id, long long *fit_id, bg_error *err);

/* A stored fit of run 'run_id' identical to 'fit' made from 'reading_ids' (the same readings,
** model and reference temperature, and bit for bit the same coefficients, covariance and
** statistics: what the same readings, model and options give), the oldest of them, into
** '*fit_id'; 0 when there is none. */
BG_API int bg_store_fit_find_same(bg_store *st, long long run_id, const bg_fit *fit,
                                  const long long *reading_ids, long long *fit_id,
                                  bg_error *err);

/* A probe's current fit: the fit chosen for its latest run (bg_store_run_latest: by the run's
** start time, not by when it was imported or fitted), that is the newest fit of that run.
** Refitting an older run never changes it.  Fills '*fit' and, when not NULL, '*run' (the
** latest run).  BG_EINVAL for an unknown probe, a probe without runs, or a latest run without
** a fit (the message names the run: fit it, or name a fit explicitly). */
BG_API int bg_store_current_fit(bg_store *st, const char *serial, bg_fit_row *fit, bg_run *run,
                                bg_error *err);

/* ---- calibration history for QA ----
** A lot's runs are those that count toward it: a run counts toward the lot its probe belonged
** to when the run started (bg_store_probe_at; a probe moved with bg_store_probe_move takes its
** later runs to its new lot).  A lot's probes in the lot-wide reads below, and in
** bg_store_lot_points_each and the lot filters of bg_store_run_each and bg_store_fit_each, are
** those in the lot now or with a run that counts toward it, each with those runs only. */

/* For each run of probe 'serial' started at or after 'since' (NULL or "" for all), oldest
** first: its newest fit, or NULL when the run has not been fitted; 'started_at' is the run's. */
typedef int (*bg_history_cb)(const char *started_at, long long run_id, const bg_fit_row *fit,
                             void *ctx);
BG_API int bg_store_probe_history(bg_store *st, const char *serial, const char *since,
                                  bg_history_cb cb, void *ctx, bg_error *err);

/* For each probe of a lot, in the order they were added: its current fit among the runs
** started at or after 'since' (the newest fit of the latest of those runs, as
** bg_store_current_fit), or NULL when it has none (no run, or the latest is not fitted). */
typedef int (*bg_latest_cb)(const char *serial, const bg_fit_row *fit, void *ctx);
BG_API int bg_store_lot_latest_fits(bg_store *st, const char *lot_code, const char *since,
                                    bg_latest_cb cb, void *ctx, bg_error *err);

/* In one pass over a lot: for each probe (in the order added) the newest fit of each of its
** fitted runs started at or after 'since', oldest run first, with the runs' start times.
** The rows carry what QA history needs (ids, serial, model and coefficients, range, n and
** dof); the covariance and the fit statistics are not read (has_cov 0, statistics NaN,
** version and creation time empty): bg_store_fit_get gives a whole fit. */
typedef int (*bg_lot_history_cb)(const char *serial, const bg_fit_row *fits,
                                 char (*started_at)[BG_TIME], size_t n, void *ctx);
BG_API int bg_store_lot_history(bg_store *st, const char *lot_code, const char *since,
                                bg_lot_history_cb cb, void *ctx, bg_error *err);

/* In one pass over a lot, for each of its probes in the order of their serials (the order
** of bg_store_probe_each), what bg_store_probe_history gives for that probe: the newest fit
** of each fitted run started at or after 'since' (NULL or "" for all), oldest run first, as
** whole rows ('n' of them, with the runs' start times), and the number of such runs without
** a fit.  A probe without runs comes with n = 0.  The arrays are valid during the call.
** Nonzero from 'cb' stops the walk.  BG_EINVAL for an unknown lot. */
typedef int (*bg_lot_histories_cb)(const char *serial, const bg_fit_row *fits,
                                   char (*started_at)[BG_TIME], size_t n, size_t unfitted,
                                   void *ctx);
BG_API int bg_store_lot_histories(bg_store *st, const char *lot_code, const char *since,
                                  bg_lot_histories_cb cb, void *ctx, bg_error *err);

/* The lots of part 'part', oldest first. */
BG_API int bg_store_part_lots(bg_store *st, const char *part, bg_lot_cb cb, void *ctx,
                              bg_error *err);

/* ---- the whole record of a probe or a lot, for export ---- */

/* What bg_store_export_each calls, in this order, for each probe: 'probe'; for each of its
** runs (by id) 'run', its readings ('reading', by id, excluded ones included with their
** reason) and 'run_end'; then 'fits', and each of its fits (by id, whole rows) 'fit'; then
** 'probe_end'.  A NULL member is skipped.  Nonzero from any of them stops the walk (and
** bg_store_export_each returns BG_OK: the caller knows why it stopped). */
typedef struct bg_export_cbs {
    int (*probe)(const bg_probe *p, void *ctx);
    int (*run)(const bg_run *r, void *ctx);
    int (*reading)(const bg_reading_row *g, void *ctx);
    int (*run_end)(const bg_run *r, void *ctx);
    int (*fits)(const bg_probe *p, void *ctx);
    int (*fit)(const bg_fit_row *f, void *ctx);
    int (*probe_end)(const bg_probe *p, void *ctx);
} bg_export_cbs;

/* Walk the record of probe 'serial' or of every probe of lot 'lot_code' (by serial): exactly
** one of the two is given.  One read transaction; the statements are prepared once, so the
** cost grows with the rows written and the logarithm of the database's size.  BG_EINVAL for
** an unknown probe or lot, or for neither or both given; a store error. */
BG_API int bg_store_export_each(bg_store *st, const char *serial, const char *lot_code,
                                const bg_export_cbs *cbs, void *ctx, bg_error *err);

/* ---- issued artifacts (reports) ---- */

typedef struct bg_artifact {
    long long id, fit_id, replaces_id, replaced_by; /* 0: none */
    char kind[BG_TEXT], version[BG_TIME], created_at[BG_TIME];
    char *spec;             /* JSON: {"subject": ..., and what the report was made from} */
    char *content;          /* the bytes as issued, NUL-terminated */
    size_t len;
} bg_artifact;
BG_API void bg_artifact_release(bg_artifact *a);

/* The head of the record chain: how many records, and the last one's SHA-256 in hex. */
typedef struct bg_chain_head {
    long long records;
    char hash[65];
} bg_chain_head;

/* Makes the content of artifact 'id' issued at 'created_at' (malloc'd, '*len' bytes), on the
** record whose chain head is 'head' (the artifact's own record follows it). */
typedef int (*bg_artifact_gen)(long long id, const char *created_at, const bg_chain_head *head,
                               void *ctx, char **content, size_t *len, bg_error *err);
/* What to issue: 'kind' ("report-calibration", ...), the 'subject' it is about, the fit it
** shows (0: none), 'spec' as JSON whose "subject" is 'subject', the artifact it replaces (0:
** none), the program's 'version', and 'gen' with its 'ctx' to make the content; 'issued',
** when not NULL, receives the row as stored (its content the very bytes hashed into the
** record chain, NUL-terminated; all zero after an error), so that the caller need not read a
** large report back; release it with bg_artifact_release. */
typedef struct bg_artifact_req {
    const char *kind, *subject;
    long long fit_id;
    const char *spec;
    long long replaces_id;
    const char *version;
    bg_artifact_gen gen;
    void *ctx;
    bg_artifact *issued;
} bg_artifact_req;
/* Issue an artifact in one write transaction: the identifier is the next id, 'req->gen' makes
** the content with it, and the row is stored; '*id' is its id.  A subject that already has an
** artifact of this kind is BG_EINVAL unless 'req->replaces_id' names its newest one (a
** reissue), and a 'replaces_id' without one is too. */
BG_API int bg_store_artifact_issue(bg_store *st, const bg_artifact_req *req, long long *id,
                                   bg_error *err);
/* The artifact as issued; BG_EINVAL when its bytes or row no longer match its record in the
** chain (changed outside bandgap). */
BG_API int bg_store_artifact_get(bg_store *st, long long id, bg_artifact *out, bg_error *err);
/* Every artifact, oldest first; 'content' is NULL in the rows passed. */
typedef int (*bg_artifact_cb)(const bg_artifact *a, void *ctx);
BG_API int bg_store_artifact_each(bg_store *st, bg_artifact_cb cb, void *ctx, bg_error *err);

/* ---- the record's defences: the hash chain and its verification ---- */

/* Every appended record (a lot, probe, reference thermometer, part specification, run with
** its readings, exclusion, fit or issued report) is chained to the one before it by SHA-256
** over a canonical encoding of its content, in the transaction that adds it.  The head is the
** number of records and the last one's hash (0 and 64 '0' for an empty record). */
BG_API int bg_store_chain_head(bg_store *st, long long *records, char head[65], bg_error *err);

/* What bg_store_verify found.  'bad' 0: the database's own checks pass, the chain holds and
** every row of the chained tables is in it; 'records' were verified up to 'head'. */
typedef struct bg_store_check {
    int integrity_ok, foreign_keys_ok; /* the backend's own checks passed */
    long long records;                 /* chain records that verified */
    char head[65];                     /* the hash of the last record that verified */
    int bad;                           /* 1: a problem, said in 'problem' */
    long long bad_seq;                 /* the chain record where it was found (0: none) */
    char bad_kind[16];                 /* the table and row it concerns ("" when none) */
    long long bad_id;
    char problem[512];
} bg_store_check;
/* Verify the whole record: the database's integrity and foreign keys, then each record of
** the chain recomputed from the one before, then that no row is missing from the chain.
** Stops at the first problem.  BG_OK whether or not a problem was found (see 'out->bad');
** an error only when the check itself could not run. */
BG_API int bg_store_verify(bg_store *st, bg_store_check *out, bg_error *err);

/* ---- a whole database copied to another (a file to a server and back) ---- */

#define BG_COPY_NTABLES 17
typedef struct bg_store_copy_result {
    size_t ntables;
    const char *table[BG_COPY_NTABLES]; /* the tables copied, parents first */
    long long rows[BG_COPY_NTABLES];    /* the rows copied into each */
    long long records;                  /* the record chain's length, the same on both ends */
    char head[65];                      /* its head hash, the same on both ends */
} bg_store_copy_result;
/* Copy every row of 'from' into 'to' as it is stored (ids, times, numbers, stored reports
** and the record chain kept), in one write transaction on 'to'; 'from' is only read, in
** one snapshot.  The target must be empty (no row in any of the tables): otherwise
** BG_ECANTCREAT naming a table that holds rows (copies never merge).  Both must be at the
** same schema version (BG_EINVAL).  Before committing, the target's row counts and chain
** head are compared with the source's and the target's whole record is verified
** (bg_store_verify); any difference is BG_EINVAL and nothing is written.  A row the target
** backend does not store yet is BG_EUNAVAIL, nothing written. */
BG_API int bg_store_copy(bg_store *from, bg_store *to, bg_store_copy_result *res,
                         bg_error *err);

/* ---- what a part number specifies ---- */

/* A part's specification: its nominal curve, an interchangeability tolerance in kelvin and
** the QA defaults of its lots.  Rows are only ever added: the newest is the part's
** specification, and each row keeps its id and time. */
typedef struct bg_part_spec {
    long long id;                     /* the row; 0: the part has no specification */
    char part[BG_TEXT];
    int have_model;                   /* 0: no nominal curve (the lots' R25 and B stand in) */
    bg_model model;                   /* the nominal curve, any kind of the model table */
    char source[BG_NOTE];             /* where the curve came from, as the user gave it */
    double tol_k, tol_lo_k, tol_hi_k; /* |deviation| <= tol_k over [tol_lo_k, tol_hi_k];
                                         tol_k 0: no tolerance in kelvin */
    size_t baseline;                  /* control limits from the first 'baseline' lots; 0: none */
    double limit_k, rate_k;           /* drift limits (K, K per year); 0: none */
    /* schema 12: the kind of sensor (BG_PART_*) and its nominal values in its own quantities
    ** (BG_PART_NTC: none here, the lots' R25 and B are the nominal values) */
    int sensor;
    double nom_t_k;                   /* where the values are: PTC at R_ref, junction and IC at
                                         T_r; PRT 273.15 K (R0) */
    double nom_x, tol_x;              /* PTC: R_ref ohm, tolerance a fraction; junction: V at
                                         T_r in V, tolerance V; PRT: R0 ohm (tolerance from the
                                         class, tol_x 0); IC: offset c0 K, tolerance K */
    double nom_s, tol_s;              /* PTC: alpha 1/K, tolerance a fraction of it; junction:
                                         dV/dT V/K, tolerance V/K; IC: gain c1, tolerance
                                         absolute; PRT: 0 */
    char iec_class[4];                /* PRT: IEC 60751 class "AA", "A", "B", "C" */
    char note[BG_NOTE], created_at[BG_TIME];
} bg_part_spec;

/* The kinds of sensor a part can be, for its nominal values. */
enum { BG_PART_NTC = 0, BG_PART_PTC, BG_PART_JUNCTION, BG_PART_PRT, BG_PART_IC };
#define BG_PART_NSENSOR 5
/* The name of sensor kind 's' ("ntc", "ptc", "junction", "prt", "ic"; "?" out of range), and
** the kind named 'name' into '*s' (BG_EINVAL for another name, listing these). */
BG_API const char *bg_part_sensor_name(int s);
BG_API int bg_part_sensor_parse(const char *name, int *s, bg_error *err);

/* Append a specification for part 'p->part' (created_at is now); fills '*id'.  BG_EINVAL for
** an empty or too long text, a model whose coefficients fail bg_model_set_coef's checks or
** whose resistance does not fall with temperature over the tolerance range, a tolerance
** without its range (or lo >= hi), negative limits; nothing is written then. */
BG_API int bg_store_part_spec_add(bg_store *st, const bg_part_spec *p, long long *id,
                                  bg_error *err);
/* The newest specification of 'part' into '*out'; a part without one gives BG_OK with
** out->id 0 (and out->part set). */
BG_API int bg_store_part_spec_get(bg_store *st, const char *part, bg_part_spec *out,
                                  bg_error *err);
/* Every specification of 'part', oldest first. */
typedef int (*bg_part_spec_cb)(const bg_part_spec *p, void *ctx);
BG_API int bg_store_part_spec_each(bg_store *st, const char *part, bg_part_spec_cb cb,
                                   void *ctx, bg_error *err);

#endif
