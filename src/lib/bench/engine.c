/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The sequence engine: for each setpoint in order, set the bath, wait until the reference
** settles (bg_settle_line over a moving window), then take the readings, channel by channel,
** each committed to the database as it is taken; at the end, one run per probe from its
** readings (corrected through the reference as an import is) and the sequence marked
** finished, in one transaction.  A stop, a setpoint that does not settle (when the file says
** stop) or a lost instrument sets the bath to the file's safe setpoint when it still answers. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "bandgap/bandgap.h"

struct eng {
    bg_store *st;
    const bg_seq *q;
    const bg_seq_hooks *h;
    bg_seq_result *res;
    bg_ref ref;
    bg_scpi *io[BG_NROLES];
    int owner[BG_NROLES];          /* 1: this role opened the connection (closes it) */
    long long seq_id;
    size_t *have;                  /* readings taken, per setpoint and probe */
    int *skip;                     /* per setpoint: recorded as not settled, skipped */
    bg_seq_status s;
    double read_s, settle_s;       /* time spent reading and settling so far */
    size_t nread, nsettle;
};

static double now_s(const struct eng *e)
{
    return e->h->now(e->h->ctx);
}

static void show(struct eng *e, const char *event)
{
    e->s.event = event;
    if (e->h->show)
        e->h->show(e->h->ctx, &e->s);
    e->s.event = NULL;
}

/* ---- before anything is touched ---- */

static int preflight(struct eng *e, bg_error *err)
{
    const bg_seq *q = e->q;
    bg_probe p;
    char now[BG_TIME];
    double t_now, due;
    int rc;
    for (size_t i = 0; i < q->nprobes; i++)
        if ((rc = bg_store_probe_get(e->st, q->probes[i].serial, &p, err)) != BG_OK) {
            bg_error_prefix(err, "%s:%zu", q->path, q->probes[i].line);
            return rc;
        }
    if ((rc = bg_store_ref_get(e->st, q->ref_ident, &e->ref, err)) != BG_OK) {
        bg_error_prefix(err, "%s: [reference]", q->path);
        return rc;
    }
    if ((e->ref.kind == BG_REF_CVD) != (q->ref_ohms != 0))
        return bg_error_set(err, BG_EINVAL, "%s: [reference] '%s' %s", q->path, q->ref_ident,
                            q->ref_ohms ? "has no Callendar-Van Dusen coefficients: its "
                            "readout cannot be read in ohm" : "is a platinum resistance "
                            "(Callendar-Van Dusen): its readout unit must be ohm");
    bg_store_time(e->st, now, sizeof now);
    if (e->ref.due_date[0] && bg_time_parse(e->ref.due_date, &due, NULL) == BG_OK &&
        bg_time_parse(now, &t_now, NULL) == BG_OK &&
        (strlen(e->ref.due_date) == 10 ? t_now >= due + 86400.0 : t_now > due))
        return bg_error_set(err, BG_EINVAL, "reference '%s' was due for calibration on %s: "
                            "the sequence is refused (recalibrate it, or record its new "
                            "certificate with 'bandgap ref set')", e->ref.ident,
                            e->ref.due_date);
    return BG_OK;
}

/* ---- instruments ---- */

static int same_place(const bg_instr *a, const bg_instr *b)
{
    if (a->transport != b->transport)
        return 0;
    if (a->transport == BG_TR_TCP)
        return strcmp(a->host, b->host) == 0 && a->port == b->port;
    return strcmp(a->device, b->device) == 0;
}

/* Connect every role (roles at one address share the connection) and read each *IDN?. */
static int connect_all(struct eng *e, char *idn, size_t size, bg_error *err)
{
    size_t len = 0;
    int rc;
    idn[0] = '\0';
    for (int r = 0; r < BG_NROLES; r++) {
        for (int o = 0; o < r && !e->io[r]; o++)
            if (same_place(&e->q->instr[o], &e->q->instr[r]))
                e->io[r] = e->io[o];
        if (!e->io[r]) {
            if ((rc = bg_scpi_open(&e->q->instr[r], (bg_role)r, &e->io[r], err)) != BG_OK)
                return rc;
            e->owner[r] = 1;
        }
        char reply[256];
        if ((rc = bg_scpi_cmd(e->io[r], "*IDN?", reply, sizeof reply, err)) != BG_OK)
            return rc;
        int n = snprintf(idn + len, size - len, "%s%s: %s", r ? "; " : "", bg_role_name(
                         (bg_role)r), reply);
        if (n < 0 || (size_t)n >= size - len)
            return bg_error_set(err, BG_EUNAVAIL, "the instruments' identities are too long");
        len += (size_t)n;
    }
    return BG_OK;
}

static void disconnect_all(struct eng *e)
{
    for (int r = 0; r < BG_NROLES; r++) {
        if (e->owner[r])
            bg_scpi_close(e->io[r]);
        e->io[r] = NULL;
        e->owner[r] = 0;
    }
}

/* A command template with its value put where "{}" is. */
static void fill(char *out, size_t size, const char *tmpl, const char *value)
{
    const char *m = strstr(tmpl, "{}");
    if (!m)
        snprintf(out, size, "%s", tmpl);
    else
        snprintf(out, size, "%.*s%s%s", (int)(m - tmpl), tmpl, value, m + 2);
}

static int bath_set(struct eng *e, double t_k, bg_error *err)
{
    const bg_instr *in = &e->q->instr[BG_ROLE_BATH];
    char v[64], cmd[BG_SEQ_CMD + 64];
    bg_num_shortest(v, sizeof v, bg_units_from_k(t_k, in->unit));
    fill(cmd, sizeof cmd, in->cmd[0], v);
    return bg_scpi_cmd(e->io[BG_ROLE_BATH], cmd, NULL, 0, err);
}

/* After a stop or a failure: the bath to its safe setpoint; the message says whether it
** answered. */
static int to_safe(struct eng *e, int rc, bg_error *err)
{
    char t[48], m[2 * sizeof err->msg + 256];
    bg_error e2 = BG_ERROR_INIT;
    bg_units_format_temp(e->q->safe_k, BG_UNIT_C, 2, t, sizeof t);
    e->s.phase = BG_SEQ_SAFE;
    if (e->io[BG_ROLE_BATH] && bath_set(e, e->q->safe_k, &e2) == BG_OK) {
        snprintf(m, sizeof m, "%s; the bath was set to its safe setpoint %s", err->msg, t);
        show(e, "bath set to its safe setpoint");
    } else
        snprintf(m, sizeof m, "%s; THE BATH DID NOT ANSWER: bring it to a safe state by hand "
                 "(%s)", err->msg, e2.msg[0] ? e2.msg : "not connected");
    bg_error_set(err, (bg_status)rc, "%.500s", m);
    return rc;
}

/* ---- what was done before (a resumed sequence) ---- */

static int have_cb(const bg_seq_reading *r, void *ctx)
{
    struct eng *e = ctx;
    if (r->sp < e->q->nsp && r->ch < e->q->nprobes && r->k > e->have[r->sp * e->q->nprobes +
                                                                     r->ch])
        e->have[r->sp * e->q->nprobes + r->ch] = r->k;
    return 0;
}

static int skip_cb(const bg_seq_settle *s, void *ctx)
{
    struct eng *e = ctx;
    if (s->sp < e->q->nsp)
        e->skip[s->sp] = !s->settled && !e->q->stop_on_timeout;
    return 0;
}

static size_t sp_missing(const struct eng *e, size_t sp)
{
    size_t m = 0;
    for (size_t c = 0; c < e->q->nprobes; c++)
        m += e->q->readings - e->have[sp * e->q->nprobes + c];
    return m;
}

static double to_go(const struct eng *e, size_t from_sp)
{
    size_t left = 0, settles = 0;
    for (size_t sp = from_sp; sp < e->q->nsp; sp++)
        if (!e->skip[sp] && sp_missing(e, sp))
            left += sp_missing(e, sp), settles++;
    if (e->nread == 0)
        return NAN;
    double per_settle = e->nsettle ? e->settle_s / (double)e->nsettle : e->q->window_s;
    return (double)left * e->read_s / (double)e->nread + (double)settles * per_settle;
}

/* ---- settling ---- */

static int ref_read(struct eng *e, double *t_k, double *raw, char *reply, size_t size,
                    bg_error *err)
{
    const bg_instr *in = &e->q->instr[BG_ROLE_REFERENCE];
    int rc = bg_scpi_number(e->io[BG_ROLE_REFERENCE], in->cmd[0], raw, reply, size, err);
    if (rc != BG_OK)
        return rc;
    double v = e->q->ref_ohms ? *raw : bg_units_to_k(*raw, e->q->ref_unit);
    if ((rc = bg_ref_correct(&e->ref, e->q->ref_ohms, v, t_k, err)) != BG_OK)
        bg_error_prefix(err, "reference reply '%s'", reply);
    return rc;
}

/* Wait until the reference settles at setpoint 'sp' or the time limit passes; '*out' gets
** what the database keeps. */
static int settle(struct eng *e, size_t sp, bg_seq_settle *out, bg_error *err)
{
    const bg_seq *q = e->q;
    size_t cap = (size_t)ceil(q->window_s / q->sample_s) * 4 + 16, n = 0;
    double *t = malloc(cap * sizeof *t), *v = malloc(cap * sizeof *v), t0 = now_s(e);
    int rc = t && v ? BG_OK : bg_error_set(err, BG_ENOMEM, "out of memory");
    memset(out, 0, sizeof *out);
    out->sp = sp, out->setpoint_k = q->setpoint_k[sp], out->window_s = q->window_s;
    out->slope_k_s = out->scatter_k = out->mean_k = NAN;
    e->s.phase = BG_SEQ_SETTLING, e->s.have_stats = 0;
    while (rc == BG_OK) {
        double tk, raw, tn = now_s(e);
        char reply[256];
        if ((rc = ref_read(e, &tk, &raw, reply, sizeof reply, err)) != BG_OK)
            break;
        size_t drop = 0;
        while (drop < n && t[drop] < tn - q->window_s)
            drop++;
        memmove(t, t + drop, (n - drop) * sizeof *t);
        memmove(v, v + drop, (n - drop) * sizeof *v);
        n -= drop;
        if (n == cap)
            memmove(t, t + 1, --n * sizeof *t), memmove(v, v + 1, n * sizeof *v);
        t[n] = tn, v[n++] = tk;
        e->s.ref_k = tk, e->s.phase_s = tn - t0;
        out->waited_s = tn - t0, out->samples = n;
        if (tn - t0 >= q->window_s && n >= 3 &&
            bg_settle_line(t, v, n, &out->slope_k_s, &out->scatter_k, NULL) == BG_OK) {
            double m = 0.0;
            for (size_t i = 0; i < n; i++)
                m += v[i];
            out->mean_k = m / (double)n;
            e->s.have_stats = 1, e->s.slope_k_s = out->slope_k_s;
            e->s.scatter_k = out->scatter_k;
            if (fabs(out->slope_k_s) <= q->max_drift_k_s && out->scatter_k <= q->max_scatter_k) {
                out->settled = 1;
                break;
            }
        }
        show(e, NULL);
        if (tn - t0 >= q->time_limit_s)
            break;
        if (e->h->wait(e->h->ctx, q->sample_s))
            rc = bg_error_set(err, BG_ESTOPPED, "stopped at your request while setpoint %zu "
                              "was settling", sp + 1);
    }
    free(t);
    free(v);
    bg_store_time(e->st, out->at, sizeof out->at);
    e->settle_s += out->waited_s, e->nsettle++;
    return rc;
}

/* ---- readings ---- */

static int take_one(struct eng *e, size_t sp, size_t ch, size_t k, bg_error *err)
{
    const bg_seq *q = e->q;
    bg_seq_reading r;
    char cmd[BG_SEQ_CMD + 64];
    double tk, t0 = now_s(e);
    int rc;
    memset(&r, 0, sizeof r);
    r.sp = sp, r.ch = ch, r.k = k, r.setpoint_k = q->setpoint_k[sp];
    snprintf(r.channel, sizeof r.channel, "%s", q->probes[ch].channel);
    fill(cmd, sizeof cmd, q->instr[BG_ROLE_SCANNER].cmd[0], r.channel);
    if ((rc = bg_scpi_cmd(e->io[BG_ROLE_SCANNER], cmd, NULL, 0, err)) != BG_OK ||
        (rc = bg_scpi_number(e->io[BG_ROLE_METER], q->instr[BG_ROLE_METER].cmd[0], &r.r_ohm,
                             r.meter_reply, sizeof r.meter_reply, err)) != BG_OK ||
        (rc = ref_read(e, &tk, &r.ref_raw, r.ref_reply, sizeof r.ref_reply, err)) != BG_OK)
        return rc;
    if (!(r.r_ohm > 0.0))
        return bg_error_set(err, BG_EUNAVAIL, "instrument 'meter': resistance '%s' of channel "
                            "%s is not positive", r.meter_reply, r.channel);
    bg_store_time(e->st, r.time, sizeof r.time);
    if ((rc = bg_store_seq_reading(e->st, e->seq_id, &r, err)) != BG_OK)
        return rc;
    e->have[sp * q->nprobes + ch] = k;
    e->res->taken++, e->s.taken++, e->s.ref_k = tk;
    e->read_s += now_s(e) - t0, e->nread++;
    e->s.to_go_s = to_go(e, sp);
    show(e, NULL);
    return BG_OK;
}

static int take_readings(struct eng *e, size_t sp, bg_error *err)
{
    const bg_seq *q = e->q;
    int rc = BG_OK;
    e->s.phase = BG_SEQ_READING, e->s.phase_s = 0.0;
    for (size_t k = 1; k <= q->readings && rc == BG_OK; k++)
        for (size_t ch = 0; ch < q->nprobes && rc == BG_OK; ch++) {
            if (e->have[sp * q->nprobes + ch] >= k)
                continue;
            rc = take_one(e, sp, ch, k, err);
            if (rc == BG_OK && e->h->wait(e->h->ctx, 0.0))
                rc = bg_error_set(err, BG_ESTOPPED, "stopped at your request during the "
                                  "readings of setpoint %zu", sp + 1);
        }
    return rc;
}

static int one_setpoint(struct eng *e, size_t sp, bg_error *err)
{
    bg_seq_settle s;
    char line[160], t[48];
    int rc;
    e->s.sp = sp, e->s.setpoint_k = e->q->setpoint_k[sp];
    bg_units_format_temp(e->q->setpoint_k[sp], BG_UNIT_C, 2, t, sizeof t);
    snprintf(line, sizeof line, "setpoint %zu of %zu: %s", sp + 1, e->q->nsp, t);
    show(e, line);
    if ((rc = bath_set(e, e->q->setpoint_k[sp], err)) != BG_OK ||
        (rc = settle(e, sp, &s, err)) != BG_OK ||
        (rc = bg_store_seq_settle(e->st, e->seq_id, &s, err)) != BG_OK)
        return rc;
    if (!s.settled) {
        snprintf(line, sizeof line, "setpoint %zu (%s) did not settle within its time limit",
                 sp + 1, t);
        show(e, line);
        if (e->q->stop_on_timeout)
            return bg_error_set(err, BG_ESTOPPED, "%s: the sequence stops, as the file says "
                                "(on_timeout = stop)", line);
        e->skip[sp] = 1, e->res->skipped++;
        return BG_OK;
    }
    snprintf(line, sizeof line, "setpoint %zu settled: drift %.3g mK/min, scatter %.3g mK "
             "after %.0f s", sp + 1, s.slope_k_s * 60e3, s.scatter_k * 1e3, s.waited_s);
    show(e, line);
    return take_readings(e, sp, err);
}

/* ---- the end: runs from the readings ---- */

struct collect {
    const bg_seq *q;
    size_t ch;
    bg_readings rs;
    long long seq_id;
    int nomem;
};

static int collect_cb(const bg_seq_reading *r, void *ctx)
{
    struct collect *c = ctx;
    if (r->ch != c->ch)
        return 0;
    if (c->rs.n == c->rs.cap) {
        size_t cap = c->rs.cap ? 2 * c->rs.cap : 64;
        bg_reading *v = realloc(c->rs.v, cap * sizeof *v);
        if (!v)
            return c->nomem = 1;
        c->rs.v = v, c->rs.cap = cap;
    }
    bg_reading *g = &c->rs.v[c->rs.n++];
    char note[160];
    memset(g, 0, sizeof *g);
    g->t_raw = r->ref_raw;
    g->pt.t_k = c->q->ref_ohms ? NAN : bg_units_to_k(r->ref_raw, c->q->ref_unit);
    g->pt.r_ohm = r->r_ohm;
    g->pt.line = c->rs.n;
    snprintf(g->time, sizeof g->time, "%s", r->time);
    snprintf(note, sizeof note, "sequence %lld reading %lld: setpoint %zu, channel %s, #%zu",
             c->seq_id, r->id, r->sp + 1, r->channel, r->k);
    if (!(g->note = strdup(note)))
        return c->nomem = 1;
    return 0;
}

static int make_run(struct eng *e, size_t ch, long long *run_id, bg_error *err)
{
    const bg_seq *q = e->q;
    struct collect c;
    bg_run meta;
    int rc;
    memset(&c, 0, sizeof c);
    c.q = q, c.ch = ch, c.seq_id = e->seq_id;
    bg_readings_init(&c.rs);
    c.rs.t_unit = q->ref_ohms ? BG_UNIT_NONE : q->ref_unit;
    c.rs.ref_ohms = q->ref_ohms, c.rs.has_time = 1, c.rs.has_note = 1;
    rc = bg_store_seq_readings(e->st, e->seq_id, collect_cb, &c, err);
    if (rc == BG_OK && c.nomem)
        rc = bg_error_set(err, BG_ENOMEM, "out of memory");
    memset(&meta, 0, sizeof meta);
    snprintf(meta.serial, sizeof meta.serial, "%s", q->probes[ch].serial);
    snprintf(meta.ref_ident, sizeof meta.ref_ident, "%s", q->ref_ident);
    snprintf(meta.operator_name, sizeof meta.operator_name, "%s", q->operator_name);
    snprintf(meta.medium, sizeof meta.medium, "%s", q->medium);
    snprintf(meta.note, sizeof meta.note, "%s", q->note);
    snprintf(meta.source, sizeof meta.source, "sequence %lld (%.900s)", e->seq_id, q->path);
    meta.measuring_current_a = q->measuring_current_a;
    meta.measuring_voltage_v = q->measuring_voltage_v;
    if (rc == BG_OK)
        rc = bg_store_import(e->st, &c.rs, &meta, run_id, err);
    bg_readings_release(&c.rs); /* frees the notes too */
    return rc;
}

static int finish(struct eng *e, bg_error *err)
{
    long long first = 0, run = 0;
    int rc = bg_store_begin(e->st, err);
    for (size_t ch = 0; ch < e->q->nprobes && rc == BG_OK; ch++)
        if ((rc = make_run(e, ch, &run, err)) == BG_OK && !first)
            first = run;
    if (rc == BG_OK)
        rc = bg_store_seq_end(e->st, e->seq_id, first, run, err);
    if (rc == BG_OK && (rc = bg_store_commit(e->st, err)) == BG_OK) {
        e->res->first_run = first, e->res->last_run = run;
        return BG_OK;
    }
    bg_store_rollback(e->st);
    bg_error_prefix(err, "sequence %lld: the runs could not be made (the readings are kept; "
                    "resume to try again)", e->seq_id);
    return rc;
}

/* ---- the whole sequence ---- */

static int start(struct eng *e, int resume, bg_error *err)
{
    char idn[BG_NOTE], crit[BG_NOTE];
    bg_seq_head head;
    int found = 0, rc;
    const bg_seq *q = e->q;
    if ((rc = bg_store_seq_unfinished(e->st, &head, &found, err)) != BG_OK)
        return rc;
    if (!resume && found && strcmp(head.sha256, q->sha256) == 0) {
        snprintf(crit, sizeof crit, "sequence %lld of this file is unfinished; this starts a "
                 "new one ('--resume' would continue it)", head.id);
        show(e, crit);
    }
    if (resume) {
        if (!found)
            return bg_error_set(err, BG_EINVAL, "no unfinished sequence to resume");
        if (strcmp(head.sha256, q->sha256) != 0)
            return bg_error_set(err, BG_EINVAL, "%s: the file is not the one sequence %lld "
                                "was started with (%s): resume refused", q->path, head.id,
                                head.file);
        e->seq_id = head.id, e->res->resumed = 1;
    }
    show(e, "connecting to the instruments");
    if ((rc = connect_all(e, idn, sizeof idn, err)) != BG_OK)
        return rc;
    if (resume && strcmp(idn, head.idn) != 0)
        return bg_error_set(err, BG_EINVAL, "the instruments are not those sequence %lld was "
                            "started with: resume refused (then: %s; now: %s)", head.id,
                            head.idn, idn);
    if (!resume) {
        snprintf(crit, sizeof crit, "window %g s; |drift| <= %g K/s; scatter <= %g K; time "
                 "limit %g s; on timeout %s; sample every %g s", q->window_s, q->max_drift_k_s,
                 q->max_scatter_k, q->time_limit_s, q->stop_on_timeout ? "stop" : "skip",
                 q->sample_s);
        if ((rc = bg_store_seq_add(e->st, q, idn, crit, &e->seq_id, err)) != BG_OK)
            return rc;
    }
    e->res->seq_id = e->seq_id;
    if ((rc = bg_store_seq_readings(e->st, e->seq_id, have_cb, e, err)) != BG_OK)
        return rc;
    return bg_store_seq_settles(e->st, e->seq_id, skip_cb, e, err);
}

static int run_all(struct eng *e, bg_error *err)
{
    int rc = BG_OK;
    for (size_t sp = 0; sp < e->q->nsp && rc == BG_OK; sp++) {
        if (e->skip[sp]) {
            e->res->skipped++;
            continue;
        }
        if (sp_missing(e, sp))
            rc = one_setpoint(e, sp, err);
    }
    if (rc != BG_OK)
        return to_safe(e, rc, err);
    if ((rc = bath_set(e, e->q->safe_k, err)) != BG_OK)
        return to_safe(e, rc, err);
    show(e, "all setpoints done; the bath is set to its safe setpoint");
    return BG_OK;
}

int bg_seq_run(bg_store *st, const bg_seq *seq, int resume, const bg_seq_hooks *h,
               bg_seq_result *res, bg_error *err)
{
    struct eng e;
    int rc;
    memset(&e, 0, sizeof e);
    memset(res, 0, sizeof *res);
    e.st = st, e.q = seq, e.h = h, e.res = res;
    e.s.nsp = seq->nsp, e.s.ref_k = NAN, e.s.to_go_s = NAN;
    e.s.total = seq->nsp * seq->nprobes * seq->readings;
    e.have = calloc(seq->nsp * seq->nprobes + 1, sizeof *e.have);
    e.skip = calloc(seq->nsp + 1, sizeof *e.skip);
    if (!e.have || !e.skip)
        rc = bg_error_set(err, BG_ENOMEM, "out of memory");
    else if ((rc = preflight(&e, err)) == BG_OK && (rc = start(&e, resume, err)) == BG_OK) {
        for (size_t i = 0; i < seq->nsp * seq->nprobes; i++)
            e.s.taken += e.have[i];
        if ((rc = run_all(&e, err)) == BG_OK) {
            size_t settled = 0;
            for (size_t sp = 0; sp < seq->nsp; sp++)
                settled += !e.skip[sp];
            rc = settled ? finish(&e, err) : bg_error_set(err, BG_ESTOPPED, "no setpoint "
                           "settled: no runs were made (the sequence stays unfinished)");
            res->finished = rc == BG_OK;
            e.s.phase = BG_SEQ_FINISHED;
        }
    }
    disconnect_all(&e);
    free(e.have);
    free(e.skip);
    return rc;
}
