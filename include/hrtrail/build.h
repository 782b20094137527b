/** @file
 * hrtrail: building grids: the EEP writer, keypoints and the importer of text tracks
 *
 * Copyright (C) 2026 the hrtrail authors.  GPL-3.0-or-later.
 *
 * Part of the public API; include <hrtrail.h>, which includes every part.
 */
#ifndef HRTRAIL_BUILD_H
#define HRTRAIL_BUILD_H

#include "hrtrail/core.h"

#ifdef __cplusplus
extern "C" {
#endif

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
    const double *log_l_lsun;          /**< log10 L/Lsun */
    const double *log_teff_k;     /**< log10 Teff/K */
    const double *log_r_rsun;          /**< log10 R/Rsun (NULL: from L and Teff by Stefan-Boltzmann) */
    const double *mass_msun;      /**< current mass, Msun */
    const double *he_core_mass_msun;   /**< helium core mass, Msun */
    const double *co_core_mass_msun;   /**< carbon-oxygen core mass, Msun */
    const int *phase;             /**< hrt_phase of each sample */
    size_t n_keypoints;           /**< keypoints reached (raw tracks only), a prefix of the route's */
    const size_t *keypoint_sample;/**< sample index of each reached keypoint (raw tracks only) */
} hrt_track_data;

/** Weight of log Teff in the EEP distance metric (see tracks/FORMAT.md). */
#define HRT_EEP_WEIGHT_LOG_TEFF 2.0
/** Weight of log L in the EEP distance metric. */
#define HRT_EEP_WEIGHT_LOG_L 1.0
/** Weight of age in the EEP distance metric. */
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
 * @brief Declare an extra per-EEP quantity of the grid (tracks/FORMAT.md,
 * "Extra quantities"), before any track is added.
 * Given: name (lower-case letters, digits and '_', starting with a letter,
 * under 64 characters, not a standard quantity's name), unit (an astropy
 * unit string, "" if dimensionless) and meaning (printable ASCII under 256
 * characters).  At most 32 per grid.  Once one is declared, every track is
 * added with hrt_builder_add_track_extra() or
 * hrt_builder_add_eep_track_extra(), giving one column per declared
 * quantity in the order of declaration.  The file stores them by name, and
 * hrt_grid_extra_name() lists them in name order.
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_INVALID (bad name or
 * text, a name declared twice, more than 32, or tracks already added).
 */
HRT_API int hrt_builder_declare_extra(hrt_builder *b, const char *name, const char *unit, const char *meaning,
                                      hrt_error *err);
/**
 * @brief Store the declared extra quantity `name` in single precision
 * (on != 0: IEEE binary32, relative rounding 6e-8, half the space) or in
 * double precision (on = 0, the default, values read back bit for bit).
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_INVALID (not declared).
 */
HRT_API int hrt_builder_set_extra_single(hrt_builder *b, const char *name, int on, hrt_error *err);
/** Number of extra quantities declared so far (0 for NULL). */
HRT_API size_t hrt_builder_extra_count(const hrt_builder *b);
/**
 * @brief hrt_builder_add_track() with the extra quantities: extra[k] holds
 * t->n values of the k-th declared quantity (finite), resampled onto the
 * EEPs exactly as the standard columns are (linear in the EEP distance).
 * n_extra must equal the number declared.  Codes of hrt_builder_add_track(),
 * and HRT_E_INVALID for a wrong n_extra, HRT_E_DOMAIN for a value not finite.
 */
HRT_API int hrt_builder_add_track_extra(hrt_builder *b, double z, const hrt_track_data *t, size_t n_extra,
                                        const double *const *extra, hrt_error *err);
/** hrt_builder_add_eep_track() with the extra quantities (as hrt_builder_add_track_extra()). */
HRT_API int hrt_builder_add_eep_track_extra(hrt_builder *b, double z, const hrt_track_data *t, size_t n_extra,
                                            const double *const *extra, hrt_error *err);
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
 * @brief Set how the numeric datasets of the file are stored: level 1..9
 * shuffles and deflates them (zlib's level: 1 fastest, 9 smallest), 0
 * stores them uncompressed.  The default is 4.  Either way each dataset is
 * chunked and carries a Fletcher-32 checksum, and a grid reads back the
 * same values bit for bit (tracks/FORMAT.md, "Storage").
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_INVALID (level not
 * in 0..9).
 */
HRT_API int hrt_builder_set_compression(hrt_builder *b, int level, hrt_error *err);
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
/**
 * @brief Convert a grid file of an older format version to the current one.
 *
 * Given:
 *   old_path  a grid file of format version 1 .. HRT_FORMAT_VERSION
 *   new_path  where the converted grid is written, atomically as by
 *             hrt_builder_write(); it may be old_path itself (the old file
 *             is read completely first)
 * Returned (function value):
 *   HRT_OK, HRT_E_NULL, HRT_E_IO, HRT_E_FORMAT (old_path is not a valid grid
 *   of a known version), HRT_E_VERSION (newer than this library),
 *   HRT_E_NOMEM.
 * Notes:
 *   1. Version 1 stored phases and remnants as indices into key tables and
 *      used other dataset names (tracks/FORMAT.md, "Version history"); the
 *      conversion maps every key to hrtrail's code and every dataset to its
 *      name in the vocabulary.  Values are copied bit for bit; root text
 *      attributes are kept, and 'converted_from' records the conversion.
 *   2. hrt_grid_open() refuses older versions with HRT_E_VERSION and a
 *      message naming this function and 'hrtrail grid upgrade'.
 */
HRT_API int hrt_grid_upgrade(const char *old_path, const char *new_path, hrt_error *err);

/* @section import */
/** Most keypoints a route may have for detection and import. */
#define HRT_IMPORT_MAX_KP 32

/**
 * Columns of one raw track for keypoint detection (tracks/FORMAT.md,
 * "Keypoint criteria"): n samples in strictly increasing age.  age_yr,
 * log_l_lsun and log_teff_k are required; every other pointer may be NULL when
 * the column is absent, and criteria needing it then fall back as
 * FORMAT.md says.
 */
typedef struct hrt_kp_columns {
    size_t n;                   /**< number of samples */
    const double *age_yr;       /**< age since birth, yr, strictly increasing */
    const double *log_l_lsun;        /**< log10 L/Lsun */
    const double *log_teff_k;   /**< log10 Teff/K */
    const double *mass_msun;    /**< current mass, Msun */
    const double *central_x;    /**< central hydrogen mass fraction */
    const double *central_y;   /**< central helium mass fraction */
    const double *he_core_mass_msun; /**< helium core mass, Msun */
    const double *co_core_mass_msun; /**< carbon-oxygen core mass, Msun */
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
 *      previous one.  Precedence: a sample flagged with a keypoint's name
 *      outranks the phase column, which outranks the physical criteria:
 *      the flag; the phase column where it marks the keypoint; the
 *      physical criteria of tracks/FORMAT.md on the columns given; last,
 *      for tams and cheb_end, an estimate from the phase column.
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

/**
 * @brief The EEP layout of one route of the default grid.
 *
 * Given:
 *   r               route index, from 0 in order of increasing mass
 *   keypoint_names  room for HRT_IMPORT_MAX_KP pointers, the caller's
 * Returned:
 *   spec            the route's name, keypoint count, keypoint names and
 *                   segment EEP counts; spec->keypoint_names is
 *                   keypoint_names, filled with the names
 * Returned (function value):
 *   HRT_OK; HRT_E_NULL; HRT_E_INVALID when r is past the last route (so
 *   counting up from r = 0 until it fails gives the number of routes).
 * Notes:
 *   1. The default grid (hrtrail-gen-grid) is written with these routes
 *      and hrt_import_new() starts with them: one table for both.
 *   2. Every pointer set points into the library's read-only data and stays
 *      valid while the library is loaded.  The array of keypoint-name
 *      pointers is the caller's because a table of pointers inside a shared
 *      library needs relocations, which would make it writable data.
 *   3. No allocation; reentrant.
 */
HRT_API int hrt_default_route(size_t r, hrt_route_spec *spec, const char *keypoint_names[HRT_IMPORT_MAX_KP]);

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
 * Keys are the names of tracks/FORMAT.md's vocabulary ("Importing text
 * tracks"); a quantity without an entry is read from a column of that name:
 *   age_yr | log_age_yr          column[*unit], unit yr, kyr, Myr, Gyr or a number
 *   log_l_lsun | l_lsun, log_teff_k | teff_k, log_r_rsun | r_rsun,
 *   mass_msun, he_core_mass_msun, co_core_mass_msun, central_x, central_y
 *                                column[*factor]
 *   phase                        column of hrtrail phase keys (ms, rgb, ...) or codes
 *   keypoints                    column of explicit keypoint names ("", "-" or "0": none)
 *   initial_mass_msun, z, feh    a number, or a column (its first data row)
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
/**
 * Route layouts of the default grid with (on != 0) or without (on == 0, the
 * default) their pre-main-sequence segment: with it every track must start
 * on its birthline (the first row) and the keypoint zams is found after it;
 * without it every track starts at its ZAMS and rows before are labelled
 * pre_ms and left out.  Replaces layouts set by hrt_import_set_routes().
 * HRT_E_NULL if imp is NULL, HRT_E_NOMEM.
 */
HRT_API int hrt_import_set_pre_ms(hrt_import *imp, int on, hrt_error *err);
/** Reference metallicity written to the grid (default 0.014); also used by {feh} in patterns. */
HRT_API int hrt_import_set_z_ref(hrt_import *imp, double z_ref, hrt_error *err);
/**
 * Lenient mode (on != 0): a bad data row (a value that is not a number,
 * not finite or not positive, a phase that is not one, too few or too many
 * fields, an age that does not increase) is dropped and reported
 * (hrt_import_dropped_row()), and a file that cannot be read or is not a
 * table, a track left with fewer than 2 rows or keypoints, or a track the
 * builder refuses is dropped and reported, instead of failing the import.
 * Default: strict (the first problem fails the import).  HRT_E_NULL if
 * imp is NULL.
 */
HRT_API int hrt_import_set_lenient(hrt_import *imp, int on);
/**
 * Force (on != 0): write a grid even when its routes collapse.  By default
 * hrt_import_run() refuses, with HRT_E_INVALID and a message naming the
 * metallicity and route, a grid in which a route of the layout has no
 * track at some metallicity (e.g. every track on one route) or whose route
 * boundaries do not increase.  HRT_E_NULL if imp is NULL.
 */
HRT_API int hrt_import_set_force(hrt_import *imp, int on);
/**
 * @brief Set the route-boundary masses of one metallicity instead of the
 * geometric-mean rule.
 *
 * Given:
 *   z          the metallicity (matched to the tracks' Z within a relative
 *              1e-6), or NaN for every metallicity without its own setting
 *   n          number of boundaries: one less than the number of routes
 *              (checked when the import runs, as routes may still change)
 *   mass_msun  n masses, Msun, finite, positive and non-decreasing;
 *              boundary b separates route b from route b + 1
 * Returned (function value):
 *   HRT_OK, HRT_E_NULL, HRT_E_DOMAIN (a mass not finite, not positive or
 *   decreasing; z not NaN and not in (0, 1)), HRT_E_INVALID (n above the
 *   most routes, or more metallicities than a grid holds).
 * Notes:
 *   1. hrt_import_run() checks them against the tracks: every track of a
 *      route up to b must lie below boundary b and every track of a later
 *      route above it, else HRT_E_INVALID naming the track.  A setting for
 *      a metallicity no track has is an error (HRT_E_INVALID) unless the
 *      import is lenient.
 *   2. Setting the same z again replaces the earlier masses.
 */
HRT_API int hrt_import_set_route_boundaries(hrt_import *imp, double z, size_t n, const double *mass_msun,
                                            hrt_error *err);
/** Callback after each file is read: (user, files done, files in total, file name). May be NULL. */
HRT_API int hrt_import_set_progress(hrt_import *imp, void (*progress)(void *user, size_t done, size_t total,
                                                                      const char *file),
                                    void *user);
/**
 * @brief Read the tables' column `column` as the grid's extra quantity
 * `name` (tracks/FORMAT.md, "Extra quantities"), with its unit (an astropy
 * unit string, "" or NULL: dimensionless) and meaning (NULL: "column COLUMN
 * of the imported tables").  Every table must have the column; each value
 * must be a finite number (a row without one is a problem of the row, as
 * for the standard columns).  The values are resampled onto the EEPs as
 * the standard columns are.  The map entries extra.NAME=COLUMN and
 * extra.NAME.units=UNIT (hrt_import_map(), `hrtrail import --map`) do
 * the same.  Calling it again for a name re-maps it.
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_INVALID (a name that
 * is not a valid extra name, more than 32, text not printable ASCII).
 */
HRT_API int hrt_import_add_extra(hrt_import *imp, const char *name, const char *column, const char *unit,
                                 const char *meaning, hrt_error *err);
/** Number of extra quantities the import reads (0 for NULL). */
HRT_API size_t hrt_import_n_extra(const hrt_import *imp);
/**
 * @brief Add a track file.
 * z: its metal mass fraction, or NaN to take it from the map (z=...), the
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
 *   routes overlap in mass, route boundaries given that do not fit the
 *   tracks, collapsed routes: see note 4); HRT_E_NOMEM.
 * Notes:
 *   1. Strict mode: any file problem fails the import.  Lenient: a bad row
 *      is dropped (hrt_import_dropped_row()), a bad file dropped; both are
 *      reported; it fails only if no track is left.
 *   2. A track that stops between keypoints is cut at the last keypoint it
 *      reaches (reported as truncated); one reaching fewer than 2 is dropped.
 *   3. Resampling onto EEPs is hrt_builder_add_track(); route-boundary
 *      masses per metallicity are those of hrt_import_set_route_boundaries()
 *      or else the geometric mean of the last track of one route and the
 *      first of the next.  The grid is written atomically and only when
 *      everything succeeded: on failure no file is created and an existing
 *      one is left as it was.
 *   4. Unless hrt_import_set_force() is on, a grid whose routes collapse is
 *      refused: a route of the layout without a track at some metallicity
 *      (e.g. every track on one route) or two equal route boundaries; the
 *      message names the metallicity and the route.
 *   4. May be called once per import.
 */
HRT_API int hrt_import_run(hrt_import *imp, const char *out_path, hrt_error *err);

/** What the import did with one track file (hrt_import_track()). */
typedef struct hrt_import_track_report {
    const char *file;           /**< path as added (lives as long as the import) */
    int status;                 /**< HRT_OK: in the grid; else the code of the reason it is not */
    long line;                  /**< line of the problem in the file (1-based; 0 if none) */
    long column;                /**< column of the problem (1-based; 0 if none) */
    char message[320];          /**< the problem, or "" */
    char notes[320];            /**< what was assumed or changed (defaults, truncation, ...) */
    double initial_mass_msun;   /**< NaN if unknown */
    double z;                   /**< NaN if unknown */
    int route;                  /**< route index (hrt_import_route_name), -1 if none */
    int truncated;              /**< stops before its route's last keypoint */
    int remnant;                /**< hrt_remnant assigned */
    double remnant_mass_msun;   /**< NaN if none */
    size_t n_rows;              /**< data rows read */
    size_t n_rows_dropped;      /**< rows dropped in lenient mode (hrt_import_dropped_row()) */
    size_t n_keypoints;         /**< keypoints reached on the route */
    double keypoint_age_yr[HRT_IMPORT_MAX_KP]; /**< age of each */
    long keypoint_line[HRT_IMPORT_MAX_KP];     /**< file line of each */
    int keypoint_how[HRT_IMPORT_MAX_KP];       /**< HRT_KP_FOUND_* of each */
    char missing[192];          /**< why the next keypoint of the route was not found */
} hrt_import_track_report;

/** A data row dropped in lenient mode (hrt_import_dropped_row()). */
typedef struct hrt_import_row_report {
    long line;                  /**< line in the file (1-based) */
    long column;                /**< column in the line (1-based) */
    int code;                   /**< status code of the problem (HRT_E_FORMAT, ...) */
    char message[320];          /**< "file:line:column: problem" */
} hrt_import_row_report;

/** Number of files added. */
HRT_API size_t hrt_import_n_tracks(const hrt_import *imp);
/** Report of file i (in the order added); HRT_E_NULL, or HRT_E_INVALID if i is out of range. */
HRT_API int hrt_import_track(const hrt_import *imp, size_t i, hrt_import_track_report *out);
/**
 * Dropped row k of file i, in the order of the file (k below the file's
 * n_rows_dropped; the first 10000 are kept).  HRT_E_NULL, or HRT_E_INVALID
 * if i or k is out of range.
 */
HRT_API int hrt_import_dropped_row(const hrt_import *imp, size_t i, size_t k, hrt_import_row_report *out);
/** Number of routes of the import's layout. */
HRT_API size_t hrt_import_n_routes(const hrt_import *imp);
/** Name of route r; NULL if out of range. */
HRT_API const char *hrt_import_route_name(const hrt_import *imp, size_t r);
/** Number of keypoints of route r (0 if out of range). */
HRT_API size_t hrt_import_route_n_keypoints(const hrt_import *imp, size_t r);
/** Name of keypoint k of route r; NULL if out of range. */
HRT_API const char *hrt_import_keypoint_name(const hrt_import *imp, size_t r, size_t k);
/**
 * Metallicity groups written (after a run): count, Z of group iz, boundary
 * b of group iz (Msun).  Before a run, or for any index out of range, 0 or
 * NaN.
 */
HRT_API size_t hrt_import_n_z(const hrt_import *imp);
/** Metal mass fraction of group iz written by the run; NaN before a run or out of range. */
HRT_API double hrt_import_z(const hrt_import *imp, size_t iz);
/** Route-boundary mass b of group iz written by the run, Msun; NaN before a run or out of range. */
HRT_API double hrt_import_route_boundary(const hrt_import *imp, size_t iz, size_t b);

/* ------------------------------------------------------------------------
 * Interpolation accuracy of a grid: leave one track out (hrt_accuracy_*)
 * ------------------------------------------------------------------------ */
typedef struct hrt_accuracy hrt_accuracy; /**< opaque leave-one-out run and its result */

/** Quantities compared by hrt_accuracy_run(): indices of the arrays of hrt_accuracy_row. */
#define HRT_ACCURACY_LOG_L 0
/** Index of |d log Teff| (dex) in the arrays of hrt_accuracy_row. */
#define HRT_ACCURACY_LOG_TEFF 1
/** Index of |d log age| (dex) in the arrays of hrt_accuracy_row. */
#define HRT_ACCURACY_LOG_AGE 2
/** Number of quantities compared. */
#define HRT_ACCURACY_NQ 3

/** Errors of one interpolation type, route and phase, over every dropped track. */
typedef struct hrt_accuracy_row {
    int interp;                             /**< hrt_interp type of the rebuilt grids */
    int route;                              /**< route index in the grid */
    int phase;                              /**< hrt_phase code of the dropped track's EEPs */
    size_t n_points;                        /**< EEPs compared */
    size_t n_tracks;                        /**< dropped tracks with EEPs in this phase */
    double median[HRT_ACCURACY_NQ];         /**< median |error|, dex, per quantity */
    double p95[HRT_ACCURACY_NQ];            /**< 95th percentile of |error| (nearest rank), dex */
    double max[HRT_ACCURACY_NQ];            /**< largest |error|, dex */
    double worst_mass_msun[HRT_ACCURACY_NQ];/**< initial mass of the track with the largest error, Msun */
    double worst_z[HRT_ACCURACY_NQ];        /**< its metal mass fraction */
    size_t worst_eep[HRT_ACCURACY_NQ];      /**< its EEP index */
    double wd_mass_max_msun;                /**< route's largest |error| of white-dwarf mass, Msun, over tracks
                                                 whose neighbours leave the same kind (NaN if none); the same in
                                                 every row of one route and type */
} hrt_accuracy_row;

/** Start a leave-one-out run (every interpolation type, one thread per core, no progress callback). */
HRT_API int hrt_accuracy_new(hrt_accuracy **acc, hrt_error *err);
/** Free a run and its result; NULL is allowed. */
HRT_API void hrt_accuracy_free(hrt_accuracy *acc);
/**
 * @brief Choose the interpolation type: an hrt_interp, or -1 for all four.
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_INVALID.
 */
HRT_API int hrt_accuracy_set_interp(hrt_accuracy *acc, int interp, hrt_error *err);
/**
 * @brief Threads for the run: 0 for OpenMP's default, n >= 1 at most n.
 * Writing and opening the rebuilt grids (HDF5) is done one thread at a
 * time; interpolating and comparing run in parallel.
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_INVALID (n < 0).
 */
HRT_API int hrt_accuracy_set_threads(hrt_accuracy *acc, int n, hrt_error *err);
/**
 * @brief Measure one metallicity only: the group whose Z equals z (relative
 * 1e-9), or NaN for every group (the default).  hrt_accuracy_run() fails
 * with HRT_E_Z_RANGE when the grid has no such group.
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_DOMAIN (z <= 0 or infinite).
 */
HRT_API int hrt_accuracy_set_z(hrt_accuracy *acc, double z, hrt_error *err);
/**
 * @brief Measure across metallicity instead of across mass (on != 0), or
 * across mass again (on = 0, the default).
 *
 * Across metallicity, hrt_accuracy_run() drops each interior metallicity
 * group in turn (one with a group of lower and one of higher Z; with
 * hrt_accuracy_set_z() only that group), rebuilds the grid from every other
 * group, and interpolates each of the dropped group's tracks at its own
 * initial mass and Z with the grid's own interpolation across [Fe/H] (and
 * across mass within the groups used).  Rows, statistics and the worst
 * tracks named are those of the mass direction; a track whose mass the
 * remaining groups do not cover, or which they place on another route, is
 * not compared (n_tracks counts those compared).  The progress callback
 * counts dropped groups.  hrt_accuracy_store() of such a run writes the
 * across-metallicity field accuracy/across_z/ (tracks/FORMAT.md).
 * Returned (function value): HRT_OK, HRT_E_NULL.
 */
HRT_API int hrt_accuracy_set_across_z(hrt_accuracy *acc, int on, hrt_error *err);
/**
 * Callback after each dropped track: (user, tracks done, tracks in total).
 * Called from one thread at a time, not necessarily the caller's. May be NULL.
 */
HRT_API int hrt_accuracy_set_progress(hrt_accuracy *acc, void (*progress)(void *user, size_t done, size_t total),
                                      void *user);
/**
 * @brief Measure how well the grid interpolates between its own tracks.
 *
 * Given:   g, an open grid (any file: hrt_grid_open_with(); its own
 *          interpolation type does not matter).
 * Returned: acc holds one hrt_accuracy_row per interpolation type, route
 *          and phase (hrt_accuracy_n_rows, hrt_accuracy_row_at).
 * Returned (function value):
 *   HRT_OK; HRT_E_NULL; HRT_E_Z_RANGE (hrt_accuracy_set_z() named a
 *   metallicity the grid does not hold); HRT_E_INVALID (no route of any metallicity has
 *   three tracks, so no track is interior); HRT_E_IO (a rebuilt grid
 *   cannot be written in $TMPDIR or /tmp); HRT_E_NOMEM; any code of the
 *   builder or of hrt_grid_open_with() on a rebuilt group, with its message.
 * Notes:
 *   1. Each interior track of each route (both neighbours in the same route)
 *      of each metallicity is dropped in turn; the group is rebuilt without
 *      it by hrt_builder_add_eep_track() (other metallicities left out, route
 *      boundaries kept), written to a temporary file, opened with each type,
 *      and the dropped track is interpolated at its own mass and Z.  Errors
 *      are |interpolated - track| at each EEP, grouped by the phase the
 *      track gives that EEP.
 *   2. Quantiles are nearest-rank: the sorted value at
 *      floor(q (n - 1) + 0.5).  Of equal largest errors the worst track
 *      named is the one of lowest Z, then mass, then EEP, so that the
 *      result does not depend on the number of threads.
 *   3. A dropped track's neighbours are farther apart than the grid's
 *      spacing, so the errors bound from above those of a star between two
 *      tracks of the full grid (roughly 2^k times, k the order of the
 *      interpolation: about 4 for linear, up to 16 for cubic types).
 *   4. The rebuilt group holds the dropped track's route only: for the
 *      local types (steffen, linear, akima) the four tracks either side of
 *      it, which give the same interpolated values as the whole group (each
 *      value depends on at most three tracks either side; tests/
 *      test_accuracy.c compares with whole-group rebuilds); for cspline,
 *      which is global, the whole route.
 *   5. The run writes and opens grids (HDF5): as for hrt_grid_open(), open
 *      no grid in another thread while it runs.  Time: on the default grid
 *      see DEVELOPERS.md.
 */
HRT_API int hrt_accuracy_run(hrt_accuracy *acc, const hrt_grid *g, hrt_error *err);
/** Number of rows of the last run (0 before one). */
HRT_API size_t hrt_accuracy_n_rows(const hrt_accuracy *acc);
/**
 * @brief Row i of the last run: types in hrt_interp order, then routes,
 * then phases in the order of hrt_phase_code().
 * Returned (function value): HRT_OK, HRT_E_NULL, HRT_E_INVALID (i out of range).
 */
HRT_API int hrt_accuracy_row_at(const hrt_accuracy *acc, size_t i, hrt_accuracy_row *out);

/**
 * @brief Store the error field of the last run in the grid file it measured.
 *
 * Given:
 *   acc    a run of hrt_accuracy_run() on the grid opened from `path`
 *   path   that grid's file (close no grid first: open grids keep what
 *          they read); a symbolic link is followed to the file it names
 * Returned (function value): HRT_OK; HRT_E_NULL; HRT_E_INVALID (no run);
 *   HRT_E_NOMEM; HRT_E_IO (the file is not a regular file, such as a FIFO
 *   or a device; it cannot be copied or replaced; or HDF5 fails).  The file
 *   is never edited in place: a copy is written to a private temporary file
 *   beside it and renamed over it, so after a failure it is as it was and
 *   no temporary is left.
 * Notes:
 *   1. Written: the optional group accuracy/ of tracks/FORMAT.md (replacing
 *      one stored before): for every dropped track, every type measured and
 *      every block of at most 10 EEPs inside one keypoint segment, the
 *      largest |error| of log L, log Teff and log age there.
 *      hrt_state_interp_error() turns it into an estimate at any state.
 *   2. The grid's other contents are not touched; a grid opened later reads
 *      the field with the rest.  The field belongs to the grid it was
 *      measured on: store it only in that file.
 *   3. A run restricted by hrt_accuracy_set_z() or hrt_accuracy_set_interp()
 *      stores only what it measured; states outside it get no estimate.
 *   4. A run across metallicity (hrt_accuracy_set_across_z()) writes only
 *      the subgroup accuracy/across_z/, replacing one stored before, into a
 *      file that already holds the mass-direction field (else
 *      HRT_E_INVALID): store the mass direction first, since storing it
 *      replaces the whole group accuracy/, across_z/ included.
 */
HRT_API int hrt_accuracy_store(const hrt_accuracy *acc, const char *path, hrt_error *err);

#ifdef __cplusplus
}
#endif

#endif /* HRTRAIL_BUILD_H */
