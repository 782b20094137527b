/* Figures for the main-sequence calibration (hrt_ms_*): the time to sample
 * the band and per query, wall clock, printed.  A benchmark, not a test.
 * Usage: hrtrail-ms-bench [GRID]  (default: HRTRAIL_GRID or the installed grid) */
#include <math.h>
#include <stdio.h>
#include <time.h>

#include "hrtrail.h"

static double now_s(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

int main(int argc, char **argv)
{
    hrt_grid *g;
    hrt_ms *ms = NULL;
    hrt_error err;
    if (hrt_grid_open(argc > 1 ? argv[1] : NULL, &g, &err) != HRT_OK) {
        fprintf(stderr, "%s\n", err.message);
        return 1;
    }
    double t0 = now_s(), best = INFINITY;
    for (int rep = 0; rep < 3; rep++) {
        hrt_ms_free(ms);
        t0 = now_s();
        if (hrt_ms_new(g, 0.014, NULL, &ms, &err) != HRT_OK) {
            fprintf(stderr, "%s\n", err.message);
            return 1;
        }
        best = fmin(best, now_s() - t0);
    }
    printf("hrt_ms_new (400 masses x 96 ages, Z = 0.014): %.1f ms (best of 3)\n", 1e3 * best);
    const double sig[3] = {0.0, 50.0, 300.0};
    for (int k = 0; k < 3; k++) {
        int n = 0;
        t0 = now_s();
        for (double teff = 3000.0; teff < 30000.0; teff *= 1.01) {
            hrt_ms_estimate e;
            n += hrt_ms_from_teff(ms, teff, sig[k], &e, NULL) == HRT_OK;
        }
        double dt = now_s() - t0;
        printf("hrt_ms_from_teff, sigma %3.0f K: %d queries, %.1f us per query\n", sig[k], n, 1e6 * dt / n);
    }
    int n = 0;
    t0 = now_s();
    for (double teff = 3000.0; teff < 30000.0; teff *= 1.01) {
        hrt_ms_distance_result d;
        n += hrt_ms_distance(ms, teff, 0.01 * teff, 1e-10, 2e-12, &d, NULL) == HRT_OK;
    }
    printf("hrt_ms_distance, sigma 1 %% Teff and 2 %% flux: %d queries, %.1f us per query\n", n,
           1e6 * (now_s() - t0) / n);
    hrt_ms_free(ms);
    hrt_grid_close(g);
    return 0;
}
