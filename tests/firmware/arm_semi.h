/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Output and end of the bare Cortex-M programs of the firmware check (arm_start.c). */
#ifndef FW_ARM_SEMI_H
#define FW_ARM_SEMI_H
void fw_write(const char *s);
void fw_exit(int ok) __attribute__((noreturn));
#endif
