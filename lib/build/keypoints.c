/* Keypoint detection on raw tracks and route assignment from the keypoints a
 * track reaches.  Every criterion and threshold is documented in
 * tracks/FORMAT.md ("Keypoint criteria"); the constants below are the ones
 * named there.  Precedence: a flag, then the phase column where it marks
 * the keypoint, then the physical criterion, then an estimate from the
 * phase column. */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>

#include "build/build.h"
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
#define CHEB_FRACTION 0.99     /* a collapsing star's helium burning: this fraction of cheb_start to collapse */

/* A fraction as the percentage messages give. */
#define PERCENT(f) (100.0 * (f))

#define NOT_FOUND ((size_t)-1)

/* Keypoint kinds hrtrail can detect, in the order of known_names[]. */
enum {
    KP_ZAMS = 0, KP_TAMS, KP_RGB_BASE, KP_HE_IGNITION, KP_CHEB_START, KP_CHEB_END, KP_FIRST_PULSE,
    KP_AGB_END, KP_ENVELOPE_LOSS, KP_WD_ONSET, KP_CORE_COLLAPSE, KP_BIRTHLINE, KP_N_KNOWN
};

/* The search for one keypoint on one track. */
typedef struct kp_search {
    const hrt_kp_columns *c;
    size_t prev;   /* sample of the previous keypoint; NOT_FOUND before the first */
    size_t from;   /* first sample searched: the one after prev */
    int prev_kind; /* KP_* of the previous keypoint, -1 if none or not a known one */
    int how;       /* HRT_KP_FOUND_* of the sample returned */
    char *why;     /* where the reason for NOT_FOUND goes */
    size_t why_len;
} kp_search;

/* NOT_FOUND, with the reason in k->why. */
static size_t fail(kp_search *k, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static size_t fail(kp_search *k, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(k->why, k->why_len, fmt, ap);
    va_end(ap);
    return NOT_FOUND;
}

/* ---- the phase column ------------------------------------------------------- */

/* Post-main-sequence phases of a star that keeps its envelope: the first of
 * them marks the TAMS. */
static const int after_ms[] = {HRT_PHASE_SUBGIANT, HRT_PHASE_RGB, HRT_PHASE_CHEB, HRT_PHASE_BSG, HRT_PHASE_RSG,
                               HRT_PHASE_WR, 0};

static int in_list(int p, const int *ph)
{
    for (const int *code = ph; *code; code++)
        if (p == *code)
            return 1;
    return 0;
}

/* First sample at or after s0 whose phase is one of the list (terminated by 0). */
static size_t first_phase(const kp_search *k, size_t s0, const int *ph)
{
    if (!k->c->phase)
        return NOT_FOUND;
    for (size_t s = s0; s < k->c->n; s++)
        if (in_list(k->c->phase[s], ph))
            return s;
    return NOT_FOUND;
}

/* A sample found on the phase column: so reported. */
static size_t marked(kp_search *k, size_t s)
{
    if (s != NOT_FOUND)
        k->how = HRT_KP_FOUND_BY_PHASE;
    return s;
}

/* The phase marker of most keypoints: the first sample after the previous
 * keypoint in one of the phases ph. */
static size_t by_phase(kp_search *k, const int *ph) { return marked(k, first_phase(k, k->from, ph)); }

static double envelope(const kp_search *k, size_t s) { return k->c->mass_msun[s] - k->c->he_core_mass_msun[s]; }

static int envelope_gone(const kp_search *k, size_t s)
{
    return envelope(k, s) <= ENV_FRAC * k->c->mass_msun[s] * (1.0 + ENV_TOL);
}

/* First sample after p where helium starts to burn: centre He below its
 * maximum since p by HE_DY. */
static size_t he_drop(const kp_search *k, size_t p)
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

static size_t max_log_l(const kp_search *k, size_t a, size_t b)
{
    size_t m = a;
    for (size_t s = a; s <= b; s++)
        if (k->c->log_l_lsun[s] > k->c->log_l_lsun[m])
            m = s;
    return m;
}

static size_t min_log_l(const kp_search *k, size_t a, size_t b)
{
    size_t m = a;
    for (size_t s = a; s <= b; s++)
        if (k->c->log_l_lsun[s] < k->c->log_l_lsun[m])
            m = s;
    return m;
}

/* ---- one function per keypoint (tracks/FORMAT.md, "Keypoint criteria") ----
 * Each tries, in this order: the phase marker (the phase column says where
 * the keypoint is), the physical criterion on the columns, and for a few
 * keypoints an estimate from the phase column that marks nothing for them. */

static size_t find_zams(kp_search *k)
{
    static const int ms[] = {HRT_PHASE_MS, 0};
    const hrt_kp_columns *c = k->c;
    size_t s = by_phase(k, ms);
    if (s != NOT_FOUND)
        return s;
    if (c->central_x) {
        double x0 = c->central_x[k->from];
        for (s = k->from + 1; s < c->n; s++) {
            if (c->central_x[s] > x0)
                x0 = c->central_x[s];
            if (c->central_x[s] <= x0 - ZAMS_DX)
                return s - 1;
        }
        return fail(k, "zams: central_x never falls %g below its initial value", ZAMS_DX);
    }
    if (c->phase)
        return fail(k, "zams: no central_x column and no sample of phase %s", hrt_phase_key(HRT_PHASE_MS));
    k->how = HRT_KP_FOUND_BY_START;
    return k->from;
}

/* The birthline, where a track with a pre-main sequence starts: its first
 * sample (a layout that has it puts it before zams). */
static size_t find_birthline(kp_search *k)
{
    k->how = HRT_KP_FOUND_BY_START;
    return k->from;
}

static size_t find_tams(kp_search *k)
{
    const hrt_kp_columns *c = k->c;
    size_t s = by_phase(k, after_ms);
    if (s != NOT_FOUND)
        return s;
    if (c->central_x) {
        for (s = k->from; s < c->n; s++)
            if (c->central_x[s] <= TAMS_X)
                return s;
        if (!c->phase)
            return fail(k, "tams: central_x never falls to " TRAIL_STR(TAMS_X));
    }
    if (c->phase) {
        /* the estimate: the main sequence ends where the phase column leaves it */
        for (s = k->from; s < c->n; s++)
            if (c->phase[s] != HRT_PHASE_MS && c->phase[s] != HRT_PHASE_PRE_MS)
                return marked(k, s);
        return fail(k, "tams: no sample after the main sequence (central_x or phase column)");
    }
    return fail(k, "tams: needs a central_x or phase column");
}

/* Does the track from sample s on cool as it brightens (slope at most
 * RGB_SLOPE) until it is RGB_SPAN brighter? */
static int climbs_giant_branch(const hrt_kp_columns *c, size_t s)
{
    for (size_t j = s + 1; j < c->n; j++) {
        double dl = c->log_l_lsun[j] - c->log_l_lsun[s], dt = c->log_teff_k[j] - c->log_teff_k[s];
        if (!(dl > 0.0) || !(dt < 0.0) || -dt > RGB_SLOPE * dl)
            return 0;
        if (dl >= RGB_SPAN)
            return 1;
    }
    return 0;
}

static size_t find_rgb_base(kp_search *k)
{
    static const int rgb[] = {HRT_PHASE_RGB, 0};
    const hrt_kp_columns *c = k->c;
    size_t s = by_phase(k, rgb);
    if (s != NOT_FOUND)
        return s;
    for (s = k->from; s + 1 < c->n; s++)
        if (climbs_giant_branch(c, s))
            return s;
    return fail(k, "rgb_base: no %s sample, and the track never climbs %g dex in L along a giant branch (cooling, "
                   "with -dlog Teff/dlog L <= %g)", hrt_phase_key(HRT_PHASE_RGB), RGB_SPAN, RGB_SLOPE);
}

static size_t find_he_ignition(kp_search *k)
{
    static const int cheb[] = {HRT_PHASE_CHEB, 0};
    const hrt_kp_columns *c = k->c;
    size_t s0 = k->from;
    size_t e = marked(k, first_phase(k, s0, cheb));
    if (e == NOT_FOUND && c->central_y) {
        k->how = HRT_KP_FOUND_BY_COLUMNS;
        e = he_drop(k, s0 - (s0 > 0));
    } else if (e == NOT_FOUND && !c->phase)
        return fail(k, "he_ignition: needs a central_y or phase column");
    if (e == NOT_FOUND || e < s0)
        return fail(k, "he_ignition: helium never starts burning in the core (central_y or phase %s)",
                    hrt_phase_key(HRT_PHASE_CHEB));
    return max_log_l(k, s0, e);
}

/* The phase marker of cheb_start: after a separate ignition (the tip of the
 * giant branch), the luminosity minimum of the core-helium-burning phase
 * that follows, up to its last sample (the zero-age core-helium-burning
 * star); without one (supergiants), the first sample of a helium-burning
 * phase after the previous keypoint. */
static size_t cheb_start_marker(kp_search *k)
{
    static const int cheb[] = {HRT_PHASE_CHEB, 0};
    static const int burning[] = {HRT_PHASE_CHEB, HRT_PHASE_BSG, HRT_PHASE_RSG, HRT_PHASE_WR, 0};
    if (k->prev_kind != KP_HE_IGNITION)
        return by_phase(k, burning);
    size_t a = first_phase(k, k->from, cheb);
    if (a == NOT_FOUND)
        return NOT_FOUND;
    size_t e = a;
    while (e + 1 < k->c->n && k->c->phase[e + 1] == HRT_PHASE_CHEB)
        e++;
    return marked(k, min_log_l(k, k->from, e));
}

static size_t find_cheb_start(kp_search *k)
{
    const hrt_kp_columns *c = k->c;
    size_t s0 = k->from;
    size_t s = cheb_start_marker(k);
    if (s != NOT_FOUND)
        return s;
    if (!c->central_y)
        return fail(k, "cheb_start: needs a central_y column or a phase column with %s (or %s, %s, %s)",
                    hrt_phase_key(HRT_PHASE_CHEB), hrt_phase_key(HRT_PHASE_BSG), hrt_phase_key(HRT_PHASE_RSG),
                    hrt_phase_key(HRT_PHASE_WR));
    size_t e = he_drop(k, s0 - (s0 > 0));
    if (e == NOT_FOUND || e < s0)
        return fail(k, "cheb_start: central_y never falls %g below its maximum", HE_DY);
    /* after a separate ignition (the tip of the giant branch) the zero-age
     * core-helium-burning star is the luminosity minimum that follows */
    if (k->prev_kind == KP_HE_IGNITION)
        return min_log_l(k, s0, e);
    return e;
}

/* Whether the last sample is a core collapse by the phase column: labelled
 * with its remnant (ns, bh), or a star whose CO core the remnant rule
 * disrupts by pair instability (a supernova that leaves no remnant to label). */
static int ends_collapsing(const hrt_kp_columns *c, size_t last)
{
    if (c->phase[last] == HRT_PHASE_NS || c->phase[last] == HRT_PHASE_BH)
        return 1;
    int kind = HRT_REMNANT_NS;
    double m_rem;
    return c->co_core_mass_msun && c->mass_msun &&
           hrt_collapse_remnant(fmin(c->co_core_mass_msun[last], c->mass_msun[last]), c->mass_msun[last], &kind,
                                &m_rem) == HRT_OK &&
           kind == HRT_REMNANT_NONE;
}

/* The estimate of cheb_end for a star that collapses (the phase column marks
 * no end of helium burning in a supergiant): the last sample before
 * CHEB_FRACTION of the time from cheb_start to the collapse. */
static size_t cheb_end_estimate(kp_search *k)
{
    const hrt_kp_columns *c = k->c;
    size_t last = c->n - 1;
    if (!c->phase || k->prev_kind != KP_CHEB_START || k->from >= last || !ends_collapsing(c, last))
        return NOT_FOUND;
    double t_end = c->age_yr[k->prev] + CHEB_FRACTION * (c->age_yr[last] - c->age_yr[k->prev]);
    size_t s = k->from;
    while (s + 1 < last && c->age_yr[s + 1] <= t_end)
        s++;
    return marked(k, s);
}

static size_t find_cheb_end(kp_search *k)
{
    static const int ph[] = {HRT_PHASE_EAGB, HRT_PHASE_TPAGB, HRT_PHASE_POST_AGB, HRT_PHASE_WD, 0};
    const hrt_kp_columns *c = k->c;
    size_t s = by_phase(k, ph);
    if (s != NOT_FOUND)
        return s;
    if (c->central_y)
        for (s = k->from; s < c->n; s++)
            if (c->central_y[s] <= CHEB_END_Y)
                return s;
    s = cheb_end_estimate(k);
    if (s != NOT_FOUND)
        return s;
    if (c->central_y)
        return fail(k, "cheb_end: central_y never falls to " TRAIL_STR(CHEB_END_Y));
    if (c->phase)
        return fail(k, "cheb_end: no sample after core helium burning (phase column)");
    return fail(k, "cheb_end: needs a central_y or phase column");
}

static size_t find_first_pulse(kp_search *k)
{
    static const int ph[] = {HRT_PHASE_TPAGB, 0};
    const hrt_kp_columns *c = k->c;
    size_t s = by_phase(k, ph);
    if (s != NOT_FOUND)
        return s;
    if (c->he_core_mass_msun && c->co_core_mass_msun) {
        for (s = k->from; s < c->n; s++)
            if (c->he_core_mass_msun[s] > 0.0 && c->co_core_mass_msun[s] >= PULSE_CO_HE * c->he_core_mass_msun[s])
                return s;
        return fail(k, "first_pulse: the CO core never reaches %g %% of the He core, and no %s sample",
                    PERCENT(PULSE_CO_HE), hrt_phase_key(HRT_PHASE_TPAGB));
    }
    if (c->phase)
        return fail(k, "first_pulse: no thermal pulses (core masses or phase %s)", hrt_phase_key(HRT_PHASE_TPAGB));
    return fail(k, "first_pulse: needs he_core_mass_msun and co_core_mass_msun or a phase column");
}

/* The tip of the AGB: from the loss of the envelope, the luminosity maximum
 * before the star fades WD_FADE below it. */
static size_t agb_tip(const kp_search *k)
{
    const hrt_kp_columns *c = k->c;
    size_t s_env = NOT_FOUND;
    for (size_t s = k->from; s < c->n && s_env == NOT_FOUND; s++)
        if (envelope_gone(k, s))
            s_env = s;
    if (s_env == NOT_FOUND)
        return NOT_FOUND;
    size_t s_max = s_env;
    for (size_t s = s_env; s < c->n && c->log_l_lsun[s] >= c->log_l_lsun[s_max] - WD_FADE; s++)
        if (c->log_l_lsun[s] > c->log_l_lsun[s_max])
            s_max = s;
    return s_max;
}

static size_t envelope_loss_sample(const kp_search *k)
{
    for (size_t s = k->from; s < k->c->n; s++)
        if (envelope_gone(k, s))
            return s;
    return NOT_FOUND;
}

/* agb_end and envelope_loss: the sample marker found by phase (NOT_FOUND:
 * none), else from the envelope (mass and He core). */
static size_t find_envelope_end(kp_search *k, const char *name, size_t (*from_envelope)(const kp_search *),
                                size_t marker)
{
    const hrt_kp_columns *c = k->c;
    if (marker != NOT_FOUND)
        return marked(k, marker);
    if (c->mass_msun && c->he_core_mass_msun) {
        size_t s = from_envelope(k);
        if (s != NOT_FOUND)
            return s;
        return fail(k, "%s: the envelope never falls to %g %% of the mass (and no phase marks it)", name,
                    PERCENT(ENV_FRAC));
    }
    if (c->phase)
        return fail(k, "%s: the envelope is never lost (mass_msun and he_core_mass_msun, or phase)", name);
    return fail(k, "%s: needs mass_msun and he_core_mass_msun or a phase column", name);
}

static size_t find_agb_end(kp_search *k)
{
    static const int ph[] = {HRT_PHASE_POST_AGB, HRT_PHASE_WD, 0};
    return find_envelope_end(k, "agb_end", agb_tip, first_phase(k, k->from, ph));
}

/* The phase marker of envelope_loss: the first post_rgb sample, or a white
 * dwarf reached without helium burning (no 3x or 4x phase before it). */
static size_t envelope_loss_marker(const kp_search *k)
{
    if (!k->c->phase)
        return NOT_FOUND;
    for (size_t s = k->from; s < k->c->n; s++) {
        int p = k->c->phase[s];
        if (p == HRT_PHASE_POST_RGB || p == HRT_PHASE_WD)
            return s;
        if (p >= HRT_PHASE_CHEB && p < HRT_PHASE_WD)
            return NOT_FOUND;
    }
    return NOT_FOUND;
}

static size_t find_envelope_loss(kp_search *k)
{
    return find_envelope_end(k, "envelope_loss", envelope_loss_sample, envelope_loss_marker(k));
}

static size_t find_wd_onset(kp_search *k)
{
    static const int wd[] = {HRT_PHASE_WD, 0};
    const hrt_kp_columns *c = k->c;
    size_t s = by_phase(k, wd);
    if (s != NOT_FOUND)
        return s;
    double l_prev = k->prev == NOT_FOUND ? c->log_l_lsun[0] : c->log_l_lsun[k->prev];
    double l_max = fmin(WD_LOG_L, l_prev - WD_FADE);
    for (s = k->from; s < c->n; s++) {
        if (c->log_l_lsun[s] > l_max)
            continue;
        if (c->mass_msun) {
            double r_wd = hrt_wd_radius_rsun(c->mass_msun[s]);
            double log_r = trail_log_r_from(c->log_l_lsun[s], c->log_teff_k[s]);
            if (!(isfinite(r_wd) && log_r <= log10(r_wd) + WD_COMPACT))
                continue;
        }
        return s;
    }
    return fail(k, "wd_onset: the star never fades onto a white-dwarf cooling track (log L <= min(%g, L_prev - "
                   "%g) with a white-dwarf radius)", WD_LOG_L, WD_FADE);
}

static size_t find_core_collapse(kp_search *k)
{
    const hrt_kp_columns *c = k->c;
    size_t s = c->n - 1;
    if (s >= k->from) {
        if (c->phase && (c->phase[s] == HRT_PHASE_NS || c->phase[s] == HRT_PHASE_BH))
            return marked(k, s);
        double log_r = trail_log_r_from(c->log_l_lsun[s], c->log_teff_k[s]);
        if (log_r > CC_LOG_R && (!c->co_core_mass_msun || c->co_core_mass_msun[s] >= CC_CO))
            return s;
    }
    return fail(k, "core_collapse: the track does not end as an extended star with a CO core >= %g Msun", CC_CO);
}

/* ---- the table of keypoints ------------------------------------------------ */

/* Names of the known keypoints, indexed by KP_*.  The finders are chosen by
 * a switch rather than a table of function pointers: such a table needs
 * relocations and would land in the shared library's writable-looking
 * .data.rel.ro, which the hygiene test (tests/hardening/hygiene.sh) refuses. */
static const char known_names[KP_N_KNOWN][16] = {
    "zams", "tams", "rgb_base", "he_ignition", "cheb_start", "cheb_end", "first_pulse",
    "agb_end", "envelope_loss", "wd_onset", "core_collapse", "birthline",
};

static int known_index(const char *name)
{
    for (int k = 0; k < KP_N_KNOWN; k++)
        if (strcmp(name, known_names[k]) == 0)
            return k;
    return -1;
}

static size_t find_known(kp_search *k, int kind)
{
    switch (kind) {
    case KP_ZAMS:
        return find_zams(k);
    case KP_TAMS:
        return find_tams(k);
    case KP_RGB_BASE:
        return find_rgb_base(k);
    case KP_HE_IGNITION:
        return find_he_ignition(k);
    case KP_CHEB_START:
        return find_cheb_start(k);
    case KP_CHEB_END:
        return find_cheb_end(k);
    case KP_FIRST_PULSE:
        return find_first_pulse(k);
    case KP_AGB_END:
        return find_agb_end(k);
    case KP_ENVELOPE_LOSS:
        return find_envelope_loss(k);
    case KP_WD_ONSET:
        return find_wd_onset(k);
    case KP_BIRTHLINE:
        return find_birthline(k);
    case KP_CORE_COLLAPSE:
    default: /* kind comes from known_index(): always one of the above */
        return find_core_collapse(k);
    }
}

/* Keypoint `kind` strictly after sample p (p = NOT_FOUND: from the start).
 * prev_kind is the known index of the previous keypoint of the layout (-1). */
static size_t find_one(kp_search *k, int kind, size_t p, int prev_kind, int *how)
{
    k->prev = p;
    k->from = p == NOT_FOUND ? 0 : p + 1;
    k->prev_kind = prev_kind;
    k->how = HRT_KP_FOUND_BY_COLUMNS;
    size_t s = k->from >= k->c->n ? fail(k, "%s: the track ends at the previous keypoint", known_names[kind])
                                   : find_known(k, kind);
    *how = k->how;
    return s;
}

/* The first sample after p flagged with name; NOT_FOUND if none. */
static size_t find_flag(const hrt_kp_columns *c, size_t p, const char *name)
{
    if (c->flag)
        for (size_t s = p == NOT_FOUND ? 0 : p + 1; s < c->n; s++)
            if (c->flag[s] && strcmp(c->flag[s], name) == 0)
                return s;
    return NOT_FOUND;
}

int hrt_keypoints_find(const hrt_kp_columns *c, const hrt_route_spec *route, hrt_kp_result *out, hrt_error *err)
{
    if (!c || !route || !out)
        return trail_set_error(err, HRT_E_NULL, "hrt_keypoints_find: NULL argument");
    memset(out, 0, sizeof *out);
    if (!c->age_yr || !c->log_l_lsun || !c->log_teff_k)
        return trail_set_error(err, HRT_E_NULL, "hrt_keypoints_find: age, log L and log Teff are required");
    if (c->n < TRAIL_MIN_SAMPLES)
        return trail_set_error(err, HRT_E_INVALID, "hrt_keypoints_find: %zu samples, at least %d needed", c->n,
                               TRAIL_MIN_SAMPLES);
    if (route->n_keypoints < 1 || route->n_keypoints > HRT_IMPORT_MAX_KP || !route->keypoint_names)
        return trail_set_error(err, HRT_E_INVALID, "hrt_keypoints_find: route has %zu keypoints (1..%d)",
                               route->n_keypoints, HRT_IMPORT_MAX_KP);
    for (size_t s = 1; s < c->n; s++)
        if (!(c->age_yr[s] > c->age_yr[s - 1]))
            return trail_set_error(err, HRT_E_INVALID, "hrt_keypoints_find: age[%zu] does not exceed age[%zu]", s,
                                   s - 1);
    kp_search k = {c, NOT_FOUND, 0, -1, 0, out->why, sizeof out->why};
    size_t p = NOT_FOUND;
    int prev_kind = -1;
    for (size_t kp = 0; kp < route->n_keypoints; kp++) {
        const char *name = route->keypoint_names[kp];
        int how = HRT_KP_FOUND_BY_FLAG, kind = known_index(name);
        size_t s = find_flag(c, p, name); /* an explicit flag wins */
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
        /* every criterion and flag search starts after p; this guards that promise */
        if (p != NOT_FOUND && s <= p) {
            snprintf(out->why, sizeof out->why, "%s: found at sample %zu, not after the previous keypoint", name, s);
            break;
        }
        out->sample[kp] = s;
        out->how[kp] = how;
        out->n_found = kp + 1;
        out->why[0] = '\0';
        p = s;
        prev_kind = kind;
    }
    return trail_set_error(err, HRT_OK, NULL);
}

/* The routes (bit r for route r) having every flagged keypoint of the track. */
static int routes_fitting_flags(const hrt_kp_columns *c, size_t n_routes, const hrt_route_spec *routes,
                                unsigned *fits, hrt_error *err)
{
    *fits = (1u << n_routes) - 1u;
    if (!c->flag)
        return HRT_OK;
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
        *fits &= has;
    }
    return HRT_OK;
}

int hrt_keypoints_route(const hrt_kp_columns *c, size_t n_routes, const hrt_route_spec *routes, int *route,
                        unsigned *candidates, hrt_kp_result *out, hrt_error *err)
{
    if (!c || !routes || !route)
        return trail_set_error(err, HRT_E_NULL, "hrt_keypoints_route: NULL argument");
    if (n_routes < 1 || n_routes > TRAIL_MAX_ROUTES)
        return trail_set_error(err, HRT_E_INVALID, "hrt_keypoints_route: %zu routes (1..%d)", n_routes,
                               TRAIL_MAX_ROUTES);
    *route = -1;
    if (candidates)
        *candidates = 0;
    unsigned fits;
    int rc = routes_fitting_flags(c, n_routes, routes, &fits, err);
    if (rc != HRT_OK)
        return rc;
    if (!fits)
        return trail_set_error(err, HRT_E_INVALID, "the flagged keypoints do not all belong to one route");
    hrt_kp_result best, cur;
    memset(&best, 0, sizeof best);
    int best_complete = 0;
    size_t best_n = 0;
    unsigned tie = 0;
    for (size_t r = 0; r < n_routes; r++) {
        if (!(fits & (1u << r)))
            continue;
        rc = hrt_keypoints_find(c, &routes[r], &cur, err);
        if (rc != HRT_OK)
            return rc;
        int complete = cur.n_found == routes[r].n_keypoints;
        size_t nf = cur.n_found;
        if (nf < TRAIL_MIN_KEYPOINTS)
            continue;
        int better = *route < 0 || (complete && !best_complete) || (complete == best_complete && nf > best_n);
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
        return trail_set_error(err, HRT_OK, NULL);
    }
    if (candidates)
        *candidates = tie;
    if (out)
        *out = best;
    return trail_set_error(err, HRT_OK, NULL);
}
