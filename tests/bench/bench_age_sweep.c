/* The dense sweep of log age across mass (tests/age_sweep.h) with many
 * masses per interval: every interval of every group, all four types, of
 * the grids named (default: the default grid) and of three synthetic grids
 * (tests/synth.c; an eighth as many masses per interval: their ages are
 * smooth functions that never need the blend).  Prints, per grid and type, the masses and EEP pairs
 * swept, failures (log age not increasing strictly, a knot's age not the
 * track's own, a mass placed elsewhere), the smallest log-age step seen and
 * its ratio to the tracks' smaller step, and the time; exits 1 on any
 * failure.
 *
 *   hrtrail-age-sweep [-n MASSES_PER_INTERVAL] [GRID.h5 ...]   (default 4096)
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "age_sweep.h"
#include "hrtrail.h"
#include "synth.h"

static double now(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

/* Sweep one file with every type; the number of failures. */
static size_t sweep_file(const char *path, const char *label, size_t n, unsigned long long *seed)
{
    size_t bad = 0;
    for (int it = 0; it < HRT_INTERP_COUNT; it++) {
        hrt_grid *g = NULL;
        hrt_error err;
        if (hrt_grid_open_with(path, it, &g, &err) != HRT_OK) {
            fprintf(stderr, "%s: %s\n", path, err.message);
            return bad + 1;
        }
        age_sweep r;
        age_sweep_init(&r);
        double t0 = now();
        age_sweep_grid(g, n, 0, seed, &r);
        double t1 = now();
        printf("%-16s %-8s %5zu intervals %10zu masses %12zu pairs %8zu knot EEPs | not increasing %zu, knots off "
               "%zu, misplaced %zu | smallest step %.3g dex (%.3g of the tracks') | %.1f s\n",
               label, hrt_interp_name(it), r.intervals, r.stars, r.pairs, r.knot_eeps, r.bad_order, r.bad_knot,
               r.bad_place, r.min_gap, r.min_rel_gap, t1 - t0);
        if (r.first[0])
            printf("  first failure: %s\n", r.first);
        fflush(stdout);
        bad += r.bad_order + r.bad_knot + r.bad_place;
        hrt_grid_close(g);
    }
    return bad;
}

int main(int argc, char **argv)
{
    size_t n = 4096;
    int a = 1;
    if (a + 1 < argc && !strcmp(argv[a], "-n")) {
        n = (size_t)strtoul(argv[a + 1], NULL, 10);
        a += 2;
    }
    unsigned long long seed = 0x5851F42D4C957F2Dull;
    size_t bad = 0;
    if (a == argc)
        bad += sweep_file(hrt_default_grid_path(), "default grid", n, &seed);
    for (; a < argc; a++)
        bad += sweep_file(argv[a], argv[a], n, &seed);
    static const synth_spec specs[] = {
        {9, 11, 4, 1, 0, 0.3, 1.0, 10.0},
        {9, 11, 3, 1, 1, 0.3, 1.0, 10.0},
        {20, 30, 6, 10, 1, 0.3, 1.0, 100.0},
    };
    const char *t = getenv("TMPDIR");
    char path[512];
    snprintf(path, sizeof path, "%s/hrtrail-age-sweep-%ld.h5", t && *t ? t : "/tmp", (long)getpid());
    for (size_t k = 0; k < sizeof specs / sizeof specs[0]; k++) {
        hrt_error err;
        if (synth_write(&specs[k], path, &err) != HRT_OK) {
            fprintf(stderr, "synthetic grid %zu: %s\n", k, err.message);
            return 1;
        }
        char label[32];
        snprintf(label, sizeof label, "synthetic %zu", k);
        bad += sweep_file(path, label, n / 8 ? n / 8 : 1, &seed);
    }
    unlink(path);
    printf("%s\n", bad ? "FAILED" : "every swept mass: log age increasing along the EEPs, knots exact");
    return bad ? 1 : 0;
}
