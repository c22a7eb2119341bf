/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The bandgap program's shared declarations: commands, context, output helpers. */
#ifndef BANDGAP_CLI_H
#define BANDGAP_CLI_H

#include <stdio.h>

#include "bandgap/bandgap.h"

/* Results of a command beyond bg_status; main() maps all of them to exit statuses. */
enum { CLI_EUSAGE = 100, CLI_ECANTCREAT = 101, CLI_FLAGGED = 102 };

struct cli_ctx {
    const char *db_path; /* --db, BANDGAP_DB or "bandgap.db" */
    int json;            /* --json */
};

typedef int (*cmd_fn)(int argc, char **argv, struct cli_ctx *ctx);

/* Print "bandgap: MESSAGE" to stderr. */
void cli_error(const char *fmt, ...) BG_PRINTF(1, 2);
/* Print "bandgap: warning: MESSAGE" to stderr. */
void cli_warn(const char *fmt, ...) BG_PRINTF(1, 2);
/* Print a usage error and the hint "Try 'bandgap CMD --help'"; returns CLI_EUSAGE. */
int cli_usage_error(const char *cmd, const char *fmt, ...) BG_PRINTF(2, 3);
/* Report 'err' as "bandgap: WHAT: MESSAGE" and return its code. */
int cli_fail(const char *what, const bg_error *err);

/* A list of numbers "1.4e-3,2.37e-4" into 'v' (at most 'max'); BG_EINVAL on bad text. */
int cli_parse_list(const char *s, double *v, size_t max, size_t *n, bg_error *err);

/* ---- JSON output: numbers round-trip (%.17g); NaN and infinities become null ---- */
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

/* Open the database of 'ctx' (create it with 'create'); reports errors itself and returns the
** code for main(), or BG_OK.  Says on stderr when an older schema was upgraded. */
int cli_open_store(struct cli_ctx *ctx, int create, bg_store **st);
/* The id of a probe's newest stored fit; BG_EINVAL with a hint when it has none. */
int cli_newest_fit(bg_store *st, const char *serial, long long *fit_id, bg_error *err);
/* Temperatures "0C,25C,50C" into 't_k' (at most 'max'); BG_EINVAL on bad text. */
int cli_parse_temps(const char *s, double *t_k, size_t max, size_t *n, bg_error *err);
/* Parse a positive integer id ("12"); BG_EINVAL otherwise. */
int cli_parse_id(const char *s, long long *id);
/* Print a text field for a table, "-" when empty. */
const char *cli_or_dash(const char *s);
/* Show progress "what i/n" on stderr when it is a terminal (not TERM=dumb); i == n ends it. */
void cli_progress(const char *what, size_t i, size_t n);

/* A model given on the command line (eval, curve): --model, --coef, --r25/--r0, --beta, --t0. */
struct cli_inline {
    const char *model;
    double coef[BG_MODEL_MAXPAR];
    size_t ncoef;
    int have_coef;
    double r25, beta, t0_k;
};
enum { CLI_IN_MODEL = 200, CLI_IN_COEF, CLI_IN_R25, CLI_IN_BETA, CLI_IN_T0 };
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

/* JSON of stored records (rows.c): a reading object, a run's fields (inside an object the
** caller opens), a fit object without its covariance. */
void cli_json_reading(json_out *j, const bg_reading_row *g);
void cli_json_run_fields(json_out *j, const bg_run *r);
void cli_json_fit_brief(json_out *j, const bg_fit_row *f);
/* A stored fit as JSON with the optional keys in 'with' (the listings: probe and version;
** export: the covariance). */
enum { CLI_FIT_PROBE = 1, CLI_FIT_COV = 2, CLI_FIT_VERSION = 4 };
void cli_json_fit(json_out *j, const bg_fit_row *f, unsigned with);

/* ---- the fit report, shared by 'fit' and 'demo' ---- */
struct fit_request {
    const char *model;        /* "sh3" ... or "auto" */
    double t0_k;              /* beta reference temperature */
    double pair_t1_k, pair_t2_k;
    double u_temp_k;          /* given to readings without u_temp_k; 0 = none */
    int linear_only;
    int no_inflate;
    bg_temp_unit unit;
    double at_k[32];
    size_t nat;
};
void fit_request_init(struct fit_request *rq);
int fit_report_file(const char *path, const struct fit_request *rq, struct cli_ctx *ctx);
/* Fit the latest (or given) run of a stored probe, or the latest run of every probe of a lot,
** store the fits and print them. */
int fit_stored_probe(const char *serial, long long run_id, const struct fit_request *rq,
                     struct cli_ctx *ctx);
int fit_stored_lot(const char *lot_code, const struct fit_request *rq, struct cli_ctx *ctx);

/* ---- commands (one file each) ---- */
/* The table report of 'lut --report' (cmd_lut.c). */

int cmd_report(int argc, char **argv, struct cli_ctx *ctx);
int cmd_eval(int argc, char **argv, struct cli_ctx *ctx);
int cmd_fit(int argc, char **argv, struct cli_ctx *ctx);
int cmd_demo(int argc, char **argv, struct cli_ctx *ctx);
int cmd_init(int argc, char **argv, struct cli_ctx *ctx);
int cmd_lot(int argc, char **argv, struct cli_ctx *ctx);
int cmd_probe(int argc, char **argv, struct cli_ctx *ctx);
int cmd_ref(int argc, char **argv, struct cli_ctx *ctx);
int cmd_import(int argc, char **argv, struct cli_ctx *ctx);
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
