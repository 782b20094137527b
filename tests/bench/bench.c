/* hrtrail core benchmarks: prints figures, asserts nothing about time.
 *
 *   bench [GRID.h5]      default: a synthetic grid of 6 metallicities x 50
 *                        masses x ~600 EEPs written to a temporary file
 *   bench --open-only GRID.h5...   only the open time of each grid
 *
 * Figures: hrt_eval at one grid metallicity and at random Z, hrt_star_at,
 * hrt_isochrone, grid open, 2 threads against 1, growth with 10x masses,
 * and (when NUMPY_BENCH names tests/bench/numpy_bench.py) the ratio to a
 * vectorised NumPy/SciPy implementation on the same file. */
#include <math.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "hrtrail.h"
#include "synth.h"

static double now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return ts.tv_sec + 1e-9 * ts.tv_nsec;
}

/* xorshift: deterministic inputs, no shared state. */
static double urand(unsigned long long *s)
{
    *s ^= *s << 13;
    *s ^= *s >> 7;
    *s ^= *s << 17;
    return (*s >> 11) * (1.0 / 9007199254740992.0);
}

typedef struct batch {
    size_t n;
    double *m, *z, *age;
    hrt_state *out;
} batch;

/* Random stars in the grid's mass range, ages up to about the end of each
 * star's track (so the mix covers every phase, as a population does). */
static void make_batch(const hrt_grid *g, batch *b, size_t n, int random_z, unsigned long long seed)
{
    b->n = n;
    b->m = malloc(n * sizeof(double));
    b->z = malloc(n * sizeof(double));
    b->age = malloc(n * sizeof(double));
    b->out = malloc(n * sizeof(hrt_state));
    size_t iz = hrt_grid_n_z(g) / 2;
    double z0 = hrt_grid_z(g, iz), zlo, zhi;
    hrt_grid_z_range(g, &zlo, &zhi);
    for (size_t i = 0; i < n; i++) {
        double z = random_z ? zlo * pow(zhi / zlo, urand(&seed)) : z0, lo, hi;
        hrt_grid_mass_range(g, z, &lo, &hi);
        b->z[i] = z;
        b->m[i] = lo * pow(hi / lo, urand(&seed));
        /* log-uniform age between 1e6 yr and 1.3x the star's end age */
        hrt_state s;
        double probe = 1e13;
        hrt_eval(g, 1, &b->m[i], &b->z[i], 0, &probe, &s, NULL);
        double tend = isfinite(s.phase_start_yr) ? s.phase_start_yr * 1.3 : 2e10;
        b->age[i] = 1e6 * pow(tend / 1e6, urand(&seed));
    }
}

static void free_batch(batch *b)
{
    free(b->m);
    free(b->z);
    free(b->age);
    free(b->out);
}

static double time_eval(const hrt_grid *g, batch *b, int reps)
{
    double best = 1e30;
    for (int r = 0; r < reps; r++) {
        double t0 = now();
        hrt_eval(g, b->n, b->m, b->z, 0, b->age, b->out, NULL);
        double t = now() - t0;
        if (t < best)
            best = t;
    }
    return best / b->n * 1e9;
}

typedef struct thr_arg {
    const hrt_grid *g;
    batch *b;
    size_t lo, hi;
} thr_arg;

static void *thr_main(void *p)
{
    thr_arg *a = p;
    hrt_eval(a->g, a->hi - a->lo, a->b->m + a->lo, a->b->z + a->lo, 0, a->b->age + a->lo, a->b->out + a->lo, NULL);
    return NULL;
}

static double time_threads(const hrt_grid *g, batch *b, int nt)
{
    double best = 1e30;
    for (int r = 0; r < 3; r++) {
        pthread_t th[8];
        thr_arg a[8];
        double t0 = now();
        for (int k = 0; k < nt; k++) {
            a[k] = (thr_arg){g, b, b->n * k / nt, b->n * (k + 1) / nt};
            pthread_create(&th[k], NULL, thr_main, &a[k]);
        }
        for (int k = 0; k < nt; k++)
            pthread_join(th[k], NULL);
        double t = now() - t0;
        if (t < best)
            best = t;
    }
    return best;
}

static double thread_cpu(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_THREAD_CPUTIME_ID, &ts);
    return ts.tv_sec + 1e-9 * ts.tv_nsec;
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* Grid open times over OPEN_RUNS opens: the calling thread's CPU time (HDF5
 * reads, decompresses and checks on this thread; other engineers' load on
 * a shared machine barely moves it), its minimum and median, and the
 * minimum wall time. */
#define OPEN_RUNS 11
typedef struct open_times {
    double cpu_min_ms, cpu_median_ms, wall_min_ms;
} open_times;

static hrt_grid *open_timed(const char *path, open_times *ot)
{
    hrt_grid *g = NULL;
    hrt_error e;
    double cpu[OPEN_RUNS], wall = 1e30;
    for (int r = 0; r < OPEN_RUNS; r++) {
        if (g)
            hrt_grid_close(g);
        double t0 = now(), c0 = thread_cpu();
        if (hrt_grid_open(path, &g, &e) != HRT_OK) {
            fprintf(stderr, "bench: %s\n", e.message);
            exit(1);
        }
        cpu[r] = thread_cpu() - c0;
        double t = now() - t0;
        if (t < wall)
            wall = t;
    }
    qsort(cpu, OPEN_RUNS, sizeof *cpu, cmp_double);
    *ot = (open_times){cpu[0] * 1e3, cpu[OPEN_RUNS / 2] * 1e3, wall * 1e3};
    return g;
}

static void print_open(const char *what, const open_times *ot)
{
    printf("%-37s %8.2f ms   (thread CPU, min of %d; median %.2f ms; wall min %.2f ms; target <= 50 ms)\n", what,
           ot->cpu_min_ms, OPEN_RUNS, ot->cpu_median_ms, ot->wall_min_ms);
}

/* bench --open-only GRID...: only the open times of each grid. */
static int open_only(int n, char **paths)
{
    for (int i = 0; i < n; i++) {
        open_times ot;
        hrt_grid_close(open_timed(paths[i], &ot));
        printf("grid: %s\n", paths[i]);
        print_open("open + validate + precompute", &ot);
    }
    return 0;
}

int main(int argc, char **argv)
{
    char tmp[] = "/tmp/hrt-bench-XXXXXX";
    char path[128], path10[128];
    if (argc > 1 && strcmp(argv[1], "--open-only") == 0)
        return open_only(argc - 2, argv + 2);
    const char *grid = argc > 1 ? argv[1] : NULL;
    if (!mkdtemp(tmp))
        return 1;
    hrt_error e;
    synth_spec s = {20, 30, 6, 10, 1, 0.3, 1.0, 100.0}; /* 50 masses, 501 and 601 EEPs */
    if (!grid) {
        snprintf(path, sizeof path, "%s/synth-6x50x600.h5", tmp);
        if (synth_write(&s, path, &e)) {
            fprintf(stderr, "bench: %s\n", e.message);
            return 1;
        }
        grid = path;
    }
    snprintf(path10, sizeof path10, "%s/synth-6x500x600.h5", tmp);
    synth_spec s10 = s;
    s10.n_low *= 10;
    s10.n_high *= 10;
    if (synth_write(&s10, path10, &e)) {
        fprintf(stderr, "bench: %s\n", e.message);
        return 1;
    }

    open_times open_t;
    hrt_grid *g = open_timed(grid, &open_t);
    size_t nm = 0, jmax = 0;
    for (size_t iz = 0; iz < hrt_grid_n_z(g); iz++)
        nm += hrt_grid_n_masses(g, iz);
    for (size_t r = 0; r < hrt_grid_n_routes(g); r++)
        if (hrt_grid_route_n_eep(g, r) > jmax)
            jmax = hrt_grid_route_n_eep(g, r);
    printf("grid: %s\n  %zu metallicities, %zu tracks, %zu EEPs max, %.1f MB in memory\n", grid, hrt_grid_n_z(g), nm,
           jmax, hrt_grid_memory_bytes(g) / 1e6);
    print_open("open + validate + precompute", &open_t);

    const size_t N = 1000000;
    batch b1, bz;
    make_batch(g, &b1, N, 0, 1234567);
    make_batch(g, &bz, N, 1, 7654321);
    double ns1 = time_eval(g, &b1, 5), nsz = time_eval(g, &bz, 3);
    printf("hrt_eval, one grid Z, full state      %8.1f ns/star (target <= 150)\n", ns1);
    printf("hrt_eval, random Z between groups     %8.1f ns/star (target <= 400)\n", nsz);

    /* One star at random ages. */
    hrt_star *st;
    hrt_star_new(g, 2.0, hrt_grid_z(g, 2), &st, NULL);
    double tend = hrt_star_end_age(st);
    unsigned long long seed = 99;
    double *ages = malloc(N * sizeof(double));
    for (size_t i = 0; i < N; i++)
        ages[i] = 1e6 * pow(tend * 1.2 / 1e6, urand(&seed));
    hrt_state out;
    double best = 1e30, sink = 0.0;
    for (int r = 0; r < 5; r++) {
        double t0 = now();
        for (size_t i = 0; i < N; i++) {
            hrt_star_at(st, ages[i], &out);
            sink += out.mass_msun;
        }
        double t = now() - t0;
        if (t < best)
            best = t;
    }
    printf("hrt_star_at, one star, random ages    %8.1f ns/call (target <= 40)\n", best / N * 1e9);
    hrt_star_free(st);

    /* Isochrone at one age. */
    size_t cap = 100000, n;
    hrt_state *iso = malloc(cap * sizeof *iso);
    best = 1e30;
    for (int r = 0; r < 10; r++) {
        double t0 = now();
        hrt_isochrone(g, 1e9, hrt_grid_z(g, 2), iso, cap, &n, NULL);
        double t = now() - t0;
        if (t < best)
            best = t;
    }
    printf("hrt_isochrone, 1 Gyr, grid Z          %8.3f ms   (%zu points; target <= 0.5 ms)\n", best * 1e3, n);
    free(iso);

    double t1 = time_threads(g, &b1, 1), t2 = time_threads(g, &b1, 2);
    printf("2 threads against 1 (shared grid)     %8.2f x    (target >= 1.7; %ld cores online)\n", t1 / t2,
           sysconf(_SC_NPROCESSORS_ONLN));

    open_times open10;
    hrt_grid *g10 = open_timed(path10, &open10);
    batch b10;
    make_batch(g10, &b10, N, 0, 1234567);
    batch b1s;
    make_batch(g, &b1s, N, 0, 1234567);
    double ns_base = time_eval(g, &b1s, 5), ns10 = time_eval(g10, &b10, 5);
    printf("10x more masses (%zu tracks): cost    %8.2f x    (target <= 1.5; open %.1f ms)\n",
           hrt_grid_n_masses(g10, 0) * hrt_grid_n_z(g10), ns10 / ns_base, open10.cpu_min_ms);
    hrt_grid_close(g10);
    free_batch(&b10);
    free_batch(&b1s);

    /* NumPy/SciPy versions of the same query on the same file and the same
     * stars (numpy_bench.py draws on-track stars at the middle group and
     * writes them; hrt_eval is timed on exactly those). */
    const char *npb = getenv("NUMPY_BENCH");
    if (npb && *npb) {
        char cmd[1024], qpath[160];
        const size_t NQ = 200000;
        snprintf(qpath, sizeof qpath, "%s/queries.bin", tmp);
        snprintf(cmd, sizeof cmd, "/usr/bin/python3 %s %s %zu --write-queries %s 2>/dev/null", npb, grid, NQ, qpath);
        FILE *p = popen(cmd, "r");
        double np_ns = -1.0, sp_ns = -1.0;
        char line[512];
        while (p && fgets(line, sizeof line, p)) {
            double v;
            if (sscanf(line, "RESULT numpy_ns_per_star %lf", &v) == 1)
                np_ns = v;
            if (sscanf(line, "RESULT scipy_ns_per_star %lf", &v) == 1)
                sp_ns = v;
        }
        if (p)
            pclose(p);
        FILE *qf = fopen(qpath, "rb");
        batch bq = {0, NULL, NULL, NULL, NULL};
        if (qf) {
            bq.n = NQ;
            bq.m = malloc(NQ * sizeof(double));
            bq.z = malloc(NQ * sizeof(double));
            bq.age = malloc(NQ * sizeof(double));
            bq.out = malloc(NQ * sizeof(hrt_state));
            for (size_t i = 0; i < NQ; i++) {
                double pair[2] = {0.0, 0.0};
                if (fread(pair, sizeof(double), 2, qf) != 2)
                    break;
                bq.m[i] = pair[0];
                bq.age[i] = pair[1];
                bq.z[i] = hrt_grid_z(g, hrt_grid_n_z(g) / 2);
            }
            fclose(qf);
            unlink(qpath);
            double ns_q = time_eval(g, &bq, 5);
            printf("hrt_eval on numpy_bench's stars       %8.1f ns/star (on-track stars only)\n", ns_q);
            if (sp_ns > 0)
                printf("SciPy PchipInterpolator, vectorised   %8.1f ns/star -> hrtrail %.0fx faster (target >= 50)\n",
                       sp_ns, sp_ns / ns_q);
            if (np_ns > 0)
                printf("hand-vectorised NumPy bisection/PCHIP %8.1f ns/star -> hrtrail %.1fx faster\n", np_ns,
                       np_ns / ns_q);
            free_batch(&bq);
        } else {
            printf("NumPy/SciPy comparison: %s wrote no queries\n", npb);
        }
    }
    printf("(checksum %g)\n", sink);
    free(ages);
    free_batch(&b1);
    free_batch(&bz);
    hrt_grid_close(g);
    unlink(path10);
    if (grid == path)
        unlink(path);
    rmdir(tmp);
    return 0;
}
