/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Reference thermometers and their corrections: a linear correction from a calibration
** certificate, a platinum thermometer read in ohm through its Callendar-Van Dusen
** coefficients (IEC 60751), or a standard platinum thermometer read in ohm through ITS-90
** (its resistance at the triple point of water and the deviation function of its
** sub-range). */
#ifndef BANDGAP_REFERENCE_H
#define BANDGAP_REFERENCE_H

#include <stddef.h>

#include "bandgap/error.h"

#define BG_REF_TEXT 201   /* identifiers and certificates: at most 200 bytes */
#define BG_REF_NOTE 1024  /* notes: at most 1023 bytes */
#define BG_REF_TIME 40

/* The sub-ranges of the scale a bath calibration uses, with the deviation function
** W - W_r = dW(W) of each (the text's section 3.3) and its calibration points:
**   AR_TPW  83.8058 .. 273.16 K   a(W-1) + b(W-1) ln W                       Ar, Hg
**   HG_TPW  234.3156 .. 273.16 K  a(W-1)                                    Hg
**   HG_GA   234.3156 .. 302.9146 K a(W-1) + b(W-1)^2                         Hg, Ga
**   TPW_GA  273.15 .. 302.9146 K  a(W-1)                                    Ga
**   TPW_IN  273.15 .. 429.7485 K  a(W-1)                                    In
**   TPW_SN  273.15 .. 505.078 K   a(W-1) + b(W-1)^2                         In, Sn
**   TPW_ZN  273.15 .. 692.677 K   a(W-1) + b(W-1)^2                         Sn, Zn
**   TPW_AL  273.15 .. 933.473 K   a(W-1) + b(W-1)^2 + c(W-1)^3              Sn, Zn, Al
**   TPW_AG  273.15 .. 1234.93 K   as TPW_AL + d(W - W(Al))^2 above Al        Sn, Zn, Al, Ag
** (the triple point of water, W = 1, is a calibration point of every one). */
typedef enum bg_its90_range {
    BG_ITS90_AR_TPW = 0, BG_ITS90_HG_TPW, BG_ITS90_HG_GA, BG_ITS90_TPW_GA, BG_ITS90_TPW_IN,
    BG_ITS90_TPW_SN, BG_ITS90_TPW_ZN, BG_ITS90_TPW_AL, BG_ITS90_TPW_AG, BG_ITS90_NRANGE
} bg_its90_range;

/* A thermometer's deviation function on one sub-range: its coefficients, and for TPW_AG the
** thermometer's own W at the aluminium point (w_al). */
typedef struct bg_its90_dev {
    bg_its90_range range;
    double a, b, c, d, w_al;
} bg_its90_dev;

typedef enum bg_ref_kind { BG_REF_NONE = 0, BG_REF_LINEAR, BG_REF_CVD, BG_REF_ITS90 } bg_ref_kind;

typedef struct bg_ref {
    long long id;
    char ident[BG_REF_TEXT], certificate[BG_REF_TEXT], due_date[BG_REF_TIME];
    bg_ref_kind kind;
    double lin_c0_k, lin_c1, lin_t0_k;       /* t = t_read + c0 + c1 (t_read - t0) */
    double cvd_r0_ohm, cvd_a, cvd_b, cvd_c;  /* IEC 60751 */
    double its90_rtpw_ohm;                   /* ITS-90: R(273.16 K), and the deviation */
    bg_its90_dev its90;                      /* function of the calibrated sub-range */
    char note[BG_REF_NOTE], created_at[BG_REF_TIME];
} bg_ref;

/* The correction's name as stored and shown: "none", "linear", "cvd", "its90". */
BG_API const char *bg_ref_kind_name(bg_ref_kind kind);

/* Check a reference's values: BG_EINVAL naming the reference when a linear correction has a
** non-finite c0 or c1 or t0 <= 0, a CVD one has R0 <= 0 or A zero or not finite, or an
** ITS-90 one has R(273.16 K) <= 0, an unknown sub-range, a non-finite coefficient, a
** coefficient its sub-range does not have that is not 0, or (TPW-Ag) W(Al) not above 1. */
BG_API int bg_ref_check(const bg_ref *ref, bg_error *err);

/* The true temperature (K) of one reading of reference 'ref' (NULL: no reference).
** 'raw' is the reference's reading: a temperature in K read off the thermometer, or with
** 'raw_is_ohm' its platinum resistance in ohm (needs a BG_REF_CVD or BG_REF_ITS90 reference:
** ITS-90 reads W = R / R(273.16 K) through bg_its90_t_from_w).  A linear
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

/* ITS-90 platinum thermometry (H. Preston-Thomas, "The International Temperature Scale of
** 1990 (ITS-90)", Metrologia 27 (1990) 3-10).  W(T90) = R(T90) / R(273.16 K), the ratio of a
** standard platinum resistance thermometer's resistance to its resistance at the triple
** point of water.  The reference function W_r is the text's equation (9a) from 13.8033 K to
** 273.16 K and (10a) from 273.15 K to 1234.93 K, with the constants of its Table 4. */
#define BG_ITS90_TMIN_K 13.8033
#define BG_ITS90_TMAX_K 1234.93

/* W_r at 't90_k' (K).  BG_EINVAL outside 13.8033 .. 1234.93 K. */
BG_API int bg_its90_wr(double t90_k, double *wr, bg_error *err);

/* T90 (K) at which the reference function equals 'wr': the text's inverse functions (9b),
** (10b) as the start, then Newton's method on (9a)/(10a) until the step is below 1e-10 K
** (the published inverses alone are equivalent only to 0.1 mK and 0.13 mK).  BG_EINVAL for a
** W_r outside W_r(13.8033 K) .. W_r(1234.93 K). */
BG_API int bg_its90_t_from_wr(double wr, double *t90_k, bg_error *err);

/* The sub-range's name ("Ar-TPW", "TPW-Zn", ...) and, into 'lo_k'/'hi_k', its limits. */
BG_API const char *bg_its90_range_name(bg_its90_range range, double *lo_k, double *hi_k);

/* The sub-range called 'name' (as bg_its90_range_name gives it, case-insensitive); BG_EINVAL
** listing the known names. */
BG_API int bg_its90_range_parse(const char *name, bg_its90_range *range, bg_error *err);

/* The calibration points of 'range' other than the triple point of water: their T90 (K) into
** 't90_k' (at most 4), in the order bg_its90_dev_solve takes them; returns their number. */
BG_API size_t bg_its90_range_points(bg_its90_range range, double t90_k[4]);

/* dW = W - W_r of the thermometer 'dev' at ratio 'w'. */
BG_API double bg_its90_dev_eval(const bg_its90_dev *dev, double w);

/* The deviation coefficients from the thermometer's W measured at the sub-range's calibration
** points ('w', 'n' values in the order of bg_its90_range_points): the linear equations of the
** text solved exactly.  BG_EINVAL when 'n' is not the number of points, a W is not finite and
** positive, or the equations are singular (two equal W). */
BG_API int bg_its90_dev_solve(bg_its90_range range, const double *w, size_t n,
                              bg_its90_dev *dev, bg_error *err);

/* T90 (K) of the thermometer 'dev' reading ratio 'w': W_r = W - dW(W), then
** bg_its90_t_from_wr.  BG_EINVAL when the result lies outside the sub-range (by more than
** 1 mK: the ranges meet at the triple point, 273.15 K to 273.16 K is shared). */
BG_API int bg_its90_t_from_w(const bg_its90_dev *dev, double w, double *t90_k, bg_error *err);

/* The ratio W the thermometer 'dev' reads at 't90_k': W - dW(W) = W_r(T90) solved by Newton's
** method.  BG_EINVAL outside the sub-range. */
BG_API int bg_its90_w_from_t(const bg_its90_dev *dev, double t90_k, double *w, bg_error *err);

#endif
