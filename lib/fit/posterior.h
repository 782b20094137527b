/* Private: the posterior of one observed star on the lattice: the prepared
 * observation (lib/fit/observation.c), the weighted sub-cells of the lattice
 * the likelihood finds (lib/fit/likelihood.c), and their summary
 * (lib/fit/posterior.c). */
#ifndef HRTRAIL_LIB_FIT_POSTERIOR_H
#define HRTRAIL_LIB_FIT_POSTERIOR_H

#include <stddef.h>
#include <stdint.h>

#include "hrtrail.h"

/* Sub-cells farther than TRAIL_FIT_CUT_SIGMA from the observation in any
 * observable are skipped, and so are those whose chi^2 lies
 * TRAIL_FIT_CUT_CHI2 above the best (relative weight exp(-25/2) < 4e-6). */
#define TRAIL_FIT_CUT_SIGMA 6.0
#define TRAIL_FIT_CUT_CHI2 25.0
/* A fit needs at least one point this close in every observable. */
#define TRAIL_FIT_MATCH_SIGMA 5.0

/* Quantities summarised per weighted point; the age is a span of its own. */
enum { PQ_LOG_INITIAL_MASS = 0, PQ_FEH, PQ_MASS, PQ_LOG_L, PQ_TEFF, PQ_LOG_G, PQ_LOG_R, PQ_COUNT, PQ_AGE = PQ_COUNT };

/* A measured quantity in the likelihood. */
typedef struct trail_fit_measured {
    int given;
    double value, sigma; /* in the quantity's own units */
} trail_fit_measured;

/* An observation prepared for the likelihood. */
typedef struct trail_fit_obs {
    trail_fit_measured teff;  /* Teff in K (compared with 10^log Teff) */
    double log_teff;          /* log10 of the measured Teff */
    trail_fit_measured log_l, log_g, feh;
    /* search window in the lattice quantities */
    double log_teff_lo, log_teff_hi, log_l_lo, log_l_hi, log_g_lo, log_g_hi;
    /* 1 / sigma in the lattice quantities (log Teff in dex) */
    double inv_sigma_log_teff, inv_sigma_log_l, inv_sigma_log_g;
    int hr_distance;                 /* flux without a distance: the HR-diagram distance is wanted */
    double log_flux, log_flux_sigma; /* log10 F/(W m^-2) */
    int n_obs;
} trail_fit_obs;

/* A weighted sub-cell of the lattice.  Its place in the cell (lighter
 * track, EEP interval, and the ranges of the position between the two
 * tracks and of the log-age fraction of the EEP interval) lets a posterior
 * draw pick a point inside it and interpolate that point's state exactly as
 * the sub-cell's own was (lib/fit/posterior.c). */
typedef struct trail_fit_point {
    double prior, chi2, weight;
    double age_lo_yr, age_hi_yr;            /* its age span */
    float value[PQ_COUNT], half[PQ_COUNT];  /* value and half-extent of each reported quantity */
    uint32_t track;                         /* the cell's lighter track (index into the model's tracks) */
    int32_t eep;                            /* the cell's first EEP: it spans EEPs eep, eep + 1 */
    float f_eep_lo, f_eep_hi;               /* its range of the log-age fraction of the EEP interval */
    uint8_t i_mass, n_mass;                 /* its row i_mass of n_mass across the mass between the tracks */
    int8_t phase;
    uint16_t feh_node;
} trail_fit_point;

/* The sub-cells found so far. */
typedef struct trail_fit_points {
    trail_fit_point *p;
    size_t n, cap;
    double best_dev;  /* smallest over points of the largest |residual| / sigma */
    double chi2_best; /* smallest chi^2 so far */
    /* 1: only the point of least chi^2 is wanted (the first of equals, in
     * the scan's order): it is kept alone in p[0], and whatever cannot beat
     * it is passed over (lower bounds of chi^2 above chi2_best) */
    int best_only;
} trail_fit_points;

/* Check and prepare what was measured (hrt_fit_star's messages). */
int trail_fit_obs_prepare(const hrt_fit_model *m, const hrt_fit_obs *o, trail_fit_obs *F, hrt_error *err);

/* Every sub-cell of the lattice near the observation, into S (which starts
 * empty, best_dev and chi2_best infinite); HRT_E_NO_MATCH when no point lies
 * within TRAIL_FIT_MATCH_SIGMA, HRT_E_NOMEM. */
int trail_fit_scan_lattice(const hrt_fit_model *m, const trail_fit_obs *F, trail_fit_points *S, hrt_error *err);
/* The same scan with S->best_only set: the point of least chi^2 alone, the
 * very point (same sub-cell, same values) the full scan finds first with
 * that chi^2, at a fraction of the cost. */
/* When the grid stores an interpolation error field: the estimate at the
 * best point of S (e[0] log L, e[1] log Teff, dex) added in quadrature to
 * the errors of F (log g: both, added linearly); 1 if that changed a sigma by
 * more than a part in a thousand (the lattice is then scanned again). */
int trail_fit_add_interp_error(const hrt_fit_model *m, trail_fit_obs *F, const trail_fit_points *S, double e[2]);

#endif
