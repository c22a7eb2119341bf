/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Streaming import: the readings reader (bg_csv_reader) gives the readings of the in-memory
** parser, line for line, from files, pipes and every line end; an import from a file
** (bg_store_import_file) stores exactly what the in-memory import stores, with the same
** digest, and a bad line anywhere (the last one too) leaves the database as it was. */
#include <fcntl.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include "testutil.h"

static char dir[256];

static int setup(void **state)
{
    (void)state;
    snprintf(dir, sizeof dir, "/tmp/bandgap-test-import-XXXXXX");
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
    static char p[4][400];
    static int k;
    k = (k + 1) % 4;
    snprintf(p[k], sizeof p[k], "%s/%s", dir, name);
    return p[k];
}

static void write_file(const char *name, const char *text)
{
    FILE *f = fopen(path_of(name), "wb");
    assert_non_null(f);
    assert_int_equal(fwrite(text, 1, strlen(text), f), strlen(text));
    assert_int_equal(fclose(f), 0);
}

/* Invented readings: 'n' lines with times and some notes (quoted, with the delimiter), a
** comment and a blank line among them, lines ending in 'eol'; the caller frees the text. */
static char *invented(size_t n, const char *eol)
{
    size_t cap = 200 + n * 120, len = 0;
    char *t = malloc(cap);
    assert_non_null(t);
    len += (size_t)snprintf(t + len, cap - len, "# INVENTED test readings%stime,temp_k,ohms,"
                            "u_temp_k,u_ohms,note%s", eol, eol);
    for (size_t i = 0; i < n; i++) {
        double x = (double)i / (double)n;
        if (i == n / 2)
            len += (size_t)snprintf(t + len, cap - len, "  # settling%s%s", eol, eol);
        len += (size_t)snprintf(t + len, cap - len, "2026-11-%02zuT%02zu:%02zu:00Z,%.6f,%.4f,"
                                "0.0021,%.3f,%s%s", 1 + i / 1440 % 28, i / 60 % 24, i % 60,
                                251.3 + 97.1 * x, 98713.0 * exp(-3.7 * x), 0.013 + x / 7,
                                i % 17 == 3 ? "\"bath 2, stirred\"" : "", eol);
    }
    return t;
}

/* Every reading of the reader 'rd' against the set 'rs' parsed in memory. */
static void same_readings(bg_csv_reader *rd, const bg_readings *rs)
{
    const bg_reading *r;
    const bg_readings *sh = bg_csv_reader_shape(rd);
    size_t i = 0;
    assert_int_equal(sh->delim, rs->delim);
    assert_int_equal(sh->t_unit, rs->t_unit);
    assert_int_equal(sh->has_note, rs->has_note);
    assert_int_equal(sh->has_time, rs->has_time);
    while (bg_csv_reader_next(rd, &r, NULL) == BG_OK && r) {
        assert_true(i < rs->n);
        assert_true(r->pt.t_k == rs->v[i].pt.t_k && r->pt.r_ohm == rs->v[i].pt.r_ohm);
        assert_true(r->t_raw == rs->v[i].t_raw && r->pt.u_r_ohm == rs->v[i].pt.u_r_ohm);
        assert_int_equal(r->pt.line, rs->v[i].pt.line);
        assert_string_equal(r->time, rs->v[i].time);
        assert_true((r->note == NULL) == (rs->v[i].note == NULL));
        if (r->note)
            assert_string_equal(r->note, rs->v[i].note);
        i++;
    }
    assert_null(r);
    assert_int_equal(i, rs->n);
}

/* From a file, the reader yields the in-memory parser's readings, across many buffer
** refills (5000 lines, about 350 kB), and again after a rewind. */
static void reader_equals_parser(void **state)
{
    (void)state;
    char *text = invented(5000, "\n");
    bg_readings rs;
    bg_csv_reader *rd = NULL;
    write_file("big.csv", text);
    assert_int_equal(bg_csv_parse(text, strlen(text), path_of("big.csv"), &rs, NULL), BG_OK);
    assert_int_equal(rs.n, 5000);
    assert_int_equal(bg_csv_reader_open(path_of("big.csv"), 0, &rd, NULL), BG_OK);
    same_readings(rd, &rs);
    assert_int_equal(bg_csv_reader_rewind(rd, NULL), BG_OK);
    same_readings(rd, &rs);
    bg_csv_reader_free(rd);
    bg_readings_release(&rs);
    free(text);
}

static int parse(const char *text, bg_readings *rs, bg_error *err)
{
    return bg_csv_parse(text, strlen(text), "x.csv", rs, err);
}

/* LF, CRLF and a lone CR end lines alike: the same readings on the same line numbers.  A
** lone CR used to leave the whole file one line ("more than 64 fields"). */
static void line_ends(void **state)
{
    (void)state;
    const char *ends[3] = { "\n", "\r\n", "\r" };
    bg_readings ref, rs;
    bg_error err = BG_ERROR_INIT;
    char *lf = invented(300, "\n");
    assert_int_equal(bg_csv_parse(lf, strlen(lf), "x.csv", &ref, NULL), BG_OK);
    for (int e = 0; e < 3; e++) {
        char *text = invented(300, ends[e]);
        bg_csv_reader *rd = NULL;
        assert_int_equal(bg_csv_parse(text, strlen(text), "x.csv", &rs, &err), BG_OK);
        assert_int_equal(rs.n, 300);
        assert_int_equal(rs.v[299].pt.line, ref.v[299].pt.line);
        bg_readings_release(&rs);
        write_file("ends.csv", text);
        assert_int_equal(bg_csv_reader_open(path_of("ends.csv"), 0, &rd, NULL), BG_OK);
        same_readings(rd, &ref);
        bg_csv_reader_free(rd);
        free(text);
    }
    /* a CR as the last byte, and a file without a final line end */
    assert_int_equal(parse("temp_c,ohms\r25,10000\r", &rs, NULL), BG_OK);
    assert_int_equal(rs.n, 1);
    bg_readings_release(&rs);
    assert_int_equal(parse("temp_c,ohms\r25,10000\r30,8000", &rs, NULL), BG_OK);
    assert_int_equal(rs.n, 2);
    assert_int_equal(rs.v[1].pt.line, 3);
    bg_readings_release(&rs);
    /* a bad line is named by its number whatever the line ends */
    assert_int_equal(parse("temp_c,ohms\r25,10000\r\n30,x\r", &rs, &err), BG_EINVAL);
    assert_string_equal(err.msg, "x.csv:3: field 'ohms': not a number: 'x'");
    bg_readings_release(&ref);
    free(lf);
}

/* Errors from the reader carry the file's line number, at the end of a long file too; a
** line far longer than the reader's block is read whole. */
static void reader_errors_and_long_lines(void **state)
{
    (void)state;
    char *text = invented(3000, "\n");
    size_t len = strlen(text);
    bg_csv_reader *rd = NULL;
    const bg_reading *r;
    bg_error err = BG_ERROR_INIT;
    int rc;
    text = realloc(text, len + 300000);
    assert_non_null(text);
    strcpy(text + len, "2026-11-30T00:00:00Z,300.1,5000,0.002,0.1,\"");
    len = strlen(text);
    memset(text + len, 'n', 200000); /* a 200 kB note: longer than the 64 KiB block */
    strcpy(text + len + 200000, "\"\n2026-11-30T00:01:00Z,300.2,abc,0.002,0.1,\n");
    write_file("bad.csv", text);
    assert_int_equal(bg_csv_reader_open(path_of("bad.csv"), 0, &rd, NULL), BG_OK);
    while ((rc = bg_csv_reader_next(rd, &r, &err)) == BG_OK && r)
        if (r->pt.line == 3005)
            assert_int_equal(strlen(r->note), 200000);
    assert_int_equal(rc, BG_EINVAL);
    /* 2 header lines, 3000 readings, a comment and a blank line, the long one; the bad one: line 3006 */
    char want[600];
    snprintf(want, sizeof want, "%s:3006: field 'ohms': not a number: 'abc'",
             path_of("bad.csv"));
    assert_string_equal(err.msg, want);
    bg_csv_reader_free(rd);
    assert_int_equal(bg_csv_reader_open(path_of("none.csv"), 0, &rd, &err), BG_ENOENT);
    assert_null(rd);
    write_file("empty.csv", "# only a comment\n");
    assert_int_equal(bg_csv_reader_open(path_of("empty.csv"), 0, &rd, &err), BG_EINVAL);
    snprintf(want, sizeof want, "%s: no header line (an empty file?)", path_of("empty.csv"));
    assert_string_equal(err.msg, want);
    free(text);
}

/* A pipe is read twice only when the reader was opened for it (copied to a temporary file
** on the first pass). */
static void pipe_read_twice(void **state)
{
    (void)state;
    const char *text = "temp_c,ohms\n25,10000\n30,8000\n";
    bg_readings rs;
    bg_error err = BG_ERROR_INIT;
    assert_int_equal(bg_csv_parse(text, strlen(text), "<pipe>", &rs, NULL), BG_OK);
    for (int twice = 0; twice < 2; twice++) {
        int fd[2];
        bg_csv_reader *rd = NULL;
        assert_int_equal(pipe(fd), 0);
        assert_int_equal(write(fd[1], text, strlen(text)), (ssize_t)strlen(text));
        close(fd[1]);
        FILE *fp = fdopen(fd[0], "rb");
        assert_non_null(fp);
        assert_int_equal(bg_csv_reader_new(fp, "<pipe>", twice ? BG_CSV_TWICE : 0, &rd, NULL),
                         BG_OK);
        same_readings(rd, &rs);
        if (twice) {
            assert_int_equal(bg_csv_reader_rewind(rd, NULL), BG_OK);
            same_readings(rd, &rs);
        } else {
            assert_int_equal(bg_csv_reader_rewind(rd, &err), BG_EINVAL);
            assert_non_null(strstr(err.msg, "cannot read '<pipe>' again"));
        }
        bg_csv_reader_free(rd);
        fclose(fp);
    }
    bg_readings_release(&rs);
}

static bg_store *fresh(const char *name)
{
    bg_store *st = NULL;
    bg_lot lot;
    unlink(path_of(name));
    assert_int_equal(bg_store_open(path_of(name), BG_STORE_CREATE, &st, NULL), BG_OK);
    bg_store_set_clock(st, 1764547200); /* 2025-12-01T00:00:00Z: stable stored times */
    memset(&lot, 0, sizeof lot);
    strcpy(lot.code, "L1");
    strcpy(lot.part, "NTC");
    lot.r25_ohm = 10000, lot.beta_k = 3950, lot.pair_t1_k = 298.15, lot.pair_t2_k = 358.15;
    lot.tol_r25 = 0.01, lot.tol_beta = 0.01;
    assert_int_equal(bg_store_lot_add(st, &lot, NULL, NULL), BG_OK);
    assert_int_equal(bg_store_probe_add(st, "P1", "L1", NULL, NULL, NULL), BG_OK);
    return st;
}

static bg_run meta_of(const char *serial, const char *source)
{
    bg_run m;
    memset(&m, 0, sizeof m);
    snprintf(m.serial, sizeof m.serial, "%s", serial);
    snprintf(m.source, sizeof m.source, "%s", source);
    return m;
}

struct rows { bg_reading_row *v; size_t n; };

static int keep_row(const bg_reading_row *row, void *ctx)
{
    struct rows *rs = ctx;
    rs->v = realloc(rs->v, (rs->n + 1) * sizeof *rs->v);
    assert_non_null(rs->v);
    rs->v[rs->n++] = *row;
    return 0;
}

/* An import from the file stores what the import of the same readings from memory stores:
** the run's row (digest, count, start) and every reading, value for value (1000 readings:
** whole 64-row statements and single rows). */
static void file_import_equals_memory_import(void **state)
{
    (void)state;
    char *text = invented(1000, "\n");
    bg_store *sa = fresh("a.db"), *sb = fresh("b.db");
    bg_readings rs;
    bg_run ma = meta_of("P1", "r.csv"), ra, rb;
    struct rows xa = { NULL, 0 }, xb = { NULL, 0 };
    long long run_a = 0, run_b = 0;
    size_t n = 0;
    write_file("r.csv", text);
    assert_int_equal(bg_store_import_file(sa, path_of("r.csv"), &ma, &run_a, &n, NULL), BG_OK);
    assert_int_equal(n, 1000);
    assert_int_equal(bg_csv_parse(text, strlen(text), "r.csv", &rs, NULL), BG_OK);
    assert_int_equal(bg_store_import(sb, &rs, &ma, &run_b, NULL), BG_OK);
    assert_int_equal(bg_store_run_get(sa, run_a, &ra, NULL), BG_OK);
    assert_int_equal(bg_store_run_get(sb, run_b, &rb, NULL), BG_OK);
    assert_string_equal(ra.readings_sha256, rb.readings_sha256);
    assert_int_equal(ra.nreadings, 1000);
    assert_string_equal(ra.started_at, "2026-11-01T00:00:00Z");
    assert_string_equal(ra.started_at, rb.started_at);
    assert_int_equal(bg_store_reading_each(sa, run_a, keep_row, &xa, NULL), BG_OK);
    assert_int_equal(bg_store_reading_each(sb, run_b, keep_row, &xb, NULL), BG_OK);
    assert_int_equal(xa.n, 1000);
    assert_int_equal(xb.n, 1000);
    for (size_t i = 0; i < 1000; i++) {
        assert_int_equal(xa.v[i].id, xb.v[i].id);
        assert_int_equal(xa.v[i].line, xb.v[i].line);
        assert_true(xa.v[i].t_k == xb.v[i].t_k && xa.v[i].r_ohm == xb.v[i].r_ohm);
        assert_true(xa.v[i].u_t_k == xb.v[i].u_t_k && xa.v[i].u_r_ohm == xb.v[i].u_r_ohm);
        assert_string_equal(xa.v[i].time, xb.v[i].time);
        assert_string_equal(xa.v[i].note, xb.v[i].note);
    }
    free(xa.v);
    free(xb.v);
    bg_readings_release(&rs);
    bg_store_close(sa);
    bg_store_close(sb);
    free(text);
}

/* The digest of a file import is the value the in-memory import has always stored: Debian's
** python3 hashlib.sha256 of the canonical form (docs/commands/import.md) of these readings
** (the same check value as tests/test_store.c, repeated_import_refused); the second import of
** the file is refused as a repeat. */
static void file_digest_is_the_canonical_one(void **state)
{
    (void)state;
    bg_store *st = fresh("d.db");
    bg_run m = meta_of("P1", "a.csv"), r;
    bg_error err = BG_ERROR_INIT;
    long long run = 0;
    write_file("a.csv", "temp_c,ohms,u_temp_k,time\r\n25.5,10000.25,0.002,2026-11-24T08:00:00Z"
                        "\r\n-0,32659.888,0.002,2026-11-24T08:20:00Z\r\n");
    assert_int_equal(bg_store_import_file(st, path_of("a.csv"), &m, &run, NULL, NULL), BG_OK);
    assert_int_equal(bg_store_run_get(st, run, &r, NULL), BG_OK);
    assert_string_equal(r.readings_sha256,
                        "428125d6c3692588c778858ad6d1888b1f350587df86301180ea92d376d57871");
    assert_int_equal(bg_store_import_file(st, path_of("a.csv"), &m, &run, NULL, &err),
                     BG_EINVAL);
    assert_non_null(strstr(err.msg, "a.csv: these readings of probe 'P1' were imported before "
                                    "as run 1"));
    bg_store_close(st);
}

static char *file_bytes(const char *p, size_t *len)
{
    FILE *f = fopen(p, "rb");
    char *b;
    long n;
    assert_non_null(f);
    fseek(f, 0, SEEK_END);
    n = ftell(f);
    fseek(f, 0, SEEK_SET);
    b = malloc((size_t)n + 1);
    assert_non_null(b);
    assert_int_equal(fread(b, 1, (size_t)n, f), (size_t)n);
    fclose(f);
    *len = (size_t)n;
    return b;
}

/* The database file byte for byte as it was before a failed import of 'file'. */
static void import_fails_unchanged(const char *db, const char *file, const bg_run *m,
                                   const char *want)
{
    bg_store *st = NULL;
    bg_error err = BG_ERROR_INIT;
    size_t n0, n1;
    long long run = 0;
    char *before = file_bytes(path_of(db), &n0), *after;
    assert_int_equal(bg_store_open(path_of(db), 0, &st, NULL), BG_OK);
    assert_int_equal(bg_store_import_file(st, path_of(file), m, &run, NULL, &err), BG_EINVAL);
    assert_string_equal(err.msg, want);
    bg_store_close(st);
    after = file_bytes(path_of(db), &n1);
    assert_int_equal(n0, n1);
    assert_memory_equal(before, after, n0);
    free(before);
    free(after);
}

/* A bad last line (found by the first pass, before anything is written) and a last reading
** that the reference's correction refuses (found by the second pass, after 2000 readings were
** written in the transaction) both leave the database file exactly as it was. */
static void bad_last_line_rolls_back(void **state)
{
    (void)state;
    char *text = invented(2000, "\n");
    size_t len = strlen(text);
    bg_store *st = fresh("e.db");
    bg_ref ref;
    bg_run m = meta_of("P1", "late.csv");
    char want[600];

    memset(&ref, 0, sizeof ref);
    strcpy(ref.ident, "R1");
    strcpy(ref.certificate, "C1");
    /* t = raw - 100 K: fine for the readings at 251..348 K, impossible for one at 50 K */
    ref.kind = BG_REF_LINEAR, ref.lin_c0_k = -100.0, ref.lin_c1 = 0.0, ref.lin_t0_k = 293.15;
    assert_int_equal(bg_store_ref_add(st, &ref, NULL, NULL), BG_OK);
    bg_store_close(st);
    text = realloc(text, len + 200);
    assert_non_null(text);
    strcpy(text + len, "2026-11-30T00:00:00Z,300.1,abc,0.002,0.1,\n");
    write_file("bad.csv", text);
    snprintf(want, sizeof want, "%s:2005: field 'ohms': not a number: 'abc'",
             path_of("bad.csv"));
    import_fails_unchanged("e.db", "bad.csv", &m, want);
    strcpy(text + len, "2026-11-30T00:00:00Z,50,9000,0.002,0.1,\n");
    write_file("late.csv", text);
    strcpy(m.ref_ident, "R1");
    import_fails_unchanged("e.db", "late.csv", &m, "late.csv:2005: field 'temperature': the "
                                                   "corrected temperature is at or below 0 K");
    free(text);
}

/* Standard input (here a pipe) is imported as a file is: the same digest and readings. */
static void import_from_a_pipe(void **state)
{
    (void)state;
    char *text = invented(700, "\n");
    bg_store *sa = fresh("p.db"), *sb = fresh("q.db");
    bg_run ma = meta_of("P1", "<stdin>"), ra, rb;
    bg_csv_reader *rd = NULL;
    long long run_a = 0, run_b = 0;
    size_t n = 0;
    int fd[2];
    pid_t pid;
    write_file("s.csv", text);
    assert_int_equal(pipe(fd), 0);
    pid = fork();
    assert_true(pid >= 0);
    if (pid == 0) { /* the writer: more than a pipe's buffer, so both sides must run */
        close(fd[0]);
        size_t len = strlen(text), off = 0;
        while (off < len) {
            ssize_t k = write(fd[1], text + off, len - off);
            if (k <= 0)
                _exit(1);
            off += (size_t)k;
        }
        _exit(0);
    }
    close(fd[1]);
    FILE *fp = fdopen(fd[0], "rb");
    assert_non_null(fp);
    assert_int_equal(bg_csv_reader_new(fp, "<stdin>", BG_CSV_TWICE, &rd, NULL), BG_OK);
    assert_int_equal(bg_store_import_reader(sa, rd, &ma, &run_a, &n, NULL), BG_OK);
    assert_int_equal(n, 700);
    bg_csv_reader_free(rd);
    fclose(fp);
    int status = 0;
    assert_int_equal(waitpid(pid, &status, 0), pid);
    assert_int_equal(bg_store_import_file(sb, path_of("s.csv"), &ma, &run_b, NULL, NULL),
                     BG_OK);
    assert_int_equal(bg_store_run_get(sa, run_a, &ra, NULL), BG_OK);
    assert_int_equal(bg_store_run_get(sb, run_b, &rb, NULL), BG_OK);
    assert_string_equal(ra.readings_sha256, rb.readings_sha256);
    assert_int_equal(ra.nreadings, 700);
    bg_store_close(sa);
    bg_store_close(sb);
    free(text);
}

int main(void)
{
    gsl_set_error_handler(test_gsl_handler);
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(reader_equals_parser),
        cmocka_unit_test(line_ends),
        cmocka_unit_test(reader_errors_and_long_lines),
        cmocka_unit_test(pipe_read_twice),
        cmocka_unit_test(file_import_equals_memory_import),
        cmocka_unit_test(file_digest_is_the_canonical_one),
        cmocka_unit_test(bad_last_line_rolls_back),
        cmocka_unit_test(import_from_a_pipe),
    };
    return cmocka_run_group_tests(tests, setup, teardown);
}
