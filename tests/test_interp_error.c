/* The stored error field (hrt_accuracy_store) and the estimate at a state
 * (hrt_state_interp_error):
 *  - on exact-answer grids (tests/synth.c) the estimate bounds the true
 *    error at stars between the grid's tracks;
 *  - out of sample on a grid: half of a group's tracks are set aside, the
 *    rest measured by leave-one-out and stored, and the set-aside tracks
 *    (whose answer is known) predicted: how often their true error is below
 *    the estimate; on the default grid (HRTRAIL_GRID) too, with its figures
 *    printed;
 *  - the field the default grid ships equals a fresh run;
 *  - codes and messages. */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "hrtrail.h"
#include "synth.h"

static const synth_spec spec = {9, 11, 3, 1, 1, 0.3, 1.0, 10.0};

static char *tmp_path(const char *tag)
{
    const char *t = getenv("TMPDIR");
    char *p = malloc(512);
    ck_assert_ptr_nonnull(p);
    snprintf(p, 512, "%s/hrtrail-ierr-test-%s-%ld.h5", t && *t ? t : "/tmp", tag, (long)getpid());
    return p;
}

/* Leave-one-out on the grid in `path` (one group if z > 0, all types if
 * interp < 0), stored in the file; the file reopened with type `open_as`. */
static hrt_grid *measure_and_store(const char *path, double z, int interp, int open_as)
{
    hrt_grid *g = NULL;
    hrt_accuracy *a = NULL;
    hrt_error err;
    ck_assert_msg(hrt_grid_open(path, &g, &err) == HRT_OK, "%s", err.message);
    ck_assert_int_eq(hrt_accuracy_new(&a, &err), HRT_OK);
    ck_assert_int_eq(hrt_accuracy_set_interp(a, interp, &err), HRT_OK);
    if (z > 0)
        ck_assert_int_eq(hrt_accuracy_set_z(a, z, &err), HRT_OK);
    ck_assert_msg(hrt_accuracy_run(a, g, &err) == HRT_OK, "%s", err.message);
    hrt_grid_close(g);
    ck_assert_msg(hrt_accuracy_store(a, path, &err) == HRT_OK, "%s", err.message);
    hrt_accuracy_free(a);
    ck_assert_msg(hrt_grid_open_with(path, open_as, &g, &err) == HRT_OK, "%s", err.message);
    ck_assert(hrt_grid_has_interp_error(g));
    return g;
}

/* ---- exact answers ------------------------------------------------------ */
START_TEST(bounds_the_true_error_on_exact_grids)
{
    char *path = tmp_path("exact");
    hrt_error err;
    ck_assert_int_eq(synth_write(&spec, path, &err), 0);
    hrt_grid *g0 = measure_and_store(path, 0, -1, HRT_INTERP_STEFFEN);
    hrt_grid_close(g0);
    const int nj[2] = {51, 61};
    for (int it = 0; it < HRT_INTERP_COUNT; it++) {
        hrt_grid *g;
        ck_assert_int_eq(hrt_grid_open_with(path, it, &g, &err), HRT_OK);
        size_t n = 0, below[3] = {0, 0, 0};
        double worst_ratio = 0;
        for (size_t iz = 0; iz < hrt_grid_n_z(g); iz++) {
            double z = hrt_grid_z(g, iz), y = synth_feh(z);
            for (size_t im = 0; im + 1 < hrt_grid_n_masses(g, iz); im++) {
                if (hrt_grid_track_route(g, iz, im) != hrt_grid_track_route(g, iz, im + 1))
                    continue;
                for (int f = 1; f <= 2; f++) { /* a third and two thirds of the way in log mass */
                    double x0 = log10(hrt_grid_mass(g, iz, im)), x1 = log10(hrt_grid_mass(g, iz, im + 1));
                    double x = x0 + (x1 - x0) * f / 3.0;
                    hrt_star *s;
                    ck_assert_int_eq(hrt_star_new(g, pow(10, x), z, &s, &err), HRT_OK);
                    for (size_t j = 0; j < hrt_star_n_eep(s); j++) {
                        hrt_state st;
                        hrt_interp_error e;
                        ck_assert_int_eq(hrt_star_eep_state(s, j, &st), HRT_OK);
                        ck_assert_msg(hrt_state_interp_error(g, &st, &e, &err) == HRT_OK, "%s", err.message);
                        double ee = (double)j / (nj[st.route] - 1);
                        double t[3] = {fabs(st.log_l_lsun - synth_log_l(st.route, x, ee, y)),
                                       fabs(st.log_teff_k - synth_log_teff(st.route, x, ee, y)),
                                       fabs(log10(st.age_yr) - synth_log_age(st.route, x, ee, y))};
                        double est[3] = {e.log_l_dex, e.log_teff_dex, e.log_age_dex};
                        n++;
                        for (int q = 0; q < 3; q++) {
                            below[q] += t[q] <= est[q] + 1e-12;
                            if (est[q] > 1e-9)
                                worst_ratio = fmax(worst_ratio, t[q] / est[q]);
                        }
                    }
                    hrt_star_free(s);
                }
            }
        }
        printf("exact grid, %s: %zu EEPs of stars between tracks; true |error| <= estimate for %.4f (log L), "
               "%.4f (log Teff), %.4f (log age); largest true/estimate %.3f\n",
               hrt_interp_name(it), n, (double)below[0] / (double)n, (double)below[1] / (double)n,
               (double)below[2] / (double)n, worst_ratio);
        fflush(stdout);
        ck_assert_uint_gt(n, 1000);
        /* the estimate spans twice the spacing: it bounds every point of these smooth functions */
        for (int q = 0; q < 3; q++)
            ck_assert_uint_eq(below[q], n);
        hrt_grid_close(g);
    }
    unlink(path);
    free(path);
}
END_TEST

/* ---- out of sample -------------------------------------------------------- */
/* Group iz of g with every other track of each route set aside (the route's
 * ends kept), written to path; the set-aside masses in *aside. */
static size_t write_half(const hrt_grid *g, size_t iz, const char *path, double *aside)
{
    size_t nr = hrt_grid_n_routes(g), na = 0;
    hrt_builder *b;
    hrt_error err;
    double z = hrt_grid_z(g, iz), bnd[8];
    ck_assert_msg(synth_builder_like(g, &b, &err) == HRT_OK, "%s", err.message);
    ck_assert_int_eq(hrt_builder_set_compression(b, 0, &err), HRT_OK);
    size_t nm = hrt_grid_n_masses(g, iz), k = 0;
    for (size_t im = 0; im < nm; im++) {
        int route = hrt_grid_track_route(g, iz, im);
        int first = im == 0 || hrt_grid_track_route(g, iz, im - 1) != route;
        int last = im + 1 == nm || hrt_grid_track_route(g, iz, im + 1) != route;
        k = first ? 0 : k + 1;
        double m = hrt_grid_mass(g, iz, im);
        if (k % 2 && !last) {
            aside[na++] = m;
            continue;
        }
        ck_assert_msg(synth_copy_track(g, iz, im, b, &err) == HRT_OK, "%s", err.message);
    }
    for (size_t i = 0; i + 1 < nr; i++)
        bnd[i] = hrt_grid_route_boundary(g, iz, i);
    if (nr > 1)
        ck_assert_int_eq(hrt_builder_set_route_boundaries(b, z, bnd, &err), HRT_OK);
    ck_assert_msg(hrt_builder_write(b, path, &err) == HRT_OK, "%s", err.message);
    hrt_builder_free(b);
    return na;
}

static int cmp_d(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* Predict the set-aside tracks of group iz of g from the half grid h (its
 * field stored); the fraction of EEPs whose true error is below the
 * estimate, per quantity, into frac; the median of true/estimate of log L
 * into *med_ratio. */
static size_t out_of_sample(const hrt_grid *g, size_t iz, const hrt_grid *h, const double *aside, size_t na,
                            double frac[3], double *med_ratio)
{
    size_t n = 0, below[3] = {0, 0, 0}, nr = 0, cap = 1024;
    double *ratio = malloc(cap * sizeof *ratio);
    hrt_error err;
    double z = hrt_grid_z(g, iz);
    for (size_t a = 0; a < na; a++) {
        hrt_star *truth, *pred;
        ck_assert_int_eq(hrt_star_new(g, aside[a], z, &truth, &err), HRT_OK);
        ck_assert_int_eq(hrt_star_new(h, aside[a], z, &pred, &err), HRT_OK);
        size_t nj = hrt_star_n_eep(truth) < hrt_star_n_eep(pred) ? hrt_star_n_eep(truth) : hrt_star_n_eep(pred);
        for (size_t j = 0; j < nj; j++) {
            hrt_state t, p;
            hrt_interp_error e;
            ck_assert_int_eq(hrt_star_eep_state(truth, j, &t), HRT_OK);
            ck_assert_int_eq(hrt_star_eep_state(pred, j, &p), HRT_OK);
            if (hrt_state_interp_error(h, &p, &e, &err) != HRT_OK)
                continue;
            double d[3] = {fabs(p.log_l_lsun - t.log_l_lsun), fabs(p.log_teff_k - t.log_teff_k),
                           fabs(log10(p.age_yr) - log10(t.age_yr))};
            double est[3] = {e.log_l_dex, e.log_teff_dex, e.log_age_dex};
            n++;
            for (int q = 0; q < 3; q++)
                below[q] += d[q] <= est[q];
            if (est[0] > 0) {
                if (nr == cap)
                    ck_assert_ptr_nonnull(ratio = realloc(ratio, (cap *= 2) * sizeof *ratio));
                ratio[nr++] = d[0] / est[0];
            }
        }
        hrt_star_free(truth);
        hrt_star_free(pred);
    }
    for (int q = 0; q < 3; q++)
        frac[q] = n ? (double)below[q] / (double)n : NAN;
    qsort(ratio, nr, sizeof *ratio, cmp_d);
    *med_ratio = nr ? ratio[nr / 2] : NAN;
    free(ratio);
    return n;
}

static void half_test(const hrt_grid *g, size_t iz, int it, const char *tag, double frac[3], double *med)
{
    char *path = tmp_path(tag);
    double aside[4096];
    ck_assert_uint_le(hrt_grid_n_masses(g, iz), 4096);
    size_t na = write_half(g, iz, path, aside);
    ck_assert_uint_gt(na, 2);
    hrt_grid *h = measure_and_store(path, 0, it, it);
    size_t n = out_of_sample(g, iz, h, aside, na, frac, med);
    printf("%s, Z = %g, %s: %zu set-aside tracks, %zu EEPs estimated; true |error| <= estimate for %.3f (log L), "
           "%.3f (log Teff), %.3f (log age); median true/estimate of log L %.3g\n",
           tag, hrt_grid_z(g, iz), hrt_interp_name(it), na, n, frac[0], frac[1], frac[2], *med);
    fflush(stdout);
    ck_assert_uint_gt(n, 100);
    hrt_grid_close(h);
    unlink(path);
    free(path);
}

START_TEST(out_of_sample_on_exact_grid)
{
    synth_spec fine = spec;
    fine.n_low = 17, fine.n_high = 21, fine.n_z = 1;
    char *path = tmp_path("fine");
    hrt_error err;
    hrt_grid *g;
    ck_assert_int_eq(synth_write(&fine, path, &err), 0);
    ck_assert_int_eq(hrt_grid_open(path, &g, &err), HRT_OK);
    unlink(path);
    free(path);
    double frac[3], med;
    half_test(g, 0, HRT_INTERP_STEFFEN, "exact", frac, &med);
    for (int q = 0; q < 3; q++)
        ck_assert_double_ge(frac[q], 0.99);
    hrt_grid_close(g);
}
END_TEST

START_TEST(default_grid_out_of_sample_and_stored_field)
{
    hrt_grid *g;
    hrt_error err;
    if (hrt_grid_open(NULL, &g, &err) != HRT_OK) {
        printf("no default grid (%s): skipped\n", err.message);
        return;
    }
    /* the default grid stores a field for every type */
    for (int it = 0; it < HRT_INTERP_COUNT; it++) {
        hrt_grid *h;
        ck_assert_int_eq(hrt_grid_open_with(NULL, it, &h, &err), HRT_OK);
        ck_assert_msg(hrt_grid_has_interp_error(h), "the default grid stores no error field for %s",
                      hrt_interp_name(it));
        hrt_grid_close(h);
    }
    size_t iz = 0;
    while (iz + 1 < hrt_grid_n_z(g) && hrt_grid_z(g, iz) < 0.014 * (1 - 1e-9))
        iz++;
    double frac[3], med;
    half_test(g, iz, HRT_INTERP_STEFFEN, "default", frac, &med);
    /* measured 2026-12: see tracks/MODEL.md; a margin below */
    ck_assert_double_ge(frac[0], 0.85);
    ck_assert_double_ge(frac[1], 0.85);
    ck_assert_double_ge(frac[2], 0.85);
    hrt_grid_close(g);
}
END_TEST

/* The field the default grid ships is what a fresh run of one group gives. */
START_TEST(default_grid_field_is_a_fresh_run)
{
    hrt_grid *g;
    hrt_error err;
    if (hrt_grid_open(NULL, &g, &err) != HRT_OK) {
        printf("no default grid (%s): skipped\n", err.message);
        return;
    }
    char *path = tmp_path("copy");
    {
        FILE *in = fopen(hrt_default_grid_path(), "rb"), *out = fopen(path, "wb");
        ck_assert(in && out);
        char buf[65536];
        size_t k;
        while ((k = fread(buf, 1, sizeof buf, in)) > 0)
            ck_assert_uint_eq(fwrite(buf, 1, k, out), k);
        fclose(in);
        ck_assert_int_eq(fclose(out), 0);
    }
    double z = 0.014;
    hrt_grid *fresh = measure_and_store(path, z, HRT_INTERP_STEFFEN, HRT_INTERP_STEFFEN);
    size_t n = 0;
    for (double lm = -1.0; lm <= 2.1; lm += 0.013) {
        hrt_star *s;
        double m = pow(10, lm);
        ck_assert_int_eq(hrt_star_new(g, m, z, &s, &err), HRT_OK);
        for (size_t j = 0; j < hrt_star_n_eep(s); j += 7) {
            hrt_state st;
            hrt_interp_error a, b;
            ck_assert_int_eq(hrt_star_eep_state(s, j, &st), HRT_OK);
            int ra = hrt_state_interp_error(g, &st, &a, &err), rb = hrt_state_interp_error(fresh, &st, &b, &err);
            ck_assert_int_eq(ra, rb);
            if (ra != HRT_OK)
                continue;
            n++;
            ck_assert_double_eq(a.log_l_dex, b.log_l_dex);
            ck_assert_double_eq(a.log_teff_dex, b.log_teff_dex);
            ck_assert_double_eq(a.log_age_dex, b.log_age_dex);
            ck_assert_int_eq(a.n_tracks, b.n_tracks);
        }
        hrt_star_free(s);
    }
    ck_assert_uint_gt(n, 1000);
    hrt_grid_close(fresh);
    hrt_grid_close(g);
    unlink(path);
    free(path);
}
END_TEST

/* ---- the fit: the interpolation error added to the measurement errors ---- */
static void fit_one(const char *path, const hrt_fit_obs *o, hrt_fit_result *res)
{
    hrt_grid *g;
    hrt_fit_model *fm;
    hrt_error err;
    ck_assert_int_eq(hrt_grid_open(path, &g, &err), HRT_OK);
    ck_assert_msg(hrt_fit_model_new(g, NULL, &fm, &err) == HRT_OK, "%s", err.message);
    ck_assert_msg(hrt_fit_star(fm, o, 7, 0, NULL, res, &err) == HRT_OK, "%s", err.message);
    hrt_fit_model_free(fm);
    hrt_grid_close(g);
}

START_TEST(fit_adds_the_interpolation_error)
{
    /* a coarse exact grid (4 and 5 tracks a route): errors of a few 0.01 dex */
    synth_spec coarse = spec;
    coarse.n_low = 4, coarse.n_high = 5;
    char *plain = tmp_path("fit-plain"), *with = tmp_path("fit-with");
    hrt_error err;
    ck_assert_int_eq(synth_write(&coarse, plain, &err), 0);
    ck_assert_int_eq(synth_write(&coarse, with, &err), 0);
    hrt_grid *g = measure_and_store(with, 0, HRT_INTERP_STEFFEN, HRT_INTERP_STEFFEN);
    /* a star between tracks, observed with small errors */
    hrt_star *s;
    hrt_state st;
    hrt_interp_error ie;
    ck_assert_int_eq(hrt_star_new(g, 2.6, hrt_grid_z(g, 1), &s, &err), HRT_OK);
    ck_assert_int_eq(hrt_star_eep_state(s, 40, &st), HRT_OK);
    hrt_star_free(s);
    ck_assert_int_eq(hrt_state_interp_error(g, &st, &ie, &err), HRT_OK);
    hrt_grid_close(g);
    hrt_fit_obs o;
    hrt_fit_obs_init(&o);
    o.teff_k = pow(10, st.log_teff_k), o.teff_k_sigma = 20;
    o.log_l_lsun = st.log_l_lsun, o.log_l_lsun_sigma = 0.005;
    o.feh = synth_feh(st.z), o.feh_sigma = 0.05;
    hrt_fit_result a, b;
    fit_one(plain, &o, &a);
    fit_one(with, &o, &b);
    double wa = a.log_l_lsun.hi - a.log_l_lsun.lo, wb = b.log_l_lsun.hi - b.log_l_lsun.lo;
    double ma = a.initial_mass_msun.hi - a.initial_mass_msun.lo, mb = b.initial_mass_msun.hi - b.initial_mass_msun.lo;
    printf("fit on a coarse exact grid, star of %.3g Msun: estimate log L %.3g, log Teff %.3g dex (sigma 0.005, "
           "%.3g dex); 68%% interval of log L %.4f -> %.4f dex, of the initial mass %.4f -> %.4f Msun; chi2_min "
           "%.3g -> %.3g\n",
           st.initial_mass_msun, ie.log_l_dex, ie.log_teff_dex, 20 / (o.teff_k * log(10)), wa, wb, ma, mb,
           a.chi2_min, b.chi2_min);
    fflush(stdout);
    /* the interpolation error is larger than the measurement's: the intervals widen, the best chi^2 falls */
    ck_assert_double_gt(ie.log_l_dex, 0.005);
    ck_assert_double_gt(wb, 1.2 * wa);
    ck_assert_double_le(b.chi2_min, a.chi2_min);
    unlink(plain);
    unlink(with);
    free(plain);
    free(with);
}
END_TEST

START_TEST(codes_and_messages)
{
    char *path = tmp_path("codes");
    hrt_error err = {0};
    ck_assert_int_eq(synth_write(&spec, path, &err), 0);
    hrt_grid *g;
    ck_assert_int_eq(hrt_grid_open(path, &g, &err), HRT_OK);
    ck_assert(!hrt_grid_has_interp_error(g));
    ck_assert(!hrt_grid_has_interp_error(NULL));
    hrt_state st;
    hrt_interp_error e;
    double m = 2.0, z = hrt_grid_z(g, 0), age;
    hrt_star *star;
    ck_assert_int_eq(hrt_star_new(g, m, z, &star, &err), HRT_OK);
    ck_assert_int_eq(hrt_star_eep_state(star, 10, &st), HRT_OK);
    hrt_star_free(star);
    /* a grid without a field: a specific message, NaN */
    ck_assert_int_eq(hrt_state_interp_error(g, &st, &e, &err), HRT_E_INVALID);
    ck_assert_ptr_nonnull(strstr(err.message, "no error field"));
    ck_assert(isnan(e.log_l_dex) && isnan(e.log_teff_dex) && isnan(e.log_age_dex));
    ck_assert_int_eq(hrt_state_interp_error(NULL, &st, &e, &err), HRT_E_NULL);
    ck_assert_int_eq(hrt_state_interp_error(g, NULL, &e, &err), HRT_E_NULL);
    ck_assert_int_eq(hrt_state_interp_error(g, &st, NULL, &err), HRT_E_NULL);
    ck_assert_int_eq(hrt_accuracy_store(NULL, path, &err), HRT_E_NULL);
    hrt_accuracy *a;
    ck_assert_int_eq(hrt_accuracy_new(&a, &err), HRT_OK);
    ck_assert_int_eq(hrt_accuracy_store(a, path, &err), HRT_E_INVALID);
    ck_assert_ptr_nonnull(strstr(err.message, "hrt_accuracy_run"));
    /* a run of one type: the other types get no estimate */
    ck_assert_int_eq(hrt_accuracy_set_interp(a, HRT_INTERP_LINEAR, &err), HRT_OK);
    ck_assert_int_eq(hrt_accuracy_run(a, g, &err), HRT_OK);
    ck_assert_int_eq(hrt_accuracy_store(a, "/nonexistent-hrtrail-dir/x.h5", &err), HRT_E_IO);
    ck_assert_ptr_nonnull(strstr(err.message, "/nonexistent-hrtrail-dir/x.h5"));
    ck_assert_int_eq(hrt_accuracy_store(a, path, &err), HRT_OK);
    hrt_accuracy_free(a);
    hrt_grid_close(g);
    ck_assert_int_eq(hrt_grid_open(path, &g, &err), HRT_OK);
    ck_assert(!hrt_grid_has_interp_error(g));
    hrt_grid_close(g);
    ck_assert_int_eq(hrt_grid_open_with(path, HRT_INTERP_LINEAR, &g, &err), HRT_OK);
    ck_assert(hrt_grid_has_interp_error(g));
    age = st.age_yr;
    ck_assert_int_eq(hrt_eval(g, 1, &m, &z, 0, &age, &st, &err), HRT_OK);
    ck_assert_int_eq(hrt_state_interp_error(g, &st, &e, &err), HRT_OK);
    ck_assert(e.log_l_dex >= 0 && e.log_teff_dex >= 0 && e.log_age_dex >= 0);
    ck_assert_int_ge(e.n_tracks, 1);
    /* a remnant: no EEP, no estimate */
    age = 1e12;
    ck_assert_int_eq(hrt_eval(g, 1, &m, &z, 0, &age, &st, &err), HRT_OK);
    ck_assert_int_eq(hrt_state_interp_error(g, &st, &e, &err), HRT_E_DOMAIN);
    ck_assert_ptr_nonnull(strstr(err.message, "not on a track"));
    /* a failed state */
    st.status = HRT_E_MASS_RANGE;
    ck_assert_int_eq(hrt_state_interp_error(g, &st, &e, &err), HRT_E_DOMAIN);
    hrt_grid_close(g);
    unlink(path);
    free(path);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("interp_error");
    TCase *tc = tcase_create("stored_field");
    tcase_set_timeout(tc, 300);
    tcase_add_test(tc, codes_and_messages);
    tcase_add_test(tc, bounds_the_true_error_on_exact_grids);
    tcase_add_test(tc, out_of_sample_on_exact_grid);
    tcase_add_test(tc, default_grid_out_of_sample_and_stored_field);
    tcase_add_test(tc, default_grid_field_is_a_fresh_run);
    tcase_add_test(tc, fit_adds_the_interpolation_error);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int nf = srunner_ntests_failed(sr);
    srunner_free(sr);
    return nf ? EXIT_FAILURE : EXIT_SUCCESS;
}
