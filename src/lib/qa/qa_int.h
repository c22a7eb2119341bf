/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Internal: what the QA files share (qa_probe.c, qa_summary.c). */
#ifndef BANDGAP_QA_INT_H
#define BANDGAP_QA_INT_H

#include "bandgap/qa.h"

/* The drift limits of probe 'p' (whose 'lot' is set): as the options give them, else the
** part's defaults in 'spec', else the R25 tolerance. */
void bgi_qa_limits(const bg_qa_opts *o, const bg_part_spec *spec, bg_qa_probe *p);

/* The comparisons of the calibrations in 'p' (fits, started_at, n: read already), as
** bg_qa_probe_drift makes them; sets 'flagged'.  Errors as bg_qa_probe_drift's. */
int bgi_qa_probe_compare(bg_qa_probe *p, const bg_qa_opts *o, bg_error *err);

#endif
