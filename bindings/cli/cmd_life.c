/* hrtrail life: a star's timetable (keypoint ages, phases, route, remnant). */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

enum { O_MASS = 1 };
static const optdef life_opts[] = {{"mass", 'm', 1, O_MASS}, {NULL, 0, 0, 0}};

static const col kp_cols[] = {
    {"keypoint", "keypoint", COL_TEXT, NULL, 0},
    {"age_yr", "age [Myr]", COL_NUM, "%.6g", 1e-6},
};
static const col ph_cols[] = {
    {"phase", "phase", COL_TEXT, NULL, 0},
    {NULL, "", COL_TEXT, NULL, 0}, /* the phase's name, for people */
    {"start_yr", "start [Myr]", COL_NUM, "%.6g", 1e-6},
    {"end_yr", "end [Myr]", COL_NUM, "%.6g", 1e-6},
    {"duration_yr", "duration [Myr]", COL_NUM, "%.6g", 1e-6},
};
/* The timetable as records, one per keypoint, phase and remnant (CSV and JSON of life, JSON of demo). */
static const col life_rec_cols[] = {
    {"name", NULL, COL_TEXT, NULL, 0},
    {"initial_mass_msun", NULL, COL_NUM, NULL, 0},
    {"z", NULL, COL_NUM, NULL, 0},
    {"route", NULL, COL_TEXT, NULL, 0},
    {"record", NULL, COL_TEXT, NULL, 0},
    {"key", NULL, COL_TEXT, NULL, 0},
    {"start_yr", NULL, COL_NUM, NULL, 0},
    {"end_yr", NULL, COL_NUM, NULL, 0},
    {"duration_yr", NULL, COL_NUM, NULL, 0},
    {"remnant_mass_msun", NULL, COL_NUM, NULL, 0},
};
#define N_LIFE_REC_COLS (sizeof life_rec_cols / sizeof life_rec_cols[0])

int life_build(cli *c, const char *mass_text, double mass, double z, life *L)
{
    size_t n = 0, nk;
    hrt_phase_span *sp;
    int rc;
    memset(L, 0, sizeof *L);
    if ((rc = cli_new_star(c, mass_text, mass, z, &L->s))) return rc;
    L->kp = table_new(kp_cols, 2);
    nk = hrt_star_n_keypoints(L->s);
    for (size_t k = 0; k < nk; k++) {
        double a = NAN;
        size_t r = table_add_row(L->kp);
        hrt_star_keypoint_age(L->s, k, &a);
        table_text(L->kp, r, 0, hrt_star_keypoint_name(L->s, k));
        table_num(L->kp, r, 1, a);
    }
    size_t cap = 32;
    sp = xcalloc(cap, sizeof *sp);
    rc = hrt_star_phases(L->s, sp, cap, &n);
    if (rc == HRT_E_BUFFER && n > cap) {
        cap = n;
        sp = xrealloc(sp, cap * sizeof *sp);
        rc = hrt_star_phases(L->s, sp, cap, &n);
    }
    if (rc != HRT_OK) {
        free(sp);
        return cli_fail(c, cli_exit_of_status(rc), "timetable of the star: %s", hrt_strerror(rc));
    }
    L->ph = table_new(ph_cols, 5);
    for (size_t i = 0; i < n; i++) {
        size_t r = table_add_row(L->ph);
        table_text(L->ph, r, 0, hrt_phase_key(sp[i].phase));
        table_text(L->ph, r, 1, hrt_phase_name(sp[i].phase));
        table_num(L->ph, r, 2, sp[i].phase_start_yr);
        table_num(L->ph, r, 3, sp[i].phase_end_yr);
        table_num(L->ph, r, 4, sp[i].phase_end_yr - sp[i].phase_start_yr);
    }
    free(sp);
    L->remnant = HRT_REMNANT_NONE;
    L->remnant_mass = NAN;
    if (hrt_star_remnant(L->s, &L->remnant, &L->remnant_mass) != HRT_OK) L->remnant = HRT_REMNANT_NONE;
    L->end_age = hrt_star_end_age(L->s);
    return 0;
}

void life_free(life *L)
{
    hrt_star_free(L->s);
    table_free(L->kp);
    table_free(L->ph);
    memset(L, 0, sizeof *L);
}

/* Whether the star's track reaches its route's last keypoint: then a star
 * with no remnant was disrupted, rather than followed only part-way. */
static int life_track_complete(const life *L)
{
    size_t nk = hrt_star_n_keypoints(L->s);
    double a_last = NAN;
    return nk > 0 && hrt_star_keypoint_age(L->s, nk - 1, &a_last) == HRT_OK && isfinite(a_last);
}

void life_print_text(const cli *c, const life *L, const char *indent)
{
    char a[64];
    double z = hrt_star_z(L->s);
    char *route = text_safe(cli_route_name(c, hrt_star_route(L->s)), NULL);
    printf("%sLife of a %.6g Msun star at Z = %.6g ([Fe/H] = %+.3f), route %s\n", indent, hrt_star_mass(L->s), z,
           cli_feh(c, z), route);
    free(route);
    printf("%sKeypoints (ages since birth; '-' = not reached)\n", indent);
    char ind2[32];
    snprintf(ind2, sizeof ind2, "%s  ", indent);
    table_write_text(L->kp, stdout, ind2);
    printf("%sPhases\n", indent);
    table_write_text(L->ph, stdout, ind2);
    format_age(a, sizeof a, L->end_age);
    if (L->remnant != HRT_REMNANT_NONE)
        printf("%sFate: %s of %.4g Msun, from age %s\n", indent, hrt_remnant_name(L->remnant), L->remnant_mass, a);
    else if (life_track_complete(L))
        printf("%sFate: disrupted at age %s, nothing left (no remnant: a pair-instability supernova)\n", indent, a);
    else
        printf("%sFate: unknown; the track ends at age %s and the grid names no remnant\n", indent, a);
}

table *life_records_new(int named)
{
    return named ? table_new(life_rec_cols, N_LIFE_REC_COLS) : table_new(life_rec_cols + 1, N_LIFE_REC_COLS - 1);
}

void life_records_add(const cli *c, const life *L, table *t, const char *name)
{
    double m = hrt_star_mass(L->s), z = hrt_star_z(L->s);
    const char *route = cli_route_name(c, hrt_star_route(L->s));
    size_t o = t->ncol == N_LIFE_REC_COLS, r; /* o: offset of the columns after the name */
    for (size_t k = 0; k < L->kp->nrow + L->ph->nrow + 1; k++) {
        r = table_add_row(t);
        if (o) table_text(t, r, 0, name);
        table_num(t, r, o + 0, m), table_num(t, r, o + 1, z), table_text(t, r, o + 2, route);
        if (k < L->kp->nrow) {
            table_text(t, r, o + 3, "keypoint");
            table_text(t, r, o + 4, L->kp->text[k * L->kp->ncol]);
            table_num(t, r, o + 5, L->kp->num[k * L->kp->ncol + 1]);
        } else if (k < L->kp->nrow + L->ph->nrow) {
            size_t q = k - L->kp->nrow;
            table_text(t, r, o + 3, "phase");
            table_text(t, r, o + 4, L->ph->text[q * L->ph->ncol]);
            for (size_t j = 0; j < 3; j++) table_num(t, r, o + 5 + j, L->ph->num[q * L->ph->ncol + 2 + j]);
        } else {
            /* the remnant: from the end of the track on, for ever */
            table_text(t, r, o + 3, "remnant");
            table_text(t, r, o + 4, hrt_remnant_key(L->remnant));
            table_num(t, r, o + 5, L->end_age);
            table_num(t, r, o + 8, L->remnant_mass);
        }
    }
}

static int life_take(cli *c, void *ctx, int id, const char *val)
{
    return id == O_MASS ? add_mass_list(c, "--mass", val, ctx) : 0;
}

static const cmdopts life_cmdopts = {life_opts, NULL, ACCEPT_Z | ACCEPT_FORMAT, life_take,
                                     "the star is given with --mass", 0};

static void life_output(const cli *c, const life *L, size_t n)
{
    if (c->fmt == FMT_CSV || c->fmt == FMT_JSON) {
        table *t = life_records_new(0);
        for (size_t i = 0; i < n; i++) life_records_add(c, &L[i], t, NULL);
        out_records(c, t);
        table_free(t);
        return;
    }
    for (size_t i = 0; i < n; i++) {
        if (i) putchar('\n');
        life_print_text(c, &L[i], "");
    }
}

int cmd_life(cli *c, argparse *p)
{
    dlist ml = {0};
    double z;
    life *L = NULL;
    int rc = cli_parse(c, p, &life_cmdopts, &ml);
    if (rc == 0 && ml.n == 0) rc = cli_fail(c, CLI_EXIT_USAGE, "give --mass M[,M...] (initial mass, Msun)");
    if (rc == 0 && !(rc = cli_open_grid(c)) && !(rc = cli_resolve_z(c, &z))) {
        L = xcalloc(ml.n, sizeof *L);
        for (size_t i = 0; i < ml.n && rc == 0; i++) rc = life_build(c, ml.text[i], ml.v[i], z, &L[i]);
        if (rc == 0) life_output(c, L, ml.n);
    }
    for (size_t i = 0; L && i < ml.n; i++) life_free(&L[i]);
    free(L);
    dlist_free(&ml);
    return rc;
}
