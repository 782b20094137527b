/*
 * Stepping a star through time while its mass changes (hrt_step): its own
 * track for the step, then the imposed mass change through hrt_remap
 * (remap.c).  Query contexts live on the stack: nothing allocates.
 */
#include <math.h>

#include "core/core.h"

/* The largest next step (yr) for the star in state s changing mass at mdot
 * (Msun/yr): see hrt_step in the public header. */
static double proposal(const hrt_state *s, double mdot)
{
    double start = s->phase_start_yr, end = s->phase_end_yr, age = s->age_yr;
    double dt;
    if (isfinite(start) && isfinite(end) && end > start) {
        double part = HRT_STEP_PHASE_FRACTION * (end - start), left = end - age;
        dt = left > 0.0 && left <= part ? left : part;
    } else {
        /* open-ended (a remnant): a fraction of the time spent in the
         * phase, and at least that fraction of the age the phase began at */
        double t0 = isfinite(start) ? start : 0.0;
        double floor = HRT_STEP_PHASE_FRACTION * (t0 > 0.0 ? t0 : age);
        dt = HRT_STEP_PHASE_FRACTION * (age - t0);
        if (!(dt >= floor))
            dt = floor;
    }
    if (mdot != 0.0 && s->mass_msun > 0.0) {
        double tm = HRT_STEP_MASS_FRACTION * s->mass_msun / fabs(mdot);
        if (tm < dt)
            dt = tm;
        double env = s->mass_msun - (s->he_core_mass_msun > 0.0 ? s->he_core_mass_msun : 0.0);
        if (mdot < 0.0 && env / -mdot < dt)
            dt = env / -mdot;
    }
    return dt;
}

/* Validate hrt_step's arguments; HRT_OK or the code with its message. */
static int step_args(const hrt_grid *g, const hrt_state *now, double dt_yr, double mdot, const hrt_state *next,
                     hrt_error *err)
{
    if (!g || !now || !next)
        return trail_set_error(err, HRT_E_NULL, "hrt_step: %s is NULL", !g ? "grid" : !now ? "now" : "next");
    if (!isfinite(dt_yr) || dt_yr < 0.0)
        return trail_set_error(err, HRT_E_DOMAIN, "hrt_step: step %g yr is not finite and >= 0", dt_yr);
    if (!isfinite(mdot))
        return trail_set_error(err, HRT_E_DOMAIN, "hrt_step: mass-change rate %g Msun/yr is not finite", mdot);
    if (now->status != HRT_OK)
        return trail_set_error(err, HRT_E_INVALID, "hrt_step: the state given has status %d (%s)", now->status,
                               hrt_strerror(now->status));
    if (!isfinite(now->age_yr) || !isfinite(now->age_yr + dt_yr))
        return trail_set_error(err, HRT_E_DOMAIN, "hrt_step: age %g yr + step %g yr is not finite", now->age_yr,
                               dt_yr);
    return HRT_OK;
}

int hrt_step(const hrt_grid *g, const hrt_state *now, double dt_yr, double mdot_msun_yr, hrt_state *next,
             double *dt_next_yr, hrt_error *err)
{
    if (dt_next_yr)
        *dt_next_yr = NAN;
    int rc = step_args(g, now, dt_yr, mdot_msun_yr, next, err);
    if (rc != HRT_OK)
        return rc;
    qctx q;
    double age = now->age_yr + dt_yr;
    rc = trail_qctx_init(g, now->initial_mass_msun, now->z, &q, err);
    if (rc != HRT_OK) {
        trail_state_clear(next, now->initial_mass_msun, now->z, age);
        next->status = rc;
        return rc;
    }
    hrt_state own;
    int kind;
    double rmass;
    trail_q_remnant(&q, &kind, &rmass);
    rc = trail_state_at_generic(&q, NULL, kind, rmass, age, &own);
    if (rc != HRT_OK) {
        *next = own;
        return trail_set_error(err, rc, "hrt_step: the star of %g Msun at age %g yr: %s", now->initial_mass_msun, age,
                               hrt_strerror(rc));
    }
    double dm = mdot_msun_yr * dt_yr;
    if (dm == 0.0) {
        *next = own;
    } else {
        double m1 = own.mass_msun + dm;
        if (!(m1 > 0.0)) {
            *next = own;
            next->status = HRT_E_DOMAIN;
            return trail_set_error(err, HRT_E_DOMAIN,
                                   "hrt_step: %g Msun/yr over %g yr takes the mass from %g to %g Msun", mdot_msun_yr,
                                   dt_yr, own.mass_msun, m1);
        }
        rc = hrt_remap(g, &own, m1, next, err);
        if (rc != HRT_OK) {
            *next = own;
            next->status = rc;
            return rc;
        }
    }
    if (dt_next_yr)
        *dt_next_yr = proposal(next, mdot_msun_yr);
    return trail_set_error(err, HRT_OK, NULL);
}
