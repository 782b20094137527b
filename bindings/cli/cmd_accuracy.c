/* hrtrail grid accuracy: how well a grid interpolates between its own tracks
 * (leave one track out, hrt_accuracy_run): a table, CSV or JSON, with the
 * wall-clock time of the run. */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "cli.h"

static const char *const qname[HRT_ACCURACY_NQ] = {"log_l", "log_teff", "log_age"};

static void progress(void *user, size_t done, size_t total)
{
    fprintf(stderr, "\rhrtrail grid accuracy: %zu/%zu %s dropped and predicted", done, total,
            user ? "metallicity groups" : "tracks");
    if (done == total) fputc('\n', stderr);
    fflush(stderr);
}

/* One CSV/JSON record per row: type, route, phase, counts, then per quantity
 * median, p95, max and the worst track (mass, z, eep). */
enum { A_INTERP, A_ROUTE, A_PHASE, A_NPTS, A_NTRK, A_Q0, A_PER_Q = 6, A_WD = A_Q0 + 3 * A_PER_Q, A_NCOL };

typedef struct acc_cols {
    col cols[A_NCOL];
    char keys[3 * A_PER_Q][40];
} acc_cols_t;

static const col *columns(acc_cols_t *b)
{
    col *acc_cols = b->cols;
    static const char *const stat[A_PER_Q] = {"median", "p95", "max", "worst_mass_msun", "worst_z", "worst_eep"};
    acc_cols[A_INTERP] = (col){"interp", NULL, COL_TEXT, NULL, 0};
    acc_cols[A_ROUTE] = (col){"route", NULL, COL_TEXT, NULL, 0};
    acc_cols[A_PHASE] = (col){"phase", NULL, COL_TEXT, NULL, 0};
    acc_cols[A_NPTS] = (col){"n_points", NULL, COL_NUM, NULL, 0};
    acc_cols[A_NTRK] = (col){"n_tracks", NULL, COL_NUM, NULL, 0};
    for (int q = 0; q < HRT_ACCURACY_NQ; q++)
        for (int s = 0; s < A_PER_Q; s++) {
            char *k = b->keys[q * A_PER_Q + s];
            snprintf(k, sizeof b->keys[0], "%s_%s%s", qname[q], stat[s], s < 3 ? "_dex" : "");
            acc_cols[A_Q0 + q * A_PER_Q + s] = (col){k, NULL, COL_NUM, NULL, 0};
        }
    acc_cols[A_WD] = (col){"wd_mass_max_msun", NULL, COL_NUM, NULL, 0};
    return acc_cols;
}

static table *acc_table(const cli *c, const hrt_accuracy *a, acc_cols_t *b)
{
    table *t = table_new(columns(b), A_NCOL);
    for (size_t i = 0; i < hrt_accuracy_n_rows(a); i++) {
        hrt_accuracy_row w;
        hrt_accuracy_row_at(a, i, &w);
        size_t r = table_add_row(t);
        table_text(t, r, A_INTERP, hrt_interp_name(w.interp));
        table_text(t, r, A_ROUTE, hrt_grid_route_name(c->grid, (size_t)w.route));
        table_text(t, r, A_PHASE, hrt_phase_key(w.phase));
        table_num(t, r, A_NPTS, (double)w.n_points);
        table_num(t, r, A_NTRK, (double)w.n_tracks);
        for (int q = 0; q < HRT_ACCURACY_NQ; q++) {
            size_t k = A_Q0 + (size_t)q * A_PER_Q;
            table_num(t, r, k, w.median[q]);
            table_num(t, r, k + 1, w.p95[q]);
            table_num(t, r, k + 2, w.max[q]);
            table_num(t, r, k + 3, w.worst_mass_msun[q]);
            table_num(t, r, k + 4, w.worst_z[q]);
            table_num(t, r, k + 5, (double)w.worst_eep[q]);
        }
        table_num(t, r, A_WD, w.wd_mass_max_msun);
    }
    return t;
}

static void text_report(const cli *c, const hrt_accuracy *a, double secs, int across_z)
{
    printf("grid file   ");
    text_write(stdout, c->grid_used ? c->grid_used : "(default grid)");
    if (across_z)
        printf("\nleave-one-group-out across metallicity: each interior metallicity group dropped,\n"
               "the grid rebuilt from the others and each of its tracks interpolated at its own\n"
               "mass and Z; |error| at each EEP by phase\n");
    else
        printf("\nleave-one-out: each interior track of each route dropped, its metallicity rebuilt\n"
               "without it and the track interpolated from the rest; |error| at each EEP by phase\n");
    printf("(median / 95th percentile / max, dex; worst track: initial mass Msun, Z, EEP)\n");
    int last_it = -1, last_r = -1;
    for (size_t i = 0; i < hrt_accuracy_n_rows(a); i++) {
        hrt_accuracy_row w;
        hrt_accuracy_row_at(a, i, &w);
        if (w.interp != last_it || w.route != last_r) {
            printf("\n%s, route %s", hrt_interp_name(w.interp), hrt_grid_route_name(c->grid, (size_t)w.route));
            if (!isnan(w.wd_mass_max_msun)) printf(" (white-dwarf mass: worst %.4f Msun)", w.wd_mass_max_msun);
            printf("\n  %-10s %6s %6s  %-22s %-22s %-22s %s\n", "phase", "EEPs", "tracks", "log L", "log Teff",
                   "log age", "worst log L at");
            last_it = w.interp, last_r = w.route;
        }
        printf("  %-10s %6zu %6zu", hrt_phase_key(w.phase), w.n_points, w.n_tracks);
        for (int q = 0; q < HRT_ACCURACY_NQ; q++) printf("  %.4f/%.4f/%.4f", w.median[q], w.p95[q], w.max[q]);
        printf("  %g Msun, Z %g, EEP %zu\n", w.worst_mass_msun[0], w.worst_z[0], w.worst_eep[0]);
    }
    printf("\ntime        %.1f s\n", secs);
}

/* Write the run's error field into the grid file measured (hrt_accuracy_store). */
static int store_field(cli *c, const hrt_accuracy *a)
{
    hrt_error err = {0, ""};
    const char *path = c->grid_path ? c->grid_path : hrt_default_grid_path();
    int rc = hrt_accuracy_store(a, path, &err);
    if (rc != HRT_OK)
        return cli_fail(c, cli_exit_of_status(rc), "--store: %s", err.message[0] ? err.message : hrt_strerror(rc));
    fprintf(stderr, "hrtrail grid accuracy: error field stored in ");
    text_write(stderr, path);
    fputc('\n', stderr);
    return 0;
}

int grid_accuracy(cli *c, int threads, int store, int across_z)
{
    int types = c->interp; /* -1: every type */
    if (types < 0) c->interp = HRT_INTERP_STEFFEN; /* the open grid's own type does not matter */
    int rc = cli_open_grid(c);
    if (rc) return rc;
    hrt_accuracy *a = NULL;
    hrt_error err = {0, ""};
    rc = hrt_accuracy_new(&a, &err);
    if (rc == HRT_OK) rc = hrt_accuracy_set_interp(a, types, &err);
    if (rc == HRT_OK) rc = hrt_accuracy_set_threads(a, threads, &err);
    if (rc == HRT_OK) rc = hrt_accuracy_set_across_z(a, across_z, &err);
    static const char groups[] = "groups"; /* the progress line's unit: non-NULL across metallicity */
    if (rc == HRT_OK && isatty(STDERR_FILENO))
        rc = hrt_accuracy_set_progress(a, progress, across_z ? (void *)(uintptr_t)groups : NULL);
    struct timespec t0, t1;
    clock_gettime(CLOCK_MONOTONIC, &t0);
    if (rc == HRT_OK) rc = hrt_accuracy_run(a, c->grid, &err);
    clock_gettime(CLOCK_MONOTONIC, &t1);
    if (rc != HRT_OK) {
        hrt_accuracy_free(a);
        return cli_fail(c, cli_exit_of_status(rc), "%s", err.message[0] ? err.message : hrt_strerror(rc));
    }
    double secs = (double)(t1.tv_sec - t0.tv_sec) + 1e-9 * (double)(t1.tv_nsec - t0.tv_nsec);
    if (store && (rc = store_field(c, a)) != 0) {
        hrt_accuracy_free(a);
        return rc;
    }
    if (c->fmt == FMT_TABLE) {
        text_report(c, a, secs, across_z);
    } else {
        acc_cols_t b;
        table *t = acc_table(c, a, &b);
        if (c->fmt == FMT_CSV) {
            table_write_csv(t, stdout);
        } else {
            jw w;
            jw_init(&w, stdout);
            jw_begin_object(&w, NULL);
            jw_str(&w, "file", c->grid_used);
            jw_num(&w, "seconds", secs);
            jw_str(&w, "direction", across_z ? "metallicity" : "mass");
            jw_table(&w, "rows", t);
            jw_end_object(&w);
            jw_finish(&w);
        }
        table_free(t);
    }
    hrt_accuracy_free(a);
    return 0;
}
