/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Reference thermometers: the checks of their corrections and the correction of a reading,
** a linear certificate correction (GUM H.3 style), a platinum resistance through
** Callendar-Van Dusen (IEC 60751:2008, bg_cvd_t_from_r), or a standard platinum resistance
** through ITS-90 (its90.c). */
#include <math.h>

#include "bandgap/reference.h"

const char *bg_ref_kind_name(bg_ref_kind kind)
{
    return kind == BG_REF_LINEAR ? "linear"
         : kind == BG_REF_CVD    ? "cvd"
         : kind == BG_REF_ITS90  ? "its90"
                                 : "none";
}

/* Which of a, b, c, d each sub-range has (its deviation function, bg_its90_range_points). */
static int its90_check(const bg_ref *ref, bg_error *err)
{
    const bg_its90_dev *d = &ref->its90;
    double pts[4];
    if ((unsigned)d->range >= BG_ITS90_NRANGE)
        return bg_error_set(err, BG_EINVAL, "reference '%s': unknown ITS-90 sub-range", ref->ident);
    size_t n = bg_its90_range_points(d->range, pts);
    const double v[4] = { d->a, d->b, d->c, d->d };
    if (!(ref->its90_rtpw_ohm > 0.0 && isfinite(ref->its90_rtpw_ohm)))
        return bg_error_set(err, BG_EINVAL, "reference '%s': ITS-90 needs R(273.16 K) > 0",
                            ref->ident);
    for (size_t i = 0; i < 4; i++) {
        if (!isfinite(v[i]))
            return bg_error_set(err, BG_EINVAL, "reference '%s': ITS-90 coefficient %c is not "
                                "finite", ref->ident, "abcd"[i]);
        if (i >= n && v[i] != 0.0)
            return bg_error_set(err, BG_EINVAL, "reference '%s': sub-range %s has %zu "
                                "coefficient%s, not %c", ref->ident,
                                bg_its90_range_name(d->range, NULL, NULL), n, n == 1 ? "" : "s",
                                "abcd"[i]);
    }
    if (d->range == BG_ITS90_TPW_AG && !(d->w_al > 1.0 && isfinite(d->w_al)))
        return bg_error_set(err, BG_EINVAL, "reference '%s': sub-range TPW-Ag needs the "
                            "thermometer's W at the aluminium point (above 1)", ref->ident);
    return BG_OK;
}

int bg_ref_check(const bg_ref *ref, bg_error *err)
{
    if (ref->kind == BG_REF_CVD && !(ref->cvd_r0_ohm > 0.0 && isfinite(ref->cvd_a) &&
                                     ref->cvd_a != 0.0 && isfinite(ref->cvd_b) &&
                                     isfinite(ref->cvd_c)))
        return bg_error_set(err, BG_EINVAL, "reference '%s': Callendar-Van Dusen needs R0 > 0 "
                            "and finite A (not 0), B, C", ref->ident);
    if (ref->kind == BG_REF_ITS90)
        return its90_check(ref, err);
    if (ref->kind == BG_REF_LINEAR && !(isfinite(ref->lin_c0_k) && isfinite(ref->lin_c1) &&
                                        ref->lin_t0_k > 0.0))
        return bg_error_set(err, BG_EINVAL, "reference '%s': the linear correction needs "
                            "finite c0, c1 and t0", ref->ident);
    return BG_OK;
}

int bg_ref_correct(const bg_ref *ref, int raw_is_ohm, double raw, double *t_k, bg_error *err)
{
    if (raw_is_ohm) {
        if (ref && ref->kind == BG_REF_ITS90)
            return bg_its90_t_from_w(&ref->its90, raw / ref->its90_rtpw_ohm, t_k, err);
        if (!ref || ref->kind != BG_REF_CVD)
            return bg_error_set(err, BG_EINVAL, "a reading in ohm needs a reference with "
                                "Callendar-Van Dusen or ITS-90 coefficients");
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
