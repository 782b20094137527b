/* Core library tests: grid reading and writing, interpolation against exact
 * answers and GSL, stars, batches, isochrones, remnants, errors. */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_interp.h>
#include <gsl/gsl_rng.h>
#include <hdf5.h>

#include "hrtrail.h"
#include "core/core.h"
#include "synth.h"

/* GSL's handler must never be reached: count any call (style: install a
 * counting handler in tests, fail if it was called). */
static int gsl_handler_calls;
static void counting_handler(const char *reason, const char *file, int line, int gsl_errno)
{
    (void)reason;
    (void)file;
    (void)line;
    (void)gsl_errno;
    gsl_handler_calls++;
}

static char tmpdir[256];
static char grid_path[300];
static const synth_spec base_spec = {9, 11, 4, 1, 1, 0.3, 1.0, 10.0};

static void path_in_tmp(char *out, size_t n, const char *name) { snprintf(out, n, "%s/%s", tmpdir, name); }

static int setup_once(void)
{
    snprintf(tmpdir, sizeof tmpdir, "/tmp/hrt-core-XXXXXX");
    if (!mkdtemp(tmpdir))
        return 1;
    path_in_tmp(grid_path, sizeof grid_path, "synth.h5");
    hrt_error e;
    if (synth_write(&base_spec, grid_path, &e) != HRT_OK) {
        fprintf(stderr, "cannot write the synthetic grid: %s\n", e.message);
        return 1;
    }
    gsl_set_error_handler(counting_handler);
    return 0;
}

static void teardown_each(void) { ck_assert_int_eq(gsl_handler_calls, 0); }

static hrt_grid *open_or_fail(const char *path, int interp)
{
    hrt_grid *g = NULL;
    hrt_error e;
    int rc = hrt_grid_open_with(path, interp, &g, &e);
    ck_assert_msg(rc == HRT_OK, "open %s: %s", path, e.message);
    return g;
}

/* ---- names, versions, error list ------------------------------------- */

START_TEST(test_names)
{
    ck_assert_str_eq(hrt_strerror(HRT_OK), "success");
    ck_assert_str_eq(hrt_strerror(9999), "unknown status code");
    for (int c = 0; c < HRT_STATUS_COUNT_; c++)
        ck_assert(strlen(hrt_strerror(c)) > 3);
    ck_assert_int_eq(hrt_phase_from_key("nonsense"), HRT_PHASE_UNKNOWN);
    ck_assert_int_eq(hrt_phase_from_key(NULL), HRT_PHASE_UNKNOWN);
    ck_assert_str_eq(hrt_phase_name(-3), "unknown");
    ck_assert_int_eq(hrt_remnant_from_key("nonsense"), -1);
    ck_assert_int_eq(hrt_remnant_from_key(NULL), -1);
    for (int i = 0; i < HRT_INTERP_COUNT; i++)
        ck_assert_int_eq(hrt_interp_from_name(hrt_interp_name(i)), i);
    ck_assert_int_eq(hrt_interp_from_name("quintic"), -1);
    ck_assert_str_eq(hrt_version(), HRT_VERSION_STRING);
    ck_assert_int_eq(hrt_abi_version(), HRT_ABI_VERSION);
    ck_assert_uint_eq(hrt_state_size(), sizeof(hrt_state));
}
END_TEST

/* The phase and remnant lists of include/hrtrail/core.h, as the header
 * spells them (X-macros), against the library's tables: every entry
 * iterated by hrt_phase_code(i), its key round trip, codes below the slot
 * counts, keys and codes unique, and the grouping by tens the header
 * documents. */
typedef struct list_entry {
    int code;
    const char *key, *text;
} list_entry;
#define AS_ENTRY_(name, code, key, text) {code, key, text},
static const list_entry phase_list[] = {HRT_PHASE_LIST(AS_ENTRY_)};
static const list_entry remnant_list[] = {HRT_REMNANT_LIST(AS_ENTRY_)};
#undef AS_ENTRY_

START_TEST(test_phase_codes)
{
    size_t n = sizeof phase_list / sizeof phase_list[0];
    ck_assert_uint_eq(n, HRT_PHASE_N);
    ck_assert_int_eq(hrt_phase_code(0), HRT_PHASE_UNKNOWN);
    ck_assert_int_eq(hrt_phase_code(HRT_PHASE_N), -1);
    ck_assert_int_eq(hrt_phase_code((size_t)-1), -1);
    int seen[HRT_PHASE_SLOTS] = {0};
    for (size_t i = 0; i < HRT_PHASE_N; i++) {
        int c = hrt_phase_code(i);
        ck_assert_int_eq(c, phase_list[i].code);
        ck_assert_msg(c >= 0 && c < HRT_PHASE_SLOTS, "phase %zu: code %d not below HRT_PHASE_SLOTS", i, c);
        ck_assert_msg(!seen[c]++, "phase code %d twice", c);
        ck_assert_str_eq(hrt_phase_key(c), phase_list[i].key);
        ck_assert_str_eq(hrt_phase_name(c), phase_list[i].text);
        ck_assert_int_eq(hrt_phase_from_key(hrt_phase_key(c)), c);
        for (size_t k = 0; k < i; k++)
            ck_assert_msg(strcmp(phase_list[k].key, phase_list[i].key) != 0, "phase key '%s' twice", phase_list[i].key);
    }
    /* every other slot is no phase */
    for (int c = 0; c < HRT_PHASE_SLOTS; c++)
        if (!seen[c]) {
            ck_assert_str_eq(hrt_phase_key(c), "unknown");
            ck_assert_str_eq(hrt_phase_name(c), "unknown");
        }
    /* code / 10 is the part of the star's life (core.h, HRT_PHASE_LIST) */
    static const struct {
        int code, group;
    } groups[] = {
        {HRT_PHASE_UNKNOWN, 0}, {HRT_PHASE_PRE_MS, 1}, {HRT_PHASE_MS, 1},      {HRT_PHASE_SUBGIANT, 2},
        {HRT_PHASE_RGB, 2},     {HRT_PHASE_POST_RGB, 2}, {HRT_PHASE_CHEB, 3},  {HRT_PHASE_EAGB, 3},
        {HRT_PHASE_TPAGB, 3},   {HRT_PHASE_POST_AGB, 3}, {HRT_PHASE_BSG, 4},   {HRT_PHASE_RSG, 4},
        {HRT_PHASE_WR, 4},      {HRT_PHASE_WD, 5},       {HRT_PHASE_NS, 5},    {HRT_PHASE_BH, 5},
    };
    ck_assert_uint_eq(sizeof groups / sizeof groups[0], HRT_PHASE_N);
    for (size_t k = 0; k < sizeof groups / sizeof groups[0]; k++)
        ck_assert_msg(groups[k].code / 10 == groups[k].group, "phase %s: code %d not in group %d",
                      hrt_phase_key(groups[k].code), groups[k].code, groups[k].group);
}
END_TEST

START_TEST(test_remnant_codes)
{
    size_t n = sizeof remnant_list / sizeof remnant_list[0];
    ck_assert_uint_eq(n, HRT_REMNANT_N);
    ck_assert_int_eq(hrt_remnant_code(0), HRT_REMNANT_NONE);
    ck_assert_int_eq(hrt_remnant_code(HRT_REMNANT_N), -1);
    int seen[HRT_REMNANT_SLOTS] = {0};
    for (size_t i = 0; i < HRT_REMNANT_N; i++) {
        int c = hrt_remnant_code(i);
        ck_assert_int_eq(c, remnant_list[i].code);
        ck_assert_msg(c >= 0 && c < HRT_REMNANT_SLOTS, "remnant %zu: code %d not below HRT_REMNANT_SLOTS", i, c);
        ck_assert_msg(!seen[c]++, "remnant code %d twice", c);
        ck_assert_str_eq(hrt_remnant_key(c), remnant_list[i].key);
        ck_assert_str_eq(hrt_remnant_name(c), remnant_list[i].text);
        ck_assert_int_eq(hrt_remnant_from_key(hrt_remnant_key(c)), c);
        for (size_t k = 0; k < i; k++)
            ck_assert_msg(strcmp(remnant_list[k].key, remnant_list[i].key) != 0, "remnant key '%s' twice",
                          remnant_list[i].key);
    }
    for (int c = 0; c < HRT_REMNANT_SLOTS; c++)
        if (!seen[c])
            ck_assert_str_eq(hrt_remnant_key(c), "unknown");
    /* code / 10 is the kind of compact object (core.h, HRT_REMNANT_LIST):
     * 0 none, 1 white dwarfs, 2 neutron star, 3 black hole */
    ck_assert_int_eq(HRT_REMNANT_NONE / 10, 0);
    ck_assert_int_eq(HRT_REMNANT_HE_WD / 10, 1);
    ck_assert_int_eq(HRT_REMNANT_CO_WD / 10, 1);
    ck_assert_int_eq(HRT_REMNANT_ONE_WD / 10, 1);
    ck_assert_int_eq(HRT_REMNANT_NS / 10, 2);
    ck_assert_int_eq(HRT_REMNANT_BH / 10, 3);
}
END_TEST

/* ---- slopes and Hermite against GSL itself --------------------------- */

static const gsl_interp_type *gtype(int t)
{
    return t == HRT_INTERP_AKIMA ? gsl_interp_akima
           : t == HRT_INTERP_CSPLINE ? gsl_interp_cspline
           : t == HRT_INTERP_STEFFEN ? gsl_interp_steffen
                                       : gsl_interp_linear;
}

/* trail_slopes_local (used across [Fe/H]) and the Hermite form reproduce GSL
 * 2.7's interpolants on random knots: reference GSL itself, relative 1e-13. */
START_TEST(test_slopes_match_gsl)
{
    gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);
    const double tol = 1e-13;
    for (int t = 0; t < HRT_INTERP_COUNT; t++) {
        for (int trial = 0; trial < 200; trial++) {
            size_t n = 5 + trial % 20;
            double x[32], y[32], d[32];
            x[0] = gsl_rng_uniform(rng);
            for (size_t i = 1; i < n; i++)
                x[i] = x[i - 1] + 0.05 + gsl_rng_uniform(rng);
            for (size_t i = 0; i < n; i++)
                y[i] = sin(3.0 * x[i]) + 0.3 * gsl_rng_uniform(rng);
            trail_slopes_local(t, n, x, y, d);
            gsl_interp *it = gsl_interp_alloc(gtype(t), n);
            gsl_interp_init(it, x, y, n);
            for (int k = 0; k < 50; k++) {
                double xq = x[0] + (x[n - 1] - x[0]) * gsl_rng_uniform(rng);
                size_t i = 0;
                while (i + 2 < n && x[i + 1] <= xq)
                    i++;
                double w[4];
                trail_hermite_weights(t, x[i], x[i + 1], xq, w);
                double ours = w[0] * y[i] + w[1] * d[i] + w[2] * y[i + 1] + w[3] * d[i + 1];
                double ref;
                gsl_interp_eval_e(it, x, y, xq, NULL, &ref);
                ck_assert_msg(fabs(ours - ref) <= tol * (1.0 + fabs(ref)), "%s n=%zu: %.17g vs GSL %.17g",
                              hrt_interp_name(t), n, ours, ref);
            }
            gsl_interp_free(it);
        }
    }
    gsl_rng_free(rng);
}
END_TEST

/* The closed-form slopes the grid computes at open (trail_slopes_work, any
 * number of knots, as many as a grid's tracks per metallicity and ten times
 * more) equal GSL 2.7's derivative of its own interpolant at every knot:
 * reference GSL gsl_interp_eval_deriv (trail_slopes_gsl), relative 1e-14 of
 * the knots' largest secant (GSL takes the last knot's slope from the cubic
 * of the last interval, which rounds differently). */
START_TEST(test_open_slopes_match_gsl_deriv)
{
    gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);
    enum { NMAX = 1200 };
    double *x = malloc(NMAX * sizeof(double)), *y = malloc(NMAX * sizeof(double));
    double *d = malloc(NMAX * sizeof(double)), *ref = malloc(NMAX * sizeof(double));
    double *work = malloc(TRAIL_SLOPES_WORK(NMAX) * sizeof(double));
    double worst = 0.0;
    static const size_t sizes[] = {2, 3, 4, 5, 6, 17, 64, 110, 300, 1100};
    for (int t = 0; t < HRT_INTERP_COUNT; t++) {
        for (size_t si = 0; si < sizeof sizes / sizeof *sizes; si++) {
            for (int trial = 0; trial < 20; trial++) {
                size_t n = sizes[si];
                x[0] = -1.0 + gsl_rng_uniform(rng);
                for (size_t i = 1; i < n; i++)
                    x[i] = x[i - 1] + (0.2 + gsl_rng_uniform(rng)) * 3.0 / (double)n;
                for (size_t i = 0; i < n; i++)
                    y[i] = 4.0 * sin(3.0 * x[i]) + (trial % 2 ? 0.05 * gsl_rng_uniform(rng) : 0.0) + (trial % 3) * 1e3;
                int eff = trail_interp_effective(t, n);
                trail_slopes_work(t, n, x, y, d, work);
                gsl_interp *it = gsl_interp_alloc(gtype(eff), n);
                ck_assert_int_eq(trail_slopes_gsl(n, x, y, ref, it), HRT_OK);
                gsl_interp_free(it);
                double scale = 0.0;
                for (size_t i = 0; i + 1 < n; i++) {
                    double sec = fabs((y[i + 1] - y[i]) / (x[i + 1] - x[i]));
                    scale = sec > scale ? sec : scale;
                }
                for (size_t i = 0; i < n; i++) {
                    double e = fabs(d[i] - ref[i]) / scale;
                    worst = e > worst ? e : worst;
                    ck_assert_msg(e <= 1e-14, "%s n=%zu knot %zu: %.17g vs GSL %.17g (%.3g)", hrt_interp_name(t), n,
                                  i, d[i], ref[i], e);
                }
            }
        }
    }
    printf("open slopes against GSL's derivative: largest difference %.3g of the largest secant\n", worst);
    free(x);
    free(y);
    free(d);
    free(ref);
    free(work);
    gsl_rng_free(rng);
}
END_TEST

/* The grid's hot path (Hermite with slopes from GSL at open) equals GSL's
 * own spline evaluation across log mass: reference GSL gsl_interp_eval,
 * relative 1e-13.  Knot values are read back from the file. */
START_TEST(test_hot_path_equals_gsl)
{
    for (int t = 0; t < HRT_INTERP_COUNT; t++) {
        hrt_grid *g = open_or_fail(grid_path, t);
        const zgroup *gp = &g->grp[1];
        int r = 1;
        size_t lo = gp->route_lo[r], n = gp->route_hi[r] - lo;
        int j = 17;
        double x[64], y[64];
        for (size_t k = 0; k < n; k++) {
            x[k] = gp->logm[lo + k];
            y[k] = trail_knot(gp, (size_t)j, lo + k, Q_L)[0];
        }
        gsl_interp *it = gsl_interp_alloc(gtype(t), n);
        gsl_interp_init(it, x, y, n);
        qctx q;
        for (int k = 0; k <= 400; k++) {
            double xm = x[0] + (x[n - 1] - x[0]) * k / 400.0;
            ck_assert_int_eq(trail_qctx_init(g, pow(10.0, xm), gp->z, &q, NULL), HRT_OK);
            double ours = trail_q_value(&q, Q_L, j), ref;
            gsl_interp_eval_e(it, x, y, xm, NULL, &ref);
            ck_assert_msg(fabs(ours - ref) <= 1e-13 * (1.0 + fabs(ref)), "%s: %.17g vs %.17g",
                          hrt_interp_name(t), ours, ref);
        }
        gsl_interp_free(it);
        hrt_grid_close(g);
    }
}
END_TEST

/* hrt_eval over a large batch (evaluated in buckets of metallicity and
 * mass, batch.c) gives every star the state a one-star call gives it, to the
 * byte, and reports the first failure in the caller's order with the same
 * code and message: 70,000 random stars (more than one bucketing chunk), at
 * grid metallicities, between them and outside, masses and ages inside and
 * outside the grid. */
START_TEST(test_batch_equals_one_star)
{
    hrt_grid *g = open_or_fail(grid_path, HRT_INTERP_STEFFEN);
    gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);
    const size_t n = 70000;
    double *m = malloc(n * sizeof *m), *z = malloc(n * sizeof *z), *age = malloc(n * sizeof *age);
    hrt_state *batch = malloc(n * sizeof *batch);
    double zlo, zhi;
    ck_assert_int_eq(hrt_grid_z_range(g, &zlo, &zhi), HRT_OK);
    for (int pass = 0; pass < 2; pass++) {
        for (size_t i = 0; i < n; i++) {
            double u = gsl_rng_uniform(rng);
            z[i] = u < 0.3 ? hrt_grid_z(g, gsl_rng_uniform_int(rng, hrt_grid_n_z(g)))
                           : zlo * pow(zhi / zlo, 1.1 * gsl_rng_uniform(rng) - 0.05);
            double lo, hi;
            if (hrt_grid_mass_range(g, z[i], &lo, &hi) != HRT_OK) {
                lo = 0.5;
                hi = 20.0;
            }
            m[i] = lo * pow(hi / lo, 1.04 * gsl_rng_uniform(rng) - 0.02);
            double r = gsl_rng_uniform(rng);
            age[i] = r < 0.005 ? 0.0 : r < 0.01 ? NAN : 1e5 * pow(1e6, gsl_rng_uniform(rng));
        }
        if (pass == 1) /* no failure before the middle: the first is not the first evaluated */
            for (size_t i = 0; i < n / 2; i++) {
                z[i] = hrt_grid_z(g, 1);
                m[i] = 1.0 + (double)(i % 7);
                age[i] = 1e8;
            }
        hrt_error eb, e1;
        int rcb = hrt_eval(g, n, m, z, 0.0, age, batch, &eb);
        int rc1 = HRT_OK;
        size_t first = n;
        for (size_t i = 0; i < n; i++) {
            hrt_state s;
            hrt_error e;
            int rc = hrt_eval(g, 1, &m[i], &z[i], 0.0, &age[i], &s, &e);
            ck_assert_msg(memcmp(&s, &batch[i], sizeof s) == 0, "star %zu (%g Msun, Z %g, %g yr) differs", i, m[i], z[i],
                          age[i]);
            if (rc != HRT_OK && first == n) {
                first = i;
                rc1 = rc;
                e1 = e;
            }
        }
        ck_assert_uint_lt(first, n); /* the inputs include failures */
        ck_assert_int_eq(rcb, rc1);
        char want[sizeof e1.message + 32];
        const char *colon = strchr(e1.message, ':'); /* one-star message: "star 0: ..." */
        ck_assert_ptr_nonnull(colon);
        snprintf(want, sizeof want, "star %zu%s", first, colon);
        ck_assert_str_eq(eb.message, want);
    }
    free(m);
    free(z);
    free(age);
    free(batch);
    gsl_rng_free(rng);
    hrt_grid_close(g);
}
END_TEST

/* The batch kernel (core/lockstep.c) gives every star the one-star state to
 * the byte, for each interpolation type: batches of 1 to 17 stars (around
 * the kernel's width of 4), just below, at and above the sizes from which
 * batches are bucketed (1,024 stars of one metallicity, 16,384 otherwise)
 * and large ones; stars at grid metallicities (where the kernel takes
 * them) and between, masses spread over the grid, packed into a few mass
 * intervals (long runs) or set on the tracks' own masses
 * (the ends of an interval), or all at one grid metallicity (given per star
 * or for the batch), ages on the tracks, before them (0), past their ends and
 * invalid. */
static void lockstep_stars(const hrt_grid *g, gsl_rng *rng, size_t n, int style, double *m, double *z, double *age)
{
    double zlo, zhi;
    ck_assert_int_eq(hrt_grid_z_range(g, &zlo, &zhi), HRT_OK);
    size_t nz = hrt_grid_n_z(g);
    for (size_t i = 0; i < n; i++) {
        size_t iz = gsl_rng_uniform_int(rng, nz);
        z[i] = gsl_rng_uniform(rng) < 0.8 ? hrt_grid_z(g, iz) : zlo * pow(zhi / zlo, gsl_rng_uniform(rng));
        double lo, hi;
        ck_assert_int_eq(hrt_grid_mass_range(g, z[i], &lo, &hi), HRT_OK);
        size_t nm = hrt_grid_n_masses(g, iz);
        double u = gsl_rng_uniform(rng);
        if (style == 1) { /* a few intervals of one group */
            size_t im = 1 + gsl_rng_uniform_int(rng, 3) * (nm / 4);
            double a = hrt_grid_mass(g, iz, im - 1), b = hrt_grid_mass(g, iz, im);
            z[i] = hrt_grid_z(g, iz);
            m[i] = a * pow(b / a, u);
        } else if (style == 3) { /* one grid metallicity for the batch, some tracks' own masses */
            z[i] = hrt_grid_z(g, 1);
            nm = hrt_grid_n_masses(g, 1);
            m[i] = u < 0.1 ? hrt_grid_mass(g, 1, gsl_rng_uniform_int(rng, nm))
                           : hrt_grid_mass(g, 1, 0) * pow(hrt_grid_mass(g, 1, nm - 1) / hrt_grid_mass(g, 1, 0), u);
        } else if (style == 2 && u < 0.1) { /* a track's own mass */
            m[i] = hrt_grid_mass(g, iz, gsl_rng_uniform_int(rng, nm));
            z[i] = hrt_grid_z(g, iz);
        } else {
            m[i] = lo * pow(hi / lo, u);
        }
        /* log-uniform from 0.9 times the start of the star's track to 1.1
         * times its end */
        hrt_state ends[2];
        double probe[2] = {1.0, 1e13};
        hrt_eval(g, 2, (double[]){m[i], m[i]}, (double[]){z[i], z[i]}, 0.0, probe, ends, NULL);
        double t0 = ends[0].phase_end_yr > 0.0 ? 0.9 * ends[0].phase_end_yr : 1e5;
        double t1 = isfinite(ends[1].phase_start_yr) && ends[1].phase_start_yr > t0 ? 1.1 * ends[1].phase_start_yr : 1e10;
        double r = gsl_rng_uniform(rng);
        age[i] = r < 0.01 ? 0.0 : r < 0.015 ? NAN : r < 0.02 ? -1.0 : t0 * pow(t1 / t0, gsl_rng_uniform(rng));
    }
}

START_TEST(test_lockstep_equals_one_star)
{
    static const int types[] = {HRT_INTERP_LINEAR, HRT_INTERP_STEFFEN, HRT_INTERP_AKIMA, HRT_INTERP_CSPLINE};
    static const size_t sizes[] = {1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15, 16, 17, 1023, 1024, 1025, 16383, 16384, 16401, 70001};
    const size_t nmax = 70001;
    gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);
    double *m = malloc(nmax * sizeof *m), *z = malloc(nmax * sizeof *z), *age = malloc(nmax * sizeof *age);
    hrt_state *batch = malloc(nmax * sizeof *batch);
    size_t checked = 0, on_track = 0;
    for (size_t t = 0; t < sizeof types / sizeof types[0]; t++) {
        hrt_grid *g = open_or_fail(grid_path, types[t]);
        for (size_t k = 0; k < sizeof sizes / sizeof sizes[0]; k++) {
            size_t n = sizes[k];
            int style = (int)((k + t) % 4);
            lockstep_stars(g, rng, n, style, m, z, age);
            /* one metallicity given as z_all (NULL z) half the time */
            int z_all = style == 3 && k % 2;
            hrt_eval(g, n, m, z_all ? NULL : z, z[0], age, batch, NULL);
            for (size_t i = 0; i < n; i++) {
                hrt_state s;
                hrt_eval(g, 1, &m[i], &z[i], 0.0, &age[i], &s, NULL);
                ck_assert_msg(memcmp(&s, &batch[i], sizeof s) == 0, "type %d, %zu stars, star %zu (%.17g Msun, Z %.17g, %.17g yr) differs",
                              types[t], n, i, m[i], z[i], age[i]);
                on_track += s.status == HRT_OK && isfinite(s.eep);
            }
            checked += n;
        }
        hrt_grid_close(g);
    }
    ck_assert_uint_gt(on_track, checked / 2); /* most stars are on their tracks */
    free(m);
    free(z);
    free(age);
    free(batch);
    gsl_rng_free(rng);
}
END_TEST

/* The kernel for stars between grid metallicities (core/lockstep_z.c)
 * gives every star the one-star state to the byte, for each interpolation
 * type, called directly and through hrt_eval: batches of 1 to 9 stars
 * (around the kernel's width of 4), around the sizes from which batches are
 * bucketed (512 stars with metallicities spread, 1,024 of one, 16,384 before
 * this kernel) and large ones; metallicities between groups over the whole
 * grid, a little outside it, within the placement tolerance of a group's
 * and mixed with the groups' own; masses over the grid and a little
 * outside, on the tracks' own masses, or packed into a few intervals and
 * one bracket of groups (long runs); ages on the tracks, before them (0),
 * past their ends and invalid. */
static void lockstep_z_stars(const hrt_grid *g, gsl_rng *rng, size_t n, int style, double *m, double *z, double *age)
{
    double zlo, zhi;
    ck_assert_int_eq(hrt_grid_z_range(g, &zlo, &zhi), HRT_OK);
    size_t nz = hrt_grid_n_z(g);
    size_t b0 = gsl_rng_uniform_int(rng, nz - 1); /* the bracket of style 1 */
    for (size_t i = 0; i < n; i++) {
        size_t iz = gsl_rng_uniform_int(rng, nz);
        double u = gsl_rng_uniform(rng), lo, hi;
        z[i] = zlo * pow(zhi / zlo, 1.02 * gsl_rng_uniform(rng) - 0.01);
        if (style == 1) { /* one bracket, a few intervals */
            double za = hrt_grid_z(g, b0), zb = hrt_grid_z(g, b0 + 1);
            z[i] = za * pow(zb / za, 0.01 + 0.98 * gsl_rng_uniform(rng));
            size_t nm = hrt_grid_n_masses(g, b0), im = 1 + gsl_rng_uniform_int(rng, 3) * (nm / 4);
            double a = hrt_grid_mass(g, b0, im - 1), b = hrt_grid_mass(g, b0, im);
            m[i] = a * pow(b / a, u);
        } else {
            if (style == 2 && gsl_rng_uniform(rng) < 0.3) /* a group's own Z, or within the tolerance of it */
                z[i] = hrt_grid_z(g, iz) * (gsl_rng_uniform(rng) < 0.5 ? 1.0 : 1.0 + 4e-12 * (gsl_rng_uniform(rng) - 0.5));
            if (hrt_grid_mass_range(g, z[i], &lo, &hi) != HRT_OK) {
                lo = 0.5;
                hi = 5.0;
            }
            size_t nm = hrt_grid_n_masses(g, iz);
            m[i] = style == 3 && u < 0.2 ? hrt_grid_mass(g, iz, gsl_rng_uniform_int(rng, nm))
                                         : lo * pow(hi / lo, 1.04 * gsl_rng_uniform(rng) - 0.02);
        }
        hrt_state ends[2];
        double probe[2] = {1.0, 1e13};
        hrt_eval(g, 2, (double[]){m[i], m[i]}, (double[]){z[i], z[i]}, 0.0, probe, ends, NULL);
        double t0 = ends[0].phase_end_yr > 0.0 ? 0.9 * ends[0].phase_end_yr : 1e5;
        double t1 = isfinite(ends[1].phase_start_yr) && ends[1].phase_start_yr > t0 ? 1.1 * ends[1].phase_start_yr : 1e10;
        double r = gsl_rng_uniform(rng);
        age[i] = r < 0.01 ? 0.0 : r < 0.015 ? NAN : r < 0.02 ? -1.0 : r < 0.025 ? INFINITY : t0 * pow(t1 / t0, gsl_rng_uniform(rng));
    }
}

START_TEST(test_lockstep_z_equals_one_star)
{
    static const int types[] = {HRT_INTERP_LINEAR, HRT_INTERP_STEFFEN, HRT_INTERP_AKIMA, HRT_INTERP_CSPLINE};
    static const size_t sizes[] = {1, 2, 3, 4, 5, 6, 7, 8, 9, 511, 512, 513, 1023, 1024, 1025, 16383, 16384, 16385, 40001};
    const size_t nmax = 40001;
    gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);
    double *m = malloc(nmax * sizeof *m), *z = malloc(nmax * sizeof *z), *age = malloc(nmax * sizeof *age);
    hrt_state *batch = malloc(nmax * sizeof *batch), *direct = malloc(nmax * sizeof *direct);
    size_t checked = 0, on_track = 0;
    for (size_t t = 0; t < sizeof types / sizeof types[0]; t++) {
        hrt_grid *g = open_or_fail(grid_path, types[t]);
        for (size_t k = 0; k < sizeof sizes / sizeof sizes[0]; k++) {
            size_t n = sizes[k];
            int style = (int)((k + t) % 4);
            lockstep_z_stars(g, rng, n, style, m, z, age);
            hrt_eval(g, n, m, z, 0.0, age, batch, NULL);
            trail_eval_lockstep_z(g, n, m, z, age, direct);
            for (size_t i = 0; i < n; i++) {
                hrt_state s;
                hrt_eval(g, 1, &m[i], &z[i], 0.0, &age[i], &s, NULL);
                ck_assert_msg(memcmp(&s, &batch[i], sizeof s) == 0,
                              "type %d, %zu stars, style %d, star %zu (%.17g Msun, Z %.17g, %.17g yr) differs in the batch",
                              types[t], n, style, i, m[i], z[i], age[i]);
                ck_assert_msg(memcmp(&s, &direct[i], sizeof s) == 0,
                              "type %d, %zu stars, style %d, star %zu (%.17g Msun, Z %.17g, %.17g yr) differs in the kernel",
                              types[t], n, style, i, m[i], z[i], age[i]);
                on_track += s.status == HRT_OK && isfinite(s.eep);
            }
            checked += n;
        }
        hrt_grid_close(g);
    }
    ck_assert_uint_gt(on_track, checked / 2); /* most stars are on their tracks */
    free(m);
    free(z);
    free(age);
    free(batch);
    free(direct);
    gsl_rng_free(rng);
}
END_TEST

/* ---- round trip: what was written is what is read --------------------- */

START_TEST(test_roundtrip_exact_at_knots)
{
    hrt_grid *g = open_or_fail(grid_path, HRT_INTERP_STEFFEN);
    ck_assert_uint_eq(hrt_grid_n_z(g), 4);
    ck_assert_uint_eq(hrt_grid_n_routes(g), 2);
    ck_assert_str_eq(hrt_grid_route_name(g, 0), "low");
    ck_assert_str_eq(hrt_grid_keypoint_name(g, 1, 2), "ignite");
    ck_assert_int_eq(hrt_grid_keypoint_eep(g, 1, 2), 50);
    ck_assert_uint_eq(hrt_grid_route_n_eep(g, 1), 61);
    ck_assert_str_eq(hrt_grid_attribute(g, "description"), "synthetic test grid (known functions)");
    ck_assert_ptr_null(hrt_grid_attribute(g, "nope"));
    for (size_t iz = 0; iz < hrt_grid_n_z(g); iz++) {
        double z = hrt_grid_z(g, iz), y = synth_feh(z);
        for (size_t im = 0; im < hrt_grid_n_masses(g, iz); im++) {
            double m = hrt_grid_mass(g, iz, im);
            int route = hrt_grid_track_route(g, iz, im);
            hrt_star *s;
            ck_assert_int_eq(hrt_star_new(g, m, z, &s, NULL), HRT_OK);
            size_t J = hrt_star_n_eep(s);
            ck_assert_uint_eq(J, hrt_grid_track_n_eep(g, iz, im));
            for (size_t j = 0; j < J; j++) {
                hrt_state st;
                double e = (double)j / (J - 1);
                ck_assert_int_eq(hrt_star_eep_state(s, j, &st), HRT_OK);
                /* the file holds these doubles; only log10 of the stored
                 * mass differs from the generating x in the last bits */
                ck_assert_double_eq_tol(st.log_l_lsun, synth_log_l(route, log10(m), e, y), 1e-12);
                ck_assert_double_eq_tol(log10(st.age_yr), synth_log_age(route, log10(m), e, y), 1e-14);
                ck_assert_int_eq(st.phase, synth_phase(route, (int)j, (int)J));
            }
            int kind;
            double rm;
            hrt_star_remnant(s, &kind, &rm);
            ck_assert_int_eq(kind, route ? HRT_REMNANT_CO_WD : HRT_REMNANT_HE_WD);
            ck_assert_double_eq_tol(rm, synth_remnant_mass(route, log10(m), y), 1e-15);
            hrt_star_free(s);
        }
    }
    hrt_grid_close(g);
}
END_TEST

START_TEST(test_writer_atomic_and_deterministic)
{
    char p1[320], p2[320];
    path_in_tmp(p1, sizeof p1, "a.h5");
    path_in_tmp(p2, sizeof p2, "b.h5");
    hrt_error e;
    ck_assert_int_eq(synth_write(&base_spec, p1, &e), HRT_OK);
    ck_assert_int_eq(synth_write(&base_spec, p2, &e), HRT_OK);
    char cmd[700];
    snprintf(cmd, sizeof cmd, "cmp -s %s %s", p1, p2);
    ck_assert_msg(system(cmd) == 0, "two writes of the same grid differ");
    /* A write into a missing directory fails and leaves nothing behind. */
    char bad[320];
    path_in_tmp(bad, sizeof bad, "missing-dir/x.h5");
    ck_assert_int_eq(synth_write(&base_spec, bad, &e), HRT_E_IO);
    snprintf(cmd, sizeof cmd, "ls %s | grep -c tmp- > /dev/null", tmpdir);
    ck_assert_msg(system(cmd) != 0, "temporary file left behind");
}
END_TEST

/* ---- exact-answer grids: accuracy and convergence --------------------- */

/* Max |error| of log L over interior masses of the high route at the grid
 * metallicity iz, queried at the exact age of fractional EEP position e. */
static double max_error(const synth_spec *s, int interp, int iz, double frac_lo, double frac_hi)
{
    char p[320];
    path_in_tmp(p, sizeof p, "conv.h5");
    hrt_error e;
    ck_assert_int_eq(synth_write(s, p, &e), HRT_OK);
    hrt_grid *g = open_or_fail(p, interp);
    double z = synth_z(s, iz), y = synth_feh(z), err = 0.0;
    double lo = log10(s->mass_b) + 0.02, hi = log10(s->mass_hi);
    for (int k = 0; k <= 500; k++) {
        double x = lo + (hi - lo) * (frac_lo + (frac_hi - frac_lo) * k / 500.0);
        for (int j = 3; j < 55; j += 7) {
            double ef = j / 60.0;
            double age = pow(10.0, synth_log_age(1, x, ef, y)), m = pow(10.0, x);
            hrt_state st;
            ck_assert_int_eq(hrt_eval(g, 1, &m, NULL, z, &age, &st, NULL), HRT_OK);
            double d = fabs(st.log_l_lsun - synth_log_l(1, x, st.eep / 60.0, y));
            double dl = fabs(st.eep / 60.0 - ef); /* the age's EEP must be recovered too */
            if (d > err)
                err = d;
            if (dl * 10.0 > err)
                err = dl * 10.0;
        }
    }
    hrt_grid_close(g);
    return err;
}

START_TEST(test_exact_answer_accuracy)
{
    /* Stated tolerances on a grid of 11 tracks over 1-10 Msun (0.1 dex
     * spacing), interior masses, at a grid metallicity: log L in dex. */
    const double tol[HRT_INTERP_COUNT] = {2e-3, 2e-2, 2e-4, 1e-3};
    for (int t = 0; t < HRT_INTERP_COUNT; t++) {
        double err = max_error(&base_spec, t, 2, 0.1, 0.9);
        ck_assert_msg(err < tol[t], "%s: max error %.3g dex exceeds %.3g", hrt_interp_name(t), err, tol[t]);
    }
}
END_TEST

START_TEST(test_convergence_order)
{
    /* Halving the mass spacing must shrink the interior error of the
     * natural cubic spline by about 2^4 (fourth order; asserted > 3.3) and
     * of linear interpolation by 2^2 (asserted > 1.7). */
    synth_spec s1 = base_spec, s2 = base_spec;
    s1.jitter = s2.jitter = 0;
    s1.n_high = 11;
    s2.n_high = 21;
    double c1 = max_error(&s1, HRT_INTERP_CSPLINE, 1, 0.3, 0.7);
    double c2 = max_error(&s2, HRT_INTERP_CSPLINE, 1, 0.3, 0.7);
    double l1 = max_error(&s1, HRT_INTERP_LINEAR, 1, 0.3, 0.7);
    double l2 = max_error(&s2, HRT_INTERP_LINEAR, 1, 0.3, 0.7);
    double oc = log2(c1 / c2), ol = log2(l1 / l2);
    ck_assert_msg(oc > 3.3, "cspline order %.2f (errors %.3g -> %.3g)", oc, c1, c2);
    ck_assert_msg(ol > 1.7, "linear order %.2f (errors %.3g -> %.3g)", ol, l1, l2);
}
END_TEST

START_TEST(test_metallicity_interpolation)
{
    /* Between metallicity groups (0.34 dex apart) at interior masses:
     * stated tolerance 5e-3 dex in log L for the cubic types, 3e-2 linear
     * (the synthetic log L has curvature 0.1 dex per dex^2 in [Fe/H]). */
    for (int t = 0; t < HRT_INTERP_COUNT; t++) {
        hrt_grid *g = open_or_fail(grid_path, t);
        double worst = 0.0;
        for (int k = 0; k < 200; k++) {
            double y = synth_feh(0.0015) + (synth_feh(0.025) - synth_feh(0.0015)) * k / 199.0;
            double z = 0.02 * pow(10.0, y), x = log10(1.5) + 0.6 * (k % 17) / 16.0, m = pow(10.0, x);
            double ef = (5 + k % 50) / 60.0, age = pow(10.0, synth_log_age(1, x, ef, y));
            hrt_state st;
            ck_assert_int_eq(hrt_eval(g, 1, &m, NULL, z, &age, &st, NULL), HRT_OK);
            double d = fabs(st.log_l_lsun - synth_log_l(1, x, st.eep / 60.0, y));
            if (d > worst)
                worst = d;
            /* log age is linear in [Fe/H] in the function and the method, so
             * only the mass interpolation of ages shifts the EEP */
            ck_assert_msg(fabs(st.eep / 60.0 - ef) < (t == HRT_INTERP_LINEAR ? 5e-4 : 1e-4), "%s: EEP fraction %.6f for %.6f",
                          hrt_interp_name(t), st.eep / 60.0, ef);
        }
        double tol = t == HRT_INTERP_LINEAR ? 3e-2 : 5e-3;
        ck_assert_msg(worst < tol, "%s: %.3g dex", hrt_interp_name(t), worst);
        hrt_grid_close(g);
    }
}
END_TEST

/* ---- stars and batches ------------------------------------------------ */

START_TEST(test_star_equals_eval_bitwise)
{
    hrt_grid *g = open_or_fail(grid_path, HRT_INTERP_STEFFEN);
    gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);
    for (int k = 0; k < 300; k++) {
        double m = 0.3 * pow(10.0 / 0.3, gsl_rng_uniform(rng));
        double z = 0.001 * pow(30.0, gsl_rng_uniform(rng));
        if (k % 3 == 0)
            z = hrt_grid_z(g, k % 4);
        hrt_star *s;
        ck_assert_int_eq(hrt_star_new(g, m, z, &s, NULL), HRT_OK);
        for (int a = 0; a < 20; a++) {
            double age = pow(10.0, 6.0 + 6.0 * gsl_rng_uniform(rng));
            hrt_state s1, s2;
            int r1 = hrt_star_at(s, age, &s1);
            int r2 = hrt_eval(g, 1, &m, &z, 0.0, &age, &s2, NULL);
            ck_assert_int_eq(r1, r2);
            /* bit for bit, NaNs included: exact comparison */
            ck_assert_int_eq(memcmp(&s1, &s2, sizeof s1), 0);
        }
        hrt_star_free(s);
    }
    gsl_rng_free(rng);
    hrt_grid_close(g);
}
END_TEST

START_TEST(test_stefan_boltzmann)
{
    /* Every returned state satisfies L = 4 pi R^2 sigma Teff^4 with the
     * nominal solar values of IAU 2015 Resolution B3 and sigma from SI 2019:
     * relative 1e-5 (the nominal values themselves agree to 2e-6). */
    hrt_grid *g = open_or_fail(grid_path, HRT_INTERP_STEFFEN);
    gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);
    int checked = 0;
    for (int k = 0; k < 3000; k++) {
        double m = 0.3 * pow(10.0 / 0.3, gsl_rng_uniform(rng)), z = 0.001 * pow(30.0, gsl_rng_uniform(rng));
        double age = pow(10.0, 7.0 + 5.0 * gsl_rng_uniform(rng));
        hrt_state st;
        if (hrt_eval(g, 1, &m, &z, 0, &age, &st, NULL) != HRT_OK || (st.flags & (HRT_FLAG_DARK | HRT_FLAG_NOT_MODELLED)))
            continue;
        double R = pow(10.0, st.log_r_rsun) * 6.957e8, T = pow(10.0, st.log_teff_k);
        double L = 4.0 * 3.14159265358979323846 * R * R * 5.670374419e-8 * T * T * T * T / 3.828e26;
        ck_assert_double_eq_tol(L / pow(10.0, st.log_l_lsun), 1.0, 1e-5);
        /* log g from G M / R^2 with (GM)sun nominal (IAU 2015 B3), cgs */
        double gcgs = 1.3271244e20 * st.mass_msun / (R * R) * 100.0;
        ck_assert_double_eq_tol(log10(gcgs), st.log_g_cgs, 1e-9);
        checked++;
    }
    ck_assert_int_gt(checked, 1000);
    gsl_rng_free(rng);
    hrt_grid_close(g);
}
END_TEST

START_TEST(test_phases_keypoints_remnant)
{
    hrt_grid *g = open_or_fail(grid_path, HRT_INTERP_STEFFEN);
    double z = hrt_grid_z(g, 1), m = 2.7;
    hrt_star *s;
    ck_assert_int_eq(hrt_star_new(g, m, z, &s, NULL), HRT_OK);
    ck_assert_int_eq(hrt_star_route(s), 1);
    ck_assert_uint_eq(hrt_star_n_keypoints(s), 4);
    double prev = 0.0;
    for (size_t k = 0; k < 4; k++) {
        double a;
        ck_assert_int_eq(hrt_star_keypoint_age(s, k, &a), HRT_OK);
        ck_assert(a > prev);
        prev = a;
    }
    double a_end;
    hrt_star_keypoint_age(s, 3, &a_end);
    ck_assert_double_eq(a_end, hrt_star_end_age(s));
    ck_assert_int_eq(hrt_star_keypoint_age(s, 4, &a_end), HRT_E_INVALID);
    size_t n;
    ck_assert_int_eq(hrt_star_phases(s, NULL, 0, &n), HRT_E_BUFFER);
    ck_assert_uint_eq(n, 5); /* pre-MS, MS, RGB, CHeB, WD */
    hrt_phase_span sp[8];
    ck_assert_int_eq(hrt_star_phases(s, sp, 8, &n), HRT_OK);
    int want[5] = {HRT_PHASE_PRE_MS, HRT_PHASE_MS, HRT_PHASE_RGB, HRT_PHASE_CHEB, HRT_PHASE_WD};
    for (size_t k = 0; k < n; k++) {
        ck_assert_int_eq(sp[k].phase, want[k]);
        if (k > 0)
            ck_assert_double_eq(sp[k].phase_start_yr, sp[k - 1].phase_end_yr);
        /* states inside each span carry that phase */
        double mid = k + 1 < n ? sqrt(sp[k].phase_start_yr * sp[k].phase_end_yr) : sp[k].phase_start_yr * 3.0;
        if (k == 0)
            mid = 0.5 * sp[k].phase_end_yr;
        hrt_state st;
        ck_assert_int_eq(hrt_star_at(s, mid, &st), HRT_OK);
        ck_assert_int_eq(st.phase, want[k]);
        if (k > 0 && k + 1 < n) {
            ck_assert(st.phase_fraction > 0.0 && st.phase_fraction < 1.0);
            ck_assert_double_eq_tol(st.phase_start_yr, sp[k].phase_start_yr, 1e-6 * sp[k].phase_start_yr);
        }
    }
    /* White dwarf: cools (L falls) and keeps its mass and radius. */
    hrt_state w1, w2;
    ck_assert_int_eq(hrt_star_at(s, a_end * 1.01, &w1), HRT_OK);
    ck_assert_int_eq(hrt_star_at(s, a_end * 3.0, &w2), HRT_OK);
    ck_assert(w1.flags & HRT_FLAG_REMNANT);
    ck_assert(w2.log_l_lsun < w1.log_l_lsun);
    ck_assert_double_eq(w1.mass_msun, w2.mass_msun);
    ck_assert_double_eq(w1.log_r_rsun, w2.log_r_rsun);
    ck_assert(isinf(w1.phase_end_yr));
    hrt_star_free(s);
    hrt_grid_close(g);
}
END_TEST

START_TEST(test_wd_physics)
{
    /* Eggleton relation (Verbunt & Rappaport 1988): 0.6 Msun -> 0.0125
     * Rsun within 5 % [value derived from the relation, from memory]. */
    ck_assert_double_eq_tol(hrt_wd_radius_rsun(0.6), 0.0125, 0.0125 * 0.05);
    ck_assert(hrt_wd_radius_rsun(1.0) < hrt_wd_radius_rsun(0.6));
    ck_assert(isnan(hrt_wd_radius_rsun(1.5)));
    ck_assert(isnan(hrt_wd_radius_rsun(-1.0)));
    /* Mestel (1952) cooling of a 0.6 Msun CO white dwarf: about 0.6 Gyr to
     * log L = -3 and 3 Gyr to -4, within a factor 2 [from memory]. */
    double t3 = 0.0, t4 = 0.0;
    for (double t = 1e6; t < 2e10; t *= 1.001) {
        double l = hrt_wd_log_l(0.6, HRT_REMNANT_CO_WD, 0.0, t);
        if (t3 == 0.0 && l <= -3.0)
            t3 = t;
        if (t4 == 0.0 && l <= -4.0)
            t4 = t;
    }
    ck_assert(t3 > 0.3e9 && t3 < 1.2e9);
    ck_assert(t4 > 1.5e9 && t4 < 6e9);
    ck_assert_double_eq_tol(hrt_wd_log_l(0.6, HRT_REMNANT_CO_WD, 1.0, 0.0), 1.0, 1e-12);
}
END_TEST

/* Core collapse (Fryer et al. 2012 delayed prescription, from memory):
 * neutron stars of 1.2-1.5 Msun +- 0.2 for small CO cores (observed birth
 * masses: Ozel et al. 2012, ApJ 757, 55), black holes for large ones, and
 * the pair-instability gap. */
START_TEST(test_collapse_remnant)
{
    int kind;
    double m;
    ck_assert_int_eq(hrt_collapse_remnant(2.0, 12.0, &kind, &m), HRT_OK);
    ck_assert_int_eq(kind, HRT_REMNANT_NS);
    ck_assert(m > 1.0 && m < 1.7);
    ck_assert_int_eq(hrt_collapse_remnant(12.0, 14.0, &kind, &m), HRT_OK);
    ck_assert_int_eq(kind, HRT_REMNANT_BH);
    ck_assert_double_eq_tol(m, 0.9 * 14.0, 1e-12); /* all of the star falls back */
    /* pair instability: pulsations leave at most a 45 Msun black hole (Farmer
     * et al. 2019, ApJ 887, 53: the lower edge of the gap at 45 Msun); CO
     * cores of 60-120 Msun (helium cores of about 64-133, Woosley 2017, ApJ
     * 836, 244) leave nothing; heavier ones collapse whole */
    ck_assert_int_eq(hrt_collapse_remnant(45.0, 80.0, &kind, &m), HRT_OK);
    ck_assert_int_eq(kind, HRT_REMNANT_BH);
    ck_assert(m > 40.0 && m <= 45.0 + 1e-9);
    ck_assert_int_eq(hrt_collapse_remnant(20.0, 60.0, &kind, &m), HRT_OK); /* below pulsations: direct collapse */
    ck_assert_double_eq_tol(m, 0.9 * 60.0, 1e-12);
    ck_assert_int_eq(hrt_collapse_remnant(70.0, 75.0, &kind, &m), HRT_OK);
    ck_assert_int_eq(kind, HRT_REMNANT_NONE);
    ck_assert_double_eq(m, 0.0);
    ck_assert_int_eq(hrt_collapse_remnant(125.0, 140.0, &kind, &m), HRT_OK);
    ck_assert_int_eq(kind, HRT_REMNANT_BH);
    ck_assert_double_eq_tol(m, 0.9 * 140.0, 1e-12);
    ck_assert_int_eq(hrt_collapse_remnant(5.0, 4.0, &kind, &m), HRT_E_DOMAIN);
    ck_assert_int_eq(hrt_collapse_remnant(NAN, 4.0, &kind, &m), HRT_E_DOMAIN);
    ck_assert_int_eq(hrt_collapse_remnant(1.0, 4.0, NULL, &m), HRT_E_NULL);
}
END_TEST

START_TEST(test_isochrone)
{
    hrt_grid *g = open_or_fail(grid_path, HRT_INTERP_STEFFEN);
    double z = hrt_grid_z(g, 2), y = synth_feh(z), age = 3e8;
    size_t n;
    ck_assert_int_eq(hrt_isochrone(g, age, z, NULL, 0, &n, NULL), HRT_E_BUFFER);
    ck_assert_uint_gt(n, 20);
    hrt_state *iso = malloc(n * sizeof *iso);
    size_t n2;
    ck_assert_int_eq(hrt_isochrone(g, age, z, iso, n, &n2, NULL), HRT_OK);
    ck_assert_uint_eq(n, n2);
    double prev_eep = -1.0;
    int prev_route = -1;
    for (size_t k = 0; k < n; k++) {
        ck_assert_double_eq(iso[k].age_yr, age);
        if (iso[k].route != prev_route)
            prev_eep = -1.0;
        ck_assert(iso[k].eep >= prev_eep - 1e-6);
        prev_eep = iso[k].eep;
        prev_route = iso[k].route;
        /* On the synthetic grid the EEP age is known: the point's mass,
         * EEP and age satisfy it (tolerance 1e-6 in EEP fraction). */
        double x = log10(iso[k].initial_mass_msun);
        int r = iso[k].route, J = r ? 61 : 51;
        double e = iso[k].eep / (J - 1);
        ck_assert_double_eq_tol(synth_log_age(r, x, e, y), log10(age), 2e-4);
    }
    free(iso);
    ck_assert_int_eq(hrt_isochrone(g, -1.0, z, NULL, 0, &n, NULL), HRT_E_DOMAIN);
    ck_assert_int_eq(hrt_isochrone(g, age, 0.5, NULL, 0, &n, NULL), HRT_E_Z_RANGE);
    hrt_grid_close(g);
}
END_TEST

/* ---- bad input -------------------------------------------------------- */

START_TEST(test_bad_queries)
{
    hrt_grid *g = open_or_fail(grid_path, HRT_INTERP_STEFFEN);
    hrt_error e;
    hrt_state st;
    double z = hrt_grid_z(g, 0), age = 1e9, m = 2.0;
    struct {
        double m, z, age;
        int code;
    } cases[] = {
        {NAN, 0.01, 1e9, HRT_E_DOMAIN},      {INFINITY, 0.01, 1e9, HRT_E_DOMAIN}, {-1.0, 0.01, 1e9, HRT_E_DOMAIN},
        {0.0, 0.01, 1e9, HRT_E_DOMAIN},      {1e6, 0.01, 1e9, HRT_E_MASS_RANGE}, {0.1, 0.01, 1e9, HRT_E_MASS_RANGE},
        {2.0, NAN, 1e9, HRT_E_DOMAIN},       {2.0, -0.01, 1e9, HRT_E_DOMAIN},    {2.0, 0.5, 1e9, HRT_E_Z_RANGE},
        {2.0, 1e-6, 1e9, HRT_E_Z_RANGE},     {2.0, 0.01, NAN, HRT_E_DOMAIN},     {2.0, 0.01, -5.0, HRT_E_DOMAIN},
        {2.0, 0.01, INFINITY, HRT_E_DOMAIN},
    };
    for (size_t k = 0; k < sizeof cases / sizeof cases[0]; k++) {
        memset(&e, 0, sizeof e);
        int rc = hrt_eval(g, 1, &cases[k].m, &cases[k].z, 0, &cases[k].age, &st, &e);
        ck_assert_msg(rc == cases[k].code, "case %zu: %d (%s)", k, rc, e.message);
        ck_assert_int_eq(st.status, rc);
        ck_assert_int_eq(e.code, rc);
        ck_assert(strlen(e.message) > 10);
        ck_assert(isnan(st.log_l_lsun));
    }
    /* A batch keeps going past bad stars and reports the first. */
    double ms[3] = {2.0, -1.0, 3.0}, ages[3] = {1e9, 1e9, 1e8};
    hrt_state out[3];
    ck_assert_int_eq(hrt_eval(g, 3, ms, NULL, z, ages, out, &e), HRT_E_DOMAIN);
    ck_assert(strstr(e.message, "star 1") != NULL);
    ck_assert_int_eq(out[0].status, HRT_OK);
    ck_assert_int_eq(out[2].status, HRT_OK);
    ck_assert_int_eq(hrt_eval(g, 0, NULL, NULL, z, NULL, NULL, NULL), HRT_OK);
    ck_assert_int_eq(hrt_eval(NULL, 1, &m, NULL, z, &age, &st, NULL), HRT_E_NULL);
    ck_assert_int_eq(hrt_eval(g, 1, NULL, NULL, z, &age, &st, NULL), HRT_E_NULL);
    ck_assert_int_eq(hrt_eval(g, 1, &m, NULL, z, NULL, &st, NULL), HRT_E_NULL);
    ck_assert_int_eq(hrt_eval(g, 1, &m, NULL, z, &age, NULL, NULL), HRT_E_NULL);
    hrt_star *s = NULL;
    ck_assert_int_eq(hrt_star_new(NULL, 1.0, z, &s, NULL), HRT_E_NULL);
    ck_assert_int_eq(hrt_star_new(g, 1.0, z, NULL, NULL), HRT_E_NULL);
    ck_assert_int_eq(hrt_star_new(g, 99.0, z, &s, &e), HRT_E_MASS_RANGE);
    ck_assert_ptr_null(s);
    ck_assert_int_eq(hrt_star_at(NULL, 1e9, &st), HRT_E_NULL);
    ck_assert_int_eq(hrt_star_new(g, 2.0, z, &s, NULL), HRT_OK);
    ck_assert_int_eq(hrt_star_at(s, NAN, &st), HRT_E_DOMAIN);
    ck_assert_int_eq(hrt_star_eep_state(s, 100000, &st), HRT_E_INVALID);
    /* Before the first EEP: pre-main sequence, not an error. */
    ck_assert_int_eq(hrt_star_at(s, 0.0, &st), HRT_OK);
    ck_assert_int_eq(st.phase, HRT_PHASE_PRE_MS);
    ck_assert(st.flags & HRT_FLAG_NOT_MODELLED);
    hrt_star_free(s);
    hrt_star_free(NULL);
    hrt_grid_close(NULL);
    double lo, hi;
    ck_assert_int_eq(hrt_grid_mass_range(g, z, &lo, &hi), HRT_OK);
    ck_assert_double_eq_tol(lo, 0.3, 1e-12);
    ck_assert_int_eq(hrt_grid_mass_range(g, 0.9, &lo, &hi), HRT_E_Z_RANGE);
    int route;
    ck_assert_int_eq(hrt_grid_route_of(g, 0.5, z, &route), HRT_OK);
    ck_assert_int_eq(route, 0);
    ck_assert_int_eq(hrt_grid_route_of(g, 1.01, z, &route), HRT_OK);
    ck_assert_int_eq(route, 1);
    hrt_grid_close(g);
    hrt_grid *g2 = NULL;
    ck_assert_int_eq(hrt_grid_open_with(grid_path, 17, &g2, &e), HRT_E_INVALID);
    ck_assert_int_eq(hrt_grid_open(grid_path, NULL, &e), HRT_E_NULL);
}
END_TEST

/* Extrapolation between a route's last track and its boundary is flagged. */
START_TEST(test_route_edges)
{
    hrt_grid *g = open_or_fail(grid_path, HRT_INTERP_STEFFEN);
    double z = hrt_grid_z(g, 1), age = 1e8;
    double m = 0.97; /* low route: its last track is at 0.955 Msun */
    hrt_state st;
    ck_assert_int_eq(hrt_eval(g, 1, &m, NULL, z, &age, &st, NULL), HRT_OK);
    ck_assert_int_eq(st.route, 0);
    ck_assert(st.flags & HRT_FLAG_EXTRAPOLATED);
    m = 1.5;
    ck_assert_int_eq(hrt_eval(g, 1, &m, NULL, z, &age, &st, NULL), HRT_OK);
    ck_assert(!(st.flags & HRT_FLAG_EXTRAPOLATED));
    hrt_grid_close(g);
}
END_TEST

/* ---- hostile and broken files ----------------------------------------- */

/* Copy the good grid and damage it with the HDF5 API. */
typedef void (*damage_fn)(hid_t f);

static void dmg_version(hid_t f)
{
    int v = 99;
    hid_t a = H5Aopen(f, "format_version", H5P_DEFAULT);
    H5Awrite(a, H5T_NATIVE_INT, &v);
    H5Aclose(a);
}
static void dmg_no_format(hid_t f) { H5Adelete(f, "format"); }
static void dmg_no_zref(hid_t f) { H5Adelete(f, "z_ref"); }
static void dmg_no_dataset(hid_t f) { H5Ldelete(f, "metallicity/1/log_teff_k", H5P_DEFAULT); }
static void dmg_no_group(hid_t f) { H5Ldelete(f, "routes", H5P_DEFAULT); }
static void write_elem(hid_t f, const char *name, hsize_t i, hsize_t j, double v)
{
    hid_t d = H5Dopen2(f, name, H5P_DEFAULT), s = H5Dget_space(d);
    hsize_t start[2] = {i, j}, cnt[2] = {1, 1};
    int rank = H5Sget_simple_extent_ndims(s);
    H5Sselect_hyperslab(s, H5S_SELECT_SET, start, NULL, cnt, NULL);
    hid_t ms = H5Screate_simple(1, cnt, NULL);
    (void)rank;
    H5Dwrite(d, H5T_NATIVE_DOUBLE, ms, s, H5P_DEFAULT, &v);
    H5Sclose(ms);
    H5Sclose(s);
    H5Dclose(d);
}
static void dmg_nan(hid_t f) { write_elem(f, "metallicity/2/log_l_lsun", 3, 10, NAN); }
static void dmg_age_order(hid_t f) { write_elem(f, "metallicity/0/log_age_yr", 4, 20, 1.0); }
static void dmg_mass_order(hid_t f) { write_elem(f, "metallicity/1/initial_mass_msun", 5, 0, 0.01); }
static void dmg_phase(hid_t f) { write_elem(f, "metallicity/1/phase", 2, 2, 77); }
static void dmg_neep(hid_t f) { write_elem(f, "metallicity/1/n_eep", 2, 0, 5000); }
static void dmg_route(hid_t f) { write_elem(f, "metallicity/3/route", 0, 0, 1); }
static void dmg_boundary(hid_t f) { write_elem(f, "metallicity/0/route_boundary_mass_msun", 0, 0, 5.0); }
static void dmg_z_order(hid_t f)
{
    double v = 0.5;
    hid_t g = H5Gopen2(f, "metallicity/1", H5P_DEFAULT), a = H5Aopen(g, "z", H5P_DEFAULT);
    H5Awrite(a, H5T_NATIVE_DOUBLE, &v);
    H5Aclose(a);
    H5Gclose(g);
}
static void dmg_shape(hid_t f)
{
    H5Ldelete(f, "metallicity/0/mass_msun", H5P_DEFAULT);
    hsize_t d[2] = {3, 3};
    hid_t s = H5Screate_simple(2, d, NULL);
    hid_t ds = H5Dcreate2(f, "metallicity/0/mass_msun", H5T_IEEE_F64LE, s, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    H5Dclose(ds);
    H5Sclose(s);
}
static void dmg_dtype(hid_t f)
{
    H5Ldelete(f, "metallicity/0/route", H5P_DEFAULT);
    hsize_t d[1] = {20};
    hid_t s = H5Screate_simple(1, d, NULL);
    double v[20] = {0};
    hid_t ds = H5Dcreate2(f, "metallicity/0/route", H5T_IEEE_F64LE, s, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    H5Dwrite(ds, H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, v);
    H5Dclose(ds);
    H5Sclose(s);
}
static void dmg_empty_group(hid_t f)
{
    H5Ldelete(f, "metallicity/3", H5P_DEFAULT);
    hid_t g = H5Gcreate2(f, "metallicity/3", H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    H5Gclose(g);
}

/* Hostile files: a dataset declaring far more than it stores, links out of
 * the file, cores not nested in the star, keypoints out of order, a flipped
 * bit under a checksum. */
static void dmg_declares_more(hid_t f)
{
    hid_t d = H5Dopen2(f, "metallicity/0/log_age_yr", H5P_DEFAULT), s = H5Dget_space(d);
    hsize_t dims[2];
    H5Sget_simple_extent_dims(s, dims, NULL);
    H5Sclose(s);
    H5Dclose(d);
    H5Ldelete(f, "metallicity/0/log_age_yr", H5P_DEFAULT);
    hid_t dcpl = H5Pcreate(H5P_DATASET_CREATE);
    H5Pset_chunk(dcpl, 2, dims);
    s = H5Screate_simple(2, dims, NULL); /* nothing written: no storage allocated */
    d = H5Dcreate2(f, "metallicity/0/log_age_yr", H5T_IEEE_F64LE, s, H5P_DEFAULT, dcpl, H5P_DEFAULT);
    H5Dclose(d);
    H5Sclose(s);
    H5Pclose(dcpl);
}
static void dmg_external_link(hid_t f)
{
    H5Ldelete(f, "metallicity/1/log_l_lsun", H5P_DEFAULT);
    H5Lcreate_external("/dev/zero", "/anything", f, "metallicity/1/log_l_lsun", H5P_DEFAULT, H5P_DEFAULT);
}
static void dmg_soft_link(hid_t f)
{
    H5Ldelete(f, "metallicity/1/mass_msun", H5P_DEFAULT);
    H5Lcreate_soft("/metallicity/1/he_core_mass_msun", f, "metallicity/1/mass_msun", H5P_DEFAULT, H5P_DEFAULT);
}
static void dmg_core_heavier(hid_t f) { write_elem(f, "metallicity/2/co_core_mass_msun", 5, 7, 50.0); }
static void dmg_keypoints_swapped(hid_t f)
{
    hid_t d = H5Dopen2(f, "routes/low/keypoint_names", H5P_DEFAULT), t = H5Dget_type(d), s = H5Dget_space(d);
    hssize_t n = H5Sget_simple_extent_npoints(s);
    char **v = calloc((size_t)n, sizeof *v);
    hid_t mt = H5Tcopy(H5T_C_S1);
    H5Tset_size(mt, H5T_VARIABLE);
    H5Dread(d, mt, H5S_ALL, H5S_ALL, H5P_DEFAULT, v);
    const char *w[64];
    for (hssize_t k = 0; k < n && k < 64; k++)
        w[k] = v[k];
    w[0] = "tams"; /* known keypoints out of the order of a star's life */
    w[1] = "zams";
    H5Dwrite(d, mt, H5S_ALL, H5S_ALL, H5P_DEFAULT, w);
    H5Dvlen_reclaim(mt, s, H5P_DEFAULT, v);
    free(v);
    H5Tclose(mt);
    H5Tclose(t);
    H5Sclose(s);
    H5Dclose(d);
}

static void set_text_attr(hid_t f, const char *obj, const char *name, const char *value);

/* Compressed data the reader must refuse before HDF5 inflates it
 * (tracks/FORMAT.md, "Storage").  remake() puts the values of `name` back
 * into a new dataset of the same shape stored through dcpl (maxdims
 * unlimited when `unlimited`, so that chunks may exceed the shape). */
static void remake(hid_t f, const char *name, hid_t dcpl, int unlimited)
{
    hid_t d = H5Dopen2(f, name, H5P_DEFAULT), s = H5Dget_space(d);
    hsize_t dims[2], maxd[2] = {H5S_UNLIMITED, H5S_UNLIMITED};
    int rank = H5Sget_simple_extent_dims(s, dims, NULL);
    double *v = malloc((size_t)H5Sget_simple_extent_npoints(s) * sizeof *v);
    H5Dread(d, H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, v);
    H5Dclose(d);
    H5Sclose(s);
    H5Ldelete(f, name, H5P_DEFAULT);
    s = H5Screate_simple(rank, dims, unlimited ? maxd : NULL);
    d = H5Dcreate2(f, name, H5T_IEEE_F64LE, s, H5P_DEFAULT, dcpl, H5P_DEFAULT);
    H5Dwrite(d, H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, v);
    H5Dclose(d);
    H5Sclose(s);
    free(v);
    set_text_attr(f, name, "units", "dex(yr)");
}
/* A dcpl of [rows, width] chunks: shuffle, deflate `deflates` times, Fletcher-32. */
static hid_t bomb_dcpl(hsize_t rows, hsize_t width, int deflates)
{
    hsize_t chunk[2] = {rows, width};
    hid_t dcpl = H5Pcreate(H5P_DATASET_CREATE);
    H5Pset_chunk(dcpl, 2, chunk);
    H5Pset_shuffle(dcpl);
    for (int k = 0; k < deflates; k++)
        H5Pset_deflate(dcpl, 9);
    H5Pset_fletcher32(dcpl);
    return dcpl;
}
static hsize_t eep_width(hid_t f)
{
    hid_t d = H5Dopen2(f, "metallicity/0/log_age_yr", H5P_DEFAULT), s = H5Dget_space(d);
    hsize_t dims[2];
    H5Sget_simple_extent_dims(s, dims, NULL);
    H5Sclose(s);
    H5Dclose(d);
    return dims[1];
}
/* Deflated twice: each pass can shrink about a thousand times. */
static void dmg_deflate_twice(hid_t f)
{
    hid_t dcpl = bomb_dcpl(1, eep_width(f), 2);
    remake(f, "metallicity/0/log_age_yr", dcpl, 0);
    H5Pclose(dcpl);
}
/* Chunks of 4096 rows: more than 1 MiB each. */
static void dmg_huge_chunks(hid_t f)
{
    hid_t dcpl = bomb_dcpl(4096, eep_width(f), 1);
    remake(f, "metallicity/0/log_age_yr", dcpl, 1);
    H5Pclose(dcpl);
}
/* A lossy filter (HDF5's scale-offset, 2 decimal digits). */
static void dmg_lossy_filter(hid_t f)
{
    hsize_t chunk[2] = {1, eep_width(f)};
    hid_t dcpl = H5Pcreate(H5P_DATASET_CREATE);
    H5Pset_chunk(dcpl, 2, chunk);
    H5Pset_scaleoffset(dcpl, H5Z_SO_FLOAT_DSCALE, 2);
    H5Pset_fletcher32(dcpl);
    remake(f, "metallicity/0/log_age_yr", dcpl, 0);
    H5Pclose(dcpl);
}
/* The classic bomb: chunk [0][0] of log_age_yr (one row, a few KB) holds a
 * valid, checksummed stream of 64 MiB of zeros (about 64 KB stored), made
 * by HDF5 itself in a file in memory and copied over the chunk raw. */
static void dmg_bomb_chunk(hid_t f)
{
    hsize_t width = eep_width(f), big[2] = {8192, 1024}, off[2] = {0, 0};
    hid_t dcpl = bomb_dcpl(1, width, 1);
    remake(f, "metallicity/0/log_age_yr", dcpl, 0);
    H5Pclose(dcpl);
    hid_t fapl = H5Pcreate(H5P_FILE_ACCESS);
    H5Pset_fapl_core(fapl, 1 << 20, 0);
    hid_t mf = H5Fcreate("bomb-in-memory.h5", H5F_ACC_TRUNC, H5P_DEFAULT, fapl);
    hid_t bcpl = bomb_dcpl(big[0], big[1], 1), s = H5Screate_simple(2, big, NULL);
    hid_t bd = H5Dcreate2(mf, "zeros", H5T_IEEE_F64LE, s, H5P_DEFAULT, bcpl, H5P_DEFAULT);
    double *zeros = calloc(big[0] * big[1], sizeof *zeros);
    H5Dwrite(bd, H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, zeros);
    free(zeros);
    hsize_t raw_bytes = 0;
    uint32_t mask = 0;
    H5Dget_chunk_storage_size(bd, off, &raw_bytes);
    unsigned char *raw = malloc(raw_bytes);
    H5Dread_chunk(bd, H5P_DEFAULT, off, &mask, raw);
    hid_t d = H5Dopen2(f, "metallicity/0/log_age_yr", H5P_DEFAULT);
    H5Dwrite_chunk(d, H5P_DEFAULT, mask, off, raw_bytes, raw);
    H5Dclose(d);
    free(raw);
    H5Dclose(bd);
    H5Sclose(s);
    H5Pclose(bcpl);
    H5Fclose(mf);
    H5Pclose(fapl);
}

/* The reader's checks of format 2: units, floating-point data, the code
 * tables (tracks/FORMAT.md, "What the reader checks"). */
static void set_text_attr(hid_t f, const char *obj, const char *name, const char *value)
{
    hid_t o = H5Oopen(f, obj, H5P_DEFAULT);
    if (H5Aexists(o, name) > 0)
        H5Adelete(o, name);
    hid_t t = H5Tcopy(H5T_C_S1), s = H5Screate(H5S_SCALAR);
    H5Tset_size(t, H5T_VARIABLE);
    hid_t a = H5Acreate2(o, name, t, s, H5P_DEFAULT, H5P_DEFAULT);
    H5Awrite(a, t, &value);
    H5Aclose(a);
    H5Sclose(s);
    H5Tclose(t);
    H5Oclose(o);
}
/* Element i of a 1-D variable-length string dataset. */
static void write_string_elem(hid_t f, const char *name, hsize_t i, const char *v)
{
    hid_t d = H5Dopen2(f, name, H5P_DEFAULT), s = H5Dget_space(d), t = H5Tcopy(H5T_C_S1);
    H5Tset_size(t, H5T_VARIABLE);
    hsize_t one = 1;
    H5Sselect_elements(s, H5S_SELECT_SET, 1, &i);
    hid_t ms = H5Screate_simple(1, &one, NULL);
    H5Dwrite(d, t, ms, s, H5P_DEFAULT, &v);
    H5Sclose(ms);
    H5Tclose(t);
    H5Sclose(s);
    H5Dclose(d);
}
static void dmg_units(hid_t f) { set_text_attr(f, "metallicity/0/log_teff_k", "units", "K"); }
static void dmg_units_v1(hid_t f) { set_text_attr(f, "metallicity/2/log_l_lsun", "units", "log10 Lsun"); }
static void dmg_units_missing(hid_t f) { H5Adelete_by_name(f, "metallicity/3/mass_msun", "units", H5P_DEFAULT); }
/* Current masses stored as integers (rounded), with the right units. */
static void dmg_float_as_int(hid_t f)
{
    const char *name = "metallicity/1/mass_msun";
    hid_t d = H5Dopen2(f, name, H5P_DEFAULT), s = H5Dget_space(d);
    hssize_t n = H5Sget_simple_extent_npoints(s);
    int *v = malloc((size_t)n * sizeof *v);
    H5Dread(d, H5T_NATIVE_INT, H5S_ALL, H5S_ALL, H5P_DEFAULT, v);
    H5Dclose(d);
    H5Ldelete(f, name, H5P_DEFAULT);
    d = H5Dcreate2(f, name, H5T_STD_I32LE, s, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    H5Dwrite(d, H5T_NATIVE_INT, H5S_ALL, H5S_ALL, H5P_DEFAULT, v);
    H5Dclose(d);
    H5Sclose(s);
    free(v);
    set_text_attr(f, name, "units", "solMass");
}
static void dmg_no_phases(hid_t f) { H5Ldelete(f, "phases", H5P_DEFAULT); }
static void dmg_no_remnants(hid_t f) { H5Ldelete(f, "remnants", H5P_DEFAULT); }
/* Entry 2 of phases/ is code 11, 'ms': the file says 11 is 'rgb'. */
static void dmg_phase_key(hid_t f) { write_string_elem(f, "phases/key", 2, "rgb"); }
/* Entry 2 of remnants/ is 'co_wd': the file gives it code 12 (one_wd's). */
static void dmg_remnant_code(hid_t f) { write_elem(f, "remnants/code", 2, 0, HRT_REMNANT_ONE_WD); }
/* A slot code of no phase (between 'ms' and 'subgiant'). */
static void dmg_phase_slot(hid_t f) { write_elem(f, "metallicity/2/phase", 4, 6, 12); }
static void dmg_old_z(hid_t f) { H5Arename_by_name(f, "metallicity/1", "z", "Z", H5P_DEFAULT); }
static void dmg_old_name(hid_t f)
{
    H5Lmove(f, "metallicity/0/log_age_yr", f, "metallicity/0/log_age", H5P_DEFAULT, H5P_DEFAULT);
}
static void dmg_version1(hid_t f)
{
    int v = 1;
    hid_t a = H5Aopen(f, "format_version", H5P_DEFAULT);
    H5Awrite(a, H5T_NATIVE_INT, &v);
    H5Aclose(a);
}

static const struct {
    const char *what;
    damage_fn fn;
    int code;
    const char *needle;
} damages[] = {
    {"newer version", dmg_version, HRT_E_VERSION, "format_version"},
    {"no format attribute", dmg_no_format, HRT_E_FORMAT, "'format'"},
    {"no z_ref", dmg_no_zref, HRT_E_FORMAT, "z_ref"},
    {"missing dataset", dmg_no_dataset, HRT_E_FORMAT, "metallicity/1/log_teff_k"},
    {"missing routes", dmg_no_group, HRT_E_FORMAT, "routes"},
    {"NaN inside the track", dmg_nan, HRT_E_FORMAT, "metallicity/2/log_l_lsun[3][10]"},
    {"ages out of order", dmg_age_order, HRT_E_FORMAT, "metallicity/0/log_age_yr[4][20]"},
    {"masses out of order", dmg_mass_order, HRT_E_FORMAT, "metallicity/1/initial_mass_msun[5]"},
    {"bad phase code", dmg_phase, HRT_E_FORMAT, "phase[2][2]"},
    {"n_eep too large", dmg_neep, HRT_E_FORMAT, "n_eep[2]"},
    {"route order", dmg_route, HRT_E_FORMAT, "route"},
    {"boundary on the wrong side", dmg_boundary, HRT_E_FORMAT, "route_boundary_mass_msun[0]"},
    {"Z not increasing", dmg_z_order, HRT_E_FORMAT, "metallicity/2"},
    {"wrong shape", dmg_shape, HRT_E_FORMAT, "metallicity/0/mass_msun"},
    {"wrong dtype", dmg_dtype, HRT_E_FORMAT, "metallicity/0/route"},
    {"empty metallicity group", dmg_empty_group, HRT_E_FORMAT, "metallicity/3"},
    {"format_version 1", dmg_version1, HRT_E_VERSION, "hrtrail grid upgrade OLD NEW"},
    {"wrong units", dmg_units, HRT_E_FORMAT, "metallicity/0/log_teff_k: units 'K', expected 'dex(K)'"},
    {"units of format 1", dmg_units_v1, HRT_E_FORMAT, "metallicity/2/log_l_lsun: units 'log10 Lsun'"},
    {"units missing", dmg_units_missing, HRT_E_FORMAT, "metallicity/3/mass_msun attribute 'units' is missing"},
    {"float data stored as integers", dmg_float_as_int, HRT_E_FORMAT,
     "metallicity/1/mass_msun: must hold floating-point numbers"},
    {"no phases/ table", dmg_no_phases, HRT_E_FORMAT, "group 'phases' is missing"},
    {"no remnants/ table", dmg_no_remnants, HRT_E_FORMAT, "group 'remnants' is missing"},
    {"phase key differs", dmg_phase_key, HRT_E_FORMAT,
     "phases/code[2]: key 'rgb' has code 11 in the file, but 'ms' in this library"},
    {"remnant code differs", dmg_remnant_code, HRT_E_FORMAT,
     "remnants/code[2]: key 'co_wd' has code 12 in the file, but 'one_wd' in this library"},
    {"phase code of no phase", dmg_phase_slot, HRT_E_FORMAT, "metallicity/2/phase[4][6]: 12 is not a phase code"},
    {"group attribute Z of format 1", dmg_old_z, HRT_E_FORMAT, "metallicity/1 attribute 'z' is missing"},
    {"dataset name of format 1", dmg_old_name, HRT_E_FORMAT, "metallicity/0/log_age_yr: dataset is missing"},
    {"declares more than it stores", dmg_declares_more, HRT_E_FORMAT,
     "metallicity/0/log_age_yr: declares"},
    {"external link", dmg_external_link, HRT_E_FORMAT, "metallicity/1/log_l_lsun: a soft or external link"},
    {"soft link", dmg_soft_link, HRT_E_FORMAT, "metallicity/1/mass_msun: a soft or external link"},
    {"CO core heavier than the helium core", dmg_core_heavier, HRT_E_FORMAT,
     "metallicity/2/co_core_mass_msun[5][7]"},
    {"keypoints out of order", dmg_keypoints_swapped, HRT_E_FORMAT,
     "routes/low/keypoint_names[1]: 'zams' after 'tams'"},
    {"deflated twice", dmg_deflate_twice, HRT_E_FORMAT, "metallicity/0/log_age_yr: stored through HDF5 filter 1"},
    {"compressed chunks over 1 MiB", dmg_huge_chunks, HRT_E_FORMAT,
     "metallicity/0/log_age_yr: compressed chunks of"},
    {"lossy filter", dmg_lossy_filter, HRT_E_FORMAT, "metallicity/0/log_age_yr: stored through HDF5 filter 6"},
    {"compression bomb in one chunk", dmg_bomb_chunk, HRT_E_FORMAT,
     "a stream that inflates beyond its chunk"},
};

START_TEST(test_damaged_files)
{
    char p[320];
    path_in_tmp(p, sizeof p, "damaged.h5");
    for (size_t k = 0; k < sizeof damages / sizeof damages[0]; k++) {
        char cmd[700];
        snprintf(cmd, sizeof cmd, "cp %s %s", grid_path, p);
        ck_assert_int_eq(system(cmd), 0);
        hid_t f = H5Fopen(p, H5F_ACC_RDWR, H5P_DEFAULT);
        damages[k].fn(f);
        H5Fclose(f);
        hrt_grid *g = (hrt_grid *)0x1;
        hrt_error e;
        int rc = hrt_grid_open(p, &g, &e);
        ck_assert_msg(rc == damages[k].code, "%s: code %d, message '%s'", damages[k].what, rc, e.message);
        ck_assert_ptr_null(g);
        ck_assert_msg(strstr(e.message, damages[k].needle), "%s: message '%s' lacks '%s'", damages[k].what,
                      e.message, damages[k].needle);
    }
}
END_TEST

START_TEST(test_not_hdf5_and_missing)
{
    hrt_error e;
    hrt_grid *g;
    char p[320];
    path_in_tmp(p, sizeof p, "garbage.h5");
    FILE *f = fopen(p, "wb");
    for (int i = 0; i < 4096; i++)
        fputc((i * 7919) & 0xff, f);
    fclose(f);
    ck_assert_int_eq(hrt_grid_open(p, &g, &e), HRT_E_FORMAT);
    ck_assert(strstr(e.message, "not a readable HDF5") != NULL);
    /* truncated copy of a good grid */
    char cmd[700];
    snprintf(cmd, sizeof cmd, "head -c 5000 %s > %s", grid_path, p);
    ck_assert_int_eq(system(cmd), 0);
    ck_assert_int_eq(hrt_grid_open(p, &g, &e), HRT_E_FORMAT);
    ck_assert_int_eq(hrt_grid_open("/nonexistent/grid.h5", &g, &e), HRT_E_IO);
    ck_assert(strstr(e.message, "/nonexistent/grid.h5") != NULL);
    /* The default grid honours HRTRAIL_GRID. */
    setenv("HRTRAIL_GRID", "/nonexistent/default.h5", 1);
    ck_assert_str_eq(hrt_default_grid_path(), "/nonexistent/default.h5");
    ck_assert_int_eq(hrt_grid_open(NULL, &g, &e), HRT_E_NOT_FOUND);
    setenv("HRTRAIL_GRID", grid_path, 1);
    ck_assert_int_eq(hrt_grid_open(NULL, &g, &e), HRT_OK);
    hrt_grid_close(g);
    unsetenv("HRTRAIL_GRID");
}
END_TEST

/* ---- format 1: refused on open, converted by hrt_grid_upgrade ---------- */

/* The synthetic grid as hrtrail 0.1 wrote it (synth_downgrade_v1). */
static void write_v1(char *out, size_t n, const char *name)
{
    path_in_tmp(out, n, name);
    ck_assert_msg(synth_downgrade_v1(grid_path, out) == 0, "cannot write the format-1 copy %s", out);
}

static int raw_int(const char *path, const char *dataset, hsize_t i, hsize_t j)
{
    hid_t f = H5Fopen(path, H5F_ACC_RDONLY, H5P_DEFAULT);
    ck_assert(f >= 0);
    hid_t d = H5Dopen2(f, dataset, H5P_DEFAULT);
    ck_assert_msg(d >= 0, "%s: no dataset %s", path, dataset);
    hid_t s = H5Dget_space(d);
    hsize_t at[2] = {i, j}, one[2] = {1, 1};
    H5Sselect_hyperslab(s, H5S_SELECT_SET, at, NULL, one, NULL);
    hid_t ms = H5Screate_simple(1, one, NULL);
    int v = -99;
    ck_assert(H5Dread(d, H5T_NATIVE_INT, ms, s, H5P_DEFAULT, &v) >= 0);
    H5Sclose(ms);
    H5Sclose(s);
    H5Dclose(d);
    H5Fclose(f);
    return v;
}

START_TEST(test_format1_refused)
{
    char v1[320];
    write_v1(v1, sizeof v1, "v1.h5");
    /* it is a format-1 file: 0.1's index of 'ms' (1), not its code (11) */
    ck_assert_int_eq(raw_int(v1, "metallicity/0/phase", 0, 0), 1);
    ck_assert_int_eq(raw_int(grid_path, "metallicity/0/phase", 0, 0), HRT_PHASE_MS);
    hrt_grid *g = (hrt_grid *)0x1;
    hrt_error e = {-1, ""};
    int rc = hrt_grid_open(v1, &g, &e);
    ck_assert_msg(rc == HRT_E_VERSION, "code %d, message '%s'", rc, e.message);
    ck_assert_int_eq(e.code, HRT_E_VERSION);
    ck_assert_ptr_null(g);
    ck_assert_msg(strstr(e.message, "upgrade") && strstr(e.message, "format_version 1"), "message '%s'", e.message);
    /* with every interpolation type */
    for (int t = 0; t < HRT_INTERP_COUNT; t++)
        ck_assert_int_eq(hrt_grid_open_with(v1, t, &g, NULL), HRT_E_VERSION);
}
END_TEST

/* hrt_eval on n random stars of both grids: every state equal bit for bit
 * (NaNs, status and flags included).  Returns the number of good states. */
static size_t compare_grids(const hrt_grid *a, const hrt_grid *b, size_t n, unsigned long seed, int *seen_phase,
                            int *seen_remnant)
{
    gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(rng, seed);
    double *m = malloc(n * sizeof *m), *z = malloc(n * sizeof *z), *age = malloc(n * sizeof *age);
    hrt_state *sa = malloc(n * sizeof *sa), *sb = malloc(n * sizeof *sb);
    for (size_t k = 0; k < n; k++) {
        /* a little beyond the grid on every side: failures must agree too */
        m[k] = 0.25 * pow(12.0 / 0.25, gsl_rng_uniform(rng));
        z[k] = 0.0008 * pow(0.035 / 0.0008, gsl_rng_uniform(rng));
        age[k] = pow(10.0, 5.0 + 7.5 * gsl_rng_uniform(rng));
    }
    int ra = hrt_eval(a, n, m, z, 0.0, age, sa, NULL), rb = hrt_eval(b, n, m, z, 0.0, age, sb, NULL);
    ck_assert_int_eq(ra, rb);
    size_t good = 0;
    for (size_t k = 0; k < n; k++) {
        ck_assert_msg(memcmp(&sa[k], &sb[k], sizeof sa[k]) == 0,
                      "star %zu (M %.17g, Z %.17g, age %.17g): status %d/%d phase %d/%d log L %.17g/%.17g", k, m[k],
                      z[k], age[k], sa[k].status, sb[k].status, sa[k].phase, sb[k].phase, sa[k].log_l_lsun,
                      sb[k].log_l_lsun);
        if (sa[k].status == HRT_OK) {
            good++;
            seen_phase[sa[k].phase] = 1;
            seen_remnant[sa[k].remnant] = 1;
        }
    }
    free(m);
    free(z);
    free(age);
    free(sa);
    free(sb);
    gsl_rng_free(rng);
    return good;
}

/* The format-1 copy, upgraded, answers exactly as the grid the builder
 * wrote directly in format 2 from the same tracks. */
START_TEST(test_upgrade_bitwise)
{
    char v1[320], up[320];
    write_v1(v1, sizeof v1, "v1-up.h5");
    path_in_tmp(up, sizeof up, "upgraded.h5");
    hrt_error e = {-1, ""};
    int rc = hrt_grid_upgrade(v1, up, &e);
    ck_assert_msg(rc == HRT_OK, "upgrade: %d %s", rc, e.message);
    ck_assert_int_eq(e.code, HRT_OK);
    ck_assert_int_eq(raw_int(up, "metallicity/0/phase", 0, 0), HRT_PHASE_MS);
    for (int t = 0; t < HRT_INTERP_COUNT; t += 3) { /* steffen and akima */
        hrt_grid *direct = open_or_fail(grid_path, t), *conv = open_or_fail(up, t);
        int seen_phase[HRT_PHASE_SLOTS] = {0}, seen_remnant[HRT_REMNANT_SLOTS] = {0};
        size_t good = compare_grids(direct, conv, 20000, 17u + (unsigned)t, seen_phase, seen_remnant);
        /* the comparison covered the grid: most stars good, every phase and
         * remnant kind of the synthetic tracks met */
        ck_assert_uint_gt(good, 10000);
        int want_phase[] = {HRT_PHASE_PRE_MS, HRT_PHASE_MS, HRT_PHASE_RGB, HRT_PHASE_CHEB, HRT_PHASE_WD};
        for (size_t k = 0; k < sizeof want_phase / sizeof want_phase[0]; k++)
            ck_assert_msg(seen_phase[want_phase[k]], "no star in phase %s", hrt_phase_key(want_phase[k]));
        ck_assert(seen_remnant[HRT_REMNANT_HE_WD] && seen_remnant[HRT_REMNANT_CO_WD]);
        /* the same tables and timetables */
        ck_assert_uint_eq(hrt_grid_n_z(direct), hrt_grid_n_z(conv));
        ck_assert_double_eq(hrt_grid_z_ref(direct), hrt_grid_z_ref(conv));
        for (size_t iz = 0; iz < hrt_grid_n_z(direct); iz++) {
            ck_assert_double_eq(hrt_grid_z(direct, iz), hrt_grid_z(conv, iz));
            ck_assert_double_eq(hrt_grid_route_boundary(direct, iz, 0), hrt_grid_route_boundary(conv, iz, 0));
            for (size_t im = 0; im < hrt_grid_n_masses(direct, iz); im++) {
                hrt_star *s1, *s2;
                double m = hrt_grid_mass(direct, iz, im) * 1.01, z = hrt_grid_z(direct, iz);
                ck_assert_double_eq(hrt_grid_mass(direct, iz, im), hrt_grid_mass(conv, iz, im));
                if (hrt_star_new(direct, m, z, &s1, NULL) != HRT_OK)
                    continue;
                ck_assert_int_eq(hrt_star_new(conv, m, z, &s2, NULL), HRT_OK);
                hrt_phase_span p1[16], p2[16];
                size_t n1, n2;
                ck_assert_int_eq(hrt_star_phases(s1, p1, 16, &n1), HRT_OK);
                ck_assert_int_eq(hrt_star_phases(s2, p2, 16, &n2), HRT_OK);
                ck_assert_uint_eq(n1, n2);
                ck_assert_int_eq(memcmp(p1, p2, n1 * sizeof p1[0]), 0);
                hrt_star_free(s1);
                hrt_star_free(s2);
            }
        }
        hrt_grid_close(direct);
        hrt_grid_close(conv);
    }
    /* root text attributes kept, the conversion recorded */
    hrt_grid *g = open_or_fail(up, HRT_INTERP_STEFFEN);
    ck_assert_str_eq(hrt_grid_attribute(g, "description"), "synthetic test grid (known functions)");
    const char *cf = hrt_grid_attribute(g, "converted_from");
    ck_assert_msg(cf && strstr(cf, "format_version 1"), "converted_from: %s", cf ? cf : "(none)");
    hrt_grid_close(g);
    /* in place: the new file replaces the old one */
    rc = hrt_grid_upgrade(v1, v1, &e);
    ck_assert_msg(rc == HRT_OK, "upgrade in place: %s", e.message);
    hrt_grid *direct = open_or_fail(grid_path, HRT_INTERP_STEFFEN), *conv = open_or_fail(v1, HRT_INTERP_STEFFEN);
    int sp[HRT_PHASE_SLOTS] = {0}, sr[HRT_REMNANT_SLOTS] = {0};
    ck_assert_uint_gt(compare_grids(direct, conv, 2000, 99u, sp, sr), 1000);
    hrt_grid_close(direct);
    hrt_grid_close(conv);
    /* a current file goes through unchanged in meaning */
    ck_assert_int_eq(hrt_grid_upgrade(grid_path, up, NULL), HRT_OK);
    direct = open_or_fail(grid_path, HRT_INTERP_STEFFEN);
    conv = open_or_fail(up, HRT_INTERP_STEFFEN);
    ck_assert_uint_gt(compare_grids(direct, conv, 2000, 5u, sp, sr), 1000);
    hrt_grid_close(direct);
    hrt_grid_close(conv);
    unlink(v1);
    unlink(up);
}
END_TEST

START_TEST(test_upgrade_errors)
{
    char v1[320], out[320], p[320], cmd[700];
    write_v1(v1, sizeof v1, "v1-err.h5");
    path_in_tmp(out, sizeof out, "never.h5");
    hrt_error e;
    ck_assert_int_eq(hrt_grid_upgrade(NULL, out, &e), HRT_E_NULL);
    ck_assert(strstr(e.message, "old") != NULL);
    ck_assert_int_eq(hrt_grid_upgrade(v1, NULL, &e), HRT_E_NULL);
    ck_assert(strstr(e.message, "new") != NULL);
    ck_assert_int_eq(hrt_grid_upgrade(NULL, NULL, NULL), HRT_E_NULL);
    /* a missing file */
    ck_assert_int_eq(hrt_grid_upgrade("/nonexistent/old.h5", out, &e), HRT_E_IO);
    ck_assert_msg(strstr(e.message, "/nonexistent/old.h5"), "message '%s'", e.message);
    /* not HDF5 */
    path_in_tmp(p, sizeof p, "text.h5");
    FILE *f = fopen(p, "w");
    fputs("initial_mass_msun\n1.0\n", f);
    fclose(f);
    ck_assert_int_eq(hrt_grid_upgrade(p, out, &e), HRT_E_FORMAT);
    /* newer than this library */
    path_in_tmp(p, sizeof p, "newer.h5");
    snprintf(cmd, sizeof cmd, "cp %s %s", grid_path, p);
    ck_assert_int_eq(system(cmd), 0);
    hid_t h = H5Fopen(p, H5F_ACC_RDWR, H5P_DEFAULT);
    dmg_version(h);
    H5Fclose(h);
    ck_assert_int_eq(hrt_grid_upgrade(p, out, &e), HRT_E_VERSION);
    ck_assert_msg(strstr(e.message, "format_version 99"), "message '%s'", e.message);
    /* a damaged format-1 file: its key table names no phase of hrtrail */
    snprintf(cmd, sizeof cmd, "cp %s %s", v1, p);
    ck_assert_int_eq(system(cmd), 0);
    h = H5Fopen(p, H5F_ACC_RDWR, H5P_DEFAULT);
    write_string_elem(h, "phase_keys", 4, "mystery");
    H5Fclose(h);
    ck_assert_int_eq(hrt_grid_upgrade(p, out, &e), HRT_E_FORMAT);
    ck_assert_msg(strstr(e.message, "phase_keys[4]: unknown key 'mystery'"), "message '%s'", e.message);
    /* a format-1 file with a format-2 name in it is not a format-1 file */
    snprintf(cmd, sizeof cmd, "cp %s %s", v1, p);
    ck_assert_int_eq(system(cmd), 0);
    h = H5Fopen(p, H5F_ACC_RDWR, H5P_DEFAULT);
    H5Lmove(h, "metallicity/2/log_L", h, "metallicity/2/log_l_lsun", H5P_DEFAULT, H5P_DEFAULT);
    H5Fclose(h);
    ck_assert_int_eq(hrt_grid_upgrade(p, out, &e), HRT_E_FORMAT);
    ck_assert_msg(strstr(e.message, "metallicity/2/log_L: dataset is missing"), "message '%s'", e.message);
    /* none of these wrote anything */
    ck_assert(access(out, F_OK) != 0);
    /* an unwritable destination: the old file stays as it was */
    path_in_tmp(p, sizeof p, "missing-dir/new.h5");
    ck_assert_int_eq(hrt_grid_upgrade(v1, p, &e), HRT_E_IO);
    hrt_grid *g;
    ck_assert_int_eq(hrt_grid_open(v1, &g, NULL), HRT_E_VERSION);
    snprintf(cmd, sizeof cmd, "ls %s | grep -c tmp- > /dev/null", tmpdir);
    ck_assert_msg(system(cmd) != 0, "temporary file left behind");
    unlink(v1);
}
END_TEST

START_TEST(test_builder_rejects)
{
    const char *kp[] = {"a", "b"};
    int seg[] = {10};
    hrt_route_spec r = {"one", 2, kp, seg};
    hrt_builder *b;
    hrt_error e;
    ck_assert_int_eq(hrt_builder_new(0, &r, 0.02, &b, &e), HRT_E_INVALID);
    ck_assert_int_eq(hrt_builder_new(1, &r, -1.0, &b, &e), HRT_E_DOMAIN);
    hrt_route_spec bad = {"a/b", 2, kp, seg};
    ck_assert_int_eq(hrt_builder_new(1, &bad, 0.02, &b, &e), HRT_E_INVALID);
    ck_assert_int_eq(hrt_builder_new(1, &r, 0.02, &b, &e), HRT_OK);
    double age[12], l[12], t[12], m[12], c[12];
    int ph[12];
    for (int i = 0; i < 12; i++) {
        age[i] = 7.0 + 0.1 * i;
        l[i] = 0.01 * i;
        t[i] = 3.7;
        m[i] = 1.0;
        c[i] = 0.0;
        ph[i] = HRT_PHASE_MS;
    }
    size_t kps[2] = {0, 11};
    hrt_track_data td = {1.0, 0, HRT_REMNANT_NONE, NAN, 12, age, l, t, NULL, m, c, c, ph, 2, kps};
    ck_assert_int_eq(hrt_builder_add_track(b, 0.02, &td, &e), HRT_OK);
    age[5] = age[4];
    ck_assert_int_eq(hrt_builder_add_track(b, 0.02, &td, &e), HRT_E_INVALID);
    ck_assert(strstr(e.message, "log_age[5]") != NULL);
    age[5] = 7.5;
    l[3] = NAN;
    ck_assert_int_eq(hrt_builder_add_track(b, 0.02, &td, &e), HRT_E_DOMAIN);
    l[3] = 0.03;
    kps[1] = 40;
    ck_assert_int_eq(hrt_builder_add_track(b, 0.02, &td, &e), HRT_E_INVALID);
    kps[1] = 11;
    td.route = 4;
    ck_assert_int_eq(hrt_builder_add_track(b, 0.02, &td, &e), HRT_E_INVALID);
    td.route = 0;
    ph[2] = 0;
    ck_assert_int_eq(hrt_builder_add_track(b, 0.02, &td, &e), HRT_E_INVALID);
    ph[2] = HRT_PHASE_MS;
    /* same mass twice is refused at write time */
    ck_assert_int_eq(hrt_builder_add_track(b, 0.02, &td, &e), HRT_OK);
    char p[320];
    path_in_tmp(p, sizeof p, "dup.h5");
    ck_assert_int_eq(hrt_builder_write(b, p, &e), HRT_E_INVALID);
    ck_assert(access(p, F_OK) != 0);
    ck_assert_int_eq(hrt_builder_set_attribute(b, "format", "x", &e), HRT_E_INVALID);
    hrt_builder_free(b);
}
END_TEST

/* A grid of two routes written through the builder: route "a" with tracks
 * of 1, 1.2 and 1.44 Msun, route "b" with one track of 10 Msun, the
 * boundary at 2 Msun.  One Z. */
static void write_thin_route_grid(const char *path)
{
    const char *kp[] = {"zams", "tams"};
    int seg[] = {10};
    hrt_route_spec r[2] = {{"a", 2, kp, seg}, {"b", 2, kp, seg}};
    hrt_builder *b;
    hrt_error e;
    ck_assert_int_eq(hrt_builder_new(2, r, 0.02, &b, &e), HRT_OK);
    const double masses[4] = {1.0, 1.2, 1.44, 10.0};
    for (int k = 0; k < 4; k++) {
        double m0 = masses[k], age[11], l[11], t[11], m[11], he[11], co[11];
        int ph[11];
        for (int i = 0; i < 11; i++) {
            age[i] = 10.0 - 2.5 * log10(m0) + 0.05 * i;
            l[i] = 3.5 * log10(m0) + 0.02 * i;
            t[i] = 3.76 + 0.5 * log10(m0) - 0.002 * i;
            m[i] = m0;
            he[i] = co[i] = 0.0;
            ph[i] = HRT_PHASE_MS;
        }
        hrt_track_data td = {m0, k == 3, HRT_REMNANT_NONE, NAN, 11, age, l, t, NULL, m, he, co, ph, 0, NULL};
        ck_assert_int_eq(hrt_builder_add_eep_track(b, 0.02, &td, &e), HRT_OK);
    }
    double bound = 2.0;
    ck_assert_int_eq(hrt_builder_set_route_boundaries(b, 0.02, &bound, &e), HRT_OK);
    ck_assert_msg(hrt_builder_write(b, path, &e) == HRT_OK, "%s", e.message);
    hrt_builder_free(b);
}

/* Extrapolation is bounded: beyond a route's end track at most two inner
 * spacings, for a one-track route half the gap to the next track; farther a
 * query is refused with a message, never answered from a distant track. */
START_TEST(test_extrapolation_bounded)
{
    char p[320];
    path_in_tmp(p, sizeof p, "thin.h5");
    write_thin_route_grid(p);
    hrt_grid *g = open_or_fail(p, HRT_INTERP_STEFFEN);
    hrt_error e;
    hrt_state st;
    double limit = 0.5 * log10(10.0 / 1.44), age = 1e5;
    double near = 10.0 / pow(10.0, 0.9 * limit), far = 10.0 / pow(10.0, 1.1 * limit);
    ck_assert_int_eq(hrt_eval(g, 1, &near, NULL, 0.02, &age, &st, &e), HRT_OK);
    ck_assert(st.flags & HRT_FLAG_EXTRAPOLATED);
    ck_assert_int_eq(hrt_eval(g, 1, &far, NULL, 0.02, &age, &st, &e), HRT_E_NO_TRACK);
    ck_assert_msg(strstr(e.message, "extrapolation reaches") && strstr(e.message, "route 'b'"), "%s", e.message);
    hrt_star *s = NULL;
    ck_assert_int_eq(hrt_star_new(g, far, 0.02, &s, &e), HRT_E_NO_TRACK);
    ck_assert_ptr_null(s);
    /* route "a": up to two inner spacings beyond 1.44 Msun, i.e. to the boundary here */
    double below = 1.99;
    ck_assert_int_eq(hrt_eval(g, 1, &below, NULL, 0.02, &age, &st, &e), HRT_OK);
    ck_assert(st.flags & HRT_FLAG_EXTRAPOLATED);
    /* index guards: no wrap at SIZE_MAX */
    ck_assert(isnan(hrt_grid_route_boundary(g, 0, (size_t)-1)));
    ck_assert(isnan(hrt_grid_route_boundary(g, 0, 1)));
    double mb;
    ck_assert_int_eq(hrt_grid_boundary_at(g, 0.02, (size_t)-1, &mb), HRT_E_INVALID);
    ck_assert_int_eq(hrt_grid_boundary_at(g, 0.02, 0, &mb), HRT_OK);
    ck_assert_double_eq(mb, 2.0);
    hrt_grid_close(g);
}
END_TEST

/* Truths of every state: cores nested in the star; white dwarfs beyond the
 * cooling law's range flagged; hrt_wd_log_l only for white dwarfs; every
 * error reset to success by a successful call. */
START_TEST(test_state_truths)
{
    hrt_grid *g = open_or_fail(grid_path, HRT_INTERP_CSPLINE); /* cubic: overshoots where it can */
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, 20261205);
    enum { N = 20000 };
    static double m[N], a[N];
    static hrt_state st[N];
    double lo, hi;
    ck_assert_int_eq(hrt_grid_mass_range(g, 0.01, &lo, &hi), HRT_OK);
    for (int i = 0; i < N; i++) {
        m[i] = lo * pow(hi / lo, gsl_rng_uniform(r));
        a[i] = pow(10.0, 6.0 + 5.0 * gsl_rng_uniform(r));
    }
    hrt_error e = {HRT_E_DOMAIN, "an earlier failure"};
    hrt_eval(g, N, m, NULL, 0.01, a, st, &e);
    for (int i = 0; i < N; i++) {
        if (st[i].status != HRT_OK || (st[i].flags & (HRT_FLAG_DARK | HRT_FLAG_NOT_MODELLED)))
            continue;
        ck_assert_msg(st[i].he_core_mass_msun <= st[i].mass_msun && st[i].co_core_mass_msun <= st[i].he_core_mass_msun,
                      "repro: mass=%.17g z=0.01 age=%.17g: cores %g, %g in %g", m[i], a[i], st[i].he_core_mass_msun,
                      st[i].co_core_mass_msun, st[i].mass_msun);
        if (st[i].phase == HRT_PHASE_WD)
            ck_assert_int_eq(!!(st[i].flags & HRT_FLAG_BEYOND_LAW),
                             !(st[i].log_l_lsun >= -4.5 && st[i].log_l_lsun <= -1.0));
    }
    /* a white dwarf at 1e20 yr is far beyond Mestel cooling: flagged */
    double m0 = hi, age = 1e20;
    hrt_state w;
    ck_assert_int_eq(hrt_eval(g, 1, &m0, NULL, 0.01, &age, &w, &e), HRT_OK);
    if (w.phase == HRT_PHASE_WD)
        ck_assert(w.flags & HRT_FLAG_BEYOND_LAW);
    ck_assert(isnan(hrt_wd_log_l(0.6, HRT_REMNANT_NS, 0.0, 1e9)));
    ck_assert(isnan(hrt_wd_log_l(0.6, HRT_REMNANT_BH, 0.0, 1e9)));
    ck_assert(isnan(hrt_wd_log_l(0.6, 99, 0.0, 1e9)));
    ck_assert(isfinite(hrt_wd_log_l(0.6, HRT_REMNANT_CO_WD, 0.0, 1e9)));
    /* errors reset on success */
    e = (hrt_error){HRT_E_DOMAIN, "an earlier failure"};
    double one = 1.0 * lo * 2.0, t9 = 1e9;
    ck_assert_int_eq(hrt_eval(g, 1, &one, NULL, 0.01, &t9, &w, &e), HRT_OK);
    ck_assert_int_eq(e.code, HRT_OK);
    ck_assert_str_eq(e.message, "success");
    e = (hrt_error){HRT_E_DOMAIN, "an earlier failure"};
    ck_assert_int_eq(hrt_eval(g, 0, NULL, NULL, 0.01, NULL, NULL, &e), HRT_OK);
    ck_assert_int_eq(e.code, HRT_OK);
    e = (hrt_error){HRT_E_DOMAIN, "an earlier failure"};
    size_t n;
    ck_assert_int_eq(hrt_isochrone(g, 1e9, 0.01, NULL, 0, &n, &e) == HRT_E_BUFFER || n == 0, 1);
    hrt_state *iso = malloc((n + 1) * sizeof *iso);
    e = (hrt_error){HRT_E_DOMAIN, "an earlier failure"};
    ck_assert_int_eq(hrt_isochrone(g, 1e9, 0.01, iso, n + 1, &n, &e), HRT_OK);
    ck_assert_int_eq(e.code, HRT_OK);
    free(iso);
    hrt_star *s;
    e = (hrt_error){HRT_E_DOMAIN, "an earlier failure"};
    ck_assert_int_eq(hrt_star_new(g, one, 0.01, &s, &e), HRT_OK);
    ck_assert_int_eq(e.code, HRT_OK);
    hrt_star_free(s);
    hrt_grid *g2;
    e = (hrt_error){HRT_E_DOMAIN, "an earlier failure"};
    ck_assert_int_eq(hrt_grid_open(grid_path, &g2, &e), HRT_OK);
    ck_assert_int_eq(e.code, HRT_OK);
    hrt_grid_close(g2);
    gsl_rng_free(r);
    hrt_grid_close(g);
}
END_TEST

/* Resampling a raw track: EEPs land on the keypoints, are equally spaced in
 * the metric of tracks/FORMAT.md, and reproduce a linear track exactly. */
START_TEST(test_resampling)
{
    const char *kp[] = {"a", "b", "c"};
    int seg[] = {10, 5};
    hrt_route_spec r = {"one", 3, kp, seg};
    hrt_builder *b;
    ck_assert_int_eq(hrt_builder_new(1, &r, 0.02, &b, NULL), HRT_OK);
    enum { N = 301 };
    double age[N], l[N], t[N], m[N], c[N];
    int ph[N];
    for (int i = 0; i < N; i++) {
        double u = (double)i / (N - 1);
        age[i] = log10(1e7 + 1e9 * u * u); /* uneven in time */
        l[i] = 2.0 * u;
        t[i] = 3.9 - 0.1 * u;
        m[i] = 1.0 - 0.1 * u;
        c[i] = 0.2 * u;
        ph[i] = i < 200 ? HRT_PHASE_MS : HRT_PHASE_RGB;
    }
    size_t kps[3] = {0, 200, 300};
    hrt_track_data td = {1.0, 0, HRT_REMNANT_CO_WD, 0.6, N, age, l, t, NULL, m, c, c, ph, 3, kps};
    ck_assert_int_eq(hrt_builder_add_track(b, 0.02, &td, NULL), HRT_OK);
    td.initial_mass_msun = 1.2;
    ck_assert_int_eq(hrt_builder_add_track(b, 0.02, &td, NULL), HRT_OK);
    char p[320];
    path_in_tmp(p, sizeof p, "resampled.h5");
    ck_assert_int_eq(hrt_builder_write(b, p, NULL), HRT_OK);
    hrt_builder_free(b);
    hrt_grid *g = open_or_fail(p, HRT_INTERP_LINEAR);
    hrt_star *s;
    ck_assert_int_eq(hrt_star_new(g, 1.0, 0.02, &s, NULL), HRT_OK);
    ck_assert_uint_eq(hrt_star_n_eep(s), 16);
    hrt_state st;
    hrt_star_eep_state(s, 10, &st);
    ck_assert_double_eq_tol(st.log_l_lsun, l[200], 1e-12); /* keypoint b at EEP 10 */
    ck_assert_int_eq(st.phase, HRT_PHASE_RGB);
    hrt_star_eep_state(s, 15, &st);
    ck_assert_double_eq_tol(st.log_l_lsun, 2.0, 1e-12);
    /* Linear in (log L, log Teff) and in the sample index: L varies linearly
     * with distance, so EEPs are equally spaced in the metric. */
    double d_prev = -1.0;
    for (int j = 1; j < 10; j++) {
        hrt_state s0, s1;
        hrt_star_eep_state(s, j - 1, &s0);
        hrt_star_eep_state(s, j, &s1);
        double f0 = (s0.age_yr - pow(10.0, age[0])) / (pow(10.0, age[200]) - pow(10.0, age[0]));
        double f1 = (s1.age_yr - pow(10.0, age[0])) / (pow(10.0, age[200]) - pow(10.0, age[0]));
        double dT = 2.0 * (s1.log_teff_k - s0.log_teff_k), dL = s1.log_l_lsun - s0.log_l_lsun, dA = f1 - f0;
        double d = sqrt(dT * dT + dL * dL + dA * dA);
        if (d_prev > 0)
            ck_assert_double_eq_tol(d, d_prev, 2e-3 * d);
        d_prev = d;
    }
    hrt_star_free(s);
    hrt_grid_close(g);
}
END_TEST

static Suite *core_suite(void)
{
    Suite *s = suite_create("core");
    struct {
        const char *name;
        const TTest *fn;
    } cases[] = {
        {"names", test_names},
        {"extrapolation_bounded", test_extrapolation_bounded},
        {"state_truths", test_state_truths},
        {"phase_codes", test_phase_codes},
        {"remnant_codes", test_remnant_codes},
        {"slopes_gsl", test_slopes_match_gsl},
        {"open_slopes_gsl", test_open_slopes_match_gsl_deriv},
        {"batch_one_star", test_batch_equals_one_star},
        {"lockstep_one_star", test_lockstep_equals_one_star},
        {"lockstep_z_one_star", test_lockstep_z_equals_one_star},
        {"hot_path_gsl", test_hot_path_equals_gsl},
        {"roundtrip", test_roundtrip_exact_at_knots},
        {"writer", test_writer_atomic_and_deterministic},
        {"exact_answer", test_exact_answer_accuracy},
        {"convergence", test_convergence_order},
        {"metallicity", test_metallicity_interpolation},
        {"star_eval_bitwise", test_star_equals_eval_bitwise},
        {"stefan_boltzmann", test_stefan_boltzmann},
        {"phases", test_phases_keypoints_remnant},
        {"white_dwarfs", test_wd_physics},
        {"collapse_remnant", test_collapse_remnant},
        {"isochrone", test_isochrone},
        {"bad_queries", test_bad_queries},
        {"route_edges", test_route_edges},
        {"damaged_files", test_damaged_files},
        {"not_hdf5", test_not_hdf5_and_missing},
        {"format1_refused", test_format1_refused},
        {"upgrade_bitwise", test_upgrade_bitwise},
        {"upgrade_errors", test_upgrade_errors},
        {"builder_rejects", test_builder_rejects},
        {"resampling", test_resampling},
    };
    for (size_t k = 0; k < sizeof cases / sizeof cases[0]; k++) {
        TCase *tc = tcase_create(cases[k].name);
        tcase_add_checked_fixture(tc, NULL, teardown_each);
        tcase_set_timeout(tc, 120);
        tcase_add_test(tc, cases[k].fn);
        suite_add_tcase(s, tc);
    }
    return s;
}

int main(void)
{
    H5Eset_auto2(H5E_DEFAULT, NULL, NULL); /* the tests damage files on purpose */
    if (setup_once())
        return EXIT_FAILURE;
    SRunner *sr = srunner_create(core_suite());
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    char cmd[300];
    snprintf(cmd, sizeof cmd, "rm -rf %s", tmpdir);
    if (system(cmd) != 0)
        failed++;
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
