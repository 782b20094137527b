/* The bad-input matrix (tests/README.md): every class of bad argument and
 * broken grid file gets its defined code and a message, and nothing
 * crashes.  test_core.c already covers the first classes it lists
 * (damaged_files, not_hdf5, bad_queries, builder_rejects); this program
 * covers the rest, case names as in the table.  It also checks that GSL's
 * process-wide error handler is neither called nor replaced by any of it. */
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include <gsl/gsl_errno.h>
#include <hdf5.h>

#include "hrtrail.h"
#include "synth.h"
#include "hard.h"

static int gsl_calls;
static void counting_handler(const char *reason, const char *file, int line, int gsl_errno)
{
    (void)reason;
    (void)file;
    (void)line;
    (void)gsl_errno;
    gsl_calls++;
}

static char dir[64], grid_path[96];
static int n_cases;
static hrt_grid *G;

#define CASE(name, cond, fmt, ...)                                                                             \
    do {                                                                                                       \
        n_cases++;                                                                                             \
        HARD_CHECK(cond, "[%s] " fmt, name, ##__VA_ARGS__);                                                    \
    } while (0)

static int msg_ok(const hrt_error *e, int rc) { return e->code == rc && strlen(e->message) > 8; }

/* ---- numbers ------------------------------------------------------------ */

typedef struct numcase {
    const char *name;
    double v;
    int code_mass, code_z, code_age; /* for hrt_eval with this value as mass, Z or age */
} numcase;

static void numbers(void)
{
    const double m_ok = 2.0, z_ok = hrt_grid_z(G, 1), a_ok = 1e8;
    const numcase c[] = {
        {"NaN", NAN, HRT_E_DOMAIN, HRT_E_DOMAIN, HRT_E_DOMAIN},
        {"+inf", INFINITY, HRT_E_DOMAIN, HRT_E_DOMAIN, HRT_E_DOMAIN},
        {"-inf", -INFINITY, HRT_E_DOMAIN, HRT_E_DOMAIN, HRT_E_DOMAIN},
        {"negative", -1.0, HRT_E_DOMAIN, HRT_E_DOMAIN, HRT_E_DOMAIN},
        {"zero", 0.0, HRT_E_DOMAIN, HRT_E_DOMAIN, HRT_OK},
        {"minus zero", -0.0, HRT_E_DOMAIN, HRT_E_DOMAIN, HRT_OK},
        {"smallest subnormal", 5e-324, HRT_E_MASS_RANGE, HRT_E_Z_RANGE, HRT_OK},
        {"tiny", 1e-300, HRT_E_MASS_RANGE, HRT_E_Z_RANGE, HRT_OK},
        {"one", 1.0, HRT_OK, HRT_E_Z_RANGE, HRT_OK},
        {"huge", 1e300, HRT_E_MASS_RANGE, HRT_E_Z_RANGE, HRT_OK},
        {"DBL_MAX", DBL_MAX, HRT_E_MASS_RANGE, HRT_E_Z_RANGE, HRT_OK},
    };
    for (size_t k = 0; k < sizeof c / sizeof c[0]; k++) {
        for (int which = 0; which < 3; which++) {
            double m = which == 0 ? c[k].v : m_ok, z = which == 1 ? c[k].v : z_ok, a = which == 2 ? c[k].v : a_ok;
            int want = which == 0 ? c[k].code_mass : which == 1 ? c[k].code_z : c[k].code_age;
            static const char *const what[3] = {"mass", "Z", "age"};
            hrt_state st;
            hrt_error e = {-1, ""};
            int rc = hrt_eval(G, 1, &m, &z, 0.0, &a, &st, &e);
            CASE(what[which], rc == want && st.status == rc, "hrt_eval, %s %s: code %d (%s), want %d", what[which],
                 c[k].name, rc, e.message, want);
            if (rc != HRT_OK) {
                CASE(what[which], msg_ok(&e, rc) && isnan(st.log_l_lsun), "%s %s: message '%s'", what[which], c[k].name,
                     e.message);
            } else if (!(st.flags & (HRT_FLAG_DARK | HRT_FLAG_NOT_MODELLED))) {
                CASE(what[which], isfinite(st.log_l_lsun) && isfinite(st.log_teff_k) && isfinite(st.log_r_rsun),
                     "%s %s: OK but log L %g, log Teff %g", what[which], c[k].name, st.log_l_lsun, st.log_teff_k);
            }
            if (which == 2)
                continue;
            /* the same through hrt_star_new and the grid's range functions */
            hrt_star *s = (hrt_star *)&s;
            int rs = hrt_star_new(G, m, z, &s, &e);
            CASE(what[which], rs == want && (rs == HRT_OK) == (s != NULL), "hrt_star_new, %s %s: %d, want %d",
                 what[which], c[k].name, rs, want);
            if (rs != HRT_OK)
                CASE(what[which], msg_ok(&e, rs), "hrt_star_new %s %s: message", what[which], c[k].name);
            hrt_star_free(rs == HRT_OK ? s : NULL);
            int route = -7;
            int rr = hrt_grid_route_of(G, m, z, &route);
            CASE(what[which], rr == want, "hrt_grid_route_of, %s %s: %d, want %d", what[which], c[k].name, rr, want);
            if (which == 1) {
                double lo, hi;
                int rm = hrt_grid_mass_range(G, z, &lo, &hi);
                CASE("Z", rm == want, "hrt_grid_mass_range, Z %s: %d, want %d", c[k].name, rm, want);
            }
        }
    }
    /* Isochrone ages and metallicities. */
    const struct {
        const char *name;
        double age, z;
        int code;
    } iso[] = {
        {"age NaN", NAN, z_ok, HRT_E_DOMAIN},      {"age +inf", INFINITY, z_ok, HRT_E_DOMAIN},
        {"age zero", 0.0, z_ok, HRT_E_DOMAIN},     {"age minus zero", -0.0, z_ok, HRT_E_DOMAIN},
        {"age negative", -1e9, z_ok, HRT_E_DOMAIN}, {"age subnormal", 5e-324, z_ok, HRT_E_BUFFER},
        {"age DBL_MAX", DBL_MAX, z_ok, HRT_E_BUFFER}, {"Z NaN", 1e9, NAN, HRT_E_DOMAIN},
        {"Z zero", 1e9, 0.0, HRT_E_DOMAIN},        {"Z one", 1e9, 1.0, HRT_E_Z_RANGE},
        {"Z tiny", 1e9, 1e-300, HRT_E_Z_RANGE},
    };
    for (size_t k = 0; k < sizeof iso / sizeof iso[0]; k++) {
        size_t n = 12345;
        hrt_error e = {-1, ""};
        int rc = hrt_isochrone(G, iso[k].age, iso[k].z, NULL, 0, &n, &e);
        /* An age before every star's first EEP or after every last one has
         * no points: cap 0 is then enough (HRT_OK, n = 0). */
        int ok = rc == iso[k].code || (iso[k].code == HRT_E_BUFFER && rc == HRT_OK && n == 0);
        CASE("isochrone", ok, "hrt_isochrone %s: %d (%s), want %d", iso[k].name, rc, e.message, iso[k].code);
        if (rc != HRT_OK && rc != HRT_E_BUFFER)
            CASE("isochrone", msg_ok(&e, rc), "hrt_isochrone %s: message", iso[k].name);
    }
}

/* ---- NULL pointers and sizes of zero ----------------------------------- */

static void nulls_and_zeros(void)
{
    hrt_state st;
    hrt_error e;
    double m = 2.0, z = hrt_grid_z(G, 1), a = 1e8, lo, hi, v;
    int i;
    size_t n;
    /* accessors of a NULL grid or star: neutral values, no crash */
    CASE("NULL grid", hrt_grid_n_z(NULL) == 0 && hrt_grid_n_routes(NULL) == 0 && isnan(hrt_grid_z(NULL, 0)) &&
                          isnan(hrt_grid_z_ref(NULL)) && hrt_grid_n_masses(NULL, 0) == 0 &&
                          isnan(hrt_grid_mass(NULL, 0, 0)) && hrt_grid_track_route(NULL, 0, 0) == -1 &&
                          hrt_grid_route_name(NULL, 0) == NULL && hrt_grid_keypoint_name(NULL, 0, 0) == NULL &&
                          hrt_grid_keypoint_eep(NULL, 0, 0) == -1 && isnan(hrt_grid_route_boundary(NULL, 0, 0)) &&
                          hrt_grid_attribute(NULL, "description") == NULL && hrt_grid_memory_bytes(NULL) == 0 &&
                          hrt_grid_interp(NULL) == -1 && hrt_grid_track_n_eep(NULL, 0, 0) == 0,
         "accessors of a NULL grid");
    CASE("NULL name", hrt_grid_attribute(G, NULL) == NULL, "hrt_grid_attribute(g, NULL)");
    CASE("out of range", isnan(hrt_grid_z(G, 999)) && hrt_grid_route_name(G, 99) == NULL &&
                             hrt_grid_keypoint_name(G, 0, 99) == NULL && isnan(hrt_grid_mass(G, 0, 9999)) &&
                             isnan(hrt_grid_route_boundary(G, 0, 5)),
         "accessors out of range");
    CASE("NULL out", hrt_grid_mass_range(G, z, NULL, &hi) == HRT_E_NULL && hrt_grid_mass_range(NULL, z, &lo, &hi) ==
                         HRT_E_NULL && hrt_grid_z_range(G, &lo, NULL) == HRT_E_NULL &&
                         hrt_grid_route_of(G, m, z, NULL) == HRT_E_NULL && hrt_grid_route_of(NULL, m, z, &i) == HRT_E_NULL,
         "range functions with NULL outputs");
    CASE("NULL star", hrt_star_n_eep(NULL) == 0 && hrt_star_route(NULL) == -1 && isnan(hrt_star_mass(NULL)) &&
                          isnan(hrt_star_z(NULL)) && isnan(hrt_star_end_age(NULL)) &&
                          hrt_star_keypoint_name(NULL, 0) == NULL && hrt_star_n_keypoints(NULL) == 0 &&
                          hrt_star_at(NULL, 1e9, &st) == HRT_E_NULL && hrt_star_eep_state(NULL, 0, &st) == HRT_E_NULL &&
                          hrt_star_keypoint_age(NULL, 0, &v) == HRT_E_NULL && hrt_star_remnant(NULL, &i, &v) == HRT_E_NULL &&
                          hrt_star_phases(NULL, NULL, 0, &n) == HRT_E_NULL,
         "functions of a NULL star");
    hrt_star *s = NULL;
    HARD_CHECK(hrt_star_new(G, m, z, &s, &e) == HRT_OK, "star");
    hrt_phase_span sp[2];
    CASE("NULL out", hrt_star_at(s, 1e9, NULL) == HRT_E_NULL && hrt_star_eep_state(s, 0, NULL) == HRT_E_NULL &&
                         hrt_star_keypoint_age(s, 0, NULL) == HRT_E_NULL && hrt_star_remnant(s, NULL, &v) == HRT_E_NULL &&
                         hrt_star_remnant(s, &i, NULL) == HRT_E_NULL && hrt_star_phases(s, sp, 2, NULL) == HRT_E_NULL &&
                         hrt_star_phases(s, NULL, 5, &n) == HRT_E_NULL,
         "star functions with NULL outputs");
    CASE("size zero", hrt_star_phases(s, NULL, 0, &n) == HRT_E_BUFFER && n > 0, "phases with capacity 0");
    CASE("size small", hrt_star_phases(s, sp, 1, &n) == HRT_E_BUFFER && n > 1, "phases with capacity 1");
    CASE("index past end", hrt_star_eep_state(s, hrt_star_n_eep(s), &st) == HRT_E_INVALID &&
                               hrt_star_keypoint_age(s, hrt_star_n_keypoints(s), &v) == HRT_E_INVALID &&
                               hrt_star_keypoint_name(s, 99) == NULL,
         "star indices one past the end");
    hrt_star_free(s);
    CASE("NULL isochrone", hrt_isochrone(NULL, 1e9, z, NULL, 0, &n, &e) == HRT_E_NULL &&
                               hrt_isochrone(G, 1e9, z, NULL, 0, NULL, &e) == HRT_E_NULL &&
                               hrt_isochrone(G, 1e9, z, NULL, 10, &n, &e) == HRT_E_NULL,
         "hrt_isochrone NULL grid, count, or output with capacity");
    CASE("NULL z array", hrt_eval(G, 1, &m, NULL, z, &a, &st, NULL) == HRT_OK, "hrt_eval with z NULL uses z_all");
    CASE("NULL err", hrt_eval(G, 1, &m, &z, 0.0, &a, &st, NULL) == HRT_OK && hrt_grid_open(NULL, NULL, NULL) == HRT_E_NULL,
         "NULL error report accepted");
    CASE("size zero", hrt_eval(G, 0, NULL, NULL, 0.0, NULL, NULL, &e) == HRT_OK, "hrt_eval of 0 stars");
    CASE("names", strcmp(hrt_strerror(-1), "unknown status code") == 0 && strcmp(hrt_phase_name(999), "unknown") == 0 &&
                      hrt_remnant_from_key(NULL) == -1 && hrt_interp_from_name(NULL) == -1 &&
                      hrt_phase_from_key("") == HRT_PHASE_UNKNOWN,
         "name functions with unknown values and NULL");
    CASE("NaN physics", isnan(hrt_wd_radius_rsun(NAN)) && isnan(hrt_wd_radius_rsun(0.0)) &&
                            isnan(hrt_wd_log_l(NAN, HRT_REMNANT_CO_WD, 0.0, 1e9)) &&
                            isnan(hrt_wd_log_l(0.6, HRT_REMNANT_CO_WD, NAN, 1e9)) &&
                            isnan(hrt_wd_log_l(0.6, HRT_REMNANT_CO_WD, 0.0, -1.0)),
         "white dwarf relations with NaN, zero or negative input");
    /* the builder */
    const char *kp[] = {"a", "b"}, *kp1[] = {"a"};
    int seg[] = {4}, seg0[] = {0}, seg_big[] = {100001};
    hrt_route_spec r = {"one", 2, kp, seg};
    hrt_builder *b = NULL;
    CASE("NULL builder", hrt_builder_new(1, NULL, 0.02, &b, &e) == HRT_E_NULL && hrt_builder_new(1, &r, 0.02, NULL, &e) ==
                             HRT_E_NULL && hrt_builder_add_track(NULL, 0.02, NULL, &e) == HRT_E_NULL &&
                             hrt_builder_add_eep_track(NULL, 0.02, NULL, &e) == HRT_E_NULL &&
                             hrt_builder_write(NULL, "x", &e) == HRT_E_NULL &&
                             hrt_builder_set_attribute(NULL, "a", "b", &e) == HRT_E_NULL &&
                             hrt_builder_set_route_boundaries(NULL, 0.02, &v, &e) == HRT_E_NULL,
         "builder functions with NULL");
    hrt_builder_free(NULL);
    hrt_route_spec r1 = {"one", 1, kp1, seg}, r0 = {"one", 2, kp, seg0}, rbig = {"one", 2, kp, seg_big},
                   rnull = {NULL, 2, kp, seg}, rdot = {"a.b", 2, kp, seg};
    CASE("builder layout", hrt_builder_new(1, &r1, 0.02, &b, &e) == HRT_E_INVALID &&
                               hrt_builder_new(1, &r0, 0.02, &b, &e) == HRT_E_INVALID &&
                               hrt_builder_new(1, &rbig, 0.02, &b, &e) == HRT_E_INVALID &&
                               hrt_builder_new(1, &rnull, 0.02, &b, &e) == HRT_E_INVALID &&
                               hrt_builder_new(1, &rdot, 0.02, &b, &e) == HRT_E_INVALID &&
                               hrt_builder_new(99, &r, 0.02, &b, &e) == HRT_E_INVALID,
         "route with 1 keypoint, 0 or 100001 samples, no name, a dot, 99 routes");
    CASE("builder z_ref", hrt_builder_new(1, &r, NAN, &b, &e) == HRT_E_DOMAIN && hrt_builder_new(1, &r, 0.0, &b, &e) ==
                              HRT_E_DOMAIN && hrt_builder_new(1, &r, 1.0, &b, &e) == HRT_E_DOMAIN,
         "z_ref NaN, 0, 1");
    HARD_CHECK(hrt_builder_new(1, &r, 0.02, &b, &e) == HRT_OK, "builder");
    char out[128];
    snprintf(out, sizeof out, "%s/empty.h5", dir);
    CASE("size zero", hrt_builder_write(b, out, &e) == HRT_E_INVALID && access(out, F_OK) != 0, "writing no tracks");
    CASE("builder attribute", hrt_builder_set_attribute(b, "", "x", &e) == HRT_E_INVALID &&
                                  hrt_builder_set_attribute(b, "z_ref", "x", &e) == HRT_E_INVALID &&
                                  hrt_builder_set_attribute(b, "a/b", "x", &e) == HRT_E_INVALID &&
                                  hrt_builder_set_attribute(b, "note", "", &e) == HRT_OK,
         "attribute names empty, reserved, with '/'; empty value accepted");
    double age[6] = {7, 7.1, 7.2, 7.3, 7.4, 7.5}, l[6] = {0}, t[6] = {3.7, 3.7, 3.7, 3.7, 3.7, 3.7},
           mm[6] = {1, 1, 1, 1, 1, 1}, c0[6] = {0};
    int ph[6] = {HRT_PHASE_MS, HRT_PHASE_MS, HRT_PHASE_MS, HRT_PHASE_MS, HRT_PHASE_MS, HRT_PHASE_MS};
    size_t kps[2] = {0, 5};
    struct {
        const char *name;
        hrt_track_data d;
        double z;
        int code;
    } tc[] = {
        {"track n 0", {1.0, 0, 0, NAN, 0, age, l, t, NULL, mm, c0, c0, ph, 2, kps}, 0.02, HRT_E_INVALID},
        {"track n 1", {1.0, 0, 0, NAN, 1, age, l, t, NULL, mm, c0, c0, ph, 2, kps}, 0.02, HRT_E_INVALID},
        {"0 keypoints", {1.0, 0, 0, NAN, 6, age, l, t, NULL, mm, c0, c0, ph, 0, kps}, 0.02, HRT_E_INVALID},
        {"keypoints NULL", {1.0, 0, 0, NAN, 6, age, l, t, NULL, mm, c0, c0, ph, 2, NULL}, 0.02, HRT_E_NULL},
        {"column NULL", {1.0, 0, 0, NAN, 6, age, NULL, t, NULL, mm, c0, c0, ph, 2, kps}, 0.02, HRT_E_NULL},
        {"phase NULL", {1.0, 0, 0, NAN, 6, age, l, t, NULL, mm, c0, c0, NULL, 2, kps}, 0.02, HRT_E_NULL},
        {"mass NaN", {NAN, 0, 0, NAN, 6, age, l, t, NULL, mm, c0, c0, ph, 2, kps}, 0.02, HRT_E_DOMAIN},
        {"mass -inf", {-INFINITY, 0, 0, NAN, 6, age, l, t, NULL, mm, c0, c0, ph, 2, kps}, 0.02, HRT_E_DOMAIN},
        {"mass zero", {0.0, 0, 0, NAN, 6, age, l, t, NULL, mm, c0, c0, ph, 2, kps}, 0.02, HRT_E_DOMAIN},
        {"Z NaN", {1.0, 0, 0, NAN, 6, age, l, t, NULL, mm, c0, c0, ph, 2, kps}, NAN, HRT_E_DOMAIN},
        {"Z zero", {1.0, 0, 0, NAN, 6, age, l, t, NULL, mm, c0, c0, ph, 2, kps}, 0.0, HRT_E_DOMAIN},
        {"Z one", {1.0, 0, 0, NAN, 6, age, l, t, NULL, mm, c0, c0, ph, 2, kps}, 1.0, HRT_E_DOMAIN},
        {"remnant kind 99", {1.0, 0, 99, 0.6, 6, age, l, t, NULL, mm, c0, c0, ph, 2, kps}, 0.02, HRT_E_INVALID},
        {"remnant mass NaN", {1.0, 0, HRT_REMNANT_CO_WD, NAN, 6, age, l, t, NULL, mm, c0, c0, ph, 2, kps}, 0.02,
         HRT_E_DOMAIN},
        {"white dwarf 2 Msun", {1.0, 0, HRT_REMNANT_CO_WD, 2.0, 6, age, l, t, NULL, mm, c0, c0, ph, 2, kps}, 0.02,
         HRT_E_DOMAIN},
    };
    for (size_t k = 0; k < sizeof tc / sizeof tc[0]; k++) {
        e.code = -1;
        int rc = hrt_builder_add_track(b, tc[k].z, &tc[k].d, &e);
        CASE("builder track", rc == tc[k].code && msg_ok(&e, rc), "add_track %s: %d (%s), want %d", tc[k].name, rc,
             e.message, tc[k].code);
    }
    double inf_col[6] = {0, 0, INFINITY, 0, 0, 0}, neg[6] = {1, 1, -0.5, 1, 1, 1};
    hrt_track_data d = {1.0, 0, 0, NAN, 6, age, inf_col, t, NULL, mm, c0, c0, ph, 2, kps};
    CASE("builder track", hrt_builder_add_track(b, 0.02, &d, &e) == HRT_E_DOMAIN && strstr(e.message, "log_l_lsun[2]"),
         "an infinite log L: %s", e.message);
    d.log_l_lsun = l;
    d.mass_msun = neg;
    CASE("builder track", hrt_builder_add_track(b, 0.02, &d, &e) == HRT_E_DOMAIN && strstr(e.message, "negative"),
         "a negative current mass: %s", e.message);
    double bnd[1] = {NAN};
    CASE("builder track", hrt_builder_add_track(b, 0.02, NULL, &e) == HRT_E_NULL &&
                              hrt_builder_set_route_boundaries(b, 0.02, NULL, &e) == HRT_E_NULL,
         "NULL track, NULL boundaries");
    (void)bnd;
    hrt_builder_free(b);
}

/* ---- files that are not grids ------------------------------------------- */

/* The bytes of the synthetic grid file. */
static unsigned char *grid_bytes(long *size)
{
    FILE *src = fopen(grid_path, "rb");
    fseek(src, 0, SEEK_END);
    *size = ftell(src);
    rewind(src);
    unsigned char *bytes = malloc((size_t)*size);
    HARD_CHECK(fread(bytes, 1, (size_t)*size, src) == (size_t)*size, "read");
    fclose(src);
    return bytes;
}

static void not_grids(void)
{
    char p[160];
    hrt_error e;
    hrt_grid *g;
    struct {
        const char *name;
        const char *path;
        int code;
    } c[] = {{"zero-byte file", "zero.h5", HRT_E_FORMAT},
             {"directory", ".", HRT_E_IO},
             {"named pipe", "pipe.h5", HRT_E_IO},
             {"device", "/dev/zero", HRT_E_IO},
             {"empty path", "", HRT_E_IO},
             {"text file", "text.h5", HRT_E_FORMAT}};
    snprintf(p, sizeof p, "%s/zero.h5", dir);
    fclose(fopen(p, "wb"));
    snprintf(p, sizeof p, "%s/pipe.h5", dir);
    HARD_CHECK(mkfifo(p, 0600) == 0, "mkfifo");
    snprintf(p, sizeof p, "%s/text.h5", dir);
    FILE *f = fopen(p, "w");
    fputs("initial_mass,age\n1.0,1e9\n", f);
    fclose(f);
    for (size_t k = 0; k < sizeof c / sizeof c[0]; k++) {
        if (c[k].path[0] == '/' || !c[k].path[0])
            snprintf(p, sizeof p, "%s", c[k].path);
        else
            snprintf(p, sizeof p, "%s/%s", dir, c[k].path);
        g = (hrt_grid *)&g;
        e.code = -1;
        int rc = hrt_grid_open(p, &g, &e); /* the pipe used to block here for ever */
        CASE("file", rc == c[k].code && g == NULL && msg_ok(&e, rc), "%s: %d (%s), want %d", c[k].name, rc, e.message,
             c[k].code);
    }
    snprintf(p, sizeof p, "%s/pipe.h5", dir);
    setenv("HRTRAIL_GRID", p, 1);
    CASE("file", hrt_grid_open(NULL, &g, &e) == HRT_E_IO, "HRTRAIL_GRID naming a pipe: %s", e.message);
    setenv("HRTRAIL_GRID", "/nonexistent/grid.h5", 1);
    unlink(p);
    /* truncated copies at several lengths */
    long size;
    unsigned char *bytes = grid_bytes(&size);
    const long cut[] = {8, 512, 2048, size / 2, size - 1024, size - 1};
    for (size_t k = 0; k < sizeof cut / sizeof cut[0]; k++) {
        snprintf(p, sizeof p, "%s/cut.h5", dir);
        f = fopen(p, "wb");
        fwrite(bytes, 1, (size_t)cut[k], f);
        fclose(f);
        e.code = -1;
        int rc = hrt_grid_open(p, &g, &e);
        CASE("truncated", rc == HRT_E_FORMAT && msg_ok(&e, rc), "truncated to %ld of %ld bytes: %d (%s)", cut[k], size,
             rc, e.message);
        if (rc == HRT_OK)
            hrt_grid_close(g);
        unlink(p);
    }
    /* the HDF5 signature followed by garbage */
    snprintf(p, sizeof p, "%s/sig.h5", dir);
    f = fopen(p, "wb");
    fwrite(bytes, 1, 8, f);
    for (int i = 0; i < 4096; i++)
        fputc((i * 131) & 0xff, f);
    fclose(f);
    CASE("truncated", hrt_grid_open(p, &g, &e) == HRT_E_FORMAT, "signature and garbage: %s", e.message);
    unlink(p);
    free(bytes);
    snprintf(p, sizeof p, "%s/zero.h5", dir);
    unlink(p);
    snprintf(p, sizeof p, "%s/text.h5", dir);
    unlink(p);
}

/* ---- damaged grids (what test_core's damaged_files does not cover) ------ */

static hid_t H5F;
static void del(const char *path) { H5Ldelete(H5F, path, H5P_DEFAULT); }
static void attr_del(const char *obj, const char *name) { H5Adelete_by_name(H5F, obj, name, H5P_DEFAULT); }
static void attr_text(const char *obj, const char *name, const char *value, int n)
{
    attr_del(obj, name);
    hid_t o = H5Oopen(H5F, obj, H5P_DEFAULT), t = H5Tcopy(H5T_C_S1);
    H5Tset_size(t, H5T_VARIABLE);
    hsize_t d = (hsize_t)n;
    hid_t s = n == 1 ? H5Screate(H5S_SCALAR) : H5Screate_simple(1, &d, NULL);
    const char *v[2] = {value, value};
    hid_t a = H5Acreate2(o, name, t, s, H5P_DEFAULT, H5P_DEFAULT);
    H5Awrite(a, t, v);
    H5Aclose(a);
    H5Sclose(s);
    H5Tclose(t);
    H5Oclose(o);
}
static void attr_num(const char *obj, const char *name, hid_t type, double value)
{
    attr_del(obj, name);
    hid_t o = H5Oopen(H5F, obj, H5P_DEFAULT), s = H5Screate(H5S_SCALAR);
    hid_t a = H5Acreate2(o, name, type, s, H5P_DEFAULT, H5P_DEFAULT);
    H5Awrite(a, H5T_NATIVE_DOUBLE, &value);
    H5Aclose(a);
    H5Sclose(s);
    H5Oclose(o);
}
static void ds_num(const char *path, hid_t type, int rank, hsize_t d0, hsize_t d1, double fill)
{
    del(path);
    hsize_t d[2] = {d0, d1};
    hid_t s = H5Screate_simple(rank, d, NULL);
    hid_t ds = H5Dcreate2(H5F, path, type, s, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    size_t n = (size_t)(d0 * (rank > 1 ? d1 : 1));
    double *v = malloc((n ? n : 1) * sizeof *v);
    for (size_t i = 0; i < n; i++)
        v[i] = fill;
    if (n)
        H5Dwrite(ds, H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, v);
    free(v);
    H5Dclose(ds);
    H5Sclose(s);
}
static void ds_strings(const char *path, int n, const char *const *v)
{
    del(path);
    hid_t t = H5Tcopy(H5T_C_S1);
    H5Tset_size(t, H5T_VARIABLE);
    hsize_t d = (hsize_t)n;
    hid_t s = H5Screate_simple(1, &d, NULL);
    hid_t ds = H5Dcreate2(H5F, path, t, s, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    H5Dwrite(ds, t, H5S_ALL, H5S_ALL, H5P_DEFAULT, v);
    H5Dclose(ds);
    H5Sclose(s);
    H5Tclose(t);
}
static void elem(const char *path, hsize_t i, hsize_t j, double v)
{
    hid_t d = H5Dopen2(H5F, path, H5P_DEFAULT), s = H5Dget_space(d);
    int rank = H5Sget_simple_extent_ndims(s);
    hsize_t start[2] = {i, j}, cnt[2] = {1, 1};
    H5Sselect_hyperslab(s, H5S_SELECT_SET, start, NULL, cnt, NULL);
    hid_t ms = H5Screate_simple(rank, cnt, NULL);
    H5Dwrite(d, H5T_NATIVE_DOUBLE, ms, s, H5P_DEFAULT, &v);
    H5Sclose(ms);
    H5Sclose(s);
    H5Dclose(d);
}

/* The synthetic grid: routes "low" (51 EEPs) and "high" (61), 9 + 11
 * tracks per group, 4 groups; metallicity/0 track 0 is on route low. */
#define M0 "metallicity/0/"
static void d_format_value(void) { attr_text("/", "format", "some-other-grid", 1); }
static void d_format_int(void) { attr_num("/", "format", H5T_STD_I32LE, 1); }
static void d_format_array(void) { attr_text("/", "format", "hrtrail-track-grid", 2); }
static void d_version_text(void) { attr_text("/", "format_version", "1", 1); }
static void d_version_float(void) { attr_num("/", "format_version", H5T_IEEE_F64LE, 1.5); }
static void d_version_zero(void) { attr_num("/", "format_version", H5T_STD_I32LE, 0); }
static void d_version_missing(void) { attr_del("/", "format_version"); }
static void d_zref_text(void) { attr_text("/", "z_ref", "0.02", 1); }
static void d_zref_nan(void) { attr_num("/", "z_ref", H5T_IEEE_F64LE, NAN); }
static void d_zref_zero(void) { attr_num("/", "z_ref", H5T_IEEE_F64LE, 0.0); }
static void d_zref_two(void) { attr_num("/", "z_ref", H5T_IEEE_F64LE, 2.0); }
static void d_zref_subnormal(void) { attr_num("/", "z_ref", H5T_IEEE_F64LE, 4e-313); }
/* phases/ and remnants/: the codes of HRT_PHASE_LIST and HRT_REMNANT_LIST
 * in list order, with their keys and names. */
static void code_table(const char *group, int remnants, const char *replace_key, int at, int drop)
{
    const char *k[64];
    double c[64];
    int n = 0;
    for (size_t i = 0; i < (remnants ? HRT_REMNANT_N : HRT_PHASE_N); i++) {
        int code = remnants ? hrt_remnant_code(i) : hrt_phase_code(i);
        if (code == drop)
            continue;
        k[n] = n == at && replace_key ? replace_key : remnants ? hrt_remnant_key(code) : hrt_phase_key(code);
        c[n++] = code;
    }
    char path[64];
    snprintf(path, sizeof path, "%s/key", group);
    ds_strings(path, n, k);
    snprintf(path, sizeof path, "%s/code", group);
    del(path);
    hsize_t d = (hsize_t)n;
    hid_t s = H5Screate_simple(1, &d, NULL);
    hid_t ds = H5Dcreate2(H5F, path, H5T_STD_I32LE, s, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    H5Dwrite(ds, H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, c);
    H5Dclose(ds);
    H5Sclose(s);
}
static void d_phases_missing(void) { del("phases"); }
static void d_phase_key_missing(void) { del("phases/key"); }
static void d_phase_key_unknown(void) { code_table("phases", 0, "mystery", 3, -1); }
static void d_phase_key_numbers(void) { ds_num("phases/key", H5T_IEEE_F64LE, 1, HRT_PHASE_N, 0, 1.0); }
static void d_phase_code_float(void) { ds_num("phases/code", H5T_IEEE_F64LE, 1, HRT_PHASE_N, 0, 11.0); }
static void d_phase_code_short(void) { ds_num("phases/code", H5T_STD_I32LE, 1, 3, 0, 0.0); }
static void d_phase_code_other(void) { elem("phases/code", 4, 0, HRT_PHASE_TPAGB); } /* 'rgb' says 32 */
static void d_phase_code_negative(void) { elem("phases/code", 0, 0, -1); }
static void d_phase_code_huge(void) { elem("phases/code", 7, 0, 1e6); }
static void d_phase_not_listed(void) { code_table("phases", 0, NULL, -1, HRT_PHASE_CHEB); }
static void d_remnants_missing(void) { del("remnants"); }
static void d_remnant_key_unknown(void) { code_table("remnants", 1, "strange_star", 3, -1); }
static void d_remnant_code_other(void) { elem("remnants/code", 1, 0, HRT_REMNANT_NS); } /* 'he_wd' says 20 */
static void d_remnant_not_listed(void) { code_table("remnants", 1, NULL, -1, HRT_REMNANT_HE_WD); }
static void d_old_key_tables(void)
{
    /* format 1's tables beside format 2's data: the tables of format 2 are
     * what counts */
    del("phases");
    const char *k[] = {"pre_ms", "ms", "subgiant", "rgb", "cheb"};
    ds_strings("phase_keys", 5, k);
}
static void d_route_names_missing(void) { del("routes/names"); }
static void d_route_names_twice(void)
{
    const char *k[] = {"low", "low"};
    ds_strings("routes/names", 2, k);
}
static void d_route_group_missing(void) { del("routes/high"); }
static void d_keypoints_one(void)
{
    const char *k[] = {"start"};
    ds_strings("routes/low/keypoint_names", 1, k);
}
static void d_keypoint_eep0(void) { elem("routes/low/keypoint_eep", 0, 0, 1); }
static void d_segment_mismatch(void) { elem("routes/low/segment_samples", 1, 0, 29); }
static void d_segment_zero(void) { elem("routes/low/segment_samples", 0, 0, 0); }
static void d_mass_empty(void) { ds_num(M0 "initial_mass_msun", H5T_IEEE_F64LE, 1, 0, 0, 1.0); }
static void d_mass_2d(void) { ds_num(M0 "initial_mass_msun", H5T_IEEE_F64LE, 2, 20, 1, 1.0); }
static void d_mass_negative(void) { elem(M0 "initial_mass_msun", 0, 0, -0.3); }
static void d_mass_nan(void) { elem(M0 "initial_mass_msun", 3, 0, NAN); }
static void d_mass_text(void)
{
    const char *k[20];
    for (int i = 0; i < 20; i++)
        k[i] = "1.0";
    ds_strings(M0 "initial_mass_msun", 20, k);
}
static void d_mass_int(void) { ds_num(M0 "initial_mass_msun", H5T_STD_I32LE, 1, 20, 0, 1.0); }
static void d_route_float(void) { ds_num(M0 "route", H5T_IEEE_F64LE, 1, 20, 0, 0.0); }
static void d_route_negative(void) { elem(M0 "route", 0, 0, -1); }
static void d_route_five(void) { elem(M0 "route", 19, 0, 5); }
static void d_neep_one(void) { elem(M0 "n_eep", 4, 0, 1); }
static void d_remnant_index(void) { elem(M0 "remnant", 2, 0, 99); }
static void d_remnant_mass_nan(void) { elem(M0 "remnant_mass_msun", 2, 0, NAN); }
static void d_remnant_wd_heavy(void) { elem(M0 "remnant_mass_msun", 12, 0, 2.0); }
static void d_boundary_missing(void) { del(M0 "route_boundary_mass_msun"); }
static void d_boundary_nan(void) { elem(M0 "route_boundary_mass_msun", 0, 0, NAN); }
static void d_age_shape(void) { ds_num(M0 "log_age_yr", H5T_IEEE_F64LE, 2, 20, 60, 9.0); }
static void d_age_text(void)
{
    del(M0 "log_age_yr");
    hid_t t = H5Tcopy(H5T_C_S1);
    H5Tset_size(t, 8);
    hsize_t d[2] = {20, 61};
    hid_t s = H5Screate_simple(2, d, NULL);
    hid_t ds = H5Dcreate2(H5F, M0 "log_age_yr", t, s, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    H5Dclose(ds);
    H5Sclose(s);
    H5Tclose(t);
}
static void d_logl_compound(void)
{
    del(M0 "log_l_lsun");
    hid_t t = H5Tcreate(H5T_COMPOUND, 16);
    H5Tinsert(t, "a", 0, H5T_NATIVE_DOUBLE);
    H5Tinsert(t, "b", 8, H5T_NATIVE_DOUBLE);
    hsize_t d[2] = {20, 61};
    hid_t s = H5Screate_simple(2, d, NULL);
    hid_t ds = H5Dcreate2(H5F, M0 "log_l_lsun", t, s, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    H5Dclose(ds);
    H5Sclose(s);
    H5Tclose(t);
}
static void d_logr_missing(void) { del(M0 "log_r_rsun"); }
static void d_he_negative(void) { elem(M0 "he_core_mass_msun", 1, 5, -0.1); }
static void d_teff_inf(void) { elem(M0 "log_teff_k", 1, 5, INFINITY); }
static void d_mass_huge(void)
{
    ds_num(M0 "mass_msun", H5T_IEEE_F64LE, 2, 20, 61, 1e308);
    attr_text(M0 "mass_msun", "units", "solMass", 1);
}
static void d_logl_huge(void) { elem(M0 "log_l_lsun", 2, 7, 1e300); }
static void d_remnant_heavy(void) { elem(M0 "remnant_mass_msun", 15, 0, 100.0); }
static void d_units_wrong(void) { attr_text(M0 "log_teff_k", "units", "K", 1); }
static void d_units_v1(void) { attr_text(M0 "initial_mass_msun", "units", "Msun", 1); }
static void d_units_missing(void) { attr_del(M0 "log_l_lsun", "units"); }
static void d_units_number(void) { attr_num(M0 "log_age_yr", "units", H5T_IEEE_F64LE, 1.0); }
static void d_units_array(void) { attr_text(M0 "he_core_mass_msun", "units", "solMass", 2); }
static void d_units_case(void) { attr_text(M0 "remnant_mass_msun", "units", "solmass", 1); }
static void d_version_one(void) { attr_num("/", "format_version", H5T_STD_I32LE, 1); }
static void d_old_name(void) { H5Lmove(H5F, M0 "log_teff_k", H5F, M0 "log_Teff", H5P_DEFAULT, H5P_DEFAULT); }
static void d_z_missing(void) { attr_del("metallicity/2", "z"); }
static void d_z_text(void) { attr_text("metallicity/2", "z", "0.01", 1); }
static void d_z_nan(void) { attr_num("metallicity/2", "z", H5T_IEEE_F64LE, NAN); }
static void d_z_old(void) { H5Arename_by_name(H5F, "metallicity/2", "z", "Z", H5P_DEFAULT); }
static void d_z_zero(void) { attr_num("metallicity/0", "z", H5T_IEEE_F64LE, 0.0); }
static void d_group_gap(void) { H5Lmove(H5F, "metallicity/3", H5F, "metallicity/7", H5P_DEFAULT, H5P_DEFAULT); }
static void d_dangling_link(void)
{
    del(M0 "mass_msun");
    H5Lcreate_soft("/nowhere", H5F, M0 "mass_msun", H5P_DEFAULT, H5P_DEFAULT);
}
static void d_group_as_dataset(void)
{
    del(M0 "phase");
    hid_t g = H5Gcreate2(H5F, M0 "phase", H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    H5Gclose(g);
}
/* accepted: extra content and values outside the valid EEPs */
static void x_extra_attrs(void)
{
    attr_num("/", "extra_number", H5T_IEEE_F64LE, 42.0);
    attr_text("/", "provenance", "tests/hardening", 1);
    attr_text("/", "two_strings", "x", 2);
    attr_num("metallicity/1", "comment", H5T_STD_I32LE, 3);
}
static void x_extra_dataset(void)
{
    ds_num("notes", H5T_IEEE_F64LE, 1, 3, 0, 1.0);
    ds_num(M0 "extra_column", H5T_IEEE_F64LE, 2, 20, 61, 0.0);
    ds_num("phases/extra", H5T_STD_I32LE, 1, 2, 0, 7.0);
}
static void x_nan_padding(void)
{
    /* track 0 is on route low: EEPs 51..60 are padding */
    elem(M0 "log_l_lsun", 0, 55, 12345.0);
    elem(M0 "log_age_yr", 0, 55, -1.0);
    elem(M0 "phase", 0, 58, 77);
}
static void x_long_name(void) /* long_name is description, not schema */
{
    attr_del(M0 "log_l_lsun", "long_name");
    attr_text(M0 "mass_msun", "long_name", "anything at all", 1);
}
static void x_codes_reordered(void)
{
    /* the code tables in another order, with a fixed-length string type */
    del("phases/key");
    del("phases/code");
    hid_t t = H5Tcopy(H5T_C_S1);
    H5Tset_size(t, 12);
    char k[HRT_PHASE_N][12] = {{0}}; /* all 12 bytes written: padded with NULs */
    int c[HRT_PHASE_N];
    for (size_t i = 0; i < HRT_PHASE_N; i++) {
        c[i] = hrt_phase_code(HRT_PHASE_N - 1 - i);
        snprintf(k[i], sizeof k[i], "%s", hrt_phase_key(c[i]));
    }
    hsize_t d = HRT_PHASE_N;
    hid_t s = H5Screate_simple(1, &d, NULL);
    hid_t ds = H5Dcreate2(H5F, "phases/key", t, s, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    H5Dwrite(ds, t, H5S_ALL, H5S_ALL, H5P_DEFAULT, k);
    H5Dclose(ds);
    hid_t dcpl = H5Pcreate(H5P_DATASET_CREATE); /* numeric datasets carry checksums (FORMAT.md) */
    H5Pset_chunk(dcpl, 1, &d);
    H5Pset_fletcher32(dcpl);
    ds = H5Dcreate2(H5F, "phases/code", H5T_STD_I16LE, s, H5P_DEFAULT, dcpl, H5P_DEFAULT);
    H5Dwrite(ds, H5T_NATIVE_INT, H5S_ALL, H5S_ALL, H5P_DEFAULT, c);
    H5Dclose(ds);
    H5Pclose(dcpl);
    H5Sclose(s);
    H5Tclose(t);
}
static void d_no_checksum(void)
{
    /* the same values stored again without the Fletcher-32 filter */
    hsize_t d = HRT_PHASE_N;
    int c[HRT_PHASE_N];
    for (size_t i = 0; i < HRT_PHASE_N; i++)
        c[i] = hrt_phase_code(i);
    del("phases/code");
    hid_t s = H5Screate_simple(1, &d, NULL);
    hid_t ds = H5Dcreate2(H5F, "phases/code", H5T_STD_I32LE, s, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    H5Dwrite(ds, H5T_NATIVE_INT, H5S_ALL, H5S_ALL, H5P_DEFAULT, c);
    H5Dclose(ds);
    H5Sclose(s);
}
static void x_remnant_none(void) { elem(M0 "remnant", 1, 0, 0); } /* track 1 leaves no known remnant */
static void x_remnant_steep(void) { elem(M0 "remnant_mass_msun", 8, 0, 0.01); } /* last low-route track: 0.01 Msun WD */

typedef void (*damage_fn)(void);
static const struct {
    const char *name;
    damage_fn fn;
    int code;
    const char *needle;
} damages[] = {
    {"format: another name", d_format_value, HRT_E_FORMAT, "'format' is 'some-other-grid'"},
    {"format: an integer", d_format_int, HRT_E_FORMAT, "'format' is not text"},
    {"format: two strings", d_format_array, HRT_E_FORMAT, "single string"},
    {"format_version: text", d_version_text, HRT_E_FORMAT, "must be an integer"},
    {"format_version: 1.5", d_version_float, HRT_E_FORMAT, "must be an integer"},
    {"format_version: 0", d_version_zero, HRT_E_FORMAT, "not a valid version"},
    {"format_version: missing", d_version_missing, HRT_E_FORMAT, "'format_version' is missing"},
    {"z_ref: text", d_zref_text, HRT_E_FORMAT, "'z_ref' must be a number"},
    {"z_ref: NaN", d_zref_nan, HRT_E_FORMAT, "'z_ref': nan"},
    {"z_ref: 0", d_zref_zero, HRT_E_FORMAT, "'z_ref': 0"},
    {"z_ref: 2", d_zref_two, HRT_E_FORMAT, "'z_ref': 2"},
    {"z_ref: 4e-313 (subnormal)", d_zref_subnormal, HRT_E_FORMAT, "[Fe/H] = log10(0.001 / z_ref 4e-313) is not a finite"},
    {"format_version: 1", d_version_one, HRT_E_VERSION, "convert the file with 'hrtrail grid upgrade OLD NEW'"},
    {"phases: missing", d_phases_missing, HRT_E_FORMAT, "group 'phases' is missing"},
    {"phases: format 1's phase_keys instead", d_old_key_tables, HRT_E_FORMAT, "group 'phases' is missing"},
    {"phases/key: missing", d_phase_key_missing, HRT_E_FORMAT, "phases/key: dataset is missing"},
    {"phases/key: unknown key", d_phase_key_unknown, HRT_E_FORMAT,
     "phases/code[3]: key 'mystery' has code 20 in the file, but 'subgiant' in this library"},
    {"phases/key: numbers", d_phase_key_numbers, HRT_E_FORMAT, "phases/key: must hold strings"},
    {"phases/code: floating point", d_phase_code_float, HRT_E_FORMAT, "phases/code: must hold integers"},
    {"phases/code: shorter than phases/key", d_phase_code_short, HRT_E_FORMAT, "phases/code: dimension 0 is 3, expected 16"},
    {"phases/code: another phase's code", d_phase_code_other, HRT_E_FORMAT,
     "phases/code[4]: key 'rgb' has code 32 in the file, but 'tpagb' in this library"},
    {"phases/code: -1", d_phase_code_negative, HRT_E_FORMAT, "phases/code[0]: key 'unknown' has code -1 in the file, but 'no key'"},
    {"phases/code: 1e6", d_phase_code_huge, HRT_E_FORMAT, "phases/code[7]: key 'eagb' has code 1000000"},
    {"phases: a code the data use not listed", d_phase_not_listed, HRT_E_FORMAT,
     "metallicity/0/phase[9][50]: 30 is not a phase code of the file"},
    {"remnants: missing", d_remnants_missing, HRT_E_FORMAT, "group 'remnants' is missing"},
    {"remnants/key: unknown key", d_remnant_key_unknown, HRT_E_FORMAT,
     "remnants/code[3]: key 'strange_star' has code 12 in the file, but 'one_wd' in this library"},
    {"remnants/code: another kind's code", d_remnant_code_other, HRT_E_FORMAT,
     "remnants/code[1]: key 'he_wd' has code 20 in the file, but 'ns' in this library"},
    {"remnants: a code the data use not listed", d_remnant_not_listed, HRT_E_FORMAT,
     "metallicity/0/remnant[0]: 10 is not a remnant code of the file"},
    {"routes/names: missing", d_route_names_missing, HRT_E_FORMAT, "routes/names: dataset is missing"},
    {"routes/names: twice", d_route_names_twice, HRT_E_FORMAT, "appears twice"},
    {"route group: missing", d_route_group_missing, HRT_E_FORMAT, "'routes/high' is missing"},
    {"keypoint_names: one", d_keypoints_one, HRT_E_FORMAT, "at least 2 keypoints"},
    {"keypoint_eep[0]: 1", d_keypoint_eep0, HRT_E_FORMAT, "keypoint_eep[0]: must be 0"},
    {"segment_samples: mismatch", d_segment_mismatch, HRT_E_FORMAT, "does not follow"},
    {"segment_samples: 0", d_segment_zero, HRT_E_FORMAT, "segment_samples[0]: 0 is not in 1..65535"},
    {"initial_mass_msun: empty", d_mass_empty, HRT_E_FORMAT, "initial_mass_msun: unusable length 0"},
    {"initial_mass_msun: 2-D", d_mass_2d, HRT_E_FORMAT, "initial_mass_msun: expected 1 dimension"},
    {"initial_mass_msun: negative", d_mass_negative, HRT_E_FORMAT, "initial_mass_msun[0]: -0.3 is not a positive mass"},
    {"initial_mass_msun: NaN", d_mass_nan, HRT_E_FORMAT, "initial_mass_msun[3]: nan"},
    {"initial_mass_msun: text", d_mass_text, HRT_E_FORMAT, "initial_mass_msun: must hold floating-point numbers"},
    {"initial_mass_msun: integers", d_mass_int, HRT_E_FORMAT,
     "metallicity/0/initial_mass_msun: must hold floating-point numbers"},
    {"route: floating point", d_route_float, HRT_E_FORMAT, "metallicity/0/route: must hold integers"},
    {"route: -1", d_route_negative, HRT_E_FORMAT, "route[0]: -1 is not a route index"},
    {"route: 5", d_route_five, HRT_E_FORMAT, "route[19]: 5 is not a route index"},
    {"n_eep: 1", d_neep_one, HRT_E_FORMAT, "n_eep[4]: 1 is not in 2.."},
    {"remnant: code 99", d_remnant_index, HRT_E_FORMAT, "remnant[2]: 99 is not a remnant code of the file"},
    {"remnant_mass_msun: NaN", d_remnant_mass_nan, HRT_E_FORMAT, "remnant_mass_msun[2]: nan"},
    {"remnant_mass_msun: white dwarf of 2 Msun", d_remnant_wd_heavy, HRT_E_FORMAT,
     "remnant_mass_msun[12]: a white dwarf of 2"},
    {"route_boundary_mass_msun: missing", d_boundary_missing, HRT_E_FORMAT,
     "route_boundary_mass_msun: dataset is missing"},
    {"route_boundary_mass_msun: NaN", d_boundary_nan, HRT_E_FORMAT, "route_boundary_mass_msun[0]: nan"},
    {"log_age_yr: shape", d_age_shape, HRT_E_FORMAT, "log_age_yr: dimension 1 is 60, expected 61"},
    {"log_age_yr: text", d_age_text, HRT_E_FORMAT, "log_age_yr: must hold floating-point numbers"},
    {"log_l_lsun: compound", d_logl_compound, HRT_E_FORMAT, "log_l_lsun: must hold floating-point numbers"},
    {"log_r_rsun: missing", d_logr_missing, HRT_E_FORMAT, "log_r_rsun: dataset is missing"},
    {"a dataset under its format-1 name", d_old_name, HRT_E_FORMAT, "metallicity/0/log_teff_k: dataset is missing"},
    {"he_core_mass_msun: negative", d_he_negative, HRT_E_FORMAT, "he_core_mass_msun[1][5]: negative mass"},
    {"log_teff_k: infinite", d_teff_inf, HRT_E_FORMAT, "log_teff_k[1][5]: inf inside"},
    {"mass_msun: 1e308 everywhere", d_mass_huge, HRT_E_FORMAT,
     "mass_msun[0][0]: 1e+308 Msun exceeds 2 times the initial mass"},
    {"log_l_lsun: 1e300", d_logl_huge, HRT_E_FORMAT, "log_l_lsun[2][7]: 1e+300 is not a plausible log10 value"},
    {"remnant_mass_msun: 100 Msun", d_remnant_heavy, HRT_E_FORMAT, "remnant_mass_msun[15]: 100 Msun exceeds 2 times"},
    {"units: another unit", d_units_wrong, HRT_E_FORMAT, "metallicity/0/log_teff_k: units 'K', expected 'dex(K)'"},
    {"units: format 1's", d_units_v1, HRT_E_FORMAT, "metallicity/0/initial_mass_msun: units 'Msun', expected 'solMass'"},
    {"units: missing", d_units_missing, HRT_E_FORMAT, "metallicity/0/log_l_lsun attribute 'units' is missing"},
    {"units: a number", d_units_number, HRT_E_FORMAT, "metallicity/0/log_age_yr attribute 'units' is not text"},
    {"units: two strings", d_units_array, HRT_E_FORMAT, "metallicity/0/he_core_mass_msun attribute 'units' must be a single"},
    {"units: wrong case", d_units_case, HRT_E_FORMAT, "remnant_mass_msun: units 'solmass', expected 'solMass'"},
    {"z: missing", d_z_missing, HRT_E_FORMAT, "metallicity/2 attribute 'z' is missing"},
    {"z: text", d_z_text, HRT_E_FORMAT, "metallicity/2 attribute 'z' must be a number"},
    {"z: NaN", d_z_nan, HRT_E_FORMAT, "metallicity/2 attribute 'z': nan"},
    {"z: 0", d_z_zero, HRT_E_FORMAT, "metallicity/0 attribute 'z': 0"},
    {"z: named Z as in format 1", d_z_old, HRT_E_FORMAT, "metallicity/2 attribute 'z' is missing"},
    {"metallicity groups: gap", d_group_gap, HRT_E_FORMAT, "group 'metallicity/3' is missing"},
    {"dangling soft link", d_dangling_link, HRT_E_FORMAT, "metallicity/0/mass_msun: a soft or external link"},
    {"group where a dataset belongs", d_group_as_dataset, HRT_E_FORMAT, "metallicity/0/phase: not a dataset"},
    {"extra attributes (accepted)", x_extra_attrs, HRT_OK, NULL},
    {"extra datasets (accepted)", x_extra_dataset, HRT_OK, NULL},
    {"values after the valid EEPs (accepted)", x_nan_padding, HRT_OK, NULL},
    {"long_name missing or other (accepted)", x_long_name, HRT_OK, NULL},
    {"code tables in another order, fixed-length keys, 16-bit codes (accepted)", x_codes_reordered, HRT_OK, NULL},
    {"numeric dataset without a checksum", d_no_checksum, HRT_E_FORMAT, "phases/code: stored without a checksum"},
    {"a track without remnant beside ones with (accepted)", x_remnant_none, HRT_OK, NULL},
    {"remnant masses falling steeply to a route's end (accepted)", x_remnant_steep, HRT_OK, NULL},
};

static void damaged(void)
{
    char p[160];
    snprintf(p, sizeof p, "%s/damaged.h5", dir);
    long size;
    unsigned char *bytes = grid_bytes(&size);
    for (size_t k = 0; k < sizeof damages / sizeof damages[0]; k++) {
        FILE *f = fopen(p, "wb");
        fwrite(bytes, 1, (size_t)size, f);
        fclose(f);
        H5F = H5Fopen(p, H5F_ACC_RDWR, H5P_DEFAULT);
        damages[k].fn();
        H5Fclose(H5F);
        hrt_grid *g = (hrt_grid *)&g;
        hrt_error e = {-1, ""};
        int rc = hrt_grid_open(p, &g, &e);
        CASE("damaged", rc == damages[k].code && (rc == HRT_OK) == (g != NULL), "%s: code %d (%s), want %d",
             damages[k].name, rc, e.message, damages[k].code);
        if (damages[k].needle)
            CASE("damaged", strstr(e.message, damages[k].needle) != NULL, "%s: message '%s' lacks '%s'",
                 damages[k].name, e.message, damages[k].needle);
        if (rc == HRT_OK) {
            /* accepted files answer as the undamaged one */
            double m = 2.0, z = hrt_grid_z(g, 1), a = 3e8;
            hrt_state s1, s2;
            hrt_eval(g, 1, &m, NULL, z, &a, &s1, NULL);
            hrt_eval(G, 1, &m, NULL, z, &a, &s2, NULL);
            CASE("damaged", memcmp(&s1, &s2, sizeof s1) == 0, "%s: answers differ", damages[k].name);
            if (damages[k].fn == x_remnant_none) {
                /* Regression: at the mass of track 0, past its end, the white
                 * dwarf had NaN mass and luminosity with HRT_OK (track 1's
                 * missing remnant mass entered with weight 0 as 0 * NaN). */
                hrt_star *s = NULL;
                hrt_state w;
                double m0 = hrt_grid_mass(g, 0, 0), z0 = hrt_grid_z(g, 0);
                int rs = hrt_star_new(g, m0, z0, &s, &e);
                int rw = rs == HRT_OK ? hrt_star_at(s, 3.0 * hrt_star_end_age(s), &w) : rs;
                CASE("damaged", rw == HRT_OK && w.phase == HRT_PHASE_WD && isfinite(w.mass_msun) && isfinite(w.log_l_lsun),
                     "white dwarf beside a track without remnant: %d, mass %g, log L %g", rw, w.mass_msun, w.log_l_lsun);
                hrt_star_free(s);
            }
            if (damages[k].fn == x_remnant_steep) {
                /* Regression: extrapolated past the route's last track, the
                 * white dwarf mass went negative (NaN radius, HRT_OK). */
                double m = 0.99, z0 = hrt_grid_z(g, 0), a = 1e12;
                hrt_state w;
                int rw = hrt_eval(g, 1, &m, NULL, z0, &a, &w, &e);
                CASE("damaged", rw == HRT_OK && (w.flags & HRT_FLAG_EXTRAPOLATED) && w.mass_msun > 0.0 &&
                                    isfinite(w.log_l_lsun) && isfinite(w.log_r_rsun),
                     "extrapolated white dwarf: %d, flags %#x, mass %g, log R %g", rw, (unsigned)w.flags, w.mass_msun,
                     w.log_r_rsun);
            }
            if (damages[k].fn == x_extra_attrs)
                CASE("damaged", hrt_grid_attribute(g, "provenance") &&
                                    strcmp(hrt_grid_attribute(g, "provenance"), "tests/hardening") == 0 &&
                                    hrt_grid_attribute(g, "extra_number") == NULL,
                     "extra text attribute readable, numeric one not text");
            hrt_grid_close(g);
        }
    }
    unlink(p);
    free(bytes);
}


/* ---- format 1: refused on open, converted by hrt_grid_upgrade ------------ */

/* Damage to a format-1 copy of the synthetic grid (synth_downgrade_v1):
 * old names, key tables phase_keys and remnant_keys, phase and remnant
 * stored as indices into them. */
static void v1_phase_keys_missing(void) { del("phase_keys"); }
static void v1_phase_key_unknown(void)
{
    const char *k[] = {"pre_ms", "ms", "mystery", "rgb", "cheb"};
    ds_strings("phase_keys", 5, k);
}
static void v1_remnant_keys_missing(void) { del("remnant_keys"); }
static void v1_phase_beyond_table(void) { elem(M0 "phase", 2, 2, 15); } /* 15 keys: 0..14 */
static void v1_phase_minus_one(void) { elem(M0 "phase", 3, 4, -1); }
static void v1_remnant_beyond_table(void) { elem(M0 "remnant", 0, 0, 6); }
static void v1_z_missing(void) { attr_del("metallicity/1", "Z"); }
static void v1_nan(void) { elem("metallicity/2/log_L", 3, 10, NAN); }
static void v1_new_name(void) { H5Lmove(H5F, M0 "log_age", H5F, M0 "log_age_yr", H5P_DEFAULT, H5P_DEFAULT); }
static void v1_wd_heavy(void) { elem(M0 "remnant_mass", 12, 0, 2.0); }
static void v1_version_newer(void) { attr_num("/", "format_version", H5T_STD_I32LE, 3); }
static void v1_version_zero(void) { attr_num("/", "format_version", H5T_STD_I32LE, 0); }
/* accepted: format 1 did not check units, and format 1's phase_keys may
 * list the keys in any order (here 0.1's order reversed) */
static void v1_units_missing(void) { attr_del(M0 "log_L", "units"); }
static void v1_keys_reversed(void)
{
    enum { NK = 15 };
    const char *k[NK];
    int idx[NK];
    hid_t d = H5Dopen2(H5F, "phase_keys", H5P_DEFAULT), t = H5Tcopy(H5T_C_S1);
    H5Tset_size(t, H5T_VARIABLE);
    char *old[NK];
    H5Dread(d, t, H5S_ALL, H5S_ALL, H5P_DEFAULT, old);
    H5Dclose(d);
    for (int i = 0; i < NK; i++) {
        k[i] = old[NK - 1 - i];
        idx[i] = NK - 1 - i; /* old index i is now NK-1-i */
    }
    ds_strings("phase_keys", NK, k);
    for (int i = 0; i < NK; i++)
        free(old[i]);
    H5Tclose(t);
    for (int iz = 0; iz < 4; iz++) {
        char name[64];
        snprintf(name, sizeof name, "metallicity/%d/phase", iz);
        hid_t ds = H5Dopen2(H5F, name, H5P_DEFAULT), sp = H5Dget_space(ds);
        hssize_t n = H5Sget_simple_extent_npoints(sp);
        int *v = malloc((size_t)n * sizeof *v);
        H5Dread(ds, H5T_NATIVE_INT, H5S_ALL, H5S_ALL, H5P_DEFAULT, v);
        for (hssize_t q = 0; q < n; q++)
            if (v[q] >= 0 && v[q] < NK)
                v[q] = idx[v[q]];
        H5Dwrite(ds, H5T_NATIVE_INT, H5S_ALL, H5S_ALL, H5P_DEFAULT, v);
        free(v);
        H5Sclose(sp);
        H5Dclose(ds);
    }
}

static const struct {
    const char *name;
    damage_fn fn;
    int code;
    const char *needle;
} v1_damages[] = {
    {"format 1: phase_keys missing", v1_phase_keys_missing, HRT_E_FORMAT, "phase_keys: dataset is missing"},
    {"format 1: phase_keys unknown key", v1_phase_key_unknown, HRT_E_FORMAT, "phase_keys[2]: unknown key 'mystery'"},
    {"format 1: remnant_keys missing", v1_remnant_keys_missing, HRT_E_FORMAT, "remnant_keys: dataset is missing"},
    {"format 1: phase index past phase_keys", v1_phase_beyond_table, HRT_E_FORMAT,
     "metallicity/0/phase[2][2]: 15 is not a phase code of the file"},
    {"format 1: phase -1 inside a track", v1_phase_minus_one, HRT_E_FORMAT,
     "metallicity/0/phase[3][4]: -1 is not a phase code of the file"},
    {"format 1: remnant index past remnant_keys", v1_remnant_beyond_table, HRT_E_FORMAT,
     "metallicity/0/remnant[0]: 6 is not a remnant code of the file"},
    {"format 1: Z missing", v1_z_missing, HRT_E_FORMAT, "metallicity/1 attribute 'Z' is missing"},
    {"format 1: NaN inside a track", v1_nan, HRT_E_FORMAT, "metallicity/2/log_L[3][10]: nan"},
    {"format 1: a dataset under its format-2 name", v1_new_name, HRT_E_FORMAT, "metallicity/0/log_age: dataset is missing"},
    {"format 1: white dwarf of 2 Msun", v1_wd_heavy, HRT_E_FORMAT, "remnant_mass[12]: a white dwarf of 2"},
    {"format_version 3", v1_version_newer, HRT_E_VERSION, "format_version 3 is newer than this library reads"},
    {"format_version 0", v1_version_zero, HRT_E_FORMAT, "format_version 0 is not a valid version"},
    {"format 1: units missing (accepted)", v1_units_missing, HRT_OK, NULL},
    {"format 1: phase_keys in another order (accepted)", v1_keys_reversed, HRT_OK, NULL},
};

static int count_tmp(void)
{
    char cmd[160];
    snprintf(cmd, sizeof cmd, "ls %s | grep -q tmp-", dir);
    return system(cmd) == 0;
}

static void format1(void)
{
    char v1[160], p[160], out[160], damaged_v1[160];
    snprintf(v1, sizeof v1, "%s/v1.h5", dir);
    snprintf(out, sizeof out, "%s/upgraded.h5", dir);
    HARD_CHECK(synth_downgrade_v1(grid_path, v1) == 0, "format-1 copy of the synthetic grid");
    /* refused on open, with the way out in the message */
    for (int t = 0; t < HRT_INTERP_COUNT; t++) {
        hrt_grid *g = (hrt_grid *)&g;
        hrt_error e = {-1, ""};
        int rc = hrt_grid_open_with(v1, t, &g, &e);
        CASE("format 1", rc == HRT_E_VERSION && g == NULL && e.code == rc && strstr(e.message, "upgrade"),
             "open a format-1 file (%s): %d (%s)", hrt_interp_name(t), rc, e.message);
    }
    setenv("HRTRAIL_GRID", v1, 1);
    hrt_grid *g = NULL;
    CASE("format 1", hrt_grid_open(NULL, &g, NULL) == HRT_E_VERSION, "HRTRAIL_GRID naming a format-1 file");
    setenv("HRTRAIL_GRID", "/nonexistent/grid.h5", 1);
    /* arguments and files hrt_grid_upgrade refuses; nothing is written */
    snprintf(p, sizeof p, "%s/pipe-v1.h5", dir);
    HARD_CHECK(mkfifo(p, 0600) == 0, "mkfifo");
    char text[160];
    snprintf(text, sizeof text, "%s/text-v1.h5", dir);
    FILE *f = fopen(text, "w");
    fputs("format_version,1\n", f);
    fclose(f);
    const struct {
        const char *name, *from, *to;
        int code;
        const char *needle;
    } a[] = {
        {"old path NULL", NULL, out, HRT_E_NULL, "old path is NULL"},
        {"new path NULL", v1, NULL, HRT_E_NULL, "new path is NULL"},
        {"missing file", "/nonexistent/v1.h5", out, HRT_E_IO, "cannot open '/nonexistent/v1.h5'"},
        {"directory", dir, out, HRT_E_IO, "not a regular file"},
        {"named pipe", p, out, HRT_E_IO, "not a regular file"},
        {"device", "/dev/zero", out, HRT_E_IO, "not a regular file"},
        {"text file", text, out, HRT_E_FORMAT, "not a readable HDF5 file"},
        {"destination in a missing directory", v1, "/nonexistent/dir/new.h5", HRT_E_IO, "/nonexistent/dir/new.h5"},
        {"destination a directory", v1, dir, HRT_E_IO, dir},
    };
    for (size_t k = 0; k < sizeof a / sizeof a[0]; k++) {
        hrt_error e = {-1, ""};
        int rc = hrt_grid_upgrade(a[k].from, a[k].to, &e);
        CASE("upgrade", rc == a[k].code && msg_ok(&e, rc) && strstr(e.message, a[k].needle),
             "%s: %d (%s), want %d with '%s'", a[k].name, rc, e.message, a[k].code, a[k].needle);
        CASE("upgrade", access(out, F_OK) != 0 && !count_tmp(), "%s: a file was left behind", a[k].name);
    }
    CASE("upgrade", hrt_grid_upgrade(NULL, NULL, NULL) == HRT_E_NULL, "NULL error report");
    unlink(p);
    unlink(text);
    HARD_CHECK(g == NULL, "no grid");
    /* a good upgrade: the answers of the grid written in format 2 directly */
    hrt_error e = {-1, ""};
    int rc = hrt_grid_upgrade(v1, out, &e);
    HARD_CHECK(rc == HRT_OK && e.code == HRT_OK, "upgrade: %d (%s)", rc, e.message);
    long size;
    unsigned char *bytes = NULL;
    {
        FILE *src = fopen(v1, "rb");
        fseek(src, 0, SEEK_END);
        size = ftell(src);
        rewind(src);
        bytes = malloc((size_t)size);
        HARD_CHECK(fread(bytes, 1, (size_t)size, src) == (size_t)size, "read");
        fclose(src);
    }
    snprintf(damaged_v1, sizeof damaged_v1, "%s/v1-damaged.h5", dir);
    for (size_t k = 0; k < sizeof v1_damages / sizeof v1_damages[0]; k++) {
        f = fopen(damaged_v1, "wb");
        fwrite(bytes, 1, (size_t)size, f);
        fclose(f);
        H5F = H5Fopen(damaged_v1, H5F_ACC_RDWR, H5P_DEFAULT);
        v1_damages[k].fn();
        H5Fclose(H5F);
        unlink(out);
        e.code = -1;
        rc = hrt_grid_upgrade(damaged_v1, out, &e);
        CASE("upgrade", rc == v1_damages[k].code && e.code == rc, "%s: %d (%s), want %d", v1_damages[k].name, rc,
             e.message, v1_damages[k].code);
        if (v1_damages[k].needle)
            CASE("upgrade", strstr(e.message, v1_damages[k].needle) != NULL, "%s: message '%s' lacks '%s'",
                 v1_damages[k].name, e.message, v1_damages[k].needle);
        if (rc != HRT_OK) {
            CASE("upgrade", access(out, F_OK) != 0 && !count_tmp(), "%s: a file was left behind", v1_damages[k].name);
            continue;
        }
        /* accepted: the converted grid answers as the synthetic grid */
        hrt_grid *u = NULL;
        HARD_CHECK(hrt_grid_open(out, &u, &e) == HRT_OK, "%s: upgraded grid does not open: %s", v1_damages[k].name,
                   e.message);
        unsigned long long seed = 7 + k;
        long differ = 0;
        for (int q = 0; q < 500 && u; q++) {
            double m = 0.3 * pow(10.0 / 0.3, hard_uniform(&seed)), z = 0.001 * pow(30.0, hard_uniform(&seed));
            double age = pow(10.0, 6.0 + 6.0 * hard_uniform(&seed));
            hrt_state s1, s2;
            int r1 = hrt_eval(u, 1, &m, &z, 0.0, &age, &s1, NULL), r2 = hrt_eval(G, 1, &m, &z, 0.0, &age, &s2, NULL);
            differ += r1 != r2 || memcmp(&s1, &s2, sizeof s1) != 0;
        }
        CASE("upgrade", u && differ == 0, "%s: %ld of 500 stars differ from the format-2 grid", v1_damages[k].name,
             differ);
        hrt_grid_close(u);
    }
    unlink(damaged_v1);
    unlink(out);
    unlink(v1);
    free(bytes);
}

/* ---- text tracks: every defect the importer reports --------------------- */

static const char good_track[] = "# invented test track\n"
                                 "age_Myr logL logT kp\n"
                                 "1 0.00 3.760 zams\n"
                                 "200 0.05 3.758 -\n"
                                 "900 0.10 3.755 -\n"
                                 "2500 0.20 3.750 -\n"
                                 "5000 0.30 3.740 tams\n";
static const char good_map[] = "age_yr=age_Myr*Myr log_l_lsun=logL log_teff_k=logT keypoints=kp initial_mass_msun=1.0 z=0.014";

static int import_one(const char *map, const char *content, size_t len, int lenient, hrt_error *e,
                      hrt_import_track_report *rep)
{
    char p[160];
    snprintf(p, sizeof p, "%s/track_m1.0.dat", dir);
    FILE *f = fopen(p, "wb");
    fwrite(content, 1, len, f);
    fclose(f);
    hrt_import *imp = NULL;
    int rc = hrt_import_new(&imp, e);
    if (rc == HRT_OK)
        rc = hrt_import_map(imp, map, e);
    if (rc == HRT_OK) {
        hrt_import_set_lenient(imp, lenient);
        hrt_import_set_force(imp, 1); /* one track: the other routes are empty */
        rc = hrt_import_add_file(imp, p, NAN, e);
    }
    if (rc == HRT_OK)
        rc = hrt_import_run(imp, NULL, e);
    memset(rep, 0, sizeof *rep);
    if (imp && hrt_import_n_tracks(imp) == 1)
        hrt_import_track(imp, 0, rep);
    hrt_import_free(imp);
    unlink(p);
    return rc;
}

static char *replace(const char *s, const char *from, const char *to)
{
    const char *at = strstr(s, from);
    size_t n = strlen(s) + strlen(to) + 1;
    char *out = malloc(n);
    if (!at) {
        snprintf(out, n, "%s", s);
        return out;
    }
    snprintf(out, n, "%.*s%s%s", (int)(at - s), s, to, at + strlen(from));
    return out;
}

static void import_defects(void)
{
    hrt_error e;
    hrt_import_track_report rep;
    int rc = import_one(good_map, good_track, strlen(good_track), 0, &e, &rep);
    HARD_CHECK(rc == HRT_OK && rep.status == HRT_OK, "the good track imports: %d %s", rc, e.message);
    struct {
        const char *name;
        const char *from, *to; /* edit of the good track */
        const char *map;       /* NULL: the good map */
        int code;
        const char *needle;
    } c[] = {
        {"empty file", good_track, "", NULL, HRT_E_FORMAT, "empty file"},
        {"header only", "1 0.00 3.760 zams\n200 0.05 3.758 -\n900 0.10 3.755 -\n2500 0.20 3.750 -\n5000 0.30 3.740 tams\n",
         "", NULL, HRT_E_FORMAT, "at least 2 needed"},
        {"binary data", "200 0.05", "200 \x01\x02", NULL, HRT_E_FORMAT, "binary data"},
        {"missing field", "900 0.10 3.755 -", "900 0.10 3.755", NULL, HRT_E_FORMAT, "fields, the header"},
        {"extra field", "900 0.10 3.755 -", "900 0.10 3.755 - 7", NULL, HRT_E_FORMAT, "fields, the header"},
        {"not a number", "0.05 3.758", "bright 3.758", NULL, HRT_E_FORMAT, "is not a number"},
        {"NaN value", "0.05 3.758", "nan 3.758", NULL, HRT_E_FORMAT, "not finite"},
        {"infinite value", "0.05 3.758", "inf 3.758", NULL, HRT_E_FORMAT, "not finite"},
        {"overflowing value", "0.05 3.758", "1e999 3.758", NULL, HRT_E_FORMAT, "not finite"},
        {"negative age", "\n1 0.00", "\n-1 0.00", NULL, HRT_E_FORMAT, "is not positive"},
        {"ages not increasing", "900 0.10", "150 0.10", NULL, HRT_E_FORMAT, "ages must increase"},
        {"equal ages", "900 0.10", "200 0.10", NULL, HRT_E_FORMAT, "repeats the age"},
        {"mapped column absent", "logT", "log_T", NULL, HRT_E_FORMAT, "which is not in the header"},
        {"header column without a name", "age_Myr logL logT kp", "age_Myr,logL,,kp", NULL, HRT_E_FORMAT, "has no name"},
        {"unknown keypoint flag", "tams\n", "tams_x\n", NULL, HRT_E_FORMAT, "keypoint flag"},
        {"one keypoint only (track dropped: HRT_E_NO_TRACK in its report)", "tams\n", "-\n", NULL, HRT_E_INVALID,
         "no usable track"},
        {"negative current mass", "200 0.05", "200 -0.05", "age_yr=age_Myr*Myr log_l_lsun=logL log_teff_k=logT keypoints=kp "
         "initial_mass_msun=1.0 z=0.014 mass_msun=logL", HRT_E_FORMAT, "negative"},
        {"initial mass unknown", "", "", "age_yr=age_Myr*Myr log_l_lsun=logL log_teff_k=logT keypoints=kp z=0.014", HRT_E_FORMAT,
         "initial mass unknown"},
        {"metallicity unknown", "", "", "age_yr=age_Myr*Myr log_l_lsun=logL log_teff_k=logT keypoints=kp initial_mass_msun=1", HRT_E_FORMAT,
         "metallicity unknown"},
        {"map: unknown key", "", "", "age_yr=age_Myr*Myr colour=logL", HRT_E_INVALID, "colour"},
        {"map: no '='", "", "", "age_yr", HRT_E_INVALID, "has no '='"},
        {"map: no value", "", "", "age_yr=", HRT_E_INVALID, "has no value"},
        {"map: bad unit", "", "", "age_yr=age_Myr*fortnights", HRT_E_INVALID, "unit"},
        {"map: time unit on a luminosity", "", "", "log_l_lsun=logL*Myr", HRT_E_INVALID, "time unit"},
        {"map: Z not finite", "", "", "z=nan", HRT_E_INVALID, "not finite"},
        {"file name not matching the pattern", "", "", "age_yr=age_Myr*Myr log_l_lsun=logL log_teff_k=logT keypoints=kp z=0.014 "
         "pattern=star_{mass}.txt", HRT_E_FORMAT, "does not match the pattern"},
    };
    for (size_t k = 0; k < sizeof c / sizeof c[0]; k++) {
        char *t = c[k].from[0] ? replace(good_track, c[k].from, c[k].to) : replace(good_track, "", "");
        e.code = -1;
        rc = import_one(c[k].map ? c[k].map : good_map, t, strlen(t), 0, &e, &rep);
        CASE("import", rc == c[k].code && e.code == rc && strlen(e.message) > 5 && strstr(e.message, c[k].needle),
             "%s: code %d (%s), want %d with '%s'", c[k].name, rc, e.message, c[k].code, c[k].needle);
        if (rc == HRT_E_FORMAT && rep.file)
            CASE("import", rep.status != HRT_OK, "%s: report status %d", c[k].name, rep.status);
        /* lenient: a bad row is dropped and counted, the track kept; a bad
         * file is dropped and reported, and the import then has no track */
        static const char *const row_level[] = {"fields, the header", "is not a number", "not finite",
                                                "is not positive", "ages must increase", "repeats the age",
                                                "negative"};
        int bad_row = 0;
        for (size_t r = 0; r < sizeof row_level / sizeof row_level[0]; r++)
            bad_row |= strcmp(c[k].needle, row_level[r]) == 0;
        if (rc == HRT_E_FORMAT && bad_row) {
            int rl = import_one(c[k].map ? c[k].map : good_map, t, strlen(t), 1, &e, &rep);
            CASE("import", rl == HRT_OK && rep.status == HRT_OK && rep.n_rows_dropped == 1,
                 "%s, lenient: %d (%s), %zu rows dropped", c[k].name, rl, e.message, rep.n_rows_dropped);
        } else if (rc == HRT_E_FORMAT) {
            /* lenient: the track is dropped and reported; no track is left */
            int rl = import_one(c[k].map ? c[k].map : good_map, t, strlen(t), 1, &e, &rep);
            CASE("import", rl == HRT_E_INVALID && rep.status != HRT_OK && strlen(rep.message) > 5,
                 "%s, lenient: %d (%s), report %d '%s'", c[k].name, rl, e.message, rep.status, rep.message);
        } else if (strstr(c[k].name, "one keypoint")) {
            CASE("import", rep.status == HRT_E_NO_TRACK, "%s: report status %d", c[k].name, rep.status);
        }
        free(t);
    }
    /* API misuse */
    hrt_import *imp = NULL;
    HARD_CHECK(hrt_import_new(&imp, &e) == HRT_OK, "import");
    CASE("import", hrt_import_run(imp, NULL, &e) == HRT_E_INVALID, "no files: %s", e.message);
    CASE("import", hrt_import_add_file(imp, NULL, 0.01, &e) == HRT_E_NULL && hrt_import_map(imp, NULL, &e) == HRT_E_NULL &&
                       hrt_import_map(NULL, "a=b", &e) == HRT_E_NULL && hrt_import_add_file(imp, "x", 2.0, &e) ==
                       HRT_E_DOMAIN && hrt_import_set_z_ref(imp, NAN, &e) == HRT_E_DOMAIN,
         "NULL arguments, Z = 2, z_ref NaN");
    CASE("import", hrt_import_set_pre_ms(NULL, 1, &e) == HRT_E_NULL && strstr(e.message, "hrt_import_set_pre_ms") &&
                       hrt_import_set_pre_ms(imp, 1, &e) == HRT_OK && e.code == HRT_OK,
         "hrt_import_set_pre_ms: NULL refused with a message, success resets the error: %s", e.message);
    hrt_import_free(imp);
    HARD_CHECK(hrt_import_new(&imp, &e) == HRT_OK, "import");
    char missing[160];
    snprintf(missing, sizeof missing, "%s/no-such-track.dat", dir);
    hrt_import_map(imp, good_map, &e);
    hrt_import_add_file(imp, missing, NAN, &e);
    rc = hrt_import_run(imp, NULL, &e);
    CASE("import", rc == HRT_E_IO && strstr(e.message, "no-such-track"), "unreadable file: %d %s", rc, e.message);
    CASE("import", hrt_import_run(imp, NULL, &e) == HRT_E_INVALID, "a second run: %s", e.message);
    hrt_import_free(imp);
    hrt_import_free(NULL);
}

/* ---- regressions -------------------------------------------------------- */

/* An age a rounding error below the end of a track (10^(last log age) as
 * the caller computes it) used to give a white dwarf with NaN luminosity
 * and status HRT_OK: the remnant was chosen on log ages, its cooling time
 * computed in years came out negative. */
static void end_of_track(void)
{
    long tried = 0, bad = 0;
    for (size_t iz = 0; iz < hrt_grid_n_z(G); iz++) {
        for (size_t im = 0; im < hrt_grid_n_masses(G, iz); im++) {
            hrt_star *s;
            if (hrt_star_new(G, hrt_grid_mass(G, iz, im), hrt_grid_z(G, iz), &s, NULL) != HRT_OK)
                continue;
            hrt_state last;
            hrt_star_eep_state(s, hrt_star_n_eep(s) - 1, &last);
            double e = hrt_star_end_age(s), la = log10(last.age_yr);
            double ages[6] = {e, nextafter(e, 0), nextafter(nextafter(e, 0), 0), nextafter(e, INFINITY), pow(10.0, la),
                              exp(la * log(10.0))};
            for (int k = 0; k < 6; k++) {
                hrt_state st;
                int rc = hrt_star_at(s, ages[k], &st);
                tried++;
                if (rc != HRT_OK || (st.flags & (HRT_FLAG_DARK | HRT_FLAG_NOT_MODELLED)))
                    continue;
                if (!(isfinite(st.log_l_lsun) && isfinite(st.log_teff_k) && isfinite(st.log_r_rsun))) {
                    bad++;
                    fprintf(stderr, "  M=%.17g Z=%g age=%.17g (end %.17g): phase %d log L %g\n", st.initial_mass_msun,
                            st.z, ages[k], e, st.phase, st.log_l_lsun);
                }
            }
            hrt_star_free(s);
        }
    }
    /* Tracks ending at whole log ages, asked at 10^k yr and next to the end. */
    const char *kp[] = {"a", "b"};
    int seg[] = {6};
    hrt_route_spec r = {"one", 2, kp, seg};
    hrt_builder *b;
    HARD_CHECK(hrt_builder_new(1, &r, 0.02, &b, NULL) == HRT_OK, "builder");
    for (int k = 0; k < 6; k++) {
        double M = 0.8 + 0.2 * k, end = 6.0 + k;
        double age[7], l[7], t[7], m[7], c[7];
        int ph[7];
        for (int j = 0; j < 7; j++) {
            age[j] = end - 6.0 + j;
            l[j] = 0.1 * j;
            t[j] = 3.7;
            m[j] = M;
            c[j] = 0.0;
            ph[j] = HRT_PHASE_MS;
        }
        hrt_track_data td = {M, 0, HRT_REMNANT_CO_WD, 0.5 + 0.01 * k, 7, age, l, t, NULL, m, c, c, ph, 0, NULL};
        HARD_CHECK(hrt_builder_add_eep_track(b, 0.02, &td, NULL) == HRT_OK, "track");
    }
    char p[128];
    snprintf(p, sizeof p, "%s/whole.h5", dir);
    HARD_CHECK(hrt_builder_write(b, p, NULL) == HRT_OK, "write");
    hrt_builder_free(b);
    hrt_grid *g;
    HARD_CHECK(hrt_grid_open(p, &g, NULL) == HRT_OK, "open");
    for (int k = 0; k < 6; k++) {
        double M = 0.8 + 0.2 * k, z = 0.02, a0 = pow(10.0, 6.0 + k);
        hrt_star *s;
        HARD_CHECK(hrt_star_new(g, M, z, &s, NULL) == HRT_OK, "star");
        double e = hrt_star_end_age(s);
        double ages[5] = {a0, nextafter(a0, 0), nextafter(a0, INFINITY), e, nextafter(e, 0)};
        for (int q = 0; q < 5; q++) {
            hrt_state st, sb;
            double a = ages[q];
            int r1 = hrt_star_at(s, a, &st), r2 = hrt_eval(g, 1, &M, &z, 0.0, &a, &sb, NULL);
            tried += 2;
            if ((r1 == HRT_OK && !isfinite(st.log_l_lsun)) || (r2 == HRT_OK && !isfinite(sb.log_l_lsun))) {
                bad++;
                fprintf(stderr, "  M=%g age=%.17g yr (end %.17g): phase %d, log L %g\n", M, a, e, st.phase, st.log_l_lsun);
            }
        }
        hrt_star_free(s);
    }
    hrt_grid_close(g);
    unlink(p);
    CASE("end of track", bad == 0, "%ld of %ld ages at the end of a track gave NaN with HRT_OK", bad, tried);
}

int main(void)
{
    gsl_error_handler_t *mine = counting_handler;
    gsl_set_error_handler(mine);
    H5Eset_auto2(H5E_DEFAULT, NULL, NULL); /* the test damages files on purpose */
    setenv("HRTRAIL_GRID", "/nonexistent/grid.h5", 1);
    snprintf(dir, sizeof dir, "/tmp/hrt-badinput-XXXXXX");
    if (!mkdtemp(dir))
        return EXIT_FAILURE;
    snprintf(grid_path, sizeof grid_path, "%s/synth.h5", dir);
    const synth_spec spec = {9, 11, 4, 1, 1, 0.3, 1.0, 10.0};
    hrt_error e;
    if (synth_write(&spec, grid_path, &e) != HRT_OK || hrt_grid_open(grid_path, &G, &e) != HRT_OK) {
        fprintf(stderr, "synthetic grid: %s\n", e.message);
        return EXIT_FAILURE;
    }
    numbers();
    nulls_and_zeros();
    not_grids();
    damaged();
    format1();
    import_defects();
    end_of_track();
    /* Also a grid opened with every interpolation type survives the numbers. */
    for (int t = 0; t < HRT_INTERP_COUNT; t++) {
        hrt_grid *g2;
        HARD_CHECK(hrt_grid_open_with(grid_path, t, &g2, &e) == HRT_OK, "open %d", t);
        hrt_grid *keep = G;
        G = g2;
        numbers();
        G = keep;
        hrt_grid_close(g2);
    }
    hrt_grid_close(G);
    /* GSL's handler: never called, still ours. */
    gsl_error_handler_t *now = gsl_set_error_handler(NULL);
    HARD_CHECK(now == mine, "GSL's error handler was replaced");
    HARD_CHECK(gsl_calls == 0, "GSL's error handler was called %d times", gsl_calls);
    gsl_set_error_handler(mine);
    unlink(grid_path);
    rmdir(dir);
    printf("badinput: %d matrix cases\n", n_cases);
    return hard_finish("badinput");
}
