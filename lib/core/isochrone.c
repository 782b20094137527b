/* Isochrones: at one age and metallicity, for every route and EEP, the
 * initial masses whose interpolated EEP age equals the age. */
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
        mctx *m = &q->m[k - q->g_lo];
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
        for (int j = 0; j < b->q->n_eep; j++)
            b->ages[k * J + (size_t)j] = trail_q_value(b->q, Q_AGE, j);
        usable = 1;
    }
    return usable;
}

/* The star of route r at EEP j between knots k and k + 1 whose age is
 * age_yr, if there is one: 1 and its state in *st. */
static int root_state(const hrt_grid *g, double z, double age_yr, size_t r, size_t j, size_t k, iso_buf *b,
                      hrt_state *st)
{
    size_t J = g->n_eep_max;
    double lt = trail_log10(age_yr);
    if ((size_t)b->knot_n_eep[k] <= j || (size_t)b->knot_n_eep[k + 1] <= j)
        return 0;
    double fa = b->ages[k * J + j] - lt, fb = b->ages[(k + 1) * J + j] - lt;
    if (!((fa <= 0.0 && fb > 0.0) || (fa >= 0.0 && fb < 0.0)))
        return 0;
    if (trail_qctx_init(g, trail_exp10(0.5 * (b->knots[k] + b->knots[k + 1])), z, b->q, NULL) != HRT_OK)
        return 0;
    double x = find_root(b->q, (int)r, (int)j, lt, b->knots[k], fa, b->knots[k + 1], fb);
    double m = trail_exp10(x);
    hrt_eval(g, 1, &m, NULL, z, &age_yr, st, NULL);
    return st->status == HRT_OK && st->route == (int)r && !(st->flags & (HRT_FLAG_NOT_MODELLED | HRT_FLAG_REMNANT));
}

int hrt_isochrone(const hrt_grid *g, double age_yr, double z, hrt_state *out, size_t cap, size_t *n_out,
                  hrt_error *err)
{
    if (!g || !n_out || (cap > 0 && !out))
        return trail_set_error(err, HRT_E_NULL, "hrt_isochrone: %s is NULL", !g ? "grid" : !n_out ? "n" : "out");
    *n_out = 0;
    if (!isfinite(age_yr) || age_yr <= 0.0)
        return trail_set_error(err, HRT_E_DOMAIN, "hrt_isochrone: age %g yr is not positive and finite", age_yr);
    trail_zplace zp = {0};
    int rc = trail_place_z(g, z, &zp, err);
    if (rc != HRT_OK)
        return rc;
    iso_buf b = {0};
    if (iso_buf_alloc(g, &b) != HRT_OK) {
        iso_buf_free(&b);
        return trail_set_error(err, HRT_E_NOMEM, "hrt_isochrone: out of memory");
    }
    size_t count = 0;
    for (size_t r = 0; r < g->n_routes; r++) {
        double lo, hi;
        if (!route_zone(g, &zp, r, &lo, &hi))
            continue;
        size_t nk = route_knots(g, &zp, r, lo, hi, b.knots);
        if (!knot_ages(g, z, r, nk, &b))
            continue;
        /* along the isochrone: EEP by EEP, and within an EEP by mass */
        for (size_t j = 0; j < g->routes[r].n_eep; j++)
            for (size_t k = 0; k + 1 < nk; k++) {
                hrt_state st;
                if (!root_state(g, z, age_yr, r, j, k, &b, &st))
                    continue;
                if (count < cap)
                    out[count] = st;
                count++;
            }
    }
    iso_buf_free(&b);
    *n_out = count;
    if (count > cap)
        return trail_set_error(err, HRT_E_BUFFER, "hrt_isochrone: %zu points, buffer holds %zu", count, cap);
    return HRT_OK;
}
