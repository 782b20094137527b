/* Synthetic grids whose quantities are known smooth functions of
 * (log initial mass, EEP, [Fe/H]): the exact answer for interpolation tests
 * and benchmarks. */
#ifndef HRTRAIL_TESTS_SYNTH_H
#define HRTRAIL_TESTS_SYNTH_H

#include "hrtrail.h"

typedef struct synth_spec {
    int n_low, n_high;      /* tracks on the low and high route per metallicity */
    int n_z;                /* metallicity groups */
    int seg_scale;          /* EEPs per segment unit (1 gives 51 and 61 EEPs) */
    int jitter;             /* irregular mass spacing when nonzero */
    double mass_lo, mass_b, mass_hi; /* low route [mass_lo, mass_b), high (mass_b, mass_hi] */
} synth_spec;

/* The exact functions.  x = log10 M_initial, e = EEP fraction 0..1 along
 * the route, y = [Fe/H]; route 0 or 1. */
double synth_log_age(int route, double x, double e, double y);
double synth_log_l(int route, double x, double e, double y);
double synth_log_teff(int route, double x, double e, double y);
double synth_mass(int route, double x, double e, double y);
double synth_remnant_mass(int route, double x, double y);
double synth_z(const synth_spec *s, int iz);
double synth_feh(double z);

/* Write the grid to path; 0 on success. */
int synth_write(const synth_spec *s, const char *path, hrt_error *err);
/* Phase of EEP j on a route (segments carry fixed phases). */
int synth_phase(int route, int j, int n_eep);

/* Rewrite the format-2 grid file v2_path as the format-1 file hrtrail 0.1
 * wrote for the same tracks (tracks/FORMAT.md, "Version history"): the old
 * dataset names and units strings, group attribute Z, and phase and remnant
 * stored as indices into the key tables phase_keys and remnant_keys (in
 * 0.1's order, phase -1 beyond n_eep) instead of phases/ and remnants/.
 * The codes are mapped through the file's own phases/ and remnants/
 * tables.  Values are copied bit for bit.  0 on success, -1 on failure
 * (a code or key the format-1 tables did not have, or an HDF5 error). */
int synth_downgrade_v1(const char *v2_path, const char *v1_path);

/* A new builder for tracks of g's routes (names, keypoints, segment
 * lengths) and metallicity reference, as the tests that rebuild a grid from
 * part of another's tracks need; HRT_OK, HRT_E_INVALID for a grid of more
 * than 8 routes or 32 keypoints on one, or hrt_builder_new's failure. */
int synth_builder_like(const hrt_grid *g, hrt_builder **b, hrt_error *err);
/* Track im of group iz of g (its EEP states, remnant and route) added to b
 * at the group's Z; HRT_OK or the first failure's code. */
int synth_copy_track(const hrt_grid *g, size_t iz, size_t im, hrt_builder *b, hrt_error *err);

#endif
