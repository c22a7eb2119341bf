/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Messages, JSON output and whole output files for the bandgap program. */
/* realpath() and fchmod() are in POSIX.1-2008 with the XSI option */
#define _XOPEN_SOURCE 700
#include <ctype.h>
#include <errno.h>
#include <float.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <fcntl.h>
#include <pwd.h>
#include <sys/stat.h>
#include <unistd.h>

#include "cli.h"

void cli_error(const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    fputs("bandgap: ", stderr);
    vfprintf(stderr, fmt, ap);
    fputc('\n', stderr);
    va_end(ap);
}

void cli_warn(const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    fputs("bandgap: warning: ", stderr);
    vfprintf(stderr, fmt, ap);
    fputc('\n', stderr);
    va_end(ap);
}

const char *cli_who(const char *given, char *buf, size_t size, char *how, size_t hsize)
{
    const char *user = getenv("USER");
    uid_t uid = geteuid();
    struct passwd *pw;
    how[0] = '\0';
    if (given || (user && *user)) {
        snprintf(buf, size, "%s", given ? given : user);
        return buf;
    }
    pw = getpwuid(uid);
    if (pw && pw->pw_name && *pw->pw_name) {
        snprintf(buf, size, "%s", pw->pw_name);
        snprintf(how, hsize, "the login name of user id %lu ($USER is not set)",
                 (unsigned long)uid);
    } else {
        snprintf(buf, size, "uid %lu", (unsigned long)uid);
        snprintf(how, hsize, "the user id: $USER is not set and user id %lu has no login name",
                 (unsigned long)uid);
    }
    return buf;
}

void cli_who_note(const char *who, const char *how)
{
    if (how[0])
        fprintf(stderr, "bandgap: note: recorded by '%s', %s; give --by NAME to name "
                "someone else\n", who, how);
}

int cli_usage_error(const char *cmd, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    fputs("bandgap: ", stderr);
    if (cmd)
        fprintf(stderr, "%s: ", cmd);
    vfprintf(stderr, fmt, ap);
    fputc('\n', stderr);
    va_end(ap);
    fprintf(stderr, "Try 'bandgap %s%s--help' for more information.\n", cmd ? cmd : "",
            cmd ? " " : "");
    return CLI_EUSAGE;
}

int cli_fail(const char *what, const bg_error *err)
{
    if (what)
        cli_error("%s: %s", what, err->msg);
    else
        cli_error("%s", err->msg);
    return err->code ? (int)err->code : BG_EINTERNAL;
}

/* One number of a list: decimal only (strtod would also take hex, "inf" and "nan"), any length,
** finite. */
static int list_number(const char *p, size_t len, double *v, bg_error *err)
{
    char *buf = malloc(len + 1), *end;
    int rc = BG_OK;
    if (!buf)
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    memcpy(buf, p, len);
    buf[len] = '\0';
    *v = strtod(buf, &end);
    if (*end != '\0' || end == buf || strpbrk(buf, "xXiInN"))
        rc = bg_error_set(err, BG_EINVAL, "'%s': not a number", buf);
    else if (!isfinite(*v))
        rc = bg_error_set(err, BG_EINVAL, "'%s': the number is beyond the largest finite value "
                          "(about 1.8e308)", buf);
    free(buf);
    return rc;
}

int cli_parse_list(const char *s, double *v, size_t max, size_t *n, bg_error *err)
{
    size_t k = 0;
    const char *p = s;
    for (;;) {
        const char *c = strchr(p, ',');
        size_t len = c ? (size_t)(c - p) : strlen(p);
        int rc;
        if (len == 0)
            return bg_error_set(err, BG_EINVAL, "'%s': expected numbers separated by commas", s);
        if (k == max)
            return bg_error_set(err, BG_EINVAL, "'%s': more than %zu numbers", s, max);
        if ((rc = list_number(p, len, &v[k], err)) != BG_OK)
            return rc;
        k++;
        if (!c)
            break;
        p = c + 1;
    }
    *n = k;
    return BG_OK;
}

int cli_parse_temps(const char *s, double *t_k, size_t max, size_t *n, bg_error *err)
{
    *n = 0;
    for (const char *p = s;;) {
        const char *c = strchr(p, ',');
        size_t len = c ? (size_t)(c - p) : strlen(p);
        char *buf;
        int rc;
        if (len == 0 || *n == max)
            return bg_error_set(err, BG_EINVAL, "'%s': expected at most %zu temperatures like "
                                "0C,25C,50C", s, max);
        if (!(buf = malloc(len + 1)))
            return bg_error_set(err, BG_ENOMEM, "out of memory");
        memcpy(buf, p, len);
        buf[len] = '\0';
        rc = bg_units_parse_temp(buf, BG_UNIT_NONE, &t_k[(*n)++], err);
        free(buf);
        if (rc != BG_OK)
            return rc;
        if (!c)
            return BG_OK;
        p = c + 1;
    }
}

/* ---- JSON ---- */

static void sep(json_out *j, const char *key)
{
    if (j->depth > 0) {
        if (j->need_comma[j->depth])
            fputc(',', j->f);
        j->need_comma[j->depth] = 1;
    }
    if (key) {
        bg_json_write_string(j->f, key);
        fputc(':', j->f);
    }
}

void json_begin(json_out *j, FILE *f)
{
    memset(j, 0, sizeof *j);
    j->f = f;
}

void json_end(json_out *j)
{
    fputc('\n', j->f);
}

void json_obj(json_out *j, const char *key)
{
    sep(j, key);
    fputc('{', j->f);
    j->need_comma[++j->depth] = 0;
}

void json_obj_end(json_out *j)
{
    j->depth--;
    fputc('}', j->f);
}

void json_arr(json_out *j, const char *key)
{
    sep(j, key);
    fputc('[', j->f);
    j->need_comma[++j->depth] = 0;
}

void json_arr_end(json_out *j)
{
    j->depth--;
    fputc(']', j->f);
}

void json_num(json_out *j, const char *key, double v)
{
    sep(j, key);
    char b[CLI_NUM];
    if (isfinite(v))
        fputs(bg_num_shortest(b, sizeof b, v), j->f);
    else
        fputs("null", j->f);
}

void json_int(json_out *j, const char *key, long long v)
{
    sep(j, key);
    fprintf(j->f, "%lld", v);
}

void json_str(json_out *j, const char *key, const char *s)
{
    sep(j, key);
    if (s)
        bg_json_write_string(j->f, s);
    else
        fputs("null", j->f);
}

void json_bool(json_out *j, const char *key, int v)
{
    sep(j, key);
    fputs(v ? "true" : "false", j->f);
}

void json_null(json_out *j, const char *key)
{
    sep(j, key);
    fputs("null", j->f);
}

/* ---- checking JSON text (RFC 8259): each returns the end of what it read, or NULL ---- */

static const char *ws_end(const char *s)
{
    while (*s == ' ' || *s == '\t' || *s == '\n' || *s == '\r')
        s++;
    return s;
}

static const char *digits_end(const char *s)
{
    if (!isdigit((unsigned char)*s))
        return NULL;
    while (isdigit((unsigned char)*s))
        s++;
    return s;
}

static const char *number_end(const char *s)
{
    if (*s == '-')
        s++;
    if (*s == '0')
        s++;
    else if (!(s = digits_end(s)))
        return NULL;
    if (*s == '.' && !(s = digits_end(s + 1)))
        return NULL;
    if (*s == 'e' || *s == 'E') {
        s++;
        if (*s == '+' || *s == '-')
            s++;
        s = digits_end(s);
    }
    return s;
}

static const char *string_end(const char *s)
{
    for (s++; *s != '"'; s++) {
        if ((unsigned char)*s < 0x20)
            return NULL; /* also the end of the text */
        if (*s != '\\')
            continue;
        s++;
        if (*s == 'u') {
            for (int i = 1; i <= 4; i++)
                if (!isxdigit((unsigned char)s[i]))
                    return NULL;
            s += 4;
        } else if (!*s || !strchr("\"\\/bfnrt", *s))
            return NULL;
    }
    return s + 1;
}

static const char *value_end(const char *s, int depth)
{
    s = ws_end(s);
    if (*s == '"')
        return string_end(s);
    if (*s != '{' && *s != '[') {
        static const char *const words[] = { "true", "false", "null" };
        for (size_t i = 0; i < 3; i++)
            if (strncmp(s, words[i], strlen(words[i])) == 0)
                return s + strlen(words[i]);
        return number_end(s);
    }
    char close = *s == '{' ? '}' : ']';
    if (depth >= 32)
        return NULL;
    if (*(s = ws_end(s + 1)) == close)
        return s + 1;
    for (;;) {
        if (close == '}') {
            if (*s != '"' || !(s = string_end(s)) || *(s = ws_end(s)) != ':')
                return NULL;
            s++;
        }
        if (!(s = value_end(s, depth + 1)))
            return NULL;
        s = ws_end(s);
        if (*s == close)
            return s + 1;
        if (*s != ',')
            return NULL;
        s = ws_end(s + 1);
    }
}

int json_raw(json_out *j, const char *key, const char *text)
{
    const char *end = text ? value_end(text, 0) : NULL;
    if (!end || *ws_end(end))
        return BG_EINVAL;
    sep(j, key);
    fputs(text, j->f);
    return BG_OK;
}

void json_nums(json_out *j, const char *key, const double *v, size_t n)
{
    json_arr(j, key);
    for (size_t i = 0; i < n; i++)
        json_num(j, NULL, v[i]);
    json_arr_end(j);
}

time_t cli_clock(void)
{
    const char *sde = getenv("SOURCE_DATE_EPOCH");
    if (sde && *sde) {
        char *end;
        long long v = strtoll(sde, &end, 10);
        if (*end == '\0' && v >= 0)
            return (time_t)v;
    }
    return time(NULL);
}

int cli_open_store(struct cli_ctx *ctx, int create, bg_store **st)
{
    bg_error err = BG_ERROR_INIT;
    const char *sde = getenv("SOURCE_DATE_EPOCH");
    bg_store_opts o = bg_store_default_opts();
    int rc;
    if (ctx->busy_timeout_s >= 0)
        o.busy_timeout_s = ctx->busy_timeout_s;
    if ((rc = bg_store_open_with(ctx->db_path, create ? BG_STORE_CREATE : 0, &o, st, &err)) !=
        BG_OK) {
        cli_error("%s", err.msg);
        return rc;
    }
    /* SOURCE_DATE_EPOCH (reproducible records and tests) fixes the stored times */
    if (sde && *sde)
        bg_store_set_clock(*st, cli_clock());
    if (bg_store_backup_path(*st)[0])
        cli_warn("upgraded '%s' to schema version %d; the old file is kept as '%s'",
                 ctx->db_path, bg_store_schema_version(*st), bg_store_backup_path(*st));
    return BG_OK;
}

/* ---- output files, written whole or not at all ---- */

static void out_free(struct cli_out *o)
{
    free(o->target);
    free(o->tmp);
    o->target = o->tmp = NULL;
    o->f = NULL;
}

int cli_out_open(struct cli_out *o, const char *path, const char *cmd)
{
    struct stat sb;
    mode_t mode, mask;
    int fd;

    memset(o, 0, sizeof *o);
    o->path = path ? path : "-";
    if (!path || strcmp(path, "-") == 0) {
        o->f = stdout;
        return BG_OK;
    }
    if (stat(path, &sb) == 0 && !S_ISREG(sb.st_mode)) {
        /* a device or a FIFO: nothing to rename over */
        if (!(o->f = fopen(path, "wb"))) {
            cli_error("%s: cannot open '%s': %s", cmd, path, strerror(errno));
            return CLI_ECANTCREAT;
        }
        return BG_OK;
    }
    mask = umask(0);
    umask(mask);
    mode = stat(path, &sb) == 0 ? sb.st_mode & 07777 : 0666 & ~mask;
    /* the file a symbolic link points to is the one replaced, not the link */
    o->target = realpath(path, NULL);
    if (!o->target && !(o->target = strdup(path)))
        goto nomem;
    if (!(o->tmp = malloc(strlen(o->target) + sizeof ".tmp.XXXXXX")))
        goto nomem;
    strcpy(o->tmp, o->target);
    strcat(o->tmp, ".tmp.XXXXXX");
    if ((fd = mkstemp(o->tmp)) < 0) {
        cli_error("%s: cannot create '%s': %s", cmd, path, strerror(errno));
        out_free(o);
        return CLI_ECANTCREAT;
    }
    if (fchmod(fd, mode) != 0 || !(o->f = fdopen(fd, "wb"))) {
        cli_error("%s: cannot create '%s': %s", cmd, path, strerror(errno));
        close(fd);
        unlink(o->tmp);
        out_free(o);
        return CLI_ECANTCREAT;
    }
    return BG_OK;
nomem:
    cli_error("%s: out of memory", cmd);
    out_free(o);
    return BG_ENOMEM;
}

/* Make a rename in the directory of 'file' durable (the directory's entry on the disk). */
static int sync_dir_of(const char *file)
{
    char *dir = strdup(file), *slash;
    int fd, rc = 0;
    if (!dir)
        return -1;
    slash = strrchr(dir, '/');
    if (slash == dir)
        slash[1] = '\0';
    else if (slash)
        *slash = '\0';
    fd = open(slash ? dir : ".", O_RDONLY);
    if (fd < 0 || fsync(fd) != 0)
        rc = -1;
    if (fd >= 0)
        close(fd);
    free(dir);
    return rc;
}

int cli_out_commit(struct cli_out *o, const char *cmd)
{
    int bad, e = 0;
    if (o->f == stdout) {
        bad = fflush(stdout) != 0 || ferror(stdout);
        if (bad)
            cli_error("%s: cannot write the output: %s", cmd, strerror(errno));
        return bad ? BG_EIO : BG_OK;
    }
    bad = fflush(o->f) != 0 || ferror(o->f);
    if (!bad && o->tmp && fsync(fileno(o->f)) != 0)
        bad = 1;
    if (bad)
        e = errno;
    if (fclose(o->f) != 0 && !bad)
        bad = 1, e = errno;
    o->f = NULL;
    if (!bad && o->tmp && rename(o->tmp, o->target) != 0)
        bad = 1, e = errno;
    if (bad) {
        if (o->tmp)
            unlink(o->tmp);
        cli_error("%s: cannot write '%s': %s%s", cmd, o->path, strerror(e),
                  o->tmp ? " (nothing was written to it)" : "");
        out_free(o);
        return BG_EIO;
    }
    if (o->tmp && sync_dir_of(o->target) != 0)
        cli_warn("%s: '%s' is written, but its directory could not be synced to the disk: %s",
                 cmd, o->path, strerror(errno));
    out_free(o);
    return BG_OK;
}

void cli_out_discard(struct cli_out *o)
{
    if (o->f && o->f != stdout)
        fclose(o->f);
    if (o->tmp)
        unlink(o->tmp);
    out_free(o);
}

int cli_parse_id(const char *s, long long *id)
{
    char *end;
    long long v;
    if (!s || !*s || *s == '-' || *s == '+')
        return BG_EINVAL;
    errno = 0;
    v = strtoll(s, &end, 10);
    /* beyond 9223372036854775807 strtoll gives that number: no record has such an id, and a
    ** message must not name an id other than the one given */
    if (*end != '\0' || v <= 0 || errno == ERANGE)
        return BG_EINVAL;
    *id = v;
    return BG_OK;
}

const char *cli_or_dash(const char *s)
{
    return s && *s ? s : "-";
}

/* No state is kept between calls: the terminal test is made only when the bar moves (at
** most 'width' + 2 times a pass), so a long pass costs no system call per item. */
void cli_progress(const char *what, size_t i, size_t n)
{
    const int width = 30;
    int done = n ? (int)((double)width * (double)i / (double)n) : width;
    int before = n && i > 0 ? (int)((double)width * (double)(i - 1) / (double)n) : -1;
    const char *term;
    if (i != 0 && i != n && done == before)
        return;
    term = getenv("TERM");
    if (!isatty(STDERR_FILENO) || (term && strcmp(term, "dumb") == 0))
        return;
    /* straight to the descriptor: the stderr filter (safeout.c) shows a carriage return as
    ** "\x0D", and this line is the program's own (a constant and numbers) */
    char line[160];
    int len = snprintf(line, sizeof line, "\r%s [%.*s%*s] %zu/%zu%s", what, done,
                       "##############################", width - done, "", i, n,
                       i == n ? "\n" : "");
    fflush(stderr);
    if (len > 0 && write(STDERR_FILENO, line, (size_t)len < sizeof line ? (size_t)len
                                                                           : sizeof line - 1) < 0)
        return; /* a progress line that cannot be shown is not an error */
}
