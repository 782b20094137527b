/* Reading and validating a grid file (tracks/FORMAT.md): the file as it is
 * (trail_file, util/schema.h), before the core prepares it (grid_prep.c).
 *
 * Every HDF5 call happens inside H5E_BEGIN_TRY / H5E_END_TRY (in
 * trail_file_read), so HDF5 prints nothing and the caller's HDF5 error
 * settings are restored afterwards.  The first problem found ends the read
 * with a message naming the group, dataset and index. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <errno.h>
#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <hdf5.h>

#include "core/h5read.h"
#include "core/core.h"

typedef struct attr_collect {
    trail_file *f;
    int rc;
} attr_collect;

static herr_t collect_attr(hid_t loc, const char *name, const H5A_info_t *info, void *data)
{
    (void)info;
    attr_collect *ac = data;
    hid_t a = H5Aopen(loc, name, H5P_DEFAULT);
    if (a < 0)
        return 0;
    hid_t t = H5Aget_type(a), s = H5Aget_space(a);
    int rank;
    int text = t >= 0 && H5Tget_class(t) == H5T_STRING && s >= 0 && trail_h5_points(s, &rank) == 1;
    if (t >= 0)
        H5Tclose(t);
    if (s >= 0)
        H5Sclose(s);
    H5Aclose(a);
    if (!text)
        return 0;
    char *value = NULL;
    int rc = trail_h5_attr_text(loc, name, "root", &value, NULL);
    if (rc == HRT_E_NOMEM) { /* not "unreadable": the attribute would silently vanish */
        ac->rc = rc;
        return -1;
    }
    if (rc != HRT_OK)
        return 0;
    attr_pair *p = realloc(ac->f->attrs, (ac->f->n_attrs + 1) * sizeof *p);
    char *nm = trail_strdup(name);
    if (!p || !nm) {
        if (p)
            ac->f->attrs = p;
        free(nm);
        free(value);
        ac->rc = HRT_E_NOMEM;
        return -1;
    }
    ac->f->attrs = p;
    p[ac->f->n_attrs].name = nm;
    p[ac->f->n_attrs].value = value;
    ac->f->n_attrs++;
    return 0;
}

/* Keypoint names of a route: each once, and those hrtrail knows in the
 * order of a star's life (a layout with tams before zams, say, would give
 * every keypoint age a wrong meaning). */
static int check_keypoint_names(const char *where, const route_layout *L, hrt_error *err)
{
    int last = -1;
    size_t last_k = 0;
    for (size_t k = 0; k < L->n_kp; k++) {
        for (size_t q = 0; q < k; q++)
            if (strcmp(L->kp_names[q], L->kp_names[k]) == 0)
                return trail_set_error(err, HRT_E_FORMAT, "%s/keypoint_names[%zu]: '%.40s' appears twice", where, k,
                                       L->kp_names[k]);
        int i = trail_keypoint_index(L->kp_names[k]);
        if (i < 0)
            continue;
        if (i < last)
            return trail_set_error(err, HRT_E_FORMAT,
                                   "%s/keypoint_names[%zu]: '%s' after '%s' is out of the order of a star's life", where,
                                   k, L->kp_names[k], L->kp_names[last_k]);
        last = i;
        last_k = k;
    }
    return HRT_OK;
}

/* Keypoint EEPs and segment sizes of one route (routes/<name>/). */
static int read_route_layout(hid_t sub, const char *where, route_layout *L, hrt_error *err)
{
    int rc = trail_h5_strings(sub, where, "keypoint_names", &L->n_kp, &L->kp_names, err);
    if (rc == HRT_OK && L->n_kp < 2)
        rc = trail_set_error(err, HRT_E_FORMAT, "%s/keypoint_names: at least 2 keypoints needed", where);
    if (rc == HRT_OK)
        rc = check_keypoint_names(where, L, err);
    int *kp = NULL, *seg = NULL;
    if (rc == HRT_OK) {
        kp = malloc(L->n_kp * sizeof *kp);
        seg = malloc(L->n_kp * sizeof *seg);
        L->kp_eep = malloc(L->n_kp * sizeof *L->kp_eep);
        if (!kp || !seg || !L->kp_eep)
            rc = trail_set_error(err, HRT_E_NOMEM, "%s: out of memory", where);
    }
    hsize_t d1[1] = {L->n_kp}, d2[1] = {L->n_kp - 1};
    if (rc == HRT_OK)
        rc = trail_h5_numeric(sub, where, "keypoint_eep", 1, d1, 1, kp, err);
    if (rc == HRT_OK)
        rc = trail_h5_numeric(sub, where, "segment_samples", 1, d2, 1, seg, err);
    if (rc == HRT_OK && kp[0] != 0)
        rc = trail_set_error(err, HRT_E_FORMAT, "%s/keypoint_eep[0]: must be 0, found %d", where, kp[0]);
    for (size_t k = 0; k + 1 < L->n_kp && rc == HRT_OK; k++) {
        if (seg[k] < 1 || seg[k] > TRAIL_MAX_EEP)
            rc = trail_set_error(err, HRT_E_FORMAT, "%s/segment_samples[%zu]: %d is not in 1..%d", where, k, seg[k],
                                 TRAIL_MAX_EEP);
        else if ((long)kp[k + 1] - kp[k] != seg[k])
            rc = trail_set_error(err, HRT_E_FORMAT,
                                 "%s/keypoint_eep[%zu]: %d does not follow keypoint_eep[%zu] = %d by "
                                 "segment_samples[%zu] = %d",
                                 where, k + 1, kp[k + 1], k, kp[k], k, seg[k]);
    }
    if (rc == HRT_OK) {
        for (size_t k = 0; k < L->n_kp; k++)
            L->kp_eep[k] = kp[k];
        L->n_eep = (size_t)kp[L->n_kp - 1] + 1;
        if (L->n_eep > TRAIL_MAX_EEP)
            rc = trail_set_error(err, HRT_E_FORMAT, "%s: %zu EEPs, at most %d supported", where, L->n_eep,
                                 TRAIL_MAX_EEP);
    }
    free(kp);
    free(seg);
    return rc;
}

static int read_routes(hid_t fh, trail_file *f, hrt_error *err)
{
    hid_t rg = trail_h5_group(fh, "routes");
    if (rg < 0)
        return trail_set_error(err, HRT_E_FORMAT, "group 'routes' is missing");
    char **names = NULL;
    size_t n = 0;
    int rc = trail_h5_strings(rg, "routes", "names", &n, &names, err);
    if (rc == HRT_OK && n > TRAIL_MAX_ROUTES)
        rc = trail_set_error(err, HRT_E_FORMAT, "routes/names: %zu routes, at most %d supported", n,
                             TRAIL_MAX_ROUTES);
    if (rc == HRT_OK) {
        f->routes = calloc(n, sizeof *f->routes);
        if (!f->routes)
            rc = trail_set_error(err, HRT_E_NOMEM, "routes: out of memory");
        else
            f->n_routes = n;
    }
    for (size_t r = 0; r < n && rc == HRT_OK; r++) {
        route_layout *L = &f->routes[r];
        L->name = names[r];
        names[r] = NULL;
        for (size_t q = 0; q < r; q++)
            if (strcmp(f->routes[q].name, L->name) == 0)
                rc = trail_set_error(err, HRT_E_FORMAT, "routes/names[%zu]: route '%s' appears twice", r, L->name);
        if (rc != HRT_OK)
            break;
        char where[96];
        snprintf(where, sizeof where, "routes/%s", L->name);
        hid_t sub = trail_h5_group(rg, L->name);
        if (sub < 0) {
            rc = trail_set_error(err, HRT_E_FORMAT, "group '%s' is missing", where);
            break;
        }
        rc = read_route_layout(sub, where, L, err);
        if (rc == HRT_OK && L->n_eep > f->n_eep_max)
            f->n_eep_max = L->n_eep;
        H5Gclose(sub);
    }
    trail_h5_free_strings(names, n);
    H5Gclose(rg);
    return rc;
}

/* The code tables of a file: for each code a file may store (index c of
 * map), the library's code, or `bad` where the file has none. */
#define CODE_MAP_SIZE 256 /* codes a file may store: 0..255 */
typedef struct code_map {
    int phase[CODE_MAP_SIZE];
    int remnant[CODE_MAP_SIZE];
} code_map;

/* Version 2: phases/{code,key} and remnants/{code,key} list the codes the
 * file uses; each must be the library's own code of that key. */
static int read_code_table(hid_t fh, const char *group, const char *(*key_of)(int), int *map, hrt_error *err)
{
    hid_t g = trail_h5_group(fh, group);
    if (g < 0)
        return trail_set_error(err, HRT_E_FORMAT, "group '%s' is missing", group);
    char **keys = NULL;
    size_t n = 0;
    int rc = trail_h5_strings(g, group, "key", &n, &keys, err);
    int *codes = rc == HRT_OK ? malloc(n * sizeof *codes) : NULL;
    if (rc == HRT_OK && !codes)
        rc = trail_set_error(err, HRT_E_NOMEM, "%s: out of memory", group);
    hsize_t d[1] = {n};
    if (rc == HRT_OK)
        rc = trail_h5_numeric(g, group, "code", 1, d, 1, codes, err);
    for (size_t i = 0; i < n && rc == HRT_OK; i++) {
        if (codes[i] < 0 || codes[i] >= CODE_MAP_SIZE || strcmp(key_of(codes[i]), keys[i]) != 0)
            rc = trail_set_error(err, HRT_E_FORMAT,
                                 "%s/code[%zu]: key '%.32s' has code %d in the file, but '%s' in this library", group,
                                 i, keys[i], codes[i], codes[i] >= 0 && codes[i] < CODE_MAP_SIZE ? key_of(codes[i]) : "no key");
        else
            map[codes[i]] = codes[i];
    }
    free(codes);
    trail_h5_free_strings(keys, n);
    H5Gclose(g);
    return rc;
}

/* Version 1: phase_keys[c] / remnant_keys[c] name the phase of code c. */
static int read_key_table_v1(hid_t fh, const char *name, int (*lookup)(const char *), int bad, int *map,
                             hrt_error *err)
{
    char **keys = NULL;
    size_t n = 0;
    int rc = trail_h5_strings(fh, "", name, &n, &keys, err);
    if (rc == HRT_OK && n > CODE_MAP_SIZE)
        rc = trail_set_error(err, HRT_E_FORMAT, "/%s: %zu keys, at most %d", name, n, CODE_MAP_SIZE);
    for (size_t i = 0; i < n && rc == HRT_OK; i++) {
        map[i] = lookup(keys[i]);
        if (map[i] == bad)
            rc = trail_set_error(err, HRT_E_FORMAT, "/%s[%zu]: unknown key '%s'", name, i, keys[i]);
    }
    trail_h5_free_strings(keys, n);
    return rc;
}

static int phase_lookup(const char *k) { return hrt_phase_from_key(k); }
static int remnant_lookup(const char *k) { return hrt_remnant_from_key(k); }

static int read_codes(hid_t fh, int version, code_map *cm, hrt_error *err)
{
    for (int c = 0; c < CODE_MAP_SIZE; c++)
        cm->phase[c] = cm->remnant[c] = -1;
    if (version >= 2) {
        int rc = read_code_table(fh, "phases", hrt_phase_key, cm->phase, err);
        if (rc == HRT_OK)
            rc = read_code_table(fh, "remnants", hrt_remnant_key, cm->remnant, err);
        return rc;
    }
    int rc = read_key_table_v1(fh, "phase_keys", phase_lookup, HRT_PHASE_UNKNOWN, cm->phase, err);
    if (rc == HRT_OK)
        rc = read_key_table_v1(fh, "remnant_keys", remnant_lookup, -1, cm->remnant, err);
    return rc;
}

/* The units attribute of a dataset must be the schema's (version 2): a
 * file in other units would be read as if it were in ours. */
static int check_units(hid_t loc, const char *where, const trail_name *n, hrt_error *err)
{
    if (!n->units)
        return HRT_OK;
    hid_t d = trail_h5_link(loc, n->v2) == 1 ? H5Dopen2(loc, n->v2, H5P_DEFAULT) : -1;
    if (d < 0)
        return trail_set_error(err, HRT_E_FORMAT, "%s/%s: not a dataset", where, n->v2);
    char *u = NULL;
    char what[128];
    snprintf(what, sizeof what, "%s/%s", where, n->v2);
    int rc = trail_h5_attr_text(d, "units", what, &u, err);
    if (rc == HRT_OK && strcmp(u, n->units) != 0)
        rc = trail_set_error(err, HRT_E_FORMAT, "%s: units '%.40s', expected '%s' (%s)", what, u, n->units,
                             n->meaning);
    free(u);
    H5Dclose(d);
    return rc;
}

/* Read a [n] or [n][J] dataset of the schema (name in the file's version). */
static int read_named(hid_t gr, const char *where, int version, const trail_name *n, int rank, hsize_t *dims,
                      int as_int, void *buf, hrt_error *err)
{
    int rc = trail_h5_numeric(gr, where, trail_name_in(n, version), rank, dims, as_int, buf, err);
    if (rc == HRT_OK && version >= 2)
        rc = check_units(gr, where, n, err);
    return rc;
}

static int alloc_group(trail_file_group *gp, size_t nm, size_t J, size_t R, size_t *bytes)
{
    gp->n_mass = nm;
    gp->initial_mass = malloc(nm * sizeof(double));
    gp->route = malloc(nm * sizeof(int));
    gp->n_eep = malloc(nm * sizeof(int));
    gp->remnant = malloc(nm * sizeof(int));
    gp->remnant_mass = malloc(nm * sizeof(double));
    gp->boundary = malloc((R > 1 ? R - 1 : 1) * sizeof(double));
    gp->phase = calloc(nm * J, 1);
    int ok = gp->initial_mass && gp->route && gp->n_eep && gp->remnant && gp->remnant_mass && gp->boundary &&
             gp->phase;
    for (int q = 0; q < TRAIL_NF; q++) {
        gp->q[q] = malloc(nm * J * sizeof(double));
        ok = ok && gp->q[q];
    }
    *bytes += nm * (3 * sizeof(int) + 2 * sizeof(double) + J * (1 + TRAIL_NF * sizeof(double)));
    return ok ? HRT_OK : HRT_E_NOMEM;
}

/* Identity of each track: masses, routes, EEP counts, remnants. */
static int read_tracks(hid_t gr, const char *where, const trail_file *f, const code_map *cm, trail_file_group *gp,
                       int *ibuf, hrt_error *err)
{
    const trail_schema *S = &trail_schema_names;
    size_t nm = gp->n_mass, R = f->n_routes;
    int v = f->version;
    hsize_t d1[1] = {nm};
    int rc = read_named(gr, where, v, &S->initial_mass, 1, d1, 0, gp->initial_mass, err);
    const char *im = trail_name_in(&S->initial_mass, v);
    for (size_t i = 0; i < nm && rc == HRT_OK; i++) {
        if (!(isfinite(gp->initial_mass[i]) && gp->initial_mass[i] > 0.0))
            rc = trail_set_error(err, HRT_E_FORMAT, "%s/%s[%zu]: %g is not a positive mass", where, im, i,
                                 gp->initial_mass[i]);
        else if (i > 0 && !(gp->initial_mass[i] > gp->initial_mass[i - 1]))
            rc = trail_set_error(err, HRT_E_FORMAT, "%s/%s[%zu]: %g does not exceed the previous %g", where, im, i,
                                 gp->initial_mass[i], gp->initial_mass[i - 1]);
    }
    if (rc == HRT_OK)
        rc = read_named(gr, where, v, &S->route, 1, d1, 1, gp->route, err);
    for (size_t i = 0; i < nm && rc == HRT_OK; i++) {
        if (gp->route[i] < 0 || (size_t)gp->route[i] >= R)
            rc = trail_set_error(err, HRT_E_FORMAT, "%s/route[%zu]: %d is not a route index (0..%zu)", where, i,
                                 gp->route[i], R - 1);
        else if (i > 0 && gp->route[i] < gp->route[i - 1])
            rc = trail_set_error(err, HRT_E_FORMAT, "%s/route[%zu]: routes must not decrease with mass", where, i);
    }
    if (rc == HRT_OK)
        rc = read_named(gr, where, v, &S->n_eep, 1, d1, 1, gp->n_eep, err);
    for (size_t i = 0; i < nm && rc == HRT_OK; i++) {
        size_t lim = f->routes[gp->route[i]].n_eep;
        if (gp->n_eep[i] < 2 || (size_t)gp->n_eep[i] > lim)
            rc = trail_set_error(err, HRT_E_FORMAT, "%s/n_eep[%zu]: %d is not in 2..%zu (route '%s')", where, i,
                                 gp->n_eep[i], lim, f->routes[gp->route[i]].name);
    }
    if (rc == HRT_OK)
        rc = read_named(gr, where, v, &S->remnant, 1, d1, 1, ibuf, err);
    for (size_t i = 0; i < nm && rc == HRT_OK; i++) {
        int c = ibuf[i] >= 0 && ibuf[i] < CODE_MAP_SIZE ? cm->remnant[ibuf[i]] : -1;
        if (c < 0)
            rc = trail_set_error(err, HRT_E_FORMAT, "%s/remnant[%zu]: %d is not a remnant code of the file", where,
                                 i, ibuf[i]);
        gp->remnant[i] = c;
    }
    return rc;
}

/* Remnant masses and route boundaries, checked against the tracks. */
static int read_remnants_and_boundaries(hid_t gr, const char *where, const trail_file *f, trail_file_group *gp,
                                        hrt_error *err)
{
    const trail_schema *S = &trail_schema_names;
    size_t nm = gp->n_mass, R = f->n_routes;
    int v = f->version;
    hsize_t d1[1] = {nm};
    const char *rm = trail_name_in(&S->remnant_mass, v), *bn = trail_name_in(&S->boundary, v);
    int rc = read_named(gr, where, v, &S->remnant_mass, 1, d1, 0, gp->remnant_mass, err);
    for (size_t i = 0; i < nm && rc == HRT_OK; i++) {
        double m = gp->remnant_mass[i];
        if (gp->remnant[i] == HRT_REMNANT_NONE)
            gp->remnant_mass[i] = NAN;
        else if (!(isfinite(m) && m > 0.0))
            rc = trail_set_error(err, HRT_E_FORMAT, "%s/%s[%zu]: %g is not a positive mass", where, rm, i, m);
        else if (!(m <= TRAIL_MAX_MASS_FACTOR * gp->initial_mass[i]))
            rc = trail_set_error(err, HRT_E_FORMAT, "%s/%s[%zu]: %g Msun exceeds %g times the initial mass", where, rm,
                                 i, m, TRAIL_MAX_MASS_FACTOR);
        else if (trail_remnant_is_wd(gp->remnant[i]) && !(m < TRAIL_WD_MASS_MAX_MSUN))
            rc = trail_set_error(err, HRT_E_FORMAT,
                                 "%s/%s[%zu]: a white dwarf of %g Msun is beyond the %g Msun the white dwarf "
                                 "mass-radius relation allows",
                                 where, rm, i, m, TRAIL_WD_MASS_MAX_MSUN);
    }
    hsize_t db[1] = {R > 1 ? R - 1 : 0};
    if (rc == HRT_OK && R > 1)
        rc = read_named(gr, where, v, &S->boundary, 1, db, 0, gp->boundary, err);
    for (size_t b = 0; b + 1 < R && rc == HRT_OK; b++) {
        double mb = gp->boundary[b];
        if (!(isfinite(mb) && mb > 0.0) || (b > 0 && mb < gp->boundary[b - 1])) {
            rc = trail_set_error(err, HRT_E_FORMAT, "%s/%s[%zu]: %g is not a positive, non-decreasing mass", where, bn,
                                 b, mb);
            break;
        }
        for (size_t i = 0; i < nm && rc == HRT_OK; i++) {
            int below = gp->route[i] <= (int)b;
            if ((below && !(gp->initial_mass[i] < mb)) || (!below && !(gp->initial_mass[i] > mb)))
                rc = trail_set_error(err, HRT_E_FORMAT,
                                     "%s/%s[%zu]: %g Msun is on the wrong side of track %zu (%g Msun, route '%s')",
                                     where, bn, b, mb, i, gp->initial_mass[i], f->routes[gp->route[i]].name);
        }
    }
    return rc;
}

/* The per-EEP quantities and phases. */
static int read_eep_data(hid_t gr, const char *where, const trail_file *f, const code_map *cm, trail_file_group *gp,
                         int *ibuf, hrt_error *err)
{
    const trail_schema *S = &trail_schema_names;
    size_t nm = gp->n_mass, J = f->n_eep_max;
    int v = f->version, rc = HRT_OK;
    hsize_t d2[2] = {nm, J};
    for (int q = 0; q < TRAIL_NF && rc == HRT_OK; q++) {
        const char *name = trail_name_in(&S->eep[q], v);
        rc = read_named(gr, where, v, &S->eep[q], 2, d2, 0, gp->q[q], err);
        for (size_t i = 0; i < nm && rc == HRT_OK; i++) {
            rc = trail_check_eep_row(where, name, q, gp, i, J, err);
            for (size_t j = (size_t)gp->n_eep[i]; j < J; j++)
                gp->q[q][i * J + j] = NAN; /* not read: not part of the track */
        }
    }
    if (rc == HRT_OK)
        rc = trail_check_nested_cores(where, f, gp, err);
    if (rc == HRT_OK)
        rc = read_named(gr, where, v, &S->phase, 2, d2, 1, ibuf, err);
    for (size_t i = 0; i < nm && rc == HRT_OK; i++) {
        for (size_t j = 0; j < (size_t)gp->n_eep[i] && rc == HRT_OK; j++) {
            int c = ibuf[i * J + j];
            int p = c >= 0 && c < CODE_MAP_SIZE ? cm->phase[c] : -1;
            if (p <= HRT_PHASE_UNKNOWN)
                rc = trail_set_error(err, HRT_E_FORMAT, "%s/phase[%zu][%zu]: %d is not a phase code of the file", where,
                                     i, j, c);
            else
                gp->phase[i * J + j] = (int8_t)p;
        }
    }
    return rc;
}

/* Before anything of a group is allocated: its arrays within the caps of
 * util/schema.h, and its first per-EEP dataset of that shape actually
 * stored in the file (h5read.c refuses one that declares far more than it
 * stores). */
static int check_size(hid_t gr, const char *where, trail_file *f, size_t nm, hrt_error *err)
{
    double values = (double)nm * (double)f->n_eep_max;
    if (values > TRAIL_MAX_GROUP_VALUES)
        return trail_set_error(err, HRT_E_FORMAT, "%s: %zu tracks x %zu EEPs is more than the %.0f values a group may have",
                               where, nm, f->n_eep_max, (double)TRAIL_MAX_GROUP_VALUES);
    f->values += values;
    if (f->values > TRAIL_MAX_GRID_VALUES)
        return trail_set_error(err, HRT_E_FORMAT, "%s: the grid has more than the %.0f values per quantity a grid may have",
                               where, (double)TRAIL_MAX_GRID_VALUES);
    hsize_t d2[2] = {nm, f->n_eep_max};
    return trail_h5_numeric(gr, where, trail_name_in(&trail_schema_names.eep[TRAIL_F_LOG_AGE], f->version), 2, d2, 0,
                            NULL, err);
}

static int read_group(hid_t fh, trail_file *f, size_t iz, const code_map *cm, hrt_error *err)
{
    const trail_schema *S = &trail_schema_names;
    char where[64];
    snprintf(where, sizeof where, "metallicity/%zu", iz);
    hid_t gr = trail_h5_link(fh, "metallicity") == 1 ? trail_h5_group(fh, where) : -1;
    if (gr < 0)
        return trail_set_error(err, HRT_E_FORMAT, "group '%s' is missing", where);
    trail_file_group *gp = &f->grp[iz];
    const char *zn = trail_name_in(&S->group_z, f->version);
    int rc = trail_h5_attr_number(gr, zn, where, 0, &gp->z, err);
    if (rc == HRT_OK && !(isfinite(gp->z) && gp->z > 0.0 && gp->z < 1.0))
        rc = trail_set_error(err, HRT_E_FORMAT, "%s attribute '%s': %g is not in (0, 1)", where, zn, gp->z);
    if (rc == HRT_OK && iz > 0 && !(gp->z > f->grp[iz - 1].z))
        rc = trail_set_error(err, HRT_E_FORMAT, "%s attribute '%s': %g does not exceed the previous group's %g", where,
                             zn, gp->z, f->grp[iz - 1].z);
    if (rc == HRT_OK && !isfinite(trail_log10(gp->z / f->z_ref)))
        rc = trail_set_error(err, HRT_E_FORMAT,
                             "%s attribute '%s': [Fe/H] = log10(%g / z_ref %g) is not a finite number", where, zn,
                             gp->z, f->z_ref);
    hsize_t dm[1] = {0};
    const char *im = trail_name_in(&S->initial_mass, f->version);
    if (rc == HRT_OK)
        rc = trail_h5_numeric(gr, where, im, 1, dm, 0, NULL, err);
    if (rc == HRT_OK && (dm[0] < 1 || dm[0] > TRAIL_MAX_TRACKS))
        rc = trail_set_error(err, HRT_E_FORMAT, "%s/%s: unusable length %llu (1..%d tracks)", where, im,
                             (unsigned long long)dm[0], TRAIL_MAX_TRACKS);
    size_t nm = rc == HRT_OK ? (size_t)dm[0] : 0, J = f->n_eep_max, R = f->n_routes;
    if (rc == HRT_OK)
        rc = check_size(gr, where, f, nm, err);
    int *ibuf = NULL;
    if (rc == HRT_OK) {
        ibuf = malloc((nm > R ? nm : R) * J * sizeof(int) + sizeof(int));
        if (alloc_group(gp, nm, J, R, &f->bytes) != HRT_OK || !ibuf)
            rc = trail_set_error(err, HRT_E_NOMEM, "%s: out of memory for %zu tracks", where, nm);
    }
    if (rc == HRT_OK)
        rc = read_tracks(gr, where, f, cm, gp, ibuf, err);
    if (rc == HRT_OK)
        rc = read_remnants_and_boundaries(gr, where, f, gp, err);
    if (rc == HRT_OK)
        rc = read_eep_data(gr, where, f, cm, gp, ibuf, err);
    free(ibuf);
    H5Gclose(gr);
    return rc;
}

/* Root: format, version (oldest..HRT_FORMAT_VERSION), z_ref, attributes. */
static int read_root(hid_t fh, int oldest, trail_file *f, hrt_error *err)
{
    char *fmt = NULL;
    int rc = trail_h5_attr_text(fh, "format", "root", &fmt, err);
    if (rc != HRT_OK)
        return rc;
    if (strcmp(fmt, TRAIL_FORMAT_NAME) != 0) {
        rc = trail_set_error(err, HRT_E_FORMAT, "root attribute 'format' is '%.64s', expected '%s'", fmt,
                             TRAIL_FORMAT_NAME);
        free(fmt);
        return rc;
    }
    free(fmt);
    double v;
    if ((rc = trail_h5_attr_number(fh, "format_version", "root", 1, &v, err)) != HRT_OK)
        return rc;
    if (v > HRT_FORMAT_VERSION)
        return trail_set_error(err, HRT_E_VERSION, "format_version %g is newer than this library reads (%d)", v,
                               HRT_FORMAT_VERSION);
    if (!(v >= TRAIL_FORMAT_OLDEST) || v != floor(v))
        return trail_set_error(err, HRT_E_FORMAT, "format_version %g is not a valid version", v);
    if (v < oldest)
        return trail_set_error(err, HRT_E_VERSION,
                               "format_version %g is older than this library reads (%d): convert the file with "
                               "'hrtrail grid upgrade OLD NEW' (hrt_grid_upgrade())",
                               v, HRT_FORMAT_VERSION);
    f->version = (int)v;
    if ((rc = trail_h5_attr_number(fh, "z_ref", "root", 0, &f->z_ref, err)) != HRT_OK)
        return rc;
    if (!(isfinite(f->z_ref) && f->z_ref > 0.0 && f->z_ref < 1.0))
        return trail_set_error(err, HRT_E_FORMAT, "root attribute 'z_ref': %g is not in (0, 1)", f->z_ref);
    attr_collect ac = {f, HRT_OK};
    hsize_t idx = 0;
    H5Aiterate2(fh, H5_INDEX_NAME, H5_ITER_INC, &idx, collect_attr, &ac);
    if (ac.rc != HRT_OK)
        return trail_set_error(err, ac.rc, "root attributes: out of memory");
    return HRT_OK;
}

static int open_groups(hid_t fh, trail_file *f, hid_t *mg, hrt_error *err)
{
    *mg = trail_h5_group(fh, "metallicity");
    if (*mg < 0)
        return trail_set_error(err, HRT_E_FORMAT, "group 'metallicity' is missing");
    H5G_info_t info;
    if (H5Gget_info(*mg, &info) < 0 || info.nlinks == 0)
        return trail_set_error(err, HRT_E_FORMAT, "group 'metallicity' is empty");
    if (info.nlinks > TRAIL_MAX_Z)
        return trail_set_error(err, HRT_E_FORMAT, "group 'metallicity': %llu groups, at most %d supported",
                               (unsigned long long)info.nlinks, TRAIL_MAX_Z);
    f->grp = calloc((size_t)info.nlinks, sizeof *f->grp);
    if (!f->grp)
        return trail_set_error(err, HRT_E_NOMEM, "metallicity: out of memory");
    f->n_z = (size_t)info.nlinks; /* only now: trail_file_free walks n_z groups */
    return HRT_OK;
}

static int read_file(hid_t fh, int oldest, trail_file *f, hrt_error *err)
{
    code_map cm;
    hid_t mg = -1;
    int rc = read_root(fh, oldest, f, err);
    if (rc == HRT_OK)
        rc = read_codes(fh, f->version, &cm, err);
    if (rc == HRT_OK)
        rc = read_routes(fh, f, err);
    if (rc == HRT_OK)
        rc = open_groups(fh, f, &mg, err);
    for (size_t iz = 0; iz < f->n_z && rc == HRT_OK; iz++)
        rc = read_group(fh, f, iz, &cm, err);
    if (rc == HRT_OK && f->version >= 2)
        rc = trail_file_read_extras(fh, f, err);
    if (rc == HRT_OK && f->version >= 2)
        rc = trail_check_checksums(fh, f, err);
    if (mg >= 0)
        H5Gclose(mg);
    return rc;
}

/* The one check of a path before HDF5 opens it: it opens (without blocking:
 * a named pipe would wait for a writer, perhaps forever) and is a regular
 * file. */
static int check_file(const char *path, int missing_code, hrt_error *err)
{
    int fd = open(path, O_RDONLY | O_NONBLOCK | O_CLOEXEC);
    if (fd < 0) {
        int e = errno;
        if (e == ENOENT && missing_code == HRT_E_NOT_FOUND)
            return trail_set_error(err, HRT_E_NOT_FOUND,
                                   "no default grid at '%s' (set HRTRAIL_GRID or install hrtrail's data)", path);
        return trail_set_error(err, e == ENOENT ? missing_code : HRT_E_IO, "cannot open '%s' for reading: %s", path,
                               strerror(e));
    }
    struct stat st;
    int regular = fstat(fd, &st) == 0 && S_ISREG(st.st_mode);
    close(fd);
    if (!regular)
        return trail_set_error(err, HRT_E_IO, "'%s' is not a regular file (a directory, device or pipe)", path);
    return HRT_OK;
}

int trail_file_read_code(const char *path, int oldest, int missing_code, trail_file *f, hrt_error *err)
{
    memset(f, 0, sizeof *f);
    int rc = check_file(path, missing_code, err);
    if (rc != HRT_OK)
        return rc;
    H5E_BEGIN_TRY
    {
        hid_t fh = H5Fopen(path, H5F_ACC_RDONLY, H5P_DEFAULT);
        if (fh < 0) {
            rc = trail_set_error(err, HRT_E_FORMAT, "'%s' is not a readable HDF5 file", path);
        } else {
            rc = read_file(fh, oldest, f, err);
            H5Fclose(fh);
        }
    }
    H5E_END_TRY;
    if (rc != HRT_OK)
        trail_file_free(f);
    return rc;
}

int trail_file_read(const char *path, int oldest, trail_file *f, hrt_error *err)
{
    return trail_file_read_code(path, oldest, HRT_E_IO, f, err);
}

void trail_file_free(trail_file *f)
{
    if (!f)
        return;
    trail_file_free_extras(f);
    for (size_t iz = 0; iz < f->n_z; iz++) {
        trail_file_group *gp = &f->grp[iz];
        free(gp->initial_mass);
        free(gp->route);
        free(gp->n_eep);
        free(gp->remnant);
        free(gp->remnant_mass);
        free(gp->boundary);
        for (int q = 0; q < TRAIL_NF; q++)
            free(gp->q[q]);
        free(gp->phase);
    }
    free(f->grp);
    trail_routes_free(f->routes, f->n_routes);
    trail_attrs_free(f->attrs, f->n_attrs);
    memset(f, 0, sizeof *f);
}
