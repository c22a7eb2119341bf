/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The size baseline of tests/firmware/cost.sh: the harness with a lookup that does nothing,
** so that a table's flash is the difference of the two images (its data, its code and the
** library helpers it pulls in). */
#include <stdint.h>
#include <string.h>

#ifdef VALUE_FLOAT
float t_lookup(uint32_t code);
float t_lookup(uint32_t code)
{
    float f; /* no conversion, so no float helper in the baseline */
    memcpy(&f, &code, sizeof f);
    return f;
}
#else
int32_t t_lookup(uint32_t code);
int32_t t_lookup(uint32_t code)
{
    return (int32_t)code;
}
#endif
