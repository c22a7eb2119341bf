/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Benchmark: fit many invented probes of 10 readings each in one process, with one reusable
** fitter.  Writes the data and the coefficients for bench_fit.py and prints fits per second.
** Usage: bench_fit NPROBES DATA.csv COEF_FULL.txt COEF_LINEAR.txt */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>

#include "bandgap/bandgap.h"

#define NPT 10

static double now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static double run(bg_fitter *fr, const bg_point *pts, size_t np, const bg_fit_opts *o,
                  bg_fit *f, double *coef, int reps)
{
    double best = 1e30;
    for (int r = 0; r < reps; r++) {
        double t0 = now();
        for (size_t p = 0; p < np; p++) {
            if (bg_fitter_run(fr, pts + p * NPT, NPT, o, f, NULL) != BG_OK) {
                fprintf(stderr, "bench: fit %zu failed\n", p);
                exit(1);
            }
            memcpy(coef + 3 * p, f->model.coef, 3 * sizeof(double));
        }
        double dt = now() - t0;
        if (dt < best)
            best = dt;
    }
    return best;
}

static void write_coef(const char *path, const double *coef, size_t np)
{
    FILE *f = fopen(path, "w");
    if (!f) {
        perror(path);
        exit(1);
    }
    for (size_t p = 0; p < np; p++)
        fprintf(f, "%.17g %.17g %.17g\n", coef[3 * p], coef[3 * p + 1], coef[3 * p + 2]);
    fclose(f);
}

int main(int argc, char **argv)
{
    if (argc != 5) {
        fprintf(stderr, "usage: bench_fit NPROBES DATA.csv COEF_FULL.txt COEF_LINEAR.txt\n");
        return 64;
    }
    gsl_set_error_handler_off();
    size_t np = (size_t)strtoul(argv[1], NULL, 10);
    bg_point *pts = malloc(np * NPT * sizeof *pts);
    double *coef = malloc(np * 3 * sizeof *coef);
    gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);
    bg_model m;
    FILE *df = fopen(argv[2], "w");
    if (!pts || !coef || !rng || !df)
        return 70;
    gsl_rng_set(rng, 424242);
    bg_model_parse("sh3", &m, NULL);
    for (size_t p = 0; p < np; p++) {
        /* invented part-to-part spread around invented coefficients */
        double c[3] = { 1.1384e-3 * (1 + 0.01 * gsl_ran_gaussian(rng, 1)),
                        2.3245e-4 * (1 + 0.005 * gsl_ran_gaussian(rng, 1)),
                        9.4871e-8 * (1 + 0.02 * gsl_ran_gaussian(rng, 1)) };
        bg_model_set_coef(&m, c, 3, NULL);
        for (size_t i = 0; i < NPT; i++) {
            bg_point *q = &pts[p * NPT + i];
            memset(q, 0, sizeof *q);
            q->t_k = 253.15 + 100.0 * (double)i / (NPT - 1);
            bg_model_r_from_t(&m, q->t_k, &q->r_ohm, NULL);
            q->t_k += gsl_ran_gaussian(rng, 0.002);
            q->u_t_k = 0.002;
            fprintf(df, "%zu,%.17g,%.17g,%.17g\n", p, q->t_k, q->r_ohm, q->u_t_k);
        }
    }
    fclose(df);

    bg_fitter *fr = bg_fitter_new();
    bg_fit f = BG_FIT_INIT;
    bg_fit_opts o = bg_fit_default_opts(&m);
    double t_full = run(fr, pts, np, &o, &f, coef, 5);
    write_coef(argv[3], coef, np);
    o.refine = 0;
    double t_lin = run(fr, pts, np, &o, &f, coef, 5);
    write_coef(argv[4], coef, np);
    printf("bandgap full fit   (linear + refinement + covariance): %10.0f fits/s  (%.2f us/fit)\n",
           (double)np / t_full, 1e6 * t_full / (double)np);
    printf("bandgap linear fit (weighted, 1/T, with covariance):    %10.0f fits/s  (%.2f us/fit)\n",
           (double)np / t_lin, 1e6 * t_lin / (double)np);
    printf("C_FULL_US %.6f\nC_LIN_US %.6f\n", 1e6 * t_full / (double)np, 1e6 * t_lin / (double)np);
    bg_fit_release(&f);
    bg_fitter_free(fr);
    gsl_rng_free(rng);
    free(pts);
    free(coef);
    return 0;
}
