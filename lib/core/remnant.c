/* Analytic remnants: the white dwarf mass-radius relation, Mestel cooling,
 * the core-collapse remnant rule, and the state of a remnant past a
 * track's last EEP. */
#include <math.h>
#include <string.h>

#include "core/core.h"

/* Eggleton's zero-temperature mass-radius relation, as quoted by Verbunt &
 * Rappaport (1988, ApJ 332, 193), eq. 5 [constants from memory]:
 *   R/Rsun = 0.0114 [(M/Mch)^(-2/3) - (M/Mch)^(2/3)]^(1/2)
 *            [1 + 3.5 (M/Mp)^(-2/3) + (Mp/M)^(-1)]^(-2/3)
 * with Mch = 1.44 and Mp = 0.00057 Msun.  It agrees with Nauenberg's
 * (1972, ApJ 175, 417) relation to 1-3 % and gives 0.0125 Rsun at 0.6 Msun. */
double hrt_wd_radius_rsun(double m)
{
    const double mch = TRAIL_WD_MASS_MAX_MSUN, mp = 0.00057;
    if (!(m > 0.0 && m < mch))
        return NAN;
    double a = pow(m / mch, 2.0 / 3.0);
    double b = 1.0 + 3.5 * pow(m / mp, -2.0 / 3.0) + mp / m;
    return 0.0114 * sqrt(1.0 / a - a) * pow(b, -2.0 / 3.0);
}

static double logistic(double x) { return 1.0 / (1.0 + exp(-x)); }

/* C1 smoothstep of x between a and b (0 below a, 1 above b). */
static double smoothstep(double x, double a, double b)
{
    double u = (x - a) / (b - a);
    return u <= 0.0 ? 0.0 : u >= 1.0 ? 1.0 : u * u * (3.0 - 2.0 * u);
}

/* Pair instability, by the carbon-oxygen core mass at collapse (Msun).
 * Pulsations begin in helium cores of about 30-35 Msun and remove mass,
 * pair-instability supernovae leave nothing for helium cores of about 64 to
 * 133 Msun, and heavier cores collapse (Woosley 2017, ApJ 836, 244 [read:
 * abstract and introduction, "no black holes between 52 and 133 Msun"]);
 * the heaviest black hole below the gap is 45 Msun (Farmer et al. 2019, ApJ
 * 887, 53 [read: abstract]) and pair-instability supernovae begin at CO cores
 * of about 60 Msun [from memory].  Helium-core limits are taken to CO cores
 * with CO/He = 0.88-0.9 [engineering choice]:
 *   pulsational mass loss fades in over CO 26-34 Msun (helium cores of 30-39); with it the baryonic
 *   mass left is at most 50 Msun (45 Msun black hole);
 *   CO 60-120 Msun: pair-instability supernova, no remnant;
 *   above 120 Msun: direct collapse. */
#define TRAIL_CO_PPI_LO 26.0
#define TRAIL_CO_PPI_HI 34.0
#define TRAIL_CO_PISN_LO 60.0
#define TRAIL_CO_PISN_HI 120.0
#define TRAIL_PPI_MAX_BARYONIC 50.0

int hrt_collapse_remnant(double m_co, double m_fin, int *kind, double *m_rem)
{
    if (!kind || !m_rem)
        return HRT_E_NULL;
    if (!(isfinite(m_co) && isfinite(m_fin) && m_co >= 0.0 && m_fin > 0.0 && m_co <= m_fin))
        return HRT_E_DOMAIN;
    if (m_co >= TRAIL_CO_PISN_LO && m_co < TRAIL_CO_PISN_HI) {
        *kind = HRT_REMNANT_NONE; /* pair-instability supernova: the star is disrupted */
        *m_rem = 0.0;
        return HRT_OK;
    }
    /* Fryer et al. (2012, ApJ 749, 91) "delayed" prescription [from memory]:
     * proto-neutron-star mass 1.2 / 1.3 / 1.4 / 1.6 Msun with steps at CO
     * cores of 3.5, 6 and 11 Msun, smoothed [engineering choice] */
    double mp = 1.2 + 0.1 * logistic((m_co - 3.5) / 0.1) + 0.1 * logistic((m_co - 6.0) / 0.1) +
                0.2 * logistic((m_co - 11.0) / 0.1);
    double mfb; /* fallback */
    if (m_co < 2.5)
        mfb = 0.2;
    else if (m_co < 3.5)
        mfb = 0.5 * m_co - 1.05;
    else if (m_co < 11.0) {
        double a2 = 0.133 - 0.093 / (m_fin - mp), b2 = -11.0 * a2 + 1.0;
        mfb = (a2 * m_co + b2) * (m_fin - mp);
    } else
        mfb = m_fin - mp;
    double mbar = fmin(mp + mfb, m_fin);
    if (m_co > TRAIL_CO_PPI_LO && m_co < TRAIL_CO_PISN_LO) {
        /* pulsations eject what lies above the largest mass that survives,
         * fading in with the core [engineering choice]; a smooth max of
         * width 2 Msun */
        double w = smoothstep(m_co, TRAIL_CO_PPI_LO, TRAIL_CO_PPI_HI), x = mbar - TRAIL_PPI_MAX_BARYONIC;
        mbar -= w * 0.5 * (x + sqrt(x * x + 4.0));
    }
    if (mbar < 2.5) {
        *kind = HRT_REMNANT_NS;
        *m_rem = (-1.0 + sqrt(1.0 + 0.3 * mbar)) / 0.15;
    } else {
        *kind = HRT_REMNANT_BH;
        *m_rem = 0.9 * mbar;
    }
    return HRT_OK;
}

/* Mean atomic mass number of the ions of each white-dwarf kind: helium 4;
 * carbon-oxygen 13.7 (equal masses of 12C and 16O, harmonic mean); oxygen-neon
 * 17.6 (60 % O, 40 % Ne by mass) [engineering choice]. */
static double wd_ion_a(int kind)
{
    switch (kind) {
    case HRT_REMNANT_HE_WD:
        return 4.0;
    case HRT_REMNANT_ONE_WD:
        return 17.6;
    default:
        return 13.7;
    }
}

/* Mestel (1952, MNRAS 112, 583) cooling, L proportional to M T_core^(7/2):
 *   t_cool = C (L^(-5/7) - L0^(-5/7)),  C = 6e6 yr (A/12)^-1 M^(5/7) (mu/2)^(-2/7)
 * with mu = 2 [normalisation from memory; other texts differ by about 1.5].
 * Inverted for L at a time dt after a luminosity L0. */
static int wd_cooling_defined(double m, int kind, double log_l0)
{
    return m > 0.0 && isfinite(log_l0) && trail_remnant_is_wd(kind) && strcmp(hrt_remnant_key(kind), "unknown") != 0;
}

/* The cooling law's parts: its time scale C, L0^(-5/7), and log L after dt. */
static double wd_cooling_c(double m, int kind) { return 6.0e6 * (12.0 / wd_ion_a(kind)) * pow(m, 5.0 / 7.0); }
static double wd_cooling_x0(double log_l0) { return pow(10.0, -5.0 / 7.0 * log_l0); }
static double wd_cooling_log_l(double x0, double c, double dt_yr) { return -7.0 / 5.0 * trail_log10(x0 + dt_yr / c); }

double hrt_wd_log_l(double m, int kind, double log_l0, double dt_yr)
{
    if (!wd_cooling_defined(m, kind, log_l0) || !(dt_yr >= 0.0))
        return NAN;
    return wd_cooling_log_l(wd_cooling_x0(log_l0), wd_cooling_c(m, kind), dt_yr);
}

void trail_wd_fixed_init(trail_wd_fixed *w, int kind, double rem_mass, double log_l_last)
{
    w->ok = wd_cooling_defined(rem_mass, kind, log_l_last);
    if (!w->ok)
        return;
    w->x0 = wd_cooling_x0(log_l_last);
    w->c = wd_cooling_c(rem_mass, kind);
    w->log_r = trail_log10(hrt_wd_radius_rsun(rem_mass));
    w->log_g = trail_log_g_from(rem_mass, w->log_r);
}

/* Luminosities between which Mestel cooling is good to the factor of about
 * 1.5 in age hrt_wd_log_l states (log10 L/Lsun; neutrino losses above,
 * crystallisation and Debye cooling below; from memory, common practice). */
#define TRAIL_WD_LOG_L_VALID_MIN (-4.5)
#define TRAIL_WD_LOG_L_VALID_MAX (-1.0)

/* Nominal neutron-star radius, km (common practice: 11-13 km). */
#define NS_RADIUS_KM 12.0

void trail_state_remnant(hrt_state *s, int kind, double rem_mass, double log_l_last, double t_last_yr,
                         const trail_wd_fixed *wd)
{
    s->flags |= HRT_FLAG_REMNANT;
    s->phase_start_yr = t_last_yr;
    s->phase_end_yr = INFINITY;
    s->phase_fraction = NAN;
    s->eep = NAN;
    s->mass_msun = rem_mass;
    switch (kind) {
    case HRT_REMNANT_HE_WD:
    case HRT_REMNANT_CO_WD:
    case HRT_REMNANT_ONE_WD:
        s->phase = HRT_PHASE_WD;
        /* The remnant test is made on log ages; in years the age can then
         * fall a rounding error short of t_last: cooling has not begun. */
        if (wd && wd->ok) { /* a star's remnant: the same numbers, the fixed parts computed once */
            s->log_l_lsun = wd_cooling_log_l(wd->x0, wd->c, fmax(s->age_yr - t_last_yr, 0.0));
            s->log_r_rsun = wd->log_r;
            s->log_g_cgs = wd->log_g;
        } else {
            s->log_l_lsun = hrt_wd_log_l(rem_mass, kind, log_l_last, fmax(s->age_yr - t_last_yr, 0.0));
            s->log_r_rsun = trail_log10(hrt_wd_radius_rsun(rem_mass));
            s->log_g_cgs = trail_log_g_from(rem_mass, s->log_r_rsun);
        }
        s->log_teff_k = TRAIL_LOG_TEFF_SUN + 0.25 * (s->log_l_lsun - 2.0 * s->log_r_rsun);
        if (!(s->log_l_lsun >= TRAIL_WD_LOG_L_VALID_MIN && s->log_l_lsun <= TRAIL_WD_LOG_L_VALID_MAX))
            s->flags |= HRT_FLAG_BEYOND_LAW;
        /* cores nested as in every state: the helium core is the whole
         * white dwarf (no hydrogen left), the CO core all of it but in a
         * helium white dwarf */
        s->he_core_mass_msun = rem_mass;
        s->co_core_mass_msun = kind == HRT_REMNANT_HE_WD ? 0.0 : rem_mass;
        break;
    case HRT_REMNANT_NS:
        s->phase = HRT_PHASE_NS;
        s->flags |= HRT_FLAG_DARK;
        s->log_r_rsun = trail_log10(NS_RADIUS_KM * 1e3 / HRT_RSUN_M);
        s->log_g_cgs = trail_log_g_from(rem_mass, s->log_r_rsun);
        s->log_l_lsun = s->log_teff_k = NAN;
        s->he_core_mass_msun = s->co_core_mass_msun = NAN;
        break;
    case HRT_REMNANT_NONE: /* disrupted without remnant (pair-instability supernova): nothing left */
        s->phase = HRT_PHASE_UNKNOWN;
        s->flags |= HRT_FLAG_DARK;
        s->mass_msun = 0.0;
        s->log_l_lsun = s->log_teff_k = s->log_r_rsun = s->log_g_cgs = NAN;
        s->he_core_mass_msun = s->co_core_mass_msun = 0.0;
        break;
    default: /* black hole */
        s->phase = HRT_PHASE_BH;
        s->flags |= HRT_FLAG_DARK;
        s->log_l_lsun = s->log_teff_k = s->log_r_rsun = s->log_g_cgs = NAN;
        s->he_core_mass_msun = s->co_core_mass_msun = NAN;
        break;
    }
}

/* The remnant a star of a query context leaves: the kind of the track
 * nearest in mass and [Fe/H], the mass interpolated like any quantity where
 * its neighbours leave the same family of remnant. */
/* An interpolated remnant mass its kind does not allow (not positive, or a
 * white dwarf at or above TRAIL_WD_MASS_MAX_MSUN: extrapolation past a route's last track,
 * overshoot of a cubic type) is replaced by the nearest track's. */
static double remnant_bounded(int kind, double m, double nearest)
{
    int wd = trail_remnant_is_wd(kind);
    return (m > 0.0 && (!wd || m < TRAIL_WD_MASS_MAX_MSUN)) ? m : nearest;
}

void trail_q_remnant(const qctx *q, int *kind, double *mass_msun)
{
    const mctx *mn = &q->m[q->zp.g_near];
    if (q->zp.single) {
        /* the common case: one group, two knots */
        const zgroup *gp = mn->gp;
        size_t i = mn->i;
        int k0 = gp->remnant[mn->near];
        *kind = k0;
        int f0 = trail_remnant_family(k0);
        int use0 = mn->w_val[0] != 0.0 || mn->w_val[1] != 0.0, use1 = mn->w_val[2] != 0.0 || mn->w_val[3] != 0.0;
        if (k0 == HRT_REMNANT_NONE) {
            *mass_msun = NAN;
        } else if ((use0 && trail_remnant_family(gp->remnant[i]) != f0) ||
                   (use1 && trail_remnant_family(gp->remnant[i + 1]) != f0)) {
            *mass_msun = gp->remnant_knots[2 * mn->near];
        } else {
            const double *p = gp->remnant_knots + 2 * i, *w = mn->w_val;
            *mass_msun = remnant_bounded(k0, w[0] * p[0] + w[1] * p[1] + w[2] * p[2] + w[3] * p[3],
                                         gp->remnant_knots[2 * mn->near]);
        }
        return;
    }
    size_t gb = q->zp.g0 + 1;
    int k0 = mn->gp->remnant[mn->near], same = 1;
    for (size_t k = q->zp.g0; k <= gb; k++) {
        const mctx *m = &q->m[k];
        for (int s = 0; s < 2; s++) {
            size_t t = m->i + (size_t)s;
            if ((m->w_val[2 * s] != 0.0 || m->w_val[2 * s + 1] != 0.0) &&
                trail_remnant_family(m->gp->remnant[t]) != trail_remnant_family(k0))
                same = 0;
        }
    }
    *kind = k0;
    if (k0 == HRT_REMNANT_NONE) {
        *mass_msun = NAN;
        return;
    }
    if (!same) {
        *mass_msun = mn->gp->remnant_knots[2 * mn->near];
        return;
    }
    double v[2];
    for (size_t k = q->zp.g0; k <= gb; k++) {
        const mctx *m = &q->m[k];
        const double *p = m->gp->remnant_knots + 2 * m->i;
        v[k - q->zp.g0] = m->w_val[0] * p[0] + m->w_val[1] * p[1] + m->w_val[2] * p[2] + m->w_val[3] * p[3];
    }
    *mass_msun = remnant_bounded(k0, q->zp.single ? v[0] : (1.0 - q->zp.t_feh) * v[0] + q->zp.t_feh * v[1],
                                 mn->gp->remnant_knots[2 * mn->near]);
}

void trail_state_clear(hrt_state *s, double mass, double z, double age_yr)
{
    /* one assignment rather than memset and stores: the compiler writes
     * the struct once */
    *s = (hrt_state){
        .struct_size = (uint32_t)sizeof *s,
        .route = -1,
        .initial_mass_msun = mass,
        .z = z,
        .age_yr = age_yr,
        .log_l_lsun = NAN,
        .log_teff_k = NAN,
        .log_r_rsun = NAN,
        .log_g_cgs = NAN,
        .mass_msun = NAN,
        .he_core_mass_msun = NAN,
        .co_core_mass_msun = NAN,
        .eep = NAN,
        .phase_fraction = NAN,
        .phase_start_yr = NAN,
        .phase_end_yr = NAN,
        .remnant_mass_msun = NAN,
    };
}
