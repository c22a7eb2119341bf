/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* JSON text: the one string escaper that the library's stored specs and the program's output
** share (RFC 8259, section 7). */
#ifndef BANDGAP_JSON_H
#define BANDGAP_JSON_H

#include <stdio.h>

#include "bandgap/error.h"

/* Write 's' to 'f' as a JSON string, quotes included: '"' and '\' escaped, the control
** characters as \n, \r, \t or \uXXXX (so are DEL, the C1 controls and the bidirectional
** controls, bg_text_forbidden); a byte that does not start valid UTF-8 as \ufffd, so the output
** is valid JSON whatever 's' holds; other characters as they are.  NULL writes "". */
BG_API void bg_json_write_string(FILE *f, const char *s);

/* A double in the shortest form that reads back exactly (at most 17 significant digits,
** "%g" style: "0.0025", "1e+23", "-0") into 'buf' (BG_NUM_SHORTEST bytes or more); returns
** 'buf'.  NaN and infinities give "nan", "inf", "-inf": callers that must not write them
** test first.  (shortest.c: the Ryu algorithm, U. Adams, PLDI 2018.) */
enum { BG_NUM_SHORTEST = 32 };
BG_API char *bg_num_shortest(char *buf, size_t size, double v);

#endif
