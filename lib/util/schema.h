/*
 * The grid file's schema as both the reader (lib/core/grid_read.c) and the
 * writer (lib/build/builder.c) see it: the format's name and version, the
 * limits on sizes, and the plausibility bounds, so that anything the
 * library writes it can read back.  tracks/FORMAT.md documents the same.
 */
#ifndef HRTRAIL_LIB_SCHEMA_H
#define HRTRAIL_LIB_SCHEMA_H

#include "hrtrail.h"

/* Value of the root attribute 'format'. */
#define TRAIL_FORMAT_NAME "hrtrail-track-grid"

/* Largest numbers of routes, metallicity groups and EEPs per route a grid
 * may have (fixed-size scratch arrays on the stack; search tables hold
 * 16-bit EEP indices). */
#define TRAIL_MAX_ROUTES 8
#define TRAIL_MAX_Z 64
#define TRAIL_MAX_EEP 65535

/* Plausibility bounds the reader enforces and the builder too: log10
 * values within +-TRAIL_MAX_LOG_ABS, current, core and remnant masses at
 * most TRAIL_MAX_MASS_FACTOR times the initial mass (far outside any star;
 * larger values would overflow the splines). */
#define TRAIL_MAX_LOG_ABS 100.0
#define TRAIL_MAX_MASS_FACTOR 2.0

/* The EEP layout of one route as a file stores it (routes/<name>/). */
typedef struct route_layout {
    char *name;
    size_t n_kp;
    char **kp_names;
    long *kp_eep;  /* [n_kp], kp_eep[0] = 0, kp_eep[n_kp-1] = n_eep-1 */
    size_t n_eep;
} route_layout;

/* A root text attribute (name, value). */
typedef struct attr_pair {
    char *name, *value;
} attr_pair;

#endif
