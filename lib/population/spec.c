/* hrtrail: a population specification: its defaults, its checks (IMF,
 * star-formation history, metallicity distribution, chunks), and its
 * preparation for drawing. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_cdf.h>

#include "util/util.h"
#include "population/sampling.h"

#define STRINGIFY_(x) #x
#define STRINGIFY(x) STRINGIFY_(x)

/* The defaults hrt_pop_spec_default documents. */
#define DEFAULT_M_LO_MSUN 0.08
#define DEFAULT_M_HI_MSUN 100.0
#define DEFAULT_Z 0.014
#define DEFAULT_CHUNK_SIZE 65536
/* The largest chunk: 2^CHUNK_SIZE_MAX_LOG2 stars. */
#define CHUNK_SIZE_MAX_LOG2 40
/* Least probability a truncated log-normal metallicity must keep inside its limits. */
#define LOGNORMAL_MIN_PROB 1e-9

void hrt_pop_spec_default(hrt_pop_spec *spec)
{
    if (!spec)
        return;
    memset(spec, 0, sizeof *spec);
    hrt_imf_init(&spec->imf, HRT_IMF_KROUPA_2001, DEFAULT_M_LO_MSUN, DEFAULT_M_HI_MSUN, 0.0, NULL);
    spec->sfh.kind = HRT_SFH_BURST;
    spec->zdist.kind = HRT_ZDIST_FIXED;
    spec->zdist.z = DEFAULT_Z;
    spec->seed = 1;
    spec->chunk_size = DEFAULT_CHUNK_SIZE;
}

static int check_sfh_table(const hrt_sfh *h, hrt_error *err)
{
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
            area += trail_sfh_table_area(h, i);
    }
    if (!(area > 0.0) || !isfinite(area))
        return trail_set_error(err, HRT_E_DOMAIN, "SFH table: no star formation (the rates integrate to %g)", area);
    return HRT_OK;
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
    case HRT_SFH_TABLE:
        return check_sfh_table(h, err);
    default:
        return trail_set_error(err, HRT_E_INVALID, "unknown SFH kind %d", (int)h->kind);
    }
}

/* Phi of the unit normal at the limits of a log-normal metallicity distribution. */
static void lognormal_limits(const hrt_zdist *d, double mu, double *p_lo, double *p_hi)
{
    *p_lo = gsl_cdf_ugaussian_P((log10(d->z_lo) - mu) / d->sigma_dex);
    *p_hi = gsl_cdf_ugaussian_P((log10(d->z_hi) - mu) / d->sigma_dex);
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
            double p_lo, p_hi;
            lognormal_limits(d, log10(d->z), &p_lo, &p_hi);
            if (!(p_hi - p_lo > LOGNORMAL_MIN_PROB))
                return trail_set_error(err, HRT_E_DOMAIN, "log-normal metallicity: almost no probability (< "
                                                          STRINGIFY(LOGNORMAL_MIN_PROB) ") inside %g .. %g", d->z_lo, d->z_hi);
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
    if (!trail_imf_is_set(f) || f->kind < 0 || f->kind >= HRT_IMF_COUNT)
        return trail_set_error(err, HRT_E_INVALID, "the IMF is not set up (use hrt_imf_init)");
    if (spec->chunk_size == 0 || spec->chunk_size > ((uint64_t)1 << CHUNK_SIZE_MAX_LOG2))
        return trail_set_error(err, HRT_E_INVALID, "chunk size %llu: need 1 .. 2^%d", (unsigned long long)spec->chunk_size,
                               CHUNK_SIZE_MAX_LOG2);
    int rc = check_sfh(&spec->sfh, err);
    if (rc == HRT_OK)
        rc = check_zdist(&spec->zdist, err);
    return rc != HRT_OK ? rc : trail_set_error(err, HRT_OK, NULL);
}

uint64_t hrt_pop_n_chunks(const hrt_pop_spec *spec)
{
    if (hrt_pop_spec_check(spec, NULL) != HRT_OK)
        return 0;
    return spec->n_stars / spec->chunk_size + (spec->n_stars % spec->chunk_size != 0);
}

/* Cumulative number of stars formed at each point of a table SFH, as a fraction of the total. */
static int table_cumulative(trail_pop_prep *P, const hrt_sfh *h, hrt_error *err)
{
    P->cum = malloc(h->n_table * sizeof *P->cum);
    if (!P->cum)
        return trail_set_error(err, HRT_E_NOMEM, "SFH table of %zu points: out of memory", h->n_table);
    double c = 0.0;
    P->cum[0] = 0.0;
    for (size_t i = 1; i < h->n_table; i++) {
        c += trail_sfh_table_area(h, i);
        P->cum[i] = c;
    }
    for (size_t i = 1; i < h->n_table; i++)
        P->cum[i] /= c;
    P->cum[h->n_table - 1] = 1.0;
    return HRT_OK;
}

int trail_pop_prep_init(trail_pop_prep *P, const hrt_pop_spec *spec, hrt_error *err)
{
    memset(P, 0, sizeof *P);
    int rc = hrt_pop_spec_check(spec, err);
    if (rc != HRT_OK)
        return rc;
    P->spec = spec;
    const hrt_sfh *h = &spec->sfh;
    if (h->kind == HRT_SFH_EXPONENTIAL)
        P->exp_c = expm1(-(h->t_end_yr - h->t_start_yr) / h->tau_yr);
    if (h->kind == HRT_SFH_TABLE && (rc = table_cumulative(P, h, err)) != HRT_OK)
        return rc;
    const hrt_zdist *d = &spec->zdist;
    if (d->kind == HRT_ZDIST_LOG_UNIFORM) {
        P->z_map_lo = log10(d->z_lo);
        P->z_map_hi = log10(d->z_hi);
    } else if (d->kind == HRT_ZDIST_LOG_NORMAL) {
        P->z_mu = log10(d->z);
        lognormal_limits(d, P->z_mu, &P->z_map_lo, &P->z_map_hi);
    }
    return HRT_OK;
}

void trail_pop_prep_free(trail_pop_prep *P) { free(P->cum); }
