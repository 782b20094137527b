/* Private: the fitting lattice of a grid (struct hrt_fit_model), built by
 * lib/fit/lattice.c and searched by the likelihood (lib/fit/likelihood.c)
 * and the posterior (lib/fit/posterior.c). */
#ifndef HRTRAIL_LIB_FIT_LATTICE_H
#define HRTRAIL_LIB_FIT_LATTICE_H

#include <stddef.h>
#include <stdint.h>

#include "hrtrail.h"

/* Cells (EEP intervals between two neighbouring tracks) per bounding box,
 * and bounding boxes per box of the second level: a star's search skips a
 * whole box, or box of boxes, that lies far from the observation. */
#define TRAIL_FIT_BOX_CELLS 8
#define TRAIL_FIT_SUPERBOX_BOXES 8

/* Quantities stored per lattice node (floats); the first LQ_N_OBSERVED are
 * the observables the bounding boxes cover. */
enum { LQ_LOG_TEFF = 0, LQ_LOG_L, LQ_LOG_G, LQ_N_OBSERVED, LQ_MASS = LQ_N_OBSERVED, LQ_COUNT };

/* One interpolated track of the lattice. */
typedef struct trail_fit_track {
    double log_m;        /* log10 initial mass */
    double log_prior;    /* ln of the mass prior dN/dlog M there */
    int route;
    int n_eep;
    int n_cell;          /* EEP intervals shared with the next track (when first_box is set) */
    size_t feh_node;     /* its [Fe/H] node */
    size_t first_node;   /* its first node */
    size_t first_box;    /* first bounding box of the cells to the next track; SIZE_MAX if none */
    size_t first_superbox; /* first box of the second level (TRAIL_FIT_SUPERBOX_BOXES boxes each) */
} trail_fit_track;

/* The field order and types are those hrt_fit_model_memory_bytes() has always
 * counted (sizeof of this struct and of trail_fit_track). */
struct hrt_fit_model {
    const hrt_grid *g;
    hrt_fit_model_options o;
    double log_age_max;    /* log10 o.age_max_yr */
    size_t n_feh;          /* [Fe/H] nodes */
    double *feh, *z, *feh_weight; /* [n_feh] node [Fe/H], metal fractions, quadrature weights */
    double feh_step;       /* node spacing, dex */
    size_t *first_track;   /* [n_feh + 1] first track of each node */
    size_t n_tracks;
    trail_fit_track *track;
    size_t n_nodes;
    double *log_age;       /* [n_nodes] log10 age/yr */
    float *node_value;     /* [n_nodes][LQ_COUNT] */
    int8_t *phase;         /* [n_nodes] phase of the interval from the node */
    size_t n_boxes;
    float *box;            /* [n_boxes][2][LQ_N_OBSERVED]: minima, then maxima of the nodes of a box's cells */
    size_t n_superboxes;
    float *superbox;       /* [n_superboxes][2][LQ_N_OBSERVED]: the same over TRAIL_FIT_SUPERBOX_BOXES boxes */
    double log_teff_range[2]; /* log Teff range of all tracks */
    size_t bytes;
};

/* Grow an array of elements of size elem to hold at least need; nonzero when out of memory. */
int trail_fit_grow(void **p, size_t *cap, size_t need, size_t elem);

#endif
