/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* What a table costs on the core it is emitted for: its flash (the table, exact, plus the
** lookup code and the library helpers it pulls in) and the time of one conversion, from
** measurements on the targets themselves (make bench-firmware, tests/firmware/cost.sh):
** avr-gcc 5.4.0 and avr-libc 2.0.0 on an ATmega328P under simavr 1.6 (cycles, Timer1);
** arm-none-eabi-gcc 12.2.1 with newlib 3.3.0 on QEMU 7.2's micro:bit (Cortex-M0) and
** mps2-an386 (Cortex-M4F) machines (instructions, one per logged block); every file -Os.
** The reference table: 10k NTC, B 3950 K, 10k low-side divider, 12-bit ADC, -40 .. 125 degC
** within 0.05 K.  Code bytes: the image with the table less the image with a do-nothing
** lookup, less the table's bytes.  Per call: the mean over the codes inside the range; it
** depends little on the table for uniform and indexed lookups, and grows with the binary
** search's steps (log2 of the segments) for minimal ones, so it is a model beyond the
** reference table, which the firmware check (tests/firmware/run.sh) holds to the measured
** cycles of every AVR table it runs. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "lut_int.h"

/* per strategy (uniform, minimal, indexed): the form with the narrow arithmetic (uniform:
** 16-bit on the AVR; segments: int16_t slopes), the 32-bit form, and float */
typedef struct {
    double per_call;
    unsigned code_bytes;
    double per_step; /* the chained form: per_call + per_step x the segments walked */
} cost_point;

static const struct {
    const char *unit, *measured;
    cost_point narrow[3], wide[3], flt[3];
    cost_point every_code; /* uniform, a breakpoint at every code: one read */
    cost_point aligned;    /* indexed, the AVR's aligned form (bgi_lut_aligned_try), an
                           ** index of at most 256 entries found with 8-bit shifts */
    cost_point aligned_long; /* the same with a longer index: a 16-bit shift */
    cost_point chained;    /* minimal, the chained form (lut_chain.c): the time is a fixed
                           ** part and one per segment walked (the mean over the codes); on
                           ** the reference table every code took exactly 33 + 28 k cycles
                           ** on the AVR (k segments walked), 7 + 24 k instructions on the
                           ** M0 and 5 + 20 k on the M4 */
} costs[] = {
    [BG_LUT_AVR] = { "cycles", "avr-gcc 5.4.0 -Os, avr-libc 2.0.0, simavr 1.6 (ATmega328P)",
                     { { 108.5, 180 }, { 270.3, 250 }, { 181.0, 271 } },
                     { { 261.7, 402 }, { 366.2, 280 }, { 274.0, 295 } },
                     { { 705.4, 1000 }, { 800.0, 1066 }, { 517.1, 1003 } }, { 42.0, 76 },
                     { 97.0, 163 }, { 105.0, 158 }, { 33.0, 97, 28.0 } },
    [BG_LUT_CORTEX_M0] = { "instructions", "arm-none-eabi-gcc 12.2.1 -Os, newlib 3.3.0, QEMU 7.2 "
                           "micro:bit (Cortex-M0)",
                           { { 29.4, 86 }, { 78.8, 98 }, { 34.8, 113 } },
                           { { 29.4, 86 }, { 78.7, 102 }, { 32.9, 109 } },
                           { { 388.2, 2508 }, { 298.2, 1702 }, { 252.4, 1709 } },
                           { 10.0, 42 }, { 0, 0 }, { 0, 0 }, { 7.0, 101, 24.0 } },
    [BG_LUT_CORTEX_M4] = { "instructions", "arm-none-eabi-gcc 12.2.1 -Os -mfpu=fpv4-sp-d16 "
                           "-mfloat-abi=hard, newlib 3.3.0, QEMU 7.2 mps2-an386 (Cortex-M4F)",
                           { { 22.5, 74 }, { 68.8, 94 }, { 27.0, 97 } },
                           { { 22.5, 74 }, { 68.8, 90 }, { 24.1, 89 } },
                           { { 17.4, 72 }, { 67.8, 98 }, { 23.1, 101 } }, { 9.0, 38 },
                           { 0, 0 }, { 0, 0 }, { 5.0, 85, 20.0 } },
};

int bgi_lut_uniform16(const bg_lut *t)
{
    long maxd = 0, fmax = (1L << t->shift) - 1;
    if (t->strategy != BG_LUT_UNIFORM || t->format == BG_LUT_FLOAT || t->wide ||
        t->shift == 0 || t->code_hi > 65535)
        return 0;
    for (size_t i = 0; i + 1 < t->n; i++) {
        long d = labs((long)t->y[i + 1] - (long)t->y[i]);
        maxd = d > maxd ? d : maxd;
    }
    return maxd * fmax + (1L << (t->shift - 1)) <= 32767;
}

int bg_lut_cost_on(const bg_lut *t, bg_lut_target target, bg_lut_target_cost *out,
                   bg_error *err)
{
    memset(out, 0, sizeof *out);
    out->table_bytes = out->flash_bytes = t->bytes;
    if (target == BG_LUT_HOST)
        return BG_OK; /* no measurement: the host's compiler is not known */
    if ((unsigned)target >= sizeof costs / sizeof costs[0] || (unsigned)t->strategy > 2)
        return bg_error_set(err, BG_EINVAL, "no such target or strategy");
    const cost_point *p;
    if (t->strategy == BG_LUT_UNIFORM && t->shift == 0 && t->format != BG_LUT_FLOAT)
        p = &costs[target].every_code;
    else if (t->format == BG_LUT_FLOAT)
        p = &costs[target].flt[t->strategy];
    else if (t->chained)
        p = &costs[target].chained;
    else if (t->aligned && target == BG_LUT_AVR)
        p = t->nidx > 256 ? &costs[target].aligned_long : &costs[target].aligned;
    else if (t->strategy == BG_LUT_UNIFORM)
        p = target != BG_LUT_AVR || bgi_lut_uniform16(t) ? &costs[target].narrow[0]
                                                          : &costs[target].wide[0];
    else
        p = t->narrow ? &costs[target].narrow[t->strategy] : &costs[target].wide[t->strategy];
    out->unit = costs[target].unit, out->measured = costs[target].measured;
    if (p->code_bytes == 0)
        return BG_OK; /* not measured */
    out->code_bytes = p->code_bytes;
    out->flash_bytes = t->bytes + p->code_bytes;
    out->per_call = p->per_call;
    if (t->chained)
        out->per_call = p->per_call + p->per_step * bgi_lut_chain_steps(t);
    else if (t->strategy == BG_LUT_MINIMAL && t->n > 0) {
        /* the reference table's 30 segments take 5 search steps; each step more or less
        ** costs what one step costs there: (per call - the indexed lookup's) / 5 */
        const cost_point *ix = t->narrow ? &costs[target].narrow[2] : &costs[target].wide[2];
        double steps = ceil(log2((double)t->n));
        if (t->format != BG_LUT_FLOAT && ix->per_call > 0)
            out->per_call = ix->per_call + (p->per_call - ix->per_call) * steps / 5.0;
    }
    return BG_OK;
}

double bgi_lut_choice_cost(const bg_lut_spec *s, const bg_lut *t)
{
    bg_lut_target_cost c;
    if (s->target == BG_LUT_HOST || bg_lut_cost_on(t, s->target, &c, NULL) != BG_OK ||
        c.per_call <= 0)
        return (double)t->bytes;
    if (s->optimize == BG_LUT_OPT_TIME)
        return c.per_call + 1e-6 * (double)c.flash_bytes; /* equal time: the fewer bytes */
    if (s->optimize == BG_LUT_OPT_WEIGHTED)
        return (double)c.flash_bytes + s->time_weight * c.per_call;
    return (double)c.flash_bytes;
}
