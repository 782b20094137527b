/* hrtrail: evaluating many stars on several threads: hrt_eval in parallel,
 * and population runs (draw, evaluate and summarise chunks of stars). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#ifdef _OPENMP
#include <omp.h>
#endif

#include "util/util.h"
#include "population/sampling.h"

/* Stars per block of hrt_eval_parallel (fewer are evaluated serially). */
#define PAR_BLOCK 4096
/* Stars a run's thread draws and evaluates at a time. */
#define RUN_BLOCK 1024

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

/* The error hrt_eval would give for the stars from block first_bad on:
 * the first failing star, re-evaluated alone, under its own index. */
static int first_failure(const hrt_grid *g, size_t n, const double *mass_msun, const double *z, double z_all,
                         const double *age_yr, const hrt_state *out, size_t first_bad, hrt_error *err)
{
    size_t i = first_bad * PAR_BLOCK;
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
        return trail_set_error(err, HRT_OK, NULL);
    return first_failure(g, n, mass_msun, z, z_all, age_yr, out, (size_t)first_bad, err);
}

/* ------------------------------------------------------------- the run */

/* A thread's scratch: its stream, a block of stars, and its own summaries. */
typedef struct worker {
    trail_pop_stream s;
    double *m, *z, *t;        /* drawn block */
    double *em, *ez, *ea;     /* born stars of the block at one epoch: mass, Z, age */
    hrt_state *st;
    hrt_pop_summary *sums;    /* one per epoch */
} worker;

static void worker_free(worker *w)
{
    trail_pop_stream_free(&w->s);
    free(w->m);
    free(w->st);
    free(w->sums);
}

static int worker_init(worker *w, size_t n_ages, const hrt_pop_summary *proto)
{
    memset(w, 0, sizeof *w);
    if (trail_pop_stream_alloc(&w->s) != HRT_OK)
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

/* Evaluate the k drawn stars of w born by epoch S->age_yr into S; the rest count as unborn. */
static void summarise_block(const hrt_grid *g, const hrt_pop_spec *spec, worker *w, size_t k, hrt_pop_summary *S)
{
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
    hrt_eval(g, nb, w->em, spec->zdist.kind == HRT_ZDIST_FIXED ? NULL : w->ez, spec->zdist.z, w->ea, w->st, NULL);
    hrt_pop_summary_add(S, w->st, nb, NULL);
}

static void run_chunk(const hrt_grid *g, const trail_pop_prep *P, worker *w, uint64_t chunk, size_t n_ages)
{
    const hrt_pop_spec *spec = P->spec;
    uint64_t len = trail_pop_chunk_len(spec, chunk);
    trail_pop_stream_seed(&w->s, spec->seed, chunk);
    for (uint64_t i = 0; i < len; i += RUN_BLOCK) {
        size_t k = (size_t)(len - i < RUN_BLOCK ? len - i : RUN_BLOCK);
        trail_pop_draw_stars(P, &w->s, k, w->m, w->z, w->t);
        for (size_t e = 0; e < n_ages; e++)
            summarise_block(g, spec, w, k, &w->sums[e]);
    }
}

/* Chunks [c0, c1) on nt threads, each into its own summaries, merged into stage; 0 when a thread had no memory. */
static int run_chunks(const hrt_grid *g, const trail_pop_prep *P, uint64_t c0, uint64_t c1, int nt, size_t n_ages,
                      const hrt_pop_summary *proto, hrt_pop_summary *stage)
{
    (void)nt; /* read by OpenMP only */
    int failed = 0;
#ifdef _OPENMP
#pragma omp parallel num_threads(nt)
#endif
    {
        worker w;
        int ok = worker_init(&w, n_ages, proto) == HRT_OK;
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
                run_chunk(g, P, &w, c, n_ages);
        if (ok) {
#ifdef _OPENMP
#pragma omp critical /* unnamed: a named one is a global lock symbol exported by the library */
#endif
            for (size_t e = 0; e < n_ages; e++)
                hrt_pop_summary_merge(&stage[e], &w.sums[e], NULL);
            worker_free(&w);
        }
    }
    return !failed;
}

int hrt_pop_run(const hrt_grid *g, const hrt_pop_spec *spec, uint64_t chunk_first, uint64_t n_chunk, int n_threads,
                size_t n_ages, hrt_pop_summary *sums, hrt_error *err)
{
    if (!g || !spec || !sums)
        return trail_set_error(err, HRT_E_NULL, "hrt_pop_run: %s is NULL", !g ? "grid" : !spec ? "spec" : "sums");
    if (n_ages == 0)
        return trail_set_error(err, HRT_E_INVALID, "hrt_pop_run: no epochs");
    for (size_t e = 0; e < n_ages; e++) {
        char who[64];
        snprintf(who, sizeof who, "hrt_pop_run: summary %zu", e);
        int rc = trail_pop_summary_check(&sums[e], who, err);
        if (rc != HRT_OK)
            return rc;
    }
    trail_pop_prep P;
    int rc = trail_pop_prep_init(&P, spec, err);
    if (rc != HRT_OK)
        return rc;
    uint64_t nc = hrt_pop_n_chunks(spec);
    uint64_t c0 = chunk_first < nc ? chunk_first : nc;
    uint64_t c1 = n_chunk < nc - c0 ? c0 + n_chunk : nc;
    if (c1 == c0) {
        trail_pop_prep_free(&P);
        return trail_set_error(err, HRT_OK, NULL);
    }
    hrt_pop_summary *stage = malloc(n_ages * sizeof *stage);
    if (!stage) {
        trail_pop_prep_free(&P);
        return trail_set_error(err, HRT_E_NOMEM, "hrt_pop_run: out of memory for %zu summaries", n_ages);
    }
    for (size_t e = 0; e < n_ages; e++)
        hrt_pop_summary_init(&stage[e], sums[e].age_yr, &sums[e].hr, NULL);
    int nt = threads_of(n_threads);
    if ((uint64_t)nt > c1 - c0)
        nt = (int)(c1 - c0);
    int ok = run_chunks(g, &P, c0, c1, nt, n_ages, sums, stage);
    trail_pop_prep_free(&P);
    if (!ok) {
        free(stage);
        return trail_set_error(err, HRT_E_NOMEM, "hrt_pop_run: out of memory for a thread's scratch");
    }
    for (size_t e = 0; e < n_ages; e++)
        hrt_pop_summary_merge(&sums[e], &stage[e], NULL);
    free(stage);
    return trail_set_error(err, HRT_OK, NULL);
}
