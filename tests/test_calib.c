/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The calibration workflow: the request's defaults, the one default-uncertainty rule (points,
** stored runs and lots alike), the "auto" choice against BIC values computed independently
** with numpy, and the lot fit that stores all fits or none. */
#include <unistd.h>

#include "testutil.h"

static char dir[256];

static int setup(void **state)
{
    (void)state;
    gsl_set_error_handler(test_gsl_handler);
    snprintf(dir, sizeof dir, "/tmp/bandgap-test-calib-XXXXXX");
    return mkdtemp(dir) ? 0 : -1;
}

static int teardown(void **state)
{
    char cmd[300];
    (void)state;
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
    return system(cmd) == 0 ? 0 : -1;
}

/* INVENTED readings: an sh3 curve with invented coefficients and 2 mK scatter, a stated u(R)
** and no u(T) column. */
static const char ohms_csv[] = "temp_c,ohms,u_ohms\n"
                               "0.0000,32659.888,0.5\n"
                               "10.0006,19929.509,0.3\n"
                               "19.9995,12517.769,0.2\n"
                               "29.9982,8074.150,0.1\n"
                               "39.9991,5337.012,0.08\n"
                               "49.9980,3608.378,0.05\n"
                               "60.0001,2491.136,0.04\n"
                               "70.0027,1753.410,0.03\n"
                               "79.9990,1256.496,0.02\n"
                               "89.9988,915.536,0.02\n"
                               "100.0010,677.520,0.01\n";

/* The same curve with the resistance rising between two readings: a fit refuses it. */
static const char rising_csv[] = "temp_c,ohms\n"
                                 "0.0000,32659.888\n"
                                 "10.0006,19929.509\n"
                                 "19.9995,12517.769\n"
                                 "29.9982,13074.150\n"
                                 "39.9991,5337.012\n"
                                 "49.9980,3608.378\n";

static bg_readings parse(const char *text)
{
    bg_readings rs = BG_READINGS_INIT;
    assert_int_equal(bg_csv_parse(text, strlen(text), "r.csv", &rs, NULL), BG_OK);
    return rs;
}

static void request_defaults(void **state)
{
    (void)state;
    bg_calib_request rq = bg_calib_default_request();
    assert_string_equal(rq.model, "auto");
    assert_true(rq.t0_k == 298.15);      /* 25 degC, the usual R25 reference (common practice) */
    assert_true(rq.pair_t1_k == 298.15); /* B25/85 (common practice) */
    assert_true(rq.pair_t2_k == 358.15);
    assert_true(rq.u_t_default_k == 0.0); /* no default uncertainty unless asked */
    /* p = 95.45 % for k = 2 of a normal distribution (JCGM 100:2008, GUM, Table G.1) */
    assert_true(rq.coverage == 0.9545);
    assert_true(rq.coverage_k == 0.0);        /* k from Student's t unless a k is asked for */
    assert_true(rq.resolution_k == 1e-5);     /* the fit's documented default */
    assert_int_equal(rq.ntable, 9);
    assert_int_equal(rq.ncheck, 0);
    assert_null(rq.check_t_k);
    assert_int_equal(rq.linear_only, 0);
    assert_int_equal(rq.no_inflate, 0);
    assert_null(rq.progress);
}

/* U = k u with k from Student's t for nu_eff = n - p by default, or k = 2 when asked with
** its probability stated; a B pair outside the range and a check outside it are flagged, the
** check without a U; too few readings name the source and a model with fewer coefficients.
** Check values: scipy 1.10.1 (Debian), computed 2026-12-02: scipy.stats.t.ppf(0.977250, 8) =
** 2.3664194994919296 and 2 * scipy.stats.t.cdf(2, 8) - 1 = 0.9194837620427374. */
static void coverage_extrapolation_too_few(void **state)
{
    (void)state;
    bg_readings rs = parse(ohms_csv);
    bg_point pts[16];
    double at_k[2] = { 323.15, 423.15 };
    bg_calib_request rq = bg_calib_default_request();
    bg_calib_result r = BG_CALIB_RESULT_INIT;
    bg_error err = BG_ERROR_INIT;

    bg_readings_points(&rs, pts);
    rq.model = "sh3";
    rq.check_t_k = at_k, rq.ncheck = 2;
    rq.pair_t1_k = 273.15, rq.pair_t2_k = 423.15; /* 0 / 150 degC: 150 is outside */
    assert_int_equal(bg_calibrate(pts, rs.n, "r.csv", &rq, &r, &err), BG_OK);
    assert_int_equal(r.fit.dof, 8);
    assert_close(r.cover.k, 2.3664194994919296, 1e-8, 0);
    assert_close(r.cover.p, 0.9545, 0, 0);
    assert_int_equal(r.cover.fixed, 0);
    assert_close(r.table_U_k[0], r.cover.k * r.table_u_k[0], 1e-15, 0);
    assert_close(r.U_max_k, r.cover.k * r.u_max_k, 1e-15, 0);
    assert_int_equal(r.b_pair_extrapolated, 1);
    assert_int_equal(r.checks[0].extrapolated, 0);
    assert_close(r.checks[0].U_k, r.cover.k * r.checks[0].u_k, 1e-15, 0);
    assert_int_equal(r.checks[1].extrapolated, 1);
    assert_true(isnan(r.checks[1].U_k));

    rq.coverage_k = 2.0;
    rq.pair_t1_k = 298.15, rq.pair_t2_k = 338.15;
    assert_int_equal(bg_calibrate(pts, rs.n, "r.csv", &rq, &r, &err), BG_OK);
    assert_close(r.cover.k, 2.0, 0, 0);
    assert_close(r.cover.p, 0.9194837620427374, 1e-9, 0);
    assert_int_equal(r.b_pair_extrapolated, 0);

    assert_int_equal(bg_calibrate(pts, 0, "head.csv", &rq, &r, &err), BG_EINVAL);
    assert_string_equal(err.msg, "head.csv: no readings (a header only?)");
    assert_int_equal(bg_calibrate(pts, 2, "two.csv", &rq, &r, &err), BG_EINVAL);
    assert_string_equal(err.msg, "two.csv: 2 readings, but model 'sh3' has 3 coefficients: "
                                 "give more readings, or a model with fewer coefficients: "
                                 "model 'beta' (2 coefficients) fits 2 readings with 0 degrees "
                                 "of freedom left");
    rq.model = "auto";
    assert_int_equal(bg_calibrate(pts, 3, "three.csv", &rq, &r, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "three.csv: 3 readings: too few for 'auto'"));
    bg_calib_result_release(&r);
    bg_readings_release(&rs);
}

/* Each reading without a stated u(T) takes the default, whatever its u(R); a stated u(T) stays. */
static void default_u_per_reading(void **state)
{
    (void)state;
    bg_readings rs = parse(ohms_csv);
    bg_point pts[16];
    bg_calib_request rq = bg_calib_default_request();
    bg_calib_result r = BG_CALIB_RESULT_INIT;
    bg_error err = BG_ERROR_INIT;

    assert_int_equal(rs.n, 11);
    bg_readings_points(&rs, pts);
    pts[3].u_t_k = 0.003; /* one reading states its own */
    rq.model = "sh3";
    rq.u_t_default_k = 0.05;
    assert_int_equal(bg_calibrate(pts, rs.n, "r.csv", &rq, &r, &err), BG_OK);
    assert_int_equal(r.npts, 11);
    for (size_t i = 0; i < r.npts; i++) {
        double want_t = i == 3 ? 0.003 : 0.05;
        assert_true(r.pts[i].u_t_k == want_t);
        assert_true(r.pts[i].u_r_ohm == pts[i].u_r_ohm);
        /* the weight combines both: u^2 = u(T)^2 + (dT/dR u(R))^2 with dT/dR = -T^2 f'(L) / R
        ** (docs/methods.md, derived); the slope from the fitted curve */
        double a[BG_MODEL_MAXPAR], L = log(pts[i].r_ohm), t = pts[i].t_k;
        bg_model_inv_poly(&r.fit.model, a);
        double dfdl = a[1] + 2 * a[2] * L + 3 * a[3] * L * L;
        double slope = -t * t * dfdl / pts[i].r_ohm;
        double ur = slope * pts[i].u_r_ohm;
        assert_close(r.fit.u_k[i], sqrt(want_t * want_t + ur * ur), 1e-4, 0);
    }
    assert_int_equal(r.fit.weighted, 1);
    bg_calib_result_release(&r);

    /* without a default, the readings are weighted by u(R) alone: a different fit */
    rq.u_t_default_k = 0.0;
    bg_readings_points(&rs, pts);
    assert_int_equal(bg_calibrate(pts, rs.n, "r.csv", &rq, &r, &err), BG_OK);
    for (size_t i = 0; i < r.npts; i++)
        assert_true(r.pts[i].u_t_k == 0.0);
    assert_true(r.fit.chi2 > 10.0);
    bg_calib_result_release(&r);
    bg_readings_release(&rs);
}

/* A store with lot L1 of part NTC and probes 'serials'. */
static bg_store *fresh(const char *name, const char *const *serials)
{
    char path[400];
    bg_store *st = NULL;
    bg_lot lot;
    snprintf(path, sizeof path, "%s/%s", dir, name);
    unlink(path);
    assert_int_equal(bg_store_open(path, BG_STORE_CREATE, &st, NULL), BG_OK);
    memset(&lot, 0, sizeof lot);
    strcpy(lot.code, "L1");
    strcpy(lot.part, "NTC");
    lot.r25_ohm = 10000, lot.beta_k = 3950, lot.pair_t1_k = 298.15, lot.pair_t2_k = 358.15;
    lot.tol_r25 = 0.01, lot.tol_beta = 0.01;
    assert_int_equal(bg_store_lot_add(st, &lot, NULL, NULL), BG_OK);
    for (size_t i = 0; serials[i]; i++)
        assert_int_equal(bg_store_probe_add(st, serials[i], "L1", NULL, NULL, NULL), BG_OK);
    return st;
}

static long long import(bg_store *st, const char *serial, const char *text)
{
    bg_readings rs = parse(text);
    bg_run meta;
    long long run = 0;
    memset(&meta, 0, sizeof meta);
    snprintf(meta.serial, sizeof meta.serial, "%s", serial);
    strcpy(meta.source, "r.csv");
    assert_int_equal(bg_store_import(st, &rs, &meta, &run, NULL), BG_OK);
    bg_readings_release(&rs);
    return run;
}

static int count_cb(const bg_fit_row *f, void *ctx)
{
    (void)f;
    ++*(size_t *)ctx;
    return 0;
}

static size_t count_fits(bg_store *st)
{
    size_t n = 0;
    assert_int_equal(bg_store_fit_each(st, NULL, NULL, count_cb, &n, NULL), BG_OK);
    return n;
}

/* The stored run and the lot follow the same rule as the points: same chi2 as bg_calibrate. */
static void default_u_stored_and_lot(void **state)
{
    (void)state;
    static const char *const serials[] = { "P1", NULL };
    bg_store *st = fresh("u.db", serials);
    bg_readings rs = parse(ohms_csv);
    bg_point pts[16];
    bg_calib_request rq = bg_calib_default_request();
    bg_calib_result a = BG_CALIB_RESULT_INIT, b = BG_CALIB_RESULT_INIT;
    bg_calib_lot lot = BG_CALIB_LOT_INIT;
    bg_fit_row row;
    bg_error err = BG_ERROR_INIT;

    long long run = import(st, "P1", ohms_csv);
    bg_readings_points(&rs, pts);
    rq.model = "sh3";
    rq.u_t_default_k = 0.05;
    assert_int_equal(bg_calibrate(pts, rs.n, "r.csv", &rq, &a, &err), BG_OK);
    assert_int_equal(bg_calibrate_probe(st, "P1", 0, &rq, &b, &err), BG_OK);
    assert_int_equal(b.run_id, run);
    assert_true(b.fit_id > 0);
    assert_true(b.fit.chi2 == a.fit.chi2);
    assert_int_equal(bg_calibrate_lot(st, "L1", &rq, &lot, &err), BG_OK);
    assert_int_equal(lot.nrows, 1);
    assert_int_equal(lot.rows[0].status, BG_CALIB_FITTED);
    assert_int_equal(bg_store_fit_get(st, lot.rows[0].fit_id, &row, &err), BG_OK);
    assert_true(row.chi2 == a.fit.chi2);
    bg_calib_lot_release(&lot);
    bg_calib_result_release(&a);
    bg_calib_result_release(&b);
    bg_readings_release(&rs);
    bg_store_close(st);
}

/* INVENTED points: 1/T = A + B L + D L^2 + C L^3 with A = 1.1384e-3, B = 2.3245e-4,
** C = 9.48e-8 and D = 1e-7 (first set) or 2e-7 (second), each reading's temperature off by an
** invented scatter of a few mK, R rounded to 0.1 mohm; u(T) = 2 mK. */
static const double tc[14] = { -20, -10, 0, 10, 20, 30, 40, 50, 60, 70, 80, 90, 100, 110 };
static const double r_d1[14] = { 92135.7088, 52854.366, 31364.6311, 19205.0738, 12098.1413,
                                 7825.2222,  5186.034,  3514.712,   2431.5023,  1714.8633,
                                 1231.1621,  898.4974,  665.9719,   500.6977 };
static const double r_d2[14] = { 87845.2698, 50591.4862, 30130.1424, 18510.1654, 11695.7279,
                                 7585.9444,  5040.252,   3423.8828,  2373.7371,  1677.4106,
                                 1206.4436,  881.9153,   654.6745,   492.8914 };

/* BIC = chi2 + p ln n of beta, sh3, poly:2, sh4, poly:4, poly:5, and the model the rule of
** docs/methods.md picks (fewest coefficients within 2 of the lowest BIC), computed with Debian's
** numpy 1.24.2: numpy.linalg.lstsq for the weighted fit in 1/T and for each Gauss-Newton step in
** T (columns equilibrated, stop at a relative step below 1e-14), independently of bandgap. */
static const double bic_d1[6] = { 1093155.179, 14.73766412, 3012.090748, 14.01447282,
                                  16.48060551, 18.86759883 }; /* chosen: sh3, not the lowest */
static const double bic_d2[6] = { 1144790.381, 27.31452032, 2904.840555, 14.01496686,
                                  16.48057277, 18.86828237 }; /* chosen: sh4, the lowest */

static void check_auto(const double *r_ohm, const double *bic, const char *want)
{
    bg_point pts[14];
    bg_calib_request rq = bg_calib_default_request();
    bg_calib_result r = BG_CALIB_RESULT_INIT;
    bg_error err = BG_ERROR_INIT;
    char name[16];

    for (size_t i = 0; i < 14; i++) {
        memset(&pts[i], 0, sizeof pts[i]);
        pts[i].t_k = tc[i] + 273.15, pts[i].r_ohm = r_ohm[i], pts[i].u_t_k = 0.002;
        pts[i].line = i + 2;
    }
    assert_int_equal(bg_calibrate(pts, 14, NULL, &rq, &r, &err), BG_OK);
    assert_true(r.compared && r.auto_chosen);
    assert_int_equal(r.cmp.nrows, 6);
    for (size_t m = 0; m < 6; m++) {
        assert_true(r.cmp.row[m].ok);
        assert_close(r.cmp.row[m].bic, bic[m], 1e-7, 1e-6);
    }
    assert_string_equal(bg_model_name(&r.fit.model, name, sizeof name), want);
    assert_string_equal(bg_model_name(&r.cmp.row[r.cmp.chosen].model, name, sizeof name), want);
    assert_string_equal(r.requested, "auto");
    assert_true(strstr(r.cmp.reason, want) != NULL);
    bg_calib_result_release(&r);
}

static void auto_choice_against_numpy(void **state)
{
    (void)state;
    check_auto(r_d1, bic_d1, "sh3");
    check_auto(r_d2, bic_d2, "sh4");
}

/* A lot where one probe cannot be fitted stores nothing; the same lot without it stores all. */
static void lot_all_or_none(void **state)
{
    (void)state;
    static const char *const serials[] = { "P1", "P2", "P3", "P4", NULL };
    bg_store *st = fresh("lot.db", serials);
    bg_calib_request rq = bg_calib_default_request();
    bg_calib_lot lot = BG_CALIB_LOT_INIT;
    bg_error err = BG_ERROR_INIT;

    import(st, "P1", ohms_csv);
    import(st, "P2", rising_csv);
    import(st, "P4", ohms_csv); /* P3 has no run */
    rq.model = "sh3";
    size_t before = count_fits(st);
    assert_int_equal(before, 0);
    assert_int_equal(bg_calibrate_lot(st, "L1", &rq, &lot, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "1 of 4 probes could not be fitted; nothing was stored"));
    assert_int_equal(count_fits(st), before);
    assert_int_equal(lot.stored, 0);
    assert_int_equal(lot.nrows, 4);
    assert_int_equal(lot.rows[0].status, BG_CALIB_FITTED);
    assert_int_equal(lot.rows[1].status, BG_CALIB_FAILED);
    assert_non_null(lot.rows[1].why);
    assert_int_equal(lot.rows[2].status, BG_CALIB_NO_RUNS);
    assert_int_equal(lot.rows[3].status, BG_CALIB_FITTED);
    for (size_t i = 0; i < lot.nrows; i++)
        assert_true(lot.rows[i].fit_id == 0);

    /* a new run of P2 with good readings: now every fit is stored, in one go */
    import(st, "P2", ohms_csv);
    assert_int_equal(bg_calibrate_lot(st, "L1", &rq, &lot, &err), BG_OK);
    assert_int_equal(lot.stored, 1);
    assert_int_equal(lot.nfitted, 3);
    assert_int_equal(lot.nnoruns, 1);
    assert_int_equal(count_fits(st), before + 3);
    for (size_t i = 0; i < lot.nrows; i++) {
        bg_fit_row row;
        if (lot.rows[i].status != BG_CALIB_FITTED)
            continue;
        assert_int_equal(bg_store_fit_get(st, lot.rows[i].fit_id, &row, &err), BG_OK);
        assert_string_equal(row.serial, lot.rows[i].serial);
        assert_true(row.rms_mk == lot.rows[i].rms_mk);
    }
    bg_calib_lot_release(&lot);

    /* an unknown lot and a bad request are refused before anything is written */
    assert_int_equal(bg_calibrate_lot(st, "NO-SUCH-LOT", &rq, &lot, &err), BG_EINVAL);
    rq.model = "cubic";
    assert_int_equal(bg_calibrate_lot(st, "L1", &rq, &lot, &err), BG_EINVAL);
    assert_int_equal(count_fits(st), before + 3);
    bg_calib_lot_release(&lot);
    bg_store_close(st);
}

/* The progress callback can stop a lot: nothing is stored. */
static int stop_at_two(size_t done, size_t total, void *ctx)
{
    (void)total;
    *(size_t *)ctx = done;
    return done == 2;
}

static void lot_stopped(void **state)
{
    (void)state;
    static const char *const serials[] = { "P1", "P2", NULL };
    bg_store *st = fresh("stop.db", serials);
    bg_calib_request rq = bg_calib_default_request();
    bg_calib_lot lot = BG_CALIB_LOT_INIT;
    bg_error err = BG_ERROR_INIT;
    size_t seen = 0;

    import(st, "P1", ohms_csv);
    import(st, "P2", ohms_csv);
    rq.model = "sh3";
    rq.progress = stop_at_two, rq.progress_ctx = &seen;
    assert_int_equal(bg_calibrate_lot(st, "L1", &rq, &lot, &err), BG_EINVAL);
    assert_int_equal(seen, 2);
    assert_int_equal(count_fits(st), 0);
    assert_int_equal(lot.stored, 0);
    bg_calib_lot_release(&lot);
    bg_store_close(st);
}

/* A run of 'serial' from 'text' started at 'at' (readings identical to an earlier run's on
** purpose when 'again'); 'ref' (or NULL) with the reason 'why' (or NULL). */
static long long import_at(bg_store *st, const char *serial, const char *text, const char *at,
                           int again, const char *ref, const char *why)
{
    bg_readings rs = parse(text);
    bg_run meta;
    long long run = 0;
    memset(&meta, 0, sizeof meta);
    snprintf(meta.serial, sizeof meta.serial, "%s", serial);
    snprintf(meta.started_at, sizeof meta.started_at, "%s", at);
    snprintf(meta.ref_ident, sizeof meta.ref_ident, "%s", ref ? ref : "");
    snprintf(meta.ref_overdue, sizeof meta.ref_overdue, "%s", why ? why : "");
    strcpy(meta.source, "r.csv");
    meta.new_run = again;
    assert_int_equal(bg_store_import(st, &rs, &meta, &run, NULL), BG_OK);
    bg_readings_release(&rs);
    return run;
}

static long long fit_run(bg_store *st, long long run, const char *model, unsigned flags,
                         bg_calib_result *r)
{
    bg_calib_request rq = bg_calib_default_request();
    bg_error err = BG_ERROR_INIT;
    rq.model = model;
    rq.u_t_default_k = 0.002;
    rq.store_flags = flags;
    assert_int_equal(bg_calibrate_probe(st, "P1", run, &rq, r, &err), BG_OK);
    return r->fit_id;
}

static long long current(bg_store *st)
{
    bg_fit_row f;
    bg_run run;
    assert_int_equal(bg_store_current_fit(st, "P1", &f, &run, NULL), BG_OK);
    assert_int_equal(f.run_id, run.id);
    return f.id;
}

/* The current fit is the newest fit of the latest run by start time: the run imported first
** here is the later calibration; refitting the older run never changes the current fit, and
** a latest run without a fit is an error, not the older run's fit. */
static void current_fit_is_latest_runs(void **state)
{
    (void)state;
    static const char *const serials[] = { "P1", NULL };
    bg_store *st = fresh("cur.db", serials);
    bg_calib_result r = BG_CALIB_RESULT_INIT;
    bg_fit_row f;
    bg_error err = BG_ERROR_INIT;
    long long late = import_at(st, "P1", ohms_csv, "2027-05-20T09:00:00Z", 0, NULL, NULL);
    long long early = import_at(st, "P1", ohms_csv, "2026-11-20T09:00:00Z", 1, NULL, NULL);
    assert_true(early > late);
    long long f_early = fit_run(st, early, "sh3", 0, &r);
    assert_int_equal(bg_store_current_fit(st, "P1", &f, NULL, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "its latest run 1 (started 2027-05-20T09:00:00Z) is not "
                                    "fitted"));
    long long f_late = fit_run(st, late, "sh3", 0, &r);
    assert_true(f_late > f_early);
    assert_int_equal(current(st), f_late);
    /* the README's order: the older run refitted with sh4 afterwards */
    long long f_refit = fit_run(st, early, "sh4", 0, &r);
    assert_true(f_refit > f_late);
    assert_int_equal(current(st), f_late);
    /* a second fit of the latest run is chosen for it */
    long long f_late4 = fit_run(st, late, "sh4", 0, &r);
    assert_int_equal(current(st), f_late4);
    bg_calib_result_release(&r);
    bg_store_close(st);
}

/* An identical fit (same readings, model and options) is not stored again and names the
** stored one; --store-again stores it (the run's chosen fit again); a preview stores
** nothing. */
static void identical_fit_and_preview(void **state)
{
    (void)state;
    static const char *const serials[] = { "P1", NULL };
    bg_store *st = fresh("same.db", serials);
    bg_calib_result r = BG_CALIB_RESULT_INIT;
    long long run = import_at(st, "P1", ohms_csv, "2026-11-20T09:00:00Z", 0, NULL, NULL);
    long long f1 = fit_run(st, run, "sh3", 0, &r);
    assert_int_equal(r.stored, 1);
    assert_int_equal(r.same_fit_id, 0);
    long long f2 = fit_run(st, run, "sh4", 0, &r);
    assert_int_equal(count_fits(st), 2);
    assert_int_equal(fit_run(st, run, "sh3", 0, &r), f1);
    assert_int_equal(r.stored, 0);
    assert_int_equal(r.same_fit_id, f1);
    assert_int_equal(r.run_fit_id, f2);
    assert_int_equal(count_fits(st), 2);
    /* other options that give other numbers: another fit */
    bg_calib_request rq = bg_calib_default_request();
    rq.model = "sh3", rq.u_t_default_k = 0.002, rq.linear_only = 1;
    assert_int_equal(bg_calibrate_probe(st, "P1", run, &rq, &r, NULL), BG_OK);
    assert_int_equal(r.stored, 1);
    assert_int_equal(count_fits(st), 3);
    /* a preview: nothing stored, the identical fit named */
    assert_int_equal(fit_run(st, run, "sh3", BG_CALIB_DRY_RUN, &r), 0);
    assert_int_equal(r.stored, 0);
    assert_int_equal(r.same_fit_id, f1);
    assert_int_equal(r.run_id, run);
    assert_int_equal(fit_run(st, run, "poly:2", BG_CALIB_DRY_RUN, &r), 0);
    assert_int_equal(r.same_fit_id, 0);
    assert_int_equal(count_fits(st), 3);
    /* stored again on purpose: the run's chosen fit */
    long long f4 = fit_run(st, run, "sh3", BG_CALIB_STORE_SAME, &r);
    assert_int_equal(r.stored, 1);
    assert_int_equal(r.same_fit_id, f1);
    assert_true(f4 > f1);
    assert_int_equal(r.run_fit_id, f4);
    assert_int_equal(current(st), f4);
    bg_calib_result_release(&r);
    bg_store_close(st);
}

/* A run whose reference was used past its due date: every fit of it carries the note. */
static void overdue_reference_noted_on_fit(void **state)
{
    (void)state;
    static const char *const serials[] = { "P1", NULL };
    bg_store *st = fresh("due.db", serials);
    bg_calib_result r = BG_CALIB_RESULT_INIT;
    bg_ref ref;
    memset(&ref, 0, sizeof ref);
    strcpy(ref.ident, "R1");
    strcpy(ref.certificate, "C1");
    strcpy(ref.due_date, "2026-06-30");
    assert_int_equal(bg_store_ref_add(st, &ref, NULL, NULL), BG_OK);
    long long run = import_at(st, "P1", ohms_csv, "2026-11-20T09:00:00Z", 0, "R1",
                              "checked at the ice point");
    fit_run(st, run, "sh3", 0, &r);
    size_t k = 0;
    while (k < r.fit.nnotes && r.fit.notes[k].kind != BG_NOTE_REF_OVERDUE)
        k++;
    assert_true(k < r.fit.nnotes);
    assert_non_null(strstr(r.fit.notes[k].msg, "reference 'R1' used past its due date "
                                               "2026-06-30 (run 1): checked at the ice point"));
    assert_string_equal(r.ref_overdue, r.fit.notes[k].msg);
    bg_calib_result_release(&r);
    bg_store_close(st);
}

/* The lot fitted as a batch gives every probe the numbers of the probe fitted alone: 19 probes
** (lanes not a multiple of the vector width), u(T) stated or u(R) stated (left to the
** per-probe path), a probe with one reading fewer (another shape: its own batch) and one
** without runs among them. */
static void lot_batch_matches_probe(void **state)
{
    (void)state;
    static const char *const serials[] = { "Q01", "Q02", "Q03", "Q04", "Q05", "Q06", "Q07",
                                           "Q08", "Q09", "Q10", "Q11", "Q12", "Q13", "Q14",
                                           "Q15", "Q16", "Q17", "Q18", "Q19", NULL };
    bg_store *st = fresh("lotbatch.db", serials);
    bg_calib_request rq = bg_calib_default_request();
    bg_calib_lot lot = BG_CALIB_LOT_INIT;
    bg_error err = BG_ERROR_INIT;
    char csv[2048];

    for (size_t p = 0; serials[p]; p++) {
        size_t len, npts = p == 6 ? 7 : 8;
        if (p == 11)
            continue; /* no run */
        len = (size_t)snprintf(csv, sizeof csv, p == 3 ? "temp_c,ohms,u_ohms\n"
                                                        : "temp_c,ohms,u_temp_k\n");
        for (size_t i = 0; i < npts; i++) {
            /* invented: a 10 kohm class curve, B about 3950 K, a wobble per probe */
            double t = 273.15 + 10.0 * (double)i + 0.0013 * (double)((p * 7 + i * 3) % 5);
            double r = 10000.0 * exp(3950.0 * (1.0 / t - 1.0 / 298.15)) *
                       (1.0 + 1e-4 * (double)p + 2e-5 * (double)((i * p) % 3));
            len += (size_t)snprintf(csv + len, sizeof csv - len, "%.4f,%.3f,%s\n", t - 273.15, r,
                                    p == 3 ? "0.2" : "0.002");
        }
        import(st, serials[p], csv);
    }
    rq.model = "sh3";
    assert_int_equal(bg_calibrate_lot(st, "L1", &rq, &lot, &err), BG_OK);
    assert_int_equal(lot.nrows, 19);
    assert_int_equal(lot.nfitted, 18);
    for (size_t i = 0; i < lot.nrows; i++) {
        bg_calib_result one = BG_CALIB_RESULT_INIT;
        bg_fit_row row;
        if (i == 11) {
            assert_int_equal(lot.rows[i].status, BG_CALIB_NO_RUNS);
            continue;
        }
        assert_int_equal(lot.rows[i].status, BG_CALIB_FITTED);
        rq.store_flags = BG_CALIB_DRY_RUN;
        assert_int_equal(bg_calibrate_probe(st, serials[i], 0, &rq, &one, &err), BG_OK);
        assert_int_equal(lot.rows[i].n, one.fit.n);
        for (size_t k = 0; k < 3; k++)
            assert_close(lot.rows[i].model.coef[k], one.fit.model.coef[k], 1e-12, 0);
        assert_close(lot.rows[i].rms_mk, one.fit.rms_mk, 1e-12, 0);
        assert_close(lot.rows[i].u_max_k, one.u_max_k, 1e-12, 0);
        assert_int_equal(lot.rows[i].nnotes, one.fit.nnotes);
        assert_int_equal(bg_store_fit_get(st, lot.rows[i].fit_id, &row, &err), BG_OK);
        assert_string_equal(row.serial, serials[i]);
        bg_calib_result_release(&one);
    }
    bg_calib_lot_release(&lot);
    bg_store_close(st);
}


int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(request_defaults),
        cmocka_unit_test(default_u_per_reading),
        cmocka_unit_test(coverage_extrapolation_too_few),
        cmocka_unit_test(default_u_stored_and_lot),
        cmocka_unit_test(auto_choice_against_numpy),
        cmocka_unit_test(lot_all_or_none),
        cmocka_unit_test(lot_batch_matches_probe),
        cmocka_unit_test(lot_stopped),
        cmocka_unit_test(current_fit_is_latest_runs),
        cmocka_unit_test(identical_fit_and_preview),
        cmocka_unit_test(overdue_reference_noted_on_fit),
    };
    return cmocka_run_group_tests(tests, setup, teardown);
}
