/* The default grid's structural quantities (tracks/MODEL.md, "Structural
 * quantities") against outside values at named masses: polytropes from the
 * Lane-Emden equation integrated here with GSL, the Sun, fully convective
 * dwarfs, and the envelope-structure parameter lambda of giants. */
#include <check.h>
#include <math.h>
#include <stdlib.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_odeiv2.h>

#include "hrtrail.h"

static hrt_grid *G;
static long K_ENV, K_CE, K_RB, K_K2, K_LOGE, K_LAMBDA;

static void open_grid(void)
{
    hrt_error e;
    ck_assert_msg(hrt_grid_open(NULL, &G, &e) == HRT_OK, "%s", e.message);
    K_ENV = hrt_grid_extra_index(G, "envelope_mass_msun");
    K_CE = hrt_grid_extra_index(G, "conv_envelope_mass_msun");
    K_RB = hrt_grid_extra_index(G, "conv_envelope_base_r_rsun");
    K_K2 = hrt_grid_extra_index(G, "gyration_k2");
    K_LOGE = hrt_grid_extra_index(G, "log_envelope_binding_erg");
    K_LAMBDA = hrt_grid_extra_index(G, "lambda_ce");
}

static void close_grid(void) { hrt_grid_close(G); }

/* One extra of the star (M, Z, age). */
static double extra_at(double m, double z, double age, long k, hrt_state *s)
{
    size_t idx = (size_t)k;
    double v;
    hrt_error e;
    ck_assert_msg(hrt_extra_at(G, m, z, age, 1, &idx, &v, s, &e) == HRT_OK, "%s", e.message);
    return v;
}

/* Lane-Emden: theta'' = -theta^n - 2 theta' / xi; I / (M R^2) of the
 * polytrope = (2/3) int rho r^4 dr / (M R^2) = (2/3) int theta^n xi^4 dxi /
 * (xi1^2 int theta^n xi^2 dxi). */
typedef struct le_par {
    double n;
} le_par;

static int le_rhs(double xi, const double y[], double f[], void *p)
{
    double n = ((le_par *)p)->n, th = y[0] > 0.0 ? pow(y[0], n) : 0.0;
    f[0] = y[1];
    f[1] = -th - 2.0 * y[1] / xi;
    f[2] = th * xi * xi;
    f[3] = th * xi * xi * xi * xi;
    return GSL_SUCCESS;
}

static double polytrope_k2(double n)
{
    le_par par = {n};
    gsl_odeiv2_system sys = {le_rhs, NULL, 4, &par};
    gsl_odeiv2_driver *d = gsl_odeiv2_driver_alloc_y_new(&sys, gsl_odeiv2_step_rk8pd, 1e-6, 1e-12, 0.0);
    double xi0 = 1e-6;
    double y[4] = {1.0 - xi0 * xi0 / 6.0, -xi0 / 3.0, 0.0, 0.0};
    double xi = xi0, h = 1e-3, prev[4], xprev = xi;
    while (y[0] > 0.0) {
        for (int c = 0; c < 4; c++)
            prev[c] = y[c];
        xprev = xi;
        ck_assert_int_eq(gsl_odeiv2_driver_apply(d, &xi, xi + h, y), GSL_SUCCESS);
    }
    /* the surface xi1 by linear interpolation of theta within the last step */
    double t = prev[0] / (prev[0] - y[0]);
    double xi1 = xprev + t * (xi - xprev);
    double im = prev[2] + t * (y[2] - prev[2]), ii = prev[3] + t * (y[3] - prev[3]);
    gsl_odeiv2_driver_free(d);
    return 2.0 / 3.0 * ii / (xi1 * xi1 * im);
}

/* A main-sequence star without convective envelope has the radiative
 * model's k^2: that of the n = 3 polytrope; a fully convective dwarf is
 * modelled with a rho ~ r^-2 envelope, within 12 % of the n = 1.5
 * polytrope (tracks/MODEL.md). */
START_TEST(test_polytropes)
{
    double k3 = polytrope_k2(3.0), k15 = polytrope_k2(1.5);
    /* the integration itself against the known values (0.0754 and 0.205,
     * from memory): a check of this test's integration */
    ck_assert_msg(fabs(k3 - 0.0754) < 0.0005, "n=3: %g", k3);
    ck_assert_msg(fabs(k15 - 0.205) < 0.001, "n=1.5: %g", k15);
    hrt_state s;
    double k2_5 = extra_at(5.0, 0.014, 3e7, K_K2, &s);
    ck_assert_int_eq(s.phase, HRT_PHASE_MS);
    ck_assert_msg(fabs(k2_5 / k3 - 1.0) < 0.002, "5 Msun main sequence k2 %g, n=3 polytrope %g", k2_5, k3);
    double k2_02 = extra_at(0.2, 0.014, 1e9, K_K2, &s);
    ck_assert_msg(fabs(k2_02 / k15 - 1.0) < 0.12, "0.2 Msun k2 %g, n=1.5 polytrope %g", k2_02, k15);
}
END_TEST

/* Stars below 0.35 Msun are fully convective on the main sequence
 * (Chabrier & Baraffe 1997, A&A 327, 1039, from memory); stars above about
 * 1.5 Msun have no significant convective envelope (common practice). */
START_TEST(test_convective_limits)
{
    hrt_state s;
    double ce = extra_at(0.25, 0.014, 1e9, K_CE, &s);
    ck_assert_msg(ce / s.mass_msun > 0.99, "0.25 Msun: convective envelope %g of %g", ce, s.mass_msun);
    /* the model's interpolation in Teff has soft corners: the base within 5 % of R from the centre */
    ck_assert_msg(extra_at(0.25, 0.014, 1e9, K_RB, &s) < 0.05 * pow(10.0, s.log_r_rsun), "base of a fully convective star");
    ce = extra_at(2.0, 0.014, 3e8, K_CE, &s);
    ck_assert_msg(ce / s.mass_msun < 1e-3, "2 Msun main sequence: convective envelope %g", ce);
}
END_TEST

/* The Sun at 4.57 Gyr (1 Msun, Z = 0.014):
 *  - moment of inertia 5.7e46 kg m^2 (Science & Engineering Encyclopedia,
 *    diracdelta.co.uk, "Sun"), k^2 = 0.059 with IAU 2015 B3 M and R;
 *    tolerance 25 % relative (the model gives 0.049: MODEL.md);
 *  - base of the convection zone at 0.713 R (helioseismology,
 *    Christensen-Dalsgaard, Gough & Thompson 1991, ApJ 378, 413, from
 *    memory); tolerance 0.03 R absolute;
 *  - convection-zone mass about 0.025 Msun (standard solar models, from
 *    memory); tolerance a factor 1.5. */
START_TEST(test_sun)
{
    hrt_state s;
    double age = 4.57e9;
    double k2 = extra_at(1.0, 0.014, age, K_K2, &s);
    double m_kg = HRT_GM_SUN / HRT_G_SI;
    double k2_sun = 5.7e46 / (m_kg * HRT_RSUN_M * HRT_RSUN_M);
    ck_assert_msg(fabs(k2 / k2_sun - 1.0) < 0.25, "k2 %g vs %g", k2, k2_sun);
    double rb = extra_at(1.0, 0.014, age, K_RB, &s) / pow(10.0, s.log_r_rsun);
    ck_assert_msg(fabs(rb - 0.713) < 0.03, "base of the convection zone at %g R", rb);
    double mce = extra_at(1.0, 0.014, age, K_CE, &s);
    ck_assert_msg(mce > 0.025 / 1.5 && mce < 0.025 * 1.5, "convection zone %g Msun", mce);
}
END_TEST

/* Giants of 3-10 Msun on the red giant branch and early AGB, while the
 * envelope still holds half the star: lambda "typically between 0.2 and
 * 0.8" (Dewi & Tauris 2000, A&A 360, 1043, abstract).  Their lambda
 * includes the envelope's internal energy, ours is gravitational only
 * (MODEL.md), so this is a check of the order of magnitude. */
START_TEST(test_lambda_giants)
{
    const double masses[] = {3.0, 5.0, 7.0, 10.0};
    for (size_t i = 0; i < sizeof masses / sizeof *masses; i++) {
        hrt_star *st;
        hrt_error e;
        ck_assert_int_eq(hrt_star_new(G, masses[i], 0.014, &st, &e), HRT_OK);
        int n_checked = 0;
        for (size_t j = 0; j < hrt_star_n_eep(st); j++) {
            hrt_state s;
            hrt_star_eep_state(st, j, &s);
            if (!(s.phase == HRT_PHASE_RGB || s.phase == HRT_PHASE_EAGB || s.phase == HRT_PHASE_RSG))
                continue;
            size_t idx[3] = {(size_t)K_LAMBDA, (size_t)K_ENV, (size_t)K_LOGE};
            double v[3];
            ck_assert_int_eq(hrt_state_extra(G, &s, 3, idx, v, &e), HRT_OK);
            if (v[1] < 0.5 * s.mass_msun || s.log_teff_k > 3.7)
                continue;
            n_checked++;
            ck_assert_msg(v[0] > 0.2 && v[0] < 0.8, "%g Msun EEP %zu (%s): lambda %g", masses[i], j,
                          hrt_phase_key(s.phase), v[0]);
            /* E_bind = G M M_env / (lambda R), to the float32 rounding of the file */
            double r_m = pow(10.0, s.log_r_rsun) * HRT_RSUN_M, m_kg = HRT_GM_SUN / HRT_G_SI;
            double e_erg = HRT_G_SI * s.mass_msun * m_kg * v[1] * m_kg / (v[0] * r_m) * 1e7;
            ck_assert_msg(fabs(log10(e_erg) - v[2]) < 0.01, "binding energy %g vs 10^%g", e_erg, v[2]);
        }
        ck_assert_msg(n_checked > 20, "%g Msun: only %d giant EEPs", masses[i], n_checked);
        hrt_star_free(st);
    }
}
END_TEST

/* The envelope mass is the star's mass above its helium core at every EEP
 * (to the single precision of the file, relative 1e-7, and the
 * interpolation between tracks). */
START_TEST(test_envelope_mass)
{
    hrt_star *st;
    hrt_error e;
    ck_assert_int_eq(hrt_star_new(G, 1.7, 0.006, &st, &e), HRT_OK);
    for (size_t j = 0; j < hrt_star_n_eep(st); j++) {
        hrt_state s;
        hrt_star_eep_state(st, j, &s);
        size_t idx = (size_t)K_ENV;
        double v;
        ck_assert_int_eq(hrt_state_extra(G, &s, 1, &idx, &v, &e), HRT_OK);
        double want = s.mass_msun - s.he_core_mass_msun;
        ck_assert_msg(fabs(v - want) < 1e-3 * s.mass_msun, "EEP %zu: %g vs %g", j, v, want);
    }
    hrt_star_free(st);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("structure");
    TCase *tc = tcase_create("structure");
    tcase_add_unchecked_fixture(tc, open_grid, close_grid);
    tcase_set_timeout(tc, 120);
    tcase_add_test(tc, test_polytropes);
    tcase_add_test(tc, test_convective_limits);
    tcase_add_test(tc, test_sun);
    tcase_add_test(tc, test_lambda_giants);
    tcase_add_test(tc, test_envelope_mass);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_set_fork_status(sr, CK_NOFORK);
    srunner_run_all(sr, CK_NORMAL);
    int nf = srunner_ntests_failed(sr);
    srunner_free(sr);
    return nf == 0 ? EXIT_SUCCESS : EXIT_FAILURE;
}
