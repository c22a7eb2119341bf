/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The Cortex-M side of the firmware check (tests/firmware/run.sh), run under QEMU: calls the
** emitted LOOKUP for every ADC code 0 .. NCODES-1 and writes one line per code, the value's
** 32 bits in hex, through semihosting, buffered.  With -DMARKS, the loop is bracketed by
** calls of fw_mark_begin / fw_mark_end so that an instruction trace can count what lies
** between (tests/firmware/cost.sh).
** Build: -DLOOKUP=sym_lookup [-DVALUE_FLOAT] -DNCODES=4096UL. */
#include <stdint.h>
#include <string.h>

#include "arm_semi.h"

#ifdef VALUE_FLOAT
typedef float value_t;
#else
typedef int32_t value_t;
#endif
value_t LOOKUP(uint32_t code);

__attribute__((noinline)) void fw_mark_begin(void);
__attribute__((noinline)) void fw_mark_end(void);
__attribute__((noinline)) void fw_mark_begin(void) { __asm__ volatile("" ::: "memory"); }
__attribute__((noinline)) void fw_mark_end(void) { __asm__ volatile("" ::: "memory"); }

static char buf[1024];
static unsigned used;

static void flush(void)
{
    buf[used] = '\0';
    fw_write(buf);
    used = 0;
}

static void hex(uint32_t v)
{
    for (int i = 28; i >= 0; i -= 4) {
        unsigned n = (v >> i) & 15u;
        buf[used++] = (char)(n < 10 ? '0' + n : 'a' + n - 10);
    }
    buf[used++] = '\n';
    if (used > sizeof buf - 16)
        flush();
}

#ifdef MARKS
volatile value_t fw_sink;
#endif

int main(void)
{
    uint32_t bits;
#ifdef MARKS
    fw_mark_begin();
    for (uint32_t code = 0; code < NCODES; code++)
        fw_sink = LOOKUP(code);
    fw_mark_end();
#endif
    for (uint32_t code = 0; code < NCODES; code++) {
        value_t v = LOOKUP(code);
        memcpy(&bits, &v, sizeof bits);
        hex(bits);
    }
    flush();
    fw_write("end\n");
    return 0;
}
