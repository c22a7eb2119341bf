/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Reference thermometers and their corrections: a linear correction from a calibration
** certificate, or a platinum thermometer read in ohm through its Callendar-Van Dusen
** coefficients (IEC 60751). */
#ifndef BANDGAP_REFERENCE_H
#define BANDGAP_REFERENCE_H

#include <stddef.h>

#include "bandgap/error.h"

#define BG_REF_TEXT 201   /* identifiers and certificates: at most 200 bytes */
#define BG_REF_NOTE 1024  /* notes: at most 1023 bytes */
#define BG_REF_TIME 40

typedef enum bg_ref_kind { BG_REF_NONE = 0, BG_REF_LINEAR, BG_REF_CVD } bg_ref_kind;

typedef struct bg_ref {
    long long id;
    char ident[BG_REF_TEXT], certificate[BG_REF_TEXT], due_date[BG_REF_TIME];
    bg_ref_kind kind;
    double lin_c0_k, lin_c1, lin_t0_k;       /* t = t_read + c0 + c1 (t_read - t0) */
    double cvd_r0_ohm, cvd_a, cvd_b, cvd_c;  /* IEC 60751 */
    char note[BG_REF_NOTE], created_at[BG_REF_TIME];
} bg_ref;

/* The correction's name as stored and shown: "none", "linear", "cvd". */
BG_API const char *bg_ref_kind_name(bg_ref_kind kind);

/* Check a reference's values: BG_EINVAL naming the reference when a linear correction has a
** non-finite c0 or c1 or t0 <= 0, or a CVD one has R0 <= 0 or A zero or not finite. */
BG_API int bg_ref_check(const bg_ref *ref, bg_error *err);

/* The true temperature (K) of one reading of reference 'ref' (NULL: no reference).
** 'raw' is the reference's reading: a temperature in K read off the thermometer, or with
** 'raw_is_ohm' its platinum resistance in ohm (needs a BG_REF_CVD reference).  A linear
** reference adds c0 + c1 (t - t0); BG_REF_NONE and NULL keep the reading.  BG_EINVAL when the
** result is at or below 0 K, or as bg_cvd_t_from_r. */
BG_API int bg_ref_correct(const bg_ref *ref, int raw_is_ohm, double raw, double *t_k,
                          bg_error *err);

/* Platinum resistance thermometer, IEC 60751 (Callendar-Van Dusen):
** R(t) = R0 (1 + A t + B t^2 + C (t - 100) t^3) for t < 0 degC, R0 (1 + A t + B t^2) above.
** Resistance (ohm) at 't_k'. */
BG_API double bg_cvd_r_from_t(double r0_ohm, double a, double b, double c, double t_k);

/* Temperature (K) of a platinum thermometer reading 'r_ohm': the quadratic's root for
** R >= R0, Newton's method from it below, to 1e-9 K.  BG_EINVAL when 'r_ohm' is not
** positive or outside -200 .. 850 degC (the range of IEC 60751). */
BG_API int bg_cvd_t_from_r(double r0_ohm, double a, double b, double c, double r_ohm,
                           double *t_k, bg_error *err);

#endif
