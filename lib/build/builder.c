/* Building grids: raw tracks resampled onto EEPs, then written atomically
 * in the tracks/FORMAT.md schema.  Used by the default-grid generator and by
 * track import. */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include <hdf5.h>

#include "util/schema.h"
#include "util/util.h"

/* The columns of a track are the file's per-EEP quantities (TRAIL_F_*). */
enum { C_AGE = TRAIL_F_LOG_AGE, C_R = TRAIL_F_LOG_R, C_MASS = TRAIL_F_MASS, NCOL = TRAIL_NF };
#define COL_NAME(c) (trail_schema_names.eep[c].v2)

typedef struct btrack {
    double mass, rem_mass;
    int route, remnant, n;
    double *col[NCOL];
    int *phase;
} btrack;

typedef struct bgroup {
    double z;
    size_t n, cap;
    btrack *t;
    int has_bound;
    double bound[TRAIL_MAX_ROUTES];
} bgroup;

struct hrt_builder {
    double z_ref;
    size_t n_routes;
    route_layout routes[TRAIL_MAX_ROUTES];
    size_t n_eep_max;
    size_t n_groups;
    bgroup *grp;
    size_t n_attrs;
    attr_pair *attrs;
};

static void free_track(btrack *t)
{
    for (int c = 0; c < NCOL; c++)
        free(t->col[c]);
    free(t->phase);
}

void hrt_builder_free(hrt_builder *b)
{
    if (!b)
        return;
    for (size_t r = 0; r < b->n_routes; r++) {
        route_layout *L = &b->routes[r];
        free(L->name);
        if (L->kp_names)
            for (size_t k = 0; k < L->n_kp; k++)
                free(L->kp_names[k]);
        free(L->kp_names);
        free(L->kp_eep);
    }
    for (size_t i = 0; i < b->n_groups; i++) {
        for (size_t k = 0; k < b->grp[i].n; k++)
            free_track(&b->grp[i].t[k]);
        free(b->grp[i].t);
    }
    free(b->grp);
    for (size_t a = 0; a < b->n_attrs; a++) {
        free(b->attrs[a].name);
        free(b->attrs[a].value);
    }
    free(b->attrs);
    free(b);
}

static int valid_name(const char *s)
{
    if (!s || !*s || strlen(s) > 200)
        return 0;
    for (const char *p = s; *p; p++)
        if (*p == '/' || *p == '.' || (unsigned char)*p < 0x20)
            return 0;
    return 1;
}

int hrt_builder_new(size_t n_routes, const hrt_route_spec *routes, double z_ref, hrt_builder **out,
                    hrt_error *err)
{
    if (!out || !routes)
        return trail_set_error(err, HRT_E_NULL, "hrt_builder_new: %s is NULL", !out ? "builder" : "routes");
    *out = NULL;
    if (n_routes < 1 || n_routes > TRAIL_MAX_ROUTES)
        return trail_set_error(err, HRT_E_INVALID, "hrt_builder_new: %zu routes, expected 1..%d", n_routes,
                             TRAIL_MAX_ROUTES);
    if (!(isfinite(z_ref) && z_ref > 0.0 && z_ref < 1.0))
        return trail_set_error(err, HRT_E_DOMAIN, "hrt_builder_new: z_ref = %g is not in (0, 1)", z_ref);
    hrt_builder *b = calloc(1, sizeof *b);
    if (!b)
        return trail_set_error(err, HRT_E_NOMEM, "hrt_builder_new: out of memory");
    b->z_ref = z_ref;
    int rc = HRT_OK;
    for (size_t r = 0; r < n_routes && rc == HRT_OK; r++) {
        const hrt_route_spec *sp = &routes[r];
        route_layout *L = &b->routes[r];
        b->n_routes = r + 1;
        if (!valid_name(sp->name) || sp->n_keypoints < 2 || !sp->keypoint_names || !sp->segment_samples) {
            rc = trail_set_error(err, HRT_E_INVALID,
                               "route %zu: needs a name without '/' or '.', at least 2 keypoints and their "
                               "segment sample counts", r);
            break;
        }
        for (size_t q = 0; q < r; q++)
            if (strcmp(b->routes[q].name, sp->name) == 0)
                rc = trail_set_error(err, HRT_E_INVALID, "route %zu: name '%s' used twice", r, sp->name);
        if (rc != HRT_OK)
            break;
        L->name = trail_strdup(sp->name);
        L->n_kp = sp->n_keypoints;
        L->kp_names = calloc(L->n_kp, sizeof(char *));
        L->kp_eep = malloc(L->n_kp * sizeof(long));
        if (!L->name || !L->kp_names || !L->kp_eep) {
            rc = trail_set_error(err, HRT_E_NOMEM, "hrt_builder_new: out of memory");
            break;
        }
        long e = 0;
        for (size_t k = 0; k < L->n_kp && rc == HRT_OK; k++) {
            if (!valid_name(sp->keypoint_names[k])) {
                rc = trail_set_error(err, HRT_E_INVALID, "route '%s': keypoint %zu has no usable name", sp->name, k);
                break;
            }
            L->kp_names[k] = trail_strdup(sp->keypoint_names[k]);
            if (!L->kp_names[k])
                rc = trail_set_error(err, HRT_E_NOMEM, "hrt_builder_new: out of memory");
            L->kp_eep[k] = e;
            if (k + 1 < L->n_kp) {
                int ns = sp->segment_samples[k];
                if (ns < 1 || ns > 100000)
                    rc = trail_set_error(err, HRT_E_INVALID, "route '%s': segment %zu has %d samples (1..100000)",
                                       sp->name, k, ns);
                e += ns;
            }
        }
        L->n_eep = (size_t)e + 1;
        if (L->n_eep > b->n_eep_max)
            b->n_eep_max = L->n_eep;
    }
    if (rc != HRT_OK) {
        hrt_builder_free(b);
        return rc;
    }
    *out = b;
    return HRT_OK;
}

static bgroup *find_group(hrt_builder *b, double z, int create)
{
    for (size_t i = 0; i < b->n_groups; i++)
        if (b->grp[i].z == z)
            return &b->grp[i];
    if (!create)
        return NULL;
    if (b->n_groups >= TRAIL_MAX_Z)
        return NULL;
    bgroup *g = realloc(b->grp, (b->n_groups + 1) * sizeof *g);
    if (!g)
        return NULL;
    b->grp = g;
    memset(&g[b->n_groups], 0, sizeof *g);
    g[b->n_groups].z = z;
    return &g[b->n_groups++];
}

static btrack *new_track(hrt_builder *b, double z, int n, hrt_error *err, int *rc)
{
    bgroup *g = find_group(b, z, 1);
    if (!g) {
        *rc = trail_set_error(err, b->n_groups >= TRAIL_MAX_Z ? HRT_E_INVALID : HRT_E_NOMEM,
                            "cannot add a metallicity group (at most %d)", TRAIL_MAX_Z);
        return NULL;
    }
    if (g->n == g->cap) {
        size_t cap = g->cap ? 2 * g->cap : 16;
        btrack *t = realloc(g->t, cap * sizeof *t);
        if (!t) {
            *rc = trail_set_error(err, HRT_E_NOMEM, "out of memory");
            return NULL;
        }
        g->t = t;
        g->cap = cap;
    }
    btrack *t = &g->t[g->n];
    memset(t, 0, sizeof *t);
    int ok = 1;
    for (int c = 0; c < NCOL; c++)
        ok &= (t->col[c] = malloc((size_t)n * sizeof(double))) != NULL;
    ok &= (t->phase = malloc((size_t)n * sizeof(int))) != NULL;
    if (!ok) {
        free_track(t);
        *rc = trail_set_error(err, HRT_E_NOMEM, "out of memory for a track of %d points", n);
        return NULL;
    }
    t->n = n;
    g->n++; /* committed; removed again by drop_last() on failure */
    return t;
}

static void drop_last(hrt_builder *b, double z)
{
    bgroup *g = find_group(b, z, 0);
    if (g && g->n > 0)
        free_track(&g->t[--g->n]);
}

/* Columns of a track, NULL log_r allowed. */
static int check_columns(const hrt_builder *b, double z, const hrt_track_data *t, int eep, hrt_error *err)
{
    if (!t)
        return trail_set_error(err, HRT_E_NULL, "track data is NULL");
    const char *who = eep ? "EEP track" : "track";
    if (!(isfinite(z) && z > 0.0 && z < 1.0))
        return trail_set_error(err, HRT_E_DOMAIN, "%s: Z = %g is not in (0, 1)", who, z);
    if (!(isfinite(t->initial_mass_msun) && t->initial_mass_msun > 0.0))
        return trail_set_error(err, HRT_E_DOMAIN, "%s: initial mass %g is not positive", who, t->initial_mass_msun);
    if (t->route < 0 || (size_t)t->route >= b->n_routes)
        return trail_set_error(err, HRT_E_INVALID, "%s %g Msun: route %d is not one of the builder's", who,
                             t->initial_mass_msun, t->route);
    if (t->remnant != HRT_REMNANT_NONE && hrt_remnant_from_key(hrt_remnant_key(t->remnant)) != t->remnant)
        return trail_set_error(err, HRT_E_INVALID, "%s %g Msun: remnant kind %d is unknown", who,
                             t->initial_mass_msun, t->remnant);
    if (t->remnant != HRT_REMNANT_NONE && !(isfinite(t->remnant_mass_msun) && t->remnant_mass_msun > 0.0))
        return trail_set_error(err, HRT_E_DOMAIN, "%s %g Msun: remnant mass %g is not positive", who,
                             t->initial_mass_msun, t->remnant_mass_msun);
    if (t->remnant != HRT_REMNANT_NONE && !(t->remnant_mass_msun <= TRAIL_MAX_MASS_FACTOR * t->initial_mass_msun))
        return trail_set_error(err, HRT_E_DOMAIN, "%s %g Msun: remnant mass %g exceeds %g times the initial mass", who,
                             t->initial_mass_msun, t->remnant_mass_msun, TRAIL_MAX_MASS_FACTOR);
    if (trail_remnant_is_wd(t->remnant) && !(t->remnant_mass_msun < TRAIL_WD_MASS_MAX_MSUN))
        return trail_set_error(err, HRT_E_DOMAIN, "%s %g Msun: a white dwarf of %g Msun is beyond the %g Msun of "
                             "the white dwarf mass-radius relation", who, t->initial_mass_msun, t->remnant_mass_msun,
                             TRAIL_WD_MASS_MAX_MSUN);
    if (t->n < 2 || t->n > 10000000)
        return trail_set_error(err, HRT_E_INVALID, "%s %g Msun: %zu points (at least 2)", who, t->initial_mass_msun,
                             t->n);
    const double *cols[NCOL] = {t->log_age_yr, t->log_l_lsun,        t->log_teff_k,    t->log_r_rsun,
                                t->mass_msun,  t->he_core_mass_msun, t->co_core_mass_msun};
    for (int c = 0; c < NCOL; c++) {
        if (!cols[c]) {
            if (c == C_R)
                continue;
            return trail_set_error(err, HRT_E_NULL, "%s %g Msun: column %s is NULL", who, t->initial_mass_msun,
                                 COL_NAME(c));
        }
        for (size_t i = 0; i < t->n; i++) {
            if (!isfinite(cols[c][i]))
                return trail_set_error(err, HRT_E_DOMAIN, "%s %g Msun: %s[%zu] = %g is not finite", who,
                                     t->initial_mass_msun, COL_NAME(c), i, cols[c][i]);
            if (c >= C_MASS && cols[c][i] < 0.0)
                return trail_set_error(err, HRT_E_DOMAIN, "%s %g Msun: %s[%zu] = %g is negative", who,
                                     t->initial_mass_msun, COL_NAME(c), i, cols[c][i]);
            /* the reader's plausibility bounds: what is written can be read */
            if (c >= C_MASS && !(cols[c][i] <= TRAIL_MAX_MASS_FACTOR * t->initial_mass_msun))
                return trail_set_error(err, HRT_E_DOMAIN, "%s %g Msun: %s[%zu] = %g Msun exceeds %g times the "
                                     "initial mass", who, t->initial_mass_msun, COL_NAME(c), i, cols[c][i],
                                     TRAIL_MAX_MASS_FACTOR);
            if (c < C_MASS && !(fabs(cols[c][i]) <= TRAIL_MAX_LOG_ABS))
                return trail_set_error(err, HRT_E_DOMAIN, "%s %g Msun: %s[%zu] = %g is not a plausible log10 value",
                                     who, t->initial_mass_msun, COL_NAME(c), i, cols[c][i]);
            if (c == C_AGE && i > 0 && !(cols[c][i] > cols[c][i - 1]))
                return trail_set_error(err, HRT_E_INVALID, "%s %g Msun: log_age[%zu] = %.17g does not exceed the "
                                     "previous point's %.17g", who, t->initial_mass_msun, i, cols[c][i],
                                     cols[c][i - 1]);
        }
    }
    if (!t->phase)
        return trail_set_error(err, HRT_E_NULL, "%s %g Msun: phase column is NULL", who, t->initial_mass_msun);
    for (size_t i = 0; i < t->n; i++)
        if (t->phase[i] == HRT_PHASE_UNKNOWN || hrt_phase_from_key(hrt_phase_key(t->phase[i])) != t->phase[i])
            return trail_set_error(err, HRT_E_INVALID, "%s %g Msun: phase[%zu] = %d is not a phase", who,
                                 t->initial_mass_msun, i, t->phase[i]);
    return HRT_OK;
}

/* A new track of n points in the group of z with t's identity, and t's
 * columns in the builder's order. */
static btrack *start_track(hrt_builder *b, double z, const hrt_track_data *t, int n, const double *cols[NCOL],
                           hrt_error *err, int *rc)
{
    btrack *bt = new_track(b, z, n, err, rc);
    if (!bt)
        return NULL;
    bt->mass = t->initial_mass_msun;
    bt->route = t->route;
    bt->remnant = t->remnant;
    bt->rem_mass = t->remnant != HRT_REMNANT_NONE ? t->remnant_mass_msun : NAN;
    const double *c[NCOL] = {t->log_age_yr, t->log_l_lsun,        t->log_teff_k,    t->log_r_rsun,
                             t->mass_msun,  t->he_core_mass_msun, t->co_core_mass_msun};
    memcpy(cols, c, sizeof c);
    return bt;
}

int hrt_builder_add_eep_track(hrt_builder *b, double z, const hrt_track_data *t, hrt_error *err)
{
    if (!b)
        return trail_set_error(err, HRT_E_NULL, "builder is NULL");
    int rc = check_columns(b, z, t, 1, err);
    if (rc != HRT_OK)
        return rc;
    const route_layout *L = &b->routes[t->route];
    if (t->n > L->n_eep)
        return trail_set_error(err, HRT_E_INVALID, "EEP track %g Msun: %zu EEPs, route '%s' has %zu",
                             t->initial_mass_msun, t->n, L->name, L->n_eep);
    if (t->n < L->n_eep && t->remnant != HRT_REMNANT_NONE)
        return trail_set_error(err, HRT_E_INVALID, "EEP track %g Msun: ends before the route's last EEP but names a "
                             "remnant", t->initial_mass_msun);
    const double *cols[NCOL];
    btrack *bt = start_track(b, z, t, (int)t->n, cols, err, &rc);
    if (!bt)
        return rc;
    for (size_t i = 0; i < t->n; i++) {
        for (int c = 0; c < NCOL; c++)
            bt->col[c][i] = cols[c] ? cols[c][i] : trail_log_r_from(t->log_l_lsun[i], t->log_teff_k[i]);
        bt->phase[i] = t->phase[i];
    }
    return HRT_OK;
}

int hrt_builder_add_track(hrt_builder *b, double z, const hrt_track_data *t, hrt_error *err)
{
    if (!b)
        return trail_set_error(err, HRT_E_NULL, "builder is NULL");
    int rc = check_columns(b, z, t, 0, err);
    if (rc != HRT_OK)
        return rc;
    const route_layout *L = &b->routes[t->route];
    size_t nk = t->n_keypoints;
    if (nk < 2 || nk > L->n_kp || !t->keypoint_sample)
        return trail_set_error(err, HRT_E_INVALID, "track %g Msun: %zu keypoints reached, route '%s' needs 2..%zu",
                             t->initial_mass_msun, nk, L->name, L->n_kp);
    for (size_t k = 0; k < nk; k++) {
        size_t s = t->keypoint_sample[k];
        if (s >= t->n || (k > 0 && s <= t->keypoint_sample[k - 1]))
            return trail_set_error(err, HRT_E_INVALID, "track %g Msun: keypoint '%s' at sample %zu is not after the "
                                 "previous keypoint and inside the %zu samples", t->initial_mass_msun,
                                 L->kp_names[k], s, t->n);
    }
    if (nk < L->n_kp && t->remnant != HRT_REMNANT_NONE)
        return trail_set_error(err, HRT_E_INVALID, "track %g Msun: stops at keypoint '%s' but names a remnant",
                             t->initial_mass_msun, L->kp_names[nk - 1]);
    int ne = (int)L->kp_eep[nk - 1] + 1;
    const double *cols[NCOL];
    btrack *bt = start_track(b, z, t, ne, cols, err, &rc);
    if (!bt)
        return rc;
    size_t maxseg = 0;
    for (size_t k = 0; k + 1 < nk; k++) {
        size_t len = t->keypoint_sample[k + 1] - t->keypoint_sample[k] + 1;
        if (len > maxseg)
            maxseg = len;
    }
    double *dist = malloc(maxseg * sizeof(double));
    if (!dist) {
        drop_last(b, z);
        return trail_set_error(err, HRT_E_NOMEM, "out of memory resampling a track");
    }
    int e = 0;
    for (size_t k = 0; k + 1 < nk; k++) {
        size_t sa = t->keypoint_sample[k], sb = t->keypoint_sample[k + 1];
        double ta = pow(10.0, t->log_age_yr[sa]), tb = pow(10.0, t->log_age_yr[sb]);
        /* Cumulative distance in the metric of tracks/FORMAT.md. */
        dist[0] = 0.0;
        double fprev = 0.0;
        for (size_t s = sa + 1; s <= sb; s++) {
            double f = (pow(10.0, t->log_age_yr[s]) - ta) / (tb - ta);
            double dT = HRT_EEP_WEIGHT_LOG_TEFF * (t->log_teff_k[s] - t->log_teff_k[s - 1]);
            double dL = HRT_EEP_WEIGHT_LOG_L * (t->log_l_lsun[s] - t->log_l_lsun[s - 1]);
            double dA = HRT_EEP_WEIGHT_AGE * (f - fprev);
            dist[s - sa] = dist[s - sa - 1] + sqrt(dT * dT + dL * dL + dA * dA);
            fprev = f;
        }
        double D = dist[sb - sa];
        int ns = (int)(L->kp_eep[k + 1] - L->kp_eep[k]);
        size_t s = 0; /* sample offset: dist[s] <= target < dist[s + 1] */
        for (int i = 0; i < ns; i++, e++) {
            double target = D * (double)i / (double)ns;
            while (s + 1 < sb - sa && dist[s + 1] <= target)
                s++;
            double span = dist[s + 1] - dist[s];
            double u = span > 0.0 ? (target - dist[s]) / span : 0.0;
            if (u < 0.0)
                u = 0.0;
            for (int c = 0; c < NCOL; c++) {
                const double *src = cols[c];
                double v0, v1;
                if (src) {
                    v0 = src[sa + s];
                    v1 = src[sa + s + 1];
                } else {
                    v0 = trail_log_r_from(t->log_l_lsun[sa + s], t->log_teff_k[sa + s]);
                    v1 = trail_log_r_from(t->log_l_lsun[sa + s + 1], t->log_teff_k[sa + s + 1]);
                }
                bt->col[c][e] = u == 0.0 ? v0 : v0 + u * (v1 - v0);
            }
            bt->phase[e] = t->phase[sa + s];
        }
    }
    size_t sl = t->keypoint_sample[nk - 1];
    for (int c = 0; c < NCOL; c++)
        bt->col[c][e] = cols[c] ? cols[c][sl] : trail_log_r_from(t->log_l_lsun[sl], t->log_teff_k[sl]);
    bt->phase[e] = t->phase[sl];
    free(dist);
    /* Equal distance steps can still give equal log ages where a segment has
     * two raw samples only and the rounding bites: keep them increasing. */
    for (int i = 1; i < ne; i++) {
        if (!(bt->col[C_AGE][i] > bt->col[C_AGE][i - 1])) {
            drop_last(b, z);
            return trail_set_error(err, HRT_E_INVALID, "track %g Msun: resampled log ages not increasing at EEP %d "
                                 "(raw samples too coarse for the segment's EEP count)", t->initial_mass_msun, i);
        }
    }
    return HRT_OK;
}

int hrt_builder_set_route_boundaries(hrt_builder *b, double z, const double *m, hrt_error *err)
{
    if (!b || !m)
        return trail_set_error(err, HRT_E_NULL, "hrt_builder_set_route_boundaries: NULL argument");
    for (size_t k = 0; k + 1 < b->n_routes; k++)
        if (!(isfinite(m[k]) && m[k] > 0.0) || (k > 0 && m[k] < m[k - 1]))
            return trail_set_error(err, HRT_E_DOMAIN, "route boundary %zu: %g Msun is not positive and "
                                 "non-decreasing", k, m[k]);
    bgroup *g = find_group(b, z, 1);
    if (!g)
        return trail_set_error(err, HRT_E_NOMEM, "cannot add a metallicity group");
    g->has_bound = 1;
    for (size_t k = 0; k + 1 < b->n_routes; k++)
        g->bound[k] = m[k];
    return HRT_OK;
}

int hrt_builder_set_attribute(hrt_builder *b, const char *name, const char *value, hrt_error *err)
{
    if (!b || !name || !value)
        return trail_set_error(err, HRT_E_NULL, "hrt_builder_set_attribute: NULL argument");
    static const char reserved[3][16] = {"format", "format_version", "z_ref"}; /* no pointers: .rodata */
    for (size_t k = 0; k < 3; k++)
        if (strcmp(name, reserved[k]) == 0)
            return trail_set_error(err, HRT_E_INVALID, "attribute '%s' is written by the library", name);
    if (!valid_name(name))
        return trail_set_error(err, HRT_E_INVALID, "attribute name '%s' is not usable", name);
    for (size_t a = 0; a < b->n_attrs; a++) {
        if (strcmp(b->attrs[a].name, name) == 0) {
            char *v = trail_strdup(value);
            if (!v)
                return trail_set_error(err, HRT_E_NOMEM, "out of memory");
            free(b->attrs[a].value);
            b->attrs[a].value = v;
            return HRT_OK;
        }
    }
    attr_pair *p = realloc(b->attrs, (b->n_attrs + 1) * sizeof *p);
    if (!p)
        return trail_set_error(err, HRT_E_NOMEM, "out of memory");
    b->attrs = p;
    p[b->n_attrs].name = trail_strdup(name);
    p[b->n_attrs].value = trail_strdup(value);
    if (!p[b->n_attrs].name || !p[b->n_attrs].value) {
        free(p[b->n_attrs].name);
        free(p[b->n_attrs].value);
        return trail_set_error(err, HRT_E_NOMEM, "out of memory");
    }
    b->n_attrs++;
    return HRT_OK;
}

/* ---- writing ---------------------------------------------------------- */

typedef struct wctx {
    hid_t dcpl, gcpl, str_t;
    int failed;
} wctx;

static void w_text_attr(wctx *w, hid_t loc, const char *name, const char *value)
{
    hid_t s = H5Screate(H5S_SCALAR);
    hid_t a = H5Acreate2(loc, name, w->str_t, s, H5P_DEFAULT, H5P_DEFAULT);
    if (a < 0 || H5Awrite(a, w->str_t, &value) < 0)
        w->failed = 1;
    if (a >= 0)
        H5Aclose(a);
    H5Sclose(s);
}

static void w_num_attr(wctx *w, hid_t loc, const char *name, hid_t type, const void *v)
{
    hid_t s = H5Screate(H5S_SCALAR);
    hid_t a = H5Acreate2(loc, name, type == H5T_NATIVE_INT ? H5T_STD_I32LE : H5T_IEEE_F64LE, s, H5P_DEFAULT,
                         H5P_DEFAULT);
    if (a < 0 || H5Awrite(a, type, v) < 0)
        w->failed = 1;
    if (a >= 0)
        H5Aclose(a);
    H5Sclose(s);
}

static void w_strings(wctx *w, hid_t loc, const char *name, size_t n, const char *const *v)
{
    hsize_t d[1] = {n};
    hid_t s = H5Screate_simple(1, d, NULL);
    hid_t ds = H5Dcreate2(loc, name, w->str_t, s, H5P_DEFAULT, w->dcpl, H5P_DEFAULT);
    if (ds < 0 || H5Dwrite(ds, w->str_t, H5S_ALL, H5S_ALL, H5P_DEFAULT, v) < 0)
        w->failed = 1;
    if (ds >= 0)
        H5Dclose(ds);
    H5Sclose(s);
}

static void w_data(wctx *w, hid_t loc, const char *name, int rank, const hsize_t *dims, int is_int,
                   const void *v, const char *units, const char *meaning)
{
    hid_t s = H5Screate_simple(rank, dims, NULL);
    hid_t ds = H5Dcreate2(loc, name, is_int ? H5T_STD_I32LE : H5T_IEEE_F64LE, s, H5P_DEFAULT, w->dcpl,
                          H5P_DEFAULT);
    if (ds < 0 || H5Dwrite(ds, is_int ? H5T_NATIVE_INT : H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, v) < 0)
        w->failed = 1;
    if (ds >= 0) {
        if (units)
            w_text_attr(w, ds, "units", units);
        if (meaning)
            w_text_attr(w, ds, "long_name", meaning);
        H5Dclose(ds);
    }
    H5Sclose(s);
}

/* A dataset of the schema, with its units and meaning. */
static void w_named(wctx *w, hid_t loc, const trail_name *n, int rank, const hsize_t *dims, int is_int,
                    const void *v)
{
    w_data(w, loc, n->v2, rank, dims, is_int, v, n->units, n->meaning);
}

/* phases/ or remnants/: code, key and name of every entry of the list, so
 * the file says what its codes mean (the reader checks them). */
static void w_code_table(wctx *w, hid_t f, const char *group, size_t n, int (*code_at)(size_t),
                         const char *(*key_of)(int), const char *(*name_of)(int))
{
    int code[64];
    const char *key[64], *name[64];
    hsize_t d[1] = {n};
    hid_t g = H5Gcreate2(f, group, H5P_DEFAULT, w->gcpl, H5P_DEFAULT);
    if (g < 0 || n > 64) {
        w->failed = 1;
        if (g >= 0)
            H5Gclose(g);
        return;
    }
    for (size_t i = 0; i < n; i++) {
        code[i] = code_at(i);
        key[i] = key_of(code[i]);
        name[i] = name_of(code[i]);
    }
    w_data(w, g, "code", 1, d, 1, code, NULL, "hrtrail code stored in the datasets");
    w_strings(w, g, "key", n, key);
    w_strings(w, g, "name", n, name);
    H5Gclose(g);
}

static hid_t w_group(wctx *w, hid_t loc, const char *name)
{
    hid_t g = H5Gcreate2(loc, name, H5P_DEFAULT, w->gcpl, H5P_DEFAULT);
    if (g < 0)
        w->failed = 1;
    return g;
}

static int cmp_track(const void *a, const void *b)
{
    double x = ((const btrack *)a)->mass, y = ((const btrack *)b)->mass;
    return (x > y) - (x < y);
}

static int cmp_group(const void *a, const void *b)
{
    double x = ((const bgroup *)a)->z, y = ((const bgroup *)b)->z;
    return (x > y) - (x < y);
}

/* Check the builder's content and compute boundaries; sorts in place. */
static int prepare_write(hrt_builder *b, hrt_error *err)
{
    if (b->n_groups == 0)
        return trail_set_error(err, HRT_E_INVALID, "no tracks to write");
    qsort(b->grp, b->n_groups, sizeof *b->grp, cmp_group);
    for (size_t gi = 0; gi < b->n_groups; gi++) {
        bgroup *g = &b->grp[gi];
        if (g->n == 0)
            return trail_set_error(err, HRT_E_INVALID, "Z = %g: route boundaries set but no tracks", g->z);
        qsort(g->t, g->n, sizeof *g->t, cmp_track);
        for (size_t i = 1; i < g->n; i++) {
            if (g->t[i].mass == g->t[i - 1].mass)
                return trail_set_error(err, HRT_E_INVALID, "Z = %g: two tracks of %g Msun", g->z, g->t[i].mass);
            if (g->t[i].route < g->t[i - 1].route)
                return trail_set_error(err, HRT_E_INVALID, "Z = %g: track %g Msun (route '%s') lies above a track of "
                                     "a later route", g->z, g->t[i - 1].mass, b->routes[g->t[i - 1].route].name);
        }
        for (size_t k = 0; k + 1 < b->n_routes; k++) {
            double below = -1.0, above = -1.0;
            for (size_t i = 0; i < g->n; i++) {
                if (g->t[i].route <= (int)k)
                    below = g->t[i].mass;
                else if (above < 0.0)
                    above = g->t[i].mass;
            }
            if (g->has_bound) {
                double m = g->bound[k];
                if ((below > 0.0 && !(m > below)) || (above > 0.0 && !(m < above)))
                    return trail_set_error(err, HRT_E_INVALID, "Z = %g: route boundary %zu at %g Msun does not "
                                         "separate the tracks of its routes (%g, %g)", g->z, k, m, below, above);
            } else {
                double m = below > 0.0 && above > 0.0 ? sqrt(below * above)
                           : below > 0.0              ? 2.0 * below
                                                      : 0.5 * above;
                if (k > 0 && m < g->bound[k - 1])
                    m = g->bound[k - 1];
                g->bound[k] = m;
            }
        }
    }
    return HRT_OK;
}

static int write_contents(const hrt_builder *b, hid_t f, wctx *w, hrt_error *err)
{
    const trail_schema *S = &trail_schema_names;
    w_text_attr(w, f, "format", TRAIL_FORMAT_NAME);
    int ver = HRT_FORMAT_VERSION;
    w_num_attr(w, f, "format_version", H5T_NATIVE_INT, &ver);
    w_num_attr(w, f, "z_ref", H5T_NATIVE_DOUBLE, &b->z_ref);
    int has_created_by = 0;
    for (size_t a = 0; a < b->n_attrs; a++) {
        w_text_attr(w, f, b->attrs[a].name, b->attrs[a].value);
        has_created_by |= strcmp(b->attrs[a].name, "created_by") == 0;
    }
    if (!has_created_by)
        w_text_attr(w, f, "created_by", "hrtrail " HRT_VERSION_STRING);
    w_code_table(w, f, "phases", HRT_PHASE_N, hrt_phase_code, hrt_phase_key, hrt_phase_name);
    w_code_table(w, f, "remnants", HRT_REMNANT_N, hrt_remnant_code, hrt_remnant_key, hrt_remnant_name);

    hid_t rg = w_group(w, f, "routes");
    const char *rn[TRAIL_MAX_ROUTES];
    for (size_t r = 0; r < b->n_routes; r++)
        rn[r] = b->routes[r].name;
    if (rg >= 0) {
        w_strings(w, rg, "names", b->n_routes, rn);
        for (size_t r = 0; r < b->n_routes && !w->failed; r++) {
            const route_layout *L = &b->routes[r];
            hid_t sub = w_group(w, rg, L->name);
            if (sub < 0)
                break;
            int kp[1024], seg[1024];
            int *kpp = L->n_kp <= 1024 ? kp : malloc(L->n_kp * sizeof(int));
            int *sgp = L->n_kp <= 1024 ? seg : malloc(L->n_kp * sizeof(int));
            if (!kpp || !sgp) {
                w->failed = 1;
            } else {
                for (size_t k = 0; k < L->n_kp; k++) {
                    kpp[k] = (int)L->kp_eep[k];
                    if (k + 1 < L->n_kp)
                        sgp[k] = (int)(L->kp_eep[k + 1] - L->kp_eep[k]);
                }
                hsize_t d1[1] = {L->n_kp}, d2[1] = {L->n_kp - 1};
                w_strings(w, sub, "keypoint_names", L->n_kp, (const char *const *)L->kp_names);
                w_data(w, sub, "keypoint_eep", 1, d1, 1, kpp, NULL, "EEP index of each keypoint");
                w_data(w, sub, "segment_samples", 1, d2, 1, sgp, NULL, "EEPs in each segment");
            }
            if (kpp != kp)
                free(kpp);
            if (sgp != seg)
                free(sgp);
            H5Gclose(sub);
        }
        H5Gclose(rg);
    }
    hid_t mg = w_group(w, f, "metallicity");
    if (mg < 0)
        return trail_set_error(err, HRT_E_IO, "cannot create group 'metallicity'");
    size_t J = b->n_eep_max;
    for (size_t gi = 0; gi < b->n_groups && !w->failed; gi++) {
        const bgroup *g = &b->grp[gi];
        char name[32];
        snprintf(name, sizeof name, "%zu", gi);
        hid_t gg = w_group(w, mg, name);
        if (gg < 0)
            break;
        w_num_attr(w, gg, S->group_z.v2, H5T_NATIVE_DOUBLE, &g->z);
        size_t n = g->n;
        double *d = malloc(n * J * sizeof(double));
        int *iv = malloc(n * J * sizeof(int));
        if (!d || !iv) {
            free(d);
            free(iv);
            H5Gclose(gg);
            H5Gclose(mg);
            return trail_set_error(err, HRT_E_NOMEM, "out of memory writing Z = %g", g->z);
        }
        hsize_t d1[1] = {n}, d2[2] = {n, J}, db[1] = {b->n_routes - 1};
        for (size_t i = 0; i < n; i++)
            d[i] = g->t[i].mass;
        w_named(w, gg, &S->initial_mass, 1, d1, 0, d);
        for (size_t i = 0; i < n; i++)
            iv[i] = g->t[i].route;
        w_named(w, gg, &S->route, 1, d1, 1, iv);
        for (size_t i = 0; i < n; i++)
            iv[i] = g->t[i].n;
        w_named(w, gg, &S->n_eep, 1, d1, 1, iv);
        for (size_t i = 0; i < n; i++)
            iv[i] = g->t[i].remnant;
        w_named(w, gg, &S->remnant, 1, d1, 1, iv);
        for (size_t i = 0; i < n; i++)
            d[i] = g->t[i].rem_mass;
        w_named(w, gg, &S->remnant_mass, 1, d1, 0, d);
        if (b->n_routes > 1)
            w_named(w, gg, &S->boundary, 1, db, 0, g->bound);
        for (int c = 0; c < NCOL; c++) {
            for (size_t i = 0; i < n; i++)
                for (size_t j = 0; j < J; j++)
                    d[i * J + j] = j < (size_t)g->t[i].n ? g->t[i].col[c][j] : NAN;
            w_named(w, gg, &S->eep[c], 2, d2, 0, d);
        }
        for (size_t i = 0; i < n; i++)
            for (size_t j = 0; j < J; j++)
                iv[i * J + j] = j < (size_t)g->t[i].n ? g->t[i].phase[j] : HRT_PHASE_UNKNOWN;
        w_named(w, gg, &S->phase, 2, d2, 1, iv);
        free(d);
        free(iv);
        H5Gclose(gg);
    }
    H5Gclose(mg);
    return w->failed ? trail_set_error(err, HRT_E_IO, "HDF5 refused to write part of the grid") : HRT_OK;
}

int hrt_builder_write(hrt_builder *b, const char *path, hrt_error *err)
{
    if (!b || !path)
        return trail_set_error(err, HRT_E_NULL, "hrt_builder_write: %s is NULL", !b ? "builder" : "path");
    int rc = prepare_write(b, err);
    if (rc != HRT_OK)
        return rc;
    size_t len = strlen(path);
    char *tmp = malloc(len + 16);
    if (!tmp)
        return trail_set_error(err, HRT_E_NOMEM, "out of memory");
    snprintf(tmp, len + 16, "%s.tmp-XXXXXX", path);
    int fd = mkstemp(tmp);
    if (fd < 0) {
        rc = trail_set_error(err, HRT_E_IO, "cannot create a temporary file beside '%s': %s", path, strerror(errno));
        free(tmp);
        return rc;
    }
    fchmod(fd, 0644);
    /* The file is built in memory (HDF5's core driver without a backing
     * store) and written by our own write() calls.  A full disk then fails
     * here, never inside HDF5: after a failed H5Fclose, HDF5 keeps the file
     * open (its descriptor, and the disk space of the unlinked temporary)
     * and crashes in its exit handler. */
    void *img = NULL;
    ssize_t img_size = -1;
    wctx w = {-1, -1, -1, 0};
    H5E_BEGIN_TRY
    {
        w.dcpl = H5Pcreate(H5P_DATASET_CREATE);
        w.gcpl = H5Pcreate(H5P_GROUP_CREATE);
        hid_t fcpl = H5Pcreate(H5P_FILE_CREATE);
        hid_t fapl = H5Pcreate(H5P_FILE_ACCESS);
        H5Pset_fapl_core(fapl, (size_t)1 << 20, 0);
        w.str_t = H5Tcopy(H5T_C_S1);
        H5Tset_size(w.str_t, H5T_VARIABLE);
        H5Tset_cset(w.str_t, H5T_CSET_UTF8);
        /* No modification times in object headers: same bytes for the same grid. */
        H5Pset_obj_track_times(w.dcpl, 0);
        H5Pset_obj_track_times(w.gcpl, 0);
        hid_t f = H5Fcreate(tmp, H5F_ACC_TRUNC, fcpl, fapl);
        if (f < 0) {
            rc = trail_set_error(err, HRT_E_IO, "cannot create HDF5 file '%s'", tmp);
        } else {
            rc = write_contents(b, f, &w, err);
            if (rc == HRT_OK && (H5Fflush(f, H5F_SCOPE_GLOBAL) < 0 || (img_size = H5Fget_file_image(f, NULL, 0)) <= 0))
                rc = trail_set_error(err, HRT_E_IO, "HDF5 cannot complete the image of '%s'", tmp);
            if (rc == HRT_OK && !(img = malloc((size_t)img_size)))
                rc = trail_set_error(err, HRT_E_NOMEM, "out of memory for the %zd bytes of '%s'", img_size, tmp);
            if (rc == HRT_OK && H5Fget_file_image(f, img, (size_t)img_size) != img_size)
                rc = trail_set_error(err, HRT_E_IO, "HDF5 cannot copy the image of '%s'", tmp);
            if (H5Fclose(f) < 0 && rc == HRT_OK)
                rc = trail_set_error(err, HRT_E_IO, "HDF5 cannot close the image of '%s'", tmp);
        }
        H5Pclose(fapl);
        H5Pclose(fcpl);
        H5Pclose(w.dcpl);
        H5Pclose(w.gcpl);
        H5Tclose(w.str_t);
    }
    H5E_END_TRY;
    for (size_t done = 0; rc == HRT_OK && done < (size_t)img_size;) {
        ssize_t k = write(fd, (const char *)img + done, (size_t)img_size - done);
        if (k < 0 && errno == EINTR)
            continue;
        if (k <= 0)
            rc = trail_set_error(err, HRT_E_IO, "cannot write '%s' (%zu of %zd bytes written): %s", tmp, done, img_size,
                               k < 0 ? strerror(errno) : "no progress");
        else
            done += (size_t)k;
    }
    free(img);
    if (rc == HRT_OK && fsync(fd) != 0)
        rc = trail_set_error(err, HRT_E_IO, "cannot write '%s' to the disk: %s", tmp, strerror(errno));
    if (close(fd) != 0 && rc == HRT_OK)
        rc = trail_set_error(err, HRT_E_IO, "cannot finish writing '%s': %s", tmp, strerror(errno));
    if (rc == HRT_OK && rename(tmp, path) != 0)
        rc = trail_set_error(err, HRT_E_IO, "cannot rename '%s' to '%s': %s", tmp, path, strerror(errno));
    if (rc != HRT_OK)
        unlink(tmp);
    free(tmp);
    return rc;
}
