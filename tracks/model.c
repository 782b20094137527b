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

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "hrtrail.h"

#define PI 3.14159265358979323846

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
static double logistic(double x) { return 1.0 / (1.0 + exp(-x)); }

/* C1 smoothstep of x between a and b (0 below a, 1 above b). */
static double sstep(double x, double a, double b)
{
    double u = (x - a) / (b - a);
    if (u <= 0.0)
        return 0.0;
    if (u >= 1.0)
        return 1.0;
    return u * u * (3.0 - 2.0 * u);
}

/* Smooth maximum / minimum (hyperbolic); they differ from max/min by at most k/2. */
static double smax(double a, double b, double k) { return 0.5 * (a + b + sqrt((a - b) * (a - b) + k * k)); }
static double smin(double a, double b, double k) { return 0.5 * (a + b - sqrt((a - b) * (a - b) + k * k)); }

/* Smooth minimum of two positive numbers (a p-norm of the reciprocals). */
static double smin_pos(double a, double b)
{
    return pow(pow(a, -4.0) + pow(b, -4.0), -0.25);
}

/* Piecewise-linear interpolation through (x_i, y_i), constant outside, with
 * every corner rounded over a width w in x (softplus blends): C-infinity. */
static double soft_table(const double *x, const double *y, int n, double w, double xq)
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

typedef struct ms_model {
    double logl_z, logr_z; /* ZAMS */
    double a, k;           /* L = L_Z / (1 - a tau), R = R_Z (L/L_Z)^k */
    double t_ms, t_pre;    /* yr */
} ms_model;

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
static double q_tams(double m)
{
    double x = log10(m);
    return 0.10 + 0.02 * sstep(x, log10(1.5), log10(3.0)) + 0.08 * sstep(x, log10(8.0), log10(20.0)) +
           0.85 / (1.0 + pow(m / 0.3, 8.0));
}

/* ------------------------------------------------------------------------
 * Surface temperatures
 * ------------------------------------------------------------------------ */
/* Hayashi-line (red giant and AGB) temperature [engineering choice, fitted
 * to the homology result Teff ~ Z^(-4/51) M^(7/51) (Hayashi 1961; Hansen,
 * Kawaler & Trimble 2004) and to giants cooling with luminosity]:
 * log Teff = 3.731 - 0.054 log L - 0.025 [Fe/H] + 0.05 log M. */
static double logt_hayashi(double logl, double m, double zeta)
{
    return 3.731 - 0.054 * logl - 0.025 * zeta + 0.05 * log10(m);
}

/* Hot end of a star with almost no hydrogen envelope (extreme horizontal
 * branch, stripped giant) [engineering choice]: log Teff = 4.4. */
#define LOGT_STRIPPED 4.4

/* Envelope mass below which a giant leaves the Hayashi line [engineering
 * choice]: 0.002 Msun on the giant branches; on the horizontal branch stars
 * are blue below about 0.05 Msun of envelope (RR Lyrae 0.05-0.15, red above
 * 0.2: common practice) and bluer at low Z. */
static double m0_giant(double zeta) { return 0.002 * pow(10.0, -0.15 * zeta); }
static double m0_hb(double zeta) { return 0.06 * pow(10.0, -0.15 * zeta); }

static double logt_envelope(double logt_red, double env, double m0)
{
    double w = 1.0 / (1.0 + pow(fmax(env, 1e-9) / m0, 3.0));
    return logt_red + (LOGT_STRIPPED - logt_red) * w;
}

static double logt_from_lr(double logl, double logr)
{
    return log10(HRT_TEFF_SUN_K) + 0.25 * logl - 0.5 * logr;
}

static double logr_from_lt(double logl, double logt)
{
    return 0.5 * logl - 2.0 * (logt - log10(HRT_TEFF_SUN_K));
}

/* ------------------------------------------------------------------------
 * Mass loss
 * ------------------------------------------------------------------------ */
/* Reimers (1975, Mem. Soc. R. Sci. Liege 8, 369): 4e-13 eta L R / M Msun/yr [read]. */
static double mdot_reimers(const gen_params *p, double logl, double logr, double m)
{
    return 4e-13 * p->eta_reimers * pow(10.0, logl + logr) / m;
}

/* Vink, de Koter & Lamers (2001, A&A 369, 574) line-driven winds of hot
 * stars, both sides of the bi-stability jump, each with its Z^0.85 scaling
 * [read: form, the Z^0.85 exponent, v_inf/v_esc = 2.6 hot and 1.3 cool;
 * coefficients from memory]:
 *   hot  (Teff > 27.5 kK): log Mdot = -6.697 + 2.194 log(L/1e5) - 1.313 log(M/30)
 *        - 1.226 log(2.6/2) + 0.933 log(T/40 kK) - 10.92 log^2(T/40 kK) + 0.85 log(Z/Zsun)
 *   cool (12.5-22.5 kK): log Mdot = -6.688 + 2.210 log(L/1e5) - 1.339 log(M/30)
 *        - 1.601 log(1.3/2) + 1.07 log(T/20 kK) + 0.85 log(Z/Zsun)
 * The jump (25 kK, Vink et al. 2001 [from memory]) is a logistic of width
 * 0.015 dex in Teff, and the cool side fades out between log Teff 4.0 and
 * 3.9 where the cool-star rate takes over [engineering choice].  The paper
 * covers 1/30-3 Zsun; below Z = 5e-4 the scaling is extrapolated. */
static double mdot_vink(double logl, double m, double logt, double zeta)
{
    double lt40 = logt - log10(40000.0), lt20 = logt - log10(20000.0);
    double hot = -6.697 + 2.194 * (logl - 5.0) - 1.313 * log10(m / 30.0) - 1.226 * log10(2.6 / 2.0) + 0.933 * lt40 -
                 10.92 * lt40 * lt40;
    double cool = -6.688 + 2.210 * (logl - 5.0) - 1.339 * log10(m / 30.0) - 1.601 * log10(1.3 / 2.0) + 1.07 * lt20;
    double w = logistic((logt - log10(25000.0)) / 0.015);
    return (w * pow(10.0, hot) + (1.0 - w) * pow(10.0, cool)) * pow(10.0, 0.85 * zeta) * sstep(logt, 3.9, 4.0);
}

/* Cool supergiants: Nieuwenhuijzen & de Jager (1990, A&A 231, 134)
 * 9.6e-15 R^0.81 L^1.24 M^0.16 Msun/yr [from memory], scaled by (Z/Zsun)^0.7
 * as Mauron & Josselin (2011, A&A 526, A156) propose for red supergiants of
 * other metallicities [from memory]. */
static double mdot_ndj(double logl, double logr, double m, double zeta)
{
    return 9.6e-15 * pow(10.0, 0.81 * logr + 1.24 * logl) * pow(m, 0.16) * pow(10.0, 0.7 * zeta);
}

/* Wolf-Rayet (helium-star) winds: Nugis & Lamers (2000, A&A 360, 227)
 * log Mdot = -11.00 + 1.29 log L + 1.73 log Y + 0.47 log Z_s [from memory],
 * taken with the solar Z_s = 0.014 and scaled by (Z/Zsun)^0.86, the
 * metallicity dependence Vink & de Koter (2005, A&A 442, 587) find for WN
 * stars [from memory] (the iron lines drive the wind; the star's own carbon
 * and oxygen do not scale with Z).  y_s: surface helium fraction. */
static double mdot_wr(double logl, double y_s, double zeta)
{
    return pow(10.0, -11.0 + 1.29 * logl + 1.73 * log10(y_s) + 0.47 * log10(0.014) + 0.86 * zeta);
}

/* ------------------------------------------------------------------------
 * Cores, giants, remnants
 * ------------------------------------------------------------------------ */
/* Core mass-luminosity relation for degenerate helium cores, Refsdal &
 * Weigert (1970, A&A 6, 426): L = 2.3e5 Mc^6 [from memory]. */
static double logl_rgb_core(double mc) { return log10(2.3e5) + 6.0 * log10(mc); }

/* Core mass at the tip of the red giant branch for degenerate ignition:
 * 0.47 at Z = 0.014, 0.50 at Z = 1e-4 (Salaris & Cassisi 2005) [from memory],
 * linear in [Fe/H]. */
static double mc_tip_degenerate(double zeta) { return 0.47 - 0.014 * zeta; }

/* Interpulse core mass-luminosity relation on the AGB, Iben & Renzini (1983,
 * ARA&A 21, 271) variant of Paczynski (1970, Acta Astron. 20, 47):
 * L = 59250 (Mc - 0.495) [from memory]; the zero point is rounded off with a
 * softplus of width 0.01 Msun [engineering choice] so that tiny cores stay
 * finite. */
static double logl_agb_core(double mc)
{
    double k = 0.01, u = (mc - 0.495) / k;
    double sp = u > 30 ? u : log1p(exp(u));
    return log10(59250.0 * k * sp);
}

/* Initial-final mass relation of Cummings et al. (2018, ApJ 866, 21) [read:
 * slopes and breaks; coefficients from memory]: three linear pieces,
 * continuous to 0.001 Msun; joined smoothly (0.05 Msun), extrapolated below
 * 0.83 and above 7.2 Msun, capped below 1.38 Msun. */
double gen_ifmr(double mi)
{
    double a = 0.080 * mi + 0.489, b = 0.187 * mi + 0.184, c = 0.107 * mi + 0.471;
    double s1 = logistic((mi - 2.85) / 0.05), s2 = logistic((mi - 3.60) / 0.05);
    double v = a * (1.0 - s1) + b * s1;
    v = v * (1.0 - s2) + c * s2;
    return smin(v, 1.38, 0.02);
}

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
typedef struct ctx {
    const gen_params *p;
    gen_track *t;
    double m0, z, x, zeta, b;
    ms_model ms;
    /* running state */
    double age, m, mhe, mco, logl, logt;
    int err;
} ctx;

static void push(ctx *c, double age, double logl, double logt, double m, double mhe, double mco, int phase)
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

static void keypoint(ctx *c)
{
    if (c->err)
        return;
    c->t->kp[c->t->n_kp++] = c->t->n - 1;
}

/* Relabel the phase of the last sample (the keypoint opening a segment). */
static void set_last_phase(ctx *c, int phase)
{
    if (!c->err && c->t->n > 0)
        c->t->s[c->t->n - 1].phase = phase;
}

/* Main sequence: ZAMS (keypoint 0) to TAMS (keypoint 1). */
static void seg_ms(ctx *c)
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

/* Contraction from the end of the giant branch (or blue-dwarf phase) to the
 * white dwarf: leg A at constant L while the residual hydrogen envelope env
 * burns (t = env X / (B L), [derived]), shrinking to twice the white-dwarf
 * radius; leg B fading to the onset luminosity on the white-dwarf radius
 * (twice as long as leg A) [engineering choice].  Ends with keypoint wd_onset. */
static void seg_to_wd(ctx *c, double m_wd, double env, int phase, double co_frac)
{
    const int na = 120, nb = 80;
    double logl_e = c->logl, logt_e = c->logt;
    double logr_e = logr_from_lt(logl_e, logt_e);
    double logr_wd = log10(hrt_wd_radius_rsun(m_wd));
    double logr_k = smin(logr_e - 0.05, logr_wd + 0.3, 0.05);
    double logl0 = smin(c->p->log_l_wd_onset, logl_e - 0.3, 0.1);
    double ta = env * c->x / (c->b * pow(10.0, logl_e));
    double tb = 2.0 * ta;
    double mhe0 = c->mhe, mco0 = c->mco, age0 = c->age;
    for (int i = 1; i <= na; i++) {
        double u = (double)i / na;
        double logr = logr_e + (logr_k - logr_e) * u;
        double mhe = mhe0 + (m_wd - mhe0) * u;
        double mco = mco0 + (co_frac * m_wd - mco0) * u;
        push(c, age0 + ta * u, logl_e, logt_from_lr(logl_e, logr), m_wd, mhe, mco, phase);
    }
    age0 = c->age;
    for (int i = 1; i <= nb; i++) {
        double u = (double)i / nb;
        double logl = logl_e + (logl0 - logl_e) * u;
        double logr = logr_k + (logr_wd - logr_k) * u;
        push(c, age0 + tb * u, logl, logt_from_lr(logl, logr), m_wd, m_wd, co_frac * m_wd,
             i == nb ? HRT_PHASE_WD : phase);
    }
    keypoint(c);
}

/* ---------------- low-mass route ---------------- */
static void route_low(ctx *c)
{
    seg_ms(c);
    double m_t = c->m, logl_t = c->logl, logt_t = c->logt;
    double mc0 = q_tams(c->m0) * m_t;
    /* He white-dwarf mass: nearly the whole star for fully convective stars
     * (Laughlin et al. 1997), approaching the tip core mass from below at the
     * route boundary [engineering choice]. */
    double m_wd = smin(0.98 * m_t, mc_tip_degenerate(c->zeta) - 0.015, 0.03);
    double env_end = 0.01 * m_wd;
    double mc1 = m_wd - env_end;
    if (mc1 <= mc0 * 1.001)
        mc1 = mc0 * 1.001;
    /* Below 0.20 Msun no red giant (Laughlin et al. 1997) [read]; between 0.20
     * and 0.25 the giant excursion grows in [engineering choice]. */
    double w = sstep(log10(c->m0), log10(0.20), log10(0.25));
    const int n = 500;
    double age = c->age, mc_prev = mc0, logl_prev = logl_t;
    set_last_phase(c, w < 0.5 ? HRT_PHASE_MS : HRT_PHASE_SUBGIANT);
    for (int i = 1; i <= n; i++) {
        double s = (double)i / n;
        double mc = mc0 + (mc1 - mc0) * s;
        /* red path: relax from the TAMS luminosity to Refsdal & Weigert */
        double ll_red = logl_rgb_core(mc) + (logl_t - logl_rgb_core(mc0)) * exp(-(mc - mc0) / 0.03);
        /* blue path: the core-exhausted fully convective star brightens by
         * 0.5 dex and heats by 0.25 dex (Laughlin et al. 1997, blue dwarfs)
         * [engineering choice for the amounts] */
        double ll_blue = logl_t + 0.5 * s;
        double logl = w * ll_red + (1.0 - w) * ll_blue;
        /* mass lost as the core grows, accelerating like Reimers' law,
         * exhausting the envelope at the end [engineering choice] */
        double m = m_t - (m_t - m_wd) * s * s;
        double lt_red = logt_envelope(logt_hayashi(logl, m, c->zeta), m - mc, m0_giant(c->zeta));
        double lt_blue = logt_t + 0.25 * s;
        double logt = w * lt_red + (1.0 - w) * lt_blue;
        /* energy: dMc/dt = B L / X, trapezoid in 1/L [derived] */
        double dmc = mc - mc_prev;
        age += c->x * dmc / c->b * 0.5 * (pow(10.0, -logl) + pow(10.0, -logl_prev));
        mc_prev = mc;
        logl_prev = logl;
        int ph = w < 0.5 ? HRT_PHASE_MS
                 : (logl < logl_t + 0.3) ? HRT_PHASE_SUBGIANT
                                         : HRT_PHASE_RGB;
        push(c, age, logl, logt, m, mc, 0.0, ph);
    }
    keypoint(c); /* envelope_loss */
    set_last_phase(c, HRT_PHASE_POST_RGB);
    seg_to_wd(c, m_wd, env_end, HRT_PHASE_POST_RGB, 0.0);
    c->t->remnant = HRT_REMNANT_HE_WD;
    c->t->remnant_mass = m_wd;
}

/* ---------------- giant route ---------------- */
/* Subgiant / Hertzsprung-gap duration as a fraction of t_MS: 0.07 at
 * M <= 1.1, 0.02 at 2, 0.01 at 3-8 Msun [from memory / engineering choice]. */
static double f_hg(double m)
{
    static const double x[] = {0.041, 0.301, 0.477, 0.903};
    static const double y[] = {0.07, 0.02, 0.01, 0.01};
    return soft_table(x, y, 4, 0.04, log10(m));
}

/* Thermally-pulsing AGB core growth [engineering choice after Kalirai, Marigo
 * & Tremblay 2014, ApJ 782, 17: 10-30 %, largest near 2-3 Msun]. */
static double dm_tpagb(double m)
{
    static const double x[] = {-0.097, 0.0, 0.301, 0.477, 0.699, 0.903};
    static const double y[] = {0.03, 0.04, 0.10, 0.13, 0.09, 0.03};
    return soft_table(x, y, 6, 0.04, log10(m));
}

/* Core helium burning lifetime for stars above the flash limit, fraction of
 * t_MS: 0.2 at 2.5 Msun to 0.1 at >= 10 Msun [from memory]. */
static double f_cheb(double m)
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

/* What the giant route's segments share: the star at the TAMS, the base of
 * the giant branch and helium ignition, and the core-helium-burning and
 * AGB parameters derived from them (route_giant() computes them in turn). */
typedef struct giant_plan {
    double m_t, logl_t, logt_t, mc_t; /* the star and its core at the TAMS */
    double wnd;                       /* non-degenerate ignition weight */
    double logl_base, t_hg;           /* base of the giant branch; subgiant duration */
    double mc_base, m_base;           /* core and star at the base */
    double mc_ign, logl_tip;          /* core mass and luminosity at helium ignition */
    double m_ign, logl_ign, logt_ign; /* the star at ignition */
    double m_f, mc_1tp;               /* final mass; core mass at the first thermal pulse */
    double logl_c0, t_cheb, loop, mhe_ce, m0g, m0h; /* core helium burning and the AGB */
    double env_end;                   /* envelope left at the end of the AGB */
} giant_plan;

/* --- subgiant / Hertzsprung gap: TAMS to rgb_base --- */
static void giant_subgiant(ctx *c, const giant_plan *g)
{
    const gen_params *p = c->p;
    double m_t = g->m_t, logl_t = g->logl_t, logt_t = g->logt_t, mc_t = g->mc_t, wnd = g->wnd;
    double logl_base = g->logl_base, t_hg = g->t_hg;
    const int n = 200;
    double age0 = c->age, m = m_t, mc = mc_t, logl_prev = logl_t;
    double logt_base = logt_hayashi(logl_base, m_t, c->zeta);
    set_last_phase(c, HRT_PHASE_SUBGIANT);
    for (int i = 1; i <= n; i++) {
        double u = (double)i / n;
        double logl = logl_t + (logl_base - logl_t) * u;
        double logt = logt_t + (logt_base - logt_t) * u;
        double dt = t_hg / n;
        double lbar = 0.5 * (pow(10.0, logl) + pow(10.0, logl_prev));
        mc += c->b * lbar * dt / c->x * (1.0 - wnd); /* energy (degenerate) [derived] */
        m -= mdot_reimers(p, logl, logr_from_lt(logl, logt), m) * dt;
        logl_prev = logl;
        push(c, age0 + t_hg * u, logl, logt, m, mc, 0.0, HRT_PHASE_SUBGIANT);
    }
}

/* --- red giant branch: rgb_base to he_ignition --- */
static void giant_rgb(ctx *c, const giant_plan *g)
{
    const gen_params *p = c->p;
    double mc_base = g->mc_base, m_base = g->m_base, mc_ign = g->mc_ign, wnd = g->wnd;
    double logl_base = g->logl_base, logl_tip = g->logl_tip;
    enum { N = 400 };
    double lmc[N + 1], ll[N + 1], dtn[N + 1], dmr[N + 1];
    double t_en = 0.0, dm_r = 0.0;
    for (int i = 0; i <= N; i++) {
        double u = (double)i / N;
        double mc = mc_base * pow(mc_ign / mc_base, u);
        lmc[i] = mc;
        /* log L linear in log Mc from the base to the tip [engineering
         * choice keeping the tip on Refsdal & Weigert] */
        ll[i] = logl_base + (logl_tip - logl_base) * u;
        if (i == 0) {
            dtn[i] = 0.0;
            dmr[i] = 0.0;
            continue;
        }
        double dt = c->x * (lmc[i] - lmc[i - 1]) / c->b * 0.5 * (pow(10.0, -ll[i]) + pow(10.0, -ll[i - 1]));
        double logt = logt_hayashi(ll[i], m_base, c->zeta);
        t_en += dt;
        dm_r += mdot_reimers(p, ll[i], logr_from_lt(ll[i], logt), m_base) * dt;
        dtn[i] = t_en;
        dmr[i] = dm_r;
    }
    /* RGB duration: energy-consistent for degenerate cores; at most 1 %
     * of t_MS above the flash limit [engineering choice]. */
    double t_nd = smin_pos(t_en, 0.01 * c->ms.t_ms);
    double t_rgb = exp((1.0 - wnd) * log(t_en) + wnd * log(t_nd));
    double scale = t_rgb / t_en;
    /* Reimers loss, saturating so that at most 90 % of the envelope above
     * the tip core goes [engineering choice]. */
    double e_av = 0.9 * (m_base - mc_ign);
    double dm_eff = e_av * dm_r / (e_av + dm_r);
    double age0 = c->age;
    set_last_phase(c, HRT_PHASE_RGB);
    for (int i = 1; i <= N; i++) {
        double m = m_base - dm_eff * (dm_r > 0 ? dmr[i] / dm_r : 0.0);
        double logt = logt_envelope(logt_hayashi(ll[i], m, c->zeta), m - lmc[i], m0_giant(c->zeta));
        push(c, age0 + dtn[i] * scale, ll[i], logt, m, lmc[i], 0.0, HRT_PHASE_RGB);
    }
}

/* --- flash / settling to the zero-age core-helium-burning locus: he_ignition to cheb_start --- */
static void giant_settle(ctx *c, const giant_plan *g)
{
    double t_cheb = g->t_cheb, m0h = g->m0h, logl_c0 = g->logl_c0, mc_ign = g->mc_ign;
    double m_ign = g->m_ign, logl_ign = g->logl_ign, logt_ign = g->logt_ign;
    const int n = 100;
    double t_set = 0.015 * t_cheb; /* [engineering choice] */
    double age0 = c->age;
    double m0e = m0h;
    double logt_c0 = logt_envelope(logt_hayashi(logl_c0, m_ign, c->zeta) + 0.03, m_ign - mc_ign, m0e);
    set_last_phase(c, HRT_PHASE_CHEB);
    for (int i = 1; i <= n; i++) {
        double u = (double)i / n;
        double logl = logl_ign + (logl_c0 - logl_ign) * u;
        double logt = logt_ign + (logt_c0 - logt_ign) * u;
        push(c, age0 + t_set * u, logl, logt, m_ign, mc_ign, 0.0, HRT_PHASE_CHEB);
    }
}

/* --- core helium burning: cheb_start to cheb_end --- */
static void giant_cheb(ctx *c, const giant_plan *g)
{
    const gen_params *p = c->p;
    double t_cheb = g->t_cheb, logl_c0 = g->logl_c0, mc_ign = g->mc_ign, mhe_ce = g->mhe_ce;
    double loop = g->loop, m0h = g->m0h, m_f = g->m_f;
    const int n = 300;
    double age0 = c->age, m = c->m;
    set_last_phase(c, HRT_PHASE_CHEB);
    for (int i = 1; i <= n; i++) {
        double phi = (double)i / n;
        double dt = t_cheb / n;
        double logl = logl_c0 + 0.15 * pow(phi, 1.5); /* [engineering choice] */
        double mhe = mc_ign + (mhe_ce - mc_ign) * phi;
        double logt = logt_hayashi(logl, m, c->zeta) + 0.03 + loop * loop_shape(phi);
        logt = logt_envelope(logt, m - mhe, m0h);
        double env = m - m_f;
        m -= mdot_reimers(p, logl, logr_from_lt(logl, logt), m) * dt * env / (env + 0.01);
        push(c, age0 + t_cheb * phi, logl, logt, m, mhe, 0.3 * mhe * phi, HRT_PHASE_CHEB);
    }
}

/* --- early AGB, 12 % of t_CHeB [from memory / engineering choice]: cheb_end to first_pulse --- */
static void giant_eagb(ctx *c, const giant_plan *g)
{
    const gen_params *p = c->p;
    double t_cheb = g->t_cheb, mc_1tp = g->mc_1tp, m0h = g->m0h, m0g = g->m0g, m_f = g->m_f;
    const int n = 200;
    double t_e = 0.12 * t_cheb;
    double age0 = c->age, m = c->m, logl0 = c->logl, mhe0 = c->mhe, mco0 = c->mco;
    double logl1 = logl_agb_core(mc_1tp);
    if (logl1 < logl0 + 0.05)
        logl1 = logl0 + 0.05;
    set_last_phase(c, HRT_PHASE_EAGB);
    for (int i = 1; i <= n; i++) {
        double u = (double)i / n;
        double logl = logl0 + (logl1 - logl0) * u;
        double mhe = mhe0 + (mc_1tp - mhe0) * u;
        double mco = mco0 + (0.98 * mc_1tp - mco0) * u;
        double m0e = m0h * pow(m0g / m0h, u);
        double logt = logt_envelope(logt_hayashi(logl, m, c->zeta), m - mhe, m0e);
        double env = m - m_f, dt = t_e / n;
        m -= mdot_reimers(p, logl, logr_from_lt(logl, logt), m) * dt * env / (env + 0.01);
        push(c, age0 + t_e * u, logl, logt, m, mhe, mco, HRT_PHASE_EAGB);
    }
}

/* --- thermally pulsing AGB, core growth on the interpulse relation, the
 *     superwind stripping the envelope as the core reaches M_f: first_pulse to agb_end --- */
static void giant_tpagb(ctx *c, const giant_plan *g)
{
    double m_f = g->m_f, env_end = g->env_end, mc_1tp = g->mc_1tp, m0g = g->m0g;
    enum { N = 300 };
    double tt[N + 1], mc[N + 1], ll[N + 1];
    double mc_end = m_f - env_end, m1 = c->m;
    tt[0] = 0.0;
    for (int i = 0; i <= N; i++) {
        mc[i] = mc_1tp + (mc_end - mc_1tp) * (double)i / N;
        ll[i] = logl_agb_core(mc[i]);
        if (i > 0)
            tt[i] = tt[i - 1] +
                    c->x * (mc[i] - mc[i - 1]) / c->b * 0.5 * (pow(10.0, -ll[i]) + pow(10.0, -ll[i - 1]));
    }
    double age0 = c->age;
    set_last_phase(c, HRT_PHASE_TPAGB);
    for (int i = 1; i <= N; i++) {
        double u = tt[i] / tt[N];
        double m = m1 - (m1 - m_f) * u * u * u; /* [engineering choice] */
        double logt = logt_envelope(logt_hayashi(ll[i], m, c->zeta), m - mc[i], m0g);
        push(c, age0 + tt[i], ll[i], logt, m, mc[i], 0.98 * mc[i], HRT_PHASE_TPAGB);
    }
}

static void route_giant(ctx *c)
{
    const gen_params *p = c->p;
    giant_plan g;
    seg_ms(c);
    g.m_t = c->m, g.logl_t = c->logl, g.logt_t = c->logt;
    double mhef = gen_m_hef(p, c->z);
    g.wnd = logistic((c->m0 - mhef) / 0.06); /* non-degenerate ignition weight */
    g.mc_t = q_tams(c->m0) * g.m_t;

    /* --- subgiant / Hertzsprung gap --- */
    static const double lbx[] = {0.0, 0.301, 0.477};
    static const double lby[] = {0.146, 0.041, 0.0};
    g.logl_base = g.logl_t + soft_table(lbx, lby, 3, 0.05, log10(c->m0)); /* [engineering choice] */
    g.t_hg = f_hg(c->m0) * c->ms.t_ms;
    double mc_deg = mc_tip_degenerate(c->zeta);
    giant_subgiant(c, &g);
    keypoint(c); /* rgb_base */
    g.mc_base = c->mhe, g.m_base = c->m;

    /* --- ignition core mass and luminosity --- */
    double mc_nd = smax(0.30, 1.1 * g.mc_base, 0.03); /* [engineering choice] */
    g.mc_ign = (1.0 - g.wnd) * mc_deg + g.wnd * mc_nd;
    g.mc_ign = smax(g.mc_ign, g.mc_base + 0.02, 0.01);
    g.logl_tip = (1.0 - g.wnd) * logl_rgb_core(g.mc_ign) + g.wnd * (g.logl_base + log10(1.5));
    giant_rgb(c, &g);
    keypoint(c); /* he_ignition */
    g.m_ign = c->m, g.logl_ign = c->logl, g.logt_ign = c->logt;

    /* --- final mass and first-pulse core mass --- */
    double d_ifmr = smax(gen_ifmr(c->m0) - g.mc_ign, 0.005, 0.002);
    double d = smin_pos(d_ifmr, 0.9 * (g.m_ign - g.mc_ign));
    g.m_f = g.mc_ign + d;
    g.mc_1tp = g.m_f - smin_pos(dm_tpagb(c->m0), 0.6 * d);

    /* --- core helium burning parameters --- */
    /* Horizontal-branch / red-clump luminosity log L = 1.7 (red-clump
     * magnitudes M_Ks = -1.606, Ruiz-Dern et al. 2018, A&A 609, A116 [read],
     * with BC_K ~ 1.95 [from memory]), scaled as Mc^2 [engineering choice];
     * above the flash limit 1.2 L_TAMS [engineering choice]. */
    double logl_hb = 1.7 + 2.0 * log10(g.mc_ign / 0.47);
    double lk = 0.05;
    g.logl_c0 = lk * log(exp(logl_hb / lk) + exp((g.logl_t + log10(1.2)) / lk));
    /* Duration: 100 Myr (0.47/Mc) for degenerate ignition (~100 Myr, 0.6 Msun
     * model of Despain 1981 gives 81.5 Myr [read]), f_cheb t_MS above. */
    g.t_cheb = smin_pos(1.0e8 * 0.47 / g.mc_ign, f_cheb(c->m0) * c->ms.t_ms);
    g.loop = loop_amplitude(c->m0, c->zeta);
    g.mhe_ce = g.mc_ign + 0.3 * (g.mc_1tp - g.mc_ign);
    g.m0g = m0_giant(c->zeta), g.m0h = m0_hb(c->zeta);

    giant_settle(c, &g);
    keypoint(c); /* cheb_start */
    giant_cheb(c, &g);
    keypoint(c); /* cheb_end */
    giant_eagb(c, &g);
    keypoint(c); /* first_pulse */

    /* the envelope left when the superwind ends the AGB [engineering choice] */
    g.env_end = fmin(0.003 * pow(g.m_f / 0.6, -4.0), 0.01);
    if (g.env_end > 0.5 * (g.m_f - g.mc_1tp))
        g.env_end = 0.5 * (g.m_f - g.mc_1tp);
    giant_tpagb(c, &g);
    keypoint(c); /* agb_end */
    set_last_phase(c, HRT_PHASE_POST_AGB);
    seg_to_wd(c, g.m_f, g.env_end, HRT_PHASE_POST_AGB, 0.98);
    /* Oxygen-neon white dwarfs above 1.10 Msun [from memory: the CO/ONe
     * division of white-dwarf masses near 1.05-1.1 Msun]. */
    c->t->remnant = g.m_f >= 1.10 ? HRT_REMNANT_ONE_WD : HRT_REMNANT_CO_WD;
    c->t->remnant_mass = g.m_f;
}

/* ---------------- supergiant route ---------------- */
/* Humphreys-Davidson limit: no cool supergiants above log L = 5.5 (Davies,
 * Crowther & Beasor 2018, MNRAS 478, 3138) [read]. */
#define LOGL_HD 5.5
/* Width in log L over which stars turn from red to blue supergiants at the
 * limit (yellow supergiants in between) [engineering choice]. */
#define HD_WIDTH 0.2

/* Red-supergiant temperature: 3800 K at Z = 0.014 (Levesque et al. 2005, ApJ
 * 628, 973: 3500-4300 K) [from memory], hotter at low Z (Davies et al. 2018)
 * [read: trend; slope engineering choice]. */
static double logt_rsg(double zeta) { return 3.58 - 0.04 * zeta; }
#define LOGT_BSG 4.3 /* hot post-main-sequence star above the limit [engineering choice] */
#define LOGT_WR 4.8  /* stripped helium star (WN stars: 40-90 kK, from memory) [engineering choice] */

/* Eddington luminosity for electron scattering, L_Edd = 4 pi G M c / kappa,
 * kappa = 0.02 (1 + X) m^2/kg with X the surface hydrogen fraction [read:
 * textbook]. */
static double eddington_logl(double m, double x)
{
    double kappa = 0.02 * (1.0 + x);
    return log10(4.0 * PI * HRT_G_SI * m * msun_kg() * HRT_C_M_S / kappa / HRT_LSUN_W);
}
/* Largest L / L_Edd the route allows: 0.9, reached smoothly (0.02 dex) [engineering choice]. */
#define EDD_MARGIN_DEX 0.046

/* Surface hydrogen fraction of a supergiant whose hydrogen envelope holds a
 * fraction ef of its mass: the initial X while the envelope holds 5 % of the
 * mass or more, then falling to 0 with it (the layers the receding
 * convective core left, richer in helium, come to the surface; late-type WN
 * stars show X = 0.1-0.5, from memory) [engineering choice]:
 * X_s = X (3 u^2 - 2 u^3), u = ef / 0.05.  A star is labelled Wolf-Rayet
 * only below ef = 0.05, so every other state has the initial X at its surface. */
static double sg_surface_x(double x0, double ef) { return x0 * sstep(ef, 0.0, 0.05); }

static int sg_phase(double logt, double env_frac)
{
    if (env_frac < 0.05 && logt > 4.4)
        return HRT_PHASE_WR;
    return logt > 3.8 ? HRT_PHASE_BSG : HRT_PHASE_RSG;
}

/* Helium-core mass at the end of core helium burning without wind erosion
 * [engineering choice]: 0.1 M^1.4 below about 30 Msun, 0.5 M - 4 above, which
 * follows M_He = (13/24)(M - 20) of Heger & Woosley (2002, ApJ 567, 532)
 * [from memory] to 2 Msun at 60-150 Msun; joined by a logistic of 0.04 dex in
 * mass at 30 Msun (the pieces differ by 0.7 Msun there). */
static double sg_he_core(double m0)
{
    double s = logistic((log10(m0) - log10(30.0)) / 0.04);
    return (1.0 - s) * 0.1 * pow(m0, 1.4) + s * (0.5 * m0 - 4.0);
}

/* Carbon-oxygen core at collapse as a fraction of the helium core: 0.70 for
 * cores up to 8 Msun, 0.88 above 40 Msun (the helium shell of a very massive
 * core is a small part of it) [engineering choice]. */
static double sg_co_fraction(double mhe)
{
    return 0.70 + 0.18 * sstep(log10(fmax(mhe, 1e-3)), log10(8.0), log10(40.0));
}

/* Luminosity of a stripped helium core eroded below the mass it would have
 * had: L proportional to M^1.8, the slope of helium-star mass-luminosity
 * relations at 5-30 Msun [from memory: 1.5-2] [engineering choice]. */
#define HE_STAR_MLR_SLOPE 1.8

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

/* Luminosity kept below 0.9 times the Eddington luminosity for the initial
 * hydrogen fraction, smoothly, in every state [engineering choice]: stricter
 * than the surface composition requires (a helium star's X = 0 allows 1.75
 * times more), so that interpolation between a stripped star and one that
 * keeps its envelope stays below the limit too; helium stars of 5-40 Msun
 * have L / L_Edd(X = 0) = 0.2-0.5 (from memory), well inside it. */
static double sg_edd_cap(const ctx *c, double logl, double m, double mhe)
{
    (void)mhe;
    return smin(logl, eddington_logl(m, c->x) - EDD_MARGIN_DEX, 0.02);
}

/* What the supergiant segments share. */
typedef struct sg_plan {
    double m_t, logl_t, logt_t, mhe_t; /* the star and its helium core at the TAMS */
    double mhe_fin0;                    /* helium core at the end of helium burning, before erosion */
    double logl_c0, logl_c1;            /* luminosity at the start and end of helium burning */
    double t_cross, t_cheb, t_late;     /* durations, yr */
    sg_surface sf;
} sg_plan;

/* Wind mass-loss rate (Msun/yr) of a supergiant: the hydrogen envelope's
 * winds (cool: Nieuwenhuijzen & de Jager; hot: Vink et al.; above the
 * Humphreys-Davidson limit an eruptive rate) give way to the helium star's
 * (Nugis & Lamers) as the envelope goes (its fraction of the mass below 5 %). */
static double sg_mdot(const ctx *c, const sg_plan *g, double logl, double logt, double m, double mhe)
{
    double ef = fmax(m - mhe, 0.0) / m, xs = sg_surface_x(c->x, ef);
    double logr = logr_from_lt(logl, logt);
    /* Eruptive (LBV-like) loss above the limit [engineering choice]: at solar
     * Z it would strip the envelope within 60 % of helium burning, fading in
     * over 0.15 dex in L; scaled by (Z/Zsun)^0.5, because the instability that
     * drives it sits in the iron-opacity bump of the envelope, weaker at low Z
     * (our reading; continuum-driven eruptions may not depend on Z at all). */
    double erupt = logistic((logl - LOGL_HD) / 0.2) * (g->m_t - g->mhe_t) / (0.6 * g->t_cheb) * pow(10.0, 0.5 * c->zeta);
    double md_env = mdot_ndj(logl, logr, m, c->zeta) * (1.0 - sstep(logt, 3.8, 4.0)) +
                    mdot_vink(logl, m, logt, c->zeta) + erupt;
    double w = 1.0 - sstep(ef, 0.0, 0.05);
    return (1.0 - w) * md_env + w * mdot_wr(logl, 1.0 - xs - c->z, c->zeta);
}

/* --- Hertzsprung-gap crossing: tams to cheb_start --- */
static void sg_cross(ctx *c, const sg_plan *g)
{
    const int n = 200;
    double age0 = c->age, m = g->m_t;
    double logt_c0 = sg_logt(&g->sf, g->logl_c0, g->m_t, g->mhe_t, 0.0);
    set_last_phase(c, HRT_PHASE_SUBGIANT);
    for (int i = 1; i <= n; i++) {
        double u = (double)i / n, dt = g->t_cross / n;
        double mhe = g->mhe_t + (g->mhe_fin0 - g->mhe_t) * 0.02 * u;
        double logl = sg_edd_cap(c, g->logl_t + (g->logl_c0 - g->logl_t) * u, m, mhe);
        double logt = g->logt_t + (logt_c0 - g->logt_t) * u;
        m -= sg_mdot(c, g, logl, logt, m, mhe) * dt;
        push(c, age0 + g->t_cross * u, logl, logt, m, mhe, 0.0, HRT_PHASE_SUBGIANT);
    }
}

/* --- core helium burning as a supergiant: cheb_start to cheb_end --- */
static void sg_cheb(ctx *c, const sg_plan *g)
{
    const int n = 400;
    double age0 = c->age, mhe_s = c->mhe, m = c->m;
    for (int i = 1; i <= n; i++) {
        double phi = (double)i / n, dt = g->t_cheb / n;
        double mhe_target = mhe_s + (g->mhe_fin0 - mhe_s) * phi;
        double mhe = fmin(mhe_target, m);
        /* an eroded helium core is fainter [engineering choice] */
        double logl = g->logl_c0 + (g->logl_c1 - g->logl_c0) * phi + HE_STAR_MLR_SLOPE * log10(mhe / mhe_target);
        logl = sg_edd_cap(c, logl, m, mhe);
        double logt = sg_logt(&g->sf, logl, m, mhe, phi);
        m -= sg_mdot(c, g, logl, logt, m, mhe) * dt;
        if (m < 0.5 * mhe_s)
            m = 0.5 * mhe_s;
        mhe = fmin(mhe_target, m);
        double env = fmax(m - mhe, 0.0);
        push(c, age0 + g->t_cheb * phi, logl, logt, m, mhe, sg_co_fraction(mhe) * mhe * phi,
             sg_phase(logt, env / m));
    }
    /* the keypoint sample opening this segment takes the phase of the segment */
    c->t->s[c->t->kp[c->t->n_kp - 1]].phase = c->t->s[c->t->kp[c->t->n_kp - 1] + 1].phase;
}

/* --- carbon burning onwards, 1 % of t_CHeB [engineering choice]: cheb_end to core_collapse --- */
static void sg_late(ctx *c, const sg_plan *g)
{
    const int n = 100;
    double age0 = c->age, logl0 = c->logl, m1 = c->m, mhe1 = c->mhe, co0 = c->mco;
    double co1 = sg_co_fraction(mhe1) * mhe1;
    for (int i = 1; i <= n; i++) {
        double u = (double)i / n;
        double logl = sg_edd_cap(c, logl0 + 0.08 * u, m1, mhe1); /* [engineering choice] */
        double logt = sg_logt(&g->sf, logl, m1, mhe1, 1.0);
        int ph = sg_phase(logt, (m1 - mhe1) / m1);
        push(c, age0 + g->t_late * u, logl, logt, m1, mhe1, co0 + (co1 - co0) * u, ph);
        if (i == 1)
            c->t->s[c->t->kp[c->t->n_kp - 1]].phase = ph;
    }
}

static void route_supergiant(ctx *c)
{
    sg_plan g;
    seg_ms(c);
    g.m_t = c->m, g.logl_t = c->logl, g.logt_t = c->logt;
    g.mhe_t = q_tams(c->m0) * g.m_t;
    g.mhe_fin0 = smax(sg_he_core(c->m0), 1.05 * g.mhe_t, 0.05);
    /* CHeB luminosity 1.4 -> 1.9 L_TAMS at 10 Msun, 1.1 -> 1.25 at >= 60 Msun
     * [engineering choice; 1.5-2 L_TAMS is textbook]. */
    static const double fx[] = {1.0, 1.778};
    static const double f0y[] = {0.146, 0.041}, f1y[] = {0.279, 0.097};
    double lx = log10(c->m0);
    g.logl_c0 = g.logl_t + soft_table(fx, f0y, 2, 0.05, lx);
    g.logl_c1 = g.logl_t + soft_table(fx, f1y, 2, 0.05, lx);
    g.t_cross = 0.008 * c->ms.t_ms;   /* [from memory: 0.5-1 % of t_MS] */
    g.t_cheb = f_cheb(c->m0) * c->ms.t_ms;
    g.t_late = 0.01 * g.t_cheb;
    g.sf = (sg_surface){logt_rsg(c->zeta), loop_amplitude(c->m0, c->zeta)};

    sg_cross(c, &g);
    keypoint(c); /* cheb_start */
    sg_cheb(c, &g);
    keypoint(c); /* cheb_end */
    sg_late(c, &g);
    keypoint(c); /* core_collapse */
    int kind = HRT_REMNANT_NS;
    double mrem = NAN; /* refused by the grid builder if the rule cannot apply */
    hrt_collapse_remnant(c->mco, c->m, &kind, &mrem); /* Fryer et al. 2012 and pair instability, lib/core/remnant.c */
    c->t->remnant = kind;
    c->t->remnant_mass = kind == HRT_REMNANT_NONE ? NAN : mrem;
    if (kind != HRT_REMNANT_NONE) /* a pair-instability supernova keeps the star's last phase */
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
