/*
 * What the files of the build layer share: the limit on a segment's EEP
 * count, which both the builder and the import check, and the rule placing
 * the boundary masses between routes, which the builder applies when none
 * are set and the import applies to report them.
 */
#ifndef HRTRAIL_LIB_BUILD_BUILD_H
#define HRTRAIL_LIB_BUILD_BUILD_H

#include <math.h>
#include <stddef.h>

#include "hrtrail.h"

/* A segment has two ends: a route has at least TRAIL_MIN_KEYPOINTS
 * keypoints, a track reaching fewer of its route's is unusable, and a raw
 * track has at least TRAIL_MIN_SAMPLES samples. */
#define TRAIL_MIN_KEYPOINTS 2
#define TRAIL_MIN_SAMPLES 2

/* Most EEPs one segment of a route may have. */
#define TRAIL_MAX_SEGMENT_EEP 100000

/* The text of a macro's value, for messages that must print a constant as
 * it is written (printf's %g would turn 1e-6 into "1e-06"). */
#define TRAIL_STR_(x) #x
#define TRAIL_STR(x) TRAIL_STR_(x)

/* Boundary between route k and route k + 1 at one metallicity, from the
 * tracks in order of increasing mass: the heaviest track of a route up to k
 * (below) and the lightest of a later one (above).  Feed every track to
 * trail_boundary_see(), in order, then place the boundary. */
typedef struct trail_boundary_scan {
    size_t k;
    double below, above; /* Msun; -1: no such track */
} trail_boundary_scan;

static inline trail_boundary_scan trail_boundary_start(size_t k)
{
    trail_boundary_scan s = {k, -1.0, -1.0};
    return s;
}

static inline void trail_boundary_see(trail_boundary_scan *s, int route, double initial_mass)
{
    if (route <= (int)s->k)
        s->below = initial_mass;
    else if (s->above < 0.0)
        s->above = initial_mass;
}

/* The geometric mean of the two masses; with tracks on one side only, twice
 * the mass below or half the mass above.  bound[0 .. k-1] are the boundaries
 * placed before: a boundary never lies below the previous one (a route
 * without tracks has an empty mass range). */
static inline double trail_boundary_place(const trail_boundary_scan *s, const double *bound)
{
    double m = s->below > 0.0 && s->above > 0.0 ? sqrt(s->below * s->above)
               : s->below > 0.0                 ? 2.0 * s->below
                                                : 0.5 * s->above;
    if (s->k > 0 && m < bound[s->k - 1])
        m = bound[s->k - 1];
    return m;
}

#endif
