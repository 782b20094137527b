/* Private: drawing the stars of a population, shared by the files of
 * lib/population: a specification prepared for drawing (spec.c), the
 * per-chunk random streams and the draws (draws.c) that the runs (run.c)
 * use, and the test of a set-up IMF (imf.c) the specification check needs. */
#ifndef HRTRAIL_LIB_POPULATION_SAMPLING_H
#define HRTRAIL_LIB_POPULATION_SAMPLING_H

#include <stddef.h>
#include <stdint.h>

#include <gsl/gsl_rng.h>

#include "hrtrail.h"

/* HRT_OK if every field of summary s that adding, merging or a run relies
 * on is valid (its size, epoch, binning and extrema), else HRT_E_INVALID
 * with a message starting with who. */
int trail_pop_summary_check(const hrt_pop_summary *s, const char *who, hrt_error *err);

/* 1 if f was set up by hrt_imf_init. */
int trail_imf_is_set(const hrt_imf *f);

/* Stars formed in table interval [i - 1, i] of a table SFH: the rate is
 * linear between the points (trapezoid). */
static inline double trail_sfh_table_area(const hrt_sfh *h, size_t i)
{
    return 0.5 * (h->table_rate[i] + h->table_rate[i - 1]) * (h->table_t_yr[i] - h->table_t_yr[i - 1]);
}

/* A checked specification with what its draws need precomputed (read-only,
 * shared by the threads of a run). */
typedef struct trail_pop_prep {
    const hrt_pop_spec *spec;
    double *cum;       /* SFH table: cumulative number at each table point, cum[n - 1] = 1 */
    double exp_c;      /* exponential SFH: expm1(-(t_end - t_start) / tau) */
    double z_map_lo, z_map_hi; /* a uniform draw maps linearly onto [z_map_lo, z_map_hi]: log10 Z limits
                                * (log-uniform), or Phi at the normal's limits (log-normal) */
    double z_mu;       /* log-normal: log10 of the median Z */
} trail_pop_prep;

/* Check spec (hrt_pop_spec_check's codes and messages) and prepare it; free with trail_pop_prep_free. */
int trail_pop_prep_init(trail_pop_prep *P, const hrt_pop_spec *spec, hrt_error *err);
void trail_pop_prep_free(trail_pop_prep *P);

/* The random stream of a chunk: two GSL generators whose states are
 * allocated here, not by gsl_rng_alloc, so GSL's error handler is never reached. */
typedef struct trail_pop_stream {
    gsl_rng a, b;
} trail_pop_stream;

int trail_pop_stream_alloc(trail_pop_stream *s); /* HRT_OK or HRT_E_NOMEM */
void trail_pop_stream_free(trail_pop_stream *s);
/* Start the stream of chunk `chunk` of a population with seed `seed`. */
void trail_pop_stream_seed(trail_pop_stream *s, uint64_t seed, uint64_t chunk);

/* Stars in a chunk: chunk_size but for the last. */
uint64_t trail_pop_chunk_len(const hrt_pop_spec *spec, uint64_t chunk);
/* The next n stars of a stream (initial mass, Z, birth time), in the documented order of draws. */
void trail_pop_draw_stars(const trail_pop_prep *P, trail_pop_stream *s, size_t n, double *m, double *z, double *t);

#endif
