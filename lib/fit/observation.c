/* hrtrail: what was measured of a star, checked and prepared for the
 * likelihood; bolometric flux, magnitude and distance. */
#include <math.h>
#include <string.h>

#include "util/util.h"
#include "fit/lattice.h"
#include "fit/posterior.h"

#define PI 3.14159265358979323846
/* A parallax is inverted to a distance (errors propagated to first order)
 * only while sigma/parallax is at most this. */
#define PARALLAX_REL_SIGMA_MAX 0.2

double hrt_fit_distance_m(double l_w, double flux_w_m2)
{
    if (!(l_w > 0) || !(flux_w_m2 > 0) || !isfinite(l_w) || !isfinite(flux_w_m2))
        return NAN;
    return sqrt(l_w / (4.0 * PI * flux_w_m2));
}

double hrt_fit_flux_from_mbol(double mbol)
{
    if (!isfinite(mbol))
        return NAN;
    double d10 = 10.0 * HRT_PC_M;
    return HRT_MBOL_ZERO_POINT_W / (4.0 * PI * d10 * d10) * pow(10.0, -0.4 * mbol);
}

void hrt_fit_obs_init(hrt_fit_obs *o)
{
    if (!o)
        return;
    double *d = (double *)o;
    for (size_t i = 0; i < sizeof *o / sizeof(double); i++)
        d[i] = NAN;
}

/* A bolometric flux (or magnitude), and a distance (or parallax), are given. */
static int has_flux(const hrt_fit_obs *o) { return !isnan(o->flux_w_m2) || !isnan(o->mbol); }
static int has_distance(const hrt_fit_obs *o) { return !isnan(o->distance_pc) || !isnan(o->parallax_mas); }

/* Each (value, sigma) pair of hrt_fit_obs, in the order of its fields. */
static const char *const pair_names[] = {"teff", "log_l", "feh", "log_g", "flux", "mbol", "distance", "parallax"};

/* Every value has its sigma and the reverse, finite, sigma > 0. */
static int check_pairs(const hrt_fit_obs *o, hrt_error *err)
{
    const double *d = (const double *)o;
    for (size_t i = 0; i < sizeof pair_names / sizeof pair_names[0]; i++) {
        double v = d[2 * i], s = d[2 * i + 1];
        if (isnan(v) != isnan(s))
            return trail_set_error(err, HRT_E_DOMAIN, "hrt_fit_star: %s given without its sigma, or sigma without the value",
                                   pair_names[i]);
        if (!isnan(v) && (!isfinite(v) || !isfinite(s)))
            return trail_set_error(err, HRT_E_DOMAIN, "hrt_fit_star: %s or its sigma is infinite", pair_names[i]);
        if (!isnan(s) && !(s > 0))
            return trail_set_error(err, HRT_E_DOMAIN, "hrt_fit_star: sigma of %s is %g; it must be > 0", pair_names[i], s);
    }
    return HRT_OK;
}

/* The values themselves, and which of them go together. */
static int check_obs(const hrt_fit_obs *o, hrt_error *err)
{
    int rc = check_pairs(o, err);
    if (rc != HRT_OK)
        return rc;
    if (isnan(o->teff_k))
        return trail_set_error(err, HRT_E_INVALID, "hrt_fit_star: no Teff given (teff_k is required)");
    if (!(o->teff_k > 0))
        return trail_set_error(err, HRT_E_DOMAIN, "hrt_fit_star: Teff %g K must be > 0", o->teff_k);
    if (!isnan(o->flux_w_m2) && !(o->flux_w_m2 > 0))
        return trail_set_error(err, HRT_E_DOMAIN, "hrt_fit_star: flux %g W/m^2 must be > 0", o->flux_w_m2);
    if (!isnan(o->distance_pc) && !(o->distance_pc > 0))
        return trail_set_error(err, HRT_E_DOMAIN, "hrt_fit_star: distance %g pc must be > 0", o->distance_pc);
    if (!isnan(o->parallax_mas) && !(o->parallax_mas > 0))
        return trail_set_error(err, HRT_E_DOMAIN, "hrt_fit_star: parallax %g mas must be > 0", o->parallax_mas);
    if (!isnan(o->flux_w_m2) && !isnan(o->mbol))
        return trail_set_error(err, HRT_E_INVALID, "hrt_fit_star: give a flux or an apparent bolometric magnitude, not both");
    if (!isnan(o->distance_pc) && !isnan(o->parallax_mas))
        return trail_set_error(err, HRT_E_INVALID, "hrt_fit_star: give a distance or a parallax, not both");
    if (!isnan(o->parallax_mas) && o->parallax_mas_sigma > PARALLAX_REL_SIGMA_MAX * o->parallax_mas)
        return trail_set_error(err, HRT_E_INVALID,
                               "hrt_fit_star: parallax %g +- %g mas is too uncertain to invert (sigma/parallax > %g)",
                               o->parallax_mas, o->parallax_mas_sigma, PARALLAX_REL_SIGMA_MAX);
    int have_flux = has_flux(o), have_dist = has_distance(o);
    if (have_dist && !have_flux)
        return trail_set_error(err, HRT_E_INVALID, "hrt_fit_star: a distance or parallax needs a bolometric flux or magnitude");
    if (have_dist && !isnan(o->log_l_lsun))
        return trail_set_error(err, HRT_E_INVALID, "hrt_fit_star: luminosity given twice (log L and flux with distance)");
    return HRT_OK;
}

/* Luminosity: measured, or from the flux and distance (errors propagated to
 * first order); a flux without a distance asks for the HR-diagram distance. */
static void prepare_luminosity(const hrt_fit_obs *o, trail_fit_obs *F)
{
    int have_flux = has_flux(o), have_dist = has_distance(o);
    if (have_flux) {
        if (!isnan(o->flux_w_m2)) {
            F->log_flux = log10(o->flux_w_m2);
            F->log_flux_sigma = o->flux_w_m2_sigma / (o->flux_w_m2 * TRAIL_LN10);
        } else {
            F->log_flux = log10(hrt_fit_flux_from_mbol(o->mbol));
            F->log_flux_sigma = 0.4 * o->mbol_sigma;
        }
    }
    F->log_l.given = !isnan(o->log_l_lsun);
    F->log_l.value = o->log_l_lsun;
    F->log_l.sigma = o->log_l_lsun_sigma;
    if (have_dist) {
        double d_pc = !isnan(o->distance_pc) ? o->distance_pc : 1000.0 / o->parallax_mas;
        double sd = !isnan(o->distance_pc) ? o->distance_pc_sigma / o->distance_pc : o->parallax_mas_sigma / o->parallax_mas;
        double dm = d_pc * HRT_PC_M;
        F->log_l.given = 1;
        F->log_l.value = log10(4.0 * PI * dm * dm / HRT_LSUN_W) + F->log_flux;
        F->log_l.sigma = sqrt(F->log_flux_sigma * F->log_flux_sigma + 4.0 * sd * sd / (TRAIL_LN10 * TRAIL_LN10));
    } else {
        F->hr_distance = have_flux;
    }
}

int trail_fit_obs_prepare(const hrt_fit_model *m, const hrt_fit_obs *o, trail_fit_obs *F, hrt_error *err)
{
    memset(F, 0, sizeof *F);
    int rc = check_obs(o, err);
    if (rc != HRT_OK)
        return rc;
    prepare_luminosity(o, F);
    F->teff.given = 1;
    F->teff.value = o->teff_k;
    F->teff.sigma = o->teff_k_sigma;
    F->log_teff = log10(o->teff_k);
    F->log_g.given = !isnan(o->log_g_cgs);
    F->log_g.value = o->log_g_cgs;
    F->log_g.sigma = o->log_g_cgs_sigma;
    F->feh.given = !isnan(o->feh);
    F->feh.value = o->feh;
    F->feh.sigma = o->feh_sigma;
    F->n_obs = F->teff.given + F->log_l.given + F->log_g.given + F->feh.given;
    /* search window in the lattice quantities */
    double tl = o->teff_k - TRAIL_FIT_CUT_SIGMA * o->teff_k_sigma, th = o->teff_k + TRAIL_FIT_CUT_SIGMA * o->teff_k_sigma;
    F->log_teff_lo = tl > 1.0 ? log10(tl) : -INFINITY;
    F->log_teff_hi = log10(th);
    F->inv_sigma_log_teff = o->teff_k * TRAIL_LN10 / o->teff_k_sigma;
    double ml = o->teff_k - TRAIL_FIT_MATCH_SIGMA * o->teff_k_sigma, mh = o->teff_k + TRAIL_FIT_MATCH_SIGMA * o->teff_k_sigma;
    if (log10(mh) < m->log_teff_range[0] || (ml > 0 && log10(ml) > m->log_teff_range[1]))
        return trail_set_error(err, HRT_E_NO_MATCH,
                               "hrt_fit_star: Teff %g +- %g K is outside every track of the grid (the tracks span %.0f-%.0f K)",
                               o->teff_k, o->teff_k_sigma, pow(10.0, m->log_teff_range[0]), pow(10.0, m->log_teff_range[1]));
    const trail_fit_measured *L = &F->log_l, *G = &F->log_g;
    F->log_l_lo = L->given ? L->value - TRAIL_FIT_CUT_SIGMA * L->sigma : -INFINITY;
    F->log_l_hi = L->given ? L->value + TRAIL_FIT_CUT_SIGMA * L->sigma : INFINITY;
    F->inv_sigma_log_l = L->given ? 1.0 / L->sigma : 0.0;
    F->log_g_lo = G->given ? G->value - TRAIL_FIT_CUT_SIGMA * G->sigma : -INFINITY;
    F->log_g_hi = G->given ? G->value + TRAIL_FIT_CUT_SIGMA * G->sigma : INFINITY;
    F->inv_sigma_log_g = G->given ? 1.0 / G->sigma : 0.0;
    return HRT_OK;
}
