/* hrtrail at: the state of one or many stars at given ages. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

enum { O_MASS = 1, O_AGE, O_INPUT, O_KEEP };
static const optdef at_opts[] = {
    {"mass", 'm', 1, O_MASS}, {"age", 'a', 1, O_AGE}, {"input", 'i', 1, O_INPUT},
    {"keep-going", 'k', 0, O_KEEP}, MAG_OPTDEFS, IERR_OPTDEF, {NULL, 0, 0, 0},
};

typedef struct stars {
    size_t n;
    double *mass, *z, *age;
    char **name;       /* NULL when no names */
    char **mass_text, **z_text, **age_text;
    long *line;        /* CSV line or 0 */
} stars;

static void stars_free(stars *s)
{
    for (size_t i = 0; i < s->n; i++) {
        if (s->name) free(s->name[i]);
        free(s->mass_text[i]);
        free(s->z_text[i]);
        free(s->age_text[i]);
    }
    free(s->mass); free(s->z); free(s->age); free(s->name);
    free(s->mass_text); free(s->z_text); free(s->age_text); free(s->line);
}

static void stars_alloc(stars *s, size_t n, int named)
{
    s->n = n;
    s->mass = xcalloc(n, sizeof(double));
    s->z = xcalloc(n, sizeof(double));
    s->age = xcalloc(n, sizeof(double));
    s->name = named ? xcalloc(n, sizeof(char *)) : NULL;
    s->mass_text = xcalloc(n, sizeof(char *));
    s->z_text = xcalloc(n, sizeof(char *));
    s->age_text = xcalloc(n, sizeof(char *));
    s->line = xcalloc(n, sizeof(long));
}

/* Columns of --input: names of the vocabulary (tracks/FORMAT.md); the spellings of version 0.1 are refused. */
static const char *const at_known[] = {"initial_mass_msun", "z", "feh", "age_yr", "name", NULL};
static const char *const at_old[] = {"mass", "initial_mass_msun", "initial_mass", "initial_mass_msun",
                                     "initial_mass_Msun", "initial_mass_msun", "mass_Msun", "initial_mass_msun",
                                     "m", "initial_mass_msun", "metallicity", "z", "[Fe/H]", "feh", "fe_h", "feh",
                                     "age", "age_yr", "star", "name", "id", "name", NULL};
#define AT_COLUMNS "initial_mass_msun (Msun), age_yr (yr; a unit may follow: 800Myr), z or feh, name"

/* Stars from a CSV file; columns the file lacks come from single --mass/--age/--z values. */
static int stars_from_csv(cli *c, const char *path, const dlist *ml, const dlist *al, double z_opt, stars *s)
{
    static const csvnames names = {at_known, at_old, AT_COLUMNS, CLI_EXIT_USAGE};
    csvfile f;
    const char *shown = csv_shown(path);
    int rc = csv_read_named(c, path, &names, &f);
    if (rc) return rc;
    long cm = csv_column(&f, "initial_mass_msun"), cz = csv_column(&f, "z"), cf = csv_column(&f, "feh");
    long ca = csv_column(&f, "age_yr"), cn = csv_column(&f, "name");
    if (cm < 0 && ml->n != 1) {
        csv_free(&f);
        return cli_fail(c, CLI_EXIT_USAGE, "%s has no column initial_mass_msun; add one or give one --mass (the columns are "
                        AT_COLUMNS ")", shown);
    }
    if (ca < 0 && al->n != 1) {
        csv_free(&f);
        return cli_fail(c, CLI_EXIT_USAGE, "%s has no column age_yr; add one or give one --age (the columns are "
                        AT_COLUMNS ")", shown);
    }
    stars_alloc(s, f.nrow, cn >= 0);
    for (size_t r = 0; r < f.nrow && rc == 0; r++) {
        char **row = f.rows[r];
        double v;
        int pr;
        s->line[r] = f.line[r];
        if (cn >= 0) s->name[r] = xstrdup(row[cn]);
        s->mass_text[r] = xstrdup(cm >= 0 ? row[cm] : ml->text[0]);
        if (cm >= 0) {
            if (parse_number(row[cm], &v) != 0 || !(v > 0))
                rc = cli_fail(c, CLI_EXIT_USAGE, "%s line %ld, column '%s': '%s' is not a positive initial mass (Msun)",
                              shown, f.line[r], f.head[cm], row[cm]);
            s->mass[r] = v;
        } else {
            s->mass[r] = ml->v[0];
        }
        if (rc) break;
        s->age_text[r] = xstrdup(ca >= 0 ? row[ca] : al->text[0]);
        if (ca >= 0) {
            pr = parse_age_yr(row[ca], &v);
            if (pr != 0)
                rc = cli_fail(c, CLI_EXIT_USAGE,
                              "%s line %ld, column '%s': '%s' is not an age >= 0 (years, or with a unit yr, kyr, Myr, Gyr)",
                              shown, f.line[r], f.head[ca], row[ca]);
            s->age[r] = v;
        } else {
            s->age[r] = al->v[0];
        }
        if (rc) break;
        /* z or feh, one of them per line; a line with neither takes --z/--feh (or the grid's Z_ref) */
        const char *zt = cz >= 0 ? row[cz] : "", *ft = cf >= 0 ? row[cf] : "";
        if (*zt && *ft) {
            rc = cli_fail(c, CLI_EXIT_USAGE, "%s line %ld: both z ('%s') and feh ('%s') given; give one of them", shown,
                          f.line[r], zt, ft);
            break;
        }
        if (*zt) {
            s->z_text[r] = xstrdup(zt);
            if (parse_number(zt, &v) != 0 || !(v > 0 && v < 1))
                rc = cli_fail(c, CLI_EXIT_USAGE, "%s line %ld, column 'z': '%s' is not a metal mass fraction (0 < Z < 1)",
                              shown, f.line[r], zt);
            s->z[r] = v;
        } else if (*ft) {
            s->z_text[r] = xstrdup(ft);
            if (parse_number(ft, &v) != 0 || fabs(v) > 10)
                rc = cli_fail(c, CLI_EXIT_USAGE, "%s line %ld, column 'feh': '%s' is not an [Fe/H] value (dex)", shown,
                              f.line[r], ft);
            s->z[r] = hrt_grid_z_ref(c->grid) * pow(10.0, v);
        } else {
            s->z_text[r] = xstrdup(c->z_text ? c->z_text : "");
            s->z[r] = z_opt;
        }
    }
    csv_free(&f);
    return rc;
}

static void who_of(const cli *c, const stars *s, size_t i, int code, const char *input, char *buf, size_t n)
{
    if (input)
        snprintf(buf, n, "%s line %ld (mass %s Msun, Z %.6g, age %s)", csv_shown(input), s->line[i], s->mass_text[i], s->z[i],
                 s->age_text[i]);
    else if (code == HRT_E_MASS_RANGE || code == HRT_E_NO_TRACK)
        snprintf(buf, n, "--mass %s", s->mass_text[i]);
    else if (code == HRT_E_AGE_RANGE || code == HRT_E_DOMAIN)
        snprintf(buf, n, "--age %s (mass %s Msun)", s->age_text[i], s->mass_text[i]);
    else if (code == HRT_E_Z_RANGE)
        snprintf(buf, n, "%s %s", c->have_feh ? "--feh" : "--z", c->z_text ? c->z_text : "");
    else
        snprintf(buf, n, "star of %s Msun at age %s", s->mass_text[i], s->age_text[i]);
}

typedef struct at_args {
    dlist ml, al;
    const char *input;
    int keep;
} at_args;

static int at_take(cli *c, void *ctx, int id, const char *val)
{
    at_args *a = ctx;
    if (id >= MAG_OPT_FIRST) return mag_option_take(c, id, val);
    switch (id) {
    case O_MASS: return add_mass_list(c, "--mass", val, &a->ml);
    case O_AGE: return add_age_list(c, "--age", val, &a->al);
    case O_INPUT: a->input = val; return 0;
    case O_KEEP: a->keep = 1; return 0;
    default: return 0;
    }
}

static const cmdopts at_cmdopts = {at_opts, NULL, ACCEPT_Z | ACCEPT_FORMAT | ACCEPT_EXTRA, at_take,
                                   "give stars with --mass, --age or --input", 0};

/* The stars: every mass at every age of the options, or the lines of --input. */
static int at_stars(cli *c, const at_args *a, stars *s)
{
    double z = NAN;
    int rc;
    /* a metallicity is needed unless every star brings its own */
    if ((c->have_z || c->have_feh || !a->input) && (rc = cli_resolve_z(c, &z))) return rc;
    if (a->input) return stars_from_csv(c, a->input, &a->ml, &a->al, isnan(z) ? hrt_grid_z_ref(c->grid) : z, s);
    size_t k = 0;
    stars_alloc(s, a->ml.n * a->al.n, 0);
    for (size_t i = 0; i < a->ml.n; i++)
        for (size_t j = 0; j < a->al.n; j++, k++) {
            s->mass[k] = a->ml.v[i];
            s->age[k] = a->al.v[j];
            s->z[k] = z;
            s->mass_text[k] = xstrdup(a->ml.text[i]);
            s->age_text[k] = xstrdup(a->al.text[j]);
            s->z_text[k] = xstrdup(c->z_text ? c->z_text : "");
        }
    return 0;
}

/* A message for every star that failed: the first ends the command, or (--keep-going) all are told. */
static int at_failures(const cli *c, const at_args *a, const stars *s, const hrt_state *out)
{
    int rc = 0;
    for (size_t i = 0; i < s->n; i++) {
        char who[512];
        if (out[i].status == HRT_OK) continue;
        who_of(c, s, i, out[i].status, a->input, who, sizeof who);
        int r1 = cli_star_failure(c, who, out[i].status, s->mass[i], s->z[i], s->age[i], NULL);
        if (!a->keep) return r1;
        if (!rc) rc = r1;
    }
    return rc;
}

static int at_run(cli *c, const at_args *a)
{
    stars s = {0};
    hrt_state *out = NULL;
    hrt_error err = {0, ""};
    int rc;
    if (!a->input && (a->ml.n == 0 || a->al.n == 0))
        return cli_fail(c, CLI_EXIT_USAGE, "give --mass and --age, or --input FILE (see hrtrail at --help)");
    if (a->input && (a->ml.n > 1 || a->al.n > 1))
        return cli_fail(c, CLI_EXIT_USAGE, "with --input, --mass and --age may give only one value each (for columns the file lacks)");
    if ((rc = mag_check_options(c)) || (rc = cli_open_grid(c)) || (rc = cli_resolve_extras(c)) ||
        (rc = at_stars(c, a, &s))) {
        stars_free(&s);
        return rc;
    }
    out = xcalloc(s.n, sizeof *out);
    int st = hrt_eval(c->grid, s.n, s.mass, s.z, 0.0, s.age, out, &err);
    if (st != HRT_OK && st != HRT_E_MASS_RANGE && st != HRT_E_Z_RANGE && st != HRT_E_AGE_RANGE &&
        st != HRT_E_NO_TRACK && st != HRT_E_DOMAIN)
        rc = cli_fail(c, cli_exit_of_status(st), "%s", err.message[0] ? err.message : hrt_strerror(st));
    else if ((rc = at_failures(c, a, &s, out)) == 0 || a->keep) {
        table *t = state_table_new((s.name ? SC_NAME : 0u) | (a->keep ? SC_STATUS : 0u) | mag_columns(c));
        state_table_add_extras(t, c);
        for (size_t i = 0; i < s.n; i++) {
            if (out[i].status != HRT_OK) {
                /* the library leaves the failed star's inputs for us to fill in */
                out[i].initial_mass_msun = s.mass[i];
                out[i].z = s.z[i];
                out[i].age_yr = s.age[i];
            }
            state_table_add(t, c, &out[i], s.name ? s.name[i] : NULL,
                            out[i].status == HRT_OK ? "ok" : hrt_strerror(out[i].status));
        }
        out_states(c, t, NULL);
        table_free(t);
    }
    free(out);
    stars_free(&s);
    return rc;
}

int cmd_at(cli *c, argparse *p)
{
    at_args a;
    memset(&a, 0, sizeof a);
    int rc = cli_parse(c, p, &at_cmdopts, &a);
    if (rc == 0) rc = at_run(c, &a);
    dlist_free(&a.ml);
    dlist_free(&a.al);
    return rc;
}
