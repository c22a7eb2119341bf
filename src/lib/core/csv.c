/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The readings CSV reader: header-named columns in any order, delimiter detected from the
** header, RFC 4180 quoting, '#' comment lines, decimal comma with ';' or tab delimiters. */
#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "bandgap/csv.h"
#include "bandgap/suggest.h"
#include "num_int.h"

enum col { C_TEMP_C, C_TEMP_K, C_TEMP_F, C_REF_OHMS, C_OHMS, C_U_T, C_U_R, C_TIME, C_NOTE,
           C_COUNT };
static const char *col_names[C_COUNT] = { "temp_c", "temp_k", "temp_f", "ref_ohms", "ohms",
                                          "u_temp_k", "u_ohms", "time", "note" };
#define KNOWN_COLUMNS "temp_c, temp_k, temp_f, ref_ohms, ohms, u_temp_k, u_ohms, time, note"
#define MAX_COLS 64

void bg_readings_init(bg_readings *rs)
{
    bg_readings z = BG_READINGS_INIT;
    *rs = z;
}

void bg_readings_release(bg_readings *rs)
{
    if (!rs)
        return;
    for (size_t i = 0; i < rs->n; i++)
        free(rs->v[i].note);
    free(rs->v);
    bg_readings_init(rs);
}

void bg_readings_points(const bg_readings *rs, bg_point *pts)
{
    for (size_t i = 0; i < rs->n; i++)
        pts[i] = rs->v[i].pt;
}

/* One field of a line: [start, start+len) after unquoting into 'buf' when quoted. */
typedef struct field { const char *s; size_t len; int quoted; } field;

typedef struct parser {
    const char *name;
    size_t line;
    char delim;
    char *qbuf;      /* unquoted copies of quoted fields, one line's worth */
    size_t qcap;
    bg_error *err;
} parser;

static int is_space(char c) { return c == ' ' || c == '\t'; }

/* Split 'line' (without its newline) into fields.  Returns the count, or -1 after setting
** the error. */
static int split(parser *ps, const char *line, size_t len, field *f, int maxf)
{
    size_t i = 0, q = 0;
    int nf = 0;

    if (ps->qcap < len + 1) {
        char *nb = realloc(ps->qbuf, len + 1);
        if (!nb) {
            bg_error_set(ps->err, BG_ENOMEM, "out of memory reading '%s'", ps->name);
            return -1;
        }
        ps->qbuf = nb, ps->qcap = len + 1;
    }
    for (;;) {
        if (nf == maxf) {
            bg_error_set(ps->err, BG_EINVAL, "%s:%zu: more than %d fields", ps->name, ps->line,
                         maxf);
            return -1;
        }
        /* Leading blanks are not part of a field (a tab is, when it is the delimiter). */
        while (i < len && is_space(line[i]) && line[i] != ps->delim)
            i++;
        if (i < len && line[i] == '"') {
            size_t start = q;
            i++;
            for (;;) {
                if (i >= len) {
                    bg_error_set(ps->err, BG_EINVAL, "%s:%zu: field %d: unterminated quote",
                                 ps->name, ps->line, nf + 1);
                    return -1;
                }
                if (line[i] == '"') {
                    if (i + 1 < len && line[i + 1] == '"') {
                        ps->qbuf[q++] = '"', i += 2;
                        continue;
                    }
                    i++;
                    break;
                }
                ps->qbuf[q++] = line[i++];
            }
            while (i < len && is_space(line[i]) && line[i] != ps->delim)
                i++;
            if (i < len && line[i] != ps->delim) {
                bg_error_set(ps->err, BG_EINVAL, "%s:%zu: field %d: text after closing quote",
                             ps->name, ps->line, nf + 1);
                return -1;
            }
            f[nf].s = ps->qbuf + start, f[nf].len = q - start, f[nf].quoted = 1;
        } else {
            size_t start = i;
            while (i < len && line[i] != ps->delim) {
                if (line[i] == '"') {
                    bg_error_set(ps->err, BG_EINVAL, "%s:%zu: field %d: stray quote",
                                 ps->name, ps->line, nf + 1);
                    return -1;
                }
                i++;
            }
            size_t end = i;
            while (end > start && is_space(line[end - 1]) && line[end - 1] != ps->delim)
                end--;
            f[nf].s = line + start, f[nf].len = end - start, f[nf].quoted = 0;
        }
        nf++;
        if (i >= len)
            return nf;
        i++; /* the delimiter */
    }
}

static char detect_delim(const char *line, size_t len)
{
    size_t nc = 0, ns = 0, nt = 0;
    int inq = 0;
    for (size_t i = 0; i < len; i++) {
        if (line[i] == '"')
            inq = !inq;
        else if (!inq && line[i] == ',')
            nc++;
        else if (!inq && line[i] == ';')
            ns++;
        else if (!inq && line[i] == '\t')
            nt++;
    }
    if (nc > ns && nc > nt)
        return ',';
    if (ns > nc && ns > nt)
        return ';';
    if (nt > nc && nt > ns)
        return '\t';
    return 0;
}

static int field_is(const field *f, const char *name)
{
    size_t n = strlen(name);
    if (f->len != n)
        return 0;
    for (size_t i = 0; i < n; i++) {
        char c = f->s[i];
        if (c >= 'A' && c <= 'Z')
            c = (char)(c - 'A' + 'a');
        if (c != name[i])
            return 0;
    }
    return 1;
}

/* 1 when the bytes after a number are a unit written into the value ("25 C", "10 kohm",
** "298.15K", "25 \xc2\xb0C"): spaces, then one of the temperature or resistance units below
** (any case).  Anything else ("10000.O", a typo) is an ordinary bad number. */
static int unit_after(const char *s, size_t len)
{
    static const char *const units[] = {
        "c", "k", "f", "degc", "degf", "deg c", "deg f", "\xc2\xb0" "c", "\xc2\xb0" "f", "kelvin",
        "mk", "ohm", "ohms", "r", "kohm", "kohms", "mohm", "mohms", "kr", "mr", "\xce\xa9",
        "k\xce\xa9", "m\xce\xa9",
    };
    while (len > 0 && s[0] == ' ')
        s++, len--;
    while (len > 0 && s[len - 1] == ' ')
        len--;
    for (size_t u = 0; u < sizeof units / sizeof units[0]; u++) {
        size_t ul = strlen(units[u]), i = 0;
        if (ul != len)
            continue;
        for (; i < len; i++) {
            char c = s[i];
            if (c >= 'A' && c <= 'Z')
                c = (char)(c - 'A' + 'a');
            if (c != units[u][i])
                break;
        }
        if (i == len)
            return 1;
    }
    return 0;
}

/* Parse a number field that must be used whole. */
static int number(parser *ps, const field *f, const char *col, double *v)
{
    size_t n;
    if (f->len == 0)
        return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: field '%s': empty", ps->name, ps->line,
                            col);
    n = bgi_num_scan(f->s, f->len, '.', v);
    if (n != f->len && ps->delim != ',')
        n = bgi_num_scan(f->s, f->len, ',', v);
    if (n > 0 && n < f->len && unit_after(f->s + n, f->len - n))
        return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: field '%s': '%.*s': a unit in the "
                            "value; write the number alone, the unit belongs in the column "
                            "name (temp_c, temp_k or temp_f for temperatures in degC, K or "
                            "degF; ohms, u_ohms in ohm; u_temp_k in K)", ps->name, ps->line,
                            col, (int)(f->len > 40 ? 40 : f->len), f->s);
    if (n != f->len)
        return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: field '%s': not a number: '%.*s'",
                            ps->name, ps->line, col, (int)(f->len > 40 ? 40 : f->len), f->s);
    return BG_OK;
}

static int parse_header(parser *ps, const field *f, int nf, int *map, int *where_col)
{
    int ntemp = 0;
    for (int c = 0; c < C_COUNT; c++)
        where_col[c] = -1;
    for (int i = 0; i < nf; i++) {
        int c;
        for (c = 0; c < C_COUNT; c++)
            if (field_is(&f[i], col_names[c]))
                break;
        if (c == C_COUNT) {
            const char *near = bg_suggest(f[i].s, f[i].len, col_names, C_COUNT);
            char hint[48] = "";
            if (near)
                snprintf(hint, sizeof hint, "did you mean '%s'? ", near);
            return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: unknown column '%.*s' (%sknown "
                                "columns: " KNOWN_COLUMNS ")", ps->name, ps->line,
                                (int)(f[i].len > 40 ? 40 : f[i].len), f[i].s, hint);
        }
        if (where_col[c] >= 0)
            return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: column '%s' appears twice",
                                ps->name, ps->line, col_names[c]);
        where_col[c] = i;
        map[i] = c;
        if (c <= C_REF_OHMS)
            ntemp++;
    }
    if (ntemp != 1)
        return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: %s (temp_c, temp_k, temp_f or "
                            "ref_ohms)",
                            ps->name, ps->line,
                            ntemp ? "more than one temperature column"
                                  : "no temperature column");
    if (where_col[C_OHMS] < 0)
        return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: no resistance column 'ohms'",
                            ps->name, ps->line);
    return BG_OK;
}

static int push(bg_readings *out, const bg_reading *r)
{
    if (out->n == out->cap) {
        size_t cap = out->cap ? 2 * out->cap : 64;
        bg_reading *v = realloc(out->v, cap * sizeof *v);
        if (!v)
            return BG_ENOMEM;
        out->v = v, out->cap = cap;
    }
    out->v[out->n++] = *r;
    return BG_OK;
}

static int parse_row(parser *ps, const field *f, int nf, int nh, const int *map,
                     bg_readings *out)
{
    bg_reading r;
    memset(&r, 0, sizeof r);
    r.pt.line = ps->line;
    if (nf != nh)
        return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: %d field%s, but the header has %d",
                            ps->name, ps->line, nf, nf == 1 ? "" : "s", nh);
    for (int i = 0; i < nf; i++) {
        const char *col = col_names[map[i]];
        double v;
        switch (map[i]) {
        case C_TEMP_C: case C_TEMP_K: case C_TEMP_F: {
            bg_temp_unit u = map[i] == C_TEMP_C ? BG_UNIT_C
                           : map[i] == C_TEMP_K ? BG_UNIT_K : BG_UNIT_F;
            if (number(ps, &f[i], col, &v) != BG_OK)
                return BG_EINVAL;
            r.t_raw = v;
            r.pt.t_k = bg_units_to_k(v, u);
            if (!(r.pt.t_k > 0.0))
                return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: field '%s': %.*s is at or "
                                    "below absolute zero", ps->name, ps->line, col,
                                    (int)f[i].len, f[i].s);
            break;
        }
        case C_REF_OHMS:
            if (number(ps, &f[i], col, &v) != BG_OK)
                return BG_EINVAL;
            if (!(v > 0.0))
                return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: field 'ref_ohms': must be "
                                    "greater than 0", ps->name, ps->line);
            r.t_raw = v;
            r.pt.t_k = NAN; /* known only once the reference's coefficients are applied */
            break;
        case C_OHMS:
            if (number(ps, &f[i], col, &v) != BG_OK)
                return BG_EINVAL;
            if (!(v > 0.0))
                return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: field 'ohms': must be "
                                    "greater than 0", ps->name, ps->line);
            r.pt.r_ohm = v;
            break;
        case C_U_T:
            if (number(ps, &f[i], col, &v) != BG_OK)
                return BG_EINVAL;
            if (!(v > 0.0))
                return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: field 'u_temp_k': must be "
                                    "greater than 0", ps->name, ps->line);
            r.pt.u_t_k = v;
            break;
        case C_U_R:
            if (number(ps, &f[i], col, &v) != BG_OK)
                return BG_EINVAL;
            if (!(v >= 0.0))
                return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: field 'u_ohms': must not "
                                    "be negative", ps->name, ps->line);
            r.pt.u_r_ohm = v;
            break;
        case C_TIME:
            if (f[i].len >= sizeof r.time)
                return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: field 'time': too long",
                                    ps->name, ps->line);
            memcpy(r.time, f[i].s, f[i].len);
            r.time[f[i].len] = '\0';
            if (f[i].len && !bg_csv_valid_time(r.time))
                return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: field 'time': not an ISO "
                                    "8601 date-time: '%s'", ps->name, ps->line, r.time);
            break;
        case C_NOTE:
            if (f[i].len) {
                r.note = malloc(f[i].len + 1);
                if (!r.note)
                    return bg_error_set(ps->err, BG_ENOMEM, "out of memory");
                memcpy(r.note, f[i].s, f[i].len);
                r.note[f[i].len] = '\0';
                if (memchr(r.note, '\0', f[i].len)) {
                    free(r.note);
                    return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: field 'note': contains "
                                        "a NUL byte", ps->name, ps->line);
                }
            }
            break;
        default:
            break;
        }
    }
    if (push(out, &r) != BG_OK) {
        free(r.note);
        return bg_error_set(ps->err, BG_ENOMEM, "out of memory reading '%s'", ps->name);
    }
    return BG_OK;
}

int bg_csv_parse(const char *text, size_t len, const char *name, bg_readings *out,
                 bg_error *err)
{
    parser ps = { name ? name : "-", 0, 0, NULL, 0, err };
    field f[MAX_COLS];
    int map[MAX_COLS], where_col[C_COUNT], nh = 0, rc = BG_OK;
    size_t pos = 0;

    bg_readings_init(out);
    if (len >= 3 && memcmp(text, "\xEF\xBB\xBF", 3) == 0)
        pos = 3;
    {
        /* Size the array once: at most one reading per line. */
        size_t lines = 1;
        for (const char *p = text; (p = memchr(p, '\n', len - (size_t)(p - text))); p++)
            lines++;
        out->v = malloc(lines * sizeof *out->v);
        if (!out->v)
            return bg_error_set(err, BG_ENOMEM, "out of memory reading '%s'", ps.name);
        out->cap = lines;
    }
    while (pos < len) {
        const char *line = text + pos, *nl = memchr(line, '\n', len - pos);
        size_t ll = nl ? (size_t)(nl - line) : len - pos, k = 0;
        pos += ll + (nl ? 1 : 0);
        ps.line++;
        if (ll > 0 && line[ll - 1] == '\r')
            ll--;
        while (k < ll && (line[k] == ' ' || line[k] == '\t'))
            k++;
        if (k == ll || line[k] == '#')
            continue;
        if (memchr(line, '\0', ll)) {
            rc = bg_error_set(err, BG_EINVAL, "%s:%zu: contains a NUL byte: not a text file",
                              ps.name, ps.line);
            goto fail;
        }
        if (nh == 0) {
            ps.delim = detect_delim(line, ll);
            if (!ps.delim) {
                rc = bg_error_set(err, BG_EINVAL, "%s:%zu: cannot tell the delimiter from the "
                                  "header (use one of comma, semicolon or tab)", ps.name,
                                  ps.line);
                goto fail;
            }
            nh = split(&ps, line, ll, f, MAX_COLS);
            if (nh < 0 || (rc = parse_header(&ps, f, nh, map, where_col)) != BG_OK) {
                rc = nh < 0 ? (err ? (int)err->code : BG_EINVAL) : rc;
                goto fail;
            }
            out->delim = ps.delim;
            out->t_unit = where_col[C_TEMP_C] >= 0 ? BG_UNIT_C
                        : where_col[C_TEMP_K] >= 0 ? BG_UNIT_K
                        : where_col[C_TEMP_F] >= 0 ? BG_UNIT_F : BG_UNIT_NONE;
            out->ref_ohms = where_col[C_REF_OHMS] >= 0;
            out->has_u_t = where_col[C_U_T] >= 0, out->has_u_r = where_col[C_U_R] >= 0;
            out->has_time = where_col[C_TIME] >= 0, out->has_note = where_col[C_NOTE] >= 0;
            continue;
        }
        int nf = split(&ps, line, ll, f, MAX_COLS);
        if (nf < 0) {
            rc = err ? (int)err->code : BG_EINVAL;
            goto fail;
        }
        if ((rc = parse_row(&ps, f, nf, nh, map, out)) != BG_OK)
            goto fail;
    }
    free(ps.qbuf);
    if (nh == 0) {
        bg_readings_release(out);
        return bg_error_set(err, BG_EINVAL, "%s: no header line (an empty file?)", ps.name);
    }
    return BG_OK;
fail:
    free(ps.qbuf);
    bg_readings_release(out);
    return rc ? rc : BG_EINVAL;
}

int bg_csv_read_file(const char *path, bg_readings *out, bg_error *err)
{
    FILE *fp = strcmp(path, "-") == 0 ? stdin : fopen(path, "rb");
    char *buf = NULL;
    size_t len = 0, cap = 0;
    int rc = BG_OK;

    bg_readings_init(out);
    if (!fp)
        return bg_error_set(err, BG_ENOENT, "cannot open '%s': %s", path, strerror(errno));
    {
        /* A regular file is read into one buffer of its size; pipes grow as they come. */
        struct stat sb;
        if (fstat(fileno(fp), &sb) == 0 && S_ISREG(sb.st_mode) && sb.st_size > 0) {
            cap = (size_t)sb.st_size + 65536 + 1;
            buf = malloc(cap);
            if (!buf) {
                rc = bg_error_set(err, BG_ENOMEM, "out of memory reading '%s'", path);
                goto done;
            }
        }
    }
    for (;;) {
        if (cap - len < 65536) {
            size_t nc = cap ? 2 * cap : 131072;
            char *nb = realloc(buf, nc);
            if (!nb) {
                rc = bg_error_set(err, BG_ENOMEM, "out of memory reading '%s'", path);
                goto done;
            }
            buf = nb, cap = nc;
        }
        size_t got = fread(buf + len, 1, cap - len, fp);
        len += got;
        if (got == 0)
            break;
    }
    if (ferror(fp)) {
        rc = bg_error_set(err, BG_EIO, "cannot read '%s': %s", path, strerror(errno));
        goto done;
    }
    rc = bg_csv_parse(buf, len, strcmp(path, "-") == 0 ? "<stdin>" : path, out, err);
done:
    free(buf);
    if (fp != stdin)
        fclose(fp);
    return rc;
}

static int digits(const char *s, int n)
{
    for (int i = 0; i < n; i++)
        if (s[i] < '0' || s[i] > '9')
            return 0;
    return 1;
}

static int num2(const char *s) { return (s[0] - '0') * 10 + (s[1] - '0'); }

int bg_csv_valid_time(const char *s)
{
    static const int mdays[12] = { 31, 29, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31 };
    int y, mo, d;
    size_t n = strlen(s);

    if (n < 10 || !digits(s, 4) || s[4] != '-' || !digits(s + 5, 2) || s[7] != '-' ||
        !digits(s + 8, 2))
        return 0;
    y = atoi(s), mo = num2(s + 5), d = num2(s + 8);
    if (mo < 1 || mo > 12 || d < 1 || d > mdays[mo - 1])
        return 0;
    if (mo == 2 && d == 29 && !((y % 4 == 0 && y % 100 != 0) || y % 400 == 0))
        return 0;
    s += 10;
    if (!*s)
        return 1;
    if (*s != 'T' && *s != ' ')
        return 0;
    s++;
    if (!digits(s, 2) || s[2] != ':' || !digits(s + 3, 2) || num2(s) > 23 || num2(s + 3) > 59)
        return 0;
    s += 5;
    if (*s == ':') {
        if (!digits(s + 1, 2) || num2(s + 1) > 60)
            return 0;
        s += 3;
        if (*s == '.' || *s == ',') {
            s++;
            if (!digits(s, 1))
                return 0;
            while (*s >= '0' && *s <= '9')
                s++;
        }
    }
    if (!*s)
        return 1;
    if (*s == 'Z')
        return s[1] == '\0';
    if (*s != '+' && *s != '-')
        return 0;
    s++;
    if (!digits(s, 2) || num2(s) > 14)
        return 0;
    s += 2;
    if (*s == ':')
        s++;
    return digits(s, 2) && num2(s) <= 59 && s[2] == '\0';
}
