/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The one spelling of a table's strategy and value format and of a divider's sensor side and
** full scale, both ways: what a program and a binding parse is what the library prints. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "bandgap/circuit.h"
#include "bandgap/lut.h"

int bg_lut_strategy_parse(const char *s, bg_lut_strategy *out, bg_error *err)
{
    static const bg_lut_strategy all[] = { BG_LUT_UNIFORM, BG_LUT_MINIMAL, BG_LUT_INDEXED };
    for (size_t i = 0; s && i < sizeof all / sizeof all[0]; i++)
        if (strcmp(s, bg_lut_strategy_name(all[i])) == 0) {
            *out = all[i];
            return BG_OK;
        }
    return bg_error_set(err, BG_EINVAL, "say uniform, minimal or indexed");
}

static const char *const target_names[] = { "host", "avr", "cortex-m0", "cortex-m4" };

const char *bg_lut_target_name(bg_lut_target t)
{
    return (unsigned)t < sizeof target_names / sizeof target_names[0] ? target_names[t] : "";
}

int bg_lut_target_parse(const char *s, bg_lut_target *out, bg_error *err)
{
    for (size_t i = 0; s && i < sizeof target_names / sizeof target_names[0]; i++)
        if (strcmp(s, target_names[i]) == 0) {
            *out = (bg_lut_target)i;
            return BG_OK;
        }
    return bg_error_set(err, BG_EINVAL, "say host, avr, cortex-m0 or cortex-m4");
}

static const struct {
    bg_lut_format format;
    const char *name;
} fixed_formats[] = {
    { BG_LUT_DECI, "0.1" }, { BG_LUT_CENTI, "0.01" }, { BG_LUT_MILLI, "0.001" },
    { BG_LUT_FLOAT, "float" },
};
#define NFIXED (sizeof fixed_formats / sizeof fixed_formats[0])

char *bg_lut_format_name(bg_lut_format format, unsigned qbits, char *buf, size_t size)
{
    if (size == 0)
        return buf;
    buf[0] = '\0';
    if (format == BG_LUT_Q) {
        snprintf(buf, size, "q%u", qbits);
        return buf;
    }
    for (size_t i = 0; i < NFIXED; i++)
        if (fixed_formats[i].format == format)
            snprintf(buf, size, "%s", fixed_formats[i].name);
    return buf;
}

int bg_lut_format_parse(const char *s, bg_lut_format *format, unsigned *qbits, bg_error *err)
{
    for (size_t i = 0; s && i < NFIXED; i++)
        if (strcmp(s, fixed_formats[i].name) == 0) {
            *format = fixed_formats[i].format;
            return BG_OK;
        }
    if (s && s[0] == 'q' && s[1] >= '0' && s[1] <= '9') {
        char *end;
        unsigned long q = strtoul(s + 1, &end, 10);
        if (!*end && q >= 1 && q <= 16) {
            *format = BG_LUT_Q;
            *qbits = (unsigned)q;
            return BG_OK;
        }
    }
    return bg_error_set(err, BG_EINVAL, "say 0.1, 0.01, 0.001, q1 .. q16 or float");
}

const char *bg_circuit_side_name(bg_circuit_kind kind)
{
    return kind == BG_CIRCUIT_DIVIDER_LOW ? "low" : kind == BG_CIRCUIT_DIVIDER_HIGH ? "high" : "";
}

int bg_circuit_side_parse(const char *s, bg_circuit_kind *kind, bg_error *err)
{
    if (s && strcmp(s, "low") == 0)
        *kind = BG_CIRCUIT_DIVIDER_LOW;
    else if (s && strcmp(s, "high") == 0)
        *kind = BG_CIRCUIT_DIVIDER_HIGH;
    else
        return bg_error_set(err, BG_EINVAL, "say low or high");
    return BG_OK;
}

const char *bg_circuit_full_scale_name(int full_scale_pow2)
{
    return full_scale_pow2 ? "pow2" : "pow2-1";
}

int bg_circuit_full_scale_parse(const char *s, int *full_scale_pow2, bg_error *err)
{
    if (s && (strcmp(s, "pow2") == 0 || strcmp(s, "pow2-1") == 0)) {
        *full_scale_pow2 = strcmp(s, "pow2") == 0;
        return BG_OK;
    }
    return bg_error_set(err, BG_EINVAL, "say pow2 or pow2-1");
}
