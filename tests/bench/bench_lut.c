/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* make bench: time to build the minimal table of a 10k NTC on a 10k divider at 12 and 16
** bits, and its segment count against the exact minimum found another way: a backward
** dynamic program at 12 bits (the fewest segments covering codes 0 .. e is one more than for the codes
** before the smallest s from which s .. e is one segment).  Output: LUT_<bits> lines. */
#include <stdio.h>
#include <stdlib.h>
#include <time.h>

#include "bandgap/bandgap.h"
#include "../../src/lib/lut/lut_int.h"

static double now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

int main(int argc, char **argv)
{
    double c[2] = { 10000, 3950 }, bound = argc > 1 ? atof(argv[1]) : 0.05;
    for (unsigned bits = 12; bits <= 16; bits += 4) {
        bg_lut_spec s = { 0 };
        bg_lut t = BG_LUT_INIT, u = BG_LUT_INIT;
        s.circuit.kind = BG_CIRCUIT_DIVIDER_LOW, s.circuit.fixed_ohm = 10000;
        s.circuit.adc_bits = bits, s.circuit.full_scale_pow2 = 1;
        bg_model_parse("beta", &s.model, NULL);
        bg_model_set_coef(&s.model, c, 2, NULL);
        s.t_lo_k = 273.15 - 40.0, s.t_hi_k = 273.15 + 125.0;
        s.format = BG_LUT_CENTI, s.max_err_k = bound, s.frac_bits = -1, s.oncurve_min = 1;
        double best = 1e9, best_u = 1e9;
        for (int r = 0; r < 3; r++) {
            s.strategy = BG_LUT_MINIMAL;
            double t0 = now();
            if (bg_lut_build(&s, &t, NULL) != BG_OK)
                return 1;
            double t1 = now();
            s.strategy = BG_LUT_UNIFORM;
            if (bg_lut_build(&s, &u, NULL) != BG_OK)
                return 1;
            double t2 = now();
            best = t1 - t0 < best ? t1 - t0 : best;
            best_u = t2 - t1 < best_u ? t2 - t1 : best_u;
            if (r < 2)
                bg_lut_release(&t), bg_lut_release(&u);
        }
        if (bits > 12) { /* the dynamic program is quadratic-ish: 12 bits only */
            printf("LUT_%u build_s %.4f uniform_build_s %.4f segments %zu dp_minimum - "
                   "oncurve_min %zu uniform_entries %zu codes %ld\n", bits, best, best_u, t.n,
                   t.oncurve_min, u.n, t.code_hi - t.code_lo + 1);
            bg_lut_release(&t), bg_lut_release(&u);
            continue;
        }
        /* the same bands, from the temperatures at every code */
        long n = t.code_hi - t.code_lo + 1;
        double *tk = malloc((size_t)n * sizeof *tk);
        bgi_band *b = malloc((size_t)n * sizeof *b);
        int *few = malloc((size_t)(n + 1) * sizeof *few);
        if (!tk || !b || !few)
            return 1;
        for (long k = 0; k < n; k++) {
            double r;
            bg_circuit_ohms_of(&s.circuit, (double)(t.code_lo + k), &r, NULL);
            bg_model_t_from_r(&s.model, r, &tk[k], NULL);
        }
        if (bgi_lut_make_bands(&t, tk, t.counts_per_k, t.offset_k, bound, b, NULL) != BG_OK)
            return 1;
        few[0] = 0;
        long smin = 0;
        for (long e = 0; e < n; e++) {
            long long y, m;
            /* the smallest start is non-decreasing in e (a segment's sub-range is one) */
            while (!bgi_lut_feasible(b, smin, e, t.frac, t.yoff, &y, &m))
                smin++;
            few[e + 1] = few[smin] + 1;
        }
        printf("LUT_%u build_s %.4f uniform_build_s %.4f segments %zu dp_minimum %d "
               "oncurve_min %zu uniform_entries %zu codes %ld\n", bits, best, best_u, t.n,
               few[n], t.oncurve_min, u.n, n);
        free(tk), free(b), free(few);
        bg_lut_release(&t), bg_lut_release(&u);
    }
    return 0;
}
