/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The store's refusal seam (store.c, OFFERED): a backend that leaves a function of
** store_int.h's table NULL gets BG_EUNAVAIL naming what and the backend, from store.c, before
** anything is written; the same store with the function offered works.  A SQLite backend
** with those slots emptied stands in for a backend that does not offer them. */
#include <unistd.h>

#include "testutil.h"
#include "../src/lib/store/store_int.h"

static char dir[64];

static int setup(void **state)
{
    (void)state;
    snprintf(dir, sizeof dir, "/tmp/bandgap-test-seam-XXXXXX");
    return mkdtemp(dir) ? 0 : -1;
}

static int teardown(void **state)
{
    char p[128];
    (void)state;
    snprintf(p, sizeof p, "%s/seam.db", dir);
    unlink(p);
    return rmdir(dir);
}

/* A store of two lots of one part and a probe in the first (invented). */
static bg_store *fresh(void)
{
    char p[128];
    bg_store *st = NULL;
    bg_lot lot;
    snprintf(p, sizeof p, "%s/seam.db", dir);
    unlink(p);
    assert_int_equal(bg_store_open(p, BG_STORE_CREATE, &st, NULL), BG_OK);
    bg_store_set_clock(st, 1764547200);
    memset(&lot, 0, sizeof lot);
    strcpy(lot.part, "NTC");
    lot.r25_ohm = 10000, lot.beta_k = 3950, lot.pair_t1_k = 298.15, lot.pair_t2_k = 358.15;
    lot.tol_r25 = 0.01, lot.tol_beta = 0.01;
    strcpy(lot.code, "L1");
    assert_int_equal(bg_store_lot_add(st, &lot, NULL, NULL), BG_OK);
    strcpy(lot.code, "L2");
    assert_int_equal(bg_store_lot_add(st, &lot, NULL, NULL), BG_OK);
    assert_int_equal(bg_store_probe_add(st, "P1", "L1", NULL, NULL, NULL), BG_OK);
    return st;
}

static void move_p1(bg_probe_version *pv)
{
    memset(pv, 0, sizeof *pv);
    strcpy(pv->probe.serial, "P1");
    strcpy(pv->probe.lot_code, "L2");
    strcpy(pv->v.why, "sorted (invented)");
    strcpy(pv->v.by, "t");
}

static void unoffered_refused(void **state)
{
    struct bgi_store_backend none = bgi_store_sqlite;
    const struct bgi_store_backend *real;
    bg_store *st = fresh();
    bg_error err = BG_ERROR_INIT;
    bg_probe_version pv;
    bg_seq_head h;
    long long before = 0, after = 0;
    char head[65], head2[65];
    int found = 1;
    (void)state;
    none.probe_version_add = NULL;
    none.probe_version_each = NULL;
    none.seq_unfinished = NULL;
    none.seq_readings = NULL;
    real = st->be;
    st->be = &none;
    assert_int_equal(bg_store_chain_head(st, &before, head, NULL), BG_OK);
    move_p1(&pv);
    assert_int_equal(bg_store_probe_move(st, &pv, NULL, &err), BG_EUNAVAIL);
    assert_string_equal(err.msg, "probe move: not available on the 'sqlite' backend");
    assert_int_equal(bg_store_probe_at(st, "P1", NULL, &pv, &err), BG_EUNAVAIL);
    assert_string_equal(err.msg, "probe versions: not available on the 'sqlite' backend");
    assert_int_equal(bg_store_seq_unfinished(st, &h, &found, &err), BG_EUNAVAIL);
    assert_string_equal(err.msg, "calibration sequences: not available on the 'sqlite' "
                                 "backend");
    assert_int_equal(bg_store_chain_head(st, &after, head2, NULL), BG_OK);
    assert_int_equal(after, before); /* nothing written */
    assert_string_equal(head2, head);
    /* the same store with the functions offered: the move and the read work */
    st->be = real;
    move_p1(&pv);
    assert_int_equal(bg_store_probe_move(st, &pv, NULL, NULL), BG_OK);
    assert_int_equal(bg_store_probe_at(st, "P1", NULL, &pv, NULL), BG_OK);
    assert_string_equal(pv.probe.lot_code, "L2");
    assert_int_equal(bg_store_seq_unfinished(st, &h, &found, NULL), BG_OK);
    assert_int_equal(found, 0);
    bg_store_close(st);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(unoffered_refused),
    };
    return cmocka_run_group_tests(tests, setup, teardown);
}
