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

/* Core mass-luminosity relation for degenerate helium cores, Refsdal &
 * Weigert (1970, A&A 6, 426): L = 2.3e5 Mc^6 [from memory]. */
static double logl_rgb_core(double mc) { return log10(2.3e5) + 6.0 * log10(mc); }

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
