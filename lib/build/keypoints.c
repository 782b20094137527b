/* Keypoint detection on raw tracks and route assignment from the keypoints a
 * track reaches.  Every criterion and threshold is documented in
 * tracks/FORMAT.md ("Keypoint criteria"); the constants below are the ones
 * named there. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "util/schema.h"
#include "util/util.h"

/* Thresholds (tracks/FORMAT.md, "Keypoint criteria"). */
#define ZAMS_DX 0.001          /* central H below its initial value by this: burning has started */
#define TAMS_X 1e-6            /* central H at or below this: exhausted */
#define RGB_SLOPE 0.10         /* cooling as it brightens, -dlog Teff / dlog L at most this, ... */
#define RGB_SPAN 0.05          /* ... over the next 0.05 dex of rising luminosity */
#define HE_DY 0.01             /* central He below its maximum by this: helium burns */
#define CHEB_END_Y 1e-4        /* central He at or below this: exhausted */
#define PULSE_CO_HE 0.975      /* CO core at least this fraction of the He core: thin intershell */
#define ENV_FRAC 0.01          /* envelope M - M_He at most this fraction of M: envelope gone */
#define ENV_TOL 1e-6           /* relative round-off allowance of that comparison */
#define WD_LOG_L 1.0           /* white dwarf cooling: log L at or below min(this, ...) */
#define WD_FADE 0.3            /* ... and this many dex below the previous keypoint */
#define WD_COMPACT 0.5         /* and log R within this many dex of the white-dwarf radius */
#define CC_LOG_R 0.0           /* core collapse: last sample still extended (log R > this) */
#define CC_CO 1.0              /* and a CO core of at least this many Msun */

enum {
    KP_ZAMS = 0, KP_TAMS, KP_RGB_BASE, KP_HE_IGNITION, KP_CHEB_START, KP_CHEB_END, KP_FIRST_PULSE,
    KP_AGB_END, KP_ENVELOPE_LOSS, KP_WD_ONSET, KP_CORE_COLLAPSE, KP_N_KNOWN
};
static const char known_names[KP_N_KNOWN][16] = {
    "zams", "tams", "rgb_base", "he_ignition", "cheb_start", "cheb_end", "first_pulse",
    "agb_end", "envelope_loss", "wd_onset", "core_collapse",
};

static int known_index(const char *name)
{
    for (int k = 0; k < KP_N_KNOWN; k++)
        if (strcmp(name, known_names[k]) == 0)
            return k;
    return -1;
}

#define NOT_FOUND ((size_t)-1)

/* Search context of one track. */
typedef struct kctx {
    const hrt_kp_columns *c;
    char *why;
    size_t why_len;
} kctx;

static size_t fail(kctx *k, const char *fmt, const char *a)
{
    snprintf(k->why, k->why_len, fmt, a);
    return NOT_FOUND;
}

static int is_phase(const kctx *k, size_t s, int p) { return k->c->phase && k->c->phase[s] == p; }

/* First sample after p whose phase is one of the list (terminated by 0). */
static size_t first_phase(const kctx *k, size_t p, const int *ph)
{
    if (!k->c->phase)
        return NOT_FOUND;
    for (size_t s = p + 1; s < k->c->n; s++)
        for (const int *q = ph; *q; q++)
            if (k->c->phase[s] == *q)
                return s;
    return NOT_FOUND;
}

static double envelope(const kctx *k, size_t s) { return k->c->mass_msun[s] - k->c->he_core_mass_msun[s]; }

static int envelope_gone(const kctx *k, size_t s)
{
    return envelope(k, s) <= ENV_FRAC * k->c->mass_msun[s] * (1.0 + ENV_TOL);
}

/* First sample after p where helium starts to burn: centre He below its
 * maximum since p by HE_DY. */
static size_t he_drop(const kctx *k, size_t p)
{
    const double *y = k->c->central_y;
    double ymax = y[p];
    for (size_t s = p + 1; s < k->c->n; s++) {
        if (y[s] > ymax)
            ymax = y[s];
        if (y[s] <= ymax - HE_DY)
            return s;
    }
    return NOT_FOUND;
}

static size_t max_log_l(const kctx *k, size_t a, size_t b)
{
    size_t m = a;
    for (size_t s = a; s <= b; s++)
        if (k->c->log_l_lsun[s] > k->c->log_l_lsun[m])
            m = s;
    return m;
}

static size_t min_log_l(const kctx *k, size_t a, size_t b)
{
    size_t m = a;
    for (size_t s = a; s <= b; s++)
        if (k->c->log_l_lsun[s] < k->c->log_l_lsun[m])
            m = s;
    return m;
}

/* Keypoint `which` strictly after sample p (p = NOT_FOUND: from the start).
 * prev_kind is the known index of the previous keypoint of the layout (-1). */
static size_t find_one(kctx *k, int which, size_t p, int prev_kind, int *how)
{
    const hrt_kp_columns *c = k->c;
    size_t n = c->n, s0 = p == NOT_FOUND ? 0 : p + 1;
    *how = HRT_KP_FOUND_BY_COLUMNS;
    if (s0 >= n)
        return fail(k, "%s: the track ends at the previous keypoint", known_names[which]);
    switch (which) {
    case KP_ZAMS:
        if (c->central_x) {
            double x0 = c->central_x[s0];
            for (size_t s = s0 + 1; s < n; s++) {
                if (c->central_x[s] > x0)
                    x0 = c->central_x[s];
                if (c->central_x[s] <= x0 - ZAMS_DX)
                    return s - 1;
            }
            return fail(k, "%s: central_x never falls 0.001 below its initial value", "zams");
        }
        if (c->phase) {
            *how = HRT_KP_FOUND_BY_PHASE;
            for (size_t s = s0; s < n; s++)
                if (is_phase(k, s, HRT_PHASE_MS))
                    return s;
            return fail(k, "%s: no central_x column and no sample of phase ms", "zams");
        }
        *how = HRT_KP_FOUND_BY_START;
        return s0;
    case KP_TAMS:
        if (c->central_x) {
            for (size_t s = s0; s < n; s++)
                if (c->central_x[s] <= TAMS_X)
                    return s;
            return fail(k, "%s: central_x never falls to 1e-6", "tams");
        }
        if (c->phase) {
            *how = HRT_KP_FOUND_BY_PHASE;
            for (size_t s = s0; s < n; s++)
                if (!is_phase(k, s, HRT_PHASE_MS) && !is_phase(k, s, HRT_PHASE_PRE_MS))
                    return s;
            return fail(k, "%s: no sample after the main sequence (phase column)", "tams");
        }
        return fail(k, "%s: needs a central_x or phase column", "tams");
    case KP_RGB_BASE: {
        for (size_t s = s0; s + 1 < n; s++) {
            int ok = 1, reached = 0;
            for (size_t j = s + 1; j < n && ok; j++) {
                double dl = c->log_l_lsun[j] - c->log_l_lsun[s], dt = c->log_teff_k[j] - c->log_teff_k[s];
                if (!(dl > 0.0) || !(dt < 0.0) || -dt > RGB_SLOPE * dl)
                    ok = 0;
                else if (dl >= RGB_SPAN)
                    reached = 1;
                if (reached)
                    break;
            }
            if (ok && reached)
                return s;
        }
        if (c->phase) {
            static const int ph[] = {HRT_PHASE_RGB, 0};
            *how = HRT_KP_FOUND_BY_PHASE;
            size_t s = first_phase(k, p, ph);
            if (s != NOT_FOUND)
                return s;
        }
        return fail(k, "%s: the track never climbs 0.05 dex in L along a giant branch (cooling, with "
                       "-dlog Teff/dlog L <= 0.1)", "rgb_base");
    }
    case KP_HE_IGNITION: {
        size_t e = NOT_FOUND;
        if (c->central_y)
            e = he_drop(k, s0 - (s0 > 0));
        else if (c->phase) {
            static const int ph[] = {HRT_PHASE_CHEB, 0};
            *how = HRT_KP_FOUND_BY_PHASE;
            e = first_phase(k, s0 - 1 + (s0 == 0), ph);
        } else
            return fail(k, "%s: needs a central_y or phase column", "he_ignition");
        if (e == NOT_FOUND || e < s0)
            return fail(k, "%s: helium never starts burning in the core (central_y or phase)", "he_ignition");
        return max_log_l(k, s0, e);
    }
    case KP_CHEB_START: {
        if (!c->central_y)
            return fail(k, "%s: needs a central_y column", "cheb_start");
        size_t e = he_drop(k, s0 - (s0 > 0));
        if (e == NOT_FOUND || e < s0)
            return fail(k, "%s: central_y never falls 0.01 below its maximum", "cheb_start");
        /* after a separate ignition (the tip of the giant branch) the zero-age
         * core-helium-burning star is the luminosity minimum that follows */
        if (prev_kind == KP_HE_IGNITION)
            return min_log_l(k, s0, e);
        return e;
    }
    case KP_CHEB_END:
        if (c->central_y) {
            for (size_t s = s0; s < n; s++)
                if (c->central_y[s] <= CHEB_END_Y)
                    return s;
            return fail(k, "%s: central_y never falls to 1e-4", "cheb_end");
        }
        if (c->phase) {
            static const int ph[] = {HRT_PHASE_EAGB, HRT_PHASE_TPAGB, HRT_PHASE_POST_AGB, HRT_PHASE_WD, 0};
            *how = HRT_KP_FOUND_BY_PHASE;
            size_t s = first_phase(k, p, ph);
            if (s != NOT_FOUND)
                return s;
            return fail(k, "%s: no sample after core helium burning (phase column)", "cheb_end");
        }
        return fail(k, "%s: needs a central_y or phase column", "cheb_end");
    case KP_FIRST_PULSE:
        if (c->he_core_mass_msun && c->co_core_mass_msun) {
            for (size_t s = s0; s < n; s++)
                if (c->he_core_mass_msun[s] > 0.0 && c->co_core_mass_msun[s] >= PULSE_CO_HE * c->he_core_mass_msun[s])
                    return s;
            if (!c->phase)
                return fail(k, "%s: the CO core never reaches 97.5 %% of the He core", "first_pulse");
        }
        if (c->phase) {
            static const int ph[] = {HRT_PHASE_TPAGB, 0};
            *how = HRT_KP_FOUND_BY_PHASE;
            size_t s = first_phase(k, p, ph);
            if (s != NOT_FOUND)
                return s;
            return fail(k, "%s: no thermal pulses (core masses or phase tpagb)", "first_pulse");
        }
        return fail(k, "%s: needs he_core_mass_msun and co_core_mass_msun or a phase column", "first_pulse");
    case KP_AGB_END:
    case KP_ENVELOPE_LOSS:
        if (c->mass_msun && c->he_core_mass_msun) {
            if (which == KP_AGB_END) {
                /* the tip of the AGB: from the loss of the envelope, the
                 * luminosity maximum before the star fades 0.3 dex below it */
                size_t senv = NOT_FOUND;
                for (size_t s = s0; s < n && senv == NOT_FOUND; s++)
                    if (envelope_gone(k, s))
                        senv = s;
                if (senv != NOT_FOUND) {
                    size_t smax = senv;
                    for (size_t s = senv; s < n && c->log_l_lsun[s] >= c->log_l_lsun[smax] - WD_FADE; s++)
                        if (c->log_l_lsun[s] > c->log_l_lsun[smax])
                            smax = s;
                    return smax;
                }
            } else {
                for (size_t s = s0; s < n; s++)
                    if (envelope_gone(k, s))
                        return s;
            }
            if (!c->phase)
                return fail(k, "%s: the envelope never falls to 1 %% of the mass", known_names[which]);
        }
        if (c->phase) {
            static const int ph_agb[] = {HRT_PHASE_POST_AGB, HRT_PHASE_WD, 0};
            static const int ph_rgb[] = {HRT_PHASE_POST_RGB, HRT_PHASE_WD, 0};
            *how = HRT_KP_FOUND_BY_PHASE;
            size_t s = first_phase(k, p, which == KP_AGB_END ? ph_agb : ph_rgb);
            if (s != NOT_FOUND)
                return s;
            return fail(k, "%s: the envelope is never lost (mass_msun and he_core_mass_msun, or phase)", known_names[which]);
        }
        return fail(k, "%s: needs mass_msun and he_core_mass_msun or a phase column", known_names[which]);
    case KP_WD_ONSET: {
        double lp = p == NOT_FOUND ? c->log_l_lsun[0] : c->log_l_lsun[p];
        double lim = fmin(WD_LOG_L, lp - WD_FADE);
        for (size_t s = s0; s < n; s++) {
            if (c->log_l_lsun[s] > lim)
                continue;
            if (c->mass_msun) {
                double rwd = hrt_wd_radius_rsun(c->mass_msun[s]);
                double lr = trail_log_r_from(c->log_l_lsun[s], c->log_teff_k[s]);
                if (!(isfinite(rwd) && lr <= log10(rwd) + WD_COMPACT))
                    continue;
            }
            return s;
        }
        if (c->phase) {
            static const int ph[] = {HRT_PHASE_WD, 0};
            *how = HRT_KP_FOUND_BY_PHASE;
            size_t s = first_phase(k, p, ph);
            if (s != NOT_FOUND)
                return s;
        }
        return fail(k, "%s: the star never fades onto a white-dwarf cooling track (log L <= min(1, L_prev - "
                       "0.3) with a white-dwarf radius)", "wd_onset");
    }
    case KP_CORE_COLLAPSE: {
        size_t s = n - 1;
        if (s >= s0) {
            double lr = trail_log_r_from(c->log_l_lsun[s], c->log_teff_k[s]);
            if (lr > CC_LOG_R && (!c->co_core_mass_msun || c->co_core_mass_msun[s] >= CC_CO))
                return s;
            if (c->phase && (c->phase[s] == HRT_PHASE_NS || c->phase[s] == HRT_PHASE_BH)) {
                *how = HRT_KP_FOUND_BY_PHASE;
                return s;
            }
        }
        return fail(k, "%s: the track does not end as an extended star with a CO core >= 1 Msun", "core_collapse");
    }
    default:
        break;
    }
    return fail(k, "%s: no criterion", "?");
}

int hrt_keypoints_find(const hrt_kp_columns *c, const hrt_route_spec *route, hrt_kp_result *out, hrt_error *err)
{
    if (!c || !route || !out)
        return trail_set_error(err, HRT_E_NULL, "hrt_keypoints_find: NULL argument");
    memset(out, 0, sizeof *out);
    if (!c->age_yr || !c->log_l_lsun || !c->log_teff_k)
        return trail_set_error(err, HRT_E_NULL, "hrt_keypoints_find: age, log L and log Teff are required");
    if (c->n < 2)
        return trail_set_error(err, HRT_E_INVALID, "hrt_keypoints_find: %zu samples, at least 2 needed", c->n);
    if (route->n_keypoints < 1 || route->n_keypoints > HRT_IMPORT_MAX_KP || !route->keypoint_names)
        return trail_set_error(err, HRT_E_INVALID, "hrt_keypoints_find: route has %zu keypoints (1..%d)",
                             route->n_keypoints, HRT_IMPORT_MAX_KP);
    for (size_t s = 1; s < c->n; s++)
        if (!(c->age_yr[s] > c->age_yr[s - 1]))
            return trail_set_error(err, HRT_E_INVALID, "hrt_keypoints_find: age[%zu] does not exceed age[%zu]", s,
                                 s - 1);
    kctx k = {c, out->why, sizeof out->why};
    size_t p = NOT_FOUND;
    int prev_kind = -1;
    for (size_t q = 0; q < route->n_keypoints; q++) {
        const char *name = route->keypoint_names[q];
        size_t s = NOT_FOUND;
        int how = 0, kind = known_index(name);
        if (c->flag) /* an explicit flag wins */
            for (size_t t = p == NOT_FOUND ? 0 : p + 1; t < c->n && s == NOT_FOUND; t++)
                if (c->flag[t] && strcmp(c->flag[t], name) == 0) {
                    s = t;
                    how = HRT_KP_FOUND_BY_FLAG;
                }
        if (s == NOT_FOUND) {
            if (kind < 0) {
                snprintf(out->why, sizeof out->why, "%s: not a keypoint hrtrail can detect; flag it in the "
                         "keypoints column", name);
                break;
            }
            s = find_one(&k, kind, p, prev_kind, &how);
        }
        if (s == NOT_FOUND)
            break;
        if (p != NOT_FOUND && s <= p) { /* criteria search after p; flags too */
            snprintf(out->why, sizeof out->why, "%s: found at sample %zu, not after the previous keypoint", name, s);
            break;
        }
        out->sample[q] = s;
        out->how[q] = how;
        out->n_found = q + 1;
        out->why[0] = '\0';
        p = s;
        prev_kind = kind;
    }
    return HRT_OK;
}

int hrt_keypoints_route(const hrt_kp_columns *c, size_t n_routes, const hrt_route_spec *routes, int *route,
                        unsigned *candidates, hrt_kp_result *out, hrt_error *err)
{
    if (!c || !routes || !route)
        return trail_set_error(err, HRT_E_NULL, "hrt_keypoints_route: NULL argument");
    if (n_routes < 1 || n_routes > TRAIL_MAX_ROUTES)
        return trail_set_error(err, HRT_E_INVALID, "hrt_keypoints_route: %zu routes (1..%d)", n_routes, TRAIL_MAX_ROUTES);
    *route = -1;
    if (candidates)
        *candidates = 0;
    hrt_kp_result best, cur;
    memset(&best, 0, sizeof best);
    int best_complete = 0;
    size_t best_n = 0;
    unsigned tie = 0;
    unsigned fits = (1u << n_routes) - 1u; /* routes having every flagged keypoint */
    if (c->flag)
        for (size_t s = 0; s < c->n; s++) {
            if (!c->flag[s] || !c->flag[s][0])
                continue;
            unsigned has = 0;
            for (size_t r = 0; r < n_routes; r++)
                for (size_t k = 0; k < routes[r].n_keypoints; k++)
                    if (routes[r].keypoint_names[k] && strcmp(c->flag[s], routes[r].keypoint_names[k]) == 0)
                        has |= 1u << r;
            if (!has)
                return trail_set_error(err, HRT_E_INVALID, "sample %zu is flagged '%s', a keypoint of no route", s,
                                     c->flag[s]);
            fits &= has;
        }
    if (!fits)
        return trail_set_error(err, HRT_E_INVALID, "the flagged keypoints do not all belong to one route");
    for (size_t r = 0; r < n_routes; r++) {
        if (!(fits & (1u << r)))
            continue;
        int rc = hrt_keypoints_find(c, &routes[r], &cur, err);
        if (rc != HRT_OK)
            return rc;
        int complete = cur.n_found == routes[r].n_keypoints;
        size_t nf = cur.n_found;
        if (nf < 2)
            continue;
        int better = *route < 0 || (complete && !best_complete) ||
                     (complete == best_complete && nf > best_n);
        int same = *route >= 0 && complete == best_complete && nf == best_n;
        if (better) {
            *route = (int)r;
            best = cur;
            best_complete = complete;
            best_n = nf;
            tie = 1u << r;
        } else if (same) {
            tie |= 1u << r;
        }
    }
    if (*route < 0) {
        /* report the reason on the first route */
        if (out)
            hrt_keypoints_find(c, &routes[0], out, NULL);
        return HRT_OK;
    }
    if (candidates)
        *candidates = tie;
    if (out)
        *out = best;
    return HRT_OK;
}
