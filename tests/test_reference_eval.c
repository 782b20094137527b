/*
 * hrt_eval against an independent implementation of its documented method
 * (tests/bench/gsl_ref.c, the benchmark's same-run reference): GSL's
 * Steffen interpolant (gsl_interp_steffen, GSL 2.7) across log initial mass
 * at every EEP, log age blended towards linear per EEP between tracks where
 * a pair of consecutive EEPs would not rise by the documented floor
 * (include/hrtrail/core.h, hrt_grid_open_with, note 3; the reference finds
 * a pair's lambda by minimising a ratio with GSL's Brent minimiser, the
 * library by bisecting a test of its own), a bisection over the EEPs in log
 * age and linear blending between the two bracketing EEPs.
 *
 * At every metallicity group of the default grid, 20,000 random on-track
 * stars of the route with the most tracks (all phases the sample reaches)
 * must agree in log L, log Teff, log R, log g and in the current, helium
 * and CO core masses to the tolerance gsl_ref.h states and explains (5e-8
 * dex, 1e-9 of the initial mass; measured 1.2e-8 dex at most).  Before the
 * reference had the log-age blend, 11-40 % of the stars of each group
 * differed by more than 1e-6 dex in log L, by up to 0.2 dex: this test
 * catches either side drifting from the documented method.
 */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include "bench/gsl_ref.h"
#include "default_grid.h"
#include "hrtrail.h"

static double urand(unsigned long long *s)
{
    *s ^= *s << 13;
    *s ^= *s >> 7;
    *s ^= *s << 17;
    return (double)(*s >> 11) * (1.0 / 9007199254740992.0);
}

START_TEST(eval_matches_reference)
{
    hrt_grid *g = open_grid();
    ck_assert_int_eq(hrt_grid_interp(g), HRT_INTERP_STEFFEN); /* the reference's type */
    enum { N = 20000 };
    double *m = malloc(N * sizeof(double)), *age = malloc(N * sizeof(double)), *ro = malloc(7 * N * sizeof(double));
    hrt_state *s = malloc(N * sizeof *s);
    ck_assert(m && age && ro && s);
    size_t blended = 0;
    for (size_t iz = 0; iz < hrt_grid_n_z(g); iz++) {
        gsl_ref *r = gsl_ref_new(g, iz);
        ck_assert_msg(r != NULL, "group %zu: no route with 3 tracks", iz);
        double lo, hi, lam_min;
        gsl_ref_mass_range(r, &lo, &hi);
        blended += gsl_ref_n_blended(r, &lam_min);
        unsigned long long seed = 0x9E3779B97F4A7C15ull + iz;
        for (size_t i = 0; i < N; i++) {
            double lt0, lt1;
            m[i] = lo * pow(hi / lo, 0.005 + 0.99 * urand(&seed));
            gsl_ref_age_range(r, m[i], &lt0, &lt1);
            age[i] = pow(10.0, lt0 + (lt1 - lt0) * (0.005 + 0.99 * urand(&seed)));
        }
        hrt_error err;
        ck_assert_int_eq(hrt_eval(g, N, m, NULL, hrt_grid_z(g, iz), age, s, &err), HRT_OK);
        gsl_ref_eval(r, N, m, age, ro);
        double w[7];
        size_t both, bad = gsl_ref_compare(N, s, ro, w, &both);
        ck_assert_msg(both == N, "group %zu: only %zu of %d stars answered by both", iz, both, N);
        ck_assert_msg(bad == 0,
                      "group %zu (Z = %g): %zu of %d stars differ beyond %g dex / %g of M0; largest log L %.3g, "
                      "log Teff %.3g, log R %.3g, log g %.3g dex, masses %.3g %.3g %.3g",
                      iz, hrt_grid_z(g, iz), bad, N, GSL_REF_TOL_LOG, GSL_REF_TOL_MASS, w[0], w[1], w[2], w[3], w[4],
                      w[5], w[6]);
        printf("group %zu (Z = %g): largest difference log L %.3g, log Teff %.3g, log R %.3g, log g %.3g dex\n", iz,
               hrt_grid_z(g, iz), w[0], w[1], w[2], w[3]);
        gsl_ref_free(r);
    }
    /* the blend is exercised: the default grid has intervals that need it */
    ck_assert_uint_gt(blended, 0);
    free(m);
    free(age);
    free(ro);
    free(s);
    hrt_grid_close(g);
}
END_TEST

int main(void)
{
    Suite *su = suite_create("reference_eval");
    TCase *tc = tcase_create("default grid");
    tcase_set_timeout(tc, 300);
    tcase_add_test(tc, eval_matches_reference);
    suite_add_tcase(su, tc);
    SRunner *sr = srunner_create(su);
    srunner_run_all(sr, CK_NORMAL);
    int nf = srunner_ntests_failed(sr);
    srunner_free(sr);
    return nf ? EXIT_FAILURE : EXIT_SUCCESS;
}
