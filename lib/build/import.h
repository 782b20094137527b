/*
 * The import of text tracks (tracks/FORMAT.md, "Importing text tracks") in
 * its parts:
 *   import.c        the import object, its settings and its report
 *   import_map.c    the column map: keys, entries, mapping files, file-name patterns
 *   import_read.c   reading one table into a track, with file:line:column diagnostics
 *   import_track.c  a track's route, keypoints, remnant and default phases
 *   import_run.c    the run: every file read, routes settled per metallicity,
 *                   tracks resampled by the grid builder, boundaries, the file
 */
#ifndef HRTRAIL_LIB_BUILD_IMPORT_H
#define HRTRAIL_LIB_BUILD_IMPORT_H

#include <stddef.h>

#include "hrtrail.h"
#include "util/schema.h"

/* The quantities a column map maps: what a table's columns are read as. */
enum {
    TRAIL_MAP_AGE = 0,
    TRAIL_MAP_L,
    TRAIL_MAP_TEFF,
    TRAIL_MAP_R,
    TRAIL_MAP_MASS,
    TRAIL_MAP_CENTRAL_X,
    TRAIL_MAP_CENTRAL_Y,
    TRAIL_MAP_HE_CORE,
    TRAIL_MAP_CO_CORE,
    TRAIL_MAP_PHASE,
    TRAIL_MAP_KEYPOINTS,
    TRAIL_MAP_INITIAL_MASS,
    TRAIL_MAP_Z,
    TRAIL_MAP_N
};

/* A key of the map (tracks/FORMAT.md's vocabulary). */
typedef struct trail_map_key {
    char key[24];
    int quantity;    /* TRAIL_MAP_* */
    int is_log;      /* the column holds log10 of the quantity ([Fe/H] for z) */
    int constant_ok; /* a number is accepted as a constant */
    int text;        /* the values are text (phase keys, keypoint names) */
    int by_default;  /* a column of this name is read without a map entry */
} trail_map_key;

/* Key number k of the map (NULL past the last) and the key shown in
 * messages for a quantity (its first key). */
const trail_map_key *trail_map_key_at(size_t k);
const char *trail_map_quantity_name(int quantity);

/* The map's entry for one quantity. */
typedef struct trail_map_entry {
    int set;
    int key;         /* index of its trail_map_key */
    char *column;    /* NULL for a constant */
    double factor;   /* quantity = factor * v (or factor * 10^v for log columns) */
    double constant; /* for initial_mass_msun, z */
} trail_map_entry;

/* A data row dropped in lenient mode: where, why (file:line:column: ...). */
typedef struct trail_dropped_row {
    long line, column;
    int code;
    char *message;
} trail_dropped_row;

/* Dropped rows a track's report lists (all are counted). */
#define TRAIL_MAX_DROPPED_LISTED 10000

/* Line of a sample in its file, and the column of its keypoint flag (0 if none). */
typedef struct trail_source_pos {
    long line, flag_column;
} trail_source_pos;

/* One track file: its report, and its data until the builder has it. */
typedef struct trail_import_track {
    char *path;
    double z_given; /* Z given with the file; NaN: from the map, pattern or a column */
    hrt_import_track_report report;
    trail_dropped_row *dropped; /* the first TRAIL_MAX_DROPPED_LISTED rows dropped (lenient mode) */
    size_t n_dropped, cap_dropped;
    /* data, freed once the track is in the builder */
    size_t n;
    double *age_yr, *log_l, *log_teff, *log_r, *mass, *central_x, *central_y, *he_core, *co_core;
    int *phase;
    char **flag; /* explicit keypoint name of each sample, NULL for none */
    trail_source_pos *pos;
    double *x;                   /* [cap][n_extra] the extra quantities' columns, row by row (NULL without) */
    size_t n_extra_cols;         /* the import's n_extra when the track was read */
    int has_column[TRAIL_MAP_N]; /* the table has the quantity's column */
    hrt_kp_result kp;            /* keypoints on the route */
    unsigned route_candidates;   /* bit r: route r fits as well as the chosen one */
    int route_definite;          /* one route fits best */
} trail_import_track;

/* Route boundaries the user set for one metallicity (z NaN: every
 * metallicity without its own). */
typedef struct trail_user_bounds {
    double z;
    size_t n;
    double mass_msun[TRAIL_MAX_ROUTES];
} trail_user_bounds;

struct hrt_import {
    trail_map_entry map[TRAIL_MAP_N];
    size_t n_extra;                          /* extra quantities read from columns (import_extra.c) */
    trail_extra_decl extra[TRAIL_MAX_EXTRA]; /* their names, units and meanings */
    char extra_column[TRAIL_MAX_EXTRA][TRAIL_EXTRA_TEXT_LEN]; /* the column each is read from */
    char *pattern;
    double z_ref;
    int lenient, force, ran;
    size_t n_user_bounds;
    trail_user_bounds user_bounds[TRAIL_MAX_Z + 1];
    size_t n_routes;
    route_layout routes[TRAIL_MAX_ROUTES]; /* names and keypoint names, owned */
    int *segment_samples[TRAIL_MAX_ROUTES];
    const char **keypoint_names[TRAIL_MAX_ROUTES];
    hrt_route_spec spec[TRAIL_MAX_ROUTES]; /* the layouts, pointing into the above */
    size_t n_tracks, cap;
    trail_import_track *t;
    void (*progress)(void *, size_t, size_t, const char *);
    void *progress_user;
    size_t n_z; /* metallicity groups, after a run */
    double z[TRAIL_MAX_Z];
    double boundary[TRAIL_MAX_Z][TRAIL_MAX_ROUTES];
};

/* Parse a whole string of len characters as a number (Fortran D exponents
 * accepted); 0 or -1. */
int trail_parse_double(const char *s, size_t len, double *v);
/* Whole file into memory (NUL-terminated); *len its size. */
int trail_read_file(const char *path, char **out, size_t *len, hrt_error *err);
/* Match a file name against the map's pattern: vals[0..2] receive {mass},
 * {z}, {feh} (left as they are if absent); 1 on a match. */
int trail_pattern_match(const char *pattern, const char *name, double vals[3]);

/* Read and convert the file of t.  Returns HRT_OK or the code recorded in
 * t->report. */
int trail_import_read(const hrt_import *imp, trail_import_track *t, hrt_error *err);
/* Free t's data (not its path or report). */
void trail_import_free_data(trail_import_track *t);

/* Record a problem of track t at line:column (line 0: none) in its report
 * and, if err holds none yet, in err; returns code. */
int trail_import_problem(trail_import_track *t, int code, long line, long column, hrt_error *err, const char *fmt,
                         ...) __attribute__((format(printf, 6, 7)));
/* Record a dropped row of track t (lenient mode): counted, listed with its
 * file:line:column message; 0, or -1 when out of memory. */
int trail_import_drop_row(trail_import_track *t, int code, long line, long column, const char *msg);
/* Append a note to t's report. */
void trail_import_note(trail_import_track *t, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
/* Mark t as not used, with why; fails the import (returns code) in strict
 * mode unless code is HRT_E_NO_TRACK. */
int trail_import_drop(const hrt_import *imp, trail_import_track *t, int code, hrt_error *err, const char *why);

/* Keypoints and route of every track read (step 2 of the run), then per
 * metallicity: routes of tracks that stop early from their neighbours in
 * mass, and routes in order of mass (step 3).  idx: the group's tracks in
 * order of mass, n of them. */
int trail_import_routes(hrt_import *imp, hrt_error *err);
void trail_import_settle_routes(hrt_import *imp, const size_t *idx, size_t n);
int trail_import_check_order(hrt_import *imp, const size_t *idx, size_t n, double z, hrt_error *err);
/* The route boundaries of group g (its tracks idx[0..n-1] in order of
 * mass, all in the builder) into imp->boundary[g]: the user's, checked
 * against the tracks, else placed by the rule of build/build.h; then,
 * unless forced, refused when a route has no track or the boundaries do
 * not increase. */
int trail_import_group_boundaries(hrt_import *imp, size_t g, const size_t *idx, size_t n, hrt_error *err);
/* Every user boundary set for a metallicity must name one of the grid's. */
int trail_import_check_user_z(const hrt_import *imp, hrt_error *err);
/* The report's keypoints, truncation, remnant and (without a phase column)
 * phases of a track with its route. */
void trail_import_finish_track(hrt_import *imp, trail_import_track *t);

/* import_extra.c: the map entries "extra.NAME=COLUMN" and "extra.NAME.units=UNIT" (key without
 * the "extra." prefix, the value); the builder's declarations of the import's extra quantities,
 * and one track's extra columns for it (xcols[k] = n values; *buf to free). */
int trail_import_extra_entry(hrt_import *imp, const char *key, const char *val, const char *where, hrt_error *err);

int trail_import_declare_extras(const hrt_import *imp, hrt_builder *b, hrt_error *err);
int trail_import_extra_columns(const hrt_import *imp, const trail_import_track *t, size_t n,
                               const double *xcols[TRAIL_MAX_EXTRA], double **buf);


#endif
