/* Opening and closing grids; read-only accessors. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "core/core.h"

#ifndef HRT_DATADIR
#define HRT_DATADIR "/usr/local/share/hrtrail"
#endif
#define HRT_DEFAULT_GRID_FILE "hrtrail-default-grid.h5"

const char *hrt_default_grid_path(void)
{
    const char *env = getenv("HRTRAIL_GRID");
    if (env && *env)
        return env;
    return HRT_DATADIR "/" HRT_DEFAULT_GRID_FILE;
}

int hrt_grid_open_with(const char *path, int interp, hrt_grid **grid, hrt_error *err)
{
    if (!grid)
        return trail_set_error(err, HRT_E_NULL, "hrt_grid_open: grid pointer is NULL");
    *grid = NULL;
    if (interp < 0 || interp >= HRT_INTERP_COUNT)
        return trail_set_error(err, HRT_E_INVALID, "hrt_grid_open: unknown interpolation type %d", interp);
    int missing_code = path ? HRT_E_IO : HRT_E_NOT_FOUND;
    if (!path)
        path = hrt_default_grid_path();
    hrt_grid *g = calloc(1, sizeof *g);
    if (!g)
        return trail_set_error(err, HRT_E_NOMEM, "hrt_grid_open: out of memory");
    g->interp = interp;
    trail_file f;
    int rc = trail_file_read_code(path, HRT_FORMAT_VERSION, missing_code, &f, err);
    if (rc == HRT_OK)
        rc = trail_grid_prepare(g, &f, err);
    if (rc == HRT_OK)
        rc = trail_extra_prepare(g, &f, err);
    trail_file_free(&f);
    if (rc == HRT_OK)
        rc = trail_errfield_read(path, g, err);
    if (rc != HRT_OK) {
        hrt_grid_close(g);
        return rc;
    }
    g->bytes += sizeof *g;
    *grid = g;
    if (err)
        trail_set_error(err, HRT_OK, NULL);
    return HRT_OK;
}

int hrt_grid_open(const char *path, hrt_grid **grid, hrt_error *err)
{
    return hrt_grid_open_with(path, HRT_INTERP_STEFFEN, grid, err);
}

void hrt_grid_close(hrt_grid *g)
{
    if (!g)
        return;
    trail_extra_free(g);
    trail_grid_free_contents(g);
    trail_errfield_free(g->errf);
    free(g);
}

int hrt_grid_interp(const hrt_grid *g) { return g ? g->interp : -1; }
size_t hrt_grid_n_z(const hrt_grid *g) { return g ? g->n_z : 0; }
double hrt_grid_z_ref(const hrt_grid *g) { return g ? g->z_ref : NAN; }
size_t hrt_grid_n_routes(const hrt_grid *g) { return g ? g->n_routes : 0; }
size_t hrt_grid_memory_bytes(const hrt_grid *g) { return g ? g->bytes : 0; }

double hrt_grid_z(const hrt_grid *g, size_t iz) { return (g && iz < g->n_z) ? g->grp[iz].z : NAN; }

size_t hrt_grid_n_masses(const hrt_grid *g, size_t iz) { return (g && iz < g->n_z) ? g->grp[iz].n_mass : 0; }

static const zgroup *group_track(const hrt_grid *g, size_t iz, size_t im)
{
    if (!g || iz >= g->n_z || im >= g->grp[iz].n_mass)
        return NULL;
    return &g->grp[iz];
}

double hrt_grid_mass(const hrt_grid *g, size_t iz, size_t im)
{
    const zgroup *gp = group_track(g, iz, im);
    return gp ? gp->mass[im] : NAN;
}

int hrt_grid_track_route(const hrt_grid *g, size_t iz, size_t im)
{
    const zgroup *gp = group_track(g, iz, im);
    return gp ? gp->route[im] : -1;
}

size_t hrt_grid_track_n_eep(const hrt_grid *g, size_t iz, size_t im)
{
    const zgroup *gp = group_track(g, iz, im);
    return gp ? (size_t)gp->n_eep[im] : 0;
}

const char *hrt_grid_route_name(const hrt_grid *g, size_t r)
{
    return (g && r < g->n_routes) ? g->routes[r].name : NULL;
}

size_t hrt_grid_route_n_eep(const hrt_grid *g, size_t r) { return (g && r < g->n_routes) ? g->routes[r].n_eep : 0; }

size_t hrt_grid_route_n_keypoints(const hrt_grid *g, size_t r)
{
    return (g && r < g->n_routes) ? g->routes[r].n_kp : 0;
}

const char *hrt_grid_keypoint_name(const hrt_grid *g, size_t r, size_t k)
{
    return (g && r < g->n_routes && k < g->routes[r].n_kp) ? g->routes[r].kp_names[k] : NULL;
}

long hrt_grid_keypoint_eep(const hrt_grid *g, size_t r, size_t k)
{
    return (g && r < g->n_routes && k < g->routes[r].n_kp) ? g->routes[r].kp_eep[k] : -1;
}

double hrt_grid_route_boundary(const hrt_grid *g, size_t iz, size_t b)
{
    /* b + 1 < n_routes would wrap for b = SIZE_MAX */
    return (g && iz < g->n_z && g->n_routes > 1 && b <= g->n_routes - 2) ? g->grp[iz].boundary[b] : NAN;
}

const char *hrt_grid_attribute(const hrt_grid *g, const char *name)
{
    if (!g || !name)
        return NULL;
    for (size_t a = 0; a < g->n_attrs; a++)
        if (strcmp(g->attrs[a].name, name) == 0)
            return g->attrs[a].value;
    return NULL;
}

