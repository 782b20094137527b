/*
 * Internal to hrtrail population (bindings/cli): the options of a run, shared by the
 * command (cmd_population.c) and its spread over processes (cmd_popdist.c): parts of a
 * population saved and merged, MPI ranks, and the catalogue of its stars (catalogue.c).
 */
#ifndef HRTRAIL_CLI_POP_H
#define HRTRAIL_CLI_POP_H

#include "cli.h"

typedef struct pop_args {
    const char *out, *imf_name, *sfh_name, *table_path;
    int threads, z_uniform, have_range, have_zr;
    double n_stars, alpha, m_lo, m_hi, t_from, t_to, tau, spread, z_lo, z_hi, seedv;
    hrt_pop_hr hr;
    dlist ages, tt, tr; /* the ages; the SFH table's times and rates */
    /* which chunks: --chunks FIRST:COUNT or --part K/N; --chunk-size; --save-summary; --catalogue */
    int have_chunks, have_part;
    uint64_t ch_first, ch_count, part_k, part_n, chunk_size;
    const char *save, *catalogue;
    int ranks; /* MPI ranks of the run (1 without) */
    /* what the run made of them */
    int imf, sfh;
    double z;
    hrt_pop_spec spec;
} pop_args;

/* How a run is spread: MPI ranks (size 1 without MPI) and the chunks of this process and rank. */
typedef struct popdist {
    int mpi, rank, size;
    FILE *sink;           /* ranks other than 0: their messages, sent to rank 0 if they fail */
    char *msg;
    size_t msg_len;
    uint64_t first, count;       /* the chunks of this run (every rank's) */
    uint64_t my_first, my_count; /* this rank's share */
} popdist;

/* Start MPI when an MPI launcher started the command (built with MPI); else a single process. */
void popdist_begin(popdist *d);
/* The run's chunks (--chunks, --part or all) and this rank's share; 0 or an exit code. */
int popdist_range(const cli *c, const pop_args *a, popdist *d);
/* Every rank's exit code agreed (the largest); the first failing rank's message printed once, by rank 0. */
int popdist_agree(const cli *c, popdist *d, int rc);
/* The summaries of every rank added up, exactly, on rank 0. */
int popdist_reduce(const cli *c, const popdist *d, hrt_pop_summary *sums, size_t n_ages);
/* Every rank's v, on rank 0 into all[size] (collective; size > 1). */
void popdist_gather(const popdist *d, uint64_t v, uint64_t *all);
/* --catalogue: this rank's chunks run star by star and written (catalogue.c); the summaries as pop_run_range makes them. */
int pop_catalogue_run(const cli *c, const pop_args *a, popdist *d, hrt_pop_summary *sums, int progress);
/* Final agreement and MPI's end; returns the exit code. */
int popdist_end(const cli *c, popdist *d, int rc);
/* On rank 0 after the run: --save-summary, and the output if every chunk is done. */
int popdist_finish(cli *c, pop_args *a, const popdist *d, const hrt_pop_summary *sums, double dt);

/* hrtrail population merge FILE... */
int pop_merge(cli *c, argparse *p);

/* The output of a whole population (cmd_population.c): text, CSV or JSON on stdout, SVG with -o;
 * dt < 0: merged from n_merged saved parts. */
int pop_output(cli *c, pop_args *a, const hrt_pop_summary *sums, double dt, size_t n_merged);
/* -o OUT beside the summary: '-' puts the SVG alone on standard output (the
 * summary's text is left out there); with --csv or --json it is refused (two
 * documents in one stream).  Nonzero after a message. */
int pop_check_out(const cli *c, const char *out);
int pop_run_range(const cli *c, const hrt_pop_spec *spec, uint64_t first, uint64_t count, int threads, size_t n_ages,
                  hrt_pop_summary *sums, int progress);

#endif
