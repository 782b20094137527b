/*
 * The cross-path consistency suite (tests/consistency): what it shares.
 * Every check draws its random cases from its own stream of one seed, counts
 * its cases and failures, and prints one line per failure that reproduces it
 * (the seed and the exact values, %.17g).
 */
#ifndef HRTRAIL_TESTS_CONSISTENCY_H
#define HRTRAIL_TESTS_CONSISTENCY_H

#include <stdint.h>

#include "hrtrail.h"

/* A seeded random stream (SplitMix64, common practice for test streams). */
typedef struct cs_rng {
    uint64_t s;
} cs_rng;

/* The stream of check `stream` under the run's seed. */
cs_rng cs_rng_for(uint64_t seed, uint64_t stream);
/* Uniform in [0, 1). */
double cs_uniform(cs_rng *r);
/* Log-uniform in [lo, hi]. */
double cs_log_uniform(cs_rng *r, double lo, double hi);

/* The run: its seed, and the cases and failures of the check running. */
typedef struct cs_run {
    const hrt_grid *g;
    uint64_t seed;
    const char *check; /* name of the check running */
    long cases, failures;
} cs_run;

/* Count one case. */
void cs_case(cs_run *R);
/* Count a failure and print "FAIL check seed=... " and the rest (printf-style), one line. */
void cs_fail(cs_run *R, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 2, 3)))
#endif
    ;

/* A random star of the whole grid: Z log-uniform over hrt_grid_z_range,
 * initial mass log-uniform over hrt_grid_mass_range at that Z, age
 * log-uniform over [age_lo, age_hi] yr. */
void cs_random_star(const hrt_grid *g, cs_rng *r, double age_lo, double age_hi, double *mass, double *z, double *age);

/* 1 if the state of a star that hrt_eval accepted has the bits of another. */
int cs_same_state(const hrt_state *a, const hrt_state *b);

/* The checks (each returns after its cases; failures are in R). */
void cs_check_isochrones(cs_run *R);
void cs_check_fits(cs_run *R);
void cs_check_edges(cs_run *R);

#endif
