/*
 * The grid's ranges against what the queries accept, at every edge
 * (tests/consistency, see test_consistency.c): hrt_grid_z_range,
 * hrt_grid_mass_range, hrt_grid_boundary_at and hrt_grid_route_of against
 * hrt_eval, hrt_star_new and hrt_isochrone at 1, 2 and 4 ulps inside and
 * outside every edge.  The documented rule (include/hrtrail/core.h,
 * hrt_grid_mass_range): a value within 1e-12 (relative) outside an edge is
 * taken as on the edge, one farther out is refused; the checks use
 * EDGE_NEAR_REL (accepted) and EDGE_FAR_REL (refused).
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include "consistency.h"

#define EDGE_NEAR_REL 1e-13 /* relative, outside an edge: accepted */
#define EDGE_FAR_REL 1.01e-9 /* relative, outside an edge: refused */
#define N_RANDOM_Z 60
#define ISO_AGE_YR 1e9

static const int ulps[] = {1, 2, 4};
static const double ages[] = {1e6, 1e9};

/* x moved k ulps towards +inf (dir > 0) or -inf. */
static double ulps_from(double x, int k, int dir)
{
    for (int i = 0; i < k; i++)
        x = nextafter(x, dir > 0 ? INFINITY : -INFINITY);
    return x;
}

/* Positions around an edge e whose outside lies in direction out (+1 above, -1 below):
 * the edge, k ulps inside and outside, EDGE_NEAR_REL outside (all accepted), and EDGE_FAR_REL outside (refused). */
typedef struct edge_probe {
    double x;
    int accepted;
    const char *where;
} edge_probe;

static size_t probes_around(double e, int out, edge_probe *p)
{
    static const char *in_names[] = {"1 ulp inside", "2 ulps inside", "4 ulps inside"};
    static const char *out_names[] = {"1 ulp outside", "2 ulps outside", "4 ulps outside"};
    size_t n = 0;
    p[n++] = (edge_probe){e, 1, "on the edge"};
    for (int k = 0; k < 3; k++) {
        p[n++] = (edge_probe){ulps_from(e, ulps[k], -out), 1, in_names[k]};
        p[n++] = (edge_probe){ulps_from(e, ulps[k], out), 1, out_names[k]};
    }
    p[n++] = (edge_probe){e * (1.0 + out * EDGE_NEAR_REL), 1, "1e-13 outside"};
    p[n++] = (edge_probe){e * (1.0 + out * EDGE_FAR_REL), 0, "1.01e-9 outside"};
    return n;
}

static int takes_mass(int rc) { return rc == HRT_OK || rc == HRT_E_AGE_RANGE; }

/* ------------------------------------------------------------------ metallicity edges */

/* At an accepted Z: a mass range, stars, an isochrone with points. */
static void z_accepted(cs_run *R, double z, const char *where)
{
    double lo, hi, m, age = ISO_AGE_YR;
    int rc = hrt_grid_mass_range(R->g, z, &lo, &hi);
    cs_case(R);
    if (rc != HRT_OK) {
        cs_fail(R, "z=%.17g (%s): hrt_grid_mass_range %s", z, where, hrt_strerror(rc));
        return;
    }
    m = sqrt(lo * hi);
    hrt_state s;
    hrt_star *star = NULL;
    int re = hrt_eval(R->g, 1, &m, &z, 0.0, &age, &s, NULL), rs = hrt_star_new(R->g, m, z, &star, NULL), route = -1;
    int rr = hrt_grid_route_of(R->g, m, z, &route);
    hrt_star_free(star);
    size_t n = 0;
    int ri = hrt_isochrone(R->g, age, z, NULL, 0, &n, NULL);
    if (!takes_mass(re) || rs != HRT_OK || rr != HRT_OK || (ri != HRT_OK && ri != HRT_E_BUFFER) || n == 0)
        cs_fail(R, "z=%.17g (%s) mass=%.17g age=%.17g: accepted by hrt_grid_mass_range, but hrt_eval %s, hrt_star_new %s, "
                   "hrt_grid_route_of %s, hrt_isochrone %s with %zu points",
                z, where, m, age, hrt_strerror(re), hrt_strerror(rs), hrt_strerror(rr), hrt_strerror(ri), n);
}

/* At a refused Z: every function refuses with hrt_eval's code, HRT_E_Z_RANGE. */
static void z_refused(cs_run *R, double z, double m, const char *where)
{
    double lo, hi, age = ISO_AGE_YR, mb;
    hrt_state s;
    hrt_star *star = NULL;
    int route;
    size_t n = 0;
    int re = hrt_eval(R->g, 1, &m, &z, 0.0, &age, &s, NULL);
    int rm = hrt_grid_mass_range(R->g, z, &lo, &hi), rs = hrt_star_new(R->g, m, z, &star, NULL);
    int rr = hrt_grid_route_of(R->g, m, z, &route), ri = hrt_isochrone(R->g, age, z, NULL, 0, &n, NULL);
    int rb = hrt_grid_n_routes(R->g) > 1 ? hrt_grid_boundary_at(R->g, z, 0, &mb) : re;
    hrt_star_free(star);
    cs_case(R);
    if (re != HRT_E_Z_RANGE || rm != re || rs != re || rr != re || ri != re || rb != re)
        cs_fail(R, "z=%.17g (%s) mass=%.17g: hrt_eval %s, hrt_grid_mass_range %s, hrt_star_new %s, hrt_grid_route_of %s, "
                   "hrt_isochrone %s, hrt_grid_boundary_at %s (all should be %s)",
                z, where, m, hrt_strerror(re), hrt_strerror(rm), hrt_strerror(rs), hrt_strerror(rr), hrt_strerror(ri),
                hrt_strerror(rb), hrt_strerror(HRT_E_Z_RANGE));
}

static void z_edges(cs_run *R)
{
    double zr[2];
    hrt_grid_z_range(R->g, &zr[0], &zr[1]);
    for (int side = 0; side < 2; side++) {
        double lo, hi;
        hrt_grid_mass_range(R->g, zr[side], &lo, &hi);
        edge_probe p[16];
        size_t n = probes_around(zr[side], side ? 1 : -1, p);
        for (size_t i = 0; i < n; i++) {
            if (p[i].accepted)
                z_accepted(R, p[i].x, p[i].where);
            else
                z_refused(R, p[i].x, sqrt(lo * hi), p[i].where);
        }
    }
}

/* ------------------------------------------------------------------ mass edges */

/* One mass at one Z: accepted (by hrt_eval at every age, hrt_star_new and
 * hrt_grid_route_of, on one route) or refused (HRT_E_MASS_RANGE by all). */
static void mass_probe(cs_run *R, double z, const edge_probe *p, const char *edge)
{
    double m = p->x;
    hrt_star *star = NULL;
    int route = -1, rs = hrt_star_new(R->g, m, z, &star, NULL), rr = hrt_grid_route_of(R->g, m, z, &route);
    int star_route = star ? hrt_star_route(star) : -1;
    hrt_star_free(star);
    for (size_t k = 0; k < sizeof ages / sizeof ages[0]; k++) {
        hrt_state s;
        double a = ages[k];
        int re = hrt_eval(R->g, 1, &m, &z, 0.0, &a, &s, NULL);
        cs_case(R);
        int ok = p->accepted ? takes_mass(re) && rs == HRT_OK && rr == HRT_OK && s.route == route && star_route == route
                             : re == HRT_E_MASS_RANGE && rs == re && rr == re;
        if (!ok)
            cs_fail(R, "z=%.17g mass=%.17g age=%.17g (%s, %s; %s): hrt_eval %s (route %d), hrt_star_new %s (route %d), "
                       "hrt_grid_route_of %s (route %d)",
                    z, m, a, p->where, edge, p->accepted ? "should be accepted" : "should be refused", hrt_strerror(re),
                    s.route, hrt_strerror(rs), star_route, hrt_strerror(rr), route);
    }
}

static void mass_edges_at(cs_run *R, double z)
{
    double e[2];
    if (hrt_grid_mass_range(R->g, z, &e[0], &e[1]) != HRT_OK) {
        cs_fail(R, "z=%.17g: no mass range inside the grid's Z range", z);
        return;
    }
    for (int side = 0; side < 2; side++) {
        edge_probe p[16];
        size_t n = probes_around(e[side], side ? 1 : -1, p);
        for (size_t i = 0; i < n; i++)
            mass_probe(R, z, &p[i], side ? "upper mass edge" : "lower mass edge");
    }
}

/* ------------------------------------------------------------------ route boundaries */

/* Masses at and 1, 2, 4 ulps around each route boundary at z: the boundary
 * belongs to the route below, the next double to the one above; hrt_eval
 * and hrt_star_new accept them on the route hrt_grid_route_of names. */
static void boundaries_at(cs_run *R, double z)
{
    double lo, hi;
    hrt_grid_mass_range(R->g, z, &lo, &hi);
    for (size_t b = 0; b + 1 < hrt_grid_n_routes(R->g); b++) {
        double mb;
        int rc = hrt_grid_boundary_at(R->g, z, b, &mb);
        if (rc != HRT_OK || !(mb > lo && mb < hi)) {
            cs_case(R);
            if (rc != HRT_OK)
                cs_fail(R, "z=%.17g boundary=%zu: hrt_grid_boundary_at %s", z, b, hrt_strerror(rc));
            continue;
        }
        for (int k = -4; k <= 4; k++) {
            if (k != 0 && abs(k) != 1 && abs(k) != 2 && abs(k) != 4)
                continue;
            double m = ulps_from(mb, abs(k), k);
            int route = -1, expect = k <= 0 ? (int)b : (int)b + 1;
            hrt_grid_route_of(R->g, m, z, &route);
            edge_probe p = {m, 1, k == 0 ? "on a route boundary" : "ulps from a route boundary"};
            mass_probe(R, z, &p, "route boundary");
            cs_case(R);
            if (route != expect)
                cs_fail(R, "z=%.17g mass=%.17g (%d ulps from boundary %zu at %.17g): hrt_grid_route_of says route %d, not %d",
                        z, m, k, b, mb, route, expect);
        }
    }
}

void cs_check_edges(cs_run *R)
{
    cs_rng r = cs_rng_for(R->seed, 6);
    z_edges(R);
    double zlo, zhi;
    hrt_grid_z_range(R->g, &zlo, &zhi);
    for (size_t iz = 0; iz < hrt_grid_n_z(R->g) + N_RANDOM_Z; iz++) {
        double z = iz < hrt_grid_n_z(R->g) ? hrt_grid_z(R->g, iz) : cs_log_uniform(&r, zlo, zhi);
        mass_edges_at(R, z);
        boundaries_at(R, z);
    }
}
