/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The lot report's sections, rendered from a computed lot summary (qa.h). */
#ifndef BANDGAP_REPORT_LOT_H
#define BANDGAP_REPORT_LOT_H

#include <stdio.h>

#include "bandgap/error.h"
#include "bandgap/qa.h"

/* Write the body sections of the lot report for 's' (from bg_qa_lot_summarize) to 'f' as
** HTML: the probes and the lot statistics with a histogram of the R25 deviations, the
** deviation from the nominal curve against the tolerance band, each probe's drift since its
** previous calibration, and the control charts of the part (or why there are none).  The page
** frame around them is the caller's.  Returns BG_OK, or BG_EIO when 'f' reports an error. */
BG_API int bg_report_lot_sections(FILE *f, const bg_qa_lot_summary *s, bg_error *err);

#endif
