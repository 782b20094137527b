/* Magnitudes (hrt_bc_v, hrt_magnitudes): the Sun, published dwarf
 * sequences, the joins of the polynomial pieces, flags, distance and
 * extinction, and the argument checks.  No grid is needed: the states are
 * written by hand. */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "hrtrail.h"

static hrt_state star(double log_l, double teff_k)
{
    hrt_state s;
    memset(&s, 0, sizeof s);
    s.struct_size = sizeof s;
    s.status = HRT_OK;
    s.phase = HRT_PHASE_MS;
    s.log_l_lsun = log_l;
    s.log_teff_k = log10(teff_k);
    return s;
}

START_TEST(sun)
{
    hrt_state s = star(0.0, HRT_TEFF_SUN_K);
    double mb, bc, mvabs;
    int32_t fl;
    ck_assert_int_eq(hrt_magnitudes(1, &s, 10.0, 0.0, &mb, &bc, &mvabs, NULL, &fl, NULL), HRT_OK);
    /* IAU 2015 Resolution B2: M_bol,sun = 4.74 for the nominal Lsun (the
     * zero point 3.0128e28 W gives 4.73999...) */
    ck_assert_msg(fabs(mb - 4.74) < 1e-4, "M_bol,sun = %.5f", mb);
    /* Torres (2010, AJ 140, 1158), [read: abstract] V_sun = -26.76 +- 0.03: at
     * 1 au the distance modulus is 5 log10(1 au / 10 pc) = -31.572, so
     * M_V,sun = 4.81 +- 0.03; the tolerance is that error. */
    const double mv_sun = -26.76 - 5.0 * log10(HRT_AU_M / (10.0 * HRT_PC_M));
    printf("Sun: M_bol %.4f  BC_V %.4f  M_V %.4f  (from V_sun: %.3f +- 0.03)\n", mb, bc, mvabs, mv_sun);
    ck_assert_msg(fabs(mvabs - mv_sun) <= 0.03, "M_V,sun = %.4f, V_sun gives %.4f", mvabs, mv_sun);
    /* Willmer (2018, ApJS 236, 47) M_V,sun = 4.81 and BC_V,sun about -0.08 to
     * -0.09 in common use [from memory]: the window -0.09 .. -0.07 */
    ck_assert_msg(bc > -0.09 && bc < -0.07, "BC_V,sun = %.4f", bc);
    ck_assert_int_eq(fl, 0);
}
END_TEST

/* Pecaut & Mamajek (2013, ApJS 208, 9), Table 5 as extended by E. Mamajek,
 * "A Modern Mean Dwarf Stellar Color and Effective Temperature Sequence",
 * version 2019.3.22 [read]: Teff (K) and BCv (mag) of dwarfs. */
static const struct {
    const char *sptype;
    double teff_k, bcv, tol; /* tol: absolute, mag; the accuracy hrt_bc_v() states for that range */
} dwarfs_2019[] = {
    {"B0V", 31500, -3.02, 0.06}, {"B2V", 20600, -2.06, 0.12}, {"B5V", 15700, -1.35, 0.06},
    {"B9V", 10700, -0.42, 0.06}, {"A0V", 9700, -0.24, 0.06},  {"A5V", 8080, -0.03, 0.06},
    {"F0V", 7220, -0.01, 0.06},  {"F5V", 6510, -0.04, 0.06},  {"G0V", 5920, -0.09, 0.06},
    {"G2V", 5770, -0.11, 0.06},  {"K0V", 5280, -0.22, 0.06},  {"K3V", 4830, -0.41, 0.06},
    {"K5V", 4410, -0.68, 0.06},  {"K7V", 4070, -0.95, 0.10},  {"M0V", 3870, -1.16, 0.25},
};

/* The same sequence, version 2024.05.15 [from memory]: a few rows. */
static const struct {
    const char *sptype;
    double teff_k, bcv, tol;
} dwarfs_2024[] = {
    {"B5V", 15700, -1.34, 0.06}, {"A0V", 9700, -0.21, 0.06}, {"G2V", 5770, -0.085, 0.06},
    {"K5V", 4440, -0.63, 0.06},  {"M0V", 3850, -1.15, 0.25},
};

START_TEST(mean_dwarfs)
{
    double worst = 0.0;
    for (size_t i = 0; i < sizeof dwarfs_2019 / sizeof dwarfs_2019[0]; i++) {
        double bc = hrt_bc_v(log10(dwarfs_2019[i].teff_k)), d = bc - dwarfs_2019[i].bcv;
        printf("%-4s %6.0f K  BC_V %+.3f  table (2019.3.22) %+.3f  difference %+.3f\n", dwarfs_2019[i].sptype,
               dwarfs_2019[i].teff_k, bc, dwarfs_2019[i].bcv, d);
        ck_assert_msg(fabs(d) <= dwarfs_2019[i].tol, "%s: %.3f vs %.3f", dwarfs_2019[i].sptype, bc, dwarfs_2019[i].bcv);
        if (dwarfs_2019[i].tol <= 0.06 && fabs(d) > worst) worst = fabs(d);
    }
    printf("worst |difference| where 0.06 mag is stated: %.3f mag\n", worst);
    for (size_t i = 0; i < sizeof dwarfs_2024 / sizeof dwarfs_2024[0]; i++) {
        double bc = hrt_bc_v(log10(dwarfs_2024[i].teff_k)), d = bc - dwarfs_2024[i].bcv;
        printf("%-4s %6.0f K  BC_V %+.3f  table (2024.05.15) %+.3f  difference %+.3f\n", dwarfs_2024[i].sptype,
               dwarfs_2024[i].teff_k, bc, dwarfs_2024[i].bcv, d);
        ck_assert_msg(fabs(d) <= dwarfs_2024[i].tol, "%s: %.3f vs %.3f", dwarfs_2024[i].sptype, bc, dwarfs_2024[i].bcv);
    }
}
END_TEST

/* The three pieces meet at log Teff = 3.70 and 3.90 to the steps the header
 * states (0.022 and 0.003 mag): a wrong coefficient would open a gap of
 * tenths or more.  Between the joins, BC_V is smooth: no step of 0.001 dex
 * differs from the one before by more than 0.002 mag (a misread
 * coefficient shows as a kink or a jump). */
START_TEST(pieces_join)
{
    const double eps = 1e-9, h = 0.001;
    double j1 = hrt_bc_v(3.70) - hrt_bc_v(3.70 - eps), j2 = hrt_bc_v(3.90) - hrt_bc_v(3.90 - eps);
    printf("steps at the joins: %.4f mag (log Teff 3.70), %.4f mag (3.90)\n", j1, j2);
    ck_assert_msg(fabs(j1) < 0.025 && fabs(j2) < 0.005, "joins %.4f %.4f", j1, j2);
    double lo = log10(HRT_BC_V_TEFF_MIN_K), hi = log10(HRT_BC_V_TEFF_MAX_K), worst = 0.0;
    for (double lt = lo + 2 * h; lt <= hi; lt += h) {
        if ((lt - 2 * h < 3.70 && lt >= 3.70) || (lt - 2 * h < 3.90 && lt >= 3.90))
            continue; /* the steps that straddle a join */
        double d2 = hrt_bc_v(lt) - 2.0 * hrt_bc_v(lt - h) + hrt_bc_v(lt - 2 * h);
        ck_assert_msg(isfinite(d2) && fabs(d2) < 0.002, "log Teff %.3f: second difference %.5f", lt, d2);
        ck_assert_msg(hrt_bc_v(lt) < 0.1, "log Teff %.3f: BC_V %.4f above the relation's maximum", lt, hrt_bc_v(lt));
        if (fabs(d2) > worst) worst = fabs(d2);
    }
    printf("largest second difference per 0.001 dex between the joins: %.5f mag\n", worst);
    ck_assert(isnan(hrt_bc_v(NAN)) && isnan(hrt_bc_v(INFINITY)));
}
END_TEST

START_TEST(distance_and_extinction)
{
    hrt_state s[3] = {star(1.3, 7000.0), star(-1.0, 4000.0), star(4.0, 25000.0)};
    double mb[3], bc[3], ma[3], m10[3], m[3];
    ck_assert_int_eq(hrt_magnitudes(3, s, 10.0, 0.0, mb, bc, ma, m10, NULL, NULL), HRT_OK);
    ck_assert_int_eq(hrt_magnitudes(3, s, 250.0, 0.31, NULL, NULL, NULL, m, NULL, NULL), HRT_OK);
    for (int i = 0; i < 3; i++) {
        /* the definitions: M_V = M_bol - BC_V, m_V = M_V + 5 log10(d / 10 pc) + A_V */
        ck_assert_double_eq_tol(ma[i], mb[i] - bc[i], 1e-12);
        ck_assert_double_eq_tol(mb[i], 4.74 - 2.5 * s[i].log_l_lsun, 1e-4);
        ck_assert_double_eq_tol(m10[i], ma[i], 1e-12);
        ck_assert_double_eq_tol(m[i] - ma[i], 5.0 * log10(25.0) + 0.31, 1e-12);
    }
}
END_TEST

START_TEST(flags_and_nan)
{
    hrt_state s[6] = {star(0.0, 2800.0), star(6.0, 60000.0), star(-3.0, 20000.0), star(0.0, 5000.0),
                      star(0.0, 5000.0), star(0.0, 5000.0)};
    s[2].flags = HRT_FLAG_REMNANT; /* a white dwarf: not among Flower's stars */
    s[3].status = HRT_E_MASS_RANGE;
    s[3].flags = HRT_FLAG_EXTRAPOLATED;
    s[4].flags = HRT_FLAG_DARK | HRT_FLAG_REMNANT;
    s[4].log_l_lsun = NAN;
    s[4].log_teff_k = NAN;
    s[5].flags = HRT_FLAG_EXTRAPOLATED;
    double mb[6], ma[6], m[6];
    int32_t fl[6];
    ck_assert_int_eq(hrt_magnitudes(6, s, 1000.0, 1.0, mb, NULL, ma, m, fl, NULL), HRT_OK);
    ck_assert_int_eq(fl[0], HRT_FLAG_BEYOND_LAW);
    ck_assert_int_eq(fl[1], HRT_FLAG_BEYOND_LAW);
    ck_assert_int_eq(fl[2], HRT_FLAG_REMNANT | HRT_FLAG_BEYOND_LAW);
    ck_assert(isfinite(ma[0]) && isfinite(ma[1]) && isfinite(ma[2])); /* written, and flagged */
    ck_assert_int_eq(fl[3], 0);
    ck_assert(isnan(mb[3]) && isnan(ma[3]) && isnan(m[3]));
    ck_assert_int_eq(fl[4], HRT_FLAG_DARK | HRT_FLAG_REMNANT);
    ck_assert(isnan(mb[4]) && isnan(ma[4]) && isnan(m[4]));
    ck_assert_int_eq(fl[5], HRT_FLAG_EXTRAPOLATED);
    ck_assert(isfinite(m[5]));
}
END_TEST

START_TEST(arguments)
{
    hrt_state s = star(0.0, 5772.0);
    double m;
    hrt_error err;
    ck_assert_int_eq(hrt_magnitudes(1, NULL, 10.0, 0.0, &m, NULL, NULL, NULL, NULL, &err), HRT_E_NULL);
    ck_assert_int_eq(err.code, HRT_E_NULL);
    ck_assert_ptr_nonnull(strstr(err.message, "states"));
    const double bad_d[] = {0.0, -5.0, NAN, INFINITY};
    for (size_t i = 0; i < 4; i++) {
        ck_assert_int_eq(hrt_magnitudes(1, &s, bad_d[i], 0.0, NULL, NULL, NULL, &m, NULL, &err), HRT_E_DOMAIN);
        ck_assert_ptr_nonnull(strstr(err.message, "distance_pc"));
    }
    const double bad_av[] = {-0.1, NAN, INFINITY};
    for (size_t i = 0; i < 3; i++) {
        ck_assert_int_eq(hrt_magnitudes(1, &s, 10.0, bad_av[i], NULL, NULL, NULL, &m, NULL, &err), HRT_E_DOMAIN);
        ck_assert_ptr_nonnull(strstr(err.message, "a_v_mag"));
    }
    /* without mv, distance and extinction are not used */
    ck_assert_int_eq(hrt_magnitudes(1, &s, NAN, -1.0, &m, NULL, NULL, NULL, NULL, &err), HRT_OK);
    ck_assert_int_eq(err.code, HRT_OK);
    ck_assert_int_eq(hrt_magnitudes(0, NULL, 10.0, 0.0, NULL, NULL, NULL, NULL, NULL, NULL), HRT_OK);
}
END_TEST

int main(void)
{
    setvbuf(stdout, NULL, _IONBF, 0);
    Suite *su = suite_create("magnitude");
    TCase *tc = tcase_create("checks");
    tcase_add_test(tc, sun);
    tcase_add_test(tc, mean_dwarfs);
    tcase_add_test(tc, pieces_join);
    tcase_add_test(tc, distance_and_extinction);
    tcase_add_test(tc, flags_and_nan);
    tcase_add_test(tc, arguments);
    suite_add_tcase(su, tc);
    SRunner *sr = srunner_create(su);
    srunner_run_all(sr, CK_VERBOSE);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed == 0 ? EXIT_SUCCESS : EXIT_FAILURE;
}
