/* The run of an import (hrt_import_run): every file read, keypoints and
 * routes, routes settled per metallicity, tracks resampled onto EEPs by the
 * grid builder, route boundaries, and the grid written. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "build/build.h"
#include "build/import.h"
#include "util/util.h"

/* 1. Read every file (all of them, so that the report lists every problem). */
static int read_all(hrt_import *imp, hrt_error *err)
{
    int fatal = HRT_OK;
    for (size_t i = 0; i < imp->n_tracks; i++) {
        trail_import_track *t = &imp->t[i];
        int rc = trail_import_read(imp, t, err);
        if (rc != HRT_OK) {
            trail_import_free_data(t);
            if (rc == HRT_E_NOMEM || !imp->lenient)
                fatal = fatal ? fatal : rc;
        }
        if (imp->progress)
            imp->progress(imp->progress_user, i + 1, imp->n_tracks, t->path);
    }
    return fatal;
}

static int cmp_mass_idx(const void *a, const void *b, const trail_import_track *t)
{
    double x = t[*(const size_t *)a].report.initial_mass_msun, y = t[*(const size_t *)b].report.initial_mass_msun;
    return (x > y) - (x < y);
}

/* Indices of the usable tracks of group z, sorted by mass (insertion sort: few hundred tracks). */
static size_t group_tracks(const hrt_import *imp, double z, size_t *idx)
{
    size_t n = 0;
    for (size_t i = 0; i < imp->n_tracks; i++) {
        const trail_import_track *t = &imp->t[i];
        if (t->report.status != HRT_OK || t->report.z != z)
            continue;
        size_t j = n++;
        idx[j] = i;
        while (j > 0 && cmp_mass_idx(&idx[j - 1], &idx[j], imp->t) > 0) {
            size_t x = idx[j];
            idx[j] = idx[j - 1];
            idx[j - 1] = x;
            j--;
        }
    }
    return n;
}

/* The metallicities of the usable tracks, increasing, into imp->z. */
static int collect_z(hrt_import *imp, hrt_error *err)
{
    imp->n_z = 0;
    for (size_t i = 0; i < imp->n_tracks; i++) {
        const trail_import_track *t = &imp->t[i];
        if (t->report.status != HRT_OK)
            continue;
        size_t g = 0;
        while (g < imp->n_z && imp->z[g] != t->report.z)
            g++;
        if (g < imp->n_z)
            continue;
        if (imp->n_z == TRAIL_MAX_Z)
            return trail_set_error(err, HRT_E_INVALID, "more than %d metallicities", TRAIL_MAX_Z);
        size_t j = imp->n_z++;
        while (j > 0 && imp->z[j - 1] > t->report.z) {
            imp->z[j] = imp->z[j - 1];
            j--;
        }
        imp->z[j] = t->report.z;
    }
    return HRT_OK;
}

/* 3. Per metallicity: routes of tracks that stop early from their
 * neighbours, then routes in order of mass.  idx: room for every track. */
static int settle_groups(hrt_import *imp, size_t *idx, hrt_error *err)
{
    int fatal = collect_z(imp, err);
    for (size_t g = 0; g < imp->n_z && !fatal; g++) {
        size_t n = group_tracks(imp, imp->z[g], idx);
        trail_import_settle_routes(imp, idx, n);
        fatal = trail_import_check_order(imp, idx, n, imp->z[g], err);
    }
    return fatal;
}

/* 4. One track's report, remnant and phases, then its EEPs from the
 * builder; a track the builder refuses is dropped (strict mode: fatal). */
static int add_track(hrt_import *imp, hrt_builder *b, trail_import_track *t, size_t *used, hrt_error *err)
{
    trail_import_finish_track(imp, t);
    double *log_age = malloc(t->n * sizeof(double));
    if (!log_age)
        return trail_set_error(err, HRT_E_NOMEM, "out of memory");
    for (size_t s = 0; s < t->n; s++)
        log_age[s] = log10(t->age_yr[s]);
    size_t nk = t->kp.n_found;
    hrt_track_data d = {
        .initial_mass_msun = t->report.initial_mass_msun,
        .route = t->report.route,
        .remnant = t->report.remnant,
        .remnant_mass_msun = t->report.remnant_mass_msun,
        .n = t->kp.sample[nk - 1] + 1, /* the builder ignores samples after the last keypoint */
        .log_age_yr = log_age,
        .log_l_lsun = t->log_l,
        .log_teff_k = t->log_teff,
        .log_r_rsun = t->has_column[TRAIL_MAP_R] ? t->log_r : NULL,
        .mass_msun = t->mass,
        .he_core_mass_msun = t->he_core,
        .co_core_mass_msun = t->co_core,
        .phase = t->phase,
        .n_keypoints = nk,
        .keypoint_sample = t->kp.sample,
    };
    hrt_error e = {0, ""};
    const double *xcols[TRAIL_MAX_EXTRA];
    double *xbuf;
    int rc = trail_import_extra_columns(imp, t, d.n, xcols, &xbuf);
    if (rc != HRT_OK)
        snprintf(e.message, sizeof e.message, "out of memory");
    else if (imp->n_extra > 0)
        rc = hrt_builder_add_track_extra(b, t->report.z, &d, imp->n_extra, xcols, &e);
    else
        rc = hrt_builder_add_track(b, t->report.z, &d, &e);
    free(xbuf);
    free(log_age);
    int fatal = HRT_OK;
    if (rc == HRT_E_NOMEM)
        fatal = trail_set_error(err, rc, "%s", e.message);
    else if (rc != HRT_OK) {
        char why[300];
        snprintf(why, sizeof why, "EEP resampling refused the track: %s", e.message);
        if (trail_import_drop(imp, t, rc, err, why) != HRT_OK)
            fatal = rc;
    } else
        (*used)++;
    trail_import_free_data(t);
    return fatal;
}

/* 5. Route boundaries per metallicity, from the tracks in the grid (those
 * dropped in step 4 excluded; a metallicity left without tracks goes):
 * the user's or the rule's, and (unless forced) no route collapsed. */
static int boundaries(hrt_import *imp, hrt_builder *b, size_t *idx, hrt_error *err)
{
    size_t kept = 0;
    for (size_t g = 0; g < imp->n_z; g++)
        if (group_tracks(imp, imp->z[g], idx) > 0)
            imp->z[kept++] = imp->z[g];
    imp->n_z = kept;
    int fatal = trail_import_check_user_z(imp, err);
    for (size_t g = 0; g < imp->n_z && !fatal; g++) {
        size_t n = group_tracks(imp, imp->z[g], idx);
        fatal = trail_import_group_boundaries(imp, g, idx, n, err);
        if (!fatal && imp->n_routes > 1)
            fatal = hrt_builder_set_route_boundaries(b, imp->z[g], imp->boundary[g], err);
    }
    return fatal;
}

/* Steps 3 to 5 and the file: everything the builder does. */
static int build(hrt_import *imp, const char *out_path, size_t *idx, hrt_error *err)
{
    int fatal = settle_groups(imp, idx, err);
    hrt_builder *b = NULL;
    if (!fatal)
        fatal = hrt_builder_new(imp->n_routes, imp->spec, imp->z_ref, &b, err);
    if (!fatal)
        fatal = trail_import_declare_extras(imp, b, err);
    size_t used = 0;
    for (size_t i = 0; i < imp->n_tracks && !fatal; i++)
        if (imp->t[i].report.status == HRT_OK)
            fatal = add_track(imp, b, &imp->t[i], &used, err);
    if (!fatal && used == 0)
        fatal = trail_set_error(err, HRT_E_INVALID, "no usable track: every file was dropped (see the report)");
    if (!fatal)
        fatal = boundaries(imp, b, idx, err);
    if (!fatal) {
        /* its only failure is out of memory: the grid must not lose the attribute silently */
        fatal = hrt_builder_set_attribute(b, "source", "tracks imported from text tables by hrtrail import", err);
        if (!fatal && out_path)
            fatal = hrt_builder_write(b, out_path, err);
    }
    hrt_builder_free(b);
    return fatal;
}

int hrt_import_run(hrt_import *imp, const char *out_path, hrt_error *err)
{
    if (!imp)
        return trail_set_error(err, HRT_E_NULL, "hrt_import_run: import is NULL");
    hrt_error own = {0, ""};
    if (!err)
        err = &own;
    err->code = HRT_OK;
    err->message[0] = '\0';
    if (imp->ran)
        return trail_set_error(err, HRT_E_INVALID, "hrt_import_run: this import has already run");
    imp->ran = 1;
    if (imp->n_tracks == 0)
        return trail_set_error(err, HRT_E_INVALID, "no track files given");
    int fatal = read_all(imp, err);
    if (!fatal) /* 2. keypoints and routes */
        fatal = trail_import_routes(imp, err);
    if (fatal)
        return fatal;
    size_t *idx = malloc((imp->n_tracks + 1) * sizeof(size_t));
    if (!idx)
        return trail_set_error(err, HRT_E_NOMEM, "out of memory");
    fatal = build(imp, out_path, idx, err);
    free(idx);
    return fatal ? fatal : trail_set_error(err, HRT_OK, NULL);
}
