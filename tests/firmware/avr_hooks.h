/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Program-memory reads for a table emitted for any target (--target host), compiled for the
** AVR: every read hook of the file becomes FW_PGM_READ, which reads an object of the
** pointed-to type from flash with the pgm_read_* of its size, keeping its signedness (a bare
** pgm_read_word of an int16_t would return it unsigned).  Included with -include. */
#ifndef FW_AVR_HOOKS_H
#define FW_AVR_HOOKS_H
#include <avr/pgmspace.h>
#define FW_PGM_READ(p)                                                                       \
    __builtin_choose_expr(                                                                   \
        __builtin_types_compatible_p(__typeof__(*(p)), const float), pgm_read_float(p),      \
        __builtin_choose_expr(                                                               \
            sizeof *(p) == 1, (__typeof__(*(p)))pgm_read_byte(p),                            \
            __builtin_choose_expr(sizeof *(p) == 2, (__typeof__(*(p)))pgm_read_word(p),      \
                                  (__typeof__(*(p)))pgm_read_dword(p))))
#define T_ATTR PROGMEM
#define T_READ(p) FW_PGM_READ(p)
#define T_READ_CODE(p) FW_PGM_READ(p)
#define T_READ_S32(p) FW_PGM_READ(p)
#define T_READ_F32(p) FW_PGM_READ(p)
#define T_READ_INDEX(p) FW_PGM_READ(p)
#endif
