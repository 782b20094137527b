/* hrtrail: the main sequence as a calibration curve (Teff <-> L, distance).
 *
 * The band is sampled once per metallicity (hrt_ms_new): a row of n_ages
 * models along each of n_masses main sequences.  A query weights every
 * model by (mass prior x time spent) x a Gaussian in the observed quantity,
 * and reads weighted quantiles; the band's edges at exactly the observed
 * value come from the crossings of that value along the sampled curves. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "util/util.h"
#include "fit/intervals.h"

/* Quantities kept per sampled model. */
enum { MQ_LOG_TEFF = 0, MQ_LOG_L, MQ_LOG_R, MQ_LOG_G, MQ_MASS, MQ_MINIT, MQ_AGE, MQ_COUNT };
/* Models further than this many sigma from the observed value carry no weight. */
#define MS_CUT_SIGMA 4.0
/* Phase spans read from one star's track. */
#define MS_MAX_SPANS 64

struct hrt_ms {
    double z;
    size_t n_masses, n_ages; /* rows x models per row */
    double *q;               /* [MQ_COUNT][n_masses * n_ages]; NaN where a row is empty */
    double *w;               /* [n_masses * n_ages] weights (0 where empty) */
    unsigned char *row_ok;   /* [n_masses] the row holds a main sequence */
    double lo[MQ_COUNT], hi[MQ_COUNT]; /* range of each quantity over the band */
};

void hrt_ms_options_default(hrt_ms_options *o)
{
    if (!o)
        return;
    memset(o, 0, sizeof *o);
    o->age_min_yr = 0.0;
    o->age_max_yr = HRT_MS_AGE_MAX_DEFAULT_YR;
    o->imf_alpha = 0.0;
    o->n_masses = 400;
    o->n_ages = 96;
}

void hrt_ms_free(hrt_ms *ms)
{
    if (!ms)
        return;
    free(ms->q);
    free(ms->w);
    free(ms->row_ok);
    free(ms);
}

static int check_options(const hrt_ms_options *o, double z, hrt_error *err)
{
    if (!isfinite(z) || z < 0.0)
        return trail_set_error(err, HRT_E_DOMAIN, "hrt_ms_new: z = %g is not a finite metal fraction >= 0", z);
    if (!isfinite(o->age_min_yr) || o->age_min_yr < 0.0 || isnan(o->age_max_yr))
        return trail_set_error(err, HRT_E_DOMAIN, "hrt_ms_new: age range [%g, %g] yr must start at a finite age >= 0",
                               o->age_min_yr, o->age_max_yr);
    if (!(o->age_max_yr > o->age_min_yr))
        return trail_set_error(err, HRT_E_INVALID, "hrt_ms_new: age_max_yr = %g is not above age_min_yr = %g",
                               o->age_max_yr, o->age_min_yr);
    if (!isfinite(o->imf_alpha))
        return trail_set_error(err, HRT_E_DOMAIN, "hrt_ms_new: imf_alpha is not finite");
    if (o->n_masses < 8 || o->n_ages < 4 || o->n_masses > 100000 || o->n_ages > 100000)
        return trail_set_error(err, HRT_E_INVALID,
                               "hrt_ms_new: n_masses = %d (8..100000) or n_ages = %d (4..100000) out of range",
                               (int)o->n_masses, (int)o->n_ages);
    return HRT_OK;
}

static int ms_alloc(hrt_ms **out, size_t nm, size_t na, double z, hrt_error *err)
{
    hrt_ms *ms = calloc(1, sizeof *ms);
    size_t n = nm * na;
    if (ms) {
        ms->q = malloc(MQ_COUNT * n * sizeof(double));
        ms->w = calloc(n, sizeof(double));
        ms->row_ok = calloc(nm, 1);
    }
    if (!ms || !ms->q || !ms->w || !ms->row_ok) {
        hrt_ms_free(ms);
        return trail_set_error(err, HRT_E_NOMEM, "hrt_ms_new: out of memory for %zu models", n);
    }
    for (size_t k = 0; k < MQ_COUNT * n; k++) ms->q[k] = NAN;
    ms->z = z;
    ms->n_masses = nm;
    ms->n_ages = na;
    *out = ms;
    return HRT_OK;
}

/* The star's main sequence [start, end) clipped to [amin, amax]; 0 if empty. */
static int ms_span(const hrt_star *s, const hrt_ms_options *o, double *a0, double *a1)
{
    hrt_phase_span sp[MS_MAX_SPANS];
    size_t n = 0;
    if (hrt_star_phases(s, sp, MS_MAX_SPANS, &n) != HRT_OK && n > MS_MAX_SPANS)
        n = MS_MAX_SPANS;
    for (size_t i = 0; i < n && i < MS_MAX_SPANS; i++) {
        if (sp[i].phase != HRT_PHASE_MS)
            continue;
        *a0 = fmax(sp[i].phase_start_yr, o->age_min_yr);
        /* the phase ends where the next begins: stay just inside it */
        *a1 = fmin(sp[i].phase_end_yr * (1.0 - 1e-9), o->age_max_yr);
        return isfinite(*a0) && isfinite(*a1) && *a1 > *a0;
    }
    return 0;
}

/* Age of sample j of n on a main sequence [a0, a1]: t = j / (n - 1) mapped by
 * 1 - (1 - t)^2, twice as dense as even steps near the end, where the star's
 * Teff turns (its coolest point and the contraction after it are fast). */
static double ms_age(double a0, double a1, size_t j, size_t n)
{
    double t = 1.0 - (double)j / (double)(n - 1);
    return j + 1 >= n ? a1 : a0 + (a1 - a0) * (1.0 - t * t);
}

/* Sample row i (initial mass m, prior weight wm = M^-alpha dM) along its main sequence. */
static void fill_row(hrt_ms *ms, size_t i, const hrt_star *s, double a0, double a1, double wm)
{
    size_t na = ms->n_ages, n = ms->n_masses * na;
    int ok = 1;
    for (size_t j = 0; j < na; j++) {
        size_t k = i * na + j;
        hrt_state st;
        double age = ms_age(a0, a1, j, na);
        if (hrt_star_at(s, age, &st) != HRT_OK || st.phase != HRT_PHASE_MS || !isfinite(st.log_l_lsun)) {
            ok = 0;
            break;
        }
        ms->q[MQ_LOG_TEFF * n + k] = st.log_teff_k;
        ms->q[MQ_LOG_L * n + k] = st.log_l_lsun;
        ms->q[MQ_LOG_R * n + k] = st.log_r_rsun;
        ms->q[MQ_LOG_G * n + k] = st.log_g_cgs;
        ms->q[MQ_MASS * n + k] = st.mass_msun;
        ms->q[MQ_MINIT * n + k] = st.initial_mass_msun;
        ms->q[MQ_AGE * n + k] = age;
        /* trapezoid in age */
        ms->w[k] = wm * 0.5 * (ms_age(a0, a1, j + 1 < na ? j + 1 : j, na) - ms_age(a0, a1, j > 0 ? j - 1 : 0, na));
    }
    if (!ok) { /* a row that leaves the main sequence inside its span is not used */
        for (size_t j = 0; j < na; j++) {
            ms->w[i * na + j] = 0.0;
            for (int q = 0; q < MQ_COUNT; q++) ms->q[q * n + i * na + j] = NAN;
        }
        return;
    }
    ms->row_ok[i] = 1;
}

static void find_ranges(hrt_ms *ms)
{
    size_t n = ms->n_masses * ms->n_ages;
    for (int q = 0; q < MQ_COUNT; q++) {
        ms->lo[q] = INFINITY;
        ms->hi[q] = -INFINITY;
        for (size_t k = 0; k < n; k++) {
            double v = ms->q[q * n + k];
            if (ms->w[k] > 0.0 && isfinite(v)) {
                ms->lo[q] = fmin(ms->lo[q], v);
                ms->hi[q] = fmax(ms->hi[q], v);
            }
        }
    }
}

static int sample_rows(hrt_ms *ms, const hrt_grid *g, const hrt_ms_options *o, double mlo, double mhi,
                       hrt_error *err)
{
    size_t nm = ms->n_masses, n_ok = 0;
    double dlnm = log(mhi / mlo) / (double)(nm - 1);
    for (size_t i = 0; i < nm; i++) {
        double m = i + 1 == nm ? mhi : mlo * exp(dlnm * (double)i), a0, a1;
        hrt_star *s = NULL;
        int rc = hrt_star_new(g, m, ms->z, &s, err);
        if (rc != HRT_OK)
            return rc;
        if (ms_span(s, o, &a0, &a1)) {
            double wm = pow(m, -o->imf_alpha) * m * dlnm * ((i == 0 || i + 1 == nm) ? 0.5 : 1.0);
            fill_row(ms, i, s, a0, a1, wm);
            n_ok += ms->row_ok[i];
        }
        hrt_star_free(s);
    }
    if (n_ok == 0)
        return trail_set_error(err, HRT_E_NO_MATCH,
                               "hrt_ms_new: no star of the grid is on its main sequence at Z = %g between %g and %g yr",
                               ms->z, o->age_min_yr, o->age_max_yr);
    return HRT_OK;
}

int hrt_ms_new(const hrt_grid *g, double z, const hrt_ms_options *o, hrt_ms **out, hrt_error *err)
{
    hrt_ms_options def;
    double mlo, mhi;
    hrt_ms *ms = NULL;
    if (!g || !out)
        return trail_set_error(err, HRT_E_NULL, "hrt_ms_new: %s is NULL", g ? "ms" : "g");
    *out = NULL;
    if (!o) {
        hrt_ms_options_default(&def);
        o = &def;
    }
    int rc = check_options(o, z, err);
    if (rc != HRT_OK)
        return rc;
    rc = hrt_grid_mass_range(g, z, &mlo, &mhi);
    if (rc != HRT_OK)
        return trail_set_error(err, rc, "hrt_ms_new: Z = %g is outside the grid's metallicities", z);
    rc = ms_alloc(&ms, (size_t)o->n_masses, (size_t)o->n_ages, z, err);
    if (rc == HRT_OK)
        rc = sample_rows(ms, g, o, mlo, mhi, err);
    if (rc != HRT_OK) {
        hrt_ms_free(ms);
        return rc;
    }
    find_ranges(ms);
    *out = ms;
    return trail_set_error(err, HRT_OK, NULL);
}

int hrt_ms_teff_range(const hrt_ms *ms, double *lo_k, double *hi_k)
{
    if (!ms || !lo_k || !hi_k)
        return HRT_E_NULL;
    *lo_k = trail_exp10(ms->lo[MQ_LOG_TEFF]);
    *hi_k = trail_exp10(ms->hi[MQ_LOG_TEFF]);
    return HRT_OK;
}

int hrt_ms_log_l_range(const hrt_ms *ms, double *lo, double *hi)
{
    if (!ms || !lo || !hi)
        return HRT_E_NULL;
    *lo = ms->lo[MQ_LOG_L];
    *hi = ms->hi[MQ_LOG_L];
    return HRT_OK;
}

/* ---- queries ---- */

/* The models that carry weight for an observed value of quantity qo. */
typedef struct ms_pick {
    size_t n;
    size_t *idx;   /* [n] model indices */
    double *wt;    /* [n] weights */
    double *pair;  /* [2 n] scratch (value, weight) for the quantiles */
} ms_pick;

static void pick_free(ms_pick *p)
{
    free(p->idx);
    free(p->wt);
    free(p->pair);
}

static int pick_models(const hrt_ms *ms, int qo, double v, double sig, ms_pick *p, hrt_error *err)
{
    size_t n = ms->n_masses * ms->n_ages;
    memset(p, 0, sizeof *p);
    p->idx = malloc(n * sizeof *p->idx);
    p->wt = malloc(n * sizeof *p->wt);
    p->pair = malloc(2 * n * sizeof *p->pair);
    if (!p->idx || !p->wt || !p->pair) {
        pick_free(p);
        return trail_set_error(err, HRT_E_NOMEM, "hrt_ms: out of memory for %zu models", n);
    }
    const double *x = ms->q + (size_t)qo * n;
    for (size_t k = 0; k < n; k++) {
        double d = (x[k] - v) / sig;
        if (ms->w[k] > 0.0 && fabs(d) < MS_CUT_SIGMA) {
            p->idx[p->n] = k;
            p->wt[p->n++] = ms->w[k] * exp(-0.5 * d * d);
        }
    }
    return HRT_OK;
}

static int cmp_pair(const void *a, const void *b)
{
    return trail_cmp_double(a, b);
}

/* Weighted quantile of sorted (value, weight) pairs: the value where the
 * cumulative weight (each pair centred on its own half) reaches p. */
static double wquantile(const double *pair, size_t n, double total, double p)
{
    double c = 0.0, target = p * total, prev_mid = 0.0;
    for (size_t i = 0; i < n; i++) {
        double mid = c + 0.5 * pair[2 * i + 1];
        if (mid >= target) {
            if (i == 0)
                return pair[0];
            double t = (target - prev_mid) / (mid - prev_mid);
            return pair[2 * (i - 1)] + t * (pair[2 * i] - pair[2 * (i - 1)]);
        }
        prev_mid = mid;
        c += pair[2 * i + 1];
    }
    return pair[2 * (n - 1)];
}

static void quantiles(const hrt_ms *ms, int q, ms_pick *p, hrt_ms_value *out)
{
    size_t n = ms->n_masses * ms->n_ages;
    double total = 0.0;
    for (size_t i = 0; i < p->n; i++) {
        p->pair[2 * i] = ms->q[(size_t)q * n + p->idx[i]];
        p->pair[2 * i + 1] = p->wt[i];
        total += p->wt[i];
    }
    qsort(p->pair, p->n, 2 * sizeof(double), cmp_pair);
    out->median = wquantile(p->pair, p->n, total, 0.5);
    out->lo = wquantile(p->pair, p->n, total, TRAIL_FIT_P_LO);
    out->hi = wquantile(p->pair, p->n, total, TRAIL_FIT_P_HI);
}

/* If the segment from model a to model b crosses x = v, widen the band of every quantity. */
static int cross(const hrt_ms *ms, int qo, double v, size_t a, size_t b, hrt_ms_value *val[MQ_COUNT])
{
    size_t n = ms->n_masses * ms->n_ages;
    double xa = ms->q[(size_t)qo * n + a], xb = ms->q[(size_t)qo * n + b];
    if (!((xa - v) * (xb - v) <= 0.0) || xa == xb)
        return 0;
    double t = (v - xa) / (xb - xa);
    for (int q = 0; q < MQ_COUNT; q++) {
        double y = ms->q[(size_t)q * n + a] + t * (ms->q[(size_t)q * n + b] - ms->q[(size_t)q * n + a]);
        if (!(y >= val[q]->band_lo))
            val[q]->band_lo = y;
        if (!(y <= val[q]->band_hi))
            val[q]->band_hi = y;
    }
    return 1;
}

/* The band at exactly x = v: crossings of the mesh of sampled models, along each main sequence
 * and across masses at each sampled age fraction (the ZAMS and TAMS loci among them). */
static int band(const hrt_ms *ms, int qo, double v, hrt_ms_value *val[MQ_COUNT])
{
    size_t na = ms->n_ages, nm = ms->n_masses, prev = (size_t)-1;
    int hits = 0;
    for (int q = 0; q < MQ_COUNT; q++) val[q]->band_lo = val[q]->band_hi = NAN;
    for (size_t i = 0; i < nm; i++) {
        if (!ms->row_ok[i])
            continue;
        for (size_t j = 0; j + 1 < na; j++) hits += cross(ms, qo, v, i * na + j, i * na + j + 1, val);
        if (prev != (size_t)-1) /* across masses at each age fraction: the ZAMS, the TAMS and between */
            for (size_t j = 0; j < na; j++) hits += cross(ms, qo, v, prev * na + j, i * na + j, val);
        prev = i;
    }
    return hits;
}

static void value_slots(hrt_ms_estimate *e, hrt_ms_value *val[MQ_COUNT])
{
    val[MQ_LOG_TEFF] = &e->log_teff_k;
    val[MQ_LOG_L] = &e->log_l_lsun;
    val[MQ_LOG_R] = &e->log_r_rsun;
    val[MQ_LOG_G] = &e->log_g_cgs;
    val[MQ_MASS] = &e->mass_msun;
    val[MQ_MINIT] = &e->initial_mass_msun;
    val[MQ_AGE] = &e->age_yr;
}

static void clear_estimate(hrt_ms_estimate *e)
{
    hrt_ms_value *val[MQ_COUNT];
    memset(e, 0, sizeof *e);
    value_slots(e, val);
    for (int q = 0; q < MQ_COUNT; q++) val[q]->median = val[q]->lo = val[q]->hi = val[q]->band_lo = val[q]->band_hi = NAN;
}

static int no_match(const hrt_ms *ms, int qo, double v, double sig_meas, hrt_error *err)
{
    if (qo == MQ_LOG_TEFF)
        return trail_set_error(err, HRT_E_NO_MATCH,
                               "hrt_ms: Teff %.0f K (sigma %.3g dex) has no main-sequence star in the grid at Z = %g "
                               "(its main sequence spans %.0f-%.0f K)",
                               trail_exp10(v), sig_meas, ms->z, trail_exp10(ms->lo[qo]), trail_exp10(ms->hi[qo]));
    return trail_set_error(err, HRT_E_NO_MATCH,
                           "hrt_ms: log L/Lsun = %.3f (sigma %.3g dex) has no main-sequence star in the grid at Z = %g "
                           "(its main sequence spans log L %.3f to %.3f)",
                           v, sig_meas, ms->z, ms->lo[qo], ms->hi[qo]);
}

/* Shared body of the queries: picks the weighted models (kept in p for the caller when p_keep). */
static int estimate(const hrt_ms *ms, int qo, double v, double sig_meas, double kernel, hrt_ms_estimate *out,
                    ms_pick *p_keep, hrt_error *err)
{
    hrt_ms_value *val[MQ_COUNT];
    ms_pick p;
    double sig = sqrt(sig_meas * sig_meas + kernel * kernel);
    clear_estimate(out);
    out->z = ms->z;
    value_slots(out, val);
    int hits = band(ms, qo, v, val);
    int rc = pick_models(ms, qo, v, sig, &p, err);
    if (rc != HRT_OK)
        return trail_fit_finish(&out->status, rc, err);
    if (p.n == 0 || (hits == 0 && sig_meas == 0.0)) {
        pick_free(&p);
        clear_estimate(out);
        out->z = ms->z;
        return trail_fit_finish(&out->status, no_match(ms, qo, v, sig_meas, err), err);
    }
    out->n_models = (int32_t)(p.n > INT32_MAX ? INT32_MAX : p.n);
    for (int q = 0; q < MQ_COUNT; q++) quantiles(ms, q, &p, val[q]);
    if (p_keep)
        *p_keep = p;
    else
        pick_free(&p);
    return trail_fit_finish(&out->status, HRT_OK, err);
}

static int teff_args(const hrt_ms *ms, const void *out, double teff_k, double sigma_k, const char *fn, hrt_error *err)
{
    if (!ms || !out)
        return trail_set_error(err, HRT_E_NULL, "%s: %s is NULL", fn, ms ? "out" : "ms");
    if (!isfinite(teff_k) || teff_k <= 0.0 || !isfinite(sigma_k) || sigma_k < 0.0)
        return trail_set_error(err, HRT_E_DOMAIN, "%s: Teff = %g K, sigma = %g K must be finite, Teff > 0, sigma >= 0",
                               fn, teff_k, sigma_k);
    return HRT_OK;
}

int hrt_ms_from_teff(const hrt_ms *ms, double teff_k, double teff_k_sigma, hrt_ms_estimate *out, hrt_error *err)
{
    int rc = teff_args(ms, out, teff_k, teff_k_sigma, "hrt_ms_from_teff", err);
    if (rc != HRT_OK) {
        if (out)
            out->status = rc;
        return rc;
    }
    return estimate(ms, MQ_LOG_TEFF, trail_log10(teff_k), teff_k_sigma / teff_k * TRAIL_LOG10E,
                    HRT_MS_KERNEL_LOG_TEFF_DEX, out, NULL, err);
}

int hrt_ms_from_log_l(const hrt_ms *ms, double log_l_lsun, double log_l_sigma, hrt_ms_estimate *out, hrt_error *err)
{
    if (!ms || !out)
        return trail_set_error(err, HRT_E_NULL, "hrt_ms_from_log_l: %s is NULL", ms ? "out" : "ms");
    if (!isfinite(log_l_lsun) || !isfinite(log_l_sigma) || log_l_sigma < 0.0) {
        out->status = HRT_E_DOMAIN;
        return trail_set_error(err, HRT_E_DOMAIN, "hrt_ms_from_log_l: log L = %g, sigma = %g dex must be finite, sigma >= 0",
                               log_l_lsun, log_l_sigma);
    }
    return estimate(ms, MQ_LOG_L, log_l_lsun, log_l_sigma, HRT_MS_KERNEL_LOG_L_DEX, out, NULL, err);
}

/* ---- distance ---- */

/* Fraction of the mixture sum_i w_i N(mu_i, s) below x (s = 0: a step at each mu_i). */
static double mixture_cdf(const double *mu, const double *w, size_t n, double s, double x)
{
    double c = 0.0, tot = 0.0;
    for (size_t i = 0; i < n; i++) {
        tot += w[i];
        c += w[i] * (s > 0.0 ? 0.5 * erfc((mu[i] - x) / (s * 1.41421356237309504880)) : (mu[i] <= x ? 1.0 : 0.0));
    }
    return c / tot;
}

static double mixture_quantile(const double *mu, const double *w, size_t n, double s, double p, double lo, double hi)
{
    for (int it = 0; it < 50; it++) {
        double mid = 0.5 * (lo + hi);
        if (mixture_cdf(mu, w, n, s, mid) < p)
            lo = mid;
        else
            hi = mid;
    }
    return 0.5 * (lo + hi);
}

static void distance_quantiles(const hrt_ms *ms, const ms_pick *p, double flux, double sig_logf, hrt_ms_distance_result *out)
{
    size_t n = ms->n_masses * ms->n_ages;
    double *mu = p->pair, lo = INFINITY, hi = -INFINITY, s = 0.5 * sig_logf;
    /* log10 d/pc = 0.5 (log L - log(4 pi F)) - log pc */
    double c = 0.5 * (trail_log10(HRT_LSUN_W) - trail_log10(4.0 * 3.14159265358979323846 * flux)) - trail_log10(HRT_PC_M);
    for (size_t i = 0; i < p->n; i++) {
        mu[i] = 0.5 * ms->q[MQ_LOG_L * n + p->idx[i]] + c;
        lo = fmin(lo, mu[i]);
        hi = fmax(hi, mu[i]);
    }
    lo -= 8.0 * s + 1e-9;
    hi += 8.0 * s + 1e-9;
    double q50 = mixture_quantile(mu, p->wt, p->n, s, 0.5, lo, hi);
    double qlo = mixture_quantile(mu, p->wt, p->n, s, TRAIL_FIT_P_LO, lo, hi);
    double qhi = mixture_quantile(mu, p->wt, p->n, s, TRAIL_FIT_P_HI, lo, hi);
    out->distance_pc.median = trail_exp10(q50);
    out->distance_pc.lo = trail_exp10(qlo);
    out->distance_pc.hi = trail_exp10(qhi);
    out->parallax_mas.median = 1000.0 / out->distance_pc.median;
    out->parallax_mas.lo = 1000.0 / out->distance_pc.hi;
    out->parallax_mas.hi = 1000.0 / out->distance_pc.lo;
}

int hrt_ms_distance(const hrt_ms *ms, double teff_k, double teff_k_sigma, double flux_w_m2, double flux_sigma_w_m2,
                    hrt_ms_distance_result *out, hrt_error *err)
{
    hrt_ms_estimate e;
    ms_pick p;
    int rc = teff_args(ms, out, teff_k, teff_k_sigma, "hrt_ms_distance", err);
    if (out) {
        memset(out, 0, sizeof *out);
        out->distance_pc = out->parallax_mas = trail_fit_no_interval();
    }
    if (rc == HRT_OK && (!isfinite(flux_w_m2) || flux_w_m2 <= 0.0 || !isfinite(flux_sigma_w_m2) || flux_sigma_w_m2 < 0.0))
        rc = trail_set_error(err, HRT_E_DOMAIN,
                             "hrt_ms_distance: flux = %g W m^-2, sigma = %g W m^-2 must be finite, flux > 0, sigma >= 0",
                             flux_w_m2, flux_sigma_w_m2);
    if (rc == HRT_OK)
        rc = estimate(ms, MQ_LOG_TEFF, trail_log10(teff_k), teff_k_sigma / teff_k * TRAIL_LOG10E,
                      HRT_MS_KERNEL_LOG_TEFF_DEX, &e, &p, err);
    if (rc != HRT_OK) {
        if (out)
            out->status = rc;
        return rc;
    }
    out->n_models = e.n_models;
    distance_quantiles(ms, &p, flux_w_m2, flux_sigma_w_m2 / flux_w_m2 * TRAIL_LOG10E, out);
    pick_free(&p);
    return trail_fit_finish(&out->status, HRT_OK, err);
}
