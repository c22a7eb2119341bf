/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The sequence file: INI read by libinih (Debian libinih-dev), strict.  libinih calls the
** handler for each name = value; the file is fed to it line by line through a reader of our
** own, which counts lines (so each message names its line), keeps the text and its SHA-256,
** refuses lines too long for the parser and sees sections that hold no key. */
#include <ini.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "bandgap/bandgap.h"
#include "../core/num_int.h"
#include "../store/store_int.h"

enum { MAXLINE = INI_MAX_LINE - 2, MAXSEC = 8 + BG_SEQ_MAXCH + BG_NROLES };

/* What the reader and the handler share. */
struct load {
    bg_seq *seq;
    FILE *f;
    const char *path;
    size_t line;                  /* the line last handed to the parser */
    char *text;                   /* the file as read */
    size_t len, cap;
    struct bgi_sha256 h;
    int failed;                   /* the first error is in 'err' */
    bg_error *err;
    /* sections seen, with their lines, and the keys set in each (a bit per key) */
    char sec[MAXSEC][BG_TEXT];
    size_t sec_line[MAXSEC];
    unsigned keys[MAXSEC];
    size_t nsec;
    int cur;                      /* index of the current section */
};

static int fail(struct load *L, const char *fmt, const char *a, const char *b)
{
    char msg[1200];
    if (L->failed)
        return 0;
    snprintf(msg, sizeof msg, fmt, a, b);
    L->failed = 1;
    bg_error_set(L->err, BG_EINVAL, "%s:%zu: %s", L->path, L->line, msg);
    return 0;
}

/* ---- the reader ---- */

static int keep(struct load *L, const char *s, size_t n)
{
    if (L->len + n + 1 > L->cap) {
        size_t cap = L->cap ? 2 * L->cap : 4096;
        while (cap < L->len + n + 1)
            cap *= 2;
        char *t = realloc(L->text, cap);
        if (!t)
            return -1;
        L->text = t, L->cap = cap;
    }
    memcpy(L->text + L->len, s, n);
    L->len += n;
    L->text[L->len] = '\0';
    return 0;
}

/* A section header "[NAME]" on a line: noted with its line, whether or not keys follow. */
static void note_section(struct load *L, const char *s)
{
    while (*s == ' ' || *s == '\t')
        s++;
    const char *end = strchr(s, ']');
    if (*s != '[' || !end || L->nsec >= MAXSEC)
        return;
    size_t n = (size_t)(end - s - 1);
    if (n >= BG_TEXT)
        n = BG_TEXT - 1;
    memcpy(L->sec[L->nsec], s + 1, n);
    L->sec[L->nsec][n] = '\0';
    L->sec_line[L->nsec] = L->line;
    L->nsec++;
}

static char *reader(char *buf, int size, void *stream)
{
    struct load *L = stream;
    if (L->failed || !fgets(buf, size, L->f))
        return NULL;
    size_t n = strlen(buf);
    L->line++;
    if (n > MAXLINE || (n == MAXLINE && buf[n - 1] != '\n')) {
        fail(L, "line longer than %s bytes", "197", NULL);
        return NULL;
    }
    if (bg_text_check("line", buf, n && buf[n - 1] == '\n' ? n - 1 : n, NULL) != BG_OK &&
        !(n >= 2 && buf[n - 2] == '\r' && bg_text_check("line", buf, n - 2, NULL) == BG_OK)) {
        fail(L, "control characters or invalid UTF-8%s%s", "", "");
        return NULL;
    }
    bgi_sha256_update(&L->h, buf, n);
    if (keep(L, buf, n) != 0) {
        fail(L, "out of memory%s%s", "", "");
        return NULL;
    }
    note_section(L, buf);
    return buf;
}

/* ---- values ---- */

static int num_full(const char *s, double *v)
{
    size_t n = strlen(s);
    return n && bgi_num_scan_finite(s, n, '.', v, NULL) == n;
}

static int set_text(struct load *L, char *dst, size_t size, const char *name, const char *v)
{
    if (strlen(v) >= size)
        return fail(L, "'%s': longer than the field holds%s", name, "");
    snprintf(dst, size, "%s", v);
    return 1;
}

static int temp(struct load *L, const char *name, const char *v, double *t_k)
{
    bg_error e = BG_ERROR_INIT;
    if (bg_units_parse_temp(v, BG_UNIT_NONE, t_k, &e) != BG_OK)
        return fail(L, "'%s': %s", name, e.msg);
    return 1;
}

/* A duration "60 s", "500 ms"; or "N min" / "N h". */
static int duration(struct load *L, const char *name, const char *v, double *s)
{
    bg_error e = BG_ERROR_INIT;
    const char *unit[3] = { "s", "min", "h" };
    const double scale[3] = { 1.0, 60.0, 3600.0 };
    size_t n = strlen(v);
    for (int i = 2; i >= 0; i--) {
        size_t u = strlen(unit[i]);
        /* "min" and "h" without a prefix; "s" with bg_units_parse_si's prefixes */
        if (i > 0 && n > u && strcmp(v + n - u, unit[i]) == 0) {
            char num[64];
            size_t m = n - u;
            while (m && v[m - 1] == ' ')
                m--;
            if (m == 0 || m >= sizeof num)
                break;
            memcpy(num, v, m);
            num[m] = '\0';
            if (!num_full(num, s) || !(*s > 0.0))
                break;
            *s *= scale[i];
            return 1;
        }
    }
    if (bg_units_parse_si(v, "s", s, &e) != BG_OK)
        return fail(L, "'%s': %s (a duration: 60 s, 500 ms, 30 min, 2 h)", name, e.msg);
    return 1;
}

static int count(struct load *L, const char *name, const char *v, long lo, long hi, long *out)
{
    char *end;
    long x = strtol(v, &end, 10);
    if (*end || end == v || x < lo || x > hi) {
        char range[64];
        snprintf(range, sizeof range, "a whole number from %ld to %ld", lo, hi);
        return fail(L, "'%s': expected %s", name, range);
    }
    *out = x;
    return 1;
}

/* "0 C, 25 C, 50 C" */
static int setpoints(struct load *L, const char *v)
{
    bg_seq *q = L->seq;
    char buf[INI_MAX_LINE], *save = NULL;
    snprintf(buf, sizeof buf, "%s", v);
    q->nsp = 0;
    for (char *tok = strtok_r(buf, ",", &save); tok; tok = strtok_r(NULL, ",", &save)) {
        while (*tok == ' ')
            tok++;
        size_t n = strlen(tok);
        while (n && tok[n - 1] == ' ')
            tok[--n] = '\0';
        if (q->nsp == BG_SEQ_MAXSP)
            return fail(L, "'setpoints': more than %s%s", "64", "");
        if (!temp(L, "setpoints", tok, &q->setpoint_k[q->nsp]))
            return 0;
        q->nsp++;
    }
    if (q->nsp == 0)
        return fail(L, "'setpoints': none given%s%s", "", "");
    return 1;
}

/* ---- sections and keys ---- */

/* The keys of each kind of section, in bit order; "*" ends a list. */
static const char *const k_sequence[] = { "setpoints", "readings", "medium", "operator",
                                          "note", "measuring_current", "measuring_voltage",
                                          NULL };
static const char *const k_stability[] = { "window", "max_drift", "max_scatter", "time_limit",
                                           "on_timeout", "sample_interval", NULL };
static const char *const k_limits[] = { "min", "max", "safe_setpoint", NULL };
static const char *const k_reference[] = { "ident", "unit", NULL };
static const char *const k_probe[] = { "channel", NULL };
static const char *const k_instr[BG_NROLES][8] = {
    { "transport", "host", "port", "device", "baud", "timeout", "unit", "set" },
    { "transport", "host", "port", "device", "baud", "timeout", "measure", NULL },
    { "transport", "host", "port", "device", "baud", "timeout", "close", NULL },
    { "transport", "host", "port", "device", "baud", "timeout", "read", NULL },
};
static const char *const k_bath_more[] = { "get", NULL }; /* bit 8 of a bath section */

static const char *const roles[BG_NROLES] = { "bath", "meter", "scanner", "reference" };

const char *bg_role_name(bg_role r)
{
    return (unsigned)r < BG_NROLES ? roles[r] : "?";
}

/* The bit of 'name' in 'keys' (n of them), or -1. */
static int key_bit(const char *const *keys, size_t n, const char *name)
{
    for (size_t i = 0; i < n && keys[i]; i++)
        if (strcmp(keys[i], name) == 0)
            return (int)i;
    return -1;
}

/* The kind of a section name: 0 sequence, 1 stability, 2 limits, 3 reference, 4 probe,
** 10 + role an instrument; -1 unknown. */
static int section_kind(const char *sec, const char **arg)
{
    static const char *const fixed[] = { "sequence", "stability", "medium", "reference" };
    *arg = "";
    for (int i = 0; i < 4; i++)
        if (strcmp(sec, fixed[i]) == 0)
            return i;
    if (strncmp(sec, "probe ", 6) == 0 && sec[6]) {
        *arg = sec + 6;
        return 4;
    }
    if (strncmp(sec, "instrument ", 11) == 0)
        for (int r = 0; r < BG_NROLES; r++)
            if (strcmp(sec + 11, roles[r]) == 0)
                return 10 + r;
    return -1;
}

static int sec_index(struct load *L, const char *section)
{
    /* the newest section header of that name (the reader has seen it) */
    for (int i = (int)L->nsec - 1; i >= 0; i--)
        if (strcmp(L->sec[i], section) == 0)
            return i;
    return -1;
}

static int do_sequence(struct load *L, const char *name, const char *v)
{
    bg_seq *q = L->seq;
    bg_error e = BG_ERROR_INIT;
    long n;
    if (strcmp(name, "setpoints") == 0)
        return setpoints(L, v);
    if (strcmp(name, "readings") == 0) {
        if (!count(L, name, v, 1, 1000, &n))
            return 0;
        q->readings = (size_t)n;
        return 1;
    }
    if (strcmp(name, "medium") == 0)
        return set_text(L, q->medium, sizeof q->medium, name, v);
    if (strcmp(name, "operator") == 0)
        return set_text(L, q->operator_name, sizeof q->operator_name, name, v);
    if (strcmp(name, "note") == 0)
        return set_text(L, q->note, sizeof q->note, name, v);
    int cur = strcmp(name, "measuring_current") == 0;
    if (bg_units_parse_si(v, cur ? "A" : "V", cur ? &q->measuring_current_a
                          : &q->measuring_voltage_v, &e) != BG_OK)
        return fail(L, "'%s': %s", name, e.msg);
    return 1;
}

static int do_stability(struct load *L, const char *name, const char *v)
{
    bg_seq *q = L->seq;
    bg_error e = BG_ERROR_INIT;
    if (strcmp(name, "window") == 0)
        return duration(L, name, v, &q->window_s);
    if (strcmp(name, "time_limit") == 0)
        return duration(L, name, v, &q->time_limit_s);
    if (strcmp(name, "sample_interval") == 0)
        return duration(L, name, v, &q->sample_s);
    if (strcmp(name, "max_scatter") == 0) {
        if (bg_units_parse_tdiff(v, &q->max_scatter_k, &e) != BG_OK)
            return fail(L, "'%s': %s", name, e.msg);
        return 1;
    }
    if (strcmp(name, "max_drift") == 0) {
        /* "1 mK/min" or "20 uK/s" */
        size_t n = strlen(v);
        int per_min = n > 4 && strcmp(v + n - 4, "/min") == 0;
        char unit[8];
        snprintf(unit, sizeof unit, "K/%s", per_min ? "min" : "s");
        if (bg_units_parse_si(v, unit, &q->max_drift_k_s, &e) != BG_OK)
            return fail(L, "'max_drift': %s (a drift: 1 mK/min, 20 uK/s)%s", e.msg, "");
        if (per_min)
            q->max_drift_k_s /= 60.0;
        return 1;
    }
    if (strcmp(v, "skip") == 0 || strcmp(v, "stop") == 0) {
        q->stop_on_timeout = strcmp(v, "stop") == 0;
        return 1;
    }
    return fail(L, "'on_timeout': '%s': expected skip or stop%s", v, "");
}

static int do_limits(struct load *L, const char *name, const char *v)
{
    bg_seq *q = L->seq;
    double *dst = strcmp(name, "min") == 0 ? &q->min_k : strcmp(name, "max") == 0 ? &q->max_k
                : &q->safe_k;
    return temp(L, name, v, dst);
}

static int do_reference(struct load *L, const char *name, const char *v)
{
    bg_seq *q = L->seq;
    if (strcmp(name, "ident") == 0)
        return set_text(L, q->ref_ident, sizeof q->ref_ident, name, v);
    if (strcmp(v, "ohm") == 0) {
        q->ref_ohms = 1, q->ref_unit = BG_UNIT_NONE;
        return 1;
    }
    bg_error e = BG_ERROR_INIT;
    if (bg_units_parse_unit(v, &q->ref_unit, &e) != BG_OK)
        return fail(L, "'unit': '%s': expected C, K, F or ohm%s", v, "");
    return 1;
}

static int do_probe(struct load *L, const char *serial, const char *name, const char *v)
{
    bg_seq *q = L->seq;
    bg_seq_probe *p = NULL;
    (void)name;
    for (size_t i = 0; i < q->nprobes; i++)
        if (strcmp(q->probes[i].serial, serial) == 0)
            p = &q->probes[i];
    if (!p) {
        if (q->nprobes == BG_SEQ_MAXCH)
            return fail(L, "more than %s probes%s", "64", "");
        p = &q->probes[q->nprobes++];
        if (!set_text(L, p->serial, sizeof p->serial, "probe", serial))
            return 0;
        p->line = L->line;
    }
    for (const char *c = v; *c; c++)
        if (!((*c >= '0' && *c <= '9') || (*c >= 'A' && *c <= 'Z') || (*c >= 'a' && *c <= 'z')
              || *c == '_' || *c == '-' || *c == '.'))
            return fail(L, "'channel': '%s': letters, digits, '.', '_' and '-' only%s", v, "");
    for (size_t i = 0; i < q->nprobes; i++)
        if (&q->probes[i] != p && strcmp(q->probes[i].channel, v) == 0)
            return fail(L, "'channel': %s is also probe %s's channel", v, q->probes[i].serial);
    return set_text(L, p->channel, sizeof p->channel, "channel", v);
}

static int do_instr(struct load *L, bg_role r, const char *name, const char *v)
{
    bg_instr *in = &L->seq->instr[r];
    long n;
    if (!in->line)
        in->line = L->line;
    if (strcmp(name, "transport") == 0) {
        in->transport = strcmp(v, "tcp") == 0 ? BG_TR_TCP : strcmp(v, "serial") == 0
                      ? BG_TR_SERIAL : strcmp(v, "usbtmc") == 0 ? BG_TR_USBTMC : 0;
        if (!in->transport)
            return fail(L, "'transport': '%s': expected tcp, serial or usbtmc%s", v, "");
        return 1;
    }
    if (strcmp(name, "host") == 0)
        return set_text(L, in->host, sizeof in->host, name, v);
    if (strcmp(name, "device") == 0)
        return set_text(L, in->device, sizeof in->device, name, v);
    if (strcmp(name, "port") == 0 || strcmp(name, "baud") == 0) {
        int port = name[0] == 'p';
        if (!count(L, name, v, 1, port ? 65535 : 4000000, &n))
            return 0;
        *(port ? &in->port : &in->baud) = (int)n;
        return 1;
    }
    if (strcmp(name, "timeout") == 0)
        return duration(L, name, v, &in->timeout_s);
    if (strcmp(name, "unit") == 0) {
        bg_error e = BG_ERROR_INIT;
        if (bg_units_parse_unit(v, &in->unit, &e) != BG_OK)
            return fail(L, "'unit': '%s': expected C, K or F%s", v, "");
        return 1;
    }
    /* a command template: the role's first or second ("get" of the bath) */
    int which = strcmp(name, "get") == 0;
    int wants_value = r == BG_ROLE_BATH ? !which : r == BG_ROLE_SCANNER;
    const char *mark = strstr(v, "{}");
    if (wants_value && (!mark || strstr(mark + 2, "{}")))
        return fail(L, "'%s': '%s': needs one {} where the value goes", name, v);
    if (!wants_value && mark)
        return fail(L, "'%s': '%s': takes no value ({})", name, v);
    return set_text(L, in->cmd[which], sizeof in->cmd[which], name, v);
}

static int handler(void *user, const char *section, const char *name, const char *value)
{
    struct load *L = user;
    const char *arg;
    int kind = section_kind(section, &arg), si = sec_index(L, section), bit;
    if (L->failed)
        return 0;
    if (kind < 0 && si >= 0)
        L->line = L->sec_line[si]; /* the section's line, not its first key's */
    if (kind < 0)
        return fail(L, "unknown section [%s] (sections: sequence, stability, medium, "
                    "reference, probe SERIAL, instrument bath|meter|scanner|reference)%s",
                    section, "");
    const char *const *keys = kind == 0 ? k_sequence : kind == 1 ? k_stability
                            : kind == 2 ? k_limits : kind == 3 ? k_reference
                            : kind == 4 ? k_probe : k_instr[kind - 10];
    bit = key_bit(keys, 8, name);
    if (bit < 0 && kind == 10 + BG_ROLE_BATH && key_bit(k_bath_more, 1, name) == 0)
        bit = 8;
    if (bit < 0) {
        const char *cands[12];
        size_t nc = 0;
        for (size_t i = 0; i < 8 && keys[i]; i++)
            cands[nc++] = keys[i];
        if (kind == 10 + BG_ROLE_BATH)
            cands[nc++] = "get";
        const char *near = bg_suggest(name, strlen(name), cands, nc);
        char hint[BG_TEXT + 32] = "";
        if (near)
            snprintf(hint, sizeof hint, " (did you mean '%s'?)", near);
        return fail(L, "unknown key '%s' in this section%s", name, hint);
    }
    if (si >= 0 && (L->keys[si] >> bit) & 1u)
        return fail(L, "'%s' given twice in [%s]", name, section);
    if (si >= 0)
        L->keys[si] |= 1u << bit;
    if (!*value)
        return fail(L, "'%s': no value%s", name, "");
    switch (kind) {
    case 0: return do_sequence(L, name, value);
    case 1: return do_stability(L, name, value);
    case 2: return do_limits(L, name, value);
    case 3: return do_reference(L, name, value);
    case 4: return do_probe(L, arg, name, value);
    default: return do_instr(L, (bg_role)(kind - 10), name, value);
    }
}

/* ---- after the parse: what must be there ---- */

static int need(struct load *L, const char *section, const char *const *keys, unsigned want)
{
    int si = sec_index(L, section);
    for (int b = 0; b < 9; b++) {
        if (!((want >> b) & 1u))
            continue;
        if (si < 0)
            return bg_error_set(L->err, BG_EINVAL, "%s: section [%s] is missing", L->path,
                                section);
        if (!((L->keys[si] >> b) & 1u))
            return bg_error_set(L->err, BG_EINVAL, "%s:%zu: section [%s]: '%s' is missing",
                                L->path, L->sec_line[si], section,
                                b == 8 ? "get" : keys[b]);
    }
    return BG_OK;
}

static int check_instr(struct load *L, bg_role r)
{
    bg_instr *in = &L->seq->instr[r];
    char sec[32];
    int si, rc;
    snprintf(sec, sizeof sec, "instrument %s", roles[r]);
    if ((rc = need(L, sec, k_instr[r], 1u)) != BG_OK)
        return rc;
    si = sec_index(L, sec);
    unsigned k = L->keys[si];
    const char *bad = NULL;
    if (in->transport == BG_TR_TCP && !(k & 2u))
        bad = "'host' is missing (transport tcp)";
    else if (in->transport != BG_TR_TCP && (k & 6u))
        bad = "'host' and 'port' are for transport tcp";
    else if (in->transport != BG_TR_TCP && !(k & 8u))
        bad = "'device' is missing";
    else if (in->transport == BG_TR_SERIAL && !(k & 16u))
        bad = "'baud' is missing (transport serial)";
    else if (in->transport != BG_TR_SERIAL && (k & 16u))
        bad = "'baud' is for transport serial";
    else if (in->transport == BG_TR_TCP && (k & 8u))
        bad = "'device' is not for transport tcp";
    else if (r == BG_ROLE_BATH && !(k & 64u))
        bad = "'unit' is missing (the unit of the bath's setpoint and temperature)";
    if (bad)
        return bg_error_set(L->err, BG_EINVAL, "%s:%zu: section [%s]: %s", L->path,
                            L->sec_line[si], sec, bad);
    if (in->transport == BG_TR_TCP && !in->port)
        in->port = 5025; /* the LXI convention for SCPI over a raw socket */
    if (!(in->timeout_s > 0.0))
        in->timeout_s = 5.0;
    static const char *const dflt[BG_NROLES][2] = {
        { "SOUR:TEMP {}", "MEAS:TEMP?" }, { "MEAS:FRES?", "" }, { "ROUT:CLOS (@{})", "" },
        { "MEAS:TEMP?", "" } };
    for (int i = 0; i < 2; i++)
        if (!in->cmd[i][0])
            snprintf(in->cmd[i], sizeof in->cmd[i], "%s", r == BG_ROLE_REFERENCE &&
                     L->seq->ref_ohms ? "MEAS:FRES?" : dflt[r][i]);
    return BG_OK;
}

static int check_whole(struct load *L)
{
    bg_seq *q = L->seq;
    int rc;
    for (size_t i = 0; i < L->nsec; i++) {
        const char *arg;
        if (section_kind(L->sec[i], &arg) < 0)
            return bg_error_set(L->err, BG_EINVAL, "%s:%zu: unknown section [%s]", L->path,
                                L->sec_line[i], L->sec[i]);
        for (size_t j = 0; j < i; j++)
            if (strcmp(L->sec[i], L->sec[j]) == 0)
                return bg_error_set(L->err, BG_EINVAL, "%s:%zu: section [%s] again (first "
                                    "at line %zu)", L->path, L->sec_line[i], L->sec[i],
                                    L->sec_line[j]);
        if (section_kind(L->sec[i], &arg) == 4 && !L->keys[i])
            return bg_error_set(L->err, BG_EINVAL, "%s:%zu: section [%s]: 'channel' is "
                                "missing", L->path, L->sec_line[i], L->sec[i]);
    }
    if ((rc = need(L, "sequence", k_sequence, 0x7u)) != BG_OK ||
        (rc = need(L, "stability", k_stability, 0x3fu)) != BG_OK ||
        (rc = need(L, "medium", k_limits, 0x7u)) != BG_OK ||
        (rc = need(L, "reference", k_reference, 0x3u)) != BG_OK)
        return rc;
    if (q->nprobes == 0)
        return bg_error_set(L->err, BG_EINVAL, "%s: no [probe SERIAL] section", L->path);
    for (int r = 0; r < BG_NROLES; r++)
        if ((rc = check_instr(L, (bg_role)r)) != BG_OK)
            return rc;
    return BG_OK;
}

/* The line of 'key' in section 'sec' for a message about its value (0: not found). */
static size_t key_line(const char *text, const char *sec, const char *key)
{
    size_t line = 0, klen = strlen(key), slen = strlen(sec);
    int in = 0;
    for (const char *p = text; *p;) {
        const char *e = strchr(p, '\n');
        size_t n = e ? (size_t)(e - p) : strlen(p);
        line++;
        while (n && (*p == ' ' || *p == '\t'))
            p++, n--;
        if (n && *p == '[')
            in = n > slen + 1 && memcmp(p + 1, sec, slen) == 0 && p[slen + 1] == ']';
        else if (in && n > klen && memcmp(p, key, klen) == 0 &&
                 (p[klen] == ' ' || p[klen] == '=' || p[klen] == '\t'))
            return line;
        if (!e)
            break;
        p = e + 1;
    }
    return 0;
}

/* Setpoints and the safe setpoint inside the medium's limits; the stability criterion
** coherent.  Nothing is clamped: a value outside is refused. */
static int check_values(struct load *L)
{
    bg_seq *q = L->seq;
    char a[48], b[48], c[48];
    if (!(q->min_k < q->max_k))
        return bg_error_set(L->err, BG_EINVAL, "%s:%zu: [medium] 'min' must be below 'max'",
                            L->path, key_line(q->text, "medium", "min"));
    bg_units_format_temp(q->min_k, BG_UNIT_C, 2, b, sizeof b);
    bg_units_format_temp(q->max_k, BG_UNIT_C, 2, c, sizeof c);
    for (size_t i = 0; i < q->nsp; i++)
        if (q->setpoint_k[i] < q->min_k || q->setpoint_k[i] > q->max_k)
            return bg_error_set(L->err, BG_EINVAL, "%s:%zu: setpoint %zu (%s) is outside the "
                                "medium's limits %s to %s: refused", L->path,
                                key_line(q->text, "sequence", "setpoints"), i + 1,
                                bg_units_format_temp(q->setpoint_k[i], BG_UNIT_C, 2, a,
                                                     sizeof a), b, c);
    if (q->safe_k < q->min_k || q->safe_k > q->max_k)
        return bg_error_set(L->err, BG_EINVAL, "%s:%zu: the safe setpoint (%s) is outside "
                            "the medium's limits %s to %s", L->path,
                            key_line(q->text, "medium", "safe_setpoint"),
                            bg_units_format_temp(q->safe_k, BG_UNIT_C, 2, a, sizeof a), b, c);
    if (q->sample_s * 3.0 > q->window_s)
        return bg_error_set(L->err, BG_EINVAL, "%s:%zu: the window must hold at least 3 "
                            "samples ('sample_interval' at most a third of 'window')", L->path,
                            key_line(q->text, "stability", "window"));
    if (q->window_s > q->time_limit_s)
        return bg_error_set(L->err, BG_EINVAL, "%s:%zu: the time limit is shorter than the "
                            "window: no setpoint could settle", L->path,
                            key_line(q->text, "stability", "time_limit"));
    if (q->measuring_current_a > 0.0 && q->measuring_voltage_v > 0.0)
        return bg_error_set(L->err, BG_EINVAL, "%s: [sequence]: give measuring_current or "
                            "measuring_voltage, not both", L->path);
    return BG_OK;
}

int bg_seq_load(const char *path, bg_seq *out, bg_error *err)
{
    struct load *L = calloc(1, sizeof *L);
    unsigned char d[32];
    int rc;
    memset(out, 0, sizeof *out);
    if (!L)
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    L->seq = out, L->path = path, L->err = err, L->cur = -1;
    snprintf(out->path, sizeof out->path, "%s", path);
    if (!(L->f = fopen(path, "rb"))) {
        free(L);
        return bg_error_set(err, BG_ENOENT, "%s: cannot read the sequence file", path);
    }
    bgi_sha256_init(&L->h);
    int line = ini_parse_stream(reader, L, handler, L);
    if (!L->failed && ferror(L->f))
        rc = bg_error_set(err, BG_EIO, "%s: read error", path);
    else if (L->failed)
        rc = BG_EINVAL;
    else if (line != 0)
        rc = bg_error_set(err, BG_EINVAL, "%s:%d: not a section header or name = value",
                          path, line);
    else {
        out->text = L->text ? L->text : calloc(1, 1);
        L->text = NULL;
        rc = out->text ? check_whole(L) : bg_error_set(err, BG_ENOMEM, "out of memory");
        if (rc == BG_OK)
            rc = check_values(L);
    }
    fclose(L->f);
    bgi_sha256_final(&L->h, d);
    bgi_sha256_hex(d, out->sha256);
    free(L->text);
    free(L);
    if (rc != BG_OK)
        bg_seq_release(out);
    return rc;
}

void bg_seq_release(bg_seq *seq)
{
    if (!seq)
        return;
    free(seq->text);
    seq->text = NULL;
}
