/* hrt_accuracy_run (leave one track out) against an independent computation
 * on exact-answer grids (tests/synth.c): here every group is rebuilt whole
 * (every route, every other track) by the builder, the dropped track
 * predicted, and the quantiles taken with a sort of our own; the library's
 * figures must be the same.  Also its errors and codes. */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "hrtrail.h"
#include "synth.h"

/* absolute, dex: the same arithmetic on the same numbers, so only the order
 * of floating-point operations of two code paths may differ */
#define TOL_SAME 1e-12

static const synth_spec spec = {9, 11, 3, 1, 1, 0.3, 1.0, 10.0};

static char *tmp_path(const char *tag)
{
    static const char *fmt = "%s/hrtrail-acc-test-%s-%ld.h5";
    const char *t = getenv("TMPDIR");
    char *p = malloc(512);
    ck_assert_ptr_nonnull(p);
    snprintf(p, 512, fmt, t && *t ? t : "/tmp", tag, (long)getpid());
    return p;
}

static hrt_grid *synth_grid(const synth_spec *s, const char *tag)
{
    char *p = tmp_path(tag);
    hrt_error err;
    ck_assert_int_eq(synth_write(s, p, &err), 0);
    hrt_grid *g = NULL;
    ck_assert_msg(hrt_grid_open(p, &g, &err) == HRT_OK, "%s", err.message);
    unlink(p);
    free(p);
    return g;
}

/* ---- the independent computation ---------------------------------------- */
typedef struct ref_track {
    double m, rm;
    int route, rk;
    size_t n;
    double *c[6]; /* log age, log L, log Teff, mass, he, co */
    int *ph;
} ref_track;

static void ref_read(const hrt_grid *g, size_t iz, size_t im, ref_track *t)
{
    hrt_star *s;
    hrt_error err;
    t->m = hrt_grid_mass(g, iz, im);
    t->route = hrt_grid_track_route(g, iz, im);
    ck_assert_int_eq(hrt_star_new(g, t->m, hrt_grid_z(g, iz), &s, &err), HRT_OK);
    ck_assert_int_eq(hrt_star_remnant(s, &t->rk, &t->rm), HRT_OK);
    t->n = hrt_star_n_eep(s);
    for (int k = 0; k < 6; k++)
        ck_assert_ptr_nonnull(t->c[k] = malloc(t->n * sizeof(double)));
    ck_assert_ptr_nonnull(t->ph = malloc(t->n * sizeof(int)));
    for (size_t j = 0; j < t->n; j++) {
        hrt_state st;
        ck_assert_int_eq(hrt_star_eep_state(s, j, &st), HRT_OK);
        double v[6] = {log10(st.age_yr), st.log_l_lsun, st.log_teff_k, st.mass_msun, st.he_core_mass_msun,
                       st.co_core_mass_msun};
        for (int k = 0; k < 6; k++)
            t->c[k][j] = v[k];
        t->ph[j] = st.phase;
    }
    hrt_star_free(s);
}

typedef struct ref_list {
    double *v;
    size_t n;
} ref_list;

/* errors[interp][route][phase][quantity] */
#define NR 2
static ref_list errs[HRT_INTERP_COUNT][NR][HRT_PHASE_SLOTS][HRT_ACCURACY_NQ];

static void push(ref_list *l, double v)
{
    ck_assert_ptr_nonnull(l->v = realloc(l->v, (l->n + 1) * sizeof(double)));
    l->v[l->n++] = v;
}

static void ref_drop(const hrt_grid *g, size_t iz, ref_track *tr, size_t nm, size_t k, const char *path)
{
    size_t nr = hrt_grid_n_routes(g);
    hrt_builder *b;
    hrt_error err;
    double z = hrt_grid_z(g, iz), bnd[NR];
    ck_assert_msg(synth_builder_like(g, &b, &err) == HRT_OK, "%s", err.message);
    for (size_t im = 0; im < nm; im++) {
        if (im == k)
            continue;
        hrt_track_data d = {.initial_mass_msun = tr[im].m, .route = tr[im].route, .remnant = tr[im].rk,
                            .remnant_mass_msun = tr[im].rm, .n = tr[im].n, .log_age_yr = tr[im].c[0],
                            .log_l_lsun = tr[im].c[1], .log_teff_k = tr[im].c[2], .mass_msun = tr[im].c[3],
                            .he_core_mass_msun = tr[im].c[4], .co_core_mass_msun = tr[im].c[5], .phase = tr[im].ph};
        ck_assert_int_eq(hrt_builder_add_eep_track(b, z, &d, &err), HRT_OK);
    }
    for (size_t i = 0; i + 1 < nr; i++)
        bnd[i] = hrt_grid_route_boundary(g, iz, i);
    ck_assert_int_eq(hrt_builder_set_route_boundaries(b, z, bnd, &err), HRT_OK);
    ck_assert_msg(hrt_builder_write(b, path, &err) == HRT_OK, "%s", err.message);
    hrt_builder_free(b);
    for (int it = 0; it < HRT_INTERP_COUNT; it++) {
        hrt_grid *h;
        ck_assert_int_eq(hrt_grid_open_with(path, it, &h, &err), HRT_OK);
        hrt_star *s;
        ck_assert_int_eq(hrt_star_new(h, tr[k].m, z, &s, &err), HRT_OK);
        for (size_t j = 0; j < hrt_star_n_eep(s) && j < tr[k].n; j++) {
            hrt_state st;
            ck_assert_int_eq(hrt_star_eep_state(s, j, &st), HRT_OK);
            ref_list *l = errs[it][tr[k].route][tr[k].ph[j]];
            push(&l[HRT_ACCURACY_LOG_L], fabs(st.log_l_lsun - tr[k].c[1][j]));
            push(&l[HRT_ACCURACY_LOG_TEFF], fabs(st.log_teff_k - tr[k].c[2][j]));
            push(&l[HRT_ACCURACY_LOG_AGE], fabs(log10(st.age_yr) - tr[k].c[0][j]));
        }
        hrt_star_free(s);
        hrt_grid_close(h);
    }
}

static int cmp_d(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* nearest rank, as documented in include/hrtrail/build.h */
static double quantile(ref_list *l, double q)
{
    qsort(l->v, l->n, sizeof(double), cmp_d);
    return l->v[(size_t)floor(q * (double)(l->n - 1) + 0.5)];
}

static size_t reference(const hrt_grid *g)
{
    memset(errs, 0, sizeof errs);
    char *path = tmp_path("ref");
    size_t drops = 0;
    for (size_t iz = 0; iz < hrt_grid_n_z(g); iz++) {
        size_t nm = hrt_grid_n_masses(g, iz);
        ref_track *tr = calloc(nm, sizeof *tr);
        for (size_t im = 0; im < nm; im++)
            ref_read(g, iz, im, &tr[im]);
        for (size_t k = 1; k + 1 < nm; k++)
            if (tr[k - 1].route == tr[k].route && tr[k + 1].route == tr[k].route)
                ref_drop(g, iz, tr, nm, k, path), drops++;
        for (size_t im = 0; im < nm; im++) {
            for (int c = 0; c < 6; c++)
                free(tr[im].c[c]);
            free(tr[im].ph);
        }
        free(tr);
    }
    unlink(path);
    free(path);
    return drops;
}

/* ---- the checks -------------------------------------------------------- */
static size_t n_progress, last_done, last_total;
static void count_progress(void *user, size_t done, size_t total)
{
    ck_assert_ptr_eq(user, &n_progress);
    n_progress++;
    last_done = done, last_total = total;
}

START_TEST(equals_independent_computation)
{
    hrt_grid *g = synth_grid(&spec, "synth");
    size_t drops = reference(g);
    ck_assert_uint_eq(drops, (size_t)spec.n_z * (size_t)(spec.n_low - 2 + spec.n_high - 2));
    hrt_accuracy *a;
    hrt_error err;
    ck_assert_int_eq(hrt_accuracy_new(&a, &err), HRT_OK);
    ck_assert_int_eq(hrt_accuracy_set_threads(a, 2, &err), HRT_OK);
    ck_assert_int_eq(hrt_accuracy_set_progress(a, count_progress, &n_progress), HRT_OK);
    ck_assert_msg(hrt_accuracy_run(a, g, &err) == HRT_OK, "%s", err.message);
    ck_assert_uint_eq(n_progress, drops);
    ck_assert_uint_eq(last_done, drops);
    ck_assert_uint_eq(last_total, drops);
    size_t n_cells = 0, nrow = hrt_accuracy_n_rows(a);
    for (int it = 0; it < HRT_INTERP_COUNT; it++)
        for (int r = 0; r < NR; r++)
            for (int p = 1; p < HRT_PHASE_SLOTS; p++)
                n_cells += errs[it][r][p][0].n > 0;
    ck_assert_uint_eq(nrow, n_cells);
    double largest = 0;
    for (size_t i = 0; i < nrow; i++) {
        hrt_accuracy_row w;
        ck_assert_int_eq(hrt_accuracy_row_at(a, i, &w), HRT_OK);
        ref_list *l = errs[w.interp][w.route][w.phase];
        ck_assert_uint_eq(w.n_points, l[0].n);
        for (int q = 0; q < HRT_ACCURACY_NQ; q++) {
            ck_assert_double_eq_tol(w.median[q], quantile(&l[q], 0.5), TOL_SAME);
            ck_assert_double_eq_tol(w.p95[q], quantile(&l[q], 0.95), TOL_SAME);
            ck_assert_double_eq_tol(w.max[q], quantile(&l[q], 1.0), TOL_SAME);
            ck_assert(w.median[q] <= w.p95[q] && w.p95[q] <= w.max[q]);
            ck_assert_double_gt(w.worst_mass_msun[q], 0);
            largest = fmax(largest, w.max[q]);
        }
    }
    /* the synthetic functions are not linear in mass: interpolation has real errors to report */
    ck_assert_double_gt(largest, 1e-6);
    ck_assert_int_eq(hrt_accuracy_row_at(a, nrow, &(hrt_accuracy_row){0}), HRT_E_INVALID);
    /* one type, one thread: the same figures for that type */
    ck_assert_int_eq(hrt_accuracy_set_interp(a, HRT_INTERP_AKIMA, &err), HRT_OK);
    ck_assert_int_eq(hrt_accuracy_set_threads(a, 1, &err), HRT_OK);
    ck_assert_int_eq(hrt_accuracy_run(a, g, &err), HRT_OK);
    ck_assert_uint_gt(hrt_accuracy_n_rows(a), 0);
    for (size_t i = 0; i < hrt_accuracy_n_rows(a); i++) {
        hrt_accuracy_row w;
        ck_assert_int_eq(hrt_accuracy_row_at(a, i, &w), HRT_OK);
        ck_assert_int_eq(w.interp, HRT_INTERP_AKIMA);
        ck_assert_double_eq_tol(w.max[0], quantile(&errs[w.interp][w.route][w.phase][0], 1.0), TOL_SAME);
    }
    hrt_accuracy_free(a);
    for (int it = 0; it < HRT_INTERP_COUNT; it++)
        for (int r = 0; r < NR; r++)
            for (int p = 0; p < HRT_PHASE_SLOTS; p++)
                for (int q = 0; q < HRT_ACCURACY_NQ; q++)
                    free(errs[it][r][p][q].v);
    hrt_grid_close(g);
}
END_TEST

START_TEST(errors_have_codes_and_messages)
{
    hrt_accuracy *a;
    hrt_error err = {0};
    ck_assert_int_eq(hrt_accuracy_new(NULL, &err), HRT_E_NULL);
    ck_assert_int_eq(hrt_accuracy_new(&a, &err), HRT_OK);
    ck_assert_int_eq(hrt_accuracy_set_interp(a, HRT_INTERP_COUNT, &err), HRT_E_INVALID);
    ck_assert_ptr_nonnull(strstr(err.message, "interpolation type"));
    ck_assert_int_eq(hrt_accuracy_set_interp(a, -2, &err), HRT_E_INVALID);
    ck_assert_int_eq(hrt_accuracy_set_threads(a, -1, &err), HRT_E_INVALID);
    ck_assert_int_eq(hrt_accuracy_set_progress(NULL, NULL, NULL), HRT_E_NULL);
    ck_assert_int_eq(hrt_accuracy_run(a, NULL, &err), HRT_E_NULL);
    ck_assert_ptr_nonnull(strstr(err.message, "grid is NULL"));
    ck_assert_uint_eq(hrt_accuracy_n_rows(a), 0);
    ck_assert_uint_eq(hrt_accuracy_n_rows(NULL), 0);
    ck_assert_int_eq(hrt_accuracy_row_at(a, 0, &(hrt_accuracy_row){0}), HRT_E_INVALID);
    ck_assert_int_eq(hrt_accuracy_set_z(a, -1.0, &err), HRT_E_DOMAIN);
    ck_assert_int_eq(hrt_accuracy_set_z(a, INFINITY, &err), HRT_E_DOMAIN);
    ck_assert_int_eq(hrt_accuracy_set_z(NULL, NAN, &err), HRT_E_NULL);
    /* two tracks per route: none is interior */
    synth_spec thin = spec;
    thin.n_low = thin.n_high = 2;
    thin.n_z = 1;
    hrt_grid *g = synth_grid(&thin, "thin");
    ck_assert_int_eq(hrt_accuracy_run(a, g, &err), HRT_E_INVALID);
    ck_assert_int_eq(err.code, HRT_E_INVALID);
    ck_assert_ptr_nonnull(strstr(err.message, "three tracks"));
    hrt_grid_close(g);
    /* a metallicity the grid does not hold */
    g = synth_grid(&spec, "noz");
    ck_assert_int_eq(hrt_accuracy_set_z(a, 0.5, &err), HRT_OK);
    ck_assert_int_eq(hrt_accuracy_run(a, g, &err), HRT_E_Z_RANGE);
    ck_assert_ptr_nonnull(strstr(err.message, "no metallicity group"));
    /* one that it does: every worst track is of that Z */
    double z1 = hrt_grid_z(g, 1);
    ck_assert_int_eq(hrt_accuracy_set_z(a, z1, &err), HRT_OK);
    ck_assert_int_eq(hrt_accuracy_set_interp(a, HRT_INTERP_LINEAR, &err), HRT_OK);
    ck_assert_int_eq(hrt_accuracy_run(a, g, &err), HRT_OK);
    ck_assert_uint_gt(hrt_accuracy_n_rows(a), 0);
    for (size_t i = 0; i < hrt_accuracy_n_rows(a); i++) {
        hrt_accuracy_row w;
        ck_assert_int_eq(hrt_accuracy_row_at(a, i, &w), HRT_OK);
        for (int q = 0; q < HRT_ACCURACY_NQ; q++)
            ck_assert_double_eq(w.worst_z[q], z1);
    }
    ck_assert_int_eq(hrt_accuracy_set_z(a, NAN, &err), HRT_OK);
    hrt_grid_close(g);
    /* a temporary directory that cannot be written */
    g = synth_grid(&spec, "tmpdir");
    const char *old = getenv("TMPDIR");
    char *keep = old ? strdup(old) : NULL;
    setenv("TMPDIR", "/nonexistent-hrtrail-dir", 1);
    ck_assert_int_eq(hrt_accuracy_run(a, g, &err), HRT_E_IO);
    ck_assert_ptr_nonnull(strstr(err.message, "/nonexistent-hrtrail-dir"));
    if (keep)
        setenv("TMPDIR", keep, 1);
    else
        unsetenv("TMPDIR");
    free(keep);
    hrt_grid_close(g);
    hrt_accuracy_free(a);
    hrt_accuracy_free(NULL);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("accuracy");
    TCase *tc = tcase_create("leave_one_out");
    tcase_set_timeout(tc, 300);
    tcase_add_test(tc, equals_independent_computation);
    tcase_add_test(tc, errors_have_codes_and_messages);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int nf = srunner_ntests_failed(sr);
    srunner_free(sr);
    return nf ? EXIT_FAILURE : EXIT_SUCCESS;
}
