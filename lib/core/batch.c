/* hrt_eval: the order in which a batch's stars are evaluated.
 *
 * Random stars touch the grid's knot tables (tens of MB) at random places,
 * so one after another in the caller's order they wait on memory.  A large
 * batch is evaluated chunk by chunk, each chunk's stars bucketed by
 * metallicity and initial mass (a counting sort on the leading bits of the
 * two numbers, which order positive doubles as their logarithms do): stars
 * of one Z and neighbouring masses come one after another and reuse the
 * knots already in cache.  Every star's state is computed from its own
 * inputs alone (eval.c), so the order changes no answer; the first failure
 * is reported for the lowest failing index, as in the caller's order. */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "core/core.h"

/* Batches with metallicities spread are bucketed from this size on (smaller
 * ones are evaluated in the caller's order): bucketing pays for itself only
 * when stars share a mass interval.  With metallicities spread, the kernel for stars between
 * groups (lockstep_z.c) makes it pay from a few hundred stars on (measured
 * on the composite population's blocks of 1,024 stars: 4,657 -> 4,111
 * instructions per star; it was 16,384 before that kernel). */
#define BATCH_MIN 512
/* Batches of one metallicity are bucketed from this size on: their stars
 * share mass intervals, whose runs the kernel (lockstep.c) evaluates with
 * one context (measured: about 14 % fewer instructions per star from 1,024
 * stars on, the size of a population run's blocks). */
#define BATCH_MIN_ONE_Z 1024
/* Stars bucketed together (bounds the scratch and keeps it in cache). */
#define BATCH_CHUNK ((size_t)1 << 16)
/* Mantissa bits kept in a key: up to 2^8 buckets per factor of 2 in mass
 * and Z (fewer when the keys are shifted to fit MAX_BUCKETS). */
#define KEY_MANT_BITS 8
/* Mass buckets per chunk when it has several metallicities (the rest of
 * MAX_BUCKETS goes to Z); at one metallicity all MAX_BUCKETS go to mass, so
 * that a bucket rarely spans more intervals of a fine grid than the batch
 * kernel keeps open (lockstep.c: a grid of 500 tracks over 1-100 Msun has
 * about 75 per factor of 2). */
#define MASS_BUCKETS_MIXED 256u
/* At most this many buckets per chunk (coarser keys when the masses or
 * metallicities of a chunk spread wider). */
#define MAX_BUCKETS 4096u

/* Leading bits of a positive finite double (exponent and KEY_MANT_BITS of
 * mantissa), increasing with x; 0 for anything else (those stars fail). */
static uint32_t lead_bits(double x)
{
    if (!(x > 0.0) || !isfinite(x))
        return 0;
    uint64_t b;
    memcpy(&b, &x, sizeof b);
    return (uint32_t)(b >> (52 - KEY_MANT_BITS));
}

typedef struct bucket_scratch {
    uint32_t *key, *order, *count;
    double *m, *z, *age; /* a chunk's inputs in bucket order */
    hrt_state *st;       /* its states, in the same order */
} bucket_scratch;

/* Keys of x[a .. a + n - 1] into v, and the range of the non-zero ones
 * (0, 0 if none; a zero, a star that will fail, is bucketed as the bottom
 * of the range). */
static void keys_of(const double *x, size_t a, size_t n, uint32_t *v, uint32_t *lo, uint32_t *hi)
{
    uint32_t l = UINT32_MAX, h = 0;
    for (size_t k = 0; k < n; k++) {
        uint32_t b = lead_bits(x[a + k]);
        v[k] = b;
        l = b && b < l ? b : l;
        h = b > h ? b : h;
    }
    *lo = h == 0 ? 0 : l;
    *hi = h;
}

/* Stars [a, a + n) in bucket order: by Z key, then mass key (by mass alone
 * when z is NULL: one metallicity).  Keys are shifted right until the
 * chunk's buckets number at most MAX_BUCKETS. */
static void bucket_chunk(size_t a, size_t n, const double *mass, const double *z, bucket_scratch *b)
{
    uint32_t *mk = b->key, *zk = b->order; /* order holds the Z keys until the scatter */
    uint32_t mlo, mhi, zlo = 0, zhi = 0;
    keys_of(mass, a, n, mk, &mlo, &mhi);
    if (z)
        keys_of(z, a, n, zk, &zlo, &zhi);
    unsigned ms = 0, zs = 0;
    while ((uint64_t)((mhi - mlo) >> ms) + 1 > (z ? MASS_BUCKETS_MIXED : MAX_BUCKETS))
        ms++;
    uint32_t nm = ((mhi - mlo) >> ms) + 1;
    while (((uint64_t)((zhi - zlo) >> zs) + 1) * nm > MAX_BUCKETS)
        zs++;
    uint32_t nb = (((zhi - zlo) >> zs) + 1) * nm;
    memset(b->count, 0, (nb + 1) * sizeof *b->count);
    for (size_t k = 0; k < n; k++) {
        uint32_t mv = mk[k] ? mk[k] : mlo, zv = z && zk[k] ? zk[k] : zlo;
        mk[k] = ((zv - zlo) >> zs) * nm + ((mv - mlo) >> ms);
        b->count[mk[k] + 1]++;
    }
    for (uint32_t k = 0; k < nb; k++)
        b->count[k + 1] += b->count[k];
    for (size_t k = 0; k < n; k++)
        b->order[b->count[mk[k]]++] = (uint32_t)(a + k);
}

/* Whether every star of the batch has the same metallicity. */
static int one_z(size_t n, const double *z)
{
    for (size_t k = 1; z && k < n; k++)
        if (!(z[k] == z[0]))
            return 0;
    return 1;
}

static void scratch_free(bucket_scratch *b)
{
    free(b->key);
    free(b->order);
    free(b->count);
    free(b->m);
    free(b->st);
}

/* The first failing star in the caller's order and its message, as the
 * in-order loop words it: that star evaluated again on its own (its state
 * written again, the same bytes). */
static int first_failure(const hrt_grid *g, size_t n, const double *mass_msun, const double *z, double z_all,
                         const double *age_yr, hrt_state *out, hrt_error *err)
{
    for (size_t i = 0; i < n; i++) {
        if (out[i].status == HRT_OK)
            continue;
        uint32_t one = (uint32_t)i;
        return trail_eval_run(g, 1, &one, mass_msun, z, z_all, age_yr, out, err);
    }
    if (err)
        trail_set_error(err, HRT_OK, NULL);
    return HRT_OK;
}

int hrt_eval(const hrt_grid *g, size_t n, const double *mass_msun, const double *z, double z_all,
             const double *age_yr, hrt_state *out, hrt_error *err)
{
    if (n == 0)
        return trail_set_error(err, HRT_OK, NULL);
    if (!g || !mass_msun || !age_yr || !out)
        return trail_set_error(err, HRT_E_NULL, "hrt_eval: %s is NULL",
                               !g ? "grid" : !mass_msun ? "mass_msun" : !age_yr ? "age_yr" : "out");
    bucket_scratch b = {NULL, NULL, NULL, NULL, NULL, NULL, NULL};
    int single_z = 0; /* every star at one metallicity: bucketed by mass alone */
    if (n <= UINT32_MAX && n >= BATCH_MIN && ((single_z = one_z(n, z)) ? n >= BATCH_MIN_ONE_Z : 1)) {
        size_t c = n < BATCH_CHUNK ? n : BATCH_CHUNK;
        b.key = malloc(c * sizeof *b.key);
        b.order = malloc(c * sizeof *b.order);
        b.count = malloc((MAX_BUCKETS + 1) * sizeof *b.count);
        b.m = malloc(3 * c * sizeof *b.m);
        b.st = malloc(c * sizeof *b.st);
    }
    if (!b.key || !b.order || !b.count || !b.m || !b.st) {
        /* small batch, or no memory for the scratch: the caller's order */
        scratch_free(&b);
        return trail_eval_run(g, n, NULL, mass_msun, z, z_all, age_yr, out, err);
    }
    int failed = 0;
    for (size_t a = 0; a < n; a += BATCH_CHUNK) {
        size_t c = n - a < BATCH_CHUNK ? n - a : BATCH_CHUNK;
        bucket_chunk(a, c, mass_msun, single_z ? NULL : z, &b);
        /* inputs read and states written one after another: only the
         * gather and the scatter touch the caller's arrays out of order */
        double *bz = b.m + c, *bage = b.m + 2 * c;
        for (size_t k = 0; k < c; k++) {
            uint32_t i = b.order[k];
            b.m[k] = mass_msun[i];
            bz[k] = z ? z[i] : z_all;
            bage[k] = age_yr[i];
        }
        /* states computed in bucket order into the scratch, then stored
         * at their stars' places in one loop: storing each straight from
         * the kernel saved 30 instructions a star but cost 60 % more time
         * (stores missing cache amid the arithmetic; measured) */
        if (trail_eval_lockstep(g, c, b.m, bz, bage, b.st) != HRT_OK)
            failed = 1;
        for (size_t k = 0; k < c; k++)
            out[b.order[k]] = b.st[k];
    }
    scratch_free(&b);
    if (!failed) {
        if (err)
            trail_set_error(err, HRT_OK, NULL);
        return HRT_OK;
    }
    return first_failure(g, n, mass_msun, z, z_all, age_yr, out, err);
}
