/* hrtrail core benchmarks: prints figures, asserts nothing about time.
 *
 *   bench [GRID.h5]      default: a synthetic grid of 6 metallicities x 50
 *                        masses x ~600 EEPs written to a temporary file
 *   bench --open-only GRID.h5...   only the open time of each grid
 *
 *   bench --workload KIND N GRID   one workload only, for instruction counts
 *                        under callgrind (tests/bench/instructions.sh)
 *
 * Figures, each with its target: hrt_eval at one grid metallicity and at
 * random Z, hrt_star_at, hrt_isochrone, grid open, 2 threads against 1,
 * growth with 10x masses, each timed in thread CPU time (min and median of
 * several runs; other engineers' load on a shared machine moves wall time
 * far more), and beside them references measured in the same run: a
 * straightforward C/GSL version of the query (gsl_ref.c) on the same stars,
 * a compute-only kernel on 1 and 2 threads, and (when NUMPY_BENCH names
 * tests/bench/numpy_bench.py) NumPy at its best chunk size and SciPy.
 * It exits with 1 when hrt_eval and the C/GSL reference disagree beyond
 * the tolerance gsl_ref.h states (a wrong answer, not a slow one). */
#include <math.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "gsl_ref.h"
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

/* Min and median of a few thread-CPU timings, per unit. */
typedef struct cpu_fig {
    double min, median;
} cpu_fig;

#define MAX_REPS 16
static cpu_fig fig_of(double *t, int reps, double per)
{
    qsort(t, (size_t)reps, sizeof *t, cmp_double);
    return (cpu_fig){t[0] * per, t[reps / 2] * per};
}

static cpu_fig time_eval(const hrt_grid *g, batch *b, int reps)
{
    double t[MAX_REPS];
    for (int r = 0; r < reps; r++) {
        double c0 = thread_cpu();
        hrt_eval(g, b->n, b->m, b->z, 0, b->age, b->out, NULL);
        t[r] = thread_cpu() - c0;
    }
    return fig_of(t, reps, 1e9 / b->n);
}

typedef struct thr_arg {
    const hrt_grid *g;
    batch *b;
    size_t lo, hi;
    double cpu; /* the thread's CPU time */
} thr_arg;

static void *thr_main(void *p)
{
    thr_arg *a = p;
    double c0 = thread_cpu();
    hrt_eval(a->g, a->hi - a->lo, a->b->m + a->lo, a->b->z + a->lo, 0, a->b->age + a->lo, a->b->out + a->lo, NULL);
    a->cpu = thread_cpu() - c0;
    return NULL;
}

/* Wall time of the batch on nt threads (minimum of 3), and in *cpu the
 * least total thread CPU time: CPU time hardly moves with other processes'
 * load, so 2 threads' total against 1 thread's shows what the threads cost
 * each other inside the process (shared writes, cache, memory). */
static double time_threads(const hrt_grid *g, batch *b, int nt, double *cpu)
{
    double best = 1e30;
    *cpu = 1e30;
    for (int r = 0; r < 3; r++) {
        pthread_t th[8];
        thr_arg a[8];
        double t0 = now();
        for (int k = 0; k < nt; k++) {
            a[k] = (thr_arg){g, b, b->n * k / nt, b->n * (k + 1) / nt, 0.0};
            pthread_create(&th[k], NULL, thr_main, &a[k]);
        }
        double c = 0.0;
        for (int k = 0; k < nt; k++) {
            pthread_join(th[k], NULL);
            c += a[k].cpu;
        }
        double t = now() - t0;
        if (t < best)
            best = t;
        if (c < *cpu)
            *cpu = c;
    }
    return best;
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
    printf("%-37s %8.2f ms   (thread CPU, min of %d; median %.2f ms; wall min %.2f ms; target <= 35 ms)\n", what,
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

/* A compute-only reference kernel (no memory traffic): what 2 threads give
 * on this machine at this moment, measured beside hrtrail's 2 threads. */
typedef struct ref_arg {
    unsigned long long seed;
    double sum, cpu;
} ref_arg;

static void *ref_kernel(void *p)
{
    ref_arg *a = p;
    double c0 = thread_cpu(), acc = 0.0;
    for (int i = 0; i < 20000000; i++)
        acc += urand(&a->seed) * 1e-3;
    a->sum = acc;
    a->cpu = thread_cpu() - c0;
    return NULL;
}

/* Wall time per unit of work on nt threads (each does one), and in *cpu
 * the least thread CPU time per unit. */
static double ref_threads_wall(int nt, double *cpu)
{
    double best = 1e30;
    *cpu = 1e30;
    for (int r = 0; r < 3; r++) {
        pthread_t th[2];
        ref_arg a[2] = {{1, 0, 0}, {2, 0, 0}};
        double t0 = now();
        for (int k = 0; k < nt; k++)
            pthread_create(&th[k], NULL, ref_kernel, &a[k]);
        double c = 0.0;
        for (int k = 0; k < nt; k++) {
            pthread_join(th[k], NULL);
            c += a[k].cpu;
        }
        double t = (now() - t0) / nt; /* per unit of work: each thread does one */
        if (t < best)
            best = t;
        if (c / nt < *cpu)
            *cpu = c / nt;
    }
    return best;
}

static void print_fig(const char *what, cpu_fig f, const char *unit, const char *target)
{
    printf("%-37s %8.1f %-8s (thread CPU min; median %.1f; %s)\n", what, f.min, unit, f.median, target);
}

/* hrt_eval against the straightforward C/GSL version (gsl_ref.c) on the
 * same on-track stars of one route at the middle group: its time, and how
 * closely the two agree (gsl_ref.h states the tolerance).  The number of
 * stars beyond it (0 when they agree; -1 without a route to compare). */
static long compare_gsl(const hrt_grid *g)
{
    size_t iz = hrt_grid_n_z(g) / 2;
    gsl_ref *r = gsl_ref_new(g, iz);
    if (!r) {
        printf("C/GSL reference: no route with 3 tracks at group %zu\n", iz);
        return -1;
    }
    const size_t N = 100000;
    batch b;
    b.n = N;
    b.m = malloc(N * sizeof(double));
    b.z = malloc(N * sizeof(double));
    b.age = malloc(N * sizeof(double));
    b.out = malloc(N * sizeof(hrt_state));
    double *ro = malloc(7 * N * sizeof(double)), lo, hi;
    gsl_ref_mass_range(r, &lo, &hi);
    unsigned long long seed = 4242;
    for (size_t i = 0; i < N; i++) {
        double lt0, lt1;
        b.m[i] = lo * pow(hi / lo, 0.01 + 0.98 * urand(&seed));
        b.z[i] = hrt_grid_z(g, iz);
        gsl_ref_age_range(r, b.m[i], &lt0, &lt1);
        b.age[i] = pow(10.0, lt0 + (lt1 - lt0) * (0.01 + 0.98 * urand(&seed)));
    }
    double t[5];
    for (int k = 0; k < 5; k++) {
        double c0 = thread_cpu();
        gsl_ref_eval(r, N, b.m, b.age, ro);
        t[k] = thread_cpu() - c0;
    }
    cpu_fig fr = fig_of(t, 5, 1e9 / N), fh = time_eval(g, &b, 5);
    double worst[7], lam_min;
    size_t both, bad = gsl_ref_compare(N, b.out, ro, worst, &both);
    size_t nbl = gsl_ref_n_blended(r, &lam_min);
    printf("C/GSL spline per EEP (same stars)     %8.1f ns/star (thread CPU min; median %.1f) -> hrtrail %.1fx "
           "(hrtrail %.1f ns)\n",
           fr.min, fr.median, fr.min / fh.min, fh.min);
    printf("  agreement on %zu of %zu stars (%zu of its intervals blend log age, lambda >= %.3g): largest "
           "|difference| log L %.2g, log Teff %.2g, log R %.2g, log g %.2g dex, masses %.2g of M0; %zu beyond "
           "%.0e dex / %.0e%s\n",
           both, N, nbl, lam_min, worst[0], worst[1], worst[2], worst[3],
           fmax(worst[4], fmax(worst[5], worst[6])), bad, GSL_REF_TOL_LOG, GSL_REF_TOL_MASS,
           bad ? "  ** DISAGREE **" : "");
    free(ro);
    free_batch(&b);
    gsl_ref_free(r);
    return (long)bad;
}

/* bench --workload KIND N GRID: one workload, nothing timed, for
 * callgrind's instruction counts (tests/bench/instructions.sh toggles
 * collection on workload()). */
__attribute__((noinline)) double workload(const hrt_grid *g, const char *kind, batch *b, size_t n);
__attribute__((noinline)) double workload(const hrt_grid *g, const char *kind, batch *b, size_t n)
{
    double sum = 0.0;
    if (strcmp(kind, "eval-grid-z") == 0 || strcmp(kind, "eval-random-z") == 0) {
        hrt_eval(g, b->n, b->m, b->z, 0, b->age, b->out, NULL);
        for (size_t i = 0; i < b->n; i++)
            sum += b->out[i].status == HRT_OK ? b->out[i].log_l_lsun : 0.0;
    } else if (strcmp(kind, "isochrone") == 0) {
        size_t cap = 100000, k;
        hrt_state *iso = malloc(cap * sizeof *iso);
        for (size_t r = 0; r < n; r++) {
            hrt_isochrone(g, 1e9, hrt_grid_z(g, 2), iso, cap, &k, NULL);
            sum += (double)k;
        }
        free(iso);
    } else if (strcmp(kind, "star-at") == 0) {
        hrt_star *st;
        hrt_state o;
        hrt_star_new(g, 2.0, hrt_grid_z(g, 2), &st, NULL);
        for (size_t i = 0; i < n; i++) {
            hrt_star_at(st, b->age[i], &o);
            sum += o.mass_msun;
        }
        hrt_star_free(st);
    }
    return sum;
}

/* The open workload: n opens and closes of the grid at path. */
__attribute__((noinline)) int open_workload(const char *path, size_t n);
__attribute__((noinline)) int open_workload(const char *path, size_t n)
{
    for (size_t i = 0; i < n; i++) {
        hrt_grid *g;
        hrt_error e;
        if (hrt_grid_open(path, &g, &e) != HRT_OK)
            return fprintf(stderr, "bench: %s\n", e.message), 1;
        hrt_grid_close(g);
    }
    return 0;
}

static int run_workload(const char *kind, size_t n, const char *path)
{
    hrt_grid *g;
    hrt_error e;
    if (strcmp(kind, "open") == 0)
        return open_workload(path, n);
    if (hrt_grid_open(path, &g, &e) != HRT_OK)
        return fprintf(stderr, "bench: %s\n", e.message), 1;
    batch b;
    make_batch(g, &b, n, strcmp(kind, "eval-random-z") == 0, 1234567);
    if (strcmp(kind, "star-at") == 0) {
        /* the timed figure's inputs (main): log-uniform ages up to 1.2 times
         * the star's end, about 2.5 % of them past it */
        hrt_star *st;
        if (hrt_star_new(g, 2.0, hrt_grid_z(g, 2), &st, &e) != HRT_OK)
            return fprintf(stderr, "bench: %s\n", e.message), 1;
        double tend = hrt_star_end_age(st);
        hrt_star_free(st);
        unsigned long long seed = 99;
        for (size_t i = 0; i < n; i++)
            b.age[i] = 1e6 * pow(tend * 1.2 / 1e6, urand(&seed));
    }
    printf("%s %zu checksum %g\n", kind, n, workload(g, kind, &b, n));
    free_batch(&b);
    hrt_grid_close(g);
    return 0;
}

int main(int argc, char **argv)
{
    char tmp[] = "/tmp/hrt-bench-XXXXXX";
    char path[128], path10[128];
    if (argc > 1 && strcmp(argv[1], "--open-only") == 0)
        return open_only(argc - 2, argv + 2);
    if (argc == 5 && strcmp(argv[1], "--workload") == 0)
        return run_workload(argv[2], (size_t)atol(argv[3]), argv[4]);
    const char *grid = argc > 1 ? argv[1] : NULL;
    if (!mkdtemp(tmp))
        return 1;
    hrt_error e;
    synth_spec s = {20, 30, 6, 10, 1, 0.3, 1.0, 100.0}; /* 50 masses, 501 and 601 EEPs */
    snprintf(path, sizeof path, "%s/synth-6x50x600.h5", tmp);
    if (synth_write(&s, path, &e)) {
        fprintf(stderr, "bench: %s\n", e.message);
        return 1;
    }
    if (!grid)
        grid = path;
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
    cpu_fig f1 = time_eval(g, &b1, 7), fz = time_eval(g, &bz, 5);
    print_fig("hrt_eval, one grid Z, full state", f1, "ns/star", "target <= 110");
    print_fig("hrt_eval, random Z between groups", fz, "ns/star", "target <= 400");
    long disagree = compare_gsl(g);

    /* One star at random ages. */
    hrt_star *st;
    hrt_star_new(g, 2.0, hrt_grid_z(g, 2), &st, NULL);
    double tend = hrt_star_end_age(st);
    unsigned long long seed = 99;
    double *ages = malloc(N * sizeof(double));
    for (size_t i = 0; i < N; i++)
        ages[i] = 1e6 * pow(tend * 1.2 / 1e6, urand(&seed));
    hrt_state out;
    double sink = 0.0, tr[MAX_REPS];
    for (int r = 0; r < 7; r++) {
        double c0 = thread_cpu();
        for (size_t i = 0; i < N; i++) {
            hrt_star_at(st, ages[i], &out);
            sink += out.mass_msun;
        }
        tr[r] = thread_cpu() - c0;
    }
    print_fig("hrt_star_at, one star, random ages", fig_of(tr, 7, 1e9 / N), "ns/call", "target <= 40");
    hrt_star_free(st);

    /* Isochrone at one age. */
    size_t cap = 100000, n = 0;
    hrt_state *iso = malloc(cap * sizeof *iso);
    for (int r = 0; r < 11; r++) {
        double c0 = thread_cpu();
        hrt_isochrone(g, 1e9, hrt_grid_z(g, 2), iso, cap, &n, NULL);
        tr[r] = thread_cpu() - c0;
    }
    cpu_fig fi = fig_of(tr, 11, 1e3);
    printf("%-37s %8.3f ms       (thread CPU min; median %.3f; %zu points; target <= 0.35 ms)\n",
           "hrt_isochrone, 1 Gyr, grid Z", fi.min, fi.median, n);
    free(iso);

    /* Two threads: wall time (CPU time cannot show parallelism), against a
     * compute-only kernel on the same threads in the same run. */
    double c1, c2, rc1, rc2;
    double t1 = time_threads(g, &b1, 1, &c1), t2 = time_threads(g, &b1, 2, &c2);
    double r1 = ref_threads_wall(1, &rc1), r2 = ref_threads_wall(2, &rc2);
    printf("2 threads against 1 (shared grid)     %8.2f x    (wall; reference kernel %.2f x in the same run; "
           "target >= 1.8; %ld cores online)\n",
           t1 / t2, r1 / r2, sysconf(_SC_NPROCESSORS_ONLN));
    printf("  CPU time of 2 threads / 1 thread    %8.2f x    (the same work; reference kernel %.2f x; above 1: what "
           "the threads cost each other)\n",
           c2 / c1, rc2 / rc1);

    /* 10x the masses: the synthetic grid against itself with ten times the
     * tracks, the same kind of random stars. */
    open_times open_s, open10;
    hrt_grid *gs = open_timed(path, &open_s), *g10 = open_timed(path10, &open10);
    batch b10, bs;
    make_batch(g10, &b10, N, 0, 1234567);
    make_batch(gs, &bs, N, 0, 1234567);
    cpu_fig fs = time_eval(gs, &bs, 5), f10 = time_eval(g10, &b10, 5);
    printf("10x more masses (%zu tracks): cost    %8.2f x    (thread CPU min %.1f against %.1f ns/star with %zu "
           "tracks; target <= 1.3; open %.1f ms)\n",
           hrt_grid_n_masses(g10, 0) * hrt_grid_n_z(g10), f10.min / fs.min, f10.min, fs.min,
           hrt_grid_n_masses(gs, 0) * hrt_grid_n_z(gs), open10.cpu_min_ms);
    hrt_grid_close(g10);
    hrt_grid_close(gs);
    free_batch(&b10);
    free_batch(&bs);

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
        int np_chunk = 0;
        char line[512];
        while (p && fgets(line, sizeof line, p)) {
            double v;
            const char *ck = strstr(line, " chunk ");
            if (sscanf(line, "RESULT numpy_ns_per_star %lf", &v) == 1) {
                np_ns = v;
                np_chunk = ck ? atoi(ck + 7) : 0;
            }
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
            double ns_q = time_eval(g, &bq, 5).min;
            printf("hrt_eval on numpy_bench's stars       %8.1f ns/star (thread CPU min; on-track stars only)\n", ns_q);
            if (sp_ns > 0)
                printf("SciPy PchipInterpolator, vectorised   %8.1f ns/star -> hrtrail %.0fx faster (target >= 50)\n",
                       sp_ns, sp_ns / ns_q);
            if (np_ns > 0)
                printf("hand-vectorised NumPy, best chunk %-4d %8.1f ns/star -> hrtrail %.1fx faster (target >= 4)\n",
                       np_chunk, np_ns, np_ns / ns_q);
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
    unlink(path);
    rmdir(tmp);
    if (disagree > 0) {
        fprintf(stderr, "bench: hrt_eval and the C/GSL reference disagree on %ld stars\n", disagree);
        return 1;
    }
    return 0;
}
