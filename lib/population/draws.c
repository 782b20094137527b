/* hrtrail: the stars of a population, drawn chunk by chunk on reproducible
 * random streams: initial mass from the IMF, birth time from the
 * star-formation history, metallicity from its distribution. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_rng.h>

#include "util/util.h"
#include "population/sampling.h"

/* Stars hrt_pop_draw draws at a time before copying them out. */
#define DRAW_BLOCK 256

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
 * stars. */
int trail_pop_stream_alloc(trail_pop_stream *s)
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

void trail_pop_stream_free(trail_pop_stream *s)
{
    free(s->a.state);
    free(s->b.state);
}

void trail_pop_stream_seed(trail_pop_stream *s, uint64_t seed, uint64_t chunk)
{
    uint64_t h = splitmix64(splitmix64(seed) ^ chunk);
    uint64_t h2 = splitmix64(h);
    /* taus2 needs a seed that survives its LCG start; any 32-bit value is fine for both. */
    gsl_rng_set(&s->a, (unsigned long)(h & 0xffffffffu));
    gsl_rng_set(&s->b, (unsigned long)(h2 & 0xffffffffu));
}

/* Uniform on (0, 1): midpoints of 2^32 cells, never 0 or 1. */
static inline double stream_uniform(trail_pop_stream *s)
{
    uint32_t k = (uint32_t)gsl_rng_get(&s->a) + (uint32_t)gsl_rng_get(&s->b);
    return ((double)k + 0.5) * (1.0 / 4294967296.0);
}

/* ------------------------------------------------------------ draws */

/* A birth time from a table SFH: the table interval by its cumulative
 * number, then the time inside it where the linear rate has formed the rest. */
static double draw_table_time(const trail_pop_prep *P, trail_pop_stream *s)
{
    const hrt_sfh *h = &P->spec->sfh;
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
    double area = trail_sfh_table_area(h, hi), w = (u - C[lo]) / (C[hi] - C[lo]) * area;
    double den = r0 + sqrt(fmax(r0 * r0 + 2.0 * dr / dt * w, 0.0));
    double x = den > 0.0 ? 2.0 * w / den : 0.0;
    return T[lo] + (x < 0.0 ? 0.0 : x > dt ? dt : x);
}

static double draw_time(const trail_pop_prep *P, trail_pop_stream *s)
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
    default:
        return draw_table_time(P, s);
    }
}

static double draw_z(const trail_pop_prep *P, trail_pop_stream *s)
{
    const hrt_zdist *d = &P->spec->zdist;
    if (d->kind == HRT_ZDIST_FIXED)
        return d->z;
    double x = P->z_map_lo + stream_uniform(s) * (P->z_map_hi - P->z_map_lo);
    double z = d->kind == HRT_ZDIST_LOG_UNIFORM ? trail_exp10(x) : trail_exp10(P->z_mu + d->sigma_dex * gsl_cdf_ugaussian_Pinv(x));
    return z < d->z_lo ? d->z_lo : z > d->z_hi ? d->z_hi : z;
}

void trail_pop_draw_stars(const trail_pop_prep *P, trail_pop_stream *s, size_t n, double *m, double *z, double *t)
{
    const hrt_imf *f = &P->spec->imf;
    int draw_t = P->spec->sfh.kind != HRT_SFH_BURST, draw_zz = P->spec->zdist.kind != HRT_ZDIST_FIXED;
    for (size_t i = 0; i < n; i++) {
        m[i] = hrt_imf_quantile(f, stream_uniform(s));
        t[i] = draw_t ? draw_time(P, s) : P->spec->sfh.t_start_yr;
        z[i] = draw_zz ? draw_z(P, s) : P->spec->zdist.z;
    }
}

uint64_t trail_pop_chunk_len(const hrt_pop_spec *spec, uint64_t chunk)
{
    uint64_t first = chunk * spec->chunk_size, left = spec->n_stars - first;
    return left < spec->chunk_size ? left : spec->chunk_size;
}

/* The checks of hrt_pop_draw that need the number of chunks. */
static int check_chunk(const hrt_pop_spec *spec, uint64_t chunk, size_t cap, size_t *n, hrt_error *err)
{
    uint64_t nc = hrt_pop_n_chunks(spec);
    if (chunk >= nc)
        return trail_set_error(err, HRT_E_INVALID, "chunk %llu: the population has %llu chunks", (unsigned long long)chunk,
                               (unsigned long long)nc);
    uint64_t len = trail_pop_chunk_len(spec, chunk);
    *n = (size_t)len;
    if (len > cap)
        return trail_set_error(err, HRT_E_BUFFER, "chunk %llu has %llu stars, the arrays hold %zu",
                               (unsigned long long)chunk, (unsigned long long)len, cap);
    return HRT_OK;
}

int hrt_pop_draw(const hrt_pop_spec *spec, uint64_t chunk, double *mass_msun, double *z, double *t_birth_yr,
                 size_t cap, size_t *n, hrt_error *err)
{
    if (!spec || !n)
        return trail_set_error(err, HRT_E_NULL, "hrt_pop_draw: %s is NULL", !spec ? "spec" : "n");
    trail_pop_prep P;
    int rc = trail_pop_prep_init(&P, spec, err);
    if (rc == HRT_OK)
        rc = check_chunk(spec, chunk, cap, n, err);
    trail_pop_stream s;
    if (rc == HRT_OK && trail_pop_stream_alloc(&s) != HRT_OK)
        rc = trail_set_error(err, HRT_E_NOMEM, "hrt_pop_draw: out of memory");
    if (rc != HRT_OK) {
        trail_pop_prep_free(&P);
        return rc;
    }
    trail_pop_stream_seed(&s, spec->seed, chunk);
    size_t len = *n;
    double bm[DRAW_BLOCK], bz[DRAW_BLOCK], bt[DRAW_BLOCK];
    for (size_t i = 0; i < len; i += DRAW_BLOCK) {
        size_t k = len - i < DRAW_BLOCK ? len - i : DRAW_BLOCK;
        trail_pop_draw_stars(&P, &s, k, bm, bz, bt);
        if (mass_msun)
            memcpy(mass_msun + i, bm, k * sizeof(double));
        if (z)
            memcpy(z + i, bz, k * sizeof(double));
        if (t_birth_yr)
            memcpy(t_birth_yr + i, bt, k * sizeof(double));
    }
    trail_pop_stream_free(&s);
    trail_pop_prep_free(&P);
    return trail_set_error(err, HRT_OK, NULL);
}
