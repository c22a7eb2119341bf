/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Internal: the store's backend seam.  store.c keeps what every backend shares (argument and
** text checks, the reference correction of readings, transactions around writes, the fit
** queue, the clock); a backend is one 'const struct bgi_store_backend' of functions that run
** the queries, one file (or a few) per database, named by a scheme in bg_store_open. */
#ifndef BANDGAP_STORE_INT_H
#define BANDGAP_STORE_INT_H

#include <stddef.h>
#include <stdint.h>
#include <time.h>

#include <nettle/sha2.h>

#include "bandgap/store.h"
#include "bandgap/bench.h"

/* A backend's connection: each backend defines 'struct bgi_conn' in its own files (the
** definitions never meet in one translation unit). */
typedef struct bgi_conn bgi_conn;

/* A fit row ready to be written: the bound values (bg_store_fit_queue keeps up to BGI_FITQ). */
struct bgi_fitrow {
    long long id, run_id;  /* id 0: the backend assigns it and writes it back */
    char model[16];
    double t0_k;           /* NaN: NULL */
    size_t npar, n, dof;
    double coef[6];
    unsigned char cov[8 * 36]; /* little-endian IEEE doubles, npar x npar */
    size_t covlen;         /* 0: NULL */
    int weighted;
    double chi2, cov_scale, rms_mk, max_abs_mk, t_min_k, t_max_k;
    char *ids;             /* the reading ids as a JSON array */
};
#define BGI_FITQ 32

/* A checked import: the run's values, and its 'n' readings from 'next' in file order with
** their corrected temperatures (K); 'next' is BG_OK with '*r' NULL after the last one, and
** its reading is valid until the next call. */
struct bgi_import {
    const bg_run *meta;
    long long probe_id, ref_id;     /* ref_id 0: none */
    size_t n;
    int (*next)(void *ctx, const bg_reading **r, double *t_k, bg_error *err);
    void *ctx;
    const char *src, *unit;         /* the source's name; the unit of the raw values */
    const char *started_at, *now;
    /* schema 3: the readings' digest (hex), the earlier run this one repeats on purpose (0:
    ** none), the reason a reference past its due date was used (NULL: it was not) */
    char sha256[65];
    long long repeats_run;
    const char *ref_overdue;
    /* schema 8: the reference version the readings are corrected with (0: the row itself) */
    long long ref_version;
    /* schema 11: what the readings are (a bg_quantity: run.quantity and run.quantity_unit,
    ** NULL for a resistance, see bgi_quantity_name) and the excitation current the file
    ** states for a voltage (A, 0: none; stored as run.measuring_current_a) */
    int quantity;
    double excite_a;
};

/* The name a run's quantity is stored under (run.quantity; "resistance" for 0, stored as NULL). */
const char *bgi_quantity_name(int quantity);

/* An artifact to store under 'id' (from artifact_next). */
struct bgi_artifact_row {
    long long id;
    const bg_artifact_req *req;
    const char *content;
    size_t len;
    const char *now;
};

/* The kinds of name a user types (backend 'names'). */
enum bgi_name_kind { BGI_NAME_PROBE, BGI_NAME_LOT, BGI_NAME_REF, BGI_NAME_PART };
/* Called with each name; nonzero stops the walk. */
typedef int (*bgi_name_cb)(const char *name, void *ctx);

#define BGI_STORE_BACKEND_VERSION 8
/* The busy timeout (ms) rides in the backend open's 'flags' above the public flags. */
#define BGI_OPEN_BUSY_SHIFT 8

/* Every function takes the connection first and 'err' last, and returns a bg_status unless
** said otherwise.  Write functions run inside a transaction that store.c opened (in_tx is
** true); they neither begin nor end one.  Messages follow store.h's. */
struct bgi_store_backend {
    int version;         /* BGI_STORE_BACKEND_VERSION: fields are only ever added at the end */
    const char *scheme;  /* "sqlite": bg_store_open's "sqlite:" prefix */

    /* 'target' without the scheme; 'flags' holds BG_STORE_CREATE and, from bit
    ** BGI_OPEN_BUSY_SHIFT up, the busy timeout in milliseconds; 'backup' (of 'size' bytes)
    ** receives the path of the copy made before a schema upgrade, "" if none. */
    int (*open)(const char *target, int flags, bgi_conn **out, char *backup, size_t size,
                bg_error *err);
    void (*close)(bgi_conn *c);
    int (*schema_version)(bgi_conn *c);
    int (*schema_known)(void);

    int (*in_tx)(bgi_conn *c); /* 1 inside a transaction */
    int (*begin)(bgi_conn *c, bg_error *err); /* a write transaction */
    int (*commit)(bgi_conn *c, bg_error *err);
    void (*rollback)(bgi_conn *c);            /* no-op outside a transaction */

    int (*lot_add)(bgi_conn *c, const bg_lot *lot, const char *now, long long *id,
                   bg_error *err);
    int (*lot_get)(bgi_conn *c, const char *code, bg_lot *out, bg_error *err);
    int (*lot_each)(bgi_conn *c, bg_lot_cb cb, void *ctx, bg_error *err);
    int (*part_lots)(bgi_conn *c, const char *part, bg_lot_cb cb, void *ctx, bg_error *err);
    int (*probe_add)(bgi_conn *c, const char *serial, const char *lot_code, const char *note,
                     const char *now, long long *id, bg_error *err);
    int (*probe_get)(bgi_conn *c, const char *serial, bg_probe *out, bg_error *err);
    /* the probe's row id without counts; BG_EINVAL "unknown probe" when absent */
    int (*probe_id)(bgi_conn *c, const char *serial, long long *id, bg_error *err);
    int (*probe_each)(bgi_conn *c, const char *lot_code, bg_probe_cb cb, void *ctx,
                      bg_error *err);
    int (*ref_add)(bgi_conn *c, const bg_ref *ref, const char *now, long long *id,
                   bg_error *err);
    int (*ref_get)(bgi_conn *c, const char *ident, bg_ref *out, bg_error *err);
    int (*ref_each)(bgi_conn *c, bg_ref_cb cb, void *ctx, bg_error *err);

    int (*import)(bgi_conn *c, const struct bgi_import *imp, long long *run_id, bg_error *err);
    int (*run_get)(bgi_conn *c, long long run_id, bg_run *out, bg_error *err);
    int (*run_latest)(bgi_conn *c, long long probe_id, long long *run_id, bg_error *err);
    int (*run_each)(bgi_conn *c, const char *serial, const char *lot_code, bg_run_cb cb,
                    void *ctx, bg_error *err);
    int (*reading_each)(bgi_conn *c, long long run_id, bg_reading_cb cb, void *ctx,
                        bg_error *err);
    int (*run_points)(bgi_conn *c, long long run_id, bg_store_points *out, bg_error *err);
    int (*lot_points_each)(bgi_conn *c, const bg_lot *lot, bg_lot_points_cb cb, void *ctx,
                           bg_error *err);
    int (*exclude)(bgi_conn *c, long long reading_id, const char *why, const char *by,
                   const char *now, bg_error *err);

    /* the id the next fit row gets (inside a write transaction) */
    int (*fit_next_id)(bgi_conn *c, long long *id, bg_error *err);
    /* write 'n' rows (BGI_FITQ in one statement when n is that, else one by one) */
    int (*fit_insert)(bgi_conn *c, struct bgi_fitrow *rows, size_t n, const char *now,
                      bg_error *err);
    int (*fit_get)(bgi_conn *c, long long fit_id, bg_fit_row *out, bg_error *err);
    int (*fit_each)(bgi_conn *c, const char *serial, const char *lot_code, bg_fit_cb cb,
                    void *ctx, bg_error *err);
    int (*fit_readings)(bgi_conn *c, long long fit_id, long long *ids, size_t max, size_t *n,
                        bg_error *err);
    int (*probe_history)(bgi_conn *c, long long probe_id, const char *since, bg_history_cb cb,
                         void *ctx, bg_error *err);
    int (*lot_latest_fits)(bgi_conn *c, long long lot_id, const char *since, bg_latest_cb cb,
                           void *ctx, bg_error *err);
    int (*lot_history)(bgi_conn *c, long long lot_id, const char *since,
                       bg_lot_history_cb cb, void *ctx, bg_error *err);

    /* the next artifact id, and the newest artifact of 'kind' about 'subject' (0: none) */
    int (*artifact_next)(bgi_conn *c, const char *kind, const char *subject, long long *id,
                         long long *latest, bg_error *err);
    int (*artifact_insert)(bgi_conn *c, const struct bgi_artifact_row *row, bg_error *err);
    int (*artifact_get)(bgi_conn *c, long long id, bg_artifact *out, bg_error *err);
    int (*artifact_each)(bgi_conn *c, bg_artifact_cb cb, void *ctx, bg_error *err);

    /* version 2 */
    /* the oldest run of 'probe_id' whose readings have the digest 'sha256' (0: none) */
    int (*run_by_digest)(bgi_conn *c, long long probe_id, const char *sha256, long long *run_id,
                         bg_error *err);
    /* the newest fit of run 'run_id' (0: none) */
    int (*fit_newest_of_run)(bgi_conn *c, long long run_id, long long *fit_id, bg_error *err);
    /* the oldest fit of row 'r's run with the same readings, model and values as 'r' (the
    ** coefficients, covariance and statistics compared exactly); 0: none */
    int (*fit_same)(bgi_conn *c, const struct bgi_fitrow *r, long long *fit_id, bg_error *err);

    /* version 3: a part's specifications (schema db/005-part-nominal.sql) */
    int (*part_spec_add)(bgi_conn *c, const bg_part_spec *p, const char *now, long long *id,
                         bg_error *err);
    int (*part_spec_each)(bgi_conn *c, const char *part, int newest_only, bg_part_spec_cb cb,
                          void *ctx, bg_error *err);

    /* version 4: every probe serial, lot code, reference identifier or part name (of lots)
    ** in the database, by 'kind', in the order of the name.  A function above fails with
    ** BG_EINVAL and a message that begins "unknown probe 'NAME'", "unknown lot 'NAME'",
    ** "unknown reference thermometer 'NAME'" or "no lots of part 'NAME'" when the name is
    ** absent; store.c then offers the nearest of these names (did_you_mean). */
    int (*names)(bgi_conn *c, enum bgi_name_kind kind, bgi_name_cb cb, void *ctx,
                 bg_error *err);

    /* version 5: the record chain.  Append the record of row 'id' of table 'kind' ("lot",
    ** "probe", "reference", "part_spec", "run" with its readings, "exclusion", "fit",
    ** "artifact") inside the write transaction that added it; the head (record count and
    ** hash; 0 and 64 '0' when empty); the whole record verified (the backend's own checks,
    ** the chain, and every row in it). */
    int (*chain_append)(bgi_conn *c, const char *kind, long long id, bg_error *err);
    int (*chain_head)(bgi_conn *c, long long *records, char hex[65], bg_error *err);
    int (*verify)(bgi_conn *c, bg_store_check *out, bg_error *err);
    /* row 'id' of table 'kind' still matches its record in the chain (BG_EINVAL if not) */
    int (*chain_check)(bgi_conn *c, const char *kind, long long id, bg_error *err);

    /* version 6: the lot-wide read paths, each one query or a few statements prepared once
    ** (store.h: bg_store_lot_histories, bg_store_export_each; the probe or lot exists) */
    int (*lot_histories)(bgi_conn *c, long long lot_id, const char *since,
                         bg_lot_histories_cb cb, void *ctx, bg_error *err);
    int (*export_each)(bgi_conn *c, const char *serial, long long lot_id,
                       const bg_export_cbs *cbs, void *ctx, bg_error *err);

    /* version 7: versions (schema db/008-versions.sql).  Add a version of the reference row
    ** 'ref_id' (inside the write transaction; 'rv->v.valid_from' is set), and each version
    ** of it in id order, without the row itself ('rv->ref' holds only the version's
    ** certificate, due date and correction). */
    int (*ref_version_add)(bgi_conn *c, long long ref_id, const bg_ref_version *rv,
                           const char *now, long long *id, bg_error *err);
    int (*ref_version_each)(bgi_conn *c, long long ref_id, bg_ref_version_cb cb, void *ctx,
                            bg_error *err);
    /* the same for lots ('lv->lot' holds only the version's tolerances and note) */
    int (*lot_version_add)(bgi_conn *c, long long lot_id, const bg_lot_version *lv,
                           const char *now, long long *id, bg_error *err);
    int (*lot_version_each)(bgi_conn *c, long long lot_id, bg_lot_version_cb cb, void *ctx,
                            bg_error *err);

    /* (version 8) a probe moved to another lot: add a version of probe 'probe_id'
    ** ('pv->probe.lot_id' is the new lot, 'pv->v.valid_from' set; inside the write
    ** transaction), and each version in id order, the row itself first (id 0: the lot it
    ** was added to, valid from its creation), with the lots' ids and codes.  From this
    ** version on, what a lot-wide read calls the lot's probes and runs follows the moves:
    ** probe_get, probe_each and the lot's probe count give the lot a probe is in now (its
    ** newest version); lot_latest_fits, lot_histories, lot_history, lot_points_each and the
    ** lot filters of run_each and fit_each take the runs that count toward the lot (whose
    ** probe belonged to it when the run started: the newest version valid from at or before
    ** the run's start, compared as times, else the row's lot), of the probes that are in the
    ** lot now or have such a run. */
    int (*probe_version_add)(bgi_conn *c, long long probe_id, const bg_probe_version *pv,
                             const char *now, long long *id, bg_error *err);
    int (*probe_version_each)(bgi_conn *c, long long probe_id, bg_probe_version_cb cb,
                              void *ctx, bg_error *err);
    /* (version 8) calibration sequences
    ** (schema db/010-sequence.sql, include/bandgap/bench.h).  Add a sequence ('h' without
    ** id), the newest without an end (found 0: none), a settling record, a reading (a
    ** duplicate of setpoint, probe and number is BG_EINVAL), each of a sequence's readings in
    ** setpoint, probe, number order and its settling records in id order, and its end. */
    int (*seq_add)(bgi_conn *c, const bg_seq_head *h, const char *text, long long ref_id,
                   long long *id, bg_error *err);
    int (*seq_unfinished)(bgi_conn *c, bg_seq_head *out, int *found, bg_error *err);
    int (*seq_settle)(bgi_conn *c, long long seq_id, const bg_seq_settle *s, bg_error *err);
    int (*seq_reading)(bgi_conn *c, long long seq_id, const bg_seq_reading *r, bg_error *err);
    int (*seq_readings)(bgi_conn *c, long long seq_id, bg_seq_reading_cb cb, void *ctx,
                        bg_error *err);
    int (*seq_settles)(bgi_conn *c, long long seq_id, bg_seq_settle_cb cb, void *ctx,
                       bg_error *err);
    int (*seq_end)(bgi_conn *c, long long seq_id, const char *now, long long first_run,
                   long long last_run, bg_error *err);
};

/* The backends (sqlite.c, ...); store.c lists them by scheme. */
extern const struct bgi_store_backend bgi_store_sqlite;
extern const struct bgi_store_backend bgi_store_pg, bgi_store_pg_alias; /* pg.c */

struct bg_store {
    const struct bgi_store_backend *be;
    bgi_conn *conn;
    time_t clock;                  /* < 0: the system clock */
    time_t now_t;                  /* the time 'now_text' shows, -1 when none yet */
    char now_text[BG_TIME];
    struct bgi_fitrow fitq[BGI_FITQ];
    size_t nfitq;
    long long next_fit_id;         /* 0: not read in this transaction */
    char backup[4200];
};

/* SHA-256 (FIPS 180-4) from GNU Nettle (sha256.c adapts it): init, feed any number of
** bytes, final. */
struct bgi_sha256 {
    struct sha256_ctx ctx;
};
void bgi_sha256_init(struct bgi_sha256 *s);
void bgi_sha256_update(struct bgi_sha256 *s, const void *data, size_t n);
void bgi_sha256_final(struct bgi_sha256 *s, unsigned char out[32]);
/* The 32 bytes as 64 lower-case hex digits and a NUL. */
void bgi_sha256_hex(const unsigned char digest[32], char hex[65]);

/* The SQLite backend's schema migrations, embedded from db/NNN-*.sql at build time: entry i
** takes the schema from version i to i + 1; ends with NULLs. */
struct bgi_sql_file {
    const char *name;
    const char *text;
};
extern const struct bgi_sql_file bgi_migrations[];
/* The PostgreSQL backend's migrations (db/pg/NNN-*.sql, numbered as the SQLite ones). */
extern const struct bgi_sql_file bgi_pg_migrations[];

/* The record chain's canonical encoding (chain.c), shared by every backend: the chained
** tables, then a record's head, each non-NULL column (in the order of the column names) by
** its type, and the mark before each reading of a run. */
#define BGI_CHAIN_NKINDS 11
extern const char *const bgi_chain_kinds[BGI_CHAIN_NKINDS];
int bgi_chain_kind_index(const char *kind); /* -1: not chained */
void bgi_chain_start(struct bgi_sha256 *h, const char prev[65], const char *kind, long long id);
void bgi_chain_int(struct bgi_sha256 *h, const char *name, long long v);
void bgi_chain_real(struct bgi_sha256 *h, const char *name, double v);
void bgi_chain_bytes(struct bgi_sha256 *h, const char *name, int text, const void *p, size_t n);
/* The same encoding of 'n' bytes given in pieces: the head, then the bytes (bgi_sha256_update),
** then "\n". */
void bgi_chain_bytes_head(struct bgi_sha256 *h, const char *name, int text, size_t n);
void bgi_chain_reading(struct bgi_sha256 *h);
/* The verification walk's judgement of one record, the same on every backend: record 'seq'
** (the chain's 'kind' and 'row_id', its stored hash 'stored') after the records that verified
** (out->records of them, the last one's hash 'prev').  The numbers must run on, the kind be a
** chained table, and 'hash' (the backend's reading of row 'id' of kind index 'k', hashed
** after 'prev'; BG_EINVAL when the row is missing) give the stored hash; then 'prev' becomes
** the record's hash and out->records 'seq'.  Otherwise out->bad and the problem are set
** (BG_OK), or the error of 'hash' is returned when it could not read. */
typedef int (*bgi_chain_hash_fn)(bgi_conn *c, int k, long long id, const char prev[65],
                                 char hex[65], bg_error *err);
struct bgi_chain_rec {
    long long seq, id;
    const char *kind, *stored;
};
int bgi_chain_judge(bgi_conn *c, bgi_chain_hash_fn hash, const struct bgi_chain_rec *rec,
                    char prev[65], bg_store_check *out, bg_error *err);

/* One probe's history as a backend's lot-history read gathers it (fit_row.c): room for one
** more fit and its time, the buffers doubling; BG_ENOMEM when they cannot grow. */
struct bgi_hist_buf {
    bg_fit_row *fits;
    char (*when)[BG_TIME];
    size_t n, cap, unfitted;
};
int bgi_hist_buf_push(struct bgi_hist_buf *h);

/* Whole-database copy (copy.c, bg_store_copy): a few functions each backend offers beside its
** table of functions (sqlite_copy.c, pg_copy.c), found by the backend they belong to.  A row
** is read and written as it is stored, column by column, by name: the tables are the same on
** every backend (the migrations are numbered alike), so nothing is recomputed on the way. */
enum bgi_cell_type { BGI_CELL_NULL, BGI_CELL_INT, BGI_CELL_REAL, BGI_CELL_TEXT, BGI_CELL_BLOB };
struct bgi_cell {
    int type;
    long long i;          /* BGI_CELL_INT */
    double d;             /* BGI_CELL_REAL */
    const char *p;        /* TEXT (NUL-terminated) or BLOB: 'n' bytes */
    size_t n;
};
#define BGI_ROW_MAXCOL 48
struct bgi_row {
    size_t ncol;
    const char *name[BGI_ROW_MAXCOL];
    struct bgi_cell cell[BGI_ROW_MAXCOL];
};
/* Called with each row; the values are valid during the call; nonzero stops with that status. */
typedef int (*bgi_row_cb)(const struct bgi_row *row, void *ctx, bg_error *err);
struct bgi_copy_backend {
    const struct bgi_store_backend *be;
    /* from now on the connection only reads, and every read sees one state of the database
    ** until snapshot_end ('*own': whether a transaction was started for it) */
    int (*snapshot_begin)(bgi_conn *c, int *own, bg_error *err);
    void (*snapshot_end)(bgi_conn *c, int own);
    /* every row of 'table' (one of copy.c's names) in the order of column 'key', every column */
    int (*rows_each)(bgi_conn *c, const char *table, const char *key, bgi_row_cb cb, void *ctx,
                     bg_error *err);
    int (*rows_count)(bgi_conn *c, const char *table, long long *n, bg_error *err);
    /* add 'n' rows of one table as they are (the same columns in each), inside the write
    ** transaction; a row the backend does not store yet is BG_EUNAVAIL before anything */
    int (*rows_insert)(bgi_conn *c, const char *table, const struct bgi_row *rows, size_t n,
                       bg_error *err);
};
extern const struct bgi_copy_backend bgi_copy_sqlite; /* sqlite_copy.c */
extern const struct bgi_copy_backend bgi_copy_pg;     /* pg_copy.c */

#endif
