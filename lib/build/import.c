/* Importing text tracks: the import object, its settings and route
 * layouts, the files to read, the per-track report, and the notes and
 * problems the other parts record in it.  The parts are listed in
 * build/import.h; conventions and criteria: tracks/FORMAT.md, "Importing
 * text tracks". */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "build/build.h"
#include "build/import.h"
#include "util/util.h"

/* Reference metallicity of a new import (the solar Z of the default grid). */
#define DEFAULT_Z_REF 0.014
/* Track files the list first has room for; it doubles as needed. */
#define FIRST_TRACKS 64

/* Route candidates are bits of an unsigned. */
_Static_assert(TRAIL_MAX_ROUTES <= 32, "a route bit mask holds every route");

static void free_routes(hrt_import *imp)
{
    for (size_t r = 0; r < imp->n_routes; r++) {
        route_layout *L = &imp->routes[r];
        free(L->name);
        if (L->kp_names)
            for (size_t k = 0; k < L->n_kp; k++)
                free(L->kp_names[k]);
        free(L->kp_names);
        free(imp->segment_samples[r]);
        free(imp->keypoint_names[r]);
        memset(L, 0, sizeof *L);
        imp->segment_samples[r] = NULL;
        imp->keypoint_names[r] = NULL;
    }
    imp->n_routes = 0;
}

/* Copy n layouts into imp (names owned by imp). */
static int store_routes(hrt_import *imp, size_t n, const hrt_route_spec *routes, hrt_error *err)
{
    free_routes(imp);
    for (size_t r = 0; r < n; r++) {
        const hrt_route_spec *s = &routes[r];
        route_layout *L = &imp->routes[r];
        size_t nkp = s->n_keypoints;
        imp->n_routes = r + 1;
        L->name = trail_strdup(s->name);
        L->n_kp = nkp;
        L->kp_names = calloc(nkp, sizeof(char *));
        imp->segment_samples[r] = malloc(nkp * sizeof(int));
        imp->keypoint_names[r] = calloc(nkp, sizeof(char *));
        if (!L->name || !L->kp_names || !imp->segment_samples[r] || !imp->keypoint_names[r])
            return trail_set_error(err, HRT_E_NOMEM, "out of memory");
        for (size_t k = 0; k < nkp; k++) {
            if (!(L->kp_names[k] = trail_strdup(s->keypoint_names[k])))
                return trail_set_error(err, HRT_E_NOMEM, "out of memory");
            imp->keypoint_names[r][k] = L->kp_names[k];
            if (k + 1 < nkp)
                imp->segment_samples[r][k] = s->segment_samples[k];
        }
        imp->spec[r] = (hrt_route_spec){L->name, nkp, imp->keypoint_names[r], imp->segment_samples[r]};
    }
    return HRT_OK;
}

/* The default layout (hrt_default_route), with or without its leading
 * pre-main-sequence segment (birthline to zams). */
static int default_layout(hrt_import *imp, int pre_ms, hrt_error *err)
{
    hrt_route_spec routes[TRAIL_MAX_ROUTES];
    const char *names[TRAIL_MAX_ROUTES][HRT_IMPORT_MAX_KP];
    size_t n = 0;
    while (n < TRAIL_MAX_ROUTES && hrt_default_route(n, &routes[n], names[n]) == HRT_OK) {
        if (!pre_ms && routes[n].n_keypoints > 2 && !strcmp(routes[n].keypoint_names[0], "birthline")) {
            routes[n].keypoint_names++;
            routes[n].segment_samples++;
            routes[n].n_keypoints--;
        }
        n++;
    }
    return store_routes(imp, n, routes, err);
}

int hrt_import_new(hrt_import **out, hrt_error *err)
{
    if (!out)
        return trail_set_error(err, HRT_E_NULL, "hrt_import_new: import is NULL");
    *out = NULL;
    hrt_import *imp = calloc(1, sizeof *imp);
    if (!imp)
        return trail_set_error(err, HRT_E_NOMEM, "out of memory");
    imp->z_ref = DEFAULT_Z_REF;
    /* imported tracks start at the ZAMS unless the caller says otherwise
     * (hrt_import_set_pre_ms, hrt_import_set_routes) */
    int rc = default_layout(imp, 0, err);
    if (rc != HRT_OK) {
        hrt_import_free(imp);
        return rc;
    }
    *out = imp;
    return trail_set_error(err, HRT_OK, NULL);
}

int hrt_import_set_pre_ms(hrt_import *imp, int on, hrt_error *err)
{
    if (!imp)
        return trail_set_error(err, HRT_E_NULL, "hrt_import_set_pre_ms: import is NULL");
    int rc = default_layout(imp, on != 0, err);
    return rc == HRT_OK ? trail_set_error(err, HRT_OK, NULL) : rc;
}

void trail_import_free_data(trail_import_track *t)
{
    free(t->age_yr);
    free(t->log_l);
    free(t->log_teff);
    free(t->log_r);
    free(t->mass);
    free(t->central_x);
    free(t->central_y);
    free(t->he_core);
    free(t->co_core);
    free(t->phase);
    if (t->flag)
        for (size_t i = 0; i < t->n; i++)
            free(t->flag[i]);
    free(t->flag);
    free(t->pos);
    free(t->x);
    t->x = NULL;
    t->age_yr = t->log_l = t->log_teff = t->log_r = t->mass = t->central_x = t->central_y = t->he_core = t->co_core =
        NULL;
    t->phase = NULL;
    t->flag = NULL;
    t->pos = NULL;
    t->n = 0;
}

void hrt_import_free(hrt_import *imp)
{
    if (!imp)
        return;
    for (int q = 0; q < TRAIL_MAP_N; q++)
        free(imp->map[q].column);
    free(imp->pattern);
    free_routes(imp);
    for (size_t i = 0; i < imp->n_tracks; i++) {
        trail_import_track *t = &imp->t[i];
        trail_import_free_data(t);
        free(t->path);
        for (size_t k = 0; k < t->n_dropped; k++)
            free(t->dropped[k].message);
        free(t->dropped);
    }
    free(imp->t);
    free(imp);
}

int hrt_import_set_routes(hrt_import *imp, size_t n, const hrt_route_spec *routes, hrt_error *err)
{
    if (!imp || !routes)
        return trail_set_error(err, HRT_E_NULL, "hrt_import_set_routes: NULL argument");
    if (n < 1 || n > TRAIL_MAX_ROUTES)
        return trail_set_error(err, HRT_E_INVALID, "hrt_import_set_routes: %zu routes (1..%d)", n, TRAIL_MAX_ROUTES);
    for (size_t r = 0; r < n; r++) {
        const hrt_route_spec *s = &routes[r];
        if (!s->name || !s->keypoint_names || !s->segment_samples || s->n_keypoints < TRAIL_MIN_KEYPOINTS ||
            s->n_keypoints > HRT_IMPORT_MAX_KP)
            return trail_set_error(err, HRT_E_INVALID, "route %zu: needs a name, %d..%d keypoints and segment counts",
                                   r, TRAIL_MIN_KEYPOINTS, HRT_IMPORT_MAX_KP);
        for (size_t k = 0; k < s->n_keypoints; k++)
            if (!s->keypoint_names[k] || !*s->keypoint_names[k])
                return trail_set_error(err, HRT_E_INVALID, "route '%s': keypoint %zu has no name", s->name, k);
        for (size_t k = 0; k + 1 < s->n_keypoints; k++)
            if (s->segment_samples[k] < 1 || s->segment_samples[k] > TRAIL_MAX_SEGMENT_EEP)
                return trail_set_error(err, HRT_E_INVALID, "route '%s': segment %zu has %d EEPs (1..%d)", s->name, k,
                                       s->segment_samples[k], TRAIL_MAX_SEGMENT_EEP);
    }
    int rc = store_routes(imp, n, routes, err);
    return rc == HRT_OK ? trail_set_error(err, HRT_OK, NULL) : rc;
}

int hrt_import_set_z_ref(hrt_import *imp, double z_ref, hrt_error *err)
{
    if (!imp)
        return trail_set_error(err, HRT_E_NULL, "hrt_import_set_z_ref: import is NULL");
    if (!(isfinite(z_ref) && z_ref > 0.0 && z_ref < 1.0))
        return trail_set_error(err, HRT_E_DOMAIN, "Z_ref = %g is not in (0, 1)", z_ref);
    imp->z_ref = z_ref;
    return trail_set_error(err, HRT_OK, NULL);
}

int hrt_import_set_lenient(hrt_import *imp, int on)
{
    if (!imp)
        return HRT_E_NULL;
    imp->lenient = on != 0;
    return HRT_OK;
}

int hrt_import_set_force(hrt_import *imp, int on)
{
    if (!imp)
        return HRT_E_NULL;
    imp->force = on != 0;
    return HRT_OK;
}

/* The masses of a route-boundary setting: finite, positive, non-decreasing. */
static int check_bounds(size_t n, const double *m, hrt_error *err)
{
    if (n + 1 > TRAIL_MAX_ROUTES)
        return trail_set_error(err, HRT_E_INVALID, "hrt_import_set_route_boundaries: %zu boundaries, at most %d",
                               n, TRAIL_MAX_ROUTES - 1);
    for (size_t k = 0; k < n; k++)
        if (!(isfinite(m[k]) && m[k] > 0.0) || (k > 0 && m[k] < m[k - 1]))
            return trail_set_error(err, HRT_E_DOMAIN, "route boundary %zu: %g Msun is not finite, positive and at "
                                   "least the one before", k, m[k]);
    return HRT_OK;
}

int hrt_import_set_route_boundaries(hrt_import *imp, double z, size_t n, const double *mass_msun, hrt_error *err)
{
    if (!imp || (!mass_msun && n > 0))
        return trail_set_error(err, HRT_E_NULL, "hrt_import_set_route_boundaries: NULL argument");
    if (!isnan(z) && !(isfinite(z) && z > 0.0 && z < 1.0))
        return trail_set_error(err, HRT_E_DOMAIN, "route boundaries: Z = %g is not in (0, 1) (NaN: every Z)", z);
    int rc = check_bounds(n, mass_msun, err);
    if (rc != HRT_OK)
        return rc;
    size_t i = 0;
    while (i < imp->n_user_bounds && !(isnan(z) ? isnan(imp->user_bounds[i].z) : imp->user_bounds[i].z == z))
        i++;
    if (i == imp->n_user_bounds) {
        if (i == sizeof imp->user_bounds / sizeof imp->user_bounds[0])
            return trail_set_error(err, HRT_E_INVALID, "route boundaries for more than %d metallicities",
                                   TRAIL_MAX_Z);
        imp->n_user_bounds++;
    }
    trail_user_bounds *u = &imp->user_bounds[i];
    u->z = z;
    u->n = n;
    for (size_t k = 0; k < n; k++)
        u->mass_msun[k] = mass_msun[k];
    return trail_set_error(err, HRT_OK, NULL);
}

int hrt_import_set_progress(hrt_import *imp, void (*progress)(void *, size_t, size_t, const char *), void *user)
{
    if (!imp)
        return HRT_E_NULL;
    imp->progress = progress;
    imp->progress_user = user;
    return HRT_OK;
}

int hrt_import_add_file(hrt_import *imp, const char *path, double z, hrt_error *err)
{
    if (!imp || !path)
        return trail_set_error(err, HRT_E_NULL, "hrt_import_add_file: NULL argument");
    if (!isnan(z) && !(isfinite(z) && z > 0.0 && z < 1.0))
        return trail_set_error(err, HRT_E_DOMAIN, "%s: Z = %g is not in (0, 1)", path, z);
    if (imp->n_tracks == imp->cap) {
        size_t cap = imp->cap ? 2 * imp->cap : FIRST_TRACKS;
        trail_import_track *t = realloc(imp->t, cap * sizeof *t);
        if (!t)
            return trail_set_error(err, HRT_E_NOMEM, "out of memory");
        imp->t = t;
        imp->cap = cap;
    }
    trail_import_track *t = &imp->t[imp->n_tracks];
    memset(t, 0, sizeof *t);
    if (!(t->path = trail_strdup(path)))
        return trail_set_error(err, HRT_E_NOMEM, "out of memory");
    t->z_given = z;
    t->report.file = t->path;
    t->report.initial_mass_msun = NAN;
    t->report.z = NAN;
    t->report.route = -1;
    t->report.remnant_mass_msun = NAN;
    imp->n_tracks++;
    return trail_set_error(err, HRT_OK, NULL);
}

/* ---- notes and problems of a track ----------------------------------------- */

int trail_import_problem(trail_import_track *t, int code, long line, long column, hrt_error *err, const char *fmt, ...)
{
    char msg[256];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    t->report.status = code;
    t->report.line = line;
    t->report.column = column;
    if (line > 0)
        snprintf(t->report.message, sizeof t->report.message, "%.120s:%ld:%ld: %.170s", t->path, line, column, msg);
    else
        snprintf(t->report.message, sizeof t->report.message, "%.120s: %.190s", t->path, msg);
    if (err && err->code == HRT_OK)
        trail_set_error(err, code, "%s", t->report.message);
    return code;
}

int trail_import_drop_row(trail_import_track *t, int code, long line, long column, const char *msg)
{
    t->report.n_rows_dropped++;
    if (t->n_dropped == TRAIL_MAX_DROPPED_LISTED)
        return 0;
    if (t->n_dropped == t->cap_dropped) {
        size_t cap = t->cap_dropped ? 2 * t->cap_dropped : 16;
        trail_dropped_row *d = realloc(t->dropped, cap * sizeof *d);
        if (!d)
            return -1;
        t->dropped = d;
        t->cap_dropped = cap;
    }
    char text[sizeof ((hrt_import_row_report *)0)->message];
    snprintf(text, sizeof text, "%.120s:%ld:%ld: %.180s", t->path, line, column, msg);
    char *m = trail_strdup(text);
    if (!m)
        return -1;
    t->dropped[t->n_dropped++] = (trail_dropped_row){line, column, code, m};
    return 0;
}

void trail_import_note(trail_import_track *t, const char *fmt, ...)
{
    char *notes = t->report.notes;
    size_t n = strlen(notes);
    if (n + 4 >= sizeof t->report.notes) /* no room for "; " and a word */
        return;
    if (n)
        notes[n++] = ';', notes[n++] = ' ', notes[n] = '\0';
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(notes + n, sizeof t->report.notes - n, fmt, ap);
    va_end(ap);
}

int trail_import_drop(const hrt_import *imp, trail_import_track *t, int code, hrt_error *err, const char *why)
{
    snprintf(t->report.message, sizeof t->report.message, "%.120s: %.190s", t->path, why);
    t->report.status = code;
    if (!imp->lenient && code != HRT_E_NO_TRACK) {
        if (err && err->code == HRT_OK)
            trail_set_error(err, code, "%s", t->report.message);
        return code;
    }
    return HRT_OK;
}

/* ---- the report ------------------------------------------------------------ */

size_t hrt_import_n_tracks(const hrt_import *imp) { return imp ? imp->n_tracks : 0; }

int hrt_import_track(const hrt_import *imp, size_t i, hrt_import_track_report *out)
{
    if (!imp || !out)
        return HRT_E_NULL;
    if (i >= imp->n_tracks)
        return HRT_E_INVALID;
    *out = imp->t[i].report;
    return HRT_OK;
}

int hrt_import_dropped_row(const hrt_import *imp, size_t i, size_t k, hrt_import_row_report *out)
{
    if (!imp || !out)
        return HRT_E_NULL;
    if (i >= imp->n_tracks || k >= imp->t[i].n_dropped)
        return HRT_E_INVALID;
    const trail_dropped_row *d = &imp->t[i].dropped[k];
    out->line = d->line;
    out->column = d->column;
    out->code = d->code;
    snprintf(out->message, sizeof out->message, "%s", d->message);
    return HRT_OK;
}

size_t hrt_import_n_routes(const hrt_import *imp) { return imp ? imp->n_routes : 0; }

const char *hrt_import_route_name(const hrt_import *imp, size_t r)
{
    return imp && r < imp->n_routes ? imp->routes[r].name : NULL;
}

size_t hrt_import_route_n_keypoints(const hrt_import *imp, size_t r)
{
    return imp && r < imp->n_routes ? imp->routes[r].n_kp : 0;
}

const char *hrt_import_keypoint_name(const hrt_import *imp, size_t r, size_t k)
{
    return imp && r < imp->n_routes && k < imp->routes[r].n_kp ? imp->routes[r].kp_names[k] : NULL;
}

size_t hrt_import_n_z(const hrt_import *imp) { return imp && imp->ran ? imp->n_z : 0; }

double hrt_import_z(const hrt_import *imp, size_t iz)
{
    return imp && imp->ran && iz < imp->n_z ? imp->z[iz] : NAN;
}

double hrt_import_route_boundary(const hrt_import *imp, size_t iz, size_t b)
{
    /* b < n_routes - 1, written so that no index wraps (b = SIZE_MAX, n_routes = 0) */
    return imp && imp->ran && iz < imp->n_z && b < imp->n_routes && b + 1 < imp->n_routes ? imp->boundary[iz][b]
                                                                                           : NAN;
}
