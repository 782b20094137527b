/* Reading and validating a grid file (tracks/FORMAT.md, version 1).
 *
 * Every HDF5 call happens inside H5E_BEGIN_TRY / H5E_END_TRY (in
 * trail_grid_read), so HDF5 prints nothing and the caller's HDF5 error
 * settings are restored afterwards.  The first problem found ends the read
 * with a message naming the group, dataset and index. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include <hdf5.h>

#include "core/core.h"

#define FORMAT_NAME "hrtrail-track-grid"

static const char qnames[NQ][16] = {"log_age", "log_L", "log_Teff", "mass", "he_core_mass",
                                       "co_core_mass"};

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
    if (cls != H5T_INTEGER && (as_int || cls != H5T_FLOAT)) {
        rc = trail_set_error(err, HRT_E_FORMAT, "%s/%s: must hold %s", where, name, as_int ? "integers" : "numbers");
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
    hrt_grid *g;
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
    attr_pair *p = realloc(ac->g->attrs, (ac->g->n_attrs + 1) * sizeof *p);
    char *nm = trail_strdup(name);
    if (!p || !nm) {
        if (p)
            ac->g->attrs = p;
        free(nm);
        free(value);
        ac->rc = HRT_E_NOMEM;
        return -1;
    }
    ac->g->attrs = p;
    p[ac->g->n_attrs].name = nm;
    p[ac->g->n_attrs].value = value;
    ac->g->n_attrs++;
    return 0;
}

static int read_routes(hid_t f, hrt_grid *g, hrt_error *err)
{
    hid_t rg = H5Lexists(f, "routes", H5P_DEFAULT) > 0 ? H5Gopen2(f, "routes", H5P_DEFAULT) : -1;
    if (rg < 0)
        return trail_set_error(err, HRT_E_FORMAT, "group 'routes' is missing");
    char **names = NULL;
    size_t n = 0;
    int rc = read_string_dataset(rg, "routes", "names", &n, &names, err);
    if (rc == HRT_OK && n > TRAIL_MAX_ROUTES)
        rc = trail_set_error(err, HRT_E_FORMAT, "routes/names: %zu routes, at most %d supported", n, TRAIL_MAX_ROUTES);
    if (rc == HRT_OK) {
        g->routes = calloc(n, sizeof *g->routes);
        if (!g->routes)
            rc = trail_set_error(err, HRT_E_NOMEM, "routes: out of memory");
        else
            g->n_routes = n;
    }
    for (size_t r = 0; r < n && rc == HRT_OK; r++) {
        route_layout *L = &g->routes[r];
        L->name = names[r];
        names[r] = NULL;
        for (size_t q = 0; q < r; q++)
            if (strcmp(g->routes[q].name, L->name) == 0)
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
        rc = read_string_dataset(sub, where, "keypoint_names", &L->n_kp, &L->kp_names, err);
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
            if (seg[k] < 1 || seg[k] > 100000)
                rc = trail_set_error(err, HRT_E_FORMAT, "%s/segment_samples[%zu]: %d is not in 1..100000", where, k,
                                   seg[k]);
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
            if (L->n_eep > g->n_eep_max)
                g->n_eep_max = L->n_eep;
        }
        free(kp);
        free(seg);
        H5Gclose(sub);
    }
    free_strings(names, n);
    H5Gclose(rg);
    return rc;
}

/* Map the file's key table onto our enumeration through lookup(). */
static int read_key_table(hid_t f, const char *name, int (*lookup)(const char *), int bad, int **map,
                          size_t *n, hrt_error *err)
{
    char **keys = NULL;
    int rc = read_string_dataset(f, "", name, n, &keys, err);
    if (rc != HRT_OK)
        return rc;
    *map = malloc(*n * sizeof **map);
    if (!*map)
        rc = trail_set_error(err, HRT_E_NOMEM, "%s: out of memory", name);
    for (size_t i = 0; i < *n && rc == HRT_OK; i++) {
        (*map)[i] = lookup(keys[i]);
        if ((*map)[i] == bad)
            rc = trail_set_error(err, HRT_E_FORMAT, "/%s[%zu]: unknown key '%s'", name, i, keys[i]);
    }
    free_strings(keys, *n);
    return rc;
}

static int remnant_lookup(const char *k) { return hrt_remnant_from_key(k); }

static int read_group(hid_t f, hrt_grid *g, size_t iz, const int *phase_map, size_t n_phase,
                      const int *rem_map, size_t n_rem, hrt_error *err)
{
    char where[64];
    snprintf(where, sizeof where, "metallicity/%zu", iz);
    hid_t gr = H5Lexists(f, where, H5P_DEFAULT) > 0 ? H5Gopen2(f, where, H5P_DEFAULT) : -1;
    if (gr < 0)
        return trail_set_error(err, HRT_E_FORMAT, "group '%s' is missing", where);
    zgroup *gp = &g->grp[iz];
    int rc = read_attr_number(gr, "Z", where, 0, &gp->z, err);
    if (rc == HRT_OK && !(isfinite(gp->z) && gp->z > 0.0 && gp->z < 1.0))
        rc = trail_set_error(err, HRT_E_FORMAT, "%s attribute 'Z': %g is not in (0, 1)", where, gp->z);
    if (rc == HRT_OK && iz > 0 && !(gp->z > g->grp[iz - 1].z))
        rc = trail_set_error(err, HRT_E_FORMAT, "%s attribute 'Z': %g does not exceed the previous group's %g",
                           where, gp->z, g->grp[iz - 1].z);
    if (rc == HRT_OK && !isfinite(trail_log10(gp->z / g->z_ref)))
        rc = trail_set_error(err, HRT_E_FORMAT, "%s attribute 'Z': [Fe/H] = log10(%g / z_ref %g) is not a finite number",
                           where, gp->z, g->z_ref);
    hsize_t dm[1] = {0};
    if (rc == HRT_OK)
        rc = read_numeric(gr, where, "initial_mass", 1, dm, 0, NULL, err);
    if (rc == HRT_OK && (dm[0] < 1 || dm[0] > 100000))
        rc = trail_set_error(err, HRT_E_FORMAT, "%s/initial_mass: unusable length %llu", where,
                           (unsigned long long)dm[0]);
    size_t nm = rc == HRT_OK ? (size_t)dm[0] : 0, J = g->n_eep_max, R = g->n_routes;
    double *buf = NULL;
    int *ibuf = NULL;
    if (rc == HRT_OK) {
        gp->feh = trail_log10(gp->z / g->z_ref);
        gp->n_mass = nm;
        gp->mass = malloc(nm * sizeof(double));
        gp->logm = calloc(nm + 1, sizeof(double));
        gp->route = malloc(nm * sizeof(int));
        gp->n_eep = malloc(nm * sizeof(int));
        gp->remnant = malloc(nm * sizeof(int));
        gp->remnant_hv = calloc(2 * (nm + 1), sizeof(double));
        gp->boundary = malloc((R > 1 ? R - 1 : 1) * sizeof(double));
        gp->hv = calloc((size_t)NQ * J * (nm + 1) * 2, sizeof(double));
        gp->phase = calloc(nm * J, 1);
        gp->runs = calloc(nm * J * 2, sizeof(int32_t));
        gp->age_tab = calloc(nm * TRAIL_AGE_TAB, sizeof(uint16_t));
        gp->age_tab_x = calloc(nm * 2, sizeof(double));
        gp->age_lambda = calloc(nm + 1, sizeof(double));
        gp->age_dx_max = calloc(2 * (nm + 1), sizeof(double));
        gp->age_iv = calloc(nm * J * 4, sizeof(double));
        buf = malloc(nm * J * sizeof(double));
        ibuf = malloc((nm > R ? nm : R) * J * sizeof(int) + sizeof(int));
        if (!gp->mass || !gp->logm || !gp->route || !gp->n_eep || !gp->remnant || !gp->remnant_hv ||
            !gp->boundary || !gp->hv || !gp->phase || !gp->runs || !gp->age_tab || !gp->age_tab_x || !gp->age_lambda || !gp->age_dx_max || !gp->age_iv || !buf ||
            !ibuf)
            rc = trail_set_error(err, HRT_E_NOMEM, "%s: out of memory for %zu tracks", where, nm);
        else
            g->bytes += (size_t)NQ * J * (nm + 1) * 2 * sizeof(double) + nm * J * (1 + 2 * sizeof(int32_t) + 4 * sizeof(double)) +
                        nm * TRAIL_AGE_TAB * sizeof(uint16_t);
    }
    hsize_t d1[1] = {nm};
    if (rc == HRT_OK)
        rc = read_numeric(gr, where, "initial_mass", 1, d1, 0, gp->mass, err);
    for (size_t i = 0; i < nm && rc == HRT_OK; i++) {
        if (!(isfinite(gp->mass[i]) && gp->mass[i] > 0.0))
            rc = trail_set_error(err, HRT_E_FORMAT, "%s/initial_mass[%zu]: %g is not a positive mass", where, i,
                               gp->mass[i]);
        else if (i > 0 && !(gp->mass[i] > gp->mass[i - 1]))
            rc = trail_set_error(err, HRT_E_FORMAT, "%s/initial_mass[%zu]: %g does not exceed the previous %g", where,
                               i, gp->mass[i], gp->mass[i - 1]);
        else
            gp->logm[i] = trail_log10(gp->mass[i]);
    }
    if (rc == HRT_OK)
        gp->logm[nm] = gp->logm[nm - 1] + 1.0; /* padding, never a knot */
    if (rc == HRT_OK)
        rc = read_numeric(gr, where, "route", 1, d1, 1, gp->route, err);
    for (size_t i = 0; i < nm && rc == HRT_OK; i++) {
        if (gp->route[i] < 0 || (size_t)gp->route[i] >= R)
            rc = trail_set_error(err, HRT_E_FORMAT, "%s/route[%zu]: %d is not a route index (0..%zu)", where, i,
                               gp->route[i], R - 1);
        else if (i > 0 && gp->route[i] < gp->route[i - 1])
            rc = trail_set_error(err, HRT_E_FORMAT, "%s/route[%zu]: routes must not decrease with mass", where, i);
    }
    if (rc == HRT_OK)
        rc = read_numeric(gr, where, "n_eep", 1, d1, 1, gp->n_eep, err);
    for (size_t i = 0; i < nm && rc == HRT_OK; i++) {
        size_t lim = g->routes[gp->route[i]].n_eep;
        if (gp->n_eep[i] < 2 || (size_t)gp->n_eep[i] > lim)
            rc = trail_set_error(err, HRT_E_FORMAT, "%s/n_eep[%zu]: %d is not in 2..%zu (route '%s')", where, i,
                               gp->n_eep[i], lim, g->routes[gp->route[i]].name);
    }
    if (rc == HRT_OK)
        rc = read_numeric(gr, where, "remnant", 1, d1, 1, ibuf, err);
    for (size_t i = 0; i < nm && rc == HRT_OK; i++) {
        if (ibuf[i] < 0 || (size_t)ibuf[i] >= n_rem)
            rc = trail_set_error(err, HRT_E_FORMAT, "%s/remnant[%zu]: %d is not an index into remnant_keys", where, i,
                               ibuf[i]);
        else
            gp->remnant[i] = rem_map[ibuf[i]];
    }
    if (rc == HRT_OK)
        rc = read_numeric(gr, where, "remnant_mass", 1, d1, 0, buf, err);
    for (size_t i = 0; i < nm && rc == HRT_OK; i++) {
        if (gp->remnant[i] != HRT_REMNANT_NONE && !(isfinite(buf[i]) && buf[i] > 0.0))
            rc = trail_set_error(err, HRT_E_FORMAT, "%s/remnant_mass[%zu]: %g is not a positive mass", where, i,
                               buf[i]);
        else if (gp->remnant[i] != HRT_REMNANT_NONE && !(buf[i] <= TRAIL_MAX_MASS_FACTOR * gp->mass[i]))
            rc = trail_set_error(err, HRT_E_FORMAT, "%s/remnant_mass[%zu]: %g Msun exceeds twice the initial mass",
                               where, i, buf[i]);
        else if (trail_remnant_family(gp->remnant[i]) == HRT_REMNANT_CO_WD && !(buf[i] < 1.44))
            rc = trail_set_error(err, HRT_E_FORMAT, "%s/remnant_mass[%zu]: a white dwarf of %g Msun is beyond the "
                               "1.44 Msun the white dwarf mass-radius relation allows", where, i, buf[i]);
        /* 0, not NaN, for a track without remnant: a query at a neighbour's
         * mass gives it weight 0, and 0 * NaN would be NaN. */
        gp->remnant_hv[2 * i] = gp->remnant[i] != HRT_REMNANT_NONE ? buf[i] : 0.0;
    }
    hsize_t db[1] = {R > 1 ? R - 1 : 0};
    if (rc == HRT_OK && R > 1)
        rc = read_numeric(gr, where, "route_boundary_mass", 1, db, 0, gp->boundary, err);
    for (size_t b = 0; b + 1 < R && rc == HRT_OK; b++) {
        double mb = gp->boundary[b];
        if (!(isfinite(mb) && mb > 0.0) || (b > 0 && mb < gp->boundary[b - 1])) {
            rc = trail_set_error(err, HRT_E_FORMAT, "%s/route_boundary_mass[%zu]: %g is not a positive, "
                               "non-decreasing mass", where, b, mb);
            break;
        }
        for (size_t i = 0; i < nm; i++) {
            int below = gp->route[i] <= (int)b;
            if ((below && !(gp->mass[i] < mb)) || (!below && !(gp->mass[i] > mb))) {
                rc = trail_set_error(err, HRT_E_FORMAT,
                                   "%s/route_boundary_mass[%zu]: %g Msun is on the wrong side of track %zu "
                                   "(%g Msun, route '%s')",
                                   where, b, mb, i, gp->mass[i], g->routes[gp->route[i]].name);
                break;
            }
        }
    }
    hsize_t d2[2] = {nm, J};
    for (int q = 0; q < NQ && rc == HRT_OK; q++) {
        rc = read_numeric(gr, where, qnames[q], 2, d2, 0, buf, err);
        for (size_t i = 0; i < nm && rc == HRT_OK; i++) {
            for (int j = 0; j < gp->n_eep[i]; j++) {
                double v = buf[i * J + (size_t)j];
                if (!isfinite(v)) {
                    rc = trail_set_error(err, HRT_E_FORMAT, "%s/%s[%zu][%d]: %g inside the track's valid EEPs", where,
                                       qnames[q], i, j, v);
                    break;
                }
                if (q == Q_AGE && j > 0 && !(v > buf[i * J + (size_t)j - 1])) {
                    rc = trail_set_error(err, HRT_E_FORMAT,
                                       "%s/log_age[%zu][%d]: %.17g does not exceed the previous EEP's %.17g", where,
                                       i, j, v, buf[i * J + (size_t)j - 1]);
                    break;
                }
                if (q >= Q_MASS && v < 0.0) {
                    rc = trail_set_error(err, HRT_E_FORMAT, "%s/%s[%zu][%d]: negative mass %g", where, qnames[q], i,
                                       j, v);
                    break;
                }
                /* Bounds far outside any star, so that the spline slopes and
                 * weights cannot overflow to inf and NaN. */
                if (q >= Q_MASS && !(v <= TRAIL_MAX_MASS_FACTOR * gp->mass[i])) {
                    rc = trail_set_error(err, HRT_E_FORMAT, "%s/%s[%zu][%d]: %g Msun exceeds twice the initial mass",
                                       where, qnames[q], i, j, v);
                    break;
                }
                if (q < Q_MASS && !(fabs(v) <= TRAIL_MAX_LOG_ABS)) {
                    rc = trail_set_error(err, HRT_E_FORMAT, "%s/%s[%zu][%d]: %g is not a plausible log10 value", where,
                                       qnames[q], i, j, v);
                    break;
                }
                /* Masses are interpolated as fractions of the initial mass,
                 * so a star without mass loss keeps its mass exactly. */
                *trail_hv(gp, (size_t)j, i, q) = q >= Q_MASS ? v / gp->mass[i] : v;
            }
        }
    }
    if (rc == HRT_OK)
        rc = read_numeric(gr, where, "log_R", 2, d2, 0, NULL, err);
    if (rc == HRT_OK)
        rc = read_numeric(gr, where, "phase", 2, d2, 1, ibuf, err);
    for (size_t i = 0; i < nm && rc == HRT_OK; i++) {
        for (int j = 0; j < gp->n_eep[i]; j++) {
            int c = ibuf[i * J + (size_t)j];
            if (c < 0 || (size_t)c >= n_phase) {
                rc = trail_set_error(err, HRT_E_FORMAT, "%s/phase[%zu][%d]: %d is not an index into phase_keys", where,
                                   i, j, c);
                break;
            }
            gp->phase[i * J + (size_t)j] = (int8_t)phase_map[c];
        }
    }
    free(buf);
    free(ibuf);
    H5Gclose(gr);
    return rc;
}

static int phase_lookup(const char *k) { return hrt_phase_from_key(k); }

static int read_file(hid_t f, hrt_grid *g, hrt_error *err)
{
    char *fmt = NULL;
    int rc = read_attr_text(f, "format", "root", &fmt, err);
    if (rc != HRT_OK)
        return rc;
    if (strcmp(fmt, FORMAT_NAME) != 0) {
        rc = trail_set_error(err, HRT_E_FORMAT, "root attribute 'format' is '%.64s', expected '%s'", fmt, FORMAT_NAME);
        free(fmt);
        return rc;
    }
    free(fmt);
    double v;
    if ((rc = read_attr_number(f, "format_version", "root", 1, &v, err)) != HRT_OK)
        return rc;
    if (v > HRT_FORMAT_VERSION)
        return trail_set_error(err, HRT_E_VERSION, "format_version %g is newer than this library reads (%d)", v,
                             HRT_FORMAT_VERSION);
    if (v < 1)
        return trail_set_error(err, HRT_E_FORMAT, "format_version %g is not a valid version", v);
    if ((rc = read_attr_number(f, "z_ref", "root", 0, &g->z_ref, err)) != HRT_OK)
        return rc;
    if (!(isfinite(g->z_ref) && g->z_ref > 0.0 && g->z_ref < 1.0))
        return trail_set_error(err, HRT_E_FORMAT, "root attribute 'z_ref': %g is not in (0, 1)", g->z_ref);
    attr_collect ac = {g, HRT_OK};
    hsize_t idx = 0;
    H5Aiterate2(f, H5_INDEX_NAME, H5_ITER_INC, &idx, collect_attr, &ac);
    if (ac.rc != HRT_OK)
        return trail_set_error(err, ac.rc, "root attributes: out of memory");
    int *pmap = NULL, *rmap = NULL;
    size_t np = 0, nr = 0;
    rc = read_key_table(f, "phase_keys", phase_lookup, HRT_PHASE_UNKNOWN, &pmap, &np, err);
    if (rc == HRT_OK)
        rc = read_key_table(f, "remnant_keys", remnant_lookup, -1, &rmap, &nr, err);
    if (rc == HRT_OK)
        rc = read_routes(f, g, err);
    hid_t mg = -1;
    if (rc == HRT_OK) {
        mg = H5Lexists(f, "metallicity", H5P_DEFAULT) > 0 ? H5Gopen2(f, "metallicity", H5P_DEFAULT) : -1;
        if (mg < 0)
            rc = trail_set_error(err, HRT_E_FORMAT, "group 'metallicity' is missing");
    }
    if (rc == HRT_OK) {
        H5G_info_t info;
        if (H5Gget_info(mg, &info) < 0 || info.nlinks == 0)
            rc = trail_set_error(err, HRT_E_FORMAT, "group 'metallicity' is empty");
        else if (info.nlinks > TRAIL_MAX_Z)
            rc = trail_set_error(err, HRT_E_FORMAT, "group 'metallicity': %llu groups, at most %d supported",
                               (unsigned long long)info.nlinks, TRAIL_MAX_Z);
        else {
            g->grp = calloc((size_t)info.nlinks, sizeof *g->grp);
            if (!g->grp)
                rc = trail_set_error(err, HRT_E_NOMEM, "metallicity: out of memory");
            else
                g->n_z = (size_t)info.nlinks; /* only now: trail_grid_free_contents walks n_z groups */
        }
    }
    for (size_t iz = 0; iz < g->n_z && rc == HRT_OK; iz++)
        rc = read_group(f, g, iz, pmap, np, rmap, nr, err);
    if (mg >= 0)
        H5Gclose(mg);
    free(pmap);
    free(rmap);
    return rc;
}

int trail_grid_read(const char *path, hrt_grid *g, hrt_error *err)
{
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
        hid_t f = H5Fopen(path, H5F_ACC_RDONLY, H5P_DEFAULT);
        if (f < 0) {
            rc = trail_set_error(err, HRT_E_FORMAT, "'%s' is not a readable HDF5 file", path);
        } else {
            rc = read_file(f, g, err);
            H5Fclose(f);
        }
    }
    H5E_END_TRY;
    return rc;
}

static void free_route(route_layout *L)
{
    free(L->name);
    free_strings(L->kp_names, L->n_kp);
    free(L->kp_eep);
}

void trail_grid_free_contents(hrt_grid *g)
{
    for (size_t iz = 0; iz < g->n_z; iz++) {
        zgroup *gp = &g->grp[iz];
        free(gp->mass);
        free(gp->logm);
        free(gp->route);
        free(gp->n_eep);
        free(gp->remnant);
        free(gp->remnant_hv);
        free(gp->boundary);
        free(gp->hv);
        free(gp->phase);
        free(gp->runs);
        free(gp->age_tab);
        free(gp->age_tab_x);
        free(gp->age_lambda);
        free(gp->age_dx_max);
        free(gp->age_iv);
    }
    free(g->grp);
    for (size_t r = 0; r < g->n_routes; r++)
        free_route(&g->routes[r]);
    free(g->routes);
    for (size_t a = 0; a < g->n_attrs; a++) {
        free(g->attrs[a].name);
        free(g->attrs[a].value);
    }
    free(g->attrs);
}
