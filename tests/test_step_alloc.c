/*
 * hrt_step and hrt_remap allocate nothing.
 *
 * This program is linked with the STATIC library and
 * -Wl,--wrap=malloc,--wrap=calloc,--wrap=realloc,--wrap=strdup,--wrap=free,
 * so every call the library's own objects make to those functions goes
 * through the counting wrappers below (the library allocates through no
 * other function: GSL and HDF5 are called only while a grid is opened, which
 * happens before counting starts).  While armed, the wrappers count every
 * call; the check is that the count stays 0 over thousands of steps and
 * remaps of random stars, with and without mass changes, successes and
 * refusals alike.  The count is shown to work by counting the allocations
 * of hrt_star_new (which must allocate) under the same wrappers.
 */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "hrtrail.h"

void *__real_malloc(size_t n);
void *__real_calloc(size_t n, size_t s);
void *__real_realloc(void *p, size_t n);
char *__real_strdup(const char *s);
void __real_free(void *p);

static int armed;
static long calls;

void *__wrap_malloc(size_t n)
{
    calls += armed;
    return __real_malloc(n);
}
void *__wrap_calloc(size_t n, size_t s)
{
    calls += armed;
    return __real_calloc(n, s);
}
void *__wrap_realloc(void *p, size_t n)
{
    calls += armed;
    return __real_realloc(p, n);
}
char *__wrap_strdup(const char *s)
{
    calls += armed;
    return __real_strdup(s);
}
void __wrap_free(void *p)
{
    calls += armed && p;
    __real_free(p);
}

static double rnd(uint64_t *s)
{
    *s ^= *s >> 12;
    *s ^= *s << 25;
    *s ^= *s >> 27;
    return (double)((*s * 0x2545F4914F6CDD1DULL) >> 11) * 0x1.0p-53;
}

int main(void)
{
    hrt_grid *g = NULL;
    hrt_error e;
    if (hrt_grid_open(NULL, &g, &e) != HRT_OK) {
        fprintf(stderr, "open: %s\n", e.message);
        return 1;
    }
    /* the wrappers see the library's allocations */
    hrt_star *st = NULL;
    armed = 1;
    int rc = hrt_star_new(g, 1.0, 0.014, &st, &e);
    armed = 0;
    hrt_star_free(st);
    if (rc != HRT_OK || calls == 0) {
        fprintf(stderr, "the wrappers did not see hrt_star_new allocate (%ld calls)\n", calls);
        return 1;
    }
    printf("hrt_star_new: %ld allocation calls seen (the count works)\n", calls);

    double zlo, zhi;
    hrt_grid_z_range(g, &zlo, &zhi);
    uint64_t seed = 0x5eed00a1;
    long steps = 0, remaps = 0, refusals = 0;
    calls = 0;
    for (int i = 0; i < 300; i++) {
        double m = 0.3 * pow(200.0, rnd(&seed)), z = zlo * pow(zhi / zlo, rnd(&seed)), t = 1e5;
        hrt_state s;
        armed = 1;
        rc = hrt_eval(g, 1, &m, &z, 0.0, &t, &s, &e);
        double dt = 0.0;
        hrt_step(g, &s, 0.0, 0.0, &s, &dt, &e);
        for (int k = 0; k < 30 && rc == HRT_OK; k++) {
            double mdot = (rnd(&seed) - 0.6) * 0.5 * HRT_STEP_MASS_FRACTION * s.mass_msun / dt;
            hrt_state nx;
            double dtn;
            rc = hrt_step(g, &s, dt, k % 3 ? mdot : 0.0, &nx, &dtn, &e);
            steps++;
            hrt_state r;
            if (hrt_remap(g, &s, s.mass_msun * (1.0 + 0.1 * (rnd(&seed) - 0.5)), &r, &e) != HRT_OK)
                refusals++;
            remaps++;
            if (rc != HRT_OK) /* a refused change: step on without it */
                rc = hrt_step(g, &s, dt, 0.0, &nx, &dtn, &e);
            if (rc == HRT_OK) {
                s = nx;
                dt = dtn * 10.0; /* larger than proposed: more phases per star */
            }
        }
        armed = 0;
    }
    hrt_grid_close(g);
    printf("%ld steps and %ld remaps (%ld refused): %ld allocation calls\n", steps, remaps, refusals, calls);
    return calls == 0 && steps > 3000 ? 0 : 1;
}
