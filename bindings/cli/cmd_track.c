/* hrtrail track: one star's track, at its EEPs, evenly in log age, or at given ages. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

enum { O_MASS = 1, O_STEPS, O_AGES, O_FROM, O_TO, O_EEPS };
static const optdef track_opts[] = {
    {"mass", 'm', 1, O_MASS}, {"steps", 'n', 1, O_STEPS}, {"ages", 'a', 1, O_AGES}, {"age", 0, 1, O_AGES},
    {"from", 0, 1, O_FROM},   {"to", 0, 1, O_TO},         {"eeps", 0, 0, O_EEPS},   {NULL, 0, 0, 0},
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

int cmd_track(cli *c, argparse *p)
{
    dlist ml = {0}, al = {0};
    const char *val, *from_text = NULL, *to_text = NULL;
    long steps = 0;
    int id, rc = 0, eeps = 0;
    double z, from = NAN, to = NAN;
    hrt_star *s = NULL;
    table *t = NULL;

    while ((id = next_option(c, p, track_opts, 1, 1, &val)) != OPT_END) {
        if (id == OPT_ERROR) { rc = CLI_EXIT_USAGE; goto done; }
        if (id == OPT_POSITIONAL) {
            rc = cli_fail(c, CLI_EXIT_USAGE, "unexpected argument '%s' (the star is given with --mass)", val);
            goto done;
        }
        if (id == O_MASS && (rc = add_mass_list(c, "--mass", val, &ml))) goto done;
        if (id == O_AGES && (rc = add_age_list(c, "--ages", val, &al))) goto done;
        if (id == O_STEPS && parse_count(val, 2, 10000000, &steps) != 0) {
            rc = cli_fail(c, CLI_EXIT_USAGE, "--steps '%s': give a whole number of ages from 2 to 10000000", val);
            goto done;
        }
        if (id == O_FROM || id == O_TO) {
            double a;
            int r = parse_age_yr(val, &a);
            if (r != 0) {
                rc = cli_fail(c, CLI_EXIT_USAGE, "%s '%s': not an age >= 0; write years with an optional unit yr, kyr, Myr or Gyr",
                              id == O_FROM ? "--from" : "--to", val);
                goto done;
            }
            if (id == O_FROM) from = a, from_text = val;
            else to = a, to_text = val;
        }
        if (id == O_EEPS) eeps = 1;
    }
    if (c->want_help) { help_command("track", stdout); goto done; }
    if (ml.n != 1) {
        rc = cli_fail(c, CLI_EXIT_USAGE, "give exactly one --mass (initial mass, Msun); for many stars use hrtrail at");
        goto done;
    }
    if ((steps > 0) + (al.n > 0) + eeps > 1) {
        rc = cli_fail(c, CLI_EXIT_USAGE, "choose one of --eeps, --steps N and --ages LIST");
        goto done;
    }
    if (al.n > 0 && (from_text || to_text)) {
        rc = cli_fail(c, CLI_EXIT_USAGE, "--from and --to go with --steps or --eeps, not with --ages");
        goto done;
    }
    if ((rc = cli_open_grid(c)) || (rc = cli_resolve_z(c, &z))) goto done;
    if ((rc = cli_new_star(c, ml.text[0], ml.v[0], z, &s))) goto done;

    double zams = NAN, end = hrt_star_end_age(s);
    hrt_state st;
    if (hrt_star_eep_state(s, 0, &st) == HRT_OK) zams = st.age_yr;
    if (steps > 0) {
        double a = from_text ? from : zams, b = to_text ? to : end;
        if (!(a > 0) || !(b > a)) {
            char sa[64], sb[64];
            format_age(sa, sizeof sa, a);
            format_age(sb, sizeof sb, b);
            rc = cli_fail(c, CLI_EXIT_USAGE, "--steps needs 0 < --from < --to (got %s to %s)", sa, sb);
            goto done;
        }
        for (long i = 0; i < steps; i++) {
            double la = log10(a) + (log10(b) - log10(a)) * (double)i / (double)(steps - 1);
            double age = i == steps - 1 ? b : (i == 0 ? a : pow(10.0, la));
            dlist_push(&al, age, NULL);
        }
    }
    t = state_table_new(0);
    if (al.n > 0) {
        for (size_t i = 0; i < al.n; i++) {
            int r = hrt_star_at(s, al.v[i], &st);
            if (r != HRT_OK) {
                char who[128];
                if (steps > 0)
                    snprintf(who, sizeof who, "%s %s", to_text ? "--to" : "--from", to_text ? to_text : from_text);
                else
                    snprintf(who, sizeof who, "--ages %s", al.text[i]);
                rc = cli_star_failure(c, who, r, ml.v[0], z, al.v[i], NULL);
                goto done;
            }
            state_table_add(t, c, &st, NULL, NULL);
        }
    } else {
        size_t n = hrt_star_n_eep(s);
        for (size_t j = 0; j < n; j++) {
            int r = hrt_star_eep_state(s, j, &st);
            if (r != HRT_OK) {
                rc = cli_fail(c, cli_exit_of_status(r), "EEP %zu of the star: %s", j, hrt_strerror(r));
                goto done;
            }
            if ((from_text && st.age_yr < from) || (to_text && st.age_yr > to)) continue;
            state_table_add(t, c, &st, NULL, NULL);
        }
    }
    const char *sampling = steps > 0 ? "log-age steps" : al.n > 0 ? "given ages" : "EEPs";
    if (c->fmt == FMT_CSV) {
        table_write_csv(t, stdout);
    } else if (c->fmt == FMT_JSON) {
        jw_records(stdout, t);
    } else {
        printf("Track of %.6g Msun at Z = %.6g ([Fe/H] = %+.3f), route %s, sampled at %s (%zu rows)\n",
               hrt_star_mass(s), hrt_star_z(s), cli_feh(c, hrt_star_z(s)), cli_route_name(c, hrt_star_route(s)),
               sampling, t->nrow);
        table_write_text(t, stdout, NULL);
        phase_footnote(stdout, t);
    }
done:
    table_free(t);
    hrt_star_free(s);
    dlist_free(&ml);
    dlist_free(&al);
    return rc;
}
