/* The dense sweep of log age across mass: tests/age_sweep.h. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include "age_sweep.h"
#include "core/core.h"

void age_sweep_init(age_sweep *r)
{
    *r = (age_sweep){0};
    r->min_gap = INFINITY;
    r->min_rel_gap = INFINITY;
}

static double urand(unsigned long long *s)
{
    *s ^= *s << 13;
    *s ^= *s >> 7;
    *s ^= *s << 17;
    return (double)(*s >> 11) * (1.0 / 9007199254740992.0);
}

/* Log age at EEP j of the star in context q (group k, a grid Z): the
 * library's own sum, or with raw the type's unblended slopes of the same
 * interval and the same weights. */
static double log_age(const qctx *q, size_t k, int j, int raw)
{
    if (!raw)
        return trail_q_value(q, Q_AGE, j);
    const mctx *m = &q->m[k];
    const double *p = trail_knot(m->gp, (size_t)j, m->i, Q_AGE), *w = m->w_age;
    return w[0] * p[0] + w[1] * p[1] + w[2] * p[2 * NQ] + w[3] * p[2 * NQ + 1];
}

static void fail(age_sweep *r, const char *what, size_t iz, double m, int j, double a, double b)
{
    if (!r->first[0])
        snprintf(r->first, sizeof r->first, "%s: group %zu, %.17g Msun, EEP %d: log age %.17g, %.17g", what, iz, m, j,
                 a, b);
}

/* One star of group iz (route r) at mass m: its ages in order. */
static void star(const hrt_grid *g, size_t iz, int route, double m, int raw, age_sweep *r)
{
    qctx q;
    hrt_error err;
    const zgroup *gp = &g->grp[iz];
    if (trail_qctx_init(g, m, gp->z, &q, &err) != HRT_OK || q.route != route || !q.zp.single || q.zp.g0 != iz) {
        r->bad_place++;
        fail(r, "placement", iz, m, -1, NAN, NAN);
        return;
    }
    r->stars++;
    const double *ai = gp->age_interval + q.m[iz].i * g->n_eep_max * 4;
    double prev = log_age(&q, iz, 0, raw);
    for (int j = 1; j < q.n_eep; j++) {
        double a = log_age(&q, iz, j, raw), gap = a - prev;
        double s0 = ai[4 * j] - ai[4 * j - 4], s1 = ai[4 * j + 2] - ai[4 * j - 2];
        r->pairs++;
        if (!(gap > 0.0)) {
            r->bad_order++;
            fail(r, "not increasing", iz, m, j, prev, a);
        }
        if (gap < r->min_gap)
            r->min_gap = gap;
        if (q.m[iz].interior && gap / (s0 < s1 ? s0 : s1) < r->min_rel_gap)
            r->min_rel_gap = gap / (s0 < s1 ? s0 : s1);
        prev = a;
    }
}

/* Track k of group iz at its own mass: the track's own log ages, exactly. */
static void knot(const hrt_grid *g, size_t iz, size_t k, age_sweep *r)
{
    qctx q;
    hrt_error err;
    const zgroup *gp = &g->grp[iz];
    double m = gp->mass[k];
    star(g, iz, gp->route[k], m, 0, r);
    if (trail_qctx_init(g, m, gp->z, &q, &err) != HRT_OK)
        return; /* counted by star() */
    r->knots++;
    if (q.n_eep != gp->n_eep[k]) {
        r->bad_knot++;
        fail(r, "EEPs at a knot", iz, m, q.n_eep, gp->n_eep[k], NAN);
    }
    for (int j = 0; j < gp->n_eep[k] && j < q.n_eep; j++) {
        double a = trail_q_value(&q, Q_AGE, j), own = trail_knot(gp, (size_t)j, k, Q_AGE)[0];
        r->knot_eeps++;
        if (a != own) {
            r->bad_knot++;
            fail(r, "knot", iz, m, j, a, own);
        }
    }
}

void age_sweep_grid(const hrt_grid *g, size_t per_interval, int raw, unsigned long long *seed, age_sweep *r)
{
    static const double near[] = {1e-15, 1e-14, 1e-13, 1e-12};
    for (size_t iz = 0; iz < g->n_z; iz++) {
        const zgroup *gp = &g->grp[iz];
        for (size_t k = 0; k < gp->n_mass && !raw; k++)
            knot(g, iz, k, r);
        for (size_t i = 0; i + 1 < gp->n_mass; i++) {
            int route = gp->route[i];
            if (gp->route[i + 1] != route)
                continue;
            r->intervals++;
            double m0 = gp->mass[i], m1 = gp->mass[i + 1], x0 = gp->logm[i], h = gp->logm[i + 1] - x0;
            star(g, iz, route, nextafter(m0, INFINITY), raw, r);
            star(g, iz, route, nextafter(m1, 0.0), raw, r);
            for (size_t e = 0; e < sizeof near / sizeof near[0]; e++) {
                star(g, iz, route, m0 * (1.0 + near[e]), raw, r);
                star(g, iz, route, m1 * (1.0 - near[e]), raw, r);
            }
            for (size_t n = 0; n < per_interval; n++) {
                double x = x0 + h * ((double)n + urand(seed)) / (double)per_interval;
                star(g, iz, route, pow(10.0, x), raw, r);
            }
        }
    }
}
