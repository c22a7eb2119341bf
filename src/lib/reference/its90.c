/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* ITS-90 platinum resistance thermometry: the reference function W_r(T90) and its inverse,
** and the deviation functions of the sub-ranges a bath calibration uses.  Source:
** H. Preston-Thomas, "The International Temperature Scale of 1990 (ITS-90)", Metrologia 27
** (1990) 3-10: equations (9a), (9b), (10a), (10b), the constants of Table 4, the deviation
** functions of section 3.3.  The defining values of W_r at the fixed points (Table 1 of the
** same text) check the constants (tests/test_its90.c). */
#include <math.h>
#include <stddef.h>
#include <string.h>
#include <strings.h>

#include "bandgap/reference.h"
#include "bandgap/suggest.h"

/* Table 4: A_i of (9a), B_i of (9b), C_i of (10a), D_i of (10b). */
static const double its_a[13] = { -2.13534729, 3.18324720,  -1.80143597, 0.71727204, 0.50344027,
                                  -0.61899395, -0.05332322, 0.28021362,  0.10715224, -0.29302865,
                                  0.04459872,  0.11868632,  -0.05248134 };
static const double its_b[16] = { 0.183324722,  0.240975303,  0.209108771,  0.190439972,
                                  0.142648498,  0.077993465,  0.012475611,  -0.032267127,
                                  -0.075291522, -0.056470670, 0.076201285,  0.123893204,
                                  -0.029201193, -0.091173542, 0.001317696,  0.026025526 };
static const double its_c[10] = { 2.78157254,  1.64650916,  -0.13714390, -0.00649767, -0.00234444,
                                  0.00511868,  0.00187982,  -0.00204472, -0.00046122, 0.00045724 };
static const double its_d[10] = { 439.932854, 472.418020, 37.684494, 7.472018, 2.920828,
                                  0.005184,   -0.963864,  -0.188732, 0.191203, 0.049025 };

#define T_TPW 273.16
#define T_ICE 273.15

/* Fixed points of Table 1 used as calibration points (K). */
#define T_AR 83.8058
#define T_HG 234.3156
#define T_GA 302.9146
#define T_IN 429.7485
#define T_SN 505.078
#define T_ZN 692.677
#define T_AL 933.473
#define T_AG 1234.93

static const struct range_def {
    const char *name;
    double lo_k, hi_k;
    size_t npts;            /* calibration points besides the triple point of water */
    double pts[4];
} ranges[BG_ITS90_NRANGE] = {
    [BG_ITS90_AR_TPW] = { "Ar-TPW", T_AR, T_TPW, 2, { T_AR, T_HG } },
    [BG_ITS90_HG_TPW] = { "Hg-TPW", T_HG, T_TPW, 1, { T_HG } },
    [BG_ITS90_HG_GA] = { "Hg-Ga", T_HG, T_GA, 2, { T_HG, T_GA } },
    [BG_ITS90_TPW_GA] = { "TPW-Ga", T_ICE, T_GA, 1, { T_GA } },
    [BG_ITS90_TPW_IN] = { "TPW-In", T_ICE, T_IN, 1, { T_IN } },
    [BG_ITS90_TPW_SN] = { "TPW-Sn", T_ICE, T_SN, 2, { T_IN, T_SN } },
    [BG_ITS90_TPW_ZN] = { "TPW-Zn", T_ICE, T_ZN, 2, { T_SN, T_ZN } },
    [BG_ITS90_TPW_AL] = { "TPW-Al", T_ICE, T_AL, 3, { T_SN, T_ZN, T_AL } },
    [BG_ITS90_TPW_AG] = { "TPW-Ag", T_ICE, T_AG, 4, { T_SN, T_ZN, T_AL, T_AG } },
};

/* W_r and dW_r/dT below the triple point, (9a): ln W_r = A0 + sum A_i x^i,
** x = (ln(T/273.16) + 1.5) / 1.5. */
static double wr_low(double t, double *deriv)
{
    double x = (log(t / T_TPW) + 1.5) / 1.5, s = 0.0, ds = 0.0;
    for (size_t i = 13; i-- > 0;) {
        ds = ds * x + s;
        s = s * x + its_a[i];
    }
    double w = exp(s);
    if (deriv)
        *deriv = w * ds / (1.5 * t);
    return w;
}

/* W_r and dW_r/dT above, (10a): W_r = C0 + sum C_i y^i, y = (T/K - 754.15) / 481. */
static double wr_high(double t, double *deriv)
{
    double y = (t - 754.15) / 481.0, s = 0.0, ds = 0.0;
    for (size_t i = 10; i-- > 0;) {
        ds = ds * y + s;
        s = s * y + its_c[i];
    }
    if (deriv)
        *deriv = ds / 481.0;
    return s;
}

/* The function of the range that holds 't' (the lower one up to the triple point). */
static double wr_at(double t, double *deriv)
{
    return t <= T_TPW ? wr_low(t, deriv) : wr_high(t, deriv);
}

int bg_its90_wr(double t90_k, double *wr, bg_error *err)
{
    if (!(t90_k >= BG_ITS90_TMIN_K && t90_k <= BG_ITS90_TMAX_K))
        return bg_error_set(err, BG_EINVAL, "T90 %.6g K is outside the ITS-90 platinum "
                            "reference function (13.8033 K to 1234.93 K)", t90_k);
    *wr = wr_at(t90_k, NULL);
    return BG_OK;
}

/* The text's inverse functions: (9b) T/273.16 = B0 + sum B_i z^i, z = (W_r^(1/6) - 0.65) / 0.35
** below the triple point, (10b) T/K - 273.15 = D0 + sum D_i v^i, v = (W_r - 2.64) / 1.64. */
static double t_series(double wr)
{
    double s = 0.0;
    if (wr < 1.0) {
        double z = (pow(wr, 1.0 / 6.0) - 0.65) / 0.35;
        for (size_t i = 16; i-- > 0;)
            s = s * z + its_b[i];
        return T_TPW * s;
    }
    double v = (wr - 2.64) / 1.64;
    for (size_t i = 10; i-- > 0;)
        s = s * v + its_d[i];
    return T_ICE + s;
}

int bg_its90_t_from_wr(double wr, double *t90_k, bg_error *err)
{
    /* the ends admit the 1e-8 to which the text prints W_r (its Table 1 value at the silver
    ** point, 4.28642053, lies 2.4e-9 beyond the function's own value there) */
    double lo = wr_low(BG_ITS90_TMIN_K, NULL) - 1e-8, hi = wr_high(BG_ITS90_TMAX_K, NULL) + 1e-8;
    if (!(wr >= lo && wr <= hi))
        return bg_error_set(err, BG_EINVAL, "W_r %.9g is outside the ITS-90 platinum reference "
                            "function (%.8f to %.8f)", wr, lo, hi);
    double t = t_series(wr);
    for (int it = 0; it < 50; it++) {
        double d, f = wr_at(t, &d) - wr, step = f / d;
        t -= step;
        if (t < BG_ITS90_TMIN_K - 0.01)
            t = BG_ITS90_TMIN_K - 0.01;
        if (t > BG_ITS90_TMAX_K + 0.01)
            t = BG_ITS90_TMAX_K + 0.01;
        if (fabs(step) < 1e-10) {
            *t90_k = t;
            return BG_OK;
        }
    }
    return bg_error_set(err, BG_EINVAL, "W_r %.9g: the ITS-90 inverse did not converge", wr);
}

const char *bg_its90_range_name(bg_its90_range range, double *lo_k, double *hi_k)
{
    if ((unsigned)range >= BG_ITS90_NRANGE)
        return "?";
    if (lo_k)
        *lo_k = ranges[range].lo_k;
    if (hi_k)
        *hi_k = ranges[range].hi_k;
    return ranges[range].name;
}

int bg_its90_range_parse(const char *name, bg_its90_range *range, bg_error *err)
{
    for (int i = 0; i < BG_ITS90_NRANGE; i++)
        if (name && strcasecmp(name, ranges[i].name) == 0) {
            *range = (bg_its90_range)i;
            return BG_OK;
        }
    const char *names[BG_ITS90_NRANGE], *near;
    for (int i = 0; i < BG_ITS90_NRANGE; i++)
        names[i] = ranges[i].name;
    near = name ? bg_suggest(name, strlen(name), names, BG_ITS90_NRANGE) : NULL;
    if (near)
        return bg_error_set(err, BG_EINVAL, "unknown ITS-90 sub-range '%s' (did you mean '%s'?)",
                            name, near);
    return bg_error_set(err, BG_EINVAL, "unknown ITS-90 sub-range '%s' (known: Ar-TPW, Hg-TPW, "
                        "Hg-Ga, TPW-Ga, TPW-In, TPW-Sn, TPW-Zn, TPW-Al, TPW-Ag)",
                        name ? name : "");
}

size_t bg_its90_range_points(bg_its90_range range, double t90_k[4])
{
    if ((unsigned)range >= BG_ITS90_NRANGE)
        return 0;
    for (size_t i = 0; i < ranges[range].npts; i++)
        t90_k[i] = ranges[range].pts[i];
    return ranges[range].npts;
}

/* Basis function k of the range's deviation function at W, and its derivative in W. */
static double basis(const bg_its90_dev *dev, size_t k, double w, double *deriv)
{
    double u = w - 1.0;
    if (k == 1 && dev->range == BG_ITS90_AR_TPW) { /* (W-1) ln W */
        *deriv = log(w) + u / w;
        return u * log(w);
    }
    if (k == 3) { /* d (W - W(Al))^2, above the aluminium point only */
        if (w <= dev->w_al) {
            *deriv = 0.0;
            return 0.0;
        }
        *deriv = 2.0 * (w - dev->w_al);
        return (w - dev->w_al) * (w - dev->w_al);
    }
    *deriv = (double)(k + 1) * pow(u, (double)k);
    return pow(u, (double)(k + 1));
}

/* Number of coefficients of the range (a; a, b; a, b, c; a, b, c, d). */
static size_t ncoef(bg_its90_range range)
{
    return ranges[range].npts;
}

static double dev_and_slope(const bg_its90_dev *dev, double w, double *slope)
{
    const double coef[4] = { dev->a, dev->b, dev->c, dev->d };
    double s = 0.0, ds = 0.0;
    for (size_t k = 0; k < ncoef(dev->range); k++) {
        double d, f = basis(dev, k, w, &d);
        s += coef[k] * f;
        ds += coef[k] * d;
    }
    if (slope)
        *slope = ds;
    return s;
}

double bg_its90_dev_eval(const bg_its90_dev *dev, double w)
{
    if ((unsigned)dev->range >= BG_ITS90_NRANGE)
        return NAN;
    return dev_and_slope(dev, w, NULL);
}

/* Solve the n x n system m x = r (n <= 3) by Gaussian elimination with partial pivoting;
** -1 when singular. */
static int solve_small(double m[3][3], double r[3], size_t n, double x[3])
{
    for (size_t c = 0; c < n; c++) {
        size_t p = c;
        for (size_t i = c + 1; i < n; i++)
            if (fabs(m[i][c]) > fabs(m[p][c]))
                p = i;
        if (!(fabs(m[p][c]) > 1e-300))
            return -1;
        for (size_t j = 0; j < n; j++) {
            double t = m[c][j];
            m[c][j] = m[p][j];
            m[p][j] = t;
        }
        double t = r[c];
        r[c] = r[p];
        r[p] = t;
        for (size_t i = c + 1; i < n; i++) {
            double f = m[i][c] / m[c][c];
            for (size_t j = c; j < n; j++)
                m[i][j] -= f * m[c][j];
            r[i] -= f * r[c];
        }
    }
    for (size_t c = n; c-- > 0;) {
        double s = r[c];
        for (size_t j = c + 1; j < n; j++)
            s -= m[c][j] * x[j];
        x[c] = s / m[c][c];
        if (!isfinite(x[c]))
            return -1;
    }
    return 0;
}

int bg_its90_dev_solve(bg_its90_range range, const double *w, size_t n, bg_its90_dev *dev,
                       bg_error *err)
{
    if ((unsigned)range >= BG_ITS90_NRANGE)
        return bg_error_set(err, BG_EINVAL, "unknown ITS-90 sub-range");
    const struct range_def *rd = &ranges[range];
    if (n != rd->npts)
        return bg_error_set(err, BG_EINVAL, "sub-range %s is calibrated at %zu fixed point%s "
                            "besides the triple point of water, not %zu", rd->name, rd->npts,
                            rd->npts == 1 ? "" : "s", n);
    for (size_t i = 0; i < n; i++)
        if (!(isfinite(w[i]) && w[i] > 0.0))
            return bg_error_set(err, BG_EINVAL, "sub-range %s: W at point %zu (%.4f K) must be "
                                "finite and positive", rd->name, i + 1, rd->pts[i]);
    *dev = (bg_its90_dev){ .range = range, .w_al = range == BG_ITS90_TPW_AG ? w[2] : 0.0 };
    /* a, b, c from the first points (at most 3): the d term is 0 at and below aluminium */
    size_t nabc = n < 3 ? n : 3;
    double m[3][3], r[3], x[3] = { 0 };
    for (size_t i = 0; i < nabc; i++) {
        double d;
        for (size_t k = 0; k < nabc; k++)
            m[i][k] = basis(dev, k, w[i], &d);
        r[i] = w[i] - wr_at(rd->pts[i], NULL);
    }
    if (solve_small(m, r, nabc, x) != 0)
        return bg_error_set(err, BG_EINVAL, "sub-range %s: the W values give no unique "
                            "deviation function (two equal, or equal to 1)", rd->name);
    dev->a = x[0];
    dev->b = x[1];
    dev->c = x[2];
    if (n == 4) {
        double d, q = basis(dev, 3, w[3], &d);
        if (!(q > 0.0))
            return bg_error_set(err, BG_EINVAL, "sub-range %s: W at the silver point must "
                                "exceed W at the aluminium point", rd->name);
        dev->d = (w[3] - wr_at(rd->pts[3], NULL) - dev_and_slope(dev, w[3], NULL)) / q;
    }
    return BG_OK;
}

static int outside(const bg_its90_dev *dev, double t, bg_error *err)
{
    const struct range_def *rd = &ranges[dev->range];
    return bg_error_set(err, BG_EINVAL, "T90 %.4f K lies outside the thermometer's ITS-90 "
                        "sub-range %s (%.4f K to %.4f K)", t, rd->name, rd->lo_k, rd->hi_k);
}

int bg_its90_t_from_w(const bg_its90_dev *dev, double w, double *t90_k, bg_error *err)
{
    if ((unsigned)dev->range >= BG_ITS90_NRANGE)
        return bg_error_set(err, BG_EINVAL, "unknown ITS-90 sub-range");
    if (!(isfinite(w) && w > 0.0))
        return bg_error_set(err, BG_EINVAL, "W %.9g must be finite and positive", w);
    double t;
    int rc = bg_its90_t_from_wr(w - dev_and_slope(dev, w, NULL), &t, err);
    if (rc != BG_OK)
        return rc;
    const struct range_def *rd = &ranges[dev->range];
    if (t < rd->lo_k - 1e-3 || t > rd->hi_k + 1e-3)
        return outside(dev, t, err);
    *t90_k = t;
    return BG_OK;
}

int bg_its90_w_from_t(const bg_its90_dev *dev, double t90_k, double *w, bg_error *err)
{
    if ((unsigned)dev->range >= BG_ITS90_NRANGE)
        return bg_error_set(err, BG_EINVAL, "unknown ITS-90 sub-range");
    const struct range_def *rd = &ranges[dev->range];
    if (!(t90_k >= rd->lo_k - 1e-3 && t90_k <= rd->hi_k + 1e-3))
        return outside(dev, t90_k, err);
    double wr = wr_at(t90_k, NULL), x = wr;
    for (int it = 0; it < 50; it++) {
        double slope, f = x - dev_and_slope(dev, x, &slope) - wr, step = f / (1.0 - slope);
        x -= step;
        if (fabs(step) <= 1e-15 * x) {
            *w = x;
            return BG_OK;
        }
    }
    return bg_error_set(err, BG_EINVAL, "T90 %.4f K: no W found for the thermometer's "
                        "deviation function", t90_k);
}
