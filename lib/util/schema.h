/*
 * The grid file's schema (tracks/FORMAT.md) as both the reader
 * (lib/core/grid_read.c) and the writer (lib/build/builder_write.c) see it: the
 * format's name, the names, units and meanings of its datasets in every
 * version the library knows, the limits on sizes and the plausibility
 * bounds, so that anything the library writes it can read back.  Also the
 * raw form of a file as the reader returns it (trail_file): what the file
 * holds, validated, before the core prepares it for queries; the upgrade of
 * old files (lib/build/upgrade.c) writes it out again.
 */
#ifndef HRTRAIL_LIB_SCHEMA_H
#define HRTRAIL_LIB_SCHEMA_H

#include <stddef.h>
#include <stdint.h>

#include "hrtrail.h"

/* Value of the root attribute 'format'. */
#define TRAIL_FORMAT_NAME "hrtrail-track-grid"
/* Oldest format version the reader can read at all (for hrt_grid_upgrade);
 * hrt_grid_open() reads HRT_FORMAT_VERSION only. */
#define TRAIL_FORMAT_OLDEST 1

/* Largest numbers of routes, metallicity groups and EEPs per route a grid
 * may have (fixed-size scratch arrays on the stack; search tables hold
 * 16-bit EEP indices), and of tracks per metallicity. */
#define TRAIL_MAX_ROUTES 8
#define TRAIL_MAX_Z 64
#define TRAIL_MAX_EEP 65535
#define TRAIL_MAX_TRACKS 100000
/* Caps on the size of a grid (values per quantity: tracks x EEPs), so that a
 * small hostile file cannot make the reader allocate gigabytes: 2^24 in one
 * metallicity group (134 MB per quantity), 2^26 in the whole grid.  The
 * default grid has about 7 x 65,000. */
#define TRAIL_MAX_GROUP_VALUES 16777216.0
#define TRAIL_MAX_GRID_VALUES 67108864.0
/* Most entries of a string dataset (keypoint names, route names, codes). */
#define TRAIL_MAX_STRINGS 100000
/* Compressed numeric data: the writer's chunks hold at most this many
 * bytes (whole rows), and the reader refuses a deflated dataset with larger
 * chunks, so that inflating one chunk is bounded (h5py's automatic chunks
 * are at most 1 MiB too).  Deflate level the builder writes by default
 * (h5py's default gzip level). */
#define TRAIL_MAX_CHUNK_BYTES 1048576
#define TRAIL_DEFLATE_DEFAULT 4

/* Plausibility bounds the reader enforces and the builder too: log10
 * values within +-TRAIL_MAX_LOG_ABS, current, core and remnant masses at
 * most TRAIL_MAX_MASS_FACTOR times the initial mass (far outside any star;
 * larger values would overflow the splines). */
#define TRAIL_MAX_LOG_ABS 100.0
#define TRAIL_MAX_MASS_FACTOR 2.0
/* Cores are nested: helium core <= current mass, CO core <= helium core,
 * at every EEP (a relative allowance for the rounding of text tables). */
#define TRAIL_CORE_REL_TOL 1e-6

/* Per-EEP quantities of a metallicity group, in the order of the tables. */
enum {
    TRAIL_F_LOG_AGE = 0,
    TRAIL_F_LOG_L,
    TRAIL_F_LOG_TEFF,
    TRAIL_F_LOG_R,
    TRAIL_F_MASS,
    TRAIL_F_HE_CORE,
    TRAIL_F_CO_CORE,
    TRAIL_NF
};
/* Quantities from TRAIL_F_MASS on are masses (Msun), the others log10 values. */
#define TRAIL_F_IS_MASS(q) ((q) >= TRAIL_F_MASS)

/* A dataset or attribute of the schema: its name in each version (NULL: not
 * in that version), its units attribute (an astropy unit string; NULL: no
 * units) and its meaning. */
typedef struct trail_name {
    const char *v1, *v2;
    const char *units;
    const char *meaning;
} trail_name;

/* The names of the current schema and of version 1. */
typedef struct trail_schema {
    trail_name group_z;        /* attribute of a metallicity group: metal mass fraction */
    trail_name initial_mass;   /* [n_mass] */
    trail_name route;          /* [n_mass] */
    trail_name n_eep;          /* [n_mass] */
    trail_name remnant;        /* [n_mass] */
    trail_name remnant_mass;   /* [n_mass] */
    trail_name boundary;       /* [n_routes - 1] */
    trail_name eep[TRAIL_NF];  /* [n_mass][n_eep_max] */
    trail_name phase;          /* [n_mass][n_eep_max] */
} trail_schema;

extern const trail_schema trail_schema_names;

/* Name of n in format version v (1 or 2). */
static inline const char *trail_name_in(const trail_name *n, int v) { return v >= 2 ? n->v2 : n->v1; }

/* The keypoints hrtrail knows, in the order they occur in a star's life
 * (tracks/FORMAT.md, "Keypoint criteria"); a route's layout lists the ones
 * it has in this order.  Names not in the list are a layout's own (flagged
 * on import) and may stand anywhere. */
#define TRAIL_N_KNOWN_KEYPOINTS 12
extern const char trail_known_keypoints[TRAIL_N_KNOWN_KEYPOINTS][16];
/* Index of a known keypoint name in trail_known_keypoints, -1 if not known. */
int trail_keypoint_index(const char *name);

/* The EEP layout of one route as a file stores it (routes/<name>/). */
typedef struct route_layout {
    char *name;
    size_t n_kp;
    char **kp_names;
    long *kp_eep;  /* [n_kp], kp_eep[0] = 0, kp_eep[n_kp-1] = n_eep-1 */
    size_t n_eep;
} route_layout;

/* A root text attribute (name, value). */
typedef struct attr_pair {
    char *name, *value;
} attr_pair;

/* Free the contents of n route layouts and of n attributes, and the arrays
 * (NULL allowed): one place for what readers, the prepared grid and the
 * builder all hold. */
void trail_route_clear(route_layout *L);
void trail_routes_free(route_layout *routes, size_t n);
void trail_attrs_free(attr_pair *attrs, size_t n);

/* Extra per-EEP quantities a grid may carry beyond the standard ones
 * (tracks/FORMAT.md, "Extra quantities"): at most TRAIL_MAX_EXTRA, names of
 * lower-case letters, digits and '_' (starting with a letter) of at most
 * TRAIL_EXTRA_NAME_LEN - 1 characters, units and meanings printable text. */
#define TRAIL_MAX_EXTRA 32
#define TRAIL_EXTRA_NAME_LEN 64
#define TRAIL_EXTRA_TEXT_LEN 256
/* Name of the subgroup of a metallicity group holding them. */
#define TRAIL_EXTRA_GROUP "extra"
typedef struct trail_extra_decl {
    char name[TRAIL_EXTRA_NAME_LEN];
    char units[TRAIL_EXTRA_TEXT_LEN];   /* astropy unit string, "" when dimensionless */
    char meaning[TRAIL_EXTRA_TEXT_LEN];
} trail_extra_decl;
/* 1 if name is a valid extra name (and not a standard quantity's). */
int trail_extra_name_ok(const char *name);
/* 1 if s is printable ASCII text shorter than TRAIL_EXTRA_TEXT_LEN. */
int trail_extra_text_ok(const char *s);

/* One metallicity group as the file holds it (validated). */
typedef struct trail_file_group {
    double z;
    size_t n_mass;
    double *initial_mass;  /* [n_mass] Msun, increasing */
    int *route;            /* [n_mass] */
    int *n_eep;            /* [n_mass] valid EEPs */
    int *remnant;          /* [n_mass] hrt_remnant codes */
    double *remnant_mass;  /* [n_mass] Msun (NaN for none) */
    double *boundary;      /* [n_routes - 1] Msun */
    double *q[TRAIL_NF];   /* [n_mass][n_eep_max], NaN beyond n_eep */
    int8_t *phase;         /* [n_mass][n_eep_max] hrt_phase codes, 0 beyond n_eep */
    double *x;             /* [n_extra][n_mass][n_eep_max] extra quantities (NULL without), NaN beyond n_eep */
} trail_file_group;

/* A whole grid file as read (validated), in the current schema's terms
 * whatever its version. */
typedef struct trail_file {
    int version;
    double z_ref;
    size_t n_routes;
    route_layout *routes;
    size_t n_eep_max;
    size_t n_attrs;
    attr_pair *attrs;      /* root text attributes */
    size_t n_z;
    trail_file_group *grp;
    size_t n_extra;        /* extra per-EEP quantities (metallicity/N/extra/, tracks/FORMAT.md) */
    trail_extra_decl *extra; /* [n_extra] their names, units and meanings */
    double values;         /* tracks x EEPs over the groups read so far */
    size_t bytes;          /* memory held */
} trail_file;

/* Read and validate a grid file of format version oldest..HRT_FORMAT_VERSION
 * (lib/core/grid_read.c).  A version below `oldest` is HRT_E_VERSION with a
 * message on how to convert it.  On failure f holds nothing. */
int trail_file_read(const char *path, int oldest, trail_file *f, hrt_error *err);
void trail_file_free(trail_file *f);

#endif
