/* hrtrail: the future of a star given as samples of (initial mass, Z, age). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "util/util.h"
#include "fit/intervals.h"

/* Phase spans read from one star's track (any beyond are not looked at). */
#define MAX_SPANS 64
/* Quantities of a state at a future time, kept per sample: log L, Teff, R, mass. */
enum { FS_LOG_L = 0, FS_TEFF, FS_R, FS_MASS, FS_COUNT };

/* The per-sample values of a forecast. */
typedef struct forecast_work {
    size_t n;                  /* samples */
    double *state;             /* [n_times][FS_COUNT][n]: each state quantity at each future time */
    double *ms_left, *end_in, *remnant_mass; /* [n] each */
    double *event_in;          /* [HRT_FORECAST_MAX_EVENTS][n]: time until each keypoint ahead (NaN: none) */
    double *phase_ahead;       /* [HRT_PHASE_SLOTS][2][n]: start and duration of each phase ahead (NaN: none) */
    int32_t *phase;            /* [n_times + 1][n]: phase now, then at each future time */
    hrt_phase_span *spans;     /* [MAX_SPANS] scratch */
    double ms_count;           /* samples now on the main sequence */
    size_t n_events;
    char event_name[HRT_FORECAST_MAX_EVENTS][sizeof ((hrt_forecast_event *)0)->name];
} forecast_work;

static void work_free(forecast_work *w)
{
    free(w->state);
    free(w->event_in);
    free(w->phase_ahead);
    free(w->phase);
    free(w->spans);
}

/* Scratch for n samples and n_times future times (+ 1: never a zero-size malloc). */
static int work_alloc(forecast_work *w, size_t n, size_t n_times, hrt_error *err)
{
    memset(w, 0, sizeof *w);
    w->n = n;
    w->state = malloc((n_times * FS_COUNT + 3) * n * sizeof(double) + 1);
    w->event_in = malloc((size_t)HRT_FORECAST_MAX_EVENTS * n * sizeof(double) + 1);
    w->phase_ahead = malloc((size_t)HRT_PHASE_SLOTS * 2 * n * sizeof(double) + 1);
    w->phase = malloc((n_times + 1) * n * sizeof(int32_t) + 1);
    w->spans = malloc(MAX_SPANS * sizeof *w->spans);
    if (!w->state || !w->event_in || !w->phase_ahead || !w->phase || !w->spans)
        return trail_set_error(err, HRT_E_NOMEM, "hrt_forecast: out of memory for %zu samples", n);
    w->ms_left = w->state + n_times * FS_COUNT * n;
    w->end_in = w->ms_left + n;
    w->remnant_mass = w->end_in + n;
    for (size_t i = 0; i < HRT_FORECAST_MAX_EVENTS * n; i++) w->event_in[i] = NAN;
    for (size_t i = 0; i < (size_t)HRT_PHASE_SLOTS * 2 * n; i++) w->phase_ahead[i] = NAN;
    return HRT_OK;
}

/* Keypoints ahead of a sample at age_yr, gathered by name across routes. */
static void gather_events(const hrt_star *s, double age_yr, size_t i, forecast_work *w)
{
    for (size_t k = 0; k < hrt_star_n_keypoints(s); k++) {
        double ka;
        const char *name = hrt_star_keypoint_name(s, k);
        if (hrt_star_keypoint_age(s, k, &ka) != HRT_OK || !(ka > age_yr) || !name)
            continue;
        size_t e = 0;
        while (e < w->n_events && strcmp(w->event_name[e], name) != 0)
            e++;
        if (e == w->n_events) {
            if (w->n_events == HRT_FORECAST_MAX_EVENTS)
                continue;
            snprintf(w->event_name[w->n_events], sizeof w->event_name[w->n_events], "%s", name);
            w->n_events++;
        }
        w->event_in[e * w->n + i] = ka - age_yr;
    }
}

/* Phases ahead of a sample at age_yr: the first entry of each phase that begins after now. */
static void gather_phases(const hrt_star *s, double age_yr, size_t i, forecast_work *w)
{
    size_t n = w->n, nsp = 0;
    hrt_star_phases(s, w->spans, MAX_SPANS, &nsp);
    if (nsp > MAX_SPANS)
        nsp = MAX_SPANS;
    for (size_t k = 0; k < nsp; k++) {
        const hrt_phase_span *sp = &w->spans[k];
        int p = sp->phase;
        if (p <= 0 || p >= HRT_PHASE_SLOTS || !(sp->phase_start_yr > age_yr))
            continue;
        double *start_in = w->phase_ahead + (size_t)p * 2 * n, *duration = start_in + n;
        if (!isnan(start_in[i]))
            continue;
        start_in[i] = sp->phase_start_yr - age_yr;
        duration[i] = sp->phase_end_yr - sp->phase_start_yr;
    }
}

/* A sample's states at the future times. */
static int future_states(const hrt_star *s, const hrt_fit_sample *S, size_t i, size_t n_times, const double *dt_yr,
                         forecast_work *w, hrt_error *err)
{
    size_t n = w->n;
    for (size_t t = 0; t < n_times; t++) {
        hrt_state f;
        int rc = hrt_star_at(s, S->age_yr + dt_yr[t], &f);
        if (rc != HRT_OK)
            return trail_set_error(err, rc, "hrt_forecast: sample %zu (%g Msun, Z %g) at %g yr from now: %s", i,
                                   S->initial_mass_msun, S->z, dt_yr[t], hrt_strerror(rc));
        w->phase[(t + 1) * n + i] = f.phase;
        double *q = w->state + t * FS_COUNT * n;
        int luminous = isfinite(f.log_l_lsun) && isfinite(f.log_teff_k);
        q[FS_LOG_L * n + i] = luminous ? f.log_l_lsun : NAN;
        q[FS_TEFF * n + i] = luminous ? pow(10.0, f.log_teff_k) : NAN;
        q[FS_R * n + i] = isfinite(f.log_r_rsun) ? pow(10.0, f.log_r_rsun) : NAN;
        q[FS_MASS * n + i] = f.mass_msun;
    }
    return HRT_OK;
}

/* Add one sample's share to the probability of a code (codes outside [0, slots) count as code 0). */
static void add_share(double *prob, int slots, int code, size_t n)
{
    prob[code >= 0 && code < slots ? code : 0] += 1.0 / (double)n;
}

/* Sample i now and ahead; its remnant counts in res->remnant_prob. */
static int forecast_sample(const hrt_grid *g, const hrt_fit_sample *S, size_t i, size_t n_times, const double *dt_yr,
                           forecast_work *w, hrt_forecast_result *res, hrt_error *err)
{
    hrt_star *s = NULL;
    hrt_error e1;
    int rc = hrt_star_new(g, S->initial_mass_msun, S->z, &s, &e1);
    if (rc != HRT_OK)
        return trail_set_error(err, rc, "hrt_forecast: sample %zu (%g Msun, Z %g): %s", i, S->initial_mass_msun, S->z,
                               e1.message);
    hrt_state now;
    rc = hrt_star_at(s, S->age_yr, &now);
    if (rc != HRT_OK) {
        trail_set_error(err, rc, "hrt_forecast: sample %zu (%g Msun, Z %g, age %g yr): %s", i, S->initial_mass_msun, S->z,
                        S->age_yr, hrt_strerror(rc));
        hrt_star_free(s);
        return rc;
    }
    w->phase[i] = now.phase;
    w->ms_left[i] = NAN;
    if (now.phase == HRT_PHASE_MS) {
        w->ms_left[i] = now.phase_end_yr - S->age_yr;
        w->ms_count += 1.0;
    }
    double end = hrt_star_end_age(s);
    w->end_in[i] = end > S->age_yr ? end - S->age_yr : 0.0;
    int kind;
    double rm;
    hrt_star_remnant(s, &kind, &rm);
    add_share(res->remnant_prob, HRT_REMNANT_SLOTS, kind, w->n);
    w->remnant_mass[i] = kind == HRT_REMNANT_NONE ? NAN : rm;
    gather_events(s, S->age_yr, i, w);
    gather_phases(s, S->age_yr, i, w);
    rc = future_states(s, S, i, n_times, dt_yr, w, err);
    hrt_star_free(s);
    return rc;
}

/* Fraction of the n values that are not NaN. */
static double fraction_given(const double *v, size_t n)
{
    size_t c = 0;
    for (size_t i = 0; i < n; i++) c += !isnan(v[i]);
    return (double)c / (double)n;
}

/* Quantiles of the values of v[0..n-1] that are not NaN (finite or infinite); v is reordered. */
static hrt_fit_interval interval_of(double *v, size_t n)
{
    size_t k = 0;
    for (size_t i = 0; i < n; i++)
        if (!isnan(v[i]))
            v[k++] = v[i];
    return k ? trail_fit_sample_quantiles(v, k) : trail_fit_no_interval();
}

/* The star now, its remnant and the phases still to come. */
static void summarise_now(hrt_forecast_result *res, forecast_work *w)
{
    size_t n = w->n;
    res->n_samples = (double)n;
    for (size_t i = 0; i < n; i++)
        add_share(res->phase_now_prob, HRT_PHASE_SLOTS, w->phase[i], n);
    res->phase_now = trail_fit_argmax(res->phase_now_prob, HRT_PHASE_SLOTS);
    res->ms_prob = w->ms_count / (double)n;
    res->ms_left_yr = interval_of(w->ms_left, n);
    res->end_in_yr = interval_of(w->end_in, n);
    res->remnant = trail_fit_argmax(res->remnant_prob, HRT_REMNANT_SLOTS);
    res->remnant_mass_msun = interval_of(w->remnant_mass, n);
    for (int p = 0; p < HRT_PHASE_SLOTS; p++) {
        double *start_in = w->phase_ahead + (size_t)p * 2 * n, *duration = start_in + n;
        res->future[p].prob = fraction_given(start_in, n);
        res->future[p].start_in_yr = interval_of(start_in, n);
        res->future[p].duration_yr = interval_of(duration, n);
    }
}

/* The keypoints still to come, soonest median first. */
static void summarise_events(hrt_forecast_result *res, forecast_work *w)
{
    size_t n = w->n;
    for (size_t e = 0; e < w->n_events; e++) {
        hrt_forecast_event *E = &res->events[e];
        snprintf(E->name, sizeof E->name, "%s", w->event_name[e]);
        E->prob = fraction_given(w->event_in + e * n, n);
        E->in_yr = interval_of(w->event_in + e * n, n);
    }
    /* insertion sort: few events */
    for (size_t a = 1; a < w->n_events; a++)
        for (size_t b = a; b > 0 && res->events[b].in_yr.median < res->events[b - 1].in_yr.median; b--) {
            hrt_forecast_event tmp = res->events[b];
            res->events[b] = res->events[b - 1];
            res->events[b - 1] = tmp;
        }
    res->n_events = w->n_events;
}

/* The star at each future time. */
static void summarise_states(hrt_forecast_state *states, size_t n_times, const double *dt_yr, forecast_work *w)
{
    size_t n = w->n;
    for (size_t t = 0; t < n_times; t++) {
        hrt_forecast_state *F = &states[t];
        memset(F, 0, sizeof *F);
        F->dt_yr = dt_yr[t];
        const int32_t *ph = w->phase + (t + 1) * n;
        for (size_t i = 0; i < n; i++)
            add_share(F->phase_prob, HRT_PHASE_SLOTS, ph[i], n);
        F->phase = trail_fit_argmax(F->phase_prob, HRT_PHASE_SLOTS);
        double *q = w->state + t * FS_COUNT * n;
        F->luminous_frac = fraction_given(q + FS_LOG_L * n, n);
        F->log_l_lsun = interval_of(q + FS_LOG_L * n, n);
        F->teff_k = interval_of(q + FS_TEFF * n, n);
        F->r_rsun = interval_of(q + FS_R * n, n);
        F->mass_msun = interval_of(q + FS_MASS * n, n);
    }
}

static int check_args(size_t n, const hrt_fit_sample *smp, size_t n_times, const double *dt_yr, hrt_error *err)
{
    if (n == 0)
        return trail_set_error(err, HRT_E_INVALID, "hrt_forecast: no samples (n = 0)");
    for (size_t t = 0; t < n_times; t++)
        if (!isfinite(dt_yr[t]) || dt_yr[t] < 0)
            return trail_set_error(err, HRT_E_DOMAIN, "hrt_forecast: future time %zu is %g yr; it must be finite and >= 0", t,
                                   dt_yr[t]);
    for (size_t i = 0; i < n; i++)
        if (!isfinite(smp[i].age_yr) || smp[i].age_yr < 0)
            return trail_set_error(err, HRT_E_DOMAIN, "hrt_forecast: sample %zu has age %g yr; it must be finite and >= 0", i,
                                   smp[i].age_yr);
    return HRT_OK;
}

int hrt_forecast(const hrt_grid *g, size_t n, const hrt_fit_sample *smp, size_t n_times, const double *dt_yr,
                 hrt_forecast_state *states, hrt_forecast_result *res, hrt_error *err)
{
    if (!g || !smp || !res || (n_times > 0 && (!dt_yr || !states)))
        return trail_set_error(err, HRT_E_NULL, "hrt_forecast: %s is NULL",
                               !g ? "grid" : !smp ? "samples" : !res ? "res" : !dt_yr ? "dt_yr" : "states");
    memset(res, 0, sizeof *res);
    res->struct_size = sizeof *res;
    int rc = check_args(n, smp, n_times, dt_yr, err);
    if (rc != HRT_OK)
        return trail_fit_finish(&res->status, rc, err);
    forecast_work w;
    rc = work_alloc(&w, n, n_times, err);
    for (size_t i = 0; i < n && rc == HRT_OK; i++)
        rc = forecast_sample(g, &smp[i], i, n_times, dt_yr, &w, res, err);
    if (rc == HRT_OK) {
        summarise_now(res, &w);
        summarise_events(res, &w);
        summarise_states(states, n_times, dt_yr, &w);
    } else {
        /* a sample that fails ends the forecast: nothing partial is left in res */
        memset(res, 0, sizeof *res);
        res->struct_size = sizeof *res;
    }
    work_free(&w);
    return trail_fit_finish(&res->status, rc, err);
}
