/* The batch kernel for stars between two grid metallicities (hrt_eval,
 * batch.c through lockstep.c): runs of stars that share the two groups
 * bracketing their Z, the stencil of groups the type across [Fe/H] uses,
 * one route and, in every group of the stencil, one mass interval strictly
 * between two of its tracks, evaluated a few at a time with what they share
 * computed once per run.
 *
 * The one-star path (eval.c) builds for each such star: the placement of Z
 * (a pass over the groups, a log, a division), the route, the mass range,
 * and in each of the stencil's groups (four with Steffen) an interval search
 * and the Hermite weights.  Here the run keeps the groups, the intervals,
 * their knot rows and the EEP count; per star remain its own numbers: the
 * placement of its Z (checked against the run's bracket), its route, the
 * weights of its log mass (computed once for all groups whose interval has
 * the same ends, the default grid's case: its groups share their masses),
 * its remnant, the age search over its own log ages and the values at its
 * two EEPs.  The stars of a block of ZK_WIDTH are taken stage by stage
 * (weights, search, values and state) so that one star's loads and
 * divisions overlap another's, and the knots a stage will read are
 * prefetched for the whole block first.
 *
 * Every number is computed with the same operations in the same order as
 * on the one-star path (the same placement, weights, sums of products,
 * slopes across [Fe/H], log and exp, the same galloping search from the
 * same hint), so the states are the same bytes (test_core:
 * lockstep_z_one_star).  A star the kernel does not take (at a grid
 * metallicity, extrapolated in mass, a stencil cut short, an age off its
 * track, any failure) goes through the one-star path unchanged. */
#include <math.h>
#include <string.h>

#include "core/core.h"

/* Stars taken stage by stage. */
#define ZK_WIDTH 4
/* Runs kept open at once (a bucket of masses or metallicities may straddle
 * a track or a group, its stars then alternate between runs). */
#define ZK_RUNS 4
/* Largest stencil the kernel takes (the default grid's cspline stencil is
 * its 7 groups); wider ones go to the one-star path. */
#define ZK_MAX_STENCIL 8
_Static_assert(NQS == 5, "zvalues writes the five quantities out");

/* What a run of stars shares. */
typedef struct zrun {
    qctx q;                /* the first star's context; per star, its Z placement and the weights
                            * trail_q_remnant reads are set in it */
    size_t g0, s_lo, ns, a; /* bracket [g0, g0 + 1], stencil [s_lo, s_lo + ns), a = g0 - s_lo */
    int route, n, zt;      /* route, EEPs of the interpolated star, type across [Fe/H] */
    size_t J;              /* EEPs per track in the tables */
    const zgroup *gp[ZK_MAX_STENCIL];
    size_t i[ZK_MAX_STENCIL];  /* interval of each stencil group */
    size_t wsrc[ZK_MAX_STENCIL]; /* first stencil group whose interval has the same ends */
    double m_lo, m_hi;     /* masses every stencil group covers */
    double x_lo, x_hi;     /* log masses strictly inside every group's interval */
    const double *ages0, *ages1; /* log-age knots of the bracket's intervals, [J][4] */
    /* [Fe/H] steps of the stencil, hx[k] = x[k + 1] - x[k], and the sums
     * hs[k] = hx[k - 1] + hx[k] (trail_steffen_slope's h_left + h_right) */
    double hx[ZK_MAX_STENCIL], hs[ZK_MAX_STENCIL];
} zrun;

enum { ZL_ONE_STAR, ZL_ON_TRACK, ZL_BEFORE, ZL_REMNANT };

/* One star of a block. */
typedef struct zlane {
    zrun *r;
    trail_zplace zp;
    double x, mass, z, age_yr, lt;
    double w_val[ZK_MAX_STENCIL][4], w_age[2][4], w_feh[4];
    double a_first, a_last, aj, aj1, rmass;
    size_t near;
    int kind, on_track, j, hint;
} zlane;

/* eval.c's grid_age: linear in [Fe/H] between the bracket's groups. */
static inline double zage(const zrun *r, const zlane *s, int j)
{
    const double *a = r->ages0 + (size_t)j * 4, *b = r->ages1 + (size_t)j * 4;
    const double *w = s->w_age[0], *v = s->w_age[1];
    double t = s->zp.t_feh;
    return (1.0 - t) * (w[0] * a[0] + w[1] * a[1] + w[2] * a[2] + w[3] * a[3]) +
           t * (v[0] * b[0] + v[1] * b[1] + v[2] * b[2] + v[3] * b[3]);
}

/* eval.c's q_hint: the nearest track's log age -> EEP table. */
static inline int zhint(const zrun *r, const zlane *s)
{
    const zgroup *gp = r->q.m[s->zp.g_near].gp;
    const double *x = gp->age_tab_x + 2 * s->near;
    double k = (s->lt - x[0]) * x[1];
    if (!(k >= 0.0))
        return 0;
    if (k >= TRAIL_AGE_TAB)
        return r->n - 2;
    return gp->age_tab[s->near * TRAIL_AGE_TAB + (size_t)k];
}

/* eval.c's find_eep on the grid: galloping from the hint, then bisecting. */
static int zfind(const zrun *r, zlane *s)
{
    int n = r->n, lo = 0, hi = n - 1, j = s->hint;
    double lt = s->lt, alo = s->a_first, ahi = s->a_last;
    if (j >= 0 && j <= n - 2) {
        double aj = zage(r, s, j);
        if (aj <= lt) {
            lo = j;
            alo = aj;
            for (int step = 1; lo + step < n - 1; step *= 2) {
                int c = lo + step;
                double ac = zage(r, s, c);
                if (ac <= lt) {
                    lo = c;
                    alo = ac;
                } else {
                    hi = c;
                    ahi = ac;
                    break;
                }
            }
        } else {
            hi = j;
            ahi = aj;
            for (int step = 1; hi - step > 0; step *= 2) {
                int c = hi - step;
                double ac = zage(r, s, c);
                if (ac > lt) {
                    hi = c;
                    ahi = ac;
                } else {
                    lo = c;
                    alo = ac;
                    break;
                }
            }
        }
    }
    while (hi - lo > 1) {
        int c = lo + (hi - lo) / 2;
        double ac = zage(r, s, c);
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

/* trail_steffen_slope (core.h) at an interior knot from its two secants
 * sl, sr, the steps hl, hr on each side and hs = hl + hr: the same
 * operations on the same numbers. */
static inline double zsteffen(double sl, double sr, double hl, double hr, double hs)
{
    double p = (sl * hr + sr * hl) / hs;
    double m = fabs(sl) < fabs(sr) ? fabs(sl) : fabs(sr);
    if (0.5 * fabs(p) < m)
        m = 0.5 * fabs(p);
    /* (sl < 0 ? -1 : 1) + (sr < 0 ? -1 : 1), exactly, without branches */
    return (double)(2 - 2 * ((sl < 0.0) + (sr < 0.0))) * m;
}

/* One quantity's sum of products at a group's two knots (the sum of
 * eval.c's trail_q_values, in its order). */
static inline double zsum(const double *w, const double *p, int c)
{
    return w[0] * p[2 * c] + w[1] * p[2 * c + 1] + w[2] * p[2 * NQ + 2 * c] + w[3] * p[2 * NQ + 2 * c + 1];
}

/* eval.c's trail_q_values between groups: each stencil group's values at
 * EEP j, then across [Fe/H] (z_slopes). */
static void zvalues(const zrun *r, const zlane *s, int j, double v[NQS])
{
    double ys[NQS][ZK_MAX_STENCIL];
    size_t ns = r->ns, a = r->a;
    for (size_t k = 0; k < ns; k++) {
        const double *p = trail_knot(r->gp[k], (size_t)j, r->i[k], 1), *w = s->w_val[r->wsrc[k]];
        ys[0][k] = zsum(w, p, 0); /* NQS = 5, written out */
        ys[1][k] = zsum(w, p, 1);
        ys[2][k] = zsum(w, p, 2);
        ys[3][k] = zsum(w, p, 3);
        ys[4][k] = zsum(w, p, 4);
    }
    if (r->zt == HRT_INTERP_LINEAR || ns < 3) {
        double t = s->zp.t_feh;
        for (int c = 0; c < NQS; c++)
            v[c] = (1.0 - t) * ys[c][a] + t * ys[c][a + 1];
        return;
    }
    const double *w = s->w_feh, *xs = r->q.feh_stencil, *hx = r->hx;
    for (int c = 0; c < NQS; c++) {
        const double *y = ys[c];
        double d0, d1;
        if (r->zt == HRT_INTERP_STEFFEN) {
            /* trail_steffen_slope at knots a and a + 1, the secant between
             * them computed once (an end knot's slope is its one secant) */
            double sa = (y[a + 1] - y[a]) / hx[a];
            d0 = a == 0 ? sa : zsteffen((y[a] - y[a - 1]) / hx[a - 1], sa, hx[a - 1], hx[a], r->hs[a]);
            d1 = a + 2 == ns ? sa : zsteffen(sa, (y[a + 2] - y[a + 1]) / hx[a + 1], hx[a], hx[a + 1], r->hs[a + 1]);
        } else {
            double ds[TRAIL_MAX_Z];
            trail_slopes_local(r->zt, ns, xs, y, ds);
            d0 = ds[a];
            d1 = ds[a + 1];
        }
        v[c] = w[0] * y[a] + w[1] * d0 + w[2] * y[a + 1] + w[3] * d1;
    }
}

/* The weights of eval.c's interval_weights for group k of the stencil; only
 * the bracket's log-age weights are kept (nothing else reads them). */
static void zweights(const hrt_grid *g, const zrun *r, zlane *s, size_t k)
{
    if (r->wsrc[k] != k)
        return; /* the same interval ends as an earlier group: the same weights */
    const double *lm = r->gp[k]->logm;
    trail_hermite_weights(g->interp, lm[r->i[k]], lm[r->i[k] + 1], s->x, s->w_val[k]);
}

/* Log age's weights: the values' (its blend towards linear is in its slopes,
 * grid_prep.c), as eval.c's interval_weights. */
static void zage_weights(const zrun *r, zlane *s, int b)
{
    memcpy(s->w_age[b], s->w_val[r->wsrc[r->a + (size_t)b]], sizeof s->w_age[b]);
}

/* Stage 1: a star's weights, remnant, log age and the log ages at its
 * track's ends. */
static void zlane_prepare(const hrt_grid *g, zlane *s)
{
    zrun *r = s->r;
    for (size_t k = 0; k < r->ns; k++)
        zweights(g, r, s, k);
    zage_weights(r, s, 0);
    zage_weights(r, s, 1);
    if (r->zt != HRT_INTERP_LINEAR && r->ns >= 3)
        trail_hermite_weights(r->zt, g->grp[r->g0].feh, g->grp[r->g0 + 1].feh, s->zp.feh, s->w_feh);
    /* the nearest track of the group nearest in [Fe/H] (eval.c's mass_ctx) */
    size_t kn = s->zp.g_near - r->s_lo, in = r->i[kn];
    const double *lm = r->gp[kn]->logm;
    s->near = (s->x - lm[in] <= lm[in + 1] - s->x) ? in : in + 1;
    /* the remnant from the run's context with this star's numbers set */
    qctx *q = &r->q;
    q->zp = s->zp;
    q->mass = s->mass;
    q->z = s->z;
    memcpy(q->m[r->g0].w_val, s->w_val[r->wsrc[r->a]], sizeof s->w_val[0]);
    memcpy(q->m[r->g0 + 1].w_val, s->w_val[r->wsrc[r->a + 1]], sizeof s->w_val[0]);
    q->m[s->zp.g_near].near = s->near;
    trail_q_remnant(q, &s->kind, &s->rmass);
    double t = s->age_yr;
    s->on_track = ZL_ONE_STAR;
    if (!(isfinite(t) && t >= 0.0))
        return; /* a failure: the one-star path words it */
    s->lt = t > 0.0 ? trail_log10(t) : -INFINITY;
    s->a_first = zage(r, s, 0);
    s->a_last = zage(r, s, r->n - 1);
    if (s->lt >= s->a_first && s->lt < s->a_last) {
        s->on_track = ZL_ON_TRACK;
        s->hint = zhint(r, s);
        if (s->hint >= 0 && s->hint <= r->n - 2) {
            __builtin_prefetch(r->ages0 + (size_t)s->hint * 4);
            __builtin_prefetch(r->ages1 + (size_t)s->hint * 4);
        }
    } else if (s->lt < s->a_first) {
        s->on_track = ZL_BEFORE;
    } else if (s->kind != HRT_REMNANT_NONE || (size_t)r->n >= g->routes[r->route].n_eep) {
        s->on_track = ZL_REMNANT; /* else no answer past the track's end: the one-star path words it */
    }
}

/* Prefetch the knots of EEPs j and j + 1 in every stencil group. */
static void zprefetch_values(const zrun *r, int j)
{
    for (size_t k = 0; k < r->ns; k++) {
        const char *p = (const char *)trail_knot(r->gp[k], (size_t)j, r->i[k], 0);
        size_t row = (r->gp[k]->n_mass + 1) * NQ * 2 * sizeof(double); /* one EEP further */
        for (size_t b = 0; b < 4 * NQ * sizeof(double); b += 64) {
            __builtin_prefetch(p + b);
            __builtin_prefetch(p + row + b);
        }
    }
}

/* The state's fields every star off its track shares (eval.c's state_at_lt). */
static void zlane_off_track(const zlane *s, hrt_state *st)
{
    trail_state_clear(st, s->mass, s->z, s->age_yr);
    st->route = s->r->route;
    st->flags = 0;
    st->remnant = s->kind;
    st->remnant_mass_msun = s->rmass;
}

/* Before the track's first EEP (eval.c's state_at_lt): not modelled. */
static void zlane_before(const zlane *s, hrt_state *st)
{
    zlane_off_track(s, st);
    st->phase = HRT_PHASE_PRE_MS;
    st->flags |= HRT_FLAG_NOT_MODELLED;
    st->mass_msun = s->mass;
    st->phase_start_yr = 0.0;
    st->phase_end_yr = trail_exp10(s->a_first);
    st->phase_fraction = s->age_yr / st->phase_end_yr;
}

/* Past the track's last EEP (eval.c's state_at_lt): the remnant. */
static void zlane_remnant(const zlane *s, hrt_state *st)
{
    const zrun *r = s->r;
    zlane_off_track(s, st);
    double v[NQS];
    zvalues(r, s, r->n - 1, v);
    trail_state_remnant(st, s->kind, s->rmass, v[Q_L - 1], trail_exp10(s->a_last), NULL);
}

/* Log age at EEP k, from the four already known when k is one of them. */
static inline double zage_at(const zlane *s, int k)
{
    const zrun *r = s->r;
    if (k == 0)
        return s->a_first;
    if (k == r->n - 1)
        return s->a_last;
    if (k == s->j)
        return s->aj;
    if (k == s->j + 1)
        return s->aj1;
    return zage(r, s, k);
}

/* The state of an on-track star (eval.c's state_on_track). */
static void zlane_state(const zlane *s, hrt_state *st)
{
    const zrun *r = s->r;
    int j = s->j;
    double f = s->aj1 > s->aj ? (s->lt - s->aj) / (s->aj1 - s->aj) : 0.0;
    double v0[NQS], v1[NQS];
    zvalues(r, s, j, v0);
    zvalues(r, s, j + 1, v1);
    st->struct_size = (uint32_t)sizeof *st;
    st->status = HRT_OK;
    st->route = r->route;
    st->remnant = s->kind;
    st->flags = 0;
    st->initial_mass_msun = s->mass;
    st->z = s->z;
    st->age_yr = s->age_yr;
    st->remnant_mass_msun = s->rmass;
    memset(st->reserved, 0, sizeof st->reserved);
    trail_state_from_values(st, v0, v1, f);
    st->eep = j + f;
    const zgroup *gn = r->q.m[s->zp.g_near].gp;
    size_t at = s->near * r->J + (size_t)j;
    st->phase = gn->phase[at];
    const int32_t *ru = gn->runs + at * 2;
    int js = ru[0], je = ru[1];
    if (je > r->n - 1)
        je = r->n - 1;
    if (js > je)
        js = je;
    double t0 = trail_exp10(zage_at(s, js)), t1 = trail_exp10(zage_at(s, je));
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

/* Groups on each side of the bracket the type across [Fe/H] can use (eval.c's
 * stencil_reach). */
static size_t zreach(const hrt_grid *g, int zt)
{
    return zt == HRT_INTERP_STEFFEN ? 1 : zt == HRT_INTERP_AKIMA ? 2 : zt == HRT_INTERP_CSPLINE ? g->n_z : 0;
}

/* The stencil, intervals and bounds of a run from its first star's context
 * (built by the one-star path's own code); 0 if the kernel does not take
 * the star.  The run takes only stars for which every stencil group finds
 * the same interval strictly inside its route: their stencil is then the
 * same (a group is left out only where it fails, which it cannot for them,
 * or beyond the type's reach or the grid's end). */
static int zrun_intervals(const hrt_grid *g, zrun *r)
{
    const qctx *q = &r->q;
    size_t g0 = q->zp.g0, reach = zreach(g, r->zt);
    size_t full_lo = g0 >= reach ? g0 - reach : 0;
    size_t full_hi = g0 + 1 + reach < g->n_z ? g0 + 1 + reach : g->n_z - 1;
    if (q->g_lo != full_lo || q->g_hi != full_hi || q->g_hi - q->g_lo + 1 > ZK_MAX_STENCIL)
        return 0;
    r->g0 = g0;
    r->s_lo = q->g_lo;
    r->ns = q->g_hi - q->g_lo + 1;
    r->a = g0 - q->g_lo;
    r->m_lo = 0.0;
    r->m_hi = INFINITY;
    r->x_lo = -INFINITY;
    r->x_hi = INFINITY;
    for (size_t k = 0; k < r->ns; k++) {
        const mctx *m = &q->m[r->s_lo + k];
        if (!m->interior)
            return 0;
        const zgroup *gp = m->gp;
        r->gp[k] = gp;
        r->i[k] = m->i;
        r->wsrc[k] = k;
        for (size_t b = 0; b < k; b++)
            if (r->wsrc[b] == b && gp->logm[m->i] == r->gp[b]->logm[r->i[b]] &&
                gp->logm[m->i + 1] == r->gp[b]->logm[r->i[b] + 1]) {
                r->wsrc[k] = b;
                break;
            }
        r->m_lo = gp->mass[0] > r->m_lo ? gp->mass[0] : r->m_lo;
        r->m_hi = gp->mass[gp->n_mass - 1] < r->m_hi ? gp->mass[gp->n_mass - 1] : r->m_hi;
        r->x_lo = gp->logm[m->i] > r->x_lo ? gp->logm[m->i] : r->x_lo;
        r->x_hi = gp->logm[m->i + 1] < r->x_hi ? gp->logm[m->i + 1] : r->x_hi;
    }
    return 1;
}

/* The run's shared context from its first star, or 0 if the kernel does not
 * take that star. */
static int zrun_open(const hrt_grid *g, double mass, double z, zrun *r)
{
    if (trail_qctx_init(g, mass, z, &r->q, NULL) != HRT_OK || r->q.zp.single || r->q.flags != 0)
        return 0;
    r->zt = trail_z_type(g);
    if (!zrun_intervals(g, r))
        return 0;
    r->route = r->q.route;
    r->n = r->q.n_eep;
    r->J = g->n_eep_max;
    r->ages0 = r->gp[r->a]->age_interval + r->i[r->a] * r->J * 4;
    r->ages1 = r->gp[r->a + 1]->age_interval + r->i[r->a + 1] * r->J * 4;
    const double *xs = r->q.feh_stencil;
    for (size_t k = 0; k + 1 < r->ns; k++) {
        r->hx[k] = xs[k + 1] - xs[k];
        r->hs[k] = k > 0 ? r->hx[k - 1] + r->hx[k] : 0.0;
    }
    return 1;
}

/* Whether a star (its Z placed in s->zp, its log mass in s->x) joins the
 * run: between the same groups, covered by every stencil group, strictly
 * inside each one's interval, on the same route. */
static inline int zrun_joins(const hrt_grid *g, const zrun *r, const zlane *s)
{
    return !s->zp.single && s->zp.g0 == r->g0 && s->mass >= r->m_lo && s->mass <= r->m_hi && s->x > r->x_lo &&
           s->x < r->x_hi && trail_route_at(g, &s->zp, s->mass) == r->route;
}

typedef struct zrun_cache {
    zrun r[ZK_RUNS];
    int open[ZK_RUNS];
    unsigned next; /* the slot opened next (round robin) */
} zrun_cache;

/* The open run star w of the block joins, or a new one in a slot no star of
 * the block [0, w) uses; NULL if the kernel does not take the star. */
static zrun *zrun_for(const hrt_grid *g, zrun_cache *c, zlane *L, size_t w)
{
    zlane *s = &L[w];
    if (!(s->mass > 0.0) || !isfinite(s->mass) || trail_place_z(g, s->z, &s->zp, NULL) != HRT_OK || s->zp.single)
        return NULL;
    s->x = trail_log10(s->mass);
    for (int k = 0; k < ZK_RUNS; k++)
        if (c->open[k] && zrun_joins(g, &c->r[k], s))
            return &c->r[k];
    for (int tries = 0; tries < ZK_RUNS; tries++) {
        int k = (int)(c->next++ % ZK_RUNS);
        int busy = 0;
        for (size_t b = 0; b < w; b++)
            busy |= L[b].r == &c->r[k];
        if (busy)
            continue;
        c->open[k] = zrun_open(g, s->mass, s->z, &c->r[k]) && zrun_joins(g, &c->r[k], s);
        return c->open[k] ? &c->r[k] : NULL;
    }
    return NULL; /* not reached: a block of fewer than ZK_RUNS stars leaves a slot free */
}

/* A block of w stars taken stage by stage; HRT_OK, or the first failure of
 * the stars it sends to the one-star path. */
static int zrun_block(const hrt_grid *g, zlane *L, size_t w, hrt_state *out)
{
    for (size_t k = 0; k < w; k++)
        zlane_prepare(g, &L[k]);
    for (size_t k = 0; k < w; k++)
        if (L[k].on_track == ZL_ON_TRACK) {
            L[k].j = zfind(L[k].r, &L[k]);
            zprefetch_values(L[k].r, L[k].j);
        }
    int first = HRT_OK;
    for (size_t k = 0; k < w; k++) {
        zlane *s = &L[k];
        if (s->on_track == ZL_ON_TRACK) {
            zlane_state(s, &out[k]);
        } else if (s->on_track == ZL_BEFORE) {
            zlane_before(s, &out[k]);
        } else if (s->on_track == ZL_REMNANT) {
            zlane_remnant(s, &out[k]);
        } else {
            int rc = trail_eval_run(g, 1, NULL, &s->mass, &s->z, 0.0, &s->age_yr, &out[k], NULL);
            if (rc != HRT_OK && first == HRT_OK)
                first = rc;
        }
    }
    return first;
}

int trail_eval_lockstep_z(const hrt_grid *g, size_t n, const double *mass_msun, const double *z, const double *age_yr,
                          hrt_state *out)
{
    int first = HRT_OK;
    zrun_cache c;
    memset(c.open, 0, sizeof c.open);
    c.next = 0;
    size_t k = 0;
    while (k < n) {
        /* a block: the next stars the kernel takes, up to its width; the
         * first it refuses goes to the one-star path after the block */
        zlane L[ZK_WIDTH];
        size_t w = 0;
        int refused = 0;
        while (w < ZK_WIDTH && k + w < n) {
            L[w].mass = mass_msun[k + w];
            L[w].z = z[k + w];
            L[w].age_yr = age_yr[k + w];
            if (!(L[w].r = zrun_for(g, &c, L, w))) {
                refused = 1;
                break;
            }
            w++;
        }
        int rc = w ? zrun_block(g, L, w, out + k) : HRT_OK;
        if (rc != HRT_OK && first == HRT_OK)
            first = rc;
        k += w;
        if (refused) {
            rc = trail_eval_run(g, 1, NULL, &mass_msun[k], &z[k], 0.0, &age_yr[k], &out[k], NULL);
            if (rc != HRT_OK && first == HRT_OK)
                first = rc;
            k++;
        }
    }
    return first;
}
