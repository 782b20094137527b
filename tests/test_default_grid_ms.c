/*
 * Checks of the default grid's pre-main sequence and main sequence
 * (tracks/MODEL.md) against outside sources, at named masses and on dense
 * sweeps of mass and metallicity between them.  Every reference value names
 * its source beside it: "from memory" marks a published value recalled, not
 * re-read; "common practice" a fact of the trade.  The grid is the one
 * HRTRAIL_GRID points at (meson test: the freshly generated file).
 */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "hrtrail.h"

#include "default_grid.h"

static const double grid_z[] = {0.0001, 0.0003, 0.001, 0.004, 0.008, 0.014, 0.03};
#define N_Z (sizeof grid_z / sizeof grid_z[0])

/* Main-sequence lifetime (ZAMS to TAMS) and the star at its ZAMS. */
static double t_ms(const hrt_star *s) { return keypoint_age(s, "tams") - keypoint_age(s, "zams"); }

/* The age at which a field dwarf is seen: the local disc's few Gyr (4.5 Gyr,
 * about the Sun's age: common practice), or half its main sequence if it
 * lives shorter than that. */
static double field_age(const hrt_star *s)
{
    double a0 = keypoint_age(s, "zams");
    return fmin(4.5e9, a0 + 0.5 * t_ms(s));
}

/* ------------------------------------------------------------------------
 * Mean dwarfs: Pecaut & Mamajek (2013, ApJS 208, 9), E. Mamajek's table
 * version 2024.05.15 (mass, Teff, log L of each dwarf subtype) [read].  The
 * grid's field relations are fitted to this table (tracks/MODEL.md), so the
 * check is that the whole chain (the fit, its placement at field ages, the
 * main-sequence evolution, the EEP resampling, the library's interpolation)
 * puts a field dwarf of each type where the table does: Teff within 6 %,
 * log L within 0.15 dex, every row from O3V to M8V (M8.5V and M9V are below
 * the grid's 0.08 Msun).
 * ------------------------------------------------------------------------ */
static const struct {
    const char *spt;
    double m, teff, logl;
} dwarfs[] = {
    {"O3V", 59, 45900, 5.820},    {"O5V", 43, 41400, 5.540},    {"O6V", 35, 39800, 5.364},
    {"O7V", 28, 37900, 5.180},    {"O8V", 23.6, 35100, 4.992},  {"O9V", 20.2, 33300, 4.820},
    {"B0V", 17.7, 31400, 4.652},  {"B0.5V", 14.8, 29000, 4.428}, {"B1V", 11.8, 26000, 4.128},
    {"B1.5V", 9.9, 24500, 3.912}, {"B2V", 7.3, 20600, 3.428},   {"B3V", 5.4, 17000, 2.992},
    {"B5V", 4.7, 15700, 2.772},   {"B6V", 4.3, 14500, 2.568},   {"B8V", 3.38, 12300, 2.188},
    {"B9V", 2.75, 10700, 1.864},  {"A0V", 2.33, 9700, 1.584},   {"A2V", 2.06, 8840, 1.384},
    {"A5V", 1.86, 8100, 1.092},   {"A7V", 1.76, 7760, 1.000},   {"F0V", 1.60, 7220, 0.864},
    {"F2V", 1.43, 6820, 0.710},   {"F5V", 1.32, 6550, 0.556},   {"F8V", 1.16, 6180, 0.292},
    {"G0V", 1.07, 5930, 0.130},   {"G2V", 1.00, 5770, 0.010},   {"G5V", 0.98, 5660, -0.054},
    {"G8V", 0.93, 5480, -0.204},  {"K0V", 0.86, 5290, -0.324},  {"K2V", 0.82, 5100, -0.428},
    {"K3V", 0.76, 4870, -0.570},  {"K5V", 0.70, 4440, -0.780},  {"K7V", 0.64, 4090, -0.992},
    {"M0V", 0.585, 3850, -1.164}, {"M1V", 0.51, 3660, -1.336},  {"M2V", 0.45, 3560, -1.540},
    {"M3V", 0.36, 3430, -1.788},  {"M3.5V", 0.29, 3270, -2.032}, {"M4V", 0.24, 3210, -2.144},
    {"M4.5V", 0.18, 3110, -2.400}, {"M5V", 0.155, 3060, -2.520}, {"M5.5V", 0.122, 2930, -2.792},
    {"M6V", 0.105, 2810, -2.980}, {"M7V", 0.090, 2680, -3.188}, {"M8V", 0.086, 2570, -3.292},
};

START_TEST(mean_dwarfs_at_field_ages)
{
    hrt_grid *g = open_grid();
    size_t n = sizeof dwarfs / sizeof dwarfs[0], bad = 0;
    double worst_t = 0.0, worst_l = 0.0;
    for (size_t i = 0; i < n; i++) {
        hrt_star *s = new_star(g, dwarfs[i].m, 0.014);
        double age = field_age(s);
        hrt_state st = state_at(s, age);
        double dt = pow(10.0, st.log_teff_k) / dwarfs[i].teff - 1.0, dl = st.log_l_lsun - dwarfs[i].logl;
        int ok = st.phase == HRT_PHASE_MS && fabs(dt) <= 0.06 && fabs(dl) <= 0.15;
        bad += !ok;
        worst_t = fmax(worst_t, fabs(dt));
        worst_l = fmax(worst_l, fabs(dl));
        printf("%-6s %6.3g Msun at %8.3g yr: Teff %6.0f K vs %6.0f (%+5.1f %%), log L %+6.3f vs %+6.3f (%+.3f) %s\n",
               dwarfs[i].spt, dwarfs[i].m, age, pow(10.0, st.log_teff_k), dwarfs[i].teff, 100 * dt,
               st.log_l_lsun, dwarfs[i].logl, dl, ok ? "ok" : "OUTSIDE");
        hrt_star_free(s);
    }
    printf("mean dwarfs: %zu of %zu outside; largest |dTeff| %.1f %% (limit 6), |dlog L| %.3f dex (limit 0.15)\n", bad, n,
           100 * worst_t, worst_l);
    ck_assert_uint_eq(bad, 0);
    hrt_grid_close(g);
}
END_TEST

/* An independent check of the same luminosities: the empirical
 * mass-luminosity relation of Eker et al. (2018, MNRAS 479, 5491) from
 * detached eclipsing binaries, six power laws over 0.179-31 Msun (form and
 * range read, coefficients from memory).  On a dense sweep of field dwarfs
 * the grid stays within 0.2 dex of it (its pieces jump by up to 0.08 dex at
 * their breaks and scatter by about 0.1). */
static double eker2018_logl(double m)
{
    static const double brk[] = {0.45, 0.72, 1.05, 2.4, 7.0};
    static const double a[] = {2.028, 4.572, 5.743, 4.329, 3.967, 2.865};
    static const double b[] = {-0.976, -0.102, -0.007, 0.010, 0.093, 1.105};
    int k = 0;
    while (k < 5 && m > brk[k])
        k++;
    return a[k] * log10(m) + b[k];
}

START_TEST(eker_mass_luminosity)
{
    hrt_grid *g = open_grid();
    double worst = 0.0, at = 0.0;
    for (int i = 0; i <= 200; i++) {
        double m = 0.179 * pow(31.0 / 0.179, i / 200.0);
        hrt_star *s = new_star(g, m, 0.014);
        hrt_state st = state_at(s, field_age(s));
        double d = st.log_l_lsun - eker2018_logl(m);
        if (fabs(d) > worst)
            worst = fabs(d), at = m;
        hrt_star_free(s);
    }
    printf("field dwarfs vs Eker et al. (2018), 0.179-31 Msun: largest |dlog L| %.3f dex at %.3g Msun (limit 0.2)\n",
           worst, at);
    ck_assert_double_le(worst, 0.2);
    hrt_grid_close(g);
}
END_TEST

/* The issue of field ages itself: K5V-M5V dwarfs at 5 Gyr, a typical field
 * age, must match the table (they did not when the field relations were
 * placed at half a main-sequence life of 10^10-10^12 yr). */
START_TEST(late_dwarfs_at_5gyr)
{
    hrt_grid *g = open_grid();
    for (size_t i = 0; i < sizeof dwarfs / sizeof dwarfs[0]; i++) {
        if (dwarfs[i].m > 0.70 || dwarfs[i].m < 0.15)
            continue;
        hrt_star *s = new_star(g, dwarfs[i].m, 0.014);
        hrt_state st = state_at(s, 5e9);
        double dt = pow(10.0, st.log_teff_k) / dwarfs[i].teff - 1.0, dl = st.log_l_lsun - dwarfs[i].logl;
        printf("%-6s at 5 Gyr: %+5.1f %% in Teff, %+.3f dex in log L\n", dwarfs[i].spt, 100 * dt, dl);
        ck_assert_double_le(fabs(dt), 0.06);
        ck_assert_double_le(fabs(dl), 0.15);
        hrt_star_free(s);
    }
    hrt_grid_close(g);
}
END_TEST

/* ------------------------------------------------------------------------
 * Smoothness in mass: no slope discontinuity of the main-sequence lifetime,
 * the ZAMS luminosity or the ZAMS radius against mass, at every grid Z and
 * half-way between them (in log Z).  On 320 masses evenly spaced in log M
 * over 0.1-150 Msun the slope d log q / d log M between neighbours may not
 * change by more than SLOPE_STEP from one interval to the next (a corner of
 * the first edition's lifetimes changed it by 0.6-1.2 in one step; the
 * smooth relations change it by at most about 0.1 away from the
 * hydrogen-burning limit, where it is steep by nature: below 0.1 Msun
 * nothing is checked).  Lifetimes and radii must also fall and rise
 * monotonically with mass (common practice).
 * ------------------------------------------------------------------------ */
#define N_SWEEP 320
#define SLOPE_STEP 0.35

typedef struct sweep {
    double x[N_SWEEP], logt[N_SWEEP], logl[N_SWEEP], logr[N_SWEEP];
} sweep;

static void sweep_z(const hrt_grid *g, double z, sweep *w)
{
    for (int i = 0; i < N_SWEEP; i++) {
        double m = 0.1 * pow(1500.0, (double)i / (N_SWEEP - 1));
        hrt_star *s = new_star(g, m, z);
        hrt_state st = state_at_keypoint(g, s, "zams");
        w->x[i] = log10(m);
        w->logt[i] = log10(t_ms(s));
        w->logl[i] = st.log_l_lsun;
        w->logr[i] = st.log_r_rsun;
        hrt_star_free(s);
    }
}

/* Largest change of slope between neighbouring intervals; *at its mass. */
static double worst_slope_step(const double *x, const double *y, double *at)
{
    double worst = 0.0;
    for (int i = 1; i + 1 < N_SWEEP; i++) {
        double s0 = (y[i] - y[i - 1]) / (x[i] - x[i - 1]), s1 = (y[i + 1] - y[i]) / (x[i + 1] - x[i]);
        if (fabs(s1 - s0) > worst)
            worst = fabs(s1 - s0), *at = pow(10.0, x[i]);
    }
    return worst;
}

START_TEST(smooth_in_mass)
{
    hrt_grid *g = open_grid();
    static sweep w;
    for (size_t k = 0; k < 2 * N_Z - 1; k++) {
        double z = k % 2 ? sqrt(grid_z[k / 2] * grid_z[k / 2 + 1]) : grid_z[k / 2];
        sweep_z(g, z, &w);
        double at_t = 0, at_l = 0, at_r = 0;
        double st = worst_slope_step(w.x, w.logt, &at_t), sl = worst_slope_step(w.x, w.logl, &at_l),
               sr = worst_slope_step(w.x, w.logr, &at_r);
        printf("Z = %.3g: largest slope change of log t_MS %.3f (at %.3g Msun), ZAMS log L %.3f (%.3g), "
               "log R %.3f (%.3g); limit %.2f\n",
               z, st, at_t, sl, at_l, sr, at_r, SLOPE_STEP);
        ck_assert_double_le(st, SLOPE_STEP);
        ck_assert_double_le(sl, SLOPE_STEP);
        ck_assert_double_le(sr, SLOPE_STEP);
        for (int i = 1; i < N_SWEEP; i++) {
            ck_assert_msg(w.logt[i] < w.logt[i - 1], "t_MS rises from %g to %g Msun at Z = %g", pow(10, w.x[i - 1]),
                          pow(10, w.x[i]), z);
            ck_assert_msg(w.logl[i] > w.logl[i - 1], "ZAMS L falls from %g to %g Msun at Z = %g", pow(10, w.x[i - 1]),
                          pow(10, w.x[i]), z);
        }
    }
    hrt_grid_close(g);
}
END_TEST

/* ------------------------------------------------------------------------
 * Massive stars at solar Z: main-sequence lifetimes within 15 % of typical
 * published non-rotating models (from memory: 7.0 Myr at 25 Msun, 4.6 at 40,
 * 3.7 at 60, 2.8 at 120) and ZAMS temperatures within 5 % (from memory:
 * log Teff 4.41 at 10 Msun, 4.55 at 20, 4.64 at 40, 4.68 at 60, 4.71 at 100);
 * every main-sequence star below 95 % of its electron-scattering Eddington
 * luminosity, kappa = 0.02 (1 + X) m^2/kg (textbook).
 * ------------------------------------------------------------------------ */
START_TEST(massive_main_sequence)
{
    hrt_grid *g = open_grid();
    static const double mt[] = {25, 40, 60, 120}, tref[] = {7.0e6, 4.6e6, 3.7e6, 2.8e6};
    for (int i = 0; i < 4; i++) {
        hrt_star *s = new_star(g, mt[i], 0.014);
        double t = t_ms(s);
        printf("t_MS(%g Msun) = %.3g Myr (published about %.2g, ratio %.3f)\n", mt[i], t / 1e6, tref[i] / 1e6,
               t / tref[i]);
        ck_assert_double_le(fabs(t / tref[i] - 1.0), 0.15);
        hrt_star_free(s);
    }
    static const double mz[] = {10, 20, 40, 60, 100}, lt[] = {4.41, 4.55, 4.64, 4.68, 4.71};
    for (int i = 0; i < 5; i++) {
        hrt_star *s = new_star(g, mz[i], 0.014);
        hrt_state st = state_at_keypoint(g, s, "zams");
        double d = pow(10.0, st.log_teff_k - lt[i]) - 1.0;
        printf("ZAMS Teff(%g Msun) = %.0f K (published about %.0f, %+.1f %%)\n", mz[i], pow(10.0, st.log_teff_k),
               pow(10.0, lt[i]), 100 * d);
        ck_assert_double_le(fabs(d), 0.05);
        hrt_star_free(s);
    }
    /* Eddington: every main-sequence EEP of every track, surface X of the model's composition */
    double worst = 0.0;
    for (size_t k = 0; k < N_Z; k++) {
        double x = 1.0 - (0.245 + 1.5 * grid_z[k]) - grid_z[k]; /* Y = 0.245 + 1.5 Z, from memory */
        for (int i = 0; i < 40; i++) {
            double m = 8.0 * pow(150.0 / 8.0, i / 39.0);
            hrt_star *s = new_star(g, m, grid_z[k]);
            size_t r = (size_t)hrt_star_route(s);
            long j0 = hrt_grid_keypoint_eep(g, r, (size_t)keypoint_index(s, "zams"));
            long j1 = hrt_grid_keypoint_eep(g, r, (size_t)keypoint_index(s, "tams"));
            for (long j = j0; j <= j1; j++) {
                hrt_state st;
                ck_assert_int_eq(hrt_star_eep_state(s, (size_t)j, &st), HRT_OK);
                double l_edd = 4.0 * 3.14159265358979323846 * HRT_GM_SUN * st.mass_msun * HRT_C_M_S / (0.02 * (1.0 + x)) / HRT_LSUN_W;
                worst = fmax(worst, pow(10.0, st.log_l_lsun) / l_edd);
            }
            hrt_star_free(s);
        }
    }
    printf("main sequence, 8-150 Msun, every Z: largest L / L_Edd %.3f (limit 0.95)\n", worst);
    ck_assert_double_lt(worst, 0.95);
    hrt_grid_close(g);
}
END_TEST

/* ------------------------------------------------------------------------
 * Metallicity (from memory, typical published models): 1 Msun at Z = 0.001
 * lives 5.5-7.5 Gyr on the main sequence; the turnoff of a 12.5 Gyr
 * population at Z = 3e-4 is 0.76-0.86 Msun; at 12 Gyr the metal-poor
 * (Z = 3e-4) turnoff is clearly hotter (by more than 0.04 dex in log Teff)
 * and brighter than the solar one.  Lower Z: shorter lives at every mass up
 * to 3 Msun on a dense sweep (common practice).
 * ------------------------------------------------------------------------ */

/* Largest initial mass still on the main sequence (or before it) at age. */
static double turnoff_mass(const hrt_grid *g, double z, double age)
{
    double lo = 0.5, hi = 3.0;
    for (int i = 0; i < 60; i++) {
        double mid = sqrt(lo * hi), m = mid;
        hrt_state st;
        ck_assert_int_eq(hrt_eval(g, 1, &m, NULL, z, &age, &st, NULL), HRT_OK);
        if (st.phase == HRT_PHASE_MS || st.phase == HRT_PHASE_PRE_MS)
            lo = mid;
        else
            hi = mid;
    }
    return lo;
}

/* The hottest main-sequence point of an isochrone (the turnoff). */
static hrt_state hottest_ms(const hrt_grid *g, double z, double age)
{
    size_t n = 0;
    hrt_error err;
    ck_assert_int_eq(hrt_isochrone(g, age, z, NULL, 0, &n, &err), HRT_E_BUFFER);
    hrt_state *pts = malloc(n * sizeof *pts), best = {0};
    ck_assert_ptr_nonnull(pts);
    ck_assert_int_eq(hrt_isochrone(g, age, z, pts, n, &n, &err), HRT_OK);
    best.log_teff_k = -INFINITY;
    for (size_t i = 0; i < n; i++)
        if (pts[i].phase == HRT_PHASE_MS && pts[i].log_teff_k > best.log_teff_k)
            best = pts[i];
    free(pts);
    return best;
}

START_TEST(metallicity_trends)
{
    hrt_grid *g = open_grid();
    hrt_star *s = new_star(g, 1.0, 0.001);
    double t = t_ms(s);
    printf("t_MS(1 Msun, Z = 0.001) = %.2f Gyr (published about 5.5-7.5)\n", t / 1e9);
    ck_assert(t >= 5.5e9 && t <= 7.5e9);
    hrt_star_free(s);
    double mto = turnoff_mass(g, 3e-4, 12.5e9);
    printf("turnoff mass at 12.5 Gyr, Z = 3e-4: %.3f Msun (published about 0.76-0.86)\n", mto);
    ck_assert(mto >= 0.76 && mto <= 0.86);
    hrt_state poor = hottest_ms(g, 3e-4, 12e9), sol = hottest_ms(g, 0.014, 12e9);
    printf("12 Gyr turnoffs: Z = 3e-4 at %.0f K, log L %.3f; Z = 0.014 at %.0f K, log L %.3f\n",
           pow(10.0, poor.log_teff_k), poor.log_l_lsun, pow(10.0, sol.log_teff_k), sol.log_l_lsun);
    ck_assert_double_ge(poor.log_teff_k - sol.log_teff_k, 0.04);
    ck_assert_double_gt(poor.log_l_lsun, sol.log_l_lsun);
    for (int i = 0; i <= 100; i++) {
        double m = 0.1 * pow(30.0, i / 100.0);
        hrt_star *a = new_star(g, m, 1e-4), *b = new_star(g, m, 0.001), *c = new_star(g, m, 0.014);
        ck_assert_msg(t_ms(a) < t_ms(b) && t_ms(b) < t_ms(c), "t_MS at %g Msun does not fall with Z", m);
        hrt_star_free(a);
        hrt_star_free(b);
        hrt_star_free(c);
    }
    hrt_grid_close(g);
}
END_TEST

/* ------------------------------------------------------------------------
 * The hook at core-hydrogen exhaustion of stars with a convective core
 * (stellar-structure texts; Maeder & Mermilliod 1981, A&A 93, 136, from
 * memory): above about 1.2 Msun the star turns hotter (by more than 0.015
 * dex) between its coolest main-sequence point and the TAMS; a star of
 * 1 Msun or less (radiative core) does not (less than 0.003 dex).
 * ------------------------------------------------------------------------ */
static double hook_amplitude(const hrt_grid *g, double m, double z)
{
    hrt_star *s = new_star(g, m, z);
    size_t r = (size_t)hrt_star_route(s);
    long j0 = hrt_grid_keypoint_eep(g, r, (size_t)keypoint_index(s, "zams"));
    long j1 = hrt_grid_keypoint_eep(g, r, (size_t)keypoint_index(s, "tams"));
    double coolest = INFINITY, last = NAN;
    long at = -1;
    for (long j = (j0 + j1) / 2; j <= j1; j++) {
        hrt_state st;
        ck_assert_int_eq(hrt_star_eep_state(s, (size_t)j, &st), HRT_OK);
        if (st.log_teff_k < coolest)
            coolest = st.log_teff_k, at = j;
        last = st.log_teff_k;
    }
    hrt_star_free(s);
    /* a star that heats all along its late main sequence (low-mass stars)
     * has its coolest point at the start of the range: no hook */
    return at > (j0 + j1) / 2 ? last - coolest : 0.0;
}

START_TEST(main_sequence_hook)
{
    hrt_grid *g = open_grid();
    for (size_t k = 0; k < N_Z; k += 2) {
        for (int i = 0; i <= 30; i++) {
            double m = 1.5 * pow(40.0 / 1.5, i / 30.0);
            double a = hook_amplitude(g, m, grid_z[k]);
            ck_assert_msg(a > 0.015, "no hook at %g Msun, Z = %g (%.4f dex)", m, grid_z[k], a);
        }
        for (int i = 0; i <= 10; i++) {
            double m = 0.6 + 0.04 * i;
            double a = hook_amplitude(g, m, grid_z[k]);
            ck_assert_msg(a < 0.003, "a hook at %g Msun, Z = %g (%.4f dex)", m, grid_z[k], a);
        }
    }
    printf("hook: %.3f dex at 2 Msun, %.3f at 10 Msun, %.4f at 1 Msun (Z = 0.014)\n", hook_amplitude(g, 2.0, 0.014),
           hook_amplitude(g, 10.0, 0.014), hook_amplitude(g, 1.0, 0.014));
    hrt_grid_close(g);
}
END_TEST

/* ------------------------------------------------------------------------
 * The pre-main sequence.
 * 1. Every age from 10^4 yr after the birthline answers with a modelled
 *    state for every mass and Z of the grid (a young cluster, a constant
 *    star-formation history): no NOT_MODELLED flag, finite quantities, the
 *    phase pre_ms before the ZAMS.
 * 2. The Sun reaches its ZAMS after 30-50 Myr (common practice).
 * 3. Fully convective stars (0.1-0.3 Msun) contract down the Hayashi track:
 *    Teff changes by less than 0.06 dex while L falls by more than 1 dex
 *    (Hayashi 1961, PASJ 13, 450).
 * 4. A T Tauri star of 1 Msun at 1 Myr: Teff 3900-4700 K and L 1-6 Lsun
 *    (from memory: the T Tauri stars of nearby star-forming regions).
 * 5. A pre-main-sequence star of 1.2 Msun or less is brighter at 1 Myr than
 *    at its ZAMS (it is still contracting from above: common practice).
 * ------------------------------------------------------------------------ */
START_TEST(pre_main_sequence)
{
    hrt_grid *g = open_grid();
    for (size_t k = 0; k < N_Z; k++)
        for (int i = 0; i <= 60; i++) {
            double m = 0.08 * pow(150.0 / 0.08, i / 60.0);
            hrt_star *s = new_star(g, m, grid_z[k]);
            double zams = keypoint_age(s, "zams"), tams = keypoint_age(s, "tams");
            for (int a = 0; a <= 40; a++) {
                double age = 1e4 * pow(tams / 1e4, a / 40.0);
                hrt_state st = state_at(s, age);
                ck_assert_msg(!(st.flags & HRT_FLAG_NOT_MODELLED) && isfinite(st.log_l_lsun) &&
                                  isfinite(st.log_teff_k),
                              "M = %g, Z = %g, age %g yr: not modelled", m, grid_z[k], age);
                if (age < zams)
                    ck_assert_int_eq(st.phase, HRT_PHASE_PRE_MS);
            }
            hrt_star_free(s);
        }
    hrt_star *sun = new_star(g, 1.0, 0.014);
    double zams = keypoint_age(sun, "zams");
    hrt_state tt = state_at(sun, 1e6);
    printf("1 Msun: ZAMS at %.1f Myr (30-50); at 1 Myr Teff %.0f K, L %.2f Lsun\n", zams / 1e6,
           pow(10.0, tt.log_teff_k), pow(10.0, tt.log_l_lsun));
    ck_assert(zams >= 30e6 && zams <= 50e6);
    ck_assert(pow(10.0, tt.log_teff_k) >= 3900 && pow(10.0, tt.log_teff_k) <= 4700);
    ck_assert(pow(10.0, tt.log_l_lsun) >= 1.0 && pow(10.0, tt.log_l_lsun) <= 6.0);
    hrt_star_free(sun);
    for (int i = 0; i <= 10; i++) {
        double m = 0.1 * pow(3.0, i / 10.0);
        hrt_star *s = new_star(g, m, 0.014);
        hrt_state b = state_at(s, keypoint_age(s, "birthline") * 1.0001), z0 = state_at_keypoint(g, s, "zams");
        double dt = fabs(b.log_teff_k - z0.log_teff_k), dl = b.log_l_lsun - z0.log_l_lsun;
        printf("%.3g Msun: birthline to ZAMS %.3f dex in Teff, %.2f dex in L\n", m, dt, dl);
        ck_assert_double_lt(dt, 0.06);
        ck_assert_double_gt(dl, 1.0);
        hrt_star_free(s);
    }
    for (int i = 0; i <= 30; i++) {
        double m = 0.1 * pow(12.0, i / 30.0);
        hrt_star *s = new_star(g, m, 0.014);
        ck_assert_double_gt(state_at(s, 1e6).log_l_lsun, state_at_keypoint(g, s, "zams").log_l_lsun);
        hrt_star_free(s);
    }
    hrt_grid_close(g);
}
END_TEST

static Suite *suite(void)
{
    Suite *su = suite_create("default_grid_ms");
    TCase *tc = tcase_create("checks");
    tcase_add_test(tc, mean_dwarfs_at_field_ages);
    tcase_add_test(tc, eker_mass_luminosity);
    tcase_add_test(tc, late_dwarfs_at_5gyr);
    tcase_add_test(tc, smooth_in_mass);
    tcase_add_test(tc, massive_main_sequence);
    tcase_add_test(tc, metallicity_trends);
    tcase_add_test(tc, main_sequence_hook);
    tcase_add_test(tc, pre_main_sequence);
    suite_add_tcase(su, tc);
    return su;
}

int main(void)
{
    setvbuf(stdout, NULL, _IONBF, 0); /* figures survive a failing forked test */
    SRunner *sr = srunner_create(suite());
    srunner_run_all(sr, CK_VERBOSE);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed == 0 ? EXIT_SUCCESS : EXIT_FAILURE;
}
