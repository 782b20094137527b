/*
 * hrtrail population beyond one process: a part of the chunks (--chunks, --part) saved
 * with --save-summary, parts merged by "hrtrail population merge", and MPI ranks
 * (when built with MPI and started by an MPI launcher) sharing the chunks and adding
 * up their summaries exactly on rank 0, which writes the same bytes a single process
 * does.  The saved form is the library's (hrt_pop_part_save); its note holds the grid.
 */
#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "pop.h"

#ifdef HRTRAIL_CLI_MPI
#include <mpi.h>
#endif

/* ------------------------------------------------------------ MPI */

/* Launched by an MPI launcher: Open MPI's, or a PMI/PMIx one (MPICH, Slurm). */
static int launched_by_mpi(void)
{
    return getenv("OMPI_COMM_WORLD_SIZE") || getenv("PMI_SIZE") || getenv("PMIX_RANK");
}

#ifdef HRTRAIL_CLI_MPI

static void merge_op(void *in, void *inout, int *len, MPI_Datatype *type)
{
    (void)type;
    hrt_pop_summary *d = inout;
    const hrt_pop_summary *s = in;
    for (int i = 0; i < *len; i++) hrt_pop_summary_merge(&d[i], &s[i], NULL); /* same epochs and binning on every rank */
}
#endif

void popdist_begin(popdist *d)
{
    memset(d, 0, sizeof *d);
    d->size = 1;
#ifndef HRTRAIL_CLI_MPI
    if (launched_by_mpi())
        fprintf(stderr, "hrtrail population: started by an MPI launcher, but this hrtrail was built without MPI: "
                        "each process runs the whole population (rebuild with -Dmpi=enabled)\n");
#else
    if (!launched_by_mpi()) return;
    int done = 0;
    MPI_Initialized(&done);
    if (!done && MPI_Init(NULL, NULL) != MPI_SUCCESS) return;
    d->mpi = 1;
    MPI_Comm_rank(MPI_COMM_WORLD, &d->rank);
    MPI_Comm_size(MPI_COMM_WORLD, &d->size);
    if (d->rank != 0) {
        d->sink = open_memstream(&d->msg, &d->msg_len);
        cli_set_message_sink(d->sink);
    }
#endif
}

int popdist_agree(const cli *c, popdist *d, int rc)
{
    (void)c;
#ifdef HRTRAIL_CLI_MPI
    if (!d->mpi || rc == CLI_STOP) return rc;
    int worst = 0, first = d->size, mine = rc ? d->rank : d->size;
    MPI_Allreduce(&rc, &worst, 1, MPI_INT, MPI_MAX, MPI_COMM_WORLD);
    if (!worst) return 0;
    MPI_Allreduce(&mine, &first, 1, MPI_INT, MPI_MIN, MPI_COMM_WORLD);
    if (first > 0 && first < d->size) { /* rank 0 did not fail: the first failing rank's message */
        if (d->rank == first) {
            fflush(d->sink);
            int n = (int)(d->msg_len < 4096 ? d->msg_len : 4096);
            MPI_Send(d->msg, n, MPI_CHAR, 0, 17, MPI_COMM_WORLD);
        } else if (d->rank == 0) {
            char buf[4097];
            MPI_Status st;
            int n = 0;
            MPI_Recv(buf, 4096, MPI_CHAR, first, 17, MPI_COMM_WORLD, &st);
            MPI_Get_count(&st, MPI_CHAR, &n);
            fprintf(stderr, "%.*s", n, buf);
            if (n == 0) fprintf(stderr, "hrtrail %s: rank %d failed\n", c->cmd, first);
        }
    }
    return worst;
#else
    (void)d;
    return rc;
#endif
}

int popdist_reduce(const cli *c, const popdist *d, hrt_pop_summary *sums, size_t n_ages)
{
#ifdef HRTRAIL_CLI_MPI
    if (!d->mpi || d->size == 1) return 0;
    MPI_Datatype t;
    MPI_Op op;
    hrt_pop_summary *total = d->rank == 0 ? xmalloc(n_ages * sizeof *total) : NULL;
    MPI_Type_contiguous((int)sizeof *sums, MPI_BYTE, &t);
    MPI_Type_commit(&t);
    MPI_Op_create(merge_op, 1, &op); /* merging is exact, hence commutative and associative bit for bit */
    int rc = MPI_Reduce(sums, total, (int)n_ages, t, op, 0, MPI_COMM_WORLD);
    MPI_Op_free(&op);
    MPI_Type_free(&t);
    if (d->rank == 0) {
        memcpy(sums, total, n_ages * sizeof *total);
        free(total);
    }
    return rc == MPI_SUCCESS ? 0 : cli_fail(c, CLI_EXIT_INTERNAL, "MPI could not add up the ranks' summaries");
#else
    (void)c, (void)d, (void)sums, (void)n_ages;
    return 0;
#endif
}

void popdist_gather(const popdist *d, uint64_t v, uint64_t *all)
{
    all[0] = v;
#ifdef HRTRAIL_CLI_MPI
    if (d->mpi) MPI_Gather(&v, 1, MPI_UINT64_T, all, 1, MPI_UINT64_T, 0, MPI_COMM_WORLD);
#else
    (void)d;
#endif
}

int popdist_end(const cli *c, popdist *d, int rc)
{
    rc = popdist_agree(c, d, rc);
#ifdef HRTRAIL_CLI_MPI
    if (d->mpi) {
        if (d->sink) {
            cli_set_message_sink(NULL);
            fclose(d->sink);
            free(d->msg);
        }
        fflush(stdout);
        MPI_Finalize();
        if (rc == CLI_STOP && d->rank != 0) rc = 0; /* --help: shown once */
    }
#endif
    return rc;
}

/* ------------------------------------------------------------ chunks */

int popdist_range(const cli *c, const pop_args *a, popdist *d)
{
    uint64_t nc = hrt_pop_n_chunks(&a->spec);
    d->first = 0, d->count = nc;
    if (a->have_chunks && a->have_part) return cli_fail(c, CLI_EXIT_USAGE, "--chunks and --part: give one of them");
    if (a->have_chunks) {
        if (a->ch_first >= nc)
            return cli_fail(c, CLI_EXIT_USAGE, "--chunks %llu:%llu: the population has %llu chunks (0 to %llu) of %llu stars",
                            (unsigned long long)a->ch_first, (unsigned long long)a->ch_count, (unsigned long long)nc,
                            (unsigned long long)(nc - 1), (unsigned long long)a->spec.chunk_size);
        d->first = a->ch_first;
        d->count = a->ch_count < nc - a->ch_first ? a->ch_count : nc - a->ch_first;
    } else if (a->have_part) {
        d->first = (uint64_t)((unsigned __int128)nc * a->part_k / a->part_n);
        d->count = (uint64_t)((unsigned __int128)nc * (a->part_k + 1) / a->part_n) - d->first;
    }
    if ((a->have_chunks || a->have_part) && !a->save)
        return cli_fail(c, CLI_EXIT_USAGE, "%s runs part of the population: name a file for its summary with "
                                           "--save-summary FILE, then combine the parts with 'hrtrail population merge'",
                        a->have_chunks ? "--chunks" : "--part");
    d->my_first = d->first + (uint64_t)((unsigned __int128)d->count * (unsigned)d->rank / (unsigned)d->size);
    d->my_count = d->first + (uint64_t)((unsigned __int128)d->count * (unsigned)(d->rank + 1) / (unsigned)d->size) - d->my_first;
    return 0;
}

/* ------------------------------------------------------------ saved parts */

static int save_part(const cli *c, const hrt_pop_part *part, const char *path)
{
    hrt_error err;
    size_t len = 0;
    hrt_pop_part_save(part, NULL, 0, &len, &err);
    unsigned char *buf = xmalloc(len);
    if (hrt_pop_part_save(part, buf, len, &len, &err) != HRT_OK) {
        free(buf);
        return cli_fail(c, CLI_EXIT_INTERNAL, "%s", err.message);
    }
    /* through an output file (outfile.c): written whole to a private temporary, then renamed,
     * so a killed job leaves no half part */
    outfile o;
    int rc = outfile_open(c, &o, path);
    if (rc == 0) {
        if (fwrite(buf, 1, len, o.f) == len)
            rc = outfile_close(c, &o);
        else {
            int e = errno;
            outfile_abort(&o);
            rc = cli_fail(c, CLI_EXIT_FILE, "--save-summary '%s': %s", path, strerror(e));
        }
    }
    free(buf);
    return rc;
}

static int load_part(const cli *c, const char *path, hrt_pop_part **out)
{
    FILE *f = fopen(path, "rb");
    if (!f) return cli_fail(c, CLI_EXIT_FILE, "%s: %s", path, strerror(errno));
    size_t cap = 1 << 16, len = 0, got;
    unsigned char *buf = xmalloc(cap);
    while ((got = fread(buf + len, 1, cap - len, f)) > 0) {
        len += got;
        if (len == cap) buf = xrealloc(buf, cap *= 2);
    }
    int bad = ferror(f);
    fclose(f);
    hrt_error err;
    int rc = bad ? cli_fail(c, CLI_EXIT_FILE, "%s: cannot read it", path) : 0;
    if (rc == 0 && hrt_pop_part_load(buf, len, out, &err) != HRT_OK)
        rc = cli_fail(c, CLI_EXIT_FILE, "%s: %s", path, err.message);
    free(buf);
    return rc;
}

/* The chunks a part lacks, as text "a-b, c, ..." (at most a few runs). */
static void missing_text(const hrt_pop_part *p, char *buf, size_t n)
{
    uint64_t at = 0, nc = hrt_pop_n_chunks(hrt_pop_part_spec(p)), f, k;
    size_t used = 0, shown = 0;
    buf[0] = 0;
    for (size_t i = 0; i <= hrt_pop_part_n_ranges(p) && shown < 6; i++) {
        if (i < hrt_pop_part_n_ranges(p))
            hrt_pop_part_range(p, i, &f, &k);
        else
            f = nc, k = 0;
        if (f > at && used < n) {
            used += (size_t)snprintf(buf + used, n - used, f - at > 1 ? "%s%llu-%llu" : "%s%llu", shown ? ", " : "",
                                     (unsigned long long)at, (unsigned long long)(f - 1));
            shown++;
        }
        at = f + k;
    }
}

int popdist_finish(cli *c, pop_args *a, const popdist *d, const hrt_pop_summary *sums, double dt)
{
    hrt_error err;
    int rc = 0;
    if (a->save) {
        hrt_pop_part *part = NULL;
        char note[4096];
        snprintf(note, sizeof note, "grid %s\ninterp %s", c->grid_used, hrt_interp_name(c->interp));
        if (hrt_pop_part_new(&a->spec, a->ages.n, a->ages.v, &a->hr, note, &part, &err) != HRT_OK ||
            hrt_pop_part_add(part, d->first, d->count, sums, &err) != HRT_OK)
            rc = cli_fail(c, CLI_EXIT_INTERNAL, "%s", err.message);
        if (rc == 0) rc = save_part(c, part, a->save);
        hrt_pop_part_free(part);
    }
    if (rc || d->count != hrt_pop_n_chunks(&a->spec)) {
        if (rc == 0 && c->fmt == FMT_TABLE && d->count == 0)
            printf("No chunk in this part (the population has %llu chunks of %llu stars, fewer than the parts); an "
                   "empty part saved to %s\n", (unsigned long long)hrt_pop_n_chunks(&a->spec),
                   (unsigned long long)a->spec.chunk_size, a->save);
        else if (rc == 0 && c->fmt == FMT_TABLE)
            printf("Chunks %llu to %llu of %llu (%llu stars each) saved to %s; combine the parts with "
                   "'hrtrail population merge'\n", (unsigned long long)d->first, (unsigned long long)(d->first + d->count - 1),
                   (unsigned long long)hrt_pop_n_chunks(&a->spec), (unsigned long long)a->spec.chunk_size, a->save);
        return rc;
    }
    return pop_output(c, a, sums, dt, 0);
}

/* ------------------------------------------------------------ merge */

enum { M_OUT = 1, M_SAVE };
static const optdef merge_opts[] = {{"output", 'o', 1, M_OUT}, {"save-summary", 0, 1, M_SAVE}, {NULL, 0, 0, 0}};

typedef struct merge_args {
    const char *out, *save;
    size_t n_files;
    const char **files;
} merge_args;

static int merge_take(cli *c, void *ctx, int id, const char *val)
{
    merge_args *m = ctx;
    (void)c;
    if (id == M_OUT) m->out = val;
    else if (id == M_SAVE) m->save = val;
    else {
        m->files = xrealloc(m->files, (m->n_files + 1) * sizeof *m->files);
        m->files[m->n_files++] = val;
    }
    return 0;
}

/* The run's options as the whole population's: from its saved specification. */
static void args_of_part(pop_args *a, const hrt_pop_part *p)
{
    const hrt_pop_spec *s = hrt_pop_part_spec(p);
    a->spec = *s;
    a->imf = s->imf.kind, a->m_lo = s->imf.m_lo_msun, a->m_hi = s->imf.m_hi_msun, a->alpha = s->imf.alpha;
    a->sfh = s->sfh.kind, a->t_from = s->sfh.t_start_yr, a->t_to = s->sfh.t_end_yr, a->tau = s->sfh.tau_yr;
    a->z = s->zdist.z, a->z_lo = s->zdist.z_lo, a->z_hi = s->zdist.z_hi;
    a->spread = s->zdist.kind == HRT_ZDIST_LOG_NORMAL ? s->zdist.sigma_dex : NAN;
    a->n_stars = (double)s->n_stars, a->seedv = (double)s->seed;
    for (size_t i = 0; i < hrt_pop_part_n_ages(p); i++) dlist_push(&a->ages, hrt_pop_part_summary(p, i)->age_yr, NULL);
    a->hr = hrt_pop_part_summary(p, 0)->hr;
}

static int merge_files(cli *c, const merge_args *m, hrt_pop_part **all)
{
    hrt_error err;
    int rc = load_part(c, m->files[0], all);
    for (size_t i = 1; i < m->n_files && rc == 0; i++) {
        hrt_pop_part *p = NULL;
        rc = load_part(c, m->files[i], &p);
        if (rc == 0 && hrt_pop_part_merge(*all, p, &err) != HRT_OK)
            rc = cli_fail(c, CLI_EXIT_USAGE, "%s does not go with %s%s: %s", m->files[i], m->files[0],
                          i > 1 ? " and the files before it" : "", strchr(err.message, ':') ? strchr(err.message, ':') + 2
                                                                                            : err.message);
        hrt_pop_part_free(p);
    }
    return rc;
}

static const cmdopts merge_cmdopts = {merge_opts, NULL, ACCEPT_FORMAT, merge_take, NULL, 0};

int pop_merge(cli *c, argparse *p)
{
    merge_args m = {0};
    pop_args a;
    hrt_pop_part *all = NULL;
    char miss[256];
    c->cmd = "population merge";
    memset(&a, 0, sizeof a);
    int rc = cli_parse(c, p, &merge_cmdopts, &m);
    if (rc == 0 && m.n_files == 0)
        rc = cli_fail(c, CLI_EXIT_USAGE, "no saved parts: hrtrail population merge FILE... (from --save-summary)");
    if (rc == 0) rc = pop_check_out(c, m.out);
    if (rc == 0) rc = merge_files(c, &m, &all);
    if (rc == 0 && !hrt_pop_part_complete(all) && !m.save) {
        missing_text(all, miss, sizeof miss);
        rc = cli_fail(c, CLI_EXIT_USAGE, "the parts hold %llu of the population's %llu chunks; missing: %s (merge a subset "
                                         "only with --save-summary FILE)", (unsigned long long)hrt_pop_part_chunks_done(all),
                      (unsigned long long)hrt_pop_n_chunks(hrt_pop_part_spec(all)), miss);
    }
    /* the grid the parts ran on, and its interpolation (the command's note: "grid PATH\ninterp NAME";
     * parts made elsewhere may have no note: the default grid, or --grid) */
    char grid[4096] = "", interp[64] = "";
    if (rc == 0 && sscanf(hrt_pop_part_note(all), "grid %4095[^\n]\ninterp %63s", grid, interp) == 2) {
        if (!c->grid_path) c->grid_path = grid;
        if (hrt_interp_from_name(interp) >= 0) c->interp = hrt_interp_from_name(interp);
    }
    if (rc == 0 && m.out) rc = cli_open_grid(c); /* the SVG draws an isochrone */
    if (rc == 0 && !c->grid_used) c->grid_used = c->grid_path ? c->grid_path : "(default grid)";
    if (rc == 0 && m.save) rc = save_part(c, all, m.save);
    if (rc == 0 && hrt_pop_part_complete(all)) {
        args_of_part(&a, all);
        a.out = m.out;
        rc = pop_output(c, &a, hrt_pop_part_summary(all, 0), -1, m.n_files);
    }
    hrt_pop_part_free(all);
    dlist_free(&a.ages);
    free(m.files);
    return rc;
}
