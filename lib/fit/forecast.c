/* hrtrail: the future of a star given as samples of (initial mass, Z, age). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "util/util.h"
#include "fit/lattice.h"

#define MAX_SPANS 64

static hrt_fit_interval nan_interval(void)
{
    hrt_fit_interval r = {NAN, NAN, NAN};
    return r;
}

/* Quantiles of the finite-or-infinite (not NaN) values of v[0..n-1], which are reordered. */
static hrt_fit_interval interval_of(double *v, size_t n)
{
    size_t k = 0;
    for (size_t i = 0; i < n; i++)
        if (!isnan(v[i]))
            v[k++] = v[i];
    return k ? trail_fit_sample_quantiles(v, k) : nan_interval();
}

static int argmax(const double *p, int n)
{
    int b = 0;
    for (int i = 1; i < n; i++)
        if (p[i] > p[b])
            b = i;
    return b;
}

int hrt_forecast(const hrt_grid *g, size_t n, const hrt_fit_sample *smp, size_t n_times, const double *dt_yr,
                 hrt_forecast_state *states, hrt_forecast_result *res, hrt_error *err)
{
    if (!g || !smp || !res || (n_times > 0 && (!dt_yr || !states)))
        return trail_set_error(err, HRT_E_NULL, "hrt_forecast: %s is NULL",
                             !g ? "grid" : !smp ? "samples" : !res ? "res" : !dt_yr ? "dt_yr" : "states");
    memset(res, 0, sizeof *res);
    res->struct_size = sizeof *res;
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
    size_t nt = n_times;
    /* per-sample values: [nt][n] for each state quantity; per event and phase [n] */
    double *st = malloc((nt * 4 + 4) * n * sizeof(double) + 1);
    double *ev = malloc((size_t)HRT_FORECAST_MAX_EVENTS * n * sizeof(double) + 1);
    double *fs = malloc((size_t)HRT_PHASE_SLOTS * 2 * n * sizeof(double) + 1);
    int32_t *phs = malloc((nt + 1) * n * sizeof(int32_t) + 1);
    hrt_phase_span *spans = malloc(MAX_SPANS * sizeof *spans);
    int rc = HRT_OK;
    if (!st || !ev || !fs || !phs || !spans)
        rc = trail_set_error(err, HRT_E_NOMEM, "hrt_forecast: out of memory for %zu samples", n);
    double *ms_left = NULL, *end_in = NULL, *rem_mass = NULL;
    if (rc == HRT_OK) {
        ms_left = st + nt * 4 * n;
        end_in = ms_left + n;
        rem_mass = end_in + n;
    }
    size_t n_ev = 0;
    char ev_name[HRT_FORECAST_MAX_EVENTS][32];
    if (rc == HRT_OK) {
        for (size_t i = 0; i < HRT_FORECAST_MAX_EVENTS * n; i++) ev[i] = NAN;
        for (size_t i = 0; i < (size_t)HRT_PHASE_SLOTS * 2 * n; i++) fs[i] = NAN;
    }
    double ms_count = 0.0;
    for (size_t i = 0; i < n && rc == HRT_OK; i++) {
        const hrt_fit_sample *S = &smp[i];
        hrt_star *s = NULL;
        hrt_error e1;
        rc = hrt_star_new(g, S->initial_mass_msun, S->z, &s, &e1);
        if (rc != HRT_OK) {
            trail_set_error(err, rc, "hrt_forecast: sample %zu (%g Msun, Z %g): %s", i, S->initial_mass_msun, S->z,
                          e1.message);
            break;
        }
        hrt_state now;
        rc = hrt_star_at(s, S->age_yr, &now);
        if (rc != HRT_OK) {
            trail_set_error(err, rc, "hrt_forecast: sample %zu (%g Msun, Z %g, age %g yr): %s", i, S->initial_mass_msun, S->z,
                          S->age_yr, hrt_strerror(rc));
            hrt_star_free(s);
            break;
        }
        phs[i] = now.phase;
        ms_left[i] = NAN;
        if (now.phase == HRT_PHASE_MS) {
            ms_left[i] = now.phase_end_yr - S->age_yr;
            ms_count += 1.0;
        }
        double end = hrt_star_end_age(s);
        end_in[i] = end > S->age_yr ? end - S->age_yr : 0.0;
        int kind;
        double rm;
        hrt_star_remnant(s, &kind, &rm);
        res->remnant_prob[kind >= 0 && kind < HRT_REMNANT_SLOTS ? kind : 0] += 1.0 / (double)n;
        rem_mass[i] = kind == HRT_REMNANT_NONE ? NAN : rm;
        /* keypoints ahead, gathered by name across routes */
        for (size_t k = 0; k < hrt_star_n_keypoints(s); k++) {
            double ka;
            const char *name = hrt_star_keypoint_name(s, k);
            if (hrt_star_keypoint_age(s, k, &ka) != HRT_OK || !(ka > S->age_yr) || !name)
                continue;
            size_t e = 0;
            while (e < n_ev && strcmp(ev_name[e], name) != 0)
                e++;
            if (e == n_ev) {
                if (n_ev == HRT_FORECAST_MAX_EVENTS)
                    continue;
                snprintf(ev_name[n_ev], sizeof ev_name[n_ev], "%s", name);
                n_ev++;
            }
            ev[e * n + i] = ka - S->age_yr;
        }
        /* phases ahead: the first entry of each phase that begins after now */
        size_t nsp = 0;
        hrt_star_phases(s, spans, MAX_SPANS, &nsp);
        if (nsp > MAX_SPANS)
            nsp = MAX_SPANS;
        for (size_t k = 0; k < nsp; k++) {
            int p = spans[k].phase;
            if (p <= 0 || p >= HRT_PHASE_SLOTS || !(spans[k].start_yr > S->age_yr) || !isnan(fs[(size_t)p * 2 * n + i]))
                continue;
            fs[(size_t)p * 2 * n + i] = spans[k].start_yr - S->age_yr;
            fs[(size_t)p * 2 * n + n + i] = spans[k].end_yr - spans[k].start_yr;
        }
        /* states at the future times */
        for (size_t t = 0; t < nt && rc == HRT_OK; t++) {
            hrt_state f;
            int r2 = hrt_star_at(s, S->age_yr + dt_yr[t], &f);
            if (r2 != HRT_OK) {
                rc = trail_set_error(err, r2, "hrt_forecast: sample %zu (%g Msun, Z %g) at %g yr from now: %s", i,
                                   S->initial_mass_msun, S->z, dt_yr[t], hrt_strerror(r2));
                break;
            }
            phs[(t + 1) * n + i] = f.phase;
            double *q = st + t * 4 * n;
            int lum = isfinite(f.log_l_lsun) && isfinite(f.log_teff_k);
            q[i] = lum ? f.log_l_lsun : NAN;
            q[n + i] = lum ? pow(10.0, f.log_teff_k) : NAN;
            q[2 * n + i] = isfinite(f.log_r_rsun) ? pow(10.0, f.log_r_rsun) : NAN;
            q[3 * n + i] = f.mass_msun;
        }
        hrt_star_free(s);
    }
    if (rc == HRT_OK) {
        res->n_samples = (double)n;
        for (size_t i = 0; i < n; i++)
            res->phase_now_prob[phs[i] >= 0 && phs[i] < HRT_PHASE_SLOTS ? phs[i] : 0] += 1.0 / (double)n;
        res->phase_now = argmax(res->phase_now_prob, HRT_PHASE_SLOTS);
        res->ms_prob = ms_count / (double)n;
        res->ms_left_yr = interval_of(ms_left, n);
        res->end_in_yr = interval_of(end_in, n);
        res->remnant = argmax(res->remnant_prob, HRT_REMNANT_SLOTS);
        res->remnant_mass_msun = interval_of(rem_mass, n);
        for (int p = 0; p < HRT_PHASE_SLOTS; p++) {
            double *a = fs + (size_t)p * 2 * n, *b = a + n;
            size_t c = 0;
            for (size_t i = 0; i < n; i++) c += !isnan(a[i]);
            res->future[p].prob = (double)c / (double)n;
            res->future[p].start_in_yr = interval_of(a, n);
            res->future[p].duration_yr = interval_of(b, n);
        }
        for (size_t e = 0; e < n_ev; e++) {
            hrt_forecast_event *E = &res->events[e];
            size_t c = 0;
            for (size_t i = 0; i < n; i++) c += !isnan(ev[e * n + i]);
            snprintf(E->name, sizeof E->name, "%s", ev_name[e]);
            E->prob = (double)c / (double)n;
            E->in_yr = interval_of(ev + e * n, n);
        }
        /* soonest median first (insertion sort: few events) */
        for (size_t a = 1; a < n_ev; a++)
            for (size_t b = a; b > 0 && res->events[b].in_yr.median < res->events[b - 1].in_yr.median; b--) {
                hrt_forecast_event tmp = res->events[b];
                res->events[b] = res->events[b - 1];
                res->events[b - 1] = tmp;
            }
        res->n_events = n_ev;
        for (size_t t = 0; t < nt; t++) {
            hrt_forecast_state *F = &states[t];
            memset(F, 0, sizeof *F);
            F->dt_yr = dt_yr[t];
            const int32_t *ph = phs + (t + 1) * n;
            for (size_t i = 0; i < n; i++)
                F->phase_prob[ph[i] >= 0 && ph[i] < HRT_PHASE_SLOTS ? ph[i] : 0] += 1.0 / (double)n;
            F->phase = argmax(F->phase_prob, HRT_PHASE_SLOTS);
            double *q = st + t * 4 * n;
            size_t c = 0;
            for (size_t i = 0; i < n; i++) c += !isnan(q[i]);
            F->luminous_frac = (double)c / (double)n;
            F->log_l_lsun = interval_of(q, n);
            F->teff_k = interval_of(q + n, n);
            F->r_rsun = interval_of(q + 2 * n, n);
            F->mass_msun = interval_of(q + 3 * n, n);
        }
    }
    free(st);
    free(ev);
    free(fs);
    free(phs);
    free(spans);
    res->status = rc;
    if (rc == HRT_OK && err)
        trail_set_error(err, HRT_OK, NULL);
    return rc;
}
