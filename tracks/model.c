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
void seg_ms(ctx *c)
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
