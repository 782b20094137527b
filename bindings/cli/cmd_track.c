/* hrtrail track: one star's track, at its EEPs, evenly in log age, or at given ages. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

enum { O_MASS = 1, O_STEPS, O_AGES, O_FROM, O_TO, O_EEPS };
static const optdef track_opts[] = {
    {"mass", 'm', 1, O_MASS}, {"steps", 'n', 1, O_STEPS}, {"ages", 'a', 1, O_AGES}, {"age", 0, 1, O_AGES},
    {"from", 0, 1, O_FROM},   {"to", 0, 1, O_TO},         {"eeps", 0, 0, O_EEPS},   IERR_OPTDEF,
    {NULL, 0, 0, 0},
};

/* Build the star of --mass at the resolved metallicity, with messages naming the argument. */
int cli_new_star(cli *c, const char *mass_text, double mass, double z, hrt_star **s)
{
    hrt_error err = {0, ""};
    char who[128];
    int st;
    snprintf(who, sizeof who, "--mass %s", mass_text);
    if (cli_check_mass(c, who, mass, z)) return CLI_EXIT_RANGE;
    st = hrt_star_new(c->grid, mass, z, s, &err);
    if (st != HRT_OK) {
        *s = NULL;
        return cli_star_failure(c, who, st, mass, z, NAN, err.message);
    }
    return 0;
}

typedef struct track_args {
    dlist ml, al;
    const char *from_text, *to_text;
    long steps;
    int eeps;
    double from, to;
} track_args;

static int track_take(cli *c, void *ctx, int id, const char *val)
{
    track_args *a = ctx;
    double age;
    switch (id) {
    case O_MASS: return add_mass_list(c, "--mass", val, &a->ml);
    case O_AGES: return add_age_list(c, "--ages", val, &a->al);
    case O_STEPS:
        if (parse_count(val, 2, 10000000, &a->steps) != 0)
            return cli_fail(c, CLI_EXIT_USAGE, "--steps '%s': give a whole number of ages from 2 to 10000000", val);
        return 0;
    case O_FROM:
    case O_TO:
        if (parse_age_yr(val, &age) != 0)
            return cli_fail(c, CLI_EXIT_USAGE, "%s '%s': not an age >= 0; write years with an optional unit yr, kyr, Myr or Gyr",
                            id == O_FROM ? "--from" : "--to", val);
        if (id == O_FROM)
            a->from = age, a->from_text = val;
        else
            a->to = age, a->to_text = val;
        return 0;
    case O_EEPS: a->eeps = 1; return 0;
    case O_IERR: c->ierr = 1; return 0;
    default: return 0;
    }
}

static const cmdopts track_cmdopts = {track_opts, NULL, ACCEPT_Z | ACCEPT_FORMAT | ACCEPT_EXTRA, track_take,
                                      "the star is given with --mass", 0};

static int track_check(const cli *c, const track_args *a)
{
    if (a->ml.n != 1)
        return cli_fail(c, CLI_EXIT_USAGE, "give exactly one --mass (initial mass, Msun); for many stars use hrtrail at");
    if ((a->steps > 0) + (a->al.n > 0) + a->eeps > 1)
        return cli_fail(c, CLI_EXIT_USAGE, "choose one of --eeps, --steps N and --ages LIST");
    if (a->al.n > 0 && (a->from_text || a->to_text))
        return cli_fail(c, CLI_EXIT_USAGE, "--from and --to go with --steps or --eeps, not with --ages");
    return 0;
}

/* --steps: the ages, evenly in log age from --from (default the ZAMS) to --to (default the end). */
static int track_step_ages(const cli *c, track_args *a, const hrt_star *s)
{
    hrt_state st;
    double zams = NAN, end = hrt_star_end_age(s);
    if (hrt_star_eep_state(s, 0, &st) == HRT_OK) zams = st.age_yr;
    double lo = a->from_text ? a->from : zams, hi = a->to_text ? a->to : end;
    if (!(lo > 0) || !(hi > lo)) {
        char sa[64], sb[64];
        format_age(sa, sizeof sa, lo);
        format_age(sb, sizeof sb, hi);
        return cli_fail(c, CLI_EXIT_USAGE, "--steps needs 0 < --from < --to (got %s to %s)", sa, sb);
    }
    for (long i = 0; i < a->steps; i++) {
        double la = log10(lo) + (log10(hi) - log10(lo)) * (double)i / (double)(a->steps - 1);
        dlist_push(&a->al, i == a->steps - 1 ? hi : (i == 0 ? lo : pow(10.0, la)), NULL);
    }
    return 0;
}

/* The rows: the star at the ages, or at its EEPs between --from and --to. */
static int track_rows(const cli *c, const track_args *a, const hrt_star *s, double z, table *t)
{
    hrt_state st;
    for (size_t i = 0; i < a->al.n; i++) {
        int r = hrt_star_at(s, a->al.v[i], &st);
        if (r != HRT_OK) {
            char who[128];
            if (a->steps > 0)
                snprintf(who, sizeof who, "%s %s", a->to_text ? "--to" : "--from", a->to_text ? a->to_text : a->from_text);
            else
                snprintf(who, sizeof who, "--ages %s", a->al.text[i]);
            return cli_star_failure(c, who, r, a->ml.v[0], z, a->al.v[i], NULL);
        }
        state_table_add(t, c, &st, NULL, NULL);
    }
    for (size_t j = 0; a->al.n == 0 && j < hrt_star_n_eep(s); j++) {
        int r = hrt_star_eep_state(s, j, &st);
        if (r != HRT_OK) return cli_fail(c, cli_exit_of_status(r), "EEP %zu of the star: %s", j, hrt_strerror(r));
        if ((a->from_text && st.age_yr < a->from) || (a->to_text && st.age_yr > a->to)) continue;
        state_table_add(t, c, &st, NULL, NULL);
    }
    return 0;
}

static int track_run(cli *c, track_args *a)
{
    double z;
    hrt_star *s = NULL;
    table *t = NULL;
    int rc;
    if ((rc = track_check(c, a)) || (rc = cli_open_grid(c)) || (rc = cli_resolve_extras(c)) ||
        (rc = cli_resolve_z(c, &z)))
        return rc;
    if ((rc = cli_new_star(c, a->ml.text[0], a->ml.v[0], z, &s))) return rc;
    t = state_table_new(c->ierr ? SC_IERR : 0u);
    state_table_add_extras(t, c);
    if ((a->steps == 0 || (rc = track_step_ages(c, a, s)) == 0) && (rc = track_rows(c, a, s, z, t)) == 0) {
        const char *sampling = a->steps > 0 ? "log-age steps" : a->al.n > 0 ? "given ages" : "EEPs";
        char *route = text_safe(cli_route_name(c, hrt_star_route(s)), NULL), heading[512];
        snprintf(heading, sizeof heading, "Track of %.6g Msun at Z = %.6g ([Fe/H] = %+.3f), route %s, sampled at %s (%zu rows)\n",
                 hrt_star_mass(s), hrt_star_z(s), cli_feh(c, hrt_star_z(s)), route, sampling, t->nrow);
        free(route);
        out_states(c, t, heading);
    }
    table_free(t);
    hrt_star_free(s);
    return rc;
}

int cmd_track(cli *c, argparse *p)
{
    track_args a;
    memset(&a, 0, sizeof a);
    a.from = a.to = NAN;
    int rc = cli_parse(c, p, &track_cmdopts, &a);
    if (rc == 0) rc = track_run(c, &a);
    dlist_free(&a.ml);
    dlist_free(&a.al);
    return rc;
}
