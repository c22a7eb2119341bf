/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* ITS-90 platinum thermometry: the reference function at the defining fixed points against
** the values of W_r printed in the text (H. Preston-Thomas, Metrologia 27 (1990) 3-10,
** Table 1; refdata 7), and against an independent 40-digit recomputation
** (tests/ref/its90_values.py, mpmath) of the function, its exact inverse and the deviation
** functions of invented thermometers. */
#include "testutil.h"

static void fixed_points(void **state)
{
    (void)state;
    /* T90 and W_r(T90) of Table 1 (published; refdata 7), printed to 8 decimals: the
    ** constants of Table 4 are themselves rounded to 8 digits, so agreement is to 1e-8 */
    static const double tab[][2] = {
        { 83.8058, 0.21585975 },  { 234.3156, 0.84414211 }, { 273.16, 1.00000000 },
        { 302.9146, 1.11813889 }, { 429.7485, 1.60980185 }, { 505.078, 1.89279768 },
        { 692.677, 2.56891730 },  { 933.473, 3.37600860 },  { 1234.93, 4.28642053 },
    };
    for (size_t i = 0; i < sizeof tab / sizeof tab[0]; i++) {
        double w, t;
        assert_int_equal(bg_its90_wr(tab[i][0], &w, NULL), BG_OK);
        assert_close(w, tab[i][1], 0, 1.0e-8);
        assert_int_equal(bg_its90_t_from_wr(tab[i][1], &t, NULL), BG_OK);
        /* dT = dW / (dW/dT): 1e-8 in W is at most 0.03 mK at these points */
        assert_close(t, tab[i][0], 0, 3e-5);
    }
}

static void refusals(void **state)
{
    (void)state;
    bg_error err = BG_ERROR_INIT;
    double w, t;
    assert_int_equal(bg_its90_wr(13.8, &w, &err), BG_EINVAL);
    assert_string_equal(err.msg, "T90 13.8 K is outside the ITS-90 platinum reference function "
                                 "(13.8033 K to 1234.93 K)");
    assert_int_equal(bg_its90_wr(NAN, &w, &err), BG_EINVAL);
    assert_int_equal(bg_its90_t_from_wr(4.3, &t, &err), BG_EINVAL);
    assert_int_equal(bg_its90_t_from_wr(0.001, &t, &err), BG_EINVAL);
    bg_its90_range r;
    assert_int_equal(bg_its90_range_parse("tpw-zn", &r, NULL), BG_OK);
    assert_int_equal(r, BG_ITS90_TPW_ZN);
    assert_int_equal(bg_its90_range_parse("TPW-Cu", &r, &err), BG_EINVAL);
    bg_its90_dev dev;
    double ws[2] = { 1.9, 1.9 };
    assert_int_equal(bg_its90_dev_solve(BG_ITS90_TPW_ZN, ws, 1, &dev, &err), BG_EINVAL);
    assert_string_equal(err.msg, "sub-range TPW-Zn is calibrated at 2 fixed points besides the "
                                 "triple point of water, not 1");
    assert_int_equal(bg_its90_dev_solve(BG_ITS90_TPW_ZN, ws, 2, &dev, &err), BG_EINVAL);
    ws[0] = -1.0;
    assert_int_equal(bg_its90_dev_solve(BG_ITS90_TPW_ZN, ws, 2, &dev, &err), BG_EINVAL);
    /* a reading outside the thermometer's sub-range is refused, never extrapolated */
    double one = 1.1;
    assert_int_equal(bg_its90_dev_solve(BG_ITS90_TPW_GA, &one, 1, &dev, NULL), BG_OK);
    assert_int_equal(bg_its90_t_from_w(&dev, 1.6, &t, &err), BG_EINVAL);
    assert_int_equal(bg_its90_w_from_t(&dev, 400.0, &w, &err), BG_EINVAL);
}

/* The mpmath values of tests/ref/its90-values.txt. */
static void recomputed(void **state)
{
    (void)state;
    FILE *f = fopen(REF_DIR "/its90-values.txt", "r");
    assert_non_null(f);
    char line[1024], name[32];
    size_t nwr = 0, ninv = 0, ndev = 0, ntw = 0;
    bg_its90_dev dev = { 0 };
    while (fgets(line, sizeof line, f)) {
        double a, b;
        if (sscanf(line, "wr %lf %lf", &a, &b) == 2) {
            double w;
            assert_int_equal(bg_its90_wr(a, &w, NULL), BG_OK);
            assert_close(w, b, 1e-14, 0);
            nwr++;
        } else if (sscanf(line, "inv %lf %lf", &a, &b) == 2) {
            double t;
            assert_int_equal(bg_its90_t_from_wr(a, &t, NULL), BG_OK);
            assert_close(t, b, 0, 1e-9);
            ninv++;
        } else if (sscanf(line, "dev %31s", name) == 1) {
            double w[4], c[4];
            size_t n = 0;
            char *p = line + 4 + strlen(name);
            while (*p == ' ')
                p++;
            while (*p && *p != '|') {
                char *end;
                w[n++] = strtod(p, &end);
                p = end;
                while (*p == ' ')
                    p++;
            }
            assert_int_equal(sscanf(p, "| %lf %lf %lf %lf", &c[0], &c[1], &c[2], &c[3]), 4);
            bg_its90_range r;
            assert_int_equal(bg_its90_range_parse(name, &r, NULL), BG_OK);
            assert_int_equal(bg_its90_dev_solve(r, w, n, &dev, NULL), BG_OK);
            /* the coefficients are differences of nearly equal W: 1e-9 relative of W */
            assert_close(dev.a, c[0], 0, 1e-12);
            assert_close(dev.b, c[1], 0, 1e-11);
            assert_close(dev.c, c[2], 0, 1e-11);
            assert_close(dev.d, c[3], 0, 1e-10);
            ndev++;
        } else if (sscanf(line, "tw %31s %lf %lf", name, &a, &b) == 3) {
            double t, w;
            assert_int_equal(bg_its90_t_from_w(&dev, a, &t, NULL), BG_OK);
            assert_close(t, b, 0, 1e-8);
            assert_int_equal(bg_its90_w_from_t(&dev, b, &w, NULL), BG_OK);
            assert_close(w, a, 1e-12, 0);
            ntw++;
        }
    }
    fclose(f);
    assert_int_equal(nwr, 19);
    assert_int_equal(ninv, 11);
    assert_int_equal(ndev, BG_ITS90_NRANGE);
    assert_int_equal(ntw, 5 * BG_ITS90_NRANGE);
}

/* At the calibration points the thermometer reads the defining temperature exactly, whatever
** its W (the definition of the deviation function; Preston-Thomas 1990, section 3.3). */
static void calibration_points_reproduced(void **state)
{
    (void)state;
    for (int r = 0; r < BG_ITS90_NRANGE; r++) {
        double pts[4], w[4], t;
        size_t n = bg_its90_range_points((bg_its90_range)r, pts);
        for (size_t i = 0; i < n; i++) {
            assert_int_equal(bg_its90_wr(pts[i], &w[i], NULL), BG_OK);
            w[i] *= 1.0 + 2.5e-5 * (double)(i + 1) * (w[i] - 1.0); /* invented thermometer */
        }
        bg_its90_dev dev;
        assert_int_equal(bg_its90_dev_solve((bg_its90_range)r, w, n, &dev, NULL), BG_OK);
        for (size_t i = 0; i < n; i++) {
            assert_int_equal(bg_its90_t_from_w(&dev, w[i], &t, NULL), BG_OK);
            assert_close(t, pts[i], 0, 1e-9);
        }
        assert_int_equal(bg_its90_t_from_w(&dev, 1.0, &t, NULL), BG_OK); /* W = 1 */
        /* (9a) and (10a) give 0.99999999 and 0.9999999953 at 273.16 K (their constants are
        ** rounded to 8 digits): W = 1 reads within 3 uK of the point */
        assert_close(t, 273.16, 0, 3e-6);
        assert_close(bg_its90_dev_eval(&dev, 1.0), 0.0, 0, 1e-18);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(fixed_points),
        cmocka_unit_test(refusals),
        cmocka_unit_test(recomputed),
        cmocka_unit_test(calibration_points_reproduced),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
