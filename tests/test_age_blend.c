/*
 * Log age across mass (include/hrtrail/core.h, hrt_grid_open_with, note 3):
 * a blend towards linear per EEP, only where a pair of consecutive EEPs
 * would otherwise not increase (lib/core/grid_prep.c, age_blend).
 *
 * - Main sequence: at every EEP where a track is on the main sequence, in
 *   every interval between two tracks of one route, log age at masses inside
 *   the interval equals GSL's Steffen interpolant (gsl_interp_steffen, GSL
 *   2.7) across log initial mass to 1e-10 dex (the library evaluates the
 *   same cubic in Hermite form: 1e-13 apart).  One blend per interval, the
 *   rule before, moved these ages wherever a thermally pulsing AGB pair
 *   lowered the interval's lambda: this check failed with it (3.7e-5 dex at
 *   the first EEP it met, group 0, 0.54 Msun); the test also asserts that
 *   such intervals exist (some EEP of the interval differs from Steffen).
 * - The dense sweep (tests/age_sweep.c): every interval of every group of
 *   the default grid and of three synthetic grids (tests/synth.c: the core
 *   tests' grid evenly spaced, a jittered one, and 50 masses of 501/601 EEPs), all four
 *   types; SWEEP_N masses per interval plus the knots, masses within 1e-15
 *   to 1e-12 relative of them and their neighbouring doubles: log age
 *   increases strictly along the EEPs at every one, and at a track's own
 *   mass equals the track's own, bit for bit.  The same sweep on the type's
 *   unblended slopes finds ages that do not increase (so the check can
 *   fail).  hrt_star's ages are the sweep's (the sweep evaluates the
 *   library's private sum; the star path must be the same numbers).
 *   tests/bench/bench_age_sweep.c runs the sweep with thousands of masses per
 *   interval (DEVELOPERS.md gives its figures).
 */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <unistd.h>

#include <gsl/gsl_interp.h>

#include "age_sweep.h"
#include "core/core.h"
#include "default_grid.h"
#include "hrtrail.h"
#include "synth.h"

/* masses per interval of the sweep here (tests/bench/bench_age_sweep.c: more) */
#define SWEEP_N 48

static double urand(unsigned long long *s)
{
    *s ^= *s << 13;
    *s ^= *s >> 7;
    *s ^= *s << 17;
    return (double)(*s >> 11) * (1.0 / 9007199254740992.0);
}

/* Tracks of route r in group iz (indices into the group), in mass order. */
static size_t route_tracks(const hrt_grid *g, size_t iz, int r, size_t *idx)
{
    size_t n = 0;
    for (size_t i = 0; i < hrt_grid_n_masses(g, iz); i++)
        if (hrt_grid_track_route(g, iz, i) == r)
            idx[n++] = i;
    return n;
}

static double log_age_at(const hrt_star *s, size_t j)
{
    hrt_state st;
    ck_assert_int_eq(hrt_star_eep_state(s, j, &st), HRT_OK);
    return log10(st.age_yr);
}

/* One route of one group: the main-sequence check; *blended counts the
 * intervals with an EEP away from Steffen, *n_ms the EEPs compared. */
static void route_ms(const hrt_grid *g, size_t iz, const size_t *idx, size_t n, size_t *blended, size_t *n_ms)
{
    double z = hrt_grid_z(g, iz), *x = malloc(n * sizeof(double));
    hrt_star **tr = malloc(n * sizeof *tr);
    ck_assert(x && tr);
    size_t J = 0;
    for (size_t k = 0; k < n; k++) {
        tr[k] = new_star(g, hrt_grid_mass(g, iz, idx[k]), z);
        x[k] = log10(hrt_grid_mass(g, iz, idx[k]));
        J = k == 0 || hrt_star_n_eep(tr[k]) < J ? hrt_star_n_eep(tr[k]) : J;
    }
    ck_assert(J > 0 && J < 100000);
    double *y = malloc(J * n * sizeof(double));
    gsl_interp **it = malloc(J * sizeof *it);
    ck_assert(y && it);
    for (size_t j = 0; j < J; j++) {
        for (size_t k = 0; k < n; k++)
            y[j * n + k] = log_age_at(tr[k], j);
        it[j] = gsl_interp_alloc(gsl_interp_steffen, n);
        gsl_interp_init(it[j], x, y + j * n, n);
    }
    for (size_t k = 0; k + 1 < n; k++) {
        int away = 0;
        for (int f = 1; f <= 3; f++) {
            double xm = x[k] + 0.25 * f * (x[k + 1] - x[k]);
            hrt_star *s = new_star(g, pow(10.0, xm), z);
            for (size_t j = 0; j < J && j < hrt_star_n_eep(s); j++) {
                double a = log_age_at(s, j), ref = gsl_interp_eval(it[j], x, y + j * n, xm, NULL);
                away |= fabs(a - ref) > 1e-9;
                hrt_state st;
                ck_assert_int_eq(hrt_star_eep_state(tr[k], j, &st), HRT_OK);
                if (st.phase != HRT_PHASE_MS)
                    continue;
                (*n_ms)++;
                ck_assert_msg(fabs(a - ref) < 1e-10,
                              "group %zu, %g Msun, main-sequence EEP %zu: log age %.12f, Steffen %.12f (%.3g dex)", iz,
                              pow(10.0, xm), j, a, ref, a - ref);
            }
            hrt_star_free(s);
        }
        *blended += (size_t)away;
    }
    for (size_t j = 0; j < J; j++)
        gsl_interp_free(it[j]);
    for (size_t k = 0; k < n; k++)
        hrt_star_free(tr[k]);
    free(it);
    free(y);
    free(tr);
    free(x);
}

START_TEST(main_sequence_keeps_steffen)
{
    hrt_grid *g = open_grid();
    ck_assert_int_eq(hrt_grid_interp(g), HRT_INTERP_STEFFEN);
    size_t blended = 0, n_ms = 0;
    for (size_t iz = 0; iz < hrt_grid_n_z(g); iz++) {
        size_t *idx = malloc(hrt_grid_n_masses(g, iz) * sizeof(size_t));
        ck_assert(idx != NULL);
        for (int r = 0; r < (int)hrt_grid_n_routes(g); r++) {
            size_t n = route_tracks(g, iz, r, idx);
            if (n >= 3) /* Steffen needs 3 knots; with 2 the library is linear */
                route_ms(g, iz, idx, n, &blended, &n_ms);
        }
        free(idx);
    }
    ck_assert_uint_gt(blended, 0); /* intervals with a blend exist... */
    ck_assert_uint_gt(n_ms, 1000); /* ...and main-sequence EEPs were compared */
    hrt_grid_close(g);
}
END_TEST

static void sweep_check(const hrt_grid *g, const char *what, size_t n, unsigned long long *seed, age_sweep *r)
{
    age_sweep_init(r);
    age_sweep_grid(g, n, 0, seed, r);
    printf("%s, %s: %zu intervals, %zu masses, %zu EEP pairs, %zu knot EEPs; smallest log-age step %.3g dex, "
           "%.3g of the tracks' smaller step\n",
           what, hrt_interp_name(hrt_grid_interp(g)), r->intervals, r->stars, r->pairs, r->knot_eeps, r->min_gap,
           r->min_rel_gap);
    fflush(stdout);
    ck_assert_msg(r->bad_order == 0 && r->bad_knot == 0 && r->bad_place == 0,
                  "%s, %s: %zu pairs not increasing, %zu knot EEPs off, %zu masses misplaced; first: %s", what,
                  hrt_interp_name(hrt_grid_interp(g)), r->bad_order, r->bad_knot, r->bad_place, r->first);
    ck_assert_uint_gt(r->intervals, 0);
    ck_assert_uint_ge(r->stars, r->intervals * (n + 10));
    ck_assert_uint_gt(r->knot_eeps, 0);
}

/* The default grid, every type: ages increase at every mass swept, knots
 * exact; without the blend (the type's own slopes) they would not. */
START_TEST(sweep_default_grid)
{
    int it = _i;
    hrt_grid *g = NULL;
    hrt_error err;
    ck_assert_msg(hrt_grid_open_with(hrt_default_grid_path(), it, &g, &err) == HRT_OK, "%s", err.message);
    unsigned long long seed = 0xD1B54A32D192ED03ull + (unsigned long long)it;
    age_sweep r, raw;
    sweep_check(g, "default grid", SWEEP_N, &seed, &r);
    ck_assert_uint_gt(r.intervals, 300);
    age_sweep_init(&raw);
    age_sweep_grid(g, SWEEP_N / 4, 1, &seed, &raw);
    printf("default grid, %s, unblended slopes: %zu of %zu EEP pairs not increasing\n", hrt_interp_name(it),
           raw.bad_order, raw.pairs);
    if (it == HRT_INTERP_LINEAR)
        ck_assert_uint_eq(raw.bad_order, 0); /* nothing is blended: the same ages */
    else
        ck_assert_uint_gt(raw.bad_order, 0); /* the blend is needed and the check sees it */
    hrt_grid_close(g);
}
END_TEST

/* The synthetic grids of the other tests, every type. */
START_TEST(sweep_synthetic_grids)
{
    static const synth_spec specs[] = {
        {9, 11, 4, 1, 1, 0.3, 1.0, 10.0},    /* test_core's grid (evenly spaced below) */
        {9, 11, 3, 1, 1, 0.3, 1.0, 10.0},    /* test_accuracy's (jittered masses) */
        {20, 30, 6, 10, 1, 0.3, 1.0, 100.0}, /* the benchmark's: 50 masses, 501 and 601 EEPs */
    };
    const char *t = getenv("TMPDIR");
    char path[512];
    snprintf(path, sizeof path, "%s/hrtrail-age-blend-%ld.h5", t && *t ? t : "/tmp", (long)getpid());
    unsigned long long seed = 0x9E3779B97F4A7C15ull;
    for (size_t k = 0; k < sizeof specs / sizeof specs[0]; k++) {
        synth_spec sp = specs[k];
        sp.jitter = k == 1;
        hrt_error err;
        ck_assert_msg(synth_write(&sp, path, &err) == HRT_OK, "%s", err.message);
        for (int it = 0; it < HRT_INTERP_COUNT; it++) {
            hrt_grid *g = NULL;
            ck_assert_msg(hrt_grid_open_with(path, it, &g, &err) == HRT_OK, "%s", err.message);
            char what[64];
            snprintf(what, sizeof what, "synthetic grid %zu", k);
            age_sweep r;
            sweep_check(g, what, SWEEP_N / 4, &seed, &r);
            hrt_grid_close(g);
        }
    }
    unlink(path);
}
END_TEST

/* The sweep evaluates the library's private sum; the public star path must
 * give the same log ages (to the rounding of 10^x and back). */
START_TEST(star_path_is_the_sweeps)
{
    hrt_grid *g = open_grid();
    unsigned long long seed = 0x243F6A8885A308D3ull;
    size_t n = 0;
    for (size_t iz = 0; iz < hrt_grid_n_z(g); iz += 3) {
        double z = hrt_grid_z(g, iz);
        for (size_t i = 0; i + 1 < hrt_grid_n_masses(g, iz); i += 7) {
            if (hrt_grid_track_route(g, iz, i) != hrt_grid_track_route(g, iz, i + 1))
                continue;
            double x0 = log10(hrt_grid_mass(g, iz, i)), x1 = log10(hrt_grid_mass(g, iz, i + 1));
            double m = pow(10.0, x0 + (x1 - x0) * urand(&seed));
            hrt_star *s = new_star(g, m, z);
            qctx q;
            hrt_error err;
            ck_assert_int_eq(trail_qctx_init(g, m, z, &q, &err), HRT_OK);
            ck_assert_uint_eq(hrt_star_n_eep(s), (size_t)q.n_eep);
            for (size_t j = 0; j < hrt_star_n_eep(s); j++) {
                double a = log_age_at(s, j), b = trail_q_value(&q, Q_AGE, (int)j);
                ck_assert_msg(fabs(a - b) < 1e-12, "group %zu, %.15g Msun, EEP %zu: hrt_star %.15f, sweep %.15f", iz,
                              m, j, a, b);
            }
            hrt_star_free(s);
            n++;
        }
    }
    ck_assert_uint_gt(n, 20);
    hrt_grid_close(g);
}
END_TEST

int main(void)
{
    Suite *su = suite_create("age_blend");
    TCase *tc = tcase_create("default grid");
    tcase_set_timeout(tc, 300);
    tcase_add_test(tc, main_sequence_keeps_steffen);
    tcase_add_loop_test(tc, sweep_default_grid, 0, HRT_INTERP_COUNT);
    tcase_add_test(tc, sweep_synthetic_grids);
    tcase_add_test(tc, star_path_is_the_sweeps);
    suite_add_tcase(su, tc);
    SRunner *sr = srunner_create(su);
    srunner_run_all(sr, CK_NORMAL);
    int nf = srunner_ntests_failed(sr);
    srunner_free(sr);
    return nf ? EXIT_FAILURE : EXIT_SUCCESS;
}
