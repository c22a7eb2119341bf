/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* QA results computed from a calibration record (qa.h): a lot's statistics and a part's
** control charts against values computed independently with numpy/scipy for the invented
** coefficients below, the histories that once had fixed caps (a probe's 64 calibrations,
** a part's 256 lots) read in full, and the lot report's content read in a fixed number of
** queries, equal to what the per-probe reads give.  Each probe's calibration is a beta curve with invented R25
** and B, made as noise-free readings, imported and fitted through the library. */
#include <sys/stat.h>
#include <unistd.h>

#include "testutil.h"
#include "../src/lib/store/sqlite_int.h"

static char dir[256];

static int setup(void **state)
{
    (void)state;
    snprintf(dir, sizeof dir, "/tmp/bandgap-test-qa-XXXXXX");
    return mkdtemp(dir) ? 0 : -1;
}

static int teardown(void **state)
{
    char cmd[300];
    (void)state;
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
    return system(cmd) == 0 ? 0 : -1;
}

static bg_store *fresh(const char *name)
{
    char p[400];
    bg_store *st = NULL;
    snprintf(p, sizeof p, "%s/%s", dir, name);
    unlink(p);
    assert_int_equal(bg_store_open(p, BG_STORE_CREATE, &st, NULL), BG_OK);
    return st;
}

/* A lot of part 'part' with nominal R25 10 kohm, B25/85 3950 K, tolerances 1 % and 0.5 %. */
static void add_lot(bg_store *st, const char *code, const char *part)
{
    bg_lot lot;
    memset(&lot, 0, sizeof lot);
    snprintf(lot.code, sizeof lot.code, "%s", code);
    snprintf(lot.part, sizeof lot.part, "%s", part);
    lot.r25_ohm = 10000, lot.beta_k = 3950, lot.pair_t1_k = 298.15, lot.pair_t2_k = 358.15;
    lot.tol_r25 = 0.01, lot.tol_beta = 0.005;
    assert_int_equal(bg_store_lot_add(st, &lot, NULL, NULL), BG_OK);
}

/* One calibration of probe 'serial' started at 'when': readings of the beta curve (R25, B)
** at 0 .. 100 degC, imported and fitted with the beta model. */
static void calibrate(bg_store *st, const char *serial, double r25, double b, const char *when)
{
    char text[2048];
    size_t len = (size_t)snprintf(text, sizeof text, "temp_c,ohms,u_temp_k\n");
    for (int i = 0; i <= 8; i++) {
        double t = 273.15 + 12.5 * i, r = r25 * exp(b * (1 / t - 1 / 298.15));
        len += (size_t)snprintf(text + len, sizeof text - len, "%.4f,%.17g,0.002\n", 12.5 * i, r);
    }
    bg_readings rs;
    bg_run meta;
    bg_model m;
    bg_fit f = BG_FIT_INIT;
    bg_store_points sp = BG_STORE_POINTS_INIT;
    long long run;
    assert_int_equal(bg_csv_parse(text, len, "cal.csv", &rs, NULL), BG_OK);
    memset(&meta, 0, sizeof meta);
    snprintf(meta.serial, sizeof meta.serial, "%s", serial);
    snprintf(meta.started_at, sizeof meta.started_at, "%s", when);
    assert_int_equal(bg_store_import(st, &rs, &meta, &run, NULL), BG_OK);
    assert_int_equal(bg_store_run_points(st, run, &sp, NULL), BG_OK);
    bg_model_parse("beta", &m, NULL);
    bg_fit_opts o = bg_fit_default_opts(&m);
    assert_int_equal(bg_fit_points(sp.pts, sp.n, &o, &f, NULL), BG_OK);
    assert_int_equal(bg_store_fit_save(st, run, &f, sp.ids, NULL, NULL), BG_OK);
    bg_fit_release(&f);
    bg_store_points_release(&sp);
    bg_readings_release(&rs);
}

/* Invented lot: eight probes, the seventh far off in R25. */
static const double lot_r25[8] = { 10012.3, 9987.6, 10031.8, 10004.1, 9969.4, 10023.7, 10161.2,
                                   9995.0 };
static const double lot_b[8] = { 3951.2, 3948.7, 3955.9, 3946.3, 3952.8, 3949.5, 3953.6,
                                 3944.1 };

static void lot_statistics_against_numpy(void **state)
{
    (void)state;
    bg_store *st = fresh("lot.db");
    bg_qa_opts o = bg_qa_default_opts();
    bg_qa_lot l = BG_QA_LOT_INIT;
    add_lot(st, "L1", "NTC");
    for (int i = 0; i < 8; i++) {
        char serial[32];
        snprintf(serial, sizeof serial, "P%d", i + 1);
        assert_int_equal(bg_store_probe_add(st, serial, "L1", NULL, NULL, NULL), BG_OK);
        calibrate(st, serial, lot_r25[i], lot_b[i], "2026-11-24T08:00:00Z");
    }
    assert_int_equal(bg_qa_lot_stats(st, "L1", &o, &l, NULL), BG_OK);
    assert_int_equal(l.n, 8);
    /* numpy 1.x (Debian): dev = 100 (r25 - 1e4) / 1e4; mean, std(ddof=1), min, max;
    ** Cpk = min(usl - mean, mean - lsl) / (3 sd) with limits -+1 % and 3950 K -+0.5 %;
    ** G = max|x - mean| / sd; G_crit from scipy.stats.t.ppf(1 - 0.05/16, 6) in Grubbs'
    ** formula (computed 2026-12-02).  The fits reproduce R25 and B to ~1e-10. */
    assert_close(l.r25_dev.mean, 0.23137500000000044, 1e-8, 1e-10);
    assert_close(l.r25_dev.sd, 0.59231794972922402, 1e-8, 0);
    assert_close(l.r25_dev.min, -0.30600000000000366, 1e-8, 1e-10);
    assert_close(l.r25_dev.max, 1.6120000000000072, 1e-8, 0);
    assert_close(l.cpk_r25, 0.43255203299251338, 1e-8, 0);
    assert_close(l.g_r25, 2.3308849590513923, 1e-8, 0);
    assert_close(l.b.mean, 3950.2624999999998, 1e-12, 0);
    assert_close(l.b.sd, 3.9085757362131881, 1e-8, 0);
    assert_close(l.cpk_b, 1.6619438311375054, 1e-8, 0);
    assert_close(l.g_b, 1.5766612740554002, 1e-8, 0);
    assert_close(l.g_crit, 2.1266450871956257, 1e-9, 0);
    /* published: ASTM E178 Table 1, n = 8, upper 2.5 % point: 2.126 */
    assert_close(l.g_crit, 2.126, 0, 0.001);
    /* E = k B with k = 8.617333262e-5 eV/K (CODATA 2018), numpy mean of B */
    assert_close(l.activation_energy_ev, 0.34040728434881273, 1e-12, 0);
    assert_true(l.have_grubbs && l.outlier_r25 && !l.outlier_b);
    assert_int_equal(l.ioutlier_r25, 6);
    assert_int_equal(l.nout, 1); /* only P7 is beyond 1 % (1.612 %) */
    assert_int_equal(l.flags[6], BG_QA_OUT_OF_TOL | BG_QA_OUTLIER);
    assert_int_equal(l.flags[0], 0);
    assert_true(l.flagged);
    /* deviation from the nominal curve: 1/T' = 1/T0 + ln(R/R0)/B0 with R from the probe's
    ** curve, evaluated here (definition of the beta model) */
    /* round check temperatures over 0 .. 100 degC: the multiples of 20 degC (the largest of
    ** 1, 2, 5 x 10^n with at least five in the range) */
    assert_int_equal(l.nat, 6);
    for (size_t k = 0; k < l.nat; k++)
        assert_close(l.at_k[k], 273.15 + 20.0 * (double)k, 1e-12, 0);
    assert_true(l.nominal_is_beta);
    for (size_t i = 0; i < 8; i++)
        for (size_t k = 0; k < l.nat; k++) {
            double t = l.at_k[k], r = lot_r25[i] * exp(lot_b[i] * (1 / t - 1 / 298.15));
            double expect = 1e3 * (1 / (1 / 298.15 + log(r / 10000) / 3950) - t);
            assert_close(l.dev_mk[i * l.nat + k], expect, 1e-6, 1e-6);
        }
    bg_qa_lot_release(&l);
    bg_store_close(st);
}

/* The same lot judged against a nominal curve stored with the part (sh3, invented: A 1.02228e-3,
** B 2.53165e-4, C 2e-10) and a tolerance of 0.3 K over 0 .. 100 degC; a second lot whose B
** pair (25/110 degC) lies beyond its probes' range has its B marked as extrapolated. */
static void lot_against_the_part_curve(void **state)
{
    (void)state;
    bg_store *st = fresh("nominal.db");
    bg_qa_opts o = bg_qa_default_opts();
    bg_qa_lot l = BG_QA_LOT_INIT;
    bg_qa_part_set_result set;
    bg_part_spec spec;
    bg_lot lot2;
    memset(&spec, 0, sizeof spec);
    snprintf(spec.part, sizeof spec.part, "NTC");
    spec.have_model = 1;
    bg_model_parse("sh3", &spec.model, NULL);
    spec.model.coef[0] = 1.02228e-3, spec.model.coef[1] = 2.53165e-4;
    spec.model.coef[2] = 2.0e-10;
    spec.tol_k = 0.3, spec.tol_lo_k = 273.15, spec.tol_hi_k = 373.15;
    spec.limit_k = 0.05;
    add_lot(st, "L1", "NTC");
    for (int i = 0; i < 8; i++) {
        char serial[32];
        snprintf(serial, sizeof serial, "P%d", i + 1);
        assert_int_equal(bg_store_probe_add(st, serial, "L1", NULL, NULL, NULL), BG_OK);
        calibrate(st, serial, lot_r25[i], lot_b[i], "2026-11-24T08:00:00Z");
    }
    assert_int_equal(bg_qa_part_set(st, &spec, NULL, &set, NULL), BG_OK);
    assert_true(set.spec.id > 0);
    assert_int_equal(bg_qa_lot_stats(st, "L1", &o, &l, NULL), BG_OK);
    assert_false(l.nominal_is_beta);
    assert_int_equal(l.spec.id, set.spec.id);
    /* numpy 1.24 (Debian), computed 2026-12-02: R = r25 exp(b (1/T - 1/298.15)),
    ** L = ln R, dev = 1e3 (1/(A + B L + C L^3) - T) at T = 273.15 + 0, 20, .., 100 */
    static const double dev_p1[6] = { -47.06757349640611, -42.63440297819443, -38.0125790064767,
                                      -33.13126993765536, -27.93567846907763, -22.38274641257476 };
    static const double dev_p7[6] = { -339.4864533133273, -366.40749204292433,
                                      -394.49750928696403, -423.6856107331164,
                                      -453.91694611640787, -485.14841139797227 };
    assert_int_equal(l.nat, 6);
    for (size_t k = 0; k < 6; k++) {
        assert_close(l.dev_mk[0 * 6 + k], dev_p1[k], 1e-6, 1e-6);
        assert_close(l.dev_mk[6 * 6 + k], dev_p7[k], 1e-6, 1e-6);
        assert_close(l.band_lo_mk[k], -300.0, 1e-12, 0);
        assert_close(l.band_hi_mk[k], 300.0, 1e-12, 0);
    }
    /* numpy: max |dev| over numpy.linspace(273.15, 373.15, 41); only P7 is beyond 300 mK */
    assert_close(l.tol_dev_mk[0], 47.06757349640611, 1e-6, 1e-6);
    assert_close(l.tol_dev_mk[4], 167.0970218899015, 1e-6, 1e-6);
    assert_close(l.tol_dev_mk[6], 485.14841139797227, 1e-6, 1e-6);
    assert_int_equal(l.nband, 1);
    assert_true(l.flags[6] & BG_QA_OUT_OF_BAND);
    assert_false(l.flags[4] & BG_QA_OUT_OF_BAND);
    assert_int_equal(l.nb_extrap, 0); /* 25/85 inside 0 .. 100 degC */
    bg_qa_lot_release(&l);

    memset(&lot2, 0, sizeof lot2);
    snprintf(lot2.code, sizeof lot2.code, "L2");
    snprintf(lot2.part, sizeof lot2.part, "NTC");
    lot2.r25_ohm = 10000, lot2.beta_k = 3950, lot2.pair_t1_k = 298.15, lot2.pair_t2_k = 383.15;
    lot2.tol_r25 = 0.01, lot2.tol_beta = 0.005;
    assert_int_equal(bg_store_lot_add(st, &lot2, NULL, NULL), BG_OK);
    assert_int_equal(bg_store_probe_add(st, "Q1", "L2", NULL, NULL, NULL), BG_OK);
    calibrate(st, "Q1", 10000.0, 3950.0, "2026-11-24T08:00:00Z");
    assert_int_equal(bg_qa_lot_stats(st, "L2", &o, &l, NULL), BG_OK);
    assert_int_equal(l.nb_extrap, 1);
    assert_true(l.flags[0] & BG_QA_B_EXTRAPOLATED);
    assert_false(l.flagged); /* extrapolation is a note, not a flag */
    assert_int_equal(l.flags[0] & (BG_QA_OUT_OF_TOL | BG_QA_OUT_OF_BAND | BG_QA_OUTLIER), 0);
    bg_qa_lot_release(&l);

    /* the part's drift limit is the default, and says so; an option wins */
    bg_qa_probe p = BG_QA_PROBE_INIT;
    assert_int_equal(bg_qa_probe_drift(st, "P1", &o, &p, NULL), BG_OK);
    assert_close(p.limit_k, 0.05, 1e-15, 0);
    assert_int_equal(p.limit_from, BG_QA_FROM_PART);
    bg_qa_probe_release(&p);
    o.limit_k = 0.02;
    assert_int_equal(bg_qa_probe_drift(st, "P1", &o, &p, NULL), BG_OK);
    assert_int_equal(p.limit_from, BG_QA_FROM_OPTION);
    bg_qa_probe_release(&p);

    /* a curve whose resistance rises with temperature is refused, and nothing is stored */
    spec.model.coef[1] = -2.53165e-4;
    bg_error err = BG_ERROR_INIT;
    assert_int_equal(bg_qa_part_set(st, &spec, NULL, &set, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "does not fall"));
    assert_int_equal(bg_store_part_spec_get(st, "NTC", &spec, NULL), BG_OK);
    assert_close(spec.model.coef[1], 2.53165e-4, 0, 0);
    bg_store_close(st);
}

/* Three lots of four probes; the third drifts up in R25 and B. */
static void part_charts_against_numpy(void **state)
{
    (void)state;
    static const double r25[3][4] = { { 10012.0, 9991.0, 10005.0, 9998.0 },
                                      { 10020.0, 10004.0, 9987.0, 10011.0 },
                                      { 10058.0, 10071.0, 10049.0, 10066.0 } };
    static const double b[3][4] = { { 3951.0, 3947.5, 3949.0, 3952.5 },
                                    { 3946.0, 3950.5, 3953.0, 3948.0 },
                                    { 3957.0, 3962.0, 3955.5, 3960.0 } };
    bg_store *st = fresh("part.db");
    bg_qa_opts o = bg_qa_default_opts();
    bg_qa_part p = BG_QA_PART_INIT;
    for (int k = 0; k < 3; k++) {
        char code[32];
        snprintf(code, sizeof code, "L%d", k + 1);
        add_lot(st, code, "NTC");
        for (int i = 0; i < 4; i++) {
            char serial[32];
            snprintf(serial, sizeof serial, "P%d-%d", k + 1, i + 1);
            assert_int_equal(bg_store_probe_add(st, serial, code, NULL, NULL, NULL), BG_OK);
            calibrate(st, serial, r25[k][i], b[k][i], "2026-11-24T08:00:00Z");
        }
    }
    o.baseline = 2;
    assert_int_equal(bg_qa_part_charts(st, "NTC", &o, &p, NULL), BG_OK);
    assert_int_equal(p.nlots, 3);
    assert_int_equal(p.baseline, 2);
    assert_int_equal(p.baseline_from, BG_QA_FROM_OPTION);
    /* fewer than 20 baseline lots: provisional (Montgomery's 20 to 25 subgroups, from memory) */
    assert_true(p.provisional);
    assert_int_equal(p.subgroup, 4);
    /* numpy/scipy (computed 2026-12-02): lot means and std(ddof=1) of the R25 deviation (%)
    ** and B; c4(4) = sqrt(2/3) gamma(2)/gamma(1.5) (scipy.special.gamma), A3 = 3/(c4 sqrt 4),
    ** B3 = max(0, 1 - 3 sqrt(1 - c4^2)/c4), B4 = 1 + 3 sqrt(1 - c4^2)/c4; limits from the
    ** first two lots.  Published check of the constants: ASTM E2587 table, n = 4: A3 1.628,
    ** B3 0, B4 2.266. */
    const bg_chart *c = p.chart;
    assert_close(c[BG_QA_CHART_XBAR_R25].center, 0.035000000000000003, 1e-8, 1e-10);
    assert_close(c[BG_QA_CHART_XBAR_R25].lcl, -0.15224160287974284, 1e-8, 0);
    assert_close(c[BG_QA_CHART_XBAR_R25].ucl, 0.22224160287974284, 1e-8, 0);
    assert_close(c[BG_QA_CHART_S_R25].center, 0.11500600592459789, 1e-8, 0);
    assert_close(c[BG_QA_CHART_S_R25].lcl, 0.0, 0, 0);
    assert_close(c[BG_QA_CHART_S_R25].ucl, 0.26060902377568318, 1e-8, 0);
    assert_close(c[BG_QA_CHART_XBAR_B].center, 3949.6875, 1e-12, 0);
    assert_close(c[BG_QA_CHART_XBAR_B].lcl, 3945.4247697003461, 1e-12, 0);
    assert_close(c[BG_QA_CHART_XBAR_B].ucl, 3953.9502302996539, 1e-12, 0);
    assert_close(c[BG_QA_CHART_S_B].center, 2.6182193409859251, 1e-8, 0);
    assert_close(c[BG_QA_CHART_S_B].ucl, 5.933008289430691, 1e-8, 0);
    assert_close((c[BG_QA_CHART_S_B].ucl / c[BG_QA_CHART_S_B].center), 2.266, 0, 0.0005);
    /* the third lot's mean R25 deviation (0.610 %) and mean B (3958.6 K) are beyond 3 sigma */
    assert_close(p.lots[2].r25_mean_pct, 0.61, 1e-8, 0);
    assert_true(p.lots[2].rules[0] & BG_RULE_3SIGMA);
    assert_true(p.lots[2].rules[2] & BG_RULE_3SIGMA);
    assert_int_equal(p.lots[0].rules[0] | p.lots[1].rules[0], 0);
    assert_true(p.flagged);
    assert_false(p.have_asfound); /* no probe was calibrated twice */
    bg_qa_part_release(&p);
    bg_store_close(st);
}

/* A probe calibrated 100 times, once a month: every calibration is kept, oldest first, and
** the newest comparisons are made (the history once stopped at the oldest 64). */
static void probe_history_keeps_all_100(void **state)
{
    (void)state;
    bg_store *st = fresh("probe.db");
    bg_qa_opts o = bg_qa_default_opts();
    bg_qa_probe p = BG_QA_PROBE_INIT;
    add_lot(st, "L1", "NTC");
    assert_int_equal(bg_store_probe_add(st, "P1", "L1", NULL, NULL, NULL), BG_OK);
    assert_int_equal(bg_store_begin(st, NULL), BG_OK);
    for (int i = 0; i < 100; i++) {
        char when[64];
        snprintf(when, sizeof when, "%04d-%02d-15T08:00:00Z", 2020 + i / 12, i % 12 + 1);
        calibrate(st, "P1", 10000.0 * (1 + 1e-5 * i), 3950.0, when);
    }
    assert_int_equal(bg_store_commit(st, NULL), BG_OK);
    assert_int_equal(bg_qa_probe_drift(st, "P1", &o, &p, NULL), BG_OK);
    assert_int_equal(p.n, 100);
    assert_int_equal(p.nprev, 99);
    assert_int_equal(p.nfirst, 98);
    assert_string_equal(p.started_at[99], "2028-04-15T08:00:00Z");
    const bg_qa_compare *last = &p.since_first[97];
    assert_int_equal(last->from, 0);
    assert_int_equal(last->to, 99);
    /* R25 grew by a factor (1 + 99e-5) over the history: d_r25 = 0.099 % (definition) */
    assert_close(last->d.d_r25_pct, 0.099, 1e-7, 0);
    assert_close(p.since_previous[98].d.d_r25_pct, 100 * (1e-5 / (1 + 98e-5)), 1e-6, 0);
    bg_qa_probe_release(&p);
    bg_store_close(st);
}

/* A part of 300 lots of two probes each: every lot is charted (a part once stopped at 256). */
static void part_of_300_lots(void **state)
{
    (void)state;
    bg_store *st = fresh("lots.db");
    bg_qa_opts o = bg_qa_default_opts();
    bg_qa_part p = BG_QA_PART_INIT;
    assert_int_equal(bg_store_begin(st, NULL), BG_OK);
    for (int k = 0; k < 300; k++) {
        char code[32], serial[32];
        snprintf(code, sizeof code, "L%03d", k);
        add_lot(st, code, "NTC");
        for (int i = 0; i < 2; i++) {
            snprintf(serial, sizeof serial, "P%03d-%d", k, i);
            assert_int_equal(bg_store_probe_add(st, serial, code, NULL, NULL, NULL), BG_OK);
            calibrate(st, serial, 10000.0 + 3.7 * i + 0.01 * k, 3950.0 + 1.3 * i,
                      "2026-11-24T08:00:00Z");
        }
    }
    assert_int_equal(bg_store_commit(st, NULL), BG_OK);
    assert_int_equal(bg_qa_part_charts(st, "NTC", &o, &p, NULL), BG_OK);
    assert_int_equal(p.nlots, 300);
    assert_int_equal(p.nskipped, 0);
    assert_int_equal(p.baseline, 300);
    assert_string_equal(p.lots[299].code, "L299");
    /* lot 299: R25 10002.99 and 10006.69 ohm: mean deviation 0.0484 % (arithmetic) */
    assert_close(p.lots[299].r25_mean_pct, 0.0484, 1e-7, 0);
    bg_qa_part_release(&p);
    bg_store_close(st);
}

static int count_stmt(unsigned type, void *ctx, void *p, void *x)
{
    (void)type, (void)p, (void)x;
    ++*(long *)ctx;
    return 0;
}

/* The statements bg_qa_lot_summarize runs for lot 'code' (counted, not timed). */
static long summary_statements(bg_store *st, const char *code, const bg_qa_opts *o,
                               bg_qa_lot_summary *s)
{
    long n = 0;
    sqlite3_trace_v2(st->conn->db, SQLITE_TRACE_PROFILE, count_stmt, &n);
    assert_int_equal(bg_qa_lot_summarize(st, code, o, s, NULL), BG_OK);
    sqlite3_trace_v2(st->conn->db, 0, NULL, NULL);
    return n;
}

/* Probe 'p' of a summary against bg_qa_probe_drift of the same probe (since the previous
** calibration only, as the summary compares). */
static void same_as_probe_drift(bg_store *st, const bg_qa_probe *p, const bg_qa_opts *qo)
{
    bg_qa_opts o = *qo;
    bg_qa_probe q = BG_QA_PROBE_INIT;
    o.since_first = 0;
    assert_int_equal(bg_qa_probe_drift(st, p->serial, &o, &q, NULL), BG_OK);
    assert_int_equal(p->lot.id, q.lot.id);
    assert_string_equal(p->lot.code, q.lot.code);
    assert_int_equal(p->lot.nprobes, q.lot.nprobes);
    assert_true(p->limit_k == q.limit_k && p->rate_k == q.rate_k);
    assert_int_equal(p->limit_from, q.limit_from);
    assert_int_equal(p->rate_from, q.rate_from);
    assert_int_equal(p->have_history, q.have_history);
    assert_int_equal(p->n, q.n);
    assert_int_equal(p->unfitted, q.unfitted);
    for (size_t i = 0; i < p->n; i++) {
        assert_memory_equal(&p->fits[i], &q.fits[i], sizeof p->fits[i]);
        assert_string_equal(p->started_at[i], q.started_at[i]);
    }
    assert_int_equal(p->nprev, q.nprev);
    if (p->nprev)
        assert_memory_equal(p->since_previous, q.since_previous,
                            p->nprev * sizeof p->since_previous[0]);
    assert_int_equal(p->nfirst, 0);
    assert_int_equal(q.nfirst, 0);
    assert_int_equal(p->flagged, q.flagged);
    bg_qa_probe_release(&q);
}

/* What bg_qa_lot_summarize_each handed out, against the summary that keeps every probe. */
struct streamed {
    const bg_qa_lot_summary *kept;
    size_t ready, n;
};

static void streamed_ready(const bg_qa_lot_summary *s, void *ctx)
{
    struct streamed *t = ctx;
    assert_int_equal(t->n, 0); /* before any probe, with the statistics in place */
    assert_int_equal(s->stats.n, t->kept->stats.n);
    t->ready++;
}

static void streamed_probe(const bg_qa_lot_summary *s, const bg_qa_probe *p, void *ctx)
{
    struct streamed *t = ctx;
    assert_null(s->probes);
    assert_true(t->n < t->kept->nprobes);
    const bg_qa_probe *k = &t->kept->probes[t->n++];
    assert_string_equal(p->serial, k->serial);
    assert_int_equal(p->n, k->n);
    assert_int_equal(p->unfitted, k->unfitted);
    for (size_t i = 0; i < p->n; i++)
        assert_memory_equal(&p->fits[i], &k->fits[i], sizeof p->fits[i]);
    assert_int_equal(p->nprev, k->nprev);
    if (p->nprev)
        assert_memory_equal(p->since_previous, k->since_previous,
                            p->nprev * sizeof p->since_previous[0]);
    assert_true(p->limit_k == k->limit_k && p->rate_k == k->rate_k);
    assert_int_equal(p->flagged, k->flagged);
}

/* The lot streamed (bg_qa_lot_summarize_each) gives the same summary as the one that keeps its
** probes: each probe in the same order with the same comparisons, the same limits, flags and
** control charts; and the lot report written while it streams is the same page, byte for
** byte, as the one written from the kept summary. */
static void same_when_streamed(bg_store *st, const char *code, const bg_qa_opts *o,
                               const bg_qa_lot_summary *kept)
{
    bg_qa_lot_summary s = BG_QA_LOT_SUMMARY_INIT;
    struct streamed t = { kept, 0, 0 };
    bg_qa_lot_sink sink = { streamed_ready, streamed_probe, &t };
    assert_int_equal(bg_qa_lot_summarize_each(st, code, o, &sink, &s, NULL), BG_OK);
    assert_int_equal(t.ready, 1);
    assert_int_equal(t.n, kept->nprobes);
    assert_int_equal(s.nprobes, kept->nprobes);
    assert_true(s.limit_k == kept->limit_k && s.rate_k == kept->rate_k);
    assert_int_equal(s.flagged, kept->flagged);
    assert_int_equal(s.part_rc, kept->part_rc);
    assert_int_equal(s.part.nlots, kept->part.nlots);
    for (size_t i = 0; i < s.part.nlots; i++)
        assert_memory_equal(&s.part.lots[i], &kept->part.lots[i], sizeof s.part.lots[i]);
    bg_qa_lot_summary_release(&s);

    bg_lot_report a, b;
    memset(&a, 0, sizeof a);
    assert_int_equal(bg_store_lot_get(st, code, &a.lot, NULL), BG_OK);
    b = a;
    a.summary = kept;
    b.st = st, b.qa = o;
    bg_report_head h = { 3, "2026-03-02T10:00:00Z", "Invented lab", NULL, 0, NULL, NULL };
    char *pa = NULL, *pb = NULL;
    size_t la = 0, lb = 0;
    const bg_report_kind *kind = bg_report_kind_find("lot");
    assert_int_equal(bg_report_render(kind, &a, &h, &pa, &la, NULL), BG_OK);
    assert_int_equal(bg_report_render(kind, &b, &h, &pb, &lb, NULL), BG_OK);
    assert_int_equal(la, lb);
    assert_memory_equal(pa, pb, la);
    assert_non_null(strstr(pa, "id=\"drift\""));
    free(pa);
    free(pb);
}

/* The lot report's content: each probe's drift read for the whole lot in one query gives what
** the per-probe reads give (several probes, three calibrations each, one calibrated once, one
** never), with and without a baseline date and a limit; the number of statements run does not
** grow with the number of probes. */
static void lot_summary_matches_per_probe_drift(void **state)
{
    (void)state;
    bg_store *st = fresh("summary.db");
    static const char *const when[3] = { "2025-01-15T08:00:00Z", "2025-07-15T08:00:00Z",
                                         "2026-01-15T08:00:00Z" };
    long nstmt[2] = { 0, 0 };
    add_lot(st, "L1", "NTC");
    add_lot(st, "L2", "NTC");
    assert_int_equal(bg_store_probe_add(st, "X1", "L2", NULL, NULL, NULL), BG_OK);
    calibrate(st, "X1", 10003.1, 3951.0, when[0]);
    calibrate(st, "X1", 10004.2, 3951.0, when[1]);
    for (int k = 0; k < 2; k++) {
        for (int i = 4 * k; i < 4 * k + 4; i++) {
            char serial[32];
            snprintf(serial, sizeof serial, "P%d", 7 - i); /* added against serial order */
            assert_int_equal(bg_store_probe_add(st, serial, "L1", NULL, NULL, NULL), BG_OK);
            int ncal = i == 1 ? 1 : i == 2 ? 0 : 3;
            for (int c = 0; c < ncal; c++) /* R25 creeps up 0.03 % a calibration (invented) */
                calibrate(st, serial, lot_r25[i] * (1 + 3e-4 * c), lot_b[i], when[c]);
        }
        for (int v = 0; v < 3; v++) {
            bg_qa_opts o = bg_qa_default_opts();
            bg_qa_lot_summary s = BG_QA_LOT_SUMMARY_INIT;
            if (v == 1)
                o.since = "2025-06-01T00:00:00Z";
            if (v == 2)
                o.limit_k = 0.01;
            long n = summary_statements(st, "L1", &o, &s);
            if (v == 0)
                nstmt[k] = n;
            assert_int_equal(s.nprobes, 4 * (size_t)k + 4);
            for (size_t i = 1; i < s.nprobes; i++) /* by serial */
                assert_true(strcmp(s.probes[i - 1].serial, s.probes[i].serial) < 0);
            for (size_t i = 0; i < s.nprobes; i++)
                same_as_probe_drift(st, &s.probes[i], &o);
            same_when_streamed(st, "L1", &o, &s);
            if (k == 1 && v == 0) {
                /* P7 (lot_r25[0]): R25 ratio 1.0006 / 1.0003 between its last two fits:
                ** d_r25 = 100 (1.0006 / 1.0003 - 1) % (definition) */
                const bg_qa_probe *p7 = &s.probes[s.nprobes - 1];
                assert_string_equal(p7->serial, "P7");
                assert_int_equal(p7->n, 3);
                assert_close(p7->since_previous[1].d.d_r25_pct, 100 * (1.0006 / 1.0003 - 1),
                             1e-6, 0);
                assert_int_equal(s.probes[s.nprobes - 3].n, 0);  /* P5: never calibrated */
                assert_int_equal(s.probes[s.nprobes - 2].n, 1);  /* P6: once */
            }
            bg_qa_lot_summary_release(&s);
        }
    }
    assert_int_equal(nstmt[1], nstmt[0]);
    bg_store_close(st);
}

/* The sensor kinds' names both ways, and the default drift limit of each kind's part. */
static void sensor_kinds_and_limits(void **state)
{
    (void)state;
    bg_part_spec sp;
    bg_error err = BG_ERROR_INIT;
    int k;
    for (int i = 0; i < BG_PART_NSENSOR; i++) {
        assert_int_equal(bg_part_sensor_parse(bg_part_sensor_name(i), &k, NULL), BG_OK);
        assert_int_equal(k, i);
    }
    assert_int_equal(bg_part_sensor_parse("junctoin", &k, &err), BG_EINVAL);
    assert_non_null(strstr(err.msg, "did you mean 'junction'"));
    memset(&sp, 0, sizeof sp);
    assert_true(isnan(bg_qa_spec_limit_k(&sp))); /* an NTC: the lot's R25 tolerance applies */
    sp.sensor = BG_PART_JUNCTION, sp.nom_x = 0.6, sp.tol_x = 5e-3, sp.nom_s = -2.2e-3;
    /* 5 mV over 2.2 mV/K = 2.2727... K (by hand) */
    assert_true(fabs(bg_qa_spec_limit_k(&sp) - 5.0 / 2.2) < 1e-12);
    sp.sensor = BG_PART_PTC, sp.nom_x = 1000.0, sp.tol_x = 0.01, sp.nom_s = 7.9e-3;
    assert_true(fabs(bg_qa_spec_limit_k(&sp) - 0.01 / 7.9e-3) < 1e-12);
    memset(&sp, 0, sizeof sp);
    sp.sensor = BG_PART_PRT, sp.nom_x = 100.0;
    strcpy(sp.iec_class, "A"); /* IEC 60751 class A at 0 degC: +-0.15 K */
    assert_true(fabs(bg_qa_spec_limit_k(&sp) - 0.15) < 1e-12);
    strcpy(sp.iec_class, "B"); /* class B at 0 degC: +-0.3 K */
    assert_true(fabs(bg_qa_spec_limit_k(&sp) - 0.3) < 1e-12);
}

int main(void)
{
    gsl_set_error_handler(test_gsl_handler);
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(lot_statistics_against_numpy),
        cmocka_unit_test(sensor_kinds_and_limits),
        cmocka_unit_test(lot_against_the_part_curve),
        cmocka_unit_test(part_charts_against_numpy),
        cmocka_unit_test(probe_history_keeps_all_100),
        cmocka_unit_test(part_of_300_lots),
        cmocka_unit_test(lot_summary_matches_per_probe_drift),
    };
    return cmocka_run_group_tests_name("qa", tests, setup, teardown);
}
