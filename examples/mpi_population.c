/*
 * A population synthesised across MPI ranks (an invented survey field).
 *
 *   mpirun -np 4 mpi_population [--stars N] [--seed S] [--threads T] [--serial] [--grid FILE]
 *
 * The invented Tessaly field: stars formed at a constant rate over 10 Gyr
 * from a Kroupa (2001) IMF between 0.08 and 100 Msun, metallicities
 * log-normal around Z = 0.008 (0.3 dex), seen at 6 and 10 Gyr.
 *
 * Each rank takes a contiguous range of the population's chunks (every chunk
 * has its own random stream, seeded from the seed and the chunk index), runs
 * hrt_pop_run on them, and the summaries are reduced to rank 0 with an MPI
 * operation that calls hrt_pop_summary_merge.  Summaries are exact integer
 * sums, so the result is the same bytes for any number of ranks: rank 0
 * prints a digest of them, which a test compares with --serial (one process
 * doing every chunk itself).
 */
#include <inttypes.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <mpi.h>

#include "hrtrail.h"

#define N_EPOCHS 2
static const double epochs_yr[N_EPOCHS] = {6e9, 10e9};

/* MPI reduction: inout[i] += in[i], exactly. */
static void merge_op(void *in, void *inout, int *len, MPI_Datatype *type)
{
    (void)type;
    hrt_pop_summary *a = in, *b = inout;
    for (int i = 0; i < *len; i++) hrt_pop_summary_merge(&b[i], &a[i], NULL);
}

/* FNV-1a over the summary bytes (the struct has no padding). */
static uint64_t digest(const void *p, size_t n)
{
    const unsigned char *c = p;
    uint64_t h = 1469598103934665603ull;
    for (size_t i = 0; i < n; i++) h = (h ^ c[i]) * 1099511628211ull;
    return h;
}

int main(int argc, char **argv)
{
    MPI_Init(&argc, &argv);
    int rank = 0, size = 1, serial = 0, threads = 1;
    MPI_Comm_rank(MPI_COMM_WORLD, &rank);
    MPI_Comm_size(MPI_COMM_WORLD, &size);
    uint64_t n_stars = 2000000, seed = 20260101;
    const char *grid_path = NULL;
    for (int i = 1; i < argc; i++) {
        if (!strcmp(argv[i], "--stars") && i + 1 < argc) n_stars = (uint64_t)strtod(argv[++i], NULL);
        else if (!strcmp(argv[i], "--seed") && i + 1 < argc) seed = strtoull(argv[++i], NULL, 10);
        else if (!strcmp(argv[i], "--threads") && i + 1 < argc) threads = atoi(argv[++i]);
        else if (!strcmp(argv[i], "--grid") && i + 1 < argc) grid_path = argv[++i];
        else if (!strcmp(argv[i], "--serial")) serial = 1;
        else {
            if (rank == 0) fprintf(stderr, "mpi_population: unknown argument '%s'\n", argv[i]);
            MPI_Finalize();
            return 2;
        }
    }

    hrt_error err;
    hrt_grid *g = NULL;
    if (hrt_grid_open(grid_path, &g, &err) != HRT_OK) {
        fprintf(stderr, "mpi_population (rank %d): %s\n", rank, err.message);
        MPI_Abort(MPI_COMM_WORLD, 4);
    }
    hrt_pop_spec spec;
    hrt_pop_spec_default(&spec); /* Kroupa 2001 over 0.08-100 Msun */
    spec.n_stars = n_stars;
    spec.seed = seed;
    spec.sfh.kind = HRT_SFH_CONSTANT;
    spec.sfh.t_start_yr = 0;
    spec.sfh.t_end_yr = 10e9;
    spec.zdist.kind = HRT_ZDIST_LOG_NORMAL;
    spec.zdist.z = 0.008;
    spec.zdist.z_lo = 0.0002;
    spec.zdist.z_hi = 0.03;
    spec.zdist.sigma_dex = 0.3;
    const hrt_pop_hr hr = {3.3, 4.9, -5.0, 6.5, 64, 64};

    hrt_pop_summary *mine = malloc(N_EPOCHS * sizeof *mine), *all = malloc(N_EPOCHS * sizeof *all);
    for (int e = 0; e < N_EPOCHS; e++) {
        hrt_pop_summary_init(&mine[e], epochs_yr[e], &hr, NULL);
        hrt_pop_summary_init(&all[e], epochs_yr[e], &hr, NULL);
    }
    uint64_t nc = hrt_pop_n_chunks(&spec);
    int workers = serial ? 1 : size;
    uint64_t c0 = nc * (uint64_t)rank / (uint64_t)workers, c1 = nc * (uint64_t)(rank + 1) / (uint64_t)workers;
    if (serial && rank != 0) c0 = c1 = 0;
    double t0 = MPI_Wtime();
    if (hrt_pop_run(g, &spec, c0, c1 - c0, threads, N_EPOCHS, mine, &err) != HRT_OK) {
        fprintf(stderr, "mpi_population (rank %d): %s\n", rank, err.message);
        MPI_Abort(MPI_COMM_WORLD, 1);
    }
    double t_run = MPI_Wtime() - t0;

    MPI_Datatype summary_type;
    MPI_Op merge;
    MPI_Type_contiguous((int)sizeof(hrt_pop_summary), MPI_BYTE, &summary_type);
    MPI_Type_commit(&summary_type);
    MPI_Op_create(merge_op, 1, &merge);
    if (serial) {
        if (rank == 0) memcpy(all, mine, N_EPOCHS * sizeof *all);
    } else {
        MPI_Reduce(mine, all, N_EPOCHS, summary_type, merge, 0, MPI_COMM_WORLD);
    }
    double t_max;
    MPI_Reduce(&t_run, &t_max, 1, MPI_DOUBLE, MPI_MAX, 0, MPI_COMM_WORLD);

    if (rank == 0) {
        /* figures on stdout are the result; timing goes to stderr so outputs compare */
        printf("Tessaly field (invented): %" PRIu64 " stars, seed %" PRIu64 ", %" PRIu64 " chunks\n", n_stars, seed, nc);
        for (int e = 0; e < N_EPOCHS; e++) {
            const hrt_pop_summary *s = &all[e];
            printf("epoch %.3g Gyr: born %" PRIu64 ", evaluated %" PRIu64 ", MS %" PRIu64 ", RGB %" PRIu64 ", WD %" PRIu64
                   ", NS %" PRIu64 ", BH %" PRIu64 ", L = %.17g Lsun, M = %.17g Msun, digest %016" PRIx64 "\n",
                   s->age_yr / 1e9, s->n_drawn - s->n_unborn, s->n_evaluated, s->n_phase[HRT_PHASE_MS],
                   s->n_phase[HRT_PHASE_RGB], s->n_phase[HRT_PHASE_WD], s->n_phase[HRT_PHASE_NS],
                   s->n_phase[HRT_PHASE_BH], hrt_pop_sum_value(&s->l_lsun), hrt_pop_sum_value(&s->mass_msun),
                   digest(s, sizeof *s));
        }
        fprintf(stderr, "mpi_population: %d rank(s)%s, %.3f s (slowest rank), %.3g stars/s\n", workers,
                serial ? " (serial)" : "", t_max, (double)n_stars / t_max);
    }
    MPI_Op_free(&merge);
    MPI_Type_free(&summary_type);
    free(mine);
    free(all);
    hrt_grid_close(g);
    MPI_Finalize();
    return 0;
}
