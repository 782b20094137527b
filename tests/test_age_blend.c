/*
 * Log age across mass on the default grid (include/hrtrail/core.h,
 * hrt_grid_open_with, note 3): a blend towards linear per EEP, only where a
 * pair of consecutive EEPs would otherwise not increase.
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
 * - Every star: log age strictly increases from EEP to EEP at 20 random
 *   masses in every interval of every route and group (about 6,600 stars;
 *   the property the blend exists for; hrt_star_new evaluates every EEP,
 *   which makes more stars too slow for a unit test: 1.5 min under load).
 */
#include <check.h>
#include <math.h>
#include <stdlib.h>

#include <gsl/gsl_interp.h>

#include "default_grid.h"
#include "hrtrail.h"

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

START_TEST(ages_increase_at_random_masses)
{
    hrt_grid *g = open_grid();
    unsigned long long seed = 0xD1B54A32D192ED03ull;
    size_t n_stars = 0;
    for (size_t iz = 0; iz < hrt_grid_n_z(g); iz++) {
        double z = hrt_grid_z(g, iz);
        for (size_t i = 0; i + 1 < hrt_grid_n_masses(g, iz); i++) {
            if (hrt_grid_track_route(g, iz, i) != hrt_grid_track_route(g, iz, i + 1))
                continue;
            double x0 = log10(hrt_grid_mass(g, iz, i)), x1 = log10(hrt_grid_mass(g, iz, i + 1));
            for (int k = 0; k < 20; k++) {
                double m = pow(10.0, x0 + (x1 - x0) * urand(&seed));
                hrt_star *s = new_star(g, m, z);
                double prev = log_age_at(s, 0);
                for (size_t j = 1; j < hrt_star_n_eep(s); j++) {
                    double a = log_age_at(s, j);
                    ck_assert_msg(a > prev, "group %zu, %.15g Msun: log age %.15f at EEP %zu after %.15f", iz, m, a, j,
                                  prev);
                    prev = a;
                }
                hrt_star_free(s);
                n_stars++;
            }
        }
    }
    ck_assert_uint_gt(n_stars, 0);
    hrt_grid_close(g);
}
END_TEST

int main(void)
{
    Suite *su = suite_create("age_blend");
    TCase *tc = tcase_create("default grid");
    tcase_set_timeout(tc, 300);
    tcase_add_test(tc, main_sequence_keeps_steffen);
    tcase_add_test(tc, ages_increase_at_random_masses);
    suite_add_tcase(su, tc);
    SRunner *sr = srunner_create(su);
    srunner_run_all(sr, CK_NORMAL);
    int nf = srunner_ntests_failed(sr);
    srunner_free(sr);
    return nf ? EXIT_FAILURE : EXIT_SUCCESS;
}
