/*
 * Checks of the main sequence as a calibration curve (hrt_ms_*) on the
 * default grid (HRTRAIL_GRID).
 *
 * Outside values name their source beside them.  The path-agreement and
 * distance tests draw stars with hrt_eval (the library's own path), so
 * they check that the sampled band and its quantiles are faithful to the
 * grid, not that the grid is faithful to real stars; the mean-dwarf table
 * checks the latter.
 */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>

#include "hrtrail.h"

#define Z_SUN 0.014       /* Asplund et al. (2009, ARA&A 47, 481), from memory; the grid's Z_ref */
#define AGE_MAX_YR 13.8e9 /* age of the Universe, Planck 2018 (A&A 641, A6): 13.8 Gyr, from memory */
#define PI 3.14159265358979323846
#define LN10 2.30258509299404568402
#define N_PATH 3000       /* random main-sequence stars of the path-agreement test */
#define PATH_TOL_DEX 0.003 /* absolute, log L: sampling tolerance of the band's edges (measured worst 0.0006) */
#define PATH_TOL_TEFF_DEX 0.001 /* absolute, log Teff (measured worst 0.0001) */
#define N_DIST 300        /* injected stars of the distance test */
#define COVER_LO 0.60     /* accepted coverage of a 68.27 % interval (binomial about +-3 sigma for 300) */
#define COVER_HI 0.84

static int gsl_calls; /* GSL's handler must never be reached */
static void counting_handler(const char *reason, const char *file, int line, int gsl_errno)
{
    (void)reason, (void)file, (void)line, (void)gsl_errno;
    gsl_calls++;
}

static hrt_grid *G;
static hrt_ms *MS;     /* Z_SUN, every main-sequence age */
static hrt_ms *MS_AGE; /* Z_SUN, ages up to AGE_MAX_YR */

static void setup(void)
{
    hrt_error err = {0, ""};
    gsl_set_error_handler(counting_handler);
    if (!G)
        ck_assert_msg(hrt_grid_open(NULL, &G, &err) == HRT_OK, "grid: %s", err.message);
    if (!MS) { /* every main-sequence age (the default stops at 13.8 Gyr) */
        hrt_ms_options o;
        hrt_ms_options_default(&o);
        ck_assert(o.age_max_yr == HRT_MS_AGE_MAX_DEFAULT_YR);
        o.age_max_yr = INFINITY;
        ck_assert_msg(hrt_ms_new(G, Z_SUN, &o, &MS, &err) == HRT_OK, "ms: %s", err.message);
    }
    if (!MS_AGE) {
        hrt_ms_options o;
        hrt_ms_options_default(&o);
        o.age_max_yr = AGE_MAX_YR;
        ck_assert_msg(hrt_ms_new(G, Z_SUN, &o, &MS_AGE, &err) == HRT_OK, "ms: %s", err.message);
    }
}

static void teardown(void) { ck_assert_int_eq(gsl_calls, 0); }

/* Mean dwarfs: Pecaut & Mamajek (2013, ApJS 208, 9), in E. Mamajek's table
 * "A Modern Mean Dwarf Stellar Color and Effective Temperature Sequence",
 * version 2024.05.15: spectral type, Teff (K), log L/Lsun. */
static const struct { const char *type; double teff_k, log_l; } DWARFS[] = {
    {"B5V", 15700, 2.772}, {"A0V", 9700, 1.584}, {"F5V", 6550, 0.556},
    {"G2V", 5770, 0.010},  {"K5V", 4440, -0.780}, {"M0V", 3850, -1.164},
};
#define N_DWARFS (sizeof DWARFS / sizeof DWARFS[0])
/* Teff error given to each type: 1 % (a typical spectroscopic Teff, common practice). */
#define DWARF_TEFF_REL_SIGMA 0.01
#define DWARF_MIN_INSIDE 4 /* of 6: types whose table log L must lie in the 68.27 % interval */

START_TEST(test_mean_dwarfs)
{
    hrt_error err;
    int inside = 0, in_band = 0;
    for (size_t i = 0; i < N_DWARFS; i++) {
        hrt_ms_estimate e;
        int rc = hrt_ms_from_teff(MS_AGE, DWARFS[i].teff_k, DWARF_TEFF_REL_SIGMA * DWARFS[i].teff_k, &e, &err);
        ck_assert_msg(rc == HRT_OK, "%s: %s", DWARFS[i].type, err.message);
        int ok = DWARFS[i].log_l >= e.log_l_lsun.lo && DWARFS[i].log_l <= e.log_l_lsun.hi;
        int okb = DWARFS[i].log_l >= e.log_l_lsun.band_lo - PATH_TOL_DEX && DWARFS[i].log_l <= e.log_l_lsun.band_hi + PATH_TOL_DEX;
        inside += ok;
        in_band += okb;
        printf("mean dwarf %s %5.0f K: table log L %+.3f, hrtrail %+.3f [%+.3f, %+.3f] band [%+.3f, %+.3f] M %.2f %s\n",
               DWARFS[i].type, DWARFS[i].teff_k, DWARFS[i].log_l, e.log_l_lsun.median, e.log_l_lsun.lo,
               e.log_l_lsun.hi, e.log_l_lsun.band_lo, e.log_l_lsun.band_hi, e.mass_msun.median, ok ? "inside" : "OUTSIDE");
    }
    printf("mean dwarfs: %d of %zu inside the 68.27 %% interval, %d inside the band\n", inside, N_DWARFS, in_band);
    ck_assert_int_ge(inside, DWARF_MIN_INSIDE);
}
END_TEST

/* A random main-sequence star (initial mass log-uniform over [mlo, mhi], age uniform on its main sequence). */
static int random_ms_star(gsl_rng *r, double mlo, double mhi, double age_max, hrt_state *st)
{
    double m = mlo * pow(mhi / mlo, gsl_rng_uniform(r));
    hrt_star *s;
    hrt_phase_span sp[64];
    size_t n;
    ck_assert_int_eq(hrt_star_new(G, m, Z_SUN, &s, NULL), HRT_OK);
    ck_assert_int_eq(hrt_star_phases(s, sp, 64, &n), HRT_OK);
    hrt_star_free(s);
    for (size_t k = 0; k < n; k++)
        if (sp[k].phase == HRT_PHASE_MS) {
            double a1 = fmin(sp[k].phase_end_yr, age_max);
            if (!(a1 > sp[k].phase_start_yr))
                return 0;
            double age = sp[k].phase_start_yr + (a1 - sp[k].phase_start_yr) * gsl_rng_uniform(r);
            return hrt_eval(G, 1, &m, NULL, Z_SUN, &age, st, NULL) == HRT_OK && st->phase == HRT_PHASE_MS;
        }
    return 0;
}

START_TEST(test_path_agreement)
{
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, 19);
    double mlo, mhi, worst = 0.0, worst_t = 0.0;
    int n = 0, outside = 0;
    ck_assert_int_eq(hrt_grid_mass_range(G, Z_SUN, &mlo, &mhi), HRT_OK);
    while (n < N_PATH) {
        hrt_state st;
        hrt_ms_estimate e;
        hrt_error err;
        if (!random_ms_star(r, mlo, mhi, INFINITY, &st))
            continue;
        n++;
        int rc = hrt_ms_from_teff(MS, pow(10, st.log_teff_k), 0.0, &e, &err);
        ck_assert_msg(rc == HRT_OK, "M %.3f age %.3g: %s", st.initial_mass_msun, st.age_yr, err.message);
        double ex = fmax(e.log_l_lsun.band_lo - st.log_l_lsun, st.log_l_lsun - e.log_l_lsun.band_hi);
        /* and the inverse: the star's Teff inside the Teff band at its L */
        rc = hrt_ms_from_log_l(MS, st.log_l_lsun, 0.0, &e, &err);
        ck_assert_msg(rc == HRT_OK, "M %.3f age %.3g: %s", st.initial_mass_msun, st.age_yr, err.message);
        double ext = fmax(e.log_teff_k.band_lo - st.log_teff_k, st.log_teff_k - e.log_teff_k.band_hi);
        worst = fmax(worst, ex);
        worst_t = fmax(worst_t, ext);
        if (ex > PATH_TOL_DEX || ext > PATH_TOL_TEFF_DEX)
            printf("  outside: M %.4f age %.4g frac %.3f log Teff %.4f log L %.4f: excess %.4f %.4f band T [%.4f %.4f]\n", st.initial_mass_msun, st.age_yr,
                   st.phase_fraction, st.log_teff_k, st.log_l_lsun, ex, ext, e.log_teff_k.band_lo, e.log_teff_k.band_hi);
        outside += ex > PATH_TOL_DEX || ext > PATH_TOL_TEFF_DEX;
    }
    printf("path agreement: %d random main-sequence stars, %d outside the band by more than %.3f dex in log L "
           "(%.4f in log Teff); worst excess %.4f dex in log L, %.4f dex in log Teff\n",
           n, outside, PATH_TOL_DEX, PATH_TOL_TEFF_DEX, worst, worst_t);
    ck_assert_int_eq(outside, 0);
    gsl_rng_free(r);
}
END_TEST

/* Stars drawn from the prior of MS_AGE (flat in initial mass, uniform in age up
 * to AGE_MAX_YR) placed at known distances: the 68.27 % interval must cover the
 * truth in about 68 % of the cases. */
START_TEST(test_distance_injection)
{
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, 7);
    double mlo, mhi;
    int n = 0, covered = 0, tried = 0;
    ck_assert_int_eq(hrt_grid_mass_range(G, Z_SUN, &mlo, &mhi), HRT_OK);
    mhi = fmin(mhi, 8.0); /* massive stars are rare under this prior; drawing them only wastes tries */
    while (n < N_DIST) {
        double m = mlo + (mhi - mlo) * gsl_rng_uniform(r), age = AGE_MAX_YR * gsl_rng_uniform(r);
        hrt_state st;
        tried++;
        if (hrt_eval(G, 1, &m, NULL, Z_SUN, &age, &st, NULL) != HRT_OK || st.phase != HRT_PHASE_MS)
            continue;
        double d_pc = 10.0 * pow(10.0, 3.0 * gsl_rng_uniform(r)); /* 10 pc .. 10 kpc */
        double l_w = pow(10.0, st.log_l_lsun) * HRT_LSUN_W;
        double f = l_w / (4.0 * PI * pow(d_pc * HRT_PC_M, 2));
        double teff = pow(10.0, st.log_teff_k);
        double teff_obs = teff * (1.0 + 0.01 * gsl_ran_gaussian(r, 1.0));
        double f_obs = f * pow(10.0, 0.02 * gsl_ran_gaussian(r, 1.0) / LN10); /* 2 % in log F */
        hrt_ms_distance_result dr;
        hrt_error err;
        int rc = hrt_ms_distance(MS_AGE, teff_obs, 0.01 * teff, f_obs, 0.02 * f_obs, &dr, &err);
        if (rc == HRT_E_NO_MATCH)
            continue; /* observed Teff scattered off the band */
        ck_assert_msg(rc == HRT_OK, "%s", err.message);
        n++;
        covered += d_pc >= dr.distance_pc.lo && d_pc <= dr.distance_pc.hi;
        ck_assert(fabs(dr.parallax_mas.median - 1000.0 / dr.distance_pc.median) < 1e-9 * dr.parallax_mas.median);
    }
    printf("distance: %d stars drawn (%d tries), true distance inside the 68.27 %% interval for %d (%.1f %%)\n", n,
           tried, covered, 100.0 * covered / n);
    ck_assert(covered >= COVER_LO * n && covered <= COVER_HI * n);
    gsl_rng_free(r);
}
END_TEST

/* One star at a known distance: a model of 1 Msun at 4.57 Gyr (Bouvier & Wadhwa
 * 2010, from memory) at 10 pc, observed with apparent bolometric magnitude
 * m = M_bol (IAU 2015 Resolution B2 zero points). */
START_TEST(test_distance_one_star)
{
    double m = 1.0, age = 4.57e9;
    hrt_state st;
    hrt_ms_distance_result dr;
    hrt_error err;
    ck_assert_int_eq(hrt_eval(G, 1, &m, NULL, Z_SUN, &age, &st, NULL), HRT_OK);
    double mbol = -2.5 * (st.log_l_lsun + log10(HRT_LSUN_W / HRT_MBOL_ZERO_POINT_W)); /* at 10 pc, m = M */
    double f = hrt_fit_flux_from_mbol(mbol), sig_m = 0.05;
    ck_assert_int_eq(hrt_ms_distance(MS_AGE, pow(10, st.log_teff_k), 50.0, f, f * 0.4 * LN10 * sig_m, &dr, &err),
                     HRT_OK);
    printf("one star at 10 pc: %.2f pc [%.2f, %.2f]\n", dr.distance_pc.median, dr.distance_pc.lo, dr.distance_pc.hi);
    ck_assert(dr.distance_pc.lo <= 10.0 && dr.distance_pc.hi >= 10.0);
    ck_assert(dr.distance_pc.hi / dr.distance_pc.lo < 2.0); /* an interval, not everything */
}
END_TEST

/* L -> Teff -> L: the luminosity lies in the band at the Teff found for it, and the
 * Teff found back from that band's median luminosity lies in the Teff interval. */
START_TEST(test_round_trip)
{
    for (double log_l = -1.5; log_l <= 4.0; log_l += 0.25) {
        hrt_ms_estimate a, b, c;
        hrt_error err;
        ck_assert_msg(hrt_ms_from_log_l(MS_AGE, log_l, 0.0, &a, &err) == HRT_OK, "%s", err.message);
        double teff = pow(10, a.log_teff_k.median);
        ck_assert_msg(hrt_ms_from_teff(MS_AGE, teff, 0.0, &b, &err) == HRT_OK, "%s", err.message);
        ck_assert_msg(log_l >= b.log_l_lsun.band_lo - PATH_TOL_DEX && log_l <= b.log_l_lsun.band_hi + PATH_TOL_DEX,
                      "log L %.2f -> Teff %.0f -> band [%.3f, %.3f]", log_l, teff, b.log_l_lsun.band_lo,
                      b.log_l_lsun.band_hi);
        ck_assert(b.log_l_lsun.lo <= b.log_l_lsun.median && b.log_l_lsun.median <= b.log_l_lsun.hi);
        ck_assert_msg(hrt_ms_from_log_l(MS_AGE, b.log_l_lsun.median, 0.0, &c, &err) == HRT_OK, "%s", err.message);
        ck_assert_msg(a.log_teff_k.median >= c.log_teff_k.band_lo - PATH_TOL_TEFF_DEX &&
                          a.log_teff_k.median <= c.log_teff_k.band_hi + PATH_TOL_TEFF_DEX,
                      "log L %.2f -> Teff %.0f -> log L %.3f: Teff band [%.0f, %.0f] K", log_l, teff,
                      b.log_l_lsun.median, pow(10, c.log_teff_k.band_lo), pow(10, c.log_teff_k.band_hi));
    }
}
END_TEST

START_TEST(test_refusals)
{
    hrt_ms_estimate e;
    hrt_ms_distance_result dr;
    hrt_ms *ms = NULL;
    hrt_error err;
    double lo, hi;
    ck_assert_int_eq(hrt_ms_teff_range(MS, &lo, &hi), HRT_OK);
    ck_assert_int_eq(hrt_ms_from_teff(MS, 1.2 * hi, 0.0, &e, &err), HRT_E_NO_MATCH);
    ck_assert_int_eq(e.status, HRT_E_NO_MATCH);
    ck_assert_msg(strstr(err.message, "no main-sequence star"), "%s", err.message);
    ck_assert_int_eq(hrt_ms_from_teff(MS, 0.8 * lo, 0.0, &e, &err), HRT_E_NO_MATCH);
    ck_assert_int_eq(hrt_ms_from_teff(MS, -5.0, 0.0, &e, &err), HRT_E_DOMAIN);
    ck_assert_int_eq(hrt_ms_from_teff(MS, 5000.0, NAN, &e, &err), HRT_E_DOMAIN);
    ck_assert_int_eq(hrt_ms_from_teff(NULL, 5000.0, 0.0, &e, &err), HRT_E_NULL);
    ck_assert_int_eq(hrt_ms_from_log_l(MS, INFINITY, 0.0, &e, &err), HRT_E_DOMAIN);
    ck_assert_int_eq(hrt_ms_log_l_range(MS, &lo, &hi), HRT_OK);
    ck_assert_int_eq(hrt_ms_from_log_l(MS, hi + 1.0, 0.0, &e, &err), HRT_E_NO_MATCH);
    ck_assert_int_eq(hrt_ms_distance(MS, 5000.0, 0.0, -1.0, 0.0, &dr, &err), HRT_E_DOMAIN);
    ck_assert_int_eq(dr.status, HRT_E_DOMAIN);
    ck_assert_int_eq(hrt_ms_new(G, 5.0, NULL, &ms, &err), HRT_E_Z_RANGE);
    ck_assert_ptr_null(ms);
    hrt_ms_options o;
    hrt_ms_options_default(&o);
    o.n_ages = 2;
    ck_assert_int_eq(hrt_ms_new(G, Z_SUN, &o, &ms, &err), HRT_E_INVALID);
    hrt_ms_options_default(&o);
    o.age_min_yr = 1e9;
    o.age_max_yr = 1e8;
    ck_assert_int_eq(hrt_ms_new(G, Z_SUN, &o, &ms, &err), HRT_E_INVALID);
    o.age_min_yr = 1e15; /* no star of the grid lives this long on the main sequence */
    o.age_max_yr = 2e15;
    ck_assert_int_eq(hrt_ms_new(G, Z_SUN, &o, &ms, &err), HRT_E_NO_MATCH);
    ck_assert_int_eq(hrt_ms_new(NULL, Z_SUN, NULL, &ms, &err), HRT_E_NULL);
    hrt_ms_free(NULL);
}
END_TEST

/* An age range narrows the band: young stars only sit at its bottom edge. */
START_TEST(test_age_range)
{
    hrt_ms_options o;
    hrt_ms *young;
    hrt_ms_estimate a, b;
    hrt_error err;
    hrt_ms_options_default(&o);
    o.age_max_yr = 1e8;
    ck_assert_int_eq(hrt_ms_new(G, Z_SUN, &o, &young, &err), HRT_OK);
    ck_assert_int_eq(hrt_ms_from_teff(young, 6500.0, 0.0, &a, &err), HRT_OK);
    ck_assert_int_eq(hrt_ms_from_teff(MS, 6500.0, 0.0, &b, &err), HRT_OK);
    ck_assert(a.age_yr.hi <= 1e8);
    ck_assert(a.log_l_lsun.band_hi - a.log_l_lsun.band_lo < b.log_l_lsun.band_hi - b.log_l_lsun.band_lo);
    ck_assert(a.log_l_lsun.median < b.log_l_lsun.median);
    hrt_ms_free(young);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("ms");
    TCase *tc = tcase_create("ms");
    tcase_add_checked_fixture(tc, setup, teardown);
    tcase_set_timeout(tc, 300);
    tcase_add_test(tc, test_mean_dwarfs);
    tcase_add_test(tc, test_path_agreement);
    tcase_add_test(tc, test_distance_injection);
    tcase_add_test(tc, test_distance_one_star);
    tcase_add_test(tc, test_round_trip);
    tcase_add_test(tc, test_refusals);
    tcase_add_test(tc, test_age_range);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_set_fork_status(sr, CK_NOFORK);
    srunner_run_all(sr, CK_NORMAL);
    int nf = srunner_ntests_failed(sr);
    srunner_free(sr);
    hrt_ms_free(MS);
    hrt_ms_free(MS_AGE);
    hrt_grid_close(G);
    return nf == 0 ? 0 : 1;
}
