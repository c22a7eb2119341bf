/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The calibration database's PostgreSQL backend (schemes "postgresql:" and "postgres:",
** through libpq): connecting, schema migrations under an advisory lock, transactions, the
** lot, probe and reference records, versions, part specifications, issued reports, and the
** backend's table.
**
** Writers take one transaction-level advisory lock (WRITE_LOCK) after BEGIN, as SQLite's
** BEGIN IMMEDIATE takes its file lock: the record chain needs one writer at a time (each
** record hashes the one before), and ids are given as the largest plus one (the same ids as
** on SQLite for the same commands).  With every writer serialized on that lock at READ
** COMMITTED, a write transaction sees every commit before it and meets no serialization
** failure; a deadlock or serialization failure at the start is still retried (RETRIES times),
** and a lock held past the busy timeout is BG_EBUSY (exit 75).  Readers take no lock. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "bandgap/bandgap.h"
#include "pg_int.h"

/* The ITS-90 columns of reference and reference_version (db/pg/009), in this order. */
#define PG_ITS90_COLS "its90_rtpw_ohm, its90_range, its90_a, its90_b, its90_c, its90_d, " \
                      "its90_w_al"

/* The advisory lock key of writers and migrations: "BGap" (BG_STORE_APP_ID). */
#define WRITE_LOCK "1111974256"
enum { RETRIES = 5 };

/* ---- parameters ---- */

int pgp_init(struct pgp *p, int cap)
{
    memset(p, 0, sizeof *p);
    p->v = malloc((size_t)cap * sizeof *p->v);
    p->len = malloc((size_t)cap * sizeof *p->len);
    p->fmt = malloc((size_t)cap * sizeof *p->fmt);
    p->num = malloc((size_t)cap * sizeof *p->num);
    if (!p->v || !p->len || !p->fmt || !p->num) {
        pgp_free(p);
        return BG_ENOMEM;
    }
    p->cap = cap;
    return BG_OK;
}

void pgp_free(struct pgp *p)
{
    free(p->v), free(p->len), free(p->fmt), free(p->num);
    memset(p, 0, sizeof *p);
}

static void put(struct pgp *p, const char *v, int len, int fmt)
{
    if (p->n >= p->cap)
        return; /* bgi_pg_exec refuses a statement whose parameters did not fit */
    p->v[p->n] = v, p->len[p->n] = len, p->fmt[p->n] = fmt;
    p->n++;
}

void pgp_text(struct pgp *p, const char *s)
{
    put(p, s, 0, 0);
}

void pgp_text0(struct pgp *p, const char *s)
{
    put(p, s && *s ? s : NULL, 0, 0);
}

void pgp_null(struct pgp *p)
{
    put(p, NULL, 0, 0);
}

void pgp_int(struct pgp *p, long long v)
{
    if (p->n < p->cap)
        snprintf(p->num[p->n], sizeof p->num[0], "%lld", v);
    put(p, p->n < p->cap ? p->num[p->n] : NULL, 0, 0);
}

void pgp_int0(struct pgp *p, long long v)
{
    if (v)
        pgp_int(p, v);
    else
        pgp_null(p);
}

void pgp_dbl(struct pgp *p, double v)
{
    if (v != v) {
        pgp_null(p);
        return;
    }
    /* 17 significant digits read back to the same double; the server's checks refuse
    ** infinities ("inf" is not a number it reads, and the checks bound every column) */
    if (p->n < p->cap)
        snprintf(p->num[p->n], sizeof p->num[0], "%.17g", v);
    put(p, p->n < p->cap ? p->num[p->n] : NULL, 0, 0);
}

void pgp_bin(struct pgp *p, const void *b, size_t n)
{
    put(p, b, (int)n, 1);
}

/* ---- results ---- */

int pgv_null(const PGresult *res, int r, int k)
{
    return PQgetisnull(res, r, k);
}

long long pgv_ll(const PGresult *res, int r, int k)
{
    return PQgetisnull(res, r, k) ? 0 : strtoll(PQgetvalue(res, r, k), NULL, 10);
}

double pgv_dbl(const PGresult *res, int r, int k)
{
    return PQgetisnull(res, r, k) ? 0.0 : strtod(PQgetvalue(res, r, k), NULL);
}

void pgv_text(char *dst, size_t size, const PGresult *res, int r, int k)
{
    size_t n = PQgetisnull(res, r, k) ? 0 : (size_t)PQgetlength(res, r, k);
    if (n >= size)
        n = size - 1;
    if (n)
        memcpy(dst, PQgetvalue(res, r, k), n);
    dst[n] = '\0';
}

static int hexval(int ch)
{
    return ch >= '0' && ch <= '9' ? ch - '0' : ch >= 'a' && ch <= 'f' ? ch - 'a' + 10
         : ch >= 'A' && ch <= 'F' ? ch - 'A' + 10 : -1;
}

unsigned char *pgv_bytes(const PGresult *res, int r, int k, size_t *n)
{
    const char *s = PQgetvalue(res, r, k);
    size_t len = (size_t)PQgetlength(res, r, k), m;
    unsigned char *out;
    *n = 0;
    if (PQgetisnull(res, r, k) || len < 2 || s[0] != '\\' || s[1] != 'x')
        return NULL;
    m = (len - 2) / 2;
    if (!(out = malloc(m + 1)))
        return NULL;
    for (size_t i = 0; i < m; i++) {
        int hi = hexval(s[2 + 2 * i]), lo = hexval(s[3 + 2 * i]);
        if (hi < 0 || lo < 0) {
            free(out);
            return NULL;
        }
        out[i] = (unsigned char)(hi << 4 | lo);
    }
    out[m] = '\0';
    *n = m;
    return out;
}

/* ---- errors ---- */

int bgi_pg_fail(bgi_conn *c, PGresult *res, bg_error *err, const char *what)
{
    const char *state = res ? PQresultErrorField(res, PG_DIAG_SQLSTATE) : NULL;
    const char *prim = res ? PQresultErrorField(res, PG_DIAG_MESSAGE_PRIMARY) : NULL;
    const char *cons = res ? PQresultErrorField(res, PG_DIAG_CONSTRAINT_NAME) : NULL;
    char msg[320];
    snprintf(msg, sizeof msg, "%s", prim ? prim : PQerrorMessage(c->db));
    msg[strcspn(msg, "\n")] = '\0';
    if (!state || PQstatus(c->db) != CONNECTION_OK || strncmp(state, "08", 2) == 0 ||
        strncmp(state, "57P", 3) == 0)
        return bg_error_set(err, BG_EUNAVAIL, "%s: the database server '%s' is unavailable "
                            "(%s); nothing was written", what, c->name, msg);
    if (strncmp(state, "23", 2) == 0)
        return bg_error_set(err, BG_EINVAL, "%s: the record refuses it: %s%s%s%s", what, msg,
                            cons ? " (constraint " : "", cons ? cons : "", cons ? ")" : "");
    if (strcmp(state, "40001") == 0 || strcmp(state, "40P01") == 0 ||
        strcmp(state, "55P03") == 0)
        return bg_error_set(err, BG_EBUSY, "%s: the database '%s' is busy with other writers "
                            "(waited %g s: %s); try again", what, c->name, c->busy_ms / 1000.0,
                            msg);
    if (strcmp(state, "42501") == 0)
        return bg_error_set(err, BG_ECANTCREAT, "%s: the role '%s' may not do this on '%s' "
                            "(%s)", what, PQuser(c->db), c->name, msg);
    if (strcmp(state, "53100") == 0)
        return bg_error_set(err, BG_EIO, "%s: the disk of the database server is full (%s)",
                            what, msg);
    if (strcmp(state, "53200") == 0)
        return bg_error_set(err, BG_ENOMEM, "%s: the database server is out of memory (%s)",
                            what, msg);
    if (strncmp(state, "58", 2) == 0)
        return bg_error_set(err, BG_EIO, "%s: i/o error on the database server (%s)", what,
                            msg);
    if (strncmp(state, "22", 2) == 0)
        return bg_error_set(err, BG_EINVAL, "%s: the record refuses it: %s", what, msg);
    return bg_error_set(err, BG_EDB, "%s: %s (SQLSTATE %s)", what, msg, state);
}

PGresult *bgi_pg_exec(bgi_conn *c, int stmt, const char *sql, const struct pgp *p, int *rc,
                      bg_error *err, const char *what)
{
    static const char *const none[1] = { NULL };
    int n = p ? p->n : 0;
    PGresult *res;
    ExecStatusType s;
    if (stmt >= 0) {
        char name[16];
        snprintf(name, sizeof name, "bg%d", stmt);
        if (!c->prepared[stmt]) {
            res = PQprepare(c->db, name, sql, n, NULL);
            if (PQresultStatus(res) != PGRES_COMMAND_OK) {
                *rc = bgi_pg_fail(c, res, err, what);
                PQclear(res);
                return NULL;
            }
            PQclear(res);
            c->prepared[stmt] = 1;
        }
        res = PQexecPrepared(c->db, name, n, p ? p->v : none, p ? p->len : NULL,
                             p ? p->fmt : NULL, 0);
    } else
        res = PQexecParams(c->db, sql, n, NULL, p ? p->v : none, p ? p->len : NULL,
                           p ? p->fmt : NULL, 0);
    s = PQresultStatus(res);
    if (s == PGRES_TUPLES_OK || s == PGRES_COMMAND_OK) {
        *rc = BG_OK;
        return res;
    }
    *rc = bgi_pg_fail(c, res, err, what);
    PQclear(res);
    return NULL;
}

/* A statement without parameters or rows to read ("BEGIN", a migration's file). */
static int run_sql(bgi_conn *c, const char *sql, bg_error *err, const char *what)
{
    PGresult *res = PQexec(c->db, sql);
    ExecStatusType s = PQresultStatus(res);
    int rc = s == PGRES_COMMAND_OK || s == PGRES_TUPLES_OK ? BG_OK
                                                          : bgi_pg_fail(c, res, err, what);
    PQclear(res);
    return rc;
}

/* ---- transactions ---- */

static int pg_in_tx(bgi_conn *c)
{
    PGTransactionStatusType t = PQtransactionStatus(c->db);
    return t == PQTRANS_INTRANS || t == PQTRANS_INERROR || t == PQTRANS_ACTIVE;
}

static void pg_rollback(bgi_conn *c)
{
    if (pg_in_tx(c)) {
        PGresult *res = PQexec(c->db, "ROLLBACK");
        PQclear(res);
    }
}

/* BEGIN and the writers' lock, waiting at most the busy timeout (0: not at all). */
static int begin_once(bgi_conn *c, bg_error *err)
{
    char sql[96];
    PGresult *res;
    int rc;
    if ((rc = run_sql(c, "BEGIN ISOLATION LEVEL READ COMMITTED", err,
                      "cannot start a write transaction")) != BG_OK)
        return rc;
    if (c->busy_ms == 0) {
        res = bgi_pg_exec(c, -1, "SELECT pg_try_advisory_xact_lock(" WRITE_LOCK ")::int",
                          NULL, &rc, err, "cannot start a write transaction");
        if (res && pgv_ll(res, 0, 0) != 1)
            rc = bg_error_set(err, BG_EBUSY, "cannot start a write transaction: the database "
                              "'%s' is being written by another client (busy timeout 0 s); "
                              "try again", c->name);
        PQclear(res);
        return rc;
    }
    snprintf(sql, sizeof sql, "SET LOCAL lock_timeout = %d", c->busy_ms);
    if ((rc = run_sql(c, sql, err, "cannot start a write transaction")) != BG_OK)
        return rc;
    res = bgi_pg_exec(c, -1, "SELECT pg_advisory_xact_lock(" WRITE_LOCK ")", NULL, &rc, err,
                      "cannot start a write transaction");
    PQclear(res);
    return rc;
}

static int pg_begin(bgi_conn *c, bg_error *err)
{
    int rc = BG_EBUSY;
    for (int attempt = 0; attempt < RETRIES; attempt++) {
        if ((rc = begin_once(c, err)) == BG_OK)
            return BG_OK;
        pg_rollback(c);
        /* only a deadlock or a serialization failure is tried again (the message says
        ** which); a lock past the busy timeout has waited long enough */
        if (rc != BG_EBUSY || !err || strstr(err->msg, "lock timeout") ||
            strstr(err->msg, "canceling statement due to lock"))
            return rc;
        struct timespec ts = { 0, (long)(10000000L << attempt) };
        nanosleep(&ts, NULL);
    }
    return rc;
}

static int pg_commit(bgi_conn *c, bg_error *err)
{
    int rc = run_sql(c, "COMMIT", err, "cannot commit");
    if (rc != BG_OK)
        pg_rollback(c);
    return rc;
}

int bgi_pg_read_begin(bgi_conn *c, int *own, bg_error *err)
{
    *own = 0;
    if (pg_in_tx(c))
        return BG_OK;
    int rc = run_sql(c, "BEGIN ISOLATION LEVEL REPEATABLE READ READ ONLY", err,
                     "cannot start a read transaction");
    *own = rc == BG_OK;
    return rc;
}

void bgi_pg_read_end(bgi_conn *c, int own)
{
    if (own)
        pg_rollback(c);
}

/* ---- opening and migrations ---- */

static int pg_schema_known(void)
{
    int n = 0;
    while (bgi_pg_migrations[n].name)
        n++;
    return n;
}

static int pg_schema_version(bgi_conn *c)
{
    return c->version;
}

/* The schema's version (0: no bandgap schema) and how many tables of its own the current
** schema holds besides it. */
static int read_version(bgi_conn *c, int *ver, long long *ntables, bg_error *err)
{
    int rc;
    PGresult *res = bgi_pg_exec(c, -1, "SELECT to_regclass('bandgap_schema') IS NOT NULL, "
                                "(SELECT count(*) FROM pg_catalog.pg_tables WHERE schemaname "
                                "= current_schema() AND tablename <> 'bandgap_schema')",
                                NULL, &rc, err, "cannot read the database");
    if (!res)
        return rc;
    int has = strcmp(PQgetvalue(res, 0, 0), "t") == 0;
    *ntables = pgv_ll(res, 0, 1);
    PQclear(res);
    *ver = 0;
    if (!has)
        return BG_OK;
    res = bgi_pg_exec(c, -1, "SELECT coalesce(max(version), 0) FROM bandgap_schema", NULL, &rc,
                      err, "cannot read the schema version");
    if (!res)
        return rc;
    *ver = (int)pgv_ll(res, 0, 0);
    PQclear(res);
    return BG_OK;
}

/* Apply the migrations from the database's version to the newest, in one transaction under
** the writers' lock; the version is read again under the lock, so two clients that find an
** old schema at once upgrade it once. */
static int migrate(bgi_conn *c, const char *now, bg_error *err)
{
    int known = pg_schema_known(), ver = 0, rc;
    long long ntables = 0;
    PGresult *res;
    if ((rc = pg_begin(c, err)) != BG_OK)
        return rc;
    if ((rc = read_version(c, &ver, &ntables, err)) != BG_OK)
        goto fail;
    if (ver == 0 && ntables > 0) {
        rc = bg_error_set(err, BG_EINVAL, "'%s' is not a bandgap database (%lld tables of its "
                          "own)", c->name, ntables);
        goto fail;
    }
    if (ver > known) {
        rc = bg_error_set(err, BG_EINVAL, "database '%s' has schema version %d, newer than "
                          "this program knows (%d): use a newer bandgap", c->name, ver, known);
        goto fail;
    }
    if (ver == 0 && (rc = run_sql(c, "CREATE TABLE bandgap_schema (version bigint PRIMARY KEY, "
                                  "name text NOT NULL, applied_at text NOT NULL)", err,
                                  "cannot create the schema")) != BG_OK)
        goto fail;
    for (int v = ver; v < known; v++) {
        char what[160];
        struct pgp p;
        snprintf(what, sizeof what, "schema migration '%s' failed", bgi_pg_migrations[v].name);
        if ((rc = run_sql(c, bgi_pg_migrations[v].text, err, what)) != BG_OK)
            goto fail;
        if ((rc = pgp_init(&p, 3)) != BG_OK)
            goto fail;
        pgp_int(&p, v + 1);
        pgp_text(&p, bgi_pg_migrations[v].name);
        pgp_text(&p, now);
        res = bgi_pg_exec(c, -1, "INSERT INTO bandgap_schema (version, name, applied_at) "
                          "VALUES ($1, $2, $3)", &p, &rc, err, what);
        pgp_free(&p);
        PQclear(res);
        if (rc != BG_OK)
            goto fail;
    }
    if ((rc = pg_commit(c, err)) != BG_OK)
        return rc;
    c->version = known;
    return BG_OK;
fail:
    pg_rollback(c);
    return rc;
}

/* 'target' as it may be shown: a URI's password left out. */
static char *display_name(const char *target)
{
    char *s = strdup(target), *at, *colon, *start = strstr(s ? s : "", "://");
    if (!s || !start)
        return s;
    start += 3;
    at = strchr(start, '@');
    colon = strchr(start, ':');
    if (at && colon && colon < at)
        memmove(colon, at, strlen(at) + 1);
    return s;
}

static void pg_close(bgi_conn *c)
{
    if (!c)
        return;
    if (c->db)
        PQfinish(c->db);
    free(c->name);
    free(c);
}

static void quiet_notice(void *arg, const PGresult *res)
{
    (void)arg, (void)res;
}

/* 'target' is what follows the scheme: "//..." (a URI, "//" alone: libpq's environment and
** service file) or libpq's "keyword=value ..." form. */
static int pg_open(const char *target, int flags, bgi_conn **out, char *backup, size_t size,
                   bg_error *err)
{
    const char *keys[] = { "dbname", "fallback_application_name", NULL };
    const char *vals[] = { NULL, "bandgap", NULL };
    char *uri = NULL, now[BG_TIME];
    bgi_conn *c;
    int rc, ver = 0;
    long long ntables = 0;

    *out = NULL;
    if (size)
        backup[0] = '\0';
    if ((rc = bgi_pq_load(err)) != BG_OK)
        return rc;
    if (!(c = calloc(1, sizeof *c)))
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    c->busy_ms = flags >> BGI_OPEN_BUSY_SHIFT;
    if (strncmp(target, "//", 2) == 0) {
        size_t n = strlen(target);
        if ((uri = malloc(n + 12))) {
            memcpy(uri, "postgresql:", 11);
            memcpy(uri + 11, target, n + 1);
        }
    } else
        uri = strdup(target);
    if (!uri || !(c->name = display_name(strncmp(target, "//", 2) == 0 ? uri : target))) {
        free(uri);
        pg_close(c);
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    }
    vals[0] = uri;
    c->db = PQconnectdbParams(keys, vals, 1);
    free(uri);
    if (!c->db || PQstatus(c->db) != CONNECTION_OK) {
        char msg[300];
        snprintf(msg, sizeof msg, "%s", c->db ? PQerrorMessage(c->db) : "out of memory");
        msg[strcspn(msg, "\n")] = '\0';
        rc = bg_error_set(err, BG_EUNAVAIL, "cannot connect to the database server '%s': %s",
                          c->name, msg);
        goto fail;
    }
    PQsetNoticeProcessor(c->db, NULL, NULL);
    PQsetNoticeReceiver(c->db, quiet_notice, NULL);
    if ((rc = run_sql(c, "SET extra_float_digits = 3; SET client_encoding = 'UTF8'; "
                      "SET standard_conforming_strings = on", err,
                      "cannot set up the connection")) != BG_OK ||
        (rc = read_version(c, &ver, &ntables, err)) != BG_OK)
        goto fail;
    c->version = ver;
    if (ver == 0 && ntables > 0) {
        rc = bg_error_set(err, BG_EINVAL, "'%s' is not a bandgap database (%lld tables of its "
                          "own)", c->name, ntables);
        goto fail;
    }
    if (ver == 0 && !(flags & BG_STORE_CREATE)) {
        rc = bg_error_set(err, BG_ENOENT, "database '%s' has no bandgap schema (create it with "
                          "'bandgap --db %s init')", c->name, c->name);
        goto fail;
    }
    if (ver > pg_schema_known()) {
        rc = bg_error_set(err, BG_EINVAL, "database '%s' has schema version %d, newer than "
                          "this program knows (%d): use a newer bandgap", c->name, ver,
                          pg_schema_known());
        goto fail;
    }
    bg_time_format(time(NULL), now, sizeof now);
    if (ver < pg_schema_known() && (rc = migrate(c, now, err)) != BG_OK)
        goto fail;
    *out = c;
    return BG_OK;
fail:
    pg_close(c);
    return rc;
}

/* ---- lots ---- */

/* An insert that gives the row the next id ("INSERT ... SELECT coalesce(max(id), 0) + 1 ...
** RETURNING id"), into '*id' (may be NULL). */
static int insert_id(bgi_conn *c, const char *sql, const struct pgp *p, long long *id,
                     bg_error *err, const char *what)
{
    int rc;
    PGresult *res = bgi_pg_exec(c, -1, sql, p, &rc, err, what);
    if (res && id)
        *id = pgv_ll(res, 0, 0);
    PQclear(res);
    return rc;
}

static int is_unique(const bg_error *err)
{
    return err && strstr(err->msg, "duplicate key value") != NULL;
}

static int pg_lot_add(bgi_conn *c, const bg_lot *lot, const char *now, long long *id,
                      bg_error *err)
{
    struct pgp p;
    int rc;
    if (pgp_init(&p, 11) != BG_OK)
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    pgp_text(&p, lot->code);
    pgp_text(&p, lot->part);
    pgp_dbl(&p, lot->r25_ohm);
    pgp_dbl(&p, lot->beta_k);
    pgp_dbl(&p, lot->pair_t1_k);
    pgp_dbl(&p, lot->pair_t2_k);
    pgp_dbl(&p, lot->tol_r25);
    pgp_dbl(&p, lot->tol_beta);
    pgp_text0(&p, lot->note);
    pgp_text(&p, now);
    /* schema 13: NULL for an NTC lot; a lot of another kind holds no R25 .. tol_beta (NaN:
    ** NULL above) */
    pgp_text0(&p, lot->sensor == BG_PART_NTC ? NULL : bg_part_sensor_name(lot->sensor));
    rc = insert_id(c, "INSERT INTO lot(id, code, part, r25_ohm, beta_k, pair_t1_k, pair_t2_k, "
                   "tol_r25, tol_beta, note, created_at, sensor) SELECT coalesce(max(id), 0) + "
                   "1, $1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11 FROM lot RETURNING id", &p,
                   id, err,
                   "cannot add the lot");
    pgp_free(&p);
    if (rc == BG_EINVAL && is_unique(err))
        return bg_error_set(err, BG_EINVAL, "lot '%s' already exists", lot->code);
    return rc;
}

#define LOT_COLS "l.id, l.code, l.part, l.r25_ohm, l.beta_k, l.pair_t1_k, l.pair_t2_k, " \
                 "l.tol_r25, l.tol_beta, l.note, l.created_at, " \
                 "(SELECT count(*) FROM probe p WHERE " BGI_PG_PROBE_NOW_IN("p", "l.id") "), " \
                 "l.sensor"

/* A lot's double, NaN for NULL (schema 13: what a lot of another kind than NTC does not
** hold). */
static double lot_dbl(const PGresult *res, int r, int k)
{
    return pgv_null(res, r, k) ? NAN : pgv_dbl(res, r, k);
}

static void lot_row(const PGresult *res, int r, bg_lot *l)
{
    l->id = pgv_ll(res, r, 0);
    pgv_text(l->code, sizeof l->code, res, r, 1);
    pgv_text(l->part, sizeof l->part, res, r, 2);
    l->r25_ohm = lot_dbl(res, r, 3);
    l->beta_k = lot_dbl(res, r, 4);
    l->pair_t1_k = lot_dbl(res, r, 5);
    l->pair_t2_k = lot_dbl(res, r, 6);
    l->tol_r25 = lot_dbl(res, r, 7);
    l->tol_beta = lot_dbl(res, r, 8);
    pgv_text(l->note, sizeof l->note, res, r, 9);
    pgv_text(l->created_at, sizeof l->created_at, res, r, 10);
    l->nprobes = pgv_ll(res, r, 11);
    l->sensor = BG_PART_NTC; /* NULL (schema 13): an NTC lot; the CHECK allows only the names */
    if (!pgv_null(res, r, 12) &&
        bg_part_sensor_parse(PQgetvalue(res, r, 12), &l->sensor, NULL) != BG_OK)
        l->sensor = -1;
}

/* 's' is well-formed UTF-8 (RFC 3629: no overlong forms, surrogates or values past
** U+10FFFF), as the server's UTF-8 encoding requires of every text. */
static int valid_utf8(const char *s)
{
    const unsigned char *p = (const unsigned char *)s;
    while (*p) {
        unsigned c = *p++, need, min;
        unsigned long v;
        if (c < 0x80)
            continue;
        if (c >= 0xC2 && c <= 0xDF)
            need = 1, min = 0x80, v = c & 0x1F;
        else if (c >= 0xE0 && c <= 0xEF)
            need = 2, min = 0x800, v = c & 0x0F;
        else if (c >= 0xF0 && c <= 0xF4)
            need = 3, min = 0x10000, v = c & 0x07;
        else
            return 0;
        for (unsigned i = 0; i < need; i++, p++) {
            if ((*p & 0xC0) != 0x80)
                return 0;
            v = v << 6 | (*p & 0x3F);
        }
        if (v < min || v > 0x10FFFF || (v >= 0xD800 && v <= 0xDFFF))
            return 0;
    }
    return 1;
}

/* A query of one text parameter (NULL: NULL).  A name that is not UTF-8 names no row (every
** stored text is checked at the door): it is looked up as NULL, which matches none. */
static PGresult *by_text(bgi_conn *c, int stmt, const char *sql, const char *key, int *rc,
                         bg_error *err, const char *what)
{
    const char *v[1] = { key && valid_utf8(key) ? key : NULL };
    struct pgp p = { 1, 1, v, NULL, NULL, NULL };
    return bgi_pg_exec(c, stmt, sql, &p, rc, err, what);
}

static PGresult *by_id(bgi_conn *c, int stmt, const char *sql, long long id, int *rc,
                       bg_error *err, const char *what)
{
    char buf[32];
    snprintf(buf, sizeof buf, "%lld", id);
    return by_text(c, stmt, sql, buf, rc, err, what);
}

int bgi_pg_lot_get(bgi_conn *c, const char *code, bg_lot *out, bg_error *err)
{
    int rc;
    PGresult *res = by_text(c, PGS_LOT_GET, "SELECT " LOT_COLS " FROM lot l WHERE l.code = $1",
                            code, &rc, err, "cannot read lots");
    if (!res)
        return rc;
    if (PQntuples(res) == 1)
        lot_row(res, 0, out);
    else
        rc = bg_error_set(err, BG_EINVAL, "unknown lot '%s' (add it with 'bandgap lot add')",
                          code);
    PQclear(res);
    return rc;
}

static int pg_lot_each(bgi_conn *c, bg_lot_cb cb, void *ctx, bg_error *err)
{
    int rc;
    bg_lot l;
    PGresult *res = bgi_pg_exec(c, -1, "SELECT " LOT_COLS " FROM lot l ORDER BY l.code", NULL,
                                &rc, err, "cannot read lots");
    for (int i = 0; res && i < PQntuples(res); i++) {
        lot_row(res, i, &l);
        if (cb(&l, ctx))
            break;
    }
    PQclear(res);
    return rc;
}

static int pg_part_lots(bgi_conn *c, const char *part, bg_lot_cb cb, void *ctx, bg_error *err)
{
    int rc;
    bg_lot l;
    PGresult *res = by_text(c, -1, "SELECT " LOT_COLS " FROM lot l WHERE l.part = $1 "
                            "ORDER BY l.created_at, l.id", part, &rc, err, "cannot read lots");
    if (!res)
        return rc;
    if (PQntuples(res) == 0)
        rc = bg_error_set(err, BG_EINVAL, "no lots of part '%s'", part);
    for (int i = 0; i < PQntuples(res); i++) {
        lot_row(res, i, &l);
        if (cb(&l, ctx))
            break;
    }
    PQclear(res);
    return rc;
}

/* ---- probes ---- */

int bgi_pg_probe_id(bgi_conn *c, const char *serial, long long *id, bg_error *err)
{
    int rc;
    PGresult *res = by_text(c, PGS_PROBE_ID, "SELECT id FROM probe WHERE serial = $1", serial,
                            &rc, err, "cannot read the database");
    if (!res)
        return rc;
    *id = PQntuples(res) ? pgv_ll(res, 0, 0) : 0;
    PQclear(res);
    if (*id == 0)
        rc = bg_error_set(err, BG_EINVAL, "unknown probe '%s' (add it with 'bandgap probe add "
                          "SERIAL --lot CODE')", serial);
    return rc;
}

static int pg_probe_add(bgi_conn *c, const char *serial, const char *lot_code,
                        const char *note, const char *now, long long *id, bg_error *err)
{
    struct pgp p;
    bg_lot lot;
    int rc = bgi_pg_lot_get(c, lot_code, &lot, err);
    if (rc != BG_OK)
        return rc;
    if (pgp_init(&p, 4) != BG_OK)
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    pgp_text(&p, serial);
    pgp_int(&p, lot.id);
    pgp_text0(&p, note);
    pgp_text(&p, now);
    rc = insert_id(c, "INSERT INTO probe(id, serial, lot_id, note, created_at) SELECT "
                   "coalesce(max(id), 0) + 1, $1, $2, $3, $4 FROM probe RETURNING id", &p, id,
                   err, "cannot add the probe");
    pgp_free(&p);
    if (rc == BG_EINVAL && is_unique(err))
        return bg_error_set(err, BG_EINVAL, "probe '%s' already exists", serial);
    return rc;
}

void bgi_pg_probe_row(const PGresult *res, int r, bg_probe *p)
{
    p->id = pgv_ll(res, r, 0);
    p->lot_id = pgv_ll(res, r, 1);
    pgv_text(p->serial, sizeof p->serial, res, r, 2);
    pgv_text(p->lot_code, sizeof p->lot_code, res, r, 3);
    pgv_text(p->note, sizeof p->note, res, r, 4);
    pgv_text(p->created_at, sizeof p->created_at, res, r, 5);
    p->nruns = pgv_ll(res, r, 6);
    p->nfits = pgv_ll(res, r, 7);
}

int bgi_pg_probe_get(bgi_conn *c, const char *serial, bg_probe *out, bg_error *err)
{
    int rc;
    PGresult *res = by_text(c, PGS_PROBE_GET, "SELECT " BGI_PG_PROBE_COLS " FROM probe p JOIN "
                            "lot l ON l.id = " BGI_PG_LOT_NOW("p") " WHERE p.serial = $1",
                            serial, &rc, err,
                            "cannot read probes");
    if (!res)
        return rc;
    if (PQntuples(res) == 1)
        bgi_pg_probe_row(res, 0, out);
    else
        rc = bg_error_set(err, BG_EINVAL, "unknown probe '%s' (add it with 'bandgap probe add "
                          "SERIAL --lot CODE')", serial);
    PQclear(res);
    return rc;
}

int bgi_pg_check_filter(bgi_conn *c, const char *serial, const char *lot_code, bg_error *err)
{
    int rc = BG_OK;
    if (serial) {
        bg_probe p;
        rc = bgi_pg_probe_get(c, serial, &p, err);
    }
    if (rc == BG_OK && lot_code) {
        bg_lot l;
        rc = bgi_pg_lot_get(c, lot_code, &l, err);
    }
    return rc;
}

static int pg_probe_each(bgi_conn *c, const char *lot_code, bg_probe_cb cb, void *ctx,
                         bg_error *err)
{
    bg_probe p;
    int rc = bgi_pg_check_filter(c, NULL, lot_code, err);
    if (rc != BG_OK)
        return rc;
    PGresult *res = by_text(c, -1, "SELECT " BGI_PG_PROBE_COLS " FROM probe p JOIN lot l ON "
                            "l.id = " BGI_PG_LOT_NOW("p") " WHERE $1::text IS NULL OR l.code = "
                            "$1 ORDER BY p.serial", lot_code, &rc, err, "cannot read probes");
    for (int i = 0; res && i < PQntuples(res); i++) {
        bgi_pg_probe_row(res, i, &p);
        if (cb(&p, ctx))
            break;
    }
    PQclear(res);
    return rc;
}

/* ---- reference thermometers ---- */

/* The correction's columns (lin_c0_k .. cvd_c) of 'ref'. */
static void ref_correction(struct pgp *p, const bg_ref *ref)
{
    int lin = ref->kind == BG_REF_LINEAR, cvd = ref->kind == BG_REF_CVD;
    pgp_dbl(p, lin ? ref->lin_c0_k : NAN);
    pgp_dbl(p, lin ? ref->lin_c1 : NAN);
    pgp_dbl(p, lin ? ref->lin_t0_k : NAN);
    pgp_dbl(p, cvd ? ref->cvd_r0_ohm : NAN);
    pgp_dbl(p, cvd ? ref->cvd_a : NAN);
    pgp_dbl(p, cvd ? ref->cvd_b : NAN);
    pgp_dbl(p, cvd ? ref->cvd_c : NAN);
}

/* The ITS-90 columns (its90_rtpw_ohm .. its90_w_al, db/pg/009) of 'ref'; NULL unless its90. */
static void ref_its90(struct pgp *p, const bg_ref *ref)
{
    int its = ref->kind == BG_REF_ITS90;
    const bg_its90_dev *d = &ref->its90;
    pgp_dbl(p, its ? ref->its90_rtpw_ohm : NAN);
    pgp_text0(p, its ? bg_its90_range_name(d->range, NULL, NULL) : "");
    pgp_dbl(p, its ? d->a : NAN);
    pgp_dbl(p, its ? d->b : NAN);
    pgp_dbl(p, its ? d->c : NAN);
    pgp_dbl(p, its ? d->d : NAN);
    pgp_dbl(p, its && d->range == BG_ITS90_TPW_AG ? d->w_al : NAN);
}

static int pg_ref_add(bgi_conn *c, const bg_ref *ref, const char *now, long long *id,
                      bg_error *err)
{
    struct pgp p;
    int rc;
    if (pgp_init(&p, 20) != BG_OK)
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    pgp_text(&p, ref->ident);
    pgp_text(&p, ref->certificate);
    pgp_text0(&p, ref->due_date);
    pgp_text(&p, bg_ref_kind_name(ref->kind));
    ref_correction(&p, ref);
    pgp_text0(&p, ref->note);
    pgp_text(&p, now);
    ref_its90(&p, ref);
    rc = insert_id(c, "INSERT INTO reference(id, ident, certificate, due_date, correction, "
                   "lin_c0_k, lin_c1, lin_t0_k, cvd_r0_ohm, cvd_a, cvd_b, cvd_c, note, "
                   "created_at, " PG_ITS90_COLS ") SELECT coalesce(max(id), 0) + 1, $1, $2, $3, "
                   "$4, $5, $6, $7, $8, $9, $10, $11, $12, $13, $14, $15, $16, $17, $18, $19, "
                   "$20 FROM reference RETURNING id", &p, id, err,
                   "cannot add the reference");
    pgp_free(&p);
    if (rc == BG_EINVAL && is_unique(err))
        return bg_error_set(err, BG_EINVAL, "reference '%s' already exists", ref->ident);
    return rc;
}

#define REF_COLS "id, ident, certificate, due_date, correction, lin_c0_k, lin_c1, lin_t0_k, " \
                 "cvd_r0_ohm, cvd_a, cvd_b, cvd_c, note, created_at, " PG_ITS90_COLS

/* The correction from columns 'k' (its kind) .. k + 7 (cvd_c). */
static void correction_row(const PGresult *res, int r, int k, bg_ref *ref)
{
    const char *kind = PQgetvalue(res, r, k);
    ref->kind = strcmp(kind, "linear") == 0 ? BG_REF_LINEAR
              : strcmp(kind, "cvd") == 0    ? BG_REF_CVD
              : strcmp(kind, "its90") == 0  ? BG_REF_ITS90
                                            : BG_REF_NONE;
    ref->lin_c0_k = pgv_dbl(res, r, k + 1);
    ref->lin_c1 = pgv_dbl(res, r, k + 2);
    ref->lin_t0_k = pgv_dbl(res, r, k + 3);
    ref->cvd_r0_ohm = pgv_dbl(res, r, k + 4);
    ref->cvd_a = pgv_dbl(res, r, k + 5);
    ref->cvd_b = pgv_dbl(res, r, k + 6);
    ref->cvd_c = pgv_dbl(res, r, k + 7);
}

/* The ITS-90 columns from column 'first' (PG_ITS90_COLS). */
static void its90_row(const PGresult *res, int r, int first, bg_ref *ref)
{
    char range[16];
    if (ref->kind != BG_REF_ITS90)
        return;
    ref->its90_rtpw_ohm = pgv_dbl(res, r, first);
    pgv_text(range, sizeof range, res, r, first + 1);
    if (bg_its90_range_parse(range, &ref->its90.range, NULL) != BG_OK)
        ref->its90.range = BG_ITS90_NRANGE; /* refused by bg_ref_check where it is used */
    ref->its90.a = pgv_dbl(res, r, first + 2);
    ref->its90.b = pgv_dbl(res, r, first + 3);
    ref->its90.c = pgv_dbl(res, r, first + 4);
    ref->its90.d = pgv_dbl(res, r, first + 5);
    ref->its90.w_al = pgv_dbl(res, r, first + 6);
}

static void ref_row(const PGresult *res, int r, bg_ref *ref)
{
    memset(ref, 0, sizeof *ref);
    ref->id = pgv_ll(res, r, 0);
    pgv_text(ref->ident, sizeof ref->ident, res, r, 1);
    pgv_text(ref->certificate, sizeof ref->certificate, res, r, 2);
    pgv_text(ref->due_date, sizeof ref->due_date, res, r, 3);
    correction_row(res, r, 4, ref);
    pgv_text(ref->note, sizeof ref->note, res, r, 12);
    pgv_text(ref->created_at, sizeof ref->created_at, res, r, 13);
    its90_row(res, r, 14, ref);
}

static int pg_ref_get(bgi_conn *c, const char *ident, bg_ref *out, bg_error *err)
{
    int rc;
    PGresult *res = by_text(c, -1, "SELECT " REF_COLS " FROM reference WHERE ident = $1",
                            ident, &rc, err, "cannot read references");
    if (!res)
        return rc;
    if (PQntuples(res) == 1)
        ref_row(res, 0, out);
    else
        rc = bg_error_set(err, BG_EINVAL, "unknown reference thermometer '%s' (add it with "
                          "'bandgap ref add')", ident);
    PQclear(res);
    return rc;
}

static int pg_ref_each(bgi_conn *c, bg_ref_cb cb, void *ctx, bg_error *err)
{
    int rc;
    bg_ref r;
    PGresult *res = bgi_pg_exec(c, -1, "SELECT " REF_COLS " FROM reference ORDER BY ident",
                                NULL, &rc, err, "cannot read references");
    for (int i = 0; res && i < PQntuples(res); i++) {
        ref_row(res, i, &r);
        if (cb(&r, ctx))
            break;
    }
    PQclear(res);
    return rc;
}

/* ---- versions ---- */

static int pg_ref_version_add(bgi_conn *c, long long ref_id, const bg_ref_version *rv,
                              const char *now, long long *id, bg_error *err)
{
    const bg_ref *ref = &rv->ref;
    struct pgp p;
    int rc;
    if (pgp_init(&p, 22) != BG_OK)
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    pgp_int(&p, ref_id);
    pgp_text(&p, rv->v.valid_from);
    pgp_text(&p, ref->certificate);
    pgp_text0(&p, ref->due_date);
    pgp_text(&p, bg_ref_kind_name(ref->kind));
    ref_correction(&p, ref);
    pgp_text(&p, rv->v.why);
    pgp_text(&p, rv->v.by);
    pgp_text(&p, now);
    ref_its90(&p, ref);
    rc = insert_id(c, "INSERT INTO reference_version(id, reference_id, valid_from, "
                   "certificate, due_date, correction, lin_c0_k, lin_c1, lin_t0_k, "
                   "cvd_r0_ohm, cvd_a, cvd_b, cvd_c, why, by_whom, created_at, " PG_ITS90_COLS
                   ") SELECT coalesce(max(id), 0) + 1, $1, $2, $3, $4, $5, $6, $7, $8, $9, "
                   "$10, $11, $12, $13, $14, $15, $16, $17, $18, $19, $20, $21, $22 FROM "
                   "reference_version RETURNING id", &p, id, err,
                   "cannot add the reference version");
    pgp_free(&p);
    return rc;
}

static int pg_ref_version_each(bgi_conn *c, long long ref_id, bg_ref_version_cb cb, void *ctx,
                               bg_error *err)
{
    int rc;
    bg_ref_version rv;
    PGresult *res = by_id(c, -1, "SELECT id, valid_from, certificate, due_date, correction, "
                          "lin_c0_k, lin_c1, lin_t0_k, cvd_r0_ohm, cvd_a, cvd_b, cvd_c, why, "
                          "by_whom, created_at, " PG_ITS90_COLS " FROM reference_version "
                          "WHERE reference_id = $1 "
                          "ORDER BY id", ref_id, &rc, err, "cannot read reference versions");
    for (int i = 0; res && i < PQntuples(res); i++) {
        memset(&rv, 0, sizeof rv);
        rv.v.id = pgv_ll(res, i, 0);
        pgv_text(rv.v.valid_from, sizeof rv.v.valid_from, res, i, 1);
        pgv_text(rv.ref.certificate, sizeof rv.ref.certificate, res, i, 2);
        pgv_text(rv.ref.due_date, sizeof rv.ref.due_date, res, i, 3);
        correction_row(res, i, 4, &rv.ref);
        pgv_text(rv.v.why, sizeof rv.v.why, res, i, 12);
        pgv_text(rv.v.by, sizeof rv.v.by, res, i, 13);
        pgv_text(rv.v.created_at, sizeof rv.v.created_at, res, i, 14);
        its90_row(res, i, 15, &rv.ref);
        if (cb(&rv, ctx))
            break;
    }
    PQclear(res);
    return rc;
}

static int pg_lot_version_add(bgi_conn *c, long long lot_id, const bg_lot_version *lv,
                              const char *now, long long *id, bg_error *err)
{
    struct pgp p;
    int rc;
    if (pgp_init(&p, 8) != BG_OK)
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    pgp_int(&p, lot_id);
    pgp_text(&p, lv->v.valid_from);
    pgp_dbl(&p, lv->lot.tol_r25);
    pgp_dbl(&p, lv->lot.tol_beta);
    pgp_text0(&p, lv->lot.note);
    pgp_text(&p, lv->v.why);
    pgp_text(&p, lv->v.by);
    pgp_text(&p, now);
    rc = insert_id(c, "INSERT INTO lot_version(id, lot_id, valid_from, tol_r25, tol_beta, "
                   "note, why, by_whom, created_at) SELECT coalesce(max(id), 0) + 1, $1, $2, "
                   "$3, $4, $5, $6, $7, $8 FROM lot_version RETURNING id", &p, id, err,
                   "cannot add the lot version");
    pgp_free(&p);
    return rc;
}

static int pg_lot_version_each(bgi_conn *c, long long lot_id, bg_lot_version_cb cb, void *ctx,
                               bg_error *err)
{
    int rc;
    bg_lot_version lv;
    PGresult *res = by_id(c, -1, "SELECT id, valid_from, tol_r25, tol_beta, note, why, "
                          "by_whom, created_at FROM lot_version WHERE lot_id = $1 ORDER BY id",
                          lot_id, &rc, err, "cannot read lot versions");
    for (int i = 0; res && i < PQntuples(res); i++) {
        memset(&lv, 0, sizeof lv);
        lv.v.id = pgv_ll(res, i, 0);
        pgv_text(lv.v.valid_from, sizeof lv.v.valid_from, res, i, 1);
        lv.lot.tol_r25 = lot_dbl(res, i, 2);
        lv.lot.tol_beta = lot_dbl(res, i, 3);
        pgv_text(lv.lot.note, sizeof lv.lot.note, res, i, 4);
        pgv_text(lv.v.why, sizeof lv.v.why, res, i, 5);
        pgv_text(lv.v.by, sizeof lv.v.by, res, i, 6);
        pgv_text(lv.v.created_at, sizeof lv.v.created_at, res, i, 7);
        if (cb(&lv, ctx))
            break;
    }
    PQclear(res);
    return rc;
}

/* A probe's move to another lot (the lot-wide reads follow it: BGI_PG_LOT_AT_RUN ...). */
static int pg_probe_version_add(bgi_conn *c, long long probe_id, const bg_probe_version *pv,
                                const char *now, long long *id, bg_error *err)
{
    struct pgp p;
    int rc;
    if (pgp_init(&p, 6) != BG_OK)
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    pgp_int(&p, probe_id);
    pgp_text(&p, pv->v.valid_from);
    pgp_int(&p, pv->probe.lot_id);
    pgp_text(&p, pv->v.why);
    pgp_text(&p, pv->v.by);
    pgp_text(&p, now);
    rc = insert_id(c, "INSERT INTO probe_version(id, probe_id, valid_from, lot_id, why, "
                   "by_whom, created_at) SELECT coalesce(max(id), 0) + 1, $1, $2, $3, $4, $5, "
                   "$6 FROM probe_version RETURNING id", &p, id, err,
                   "cannot add the probe version");
    pgp_free(&p);
    return rc;
}

static int pg_probe_version_each(bgi_conn *c, long long probe_id, bg_probe_version_cb cb,
                                 void *ctx, bg_error *err)
{
    int rc;
    bg_probe_version pv;
    PGresult *res = by_id(c, -1, "SELECT 0, p.created_at, p.lot_id, l.code, NULL, NULL, "
                          "p.created_at, p.serial, p.note, p.created_at FROM probe p JOIN lot l "
                          "ON l.id = p.lot_id WHERE p.id = $1 UNION ALL SELECT v.id, "
                          "v.valid_from, v.lot_id, l.code, v.why, v.by_whom, v.created_at, "
                          "p.serial, p.note, p.created_at FROM probe_version v JOIN lot l ON "
                          "l.id = v.lot_id JOIN probe p ON p.id = v.probe_id WHERE v.probe_id = "
                          "$1 ORDER BY 1", probe_id, &rc, err, "cannot read probe versions");
    for (int i = 0; res && i < PQntuples(res); i++) {
        memset(&pv, 0, sizeof pv);
        pv.v.id = pgv_ll(res, i, 0);
        pgv_text(pv.v.valid_from, sizeof pv.v.valid_from, res, i, 1);
        pv.probe.id = probe_id;
        pv.probe.lot_id = pgv_ll(res, i, 2);
        pgv_text(pv.probe.lot_code, sizeof pv.probe.lot_code, res, i, 3);
        pgv_text(pv.v.why, sizeof pv.v.why, res, i, 4);
        pgv_text(pv.v.by, sizeof pv.v.by, res, i, 5);
        pgv_text(pv.v.created_at, sizeof pv.v.created_at, res, i, 6);
        pgv_text(pv.probe.serial, sizeof pv.probe.serial, res, i, 7);
        pgv_text(pv.probe.note, sizeof pv.probe.note, res, i, 8);
        pgv_text(pv.probe.created_at, sizeof pv.probe.created_at, res, i, 9);
        if (cb(&pv, ctx))
            break;
    }
    PQclear(res);
    return rc;
}

/* ---- part specifications ---- */

static void dbl_pos(struct pgp *p, double v)
{
    if (v > 0.0)
        pgp_dbl(p, v);
    else
        pgp_null(p);
}

/* The schema-12 columns sensor .. iec_class (all NULL for an NTC). */
static void spec_sensor_params(struct pgp *p, const bg_part_spec *s)
{
    int prt = s->sensor == BG_PART_PRT, ntc = s->sensor == BG_PART_NTC;
    if (ntc)
        pgp_null(p);
    else
        pgp_text(p, bg_part_sensor_name(s->sensor));
    pgp_dbl(p, ntc ? NAN : s->nom_t_k);
    pgp_dbl(p, ntc ? NAN : s->nom_x);
    pgp_dbl(p, ntc || prt ? NAN : s->tol_x);
    pgp_dbl(p, ntc || prt ? NAN : s->nom_s);
    pgp_dbl(p, ntc || prt ? NAN : s->tol_s);
    if (prt)
        pgp_text(p, s->iec_class);
    else
        pgp_null(p);
}

static int pg_part_spec_add(bgi_conn *c, const bg_part_spec *s, const char *now, long long *id,
                            bg_error *err)
{
    struct pgp p;
    char name[16];
    size_t n = s->have_model ? bg_model_npar(&s->model) : 0;
    int rc;
    if (pgp_init(&p, 26) != BG_OK)
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    pgp_text(&p, s->part);
    if (s->have_model) {
        pgp_text(&p, bg_model_name(&s->model, name, sizeof name));
        pgp_dbl(&p, (bg_model_flags(&s->model) & BG_MODEL_HAS_T0) ? s->model.t0_k : NAN);
        pgp_int(&p, (long long)n);
    } else
        pgp_null(&p), pgp_null(&p), pgp_null(&p);
    for (size_t i = 0; i < 6; i++)
        pgp_dbl(&p, i < n ? s->model.coef[i] : NAN);
    pgp_text0(&p, s->source);
    dbl_pos(&p, s->tol_k);
    dbl_pos(&p, s->tol_k > 0.0 ? s->tol_lo_k : 0.0);
    dbl_pos(&p, s->tol_k > 0.0 ? s->tol_hi_k : 0.0);
    pgp_int0(&p, (long long)s->baseline);
    dbl_pos(&p, s->limit_k);
    dbl_pos(&p, s->rate_k);
    pgp_text0(&p, s->note);
    pgp_text(&p, now);
    spec_sensor_params(&p, s); /* schema 12 */
    rc = insert_id(c, "INSERT INTO part_spec(id, part, model, t0_k, npar, c0, c1, c2, c3, c4, "
                   "c5, source, tol_k, tol_lo_k, tol_hi_k, baseline, limit_k, rate_k, note, "
                   "created_at, sensor, nom_t_k, nom_x, tol_x, nom_s, tol_s, iec_class) "
                   "SELECT coalesce(max(id), 0) + 1, $1, $2, $3, $4, $5, $6, $7, "
                   "$8, $9, $10, $11, $12, $13, $14, $15, $16, $17, $18, $19, $20, $21, $22, "
                   "$23, $24, $25, $26 FROM part_spec "
                   "RETURNING id", &p, id, err, "cannot add the part specification");
    pgp_free(&p);
    if (rc == BG_EINVAL && err && strstr(err->msg, "the record refuses it"))
        return bg_error_set(err, BG_EINVAL, "part '%s': %s", s->part, strstr(err->msg,
                            "the record refuses it"));
    return rc;
}

static double or_zero(const PGresult *res, int r, int k)
{
    return pgv_null(res, r, k) ? 0.0 : pgv_dbl(res, r, k);
}

static int spec_row(const PGresult *res, int r, bg_part_spec *s, bg_error *err)
{
    memset(s, 0, sizeof *s);
    s->id = pgv_ll(res, r, 0);
    pgv_text(s->part, sizeof s->part, res, r, 1);
    if (!pgv_null(res, r, 2)) {
        char name[16];
        pgv_text(name, sizeof name, res, r, 2);
        if (bg_model_parse(name, &s->model, err) != BG_OK)
            return BG_EDB;
        if (!pgv_null(res, r, 3))
            s->model.t0_k = pgv_dbl(res, r, 3);
        size_t n = (size_t)pgv_ll(res, r, 4);
        if (n != bg_model_npar(&s->model))
            return bg_error_set(err, BG_EDB, "part specification %lld: %zu coefficients for "
                                "model '%s'", s->id, n, name);
        for (size_t i = 0; i < n; i++)
            s->model.coef[i] = pgv_dbl(res, r, 5 + (int)i);
        s->have_model = 1;
    }
    pgv_text(s->source, sizeof s->source, res, r, 11);
    s->tol_k = or_zero(res, r, 12), s->tol_lo_k = or_zero(res, r, 13);
    s->tol_hi_k = or_zero(res, r, 14);
    s->baseline = (size_t)pgv_ll(res, r, 15);
    s->limit_k = or_zero(res, r, 16), s->rate_k = or_zero(res, r, 17);
    pgv_text(s->note, sizeof s->note, res, r, 18);
    pgv_text(s->created_at, sizeof s->created_at, res, r, 19);
    if (!pgv_null(res, r, 20)) { /* schema 12 */
        char name[16];
        pgv_text(name, sizeof name, res, r, 20);
        if (bg_part_sensor_parse(name, &s->sensor, err) != BG_OK)
            return BG_EDB;
        s->nom_t_k = or_zero(res, r, 21), s->nom_x = or_zero(res, r, 22);
        s->tol_x = or_zero(res, r, 23), s->nom_s = or_zero(res, r, 24);
        s->tol_s = or_zero(res, r, 25);
        pgv_text(s->iec_class, sizeof s->iec_class, res, r, 26);
    }
    return BG_OK;
}

static int pg_part_spec_each(bgi_conn *c, const char *part, int newest_only, bg_part_spec_cb cb,
                             void *ctx, bg_error *err)
{
    bg_part_spec s;
    int rc;
    PGresult *res = by_text(c, -1, newest_only ?
        "SELECT id, part, model, t0_k, npar, c0, c1, c2, c3, c4, c5, source, tol_k, tol_lo_k, "
        "tol_hi_k, baseline, limit_k, rate_k, note, created_at, sensor, nom_t_k, nom_x, tol_x, "
        "nom_s, tol_s, iec_class FROM part_spec WHERE part = $1 "
        "ORDER BY created_at DESC, id DESC LIMIT 1" :
        "SELECT id, part, model, t0_k, npar, c0, c1, c2, c3, c4, c5, source, tol_k, tol_lo_k, "
        "tol_hi_k, baseline, limit_k, rate_k, note, created_at, sensor, nom_t_k, nom_x, tol_x, "
        "nom_s, tol_s, iec_class FROM part_spec WHERE part = $1 "
        "ORDER BY created_at, id", part, &rc, err, "cannot read part specifications");
    for (int i = 0; res && i < PQntuples(res); i++)
        if ((rc = spec_row(res, i, &s, err)) != BG_OK || cb(&s, ctx))
            break;
    PQclear(res);
    return rc;
}

/* ---- names, for "did you mean" ---- */

static int pg_names(bgi_conn *c, enum bgi_name_kind kind, bgi_name_cb cb, void *ctx,
                    bg_error *err)
{
    static const char *const sql[] = {
        "SELECT serial FROM probe ORDER BY serial",
        "SELECT code FROM lot ORDER BY code",
        "SELECT ident FROM reference ORDER BY ident",
        "SELECT DISTINCT part FROM lot ORDER BY part",
    };
    int rc;
    if ((size_t)kind >= sizeof sql / sizeof sql[0])
        return bg_error_set(err, BG_EINVAL, "no names of kind %d", (int)kind);
    PGresult *res = bgi_pg_exec(c, -1, sql[kind], NULL, &rc, err, "cannot read names");
    for (int i = 0; res && i < PQntuples(res); i++)
        if (cb(PQgetvalue(res, i, 0), ctx))
            break;
    PQclear(res);
    return rc;
}

/* ---- issued reports ---- */

static int pg_artifact_next(bgi_conn *c, const char *kind, const char *subject, long long *id,
                            long long *latest, bg_error *err)
{
    const char *v[2] = { kind, subject };
    struct pgp p = { 2, 2, v, NULL, NULL, NULL };
    int rc;
    PGresult *res = bgi_pg_exec(c, -1, "SELECT coalesce(max(id), 0) + 1, (SELECT id FROM "
                                "artifact WHERE kind = $1 AND (spec::jsonb ->> 'subject') = $2 "
                                "ORDER BY id DESC LIMIT 1) FROM artifact", &p, &rc, err,
                                "cannot read the issued reports");
    if (res)
        *id = pgv_ll(res, 0, 0), *latest = pgv_ll(res, 0, 1);
    PQclear(res);
    return rc;
}

static int pg_artifact_insert(bgi_conn *c, const struct bgi_artifact_row *row, bg_error *err)
{
    const bg_artifact_req *req = row->req;
    struct pgp p;
    int rc;
    if (pgp_init(&p, 8) != BG_OK)
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    pgp_int(&p, row->id);
    pgp_text(&p, req->kind);
    pgp_int0(&p, req->fit_id);
    pgp_text(&p, req->spec);
    pgp_bin(&p, row->content, row->len);
    pgp_int0(&p, req->replaces_id);
    pgp_text(&p, req->version);
    pgp_text(&p, row->now);
    PGresult *res = bgi_pg_exec(c, -1, "INSERT INTO artifact(id, kind, fit_id, spec, content, "
                                "replaces_id, program_version, created_at) VALUES ($1, $2, $3, "
                                "$4, $5, $6, $7, $8)", &p, &rc, err, "cannot store the report");
    PQclear(res);
    pgp_free(&p);
    return rc;
}

static int pg_artifact_get(bgi_conn *c, long long id, bg_artifact *a, bg_error *err)
{
    int rc;
    memset(a, 0, sizeof *a);
    PGresult *res = by_id(c, -1, "SELECT kind, coalesce(fit_id, 0), spec, content, "
                          "coalesce(replaces_id, 0), program_version, created_at, "
                          "coalesce((SELECT max(b.id) FROM artifact b WHERE b.replaces_id = "
                          "a.id), 0) FROM artifact a WHERE id = $1", id, &rc, err,
                          "cannot read the report");
    if (!res)
        return rc;
    if (PQntuples(res) == 1) {
        a->id = id;
        pgv_text(a->kind, sizeof a->kind, res, 0, 0);
        a->fit_id = pgv_ll(res, 0, 1);
        a->spec = strdup(PQgetvalue(res, 0, 2));
        a->content = (char *)pgv_bytes(res, 0, 3, &a->len);
        a->replaces_id = pgv_ll(res, 0, 4);
        pgv_text(a->version, sizeof a->version, res, 0, 5);
        pgv_text(a->created_at, sizeof a->created_at, res, 0, 6);
        a->replaced_by = pgv_ll(res, 0, 7);
        if (!a->spec || !a->content)
            rc = bg_error_set(err, BG_ENOMEM, "out of memory for report %lld", id);
    } else
        rc = bg_error_set(err, BG_EINVAL, "no report %lld", id);
    PQclear(res);
    if (rc != BG_OK)
        free(a->spec), free(a->content), memset(a, 0, sizeof *a);
    return rc;
}

static int pg_artifact_each(bgi_conn *c, bg_artifact_cb cb, void *ctx, bg_error *err)
{
    int rc;
    PGresult *res = bgi_pg_exec(c, -1, "SELECT id, kind, coalesce(fit_id, 0), spec, "
                                "coalesce(replaces_id, 0), program_version, created_at, "
                                "length(content), coalesce((SELECT max(b.id) FROM artifact b "
                                "WHERE b.replaces_id = a.id), 0) FROM artifact a ORDER BY id",
                                NULL, &rc, err, "cannot list the reports");
    for (int i = 0; res && i < PQntuples(res); i++) {
        bg_artifact a;
        memset(&a, 0, sizeof a);
        a.id = pgv_ll(res, i, 0);
        pgv_text(a.kind, sizeof a.kind, res, i, 1);
        a.fit_id = pgv_ll(res, i, 2);
        a.spec = PQgetvalue(res, i, 3);
        a.replaces_id = pgv_ll(res, i, 4);
        pgv_text(a.version, sizeof a.version, res, i, 5);
        pgv_text(a.created_at, sizeof a.created_at, res, i, 6);
        a.len = (size_t)pgv_ll(res, i, 7);
        a.replaced_by = pgv_ll(res, i, 8);
        if (cb(&a, ctx))
            break;
    }
    PQclear(res);
    return rc;
}

#define PG_BACKEND(scheme) { \
    BGI_STORE_BACKEND_VERSION, scheme, \
    pg_open, pg_close, pg_schema_version, pg_schema_known, \
    pg_in_tx, pg_begin, pg_commit, pg_rollback, \
    pg_lot_add, bgi_pg_lot_get, pg_lot_each, pg_part_lots, \
    pg_probe_add, bgi_pg_probe_get, bgi_pg_probe_id, pg_probe_each, \
    pg_ref_add, pg_ref_get, pg_ref_each, \
    bgi_pg_import, bgi_pg_run_get, bgi_pg_run_latest, bgi_pg_run_each, \
    bgi_pg_reading_each, bgi_pg_run_points, bgi_pg_lot_points_each, bgi_pg_exclude, \
    bgi_pg_fit_next_id, bgi_pg_fit_insert, bgi_pg_fit_get, bgi_pg_fit_each, \
    bgi_pg_fit_readings, bgi_pg_probe_history, bgi_pg_lot_latest_fits, bgi_pg_lot_history, \
    pg_artifact_next, pg_artifact_insert, pg_artifact_get, pg_artifact_each, \
    bgi_pg_run_by_digest, bgi_pg_fit_newest_of_run, bgi_pg_fit_same, \
    pg_part_spec_add, pg_part_spec_each, \
    pg_names, \
    bgi_pg_chain_append, bgi_pg_chain_head, bgi_pg_verify, bgi_pg_chain_check, \
    bgi_pg_lot_histories, bgi_pg_export_each, \
    pg_ref_version_add, pg_ref_version_each, pg_lot_version_add, pg_lot_version_each, \
    pg_probe_version_add, pg_probe_version_each, \
    bgi_pg_seq_add, bgi_pg_seq_unfinished, bgi_pg_seq_settle, bgi_pg_seq_reading, \
    bgi_pg_seq_readings, bgi_pg_seq_settles, bgi_pg_seq_end, \
}

const struct bgi_store_backend bgi_store_pg = PG_BACKEND("postgresql");
const struct bgi_store_backend bgi_store_pg_alias = PG_BACKEND("postgres");
