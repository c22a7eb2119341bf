/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Fuzz target: the readings CSV reader on arbitrary bytes (libFuzzer, or replay.c). */
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>

#include "bandgap/csv.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    bg_readings rs;
    bg_error err = BG_ERROR_INIT;
    if (bg_csv_parse((const char *)data, size, "fuzz.csv", &rs, &err) == BG_OK) {
        bg_point *pts = malloc((rs.n ? rs.n : 1) * sizeof *pts);
        if (pts)
            bg_readings_points(&rs, pts);
        free(pts);
        bg_readings_release(&rs);
    }
    return 0;
}
