/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Parsing and printing of quantities with their units: temperatures (K, degC, degF),
** temperature differences, resistances, relative values (%, ppm) and SI quantities (V, A,
** W/K...).  Every parser here refuses a bare number where the unit is not certain.
** Temperatures are kelvin inside bandgap; Celsius and Fahrenheit exist only here. */
#ifndef BANDGAP_UNITS_H
#define BANDGAP_UNITS_H

#include "bandgap/error.h"

typedef enum bg_temp_unit { BG_UNIT_NONE = 0, BG_UNIT_K, BG_UNIT_C, BG_UNIT_F } bg_temp_unit;

#define BG_ZERO_C_K 273.15 /* t/degC = T/K - 273.15 exactly (ITS-90) */

/* Parse a temperature such as "25C", "25 °C", "-40degC", "298.15K", "77F".  Accepted unit
** words: K, C, F, °C, °F, degC, degF, c, f (lower-case k is refused: it reads as kilo).  A bare
** number takes 'default_unit', or is refused when that is BG_UNIT_NONE.  Values at or below
** absolute zero, NaN and infinities are refused.  Returns BG_OK and '*t_k', or BG_EINVAL with
** a message naming the text. */
BG_API int bg_units_parse_temp(const char *s, bg_temp_unit default_unit, double *t_k,
                               bg_error *err);

/* Parse a temperature difference such as "0.05C", "50mK", "0.1K", "0.09F" into kelvin (> 0).
** A bare number is refused.  Returns BG_OK or BG_EINVAL. */
BG_API int bg_units_parse_tdiff(const char *s, double *dt_k, bg_error *err);

/* Parse a signed temperature difference, such as a correction: "-0.1712K", "+4.2mK", "0K",
** "-0.3C" into kelvin.  A bare number is refused.  Returns BG_OK or BG_EINVAL. */
BG_API int bg_units_parse_tcorr(const char *s, double *dt_k, bg_error *err);

/* Parse a resistance with its unit: "10k", "10K", "4k7", "1.5M", "1M5", "2R2", "470R",
** "3000ohm", "100 ohms", "10kohm", "10 k\xCE\xA9" (RKM notation of IEC 60062, SI prefixes).
** Prefixes k/K (1e3), M (1e6), G (1e9); R marks a decimal point or plain ohms.  A bare number
** ("3000": ohm or kilohm?) is refused with a message showing these forms, as are lower-case
** 'm' (milli or mega?), several prefixes, a prefix used both as decimal mark and after a
** decimal point ("1.5k7"), zero, negative values, NaN and infinities.  Returns BG_OK and
** '*r_ohm' or BG_EINVAL. */
BG_API int bg_units_parse_ohms(const char *s, double *r_ohm, bg_error *err);

/* Parse a relative value with its unit into a fraction (>= 0): "1%", "0.5 %" (1e-2), "250ppm",
** "250 ppm" (1e-6).  A bare number ("0.5": 50 % or 0.5 %?) is refused with a message showing
** the accepted forms; so are other units, negative values, NaN and infinities.  Returns BG_OK
** and '*frac' or BG_EINVAL. */
BG_API int bg_units_parse_fraction(const char *s, double *frac, bg_error *err);

/* Parse a positive quantity in the unit 'unit' (an SI symbol such as "V", "A", "K" or "W/K"),
** optionally after one SI prefix p, n, u (or \xC2\xB5), m (milli), k, M, G and a space after
** the number: "3.3V", "10 uA", "1.5mW/K", "3950K".  The unit is required: a bare number is
** refused with a message naming 'unit'.  Zero, negative values, NaN and infinities are
** refused.  Returns BG_OK and '*v' in the unit without prefix, or BG_EINVAL. */
BG_API int bg_units_parse_si(const char *s, const char *unit, double *v, bg_error *err);

/* Parse a unit name for output: "C", "K", "F" (also "degC", "°C"...).  BG_EINVAL otherwise. */
BG_API int bg_units_parse_unit(const char *s, bg_temp_unit *unit, bg_error *err);

/* Convert kelvin to 'unit' (K when BG_UNIT_NONE), and back. */
BG_API double bg_units_from_k(double t_k, bg_temp_unit unit);
BG_API double bg_units_to_k(double t, bg_temp_unit unit);

/* The symbol printed after a temperature: "K", "°C" or "°F"; 'ascii' gives "K", "C", "F". */
BG_API const char *bg_units_symbol(bg_temp_unit unit, int ascii);

/* Print 't_k' in 'unit' with 'decimals' digits after the point and the unit symbol
** ("25.507 °C") into 'buf' of 'size' bytes.  Returns 'buf'. */
BG_API char *bg_units_format_temp(double t_k, bg_temp_unit unit, int decimals, char *buf,
                                  size_t size);

/* Print 'v' (in 'unit' without prefix) with 'sig' significant digits, a space and the unit
** after the SI prefix that puts the number in [1, 1000): 1e-5, "A" gives "10 \xC2\xB5A".
** Returns 'buf'. */
BG_API char *bg_units_format_si(double v, const char *unit, int sig, char *buf, size_t size);

/* Print a resistance with 'sig' significant digits in fixed notation ("5989.41"), no unit. */
BG_API char *bg_units_format_ohms(double r_ohm, int sig, char *buf, size_t size);

#endif
