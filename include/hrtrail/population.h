/** @file
 * hrtrail: populations: IMFs, star-formation histories, metallicity spreads,
 * runs over chunks and exact summaries
 *
 * Copyright (C) 2026 the hrtrail authors.  GPL-3.0-or-later.
 *
 * Part of the public API; include <hrtrail.h>, which includes every part.
 */
#ifndef HRTRAIL_POPULATION_H
#define HRTRAIL_POPULATION_H

#include "hrtrail/core.h"

#ifdef __cplusplus
extern "C" {
#endif

/* ------------------------------------------------------------------------
 * Populations: sampling, parallel evaluation, summaries (hrt_pop_*)
 * ------------------------------------------------------------------------ */
/* @section population */
/*
 * A population is N stars drawn from an initial mass function (IMF), a
 * star-formation history (SFH) and a metallicity distribution, evaluated at
 * one or many epochs and summarised without keeping the stars (memory O(1)
 * per star).  The draws are split into chunks of spec.chunk_size stars;
 * chunk k has its own random stream, seeded from (spec.seed, k), so the same
 * seed gives the same stars whatever the thread or MPI rank count.  Summaries
 * hold only integers (counts, and sums in fixed point of 2^-32 units with
 * 128 bits) and extrema, so merging partial summaries is exact and does not
 * depend on order: any partition of the chunks gives the same bits.
 *
 * Time in an SFH is time since the population began (yr); an epoch T
 * (hrt_pop_summary.age_yr) is the population's age.  A star born at t is of
 * age T - t at epoch T; stars with t > T are counted as not yet born.
 */

/** Initial mass functions, by their published names. */
typedef enum hrt_imf_kind {
    HRT_IMF_SALPETER_1955 = 0,        /**< dN/dm ~ m^-2.35 (Salpeter 1955, ApJ 121, 161) */
    HRT_IMF_KROUPA_2001 = 1,          /**< broken power law, alpha 0.3 / 1.3 / 2.3 with breaks at
                                       *   0.08 and 0.5 Msun (Kroupa 2001, MNRAS 322, 231, eq. 2) */
    HRT_IMF_CHABRIER_2003_SYSTEM = 2, /**< log-normal below 1 Msun (m_c 0.22 Msun, sigma 0.57 dex),
                                       *   dN/dlog m ~ m^-1.3 above, continuous at 1 Msun
                                       *   (Chabrier 2003, PASP 115, 763, system IMF, Table 1) */
    HRT_IMF_POWER_LAW = 3,            /**< dN/dm ~ m^-alpha with a caller-given alpha */
    HRT_IMF_COUNT
} hrt_imf_kind;

/** Most segments an IMF has (hrt_imf). */
#define HRT_IMF_MAX_SEGMENTS 4

/**
 * An IMF between mass limits.  Fill it with hrt_imf_init(); the segment
 * fields are derived data (plain, so it can be copied and sent to MPI ranks).
 */
typedef struct hrt_imf {
    int32_t kind;                           /**< hrt_imf_kind */
    int32_t n_seg;                          /**< segments between m_lo and m_hi */
    double m_lo_msun;                       /**< lower mass limit, Msun */
    double m_hi_msun;                       /**< upper mass limit, Msun */
    double alpha;                           /**< slope of HRT_IMF_POWER_LAW (unused otherwise) */
    int32_t seg_lognormal[HRT_IMF_MAX_SEGMENTS]; /**< 1: log-normal segment, 0: power law */
    double seg_lo[HRT_IMF_MAX_SEGMENTS];    /**< lower limit of each segment, Msun */
    double seg_hi[HRT_IMF_MAX_SEGMENTS];    /**< upper limit of each segment, Msun */
    double seg_a[HRT_IMF_MAX_SEGMENTS];     /**< power law: alpha; log-normal: log10 m_c */
    double seg_s[HRT_IMF_MAX_SEGMENTS];     /**< log-normal: sigma (dex) */
    double seg_amp[HRT_IMF_MAX_SEGMENTS];   /**< amplitude of dN/dm (power law) or dN/dlog10 m (log-normal) */
    double seg_c0[HRT_IMF_MAX_SEGMENTS];    /**< quantile constants: power law 1 - alpha, log-normal Phi(lo) */
    double seg_c1[HRT_IMF_MAX_SEGMENTS];    /**< power law expm1((1 - alpha) ln(hi/lo)) (ln(hi/lo) if alpha = 1), log-normal Phi(hi) */
    double seg_cum[HRT_IMF_MAX_SEGMENTS + 1]; /**< cumulative number fraction at segment starts */
    double norm;                            /**< integral of the unnormalised dN/dm over [m_lo, m_hi] */
} hrt_imf;

/** Name of an IMF kind ("salpeter1955", "kroupa2001", "chabrier2003", "powerlaw"); "unknown" otherwise. */
HRT_API const char *hrt_imf_name(int kind);
/** Inverse of hrt_imf_name(); also accepts "salpeter", "kroupa", "chabrier"; -1 if unknown. */
HRT_API int hrt_imf_from_name(const char *name);

/**
 * @brief Set up an IMF between mass limits.
 *
 * Given:
 *   kind        hrt_imf_kind
 *   m_lo_msun, m_hi_msun   limits, 0 < m_lo < m_hi (Msun)
 *   alpha       slope of HRT_IMF_POWER_LAW (dN/dm ~ m^-alpha, finite); ignored otherwise
 * Returned:
 *   imf         the IMF, normalised to one star over [m_lo, m_hi]
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_INVALID (kind),
 *   HRT_E_DOMAIN (limits or alpha).
 * Notes:
 *   1. Segments are continuous at their breaks (as the papers define them).
 *   2. The published parameters are written in lib/population/imf.c beside
 *      their references.
 */
HRT_API int hrt_imf_init(hrt_imf *imf, int kind, double m_lo_msun, double m_hi_msun, double alpha, hrt_error *err);
/** Normalised dN/dm (per Msun) at m; 0 outside [m_lo, m_hi]; NaN for a NULL or uninitialised IMF. */
HRT_API double hrt_imf_pdf(const hrt_imf *imf, double m_msun);
/** Fraction of stars with initial mass <= m (0 below m_lo, 1 above m_hi). */
HRT_API double hrt_imf_cdf(const hrt_imf *imf, double m_msun);
/** Inverse of hrt_imf_cdf(): the mass below which a fraction u (0 <= u <= 1) of the stars lie. */
HRT_API double hrt_imf_quantile(const hrt_imf *imf, double u);
/** Mean initial mass (Msun) of a star drawn from the IMF. */
HRT_API double hrt_imf_mean_mass(const hrt_imf *imf);

/** Star-formation histories. */
typedef enum hrt_sfh_kind {
    HRT_SFH_BURST = 0,       /**< every star born at t_start_yr */
    HRT_SFH_CONSTANT = 1,    /**< constant rate over [t_start_yr, t_end_yr] */
    HRT_SFH_EXPONENTIAL = 2, /**< rate ~ exp(-(t - t_start_yr) / tau_yr) over [t_start_yr, t_end_yr] */
    HRT_SFH_TABLE = 3,       /**< rate linear between the points of a caller-given table */
    HRT_SFH_COUNT
} hrt_sfh_kind;

/** A star-formation history; times since the population began, yr. */
typedef struct hrt_sfh {
    int32_t kind;             /**< hrt_sfh_kind */
    int32_t reserved_;        /**< zero */
    double t_start_yr;        /**< burst time, or start of star formation (>= 0) */
    double t_end_yr;          /**< end of star formation (CONSTANT, EXPONENTIAL) */
    double tau_yr;            /**< e-folding time (EXPONENTIAL, > 0) */
    size_t n_table;           /**< points of the table (TABLE, >= 2) */
    const double *table_t_yr; /**< strictly increasing times (borrowed: must outlive the runs) */
    const double *table_rate; /**< rates >= 0 at those times, any unit, not all zero */
} hrt_sfh;

/** Name of an SFH kind ("burst", "constant", "exponential", "table"); "unknown" otherwise. */
HRT_API const char *hrt_sfh_name(int kind);
/** Inverse of hrt_sfh_name(); -1 if unknown. */
HRT_API int hrt_sfh_from_name(const char *name);

/** Metallicity distributions. */
typedef enum hrt_zdist_kind {
    HRT_ZDIST_FIXED = 0,    /**< every star has Z = z */
    HRT_ZDIST_LOG_UNIFORM = 1, /**< log10 Z uniform in [log10 z_lo, log10 z_hi] (uniform in [Fe/H]) */
    HRT_ZDIST_LOG_NORMAL = 2,  /**< log10 Z normal (mean log10 z, sigma_dex) truncated to [z_lo, z_hi] */
    HRT_ZDIST_COUNT
} hrt_zdist_kind;

/** A metallicity distribution (hrt_zdist_kind and its parameters). */
typedef struct hrt_zdist {
    int32_t kind;     /**< hrt_zdist_kind */
    int32_t reserved_;/**< zero */
    double z;         /**< FIXED: the metallicity; LOG_NORMAL: the median */
    double z_lo;      /**< lower limit of LOG_UNIFORM and LOG_NORMAL */
    double z_hi;      /**< upper limit of LOG_UNIFORM and LOG_NORMAL */
    double sigma_dex; /**< LOG_NORMAL: spread of log10 Z (= of [Fe/H]), dex, > 0 */
} hrt_zdist;

/** Everything that defines a population, hence its random draws. */
typedef struct hrt_pop_spec {
    hrt_imf imf;          /**< from hrt_imf_init() */
    hrt_sfh sfh;          /**< star-formation history */
    hrt_zdist zdist;      /**< metallicity distribution */
    uint64_t n_stars;     /**< stars drawn */
    uint64_t seed;        /**< any value; with chunk_size it fixes every draw */
    uint64_t chunk_size;  /**< stars per random stream (> 0; hrt_pop_spec_default: 65536) */
} hrt_pop_spec;

/**
 * @brief A population specification with defaults.
 * Kroupa 2001 IMF over 0.08-100 Msun, a burst at t = 0, Z fixed at 0.014,
 * n_stars 0, seed 1, chunk_size 65536.  Never fails.
 */
HRT_API void hrt_pop_spec_default(hrt_pop_spec *spec);
/**
 * @brief Check a specification (IMF set up, SFH and metallicity valid).
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_INVALID, HRT_E_DOMAIN.
 */
HRT_API int hrt_pop_spec_check(const hrt_pop_spec *spec, hrt_error *err);
/** Number of chunks: ceil(n_stars / chunk_size); 0 for an invalid spec. */
HRT_API uint64_t hrt_pop_n_chunks(const hrt_pop_spec *spec);

/**
 * @brief The stars of one chunk: initial mass, metallicity and birth time.
 *
 * Given:   spec, chunk (< hrt_pop_n_chunks), cap (capacity of the arrays)
 * Returned: mass_msun, z, t_birth_yr (any of them may be NULL), *n the
 *   number of stars of the chunk (also when cap is too small)
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_INVALID (spec or
 *   chunk), HRT_E_DOMAIN, HRT_E_BUFFER, HRT_E_NOMEM.
 * Notes:
 *   1. The stream of chunk k adds, modulo 2^32, GSL's MT19937
 *      (gsl_rng_mt19937) and Tausworthe (gsl_rng_taus2) generators, each
 *      seeded with 32 bits of a SplitMix64 hash of (seed, k), so that 64 bits
 *      select the stream; each star draws, in this order, one
 *      uniform for its mass (IMF quantile), one for its birth time (not for
 *      a burst) and one for its metallicity (not for a fixed Z).
 *   2. These are exactly the stars hrt_pop_run() evaluates.
 */
HRT_API int hrt_pop_draw(const hrt_pop_spec *spec, uint64_t chunk, double *mass_msun, double *z,
                         double *t_birth_yr, size_t cap, size_t *n, hrt_error *err);

/** A non-negative sum in fixed point: value = (hi * 2^64 + lo) * 2^-32, exact under addition. */
typedef struct hrt_pop_sum {
    uint64_t hi; /**< high 64 bits */
    uint64_t lo; /**< low 64 bits */
} hrt_pop_sum;
/** Value of a fixed-point sum as a double (rounded once). */
HRT_API double hrt_pop_sum_value(const hrt_pop_sum *s);

#define HRT_POP_MAX_STATUS 32    /**< >= HRT_STATUS_COUNT_ */
#define HRT_POP_HR_MAX_BINS 10000 /**< nx * ny of the HR histogram */

/** Binning of the HR-diagram histogram: log10 Teff/K (x) by log10 L/Lsun (y). */
typedef struct hrt_pop_hr {
    double log_teff_k_lo;            /**< x range: lower edge, log10 Teff/K */
    double log_teff_k_hi;            /**< x range: upper edge (> lower) */
    double log_l_lsun_lo;            /**< y range: lower edge, log10 L/Lsun */
    double log_l_lsun_hi;            /**< y range: upper edge (> lower) */
    uint64_t nx;                     /**< bins in x; nx * ny <= HRT_POP_HR_MAX_BINS (0 x 0: no histogram) */
    uint64_t ny;                     /**< bins in y */
} hrt_pop_hr;

/**
 * Summary of a population at one epoch.  Plain data without padding, all
 * integers but the epoch, the binning and two extrema, so partial summaries
 * merge exactly (hrt_pop_summary_merge) and can be sent as bytes.  Sums are
 * in fixed point (2^-32 Msun or Lsun per unit; each star's value rounded
 * once), read with hrt_pop_sum_value().
 */
typedef struct hrt_pop_summary {
    uint64_t struct_size;   /**< sizeof(hrt_pop_summary) */
    double age_yr;          /**< epoch: age of the population, yr */
    uint64_t n_drawn;       /**< stars drawn */
    uint64_t n_unborn;      /**< born after the epoch (not evaluated) */
    uint64_t n_evaluated;   /**< evaluated without error (the rest of the born ones failed) */
    uint64_t n_status[HRT_POP_MAX_STATUS];   /**< born stars by hrt_eval status (HRT_OK included) */
    hrt_pop_sum failed_initial_mass_msun;    /**< initial mass of stars that failed (e.g. outside the grid) */
    uint64_t n_phase[HRT_PHASE_SLOTS];    /**< evaluated stars by hrt_phase now */
    hrt_pop_sum phase_initial_mass_msun[HRT_PHASE_SLOTS]; /**< their initial masses */
    hrt_pop_sum phase_mass_msun[HRT_PHASE_SLOTS];         /**< their current masses */
    hrt_pop_sum phase_l_lsun[HRT_PHASE_SLOTS];            /**< their bolometric luminosities */
    uint64_t n_remnant[HRT_REMNANT_SLOTS];/**< evaluated stars by remnant kind now; [0]: not a remnant */
    hrt_pop_sum remnant_mass_msun[HRT_REMNANT_SLOTS];     /**< their current masses */
    hrt_pop_sum initial_mass_msun;  /**< all evaluated stars: initial mass (mass formed, if all evaluated) */
    hrt_pop_sum mass_msun;          /**< current mass in stars and remnants */
    hrt_pop_sum l_lsun;             /**< integrated bolometric luminosity */
    double ms_max_initial_mass_msun;     /**< most massive star on the main sequence (0 if none) */
    double evolved_min_initial_mass_msun;/**< least massive star past the main sequence (+inf if none) */
    hrt_pop_hr hr;                  /**< histogram binning */
    uint64_t hr_outside;            /**< luminous stars outside the histogram's box */
    uint64_t hr_count[HRT_POP_HR_MAX_BINS]; /**< counts, bin (ix, iy) at iy * nx + ix */
} hrt_pop_summary;

/**
 * @brief An empty summary at epoch age_yr with the given binning.
 * hr may be NULL (no histogram).  Returned (function value): HRT_OK,
 * HRT_E_NULL, HRT_E_DOMAIN (age not finite or negative, bad ranges),
 * HRT_E_INVALID (too many bins).
 */
HRT_API int hrt_pop_summary_init(hrt_pop_summary *s, double age_yr, const hrt_pop_hr *hr, hrt_error *err);
/**
 * @brief Add n evaluated states (from hrt_eval or elsewhere) to a summary.
 * Each state counts as one drawn, born star; its status decides whether it is
 * evaluated or failed.  No allocation.
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_INVALID (s unchanged):
 * the summary is not one hrt_pop_summary_init() could have made (see
 * hrt_pop_summary_merge()), or a state's status is not a status code, or a
 * state evaluated without error (status HRT_OK) has a phase not in
 * HRT_PHASE_LIST or a remnant not in HRT_REMNANT_LIST; the message names the
 * state by its index.
 */
HRT_API int hrt_pop_summary_add(hrt_pop_summary *s, const hrt_state *states, size_t n, hrt_error *err);
/** Count n stars drawn but not yet born at the summary's epoch. */
HRT_API void hrt_pop_summary_add_unborn(hrt_pop_summary *s, uint64_t n);
/**
 * @brief dst += src, exactly (counts and sums add, extrema combine).
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_INVALID (dst
 * unchanged; the message says which summary and field): different epoch or
 * binning, or either summary not one hrt_pop_summary_init() could have made
 * -- struct_size not sizeof(hrt_pop_summary), epoch not finite and >= 0,
 * histogram neither none (0 x 0 bins, ranges zero) nor nx, ny >= 1 with
 * nx * ny <= HRT_POP_HR_MAX_BINS and finite ranges low < high, largest main-sequence
 * mass not >= 0 or smallest evolved mass NaN.  Every field a merge uses is
 * checked before any memory is touched, so summaries received as bytes
 * (from another process or MPI rank) are safe to merge.  Commutative and
 * associative bit for bit.
 */
HRT_API int hrt_pop_summary_merge(hrt_pop_summary *dst, const hrt_pop_summary *src, hrt_error *err);
/**
 * Main-sequence turnoff mass (Msun) of a single burst at one metallicity:
 * midway (geometric mean) between the most massive star still on the main
 * sequence and the least massive one past it; NaN if either is missing.
 * Its sampling uncertainty is half their ratio's log.  For composite
 * populations read the two extrema instead.
 */
HRT_API double hrt_pop_turnoff_mass(const hrt_pop_summary *s);

/** Threads hrt_eval_parallel and hrt_pop_run can use: OpenMP's maximum, 1 without OpenMP. */
HRT_API int hrt_pop_max_threads(void);

/**
 * @brief hrt_eval() on n_threads threads: the same states, return code and
 * message, bit for bit, for any thread count.
 * Given: as hrt_eval; n_threads >= 1 (0: hrt_pop_max_threads()); without
 *   OpenMP at build time every call is serial.
 * Notes: blocks of stars are evaluated independently; the first failing star
 *   is the one of lowest index, as in hrt_eval.  No allocation.
 */
HRT_API int hrt_eval_parallel(const hrt_grid *g, size_t n, const double *mass_msun, const double *z, double z_all,
                              const double *age_yr, hrt_state *out, int n_threads, hrt_error *err);

/**
 * @brief Draw, evaluate and summarise chunks [chunk_first, chunk_first + n_chunk)
 * of a population at n_ages epochs, adding to the caller's summaries.
 *
 * Given:
 *   g            open grid (shared read-only by the threads)
 *   spec         the population (hrt_pop_spec_check)
 *   chunk_first, n_chunk   chunks to do (clipped to hrt_pop_n_chunks)
 *   n_threads    >= 1 (0: hrt_pop_max_threads())
 *   n_ages       epochs (>= 1)
 * Given and returned:
 *   sums         n_ages summaries from hrt_pop_summary_init(), one per
 *                epoch (their age_yr); the chunks' stars are added.
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_INVALID (also a
 *   summary hrt_pop_summary_merge() would refuse), HRT_E_DOMAIN,
 *   HRT_E_NOMEM (sums unchanged on any failure).
 *   Stars that fail (outside the grid, ...) are not an error: they are
 *   counted in n_status and failed_initial_mass_msun.
 * Notes:
 *   1. The chunked form lets a caller report progress between calls, and
 *      MPI ranks take disjoint chunk ranges; any split gives the same bits.
 *   2. Memory: per thread, scratch for 1024 stars and one summary per
 *      epoch (about 0.3 MB + 0.1 MB per epoch), whatever n_stars is.
 *   3. Every star of a chunk is evaluated with hrt_eval at every epoch.
 */
HRT_API int hrt_pop_run(const hrt_grid *g, const hrt_pop_spec *spec, uint64_t chunk_first, uint64_t n_chunk,
                        int n_threads, size_t n_ages, hrt_pop_summary *sums, hrt_error *err);

/* ------------------------------------------------------------------------
 * Parts of a population: some chunks' summaries, merged and saved (hrt_pop_part_*)
 * ------------------------------------------------------------------------ */
/*
 * A part is a specification, the epochs and HR binning of its summaries, a
 * set of chunks done and their summaries, and a note (any text the caller
 * wants kept with it, e.g. which grid ran it).  Separate processes (batch
 * job arrays, MPI ranks, Python workers) each run some chunks into a part,
 * save it as bytes, and one of them loads and merges the others: parts merge
 * exactly, in any order, into the summaries one process running every chunk
 * makes, and parts of different populations, epochs, binnings or notes, or
 * with a chunk in common, are refused.
 */
/** A part of a population (opaque): make with hrt_pop_part_new() or hrt_pop_part_load(). */
typedef struct hrt_pop_part hrt_pop_part;

/**
 * @brief An empty part: no chunk done, empty summaries at n_ages epochs.
 * Given: spec (checked; copied with its SFH table), ages_yr[n_ages] (n_ages
 *   >= 1), hr (NULL: no histogram), note (NULL: ""; at most 4096 bytes, copied)
 * Returned: *out, free with hrt_pop_part_free()
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_INVALID, HRT_E_DOMAIN, HRT_E_NOMEM.
 */
HRT_API int hrt_pop_part_new(const hrt_pop_spec *spec, size_t n_ages, const double *ages_yr, const hrt_pop_hr *hr,
                             const char *note, hrt_pop_part **out, hrt_error *err);
/** Free a part (NULL is fine). */
HRT_API void hrt_pop_part_free(hrt_pop_part *p);
/**
 * @brief Run chunks [chunk_first, chunk_first + n_chunk) (clipped to the
 * population) with hrt_pop_run() and add them to the part.
 * Returned (function value): as hrt_pop_run(); HRT_E_INVALID if a chunk is
 *   already in the part (the part is unchanged on any failure).
 */
HRT_API int hrt_pop_part_run(const hrt_grid *g, hrt_pop_part *p, uint64_t chunk_first, uint64_t n_chunk, int n_threads,
                             hrt_error *err);
/**
 * @brief Add summaries the caller made of chunks [chunk_first, chunk_first +
 * n_chunk) (clipped to the population), e.g. with hrt_pop_run and its own
 * progress report: sums has one summary per epoch of the part, same epochs
 * and binning.
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_INVALID (a chunk
 *   already in the part, or a summary hrt_pop_summary_merge refuses), HRT_E_NOMEM.
 */
HRT_API int hrt_pop_part_add(hrt_pop_part *p, uint64_t chunk_first, uint64_t n_chunk, const hrt_pop_summary *sums,
                             hrt_error *err);
/**
 * @brief dst += src: the chunks and summaries of src added to dst, exactly.
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_NOMEM, HRT_E_INVALID
 *   (dst unchanged; the message says why): different specification, epochs,
 *   binning or note, or a chunk in both.
 */
HRT_API int hrt_pop_part_merge(hrt_pop_part *dst, const hrt_pop_part *src, hrt_error *err);
/** The part's specification (its SFH table owned by the part); NULL for NULL. */
HRT_API const hrt_pop_spec *hrt_pop_part_spec(const hrt_pop_part *p);
/** Epochs of the part (0 for NULL). */
HRT_API size_t hrt_pop_part_n_ages(const hrt_pop_part *p);
/** Summary of epoch i (NULL if out of range). */
HRT_API const hrt_pop_summary *hrt_pop_part_summary(const hrt_pop_part *p, size_t i);
/** The note given to hrt_pop_part_new(). */
HRT_API const char *hrt_pop_part_note(const hrt_pop_part *p);
/** Runs of consecutive chunks done (sorted; touching runs are one). */
HRT_API size_t hrt_pop_part_n_ranges(const hrt_pop_part *p);
/** Run i of chunks done: HRT_OK, HRT_E_NULL, HRT_E_INVALID (i out of range). */
HRT_API int hrt_pop_part_range(const hrt_pop_part *p, size_t i, uint64_t *first, uint64_t *count);
/** Number of chunks done. */
HRT_API uint64_t hrt_pop_part_chunks_done(const hrt_pop_part *p);
/** 1 if every chunk of the population is done, else 0. */
HRT_API int hrt_pop_part_complete(const hrt_pop_part *p);
/**
 * @brief The part as bytes (versioned, little-endian, FNV-1a 64-bit
 * checksum; layout in lib/population/part.c).
 * Given: buf of cap bytes (NULL with cap 0 to ask the size)
 * Returned: *len the size needed (also when the buffer is too small)
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_BUFFER.
 */
HRT_API int hrt_pop_part_save(const hrt_pop_part *p, void *buf, size_t cap, size_t *len, hrt_error *err);
/**
 * @brief A part from bytes of hrt_pop_part_save(), every field checked.
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_NOMEM, HRT_E_VERSION
 *   (another format version), HRT_E_FORMAT (not a part, truncated, damaged:
 *   checksum, or a field no part can hold; the message says which).
 */
HRT_API int hrt_pop_part_load(const void *buf, size_t len, hrt_pop_part **out, hrt_error *err);

/* ------------------------------------------------------------------------
 * Catalogues: a population's stars streamed to a file (hrt_pop_catalogue_*)
 * ------------------------------------------------------------------------ */
/*
 * One row per star and epoch: star (its index in the population, chunk *
 * chunk_size + place in the chunk), population_age_yr (the epoch), birth_yr
 * (time since the population began), then the state's fields by their names
 * in tracks/FORMAT.md: initial_mass_msun, z, age_yr, status (hrt_status
 * code), phase, remnant, route, flags, log_l_lsun, log_teff_k, log_r_rsun,
 * log_g_cgs, mass_msun, he_core_mass_msun, co_core_mass_msun, eep,
 * phase_fraction, phase_start_yr, phase_end_yr, remnant_mass_msun.
 * HDF5: one 1-D dataset per column (float64; int32 for the codes; uint64
 * star), chunked by 16384 rows, shuffled and deflated (level 1), full
 * precision.  CSV: a header line, numbers to 10 significant digits, phase and
 * remnant by their keys (empty when status is not 0), NaN as an empty field.
 * Rows are buffered 16384 at a time: memory does not grow with the stars.
 */
/** A catalogue file being written (opaque): hrt_pop_catalogue_open() to hrt_pop_catalogue_close(). */
typedef struct hrt_pop_catalogue hrt_pop_catalogue;
/** Catalogue formats (hrt_pop_catalogue_open). */
enum { HRT_CATALOGUE_CSV = 0, /**< CSV text */
       HRT_CATALOGUE_HDF5 = 1 /**< HDF5, a dataset per column */ };
/**
 * @brief Start a catalogue file.
 * The rows go to a new file of an unpredictable name beside path (mkstemp:
 * no link planted there is followed), mode 0644, which a successful
 * hrt_pop_catalogue_close() renames over path; until then, and after any
 * failure, path is untouched.  path itself is replaced, not written through
 * (a symbolic link at path is replaced by the file; resolve it first to
 * write where it points).
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_INVALID (format),
 *   HRT_E_NOMEM, HRT_E_IO (cannot create the temporary file).
 */
HRT_API int hrt_pop_catalogue_open(const char *path, int format, hrt_pop_catalogue **out, hrt_error *err);
/**
 * @brief Append n stars evaluated at one epoch: their indices, birth times and states.
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_IO (a write failed).
 */
HRT_API int hrt_pop_catalogue_add(hrt_pop_catalogue *c, double population_age_yr, size_t n, const uint64_t *star,
                                  const double *birth_yr, const hrt_state *states, hrt_error *err);
/**
 * @brief Write the buffered rows, close the file, rename it over the path
 * given to hrt_pop_catalogue_open() and free c (also on failure, when the
 * temporary file is removed and the path left as it was).
 * Returned: *rows (may be NULL) the rows written.
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_IO.
 */
HRT_API int hrt_pop_catalogue_close(hrt_pop_catalogue *c, uint64_t *rows, hrt_error *err);

#ifdef __cplusplus
}
#endif

#endif /* HRTRAIL_POPULATION_H */
