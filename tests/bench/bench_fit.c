/* Benchmark of hrt_fit_star: milliseconds per star on a grid (default: HRTRAIL_GRID or the installed one).
 * Prints figures; asserts nothing about time.
 *   hrtrail-bench-fit [GRID.h5 [N_STARS [feh|nofeh]]] */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>

#include "hrtrail.h"

static double now_s(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

static double thread_cpu_s(void)
{
    struct timespec t;
    clock_gettime(CLOCK_THREAD_CPUTIME_ID, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* n synthetic stars of the grid (Kroupa-like masses 0.7-5 Msun, ages uniform), fitted with or without [Fe/H] */
static void run(const hrt_grid *g, const hrt_fit_model *m, int with_feh, int n, const char *label)
{
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, 42);
    hrt_fit_obs *obs = calloc((size_t)n, sizeof *obs);
    int k = 0;
    while (k < n) {
        double mass = 0.7 * pow(5.0 / 0.7, pow(gsl_rng_uniform(r), 1.5)), age = 13.8e9 * gsl_rng_uniform(r);
        double feh = -0.5 + 0.8 * gsl_rng_uniform(r), z = hrt_grid_z_ref(g) * pow(10.0, feh);
        hrt_state s;
        if (hrt_eval(g, 1, &mass, &z, 0.0, &age, &s, NULL) != HRT_OK || s.flags) continue;
        hrt_fit_obs_init(&obs[k]);
        obs[k].teff_k = pow(10.0, s.log_teff_k) + gsl_ran_gaussian(r, 80);
        obs[k].teff_k_sigma = 80;
        obs[k].log_l_lsun = s.log_l_lsun + gsl_ran_gaussian(r, 0.03);
        obs[k].log_l_lsun_sigma = 0.03;
        if (with_feh) {
            obs[k].feh = feh + gsl_ran_gaussian(r, 0.1);
            obs[k].feh_sigma = 0.1;
        }
        k++;
    }
    /* per star: the calling thread's CPU time (the load of a shared machine
     * does not count), then mean, median, 95th percentile, slowest and how
     * many stars take more than 3 times the median (target: none) */
    double *cpu = malloc((size_t)n * sizeof *cpu), *sorted = malloc((size_t)n * sizeof *sorted), t0 = now_s(), sum = 0;
    hrt_fit_result *res = calloc((size_t)n, sizeof *res);
    int failed = 0, above = 0;
    for (int i = 0; i < n; i++) {
        double c1 = thread_cpu_s();
        if (hrt_fit_star(m, &obs[i], (uint64_t)i, 0, NULL, &res[i], NULL) != HRT_OK) failed++;
        cpu[i] = thread_cpu_s() - c1;
        sum += cpu[i];
    }
    double wall = now_s() - t0;
    memcpy(sorted, cpu, (size_t)n * sizeof *cpu);
    qsort(sorted, (size_t)n, sizeof *sorted, cmp_double);
    double median = sorted[n / 2], p95 = sorted[(int)(0.95 * (n - 1))];
    for (int i = 0; i < n; i++)
        above += cpu[i] > 3.0 * median;
    printf("%-44s %5d stars  %7.2f ms/star CPU (median %.2f, 95th percentile %.2f, slowest %.2f ms = %.1fx the median; "
           "%d above 3x the median; wall %.2f ms/star), %d failed\n",
           label, n, 1e3 * sum / n, 1e3 * median, 1e3 * p95, 1e3 * sorted[n - 1], sorted[n - 1] / median, above,
           1e3 * wall / n, failed);
    /* the stars above twice the median: what they are */
    for (int i = 0; i < n; i++)
        if (cpu[i] > 2.0 * median)
            printf("    star %3d: %6.2f ms  Teff %5.0f K  log L %5.2f  mass %.2f Msun  age %.2f Gyr  phase %d (%.2f)  "
                   "%.0f points, n_eff %.0f\n",
                   i, 1e3 * cpu[i], obs[i].teff_k, obs[i].log_l_lsun, res[i].initial_mass_msun.median,
                   1e-9 * res[i].age_yr.median, res[i].phase, res[i].phase_prob[res[i].phase], res[i].n_points,
                   res[i].n_eff);
    free(res);
    free(sorted);
    free(cpu);
    free(obs);
    gsl_rng_free(r);
}

int main(int argc, char **argv)
{
    hrt_grid *g = NULL;
    hrt_error err;
    if (hrt_grid_open(argc > 1 ? argv[1] : NULL, &g, &err) != HRT_OK) {
        fprintf(stderr, "bench_fit: %s\n", err.message);
        return 1;
    }
    int n = argc > 2 ? atoi(argv[2]) : 300;
    hrt_fit_model *m = NULL;
    double t0 = now_s();
    if (hrt_fit_model_new(g, NULL, &m, &err) != HRT_OK) {
        fprintf(stderr, "bench_fit: %s\n", err.message);
        return 1;
    }
    printf("model (defaults, whole grid): %.3f s to build, %.1f MB, %zu [Fe/H] nodes\n", now_s() - t0,
           hrt_fit_model_memory_bytes(m) / 1e6, hrt_fit_model_n_feh(m));
    /* optional third argument "feh" or "nofeh": one of the two runs (e.g. under callgrind) */
    const char *only = argc > 3 ? argv[3] : "";
    if (strcmp(only, "nofeh") != 0)
        run(g, m, 1, n, "Teff, log L, [Fe/H] measured");
    if (strcmp(only, "feh") != 0)
        run(g, m, 0, n, "Teff, log L only (all [Fe/H] nodes)");
    hrt_fit_model_free(m);
    hrt_grid_close(g);
    return 0;
}
