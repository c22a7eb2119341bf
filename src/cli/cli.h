/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The bandgap program's shared declarations: commands, context, output helpers. */
#ifndef BANDGAP_CLI_H
#define BANDGAP_CLI_H

#include <stdio.h>
#include <time.h>

#include "bandgap/bandgap.h"

/* Results of a command beyond bg_status; main() maps all of them to exit statuses. */
enum { CLI_EUSAGE = 100, CLI_ECANTCREAT = 101, CLI_FLAGGED = 102 };

struct cli_ctx {
    const char *db_path; /* --db, BANDGAP_DB or "bandgap.db" */
    int json;            /* --json */
    double busy_timeout_s; /* --busy-timeout; negative: the library's default */
};

typedef int (*cmd_fn)(int argc, char **argv, struct cli_ctx *ctx);

/* Print "bandgap: MESSAGE" to stderr. */
void cli_error(const char *fmt, ...) BG_PRINTF(1, 2);
/* Print "bandgap: warning: MESSAGE" to stderr. */
void cli_warn(const char *fmt, ...) BG_PRINTF(1, 2);
/* Print a usage error and the hint "Try 'bandgap CMD --help'"; returns CLI_EUSAGE. */
/* Who records a change: 'given' (--by) when not NULL, else $USER when set and not empty,
** else the login name of the effective user id, else "uid N"; into 'buf' (returned).  'how'
** gets "" for --by and $USER, else which of the last two was used, for cli_who_note. */
const char *cli_who(const char *given, char *buf, size_t size, char *how, size_t hsize);
/* After the change was recorded: say on stderr who it was recorded as, unless --by or $USER. */
void cli_who_note(const char *who, const char *how);
int cli_usage_error(const char *cmd, const char *fmt, ...) BG_PRINTF(2, 3);
/* The usage error for the unknown option 'arg' of command 'cmd' (NULL: the program), with the
** nearest name of 'opts' (a getopt_long table) as "did you mean" (bg_suggest); CLI_EUSAGE. */
struct option;
int cli_unknown_option(const char *cmd, const char *arg, const struct option *opts);
/* Report 'err' as "bandgap: WHAT: MESSAGE" and return its code. */
int cli_fail(const char *what, const bg_error *err);
/* Route stdout and stderr through the filter that shows control characters and invalid UTF-8
** as escapes (safeout.c); called once at the start of main. */
void cli_safe_streams(void);

/* A list of numbers "1.4e-3,2.37e-4" into 'v' (at most 'max'); BG_EINVAL on bad text. */
int cli_parse_list(const char *s, double *v, size_t max, size_t *n, bg_error *err);

/* Numbers are written in the shortest form that reads back: bg_num_shortest (json.h). */
enum { CLI_NUM = BG_NUM_SHORTEST };

/* ---- JSON output: numbers in the shortest form that round-trips (bg_num_shortest); NaN and
** infinities become null ---- */
typedef struct json_out {
    FILE *f;
    int depth;
    int need_comma[32];
} json_out;

void json_begin(json_out *j, FILE *f);
void json_end(json_out *j); /* newline after the top-level value */
void json_obj(json_out *j, const char *key); /* key may be NULL inside arrays / at top */
void json_obj_end(json_out *j);
void json_arr(json_out *j, const char *key);
void json_arr_end(json_out *j);
void json_num(json_out *j, const char *key, double v);
void json_int(json_out *j, const char *key, long long v);
void json_str(json_out *j, const char *key, const char *s);
void json_bool(json_out *j, const char *key, int v);
void json_null(json_out *j, const char *key);
void json_nums(json_out *j, const char *key, const double *v, size_t n);
/* 'text', one JSON value (RFC 8259) such as a stored spec, written as it is; BG_EINVAL and
** nothing written when it is not exactly one JSON value. */
int json_raw(json_out *j, const char *key, const char *text);

/* Open the database of 'ctx' (create it with 'create'); reports errors itself and returns the
** code for main(), or BG_OK.  Says on stderr when an older schema was upgraded. */
int cli_open_store(struct cli_ctx *ctx, int create, bg_store **st);
/* The time for stored and printed stamps: SOURCE_DATE_EPOCH when set, else the system clock. */
time_t cli_clock(void);
/* Temperatures "0C,25C,50C" into 't_k' (at most 'max'); BG_EINVAL on bad text. */
int cli_parse_temps(const char *s, double *t_k, size_t max, size_t *n, bg_error *err);
/* Parse a positive integer id ("12", at most 9223372036854775807); BG_EINVAL otherwise. */
int cli_parse_id(const char *s, long long *id);
/* An output file written whole or not at all: the content goes to a temporary file
** "PATH.tmp.XXXXXX" in the same directory, which cli_out_commit flushes to the disk (fsync) and
** renames to PATH, so that PATH holds either its old content or the whole new one, never a
** part.  A kill leaves at most the temporary file, whose name says what it is.  PATH "-" or
** NULL is standard output; an existing PATH that is not a regular file (a device such as
** /dev/null, a FIFO) is written directly.  A symbolic link is followed: its target is
** replaced.  The new file has the old file's permissions, or 0666 less the umask. */
struct cli_out {
    FILE *f;          /* write here */
    const char *path; /* as given, for messages */
    char *target;     /* the file renamed over (NULL: written directly) */
    char *tmp;        /* the temporary file (NULL: none) */
};
/* Open 'path' for 'cmd'; prints the error and returns CLI_ECANTCREAT, or BG_OK. */
int cli_out_open(struct cli_out *o, const char *path, const char *cmd);
/* Complete the file: flush, fsync, close and rename into place.  On any failure the temporary
** file is removed, PATH is untouched, the error is printed and BG_EIO returned. */
int cli_out_commit(struct cli_out *o, const char *cmd);
/* Abandon the file: close and remove the temporary file; PATH is untouched. */
void cli_out_discard(struct cli_out *o);
/* Print a text field for a table, "-" when empty. */
const char *cli_or_dash(const char *s);
/* Show progress "what i/n" on stderr when it is a terminal (not TERM=dumb); i == n ends it. */
void cli_progress(const char *what, size_t i, size_t n);

/* ---- shared options (opts.c) ---- */

/* A model given on the command line (eval, curve, lut): --model, --coef, --r25/--r0, --beta,
** --t0. */
struct cli_inline {
    const char *model;
    double coef[BG_MODEL_MAXPAR];
    size_t ncoef;
    int have_coef;
    double r25, beta, t0_k;
    char pname[8][32];  /* --param NAME=VALUE (eval and curve) */
    double pval[8];
    size_t nparam;
};
enum { CLI_IN_MODEL = 200, CLI_IN_COEF, CLI_IN_R25, CLI_IN_BETA, CLI_IN_T0, CLI_IN_PARAM };
/* --param NAME=VALUE, the held parameters of a kind (eval and curve). */
#define CLI_INLINE_PARAM_OPTION { "param", required_argument, NULL, CLI_IN_PARAM }
#define CLI_INLINE_OPTIONS                                                                     \
    { "model", required_argument, NULL, CLI_IN_MODEL },                                        \
    { "coef", required_argument, NULL, CLI_IN_COEF },                                          \
    { "r25", required_argument, NULL, CLI_IN_R25 },                                            \
    { "r0", required_argument, NULL, CLI_IN_R25 },                                             \
    { "beta", required_argument, NULL, CLI_IN_BETA },                                          \
    { "t0", required_argument, NULL, CLI_IN_T0 }
void cli_inline_init(struct cli_inline *in);
/* Take option 'opt' (one of CLI_IN_*); returns BG_OK or the usage error's code. */
int cli_inline_option(struct cli_inline *in, int opt, const char *arg, const char *cmd);
int cli_inline_given(const struct cli_inline *in);
/* Build the model; a usage error (CLI_EUSAGE) when something is missing or does not fit. */
int cli_inline_model(const struct cli_inline *in, const char *cmd, bg_model *m);
/* The stored fit a command uses and how it was chosen (its provenance). */
struct cli_fit_used {
    long long fit_id, run_id;
    int current;                /* 1: the probe's current fit (--probe); 0: named (--fit) */
    char serial[BG_TEXT], started_at[BG_TIME], created_at[BG_TIME], model[16];
};
/* The fit of --probe 'serial' (its current fit, bg_store_current_fit) or else of --fit
** 'fit_id' into '*fit' and '*used'.  Says on stderr ("bandgap: CMD: ...") which fit, run and
** date --probe chose, and when a fit named by --fit is not its probe's current fit, which
** one is.  Returns a bg_status with 'err' filled (nothing printed) on an error. */
int cli_stored_fit(bg_store *st, const char *serial, long long fit_id, const char *cmd,
                   bg_fit_row *fit, struct cli_fit_used *used, bg_error *err);
/* 'used' as JSON keys of the object open in 'j': fit_id, run_id, probe, run_started_at,
** fit_created_at and fit_chosen ("current fit of the probe" or "named with --fit"). */
void cli_json_fit_used(json_out *j, const struct cli_fit_used *used);

/* A stored fit as a curve source: its model, covariance and calibrated range. */
bg_curve_src cli_curve_src_of_fit(const bg_fit_row *f);

/* The curve a command works on: --fit N, --probe SERIAL (its current fit) or a model inline. */
struct cli_source {
    struct cli_inline in;
    long long fit_id; /* --fit, or the current fit of --probe once resolved; 0 = none */
    const char *probe;
    struct cli_fit_used used; /* once resolved from the database */
};
enum { CLI_SRC_FIT = 210, CLI_SRC_PROBE };
#define CLI_SOURCE_OPTIONS                                                                     \
    CLI_INLINE_OPTIONS, { "fit", required_argument, NULL, CLI_SRC_FIT },                       \
    { "probe", required_argument, NULL, CLI_SRC_PROBE }
void cli_source_init(struct cli_source *s);
/* 1 when 'opt' is one of CLI_SOURCE_OPTIONS, with '*rc' BG_OK or the usage error's code. */
int cli_source_option(struct cli_source *s, int opt, const char *arg, const char *cmd, int *rc);
/* Exactly one of --fit, --probe or an inline model, or a usage error. */
int cli_source_check(const struct cli_source *s, const char *cmd);
/* The curve source: a stored fit (model, covariance, calibrated range; opens the database
** of 'ctx' and reports errors as "CMD: ...") or the inline model (usage errors). */
int cli_source_resolve(struct cli_source *s, struct cli_ctx *ctx, const char *cmd,
                       bg_curve_src *out);

/* The output choice --csv / --json (the global --json counts as --json). */
enum cli_format { CLI_FMT_TEXT = 0, CLI_FMT_CSV, CLI_FMT_JSON };
struct cli_output {
    int csv, json;
};
enum { CLI_OUT_CSV = 220, CLI_OUT_JSON };
#define CLI_OUTPUT_OPTIONS                                                                     \
    { "csv", no_argument, NULL, CLI_OUT_CSV }, { "json", no_argument, NULL, CLI_OUT_JSON }
/* 1 when 'opt' is one of CLI_OUTPUT_OPTIONS (taken). */
int cli_output_option(struct cli_output *o, int opt);
/* The format, or a usage error: both --csv and --json given; with 'required', neither (and
** then --csv wins over the global --json). */
int cli_output_choose(const struct cli_output *o, const struct cli_ctx *ctx, int required,
                      const char *cmd, enum cli_format *fmt);

/* ---- printers (print_store.c: stored records; print_curve.c: curves) ---- */

/* JSON of stored records: a reading object, a run's fields (inside an object the caller
** opens), a fit object without its covariance. */
void cli_json_reading(json_out *j, const bg_reading_row *g);
void cli_json_run_fields(json_out *j, const bg_run *r);
void cli_json_fit_brief(json_out *j, const bg_fit_row *f);
/* A stored fit as JSON with the optional keys in 'with' (the listings: probe and version;
** export: the covariance). */
enum { CLI_FIT_PROBE = 1, CLI_FIT_COV = 2, CLI_FIT_VERSION = 4 };
void cli_json_fit(json_out *j, const bg_fit_row *f, unsigned with);
/* A lot as a JSON object under 'key' when 'j' is not NULL, else as one text line. */
void cli_print_lot(json_out *j, const char *key, const bg_lot *l);
/* Store callbacks printing one record (JSON into 'ctx', a json_out *, or text when NULL):
** the lines of 'lot show', 'probe list', 'probe show', 'list', 'ref list' and 'show run'. */
int cli_print_lot_probe(const bg_probe *p, void *ctx);
int cli_print_probe(const bg_probe *p, void *ctx);
int cli_print_probe_run(const bg_run *r, void *ctx);
int cli_print_probe_fit(const bg_fit_row *f, void *ctx);
int cli_print_run_line(const bg_run *r, void *ctx);
int cli_print_fit_line(const bg_fit_row *f, void *ctx);
int cli_print_ref(const bg_ref *r, void *ctx);
/* A reference's certificate, due date and correction with its values: as text (no newline),
** and as members of the open JSON object 'j'. */
void cli_ref_values_text(const bg_ref *r);
void cli_ref_values_json(json_out *j, const bg_ref *r);
int cli_print_reading(const bg_reading_row *g, void *ctx);
/* A run's header for 'show run' (the readings follow through cli_print_reading). */
void cli_print_run_head(const bg_run *r);
/* A stored fit for 'show fit': the row, the ids of the readings it used and its uncertainty
** profile over the calibrated range (bg_curve_span). */
void cli_print_fit(const bg_fit_row *f, const long long *ids, size_t nids, const bg_curve *u,
                   int json);
/* The table of 'curve' (the stored fit it came from, NULL for an inline model), and the
** values of 'eval'. */
void cli_print_curve(const bg_curve_src *src, const struct cli_fit_used *used,
                     const bg_curve *c, enum cli_format fmt, bg_temp_unit unit);
void cli_print_eval(const bg_curve_src *src, const bg_curve *c, bg_temp_unit unit, int json);

/* ---- calibration results (print_fit.c), shared by 'fit' and 'demo' ---- */
/* The fit's warnings and the check temperatures' on stderr, then the report (text or JSON). */
/* Text: every residual up to CLI_RESID_ALL_MAX readings (or with 'all_residuals'); above,
** the CLI_RESID_TOP largest and a count by |studentized residual|. */
enum { CLI_RESID_ALL_MAX = 1000, CLI_RESID_TOP = 20 };
void print_fit(const bg_calib_result *r, bg_temp_unit unit, int json, int all_residuals);
void print_fit_warnings(const bg_calib_result *r, bg_temp_unit unit);
/* The lot's warnings and failures on stderr; then, when 'rc' is BG_OK, its table (text or
** JSON), else 'err'.  Returns 'rc'. */
int print_fit_lot(const bg_calib_lot *lot, int rc, const bg_error *err, int json);
/* A bg_calib_progress_fn showing cli_progress("fitting"). */
int print_fit_progress(size_t done, size_t total, void *ctx);
/* A fit in ranges that each hold a bound (fit FILE --bound). */
void print_fit_split(const bg_fit_ranges *s, bg_temp_unit unit, int json);

/* ---- the printers of 'lut' (print_lut.c) ---- */
/* The table as CSV or JSON (the JSON carries the budget). */
void lut_print_csv(const bg_lut_result *r, FILE *f);
void lut_print_json(const bg_lut_result *r, FILE *f);
/* The table's size and error, the automatic choice, and the error budget; each line of the
** summary starts with 'pre'. */
void lut_print_summary(const bg_lut_result *r, const char *pre, FILE *b);

/* ---- commands (one file each) ---- */

int cmd_report(int argc, char **argv, struct cli_ctx *ctx);
int cmd_eval(int argc, char **argv, struct cli_ctx *ctx);
int cmd_fit(int argc, char **argv, struct cli_ctx *ctx);
int cmd_demo(int argc, char **argv, struct cli_ctx *ctx);
int cmd_verify(int argc, char **argv, struct cli_ctx *ctx);
int cmd_copy(int argc, char **argv, struct cli_ctx *ctx);
int cmd_init(int argc, char **argv, struct cli_ctx *ctx);
int cmd_lot(int argc, char **argv, struct cli_ctx *ctx);
int cmd_part(int argc, char **argv, struct cli_ctx *ctx);
int cmd_probe(int argc, char **argv, struct cli_ctx *ctx);
int cmd_ref(int argc, char **argv, struct cli_ctx *ctx);
int cmd_import(int argc, char **argv, struct cli_ctx *ctx);
int cmd_sequence(int argc, char **argv, struct cli_ctx *ctx);
int cmd_list(int argc, char **argv, struct cli_ctx *ctx);
int cmd_show(int argc, char **argv, struct cli_ctx *ctx);
int cmd_exclude(int argc, char **argv, struct cli_ctx *ctx);
int cmd_export(int argc, char **argv, struct cli_ctx *ctx);
int cmd_drift(int argc, char **argv, struct cli_ctx *ctx);
int cmd_curve(int argc, char **argv, struct cli_ctx *ctx);
int cmd_lut(int argc, char **argv, struct cli_ctx *ctx);

/* The invented demo data, embedded at build time from db/demo/. */
struct demo_file {
    const char *name;
    const char *text;
};
extern const struct demo_file demo_files[];

#endif
