/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Test helpers: cmocka includes, a double comparison with relative and absolute tolerance
** (cmocka 1.1.5 only compares floats), and readers for the reference data files. */
#ifndef BANDGAP_TESTUTIL_H
#define BANDGAP_TESTUTIL_H

#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>
#include <gsl/gsl_errno.h>

#include "bandgap/bandgap.h"

/* |a - b| <= rel |b| + abs, or fail with both values. */
#define assert_close(a, b, rel, abs_) \
    assert_close_at((a), (b), (rel), (abs_), #a, __FILE__, __LINE__)

static inline void assert_close_at(double a, double b, double rel, double abs_, const char *what,
                                   const char *file, int line)
{
    if (!(fabs(a - b) <= rel * fabs(b) + abs_)) {
        print_error("%s = %.17g, expected %.17g (rel %.3g, abs %.3g, diff %.3g)\n", what, a, b,
                    rel, abs_, a - b);
        _fail(file, line);
    }
}

/* An error handler that makes any unexpected GSL error fail the test run loudly. */
static inline void test_gsl_handler(const char *reason, const char *file, int line, int code)
{
    fprintf(stderr, "unexpected GSL error %d (%s) at %s:%d\n", code, reason, file, line);
    abort();
}

/* Read the "x y" data lines of a reference file (lines starting with '#' skipped). */
static inline size_t ref_read_xy(const char *name, double *x, double *y, size_t max)
{
    char path[512], line[256];
    size_t n = 0;
    FILE *f;
    snprintf(path, sizeof path, "%s/%s", REF_DIR, name);
    f = fopen(path, "r");
    if (!f) {
        print_error("cannot open %s\n", path);
        return 0;
    }
    while (n < max && fgets(line, sizeof line, f)) {
        if (line[0] == '#' || line[0] == '\n')
            continue;
        if (sscanf(line, "%lf %lf", &x[n], &y[n]) == 2)
            n++;
    }
    fclose(f);
    return n;
}

/* Points from an sh3/sh4/poly/beta model at temperatures 't_c' (degC). */
static inline void make_points(const bg_model *m, const double *t_c, size_t n, double u_t_k,
                               bg_point *pts)
{
    for (size_t i = 0; i < n; i++) {
        memset(&pts[i], 0, sizeof pts[i]);
        pts[i].t_k = t_c[i] + 273.15;
        assert_int_equal(bg_model_r_from_t(m, pts[i].t_k, &pts[i].r_ohm, NULL), BG_OK);
        pts[i].u_t_k = u_t_k;
        pts[i].line = i + 2;
    }
}

#endif
