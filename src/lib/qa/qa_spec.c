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
#include "bandgap/units.h"

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
