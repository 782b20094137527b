/* Population benchmark: prints figures, asserts nothing about time.
 *
 *   bench_population [GRID.h5 [N_STARS]]   default: the default grid, 1e7 stars
 *
 * Stars per second drawn, evolved (hrt_eval) and summarised by hrt_pop_run
 * on 1 and 2 threads (and all the machine has), for a single burst at one
 * metallicity and for a composite population (constant SFH, log-normal Z);
 * the cost of hrt_eval alone on the same stars; memory per star streamed
 * (peak RSS after a small and a large run); and the bit-for-bit equality of
 * the summaries across thread counts. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <time.h>

#include "hrtrail.h"

static double now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return ts.tv_sec + 1e-9 * ts.tv_nsec;
}

static long max_rss_kb(void)
{
    struct rusage ru;
    getrusage(RUSAGE_SELF, &ru);
    return ru.ru_maxrss;
}

static const hrt_pop_hr HR = {3.3, 4.9, -5.0, 6.5, 64, 64};

/* CPU time of the whole process (every thread): stars per CPU second is
 * stars/s per core, which other engineers' load on a shared machine moves
 * far less than wall time. */
static double process_cpu(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &ts);
    return ts.tv_sec + 1e-9 * ts.tv_nsec;
}

/* Least process CPU time of the last run() (seconds). */
static double last_cpu;

/* Best of reps runs (wall); the summary of the last run in *out. */
static double run(const hrt_grid *g, const hrt_pop_spec *s, double age, int nt, int reps, hrt_pop_summary *out)
{
    double best = 1e30;
    last_cpu = 1e30;
    for (int r = 0; r < reps; r++) {
        hrt_error err;
        hrt_pop_summary_init(out, age, &HR, NULL);
        double t0 = now(), c0 = process_cpu();
        int rc = hrt_pop_run(g, s, 0, UINT64_MAX, nt, 1, out, &err);
        double t = now() - t0, c = process_cpu() - c0;
        if (c < last_cpu)
            last_cpu = c;
        if (rc != HRT_OK) {
            fprintf(stderr, "hrt_pop_run: %s\n", err.message);
            exit(1);
        }
        if (t < best) best = t;
    }
    return best;
}

static void scenario(const hrt_grid *g, const char *name, const hrt_pop_spec *s, double age)
{
    hrt_pop_summary *a = malloc(sizeof *a), *b = malloc(sizeof *b);
    int maxt = hrt_pop_max_threads();
    double n = (double)s->n_stars;
    printf("%s: %.3g stars, epoch %.3g Gyr\n", name, n, age / 1e9);
    double t1 = run(g, s, age, 1, 3, a);
    printf("  1 thread : %7.3f s  %.3g stars/s; CPU %.3f s: %.3g stars/s/core (target >= 3e6)\n", t1, n / t1, last_cpu,
           n / last_cpu);
    int counts[3] = {2, maxt, 0};
    for (int k = 0; k < 2; k++) {
        int nt = counts[k];
        if (nt < 2 || (k == 1 && nt == 2)) continue;
        double t = run(g, s, age, nt, 2, b);
        printf("  %d threads: %7.3f s  %.3g stars/s  (%.2f x one thread, %.3g stars/s per thread); summary %s\n", nt, t,
               n / t, t1 / t, n / t / nt, memcmp(a, b, sizeof *a) == 0 ? "bit-identical to 1 thread" : "DIFFERS");
    }
    printf("  summary: %llu evaluated, L = %.5g Lsun, turnoff %.4g Msun, white dwarfs %llu\n",
           (unsigned long long)a->n_evaluated, hrt_pop_sum_value(&a->l_lsun), hrt_pop_turnoff_mass(a),
           (unsigned long long)a->n_phase[HRT_PHASE_WD]);
    free(a);
    free(b);
}

/* hrt_eval alone on stars drawn like the burst's (in blocks, as hrt_pop_run does). */
static void eval_only(const hrt_grid *g, const hrt_pop_spec *s, double age)
{
    size_t n = 1000000, k = 0;
    double *m = malloc(n * sizeof *m), *a = malloc(n * sizeof *a);
    hrt_state *st = malloc(1024 * sizeof *st);
    for (uint64_t c = 0; k < n && c < hrt_pop_n_chunks(s); c++) {
        size_t got = 0;
        hrt_pop_spec one = *s;
        if (hrt_pop_draw(&one, c, m + k, NULL, NULL, n - k, &got, NULL) != HRT_OK) break;
        k += got;
    }
    for (size_t i = 0; i < k; i++) a[i] = age;
    double best = 1e30;
    for (int r = 0; r < 3; r++) {
        double t0 = now();
        for (size_t i = 0; i < k; i += 1024)
            hrt_eval(g, k - i < 1024 ? k - i : 1024, m + i, NULL, s->zdist.z, a + i, st, NULL);
        double t = now() - t0;
        if (t < best) best = t;
    }
    printf("hrt_eval alone on %zu of these stars: %.1f ns per star (%.3g stars/s)\n", k, best / k * 1e9, k / best);
    free(m);
    free(a);
    free(st);
}

int main(int argc, char **argv)
{
    const char *path = argc > 1 ? argv[1] : NULL;
    uint64_t n = argc > 2 ? (uint64_t)strtod(argv[2], NULL) : 10000000;
    hrt_grid *g;
    hrt_error err;
    if (hrt_grid_open(path, &g, &err) != HRT_OK) {
        fprintf(stderr, "bench_population: %s\n", err.message);
        return 1;
    }
    printf("grid %s; OpenMP threads available: %d; sizeof(hrt_pop_summary) = %zu bytes\n",
           path ? path : hrt_default_grid_path(), hrt_pop_max_threads(), sizeof(hrt_pop_summary));

    hrt_pop_spec s;
    hrt_pop_spec_default(&s); /* Kroupa 2001, 0.08-100 Msun, burst, Z = 0.014 */
    /* memory per star streamed: peak RSS after 1e5 stars, then after n */
    hrt_pop_summary *x = malloc(sizeof *x);
    s.n_stars = 100000;
    run(g, &s, 10e9, 0, 1, x);
    long r0 = max_rss_kb();

    s.n_stars = n;
    scenario(g, "single burst, Kroupa 2001 0.08-100 Msun, Z = 0.014", &s, 10e9);
    long r1 = max_rss_kb();
    printf("memory: peak RSS %ld kB after 1e5 stars, %ld kB after %.3g stars: %.4f bytes per extra star "
           "(scratch per thread ~%zu kB + %zu kB per epoch; nothing is kept per star)\n",
           r0, r1, (double)n, (double)(r1 - r0) * 1024.0 / ((double)n - 1e5),
           (size_t)(1024 * (6 * sizeof(double) + sizeof(hrt_state)) / 1024), sizeof(hrt_pop_summary) / 1024);
    eval_only(g, &s, 10e9);

    hrt_pop_spec c = s;
    c.sfh.kind = HRT_SFH_CONSTANT;
    c.sfh.t_start_yr = 0;
    c.sfh.t_end_yr = 10e9;
    c.zdist.kind = HRT_ZDIST_LOG_NORMAL;
    c.zdist.z = 0.008;
    c.zdist.z_lo = 0.0002;
    c.zdist.z_hi = 0.03;
    c.zdist.sigma_dex = 0.3;
    c.n_stars = n / 4;
    scenario(g, "composite: constant SFH over 10 Gyr, log-normal Z (median 0.008, 0.3 dex)", &c, 10e9);
    free(x);
    hrt_grid_close(g);
    return 0;
}
