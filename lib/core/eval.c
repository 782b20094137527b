/* Evaluation, the hot path, in one translation unit so that the compiler
 * can inline the whole chain: query contexts (the mass context of one group,
 * the context of a (mass, Z) with its stencil of groups across [Fe/H]),
 * values across log mass and [Fe/H] at one EEP, phases and remnants, the
 * EEP search in age, the state at an age, and the loop over stars behind
 * hrt_eval (batch.c chooses their order). */
#include <math.h>
#include <string.h>

#include "core/core.h"

/* Weights of the interval m->i at log mass x: the grid's type for every
 * quantity, log age included (its slopes are blended towards linear per EEP
 * where needed to keep ages increasing along the EEPs: grid_prep.c). */
static inline void interval_weights(const hrt_grid *g, mctx *m, double x)
{
    const double *lm = m->gp->logm;
    size_t i = m->i;
    trail_hermite_weights(g->interp, lm[i], lm[i + 1], x, m->w_val);
    memcpy(m->w_age, m->w_val, sizeof m->w_val);
}

void trail_interval_weights(const hrt_grid *g, mctx *m, double x) { interval_weights(g, m, x); }

/* How far beyond a route's end track k (log mass, dex) a mass may be
 * extrapolated: TRAIL_EXTRAP_SPACINGS times the spacing to the route's next
 * track inside, or, for a route with one track in the group, half the gap to
 * the nearest track outside it in the direction of the query (the midpoint,
 * where the route boundary of a generated grid lies); unlimited towards an
 * end of the grid (the mass range check bounds that). */
static double extrap_limit(const zgroup *gp, size_t lo, size_t hi, size_t k, double dx)
{
    const double *lm = gp->logm;
    if (hi - lo >= 2)
        return TRAIL_EXTRAP_SPACINGS * (k + 1 == hi ? lm[k] - lm[k - 1] : lm[k + 1] - lm[k]);
    if (dx > 0.0)
        return k + 1 < gp->n_mass ? 0.5 * (lm[k + 1] - lm[k]) : INFINITY;
    return k > 0 ? 0.5 * (lm[k] - lm[k - 1]) : INFINITY;
}

/* Mass context of one group for route r at log mass x. */
static inline int mass_ctx(const hrt_grid *g, const zgroup *gp, int r, double x, mctx *m)
{
    size_t lo = gp->route_lo[r], hi = gp->route_hi[r];
    m->gp = gp;
    m->extrapolated = 0;
    m->interior = 0;
    m->extrap_dex = 0.0;
    m->extrap_limit = INFINITY;
    if (lo == hi)
        return HRT_E_NO_TRACK;
    const double *lm = gp->logm;
    if (hi - lo == 1 || x <= lm[lo] || x >= lm[hi - 1]) {
        /* At or beyond an end of the route: one knot, linear extrapolation
         * with its slope (log age with a step limited to stay increasing). */
        int top = x >= lm[hi - 1] && hi - lo > 1;
        size_t k = top ? hi - 1 : lo;
        m->extrap_dex = x - lm[k];
        m->extrap_limit = extrap_limit(gp, lo, hi, k, m->extrap_dex);
        m->near = k;
        if (fabs(m->extrap_dex) > m->extrap_limit * (1.0 + TRAIL_EDGE_REL_TOL))
            return HRT_E_NO_TRACK;
        double dx = hi - lo == 1 ? 0.0 : x - lm[k];
        double lim = gp->age_dx_max[2 * k + (dx > 0.0)];
        double dxa = dx > lim ? lim : (dx < -lim ? -lim : dx);
        m->i = top ? k - 1 : k;
        for (int c = 0; c < 4; c++)
            m->w_val[c] = m->w_age[c] = 0.0;
        int s = top ? 2 : 0;
        m->w_val[s] = 1.0;
        m->w_val[s + 1] = dx;
        m->w_age[s] = 1.0;
        m->w_age[s + 1] = dxa;
        m->n_eep = gp->n_eep[k];
        m->extrapolated = x != lm[k];
        return HRT_OK;
    }
    /* the last track at or below x (unique: log masses never decrease),
     * which lies in [lo, hi - 2]: walked to from the log-mass table's
     * guess, a step or two at most */
    double kf = (x - gp->mass_bin_x[0]) * gp->mass_bin_x[1];
    size_t a = gp->mass_bin[kf >= (double)gp->n_mass_bin ? gp->n_mass_bin - 1 : kf > 0.0 ? (size_t)kf : 0];
    while (a > 0 && lm[a] > x)
        a--;
    while (lm[a + 1] <= x)
        a++;
    m->i = a;
    m->interior = 1;
    interval_weights(g, m, x);
    m->near = (x - lm[a] <= lm[a + 1] - x) ? a : a + 1;
    if (x == lm[a])
        m->n_eep = gp->n_eep[a];
    else
        m->n_eep = gp->n_eep[a] < gp->n_eep[a + 1] ? gp->n_eep[a] : gp->n_eep[a + 1];
    return HRT_OK;
}

int trail_mass_ctx(const hrt_grid *g, const zgroup *gp, int r, double x, mctx *m) { return mass_ctx(g, gp, r, x, m); }

/* The metallicity part of a query context: placement (place.c) and the
 * weights across [Fe/H].  It does not depend on the mass, so a batch at one
 * Z computes it once. */
int trail_qctx_z(const hrt_grid *g, double z, qctx *q, hrt_error *err)
{
    q->g = g;
    q->z = z;
    int rc = trail_place_z(g, z, &q->zp, err);
    if (rc == HRT_OK && !q->zp.single) {
        size_t g0 = q->zp.g0;
        trail_hermite_weights(trail_z_type(g), g->grp[g0].feh, g->grp[g0 + 1].feh, q->zp.feh, q->w_feh);
    }
    return rc;
}

/* Copy the metallicity part of one context into another. */
void trail_qctx_copy_z(qctx *dst, const qctx *src)
{
    dst->g = src->g;
    dst->z = src->z;
    dst->zp = src->zp;
    memcpy(dst->w_feh, src->w_feh, sizeof dst->w_feh);
}

/* The mass part, after qctx_z. */
/* Groups on each side of the bracket the type across [Fe/H] can use. */
static size_t stencil_reach(const hrt_grid *g)
{
    switch (trail_z_type(g)) {
    case HRT_INTERP_STEFFEN:
        return 1;
    case HRT_INTERP_AKIMA:
        return 2;
    case HRT_INTERP_CSPLINE:
        return g->n_z;
    default:
        return 0;
    }
}

/* Group k outside the bracket joins the stencil if it covers the mass and
 * places it on its tracks (its context in *m). */
static inline int outer_group(const hrt_grid *g, size_t k, int route, double mass, double x, mctx *m, int *ne)
{
    const zgroup *gp = &g->grp[k];
    if (mass < gp->mass[0] || mass > gp->mass[gp->n_mass - 1] || mass_ctx(g, gp, route, x, m) != HRT_OK)
        return 0;
    if (m->n_eep < *ne)
        *ne = m->n_eep;
    return 1;
}

static inline int qctx_mass(qctx *q, double mass, hrt_error *err)
{
    const hrt_grid *g = q->g;
    size_t nz = g->n_z, g0 = q->zp.g0;
    q->mass = mass;
    q->route = -1;
    q->flags = 0;
    q->n_eep = 0;
    int route = trail_route_at(g, &q->zp, mass);
    q->route = route;
    int rc = trail_check_mass(g, &q->zp, mass, err);
    if (rc != HRT_OK)
        return rc;
    size_t gb = trail_place_last(&q->zp);
    double x = trail_log10(mass);
    /* The groups bracketing Z must place the mass on their tracks. */
    int ne = 1 << 30;
    for (size_t k = g0; k <= gb; k++) {
        mctx *m = &q->m[k];
        if (mass_ctx(g, &g->grp[k], route, x, m) != HRT_OK)
            return trail_no_track(q, k, err);
        if (m->n_eep < ne)
            ne = m->n_eep;
        if (m->extrapolated)
            q->flags |= HRT_FLAG_EXTRAPOLATED;
    }
    /* Further groups the type across [Fe/H] uses for its slopes, as far as
     * they cover the mass and reach it by interpolation or extrapolation
     * within its limit: the stencil shrinks where they do not. */
    size_t s_lo = g0, s_hi = gb;
    if (!q->zp.single) {
        size_t reach = stencil_reach(g);
        for (size_t k = 0; k < reach && s_lo > 0; k++) {
            if (!outer_group(g, s_lo - 1, route, mass, x, &q->m[s_lo - 1], &ne))
                break;
            s_lo--;
        }
        for (size_t k = 0; k < reach && s_hi + 1 < nz; k++) {
            if (!outer_group(g, s_hi + 1, route, mass, x, &q->m[s_hi + 1], &ne))
                break;
            s_hi++;
        }
        for (size_t k = s_lo; k <= s_hi; k++)
            q->feh_stencil[k - s_lo] = g->grp[k].feh;
    }
    q->g_lo = s_lo;
    q->g_hi = s_hi;
    q->n_eep = ne;
    return HRT_OK;
}

int trail_qctx_init(const hrt_grid *g, double mass, double z, qctx *q, hrt_error *err)
{
    q->g = g;
    q->mass = mass;
    q->z = z;
    q->route = -1;
    q->flags = 0;
    q->n_eep = 0;
    if (!isfinite(mass) || mass <= 0.0)
        return trail_set_error(err, HRT_E_DOMAIN, "initial mass %g Msun is not a positive finite number", mass);
    int rc = trail_qctx_z(g, z, q, err);
    return rc != HRT_OK ? rc : qctx_mass(q, mass, err);
}


/* Value of quantity qty at EEP j in group k of the stencil (mass Hermite). */
static inline double group_value(const qctx *q, size_t k, int qty, int j)
{
    const mctx *m = &q->m[k];
    const zgroup *gp = m->gp;
    if (qty == Q_AGE) {
        const double *a = gp->age_interval + (m->i * q->g->n_eep_max + (size_t)j) * 4, *w = m->w_age;
        return w[0] * a[0] + w[1] * a[1] + w[2] * a[2] + w[3] * a[3];
    }
    const double *p = trail_knot(gp, (size_t)j, m->i, qty);
    const double *w = m->w_val;
    return w[0] * p[0] + w[1] * p[1] + w[2] * p[2 * NQ] + w[3] * p[2 * NQ + 1];
}

/* Slopes across [Fe/H] at the two bracketing knots a, a + 1 of the stencil
 * (a true end of the stencil is a true end of the grid's usable groups). */
static void z_slopes(int zt, size_t n, const double *xs, const double *ys, size_t a, double *d0, double *d1)
{
    if (zt == HRT_INTERP_STEFFEN) {
        *d0 = trail_steffen_slope(xs, ys, n, a);
        *d1 = trail_steffen_slope(xs, ys, n, a + 1);
        return;
    }
    double ds[TRAIL_MAX_Z];
    trail_slopes_local(zt, n, xs, ys, ds);
    *d0 = ds[a];
    *d1 = ds[a + 1];
}

double trail_q_value(const qctx *q, int qty, int j)
{
    size_t g0 = q->zp.g0;
    if (q->zp.single)
        return group_value(q, g0, qty, j);
    double tz = q->zp.t_feh;
    int zt = trail_z_type(q->g);
    if (qty == Q_AGE || zt == HRT_INTERP_LINEAR || q->g_hi - q->g_lo < 2) {
        /* Log age is linear in [Fe/H]: a convex blend of two increasing
         * sequences increases, so the interpolated track stays ordered. */
        return (1.0 - tz) * group_value(q, g0, qty, j) + tz * group_value(q, g0 + 1, qty, j);
    }
    double ys[TRAIL_MAX_Z];
    size_t n = q->g_hi - q->g_lo + 1, a = g0 - q->g_lo;
    for (size_t k = 0; k < n; k++)
        ys[k] = group_value(q, q->g_lo + k, qty, j);
    double d0, d1;
    z_slopes(zt, n, q->feh_stencil, ys, a, &d0, &d1);
    const double *w = q->w_feh;
    return w[0] * ys[a] + w[1] * d0 + w[2] * ys[a + 1] + w[3] * d1;
}

void trail_q_values(const qctx *q, int j, double v[NQS])
{
    if (q->zp.single) {
        const mctx *m = &q->m[q->zp.g0];
        const double *p = trail_knot(m->gp, (size_t)j, m->i, 1), *w = m->w_val;
        for (int c = 0; c < NQS; c++)
            v[c] = w[0] * p[2 * c] + w[1] * p[2 * c + 1] + w[2] * p[2 * NQ + 2 * c] + w[3] * p[2 * NQ + 2 * c + 1];
        return;
    }
    /* All quantities of a group at once: their knot data are contiguous. */
    double ys[NQS][TRAIL_MAX_Z];
    size_t n = q->zp.single ? 1 : q->g_hi - q->g_lo + 1;
    size_t k0 = q->zp.single ? q->zp.g0 : q->g_lo;
    for (size_t k = 0; k < n; k++) {
        const mctx *m = &q->m[k0 + k];
        const double *p = trail_knot(m->gp, (size_t)j, m->i, 1), *w = m->w_val;
        for (int c = 0; c < NQS; c++)
            ys[c][k] = w[0] * p[2 * c] + w[1] * p[2 * c + 1] + w[2] * p[2 * NQ + 2 * c] + w[3] * p[2 * NQ + 2 * c + 1];
    }
    if (q->zp.single) {
        for (int c = 0; c < NQS; c++)
            v[c] = ys[c][0];
        return;
    }
    size_t a = q->zp.g0 - q->g_lo;
    int zt = trail_z_type(q->g);
    if (zt == HRT_INTERP_LINEAR || n < 3) {
        for (int c = 0; c < NQS; c++)
            v[c] = (1.0 - q->zp.t_feh) * ys[c][a] + q->zp.t_feh * ys[c][a + 1];
        return;
    }
    const double *w = q->w_feh;
    for (int c = 0; c < NQS; c++) {
        double d0, d1;
        z_slopes(zt, n, q->feh_stencil, ys[c], a, &d0, &d1);
        v[c] = w[0] * ys[c][a] + w[1] * d0 + w[2] * ys[c][a + 1] + w[3] * d1;
    }
}

static const mctx *near_track(const qctx *q) { return &q->m[q->zp.g_near]; }

int trail_q_phase(const qctx *q, int j)
{
    const mctx *m = near_track(q);
    return m->gp->phase[m->near * q->g->n_eep_max + (size_t)j];
}

void trail_q_phase_run(const qctx *q, int j, int *js, int *je)
{
    const mctx *m = near_track(q);
    const int32_t *ru = m->gp->runs + (m->near * q->g->n_eep_max + (size_t)j) * 2;
    *js = ru[0];
    *je = ru[1];
    if (*je > q->n_eep - 1)
        *je = q->n_eep - 1;
    if (*js > *je)
        *js = *je;
}

void trail_state_from_values(hrt_state *s, const double v0[NQS], const double v1[NQS], double f)
{
    double v[NQS];
    for (int k = 0; k < NQS; k++)
        v[k] = f == 0.0 ? v0[k] : v0[k] + f * (v1[k] - v0[k]);
    s->log_l_lsun = v[Q_L - 1];
    s->log_teff_k = v[Q_TEFF - 1];
    double m0 = s->initial_mass_msun; /* masses are stored as fractions of it */
    s->mass_msun = m0 * v[Q_MASS - 1];
    /* Cores interpolated separately from the star can overshoot it where
     * the envelope is thin (stripped stars): a core is never heavier than
     * what contains it. */
    double he = m0 * v[Q_HE - 1], co = m0 * v[Q_CO - 1];
    he = he < s->mass_msun ? he : s->mass_msun;
    s->he_core_mass_msun = he;
    s->co_core_mass_msun = co < he ? co : he;
    s->log_r_rsun = trail_log_r_from(s->log_l_lsun, s->log_teff_k);
    s->log_g_cgs = trail_log_g_from(s->mass_msun, s->log_r_rsun);
}

/* Log age at EEP j from the grid: linear in [Fe/H] between two groups. */
static inline double grid_age(const qctx *q, int j)
{
    if (q->zp.single)
        return group_value(q, q->zp.g0, Q_AGE, j);
    return (1.0 - q->zp.t_feh) * group_value(q, q->zp.g0, Q_AGE, j) + q->zp.t_feh * group_value(q, q->zp.g0 + 1, Q_AGE, j);
}

/* Where a state's ages and values come from: a star's stored track (S
 * non-NULL) or the grid. Both give the same numbers for the same EEP, so
 * hrt_star_at and hrt_eval agree to the bit. */
static inline double src_age(const qctx *q, const trail_track_arrays *S, int j)
{
    return S ? S->age[j] : grid_age(q, j);
}

static inline double src_age_yr(const qctx *q, const trail_track_arrays *S, int j)
{
    return S ? S->age_yr[j] : trail_exp10(grid_age(q, j));
}

static inline void src_values(const qctx *q, const trail_track_arrays *S, int j, double v[NQS])
{
    if (S)
        memcpy(v, S->val + (size_t)j * NQS, NQS * sizeof(double));
    else
        trail_q_values(q, j, v);
}

/* A starting EEP for the search: the bracket of log age lt in the
 * nearest track's own log age -> EEP table. */
static int q_hint(const qctx *q, double lt)
{
    const mctx *m = &q->m[q->zp.g_near];
    const double *x = m->gp->age_tab_x + 2 * m->near;
    double k = (lt - x[0]) * x[1];
    if (!(k >= 0.0))
        return 0;
    if (k >= TRAIL_AGE_TAB)
        return q->n_eep - 2;
    return m->gp->age_tab[m->near * TRAIL_AGE_TAB + (size_t)k];
}

/* Largest j in [0, n - 2] with A(j) <= lt, given A(0) <= lt < A(n - 1).
 * Ages increase with EEP, so the answer is unique: a star's stored track
 * is bisected, the grid is searched by galloping from a hint. */
static int find_eep(const qctx *q, const trail_track_arrays *S, int n, double lt, double a_first, double a_last,
                    double *a_lo, double *a_hi)
{
    int lo = 0, hi = n - 1;
    double alo = a_first, ahi = a_last;
    if (S) {
        /* branch-free bisection: the comparisons of random ages would
         * mispredict; the answer is the same */
        const double *a = S->age;
        int len = n - 1;
        if (S->tab)
            trail_star_bracket(S, n, lt, &lo, &len);
        while (len > 1) {
            int half = len / 2;
            lo = a[lo + half] <= lt ? lo + half : lo;
            len -= half;
        }
        *a_lo = a[lo];
        *a_hi = a[lo + 1];
        return lo;
    }
    int j = q_hint(q, lt);
    if (j >= 0 && j <= n - 2) {
        double aj = grid_age(q, j);
        if (aj <= lt) {
            lo = j;
            alo = aj;
            for (int step = 1; lo + step < n - 1; step *= 2) {
                int c = lo + step;
                double ac = grid_age(q, c);
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
                double ac = grid_age(q, c);
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
        double ac = grid_age(q, c);
        if (ac <= lt) {
            lo = c;
            alo = ac;
        } else {
            hi = c;
            ahi = ac;
        }
    }
    *a_lo = alo;
    *a_hi = ahi;
    return lo;
}

/* Log ages already known at four EEPs of one state (the ends of the track
 * and the bracket of the age): the phase run's ends are usually among them,
 * and the grid's log age at an EEP is the same number however often it is
 * computed, so looking it up changes no result. */
typedef struct age_memo {
    int j[4];
    double a[4];
} age_memo;

static inline double memo_age(const qctx *q, const trail_track_arrays *S, const age_memo *mo, int j)
{
    for (int k = 0; k < 4; k++)
        if (mo->j[k] == j)
            return mo->a[k];
    return src_age(q, S, j);
}

/* The state of a star between two EEPs of its track, every field stored
 * once (no clearing of the struct first). */
static inline void state_on_track(const qctx *q, const trail_track_arrays *S, int kind, double rmass, double age_yr,
                                  double lt, double a_first, double a_last, hrt_state *s)
{
    int n = q->n_eep;
    double aj, aj1;
    int j = find_eep(q, S, n, lt, a_first, a_last, &aj, &aj1);
    double f = aj1 > aj ? (lt - aj) / (aj1 - aj) : 0.0;
    double v0[NQS], v1[NQS];
    src_values(q, S, j, v0);
    src_values(q, S, j + 1, v1);
    s->struct_size = (uint32_t)sizeof *s;
    s->status = HRT_OK;
    s->route = q->route;
    s->remnant = kind;
    s->flags = q->flags;
    s->initial_mass_msun = q->mass;
    s->z = q->z;
    s->age_yr = age_yr;
    s->remnant_mass_msun = rmass;
    memset(s->reserved, 0, sizeof s->reserved);
    trail_state_from_values(s, v0, v1, f);
    s->eep = j + f;
    int js, je;
    if (S) {
        s->phase = S->phase[j];
        js = S->runs[2 * j];
        je = S->runs[2 * j + 1];
    } else {
        s->phase = trail_q_phase(q, j);
        trail_q_phase_run(q, j, &js, &je);
    }
    const age_memo mo = {{0, n - 1, j, j + 1}, {a_first, a_last, aj, aj1}};
    double t0 = S ? S->age_yr[js] : trail_exp10(memo_age(q, S, &mo, js));
    double t1 = S ? S->age_yr[je] : trail_exp10(memo_age(q, S, &mo, je));
    s->phase_start_yr = t0;
    s->phase_end_yr = t1;
    double span = t1 - t0;
    double pf = span > 0.0 ? (age_yr - t0) / span : 0.0;
    if (pf < 0.0)
        pf = 0.0;
    if (pf > 1.0)
        pf = 1.0;
    s->phase_fraction = pf;
}

/* trail_state_at_generic with the log10 of the age given (-inf at 0). */
static inline int state_at_lt(const qctx *q, const trail_track_arrays *S, int kind, double rmass, double age_yr,
                              double lt, hrt_state *s)
{
    int n = q->n_eep;
    if (isfinite(age_yr) && age_yr >= 0.0) {
        double a_first = src_age(q, S, 0), a_last = src_age(q, S, n - 1);
        if (lt >= a_first && lt < a_last) {
            state_on_track(q, S, kind, rmass, age_yr, lt, a_first, a_last, s);
            return HRT_OK;
        }
    }
    trail_state_clear(s, q->mass, q->z, age_yr);
    s->route = q->route;
    s->flags = q->flags;
    if (!isfinite(age_yr) || age_yr < 0.0) {
        s->status = HRT_E_DOMAIN;
        return HRT_E_DOMAIN;
    }
    s->remnant = kind;
    s->remnant_mass_msun = rmass;
    if (lt < src_age(q, S, 0)) {
        s->phase = HRT_PHASE_PRE_MS;
        s->flags |= HRT_FLAG_NOT_MODELLED;
        s->mass_msun = q->mass;
        s->phase_start_yr = 0.0;
        s->phase_end_yr = src_age_yr(q, S, 0);
        s->phase_fraction = age_yr / s->phase_end_yr;
        return HRT_OK;
    }
    /* no remnant: a track that stops early has no answer past its end;
     * one that reaches its route's last EEP ends in a star disrupted
     * without remnant (pair-instability supernova) */
    if (kind == HRT_REMNANT_NONE && (size_t)n < q->g->routes[q->route].n_eep) {
        s->status = HRT_E_AGE_RANGE;
        return HRT_E_AGE_RANGE;
    }
    double v[NQS];
    src_values(q, S, n - 1, v);
    trail_state_remnant(s, kind, rmass, v[Q_L - 1], src_age_yr(q, S, n - 1), S ? S->wd : NULL);
    return HRT_OK;
}

static inline double log_age(double age_yr) { return age_yr > 0.0 ? trail_log10(age_yr) : -INFINITY; }

int trail_state_at_generic(const qctx *q, const trail_track_arrays *S, int kind, double rmass, double age_yr,
                           hrt_state *s)
{
    return state_at_lt(q, S, kind, rmass, age_yr, log_age(age_yr), s);
}

/* The metallicity part of the last context built, for reuse. */
typedef struct zcache {
    double z;
    int rc;
    qctx q; /* only its metallicity fields are meaningful */
} zcache;

/* trail_qctx_init, reusing the metallicity part when Z repeats. */
static int init_star(const hrt_grid *g, double mass, double z, qctx *q, zcache *zc, hrt_error *err)
{
    if (!(z == zc->z)) {
        zc->rc = trail_qctx_z(g, z, &zc->q, NULL);
        zc->z = z;
    }
    if (zc->rc != HRT_OK || !isfinite(mass) || mass <= 0.0)
        return trail_qctx_init(g, mass, z, q, err); /* the full path words the error */
    trail_qctx_copy_z(q, &zc->q);
    return qctx_mass(q, mass, err);
}

/* Prefetch the grid data the age search of a star will start from: the
 * knots of its mass interval at the EEPs of its hint, in each group it
 * interpolates between (one at a grid metallicity, two between groups).
 * Prefetches change no result. */
static inline void prefetch_star(const qctx *q, double lt)
{
    int j = q_hint(q, lt);
    if (j < 0 || j + 1 >= q->n_eep)
        return;
    size_t J = q->g->n_eep_max;
    for (size_t k = q->zp.g0; k <= trail_place_last(&q->zp); k++) {
        const mctx *m = &q->m[k];
        const char *p0 = (const char *)trail_knot(m->gp, (size_t)j, m->i, 0);
        const char *p1 = (const char *)trail_knot(m->gp, (size_t)j + 1, m->i, 0);
        const char *pa = (const char *)(m->gp->age_interval + (m->i * J + (size_t)j) * 4);
        __builtin_prefetch(pa);
        __builtin_prefetch(pa + 64);
        for (int b = 0; b < 4 * NQ * 8; b += 64) {
            __builtin_prefetch(p0 + b);
            __builtin_prefetch(p1 + b);
        }
    }
}

/* Stars order[0 .. n - 1] (0 .. n - 1 when order is NULL) in that order:
 * the states, and the first failure met (hrt_eval's message, naming the
 * star by its index).  Arguments are checked by the caller (batch.c). */
int trail_eval_run(const hrt_grid *g, size_t n, const uint32_t *order, const double *mass_msun, const double *z,
                   double z_all, const double *age_yr, hrt_state *out, hrt_error *err)
{
    int first = HRT_OK;
    /* The next star's context is prepared, and the grid data its age
     * search will start from is prefetched, while this star is evaluated:
     * the memory latency of one overlaps the arithmetic of the other.
     * Prefetches change no result. */
    qctx qbuf[2];
    qctx *cur = &qbuf[0], *nxt = &qbuf[1];
    hrt_error e1, e2;
    hrt_error *ecur = &e1, *enxt = &e2;
    /* The metallicity part of the context is shared by consecutive stars of
     * the same Z (all of them when z is NULL). */
    zcache zc;
    zc.z = NAN;
    zc.rc = HRT_E_DOMAIN;
    size_t s0 = order ? order[0] : 0;
    int rc_cur = init_star(g, mass_msun[s0], z ? z[s0] : z_all, cur, &zc, ecur);
    double lt_cur = log_age(age_yr[s0]);
    for (size_t k = 0; k < n; k++) {
        size_t i = order ? order[k] : k;
        double zi = z ? z[i] : z_all;
        int rc_nxt = HRT_OK;
        double lt_nxt = 0.0;
        if (k + 1 < n) {
            size_t i1 = order ? order[k + 1] : k + 1;
            rc_nxt = init_star(g, mass_msun[i1], z ? z[i1] : z_all, nxt, &zc, first == HRT_OK ? enxt : NULL);
            lt_nxt = log_age(age_yr[i1]);
            if (rc_nxt == HRT_OK && age_yr[i1] > 0.0)
                prefetch_star(nxt, lt_nxt);
        }
        int rc = rc_cur;
        if (rc == HRT_OK) {
            int kind;
            double rmass;
            trail_q_remnant(cur, &kind, &rmass);
            rc = state_at_lt(cur, NULL, kind, rmass, age_yr[i], lt_cur, &out[i]);
            if (rc != HRT_OK && first == HRT_OK)
                trail_set_error(ecur, rc, "age %g yr: %s", age_yr[i], hrt_strerror(rc));
        } else {
            trail_state_clear(&out[i], mass_msun[i], zi, age_yr[i]);
            out[i].status = rc;
            out[i].route = cur->route;
        }
        if (rc != HRT_OK && first == HRT_OK) {
            first = rc;
            trail_set_error(err, rc, "star %zu: %s", i, ecur->message);
        }
        qctx *tq = cur;
        cur = nxt;
        nxt = tq;
        hrt_error *te = ecur;
        ecur = enxt;
        enxt = te;
        rc_cur = rc_nxt;
        lt_cur = lt_nxt;
    }
    if (first == HRT_OK && err)
        trail_set_error(err, HRT_OK, NULL);
    return first;
}
