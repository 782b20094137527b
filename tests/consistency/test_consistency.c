/*
 * Cross-path consistency on the default grid (HRTRAIL_GRID): every way the
 * library offers to get one answer gives the same answer, on thousands of
 * random cases over the whole grid.
 *
 *   eval-star     hrt_eval (one star, and batches) and hrt_star_new +
 *                 hrt_star_at: the same state, bit for bit
 *   parallel      hrt_eval_parallel on 1, 2 and 3 threads and hrt_eval: the
 *                 same states, code and message
 *   population    a chunk drawn with hrt_pop_draw, evaluated with hrt_eval
 *                 and added with hrt_pop_summary_add, and hrt_pop_run's
 *                 summary of that chunk: the same bytes
 *   isochrone     (consistency_iso_fit.c) every point of hrt_isochrone_with
 *                 is hrt_eval at its mass; every mass alive and modelled at
 *                 that age has neighbours bracketing it
 *   fit           (consistency_iso_fit.c) the posterior draws of random fits
 *                 re-evaluate to the state the fit weighted
 *   edges         (consistency_edges.c) the grid's ranges and what hrt_eval,
 *                 hrt_star_new, hrt_isochrone accept at every edge
 *
 * Usage: test_consistency [SEED] (default 20260512; also HRTRAIL_CONSISTENCY_SEED).
 * Every failure prints one line with the seed and the exact values (%.17g)
 * that reproduce it; the exit status is 1 if any check failed.
 */
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <math.h>

#include "consistency.h"

#define DEFAULT_SEED 20260512u
/* Failure lines printed per check (all are counted). */
#define MAX_PRINTED 40
/* Ages of random stars, yr. */
#define AGE_LO_YR 1e5
#define AGE_HI_YR 2e10

/* ------------------------------------------------------------------ shared */

static uint64_t splitmix64(uint64_t *s)
{
    uint64_t x = (*s += 0x9E3779B97F4A7C15ull);
    x = (x ^ (x >> 30)) * 0xBF58476D1CE4E5B9ull;
    x = (x ^ (x >> 27)) * 0x94D049BB133111EBull;
    return x ^ (x >> 31);
}

cs_rng cs_rng_for(uint64_t seed, uint64_t stream)
{
    cs_rng r = {seed};
    uint64_t h = splitmix64(&r.s) ^ (stream * 0xD1B54A32D192ED03ull);
    r.s = h;
    return r;
}

double cs_uniform(cs_rng *r) { return (double)(splitmix64(&r->s) >> 11) * 0x1.0p-53; }

double cs_log_uniform(cs_rng *r, double lo, double hi) { return lo * pow(hi / lo, cs_uniform(r)); }

void cs_case(cs_run *R) { R->cases++; }

void cs_fail(cs_run *R, const char *fmt, ...)
{
    R->failures++;
    if (R->failures > MAX_PRINTED)
        return;
    printf("FAIL %s seed=%llu ", R->check, (unsigned long long)R->seed);
    va_list ap;
    va_start(ap, fmt);
    vprintf(fmt, ap);
    va_end(ap);
    printf("\n");
}

void cs_random_star(const hrt_grid *g, cs_rng *r, double age_lo, double age_hi, double *mass, double *z, double *age)
{
    double zlo, zhi, mlo, mhi;
    hrt_grid_z_range(g, &zlo, &zhi);
    *z = cs_log_uniform(r, zlo, zhi);
    hrt_grid_mass_range(g, *z, &mlo, &mhi);
    *mass = cs_log_uniform(r, mlo, mhi);
    *age = cs_log_uniform(r, age_lo, age_hi);
}

int cs_same_state(const hrt_state *a, const hrt_state *b) { return memcmp(a, b, sizeof *a) == 0; }

/* ------------------------------------------------------------------ hrt_eval and hrt_star_at */

#define N_EVAL 8000
/* Stars of the second batch share their Z in runs of this many (hrt_eval reuses the metallicity part). */
#define Z_RUN 8

static void check_eval_star(cs_run *R)
{
    cs_rng r = cs_rng_for(R->seed, 1);
    double *m = malloc(N_EVAL * sizeof *m), *z = malloc(N_EVAL * sizeof *z), *a = malloc(N_EVAL * sizeof *a);
    hrt_state *one = malloc(N_EVAL * sizeof *one), *batch = malloc(N_EVAL * sizeof *batch);
    for (int i = 0; i < N_EVAL; i++) {
        if (i % Z_RUN == 0 || i < N_EVAL / 2)
            cs_random_star(R->g, &r, AGE_LO_YR, AGE_HI_YR, &m[i], &z[i], &a[i]);
        else { /* the Z of the run's first star, a mass within its range */
            double mlo, mhi;
            z[i] = z[i - 1];
            hrt_grid_mass_range(R->g, z[i], &mlo, &mhi);
            m[i] = cs_log_uniform(&r, mlo, mhi);
            a[i] = cs_log_uniform(&r, AGE_LO_YR, AGE_HI_YR);
        }
        cs_case(R);
        int rc1 = hrt_eval(R->g, 1, &m[i], &z[i], 0.0, &a[i], &one[i], NULL);
        hrt_star *s = NULL;
        int rcs = hrt_star_new(R->g, m[i], z[i], &s, NULL);
        hrt_state st;
        if (rcs == HRT_OK)
            rcs = hrt_star_at(s, a[i], &st);
        hrt_star_free(s);
        if (rcs != rc1)
            cs_fail(R, "mass=%.17g z=%.17g age=%.17g: hrt_eval %s, hrt_star_new + hrt_star_at %s", m[i], z[i], a[i],
                    hrt_strerror(rc1), hrt_strerror(rcs));
        else if (rc1 == HRT_OK && !cs_same_state(&one[i], &st))
            cs_fail(R, "mass=%.17g z=%.17g age=%.17g: hrt_star_at differs from hrt_eval (log L %.17g / %.17g, phase %d / %d)",
                    m[i], z[i], a[i], st.log_l_lsun, one[i].log_l_lsun, st.phase, one[i].phase);
    }
    /* the same stars in one batch: each its own state, whatever its neighbours */
    hrt_eval(R->g, N_EVAL, m, z, 0.0, a, batch, NULL);
    for (int i = 0; i < N_EVAL; i++)
        if (!cs_same_state(&one[i], &batch[i]))
            cs_fail(R, "mass=%.17g z=%.17g age=%.17g: star %d of a batch differs from the star alone", m[i], z[i], a[i], i);
    free(m);
    free(z);
    free(a);
    free(one);
    free(batch);
}

/* ------------------------------------------------------------------ hrt_eval_parallel */

/* More than three blocks of hrt_eval_parallel (4096 stars), 1 in FAIL_EVERY outside the grid. */
#define N_PAR 14000
#define FAIL_EVERY 97

static void check_parallel(cs_run *R)
{
    cs_rng r = cs_rng_for(R->seed, 2);
    double *m = malloc(N_PAR * sizeof *m), *z = malloc(N_PAR * sizeof *z), *a = malloc(N_PAR * sizeof *a);
    hrt_state *ref = malloc(N_PAR * sizeof *ref), *par = malloc(N_PAR * sizeof *par);
    for (int i = 0; i < N_PAR; i++) {
        cs_random_star(R->g, &r, AGE_LO_YR, AGE_HI_YR, &m[i], &z[i], &a[i]);
        if (i % FAIL_EVERY == FAIL_EVERY - 1 && i > N_PAR / 3)
            m[i] *= 1e3; /* outside every group: a failure after the first blocks */
    }
    hrt_error e_ref, e_par;
    int rc_ref = hrt_eval(R->g, N_PAR, m, z, 0.0, a, ref, &e_ref);
    for (int nt = 1; nt <= 3; nt++) {
        cs_case(R);
        memset(par, 0xa5, N_PAR * sizeof *par);
        int rc = hrt_eval_parallel(R->g, N_PAR, m, z, 0.0, a, par, nt, &e_par);
        if (rc != rc_ref || strcmp(e_ref.message, e_par.message) != 0)
            cs_fail(R, "threads=%d: code %d '%s', hrt_eval %d '%s'", nt, rc, e_par.message, rc_ref, e_ref.message);
        for (int i = 0; i < N_PAR; i++)
            if (!cs_same_state(&ref[i], &par[i]))
                cs_fail(R, "threads=%d mass=%.17g z=%.17g age=%.17g: star %d differs from hrt_eval", nt, m[i], z[i], a[i], i);
    }
    free(m);
    free(z);
    free(a);
    free(ref);
    free(par);
}

/* ------------------------------------------------------------------ populations */

#define N_POP_SPECS 24
#define N_EPOCHS 2

/* A random population over (and a little beyond) the grid. */
static void random_spec(cs_rng *r, const hrt_grid *g, hrt_pop_spec *s, double *table)
{
    double zlo, zhi;
    hrt_grid_z_range(g, &zlo, &zhi);
    hrt_pop_spec_default(s);
    int kind = (int)(cs_uniform(r) * HRT_IMF_COUNT);
    hrt_imf_init(&s->imf, kind, cs_log_uniform(r, 0.05, 1.0), cs_log_uniform(r, 5.0, 200.0), 0.5 + 2.5 * cs_uniform(r), NULL);
    s->sfh.kind = (int)(cs_uniform(r) * HRT_SFH_COUNT);
    s->sfh.t_start_yr = s->sfh.kind == HRT_SFH_BURST ? 1e9 * cs_uniform(r) : 0.0;
    s->sfh.t_end_yr = cs_log_uniform(r, 1e8, 1.2e10);
    s->sfh.tau_yr = cs_log_uniform(r, 1e8, 5e9);
    for (int k = 0; k < 4; k++) {
        table[k] = 4e9 * k + 1e9 * cs_uniform(r);
        table[4 + k] = cs_uniform(r) + (k == 1);
    }
    s->sfh.n_table = 4;
    s->sfh.table_t_yr = table;
    s->sfh.table_rate = table + 4;
    s->zdist.kind = (int)(cs_uniform(r) * HRT_ZDIST_COUNT);
    s->zdist.z = cs_log_uniform(r, zlo, zhi);
    s->zdist.z_lo = zlo * (cs_uniform(r) < 0.3 ? 0.5 : 1.0); /* sometimes below the grid: failures */
    s->zdist.z_hi = zhi;
    s->zdist.sigma_dex = 0.1 + 0.5 * cs_uniform(r);
    s->n_stars = 2000 + (uint64_t)(10000 * cs_uniform(r));
    s->chunk_size = 1000 + (uint64_t)(4000 * cs_uniform(r));
    s->seed = (uint64_t)(cs_uniform(r) * 1e15);
}

/* The summaries of one chunk at n epochs by hand: draw, hrt_eval, hrt_pop_summary_add. */
static int summarise_by_hand(const hrt_grid *g, const hrt_pop_spec *s, uint64_t chunk, const double *epochs,
                             const hrt_pop_hr *hr, hrt_pop_summary *out)
{
    size_t cap = (size_t)s->chunk_size, n = 0;
    double *m = malloc(cap * sizeof *m), *z = malloc(cap * sizeof *z), *t = malloc(cap * sizeof *t);
    double *bm = malloc(cap * sizeof *bm), *bz = malloc(cap * sizeof *bz), *ba = malloc(cap * sizeof *ba);
    hrt_state *st = malloc(cap * sizeof *st);
    int rc = hrt_pop_draw(s, chunk, m, z, t, cap, &n, NULL);
    for (int e = 0; e < N_EPOCHS && rc == HRT_OK; e++) {
        size_t nb = 0;
        for (size_t i = 0; i < n; i++) {
            double age = epochs[e] - t[i];
            if (age < 0.0)
                continue;
            bm[nb] = m[i];
            bz[nb] = z[i];
            ba[nb++] = age;
        }
        hrt_eval(g, nb, bm, bz, 0.0, ba, st, NULL);
        rc = hrt_pop_summary_init(&out[e], epochs[e], hr, NULL);
        hrt_pop_summary_add_unborn(&out[e], n - nb);
        if (rc == HRT_OK)
            rc = hrt_pop_summary_add(&out[e], st, nb, NULL);
    }
    free(m), free(z), free(t), free(bm), free(bz), free(ba), free(st);
    return rc;
}

static void check_population(cs_run *R)
{
    cs_rng r = cs_rng_for(R->seed, 3);
    const hrt_pop_hr hr = {3.3, 5.0, -5.0, 6.5, 60, 50};
    hrt_pop_summary *run = malloc(N_EPOCHS * sizeof *run), *hand = malloc(N_EPOCHS * sizeof *hand);
    for (int k = 0; k < N_POP_SPECS; k++) {
        hrt_pop_spec s;
        double table[8], epochs[N_EPOCHS];
        random_spec(&r, R->g, &s, table);
        for (int e = 0; e < N_EPOCHS; e++)
            epochs[e] = cs_log_uniform(&r, 1e7, 1.4e10);
        uint64_t nc = hrt_pop_n_chunks(&s), chunk = (uint64_t)(cs_uniform(&r) * (double)nc);
        int nt = 1 + (int)(3 * cs_uniform(&r));
        cs_case(R);
        if (nc == 0) {
            hrt_error e;
            hrt_pop_spec_check(&s, &e);
            cs_fail(R, "spec %d: not valid: %s", k, e.message);
            continue;
        }
        for (int e = 0; e < N_EPOCHS; e++)
            hrt_pop_summary_init(&run[e], epochs[e], &hr, NULL);
        hrt_error err;
        int rc = hrt_pop_run(R->g, &s, chunk, 1, nt, N_EPOCHS, run, &err);
        int rc2 = summarise_by_hand(R->g, &s, chunk, epochs, &hr, hand);
        if (rc != HRT_OK || rc2 != HRT_OK || memcmp(run, hand, N_EPOCHS * sizeof *run) != 0)
            cs_fail(R, "spec %d (imf %d %.17g..%.17g alpha %.17g, sfh %d, zdist %d z %.17g [%.17g, %.17g] sigma %.17g, "
                       "n %llu chunk_size %llu seed %llu) chunk %llu threads %d epochs %.17g %.17g: hrt_pop_run %s (%s), "
                       "by hand %s; summaries %s",
                    k, (int)s.imf.kind, s.imf.m_lo_msun, s.imf.m_hi_msun, s.imf.alpha, (int)s.sfh.kind, (int)s.zdist.kind,
                    s.zdist.z, s.zdist.z_lo, s.zdist.z_hi, s.zdist.sigma_dex, (unsigned long long)s.n_stars,
                    (unsigned long long)s.chunk_size, (unsigned long long)s.seed, (unsigned long long)chunk, nt, epochs[0],
                    epochs[1], hrt_strerror(rc), err.message, hrt_strerror(rc2),
                    memcmp(run, hand, N_EPOCHS * sizeof *run) ? "differ" : "equal");
    }
    free(run);
    free(hand);
}

/* ------------------------------------------------------------------ the run */

int main(int argc, char **argv)
{
    setvbuf(stdout, NULL, _IOLBF, 0);
    const char *env = getenv("HRTRAIL_CONSISTENCY_SEED");
    uint64_t seed = argc > 1 ? strtoull(argv[1], NULL, 0) : env ? strtoull(env, NULL, 0) : DEFAULT_SEED;
    hrt_grid *g = NULL;
    hrt_error err;
    if (hrt_grid_open(NULL, &g, &err) != HRT_OK) {
        printf("FAIL open seed=%llu: %s (%s)\n", (unsigned long long)seed, err.message, hrt_default_grid_path());
        return 1;
    }
    struct {
        const char *name;
        void (*fn)(cs_run *);
    } checks[] = {{"eval-star", check_eval_star},     {"parallel", check_parallel}, {"population", check_population},
                  {"isochrone", cs_check_isochrones}, {"fit", cs_check_fits},       {"edges", cs_check_edges}};
    long failures = 0;
    printf("consistency: seed %llu, grid %s\n", (unsigned long long)seed, hrt_default_grid_path());
    for (size_t c = 0; c < sizeof checks / sizeof checks[0]; c++) {
        cs_run R = {g, seed, checks[c].name, 0, 0};
        checks[c].fn(&R);
        printf("%-11s %6ld cases, %ld failures\n", checks[c].name, R.cases, R.failures);
        failures += R.failures;
    }
    hrt_grid_close(g);
    return failures ? 1 : 0;
}
