/*
 * Where a (mass, Z) sits in the grid: the one rule every query follows
 * (hrt_eval, hrt_star_new, hrt_isochrone, the range, route and boundary
 * queries of place.c, and through them the fit).  A metallicity or mass
 * within TRAIL_EDGE_REL_TOL (relative) outside an edge of the grid is taken
 * as on the edge, so that rounding in a caller's unit conversions does not
 * refuse a query; farther out it is refused.  Inline: every query runs it.
 * Included by core.h after the grid's types.
 */
#ifndef HRTRAIL_LIB_PLACE_H
#define HRTRAIL_LIB_PLACE_H

/* Where a metallicity sits in the grid (place.c). */
typedef struct trail_zplace {
    size_t g0;      /* left bracketing group, or the group of this Z when single */
    int single;     /* Z is one group's (within TRAIL_EDGE_REL_TOL): no interpolation in [Fe/H] */
    double feh;     /* [Fe/H] of the query */
    double t_feh;   /* fraction of the way from group g0 to g0 + 1 in [Fe/H] */
    double h_feh;   /* [Fe/H] step from group g0 to g0 + 1 */
    size_t g_near;  /* group nearest in [Fe/H]: phases and remnant kinds come from it */
} trail_zplace;

/* A metallicity or initial mass within this fraction outside an edge of the
 * grid is taken as on the edge (rounding of a caller's conversions); farther
 * out it is refused.  The same tolerance decides that a Z is a group's own. */
#define TRAIL_EDGE_REL_TOL 1e-12

/* Place a metallicity: HRT_E_DOMAIN, HRT_E_Z_RANGE or the groups it uses. */
static inline int trail_place_z(const hrt_grid *g, double z, trail_zplace *p, hrt_error *err)
{
    if (!isfinite(z) || z <= 0.0)
        return trail_set_error(err, HRT_E_DOMAIN, "metallicity Z = %g is not a positive finite number", z);
    size_t nz = g->n_z;
    double zlo = g->grp[0].z, zhi = g->grp[nz - 1].z;
    if (z < zlo * (1.0 - TRAIL_EDGE_REL_TOL) || z > zhi * (1.0 + TRAIL_EDGE_REL_TOL))
        return trail_set_error(err, HRT_E_Z_RANGE, "metallicity Z = %g is outside the grid's %g .. %g", z, zlo, zhi);
    /* The one group of this metallicity, or the two bracketing it. */
    size_t g0 = 0;
    p->single = 0;
    for (size_t k = 0; k < nz; k++) {
        if (fabs(z - g->grp[k].z) <= TRAIL_EDGE_REL_TOL * g->grp[k].z) {
            g0 = k;
            p->single = 1;
            break;
        }
        if (g->grp[k].z < z)
            g0 = k;
    }
    if (!p->single && g0 + 1 >= nz)
        g0 = nz - 2;
    p->g0 = g0;
    if (p->single) {
        p->feh = g->grp[g0].feh;
        p->t_feh = 0.0;
        p->h_feh = 1.0;
        p->g_near = g0;
    } else {
        p->feh = trail_log10(z / g->z_ref);
        p->h_feh = g->grp[g0 + 1].feh - g->grp[g0].feh;
        p->t_feh = (p->feh - g->grp[g0].feh) / p->h_feh;
        p->g_near = p->t_feh <= 0.5 ? g0 : g0 + 1;
    }
    return HRT_OK;
}


/* Last group a placed Z uses: g0, or g0 + 1 between groups. */
static inline size_t trail_place_last(const trail_zplace *p) { return p->single ? p->g0 : p->g0 + 1; }

/* Route-boundary mass b at a placed Z: linear in [Fe/H] between groups. */
static inline double trail_boundary_at(const hrt_grid *g, const trail_zplace *p, size_t b)
{
    double mb = g->grp[p->g0].boundary[b];
    if (!p->single)
        mb = (1.0 - p->t_feh) * mb + p->t_feh * g->grp[p->g0 + 1].boundary[b];
    return mb;
}

/* Route of an initial mass at a placed Z: above boundary b is route b + 1. */
static inline int trail_route_at(const hrt_grid *g, const trail_zplace *p, double mass)
{
    int route = 0;
    for (size_t b = 0; b + 1 < g->n_routes; b++)
        if (mass > trail_boundary_at(g, p, b))
            route = (int)b + 1;
    return route;
}

/* HRT_E_DOMAIN or HRT_E_MASS_RANGE unless every group a placed Z uses
 * covers the mass (within TRAIL_EDGE_REL_TOL). */
static inline int trail_check_mass(const hrt_grid *g, const trail_zplace *p, double mass, hrt_error *err)
{
    if (!isfinite(mass) || mass <= 0.0)
        return trail_set_error(err, HRT_E_DOMAIN, "initial mass %g Msun is not a positive finite number", mass);
    for (size_t k = p->g0; k <= trail_place_last(p); k++) {
        const zgroup *gp = &g->grp[k];
        double lo = gp->mass[0], hi = gp->mass[gp->n_mass - 1];
        if (mass < lo * (1.0 - TRAIL_EDGE_REL_TOL) || mass > hi * (1.0 + TRAIL_EDGE_REL_TOL))
            return trail_set_error(err, HRT_E_MASS_RANGE,
                                   "initial mass %g Msun is outside the grid's %g .. %g Msun at Z = %g", mass, lo, hi,
                                   gp->z);
    }
    return HRT_OK;
}

/* Initial masses every group a placed Z uses covers. */
static inline void trail_mass_span(const hrt_grid *g, const trail_zplace *p, double *lo, double *hi)
{
    *lo = 0.0;
    *hi = INFINITY;
    for (size_t k = p->g0; k <= trail_place_last(p); k++) {
        const zgroup *gp = &g->grp[k];
        if (gp->mass[0] > *lo)
            *lo = gp->mass[0];
        if (gp->mass[gp->n_mass - 1] < *hi)
            *hi = gp->mass[gp->n_mass - 1];
    }
}

#endif
