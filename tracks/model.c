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
/* Present-day field dwarfs: log L and log Teff against log M, a smooth fit
 * [derived] to the mean-dwarf table of Pecaut & Mamajek (2013, ApJS 208, 9),
 * as updated by Mamajek (table version 2024.05.15: O3V-M9V, 87 rows) [read].
 * The fit is a straight line plus softplus corners of width 0.1 dex at the
 * knots FIELD_KNOTS and a term log10(1 - 0.072/M) for the steep fall of L
 * and Teff towards the hydrogen-burning limit (about 0.072 Msun: common
 * practice); least squares with a small ridge on the corners (1e-3) and
 * the G2V row (the Sun) weighted 30-fold.  Residuals: log L rms 0.03 dex
 * (largest 0.09, A6V), Teff rms 2 % (largest 5 %, K9V-M0V).  Every
 * derivative is continuous, so lifetimes and the ZAMS have no kink in mass.
 * Extrapolated above 59 Msun (O3V) along the fit's end slope (d log L /
 * d log M = 1.75 there); Teff levels off above about 80 Msun (logr_field). */
#define N_FIELD_KNOTS 15
static const double field_knots[N_FIELD_KNOTS] = {-1.0, -0.85, -0.7, -0.55, -0.4, -0.25, -0.1, 0.05,
                                                  0.2,  0.35,  0.5,  0.7,   0.9,  1.2,   1.5};
static const double field_logl[N_FIELD_KNOTS + 3] = {
    -0.716399, 1.997284,  0.020067,  -0.335148, -0.724495, -0.012271, 2.192774,  3.203358, -0.501245,
    -2.650814, 0.372478,  0.894976,  -0.404093, -0.577505, -0.263942, -0.661711, -0.777498, 0.562726};
static const double field_logt[N_FIELD_KNOTS + 3] = {
    3.556674,  0.047321,  0.038648,  -0.009036, -0.178193, -0.104190, 0.581847,  0.816740, -0.490825,
    -0.592332, 0.536734,  0.273803,  -0.189385, -0.147503, -0.100357, -0.127705, -0.121034, 0.121353};
#define FIELD_CORNER 0.1
#define H_LIMIT_MSUN 0.072

static double softplus(double u) { return u > 30.0 ? u : log1p(exp(u)); }

static double field_fit(const double *c, double m)
{
    double x = log10(m);
    double v = c[0] + c[1] * x;
    for (int k = 0; k < N_FIELD_KNOTS; k++)
        v += c[2 + k] * FIELD_CORNER * softplus((x - field_knots[k]) / FIELD_CORNER);
    return v + c[2 + N_FIELD_KNOTS] * log10(1.0 - H_LIMIT_MSUN / fmax(m, 1.01 * H_LIMIT_MSUN));
}

/* Field relations at solar metallicity: log L and log R of a present-day
 * dwarf of mass m (R from L and Teff by the Stefan-Boltzmann law). */
static double logl_mlr(double m) { return field_fit(field_logl, m); }
static double logr_field(double m)
{
    /* above the table's heaviest dwarfs Teff levels off (very massive stars
     * swell as they near the Eddington limit: common practice): the
     * temperature fit is held at about 80 Msun (smooth minimum) */
    double m_t = pow(10.0, smin(log10(m), log10(80.0), 0.1));
    return 0.5 * logl_mlr(m) - 2.0 * (field_fit(field_logt, m_t) - log10(HRT_TEFF_SUN_K));
}

/* Metallicity [engineering choice, tuned to published trends]: lower Z gives
 * brighter stars of nearly the same radius, so hotter and shorter-lived ones.
 * d log L / d[Fe/H] = -0.25 for M <= 1 Msun easing to -0.05 above 10 Msun
 * (from memory: a 1 Msun star at Z = 1e-4 starts near 1.2 Lsun and 6500 K;
 * metal-poor turnoffs of 12-13 Gyr lie near 0.8 Msun, hotter and brighter
 * than solar ones), and d log R / d[Fe/H] = +0.03 to +0.05.  The metal opacity loses its hold at very low Z,
 * so [Fe/H] enters through 1.5 tanh([Fe/H]/1.5) (linear near the Sun). */
static double zeta_eff(double zeta) { return 1.5 * tanh(zeta / 1.5); }
static double dlogl_dzeta(double m) { return -0.25 + 0.20 * logistic((log10(m) - 0.5) / 0.15); }
static double dlogr_dzeta(double m) { return 0.03 + 0.02 * logistic((log10(m) - 0.5) / 0.15); }

/* Which age the field relations describe [engineering choice]: a field dwarf
 * is seen at the age of the local disc, a few Gyr (FIELD_AGE_YR, the Sun's
 * age), or half-way through its main sequence if it lives shorter than
 * that: tau_f = smooth min(0.5, FIELD_AGE_YR / t_MS). */
#define FIELD_AGE_YR 4.5e9
#define TAU_FIELD_MAX 0.5

/* L_TAMS / L_ZAMS [engineering choice, guided by textbook values: 2.5 at
 * 1 Msun (Gough 1981 extrapolated), 2 at 2-15 Msun, 1.6 at 60 Msun, 1.4 at
 * 150 Msun (keeping the most massive below the Eddington limit); fully
 * convective stars brighten several-fold (Laughlin, Bodenheimer & Adams 1997)]. */
static double ms_lum_ratio(double m)
{
    static const double x[] = {-1.0, -0.602, -0.301, -0.155, 0.079, 0.301, 1.176, 1.778, 2.176};
    static const double y[] = {0.778, 0.699, 0.477, 0.398, 0.398, 0.301, 0.301, 0.204, 0.146};
    return pow(10.0, soft_table(x, y, 9, 0.05, log10(m)));
}

/* R_TAMS / R_ZAMS [engineering choice]: 1 for fully convective stars, 1.5 at
 * 1 Msun, 2.2 at 2-5 Msun, 2.0 at 15 Msun, 2.5 at >= 60 Msun (before the
 * hook's contraction). */
static double ms_rad_ratio(double m)
{
    static const double x[] = {-0.602, -0.301, 0.0, 0.301, 0.699, 1.176, 1.778};
    static const double y[] = {0.0, 0.079, 0.176, 0.342, 0.342, 0.30, 0.40};
    return pow(10.0, soft_table(x, y, 7, 0.05, log10(m)));
}

/* Efficiency f of t_MS = f 0.00712 M c^2 / L(tau = 0.5) [engineering
 * choice]: f0 = 0.09 M^(1/3), rising to 0.85 for fully convective stars,
 * which burn most of their hydrogen (Laughlin et al. 1997), times a smooth
 * correction (softplus corners, 0.1 dex) fitted to lifetimes at solar Z
 * [from memory, typical published values]: 9.8 Gyr (1 Msun), 1.1 Gyr (2),
 * 100 Myr (5), 12 Myr (15), 8.4 Myr (20), 7.0 Myr (25), 4.6 Myr (40),
 * 3.7 Myr (60), 2.8 Myr (120). */
static double ms_efficiency(double m)
{
    static const double x[] = {0.0, 0.301, 0.699, 1.176, 1.40, 1.778, 2.079};
    static const double y[] = {0.037, -0.050, -0.045, 0.0, 0.048, 0.050, 0.065};
    double f0 = 0.09 * cbrt(m);
    f0 += (0.85 - f0) / (1.0 + pow(m / 0.35, 6.0));
    return f0 * pow(10.0, soft_table(x, y, 7, 0.1, log10(m)));
}

typedef struct ms_model {
    double logl_z, logr_z; /* ZAMS */
    double a;              /* L = L_Z / (1 - a tau) */
    double log_r, log_rr;  /* log10 L_TAMS/L_ZAMS, log10 R_TAMS/R_ZAMS */
    double p;              /* radius growth: log(R/R_Z) = log_rr (log(L/L_Z) / log_r)^p */
    double t_ms;           /* yr, ZAMS to TAMS */
    double tau_field;      /* fractional main-sequence age the field relations describe */
} ms_model;

/* log(R / R_ZAMS) on the main sequence when log(L / L_ZAMS) = dl >= 0. */
static double ms_radius_growth(const ms_model *ms, double dl)
{
    return ms->log_rr * pow(fmax(dl, 0.0) / ms->log_r, ms->p);
}

static void ms_setup(const gen_params *p, double m, double z, ms_model *ms)
{
    double zeta = zeta_eff(zeta_of(p, z));
    double logl_f = logl_mlr(m) + dlogl_dzeta(m) * zeta;
    double logr_f = logr_field(m) + dlogr_dzeta(m) * zeta;
    /* metal-poor low-mass stars brighten more over their main sequence
     * (their turnoffs are brighter at a given age) [engineering choice:
     * log(L_TAMS/L_ZAMS) grows by 25 % per dex of [Fe/H] below 1.5 Msun] */
    double w_low = 1.0 - logistic((log10(m) - log10(1.5)) / 0.1);
    double r = pow(ms_lum_ratio(m), 1.0 - 0.25 * zeta * w_low), rr = ms_rad_ratio(m);
    /* Gough (1981, Sol. Phys. 74, 21) solar brightening L = L0 / (1 - a t)
     * (form [read]) generalised to every mass [engineering choice]. */
    ms->a = 1.0 - 1.0 / r;
    ms->log_r = log10(r);
    ms->log_rr = log10(rr);
    /* Massive stars swell late in their main sequence (their radius grows
     * little while the core still burns, then fast) [engineering choice:
     * p = 1 below 5 Msun, 1.5 above 15 Msun; it sets the ZAMS radii of O
     * stars from the mean dwarfs (hotter by 7 % at 40 Msun with p = 1)]. */
    ms->p = 1.0 + 0.5 * logistic((log10(m) - log10(8.0)) / 0.12);
    /* Lifetime from the fuel: t = f 0.00712 M c^2 / L(tau = 0.5) (X / X_sun)
     * [derived; f an engineering choice]; the field age fixes tau_f and tau_f
     * the ZAMS, so iterate (a contraction: 60 steps reach rounding). */
    double fuel = ms_efficiency(m) * nuclear_time_yr() * m * gen_x_hydrogen(z) / gen_x_hydrogen(p->z_sun);
    double tau = TAU_FIELD_MAX;
    for (int it = 0; it < 60; it++) {
        double logl_half = logl_f + log10(1.0 - ms->a * tau) - log10(1.0 - 0.5 * ms->a);
        ms->t_ms = fuel / pow(10.0, logl_half);
        tau = pow(pow(TAU_FIELD_MAX, -6.0) + pow(FIELD_AGE_YR / ms->t_ms, -6.0), -1.0 / 6.0);
    }
    ms->tau_field = tau;
    ms->logl_z = logl_f + log10(1.0 - ms->a * tau);
    ms->logr_z = logr_f - ms_radius_growth(ms, -log10(1.0 - ms->a * tau));
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
     * tip core mass; we put the boundary 0.03 Msun above the largest tip core
     * of the grid's metallicities, that of Z = 1e-4 (0.53 Msun), the same at
     * every Z, so that interpolation in metallicity never meets a boundary
     * that moves [engineering choice; "about 0.5 Msun" is common practice;
     * these stars live far longer than the Universe at every Z]. */
    (void)z;
    bounds[0] = mc_tip_degenerate(zeta_of(p, 1e-4)) + 0.03;
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

/* ---------------- pre-main sequence: birthline to ZAMS ----------------
 * A star is counted from its arrival on the birthline, the locus where a
 * protostar stops accreting and becomes optically visible (Stahler 1983,
 * ApJ 274, 822; Stahler 1988, ApJ 332, 804: deuterium burning holds the
 * accreting core near 10^6 K, fixing its mass-radius relation [read:
 * abstract]).  Ages before BIRTH_AGE_YR are not modelled.
 *
 * Birthline radius [engineering choice, the form of the deuterium
 * thermostat, R proportional to M at fixed central temperature, softened to
 * the observed spread of T Tauri radii]: R_b = 5 Rsun (M/Msun)^0.5, fading to
 * 1.1 R_ZAMS for stars that are born on the main sequence (above about
 * 8 Msun, where the birthline meets the ZAMS: Palla & Stahler 1990, ApJ 360,
 * L47 [from memory]).
 *
 * Path [engineering choice after Hayashi 1961 and Henyey, Lelevier & Levee
 * 1955]: down the Hayashi track at the constant temperature of a fully
 * convective star (HAYASHI_* table: 2600 K at 0.08 Msun, 3100 K at 0.2,
 * 3700 K at 0.5, 4300 K at 1, 4900 K at 2, 5300 K at 3 [from memory: T Tauri
 * temperatures]) until a radiative core forms at R_turn (twice the ZAMS
 * radius above 0.8 Msun, no turn below 0.35 Msun: fully convective stars
 * contract straight onto the main sequence), then along the radiative
 * (Henyey) track, log Teff linear in log R, to the ZAMS.
 *
 * Time: Kelvin-Helmholtz contraction dt = beta G M^2 d(1/R) / L [derived]
 * with beta = 3/7 (polytrope n = 1.5) on the Hayashi track and 3/4 (n = 3)
 * on the radiative track, times 1.8 for the slow final approach while
 * nuclear burning starts (3He, 12C) [engineering choice: the Sun reaches the
 * ZAMS after about 40 Myr; common practice: 30-50 Myr]. */
#define BIRTH_AGE_YR 1.0e3

static double logt_hayashi_pms(double m)
{
    static const double x[] = {-1.097, -0.699, -0.301, 0.0, 0.301, 0.477};
    static const double y[] = {3.415, 3.491, 3.568, 3.633, 3.690, 3.724};
    return soft_table(x, y, 6, 0.08, log10(m));
}

typedef struct pms_path {
    double logr_b, logr_z, logt_z, logt_h, span; /* span = log(R_turn / R_ZAMS), >= 0.02 */
} pms_path;

static void pms_plan(const ctx *c, pms_path *q)
{
    double m = c->m0, x = log10(m);
    q->logr_z = c->ms.logr_z;
    q->logt_z = logt_from_lr(c->ms.logl_z, c->ms.logr_z);
    /* a fully convective star sits just cool of its ZAMS point */
    q->logt_h = smin(logt_hayashi_pms(m), q->logt_z - 0.01, 0.02);
    q->span = fmax(log10(2.0) * logistic((x - log10(0.55)) / 0.06), 0.02);
    double born_ms = logistic((x - log10(5.0)) / 0.1);
    double lb = log10(5.0) + 0.5 * x - q->logr_z;
    q->logr_b = q->logr_z + smax(lb * (1.0 - born_ms), log10(1.1), 0.02);
}

/* log Teff at radius log R on the path: Hayashi above R_turn, radiative below,
 * the corner rounded over a tenth of the radiative span. */
static double pms_logt(const pms_path *q, double logr)
{
    double u = (logr - q->logr_z) / q->span, s0 = smin(0.0, 1.0, 0.1);
    return q->logt_z + (q->logt_h - q->logt_z) * (smin(u, 1.0, 0.1) - s0) / (1.0 - s0);
}

static void seg_pms(ctx *c)
{
    const int n = 300;
    pms_path q;
    pms_plan(c, &q);
    double m = c->m0, age = BIRTH_AGE_YR, inv_r_prev = 0.0, l_prev = 0.0;
    for (int i = 0; i <= n; i++) {
        double u = (double)i / n;
        double logr = q.logr_b + (q.logr_z - q.logr_b) * (1.0 - pow(1.0 - u, 1.2));
        double logt = i == n ? q.logt_z : pms_logt(&q, logr);
        double logl = i == n ? c->ms.logl_z : 2.0 * logr + 4.0 * (logt - log10(HRT_TEFF_SUN_K));
        double inv_r = pow(10.0, -logr), l = pow(10.0, logl);
        if (i > 0) {
            double hay = logistic(((logr - q.logr_z) / q.span - 1.0) / 0.05);
            double beta = 1.8 * (0.75 + (3.0 / 7.0 - 0.75) * hay);
            age += beta * kh_time_yr() * m * m * (inv_r - inv_r_prev) * 0.5 * (1.0 / l + 1.0 / l_prev);
        }
        inv_r_prev = inv_r;
        l_prev = l;
        if (i < n)
            push(c, age, logl, logt, m, 0.0, 0.0, HRT_PHASE_PRE_MS);
        if (i == 0)
            keypoint(c); /* birthline */
    }
    c->age = age; /* the ZAMS: seg_ms pushes it */
}

/* The hook at core-hydrogen exhaustion of stars with a convective core
 * [engineering choice after the physics of the overall-contraction phase
 * (stellar-structure texts; Maeder & Mermilliod 1981 for its presence in
 * cluster turnoffs)]: over the last HOOK_TAU of the main sequence the star
 * contracts, its radius falling by HOOK_DLOGR (dex) while L rises by
 * HOOK_DLOGL, so it turns hotter before leaving the main sequence; the
 * amplitude grows in over 1.1-1.4 Msun, where convective cores appear
 * (common practice: about 1.1-1.2 Msun at solar Z). */
#define HOOK_TAU 0.03
#define HOOK_DLOGR 0.07
#define HOOK_DLOGL 0.03

static double hook_weight(double m) { return logistic((log10(m) - log10(1.25)) / 0.03); }

/* Main sequence: ZAMS (keypoint) to TAMS (keypoint), after the pre-main sequence. */
static void seg_ms(ctx *c)
{
    seg_pms(c);
    const int n = 500;
    const ms_model *ms = &c->ms;
    double q = q_tams(c->m0), w_hook = hook_weight(c->m0);
    double m = c->m0, age0 = c->age, prev_t = 0.0, prev_mdot = 0.0;
    double slope = (logl_mlr(c->m0 * 1.01) - logl_mlr(c->m0 / 1.01)) / (2.0 * log10(1.01));
    for (int i = 0; i <= n; i++) {
        double u = (double)i / n;
        double tau = 1.0 - pow(1.0 - u, 1.5); /* denser near the TAMS */
        double h = w_hook * sstep(tau, 1.0 - HOOK_TAU, 1.0);
        /* luminosity follows the current mass along the local slope of the
         * mass-luminosity relation (matters only for winds of massive stars)
         * [engineering choice] */
        double logl_evol = ms->logl_z - log10(1.0 - ms->a * tau);
        double logl = logl_evol + slope * log10(m / c->m0) + HOOK_DLOGL * h;
        /* the radius follows the evolution of the core, not the wind's
         * dimming [engineering choice] */
        double logr = ms->logr_z + ms_radius_growth(ms, logl_evol - ms->logl_z) - HOOK_DLOGR * h;
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
