/* Isochrones: at one age and metallicity, for every route, the stars of
 * every initial mass the grid holds there: the masses whose interpolated
 * EEP age equals the age (one root per EEP, so fast phases get as many
 * points as the grid has EEPs), the ends of the route's mass zone, and
 * between neighbours of one phase as many masses as keep log L steps below
 * the options' limit (the lower main sequence, where no EEP is reached). */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "core/core.h"

/* Log age at EEP j of the star of log mass x on route r, from a context
 * whose groups and route are fixed (only the mass weights change).  Inside
 * a root's bracket no knot of any group lies strictly between its ends, so
 * an interior interval stays the same and only its weights are recomputed
 * (as trail_mass_ctx would). */
static double age_at_mass(qctx *q, int r, double x, int j)
{
    for (size_t k = q->zp.g0; k <= trail_place_last(&q->zp); k++) {
        mctx *m = &q->m[k];
        const double *lm = m->gp->logm;
        if (m->interior && x > lm[m->i] && x < lm[m->i + 1])
            trail_interval_weights(q->g, m, x);
        else
            trail_mass_ctx(q->g, &q->g->grp[k], r, x, m);
    }
    return trail_q_value(q, Q_AGE, j);
}

/* Root of age_at_mass(x) = lt in [xa, xb] where fa, fb (shifted by lt)
 * have opposite signs or fa == 0: Illinois regula falsi with bisection
 * safeguard, to 1e-13 in log mass. */
static double find_root(qctx *q, int r, int j, double lt, double xa, double fa, double xb, double fb)
{
    if (fa == 0.0)
        return xa;
    int side = 0;
    for (int it = 0; it < 100 && xb - xa > 1e-13; it++) {
        double x = (fa * xb - fb * xa) / (fa - fb);
        if (!(x > xa && x < xb))
            x = 0.5 * (xa + xb);
        double f = age_at_mass(q, r, x, j) - lt;
        if (f == 0.0)
            return x;
        if ((f < 0.0) == (fa < 0.0)) {
            xa = x;
            fa = f;
            if (side == -1)
                fb *= 0.5;
            side = -1;
        } else {
            xb = x;
            fb = f;
            if (side == 1)
                fa *= 0.5;
            side = 1;
        }
    }
    return fabs(fa) < fabs(fb) ? xa : xb;
}

/* Scratch of one isochrone: knots in log mass of a route's zone, log ages
 * at every EEP of each knot, EEPs each knot reaches, a query context. */
typedef struct iso_buf {
    double *knots, *ages;
    int *knot_n_eep;
    qctx *q;
    size_t cap_knots;
} iso_buf;

static void iso_buf_free(iso_buf *b)
{
    free(b->knots);
    free(b->ages);
    free(b->knot_n_eep);
    free(b->q);
}

static int iso_buf_alloc(const hrt_grid *g, iso_buf *b)
{
    b->cap_knots = 4;
    for (size_t iz = 0; iz < g->n_z; iz++)
        b->cap_knots += 2 * g->grp[iz].n_mass;
    b->knots = malloc(b->cap_knots * sizeof(double));
    b->ages = malloc(b->cap_knots * g->n_eep_max * sizeof(double));
    b->knot_n_eep = malloc(b->cap_knots * sizeof(int));
    b->q = malloc(sizeof *b->q);
    return b->knots && b->ages && b->knot_n_eep && b->q ? HRT_OK : HRT_E_NOMEM;
}

/* A route above a boundary starts this fraction above it: the boundary
 * mass itself belongs to the route below (trail_route_at). */
#define ROUTE_EDGE_STEP 1e-9

/* The initial masses of route r at a placed Z: [lo, hi) within the masses
 * the grid covers there, between its boundaries.  0 if empty. */
static int route_zone(const hrt_grid *g, const trail_zplace *zp, size_t r, double *lo, double *hi)
{
    trail_mass_span(g, zp, lo, hi);
    for (size_t b = 0; b + 1 < g->n_routes; b++) {
        double mb = trail_boundary_at(g, zp, b);
        if (b + 1 == r && mb > *lo)
            *lo = mb * (1.0 + ROUTE_EDGE_STEP);
        if (b == r && mb < *hi)
            *hi = mb;
    }
    return *lo < *hi;
}

/* Knots of the zone in log mass: its ends and every track of the route
 * inside it, in any group used, sorted and distinct. */
static size_t route_knots(const hrt_grid *g, const trail_zplace *zp, size_t r, double lo, double hi, double *knots)
{
    size_t nk = 0;
    knots[nk++] = trail_log10(lo);
    knots[nk++] = trail_log10(hi);
    for (size_t k = zp->g0; k <= trail_place_last(zp); k++) {
        const zgroup *gp = &g->grp[k];
        for (size_t i = gp->route_lo[r]; i < gp->route_hi[r]; i++)
            if (gp->mass[i] > lo && gp->mass[i] < hi)
                knots[nk++] = gp->logm[i];
    }
    qsort(knots, nk, sizeof *knots, trail_cmp_double);
    size_t u = 0;
    for (size_t k = 0; k < nk; k++)
        if (u == 0 || knots[k] > knots[u - 1])
            knots[u++] = knots[k];
    return u;
}

/* Log age at EEPs 0 .. n - 1 (n <= q->n_eep) into a[]: the numbers
 * trail_q_value(q, Q_AGE, j) gives (group_value and grid_age in eval.c), in
 * one pass over the contiguous age tables. */
static void q_ages(const qctx *q, int n, double *a)
{
    size_t J = q->g->n_eep_max;
    const mctx *m0 = &q->m[q->zp.g0];
    const double *p0 = m0->gp->age_interval + m0->i * J * 4, *w0 = m0->w_age;
    if (q->zp.single) {
        for (int j = 0; j < n; j++, p0 += 4)
            a[j] = w0[0] * p0[0] + w0[1] * p0[1] + w0[2] * p0[2] + w0[3] * p0[3];
        return;
    }
    const mctx *m1 = &q->m[q->zp.g0 + 1];
    const double *p1 = m1->gp->age_interval + m1->i * J * 4, *w1 = m1->w_age;
    double t = q->zp.t_feh;
    for (int j = 0; j < n; j++, p0 += 4, p1 += 4)
        a[j] = (1.0 - t) * (w0[0] * p0[0] + w0[1] * p0[1] + w0[2] * p0[2] + w0[3] * p0[3]) +
               t * (w1[0] * p1[0] + w1[1] * p1[1] + w1[2] * p1[2] + w1[3] * p1[3]);
}

/* Log age at every EEP of every knot; 0 if no knot is usable. */
static int knot_ages(const hrt_grid *g, double z, size_t r, size_t nk, iso_buf *b)
{
    size_t J = g->n_eep_max;
    int usable = 0;
    for (size_t k = 0; k < nk; k++) {
        b->knot_n_eep[k] = 0;
        if (trail_qctx_init(g, trail_exp10(b->knots[k]), z, b->q, NULL) != HRT_OK || b->q->route != (int)r)
            continue;
        b->knot_n_eep[k] = b->q->n_eep;
        q_ages(b->q, b->q->n_eep, b->ages + k * J);
        usable = 1;
    }
    return usable;
}

/* A growing list of log masses. */
typedef struct mass_list {
    double *x;
    size_t n, cap;
} mass_list;

static int list_push(mass_list *l, double x)
{
    if (l->n == l->cap) {
        size_t nc = l->cap ? 2 * l->cap : 256;
        double *p = realloc(l->x, nc * sizeof *p);
        if (!p)
            return HRT_E_NOMEM;
        l->x = p;
        l->cap = nc;
    }
    l->x[l->n++] = x;
    return HRT_OK;
}

/* The log masses of the stars of route r between knots k and k + 1 whose
 * age at an EEP is age_yr (log lt): one root at each EEP both knots reach
 * where their ages lie either side of it.  The context at the interval's
 * middle is built at its first root and serves every EEP: find_root sets
 * the mass weights at each point it tries, and no knot lies strictly inside
 * the interval, so where the last root left the context changes no number. */
static int interval_roots(const hrt_grid *g, double z, double lt, size_t r, size_t k, iso_buf *b, mass_list *c)
{
    size_t J = g->n_eep_max, jn = g->routes[r].n_eep;
    if ((size_t)b->knot_n_eep[k] < jn)
        jn = (size_t)b->knot_n_eep[k];
    if ((size_t)b->knot_n_eep[k + 1] < jn)
        jn = (size_t)b->knot_n_eep[k + 1];
    const double *pa = b->ages + k * J, *pb = pa + J;
    int ctx = -1, rc = HRT_OK;
    for (size_t j = 0; j < jn && rc == HRT_OK; j++) {
        double fa = pa[j] - lt, fb = pb[j] - lt;
        if (!((fa <= 0.0 && fb > 0.0) || (fa >= 0.0 && fb < 0.0)))
            continue;
        if (ctx < 0)
            ctx = trail_qctx_init(g, trail_exp10(0.5 * (b->knots[k] + b->knots[k + 1])), z, b->q, NULL) == HRT_OK;
        if (!ctx)
            return HRT_OK;
        rc = list_push(c, find_root(b->q, (int)r, (int)j, lt, b->knots[k], fa, b->knots[k + 1], fb));
    }
    return rc;
}

/* x[0 .. n - 1] in ascending order, as qsort with trail_cmp_double sorts
 * finite values (glibc's is a stable merge sort too), without its calls of
 * the comparison: tmp holds n values; qsort itself if tmp is NULL. */
static void sort_doubles(double *x, size_t n, double *tmp)
{
    if (!tmp) {
        qsort(x, n, sizeof *x, trail_cmp_double);
        return;
    }
    for (size_t w = 1; w < n; w *= 2) {
        for (size_t lo = 0; lo < n; lo += 2 * w) {
            size_t mid = lo + w < n ? lo + w : n, hi = lo + 2 * w < n ? lo + 2 * w : n;
            size_t i = lo, j = mid, k = lo;
            while (i < mid && j < hi)
                tmp[k++] = x[j] < x[i] ? x[j++] : x[i++];
            while (i < mid)
                tmp[k++] = x[i++];
            while (j < hi)
                tmp[k++] = x[j++];
        }
        memcpy(x, tmp, n * sizeof *x);
    }
}

/* The isochrone of one route being written: where points go, what to keep. */
typedef struct iso_out {
    const hrt_grid *g;
    double z, age_yr;
    int route;
    const hrt_isochrone_options *o;
    hrt_state *out;
    size_t cap, count;
} iso_out;

/* The state at log mass x, and whether the isochrone keeps it: evaluated
 * without error on this route, modelled, of a phase the options include. */
static int iso_keep(const iso_out *io, const hrt_state *st)
{
    return st->status == HRT_OK && st->route == io->route && !(st->flags & HRT_FLAG_NOT_MODELLED) &&
           st->phase >= 0 && st->phase < HRT_PHASE_SLOTS && (io->o->phases & HRT_PHASE_BIT(st->phase));
}

static int iso_state(const iso_out *io, double x, hrt_state *st)
{
    double m = trail_exp10(x);
    hrt_eval(io->g, 1, &m, NULL, io->z, &io->age_yr, st, NULL);
    return iso_keep(io, st);
}

/* The states of every candidate in one hrt_eval call (the same states as
 * one call per candidate); NULL if out of memory, and the caller evaluates
 * them one at a time. */
static hrt_state *candidate_states(const iso_out *io, const mass_list *c)
{
    hrt_state *st = malloc(c->n * sizeof *st);
    double *m = malloc(2 * c->n * sizeof *m);
    if (!st || !m) {
        free(st);
        free(m);
        return NULL;
    }
    double *age = m + c->n;
    for (size_t i = 0; i < c->n; i++) {
        m[i] = trail_exp10(c->x[i]);
        age[i] = io->age_yr;
    }
    hrt_eval(io->g, c->n, m, NULL, io->z, age, st, NULL);
    free(m);
    return st;
}

static void iso_emit(iso_out *io, const hrt_state *st)
{
    if (io->count < io->cap)
        io->out[io->count] = *st;
    io->count++;
}

/* Points strictly between two kept neighbours of one luminous phase whose
 * log L differ by more than the options allow: bisection in log mass, to a
 * depth of MAX_REFINE halvings. */
#define MAX_REFINE 24
static void refine(iso_out *io, double x0, const hrt_state *s0, double x1, const hrt_state *s1, int depth)
{
    if (depth >= MAX_REFINE || s0->phase != s1->phase || !(fabs(s1->log_l_lsun - s0->log_l_lsun) > io->o->max_dlog_l))
        return;
    double xm = 0.5 * (x0 + x1);
    hrt_state sm;
    if (!iso_state(io, xm, &sm))
        return;
    refine(io, x0, s0, xm, &sm, depth + 1);
    iso_emit(io, &sm);
    refine(io, xm, &sm, x1, s1, depth + 1);
}

/* Between a kept and a refused mass (the start of the modelled main
 * sequence at young ages, the last star alive, a phase left out): the kept
 * mass nearest the edge, by bisection to MAX_REFINE halvings.  x_in is
 * kept (state s_in), x_out refused; 1 and *x, *st if one closer is found. */
static int edge_point(const iso_out *io, double x_in, double x_out, double *x, hrt_state *st)
{
    int found = 0;
    for (int it = 0; it < MAX_REFINE; it++) {
        double xm = 0.5 * (x_in + x_out);
        hrt_state sm;
        if (iso_state(io, xm, &sm)) {
            x_in = xm;
            *st = sm;
            found = 1;
        } else {
            x_out = xm;
        }
    }
    *x = x_in;
    return found;
}

/* One route: the ends of its zone and every EEP root, in mass order; the
 * kept mass nearest each edge between kept and refused candidates; and
 * between kept neighbours what refine() adds. */
static void route_points(iso_out *io, const mass_list *c)
{
    hrt_state prev, st, edge;
    double xprev = 0.0, xe;
    int have = 0, prev_kept = 0;
    hrt_state *cs = c->n ? candidate_states(io, c) : NULL;
    for (size_t i = 0; i < c->n; i++) {
        int kept;
        if (cs) {
            st = cs[i];
            kept = iso_keep(io, &st);
        } else {
            kept = iso_state(io, c->x[i], &st);
        }
        if (kept && !prev_kept && i > 0 && edge_point(io, c->x[i], c->x[i - 1], &xe, &edge)) {
            iso_emit(io, &edge);
            prev = edge;
            xprev = xe;
            have = 1;
        }
        if (!kept && prev_kept && edge_point(io, xprev, c->x[i], &xe, &edge)) {
            refine(io, xprev, &prev, xe, &edge, 0);
            iso_emit(io, &edge);
        }
        if (kept) {
            if (have)
                refine(io, xprev, &prev, c->x[i], &st, 0);
            iso_emit(io, &st);
            prev = st;
            xprev = c->x[i];
        }
        have = prev_kept = kept;
    }
    free(cs);
}

/* Candidate log masses of route r: its zone's ends and the root at every
 * EEP, sorted and distinct. */
static int route_candidates(const hrt_grid *g, const trail_zplace *zp, double z, double age_yr, size_t r, iso_buf *b,
                            mass_list *c)
{
    c->n = 0;
    double lo, hi;
    if (!route_zone(g, zp, r, &lo, &hi))
        return HRT_OK;
    size_t nk = route_knots(g, zp, r, lo, hi, b->knots);
    if (!knot_ages(g, z, r, nk, b))
        return HRT_OK;
    double lt = trail_log10(age_yr);
    /* the zone's ends, taken a rounding inside it (10^log10(m) can land an
     * ulp beyond m, on the next route), and the route's tracks inside it:
     * kept masses from which edge_point() and refine() find the rest even
     * where every EEP root falls on the wrong side of an edge by rounding */
    double x_lo = b->knots[0], x_hi = b->knots[nk - 1];
    while (trail_exp10(x_lo) < lo)
        x_lo = nextafter(x_lo, INFINITY);
    while (trail_exp10(x_hi) > hi)
        x_hi = nextafter(x_hi, -INFINITY);
    int rc = list_push(c, x_lo);
    if (rc == HRT_OK)
        rc = list_push(c, x_hi);
    for (size_t k = 1; k + 1 < nk && rc == HRT_OK; k++)
        rc = list_push(c, b->knots[k]);
    for (size_t k = 0; k + 1 < nk && rc == HRT_OK; k++)
        rc = interval_roots(g, z, lt, r, k, b, c);
    if (rc != HRT_OK)
        return rc;
    double *tmp = malloc(c->n * sizeof *tmp + 1);
    sort_doubles(c->x, c->n, tmp);
    free(tmp);
    size_t u = 0;
    for (size_t k = 0; k < c->n; k++)
        if (u == 0 || c->x[k] > c->x[u - 1])
            c->x[u++] = c->x[k];
    c->n = u;
    return HRT_OK;
}

void hrt_isochrone_options_default(hrt_isochrone_options *o)
{
    if (!o)
        return;
    memset(o, 0, sizeof *o);
    for (size_t i = 0; i < HRT_PHASE_N; i++)
        o->phases |= HRT_PHASE_BIT(hrt_phase_code(i));
    o->phases &= ~(HRT_PHASE_BIT(HRT_PHASE_UNKNOWN) | HRT_PHASES_REMNANT);
    o->max_dlog_l = HRT_ISOCHRONE_MAX_DLOG_L;
}

int hrt_isochrone_with(const hrt_grid *g, double age_yr, double z, const hrt_isochrone_options *opt,
                       hrt_state *out, size_t cap, size_t *n_out, hrt_error *err)
{
    if (!g || !n_out || (cap > 0 && !out))
        return trail_set_error(err, HRT_E_NULL, "hrt_isochrone: %s is NULL", !g ? "grid" : !n_out ? "n" : "out");
    *n_out = 0;
    if (!isfinite(age_yr) || age_yr <= 0.0)
        return trail_set_error(err, HRT_E_DOMAIN, "hrt_isochrone: age %g yr is not positive and finite", age_yr);
    hrt_isochrone_options o;
    if (opt)
        o = *opt;
    else
        hrt_isochrone_options_default(&o);
    if (!(o.max_dlog_l > 0.0 && isfinite(o.max_dlog_l)))
        return trail_set_error(err, HRT_E_DOMAIN, "hrt_isochrone: max_dlog_l = %g is not a positive finite step",
                               o.max_dlog_l);
    trail_zplace zp = {0};
    int rc = trail_place_z(g, z, &zp, err);
    if (rc != HRT_OK)
        return rc;
    iso_buf b = {0};
    mass_list c = {0};
    rc = iso_buf_alloc(g, &b);
    iso_out io = {g, z, age_yr, 0, &o, out, cap, 0};
    for (size_t r = 0; r < g->n_routes && rc == HRT_OK; r++) {
        rc = route_candidates(g, &zp, z, age_yr, r, &b, &c);
        io.route = (int)r;
        if (rc == HRT_OK)
            route_points(&io, &c);
    }
    iso_buf_free(&b);
    free(c.x);
    if (rc != HRT_OK)
        return trail_set_error(err, rc, "hrt_isochrone: out of memory");
    *n_out = io.count;
    if (io.count > cap)
        return trail_set_error(err, HRT_E_BUFFER, "hrt_isochrone: %zu points, buffer holds %zu", io.count, cap);
    if (err)
        trail_set_error(err, HRT_OK, NULL);
    return HRT_OK;
}

int hrt_isochrone(const hrt_grid *g, double age_yr, double z, hrt_state *out, size_t cap, size_t *n_out,
                  hrt_error *err)
{
    return hrt_isochrone_with(g, age_yr, z, NULL, out, cap, n_out, err);
}
