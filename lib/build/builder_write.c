/* Writing the grid a builder holds: checks across tracks, route boundaries
 * where none were set, and the HDF5 file of tracks/FORMAT.md, built in
 * memory and written atomically under its final name.  Every dataset is
 * described for other readers (h5py, xarray): long_name, units, and HDF5
 * dimension scales naming its dimensions (track, eep, ...); numeric data
 * are chunked, shuffled and deflated, with Fletcher-32 checksums. */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include <hdf5.h>
#include <hdf5_hl.h>

#include "build/build.h"
#include "build/builder.h"
#include "util/schema.h"
#include "util/util.h"

/* Routes with at most this many keypoints have their keypoint tables on the stack. */
#define KEYPOINTS_ON_STACK 1024
/* Entries of the phases/ and remnants/ code tables the writer can hold. */
#define MAX_CODE_TABLE 64
/* Memory the in-memory HDF5 file grows by at a time (HDF5's core driver). */
#define IMAGE_INCREMENT ((size_t)1 << 20)

/* ---- checks and boundaries ----------------------------------------------- */

static int cmp_track(const void *a, const void *b)
{
    double x = ((const trail_eep_track *)a)->initial_mass, y = ((const trail_eep_track *)b)->initial_mass;
    return (x > y) - (x < y);
}

static int cmp_group(const void *a, const void *b)
{
    double x = ((const trail_z_group *)a)->z, y = ((const trail_z_group *)b)->z;
    return (x > y) - (x < y);
}

/* Tracks of g sorted by mass: no mass twice, routes in order of mass. */
static int sort_tracks(const hrt_builder *b, trail_z_group *g, hrt_error *err)
{
    if (g->n == 0) /* only hrt_builder_set_route_boundaries() makes a group without tracks */
        return trail_set_error(err, HRT_E_INVALID, "Z = %g: route boundaries set but no tracks", g->z);
    qsort(g->t, g->n, sizeof *g->t, cmp_track);
    for (size_t i = 1; i < g->n; i++) {
        if (g->t[i].initial_mass == g->t[i - 1].initial_mass)
            return trail_set_error(err, HRT_E_INVALID, "Z = %g: two tracks of %g Msun", g->z, g->t[i].initial_mass);
        if (g->t[i].route < g->t[i - 1].route)
            return trail_set_error(err, HRT_E_INVALID, "Z = %g: track %g Msun (route '%s') lies above a track of "
                                   "a later route", g->z, g->t[i - 1].initial_mass,
                                   b->routes[g->t[i - 1].route].name);
    }
    return HRT_OK;
}

/* Route boundaries of g: those set must separate the routes' tracks; the
 * others are placed by the rule of build/build.h. */
static int boundaries(const hrt_builder *b, trail_z_group *g, hrt_error *err)
{
    for (size_t k = 0; k + 1 < b->n_routes; k++) {
        trail_boundary_scan scan = trail_boundary_start(k);
        for (size_t i = 0; i < g->n; i++)
            trail_boundary_see(&scan, g->t[i].route, g->t[i].initial_mass);
        if (!g->has_boundary) {
            g->boundary[k] = trail_boundary_place(&scan, g->boundary);
            continue;
        }
        double m = g->boundary[k];
        if ((scan.below > 0.0 && !(m > scan.below)) || (scan.above > 0.0 && !(m < scan.above)))
            return trail_set_error(err, HRT_E_INVALID, "Z = %g: route boundary %zu at %g Msun does not "
                                   "separate the tracks of its routes (%g, %g)", g->z, k, m, scan.below, scan.above);
    }
    return HRT_OK;
}

/* Check the builder's content and compute boundaries; sorts in place. */
static int prepare_write(hrt_builder *b, hrt_error *err)
{
    /* a group left without tracks by refused ones (and no boundaries set) is no part of the grid */
    size_t kept = 0;
    for (size_t gi = 0; gi < b->n_groups; gi++) {
        if (b->grp[gi].n == 0 && !b->grp[gi].has_boundary)
            free(b->grp[gi].t);
        else
            b->grp[kept++] = b->grp[gi];
    }
    b->n_groups = kept;
    if (b->n_groups == 0)
        return trail_set_error(err, HRT_E_INVALID, "no tracks to write");
    qsort(b->grp, b->n_groups, sizeof *b->grp, cmp_group);
    for (size_t gi = 0; gi < b->n_groups; gi++) {
        int rc = sort_tracks(b, &b->grp[gi], err);
        if (rc == HRT_OK)
            rc = boundaries(b, &b->grp[gi], err);
        if (rc != HRT_OK)
            return rc;
    }
    return HRT_OK;
}

/* ---- HDF5 objects ---------------------------------------------------------- */

/* Property lists and string type of one file, and the deflate level
 * (0: none); failed is set by any HDF5 call that fails, and the file is
 * then not written. */
typedef struct wctx {
    hid_t dcpl, gcpl, str_t;
    int deflate;
    int failed, nomem; /* nomem: what failed was our own allocation */
} wctx;

static void w_text_attr(wctx *w, hid_t loc, const char *name, const char *value)
{
    hid_t s = H5Screate(H5S_SCALAR);
    hid_t a = H5Acreate2(loc, name, w->str_t, s, H5P_DEFAULT, H5P_DEFAULT);
    if (a < 0 || H5Awrite(a, w->str_t, &value) < 0)
        w->failed = 1;
    if (a >= 0)
        H5Aclose(a);
    H5Sclose(s);
}

static void w_num_attr(wctx *w, hid_t loc, const char *name, hid_t type, const void *v)
{
    hid_t s = H5Screate(H5S_SCALAR);
    hid_t a = H5Acreate2(loc, name, type == H5T_NATIVE_INT ? H5T_STD_I32LE : H5T_IEEE_F64LE, s, H5P_DEFAULT,
                         H5P_DEFAULT);
    if (a < 0 || H5Awrite(a, type, v) < 0)
        w->failed = 1;
    if (a >= 0)
        H5Aclose(a);
    H5Sclose(s);
}

static void w_strings(wctx *w, hid_t loc, const char *name, size_t n, const char *const *v, const char *meaning)
{
    hsize_t d[1] = {n};
    hid_t s = H5Screate_simple(1, d, NULL);
    hid_t ds = H5Dcreate2(loc, name, w->str_t, s, H5P_DEFAULT, w->dcpl, H5P_DEFAULT);
    if (ds < 0 || H5Dwrite(ds, w->str_t, H5S_ALL, H5S_ALL, H5P_DEFAULT, v) < 0)
        w->failed = 1;
    if (ds >= 0) {
        w_text_attr(w, ds, "long_name", meaning);
        H5Dclose(ds);
    }
    H5Sclose(s);
}

/* Storage of a numeric dataset: chunks of whole rows of at most
 * TRAIL_MAX_CHUNK_BYTES (the reader's cap for compressed data), then
 * shuffle and deflate when compressing, and always a Fletcher-32 checksum,
 * which the reader requires and HDF5 verifies on every read (a flipped
 * bit is refused). */
static hid_t w_storage(wctx *w, int rank, const hsize_t *dims, size_t value_bytes)
{
    hsize_t chunk[2] = {dims[0], rank > 1 ? dims[1] : 1};
    hsize_t rows = TRAIL_MAX_CHUNK_BYTES / (chunk[1] * value_bytes);
    if (chunk[0] > rows)
        chunk[0] = rows > 0 ? rows : 1;
    if (chunk[0] == 0)
        chunk[0] = 1;
    hid_t dcpl = H5Pcopy(w->dcpl);
    if (dcpl < 0 || H5Pset_chunk(dcpl, rank, chunk) < 0 ||
        (w->deflate > 0 && (H5Pset_shuffle(dcpl) < 0 || H5Pset_deflate(dcpl, (unsigned)w->deflate) < 0)) ||
        H5Pset_fletcher32(dcpl) < 0)
        w->failed = 1;
    return dcpl;
}

static void w_data(wctx *w, hid_t loc, const char *name, int rank, const hsize_t *dims, int is_int,
                   const void *v, const char *units, const char *meaning)
{
    hid_t s = H5Screate_simple(rank, dims, NULL);
    hid_t dcpl = w_storage(w, rank, dims, is_int ? sizeof(int32_t) : sizeof(double));
    hid_t ds = H5Dcreate2(loc, name, is_int ? H5T_STD_I32LE : H5T_IEEE_F64LE, s, H5P_DEFAULT, dcpl, H5P_DEFAULT);
    if (dcpl >= 0)
        H5Pclose(dcpl);
    if (ds < 0 || H5Dwrite(ds, is_int ? H5T_NATIVE_INT : H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, v) < 0)
        w->failed = 1;
    if (ds >= 0) {
        if (units)
            w_text_attr(w, ds, "units", units);
        if (meaning)
            w_text_attr(w, ds, "long_name", meaning);
        H5Dclose(ds);
    }
    H5Sclose(s);
}

/* ---- dimension scales ------------------------------------------------------ */

/* Dimension scale `name` under loc: the indices 0..n-1 (n >= 1), a
 * dataset HDF5 marks as the scale of a dimension of that name (h5py's
 * dims, netCDF-4 and xarray read it as the dimension). */
static void w_scale(wctx *w, hid_t loc, const char *name, size_t n, const char *meaning)
{
    int *idx = malloc((n + 1) * sizeof *idx);
    if (!idx) {
        w->failed = w->nomem = 1;
        return;
    }
    for (size_t i = 0; i < n; i++)
        idx[i] = (int)i;
    hsize_t d[1] = {n};
    w_data(w, loc, name, 1, d, 1, idx, NULL, meaning);
    free(idx);
    hid_t ds = w->failed ? -1 : H5Dopen2(loc, name, H5P_DEFAULT);
    if (ds < 0 || H5DSset_scale(ds, name) < 0)
        w->failed = 1;
    if (ds >= 0)
        H5Dclose(ds);
}

/* Attach to dataset `name` under loc the scales (datasets under
 * scale_loc) of its dimensions, in order; a NULL scale leaves the rest. */
static void w_dims(wctx *w, hid_t loc, const char *name, hid_t scale_loc, const char *dim0, const char *dim1)
{
    const char *dim[2] = {dim0, dim1};
    hid_t ds = w->failed ? -1 : H5Dopen2(loc, name, H5P_DEFAULT);
    if (ds < 0) {
        w->failed = 1;
        return;
    }
    for (unsigned k = 0; k < 2 && dim[k]; k++) {
        hid_t sc = H5Dopen2(scale_loc, dim[k], H5P_DEFAULT);
        if (sc < 0 || H5DSattach_scale(ds, sc, k) < 0)
            w->failed = 1;
        if (sc >= 0)
            H5Dclose(sc);
    }
    H5Dclose(ds);
}

/* A dataset of the schema, with its units and meaning. */
static void w_named(wctx *w, hid_t loc, const trail_name *n, int rank, const hsize_t *dims, int is_int,
                    const void *v)
{
    w_data(w, loc, n->v2, rank, dims, is_int, v, n->units, n->meaning);
}

static hid_t w_group(wctx *w, hid_t loc, const char *name)
{
    hid_t g = H5Gcreate2(loc, name, H5P_DEFAULT, w->gcpl, H5P_DEFAULT);
    if (g < 0)
        w->failed = 1;
    return g;
}

/* phases/ or remnants/: code, key and name of every entry of the list, so
 * the file says what its codes mean (the reader checks them). */
static void w_code_table(wctx *w, hid_t f, const char *group, size_t n, int (*code_at)(size_t),
                         const char *(*key_of)(int), const char *(*name_of)(int))
{
    int code[MAX_CODE_TABLE];
    const char *key[MAX_CODE_TABLE], *name[MAX_CODE_TABLE];
    hsize_t d[1] = {n};
    hid_t g = H5Gcreate2(f, group, H5P_DEFAULT, w->gcpl, H5P_DEFAULT);
    if (g < 0 || n > MAX_CODE_TABLE) {
        w->failed = 1;
        if (g >= 0)
            H5Gclose(g);
        return;
    }
    for (size_t i = 0; i < n; i++) {
        code[i] = code_at(i);
        key[i] = key_of(code[i]);
        name[i] = name_of(code[i]);
    }
    w_data(w, g, "code", 1, d, 1, code, NULL, "hrtrail code stored in the datasets");
    w_strings(w, g, "key", n, key, "hrtrail key of each code");
    w_strings(w, g, "name", n, name, "name of each code");
    /* the codes are the dimension (and its coordinate) of the table */
    hid_t c = w->failed ? -1 : H5Dopen2(g, "code", H5P_DEFAULT);
    if (c < 0 || H5DSset_scale(c, "code") < 0)
        w->failed = 1;
    if (c >= 0)
        H5Dclose(c);
    w_dims(w, g, "key", g, "code", NULL);
    w_dims(w, g, "name", g, "code", NULL);
    H5Gclose(g);
}

/* ---- the file's parts ------------------------------------------------------ */

/* Root attributes (the library's own first, then the builder's) and the code tables. */
static void write_root(const hrt_builder *b, hid_t f, wctx *w)
{
    w_text_attr(w, f, "format", TRAIL_FORMAT_NAME);
    int version = HRT_FORMAT_VERSION;
    w_num_attr(w, f, "format_version", H5T_NATIVE_INT, &version);
    w_num_attr(w, f, "z_ref", H5T_NATIVE_DOUBLE, &b->z_ref);
    int has_created_by = 0;
    for (size_t a = 0; a < b->n_attrs; a++) {
        w_text_attr(w, f, b->attrs[a].name, b->attrs[a].value);
        has_created_by |= strcmp(b->attrs[a].name, "created_by") == 0;
    }
    if (!has_created_by)
        w_text_attr(w, f, "created_by", "hrtrail " HRT_VERSION_STRING);
    w_code_table(w, f, "phases", HRT_PHASE_N, hrt_phase_code, hrt_phase_key, hrt_phase_name);
    w_code_table(w, f, "remnants", HRT_REMNANT_N, hrt_remnant_code, hrt_remnant_key, hrt_remnant_name);
}

/* routes/<name>/: keypoint names, the EEP of each keypoint, EEPs per segment. */
static void write_route(const route_layout *L, hid_t sub, wctx *w)
{
    int kp_stack[KEYPOINTS_ON_STACK], seg_stack[KEYPOINTS_ON_STACK];
    int *kp_eep = L->n_kp <= KEYPOINTS_ON_STACK ? kp_stack : malloc(L->n_kp * sizeof(int));
    int *seg = L->n_kp <= KEYPOINTS_ON_STACK ? seg_stack : malloc(L->n_kp * sizeof(int));
    if (!kp_eep || !seg) {
        w->failed = 1;
    } else {
        for (size_t k = 0; k < L->n_kp; k++) {
            kp_eep[k] = (int)L->kp_eep[k];
            if (k + 1 < L->n_kp)
                seg[k] = (int)(L->kp_eep[k + 1] - L->kp_eep[k]);
        }
        hsize_t dims_kp[1] = {L->n_kp}, dims_seg[1] = {L->n_kp - 1};
        w_strings(w, sub, "keypoint_names", L->n_kp, (const char *const *)L->kp_names,
                  "keypoints of the route, in order");
        w_data(w, sub, "keypoint_eep", 1, dims_kp, 1, kp_eep, NULL, "EEP index of each keypoint");
        w_data(w, sub, "segment_samples", 1, dims_seg, 1, seg, NULL, "EEPs in each segment");
        w_scale(w, sub, "keypoint", L->n_kp, "index of a keypoint of the route");
        w_scale(w, sub, "segment", L->n_kp - 1, "index of a segment: from keypoint k to keypoint k+1");
        w_dims(w, sub, "keypoint_names", sub, "keypoint", NULL);
        w_dims(w, sub, "keypoint_eep", sub, "keypoint", NULL);
        w_dims(w, sub, "segment_samples", sub, "segment", NULL);
    }
    if (kp_eep != kp_stack)
        free(kp_eep);
    if (seg != seg_stack)
        free(seg);
}

/* routes/: the names in order, and each route's layout. */
static void write_routes(const hrt_builder *b, hid_t f, wctx *w)
{
    hid_t rg = w_group(w, f, "routes");
    const char *names[TRAIL_MAX_ROUTES];
    for (size_t r = 0; r < b->n_routes; r++)
        names[r] = b->routes[r].name;
    if (rg < 0)
        return;
    w_strings(w, rg, "names", b->n_routes, names, "route names in order of increasing initial mass");
    /* the route dimension lives at the root: routes/ holds a group per
     * route, of any name */
    w_scale(w, f, "route", b->n_routes, "route index: position in routes/names");
    w_dims(w, rg, "names", f, "route", NULL);
    for (size_t r = 0; r < b->n_routes && !w->failed; r++) {
        hid_t sub = w_group(w, rg, b->routes[r].name);
        if (sub < 0)
            break;
        write_route(&b->routes[r], sub, w);
        H5Gclose(sub);
    }
    H5Gclose(rg);
}

/* The per-track datasets of group g: one value per track. */
static void write_track_list(const hrt_builder *b, const trail_z_group *g, hid_t gg, wctx *w, double *values,
                             int *codes)
{
    const trail_schema *S = &trail_schema_names;
    size_t n = g->n;
    hsize_t dims_tracks[1] = {n}, dims_bound[1] = {b->n_routes - 1};
    for (size_t i = 0; i < n; i++)
        values[i] = g->t[i].initial_mass;
    w_named(w, gg, &S->initial_mass, 1, dims_tracks, 0, values);
    for (size_t i = 0; i < n; i++)
        codes[i] = g->t[i].route;
    w_named(w, gg, &S->route, 1, dims_tracks, 1, codes);
    for (size_t i = 0; i < n; i++)
        codes[i] = g->t[i].n_eep;
    w_named(w, gg, &S->n_eep, 1, dims_tracks, 1, codes);
    for (size_t i = 0; i < n; i++)
        codes[i] = g->t[i].remnant;
    w_named(w, gg, &S->remnant, 1, dims_tracks, 1, codes);
    for (size_t i = 0; i < n; i++)
        values[i] = g->t[i].remnant_mass;
    w_named(w, gg, &S->remnant_mass, 1, dims_tracks, 0, values);
    if (b->n_routes > 1)
        w_named(w, gg, &S->boundary, 1, dims_bound, 0, g->boundary);
}

/* The per-EEP tables of group g: [track][EEP], as wide as the longest
 * route, padded with NaN (phases: unknown) beyond each track's end. */
static void write_eep_tables(const hrt_builder *b, const trail_z_group *g, hid_t gg, wctx *w, double *values,
                             int *codes)
{
    const trail_schema *S = &trail_schema_names;
    size_t n = g->n, width = b->n_eep_max;
    hsize_t dims_table[2] = {n, width};
    for (int q = 0; q < TRAIL_NF; q++) {
        for (size_t i = 0; i < n; i++)
            for (size_t j = 0; j < width; j++)
                values[i * width + j] = j < (size_t)g->t[i].n_eep ? g->t[i].q[q][j] : NAN;
        w_named(w, gg, &S->eep[q], 2, dims_table, 0, values);
    }
    for (size_t i = 0; i < n; i++)
        for (size_t j = 0; j < width; j++)
            codes[i * width + j] = j < (size_t)g->t[i].n_eep ? g->t[i].phase[j] : HRT_PHASE_UNKNOWN;
    w_named(w, gg, &S->phase, 2, dims_table, 1, codes);
}

/* A text attribute on dataset `name` under loc. */
static void w_dataset_attr(wctx *w, hid_t loc, const char *name, const char *attr, const char *value)
{
    hid_t ds = w->failed ? -1 : H5Dopen2(loc, name, H5P_DEFAULT);
    if (ds < 0) {
        w->failed = 1;
        return;
    }
    w_text_attr(w, ds, attr, value);
    H5Dclose(ds);
}

/* The dimensions of group g's datasets (track, eep, route_boundary), and
 * the initial mass of each track as a coordinate of the track dimension
 * (CF's `coordinates` attribute, which xarray follows). */
static void write_group_dims(const hrt_builder *b, const trail_z_group *g, hid_t gg, wctx *w)
{
    const trail_schema *S = &trail_schema_names;
    const char *coord = S->initial_mass.v2;
    w_scale(w, gg, "track", g->n, "index of a track in its metallicity group, in order of initial mass");
    w_scale(w, gg, "eep", b->n_eep_max, "EEP index: the same evolutionary stage on every track of a route");
    w_dims(w, gg, coord, gg, "track", NULL);
    const trail_name *per_track[] = {&S->route, &S->n_eep, &S->remnant, &S->remnant_mass};
    for (size_t k = 0; k < sizeof per_track / sizeof *per_track; k++) {
        w_dims(w, gg, per_track[k]->v2, gg, "track", NULL);
        w_dataset_attr(w, gg, per_track[k]->v2, "coordinates", coord);
    }
    for (int q = 0; q <= TRAIL_NF; q++) {
        const char *name = q < TRAIL_NF ? S->eep[q].v2 : S->phase.v2;
        w_dims(w, gg, name, gg, "track", "eep");
        w_dataset_attr(w, gg, name, "coordinates", coord);
    }
    if (b->n_routes > 1) {
        w_scale(w, gg, "route_boundary", b->n_routes - 1,
                "index b of the route boundary between route b and route b+1");
        w_dims(w, gg, S->boundary.v2, gg, "route_boundary", NULL);
    }
}

/* A [track][EEP] table stored as IEEE binary32 (HDF5 converts the doubles). */
static void w_data_single(wctx *w, hid_t loc, const char *name, const hsize_t *dims, const double *v,
                          const char *units, const char *meaning)
{
    hid_t s = H5Screate_simple(2, dims, NULL);
    hid_t dcpl = w_storage(w, 2, dims, sizeof(float));
    hid_t ds = H5Dcreate2(loc, name, H5T_IEEE_F32LE, s, H5P_DEFAULT, dcpl, H5P_DEFAULT);
    if (dcpl >= 0)
        H5Pclose(dcpl);
    if (ds < 0 || H5Dwrite(ds, H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, v) < 0)
        w->failed = 1;
    if (ds >= 0) {
        w_text_attr(w, ds, "units", units);
        w_text_attr(w, ds, "long_name", meaning);
        H5Dclose(ds);
    }
    H5Sclose(s);
}

/* metallicity/<gi>/extra/<name>: the extra quantities' tables, [track][EEP]
 * as the standard ones, with their units and meanings. */
static void write_extra_tables(const hrt_builder *b, const trail_z_group *g, hid_t gg, wctx *w, double *values)
{
    if (b->n_extra == 0)
        return;
    hid_t gx = w_group(w, gg, TRAIL_EXTRA_GROUP);
    if (gx < 0)
        return;
    size_t n = g->n, width = b->n_eep_max;
    hsize_t dims_table[2] = {n, width};
    for (size_t k = 0; k < b->n_extra; k++) {
        for (size_t i = 0; i < n; i++) {
            size_t ne = (size_t)g->t[i].n_eep;
            for (size_t j = 0; j < width; j++)
                values[i * width + j] = j < ne ? g->t[i].x[k * ne + j] : NAN;
        }
        if (b->extra_single[k])
            w_data_single(w, gx, b->extra[k].name, dims_table, values, b->extra[k].units, b->extra[k].meaning);
        else
            w_data(w, gx, b->extra[k].name, 2, dims_table, 0, values, b->extra[k].units, b->extra[k].meaning);
        w_dims(w, gx, b->extra[k].name, gg, "track", "eep");
    }
    H5Gclose(gx);
}

/* metallicity/<gi>/: the group's Z, its tracks and their tables.  Only out
 * of memory is returned; HDF5 failures set w->failed. */
static int write_group(const hrt_builder *b, hid_t mg, size_t gi, wctx *w, hrt_error *err)
{
    const trail_z_group *g = &b->grp[gi];
    char name[32];
    snprintf(name, sizeof name, "%zu", gi);
    hid_t gg = w_group(w, mg, name);
    if (gg < 0)
        return HRT_OK;
    w_num_attr(w, gg, trail_schema_names.group_z.v2, H5T_NATIVE_DOUBLE, &g->z);
    size_t cells = g->n * b->n_eep_max;
    double *values = malloc(cells * sizeof(double));
    int *codes = malloc(cells * sizeof(int));
    if (!values || !codes) {
        free(values);
        free(codes);
        H5Gclose(gg);
        return trail_set_error(err, HRT_E_NOMEM, "out of memory writing Z = %g", g->z);
    }
    write_track_list(b, g, gg, w, values, codes);
    write_eep_tables(b, g, gg, w, values, codes);
    write_group_dims(b, g, gg, w);
    write_extra_tables(b, g, gg, w, values);
    free(values);
    free(codes);
    H5Gclose(gg);
    return HRT_OK;
}

static int write_contents(const hrt_builder *b, hid_t f, wctx *w, hrt_error *err)
{
    write_root(b, f, w);
    write_routes(b, f, w);
    hid_t mg = w_group(w, f, "metallicity");
    if (mg < 0)
        return trail_set_error(err, HRT_E_IO, "cannot create group 'metallicity'");
    int rc = HRT_OK;
    for (size_t gi = 0; gi < b->n_groups && !w->failed && rc == HRT_OK; gi++)
        rc = write_group(b, mg, gi, w, err);
    H5Gclose(mg);
    if (rc != HRT_OK)
        return rc;
    if (w->nomem)
        return trail_set_error(err, HRT_E_NOMEM, "out of memory writing the grid's dimension scales");
    return w->failed ? trail_set_error(err, HRT_E_IO, "HDF5 refused to write part of the grid") : HRT_OK;
}

/* ---- the file -------------------------------------------------------------- */

/* The whole file as bytes in *img (malloc'ed, *img_size bytes).  The file
 * is built in memory (HDF5's core driver without a backing store) and
 * written by our own write() calls: a full disk then fails there, never
 * inside HDF5, which after a failed H5Fclose keeps the file open (its
 * descriptor, and the disk space of the unlinked temporary) and crashes in
 * its exit handler.  name names the file in messages (the image has no file
 * on disk: the core driver without a backing store). */
static int make_image(const hrt_builder *b, const char *name, void **img, ssize_t *img_size, hrt_error *err)
{
    int rc = HRT_OK;
    wctx w = {-1, -1, -1, b->deflate, 0, 0};
    H5E_BEGIN_TRY
    {
        w.dcpl = H5Pcreate(H5P_DATASET_CREATE);
        w.gcpl = H5Pcreate(H5P_GROUP_CREATE);
        hid_t fcpl = H5Pcreate(H5P_FILE_CREATE);
        hid_t fapl = H5Pcreate(H5P_FILE_ACCESS);
        H5Pset_fapl_core(fapl, IMAGE_INCREMENT, 0);
        w.str_t = H5Tcopy(H5T_C_S1);
        H5Tset_size(w.str_t, H5T_VARIABLE);
        H5Tset_cset(w.str_t, H5T_CSET_UTF8);
        /* No modification times in object headers: same bytes for the same grid. */
        H5Pset_obj_track_times(w.dcpl, 0);
        H5Pset_obj_track_times(w.gcpl, 0);
        /* HDF5 refuses a second open file of one name; the builder's address
         * keeps two builders writing the same path apart */
        char iname[64];
        snprintf(iname, sizeof iname, "hrtrail-image-%p", (const void *)b);
        hid_t f = H5Fcreate(iname, H5F_ACC_TRUNC, fcpl, fapl);
        if (f < 0) {
            rc = trail_set_error(err, HRT_E_IO, "cannot create HDF5 file '%s'", name);
        } else {
            rc = write_contents(b, f, &w, err);
            if (rc == HRT_OK && (H5Fflush(f, H5F_SCOPE_GLOBAL) < 0 || (*img_size = H5Fget_file_image(f, NULL, 0)) <= 0))
                rc = trail_set_error(err, HRT_E_IO, "HDF5 cannot complete the image of '%s'", name);
            if (rc == HRT_OK && !(*img = malloc((size_t)*img_size)))
                rc = trail_set_error(err, HRT_E_NOMEM, "out of memory for the %zd bytes of '%s'", *img_size, name);
            if (rc == HRT_OK && H5Fget_file_image(f, *img, (size_t)*img_size) != *img_size)
                rc = trail_set_error(err, HRT_E_IO, "HDF5 cannot copy the image of '%s'", name);
            if (H5Fclose(f) < 0 && rc == HRT_OK)
                rc = trail_set_error(err, HRT_E_IO, "HDF5 cannot close the image of '%s'", name);
        }
        H5Pclose(fapl);
        H5Pclose(fcpl);
        H5Pclose(w.dcpl);
        H5Pclose(w.gcpl);
        H5Tclose(w.str_t);
    }
    H5E_END_TRY;
    return rc;
}

int hrt_builder_set_compression(hrt_builder *b, int level, hrt_error *err)
{
    if (!b)
        return trail_set_error(err, HRT_E_NULL, "hrt_builder_set_compression: builder is NULL");
    if (level < 0 || level > 9)
        return trail_set_error(err, HRT_E_INVALID, "hrt_builder_set_compression: level %d is not in 0..9", level);
    b->deflate = level;
    return trail_set_error(err, HRT_OK, NULL);
}

/* Write through a temporary file beside path renamed over it (util's
 * trail_write_replace_as, mode 0644); durable: fsync first (a grid kept), else
 * not (a scratch grid read back at once and deleted).  The image is built in
 * memory first, so a failure to build it leaves no file behind. */
static int write_file(hrt_builder *b, const char *path, int durable, hrt_error *err)
{
    if (!b || !path)
        return trail_set_error(err, HRT_E_NULL, "hrt_builder_write: %s is NULL", !b ? "builder" : "path");
    int rc = prepare_write(b, err);
    if (rc != HRT_OK)
        return rc;
    void *img = NULL;
    ssize_t img_size = -1;
    rc = make_image(b, path, &img, &img_size, err);
    if (rc == HRT_OK)
        rc = trail_write_replace_as(path, "", img, (size_t)img_size, 0644, durable, err);
    free(img);
    return rc == HRT_OK ? trail_set_error(err, HRT_OK, NULL) : rc;
}

int hrt_builder_write(hrt_builder *b, const char *path, hrt_error *err) { return write_file(b, path, 1, err); }

int trail_builder_write_scratch(hrt_builder *b, const char *path, hrt_error *err)
{
    return write_file(b, path, 0, err);
}
