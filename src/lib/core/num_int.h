/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Internal: strict decimal number scanning shared by 'units' and 'csv'. */
#ifndef BANDGAP_NUM_INT_H
#define BANDGAP_NUM_INT_H

#include <stddef.h>

/* Scan a decimal number at 's' (optional sign, digits, optional '.' or 'dec_mark' and digits,
** optional exponent) and store it in '*v'.  Refuses hex, "inf", "nan" and numbers that
** overflow to infinity.  Returns the number of characters used, or 0 when 's' does not start
** with a number.  'dec_mark' is '.' or ','.  A decimal of any length is read. */
size_t bgi_num_scan(const char *s, size_t len, char dec_mark, double *v);

/* bgi_num_scan, and '*overflow' (may be NULL) set to 1 when 's' is a well-formed decimal whose
** value is beyond the largest finite double (e.g. "1e999"), 0 otherwise. */
size_t bgi_num_scan_finite(const char *s, size_t len, char dec_mark, double *v, int *overflow);

#endif
