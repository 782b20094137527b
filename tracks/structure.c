/* Structural quantities of the default grid's stars for binary codes
 * (tracks/MODEL.md, "Structural quantities"): envelope mass, convective
 * envelope mass and the radius at its base, the radius of gyration, and the
 * gravitational binding energy of the envelope with its lambda parameter,
 * each from the sample's mass, core masses, L, Teff and phase. */
#include "structure.h"

#include <math.h>

#include "hrtrail.h"
#include "model_internal.h"

const gen_struct_info gen_struct_table[GEN_N_STRUCT] = {
    {"envelope_mass_msun", "solMass", "mass above the helium core, M - M_He (the whole star before a core forms)"},
    {"conv_envelope_mass_msun", "solMass",
     "mass of the outer convective envelope (tracks/MODEL.md: an interpolation in Teff and g, factor 2)"},
    {"conv_envelope_base_r_rsun", "solRad",
     "radius at the base of the outer convective envelope (R when there is none, 0 when fully convective)"},
    {"gyration_k2", "", "squared radius of gyration k^2 = I / (M R^2), I the moment of inertia"},
    {"log_envelope_binding_erg", "dex(erg)",
     "log10 of the gravitational binding energy of the envelope above the helium core, erg"},
    {"lambda_ce", "", "envelope-structure parameter lambda = G M M_env / (R E_bind), gravitational energy only"},
};

/* Squared radii of gyration of polytropes (Lane-Emden; tests/test_structure.c
 * integrates the equation and checks them): n = 3, a radiative star; n =
 * 1.5, a fully convective one (0.0754 and 0.205 from memory, confirmed there). */
#define K2_N3 0.0754
/* Convective envelope modelled with rho ~ r^-2 (mass growing linearly in
 * radius): I = (2/9) M_ce (R^2 + R R_b + R_b^2) [derived in MODEL.md]. */
#define K2_SHELL (2.0 / 9.0)
/* Least envelope mass in the binding energy, Msun: keeps the logarithm
 * finite where the model's envelope is gone (white dwarf onset). */
#define MIN_ENV_MSUN 1e-8
/* Surface gravity of the Sun, log10 cgs (IAU 2015 B3: GM_sun / R_sun^2). */
#define LOG_G_SUN 4.438

/* Convective envelope of a main-sequence star at log Teff x: fraction of
 * the mass (q) and radius at the base over R (rb), interpolated in log Teff
 * [from memory, values of standard stellar models: fully convective below
 * about 3500 K (0.35 Msun, Chabrier & Baraffe 1997, A&A 327, 1039); the Sun
 * q = 0.025, r_b = 0.713 R (helioseismology: Christensen-Dalsgaard, Gough &
 * Thompson 1991, ApJ 378, 413); vanishing towards 7000-8000 K]. */
static void dwarf_envelope(double x, double *q, double *rb)
{
    static const double lt[] = {3.544, 3.580, 3.653, 3.716, 3.761, 3.799, 3.845, 3.903};
    static const double lq[] = {0.0, -0.456, -1.0, -1.347, -1.602, -2.3, -4.0, -6.0};
    static const double lr[] = {0.0, 0.45, 0.62, 0.68, 0.713, 0.80, 0.95, 1.0};
    int n = (int)(sizeof lt / sizeof *lt);
    double lqv = soft_table(lt, lq, n, 0.01, x);
    double rbv = soft_table(lt, lr, n, 0.01, x);
    *q = lqv > 0.0 ? 1.0 : pow(10.0, lqv);
    *rb = rbv < 0.0 ? 0.0 : rbv > 1.0 ? 1.0 : rbv;
}

/* Radius of the helium core, Rsun: a degenerate core (hydrogen-shell
 * giants, the AGB) as a white dwarf of its mass (Eggleton's relation,
 * hrt_wd_radius_rsun); a helium-burning core (core helium burning,
 * supergiants) as a helium star, R = 0.2 M^0.6 [from memory]. */
static double core_radius_rsun(double mc, int phase)
{
    if (mc <= 0.0)
        return 0.0;
    int burning = phase == HRT_PHASE_CHEB || phase / 10 == 4;
    if (burning || mc >= 1.4)
        return 0.2 * pow(mc, 0.6);
    return hrt_wd_radius_rsun(mc < 1.3 ? mc : 1.3);
}

void gen_structure(double m, double mhe, double logl, double logt, int phase, double out[GEN_N_STRUCT])
{
    double logr = logr_from_lt(logl, logt);
    double r = pow(10.0, logr);
    double logg = LOG_G_SUN + log10(m) - 2.0 * logr;
    double menv = m - mhe;
    if (menv < 0.0)
        menv = 0.0;
    /* Convective envelope: the dwarf relation at a log Teff lowered by
     * 0.05 dex per dex of gravity below the main sequence's (giants are
     * convective to higher Teff) [engineering choice, MODEL.md]. */
    double dlogg = 4.4 - logg;
    double q, rb;
    dwarf_envelope(logt - 0.05 * (dlogg > 0.0 ? dlogg : 0.0), &q, &rb);
    double mce = q * menv;
    double rc = core_radius_rsun(mhe, phase);
    double r_base = rb * r;
    if (mhe > 0.0 && r_base < rc)
        r_base = rc; /* the envelope reaches at most down to the core */
    /* Moment of inertia: the interior inside r_base (mass M - M_ce) as an
     * n = 3 polytrope of radius r_base, the convective envelope as a
     * rho ~ r^-2 shell. */
    double inertia = K2_N3 * (m - mce) * r_base * r_base + K2_SHELL * mce * (r * r + r * r_base + r_base * r_base);
    double k2 = inertia / (m * r * r);
    /* Binding energy of the envelope (mass M_env from the core radius r_c to
     * R, rho ~ r^-2): E = G M_env / (R - r_c) [(M_c - a r_c) ln(R / r_c) +
     * M_env], a = M_env / (R - r_c); without a core, E = G M^2 / R. */
    double me = menv > MIN_ENV_MSUN ? menv : MIN_ENV_MSUN;
    double rcc = rc < 0.5 * r ? rc : 0.5 * r;
    double e_units; /* E in G Msun^2 / Rsun */
    if (mhe <= 0.0 || rcc <= 0.0) {
        e_units = me * me / r;
    } else {
        double a = me / (r - rcc);
        e_units = a * ((mhe - a * rcc) * log(r / rcc) + me);
    }
    double gm2_r = HRT_GM_SUN * (HRT_GM_SUN / HRT_G_SI) / HRT_RSUN_M * 1e7; /* G Msun^2 / Rsun in erg */
    out[GEN_S_ENV] = menv;
    out[GEN_S_CONV_MASS] = mce;
    out[GEN_S_CONV_BASE] = r_base;
    out[GEN_S_K2] = k2;
    out[GEN_S_LOG_EBIND] = log10(e_units * gm2_r);
    out[GEN_S_LAMBDA] = m * me / (r * e_units);
}
