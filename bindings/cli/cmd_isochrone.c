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
        st = hrt_isochrone(c->grid, age_yr, z, buf, cap, n, &err);
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

enum { O_AGE = 1 };
static const optdef iso_opts[] = {{"age", 'a', 1, O_AGE}, {"ages", 0, 1, O_AGE}, {NULL, 0, 0, 0}};

int cmd_isochrone(cli *c, argparse *p)
{
    dlist al = {0};
    const char *val;
    int id, rc = 0;
    double z;
    table *t = NULL;

    while ((id = next_option(c, p, iso_opts, 1, 1, &val)) != OPT_END) {
        if (id == OPT_ERROR) { rc = CLI_EXIT_USAGE; goto done; }
        if (id == OPT_POSITIONAL) {
            rc = cli_fail(c, CLI_EXIT_USAGE, "unexpected argument '%s' (ages are given with --age)", val);
            goto done;
        }
        if (id == O_AGE && (rc = add_age_list(c, "--age", val, &al))) goto done;
    }
    if (c->want_help) { help_command("isochrone", stdout); goto done; }
    if (al.n == 0) {
        rc = cli_fail(c, CLI_EXIT_USAGE, "give --age AGE[,AGE...] (e.g. --age 1Gyr)");
        goto done;
    }
    for (size_t i = 0; i < al.n; i++)
        if (!(al.v[i] > 0)) {
            rc = cli_fail(c, CLI_EXIT_USAGE, "--age %s: an isochrone needs an age > 0", al.text[i]);
            goto done;
        }
    if ((rc = cli_open_grid(c)) || (rc = cli_resolve_z(c, &z))) goto done;
    t = state_table_new(0);
    for (size_t i = 0; i < al.n; i++) {
        hrt_state *pts;
        size_t n;
        int st = isochrone_compute(c, al.v[i], z, &pts, &n);
        if (st != HRT_OK) {
            char who[96];
            snprintf(who, sizeof who, "--age %s", al.text[i]);
            rc = cli_star_failure(c, who, st, NAN, z, al.v[i], NULL);
            goto done;
        }
        for (size_t k = 0; k < n; k++) state_table_add(t, c, &pts[k], NULL, NULL);
        free(pts);
    }
    if (c->fmt == FMT_CSV) {
        table_write_csv(t, stdout);
    } else if (c->fmt == FMT_JSON) {
        jw_records(stdout, t);
    } else {
        printf("Isochrone%s at Z = %.6g ([Fe/H] = %+.3f): %zu points, ordered by route, EEP and initial mass\n",
               al.n > 1 ? "s" : "", z, cli_feh(c, z), t->nrow);
        table_write_text(t, stdout, NULL);
        phase_footnote(stdout, t);
    }
done:
    table_free(t);
    dlist_free(&al);
    return rc;
}
