#include "synth.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <hdf5.h>

#define Z_REF 0.02

double synth_feh(double z) { return log10(z / Z_REF); }

double synth_z(const synth_spec *s, int iz)
{
    /* Z from 0.001 to 0.03, evenly in [Fe/H]. */
    double y0 = log10(0.001 / Z_REF), y1 = log10(0.03 / Z_REF);
    double y = s->n_z > 1 ? y0 + (y1 - y0) * iz / (s->n_z - 1) : log10(0.014 / Z_REF);
    return Z_REF * pow(10.0, y);
}

double synth_log_age(int route, double x, double e, double y)
{
    /* Increasing in e; decreasing with mass; linear in [Fe/H]. */
    return (route ? 9.3 : 9.6) - 2.5 * x + 1.2 * e + 0.4 * e * e + 0.1 * y + 0.05 * sin(2.0 * x);
}

double synth_log_l(int route, double x, double e, double y)
{
    return (route ? 0.3 : 0.1) + 3.5 * x + 0.3 * x * x + sin(2.0 * e) + 0.2 * x * e - 0.1 * y + 0.05 * y * y;
}

double synth_log_teff(int route, double x, double e, double y)
{
    return 3.76 + (route ? 0.02 : 0.0) + 0.4 * x - 0.2 * e + 0.05 * sin(3.0 * x) + 0.02 * y - 0.01 * y * y;
}

double synth_mass(int route, double x, double e, double y)
{
    (void)route;
    return pow(10.0, x) * (1.0 - 0.2 * e * (1.0 + 0.1 * y));
}

double synth_remnant_mass(int route, double x, double y) { return (route ? 0.6 : 0.4) + 0.1 * x + 0.01 * y; }

int synth_phase(int route, int j, int n_eep)
{
    double e = (double)j / (n_eep - 1);
    if (route == 0)
        return e < 0.4 ? HRT_PHASE_MS : HRT_PHASE_RGB;
    return e < 25.0 / 60.0 ? HRT_PHASE_MS : e < 50.0 / 60.0 ? HRT_PHASE_RGB : HRT_PHASE_CHEB;
}

int synth_write(const synth_spec *s, const char *path, hrt_error *err)
{
    const char *kp0[] = {"start", "turn", "end"};
    const char *kp1[] = {"start", "turn", "ignite", "end"};
    int seg0[] = {20 * s->seg_scale, 30 * s->seg_scale};
    int seg1[] = {25 * s->seg_scale, 25 * s->seg_scale, 10 * s->seg_scale};
    hrt_route_spec routes[2] = {{"low", 3, kp0, seg0}, {"high", 4, kp1, seg1}};
    int nj[2] = {50 * s->seg_scale + 1, 60 * s->seg_scale + 1};
    hrt_builder *b;
    int rc = hrt_builder_new(2, routes, Z_REF, &b, err);
    if (rc)
        return rc;
    hrt_builder_set_attribute(b, "description", "synthetic test grid (known functions)", NULL);
    int nmax = nj[1];
    double *age = malloc(7 * nmax * sizeof(double));
    int *ph = malloc(nmax * sizeof(int));
    for (int iz = 0; iz < s->n_z && rc == 0; iz++) {
        double z = synth_z(s, iz), y = synth_feh(z);
        for (int route = 0; route < 2 && rc == 0; route++) {
            int n = route ? s->n_high : s->n_low;
            double lo = route ? log10(s->mass_b) + 0.02 : log10(s->mass_lo);
            double hi = route ? log10(s->mass_hi) : log10(s->mass_b) - 0.02;
            for (int i = 0; i < n && rc == 0; i++) {
                double u = n > 1 ? (double)i / (n - 1) : 0.0;
                if (s->jitter && i > 0 && i < n - 1)
                    u += 0.3 / (n - 1) * sin(7.0 * i + iz);
                double x = lo + (hi - lo) * u;
                int J = nj[route];
                double *la = age, *ll = age + nmax, *lt = age + 2 * nmax, *m = age + 3 * nmax;
                double *he = age + 4 * nmax, *co = age + 5 * nmax;
                for (int j = 0; j < J; j++) {
                    double e = (double)j / (J - 1);
                    la[j] = synth_log_age(route, x, e, y);
                    ll[j] = synth_log_l(route, x, e, y);
                    lt[j] = synth_log_teff(route, x, e, y);
                    m[j] = synth_mass(route, x, e, y);
                    he[j] = 0.1 * pow(10.0, x) * e;
                    co[j] = 0.05 * pow(10.0, x) * e * e;
                    ph[j] = synth_phase(route, j, J);
                }
                hrt_track_data t = {pow(10.0, x), route, route ? HRT_REMNANT_CO_WD : HRT_REMNANT_HE_WD,
                                    synth_remnant_mass(route, x, y), (size_t)J, la, ll, lt, NULL, m, he, co, ph,
                                    0, NULL};
                rc = hrt_builder_add_eep_track(b, z, &t, err);
            }
        }
        double bnd = s->mass_b;
        if (rc == 0)
            rc = hrt_builder_set_route_boundaries(b, z, &bnd, err);
    }
    if (rc == 0)
        rc = hrt_builder_write(b, path, err);
    free(age);
    free(ph);
    hrt_builder_free(b);
    return rc;
}

/* ---- format 1, for the tests of the conversion ------------------------- */

/* The key tables of format 1 in the order hrtrail 0.1 wrote them: entry i
 * of phase_keys was the phase stored as i; same for remnant_keys. */
static const char *const v1_phase_keys[] = {"pre_ms", "ms", "subgiant", "rgb", "cheb", "eagb", "tpagb", "post_agb",
                                            "wd", "bsg", "rsg", "wr", "ns", "bh", "post_rgb"};
static const char *const v1_remnant_keys[] = {"none", "he_wd", "co_wd", "one_wd", "ns", "bh"};
#define V1_NP (sizeof v1_phase_keys / sizeof v1_phase_keys[0])
#define V1_NR (sizeof v1_remnant_keys / sizeof v1_remnant_keys[0])

/* Dataset names and units strings: format 2 -> format 1. */
static const struct {
    const char *v2, *v1, *units_v1;
} v1_names[] = {
    {"initial_mass_msun", "initial_mass", "Msun"},
    {"remnant_mass_msun", "remnant_mass", "Msun"},
    {"route_boundary_mass_msun", "route_boundary_mass", "Msun"},
    {"log_age_yr", "log_age", "log10 yr"},
    {"log_l_lsun", "log_L", "log10 Lsun"},
    {"log_teff_k", "log_Teff", "log10 K"},
    {"log_r_rsun", "log_R", "log10 Rsun"},
    {"mass_msun", "mass", "Msun"},
    {"he_core_mass_msun", "he_core_mass", "Msun"},
    {"co_core_mass_msun", "co_core_mass", "Msun"},
};

static int copy_file(const char *from, const char *to)
{
    FILE *in = fopen(from, "rb"), *out = in ? fopen(to, "wb") : NULL;
    int ok = in && out;
    char buf[65536];
    size_t n;
    while (ok && (n = fread(buf, 1, sizeof buf, in)) > 0)
        ok = fwrite(buf, 1, n, out) == n;
    if (in)
        fclose(in);
    if (out && fclose(out) != 0)
        ok = 0;
    return ok ? 0 : -1;
}

static int v1_text_attr(hid_t loc, const char *name, const char *value)
{
    if (H5Aexists(loc, name) > 0 && H5Adelete(loc, name) < 0)
        return -1;
    hid_t t = H5Tcopy(H5T_C_S1), s = H5Screate(H5S_SCALAR);
    H5Tset_size(t, H5T_VARIABLE);
    H5Tset_cset(t, H5T_CSET_UTF8);
    hid_t a = H5Acreate2(loc, name, t, s, H5P_DEFAULT, H5P_DEFAULT);
    int rc = a >= 0 && H5Awrite(a, t, &value) >= 0 ? 0 : -1;
    if (a >= 0)
        H5Aclose(a);
    H5Sclose(s);
    H5Tclose(t);
    return rc;
}

static int v1_strings(hid_t loc, const char *name, size_t n, const char *const *v)
{
    hid_t t = H5Tcopy(H5T_C_S1);
    H5Tset_size(t, H5T_VARIABLE);
    H5Tset_cset(t, H5T_CSET_UTF8);
    hsize_t d = n;
    hid_t s = H5Screate_simple(1, &d, NULL);
    hid_t ds = H5Dcreate2(loc, name, t, s, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    int rc = ds >= 0 && H5Dwrite(ds, t, H5S_ALL, H5S_ALL, H5P_DEFAULT, v) >= 0 ? 0 : -1;
    if (ds >= 0)
        H5Dclose(ds);
    H5Sclose(s);
    H5Tclose(t);
    return rc;
}

/* An integer dataset of n values read into (or written from) v. */
static int v1_ints(hid_t loc, const char *name, int *v, size_t n, int write)
{
    hid_t d = H5Dopen2(loc, name, H5P_DEFAULT);
    if (d < 0)
        return -1;
    hid_t s = H5Dget_space(d);
    int rc = (size_t)H5Sget_simple_extent_npoints(s) == n ? 0 : -1;
    if (rc == 0)
        rc = (write ? H5Dwrite(d, H5T_NATIVE_INT, H5S_ALL, H5S_ALL, H5P_DEFAULT, v)
                    : H5Dread(d, H5T_NATIVE_INT, H5S_ALL, H5S_ALL, H5P_DEFAULT, v)) < 0 ? -1 : 0;
    H5Sclose(s);
    H5Dclose(d);
    return rc;
}

static size_t v1_length(hid_t loc, const char *name, int dim)
{
    hid_t d = H5Dopen2(loc, name, H5P_DEFAULT);
    if (d < 0)
        return 0;
    hid_t s = H5Dget_space(d);
    hsize_t dims[2] = {0, 0};
    int rank = H5Sget_simple_extent_dims(s, dims, NULL);
    H5Sclose(s);
    H5Dclose(d);
    return rank > dim ? (size_t)dims[dim] : 0;
}

/* The file's code table (phases/ or remnants/) as a map code -> index of
 * its key in the format-1 table `keys`; -1 where there is none. */
static int v1_code_map(hid_t f, const char *group, const char *const *keys, size_t nk, int map[256])
{
    for (int c = 0; c < 256; c++)
        map[c] = -1;
    hid_t g = H5Gopen2(f, group, H5P_DEFAULT);
    if (g < 0)
        return -1;
    size_t n = v1_length(g, "key", 0);
    int *code = malloc((n ? n : 1) * sizeof *code);
    char **key = calloc(n ? n : 1, sizeof *key);
    hid_t t = H5Tcopy(H5T_C_S1);
    H5Tset_size(t, H5T_VARIABLE);
    H5Tset_cset(t, H5T_CSET_UTF8);
    hid_t d = H5Dopen2(g, "key", H5P_DEFAULT);
    int rc = n && code && key && d >= 0 && v1_ints(g, "code", code, n, 0) == 0 &&
                     H5Dread(d, t, H5S_ALL, H5S_ALL, H5P_DEFAULT, key) >= 0
                 ? 0
                 : -1;
    for (size_t i = 0; i < n && rc == 0; i++) {
        if (code[i] < 0 || code[i] > 255 || !key[i])
            rc = -1;
        for (size_t k = 0; k < nk && rc == 0; k++)
            if (strcmp(key[i], keys[k]) == 0)
                map[code[i]] = (int)k;
    }
    /* unknown (phase 0) has no entry in phase_keys: 0.1 never stored it */
    if (key)
        for (size_t i = 0; i < n; i++)
            free(key[i]);
    if (d >= 0)
        H5Dclose(d);
    H5Tclose(t);
    free(key);
    free(code);
    H5Gclose(g);
    return rc;
}

static int v1_group(hid_t gr, const int *phase_map, const int *remnant_map)
{
    if (H5Arename(gr, "z", "Z") < 0)
        return -1;
    size_t nm = v1_length(gr, "initial_mass_msun", 0), J = v1_length(gr, "phase", 1);
    int *n_eep = malloc((nm ? nm : 1) * sizeof *n_eep), *v = malloc((nm > 0 && J > 0 ? nm * J : 1) * sizeof *v);
    int rc = nm && J && n_eep && v ? 0 : -1;
    if (rc == 0)
        rc = v1_ints(gr, "n_eep", n_eep, nm, 0);
    if (rc == 0)
        rc = v1_ints(gr, "remnant", v, nm, 0);
    for (size_t i = 0; i < nm && rc == 0; i++) {
        int c = v[i] >= 0 && v[i] < 256 ? remnant_map[v[i]] : -1;
        v[i] = c;
        rc = c < 0 ? -1 : 0;
    }
    if (rc == 0)
        rc = v1_ints(gr, "remnant", v, nm, 1);
    if (rc == 0)
        rc = v1_ints(gr, "phase", v, nm * J, 0);
    for (size_t i = 0; i < nm && rc == 0; i++) {
        for (size_t j = 0; j < J && rc == 0; j++) {
            int *p = &v[i * J + j];
            if (j >= (size_t)n_eep[i]) {
                *p = -1;
                continue;
            }
            *p = *p >= 0 && *p < 256 ? phase_map[*p] : -1;
            rc = *p < 0 ? -1 : 0;
        }
    }
    if (rc == 0)
        rc = v1_ints(gr, "phase", v, nm * J, 1);
    for (size_t k = 0; k < sizeof v1_names / sizeof v1_names[0] && rc == 0; k++) {
        if (H5Lexists(gr, v1_names[k].v2, H5P_DEFAULT) <= 0)
            continue; /* route_boundary_mass_msun of a one-route grid */
        rc = H5Lmove(gr, v1_names[k].v2, gr, v1_names[k].v1, H5P_DEFAULT, H5P_DEFAULT) < 0 ? -1 : 0;
        hid_t d = rc == 0 ? H5Dopen2(gr, v1_names[k].v1, H5P_DEFAULT) : -1;
        if (d < 0)
            rc = -1;
        if (rc == 0 && H5Aexists(d, "long_name") > 0 && H5Adelete(d, "long_name") < 0)
            rc = -1;
        if (rc == 0)
            rc = v1_text_attr(d, "units", v1_names[k].units_v1);
        if (d >= 0)
            H5Dclose(d);
    }
    free(n_eep);
    free(v);
    return rc;
}

int synth_downgrade_v1(const char *v2_path, const char *v1_path)
{
    if (copy_file(v2_path, v1_path) != 0)
        return -1;
    hid_t f = H5Fopen(v1_path, H5F_ACC_RDWR, H5P_DEFAULT);
    if (f < 0)
        return -1;
    int phase_map[256], remnant_map[256];
    int rc = v1_code_map(f, "phases", v1_phase_keys, V1_NP, phase_map);
    if (rc == 0)
        rc = v1_code_map(f, "remnants", v1_remnant_keys, V1_NR, remnant_map);
    if (rc == 0)
        rc = H5Ldelete(f, "phases", H5P_DEFAULT) < 0 || H5Ldelete(f, "remnants", H5P_DEFAULT) < 0 ? -1 : 0;
    if (rc == 0)
        rc = v1_strings(f, "phase_keys", V1_NP, v1_phase_keys);
    if (rc == 0)
        rc = v1_strings(f, "remnant_keys", V1_NR, v1_remnant_keys);
    if (rc == 0) {
        int one = 1;
        hid_t a = H5Aopen(f, "format_version", H5P_DEFAULT);
        rc = a >= 0 && H5Awrite(a, H5T_NATIVE_INT, &one) >= 0 ? 0 : -1;
        if (a >= 0)
            H5Aclose(a);
    }
    if (rc == 0)
        rc = v1_text_attr(f, "created_by", "hrtrail 0.1.0");
    for (int iz = 0; rc == 0; iz++) {
        char name[48];
        snprintf(name, sizeof name, "metallicity/%d", iz);
        if (H5Lexists(f, name, H5P_DEFAULT) <= 0) {
            rc = iz > 0 ? 0 : -1;
            break;
        }
        hid_t gr = H5Gopen2(f, name, H5P_DEFAULT);
        rc = gr >= 0 ? v1_group(gr, phase_map, remnant_map) : -1;
        if (gr >= 0)
            H5Gclose(gr);
    }
    if (H5Fclose(f) < 0)
        rc = -1;
    if (rc != 0)
        remove(v1_path);
    return rc;
}

int synth_builder_like(const hrt_grid *g, hrt_builder **b, hrt_error *err)
{
    size_t nr = hrt_grid_n_routes(g);
    const char *names[8][32];
    int segs[8][32];
    hrt_route_spec rs[8];
    if (nr > 8)
        return HRT_E_INVALID;
    for (size_t r = 0; r < nr; r++) {
        size_t nk = hrt_grid_route_n_keypoints(g, r);
        if (nk > 32)
            return HRT_E_INVALID;
        for (size_t i = 0; i < nk; i++) {
            names[r][i] = hrt_grid_keypoint_name(g, r, i);
            if (i + 1 < nk)
                segs[r][i] = (int)(hrt_grid_keypoint_eep(g, r, i + 1) - hrt_grid_keypoint_eep(g, r, i));
        }
        rs[r] = (hrt_route_spec){hrt_grid_route_name(g, r), nk, names[r], segs[r]};
    }
    return hrt_builder_new(nr, rs, hrt_grid_z_ref(g), b, err);
}

int synth_copy_track(const hrt_grid *g, size_t iz, size_t im, hrt_builder *b, hrt_error *err)
{
    double z = hrt_grid_z(g, iz), m = hrt_grid_mass(g, iz, im);
    hrt_star *s;
    int rc = hrt_star_new(g, m, z, &s, err);
    if (rc != HRT_OK)
        return rc;
    size_t n = hrt_star_n_eep(s);
    double *c = malloc(6 * n * sizeof *c), rm = 0;
    int *ph = malloc(n * sizeof *ph), rk = 0;
    rc = c && ph ? hrt_star_remnant(s, &rk, &rm) : HRT_E_NOMEM;
    for (size_t j = 0; rc == HRT_OK && j < n; j++) {
        hrt_state st;
        rc = hrt_star_eep_state(s, j, &st);
        c[j] = log10(st.age_yr), c[n + j] = st.log_l_lsun, c[2 * n + j] = st.log_teff_k;
        c[3 * n + j] = st.mass_msun, c[4 * n + j] = st.he_core_mass_msun, c[5 * n + j] = st.co_core_mass_msun;
        ph[j] = st.phase;
    }
    if (rc == HRT_OK) {
        hrt_track_data d = {.initial_mass_msun = m, .route = hrt_grid_track_route(g, iz, im), .remnant = rk,
                            .remnant_mass_msun = rm, .n = n, .log_age_yr = c, .log_l_lsun = c + n,
                            .log_teff_k = c + 2 * n, .mass_msun = c + 3 * n, .he_core_mass_msun = c + 4 * n,
                            .co_core_mass_msun = c + 5 * n, .phase = ph};
        rc = hrt_builder_add_eep_track(b, z, &d, err);
    }
    free(c);
    free(ph);
    hrt_star_free(s);
    return rc;
}
