/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* libpq, loaded when a server is first named (dlopen), not linked: a program that only ever
** opens SQLite files maps no PostgreSQL client library (nor its TLS, Kerberos and LDAP
** libraries), and keeps its small address space (tests/faults.sh imports under 24 MB).
** The library's header gives the types; these pointers are its functions. */
#include <dlfcn.h>
#include <pthread.h>
#include <stdio.h>
#include <string.h>

#include "bandgap/bandgap.h"
#include "pg_int.h"

struct bgi_pq_api bgi_pq;

static pthread_once_t once = PTHREAD_ONCE_INIT;
static char why[256];

#define SYM(field, name) { (void **)&bgi_pq.field, name }

static void load(void)
{
    static const char *const names[] = { "libpq.so.5", "libpq.so" };
    const struct { void **slot; const char *name; } syms[] = {
        SYM(connectdbParams, "PQconnectdbParams"), SYM(finish, "PQfinish"),
        SYM(status, "PQstatus"), SYM(errorMessage, "PQerrorMessage"),
        SYM(user, "PQuser"), SYM(transactionStatus, "PQtransactionStatus"),
        SYM(setNoticeProcessor, "PQsetNoticeProcessor"),
        SYM(setNoticeReceiver, "PQsetNoticeReceiver"), SYM(exec, "PQexec"),
        SYM(execParams, "PQexecParams"), SYM(prepare, "PQprepare"),
        SYM(execPrepared, "PQexecPrepared"), SYM(resultStatus, "PQresultStatus"),
        SYM(resultErrorField, "PQresultErrorField"), SYM(clear, "PQclear"),
        SYM(ntuples, "PQntuples"), SYM(nfields, "PQnfields"), SYM(fname, "PQfname"),
        SYM(ftype, "PQftype"), SYM(getvalue, "PQgetvalue"), SYM(getlength, "PQgetlength"),
        SYM(getisnull, "PQgetisnull"), SYM(libVersion, "PQlibVersion"),
    };
    void *h = NULL;
    for (size_t i = 0; !h && i < sizeof names / sizeof names[0]; i++)
        h = dlopen(names[i], RTLD_NOW | RTLD_LOCAL);
    if (!h) {
        const char *e = dlerror();
        snprintf(why, sizeof why, "the PostgreSQL client library libpq.so.5 cannot be loaded "
                 "(%s; Debian: apt-get install libpq5)", e ? e : "not found");
        return;
    }
    for (size_t i = 0; i < sizeof syms / sizeof syms[0]; i++) {
        /* POSIX: a function pointer and void * convert (dlsym's documented use) */
        void *f = dlsym(h, syms[i].name);
        if (!f) {
            snprintf(why, sizeof why, "the PostgreSQL client library has no %s: too old",
                     syms[i].name);
            return;
        }
        memcpy(syms[i].slot, &f, sizeof f);
    }
    bgi_pq.loaded = 1;
}

int bgi_pq_load(bg_error *err)
{
    pthread_once(&once, load);
    if (!bgi_pq.loaded)
        return bg_error_set(err, BG_EUNAVAIL, "%s", why);
    return BG_OK;
}
