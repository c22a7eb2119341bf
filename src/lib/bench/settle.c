/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The stability criterion's arithmetic: the least-squares line through a window of
** reference readings, its slope (the drift) and the scatter of the readings about it. */
#include <math.h>

#include "bandgap/bandgap.h"

/* Centred sums (two passes), so a window of times near 1.7e9 s loses no digits. */
int bg_settle_line(const double *t, const double *v, size_t n, double *slope, double *scatter,
                   bg_error *err)
{
    double mt = 0.0, mv = 0.0, stt = 0.0, stv = 0.0, ss = 0.0;
    if (n < 3)
        return bg_error_set(err, BG_EINVAL, "a line through %zu readings: at least 3 needed",
                            n);
    for (size_t i = 0; i < n; i++)
        mt += t[i], mv += v[i];
    mt /= (double)n, mv /= (double)n;
    for (size_t i = 0; i < n; i++) {
        double dt = t[i] - mt;
        stt += dt * dt;
        stv += dt * (v[i] - mv);
    }
    if (!(stt > 0.0))
        return bg_error_set(err, BG_EINVAL, "a line through readings all taken at one time");
    double b = stv / stt;
    for (size_t i = 0; i < n; i++) {
        double r = v[i] - mv - b * (t[i] - mt);
        ss += r * r;
    }
    *slope = b;
    *scatter = sqrt(ss / (double)(n - 2));
    return BG_OK;
}
