/* A track's route, keypoints, remnant and default phases, once its table is
 * read: keypoints and the route that fits best (keypoints.c), routes of
 * tracks that stop early from their neighbours in mass, the order of routes
 * in mass, the remnant the last keypoint implies, and phases from the
 * keypoints where the table has none (tracks/FORMAT.md, "Importing text
 * tracks"). */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "build/build.h"
#include "build/import.h"
#include "util/util.h"

/* A massive star after the main sequence is a Wolf-Rayet star with an
 * envelope below WR_ENVELOPE of its mass and log Teff above WR_LOG_TEFF,
 * else a blue supergiant above BSG_LOG_TEFF, else a red one
 * (tracks/FORMAT.md). */
#define WR_ENVELOPE 0.05
#define WR_LOG_TEFF 4.4
#define BSG_LOG_TEFF 3.8
/* Between the TAMS and the envelope loss of a low-mass star: a red giant
 * once this many dex brighter than at the TAMS, a subgiant before. */
#define RGB_RISE_LOG_L 0.3
/* A white dwarf whose CO core is below this fraction of its mass is a helium one. */
#define HE_WD_CO_FRACTION 0.1
/* White dwarfs from this mass on are oxygen-neon ones (the CO/ONe division
 * of white-dwarf masses near 1.05-1.1 Msun [from memory]). */
#define ONE_WD_MIN_MSUN 1.10

static int route_has(const hrt_route_spec *r, const char *name)
{
    for (size_t k = 0; k < r->n_keypoints; k++)
        if (strcmp(r->keypoint_names[k], name) == 0)
            return 1;
    return 0;
}

static void columns_of(const trail_import_track *t, hrt_kp_columns *c)
{
    memset(c, 0, sizeof *c);
    c->n = t->n;
    c->age_yr = t->age_yr;
    c->log_l_lsun = t->log_l;
    c->log_teff_k = t->log_teff;
    c->mass_msun = t->has_column[TRAIL_MAP_MASS] ? t->mass : NULL;
    c->central_x = t->has_column[TRAIL_MAP_CENTRAL_X] ? t->central_x : NULL;
    c->central_y = t->has_column[TRAIL_MAP_CENTRAL_Y] ? t->central_y : NULL;
    c->he_core_mass_msun = t->has_column[TRAIL_MAP_HE_CORE] ? t->he_core : NULL;
    c->co_core_mass_msun = t->has_column[TRAIL_MAP_CO_CORE] ? t->co_core : NULL;
    c->phase = t->has_column[TRAIL_MAP_PHASE] ? t->phase : NULL;
    c->flag = t->has_column[TRAIL_MAP_KEYPOINTS] ? (const char *const *)t->flag : NULL;
}

/* ---- routes ----------------------------------------------------------------- */

/* The first sample flagged with a keypoint of no route: its line and column
 * (0, 0 if none). */
static void unknown_flag_at(const hrt_import *imp, const trail_import_track *t, long *line, long *column)
{
    *line = *column = 0;
    for (size_t s = 0; s < t->n; s++) {
        if (!t->flag[s] || !t->flag[s][0])
            continue;
        int known = 0;
        for (size_t r = 0; r < imp->n_routes && !known; r++)
            known = route_has(&imp->spec[r], t->flag[s]);
        if (!known) {
            *line = t->pos[s].line;
            *column = t->pos[s].flag_column;
            return;
        }
    }
}

int trail_import_routes(hrt_import *imp, hrt_error *err)
{
    int fatal = HRT_OK;
    for (size_t i = 0; i < imp->n_tracks; i++) {
        trail_import_track *t = &imp->t[i];
        if (t->report.status != HRT_OK)
            continue;
        hrt_kp_columns c;
        columns_of(t, &c);
        hrt_error e = {0, ""};
        int route;
        if (hrt_keypoints_route(&c, imp->n_routes, imp->spec, &route, &t->route_candidates, &t->kp, &e) != HRT_OK) {
            /* its only failure here: a flag naming an unknown keypoint, or flags of several routes */
            long line, column;
            unknown_flag_at(imp, t, &line, &column);
            trail_import_problem(t, HRT_E_FORMAT, line, column, err, "keypoint flag: %s", e.message);
            if (!imp->lenient)
                fatal = fatal ? fatal : HRT_E_FORMAT;
            continue;
        }
        t->report.route = route;
        t->route_definite = route >= 0 && (t->route_candidates & (t->route_candidates - 1)) == 0;
        if (route < 0) {
            char why[64];
            snprintf(why, sizeof why, "reaches fewer than %d keypoints of every route", TRAIL_MIN_KEYPOINTS);
            trail_import_drop(imp, t, HRT_E_NO_TRACK, err, why);
        }
        snprintf(t->report.missing, sizeof t->report.missing, "%s", t->kp.why);
    }
    return fatal;
}

void trail_import_settle_routes(hrt_import *imp, const size_t *idx, size_t n)
{
    for (size_t a = 0; a < n; a++) {
        trail_import_track *t = &imp->t[idx[a]];
        if (t->route_definite)
            continue;
        /* the nearest track in log mass with a definite route among the candidates */
        double best = INFINITY;
        int r = -1;
        for (size_t b = 0; b < n; b++) {
            const trail_import_track *u = &imp->t[idx[b]];
            if (!u->route_definite || !(t->route_candidates & (1u << u->report.route)))
                continue;
            double d = fabs(log(u->report.initial_mass_msun / t->report.initial_mass_msun));
            if (d < best) {
                best = d;
                r = u->report.route;
            }
        }
        if (r >= 0 && r != t->report.route) {
            hrt_kp_columns c;
            columns_of(t, &c);
            hrt_keypoints_find(&c, &imp->spec[r], &t->kp, NULL);
            snprintf(t->report.missing, sizeof t->report.missing, "%s", t->kp.why);
            t->report.route = r;
        }
        trail_import_note(t, "route ambiguous (the track stops early): %s, as the nearest track in mass",
                          imp->spec[t->report.route].name);
    }
}

int trail_import_check_order(hrt_import *imp, const size_t *idx, size_t n, double z, hrt_error *err)
{
    for (size_t a = 1; a < n; a++) {
        const trail_import_track *t0 = &imp->t[idx[a - 1]], *t1 = &imp->t[idx[a]];
        double m0 = t0->report.initial_mass_msun, m1 = t1->report.initial_mass_msun;
        if (m0 == m1)
            return trail_set_error(err, HRT_E_INVALID, "%s and %s: both %g Msun at Z = %g", t0->path, t1->path, m1, z);
        if (t1->report.route < t0->report.route)
            return trail_set_error(err, HRT_E_INVALID, "%s (%g Msun) follows route '%s' but the lighter %s (%g Msun) "
                                   "follows the later route '%s': routes must not overlap in mass", t1->path, m1,
                                   imp->spec[t1->report.route].name, t0->path, m0, imp->spec[t0->report.route].name);
    }
    return HRT_OK;
}

/* ---- remnants and phases ---------------------------------------------------- */

/* The remnant of a track that reaches its route's last keypoint. */
static void assign_remnant(trail_import_track *t, const hrt_route_spec *r, size_t nk)
{
    t->report.remnant = HRT_REMNANT_NONE;
    t->report.remnant_mass_msun = NAN;
    if (nk < r->n_keypoints)
        return;
    const char *last = r->keypoint_names[nk - 1];
    size_t s = t->kp.sample[nk - 1];
    double m = t->mass[s];
    int has_co = t->has_column[TRAIL_MAP_CO_CORE];
    if (!strcmp(last, "wd_onset")) {
        /* without a CO column, a route that never burns helium makes helium white dwarfs */
        if (has_co && t->co_core[s] < HE_WD_CO_FRACTION * m)
            t->report.remnant = HRT_REMNANT_HE_WD;
        else if (!has_co && !route_has(r, "he_ignition") && !route_has(r, "cheb_start"))
            t->report.remnant = HRT_REMNANT_HE_WD;
        else
            t->report.remnant = m >= ONE_WD_MIN_MSUN ? HRT_REMNANT_ONE_WD : HRT_REMNANT_CO_WD;
        t->report.remnant_mass_msun = m;
    } else if (!strcmp(last, "core_collapse")) {
        hrt_collapse_remnant(has_co ? fmin(t->co_core[s], m) : 0.0, m, &t->report.remnant,
                             &t->report.remnant_mass_msun);
        if (!has_co)
            trail_import_note(t, "no co_core_mass_msun column: remnant from a zero CO core");
    }
}

/* Phase of a massive star after the main sequence from its surface. */
static int supergiant_phase(const trail_import_track *t, size_t i)
{
    double env = t->mass[i] > 0.0 ? (t->mass[i] - t->he_core[i]) / t->mass[i] : 1.0;
    if (t->has_column[TRAIL_MAP_HE_CORE] && env < WR_ENVELOPE && t->log_teff[i] > WR_LOG_TEFF)
        return HRT_PHASE_WR;
    return t->log_teff[i] > BSG_LOG_TEFF ? HRT_PHASE_BSG : HRT_PHASE_RSG;
}

/* Phase of sample i in the segment from keypoint `from` to keypoint `to`
 * (l_from: log L at `from`); ph, the phase before, stays after a keypoint
 * hrtrail gives no phase to. */
static int segment_phase(const trail_import_track *t, size_t i, const char *from, const char *to, double l_from,
                         int massive, int ph)
{
    if (!strcmp(from, "birthline"))
        return HRT_PHASE_PRE_MS;
    if (!strcmp(from, "zams"))
        return HRT_PHASE_MS;
    if (!strcmp(from, "tams"))
        return !strcmp(to, "envelope_loss") && t->log_l[i] >= l_from + RGB_RISE_LOG_L ? HRT_PHASE_RGB
                                                                                       : HRT_PHASE_SUBGIANT;
    if (!strcmp(from, "rgb_base"))
        return HRT_PHASE_RGB;
    if (!strcmp(from, "he_ignition"))
        return HRT_PHASE_CHEB;
    if (!strcmp(from, "cheb_start"))
        return massive ? supergiant_phase(t, i) : HRT_PHASE_CHEB;
    if (!strcmp(from, "cheb_end"))
        return massive ? supergiant_phase(t, i) : HRT_PHASE_EAGB;
    if (!strcmp(from, "first_pulse"))
        return HRT_PHASE_TPAGB;
    if (!strcmp(from, "agb_end"))
        return HRT_PHASE_POST_AGB;
    if (!strcmp(from, "envelope_loss"))
        return HRT_PHASE_POST_RGB;
    return ph;
}

/* Phases from the keypoints for a table without a phase column: pre-main
 * sequence before the first, each segment's phase, the remnant's at the end. */
static void default_phases(trail_import_track *t, const hrt_route_spec *r, size_t nk)
{
    int massive = route_has(r, "core_collapse");
    int ph = HRT_PHASE_MS;
    size_t s_last = t->kp.sample[nk - 1];
    for (size_t i = 0; i < t->kp.sample[0]; i++)
        t->phase[i] = HRT_PHASE_PRE_MS;
    for (size_t k = 0; k + 1 < nk; k++) {
        size_t s0 = t->kp.sample[k], s1 = t->kp.sample[k + 1];
        for (size_t i = s0; i < s1; i++) {
            ph = segment_phase(t, i, r->keypoint_names[k], r->keypoint_names[k + 1], t->log_l[s0], massive, ph);
            t->phase[i] = ph;
        }
    }
    int remnant = t->report.remnant;
    t->phase[s_last] = remnant == HRT_REMNANT_NS     ? HRT_PHASE_NS
                       : remnant == HRT_REMNANT_BH   ? HRT_PHASE_BH
                       : remnant != HRT_REMNANT_NONE ? HRT_PHASE_WD
                                                     : ph;
}

void trail_import_finish_track(hrt_import *imp, trail_import_track *t)
{
    const hrt_route_spec *r = &imp->spec[t->report.route];
    size_t nk = t->kp.n_found;
    t->report.n_keypoints = nk;
    t->report.truncated = nk < r->n_keypoints;
    for (size_t k = 0; k < nk; k++) {
        t->report.keypoint_age_yr[k] = t->age_yr[t->kp.sample[k]];
        t->report.keypoint_line[k] = t->pos[t->kp.sample[k]].line;
        t->report.keypoint_how[k] = t->kp.how[k];
    }
    if (t->report.truncated)
        trail_import_note(t, "truncated at keypoint %s (%s)", r->keypoint_names[nk - 1], t->kp.why);
    assign_remnant(t, r, nk);
    if (!t->has_column[TRAIL_MAP_PHASE])
        default_phases(t, r, nk);
}

/* ---- route boundaries --------------------------------------------------------- */

/* Relative difference within which a metallicity given with route
 * boundaries names a group's Z. */
#define Z_MATCH_REL 1e-6

static int same_z(double a, double b) { return fabs(a - b) <= Z_MATCH_REL * fmax(fabs(a), fabs(b)); }

/* The user's boundaries for metallicity z: its own setting, else the one
 * for every metallicity (z NaN); NULL if none. */
static const trail_user_bounds *user_bounds_for(const hrt_import *imp, double z)
{
    const trail_user_bounds *all = NULL;
    for (size_t i = 0; i < imp->n_user_bounds; i++) {
        const trail_user_bounds *u = &imp->user_bounds[i];
        if (isnan(u->z))
            all = u;
        else if (same_z(u->z, z))
            return u;
    }
    return all;
}

int trail_import_check_user_z(const hrt_import *imp, hrt_error *err)
{
    for (size_t i = 0; i < imp->n_user_bounds; i++) {
        const trail_user_bounds *u = &imp->user_bounds[i];
        size_t g = 0;
        while (!isnan(u->z) && g < imp->n_z && !same_z(u->z, imp->z[g]))
            g++;
        if (!isnan(u->z) && g == imp->n_z && !imp->lenient)
            return trail_set_error(err, HRT_E_INVALID, "route boundaries given for Z = %g, but no track in the grid "
                                   "has that metallicity", u->z);
        if (u->n + 1 != imp->n_routes) {
            char which[48] = "every metallicity";
            if (!isnan(u->z))
                snprintf(which, sizeof which, "Z = %g", u->z);
            return trail_set_error(err, HRT_E_INVALID, "route boundaries for %s: %zu masses given, the %zu routes "
                                   "need %zu", which, u->n, imp->n_routes, imp->n_routes - 1);
        }
    }
    return HRT_OK;
}

/* The user's boundaries u must separate the routes' tracks of group g. */
static int check_user_bounds(const hrt_import *imp, size_t g, const trail_user_bounds *u, const size_t *idx,
                             size_t n, hrt_error *err)
{
    for (size_t a = 0; a < n; a++) {
        const trail_import_track *t = &imp->t[idx[a]];
        double m = t->report.initial_mass_msun;
        for (size_t k = 0; k < u->n; k++) {
            int below = t->report.route <= (int)k;
            if (below ? m < u->mass_msun[k] : m > u->mass_msun[k])
                continue;
            return trail_set_error(err, HRT_E_INVALID, "Z = %g: route boundary %zu at %g Msun (given) does not "
                                   "separate the routes: %s (%g Msun) follows route '%s', so the boundary must lie "
                                   "%s it", imp->z[g], k, u->mass_msun[k], t->path, m,
                                   imp->spec[t->report.route].name, below ? "above" : "below");
        }
    }
    return HRT_OK;
}

/* Unless forced: every route of the layout has a track at this
 * metallicity, and the boundaries increase. */
static int check_collapse(const hrt_import *imp, size_t g, const size_t *idx, size_t n, hrt_error *err)
{
    size_t count[TRAIL_MAX_ROUTES] = {0};
    for (size_t a = 0; a < n; a++)
        count[imp->t[idx[a]].report.route]++;
    for (size_t r = 0; r < imp->n_routes; r++) {
        if (count[r] > 0)
            continue;
        size_t most = 0;
        for (size_t q = 1; q < imp->n_routes; q++)
            most = count[q] > count[most] ? q : most;
        return trail_set_error(err, HRT_E_INVALID, "Z = %g: route '%s' has no track (%zu of the %zu tracks follow "
                               "'%s'): the routes collapse; give the columns that find the keypoints (phase or "
                               "centre composition), route layouts the tracks follow (--routes), or force the "
                               "import (--force, hrt_import_set_force())", imp->z[g], imp->spec[r].name, count[most],
                               n, imp->spec[most].name);
    }
    for (size_t k = 1; k + 1 < imp->n_routes; k++)
        if (!(imp->boundary[g][k] > imp->boundary[g][k - 1]))
            return trail_set_error(err, HRT_E_INVALID, "Z = %g: route boundaries %zu and %zu are both %g Msun: route "
                                   "'%s' is empty; force the import (--force, hrt_import_set_force()) to write it",
                                   imp->z[g], k - 1, k, imp->boundary[g][k], imp->spec[k].name);
    return HRT_OK;
}

int trail_import_group_boundaries(hrt_import *imp, size_t g, const size_t *idx, size_t n, hrt_error *err)
{
    double *bound = imp->boundary[g];
    const trail_user_bounds *u = user_bounds_for(imp, imp->z[g]);
    if (u) {
        int rc = check_user_bounds(imp, g, u, idx, n, err);
        if (rc != HRT_OK)
            return rc;
        for (size_t k = 0; k + 1 < imp->n_routes; k++)
            bound[k] = u->mass_msun[k];
    } else {
        for (size_t k = 0; k + 1 < imp->n_routes; k++) {
            trail_boundary_scan scan = trail_boundary_start(k);
            for (size_t a = 0; a < n; a++)
                trail_boundary_see(&scan, imp->t[idx[a]].report.route, imp->t[idx[a]].report.initial_mass_msun);
            bound[k] = trail_boundary_place(&scan, bound);
        }
    }
    return imp->force ? HRT_OK : check_collapse(imp, g, idx, n, err);
}
