/*
 * The default-grid model after the main sequence on the low-mass and giant
 * routes: subgiants and the Hertzsprung gap, red giant branches, the helium
 * flash, core helium burning (red clump, horizontal branch, blue loops), the
 * AGB, and the way to the white dwarf (tracks/MODEL.md).  It starts from the
 * state at the end of the main sequence that seg_ms() (model.c) leaves in the
 * context.
 *
 * Provenance tags as in model.c: [read], [from memory], [derived],
 * [engineering choice].  Units: masses Msun, luminosities Lsun, Teff K, ages yr.
 */
#include <math.h>

#include "hrtrail.h"
#include "model.h"
#include "model_internal.h"

/* ------------------------------------------------------------------------
 * Surface temperatures
 * ------------------------------------------------------------------------ */
/* Red-giant-branch (and AGB) temperature [engineering choice]: a curved giant
 * branch, log Teff = T(log L) + 0.05 log M + Z term, where T runs through
 * (log L, log Teff) = (0, 3.730), (1, 3.695), (2, 3.645), (3, 3.560),
 * (3.5, 3.510), (4.5, 3.450) with corners rounded over 0.3 dex: it cools
 * faster towards the tip (3300 K at the solar-Z tip, common practice: 3300-3500
 * K, from memory) and more slowly above it on the AGB.  Lower Z is hotter, the
 * more so the brighter: d log Teff / d[Fe/H] = -0.016 at log L <= 1 growing to
 * -0.036 at log L >= 3.5 (metal-poor giant-branch tips near 4000 K, from
 * memory).  The mass term follows the homology result Teff ~ M^(7/51)
 * (Hayashi 1961; Hansen, Kawaler & Trimble 2004), damped [engineering
 * choice]. */
static double logt_rgb(double logl, double m, double zeta)
{
    static const double x[] = {0.0, 1.0, 2.0, 3.0, 3.5, 4.5};
    static const double y[] = {3.730, 3.695, 3.645, 3.560, 3.510, 3.450};
    static const double zx[] = {1.0, 3.5}, zy[] = {0.0, 2.5};
    double lt = soft_table(x, y, 6, 0.3, logl) + 0.05 * log10(m);
    return lt - zeta * (0.016 + 0.008 * soft_table(zx, zy, 2, 0.3, logl));
}

/* The red clump / zero-age horizontal branch lies hotter than the giant branch
 * at the same luminosity by 0.05-0.1 dex (common practice); we take 0.05, the
 * low end: solar-metallicity clump giants are observed at 4700-4900 K [from
 * memory], 0.03-0.05 dex hotter than the giant branch at their luminosity
 * [engineering choice]. */
#define HB_OFFSET 0.05

/* Hot end of a star with almost no hydrogen envelope (extreme horizontal
 * branch, stripped giant) [engineering choice]: log Teff = 4.4. */
#define LOGT_STRIPPED 4.4

/* Envelope mass below which a giant leaves the red giant branch's colour
 * [engineering choice]: 0.002 Msun on the giant branches.  On the horizontal
 * branch the half-way mass is m0 = 0.035 (Z/Zsun)^-0.19 Msun: 0.035 at solar
 * Z (red clump unless the envelope is a few 0.01 Msun), 0.09 at Z = 1e-4,
 * where zero-age horizontal-branch stars with a 0.5 Msun core are red above
 * about 0.3 Msun of envelope, RR Lyrae near 0.2 and blue below 0.15
 * (1e4 K near 0.1) [from memory: metal-poor zero-age horizontal-branch
 * sequences; common practice: blue horizontal branches need small
 * envelopes, and more so at higher Z]. */
static double m0_giant(double zeta) { return 0.002 * pow(10.0, -0.15 * zeta); }
static double m0_hb(double zeta) { return 0.035 * pow(10.0, -0.19 * zeta); }

static double logt_envelope(double logt_red, double env, double m0)
{
    double w = 1.0 / (1.0 + pow(fmax(env, 1e-9) / m0, 3.0));
    return logt_red + (LOGT_STRIPPED - logt_red) * w;
}

/* Luminosity of the red-giant-branch tip for degenerate ignition,
 * log L = 3.40 + 0.045 [Fe/H] [engineering choice within published ranges]:
 * 3.30 at Z = 1e-4 (tip M_I = -4.05 +- 0.04 of metal-poor populations,
 * Freedman et al. 2020, ApJ 891, 57 [from memory], with BC_I ~ +0.5 at the
 * tip colour [from memory], gives M_bol ~ -3.55, log L ~ 3.32), 3.40 at
 * Z = 0.014 (3.35-3.45 textbook, Salaris & Cassisi 2005 [from memory]); the
 * tip brightens with metallicity (Da Costa & Armandroff 1990, AJ 100, 162:
 * M_bol,tip = -0.19 [Fe/H] - 3.81 [from memory], 0.076 dex in L per dex;
 * we take 0.045 so the most metal-poor tips stay at log L >= 3.3). */
static double logl_tip_degenerate(double zeta) { return 3.40 + 0.045 * zeta; }

/* Core mass-luminosity relation for degenerate helium cores: the slope of
 * Refsdal & Weigert (1970, A&A 6, 426), L ~ Mc^6 [from memory], normalised so
 * that the tip core mass (mc_tip_degenerate) sits at the tip luminosity above
 * [derived]; at Z = 0.014 it is L = 2.3e5 Mc^6 to 0.01 dex, their
 * coefficient [from memory]. */
static double logl_rgb_core(double mc, double zeta)
{
    return logl_tip_degenerate(zeta) + 6.0 * log10(mc / mc_tip_degenerate(zeta));
}

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

/* Initial-final mass relation [read: Cummings et al. 2018, ApJ 866, 21,
 * slopes and breaks; coefficients from memory]: M_f = 0.080 M_i + 0.489
 * below 2.85 Msun and 0.187 M_i + 0.184 to 3.60 Msun; joined smoothly (0.05
 * Msun).  Above 3.60 Msun Cummings et al. give 0.107 M_i + 0.471 (1.006 Msun
 * at 5 Msun); field white dwarfs suggest the relation flattens over
 * 3.5-5.5 Msun (El-Badry, Rix & Weisz 2018, ApJL 860, L17 [read: abstract])
 * and other cluster relations give 0.94-0.98 at 5 Msun (e.g. Kalirai et al.
 * 2008, ApJ 676, 594: 0.109 M_i + 0.394 [from memory]).  We keep Cummings'
 * line and its end points at 3.60 and 7.20 Msun and bend it down between
 * them by 0.04 * 16 s^2 (1 - s)^2, s = (M_i - 3.6)/3.6 [engineering
 * choice]: 0.97 at 5 Msun, at most 0.04 below the line (their scatter is
 * 0.06), slope and value unchanged at both ends.  Extrapolated below 0.83
 * and above 7.2 Msun, capped below 1.38 Msun. */
double gen_ifmr(double mi)
{
    double a = 0.080 * mi + 0.489, b = 0.187 * mi + 0.184;
    double s = fmin(fmax((mi - 3.60) / 3.60, 0.0), 1.0);
    double c = 0.107 * mi + 0.471 - 0.04 * 16.0 * s * s * (1.0 - s) * (1.0 - s);
    double s1 = logistic((mi - 2.85) / 0.05), s2 = logistic((mi - 3.60) / 0.05);
    double v = a * (1.0 - s1) + b * s1;
    v = v * (1.0 - s2) + c * s2;
    return smin(v, 1.38, 0.02);
}

/* Hottest point of the way to the white dwarf, as a function of the remnant
 * mass [engineering choice]: log Teff_max = 5.0 + 1.3 (M_wd - 0.55), rounded
 * off below 5.5: 1e5 K at 0.55 Msun, 1.2e5 K at 0.6, 2.8e5 K at 0.9 and
 * about 3e5 K above 1 Msun (post-AGB stars of heavier cores reach hotter
 * knees: common practice / from memory, ~1e5 K at 0.55 Msun to 2-3e5 K
 * at >= 0.9 Msun); 4.7e4 K for a 0.3 Msun helium white dwarf. */
static double logt_pre_wd_max(double m_wd) { return smin(5.0 + 1.3 * (m_wd - 0.55), 5.5, 0.06); }

/* Contraction from the end of the giant branch (or blue-dwarf phase) to the
 * white dwarf: leg A at constant L -- the core-mass-luminosity relation's
 * luminosity the AGB (or RGB) ended at -- while the residual hydrogen
 * envelope env burns (t = env X / (B L), [derived]), heating to
 * logt_pre_wd_max(m_wd); leg B fading to the onset luminosity on the
 * white-dwarf radius (twice as long as leg A), L falling first at nearly
 * constant radius, then the radius shrinking [engineering choice].  Ends with
 * keypoint wd_onset. */
static void seg_to_wd(ctx *c, double m_wd, double env, int phase, double co_frac)
{
    const int na = 120, nb = 80;
    double logl_e = c->logl, logt_e = c->logt;
    double logr_e = logr_from_lt(logl_e, logt_e);
    double logr_wd = log10(hrt_wd_radius_rsun(m_wd));
    double logr_k = smax(logr_from_lt(logl_e, logt_pre_wd_max(m_wd)), logr_wd + 0.3, 0.05);
    logr_k = smin(logr_k, logr_e - 0.05, 0.05);
    /* below both bounds of the wd_onset criterion (tracks/FORMAT.md), at most
     * 0.01 dex, so the criterion meets the keypoint within a sample or two */
    double logl0 = smin(c->p->log_l_wd_onset, logl_e - 0.3, 0.02);
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
void low_after_ms(ctx *c)
{
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
        double ll_red = logl_rgb_core(mc, c->zeta) + (logl_t - logl_rgb_core(mc0, c->zeta)) * exp(-(mc - mc0) / 0.03);
        /* blue path: the core-exhausted fully convective star brightens by
         * 0.5 dex and heats by 0.25 dex (Laughlin et al. 1997, blue dwarfs)
         * [engineering choice for the amounts] */
        double ll_blue = logl_t + 0.5 * s;
        double logl = w * ll_red + (1.0 - w) * ll_blue;
        /* mass lost as the core grows, accelerating like Reimers' law,
         * exhausting the envelope at the end [engineering choice] */
        double m = m_t - (m_t - m_wd) * s * s;
        double lt_red = logt_envelope(logt_rgb(logl, m, c->zeta), m - mc, m0_giant(c->zeta));
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

/* Luminosity along the Hertzsprung gap [engineering choice]: with x the
 * progress in log Teff from the TAMS to the base of the giant branch, L rises
 * as x^2 to the base (1-2 Msun subgiants brighten as they cool), plus a hump
 * 6.75 x^2 (1 - x) (peak 1 at x = 2/3) of 0.10 dex growing in from 1.3 to
 * 2.5 Msun: stars of 2-8 Msun cross the gap at slowly rising L and dim
 * towards the base of the giant branch as the convective envelope deepens
 * (common practice). */
static double hg_logl(double logl_t, double logl_base, double m0, double x)
{
    double hump = 0.10 * sstep(log10(m0), log10(1.3), log10(2.5));
    return logl_t + (logl_base - logl_t) * x * x + hump * 6.75 * x * x * (1.0 - x);
}

/* --- subgiant / Hertzsprung gap: TAMS to rgb_base --- */
static void giant_subgiant(ctx *c, const giant_plan *g)
{
    const gen_params *p = c->p;
    double m_t = g->m_t, logl_t = g->logl_t, logt_t = g->logt_t, mc_t = g->mc_t, wnd = g->wnd;
    double logl_base = g->logl_base, t_hg = g->t_hg;
    const int n = 200;
    double age0 = c->age, m = m_t, mc = mc_t, logl_prev = logl_t;
    double logt_base = logt_rgb(logl_base, m_t, c->zeta);
    set_last_phase(c, HRT_PHASE_SUBGIANT);
    for (int i = 1; i <= n; i++) {
        double u = (double)i / n;
        /* log Teff falls slowly at first, faster towards the giant branch
         * (the envelope's thermal time shortens as it expands) [engineering choice] */
        double x = u * (0.6 + 0.4 * u);
        double logl = hg_logl(logl_t, logl_base, c->m0, x);
        double logt = logt_t + (logt_base - logt_t) * x;
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
        double logt = logt_rgb(ll[i], m_base, c->zeta);
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
    /* Reimers loss, saturating so that at most 90 % of the envelope E above
     * the tip core goes: dM = E dM_R / sqrt(E^2 + dM_R^2) [engineering
     * choice; the former E dM_R / (E + dM_R) halved the loss of metal-poor
     * 0.8 Msun giants, ~0.1 instead of ~0.2 Msun, and left old metal-poor
     * horizontal branches red]. */
    double e_av = 0.9 * (m_base - mc_ign);
    double dm_eff = dm_r > 0.0 ? e_av * dm_r / sqrt(e_av * e_av + dm_r * dm_r) : 0.0;
    double age0 = c->age;
    set_last_phase(c, HRT_PHASE_RGB);
    for (int i = 1; i <= N; i++) {
        double m = m_base - dm_eff * (dm_r > 0 ? dmr[i] / dm_r : 0.0);
        double logt = logt_envelope(logt_rgb(ll[i], m, c->zeta), m - lmc[i], m0_giant(c->zeta));
        push(c, age0 + dtn[i] * scale, ll[i], logt, m, lmc[i], 0.0, HRT_PHASE_RGB);
    }
}

/* --- flash / settling to the zero-age core-helium-burning locus: he_ignition to cheb_start ---
 * [engineering choice, after the textbook picture of the helium flash]: the
 * star falls from the tip, first down along the giant branch and then off
 * it towards the clump; 85 % of the drop in log L comes in the first half of
 * the segment, the rest as (1 - v)^2, so L falls all the way and the
 * zero-age core-helium-burning star is the luminosity minimum after the tip
 * (the keypoint criterion of tracks/FORMAT.md).  The sub-flashes that lift
 * the core's degeneracy show as two damped swings of 0.03 dex in log Teff
 * (degenerate ignition only, fading out over the 0.5 Msun below the flash
 * limit) while the star settles on the red clump / zero-age horizontal
 * branch.  The segment lasts 1.5 % of core helium burning, spread evenly
 * over its samples: the real fall takes only 1e4-1e5 yr [from memory], but
 * an even spread keeps the segment's EEPs (placed by path length, which
 * counts age) comparable between masses whose tips differ by a dex near the
 * flash limit.  Stars above the limit glide down without the swings. */
static void giant_settle(ctx *c, const giant_plan *g)
{
    double t_cheb = g->t_cheb, m0h = g->m0h, logl_c0 = g->logl_c0, mc_ign = g->mc_ign;
    double m_ign = g->m_ign, logl_ign = g->logl_ign, logt_ign = g->logt_ign;
    const int n = 100;
    double t_set = 0.015 * t_cheb; /* [engineering choice] */
    double age0 = c->age;
    double logt_c0 = logt_envelope(logt_rgb(logl_c0, m_ign, c->zeta) + HB_OFFSET, m_ign - mc_ign, m0h);
    double d_ign = logt_ign - logt_rgb(logl_ign, m_ign, c->zeta); /* the tip's offset from the RGB line */
    double mhef = gen_m_hef(c->p, c->z);
    double swing = 0.03 * (1.0 - sstep(c->m0, mhef - 0.5, mhef + 0.1));
    const double v_fall = 0.5;
    set_last_phase(c, HRT_PHASE_CHEB);
    for (int i = 1; i <= n; i++) {
        double v = (double)i / n;
        double fv = fmin(v / v_fall, 1.0), fall = 1.0 - (1.0 - fv) * (1.0 - fv);
        double w = fmax(v - v_fall, 0.0) / (1.0 - v_fall);
        double drop = 0.85 * (1.0 - fall) + 0.15 * (1.0 - v) * (1.0 - v);
        double logl = logl_c0 + (logl_ign - logl_c0) * drop;
        /* along the giant branch (keeping the tip's offset), then onto the clump */
        double along = logt_rgb(logl, m_ign, c->zeta) + d_ign * (1.0 - fall) + 0.5 * HB_OFFSET * fall;
        double b = sstep(v, 0.2, 1.0);
        double osc = swing * sin(2.0 * PI * 2.0 * w) * (1.0 - w);
        double logt = along * (1.0 - b) + logt_c0 * b + osc;
        push(c, age0 + t_set * v, logl, logt, m_ign, mc_ign, 0.0, HRT_PHASE_CHEB);
    }
}

/* Blue edge of the classical Cepheid instability strip (fundamental mode):
 * log Teff = 3.83 - 0.04 (log L - 3), i.e. 3.83 at log L = 3 and 3.79 at
 * log L = 4 (theoretical edges of Bono, Marconi & Stellingwerf 1999, ApJS
 * 122, 167 and later work at solar Z: 3.80-3.85 over log L 3-4 [from
 * memory]). */
static double logt_cepheid_blue_edge(double logl) { return 3.83 - 0.04 * (logl - 3.0); }

/* Blue loop of core-helium-burning 3-8 Msun stars, as the log Teff the loop
 * adds at its tip [engineering choice]: the tip reaches
 * blue edge + d, d = -0.03 (4 Msun) to +0.02 (>= 6 Msun) at Z = 0.014, so
 * the loops of 4-8 Msun stars cross the Cepheid strip (classical Cepheids
 * are blue-loop stars of about 4-10 Msun: common practice), and 0.05 dex
 * further per dex below solar [Fe/H] (down to [Fe/H] = -2): loops are larger
 * at low Z (common practice).  The loop grows in from 3 to 4.5 Msun. */
static double giant_loop(double m0, double zeta, double logl_loop, double m)
{
    double x = log10(m0);
    double z_extra = soft_table((const double[]){-2.0, 0.0}, (const double[]){0.1, 0.0}, 2, 0.2, zeta);
    double d = -0.03 + 0.05 * sstep(x, log10(4.0), log10(6.0)) + z_extra;
    double red = logt_rgb(logl_loop, m, zeta) + HB_OFFSET;
    double amp = smax(logt_cepheid_blue_edge(logl_loop) + d - red, 0.0, 0.02);
    return amp * sstep(x, log10(3.0), log10(4.5));
}

/* Time profile of the loop [engineering choice]: out from 10 to 30 % of core
 * helium burning, most of the phase at the blue end, back between 80 and
 * 95 % (blue-loop stars spend most of their helium burning in the loop). */
static double giant_loop_shape(double phi) { return sstep(phi, 0.10, 0.30) * (1.0 - sstep(phi, 0.80, 0.95)); }

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
        /* the clump offset fades over the last 40 % as the star turns towards
         * the AGB [engineering choice] */
        double off = HB_OFFSET * (1.0 - sstep(phi, 0.6, 1.0));
        double logt = logt_rgb(logl, m, c->zeta) + off + loop * giant_loop_shape(phi);
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
    /* at least 0.05 dex above the end of core helium burning, smoothly [engineering choice] */
    double logl1 = smax(logl_agb_core(mc_1tp), logl0 + 0.05, 0.05);
    set_last_phase(c, HRT_PHASE_EAGB);
    for (int i = 1; i <= n; i++) {
        double u = (double)i / n;
        double logl = logl0 + (logl1 - logl0) * u;
        double mhe = mhe0 + (mc_1tp - mhe0) * u;
        double mco = mco0 + (0.98 * mc_1tp - mco0) * u;
        double m0e = m0h * pow(m0g / m0h, u);
        double logt = logt_envelope(logt_rgb(logl, m, c->zeta), m - mhe, m0e);
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
        double logt = logt_envelope(logt_rgb(ll[i], m, c->zeta), m - mc[i], m0g);
        push(c, age0 + tt[i], ll[i], logt, m, mc[i], 0.98 * mc[i], HRT_PHASE_TPAGB);
    }
}

void giant_after_ms(ctx *c)
{
    const gen_params *p = c->p;
    giant_plan g;
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
    g.logl_tip = (1.0 - g.wnd) * logl_rgb_core(g.mc_ign, c->zeta) + g.wnd * (g.logl_base + log10(1.5));
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
    g.loop = giant_loop(c->m0, c->zeta, g.logl_c0 + 0.05, g.m_ign);
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
