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

#endif
