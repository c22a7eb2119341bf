/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Fuzz target: the unit parsers (temperatures, differences, resistances, relative values, SI
** quantities, B pairs, ISO 8601 times) on arbitrary text. */
#include <stddef.h>
#include <stdint.h>
#include <string.h>

#include "bandgap/csv.h"
#include "bandgap/model.h"
#include "bandgap/units.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    char s[512];
    double v, w;
    bg_temp_unit u;
    bg_error err = BG_ERROR_INIT;
    if (size >= sizeof s)
        size = sizeof s - 1;
    memcpy(s, data, size);
    s[size] = '\0';
    bg_units_parse_temp(s, BG_UNIT_NONE, &v, &err);
    bg_units_parse_temp(s, BG_UNIT_C, &v, &err);
    bg_units_parse_tdiff(s, &v, &err);
    bg_units_parse_tcorr(s, &v, &err);
    bg_units_parse_ohms(s, &v, &err);
    bg_units_parse_fraction(s, &v, &err);
    bg_units_parse_si(s, "A", &v, &err);
    bg_units_parse_si(s, "W/K", &v, &err);
    bg_units_parse_unit(s, &u, &err);
    bg_model_parse_pair(s, &v, &w, &err);
    bg_csv_valid_time(s);
    return 0;
}
