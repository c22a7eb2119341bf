/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* What the fuzz targets share: taking texts and numbers from the input, silencing the
** program's output, and small strict checkers of the writers' output (JSON by the grammar of
** RFC 8259, HTML and SVG as far as tags, attributes and entities go, C as far as the lexer
** goes).  A checker returns 0 when the text is well formed, else the offset of the first bad
** byte plus one; fuzz_fail() then aborts so that libFuzzer keeps the input. */
#ifndef BANDGAP_FUZZ_UTIL_H
#define BANDGAP_FUZZ_UTIL_H

#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* ---- reading the input ---------------------------------------------------------------- */

typedef struct fuzz_in {
    const uint8_t *p;
    size_t n;
} fuzz_in;

static inline unsigned fuzz_byte(fuzz_in *in)
{
    if (!in->n)
        return 0;
    in->n--;
    return *in->p++;
}

/* A text of at most 'max' - 1 bytes into 'buf': its length is the next byte (so overlong and
** empty texts both occur); the bytes are whatever follows, NUL bytes ending it early. */
static inline char *fuzz_text(fuzz_in *in, char *buf, size_t max)
{
    size_t len = fuzz_byte(in), i;
    if (len == 255) /* long: two more length bytes */
        len = 255 + (fuzz_byte(in) << 8 | fuzz_byte(in));
    if (len > max - 1)
        len = max - 1;
    if (len > in->n)
        len = in->n;
    for (i = 0; i < len && in->p[i]; i++)
        buf[i] = (char)in->p[i];
    buf[i] = '\0';
    in->p += len, in->n -= len;
    return buf;
}

/* A double: a byte chooses the typical value (0), values that break code (0, negatives, NaN, infinities,
** the extremes, subnormals) and ordinary ones; 0xff takes the next eight bytes as it is. */
static inline double fuzz_double(fuzz_in *in, double typical)
{
    static const double odd[] = { 0.0, -0.0, -1.0, 1.0, 1e308, -1e308, 1e-308, 5e-324,
                                  1.7976931348623157e308, 1e15, 1e-15, 273.15, 298.15, 1e4 };
    unsigned b = fuzz_byte(in);
    if (b == 0xff) {
        uint64_t u = 0;
        double d;
        for (int i = 0; i < 8; i++)
            u = u << 8 | fuzz_byte(in);
        memcpy(&d, &u, sizeof d);
        return d;
    }
    if (b == 0xfe)
        return NAN;
    if (b == 0xfd)
        return INFINITY;
    if (b == 0xfc)
        return -INFINITY;
    if (b == 0)
        return typical;
    if (b <= sizeof odd / sizeof odd[0])
        return odd[b - 1];
    /* otherwise near the typical value: a factor from 0.5 to 1.5 */
    return typical * (0.5 + (double)b / 255.0);
}

static inline void fuzz_fail(const char *what, const char *text, size_t len, size_t at)
{
    size_t from = at > 60 ? at - 60 : 0;
    fprintf(stderr, "fuzz: %s at byte %zu: ...%.*s<HERE>%.*s...\n", what, at,
            (int)(at - from), text + from, (int)(len - at < 60 ? len - at : 60), text + at);
    abort();
}

/* The program's standard output and error go to /dev/null (the sanitizers and libFuzzer
** write to file descriptor 2, not through 'stderr'). */
static inline void fuzz_quiet(void)
{
    static FILE *null;
    if (!null && (null = fopen("/dev/null", "w")) != NULL) {
        stdout = null;
        stderr = null;
    }
}

/* ---- UTF-8 ---------------------------------------------------------------------------- */

/* The length of the well-formed UTF-8 sequence at 's' (RFC 3629), 0 when it is not one. */
static inline size_t fuzz_utf8_len(const unsigned char *s, size_t n)
{
    unsigned c = s[0];
    size_t len;
    unsigned lo = 0x80, hi = 0xbf;
    if (c < 0x80)
        return 1;
    if (c >= 0xc2 && c <= 0xdf)
        len = 2;
    else if (c >= 0xe0 && c <= 0xef)
        len = 3, lo = c == 0xe0 ? 0xa0 : 0x80, hi = c == 0xed ? 0x9f : 0xbf;
    else if (c >= 0xf0 && c <= 0xf4)
        len = 4, lo = c == 0xf0 ? 0x90 : 0x80, hi = c == 0xf4 ? 0x8f : 0xbf;
    else
        return 0;
    if (n < len || s[1] < lo || s[1] > hi)
        return 0;
    for (size_t i = 2; i < len; i++)
        if (s[i] < 0x80 || s[i] > 0xbf)
            return 0;
    return len;
}

/* ---- JSON (RFC 8259) ------------------------------------------------------------------ */

typedef struct fuzz_json {
    const char *s;
    size_t n, i;
    int depth;
} fuzz_json;

static inline void fj_ws(fuzz_json *j)
{
    while (j->i < j->n && (j->s[j->i] == ' ' || j->s[j->i] == '\t' || j->s[j->i] == '\n' ||
                           j->s[j->i] == '\r'))
        j->i++;
}

static inline int fj_lit(fuzz_json *j, const char *w)
{
    size_t k = strlen(w);
    if (j->n - j->i < k || memcmp(j->s + j->i, w, k) != 0)
        return 0;
    j->i += k;
    return 1;
}

static inline int fj_digits(fuzz_json *j)
{
    size_t from = j->i;
    while (j->i < j->n && j->s[j->i] >= '0' && j->s[j->i] <= '9')
        j->i++;
    return j->i > from;
}

static inline int fj_number(fuzz_json *j)
{
    if (j->s[j->i] == '-')
        j->i++;
    if (j->i < j->n && j->s[j->i] == '0')
        j->i++;
    else if (j->i >= j->n || j->s[j->i] < '1' || j->s[j->i] > '9' || !fj_digits(j))
        return 0;
    if (j->i < j->n && j->s[j->i] == '.') {
        j->i++;
        if (!fj_digits(j))
            return 0;
    }
    if (j->i < j->n && (j->s[j->i] == 'e' || j->s[j->i] == 'E')) {
        j->i++;
        if (j->i < j->n && (j->s[j->i] == '+' || j->s[j->i] == '-'))
            j->i++;
        if (!fj_digits(j))
            return 0;
    }
    return 1;
}

static inline int fj_string(fuzz_json *j)
{
    j->i++; /* the opening quote */
    while (j->i < j->n) {
        unsigned char c = (unsigned char)j->s[j->i];
        if (c == '"') {
            j->i++;
            return 1;
        }
        if (c < 0x20)
            return 0;
        if (c == '\\') {
            if (++j->i >= j->n)
                return 0;
            c = (unsigned char)j->s[j->i];
            if (c == 'u') {
                for (int k = 1; k <= 4; k++) {
                    char h = j->i + (size_t)k < j->n ? j->s[j->i + (size_t)k] : 0;
                    if (!((h >= '0' && h <= '9') || (h >= 'a' && h <= 'f') ||
                          (h >= 'A' && h <= 'F')))
                        return 0;
                }
                j->i += 5;
            } else if (strchr("\"\\/bfnrt", c) && c) {
                j->i++;
            } else
                return 0;
            continue;
        }
        size_t len = fuzz_utf8_len((const unsigned char *)j->s + j->i, j->n - j->i);
        if (!len)
            return 0;
        j->i += len;
    }
    return 0;
}

static inline int fj_value(fuzz_json *j)
{
    fj_ws(j);
    if (j->i >= j->n || ++j->depth > 64)
        return 0;
    char c = j->s[j->i];
    int ok;
    if (c == '{' || c == '[') {
        char close = c == '{' ? '}' : ']';
        j->i++;
        fj_ws(j);
        if (j->i < j->n && j->s[j->i] == close) {
            j->i++;
            ok = 1;
        } else {
            for (;;) {
                if (c == '{') {
                    fj_ws(j);
                    if (j->i >= j->n || j->s[j->i] != '"' || !fj_string(j))
                        return 0;
                    fj_ws(j);
                    if (j->i >= j->n || j->s[j->i++] != ':')
                        return 0;
                }
                if (!fj_value(j))
                    return 0;
                fj_ws(j);
                if (j->i < j->n && j->s[j->i] == ',') {
                    j->i++;
                    continue;
                }
                if (j->i < j->n && j->s[j->i] == close) {
                    j->i++;
                    break;
                }
                return 0;
            }
            ok = 1;
        }
    } else if (c == '"')
        ok = fj_string(j);
    else if (c == '-' || (c >= '0' && c <= '9'))
        ok = fj_number(j);
    else
        ok = fj_lit(j, "true") || fj_lit(j, "false") || fj_lit(j, "null");
    j->depth--;
    return ok;
}

/* 0 when 's' is exactly one JSON value (surrounding white space allowed), else the offset
** of the trouble plus one. */
static inline size_t fuzz_json_check(const char *s, size_t n)
{
    fuzz_json j = { s, n, 0, 0 };
    if (!fj_value(&j))
        return j.i + 1;
    fj_ws(&j);
    return j.i == n ? 0 : j.i + 1;
}

/* ---- HTML and SVG --------------------------------------------------------------------- */

/* The elements the report templates use; any other element (script, img, a, iframe ...)
** is an injection. */
static inline int fh_known(const char *name, size_t len)
{
    static const char *const tags[] = {
        "html", "head", "body", "meta", "title", "style", "h4", "h1", "h2", "h3", "p", "div",
        "span", "strong", "em", "table", "thead", "tbody", "tr", "th", "td", "figure",
        "figcaption", "svg", "g", "text", "tspan", "rect", "line", "polyline", "polygon",
        "circle", "path", "title", "ul", "li", "br", "small", "code", "caption", "sup", "sub",
        "section", "header", "footer", "dl", "dt", "dd", "col", "colgroup", "hr", "b", "i",
        NULL
    };
    for (size_t k = 0; tags[k]; k++)
        if (strlen(tags[k]) == len && memcmp(tags[k], name, len) == 0)
            return 1;
    return 0;
}

static inline int fh_void(const char *name, size_t len)
{
    return (len == 4 && memcmp(name, "meta", 4) == 0) || (len == 2 && !memcmp(name, "br", 2)) ||
           (len == 2 && !memcmp(name, "hr", 2)) || (len == 3 && !memcmp(name, "col", 3));
}

/* An entity at 's' ("&amp;", "&#65;", "&#x41;"): its length, 0 when it is not one. */
static inline size_t fh_entity(const char *s, size_t n)
{
    size_t i = 1;
    if (i < n && s[i] == '#') {
        i++;
        int hex = i < n && (s[i] == 'x' || s[i] == 'X');
        size_t from = i += (size_t)hex;
        while (i < n && i - from < 8 && ((s[i] >= '0' && s[i] <= '9') ||
                                         (hex && ((s[i] >= 'a' && s[i] <= 'f') ||
                                                  (s[i] >= 'A' && s[i] <= 'F')))))
            i++;
        if (i == from)
            return 0;
    } else {
        size_t from = i;
        while (i < n && i - from < 10 && ((s[i] >= 'a' && s[i] <= 'z') ||
                                          (s[i] >= 'A' && s[i] <= 'Z')))
            i++;
        if (i == from)
            return 0;
    }
    return i < n && s[i] == ';' ? i + 1 : 0;
}

/* 0 when the page is well formed: valid UTF-8 with no control character but white space;
** every '<' opens a known element, closes the open one, or starts a comment or the doctype;
** elements balance; attribute names are plain, each value in double quotes with no '<' and
** no event handler ("on..."); every '&' starts an entity.  Style content is skipped. */
static inline size_t fuzz_html_check(const char *s, size_t n)
{
    const char *stack[64];
    size_t stlen[64], top = 0, i = 0;
    while (i < n) {
        unsigned char c = (unsigned char)s[i];
        if (c == '&') {
            size_t k = fh_entity(s + i, n - i);
            if (!k)
                return i + 1;
            i += k;
            continue;
        }
        if (c != '<') {
            size_t k = fuzz_utf8_len((const unsigned char *)s + i, n - i);
            if (!k || (c < 0x20 && c != '\n' && c != '\t' && c != '\r') || c == 0x7f)
                return i + 1;
            i += k;
            continue;
        }
        if (n - i >= 4 && memcmp(s + i, "<!--", 4) == 0) {
            const char *e = NULL;
            for (size_t k = i + 4; k + 3 <= n; k++)
                if (memcmp(s + k, "-->", 3) == 0) {
                    e = s + k;
                    break;
                }
            if (!e)
                return i + 1;
            i = (size_t)(e - s) + 3;
            continue;
        }
        if (n - i >= 9 && memcmp(s + i, "<!DOCTYPE", 9) == 0 && i == 0) {
            while (i < n && s[i] != '>')
                i++;
            i++;
            continue;
        }
        int end = i + 1 < n && s[i + 1] == '/';
        size_t at = i, from = i + 1 + (size_t)end, k = from;
        while (k < n && ((s[k] >= 'a' && s[k] <= 'z') || (s[k] >= '0' && s[k] <= '9')))
            k++;
        if (k == from || !fh_known(s + from, k - from))
            return at + 1;
        const char *name = s + from;
        size_t nlen = k - from;
        if (end) {
            if (k >= n || s[k] != '>' || !top || stlen[top - 1] != nlen ||
                memcmp(stack[top - 1], name, nlen) != 0)
                return at + 1;
            top--;
            i = k + 1;
            continue;
        }
        int self = 0;
        for (;;) { /* attributes */
            size_t sp = k;
            while (k < n && (s[k] == ' ' || s[k] == '\n' || s[k] == '\t'))
                k++;
            if (k >= n)
                return at + 1;
            if (s[k] == '>')
                break;
            if (s[k] == '/' && k + 1 < n && s[k + 1] == '>') {
                self = 1, k++;
                break;
            }
            size_t an = k;
            while (k < n && ((s[k] >= 'a' && s[k] <= 'z') || (s[k] >= 'A' && s[k] <= 'Z') ||
                             (s[k] >= '0' && s[k] <= '9') || s[k] == '-' || s[k] == ':'))
                k++;
            if (k == an || k == sp || (k - an >= 2 && s[an] == 'o' && s[an + 1] == 'n'))
                return k + 1;
            if (k < n && s[k] == '=') {
                if (++k >= n || s[k] != '"')
                    return k + 1;
                for (k++; k < n && s[k] != '"'; k++) {
                    if (s[k] == '<')
                        return k + 1;
                    if (s[k] == '&') {
                        size_t e = fh_entity(s + k, n - k);
                        if (!e)
                            return k + 1;
                        k += e - 1;
                    }
                }
                if (k >= n)
                    return at + 1;
                k++;
            }
        }
        i = k + 1;
        if (self || fh_void(name, nlen))
            continue;
        if (top == sizeof stack / sizeof stack[0])
            return at + 1;
        stack[top] = name, stlen[top++] = nlen;
        if (nlen == 5 && memcmp(name, "style", 5) == 0) { /* CSS: up to </style> */
            while (i + 8 <= n && memcmp(s + i, "</style>", 8) != 0) {
                if (s[i] == '<')
                    return i + 1;
                i++;
            }
        }
    }
    return top ? n + 1 : 0;
}

/* ---- C ---------------------------------------------------------------------------------- */

/* 0 when 's' lexes as C: comments closed with no "/" "*" inside and no line-splicing
** backslash or trigraph (gcc -Wall warns of both), string and character literals closed on their line with known
** escapes, and outside them only printable ASCII and white space. */
static inline size_t fuzz_c_check(const char *s, size_t n)
{
    for (size_t i = 0; i < n; i++) {
        unsigned char c = (unsigned char)s[i];
        if (c == '?' && i + 2 < n && s[i + 1] == '?' && strchr("=/'()!<>-", s[i + 2]))
            return i + 1;
        if (c == '\\' && i + 1 < n && (s[i + 1] == '\n' || s[i + 1] == '\r'))
            return i + 1;
        if (c == '/' && i + 1 < n && s[i + 1] == '*') {
            size_t k;
            for (k = i + 2; k + 1 < n && !(s[k] == '*' && s[k + 1] == '/'); k++) {
                if (s[k] == '/' && s[k + 1] == '*')
                    return k + 1;
                if ((unsigned char)s[k] >= 0x7f ||
                    ((unsigned char)s[k] < 0x20 && s[k] != '\n' && s[k] != '\t'))
                    return k + 1;
                if (s[k] == '?' && s[k + 1] == '?' && k + 3 < n && s[k + 2] == '/' &&
                    s[k + 3] == '\n') /* a trigraph splicing lines: gcc -Wall warns */
                    return k + 1;
            }
            if (k + 1 >= n)
                return i + 1;
            i = k + 1;
            continue;
        }
        if (c == '/' && i + 1 < n && s[i + 1] == '/') {
            while (i < n && s[i] != '\n') {
                if (s[i] == '\\' || (unsigned char)s[i] >= 0x7f ||
                    (s[i] == '?' && i + 2 < n && s[i + 1] == '?' && s[i + 2] == '/'))
                    return i + 1;
                i++;
            }
            continue;
        }
        if (c == '"' || c == '\'') {
            size_t k;
            for (k = i + 1; k < n && s[k] != (char)c; k++) {
                if (s[k] == '\n' || (unsigned char)s[k] < 0x20 || (unsigned char)s[k] >= 0x7f)
                    return k + 1;
                if (s[k] == '\\') {
                    if (k + 1 >= n || !strchr("\\\"'?abfnrtvx01234567", s[k + 1]) || !s[k + 1])
                        return k + 1;
                    k++;
                }
            }
            if (k >= n || (c == '\'' && k == i + 1))
                return i + 1;
            i = k;
            continue;
        }
        if ((c < 0x20 && c != '\n' && c != '\t') || c >= 0x7f)
            return i + 1;
    }
    return 0;
}

#endif
