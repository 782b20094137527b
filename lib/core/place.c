/* The public range, route and boundary queries, through the placement rule
 * of place.h. */
#include <math.h>

#include "core/core.h"

/* ---- the public range and route queries ---------------------------------- */

int hrt_grid_z_range(const hrt_grid *g, double *lo, double *hi)
{
    if (!g || !lo || !hi)
        return HRT_E_NULL;
    *lo = g->grp[0].z;
    *hi = g->grp[g->n_z - 1].z;
    return HRT_OK;
}

int hrt_grid_mass_range(const hrt_grid *g, double z, double *lo_msun, double *hi_msun)
{
    if (!g || !lo_msun || !hi_msun)
        return HRT_E_NULL;
    trail_zplace p = {0};
    int rc = trail_place_z(g, z, &p, NULL);
    if (rc != HRT_OK)
        return rc;
    trail_mass_span(g, &p, lo_msun, hi_msun);
    return HRT_OK;
}

int hrt_grid_route_of(const hrt_grid *g, double mass_msun, double z, int *route)
{
    if (!g || !route)
        return HRT_E_NULL;
    trail_zplace p = {0};
    int rc = trail_place_z(g, z, &p, NULL);
    if (rc == HRT_OK)
        rc = trail_check_mass(g, &p, mass_msun, NULL);
    if (rc != HRT_OK)
        return rc;
    *route = trail_route_at(g, &p, mass_msun);
    return HRT_OK;
}

int hrt_grid_boundary_at(const hrt_grid *g, double z, size_t b, double *mass_msun)
{
    if (!g || !mass_msun)
        return HRT_E_NULL;
    if (g->n_routes < 2 || b > g->n_routes - 2)
        return HRT_E_INVALID;
    trail_zplace p = {0};
    int rc = trail_place_z(g, z, &p, NULL);
    if (rc != HRT_OK)
        return rc;
    *mass_msun = trail_boundary_at(g, &p, b);
    return HRT_OK;
}

/* The message of a bracketing group that cannot place the mass. */
int trail_no_track(const qctx *q, size_t k, hrt_error *err)
{
    const hrt_grid *g = q->g;
    const mctx *m = &q->m[k];
    if (isfinite(m->extrap_limit))
        return trail_set_error(err, HRT_E_NO_TRACK,
                               "%g Msun lies %.3g dex from the nearest track of route '%s' at Z = %g (%g Msun); "
                               "extrapolation reaches %.3g dex there",
                               q->mass, fabs(m->extrap_dex), g->routes[q->route].name, g->grp[k].z,
                               g->grp[k].mass[m->near], m->extrap_limit);
    return trail_set_error(err, HRT_E_NO_TRACK, "no track of route '%s' at Z = %g to interpolate %g Msun",
                           g->routes[q->route].name, g->grp[k].z, q->mass);
}
