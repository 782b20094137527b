/*
 * Consistency of isochrones and of fits' posterior draws with hrt_eval
 * (tests/consistency, see test_consistency.c).
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "consistency.h"

/* ------------------------------------------------------------------ isochrones */

#define N_ISO 80
#define N_ISO_MASSES 60

/* Every phase code of the list but unknown and pre_ms (remnants included). */
static uint64_t every_phase(void)
{
    uint64_t m = 0;
    for (size_t i = 0; i < HRT_PHASE_N; i++)
        m |= HRT_PHASE_BIT(hrt_phase_code(i));
    return m & ~(HRT_PHASE_BIT(HRT_PHASE_UNKNOWN) | HRT_PHASE_BIT(HRT_PHASE_PRE_MS));
}

/* The isochrone at (age, z) with options o, into a new array; NULL (and a failure) if it cannot be had. */
static hrt_state *isochrone(cs_run *R, double age, double z, const hrt_isochrone_options *o, size_t *n)
{
    hrt_error err;
    int rc = hrt_isochrone_with(R->g, age, z, o, NULL, 0, n, &err);
    hrt_state *pts = NULL;
    if (rc == HRT_E_BUFFER || rc == HRT_OK) {
        pts = malloc((*n + 1) * sizeof *pts);
        rc = hrt_isochrone_with(R->g, age, z, o, pts, *n, n, &err);
    }
    if (rc != HRT_OK) {
        cs_fail(R, "age=%.17g z=%.17g phases=%#llx: hrt_isochrone_with %s: %s", age, z, (unsigned long long)o->phases,
                hrt_strerror(rc), err.message);
        free(pts);
        return NULL;
    }
    return pts;
}

/* Every point is hrt_eval at its initial mass, Z and age, bit for bit. */
static void points_are_eval(cs_run *R, const hrt_state *pts, size_t n)
{
    for (size_t i = 0; i < n; i++) {
        hrt_state e;
        cs_case(R);
        double m = pts[i].initial_mass_msun, z = pts[i].z, a = pts[i].age_yr;
        int rc = hrt_eval(R->g, 1, &m, &z, 0.0, &a, &e, NULL);
        if (rc != HRT_OK || !cs_same_state(&e, &pts[i]))
            cs_fail(R, "age=%.17g z=%.17g mass=%.17g: point %zu of the isochrone is not hrt_eval there (%s; log L %.17g / "
                       "%.17g, phase %d / %d)",
                    a, z, m, i, hrt_strerror(rc), pts[i].log_l_lsun, e.log_l_lsun, pts[i].phase, e.phase);
    }
}

/* A random mass alive and modelled at (age, z) in a phase of the options has
 * neighbours on the isochrone, of its route, one on each side. */
static void masses_are_bracketed(cs_run *R, cs_rng *r, const hrt_state *pts, size_t n, double age, double z, uint64_t phases)
{
    double mlo, mhi;
    hrt_grid_mass_range(R->g, z, &mlo, &mhi);
    for (int k = 0; k < N_ISO_MASSES; k++) {
        double m = cs_log_uniform(r, mlo, mhi);
        hrt_state s;
        if (hrt_eval(R->g, 1, &m, &z, 0.0, &age, &s, NULL) != HRT_OK || (s.flags & (HRT_FLAG_NOT_MODELLED | HRT_FLAG_REMNANT)) ||
            !(phases & HRT_PHASE_BIT(s.phase)))
            continue;
        cs_case(R);
        long below = -1, above = -1;
        for (size_t i = 0; i < n; i++) {
            if (pts[i].route != s.route)
                continue;
            if (pts[i].initial_mass_msun <= m)
                below = (long)i;
            if (pts[i].initial_mass_msun >= m && above < 0)
                above = (long)i;
        }
        if (below < 0 || above < 0 || above - below > 1 || above < below)
            cs_fail(R, "age=%.17g z=%.17g mass=%.17g (%s, route %d): no neighbours on the isochrone (below: %ld, above: %ld of %zu)",
                    age, z, m, hrt_phase_key(s.phase), s.route, below, above, n);
    }
}

void cs_check_isochrones(cs_run *R)
{
    cs_rng r = cs_rng_for(R->seed, 4);
    double zlo, zhi;
    hrt_grid_z_range(R->g, &zlo, &zhi);
    for (int k = 0; k < N_ISO; k++) {
        double age = cs_log_uniform(&r, 1e5, 2e10), z = cs_log_uniform(&r, zlo, zhi);
        hrt_isochrone_options o;
        hrt_isochrone_options_default(&o);
        if (k % 2)
            o.phases = every_phase();
        size_t n = 0;
        hrt_state *pts = isochrone(R, age, z, &o, &n);
        if (!pts)
            continue;
        points_are_eval(R, pts, n);
        masses_are_bracketed(R, &r, pts, n, age, z, o.phases);
        free(pts);
    }
}

/* ------------------------------------------------------------------ fits */

/* Random luminous stars of the grid, observed and fitted with the default
 * model; their posterior draws re-evaluated with hrt_eval.  Limits (as
 * tests/fit/test_fit.c, measured): the phase the same for at least
 * FIT_PHASE_AGREE of the draws, |d log L| <= FIT_DLOG_L_DEX (absolute) for
 * at least FIT_DLOG_L_SHARE and <= FIT_DLOG_L_MAX_DEX for all, no remnant
 * or star before its track; the count of re-evaluated draws in each phase
 * (give or take those whose phase the re-evaluation moved) not in a tail of
 * its binomial under the fit's phase_prob holding less than
 * FIT_PHASE_TAIL: Phi(-5) rather than Phi(-3), as a run makes about a
 * thousand such tests (common practice: a bound for many tests at once). */
#define N_FITS 40
#define N_DRAWS 400
#define FIT_AGE_MAX_YR 13.8e9
#define FIT_PHASE_AGREE 0.98
#define FIT_DLOG_L_DEX 0.02
#define FIT_DLOG_L_SHARE 0.97
#define FIT_DLOG_L_MAX_DEX 0.1
#define FIT_PHASE_TAIL 2.866515718791939e-7

/* P(K >= k) (upper) or P(K <= k) for K ~ Binomial(n, q), summed exactly. */
static double binomial_tail(int n, double q, int k, int upper)
{
    if (upper ? k <= 0 : k >= n)
        return 1.0;
    if (q <= 0.0 || q >= 1.0)
        return (q <= 0.0) == !upper ? 1.0 : 0.0;
    double sum = 0.0;
    for (int i = upper ? k : 0; i <= (upper ? n : k); i++)
        sum += exp(lgamma(n + 1.0) - lgamma(i + 1.0) - lgamma(n - i + 1.0) + i * log(q) + (n - i) * log1p(-q));
    return sum;
}

/* A random observation of a luminous, modelled star of the grid (obs), its truth in m, z, age. */
static void random_observation(cs_run *R, cs_rng *r, hrt_fit_obs *o, double *m, double *z, double *age)
{
    hrt_state s;
    for (;;) {
        cs_random_star(R->g, r, 1e6, FIT_AGE_MAX_YR, m, z, age);
        if (hrt_eval(R->g, 1, m, z, 0.0, age, &s, NULL) == HRT_OK && !(s.flags & (HRT_FLAG_NOT_MODELLED | HRT_FLAG_REMNANT)) &&
            isfinite(s.log_l_lsun))
            break;
    }
    hrt_fit_obs_init(o);
    o->teff_k = pow(10.0, s.log_teff_k);
    o->teff_k_sigma = (0.01 + 0.02 * cs_uniform(r)) * o->teff_k;
    o->log_l_lsun = s.log_l_lsun;
    o->log_l_lsun_sigma = 0.03 + 0.07 * cs_uniform(r);
    if (cs_uniform(r) < 0.5) {
        o->feh = log10(*z / hrt_grid_z_ref(R->g));
        o->feh_sigma = 0.1;
    }
}

/* The draws of one fit against hrt_eval at each draw. */
static void check_draws(cs_run *R, const hrt_fit_obs *o, uint64_t seed, const hrt_fit_sample *smp, const hrt_fit_result *res)
{
    double m[N_DRAWS], z[N_DRAWS], a[N_DRAWS];
    int count[HRT_PHASE_SLOTS] = {0};
    hrt_state st[N_DRAWS];
    for (int i = 0; i < N_DRAWS; i++)
        m[i] = smp[i].initial_mass_msun, z[i] = smp[i].z, a[i] = smp[i].age_yr;
    hrt_eval(R->g, N_DRAWS, m, z, 0.0, a, st, NULL);
    int same = 0, close = 0;
    char obs[256]; /* the fit to reproduce */
    snprintf(obs, sizeof obs, "teff=%.17g+-%.17g log_l=%.17g+-%.17g feh=%.17g+-%.17g fit_seed=%llu", o->teff_k,
             o->teff_k_sigma, o->log_l_lsun, o->log_l_lsun_sigma, o->feh, o->feh_sigma, (unsigned long long)seed);
    for (int i = 0; i < N_DRAWS; i++) {
        double dl = fabs(st[i].log_l_lsun - smp[i].log_l_lsun);
        if (st[i].status != HRT_OK || (st[i].flags & (HRT_FLAG_NOT_MODELLED | HRT_FLAG_REMNANT)) || !(dl <= FIT_DLOG_L_MAX_DEX))
            cs_fail(R, "%s draw %d mass=%.17g z=%.17g age=%.17g: hrt_eval %s, phase %s, log L %.17g; the fit weighted %s, "
                       "log L %.17g", obs, i, m[i], z[i], a[i], hrt_strerror(st[i].status), hrt_phase_key(st[i].phase),
                    st[i].log_l_lsun, hrt_phase_key(smp[i].phase), smp[i].log_l_lsun);
        same += st[i].phase == smp[i].phase;
        close += dl <= FIT_DLOG_L_DEX;
        count[st[i].phase >= 0 && st[i].phase < HRT_PHASE_SLOTS ? st[i].phase : 0]++;
    }
    double agree = (double)same / N_DRAWS;
    if (agree < FIT_PHASE_AGREE || (double)close / N_DRAWS < FIT_DLOG_L_SHARE)
        cs_fail(R, "%s: phase kept by %.1f %% of the draws, log L within %g dex for %.1f %%", obs, 100 * agree, FIT_DLOG_L_DEX,
                100.0 * close / N_DRAWS);
    for (int p = 0; p < HRT_PHASE_SLOTS; p++) {
        double q = res->phase_prob[p];
        double up = binomial_tail(N_DRAWS, q, count[p] - (N_DRAWS - same), 1);
        double down = binomial_tail(N_DRAWS, q, count[p] + (N_DRAWS - same), 0);
        if (up < FIT_PHASE_TAIL || down < FIT_PHASE_TAIL)
            cs_fail(R, "%s: phase %s holds %d of %d re-evaluated draws, %.5f of the posterior (tails %.2g, %.2g)", obs,
                    hrt_phase_key(p), count[p], N_DRAWS, q, up, down);
    }
}

void cs_check_fits(cs_run *R)
{
    cs_rng r = cs_rng_for(R->seed, 5);
    hrt_fit_model *model = NULL;
    hrt_error err;
    if (hrt_fit_model_new(R->g, NULL, &model, &err) != HRT_OK) {
        cs_fail(R, "default model: %s", err.message);
        return;
    }
    static hrt_fit_sample smp[N_DRAWS];
    int n_fitted = 0;
    for (int k = 0; k < N_FITS; k++) {
        hrt_fit_obs o;
        double m, z, age;
        random_observation(R, &r, &o, &m, &z, &age);
        uint64_t seed = (uint64_t)(cs_uniform(&r) * 1e15);
        hrt_fit_result res;
        int rc = hrt_fit_star(model, &o, seed, N_DRAWS, smp, &res, &err);
        cs_case(R);
        if (rc == HRT_E_NO_MATCH)
            continue; /* e.g. an age the prior leaves no weight at */
        if (rc != HRT_OK) {
            cs_fail(R, "mass=%.17g z=%.17g age=%.17g: hrt_fit_star %s", m, z, age, err.message);
            continue;
        }
        n_fitted++;
        check_draws(R, &o, seed, smp, &res);
    }
    if (n_fitted < N_FITS / 2)
        cs_fail(R, "only %d of %d random stars could be fitted", n_fitted, N_FITS);
    hrt_fit_model_free(model);
}
