/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Benchmark: fit many invented probes of 10 readings each in one process, per probe with one
** reusable fitter and as a batch (bg_fitter_run_batch), full fit and linear fit.  Checks that
** the batch gives the per-probe numbers (1e-12 relative), writes the data and the batch's
** results for bench_fit.py and bench_fit_np.py, and prints the times per fit.
** Usage: bench_fit NPROBES DATA.csv RES_FULL.txt RES_LINEAR.txt [REPS]
** RES_*.txt: per probe the coefficients, the 9 covariance elements, chi2, the 10
** studentized residuals, then RMS and largest residual (mK), AIC, BIC and the 10 residuals
** (mK), and the number of notes. */
#include <math.h>
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

/* Best of 'reps' passes over every probe, per probe (batch 0) or as one batch, into 'f'. */
static double run(bg_fitter *fr, const bg_point *pts, size_t np, const bg_fit_opts *o,
                  bg_fit *f, bg_error *errs, int batch, int reps)
{
    double best = 1e30;
    for (int r = 0; r < reps; r++) {
        double t0 = now();
        if (batch) {
            if (bg_fitter_run_batch(fr, pts, np, NPT, o, NULL, f, errs) != BG_OK) {
                fprintf(stderr, "bench: out of memory\n");
                exit(1);
            }
        } else
            for (size_t p = 0; p < np; p++)
                errs[p].code = bg_fitter_run(fr, pts + p * NPT, NPT, o, &f[p], &errs[p]);
        double dt = now() - t0;
        if (dt < best)
            best = dt;
    }
    for (size_t p = 0; p < np; p++)
        if (errs[p].code != BG_OK) {
            fprintf(stderr, "bench: fit %zu failed: %s\n", p, errs[p].msg);
            exit(1);
        }
    return best;
}

static double rel(double a, double b)
{
    if (a == b)
        return 0.0;
    return fabs(a - b) / fmax(fabs(a), fabs(b));
}

/* The largest relative difference between the batch's and the per-probe results. */
static double compare(const bg_fit *a, const bg_fit *b, size_t np)
{
    double d = 0.0;
    for (size_t p = 0; p < np; p++) {
        for (size_t k = 0; k < 3; k++)
            d = fmax(d, rel(a[p].model.coef[k], b[p].model.coef[k]));
        for (size_t k = 0; k < 9; k++)
            d = fmax(d, rel(a[p].cov[k], b[p].cov[k]));
        d = fmax(d, rel(a[p].chi2, b[p].chi2));
        for (size_t i = 0; i < NPT; i++)
            d = fmax(d, fmax(rel(a[p].student[i], b[p].student[i]),
                             rel(a[p].resid_mk[i], b[p].resid_mk[i])));
        if (a[p].nnotes != b[p].nnotes || a[p].iterations != b[p].iterations)
            d = INFINITY;
    }
    return d;
}

static void write_results(const char *path, const bg_fit *f, size_t np)
{
    FILE *out = fopen(path, "w");
    if (!out) {
        perror(path);
        exit(1);
    }
    for (size_t p = 0; p < np; p++) {
        for (size_t k = 0; k < 3; k++)
            fprintf(out, "%.17g ", f[p].model.coef[k]);
        for (size_t k = 0; k < 9; k++)
            fprintf(out, "%.17g ", f[p].cov[k]);
        fprintf(out, "%.17g", f[p].chi2);
        for (size_t i = 0; i < NPT; i++)
            fprintf(out, " %.17g", f[p].student[i]);
        fprintf(out, " %.17g %.17g %.17g %.17g", f[p].rms_mk, f[p].max_abs_mk, f[p].aic,
                f[p].bic);
        for (size_t i = 0; i < NPT; i++)
            fprintf(out, " %.17g", f[p].resid_mk[i]);
        fprintf(out, " %zu\n", f[p].nnotes);
    }
    fclose(out);
}

/* Invented probes: part-to-part spread around invented coefficients, 2 mK noise. */
static void make_data(bg_point *pts, size_t np, const char *path)
{
    gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);
    FILE *df = fopen(path, "w");
    bg_model m;
    if (!rng || !df) {
        perror(path);
        exit(1);
    }
    gsl_rng_set(rng, 424242);
    bg_model_parse("sh3", &m, NULL);
    for (size_t p = 0; p < np; p++) {
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
    gsl_rng_free(rng);
}

int main(int argc, char **argv)
{
    if (argc != 5 && argc != 6) {
        fprintf(stderr, "usage: bench_fit NPROBES DATA.csv RES_FULL.txt RES_LINEAR.txt [REPS]\n");
        return 64;
    }
    gsl_set_error_handler_off();
    size_t np = (size_t)strtoul(argv[1], NULL, 10);
    int reps = argc == 6 ? atoi(argv[5]) : 5;
    bg_point *pts = malloc(np * NPT * sizeof *pts);
    bg_fit *fa = calloc(np, sizeof *fa), *fb = calloc(np, sizeof *fb);
    bg_error *errs = calloc(np, sizeof *errs);
    bg_fitter *fr = bg_fitter_new();
    bg_model m;
    if (!pts || !fa || !fb || !errs || !fr || np == 0)
        return 70;
    make_data(pts, np, argv[2]);
    bg_model_parse("sh3", &m, NULL);
    bg_fit_opts o = bg_fit_default_opts(&m);
    double us[2][2], diff[2];
    for (int lin = 0; lin < 2; lin++) {
        o.refine = !lin;
        us[lin][0] = 1e6 * run(fr, pts, np, &o, fa, errs, 0, reps) / (double)np;
        us[lin][1] = 1e6 * run(fr, pts, np, &o, fb, errs, 1, reps) / (double)np;
        diff[lin] = compare(fa, fb, np);
        write_results(argv[3 + lin], fb, np);
    }
    printf("bandgap full fit   (linear + refinement + covariance + studentized): per probe "
           "%.3f us/fit, batch %.3f us/fit\n", us[0][0], us[0][1]);
    printf("bandgap linear fit (weighted, 1/T, covariance + studentized):        per probe "
           "%.3f us/fit, batch %.3f us/fit\n", us[1][0], us[1][1]);
    printf("batch against per probe, largest relative difference: full %.2g, linear %.2g "
           "(target <= 1e-12)\n", diff[0], diff[1]);
    printf("C_FULL_US %.6f\nC_LIN_US %.6f\nC_FULL1_US %.6f\nC_LIN1_US %.6f\n", us[0][1],
           us[1][1], us[0][0], us[1][0]);
    for (size_t p = 0; p < np; p++)
        bg_fit_release(&fa[p]), bg_fit_release(&fb[p]);
    free(fa), free(fb), free(errs), free(pts);
    bg_fitter_free(fr);
    return diff[0] <= 1e-12 && diff[1] <= 1e-12 ? 0 : 1;
}
