/*
 * Semi-analytic stellar-evolution model behind hrtrail's default grid.
 *
 * Every relation is documented in tracks/MODEL.md with its published source
 * and a provenance tag: [read] (taken from the named paper), [from memory]
 * (a published value recalled, not re-checked), [derived] (computed here from
 * other relations), [engineering choice] (ours, not a published relation).
 *
 * The model produces *raw* tracks: dense samples in age from the zero-age
 * main sequence to white-dwarf cooling onset or core collapse, with the
 * sample index of every keypoint.  The library's grid builder puts them on
 * equivalent evolutionary points.
 */
#ifndef HRTRAIL_GEN_MODEL_H
#define HRTRAIL_GEN_MODEL_H

#include <stddef.h>

#include "hrtrail.h"

/* Route indices: the routes of the library's default layout
 * (hrt_default_route), in its order.  Each route's model (model.c) emits
 * the keypoints of that route's layout, in order. */
enum { GEN_ROUTE_LOW = 0, GEN_ROUTE_GIANT = 1, GEN_ROUTE_SUPERGIANT = 2, GEN_N_ROUTES = 3 };

/** Free parameters of the model (defaults in gen_params_default). */
typedef struct gen_params {
    double eta_reimers;   /**< Reimers (1975) efficiency: McDonald & Zijlstra (2015) 0.477 */
    double z_sun;         /**< solar metal mass fraction (Asplund et al. 2009) */
    double log_l_wd_onset;/**< log L/Lsun at which white-dwarf cooling (Mestel) takes over */
} gen_params;

/** One raw sample. */
typedef struct gen_sample {
    double age_yr;      /**< since birth */
    double log_l_lsun;  /**< log10 L/Lsun */
    double log_teff;    /**< log10 Teff/K */
    double mass;        /**< current mass, Msun */
    double he_core;     /**< helium core mass, Msun */
    double co_core;     /**< carbon-oxygen core mass, Msun */
    int phase;          /**< hrt_phase of the interval from this sample to the next */
} gen_sample;

/** One raw track. */
typedef struct gen_track {
    double initial_mass; /**< Msun */
    double z;            /**< metal mass fraction */
    int route;           /**< GEN_ROUTE_* */
    int remnant;         /**< hrt_remnant */
    double remnant_mass; /**< Msun */
    size_t n, cap;
    gen_sample *s;
    size_t n_kp;
    size_t kp[HRT_IMPORT_MAX_KP]; /**< sample index of each keypoint */
} gen_track;

void gen_params_default(gen_params *p);

/** Route-boundary masses at metallicity z: [0] low-mass/giant, [1] giant/supergiant. */
void gen_route_boundaries(const gen_params *p, double z, double bounds[2]);

/** Helium-flash mass limit at metallicity z (degenerate ignition below it). */
double gen_m_hef(const gen_params *p, double z);

/**
 * Compute the raw track of initial mass m (Msun) at metallicity z on the
 * given route.  Returns 0 on success, -1 on allocation failure or a
 * non-finite value (msg receives the reason).
 */
int gen_track_compute(const gen_params *p, double m, double z, int route, gen_track *t, char *msg,
                      size_t msglen);

void gen_track_free(gen_track *t);

/* Relations exposed for the generator's self-checks and raw dumps. */
double gen_ms_lifetime_yr(const gen_params *p, double m, double z);
/** Initial hydrogen mass fraction at metallicity z. */
double gen_x_hydrogen(double z);
double gen_ifmr(double m_initial);

#endif
