/*
 * Semi-analytic evolutionary tracks for hrtrail's default grid.
 *
 * Each relation names its source and a provenance tag:
 *   [read]               taken from the named publication,
 *   [from memory]        a published relation or value recalled, not re-checked,
 *   [derived]            computed here from other relations or constants,
 *   [engineering choice] ours; not a published relation.
 * tracks/MODEL.md lists every relation with its validity range and accuracy.
 *
 * Units: masses Msun, luminosities Lsun, radii Rsun, Teff K, ages yr.
 */
#include "model.h"
#include "model_internal.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "hrtrail.h"


/* ------------------------------------------------------------------------
 * Constants
 * ------------------------------------------------------------------------ */
/* Mass defect of 4 1H -> 4He (26.73 MeV per 4 protons) [derived]. */
#define MASS_DEFECT 0.00712
/* Fraction of the released energy carried off by neutrinos (2-7 % in the pp
 * chains and CNO cycle) [from memory]; we take 5 %. */
#define NEUTRINO_LOSS 0.05

static double msun_kg(void) { return HRT_GM_SUN / HRT_G_SI; }

/* Core growth per unit luminosity: dMc/dt = B L / X, B in Msun yr^-1 Lsun^-1:
 * the energy Q = 0.00712 c^2 per unit mass of hydrogen burned, of which 95 %
 * leaves as light [derived]; B = 1.0e-11. */
static double core_growth_b(void)
{
    double q = MASS_DEFECT * HRT_C_M_S * HRT_C_M_S * (1.0 - NEUTRINO_LOSS);
    return HRT_LSUN_W * HRT_YEAR_S / (q * msun_kg());
}

/* Nuclear time scale constant 0.00712 Msun c^2 / Lsun = 1.05e11 yr [derived]. */
static double nuclear_time_yr(void)
{
    return MASS_DEFECT * msun_kg() * HRT_C_M_S * HRT_C_M_S / HRT_LSUN_W / HRT_YEAR_S;
}

/* Kelvin-Helmholtz time G Msun^2 / (Rsun Lsun) = 3.14e7 yr [derived]. */
static double kh_time_yr(void)
{
    return HRT_GM_SUN * msun_kg() / (HRT_RSUN_M * HRT_LSUN_W) / HRT_YEAR_S;
}

/* ------------------------------------------------------------------------
 * Smooth helpers: every relation must be smooth in mass inside a route, so
 * published piecewise laws are joined with smooth blends.
 * ------------------------------------------------------------------------ */
double logistic(double x) { return 1.0 / (1.0 + exp(-x)); }

/* C1 smoothstep of x between a and b (0 below a, 1 above b). */
double sstep(double x, double a, double b)
{
    double u = (x - a) / (b - a);
    if (u <= 0.0)
        return 0.0;
    if (u >= 1.0)
        return 1.0;
    return u * u * (3.0 - 2.0 * u);
}

/* Smooth maximum / minimum (hyperbolic); they differ from max/min by at most k/2. */
double smax(double a, double b, double k) { return 0.5 * (a + b + sqrt((a - b) * (a - b) + k * k)); }
double smin(double a, double b, double k) { return 0.5 * (a + b - sqrt((a - b) * (a - b) + k * k)); }

/* Smooth minimum of two positive numbers (a p-norm of the reciprocals). */
double smin_pos(double a, double b)
{
    return pow(pow(a, -4.0) + pow(b, -4.0), -0.25);
}

/* Piecewise-linear interpolation through (x_i, y_i), constant outside, with
 * every corner rounded over a width w in x (softplus blends): C-infinity. */
double soft_table(const double *x, const double *y, int n, double w, double xq)
{
    double v = y[0];
    for (int i = 0; i + 1 < n; i++) {
        double s = (y[i + 1] - y[i]) / (x[i + 1] - x[i]);
        /* add s * (clamp of xq into [x_i, x_{i+1}]) with soft corners */
        double a = (xq - x[i]) / w, b = (xq - x[i + 1]) / w;
        double pa = a > 30 ? a : log1p(exp(a));
        double pb = b > 30 ? b : log1p(exp(b));
        v += s * w * (pa - pb);
    }
    return v;
}

/* ------------------------------------------------------------------------
 * Composition
 * ------------------------------------------------------------------------ */
/* Helium enrichment Y = 0.245 + 1.5 Z [from memory: primordial helium and
 * dY/dZ ~ 1.5]; X = 1 - Y - Z. */
double gen_x_hydrogen(double z) { return 1.0 - (0.245 + 1.5 * z) - z; }

static double zeta_of(const gen_params *p, double z) { return log10(z / p->z_sun); }

void gen_params_default(gen_params *p)
{
    /* Reimers (1975) efficiency calibrated on 56 globular clusters by
     * McDonald & Zijlstra (2015, MNRAS 448, 502): 0.477 +- 0.070 [read]. */
    p->eta_reimers = 0.477;
    /* Solar Z = 0.014 (Asplund et al. 2009, ARA&A 47, 481) [from memory]. */
    p->z_sun = 0.014;
    /* Luminosity at which white-dwarf cooling takes over [engineering choice]. */
    p->log_l_wd_onset = 1.0;
}

/* ------------------------------------------------------------------------
 * Main sequence
 * ------------------------------------------------------------------------ */
/* Empirical mass-luminosity relation of Eker et al. (2018, MNRAS 479, 5491):
 * six power laws over 0.179-31 Msun (form and range [read], coefficients
 * [from memory]), extrapolated below 0.179 Msun; above 31 Msun
 * log L = 5.378 + 1.65 log(M/31) [engineering choice, matches O3V-O5V mean
 * dwarfs].  Pieces joined by logistic blends of +-2 % in mass. */
static double logl_mlr(double m)
{
    static const double brk[6] = {0.45, 0.72, 1.05, 2.4, 7.0, 31.0};
    static const double a[7] = {2.028, 4.572, 5.743, 4.329, 3.967, 2.865, 1.65};
    static const double b[7] = {-0.976, -0.102, -0.007, 0.010, 0.093, 1.105, 0.0};
    double x = log10(m);
    double v = a[0] * x + b[0];
    for (int j = 0; j < 6; j++) {
        double bj = (j == 5) ? 5.378 - 1.65 * log10(31.0) : b[j + 1];
        double s = logistic((x - log10(brk[j])) / 0.01);
        v = v * (1.0 - s) + (a[j + 1] * x + bj) * s;
    }
    return v;
}

/* Mass-radius relation of Demircan & Kahraman (1991, Ap&SS 181, 313):
 * R = 1.06 M^0.945 below 1.66 Msun, 1.33 M^0.555 above (break [read],
 * coefficients [from memory]).  Solar calibration [engineering choice]: the
 * low-mass coefficient is lowered from 1.06 to 1.00 at and below 1 Msun
 * (fading back to 1.06 by 1.5 Msun) so that the 1 Msun track passes through
 * the nominal Sun; the Sun lies 6 % below the mean field relation. */
static double logr_field(double m)
{
    double x = log10(m);
    double s = logistic((x - log10(1.66)) / 0.01);
    double c = 1.0 + 0.06 * sstep(x, 0.0, log10(1.5));
    return (log10(c) + 0.945 * x) * (1.0 - s) + (log10(1.33) + 0.555 * x) * s;
}

/* Metallicity trend of the main sequence [engineering choice]: lower Z gives
 * brighter, smaller stars; d log L / d log Z = -0.10 (M <= 1.5) to -0.03
 * (M >= 10), d log R / d log Z = +0.03 to +0.06. */
static double dlogl_dzeta(double m) { return -0.10 + 0.07 * sstep(log10(m), log10(1.5), 1.0); }
static double dlogr_dzeta(double m) { return 0.03 + 0.03 * sstep(log10(m), log10(1.5), 1.0); }

/* The empirical relations describe field stars; we place them at the
 * fractional main-sequence age TAU_FIELD, chosen so that the 1 Msun, Z = 0.014
 * track passes through the Sun at 4.57 Gyr [engineering choice]. */
#define TAU_FIELD 0.47

/* L_TAMS / L_ZAMS [engineering choice, guided by textbook values: 2.5 at
 * 1 Msun (Gough 1981 extrapolated), 2 at 2-15 Msun, 1.6 at 60 Msun; fully
 * convective stars brighten several-fold (Laughlin, Bodenheimer & Adams 1997)]. */
static double ms_lum_ratio(double m)
{
    static const double x[] = {-1.0, -0.602, -0.301, -0.155, 0.079, 0.301, 1.176, 1.778};
    static const double y[] = {0.778, 0.699, 0.477, 0.398, 0.398, 0.301, 0.301, 0.204};
    return pow(10.0, soft_table(x, y, 8, 0.05, log10(m)));
}

/* R_TAMS / R_ZAMS [engineering choice]: 1 for fully convective stars, 1.5 at
 * 1 Msun, 2.2 at 2-15 Msun, 2.75 at >= 60 Msun. */
static double ms_rad_ratio(double m)
{
    static const double x[] = {-0.602, -0.301, 0.0, 0.301, 1.176, 1.778};
    static const double y[] = {0.0, 0.079, 0.176, 0.342, 0.342, 0.439};
    return pow(10.0, soft_table(x, y, 6, 0.05, log10(m)));
}

/* Efficiency f of t_MS = f 0.00712 M c^2 / L [engineering choice]: fit
 * f = 0.09 M^(1/3) to textbook lifetimes, rising to 0.85 for fully
 * convective stars, which burn most of their hydrogen (Laughlin et al. 1997). */
static double ms_efficiency(double m)
{
    double f0 = 0.09 * cbrt(m);
    return f0 + (0.85 - f0) / (1.0 + pow(m / 0.35, 6.0));
}


static void ms_setup(const gen_params *p, double m, double z, ms_model *ms)
{
    double zeta = zeta_of(p, z);
    double logl_mid = logl_mlr(m) + dlogl_dzeta(m) * zeta;
    double logr_mid = logr_field(m) + dlogr_dzeta(m) * zeta;
    double r = ms_lum_ratio(m), rr = ms_rad_ratio(m);
    /* Gough (1981, Sol. Phys. 74, 21) solar brightening L = L0 / (1 - a t)
     * (form [read]) generalised to every mass [engineering choice]. */
    ms->a = 1.0 - 1.0 / r;
    ms->k = log(rr) / log(r);
    ms->logl_z = logl_mid + log10(1.0 - ms->a * TAU_FIELD);
    ms->logr_z = logr_mid + ms->k * log10(1.0 - ms->a * TAU_FIELD);
    /* Lifetime from the fuel: t = f 0.00712 M c^2 / L_mid (X / X_sun)
     * [derived; f is an engineering choice]. */
    ms->t_ms = ms_efficiency(m) * nuclear_time_yr() * m / pow(10.0, logl_mid) * gen_x_hydrogen(z) /
               gen_x_hydrogen(p->z_sun);
    /* Pre-main-sequence contraction time: Kelvin-Helmholtz time at the ZAMS,
     * times M/Msun below 1 Msun because low-mass stars contract while much
     * brighter than on the ZAMS [engineering choice; 50 Myr for the Sun,
     * about 0.5 Gyr at 0.1 Msun]. */
    ms->t_pre = kh_time_yr() * m * m / pow(10.0, ms->logl_z + ms->logr_z) * smin(m, 1.0, 0.1);
}

double gen_ms_lifetime_yr(const gen_params *p, double m, double z)
{
    ms_model ms;
    ms_setup(p, m, z, &ms);
    return ms.t_ms;
}

/* Helium-core mass fraction at core hydrogen exhaustion [engineering
 * choice]: 0.10 (near the Schoenberg & Chandrasekhar 1942 limit) at 1 Msun,
 * 0.12 at 3-8 Msun, 0.20 for massive stars; the whole star for fully
 * convective stars. */
double q_tams(double m)
{
    double x = log10(m);
    return 0.10 + 0.02 * sstep(x, log10(1.5), log10(3.0)) + 0.08 * sstep(x, log10(8.0), log10(20.0)) +
           0.85 / (1.0 + pow(m / 0.3, 8.0));
}

/* ------------------------------------------------------------------------
 * Surface temperatures
 * ------------------------------------------------------------------------ */
double logt_from_lr(double logl, double logr)
{
    return log10(HRT_TEFF_SUN_K) + 0.25 * logl - 0.5 * logr;
}

double logr_from_lt(double logl, double logt)
{
    return 0.5 * logl - 2.0 * (logt - log10(HRT_TEFF_SUN_K));
}

/* ------------------------------------------------------------------------
 * Mass loss
 * ------------------------------------------------------------------------ */
/* Reimers (1975, Mem. Soc. R. Sci. Liege 8, 369): 4e-13 eta L R / M Msun/yr [read]. */
double mdot_reimers(const gen_params *p, double logl, double logr, double m)
{
    return 4e-13 * p->eta_reimers * pow(10.0, logl + logr) / m;
}

/* Vink, de Koter & Lamers (2001, A&A 369, 574) hot-side rate, Z^0.85 scaling
 * [read], coefficients [from memory], v_inf/v_esc = 2.6, applied to all hot
 * stars (log Teff > 4.0, blended in over 0.1 dex) [engineering choice]. */
static double mdot_vink(double logl, double m, double logt, double zeta)
{
    double lt = logt - log10(40000.0);
    double lg = -6.697 + 2.194 * (logl - 5.0) - 1.313 * log10(m / 30.0) - 1.226 * log10(2.6 / 2.0) +
                0.933 * lt - 10.92 * lt * lt + 0.85 * zeta;
    return pow(10.0, lg) * sstep(logt, 4.0, 4.1);
}

/* Nieuwenhuijzen & de Jager (1990, A&A 231, 134): 9.6e-15 R^0.81 L^1.24 M^0.16
 * [from memory], scaled by (Z/Zsun)^0.5 [engineering choice]. */
static double mdot_ndj(double logl, double logr, double m, double zeta)
{
    return 9.6e-15 * pow(10.0, 0.81 * logr + 1.24 * logl) * pow(m, 0.16) * pow(10.0, 0.5 * zeta);
}

/* Wolf-Rayet winds 1e-13 L^1.5 Msun/yr (Hamann, Koesterke & Wessolowski 1995,
 * as reduced by a factor 10 for clumping) [from memory], scaled by
 * (Z/Zsun)^0.85 [engineering choice]. */
static double mdot_wr(double logl, double zeta)
{
    return 1e-14 * pow(10.0, 1.5 * logl) * pow(10.0, 0.85 * zeta);
}

/* ------------------------------------------------------------------------
 * Cores, giants, remnants
 * ------------------------------------------------------------------------ */
/* Core mass at the tip of the red giant branch for degenerate ignition:
 * 0.47 at Z = 0.014, 0.50 at Z = 1e-4 (Salaris & Cassisi 2005) [from memory],
 * linear in [Fe/H]. */
double mc_tip_degenerate(double zeta) { return 0.47 - 0.014 * zeta; }

/* Helium-flash mass limit: 2.0 at Z = 0.001, 2.3 at Z = 0.02 (Sweigart,
 * Greggio & Renzini 1990, ApJ 364, 527) [from memory], linear in log Z. */
double gen_m_hef(const gen_params *p, double z)
{
    (void)p;
    return 2.0 + 0.3 * (log10(z) + 3.0) / (log10(0.02) + 3.0);
}

void gen_route_boundaries(const gen_params *p, double z, double bounds[2])
{
    /* Low-mass / giant: a star can ignite helium only if its mass exceeds the
     * tip core mass; we put the boundary 0.03 Msun above it (0.50 at Z = 0.014)
     * [engineering choice; "about 0.5 Msun" is common practice]. */
    bounds[0] = mc_tip_degenerate(zeta_of(p, z)) + 0.03;
    /* Giant / supergiant: 8 Msun, the lowest core-collapse mass (Smartt 2009,
     * ARA&A 47, 63: 8 +- 1 Msun) [from memory]. */
    bounds[1] = 8.0;
}


/* ------------------------------------------------------------------------
 * Track assembly
 * ------------------------------------------------------------------------ */

void push(ctx *c, double age, double logl, double logt, double m, double mhe, double mco, int phase)
{
    gen_track *t = c->t;
    if (c->err)
        return;
    if (!(isfinite(age) && isfinite(logl) && isfinite(logt) && isfinite(m) && isfinite(mhe) &&
          isfinite(mco))) {
        c->err = 2;
        return;
    }
    if (t->n > 0 && !(age > t->s[t->n - 1].age_yr))
        age = nextafter(t->s[t->n - 1].age_yr, INFINITY) * (1.0 + 1e-13);
    if (t->n == t->cap) {
        size_t nc = t->cap ? 2 * t->cap : 1024;
        gen_sample *ns = realloc(t->s, nc * sizeof *ns);
        if (!ns) {
            c->err = 1;
            return;
        }
        t->s = ns;
        t->cap = nc;
    }
    if (mco > mhe)
        mco = mhe;
    if (mhe > m)
        mhe = m;
    t->s[t->n++] = (gen_sample){age, logl, logt, m, mhe, mco, phase};
    c->age = age;
    c->logl = logl;
    c->logt = logt;
    c->m = m;
    c->mhe = mhe;
    c->mco = mco;
}

void keypoint(ctx *c)
{
    if (c->err)
        return;
    c->t->kp[c->t->n_kp++] = c->t->n - 1;
}

/* Relabel the phase of the last sample (the keypoint opening a segment). */
void set_last_phase(ctx *c, int phase)
{
    if (!c->err && c->t->n > 0)
        c->t->s[c->t->n - 1].phase = phase;
}

/* Main sequence: ZAMS (keypoint 0) to TAMS (keypoint 1). */
void seg_ms(ctx *c)
{
    const int n = 400;
    const ms_model *ms = &c->ms;
    double q = q_tams(c->m0);
    double m = c->m0, age0 = ms->t_pre, prev_t = 0.0, prev_mdot = 0.0;
    double slope = (logl_mlr(c->m0 * 1.01) - logl_mlr(c->m0 / 1.01)) / (2.0 * log10(1.01));
    for (int i = 0; i <= n; i++) {
        double u = (double)i / n;
        double tau = 1.0 - pow(1.0 - u, 1.5); /* denser near the TAMS */
        /* luminosity follows the current mass along the local slope of the
         * mass-luminosity relation (matters only for winds of massive stars)
         * [engineering choice] */
        double logl = ms->logl_z - log10(1.0 - ms->a * tau) + slope * log10(m / c->m0);
        double logr = ms->logr_z + ms->k * (logl - ms->logl_z);
        double logt = logt_from_lr(logl, logr);
        double t = tau * ms->t_ms;
        m -= prev_mdot * (t - prev_t);
        double mdot = mdot_reimers(c->p, logl, logr, m) + mdot_vink(logl, m, logt, c->zeta);
        prev_t = t;
        prev_mdot = mdot;
        push(c, age0 + t, logl, logt, m, q * m * tau * tau, 0.0, HRT_PHASE_MS);
        if (i == 0)
            keypoint(c);
    }
    keypoint(c);
}

/* Core helium burning lifetime for stars above the flash limit, fraction of
 * t_MS: 0.2 at 2.5 Msun to 0.1 at >= 10 Msun [from memory]. */
double f_cheb(double m)
{
    static const double x[] = {0.398, 1.0};
    static const double y[] = {0.2, 0.1};
    return soft_table(x, y, 2, 0.05, log10(m));
}

/* Blue-loop amplitude in log Teff [engineering choice]: loops for 4-12 Msun,
 * larger at low Z. */
static double loop_amplitude(double m, double zeta)
{
    double x = log10(m);
    double a = 0.25 * sstep(x, log10(3.5), log10(5.0)) * (1.0 - sstep(x, log10(10.0), log10(14.0)));
    return a * fmin(fmax(1.0 - 0.1 * zeta, 0.8), 1.3);
}

static double loop_shape(double phi)
{
    if (phi <= 0.15 || phi >= 0.95)
        return 0.0;
    double s = sin(PI * (phi - 0.15) / 0.8);
    return s * s;
}

/* The low-mass and giant routes: the main sequence, then what follows it
 * (model_giant.c). */
static void route_low(ctx *c)
{
    seg_ms(c);
    low_after_ms(c);
}

static void route_giant(ctx *c)
{
    seg_ms(c);
    giant_after_ms(c);
}

/* ---------------- supergiant route ---------------- */
/* Humphreys-Davidson limit: no cool supergiants above log L = 5.5 (Davies,
 * Crowther & Beasor 2018, MNRAS 478, 3138) [read]. */
#define LOGL_HD 5.5
/* Width in log L over which stars turn from red to blue supergiants at the
 * limit (yellow supergiants in between) [engineering choice]. */
#define HD_WIDTH 0.12

/* Red-supergiant temperature: 3800 K at Z = 0.014 (Levesque et al. 2005, ApJ
 * 628, 973: 3500-4300 K) [from memory], hotter at low Z (Davies et al. 2018)
 * [read: trend; slope engineering choice]. */
static double logt_rsg(double zeta) { return 3.58 - 0.04 * zeta; }
#define LOGT_BSG 4.3 /* hot post-main-sequence star above the limit [engineering choice] */
#define LOGT_WR 4.8  /* stripped helium star [engineering choice] */

static double eddington_logl(double m, double x)
{
    /* L_Edd = 4 pi G M c / kappa_es, kappa_es = 0.02 (1 + X) m^2/kg [read: textbook]. */
    double kappa = 0.02 * (1.0 + x);
    return log10(4.0 * PI * HRT_G_SI * m * msun_kg() * HRT_C_M_S / kappa / HRT_LSUN_W);
}

static int sg_phase(double logt, double env_frac)
{
    if (env_frac < 0.05 && logt > 4.4)
        return HRT_PHASE_WR;
    return logt > 3.8 ? HRT_PHASE_BSG : HRT_PHASE_RSG;
}

/* Supergiant surface temperature [engineering choice]: red below the
 * Humphreys-Davidson limit (with the blue loop of 8-12 Msun stars), blue above
 * it, moving blue as the hydrogen envelope thins below about 20 % of the mass
 * and a Wolf-Rayet star once it is gone (half-way at 10 %). */
typedef struct sg_surface {
    double logt_cool, loop;
} sg_surface;

static double sg_logt(const sg_surface *sf, double logl, double m, double mhe, double phi)
{
    double h = logistic((logl - LOGL_HD) / HD_WIDTH);
    double lt = (1.0 - h) * (sf->logt_cool + sf->loop * loop_shape(phi)) + h * LOGT_BSG;
    double ef = fmax(m - mhe, 0.0) / m;
    double w = 1.0 / (1.0 + pow(fmax(ef, 1e-9) / 0.1, 3.0));
    return lt + (LOGT_WR - lt) * w;
}

static void route_supergiant(ctx *c)
{
    seg_ms(c);
    double m_t = c->m, logl_t = c->logl, logt_t = c->logt;
    double mhe_t = q_tams(c->m0) * m_t;
    /* Final He-core mass before winds: 0.1 M^1.4 [engineering choice]. */
    double mhe_fin0 = 0.1 * pow(c->m0, 1.4);
    if (mhe_fin0 < mhe_t * 1.05)
        mhe_fin0 = mhe_t * 1.05;
    /* CHeB luminosity 1.4 -> 1.9 L_TAMS at 10 Msun, 1.1 -> 1.25 at >= 60 Msun,
     * kept below 0.9 L_Edd [engineering choice; 1.5-2 L_TAMS is textbook]. */
    static const double fx[] = {1.0, 1.778};
    static const double f0y[] = {0.146, 0.041}, f1y[] = {0.279, 0.097};
    double lx = log10(c->m0);
    double logl_c0 = logl_t + soft_table(fx, f0y, 2, 0.05, lx);
    double logl_c1 = logl_t + soft_table(fx, f1y, 2, 0.05, lx);
    double t_cross = 0.008 * c->ms.t_ms;   /* [from memory: 0.5-1 % of t_MS] */
    double t_cheb = f_cheb(c->m0) * c->ms.t_ms;
    double t_late = 0.01 * t_cheb;         /* C burning onwards [engineering choice] */
    sg_surface sf = {logt_rsg(c->zeta), loop_amplitude(c->m0, c->zeta)};


    double m = m_t, mhe = mhe_t, mco = 0.0;
    /* --- Hertzsprung-gap crossing --- */
    {
        const int n = 200;
        double age0 = c->age;
        double logt_c0 = sg_logt(&sf, logl_c0, m_t, mhe_t, 0.0);
        set_last_phase(c, HRT_PHASE_SUBGIANT);
        for (int i = 1; i <= n; i++) {
            double u = (double)i / n, dt = t_cross / n;
            double logl = logl_t + (logl_c0 - logl_t) * u;
            double logt = logt_t + (logt_c0 - logt_t) * u;
            double logr = logr_from_lt(logl, logt);
            double md = mdot_vink(logl, m, logt, c->zeta) + mdot_ndj(logl, logr, m, c->zeta) * (1.0 - sstep(logt, 3.8, 4.0));
            m -= md * dt;
            mhe = mhe_t + (mhe_fin0 - mhe_t) * 0.02 * u;
            push(c, age0 + t_cross * u, logl, logt, m, mhe, 0.0, HRT_PHASE_SUBGIANT);
        }
    }
    keypoint(c); /* cheb_start */
    /* --- core helium burning as a supergiant --- */
    {
        const int n = 400;
        double age0 = c->age, mhe_s = c->mhe;
        for (int i = 1; i <= n; i++) {
            double phi = (double)i / n, dt = t_cheb / n;
            double logl = logl_c0 + (logl_c1 - logl_c0) * phi;
            double ledd = eddington_logl(m, c->x);
            logl = smin(logl, ledd - 0.046, 0.02);
            double mhe_target = mhe_s + (mhe_fin0 - mhe_s) * phi;
            mhe = fmin(mhe_target, m);
            double logt = sg_logt(&sf, logl, m, mhe, phi);
            double logr = logr_from_lt(logl, logt);
            double env = fmax(m - mhe, 0.0);
            double h = logistic((logl - LOGL_HD) / 0.15);
            /* envelope winds: cool (de Jager type), hot (Vink), and above the
             * Humphreys-Davidson limit an eruptive rate that would strip the
             * envelope within 60 % of CHeB, fading in over 0.15 dex in L
             * [engineering choice] */
            double md_env = mdot_ndj(logl, logr, m, c->zeta) * (1.0 - sstep(logt, 3.8, 4.0)) +
                            mdot_vink(logl, m, logt, c->zeta) + h * (m_t - mhe_t) / (0.6 * t_cheb);
            md_env *= env / (env + 0.02 * m);
            double md = md_env + mdot_wr(logl, c->zeta) * (1.0 - env / (env + 0.02 * m));
            m -= md * dt;
            if (m < 0.5 * mhe_s)
                m = 0.5 * mhe_s;
            mhe = fmin(mhe_target, m);
            mco = 0.65 * mhe * phi;
            push(c, age0 + t_cheb * phi, logl, logt, m, mhe, mco, HRT_PHASE_BSG);
            c->t->s[c->t->n - 1].phase = sg_phase(logt, env / m);
        }
        /* the keypoint sample opening this segment takes the phase of the segment */
        c->t->s[c->t->kp[c->t->n_kp - 1]].phase = c->t->s[c->t->kp[c->t->n_kp - 1] + 1].phase;
    }
    keypoint(c); /* cheb_end */
    /* --- late burning stages to core collapse --- */
    {
        const int n = 100;
        double age0 = c->age, logl0 = c->logl, m1 = c->m, mhe1 = c->mhe;
        for (int i = 1; i <= n; i++) {
            double u = (double)i / n;
            double logl = logl0 + 0.08 * u; /* [engineering choice] */
            double logt = sg_logt(&sf, logl, m1, mhe1, 1.0);
            double co = 0.65 * mhe1 + (0.70 * mhe1 - 0.65 * mhe1) * u;
            int ph = sg_phase(logt, (m1 - mhe1) / m1);
            push(c, age0 + t_late * u, logl, logt, m1, mhe1, co, i == n ? HRT_PHASE_NS : ph);
            if (i == 1)
                c->t->s[c->t->kp[c->t->n_kp - 1]].phase = ph;
        }
    }
    keypoint(c); /* core_collapse */
    int kind = HRT_REMNANT_NS;
    double mrem = NAN; /* refused by the grid builder if the rule cannot apply */
    hrt_collapse_remnant(c->mco, c->m, &kind, &mrem); /* Fryer et al. 2012, in lib/core/remnant.c */
    c->t->remnant = kind;
    c->t->remnant_mass = mrem;
    c->t->s[c->t->n - 1].phase = kind == HRT_REMNANT_BH ? HRT_PHASE_BH : HRT_PHASE_NS;
}

int gen_track_compute(const gen_params *p, double m, double z, int route, gen_track *t, char *msg,
                      size_t msglen)
{
    memset(t, 0, sizeof *t);
    t->initial_mass = m;
    t->z = z;
    t->route = route;
    t->remnant_mass = NAN;
    ctx c = {0};
    c.p = p;
    c.t = t;
    c.m0 = m;
    c.z = z;
    c.x = gen_x_hydrogen(z);
    c.zeta = zeta_of(p, z);
    c.b = core_growth_b();
    ms_setup(p, m, z, &c.ms);
    switch (route) {
    case GEN_ROUTE_LOW:
        route_low(&c);
        break;
    case GEN_ROUTE_GIANT:
        route_giant(&c);
        break;
    case GEN_ROUTE_SUPERGIANT:
        route_supergiant(&c);
        break;
    default:
        snprintf(msg, msglen, "unknown route %d", route);
        return -1;
    }
    if (c.err) {
        snprintf(msg, msglen, "M = %g, Z = %g: %s at sample %zu", m, z,
                 c.err == 1 ? "out of memory" : "non-finite value", t->n);
        return -1;
    }
    return 0;
}

void gen_track_free(gen_track *t)
{
    if (t) {
        free(t->s);
        t->s = NULL;
        t->n = t->cap = 0;
    }
}
