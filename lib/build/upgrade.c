/* Converting a grid file of an older format version to the current one:
 * the file is read as it is (trail_file_read accepts every version this
 * library knows), its codes and names already mapped to today's, and
 * written again through the builder, which checks it as any new grid. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "util/schema.h"
#include "util/util.h"

static int builder_of(const trail_file *f, hrt_builder **b, hrt_error *err)
{
    hrt_route_spec spec[TRAIL_MAX_ROUTES];
    /* every route's segment EEP counts, one row of n_eep_max + 1 per route */
    int *seg = malloc((f->n_eep_max + 1) * f->n_routes * sizeof *seg);
    if (!seg)
        return trail_set_error(err, HRT_E_NOMEM, "hrt_grid_upgrade: out of memory");
    for (size_t r = 0; r < f->n_routes; r++) {
        const route_layout *L = &f->routes[r];
        int *route_seg = seg + r * (f->n_eep_max + 1);
        for (size_t k = 0; k + 1 < L->n_kp; k++)
            route_seg[k] = (int)(L->kp_eep[k + 1] - L->kp_eep[k]);
        spec[r] = (hrt_route_spec){L->name, L->n_kp, (const char *const *)L->kp_names, route_seg};
    }
    int rc = hrt_builder_new(f->n_routes, spec, f->z_ref, b, err);
    free(seg);
    return rc;
}

static int add_group(hrt_builder *b, const trail_file *f, const trail_file_group *gp, hrt_error *err)
{
    size_t J = f->n_eep_max;
    int *phase = malloc(J * sizeof *phase);
    if (!phase)
        return trail_set_error(err, HRT_E_NOMEM, "hrt_grid_upgrade: out of memory");
    int rc = HRT_OK;
    for (size_t i = 0; i < gp->n_mass && rc == HRT_OK; i++) {
        size_t n = (size_t)gp->n_eep[i], o = i * J;
        for (size_t j = 0; j < n; j++)
            phase[j] = gp->phase[o + j];
        hrt_track_data t = {
            .initial_mass_msun = gp->initial_mass[i],
            .route = gp->route[i],
            .remnant = gp->remnant[i],
            .remnant_mass_msun = gp->remnant_mass[i],
            .n = n,
            .log_age_yr = gp->q[TRAIL_F_LOG_AGE] + o,
            .log_l_lsun = gp->q[TRAIL_F_LOG_L] + o,
            .log_teff_k = gp->q[TRAIL_F_LOG_TEFF] + o,
            .log_r_rsun = gp->q[TRAIL_F_LOG_R] + o,
            .mass_msun = gp->q[TRAIL_F_MASS] + o,
            .he_core_mass_msun = gp->q[TRAIL_F_HE_CORE] + o,
            .co_core_mass_msun = gp->q[TRAIL_F_CO_CORE] + o,
            .phase = phase,
        };
        rc = hrt_builder_add_eep_track(b, gp->z, &t, err);
    }
    free(phase);
    if (rc == HRT_OK && f->n_routes > 1)
        rc = hrt_builder_set_route_boundaries(b, gp->z, gp->boundary, err);
    return rc;
}

static int copy_attributes(hrt_builder *b, const trail_file *f, hrt_error *err)
{
    int rc = HRT_OK;
    for (size_t a = 0; a < f->n_attrs && rc == HRT_OK; a++)
        if (strcmp(f->attrs[a].name, "format") != 0)
            rc = hrt_builder_set_attribute(b, f->attrs[a].name, f->attrs[a].value, err);
    char note[96];
    snprintf(note, sizeof note, "format_version %d file converted by hrtrail %s", f->version, HRT_VERSION_STRING);
    if (rc == HRT_OK)
        rc = hrt_builder_set_attribute(b, "converted_from", note, err);
    return rc;
}

int hrt_grid_upgrade(const char *old_path, const char *new_path, hrt_error *err)
{
    if (!old_path || !new_path)
        return trail_set_error(err, HRT_E_NULL, "hrt_grid_upgrade: %s path is NULL", !old_path ? "old" : "new");
    trail_file f;
    int rc = trail_file_read(old_path, TRAIL_FORMAT_OLDEST, &f, err);
    if (rc != HRT_OK)
        return rc;
    hrt_builder *b = NULL;
    rc = builder_of(&f, &b, err);
    for (size_t iz = 0; iz < f.n_z && rc == HRT_OK; iz++)
        rc = add_group(b, &f, &f.grp[iz], err);
    if (rc == HRT_OK)
        rc = copy_attributes(b, &f, err);
    if (rc == HRT_OK)
        rc = hrt_builder_write(b, new_path, err);
    hrt_builder_free(b);
    trail_file_free(&f);
    if (rc == HRT_OK)
        trail_set_error(err, HRT_OK, NULL);
    return rc;
}
