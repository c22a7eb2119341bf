/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* A lot's two values and its nominal curve for the sensor kinds other than the NTC (whose R25
** and B stay in qa_lot.c), from the part's nominal values (store.h, schema 12):
**   PTC       R at T_ref (deviation, %) and alpha = (1/R) dR/dT at T_ref (ppm/K); nominal
**             curve R_ref (1 + alpha (T - T_ref)), the linear form of the trade;
**   junction  V at T_r (deviation, mV) and dV/dT at T_r (mV/K); nominal curve
**             V_r + dV/dT (T - T_r);
**   PRT       R0 (deviation, %) and alpha = (R(100 degC) - R0) / (100 K R0) (ppm/K); nominal
**             curve the IEC 60751 one with the part's R0; the class's tolerance in kelvin;
**   IC        the correction's offset c0 = T(x_r) - T_r at the reading x_r that reports T_r
**             (deviation from the nominal c0, mK) and its gain c1 = dT/dT_rep - 1 there (%);
**             nominal curve T = T_rep + c0 + c1 (T_rep - T_r).
** Each value comes from the probe's own fit (any model of the kind's quantity), read at the
** part's reference temperature(s). */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "bandgap/units.h"
#include "qa_int.h"

/* IEC 60751 (2008), the Callendar-Van Dusen constants of the standard's nominal curve
** (REFERENCES.md section 3): alpha(0..100 degC) = A + 100 K * B = 3.85055e-3 /K. */
#define IEC60751_A 3.9083e-3
#define IEC60751_B (-5.775e-7)

static void set_names(bg_qa_lot *l, const char *n1, const char *u1, const char *k1,
                      const char *n2, const char *u2, const char *k2)
{
    snprintf(l->v1_name, sizeof l->v1_name, "%s", n1);
    snprintf(l->v1_unit, sizeof l->v1_unit, "%s", u1);
    snprintf(l->v1_key, sizeof l->v1_key, "%s", k1);
    snprintf(l->v2_name, sizeof l->v2_name, "%s", n2);
    snprintf(l->v2_unit, sizeof l->v2_unit, "%s", u2);
    snprintf(l->v2_key, sizeof l->v2_key, "%s", k2);
}

int bgi_qa_lot_kind_check(const bg_lot *lot, const bg_part_spec *spec, bg_error *err)
{
    if (lot->sensor == BG_PART_NTC || (spec->id && spec->sensor == lot->sensor))
        return BG_OK;
    if (lot->sensor < 0 || lot->sensor >= BG_PART_NSENSOR)
        return bg_error_set(err, BG_EINVAL, "lot '%s': the stored sensor kind is not one this "
                            "program knows (a damaged record)", lot->code);
    return bg_error_set(err, BG_EINVAL, "lot '%s' is a %s lot, judged against its part's "
                        "nominal values, but part '%s' has %s%s in force (bandgap part set %s "
                        "--sensor %s ...)", lot->code, bg_part_sensor_name(lot->sensor),
                        lot->part, spec->id ? "a specification of kind " : "no specification",
                        spec->id ? bg_part_sensor_name(spec->sensor) : "", lot->part,
                        bg_part_sensor_name(lot->sensor));
}

void bgi_qa_kind_setup(bg_qa_lot *l)
{
    const bg_part_spec *p = &l->spec;
    const bg_lot *lot = &l->lot;
    char b[48];
    l->sensor = p->sensor;
    switch (p->sensor) {
    case BG_PART_PTC:
        set_names(l, "R_ref deviation", "%", "r_ref_dev_pct", "alpha", "ppm/K",
                  "alpha_ppm_per_k");
        l->v1_tol = 100.0 * p->tol_x;
        l->v2_nominal = 1e6 * p->nom_s, l->v2_tol = 1e6 * p->nom_s * p->tol_s;
        return;
    case BG_PART_JUNCTION:
        set_names(l, "V_r deviation", "mV", "v_ref_dev_mv", "dV/dT", "mV/K", "dvdt_mv_per_k");
        l->v1_tol = 1e3 * p->tol_x;
        l->v2_nominal = 1e3 * p->nom_s, l->v2_tol = 1e3 * p->tol_s;
        return;
    case BG_PART_PRT: {
        /* the class's tolerance at 0 degC as a share of R0 (dR/dT / R0 = A there), and the
        ** alpha error that alone puts the 100 degC point at the class's limit there */
        double t0 = bg_iec60751_tolerance_k(p->iec_class, 0.0);
        double t100 = bg_iec60751_tolerance_k(p->iec_class, 100.0);
        set_names(l, "R0 deviation", "%", "r0_dev_pct", "alpha(0..100 degC)", "ppm/K",
                  "alpha_ppm_per_k");
        l->v1_tol = 100.0 * t0 * IEC60751_A;
        l->v2_nominal = 1e6 * (IEC60751_A + 100.0 * IEC60751_B);
        l->v2_tol = 1e6 * t100 * (IEC60751_A + 200.0 * IEC60751_B) / 100.0;
        return;
    }
    case BG_PART_IC:
        set_names(l, "offset c0 deviation", "mK", "offset_dev_mk", "gain c1", "%",
                  "gain_pct");
        l->v1_tol = 1e3 * p->tol_x;
        l->v2_nominal = 100.0 * p->nom_s, l->v2_tol = 100.0 * p->tol_s;
        return;
    default:
        snprintf(b, sizeof b, "B%.0f/%.0f", lot->pair_t1_k - BG_ZERO_C_K,
                 lot->pair_t2_k - BG_ZERO_C_K);
        set_names(l, "R25 deviation", "%", "r25_dev_pct", b, "K", "b_k");
        l->v1_tol = 100.0 * lot->tol_r25;
        l->v2_nominal = lot->beta_k, l->v2_tol = lot->beta_k * lot->tol_beta;
    }
}

/* An IC sensor's reading that reports temperature 't_k' (its LSB from the model's 'lsb_k'
** for a code), and the kelvin of reported temperature per unit of the reading. */
static int ic_reading(const bg_model *m, double t_k, double *x, double *k_per_x, bg_error *err)
{
    double lsb = 1.0;
    if (bg_model_quantity(m) == BG_QTY_CODE) {
        lsb = NAN;
        for (size_t i = 0; i < bg_model_nparam(m); i++)
            if (strcmp(bg_model_param_name(m, i), "lsb_k") == 0)
                lsb = bg_model_param(m, i);
        if (!(lsb > 0.0))
            return bg_error_set(err, BG_EINVAL, "the code model states no LSB in kelvin");
    } else if (bg_model_quantity(m) != BG_QTY_REPORTED_T)
        return bg_error_set(err, BG_EINVAL, "an ic part's probes are fitted with a model of a "
                            "reported temperature or a code");
    *x = (t_k - BG_ZERO_C_K) / lsb;
    *k_per_x = lsb;
    return BG_OK;
}

/* The fit's quantity is the kind's. */
static int kind_quantity(const bg_qa_lot *l, const bg_model *m, bg_error *err)
{
    bg_quantity q = bg_model_quantity(m);
    int ok = l->sensor == BG_PART_JUNCTION ? q == BG_QTY_VOLTAGE :
             l->sensor == BG_PART_IC ? q == BG_QTY_REPORTED_T || q == BG_QTY_CODE :
             q == BG_QTY_RESISTANCE;
    char name[32];
    if (!ok)
        return bg_error_set(err, BG_EINVAL, "lot '%s' is of %s part '%s', but a fit reads %s "
                            "(model %s)", l->lot.code, bg_part_sensor_name(l->sensor),
                            l->lot.part, bg_quantity_unit(q), bg_model_name(m, name,
                                                                             sizeof name));
    return BG_OK;
}

int bgi_qa_kind_values(const bg_qa_lot *l, const bg_fit_row *f, double *v1, double *v2,
                       int *extrap, bg_error *err)
{
    const bg_part_spec *p = &l->spec;
    const bg_model *m = &f->model;
    double x, x2, d, t1 = p->nom_t_k, t2 = p->nom_t_k, kx;
    int rc = kind_quantity(l, m, err);
    if (rc != BG_OK)
        return rc;
    switch (p->sensor) {
    case BG_PART_PTC: case BG_PART_JUNCTION:
        if ((rc = bg_model_x_from_t(m, t1, &x, err)) != BG_OK ||
            (rc = bg_model_dtdx(m, x, &d, err)) != BG_OK)
            return rc;
        if (p->sensor == BG_PART_PTC)
            *v1 = 100.0 * (x - p->nom_x) / p->nom_x, *v2 = 1e6 / (x * d);
        else
            *v1 = 1e3 * (x - p->nom_x), *v2 = 1e3 / d;
        break;
    case BG_PART_PRT:
        t1 = BG_ZERO_C_K, t2 = BG_ZERO_C_K + 100.0;
        if ((rc = bg_model_x_from_t(m, t1, &x, err)) != BG_OK ||
            (rc = bg_model_x_from_t(m, t2, &x2, err)) != BG_OK)
            return rc;
        *v1 = 100.0 * (x - p->nom_x) / p->nom_x, *v2 = 1e6 * (x2 - x) / (100.0 * x);
        break;
    default: /* IC */
        if ((rc = ic_reading(m, t1, &x, &kx, err)) != BG_OK ||
            (rc = bg_model_t_from_x(m, x, &x2, err)) != BG_OK ||
            (rc = bg_model_dtdx(m, x, &d, err)) != BG_OK)
            return rc;
        t1 = t2 = x2;
        *v1 = 1e3 * (x2 - p->nom_t_k - p->nom_x), *v2 = 100.0 * (d / kx - 1.0);
    }
    *extrap = t1 < f->t_min_k - 1e-9 || t2 > f->t_max_k + 1e-9 || t1 > f->t_max_k + 1e-9 ||
              t2 < f->t_min_k - 1e-9;
    return BG_OK;
}

int bgi_qa_kind_dev(const bg_qa_lot *l, const bg_model *m, double t_k, double *dev_k,
                    bg_error *err)
{
    const bg_part_spec *p = &l->spec;
    double x, kx, tr;
    int rc = kind_quantity(l, m, err);
    if (rc != BG_OK)
        return rc;
    if (p->sensor == BG_PART_PRT)
        return bg_iec60751_deviation(m, p->nom_x, t_k, dev_k, err);
    if ((rc = bg_model_x_from_t(m, t_k, &x, err)) != BG_OK)
        return rc;
    switch (p->sensor) {
    case BG_PART_PTC:
        *dev_k = p->nom_t_k + (x / p->nom_x - 1.0) / p->nom_s - t_k;
        return BG_OK;
    case BG_PART_JUNCTION:
        *dev_k = p->nom_t_k + (x - p->nom_x) / p->nom_s - t_k;
        return BG_OK;
    default: /* IC: the reported temperature, corrected by the nominal correction */
        if ((rc = ic_reading(m, t_k, &tr, &kx, err)) != BG_OK)
            return rc;
        tr = x * kx + BG_ZERO_C_K;
        *dev_k = tr + p->nom_x + p->nom_s * (tr - p->nom_t_k) - t_k;
        return BG_OK;
    }
}

double bgi_qa_kind_band_k(const bg_qa_lot *l, double t_k)
{
    const bg_part_spec *p = &l->spec;
    double dt = fabs(t_k - p->nom_t_k);
    switch (p->sensor) {
    case BG_PART_PTC: /* R = R_ref (1 +- tol_r) (1 + alpha (1 +- tol_a) dT), to first order */
        return p->tol_x / p->nom_s + p->tol_s * dt;
    case BG_PART_JUNCTION: /* V = V_r +- tol_v + (S +- tol_s) dT, read through the nominal */
        return (p->tol_x + p->tol_s * dt) / fabs(p->nom_s);
    case BG_PART_PRT:
        return bg_iec60751_tolerance_k(p->iec_class, t_k - BG_ZERO_C_K);
    case BG_PART_IC:
        return p->tol_x + p->tol_s * dt;
    default:
        return NAN;
    }
}

double bg_qa_spec_limit_k(const bg_part_spec *p)
{
    switch (p->sensor) {
    case BG_PART_PTC: return p->tol_x / p->nom_s;
    case BG_PART_JUNCTION: return p->tol_x / fabs(p->nom_s);
    case BG_PART_PRT: return bg_iec60751_tolerance_k(p->iec_class, 0.0);
    case BG_PART_IC: return p->tol_x;
    default: return NAN;
    }
}
