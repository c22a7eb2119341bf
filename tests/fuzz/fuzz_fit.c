/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Fuzz target: the fit and table numerics on hostile data.  The input is a readings CSV file;
** its points are fitted with every kind of the model table (a kind that needs a degree is
** tried as "NAME:1" .. "NAME:5") and with "auto"; each fit that succeeds is evaluated over
** its range and at its readings' resistances, and gives a small table (8-bit ADC, so that
** each run stays fast).  Nothing may crash or hang, and no call may return BG_OK with a
** number that is not finite where one is promised. */
#include <math.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "bandgap/bandgap.h"
#include "fuzz_util.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static const char *in_text;
static size_t in_len;

static void check(int ok, const char *what)
{
    if (!ok)
        fuzz_fail(what, in_text, in_len, 0);
}

/* The curve of a fit: over its range and at the resistances read. */
static void curve_of(const bg_calib_result *res)
{
    bg_curve_src src = bg_curve_src_of_model(&res->fit.model);
    bg_curve c = BG_CURVE_INIT;
    bg_error err = BG_ERROR_INIT;
    double r[8];
    size_t nr = res->npts < 8 ? res->npts : 8;

    src.has_cov = res->fit.dof > 0;
    memcpy(src.cov, res->fit.cov, sizeof src.cov);
    src.has_range = 1, src.t_min_k = res->fit.t_min_k, src.t_max_k = res->fit.t_max_k;
    src.dof = res->fit.dof;
    if (bg_curve_span(&src, 9, &c, &err) == BG_OK)
        for (size_t i = 0; i < c.n; i++)
            check(!c.rows[i].ok || (isfinite(c.rows[i].t_k) && isfinite(c.rows[i].r_ohm)),
                  "bg_curve_span: BG_OK with a row not finite");
    for (size_t i = 0; i < nr; i++)
        r[i] = res->pts[i].r_ohm;
    if (bg_curve_at_ohms(&src, r, nr, &c, &err) == BG_OK)
        for (size_t i = 0; i < c.n; i++)
            check(isfinite(c.rows[i].t_k) && c.rows[i].t_k > 0.0,
                  "bg_curve_at_ohms: BG_OK with a temperature not finite");
    bg_curve_release(&c);
}

/* A small table of the fitted curve over its range: uniform, then the smallest. */
static void table_of(const bg_calib_result *res)
{
    bg_lut_request rq;
    bg_lut_result out = BG_LUT_RESULT_INIT;
    bg_error err = BG_ERROR_INIT;
    double r_mid;

    memset(&rq, 0, sizeof rq);
    rq.spec.model = res->fit.model;
    rq.spec.t_lo_k = res->fit.t_min_k, rq.spec.t_hi_k = res->fit.t_max_k;
    if (bg_model_r_from_t(&res->fit.model, 0.5 * (rq.spec.t_lo_k + rq.spec.t_hi_k), &r_mid,
                          &err) != BG_OK)
        return;
    rq.spec.circuit.kind = BG_CIRCUIT_DIVIDER_LOW;
    rq.spec.circuit.fixed_ohm = r_mid; /* the divider's middle at the range's middle */
    rq.spec.circuit.adc_bits = 8;
    rq.spec.circuit.full_scale_pow2 = 1;
    rq.spec.circuit.ohms_per_code = 1.0;
    rq.spec.format = BG_LUT_CENTI;
    rq.spec.frac_bits = -1;
    rq.step_codes = 4;
    rq.max_err_k = NAN;
    rq.strategy = -1;
    rq.error_curve = 1;
    if (bg_lut_make(&rq, &out, &err) == BG_OK) {
        check(isfinite(out.table.max_err_k) && isfinite(out.table.rms_err_k),
              "bg_lut_make (uniform): BG_OK with an error not finite");
        for (long code = out.table.code_lo; code <= out.table.code_hi; code++) {
            int st;
            check(isfinite(bg_lut_value(&out.table, code, &st)), "bg_lut_value: not finite");
        }
    }
    bg_lut_result_release(&out);
    rq.step_codes = 0;
    rq.max_err_k = 0.5;
    if (bg_lut_make(&rq, &out, &err) == BG_OK)
        check(isfinite(out.table.max_err_k) && out.table.max_err_k <= 0.5 + 1e-9,
              "bg_lut_make (smallest): BG_OK above its bound");
    bg_lut_result_release(&out);
}

static void fit_one(const bg_point *pts, size_t n, const char *model)
{
    bg_calib_request rq = bg_calib_default_request();
    bg_calib_result res = BG_CALIB_RESULT_INIT;
    bg_error err = BG_ERROR_INIT;
    double check_t[2] = { 273.15, 373.15 };

    rq.model = model;
    rq.check_t_k = check_t, rq.ncheck = 2;
    if (bg_calibrate(pts, n, "fuzz.csv", &rq, &res, &err) == BG_OK) {
        size_t np = bg_model_npar(&res.fit.model);
        for (size_t i = 0; i < np; i++)
            check(isfinite(res.fit.model.coef[i]), "bg_calibrate: BG_OK with a coefficient "
                  "not finite");
        check(isfinite(res.fit.chi2) && isfinite(res.fit.rms_mk) && isfinite(res.fit.max_abs_mk),
              "bg_calibrate: BG_OK with statistics not finite");
        check(isfinite(res.fit.t_min_k) && isfinite(res.fit.t_max_k) &&
              res.fit.t_min_k <= res.fit.t_max_k, "bg_calibrate: BG_OK with a bad range");
        for (size_t i = 0; i < res.fit.n; i++)
            check(isfinite(res.fit.resid_mk[i]), "bg_calibrate: residual not finite");
        for (size_t i = 0; i < res.nchecks; i++)
            check(!res.checks[i].ok || isfinite(res.checks[i].r_ohm),
                  "bg_calibrate: check point not finite");
        curve_of(&res);
        table_of(&res);
    }
    bg_calib_result_release(&res);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    bg_readings rs;
    bg_error err = BG_ERROR_INIT;
    char name[64];
    bg_model m;

    in_text = (const char *)data, in_len = size;
    if (bg_csv_parse((const char *)data, size, "fuzz.csv", &rs, &err) != BG_OK)
        return 0;
    bg_point *pts = malloc((rs.n ? rs.n : 1) * sizeof *pts);
    if (pts && !rs.ref_ohms) {
        bg_readings_points(&rs, pts);
        for (size_t k = 0; k < bg_model_type_count(); k++) {
            const char *kind = bg_model_type_name(bg_model_type_at(k));
            if (bg_model_parse(kind, &m, &err) == BG_OK) {
                fit_one(pts, rs.n, kind);
                continue;
            }
            for (int deg = 1; deg < BG_MODEL_MAXPAR; deg++) {
                snprintf(name, sizeof name, "%s:%d", kind, deg);
                if (bg_model_parse(name, &m, &err) == BG_OK)
                    fit_one(pts, rs.n, name);
            }
        }
        fit_one(pts, rs.n, "auto");
    }
    free(pts);
    bg_readings_release(&rs);
    return 0;
}
