/*
 * hrtrail population --catalogue FILE: every star of this rank's chunks, at every epoch, streamed
 * to HDF5 (.h5, .hdf5) or CSV (.csv) by the library (hrt_pop_catalogue_*), while the summaries are
 * made from the same states.  A chunk at a time: memory is bounded by the chunk size.  Under MPI
 * with more than one rank, rank R writes FILE's name with ".rankR" before its extension, and
 * rank 0 a manifest, FILE with ".manifest.csv" in place of its extension: one line per rank
 * (file, rank, chunk_first, chunk_count, rows).
 */
#include <stdlib.h>
#include <string.h>

#include "pop.h"

static int catalogue_format(const char *path)
{
    const char *dot = strrchr(path, '.');
    if (dot && (!strcmp(dot, ".h5") || !strcmp(dot, ".hdf5"))) return HRT_CATALOGUE_HDF5;
    if (dot && !strcmp(dot, ".csv")) return HRT_CATALOGUE_CSV;
    return -1;
}

/* FILE with `insert` before its extension, or in place of it (replace). */
static char *name_with(const char *path, const char *insert, int replace)
{
    const char *dot = strrchr(path, '.'), *slash = strrchr(path, '/');
    if (!dot || (slash && dot < slash)) dot = path + strlen(path);
    size_t n = strlen(path) + strlen(insert) + 1;
    char *s = xmalloc(n);
    snprintf(s, n, "%.*s%s%s", (int)(dot - path), path, insert, replace ? "" : dot);
    return s;
}

/* Scratch for one chunk: drawn stars, and the born ones at one epoch. */
typedef struct cat_scratch {
    double *m, *z, *t, *em, *ez, *ea, *eb;
    uint64_t *id;
    hrt_state *st;
} cat_scratch;

static void scratch_alloc(cat_scratch *s, size_t n)
{
    s->m = xmalloc(7 * n * sizeof(double));
    s->z = s->m + n, s->t = s->z + n, s->em = s->t + n, s->ez = s->em + n, s->ea = s->ez + n, s->eb = s->ea + n;
    s->id = xmalloc(n * sizeof *s->id);
    s->st = xmalloc(n * sizeof *s->st);
}

static void scratch_free(cat_scratch *s)
{
    free(s->m);
    free(s->id);
    free(s->st);
}

/* One chunk: drawn, evaluated at each epoch, summarised and written. */
static int catalogue_chunk(const cli *c, const pop_args *a, uint64_t chunk, cat_scratch *s, hrt_pop_summary *sums,
                           hrt_pop_catalogue *cat)
{
    hrt_error err;
    size_t n = 0, cap = (size_t)a->spec.chunk_size;
    int fixed = a->spec.zdist.kind == HRT_ZDIST_FIXED;
    if (hrt_pop_draw(&a->spec, chunk, s->m, s->z, s->t, cap, &n, &err) != HRT_OK)
        return cli_fail(c, CLI_EXIT_INTERNAL, "%s", err.message);
    for (size_t e = 0; e < a->ages.n; e++) {
        double T = sums[e].age_yr;
        size_t nb = 0;
        for (size_t j = 0; j < n; j++) {
            double age = T - s->t[j];
            if (age < 0.0) continue; /* not yet born at this epoch */
            s->em[nb] = s->m[j], s->ez[nb] = s->z[j], s->ea[nb] = age, s->eb[nb] = s->t[j];
            s->id[nb++] = chunk * a->spec.chunk_size + j;
        }
        hrt_pop_summary_add_unborn(&sums[e], n - nb);
        /* a star the grid does not cover is no error here: its status is counted and written */
        hrt_eval_parallel(c->grid, nb, s->em, fixed ? NULL : s->ez, a->spec.zdist.z, s->ea, s->st, a->threads, NULL);
        if (hrt_pop_summary_add(&sums[e], s->st, nb, &err) != HRT_OK ||
            hrt_pop_catalogue_add(cat, T, nb, s->id, s->eb, s->st, &err) != HRT_OK)
            return cli_fail(c, cli_exit_of_status(err.code), "--catalogue: %s", err.message);
    }
    return 0;
}

/* The manifest of the ranks' files (rank 0). */
static int write_manifest(const cli *c, const pop_args *a, const popdist *d, const uint64_t *rows)
{
    char *path = name_with(a->catalogue, ".manifest.csv", 1);
    outfile o;
    int rc = outfile_open(c, &o, path);
    FILE *f = rc == 0 ? o.f : NULL;
    for (int r = 0; f && r < d->size; r++) {
        char ins[32];
        snprintf(ins, sizeof ins, ".rank%d", r);
        char *name = name_with(a->catalogue, ins, 0);
        uint64_t f0 = d->first + (uint64_t)((unsigned __int128)d->count * (unsigned)r / (unsigned)d->size);
        uint64_t f1 = d->first + (uint64_t)((unsigned __int128)d->count * (unsigned)(r + 1) / (unsigned)d->size);
        if (r == 0) fprintf(f, "file,rank,chunk_first,chunk_count,rows\n");
        fprintf(f, "%s,%d,%llu,%llu,%llu\n", name, r, (unsigned long long)f0, (unsigned long long)(f1 - f0),
                (unsigned long long)rows[r]);
        free(name);
    }
    if (f) rc = outfile_close(c, &o);
    free(path);
    return rc;
}

int pop_catalogue_run(const cli *c, const pop_args *a, popdist *d, hrt_pop_summary *sums, int progress)
{
    hrt_error err;
    hrt_pop_catalogue *cat = NULL;
    cat_scratch s;
    uint64_t rows = 0;
    int fmt = catalogue_format(a->catalogue);
    if (fmt < 0) return cli_fail(c, CLI_EXIT_USAGE, "--catalogue '%s': name a .h5 (HDF5) or .csv file", a->catalogue);
    char ins[32];
    snprintf(ins, sizeof ins, ".rank%d", d->rank);
    char *name = d->size > 1 ? name_with(a->catalogue, ins, 0) : xstrdup(a->catalogue);
    char *path = NULL; /* the file replaced: name, or where its chain of links ends */
    int rc = outfile_target(c, name, "--catalogue", &path), have = 0;
    free(name);
    if (rc == 0 && hrt_pop_catalogue_open(path, fmt, &cat, &err) != HRT_OK)
        rc = cli_fail(c, cli_exit_of_status(err.code), "--catalogue '%s': %s", path, err.message);
    if (rc == 0) scratch_alloc(&s, (size_t)a->spec.chunk_size), have = 1;
    for (uint64_t k = 0; rc == 0 && k < d->my_count; k++) {
        rc = catalogue_chunk(c, a, d->my_first + k, &s, sums, cat);
        if (progress)
            fprintf(stderr, "\rhrtrail %s: %3.0f%% (catalogue)", c->cmd, 100.0 * (double)(k + 1) / (double)d->my_count);
    }
    if (progress) fprintf(stderr, "\r%60s\r", "");
    if (have) scratch_free(&s);
    if (cat && hrt_pop_catalogue_close(cat, &rows, &err) != HRT_OK && rc == 0)
        rc = cli_fail(c, cli_exit_of_status(err.code), "--catalogue '%s': %s", path, err.message);
    free(path);
    if (d->size > 1) {
        uint64_t *all = xmalloc((size_t)d->size * sizeof *all);
        popdist_gather(d, rows, all);
        if (rc == 0 && d->rank == 0) rc = write_manifest(c, a, d, all);
        free(all);
    }
    return rc;
}
