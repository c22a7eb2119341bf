/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The cost baseline of tests/firmware/cost.sh: what a table replaces, a conversion computed on
** the target.  The 10k divider (thermistor on the low side, 12-bit ADC, full scale 4096)
** solved for R, then Steinhart-Hart 1/T = A + B ln R + C (ln R)^3 with the C library's
** single-precision logf, in 0.01 degC.  A, B, C: the coefficients often quoted for a 10k
** NTC (from memory; only the cost is measured, not the values). */
#include <math.h>
#include <stdint.h>

int32_t t_lookup(uint32_t code);
int32_t t_lookup(uint32_t code)
{
    float r, l, t, v;
    if (code < 1u)
        return (int32_t)-2147483647L - 1;
    if (code > 4094u)
        return (int32_t)2147483647L;
    r = 10000.0f * (float)code / (float)(4096u - code);
    l = logf(r);
    t = 1.0f / (1.129148e-3f + 2.34125e-4f * l + 8.76741e-8f * l * l * l);
    v = 100.0f * (t - 273.15f);
    return (int32_t)(v < 0.0f ? v - 0.5f : v + 0.5f);
}
