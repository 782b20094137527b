/*
 * Stars whose mass changes: how long hrt_remap and hrt_step take, and which
 * share of random changes has an equivalent point, phase by phase.
 * Prints figures; asserts nothing about time.
 *
 * Usage: hrtrail-bench-remap [GRID] [Z]   (default: the default grid, 0.014)
 * Stars: initial masses log-uniform 0.1-100 Msun; half of them at an age
 * uniform over their main sequence, half uniform between its end and their
 * last EEP; each changed by -f and +f for f = 1, 5, 20 %.
 */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <time.h>

#include "hrtrail.h"

static double rnd(uint64_t *s)
{
    *s ^= *s >> 12;
    *s ^= *s << 25;
    *s ^= *s >> 27;
    return (double)((*s * 0x2545F4914F6CDD1DULL) >> 11) * 0x1.0p-53;
}

static double now_us(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return t.tv_sec * 1e6 + t.tv_nsec * 1e-3;
}

/* A random luminous star: on the main sequence, or after it. */
static int draw(const hrt_grid *g, double z, uint64_t *seed, int ms, hrt_state *s)
{
    double m = 0.1 * pow(1000.0, rnd(seed)), t = 1e4;
    hrt_star *st = NULL;
    if (hrt_eval(g, 1, &m, NULL, z, &t, s, NULL) != HRT_OK || hrt_star_new(g, m, z, &st, NULL) != HRT_OK)
        return 0;
    hrt_phase_span sp[32];
    size_t n = 0;
    hrt_star_phases(st, sp, 32, &n);
    double end = hrt_star_end_age(st);
    hrt_star_free(st);
    double a = NAN;
    for (size_t k = 0; k < n; k++)
        if (sp[k].phase == HRT_PHASE_MS)
            a = ms ? sp[k].phase_start_yr + rnd(seed) * (sp[k].phase_end_yr - sp[k].phase_start_yr)
                   : sp[k].phase_end_yr + rnd(seed) * (end - sp[k].phase_end_yr);
    if (!isfinite(a) || !isfinite(end))
        return 0;
    return hrt_eval(g, 1, &m, NULL, z, &a, s, NULL) == HRT_OK && !(s->flags & HRT_FLAG_REMNANT);
}

int main(int argc, char **argv)
{
    hrt_grid *g = NULL;
    hrt_error e;
    double z = argc > 2 ? atof(argv[2]) : 0.014;
    if (hrt_grid_open(argc > 1 ? argv[1] : NULL, &g, &e) != HRT_OK) {
        fprintf(stderr, "hrtrail-bench-remap: %s\n", e.message);
        return 1;
    }
    const double fr[] = {0.01, 0.05, 0.20};
    printf("hrt_remap at Z = %g: share of changes with an equivalent point (each star loses and gains f)\n", z);
    for (int f = 0; f < 3; f++) {
        long ok[HRT_PHASE_SLOTS] = {0}, tot[HRT_PHASE_SLOTS] = {0}, calls = 0;
        double us = 0.0;
        uint64_t seed = 7;
        for (int i = 0; i < 4000; i++) {
            hrt_state s, o;
            if (!draw(g, z, &seed, i % 2, &s))
                continue;
            for (int sg = -1; sg <= 1; sg += 2) {
                double t0 = now_us();
                int rc = hrt_remap(g, &s, s.mass_msun * (1.0 + sg * fr[f]), &o, &e);
                us += now_us() - t0;
                calls++;
                tot[s.phase]++;
                ok[s.phase] += rc == HRT_OK;
            }
        }
        printf("f = %2.0f %%: %.1f us per remap (%ld remaps)\n", 100 * fr[f], us / (double)calls, calls);
        for (int p = 0; p < HRT_PHASE_SLOTS; p++)
            if (tot[p])
                printf("  %-9s %5ld of %5ld (%3.0f %%)\n", hrt_phase_key(p), ok[p], tot[p], 100.0 * ok[p] / tot[p]);
    }
    uint64_t seed = 9;
    long n = 0;
    double us = 0.0;
    for (int i = 0; i < 2000; i++) {
        double m = 0.5 * pow(100.0, rnd(&seed)), t = 1e6, dt = 1e5;
        hrt_state s;
        if (hrt_eval(g, 1, &m, NULL, z, &t, &s, NULL) != HRT_OK)
            continue;
        for (int k = 0; k < 20; k++) {
            hrt_state nx;
            double dtn, t0 = now_us();
            int rc = hrt_step(g, &s, dt, k % 2 ? 0.0 : 1e-3 * s.mass_msun / dt, &nx, &dtn, NULL);
            us += now_us() - t0;
            if (rc != HRT_OK)
                break;
            s = nx;
            dt = dtn;
            n++;
        }
    }
    printf("hrt_step: %.1f us per step, half of them with a mass change (%ld steps)\n", us / (double)n, n);
    hrt_grid_close(g);
    return 0;
}
