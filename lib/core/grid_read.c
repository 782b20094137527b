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
#include <sys/stat.h>

#include <hdf5.h>

#include "util/schema.h"
#include "util/util.h"

static void free_strings(char **s, size_t n)
{
    if (!s)
        return;
    for (size_t i = 0; i < n; i++)
        free(s[i]);
    free(s);
}

/* Read n strings of file type ftype from an attribute or dataset. */
static int read_strings_raw(hid_t obj, int is_attr, hid_t ftype, hid_t space, size_t n, char ***out,
                            const char *what, hrt_error *err)
{
    int rc = HRT_OK;
    char **res = calloc(n ? n : 1, sizeof *res);
    hid_t mtype = H5Tcopy(H5T_C_S1);
    if (!res || mtype < 0) {
        free(res);
        if (mtype >= 0)
            H5Tclose(mtype);
        return trail_set_error(err, HRT_E_NOMEM, "%s: out of memory", what);
    }
    H5Tset_cset(mtype, H5Tget_cset(ftype));
    htri_t vl = H5Tis_variable_str(ftype);
    if (vl > 0) {
        char **buf = calloc(n ? n : 1, sizeof *buf);
        herr_t st = -1;
        if (buf) {
            H5Tset_size(mtype, H5T_VARIABLE);
            st = is_attr ? H5Aread(obj, mtype, buf) : H5Dread(obj, mtype, H5S_ALL, H5S_ALL, H5P_DEFAULT, buf);
        }
        if (!buf) {
            rc = trail_set_error(err, HRT_E_NOMEM, "%s: out of memory", what);
        } else if (st < 0) {
            rc = trail_set_error(err, HRT_E_FORMAT, "%s: cannot read strings", what);
        } else {
            for (size_t i = 0; i < n && rc == HRT_OK; i++) {
                res[i] = trail_strdup(buf[i] ? buf[i] : "");
                if (!res[i])
                    rc = trail_set_error(err, HRT_E_NOMEM, "%s: out of memory", what);
            }
#if H5_VERSION_GE(1, 12, 0)
            H5Treclaim(mtype, space, H5P_DEFAULT, buf);
#else
            H5Dvlen_reclaim(mtype, space, H5P_DEFAULT, buf);
#endif
        }
        free(buf);
    } else if (vl == 0) {
        size_t sz = H5Tget_size(ftype);
        char *buf = (sz > 0 && sz < 65536) ? calloc(n ? n : 1, sz + 1) : NULL;
        if (!buf) {
            rc = trail_set_error(err, sz == 0 || sz >= 65536 ? HRT_E_FORMAT : HRT_E_NOMEM,
                               "%s: unusable string size %zu", what, sz);
        } else {
            H5Tset_size(mtype, sz + 1);
            H5Tset_strpad(mtype, H5T_STR_NULLTERM);
            herr_t st = is_attr ? H5Aread(obj, mtype, buf) : H5Dread(obj, mtype, H5S_ALL, H5S_ALL, H5P_DEFAULT, buf);
            if (st < 0)
                rc = trail_set_error(err, HRT_E_FORMAT, "%s: cannot read strings", what);
            for (size_t i = 0; i < n && rc == HRT_OK; i++) {
                buf[i * (sz + 1) + sz] = '\0';
                res[i] = trail_strdup(buf + i * (sz + 1));
                if (!res[i])
                    rc = trail_set_error(err, HRT_E_NOMEM, "%s: out of memory", what);
            }
            free(buf);
        }
    } else {
        rc = trail_set_error(err, HRT_E_FORMAT, "%s: cannot inspect string type", what);
    }
    H5Tclose(mtype);
    if (rc != HRT_OK) {
        free_strings(res, n);
        return rc;
    }
    *out = res;
    return HRT_OK;
}

static hssize_t space_points(hid_t space, int *rank)
{
    *rank = H5Sget_simple_extent_ndims(space);
    return H5Sget_simple_extent_npoints(space);
}

/* An attribute opened with its type and space; the caller checks them and
 * calls close_attr.  `what` receives the description used in messages. */
typedef struct attr_handle {
    hid_t a, t, s;
    char what[160];
} attr_handle;

static int open_attr(hid_t loc, const char *name, const char *where, attr_handle *h, hrt_error *err)
{
    snprintf(h->what, sizeof h->what, "%s attribute '%s'", where, name);
    if (H5Aexists(loc, name) <= 0)
        return trail_set_error(err, HRT_E_FORMAT, "%s is missing", h->what);
    h->a = H5Aopen(loc, name, H5P_DEFAULT);
    if (h->a < 0)
        return trail_set_error(err, HRT_E_FORMAT, "%s cannot be opened", h->what);
    h->t = H5Aget_type(h->a);
    h->s = H5Aget_space(h->a);
    return HRT_OK;
}

static void close_attr(attr_handle *h)
{
    if (h->t >= 0)
        H5Tclose(h->t);
    if (h->s >= 0)
        H5Sclose(h->s);
    H5Aclose(h->a);
}

static int read_attr_text(hid_t loc, const char *name, const char *where, char **out, hrt_error *err)
{
    attr_handle h;
    int rc = open_attr(loc, name, where, &h, err), rank;
    if (rc != HRT_OK)
        return rc;
    if (h.t < 0 || h.s < 0 || H5Tget_class(h.t) != H5T_STRING) {
        rc = trail_set_error(err, HRT_E_FORMAT, "%s is not text", h.what);
    } else if (space_points(h.s, &rank) != 1) {
        rc = trail_set_error(err, HRT_E_FORMAT, "%s must be a single string", h.what);
    } else {
        char **v = NULL;
        rc = read_strings_raw(h.a, 1, h.t, h.s, 1, &v, h.what, err);
        if (rc == HRT_OK) {
            *out = v[0];
            free(v);
        }
    }
    close_attr(&h);
    return rc;
}

static int read_attr_number(hid_t loc, const char *name, const char *where, int want_int, double *out,
                            hrt_error *err)
{
    attr_handle h;
    int rc = open_attr(loc, name, where, &h, err), rank;
    if (rc != HRT_OK)
        return rc;
    H5T_class_t cls = h.t >= 0 ? H5Tget_class(h.t) : H5T_NO_CLASS;
    if (cls != H5T_INTEGER && (want_int || cls != H5T_FLOAT)) {
        rc = trail_set_error(err, HRT_E_FORMAT, "%s must be %s", h.what, want_int ? "an integer" : "a number");
    } else if (h.s < 0 || space_points(h.s, &rank) != 1) {
        rc = trail_set_error(err, HRT_E_FORMAT, "%s must be a single value", h.what);
    } else if (H5Aread(h.a, H5T_NATIVE_DOUBLE, out) < 0) {
        rc = trail_set_error(err, HRT_E_FORMAT, "%s cannot be read", h.what);
    }
    close_attr(&h);
    return rc;
}

/* Open dataset `name` under loc and check its rank and shape; dims[k] == 0
 * means "any" and receives the size found. */
static int open_dataset(hid_t loc, const char *where, const char *name, int rank, hsize_t *dims,
                        H5T_class_t *cls, hid_t *out, hrt_error *err)
{
    if (H5Lexists(loc, name, H5P_DEFAULT) <= 0)
        return trail_set_error(err, HRT_E_FORMAT, "%s/%s: dataset is missing", where, name);
    hid_t d = H5Dopen2(loc, name, H5P_DEFAULT);
    if (d < 0)
        return trail_set_error(err, HRT_E_FORMAT, "%s/%s: not a dataset", where, name);
    hid_t s = H5Dget_space(d), t = H5Dget_type(d);
    int rc = HRT_OK;
    hsize_t found[8] = {0};
    int r = s >= 0 ? H5Sget_simple_extent_ndims(s) : -1;
    if (r != rank) {
        rc = trail_set_error(err, HRT_E_FORMAT, "%s/%s: expected %d dimension%s, found %d", where, name, rank,
                           rank == 1 ? "" : "s", r);
    } else {
        H5Sget_simple_extent_dims(s, found, NULL);
        for (int k = 0; k < rank && rc == HRT_OK; k++) {
            if (dims[k] == 0)
                dims[k] = found[k];
            else if (found[k] != dims[k])
                rc = trail_set_error(err, HRT_E_FORMAT, "%s/%s: dimension %d is %llu, expected %llu", where, name,
                                   k, (unsigned long long)found[k], (unsigned long long)dims[k]);
        }
    }
    *cls = t >= 0 ? H5Tget_class(t) : H5T_NO_CLASS;
    if (t >= 0)
        H5Tclose(t);
    if (s >= 0)
        H5Sclose(s);
    if (rc != HRT_OK) {
        H5Dclose(d);
        return rc;
    }
    *out = d;
    return HRT_OK;
}

/* Read a numeric dataset of the given shape into buf (doubles or ints). */
static int read_numeric(hid_t loc, const char *where, const char *name, int rank, hsize_t *dims, int as_int,
                        void *buf, hrt_error *err)
{
    hid_t d;
    H5T_class_t cls;
    int rc = open_dataset(loc, where, name, rank, dims, &cls, &d, err);
    if (rc != HRT_OK)
        return rc;
    /* Integers where codes and counts are meant, floating point where
     * values are: a float rounded to an integer type has lost its meaning. */
    if (cls != (as_int ? H5T_INTEGER : H5T_FLOAT)) {
        rc = trail_set_error(err, HRT_E_FORMAT, "%s/%s: must hold %s", where, name,
                             as_int ? "integers" : "floating-point numbers");
    } else if (buf && H5Dread(d, as_int ? H5T_NATIVE_INT : H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT,
                              buf) < 0) {
        rc = trail_set_error(err, HRT_E_FORMAT, "%s/%s: cannot be read", where, name);
    }
    H5Dclose(d);
    return rc;
}

static int read_string_dataset(hid_t loc, const char *where, const char *name, size_t *n, char ***out,
                               hrt_error *err)
{
    hsize_t dims[1] = {0};
    hid_t d;
    H5T_class_t cls;
    int rc = open_dataset(loc, where, name, 1, dims, &cls, &d, err);
    if (rc != HRT_OK)
        return rc;
    char what[160];
    snprintf(what, sizeof what, "%s/%s", where, name);
    if (cls != H5T_STRING) {
        rc = trail_set_error(err, HRT_E_FORMAT, "%s: must hold strings", what);
    } else if (dims[0] == 0 || dims[0] > 100000) {
        rc = trail_set_error(err, HRT_E_FORMAT, "%s: unusable length %llu", what, (unsigned long long)dims[0]);
    } else {
        hid_t t = H5Dget_type(d), s = H5Dget_space(d);
        rc = read_strings_raw(d, 0, t, s, (size_t)dims[0], out, what, err);
        H5Tclose(t);
        H5Sclose(s);
        if (rc == HRT_OK)
            *n = (size_t)dims[0];
    }
    H5Dclose(d);
    return rc;
}

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
    int text = t >= 0 && H5Tget_class(t) == H5T_STRING && s >= 0 && space_points(s, &rank) == 1;
    if (t >= 0)
        H5Tclose(t);
    if (s >= 0)
        H5Sclose(s);
    H5Aclose(a);
    if (!text)
        return 0;
    char *value = NULL;
    int rc = read_attr_text(loc, name, "root", &value, NULL);
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

/* Keypoint EEPs and segment sizes of one route (routes/<name>/). */
static int read_route_layout(hid_t sub, const char *where, route_layout *L, hrt_error *err)
{
    int rc = read_string_dataset(sub, where, "keypoint_names", &L->n_kp, &L->kp_names, err);
    if (rc == HRT_OK && L->n_kp < 2)
        rc = trail_set_error(err, HRT_E_FORMAT, "%s/keypoint_names: at least 2 keypoints needed", where);
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
        rc = read_numeric(sub, where, "keypoint_eep", 1, d1, 1, kp, err);
    if (rc == HRT_OK)
        rc = read_numeric(sub, where, "segment_samples", 1, d2, 1, seg, err);
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
    hid_t rg = H5Lexists(fh, "routes", H5P_DEFAULT) > 0 ? H5Gopen2(fh, "routes", H5P_DEFAULT) : -1;
    if (rg < 0)
        return trail_set_error(err, HRT_E_FORMAT, "group 'routes' is missing");
    char **names = NULL;
    size_t n = 0;
    int rc = read_string_dataset(rg, "routes", "names", &n, &names, err);
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
        hid_t sub = H5Lexists(rg, L->name, H5P_DEFAULT) > 0 ? H5Gopen2(rg, L->name, H5P_DEFAULT) : -1;
        if (sub < 0) {
            rc = trail_set_error(err, HRT_E_FORMAT, "group '%s' is missing", where);
            break;
        }
        rc = read_route_layout(sub, where, L, err);
        if (rc == HRT_OK && L->n_eep > f->n_eep_max)
            f->n_eep_max = L->n_eep;
        H5Gclose(sub);
    }
    free_strings(names, n);
    H5Gclose(rg);
    return rc;
}

/* The code tables of a file: for each code a file may store (index c of
 * map), the library's code, or `bad` where the file has none. */
typedef struct code_map {
    int phase[256];
    int remnant[256];
} code_map;

/* Version 2: phases/{code,key} and remnants/{code,key} list the codes the
 * file uses; each must be the library's own code of that key. */
static int read_code_table(hid_t fh, const char *group, const char *(*key_of)(int), int *map, hrt_error *err)
{
    hid_t g = H5Lexists(fh, group, H5P_DEFAULT) > 0 ? H5Gopen2(fh, group, H5P_DEFAULT) : -1;
    if (g < 0)
        return trail_set_error(err, HRT_E_FORMAT, "group '%s' is missing", group);
    char **keys = NULL;
    size_t n = 0;
    int rc = read_string_dataset(g, group, "key", &n, &keys, err);
    int *codes = rc == HRT_OK ? malloc(n * sizeof *codes) : NULL;
    if (rc == HRT_OK && !codes)
        rc = trail_set_error(err, HRT_E_NOMEM, "%s: out of memory", group);
    hsize_t d[1] = {n};
    if (rc == HRT_OK)
        rc = read_numeric(g, group, "code", 1, d, 1, codes, err);
    for (size_t i = 0; i < n && rc == HRT_OK; i++) {
        if (codes[i] < 0 || codes[i] > 255 || strcmp(key_of(codes[i]), keys[i]) != 0)
            rc = trail_set_error(err, HRT_E_FORMAT,
                                 "%s/code[%zu]: key '%.32s' has code %d in the file, but '%s' in this library", group,
                                 i, keys[i], codes[i], codes[i] >= 0 && codes[i] <= 255 ? key_of(codes[i]) : "no key");
        else
            map[codes[i]] = codes[i];
    }
    free(codes);
    free_strings(keys, n);
    H5Gclose(g);
    return rc;
}

/* Version 1: phase_keys[c] / remnant_keys[c] name the phase of code c. */
static int read_key_table_v1(hid_t fh, const char *name, int (*lookup)(const char *), int bad, int *map,
                             hrt_error *err)
{
    char **keys = NULL;
    size_t n = 0;
    int rc = read_string_dataset(fh, "", name, &n, &keys, err);
    if (rc == HRT_OK && n > 256)
        rc = trail_set_error(err, HRT_E_FORMAT, "/%s: %zu keys, at most 256", name, n);
    for (size_t i = 0; i < n && rc == HRT_OK; i++) {
        map[i] = lookup(keys[i]);
        if (map[i] == bad)
            rc = trail_set_error(err, HRT_E_FORMAT, "/%s[%zu]: unknown key '%s'", name, i, keys[i]);
    }
    free_strings(keys, n);
    return rc;
}

static int phase_lookup(const char *k) { return hrt_phase_from_key(k); }
static int remnant_lookup(const char *k) { return hrt_remnant_from_key(k); }

static int read_codes(hid_t fh, int version, code_map *cm, hrt_error *err)
{
    for (int c = 0; c < 256; c++)
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
    hid_t d = H5Dopen2(loc, n->v2, H5P_DEFAULT);
    if (d < 0)
        return trail_set_error(err, HRT_E_FORMAT, "%s/%s: not a dataset", where, n->v2);
    char *u = NULL;
    char what[128];
    snprintf(what, sizeof what, "%s/%s", where, n->v2);
    int rc = read_attr_text(d, "units", what, &u, err);
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
    int rc = read_numeric(gr, where, trail_name_in(n, version), rank, dims, as_int, buf, err);
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
        int c = ibuf[i] >= 0 && ibuf[i] < 256 ? cm->remnant[ibuf[i]] : -1;
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

/* One value of an EEP quantity inside a track's valid EEPs. */
static int check_eep_value(const char *where, const char *name, int q, const trail_file_group *gp, size_t i, size_t j,
                           size_t J, hrt_error *err)
{
    const double *row = gp->q[q] + i * J;
    double v = row[j];
    if (!isfinite(v))
        return trail_set_error(err, HRT_E_FORMAT, "%s/%s[%zu][%zu]: %g inside the track's valid EEPs", where, name, i,
                               j, v);
    if (q == TRAIL_F_LOG_AGE && j > 0 && !(v > row[j - 1]))
        return trail_set_error(err, HRT_E_FORMAT, "%s/%s[%zu][%zu]: %.17g does not exceed the previous EEP's %.17g",
                               where, name, i, j, v, row[j - 1]);
    if (TRAIL_F_IS_MASS(q) && v < 0.0)
        return trail_set_error(err, HRT_E_FORMAT, "%s/%s[%zu][%zu]: negative mass %g", where, name, i, j, v);
    /* Bounds far outside any star, so that the spline slopes and weights
     * cannot overflow to inf and NaN. */
    if (TRAIL_F_IS_MASS(q) && !(v <= TRAIL_MAX_MASS_FACTOR * gp->initial_mass[i]))
        return trail_set_error(err, HRT_E_FORMAT, "%s/%s[%zu][%zu]: %g Msun exceeds %g times the initial mass", where,
                               name, i, j, v, TRAIL_MAX_MASS_FACTOR);
    if (!TRAIL_F_IS_MASS(q) && !(fabs(v) <= TRAIL_MAX_LOG_ABS))
        return trail_set_error(err, HRT_E_FORMAT, "%s/%s[%zu][%zu]: %g is not a plausible log10 value", where, name, i,
                               j, v);
    return HRT_OK;
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
            for (size_t j = 0; j < J && rc == HRT_OK; j++) {
                if (j < (size_t)gp->n_eep[i])
                    rc = check_eep_value(where, name, q, gp, i, j, J, err);
                else
                    gp->q[q][i * J + j] = NAN; /* not read: not part of the track */
            }
        }
    }
    if (rc == HRT_OK)
        rc = read_named(gr, where, v, &S->phase, 2, d2, 1, ibuf, err);
    for (size_t i = 0; i < nm && rc == HRT_OK; i++) {
        for (size_t j = 0; j < (size_t)gp->n_eep[i] && rc == HRT_OK; j++) {
            int c = ibuf[i * J + j];
            int p = c >= 0 && c < 256 ? cm->phase[c] : -1;
            if (p <= HRT_PHASE_UNKNOWN)
                rc = trail_set_error(err, HRT_E_FORMAT, "%s/phase[%zu][%zu]: %d is not a phase code of the file", where,
                                     i, j, c);
            else
                gp->phase[i * J + j] = (int8_t)p;
        }
    }
    return rc;
}

static int read_group(hid_t fh, trail_file *f, size_t iz, const code_map *cm, hrt_error *err)
{
    const trail_schema *S = &trail_schema_names;
    char where[64];
    snprintf(where, sizeof where, "metallicity/%zu", iz);
    hid_t gr = H5Lexists(fh, where, H5P_DEFAULT) > 0 ? H5Gopen2(fh, where, H5P_DEFAULT) : -1;
    if (gr < 0)
        return trail_set_error(err, HRT_E_FORMAT, "group '%s' is missing", where);
    trail_file_group *gp = &f->grp[iz];
    const char *zn = trail_name_in(&S->group_z, f->version);
    int rc = read_attr_number(gr, zn, where, 0, &gp->z, err);
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
        rc = read_numeric(gr, where, im, 1, dm, 0, NULL, err);
    if (rc == HRT_OK && (dm[0] < 1 || dm[0] > TRAIL_MAX_TRACKS))
        rc = trail_set_error(err, HRT_E_FORMAT, "%s/%s: unusable length %llu (1..%d tracks)", where, im,
                             (unsigned long long)dm[0], TRAIL_MAX_TRACKS);
    size_t nm = rc == HRT_OK ? (size_t)dm[0] : 0, J = f->n_eep_max, R = f->n_routes;
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
    int rc = read_attr_text(fh, "format", "root", &fmt, err);
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
    if ((rc = read_attr_number(fh, "format_version", "root", 1, &v, err)) != HRT_OK)
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
    if ((rc = read_attr_number(fh, "z_ref", "root", 0, &f->z_ref, err)) != HRT_OK)
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
    *mg = H5Lexists(fh, "metallicity", H5P_DEFAULT) > 0 ? H5Gopen2(fh, "metallicity", H5P_DEFAULT) : -1;
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
    if (mg >= 0)
        H5Gclose(mg);
    return rc;
}

int trail_file_read(const char *path, int oldest, trail_file *f, hrt_error *err)
{
    memset(f, 0, sizeof *f);
    /* Only regular files: opening a named pipe for reading would block
     * until someone writes to it, i.e. possibly forever. */
    struct stat st;
    if (stat(path, &st) == 0 && !S_ISREG(st.st_mode))
        return trail_set_error(err, HRT_E_IO, "'%s' is not a regular file (a directory, device or pipe)", path);
    FILE *probe = fopen(path, "rb");
    if (!probe)
        return trail_set_error(err, HRT_E_IO, "cannot open '%s' for reading", path);
    fclose(probe);
    int rc = HRT_OK;
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

void trail_file_free(trail_file *f)
{
    if (!f)
        return;
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
    for (size_t r = 0; r < f->n_routes; r++) {
        free(f->routes[r].name);
        free_strings(f->routes[r].kp_names, f->routes[r].n_kp);
        free(f->routes[r].kp_eep);
    }
    free(f->routes);
    for (size_t a = 0; a < f->n_attrs; a++) {
        free(f->attrs[a].name);
        free(f->attrs[a].value);
    }
    free(f->attrs);
    memset(f, 0, sizeof *f);
}
