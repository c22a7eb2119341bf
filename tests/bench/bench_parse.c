/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Benchmark helper (not a test): the time to parse a readings file into memory with
** bg_csv_read_file, the anchor of `fit FILE` in tests/bench/fit_file.sh.  Prints PARSE_S. */
#include <stdio.h>
#include <time.h>

#include "bandgap/bandgap.h"

int main(int argc, char **argv)
{
    struct timespec a, b;
    bg_readings rs = BG_READINGS_INIT;
    bg_error err = BG_ERROR_INIT;
    int rc;

    if (argc != 2) {
        fprintf(stderr, "usage: bench_parse FILE\n");
        return 64;
    }
    clock_gettime(CLOCK_MONOTONIC, &a);
    rc = bg_csv_read_file(argv[1], &rs, &err);
    clock_gettime(CLOCK_MONOTONIC, &b);
    if (rc != BG_OK) {
        fprintf(stderr, "bench_parse: %s\n", err.msg);
        return 65;
    }
    printf("PARSE_S %.6f %zu\n",
           (double)(b.tv_sec - a.tv_sec) + 1e-9 * (double)(b.tv_nsec - a.tv_nsec), rs.n);
    bg_readings_release(&rs);
    return 0;
}
