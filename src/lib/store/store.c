/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The calibration database above the backend seam: the choice of backend by scheme, argument
** and text checks, the reference correction of imported readings, transactions around writes,
** the fit queue and the clock.  The queries are the backend's (store_int.h, sqlite.c). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>

#include "bandgap/bandgap.h"
#include "store_int.h"

/* The backends by scheme; the first is the default for a plain path. */
static const struct bgi_store_backend *const backends[] = { &bgi_store_sqlite, &bgi_store_pg,
                                                            &bgi_store_pg_alias };
enum { NBACKENDS = sizeof backends / sizeof backends[0] };

static int check_text(const char *what, const char *s, size_t max, int required, bg_error *err)
{
    size_t n = s ? strlen(s) : 0;
    if (required && n == 0)
        return bg_error_set(err, BG_EINVAL, "%s must not be empty", what);
    if (n >= max)
        return bg_error_set(err, BG_EINVAL, "%s is longer than %zu bytes", what, max - 1);
    return bg_text_check(what, s, n, err);
}

/* ---- opening: the scheme rule ---- */

/* The length of a scheme at the start of 'target' ([a-z][a-z0-9+.-]+ before a ':'), or 0.
** One letter is not a scheme: "C:\x.db" is a path. */
static size_t scheme_len(const char *target)
{
    size_t n = 0;
    if (!(target[0] >= 'a' && target[0] <= 'z'))
        return 0;
    while ((target[n] >= 'a' && target[n] <= 'z') || (target[n] >= '0' && target[n] <= '9') ||
           target[n] == '+' || target[n] == '.' || target[n] == '-')
        n++;
    return n >= 2 && target[n] == ':' ? n : 0;
}

/* The backend named by the scheme of 'target' and what follows the scheme; a plain path (or
** an existing file whose name only looks like a scheme) goes to the default backend. */
static int pick_backend(const char *target, const struct bgi_store_backend **be,
                        const char **rest, bg_error *err)
{
    size_t n = scheme_len(target);
    struct stat sb;
    *be = backends[0];
    *rest = target;
    if (n == 0)
        return BG_OK;
    for (size_t i = 0; i < NBACKENDS; i++)
        if (strlen(backends[i]->scheme) == n && memcmp(target, backends[i]->scheme, n) == 0) {
            *be = backends[i];
            *rest = target + n + 1;
            if (!**rest)
                return bg_error_set(err, BG_EINVAL, "database '%s': no path after the scheme",
                                    target);
            return BG_OK;
        }
    if (stat(target, &sb) == 0)
        return BG_OK;
    if (target[n + 1] == '/') /* a URL */
        return bg_error_set(err, BG_EINVAL, "database '%s': unknown scheme '%.*s:' (this "
                            "bandgap knows 'sqlite:', 'postgresql:' and 'postgres:')", target, (int)n, target);
    return bg_error_set(err, BG_EINVAL, "database '%s': unknown scheme '%.*s:' (this bandgap "
                        "knows 'sqlite:', 'postgresql:' and 'postgres:'; write './%s' for a file of that "
                        "name)", target,
                        (int)n, target, target);
}

bg_store_opts bg_store_default_opts(void)
{
    bg_store_opts o = { 30.0 };
    return o;
}

int bg_store_open(const char *target, int flags, bg_store **out, bg_error *err)
{
    return bg_store_open_with(target, flags, NULL, out, err);
}

int bg_store_open_with(const char *target, int flags, const bg_store_opts *opts,
                       bg_store **out, bg_error *err)
{
    const struct bgi_store_backend *be;
    const char *rest;
    bg_store *st;
    bg_store_opts o = opts ? *opts : bg_store_default_opts();
    int rc;

    *out = NULL;
    if (!target || !*target)
        return bg_error_set(err, BG_EINVAL, "no database named");
    if (!(o.busy_timeout_s >= 0.0 && o.busy_timeout_s <= 3600.0)) /* NaN too */
        return bg_error_set(err, BG_EINVAL, "busy timeout %g s: not between 0 and 3600 s",
                            o.busy_timeout_s);
    flags = (flags & ((1 << BGI_OPEN_BUSY_SHIFT) - 1)) |
            (int)lround(o.busy_timeout_s * 1000.0) << BGI_OPEN_BUSY_SHIFT;
    if ((rc = pick_backend(target, &be, &rest, err)) != BG_OK)
        return rc;
    if (!(st = calloc(1, sizeof *st)))
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    st->be = be;
    st->clock = st->now_t = (time_t)-1;
    if ((rc = be->open(rest, flags, &st->conn, st->backup, sizeof st->backup, err)) != BG_OK) {
        free(st);
        return rc;
    }
    *out = st;
    return BG_OK;
}

static void fitq_drop(bg_store *st)
{
    for (size_t i = 0; i < st->nfitq; i++)
        free(st->fitq[i].ids);
    st->nfitq = 0;
}

void bg_store_close(bg_store *st)
{
    if (!st)
        return;
    fitq_drop(st);
    st->be->close(st->conn);
    free(st);
}

int bg_store_schema_version(bg_store *st)
{
    return st->be->schema_version(st->conn);
}

int bg_store_schema_known(void)
{
    return backends[0]->schema_known();
}

const char *bg_store_backup_path(const bg_store *st)
{
    return st->backup;
}

/* ---- the clock ---- */

void bg_store_set_clock(bg_store *st, time_t fixed)
{
    st->clock = fixed < 0 ? (time_t)-1 : fixed;
}

char *bg_store_time(bg_store *st, char *buf, size_t size)
{
    time_t t = st->clock >= 0 ? st->clock : time(NULL);
    /* The same second again (a lot of fits in one pass): reuse the text. */
    if (t != st->now_t) {
        bg_time_format(t, st->now_text, sizeof st->now_text);
        st->now_t = t;
    }
    snprintf(buf, size, "%s", st->now_text);
    return buf;
}

/* ---- transactions ---- */

/* Start a write transaction unless one is open ('*own' says which); end it with 'rc'. */
static int tx_begin(bg_store *st, int *own, bg_error *err)
{
    int rc;
    *own = 0;
    if (st->be->in_tx(st->conn))
        return BG_OK;
    if ((rc = st->be->begin(st->conn, err)) == BG_OK)
        *own = 1;
    return rc;
}

static int tx_end(bg_store *st, int own, int rc, bg_error *err)
{
    if (!own)
        return rc;
    if (rc == BG_OK && (rc = st->be->commit(st->conn, err)) == BG_OK)
        return BG_OK;
    st->be->rollback(st->conn);
    return rc;
}

/* ---- "did you mean": the nearest name in the database to an unknown one ---- */

struct nearest {
    const char *word;
    size_t len;
    int exact;             /* the word itself is a name: the failure is about something else */
    char best[BG_TEXT];    /* "" until a near name is found */
};

/* Keep the nearer of the best so far and 'name' (the earlier one on a tie, as bg_suggest). */
static int nearest_cb(const char *name, void *ctx)
{
    struct nearest *n = ctx;
    const char *cands[2] = { n->best[0] ? n->best : NULL, name };
    if (strcmp(name, n->word) == 0)
        return n->exact = 1;
    if (bg_suggest(n->word, n->len, cands, 2) == name)
        snprintf(n->best, sizeof n->best, "%s", name);
    return 0;
}

/* After a backend call about 'name' (NULL: none) failed with 'rc': when its message says the
** name is absent (store_int.h, 'names'), add the nearest name of that kind in the database as
** "did you mean", as a CSV's unknown column does.  Returns 'rc'; nothing to do on success. */
static int did_you_mean(bg_store *st, enum bgi_name_kind kind, const char *name, int rc,
                        bg_error *err)
{
    static const char *const absent[] = { "unknown probe", "unknown lot",
                                          "unknown reference thermometer", "no lots of part" };
    struct nearest n = { name, 0, 0, "" };
    bg_error quiet = BG_ERROR_INIT;
    char head[sizeof err->msg], msg[sizeof err->msg];
    int k;
    if (rc != BG_EINVAL || !err || !name || st->be->version < 4)
        return rc;
    k = snprintf(head, sizeof head, "%s '%s'", absent[kind], name);
    if (k < 0 || (size_t)k >= sizeof head || strncmp(err->msg, head, (size_t)k) != 0)
        return rc;
    n.len = strlen(name);
    if (st->be->names(st->conn, kind, nearest_cb, &n, &quiet) != BG_OK || n.exact ||
        !n.best[0])
        return rc;
    memcpy(msg, err->msg, sizeof msg); /* the tail after the name, kept */
    if (strncmp(msg + k, " (", 2) == 0) /* "unknown lot 'X' (did you mean 'Y'? add ...)" */
        return bg_error_set(err, rc, "%s (did you mean '%s'? %s", head, n.best, msg + k + 2);
    return bg_error_set(err, rc, "%s (did you mean '%s'?)%s", head, n.best, msg + k);
}

/* After a write that added row 'id' of table 'kind' (rc BG_OK): its record in the chain, in
** the same transaction. */
static int chained(bg_store *st, const char *kind, long long id, int rc, bg_error *err)
{
    return rc == BG_OK ? st->be->chain_append(st->conn, kind, id, err) : rc;
}

/* Write the queued fits in one backend call, and forget them. */
static int fitq_flush(bg_store *st, bg_error *err)
{
    char now[BG_TIME];
    int rc;
    if (st->nfitq == 0)
        return BG_OK;
    rc = st->be->fit_insert(st->conn, st->fitq, st->nfitq, bg_store_time(st, now, sizeof now),
                            err);
    for (size_t i = 0; i < st->nfitq && rc == BG_OK; i++)
        rc = chained(st, "fit", st->fitq[i].id, rc, err);
    fitq_drop(st);
    return rc;
}

int bg_store_begin(bg_store *st, bg_error *err)
{
    return st->be->begin(st->conn, err);
}

int bg_store_commit(bg_store *st, bg_error *err)
{
    int rc = fitq_flush(st, err);
    st->next_fit_id = 0;
    if (rc == BG_OK)
        rc = st->be->commit(st->conn, err);
    if (rc != BG_OK)
        bg_store_rollback(st);
    return rc;
}

void bg_store_rollback(bg_store *st)
{
    if (!st)
        return;
    fitq_drop(st);
    st->next_fit_id = 0;
    st->be->rollback(st->conn);
}

/* ---- lots, probes, references ---- */

/* A lot's nominal values: an NTC lot's R25 and B > 0, its pair and its tolerances in [0, 1);
** a lot of another kind none of them (NaN: its part's specification holds them). */
static int lot_values_check(const bg_lot *lot, bg_error *err)
{
    if (lot->sensor < 0 || lot->sensor >= BG_PART_NSENSOR)
        return bg_error_set(err, BG_EINVAL, "lot '%s': unknown sensor kind %d", lot->code,
                            lot->sensor);
    if (lot->sensor != BG_PART_NTC) {
        if (!isnan(lot->r25_ohm) || !isnan(lot->beta_k) || !isnan(lot->pair_t1_k) ||
            !isnan(lot->pair_t2_k) || !isnan(lot->tol_r25) || !isnan(lot->tol_beta))
            return bg_error_set(err, BG_EINVAL, "lot '%s' is a %s lot: it holds no R25, B, "
                                "pair or tolerances (its part's specification holds its "
                                "nominal values)", lot->code, bg_part_sensor_name(lot->sensor));
        return BG_OK;
    }
    if (!(lot->r25_ohm > 0.0) || !(lot->beta_k > 0.0) || !isfinite(lot->r25_ohm) ||
        !isfinite(lot->beta_k))
        return bg_error_set(err, BG_EINVAL, "lot '%s': nominal R25 and B must be > 0",
                            lot->code);
    if (!(lot->tol_r25 >= 0.0 && lot->tol_r25 < 1.0 && lot->tol_beta >= 0.0 &&
          lot->tol_beta < 1.0))
        return bg_error_set(err, BG_EINVAL, "lot '%s': tolerances must be between 0 and 100 %%",
                            lot->code);
    return BG_OK;
}

static int part_spec_copy(const bg_part_spec *p, void *ctx);

int bg_store_lot_add(bg_store *st, const bg_lot *lot, long long *id, bg_error *err)
{
    char now[BG_TIME];
    int rc, own;

    if ((rc = check_text("lot code", lot->code, BG_TEXT, 1, err)) != BG_OK ||
        (rc = check_text("part", lot->part, BG_TEXT, 1, err)) != BG_OK ||
        (rc = check_text("note", lot->note, BG_NOTE, 0, err)) != BG_OK)
        return rc;
    if ((rc = lot_values_check(lot, err)) != BG_OK)
        return rc;
    if ((rc = tx_begin(st, &own, err)) != BG_OK)
        return rc;
    long long row = 0;
    bg_part_spec spec;
    memset(&spec, 0, sizeof spec);
    rc = st->be->part_spec_each(st->conn, lot->part, 1, part_spec_copy, &spec, err);
    if (rc == BG_OK && spec.id && spec.sensor != lot->sensor)
        rc = bg_error_set(err, BG_EINVAL, "lot '%s' would be of kind %s, but part '%s' is "
                          "specified as %s (bandgap part show %s)", lot->code,
                          bg_part_sensor_name(lot->sensor), lot->part,
                          bg_part_sensor_name(spec.sensor), lot->part);
    if (rc == BG_OK)
        rc = st->be->lot_add(st->conn, lot, bg_store_time(st, now, sizeof now), &row, err);
    rc = chained(st, "lot", row, rc, err);
    if (rc == BG_OK && id)
        *id = row;
    return tx_end(st, own, rc, err);
}


int bg_store_part_lots(bg_store *st, const char *part, bg_lot_cb cb, void *ctx, bg_error *err)
{
    return did_you_mean(st, BGI_NAME_PART, part,
                        st->be->part_lots(st->conn, part, cb, ctx, err), err);
}

int bg_store_probe_add(bg_store *st, const char *serial, const char *lot_code, const char *note,
                       long long *id, bg_error *err)
{
    char now[BG_TIME];
    int rc, own;

    if ((rc = check_text("serial", serial, BG_TEXT, 1, err)) != BG_OK ||
        (rc = check_text("note", note, BG_NOTE, 0, err)) != BG_OK)
        return rc;
    if ((rc = tx_begin(st, &own, err)) != BG_OK)
        return rc;
    long long row = 0;
    rc = st->be->probe_add(st->conn, serial, lot_code, note, bg_store_time(st, now, sizeof now),
                           &row, err);
    rc = chained(st, "probe", row, rc, err);
    if (rc == BG_OK && id)
        *id = row;
    return did_you_mean(st, BGI_NAME_LOT, lot_code, tx_end(st, own, rc, err), err);
}

int bg_store_probe_get(bg_store *st, const char *serial, bg_probe *out, bg_error *err)
{
    return did_you_mean(st, BGI_NAME_PROBE, serial,
                        st->be->probe_get(st->conn, serial, out, err), err);
}

int bg_store_probe_each(bg_store *st, const char *lot_code, bg_probe_cb cb, void *ctx,
                        bg_error *err)
{
    return did_you_mean(st, BGI_NAME_LOT, lot_code,
                        st->be->probe_each(st->conn, lot_code, cb, ctx, err), err);
}

int bg_store_ref_add(bg_store *st, const bg_ref *ref, long long *id, bg_error *err)
{
    char now[BG_TIME];
    int rc, own;

    if ((rc = check_text("reference identifier", ref->ident, BG_TEXT, 1, err)) != BG_OK ||
        (rc = check_text("certificate", ref->certificate, BG_TEXT, 1, err)) != BG_OK ||
        (rc = check_text("note", ref->note, BG_NOTE, 0, err)) != BG_OK)
        return rc;
    if (ref->due_date[0] && !bg_csv_valid_time(ref->due_date))
        return bg_error_set(err, BG_EINVAL, "due date '%s': not an ISO 8601 date",
                            ref->due_date);
    if ((rc = bg_ref_check(ref, err)) != BG_OK)
        return rc;
    if ((rc = tx_begin(st, &own, err)) != BG_OK)
        return rc;
    long long row = 0;
    rc = st->be->ref_add(st->conn, ref, bg_store_time(st, now, sizeof now), &row, err);
    rc = chained(st, "reference", row, rc, err);
    if (rc == BG_OK && id)
        *id = row;
    return tx_end(st, own, rc, err);
}

/* ---- versions of a reference thermometer ---- */

/* The seconds of 'iso' (NULL or "": the handle's now). */
static int time_or_now(bg_store *st, const char *iso, double *t, bg_error *err)
{
    char now[BG_TIME];
    if (!iso || !iso[0])
        iso = bg_store_time(st, now, sizeof now);
    return bg_time_parse(iso, t, err);
}

/* The first version of a reference: its row. */
static void ref_first_version(const bg_ref *row, bg_ref_version *out)
{
    memset(out, 0, sizeof *out);
    out->ref = *row;
    snprintf(out->v.valid_from, sizeof out->v.valid_from, "%s", row->created_at);
    snprintf(out->v.created_at, sizeof out->v.created_at, "%s", row->created_at);
}

/* A version of the reference row 'row' made whole: the row's identity with the version's
** certificate, due date and correction. */
static void ref_whole(const bg_ref *row, const bg_ref_version *v, bg_ref_version *out)
{
    *out = *v;
    out->ref.id = row->id;
    memcpy(out->ref.ident, row->ident, sizeof out->ref.ident);
    memcpy(out->ref.note, row->note, sizeof out->ref.note);
    memcpy(out->ref.created_at, row->created_at, sizeof out->ref.created_at);
}

/* What a walk over a reference's versions looks for: the one in force at 'at' (want < 0), the
** one with id 'want' (>= 0), or each one for 'cb'. */
struct ref_walk {
    const bg_ref *row;
    double at;
    long long want;
    bg_ref_version_cb cb;
    void *ctx;
    bg_ref_version found;
    int have, stopped;
    double newest;            /* the newest version's validity (seconds) */
};

static int ref_walk_cb(const bg_ref_version *v, void *ctx)
{
    struct ref_walk *w = ctx;
    double t = 0.0;
    bg_ref_version whole;
    ref_whole(w->row, v, &whole);
    if (w->cb)
        return w->stopped = w->cb(&whole, w->ctx);
    if (bg_time_parse(v->v.valid_from, &t, NULL) == BG_OK && t > w->newest)
        w->newest = t;
    if (w->want >= 0 ? v->v.id == w->want : t <= w->at)
        w->found = whole, w->have = 1;
    return 0;
}

/* Reference 'ident' (its row into '*row') and the version 'want' of it, or (want < 0) the
** one in force at 'when' (NULL or "": now), into 'out'.  No "did you mean" here. */
static int ref_version_find(bg_store *st, const char *ident, const char *when, long long want,
                            bg_ref *row, struct ref_walk *w, bg_error *err)
{
    int rc;
    memset(w, 0, sizeof *w);
    if ((rc = st->be->ref_get(st->conn, ident, row, err)) != BG_OK)
        return rc;
    w->row = row, w->want = want;
    ref_first_version(row, &w->found);
    w->have = want <= 0;
    if (bg_time_parse(row->created_at, &w->newest, NULL) != BG_OK)
        w->newest = -INFINITY; /* (a row written outside bandgap: bg_store_ref_set says so) */
    if ((want < 0 && (rc = time_or_now(st, when, &w->at, err)) != BG_OK) ||
        (want != 0 && (rc = st->be->ref_version_each(st->conn, row->id, ref_walk_cb, w, err))
         != BG_OK))
        return rc;
    if (!w->have)
        return bg_error_set(err, BG_EINVAL, "reference '%s' has no version %lld", ident, want);
    return BG_OK;
}

int bg_store_ref_at(bg_store *st, const char *ident, const char *when, bg_ref_version *out,
                    bg_error *err)
{
    struct ref_walk w;
    bg_ref row;
    int rc = ref_version_find(st, ident, when, -1, &row, &w, err);
    if (rc == BG_OK)
        *out = w.found;
    return did_you_mean(st, BGI_NAME_REF, ident, rc, err);
}

int bg_store_ref_version(bg_store *st, const char *ident, long long version,
                         bg_ref_version *out, bg_error *err)
{
    struct ref_walk w;
    bg_ref row;
    int rc = ref_version_find(st, ident, NULL, version < 0 ? 0 : version, &row, &w, err);
    if (rc == BG_OK)
        *out = w.found;
    return did_you_mean(st, BGI_NAME_REF, ident, rc, err);
}

int bg_store_ref_versions(bg_store *st, const char *ident, bg_ref_version_cb cb, void *ctx,
                          bg_error *err)
{
    struct ref_walk w;
    bg_ref row;
    bg_ref_version first;
    int rc = st->be->ref_get(st->conn, ident, &row, err);
    if (rc != BG_OK)
        return did_you_mean(st, BGI_NAME_REF, ident, rc, err);
    ref_first_version(&row, &first);
    if (cb(&first, ctx))
        return BG_OK;
    memset(&w, 0, sizeof w);
    w.row = &row, w.cb = cb, w.ctx = ctx;
    return st->be->ref_version_each(st->conn, row.id, ref_walk_cb, &w, err);
}

/* A version's validity: a valid time, not before the record's creation nor before the
** version before it ('newest', seconds); 'what' names the record for the message. */
static int check_valid_from(const char *valid_from, const char *created_at, double newest,
                            const char *what, bg_error *err)
{
    double t, born;
    int rc;
    if (!bg_csv_valid_time(valid_from))
        return bg_error_set(err, BG_EINVAL, "valid from '%s': not an ISO 8601 date-time",
                            valid_from);
    if ((rc = bg_time_parse(valid_from, &t, err)) != BG_OK ||
        (rc = bg_time_parse(created_at, &born, err)) != BG_OK)
        return rc;
    if (t < born)
        return bg_error_set(err, BG_EINVAL, "%s: a version valid from %s would begin before "
                            "the record was created (%s): refused", what, valid_from,
                            created_at);
    if (t < newest)
        return bg_error_set(err, BG_EINVAL, "%s: a version valid from %s would begin before "
                            "the newest version's validity: refused (versions follow one "
                            "another in time)", what, valid_from);
    return BG_OK;
}

/* The reason and author of a new version. */
static int check_why_by(const bg_version_head *v, bg_error *err)
{
    int rc;
    if ((rc = check_text("reason", v->why, BG_NOTE, 1, err)) != BG_OK ||
        (rc = check_text("name", v->by, BG_TEXT, 1, err)) != BG_OK)
        return rc;
    if (v->valid_from[0] && !bg_csv_valid_time(v->valid_from))
        return bg_error_set(err, BG_EINVAL, "valid from '%s': not an ISO 8601 date-time",
                            v->valid_from);
    return BG_OK;
}

int bg_store_ref_set(bg_store *st, const bg_ref_version *rv, long long *id, bg_error *err)
{
    char now[BG_TIME], what[BG_TEXT + 16];
    const bg_ref *ref = &rv->ref;
    bg_ref_version add = *rv;
    struct ref_walk w;
    bg_ref row;
    long long row_id = 0;
    int rc, own;

    if ((rc = check_why_by(&rv->v, err)) != BG_OK ||
        (rc = check_text("certificate", ref->certificate, BG_TEXT, 1, err)) != BG_OK)
        return rc;
    if (ref->due_date[0] && !bg_csv_valid_time(ref->due_date))
        return bg_error_set(err, BG_EINVAL, "due date '%s': not an ISO 8601 date",
                            ref->due_date);
    if ((rc = bg_ref_check(ref, err)) != BG_OK)
        return rc;
    if (!add.v.valid_from[0])
        snprintf(add.v.valid_from, sizeof add.v.valid_from, "%s",
                 bg_store_time(st, now, sizeof now));
    if ((rc = tx_begin(st, &own, err)) != BG_OK)
        return rc;
    snprintf(what, sizeof what, "reference '%s'", ref->ident);
    if ((rc = ref_version_find(st, ref->ident, NULL, -1, &row, &w, err)) == BG_OK &&
        (rc = check_valid_from(add.v.valid_from, row.created_at, w.newest, what, err)) == BG_OK)
        rc = st->be->ref_version_add(st->conn, row.id, &add, bg_store_time(st, now, sizeof now),
                                     &row_id, err);
    rc = chained(st, "reference_version", row_id, rc, err);
    if (rc == BG_OK && id)
        *id = row_id;
    return did_you_mean(st, BGI_NAME_REF, ref->ident, tx_end(st, own, rc, err), err);
}

/* The reference as in force now, over its row. */
static int ref_now(bg_store *st, bg_ref *r, bg_error *err)
{
    struct ref_walk w;
    bg_ref row;
    int rc = ref_version_find(st, r->ident, NULL, -1, &row, &w, err);
    if (rc == BG_OK)
        *r = w.found.ref;
    return rc;
}

int bg_store_ref_get(bg_store *st, const char *ident, bg_ref *out, bg_error *err)
{
    int rc = st->be->ref_get(st->conn, ident, out, err);
    if (rc == BG_OK)
        rc = ref_now(st, out, err);
    return did_you_mean(st, BGI_NAME_REF, ident, rc, err);
}

/* bg_store_ref_each: each reference as in force now.  The rows are collected first (a
** reference's versions are read with another statement). */
struct ref_rows {
    bg_ref *v;
    size_t n, cap;
    int nomem;
};

/* 'v' (n elements of 'size' bytes, room for '*cap') with room for one more: the same or a
** grown array (capacity doubling), NULL when out of memory ('v' is then left as it was). */
static void *room(void *v, size_t *cap, size_t n, size_t size)
{
    if (n < *cap)
        return v;
    size_t c = *cap ? 2 * *cap : 8;
    void *w = realloc(v, c * size);
    if (w)
        *cap = c;
    return w;
}

static int ref_rows_cb(const bg_ref *r, void *ctx)
{
    struct ref_rows *rows = ctx;
    bg_ref *v = room(rows->v, &rows->cap, rows->n, sizeof *v);
    if (!v)
        return rows->nomem = 1;
    rows->v = v;
    rows->v[rows->n++] = *r;
    return 0;
}

int bg_store_ref_each(bg_store *st, bg_ref_cb cb, void *ctx, bg_error *err)
{
    struct ref_rows rows = { NULL, 0, 0, 0 };
    int rc = st->be->ref_each(st->conn, ref_rows_cb, &rows, err);
    if (rc == BG_OK && rows.nomem)
        rc = bg_error_set(err, BG_ENOMEM, "out of memory");
    for (size_t i = 0; i < rows.n && rc == BG_OK; i++)
        if ((rc = ref_now(st, &rows.v[i], err)) == BG_OK && cb(&rows.v[i], ctx))
            break;
    free(rows.v);
    return rc;
}

/* ---- versions of a lot ---- */

/* The lot row 'row' with version 'v' (its tolerances and note). */
static void lot_whole(const bg_lot *row, const bg_lot_version *v, bg_lot_version *out)
{
    out->v = v->v;
    out->lot = *row;
    out->lot.tol_r25 = v->lot.tol_r25, out->lot.tol_beta = v->lot.tol_beta;
    memcpy(out->lot.note, v->lot.note, sizeof out->lot.note);
}

struct lot_walk {
    const bg_lot *row;
    double at;
    bg_lot_version_cb cb;
    void *ctx;
    bg_lot_version found;
    double newest;
};

static int lot_walk_cb(const bg_lot_version *v, void *ctx)
{
    struct lot_walk *w = ctx;
    double t = 0.0;
    bg_lot_version whole;
    lot_whole(w->row, v, &whole);
    if (w->cb)
        return w->cb(&whole, w->ctx);
    if (bg_time_parse(v->v.valid_from, &t, NULL) == BG_OK && t > w->newest)
        w->newest = t;
    if (t <= w->at)
        w->found = whole;
    return 0;
}

/* The version of the lot row 'row' in force at 'when' (NULL or "": now). */
static int lot_version_find(bg_store *st, const bg_lot *row, const char *when,
                            struct lot_walk *w, bg_error *err)
{
    int rc;
    memset(w, 0, sizeof *w);
    w->row = row;
    w->found.lot = *row;
    snprintf(w->found.v.valid_from, sizeof w->found.v.valid_from, "%s", row->created_at);
    snprintf(w->found.v.created_at, sizeof w->found.v.created_at, "%s", row->created_at);
    if (bg_time_parse(row->created_at, &w->newest, NULL) != BG_OK)
        w->newest = -INFINITY; /* (a row written outside bandgap: bg_store_lot_set says so) */
    if ((rc = time_or_now(st, when, &w->at, err)) != BG_OK)
        return rc;
    return st->be->lot_version_each(st->conn, row->id, lot_walk_cb, w, err);
}

int bg_store_lot_at(bg_store *st, const char *code, const char *when, bg_lot_version *out,
                    bg_error *err)
{
    struct lot_walk w;
    bg_lot row;
    int rc = st->be->lot_get(st->conn, code, &row, err);
    if (rc == BG_OK && (rc = lot_version_find(st, &row, when, &w, err)) == BG_OK)
        *out = w.found;
    return did_you_mean(st, BGI_NAME_LOT, code, rc, err);
}

int bg_store_lot_versions(bg_store *st, const char *code, bg_lot_version_cb cb, void *ctx,
                          bg_error *err)
{
    struct lot_walk w;
    bg_lot row;
    bg_lot_version first;
    int rc = st->be->lot_get(st->conn, code, &row, err);
    if (rc != BG_OK)
        return did_you_mean(st, BGI_NAME_LOT, code, rc, err);
    memset(&first, 0, sizeof first);
    first.lot = row;
    snprintf(first.v.valid_from, sizeof first.v.valid_from, "%s", row.created_at);
    snprintf(first.v.created_at, sizeof first.v.created_at, "%s", row.created_at);
    if (cb(&first, ctx))
        return BG_OK;
    memset(&w, 0, sizeof w);
    w.row = &row, w.cb = cb, w.ctx = ctx;
    return st->be->lot_version_each(st->conn, row.id, lot_walk_cb, &w, err);
}

/* A version of a lot of another kind than NTC ('row'): it holds no tolerances (NaN), so it
** can change only the note. */
static int lot_set_other(bg_lot_version *add, const bg_lot *row, const char *what,
                         bg_error *err)
{
    if (add->lot.tol_r25 >= 0.0 || add->lot.tol_beta >= 0.0)
        return bg_error_set(err, BG_EINVAL, "%s is a %s lot: it has no R25 or B tolerances "
                            "(its part's specification holds its tolerances: bandgap part "
                            "set %s)", what, bg_part_sensor_name(row->sensor), row->part);
    add->lot.tol_r25 = add->lot.tol_beta = NAN;
    return BG_OK;
}

int bg_store_lot_set(bg_store *st, const bg_lot_version *lv, long long *id, bg_error *err)
{
    char now[BG_TIME], what[BG_TEXT + 16];
    bg_lot_version add = *lv;
    struct lot_walk w;
    bg_lot row;
    long long row_id = 0;
    int rc, own;

    if ((rc = check_why_by(&lv->v, err)) != BG_OK ||
        (rc = check_text("note", lv->lot.note, BG_NOTE, 0, err)) != BG_OK)
        return rc;
    if (!(lv->lot.tol_r25 < 1.0 && lv->lot.tol_beta < 1.0))
        return bg_error_set(err, BG_EINVAL, "lot '%s': tolerances must be between 0 and 100 %%",
                            lv->lot.code);
    if (!add.v.valid_from[0])
        snprintf(add.v.valid_from, sizeof add.v.valid_from, "%s",
                 bg_store_time(st, now, sizeof now));
    if ((rc = tx_begin(st, &own, err)) != BG_OK)
        return rc;
    snprintf(what, sizeof what, "lot '%s'", lv->lot.code);
    if ((rc = st->be->lot_get(st->conn, lv->lot.code, &row, err)) == BG_OK &&
        (rc = lot_version_find(st, &row, add.v.valid_from, &w, err)) == BG_OK &&
        (rc = check_valid_from(add.v.valid_from, row.created_at, w.newest, what, err)) == BG_OK) {
        const bg_lot *was = &w.found.lot;
        if (row.sensor != BG_PART_NTC) /* schema 13: its tolerances are its part's */
            rc = lot_set_other(&add, &row, what, err);
        else if (add.lot.tol_r25 < 0.0)
            add.lot.tol_r25 = was->tol_r25;
        if (add.lot.tol_beta < 0.0)
            add.lot.tol_beta = was->tol_beta;
        if (!add.lot.note[0])
            memcpy(add.lot.note, was->note, sizeof add.lot.note);
        if (rc != BG_OK)
            ;
        else if ((add.lot.tol_r25 == was->tol_r25 || isnan(was->tol_r25)) &&
                 (add.lot.tol_beta == was->tol_beta || isnan(was->tol_beta)) &&
                 strcmp(add.lot.note, was->note) == 0)
            rc = bg_error_set(err, BG_EINVAL, "%s: the version changes nothing (give %s)",
                              what, row.sensor == BG_PART_NTC ? "--tol-r25, --tol-beta or "
                              "--note" : "--note");
        else
            rc = st->be->lot_version_add(st->conn, row.id, &add,
                                         bg_store_time(st, now, sizeof now), &row_id, err);
    }
    rc = chained(st, "lot_version", row_id, rc, err);
    if (rc == BG_OK && id)
        *id = row_id;
    return did_you_mean(st, BGI_NAME_LOT, lv->lot.code, tx_end(st, own, rc, err), err);
}

/* A lot row as in force now. */
static int lot_now(bg_store *st, bg_lot *l, bg_error *err)
{
    struct lot_walk w;
    int rc = lot_version_find(st, l, NULL, &w, err);
    if (rc == BG_OK)
        *l = w.found.lot;
    return rc;
}

int bg_store_lot_get(bg_store *st, const char *code, bg_lot *out, bg_error *err)
{
    int rc = st->be->lot_get(st->conn, code, out, err);
    if (rc == BG_OK)
        rc = lot_now(st, out, err);
    return did_you_mean(st, BGI_NAME_LOT, code, rc, err);
}

/* bg_store_lot_each: each lot as in force now (rows collected first). */
struct lot_rows {
    bg_lot *v;
    size_t n, cap;
    int nomem;
};

static int lot_rows_cb(const bg_lot *l, void *ctx)
{
    struct lot_rows *rows = ctx;
    bg_lot *v = room(rows->v, &rows->cap, rows->n, sizeof *v);
    if (!v)
        return rows->nomem = 1;
    rows->v = v;
    rows->v[rows->n++] = *l;
    return 0;
}

int bg_store_lot_each(bg_store *st, bg_lot_cb cb, void *ctx, bg_error *err)
{
    struct lot_rows rows = { NULL, 0, 0, 0 };
    int rc = st->be->lot_each(st->conn, lot_rows_cb, &rows, err);
    if (rc == BG_OK && rows.nomem)
        rc = bg_error_set(err, BG_ENOMEM, "out of memory");
    for (size_t i = 0; i < rows.n && rc == BG_OK; i++)
        if ((rc = lot_now(st, &rows.v[i], err)) == BG_OK && cb(&rows.v[i], ctx))
            break;
    free(rows.v);
    return rc;
}

/* ---- versions of a probe: its moves from lot to lot ---- */

/* A walk over a probe's versions: the one in force at 'at', the newest validity, or each for
** 'cb'. */
struct probe_walk {
    double at;
    bg_probe_version_cb cb;
    void *ctx;
    bg_probe_version found, newest;
    double newest_t;
};

static int probe_walk_cb(const bg_probe_version *v, void *ctx)
{
    struct probe_walk *w = ctx;
    double t = -INFINITY;
    if (w->cb)
        return w->cb(v, w->ctx);
    if (v->v.id == 0) { /* the row: in force before any move, whatever the time */
        w->found = w->newest = *v;
        if (bg_time_parse(v->v.valid_from, &w->newest_t, NULL) != BG_OK)
            w->newest_t = -INFINITY;
        return 0;
    }
    if (bg_time_parse(v->v.valid_from, &t, NULL) == BG_OK && t > w->newest_t)
        w->newest_t = t;
    w->newest = *v;
    if (t <= w->at)
        w->found = *v;
    return 0;
}

/* The refusal seam: a backend need not offer every function of store_int.h's table; a slot it
** leaves NULL is refused here, once for every backend, before anything is read or written:
** BG_EUNAVAIL (exit 69) naming what is not available and the backend.  A backend never
** carries stubs that refuse for it. */
static int unoffered(const bg_store *st, const char *what, bg_error *err)
{
    return bg_error_set(err, BG_EUNAVAIL, "%s: not available on the '%s' backend", what,
                        st->be->scheme);
}
#define OFFERED(st, slot, what, err) ((st)->be->slot ? BG_OK : unoffered((st), (what), (err)))

/* Probe 'serial': its row id, and the walk over its versions at 'when' (NULL or "": now). */
static int probe_version_find(bg_store *st, const char *serial, const char *when,
                              long long *pid, struct probe_walk *w, bg_error *err)
{
    int rc;
    memset(w, 0, sizeof *w);
    if ((rc = OFFERED(st, probe_version_each, "probe versions", err)) != BG_OK)
        return rc;
    if ((rc = st->be->probe_id(st->conn, serial, pid, err)) != BG_OK ||
        (rc = time_or_now(st, when, &w->at, err)) != BG_OK)
        return rc;
    return st->be->probe_version_each(st->conn, *pid, probe_walk_cb, w, err);
}

int bg_store_probe_at(bg_store *st, const char *serial, const char *when, bg_probe_version *out,
                      bg_error *err)
{
    struct probe_walk w;
    long long pid;
    int rc = probe_version_find(st, serial, when, &pid, &w, err);
    if (rc == BG_OK)
        *out = w.found;
    return did_you_mean(st, BGI_NAME_PROBE, serial, rc, err);
}

int bg_store_probe_versions(bg_store *st, const char *serial, bg_probe_version_cb cb, void *ctx,
                            bg_error *err)
{
    struct probe_walk w;
    long long pid;
    int rc = st->be->probe_id(st->conn, serial, &pid, err);
    if (rc != BG_OK)
        return did_you_mean(st, BGI_NAME_PROBE, serial, rc, err);
    if ((rc = OFFERED(st, probe_version_each, "probe versions", err)) != BG_OK)
        return rc;
    memset(&w, 0, sizeof w);
    w.cb = cb, w.ctx = ctx;
    return st->be->probe_version_each(st->conn, pid, probe_walk_cb, &w, err);
}

/* The recorded runs of a probe that start at or after 'from' (seconds). */
struct runs_after {
    double from;
    size_t n;
};

static int runs_after_cb(const char *started_at, long long run_id, const bg_fit_row *fit,
                         void *ctx)
{
    struct runs_after *ra = ctx;
    double t;
    (void)run_id, (void)fit;
    if (bg_time_parse(started_at, &t, NULL) == BG_OK && t >= ra->from)
        ra->n++;
    return 0;
}

/* A lot whose recorded verdicts a move would change must not have an issued lot report. */
static int check_no_lot_report(bg_store *st, const char *serial, const char *code, size_t n,
                               bg_error *err)
{
    char subject[BG_TEXT + 8];
    long long next, latest = 0;
    snprintf(subject, sizeof subject, "lot %s", code);
    int rc = st->be->artifact_next(st->conn, "report-lot", subject, &next, &latest, err);
    if (rc == BG_OK && latest)
        rc = bg_error_set(err, BG_EINVAL, "probe '%s': the move would change the lot that %zu "
                          "recorded run%s count%s toward, and lot '%s' has an issued lot report "
                          "(report %lld) whose verdicts would no longer match the record: "
                          "refused (record the move valid from after the probe's last run)",
                          serial, n, n == 1 ? "" : "s", n == 1 ? "s" : "", code, latest);
    return rc;
}

/* Inside the move's transaction: every check, then the version. */
static int probe_move_tx(bg_store *st, const bg_probe_version *pv, bg_probe_move_result *res,
                         bg_error *err)
{
    const char *serial = pv->probe.serial, *code = pv->probe.lot_code;
    char now[BG_TIME], what[BG_TEXT + 16];
    struct probe_walk w;
    struct runs_after ra = { 0.0, 0 };
    bg_probe_version add = *pv;
    bg_lot to, from;
    long long pid;
    int rc;

    snprintf(what, sizeof what, "probe '%s'", serial);
    if ((rc = OFFERED(st, probe_version_add, "probe move", err)) != BG_OK)
        return rc;
    if ((rc = probe_version_find(st, serial, pv->v.valid_from, &pid, &w, err)) != BG_OK ||
        (rc = check_valid_from(pv->v.valid_from, w.found.probe.created_at, w.newest_t, what,
                               err)) != BG_OK)
        return rc;
    if ((rc = st->be->lot_get(st->conn, code, &to, err)) != BG_OK ||
        (rc = st->be->lot_get(st->conn, w.found.probe.lot_code, &from, err)) != BG_OK)
        return rc;
    if (to.id == from.id)
        return bg_error_set(err, BG_EINVAL, "%s is already in lot '%s' at %s: the move changes "
                            "nothing", what, code, pv->v.valid_from);
    if (strcmp(to.part, from.part) != 0)
        return bg_error_set(err, BG_EINVAL, "%s: lot '%s' is of part '%s', not '%s' as lot '%s': "
                            "a probe moves only between lots of its part", what, code, to.part,
                            from.part, from.code);
    if ((rc = bg_time_parse(pv->v.valid_from, &ra.from, err)) != BG_OK ||
        (rc = st->be->probe_history(st->conn, pid, NULL, runs_after_cb, &ra, err)) != BG_OK)
        return rc;
    if (ra.n && ((rc = check_no_lot_report(st, serial, from.code, ra.n, err)) != BG_OK ||
                 (rc = check_no_lot_report(st, serial, to.code, ra.n, err)) != BG_OK))
        return rc;
    add.probe.lot_id = to.id;
    if ((rc = st->be->probe_version_add(st->conn, pid, &add, bg_store_time(st, now, sizeof now),
                                        &res->id, err)) != BG_OK)
        return rc;
    snprintf(res->from_lot, sizeof res->from_lot, "%s", from.code);
    snprintf(res->valid_from, sizeof res->valid_from, "%s", pv->v.valid_from);
    res->runs_moved = ra.n;
    return BG_OK;
}

int bg_store_probe_move(bg_store *st, const bg_probe_version *pv, bg_probe_move_result *res,
                        bg_error *err)
{
    char now[BG_TIME];
    bg_probe_version add = *pv;
    bg_probe_move_result r;
    double t, tnow;
    int rc, own;

    memset(&r, 0, sizeof r);
    if ((rc = check_why_by(&pv->v, err)) != BG_OK ||
        (rc = check_text("serial", pv->probe.serial, BG_TEXT, 1, err)) != BG_OK ||
        (rc = check_text("lot code", pv->probe.lot_code, BG_TEXT, 1, err)) != BG_OK)
        return rc;
    bg_store_time(st, now, sizeof now);
    if (!add.v.valid_from[0])
        snprintf(add.v.valid_from, sizeof add.v.valid_from, "%s", now);
    if ((rc = bg_time_parse(add.v.valid_from, &t, err)) != BG_OK ||
        (rc = bg_time_parse(now, &tnow, err)) != BG_OK)
        return rc;
    if (t > tnow)
        return bg_error_set(err, BG_EINVAL, "probe '%s': a move valid from %s is later than now "
                            "(%s): refused (record a move once it has happened)",
                            pv->probe.serial, add.v.valid_from, now);
    if ((rc = tx_begin(st, &own, err)) != BG_OK)
        return rc;
    rc = probe_move_tx(st, &add, &r, err);
    rc = chained(st, "probe_version", r.id, rc, err);
    rc = tx_end(st, own, rc, err);
    if (rc == BG_OK && res)
        *res = r;
    rc = did_you_mean(st, BGI_NAME_PROBE, pv->probe.serial, rc, err);
    return did_you_mean(st, BGI_NAME_LOT, pv->probe.lot_code, rc, err);
}

/* ---- runs and readings ----
** An import holds one reading at a time, whatever the file's size, and reads its readings
** twice.  The first pass parses and checks every line and finds what the run's row needs
** before its readings are written (their number, their digest, the first and the latest
** reading time); the second, inside the transaction, reads them again, corrects each
** through the reference and hands it to the backend.  A file that cannot seek (a pipe) is
** copied to a temporary file on the first pass (bg_csv_reader, BG_CSV_TWICE).  The checks
** and their order are those of a set held in memory (bg_store_import), which goes through
** the same two passes over its array. */

/* Where an import's readings come from: a set in memory or a readings file. */
struct import_src {
    const bg_readings *rs;    /* a set in memory, or NULL */
    bg_csv_reader *rd;        /* a file, or NULL */
    const bg_readings *shape; /* the columns */
    size_t i;                 /* the next of 'rs' */
};

static int src_next(struct import_src *s, const bg_reading **r, bg_error *err)
{
    if (s->rd)
        return bg_csv_reader_next(s->rd, r, err);
    *r = s->i < s->rs->n ? &s->rs->v[s->i++] : NULL;
    return BG_OK;
}

static int src_rewind(struct import_src *s, bg_error *err)
{
    s->i = 0;
    return s->rd ? bg_csv_reader_rewind(s->rd, err) : BG_OK;
}

/* A cheap hash of a reading's values and line, summed by both passes: a file that changed
** between them is refused (FNV-1a's prime mixing whole words, common practice). */
static unsigned long long reading_check(unsigned long long h, const bg_reading *r)
{
    const double v[4] = { r->t_raw, r->pt.r_ohm, r->pt.u_t_k, r->pt.u_r_ohm };
    for (int i = 0; i < 4; i++) {
        unsigned long long u;
        memcpy(&u, &v[i], sizeof u);
        h = (h ^ u) * 0x100000001b3ULL;
    }
    return (h ^ (unsigned long long)r->pt.line) * 0x100000001b3ULL;
}

/* A double of the canonical form at 'buf': the 16 hex digits of its IEEE 754 binary64 bits,
** with -0 written as +0 (they are the same reading), then 'sep'. */
static char *digest_double(char *buf, double v, char sep)
{
    static const char hexd[] = "0123456789abcdef";
    unsigned long long u;
    if (v == 0.0)
        v = 0.0;
    memcpy(&u, &v, sizeof u);
    for (int i = 15; i >= 0; i--, u >>= 4) /* by hand: a million readings, five values each */
        buf[i] = hexd[u & 0xf];
    buf[16] = sep;
    return buf + 17;
}

/* One reading's line of the canonical form (docs/commands/import.md), after a first line
** "bandgap readings v1" and the raw unit: the raw reference value, R, u(T), u(R) and the time
** as written, in file order.  Line numbers, notes, comments and the file's layout are left
** out: the same readings in another file are the same readings. */
static void digest_reading(struct bgi_sha256 *h, const bg_reading *r)
{
    char buf[4 * 17 + BG_TIME + 1], *p = buf;
    size_t tl = strlen(r->time);
    p = digest_double(p, r->t_raw, ';');
    p = digest_double(p, r->pt.r_ohm, ';');
    p = digest_double(p, r->pt.u_t_k, ';');
    p = digest_double(p, r->pt.u_r_ohm, ';');
    memcpy(p, r->time, tl);
    p[tl] = '\n';
    bgi_sha256_update(h, buf, (size_t)(p - buf) + tl + 1);
}

/* What the first pass finds. */
struct import_scan {
    size_t n;
    char sha256[65];                /* the digest of the canonical form, hex */
    unsigned long long check;       /* reading_check over all readings */
    char first_time[BG_TIME];       /* the first reading's time as written ("": none) */
    double last_t;                  /* the latest reading time, s since 1970 (-inf: none) */
    size_t last_line;               /* its line (0: none) */
    char last_when[BG_TIME];        /* and as written */
    double excite_a;                /* the first reading's excitation current, A (0: none) */
    size_t excite_line;             /* its line */
    int time_rc;                    /* the first reading time bg_time_parse refused */
    bg_error time_err;              /* and its message */
};

/* The first pass: every reading parsed and checked, counted, digested and its time taken. */
static int import_scan(struct import_src *s, const char *src, const char *unit,
                       struct import_scan *sc, bg_error *err)
{
    struct bgi_sha256 h;
    unsigned char d[32];
    const bg_reading *r;
    int rc;

    memset(sc, 0, sizeof *sc);
    sc->last_t = -INFINITY;
    bgi_sha256_init(&h);
    bgi_sha256_update(&h, "bandgap readings v1\n", 20);
    bgi_sha256_update(&h, unit, strlen(unit));
    bgi_sha256_update(&h, "\n", 1);
    if (s->shape->quantity != BG_QTY_RESISTANCE) { /* a resistance's form is as before */
        const char *col = bg_quantity_column((bg_quantity)s->shape->quantity);
        bgi_sha256_update(&h, col, strlen(col));
        bgi_sha256_update(&h, "\n", 1);
    }
    while ((rc = src_next(s, &r, err)) == BG_OK && r) {
        double t;
        if (sc->n++ == 0) {
            memcpy(sc->first_time, r->time, sizeof r->time);
            sc->excite_a = s->shape->has_excite ? r->excite_a : 0.0;
            sc->excite_line = r->pt.line;
        } else if (s->shape->has_excite &&
                   fabs(r->excite_a - sc->excite_a) > 1e-6 * sc->excite_a)
            return bg_error_set(err, BG_EINVAL, "%s:%zu: field 'excite_a': %g A, but line %zu "
                                "has %g A: a junction's model holds at one constant current; "
                                "import each current as a run of its own", src,
                                r->pt.line, r->excite_a, sc->excite_line, sc->excite_a);
        digest_reading(&h, r);
        sc->check = reading_check(sc->check, r);
        if (!r->time[0] || sc->time_rc != BG_OK)
            continue;
        if ((sc->time_rc = bg_time_parse(r->time, &t, &sc->time_err)) == BG_OK && t > sc->last_t)
            sc->last_t = t, sc->last_line = r->pt.line,
            memcpy(sc->last_when, r->time, sizeof r->time);
    }
    if (rc != BG_OK)
        return rc;
    bgi_sha256_final(&h, d);
    bgi_sha256_hex(d, sc->sha256);
    return BG_OK;
}

/* The second pass, pulled by the backend: the next reading and its corrected temperature. */
struct import_pass {
    struct import_src *s;
    const bg_ref *ref;        /* NULL: none */
    const char *src;
    size_t n;
    unsigned long long check;
    int failed;               /* 1: the error is the source's or the correction's */
};

static int correct(const struct import_pass *p, const bg_reading *r, double *t_k,
                   bg_error *err)
{
    int ohm = p->s->shape->ref_ohms;
    if (bg_ref_correct(p->ref, ohm, ohm ? r->t_raw : r->pt.t_k, t_k, err) == BG_OK)
        return BG_OK;
    bg_error_prefix(err, "%s:%zu: field '%s'", p->src, r->pt.line,
                    ohm ? "ref_ohms" : "temperature");
    return BG_EINVAL;
}

static int pass_next(void *ctx, const bg_reading **r, double *t_k, bg_error *err)
{
    struct import_pass *p = ctx;
    int rc = src_next(p->s, r, err);
    if (rc == BG_OK && *r && (rc = correct(p, *r, t_k, err)) == BG_OK)
        p->n++, p->check = reading_check(p->check, *r);
    p->failed = rc != BG_OK;
    return rc;
}

/* After the backend's failure: a reading further on that the correction refuses is the error
** (as when every reading was corrected before the first was written). */
static int correct_rest(struct import_pass *p, int rc, bg_error *err)
{
    const bg_reading *r;
    bg_error e2 = BG_ERROR_INIT;
    double t_k;
    if (p->failed)
        return rc;
    while (src_next(p->s, &r, &e2) == BG_OK && r)
        if (correct(p, r, &t_k, &e2) != BG_OK) {
            if (err)
                *err = e2;
            return BG_EINVAL;
        }
    return rc;
}

/* A repeated import: the readings' digest against the probe's earlier runs. */
static int check_repeat(bg_store *st, const bg_run *meta, struct bgi_import *imp, bg_error *err)
{
    long long earlier = 0;
    bg_run r;
    int rc = st->be->run_by_digest(st->conn, imp->probe_id, imp->sha256, &earlier, err);
    if (rc != BG_OK || !earlier)
        return rc;
    if (meta->new_run) {
        imp->repeats_run = earlier;
        return BG_OK;
    }
    if ((rc = st->be->run_get(st->conn, earlier, &r, err)) != BG_OK)
        return rc;
    return bg_error_set(err, BG_EINVAL, "%s: these readings of probe '%s' were imported before "
                        "as run %lld (started %s, from %s): nothing imported (--new-run imports "
                        "them again as a new run on purpose)", imp->src, meta->serial, earlier,
                        r.started_at, r.source);
}

/* The latest time of the run: its start, or a later reading's time ('*line' its line, 0 for
** the start; 'when' the time as written). */
static int run_last_time(const struct import_scan *sc, const char *started_at, double *t_s,
                         size_t *line, const char **when, bg_error *err)
{
    int rc = bg_time_parse(started_at, t_s, err);
    *line = 0, *when = started_at;
    if (rc != BG_OK)
        return rc;
    if (sc->time_rc != BG_OK) {
        if (err)
            *err = sc->time_err;
        return sc->time_rc;
    }
    if (sc->last_line && sc->last_t > *t_s)
        *t_s = sc->last_t, *line = sc->last_line, *when = sc->last_when;
    return BG_OK;
}

/* A reference past its calibration due date is used only with a reason, which the run keeps;
** a reason without that need is refused too, so that no run carries a false override. */
static int check_due(const bg_ref *ref, const struct import_scan *sc,
                     const struct bgi_import *imp, bg_error *err)
{
    const char *why = imp->ref_overdue, *when;
    double due, last;
    size_t line;
    int rc, overdue = 0;

    if (ref && ref->due_date[0]) {
        if ((rc = bg_time_parse(ref->due_date, &due, err)) != BG_OK ||
            (rc = run_last_time(sc, imp->started_at, &last, &line, &when, err)) != BG_OK)
            return rc;
        /* a due date without a time of day holds for the whole day (UTC) */
        overdue = strlen(ref->due_date) == 10 ? last >= due + 86400.0 : last > due;
    }
    if (overdue && !why) {
        char at[64] = "";
        if (line)
            snprintf(at, sizeof at, ":%zu", line);
        return bg_error_set(err, BG_EINVAL, "%s%s: reference '%s' was due for calibration on "
                            "%s, before %s %s: import refused (to use it anyway, give the "
                            "reason with --ref-overdue WHY; the run records it and every fit "
                            "and report of the run shows it)", imp->src, at, ref->ident,
                            ref->due_date, line ? "this reading's time" : "the run's start",
                            when);
    }
    if (!overdue && why)
        return bg_error_set(err, BG_EINVAL, "%s: %s: no override is needed and none is "
                            "recorded (--ref-overdue is for a reference past its calibration "
                            "due date)", imp->src, !ref ? "the run has no reference thermometer"
                            : ref->due_date[0] ? "the reference is not past its due date"
                            : "the reference has no due date");
    return BG_OK;
}

/* Inside the import's transaction: the probe and the reference, their agreement with the
** file, the due date and a repeat; then the second pass into the backend, which must find
** the readings of the first. */
static int import_run(bg_store *st, struct import_src *s, const struct import_scan *sc,
                      struct bgi_import *imp, long long *run_id, bg_error *err)
{
    const bg_run *meta = imp->meta;
    const bg_readings *shape = s->shape;
    struct import_pass p;
    const bg_reading *r;
    bg_ref ref;
    int have_ref = meta->ref_ident[0] != '\0', rc;

    if ((rc = st->be->probe_id(st->conn, meta->serial, &imp->probe_id, err)) != BG_OK)
        return did_you_mean(st, BGI_NAME_PROBE, meta->serial, rc, err);
    if (have_ref) {
        /* the correction and due date of the version in force at the run's start */
        struct ref_walk w;
        if ((rc = ref_version_find(st, meta->ref_ident, imp->started_at, -1, &ref, &w, err))
            != BG_OK)
            return did_you_mean(st, BGI_NAME_REF, meta->ref_ident, rc, err);
        ref = w.found.ref;
        imp->ref_version = w.found.v.id;
    }
    int read_in_ohm = have_ref && (ref.kind == BG_REF_CVD || ref.kind == BG_REF_ITS90);
    if (shape->ref_ohms && !read_in_ohm)
        return bg_error_set(err, BG_EINVAL, "%s: column 'ref_ohms' needs a reference "
                            "thermometer with Callendar-Van Dusen or ITS-90 coefficients (--ref)",
                            imp->src);
    if (!shape->ref_ohms && read_in_ohm)
        return bg_error_set(err, BG_EINVAL, "%s: reference '%s' is read as a platinum "
                            "resistance: the file needs a 'ref_ohms' column", imp->src,
                            ref.ident);
    if ((rc = check_due(have_ref ? &ref : NULL, sc, imp, err)) != BG_OK ||
        (rc = check_repeat(st, meta, imp, err)) != BG_OK ||
        (rc = src_rewind(s, err)) != BG_OK)
        return rc;
    memset(&p, 0, sizeof p);
    p.s = s, p.ref = have_ref ? &ref : NULL, p.src = imp->src;
    imp->ref_id = have_ref ? ref.id : 0;
    imp->n = sc->n, imp->next = pass_next, imp->ctx = &p;
    long long run = 0;
    if ((rc = st->be->import(st->conn, imp, &run, err)) != BG_OK)
        return correct_rest(&p, rc, err);
    if ((rc = src_next(s, &r, err)) != BG_OK)
        return rc;
    if (r || p.n != sc->n || p.check != sc->check)
        return bg_error_set(err, BG_EIO, "%s: the readings changed while they were imported "
                            "(the file was read twice): nothing imported", imp->src);
    if (run_id)
        *run_id = run;
    return chained(st, "run", run, BG_OK, err);
}

/* The measuring current or voltage: a number with its unit, at most one of the two. */
static int check_measuring(const bg_run *meta, const char *src, bg_error *err)
{
    double i_a = meta->measuring_current_a, u_v = meta->measuring_voltage_v;
    if (meta->excitation[0])
        return bg_error_set(err, BG_EINVAL, "%s: a free-text excitation is no longer stored; "
                            "give the measuring current in A or voltage in V", src);
    if (!(i_a >= 0.0 && isfinite(i_a)) || !(u_v >= 0.0 && isfinite(u_v)))
        return bg_error_set(err, BG_EINVAL, "%s: the measuring current and voltage must be "
                            "> 0 (or 0 for not given)", src);
    if (i_a > 0.0 && u_v > 0.0)
        return bg_error_set(err, BG_EINVAL, "%s: give the measuring current or the measuring "
                            "voltage, not both", src);
    return BG_OK;
}

/* The file's excitation current (excite_a, a junction's) is the run's measuring current: a
** different one given beside it, or a measuring voltage, contradicts it. */
static int check_excitation(const bg_run *meta, const struct import_scan *sc, const char *src,
                            bg_error *err)
{
    char a[32], b[32];
    if (!(sc->excite_a > 0.0))
        return BG_OK;
    if (meta->measuring_voltage_v > 0.0)
        return bg_error_set(err, BG_EINVAL, "%s:%zu: field 'excite_a': the file states the "
                            "excitation current, so a measuring voltage cannot be given too",
                            src, sc->excite_line);
    if (meta->measuring_current_a > 0.0 &&
        fabs(meta->measuring_current_a - sc->excite_a) > 1e-6 * sc->excite_a)
        return bg_error_set(err, BG_EINVAL, "%s:%zu: field 'excite_a': %s, but the measuring "
                            "current given is %s", src, sc->excite_line,
                            bg_units_format_si(sc->excite_a, "A", 4, a, sizeof a),
                            bg_units_format_si(meta->measuring_current_a, "A", 4, b, sizeof b));
    return BG_OK;
}

static const char *const quantity_names[BG_QTY_COUNT] = {
    "resistance", "voltage", "reported_temperature", "code"
};

const char *bgi_quantity_name(int quantity)
{
    return (unsigned)quantity < BG_QTY_COUNT ? quantity_names[quantity] : "?";
}

const char *bg_store_quantity_name(int quantity)
{
    return bgi_quantity_name(quantity);
}

char *bg_store_run_measuring(const bg_run *r, char *buf, size_t size)
{
    char v[32];
    if (r->measuring_current_a > 0.0)
        snprintf(buf, size, "measuring current %s",
                 bg_units_format_si(r->measuring_current_a, "A", 4, v, sizeof v));
    else if (r->measuring_voltage_v > 0.0)
        snprintf(buf, size, "measuring voltage %s",
                 bg_units_format_si(r->measuring_voltage_v, "V", 4, v, sizeof v));
    else if (r->excitation[0])
        snprintf(buf, size, "excitation %s", r->excitation);
    else
        snprintf(buf, size, "measuring current -");
    return buf;
}

/* Both passes of an import from 's'; the checks of bg_store_import in its order. */
static int import_src_run(bg_store *st, struct import_src *s, const bg_run *meta,
                          long long *run_id, size_t *n, bg_error *err)
{
    char now[BG_TIME];
    struct bgi_import imp;
    struct import_scan sc;
    int rc, own;

    memset(&imp, 0, sizeof imp);
    imp.meta = meta;
    imp.src = meta->source[0] ? meta->source : "-";
    imp.unit = s->shape->ref_ohms ? "ohm" : bg_units_symbol(s->shape->t_unit, 1);
    imp.ref_overdue = meta->ref_overdue[0] ? meta->ref_overdue : NULL;
    if ((rc = import_scan(s, imp.src, imp.unit, &sc, err)) != BG_OK)
        return rc;
    if (sc.n == 0)
        return bg_error_set(err, BG_EINVAL, "%s: no readings to import", imp.src);
    if ((rc = check_text("operator", meta->operator_name, BG_TEXT, 0, err)) != BG_OK ||
        (rc = check_text("medium", meta->medium, BG_TEXT, 0, err)) != BG_OK ||
        (rc = check_text("note", meta->note, BG_NOTE, 0, err)) != BG_OK ||
        (rc = check_text("reason", meta->ref_overdue, BG_NOTE, 0, err)) != BG_OK)
        return rc;
    if ((rc = check_measuring(meta, imp.src, err)) != BG_OK ||
        (rc = check_excitation(meta, &sc, imp.src, err)) != BG_OK)
        return rc;
    imp.quantity = s->shape->quantity;
    imp.excite_a = sc.excite_a;
    if (meta->started_at[0] && !bg_csv_valid_time(meta->started_at))
        return bg_error_set(err, BG_EINVAL, "start time '%s': not an ISO 8601 date-time",
                            meta->started_at);
    imp.now = bg_store_time(st, now, sizeof now);
    imp.started_at = meta->started_at[0] ? meta->started_at
                   : sc.first_time[0] ? sc.first_time : now;
    memcpy(imp.sha256, sc.sha256, sizeof imp.sha256);
    if ((rc = tx_begin(st, &own, err)) != BG_OK)
        return rc;
    rc = import_run(st, s, &sc, &imp, run_id, err);
    if ((rc = tx_end(st, own, rc, err)) == BG_OK && n)
        *n = sc.n;
    return rc;
}

int bg_store_import(bg_store *st, const bg_readings *rs, const bg_run *meta, long long *run_id,
                    bg_error *err)
{
    struct import_src s = { rs, NULL, rs, 0 };
    return import_src_run(st, &s, meta, run_id, NULL, err);
}

int bg_store_import_reader(bg_store *st, bg_csv_reader *rd, const bg_run *meta,
                           long long *run_id, size_t *n, bg_error *err)
{
    struct import_src s = { NULL, rd, bg_csv_reader_shape(rd), 0 };
    return import_src_run(st, &s, meta, run_id, n, err);
}

int bg_store_import_file(bg_store *st, const char *path, const bg_run *meta, long long *run_id,
                         size_t *n, bg_error *err)
{
    bg_csv_reader *rd = NULL;
    int rc = bg_csv_reader_open(path, BG_CSV_TWICE, &rd, err);
    if (rc == BG_OK)
        rc = bg_store_import_reader(st, rd, meta, run_id, n, err);
    bg_csv_reader_free(rd);
    return rc;
}

int bg_store_run_get(bg_store *st, long long run_id, bg_run *out, bg_error *err)
{
    return st->be->run_get(st->conn, run_id, out, err);
}

int bg_store_run_latest(bg_store *st, long long probe_id, long long *run_id, bg_error *err)
{
    return st->be->run_latest(st->conn, probe_id, run_id, err);
}

int bg_store_run_each(bg_store *st, const char *serial, const char *lot_code, bg_run_cb cb,
                      void *ctx, bg_error *err)
{
    int rc = st->be->run_each(st->conn, serial, lot_code, cb, ctx, err);
    return did_you_mean(st, BGI_NAME_LOT, lot_code,
                        did_you_mean(st, BGI_NAME_PROBE, serial, rc, err), err);
}

int bg_store_reading_each(bg_store *st, long long run_id, bg_reading_cb cb, void *ctx,
                          bg_error *err)
{
    return st->be->reading_each(st->conn, run_id, cb, ctx, err);
}

int bg_store_run_points(bg_store *st, long long run_id, bg_store_points *out, bg_error *err)
{
    return st->be->run_points(st->conn, run_id, out, err);
}

void bg_store_points_release(bg_store_points *p)
{
    if (!p)
        return;
    free(p->pts);
    free(p->ids);
    memset(p, 0, sizeof *p);
}

int bg_store_lot_points_each(bg_store *st, const char *lot_code, bg_lot_points_cb cb, void *ctx,
                             bg_error *err)
{
    bg_lot lot;
    int rc = st->be->lot_get(st->conn, lot_code, &lot, err);
    if (rc != BG_OK)
        return did_you_mean(st, BGI_NAME_LOT, lot_code, rc, err);
    return st->be->lot_points_each(st->conn, &lot, cb, ctx, err);
}

int bg_store_exclude(bg_store *st, long long reading_id, const char *why, const char *by,
                     bg_error *err)
{
    char now[BG_TIME];
    int rc, own;

    if ((rc = check_text("reason", why, BG_NOTE, 1, err)) != BG_OK ||
        (rc = check_text("name", by, BG_TEXT, 1, err)) != BG_OK)
        return rc;
    if ((rc = tx_begin(st, &own, err)) != BG_OK)
        return rc;
    rc = st->be->exclude(st->conn, reading_id, why, by, bg_store_time(st, now, sizeof now), err);
    rc = chained(st, "exclusion", reading_id, rc, err);
    return tx_end(st, own, rc, err);
}

/* ---- fits ---- */

/* The covariance as little-endian IEEE doubles: exact, and cheap to write for a whole lot. */
static void put_le_double(unsigned char *p, double v)
{
    unsigned long long u;
    memcpy(&u, &v, sizeof u);
    for (int i = 0; i < 8; i++)
        p[i] = (unsigned char)(u >> (8 * i));
}

/* The reading ids as a JSON array (ids are positive). */
static char *ids_json(const long long *ids, size_t n)
{
    size_t cap = n * 21 + 3, k = 0;
    char *s = malloc(cap), digits[24];
    if (!s)
        return NULL;
    s[k++] = '[';
    for (size_t i = 0; i < n; i++) {
        unsigned long long v = (unsigned long long)ids[i];
        size_t d = 0;
        if (i)
            s[k++] = ',';
        do
            digits[d++] = (char)('0' + v % 10);
        while ((v /= 10) != 0);
        while (d)
            s[k++] = digits[--d];
    }
    s[k++] = ']';
    s[k] = '\0';
    return s;
}

/* The values of a fit row, as every backend writes them. */
static int fitrow_of(long long run_id, const bg_fit *fit, const long long *reading_ids,
                     struct bgi_fitrow *r, bg_error *err)
{
    r->id = 0;
    r->run_id = run_id;
    bg_model_name(&fit->model, r->model, sizeof r->model);
    r->t0_k = (bg_model_flags(&fit->model) & BG_MODEL_HAS_T0) ? fit->model.t0_k : NAN;
    r->npar = fit->npar;
    for (size_t i = 0; i < BG_MODEL_MAXPAR; i++)
        r->coef[i] = i < fit->npar ? fit->model.coef[i] : 0.0;
    r->covlen = 0;
    if (fit->dof > 0) {
        for (size_t i = 0; i < fit->npar * fit->npar; i++)
            put_le_double(r->cov + 8 * i, fit->cov[i]);
        r->covlen = 8 * fit->npar * fit->npar;
    }
    r->n = fit->n, r->dof = fit->dof, r->weighted = fit->weighted;
    r->chi2 = fit->chi2, r->cov_scale = fit->cov_scale;
    r->rms_mk = fit->rms_mk, r->max_abs_mk = fit->max_abs_mk;
    r->t_min_k = fit->t_min_k, r->t_max_k = fit->t_max_k;
    if (!(r->ids = ids_json(reading_ids, fit->n)))
        return bg_error_set(err, BG_ENOMEM, "out of memory storing a fit");
    return BG_OK;
}

int bg_store_fit_queue(bg_store *st, long long run_id, const bg_fit *fit,
                       const long long *reading_ids, long long *fit_id, bg_error *err)
{
    int rc;
    if (!st->be->in_tx(st->conn))
        return bg_error_set(err, BG_EINTERNAL, "fits are queued inside bg_store_begin only");
    /* under the write lock of the transaction nobody else inserts: ids from here on */
    if (!st->next_fit_id && (rc = st->be->fit_next_id(st->conn, &st->next_fit_id, err)) != BG_OK)
        return rc;
    if (st->nfitq == BGI_FITQ && (rc = fitq_flush(st, err)) != BG_OK)
        return rc;
    struct bgi_fitrow *r = &st->fitq[st->nfitq];
    if ((rc = fitrow_of(run_id, fit, reading_ids, r, err)) != BG_OK)
        return rc;
    r->id = st->next_fit_id++;
    st->nfitq++;
    if (fit_id)
        *fit_id = r->id;
    return BG_OK;
}

int bg_store_fit_flush(bg_store *st, bg_error *err)
{
    return fitq_flush(st, err);
}

int bg_store_fit_save(bg_store *st, long long run_id, const bg_fit *fit,
                      const long long *reading_ids, long long *fit_id, bg_error *err)
{
    char now[BG_TIME];
    struct bgi_fitrow r;
    int rc, own;

    if ((rc = tx_begin(st, &own, err)) != BG_OK)
        return rc;
    /* queued fits first: their ids come before this one's */
    if ((rc = fitq_flush(st, err)) == BG_OK &&
        (rc = fitrow_of(run_id, fit, reading_ids, &r, err)) == BG_OK) {
        r.id = st->next_fit_id ? st->next_fit_id++ : 0;
        rc = st->be->fit_insert(st->conn, &r, 1, bg_store_time(st, now, sizeof now), err);
        rc = chained(st, "fit", r.id, rc, err);
        if (rc == BG_OK && fit_id)
            *fit_id = r.id;
        free(r.ids);
    }
    return tx_end(st, own, rc, err);
}

int bg_store_fit_get(bg_store *st, long long fit_id, bg_fit_row *out, bg_error *err)
{
    return st->be->fit_get(st->conn, fit_id, out, err);
}

int bg_store_fit_each(bg_store *st, const char *serial, const char *lot_code, bg_fit_cb cb,
                      void *ctx, bg_error *err)
{
    int rc = st->be->fit_each(st->conn, serial, lot_code, cb, ctx, err);
    return did_you_mean(st, BGI_NAME_LOT, lot_code,
                        did_you_mean(st, BGI_NAME_PROBE, serial, rc, err), err);
}

int bg_store_fit_readings(bg_store *st, long long fit_id, long long *ids, size_t max, size_t *n,
                          bg_error *err)
{
    return st->be->fit_readings(st->conn, fit_id, ids, max, n, err);
}

int bg_store_run_fit(bg_store *st, long long run_id, long long *fit_id, bg_error *err)
{
    return st->be->fit_newest_of_run(st->conn, run_id, fit_id, err);
}

int bg_store_fit_find_same(bg_store *st, long long run_id, const bg_fit *fit,
                           const long long *reading_ids, long long *fit_id, bg_error *err)
{
    struct bgi_fitrow r;
    int rc = fitrow_of(run_id, fit, reading_ids, &r, err);
    if (rc != BG_OK)
        return rc;
    rc = st->be->fit_same(st->conn, &r, fit_id, err);
    free(r.ids);
    return rc;
}

/* ---- the current fit: the one rule every command that takes --probe uses ---- */

int bg_store_current_fit(bg_store *st, const char *serial, bg_fit_row *fit, bg_run *run,
                         bg_error *err)
{
    long long pid = 0, rid = 0, fid = 0;
    bg_run r;
    int rc = st->be->probe_id(st->conn, serial, &pid, err);
    if (rc != BG_OK)
        return did_you_mean(st, BGI_NAME_PROBE, serial, rc, err);
    if ((rc = st->be->run_latest(st->conn, pid, &rid, err)) != BG_OK) {
        bg_error_prefix(err, "probe '%s'", serial);
        return rc;
    }
    if ((rc = st->be->run_get(st->conn, rid, &r, err)) != BG_OK ||
        (rc = st->be->fit_newest_of_run(st->conn, rid, &fid, err)) != BG_OK)
        return rc;
    if (!fid)
        return bg_error_set(err, BG_EINVAL, "probe '%s' has no current fit: its latest run "
                            "%lld (started %s) is not fitted (fit it with 'bandgap fit --probe "
                            "%s', or name a fit with --fit ID)", serial, rid, r.started_at,
                            serial);
    if ((rc = st->be->fit_get(st->conn, fid, fit, err)) != BG_OK)
        return rc;
    if (run)
        *run = r;
    return BG_OK;
}

/* ---- calibration history ---- */

int bg_store_probe_history(bg_store *st, const char *serial, const char *since,
                           bg_history_cb cb, void *ctx, bg_error *err)
{
    long long pid = 0;
    int rc = st->be->probe_id(st->conn, serial, &pid, err);
    if (rc != BG_OK)
        return did_you_mean(st, BGI_NAME_PROBE, serial, rc, err);
    return st->be->probe_history(st->conn, pid, since, cb, ctx, err);
}

int bg_store_lot_latest_fits(bg_store *st, const char *lot_code, const char *since,
                             bg_latest_cb cb, void *ctx, bg_error *err)
{
    bg_lot lot;
    int rc = st->be->lot_get(st->conn, lot_code, &lot, err);
    if (rc != BG_OK)
        return did_you_mean(st, BGI_NAME_LOT, lot_code, rc, err);
    return st->be->lot_latest_fits(st->conn, lot.id, since, cb, ctx, err);
}

int bg_store_lot_history(bg_store *st, const char *lot_code, const char *since,
                         bg_lot_history_cb cb, void *ctx, bg_error *err)
{
    bg_lot lot;
    int rc = st->be->lot_get(st->conn, lot_code, &lot, err);
    if (rc != BG_OK)
        return did_you_mean(st, BGI_NAME_LOT, lot_code, rc, err);
    return st->be->lot_history(st->conn, lot.id, since, cb, ctx, err);
}

int bg_store_lot_histories(bg_store *st, const char *lot_code, const char *since,
                           bg_lot_histories_cb cb, void *ctx, bg_error *err)
{
    bg_lot lot;
    int rc = st->be->lot_get(st->conn, lot_code, &lot, err);
    if (rc != BG_OK)
        return did_you_mean(st, BGI_NAME_LOT, lot_code, rc, err);
    return st->be->lot_histories(st->conn, lot.id, since, cb, ctx, err);
}

/* ---- the whole record, for export ---- */

int bg_store_export_each(bg_store *st, const char *serial, const char *lot_code,
                         const bg_export_cbs *cbs, void *ctx, bg_error *err)
{
    long long id = 0;
    int rc;
    if (!serial == !lot_code)
        return bg_error_set(err, BG_EINVAL, "export needs a probe or a lot, not %s",
                            serial ? "both" : "neither");
    if (serial && (rc = st->be->probe_id(st->conn, serial, &id, err)) != BG_OK)
        return did_you_mean(st, BGI_NAME_PROBE, serial, rc, err);
    if (lot_code) {
        bg_lot lot;
        if ((rc = st->be->lot_get(st->conn, lot_code, &lot, err)) != BG_OK)
            return did_you_mean(st, BGI_NAME_LOT, lot_code, rc, err);
        id = lot.id;
    }
    return st->be->export_each(st->conn, serial, lot_code ? id : 0, cbs, ctx, err);
}

/* ---- issued artifacts ---- */

void bg_artifact_release(bg_artifact *a)
{
    if (!a)
        return;
    free(a->spec);
    free(a->content);
    memset(a, 0, sizeof *a);
}

/* The row just stored, into 'a' (req->issued): what bg_store_artifact_get would read back,
** the content taken over (made NUL-terminated; a large block grows in place). */
static int issued_row(const bg_artifact_req *req, long long id, const char *now, char *content,
                      size_t len, bg_artifact *a, bg_error *err)
{
    char *c = realloc(content, len + 1);
    memset(a, 0, sizeof *a);
    if (!c) {
        free(content);
        return bg_error_set(err, BG_ENOMEM, "out of memory for report %lld", id);
    }
    c[len] = '\0';
    a->id = id, a->fit_id = req->fit_id, a->replaces_id = req->replaces_id;
    snprintf(a->kind, sizeof a->kind, "%s", req->kind);
    snprintf(a->version, sizeof a->version, "%s", req->version);
    snprintf(a->created_at, sizeof a->created_at, "%s", now);
    a->content = c, a->len = len;
    if (!(a->spec = strdup(req->spec ? req->spec : ""))) {
        bg_artifact_release(a);
        return bg_error_set(err, BG_ENOMEM, "out of memory for report %lld", id);
    }
    return BG_OK;
}

/* Inside the issue's transaction: the identifier and the chain, the content, the row. */
static int issue(bg_store *st, const bg_artifact_req *req, long long *id, bg_error *err)
{
    struct bgi_artifact_row row;
    char now[BG_TIME];
    char *content = NULL;
    size_t len = 0;
    long long latest = 0;
    int rc = st->be->artifact_next(st->conn, req->kind, req->subject, id, &latest, err);

    if (rc != BG_OK)
        return rc;
    if (latest && req->replaces_id != latest)
        return bg_error_set(err, BG_EINVAL, "%s already has report %lld: reissue it (naming "
                            "it as replaced) or fetch the stored copy", req->subject, latest);
    if (!latest && req->replaces_id)
        return bg_error_set(err, BG_EINVAL, "%s has no issued report to replace",
                            req->subject);
    bg_chain_head head;
    bg_store_time(st, now, sizeof now);
    if ((rc = st->be->chain_head(st->conn, &head.records, head.hash, err)) != BG_OK ||
        (rc = req->gen(*id, now, &head, req->ctx, &content, &len, err)) != BG_OK)
        return rc;
    row.id = *id, row.req = req, row.content = content, row.len = len, row.now = now;
    rc = chained(st, "artifact", *id, st->be->artifact_insert(st->conn, &row, err), err);
    if (rc == BG_OK && req->issued)
        return issued_row(req, *id, now, content, len, req->issued, err);
    free(content);
    return rc;
}

int bg_store_artifact_issue(bg_store *st, const bg_artifact_req *req, long long *id_out,
                            bg_error *err)
{
    long long id = 0;
    int rc, own;

    if (req->issued)
        memset(req->issued, 0, sizeof *req->issued);
    if ((rc = tx_begin(st, &own, err)) != BG_OK)
        return rc;
    rc = tx_end(st, own, issue(st, req, &id, err), err);
    if (rc == BG_OK && id_out)
        *id_out = id;
    if (rc != BG_OK && req->issued) /* rolled back: nothing was issued */
        bg_artifact_release(req->issued);
    return rc;
}

int bg_store_artifact_get(bg_store *st, long long id, bg_artifact *out, bg_error *err)
{
    /* a stored report is served only as it was issued */
    int rc = st->be->artifact_get(st->conn, id, out, err);
    if (rc == BG_OK && (rc = st->be->chain_check(st->conn, "artifact", id, err)) != BG_OK)
        bg_artifact_release(out);
    return rc;
}

int bg_store_artifact_each(bg_store *st, bg_artifact_cb cb, void *ctx, bg_error *err)
{
    return st->be->artifact_each(st->conn, cb, ctx, err);
}

/* ---- a part's specification ---- */

/* The nominal curve is usable: finite coefficients that pass the model's checks, and a
** resistance that falls with temperature over the tolerance range (41 points). */
static int check_part_model(const bg_part_spec *p, bg_error *err)
{
    bg_model m = p->model;
    double lo = p->tol_k > 0.0 ? p->tol_lo_k : BG_T0_DEFAULT_K - 25.0;
    int dir = bg_model_direction(&p->model); /* schema 12: a part of any sensor kind */
    double hi = p->tol_k > 0.0 ? p->tol_hi_k : BG_T0_DEFAULT_K + 25.0, prev = dir < 0 ? INFINITY : -INFINITY;
    int rc = bg_model_set_coef(&m, p->model.coef, bg_model_npar(&p->model), err);
    for (int i = 0; rc == BG_OK && i <= 40; i++) {
        double r;
        if ((rc = bg_model_x_from_t(&m, lo + (hi - lo) * i / 40.0, &r, err)) == BG_OK &&
            !(dir * (r - prev) > 0.0))
            rc = bg_error_set(err, BG_EINVAL, "its %s does not %s with temperature between "
                              "%.2f and %.2f degC", bg_model_quantity(&m) == BG_QTY_RESISTANCE ?
                              "resistance" : "reading", dir < 0 ? "fall" : "rise",
                              lo - BG_ZERO_C_K, hi - BG_ZERO_C_K);
        prev = r;
    }
    if (rc != BG_OK)
        bg_error_prefix(err, "part '%s': nominal curve", p->part);
    return rc;
}

int bg_store_part_spec_add(bg_store *st, const bg_part_spec *p, long long *id, bg_error *err)
{
    char now[BG_TIME];
    int rc, own;

    if ((rc = check_text("part", p->part, BG_TEXT, 1, err)) != BG_OK ||
        (rc = check_text("source", p->source, BG_NOTE, 0, err)) != BG_OK ||
        (rc = check_text("note", p->note, BG_NOTE, 0, err)) != BG_OK)
        return rc;
    if (!(p->tol_k >= 0.0) || !(p->limit_k >= 0.0) || !(p->rate_k >= 0.0) ||
        !isfinite(p->tol_k) || !isfinite(p->limit_k) || !isfinite(p->rate_k))
        return bg_error_set(err, BG_EINVAL, "part '%s': a tolerance or limit is negative or "
                            "not finite", p->part);
    if (p->tol_k > 0.0 && !(p->tol_lo_k > 0.0 && p->tol_hi_k > p->tol_lo_k &&
                            isfinite(p->tol_hi_k)))
        return bg_error_set(err, BG_EINVAL, "part '%s': the tolerance in kelvin needs a range "
                            "from a lower to a higher temperature", p->part);
    if (p->have_model && (rc = check_part_model(p, err)) != BG_OK)
        return rc;
    if ((rc = tx_begin(st, &own, err)) != BG_OK)
        return rc;
    long long row = 0;
    rc = st->be->part_spec_add(st->conn, p, bg_store_time(st, now, sizeof now), &row, err);
    rc = chained(st, "part_spec", row, rc, err);
    if (rc == BG_OK && id)
        *id = row;
    return tx_end(st, own, rc, err);
}

static int part_spec_copy(const bg_part_spec *p, void *ctx)
{
    *(bg_part_spec *)ctx = *p;
    return 1;
}

int bg_store_part_spec_get(bg_store *st, const char *part, bg_part_spec *out, bg_error *err)
{
    memset(out, 0, sizeof *out);
    snprintf(out->part, sizeof out->part, "%s", part);
    return st->be->part_spec_each(st->conn, part, 1, part_spec_copy, out, err);
}

int bg_store_part_spec_each(bg_store *st, const char *part, bg_part_spec_cb cb, void *ctx,
                            bg_error *err)
{
    return st->be->part_spec_each(st->conn, part, 0, cb, ctx, err);
}

/* ---- the record's defences ---- */

int bg_store_chain_head(bg_store *st, long long *records, char head[65], bg_error *err)
{
    return st->be->chain_head(st->conn, records, head, err);
}

int bg_store_verify(bg_store *st, bg_store_check *out, bg_error *err)
{
    return st->be->verify(st->conn, out, err);
}

/* ---- calibration sequences (bench.h) ---- */

int bg_store_seq_add(bg_store *st, const bg_seq *seq, const char *idn, const char *criterion,
                     long long *id, bg_error *err)
{
    bg_seq_head h;
    bg_ref ref;
    int rc, own;
    memset(&h, 0, sizeof h);
    if ((rc = OFFERED(st, seq_add, "calibration sequences", err)) != BG_OK)
        return rc;
    if ((rc = check_text("sequence file name", seq->path, BG_NOTE, 1, err)) != BG_OK ||
        (rc = check_text("instrument identities", idn, BG_NOTE, 1, err)) != BG_OK ||
        (rc = check_text("criterion", criterion, BG_NOTE, 1, err)) != BG_OK)
        return rc;
    snprintf(h.file, sizeof h.file, "%s", seq->path);
    memcpy(h.sha256, seq->sha256, sizeof h.sha256);
    snprintf(h.idn, sizeof h.idn, "%s", idn);
    snprintf(h.criterion, sizeof h.criterion, "%s", criterion);
    bg_store_time(st, h.started_at, sizeof h.started_at);
    if ((rc = bg_store_ref_get(st, seq->ref_ident, &ref, err)) != BG_OK)
        return rc;
    if ((rc = tx_begin(st, &own, err)) != BG_OK)
        return rc;
    rc = st->be->seq_add(st->conn, &h, seq->text, ref.id, id, err);
    return tx_end(st, own, rc, err);
}

int bg_store_seq_unfinished(bg_store *st, bg_seq_head *out, int *found, bg_error *err)
{
    int rc = OFFERED(st, seq_unfinished, "calibration sequences", err);
    if (rc != BG_OK)
        return rc;
    return st->be->seq_unfinished(st->conn, out, found, err);
}

int bg_store_seq_settle(bg_store *st, long long seq_id, const bg_seq_settle *s, bg_error *err)
{
    int own, rc = OFFERED(st, seq_settle, "calibration sequences", err);
    if (rc == BG_OK)
        rc = tx_begin(st, &own, err);
    if (rc != BG_OK)
        return rc;
    rc = st->be->seq_settle(st->conn, seq_id, s, err);
    return tx_end(st, own, rc, err);
}

int bg_store_seq_reading(bg_store *st, long long seq_id, const bg_seq_reading *r, bg_error *err)
{
    int own, rc;
    if ((rc = OFFERED(st, seq_reading, "calibration sequences", err)) != BG_OK)
        return rc;
    if ((rc = check_text("meter reply", r->meter_reply, sizeof r->meter_reply, 1, err)) !=
        BG_OK ||
        (rc = check_text("reference reply", r->ref_reply, sizeof r->ref_reply, 1, err)) !=
        BG_OK)
        return rc;
    if (!isfinite(r->r_ohm) || !isfinite(r->ref_raw))
        return bg_error_set(err, BG_EINVAL, "a reading must be a finite number");
    if ((rc = tx_begin(st, &own, err)) != BG_OK)
        return rc;
    rc = st->be->seq_reading(st->conn, seq_id, r, err);
    return tx_end(st, own, rc, err);
}

int bg_store_seq_readings(bg_store *st, long long seq_id, bg_seq_reading_cb cb, void *ctx,
                          bg_error *err)
{
    int rc = OFFERED(st, seq_readings, "calibration sequences", err);
    if (rc != BG_OK)
        return rc;
    return st->be->seq_readings(st->conn, seq_id, cb, ctx, err);
}

int bg_store_seq_settles(bg_store *st, long long seq_id, bg_seq_settle_cb cb, void *ctx,
                         bg_error *err)
{
    int rc = OFFERED(st, seq_settles, "calibration sequences", err);
    if (rc != BG_OK)
        return rc;
    return st->be->seq_settles(st->conn, seq_id, cb, ctx, err);
}

int bg_store_seq_end(bg_store *st, long long seq_id, long long first_run, long long last_run,
                     bg_error *err)
{
    char now[BG_TIME];
    int own, rc = OFFERED(st, seq_end, "calibration sequences", err);
    if (rc == BG_OK)
        rc = tx_begin(st, &own, err);
    if (rc != BG_OK)
        return rc;
    rc = st->be->seq_end(st->conn, seq_id, bg_store_time(st, now, sizeof now), first_run,
                         last_run, err);
    return tx_end(st, own, rc, err);
}
