/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* cheb:N (N = 1..5): a Chebyshev series of T in the scaled reading,
**   T = sum_{k=0..N} a_k T_k(z),   z = ((x - x_lo) - (x_hi - x)) / (x_hi - x_lo),
** T_k the Chebyshev polynomials of the first kind (T_0 = 1, T_1 = z,
** T_(k+1) = 2 z T_k - T_(k-1)), the form used for cryogenic diode and resistance thermometer
** calibrations (published: L. G. Rubin, B. L. Brandt, H. H. Sample, "Cryogenic thermometry: a
** review of recent progress, II", Cryogenics 22 (1982) 491-503, from memory); the series is
** summed by Clenshaw's recurrence (W. H. Press et al., Numerical Recipes, 3rd ed., 2007,
** section 5.8), and its a_k are those of numpy.polynomial.chebyshev on the domain
** [x_lo, x_hi] (a_0 not halved).  x_lo, x_hi are the kind's parameters, set by the fit to the
** smallest and largest reading.  The kind reads volts (a junction thermometer); T is linear in
** the a_k, so a linear least-squares fit in temperature is the whole fit.  Where one series
** cannot hold a bound over the range, bg_fit_split divides it. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "model_int.h"

static const char *const cheb_params[] = { "x_lo", "x_hi", NULL };

static int cheb_parse(const char *name, bg_model *m)
{
    if (strncmp(name, "cheb:", 5) != 0 || name[5] < '1' || name[5] > '5' || name[6])
        return 0;
    m->degree = (unsigned)(name[5] - '0');
    return 1;
}

static void cheb_write_name(const bg_model *m, char *buf, size_t size)
{
    snprintf(buf, size, "cheb:%u", m->degree);
}

static size_t cheb_npar(const bg_model *m)
{
    return m->degree + 1;
}

static const char *cheb_coef_name(const bg_model *m, size_t i)
{
    static const char *names[] = { "a0", "a1", "a2", "a3", "a4", "a5" };
    (void)m;
    return names[i];
}

static int cheb_check_params(const bg_model *m, bg_error *err)
{
    if (!(m->par[1] > m->par[0]))
        return bg_error_set(err, BG_EINVAL, "model 'cheb:%u' needs x_lo < x_hi (the readings' "
                            "range; the fit sets them)", m->degree);
    return BG_OK;
}

static double zof(const bg_model *m, double x)
{
    return ((x - m->par[0]) - (m->par[1] - x)) / (m->par[1] - m->par[0]);
}

static void cheb_lin_row(const bg_model *m, double x, double *phi)
{
    double z = zof(m, x);
    phi[0] = 1.0;
    if (m->degree >= 1)
        phi[1] = z;
    for (unsigned k = 2; k <= m->degree; k++)
        phi[k] = 2.0 * z * phi[k - 1] - phi[k - 2];
}

/* Clenshaw's recurrence for sum a_k T_k(z) and, for the derivative, sum a_k T_k'(z) with
** T_k' = k U_(k-1) (U the polynomials of the second kind). */
static int cheb_tfun(const bg_model *m, double x, double *t_k, double *dtdx, double *dtdc)
{
    double z, b1 = 0.0, b2 = 0.0, u0 = 1.0, u1 = 0.0, d = 0.0;
    if (!(m->par[1] > m->par[0]))
        return BG_EINVAL;
    z = zof(m, x);
    for (int k = (int)m->degree; k >= 1; k--) {
        double b0 = 2.0 * z * b1 - b2 + m->coef[k];
        b2 = b1, b1 = b0;
    }
    *t_k = z * b1 - b2 + m->coef[0];
    /* derivative: U_0 = 1, U_1 = 2z, U_(k) = 2 z U_(k-1) - U_(k-2) */
    for (unsigned k = 1; k <= m->degree; k++) {
        double uk1 = (k == 1) ? 1.0 : u0; /* U_(k-1) */
        d += m->coef[k] * (double)k * uk1;
        double un = (k == 1) ? 2.0 * z : 2.0 * z * u0 - u1;
        u1 = (k == 1) ? 1.0 : u0;
        u0 = un;
    }
    *dtdx = d * 2.0 / (m->par[1] - m->par[0]);
    if (dtdc)
        cheb_lin_row(m, x, dtdc);
    return BG_OK;
}

/* First guess of x(T): the straight line through the series' values at the range's ends. */
static double cheb_x_guess(const bg_model *m, double t_k)
{
    double tl, th, d;
    if (cheb_tfun(m, m->par[0], &tl, &d, NULL) != BG_OK ||
        cheb_tfun(m, m->par[1], &th, &d, NULL) != BG_OK || tl == th)
        return 0.5 * (m->par[0] + m->par[1]);
    return m->par[0] + (t_k - tl) * (m->par[1] - m->par[0]) / (th - tl);
}

static void cheb_fit_params(bg_model *m, double x_min, double x_max)
{
    m->par[0] = x_min, m->par[1] = x_max;
}

const bg_model_type bgi_model_cheb = {
    .name = "cheb",
    .spelling = "cheb:1 .. cheb:5",
    .formula = "T = sum a_k T_k(z), z = ((V - x_lo) - (x_hi - V)) / (x_hi - x_lo)",
    .parse = cheb_parse,
    .write_name = cheb_write_name,
    .npar = cheb_npar,
    .coef_name = cheb_coef_name,
    .quantity = BG_QTY_VOLTAGE,
    .direction = -1,
    .params = cheb_params,
    .check_params = cheb_check_params,
    .tfun = cheb_tfun,
    .x_guess = cheb_x_guess,
    .lin_in_x = 1,
    .lin_row = cheb_lin_row,
    .fit_params = cheb_fit_params,
};
