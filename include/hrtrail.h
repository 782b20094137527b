/*
 * hrtrail: stellar evolution tracks from HDF5 grids, interpolated between
 * masses, metallicities and ages on equivalent evolutionary points (EEPs).
 *
 * Copyright (C) 2026 the hrtrail authors.  GPL-3.0-or-later.
 *
 * Conventions used throughout this header
 * ---------------------------------------
 *  - Masses in solar masses (Msun = (GM)sun / G, IAU 2015 Resolution B3 and
 *    CODATA 2018), ages in Julian years since the star's birth, Z is the
 *    metal mass fraction, [Fe/H] = log10(Z / Z_ref) with the grid's Z_ref.
 *  - log means log10.  L in nominal solar luminosities, R in nominal solar
 *    radii, Teff in kelvin, g in cm s^-2 (IAU 2015 Resolution B3).
 *  - Every fallible function returns HRT_OK (0) or one of the HRT_E_* codes,
 *    and writes its results through pointers.  When an hrt_error pointer is
 *    given it receives the code and a specific message (which argument,
 *    which dataset, which index).  NULL may be passed for it.
 *  - Nothing is printed, nothing aborts, no global state is kept.  A grid is
 *    immutable after hrt_grid_open() and may be shared by any number of
 *    threads; an hrt_star belongs to one thread at a time.
 *  - GSL's process-wide error handler is never called and never changed by
 *    valid or invalid input.  The one exception GSL itself imposes: if
 *    malloc fails *inside* GSL while a grid is being opened, GSL reports it
 *    through that handler (by default it aborts).
 *
 * Accuracy: the answers are as good as the grid.  The default grid is a
 * semi-analytic model built from published relations (tracks/MODEL.md); it
 * is meant for population-level work, not for precision stellar physics.
 * The interpolation error itself is measured by leave-one-out tests
 * (tests/README.md).
 */
#ifndef HRTRAIL_H
#define HRTRAIL_H

#include <stddef.h>
#include <stdint.h>

#include "hrtrail_version.h"

#ifdef __cplusplus
extern "C" {
#endif

#if defined(HRT_BUILDING_LIBRARY) && defined(__GNUC__)
#define HRT_API __attribute__((visibility("default")))
#else
#define HRT_API
#endif

/* ------------------------------------------------------------------------
 * Physical constants (one place for the whole project)
 * ------------------------------------------------------------------------ */
/** Nominal solar radius, m (IAU 2015 Resolution B3). */
#define HRT_RSUN_M 6.957e8
/** Nominal solar luminosity, W (IAU 2015 Resolution B3). */
#define HRT_LSUN_W 3.828e26
/** Nominal solar effective temperature, K (IAU 2015 Resolution B3). */
#define HRT_TEFF_SUN_K 5772.0
/** Nominal solar mass parameter (GM)sun, m^3 s^-2 (IAU 2015 Resolution B3). */
#define HRT_GM_SUN 1.3271244e20
/** Newtonian constant of gravitation, m^3 kg^-1 s^-2 (CODATA 2018). */
#define HRT_G_SI 6.67430e-11
/** Stefan-Boltzmann constant, W m^-2 K^-4 (exact, SI 2019). */
#define HRT_SIGMA_SB 5.670374419e-8
/** Speed of light in vacuum, m s^-1 (exact, SI). */
#define HRT_C_M_S 299792458.0
/** Julian year, s. */
#define HRT_YEAR_S 3.15576e7
/** Nominal total solar irradiance, W m^-2 (IAU 2015 Resolution B3). */
#define HRT_SOLAR_IRRADIANCE_W_M2 1361.0
/** Astronomical unit, m (IAU 2012 Resolution B2). */
#define HRT_AU_M 1.495978707e11
/** Parsec, m (IAU 2015 Resolution B2). */
#define HRT_PC_M 3.0856775814913673e16
/** Bolometric magnitude zero point: M_bol = -2.5 log10(L / 3.0128e28 W) (IAU 2015 Resolution B2). */
#define HRT_MBOL_ZERO_POINT_W 3.0128e28

/* ------------------------------------------------------------------------
 * Status codes (one list: the enum and hrt_strerror() come from it)
 * ------------------------------------------------------------------------ */
#define HRT_ERROR_LIST(X)                                                              \
    X(HRT_OK, 0, "success")                                                            \
    X(HRT_E_NULL, 1, "a required pointer argument is NULL")                            \
    X(HRT_E_NOMEM, 2, "out of memory")                                                 \
    X(HRT_E_IO, 3, "file cannot be opened, read or written")                           \
    X(HRT_E_FORMAT, 4, "file is not a valid hrtrail grid")                             \
    X(HRT_E_VERSION, 5, "grid format version not supported by this library")           \
    X(HRT_E_DOMAIN, 6, "argument is NaN, infinite or of the wrong sign")               \
    X(HRT_E_MASS_RANGE, 7, "initial mass outside the grid")                            \
    X(HRT_E_Z_RANGE, 8, "metallicity outside the grid")                                \
    X(HRT_E_AGE_RANGE, 9, "age beyond the end of the track and no remnant is known")   \
    X(HRT_E_BUFFER, 10, "output buffer too small")                                     \
    X(HRT_E_INVALID, 11, "invalid argument")                                           \
    X(HRT_E_NOT_FOUND, 12, "no default grid found")                                    \
    X(HRT_E_INTERNAL, 13, "internal numerical failure")                                \
    X(HRT_E_NO_TRACK, 14, "no track of this route to interpolate at this metallicity")  \
    X(HRT_E_NO_MATCH, 15, "no model of the grid matches the observation")

#define HRT_ERROR_ENUM_ENTRY_(name, value, text) name = value,
/** Status codes returned by every fallible function. */
typedef enum hrt_status { HRT_ERROR_LIST(HRT_ERROR_ENUM_ENTRY_) HRT_STATUS_COUNT_ } hrt_status;
#undef HRT_ERROR_ENUM_ENTRY_

/** Detailed error report filled by functions that take one. */
typedef struct hrt_error {
    int code;          /**< the same code the function returned */
    char message[256]; /**< specific, human-readable explanation */
} hrt_error;

/**
 * @brief Short constant description of a status code.
 * @return a static string; "unknown status code" for values not in the list.
 * Thread-safe.
 */
HRT_API const char *hrt_strerror(int code);

/* ------------------------------------------------------------------------
 * Versions
 * ------------------------------------------------------------------------ */
/** Package version string of the library actually loaded, e.g. "0.1.0". */
HRT_API const char *hrt_version(void);
/** ABI number of the library actually loaded; bindings compare it with HRT_ABI_VERSION. */
HRT_API int hrt_abi_version(void);
/** sizeof(hrt_state) in the library actually loaded; bindings compare it with their own. */
HRT_API size_t hrt_state_size(void);

/* ------------------------------------------------------------------------
 * Enumerations
 * ------------------------------------------------------------------------ */
/** Evolutionary phase.  The order is hrtrail's own; use hrt_phase_name(). */
typedef enum hrt_phase {
    HRT_PHASE_UNKNOWN = 0,
    HRT_PHASE_PRE_MS = 1,        /**< before the zero-age main sequence (not modelled) */
    HRT_PHASE_MS = 2,            /**< core hydrogen burning */
    HRT_PHASE_SUBGIANT = 3,      /**< subgiant / Hertzsprung gap */
    HRT_PHASE_RGB = 4,           /**< red giant branch */
    HRT_PHASE_CHEB = 5,          /**< core helium burning (clump, horizontal branch, loop) */
    HRT_PHASE_EAGB = 6,          /**< early asymptotic giant branch */
    HRT_PHASE_TPAGB = 7,         /**< thermally pulsing asymptotic giant branch */
    HRT_PHASE_POST_AGB = 8,      /**< post-AGB crossing to the white dwarf */
    HRT_PHASE_WD = 9,            /**< white dwarf (cooling) */
    HRT_PHASE_BSG = 10,          /**< blue supergiant */
    HRT_PHASE_RSG = 11,          /**< red supergiant */
    HRT_PHASE_WR = 12,           /**< Wolf-Rayet (stripped, hot) */
    HRT_PHASE_NS = 13,           /**< neutron star */
    HRT_PHASE_BH = 14,           /**< black hole */
    HRT_PHASE_POST_RGB = 15,     /**< contraction of a stripped giant to a helium white dwarf */
    HRT_PHASE_COUNT
} hrt_phase;

/**
 * @brief Name of a phase ("main sequence", "red giant branch", ...).
 * @return a static string; "unknown" for values outside hrt_phase.  Thread-safe.
 */
HRT_API const char *hrt_phase_name(int phase);
/** Short machine-friendly key of a phase ("ms", "rgb", "cheb", ...), as stored in grid files. */
HRT_API const char *hrt_phase_key(int phase);
/** Inverse of hrt_phase_key(); returns HRT_PHASE_UNKNOWN for an unknown key or NULL. */
HRT_API int hrt_phase_from_key(const char *key);

/** Kind of stellar remnant. */
typedef enum hrt_remnant {
    HRT_REMNANT_NONE = 0,  /**< none known (track truncated, or not yet reached) */
    HRT_REMNANT_HE_WD = 1, /**< helium white dwarf */
    HRT_REMNANT_CO_WD = 2, /**< carbon-oxygen white dwarf */
    HRT_REMNANT_ONE_WD = 3,/**< oxygen-neon white dwarf */
    HRT_REMNANT_NS = 4,    /**< neutron star */
    HRT_REMNANT_BH = 5,    /**< black hole */
    HRT_REMNANT_COUNT
} hrt_remnant;

/** Name of a remnant kind ("carbon-oxygen white dwarf", ...); static string. */
HRT_API const char *hrt_remnant_name(int remnant);
/** Short key of a remnant kind ("co_wd", "ns", ...), as stored in grid files. */
HRT_API const char *hrt_remnant_key(int remnant);
/** Inverse of hrt_remnant_key(); -1 for an unknown key or NULL. */
HRT_API int hrt_remnant_from_key(const char *key);

/** Interpolation type across initial mass and [Fe/H], chosen when a grid is opened. */
typedef enum hrt_interp {
    HRT_INTERP_STEFFEN = 0, /**< monotone piecewise cubic, no overshoot (default; GSL gsl_interp_steffen) */
    HRT_INTERP_LINEAR = 1,  /**< piecewise linear (GSL gsl_interp_linear) */
    HRT_INTERP_CSPLINE = 2, /**< natural cubic spline (GSL gsl_interp_cspline) */
    HRT_INTERP_AKIMA = 3,   /**< Akima spline, natural ends (GSL gsl_interp_akima) */
    HRT_INTERP_COUNT
} hrt_interp;

/** Name of an interpolation type ("steffen", "linear", "cspline", "akima"). */
HRT_API const char *hrt_interp_name(int interp);
/** Inverse of hrt_interp_name(); -1 for an unknown name or NULL. */
HRT_API int hrt_interp_from_name(const char *name);

/* ------------------------------------------------------------------------
 * The state of a star
 * ------------------------------------------------------------------------ */
/** Bits of hrt_state.flags. */
#define HRT_FLAG_DARK 0x1          /**< not luminous (neutron star, black hole): L and Teff are NaN */
#define HRT_FLAG_REMNANT 0x2       /**< past the last EEP: the state is the analytic remnant */
#define HRT_FLAG_EXTRAPOLATED 0x4  /**< mass slightly outside its route's tracks: linear extrapolation */
#define HRT_FLAG_NOT_MODELLED 0x8  /**< before the zero-age main sequence: only phase and mass are set */

/**
 * State of one star at one age.  Plain data, so ctypes and Fortran bind(C)
 * can mirror it.  The library sets struct_size = sizeof(hrt_state) in every
 * state it writes; the reserved tail lets the struct grow without breaking
 * the ABI (check hrt_state_size()).
 */
typedef struct hrt_state {
    uint32_t struct_size;     /**< sizeof(hrt_state) of the library that wrote it */
    int32_t status;           /**< HRT_OK or the HRT_E_* code for this star */
    int32_t phase;            /**< hrt_phase */
    int32_t route;            /**< index of the route in the grid (hrt_grid_route_name), -1 if none */
    int32_t remnant;          /**< hrt_remnant: the kind of remnant this star will leave (or is) */
    int32_t flags;            /**< HRT_FLAG_* bits */
    double initial_mass_msun; /**< initial mass, Msun */
    double z;                 /**< metal mass fraction */
    double age_yr;            /**< age since birth, yr */
    double log_l;             /**< log10 L/Lsun (NaN if dark) */
    double log_teff_k;        /**< log10 Teff/K (NaN if dark) */
    double log_r;             /**< log10 R/Rsun, from L and Teff by the Stefan-Boltzmann law */
    double log_g_cgs;         /**< log10 g / (cm s^-2) */
    double mass_msun;         /**< current mass, Msun */
    double he_core_msun;      /**< helium core mass, Msun */
    double co_core_msun;      /**< carbon-oxygen core mass, Msun */
    double eep;               /**< fractional EEP index on the route (NaN for remnants, pre-MS) */
    double phase_fraction;    /**< 0..1 through the current phase in age (NaN if open-ended) */
    double phase_start_yr;    /**< age at which the current phase began, yr */
    double phase_end_yr;      /**< age at which the current phase ends, yr (+inf if never) */
    double remnant_mass_msun; /**< mass of the final remnant, Msun (NaN if unknown) */
    double reserved[7];       /**< zero; room to grow */
} hrt_state;

/* ------------------------------------------------------------------------
 * Grids
 * ------------------------------------------------------------------------ */
typedef struct hrt_grid hrt_grid; /**< opaque, immutable after open, shareable across threads */

/**
 * @brief Open, validate and prepare a track grid.
 *
 * Given:
 *   path    grid file (HDF5, tracks/FORMAT.md), or NULL for the default grid:
 *           the file named by the environment variable HRTRAIL_GRID if set,
 *           else the grid installed in the data directory.
 *   interp  hrt_interp type used across initial mass and [Fe/H]
 * Returned:
 *   grid    new grid; free with hrt_grid_close()
 *   err     code and message naming the group, dataset and index at fault
 * Returned (function value):
 *   HRT_OK, HRT_E_NULL (grid is NULL), HRT_E_INVALID (unknown interp),
 *   HRT_E_NOT_FOUND (no default grid), HRT_E_IO (cannot open or read),
 *   HRT_E_FORMAT (schema violated), HRT_E_VERSION (newer format),
 *   HRT_E_NOMEM.
 * Notes:
 *   1. The whole grid is read and checked: shapes, ascending masses, ages
 *      strictly increasing along each track's valid EEPs, finite values
 *      within plausible bounds (tracks/FORMAT.md, "What the reader
 *      checks"), phase and route tables, keypoint layouts, route
 *      boundaries.  Only regular files are opened.  The checks are about
 *      mistakes; HDF5 itself (Debian's 1.10) can hang or crash on a
 *      deliberately corrupted file, which no check here can prevent.
 *   2. Spline slopes across mass are computed here with GSL (the chosen type)
 *      and stored; queries evaluate the equivalent cubic Hermite (equal to
 *      GSL's own evaluation to 1e-13).  Across [Fe/H] the slopes come from
 *      the same formulas at query time.  A run of knots too short for the
 *      type falls back to steffen (akima with 3-4 tracks) or linear (2).
 *      Where GSL's Akima meets two exactly equal consecutive secants it takes
 *      one-sided slopes; hrtrail keeps one slope per knot there.
 *   3. Log age must increase along the EEPs of every interpolated star, or
 *      "the EEP at an age" would be ambiguous.  In each interval between two
 *      tracks, log age is interpolated with the weights lambda * (chosen
 *      type) + (1 - lambda) * (linear), lambda in [0, 1] the largest value
 *      that keeps it increasing at every mass of the interval (1 in most
 *      intervals; lower where fast phases have nearly equal ages at
 *      neighbouring EEPs).  Across [Fe/H], log age is linear for the same
 *      reason; the other quantities use the chosen type.
 *   4. Current and core masses are interpolated as fractions of the initial
 *      mass, so a star without mass loss keeps exactly its initial mass.
 *   5. Thread-safe (opens are independent); HDF5 must be built thread-safe
 *      for concurrent opens, which Debian's serial build is not: serialise
 *      opens if in doubt.  Queries on an open grid are always thread-safe.
 */
HRT_API int hrt_grid_open_with(const char *path, int interp, hrt_grid **grid, hrt_error *err);
/** hrt_grid_open_with(path, HRT_INTERP_STEFFEN, grid, err). */
HRT_API int hrt_grid_open(const char *path, hrt_grid **grid, hrt_error *err);
/** Free a grid; NULL is allowed.  No star made from it may be used afterwards. */
HRT_API void hrt_grid_close(hrt_grid *grid);

/** Path of the default grid that hrt_grid_open(NULL) would use (HRTRAIL_GRID or the installed one). */
HRT_API const char *hrt_default_grid_path(void);

/** Interpolation type the grid was opened with. */
HRT_API int hrt_grid_interp(const hrt_grid *g);
/** Number of metallicity groups (>= 1). */
HRT_API size_t hrt_grid_n_z(const hrt_grid *g);
/** Metal mass fraction of group iz (ascending); NaN if out of range. */
HRT_API double hrt_grid_z(const hrt_grid *g, size_t iz);
/** Reference metallicity Z_ref of [Fe/H] = log10(Z/Z_ref). */
HRT_API double hrt_grid_z_ref(const hrt_grid *g);
/** Number of tracks in group iz (0 if out of range). */
HRT_API size_t hrt_grid_n_masses(const hrt_grid *g, size_t iz);
/** Initial mass (Msun) of track im of group iz (ascending); NaN if out of range. */
HRT_API double hrt_grid_mass(const hrt_grid *g, size_t iz, size_t im);
/** Route index of track im of group iz; -1 if out of range. */
HRT_API int hrt_grid_track_route(const hrt_grid *g, size_t iz, size_t im);
/** Number of valid EEPs of track im of group iz; 0 if out of range. */
HRT_API size_t hrt_grid_track_n_eep(const hrt_grid *g, size_t iz, size_t im);
/** Number of routes (low-mass, giant, supergiant, ... as the file defines them). */
HRT_API size_t hrt_grid_n_routes(const hrt_grid *g);
/** Name of route r as stored in the file; NULL if out of range. */
HRT_API const char *hrt_grid_route_name(const hrt_grid *g, size_t r);
/** Number of EEPs in the layout of route r. */
HRT_API size_t hrt_grid_route_n_eep(const hrt_grid *g, size_t r);
/** Number of keypoints of route r. */
HRT_API size_t hrt_grid_route_n_keypoints(const hrt_grid *g, size_t r);
/** Name of keypoint k of route r ("zams", "tams", ...); NULL if out of range. */
HRT_API const char *hrt_grid_keypoint_name(const hrt_grid *g, size_t r, size_t k);
/** EEP index of keypoint k of route r; -1 if out of range. */
HRT_API long hrt_grid_keypoint_eep(const hrt_grid *g, size_t r, size_t k);
/**
 * Route-boundary masses of group iz: boundary b (0 <= b < n_routes-1)
 * separates route b (below) from route b+1 (above), Msun.  NaN if out of range.
 */
HRT_API double hrt_grid_route_boundary(const hrt_grid *g, size_t iz, size_t b);
/**
 * A root attribute of the file as text ("description", "created_by",
 * "source", ...); NULL if absent.  The string lives as long as the grid.
 */
HRT_API const char *hrt_grid_attribute(const hrt_grid *g, const char *name);
/** Bytes of memory held by the opened grid (data, slopes, tables). */
HRT_API size_t hrt_grid_memory_bytes(const hrt_grid *g);

/**
 * @brief Range of initial masses (Msun) covered at metallicity z.
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_DOMAIN, HRT_E_Z_RANGE.
 */
HRT_API int hrt_grid_mass_range(const hrt_grid *g, double z, double *lo_msun, double *hi_msun);
/** Range of metallicities Z covered by the grid. */
HRT_API int hrt_grid_z_range(const hrt_grid *g, double *lo, double *hi);
/**
 * @brief Route a star of initial mass (Msun) and metallicity z follows.
 * Boundary masses are interpolated linearly in [Fe/H] between groups.
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_DOMAIN,
 * HRT_E_MASS_RANGE, HRT_E_Z_RANGE.
 */
HRT_API int hrt_grid_route_of(const hrt_grid *g, double mass_msun, double z, int *route);

/* ------------------------------------------------------------------------
 * Batch evaluation: the fast path for population synthesis
 * ------------------------------------------------------------------------ */
/**
 * @brief States of n unrelated stars, each given by (initial mass, Z, age).
 *
 * Given:
 *   g       open grid
 *   n       number of stars (0 is allowed and does nothing)
 *   mass_msun, z, age_yr   arrays of n initial masses (Msun), metal mass
 *           fractions and ages since birth (yr).  z may be NULL: then every
 *           star has the metallicity z_all.
 *   z_all   metallicity used when z is NULL
 * Returned:
 *   out     n states; out[i].status holds star i's own code
 *   err     code and message of the first star that failed (its index)
 * Returned (function value):
 *   HRT_OK if every star was evaluated, else the code of the first failure
 *   (HRT_E_DOMAIN, HRT_E_MASS_RANGE, HRT_E_Z_RANGE, HRT_E_AGE_RANGE,
 *   HRT_E_NO_TRACK); HRT_E_NULL for missing arrays.  Every star is processed
 *   whatever the others do; a failed star has NaN quantities.
 * Notes:
 *   1. No allocation; O(log n_eep) per star.  Thread-safe on a shared grid.
 *   2. A star younger than its zero-age main sequence is not an error: its
 *      phase is HRT_PHASE_PRE_MS, flag HRT_FLAG_NOT_MODELLED, quantities NaN
 *      except masses.
 *   3. Identical to hrt_star_new() + hrt_star_at() bit for bit.
 */
HRT_API int hrt_eval(const hrt_grid *g, size_t n, const double *mass_msun, const double *z,
                     double z_all, const double *age_yr, hrt_state *out, hrt_error *err);

/* ------------------------------------------------------------------------
 * One star: build its interpolated track once, then ask any age
 * ------------------------------------------------------------------------ */
typedef struct hrt_star hrt_star; /**< opaque; caller-owned; one thread at a time */

/**
 * @brief Interpolate the track of one star of initial mass (Msun) and metallicity z.
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_DOMAIN,
 * HRT_E_MASS_RANGE, HRT_E_Z_RANGE, HRT_E_NO_TRACK, HRT_E_NOMEM.
 * Note: the star refers to the grid, which must outlive it.
 */
HRT_API int hrt_star_new(const hrt_grid *g, double mass_msun, double z, hrt_star **star, hrt_error *err);
/** Free a star; NULL is allowed. */
HRT_API void hrt_star_free(hrt_star *star);
/**
 * @brief State of the star at age_yr (years since birth).
 * O(log n_eep), no allocation.  Returned (function value) and out->status:
 * HRT_OK, HRT_E_NULL, HRT_E_DOMAIN (NaN, infinite or negative age),
 * HRT_E_AGE_RANGE (past a truncated track with no known remnant).
 */
HRT_API int hrt_star_at(const hrt_star *star, double age_yr, hrt_state *out);
/** Number of EEPs of the star's interpolated track. */
HRT_API size_t hrt_star_n_eep(const hrt_star *star);
/** State at EEP j of the star's track (0 <= j < hrt_star_n_eep); HRT_E_INVALID if out of range. */
HRT_API int hrt_star_eep_state(const hrt_star *star, size_t j, hrt_state *out);
/** Route index of the star. */
HRT_API int hrt_star_route(const hrt_star *star);
/** Initial mass (Msun) and metallicity of the star. */
HRT_API double hrt_star_mass(const hrt_star *star);
HRT_API double hrt_star_z(const hrt_star *star);
/** Number of keypoints of the star's route; keypoints the star does not reach have age NaN. */
HRT_API size_t hrt_star_n_keypoints(const hrt_star *star);
/** Name of keypoint k of the star's route; NULL if out of range. */
HRT_API const char *hrt_star_keypoint_name(const hrt_star *star, size_t k);
/**
 * @brief Age (yr) at keypoint k of the star's route.
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_INVALID (k out of
 * range); *age_yr is NaN when the star's track does not reach the keypoint.
 */
HRT_API int hrt_star_keypoint_age(const hrt_star *star, size_t k, double *age_yr);
/** Age (yr) of the last EEP: white dwarf cooling onset or core collapse (or end of a truncated track). */
HRT_API double hrt_star_end_age(const hrt_star *star);
/** Final remnant of the star: kind (hrt_remnant) and mass (Msun). */
HRT_API int hrt_star_remnant(const hrt_star *star, int *kind, double *mass_msun);

/** One phase of a star's life: [start_yr, end_yr). */
typedef struct hrt_phase_span {
    int32_t phase;     /**< hrt_phase */
    int32_t reserved_; /**< zero */
    double start_yr;   /**< age at which the phase begins, yr */
    double end_yr;     /**< age at which it ends, yr (+inf for a remnant that lasts forever) */
} hrt_phase_span;

/**
 * @brief The star's timetable: its phases in order, including the remnant.
 * Given: cap, the capacity of spans.  Returned: *n, the number of phases
 * (also when the buffer is too small).  Returned (function value): HRT_OK,
 * HRT_E_NULL, HRT_E_BUFFER.
 */
HRT_API int hrt_star_phases(const hrt_star *star, hrt_phase_span *spans, size_t cap, size_t *n);

/* ------------------------------------------------------------------------
 * Isochrones
 * ------------------------------------------------------------------------ */
/**
 * @brief The isochrone at one age and metallicity, sampled at EEPs.
 *
 * For each route and each EEP, every initial mass whose star is at that
 * EEP at age_yr is found (root of the interpolated EEP age in mass), so fast
 * phases are resolved by as many points as the grid has EEPs there.  Points
 * are ordered by route, then by EEP, then by mass.  Remnants are not
 * included.
 * Given:  age_yr (> 0), z, cap (capacity of out).
 * Returned: out[0..*n-1]; *n is the number of points (also when cap is too small).
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_DOMAIN,
 * HRT_E_Z_RANGE, HRT_E_BUFFER (nothing useful in out; call again with
 * cap >= *n).  Thread-safe; allocates scratch memory (HRT_E_NOMEM).
 */
HRT_API int hrt_isochrone(const hrt_grid *g, double age_yr, double z, hrt_state *out, size_t cap,
                          size_t *n, hrt_error *err);

/* ------------------------------------------------------------------------
 * Remnant physics (also used by the default-grid generator)
 * ------------------------------------------------------------------------ */
/**
 * White dwarf radius (Rsun) at mass (Msun) from the zero-temperature
 * mass-radius relation of Eggleton (quoted by Verbunt & Rappaport 1988,
 * ApJ 332, 193), valid 0.01-1.44 Msun; NaN outside (0, 1.44).
 */
HRT_API double hrt_wd_radius_rsun(double mass_msun);
/**
 * Luminosity (log10 L/Lsun) of a white dwarf of mass (Msun) and kind
 * (hrt_remnant He/CO/ONe) that had log10 L/Lsun = log_l0 at the start of
 * cooling, dt_yr years later, by Mestel's (1952, MNRAS 112, 583) law
 * t_cool = 6e6 yr (A/12)^-1 M^(5/7) (mu/2)^(-2/7) (L^(-5/7) - L0^(-5/7)).
 * Accurate to a factor of about 1.5 in age between 1e-4.5 and 1e-1 Lsun.
 */
HRT_API double hrt_wd_log_l(double mass_msun, int kind, double log_l0, double dt_yr);

/**
 * @brief Remnant of core collapse from the final carbon-oxygen core and
 * total masses (Msun): kind (HRT_REMNANT_NS or HRT_REMNANT_BH) and
 * gravitational mass (Msun).
 *
 * The "delayed" prescription of Fryer et al. (2012, ApJ 749, 91) [from
 * memory], with the steps of its proto-neutron-star mass smoothed over 0.3
 * Msun of CO core; baryonic masses below 2.5 Msun make neutron stars with
 * M_bar = M_grav + 0.075 M_grav^2 (Lattimer & Yahil 1989, ApJ 340, 426),
 * heavier ones black holes of 0.9 M_bar.  Good to a factor of about 2 for
 * black holes; real explodability is not monotonic in mass.
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_DOMAIN (masses not
 * finite, negative, or a core heavier than the star).
 */
HRT_API int hrt_collapse_remnant(double co_core_msun, double final_mass_msun, int *kind, double *mass_msun);

/* ------------------------------------------------------------------------
 * Building grids: the writer used by the generator and by import
 * ------------------------------------------------------------------------ */
typedef struct hrt_builder hrt_builder; /**< opaque grid under construction */

/** The EEP layout of one route. */
typedef struct hrt_route_spec {
    const char *name;                   /**< route name, e.g. "giant" */
    size_t n_keypoints;                 /**< >= 2 */
    const char *const *keypoint_names;  /**< n_keypoints names, e.g. "zams", "tams", ... */
    const int *segment_samples;         /**< n_keypoints-1 EEP counts (>= 1) per segment */
} hrt_route_spec;

/**
 * One track's columns.  For hrt_builder_add_track() they are raw samples in
 * increasing age with the sample index of each keypoint reached; for
 * hrt_builder_add_eep_track() they are already on the route's EEPs
 * (keypoint fields ignored).
 */
typedef struct hrt_track_data {
    double initial_mass_msun;     /**< initial mass, Msun */
    int route;                    /**< index of the route in the builder */
    int remnant;                  /**< hrt_remnant left at the end (HRT_REMNANT_NONE if truncated) */
    double remnant_mass_msun;     /**< mass of that remnant, Msun (NaN if none) */
    size_t n;                     /**< number of samples or EEPs */
    const double *log_age_yr;     /**< log10 age/yr, strictly increasing */
    const double *log_l;          /**< log10 L/Lsun */
    const double *log_teff_k;     /**< log10 Teff/K */
    const double *log_r;          /**< log10 R/Rsun (NULL: from L and Teff by Stefan-Boltzmann) */
    const double *mass_msun;      /**< current mass, Msun */
    const double *he_core_msun;   /**< helium core mass, Msun */
    const double *co_core_msun;   /**< carbon-oxygen core mass, Msun */
    const int *phase;             /**< hrt_phase of each sample */
    size_t n_keypoints;           /**< keypoints reached (raw tracks only), a prefix of the route's */
    const size_t *keypoint_sample;/**< sample index of each reached keypoint (raw tracks only) */
} hrt_track_data;

/** Weights of the EEP distance metric (see tracks/FORMAT.md). */
#define HRT_EEP_WEIGHT_LOG_TEFF 2.0
#define HRT_EEP_WEIGHT_LOG_L 1.0
#define HRT_EEP_WEIGHT_AGE 1.0

/**
 * @brief Start a grid with the given routes (ordered by increasing mass).
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_INVALID, HRT_E_NOMEM.
 */
HRT_API int hrt_builder_new(size_t n_routes, const hrt_route_spec *routes, double z_ref,
                            hrt_builder **b, hrt_error *err);
/** Free a builder; NULL is allowed. */
HRT_API void hrt_builder_free(hrt_builder *b);
/**
 * @brief Resample a raw track onto its route's EEPs and add it at metallicity z.
 * Each segment between consecutive keypoints gets the route's number of
 * EEPs, equally spaced in the distance metric of tracks/FORMAT.md.
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_INVALID (with the
 * sample index and reason), HRT_E_DOMAIN, HRT_E_NOMEM.
 */
HRT_API int hrt_builder_add_track(hrt_builder *b, double z, const hrt_track_data *t, hrt_error *err);
/** Add a track already on EEPs (t->n <= the route's EEP count). Same codes. */
HRT_API int hrt_builder_add_eep_track(hrt_builder *b, double z, const hrt_track_data *t, hrt_error *err);
/**
 * @brief Set the n_routes-1 route-boundary masses (Msun) of metallicity z.
 * Without it, writing places each boundary at the geometric mean of the
 * last track of one route and the first of the next.
 */
HRT_API int hrt_builder_set_route_boundaries(hrt_builder *b, double z, const double *mass_msun,
                                             hrt_error *err);
/** Set a text root attribute (description, source, created_by, ...). */
HRT_API int hrt_builder_set_attribute(hrt_builder *b, const char *name, const char *value,
                                      hrt_error *err);
/**
 * @brief Write the grid to path (tracks/FORMAT.md, version HRT_FORMAT_VERSION).
 * The file is written under a temporary name in the same directory and
 * renamed over path only when complete, so a failure leaves any previous
 * file intact and no temporary file behind.  Tracks are sorted by mass.
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_INVALID (no tracks,
 * inconsistent routes), HRT_E_IO, HRT_E_NOMEM.
 */
HRT_API int hrt_builder_write(hrt_builder *b, const char *path, hrt_error *err);

/* ------------------------------------------------------------------------
 * Importing text tracks (hrt_import_*)
 * ------------------------------------------------------------------------ */
/* @section import */
/** Most keypoints a route may have for detection and import. */
#define HRT_IMPORT_MAX_KP 32

/**
 * Columns of one raw track for keypoint detection (tracks/FORMAT.md,
 * "Keypoint criteria"): n samples in strictly increasing age.  age_yr,
 * log_l and log_teff_k are required; every other pointer may be NULL when
 * the column is absent, and criteria needing it then fall back as
 * FORMAT.md says.
 */
typedef struct hrt_kp_columns {
    size_t n;                   /**< number of samples */
    const double *age_yr;       /**< age since birth, yr, strictly increasing */
    const double *log_l;        /**< log10 L/Lsun */
    const double *log_teff_k;   /**< log10 Teff/K */
    const double *mass_msun;    /**< current mass, Msun */
    const double *center_h1;    /**< central hydrogen mass fraction */
    const double *center_he4;   /**< central helium mass fraction */
    const double *he_core_msun; /**< helium core mass, Msun */
    const double *co_core_msun; /**< carbon-oxygen core mass, Msun */
    const int *phase;           /**< hrt_phase of each sample */
    const char *const *flag;    /**< explicit keypoint name of each sample (NULL or "" for none) */
} hrt_kp_columns;

/** How a keypoint was found (hrt_kp_result.how). */
enum {
    HRT_KP_FOUND_BY_FLAG = 1,    /**< the explicit keypoint-flag column */
    HRT_KP_FOUND_BY_COLUMNS = 2, /**< a physical criterion on the columns */
    HRT_KP_FOUND_BY_PHASE = 3,   /**< the phase column (fallback) */
    HRT_KP_FOUND_BY_START = 4    /**< first sample (ZAMS without centre composition or phases) */
};

/** Keypoints of one track on one route layout. */
typedef struct hrt_kp_result {
    size_t n_found;                   /**< keypoints reached: the first n_found of the route's */
    size_t sample[HRT_IMPORT_MAX_KP]; /**< sample index of each one, strictly increasing */
    int how[HRT_IMPORT_MAX_KP];       /**< HRT_KP_FOUND_* of each one */
    char why[192];                    /**< why keypoint n_found was not found ("" when all were) */
} hrt_kp_result;

/**
 * @brief Find the keypoints of a route's layout on a raw track.
 *
 * Given:
 *   c      the track's columns
 *   route  the route layout (keypoint names; segment counts not used)
 * Returned:
 *   out    the longest prefix of the route's keypoints found in order, their
 *          sample indices, how each was found, and why the next one was not
 *   err    code and message
 * Returned (function value):
 *   HRT_OK (also when not every keypoint is reached), HRT_E_NULL,
 *   HRT_E_INVALID (too many keypoints, n < 2, ages not increasing).
 *   Flags naming keypoints the route does not have are ignored here.
 * Notes:
 *   1. Keypoints are searched in the route's order, each strictly after the
 *      previous one.  A sample flagged with a keypoint's name takes
 *      precedence over every criterion; then the physical criteria of
 *      tracks/FORMAT.md on the columns given; then the phase column.
 *   2. Keypoint names hrtrail knows: zams, tams, rgb_base, he_ignition,
 *      cheb_start, cheb_end, first_pulse, agb_end, envelope_loss, wd_onset,
 *      core_collapse.  Other names can only be found by flags.
 *   3. No allocation; reentrant.
 */
HRT_API int hrt_keypoints_find(const hrt_kp_columns *c, const hrt_route_spec *route, hrt_kp_result *out,
                               hrt_error *err);

/**
 * @brief The route a raw track follows, from the keypoints it reaches.
 *
 * Given:  c, the track; n_routes route layouts (in order of increasing mass).
 * Returned:
 *   route       the route chosen (see Notes), -1 if none reaches 2 keypoints
 *   candidates  bit r set for every route tied with the chosen one (may be NULL)
 *   out         keypoints of the track on the chosen route (may be NULL)
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_INVALID (also: a
 * flag names a keypoint of no route, or the flags fit no single route).
 * Notes:
 *   Only routes having every flagged keypoint are considered.
 *   Every route's keypoints are searched (hrt_keypoints_find).  A route is
 *   complete when all its keypoints are found.  The complete route with the
 *   most keypoints wins (a giant track also satisfies the shorter layouts'
 *   criteria only if it ends as they do); if none is complete, the route
 *   with the longest found prefix, and *candidates names the ties (a track
 *   that stops on the main sequence fits every route).
 */
HRT_API int hrt_keypoints_route(const hrt_kp_columns *c, size_t n_routes, const hrt_route_spec *routes,
                                int *route, unsigned *candidates, hrt_kp_result *out, hrt_error *err);

typedef struct hrt_import hrt_import; /**< opaque: an import being set up, run, and its report */

/**
 * @brief Start an import with the default grid's routes and Z_ref = 0.014.
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_NOMEM.
 */
HRT_API int hrt_import_new(hrt_import **imp, hrt_error *err);
/** Free an import and its report; NULL is allowed. */
HRT_API void hrt_import_free(hrt_import *imp);

/**
 * @brief Add entries to the column map.
 *
 * Given: entries, "key=value" pairs separated by commas, semicolons,
 * blanks or new lines; '#' starts a comment to the end of the line.
 * Keys (tracks/FORMAT.md, "Importing text tracks"):
 *   age, log_age                 column[*unit], unit yr, kyr, Myr, Gyr or a number
 *   log_L | L, log_Teff | Teff, log_R | R, mass, center_h1, center_he4,
 *   he_core_mass, co_core_mass   column[*factor]
 *   phase                        column of phase keys (ms, rgb, ...) or hrtrail phase codes
 *   keypoints                    column of explicit keypoint names ("", "-" or "0": none)
 *   initial_mass, Z              a number, or a column (its first data row)
 *   pattern                      file-name pattern with {mass}, {z}, {feh} and '*'
 * A later entry for the same quantity replaces an earlier one.
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_INVALID (unknown
 * key, bad unit, missing '='; the message names the entry), HRT_E_NOMEM.
 */
HRT_API int hrt_import_map(hrt_import *imp, const char *entries, hrt_error *err);
/** hrt_import_map() on the contents of a mapping file; HRT_E_IO if unreadable.  Messages give file:line. */
HRT_API int hrt_import_map_file(hrt_import *imp, const char *path, hrt_error *err);
/** Replace the route layouts (in order of increasing mass; copied). HRT_E_INVALID for a bad layout. */
HRT_API int hrt_import_set_routes(hrt_import *imp, size_t n_routes, const hrt_route_spec *routes,
                                  hrt_error *err);
/** Reference metallicity written to the grid (default 0.014); also used by {feh} in patterns. */
HRT_API int hrt_import_set_z_ref(hrt_import *imp, double z_ref, hrt_error *err);
/**
 * Lenient mode (on != 0): a file that cannot be read, a row with a value
 * that is not finite, or a track the builder refuses is dropped and
 * reported instead of failing the import.  Default: strict.
 */
HRT_API int hrt_import_set_lenient(hrt_import *imp, int on);
/** Callback after each file is read: (user, files done, files in total, file name). May be NULL. */
HRT_API int hrt_import_set_progress(hrt_import *imp, void (*progress)(void *user, size_t done, size_t total,
                                                                      const char *file),
                                    void *user);
/**
 * @brief Add a track file.
 * z: its metal mass fraction, or NaN to take it from the map (Z=...), the
 * file-name pattern ({z} or {feh}) or a column.  Nothing is read yet.
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_DOMAIN, HRT_E_NOMEM.
 */
HRT_API int hrt_import_add_file(hrt_import *imp, const char *path, double z, hrt_error *err);

/**
 * @brief Read every file, find keypoints and routes, resample and write the grid.
 *
 * Given:   out_path, the grid to write, or NULL to check the files only.
 * Returned: err, the first problem (file:line:column: ...); the per-track
 *          report is kept in imp (hrt_import_n_tracks / hrt_import_track).
 * Returned (function value):
 *   HRT_OK; HRT_E_IO (a file cannot be read or the grid written);
 *   HRT_E_FORMAT (a file is not a usable table: parse errors, missing or
 *   absent mapped columns, non-increasing ages, non-finite values, binary
 *   data); HRT_E_INVALID (map incomplete, no usable track, tracks whose
 *   routes overlap in mass); HRT_E_NOMEM.
 * Notes:
 *   1. Strict mode: any file problem fails the import.  Lenient: such
 *      tracks are dropped and reported; it fails only if none is left.
 *   2. A track that stops between keypoints is cut at the last keypoint it
 *      reaches (reported as truncated); one reaching fewer than 2 is dropped.
 *   3. Resampling onto EEPs is hrt_builder_add_track(); route-boundary
 *      masses per metallicity are the geometric mean of the last track of
 *      one route and the first of the next.  The grid is written atomically
 *      and only when everything succeeded: on failure no file is created
 *      and an existing one is left as it was.
 *   4. May be called once per import.
 */
HRT_API int hrt_import_run(hrt_import *imp, const char *out_path, hrt_error *err);

/** What the import did with one track file (hrt_import_track()). */
typedef struct hrt_import_track_report {
    const char *file;           /**< path as added (lives as long as the import) */
    int status;                 /**< HRT_OK: in the grid; else the code of the reason it is not */
    long line, column;          /**< location of the problem in the file (1-based; 0 if none) */
    char message[320];          /**< the problem, or "" */
    char notes[320];            /**< what was assumed or changed (defaults, truncation, ...) */
    double initial_mass_msun;   /**< NaN if unknown */
    double z;                   /**< NaN if unknown */
    int route;                  /**< route index (hrt_import_route_name), -1 if none */
    int truncated;              /**< stops before its route's last keypoint */
    int remnant;                /**< hrt_remnant assigned */
    double remnant_mass_msun;   /**< NaN if none */
    size_t n_rows;              /**< data rows read */
    size_t n_rows_dropped;      /**< rows dropped in lenient mode (non-finite values) */
    size_t n_keypoints;         /**< keypoints reached on the route */
    double keypoint_age_yr[HRT_IMPORT_MAX_KP]; /**< age of each */
    long keypoint_line[HRT_IMPORT_MAX_KP];     /**< file line of each */
    int keypoint_how[HRT_IMPORT_MAX_KP];       /**< HRT_KP_FOUND_* of each */
    char missing[192];          /**< why the next keypoint of the route was not found */
} hrt_import_track_report;

/** Number of files added. */
HRT_API size_t hrt_import_n_tracks(const hrt_import *imp);
/** Report of file i (in the order added); HRT_E_INVALID if i is out of range. */
HRT_API int hrt_import_track(const hrt_import *imp, size_t i, hrt_import_track_report *out);
/** Number of routes of the import's layout. */
HRT_API size_t hrt_import_n_routes(const hrt_import *imp);
/** Name of route r; NULL if out of range. */
HRT_API const char *hrt_import_route_name(const hrt_import *imp, size_t r);
/** Number of keypoints of route r (0 if out of range). */
HRT_API size_t hrt_import_route_n_keypoints(const hrt_import *imp, size_t r);
/** Name of keypoint k of route r; NULL if out of range. */
HRT_API const char *hrt_import_keypoint_name(const hrt_import *imp, size_t r, size_t k);
/** Metallicity groups written (after a run): count, Z of group iz, boundary b of group iz (Msun). */
HRT_API size_t hrt_import_n_z(const hrt_import *imp);
HRT_API double hrt_import_z(const hrt_import *imp, size_t iz);
HRT_API double hrt_import_route_boundary(const hrt_import *imp, size_t iz, size_t b);

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

#define HRT_IMF_MAX_SEGMENTS 4

/**
 * An IMF between mass limits.  Fill it with hrt_imf_init(); the segment
 * fields are derived data (plain, so it can be copied and sent to MPI ranks).
 */
typedef struct hrt_imf {
    int32_t kind;                           /**< hrt_imf_kind */
    int32_t n_seg;                          /**< segments between m_lo and m_hi */
    double m_lo_msun, m_hi_msun;            /**< mass limits, Msun */
    double alpha;                           /**< slope of HRT_IMF_POWER_LAW (unused otherwise) */
    int32_t seg_lognormal[HRT_IMF_MAX_SEGMENTS]; /**< 1: log-normal segment, 0: power law */
    double seg_lo[HRT_IMF_MAX_SEGMENTS];    /**< segment limits, Msun */
    double seg_hi[HRT_IMF_MAX_SEGMENTS];
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
 *   2. The published parameters are written in lib/population.c beside
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

typedef struct hrt_zdist {
    int32_t kind;     /**< hrt_zdist_kind */
    int32_t reserved_;/**< zero */
    double z;         /**< FIXED: the metallicity; LOG_NORMAL: the median */
    double z_lo, z_hi;/**< limits of LOG_UNIFORM and LOG_NORMAL */
    double sigma_dex; /**< LOG_NORMAL: spread of log10 Z (= of [Fe/H]), dex, > 0 */
} hrt_zdist;

/** Everything that defines a population, hence its random draws. */
typedef struct hrt_pop_spec {
    hrt_imf imf;          /**< from hrt_imf_init() */
    hrt_sfh sfh;
    hrt_zdist zdist;
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
 *   1. The stream of chunk k is GSL's MT19937 (gsl_rng_mt19937) seeded with
 *      a SplitMix64 hash of (seed, k); each star draws, in this order, one
 *      uniform for its mass (IMF quantile), one for its birth time (not for
 *      a burst) and one for its metallicity (not for a fixed Z).
 *   2. These are exactly the stars hrt_pop_run() evaluates.
 */
HRT_API int hrt_pop_draw(const hrt_pop_spec *spec, uint64_t chunk, double *mass_msun, double *z,
                         double *t_birth_yr, size_t cap, size_t *n, hrt_error *err);

/** A non-negative sum in fixed point: value = (hi * 2^64 + lo) * 2^-32, exact under addition. */
typedef struct hrt_pop_sum {
    uint64_t hi, lo;
} hrt_pop_sum;
/** Value of a fixed-point sum as a double (rounded once). */
HRT_API double hrt_pop_sum_value(const hrt_pop_sum *s);

#define HRT_POP_MAX_PHASES 32    /**< >= HRT_PHASE_COUNT */
#define HRT_POP_MAX_REMNANTS 8   /**< >= HRT_REMNANT_COUNT */
#define HRT_POP_MAX_STATUS 32    /**< >= HRT_STATUS_COUNT_ */
#define HRT_POP_HR_MAX_BINS 10000 /**< nx * ny of the HR histogram */

/** Binning of the HR-diagram histogram: log10 Teff/K (x) by log10 L/Lsun (y). */
typedef struct hrt_pop_hr {
    double log_teff_lo, log_teff_hi; /**< x range, lo < hi */
    double log_l_lo, log_l_hi;       /**< y range, lo < hi */
    uint64_t nx, ny;                 /**< bins, nx * ny <= HRT_POP_HR_MAX_BINS (0 x 0: no histogram) */
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
    uint64_t n_phase[HRT_POP_MAX_PHASES];    /**< evaluated stars by hrt_phase now */
    hrt_pop_sum phase_initial_mass_msun[HRT_POP_MAX_PHASES]; /**< their initial masses */
    hrt_pop_sum phase_mass_msun[HRT_POP_MAX_PHASES];         /**< their current masses */
    hrt_pop_sum phase_l_lsun[HRT_POP_MAX_PHASES];            /**< their bolometric luminosities */
    uint64_t n_remnant[HRT_POP_MAX_REMNANTS];/**< evaluated stars by remnant kind now; [0]: not a remnant */
    hrt_pop_sum remnant_mass_msun[HRT_POP_MAX_REMNANTS];     /**< their current masses */
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
 * evaluated or failed.  No allocation.  Returned: HRT_OK, HRT_E_NULL.
 */
HRT_API int hrt_pop_summary_add(hrt_pop_summary *s, const hrt_state *states, size_t n, hrt_error *err);
/** Count n stars drawn but not yet born at the summary's epoch. */
HRT_API void hrt_pop_summary_add_unborn(hrt_pop_summary *s, uint64_t n);
/**
 * @brief dst += src, exactly (counts and sums add, extrema combine).
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_INVALID (different
 * epoch or binning; dst unchanged).  Commutative and associative bit for bit.
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
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_INVALID,
 *   HRT_E_DOMAIN, HRT_E_NOMEM (sums unchanged on any failure).
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
 * Stars are fitted from the zero-age main sequence to the last EEP of their
 * track (white dwarf cooling onset or core collapse).  Pre-main-sequence
 * stars and cooling white dwarfs are outside the model.  The answers are as
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
    double feh_min, feh_max;  /**< [Fe/H] range of the lattice, dex (default: the grid's range); the
                               *   metallicity prior is uniform in [Fe/H] over it */
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
/** Number of [Fe/H] nodes of the model, and the [Fe/H] of node k (NaN if out of range). */
HRT_API size_t hrt_fit_model_n_feh(const hrt_fit_model *model);
HRT_API double hrt_fit_model_feh(const hrt_fit_model *model, size_t k);

/**
 * What was measured of one star.  hrt_fit_obs_init() sets every field to
 * NaN ("not measured"); give a value together with its 1-sigma error (> 0).
 * Errors are Gaussian in the quantity as named (Teff in K, log L in dex).
 *
 * Luminosity comes from exactly one of: log_l; a bolometric flux (flux_w_m2,
 * or the apparent bolometric magnitude mbol on the IAU 2015 Resolution B2
 * scale) together with a distance (distance_pc or parallax_mas); or nothing
 * (then log g or the prior must place the star).  A flux without a
 * distance gives the HR-diagram distance of the star instead.
 */
typedef struct hrt_fit_obs {
    double teff_k, teff_sigma_k;          /**< effective temperature, K (required) */
    double log_l, log_l_sigma;            /**< log10 L/Lsun (nominal), dex */
    double feh, feh_sigma;                /**< [Fe/H] = log10(Z/Z_ref) of the grid, dex */
    double log_g_cgs, log_g_sigma;        /**< log10 g/(cm s^-2) */
    double flux_w_m2, flux_sigma_w_m2;    /**< bolometric flux at the observer, W m^-2 */
    double mbol, mbol_sigma;              /**< apparent bolometric magnitude (alternative to the flux) */
    double distance_pc, distance_sigma_pc;/**< distance, pc */
    double parallax_mas, parallax_sigma_mas; /**< parallax, mas (alternative to the distance;
                                           *   sigma/parallax <= 0.2: it is inverted) */
} hrt_fit_obs;

/** Set every field of an observation to NaN (not measured). */
HRT_API void hrt_fit_obs_init(hrt_fit_obs *obs);

/** A posterior summary: median and the central 68.27 % interval (15.87th and 84.13th percentiles). */
typedef struct hrt_fit_interval {
    double median;
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

/** One posterior draw (equal weights). */
typedef struct hrt_fit_sample {
    double initial_mass_msun; /**< Msun */
    double z;                 /**< metal mass fraction (a node of the model) */
    double age_yr;            /**< yr */
    double log_l;             /**< log10 L/Lsun of the lattice point drawn */
    double log_teff_k;        /**< log10 Teff/K of the lattice point drawn */
    int32_t phase;            /**< hrt_phase */
    int32_t reserved_;
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
    hrt_fit_interval radius_rsun;       /**< radius, nominal solar radii */
    hrt_fit_interval log_l;             /**< log10 L/Lsun */
    hrt_fit_interval teff_k;            /**< effective temperature, K */
    hrt_fit_interval log_g_cgs;         /**< log10 g/(cm s^-2) */
    hrt_fit_interval distance_pc;       /**< HR-diagram distance, pc (NaN unless a flux without a distance was given) */
    double phase_prob[HRT_PHASE_COUNT]; /**< posterior probability of each phase */
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
    int32_t reserved_;
    double phase_prob[HRT_PHASE_COUNT]; /**< fraction of samples in each phase (remnants: wd, ns, bh) */
    double luminous_frac;               /**< fraction of samples with a finite L and Teff */
    hrt_fit_interval log_l;             /**< log10 L/Lsun, over luminous samples */
    hrt_fit_interval teff_k;            /**< K, over luminous samples */
    hrt_fit_interval radius_rsun;       /**< Rsun, over luminous samples */
    hrt_fit_interval mass_msun;         /**< current mass, Msun, over all samples */
} hrt_forecast_state;

#define HRT_FORECAST_MAX_EVENTS 24
/** A keypoint still to come (named as in the grid's routes: "tams", "rgb_base", ...). */
typedef struct hrt_forecast_event {
    char name[32];
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
    int32_t status;
    int32_t remnant;                          /**< most probable final remnant (hrt_remnant) */
    int32_t phase_now;                        /**< most probable current phase */
    double n_samples;                         /**< samples used */
    double phase_now_prob[HRT_PHASE_COUNT];   /**< current phase over the samples */
    double ms_prob;                           /**< fraction now on the main sequence */
    hrt_fit_interval ms_left_yr;              /**< main-sequence time left, yr, over those samples */
    hrt_fit_interval end_in_yr;               /**< time until the last EEP (remnant formation), yr */
    hrt_forecast_phase future[HRT_PHASE_COUNT]; /**< indexed by hrt_phase: phases still to come */
    size_t n_events;                          /**< keypoints in events[], soonest median first */
    hrt_forecast_event events[HRT_FORECAST_MAX_EVENTS];
    double remnant_prob[HRT_REMNANT_COUNT];   /**< final remnant kind over the samples */
    hrt_fit_interval remnant_mass_msun;       /**< final remnant mass, Msun */
    double reserved[8];
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

#ifdef __cplusplus
}
#endif

#endif /* HRTRAIL_H */
