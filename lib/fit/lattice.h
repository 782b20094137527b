/* Private declarations of the fitting lattice (lib/fit/fit.c) and the forecast (lib/fit/forecast.c). */
#ifndef HRTRAIL_LIB_FIT_LATTICE_H
#define HRTRAIL_LIB_FIT_LATTICE_H

#include <stddef.h>
#include <stdint.h>

#include "hrtrail.h"

/* Quantities stored per lattice node (floats): the first FQ_OBS are observables. */
enum { FQ_LT = 0, FQ_LL, FQ_LG, FQ_OBS, FQ_M = FQ_OBS, FQ };
/* Quantities summarised per weighted point. */
enum { V_LOGM = 0, V_FEH, V_MASS, V_LOGL, V_TEFF, V_LOGG, V_LOGR, NV, V_AGE = NV };

typedef struct ftrack {
    double log_m;  /* log10 initial mass */
    double log_prior; /* ln of the mass prior dN/dlog M there */
    int route;
    int n_eep;
    int n_cell;    /* EEP intervals shared with the next track (when boff is set) */
    size_t kz;     /* [Fe/H] node */
    size_t off;    /* first node */
    size_t boff;   /* first bounding box of the cells to the next track; SIZE_MAX if none */
    size_t sboff;  /* first box of the second level (SBLK boxes each) */
} ftrack;

struct hrt_fit_model {
    const hrt_grid *g;
    hrt_fit_model_options o;
    double log_age_max;   /* log10 o.age_max_yr */
    size_t n_z;
    double *feh, *z, *wz; /* [n_z] nodes, metal fractions, quadrature weights */
    double dfeh;          /* node spacing */
    size_t *z_first;      /* [n_z + 1] first track of each node */
    size_t n_tracks;
    ftrack *tr;
    size_t n_nodes;
    double *la;           /* [n_nodes] log10 age/yr */
    float *q;             /* [n_nodes][FQ] */
    int8_t *ph;           /* [n_nodes] phase of the interval from the node */
    size_t n_blocks;
    float *bb;            /* [n_blocks][2][FQ_OBS]: minima, then maxima of the nodes of BLK cells */
    size_t n_sblocks;
    float *sbb;           /* [n_sblocks][2][FQ_OBS]: the same over SBLK boxes */
    double lt_range[2];   /* log Teff range of all tracks */
    size_t bytes;
};

/* Median and 15.87/84.13 % quantiles of n values (sorts v in place). */
hrt_fit_interval trail_fit_sample_quantiles(double *v, size_t n);

#endif
