/*
 * Checks of hrt_fit_* and hrt_forecast on the default grid (HRTRAIL_GRID).
 *
 * Every outside value names its source beside it; "from memory" marks a
 * published value recalled, not re-read; "common practice" a fact of the
 * trade.  The injection test draws its stars from the same priors the fit
 * assumes, so a calibrated posterior must put the truth inside its 68.27 %
 * interval in 68 % of the cases (binomial sigma 2.9 % for 250 stars).
 */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>
#include <hdf5.h>

#include "hrtrail.h"

#define Z_SUN 0.014          /* Asplund et al. (2009, ARA&A 47, 481), from memory; the grid's Z_ref */
#define AGE_SUN_YR 4.57e9    /* Bouvier & Wadhwa (2010, Nature Geosci. 3, 637): 4.567 Gyr, from memory */
#define N_INJECT 250
#define COVER_LO 0.60        /* accepted coverage of a 68.27 % interval (binomial +-2.7 sigma for 250) */
#define COVER_HI 0.76

static int gsl_calls; /* GSL's handler must never be reached */
static void counting_handler(const char *reason, const char *file, int line, int gsl_errno)
{
    (void)reason, (void)file, (void)line, (void)gsl_errno;
    gsl_calls++;
}

static hrt_grid *G;
static hrt_fit_model *M_NARROW; /* [Fe/H] -0.5..+0.3, masses 0.7..3 Msun */

static void setup(void)
{
    hrt_error err = {0, ""};
    gsl_set_error_handler(counting_handler);
    if (!G) {
        int rc = hrt_grid_open(NULL, &G, &err);
        ck_assert_msg(rc == HRT_OK, "grid: %s", err.message);
    }
    if (!M_NARROW) {
        hrt_fit_model_options o;
        hrt_fit_model_options_default(&o);
        o.feh_min = -0.5;
        o.feh_max = 0.3;
        o.mass_min_msun = 0.7;
        o.mass_max_msun = 3.0;
        int rc = hrt_fit_model_new(G, &o, &M_NARROW, &err);
        ck_assert_msg(rc == HRT_OK, "model: %s", err.message);
    }
}

static void teardown(void) { ck_assert_int_eq(gsl_calls, 0); }

static int in_interval(hrt_fit_interval x, double v) { return v >= x.lo && v <= x.hi; }

/* An observation of Teff, log L and [Fe/H] (values and 1-sigma errors); the rest not measured. */
static hrt_fit_obs obs_tlf(double teff, double teff_s, double log_l, double log_l_s, double feh, double feh_s)
{
    hrt_fit_obs o;
    hrt_fit_obs_init(&o);
    o.teff_k = teff;
    o.teff_k_sigma = teff_s;
    o.log_l_lsun = log_l;
    o.log_l_lsun_sigma = log_l_s;
    o.feh = feh;
    o.feh_sigma = feh_s;
    return o;
}

/* Kroupa (2001, eq. 2) draw in [lo, hi] Msun by rejection in log mass:
 * dN/dlog M ~ M^-0.3 below 0.5 Msun, M^-1.3 above. */
static double draw_kroupa(gsl_rng *r, double lo, double hi)
{
    double wmax = lo < 0.5 ? pow(lo / 0.5, -0.3) : pow(lo / 0.5, -1.3);
    for (;;) {
        double m = lo * pow(hi / lo, gsl_rng_uniform(r));
        double w = m < 0.5 ? pow(m / 0.5, -0.3) : pow(m / 0.5, -1.3);
        if (gsl_rng_uniform(r) * wmax < w)
            return m;
    }
}

START_TEST(injection_coverage)
{
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, 20260101);
    int n = 0, in_m = 0, in_a = 0, in_f = 0, fail = 0;
    while (n < N_INJECT) {
        double m = draw_kroupa(r, 0.7, 3.0);
        double feh = -0.5 + 0.8 * gsl_rng_uniform(r);
        double age = 13.8e9 * gsl_rng_uniform(r);
        double z = Z_SUN * pow(10.0, feh);
        hrt_state s;
        if (hrt_eval(G, 1, &m, &z, 0.0, &age, &s, NULL) != HRT_OK)
            continue;
        if (s.flags & (HRT_FLAG_NOT_MODELLED | HRT_FLAG_REMNANT | HRT_FLAG_DARK))
            continue; /* the fit covers luminous stars between ZAMS and the last EEP */
        /* measurement errors of a spectroscopic survey (common practice) */
        const double st = 80.0, sl = 0.03, sf = 0.1;
        double t_obs = pow(10.0, s.log_teff_k) + gsl_ran_gaussian(r, st);
        double l_obs = s.log_l_lsun + gsl_ran_gaussian(r, sl);
        hrt_fit_obs o = obs_tlf(t_obs, st, l_obs, sl, feh + gsl_ran_gaussian(r, sf), sf);
        hrt_fit_result res;
        hrt_error err;
        int rc = hrt_fit_star(M_NARROW, &o, (uint64_t)n, 0, NULL, &res, &err);
        if (rc != HRT_OK) {
            fail++;
            ck_assert_msg(fail < 5, "fit of injected star %d failed: %s", n, err.message);
            continue;
        }
        n++;
        in_m += in_interval(res.initial_mass_msun, m);
        in_a += in_interval(res.age_yr, age);
        in_f += in_interval(res.feh, feh);
    }
    gsl_rng_free(r);
    double cm = (double)in_m / n, ca = (double)in_a / n, cf = (double)in_f / n;
    printf("injection: %d stars, 68%% intervals hold the truth: mass %.3f, age %.3f, [Fe/H] %.3f\n", n, cm, ca, cf);
    ck_assert_msg(cm >= COVER_LO && cm <= COVER_HI, "mass coverage %.3f outside [%.2f, %.2f]", cm, COVER_LO, COVER_HI);
    ck_assert_msg(ca >= COVER_LO && ca <= COVER_HI, "age coverage %.3f outside [%.2f, %.2f]", ca, COVER_LO, COVER_HI);
}
END_TEST

START_TEST(sun)
{
    /* nominal L = 1 Lsun and Teff = 5772 K (IAU 2015 Resolution B3); errors of a
     * well-measured dwarf (common practice); [Fe/H] = 0 at the grid's Z_ref */
    hrt_fit_obs o = obs_tlf(5772.0, 50.0, 0.0, 0.01, 0.0, 0.05);
    hrt_fit_result res;
    hrt_fit_sample smp[200];
    hrt_error err;
    int rc = hrt_fit_star(M_NARROW, &o, 1, 200, smp, &res, &err);
    ck_assert_msg(rc == HRT_OK, "%s", err.message);
    printf("sun: mass %.4f [%.4f, %.4f] Msun, age %.3f [%.3f, %.3f] Gyr, R %.3f Rsun, phase %s %.3f\n",
           res.initial_mass_msun.median, res.initial_mass_msun.lo, res.initial_mass_msun.hi, res.age_yr.median / 1e9,
           res.age_yr.lo / 1e9, res.age_yr.hi / 1e9, res.r_rsun.median, hrt_phase_key(res.phase),
           res.phase_prob[res.phase]);
    ck_assert_msg(fabs(res.initial_mass_msun.median - 1.0) < 0.05, "mass %g", res.initial_mass_msun.median);
    ck_assert_msg(in_interval(res.age_yr, AGE_SUN_YR), "age interval [%g, %g]", res.age_yr.lo, res.age_yr.hi);
    ck_assert_int_eq(res.phase, HRT_PHASE_MS);
    ck_assert(!(res.flags & HRT_FIT_MULTIMODAL));
    /* R from L and Teff by the Stefan-Boltzmann law is 1 Rsun at the nominal values (IAU 2015 B3) */
    ck_assert(in_interval(res.r_rsun, 1.0));
    ck_assert(res.initial_mass_msun.lo < res.initial_mass_msun.median && res.initial_mass_msun.median < res.initial_mass_msun.hi);
    for (int i = 0; i < 200; i++) {
        ck_assert(smp[i].initial_mass_msun > 0.7 && smp[i].initial_mass_msun < 3.0);
        ck_assert(smp[i].age_yr > 0 && smp[i].age_yr < 13.8e9);
    }
    /* the Sun's future from its posterior draws: still on the main sequence for
     * several Gyr (the grid's 1 Msun lifetime is checked in forecast_sun) */
    hrt_forecast_result fr;
    rc = hrt_forecast(G, 200, smp, 0, NULL, NULL, &fr, &err);
    ck_assert_msg(rc == HRT_OK, "%s", err.message);
    ck_assert(fr.ms_prob > 0.95);
    ck_assert(fr.ms_left_yr.median > 3e9 && fr.ms_left_yr.median < 8e9);
    ck_assert(fr.remnant_prob[HRT_REMNANT_CO_WD] > 0.95);
}
END_TEST

START_TEST(deterministic)
{
    hrt_fit_obs o = obs_tlf(4840, 80, 1.65, 0.05, 0.0, 0.1);
    hrt_fit_sample a[300], b[300], c[300];
    hrt_fit_result ra, rb, rc_;
    ck_assert_int_eq(hrt_fit_star(M_NARROW, &o, 7, 300, a, &ra, NULL), HRT_OK);
    ck_assert_int_eq(hrt_fit_star(M_NARROW, &o, 7, 300, b, &rb, NULL), HRT_OK);
    ck_assert_int_eq(hrt_fit_star(M_NARROW, &o, 8, 300, c, &rc_, NULL), HRT_OK);
    ck_assert(memcmp(a, b, sizeof a) == 0);
    ck_assert(memcmp(&ra, &rb, sizeof ra) == 0);
    ck_assert(memcmp(a, c, sizeof a) != 0);
    /* quantiles do not depend on the draws */
    ck_assert(ra.initial_mass_msun.median == rc_.initial_mass_msun.median);
    /* near the red clump: the red giant branch and core helium burning both
     * reach this position, and the fit says so */
    printf("clump star: %s %.2f / %s %.2f, flags %#x\n", hrt_phase_key(ra.phase), ra.phase_prob[ra.phase],
           hrt_phase_key(ra.phase_second), ra.phase_prob[ra.phase_second], ra.flags);
    ck_assert(ra.flags & HRT_FIT_MULTIMODAL);
    ck_assert(ra.phase_prob[HRT_PHASE_RGB] >= HRT_FIT_MULTIMODAL_PROB);
    ck_assert(ra.phase_prob[HRT_PHASE_CHEB] >= HRT_FIT_MULTIMODAL_PROB);
    double sum = 0;
    for (int p = 0; p < HRT_PHASE_SLOTS; p++) sum += ra.phase_prob[p];
    ck_assert(fabs(sum - 1.0) < 1e-9);
}
END_TEST

START_TEST(distance_au)
{
    /* nominal total solar irradiance 1361 W m^-2 and solar luminosity 3.828e26 W
     * (IAU 2015 Resolution B3); au = 1.495978707e11 m (IAU 2012 Resolution B2) */
    double d = hrt_fit_distance_m(3.828e26, 1361.0);
    printf("solar distance from L and S: %.6f au\n", d / 1.495978707e11);
    ck_assert(fabs(d / 1.495978707e11 - 1.0) < 0.005);
    /* IAU 2015 Resolution B2: m_bol = -26.832 for the nominal irradiance (from memory) */
    double f = hrt_fit_flux_from_mbol(-26.832);
    ck_assert_msg(fabs(f / 1361.0 - 1.0) < 1e-3, "flux of m_bol -26.832: %g", f);
    /* and the zero point itself: m_bol = 0 is 2.518021002e-8 W m^-2 (IAU 2015 Resolution B2) */
    ck_assert(fabs(hrt_fit_flux_from_mbol(0.0) / 2.518021002e-8 - 1.0) < 1e-9);
    ck_assert(isnan(hrt_fit_distance_m(-1.0, 1.0)));
    ck_assert(isnan(hrt_fit_distance_m(1.0, 0.0)));
}
END_TEST

START_TEST(distance_100pc)
{
    /* a synthetic star from the grid, observed in Teff, log g and [Fe/H] with a
     * bolometric flux from 100 pc: its HR-diagram distance must hold 100 pc */
    double m = 1.6, z = Z_SUN, age = 1.2e9;
    hrt_state s;
    ck_assert_int_eq(hrt_eval(G, 1, &m, &z, 0.0, &age, &s, NULL), HRT_OK);
    double d = 100.0 * HRT_PC_M;
    double flux = HRT_LSUN_W * pow(10.0, s.log_l_lsun) / (4.0 * 3.14159265358979323846 * d * d);
    hrt_fit_obs o;
    hrt_fit_obs_init(&o);
    o.teff_k = pow(10.0, s.log_teff_k);
    o.teff_k_sigma = 70.0;
    o.log_g_cgs = s.log_g_cgs;
    o.log_g_cgs_sigma = 0.05;
    o.feh = 0.0;
    o.feh_sigma = 0.05;
    o.flux_w_m2 = flux;
    o.flux_w_m2_sigma = 0.02 * flux;
    hrt_fit_result res;
    hrt_error err;
    int rc = hrt_fit_star(M_NARROW, &o, 3, 0, NULL, &res, &err);
    ck_assert_msg(rc == HRT_OK, "%s", err.message);
    printf("star at 100 pc: %.1f [%.1f, %.1f] pc, mass %.3f [%.3f, %.3f]\n", res.distance_pc.median, res.distance_pc.lo,
           res.distance_pc.hi, res.initial_mass_msun.median, res.initial_mass_msun.lo, res.initial_mass_msun.hi);
    ck_assert(in_interval(res.distance_pc, 100.0));
    ck_assert(res.distance_pc.hi / res.distance_pc.lo < 1.5);
    /* the same flux in magnitudes gives the same distance */
    hrt_fit_obs o2 = o;
    o2.flux_w_m2 = o2.flux_w_m2_sigma = NAN;
    o2.mbol = -2.5 * log10(flux / 2.518021002e-8); /* IAU 2015 Resolution B2 zero point */
    o2.mbol_sigma = 2.5 / log(10.0) * 0.02;
    hrt_fit_result r2;
    ck_assert_int_eq(hrt_fit_star(M_NARROW, &o2, 3, 0, NULL, &r2, NULL), HRT_OK);
    ck_assert(fabs(r2.distance_pc.median / res.distance_pc.median - 1.0) < 1e-6);
    /* with the distance known instead, the luminosity is measured: no HR distance */
    hrt_fit_obs o3 = o;
    o3.distance_pc = 100.0;
    o3.distance_pc_sigma = 2.0;
    hrt_fit_result r3;
    ck_assert_int_eq(hrt_fit_star(M_NARROW, &o3, 3, 0, NULL, &r3, NULL), HRT_OK);
    ck_assert(isnan(r3.distance_pc.median));
    ck_assert(in_interval(r3.log_l_lsun, s.log_l_lsun));
    ck_assert(in_interval(r3.initial_mass_msun, m));
}
END_TEST

/* log10 age at EEP j of the grid's track of mass m in group iz, read from the file with HDF5. */
static double file_log_age(size_t iz, double m, int j)
{
    const char *path = hrt_default_grid_path();
    double out = NAN;
    char name[64];
    hid_t f = H5Fopen(path, H5F_ACC_RDONLY, H5P_DEFAULT);
    ck_assert(f >= 0);
    snprintf(name, sizeof name, "metallicity/%zu/initial_mass_msun", iz);
    hid_t dm = H5Dopen2(f, name, H5P_DEFAULT);
    ck_assert_msg(dm >= 0, "%s: no dataset %s", path, name);
    hid_t sp = H5Dget_space(dm);
    hsize_t dims[2];
    H5Sget_simple_extent_dims(sp, dims, NULL);
    double *mass = malloc(dims[0] * sizeof *mass);
    H5Dread(dm, H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, mass);
    H5Sclose(sp);
    H5Dclose(dm);
    size_t row = dims[0];
    for (size_t i = 0; i < dims[0]; i++)
        if (fabs(mass[i] - m) < 1e-12) row = i;
    ck_assert(row < dims[0]);
    snprintf(name, sizeof name, "metallicity/%zu/log_age_yr", iz);
    hid_t da = H5Dopen2(f, name, H5P_DEFAULT);
    ck_assert_msg(da >= 0, "%s: no dataset %s", path, name);
    sp = H5Dget_space(da);
    H5Sget_simple_extent_dims(sp, dims, NULL);
    double *la = malloc(dims[0] * dims[1] * sizeof *la);
    H5Dread(da, H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, la);
    out = la[row * dims[1] + (size_t)j];
    free(la);
    free(mass);
    H5Sclose(sp);
    H5Dclose(da);
    H5Fclose(f);
    return out;
}

static size_t group_of(double z)
{
    for (size_t iz = 0; iz < hrt_grid_n_z(G); iz++)
        if (fabs(hrt_grid_z(G, iz) / z - 1.0) < 1e-12) return iz;
    ck_abort_msg("no group at Z %g", z);
    return 0;
}

static long keypoint_eep(int route, const char *name)
{
    for (size_t k = 0; k < hrt_grid_route_n_keypoints(G, (size_t)route); k++)
        if (!strcmp(hrt_grid_keypoint_name(G, (size_t)route, k), name)) return hrt_grid_keypoint_eep(G, (size_t)route, k);
    ck_abort_msg("keypoint %s", name);
    return -1;
}

START_TEST(forecast_sun)
{
    /* 1 Msun at Z_ref and 4.57 Gyr: the main-sequence time left is the grid's
     * own 1 Msun main-sequence lifetime (its tams keypoint, read from the file)
     * minus the age */
    hrt_fit_sample s = {1.0, Z_SUN, AGE_SUN_YR, 0, 0, 0, 0};
    double dt[2] = {1e7, 8e9};
    hrt_forecast_state st[2];
    hrt_forecast_result r;
    hrt_error err;
    int rc = hrt_forecast(G, 1, &s, 2, dt, st, &r, &err);
    ck_assert_msg(rc == HRT_OK, "%s", err.message);
    int route;
    ck_assert_int_eq(hrt_grid_route_of(G, 1.0, Z_SUN, &route), HRT_OK);
    double tams = pow(10.0, file_log_age(group_of(Z_SUN), 1.0, (int)keypoint_eep(route, "tams")));
    printf("1 Msun: main sequence ends at %.4f Gyr (grid file); forecast: %.4f Gyr left\n", tams / 1e9,
           r.ms_left_yr.median / 1e9);
    ck_assert_int_eq(r.phase_now, HRT_PHASE_MS);
    ck_assert(r.ms_prob == 1.0);
    ck_assert(fabs((r.ms_left_yr.median + AGE_SUN_YR) / tams - 1.0) < 1e-9);
    ck_assert(r.ms_left_yr.lo == r.ms_left_yr.hi);
    ck_assert_str_eq(r.events[0].name, "tams");
    ck_assert(fabs(r.events[0].in_yr.median - r.ms_left_yr.median) < 1e-3 * r.ms_left_yr.median);
    ck_assert_int_eq(st[0].phase, HRT_PHASE_MS);
    ck_assert_int_eq(r.remnant, HRT_REMNANT_CO_WD);
    /* 8 Gyr on, the Sun is past the end of its track: a white dwarf */
    ck_assert_int_eq(st[1].phase, HRT_PHASE_WD);
}
END_TEST

START_TEST(forecast_5msun)
{
    /* 5 Msun just past its main sequence: a red giant, then a white dwarf
     * (5 Msun is below the ~8 Msun limit for white dwarf progenitors, common practice) */
    hrt_star *star;
    ck_assert_int_eq(hrt_star_new(G, 5.0, Z_SUN, &star, NULL), HRT_OK);
    double tams = NAN;
    for (size_t k = 0; k < hrt_star_n_keypoints(star); k++)
        if (!strcmp(hrt_star_keypoint_name(star, k), "tams")) hrt_star_keypoint_age(star, k, &tams);
    hrt_star_free(star);
    ck_assert(isfinite(tams));
    hrt_fit_sample s = {5.0, Z_SUN, tams * 1.001, 0, 0, 0, 0};
    hrt_forecast_result r;
    hrt_error err;
    int rc = hrt_forecast(G, 1, &s, 0, NULL, NULL, &r, &err);
    ck_assert_msg(rc == HRT_OK, "%s", err.message);
    ck_assert(r.phase_now != HRT_PHASE_MS);
    ck_assert(r.future[HRT_PHASE_RGB].prob == 1.0);
    ck_assert(r.future[HRT_PHASE_WD].prob == 1.0);
    ck_assert(r.future[HRT_PHASE_RGB].start_in_yr.median < r.future[HRT_PHASE_WD].start_in_yr.median);
    ck_assert(r.remnant == HRT_REMNANT_CO_WD || r.remnant == HRT_REMNANT_ONE_WD);
    ck_assert(r.remnant_mass_msun.median > 0.5 && r.remnant_mass_msun.median < 1.44);
    printf("5 Msun past its main sequence: red giant in %.3g yr, white dwarf (%.3f Msun) in %.3g yr\n",
           r.future[HRT_PHASE_RGB].start_in_yr.median, r.remnant_mass_msun.median,
           r.future[HRT_PHASE_WD].start_in_yr.median);
}
END_TEST

START_TEST(bad_inputs)
{
    hrt_fit_obs o;
    hrt_fit_result res;
    hrt_error err;
    hrt_fit_obs_init(&o);
    o.teff_k = 5772;
    o.teff_k_sigma = -50;
    ck_assert_int_eq(hrt_fit_star(M_NARROW, &o, 1, 0, NULL, &res, &err), HRT_E_DOMAIN);
    ck_assert(strstr(err.message, "sigma") != NULL);
    ck_assert_int_eq(res.status, HRT_E_DOMAIN);
    o.teff_k_sigma = 0.0;
    ck_assert_int_eq(hrt_fit_star(M_NARROW, &o, 1, 0, NULL, &res, &err), HRT_E_DOMAIN);
    o.teff_k_sigma = NAN;
    ck_assert_int_eq(hrt_fit_star(M_NARROW, &o, 1, 0, NULL, &res, &err), HRT_E_DOMAIN);
    /* Teff below every track (the coolest reach about 2000 K) */
    o.teff_k = 800;
    o.teff_k_sigma = 30;
    ck_assert_int_eq(hrt_fit_star(M_NARROW, &o, 1, 0, NULL, &res, &err), HRT_E_NO_MATCH);
    ck_assert_msg(strstr(err.message, "outside every track") != NULL, "%s", err.message);
    o.teff_k = 3e6;
    o.teff_k_sigma = 1e4;
    ck_assert_int_eq(hrt_fit_star(M_NARROW, &o, 1, 0, NULL, &res, &err), HRT_E_NO_MATCH);
    /* nothing of the grid within 5 sigma: a solar Teff a thousand times fainter than the Sun */
    o.teff_k = 5772;
    o.teff_k_sigma = 50;
    o.log_l_lsun = -3.0;
    o.log_l_lsun_sigma = 0.05;
    ck_assert_int_eq(hrt_fit_star(M_NARROW, &o, 1, 0, NULL, &res, &err), HRT_E_NO_MATCH);
    ck_assert_msg(strstr(err.message, "5 sigma") != NULL, "%s", err.message);
    /* no Teff; value without sigma; luminosity twice; shaky parallax */
    hrt_fit_obs_init(&o);
    o.log_l_lsun = 0;
    o.log_l_lsun_sigma = 0.1;
    ck_assert_int_eq(hrt_fit_star(M_NARROW, &o, 1, 0, NULL, &res, &err), HRT_E_INVALID);
    o.teff_k = 5772;
    ck_assert_int_eq(hrt_fit_star(M_NARROW, &o, 1, 0, NULL, &res, &err), HRT_E_DOMAIN);
    o.teff_k_sigma = 50;
    o.flux_w_m2 = 1e-9;
    o.flux_w_m2_sigma = 1e-11;
    o.parallax_mas = 10;
    o.parallax_mas_sigma = 0.1;
    ck_assert_int_eq(hrt_fit_star(M_NARROW, &o, 1, 0, NULL, &res, &err), HRT_E_INVALID);
    o.log_l_lsun = o.log_l_lsun_sigma = NAN;
    o.parallax_mas_sigma = 5;
    ck_assert_int_eq(hrt_fit_star(M_NARROW, &o, 1, 0, NULL, &res, &err), HRT_E_INVALID);
    o.parallax_mas = -3;
    ck_assert_int_eq(hrt_fit_star(M_NARROW, &o, 1, 0, NULL, &res, &err), HRT_E_DOMAIN);
    o.parallax_mas = o.parallax_mas_sigma = NAN;
    o.flux_w_m2 = -1;
    ck_assert_int_eq(hrt_fit_star(M_NARROW, &o, 1, 0, NULL, &res, &err), HRT_E_DOMAIN);
    /* NULLs */
    ck_assert_int_eq(hrt_fit_star(NULL, &o, 1, 0, NULL, &res, &err), HRT_E_NULL);
    ck_assert_int_eq(hrt_fit_star(M_NARROW, &o, 1, 5, NULL, &res, &err), HRT_E_NULL);
    /* model options */
    hrt_fit_model_options mo;
    hrt_fit_model *m2 = NULL;
    hrt_fit_model_options_default(&mo);
    mo.age_max_yr = -1;
    ck_assert_int_eq(hrt_fit_model_new(G, &mo, &m2, &err), HRT_E_DOMAIN);
    hrt_fit_model_options_default(&mo);
    mo.feh_min = -5;
    ck_assert_int_eq(hrt_fit_model_new(G, &mo, &m2, &err), HRT_E_Z_RANGE);
    hrt_fit_model_options_default(&mo);
    mo.mass_min_msun = 5;
    mo.mass_max_msun = 2;
    ck_assert_int_eq(hrt_fit_model_new(G, &mo, &m2, &err), HRT_E_INVALID);
    mo.mass_prior = 99;
    ck_assert_int_eq(hrt_fit_model_new(G, &mo, &m2, &err), HRT_E_INVALID);
    ck_assert(m2 == NULL);
    /* forecast */
    hrt_fit_sample s = {1.0, Z_SUN, 1e9, 0, 0, 0, 0};
    hrt_forecast_result fr;
    double dt = -5;
    hrt_forecast_state fs;
    ck_assert_int_eq(hrt_forecast(G, 1, &s, 1, &dt, &fs, &fr, &err), HRT_E_DOMAIN);
    ck_assert_int_eq(hrt_forecast(G, 0, &s, 0, NULL, NULL, &fr, &err), HRT_E_INVALID);
    s.initial_mass_msun = 500;
    ck_assert_int_eq(hrt_forecast(G, 1, &s, 0, NULL, NULL, &fr, &err), HRT_E_MASS_RANGE);
    ck_assert(strstr(err.message, "sample 0") != NULL);
    s.initial_mass_msun = 1;
    s.age_yr = NAN;
    ck_assert_int_eq(hrt_forecast(G, 1, &s, 0, NULL, NULL, &fr, &err), HRT_E_DOMAIN);
    ck_assert_int_eq(hrt_forecast(NULL, 1, &s, 0, NULL, NULL, &fr, &err), HRT_E_NULL);
}
END_TEST

START_TEST(priors_and_names)
{
    for (int p = 0; p < HRT_FIT_PRIOR_COUNT; p++)
        ck_assert_int_eq(hrt_fit_mass_prior_from_name(hrt_fit_mass_prior_name(p)), p);
    ck_assert_int_eq(hrt_fit_mass_prior_from_name("nonsense"), -1);
    ck_assert(hrt_fit_mass_prior_name(HRT_FIT_PRIOR_COUNT) == NULL);
    ck_assert_str_eq(hrt_strerror(HRT_E_NO_MATCH), "no model of the grid matches the observation");
    /* the IMF decides an unconstrained star: a Teff of a K dwarf with no
     * luminosity gives a lower mass under Kroupa than under a log-flat prior */
    hrt_fit_model_options o;
    hrt_fit_model *mk, *mf;
    hrt_fit_model_options_default(&o);
    o.feh_min = o.feh_max = 0.0;
    o.mass_min_msun = 0.3;
    o.mass_max_msun = 5;
    ck_assert_int_eq(hrt_fit_model_new(G, &o, &mk, NULL), HRT_OK);
    o.mass_prior = HRT_FIT_PRIOR_LOG_FLAT;
    ck_assert_int_eq(hrt_fit_model_new(G, &o, &mf, NULL), HRT_OK);
    ck_assert_int_eq(hrt_fit_model_n_feh(mk), 1);
    hrt_fit_obs ob;
    hrt_fit_obs_init(&ob);
    ob.teff_k = 4600;
    ob.teff_k_sigma = 100;
    hrt_fit_result a, b;
    ck_assert_int_eq(hrt_fit_star(mk, &ob, 1, 0, NULL, &a, NULL), HRT_OK);
    ck_assert_int_eq(hrt_fit_star(mf, &ob, 1, 0, NULL, &b, NULL), HRT_OK);
    ck_assert(a.initial_mass_msun.median < b.initial_mass_msun.median);
    ck_assert(hrt_fit_model_memory_bytes(mk) > 0);
    /* Chabrier (2003, PASP 115, 763, Table 1) system IMF: dN/dlog M falls
     * above its 0.22 Msun peak, so it too puts the star lower than log-flat */
    hrt_fit_model *mc;
    o.mass_prior = HRT_FIT_PRIOR_CHABRIER_2003;
    ck_assert_int_eq(hrt_fit_model_new(G, &o, &mc, NULL), HRT_OK);
    hrt_fit_result c;
    ck_assert_int_eq(hrt_fit_star(mc, &ob, 1, 0, NULL, &c, NULL), HRT_OK);
    printf("Teff 4600 K alone: mass %.4f (kroupa2001), %.4f (chabrier2003), %.4f (log-flat) Msun\n",
           a.initial_mass_msun.median, c.initial_mass_msun.median, b.initial_mass_msun.median);
    ck_assert(c.initial_mass_msun.median < b.initial_mass_msun.median);
    hrt_fit_model_free(mc);
    hrt_fit_model_free(mk);
    hrt_fit_model_free(mf);
}
END_TEST

/* ------------------------------------------------------------------ draws on their tracks */

/* Posterior draws re-evaluated with hrt_eval (the grid's own track at each
 * draw's initial mass, Z and age) against the lattice state the fit
 * weighted there.  Limits (measured, common practice for a sampler's
 * consistency): the phase the same for at least DRAW_PHASE_AGREE of the
 * draws; log L within DRAW_DLOG_L_DEX (absolute) for at least the share the
 * caller asks (0.99 for the red giant; DRAW_DLOG_L_SHARE for stars near the
 * tip of the red giant branch of 2-5 Msun, where the lattice's linear
 * interpolation across 0.02 dex of mass misses the grid's track by up to
 * 0.05 dex in 1.7 % of 4000 draws) and within DRAW_DLOG_L_MAX_DEX for
 * every draw; the median |d log Teff| within DRAW_DLOG_TEFF_MEDIAN_DEX
 * (absolute); no draw of a luminous star a remnant or before its track. */
#define N_DRAWS 400
#define DRAW_PHASE_AGREE 0.99
#define DRAW_DLOG_L_DEX 0.02
#define DRAW_DLOG_L_SHARE 0.97
#define DRAW_DLOG_L_MAX_DEX 0.1
#define DRAW_DLOG_TEFF_MEDIAN_DEX 0.005
/* The forecast's present phase and the fit's phase probabilities agree
 * within the sampling error of N_DRAWS draws at 3 sigma: the count of each
 * phase is not in a tail of its binomial holding less than Phi(-3) (common
 * practice; exact tails, the normal approximation fails for rare phases). */
#define PHASE_TAIL_3SIGMA 0.00134989803163009

/* P(K >= k) (upper) or P(K <= k) for K ~ Binomial(n, q), summed exactly. */
static double binomial_tail(int n, double q, int k, int upper)
{
    if (upper ? k <= 0 : k >= n)
        return 1.0;
    if (q <= 0.0 || q >= 1.0)
        return (q <= 0.0) == !upper ? 1.0 : 0.0;
    double sum = 0.0;
    for (int i = upper ? k : 0; i <= (upper ? n : k); i++)
        sum += exp(lgamma(n + 1.0) - lgamma(i + 1.0) - lgamma(n - i + 1.0) + i * log(q) + (n - i) * log1p(-q));
    return sum;
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return x < y ? -1 : x > y;
}

/* Quantile p of n values (sorts v), nearest rank. */
static double quantile(double *v, size_t n, double p)
{
    qsort(v, n, sizeof *v, cmp_double);
    return v[(size_t)floor(p * (double)(n - 1) + 0.5)];
}

/* Fit obs with 400 draws on model m, re-evaluate the draws and check them
 * (and the forecast's present phase) against the fit; prints the figures. */
static void check_draws(const hrt_fit_model *m, const hrt_fit_obs *o, uint64_t seed, const char *label, double l_share)
{
    static hrt_fit_sample smp[N_DRAWS];
    static hrt_state st[N_DRAWS];
    double mass[N_DRAWS], z[N_DRAWS], age[N_DRAWS], dl[N_DRAWS], dt[N_DRAWS];
    hrt_fit_result res;
    hrt_error err;
    int rc = hrt_fit_star(m, o, seed, N_DRAWS, smp, &res, &err);
    ck_assert_msg(rc == HRT_OK, "%s: %s", label, err.message);
    for (int i = 0; i < N_DRAWS; i++) {
        mass[i] = smp[i].initial_mass_msun;
        z[i] = smp[i].z;
        age[i] = smp[i].age_yr;
    }
    rc = hrt_eval(G, N_DRAWS, mass, z, 0.0, age, st, &err);
    ck_assert_msg(rc == HRT_OK, "%s: a draw outside the grid: %s", label, err.message);
    int same = 0, n_l = 0;
    for (int i = 0; i < N_DRAWS; i++) {
        ck_assert_msg(!(st[i].flags & (HRT_FLAG_REMNANT | HRT_FLAG_NOT_MODELLED)) && isfinite(st[i].log_l_lsun),
                      "%s: draw %d (%.17g Msun, Z %.17g, %.17g yr) is %s, not a luminous star", label, i, mass[i], z[i],
                      age[i], hrt_phase_key(st[i].phase));
        same += st[i].phase == smp[i].phase;
        dl[i] = fabs(st[i].log_l_lsun - smp[i].log_l_lsun);
        dt[i] = fabs(st[i].log_teff_k - smp[i].log_teff_k);
        n_l += dl[i] <= DRAW_DLOG_L_DEX;
    }
    double agree = (double)same / N_DRAWS, share_l = (double)n_l / N_DRAWS;
    hrt_forecast_result fr;
    rc = hrt_forecast(G, N_DRAWS, smp, 0, NULL, NULL, &fr, &err);
    ck_assert_msg(rc == HRT_OK, "%s: forecast: %s", label, err.message);
    printf("draws %-13s fit %-8s %.2f, now %-8s %.2f | phase same %5.1f %% | |dlogL| median %.1e, 95 %% %.1e, max %.1e "
           "| |dlogTeff| median %.1e, 95 %% %.1e, max %.1e\n",
           label, hrt_phase_key(res.phase), res.phase_prob[res.phase], hrt_phase_key(fr.phase_now),
           fr.phase_now_prob[fr.phase_now], 100 * agree, quantile(dl, N_DRAWS, 0.5), quantile(dl, N_DRAWS, 0.95),
           quantile(dl, N_DRAWS, 1.0), quantile(dt, N_DRAWS, 0.5), quantile(dt, N_DRAWS, 0.95), quantile(dt, N_DRAWS, 1.0));
    ck_assert_msg(agree >= DRAW_PHASE_AGREE, "%s: the phase of only %.1f %% of the draws is the one the fit weighted", label,
                  100 * agree);
    ck_assert_msg(share_l >= l_share, "%s: log L of only %.1f %% of the draws within %g dex", label, 100 * share_l,
                  DRAW_DLOG_L_DEX);
    ck_assert_msg(dl[N_DRAWS - 1] <= DRAW_DLOG_L_MAX_DEX, "%s: a draw's log L %g dex from the lattice's", label,
                  dl[N_DRAWS - 1]);
    ck_assert_msg(dt[N_DRAWS / 2] <= DRAW_DLOG_TEFF_MEDIAN_DEX, "%s: median |d log Teff| %g dex", label, dt[N_DRAWS / 2]);
    /* the draws' phases are a multinomial sample of phase_prob; the forecast
     * re-evaluates them (hrt_star_at: the phases hrt_eval gave), which moves
     * only the draws counted above */
    int moved = N_DRAWS - same;
    for (int p = 0; p < HRT_PHASE_SLOTS; p++) {
        int k_eval = 0;
        for (int i = 0; i < N_DRAWS; i++)
            k_eval += st[i].phase == p;
        int k = (int)lround(fr.phase_now_prob[p] * N_DRAWS);
        ck_assert_msg(k == k_eval, "%s: phase %s: %d draws now in the forecast, %d by hrt_eval", label, hrt_phase_key(p), k,
                      k_eval);
        double q = res.phase_prob[p];
        double up = binomial_tail(N_DRAWS, q, k - moved, 1), down = binomial_tail(N_DRAWS, q, k + moved, 0);
        ck_assert_msg(up >= PHASE_TAIL_3SIGMA && down >= PHASE_TAIL_3SIGMA,
                      "%s: phase %s: %d of %d draws now in the forecast, probability %.5f in the fit (tails %.2g, %.2g)", label,
                      hrt_phase_key(p), k, N_DRAWS, q, up, down);
    }
}

static hrt_fit_model *default_model(void)
{
    hrt_fit_model *m = NULL;
    hrt_error err;
    int rc = hrt_fit_model_new(G, NULL, &m, &err);
    ck_assert_msg(rc == HRT_OK, "default model: %s", err.message);
    return m;
}

START_TEST(draws_red_giant)
{
    /* the red giant of the report: Teff 4700 +- 80 K, log L 1.7 +- 0.05 (an
     * invented star), default grid and model; the forecast's present phase
     * is the fit's most probable one */
    hrt_fit_model *m = default_model();
    hrt_fit_obs o;
    hrt_fit_obs_init(&o);
    o.teff_k = 4700;
    o.teff_k_sigma = 80;
    o.log_l_lsun = 1.7;
    o.log_l_lsun_sigma = 0.05;
    check_draws(m, &o, 11, "red giant", 0.99);
    hrt_fit_sample smp[N_DRAWS];
    hrt_fit_result res;
    hrt_forecast_result fr;
    ck_assert_int_eq(hrt_fit_star(m, &o, 11, N_DRAWS, smp, &res, NULL), HRT_OK);
    ck_assert_int_eq(hrt_forecast(G, N_DRAWS, smp, 0, NULL, NULL, &fr, NULL), HRT_OK);
    ck_assert_int_eq(fr.phase_now, res.phase);
    hrt_fit_model_free(m);
}
END_TEST

START_TEST(draws_every_phase)
{
    /* stars of the grid itself in the middle of every luminous phase they
     * reach within 13.8 Gyr, at Z_ref, observed in Teff (1.5 %) and log L
     * (0.05 dex) */
    hrt_fit_model *m = default_model();
    const double masses[] = {1.0, 1.5, 2.5, 5.0, 12.0, 30.0, 60.0};
    int n_stars = 0;
    for (size_t k = 0; k < sizeof masses / sizeof masses[0]; k++) {
        hrt_star *s;
        ck_assert_int_eq(hrt_star_new(G, masses[k], Z_SUN, &s, NULL), HRT_OK);
        hrt_phase_span sp[64];
        size_t n = 0;
        ck_assert_int_eq(hrt_star_phases(s, sp, 64, &n), HRT_OK);
        for (size_t i = 0; i < n; i++) {
            double age = 0.5 * (sp[i].phase_start_yr + sp[i].phase_end_yr);
            hrt_state x;
            if (sp[i].phase == HRT_PHASE_PRE_MS || !isfinite(age) || age > 13.8e9 || hrt_star_at(s, age, &x) != HRT_OK ||
                (x.flags & HRT_FLAG_REMNANT) || !isfinite(x.log_l_lsun))
                continue;
            hrt_fit_obs o;
            hrt_fit_obs_init(&o);
            o.teff_k = pow(10.0, x.log_teff_k);
            o.teff_k_sigma = 0.015 * o.teff_k;
            o.log_l_lsun = x.log_l_lsun;
            o.log_l_lsun_sigma = 0.05;
            char label[32];
            snprintf(label, sizeof label, "%g %s", masses[k], hrt_phase_key(x.phase));
            check_draws(m, &o, (uint64_t)(100 + n_stars), label, DRAW_DLOG_L_SHARE);
            n_stars++;
        }
        hrt_star_free(s);
    }
    printf("draws: %d stars checked\n", n_stars);
    ck_assert_int_ge(n_stars, 12);
    hrt_fit_model_free(m);
}
END_TEST

/* Every fit function that takes an hrt_error reports success in it. */
START_TEST(errors_cleared_on_success)
{
    hrt_error err = {HRT_E_INTERNAL, "stale"};
    hrt_fit_model_options o;
    hrt_fit_model_options_default(&o);
    o.feh_min = o.feh_max = 0.0;
    o.mass_min_msun = 0.8;
    o.mass_max_msun = 1.2;
    hrt_fit_model *m = NULL;
    ck_assert_int_eq(hrt_fit_model_new(G, &o, &m, &err), HRT_OK);
    ck_assert_int_eq(err.code, HRT_OK);
    ck_assert_str_eq(err.message, "success");
    hrt_fit_obs ob = obs_tlf(5772.0, 50.0, 0.0, 0.02, 0.0, 0.05);
    hrt_fit_sample smp[10];
    hrt_fit_result res;
    err = (hrt_error){HRT_E_INTERNAL, "stale"};
    ck_assert_int_eq(hrt_fit_star(m, &ob, 1, 10, smp, &res, &err), HRT_OK);
    ck_assert_int_eq(err.code, HRT_OK);
    ck_assert_str_eq(err.message, "success");
    hrt_forecast_result fr;
    hrt_forecast_state fs;
    double dt = 1e9;
    err = (hrt_error){HRT_E_INTERNAL, "stale"};
    ck_assert_int_eq(hrt_forecast(G, 10, smp, 1, &dt, &fs, &fr, &err), HRT_OK);
    ck_assert_int_eq(err.code, HRT_OK);
    ck_assert_str_eq(err.message, "success");
    hrt_fit_model_free(m);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("fit");
    TCase *tc = tcase_create("fit");
    tcase_add_checked_fixture(tc, setup, teardown);
    tcase_set_timeout(tc, 300);
    tcase_add_test(tc, sun);
    tcase_add_test(tc, deterministic);
    tcase_add_test(tc, distance_au);
    tcase_add_test(tc, distance_100pc);
    tcase_add_test(tc, forecast_sun);
    tcase_add_test(tc, forecast_5msun);
    tcase_add_test(tc, bad_inputs);
    tcase_add_test(tc, priors_and_names);
    tcase_add_test(tc, injection_coverage);
    tcase_add_test(tc, draws_red_giant);
    tcase_add_test(tc, draws_every_phase);
    tcase_add_test(tc, errors_cleared_on_success);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_set_fork_status(sr, CK_NOFORK);
    srunner_run_all(sr, CK_NORMAL);
    int nf = srunner_ntests_failed(sr);
    srunner_free(sr);
    hrt_fit_model_free(M_NARROW);
    hrt_grid_close(G);
    return nf ? 1 : 0;
}
