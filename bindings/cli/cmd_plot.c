/* hrtrail plot: an HR diagram as SVG of tracks, isochrones and points from a CSV. */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include "cli.h"

enum { O_TRACK = 1, O_ISO, O_POINTS, O_TITLE, O_OUT, O_XRANGE, O_YRANGE, O_Y, O_YR };
static const optdef plot_opts[] = {
    {"track", 't', 1, O_TRACK},      {"tracks", 0, 1, O_TRACK},   {"isochrone", 'a', 1, O_ISO},
    {"isochrones", 0, 1, O_ISO},     {"points", 'p', 1, O_POINTS}, {"title", 0, 1, O_TITLE},
    {"output", 'o', 1, O_OUT},       {"log-teff", 0, 1, O_XRANGE}, {"log-l", 0, 1, O_YRANGE},
    {"y", 0, 1, O_Y},                {"y-range", 0, 1, O_YR},     MAG_OPTDEFS,
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
    static const csvnames names = {points_known, points_old, POINTS_COLUMNS, CLI_EXIT_FILE};
    csvfile f;
    const char *shown = csv_shown(path);
    int rc = csv_read_named(c, path, &names, &f);
    if (rc) return rc;
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

typedef struct plot_args {
    dlist tl, il;
    const char *points, *title, *out;
    plot pl;
} plot_args;

static int plot_take(cli *c, void *ctx, int id, const char *val)
{
    plot_args *a = ctx;
    int rc = 0;
    if (id >= MAG_OPT_FIRST) return mag_option_take(c, id, val);
    if (id >= ISO_OPT_FIRST) return iso_option_take(c, id, val);
    switch (id) {
    case O_Y:
        if (!strcmp(val, "log_l_lsun")) a->pl.y_kind = PLOT_Y_LOG_L;
        else if (!strcmp(val, "abs_mv")) a->pl.y_kind = PLOT_Y_ABS_MV;
        else if (!strcmp(val, "mv")) a->pl.y_kind = PLOT_Y_MV;
        else return cli_fail(c, CLI_EXIT_USAGE, "--y %s: the y axis is log_l_lsun (the default), abs_mv or mv", val);
        return 0;
    case O_YR:
        if (!(rc = parse_range(c, "--y-range", val, &a->pl.ylo, &a->pl.yhi))) a->pl.have_yrange = 1;
        return rc;
    case O_TRACK: return add_mass_list(c, "--track", val, &a->tl);
    case O_ISO: return add_age_list(c, "--isochrone", val, &a->il);
    case O_POINTS: a->points = val; return 0;
    case O_TITLE: a->title = val; return 0;
    case O_OUT: a->out = val; return 0;
    case O_XRANGE:
        if (!(rc = parse_range(c, "--log-teff", val, &a->pl.xlo, &a->pl.xhi))) a->pl.have_xrange = 1;
        return rc;
    case O_YRANGE:
        if (!(rc = parse_range(c, "--log-l", val, &a->pl.ylo, &a->pl.yhi))) a->pl.have_yrange = 1;
        return rc;
    default: return 0;
    }
}

static const cmdopts plot_cmdopts = {plot_opts, iso_more_opts, ACCEPT_Z, plot_take,
                                     "the output file is given with -o FILE", 0};

/* The tracks and isochrones of the options, at the metallicity of the options. */
static int plot_grid_lines(cli *c, plot_args *a, char *subtitle, size_t n)
{
    double z;
    int rc;
    if ((rc = cli_open_grid(c)) || (rc = cli_resolve_z(c, &z))) return rc;
    for (size_t i = 0; i < a->tl.n; i++) {
        hrt_star *s = NULL;
        char label[96];
        if ((rc = cli_new_star(c, a->tl.text[i], a->tl.v[i], z, &s))) return rc;
        snprintf(label, sizeof label, "%.4g Msun", a->tl.v[i]);
        rc = plot_add_track(c, &a->pl, s, label);
        hrt_star_free(s);
        if (rc) return rc;
    }
    for (size_t i = 0; i < a->il.n; i++) {
        char age[64], who[96];
        format_age(age, sizeof age, a->il.v[i]);
        int st = plot_add_isochrone(c, &a->pl, a->il.v[i], z, age);
        if (st != HRT_OK) {
            snprintf(who, sizeof who, "--isochrone %s", a->il.text[i]);
            return cli_star_failure(c, who, st, NAN, z, a->il.v[i], NULL);
        }
    }
    snprintf(subtitle, n, "Z = %.6g ([Fe/H] = %+.2f); grid %s, %s interpolation%s%s", z, cli_feh(c, z), c->grid_used,
             hrt_interp_name(c->interp), a->points ? "; points from " : "", a->points ? csv_shown(a->points) : "");
    return 0;
}

static int plot_run(cli *c, plot_args *a)
{
    char subtitle[512];
    int rc;
    if ((rc = mag_check_options(c))) return rc;
    if (a->pl.y_kind == PLOT_Y_MV && !c->have_distance)
        return cli_fail(c, CLI_EXIT_USAGE, "--y mv is the apparent magnitude: give --distance PC (and --av MAG)");
    if (a->pl.y_kind != PLOT_Y_MV && c->have_distance)
        return cli_fail(c, CLI_EXIT_USAGE, "--distance and --av apply to --y mv only");
    a->pl.y_offset_mag = c->have_distance ? 5.0 * log10(c->distance_pc / 10.0) + c->a_v_mag : 0.0;
    if (!a->tl.n && !a->il.n && !a->points)
        return cli_fail(c, CLI_EXIT_USAGE, "nothing to draw: give --track M[,M...], --isochrone AGE[,AGE...] or --points FILE");
    for (size_t i = 0; i < a->il.n; i++)
        if (!(a->il.v[i] > 0))
            return cli_fail(c, CLI_EXIT_USAGE, "--isochrone %s: an isochrone needs an age > 0", a->il.text[i]);
    if (a->points && (rc = read_points(c, &a->pl, a->points))) return rc;
    snprintf(subtitle, sizeof subtitle, "points from %s", a->points ? csv_shown(a->points) : "");
    if ((a->tl.n || a->il.n) && (rc = plot_grid_lines(c, a, subtitle, sizeof subtitle))) return rc;
    if (a->pl.npoints == 0 && a->tl.n == 0 && a->il.n == 0)
        return cli_fail(c, CLI_EXIT_FILE, "%s: no star with a finite log_teff_k and log_l_lsun to plot", csv_shown(a->points));
    a->pl.title = a->title ? a->title
                  : a->pl.y_kind == PLOT_Y_LOG_L ? "Hertzsprung-Russell diagram"
                  : "Magnitude-temperature diagram";
    a->pl.subtitle = subtitle;
    return plot_save(c, &a->pl, a->out);
}

int cmd_plot(cli *c, argparse *p)
{
    plot_args a;
    memset(&a, 0, sizeof a);
    plot_init(&a.pl);
    int rc = cli_parse(c, p, &plot_cmdopts, &a);
    if (rc == 0) rc = plot_run(c, &a);
    plot_free(&a.pl);
    dlist_free(&a.tl);
    dlist_free(&a.il);
    return rc;
}
