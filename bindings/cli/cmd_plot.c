/* hrtrail plot: an HR diagram as SVG of tracks, isochrones and points from a CSV. */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include "cli.h"

enum { O_TRACK = 1, O_ISO, O_POINTS, O_TITLE, O_OUT, O_XRANGE, O_YRANGE };
static const optdef plot_opts[] = {
    {"track", 't', 1, O_TRACK},      {"tracks", 0, 1, O_TRACK},   {"isochrone", 'a', 1, O_ISO},
    {"isochrones", 0, 1, O_ISO},     {"points", 'p', 1, O_POINTS}, {"title", 0, 1, O_TITLE},
    {"output", 'o', 1, O_OUT},       {"log-teff", 0, 1, O_XRANGE}, {"log-l", 0, 1, O_YRANGE},
    {NULL, 0, 0, 0},
};

static int parse_range(const cli *c, const char *opt, const char *s, double *lo, double *hi)
{
    char *copy = xstrdup(s), *comma = strchr(copy, ',');
    int ok = 0;
    if (comma) {
        *comma = '\0';
        ok = parse_number(copy, lo) == 0 && parse_number(comma + 1, hi) == 0 && *lo != *hi;
    }
    free(copy);
    if (!ok) return cli_fail(c, CLI_EXIT_USAGE, "%s '%s': give two different numbers LO,HI (log10 values)", opt, s);
    if (*lo > *hi) {
        double t = *lo;
        *lo = *hi, *hi = t;
    }
    return 0;
}

/* Columns of --points: names of the vocabulary (tracks/FORMAT.md), as 'hrtrail at --csv' writes them. */
static const char *const points_known[] = {"log_teff_k", "log_l_lsun", "name", "phase", NULL};
static const char *const points_old[] = {"log_Teff_K", "log_teff_k", "log_teff", "log_teff_k", "logteff", "log_teff_k",
                                         "log_Teff", "log_teff_k", "log_L_Lsun", "log_l_lsun", "log_l", "log_l_lsun",
                                         "logl", "log_l_lsun", "log_L", "log_l_lsun", "label", "name", "star", "name",
                                         NULL};
#define POINTS_COLUMNS "log_teff_k, log_l_lsun, name (label), phase (ring colour)"

static int read_points(const cli *c, plot *pl, const char *path)
{
    csvfile f;
    const char *shown = strcmp(path, "-") == 0 ? "standard input" : path;
    int rc = csv_read(c, path, &f);
    if (rc) return rc;
    if ((rc = csv_check_header(c, &f, shown, CLI_EXIT_FILE, points_known, points_old, POINTS_COLUMNS))) {
        csv_free(&f);
        return rc;
    }
    long ct = csv_column(&f, "log_teff_k"), cl = csv_column(&f, "log_l_lsun");
    long cn = csv_column(&f, "name"), cp = csv_column(&f, "phase");
    if (ct < 0 || cl < 0) {
        csv_free(&f);
        return cli_fail(c, CLI_EXIT_FILE, "%s: needs columns log_teff_k and log_l_lsun (the columns are " POINTS_COLUMNS
                        ", as 'hrtrail at --csv' writes them)", shown);
    }
    for (size_t r = 0; r < f.nrow && !rc; r++) {
        double t, l;
        char **row = f.rows[r];
        /* stars without a luminosity (before the ZAMS, dark remnants) have nothing to plot */
        if (!strcasecmp(row[ct], "nan") || !strcasecmp(row[cl], "nan") || !row[ct][0] || !row[cl][0]) continue;
        if (parse_number(row[ct], &t) != 0 || parse_number(row[cl], &l) != 0) {
            rc = cli_fail(c, CLI_EXIT_FILE, "%s line %ld: log_teff_k '%s' and log_l_lsun '%s' must be numbers", shown,
                          f.line[r], row[ct], row[cl]);
            break;
        }
        plot_add_point(pl, t, l, cp >= 0 ? hrt_phase_from_key(row[cp]) : HRT_PHASE_UNKNOWN, cn >= 0 ? row[cn] : NULL);
    }
    csv_free(&f);
    return rc;
}

int cmd_plot(cli *c, argparse *p)
{
    dlist tl = {0}, il = {0};
    const char *val, *points = NULL, *title = NULL, *out = NULL;
    int id, rc = 0;
    double z = NAN;
    plot pl;
    char subtitle[512], label[96];
    hrt_star *s = NULL;

    plot_init(&pl);
    while ((id = next_option(c, p, plot_opts, 1, 0, &val)) != OPT_END) {
        if (id == OPT_ERROR) { rc = CLI_EXIT_USAGE; goto done; }
        if (id == OPT_POSITIONAL) {
            rc = cli_fail(c, CLI_EXIT_USAGE, "unexpected argument '%s' (the output file is given with -o FILE)", val);
            goto done;
        }
        if (id == O_TRACK && (rc = add_mass_list(c, "--track", val, &tl))) goto done;
        if (id == O_ISO && (rc = add_age_list(c, "--isochrone", val, &il))) goto done;
        if (id == O_POINTS) points = val;
        if (id == O_TITLE) title = val;
        if (id == O_OUT) out = val;
        if (id == O_XRANGE) {
            if ((rc = parse_range(c, "--log-teff", val, &pl.xlo, &pl.xhi))) goto done;
            pl.have_xrange = 1;
        }
        if (id == O_YRANGE) {
            if ((rc = parse_range(c, "--log-l", val, &pl.ylo, &pl.yhi))) goto done;
            pl.have_yrange = 1;
        }
    }
    if (c->want_help) { help_command("plot", stdout); goto done; }
    if (!tl.n && !il.n && !points) {
        rc = cli_fail(c, CLI_EXIT_USAGE, "nothing to draw: give --track M[,M...], --isochrone AGE[,AGE...] or --points FILE");
        goto done;
    }
    for (size_t i = 0; i < il.n; i++)
        if (!(il.v[i] > 0)) {
            rc = cli_fail(c, CLI_EXIT_USAGE, "--isochrone %s: an isochrone needs an age > 0", il.text[i]);
            goto done;
        }
    if (points && (rc = read_points(c, &pl, points))) goto done;
    snprintf(subtitle, sizeof subtitle, "points from %s", points ? (strcmp(points, "-") ? points : "standard input") : "");
    if (tl.n || il.n) {
        if ((rc = cli_open_grid(c)) || (rc = cli_resolve_z(c, &z))) goto done;
        for (size_t i = 0; i < tl.n; i++) {
            if ((rc = cli_new_star(c, tl.text[i], tl.v[i], z, &s))) goto done;
            snprintf(label, sizeof label, "%.4g Msun", tl.v[i]);
            if ((rc = plot_add_track(c, &pl, s, label))) goto done;
            hrt_star_free(s);
            s = NULL;
        }
        for (size_t i = 0; i < il.n; i++) {
            char age[64];
            format_age(age, sizeof age, il.v[i]);
            int st = plot_add_isochrone(c, &pl, il.v[i], z, age);
            if (st != HRT_OK) {
                char who[96];
                snprintf(who, sizeof who, "--isochrone %s", il.text[i]);
                rc = cli_star_failure(c, who, st, NAN, z, il.v[i], NULL);
                goto done;
            }
        }
        snprintf(subtitle, sizeof subtitle, "Z = %.6g ([Fe/H] = %+.2f); grid %s, %s interpolation%s%s", z, cli_feh(c, z),
                 c->grid_used, hrt_interp_name(c->interp), points ? "; points from " : "",
                 points ? (strcmp(points, "-") ? points : "standard input") : "");
    }
    if (pl.npoints == 0 && tl.n == 0 && il.n == 0) {
        rc = cli_fail(c, CLI_EXIT_FILE, "%s: no star with a finite log_teff_k and log_l_lsun to plot",
                      strcmp(points, "-") ? points : "standard input");
        goto done;
    }
    pl.title = title ? title : "Hertzsprung-Russell diagram";
    pl.subtitle = subtitle;
    rc = plot_save(c, &pl, out);
done:
    hrt_star_free(s);
    plot_free(&pl);
    dlist_free(&tl);
    dlist_free(&il);
    return rc;
}
