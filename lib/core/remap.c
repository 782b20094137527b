/*
 * Stars whose mass changes: the point of the track family from which a
 * star continues after it gained or lost mass (hrt_remap).  The method and
 * its derivation are in tracks/MODEL.md, "Stars whose mass changes".
 *
 * Everything here works on query contexts on the stack (core/core.h): no
 * allocation, so hrt_step (step.c) can call it on every step.
 */
#include <math.h>
#include <string.h>

#include "core/core.h"

/* Convergence of the search for the effective initial mass: the current
 * mass of the equivalent point matches the new mass to this (relative). */
#define TRAIL_REMAP_MASS_TOL 1e-12
/* ... and, where the track family cannot resolve the root more closely
 * (the bracket of initial masses is down to rounding), this. */
#define TRAIL_REMAP_MASS_LOOSE 1e-9
/* Trial tracks at most (each one pass over part of the EEPs). */
#define TRAIL_REMAP_MAX_TRIALS 80

/* What the equivalent point must keep. */
typedef struct rctx {
    const hrt_grid *g;
    double z;
    int phase;        /* hrt_phase of the star before the change */
    int clock;        /* Q_HE or Q_CO: the core that places a post-main-sequence star */
    double clock_msun;/* its mass, Msun */
    double burnt;     /* main sequence: fraction of the main-sequence energy radiated */
    double core0_msun;/* main sequence: the old track's core at the end of the main sequence */
    double new_mass;  /* current mass after the change, Msun */
    double eep;       /* the star's own fractional EEP (routes share EEP numbers) */
} rctx;

/* The state of the star of context q at age_yr, as hrt_eval gives it. */
static int state_at(const qctx *q, double age_yr, hrt_state *s)
{
    int kind;
    double rmass;
    trail_q_remnant(q, &kind, &rmass);
    return trail_state_at_generic(q, NULL, kind, rmass, age_yr, s);
}

/* The main-sequence run [js, je] of the star of q; 0 if it has none. */
static int ms_run(const qctx *q, int *js, int *je)
{
    for (int j = 0; j + 1 < q->n_eep; j++)
        if (trail_q_phase(q, j) == HRT_PHASE_MS) {
            trail_q_phase_run(q, j, js, je);
            return *je > *js;
        }
    return 0;
}

/* Age (yr) and luminosity (Lsun) at EEP j. */
static void age_lum(const qctx *q, int j, double *t, double *l)
{
    *t = trail_exp10(trail_q_value(q, Q_AGE, j));
    *l = trail_exp10(trail_q_value(q, Q_L, j));
}

/* Energy (Lsun yr) radiated from t0 to t0 + s where L runs linearly from
 * l0 at t0 to l1 at t0 + h, and its inverse: the s at which energy e has
 * been radiated (the root of l0 s + (l1 - l0) s^2 / (2 h) = e, in a form
 * without cancellation). */
static double energy_in(double l0, double l1, double h, double s) { return s * (l0 + 0.5 * (l1 - l0) * s / h); }
static double time_for(double l0, double l1, double h, double e)
{
    double k = (l1 - l0) / h, d = l0 * l0 + 2.0 * k * e;
    return 2.0 * e / (l0 + sqrt(d > 0.0 ? d : 0.0));
}

/* Energy radiated on the main sequence [js, je] in total, and up to age_yr. */
static void ms_energy(const qctx *q, int js, int je, double age_yr, double *total, double *upto)
{
    double t0, l0, e = 0.0, eu = 0.0;
    age_lum(q, js, &t0, &l0);
    if (age_yr <= t0)
        eu = 0.0;
    for (int j = js; j < je; j++) {
        double t1, l1;
        age_lum(q, j + 1, &t1, &l1);
        double h = t1 - t0;
        if (h > 0.0) {
            if (age_yr >= t1)
                eu = e + energy_in(l0, l1, h, h);
            else if (age_yr > t0)
                eu = e + energy_in(l0, l1, h, age_yr - t0);
            e += energy_in(l0, l1, h, h);
        }
        t0 = t1;
        l0 = l1;
    }
    *total = e;
    *upto = eu;
}

/* Age (yr) on the main sequence [js, je] at which energy e has been radiated. */
static double ms_age_at(const qctx *q, int js, int je, double e)
{
    double t0, l0, acc = 0.0;
    age_lum(q, js, &t0, &l0);
    for (int j = js; j < je; j++) {
        double t1, l1;
        age_lum(q, j + 1, &t1, &l1);
        double h = t1 - t0;
        if (h > 0.0) {
            double de = energy_in(l0, l1, h, h);
            if (acc + de >= e) {
                double s = time_for(l0, l1, h, e - acc);
                return t0 + (s < h ? s : h);
            }
            acc += de;
        }
        t0 = t1;
        l0 = l1;
    }
    return t0;
}

/* Weight of a mixed core at initial mass m: 1 for fully convective stars and
 * stars with convective cores, 0 for radiative cores, logistic blends. */
static double mixed_weight(double m)
{
    double lm = log10(m);
    double below = 1.0 / (1.0 + exp((lm - log10(HRT_REMAP_FULLY_CONVECTIVE_MSUN)) / HRT_REMAP_BLEND_DEX));
    double above = 1.0 / (1.0 + exp(-(lm - log10(HRT_REMAP_CONVECTIVE_CORE_MSUN)) / HRT_REMAP_BLEND_DEX));
    return below + above;
}

/* The main-sequence point of track x (in q): same hydrogen burnt, with the
 * accreted matter mixed into a mixed core (MODEL.md). */
static int ms_point(const rctx *c, const qctx *q, hrt_state *s)
{
    int js, je;
    if (!ms_run(q, &js, &je))
        return HRT_E_NO_EQUIVALENT;
    double core1 = q->mass * trail_q_value(q, Q_HE, je);
    double w = mixed_weight(q->mass);
    double ratio = core1 > c->core0_msun && core1 > 0.0 ? c->core0_msun / core1 : 1.0;
    double burnt = c->burnt * (1.0 - w + w * ratio);
    double total, upto;
    ms_energy(q, js, je, 0.0, &total, &upto);
    return state_at(q, ms_age_at(q, js, je, burnt * total), s);
}

/* The clock core (Msun) at EEP j of q, bounded as states bound it (a core
 * is never heavier than what contains it: trail_state_from_values). */
static double clock_at(const rctx *c, const qctx *q, int j)
{
    double m = trail_q_value(q, Q_MASS, j), he = trail_q_value(q, Q_HE, j);
    he = he < m ? he : m;
    if (c->clock == Q_CO) {
        double co = trail_q_value(q, Q_CO, j);
        he = co < he ? co : he;
    }
    return q->mass * he;
}

/* The post-main-sequence point of track x (in q): where, in the star's
 * phase, the clock core rises through the star's core; of several such
 * places, the one nearest the star's own EEP. */
static int late_point(const rctx *c, const qctx *q, hrt_state *s)
{
    double best = INFINITY, t_best = NAN;
    double c1 = NAN;
    for (int j = 0; j + 1 < q->n_eep; j++) {
        if (trail_q_phase(q, j) != c->phase) {
            c1 = NAN;
            continue;
        }
        double c0 = isnan(c1) ? clock_at(c, q, j) : c1;
        c1 = clock_at(c, q, j + 1);
        if (!(c0 < c1) || c->clock_msun < c0 || c->clock_msun > c1)
            continue;
        double f = (c->clock_msun - c0) / (c1 - c0);
        double a0 = trail_q_value(q, Q_AGE, j), a1 = trail_q_value(q, Q_AGE, j + 1);
        if (!(a1 > a0) || !(fabs(j + f - c->eep) < best))
            continue;
        best = fabs(j + f - c->eep);
        t_best = trail_exp10(a0 + f * (a1 - a0));
    }
    return isnan(t_best) ? HRT_E_NO_EQUIVALENT : state_at(q, t_best, s);
}

/* The equivalent point on the track of initial mass x: HRT_OK, or
 * HRT_E_NO_EQUIVALENT when that track has none (or lies outside the grid). */
static int point(const rctx *c, double x, hrt_state *s)
{
    qctx q;
    if (trail_qctx_init(c->g, x, c->z, &q, NULL) != HRT_OK)
        return HRT_E_NO_EQUIVALENT;
    int rc = c->phase == HRT_PHASE_MS ? ms_point(c, &q, s) : late_point(c, &q, s);
    if (rc == HRT_OK && !(s->status == HRT_OK && isfinite(s->mass_msun) && s->mass_msun > 0.0))
        rc = HRT_E_NO_EQUIVALENT;
    return rc;
}

/* Search state: the last track with a point, and a bracket once found. */
typedef struct search {
    double lx_ok, m_ok;        /* log initial mass with a point, its current mass */
    double lx_lo, g_lo, lx_hi, g_hi; /* bracket of the root of g = m - new_mass */
    int bracketed, side_lo, side_hi;  /* Illinois: which end kept its value twice */
} search;

/* Next trial log initial mass inside the bracket (Illinois regula falsi). */
static double bracket_next(const search *b)
{
    double t = b->lx_lo - b->g_lo * (b->lx_hi - b->lx_lo) / (b->g_hi - b->g_lo);
    if (!(t > b->lx_lo && t < b->lx_hi))
        t = 0.5 * (b->lx_lo + b->lx_hi);
    return t;
}

/* Narrow the bracket with the trial (lx, gx). */
static void bracket_update(search *b, double lx, double gx)
{
    if ((gx < 0.0) == (b->g_lo < 0.0)) {
        b->lx_lo = lx;
        b->g_lo = gx;
        if (++b->side_lo >= 2)
            b->g_hi *= 0.5;
        b->side_hi = 0;
    } else {
        b->lx_hi = lx;
        b->g_hi = gx;
        if (++b->side_hi >= 2)
            b->g_lo *= 0.5;
        b->side_lo = 0;
    }
}

/* Record a valid trial; returns 1 once the bracket holds the root. */
static int search_add(search *b, double lx, double m, double new_mass)
{
    double gx = m - new_mass;
    if (b->bracketed) {
        bracket_update(b, lx, gx);
        return 1;
    }
    double g_ok = b->m_ok - new_mass;
    if ((gx < 0.0) != (g_ok < 0.0)) {
        int up = lx > b->lx_ok;
        b->lx_lo = up ? b->lx_ok : lx;
        b->g_lo = up ? g_ok : gx;
        b->lx_hi = up ? lx : b->lx_ok;
        b->g_hi = up ? gx : g_ok;
        b->bracketed = 1;
        return 1;
    }
    b->lx_ok = lx;
    b->m_ok = m;
    return 0;
}

/* The bracket is down to rounding: the root as closely as the track family
 * resolves it, or a jump of the current mass across initial mass. */
static int collapsed(const rctx *c, const search *b, hrt_state *out, hrt_error *err)
{
    hrt_state s_lo, s_hi;
    int ok_lo = point(c, exp(b->lx_lo), &s_lo) == HRT_OK, ok_hi = point(c, exp(b->lx_hi), &s_hi) == HRT_OK;
    double d_lo = ok_lo ? fabs(s_lo.mass_msun - c->new_mass) : INFINITY;
    double d_hi = ok_hi ? fabs(s_hi.mass_msun - c->new_mass) : INFINITY;
    const hrt_state *best = d_lo < d_hi ? &s_lo : &s_hi;
    if ((d_lo < d_hi ? d_lo : d_hi) <= TRAIL_REMAP_MASS_LOOSE * c->new_mass) {
        *out = *best;
        return trail_set_error(err, HRT_OK, NULL);
    }
    return trail_set_error(err, HRT_E_NO_EQUIVALENT,
                           "hrt_remap: at Z = %g the current mass of the %s points jumps from %g to %g Msun at an "
                           "initial mass of %g Msun: no track has %g Msun there",
                           c->z, hrt_phase_name(c->phase), ok_lo ? s_lo.mass_msun : NAN,
                           ok_hi ? s_hi.mass_msun : NAN, exp(b->lx_lo), c->new_mass);
}

/* The effective initial mass whose equivalent point has the new mass. */
static int solve(const rctx *c, const hrt_state *now, hrt_state *out, hrt_error *err)
{
    double lo, hi;
    int rc = hrt_grid_mass_range(c->g, c->z, &lo, &hi);
    if (rc != HRT_OK)
        return trail_set_error(err, rc, "hrt_remap: Z = %g: %s", c->z, hrt_strerror(rc));
    double llo = log(lo), lhi = log(hi);
    search b = {.lx_ok = log(now->initial_mass_msun), .m_ok = now->mass_msun};
    double lx_bad = NAN; /* nearest trial without a point, on the way out */
    double lx = b.lx_ok + log(c->new_mass / now->mass_msun);
    for (int it = 0; it < TRAIL_REMAP_MAX_TRIALS; it++) {
        int clamped = 0;
        if (!b.bracketed && (lx < llo || lx > lhi)) {
            lx = lx < llo ? llo : lhi;
            clamped = 1;
        }
        rc = point(c, exp(lx), out);
        if (rc == HRT_OK) {
            if (fabs(out->mass_msun - c->new_mass) <= TRAIL_REMAP_MASS_TOL * c->new_mass)
                return trail_set_error(err, HRT_OK, NULL);
            if (search_add(&b, lx, out->mass_msun, c->new_mass)) {
                if (b.lx_hi - b.lx_lo < 1e-13)
                    return collapsed(c, &b, out, err);
                lx = bracket_next(&b);
                continue;
            }
            if (clamped)
                return trail_set_error(err, HRT_E_MASS_RANGE,
                                       "hrt_remap: a current mass of %g Msun needs an initial mass beyond the grid's "
                                       "%g-%g Msun at Z = %g (the track at %g Msun reaches %g Msun)",
                                       c->new_mass, lo, hi, c->z, exp(lx), out->mass_msun);
            double step = log(c->new_mass / out->mass_msun);
            lx += step;
            if (isfinite(lx_bad) && (lx - b.lx_ok) * (lx_bad - b.lx_ok) > 0.0 &&
                fabs(lx - b.lx_ok) >= fabs(lx_bad - b.lx_ok))
                lx = 0.5 * (b.lx_ok + lx_bad);
            continue;
        }
        if (b.bracketed)
            break; /* a bracket between two points with a hole: give up */
        lx_bad = lx;
        if (fabs(lx_bad - b.lx_ok) < 1e-13)
            break;
        lx = 0.5 * (b.lx_ok + lx_bad);
    }
    return trail_set_error(err, HRT_E_NO_EQUIVALENT,
                           "hrt_remap: no track of the grid at Z = %g has a %s point with %s%g Msun at a current "
                           "mass of %g Msun (nearest: initial mass %g Msun, current mass %g Msun)",
                           c->z, hrt_phase_name(c->phase),
                           c->phase == HRT_PHASE_MS ? "the same hydrogen burnt, core " : "a core of ",
                           c->phase == HRT_PHASE_MS ? c->core0_msun : c->clock_msun, c->new_mass, exp(b.lx_ok), b.m_ok);
}

/* Why a state has no equivalent point, or NULL if it may have one. */
static const char *no_equivalent_reason(const hrt_state *now)
{
    if ((now->flags & HRT_FLAG_REMNANT) || now->phase / 10 == 5)
        return "a remnant (white dwarf, neutron star or black hole) is not on the tracks";
    if (now->flags & HRT_FLAG_NOT_MODELLED)
        return "the star is younger than its track's first EEP";
    if (now->phase == HRT_PHASE_PRE_MS)
        return "pre-main-sequence contraction has no equivalent measure of what the star has burnt";
    if (now->phase == HRT_PHASE_UNKNOWN)
        return "the phase is unknown";
    return NULL;
}

/* The state of the star as given (initial mass, Z, age), from the grid. */
static int own_point(const hrt_grid *g, const hrt_state *now, qctx *q, hrt_state *out, hrt_error *err)
{
    int rc = trail_qctx_init(g, now->initial_mass_msun, now->z, q, err);
    if (rc != HRT_OK)
        return rc;
    rc = state_at(q, now->age_yr, out);
    if (rc != HRT_OK)
        return trail_set_error(err, rc, "hrt_remap: the star at age %g yr: %s", now->age_yr, hrt_strerror(rc));
    return HRT_OK;
}

/* Fill the main-sequence part of c from the star's own track. */
static int ms_setup(rctx *c, const qctx *q, const hrt_state *own, hrt_error *err)
{
    int js, je;
    if (!ms_run(q, &js, &je))
        return trail_set_error(err, HRT_E_NO_EQUIVALENT, "hrt_remap: the track of %g Msun has no main sequence",
                               q->mass);
    double total, upto;
    ms_energy(q, js, je, own->age_yr, &total, &upto);
    c->burnt = total > 0.0 ? upto / total : 0.0;
    c->core0_msun = q->mass * trail_q_value(q, Q_HE, je);
    return HRT_OK;
}

int hrt_remap(const hrt_grid *g, const hrt_state *now, double new_mass_msun, hrt_state *out, hrt_error *err)
{
    if (!g || !now || !out)
        return trail_set_error(err, HRT_E_NULL, "hrt_remap: %s is NULL", !g ? "grid" : !now ? "now" : "out");
    if (!isfinite(new_mass_msun) || new_mass_msun <= 0.0)
        return trail_set_error(err, HRT_E_DOMAIN, "hrt_remap: new mass %g Msun is not a positive finite number",
                               new_mass_msun);
    if (now->status != HRT_OK)
        return trail_set_error(err, HRT_E_INVALID, "hrt_remap: the state given has status %d (%s)", now->status,
                               hrt_strerror(now->status));
    qctx q;
    hrt_state own;
    int rc = own_point(g, now, &q, &own, err);
    if (rc != HRT_OK)
        return rc;
    /* no change: the star's own point, whatever it is (remnants included) */
    if (new_mass_msun == now->mass_msun) {
        *out = own;
        return trail_set_error(err, HRT_OK, NULL);
    }
    const char *why = no_equivalent_reason(&own);
    if (why)
        return trail_set_error(err, HRT_E_NO_EQUIVALENT, "hrt_remap: no equivalent point: %s", why);
    rctx c = {.g = g, .z = now->z, .phase = own.phase, .new_mass = new_mass_msun, .eep = own.eep};
    if (own.phase == HRT_PHASE_MS) {
        rc = ms_setup(&c, &q, &own, err);
        if (rc != HRT_OK)
            return rc;
    } else {
        c.clock = own.phase / 10 == 3 && own.co_core_mass_msun > 0.0 ? Q_CO : Q_HE;
        c.clock_msun = c.clock == Q_CO ? own.co_core_mass_msun : own.he_core_mass_msun;
    }
    /* on the main sequence the grid's helium core is the hydrogen burnt so
     * far, mixed through a fully convective star: no separate core to strip */
    if (own.phase != HRT_PHASE_MS && own.he_core_mass_msun > 0.0 && new_mass_msun <= own.he_core_mass_msun)
        return trail_set_error(err, HRT_E_NO_EQUIVALENT,
                               "hrt_remap: a new mass of %g Msun leaves no envelope over the helium core of %g Msun: "
                               "a stripped core, which the tracks do not contain",
                               new_mass_msun, own.he_core_mass_msun);
    /* the search starts from the star's own point */
    return solve(&c, &own, out, err);
}
