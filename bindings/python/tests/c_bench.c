/*
 * The C side of bindings/python/bench_python.py: the same population runs
 * and fits as the Python calls, timed in C.
 *
 *   hrt-c-bench GRID pop N SEED CHUNK THREADS REPEAT AGE...
 *       Kroupa 2001 IMF over the grid's masses at Z = the grid's Z_ref, a
 *       burst at 0; hrt_pop_run over every chunk into one summary per AGE.
 *       Prints "c_pop_s T" and "c_pop_cpu_s C" (fastest wall-clock and process CPU
 *       time of REPEAT) and "l_lsun L" of each epoch.
 *   hrt-c-bench GRID fit OBSFILE SEED REPEAT
 *       OBSFILE: raw struct hrt_fit_obs records (native doubles); the default
 *       model (not timed), then hrt_fit_star of every record with 0 samples.
 *       Prints "c_fit_s T", "c_fit_cpu_s C" (as for pop), "fitted K" and "checksum S"
 *       (sum of the initial-mass medians of the fitted stars).
 * Figures only; exit 1 on a usage or library error.
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include <hrtrail.h>

static double now(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

/* CPU time of the whole process (every thread), s: on a loaded machine the figure to compare */
static double cpu(void)
{
    struct timespec t;
    clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

static int fail(const char *what, const hrt_error *e)
{
    fprintf(stderr, "hrt-c-bench: %s: %s\n", what, e ? e->message : "");
    return 1;
}

static int bench_pop(const hrt_grid *g, int argc, char **argv)
{
    if (argc < 9) return fail("usage: GRID pop N SEED CHUNK THREADS REPEAT AGE...", NULL);
    hrt_pop_spec spec;
    hrt_error e;
    double lo, hi;
    hrt_pop_spec_default(&spec);
    spec.n_stars = strtoull(argv[3], NULL, 10);
    spec.seed = strtoull(argv[4], NULL, 10);
    spec.chunk_size = strtoull(argv[5], NULL, 10);
    int threads = atoi(argv[6]), repeat = atoi(argv[7]);
    size_t n_ages = (size_t)(argc - 8);
    spec.zdist.z = hrt_grid_z_ref(g);
    if (hrt_grid_mass_range(g, spec.zdist.z, &lo, &hi) != HRT_OK) return fail("mass range", NULL);
    if (hrt_imf_init(&spec.imf, HRT_IMF_KROUPA_2001, lo, hi, 0.0, &e) != HRT_OK) return fail("imf", &e);
    hrt_pop_summary *s = malloc(n_ages * sizeof *s);
    if (!s) return fail("out of memory", NULL);
    double best = 1e300, best_cpu = 1e300;
    for (int r = 0; r < repeat; r++) {
        for (size_t k = 0; k < n_ages; k++)
            if (hrt_pop_summary_init(&s[k], strtod(argv[8 + k], NULL), NULL, &e) != HRT_OK) return fail("init", &e);
        double t0 = now(), c0 = cpu();
        if (hrt_pop_run(g, &spec, 0, hrt_pop_n_chunks(&spec), threads, n_ages, s, &e) != HRT_OK) return fail("run", &e);
        double dt = now() - t0, dc = cpu() - c0;
        best = dt < best ? dt : best;
        best_cpu = dc < best_cpu ? dc : best_cpu;
    }
    printf("c_pop_s %.9g\nc_pop_cpu_s %.9g\n", best, best_cpu);
    for (size_t k = 0; k < n_ages; k++) printf("l_lsun %.17g\n", hrt_pop_sum_value(&s[k].l_lsun));
    free(s);
    return 0;
}

static int bench_fit(const hrt_grid *g, int argc, char **argv)
{
    if (argc < 6) return fail("usage: GRID fit OBSFILE SEED REPEAT", NULL);
    FILE *f = fopen(argv[3], "rb");
    if (!f) return fail("cannot open the observations", NULL);
    size_t cap = 1024, n = 0;
    hrt_fit_obs *obs = malloc(cap * sizeof *obs);
    while (obs && fread(&obs[n], sizeof *obs, 1, f) == 1)
        if (++n == cap) obs = realloc(obs, (cap *= 2) * sizeof *obs);
    fclose(f);
    if (!obs) return fail("out of memory", NULL);
    unsigned long long seed = strtoull(argv[4], NULL, 10);
    int repeat = atoi(argv[5]);
    hrt_fit_model *m;
    hrt_error e;
    if (hrt_fit_model_new(g, NULL, &m, &e) != HRT_OK) return fail("model", &e);
    double best = 1e300, best_cpu = 1e300, checksum = 0.0;
    size_t fitted = 0;
    for (int r = 0; r < repeat; r++) {
        checksum = 0.0, fitted = 0;
        double t0 = now(), c0 = cpu();
        for (size_t i = 0; i < n; i++) {
            hrt_fit_result res;
            if (hrt_fit_star(m, &obs[i], seed, 0, NULL, &res, &e) == HRT_OK) {
                fitted++;
                checksum += res.initial_mass_msun.median;
            }
        }
        double dt = now() - t0, dc = cpu() - c0;
        best = dt < best ? dt : best;
        best_cpu = dc < best_cpu ? dc : best_cpu;
    }
    printf("c_fit_s %.9g\nc_fit_cpu_s %.9g\nfitted %zu\nchecksum %.17g\n", best, best_cpu, fitted, checksum);
    hrt_fit_model_free(m);
    free(obs);
    return 0;
}

int main(int argc, char **argv)
{
    if (argc < 3) return fail("usage: hrt-c-bench GRID pop|fit ...", NULL);
    hrt_grid *g;
    hrt_error e;
    if (hrt_grid_open(argv[1], &g, &e) != HRT_OK) return fail("open", &e);
    int rc = strcmp(argv[2], "pop") == 0 ? bench_pop(g, argc, argv)
             : strcmp(argv[2], "fit") == 0 ? bench_fit(g, argc, argv)
                                            : fail("mode is pop or fit", NULL);
    hrt_grid_close(g);
    return rc;
}
