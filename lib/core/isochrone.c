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

int hrt_isochrone(const hrt_grid *g, double age_yr, double z, hrt_state *out, size_t cap, size_t *n_out,
                  hrt_error *err)
{
    if (!g || !n_out || (cap > 0 && !out))
        return trail_set_error(err, HRT_E_NULL, "hrt_isochrone: %s is NULL", !g ? "grid" : !n_out ? "n" : "out");
    *n_out = 0;
    if (!isfinite(age_yr) || age_yr <= 0.0)
        return trail_set_error(err, HRT_E_DOMAIN, "hrt_isochrone: age %g yr is not positive and finite", age_yr);
    trail_zplace zp = {0};
    double mlo, mhi;
    int rc = trail_place_z(g, z, &zp, err);
    if (rc != HRT_OK)
        return rc;
    trail_mass_span(g, &zp, &mlo, &mhi);
    double lt = trail_log10(age_yr);
    size_t maxk = 4;
    for (size_t iz = 0; iz < g->n_z; iz++)
        maxk += 2 * g->grp[iz].n_mass;
    double *knots = malloc(maxk * sizeof(double));
    double *ages = malloc(maxk * g->n_eep_max * sizeof(double));
    int *kne = malloc(maxk * sizeof(int));
    qctx *q = malloc(sizeof *q);
    if (!knots || !ages || !kne || !q) {
        free(knots);
        free(ages);
        free(kne);
        free(q);
        return trail_set_error(err, HRT_E_NOMEM, "hrt_isochrone: out of memory");
    }
    size_t count = 0;
    rc = HRT_OK;
    for (size_t r = 0; r < g->n_routes && rc == HRT_OK; r++) {
        /* The route's mass zone at this Z, and the knots inside it. */
        double lo = mlo, hi = mhi;
        size_t gb = trail_place_last(&zp);
        for (size_t b = 0; b + 1 < g->n_routes; b++) {
            double mb = trail_boundary_at(g, &zp, b);
            if (b + 1 == r && mb > lo)
                lo = mb * (1.0 + 1e-9);
            if (b == r && mb < hi)
                hi = mb;
        }
        if (!(lo < hi))
            continue;
        size_t nk = 0;
        knots[nk++] = trail_log10(lo);
        knots[nk++] = trail_log10(hi);
        for (size_t k = zp.g0; k <= gb; k++) {
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
        nk = u;
        /* Log age at every EEP of every knot. */
        size_t J = g->n_eep_max;
        int usable = 0;
        for (size_t k = 0; k < nk; k++) {
            kne[k] = 0;
            if (trail_qctx_init(g, trail_exp10(knots[k]), z, q, NULL) != HRT_OK || q->route != (int)r)
                continue;
            kne[k] = q->n_eep;
            for (int j = 0; j < q->n_eep; j++)
                ages[k * J + (size_t)j] = trail_q_value(q, Q_AGE, j);
            usable = 1;
        }
        if (!usable)
            continue;
        size_t JR = g->routes[r].n_eep;
        for (size_t j = 0; j < JR; j++) {
            for (size_t k = 0; k + 1 < nk; k++) {
                if ((size_t)kne[k] <= j || (size_t)kne[k + 1] <= j)
                    continue;
                double fa = ages[k * J + j] - lt, fb = ages[(k + 1) * J + j] - lt;
                if (!((fa <= 0.0 && fb > 0.0) || (fa >= 0.0 && fb < 0.0)))
                    continue;
                if (trail_qctx_init(g, trail_exp10(0.5 * (knots[k] + knots[k + 1])), z, q, NULL) != HRT_OK)
                    continue;
                double x = find_root(q, (int)r, (int)j, lt, knots[k], fa, knots[k + 1], fb);
                double m = trail_exp10(x);
                hrt_state st;
                hrt_eval(g, 1, &m, NULL, z, &age_yr, &st, NULL);
                if (st.status != HRT_OK || st.route != (int)r || (st.flags & (HRT_FLAG_NOT_MODELLED | HRT_FLAG_REMNANT)))
                    continue;
                if (count < cap)
                    out[count] = st;
                count++;
            }
        }
    }
    free(knots);
    free(ages);
    free(kne);
    free(q);
    *n_out = count;
    if (count > cap)
        return trail_set_error(err, HRT_E_BUFFER, "hrt_isochrone: %zu points, buffer holds %zu", count, cap);
    return HRT_OK;
}
