/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* vbe: a junction (a diode, or a transistor's base-emitter junction) at a constant current,
** read in volts:
**   V(T) = Vg0 (1 - T/T0) + V0 T/T0 - eta (k T / q) ln(T / T0),
** T0 the reference temperature (T_r) and V0 the voltage there; Vg0, V0 and eta are fitted.
** The form is Y. P. Tsividis, "Accurate analysis of temperature effects in I_C-V_BE
** characteristics with application to bandgap reference sources", IEEE J. Solid-State
** Circuits SC-15 (1980) 1076-1084, eq. (5) with eta for (eta - x) (from memory: the paper
** could not be read here; the form is the one the device literature quotes).  k and q are
** exact in the 2019 SI.  V is linear in (Vg0, V0, eta): a linear fit of V starts the least
** squares in temperature.  Vg0 is the apparent band-gap voltage, shown beside the published
** band gap of silicon at 0 K. */
#include <math.h>
#include <stdio.h>

#include "model_int.h"

/* Silicon: E_g(0) = 1.166 eV in the Varshni form E_g(T) = E_g(0) - alpha T^2 / (T + beta),
** alpha = 0.473 meV/K, beta = 636 K (published: "Silicon Bandgap", EEE docs,
** kaklin.github.io/eee-docs/html/physics/bandgap.html, after its reference [1]; Y. P.
** Varshni, Physica 34 (1967) 149). */
#define SI_EG0_EV 1.166

static size_t vbe_npar(const bg_model *m)
{
    (void)m;
    return 3;
}

static const char *vbe_coef_name(const bg_model *m, size_t i)
{
    static const char *names[] = { "Vg0", "V0", "eta" };
    (void)m;
    return names[i];
}

static void vbe_phi(const bg_model *m, double t_k, double *phi)
{
    double tr = m->t0_k;
    phi[0] = 1.0 - t_k / tr;
    phi[1] = t_k / tr;
    phi[2] = -BGI_K_OVER_Q * t_k * log(t_k / tr);
}

static int vbe_xfun(const bg_model *m, double t_k, double *x, double *dxdt, double *dxdc)
{
    double phi[3], tr = m->t0_k;
    vbe_phi(m, t_k, phi);
    *x = m->coef[0] * phi[0] + m->coef[1] * phi[1] + m->coef[2] * phi[2];
    *dxdt = (m->coef[1] - m->coef[0]) / tr - m->coef[2] * BGI_K_OVER_Q * (log(t_k / tr) + 1.0);
    if (dxdc)
        for (size_t i = 0; i < 3; i++)
            dxdc[i] = phi[i];
    return BG_OK;
}

/* dV/dT at T0 (the trade's -2 mV/K) with its uncertainty, and Vg0 beside silicon's gap. */
static size_t vbe_derived(const bg_model *m, const double *cov, double t_min_k, double t_max_k,
                          bg_derived *out, size_t max)
{
    /* dV/dT(T0) = (V0 - Vg0)/T0 - eta k/q: gradient (-1/T0, 1/T0, -k/q) */
    double tr = m->t0_k, g[3] = { -1.0 / tr, 1.0 / tr, -BGI_K_OVER_Q }, s = 0.0;
    (void)t_min_k, (void)t_max_k;
    if (max < 2)
        return 2;
    for (size_t i = 0; cov && i < 3; i++)
        for (size_t j = 0; j < 3; j++)
            s += g[i] * cov[i * 3 + j] * g[j];
    snprintf(out[0].name, sizeof out[0].name, "dV/dT at T0");
    out[0].value = (m->coef[1] - m->coef[0]) / tr - m->coef[2] * BGI_K_OVER_Q;
    out[0].u = cov ? sqrt(s) : NAN;
    snprintf(out[0].unit, sizeof out[0].unit, "V/K");
    out[0].text[0] = '\0';
    snprintf(out[0].note, sizeof out[0].note, "a silicon junction at constant current falls "
             "by about 2 mV/K near room temperature (common practice)");
    snprintf(out[1].name, sizeof out[1].name, "apparent band-gap voltage Vg0");
    out[1].value = m->coef[0];
    out[1].u = cov ? sqrt(cov[0]) : NAN;
    snprintf(out[1].unit, sizeof out[1].unit, "V");
    out[1].text[0] = '\0';
    snprintf(out[1].note, sizeof out[1].note, "beside silicon's band gap at 0 K, E_g(0)/q = "
             "%.3f V (Varshni form; Y. P. Varshni, Physica 34 (1967) 149); the extrapolation "
             "of a real junction usually gives 1.17 .. 1.22 V depending on eta", SI_EG0_EV);
    return 2;
}

static int vbe_x_ok(const bg_model *m, double x)
{
    (void)m;
    return x > 0.0;
}

static const char *const volt_falling[] = { "vbe", "cheb:2", "cheb:3", "cheb:4", "cheb:5",
                                            NULL };

const bg_model_type bgi_model_vbe = {
    .name = "vbe",
    .spelling = "vbe",
    .formula = "V = Vg0 (1 - T/T0) + V0 T/T0 - eta (k T/q) ln(T/T0)",
    .flags = BG_MODEL_HAS_T0,
    .npar = vbe_npar,
    .coef_name = vbe_coef_name,
    .quantity = BG_QTY_VOLTAGE,
    .direction = -1,
    .candidates = volt_falling,
    .xfun = vbe_xfun,
    .lin_in_x = 0,
    .lin_row = vbe_phi,
    .x_ok = vbe_x_ok,
    .derived = vbe_derived,
};
