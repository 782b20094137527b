/* Extra per-EEP quantities: declared and added through the builder, written,
 * read back, and interpolated exactly as log L on an exact-answer grid
 * (the synthetic functions of synth.c), from several threads too. */
#include <check.h>
#include <math.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include <hdf5.h>

#include "hrtrail.h"
#include "synth.h"

#define Z_REF 0.02
/* Interpolation reproduces a function linear in log mass, EEP and [Fe/H]
 * exactly; what is left is rounding (absolute, in the function's unit). */
#define TOL_EXACT 1e-11

/* The exact extra: linear in x = log10 M, e = EEP fraction, y = [Fe/H]. */
static double lin_extra(int route, double x, double e, double y) { return 1.0 + 0.5 * x + 0.3 * e - 0.2 * y + 0.1 * route; }

static char grid_path[256], plain_path[256];

/* The synthetic grid of synth_write() with two extras: a copy of the log L
 * column ("copy_log_l") and the linear function ("lin_q"), declared in the
 * order lin_q, copy_log_l (the file lists them by name). */
static int write_extra_grid(const synth_spec *s, const char *path, hrt_error *err)
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
    rc = hrt_builder_declare_extra(b, "lin_q", "erg", "a linear test function", err);
    if (!rc)
        rc = hrt_builder_declare_extra(b, "copy_log_l", "dex(solLum)", "log L again", err);
    int nmax = nj[1];
    double *buf = malloc(8 * (size_t)nmax * sizeof(double));
    int *ph = malloc((size_t)nmax * sizeof(int));
    for (int iz = 0; iz < s->n_z && rc == 0; iz++) {
        double z = synth_z(s, iz), y = synth_feh(z);
        for (int route = 0; route < 2 && rc == 0; route++) {
            int n = route ? s->n_high : s->n_low;
            double lo = route ? log10(s->mass_b) + 0.02 : log10(s->mass_lo);
            double hi = route ? log10(s->mass_hi) : log10(s->mass_b) - 0.02;
            for (int i = 0; i < n && rc == 0; i++) {
                double x = lo + (hi - lo) * (n > 1 ? (double)i / (n - 1) : 0.0);
                int J = nj[route];
                double *la = buf, *ll = buf + nmax, *lt = buf + 2 * nmax, *m = buf + 3 * nmax;
                double *he = buf + 4 * nmax, *co = buf + 5 * nmax, *xl = buf + 6 * nmax;
                for (int j = 0; j < J; j++) {
                    double e = (double)j / (J - 1);
                    la[j] = synth_log_age(route, x, e, y);
                    ll[j] = synth_log_l(route, x, e, y);
                    lt[j] = synth_log_teff(route, x, e, y);
                    m[j] = synth_mass(route, x, e, y);
                    he[j] = 0.1 * pow(10.0, x) * e;
                    co[j] = 0.05 * pow(10.0, x) * e * e;
                    ph[j] = synth_phase(route, j, J);
                    xl[j] = lin_extra(route, x, e, y);
                }
                hrt_track_data t = {pow(10.0, x), route, route ? HRT_REMNANT_CO_WD : HRT_REMNANT_HE_WD,
                                    synth_remnant_mass(route, x, y), (size_t)J, la, ll, lt, NULL, m, he, co, ph,
                                    0, NULL};
                const double *cols[2] = {xl, ll};
                rc = hrt_builder_add_eep_track_extra(b, z, &t, 2, cols, err);
            }
        }
        double bnd = s->mass_b;
        if (rc == 0)
            rc = hrt_builder_set_route_boundaries(b, z, &bnd, err);
    }
    if (rc == 0)
        rc = hrt_builder_write(b, path, err);
    free(buf);
    free(ph);
    hrt_builder_free(b);
    return rc;
}

static const synth_spec SPEC = {8, 7, 4, 1, 0, 0.6, 1.4, 6.0};

static void setup_grids(void)
{
    snprintf(grid_path, sizeof grid_path, "/tmp/hrt_extra_%d.h5", (int)getpid());
    snprintf(plain_path, sizeof plain_path, "/tmp/hrt_extra_plain_%d.h5", (int)getpid());
    hrt_error e;
    ck_assert_msg(write_extra_grid(&SPEC, grid_path, &e) == HRT_OK, "%s", e.message);
    ck_assert_msg(synth_write(&SPEC, plain_path, &e) == HRT_OK, "%s", e.message);
}

static void teardown_grids(void)
{
    unlink(grid_path);
    unlink(plain_path);
}

/* Exact extra at a state: e = EEP fraction of the state's route. */
static double expected_lin(const hrt_grid *g, const hrt_state *s)
{
    double J = (double)hrt_grid_route_n_eep(g, (size_t)s->route);
    return lin_extra(s->route, log10(s->initial_mass_msun), s->eep / (J - 1.0), synth_feh(s->z));
}

START_TEST(test_declared)
{
    hrt_grid *g;
    hrt_error e;
    ck_assert_msg(hrt_grid_open(grid_path, &g, &e) == HRT_OK, "%s", e.message);
    ck_assert_uint_eq(hrt_grid_extra_count(g), 2);
    /* name order in the file */
    ck_assert_str_eq(hrt_grid_extra_name(g, 0), "copy_log_l");
    ck_assert_str_eq(hrt_grid_extra_name(g, 1), "lin_q");
    ck_assert_str_eq(hrt_grid_extra_unit(g, 0), "dex(solLum)");
    ck_assert_str_eq(hrt_grid_extra_unit(g, 1), "erg");
    ck_assert_str_eq(hrt_grid_extra_meaning(g, 1), "a linear test function");
    ck_assert_ptr_null(hrt_grid_extra_name(g, 2));
    ck_assert_int_eq(hrt_grid_extra_index(g, "lin_q"), 1);
    ck_assert_int_eq(hrt_grid_extra_index(g, "log_l_lsun"), -1);
    ck_assert_int_eq(hrt_grid_extra_index(g, NULL), -1);
    hrt_grid_close(g);
    /* a grid without extras */
    ck_assert_int_eq(hrt_grid_open(plain_path, &g, &e), HRT_OK);
    ck_assert_uint_eq(hrt_grid_extra_count(g), 0);
    hrt_state s;
    double v = 0.0, age = 1e9, m = 1.0;
    ck_assert_int_eq(hrt_eval(g, 1, &m, NULL, 0.01, &age, &s, NULL), HRT_OK);
    ck_assert_int_eq(hrt_state_extra(g, &s, 1, NULL, &v, &e), HRT_E_INVALID);
    ck_assert_int_eq(hrt_state_extra(g, &s, 0, NULL, NULL, &e), HRT_OK);
    hrt_grid_close(g);
}
END_TEST

/* Random stars over the grid with every interpolation type: the linear
 * extra is exact, the copy of log L equals the state's log L. */
START_TEST(test_exact)
{
    int interp = _i;
    hrt_grid *g;
    hrt_error e;
    ck_assert_msg(hrt_grid_open_with(grid_path, interp, &g, &e) == HRT_OK, "%s", e.message);
    unsigned seed = 12345u;
    int n_ok = 0;
    double worst_lin = 0.0, worst_copy = 0.0;
    for (int k = 0; k < 3000; k++) {
        double m = 0.6 * pow(10.0, log10(6.0 / 0.6) * rand_r(&seed) / (double)RAND_MAX);
        double zlo, zhi;
        hrt_grid_z_range(g, &zlo, &zhi);
        double z = zlo * pow(zhi / zlo, rand_r(&seed) / (double)RAND_MAX);
        double age = pow(10.0, 7.0 + 4.0 * rand_r(&seed) / (double)RAND_MAX);
        hrt_state s;
        double v[2];
        int rc = hrt_extra_at(g, m, z, age, 2, NULL, v, &s, &e);
        if (rc != HRT_OK)
            continue;
        if (!isfinite(s.eep)) {
            ck_assert(isnan(v[0]) && isnan(v[1]));
            continue;
        }
        n_ok++;
        double dl = fabs(v[1] - expected_lin(g, &s)), dc = fabs(v[0] - s.log_l_lsun);
        worst_lin = dl > worst_lin ? dl : worst_lin;
        worst_copy = dc > worst_copy ? dc : worst_copy;
        /* chosen by index, in another order */
        size_t idx[2] = {1, 0};
        double w[2];
        ck_assert_int_eq(hrt_state_extra(g, &s, 2, idx, w, &e), HRT_OK);
        ck_assert(w[0] == v[1] && w[1] == v[0]);
    }
    ck_assert_msg(n_ok > 1000, "only %d stars on tracks", n_ok);
    ck_assert_msg(worst_lin < TOL_EXACT, "linear extra off by %g (%s)", worst_lin, hrt_interp_name(interp));
    ck_assert_msg(worst_copy < TOL_EXACT, "copy of log L off by %g (%s)", worst_copy, hrt_interp_name(interp));
    hrt_grid_close(g);
}
END_TEST

/* hrt_star_at states give the same extras as hrt_eval's (bit for bit). */
START_TEST(test_star_states)
{
    hrt_grid *g;
    hrt_error e;
    ck_assert_int_eq(hrt_grid_open(grid_path, &g, &e), HRT_OK);
    hrt_star *st;
    ck_assert_int_eq(hrt_star_new(g, 2.3, 0.004, &st, &e), HRT_OK);
    for (int k = 0; k < 200; k++) {
        double age = pow(10.0, 7.0 + 3.5 * k / 200.0), m = 2.3;
        hrt_state a, b;
        hrt_star_at(st, age, &a);
        hrt_eval(g, 1, &m, NULL, 0.004, &age, &b, NULL);
        double va[2], vb[2];
        ck_assert_int_eq(hrt_state_extra(g, &a, 2, NULL, va, &e), HRT_OK);
        ck_assert_int_eq(hrt_state_extra(g, &b, 2, NULL, vb, &e), HRT_OK);
        ck_assert(memcmp(va, vb, sizeof va) == 0);
    }
    /* at the EEPs themselves, the file's own knots where a track lies */
    hrt_star_free(st);
    hrt_grid_close(g);
}
END_TEST

START_TEST(test_bad_requests)
{
    hrt_grid *g;
    hrt_error e;
    ck_assert_int_eq(hrt_grid_open(grid_path, &g, &e), HRT_OK);
    hrt_state s;
    double v[3], m = 1.0, age = 1e9;
    ck_assert_int_eq(hrt_eval(g, 1, &m, NULL, 0.01, &age, &s, NULL), HRT_OK);
    size_t bad[1] = {2};
    ck_assert_int_eq(hrt_state_extra(g, &s, 1, bad, v, &e), HRT_E_INVALID);
    ck_assert_int_eq(e.code, HRT_E_INVALID);
    ck_assert_int_eq(hrt_state_extra(g, &s, 3, NULL, v, &e), HRT_E_INVALID);
    ck_assert_int_eq(hrt_state_extra(NULL, &s, 1, NULL, v, &e), HRT_E_NULL);
    ck_assert_int_eq(hrt_state_extra(g, NULL, 1, NULL, v, &e), HRT_E_NULL);
    ck_assert_int_eq(hrt_extra_at(g, 100.0, 0.01, 1e9, 1, NULL, v, NULL, &e), HRT_E_MASS_RANGE);
    ck_assert(isnan(v[0]));
    /* before the first EEP and past the end: NaN, not a failure */
    age = 1.0;
    ck_assert_int_eq(hrt_extra_at(g, 1.0, 0.01, age, 2, NULL, v, &s, &e), HRT_OK);
    ck_assert(isnan(v[0]) && isnan(v[1]));
    ck_assert_int_eq(hrt_extra_at(g, 1.0, 0.01, 1e14, 2, NULL, v, &s, &e), HRT_OK);
    ck_assert(isnan(v[0]) && isnan(v[1]));
    hrt_grid_close(g);
}
END_TEST

START_TEST(test_builder_rules)
{
    const char *kp[] = {"start", "end"};
    int seg[] = {10};
    hrt_route_spec r = {"only", 2, kp, seg};
    hrt_builder *b;
    hrt_error e;
    ck_assert_int_eq(hrt_builder_new(1, &r, Z_REF, &b, &e), HRT_OK);
    ck_assert_int_eq(hrt_builder_declare_extra(b, "Bad", "", "x", &e), HRT_E_INVALID);
    ck_assert_int_eq(hrt_builder_declare_extra(b, "log_l_lsun", "", "x", &e), HRT_E_INVALID);
    ck_assert_int_eq(hrt_builder_declare_extra(b, "a/b", "", "x", &e), HRT_E_INVALID);
    ck_assert_int_eq(hrt_builder_declare_extra(b, "ok_1", "", "bad\ntext", &e), HRT_E_INVALID);
    ck_assert_int_eq(hrt_builder_declare_extra(b, "ok_1", "", "fine", &e), HRT_OK);
    ck_assert_int_eq(hrt_builder_declare_extra(b, "ok_1", "", "twice", &e), HRT_E_INVALID);
    ck_assert_uint_eq(hrt_builder_extra_count(b), 1);
    double la[11], ll[11], lt[11], m[11], he[11], co[11], xv[11];
    int ph[11];
    for (int j = 0; j < 11; j++) {
        la[j] = 9.0 + 0.01 * j;
        ll[j] = 0.1 * j;
        lt[j] = 3.7;
        m[j] = 1.0;
        he[j] = co[j] = 0.0;
        ph[j] = HRT_PHASE_MS;
        xv[j] = j;
    }
    hrt_track_data t = {1.0, 0, HRT_REMNANT_NONE, NAN, 11, la, ll, lt, NULL, m, he, co, ph, 0, NULL};
    ck_assert_int_eq(hrt_builder_add_eep_track(b, 0.01, &t, &e), HRT_E_INVALID);
    const double *cols[1] = {xv};
    ck_assert_int_eq(hrt_builder_add_eep_track_extra(b, 0.01, &t, 0, cols, &e), HRT_E_INVALID);
    xv[3] = NAN;
    ck_assert_int_eq(hrt_builder_add_eep_track_extra(b, 0.01, &t, 1, cols, &e), HRT_E_DOMAIN);
    xv[3] = 3.0;
    ck_assert_msg(hrt_builder_add_eep_track_extra(b, 0.01, &t, 1, cols, &e) == HRT_OK, "%s", e.message);
    ck_assert_int_eq(hrt_builder_declare_extra(b, "late", "", "after tracks", &e), HRT_E_INVALID);
    hrt_builder_free(b);
}
END_TEST

/* Raw tracks: the extras are resampled onto the EEPs as the standard
 * columns are, so a copy of log L stays equal to the EEP track's log L. */
START_TEST(test_raw_resample)
{
    const char *kp[] = {"start", "mid", "end"};
    int seg[] = {15, 20};
    hrt_route_spec r = {"only", 3, kp, seg};
    hrt_builder *b;
    hrt_error e;
    ck_assert_int_eq(hrt_builder_new(1, &r, Z_REF, &b, &e), HRT_OK);
    ck_assert_int_eq(hrt_builder_declare_extra(b, "l_copy", "dex(solLum)", "log L", &e), HRT_OK);
    enum { NS = 400 };
    static double la[NS], ll[NS], lt[NS], m[NS], he[NS], co[NS];
    static int ph[NS];
    for (int k = 0; k < 3; k++) {
        double mass = 1.0 + 0.5 * k;
        for (int s = 0; s < NS; s++) {
            double u = s / (NS - 1.0);
            la[s] = 10.0 - 2.5 * log10(mass) + 0.5 * u;
            ll[s] = 3.5 * log10(mass) + sin(3.0 * u) + 0.3 * u * u;
            lt[s] = 3.7 + 0.1 * cos(5.0 * u);
            m[s] = mass;
            he[s] = co[s] = 0.0;
            ph[s] = HRT_PHASE_MS;
        }
        size_t kps[3] = {0, 150, NS - 1};
        hrt_track_data t = {mass, 0, HRT_REMNANT_NONE, NAN, NS, la, ll, lt, NULL, m, he, co, ph, 3, kps};
        const double *cols[1] = {ll};
        ck_assert_msg(hrt_builder_add_track_extra(b, 0.01, &t, 1, cols, &e) == HRT_OK, "%s", e.message);
    }
    char path[256];
    snprintf(path, sizeof path, "/tmp/hrt_extra_raw_%d.h5", (int)getpid());
    ck_assert_msg(hrt_builder_write(b, path, &e) == HRT_OK, "%s", e.message);
    hrt_builder_free(b);
    hrt_grid *g;
    ck_assert_msg(hrt_grid_open(path, &g, &e) == HRT_OK, "%s", e.message);
    unlink(path);
    hrt_star *st;
    ck_assert_int_eq(hrt_star_new(g, 1.5, 0.01, &st, &e), HRT_OK);
    for (size_t j = 0; j < hrt_star_n_eep(st); j++) {
        hrt_state s;
        double v;
        ck_assert_int_eq(hrt_star_eep_state(st, j, &s), HRT_OK);
        ck_assert_int_eq(hrt_state_extra(g, &s, 1, NULL, &v, &e), HRT_OK);
        ck_assert_msg(fabs(v - s.log_l_lsun) < TOL_EXACT, "EEP %zu: %g vs %g", j, v, s.log_l_lsun);
    }
    hrt_star_free(st);
    hrt_grid_close(g);
}
END_TEST

/* A copy of the extra grid, changed by f(file), must be refused on open
 * with a message naming what is wrong. */
static void expect_refused(void (*change)(hid_t), const char *needle)
{
    char path[256];
    snprintf(path, sizeof path, "/tmp/hrt_extra_bad_%d.h5", (int)getpid());
    FILE *in = fopen(grid_path, "rb"), *out = fopen(path, "wb");
    ck_assert(in && out);
    char buf[65536];
    size_t k;
    while ((k = fread(buf, 1, sizeof buf, in)) > 0)
        ck_assert_uint_eq(fwrite(buf, 1, k, out), k);
    fclose(in);
    fclose(out);
    hid_t f = H5Fopen(path, H5F_ACC_RDWR, H5P_DEFAULT);
    ck_assert(f >= 0);
    change(f);
    H5Fclose(f);
    hrt_grid *g = NULL;
    hrt_error e;
    int rc = hrt_grid_open(path, &g, &e);
    unlink(path);
    ck_assert_msg(rc == HRT_E_FORMAT, "%s: opened with code %d (%s)", needle, rc, e.message);
    ck_assert_msg(strstr(e.message, needle) != NULL, "message '%s' lacks '%s'", e.message, needle);
    ck_assert_ptr_null(g);
}

static void drop_group_extra(hid_t f) { ck_assert(H5Ldelete(f, "metallicity/2/extra", H5P_DEFAULT) >= 0); }
static void drop_one_extra(hid_t f) { ck_assert(H5Ldelete(f, "metallicity/1/extra/lin_q", H5P_DEFAULT) >= 0); }
static void drop_units(hid_t f) { ck_assert(H5Adelete_by_name(f, "metallicity/0/extra/lin_q", "units", H5P_DEFAULT) >= 0); }

static void nan_value(hid_t f)
{
    hid_t d = H5Dopen2(f, "metallicity/3/extra/copy_log_l", H5P_DEFAULT);
    hid_t s = H5Dget_space(d);
    hsize_t start[2] = {2, 5}, count[2] = {1, 1};
    H5Sselect_hyperslab(s, H5S_SELECT_SET, start, NULL, count, NULL);
    hid_t m = H5Screate_simple(2, count, NULL);
    double v = NAN;
    ck_assert(H5Dwrite(d, H5T_NATIVE_DOUBLE, m, s, H5P_DEFAULT, &v) >= 0);
    H5Sclose(m);
    H5Sclose(s);
    H5Dclose(d);
}

START_TEST(test_reader_refuses)
{
    expect_refused(drop_group_extra, "metallicity/2/extra");
    expect_refused(drop_one_extra, "metallicity/1/extra");
    expect_refused(drop_units, "units");
    expect_refused(nan_value, "copy_log_l[2][5]");
}
END_TEST

/* The importer maps a user's columns to extra quantities: one by a map
 * entry (extra.NAME=COLUMN, extra.NAME.units=UNIT), one by
 * hrt_import_add_extra; a copy of the luminosity column must come out equal
 * to log L at every EEP, a linear function of log L exactly that function. */
START_TEST(test_import_extra)
{
    char dir[256];
    snprintf(dir, sizeof dir, "/tmp/hrt_extra_import_%d", (int)getpid());
    ck_assert_int_eq(mkdir(dir, 0700), 0);
    const char *kp[] = {"zams", "tams"};
    int seg[] = {40};
    hrt_route_spec r = {"only", 2, kp, seg};
    hrt_import *imp;
    hrt_error e;
    ck_assert_int_eq(hrt_import_new(&imp, &e), HRT_OK);
    ck_assert_msg(hrt_import_set_routes(imp, 1, &r, &e) == HRT_OK, "%s", e.message);
    ck_assert_msg(hrt_import_map(imp, "extra.l_copy=L_again extra.l_copy.units=dex(solLum)", &e) == HRT_OK, "%s",
                  e.message);
    ck_assert_int_eq(hrt_import_map(imp, "extra.Bad=x", &e), HRT_E_INVALID);
    ck_assert_int_eq(hrt_import_map(imp, "extra.nope.units=erg", &e), HRT_E_INVALID);
    ck_assert_msg(hrt_import_add_extra(imp, "twice_l", "Q2", "dex(solLum)", "twice log L plus one", &e) == HRT_OK,
                  "%s", e.message);
    ck_assert_uint_eq(hrt_import_n_extra(imp), 2);
    const double masses[] = {1.0, 1.3, 1.7, 2.2};
    for (int k = 0; k < 4; k++) {
        char path[320];
        snprintf(path, sizeof path, "%s/m%d.csv", dir, k);
        FILE *f = fopen(path, "w");
        ck_assert_ptr_nonnull(f);
        fprintf(f, "initial_mass_msun,age_yr,log_l_lsun,log_teff_k,keypoints,L_again,Q2\n");
        double m = masses[k];
        for (int s = 0; s < 200; s++) {
            double u = s / 199.0, ll = 4.0 * log10(m) + 0.4 * u + 0.1 * sin(6.0 * u);
            fprintf(f, "%.17g,%.17g,%.17g,%.17g,%s,%.17g,%.17g\n", m, 1e6 + 1e10 * pow(m, -2.5) * u, ll,
                    3.76 + 0.2 * log10(m) - 0.03 * u, s == 0 ? "zams" : s == 199 ? "tams" : "-", ll, 2.0 * ll + 1.0);
        }
        fclose(f);
        ck_assert_msg(hrt_import_add_file(imp, path, 0.014, &e) == HRT_OK, "%s", e.message);
    }
    char out[320];
    snprintf(out, sizeof out, "%s/grid.h5", dir);
    ck_assert_msg(hrt_import_run(imp, out, &e) == HRT_OK, "%s", e.message);
    hrt_import_free(imp);
    hrt_grid *g;
    ck_assert_msg(hrt_grid_open(out, &g, &e) == HRT_OK, "%s", e.message);
    ck_assert_uint_eq(hrt_grid_extra_count(g), 2);
    long kc = hrt_grid_extra_index(g, "l_copy"), kt = hrt_grid_extra_index(g, "twice_l");
    ck_assert(kc >= 0 && kt >= 0);
    ck_assert_str_eq(hrt_grid_extra_unit(g, (size_t)kc), "dex(solLum)");
    ck_assert_str_eq(hrt_grid_extra_meaning(g, (size_t)kc), "column L_again of the imported tables");
    ck_assert_str_eq(hrt_grid_extra_meaning(g, (size_t)kt), "twice log L plus one");
    hrt_star *st;
    ck_assert_int_eq(hrt_star_new(g, 1.5, 0.014, &st, &e), HRT_OK);
    for (size_t j = 0; j < hrt_star_n_eep(st); j++) {
        hrt_state s;
        hrt_star_eep_state(st, j, &s);
        size_t idx[2] = {(size_t)kc, (size_t)kt};
        double v[2];
        ck_assert_int_eq(hrt_state_extra(g, &s, 2, idx, v, &e), HRT_OK);
        ck_assert_msg(fabs(v[0] - s.log_l_lsun) < TOL_EXACT, "EEP %zu: %g vs %g", j, v[0], s.log_l_lsun);
        ck_assert_msg(fabs(v[1] - (2.0 * s.log_l_lsun + 1.0)) < TOL_EXACT, "EEP %zu: %g", j, v[1]);
    }
    hrt_star_free(st);
    hrt_grid_close(g);
    /* a table without the mapped column is a problem of the file */
    ck_assert_int_eq(hrt_import_new(&imp, &e), HRT_OK);
    ck_assert_int_eq(hrt_import_set_routes(imp, 1, &r, &e), HRT_OK);
    ck_assert_int_eq(hrt_import_add_extra(imp, "missing_q", "NoSuchColumn", NULL, NULL, &e), HRT_OK);
    char path0[320];
    snprintf(path0, sizeof path0, "%s/m0.csv", dir);
    ck_assert_int_eq(hrt_import_add_file(imp, path0, 0.014, &e), HRT_OK);
    ck_assert_int_ne(hrt_import_run(imp, NULL, &e), HRT_OK);
    ck_assert_msg(strstr(e.message, "NoSuchColumn") != NULL, "%s", e.message);
    hrt_import_free(imp);
    for (int k = 0; k < 4; k++) {
        char path[320];
        snprintf(path, sizeof path, "%s/m%d.csv", dir, k);
        unlink(path);
    }
    unlink(out);
    rmdir(dir);
}
END_TEST

/* Threads: many queries at once on one grid give each thread's answers
 * of a single-threaded run. */
typedef struct thr_arg {
    const hrt_grid *g;
    int seed;
    double sum;
    int fails;
} thr_arg;

static void *worker(void *p)
{
    thr_arg *a = p;
    unsigned seed = (unsigned)a->seed;
    a->sum = 0.0;
    for (int k = 0; k < 2000; k++) {
        double m = 0.6 + 5.0 * rand_r(&seed) / (double)RAND_MAX;
        double age = pow(10.0, 7.0 + 4.0 * rand_r(&seed) / (double)RAND_MAX);
        double v[2];
        hrt_error e;
        int rc = hrt_extra_at(a->g, m, 0.005, age, 2, NULL, v, NULL, &e);
        if (rc != HRT_OK)
            a->fails++;
        else if (isfinite(v[0]))
            a->sum += v[0] + v[1];
    }
    return NULL;
}

START_TEST(test_threads)
{
    hrt_grid *g;
    hrt_error e;
    ck_assert_int_eq(hrt_grid_open(grid_path, &g, &e), HRT_OK);
    enum { NT = 4 };
    thr_arg serial[NT], par[NT];
    pthread_t th[NT];
    /* the parallel queries go to a grid opened afresh: its extras are
     * prepared by whichever thread asks first, while the others wait */
    hrt_grid *fresh;
    ck_assert_int_eq(hrt_grid_open(grid_path, &fresh, &e), HRT_OK);
    for (int t = 0; t < NT; t++) {
        serial[t] = (thr_arg){g, 100 + t, 0.0, 0};
        worker(&serial[t]);
        par[t] = (thr_arg){fresh, 100 + t, 0.0, 0};
    }
    for (int t = 0; t < NT; t++)
        ck_assert_int_eq(pthread_create(&th[t], NULL, worker, &par[t]), 0);
    for (int t = 0; t < NT; t++)
        pthread_join(th[t], NULL);
    for (int t = 0; t < NT; t++) {
        ck_assert(par[t].sum == serial[t].sum);
        ck_assert_int_eq(par[t].fails, serial[t].fails);
    }
    hrt_grid_close(fresh);
    hrt_grid_close(g);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("extra");
    TCase *tc = tcase_create("extra");
    tcase_add_unchecked_fixture(tc, setup_grids, teardown_grids);
    tcase_set_timeout(tc, 120);
    tcase_add_test(tc, test_declared);
    tcase_add_loop_test(tc, test_exact, 0, HRT_INTERP_COUNT);
    tcase_add_test(tc, test_star_states);
    tcase_add_test(tc, test_bad_requests);
    tcase_add_test(tc, test_builder_rules);
    tcase_add_test(tc, test_raw_resample);
    tcase_add_test(tc, test_import_extra);
    tcase_add_test(tc, test_reader_refuses);
    tcase_add_test(tc, test_threads);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_set_fork_status(sr, CK_NOFORK);
    srunner_run_all(sr, CK_NORMAL);
    int nf = srunner_ntests_failed(sr);
    srunner_free(sr);
    return nf == 0 ? EXIT_SUCCESS : EXIT_FAILURE;
}
