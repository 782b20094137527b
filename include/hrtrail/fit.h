/** @file
 * hrtrail: fitting an observed star and forecasting its future
 *
 * Copyright (C) 2026 the hrtrail authors.  GPL-3.0-or-later.
 *
 * Part of the public API; include <hrtrail.h>, which includes every part.
 */
#ifndef HRTRAIL_FIT_H
#define HRTRAIL_FIT_H

#include "hrtrail/core.h"
#include "hrtrail/population.h"

#ifdef __cplusplus
extern "C" {
#endif

/* ------------------------------------------------------------------------
 * An observed star: fitting and forecasting (hrt_fit_*, hrt_forecast_*)
 * ------------------------------------------------------------------------ */
/* @section fit */
/*
 * The posterior over (initial mass, age, [Fe/H]) of one observed star, on a
 * lattice prepared once per grid (hrt_fit_model): at each [Fe/H] node the
 * grid's interpolated tracks are sampled every log_mass_step_dex in initial
 * mass, at every EEP.  For one star, every lattice cell (two neighbouring
 * masses x two neighbouring EEPs) near the observation is subdivided until a
 * step moves the model by at most 0.5 sigma of each observable, positions
 * are interpolated bilinearly in (log mass, log age fraction of the EEP
 * interval), and each sub-cell is weighted by
 *     likelihood x IMF(M) dM x (time spent: d age) x metallicity weight,
 * with the age prior uniform in [0, age_max_yr].  Quantiles come from the
 * weighted sub-cells (each spread over its own extent), so they do not
 * depend on a random draw; posterior samples for a forecast are drawn with a
 * seeded GSL Mersenne Twister (Matsumoto & Nishimura 1998).
 *
 * Stars are fitted from the first EEP of their track (the birthline on the
 * default grid, so pre-main-sequence solutions count with the weight of the
 * time spent there; the ZAMS on most imported grids) to the last (white
 * dwarf cooling onset or core collapse).  Cooling white dwarfs are outside
 * the model.  The answers are as
 * accurate as the grid: the default grid is semi-analytic (tracks/MODEL.md),
 * so masses and ages carry its systematic errors on top of the statistical
 * intervals reported here.
 */

/** Mass priors of a fit (dN/dM of the initial mass), evaluated by the population
 *  module's IMFs (hrt_imf_init(), hrt_imf_pdf()) between the model's mass limits. */
typedef enum hrt_fit_mass_prior {
    HRT_FIT_PRIOR_KROUPA_2001 = 0,    /**< HRT_IMF_KROUPA_2001: M^-1.3 below 0.5 Msun, M^-2.3 above
                                       *   (Kroupa 2001, MNRAS 322, 231, eq. 2) */
    HRT_FIT_PRIOR_CHABRIER_2003 = 1,  /**< HRT_IMF_CHABRIER_2003_SYSTEM: the disc system IMF, log-normal
                                       *   (m_c 0.22 Msun, sigma 0.57 dex) below 1 Msun, dN/dlog M ~ M^-1.3
                                       *   above (Chabrier 2003, PASP 115, 763, Table 1) */
    HRT_FIT_PRIOR_LOG_FLAT = 2,       /**< HRT_IMF_POWER_LAW with alpha 1: uniform in log M (dN/dM ~ 1/M) */
    HRT_FIT_PRIOR_COUNT
} hrt_fit_mass_prior;

/** Name of a mass prior ("kroupa2001", "chabrier2003", "log-flat"); NULL if unknown. */
HRT_API const char *hrt_fit_mass_prior_name(int prior);
/** Inverse of hrt_fit_mass_prior_name(); -1 for an unknown name or NULL. */
HRT_API int hrt_fit_mass_prior_from_name(const char *name);

/** Priors and resolution of a fitting lattice (hrt_fit_model_options_default() fills it). */
typedef struct hrt_fit_model_options {
    int32_t mass_prior;       /**< hrt_fit_mass_prior (default Kroupa 2001) */
    int32_t reserved_;        /**< zero */
    double mass_min_msun;     /**< lower limit of the mass prior, Msun (default: the grid's lowest mass) */
    double mass_max_msun;     /**< upper limit (default: the grid's highest mass) */
    double age_max_yr;        /**< age prior uniform in [0, age_max_yr] (default 13.8e9 yr) */
    double feh_min;           /**< lower end of the [Fe/H] range of the lattice, dex (default: the
                               *   grid's range); the metallicity prior is uniform in [Fe/H] over it */
    double feh_max;           /**< upper end of the [Fe/H] range, dex */
    double feh_step_dex;      /**< spacing of the [Fe/H] nodes (default 0.1 dex; grid groups are nodes
                               *   when they fall on the spacing) */
    double log_mass_step_dex; /**< spacing of the lattice in log10 initial mass (default 0.02 dex) */
} hrt_fit_model_options;

/** Fill o with the defaults listed in hrt_fit_model_options. */
HRT_API void hrt_fit_model_options_default(hrt_fit_model_options *o);

typedef struct hrt_fit_model hrt_fit_model; /**< opaque, immutable after creation, shareable across threads */

/**
 * @brief Prepare the fitting lattice of a grid.
 *
 * Given:
 *   g      open grid (must outlive the model)
 *   o      priors and resolution, or NULL for the defaults
 * Returned:
 *   model  new model; free with hrt_fit_model_free()
 *   err    code and message
 * Returned (function value):
 *   HRT_OK, HRT_E_NULL, HRT_E_DOMAIN (NaN or non-positive limits or steps),
 *   HRT_E_INVALID (empty ranges, unknown prior), HRT_E_Z_RANGE / HRT_E_MASS_RANGE
 *   (ranges outside the grid), HRT_E_NOMEM.
 * Notes:
 *   1. Cost: one hrt_star_new() per lattice track, about 0.1 ms each.  With
 *      the defaults on the default grid: 26 [Fe/H] nodes x about 165
 *      masses, about 0.5 s and 40 MB (hrt_fit_model_memory_bytes()).  A
 *      narrower [Fe/H] range makes it proportionally cheaper.
 *   2. Thread-safe; the model may be shared by any number of fitting threads.
 */
HRT_API int hrt_fit_model_new(const hrt_grid *g, const hrt_fit_model_options *o, hrt_fit_model **model,
                              hrt_error *err);
/** Free a model; NULL is allowed. */
HRT_API void hrt_fit_model_free(hrt_fit_model *model);
/** Bytes held by a model. */
HRT_API size_t hrt_fit_model_memory_bytes(const hrt_fit_model *model);
/** Options the model was made with (defaults filled in). */
HRT_API int hrt_fit_model_get_options(const hrt_fit_model *model, hrt_fit_model_options *o);
/** Number of [Fe/H] nodes of the model. */
HRT_API size_t hrt_fit_model_n_feh(const hrt_fit_model *model);
/** [Fe/H] of node k of the model, dex (ascending; NaN if out of range). */
HRT_API double hrt_fit_model_feh(const hrt_fit_model *model, size_t k);

/**
 * What was measured of one star.  hrt_fit_obs_init() sets every field to
 * NaN ("not measured"); give a value together with its 1-sigma error (> 0).
 * Errors are Gaussian in the quantity as named (Teff in K, log L in dex).
 *
 * Luminosity comes from exactly one of: log_l_lsun; a bolometric flux (flux_w_m2,
 * or the apparent bolometric magnitude mbol on the IAU 2015 Resolution B2
 * scale) together with a distance (distance_pc or parallax_mas); or nothing
 * (then log g or the prior must place the star).  A flux without a
 * distance gives the HR-diagram distance of the star instead.
 */
typedef struct hrt_fit_obs {
    double teff_k;             /**< effective temperature, K (required) */
    double teff_k_sigma;       /**< its 1-sigma error, K */
    double log_l_lsun;         /**< log10 L/Lsun (nominal), dex */
    double log_l_lsun_sigma;   /**< its 1-sigma error, dex */
    double feh;                /**< [Fe/H] = log10(Z/Z_ref) of the grid, dex */
    double feh_sigma;          /**< its 1-sigma error, dex */
    double log_g_cgs;          /**< log10 g/(cm s^-2) */
    double log_g_cgs_sigma;    /**< its 1-sigma error, dex */
    double flux_w_m2;          /**< bolometric flux at the observer, W m^-2 */
    double flux_w_m2_sigma;    /**< its 1-sigma error, W m^-2 */
    double mbol;               /**< apparent bolometric magnitude (alternative to the flux) */
    double mbol_sigma;         /**< its 1-sigma error, mag */
    double distance_pc;        /**< distance, pc */
    double distance_pc_sigma;  /**< its 1-sigma error, pc */
    double parallax_mas;       /**< parallax, mas (alternative to the distance;
                                *   sigma/parallax <= 0.2: it is inverted) */
    double parallax_mas_sigma; /**< its 1-sigma error, mas */
} hrt_fit_obs;

/** Set every field of an observation to NaN (not measured). */
HRT_API void hrt_fit_obs_init(hrt_fit_obs *obs);

/** A posterior summary: median and the central 68.27 % interval (15.87th and 84.13th percentiles). */
typedef struct hrt_fit_interval {
    double median; /**< 50th percentile */
    double lo; /**< 15.87th percentile */
    double hi; /**< 84.13th percentile */
} hrt_fit_interval;

/** Bits of hrt_fit_result.flags. */
#define HRT_FIT_MULTIMODAL 0x1  /**< a second phase holds >= HRT_FIT_MULTIMODAL_PROB of the posterior */
#define HRT_FIT_MASS_EDGE 0x2   /**< the mass interval reaches a limit of the mass prior */
#define HRT_FIT_AGE_LIMIT 0x4   /**< the age interval reaches age_max_yr: the age prior decides */
#define HRT_FIT_FEH_EDGE 0x8    /**< the [Fe/H] interval reaches the edge of the lattice */
#define HRT_FIT_POOR_MATCH 0x10 /**< the best model is more than 3 sigma away (chi^2 beyond its 99.73 % point) */
#define HRT_FIT_FEW_POINTS 0x20 /**< fewer than 20 effective lattice points: intervals are coarse */
/** Probability of a second phase from which a fit is flagged HRT_FIT_MULTIMODAL. */
#define HRT_FIT_MULTIMODAL_PROB 0.1

/**
 * One posterior draw (equal weights): a point of the lattice, drawn by
 * weight, as a star (initial mass, Z, age) and the state the posterior
 * weighted there.  The grid's own star at the draw (hrt_eval(), hrt_star_at())
 * is that state: the draw's age is where the grid's track of that initial
 * mass reaches the point's place between its two EEPs, so phases agree and
 * values differ only by the lattice's interpolation across 0.02 dex of mass
 * (hrt_fit_star(), note 4).
 */
typedef struct hrt_fit_sample {
    double initial_mass_msun; /**< Msun */
    double z;                 /**< metal mass fraction (a node of the model) */
    double age_yr;            /**< yr */
    double log_l_lsun;        /**< log10 L/Lsun of the lattice point drawn */
    double log_teff_k;        /**< log10 Teff/K of the lattice point drawn */
    int32_t phase;            /**< hrt_phase of the lattice point drawn */
    int32_t reserved_;        /**< zero */
} hrt_fit_sample;

/** Summary of the posterior of one star (caller-owned; plain data). */
typedef struct hrt_fit_result {
    uint32_t struct_size;               /**< sizeof(hrt_fit_result) of the library that wrote it */
    int32_t status;                     /**< HRT_OK or the code returned */
    int32_t flags;                      /**< HRT_FIT_* bits */
    int32_t phase;                      /**< most probable phase (hrt_phase) */
    int32_t phase_second;               /**< second most probable phase (HRT_PHASE_UNKNOWN if none) */
    int32_t n_obs;                      /**< number of measured quantities in the likelihood */
    hrt_fit_interval initial_mass_msun; /**< initial mass, Msun */
    hrt_fit_interval age_yr;            /**< age since birth, yr */
    hrt_fit_interval feh;               /**< [Fe/H], dex */
    hrt_fit_interval mass_msun;         /**< current mass, Msun */
    hrt_fit_interval r_rsun;       /**< radius, nominal solar radii */
    hrt_fit_interval log_l_lsun;             /**< log10 L/Lsun */
    hrt_fit_interval teff_k;            /**< effective temperature, K */
    hrt_fit_interval log_g_cgs;         /**< log10 g/(cm s^-2) */
    hrt_fit_interval distance_pc;       /**< HR-diagram distance, pc (NaN unless a flux without a distance was given) */
    double phase_prob[HRT_PHASE_SLOTS]; /**< posterior probability of each phase, by phase code */
    hrt_fit_interval phase_mass_msun[2];/**< initial mass within phase and within phase_second */
    hrt_fit_interval phase_age_yr[2];   /**< age within phase and within phase_second */
    double chi2_min;                    /**< chi^2 of the best lattice point, over every measured quantity
                                         *   ([Fe/H] at the point's node included) */
    double n_eff;                       /**< effective number of lattice points, (sum w)^2 / sum w^2 */
    double n_points;                    /**< lattice points with weight */
    double reserved[8];                 /**< zero */
} hrt_fit_result;

/**
 * @brief Posterior of one observed star.
 *
 * Given:
 *   model      lattice of hrt_fit_model_new()
 *   obs        what was measured (hrt_fit_obs)
 *   seed       seed of the random draws (samples, distance); the result is
 *              the same for the same seed, model and obs, in any thread
 *   n_samples  posterior draws wanted (0 allowed)
 * Returned:
 *   samples    n_samples draws (may be NULL when n_samples is 0), for hrt_forecast()
 *   res        the summary (hrt_fit_result)
 *   err        code and message
 * Returned (function value):
 *   HRT_OK; HRT_E_NULL; HRT_E_DOMAIN (a negative, zero or non-finite sigma,
 *   a value without its sigma, non-positive flux, distance or parallax);
 *   HRT_E_INVALID (no Teff, luminosity given twice, parallax too uncertain
 *   to invert); HRT_E_NO_MATCH (Teff outside every track, or no lattice
 *   point within 5 sigma of every measured quantity); HRT_E_NOMEM.
 * Notes:
 *   1. A flux and a distance are combined into log L with Gaussian errors
 *      propagated to first order (sigma_logL^2 = (sigma_F/F)^2/ln10^2 +
 *      (2 sigma_d/d)^2/ln10^2).
 *   2. The HR-diagram distance is d = sqrt(L / (4 pi F)) (inverse-square
 *      law), with L from the posterior and F drawn from its Gaussian error;
 *      its interval comes from 4000 draws (Monte Carlo error about 1 %).
 *   3. Reentrant: scratch memory is allocated and freed in the call.
 *      Typical cost on the default grid with the default model: about 2 ms
 *      per star with [Fe/H] measured, 6 ms without (tests/bench/bench_fit,
 *      one core; about 21 and 63 million instructions under callgrind).
 *      Each posterior draw adds a few hrt_eval() calls (about 5 us).
 *   4. Draws: a sub-cell by weight, then a point inside it (uniform in log
 *      mass across the sub-cell and in age along it), whose state is
 *      interpolated exactly as the sub-cell's own; its age is found on the
 *      grid's track of its initial mass (the lattice's linear interpolation
 *      of log age across mass can miss a fast phase by many EEPs).  On the
 *      default grid and model, hrt_eval() at the draws of a red giant (Teff
 *      4700 +- 80 K, log L 1.7 +- 0.05) gives the drawn phase for every
 *      draw and |d log L| <= 0.004 dex (median 6e-8, 95 % 1e-3); over 135
 *      stars in the middle of every phase of 0.8-100 Msun at Z 0.014 and
 *      0.002 (4000 draws each), the phase agrees for at least 99.1 % of the
 *      draws and |d log L| <= 0.02 dex for at least 98.3 %, never more than
 *      0.1 dex (up to 0.05 dex near the tip of the red giant branch of 2-5
 *      Msun, where log L at one EEP changes fastest with mass; log Teff of
 *      30 Msun stars crossing the Hertzsprung gap differs by more than 0.05
 *      dex for up to 19 % of the draws).  No draw of a luminous star is a
 *      remnant (tests/fit/test_fit.c, tests/consistency).
 *   5. When the grid file stores an interpolation error field
 *      (hrt_state_interp_error()), the estimate at the best lattice point is
 *      added in quadrature to the errors of Teff (as Teff ln10 d log Teff),
 *      log L and log g (d log L + 4 d log Teff), and the lattice is scanned
 *      again; only when a sigma grows by more than 0.1 %, so that fits on
 *      the default grid (estimates of about 1e-4 dex) cost and give the
 *      same as without it.  One estimate for the whole posterior: it varies
 *      little across the region a well-measured star's posterior covers.
 *      On a coarse exact grid (tests/test_interp_error.c: an estimate of
 *      0.009 dex against sigma 0.005 dex in log L) the 68 % interval of log L
 *      widens from 0.010 to 0.026 dex and that of the mass 2.7 times.
 */
HRT_API int hrt_fit_star(const hrt_fit_model *model, const hrt_fit_obs *obs, uint64_t seed,
                         size_t n_samples, hrt_fit_sample *samples, hrt_fit_result *res, hrt_error *err);

/**
 * Distance (m) at which a source of luminosity l_w (W) has bolometric flux
 * flux_w_m2 (W m^-2): sqrt(L / (4 pi F)), the inverse-square law.  NaN for
 * non-positive or non-finite arguments.
 */
HRT_API double hrt_fit_distance_m(double l_w, double flux_w_m2);
/**
 * Bolometric flux (W m^-2) of an apparent bolometric magnitude:
 * F = F0 10^(-0.4 m_bol), F0 = HRT_MBOL_ZERO_POINT_W / (4 pi (10 pc)^2)
 * = 2.518021002e-8 W m^-2 (IAU 2015 Resolution B2).
 */
HRT_API double hrt_fit_flux_from_mbol(double mbol);

/* ---- forecast: the future of a star, from given values or posterior draws ---- */

/** The star at one future time, over the samples. */
typedef struct hrt_forecast_state {
    double dt_yr;                       /**< time from now, yr */
    int32_t phase;                      /**< most probable phase then */
    int32_t reserved_;                  /**< zero */
    double phase_prob[HRT_PHASE_SLOTS]; /**< fraction of samples in each phase (remnants: wd, ns, bh) */
    double luminous_frac;               /**< fraction of samples with a finite L and Teff */
    hrt_fit_interval log_l_lsun;             /**< log10 L/Lsun, over luminous samples */
    hrt_fit_interval teff_k;            /**< K, over luminous samples */
    hrt_fit_interval r_rsun;       /**< Rsun, over luminous samples */
    hrt_fit_interval mass_msun;         /**< current mass, Msun, over all samples */
} hrt_forecast_state;

/** Most keypoints a forecast reports (hrt_forecast_result.events). */
#define HRT_FORECAST_MAX_EVENTS 24
/** A keypoint still to come (named as in the grid's routes: "tams", "rgb_base", ...). */
typedef struct hrt_forecast_event {
    char name[32];        /**< keypoint name, NUL-terminated */
    double prob;          /**< fraction of samples that still have it ahead */
    hrt_fit_interval in_yr; /**< time until it, yr, over those samples */
} hrt_forecast_event;

/** A phase still to come. */
typedef struct hrt_forecast_phase {
    double prob;                  /**< fraction of samples that will enter it */
    hrt_fit_interval start_in_yr; /**< time until it begins, yr, over those samples */
    hrt_fit_interval duration_yr; /**< its duration, yr (+inf for a remnant) */
} hrt_forecast_phase;

/** The future of a star (caller-owned; plain data). */
typedef struct hrt_forecast_result {
    uint32_t struct_size;                     /**< sizeof(hrt_forecast_result) */
    int32_t status;                           /**< HRT_OK or the code returned */
    int32_t remnant;                          /**< most probable final remnant (hrt_remnant) */
    int32_t phase_now;                        /**< most probable current phase */
    double n_samples;                         /**< samples used */
    double phase_now_prob[HRT_PHASE_SLOTS];   /**< current phase over the samples */
    double ms_prob;                           /**< fraction now on the main sequence */
    hrt_fit_interval ms_left_yr;              /**< main-sequence time left, yr, over those samples */
    hrt_fit_interval end_in_yr;               /**< time until the last EEP (remnant formation), yr */
    hrt_forecast_phase future[HRT_PHASE_SLOTS]; /**< indexed by hrt_phase: phases still to come */
    size_t n_events;                          /**< keypoints in events[], soonest median first */
    hrt_forecast_event events[HRT_FORECAST_MAX_EVENTS]; /**< keypoints still to come */
    double remnant_prob[HRT_REMNANT_SLOTS];   /**< final remnant kind over the samples */
    hrt_fit_interval remnant_mass_msun;       /**< final remnant mass, Msun */
    double reserved[8];                       /**< zero */
} hrt_forecast_result;

/**
 * @brief Future of a star given as samples of (initial mass, Z, age).
 *
 * Given:
 *   g        open grid
 *   n        number of samples (>= 1): one exact star, or the draws of hrt_fit_star()
 *   samples  n samples; only initial_mass_msun, z and age_yr are read
 *   n_times  number of future times (0 allowed)
 *   dt_yr    n_times times from now, yr (>= 0)
 * Returned:
 *   states   n_times states (may be NULL when n_times is 0)
 *   res      current phase, main-sequence time left, keypoints and phases to
 *            come, final remnant, each over the samples
 *   err      code and message
 * Returned (function value):
 *   HRT_OK; HRT_E_NULL; HRT_E_DOMAIN (negative or non-finite times or ages);
 *   HRT_E_MASS_RANGE, HRT_E_Z_RANGE, HRT_E_NO_TRACK (a sample the grid does not
 *   cover; the message names it); HRT_E_AGE_RANGE (a sample past a truncated
 *   track); HRT_E_NOMEM.
 * Notes:
 *   1. One hrt_star_new() per sample (about 0.1 ms).  Intervals are the
 *      15.87th/84.13th percentiles of the samples; with one sample lo = hi = median.
 *   2. A sample younger than its zero-age main sequence is in phase pre_ms;
 *      one past its last EEP is its remnant.
 */
HRT_API int hrt_forecast(const hrt_grid *g, size_t n, const hrt_fit_sample *samples, size_t n_times,
                         const double *dt_yr, hrt_forecast_state *states, hrt_forecast_result *res,
                         hrt_error *err);

/* ------------------------------------------------------------------------
 * The main sequence as a calibration curve (hrt_ms_*)
 * ------------------------------------------------------------------------ */
/*
 * The main-sequence band of a grid at one metallicity, sampled once
 * (hrt_ms_new): n_masses initial masses evenly spaced in log M over the
 * grid's range, and for each, n_ages ages evenly spaced from the start of
 * its main sequence (phase ms: from the ZAMS; the pre-main sequence is not
 * part of it) to its end (the TAMS), clipped to [age_min_yr, age_max_yr].
 * Each sampled model stands for the stars that would be there in a
 * population formed at a constant rate: its weight is
 *     M^-imf_alpha dM (the mass prior) x d age (time spent, in yr),
 * so the long-lived lower part of the band at a temperature counts more
 * than its short-lived upper part.
 *
 * Asked a Teff (or a log L), the call weights every model by a Gaussian in
 * log Teff (log L) whose width is the measurement error combined in
 * quadrature with the sampling kernel (HRT_MS_KERNEL_LOG_TEFF_DEX,
 * HRT_MS_KERNEL_LOG_L_DEX), and reports for each quantity the weighted
 * median and central 68.27 % interval (the width of the band at that
 * value and the measurement error together), and the band itself: the
 * least and greatest value among main-sequence models of exactly that Teff
 * (log L), with linear interpolation between the sampled masses and ages
 * (along each star's main sequence, and along the ZAMS and TAMS loci).
 * The default ages are those of today's stars, up to the age of the
 * Universe (HRT_MS_AGE_MAX_DEFAULT_YR, 13.8 Gyr: Planck 2018, from memory).
 * age_max_yr = INFINITY counts every main-sequence age; on the default grid
 * that includes stars below about 0.3 Msun late in main sequences of up to
 * 10^13 yr, hotter and brighter than on their ZAMS, whose long lives weigh
 * heavily (a 4440 K dwarf then comes out at log L -1.67 instead of -0.78).
 * Accuracy: the grid's own (tracks/MODEL.md) plus the sampling: on the
 * default grid the band's edges agree with hrt_eval on 3000 random
 * main-sequence stars to 0.0006 dex in log L and 0.0001 dex in log Teff
 * (tests/fit/test_ms.c).
 */
/** Default oldest age of hrt_ms_options: the age of the Universe, yr (Planck 2018, from memory). */
#define HRT_MS_AGE_MAX_DEFAULT_YR 13.8e9
/** Width of the sampling kernel in log Teff, dex (added in quadrature to the measurement error). */
#define HRT_MS_KERNEL_LOG_TEFF_DEX 0.002
/** Width of the sampling kernel in log L, dex (added in quadrature to the measurement error). */
#define HRT_MS_KERNEL_LOG_L_DEX 0.01

/** Which main sequence (hrt_ms_options_default() fills it). */
typedef struct hrt_ms_options {
    double age_min_yr;  /**< youngest age counted, yr (default 0: from each star's ZAMS) */
    double age_max_yr;  /**< oldest age counted, yr (default HRT_MS_AGE_MAX_DEFAULT_YR; INFINITY:
                         *   to each star's TAMS) */
    double imf_alpha;   /**< mass prior dN/dM ~ M^-imf_alpha (default 0: flat in initial mass;
                         *   2.35 for Salpeter 1955, ApJ 121, 161) */
    int32_t n_masses;   /**< initial masses sampled (default 400, at least 8) */
    int32_t n_ages;     /**< ages sampled per mass (default 96, at least 4) */
    double reserved[4]; /**< zero */
} hrt_ms_options;

/** Fill o with the defaults listed in hrt_ms_options (NULL allowed: nothing happens). */
HRT_API void hrt_ms_options_default(hrt_ms_options *o);

typedef struct hrt_ms hrt_ms; /**< opaque sampled main sequence; immutable, shareable across threads */

/**
 * @brief Sample the main sequence of grid g at metallicity z.
 * Given:   g (must outlive the result), z (metal mass fraction; [Fe/H] = log10(z / hrt_grid_z_ref(g))),
 *          o (NULL: defaults).
 * Returned: *ms, free with hrt_ms_free().
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_DOMAIN (z, ages or imf_alpha not finite or
 * of the wrong sign), HRT_E_INVALID (n_masses or n_ages too small, age_min_yr >= age_max_yr),
 * HRT_E_Z_RANGE, HRT_E_NO_MATCH (no star of the grid is on its main sequence within the ages),
 * HRT_E_NOMEM, or a failure of hrt_star_new.
 * Note: n_masses star tracks and n_masses x n_ages states; 13 ms (25 ms under load) and 2.5 MB at the defaults on the
 * default grid (tests/fit/ms_bench.c, 2-core VM of December 2026).
 */
HRT_API int hrt_ms_new(const hrt_grid *g, double z, const hrt_ms_options *o, hrt_ms **ms, hrt_error *err);
/** Free a sampled main sequence; NULL is allowed. */
HRT_API void hrt_ms_free(hrt_ms *ms);
/** Range of Teff (K) of the sampled main sequence; HRT_E_NULL for a NULL argument. */
HRT_API int hrt_ms_teff_range(const hrt_ms *ms, double *lo_k, double *hi_k);
/** Range of log L/Lsun of the sampled main sequence; HRT_E_NULL for a NULL argument. */
HRT_API int hrt_ms_log_l_range(const hrt_ms *ms, double *lo, double *hi);

/** One quantity of a main-sequence estimate. */
typedef struct hrt_ms_value {
    double median;  /**< weighted median */
    double lo;      /**< 15.87th weighted percentile */
    double hi;      /**< 84.13th weighted percentile */
    double band_lo; /**< least value among main-sequence models of exactly the given value (NaN: none) */
    double band_hi; /**< greatest value among them (NaN: none) */
} hrt_ms_value;

/** The main-sequence star(s) of a given Teff or luminosity. */
typedef struct hrt_ms_estimate {
    int32_t status;               /**< HRT_OK or the code the call returned */
    int32_t n_models;             /**< sampled models that carry weight (within 4 sigma) */
    double z;                     /**< metallicity of the main sequence */
    hrt_ms_value log_l_lsun;      /**< log10 L/Lsun */
    hrt_ms_value log_teff_k;      /**< log10 Teff/K */
    hrt_ms_value log_r_rsun;      /**< log10 R/Rsun */
    hrt_ms_value log_g_cgs;       /**< log10 g / (cm s^-2) */
    hrt_ms_value mass_msun;       /**< current mass, Msun */
    hrt_ms_value initial_mass_msun; /**< initial mass, Msun */
    hrt_ms_value age_yr;          /**< age, yr */
    double reserved[4];           /**< zero */
} hrt_ms_estimate;

/**
 * @brief The main-sequence luminosity, radius, mass, log g and age of a star of effective temperature
 * teff_k +- teff_k_sigma (K, Gaussian; sigma 0 allowed).
 * Returned (function value and out->status): HRT_OK, HRT_E_NULL, HRT_E_DOMAIN (Teff not finite and
 * positive, sigma negative or not finite), HRT_E_NO_MATCH (no main-sequence model of this Teff within
 * 4 sigma, or, with sigma 0, none of exactly this Teff; the message gives the main sequence's range),
 * HRT_E_NOMEM.  Reentrant; allocates scratch memory.  Cost: a scan of the sampled models and sorts of
 * those that carry weight: 0.4-1 ms per query with sigma 0 and 2-5 ms with sigma 300 K at the defaults.
 */
HRT_API int hrt_ms_from_teff(const hrt_ms *ms, double teff_k, double teff_k_sigma, hrt_ms_estimate *out,
                             hrt_error *err);
/**
 * @brief The inverse: the main-sequence Teff (and the rest) of a star of luminosity
 * log_l_lsun +- log_l_sigma (dex, Gaussian in log L).  Codes as hrt_ms_from_teff().
 */
HRT_API int hrt_ms_from_log_l(const hrt_ms *ms, double log_l_lsun, double log_l_sigma, hrt_ms_estimate *out,
                              hrt_error *err);

/** A distance from the main sequence and a bolometric flux (spectroscopic parallax). */
typedef struct hrt_ms_distance_result {
    int32_t status;                /**< HRT_OK or the code the call returned */
    int32_t n_models;              /**< sampled models that carry weight */
    hrt_fit_interval distance_pc;  /**< distance, pc: median and central 68.27 % interval */
    hrt_fit_interval parallax_mas; /**< parallax 1000 / distance_pc, mas */
    double reserved[4];            /**< zero */
} hrt_ms_distance_result;

/**
 * @brief Distance of a main-sequence star of Teff teff_k +- teff_k_sigma (K) whose bolometric flux is
 * flux_w_m2 +- flux_sigma_w_m2 (W m^-2; for an apparent bolometric magnitude m use
 * hrt_fit_flux_from_mbol(m) and sigma = flux x 0.4 ln 10 x sigma_m).
 * d = sqrt(L / (4 pi F)) for every weighted model (hrt_ms_from_teff), each spread by the flux error
 * taken as Gaussian in log F (sigma_log F = sigma_F / (F ln 10)); the quantiles are those of that
 * mixture in log d.
 * Returned (function value and out->status): as hrt_ms_from_teff(), and HRT_E_DOMAIN for a flux not
 * finite and positive or a negative flux sigma.
 */
HRT_API int hrt_ms_distance(const hrt_ms *ms, double teff_k, double teff_k_sigma, double flux_w_m2,
                            double flux_sigma_w_m2, hrt_ms_distance_result *out, hrt_error *err);

#ifdef __cplusplus
}
#endif

#endif /* HRTRAIL_FIT_H */
