/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The readings CSV reader: header-named columns in any order, delimiter detected from the
** header, RFC 4180 quoting, '#' comment lines, decimal comma with ';' or tab delimiters. */
#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "bandgap/csv.h"
#include "bandgap/model.h"
#include "bandgap/text.h"
#include "bandgap/suggest.h"
#include "num_int.h"

enum col { C_TEMP_C, C_TEMP_K, C_TEMP_F, C_REF_OHMS, C_OHMS, C_U_T, C_U_R, C_TIME, C_NOTE,
           C_VOLTS, C_REPORTED, C_CODE, C_U_VOLTS, C_EXCITE, C_COUNT };
static const char *col_names[C_COUNT] = { "temp_c", "temp_k", "temp_f", "ref_ohms", "ohms",
                                          "u_temp_k", "u_ohms", "time", "note", "volts",
                                          "reported_c", "code", "u_volts", "excite_a" };
#define KNOWN_COLUMNS "temp_c, temp_k, temp_f, ref_ohms, ohms, u_temp_k, u_ohms, time, note, " \
                      "volts, reported_c, code, u_volts, excite_a"
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
    int rc;          /* the status of split's last failure */
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
            ps->rc = bg_error_set(ps->err, BG_ENOMEM, "out of memory reading '%s'", ps->name);
            return -1;
        }
        ps->qbuf = nb, ps->qcap = len + 1;
    }
    for (;;) {
        if (nf == maxf) {
            ps->rc = bg_error_set(ps->err, BG_EINVAL, "%s:%zu: more than %d fields", ps->name,
                                  ps->line, maxf);
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
                    ps->rc = bg_error_set(ps->err, BG_EINVAL, "%s:%zu: field %d: "
                                          "unterminated quote", ps->name, ps->line, nf + 1);
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
                ps->rc = bg_error_set(ps->err, BG_EINVAL, "%s:%zu: field %d: text after "
                                      "closing quote", ps->name, ps->line, nf + 1);
                return -1;
            }
            f[nf].s = ps->qbuf + start, f[nf].len = q - start, f[nf].quoted = 1;
        } else {
            size_t start = i;
            while (i < len && line[i] != ps->delim) {
                if (line[i] == '"') {
                    ps->rc = bg_error_set(ps->err, BG_EINVAL, "%s:%zu: field %d: stray "
                                          "quote", ps->name, ps->line, nf + 1);
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
    int nread = (where_col[C_OHMS] >= 0) + (where_col[C_VOLTS] >= 0) +
                (where_col[C_REPORTED] >= 0) + (where_col[C_CODE] >= 0);
    if (nread == 0)
        return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: no resistance column 'ohms'",
                            ps->name, ps->line);
    if (nread > 1)
        return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: more than one reading column (give "
                            "one of ohms, volts, reported_c, code)", ps->name, ps->line);
    if (where_col[C_U_R] >= 0 && where_col[C_OHMS] < 0)
        return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: column 'u_ohms' goes with 'ohms'",
                            ps->name, ps->line);
    if (where_col[C_U_VOLTS] >= 0 && where_col[C_VOLTS] < 0)
        return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: column 'u_volts' goes with 'volts'",
                            ps->name, ps->line);
    if (where_col[C_EXCITE] >= 0 && where_col[C_VOLTS] < 0)
        return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: column 'excite_a' (the excitation "
                            "current of a junction) goes with 'volts'", ps->name, ps->line);
    return BG_OK;
}

/* The reader: lines from a stream (read in blocks into a buffer that holds at least one whole
** line) or from bytes in memory, the header's map, and the reading last parsed, whose note
** lives in 'note' until the next call. */
struct bg_csv_reader {
    FILE *fp;            /* the stream read now; NULL for bytes in memory */
    FILE *own;           /* the stream opened here, closed by _free; or NULL */
    FILE *spool;         /* with BG_CSV_TWICE on a stream that cannot seek: a copy of what
                         ** was read, read again by _rewind (closed by _free); or NULL */
    off_t start;         /* a seekable stream's position at the start */
    int seekable, eof, spooling;
    const char *data;    /* the bytes; [beg, end) is not yet taken */
    char *buf;           /* a stream's buffer ('data'), 'cap' bytes */
    size_t cap, beg, end, mem_len;
    parser ps;
    field f[MAX_COLS];
    int map[MAX_COLS], nh;
    bg_readings shape;   /* the header's columns, no readings */
    bg_reading cur;
    char *note;          /* 'cur.note' when it has one */
    size_t note_cap;
    char name[BG_NOTE];
};

enum { BLOCK = 65536 };

/* More bytes into the buffer: what is not taken moves to the front, the buffer doubles when
** a line fills it, and a copy goes to the spool when there is one. */
static int refill(bg_csv_reader *rd, bg_error *err)
{
    size_t left = rd->end - rd->beg, got;
    if (rd->beg > 0 && left > 0)
        memmove(rd->buf, rd->buf + rd->beg, left);
    rd->beg = 0, rd->end = left;
    if (rd->cap - rd->end < BLOCK / 2) {
        size_t cap = rd->cap ? 2 * rd->cap : BLOCK;
        char *nb = realloc(rd->buf, cap);
        if (!nb)
            return bg_error_set(err, BG_ENOMEM, "out of memory reading '%s'", rd->name);
        rd->buf = nb, rd->cap = cap;
    }
    rd->data = rd->buf;
    got = fread(rd->buf + rd->end, 1, rd->cap - rd->end, rd->fp);
    if (got == 0) {
        if (ferror(rd->fp))
            return bg_error_set(err, BG_EIO, "cannot read '%s': %s", rd->name, strerror(errno));
        rd->eof = 1;
    }
    if (got > 0 && rd->spooling && fwrite(rd->buf + rd->end, 1, got, rd->spool) != got)
        return bg_error_set(err, BG_EIO, "cannot keep a copy of '%s' to read it twice: %s",
                            rd->name, strerror(errno));
    rd->end += got;
    return BG_OK;
}

/* The next line without its end ('\n', "\r\n" or a lone '\r'): 1, or 0 at the end of the
** input, or -1 after setting the error. */
static int next_line(bg_csv_reader *rd, const char **line, size_t *ll, bg_error *err)
{
    for (;;) {
        const char *p = rd->data + rd->beg;
        size_t avail = rd->end - rd->beg;
        const char *nl = avail ? memchr(p, '\n', avail) : NULL;
        size_t span = nl ? (size_t)(nl - p) : avail;
        const char *cr = span ? memchr(p, '\r', span) : NULL;
        if (cr) {
            size_t k = (size_t)(cr - p);
            if (k + 1 < avail || rd->eof) {
                *line = p, *ll = k;
                rd->beg += k + 1 + (k + 1 < avail && p[k + 1] == '\n');
                return 1;
            }
        } else if (nl) {
            *line = p, *ll = span;
            rd->beg += span + 1;
            return 1;
        } else if (rd->eof) {
            if (avail == 0)
                return 0;
            *line = p, *ll = avail;
            rd->beg = rd->end;
            return 1;
        }
        if (refill(rd, err) != BG_OK)
            return -1;
    }
}

/* The next line that is neither blank nor a comment ('*ll' 0 and 1 at the end of the input),
** refused when it holds a NUL byte: 1, 0 at the end, -1 after setting the error. */
static int next_content(bg_csv_reader *rd, const char **line, size_t *ll, bg_error *err)
{
    for (;;) {
        int got = next_line(rd, line, ll, err);
        size_t k = 0;
        if (got <= 0)
            return got;
        rd->ps.line++;
        while (k < *ll && ((*line)[k] == ' ' || (*line)[k] == '\t'))
            k++;
        if (k == *ll || (*line)[k] == '#')
            continue;
        if (memchr(*line, '\0', *ll)) {
            bg_error_set(err, BG_EINVAL, "%s:%zu: contains a NUL byte: not a text file",
                         rd->name, rd->ps.line);
            return -1;
        }
        return 1;
    }
}

/* From the start: past a UTF-8 byte order mark, up to and including the header line. */
static int read_header(bg_csv_reader *rd, bg_error *err)
{
    int where_col[C_COUNT], got, rc;
    const char *line;
    size_t ll;
    bg_readings *sh = &rd->shape;

    rd->ps.line = 0;
    rd->ps.err = err;
    while (rd->fp && !rd->eof && rd->end - rd->beg < 3)
        if ((rc = refill(rd, err)) != BG_OK)
            return rc;
    if (rd->end - rd->beg >= 3 && memcmp(rd->data + rd->beg, "\xEF\xBB\xBF", 3) == 0)
        rd->beg += 3;
    if ((got = next_content(rd, &line, &ll, err)) <= 0)
        return got < 0 ? (err ? (int)err->code : BG_EINVAL)
                       : bg_error_set(err, BG_EINVAL, "%s: no header line (an empty file?)",
                                      rd->name);
    rd->ps.delim = detect_delim(line, ll);
    if (!rd->ps.delim)
        return bg_error_set(err, BG_EINVAL, "%s:%zu: cannot tell the delimiter from the header "
                            "(use one of comma, semicolon or tab)", rd->name, rd->ps.line);
    rd->nh = split(&rd->ps, line, ll, rd->f, MAX_COLS);
    if (rd->nh < 0)
        return rd->ps.rc;
    if ((rc = parse_header(&rd->ps, rd->f, rd->nh, rd->map, where_col)) != BG_OK)
        return rc;
    bg_readings_init(sh);
    sh->delim = rd->ps.delim;
    sh->t_unit = where_col[C_TEMP_C] >= 0 ? BG_UNIT_C
               : where_col[C_TEMP_K] >= 0 ? BG_UNIT_K
               : where_col[C_TEMP_F] >= 0 ? BG_UNIT_F : BG_UNIT_NONE;
    sh->ref_ohms = where_col[C_REF_OHMS] >= 0;
    sh->has_u_t = where_col[C_U_T] >= 0, sh->has_u_r = where_col[C_U_R] >= 0;
    sh->has_time = where_col[C_TIME] >= 0, sh->has_note = where_col[C_NOTE] >= 0;
    sh->quantity = where_col[C_VOLTS] >= 0      ? BG_QTY_VOLTAGE
                 : where_col[C_REPORTED] >= 0   ? BG_QTY_REPORTED_T
                 : where_col[C_CODE] >= 0       ? BG_QTY_CODE : BG_QTY_RESISTANCE;
    sh->has_u_r = sh->has_u_r || where_col[C_U_VOLTS] >= 0;
    sh->has_excite = where_col[C_EXCITE] >= 0;
    return BG_OK;
}

/* A reader of the stream 'fp' (NULL: the 'len' bytes at 'text'), its header read. */
static int reader_new(FILE *fp, const char *text, size_t len, const char *name, int flags,
                      bg_csv_reader **out, bg_error *err)
{
    bg_csv_reader *rd = calloc(1, sizeof *rd);
    struct stat sb;
    int rc;

    *out = NULL;
    if (!rd)
        return bg_error_set(err, BG_ENOMEM, "out of memory reading '%s'", name);
    snprintf(rd->name, sizeof rd->name, "%s", name);
    rd->ps.name = rd->name;
        if (fp) {
        rd->fp = fp;
        rd->start = ftello(fp);
        rd->seekable = rd->start >= 0 && fstat(fileno(fp), &sb) == 0 && S_ISREG(sb.st_mode);
        if ((flags & BG_CSV_TWICE) && !rd->seekable) {
            if (!(rd->spool = tmpfile())) {
                rc = bg_error_set(err, BG_EIO, "cannot make a temporary file to read '%s' "
                                  "twice: %s", rd->name, strerror(errno));
                bg_csv_reader_free(rd);
                return rc;
            }
            rd->spooling = 1;
        }
    } else
        rd->data = text, rd->end = rd->mem_len = len, rd->eof = 1;
    if ((rc = read_header(rd, err)) != BG_OK) {
        bg_csv_reader_free(rd);
        return rc;
    }
    *out = rd;
    return BG_OK;
}

int bg_csv_reader_new(FILE *fp, const char *name, int flags, bg_csv_reader **out,
                      bg_error *err)
{
    return reader_new(fp, NULL, 0, name ? name : "-", flags, out, err);
}

int bg_csv_reader_open(const char *path, int flags, bg_csv_reader **out, bg_error *err)
{
    int is_stdin = strcmp(path, "-") == 0, rc;
    FILE *fp = is_stdin ? stdin : fopen(path, "rb");

    *out = NULL;
    if (!fp)
        return bg_error_set(err, BG_ENOENT, "cannot open '%s': %s", path, strerror(errno));
    rc = reader_new(fp, NULL, 0, is_stdin ? "<stdin>" : path, flags, out, err);
    if (rc == BG_OK)
        (*out)->own = is_stdin ? NULL : fp;
    else if (!is_stdin)
        fclose(fp);
    return rc;
}

void bg_csv_reader_free(bg_csv_reader *rd)
{
    if (!rd)
        return;
    if (rd->own)
        fclose(rd->own);
    if (rd->spool)
        fclose(rd->spool);
    free(rd->buf);
    free(rd->ps.qbuf);
    free(rd->note);
    free(rd);
}

const bg_readings *bg_csv_reader_shape(const bg_csv_reader *rd)
{
    return &rd->shape;
}

const char *bg_csv_reader_name(const bg_csv_reader *rd)
{
    return rd->name;
}

int bg_csv_reader_rewind(bg_csv_reader *rd, bg_error *err)
{
    bg_readings was = rd->shape;
    int map[MAX_COLS], nh = rd->nh, rc;

    memcpy(map, rd->map, sizeof map);
    if (rd->fp && !rd->seekable && !rd->spooling)
        return bg_error_set(err, BG_EINVAL, "cannot read '%s' again: it cannot seek (a pipe) "
                            "and was not opened to be read twice", rd->name);
    if (rd->fp && rd->spooling) {
        /* the rest of the input into the copy first, then the copy from its start */
        while (!rd->eof) {
            rd->beg = rd->end;
            if ((rc = refill(rd, err)) != BG_OK)
                return rc;
        }
        if (fflush(rd->spool) != 0 || fseeko(rd->spool, 0, SEEK_SET) != 0)
            return bg_error_set(err, BG_EIO, "cannot read the copy of '%s' again: %s",
                                rd->name, strerror(errno));
        rd->fp = rd->spool, rd->spooling = 0, rd->seekable = 1, rd->start = 0;
    } else if (rd->fp && fseeko(rd->fp, rd->start, SEEK_SET) != 0)
        return bg_error_set(err, BG_EIO, "cannot read '%s' again: %s", rd->name,
                            strerror(errno));
    if (rd->fp) {
        clearerr(rd->fp);
        rd->beg = rd->end = 0, rd->eof = 0;
    } else
        rd->beg = 0, rd->end = rd->mem_len;
    if ((rc = read_header(rd, err)) != BG_OK)
        return rc;
    if (rd->nh != nh || memcmp(map, rd->map, (size_t)nh * sizeof *map) != 0 ||
        rd->shape.delim != was.delim)
        return bg_error_set(err, BG_EIO, "'%s' changed while it was read", rd->name);
    return BG_OK;
}

/* One value of a reading's row into 'r' (the note into the reader's buffer). */
static int parse_field(bg_csv_reader *rd, const field *f, int c, bg_reading *r)
{
    parser *ps = &rd->ps;
    const char *col = col_names[c];
    double v = 0.0;
    int rc;

    if ((c <= C_U_R || c >= C_VOLTS) && (rc = number(ps, f, col, &v)) != BG_OK)
        return rc;
    switch (c) {
    case C_VOLTS: case C_REPORTED: case C_CODE:
        if (!isfinite(v))
            return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: field '%s': not a finite number",
                                ps->name, ps->line, col);
        r->pt.r_ohm = v; /* the reading in the quantity of the file (readings.h) */
        return BG_OK;
    case C_U_VOLTS:
        if (!(v >= 0.0))
            return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: field 'u_volts': must not be "
                                "negative", ps->name, ps->line);
        r->pt.u_r_ohm = v;
        return BG_OK;
    case C_EXCITE:
        if (!(v > 0.0))
            return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: field 'excite_a': must be greater "
                                "than 0", ps->name, ps->line);
        r->excite_a = v;
        return BG_OK;
    case C_TEMP_C: case C_TEMP_K: case C_TEMP_F:
        r->t_raw = v;
        r->pt.t_k = bg_units_to_k(v, c == C_TEMP_C ? BG_UNIT_C : c == C_TEMP_K ? BG_UNIT_K
                                                                               : BG_UNIT_F);
        if (!(r->pt.t_k > 0.0))
            return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: field '%s': %.*s is at or below "
                                "absolute zero", ps->name, ps->line, col, (int)f->len, f->s);
        return BG_OK;
    case C_REF_OHMS: case C_OHMS: case C_U_T:
        if (!(v > 0.0))
            return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: field '%s': must be greater "
                                "than 0", ps->name, ps->line, col);
        if (c == C_REF_OHMS)
            r->t_raw = v, r->pt.t_k = NAN; /* known once the reference's coefficients apply */
        else if (c == C_OHMS)
            r->pt.r_ohm = v;
        else
            r->pt.u_t_k = v;
        return BG_OK;
    case C_U_R:
        if (!(v >= 0.0))
            return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: field 'u_ohms': must not be "
                                "negative", ps->name, ps->line);
        r->pt.u_r_ohm = v;
        return BG_OK;
    case C_TIME:
        if (f->len >= sizeof r->time)
            return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: field 'time': too long", ps->name,
                                ps->line);
        memcpy(r->time, f->s, f->len);
        r->time[f->len] = '\0';
        if (f->len && !bg_csv_valid_time(r->time))
            return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: field 'time': not an ISO 8601 "
                                "date-time: '%s'", ps->name, ps->line, r->time);
        return BG_OK;
    case C_NOTE:
        if (!f->len)
            return BG_OK;
        if (memchr(f->s, '\0', f->len))
            return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: field 'note': contains a NUL "
                                "byte", ps->name, ps->line);
        if (bg_text_check("field 'note'", f->s, f->len, ps->err) != BG_OK) {
            bg_error_prefix(ps->err, "%s:%zu", ps->name, ps->line);
            return BG_EINVAL;
        }
        if (rd->note_cap < f->len + 1) {
            char *nb = realloc(rd->note, f->len + 1);
            if (!nb)
                return bg_error_set(ps->err, BG_ENOMEM, "out of memory");
            rd->note = nb, rd->note_cap = f->len + 1;
        }
        memcpy(rd->note, f->s, f->len);
        rd->note[f->len] = '\0';
        r->note = rd->note;
        return BG_OK;
    default:
        return BG_OK;
    }
}

/* The row of 'nf' fields just split into 'rd->cur'. */
static int parse_row(bg_csv_reader *rd, int nf)
{
    bg_reading *r = &rd->cur;
    parser *ps = &rd->ps;

    memset(r, 0, sizeof *r);
    r->pt.line = ps->line;
    if (nf != rd->nh)
        return bg_error_set(ps->err, BG_EINVAL, "%s:%zu: %d field%s, but the header has %d",
                            ps->name, ps->line, nf, nf == 1 ? "" : "s", rd->nh);
    for (int i = 0; i < nf; i++) {
        int rc = parse_field(rd, &rd->f[i], rd->map[i], r);
        if (rc != BG_OK)
            return rc;
    }
    return BG_OK;
}

int bg_csv_reader_next(bg_csv_reader *rd, const bg_reading **r, bg_error *err)
{
    const char *line;
    size_t ll;
    int got, nf, rc;

    *r = NULL;
    rd->ps.err = err;
    if ((got = next_content(rd, &line, &ll, err)) < 0)
        return err ? (int)err->code : BG_EINVAL;
    if (got == 0)
        return BG_OK;
    if ((nf = split(&rd->ps, line, ll, rd->f, MAX_COLS)) < 0)
        return rd->ps.rc;
    if ((rc = parse_row(rd, nf)) != BG_OK)
        return rc;
    *r = &rd->cur;
    return BG_OK;
}

static int push(bg_readings *out, const bg_reading *r)
{
    bg_reading *slot;
    if (out->n == out->cap) {
        size_t cap = out->cap ? 2 * out->cap : 64;
        bg_reading *v = realloc(out->v, cap * sizeof *v);
        if (!v)
            return BG_ENOMEM;
        out->v = v, out->cap = cap;
    }
    slot = &out->v[out->n];
    *slot = *r;
    if (r->note) {
        size_t len = strlen(r->note) + 1;
        if (!(slot->note = malloc(len)))
            return BG_ENOMEM;
        memcpy(slot->note, r->note, len);
    }
    out->n++;
    return BG_OK;
}

/* Every reading of 'rd' into 'out' (left empty on error). */
static int read_all(bg_csv_reader *rd, bg_readings *out, bg_error *err)
{
    const bg_reading *r;
    int rc;

    *out = rd->shape;
    for (;;) {
        if ((rc = bg_csv_reader_next(rd, &r, err)) != BG_OK)
            break;
        if (!r)
            return BG_OK;
        if (push(out, r) != BG_OK) {
            rc = bg_error_set(err, BG_ENOMEM, "out of memory reading '%s'", rd->name);
            break;
        }
    }
    bg_readings_release(out);
    return rc;
}

int bg_csv_parse(const char *text, size_t len, const char *name, bg_readings *out,
                 bg_error *err)
{
    bg_csv_reader *rd = NULL;
    int rc;

    bg_readings_init(out);
    if ((rc = reader_new(NULL, text, len, name ? name : "-", 0, &rd, err)) == BG_OK)
        rc = read_all(rd, out, err);
    bg_csv_reader_free(rd);
    return rc;
}

int bg_csv_read_file(const char *path, bg_readings *out, bg_error *err)
{
    bg_csv_reader *rd = NULL;
    int rc;

    bg_readings_init(out);
    if ((rc = bg_csv_reader_open(path, 0, &rd, err)) == BG_OK)
        rc = read_all(rd, out, err);
    bg_csv_reader_free(rd);
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
