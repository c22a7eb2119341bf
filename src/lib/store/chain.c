/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The record chain's canonical encoding, the same on every backend (store_int.h; the SQLite
** backend's sqlite_chain.c and the PostgreSQL backend's pg_chain.c feed it their rows).
**
** The hash of record number 'seq' is SHA-256 over
**     "bandgap record chain 1\n" PREV "\n" KIND "\n" ID "\n" ROW [READINGS]
** where PREV is the previous record's hash in hex (64 '0' for the first), KIND the table and
** ID the row's id.  ROW encodes the row's columns in the order of their names, skipping NULL
** (so a column added later with no value leaves old hashes as they were), each as
**     NAME "\0" TYPE VALUE "\n"
** with TYPE 'i' and VALUE the integer in decimal, 'r' and the IEEE 754 double's 64 bits in 16
** hex digits (exact: no rounding), 't' or 'b' and LENGTH ":" and the bytes.  A run's record
** adds each of its readings, in id order, as "reading\n" ROW. */
#include <inttypes.h>
#include <stdio.h>
#include <string.h>

#include "bandgap/bandgap.h"
#include "store_int.h"

const char *const bgi_chain_kinds[BGI_CHAIN_NKINDS] = {
    "lot", "probe", "reference", "part_spec", "run", "exclusion", "fit", "artifact",
    "reference_version", "lot_version", "probe_version" };

int bgi_chain_kind_index(const char *kind)
{
    for (int i = 0; i < BGI_CHAIN_NKINDS; i++)
        if (strcmp(bgi_chain_kinds[i], kind) == 0)
            return i;
    return -1;
}

void bgi_chain_start(struct bgi_sha256 *h, const char prev[65], const char *kind, long long id)
{
    char head[128];
    int n = snprintf(head, sizeof head, "bandgap record chain 1\n%s\n%s\n%lld\n", prev, kind,
                     id);
    bgi_sha256_init(h);
    bgi_sha256_update(h, head, (size_t)n);
}

void bgi_chain_int(struct bgi_sha256 *h, const char *name, long long v)
{
    char buf[32];
    int len = snprintf(buf, sizeof buf, "i%lld\n", v);
    bgi_sha256_update(h, name, strlen(name) + 1);
    bgi_sha256_update(h, buf, (size_t)len);
}

void bgi_chain_real(struct bgi_sha256 *h, const char *name, double v)
{
    char buf[32];
    uint64_t bits;
    memcpy(&bits, &v, sizeof bits);
    int len = snprintf(buf, sizeof buf, "r%016" PRIx64 "\n", bits);
    bgi_sha256_update(h, name, strlen(name) + 1);
    bgi_sha256_update(h, buf, (size_t)len);
}

void bgi_chain_bytes_head(struct bgi_sha256 *h, const char *name, int text, size_t n)
{
    char buf[40];
    int len = snprintf(buf, sizeof buf, "%c%zu:", text ? 't' : 'b', n);
    bgi_sha256_update(h, name, strlen(name) + 1);
    bgi_sha256_update(h, buf, (size_t)len);
}

void bgi_chain_bytes(struct bgi_sha256 *h, const char *name, int text, const void *p, size_t n)
{
    bgi_chain_bytes_head(h, name, text, n);
    if (n > 0)
        bgi_sha256_update(h, p, n);
    bgi_sha256_update(h, "\n", 1);
}

void bgi_chain_reading(struct bgi_sha256 *h)
{
    bgi_sha256_update(h, "reading\n", 8);
}

int bgi_chain_judge(bgi_conn *c, bgi_chain_hash_fn hash, const struct bgi_chain_rec *rec,
                    char prev[65], bg_store_check *out, bg_error *err)
{
    char hex[65];
    bg_error e2 = BG_ERROR_INIT;
    long long seq = rec->seq, id = rec->id;
    int k = rec->kind ? bgi_chain_kind_index(rec->kind) : -1, rc;
    out->bad_seq = seq;
    if (seq != out->records + 1) {
        snprintf(out->problem, sizeof out->problem, "record %lld follows record %lld: "
                 "records of the chain are missing", seq, out->records);
        out->bad = 1;
        return BG_OK;
    }
    if (k < 0) {
        snprintf(out->problem, sizeof out->problem, "record %lld names no known table", seq);
        out->bad = 1;
        return BG_OK;
    }
    rc = hash(c, k, id, prev, hex, &e2);
    if (rc == BG_EINVAL) {
        snprintf(out->problem, sizeof out->problem, "record %lld: %.400s (deleted after it "
                 "was recorded)", seq, e2.msg);
        out->bad = 1;
        return BG_OK;
    }
    if (rc != BG_OK) {
        if (err)
            *err = e2;
        return rc;
    }
    if (strcmp(hex, rec->stored) != 0) {
        snprintf(out->problem, sizeof out->problem, "record %lld (%s %lld) does not match its "
                 "hash: its content or an earlier record's was changed after it was recorded",
                 seq, bgi_chain_kinds[k], id);
        snprintf(out->bad_kind, sizeof out->bad_kind, "%s", bgi_chain_kinds[k]);
        out->bad_id = id, out->bad = 1;
        return BG_OK;
    }
    memcpy(prev, hex, 65);
    out->records = seq;
    return BG_OK;
}
