/* Building grids: route layouts, raw tracks resampled onto EEPs, tracks
 * already on EEPs, route boundaries and attributes.  Writing the result is
 * builder_write.c.  Used by the default-grid generator, by track import and
 * by the upgrade of old files. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "build/build.h"
#include "build/builder.h"
#include "util/schema.h"
#include "util/util.h"

/* Most samples a track given to the builder may have. */
#define MAX_TRACK_SAMPLES 10000000
/* Longest route, keypoint or attribute name. */
#define MAX_NAME_LEN 200
/* The EEP distance is measured on a despiked track (tracks/FORMAT.md, "EEP
 * resampling"): a sample more than DESPIKE_DEX (in the metric's weighted
 * units) from the median of the samples within DESPIKE_HALF of it counts
 * as if on the line between the samples around it, so an excursion of up
 * to DESPIKE_HALF samples does not take the segment's EEPs.  On the
 * default grid's raw tracks no sample lies more than 0.06 from that
 * median: they are not changed. */
#define DESPIKE_HALF 5
#define DESPIKE_DEX 0.2

static const char *quantity_name(int q) { return trail_schema_names.eep[q].v2; }

static void free_track(trail_eep_track *t)
{
    for (int q = 0; q < TRAIL_NF; q++)
        free(t->q[q]);
    free(t->phase);
    free(t->x);
}

void hrt_builder_free(hrt_builder *b)
{
    if (!b)
        return;
    for (size_t r = 0; r < b->n_routes; r++)
        trail_route_clear(&b->routes[r]);
    for (size_t i = 0; i < b->n_groups; i++) {
        for (size_t k = 0; k < b->grp[i].n; k++)
            free_track(&b->grp[i].t[k]);
        free(b->grp[i].t);
    }
    free(b->grp);
    trail_attrs_free(b->attrs, b->n_attrs);
    free(b);
}

/* A name that can be an HDF5 group or attribute name of the file. */
static int valid_name(const char *s)
{
    if (!s || !*s || strlen(s) > MAX_NAME_LEN)
        return 0;
    for (const char *p = s; *p; p++)
        if (*p == '/' || *p == '.' || (unsigned char)*p < 0x20)
            return 0;
    return 1;
}

/* Keypoint names and EEP indices of route L from its spec. */
static int copy_keypoints(route_layout *L, const hrt_route_spec *sp, hrt_error *err)
{
    int rc = HRT_OK;
    long eep = 0;
    for (size_t k = 0; k < L->n_kp && rc == HRT_OK; k++) {
        if (!valid_name(sp->keypoint_names[k])) {
            rc = trail_set_error(err, HRT_E_INVALID, "route '%s': keypoint %zu has no usable name", sp->name, k);
            break;
        }
        L->kp_names[k] = trail_strdup(sp->keypoint_names[k]);
        if (!L->kp_names[k])
            rc = trail_set_error(err, HRT_E_NOMEM, "hrt_builder_new: out of memory");
        L->kp_eep[k] = eep;
        if (k + 1 < L->n_kp) {
            int ns = sp->segment_samples[k];
            if (ns < 1 || ns > TRAIL_MAX_SEGMENT_EEP)
                rc = trail_set_error(err, HRT_E_INVALID, "route '%s': segment %zu has %d samples (1..%d)", sp->name,
                                     k, ns, TRAIL_MAX_SEGMENT_EEP);
            eep += ns;
        }
    }
    L->n_eep = (size_t)eep + 1;
    return rc;
}

/* Route r of the builder from its spec; b->n_routes counts it even on
 * failure, so that hrt_builder_free() frees what was copied. */
static int copy_route(hrt_builder *b, size_t r, const hrt_route_spec *sp, hrt_error *err)
{
    route_layout *L = &b->routes[r];
    b->n_routes = r + 1;
    if (!valid_name(sp->name) || sp->n_keypoints < TRAIL_MIN_KEYPOINTS || !sp->keypoint_names ||
        !sp->segment_samples)
        return trail_set_error(err, HRT_E_INVALID,
                               "route %zu: needs a name without '/' or '.', at least %d keypoints and their "
                               "segment sample counts", r, TRAIL_MIN_KEYPOINTS);
    for (size_t q = 0; q < r; q++)
        if (strcmp(b->routes[q].name, sp->name) == 0)
            return trail_set_error(err, HRT_E_INVALID, "route %zu: name '%s' used twice", r, sp->name);
    L->name = trail_strdup(sp->name);
    L->n_kp = sp->n_keypoints;
    L->kp_names = calloc(L->n_kp, sizeof(char *));
    L->kp_eep = malloc(L->n_kp * sizeof(long));
    if (!L->name || !L->kp_names || !L->kp_eep)
        return trail_set_error(err, HRT_E_NOMEM, "hrt_builder_new: out of memory");
    int rc = copy_keypoints(L, sp, err);
    if (L->n_eep > b->n_eep_max)
        b->n_eep_max = L->n_eep;
    return rc;
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
    b->deflate = TRAIL_DEFLATE_DEFAULT;
    int rc = HRT_OK;
    for (size_t r = 0; r < n_routes && rc == HRT_OK; r++)
        rc = copy_route(b, r, &routes[r], err);
    if (rc != HRT_OK) {
        hrt_builder_free(b);
        return rc;
    }
    *out = b;
    return trail_set_error(err, HRT_OK, NULL);
}

static trail_z_group *find_group(hrt_builder *b, double z, int create)
{
    for (size_t i = 0; i < b->n_groups; i++)
        if (b->grp[i].z == z)
            return &b->grp[i];
    if (!create)
        return NULL;
    if (b->n_groups >= TRAIL_MAX_Z)
        return NULL;
    trail_z_group *g = realloc(b->grp, (b->n_groups + 1) * sizeof *g);
    if (!g)
        return NULL;
    b->grp = g;
    memset(&g[b->n_groups], 0, sizeof *g);
    g[b->n_groups].z = z;
    return &g[b->n_groups++];
}

/* A new track of n EEPs at the end of the group of z (created if needed). */
static trail_eep_track *new_track(hrt_builder *b, double z, int n, hrt_error *err, int *rc)
{
    trail_z_group *g = find_group(b, z, 1);
    if (!g) {
        *rc = trail_set_error(err, b->n_groups >= TRAIL_MAX_Z ? HRT_E_INVALID : HRT_E_NOMEM,
                              "cannot add a metallicity group (at most %d)", TRAIL_MAX_Z);
        return NULL;
    }
    if (g->n == g->cap) {
        size_t cap = g->cap ? 2 * g->cap : 16;
        trail_eep_track *t = realloc(g->t, cap * sizeof *t);
        if (!t) {
            *rc = trail_set_error(err, HRT_E_NOMEM, "out of memory");
            return NULL;
        }
        g->t = t;
        g->cap = cap;
    }
    trail_eep_track *t = &g->t[g->n];
    memset(t, 0, sizeof *t);
    int ok = 1;
    for (int q = 0; q < TRAIL_NF; q++)
        ok &= (t->q[q] = malloc((size_t)n * sizeof(double))) != NULL;
    ok &= (t->phase = malloc((size_t)n * sizeof(int))) != NULL;
    if (b->n_extra > 0)
        ok &= (t->x = malloc(b->n_extra * (size_t)n * sizeof(double))) != NULL;
    if (!ok) {
        free_track(t);
        *rc = trail_set_error(err, HRT_E_NOMEM, "out of memory for a track of %d points", n);
        return NULL;
    }
    t->n_eep = n;
    g->n++; /* committed; removed again by drop_last() on failure */
    return t;
}

/* Remove the track just added to the group of z; a group it leaves empty
 * goes too unless its route boundaries were set (a metallicity whose every
 * track was refused is no part of the grid). */
static void drop_last(hrt_builder *b, double z)
{
    trail_z_group *g = find_group(b, z, 0);
    if (!g || g->n == 0)
        return;
    free_track(&g->t[--g->n]);
    if (g->n == 0 && !g->has_boundary) {
        free(g->t);
        size_t i = (size_t)(g - b->grp);
        memmove(&b->grp[i], &b->grp[i + 1], (b->n_groups - i - 1) * sizeof *g);
        b->n_groups--;
    }
}

/* t's columns in the file's order of quantities (TRAIL_F_*); log R may be NULL. */
static void columns_of(const hrt_track_data *t, const double *cols[TRAIL_NF])
{
    const double *c[TRAIL_NF] = {t->log_age_yr, t->log_l_lsun,        t->log_teff_k,       t->log_r_rsun,
                                 t->mass_msun,  t->he_core_mass_msun, t->co_core_mass_msun};
    memcpy(cols, c, sizeof c);
}

/* Value of quantity q at sample s: log R from L and Teff when not given. */
static double value_at(const hrt_track_data *t, const double *const cols[TRAIL_NF], int q, size_t s)
{
    return cols[q] ? cols[q][s] : trail_log_r_from(t->log_l_lsun[s], t->log_teff_k[s]);
}

/* Metallicity, initial mass, route, remnant and length of a track. */
static int check_identity(const hrt_builder *b, double z, const hrt_track_data *t, const char *who, hrt_error *err)
{
    double m = t->initial_mass_msun;
    if (!(isfinite(z) && z > 0.0 && z < 1.0))
        return trail_set_error(err, HRT_E_DOMAIN, "%s: Z = %g is not in (0, 1)", who, z);
    if (!(isfinite(m) && m > 0.0))
        return trail_set_error(err, HRT_E_DOMAIN, "%s: initial mass %g is not positive", who, m);
    if (t->route < 0 || (size_t)t->route >= b->n_routes)
        return trail_set_error(err, HRT_E_INVALID, "%s %g Msun: route %d is not one of the builder's", who, m,
                               t->route);
    if (t->remnant != HRT_REMNANT_NONE) {
        double rm = t->remnant_mass_msun;
        if (hrt_remnant_from_key(hrt_remnant_key(t->remnant)) != t->remnant)
            return trail_set_error(err, HRT_E_INVALID, "%s %g Msun: remnant kind %d is unknown", who, m, t->remnant);
        if (!(isfinite(rm) && rm > 0.0))
            return trail_set_error(err, HRT_E_DOMAIN, "%s %g Msun: remnant mass %g is not positive", who, m, rm);
        if (!(rm <= TRAIL_MAX_MASS_FACTOR * m))
            return trail_set_error(err, HRT_E_DOMAIN, "%s %g Msun: remnant mass %g exceeds %g times the initial mass",
                                   who, m, rm, TRAIL_MAX_MASS_FACTOR);
    }
    if (trail_remnant_is_wd(t->remnant) && !(t->remnant_mass_msun < TRAIL_WD_MASS_MAX_MSUN))
        return trail_set_error(err, HRT_E_DOMAIN, "%s %g Msun: a white dwarf of %g Msun is beyond the %g Msun of "
                               "the white dwarf mass-radius relation", who, m, t->remnant_mass_msun,
                               TRAIL_WD_MASS_MAX_MSUN);
    if (t->n < TRAIL_MIN_SAMPLES || t->n > MAX_TRACK_SAMPLES)
        return trail_set_error(err, HRT_E_INVALID, "%s %g Msun: %zu points (%s %d)", who, m, t->n,
                               t->n < TRAIL_MIN_SAMPLES ? "at least" : "at most",
                               t->n < TRAIL_MIN_SAMPLES ? TRAIL_MIN_SAMPLES : MAX_TRACK_SAMPLES);
    return HRT_OK;
}

/* Every value of quantity q: finite, within the reader's plausibility
 * bounds (what is written can be read), ages increasing. */
static int check_column(const hrt_track_data *t, int q, const double *v, const char *who, hrt_error *err)
{
    double m = t->initial_mass_msun;
    for (size_t i = 0; i < t->n; i++) {
        if (!isfinite(v[i]))
            return trail_set_error(err, HRT_E_DOMAIN, "%s %g Msun: %s[%zu] = %g is not finite", who, m,
                                   quantity_name(q), i, v[i]);
        if (TRAIL_F_IS_MASS(q) && v[i] < 0.0)
            return trail_set_error(err, HRT_E_DOMAIN, "%s %g Msun: %s[%zu] = %g is negative", who, m,
                                   quantity_name(q), i, v[i]);
        if (TRAIL_F_IS_MASS(q) && !(v[i] <= TRAIL_MAX_MASS_FACTOR * m))
            return trail_set_error(err, HRT_E_DOMAIN, "%s %g Msun: %s[%zu] = %g Msun exceeds %g times the initial "
                                   "mass", who, m, quantity_name(q), i, v[i], TRAIL_MAX_MASS_FACTOR);
        if (!TRAIL_F_IS_MASS(q) && !(fabs(v[i]) <= TRAIL_MAX_LOG_ABS))
            return trail_set_error(err, HRT_E_DOMAIN, "%s %g Msun: %s[%zu] = %g is not a plausible log10 value", who,
                                   m, quantity_name(q), i, v[i]);
        if (q == TRAIL_F_LOG_AGE && i > 0 && !(v[i] > v[i - 1]))
            return trail_set_error(err, HRT_E_INVALID, "%s %g Msun: log_age[%zu] = %.17g does not exceed the "
                                   "previous point's %.17g", who, m, i, v[i], v[i - 1]);
    }
    return HRT_OK;
}

/* Cores nested in the star at every point (the reader checks the same). */
static int check_cores(const hrt_track_data *t, const char *who, hrt_error *err)
{
    for (size_t i = 0; i < t->n; i++) {
        double m = t->mass_msun[i], he = t->he_core_mass_msun[i], co = t->co_core_mass_msun[i];
        if (he > m * (1.0 + TRAIL_CORE_REL_TOL))
            return trail_set_error(err, HRT_E_DOMAIN, "%s %g Msun: %s[%zu] = %g exceeds %s %g", who,
                                   t->initial_mass_msun, quantity_name(TRAIL_F_HE_CORE), i, he,
                                   quantity_name(TRAIL_F_MASS), m);
        if (co > he * (1.0 + TRAIL_CORE_REL_TOL))
            return trail_set_error(err, HRT_E_DOMAIN, "%s %g Msun: %s[%zu] = %g exceeds %s %g", who,
                                   t->initial_mass_msun, quantity_name(TRAIL_F_CO_CORE), i, co,
                                   quantity_name(TRAIL_F_HE_CORE), he);
    }
    return HRT_OK;
}

/* A track's identity and columns (log R may be NULL); eep says which entry point. */
static int check_track(const hrt_builder *b, double z, const hrt_track_data *t, int eep, hrt_error *err)
{
    if (!t)
        return trail_set_error(err, HRT_E_NULL, "track data is NULL");
    const char *who = eep ? "EEP track" : "track";
    int rc = check_identity(b, z, t, who, err);
    if (rc != HRT_OK)
        return rc;
    const double *cols[TRAIL_NF];
    columns_of(t, cols);
    for (int q = 0; q < TRAIL_NF && rc == HRT_OK; q++) {
        if (cols[q])
            rc = check_column(t, q, cols[q], who, err);
        else if (q != TRAIL_F_LOG_R)
            rc = trail_set_error(err, HRT_E_NULL, "%s %g Msun: column %s is NULL", who, t->initial_mass_msun,
                                 quantity_name(q));
    }
    if (rc == HRT_OK)
        rc = check_cores(t, who, err);
    if (rc != HRT_OK)
        return rc;
    if (!t->phase)
        return trail_set_error(err, HRT_E_NULL, "%s %g Msun: phase column is NULL", who, t->initial_mass_msun);
    for (size_t i = 0; i < t->n; i++)
        if (t->phase[i] == HRT_PHASE_UNKNOWN || hrt_phase_from_key(hrt_phase_key(t->phase[i])) != t->phase[i])
            return trail_set_error(err, HRT_E_INVALID, "%s %g Msun: phase[%zu] = %d is not a phase", who,
                                   t->initial_mass_msun, i, t->phase[i]);
    return HRT_OK;
}

/* A new track of n EEPs in the group of z with t's identity. */
static trail_eep_track *start_track(hrt_builder *b, double z, const hrt_track_data *t, int n, hrt_error *err,
                                    int *rc)
{
    trail_eep_track *bt = new_track(b, z, n, err, rc);
    if (!bt)
        return NULL;
    bt->initial_mass = t->initial_mass_msun;
    bt->route = t->route;
    bt->remnant = t->remnant;
    bt->remnant_mass = t->remnant != HRT_REMNANT_NONE ? t->remnant_mass_msun : NAN;
    return bt;
}

static int add_eep_track(hrt_builder *b, double z, const hrt_track_data *t, const double *const *xcols,
                         hrt_error *err)
{
    int rc = check_track(b, z, t, 1, err);
    if (rc != HRT_OK)
        return rc;
    const route_layout *L = &b->routes[t->route];
    if (t->n > L->n_eep)
        return trail_set_error(err, HRT_E_INVALID, "EEP track %g Msun: %zu EEPs, route '%s' has %zu",
                               t->initial_mass_msun, t->n, L->name, L->n_eep);
    if (t->n < L->n_eep && t->remnant != HRT_REMNANT_NONE)
        return trail_set_error(err, HRT_E_INVALID, "EEP track %g Msun: ends before the route's last EEP but names a "
                               "remnant", t->initial_mass_msun);
    trail_eep_track *bt = start_track(b, z, t, (int)t->n, err, &rc);
    if (!bt)
        return rc;
    const double *cols[TRAIL_NF];
    columns_of(t, cols);
    for (size_t i = 0; i < t->n; i++) {
        for (int q = 0; q < TRAIL_NF; q++)
            bt->q[q][i] = value_at(t, cols, q, i);
        bt->phase[i] = t->phase[i];
        for (size_t k = 0; k < b->n_extra; k++)
            bt->x[k * t->n + i] = xcols[k][i];
    }
    return trail_set_error(err, HRT_OK, NULL);
}

/* The keypoints a raw track reaches: a prefix of its route's, in order,
 * inside the track; a track that stops early names no remnant. */
static int check_keypoints(const route_layout *L, const hrt_track_data *t, hrt_error *err)
{
    size_t nk = t->n_keypoints;
    if (!t->keypoint_sample)
        return trail_set_error(err, HRT_E_NULL, "track %g Msun: keypoint_sample is NULL (a raw track needs the sample "
                               "of each keypoint it reaches)", t->initial_mass_msun);
    if (nk < TRAIL_MIN_KEYPOINTS || nk > L->n_kp)
        return trail_set_error(err, HRT_E_INVALID, "track %g Msun: %zu keypoints reached, route '%s' needs %d..%zu",
                               t->initial_mass_msun, nk, L->name, TRAIL_MIN_KEYPOINTS, L->n_kp);
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
    return HRT_OK;
}

/* Median of the n (<= 2 DESPIKE_HALF + 1) values v, which it reorders. */
static double median_of(double *v, size_t n)
{
    for (size_t i = 1; i < n; i++)
        for (size_t j = i; j > 0 && v[j - 1] > v[j]; j--) {
            double x = v[j];
            v[j] = v[j - 1];
            v[j - 1] = x;
        }
    return n % 2 ? v[n / 2] : 0.5 * (v[n / 2 - 1] + v[n / 2]);
}

/* The despiked copy of x[sa..sb] (tracks/FORMAT.md, "EEP resampling") into
 * y[0..sb-sa]: a sample inside the segment lying more than tol from the
 * median of the samples within DESPIKE_HALF of it (a window symmetric
 * about it and inside the segment) is an excursion, and counts at the
 * value linear in age between the samples around its run; the keypoints
 * and every other sample count as they are. */
static void despike(const double *x, const double *log_age, size_t sa, size_t sb, double tol, double *y)
{
    double w[2 * DESPIKE_HALF + 1];
    y[0] = x[sa];
    y[sb - sa] = x[sb];
    for (size_t s = sa + 1; s < sb; s++) {
        size_t h = s - sa < sb - s ? s - sa : sb - s;
        if (h > DESPIKE_HALF)
            h = DESPIKE_HALF;
        for (size_t j = 0; j <= 2 * h; j++)
            w[j] = x[s - h + j];
        y[s - sa] = fabs(x[s] - median_of(w, 2 * h + 1)) > tol ? NAN : x[s]; /* NaN: an excursion */
    }
    size_t kept = 0; /* offset of the last sample kept */
    for (size_t i = 1; i <= sb - sa; i++) {
        if (isnan(y[i]))
            continue;
        double a0 = pow(10.0, log_age[sa + kept]), a1 = pow(10.0, log_age[sa + i]);
        for (size_t j = kept + 1; j < i; j++)
            y[j] = y[kept] + (pow(10.0, log_age[sa + j]) - a0) / (a1 - a0) * (y[i] - y[kept]);
        kept = i;
    }
}

/* Cumulative distance from sample sa to each sample up to sb in the metric
 * of tracks/FORMAT.md: dist[s - sa], dist[0] = 0.  l and teff are the
 * segment's despiked log L and log Teff, from sa on (work space). */
static void segment_distance(const hrt_track_data *t, size_t sa, size_t sb, double *dist, double *l, double *teff)
{
    despike(t->log_l_lsun, t->log_age_yr, sa, sb, DESPIKE_DEX / HRT_EEP_WEIGHT_LOG_L, l);
    despike(t->log_teff_k, t->log_age_yr, sa, sb, DESPIKE_DEX / HRT_EEP_WEIGHT_LOG_TEFF, teff);
    double age_a = pow(10.0, t->log_age_yr[sa]), age_b = pow(10.0, t->log_age_yr[sb]);
    dist[0] = 0.0;
    double f_prev = 0.0;
    for (size_t s = sa + 1; s <= sb; s++) {
        double f = (pow(10.0, t->log_age_yr[s]) - age_a) / (age_b - age_a); /* fraction of the segment's age */
        double d_teff = HRT_EEP_WEIGHT_LOG_TEFF * (teff[s - sa] - teff[s - sa - 1]);
        double d_l = HRT_EEP_WEIGHT_LOG_L * (l[s - sa] - l[s - sa - 1]);
        double d_age = HRT_EEP_WEIGHT_AGE * (f - f_prev);
        dist[s - sa] = dist[s - sa - 1] + sqrt(d_teff * d_teff + d_l * d_l + d_age * d_age);
        f_prev = f;
    }
}

/* The n_eep EEPs of the segment from sample sa to sb, equally spaced in
 * distance from sa (the EEP at sb opens the next segment), into bt from EEP
 * first on. */
static void resample_segment(trail_eep_track *bt, int first, const hrt_track_data *t,
                             const double *const cols[TRAIL_NF], size_t sa, size_t sb, int n_eep, const double *dist,
                             size_t nx, const double *const *xcols)
{
    double total = dist[sb - sa];
    size_t s = 0; /* sample offset: dist[s] <= target < dist[s + 1] */
    for (int i = 0; i < n_eep; i++) {
        double target = total * (double)i / (double)n_eep;
        while (s + 1 < sb - sa && dist[s + 1] <= target)
            s++;
        double span = dist[s + 1] - dist[s];
        double u = span > 0.0 ? (target - dist[s]) / span : 0.0;
        if (u < 0.0)
            u = 0.0;
        for (int q = 0; q < TRAIL_NF; q++) {
            double v0 = value_at(t, cols, q, sa + s), v1 = value_at(t, cols, q, sa + s + 1);
            bt->q[q][first + i] = u == 0.0 ? v0 : v0 + u * (v1 - v0);
        }
        for (size_t k = 0; k < nx; k++) {
            double v0 = xcols[k][sa + s], v1 = xcols[k][sa + s + 1];
            bt->x[k * (size_t)bt->n_eep + (size_t)(first + i)] = u == 0.0 ? v0 : v0 + u * (v1 - v0);
        }
        bt->phase[first + i] = t->phase[sa + s];
    }
}

/* bt's EEPs from the raw track t: every segment between reached keypoints,
 * then the last keypoint's sample. */
static int resample(const route_layout *L, trail_eep_track *bt, const hrt_track_data *t, size_t nx,
                    const double *const *xcols, hrt_error *err)
{
    size_t nk = t->n_keypoints;
    size_t longest = 0;
    for (size_t k = 0; k + 1 < nk; k++) {
        size_t len = t->keypoint_sample[k + 1] - t->keypoint_sample[k] + 1;
        if (len > longest)
            longest = len;
    }
    double *dist = malloc(3 * longest * sizeof(double)); /* distances, then despiked log L and log Teff */
    if (!dist)
        return trail_set_error(err, HRT_E_NOMEM, "out of memory resampling a track");
    const double *cols[TRAIL_NF];
    columns_of(t, cols);
    int eep = 0;
    for (size_t k = 0; k + 1 < nk; k++) {
        size_t sa = t->keypoint_sample[k], sb = t->keypoint_sample[k + 1];
        int n_eep = (int)(L->kp_eep[k + 1] - L->kp_eep[k]);
        segment_distance(t, sa, sb, dist, dist + longest, dist + 2 * longest);
        resample_segment(bt, eep, t, cols, sa, sb, n_eep, dist, nx, xcols);
        eep += n_eep;
    }
    size_t s_last = t->keypoint_sample[nk - 1];
    for (int q = 0; q < TRAIL_NF; q++)
        bt->q[q][eep] = value_at(t, cols, q, s_last);
    for (size_t k = 0; k < nx; k++)
        bt->x[k * (size_t)bt->n_eep + (size_t)eep] = xcols[k][s_last];
    bt->phase[eep] = t->phase[s_last];
    free(dist);
    /* Equal distance steps can still give equal log ages where a segment has
     * two raw samples only and the rounding bites: keep them increasing. */
    for (int i = 1; i < bt->n_eep; i++)
        if (!(bt->q[TRAIL_F_LOG_AGE][i] > bt->q[TRAIL_F_LOG_AGE][i - 1]))
            return trail_set_error(err, HRT_E_INVALID, "track %g Msun: resampled log ages not increasing at EEP %d "
                                   "(raw samples too coarse for the segment's EEP count)", t->initial_mass_msun, i);
    return HRT_OK;
}

static int add_raw_track(hrt_builder *b, double z, const hrt_track_data *t, const double *const *xcols,
                         hrt_error *err)
{
    int rc = check_track(b, z, t, 0, err);
    if (rc != HRT_OK)
        return rc;
    const route_layout *L = &b->routes[t->route];
    rc = check_keypoints(L, t, err);
    if (rc != HRT_OK)
        return rc;
    int n_eep = (int)L->kp_eep[t->n_keypoints - 1] + 1;
    trail_eep_track *bt = start_track(b, z, t, n_eep, err, &rc);
    if (!bt)
        return rc;
    rc = resample(L, bt, t, b->n_extra, xcols, err);
    if (rc != HRT_OK) {
        drop_last(b, z);
        return rc;
    }
    return trail_set_error(err, HRT_OK, NULL);
}

int trail_builder_add(hrt_builder *b, double z, const hrt_track_data *t, const double *const *xcols, int eep,
                      hrt_error *err)
{
    if (!b)
        return trail_set_error(err, HRT_E_NULL, "builder is NULL");
    return eep ? add_eep_track(b, z, t, xcols, err) : add_raw_track(b, z, t, xcols, err);
}

int hrt_builder_add_track(hrt_builder *b, double z, const hrt_track_data *t, hrt_error *err)
{
    if (b && b->n_extra > 0)
        return trail_set_error(err, HRT_E_INVALID, "hrt_builder_add_track: the grid declares %zu extra quantities: "
                               "add its tracks with hrt_builder_add_track_extra()", b->n_extra);
    return trail_builder_add(b, z, t, NULL, 0, err);
}

int hrt_builder_add_eep_track(hrt_builder *b, double z, const hrt_track_data *t, hrt_error *err)
{
    if (b && b->n_extra > 0)
        return trail_set_error(err, HRT_E_INVALID, "hrt_builder_add_eep_track: the grid declares %zu extra "
                               "quantities: add its tracks with hrt_builder_add_eep_track_extra()", b->n_extra);
    return trail_builder_add(b, z, t, NULL, 1, err);
}

int hrt_builder_set_route_boundaries(hrt_builder *b, double z, const double *m, hrt_error *err)
{
    if (!b || !m)
        return trail_set_error(err, HRT_E_NULL, "hrt_builder_set_route_boundaries: NULL argument");
    for (size_t k = 0; k + 1 < b->n_routes; k++)
        if (!(isfinite(m[k]) && m[k] > 0.0) || (k > 0 && m[k] < m[k - 1]))
            return trail_set_error(err, HRT_E_DOMAIN, "route boundary %zu: %g Msun is not positive and "
                                   "non-decreasing", k, m[k]);
    trail_z_group *g = find_group(b, z, 1);
    if (!g)
        return trail_set_error(err, HRT_E_NOMEM, "cannot add a metallicity group");
    g->has_boundary = 1;
    for (size_t k = 0; k + 1 < b->n_routes; k++)
        g->boundary[k] = m[k];
    return trail_set_error(err, HRT_OK, NULL);
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
            return trail_set_error(err, HRT_OK, NULL);
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
    return trail_set_error(err, HRT_OK, NULL);
}
