/* hrtrail isochrone: the stars of every initial mass at one or several ages, one metallicity. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

int isochrone_compute(const cli *c, double age_yr, double z, hrt_state **out, size_t *n)
{
    hrt_error err = {0, ""};
    size_t cap = 1024;
    hrt_state *buf = xcalloc(cap, sizeof *buf);
    int st;
    for (;;) {
        st = hrt_isochrone_with(c->grid, age_yr, z, &c->iso, buf, cap, n, &err);
        if (st != HRT_E_BUFFER) break;
        if (*n <= cap) { /* should not happen; avoid looping forever */
            st = HRT_E_INTERNAL;
            break;
        }
        cap = *n;
        free(buf);
        buf = xcalloc(cap, sizeof *buf);
    }
    if (st != HRT_OK) {
        free(buf);
        *out = NULL;
        *n = 0;
        return st;
    }
    *out = buf;
    return HRT_OK;
}

/* ---- what an isochrone holds: phases by key, the step in log L ---- */
enum { O_ISO_PHASES = ISO_OPT_FIRST, O_ISO_LEAVE_OUT, O_ISO_MAX_DLOG_L };
const optdef iso_more_opts[] = {
    {"phases", 0, 1, O_ISO_PHASES}, {"leave-out", 0, 1, O_ISO_LEAVE_OUT}, {"max-dlog-l", 0, 1, O_ISO_MAX_DLOG_L},
    {NULL, 0, 0, 0},
};

/* A list of phase keys as a mask; the words "luminous" (the default: every
 * phase of a modelled star alive) and "remnants" (wd, ns, bh) stand for
 * their phases.  0 and a message for an unknown key. */
static int phase_mask(const cli *c, const char *opt, const char *list, uint64_t *mask)
{
    hrt_isochrone_options d;
    hrt_isochrone_options_default(&d);
    char *copy = xstrdup(list), *save = NULL;
    int rc = 0;
    *mask = 0;
    for (char *k = strtok_r(copy, ",", &save); k && rc == 0; k = strtok_r(NULL, ",", &save)) {
        if (!strcmp(k, "luminous"))
            *mask |= d.phases;
        else if (!strcmp(k, "remnants"))
            *mask |= HRT_PHASES_REMNANT;
        else if (hrt_phase_from_key(k) != HRT_PHASE_UNKNOWN)
            *mask |= HRT_PHASE_BIT(hrt_phase_from_key(k));
        else
            rc = cli_fail(c, CLI_EXIT_USAGE, "%s %s: '%s' is not a phase key (hrtrail codes lists them), "
                          "'luminous' or 'remnants'", opt, list, k);
    }
    free(copy);
    return rc;
}

int iso_option_take(cli *c, int id, const char *val)
{
    uint64_t mask;
    int rc;
    switch (id) {
    case O_ISO_PHASES:
        if (!(rc = phase_mask(c, "--phases", val, &mask))) c->iso.phases = mask;
        return rc;
    case O_ISO_LEAVE_OUT:
        if (!(rc = phase_mask(c, "--leave-out", val, &mask))) c->iso.phases &= ~mask;
        return rc;
    case O_ISO_MAX_DLOG_L:
        if (parse_number(val, &c->iso.max_dlog_l) != 0 || !(c->iso.max_dlog_l > 0))
            return cli_fail(c, CLI_EXIT_USAGE, "--max-dlog-l %s: a step in log L > 0 (dex)", val);
        return 0;
    default:
        return 0;
    }
}

enum { O_AGE = 1 };
static const optdef iso_opts[] = {{"age", 'a', 1, O_AGE}, {"ages", 0, 1, O_AGE}, MAG_OPTDEFS, IERR_OPTDEF, {NULL, 0, 0, 0}};

static int iso_take(cli *c, void *ctx, int id, const char *val)
{
    if (id >= MAG_OPT_FIRST) return mag_option_take(c, id, val);
    if (id >= ISO_OPT_FIRST) return iso_option_take(c, id, val);
    return id == O_AGE ? add_age_list(c, "--age", val, ctx) : 0;
}

static const cmdopts iso_cmdopts = {iso_opts, iso_more_opts, ACCEPT_Z | ACCEPT_FORMAT | ACCEPT_EXTRA, iso_take,
                                    "ages are given with --age", 0};

static int iso_run(cli *c, const dlist *al)
{
    double z;
    int rc;
    table *t;
    if (al->n == 0) return cli_fail(c, CLI_EXIT_USAGE, "give --age AGE[,AGE...] (e.g. --age 1Gyr)");
    for (size_t i = 0; i < al->n; i++)
        if (!(al->v[i] > 0)) return cli_fail(c, CLI_EXIT_USAGE, "--age %s: an isochrone needs an age > 0", al->text[i]);
    if ((rc = mag_check_options(c)) || (rc = cli_open_grid(c)) || (rc = cli_resolve_extras(c)) ||
        (rc = cli_resolve_z(c, &z)))
        return rc;
    t = state_table_new(mag_columns(c));
    state_table_add_extras(t, c);
    for (size_t i = 0; i < al->n && rc == 0; i++) {
        hrt_state *pts;
        size_t n;
        int st = isochrone_compute(c, al->v[i], z, &pts, &n);
        if (st != HRT_OK) {
            char who[96];
            snprintf(who, sizeof who, "--age %s", al->text[i]);
            rc = cli_star_failure(c, who, st, NAN, z, al->v[i], NULL);
            break;
        }
        for (size_t k = 0; k < n; k++) state_table_add(t, c, &pts[k], NULL, NULL);
        free(pts);
    }
    if (rc == 0) {
        char heading[160];
        snprintf(heading, sizeof heading,
                 "Isochrone%s at Z = %.6g ([Fe/H] = %+.3f): %zu points, ordered by route and initial mass\n",
                 al->n > 1 ? "s" : "", z, cli_feh(c, z), t->nrow);
        out_states(c, t, heading);
    }
    table_free(t);
    return rc;
}

int cmd_isochrone(cli *c, argparse *p)
{
    dlist al = {0};
    int rc = cli_parse(c, p, &iso_cmdopts, &al);
    if (rc == 0) rc = iso_run(c, &al);
    dlist_free(&al);
    return rc;
}
