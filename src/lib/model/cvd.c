/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* cvd and cvd2: a platinum resistance thermometer under test, IEC 60751 (2008), the
** Callendar-Van Dusen equation in t = T - 273.15 K (degC):
**   R(t) = R0 [1 + A t + B t^2 + C (t - 100) t^3]   for t < 0 degC,
**   R(t) = R0 (1 + A t + B t^2)                      for t >= 0 degC;
** cvd fits R0, A, B and C (readings below 0 degC needed for C), cvd2 R0, A and B (0 degC and
** above).  Linear in (R0, R0 A, R0 B, R0 C), which starts the least squares in temperature.
** Derived: the deviation from the standard's nominal curve (A = 3.9083e-3, B = -5.775e-7,
** C = -4.183e-12 with the nominal R0, IEC 60751 clause 4) over the calibrated range and the
** tolerance class met: AA +-(0.1 + 0.0017 |t|), A +-(0.15 + 0.002 |t|), B +-(0.3 + 0.005 |t|),
** C +-(0.6 + 0.01 |t|) degC (IEC 60751:2008, table of tolerance classes; from memory, not
** checked against a copy of the standard, which could not be read here). */
#include <math.h>
#include <stdio.h>

#include "bandgap/reference.h"
#include "bandgap/units.h"
#include "model_int.h"

#define IEC_A 3.9083e-3
#define IEC_B (-5.775e-7)
#define IEC_C (-4.183e-12)

static size_t cvd_npar(const bg_model *m)
{
    return m->type == &bgi_model_cvd2 ? 3 : 4;
}

static const char *cvd_coef_name(const bg_model *m, size_t i)
{
    static const char *names[] = { "R0", "A", "B", "C" };
    (void)m;
    return names[i];
}

static int cvd_check_coef(const bg_model *m, const double *coef, bg_error *err)
{
    (void)m;
    if (!(coef[0] > 0.0))
        return bg_error_set(err, BG_EINVAL, "a platinum model needs R0 > 0");
    return BG_OK;
}

static int cvd_xfun(const bg_model *m, double t_k, double *x, double *dxdt, double *dxdc)
{
    double t = t_k - BG_ZERO_C_K, r0 = m->coef[0], a = m->coef[1], b = m->coef[2];
    double c = cvd_npar(m) == 4 && t < 0.0 ? m->coef[3] : 0.0;
    double cterm = t < 0.0 ? (t - 100.0) * t * t * t : 0.0;
    double f = 1.0 + a * t + b * t * t + c * cterm;
    *x = r0 * f;
    *dxdt = r0 * (a + 2.0 * b * t + c * (4.0 * t * t * t - 300.0 * t * t));
    if (dxdc) {
        dxdc[0] = f, dxdc[1] = r0 * t, dxdc[2] = r0 * t * t;
        if (cvd_npar(m) == 4)
            dxdc[3] = r0 * cterm;
    }
    return BG_OK;
}

static void cvd_lin_row(const bg_model *m, double t_k, double *phi)
{
    double t = t_k - BG_ZERO_C_K;
    phi[0] = 1.0, phi[1] = t, phi[2] = t * t;
    if (cvd_npar(m) == 4)
        phi[3] = t < 0.0 ? (t - 100.0) * t * t * t : 0.0;
}

static int cvd_from_lin(bg_model *m, const double *c, bg_error *err)
{
    if (!(c[0] > 0.0))
        return bg_error_set(err, BG_EINVAL, "the linear start gives R0 = %g ohm, not above 0",
                            c[0]);
    m->coef[0] = c[0];
    for (size_t i = 1; i < cvd_npar(m); i++)
        m->coef[i] = c[i] / c[0];
    return BG_OK;
}

static int cvd_x_ok(const bg_model *m, double x)
{
    (void)m;
    return x > 0.0;
}

/* The tolerance classes of IEC 60751 (see the head of the file): |dev| <= a + b |t|. */
static const struct iec_class { const char *name; double a, b; } iec_classes[] = {
    { "AA", 0.1, 0.0017 }, { "A", 0.15, 0.002 }, { "B", 0.3, 0.005 }, { "C", 0.6, 0.01 },
};

double bg_iec60751_tolerance_k(const char *cls, double t_c)
{
    for (size_t i = 0; i < sizeof iec_classes / sizeof iec_classes[0]; i++)
        if (cls && cls[0] == iec_classes[i].name[0] &&
            (cls[1] == iec_classes[i].name[1]))
            return iec_classes[i].a + iec_classes[i].b * fabs(t_c);
    return NAN;
}

/* The nominal R0 of the standard's series nearest to the fitted one (by ratio). */
static double nominal_r0(double r0)
{
    static const double series[] = { 10.0, 50.0, 100.0, 200.0, 500.0, 1000.0, 2000.0 };
    double best = series[0];
    for (size_t i = 1; i < sizeof series / sizeof series[0]; i++)
        if (fabs(log(r0 / series[i])) < fabs(log(r0 / best)))
            best = series[i];
    return best;
}

int bg_iec60751_deviation(const bg_model *m, double r0_nominal, double t_k, double *dev_k,
                          bg_error *err)
{
    double r, tn;
    int rc = bg_model_x_from_t(m, t_k, &r, err);
    if (rc == BG_OK)
        rc = bg_cvd_t_from_r(r0_nominal, IEC_A, IEC_B, IEC_C, r, &tn, err);
    if (rc == BG_OK)
        *dev_k = tn - t_k;
    return rc;
}

/* Deviation from the nominal curve at 201 points over the range; the class met is the first
** whose limit holds at every point. */
static size_t cvd_derived(const bg_model *m, const double *cov, double t_min_k, double t_max_k,
                          bg_derived *out, size_t max)
{
    double r0n = nominal_r0(m->coef[0]), worst = 0.0, worst_t = NAN;
    double ratio[4] = { 0, 0, 0, 0 };
    int ok = isfinite(t_min_k) && isfinite(t_max_k);
    (void)cov;
    for (int s = 0; ok && s <= 200; s++) {
        double t = t_min_k + (t_max_k - t_min_k) * s / 200.0, d;
        if (bg_iec60751_deviation(m, r0n, t, &d, NULL) != BG_OK) {
            ok = 0;
            break;
        }
        if (fabs(d) > fabs(worst))
            worst = d, worst_t = t;
        for (size_t c = 0; c < 4; c++) {
            double lim = bg_iec60751_tolerance_k(iec_classes[c].name, t - BG_ZERO_C_K);
            ratio[c] = fmax(ratio[c], fabs(d) / lim);
        }
    }
    if (max < 2)
        return 2;
    snprintf(out[0].name, sizeof out[0].name, "deviation from IEC 60751");
    out[0].value = ok ? worst : NAN, out[0].u = NAN;
    snprintf(out[0].unit, sizeof out[0].unit, "K");
    out[0].text[0] = '\0';
    snprintf(out[0].note, sizeof out[0].note, "largest |t_IEC(R(t)) - t| over the calibrated "
             "range, at %.2f \xc2\xb0" "C, against the nominal curve with R0 = %g \xce\xa9 "
             "(IEC 60751)",
             worst_t - BG_ZERO_C_K, r0n);
    snprintf(out[1].name, sizeof out[1].name, "IEC 60751 class");
    out[1].value = NAN, out[1].u = NAN;
    out[1].unit[0] = '\0';
    snprintf(out[1].text, sizeof out[1].text, "none");
    for (size_t c = 0; ok && c < 4; c++)
        if (ratio[c] <= 1.0) {
            snprintf(out[1].text, sizeof out[1].text, "%s", iec_classes[c].name);
            out[1].value = ratio[c];
            break;
        }
    /* the limits are from memory (REFERENCES.md section 8): the verdict says so each time */
    snprintf(out[1].note, sizeof out[1].note, "within the class limit over the calibrated range "
             "(largest fraction of the limit used; U not added, class range not checked). "
             "Limits from memory: check them against IEC 60751 before a certificate relies on "
             "them");
    return 2;
}

const bg_model_type bgi_model_cvd = {
    .name = "cvd",
    .spelling = "cvd",
    .formula = "R = R0 [1 + A t + B t^2 + C (t - 100) t^3] (C below 0 degC), t = T - 273.15",
    .npar = cvd_npar,
    .coef_name = cvd_coef_name,
    .check_coef = cvd_check_coef,
    .quantity = BG_QTY_RESISTANCE,
    .direction = +1,
    .xfun = cvd_xfun,
    .lin_in_x = 0,
    .lin_row = cvd_lin_row,
    .from_lin = cvd_from_lin,
    .x_ok = cvd_x_ok,
    .derived = cvd_derived,
};

const bg_model_type bgi_model_cvd2 = {
    .name = "cvd2",
    .spelling = "cvd2",
    .formula = "R = R0 (1 + A t + B t^2), t = T - 273.15",
    .npar = cvd_npar,
    .coef_name = cvd_coef_name,
    .check_coef = cvd_check_coef,
    .quantity = BG_QTY_RESISTANCE,
    .direction = +1,
    .xfun = cvd_xfun,
    .lin_in_x = 0,
    .lin_row = cvd_lin_row,
    .from_lin = cvd_from_lin,
    .x_ok = cvd_x_ok,
    .derived = cvd_derived,
};
