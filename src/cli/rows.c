/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* JSON fields of stored records, shared by list, probe, show and export. */
#include "cli.h"

void cli_json_reading(json_out *j, const bg_reading_row *g)
{
    json_obj(j, NULL);
    json_int(j, "id", g->id);
    json_int(j, "line", (long long)g->line);
    json_num(j, "t_raw", g->t_raw);
    json_str(j, "t_raw_unit", g->t_raw_unit);
    json_num(j, "t_k", g->t_k);
    json_num(j, "ohms", g->r_ohm);
    json_num(j, "u_temp_k", g->u_t_k);
    json_num(j, "u_ohms", g->u_r_ohm);
    json_str(j, "time", g->time[0] ? g->time : NULL);
    json_str(j, "note", g->note[0] ? g->note : NULL);
    if (g->excluded) {
        json_obj(j, "excluded");
        json_str(j, "reason", g->excl_reason);
        json_str(j, "by", g->excl_by);
        json_str(j, "at", g->excl_at);
        json_obj_end(j);
    } else
        json_null(j, "excluded");
    json_obj_end(j);
}

void cli_json_run_fields(json_out *j, const bg_run *r)
{
    json_int(j, "run", r->id);
    json_str(j, "probe", r->serial);
    json_str(j, "reference", r->ref_ident[0] ? r->ref_ident : NULL);
    json_str(j, "operator", r->operator_name[0] ? r->operator_name : NULL);
    json_str(j, "medium", r->medium[0] ? r->medium : NULL);
    json_str(j, "ambient", r->ambient[0] ? r->ambient : NULL);
    json_str(j, "excitation", r->excitation[0] ? r->excitation : NULL);
    json_str(j, "started_at", r->started_at);
    json_str(j, "source", r->source);
    json_str(j, "note", r->note[0] ? r->note : NULL);
    json_str(j, "imported_at", r->imported_at);
    json_int(j, "readings", r->nreadings);
    json_int(j, "excluded", r->nexcluded);
    json_int(j, "fits", r->nfits);
}

void cli_json_fit_brief(json_out *j, const bg_fit_row *f)
{
    char name[16];
    json_obj(j, NULL);
    json_int(j, "fit", f->id);
    json_int(j, "run", f->run_id);
    json_str(j, "probe", f->serial);
    json_str(j, "model", bg_model_name(&f->model, name, sizeof name));
    if (f->model.kind == BG_MODEL_BETA)
        json_num(j, "t0_k", f->model.t0_k);
    json_nums(j, "coefficients", f->model.coef, f->npar);
    json_int(j, "n", (long long)f->n);
    json_int(j, "dof", (long long)f->dof);
    json_num(j, "chi2", f->chi2);
    json_num(j, "rms_mk", f->rms_mk);
    json_num(j, "max_abs_mk", f->max_abs_mk);
    json_num(j, "t_min_k", f->t_min_k);
    json_num(j, "t_max_k", f->t_max_k);
    json_str(j, "program_version", f->program_version);
    json_str(j, "created_at", f->created_at);
    json_obj_end(j);
}
