/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The calibration database: schema identity and versions, append-only history, atomic
** imports, exact round trips of readings and fits, exclusions, hostile text, and the lot-wide
** read paths (one query, or statements prepared once) against the per-probe lookups. */
#include <sqlite3.h>
#include <sys/stat.h>
#include <unistd.h>

#include "testutil.h"
#include "../src/lib/store/sqlite_int.h"

static char dir[256];

static int setup(void **state)
{
    (void)state;
    snprintf(dir, sizeof dir, "/tmp/bandgap-test-store-XXXXXX");
    return mkdtemp(dir) ? 0 : -1;
}

static int teardown(void **state)
{
    char cmd[300];
    (void)state;
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
    return system(cmd) == 0 ? 0 : -1;
}

static const char *path_of(const char *name)
{
    static char p[400];
    snprintf(p, sizeof p, "%s/%s", dir, name);
    return p;
}

/* BG_TEST_STORE_DB (tests/pg/store.sh sets it): a server's connection URI, e.g.
** postgresql:///bandgap.  The tests that go through the library alone then run there, each
** database a schema of its own (the first of the connection's search_path, made afresh with
** BG_PG_BIN's psql); those that look at the SQLite file itself are skipped. */
static const char *server;

static const char *target_of(const char *name)
{
    static char t[600];
    char schema[64];
    size_t k = 0;
    if (!server)
        return path_of(name);
    for (const char *c = name; *c && k + 1 < sizeof schema; c++)
        schema[k++] = (char)((*c >= 'a' && *c <= 'z') || (*c >= '0' && *c <= '9') ? *c : '_');
    schema[k] = '\0';
    snprintf(t, sizeof t, "%s%soptions=-csearch_path%%3Dt_%s", server,
             strchr(server, '?') ? "&" : "?", schema);
    return t;
}

/* A new, empty database 'name' (its file removed; on a server, its schema made again). */
static const char *new_target(const char *name)
{
    char cmd[800];
    const char *bin = getenv("BG_PG_BIN");
    if (!server) {
        unlink(path_of(name));
        return path_of(name);
    }
    const char *t = target_of(name), *schema = strstr(t, "%3D") + 3;
    snprintf(cmd, sizeof cmd, "'%s/psql' -X -q -v ON_ERROR_STOP=1 -c 'DROP SCHEMA IF EXISTS "
             "%s CASCADE' -c 'CREATE SCHEMA %s' > /dev/null", bin ? bin : "/usr/bin", schema,
             schema);
    assert_int_equal(system(cmd), 0);
    return t;
}

/* The test looks at the SQLite file itself (its bytes, its pragmas, SQL behind the library). */
#define SQLITE_ONLY()     \
    do {                  \
        if (server)       \
            skip();       \
    } while (0)

static bg_store *fresh(const char *name)
{
    bg_store *st = NULL;
    bg_lot lot;
    assert_int_equal(bg_store_open(new_target(name), BG_STORE_CREATE, &st, NULL), BG_OK);
    memset(&lot, 0, sizeof lot);
    strcpy(lot.code, "L1");
    strcpy(lot.part, "NTC");
    lot.r25_ohm = 10000, lot.beta_k = 3950, lot.pair_t1_k = 298.15, lot.pair_t2_k = 358.15;
    lot.tol_r25 = 0.01, lot.tol_beta = 0.01;
    assert_int_equal(bg_store_lot_add(st, &lot, NULL, NULL), BG_OK);
    assert_int_equal(bg_store_probe_add(st, "P1", "L1", NULL, NULL, NULL), BG_OK);
    return st;
}

static void sql(const char *name, const char *q)
{
    sqlite3 *db;
    assert_int_equal(sqlite3_open(path_of(name), &db), SQLITE_OK);
    int rc = sqlite3_exec(db, q, NULL, NULL, NULL);
    sqlite3_close(db);
    assert_int_equal(rc, SQLITE_OK);
}

static void schema_identity(void **state)
{
    SQLITE_ONLY();
    (void)state;
    bg_store *st = NULL;
    bg_error err = BG_ERROR_INIT;
    /* missing file without create */
    assert_int_equal(bg_store_open(path_of("none.db"), 0, &st, &err), BG_ENOENT);
    assert_null(st);
    /* new file: newest schema, our application id */
    st = fresh("a.db");
    assert_int_equal(bg_store_schema_version(st), bg_store_schema_known());
    bg_store_close(st);
    /* a foreign SQLite file is refused and left alone */
    sql("foreign.db", "CREATE TABLE t(x); INSERT INTO t VALUES (1);");
    assert_int_equal(bg_store_open(path_of("foreign.db"), BG_STORE_CREATE, &st, &err),
                     BG_EINVAL);
    assert_non_null(strstr(err.msg, "is not a bandgap database"));
    /* a newer schema is refused */
    sql("a.db", "PRAGMA user_version = 77;");
    assert_int_equal(bg_store_open(path_of("a.db"), 0, &st, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "schema version 77, newer than"));
}

static void old_schema_upgraded_with_backup(void **state)
{
    SQLITE_ONLY();
    (void)state;
    bg_store *st = NULL;
    char q[256];
    struct stat sb;
    /* a version-1 file: the first migration only (db/001-initial.sql) */
    FILE *f = fopen("db/001-initial.sql", "r");
    assert_non_null(f);
    static char text[65536];
    size_t n = fread(text, 1, sizeof text - 1, f);
    fclose(f);
    text[n] = '\0';
    unlink(path_of("old.db"));
    sql("old.db", text);
    snprintf(q, sizeof q, "PRAGMA application_id = %d; PRAGMA user_version = 1;",
             BG_STORE_APP_ID);
    sql("old.db", q);
    assert_int_equal(bg_store_open(path_of("old.db"), 0, &st, NULL), BG_OK);
    assert_int_equal(bg_store_schema_version(st), bg_store_schema_known());
    assert_string_equal(bg_store_backup_path(st), path_of("old.db.v1.bak"));
    bg_store_close(st);
    assert_int_equal(stat(path_of("old.db.v1.bak"), &sb), 0);
    /* the backup is the old file: version 1 */
    sqlite3 *db;
    sqlite3_stmt *s;
    assert_int_equal(sqlite3_open(path_of("old.db.v1.bak"), &db), SQLITE_OK);
    sqlite3_prepare_v2(db, "PRAGMA user_version", -1, &s, NULL);
    assert_int_equal(sqlite3_step(s), SQLITE_ROW);
    assert_int_equal(sqlite3_column_int(s, 0), 1);
    sqlite3_finalize(s);
    sqlite3_close(db);
}

static bg_readings make_readings(void)
{
    bg_readings rs;
    const char *text = "time,temp_c,ohms,u_temp_k,u_ohms,note\n"
                       "2026-11-24T08:00:00Z,0.0123456789012345,32659.888123456789,0.002,0.3,a\n"
                       "2026-11-24T08:20:00Z,25.0001,10234.5,0.002,0.1,\n"
                       "2026-11-24T08:40:00Z,50.0002,3608.378,0.002,0.04,\"b, c\"\n"
                       "2026-11-24T09:00:00Z,75.0003,1456.25,0.002,0.02,\n"
                       "2026-11-24T09:20:00Z,100.0004,677.52,0.002,0.01,\n";
    assert_int_equal(bg_csv_parse(text, strlen(text), "r.csv", &rs, NULL), BG_OK);
    return rs;
}

static int count_rows(bg_store *st, long long run, size_t *n)
{
    bg_store_points sp = BG_STORE_POINTS_INIT;
    int rc = bg_store_run_points(st, run, &sp, NULL);
    *n = sp.n;
    bg_store_points_release(&sp);
    return rc;
}

static void import_round_trip_and_exclusion(void **state)
{
    (void)state;
    bg_store *st = fresh("b.db");
    bg_readings rs = make_readings();
    bg_run meta;
    long long run;
    bg_error err = BG_ERROR_INIT;
    memset(&meta, 0, sizeof meta);
    strcpy(meta.serial, "P1");
    strcpy(meta.source, "r.csv");
    assert_int_equal(bg_store_import(st, &rs, &meta, &run, NULL), BG_OK);
    bg_store_points sp = BG_STORE_POINTS_INIT;
    assert_int_equal(bg_store_run_points(st, run, &sp, NULL), BG_OK);
    assert_int_equal(sp.n, 5);
    for (size_t i = 0; i < 5; i++) { /* stored doubles are the parsed doubles exactly */
        assert_true(sp.pts[i].t_k == rs.v[i].pt.t_k);
        assert_true(sp.pts[i].r_ohm == rs.v[i].pt.r_ohm);
        assert_true(sp.pts[i].u_r_ohm == rs.v[i].pt.u_r_ohm);
        assert_int_equal(sp.pts[i].line, rs.v[i].pt.line);
    }
    /* the run's start is the first reading's time */
    bg_run r;
    assert_int_equal(bg_store_run_get(st, run, &r, NULL), BG_OK);
    assert_string_equal(r.started_at, "2026-11-24T08:00:00Z");
    /* exclusion keeps the row, records the reason, and drops it from the points */
    assert_int_equal(bg_store_exclude(st, sp.ids[2], "bath not settled", "A. Tester", NULL),
                     BG_OK);
    assert_int_equal(bg_store_exclude(st, sp.ids[2], "again", "x", &err), BG_EINVAL);
    assert_int_equal(bg_store_exclude(st, 999999, "x", "x", &err), BG_EINVAL);
    assert_int_equal(bg_store_exclude(st, sp.ids[1], "", "x", &err), BG_EINVAL);
    size_t n;
    assert_int_equal(count_rows(st, run, &n), BG_OK);
    assert_int_equal(n, 4);
    assert_int_equal(bg_store_run_get(st, run, &r, NULL), BG_OK);
    assert_int_equal(r.nreadings, 5);
    assert_int_equal(r.nexcluded, 1);
    bg_store_points_release(&sp);
    bg_readings_release(&rs);
    bg_store_close(st);
}

static unsigned long file_sum(const char *p)
{
    FILE *f = fopen(p, "rb");
    unsigned long h = 5381;
    int c;
    assert_non_null(f);
    while ((c = fgetc(f)) != EOF)
        h = h * 33u + (unsigned char)c;
    fclose(f);
    return h;
}

static void failed_import_changes_nothing(void **state)
{
    SQLITE_ONLY();
    (void)state;
    bg_store *st = fresh("c.db");
    bg_readings rs = make_readings();
    bg_run meta;
    bg_ref ref;
    bg_error err = BG_ERROR_INIT;
    long long run;
    bg_store_close(st);
    unsigned long before = file_sum(path_of("c.db"));
    assert_int_equal(bg_store_open(path_of("c.db"), 0, &st, NULL), BG_OK);
    memset(&meta, 0, sizeof meta);
    strcpy(meta.serial, "nobody");
    assert_int_equal(bg_store_import(st, &rs, &meta, &run, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "unknown probe 'nobody'"));
    /* a correction that makes a reading impossible fails at that line, after the run row
    ** and earlier readings were inserted: all of it is rolled back */
    memset(&ref, 0, sizeof ref);
    strcpy(ref.ident, "R1");
    strcpy(ref.certificate, "C1");
    ref.kind = BG_REF_LINEAR, ref.lin_c0_k = -320.0, ref.lin_c1 = 0.0, ref.lin_t0_k = 293.15;
    bg_store_close(st);
    assert_int_equal(bg_store_open(path_of("c.db"), 0, &st, NULL), BG_OK);
    assert_int_equal(bg_store_ref_add(st, &ref, NULL, NULL), BG_OK);
    bg_store_close(st);
    before = file_sum(path_of("c.db"));
    assert_int_equal(bg_store_open(path_of("c.db"), 0, &st, NULL), BG_OK);
    strcpy(meta.serial, "P1");
    strcpy(meta.ref_ident, "R1");
    strcpy(meta.source, "r.csv");
    assert_int_equal(bg_store_import(st, &rs, &meta, &run, &err), BG_EINVAL);
    assert_string_equal(err.msg, "r.csv:2: field 'temperature': the corrected temperature is "
                                 "at or below 0 K");
    bg_store_close(st);
    assert_true(file_sum(path_of("c.db")) == before);
    bg_readings_release(&rs);
}

static void history_is_append_only(void **state)
{
    SQLITE_ONLY();
    (void)state;
    bg_store *st = fresh("d.db");
    bg_readings rs = make_readings();
    bg_run meta;
    long long run;
    memset(&meta, 0, sizeof meta);
    strcpy(meta.serial, "P1");
    assert_int_equal(bg_store_import(st, &rs, &meta, &run, NULL), BG_OK);
    bg_store_close(st);
    static const char *edits[] = {
        "UPDATE reading SET r_ohm = 1", "DELETE FROM reading", "DELETE FROM run",
        "UPDATE run SET note = 'x'",
    };
    for (size_t i = 0; i < sizeof edits / sizeof edits[0]; i++) {
        sqlite3 *db;
        char *msg = NULL;
        assert_int_equal(sqlite3_open(path_of("d.db"), &db), SQLITE_OK);
        assert_int_not_equal(sqlite3_exec(db, edits[i], NULL, NULL, &msg), SQLITE_OK);
        assert_non_null(strstr(msg, "never"));
        sqlite3_free(msg);
        sqlite3_close(db);
    }
    bg_readings_release(&rs);
}

static void fit_round_trip_is_exact(void **state)
{
    (void)state;
    bg_store *st = fresh("e.db");
    bg_readings rs = make_readings();
    bg_run meta;
    bg_fit f = BG_FIT_INIT;
    bg_fit_row row;
    bg_model m;
    long long run, fid, ids[8];
    size_t n;
    memset(&meta, 0, sizeof meta);
    strcpy(meta.serial, "P1");
    assert_int_equal(bg_store_import(st, &rs, &meta, &run, NULL), BG_OK);
    bg_store_points sp = BG_STORE_POINTS_INIT;
    assert_int_equal(bg_store_run_points(st, run, &sp, NULL), BG_OK);
    for (int k = 0; k < 2; k++) {
        bg_model_parse(k ? "beta" : "sh4", &m, NULL);
        bg_fit_opts o = bg_fit_default_opts(&m);
        assert_int_equal(bg_fit_points(sp.pts, sp.n, &o, &f, NULL), BG_OK);
        assert_int_equal(bg_store_fit_save(st, run, &f, sp.ids, &fid, NULL), BG_OK);
        assert_int_equal(bg_store_fit_get(st, fid, &row, NULL), BG_OK);
        assert_ptr_equal(bg_model_type_of(&row.model), bg_model_type_of(&m));
        for (size_t i = 0; i < f.npar; i++)
            assert_true(row.model.coef[i] == f.model.coef[i]); /* %.17g / REAL: exact */
        for (size_t i = 0; i < f.npar * f.npar; i++)
            assert_true(row.cov[i] == f.cov[i]);
        assert_true(row.t_min_k == f.t_min_k && row.t_max_k == f.t_max_k);
        assert_int_equal(bg_store_fit_readings(st, fid, ids, 8, &n, NULL), BG_OK);
        assert_int_equal(n, sp.n);
        for (size_t i = 0; i < n; i++)
            assert_true(ids[i] == sp.ids[i]);
    }
    bg_fit_release(&f);
    bg_store_points_release(&sp);
    bg_readings_release(&rs);
    bg_store_close(st);
}

/* Fits queued in one transaction: 70 of them (two full batches and six alone, mixed with a
** plain save) come back exactly, with the ids they were given; a rollback drops the queue;
** queueing outside a transaction is refused. */
static void queued_fits_are_stored_exactly(void **state)
{
    (void)state;
    bg_store *st = fresh("q.db");
    bg_readings rs = make_readings();
    bg_run meta;
    bg_fit f = BG_FIT_INIT;
    bg_fit_row row;
    bg_model m;
    long long run, fid[71];
    bg_error err = BG_ERROR_INIT;
    memset(&meta, 0, sizeof meta);
    strcpy(meta.serial, "P1");
    assert_int_equal(bg_store_import(st, &rs, &meta, &run, NULL), BG_OK);
    bg_store_points sp = BG_STORE_POINTS_INIT;
    assert_int_equal(bg_store_run_points(st, run, &sp, NULL), BG_OK);
    bg_model_parse("sh3", &m, NULL);
    bg_fit_opts o = bg_fit_default_opts(&m);
    assert_int_equal(bg_fit_points(sp.pts, sp.n, &o, &f, NULL), BG_OK);
    assert_int_equal(bg_store_fit_queue(st, run, &f, sp.ids, &fid[0], &err), BG_EINTERNAL);
    assert_int_equal(bg_store_begin(st, NULL), BG_OK);
    for (int k = 0; k < 71; k++) {
        f.chi2 = (double)k; /* tells the rows apart */
        if (k == 40)
            assert_int_equal(bg_store_fit_save(st, run, &f, sp.ids, &fid[k], NULL), BG_OK);
        else
            assert_int_equal(bg_store_fit_queue(st, run, &f, sp.ids, &fid[k], NULL), BG_OK);
    }
    assert_int_equal(bg_store_commit(st, NULL), BG_OK);
    for (int k = 0; k < 71; k++) {
        assert_true(k == 0 || fid[k] == fid[k - 1] + 1);
        assert_int_equal(bg_store_fit_get(st, fid[k], &row, NULL), BG_OK);
        assert_true(row.chi2 == (double)k);
        for (size_t i = 0; i < f.npar; i++)
            assert_true(row.model.coef[i] == f.model.coef[i]);
        for (size_t i = 0; i < f.npar * f.npar; i++)
            assert_true(row.cov[i] == f.cov[i]);
        assert_int_equal(row.run_id, run);
    }
    /* a rolled-back queue leaves nothing */
    assert_int_equal(bg_store_begin(st, NULL), BG_OK);
    long long gone;
    assert_int_equal(bg_store_fit_queue(st, run, &f, sp.ids, &gone, NULL), BG_OK);
    bg_store_rollback(st);
    assert_int_equal(bg_store_fit_get(st, gone, &row, &err), BG_EINVAL);
    bg_fit_release(&f);
    bg_store_points_release(&sp);
    bg_readings_release(&rs);
    bg_store_close(st);
}

static void hostile_text_is_just_text(void **state)
{
    (void)state;
    bg_store *st = fresh("f.db");
    bg_probe p;
    bg_error err = BG_ERROR_INIT;
    const char *evil = "'; DROP TABLE probe; --";
    assert_int_equal(bg_store_probe_add(st, evil, "L1", "\"quoted\"\tnote <b>", NULL, NULL),
                     BG_OK);
    assert_int_equal(bg_store_probe_get(st, evil, &p, NULL), BG_OK);
    assert_string_equal(p.serial, evil);
    assert_string_equal(p.note, "\"quoted\"\tnote <b>");
    assert_int_equal(bg_store_probe_get(st, "P1", &p, NULL), BG_OK); /* the table is there */
    assert_int_equal(bg_store_probe_add(st, evil, "L1", NULL, NULL, &err), BG_EINVAL);
    assert_string_equal(err.msg, "probe ''; DROP TABLE probe; --' already exists");
    char longs[300];
    memset(longs, 'x', sizeof longs - 1);
    longs[sizeof longs - 1] = '\0';
    assert_int_equal(bg_store_probe_add(st, longs, "L1", NULL, NULL, &err), BG_EINVAL);
    assert_string_equal(err.msg, "serial is longer than 200 bytes");
    bg_store_close(st);
}

static void platinum_reference_import(void **state)
{
    (void)state;
    bg_store *st = fresh("g.db");
    bg_ref ref;
    bg_run meta;
    bg_readings rs;
    long long run;
    /* IEC 60751 coefficients (refdata 3, published); 138.5055 ohm is 100 degC there */
    const char *text = "ref_ohms,ohms\n100.0,32654.1\n119.397125,3608.4\n138.5055,677.5\n";
    memset(&ref, 0, sizeof ref);
    strcpy(ref.ident, "PRT");
    strcpy(ref.certificate, "C");
    ref.kind = BG_REF_CVD, ref.cvd_r0_ohm = 100, ref.cvd_a = 3.9083e-3, ref.cvd_b = -5.775e-7;
    ref.cvd_c = -4.183e-12;
    assert_int_equal(bg_store_ref_add(st, &ref, NULL, NULL), BG_OK);
    assert_int_equal(bg_csv_parse(text, strlen(text), "prt.csv", &rs, NULL), BG_OK);
    memset(&meta, 0, sizeof meta);
    strcpy(meta.serial, "P1");
    strcpy(meta.ref_ident, "PRT");
    assert_int_equal(bg_store_import(st, &rs, &meta, &run, NULL), BG_OK);
    bg_store_points sp = BG_STORE_POINTS_INIT;
    assert_int_equal(bg_store_run_points(st, run, &sp, NULL), BG_OK);
    assert_close(sp.pts[0].t_k, 273.15, 0, 1e-9);
    assert_close(sp.pts[1].t_k, 323.15, 0, 1e-7);
    assert_close(sp.pts[2].t_k, 373.15, 0, 1e-7);
    bg_store_points_release(&sp);
    bg_readings_release(&rs);
    bg_store_close(st);
}

static void scheme_rule(void **state)
{
    SQLITE_ONLY();
    (void)state;
    bg_store *st = NULL;
    bg_error err = BG_ERROR_INIT;
    char target[500], cwd[4096];
    struct stat sb;
    /* "sqlite:PATH" opens the SQLite file PATH */
    snprintf(target, sizeof target, "sqlite:%s", path_of("s.db"));
    assert_int_equal(bg_store_open(target, BG_STORE_CREATE, &st, &err), BG_OK);
    bg_store_close(st);
    assert_int_equal(stat(path_of("s.db"), &sb), 0);
    assert_int_equal(bg_store_open(path_of("s.db"), 0, &st, &err), BG_OK);
    bg_store_close(st);
    /* unknown schemes are refused, and nothing is created */
    assert_non_null(getcwd(cwd, sizeof cwd));
    assert_int_equal(chdir(dir), 0);
    assert_int_equal(bg_store_open("nosuch:x.db", BG_STORE_CREATE, &st, &err), BG_EINVAL);
    assert_null(st);
    assert_string_equal(err.msg, "database 'nosuch:x.db': unknown scheme 'nosuch:' (this "
                        "bandgap knows 'sqlite:', 'postgresql:' and 'postgres:'; write "
                        "'./nosuch:x.db' for a file of that name)");
    assert_int_not_equal(stat("nosuch:x.db", &sb), 0);
    /* a server's scheme is known: here no server listens there */
    assert_int_equal(bg_store_open("postgresql:///cal?host=/nonexistent-bandgap", 0, &st, &err),
                     BG_EUNAVAIL);
    assert_non_null(strstr(err.msg, "cannot connect to the database server"));
    assert_int_equal(bg_store_open("ftp://bench/cal", 0, &st, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "unknown scheme 'ftp:'"));
    assert_int_equal(bg_store_open("sqlite:", BG_STORE_CREATE, &st, &err), BG_EINVAL);
    /* one letter is a drive, not a scheme: a path (missing here) */
    assert_int_equal(bg_store_open("c:none.db", 0, &st, &err), BG_ENOENT);
    /* a file whose name looks like a scheme: made through ./, then opened by its name */
    assert_int_equal(bg_store_open("run:1.db", BG_STORE_CREATE, &st, &err), BG_EINVAL);
    assert_int_equal(bg_store_open("./run:1.db", BG_STORE_CREATE, &st, &err), BG_OK);
    bg_store_close(st);
    assert_int_equal(bg_store_open("run:1.db", 0, &st, &err), BG_OK);
    bg_store_close(st);
    assert_int_equal(chdir(cwd), 0);
}

/* The created_at of probe 'serial' added now. */
static void probe_time(bg_store *st, const char *serial, char *when)
{
    bg_probe p;
    assert_int_equal(bg_store_probe_add(st, serial, "L1", NULL, NULL, NULL), BG_OK);
    assert_int_equal(bg_store_probe_get(st, serial, &p, NULL), BG_OK);
    strcpy(when, p.created_at);
}

static void injected_clock(void **state)
{
    (void)state;
    bg_store *st = fresh("clock.db");
    bg_readings rs = make_readings();
    bg_run meta, run;
    char when[BG_TIME], now[BG_TIME];
    long long rid;
    double t, before = (double)time(NULL);
    /* two fixed clocks give the times set (epoch seconds converted with GNU date -u, derived) */
    bg_store_set_clock(st, 1764547200);
    probe_time(st, "C1", when);
    assert_string_equal(when, "2025-12-01T00:00:00Z");
    assert_string_equal(bg_store_time(st, now, sizeof now), "2025-12-01T00:00:00Z");
    bg_store_set_clock(st, 1780000000);
    probe_time(st, "C2", when);
    assert_string_equal(when, "2026-05-28T20:26:40Z");
    memset(&meta, 0, sizeof meta);
    strcpy(meta.serial, "C2");
    strcpy(meta.started_at, "2026-05-01T00:00:00Z");
    assert_int_equal(bg_store_import(st, &rs, &meta, &rid, NULL), BG_OK);
    assert_int_equal(bg_store_run_get(st, rid, &run, NULL), BG_OK);
    assert_string_equal(run.imported_at, "2026-05-28T20:26:40Z");
    assert_int_equal(bg_store_exclude(st, 1, "test", "me", NULL), BG_OK);
    bg_store_set_clock(st, 0);
    assert_string_equal(bg_store_time(st, now, sizeof now), "1970-01-01T00:00:00Z");
    /* a negative value goes back to the system clock */
    bg_store_set_clock(st, -1);
    probe_time(st, "C3", when);
    assert_int_equal(bg_time_parse(when, &t, NULL), BG_OK);
    assert_true(t >= before - 1 && t <= (double)time(NULL) + 1);
    bg_readings_release(&rs);
    bg_store_close(st);
}

static void reference_corrections(void **state)
{
    (void)state;
    bg_ref ref;
    bg_error err = BG_ERROR_INIT;
    double t_k;
    /* IEC 60751 table (refdata 3, published): R(t) of the standard PRT; the rounded table
    ** values (5 digits) hold t to 2e-5 K, the exact ones (from the equation) to 1e-7 K */
    static const struct { double t_c, r_ohm, tol_k; } iec[] = {
        { -200.0, 18.52008, 2e-5 }, { -100.0, 60.25584, 2e-5 }, { -40.0, 84.27065203, 1e-7 },
        { 0.0, 100.0, 1e-9 }, { 50.0, 119.397125, 1e-7 }, { 100.0, 138.5055, 1e-7 },
        { 200.0, 175.856, 1e-7 }, { 400.0, 247.092, 1e-7 }, { 850.0, 390.481125, 1e-7 },
    };
    memset(&ref, 0, sizeof ref);
    strcpy(ref.ident, "PRT");
    ref.kind = BG_REF_CVD, ref.cvd_r0_ohm = 100, ref.cvd_a = 3.9083e-3, ref.cvd_b = -5.775e-7;
    ref.cvd_c = -4.183e-12;
    assert_int_equal(bg_ref_check(&ref, NULL), BG_OK);
    for (size_t i = 0; i < sizeof iec / sizeof iec[0]; i++) {
        assert_int_equal(bg_ref_correct(&ref, 1, iec[i].r_ohm, &t_k, NULL), BG_OK);
        assert_close(t_k, iec[i].t_c + 273.15, 0, iec[i].tol_k);
    }
    /* outside -200 .. 850 degC: refused */
    assert_int_equal(bg_ref_correct(&ref, 1, 400.0, &t_k, &err), BG_EINVAL);
    /* a linear certificate correction t = t_read + c0 + c1 (t_read - t0) (derived by hand:
    ** 313.15 + 0.012 - 0.001 * 20 = 313.142 K) */
    ref.kind = BG_REF_LINEAR, ref.lin_c0_k = 0.012, ref.lin_c1 = -0.001, ref.lin_t0_k = 293.15;
    assert_int_equal(bg_ref_correct(&ref, 0, 313.15, &t_k, NULL), BG_OK);
    assert_close(t_k, 313.142, 0, 1e-12);
    /* a reading in ohm needs CVD coefficients; no reference keeps the reading */
    assert_int_equal(bg_ref_correct(&ref, 1, 100.0, &t_k, &err), BG_EINVAL);
    assert_int_equal(bg_ref_correct(NULL, 0, 300.0, &t_k, NULL), BG_OK);
    assert_close(t_k, 300.0, 0, 0);
    ref.lin_t0_k = 0.0;
    assert_int_equal(bg_ref_check(&ref, &err), BG_EINVAL);
}

/* SHA-256 against the example vectors of NIST FIPS 180-4: "abc" (one block) and the 448-bit
** "abcdbcde...nopq" (two blocks) from NIST's "SHA256.pdf" examples with intermediate values
** (csrc.nist.gov, Cryptographic Standards and Guidelines, example values); one million 'a'
** from FIPS 180-2 appendix B.3; the empty message from memory.  All four checked again with
** Debian's python3 hashlib.  Fed whole and a byte at a time (every block boundary). */
static void sha256_fips_vectors(void **state)
{
    SQLITE_ONLY();
    (void)state;
    static const struct { const char *msg; size_t rep; const char *hex; } v[] = {
        { "abc", 1, "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad" },
        { "", 1, "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855" },
        { "abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq", 1,
          "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1" },
        { "a", 1000000, "cdc76e5c9914fb9281a1c7e284d73e67f1809a48a497200e046d39ccc7112cd0" },
    };
    for (size_t k = 0; k < sizeof v / sizeof v[0]; k++) {
        struct bgi_sha256 h, h1;
        unsigned char d[32];
        char hex[65];
        size_t len = strlen(v[k].msg);
        bgi_sha256_init(&h);
        bgi_sha256_init(&h1);
        for (size_t r = 0; r < v[k].rep; r++) {
            bgi_sha256_update(&h, v[k].msg, len);
            for (size_t i = 0; i < len && v[k].rep == 1; i++)
                bgi_sha256_update(&h1, v[k].msg + i, 1);
        }
        bgi_sha256_final(&h, d);
        bgi_sha256_hex(d, hex);
        assert_string_equal(hex, v[k].hex);
        if (v[k].rep == 1) {
            bgi_sha256_final(&h1, d);
            bgi_sha256_hex(d, hex);
            assert_string_equal(hex, v[k].hex);
        }
    }
}

static long long run_count(const char *name)
{
    sqlite3 *db;
    sqlite3_stmt *s;
    long long n = -1;
    assert_int_equal(sqlite3_open(path_of(name), &db), SQLITE_OK);
    sqlite3_prepare_v2(db, "SELECT count(*) FROM run", -1, &s, NULL);
    if (sqlite3_step(s) == SQLITE_ROW)
        n = sqlite3_column_int64(s, 0);
    sqlite3_finalize(s);
    sqlite3_close(db);
    return n;
}

/* The digest of the canonical form (docs/commands/import.md) is the one Debian's python3
** hashlib gives for the same text: "bandgap readings v1\nC\n" and per reading the big-endian
** IEEE bits of t_raw, R, u(T), u(R) in hex with ';' and the time, -0 written as +0.  The same
** readings in another layout are refused with the earlier run's id and the file unchanged;
** --new-run imports them and records the run they repeat; one changed digit is new data. */
/* The run id is optional: an import without it (NULL) still makes the run and its record in
** the chain, and the chain verifies. */
static void import_without_run_id(void **state)
{
    (void)state;
    const char *a = "temp_c,ohms,u_temp_k\n25.5,10000.25,0.002\n0,32659.888,0.002\n";
    bg_store *st = fresh("norunid.db");
    bg_readings ra;
    bg_run meta;
    bg_store_check chk;
    long long heads = 0;
    char head[65];
    assert_int_equal(bg_csv_parse(a, strlen(a), "a.csv", &ra, NULL), BG_OK);
    memset(&meta, 0, sizeof meta);
    strcpy(meta.serial, "P1");
    strcpy(meta.source, "a.csv");
    assert_int_equal(bg_store_chain_head(st, &heads, head, NULL), BG_OK);
    long long before = heads;
    assert_int_equal(bg_store_import(st, &ra, &meta, NULL, NULL), BG_OK);
    assert_int_equal(bg_store_chain_head(st, &heads, head, NULL), BG_OK);
    assert_int_equal(heads, before + 1);
    assert_int_equal(bg_store_verify(st, &chk, NULL), BG_OK);
    assert_false(chk.bad);
    assert_int_equal(chk.records, heads);
    bg_readings_release(&ra);
    bg_store_close(st);
}

static void repeated_import_refused(void **state)
{
    SQLITE_ONLY();
    (void)state;
    const char *a = "temp_c,ohms,u_temp_k,time\n25.5,10000.25,0.002,2026-11-24T08:00:00Z\n"
                    "-0,32659.888,0.002,2026-11-24T08:20:00Z\n";
    const char *b = "# the same readings, another file\ntemp_c;ohms;u_temp_k;time;note\n"
                    "25.50;10000.250;2e-3;2026-11-24T08:00:00Z;x\n\n"
                    "0.0;32659.888;0.002;2026-11-24T08:20:00Z;\n";
    const char *c = "temp_c,ohms,u_temp_k,time\n25.5,10000.26,0.002,2026-11-24T08:00:00Z\n"
                    "-0,32659.888,0.002,2026-11-24T08:20:00Z\n";
    bg_store *st = fresh("dup.db");
    bg_readings ra, rb, rc_;
    bg_run meta, r;
    bg_error err = BG_ERROR_INIT;
    long long run1 = 0, run2 = 0;
    assert_int_equal(bg_csv_parse(a, strlen(a), "a.csv", &ra, NULL), BG_OK);
    assert_int_equal(bg_csv_parse(b, strlen(b), "b.csv", &rb, NULL), BG_OK);
    assert_int_equal(bg_csv_parse(c, strlen(c), "c.csv", &rc_, NULL), BG_OK);
    memset(&meta, 0, sizeof meta);
    strcpy(meta.serial, "P1");
    strcpy(meta.source, "a.csv");
    assert_int_equal(bg_store_import(st, &ra, &meta, &run1, NULL), BG_OK);
    assert_int_equal(bg_store_run_get(st, run1, &r, NULL), BG_OK);
    /* python3: hashlib.sha256 of the canonical text above */
    assert_string_equal(r.readings_sha256,
                        "428125d6c3692588c778858ad6d1888b1f350587df86301180ea92d376d57871");
    assert_int_equal(r.repeats_run, 0);
    bg_store_close(st);
    unsigned long before = file_sum(path_of("dup.db"));
    assert_int_equal(bg_store_open(path_of("dup.db"), 0, &st, NULL), BG_OK);
    strcpy(meta.source, "b.csv");
    assert_int_equal(bg_store_import(st, &rb, &meta, &run2, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "b.csv: these readings of probe 'P1' were imported before "
                                    "as run 1 (started 2026-11-24T08:00:00Z, from a.csv)"));
    bg_store_close(st);
    assert_true(file_sum(path_of("dup.db")) == before);
    assert_int_equal(bg_store_open(path_of("dup.db"), 0, &st, NULL), BG_OK);
    meta.new_run = 1;
    assert_int_equal(bg_store_import(st, &rb, &meta, &run2, NULL), BG_OK);
    assert_int_equal(bg_store_run_get(st, run2, &r, NULL), BG_OK);
    assert_int_equal(r.repeats_run, run1);
    meta.new_run = 0;
    strcpy(meta.source, "c.csv");
    assert_int_equal(bg_store_import(st, &rc_, &meta, &run2, NULL), BG_OK);
    assert_int_equal(bg_store_run_get(st, run2, &r, NULL), BG_OK);
    assert_int_equal(r.repeats_run, 0);
    assert_string_not_equal(r.readings_sha256,
                            "428125d6c3692588c778858ad6d1888b1f350587df86301180ea92d376d57871");
    bg_readings_release(&ra);
    bg_readings_release(&rb);
    bg_readings_release(&rc_);
    bg_store_close(st);
}

/* A reference past its due date: refused (nothing written) unless a reason is given, which
** the run keeps; a reason without the need is refused too.  A date alone covers its day. */
static void overdue_reference_needs_a_reason(void **state)
{
    SQLITE_ONLY();
    (void)state;
    const char *text = "temp_c,ohms,time\n25.0,10000.0,2026-06-30T23:59:59Z\n"
                       "30.0,8000.0,2026-07-01T00:00:00+02:00\n";
    const char *late = "temp_c,ohms,time\n25.0,10001.0,2026-06-30T23:59:59Z\n"
                       "30.0,8001.0,2026-07-01T00:00:00Z\n";
    bg_store *st = fresh("due.db");
    bg_readings rs, rl;
    bg_ref ref;
    bg_run meta, r;
    bg_error err = BG_ERROR_INIT;
    long long run = 0;
    memset(&ref, 0, sizeof ref);
    strcpy(ref.ident, "R1");
    strcpy(ref.certificate, "C1");
    strcpy(ref.due_date, "2026-06-30");
    ref.kind = BG_REF_NONE;
    assert_int_equal(bg_store_ref_add(st, &ref, NULL, NULL), BG_OK);
    assert_int_equal(bg_csv_parse(text, strlen(text), "in.csv", &rs, NULL), BG_OK);
    assert_int_equal(bg_csv_parse(late, strlen(late), "late.csv", &rl, NULL), BG_OK);
    memset(&meta, 0, sizeof meta);
    strcpy(meta.serial, "P1");
    strcpy(meta.ref_ident, "R1");
    strcpy(meta.source, "in.csv");
    /* every reading on the due day (the second is 22:00 UTC): accepted, nothing recorded */
    assert_int_equal(bg_store_import(st, &rs, &meta, &run, NULL), BG_OK);
    assert_int_equal(bg_store_run_get(st, run, &r, NULL), BG_OK);
    assert_string_equal(r.ref_overdue, "");
    assert_string_equal(r.ref_due_date, "2026-06-30");
    /* one reading the day after: refused, naming the line; nothing written */
    strcpy(meta.source, "late.csv");
    assert_int_equal(bg_store_import(st, &rl, &meta, &run, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "late.csv:3: reference 'R1' was due for calibration on "
                                    "2026-06-30"));
    assert_int_equal(run_count("due.db"), 1);
    /* with a reason: imported, and the run keeps it */
    strcpy(meta.ref_overdue, "checked at the ice point");
    assert_int_equal(bg_store_import(st, &rl, &meta, &run, NULL), BG_OK);
    assert_int_equal(bg_store_run_get(st, run, &r, NULL), BG_OK);
    assert_string_equal(r.ref_overdue, "checked at the ice point");
    /* a reason when none is needed is refused: no false override on record */
    meta.new_run = 1;
    strcpy(meta.source, "in.csv");
    assert_int_equal(bg_store_import(st, &rs, &meta, &run, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "not past its due date"));
    assert_int_equal(run_count("due.db"), 2);
    bg_readings_release(&rs);
    bg_readings_release(&rl);
    bg_store_close(st);
}

static int no_lot(const bg_lot *lot, void *ctx)
{
    (void)lot, (void)ctx;
    return 0;
}

/* An unknown serial, lot code, reference or part gets the nearest name of its kind in the
** database as "did you mean" (invented names; the distances counted by hand: one swap of
** neighbours, one substitution, one insertion), the nearest even when it is not the first by
** name, the first of equally near ones; nothing when none is near. */
static void unknown_names_get_the_nearest(void **state)
{
    (void)state;
    bg_store *st = fresh("dym.db");
    bg_error err = BG_ERROR_INIT;
    bg_lot lot;
    bg_probe p;
    bg_ref ref;
    memset(&lot, 0, sizeof lot);
    strcpy(lot.code, "L-2611");
    strcpy(lot.part, "NTC-10K-3950");
    lot.r25_ohm = 10000, lot.beta_k = 3950, lot.pair_t1_k = 298.15, lot.pair_t2_k = 358.15;
    lot.tol_r25 = 0.01, lot.tol_beta = 0.01;
    assert_int_equal(bg_store_lot_add(st, &lot, NULL, NULL), BG_OK);
    /* from GH-4017: GH-0317 two edits, GH-0417 one (a swap), GH-4016 one (a substitution) */
    assert_int_equal(bg_store_probe_add(st, "GH-0317", "L-2611", NULL, NULL, NULL), BG_OK);
    assert_int_equal(bg_store_probe_add(st, "GH-0417", "L-2611", NULL, NULL, NULL), BG_OK);
    assert_int_equal(bg_store_probe_add(st, "GH-4016", "L-2611", NULL, NULL, NULL), BG_OK);
    memset(&ref, 0, sizeof ref);
    strcpy(ref.ident, "SPRT-7");
    strcpy(ref.certificate, "C1");
    ref.kind = BG_REF_NONE;
    assert_int_equal(bg_store_ref_add(st, &ref, NULL, NULL), BG_OK);

    assert_int_equal(bg_store_probe_get(st, "GH-4017", &p, &err), BG_EINVAL);
    assert_string_equal(err.msg, "unknown probe 'GH-4017' (did you mean 'GH-0417'? add it with "
                                 "'bandgap probe add SERIAL --lot CODE')");
    assert_int_equal(bg_store_probe_history(st, "gh-0417", NULL, NULL, NULL, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "(did you mean 'GH-0417'?"));
    assert_int_equal(bg_store_probe_get(st, "ZZ-999", &p, &err), BG_EINVAL);
    assert_string_equal(err.msg, "unknown probe 'ZZ-999' (add it with 'bandgap probe add "
                                 "SERIAL --lot CODE')");
    assert_int_equal(bg_store_lot_get(st, "L-2161", &lot, &err), BG_EINVAL);
    assert_string_equal(err.msg, "unknown lot 'L-2161' (did you mean 'L-2611'? add it with "
                                 "'bandgap lot add')");
    assert_int_equal(bg_store_lot_get(st, "L-2161", &lot, NULL), BG_EINVAL);
    assert_int_equal(bg_store_probe_add(st, "GH-9", "L-261", NULL, NULL, &err), BG_EINVAL);
    assert_string_equal(err.msg, "unknown lot 'L-261' (did you mean 'L-2611'? add it with "
                                 "'bandgap lot add')");
    assert_int_equal(bg_store_run_each(st, NULL, "L-2161", NULL, NULL, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "(did you mean 'L-2611'?"));
    assert_int_equal(bg_store_ref_get(st, "SPRT7", &ref, &err), BG_EINVAL);
    assert_string_equal(err.msg, "unknown reference thermometer 'SPRT7' (did you mean "
                                 "'SPRT-7'? add it with 'bandgap ref add')");
    assert_int_equal(bg_store_part_lots(st, "NTC-10K-3590", no_lot, NULL, &err), BG_EINVAL);
    assert_string_equal(err.msg, "no lots of part 'NTC-10K-3590' (did you mean "
                                 "'NTC-10K-3950'?)");
    /* another failure about a name that exists gets no suggestion */
    assert_int_equal(bg_store_probe_add(st, "GH-0417", "L-2611", NULL, NULL, &err), BG_EINVAL);
    assert_null(strstr(err.msg, "did you mean"));
    bg_store_close(st);
}

/* ---- the lot-wide read paths ---- */

/* Import make_readings() (resistances scaled by 'scale') as a run of 'serial' started at
** 'when'; fit it with each model of 'models' (space separated, "" for none), in order. */
static long long add_run(bg_store *st, const char *serial, const char *when, double scale,
                         const char *models)
{
    bg_readings rs = make_readings();
    bg_run meta;
    long long run;
    char list[64], *save = NULL;
    for (size_t i = 0; i < rs.n; i++)
        rs.v[i].pt.r_ohm *= scale;
    memset(&meta, 0, sizeof meta);
    snprintf(meta.serial, sizeof meta.serial, "%s", serial);
    snprintf(meta.started_at, sizeof meta.started_at, "%s", when);
    strcpy(meta.source, "r.csv");
    meta.new_run = 1;
    assert_int_equal(bg_store_import(st, &rs, &meta, &run, NULL), BG_OK);
    snprintf(list, sizeof list, "%s", models);
    for (char *m = strtok_r(list, " ", &save); m; m = strtok_r(NULL, " ", &save)) {
        bg_store_points sp = BG_STORE_POINTS_INIT;
        bg_fit f = BG_FIT_INIT;
        bg_model mod;
        assert_int_equal(bg_model_parse(m, &mod, NULL), BG_OK);
        bg_fit_opts o = bg_fit_default_opts(&mod);
        assert_int_equal(bg_store_run_points(st, run, &sp, NULL), BG_OK);
        assert_int_equal(bg_fit_points(sp.pts, sp.n, &o, &f, NULL), BG_OK);
        assert_int_equal(bg_store_fit_save(st, run, &f, sp.ids, NULL, NULL), BG_OK);
        bg_fit_release(&f);
        bg_store_points_release(&sp);
    }
    bg_readings_release(&rs);
    return run;
}

/* Lot L1 (from fresh(): probe P1) with probes added out of serial order: P1 with a run fitted
** twice (the newer fit counts), a later run with an excluded reading, and a run imported last
** but started between them, never fitted; P3 with two runs started at the same time; P2 with
** one unfitted run; P0 without runs.  Lot L2 beside it with probe Q1. */
static bg_store *lot_record(const char *name)
{
    bg_store *st = fresh(name);
    bg_lot lot;
    bg_store_points sp = BG_STORE_POINTS_INIT;
    memset(&lot, 0, sizeof lot);
    strcpy(lot.code, "L2"), strcpy(lot.part, "NTC");
    lot.r25_ohm = 10000, lot.beta_k = 3950, lot.pair_t1_k = 298.15, lot.pair_t2_k = 358.15;
    lot.tol_r25 = 0.01, lot.tol_beta = 0.01;
    assert_int_equal(bg_store_lot_add(st, &lot, NULL, NULL), BG_OK);
    assert_int_equal(bg_store_probe_add(st, "Q1", "L2", NULL, NULL, NULL), BG_OK);
    assert_int_equal(bg_store_probe_add(st, "P3", "L1", NULL, NULL, NULL), BG_OK);
    assert_int_equal(bg_store_probe_add(st, "P2", "L1", NULL, NULL, NULL), BG_OK);
    assert_int_equal(bg_store_probe_add(st, "P0", "L1", NULL, NULL, NULL), BG_OK);
    add_run(st, "P1", "2026-01-10T08:00:00Z", 1.0, "sh3 beta");
    long long b = add_run(st, "P1", "2026-03-10T08:00:00Z", 1.0003, "");
    assert_int_equal(bg_store_run_points(st, b, &sp, NULL), BG_OK);
    assert_int_equal(bg_store_exclude(st, sp.ids[1], "bath not settled", "A. Tester", NULL),
                     BG_OK);
    bg_store_points_release(&sp);
    add_run(st, "P1", "2026-03-10T08:00:00Z", 1.0003, "sh3");
    add_run(st, "Q1", "2026-01-12T08:00:00Z", 1.0007, "sh3");
    add_run(st, "P3", "2026-02-01T08:00:00Z", 0.9998, "sh4");
    add_run(st, "P3", "2026-02-01T08:00:00Z", 0.9996, "sh3");
    add_run(st, "P2", "2026-02-03T08:00:00Z", 1.0001, "");
    add_run(st, "P1", "2026-02-10T08:00:00Z", 1.0002, "");
    return st;
}

/* The per-probe reference: a probe's runs (bg_store_run_each), in start order, each with the
** newest fit by bg_store_run_fit and bg_store_fit_get, one lookup per run. */
struct ref_run { long long id, fit; char when[BG_TIME]; };
struct ref_hist { struct ref_run r[16]; size_t n; const char *since; };

static int ref_run_cb(const bg_run *r, void *ctx)
{
    struct ref_hist *h = ctx;
    if (h->since && strcmp(r->started_at, h->since) < 0)
        return 0;
    assert_true(h->n < 16);
    h->r[h->n].id = r->id;
    snprintf(h->r[h->n].when, BG_TIME, "%s", r->started_at);
    h->n++;
    return 0;
}

static int ref_run_cmp(const void *a, const void *b)
{
    const struct ref_run *x = a, *y = b;
    int c = strcmp(x->when, y->when);
    return c ? c : (x->id > y->id) - (x->id < y->id);
}

static void ref_history(bg_store *st, const char *serial, const char *since,
                        struct ref_hist *h)
{
    memset(h, 0, sizeof *h);
    h->since = since;
    assert_int_equal(bg_store_run_each(st, serial, NULL, ref_run_cb, h, NULL), BG_OK);
    qsort(h->r, h->n, sizeof h->r[0], ref_run_cmp);
    for (size_t i = 0; i < h->n; i++)
        assert_int_equal(bg_store_run_fit(st, h->r[i].id, &h->r[i].fit, NULL), BG_OK);
}

static void same_fit(bg_store *st, const bg_fit_row *f, long long id)
{
    bg_fit_row g;
    assert_int_equal(bg_store_fit_get(st, id, &g, NULL), BG_OK);
    assert_memory_equal(f, &g, sizeof g); /* both rows are zeroed before they are filled */
}

struct hist_check { bg_store *st; const char *since; char seen[8][BG_TEXT]; size_t n; };

static int histories_cb(const char *serial, const bg_fit_row *fits,
                        char (*started_at)[BG_TIME], size_t n, size_t unfitted, void *ctx)
{
    struct hist_check *c = ctx;
    struct ref_hist h;
    size_t k = 0, nofit = 0;
    snprintf(c->seen[c->n++], BG_TEXT, "%s", serial);
    ref_history(c->st, serial, c->since, &h);
    for (size_t i = 0; i < h.n; i++) {
        if (!h.r[i].fit) {
            nofit++;
            continue;
        }
        assert_true(k < n);
        same_fit(c->st, &fits[k], h.r[i].fit);
        assert_string_equal(started_at[k], h.r[i].when);
        k++;
    }
    assert_int_equal(n, k);
    assert_int_equal(unfitted, nofit);
    return 0;
}

static int probe_history_cb(const char *started_at, long long run_id, const bg_fit_row *fit,
                            void *ctx)
{
    struct ref_hist *h = ctx;
    assert_true(h->n < 16);
    h->r[h->n].id = run_id;
    h->r[h->n].fit = fit ? fit->id : 0;
    snprintf(h->r[h->n].when, BG_TIME, "%s", started_at);
    h->n++;
    return 0;
}

/* bg_store_lot_histories and bg_store_probe_history (one query each) give the rows that the
** per-probe, per-run lookups give, with and without 'since'. */
static void lot_histories_match_per_probe_lookups(void **state)
{
    (void)state;
    bg_store *st = lot_record("h.db");
    const char *since[3] = { NULL, "2026-02-01T08:00:00Z", "2027-01-01T00:00:00Z" };
    static const char *const serials[4] = { "P0", "P1", "P2", "P3" };
    for (int run = 0; run < 2; run++) /* twice: the cached statements give the same again */
        for (int s = 0; s < 3; s++) {
            struct hist_check c;
            memset(&c, 0, sizeof c);
            c.st = st, c.since = since[s];
            assert_int_equal(bg_store_lot_histories(st, "L1", since[s], histories_cb, &c, NULL),
                             BG_OK);
            assert_int_equal(c.n, 4); /* by serial, P0 without runs included, not Q1 */
            for (size_t i = 0; i < 4; i++)
                assert_string_equal(c.seen[i], serials[i]);
            for (size_t i = 0; i < 4; i++) {
                struct ref_hist h, g;
                ref_history(st, serials[i], since[s], &h);
                memset(&g, 0, sizeof g);
                assert_int_equal(bg_store_probe_history(st, serials[i], since[s],
                                                        probe_history_cb, &g, NULL), BG_OK);
                assert_int_equal(g.n, h.n);
                for (size_t k = 0; k < h.n; k++) {
                    assert_int_equal(g.r[k].id, h.r[k].id);
                    assert_int_equal(g.r[k].fit, h.r[k].fit);
                    assert_string_equal(g.r[k].when, h.r[k].when);
                }
            }
        }
    bg_error err = BG_ERROR_INIT;
    assert_int_equal(bg_store_lot_histories(st, "L3", NULL, histories_cb, NULL, &err),
                     BG_EINVAL);
    assert_non_null(strstr(err.msg, "unknown lot 'L3'"));
    bg_store_close(st);
}

struct latest_check { bg_store *st; const char *since; long long last_id; size_t n, nfit; };

static int latest_cb(const char *serial, const bg_fit_row *fit, void *ctx)
{
    struct latest_check *c = ctx;
    struct ref_hist h;
    bg_probe p;
    assert_int_equal(bg_store_probe_get(c->st, serial, &p, NULL), BG_OK);
    assert_true(p.id > c->last_id); /* in the order the probes were added */
    c->last_id = p.id;
    c->n++;
    ref_history(c->st, serial, c->since, &h);
    long long want = h.n ? h.r[h.n - 1].fit : 0; /* the newest fit of the latest run */
    if (!want) {
        assert_null(fit);
        return 0;
    }
    assert_non_null(fit);
    same_fit(c->st, fit, want);
    c->nfit++;
    return 0;
}

/* bg_store_lot_latest_fits (one query) gives each probe's current fit as the per-probe
** lookups find it: the newest fit of the latest run since 'since', or none. */
static void lot_latest_fits_match_per_probe_lookups(void **state)
{
    (void)state;
    bg_store *st = lot_record("l.db");
    const char *since[3] = { NULL, "2026-02-01T08:00:00Z", "2027-01-01T00:00:00Z" };
    const size_t nfit[3] = { 2, 2, 0 };
    for (int run = 0; run < 2; run++)
        for (int s = 0; s < 3; s++) {
            struct latest_check c = { st, since[s], 0, 0, 0 };
            assert_int_equal(bg_store_lot_latest_fits(st, "L1", since[s], latest_cb, &c, NULL),
                             BG_OK);
            assert_int_equal(c.n, 4);
            /* P1: latest run (2026-03-10, imported third) fitted; P3: the later-imported of
            ** two runs at the same time, fitted; P2 unfitted; P0 no runs */
            assert_int_equal(c.nfit, nfit[s]);
        }
    bg_store_close(st);
}

/* An export walk written as text, one line per event, from bg_store_export_each or from the
** per-probe listings. */
struct log { char *buf; size_t len, cap; };

static void logf_(struct log *l, const char *fmt, ...)
{
    va_list ap;
    if (l->cap - l->len < 512) {
        l->cap = l->cap ? 2 * l->cap : 4096;
        l->buf = realloc(l->buf, l->cap);
        assert_non_null(l->buf);
    }
    va_start(ap, fmt);
    l->len += (size_t)vsnprintf(l->buf + l->len, l->cap - l->len, fmt, ap);
    va_end(ap);
}

static int log_probe(const bg_probe *p, void *ctx)
{
    logf_(ctx, "probe %lld %s %s %lld %lld\n", p->id, p->serial, p->lot_code, p->nruns, p->nfits);
    return 0;
}

static int log_run(const bg_run *r, void *ctx)
{
    logf_(ctx, "run %lld %s %s %lld %lld %lld %s\n", r->id, r->serial, r->started_at,
          r->nreadings, r->nexcluded, r->nfits, r->readings_sha256);
    return 0;
}

static int log_reading(const bg_reading_row *g, void *ctx)
{
    logf_(ctx, "reading %lld %lld %zu %.17g %.17g %.17g %s %s %d %s %s\n", g->id, g->run_id,
          g->line, g->t_k, g->r_ohm, g->u_r_ohm, g->time, g->note, g->excluded, g->excl_reason,
          g->excl_by);
    return 0;
}

static int log_run_end(const bg_run *r, void *ctx)
{
    logf_(ctx, "end run %lld\n", r->id);
    return 0;
}

static int log_fits(const bg_probe *p, void *ctx)
{
    logf_(ctx, "fits of %s\n", p->serial);
    return 0;
}

static int log_fit(const bg_fit_row *f, void *ctx)
{
    logf_(ctx, "fit %lld %lld %s %zu %.17g %.17g %.17g %.17g %s\n", f->id, f->run_id, f->serial,
          f->npar, f->model.coef[0], f->model.coef[1], f->cov[0], f->rms_mk, f->created_at);
    return 0;
}

static int log_probe_end(const bg_probe *p, void *ctx)
{
    logf_(ctx, "end probe %s\n", p->serial);
    return 0;
}

struct ref_walk { bg_store *st; struct log *l; };

static int ref_walk_run(const bg_run *r, void *ctx)
{
    struct ref_walk *w = ctx;
    log_run(r, w->l);
    assert_int_equal(bg_store_reading_each(w->st, r->id, log_reading, w->l, NULL), BG_OK);
    log_run_end(r, w->l);
    return 0;
}

static int ref_walk_fit(const bg_fit_row *f, void *ctx)
{
    return log_fit(f, ((struct ref_walk *)ctx)->l);
}

static int ref_walk_probe(const bg_probe *p, void *ctx)
{
    struct ref_walk *w = ctx;
    log_probe(p, w->l);
    assert_int_equal(bg_store_run_each(w->st, p->serial, NULL, ref_walk_run, w, NULL), BG_OK);
    log_fits(p, w->l);
    assert_int_equal(bg_store_fit_each(w->st, p->serial, NULL, ref_walk_fit, w, NULL), BG_OK);
    log_probe_end(p, w->l);
    return 0;
}

/* bg_store_export_each (statements prepared once, found by index) walks the same record as the
** per-probe listings: probes by serial, runs and readings (the excluded one with its reason)
** and fits by id; for a lot and for one probe; it stops when asked. */
static void export_walk_matches_per_probe_listings(void **state)
{
    (void)state;
    bg_store *st = lot_record("x.db");
    static const bg_export_cbs cbs = { log_probe, log_run, log_reading, log_run_end, log_fits,
                                       log_fit, log_probe_end };
    const char *lots[2] = { "L1", "L2" };
    for (int run = 0; run < 2; run++)
        for (int k = 0; k < 3; k++) {
            struct log got = { NULL, 0, 0 }, want = { NULL, 0, 0 };
            struct ref_walk w = { st, &want };
            if (k < 2) {
                assert_int_equal(bg_store_export_each(st, NULL, lots[k], &cbs, &got, NULL),
                                 BG_OK);
                assert_int_equal(bg_store_probe_each(st, lots[k], ref_walk_probe, &w, NULL),
                                 BG_OK);
            } else {
                assert_int_equal(bg_store_export_each(st, "P1", NULL, &cbs, &got, NULL), BG_OK);
                bg_probe p;
                assert_int_equal(bg_store_probe_get(st, "P1", &p, NULL), BG_OK);
                ref_walk_probe(&p, &w);
            }
            assert_non_null(got.buf);
            assert_string_equal(got.buf, want.buf);
            if (k == 0) { /* what the record holds, so that the comparison means something */
                assert_non_null(strstr(got.buf, "probe 5 P0 L1 0 0\nfits of P0\nend probe P0"));
                assert_non_null(strstr(got.buf, " 1 bath not settled A. Tester\n"));
                assert_non_null(strstr(got.buf, "fits of P2\nend probe P2"));
            }
            free(got.buf), free(want.buf);
        }
    bg_error err = BG_ERROR_INIT;
    assert_int_equal(bg_store_export_each(st, "P9", NULL, &cbs, NULL, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "unknown probe 'P9'"));
    assert_int_equal(bg_store_export_each(st, NULL, NULL, &cbs, NULL, &err), BG_EINVAL);
    assert_int_equal(bg_store_export_each(st, "P1", "L1", &cbs, NULL, &err), BG_EINVAL);
    bg_store_close(st);
}

/* Statement executions and full-scan steps of the calls made while counting. */
struct work { long stmts, fullscan; };

static int work_cb(unsigned type, void *ctx, void *p, void *x)
{
    struct work *w = ctx;
    (void)type, (void)x;
    w->stmts++;
    w->fullscan += sqlite3_stmt_status(p, SQLITE_STMTSTATUS_FULLSCAN_STEP, 1);
    return 0;
}

static void count_work(bg_store *st, struct work *w)
{
    memset(w, 0, sizeof *w);
    sqlite3_trace_v2(st->conn->db, SQLITE_TRACE_PROFILE, work_cb, w);
}

static int no_history(const char *serial, const bg_fit_row *fits, char (*started_at)[BG_TIME],
                      size_t n, size_t unfitted, void *ctx)
{
    (void)serial, (void)fits, (void)started_at, (void)n, (void)unfitted, (void)ctx;
    return 0;
}

static int no_latest(const char *serial, const bg_fit_row *fit, void *ctx)
{
    (void)serial, (void)fit, (void)ctx;
    return 0;
}

static int count_fit(const bg_fit_row *f, void *ctx)
{
    (void)f;
    ++*(int *)ctx;
    return 0;
}

/* The work of the lot-wide reads, counted in statements run (no timing): the same number for
** a lot of 4 probes and one of 12 for the current fits and the histories, and for the export
** walk a fixed number per probe and per run; none of them scans a table. */
static void lot_reads_run_a_fixed_number_of_statements(void **state)
{
    SQLITE_ONLY();
    (void)state;
    bg_store *st = lot_record("w.db");
    static const bg_export_cbs none = { NULL, NULL, NULL, NULL, NULL, NULL, NULL };
    struct work w[2][3];
    for (int k = 0; k < 2; k++) {
        if (k == 1)
            for (int i = 0; i < 8; i++) { /* 8 more probes, a fitted run each */
                char serial[16];
                snprintf(serial, sizeof serial, "R%d", i);
                assert_int_equal(bg_store_probe_add(st, serial, "L1", NULL, NULL, NULL), BG_OK);
                add_run(st, serial, "2026-04-01T08:00:00Z", 1.0 + 1e-4 * i, "sh3");
            }
        count_work(st, &w[k][0]);
        assert_int_equal(bg_store_lot_latest_fits(st, "L1", NULL, no_latest, NULL, NULL), BG_OK);
        count_work(st, &w[k][1]);
        assert_int_equal(bg_store_lot_histories(st, "L1", NULL, no_history, NULL, NULL), BG_OK);
        count_work(st, &w[k][2]);
        assert_int_equal(bg_store_export_each(st, NULL, "L1", &none, NULL, NULL), BG_OK);
        sqlite3_trace_v2(st->conn->db, 0, NULL, NULL);
    }
    for (int i = 0; i < 3; i++)
        assert_int_equal(w[0][i].fullscan + w[1][i].fullscan, 0);
    /* the counter sees a scan: a probe's fits listed by its serial scan the fit table */
    struct work scan;
    int nfit = 0;
    count_work(st, &scan);
    assert_int_equal(bg_store_fit_each(st, "P1", NULL, count_fit, &nfit, NULL), BG_OK);
    sqlite3_trace_v2(st->conn->db, 0, NULL, NULL);
    assert_int_equal(nfit, 3);
    assert_true(scan.fullscan > 0);
    assert_int_equal(w[1][0].stmts, w[0][0].stmts);
    assert_int_equal(w[1][1].stmts, w[0][1].stmts);
    /* export: per probe its runs and its fits, per run its readings; 8 probes, 8 runs more */
    assert_int_equal(w[1][2].stmts - w[0][2].stmts, 8 * 2 + 8);
    bg_store_close(st);
}

static int stop_at_first(const char *serial, const bg_fit_row *fit, void *ctx)
{
    (void)serial, (void)fit;
    ++*(int *)ctx;
    return 1;
}

struct nested { bg_store *st; size_t outer, inner; };

static int count_latest(const char *serial, const bg_fit_row *fit, void *ctx)
{
    (void)serial, (void)fit;
    ++*(size_t *)ctx;
    return 0;
}

static int nested_latest(const char *serial, const bg_fit_row *fit, void *ctx)
{
    struct nested *n = ctx;
    (void)serial, (void)fit;
    n->outer++;
    /* the same cached statement is in use: a fresh one is prepared for this call */
    assert_int_equal(bg_store_lot_latest_fits(n->st, "L1", NULL, count_latest, &n->inner, NULL),
                     BG_OK);
    return 0;
}

static void no_statement_busy(bg_store *st)
{
    for (sqlite3_stmt *q = sqlite3_next_stmt(st->conn->db, NULL); q;
         q = sqlite3_next_stmt(st->conn->db, q))
        assert_false(sqlite3_stmt_busy(q));
    assert_true(sqlite3_get_autocommit(st->conn->db)); /* no read transaction left open */
}

/* The statements kept on the connection survive a walk stopped half way, a failed statement,
** a nested call of the same query and a rollback, and none is left busy after a call. */
static void statement_cache_survives_failure_and_rollback(void **state)
{
    SQLITE_ONLY();
    (void)state;
    bg_store *st = lot_record("s.db");
    bg_error err = BG_ERROR_INIT;
    bg_fit_row f;
    bg_lot lot;
    long long cur = 0, fid;
    int calls = 0;
    assert_int_equal(bg_store_lot_latest_fits(st, "L1", NULL, stop_at_first, &calls, NULL),
                     BG_OK);
    assert_int_equal(calls, 1);
    no_statement_busy(st);
    struct nested n = { st, 0, 0 };
    assert_int_equal(bg_store_lot_latest_fits(st, "L1", NULL, nested_latest, &n, NULL), BG_OK);
    assert_int_equal(n.outer, 4);
    assert_int_equal(n.inner, 16);
    no_statement_busy(st);
    /* a failed statement: a fit of a run that does not exist breaks a foreign key */
    bg_store_points sp = BG_STORE_POINTS_INIT;
    bg_fit fit = BG_FIT_INIT;
    bg_model m;
    bg_model_parse("sh3", &m, NULL);
    bg_fit_opts o = bg_fit_default_opts(&m);
    long long run = add_run(st, "P2", "2026-05-01T08:00:00Z", 1.0004, "");
    assert_int_equal(bg_store_run_points(st, run, &sp, NULL), BG_OK);
    assert_int_equal(bg_fit_points(sp.pts, sp.n, &o, &fit, NULL), BG_OK);
    /* a constraint of the record (no run 99999: the foreign key) is bad data, named */
    assert_int_equal(bg_store_fit_save(st, 99999, &fit, sp.ids, NULL, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "FOREIGN KEY constraint failed"));
    assert_int_equal(bg_store_fit_get(st, 99999, &f, &err), BG_EINVAL);
    assert_int_equal(bg_store_lot_get(st, "L9", &lot, &err), BG_EINVAL);
    no_statement_busy(st);
    assert_int_equal(bg_store_fit_save(st, run, &fit, sp.ids, &fid, NULL), BG_OK);
    assert_int_equal(bg_store_fit_get(st, fid, &f, NULL), BG_OK);
    assert_int_equal(f.run_id, run);
    /* a rollback: the cached reads see the fit inside the transaction and not after it */
    assert_int_equal(bg_store_begin(st, NULL), BG_OK);
    assert_int_equal(bg_store_fit_save(st, run, &fit, sp.ids, &cur, NULL), BG_OK);
    assert_int_equal(bg_store_fit_get(st, cur, &f, NULL), BG_OK);
    assert_int_equal(bg_store_run_fit(st, run, &fid, NULL), BG_OK);
    assert_int_equal(fid, cur);
    bg_store_rollback(st);
    assert_int_equal(bg_store_fit_get(st, cur, &f, &err), BG_EINVAL);
    assert_int_equal(bg_store_run_fit(st, run, &fid, NULL), BG_OK);
    assert_true(fid < cur);
    assert_int_equal(bg_store_lot_get(st, "L1", &lot, NULL), BG_OK);
    assert_int_equal(lot.nprobes, 4);
    no_statement_busy(st);
    bg_fit_release(&fit);
    bg_store_points_release(&sp);
    bg_store_close(st);
}

/* ---- versions: a reference recalibrated ---- */

struct t_of {
    double t_k[8];
    size_t n;
};

static int t_of_cb(const bg_reading_row *g, void *ctx)
{
    struct t_of *t = ctx;
    if (t->n < 8)
        t->t_k[t->n++] = g->t_k;
    return 0;
}

static int count_versions(const bg_ref_version *rv, void *ctx)
{
    (void)rv;
    ++*(int *)ctx;
    return 0;
}

static long long import_at(bg_store *st, const char *started_at, int new_run)
{
    bg_readings rs = make_readings();
    bg_run meta;
    long long run = 0;
    memset(&meta, 0, sizeof meta);
    strcpy(meta.serial, "P1");
    strcpy(meta.ref_ident, "S9");
    strcpy(meta.started_at, started_at);
    meta.new_run = new_run;
    bg_error err = BG_ERROR_INIT;
    int rc = bg_store_import(st, &rs, &meta, &run, &err);
    if (rc != BG_OK)
        fprintf(stderr, "%s\n", err.msg);
    assert_int_equal(rc, BG_OK);
    bg_readings_release(&rs);
    return run;
}

/* An import before a recalibration is corrected with the old certificate's linear correction
** and one after it with the new one; the due date checked is the version's; each run records
** its version; the refused versions write nothing; the versions are chained. */
static void reference_recalibration_versions(void **state)
{
    SQLITE_ONLY();
    (void)state;
    bg_store *st = fresh("refver.db");
    bg_error err = BG_ERROR_INIT;
    bg_ref ref;
    bg_ref_version rv, at;
    bg_run r;
    bg_store_check chk;
    struct t_of t1 = { { 0 }, 0 }, t2 = { { 0 }, 0 };
    long long vid = 0, run1, run2;
    int n = 0;

    bg_store_set_clock(st, 1793577600); /* 2026-11-02T00:00:00Z */
    memset(&ref, 0, sizeof ref);
    strcpy(ref.ident, "S9");
    strcpy(ref.certificate, "C-1");
    strcpy(ref.due_date, "2026-11-30");
    ref.kind = BG_REF_LINEAR, ref.lin_c0_k = -0.1712, ref.lin_c1 = 0.00218, ref.lin_t0_k = 293.15;
    assert_int_equal(bg_store_ref_add(st, &ref, NULL, NULL), BG_OK);
    run1 = import_at(st, "2026-11-24T08:00:00Z", 0);

    memset(&rv, 0, sizeof rv);
    rv.ref = ref;
    strcpy(rv.ref.certificate, "C-2");
    strcpy(rv.ref.due_date, "2027-12-31");
    rv.ref.lin_c0_k = 0.05, rv.ref.lin_c1 = 0.001;
    strcpy(rv.v.why, "recalibrated");
    strcpy(rv.v.by, "ana");
    /* refused: before the reference was created, no reason, an unknown reference */
    strcpy(rv.v.valid_from, "2026-10-01");
    assert_int_equal(bg_store_ref_set(st, &rv, &vid, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "before the record was created"));
    strcpy(rv.v.valid_from, "2026-12-01T00:00:00Z");
    rv.v.why[0] = '\0';
    assert_int_equal(bg_store_ref_set(st, &rv, &vid, &err), BG_EINVAL);
    strcpy(rv.v.why, "recalibrated");
    strcpy(rv.ref.ident, "S8");
    assert_int_equal(bg_store_ref_set(st, &rv, &vid, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "did you mean 'S9'"));
    assert_int_equal(bg_store_ref_versions(st, "S9", count_versions, &n, NULL), BG_OK);
    assert_int_equal(n, 1);
    strcpy(rv.ref.ident, "S9");
    assert_int_equal(bg_store_ref_set(st, &rv, &vid, NULL), BG_OK);
    assert_true(vid > 0);
    /* a second version may not begin before the first */
    strcpy(rv.v.valid_from, "2026-11-15");
    assert_int_equal(bg_store_ref_set(st, &rv, NULL, &err), BG_EINVAL);

    /* the version in force */
    assert_int_equal(bg_store_ref_at(st, "S9", "2026-11-30T23:59:59Z", &at, NULL), BG_OK);
    assert_int_equal(at.v.id, 0);
    assert_string_equal(at.ref.certificate, "C-1");
    assert_int_equal(bg_store_ref_at(st, "S9", "2026-12-01T00:00:00Z", &at, NULL), BG_OK);
    assert_int_equal(at.v.id, vid);
    assert_string_equal(at.ref.certificate, "C-2");
    assert_string_equal(at.v.by, "ana");
    assert_int_equal(bg_store_ref_get(st, "S9", &ref, NULL), BG_OK); /* now: 2026-11-02 */
    assert_string_equal(ref.certificate, "C-1");
    n = 0;
    assert_int_equal(bg_store_ref_versions(st, "S9", count_versions, &n, NULL), BG_OK);
    assert_int_equal(n, 2);

    /* after the recalibration: the new correction and due date (the old one, 2026-11-30, is
    ** past on 2026-12-05: no reason is needed because the version's due date is used) */
    run2 = import_at(st, "2026-12-05T08:00:00Z", 1);
    assert_int_equal(bg_store_run_get(st, run1, &r, NULL), BG_OK);
    assert_int_equal(r.ref_version, 0);
    assert_string_equal(r.ref_due_date, "2026-11-30");
    assert_int_equal(bg_store_run_get(st, run2, &r, NULL), BG_OK);
    assert_int_equal(r.ref_version, vid);
    assert_string_equal(r.ref_due_date, "2027-12-31");
    assert_int_equal(bg_store_ref_version(st, "S9", vid, &at, NULL), BG_OK);
    assert_string_equal(at.ref.certificate, "C-2");
    assert_int_equal(bg_store_reading_each(st, run1, t_of_cb, &t1, NULL), BG_OK);
    assert_int_equal(bg_store_reading_each(st, run2, t_of_cb, &t2, NULL), BG_OK);
    assert_int_equal(t1.n, 5);
    assert_int_equal(t2.n, 5);
    /* derived by hand from t = t_read + c0 + c1 (t_read - t0), t_read = 25.0001 degC =
    ** 298.1501 K, t0 = 293.15 K: old 298.1501 - 0.1712 + 0.00218 * 5.0001 = 297.989800218 K;
    ** new 298.1501 + 0.05 + 0.001 * 5.0001 = 298.2051001 K */
    assert_close(t1.t_k[1], 297.989800218, 0, 1e-9);
    assert_close(t2.t_k[1], 298.2051001, 0, 1e-9);
    /* a calibration report shows the certificate each run was corrected with */
    for (int k = 0; k < 2; k++) {
        long long run = k ? run2 : run1, fid;
        bg_store_points sp = BG_STORE_POINTS_INIT;
        bg_fit f = BG_FIT_INIT;
        bg_model mod;
        bg_calib_report rep = BG_CALIB_REPORT_INIT;
        assert_int_equal(bg_model_parse("sh3", &mod, NULL), BG_OK);
        bg_fit_opts fo = bg_fit_default_opts(&mod);
        assert_int_equal(bg_store_run_points(st, run, &sp, NULL), BG_OK);
        assert_int_equal(bg_fit_points(sp.pts, sp.n, &fo, &f, NULL), BG_OK);
        assert_int_equal(bg_store_fit_save(st, run, &f, sp.ids, &fid, NULL), BG_OK);
        assert_int_equal(bg_calib_report_load(st, run, fid, 0.0, &rep, NULL), BG_OK);
        assert_string_equal(rep.ref.certificate, k ? "C-2" : "C-1");
        bg_calib_report_release(&rep);
        bg_fit_release(&f);
        bg_store_points_release(&sp);
    }

    /* versions refuse edits and deletes; the record verifies, the versions in its chain */
    sqlite3 *db;
    assert_int_equal(sqlite3_open(path_of("refver.db"), &db), SQLITE_OK);
    assert_int_not_equal(sqlite3_exec(db, "UPDATE reference_version SET lin_c0_k = 0", NULL,
                                      NULL, NULL), SQLITE_OK);
    assert_int_not_equal(sqlite3_exec(db, "DELETE FROM reference_version", NULL, NULL, NULL),
                         SQLITE_OK);
    sqlite3_close(db);
    assert_int_equal(bg_store_verify(st, &chk, NULL), BG_OK);
    assert_int_equal(chk.bad, 0);
    assert_int_equal(chk.records, 8); /* lot, probe, reference, run, version, run, 2 fits */
    bg_store_close(st);
}

/* ---- versions: a lot's tolerance corrected ---- */

/* Probe P1 of lot L1 calibrated on 2027-01-10 and again on 2027-06-10 with every resistance
** 0.3 % higher (an as-found error of some 70 to 110 mK); the lot's R25 tolerance (1 %) is
** corrected to 0.1 % from 'from'.  The drift verdict of the second calibration, with the
** default limit from the tolerance, into '*c'. */
static void drift_under_version(const char *name, const char *from, bg_qa_compare *c,
                                double *probe_limit_k)
{
    bg_store *st = NULL;
    bg_lot lot;
    bg_lot_version lv;
    bg_qa_probe p = BG_QA_PROBE_INIT;
    bg_qa_opts o = bg_qa_default_opts();
    bg_error err = BG_ERROR_INIT;
    unlink(path_of(name));
    assert_int_equal(bg_store_open(new_target(name), BG_STORE_CREATE, &st, NULL), BG_OK);
    bg_store_set_clock(st, 1796083200); /* 2026-12-01T00:00:00Z: the lot's creation, "now" */
    memset(&lot, 0, sizeof lot);
    strcpy(lot.code, "L1");
    strcpy(lot.part, "NTC");
    lot.r25_ohm = 10000, lot.beta_k = 3950, lot.pair_t1_k = 298.15, lot.pair_t2_k = 358.15;
    lot.tol_r25 = 0.01, lot.tol_beta = 0.01;
    assert_int_equal(bg_store_lot_add(st, &lot, NULL, NULL), BG_OK);
    assert_int_equal(bg_store_probe_add(st, "P1", "L1", NULL, NULL, NULL), BG_OK);
    add_run(st, "P1", "2027-01-10T08:00:00Z", 1.0, "sh3");
    add_run(st, "P1", "2027-06-10T08:00:00Z", 1.003, "sh3");
    memset(&lv, 0, sizeof lv);
    strcpy(lv.lot.code, "L1");
    lv.lot.tol_r25 = 0.001, lv.lot.tol_beta = -1.0;
    strcpy(lv.v.valid_from, from);
    strcpy(lv.v.why, "tolerance corrected");
    strcpy(lv.v.by, "ana");
    assert_int_equal(bg_store_lot_set(st, &lv, NULL, NULL), BG_OK);
    /* refused: no reason, nothing changed, before the lot was created, an unknown lot */
    lv.v.why[0] = '\0';
    assert_int_equal(bg_store_lot_set(st, &lv, NULL, &err), BG_EINVAL);
    strcpy(lv.v.why, "again");
    strcpy(lv.v.valid_from, "2027-12-01T00:00:00Z");
    assert_int_equal(bg_store_lot_set(st, &lv, NULL, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "changes nothing"));
    strcpy(lv.v.valid_from, "2000-01-01");
    lv.lot.tol_r25 = 0.002;
    assert_int_equal(bg_store_lot_set(st, &lv, NULL, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "before the record was created"));
    strcpy(lv.lot.code, "L9");
    strcpy(lv.v.valid_from, "");
    assert_int_equal(bg_store_lot_set(st, &lv, NULL, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "unknown lot 'L9'"));
    assert_int_equal(bg_qa_probe_drift(st, "P1", &o, &p, NULL), BG_OK);
    assert_int_equal(p.nprev, 1);
    *c = p.since_previous[0];
    *probe_limit_k = p.limit_k;
    bg_qa_probe_release(&p);
    bg_store_check chk;
    assert_int_equal(bg_store_verify(st, &chk, NULL), BG_OK);
    assert_int_equal(chk.bad, 0);
    bg_store_close(st);
}

/* The same as-found error judged against the tolerance in force at the calibration: the
** corrected 0.1 % from before it (flagged), or from after it (not flagged: the 1 % in force
** then).  Limits derived by hand from limit = tol_R25 T25^2 / B (the default of
** docs/commands/drift.md): 0.001 * 298.15^2 / 3950 = 0.022504664 K and 0.01 * ... =
** 0.22504664 K. */
static void drift_verdict_uses_lot_version(void **state)
{
    (void)state;
    bg_qa_compare c;
    double plim;
    drift_under_version("lotv1.db", "2027-03-01T00:00:00Z", &c, &plim);
    assert_close(c.limit_k, 0.022504664, 0, 1e-9);
    assert_true(c.d.max_abs_err_mk > 22.6 && c.d.max_abs_err_mk < 225.0);
    assert_int_equal(c.flag_limit, 1);
    drift_under_version("lotv2.db", "2027-07-01T00:00:00Z", &c, &plim);
    assert_close(c.limit_k, 0.22504664, 0, 1e-8);
    assert_int_equal(c.flag_limit, 0);
    assert_close(plim, 0.22504664, 0, 1e-8); /* now (before 2027-07-01): the 1 % */
}

/* Lot statistics judge a probe against the tolerances in force at its calibration: lot L1's
** B tolerance widened from 1 % to 2 % from 'from'; P1 calibrated on 2027-01-10 with a B
** (25/85) between 1 % and 2 % above the nominal 3950 K (checked below).  Returns the number
** of probes out of tolerance. */
static size_t lot_out_under_version(const char *name, const char *from)
{
    bg_store *st = NULL;
    bg_lot lot;
    bg_lot_version lv;
    bg_qa_lot l;
    bg_qa_opts o = bg_qa_default_opts();
    unlink(path_of(name));
    assert_int_equal(bg_store_open(new_target(name), BG_STORE_CREATE, &st, NULL), BG_OK);
    bg_store_set_clock(st, 1796083200); /* 2026-12-01T00:00:00Z */
    memset(&lot, 0, sizeof lot);
    strcpy(lot.code, "L1");
    strcpy(lot.part, "NTC");
    lot.r25_ohm = 10000, lot.beta_k = 3950, lot.pair_t1_k = 298.15, lot.pair_t2_k = 358.15;
    lot.tol_r25 = 0.01, lot.tol_beta = 0.01;
    assert_int_equal(bg_store_lot_add(st, &lot, NULL, NULL), BG_OK);
    assert_int_equal(bg_store_probe_add(st, "P1", "L1", NULL, NULL, NULL), BG_OK);
    add_run(st, "P1", "2027-01-10T08:00:00Z", 1.0, "sh3");
    memset(&lv, 0, sizeof lv);
    strcpy(lv.lot.code, "L1");
    lv.lot.tol_r25 = -1.0, lv.lot.tol_beta = 0.02;
    strcpy(lv.v.valid_from, from);
    strcpy(lv.v.why, "tolerance corrected");
    strcpy(lv.v.by, "ana");
    assert_int_equal(bg_store_lot_set(st, &lv, NULL, NULL), BG_OK);
    memset(&l, 0, sizeof l);
    assert_int_equal(bg_qa_lot_stats(st, "L1", &o, &l, NULL), BG_OK);
    assert_int_equal(l.n, 1);
    /* within the R25 tolerance; B above the nominal by more than 1 % and less than 2 % */
    assert_true(fabs(l.r25_dev_pct[0]) < 1.0);
    assert_true(l.b_k[0] > 1.01 * 3950 && l.b_k[0] < 1.02 * 3950);
    size_t nout = l.nout;
    assert_int_equal(!!(l.flags[0] & BG_QA_OUT_OF_TOL), nout);
    bg_qa_lot_release(&l);
    bg_store_close(st);
    return nout;
}

static void lot_stats_use_lot_version(void **state)
{
    (void)state;
    assert_int_equal(lot_out_under_version("lotv3.db", "2027-01-01T00:00:00Z"), 0);
    assert_int_equal(lot_out_under_version("lotv4.db", "2027-02-01T00:00:00Z"), 1);
}

/* ---- versions: a probe moved to another lot ---- */

static void add_lot(bg_store *st, const char *code, const char *part, double tol_r25)
{
    bg_lot lot;
    memset(&lot, 0, sizeof lot);
    snprintf(lot.code, sizeof lot.code, "%s", code);
    snprintf(lot.part, sizeof lot.part, "%s", part);
    lot.r25_ohm = 10000, lot.beta_k = 3950, lot.pair_t1_k = 298.15, lot.pair_t2_k = 358.15;
    lot.tol_r25 = tol_r25, lot.tol_beta = 0.01;
    assert_int_equal(bg_store_lot_add(st, &lot, NULL, NULL), BG_OK);
}

static void move_of(bg_probe_version *pv, const char *serial, const char *lot, const char *from)
{
    memset(pv, 0, sizeof *pv);
    snprintf(pv->probe.serial, sizeof pv->probe.serial, "%s", serial);
    snprintf(pv->probe.lot_code, sizeof pv->probe.lot_code, "%s", lot);
    snprintf(pv->v.valid_from, sizeof pv->v.valid_from, "%s", from);
    strcpy(pv->v.why, "relabelled after sorting");
    strcpy(pv->v.by, "ana");
}

/* A refused move: BG_EINVAL naming 'why', and the record exactly as it was (its chain head). */
static void move_refused(bg_store *st, const bg_probe_version *pv, const char *why)
{
    long long n0, n1;
    char h0[65], h1[65];
    bg_error err = BG_ERROR_INIT;
    assert_int_equal(bg_store_chain_head(st, &n0, h0, NULL), BG_OK);
    assert_int_equal(bg_store_probe_move(st, pv, NULL, &err), BG_EINVAL);
    if (!strstr(err.msg, why))
        fail_msg("'%s' does not say '%s'", err.msg, why);
    assert_int_equal(bg_store_chain_head(st, &n1, h1, NULL), BG_OK);
    assert_int_equal(n0, n1);
    assert_string_equal(h0, h1);
}

struct hist_count { const char *serial; size_t n; long long run; int seen; };

static int count_hist(const char *serial, const bg_fit_row *fits, char (*started_at)[BG_TIME],
                      size_t n, size_t unfitted, void *ctx)
{
    struct hist_count *h = ctx;
    (void)started_at, (void)unfitted;
    if (strcmp(serial, h->serial) == 0)
        h->seen = 1, h->n = n, h->run = n ? fits[n - 1].run_id : 0;
    return 0;
}

static int latest_of(const char *serial, const bg_fit_row *fit, void *ctx)
{
    struct hist_count *h = ctx;
    if (strcmp(serial, h->serial) == 0)
        h->seen = 1, h->run = fit ? fit->run_id : 0;
    return 0;
}

/* Which lot each run counts toward after a move: P1 of lot A (R25 tolerance 1 %) calibrated on
** 2027-01-10, moved to lot B (2 %) from 2027-02-01, calibrated again on 2027-06-10 with every
** resistance 0.3 % higher; P2 stays in A with the same two calibrations.  The first run counts
** toward A, the second toward B, in every lot-wide read and verdict; drift --probe judges each
** calibration by the tolerance of the lot it counts toward.  Limits by hand from
** limit = tol_R25 T25^2 / B (docs/commands/drift.md): 0.01 * 298.15^2 / 3950 = 0.22504664 K,
** 0.02 * ... = 0.45009328 K, 0.001 * ... = 0.022504664 K. */
static void probe_move_counts_runs_by_their_start(void **state)
{
    SQLITE_ONLY();
    (void)state;
    bg_store *st = NULL;
    bg_probe_version pv, at;
    bg_probe_move_result res;
    bg_probe p;
    bg_lot lot;
    bg_store_check chk;
    unlink(path_of("move.db"));
    assert_int_equal(bg_store_open(new_target("move.db"), BG_STORE_CREATE, &st, NULL), BG_OK);
    bg_store_set_clock(st, 1796083200); /* 2026-12-01T00:00:00Z: the records' creation */
    add_lot(st, "A", "NTC", 0.01);
    add_lot(st, "B", "NTC", 0.02);
    add_lot(st, "C", "OTHER", 0.01);
    assert_int_equal(bg_store_probe_add(st, "P1", "A", NULL, NULL, NULL), BG_OK);
    assert_int_equal(bg_store_probe_add(st, "P2", "A", NULL, NULL, NULL), BG_OK);
    long long r1 = add_run(st, "P1", "2027-01-10T08:00:00Z", 1.0, "sh3");
    add_run(st, "P2", "2027-01-10T08:00:00Z", 1.0, "sh3");
    bg_store_set_clock(st, 1803859200); /* 2027-03-01T00:00:00Z: now */

    /* refused, nothing written: unknown lot or probe, the same lot, another part, no reason,
    ** later than now, before the probe's creation, not a time */
    move_of(&pv, "P1", "X", "2027-02-01T00:00:00Z");
    move_refused(st, &pv, "unknown lot 'X'");
    move_of(&pv, "P9", "B", "2027-02-01T00:00:00Z");
    move_refused(st, &pv, "unknown probe 'P9'");
    move_of(&pv, "P1", "A", "2027-02-01T00:00:00Z");
    move_refused(st, &pv, "already in lot 'A'");
    move_of(&pv, "P1", "C", "2027-02-01T00:00:00Z");
    move_refused(st, &pv, "only between lots of its part");
    move_of(&pv, "P1", "B", "2027-02-01T00:00:00Z");
    pv.v.why[0] = '\0';
    move_refused(st, &pv, "reason must not be empty");
    move_of(&pv, "P1", "B", "2027-03-02T00:00:00Z");
    move_refused(st, &pv, "later than now");
    move_of(&pv, "P1", "B", "2026-11-30T00:00:00Z");
    move_refused(st, &pv, "before the record was created");
    move_of(&pv, "P1", "B", "2027-02-30");
    move_refused(st, &pv, "not an ISO 8601");

    move_of(&pv, "P1", "B", "2027-02-01T00:00:00Z");
    assert_int_equal(bg_store_probe_move(st, &pv, &res, NULL), BG_OK);
    assert_string_equal(res.from_lot, "A");
    assert_int_equal(res.runs_moved, 0); /* its run started before the move */
    move_of(&pv, "P1", "A", "2027-01-31T00:00:00Z"); /* before the newest version */
    move_refused(st, &pv, "before the newest version");
    long long r2 = add_run(st, "P1", "2027-06-10T08:00:00Z", 1.003, "sh3");
    add_run(st, "P2", "2027-06-10T08:00:00Z", 1.003, "sh3");

    /* the lot in force at each time; the probe is in B now */
    assert_int_equal(bg_store_probe_at(st, "P1", "2027-01-10T08:00:00Z", &at, NULL), BG_OK);
    assert_string_equal(at.probe.lot_code, "A");
    assert_int_equal(at.v.id, 0);
    assert_int_equal(bg_store_probe_at(st, "P1", "2027-02-01T01:00:00+01:00", &at, NULL), BG_OK);
    assert_string_equal(at.probe.lot_code, "B"); /* the same instant as the validity */
    assert_int_equal(bg_store_probe_at(st, "P1", "2027-01-31T23:59:59Z", &at, NULL), BG_OK);
    assert_string_equal(at.probe.lot_code, "A");
    assert_int_equal(bg_store_probe_get(st, "P1", &p, NULL), BG_OK);
    assert_string_equal(p.lot_code, "B");
    assert_int_equal(bg_store_lot_get(st, "A", &lot, NULL), BG_OK);
    assert_int_equal(lot.nprobes, 1);
    assert_int_equal(bg_store_lot_get(st, "B", &lot, NULL), BG_OK);
    assert_int_equal(lot.nprobes, 1);

    /* lot-wide reads: run 1 counts toward A, run 2 toward B */
    struct hist_count h = { "P1", 0, 0, 0 };
    assert_int_equal(bg_store_lot_histories(st, "A", NULL, count_hist, &h, NULL), BG_OK);
    assert_true(h.seen && h.n == 1 && h.run == r1);
    memset(&h, 0, sizeof h), h.serial = "P1";
    assert_int_equal(bg_store_lot_histories(st, "B", NULL, count_hist, &h, NULL), BG_OK);
    assert_true(h.seen && h.n == 1 && h.run == r2);
    memset(&h, 0, sizeof h), h.serial = "P1";
    assert_int_equal(bg_store_lot_latest_fits(st, "A", NULL, latest_of, &h, NULL), BG_OK);
    assert_true(h.seen && h.run == r1);
    memset(&h, 0, sizeof h), h.serial = "P1";
    assert_int_equal(bg_store_lot_latest_fits(st, "B", NULL, latest_of, &h, NULL), BG_OK);
    assert_true(h.seen && h.run == r2);

    /* the lot report: in A, P1 has one calibration and P2 two; in B, P1 has one */
    bg_qa_lot_summary sa = BG_QA_LOT_SUMMARY_INIT, sb = BG_QA_LOT_SUMMARY_INIT;
    assert_int_equal(bg_qa_lot_summarize(st, "A", NULL, &sa, NULL), BG_OK);
    assert_int_equal(sa.nprobes, 2);
    assert_string_equal(sa.probes[0].serial, "P1");
    assert_int_equal(sa.probes[0].n, 1);
    assert_int_equal(sa.probes[1].n, 2);
    assert_int_equal(sa.stats.n, 2);
    assert_int_equal(bg_qa_lot_summarize(st, "B", NULL, &sb, NULL), BG_OK);
    assert_int_equal(sb.nprobes, 1);
    assert_int_equal(sb.probes[0].n, 1);
    assert_int_equal(sb.stats.n, 1);
    assert_int_equal(sb.stats.fit_id[0] > 0, 1);
    bg_qa_lot_summary_release(&sa);
    bg_qa_lot_summary_release(&sb);

    /* a calibration report names the lot of its run's start */
    for (int k = 0; k < 2; k++) {
        bg_calib_report rep = BG_CALIB_REPORT_INIT;
        assert_int_equal(bg_calib_report_load(st, k ? r2 : r1, 0, 0.0, &rep, NULL), BG_OK);
        assert_string_equal(rep.probe.lot_code, k ? "B" : "A");
        assert_string_equal(rep.lot.code, k ? "B" : "A");
        assert_close(rep.lot.tol_r25, k ? 0.02 : 0.01, 0, 0);
        bg_calib_report_release(&rep);
    }

    /* drift --probe P1: the second calibration judged by B's tolerance in force then */
    bg_qa_probe d = BG_QA_PROBE_INIT;
    bg_qa_opts o = bg_qa_default_opts();
    assert_int_equal(bg_qa_probe_drift(st, "P1", &o, &d, NULL), BG_OK);
    assert_int_equal(d.n, 2);
    assert_close(d.limit_at[0], 0.22504664, 0, 1e-8);
    assert_close(d.limit_at[1], 0.45009328, 0, 1e-8);
    assert_close(d.since_previous[0].limit_k, 0.45009328, 0, 1e-8);
    bg_qa_probe_release(&d);

    /* a move that takes a recorded run along: P2's run of 2027-06-10 now counts toward B */
    move_of(&pv, "P2", "B", "2027-02-15T00:00:00Z");
    assert_int_equal(bg_store_probe_move(st, &pv, &res, NULL), BG_OK);
    assert_int_equal(res.runs_moved, 1);
    assert_int_equal(bg_qa_lot_summarize(st, "B", NULL, &sb, NULL), BG_OK);
    assert_int_equal(sb.nprobes, 2);
    assert_int_equal(sb.probes[1].n, 1);
    bg_qa_lot_summary_release(&sb);

    /* versions refuse edits and deletes, the probe row too; the record verifies */
    sqlite3 *db;
    assert_int_equal(sqlite3_open(path_of("move.db"), &db), SQLITE_OK);
    assert_int_not_equal(sqlite3_exec(db, "UPDATE probe_version SET lot_id = 1", NULL, NULL,
                                      NULL), SQLITE_OK);
    assert_int_not_equal(sqlite3_exec(db, "DELETE FROM probe_version", NULL, NULL, NULL),
                         SQLITE_OK);
    assert_int_not_equal(sqlite3_exec(db, "UPDATE probe SET lot_id = 2", NULL, NULL, NULL),
                         SQLITE_OK);
    assert_int_not_equal(sqlite3_exec(db, "DELETE FROM probe", NULL, NULL, NULL), SQLITE_OK);
    sqlite3_close(db);
    assert_int_equal(bg_store_verify(st, &chk, NULL), BG_OK);
    assert_int_equal(chk.bad, 0);
    bg_store_close(st);
}


/* A lot-wide read takes the plain probe.lot_id path only for a lot no move concerns
** (sqlite_fit.c, bgi_sqlite_lot_moved); a lot whose probe moved out before any run, and the lot
** it moved to, still get the move-aware answer.  P1 of lot A moves to B from 2027-02-01 and is
** calibrated on 2027-06-10: that run counts toward B only, and P1 is no probe of A any more
** (the plain lot_id would list it in A with that run); P3 of lot D, untouched, is read the
** plain way with its run. */
static int lot_points_seen(const char *serial, long long probe, long long run,
                           bg_store_points *sp, void *ctx)
{
    struct hist_count *h = ctx;
    (void)probe, (void)sp;
    if (strcmp(serial, h->serial) == 0)
        h->seen = 1, h->run = run;
    return 0;
}

static int history_seen(const char *serial, const bg_fit_row *fits, char (*when)[BG_TIME],
                        size_t n, void *ctx)
{
    struct hist_count *h = ctx;
    (void)when;
    if (strcmp(serial, h->serial) == 0)
        h->seen = 1, h->n = n, h->run = n ? fits[n - 1].run_id : 0;
    return 0;
}

static void lot_reads_plain_only_without_moves(void **state)
{
    SQLITE_ONLY();
    (void)state;
    bg_store *st = NULL;
    bg_probe_version pv;
    bg_probe_move_result res;
    unlink(path_of("moved-out.db"));
    assert_int_equal(bg_store_open(new_target("moved-out.db"), BG_STORE_CREATE, &st, NULL), BG_OK);
    bg_store_set_clock(st, 1796083200); /* 2026-12-01T00:00:00Z */
    add_lot(st, "A", "NTC", 0.01);
    add_lot(st, "B", "NTC", 0.02);
    add_lot(st, "D", "NTC", 0.01);
    assert_int_equal(bg_store_probe_add(st, "P1", "A", NULL, NULL, NULL), BG_OK);
    assert_int_equal(bg_store_probe_add(st, "P3", "D", NULL, NULL, NULL), BG_OK);
    bg_store_set_clock(st, 1803859200); /* 2027-03-01T00:00:00Z */
    move_of(&pv, "P1", "B", "2027-02-01T00:00:00Z");
    assert_int_equal(bg_store_probe_move(st, &pv, &res, NULL), BG_OK);
    long long r1 = add_run(st, "P1", "2027-06-10T08:00:00Z", 1.0, "sh3");
    long long r3 = add_run(st, "P3", "2027-06-10T08:00:00Z", 1.0, "sh3");

    for (int k = 0; k < 3; k++) { /* lots A, B, D */
        const char *code = k == 0 ? "A" : k == 1 ? "B" : "D", *serial = k == 2 ? "P3" : "P1";
        int want = k != 0;
        long long run = k == 2 ? r3 : r1;
        struct hist_count h = { serial, 0, 0, 0 };
        assert_int_equal(bg_store_lot_latest_fits(st, code, NULL, latest_of, &h, NULL), BG_OK);
        assert_int_equal(h.seen, want);
        assert_true(!want || h.run == run);
        memset(&h, 0, sizeof h), h.serial = serial;
        assert_int_equal(bg_store_lot_histories(st, code, NULL, count_hist, &h, NULL), BG_OK);
        assert_int_equal(h.seen, want);
        assert_true(!want || (h.n == 1 && h.run == run));
        memset(&h, 0, sizeof h), h.serial = serial;
        assert_int_equal(bg_store_lot_history(st, code, NULL, history_seen, &h, NULL), BG_OK);
        assert_int_equal(h.seen, want);
        assert_true(!want || (h.n == 1 && h.run == run));
        memset(&h, 0, sizeof h), h.serial = serial;
        assert_int_equal(bg_store_lot_points_each(st, code, lot_points_seen, &h, NULL), BG_OK);
        assert_int_equal(h.seen, want);
        assert_true(!want || h.run == run);
    }
    bg_store_close(st);
}

/* The lot report's drift verdicts use the lot tolerance in force at each calibration: lot A's
** R25 tolerance corrected from 1 % to 0.1 % from 2027-04-01 (after now, 2027-03-01): the
** comparison of P2's calibrations (the later one on 2027-06-10) is judged against 0.1 %
** (0.022504664 K, flagged: its as-found error is some 70 to 110 mK) while the limit in force
** now stays 1 % (0.22504664 K); the same as drift --probe. */
static void lot_report_drift_uses_lot_version(void **state)
{
    (void)state;
    bg_store *st = NULL;
    bg_lot_version lv;
    unlink(path_of("repver.db"));
    assert_int_equal(bg_store_open(new_target("repver.db"), BG_STORE_CREATE, &st, NULL), BG_OK);
    bg_store_set_clock(st, 1796083200);
    add_lot(st, "A", "NTC", 0.01);
    assert_int_equal(bg_store_probe_add(st, "P2", "A", NULL, NULL, NULL), BG_OK);
    add_run(st, "P2", "2027-01-10T08:00:00Z", 1.0, "sh3");
    add_run(st, "P2", "2027-06-10T08:00:00Z", 1.003, "sh3");
    bg_store_set_clock(st, 1803859200);
    memset(&lv, 0, sizeof lv);
    strcpy(lv.lot.code, "A");
    lv.lot.tol_r25 = 0.001, lv.lot.tol_beta = -1.0;
    strcpy(lv.v.valid_from, "2027-04-01T00:00:00Z");
    strcpy(lv.v.why, "tolerance corrected");
    strcpy(lv.v.by, "ana");
    assert_int_equal(bg_store_lot_set(st, &lv, NULL, NULL), BG_OK);
    bg_qa_lot_summary s = BG_QA_LOT_SUMMARY_INIT;
    assert_int_equal(bg_qa_lot_summarize(st, "A", NULL, &s, NULL), BG_OK);
    assert_close(s.limit_k, 0.22504664, 0, 1e-8);
    assert_int_equal(s.probes[0].nprev, 1);
    const bg_qa_compare *c = &s.probes[0].since_previous[0];
    assert_close(c->limit_k, 0.022504664, 0, 1e-9);
    assert_true(c->d.max_abs_err_mk > 22.6 && c->d.max_abs_err_mk < 225.0);
    assert_int_equal(c->flag_limit, 1);
    assert_int_equal(s.flagged, 1);
    bg_qa_lot_summary_release(&s);
    bg_store_close(st);
}

/* A stored fit row that bandgap could not have written (its model changed behind its back,
** triggers dropped) fails a listing with a message that names the row. */
static int count_fits_cb(const bg_fit_row *f, void *ctx)
{
    (void)f;
    ++*(int *)ctx;
    return 0;
}

static void unreadable_fit_row_is_named(void **state)
{
    SQLITE_ONLY();
    (void)state;
    bg_store *st = NULL;
    bg_error err = BG_ERROR_INIT;
    int n = 0;
    unlink(path_of("badfit.db"));
    assert_int_equal(bg_store_open(path_of("badfit.db"), BG_STORE_CREATE, &st, NULL), BG_OK);
    add_lot(st, "A", "NTC", 0.01);
    assert_int_equal(bg_store_probe_add(st, "P1", "A", NULL, NULL, NULL), BG_OK);
    add_run(st, "P1", "2027-01-10T08:00:00Z", 1.0, "sh3 beta");
    bg_store_close(st);
    sql("badfit.db", "DROP TRIGGER fit_keep; UPDATE fit SET model = 'zz' WHERE id = 2;");
    assert_int_equal(bg_store_open(path_of("badfit.db"), 0, &st, NULL), BG_OK);
    assert_int_equal(bg_store_fit_each(st, NULL, NULL, count_fits_cb, &n, &err), BG_EINVAL);
    assert_int_equal(n, 1); /* fit 1 was listed */
    assert_non_null(strstr(err.msg, "fit 2 (run 1) is unreadable: unknown model 'zz'"));
    bg_store_close(st);
}

/* A report's content of 'len' bytes, an invented pattern (bg_artifact_gen). */
static int big_gen(long long id, const char *created_at, const bg_chain_head *head, void *ctx,
                   char **content, size_t *len, bg_error *err)
{
    (void)id, (void)created_at, (void)head, (void)err;
    size_t n = *(const size_t *)ctx;
    char *p = malloc(n);
    assert_non_null(p);
    for (size_t i = 0; i < n; i++)
        p[i] = (char)('A' + (i * 7 + i / 1000) % 26);
    *content = p, *len = n;
    return BG_OK;
}

/* An issued report larger than the pieces the record chain reads it in (sqlite_chain.c hashes
** an artifact's content through the incremental blob interface, 256 KiB at a time): the
** issued row handed back is the stored one, the record verifies, and one byte changed in its
** last piece, written outside bandgap, is found and named. */
static void large_report_chained_in_pieces(void **state)
{
    (void)state;
    bg_store *st = fresh("big-artifact.db");
    size_t n = (3u << 18) + 12345; /* three pieces and part of a fourth */
    bg_artifact got, back;
    bg_artifact_req req = { "report-lot", "lot BIG", 0, "{\"subject\":\"lot BIG\"}", 0,
                            "0.0-test", big_gen, &n, &got };
    long long id = 0;
    assert_int_equal(bg_store_artifact_issue(st, &req, &id, NULL), BG_OK);
    assert_int_equal(got.id, id);
    assert_int_equal(got.len, n);
    assert_int_equal(got.content[n], '\0');
    assert_int_equal(bg_store_artifact_get(st, id, &back, NULL), BG_OK);
    assert_int_equal(back.len, n);
    assert_memory_equal(back.content, got.content, n);
    assert_string_equal(back.created_at, got.created_at);
    assert_string_equal(back.spec, got.spec);
    bg_artifact_release(&back);
    bg_artifact_release(&got);
    bg_store_check chk;
    assert_int_equal(bg_store_verify(st, &chk, NULL), BG_OK);
    assert_int_equal(chk.bad, 0);
    if (!server) { /* the change outside bandgap is made in the SQLite file itself */
        char sql[256];
        snprintf(sql, sizeof sql, "DROP TRIGGER artifact_keep; UPDATE artifact SET content = "
                 "CAST(substr(content, 1, %zu) || 'z' AS BLOB) WHERE id = %lld;", n - 1, id);
        assert_int_equal(sqlite3_exec(st->conn->db, sql, NULL, NULL, NULL), SQLITE_OK);
        assert_int_equal(bg_store_verify(st, &chk, NULL), BG_OK);
        assert_int_equal(chk.bad, 1);
        assert_string_equal(chk.bad_kind, "artifact");
        assert_int_equal(chk.bad_id, id);
    }
    bg_store_close(st);
}

int main(void)
{
    gsl_set_error_handler(test_gsl_handler);
    server = getenv("BG_TEST_STORE_DB");
    if (server && !*server)
        server = NULL;
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(schema_identity),
        cmocka_unit_test(old_schema_upgraded_with_backup),
        cmocka_unit_test(import_round_trip_and_exclusion),
        cmocka_unit_test(failed_import_changes_nothing),
        cmocka_unit_test(history_is_append_only),
        cmocka_unit_test(fit_round_trip_is_exact),
        cmocka_unit_test(queued_fits_are_stored_exactly),
        cmocka_unit_test(hostile_text_is_just_text),
        cmocka_unit_test(platinum_reference_import),
        cmocka_unit_test(scheme_rule),
        cmocka_unit_test(injected_clock),
        cmocka_unit_test(reference_corrections),
        cmocka_unit_test(sha256_fips_vectors),
        cmocka_unit_test(repeated_import_refused),
        cmocka_unit_test(import_without_run_id),
        cmocka_unit_test(overdue_reference_needs_a_reason),
        cmocka_unit_test(unknown_names_get_the_nearest),
        cmocka_unit_test(lot_histories_match_per_probe_lookups),
        cmocka_unit_test(lot_latest_fits_match_per_probe_lookups),
        cmocka_unit_test(export_walk_matches_per_probe_listings),
        cmocka_unit_test(lot_reads_run_a_fixed_number_of_statements),
        cmocka_unit_test(statement_cache_survives_failure_and_rollback),
        cmocka_unit_test(reference_recalibration_versions),
        cmocka_unit_test(drift_verdict_uses_lot_version),
        cmocka_unit_test(lot_stats_use_lot_version),
        cmocka_unit_test(probe_move_counts_runs_by_their_start),
        cmocka_unit_test(lot_reads_plain_only_without_moves),
        cmocka_unit_test(lot_report_drift_uses_lot_version),
        cmocka_unit_test(unreadable_fit_row_is_named),
        cmocka_unit_test(large_report_chained_in_pieces),
    };
    return cmocka_run_group_tests_name("store", tests, setup, teardown);
}
