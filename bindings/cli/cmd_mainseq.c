/* hrtrail mainseq: the main sequence as a calibration curve (Teff <-> L, distance). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

enum { O_TEFF = 1, O_TEFF_SIGMA, O_LOG_L, O_LOG_L_SIGMA, O_FLUX, O_FLUX_SIGMA, O_MBOL, O_MBOL_SIGMA,
       O_AGE_MIN, O_AGE_MAX, O_IMF_ALPHA };
static const optdef ms_opts[] = {
    {"teff", 't', 1, O_TEFF}, {"teff-sigma", 0, 1, O_TEFF_SIGMA}, {"log-l", 'l', 1, O_LOG_L},
    {"log-l-sigma", 0, 1, O_LOG_L_SIGMA}, {"flux", 0, 1, O_FLUX}, {"flux-sigma", 0, 1, O_FLUX_SIGMA},
    {"mbol", 0, 1, O_MBOL}, {"mbol-sigma", 0, 1, O_MBOL_SIGMA}, {"age-min", 0, 1, O_AGE_MIN},
    {"age-max", 0, 1, O_AGE_MAX}, {"imf-alpha", 0, 1, O_IMF_ALPHA}, {NULL, 0, 0, 0}};

typedef struct ms_args {
    dlist teff, log_l;
    double teff_sigma, log_l_sigma, flux, flux_sigma, mbol, mbol_sigma;
    int have_flux, have_mbol;
    hrt_ms_options o;
} ms_args;

/* A number >= 0 (or any finite number when any_sign) for option opt. */
static int take_number(const cli *c, const char *opt, const char *val, int any_sign, double *out)
{
    if (parse_number(val, out) || !isfinite(*out) || (!any_sign && *out < 0))
        return cli_fail(c, CLI_EXIT_USAGE, "%s: '%s' is not a %s number", opt, val, any_sign ? "finite" : "non-negative");
    return 0;
}

/* A comma-separated list of finite numbers. */
static int take_list(const cli *c, const char *opt, const char *val, int positive, dlist *l)
{
    char *s = xstrdup(val), *save = NULL;
    int rc = 0;
    for (char *tok = strtok_r(s, ",", &save); tok && rc == 0; tok = strtok_r(NULL, ",", &save)) {
        double v;
        if (parse_number(tok, &v) || !isfinite(v) || (positive && v <= 0))
            rc = cli_fail(c, CLI_EXIT_USAGE, "%s: '%s' is not a %s number", opt, tok, positive ? "positive" : "finite");
        else
            dlist_push(l, v, tok);
    }
    free(s);
    return rc;
}

static int ms_take(cli *c, void *ctx, int id, const char *val)
{
    ms_args *a = ctx;
    switch (id) {
    case O_TEFF: return take_list(c, "--teff", val, 1, &a->teff);
    case O_LOG_L: return take_list(c, "--log-l", val, 0, &a->log_l);
    case O_TEFF_SIGMA: return take_number(c, "--teff-sigma", val, 0, &a->teff_sigma);
    case O_LOG_L_SIGMA: return take_number(c, "--log-l-sigma", val, 0, &a->log_l_sigma);
    case O_FLUX: a->have_flux = 1; return take_number(c, "--flux", val, 0, &a->flux);
    case O_FLUX_SIGMA: return take_number(c, "--flux-sigma", val, 0, &a->flux_sigma);
    case O_MBOL: a->have_mbol = 1; return take_number(c, "--mbol", val, 1, &a->mbol);
    case O_MBOL_SIGMA: return take_number(c, "--mbol-sigma", val, 0, &a->mbol_sigma);
    case O_IMF_ALPHA: return take_number(c, "--imf-alpha", val, 1, &a->o.imf_alpha);
    case O_AGE_MIN:
        if (parse_age_yr(val, &a->o.age_min_yr)) return cli_fail(c, CLI_EXIT_USAGE, "--age-min: '%s' is not an age", val);
        return 0;
    case O_AGE_MAX:
        if (strcmp(val, "inf") == 0)
            a->o.age_max_yr = INFINITY; /* every main-sequence age */
        else if (parse_age_yr(val, &a->o.age_max_yr))
            return cli_fail(c, CLI_EXIT_USAGE, "--age-max: '%s' is not an age", val);
        return 0;
    default: return 0;
    }
}

static const cmdopts ms_cmdopts = {ms_opts, NULL, ACCEPT_Z | ACCEPT_FORMAT, ms_take,
                                   "the star is given with --teff or --log-l", 0};

/* The records of --csv and --json: an estimate (median, 15.87/84.13 %) and the band at the value. */
#define MS_IV(name) {name, NULL, COL_NUM, NULL, 0}, {name "_lo", NULL, COL_NUM, NULL, 0}, {name "_hi", NULL, COL_NUM, NULL, 0}
static const col rec_cols[] = {
    {"record", NULL, COL_TEXT, NULL, 0},
    {"teff_k_sigma", NULL, COL_NUM, NULL, 0},
    {"log_l_lsun_sigma", NULL, COL_NUM, NULL, 0},
    {"z", NULL, COL_NUM, NULL, 0},
    MS_IV("teff_k"), MS_IV("log_l_lsun"), MS_IV("r_rsun"), MS_IV("log_g_cgs"), MS_IV("mass_msun"),
    MS_IV("initial_mass_msun"), MS_IV("age_yr"), MS_IV("distance_pc"), MS_IV("parallax_mas"),
};
#define N_REC_COLS (sizeof rec_cols / sizeof rec_cols[0])
enum { RC_FIRST_IV = 4, RC_DIST = RC_FIRST_IV + 7 * 3 };

/* Text table of one star: a row per quantity. */
static const col txt_cols[] = {
    {NULL, "quantity", COL_TEXT, NULL, 0},
    {NULL, "median", COL_NUM, "%.4g", 0},
    {NULL, "lo (15.87%)", COL_NUM, "%.4g", 0},
    {NULL, "hi (84.13%)", COL_NUM, "%.4g", 0},
    {NULL, "band lo", COL_NUM, "%.4g", 0},
    {NULL, "band hi", COL_NUM, "%.4g", 0},
};

typedef struct ms_quantity {
    const char *label;
    int linear; /* reported as 10^value (Teff, R) */
} ms_quantity;
static const ms_quantity QUANT[7] = {{"Teff [K]", 1}, {"log L [Lsun]", 0}, {"R [Rsun]", 1}, {"log g [cgs]", 0},
                                     {"mass [Msun]", 0}, {"initial mass [Msun]", 0}, {"age [yr]", 0}};

static const hrt_ms_value *quantity(const hrt_ms_estimate *e, int k)
{
    const hrt_ms_value *v[7] = {&e->log_teff_k, &e->log_l_lsun, &e->log_r_rsun, &e->log_g_cgs,
                                &e->mass_msun, &e->initial_mass_msun, &e->age_yr};
    return v[k];
}

static double shown(double x, int linear) { return linear ? pow(10.0, x) : x; }

static void add_records(table *t, const hrt_ms_estimate *e, double teff_sigma, double log_l_sigma,
                        const hrt_ms_distance_result *d)
{
    for (int rec = 0; rec < 2; rec++) {
        size_t r = table_add_row(t);
        table_text(t, r, 0, rec ? "band" : "estimate");
        table_num(t, r, 1, teff_sigma);
        table_num(t, r, 2, log_l_sigma);
        table_num(t, r, 3, e->z);
        for (int k = 0; k < 7; k++) {
            const hrt_ms_value *v = quantity(e, k);
            size_t c0 = RC_FIRST_IV + 3 * (size_t)k;
            table_num(t, r, c0, rec ? NAN : shown(v->median, QUANT[k].linear));
            table_num(t, r, c0 + 1, shown(rec ? v->band_lo : v->lo, QUANT[k].linear));
            table_num(t, r, c0 + 2, shown(rec ? v->band_hi : v->hi, QUANT[k].linear));
        }
        const hrt_fit_interval *iv[2] = {&d->distance_pc, &d->parallax_mas};
        for (int k = 0; k < 2; k++) {
            table_num(t, r, RC_DIST + 3 * (size_t)k, rec || d->status ? NAN : iv[k]->median);
            table_num(t, r, RC_DIST + 3 * (size_t)k + 1, rec || d->status ? NAN : iv[k]->lo);
            table_num(t, r, RC_DIST + 3 * (size_t)k + 2, rec || d->status ? NAN : iv[k]->hi);
        }
    }
}

static void print_text(const hrt_ms_estimate *e, const char *given, const hrt_ms_distance_result *d)
{
    table *t = table_new(txt_cols, 6);
    printf("%s: %d main-sequence models carry weight\n", given, (int)e->n_models);
    for (int k = 0; k < 7; k++) {
        const hrt_ms_value *v = quantity(e, k);
        size_t r = table_add_row(t);
        int lin = QUANT[k].linear;
        table_text(t, r, 0, QUANT[k].label);
        table_num(t, r, 1, shown(v->median, lin));
        table_num(t, r, 2, shown(v->lo, lin));
        table_num(t, r, 3, shown(v->hi, lin));
        table_num(t, r, 4, shown(v->band_lo, lin));
        table_num(t, r, 5, shown(v->band_hi, lin));
    }
    if (d->status == HRT_OK && isfinite(d->distance_pc.median)) {
        size_t r = table_add_row(t);
        table_text(t, r, 0, "distance [pc]");
        table_num(t, r, 1, d->distance_pc.median);
        table_num(t, r, 2, d->distance_pc.lo);
        table_num(t, r, 3, d->distance_pc.hi);
        table_num(t, r, 4, NAN);
        table_num(t, r, 5, NAN);
        r = table_add_row(t);
        table_text(t, r, 0, "parallax [mas]");
        table_num(t, r, 1, d->parallax_mas.median);
        table_num(t, r, 2, d->parallax_mas.lo);
        table_num(t, r, 3, d->parallax_mas.hi);
        table_num(t, r, 4, NAN);
        table_num(t, r, 5, NAN);
    }
    table_write_text(t, stdout, "  ");
    table_free(t);
}

static void print_heading(const cli *c, const ms_args *a, double z);

/* One star: an estimate, and a distance when a flux is given (Teff stars only). */
static int one_star(cli *c, const hrt_ms *ms, const ms_args *a, int by_teff, double v, const char *text, table *rec,
                    int first)
{
    hrt_ms_estimate e;
    hrt_ms_distance_result d;
    hrt_error err;
    int rc;
    char given[160];
    memset(&d, 0, sizeof d);
    d.status = -1;
    d.distance_pc.median = NAN;
    if (by_teff)
        rc = hrt_ms_from_teff(ms, v, a->teff_sigma, &e, &err);
    else
        rc = hrt_ms_from_log_l(ms, v, a->log_l_sigma, &e, &err);
    if (rc != HRT_OK)
        return cli_fail(c, cli_exit_of_status(rc), "%s", err.message);
    if (by_teff && (a->have_flux || a->have_mbol)) {
        double f = a->have_flux ? a->flux : hrt_fit_flux_from_mbol(a->mbol);
        double fs = a->have_flux ? a->flux_sigma : f * 0.4 * log(10.0) * a->mbol_sigma;
        rc = hrt_ms_distance(ms, v, a->teff_sigma, f, fs, &d, &err);
        if (rc != HRT_OK)
            return cli_fail(c, cli_exit_of_status(rc), "%s", err.message);
    }
    if (rec) {
        add_records(rec, &e, by_teff ? a->teff_sigma : NAN, by_teff ? NAN : a->log_l_sigma, &d);
        return 0;
    }
    if (by_teff)
        snprintf(given, sizeof given, "Teff %s +- %g K", text, a->teff_sigma);
    else
        snprintf(given, sizeof given, "log L/Lsun %s +- %g", text, a->log_l_sigma);
    if (first)
        print_heading(c, a, e.z);
    else
        putchar('\n');
    print_text(&e, given, &d);
    return 0;
}

static void print_heading(const cli *c, const ms_args *a, double z)
{
    char a0[64], a1[64];
    format_age(a0, sizeof a0, a->o.age_min_yr);
    format_age(a1, sizeof a1, a->o.age_max_yr);
    printf("Main sequence at Z = %.6g ([Fe/H] = %+.3f), ages from %s to %s (of each star's main sequence);\n"
           "weights: M^-%g dM x time spent; intervals 15.87-84.13 %%, band: all models of exactly the value\n\n",
           z, cli_feh(c, z), a->o.age_min_yr > 0 ? a0 : "the ZAMS", isfinite(a->o.age_max_yr) ? a1 : "the TAMS",
           a->o.imf_alpha);
}

static int run_all(cli *c, const ms_args *a, double z)
{
    hrt_ms *ms = NULL;
    hrt_error err;
    int rc = hrt_ms_new(c->grid, z, &a->o, &ms, &err);
    if (rc != HRT_OK)
        return cli_fail(c, cli_exit_of_status(rc), "%s", err.message);
    table *rec = c->fmt == FMT_TABLE ? NULL : table_new(rec_cols, N_REC_COLS);
    int first = 1;
    for (size_t i = 0; i < a->teff.n && rc == 0; i++, first = 0)
        rc = one_star(c, ms, a, 1, a->teff.v[i], a->teff.text[i], rec, first);
    for (size_t i = 0; i < a->log_l.n && rc == 0; i++, first = 0)
        rc = one_star(c, ms, a, 0, a->log_l.v[i], a->log_l.text[i], rec, first);
    if (rc == 0 && rec) out_records(c, rec);
    table_free(rec);
    hrt_ms_free(ms);
    return rc;
}

int cmd_mainseq(cli *c, argparse *p)
{
    ms_args a;
    double z;
    memset(&a, 0, sizeof a);
    hrt_ms_options_default(&a.o);
    int rc = cli_parse(c, p, &ms_cmdopts, &a);
    if (rc == 0 && a.teff.n + a.log_l.n == 0)
        rc = cli_fail(c, CLI_EXIT_USAGE, "give --teff K[,K...] or --log-l X[,X...] (log10 L/Lsun)");
    if (rc == 0 && !(a.o.age_max_yr > a.o.age_min_yr))
        rc = cli_fail(c, CLI_EXIT_USAGE, "--age-max must be above --age-min");
    if (rc == 0 && a.have_flux && a.have_mbol)
        rc = cli_fail(c, CLI_EXIT_USAGE, "give --flux or --mbol, not both");
    if (rc == 0 && (a.have_flux || a.have_mbol) && a.teff.n == 0)
        rc = cli_fail(c, CLI_EXIT_USAGE, "a distance (--flux, --mbol) needs --teff");
    if (rc == 0 && !(rc = cli_open_grid(c)) && !(rc = cli_resolve_z(c, &z)))
        rc = run_all(c, &a, z);
    dlist_free(&a.teff);
    dlist_free(&a.log_l);
    return rc;
}
