/* Populations: initial mass functions, star-formation histories and
 * metallicity distributions sampled on reproducible per-chunk random
 * streams; parallel batch evaluation; exact, mergeable summaries. */
#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_rng.h>
#ifdef _OPENMP
#include <omp.h>
#endif

#include "util/util.h"

#define SQRT_2PI 2.506628274631000502

/* ------------------------------------------------------------------ IMFs */

/* Salpeter (1955, ApJ 121, 161): dN/dm ~ m^-2.35. */
#define SALPETER_ALPHA 2.35
/* Kroupa (2001, MNRAS 322, 231), eq. 2: alpha = 0.3 below 0.08 Msun, 1.3 for
 * 0.08-0.5 Msun, 2.3 above 0.5 Msun. */
#define KROUPA_ALPHA0 0.3
#define KROUPA_ALPHA1 1.3
#define KROUPA_ALPHA2 2.3
#define KROUPA_M1 0.08
#define KROUPA_M2 0.5
/* Chabrier (2003, PASP 115, 763), Table 1, system IMF of the Galactic disc:
 * dN/dlog m = 0.086 exp(-(log m - log 0.22)^2 / (2 0.57^2)) for m <= 1 Msun,
 * dN/dlog m = A m^-1.3 above, A from continuity at 1 Msun (the paper's
 * 4.43e-2).  Parameters as recalled from the paper (from memory). */
#define CHABRIER_AMP 0.086
#define CHABRIER_MC 0.22
#define CHABRIER_SIGMA 0.57
#define CHABRIER_X 1.3
#define CHABRIER_MBREAK 1.0

typedef struct imf_name {
    int kind;
    char name[16];
} imf_name;

static const imf_name imf_names[] = {
    {HRT_IMF_SALPETER_1955, "salpeter1955"}, {HRT_IMF_KROUPA_2001, "kroupa2001"},
    {HRT_IMF_CHABRIER_2003_SYSTEM, "chabrier2003"}, {HRT_IMF_POWER_LAW, "powerlaw"},
    {HRT_IMF_SALPETER_1955, "salpeter"}, {HRT_IMF_KROUPA_2001, "kroupa"},
    {HRT_IMF_CHABRIER_2003_SYSTEM, "chabrier"}, {HRT_IMF_POWER_LAW, "power-law"},
};

const char *hrt_imf_name(int kind)
{
    return kind >= 0 && kind < HRT_IMF_COUNT ? imf_names[kind].name : "unknown";
}

int hrt_imf_from_name(const char *name)
{
    if (!name)
        return -1;
    for (size_t i = 0; i < sizeof imf_names / sizeof imf_names[0]; i++)
        if (strcmp(name, imf_names[i].name) == 0)
            return imf_names[i].kind;
    return -1;
}

/* Number in [a, b] of dN/dm = amp m^-alpha (a > 0): stable near alpha = 1. */
static double pl_integral(double amp, double alpha, double a, double b)
{
    double beta = 1.0 - alpha, L = log(b / a);
    if (beta == 0.0)
        return amp * L;
    return amp * pow(a, beta) * expm1(beta * L) / beta;
}

/* Number in [a, b] of dN/dlog10 m = amp exp(-(log m - mu)^2 / (2 s^2)). */
static double ln_integral(double amp, double mu, double s, double a, double b)
{
    return amp * s * SQRT_2PI *
           (gsl_cdf_ugaussian_P((log10(b) - mu) / s) - gsl_cdf_ugaussian_P((log10(a) - mu) / s));
}

static double seg_number(const hrt_imf *f, int k, double a, double b)
{
    if (!(b > a))
        return 0.0;
    return f->seg_lognormal[k] ? ln_integral(f->seg_amp[k], f->seg_a[k], f->seg_s[k], a, b)
                               : pl_integral(f->seg_amp[k], f->seg_a[k], a, b);
}

/* Append the part of the segment [lo, hi) inside the IMF's limits. */
static void add_segment(hrt_imf *f, int lognormal, double lo, double hi, double a, double s, double amp)
{
    double l = fmax(lo, f->m_lo_msun), h = fmin(hi, f->m_hi_msun);
    if (!(h > l) || f->n_seg >= HRT_IMF_MAX_SEGMENTS)
        return;
    int k = f->n_seg++;
    f->seg_lognormal[k] = lognormal;
    f->seg_lo[k] = l;
    f->seg_hi[k] = h;
    f->seg_a[k] = a;
    f->seg_s[k] = s;
    f->seg_amp[k] = amp;
    if (lognormal) {
        f->seg_c0[k] = gsl_cdf_ugaussian_P((log10(l) - a) / s);
        f->seg_c1[k] = gsl_cdf_ugaussian_P((log10(h) - a) / s);
    } else {
        f->seg_c0[k] = 1.0 - a;
        f->seg_c1[k] = f->seg_c0[k] == 0.0 ? log(h / l) : expm1(f->seg_c0[k] * log(h / l));
    }
}

int hrt_imf_init(hrt_imf *imf, int kind, double m_lo_msun, double m_hi_msun, double alpha, hrt_error *err)
{
    if (!imf)
        return trail_set_error(err, HRT_E_NULL, "hrt_imf_init: imf is NULL");
    memset(imf, 0, sizeof *imf);
    if (kind < 0 || kind >= HRT_IMF_COUNT)
        return trail_set_error(err, HRT_E_INVALID, "unknown IMF kind %d", kind);
    if (!isfinite(m_lo_msun) || !isfinite(m_hi_msun) || !(m_lo_msun > 0.0) || !(m_hi_msun > m_lo_msun))
        return trail_set_error(err, HRT_E_DOMAIN, "IMF mass limits %g .. %g Msun: need 0 < low < high, finite",
                             m_lo_msun, m_hi_msun);
    if (kind == HRT_IMF_POWER_LAW && !(isfinite(alpha) && fabs(alpha) <= 20.0))
        return trail_set_error(err, HRT_E_DOMAIN, "power-law IMF slope alpha = %g: need a finite |alpha| <= 20", alpha);
    imf->kind = kind;
    imf->m_lo_msun = m_lo_msun;
    imf->m_hi_msun = m_hi_msun;
    imf->alpha = kind == HRT_IMF_POWER_LAW ? alpha : NAN;
    switch (kind) {
    case HRT_IMF_SALPETER_1955:
        add_segment(imf, 0, 0.0, INFINITY, SALPETER_ALPHA, 0.0, 1.0);
        break;
    case HRT_IMF_POWER_LAW:
        add_segment(imf, 0, 0.0, INFINITY, alpha, 0.0, 1.0);
        break;
    case HRT_IMF_KROUPA_2001: {
        double a0 = 1.0, a1 = a0 * pow(KROUPA_M1, KROUPA_ALPHA1 - KROUPA_ALPHA0);
        double a2 = a1 * pow(KROUPA_M2, KROUPA_ALPHA2 - KROUPA_ALPHA1);
        add_segment(imf, 0, 0.0, KROUPA_M1, KROUPA_ALPHA0, 0.0, a0);
        add_segment(imf, 0, KROUPA_M1, KROUPA_M2, KROUPA_ALPHA1, 0.0, a1);
        add_segment(imf, 0, KROUPA_M2, INFINITY, KROUPA_ALPHA2, 0.0, a2);
        break;
    }
    default: { /* Chabrier 2003 system IMF */
        double mu = log10(CHABRIER_MC), dx = log10(CHABRIER_MBREAK) - mu;
        double ah = CHABRIER_AMP * exp(-dx * dx / (2.0 * CHABRIER_SIGMA * CHABRIER_SIGMA));
        /* dN/dlog m = ah m^-x is dN/dm = (ah / ln 10) m^-(x + 1) */
        add_segment(imf, 1, 0.0, CHABRIER_MBREAK, mu, CHABRIER_SIGMA, CHABRIER_AMP);
        add_segment(imf, 0, CHABRIER_MBREAK, INFINITY, CHABRIER_X + 1.0, 0.0,
                    ah * pow(CHABRIER_MBREAK, CHABRIER_X) / TRAIL_LN10);
        break;
    }
    }
    double tot = 0.0, part[HRT_IMF_MAX_SEGMENTS];
    for (int k = 0; k < imf->n_seg; k++) {
        part[k] = seg_number(imf, k, imf->seg_lo[k], imf->seg_hi[k]);
        tot += part[k];
    }
    if (imf->n_seg == 0 || !(tot > 0.0) || !isfinite(tot)) {
        int n = imf->n_seg;
        memset(imf, 0, sizeof *imf);
        return trail_set_error(err, HRT_E_DOMAIN, "IMF %s over %g .. %g Msun has no finite positive number of stars (%d segments)",
                             hrt_imf_name(kind), m_lo_msun, m_hi_msun, n);
    }
    imf->norm = tot;
    double c = 0.0;
    for (int k = 0; k < imf->n_seg; k++) {
        imf->seg_cum[k] = c / tot;
        c += part[k];
    }
    imf->seg_cum[imf->n_seg] = 1.0;
    return HRT_OK;
}

static int imf_ok(const hrt_imf *f)
{
    return f && f->n_seg > 0 && f->n_seg <= HRT_IMF_MAX_SEGMENTS && f->norm > 0.0;
}

double hrt_imf_pdf(const hrt_imf *f, double m)
{
    if (!imf_ok(f) || isnan(m))
        return NAN;
    if (m < f->m_lo_msun || m > f->m_hi_msun)
        return 0.0;
    int k = 0;
    while (k + 1 < f->n_seg && m >= f->seg_hi[k])
        k++;
    double d;
    if (f->seg_lognormal[k]) {
        double x = (log10(m) - f->seg_a[k]) / f->seg_s[k];
        d = f->seg_amp[k] * exp(-0.5 * x * x) / (m * TRAIL_LN10);
    } else {
        d = f->seg_amp[k] * pow(m, -f->seg_a[k]);
    }
    return d / f->norm;
}

double hrt_imf_cdf(const hrt_imf *f, double m)
{
    if (!imf_ok(f) || isnan(m))
        return NAN;
    if (m <= f->m_lo_msun)
        return 0.0;
    if (m >= f->m_hi_msun)
        return 1.0;
    int k = 0;
    while (k + 1 < f->n_seg && m >= f->seg_hi[k])
        k++;
    double v = f->seg_cum[k] + seg_number(f, k, f->seg_lo[k], m) / f->norm;
    return v < 0.0 ? 0.0 : v > 1.0 ? 1.0 : v;
}

/* Mass at fraction v (0..1) of the stars of segment k. */
static inline double seg_quantile(const hrt_imf *f, int k, double v)
{
    double lo = f->seg_lo[k], m;
    if (f->seg_lognormal[k]) {
        double p = f->seg_c0[k] + v * (f->seg_c1[k] - f->seg_c0[k]);
        m = trail_exp10(f->seg_a[k] + f->seg_s[k] * gsl_cdf_ugaussian_Pinv(p));
    } else if (f->seg_c0[k] == 0.0) {
        m = lo * exp(v * f->seg_c1[k]);
    } else {
        m = lo * exp(log1p(v * f->seg_c1[k]) / f->seg_c0[k]);
    }
    return m < lo ? lo : m > f->seg_hi[k] ? f->seg_hi[k] : m;
}

double hrt_imf_quantile(const hrt_imf *f, double u)
{
    if (!imf_ok(f) || !(u >= 0.0 && u <= 1.0))
        return NAN;
    int k = 0;
    while (k + 1 < f->n_seg && u >= f->seg_cum[k + 1])
        k++;
    double w = f->seg_cum[k + 1] - f->seg_cum[k];
    double v = w > 0.0 ? (u - f->seg_cum[k]) / w : 0.0;
    return seg_quantile(f, k, v < 0.0 ? 0.0 : v > 1.0 ? 1.0 : v);
}

double hrt_imf_mean_mass(const hrt_imf *f)
{
    if (!imf_ok(f))
        return NAN;
    double s = 0.0;
    for (int k = 0; k < f->n_seg; k++) {
        double a = f->seg_lo[k], b = f->seg_hi[k];
        if (f->seg_lognormal[k]) {
            /* integral of m dN/dm = amp * int 10^x exp(-(x-mu)^2/2s^2) dx */
            double mu = f->seg_a[k], sg = f->seg_s[k], sh = sg * TRAIL_LN10;
            double za = (log10(a) - mu) / sg - sh, zb = (log10(b) - mu) / sg - sh;
            s += f->seg_amp[k] * sg * SQRT_2PI * exp(mu * TRAIL_LN10 + 0.5 * sh * sh) *
                 (gsl_cdf_ugaussian_P(zb) - gsl_cdf_ugaussian_P(za));
        } else {
            s += pl_integral(f->seg_amp[k], f->seg_a[k] - 1.0, a, b);
        }
    }
    return s / f->norm;
}

/* ------------------------------------------------------- SFHs and Z draws */

typedef struct name_entry {
    int kind;
    char name[16];
} name_entry;

static const name_entry sfh_names[] = {
    {HRT_SFH_BURST, "burst"}, {HRT_SFH_CONSTANT, "constant"}, {HRT_SFH_EXPONENTIAL, "exponential"},
    {HRT_SFH_TABLE, "table"},
};

const char *hrt_sfh_name(int kind) { return kind >= 0 && kind < HRT_SFH_COUNT ? sfh_names[kind].name : "unknown"; }

int hrt_sfh_from_name(const char *name)
{
    if (!name)
        return -1;
    for (size_t i = 0; i < sizeof sfh_names / sizeof sfh_names[0]; i++)
        if (strcmp(name, sfh_names[i].name) == 0)
            return sfh_names[i].kind;
    return -1;
}

void hrt_pop_spec_default(hrt_pop_spec *spec)
{
    if (!spec)
        return;
    memset(spec, 0, sizeof *spec);
    hrt_imf_init(&spec->imf, HRT_IMF_KROUPA_2001, 0.08, 100.0, 0.0, NULL);
    spec->sfh.kind = HRT_SFH_BURST;
    spec->zdist.kind = HRT_ZDIST_FIXED;
    spec->zdist.z = 0.014;
    spec->seed = 1;
    spec->chunk_size = 65536;
}

static int check_sfh(const hrt_sfh *h, hrt_error *err)
{
    if (!isfinite(h->t_start_yr) || h->t_start_yr < 0.0)
        return trail_set_error(err, HRT_E_DOMAIN, "SFH start time %g yr: need a finite time >= 0", h->t_start_yr);
    switch (h->kind) {
    case HRT_SFH_BURST:
        return HRT_OK;
    case HRT_SFH_CONSTANT:
    case HRT_SFH_EXPONENTIAL:
        if (!isfinite(h->t_end_yr) || !(h->t_end_yr > h->t_start_yr))
            return trail_set_error(err, HRT_E_DOMAIN, "SFH %s: end time %g yr must be finite and after the start %g yr",
                                 hrt_sfh_name(h->kind), h->t_end_yr, h->t_start_yr);
        if (h->kind == HRT_SFH_EXPONENTIAL && !(isfinite(h->tau_yr) && h->tau_yr > 0.0))
            return trail_set_error(err, HRT_E_DOMAIN, "exponential SFH: e-folding time %g yr must be finite and > 0",
                                 h->tau_yr);
        return HRT_OK;
    case HRT_SFH_TABLE: {
        if (!h->table_t_yr || !h->table_rate)
            return trail_set_error(err, HRT_E_NULL, "SFH table: %s is NULL", !h->table_t_yr ? "table_t_yr" : "table_rate");
        if (h->n_table < 2)
            return trail_set_error(err, HRT_E_INVALID, "SFH table: %zu points, need at least 2", h->n_table);
        double area = 0.0;
        for (size_t i = 0; i < h->n_table; i++) {
            double t = h->table_t_yr[i], r = h->table_rate[i];
            if (!isfinite(t) || t < 0.0 || (i > 0 && !(t > h->table_t_yr[i - 1])))
                return trail_set_error(err, HRT_E_DOMAIN, "SFH table: time %g yr at point %zu is not finite, >= 0 and "
                                                        "strictly increasing", t, i);
            if (!isfinite(r) || r < 0.0)
                return trail_set_error(err, HRT_E_DOMAIN, "SFH table: rate %g at point %zu is not finite and >= 0", r, i);
            if (i > 0)
                area += 0.5 * (r + h->table_rate[i - 1]) * (t - h->table_t_yr[i - 1]);
        }
        if (!(area > 0.0) || !isfinite(area))
            return trail_set_error(err, HRT_E_DOMAIN, "SFH table: no star formation (the rates integrate to %g)", area);
        return HRT_OK;
    }
    default:
        return trail_set_error(err, HRT_E_INVALID, "unknown SFH kind %d", (int)h->kind);
    }
}

static int check_zdist(const hrt_zdist *d, hrt_error *err)
{
    switch (d->kind) {
    case HRT_ZDIST_FIXED:
        if (!isfinite(d->z) || !(d->z > 0.0))
            return trail_set_error(err, HRT_E_DOMAIN, "metallicity Z = %g is not a positive finite number", d->z);
        return HRT_OK;
    case HRT_ZDIST_LOG_UNIFORM:
    case HRT_ZDIST_LOG_NORMAL:
        if (!isfinite(d->z_lo) || !isfinite(d->z_hi) || !(d->z_lo > 0.0) || !(d->z_hi > d->z_lo))
            return trail_set_error(err, HRT_E_DOMAIN, "metallicity limits %g .. %g: need 0 < low < high, finite", d->z_lo,
                                 d->z_hi);
        if (d->kind == HRT_ZDIST_LOG_NORMAL) {
            if (!isfinite(d->z) || !(d->z > 0.0) || !isfinite(d->sigma_dex) || !(d->sigma_dex > 0.0))
                return trail_set_error(err, HRT_E_DOMAIN, "log-normal metallicity: median Z = %g and spread %g dex must be "
                                                        "positive and finite", d->z, d->sigma_dex);
            double a = (log10(d->z_lo) - log10(d->z)) / d->sigma_dex, b = (log10(d->z_hi) - log10(d->z)) / d->sigma_dex;
            if (!(gsl_cdf_ugaussian_P(b) - gsl_cdf_ugaussian_P(a) > 1e-9))
                return trail_set_error(err, HRT_E_DOMAIN, "log-normal metallicity: almost no probability (< 1e-9) inside "
                                                        "%g .. %g", d->z_lo, d->z_hi);
        }
        return HRT_OK;
    default:
        return trail_set_error(err, HRT_E_INVALID, "unknown metallicity distribution kind %d", (int)d->kind);
    }
}

int hrt_pop_spec_check(const hrt_pop_spec *spec, hrt_error *err)
{
    if (!spec)
        return trail_set_error(err, HRT_E_NULL, "population specification is NULL");
    const hrt_imf *f = &spec->imf;
    if (!imf_ok(f) || f->kind < 0 || f->kind >= HRT_IMF_COUNT)
        return trail_set_error(err, HRT_E_INVALID, "the IMF is not set up (use hrt_imf_init)");
    if (spec->chunk_size == 0 || spec->chunk_size > ((uint64_t)1 << 40))
        return trail_set_error(err, HRT_E_INVALID, "chunk size %llu: need 1 .. 2^40", (unsigned long long)spec->chunk_size);
    int rc = check_sfh(&spec->sfh, err);
    return rc != HRT_OK ? rc : check_zdist(&spec->zdist, err);
}

uint64_t hrt_pop_n_chunks(const hrt_pop_spec *spec)
{
    if (hrt_pop_spec_check(spec, NULL) != HRT_OK)
        return 0;
    return spec->n_stars / spec->chunk_size + (spec->n_stars % spec->chunk_size != 0);
}

/* ------------------------------------------------------ random streams */

static uint64_t splitmix64(uint64_t x)
{
    x += 0x9E3779B97F4A7C15ull;
    x = (x ^ (x >> 30)) * 0xBF58476D1CE4E5B9ull;
    x = (x ^ (x >> 27)) * 0x94D049BB133111EBull;
    return x ^ (x >> 31);
}

/* Two GSL generators, MT19937 and Tausworthe (taus2), each seeded with 32
 * bits of a SplitMix64 hash of (seed, chunk) and combined by addition
 * modulo 2^32 (a combined generator in L'Ecuyer's sense): 64 bits select the
 * stream, so distinct chunks do not share a stream even for billions of
 * stars.  The states are allocated here, not by gsl_rng_alloc, so GSL's error
 * handler is never reached. */
typedef struct stream {
    gsl_rng a, b;
} stream;

static int stream_alloc(stream *s)
{
    s->a.type = gsl_rng_mt19937;
    s->b.type = gsl_rng_taus2;
    s->a.state = malloc(gsl_rng_mt19937->size);
    s->b.state = malloc(gsl_rng_taus2->size);
    if (!s->a.state || !s->b.state) {
        free(s->a.state);
        free(s->b.state);
        s->a.state = s->b.state = NULL;
        return HRT_E_NOMEM;
    }
    return HRT_OK;
}

static void stream_free(stream *s)
{
    free(s->a.state);
    free(s->b.state);
}

static void stream_seed(stream *s, uint64_t seed, uint64_t chunk)
{
    uint64_t h = splitmix64(splitmix64(seed) ^ chunk);
    uint64_t h2 = splitmix64(h);
    /* taus2 needs a seed that survives its LCG start; any 32-bit value is fine for both. */
    gsl_rng_set(&s->a, (unsigned long)(h & 0xffffffffu));
    gsl_rng_set(&s->b, (unsigned long)(h2 & 0xffffffffu));
}

/* Uniform on (0, 1): midpoints of 2^32 cells, never 0 or 1. */
static inline double stream_uniform(stream *s)
{
    uint32_t k = (uint32_t)gsl_rng_get(&s->a) + (uint32_t)gsl_rng_get(&s->b);
    return ((double)k + 0.5) * (1.0 / 4294967296.0);
}

/* Prepared, read-only data of a run (shared by its threads). */
typedef struct prep {
    const hrt_pop_spec *spec;
    double *cum; /* SFH table: cumulative number at each table point, cum[n-1] = 1 */
    double exp_c; /* exponential SFH: expm1(-(t_end - t_start) / tau) */
    double z_la, z_lb; /* log10 Z limits (uniform), or Phi of the normal's limits */
    double z_mu;
} prep;

static int prep_init(prep *P, const hrt_pop_spec *spec, hrt_error *err)
{
    memset(P, 0, sizeof *P);
    int rc = hrt_pop_spec_check(spec, err);
    if (rc != HRT_OK)
        return rc;
    P->spec = spec;
    const hrt_sfh *h = &spec->sfh;
    if (h->kind == HRT_SFH_EXPONENTIAL)
        P->exp_c = expm1(-(h->t_end_yr - h->t_start_yr) / h->tau_yr);
    if (h->kind == HRT_SFH_TABLE) {
        P->cum = malloc(h->n_table * sizeof *P->cum);
        if (!P->cum)
            return trail_set_error(err, HRT_E_NOMEM, "SFH table of %zu points: out of memory", h->n_table);
        double c = 0.0;
        P->cum[0] = 0.0;
        for (size_t i = 1; i < h->n_table; i++) {
            c += 0.5 * (h->table_rate[i] + h->table_rate[i - 1]) * (h->table_t_yr[i] - h->table_t_yr[i - 1]);
            P->cum[i] = c;
        }
        for (size_t i = 1; i < h->n_table; i++)
            P->cum[i] /= c;
        P->cum[h->n_table - 1] = 1.0;
    }
    const hrt_zdist *d = &spec->zdist;
    if (d->kind == HRT_ZDIST_LOG_UNIFORM) {
        P->z_la = log10(d->z_lo);
        P->z_lb = log10(d->z_hi);
    } else if (d->kind == HRT_ZDIST_LOG_NORMAL) {
        P->z_mu = log10(d->z);
        P->z_la = gsl_cdf_ugaussian_P((log10(d->z_lo) - P->z_mu) / d->sigma_dex);
        P->z_lb = gsl_cdf_ugaussian_P((log10(d->z_hi) - P->z_mu) / d->sigma_dex);
    }
    return HRT_OK;
}

static void prep_free(prep *P) { free(P->cum); }

static double draw_time(const prep *P, stream *s)
{
    const hrt_sfh *h = &P->spec->sfh;
    switch (h->kind) {
    case HRT_SFH_BURST:
        return h->t_start_yr;
    case HRT_SFH_CONSTANT:
        return h->t_start_yr + stream_uniform(s) * (h->t_end_yr - h->t_start_yr);
    case HRT_SFH_EXPONENTIAL: {
        double t = h->t_start_yr - h->tau_yr * log1p(stream_uniform(s) * P->exp_c);
        return t > h->t_end_yr ? h->t_end_yr : t;
    }
    default: {
        double u = stream_uniform(s);
        const double *T = h->table_t_yr, *R = h->table_rate, *C = P->cum;
        size_t lo = 0, hi = h->n_table - 1; /* C[lo] <= u < C[hi] */
        while (hi - lo > 1) {
            size_t c = lo + (hi - lo) / 2;
            if (C[c] <= u)
                lo = c;
            else
                hi = c;
        }
        /* rate linear over the interval: solve r0 x + (dr / 2 dt) x^2 = w for x in [0, dt] */
        double dt = T[hi] - T[lo], r0 = R[lo], dr = R[hi] - R[lo];
        double area = 0.5 * (R[lo] + R[hi]) * dt, w = (u - C[lo]) / (C[hi] - C[lo]) * area;
        double den = r0 + sqrt(fmax(r0 * r0 + 2.0 * dr / dt * w, 0.0));
        double x = den > 0.0 ? 2.0 * w / den : 0.0;
        double t = T[lo] + (x < 0.0 ? 0.0 : x > dt ? dt : x);
        return t;
    }
    }
}

static double draw_z(const prep *P, stream *s)
{
    const hrt_zdist *d = &P->spec->zdist;
    switch (d->kind) {
    case HRT_ZDIST_FIXED:
        return d->z;
    case HRT_ZDIST_LOG_UNIFORM: {
        double z = trail_exp10(P->z_la + stream_uniform(s) * (P->z_lb - P->z_la));
        return z < d->z_lo ? d->z_lo : z > d->z_hi ? d->z_hi : z;
    }
    default: {
        double p = P->z_la + stream_uniform(s) * (P->z_lb - P->z_la);
        double z = trail_exp10(P->z_mu + d->sigma_dex * gsl_cdf_ugaussian_Pinv(p));
        return z < d->z_lo ? d->z_lo : z > d->z_hi ? d->z_hi : z;
    }
    }
}

/* The next n stars of a stream, in the documented order of draws. */
static void draw_stars(const prep *P, stream *s, size_t n, double *m, double *z, double *t)
{
    const hrt_imf *f = &P->spec->imf;
    int draw_t = P->spec->sfh.kind != HRT_SFH_BURST, draw_zz = P->spec->zdist.kind != HRT_ZDIST_FIXED;
    for (size_t i = 0; i < n; i++) {
        m[i] = hrt_imf_quantile(f, stream_uniform(s));
        t[i] = draw_t ? draw_time(P, s) : P->spec->sfh.t_start_yr;
        z[i] = draw_zz ? draw_z(P, s) : P->spec->zdist.z;
    }
}

static uint64_t chunk_len(const hrt_pop_spec *spec, uint64_t chunk)
{
    uint64_t first = chunk * spec->chunk_size, left = spec->n_stars - first;
    return left < spec->chunk_size ? left : spec->chunk_size;
}

int hrt_pop_draw(const hrt_pop_spec *spec, uint64_t chunk, double *mass_msun, double *z, double *t_birth_yr,
                 size_t cap, size_t *n, hrt_error *err)
{
    if (!spec || !n)
        return trail_set_error(err, HRT_E_NULL, "hrt_pop_draw: %s is NULL", !spec ? "spec" : "n");
    prep P;
    int rc = prep_init(&P, spec, err);
    if (rc != HRT_OK)
        return rc;
    uint64_t nc = hrt_pop_n_chunks(spec);
    if (chunk >= nc) {
        prep_free(&P);
        return trail_set_error(err, HRT_E_INVALID, "chunk %llu: the population has %llu chunks",
                             (unsigned long long)chunk, (unsigned long long)nc);
    }
    uint64_t len = chunk_len(spec, chunk);
    *n = (size_t)len;
    if (len > cap) {
        prep_free(&P);
        return trail_set_error(err, HRT_E_BUFFER, "chunk %llu has %llu stars, the arrays hold %zu",
                             (unsigned long long)chunk, (unsigned long long)len, cap);
    }
    stream s;
    if (stream_alloc(&s) != HRT_OK) {
        prep_free(&P);
        return trail_set_error(err, HRT_E_NOMEM, "hrt_pop_draw: out of memory");
    }
    stream_seed(&s, spec->seed, chunk);
    double bm[256], bz[256], bt[256];
    for (size_t i = 0; i < len; i += 256) {
        size_t k = len - i < 256 ? len - i : 256;
        draw_stars(&P, &s, k, bm, bz, bt);
        if (mass_msun)
            memcpy(mass_msun + i, bm, k * sizeof(double));
        if (z)
            memcpy(z + i, bz, k * sizeof(double));
        if (t_birth_yr)
            memcpy(t_birth_yr + i, bt, k * sizeof(double));
    }
    stream_free(&s);
    prep_free(&P);
    return HRT_OK;
}

/* ------------------------------------------------------------ summaries */

#define FIX_SCALE 4294967296.0 /* 2^32 units per Msun or Lsun */

static inline void fix_add_units(hrt_pop_sum *s, uint64_t q)
{
    s->lo += q;
    s->hi += s->lo < q;
}

/* Add v >= 0, rounded once to 2^-32; NaN, negative and zero add nothing. */
static inline void fix_add(hrt_pop_sum *s, double v)
{
    if (!(v > 0.0))
        return;
    double x = v * FIX_SCALE;
    fix_add_units(s, x >= 1.8e19 ? (uint64_t)1.8e19 : (uint64_t)(x + 0.5));
}

static inline void fix_merge(hrt_pop_sum *d, const hrt_pop_sum *s)
{
    fix_add_units(d, s->lo);
    d->hi += s->hi;
}

double hrt_pop_sum_value(const hrt_pop_sum *s)
{
    if (!s)
        return NAN;
    return ((double)s->hi * 18446744073709551616.0 + (double)s->lo) / FIX_SCALE;
}

int hrt_pop_summary_init(hrt_pop_summary *s, double age_yr, const hrt_pop_hr *hr, hrt_error *err)
{
    if (!s)
        return trail_set_error(err, HRT_E_NULL, "hrt_pop_summary_init: summary is NULL");
    if (!isfinite(age_yr) || age_yr < 0.0)
        return trail_set_error(err, HRT_E_DOMAIN, "epoch %g yr: need a finite age >= 0", age_yr);
    if (hr && (hr->nx || hr->ny)) {
        if (hr->nx == 0 || hr->ny == 0 || hr->nx > HRT_POP_HR_MAX_BINS || hr->ny > HRT_POP_HR_MAX_BINS ||
            hr->nx * hr->ny > HRT_POP_HR_MAX_BINS)
            return trail_set_error(err, HRT_E_INVALID, "HR histogram of %llu x %llu bins: need nx, ny >= 1 and nx * ny <= %d",
                                 (unsigned long long)hr->nx, (unsigned long long)hr->ny, HRT_POP_HR_MAX_BINS);
        if (!isfinite(hr->log_teff_k_lo) || !isfinite(hr->log_teff_k_hi) || !(hr->log_teff_k_hi > hr->log_teff_k_lo) ||
            !isfinite(hr->log_l_lsun_lo) || !isfinite(hr->log_l_lsun_hi) || !(hr->log_l_lsun_hi > hr->log_l_lsun_lo))
            return trail_set_error(err, HRT_E_DOMAIN, "HR histogram ranges log Teff %g .. %g, log L %g .. %g: need finite "
                                                    "low < high", hr->log_teff_k_lo, hr->log_teff_k_hi, hr->log_l_lsun_lo, hr->log_l_lsun_hi);
    }
    memset(s, 0, sizeof *s);
    s->struct_size = sizeof *s;
    s->age_yr = age_yr;
    s->evolved_min_initial_mass_msun = INFINITY;
    if (hr && hr->nx && hr->ny)
        s->hr = *hr;
    return HRT_OK;
}

static inline int evolved_phase(int p) { return p != HRT_PHASE_UNKNOWN && p != HRT_PHASE_PRE_MS && p != HRT_PHASE_MS; }

static void summary_add_one(hrt_pop_summary *s, const hrt_state *st, double bx, double by)
{
    s->n_drawn++;
    int code = st->status;
    s->n_status[code >= 0 && code < HRT_POP_MAX_STATUS ? code : HRT_E_INTERNAL]++;
    double m0 = st->initial_mass_msun;
    if (code != HRT_OK) {
        fix_add(&s->failed_initial_mass_msun, m0);
        return;
    }
    s->n_evaluated++;
    int p = st->phase >= 0 && st->phase < HRT_PHASE_SLOTS ? st->phase : HRT_PHASE_UNKNOWN;
    double l = isfinite(st->log_l_lsun) ? trail_exp10(st->log_l_lsun) : 0.0;
    s->n_phase[p]++;
    fix_add(&s->phase_initial_mass_msun[p], m0);
    fix_add(&s->phase_mass_msun[p], st->mass_msun);
    fix_add(&s->phase_l_lsun[p], l);
    int r = (st->flags & HRT_FLAG_REMNANT) && st->remnant > 0 && st->remnant < HRT_REMNANT_SLOTS ? st->remnant : 0;
    s->n_remnant[r]++;
    fix_add(&s->remnant_mass_msun[r], st->mass_msun);
    fix_add(&s->initial_mass_msun, m0);
    fix_add(&s->mass_msun, st->mass_msun);
    fix_add(&s->l_lsun, l);
    if (p == HRT_PHASE_MS && m0 > s->ms_max_initial_mass_msun)
        s->ms_max_initial_mass_msun = m0;
    if (evolved_phase(p) && m0 < s->evolved_min_initial_mass_msun)
        s->evolved_min_initial_mass_msun = m0;
    if (s->hr.nx && isfinite(st->log_l_lsun) && isfinite(st->log_teff_k)) {
        double fx = (st->log_teff_k - s->hr.log_teff_k_lo) * bx, fy = (st->log_l_lsun - s->hr.log_l_lsun_lo) * by;
        if (fx >= 0.0 && fy >= 0.0 && fx < (double)s->hr.nx && fy < (double)s->hr.ny)
            s->hr_count[(uint64_t)fy * s->hr.nx + (uint64_t)fx]++;
        else
            s->hr_outside++;
    }
}

int hrt_pop_summary_add(hrt_pop_summary *s, const hrt_state *states, size_t n, hrt_error *err)
{
    if (!s || (!states && n))
        return trail_set_error(err, HRT_E_NULL, "hrt_pop_summary_add: %s is NULL", !s ? "summary" : "states");
    double bx = 0.0, by = 0.0;
    if (s->hr.nx) {
        bx = (double)s->hr.nx / (s->hr.log_teff_k_hi - s->hr.log_teff_k_lo);
        by = (double)s->hr.ny / (s->hr.log_l_lsun_hi - s->hr.log_l_lsun_lo);
    }
    for (size_t i = 0; i < n; i++)
        summary_add_one(s, &states[i], bx, by);
    return HRT_OK;
}

void hrt_pop_summary_add_unborn(hrt_pop_summary *s, uint64_t n)
{
    if (!s)
        return;
    s->n_drawn += n;
    s->n_unborn += n;
}

int hrt_pop_summary_merge(hrt_pop_summary *d, const hrt_pop_summary *s, hrt_error *err)
{
    if (!d || !s)
        return trail_set_error(err, HRT_E_NULL, "hrt_pop_summary_merge: %s is NULL", !d ? "dst" : "src");
    if (d->struct_size != sizeof *d || s->struct_size != sizeof *s)
        return trail_set_error(err, HRT_E_INVALID, "summary not initialised (struct_size %llu, %llu; expected %zu)",
                             (unsigned long long)d->struct_size, (unsigned long long)s->struct_size, sizeof *d);
    if (memcmp(&d->age_yr, &s->age_yr, sizeof d->age_yr) != 0)
        return trail_set_error(err, HRT_E_INVALID, "summaries of different epochs (%.17g and %.17g yr) do not merge",
                             d->age_yr, s->age_yr);
    if (memcmp(&d->hr, &s->hr, sizeof d->hr) != 0)
        return trail_set_error(err, HRT_E_INVALID, "summaries with different HR-histogram binning do not merge");
    d->n_drawn += s->n_drawn;
    d->n_unborn += s->n_unborn;
    d->n_evaluated += s->n_evaluated;
    for (int k = 0; k < HRT_POP_MAX_STATUS; k++)
        d->n_status[k] += s->n_status[k];
    fix_merge(&d->failed_initial_mass_msun, &s->failed_initial_mass_msun);
    for (int k = 0; k < HRT_PHASE_SLOTS; k++) {
        d->n_phase[k] += s->n_phase[k];
        fix_merge(&d->phase_initial_mass_msun[k], &s->phase_initial_mass_msun[k]);
        fix_merge(&d->phase_mass_msun[k], &s->phase_mass_msun[k]);
        fix_merge(&d->phase_l_lsun[k], &s->phase_l_lsun[k]);
    }
    for (int k = 0; k < HRT_REMNANT_SLOTS; k++) {
        d->n_remnant[k] += s->n_remnant[k];
        fix_merge(&d->remnant_mass_msun[k], &s->remnant_mass_msun[k]);
    }
    fix_merge(&d->initial_mass_msun, &s->initial_mass_msun);
    fix_merge(&d->mass_msun, &s->mass_msun);
    fix_merge(&d->l_lsun, &s->l_lsun);
    if (s->ms_max_initial_mass_msun > d->ms_max_initial_mass_msun)
        d->ms_max_initial_mass_msun = s->ms_max_initial_mass_msun;
    if (s->evolved_min_initial_mass_msun < d->evolved_min_initial_mass_msun)
        d->evolved_min_initial_mass_msun = s->evolved_min_initial_mass_msun;
    d->hr_outside += s->hr_outside;
    uint64_t nb = d->hr.nx * d->hr.ny;
    for (uint64_t k = 0; k < nb; k++)
        d->hr_count[k] += s->hr_count[k];
    return HRT_OK;
}

double hrt_pop_turnoff_mass(const hrt_pop_summary *s)
{
    if (!s || !(s->ms_max_initial_mass_msun > 0.0) || !isfinite(s->evolved_min_initial_mass_msun))
        return NAN;
    return sqrt(s->ms_max_initial_mass_msun * s->evolved_min_initial_mass_msun);
}

/* ------------------------------------------------------------ threads */

int hrt_pop_max_threads(void)
{
#ifdef _OPENMP
    int n = omp_get_max_threads();
    return n > 0 ? n : 1;
#else
    return 1;
#endif
}

static int threads_of(int n_threads)
{
    if (n_threads <= 0)
        return hrt_pop_max_threads();
#ifdef _OPENMP
    return n_threads;
#else
    return 1;
#endif
}

#define PAR_BLOCK 4096

int hrt_eval_parallel(const hrt_grid *g, size_t n, const double *mass_msun, const double *z, double z_all,
                      const double *age_yr, hrt_state *out, int n_threads, hrt_error *err)
{
    int nt = threads_of(n_threads);
    if (nt == 1 || n <= PAR_BLOCK || !g || !mass_msun || !age_yr || !out)
        return hrt_eval(g, n, mass_msun, z, z_all, age_yr, out, err);
    size_t nb = (n + PAR_BLOCK - 1) / PAR_BLOCK;
    long first_bad = -1; /* lowest failing block */
#ifdef _OPENMP
#pragma omp parallel for schedule(static) num_threads(nt)
#endif
    for (size_t b = 0; b < nb; b++) {
        size_t i0 = b * PAR_BLOCK, k = n - i0 < PAR_BLOCK ? n - i0 : PAR_BLOCK;
        int rc = hrt_eval(g, k, mass_msun + i0, z ? z + i0 : NULL, z_all, age_yr + i0, out + i0, NULL);
        if (rc != HRT_OK) {
#ifdef _OPENMP
#pragma omp critical /* unnamed: a named one is a global lock symbol exported by the library */
#endif
            if (first_bad < 0 || (long)b < first_bad)
                first_bad = (long)b;
        }
    }
    if (first_bad < 0)
        return HRT_OK;
    /* The message hrt_eval would give: re-evaluate the first failing star alone. */
    size_t i = (size_t)first_bad * PAR_BLOCK;
    while (i < n && out[i].status == HRT_OK)
        i++;
    if (i >= n)
        return trail_set_error(err, HRT_E_INTERNAL, "hrt_eval_parallel: a block failed but no star has a failing status");
    hrt_state tmp;
    hrt_error e1;
    int rc = hrt_eval(g, 1, mass_msun + i, z ? z + i : NULL, z_all, age_yr + i, &tmp, &e1);
    const char *msg = e1.message, *pfx = "star 0: ";
    if (strncmp(msg, pfx, strlen(pfx)) == 0)
        msg += strlen(pfx);
    return trail_set_error(err, rc, "star %zu: %s", i, msg);
}

/* ------------------------------------------------------------- the run */

#define RUN_BLOCK 1024

typedef struct worker {
    stream s;
    double *m, *z, *t;        /* drawn block */
    double *em, *ez, *ea;     /* born stars of the block at one epoch */
    hrt_state *st;
    hrt_pop_summary *sums;    /* one per epoch */
} worker;

static void worker_free(worker *w)
{
    stream_free(&w->s);
    free(w->m);
    free(w->st);
    free(w->sums);
}

static int worker_init(worker *w, size_t n_ages, const hrt_pop_summary *proto)
{
    memset(w, 0, sizeof *w);
    if (stream_alloc(&w->s) != HRT_OK)
        return HRT_E_NOMEM;
    w->m = malloc(6 * RUN_BLOCK * sizeof(double));
    w->st = malloc(RUN_BLOCK * sizeof(hrt_state));
    w->sums = malloc(n_ages * sizeof(hrt_pop_summary));
    if (!w->m || !w->st || !w->sums) {
        worker_free(w);
        return HRT_E_NOMEM;
    }
    w->z = w->m + RUN_BLOCK;
    w->t = w->z + RUN_BLOCK;
    w->em = w->t + RUN_BLOCK;
    w->ez = w->em + RUN_BLOCK;
    w->ea = w->ez + RUN_BLOCK;
    for (size_t e = 0; e < n_ages; e++)
        hrt_pop_summary_init(&w->sums[e], proto[e].age_yr, &proto[e].hr, NULL);
    return HRT_OK;
}

static void run_chunk(const hrt_grid *g, const prep *P, worker *w, uint64_t chunk, size_t n_ages)
{
    const hrt_pop_spec *spec = P->spec;
    uint64_t len = chunk_len(spec, chunk);
    int fixed_z = spec->zdist.kind == HRT_ZDIST_FIXED;
    stream_seed(&w->s, spec->seed, chunk);
    for (uint64_t i = 0; i < len; i += RUN_BLOCK) {
        size_t k = (size_t)(len - i < RUN_BLOCK ? len - i : RUN_BLOCK);
        draw_stars(P, &w->s, k, w->m, w->z, w->t);
        for (size_t e = 0; e < n_ages; e++) {
            hrt_pop_summary *S = &w->sums[e];
            double T = S->age_yr;
            size_t nb = 0;
            for (size_t j = 0; j < k; j++) {
                double a = T - w->t[j];
                if (a < 0.0)
                    continue;
                w->em[nb] = w->m[j];
                w->ez[nb] = w->z[j];
                w->ea[nb] = a;
                nb++;
            }
            hrt_pop_summary_add_unborn(S, k - nb);
            hrt_eval(g, nb, w->em, fixed_z ? NULL : w->ez, spec->zdist.z, w->ea, w->st, NULL);
            hrt_pop_summary_add(S, w->st, nb, NULL);
        }
    }
}

int hrt_pop_run(const hrt_grid *g, const hrt_pop_spec *spec, uint64_t chunk_first, uint64_t n_chunk, int n_threads,
                size_t n_ages, hrt_pop_summary *sums, hrt_error *err)
{
    if (!g || !spec || !sums)
        return trail_set_error(err, HRT_E_NULL, "hrt_pop_run: %s is NULL", !g ? "grid" : !spec ? "spec" : "sums");
    if (n_ages == 0)
        return trail_set_error(err, HRT_E_INVALID, "hrt_pop_run: no epochs");
    for (size_t e = 0; e < n_ages; e++)
        if (sums[e].struct_size != sizeof sums[e] || !isfinite(sums[e].age_yr) || sums[e].age_yr < 0.0)
            return trail_set_error(err, HRT_E_INVALID, "hrt_pop_run: summary %zu is not initialised (hrt_pop_summary_init)", e);
    prep P;
    int rc = prep_init(&P, spec, err);
    if (rc != HRT_OK)
        return rc;
    uint64_t nc = hrt_pop_n_chunks(spec);
    uint64_t c0 = chunk_first < nc ? chunk_first : nc;
    uint64_t c1 = n_chunk < nc - c0 ? c0 + n_chunk : nc;
    if (c1 == c0) {
        prep_free(&P);
        return HRT_OK;
    }
    hrt_pop_summary *stage = malloc(n_ages * sizeof *stage);
    if (!stage) {
        prep_free(&P);
        return trail_set_error(err, HRT_E_NOMEM, "hrt_pop_run: out of memory for %zu summaries", n_ages);
    }
    for (size_t e = 0; e < n_ages; e++)
        hrt_pop_summary_init(&stage[e], sums[e].age_yr, &sums[e].hr, NULL);
    int nt = threads_of(n_threads);
    if ((uint64_t)nt > c1 - c0)
        nt = (int)(c1 - c0);
    int failed = 0;
#ifdef _OPENMP
#pragma omp parallel num_threads(nt)
#endif
    {
        worker w;
        int ok = worker_init(&w, n_ages, sums) == HRT_OK;
        if (!ok) {
#ifdef _OPENMP
#pragma omp atomic write
#endif
            failed = 1;
        }
#ifdef _OPENMP
#pragma omp for schedule(dynamic, 1)
#endif
        for (uint64_t c = c0; c < c1; c++)
            if (ok)
                run_chunk(g, &P, &w, c, n_ages);
        if (ok) {
#ifdef _OPENMP
#pragma omp critical /* unnamed: a named one is a global lock symbol exported by the library */
#endif
            for (size_t e = 0; e < n_ages; e++)
                hrt_pop_summary_merge(&stage[e], &w.sums[e], NULL);
            worker_free(&w);
        }
    }
    prep_free(&P);
    if (failed) {
        free(stage);
        return trail_set_error(err, HRT_E_NOMEM, "hrt_pop_run: out of memory for a thread's scratch");
    }
    for (size_t e = 0; e < n_ages; e++)
        hrt_pop_summary_merge(&sums[e], &stage[e], NULL);
    free(stage);
    return HRT_OK;
}
