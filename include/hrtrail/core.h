/** @file
 * hrtrail core: opening a grid and asking it for stars, batches and
 * isochrones.  Part of the public API; include <hrtrail.h>.
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
 *    which dataset, which index), and on success HRT_OK and "success": it
 *    never keeps an earlier call's failure.  NULL may be passed for it.
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
#ifndef HRTRAIL_CORE_H
#define HRTRAIL_CORE_H

#include <stddef.h>
#include <stdint.h>

#include "hrtrail_version.h"

#ifdef __cplusplus
extern "C" {
#endif

/** Marks the exported functions (default visibility while the library is built; empty for users). */
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
/** The status codes: X(NAME, value, text) for each, in order (hrt_status, hrt_strerror()). */
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
    X(HRT_E_NO_MATCH, 15, "no model of the grid matches the observation")             \
    X(HRT_E_NO_EQUIVALENT, 16, "no point of the grid is equivalent to the changed star")

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
/**
 * Evolutionary phases: X(NAME, code, key, text) for HRT_PHASE_NAME.
 *
 * The codes are hrtrail's own, grouped by tens so that code / 10 says which
 * part of a star's life it is in:
 *   0   unknown
 *   1x  hydrogen in the core (every route): before and on the main sequence
 *   2x  hydrogen-shell giants (low-mass and giant routes), and the
 *       contraction of a stripped giant to a helium white dwarf
 *   3x  helium burning and the asymptotic giant branch (giant route)
 *   4x  massive stars after the main sequence (supergiant route)
 *   5x  remnants
 * Codes are below HRT_PHASE_SLOTS; arrays indexed by phase code (fit,
 * forecast, population summaries) have that many entries, most unused.  The
 * same codes are stored in grid files (tracks/FORMAT.md) and used by the
 * command line and every binding; keys are the short names in files and
 * in CSV/JSON output.
 */
#define HRT_PHASE_LIST(X)                                                           \
    X(UNKNOWN, 0, "unknown", "unknown")                                             \
    X(PRE_MS, 10, "pre_ms", "pre-main sequence")                                    \
    X(MS, 11, "ms", "main sequence")                                                \
    X(SUBGIANT, 20, "subgiant", "subgiant / Hertzsprung gap")                       \
    X(RGB, 21, "rgb", "red giant branch")                                           \
    X(POST_RGB, 22, "post_rgb", "post-RGB contraction")                             \
    X(CHEB, 30, "cheb", "core helium burning")                                      \
    X(EAGB, 31, "eagb", "early asymptotic giant branch")                            \
    X(TPAGB, 32, "tpagb", "thermally pulsing asymptotic giant branch")              \
    X(POST_AGB, 33, "post_agb", "post-AGB")                                         \
    X(BSG, 40, "bsg", "blue supergiant")                                            \
    X(RSG, 41, "rsg", "red supergiant")                                             \
    X(WR, 42, "wr", "Wolf-Rayet")                                                   \
    X(WD, 50, "wd", "white dwarf")                                                  \
    X(NS, 51, "ns", "neutron star")                                                 \
    X(BH, 52, "bh", "black hole")

#define HRT_PHASE_ENUM_ENTRY_(name, code, key, text) HRT_PHASE_##name = code,
/** Evolutionary phase (HRT_PHASE_LIST); use hrt_phase_name() and hrt_phase_key(). */
typedef enum hrt_phase { HRT_PHASE_LIST(HRT_PHASE_ENUM_ENTRY_) HRT_PHASE_SLOTS = 64 } hrt_phase;
#undef HRT_PHASE_ENUM_ENTRY_
/** Number of phases in HRT_PHASE_LIST (unknown included). */
#define HRT_PHASE_N 16

/**
 * @brief Name of a phase ("main sequence", "red giant branch", ...).
 * @return a static string; "unknown" for a code not in HRT_PHASE_LIST.  Thread-safe.
 */
HRT_API const char *hrt_phase_name(int phase);
/** Short key of a phase ("ms", "rgb", "cheb", ...); "unknown" for a code not in the list. */
HRT_API const char *hrt_phase_key(int phase);
/** Inverse of hrt_phase_key(); HRT_PHASE_UNKNOWN for an unknown key or NULL. */
HRT_API int hrt_phase_from_key(const char *key);
/** Code of the i-th phase of HRT_PHASE_LIST (0 <= i < HRT_PHASE_N, unknown first); -1 beyond. */
HRT_API int hrt_phase_code(size_t i);

/**
 * Kinds of remnant: X(NAME, code, key, text) for HRT_REMNANT_NAME.  Codes
 * are hrtrail's own, grouped by tens: 0 none, 1x white dwarfs (by core
 * composition), 20 neutron star, 30 black hole; code / 10 is the kind of
 * compact object.  Codes are below HRT_REMNANT_SLOTS.
 */
#define HRT_REMNANT_LIST(X)                                                         \
    X(NONE, 0, "none", "none")                                                      \
    X(HE_WD, 10, "he_wd", "helium white dwarf")                                     \
    X(CO_WD, 11, "co_wd", "carbon-oxygen white dwarf")                              \
    X(ONE_WD, 12, "one_wd", "oxygen-neon white dwarf")                              \
    X(NS, 20, "ns", "neutron star")                                                 \
    X(BH, 30, "bh", "black hole")

#define HRT_REMNANT_ENUM_ENTRY_(name, code, key, text) HRT_REMNANT_##name = code,
/** Kind of stellar remnant (HRT_REMNANT_LIST). */
typedef enum hrt_remnant { HRT_REMNANT_LIST(HRT_REMNANT_ENUM_ENTRY_) HRT_REMNANT_SLOTS = 32 } hrt_remnant;
#undef HRT_REMNANT_ENUM_ENTRY_
/** Number of remnant kinds in HRT_REMNANT_LIST (none included). */
#define HRT_REMNANT_N 6

/** Name of a remnant kind ("carbon-oxygen white dwarf", ...); "unknown" for a code not in the list. */
HRT_API const char *hrt_remnant_name(int remnant);
/** Short key of a remnant kind ("co_wd", "ns", ...); "unknown" for a code not in the list. */
HRT_API const char *hrt_remnant_key(int remnant);
/** Inverse of hrt_remnant_key(); -1 for an unknown key or NULL. */
HRT_API int hrt_remnant_from_key(const char *key);
/** Code of the i-th remnant kind of HRT_REMNANT_LIST (0 <= i < HRT_REMNANT_N, none first); -1 beyond. */
HRT_API int hrt_remnant_code(size_t i);

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
#define HRT_FLAG_NOT_MODELLED 0x8  /**< younger than the track's first EEP (birthline or ZAMS): only phase and mass are set */
#define HRT_FLAG_BEYOND_LAW 0x10   /**< an analytic remnant outside the range where its law holds to its stated
                                    *   accuracy: a white dwarf above 0.1 or below 10^-4.5 Lsun (hrt_wd_log_l);
                                    *   in the flags hrt_magnitudes() returns, also a star its bolometric
                                    *   correction was not calibrated on (Teff outside HRT_BC_V_TEFF_MIN_K to
                                    *   HRT_BC_V_TEFF_MAX_K, or a remnant) */

/**
 * State of one star at one age.  Plain data, so ctypes and Fortran bind(C)
 * can mirror it.  Field names are the vocabulary of tracks/FORMAT.md, the
 * same in CSV/JSON output, Python and Fortran.  The library sets struct_size = sizeof(hrt_state) in every
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
    double log_l_lsun;        /**< log10 L/Lsun (NaN if dark) */
    double log_teff_k;        /**< log10 Teff/K (NaN if dark) */
    double log_r_rsun;        /**< log10 R/Rsun, from L and Teff by the Stefan-Boltzmann law */
    double log_g_cgs;         /**< log10 g / (cm s^-2) */
    double mass_msun;         /**< current mass, Msun */
    double he_core_mass_msun; /**< helium core mass, Msun */
    double co_core_mass_msun; /**< carbon-oxygen core mass, Msun */
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
 *      tracks, log age at EEP j is lambda_j * (chosen type) + (1 - lambda_j)
 *      * (linear), each lambda_j in [0, 1]: 1 unless EEPs j and j + 1 would
 *      not increase at some mass of the interval (by at least 1/1024 of the
 *      smaller of the two tracks' steps from j to j + 1), and then both
 *      lowered together to the largest common value that makes them,
 *      repeated until every consecutive pair does at every mass of the
 *      interval (1 at most EEPs; lower mostly at late EEPs where fast
 *      phases have nearly equal ages at neighbouring EEPs; all 0, linear,
 *      should a pair still fail).  Across [Fe/H],
 *      log age is linear for the same reason; the other quantities use the
 *      chosen type.
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
 * @brief Range of initial masses (Msun) covered at metallicity z: the
 * masses every metallicity group used at z (the one of this Z, or the two
 * bracketing it) covers.  hrt_eval, hrt_star_new and hrt_isochrone accept
 * exactly these masses and metallicities; a value within 1e-12 (relative)
 * outside an edge is taken as on the edge (rounding of unit conversions),
 * one farther out is refused.
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
/**
 * @brief Route-boundary mass b (Msun) at metallicity z: the initial mass
 * above which stars follow route b + 1, linear in [Fe/H] between the
 * boundary masses of the two groups bracketing z (the rule hrt_eval and
 * hrt_grid_route_of use).
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_INVALID (b is not in
 * 0 .. n_routes - 2), HRT_E_DOMAIN, HRT_E_Z_RANGE.
 */
HRT_API int hrt_grid_boundary_at(const hrt_grid *g, double z, size_t b, double *mass_msun);

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
 *   2. A star younger than its track's first EEP is not an error: its phase
 *      is HRT_PHASE_PRE_MS, flag HRT_FLAG_NOT_MODELLED, quantities NaN
 *      except masses.  The first EEP is the birthline where the grid models
 *      the pre-main sequence (the default grid: 1000 yr after arrival on
 *      the birthline), else the ZAMS (most imported grids).
 *   3. Identical to hrt_star_new() + hrt_star_at() bit for bit.
 */
HRT_API int hrt_eval(const hrt_grid *g, size_t n, const double *mass_msun, const double *z,
                     double z_all, const double *age_yr, hrt_state *out, hrt_error *err);

/* ------------------------------------------------------------------------
 * How wrong an interpolated state may be: the stored leave-one-out field
 * ------------------------------------------------------------------------ */
/** Estimated interpolation error of a state (hrt_state_interp_error()). */
typedef struct hrt_interp_error {
    double log_l_dex;    /**< |error| of log L/Lsun at the state's EEP, dex */
    double log_teff_dex; /**< |error| of log Teff/K at the state's EEP, dex */
    double log_age_dex;  /**< |error| of log age at the state's EEP, dex */
    int32_t n_tracks;    /**< measured tracks the estimate comes from (1..8 across mass, up to 8 more across metallicity) */
    double reserved[4];  /**< zero; room to grow */
} hrt_interp_error;

/**
 * @brief Estimated interpolation error of a state, from the leave-one-out
 * error field stored in the grid file (hrt_accuracy_store()).
 *
 * Given:
 *   g    the grid that made the state (its interpolation type is used)
 *   s    a state of hrt_eval(), hrt_star_at(), hrt_star_eep_state() or an isochrone
 * Returned:
 *   out  the estimate; NaN on failure
 *   (function value) HRT_OK; HRT_E_NULL; HRT_E_INVALID (the file stores no
 *   field for the grid's type); HRT_E_DOMAIN (a failed state, a remnant,
 *   or a state before the first EEP: no EEP); HRT_E_NO_TRACK (no measured
 *   track of the state's route near its mass and metallicity);
 *   HRT_E_FORMAT (blocks that match no route, EEP range or metallicity
 *   group of the grid, or negative errors: a file damaged in a way its
 *   checksums, verified at open, do not show), on every call.
 * Notes:
 *   1. The statistic: the largest |error| found, in the block of at most 10
 *      EEPs holding the state's EEP, when the grid's two tracks nearest
 *      below and two nearest above the state's initial mass (on its route,
 *      in the metallicity groups either side of its Z) were each dropped
 *      and predicted from the rest.  Those predictions span twice the
 *      grid's spacing, so the estimate is an upper estimate, not a 1-sigma
 *      error: on exact-answer grids (tests/test_interp_error.c) it bounds
 *      the true error at every EEP tested, for every type (true/estimate at
 *      most 0.81); out of sample on the default grid the true error is
 *      below it at 99.9-100 % of EEPs, median true/estimate 0.05
 *      (tracks/MODEL.md).  A state at a grid track's own mass gets the
 *      interval's estimate too, though its true error there is nil.
 *   2. Errors are at the same EEP.  At a given age a star's log L also
 *      moves by (d log L / d log age) times the age error; that is not
 *      added.
 *   3. Between metallicity groups, when the file also stores the field
 *      across metallicity (accuracy/across_z/, hrt_accuracy_set_across_z()),
 *      the largest error found when the bracketing groups (those not at an
 *      edge) were dropped and predicted across [Fe/H], at their two tracks
 *      nearest below and above the state's mass, is added to the estimate
 *      (a sum, not in quadrature: the sum of two bounds stays a bound).
 *      At a group's own Z the estimate is the mass direction's, unchanged.
 *   4. Does not slow hrt_eval(), which never reads the field.  O(blocks
 *      stored) per call; thread-safe on a shared grid; no allocation after
 *      the first call of the grid: opening verifies the field's checksums
 *      only, and the first call of this function or of
 *      hrt_grid_has_interp_error() decodes and checks it once (about 20 ms
 *      on the default grid), other threads waiting for it.
 */
HRT_API int hrt_state_interp_error(const hrt_grid *g, const hrt_state *s, hrt_interp_error *out, hrt_error *err);
/** 1 if the grid file stores an error field for the grid's interpolation type (its first call may decode
 *  the field: hrt_state_interp_error(), note 4); 0 also for a field that does not decode. */
HRT_API int hrt_grid_has_interp_error(const hrt_grid *g);

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
 * HRT_E_AGE_RANGE (past a truncated track with no known remnant).  Past
 * the end of a complete track that leaves no remnant (a pair-instability
 * supernova) the state is HRT_OK, flagged HRT_FLAG_REMNANT | HRT_FLAG_DARK,
 * with remnant HRT_REMNANT_NONE, phase HRT_PHASE_UNKNOWN, mass 0 and L, Teff,
 * R, g NaN: nothing is left.
 */
HRT_API int hrt_star_at(const hrt_star *star, double age_yr, hrt_state *out);
/** Number of EEPs of the star's interpolated track. */
HRT_API size_t hrt_star_n_eep(const hrt_star *star);
/**
 * State at EEP j of the star's track (0 <= j < hrt_star_n_eep); HRT_E_INVALID
 * if out of range.  The last EEP is the star as its track ends: a white
 * dwarf at the onset of cooling, or, before core collapse, the luminous star
 * in the phase it ends in (not labelled with the dark remnant, which
 * hrt_star_at() gives from that age on).
 */
HRT_API int hrt_star_eep_state(const hrt_star *star, size_t j, hrt_state *out);
/** Route index of the star. */
HRT_API int hrt_star_route(const hrt_star *star);
/** Initial mass of the star, Msun. */
HRT_API double hrt_star_mass(const hrt_star *star);
/** Metallicity (metal mass fraction Z) of the star. */
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
    double phase_start_yr; /**< age at which the phase begins, yr */
    double phase_end_yr;   /**< age at which it ends, yr (+inf for a remnant that lasts forever) */
} hrt_phase_span;

/**
 * @brief The star's timetable: its phases in order, including the remnant.
 * Given: cap, the capacity of spans.  Returned: *n, the number of phases
 * (also when the buffer is too small).  Returned (function value): HRT_OK,
 * HRT_E_NULL, HRT_E_BUFFER.
 */
HRT_API int hrt_star_phases(const hrt_star *star, hrt_phase_span *spans, size_t cap, size_t *n);

/* ------------------------------------------------------------------------
 * Stars whose mass changes: remapping onto the track family, and stepping
 * ------------------------------------------------------------------------ */
/** Initial mass (Msun) about which main-sequence stars gain a convective core (hrt_remap()). */
#define HRT_REMAP_CONVECTIVE_CORE_MSUN 1.2
/** Initial mass (Msun) below which main-sequence stars are convective throughout (hrt_remap()). */
#define HRT_REMAP_FULLY_CONVECTIVE_MSUN 0.35
/** Width (dex in mass) of the two logistic blends between mixed and unmixed cores (hrt_remap()). */
#define HRT_REMAP_BLEND_DEX 0.03
/** Fraction of the current phase's duration that hrt_step() proposes as the next step. */
#define HRT_STEP_PHASE_FRACTION 0.02
/** Largest fraction of the current mass that hrt_step() lets one proposed step add or remove. */
#define HRT_STEP_MASS_FRACTION 0.01

/**
 * @brief The point of the track family from which a star continues after
 * its current mass changed (gain or loss) to new_mass_msun.
 *
 * Given:
 *   g              open grid
 *   now            the star before the change: a state from hrt_eval(),
 *                  hrt_star_at(), hrt_step() or an earlier hrt_remap()
 *                  (status HRT_OK; its initial_mass_msun, z, age_yr, phase,
 *                  mass_msun and core masses are used)
 *   new_mass_msun  current mass after the change, Msun (finite, > 0)
 * Returned:
 *   out            the equivalent state: out->initial_mass_msun is the
 *                  effective initial mass and out->age_yr the effective
 *                  age from which hrt_eval(), hrt_star_new() + hrt_star_at()
 *                  or hrt_step() continue; out->mass_msun = new_mass_msun
 *                  (to 1e-12 relative, 1e-9 where the interpolated track
 *                  family resolves no closer)
 *   err            code and message
 * Returned (function value):
 *   HRT_OK, HRT_E_NULL, HRT_E_DOMAIN (new mass not finite and positive),
 *   HRT_E_INVALID (now->status is not HRT_OK), HRT_E_Z_RANGE,
 *   HRT_E_MASS_RANGE (the equivalent initial mass lies outside the grid's
 *   masses at this Z: the message gives the mass needed and the range),
 *   HRT_E_NO_EQUIVALENT (no point of the grid is equivalent: a remnant, a
 *   star before its first modelled EEP, a new mass at or below the helium
 *   core (a stripped core, which the tracks do not contain), or no track of
 *   the grid reaching the star's core mass in its phase at the new mass;
 *   the message says which).
 * Notes:
 *   1. Main sequence: the star keeps the hydrogen its core has burnt.  The
 *      fraction burnt is the energy radiated since the ZAMS over the energy
 *      of the whole main sequence (integral of L dt, trapezoidal over the
 *      EEPs).  Where the core is mixed (convective cores, and fully
 *      convective stars), matter gained is mixed into the core the grid
 *      gives at the new mass (helium core mass at the end of the main
 *      sequence), so the fraction burnt falls by the ratio of the old to the
 *      new core (rejuvenation); a radiative core (between
 *      HRT_REMAP_FULLY_CONVECTIVE_MSUN and HRT_REMAP_CONVECTIVE_CORE_MSUN)
 *      keeps its fraction; a core that shrinks keeps its composition and so
 *      its fraction.  Derivation, sources and limits: tracks/MODEL.md,
 *      "Stars whose mass changes".
 *   2. After the main sequence: the equivalent point has the same phase, the
 *      same core mass (the helium core on the subgiant and red giant
 *      branches, the carbon-oxygen core once helium burns) and the new
 *      current mass; out's matching core equals now's to 1e-9 relative.
 *   3. A new mass equal to now->mass_msun returns now's own point (the state
 *      hrt_eval() gives at now's initial mass, Z and age), in every phase,
 *      remnants and stars before their first EEP included.
 *   4. No allocation; O(n_eep) per trial track, typically 3-10 trial tracks.
 *      Thread-safe on a shared grid.
 */
HRT_API int hrt_remap(const hrt_grid *g, const hrt_state *now, double new_mass_msun, hrt_state *out, hrt_error *err);

/**
 * @brief Advance a star by dt_yr along its track while its mass changes at
 * mdot_msun_yr, and propose the next step.
 *
 * Given:
 *   g             open grid
 *   now           the star's present state (as for hrt_remap(); a remnant
 *                 or a star before its first EEP may be stepped only with
 *                 mdot_msun_yr = 0)
 *   dt_yr         step, yr (finite, >= 0)
 *   mdot_msun_yr  rate of mass change imposed from outside (accretion > 0,
 *                 transfer or stripping < 0), Msun/yr, on top of the
 *                 track's own wind; finite
 * Returned:
 *   next          the state dt_yr later: the star's track at now->age_yr +
 *                 dt_yr, then, when mdot_msun_yr * dt_yr != 0, remapped by
 *                 hrt_remap() to the mass its track gives plus
 *                 mdot_msun_yr * dt_yr
 *   dt_next_yr    (may be NULL) largest step that keeps the next call
 *                 accurate: the smaller of HRT_STEP_PHASE_FRACTION of the
 *                 current phase (of the time spent in it, but at least that
 *                 fraction of the phase's start age, when the phase is open
 *                 ended), the time left to the end of the phase when that is
 *                 shorter (phases end at keypoints: the step lands on it), and,
 *                 when mdot_msun_yr != 0, the time to change the mass by
 *                 HRT_STEP_MASS_FRACTION and, for a loss, to strip the
 *                 envelope down to the helium core
 *   err           code and message
 * Returned (function value):
 *   HRT_OK, HRT_E_NULL, HRT_E_DOMAIN (dt or the rate not finite, dt < 0,
 *   a mass that would fall to zero or below), HRT_E_INVALID (now->status not
 *   HRT_OK), HRT_E_AGE_RANGE (past the end of a truncated track), and
 *   every code of hrt_remap().  On failure next holds the star's track state
 *   at the new age with status set to the code.
 * Notes:
 *   1. With mdot_msun_yr = 0 the star follows its own track exactly: next
 *      is the hrt_eval() state at now's initial mass and Z and age + dt_yr,
 *      bit for bit.
 *   2. Operator splitting, first order in dt: the track's own evolution
 *      (winds included), then the imposed mass change.  Steps no larger
 *      than dt_next_yr keep the splitting error within about
 *      HRT_STEP_MASS_FRACTION of the mass.
 *   3. No allocation (a test counts every allocation of the library during
 *      stepping).  Thread-safe on a shared grid.
 */
HRT_API int hrt_step(const hrt_grid *g, const hrt_state *now, double dt_yr, double mdot_msun_yr, hrt_state *next,
                     double *dt_next_yr, hrt_error *err);

/* ------------------------------------------------------------------------
 * Isochrones
 * ------------------------------------------------------------------------ */
/** Bit of phase code p in a phase mask (codes are below HRT_PHASE_SLOTS = 64). */
#define HRT_PHASE_BIT(p) ((uint64_t)1 << (p))
/** The remnant phases (white dwarf, neutron star, black hole) as a mask. */
#define HRT_PHASES_REMNANT (HRT_PHASE_BIT(HRT_PHASE_WD) | HRT_PHASE_BIT(HRT_PHASE_NS) | HRT_PHASE_BIT(HRT_PHASE_BH))
/** Default largest step in log L between neighbours of one phase on an isochrone, dex. */
#define HRT_ISOCHRONE_MAX_DLOG_L 0.02

/** What an isochrone holds (hrt_isochrone_options_default() fills it). */
typedef struct hrt_isochrone_options {
    uint64_t phases;   /**< phases included, HRT_PHASE_BIT(code) each; default: every phase of a
                        *   luminous, modelled star (all but unknown and the remnants; pre_ms
                        *   where the grid models it, from the birthline) */
    double max_dlog_l; /**< largest log L step between neighbouring points of one phase, dex
                        *   (default HRT_ISOCHRONE_MAX_DLOG_L) */
    double reserved[6];/**< zero */
} hrt_isochrone_options;

/** Fill o with the defaults (NULL allowed: nothing happens). */
HRT_API void hrt_isochrone_options_default(hrt_isochrone_options *o);

/**
 * @brief The isochrone at one age and metallicity.
 *
 * Every initial mass the grid holds at z whose star is alive and modelled at
 * age_yr (or of a phase the options include) is represented: for each
 * route, the mass at which the star is at each EEP (root of the interpolated
 * EEP age in mass), so fast phases are resolved by as many points as the
 * grid has EEPs; the lowest and highest mass of the route's zone; and,
 * between neighbours of one phase, as many further masses as keep
 * successive log L within o->max_dlog_l (the lower main sequence, where no
 * EEP is reached, is sampled this way).  Points are ordered by route, then
 * by initial mass (along the isochrone).  Every point is the state hrt_eval
 * gives at its mass and age.
 * Given:  age_yr (> 0), z, o (NULL: defaults), cap (capacity of out).
 * Returned: out[0..*n-1]; *n is the number of points (also when cap is too small).
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_DOMAIN (age, or a
 * non-positive max_dlog_l), HRT_E_Z_RANGE, HRT_E_BUFFER (nothing useful in
 * out; call again with cap >= *n), HRT_E_NOMEM.  Thread-safe; allocates
 * scratch memory.
 */
HRT_API int hrt_isochrone_with(const hrt_grid *g, double age_yr, double z, const hrt_isochrone_options *o,
                               hrt_state *out, size_t cap, size_t *n, hrt_error *err);
/** hrt_isochrone_with(g, age_yr, z, NULL, out, cap, n, err): the defaults. */
HRT_API int hrt_isochrone(const hrt_grid *g, double age_yr, double z, hrt_state *out, size_t cap,
                          size_t *n, hrt_error *err);

/* ------------------------------------------------------------------------
 * Extra quantities: further per-EEP quantities a grid may carry
 * ------------------------------------------------------------------------ */
/**
 * Number of extra per-EEP quantities the grid carries beyond the standard
 * ones (tracks/FORMAT.md, "Extra quantities"); 0 for a grid without them
 * or NULL.  Their order (by name) is the index k of the calls below.
 */
HRT_API size_t hrt_grid_extra_count(const hrt_grid *g);
/** Name of extra quantity k (lower-case letters, digits, '_'); NULL if out of range. */
HRT_API const char *hrt_grid_extra_name(const hrt_grid *g, size_t k);
/** Unit of extra quantity k as an astropy unit string ("" if dimensionless); NULL if out of range. */
HRT_API const char *hrt_grid_extra_unit(const hrt_grid *g, size_t k);
/** Meaning of extra quantity k as the file states it; NULL if out of range. */
HRT_API const char *hrt_grid_extra_meaning(const hrt_grid *g, size_t k);
/** Index of the extra quantity called name; -1 if the grid has none of that name (or NULL). */
HRT_API long hrt_grid_extra_index(const hrt_grid *g, const char *name);

/**
 * @brief Extra quantities of a star in the state s (from hrt_eval(),
 * hrt_star_at(), hrt_star_eep_state() or hrt_isochrone() on the same grid).
 *
 * Given:
 *   g     the grid that produced s
 *   s     a state; its initial mass, Z and fractional EEP are used
 *   n     number of quantities wanted
 *   idx   their indices (0 <= idx[t] < hrt_grid_extra_count); NULL: the
 *         first n quantities in order
 * Returned:
 *   out   n values, out[t] of quantity idx[t] (or t); NaN where the state
 *         has no EEP (before the first EEP, a remnant, a failed star)
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_INVALID (an index out
 * of range, or an EEP not on the star's track), HRT_E_NOMEM (first call
 * only), and the codes of hrt_star_new() for a state whose mass or Z is not
 * on the grid.
 * Notes:
 *   1. Interpolated exactly as log L is: the grid's type across log initial
 *      mass and [Fe/H] at each EEP, linear in the EEP fraction the age gives.
 *      On a grid whose extra is a column equal to log L the answer equals
 *      s->log_l_lsun to rounding.  Values are not converted (a mass-like
 *      extra is interpolated as stored, not as a fraction of the initial mass).
 *   2. The extras live apart from the standard quantities: hrt_eval() and
 *      hrt_star_at() never read them and cost the same on a grid with or
 *      without (the same instructions, measured).  Their slopes across mass
 *      are computed by the first call on a grid that needs them (once, under
 *      the grid's lock: the first call allocates and takes about as long as
 *      a third of the open; HRT_E_NOMEM if that fails), so opening a grid
 *      does not pay for them; hrt_grid_memory_bytes() counts them prepared.
 *      Later calls allocate nothing and cost about what hrt_eval() costs per
 *      star (1600 instructions per state for six quantities on the default
 *      grid, 1700 for hrt_eval).  Thread-safe, also on first use.
 */
HRT_API int hrt_state_extra(const hrt_grid *g, const hrt_state *s, size_t n, const size_t *idx, double *out,
                            hrt_error *err);
/**
 * @brief Extra quantities of the star of initial mass (Msun), Z and age (yr):
 * hrt_eval() of that star, then hrt_state_extra().  state (NULL allowed)
 * receives the star's state.  Codes of both; out is NaN on failure.
 */
HRT_API int hrt_extra_at(const hrt_grid *g, double mass_msun, double z, double age_yr, size_t n, const size_t *idx,
                         double *out, hrt_state *state, hrt_error *err);

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
 * Accurate to a factor of about 1.5 in age between 1e-4.5 and 1e-1 Lsun
 * (states outside are flagged HRT_FLAG_BEYOND_LAW).  NaN for a kind that is
 * not a white dwarf, a non-positive mass, a non-finite log_l0 or a negative dt.
 */
HRT_API double hrt_wd_log_l(double mass_msun, int kind, double log_l0, double dt_yr);

/**
 * @brief Remnant of core collapse from the final carbon-oxygen core and
 * total masses (Msun): kind (HRT_REMNANT_NS, HRT_REMNANT_BH, or
 * HRT_REMNANT_NONE for a star disrupted by a pair-instability supernova) and
 * gravitational mass (Msun; 0 for none).
 *
 * The "delayed" prescription of Fryer et al. (2012, ApJ 749, 91) [from
 * memory], with the steps of its proto-neutron-star mass smoothed over 0.3
 * Msun of CO core; baryonic masses below 2.5 Msun make neutron stars with
 * M_bar = M_grav + 0.075 M_grav^2 (Lattimer & Yahil 1989, ApJ 340, 426),
 * heavier ones black holes of 0.9 M_bar.  Pair instability (Woosley 2017,
 * ApJ 836, 244; Farmer et al. 2019, ApJ 887, 53): pulsations fading in over
 * CO cores of 26-34 Msun leave at most 50 Msun of baryons (a 45 Msun black
 * hole); CO cores of 60-120 Msun leave nothing; heavier ones collapse whole.
 * Good to a factor of about 2 for black holes and about 10 Msun on the
 * edges of the gap; real explodability is not monotonic in mass.
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_DOMAIN (masses not
 * finite, negative, or a core heavier than the star).
 */
HRT_API int hrt_collapse_remnant(double co_core_mass_msun, double final_mass_msun, int *kind, double *mass_msun);

/* ------------------------------------------------------------------------
 * Magnitudes
 * ------------------------------------------------------------------------ */
/** Coolest Teff (K) of the stars Flower's (1996) bolometric corrections were fitted to (hrt_bc_v). */
#define HRT_BC_V_TEFF_MIN_K 2900.0
/** Hottest Teff (K) of the stars Flower's (1996) bolometric corrections were fitted to (hrt_bc_v). */
#define HRT_BC_V_TEFF_MAX_K 52500.0

/**
 * @brief Bolometric correction in Johnson V, BC_V = M_bol - M_V (mag), at
 * log10 Teff/K.
 *
 * The polynomials in log Teff of Flower (1996, ApJ 469, 355), with the
 * coefficients as reprinted by Torres (2010, AJ 140, 1158, Table 1) because
 * the original publication misprinted them: three pieces, below log Teff =
 * 3.70, from 3.70 to 3.90, and above 3.90 (they join to 0.022 mag at 3.70
 * and 0.003 mag at 3.90).  Fitted to stars of 2900 to 52500 K (dwarfs,
 * subgiants, giants and supergiants; not white dwarfs).
 *
 * Zero point: the Sun (5772 K) gets BC_V = -0.081, hence M_V = 4.82 with
 * the IAU 2015 B2 M_bol,sun = 4.74; Torres (2010) pairs the table with
 * M_bol,sun = 4.73 to reproduce V_sun = -26.76 +- 0.03, so V magnitudes here
 * are 0.01 mag fainter than on his scale, well inside that error.
 *
 * Accuracy: the papers give no single figure; measured here against the
 * mean-dwarf sequence of Pecaut & Mamajek (2013, ApJS 208, 9; E. Mamajek's
 * table, version 2019.3.22) in tests/test_magnitude.c: within 0.06 mag
 * from B3 to K5 dwarfs (A0-F5 about 0.05 mag less negative), 0.10 mag at
 * B2; below 4000 K it drifts from the dwarfs (-0.07 at K7, -0.18 at M0,
 * -0.5 at M2, -1.1 at M4: the cool piece is fitted mostly to giants).  In
 * hot stars BC_V changes by 0.1 mag per 1000 K at 30000 K, so an error in
 * Teff dominates.  Outside 2900-52500 K the polynomial runs away (-5.9 mag
 * at 2900 K already): the value is returned, but is not a bolometric
 * correction.
 *
 * Returned (function value): BC_V in mag; NaN for a non-finite log_teff_k.
 * Thread-safe, pure.
 */
HRT_API double hrt_bc_v(double log_teff_k);

/**
 * @brief Bolometric and V magnitudes of n states, absolute and (for a
 * distance and an extinction) apparent.
 *
 * Given:
 *   n            number of states
 *   states       n states (from hrt_eval(), hrt_star_at(), hrt_isochrone(), ...)
 *   distance_pc  distance, pc (finite, > 0); used only when mv is given
 *   a_v_mag      extinction in V, A_V, mag (finite, >= 0); used only when mv is given
 * Returned (each array of n entries, or NULL when not wanted):
 *   abs_mbol     M_bol = 4.74 - 2.5 log10 L/Lsun (IAU 2015 Resolution B2:
 *                M_bol = -2.5 log10(L / 3.0128e28 W))
 *   bc_v         BC_V = hrt_bc_v(log_teff_k), mag
 *   abs_mv       M_V = M_bol - BC_V
 *   mv           apparent V, m_V = M_V + 5 log10(distance_pc / 10) + A_V
 *   flags        the state's flags, with HRT_FLAG_BEYOND_LAW added when the
 *                bolometric correction does not hold: Teff outside
 *                HRT_BC_V_TEFF_MIN_K to HRT_BC_V_TEFF_MAX_K, or a remnant
 *                (HRT_FLAG_REMNANT: a white dwarf's BC_V is not Flower's);
 *                0 for a state whose status is not HRT_OK
 *   err          code and message
 * Returned (function value):
 *   HRT_OK, HRT_E_NULL (states NULL while n > 0), HRT_E_DOMAIN (mv given and
 *   distance_pc not finite and positive, or a_v_mag not finite and >= 0).
 * Notes:
 *   1. A state whose status is not HRT_OK, or that has no finite L and Teff
 *      (dark remnants, ages before the first EEP), gets NaN magnitudes; this
 *      is not a failure of the call.  M_bol needs only L, so it is finite
 *      whenever log_l_lsun is.
 *   2. Magnitudes computed outside the relation's range are still written
 *      (and flagged): a colour-magnitude diagram keeps its points, the caller
 *      decides what to trust.
 *   3. Reentrant, allocates nothing, any number of threads.
 */
HRT_API int hrt_magnitudes(size_t n, const hrt_state *states, double distance_pc, double a_v_mag, double *abs_mbol,
                           double *bc_v, double *abs_mv, double *mv, int32_t *flags, hrt_error *err);

#ifdef __cplusplus
}
#endif

#endif /* HRTRAIL_CORE_H */
