/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The report module: the table of kinds, and each kind generated from a result struct built
** here, its numbers read back from the HTML bytes (the data-v attribute every number carries)
** and compared with values computed independently (scipy, or the closed form named beside
** each); hostile text appears only escaped.  The probes and values are invented. */
#include <float.h>

#include "testutil.h"
#include "../src/lib/report/html_int.h"
#include "../src/lib/report/report_int.h"

static const char *hostile = "<img src=x onerror=1>";
static const char *hostile_esc = "&lt;img src=x onerror=1&gt;";

/* The full value of the first number after 'from' whose attribute text starts with 'key'
** (e.g. "class=\"coverage\" data-v=\""). */
static double value_after(const char *html, const char *from, const char *key)
{
    const char *p = from ? strstr(html, from) : html;
    assert_non_null(p);
    p = strstr(p, key);
    assert_non_null(p);
    return strtod(p + strlen(key), NULL);
}

static int count(const char *html, const char *s)
{
    int n = 0;
    for (const char *p = html; (p = strstr(p, s)); p += strlen(s))
        n++;
    return n;
}

static void kinds_table(void **state)
{
    (void)state;
    static const char *names[] = { "calibration", "lot", "table" };
    static const char *prefixes[] = { "BG-CAL", "BG-LOT", "table" };
    int seen[3] = { 0, 0, 0 };
    size_t n = 0;
    for (const bg_report_kind *k; (k = bg_report_kind_at(n)); n++) {
        int found = 0;
        for (int i = 0; i < 3; i++)
            if (strcmp(k->name, names[i]) == 0) {
                seen[i]++, found = 1;
                assert_string_equal(k->id_prefix, prefixes[i]);
                assert_ptr_equal(bg_report_kind_find(names[i]), k);
                assert_non_null(k->generate);
                assert_non_null(k->title);
            }
        assert_true(found);
    }
    assert_int_equal(n, 3);
    for (int i = 0; i < 3; i++)
        assert_int_equal(seen[i], 1);
    assert_null(bg_report_kind_find("nope"));
    assert_null(bg_report_kind_find(NULL));
    assert_string_equal(bg_report_kind_find("calibration")->artifact_kind, "report-run");
    assert_string_equal(bg_report_kind_find("lot")->artifact_kind, "report-lot");
    assert_null(bg_report_kind_find("table")->artifact_kind); /* not stored */
}

/* An invented probe: beta model R0 10 kohm at 25 degC, B 3950 K, u(R0) 5 ohm, u(B) 10 K;
** readings at 0 .. 50 degC whose temperatures sit 'delta' mK off the curve. */
static const double r0 = 10000.0, beta = 3950.0, t0 = 298.15;
static const double delta_mk[9] = { 1.5, -2.0, 0.5, 3.0, -1.0, 0.0, 2.5, -3.5, 1.0 };

static void build_calib(bg_calib_report *r, size_t dof)
{
    double c[2] = { r0, beta };
    memset(r, 0, sizeof *r);
    r->run.id = 12;
    snprintf(r->run.serial, sizeof r->run.serial, "%s", hostile);
    snprintf(r->run.excitation, sizeof r->run.excitation, "10 uA");
    snprintf(r->run.started_at, sizeof r->run.started_at, "2026-03-01T09:00:00Z");
    snprintf(r->probe.serial, sizeof r->probe.serial, "%s", hostile);
    snprintf(r->lot.code, sizeof r->lot.code, "L-INVENTED");
    r->lot.r25_ohm = r0, r->lot.beta_k = beta, r->lot.pair_t1_k = 298.15;
    r->lot.pair_t2_k = 358.15;
    bg_model_parse("beta", &r->fit.model, NULL);
    bg_model_set_coef(&r->fit.model, c, 2, NULL);
    r->fit.id = 34, r->fit.run_id = 12, r->fit.npar = 2, r->fit.n = 9, r->fit.dof = dof;
    r->fit.has_cov = 1;
    r->fit.cov[0] = 25.0, r->fit.cov[3] = 100.0; /* u(R0) = 5 ohm, u(B) = 10 K */
    r->fit.t_min_k = 273.15, r->fit.t_max_k = 323.15;
    snprintf(r->fit.program_version, sizeof r->fit.program_version, "0.1.0");
    r->nreadings = 9;
    r->readings = calloc(9, sizeof *r->readings);
    assert_non_null(r->readings);
    for (size_t i = 0; i < 9; i++) {
        bg_reading_row *g = &r->readings[i];
        double t = 273.15 + 50.0 * (double)i / 8.0;
        g->id = 100 + (long long)i, g->line = i + 2;
        g->r_ohm = r0 * exp(beta * (1.0 / t - 1.0 / t0)); /* the beta equation (derived) */
        g->t_k = t + 1e-3 * delta_mk[i];
    }
    r->readings[4].excluded = 1;
    snprintf(r->readings[4].excl_reason, sizeof r->readings[4].excl_reason, "%s", hostile);
    r->dissipation_w_per_k = 1.5e-3;
}

static char *render(const char *kind, const void *result, const bg_report_head *h)
{
    char *html = NULL;
    size_t len = 0;
    bg_error err = BG_ERROR_INIT;
    int rc = bg_report_render(bg_report_kind_find(kind), result, h, &html, &len, &err);
    if (rc != BG_OK)
        print_error("%s\n", err.msg);
    assert_int_equal(rc, BG_OK);
    char *s = malloc(len + 1); /* as a C string for strstr */
    assert_non_null(s);
    memcpy(s, html, len);
    s[len] = '\0';
    free(html);
    return s;
}

static void calibration_report(void **state)
{
    (void)state;
    bg_calib_report r;
    bg_error err = BG_ERROR_INIT;
    build_calib(&r, 7);
    assert_int_equal(bg_calib_report_compute(&r, &err), BG_OK);
    bg_report_head h = { 42, "2026-03-02T10:00:00Z", "Invented lab", NULL, 0, NULL, NULL };
    char *html = render("calibration", &r, &h);

    assert_non_null(strstr(html, "BG-CAL-000042"));
    /* the hostile serial and exclusion reason only escaped */
    assert_null(strstr(html, "<img"));
    assert_true(count(html, hostile_esc) >= 2);
    /* U = k u at 95.45 % with k from Student's t for 7 dof, as 'fit' states it:
    ** scipy.stats.t.ppf(0.977250, 7) = 2.4288090813825196 (scipy 1.10.1, Debian, run
    ** 2026-12-02) */
    assert_close(value_after(html, NULL, "class=\"coverage\" data-v=\""), 95.45, 1e-12, 0.0);
    assert_close(value_after(html, NULL, "class=\"k\" data-v=\""), 2.4288090813825196, 1e-8,
                 0.0);
    /* each residual: the offset put into the reading (derived: readings built on the curve) */
    for (size_t i = 0; i < 9; i++) {
        char from[64];
        snprintf(from, sizeof from, "data-id=\"%lld\"", 100 + (long long)i);
        assert_close(value_after(html, from, "class=\"n resid\" data-v=\""), delta_mk[i], 1e-6,
                     1e-7);
    }
    /* U = k u at 25 degC in the R-T table: at T0 the beta model's gradient of 1/T is
    ** (-1/(B R0), 0), so u = T0^2 u(R0) / (B R0) (derived, GUM 5.1.2) */
    double u25 = t0 * t0 * 5.0 / (beta * r0);
    assert_close(value_after(html, "<td class=\"n t\" data-v=\"25\">", "class=\"n U\" data-v=\""),
                 2.4288090813825196e3 * u25, 1e-8, 0.0);
    assert_close(value_after(html, "<td class=\"n t\" data-v=\"25\">", "class=\"n r\" data-v=\""),
                 r0, 1e-12, 0.0);
    /* alpha = -B / T^2 for the beta model (derived), in %/K */
    assert_close(value_after(html, "<td class=\"n t\" data-v=\"25\">",
                             "class=\"n alpha\" data-v=\""), -100.0 * beta / (t0 * t0), 1e-9, 0.0);
    /* self-heating: (10 uA)^2 times the largest resistance (at 0 degC), over 1.5 mW/K */
    double rmax = r0 * exp(beta * (1.0 / 273.15 - 1.0 / t0));
    assert_close(value_after(html, NULL, "class=\"power-uw\" data-v=\""), 1e6 * 1e-10 * rmax, 1e-12,
                 0.0);
    assert_close(value_after(html, NULL, "class=\"selfheat-mk\" data-v=\""),
                 1e3 * 1e-10 * rmax / 1.5e-3, 1e-12, 0.0);
    /* the R-T table's round step: 50 K of span in steps of 5 degC, 0 .. 50 (11 rows) */
    assert_int_equal(r.nrt, 11);
    assert_int_equal(count(html, "<tr class=\"rt\">"), 11);
    assert_int_equal(count(html, "<tr class=\"reading"), 9);
    assert_int_equal(count(html, "<tr class=\"reading excluded\""), 1);
    /* units as a reader expects them (SI Brochure, 9th ed.): no "degC" or "ohm" on the page */
    assert_null(strstr(html, "degC"));
    assert_null(strstr(html, " ohm"));
    assert_non_null(strstr(html, "T ref / \xc2\xb0" "C"));
    assert_non_null(strstr(html, "R / \xce\xa9"));
    /* the coefficients in one scientific format, 10 significant digits: R0 = 1e4, B = 3950 */
    assert_non_null(strstr(html, "data-v=\"10000\">1.000000000e+04</td>"));
    assert_non_null(strstr(html, "data-v=\"3950\">3.950000000e+03</td>"));
    /* the grey band's caption says what it is and what it is not */
    assert_non_null(strstr(html, "the uncertainty of the fitted curve, not the scatter of the "
                                 "readings"));
    /* every printed page: the report's number and "page n of m" in the margin boxes */
    assert_non_null(strstr(html, "@top-right { content: \"BG-CAL-000042\";"));
    assert_non_null(strstr(html, "counter(page) \" of \" counter(pages)"));
    /* the last section, the cautions and the closing note in one block kept on one page */
    const char *closing = strstr(html, "<div class=\"closing\">");
    assert_non_null(closing);
    assert_true(closing < strstr(html, "id=\"rt\"") && strstr(closing, "id=\"cautions\"") &&
                strstr(closing, "id=\"closing-note\""));
    free(html);

    /* since schema 4 the measuring current is a number in A: the same estimate from it */
    r.run.excitation[0] = '\0';
    r.run.measuring_current_a = 1e-5;
    assert_int_equal(bg_calib_report_compute(&r, &err), BG_OK);
    assert_true(r.have_current);
    assert_close(r.power_w, 1e-10 * rmax, 1e-12, 0.0);
    html = render("calibration", &r, &h);
    assert_non_null(strstr(html, "<th>Measuring current</th><td>10 \xC2\xB5" "A</td>"));
    free(html);

    /* a validity range that does not start or end on the round step: the table still runs
    ** end to end, its first and last rows the range's ends (R there from the beta equation) */
    r.fit.t_min_k = 273.15 - 20.02, r.fit.t_max_k = 273.15 + 60.01;
    assert_int_equal(bg_calib_report_compute(&r, &err), BG_OK);
    assert_true(r.nrt >= 3);
    assert_close(r.rt[0].t_c, -20.02, 0.0, 1e-12);
    assert_close(r.rt[r.nrt - 1].t_c, 60.01, 0.0, 1e-12);
    assert_close(r.rt[0].r_ohm, r0 * exp(beta * (1.0 / r.fit.t_min_k - 1.0 / t0)), 1e-12, 0.0);
    assert_close(r.rt[r.nrt - 1].r_ohm, r0 * exp(beta * (1.0 / r.fit.t_max_k - 1.0 / t0)), 1e-12,
                 0.0);
    for (size_t i = 1; i + 1 < r.nrt; i++) { /* between: multiples of the step, increasing */
        assert_close(fmod(r.rt[i].t_c, r.rt_step_c), 0.0, 0.0, 1e-9);
        assert_true(r.rt[i].t_c > r.rt[i - 1].t_c);
    }
    assert_true(r.rt[r.nrt - 1].t_c > r.rt[r.nrt - 2].t_c);
    r.fit.t_min_k = 273.15, r.fit.t_max_k = 323.15;

    /* 2 degrees of freedom: k = t_0.977250(2) = 4.5265507603649375 (scipy.stats.t.ppf, scipy
    ** 1.10.1, run 2026-12-02); with k = 2 asked for, 2 F_t(2; 2) - 1 = 2 / sqrt(6) (closed form
    ** of Student's t with 2 dof: F(t) = 1/2 + t / (2 sqrt(2 + t^2))), also scipy.stats.t.cdf:
    ** 0.816496580927726 */
    r.fit.dof = 2;
    assert_int_equal(bg_calib_report_compute(&r, &err), BG_OK);
    assert_close(r.cover.k, 4.5265507603649375, 1e-8, 0.0);
    assert_close(r.coverage, 0.9545, 1e-12, 0.0);
    r.rule = bg_coverage_default();
    r.rule.k_fixed = 2.0;
    assert_int_equal(bg_calib_report_compute(&r, &err), BG_OK);
    assert_close(r.coverage, 2.0 / sqrt(6.0), 1e-12, 0.0);
    bg_calib_report_release(&r);
    assert_null(r.readings);
}

/* Text that bypassed the door (an old record, or one edited outside the program): control
** characters, a bidirectional override and invalid UTF-8 are shown as U+FFFD, never raw. */
static void unclean_text_never_raw(void **state)
{
    (void)state;
    bg_calib_report r;
    bg_error err = BG_ERROR_INIT;
    build_calib(&r, 7);
    snprintf(r.run.serial, sizeof r.run.serial, "S\x1b]0;x\x07\xff\xe2\x80\xae" "9<");
    snprintf(r.probe.serial, sizeof r.probe.serial, "%s", r.run.serial);
    snprintf(r.readings[4].excl_reason, sizeof r.readings[4].excl_reason, "a\x1b[2Jb\xc0\xaf");
    assert_int_equal(bg_calib_report_compute(&r, &err), BG_OK);
    bg_report_head h = { 42, "2026-03-02T10:00:00Z", "Lab\x9b", NULL, 0, NULL, NULL };
    char *html = render("calibration", &r, &h);
    assert_null(strchr(html, 0x1b));
    assert_null(strchr(html, 0x07));
    assert_null(strchr(html, (char)0xff));
    assert_null(strstr(html, "\xe2\x80\xae"));
    assert_non_null(strstr(html, "S\xef\xbf\xbd]0;x\xef\xbf\xbd\xef\xbf\xbd\xef\xbf\xbd" "9&lt;"));
    assert_non_null(strstr(html, "a\xef\xbf\xbd[2Jb\xef\xbf\xbd\xef\xbf\xbd"));
    assert_non_null(strstr(html, "Lab\xef\xbf\xbd"));
    free(html);
    bg_calib_report_release(&r);
}

static void calibration_report_without_covariance(void **state)
{
    (void)state;
    bg_calib_report r;
    bg_error err = BG_ERROR_INIT;
    build_calib(&r, 0);
    r.fit.has_cov = 0;
    r.dissipation_w_per_k = 0.0;
    snprintf(r.run.excitation, sizeof r.run.excitation, "2 V");
    assert_int_equal(bg_calib_report_compute(&r, &err), BG_OK);
    assert_true(isnan(r.u_max_k));
    assert_true(isnan(r.coverage));
    bg_report_head h = { 1, "2026-03-02T10:00:00Z", NULL, NULL, 0, NULL, NULL };
    char *html = render("calibration", &r, &h);
    assert_non_null(strstr(html, "not available: the fit has no degrees of freedom"));
    assert_non_null(strstr(html, "not estimated (needs the measuring current"));
    assert_null(strstr(html, "class=\"coverage\""));
    free(html);
    /* a result that was never computed is refused, not rendered with garbage */
    bg_calib_report raw;
    build_calib(&raw, 7);
    char *bytes = NULL;
    size_t len = 0;
    assert_int_equal(bg_report_render(bg_report_kind_find("calibration"), &raw, &h, &bytes, &len,
                                      &err), BG_EINVAL);
    assert_null(bytes);
    bg_calib_report_release(&raw);
    bg_calib_report_release(&r);
}

/* A reading at the largest double (as a damaged record could hold): the residual and the
** chart's axis overflow to infinity, and the page still ends, with a bounded number of axis
** ticks (found by the writers fuzz target: the tick loops never ended and filled memory). */
static void calibration_report_huge_reading(void **state)
{
    (void)state;
    bg_calib_report r;
    bg_error err = BG_ERROR_INIT;
    build_calib(&r, 7);
    r.readings[8].t_k = DBL_MAX;
    assert_int_equal(bg_calib_report_compute(&r, &err), BG_OK);
    bg_report_head h = { 1, "2026-03-02T10:00:00Z", NULL, NULL, 0, NULL, NULL };
    char *html = render("calibration", &r, &h);
    assert_true(count(html, "stroke=\"#ccc\"") <= 2 * 64 * 2); /* two charts, two axes */
    assert_non_null(strstr(html, "</html>"));
    free(html);
    bg_calib_report_release(&r);
}

/* A fit whose calibrated range is absurd (as a damaged record could hold): the R-T table
** keeps at most 24 rows, and a range that is not finite is refused (found by the writers fuzz
** target: the table's loop never ended). */
static void calibration_report_absurd_range(void **state)
{
    (void)state;
    /* the second range is one step of the doubles at 1e20 K (16384 K): its round step of
    ** 5000 K is lost in rounding */
    const double lo[] = { 273.15, 1e20, 273.15 }, hi[] = { 1e300, nextafter(1e20, 1e21), INFINITY };
    for (int k = 0; k < 3; k++) {
        bg_calib_report r;
        bg_error err = BG_ERROR_INIT;
        build_calib(&r, 7);
        r.fit.t_min_k = lo[k], r.fit.t_max_k = hi[k];
        int rc = bg_calib_report_compute(&r, &err);
        if (k < 2) {
            assert_int_equal(rc, BG_OK);
            assert_true(r.nrt >= 2 && r.nrt <= 24);
        } else {
            assert_int_equal(rc, BG_EINVAL);
            assert_non_null(strstr(err.msg, "fit 34: its calibrated range"));
        }
        bg_calib_report_release(&r);
    }
}

/* The record chain's head is the caller's text: a hash that is not hex is shown escaped,
** in the attribute and in the text (found by the writers fuzz target). */
static void chain_head_escaped(void **state)
{
    (void)state;
    bg_calib_report r;
    bg_error err = BG_ERROR_INIT;
    build_calib(&r, 7);
    assert_int_equal(bg_calib_report_compute(&r, &err), BG_OK);
    bg_chain_head chain = { 12, "\"><img src=x onerror=1>" };
    bg_report_head h = { 1, "2026-03-02T10:00:00Z", NULL, NULL, 0, NULL, &chain };
    char *html = render("calibration", &r, &h);
    assert_null(strstr(html, "<img"));
    assert_non_null(strstr(html, "data-head=\"&quot;&gt;&lt;img src=x onerror=1&gt;\""));
    assert_non_null(strstr(html, "head &quot;&gt;&lt;img src=x onerror=1&gt; (bandgap verify"));
    free(html);
    bg_calib_report_release(&r);
}

/* Numbers as the reports show them: the shown text is exactly what printf writes with the
** same format (the C library is the reference, for "%.Nf" and "%+.Nf" which the report module
** writes without printf where it can be sure, and for the others), -0.000 and ties included,
** and data-v reads back to the same double. */
static void numbers_as_printf(void **state)
{
    (void)state;
    static const char *const fmts[] = { "%.0f", "%.1f", "%.2f", "%.3f", "%.4f", "%.6f",
                                        "%.9f", "%+.2f", "%+.3f", "%+.4f", "%.3g", "%.9e" };
    static const double fixed_cases[] = { 0.0, -0.0, -0.0004, 0.0004, 0.0005, 0.0015, 0.0025,
                                          2.5, 3.5, -2.5, 0.125, 0.375, 1.0005, 123456.78949,
                                          -1e-300, 5e-324, 1e12, 1e13, 1099511627776.0, 1e300,
                                          0.1, 0.7, 2.675, 1.005, 9.9995, 99.995, -99.9995 };
    size_t nfixed = sizeof fixed_cases / sizeof fixed_cases[0], bad = 0;
    uint64_t x = 0x9e3779b97f4a7c15u; /* xorshift64 (G. Marsaglia, J. Stat. Softw. 8(14), 2003) */
    for (size_t i = 0; i < nfixed + 200000; i++) {
        double v;
        if (i < nfixed)
            v = fixed_cases[i];
        else {
            x ^= x << 13, x ^= x >> 7, x ^= x << 17;
            double u = (double)(x >> 11) / 9007199254740992.0;
            /* magnitudes over 1e-8 .. 1e8, and every other one a decimal tie k/2 10^-d */
            v = i % 2 ? (u - 0.5) * pow(10.0, (double)(x % 17) - 8.0)
                      : ((double)(x % 2000001) - 1e6 + 0.5) / pow(10.0, (double)(x % 6));
        }
        const char *fmt = fmts[i % (sizeof fmts / sizeof fmts[0])];
        char want[512], *got = NULL, tag[540]; /* %f of 1e300 has 301 digits */
        size_t len = 0;
        snprintf(want, sizeof want, fmt, v);
        FILE *f = open_memstream(&got, &len);
        assert_non_null(f);
        bgi_html_num(f, "td", "n", fmt, v);
        assert_int_equal(fclose(f), 0);
        double back = strtod(strstr(got, "data-v=\"") + 8, NULL);
        snprintf(tag, sizeof tag, "\">%s</td>", want);
        if (strstr(got, tag) == NULL || memcmp(&back, &v, sizeof v) != 0) {
            if (bad++ < 5)
                print_message("%s of %.17g: %s, printf %s\n", fmt, v, got, want);
        }
        free(got);
    }
    assert_int_equal(bad, 0);
}

/* The page a report is written into keeps every byte in order as it grows past the sizes at
** which it changes how it grows (64 KiB, the 4 MiB of the huge-page path): 24 MB written in
** pieces of varying length, read back whole and NUL-terminated. */
static void page_grows_whole(void **state)
{
    (void)state;
    struct bgi_page page;
    FILE *f = bgi_page_open(&page);
    assert_non_null(f);
    size_t want = 0, piece = 1;
    while (want < ((size_t)24 << 20)) {
        for (size_t i = 0; i < piece; i++)
            fputc('a' + (int)((want + i) % 26), f);
        want += piece;
        piece = piece * 7 % 100003 + 1;
    }
    fprintf(f, "%s", "end");
    want += 3;
    assert_int_equal(fclose(f), 0);
    assert_false(page.oom);
    assert_int_equal(page.len, want);
    assert_int_equal(page.buf[page.len], '\0');
    size_t bad = 0;
    for (size_t i = 0; i + 3 < want; i++)
        bad += page.buf[i] != 'a' + (int)(i % 26);
    assert_int_equal(bad, 0);
    assert_memory_equal(page.buf + want - 3, "end", 3);
    free(page.buf);
}

static void lot_report(void **state)
{
    (void)state;
    bg_lot_report r;
    memset(&r, 0, sizeof r);
    snprintf(r.lot.code, sizeof r.lot.code, "%s", hostile);
    snprintf(r.lot.part, sizeof r.lot.part, "NTC-INVENTED");
    /* an empty lot summary that says it is flagged: the frame, the sections' headings and the
    ** verdict follow it (the sections' numbers are checked in test_qa.c and tests/reports.sh) */
    bg_qa_lot_summary qs = BG_QA_LOT_SUMMARY_INIT;
    qs.flagged = 1;
    r.summary = &qs;
    bg_report_head h = { 7, "2026-03-02T10:00:00Z", "Invented lab", "A & B", 5, "typo", NULL };
    char *html = render("lot", &r, &h);
    assert_non_null(strstr(html, "BG-LOT-000007"));
    assert_non_null(strstr(html, "<h2>Probes (newest fit of each)</h2>"));
    assert_non_null(strstr(html, "data-flagged=\"1\""));
    assert_non_null(strstr(html, "id=\"replaces\" data-v=\"5\""));
    assert_non_null(strstr(html, "A &amp; B"));
    assert_null(strstr(html, "<img"));
    assert_non_null(strstr(html, hostile_esc));
    free(html);
    /* deviations that are no number or huge (a damaged record's) in the histogram: no bin
    ** for NaN, the last bin for 1e300, and no undefined conversion to int (the sanitizer
    ** suite aborts on one; found by the writers fuzz target) */
    char serials[2][BG_TEXT] = { "P-1", "P-2" };
    double dev[2] = { NAN, 1e300 }, b[2] = { 3950.0, 3951.0 };
    long long ids[2] = { 1, 2 };
    unsigned flags[2] = { 0, 0 };
    qs.stats.n = 2, qs.stats.serial = serials, qs.stats.fit_id = ids;
    qs.stats.r25_dev_pct = dev, qs.stats.b_k = b, qs.stats.max_abs_dev_mk = b;
    qs.stats.tol_dev_mk = b, qs.stats.flags = flags;
    qs.stats.r25_dev.min = -1.0, qs.stats.r25_dev.max = 1.0;
    html = render("lot", &r, &h);
    assert_non_null(strstr(html, "data-chart=\"histogram\""));
    free(html);
}

/* T at a code of the 10k low-side divider on 12 bits with beta 10k/3950 (derived from the
** divider law and the beta equation). */
static double t_of_code(double code)
{
    double x = code / 4096.0, r = 10000.0 * x / (1.0 - x);
    return 1.0 / (1.0 / t0 + log(r / r0) / beta);
}

static void table_report(void **state)
{
    (void)state;
    bg_lut_request rq;
    bg_lut_result r = BG_LUT_RESULT_INIT;
    bg_error err = BG_ERROR_INIT;
    double c[2] = { r0, beta }, at[1] = { t0 };
    memset(&rq, 0, sizeof rq);
    rq.spec.circuit.kind = BG_CIRCUIT_DIVIDER_LOW, rq.spec.circuit.fixed_ohm = 10000.0;
    rq.spec.circuit.adc_bits = 12, rq.spec.circuit.full_scale_pow2 = 1;
    bg_model_parse("beta", &rq.spec.model, NULL);
    bg_model_set_coef(&rq.spec.model, c, 2, NULL);
    rq.spec.t_lo_k = 273.15, rq.spec.t_hi_k = 323.15, rq.spec.format = BG_LUT_CENTI;
    rq.step_codes = 16, rq.strategy = -1;
    rq.budget_at_k = at, rq.nbudget_at = 1;
    rq.error_curve = 1;
    assert_int_equal(bg_lut_make(&rq, &r, &err), BG_OK);
    assert_int_equal(r.table.strategy, BG_LUT_UNIFORM);
    assert_int_equal(r.table.shift, 4);
    /* every code in exactly one band, at most BG_LUT_ERROR_BANDS of them; each band's ends
    ** and least and largest error against the divider and beta law, code by code */
    long ncodes = r.table.code_hi - r.table.code_lo + 1;
    assert_true(ncodes > BG_LUT_ERROR_BANDS); /* so that bands hold several codes */
    assert_true(r.ncurve <= BG_LUT_ERROR_BANDS);
    assert_int_equal(r.codes_per_band, (ncodes + BG_LUT_ERROR_BANDS - 1) / BG_LUT_ERROR_BANDS);
    long next = r.table.code_lo;
    for (size_t i = 0; i < r.ncurve; i++) {
        const bg_lut_error_band *b = &r.curve[i];
        double lo = INFINITY, hi = -INFINITY;
        assert_int_equal(b->code_lo, next);
        assert_true(b->code_hi >= b->code_lo && b->code_hi - b->code_lo < r.codes_per_band);
        for (long code = b->code_lo; code <= b->code_hi; code++) {
            int st;
            double e = bg_lut_eval(&r.table, code, &st) / 100.0 + 273.15 - t_of_code((double)code);
            lo = fmin(lo, e), hi = fmax(hi, e);
        }
        assert_close(b->t_lo_k, t_of_code((double)b->code_lo), 1e-12, 1e-9);
        assert_close(b->t_hi_k, t_of_code((double)b->code_hi), 1e-12, 1e-9);
        assert_close(b->min_k, lo, 0.0, 1e-9);
        assert_close(b->max_k, hi, 0.0, 1e-9);
        next = b->code_hi + 1;
    }
    assert_int_equal(next, r.table.code_hi + 1);
    bg_report_head h = { 0, "2026-03-02T10:00:00Z", NULL, NULL, 0, NULL, NULL };
    char *html = render("table", &r, &h);
    char title[96];
    snprintf(title, sizeof title, "<title>Firmware table report table uniform %zu entries",
             r.table.n);
    assert_non_null(strstr(html, title));
    assert_non_null(strstr(html, "2026-03-02T10:00:00Z by bandgap"));
    assert_close(value_after(html, NULL, "class=\"maxerr\" data-v=\""), r.table.max_err_k, 1e-15,
                 0.0);
    /* half an LSB at 25 degC: code = 4096 R / (R + 10k) = 2048, dcode/dR = 4096 * 10k /
    ** (20k)^2, dR/dT = -R B / T^2, so 0.5 |dT/dcode| (derived) */
    double dcode_dt = 4096.0 * 1e4 / 4e8 * (r0 * beta / (t0 * t0));
    assert_close(value_after(html, "<tr class=\"budget\">", "class=\"n adc\" data-v=\""),
                 0.5 / dcode_dt, 1e-6, 0.0);
    assert_int_equal(count(html, "<tr class=\"budget\">"), 2); /* 25 degC and the worst */
    /* no covariance, tolerance or dissipation given: those terms say so, never 0, and the
    ** footnote names them */
    assert_int_equal(count(html, ">not given</td>"), 6);
    assert_non_null(strstr(html, "id=\"budget-missing\""));
    assert_true(isnan(r.worst.fit_k) && isnan(r.worst.resistor_k) && isnan(r.worst.selfheat_k));
    /* the chart is one envelope of the bands, not a vertex per code */
    char bands[64];
    snprintf(bands, sizeof bands, "<polygon class=\"envelope\" data-bands=\"%zu\"", r.ncurve);
    assert_int_equal(count(html, bands), 1);
    assert_int_equal(count(html, "<polyline"), 0);
    free(html);
    /* the time of generation is the caller's text: shown only escaped (found by the writers
    ** fuzz target) */
    bg_report_head hh = { 0, "<img src=x onerror=1>", NULL, NULL, 0, NULL, NULL };
    html = render("table", &r, &hh);
    assert_null(strstr(html, "<img"));
    assert_non_null(strstr(html, "<td>&lt;img src=x onerror=1&gt; by bandgap"));
    free(html);
    /* every term given (an invented covariance of R0 and B): no "not given", no footnote */
    bg_lut_result_release(&r);
    double cov[4] = { 25.0, 0.0, 0.0, 100.0 };
    rq.fit_id = 7, rq.fit_run_id = 3, rq.fit_serial = "P-INVENTED", rq.fit_cov = cov;
    rq.fit_t_min_k = 273.15, rq.fit_t_max_k = 323.15, rq.fit_dof = 8;
    rq.budget.fixed_tol = 0.001, rq.budget.excitation_v = 3.3;
    rq.budget.dissipation_w_per_k = 1.5e-3;
    assert_int_equal(bg_lut_make(&rq, &r, &err), BG_OK);
    assert_int_equal(r.budget_terms, BG_BUDGET_FIT | BG_BUDGET_RESISTOR | BG_BUDGET_SELFHEAT);
    html = render("table", &r, &h);
    assert_null(strstr(html, "not given"));
    assert_null(strstr(html, "budget-missing"));
    /* the fit's term with k from Student's t for its 8 degrees of freedom at 95.45 %:
    ** 2.3664194994919296, scipy.stats.t.ppf(0.97725, 8) (scipy 1.10.1, computed 2026-12-02) */
    assert_close(r.fit_cover.k, 2.3664194994919296, 1e-9, 0.0);
    assert_non_null(strstr(html, "fit U (k = 2.37)"));
    free(html);
    rq.fit_id = 0, rq.fit_cov = NULL, rq.budget.fixed_tol = 0.0;
    rq.budget.excitation_v = 0.0, rq.budget.dissipation_w_per_k = 0.0;
    /* without the error curve the table report is refused */
    bg_lut_result_release(&r);
    rq.error_curve = 0;
    assert_int_equal(bg_lut_make(&rq, &r, &err), BG_OK);
    char *bytes = NULL;
    size_t len = 0;
    assert_int_equal(bg_report_render(bg_report_kind_find("table"), &r, &h, &bytes, &len, &err),
                     BG_EINVAL);
    bg_lut_result_release(&r);
}

/* A 24-bit table: the report stays small (the chart has a few hundred bands, not a vertex
** for each of the 1.8 million codes of 20 .. 30 degC on a 10k divider). */
static void table_report_24_bits(void **state)
{
    (void)state;
    bg_lut_request rq;
    bg_lut_result r = BG_LUT_RESULT_INIT;
    bg_error err = BG_ERROR_INIT;
    double c[2] = { r0, beta };
    memset(&rq, 0, sizeof rq);
    rq.spec.circuit.kind = BG_CIRCUIT_DIVIDER_LOW, rq.spec.circuit.fixed_ohm = 10000.0;
    rq.spec.circuit.adc_bits = 24, rq.spec.circuit.full_scale_pow2 = 1;
    bg_model_parse("beta", &rq.spec.model, NULL);
    bg_model_set_coef(&rq.spec.model, c, 2, NULL);
    rq.spec.t_lo_k = 293.15, rq.spec.t_hi_k = 303.15, rq.spec.format = BG_LUT_MILLI;
    rq.step_codes = 4096, rq.strategy = -1, rq.error_curve = 1;
    assert_int_equal(bg_lut_make(&rq, &r, &err), BG_OK);
    assert_true(r.table.code_hi - r.table.code_lo > 1000000);
    assert_int_equal(r.ncurve, BG_LUT_ERROR_BANDS);
    bg_report_head h = { 0, "2026-03-02T10:00:00Z", NULL, NULL, 0, NULL, NULL };
    char *html = render("table", &r, &h);
    assert_true(strlen(html) < 60000);
    free(html);
    bg_lut_result_release(&r);
}

int main(void)
{
    gsl_set_error_handler(test_gsl_handler);
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(kinds_table),
        cmocka_unit_test(calibration_report),
        cmocka_unit_test(calibration_report_without_covariance),
        cmocka_unit_test(unclean_text_never_raw),
        cmocka_unit_test(calibration_report_huge_reading),
        cmocka_unit_test(calibration_report_absurd_range),
        cmocka_unit_test(chain_head_escaped),
        cmocka_unit_test(numbers_as_printf),
        cmocka_unit_test(page_grows_whole),
        cmocka_unit_test(lot_report),
        cmocka_unit_test(table_report),
        cmocka_unit_test(table_report_24_bits),
    };
    return cmocka_run_group_tests_name("report", tests, NULL, NULL);
}
