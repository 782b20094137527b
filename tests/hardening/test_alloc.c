/* Allocation-failure injection.  This program is linked with the STATIC
 * library and -Wl,--wrap=malloc,--wrap=calloc,--wrap=realloc,--wrap=strdup
 * (and free), so every allocation the library's own objects make goes
 * through the __wrap_ functions below; HDF5's and GSL's allocations (shared
 * libraries) do not.  For each operation, the N-th allocation is made to
 * fail, for N = 1, 2, ... until the operation no longer reaches an N-th
 * allocation.  Every injected failure must come back as a defined status
 * code (HRT_E_NOMEM where memory was the problem) with a message, no result
 * object, nothing leaked (the wrappers count live blocks), and no crash; and
 * a later retry must give exactly the answer of a run without failures.
 * The library needs no hook for this and keeps no global state. */
#include <dirent.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "hrtrail.h"
#include "synth.h"
#include "hard.h"

/* ---- the wrappers --------------------------------------------------- */

void *__real_malloc(size_t n);
void *__real_calloc(size_t n, size_t s);
void *__real_realloc(void *p, size_t n);
char *__real_strdup(const char *s);
void __real_free(void *p);

static long armed_calls;  /* allocations seen while armed */
static long fail_at = -1; /* fail the fail_at-th armed allocation (1-based); -1: never */
static int armed, injected;

/* Live blocks allocated through the wrappers (open addressing, no malloc). */
#define LIVE_SLOTS (1 << 16)
static void *live[LIVE_SLOTS];
static long n_live;

static size_t slot_of(const void *p) { return (size_t)(((uintptr_t)p >> 4) * 0x9E3779B97F4A7C15ULL >> 48) & (LIVE_SLOTS - 1); }
static void live_add(void *p)
{
    if (!p)
        return;
    size_t k = slot_of(p);
    while (live[k] && live[k] != (void *)1)
        k = (k + 1) & (LIVE_SLOTS - 1);
    live[k] = p;
    n_live++;
}
static int live_del(void *p)
{
    if (!p)
        return 0;
    size_t k = slot_of(p);
    while (live[k]) {
        if (live[k] == p) {
            live[k] = (void *)1; /* tombstone */
            n_live--;
            return 1;
        }
        k = (k + 1) & (LIVE_SLOTS - 1);
    }
    return 0;
}

static int should_fail(void)
{
    if (!armed)
        return 0;
    armed_calls++;
    if (armed_calls == fail_at) {
        injected++;
        return 1;
    }
    return 0;
}

void *__wrap_malloc(size_t n)
{
    if (should_fail())
        return NULL;
    void *p = __real_malloc(n);
    live_add(p);
    return p;
}
void *__wrap_calloc(size_t n, size_t s)
{
    if (should_fail())
        return NULL;
    void *p = __real_calloc(n, s);
    live_add(p);
    return p;
}
void *__wrap_realloc(void *p, size_t n)
{
    if (should_fail())
        return NULL; /* p stays valid, as realloc promises */
    int ours = live_del(p);
    void *q = __real_realloc(p, n);
    if (!q && ours)
        live_add(p);
    else if (q)
        live_add(q);
    return q;
}
char *__wrap_strdup(const char *s)
{
    if (should_fail())
        return NULL;
    char *p = __real_strdup(s);
    live_add(p);
    return p;
}
void __wrap_free(void *p)
{
    live_del(p);
    __real_free(p);
}

static void arm(long n)
{
    armed_calls = 0;
    fail_at = n;
    injected = 0;
    armed = 1;
}
static void disarm(void) { armed = 0; }

/* ---- operations under test ------------------------------------------ */

static char dir[64], grid_path[96];
static long total_points, total_failures;

static int known_code(int rc) { return rc > HRT_OK && rc < HRT_STATUS_COUNT_; }

/* Drive one operation through every allocation it makes.  op(n) runs the
 * operation with failure point n armed inside it and returns its status,
 * -1 meaning "checked and fine". */
typedef int (*op_fn)(void);

static void sweep(const char *name, op_fn op)
{
    long points = 0;
    for (long n = 1; n < 100000; n++) {
        long live_before = n_live;
        arm(n);
        int rc = op();
        disarm();
        HARD_CHECK(n_live == live_before, "%s, failure at allocation %ld: %ld blocks leaked (rc %d)", name, n,
                   n_live - live_before, rc);
        if (!injected) {
            HARD_CHECK(rc == HRT_OK, "%s without failures: rc %d", name, rc);
            break;
        }
        points++;
    }
    total_points += points;
    printf("alloc: %-36s %4ld allocation points, each failed once\n", name, points);
}

/* The reference answers, computed without failures. */
static hrt_state ref_eval[3];
static size_t ref_iso_n;
static hrt_state *ref_iso;
static const double q_mass[3] = {0.5, 2.7, 9.5}, q_age[3] = {3e9, 4e8, 2e7};
static double q_z;
static hrt_grid *shared_grid;
static long ref_grid_bytes;

static int check_failure(const char *what, int rc, const hrt_error *e)
{
    total_failures++;
    HARD_CHECK(known_code(rc), "%s: undefined code %d after an allocation failure", what, rc);
    HARD_CHECK(rc == HRT_E_NOMEM, "%s: code %d (%s) for an allocation failure, not HRT_E_NOMEM", what, rc,
               e->message);
    HARD_CHECK(e->code == rc && strlen(e->message) > 5, "%s: message '%s' code %d", what, e->message, e->code);
    return rc;
}

static int op_grid_open(void)
{
    hrt_grid *g = (hrt_grid *)&g; /* must be reset to NULL on failure */
    hrt_error e = {0, ""};
    int rc = hrt_grid_open(grid_path, &g, &e);
    int inj = injected;
    disarm();
    if (rc != HRT_OK) {
        HARD_CHECK(g == NULL, "grid open failed with %d but returned a grid", rc);
        return check_failure("hrt_grid_open", rc, &e);
    }
    /* Opened although an allocation failed: then it must be complete. */
    hrt_state st[3];
    hrt_eval(g, 3, q_mass, NULL, q_z, q_age, st, NULL);
    HARD_CHECK(memcmp(st, ref_eval, sizeof st) == 0, "grid opened after failure %d gives other answers", inj);
    HARD_CHECK((long)hrt_grid_memory_bytes(g) == ref_grid_bytes, "grid opened after a failure: %zu bytes, not %ld",
               hrt_grid_memory_bytes(g), ref_grid_bytes);
    const char *d = hrt_grid_attribute(g, "description");
    HARD_CHECK(d && strcmp(d, "synthetic test grid (known functions)") == 0,
               "grid opened after an allocation failure lost its attribute 'description' (%s)", d ? d : "NULL");
    hrt_grid_close(g);
    return rc;
}

static int op_grid_open_akima(void)
{
    hrt_grid *g = NULL;
    hrt_error e = {0, ""};
    int rc = hrt_grid_open_with(grid_path, HRT_INTERP_AKIMA, &g, &e);
    disarm();
    if (rc != HRT_OK) {
        HARD_CHECK(g == NULL, "grid open failed but returned a grid");
        return check_failure("hrt_grid_open_with akima", rc, &e);
    }
    hrt_grid_close(g);
    return rc;
}

static int op_star_new(void)
{
    int worst = HRT_OK;
    for (int k = 0; k < 3; k++) {
        hrt_star *s = (hrt_star *)&s;
        hrt_error e = {0, ""};
        int rc = hrt_star_new(shared_grid, q_mass[k], q_z, &s, &e);
        if (rc != HRT_OK) {
            HARD_CHECK(s == NULL, "hrt_star_new failed but returned a star");
            worst = check_failure("hrt_star_new", rc, &e);
            continue;
        }
        hrt_state st;
        int was = armed;
        disarm();
        hrt_star_at(s, q_age[k], &st);
        HARD_CHECK(memcmp(&st, &ref_eval[k], sizeof st) == 0, "star %d differs after allocation failures", k);
        armed = was;
        hrt_star_free(s);
    }
    return worst;
}

static int op_isochrone(void)
{
    size_t n = 0;
    hrt_error e = {0, ""};
    hrt_state *out = __real_malloc((ref_iso_n + 1) * sizeof *out);
    int rc = hrt_isochrone(shared_grid, 1e9, q_z, out, ref_iso_n, &n, &e);
    int inj = injected;
    disarm();
    if (rc != HRT_OK)
        check_failure("hrt_isochrone", rc, &e);
    else
        HARD_CHECK(n == ref_iso_n && memcmp(out, ref_iso, n * sizeof *out) == 0,
                   "isochrone after allocation failure %d differs (%zu points, want %zu)", inj, n, ref_iso_n);
    /* sizing call (cap 0) */
    armed = 1; /* the count goes on: failure points inside the sizing call too */
    size_t n0 = 0;
    int rc0 = hrt_isochrone(shared_grid, 1e9, q_z, NULL, 0, &n0, &e);
    disarm();
    if (rc0 != HRT_E_BUFFER)
        check_failure("hrt_isochrone sizing", rc0, &e);
    __real_free(out);
    return rc != HRT_OK ? rc : (rc0 == HRT_E_BUFFER ? HRT_OK : rc0);
}

/* A complete build: new, raw and EEP tracks, boundaries, attributes, write.
 * Where a step fails it is checked, retried without failures, and the build
 * goes on: the file written must be the reference file, byte for byte. */
static char ref_file[128], out_file[128];

static int files_equal(const char *a, const char *b)
{
    FILE *fa = fopen(a, "rb"), *fb = fopen(b, "rb");
    int eq = fa && fb;
    while (eq) {
        int ca = fgetc(fa), cb = fgetc(fb);
        if (ca != cb)
            eq = 0;
        if (ca == EOF || cb == EOF)
            break;
    }
    if (fa)
        fclose(fa);
    if (fb)
        fclose(fb);
    return eq;
}

static int count_tmp_files(void)
{
    DIR *d = opendir(dir);
    int n = 0;
    struct dirent *de;
    while (d && (de = readdir(d)))
        n += strstr(de->d_name, ".tmp-") != NULL;
    if (d)
        closedir(d);
    return n;
}

#define STEP(what, call)                                                                                   \
    do {                                                                                                   \
        int rc_ = (call);                                                                                  \
        if (rc_ != HRT_OK && injected) {                                                                   \
            int was_ = armed;                                                                              \
            disarm();                                                                                      \
            check_failure(what, rc_, &e);                                                                  \
            failed = rc_;                                                                                  \
            rc_ = (call);                                                                                  \
            armed = was_;                                                                                  \
        }                                                                                                  \
        HARD_CHECK(rc_ == HRT_OK, "%s: %d %s", what, rc_, e.message);                                      \
    } while (0)

static int build(const char *path)
{
    const char *kp[] = {"zams", "tams", "end"};
    int seg[] = {12, 8};
    const char *kp2[] = {"zams", "end"};
    int seg2[] = {9};
    hrt_route_spec routes[2] = {{"small", 3, kp, seg}, {"big", 2, kp2, seg2}};
    hrt_builder *b = NULL;
    hrt_error e = {0, ""};
    int failed = HRT_OK;
    int rc = hrt_builder_new(2, routes, 0.015, &b, &e);
    if (rc != HRT_OK) {
        HARD_CHECK(b == NULL, "hrt_builder_new failed but returned a builder");
        int was = armed;
        disarm();
        check_failure("hrt_builder_new", rc, &e);
        failed = rc;
        rc = hrt_builder_new(2, routes, 0.015, &b, &e);
        armed = was;
    }
    HARD_CHECK(rc == HRT_OK, "hrt_builder_new retry: %s", e.message);
    if (rc != HRT_OK)
        return rc;
    enum { N = 80 };
    double age[N], l[N], t[N], m[N], he[N], co[N];
    int ph[N];
    for (int zi = 0; zi < 2; zi++) {
        double z = zi ? 0.02 : 0.004;
        for (int k = 0; k < 3; k++) {
            double M = 0.8 + 0.4 * k;
            for (int i = 0; i < N; i++) {
                double u = (double)i / (N - 1);
                age[i] = 9.8 - 2.5 * log10(M) + 0.6 * u + 0.1 * u * u + 0.02 * zi;
                l[i] = 3.5 * log10(M) + 1.5 * u;
                t[i] = 3.76 + 0.1 * log10(M) - 0.1 * u;
                m[i] = M * (1.0 - 0.1 * u);
                he[i] = 0.2 * M * u;
                co[i] = 0.0;
                ph[i] = i < 50 ? HRT_PHASE_MS : HRT_PHASE_RGB;
            }
            size_t kps[3] = {0, 50, N - 1};
            hrt_track_data td = {M, 0, HRT_REMNANT_CO_WD, 0.55 + 0.05 * k, N, age, l, t, NULL, m, he, co, ph, 3,
                                 kps};
            STEP("hrt_builder_add_track", hrt_builder_add_track(b, z, &td, &e));
        }
        /* the big route, already on EEPs */
        for (int k = 0; k < 2; k++) {
            double M = 5.0 + 3.0 * k;
            for (int i = 0; i < 10; i++) {
                age[i] = 8.0 - 2.5 * log10(M / 5.0) + 0.05 * i;
                l[i] = 3.0 + 0.1 * i;
                t[i] = 4.2 - 0.02 * i;
                m[i] = M;
                he[i] = 0.1 * i;
                co[i] = 0.0;
                ph[i] = HRT_PHASE_MS;
            }
            hrt_track_data td = {M, 1, HRT_REMNANT_NS, 1.4, 10, age, l, t, NULL, m, he, co, ph, 0, NULL};
            STEP("hrt_builder_add_eep_track", hrt_builder_add_eep_track(b, z, &td, &e));
        }
        double bnd = 3.0;
        STEP("hrt_builder_set_route_boundaries", hrt_builder_set_route_boundaries(b, z, &bnd, &e));
    }
    STEP("hrt_builder_set_attribute", hrt_builder_set_attribute(b, "description", "first", &e));
    STEP("hrt_builder_set_attribute (replace)", hrt_builder_set_attribute(b, "description", "allocation test grid", &e));
    STEP("hrt_builder_set_attribute (second)", hrt_builder_set_attribute(b, "source", "tests/hardening", &e));
    /* The write: a failure must leave no file and no temporary file. */
    rc = hrt_builder_write(b, path, &e);
    if (rc != HRT_OK && injected) {
        int was = armed;
        disarm();
        check_failure("hrt_builder_write", rc, &e);
        failed = rc;
        HARD_CHECK(access(path, F_OK) != 0, "failed write left '%s'", path);
        HARD_CHECK(count_tmp_files() == 0, "failed write left a temporary file");
        rc = hrt_builder_write(b, path, &e);
        armed = was;
    }
    HARD_CHECK(rc == HRT_OK, "hrt_builder_write: %s", e.message);
    int was = armed;
    disarm();
    hrt_builder_free(b);
    armed = was;
    return failed;
}

static int op_build(void)
{
    unlink(out_file);
    int failed = build(out_file);
    disarm();
    HARD_CHECK(files_equal(out_file, ref_file), "grid built through allocation failures differs from the reference");
    HARD_CHECK(count_tmp_files() == 0, "temporary file left");
    unlink(out_file);
    /* The failures were checked inside; the sweep only needs "no failure
     * once nothing more was injected". */
    return injected ? failed : HRT_OK;
}


/* A text-track import, written as a grid: a failure anywhere must be
 * HRT_E_NOMEM, leave no grid file, and leak nothing. */
static char track_file[128], import_out[128];

static int op_import(void)
{
    hrt_import *imp = (hrt_import *)&imp;
    hrt_error e = {0, ""};
    int rc = hrt_import_new(&imp, &e);
    if (rc != HRT_OK) {
        disarm();
        HARD_CHECK(imp == NULL, "hrt_import_new failed but returned an import");
        return check_failure("hrt_import_new", rc, &e);
    }
    rc = hrt_import_map(imp, "age_yr=age_Myr*Myr log_l_lsun=logL log_teff_k=logT keypoints=kp initial_mass_msun=1.0 z=0.014", &e);
    hrt_import_set_force(imp, 1); /* one track: the other routes are empty */
    if (rc == HRT_OK)
        rc = hrt_import_add_file(imp, track_file, NAN, &e);
    if (rc == HRT_OK)
        rc = hrt_import_run(imp, import_out, &e);
    int inj = injected;
    disarm();
    if (rc != HRT_OK) {
        check_failure("hrt_import_*", rc, &e);
        HARD_CHECK(access(import_out, F_OK) != 0, "failed import left '%s'", import_out);
        HARD_CHECK(count_tmp_files() == 0, "failed import left a temporary file");
    } else {
        hrt_grid *g = NULL;
        HARD_CHECK(hrt_grid_open(import_out, &g, &e) == HRT_OK, "import after failure %d: grid does not open: %s", inj,
                   e.message);
        /* nothing of the grid may be lost to an allocation failure */
        const char *src = hrt_grid_attribute(g, "source");
        HARD_CHECK(!inj, "import returned HRT_OK through the failure of allocation %ld (attribute 'source': %s)",
                   fail_at, src ? src : "lost");
        hrt_grid_close(g);
    }
    hrt_import_free(imp);
    unlink(import_out);
    return rc;
}


/* Converting a format-1 file (hrt_grid_upgrade): a failure anywhere must be
 * HRT_E_NOMEM and leave no file; a success is the reference file, byte for
 * byte. */
static char v1_file[128], up_ref[128], up_out[128];

static int op_upgrade(void)
{
    hrt_error e = {0, ""};
    int rc = hrt_grid_upgrade(v1_file, up_out, &e);
    int inj = injected;
    disarm();
    if (rc != HRT_OK) {
        check_failure("hrt_grid_upgrade", rc, &e);
        HARD_CHECK(access(up_out, F_OK) != 0, "failed upgrade left '%s'", up_out);
        HARD_CHECK(count_tmp_files() == 0, "failed upgrade left a temporary file");
    } else {
        HARD_CHECK(files_equal(up_out, up_ref), "upgrade through the failure of allocation %ld (injected %d) "
                   "differs from the reference", fail_at, inj);
    }
    unlink(up_out);
    return rc;
}

/* Fitting and forecasting, and a population run, on the shared grid: each
 * failure HRT_E_NOMEM, and a run without failure the reference answer. */
static hrt_fit_result ref_fit;
static hrt_forecast_result ref_fc;
static int ref_fit_rc, ref_fc_rc;
static hrt_pop_summary ref_pop, pop_sum;
static int ref_pop_rc;

static int do_fit(hrt_fit_result *res, hrt_forecast_result *fc, int *rc_fc, hrt_error *e)
{
    hrt_fit_model_options o;
    hrt_fit_model_options_default(&o);
    o.log_mass_step_dex = 0.1; /* a coarse lattice: fewer allocations to sweep */
    o.feh_step_dex = 0.5;
    hrt_fit_model *model = (hrt_fit_model *)&model;
    int rc = hrt_fit_model_new(shared_grid, &o, &model, e);
    if (rc != HRT_OK) {
        HARD_CHECK(model == NULL, "hrt_fit_model_new failed but returned a model");
        *rc_fc = -1;
        return rc;
    }
    hrt_fit_obs ob;
    hrt_fit_obs_init(&ob);
    ob.teff_k = 6500.0;
    ob.teff_k_sigma = 150.0;
    ob.log_l_lsun = 1.0;
    ob.log_l_lsun_sigma = 0.1;
    hrt_fit_sample smp[16];
    memset(res, 0, sizeof *res);
    rc = hrt_fit_star(model, &ob, 7, 16, smp, res, e);
    *rc_fc = -1;
    if (rc == HRT_OK) {
        double dt[2] = {1e7, 1e8};
        hrt_forecast_state st[2];
        memset(fc, 0, sizeof *fc);
        *rc_fc = hrt_forecast(shared_grid, 16, smp, 2, dt, st, fc, e);
    }
    hrt_fit_model_free(model);
    return rc;
}

static int op_fit(void)
{
    hrt_fit_result res;
    hrt_forecast_result fc;
    hrt_error e = {0, ""};
    int rc_fc, rc = do_fit(&res, &fc, &rc_fc, &e);
    int inj = injected;
    disarm();
    if (rc != ref_fit_rc)
        return check_failure("hrt_fit_model_new / hrt_fit_star", rc, &e);
    if (rc_fc != ref_fc_rc)
        return check_failure("hrt_forecast", rc_fc, &e);
    HARD_CHECK(memcmp(&res, &ref_fit, sizeof res) == 0, "fit after the failure of allocation %ld differs (injected %d)", fail_at, inj);
    if (rc_fc == HRT_OK)
        HARD_CHECK(memcmp(&fc, &ref_fc, sizeof fc) == 0, "forecast after the failure of allocation %ld differs (injected %d)", fail_at, inj);
    return HRT_OK;
}

static int do_pop(hrt_pop_summary *sum, hrt_error *e)
{
    hrt_pop_spec spec;
    hrt_pop_spec_default(&spec);
    spec.n_stars = 3000;
    spec.chunk_size = 1000;
    int rc = hrt_pop_summary_init(sum, 1e9, NULL, e);
    if (rc == HRT_OK)
        rc = hrt_pop_run(shared_grid, &spec, 0, 3, 1, 1, sum, e);
    return rc;
}

static int op_pop(void)
{
    hrt_error e = {0, ""};
    int rc = do_pop(&pop_sum, &e);
    int inj = injected;
    disarm();
    if (rc != ref_pop_rc)
        return check_failure("hrt_pop_run", rc, &e);
    HARD_CHECK(memcmp(&pop_sum, &ref_pop, sizeof pop_sum) == 0, "population after allocation failure %d differs", inj);
    return HRT_OK;
}

int main(void)
{
    snprintf(dir, sizeof dir, "/tmp/hrt-alloc-XXXXXX");
    if (!mkdtemp(dir))
        return EXIT_FAILURE;
    snprintf(grid_path, sizeof grid_path, "%s/synth.h5", dir);
    snprintf(ref_file, sizeof ref_file, "%s/ref.h5", dir);
    snprintf(out_file, sizeof out_file, "%s/out.h5", dir);
    const synth_spec spec = {4, 5, 3, 1, 1, 0.3, 1.0, 10.0};
    hrt_error e;
    if (synth_write(&spec, grid_path, &e) != HRT_OK) {
        fprintf(stderr, "synthetic grid: %s\n", e.message);
        return EXIT_FAILURE;
    }
    /* References without failures. */
    HARD_CHECK(hrt_grid_open(grid_path, &shared_grid, &e) == HRT_OK, "open: %s", e.message);
    q_z = hrt_grid_z(shared_grid, 1) * 1.1;
    hrt_eval(shared_grid, 3, q_mass, NULL, q_z, q_age, ref_eval, NULL);
    ref_grid_bytes = (long)hrt_grid_memory_bytes(shared_grid);
    hrt_isochrone(shared_grid, 1e9, q_z, NULL, 0, &ref_iso_n, NULL);
    ref_iso = __real_malloc((ref_iso_n + 1) * sizeof *ref_iso);
    hrt_isochrone(shared_grid, 1e9, q_z, ref_iso, ref_iso_n, &ref_iso_n, NULL);
    HARD_CHECK(build(ref_file) == HRT_OK, "reference build");

    sweep("hrt_grid_open", op_grid_open);
    sweep("hrt_grid_open_with (akima)", op_grid_open_akima);
    sweep("hrt_star_new (3 stars)", op_star_new);
    sweep("hrt_isochrone", op_isochrone);
    sweep("hrt_builder_* (build and write)", op_build);
    snprintf(track_file, sizeof track_file, "%s/track.dat", dir);
    snprintf(import_out, sizeof import_out, "%s/imported.h5", dir);
    FILE *tf = fopen(track_file, "w");
    fputs("age_Myr logL logT kp\n1 0.00 3.760 zams\n200 0.05 3.758 -\n900 0.10 3.755 -\n2500 0.20 3.750 -\n"
          "5000 0.30 3.740 tams\n", tf);
    fclose(tf);
    sweep("hrt_import_* (read and write a grid)", op_import);
    snprintf(v1_file, sizeof v1_file, "%s/v1.h5", dir);
    snprintf(up_ref, sizeof up_ref, "%s/upgraded-ref.h5", dir);
    snprintf(up_out, sizeof up_out, "%s/upgraded.h5", dir);
    HARD_CHECK(synth_downgrade_v1(grid_path, v1_file) == 0, "format-1 copy of the synthetic grid");
    HARD_CHECK(hrt_grid_upgrade(v1_file, up_ref, &e) == HRT_OK, "reference upgrade: %s", e.message);
    sweep("hrt_grid_upgrade (format 1)", op_upgrade);
    unlink(v1_file);
    unlink(up_ref);
    {
        hrt_error e2;
        ref_fit_rc = do_fit(&ref_fit, &ref_fc, &ref_fc_rc, &e2);
        HARD_CHECK(ref_fit_rc == HRT_OK && ref_fc_rc == HRT_OK, "reference fit %d, forecast %d: %s", ref_fit_rc,
                   ref_fc_rc, e2.message);
        ref_pop_rc = do_pop(&ref_pop, &e2);
        HARD_CHECK(ref_pop_rc == HRT_OK, "reference population: %s", e2.message);
    }
    sweep("hrt_fit_* and hrt_forecast", op_fit);
    sweep("hrt_pop_run (1 thread)", op_pop);
    unlink(track_file);
    printf("alloc: %ld allocation points in all, %ld failures returned\n", total_points, total_failures);

    hrt_grid_close(shared_grid);
    __real_free(ref_iso);
    unlink(ref_file);
    unlink(grid_path);
    rmdir(dir);
    HARD_CHECK(n_live == 0, "%ld blocks still live at the end", n_live);
    return hard_finish("alloc");
}
