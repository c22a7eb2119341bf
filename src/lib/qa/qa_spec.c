/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* A part's specification: its nominal curve given as coefficients or fitted to an R-T table
** the user enters (fit.h, in temperature, unweighted), a tolerance in kelvin and the QA
** defaults, appended to the record (store.h). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "bandgap/calib.h"
#include "bandgap/csv.h"
#include "bandgap/qa.h"
#include "bandgap/suggest.h"
#include "bandgap/units.h"

static const char *const sensor_names[BG_PART_NSENSOR] = { "ntc", "ptc", "junction", "prt",
                                                           "ic" };

const char *bg_part_sensor_name(int s)
{
    return s >= 0 && s < BG_PART_NSENSOR ? sensor_names[s] : "?";
}

int bg_part_sensor_parse(const char *name, int *s, bg_error *err)
{
    for (int i = 0; i < BG_PART_NSENSOR; i++)
        if (strcmp(name, sensor_names[i]) == 0) {
            *s = i;
            return BG_OK;
        }
    const char *near = bg_suggest(name, strlen(name), sensor_names, BG_PART_NSENSOR);
    return bg_error_set(err, BG_EINVAL, "unknown sensor kind '%s'%s%s%s (ntc, ptc, junction, prt "
                        "or ic)", name, near ? " (did you mean '" : "", near ? near : "",
                        near ? "'?)" : "");
}

/* The quantity and direction a nominal curve of sensor kind 's' must have (0: any). */
static int sensor_fits_model(int s, const bg_model *m)
{
    bg_quantity q = bg_model_quantity(m);
    switch (s) {
    case BG_PART_PTC: case BG_PART_PRT:
        return q == BG_QTY_RESISTANCE && bg_model_direction(m) > 0;
    case BG_PART_JUNCTION: return q == BG_QTY_VOLTAGE;
    case BG_PART_IC: return q == BG_QTY_REPORTED_T || q == BG_QTY_CODE;
    default: return q == BG_QTY_RESISTANCE && bg_model_direction(m) < 0;
    }
}

/* The nominal values of the sensor kind: each present, finite and of its sign. */
static int sensor_check(const bg_part_spec *p, bg_error *err)
{
    const char *k = bg_part_sensor_name(p->sensor);
    if (p->sensor < 0 || p->sensor >= BG_PART_NSENSOR)
        return bg_error_set(err, BG_EINVAL, "part '%s': sensor kind %d unknown", p->part,
                            p->sensor);
    if (p->sensor == BG_PART_NTC)
        return BG_OK;
    if (!(p->nom_t_k > 0.0 && isfinite(p->nom_t_k)) || !isfinite(p->nom_x) ||
        !isfinite(p->nom_s))
        return bg_error_set(err, BG_EINVAL, "part '%s': a %s part's nominal values must be "
                            "finite numbers at a temperature above 0 K", p->part, k);
    if (p->sensor == BG_PART_PRT) {
        if (!(p->nom_x > 0.0) || !isfinite(bg_iec60751_tolerance_k(p->iec_class, 0.0)))
            return bg_error_set(err, BG_EINVAL, "part '%s': a prt part needs R0 > 0 ohm and an "
                                "IEC 60751 class (AA, A, B or C)", p->part);
        return BG_OK;
    }
    if (!(p->tol_x > 0.0 && isfinite(p->tol_x) && p->tol_s > 0.0 && isfinite(p->tol_s)))
        return bg_error_set(err, BG_EINVAL, "part '%s': a %s part needs both tolerances, above "
                            "0", p->part, k);
    if (p->sensor == BG_PART_PTC && !(p->nom_x > 0.0 && p->nom_s > 0.0))
        return bg_error_set(err, BG_EINVAL, "part '%s': a ptc part needs R > 0 ohm and alpha "
                            "> 0 (its resistance rises with temperature)", p->part);
    if (p->sensor == BG_PART_JUNCTION && !(p->nom_x > 0.0 && p->nom_s < 0.0))
        return bg_error_set(err, BG_EINVAL, "part '%s': a junction part needs V > 0 and dV/dT "
                            "< 0 (its voltage falls with temperature)", p->part);
    return BG_OK;
}

/* Fit the kind of 'spec->model' to the table at 'path' into 'out'. */
static int fit_table(const char *path, bg_qa_part_set_result *out, bg_error *err)
{
    bg_readings rs = BG_READINGS_INIT;
    bg_fit f = BG_FIT_INIT;
    bg_point *pts = NULL;
    bg_fit_opts fo = bg_fit_default_opts(&out->spec.model);
    char name[32];
    int rc = bg_csv_read_file(path, &rs, err);
    if (rc != BG_OK)
        goto done;
    if (rs.ref_ohms) {
        rc = bg_error_set(err, BG_EINVAL, "%s: a nominal table gives temperatures, not "
                          "'ref_ohms'", path);
        goto done;
    }
    if (!(pts = malloc((rs.n + 1) * sizeof *pts))) {
        rc = bg_error_set(err, BG_ENOMEM, "out of memory reading '%s'", path);
        goto done;
    }
    bg_readings_points(&rs, pts);
    for (size_t i = 0; i < rs.n; i++) /* a table is not a measurement: equal weights */
        pts[i].u_t_k = 0.0, pts[i].u_r_ohm = 0.0;
    fo.source = path;
    if ((rc = bg_fit_points(pts, rs.n, &fo, &f, err)) != BG_OK) {
        bg_error_prefix(err, "nominal table '%s'", path);
        goto done;
    }
    out->spec.model = f.model;
    out->table_n = f.n, out->table_max_mk = f.max_abs_mk;
    out->table_lo_k = f.t_min_k, out->table_hi_k = f.t_max_k;
    snprintf(out->spec.source, sizeof out->spec.source, "table %s: %zu points from %.2f to "
             "%.2f degC, %s fitted, largest residual %.3f mK", path, f.n,
             f.t_min_k - BG_ZERO_C_K, f.t_max_k - BG_ZERO_C_K,
             bg_model_name(&f.model, name, sizeof name), f.max_abs_mk);
done:
    free(pts);
    bg_fit_release(&f);
    bg_readings_release(&rs);
    return rc;
}

int bg_qa_part_set(bg_store *st, const bg_part_spec *spec, const char *table_path,
                   bg_qa_part_set_result *out, bg_error *err)
{
    int rc;
    memset(out, 0, sizeof *out);
    out->spec = *spec;
    if ((rc = sensor_check(spec, err)) != BG_OK)
        return rc;
    if (spec->have_model && !sensor_fits_model(spec->sensor, &spec->model))
        return bg_error_set(err, BG_EINVAL, "part '%s': a %s part's nominal curve must be a "
                            "model of a %s; this one reads %s", spec->part,
                            bg_part_sensor_name(spec->sensor), spec->sensor == BG_PART_JUNCTION ?
                            "voltage" : spec->sensor == BG_PART_IC ? "reported temperature or "
                            "code" : spec->sensor == BG_PART_NTC ? "resistance that falls" :
                            "resistance that rises",
                            bg_quantity_unit(bg_model_quantity(&spec->model)));
    if (table_path) {
        if (!spec->have_model)
            return bg_error_set(err, BG_EINVAL, "a nominal table needs the kind of model to "
                                "fit to it");
        if ((rc = fit_table(table_path, out, err)) != BG_OK)
            return rc;
    } else if (spec->have_model && !spec->source[0])
        snprintf(out->spec.source, sizeof out->spec.source, "coefficients as given");
    if ((rc = bg_store_part_spec_add(st, &out->spec, &out->spec.id, err)) != BG_OK)
        return rc;
    return bg_store_part_spec_get(st, spec->part, &out->spec, err);
}
