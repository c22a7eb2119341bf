/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Internal: what the QA files share (qa_probe.c, qa_summary.c, qa_part.c). */
#ifndef BANDGAP_QA_INT_H
#define BANDGAP_QA_INT_H

#include "bandgap/qa.h"

/* The drift limits of probe 'p' (whose 'lot' is set): as the options give them, else the
** part's defaults in 'spec', else the R25 tolerance. */
void bgi_qa_limits(const bg_qa_opts *o, const bg_part_spec *spec, bg_qa_probe *p);

/* The comparisons of the calibrations in 'p' (fits, started_at, n: read already), as
** bg_qa_probe_drift makes them; sets 'flagged'.  Errors as bg_qa_probe_drift's. */
int bgi_qa_probe_compare(bg_qa_probe *p, const bg_qa_opts *o, bg_error *err);

/* A lot's versions (bg_store_lot_versions), the row first: each version's lot as in force
** and the seconds of its validity (-inf for the first). */
struct bgi_lot_versions {
    bg_lot *lot;
    double *t;
    size_t n, cap;
    int oom;
};
int bgi_qa_lot_versions_load(bg_store *st, const char *code, struct bgi_lot_versions *v,
                             bg_error *err);
/* The version in force at 'when' (the first when 'when' is no time); NULL when none loaded. */
const bg_lot *bgi_qa_lot_version_at(const struct bgi_lot_versions *v, const char *when);
void bgi_qa_lot_versions_free(struct bgi_lot_versions *v);

/* One lot's charted values made already: its statistics by the same options, and the
** as-found values of its probes from their histories since the same 'since', in probe id
** order (the order bg_store_lot_history gives, so that the sums are made in that order). */
struct bgi_qa_have {
    const bg_qa_lot *stats;
    const double *asf;
    size_t nasf;
};
/* bg_qa_part_charts with one lot's values made already ('have'; NULL: none): that lot is
** charted from them, not read and computed a second time. */
int bgi_qa_part_charts_with(bg_store *st, const char *part, const bg_qa_opts *o,
                            const struct bgi_qa_have *have, bg_qa_part *out, bg_error *err);
/* The as-found drift (mK, signed) of a probe whose n calibrations are 'f' started at 'when'
** (oldest first), between its two newest at the middle of their common range: 1 and '*mk',
** or 0 when it has none (fewer than two, or ranges that do not overlap). */
int bgi_qa_asfound(const bg_fit_row *f, char (*when)[BG_TIME], size_t n, double *mk);

/* The sensor kinds other than the NTC (qa_kind.c): the names, units and tolerances of a lot's
** two values from its part's specification (l->spec, l->lot read; an NTC's from the lot);
** a probe's two values from its fit, and whether one was read outside the calibrated range;
** the deviation T_nom(x(T)) - T (K) from the kind's nominal values; the half-width (K) of the
** band the kind's tolerances allow at 't_k' (NaN for an NTC). */
void bgi_qa_kind_setup(bg_qa_lot *l);
/* A lot of another kind than NTC (schema 13) is judged against its part's specification of
** that kind: BG_EINVAL, saying how to give it one, when the part's specification in force is
** missing or of another kind. */
int bgi_qa_lot_kind_check(const bg_lot *lot, const bg_part_spec *spec, bg_error *err);
int bgi_qa_kind_values(const bg_qa_lot *l, const bg_fit_row *f, double *v1, double *v2,
                       int *extrap, bg_error *err);
int bgi_qa_kind_dev(const bg_qa_lot *l, const bg_model *m, double t_k, double *dev_k,
                    bg_error *err);
double bgi_qa_kind_band_k(const bg_qa_lot *l, double t_k);

#endif
