/* hrtrail fit: mass, age, phase and distance of observed stars from the HR diagram. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "fitcli.h"

enum {
    F_TEFF = FIT_OPT_BASE, F_TEFF_S, F_LOGL, F_LOGL_S, F_FEH, F_FEH_S, F_LOGG, F_LOGG_S, F_FLUX, F_FLUX_S, F_MBOL,
    F_MBOL_S, F_DIST, F_DIST_S, F_PLX, F_PLX_S, F_PRIOR, F_AGE_MAX, F_MASS_MIN, F_MASS_MAX, F_FEH_STEP, F_SEED
};

/* Option names and the CSV column (a name of the vocabulary, tracks/FORMAT.md) of each
 * measured quantity (value, sigma), in the order of the fields of hrt_fit_obs. */
static const struct { const char *opt, *col; } meas_names[8][2] = {
    {{"teff", "teff_k"}, {"teff-sigma", "teff_k_sigma"}},
    {{"log-l", "log_l_lsun"}, {"log-l-sigma", "log_l_lsun_sigma"}},
    {{"feh", "feh"}, {"feh-sigma", "feh_sigma"}},
    {{"logg", "log_g_cgs"}, {"logg-sigma", "log_g_cgs_sigma"}},
    {{"flux", "flux_w_m2"}, {"flux-sigma", "flux_w_m2_sigma"}},
    {{"mbol", "mbol"}, {"mbol-sigma", "mbol_sigma"}},
    {{"distance", "distance_pc"}, {"distance-sigma", "distance_pc_sigma"}},
    {{"parallax", "parallax_mas"}, {"parallax-sigma", "parallax_mas_sigma"}},
};

const optdef fit_optdefs[] = {
    {"teff", 0, 1, F_TEFF},         {"teff-sigma", 0, 1, F_TEFF_S},         {"log-l", 0, 1, F_LOGL},
    {"log-l-sigma", 0, 1, F_LOGL_S}, {"feh", 0, 1, F_FEH},                   {"feh-sigma", 0, 1, F_FEH_S},
    {"logg", 0, 1, F_LOGG},         {"logg-sigma", 0, 1, F_LOGG_S},         {"flux", 0, 1, F_FLUX},
    {"flux-sigma", 0, 1, F_FLUX_S}, {"mbol", 0, 1, F_MBOL},                 {"mbol-sigma", 0, 1, F_MBOL_S},
    {"distance", 0, 1, F_DIST},     {"distance-sigma", 0, 1, F_DIST_S},     {"parallax", 0, 1, F_PLX},
    {"parallax-sigma", 0, 1, F_PLX_S}, {"prior", 0, 1, F_PRIOR},            {"age-max", 0, 1, F_AGE_MAX},
    {"mass-min", 0, 1, F_MASS_MIN}, {"mass-max", 0, 1, F_MASS_MAX},         {"feh-step", 0, 1, F_FEH_STEP},
    {"seed", 0, 1, F_SEED},         {NULL, 0, 0, 0},
};

void fitopts_init(fitopts *f)
{
    memset(f, 0, sizeof *f);
    hrt_fit_obs_init(&f->obs);
    hrt_fit_model_options_default(&f->mo);
    f->seed = 1;
}

int fitopt_take(cli *c, fitopts *f, int id, const char *val)
{
    double v;
    if (id >= F_TEFF && id <= F_PLX_S) {
        int k = id - F_TEFF;
        if (parse_number(val, &v) != 0) {
            cli_fail(c, CLI_EXIT_USAGE, "--%s: '%s' is not a number", meas_names[k / 2][k % 2].opt, val);
            return -1;
        }
        ((double *)&f->obs)[k] = v;
        f->any_obs = 1;
        return 1;
    }
    switch (id) {
    case F_PRIOR: {
        int p = hrt_fit_mass_prior_from_name(val);
        if (p < 0) {
            cli_fail(c, CLI_EXIT_USAGE, "--prior: unknown mass prior '%s' (kroupa2001, chabrier2003, log-flat)", val);
            return -1;
        }
        f->mo.mass_prior = p;
        return 1;
    }
    case F_AGE_MAX:
        if (parse_age_yr(val, &v) != 0 || !(v > 0)) {
            cli_fail(c, CLI_EXIT_USAGE, "--age-max: '%s' is not an age > 0 (e.g. 13.8Gyr)", val);
            return -1;
        }
        f->mo.age_max_yr = v;
        return 1;
    case F_MASS_MIN:
    case F_MASS_MAX:
        if (parse_number(val, &v) != 0 || !(v > 0)) {
            cli_fail(c, CLI_EXIT_USAGE, "--%s: '%s' is not a mass > 0 (Msun)", id == F_MASS_MIN ? "mass-min" : "mass-max",
                     val);
            return -1;
        }
        if (id == F_MASS_MIN) f->mo.mass_min_msun = v;
        else f->mo.mass_max_msun = v;
        return 1;
    case F_FEH_STEP:
        if (parse_number(val, &v) != 0 || !(v >= 0.005)) {
            cli_fail(c, CLI_EXIT_USAGE, "--feh-step: '%s' is not a step >= 0.005 dex", val);
            return -1;
        }
        f->mo.feh_step_dex = v;
        return 1;
    case F_SEED: {
        long s;
        if (parse_count(val, 0, 2147483647L, &s) != 0) {
            cli_fail(c, CLI_EXIT_USAGE, "--seed: '%s' is not a whole number >= 0", val);
            return -1;
        }
        f->seed = s;
        return 1;
    }
    default:
        return 0;
    }
}

int fit_make_model(cli *c, fitopts *f, const fitstar *s, size_t n, hrt_fit_model **m)
{
    hrt_error err = {0, ""};
    double lo = INFINITY, hi = -INFINITY, zlo, zhi;
    int all_feh = n > 0;
    for (size_t i = 0; i < n; i++) {
        if (isnan(s[i].obs.feh) || !(s[i].obs.feh_sigma > 0)) {
            all_feh = 0;
            break;
        }
        lo = fmin(lo, s[i].obs.feh - 5.0 * s[i].obs.feh_sigma);
        hi = fmax(hi, s[i].obs.feh + 5.0 * s[i].obs.feh_sigma);
    }
    hrt_grid_z_range(c->grid, &zlo, &zhi);
    double flo = log10(zlo / hrt_grid_z_ref(c->grid)), fhi = log10(zhi / hrt_grid_z_ref(c->grid));
    hrt_fit_model_options o = f->mo;
    if (all_feh) {
        /* whole steps from the grid's lowest [Fe/H], so nodes do not depend on the stars */
        double st = o.feh_step_dex;
        o.feh_min = fmax(flo, flo + floor((lo - flo) / st) * st);
        o.feh_max = fmin(fhi, flo + ceil((hi - flo) / st) * st);
        if (o.feh_max <= o.feh_min) {
            if (o.feh_min >= fhi) o.feh_min = fmax(flo, fhi - st);
            else o.feh_max = fmin(fhi, o.feh_min + st);
        }
    }
    int rc = hrt_fit_model_new(c->grid, &o, m, &err);
    if (rc != HRT_OK)
        return cli_fail(c, rc == HRT_E_NOMEM ? CLI_EXIT_INTERNAL : rc == HRT_E_MASS_RANGE || rc == HRT_E_Z_RANGE ? CLI_EXIT_RANGE
                                                                                                        : CLI_EXIT_USAGE,
                        "%s", err.message);
    return 0;
}

int fit_failure(const cli *c, const char *who, int code, const char *msg)
{
    int ex = code == HRT_E_NO_MATCH ? CLI_EXIT_RANGE : code == HRT_E_NOMEM ? CLI_EXIT_INTERNAL : CLI_EXIT_USAGE;
    const char *m = strncmp(msg, "hrt_fit_star: ", 14) == 0 ? msg + 14 : msg;
    return cli_fail(c, ex, "%s: %s", who, m);
}

/* ------------------------------------------------------------------ input */

static const char *const fit_known[] = {
    "name", "teff_k", "teff_k_sigma", "log_l_lsun", "log_l_lsun_sigma", "feh", "feh_sigma", "log_g_cgs",
    "log_g_cgs_sigma", "flux_w_m2", "flux_w_m2_sigma", "mbol", "mbol_sigma", "distance_pc", "distance_pc_sigma",
    "parallax_mas", "parallax_mas_sigma", NULL};
/* the spellings of version 0.1 */
static const char *const fit_old[] = {
    "teff", "teff_k", "teff_sigma", "teff_k_sigma", "log_l", "log_l_lsun", "log_l_sigma", "log_l_lsun_sigma",
    "logg", "log_g_cgs", "logg_sigma", "log_g_cgs_sigma", "flux", "flux_w_m2", "flux_sigma", "flux_w_m2_sigma",
    "distance", "distance_pc", "distance_sigma", "distance_pc_sigma", "parallax", "parallax_mas", "parallax_sigma",
    "parallax_mas_sigma", "star", "name", "id", "name", NULL};
#define FIT_COLUMNS                                                                                                   \
    "name, teff_k, teff_k_sigma, log_l_lsun, log_l_lsun_sigma, feh, feh_sigma, log_g_cgs, log_g_cgs_sigma, "      \
    "flux_w_m2, flux_w_m2_sigma, mbol, mbol_sigma, distance_pc, distance_pc_sigma, parallax_mas, "                 \
    "parallax_mas_sigma"

static int stars_from_csv(cli *c, const char *path, const fitopts *f, fitstar **out, size_t *nout)
{
    static const csvnames names = {fit_known, fit_old, FIT_COLUMNS, CLI_EXIT_USAGE};
    csvfile cf;
    const char *shown = csv_shown(path);
    long col[16];
    int rc = csv_read_named(c, path, &names, &cf);
    if (rc) return rc;
    for (int k = 0; k < 16; k++) col[k] = csv_column(&cf, meas_names[k / 2][k % 2].col);
    long cn = csv_column(&cf, "name");
    if (col[0] < 0 && isnan(f->obs.teff_k)) {
        csv_free(&cf);
        return cli_fail(c, CLI_EXIT_USAGE, "%s has no column teff_k (K) and no --teff is given (the columns are " FIT_COLUMNS
                        ")", shown);
    }
    fitstar *s = xcalloc(cf.nrow ? cf.nrow : 1, sizeof *s);
    for (size_t r = 0; r < cf.nrow && rc == 0; r++) {
        s[r].line = cf.line[r];
        s[r].name = xstrdup(cn >= 0 ? cf.rows[r][cn] : "");
        s[r].obs = f->obs; /* options fill what the file lacks */
        for (int k = 0; k < 16; k++) {
            if (col[k] < 0) continue;
            const char *t = cf.rows[r][col[k]];
            double v = NAN;
            if (t[0] && strcmp(t, "nan") != 0 && strcmp(t, "NaN") != 0 && parse_number(t, &v) != 0) {
                rc = cli_fail(c, CLI_EXIT_USAGE, "%s line %ld, column '%s': '%s' is not a number", shown, cf.line[r],
                              cf.head[col[k]], t);
                break;
            }
            ((double *)&s[r].obs)[k] = v;
        }
    }
    size_t n = cf.nrow;
    csv_free(&cf);
    if (rc) {
        for (size_t i = 0; i < n; i++) free(s[i].name);
        free(s);
        return rc;
    }
    *out = s;
    *nout = n;
    return 0;
}

/* ------------------------------------------------------------------ output */

/* An interval as three columns (tracks/FORMAT.md): NAME the median, NAME_lo and NAME_hi the
 * 15.87th and 84.13th percentiles.  FIT_IV_SHOWN prints all three in the text table, FIT_IV the
 * median only (head NULL: not in the text table at all). */
#define FIT_IV_SHOWN(name, head, fmt, scale)                                                                   \
    {name, head, COL_NUM, fmt, scale}, {name "_lo", "-", COL_NUM, fmt, scale}, {name "_hi", "+", COL_NUM, fmt, scale}
#define FIT_IV(name, head, fmt)                                                                                \
    {name, head, COL_NUM, fmt, 0}, {name "_lo", NULL, COL_NUM, NULL, 0}, {name "_hi", NULL, COL_NUM, NULL, 0}

static const col fit_cols[] = {
    {"name", "star", COL_TEXT, NULL, 0},
    {"status", "status", COL_TEXT, NULL, 0},
    FIT_IV_SHOWN("initial_mass_msun", "M_init", "%.3f", 0),
    FIT_IV_SHOWN("age_yr", "age [Gyr]", "%.3f", 1e-9),
    FIT_IV("feh", "[Fe/H]", "%.2f"),
    FIT_IV("mass_msun", "M now", "%.3f"),
    FIT_IV("r_rsun", "R [Rsun]", "%.3f"),
    FIT_IV("log_l_lsun", "log L", "%.3f"),
    FIT_IV("teff_k", NULL, NULL),
    FIT_IV("log_g_cgs", "log g", "%.2f"),
    FIT_IV("distance_pc", "d [pc]", "%.4g"),
    {"phase", "phase", COL_TEXT, NULL, 0},
    {"phase_prob", "P", COL_NUM, "%.2f", 0},
    {"phase_second", "or", COL_TEXT, NULL, 0},
    {"phase_second_prob", "P2", COL_NUM, "%.2f", 0},
    {"flags", "notes", COL_TEXT, NULL, 0},
    {"chi2_min", NULL, COL_NUM, NULL, 0},
};
#define N_FIT_COLS (sizeof fit_cols / sizeof fit_cols[0])

static void flags_of(int fl, char *buf, size_t n)
{
    static const struct { int bit; const char *txt; } names[] = {
        {HRT_FIT_MULTIMODAL, "multimodal"}, {HRT_FIT_MASS_EDGE, "mass-edge"}, {HRT_FIT_AGE_LIMIT, "age-limit"},
        {HRT_FIT_FEH_EDGE, "feh-edge"},    {HRT_FIT_POOR_MATCH, "poor-match"}, {HRT_FIT_FEW_POINTS, "few-points"},
    };
    buf[0] = '\0';
    for (size_t k = 0; k < sizeof names / sizeof names[0]; k++)
        if (fl & names[k].bit) {
            size_t l = strlen(buf);
            snprintf(buf + l, n - l, "%s%s", l ? " " : "", names[k].txt);
        }
}

static void add_row(table *t, const char *name, const char *status, const hrt_fit_result *r)
{
    size_t row = table_add_row(t), k = 0;
    char fl[128];
    table_text(t, row, k++, name);
    table_text(t, row, k++, status);
    int ok = r->status == HRT_OK;
    const hrt_fit_interval *iv[] = {&r->initial_mass_msun, &r->age_yr, &r->feh,    &r->mass_msun, &r->r_rsun,
                                    &r->log_l_lsun,        &r->teff_k, &r->log_g_cgs, &r->distance_pc};
    for (size_t q = 0; q < sizeof iv / sizeof iv[0]; q++) {
        table_num(t, row, k++, ok ? iv[q]->median : NAN);
        table_num(t, row, k++, ok ? iv[q]->lo : NAN);
        table_num(t, row, k++, ok ? iv[q]->hi : NAN);
    }
    table_text(t, row, k++, ok ? hrt_phase_key(r->phase) : "");
    table_num(t, row, k++, ok ? r->phase_prob[r->phase] : NAN);
    table_text(t, row, k++, ok && r->phase_second ? hrt_phase_key(r->phase_second) : "");
    table_num(t, row, k++, ok && r->phase_second ? r->phase_prob[r->phase_second] : NAN);
    flags_of(r->flags, fl, sizeof fl);
    table_text(t, row, k++, fl);
    table_num(t, row, k++, ok ? r->chi2_min : NAN);
}

static void print_one(const cli *c, const hrt_fit_result *r, const hrt_fit_obs *o)
{
    (void)c;
    char fl[128];
    printf("Fit of one star\n");
    printf("  %-24s %12s %12s %12s\n", "quantity", "median", "16%", "84%");
#define ROW(label, iv, sc, fmt)                                                                              \
    printf("  %-24s " fmt " " fmt " " fmt "\n", label, (iv).median * (sc), (iv).lo * (sc), (iv).hi * (sc))
    ROW("initial mass [Msun]", r->initial_mass_msun, 1.0, "%12.4f");
    ROW("age [Gyr]", r->age_yr, 1e-9, "%12.4f");
    ROW("[Fe/H]", r->feh, 1.0, "%12.3f");
    ROW("current mass [Msun]", r->mass_msun, 1.0, "%12.4f");
    ROW("radius [Rsun]", r->r_rsun, 1.0, "%12.4f");
    ROW("log L [Lsun]", r->log_l_lsun, 1.0, "%12.4f");
    ROW("Teff [K]", r->teff_k, 1.0, "%12.1f");
    ROW("log g [cgs]", r->log_g_cgs, 1.0, "%12.3f");
    if (!isnan(r->distance_pc.median)) ROW("HR-diagram distance [pc]", r->distance_pc, 1.0, "%12.4g");
#undef ROW
    printf("Phase: %s (probability %.3f)", hrt_phase_name(r->phase), r->phase_prob[r->phase]);
    if (r->phase_second) printf(", else %s (%.3f)", hrt_phase_name(r->phase_second), r->phase_prob[r->phase_second]);
    printf("\n");
    if (r->flags & HRT_FIT_MULTIMODAL)
        for (int s = 0; s < 2; s++)
            printf("  if %-30s mass %.3f [%.3f, %.3f] Msun, age %.4g [%.4g, %.4g] Gyr\n",
                   hrt_phase_name(s ? r->phase_second : r->phase), r->phase_mass_msun[s].median, r->phase_mass_msun[s].lo,
                   r->phase_mass_msun[s].hi, r->phase_age_yr[s].median / 1e9, r->phase_age_yr[s].lo / 1e9,
                   r->phase_age_yr[s].hi / 1e9);
    flags_of(r->flags, fl, sizeof fl);
    printf("Best chi^2 %.2f for %d measured quantities; %.0f effective lattice points%s%s\n", r->chi2_min, r->n_obs,
           r->n_eff, fl[0] ? "; notes: " : "", fl);
    (void)o;
    printf("Intervals are statistical only; the default grid is a semi-analytic model (see hrtrail --help).\n");
}

enum { O_INPUT = 1, O_KEEP };
static const optdef fit_opts[] = {{"input", 'i', 1, O_INPUT}, {"keep-going", 'k', 0, O_KEEP}, {NULL, 0, 0, 0}};

typedef struct fit_args {
    fitopts f;
    int keep;
} fit_args;

static int fit_take(cli *c, void *ctx, int id, const char *val)
{
    fit_args *a = ctx;
    if (id == O_INPUT) a->f.input = val;
    else if (id == O_KEEP) a->keep = 1;
    else if (fitopt_take(c, &a->f, id, val) < 0) return CLI_EXIT_USAGE;
    return 0;
}

static const cmdopts fit_cmdopts = {fit_opts, fit_optdefs, ACCEPT_FORMAT, fit_take, "see hrtrail fit --help", 0};

/* Every star fitted, one row each; the first star's result in *one. */
static int fit_stars(cli *c, const fit_args *a, const hrt_fit_model *m, const fitstar *stars, size_t n, table *t,
                     hrt_fit_result *one)
{
    int rc = 0;
    for (size_t i = 0; i < n; i++) {
        hrt_fit_result r;
        hrt_error err = {0, ""};
        int st = hrt_fit_star(m, &stars[i].obs, (uint64_t)a->f.seed, 0, NULL, &r, &err);
        if (st != HRT_OK) {
            char who[300];
            if (a->f.input)
                snprintf(who, sizeof who, "%s line %ld%s%s", csv_shown(a->f.input),
                         stars[i].line, stars[i].name[0] ? ", star " : "", stars[i].name);
            else
                snprintf(who, sizeof who, "the star");
            int r1 = fit_failure(c, who, st, err.message);
            if (!a->keep) return r1;
            if (!rc) rc = r1;
        }
        if (i == 0) *one = r;
        add_row(t, stars[i].name, st == HRT_OK ? "ok" : hrt_strerror(st), &r);
    }
    return rc;
}

/* The text: one star in full, or the table of all. */
static void fit_text(const cli *c, const fit_args *a, const table *t, const hrt_fit_result *one, const fitstar *first)
{
    if (!a->f.input && one->status == HRT_OK) {
        print_one(c, one, &first->obs);
        printf("Mass prior %s, age uniform in [0, %.4g Gyr], [Fe/H] uniform on the lattice.\n",
               hrt_fit_mass_prior_name(a->f.mo.mass_prior), a->f.mo.age_max_yr / 1e9);
        return;
    }
    table_write_text(t, stdout, NULL);
    printf("Medians with 16%% (-) and 84%% (+) points; mass prior %s, age uniform in [0, %.4g Gyr].\n",
           hrt_fit_mass_prior_name(a->f.mo.mass_prior), a->f.mo.age_max_yr / 1e9);
}

static int fit_run(cli *c, fit_args *a)
{
    fitstar *stars = NULL;
    size_t n = 0;
    hrt_fit_model *m = NULL;
    int rc;
    if (!a->f.input && isnan(a->f.obs.teff_k))
        return cli_fail(c, CLI_EXIT_USAGE, "give --teff and --teff-sigma (and --log-l, --feh, --logg, ...), or --input FILE");
    if ((rc = cli_open_grid(c))) return rc;
    if (a->f.input) {
        rc = stars_from_csv(c, a->f.input, &a->f, &stars, &n);
    } else {
        n = 1;
        stars = xcalloc(1, sizeof *stars);
        stars[0].name = xstrdup("");
        stars[0].obs = a->f.obs;
    }
    if (rc == 0 && (rc = fit_make_model(c, &a->f, stars, n, &m)) == 0) {
        table *t = table_new(fit_cols, N_FIT_COLS);
        hrt_fit_result one;
        memset(&one, 0, sizeof one);
        one.status = -1;
        rc = fit_stars(c, a, m, stars, n, t, &one);
        if ((rc == 0 || a->keep) && !out_records(c, t)) fit_text(c, a, t, &one, &stars[0]);
        table_free(t);
    }
    hrt_fit_model_free(m);
    for (size_t i = 0; i < n; i++) free(stars[i].name);
    free(stars);
    return rc;
}

int cmd_fit(cli *c, argparse *p)
{
    fit_args a;
    memset(&a, 0, sizeof a);
    fitopts_init(&a.f);
    int rc = cli_parse(c, p, &fit_cmdopts, &a);
    return rc ? rc : fit_run(c, &a);
}
