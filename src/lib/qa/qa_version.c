/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The versions of a lot read once for a lot-wide verdict: the tolerances in force at each
** calibration's start found in memory, without a query per probe. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "qa_int.h"

static int keep_version(const bg_lot_version *lv, void *ctx)
{
    struct bgi_lot_versions *v = ctx;
    if (v->n == v->cap) {
        size_t cap = v->cap ? 2 * v->cap : 4;
        bg_lot *l = realloc(v->lot, cap * sizeof *l);
        if (l)
            v->lot = l;
        double *t = realloc(v->t, cap * sizeof *t);
        if (t)
            v->t = t;
        if (!l || !t)
            return v->oom = 1;
        v->cap = cap;
    }
    /* the first version (the row) is in force before any other, whatever its time */
    if (v->n == 0 || bg_time_parse(lv->v.valid_from, &v->t[v->n], NULL) != BG_OK)
        v->t[v->n] = -INFINITY;
    v->lot[v->n++] = lv->lot;
    return 0;
}

int bgi_qa_lot_versions_load(bg_store *st, const char *code, struct bgi_lot_versions *v,
                             bg_error *err)
{
    memset(v, 0, sizeof *v);
    int rc = bg_store_lot_versions(st, code, keep_version, v, err);
    if (rc == BG_OK && v->oom)
        rc = bg_error_set(err, BG_ENOMEM, "out of memory reading the versions of lot '%s'",
                          code);
    return rc;
}

const bg_lot *bgi_qa_lot_version_at(const struct bgi_lot_versions *v, const char *when)
{
    double t;
    size_t k = 0;
    if (v->n == 0)
        return NULL;
    if (bg_time_parse(when, &t, NULL) != BG_OK)
        return &v->lot[0];
    /* versions follow one another in time: the last one valid from at or before 'when' */
    for (size_t i = 1; i < v->n; i++)
        if (v->t[i] <= t)
            k = i;
    return &v->lot[k];
}

void bgi_qa_lot_versions_free(struct bgi_lot_versions *v)
{
    free(v->lot);
    free(v->t);
    memset(v, 0, sizeof *v);
}
