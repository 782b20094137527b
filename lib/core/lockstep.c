/* The batch kernel behind a bucketed hrt_eval (batch.c): runs of stars that
 * share one grid metallicity, one route and one mass interval strictly
 * between two of its tracks, evaluated a few at a time with the context
 * built once for the run.
 *
 * After bucketing, consecutive stars mostly share their (Z, mass interval)
 * bucket.  For them the one-star path (eval.c) would rebuild the same
 * context star after star: placement of Z, route, mass range, the interval
 * search, the number of EEPs.  Here that is done once per run; per star
 * remain its own numbers: the log of its mass and of its age, the weights
 * of its position in the interval, its nearest track, its remnant, the age
 * search over its own log ages, the values at its two EEPs and the state,
 * stored field by field.  The stars of a block of KERNEL_WIDTH are taken
 * stage by stage (weights, ends of the track, search, values), so that the
 * latencies of one star's logs, loads and divisions overlap another's.
 *
 * Every number is computed with the same operations in the same order as
 * on the one-star path: the same weights (trail_interval_weights), the same
 * sums of products, the same log and exp, the same galloping age search
 * from the same hint (the EEP it finds, the largest j with log age
 * A(j) <= log t, is unique in any case: A increases with j, grid_prep.c).
 * The states are therefore the same bytes (test_core: batch_one_star,
 * lockstep_one_star).  A star the kernel
 * does not take (another metallicity, an end of a route, an age off its
 * track, any failure) goes through the one-star path unchanged. */
#include <math.h>
#include <string.h>

#include "core/core.h"

/* Stars taken stage by stage. */
#define KERNEL_WIDTH 4

/* What a run of stars shares: its group, interval, route and EEP count. */
typedef struct run_ctx {
    qctx q;             /* the first star's context; m[g0] is updated per star */
    const zgroup *gp;
    size_t i, J;        /* interval [i, i + 1], EEPs per track in the tables */
    double x_lo, x_hi;  /* log masses of its two tracks */
    const double *ages; /* log-age knots of the interval, [J][4] */
    int n;              /* EEPs of the interpolated star */
    int interp;         /* the grid's interpolation type */
    /* the remnant for either nearest track (side 0: track i, 1: track
     * i + 1), what trail_q_remnant finds from the same data: its kind,
     * whether it is a white dwarf, whether each of the two tracks leaves
     * the same family of remnant, the nearest track's remnant mass */
    int rkind[2], rwd[2], rsame[2][2];
    double rnear[2];
    const double *rknots; /* remnant_knots of the interval, [2][2] */
    /* masses whose route (trail_route_at at the run's Z) is the run's: above
     * m_lo (the boundary below the route) and at or below m_hi (every
     * boundary above it) */
    double m_lo, m_hi;
} run_ctx;

/* Where a star of a block is: on its track, before or after it (in the
 * kernel), or for the one-star path. */
enum { LANE_ONE_STAR, LANE_ON_TRACK, LANE_BEFORE, LANE_REMNANT };

/* One star of a block: its inputs and what the stages pass on. */
typedef struct lane {
    run_ctx *r; /* its run */
    double x;   /* log10 of its mass */
    double mass, age_yr, lt, w_age[4], w_val[4], a_first, a_last, aj, aj1;
    size_t near;
    int kind, on_track, j; /* on_track: LANE_* */
    double rmass;
} lane;

/* Log age of the run's interval at EEP j with weights w (eval.c's
 * group_value for Q_AGE, the same sum in the same order). */
static inline double run_age(const run_ctx *r, const double *w, int j)
{
    const double *a = r->ages + (size_t)j * 4;
    return w[0] * a[0] + w[1] * a[1] + w[2] * a[2] + w[3] * a[3];
}

/* Starting EEP from the near track's log age -> EEP table (eval.c's q_hint). */
static inline int run_hint(const run_ctx *r, size_t near, double lt)
{
    const double *x = r->gp->age_tab_x + 2 * near;
    double k = (lt - x[0]) * x[1];
    if (!(k >= 0.0))
        return 0;
    if (k >= TRAIL_AGE_TAB)
        return r->n - 2;
    return r->gp->age_tab[near * TRAIL_AGE_TAB + (size_t)k];
}

/* Largest j in [0, n - 2] with A(j) <= lt, given A(0) <= lt < A(n - 1):
 * eval.c's find_eep on the run's table, galloping from the hint, then
 * bisecting. */
static int run_find(const run_ctx *r, lane *s)
{
    const double *w = s->w_age;
    double lt = s->lt;
    int n = r->n, lo = 0, hi = n - 1;
    double alo = s->a_first, ahi = s->a_last;
    int j = run_hint(r, s->near, lt);
    if (j >= 0 && j <= n - 2) {
        double aj = run_age(r, w, j);
        int step = 1;
        if (aj <= lt) {
            lo = j;
            alo = aj;
            for (; lo + step < n - 1; step *= 2) {
                double ac = run_age(r, w, lo + step);
                if (!(ac <= lt)) {
                    hi = lo + step;
                    ahi = ac;
                    break;
                }
                lo += step;
                alo = ac;
            }
        } else {
            hi = j;
            ahi = aj;
            for (; hi - step > 0; step *= 2) {
                double ac = run_age(r, w, hi - step);
                if (!(ac > lt)) {
                    lo = hi - step;
                    alo = ac;
                    break;
                }
                hi -= step;
                ahi = ac;
            }
        }
    }
    while (hi - lo > 1) {
        int c = lo + (hi - lo) / 2;
        double ac = run_age(r, w, c);
        if (ac <= lt) {
            lo = c;
            alo = ac;
        } else {
            hi = c;
            ahi = ac;
        }
    }
    s->aj = alo;
    s->aj1 = ahi;
    return lo;
}

/* The values of the five quantities at EEP j (eval.c's trail_q_values at
 * one group). */
static inline void lane_values(const run_ctx *r, const double *w, int j, double v[NQS])
{
    const double *p = trail_knot(r->gp, (size_t)j, r->i, 1);
    for (int c = 0; c < NQS; c++)
        v[c] = w[0] * p[2 * c] + w[1] * p[2 * c + 1] + w[2] * p[2 * NQ + 2 * c] + w[3] * p[2 * NQ + 2 * c + 1];
}

/* The weights of a star at log mass x: eval.c's interval_weights, the same
 * operations on the run's copy of the interval's numbers. */
static inline void lane_weights(const run_ctx *r, lane *s, double x)
{
    trail_hermite_weights(r->interp, r->x_lo, r->x_hi, x, s->w_val);
    memcpy(s->w_age, s->w_val, sizeof s->w_val); /* log age's blend is in its slopes */
}

/* A star's remnant: trail_q_remnant's one-group case on the run's table
 * (the same tests and the same sum, so the same kind and bytes). */
static inline void lane_remnant_of(const run_ctx *r, lane *s)
{
    int side = s->near != r->i;
    int k0 = r->rkind[side];
    const double *w = s->w_val;
    s->kind = k0;
    int use0 = w[0] != 0.0 || w[1] != 0.0, use1 = w[2] != 0.0 || w[3] != 0.0;
    if (k0 == HRT_REMNANT_NONE) {
        s->rmass = NAN;
    } else if ((use0 && !r->rsame[side][0]) || (use1 && !r->rsame[side][1])) {
        s->rmass = r->rnear[side];
    } else {
        const double *p = r->rknots;
        double m = w[0] * p[0] + w[1] * p[1] + w[2] * p[2] + w[3] * p[3];
        s->rmass = (m > 0.0 && (!r->rwd[side] || m < TRAIL_WD_MASS_MAX_MSUN)) ? m : r->rnear[side];
    }
}

/* Stage 1: a star's own mass context (the weights of eval.c's mass_ctx for
 * an interior mass), remnant, log age and the log ages at its track's ends. */
static void lane_prepare(run_ctx *r, lane *s, double x)
{
    lane_weights(r, s, x);
    s->near = (x - r->x_lo <= r->x_hi - x) ? r->i : r->i + 1;
    lane_remnant_of(r, s);
    double t = s->age_yr;
    s->on_track = LANE_ONE_STAR;
    if (!(isfinite(t) && t >= 0.0))
        return; /* a failure: the one-star path words it */
    s->lt = t > 0.0 ? trail_log10(t) : -INFINITY;
    s->a_first = run_age(r, s->w_age, 0);
    s->a_last = run_age(r, s->w_age, r->n - 1);
    if (s->lt >= s->a_first && s->lt < s->a_last)
        s->on_track = LANE_ON_TRACK;
    else if (s->lt < s->a_first)
        s->on_track = LANE_BEFORE;
    else if (s->kind != HRT_REMNANT_NONE || (size_t)r->n >= r->q.g->routes[r->q.route].n_eep)
        s->on_track = LANE_REMNANT; /* else no answer past the track's end: the one-star path words it */
}

/* Before the track's first EEP (eval.c's state_at_lt): not modelled. */
static void lane_before(const run_ctx *r, const lane *s, double z, hrt_state *st)
{
    trail_state_clear(st, s->mass, z, s->age_yr);
    st->route = r->q.route;
    st->flags = r->q.flags;
    st->remnant = s->kind;
    st->remnant_mass_msun = s->rmass;
    st->phase = HRT_PHASE_PRE_MS;
    st->flags |= HRT_FLAG_NOT_MODELLED;
    st->mass_msun = s->mass;
    st->phase_start_yr = 0.0;
    st->phase_end_yr = trail_exp10(s->a_first);
    st->phase_fraction = s->age_yr / st->phase_end_yr;
}

/* Past the track's last EEP (eval.c's state_at_lt): the remnant. */
static void lane_remnant(const run_ctx *r, const lane *s, double z, hrt_state *st)
{
    trail_state_clear(st, s->mass, z, s->age_yr);
    st->route = r->q.route;
    st->flags = r->q.flags;
    st->remnant = s->kind;
    st->remnant_mass_msun = s->rmass;
    double v[NQS];
    lane_values(r, s->w_val, r->n - 1, v);
    trail_state_remnant(st, s->kind, s->rmass, v[Q_L - 1], trail_exp10(s->a_last), NULL);
}

/* Log age at EEP k, from the four already known when k is one of them. */
static inline double lane_age_at(const run_ctx *r, const lane *s, int k)
{
    if (k == 0)
        return s->a_first;
    if (k == r->n - 1)
        return s->a_last;
    if (k == s->j)
        return s->aj;
    if (k == s->j + 1)
        return s->aj1;
    return run_age(r, s->w_age, k);
}

/* Stage 3: the state of an on-track star (eval.c's state_on_track). */
static void lane_state(const run_ctx *r, const lane *s, double z, hrt_state *st)
{
    int j = s->j;
    double f = s->aj1 > s->aj ? (s->lt - s->aj) / (s->aj1 - s->aj) : 0.0;
    double v0[NQS], v1[NQS];
    lane_values(r, s->w_val, j, v0);
    lane_values(r, s->w_val, j + 1, v1);
    st->struct_size = (uint32_t)sizeof *st;
    st->status = HRT_OK;
    st->route = r->q.route;
    st->remnant = s->kind;
    st->flags = r->q.flags;
    st->initial_mass_msun = s->mass;
    st->z = z;
    st->age_yr = s->age_yr;
    st->remnant_mass_msun = s->rmass;
    memset(st->reserved, 0, sizeof st->reserved);
    trail_state_from_values(st, v0, v1, f);
    st->eep = j + f;
    size_t at = s->near * r->J + (size_t)j;
    st->phase = r->gp->phase[at];
    const int32_t *ru = r->gp->runs + at * 2;
    int js = ru[0], je = ru[1];
    if (je > r->n - 1)
        je = r->n - 1;
    if (js > je)
        js = je;
    double t0 = trail_exp10(lane_age_at(r, s, js)), t1 = trail_exp10(lane_age_at(r, s, je));
    st->phase_start_yr = t0;
    st->phase_end_yr = t1;
    double span = t1 - t0;
    double pf = span > 0.0 ? (s->age_yr - t0) / span : 0.0;
    if (pf < 0.0)
        pf = 0.0;
    if (pf > 1.0)
        pf = 1.0;
    st->phase_fraction = pf;
}

/* The run's shared context from its first star, or 0 if the kernel does not
 * take that star (the one-star path does). */
static int run_open(const hrt_grid *g, double mass, double z, run_ctx *r)
{
    if (trail_qctx_init(g, mass, z, &r->q, NULL) != HRT_OK || !r->q.zp.single)
        return 0;
    const mctx *m = &r->q.m[r->q.zp.g0];
    if (!m->interior || r->q.flags != 0)
        return 0;
    r->gp = m->gp;
    r->i = m->i;
    r->J = g->n_eep_max;
    r->x_lo = r->gp->logm[r->i];
    r->x_hi = r->gp->logm[r->i + 1];
    r->ages = r->gp->age_interval + r->i * r->J * 4;
    r->n = r->q.n_eep;
    r->interp = g->interp;
    for (int s = 0; s < 2; s++) {
        int k0 = r->gp->remnant[r->i + (size_t)s], f0 = trail_remnant_family(k0);
        r->rkind[s] = k0;
        r->rwd[s] = trail_remnant_is_wd(k0);
        r->rnear[s] = r->gp->remnant_knots[2 * (r->i + (size_t)s)];
        r->rsame[s][0] = trail_remnant_family(r->gp->remnant[r->i]) == f0;
        r->rsame[s][1] = trail_remnant_family(r->gp->remnant[r->i + 1]) == f0;
    }
    r->rknots = r->gp->remnant_knots + 2 * r->i;
    /* trail_route_at gives route R to a mass above boundary R - 1 and above
     * no boundary b >= R (a NaN boundary is above no mass) */
    int R = r->q.route;
    r->m_lo = R > 0 ? trail_boundary_at(g, &r->q.zp, (size_t)R - 1) : -INFINITY;
    r->m_hi = INFINITY;
    for (size_t b = (size_t)(R > 0 ? R : 0); b + 1 < g->n_routes; b++) {
        double mb = trail_boundary_at(g, &r->q.zp, b);
        if (mb < r->m_hi)
            r->m_hi = mb;
    }
    return 1;
}

/* Whether a star of log mass x joins the run: the same Z, a mass strictly
 * inside the interval (so that eval.c's mass_ctx would find this interval,
 * interior, with the same EEP count) and on the same route. */
static inline int run_joins(const hrt_grid *g, const run_ctx *r, double mass, double z, double x)
{
    (void)g;
    return z == r->q.z && x > r->x_lo && x < r->x_hi && mass > r->m_lo && mass <= r->m_hi;
}

/* Whether Z is one group's, as trail_place_z decides it (without the log
 * it takes between groups). */
static int at_group_z(const hrt_grid *g, double z)
{
    for (size_t k = 0; k < g->n_z; k++)
        if (fabs(z - g->grp[k].z) <= TRAIL_EDGE_REL_TOL * g->grp[k].z)
            return 1;
    return 0;
}

/* Runs kept open at once: a bucket of masses may straddle a track, and its
 * stars then alternate between two intervals. */
#define KERNEL_RUNS 4

typedef struct run_cache {
    run_ctx r[KERNEL_RUNS];
    int open[KERNEL_RUNS];
    unsigned next; /* the slot opened next (round robin) */
} run_cache;

/* The open run star (mass, z) joins, or a new one in a slot that no star of
 * the block [0, w) uses; NULL if the kernel does not take the star. */
static run_ctx *run_for(const hrt_grid *g, run_cache *c, lane *L, size_t w, double mass, double z)
{
    if (!(mass > 0.0) || !isfinite(mass))
        return NULL;
    double x = trail_log10(mass);
    for (int k = 0; k < KERNEL_RUNS; k++)
        if (c->open[k] && run_joins(g, &c->r[k], mass, z, x)) {
            L[w].x = x;
            return &c->r[k];
        }
    for (int tries = 0; tries < KERNEL_RUNS; tries++) {
        int k = (int)(c->next++ % KERNEL_RUNS);
        int busy = 0;
        for (size_t b = 0; b < w; b++)
            busy |= L[b].r == &c->r[k];
        if (busy)
            continue;
        c->open[k] = run_open(g, mass, z, &c->r[k]) && run_joins(g, &c->r[k], mass, z, x);
        L[w].x = x;
        return c->open[k] ? &c->r[k] : NULL;
    }
    return NULL; /* not reached: a block of fewer than KERNEL_RUNS stars leaves a slot free */
}

/* A block of w stars taken stage by stage.  Returns HRT_OK (its stars are
 * all on their tracks or sent to the one-star path, whose first failure is
 * returned). */
static int run_block(const hrt_grid *g, lane *L, size_t w, const double *mass, const double *z, const double *age_yr,
                     hrt_state *const *out)
{
    for (size_t k = 0; k < w; k++) {
        L[k].mass = mass[k];
        L[k].age_yr = age_yr[k];
        lane_prepare(L[k].r, &L[k], L[k].x);
    }
    for (size_t k = 0; k < w; k++)
        if (L[k].on_track == LANE_ON_TRACK)
            L[k].j = run_find(L[k].r, &L[k]);
    int first = HRT_OK;
    for (size_t k = 0; k < w; k++) {
        if (L[k].on_track == LANE_ON_TRACK) {
            lane_state(L[k].r, &L[k], z[k], out[k]);
            continue;
        }
        if (L[k].on_track == LANE_BEFORE) {
            lane_before(L[k].r, &L[k], z[k], out[k]);
            continue;
        }
        if (L[k].on_track == LANE_REMNANT) {
            lane_remnant(L[k].r, &L[k], z[k], out[k]);
            continue;
        }
        int rc = trail_eval_run(g, 1, NULL, &mass[k], &z[k], 0.0, &age_yr[k], out[k], NULL);
        if (rc != HRT_OK && first == HRT_OK)
            first = rc;
    }
    return first;
}

int trail_eval_lockstep(const hrt_grid *g, size_t n, const double *mass_msun, const double *z, const double *age_yr,
                        hrt_state *out)
{
    int first = HRT_OK;
    run_cache c;
    memset(c.open, 0, sizeof c.open);
    c.next = 0;
    size_t k = 0;
    while (k < n) {
        /* stars between groups: their own kernel (lockstep_z.c) */
        size_t e = k;
        while (e < n && ((e > k && z[e] == z[e - 1]) || !at_group_z(g, z[e])))
            e++;
        int rc = HRT_OK;
        if (e > k) {
            rc = trail_eval_lockstep_z(g, e - k, mass_msun + k, z + k, age_yr + k, out + k);
            k = e;
        } else {
            /* a block: the next stars the kernel takes, up to its width */
            lane L[KERNEL_WIDTH];
            size_t w = 0;
            while (w < KERNEL_WIDTH && k + w < n && (L[w].r = run_for(g, &c, L, w, mass_msun[k + w], z[k + w])))
                w++;
            if (w == 0) {
                rc = trail_eval_run(g, 1, NULL, &mass_msun[k], &z[k], 0.0, &age_yr[k], &out[k], NULL);
                w = 1;
            } else {
                hrt_state *o[KERNEL_WIDTH];
                for (size_t b = 0; b < w; b++)
                    o[b] = &out[k + b];
                rc = run_block(g, L, w, mass_msun + k, z + k, age_yr + k, o);
            }
            k += w;
        }
        if (rc != HRT_OK && first == HRT_OK)
            first = rc;
    }
    return first;
}
