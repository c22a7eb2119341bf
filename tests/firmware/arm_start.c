/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* A bare Cortex-M start for the firmware check under QEMU (microbit: Cortex-M0; mps2-an385:
** M3; mps2-an386: M4 with its FPU): the vector table, .data copied and .bss cleared, the FPU
** switched on where there is one, main(), and the end through semihosting (SYS_EXIT), so
** that QEMU exits with main's verdict.  Output: fw_write() (SYS_WRITE0). */
#include <stdint.h>

#include "arm_semi.h"

extern uint32_t _data, _edata, _data_load, _bss, _ebss, _stack_top;
int main(void);
void reset_handler(void);
void fault_handler(void);

__attribute__((section(".vectors"), used)) static void (*const vectors[16])(void) = {
    (void (*)(void))&_stack_top, reset_handler, fault_handler, fault_handler, fault_handler,
    fault_handler, fault_handler, 0, 0, 0, 0, fault_handler, fault_handler, 0, fault_handler,
    fault_handler,
};

static int semihost(int op, const void *arg)
{
    register int r0 __asm__("r0") = op;
    register const void *r1 __asm__("r1") = arg;
    __asm__ volatile("bkpt 0xab" : "+r"(r0) : "r"(r1) : "memory");
    return r0;
}

void fw_write(const char *s)
{
    semihost(0x04, s); /* SYS_WRITE0: a NUL-terminated string to the host */
}

void fw_exit(int ok)
{
    /* SYS_EXIT, ADP_Stopped_ApplicationExit (QEMU exits 0) or ADP_Stopped_RunTimeError */
    semihost(0x18, (const void *)(uintptr_t)(ok ? 0x20026u : 0x20023u));
    for (;;)
        ;
}

void fault_handler(void)
{
    fw_write("fault\n");
    fw_exit(0);
}

void reset_handler(void)
{
    uint32_t *s = &_data_load, *d = &_data;
    while (d < &_edata)
        *d++ = *s++;
    for (d = &_bss; d < &_ebss; d++)
        *d = 0;
#if defined(__ARM_FP)
    /* CPACR: full access to CP10 and CP11 (the FPU) */
    *(volatile uint32_t *)0xE000ED88u |= 0xFu << 20;
    __asm__ volatile("dsb\n\tisb" ::: "memory");
#endif
    fw_exit(main() == 0);
}
