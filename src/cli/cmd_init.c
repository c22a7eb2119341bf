/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap init: create the calibration database (or confirm an existing one). */
#include <errno.h>
#include <getopt.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "cli.h"

static const char init_usage[] =
    "Usage: bandgap init   (bandgap [--db PATH] init)\n"
    "Create the calibration database PATH (default $BANDGAP_DB or ./bandgap.db), a single\n"
    "SQLite file with a rollback journal, so that it stays one file (keep it on a local\n"
    "disk: SQLite's documentation warns against database files on network shares).  On an\n"
    "existing bandgap database it upgrades an older schema (keeping a copy)\n"
    "and otherwise changes nothing.\n";

/* The file of an SQLite database named 'db' ("PATH" or "sqlite:PATH"); NULL for a name with
** another scheme ([a-z][a-z0-9+.-]+ before ':', the store's rule), which the store judges. */
static const char *sqlite_file(const char *db)
{
    size_t n = 0;
    if (strncmp(db, "sqlite:", 7) == 0)
        return db + 7;
    if (db[0] >= 'a' && db[0] <= 'z')
        n = strspn(db, "abcdefghijklmnopqrstuvwxyz0123456789+.-");
    return n >= 2 && db[n] == ':' ? NULL : db;
}

/* Remove the temporary database 'tmp' and a journal it may have left. */
static void remove_tmp(const char *tmp)
{
    size_t n = strlen(tmp);
    char *j = malloc(n + sizeof "-journal");
    unlink(tmp);
    if (j) {
        memcpy(j, tmp, n);
        strcpy(j + n, "-journal");
        unlink(j);
        free(j);
    }
}

/* 'msg' about the temporary file 'tmp' made about 'file' instead (in the same directory, on
** the same disk): the user named 'file' and never sees the temporary one. */
static void about_file(char *msg, size_t size, const char *tmp, const char *file)
{
    char out[sizeof ((bg_error *)0)->msg];
    size_t n = 0, lt = strlen(tmp), lf = strlen(file);
    for (const char *s = msg; *s && n + 1 < sizeof out;) {
        if (strncmp(s, tmp, lt) == 0 && n + lf < sizeof out) {
            memcpy(out + n, file, lf);
            n += lf, s += lt;
        } else
            out[n++] = *s++;
    }
    out[n] = '\0';
    snprintf(msg, size, "%s", out);
}

/* Create the new database 'file' whole: initialise it under a temporary name in the same
** directory and link it to 'file' only when complete, so that a failed init leaves no file
** behind, and a file another process made meanwhile is never replaced ('*existed' is then set
** and it is opened as it is). */
static int create_new(struct cli_ctx *ctx, const char *file, int *existed)
{
    static const char suffix[] = ".tmp.XXXXXX";
    bg_error err = BG_ERROR_INIT;
    bg_store *st = NULL;
    size_t n = strlen(file);
    char *tmp = malloc(7 + n + sizeof suffix), *path; /* "sqlite:" FILE suffix */
    mode_t mask = umask(0);
    int fd, rc;

    umask(mask);
    if (!tmp) {
        cli_error("init: out of memory");
        return BG_ENOMEM;
    }
    memcpy(tmp, "sqlite:", 7);
    memcpy(tmp + 7, file, n);
    memcpy(tmp + 7 + n, suffix, sizeof suffix);
    path = tmp + 7;
    if ((fd = mkstemp(path)) < 0) {
        int e = errno;
        char *slash = strrchr(path, '/');
        if (slash)
            *slash = '\0';
        if (e == EACCES || e == EROFS || e == EPERM) /* the file is made in its directory */
            cli_error("cannot create database '%s': the directory '%s' is not writable (%s)",
                      ctx->db_path, slash ? (slash == path ? "/" : path) : ".", strerror(e));
        else
            cli_error("cannot create database '%s': %s", ctx->db_path, strerror(e));
        free(tmp);
        return CLI_ECANTCREAT;
    }
    /* the permissions SQLite gives a file it creates (0644 less the umask) */
    fchmod(fd, 0644 & ~mask);
    close(fd);
    bg_store_opts o = bg_store_default_opts();
    if (ctx->busy_timeout_s >= 0)
        o.busy_timeout_s = ctx->busy_timeout_s;
    rc = bg_store_open_with(tmp, BG_STORE_CREATE, &o, &st, &err);
    bg_store_close(st);
    if (rc != BG_OK) {
        about_file(err.msg, sizeof err.msg, path, file);
        cli_error("cannot create database '%s': %s", ctx->db_path, err.msg);
    } else if (link(path, file) != 0) {
        if (errno == EEXIST)
            *existed = 1;
        else {
            cli_error("cannot create database '%s': %s", ctx->db_path, strerror(errno));
            rc = CLI_ECANTCREAT;
        }
    }
    remove_tmp(path);
    free(tmp);
    return rc;
}

int cmd_init(int argc, char **argv, struct cli_ctx *ctx)
{
    static const struct option opts[] = {
        { "help", no_argument, NULL, 'h' }, { "json", no_argument, NULL, 'j' },
        { NULL, 0, NULL, 0 },
    };
    struct stat sb;
    bg_store *st = NULL;
    const char *file;
    int c, existed, rc;

    opterr = 0;
    while ((c = getopt_long(argc, argv, ":h", opts, NULL)) != -1) {
        if (c == 'h') {
            fputs(init_usage, stdout);
            return BG_OK;
        }
        if (c == 'j') {
            ctx->json = 1;
            continue;
        }
        return cli_unknown_option("init", argv[optind - 1], opts);
    }
    if (optind < argc)
        return cli_usage_error("init", "unexpected argument '%s'", argv[optind]);
    file = sqlite_file(ctx->db_path);
    existed = stat(file ? file : ctx->db_path, &sb) == 0;
    if (!file && !existed) { /* a server's database: it has bandgap's schema or not yet */
        bg_error quiet = BG_ERROR_INIT;
        bg_store_opts o = bg_store_default_opts();
        if (ctx->busy_timeout_s >= 0)
            o.busy_timeout_s = ctx->busy_timeout_s;
        existed = bg_store_open_with(ctx->db_path, 0, &o, &st, &quiet) == BG_OK;
        bg_store_close(st);
        st = NULL;
    }
    if (!existed && file && (rc = create_new(ctx, file, &existed)) != BG_OK)
        return rc;
    if ((rc = cli_open_store(ctx, 1, &st)) != BG_OK)
        return rc;
    if (ctx->json) {
        json_out j;
        json_begin(&j, stdout);
        json_obj(&j, NULL);
        json_str(&j, "database", ctx->db_path);
        json_bool(&j, "created", !existed);
        json_int(&j, "schema_version", bg_store_schema_version(st));
        json_obj_end(&j);
        json_end(&j);
    } else
        printf("%s %s (schema version %d)\n", existed ? "opened existing" : "created",
               ctx->db_path, bg_store_schema_version(st));
    bg_store_close(st);
    return BG_OK;
}
