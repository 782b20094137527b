/*
 * The grid under construction, as the building side (builder.c: routes,
 * tracks put on EEPs, attributes) fills it and the writing side
 * (builder_write.c: the HDF5 file) writes it.
 */
#ifndef HRTRAIL_LIB_BUILD_BUILDER_H
#define HRTRAIL_LIB_BUILD_BUILDER_H

#include <stddef.h>

#include "hrtrail.h"
#include "util/schema.h"

/* One track on its route's EEPs. */
typedef struct trail_eep_track {
    double initial_mass, remnant_mass; /* Msun; remnant_mass NaN without a remnant */
    int route, remnant, n_eep;
    double *q[TRAIL_NF]; /* [n_eep] per-EEP quantities in the file's order (TRAIL_F_*) */
    int *phase;          /* [n_eep] hrt_phase codes */
    double *x;           /* [n_extra][n_eep] extra quantities in the builder's order (NULL without) */
} trail_eep_track;

/* The tracks of one metallicity. */
typedef struct trail_z_group {
    double z;
    size_t n, cap;
    trail_eep_track *t;
    int has_boundary; /* boundary[] set by hrt_builder_set_route_boundaries() */
    double boundary[TRAIL_MAX_ROUTES];
} trail_z_group;

struct hrt_builder {
    double z_ref;
    size_t n_routes;
    route_layout routes[TRAIL_MAX_ROUTES];
    size_t n_eep_max; /* EEPs of the longest route: the width of the file's tables */
    size_t n_groups;
    trail_z_group *grp;
    size_t n_attrs;
    attr_pair *attrs;
    int deflate; /* deflate level of the file's numeric data, 0: not compressed */
    size_t n_extra; /* extra per-EEP quantities declared (builder_extra.c) */
    trail_extra_decl extra[TRAIL_MAX_EXTRA];
    int extra_single[TRAIL_MAX_EXTRA]; /* stored as IEEE binary32 (hrt_builder_set_extra_single) */
};

/* builder.c: add a raw (eep = 0) or EEP (eep = 1) track with the builder's
 * n_extra extra columns xcols[k] (t->n values each; NULL when n_extra = 0). */
int trail_builder_add(hrt_builder *b, double z, const hrt_track_data *t, const double *const *xcols, int eep,
                      hrt_error *err);

/* hrt_builder_write() without the fsync: for a scratch grid read back at once
 * and deleted (build/accuracy.c), where durability only costs time. */
int trail_builder_write_scratch(hrt_builder *b, const char *path, hrt_error *err);

#endif
