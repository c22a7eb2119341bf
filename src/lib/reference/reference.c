/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Reference thermometers: the checks of their corrections and the correction of a reading,
** a linear certificate correction (GUM H.3 style) or a platinum resistance through
** Callendar-Van Dusen (IEC 60751:2008, bg_cvd_t_from_r). */
#include <math.h>

#include "bandgap/reference.h"

const char *bg_ref_kind_name(bg_ref_kind kind)
{
    return kind == BG_REF_LINEAR ? "linear" : kind == BG_REF_CVD ? "cvd" : "none";
}

int bg_ref_check(const bg_ref *ref, bg_error *err)
{
    if (ref->kind == BG_REF_CVD && !(ref->cvd_r0_ohm > 0.0 && isfinite(ref->cvd_a) &&
                                     ref->cvd_a != 0.0 && isfinite(ref->cvd_b) &&
                                     isfinite(ref->cvd_c)))
        return bg_error_set(err, BG_EINVAL, "reference '%s': Callendar-Van Dusen needs R0 > 0 "
                            "and finite A (not 0), B, C", ref->ident);
    if (ref->kind == BG_REF_LINEAR && !(isfinite(ref->lin_c0_k) && isfinite(ref->lin_c1) &&
                                        ref->lin_t0_k > 0.0))
        return bg_error_set(err, BG_EINVAL, "reference '%s': the linear correction needs "
                            "finite c0, c1 and t0", ref->ident);
    return BG_OK;
}

int bg_ref_correct(const bg_ref *ref, int raw_is_ohm, double raw, double *t_k, bg_error *err)
{
    if (raw_is_ohm) {
        if (!ref || ref->kind != BG_REF_CVD)
            return bg_error_set(err, BG_EINVAL, "a reading in ohm needs a reference with "
                                "Callendar-Van Dusen coefficients");
        return bg_cvd_t_from_r(ref->cvd_r0_ohm, ref->cvd_a, ref->cvd_b, ref->cvd_c, raw, t_k,
                               err);
    }
    *t_k = raw;
    if (ref && ref->kind == BG_REF_LINEAR)
        *t_k += ref->lin_c0_k + ref->lin_c1 * (raw - ref->lin_t0_k);
    if (!(*t_k > 0.0))
        return bg_error_set(err, BG_EINVAL, "the corrected temperature is at or below 0 K");
    return BG_OK;
}
