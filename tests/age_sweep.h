/* A dense sweep of log age across mass (include/hrtrail/core.h,
 * hrt_grid_open_with, note 3): in every interval between two tracks of one
 * route of every metallicity group, log age must increase strictly from EEP
 * to EEP at every mass, and at a track's own mass it must be the track's
 * own.  Shared by tests/test_age_blend.c (a few hundred masses per
 * interval) and the tool tests/bench/bench_age_sweep.c (thousands).  It reads the
 * library's private layout (lib/core/core.h) and evaluates log age with the
 * function every query path uses (trail_q_value: hrt_star, hrt_eval's loop,
 * its batch kernel and hrt_isochrone sum the same four products). */
#ifndef HRTRAIL_TESTS_AGE_SWEEP_H
#define HRTRAIL_TESTS_AGE_SWEEP_H

#include <stddef.h>

#include "hrtrail.h"

typedef struct age_sweep {
    size_t intervals;   /* intervals swept (both tracks on one route) */
    size_t stars;       /* masses evaluated inside or at the ends of an interval */
    size_t pairs;       /* consecutive EEP pairs compared */
    size_t knots;       /* tracks whose own mass was evaluated */
    size_t knot_eeps;   /* EEPs compared with the track's own log age */
    size_t bad_order;   /* pairs whose log age does not increase strictly */
    size_t bad_knot;    /* knot EEPs whose log age differs from the track's */
    size_t bad_place;   /* masses the library placed on another route or interval, or refused */
    double min_gap;     /* smallest log-age step between consecutive EEPs seen, dex */
    double min_rel_gap; /* smallest step / the smaller of the two tracks' steps at those EEPs
                         * (masses strictly inside an interval) */
    char first[320];    /* the first failure, for the message */
} age_sweep;

/* Sweep grid g (opened with any type): per_interval masses spread evenly
 * in log mass (one at a random point of each of per_interval equal parts,
 * from *seed), plus each interval's two knots, the masses 1e-15, 1e-14,
 * 1e-13 and 1e-12 relative inside each knot and the neighbouring doubles of
 * the knot masses.  raw != 0 evaluates the type's own slopes instead of the
 * stored blended ones (what the ages would be without the blend), to show
 * the check can fail.  Counts are added to *r (age_sweep_init first). */
void age_sweep_init(age_sweep *r);
void age_sweep_grid(const hrt_grid *g, size_t per_interval, int raw, unsigned long long *seed, age_sweep *r);

#endif
