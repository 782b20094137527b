/* hrtrail forecast: the future of a star, given exactly or fitted from its measurements. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "fitcli.h"

/* An interval as NAME, NAME_lo and NAME_hi (tracks/FORMAT.md). */
static void iv_json(jw *w, const char *key, hrt_fit_interval x)
{
    char k[64];
    jw_num(w, key, x.median);
    snprintf(k, sizeof k, "%s_lo", key);
    jw_num(w, k, x.lo);
    snprintf(k, sizeof k, "%s_hi", key);
    jw_num(w, k, x.hi);
}

static void iv_text(const char *label, hrt_fit_interval x, double sc)
{
    if (x.lo == x.hi)
        printf("  %-34s %.4g\n", label, x.median * sc);
    else
        printf("  %-34s %.4g  [%.4g, %.4g]\n", label, x.median * sc, x.lo * sc, x.hi * sc);
}

static const col ev_cols[] = {
    {"keypoint", "keypoint", COL_TEXT, NULL, 0}, {"prob", "P", COL_NUM, "%.2f", 0},
    {"in_yr", "in [Myr]", COL_NUM, "%.5g", 1e-6},  {"in_yr_lo", "16%", COL_NUM, "%.5g", 1e-6},
    {"in_yr_hi", "84%", COL_NUM, "%.5g", 1e-6},
};
static const col ph_cols[] = {
    {"phase", "phase", COL_TEXT, NULL, 0},         {"prob", "P", COL_NUM, "%.2f", 0},
    {"start_in_yr", "starts in [Myr]", COL_NUM, "%.5g", 1e-6}, {"start_in_yr_lo", "16%", COL_NUM, "%.5g", 1e-6},
    {"start_in_yr_hi", "84%", COL_NUM, "%.5g", 1e-6}, {"duration_yr", "lasts [Myr]", COL_NUM, "%.5g", 1e-6},
};
static const col st_cols[] = {
    {"dt_yr", "in [Myr]", COL_NUM, "%.6g", 1e-6},   {"phase", "phase", COL_TEXT, NULL, 0},
    {"phase_prob", "P", COL_NUM, "%.2f", 0},       {"log_l_lsun", "log L", COL_NUM, "%.3f", 0},
    {"log_l_lsun_lo", "16%", COL_NUM, "%.3f", 0},  {"log_l_lsun_hi", "84%", COL_NUM, "%.3f", 0},
    {"teff_k", "Teff [K]", COL_NUM, "%.0f", 0},    {"teff_k_lo", NULL, COL_NUM, NULL, 0},
    {"teff_k_hi", NULL, COL_NUM, NULL, 0},         {"r_rsun", "R [Rsun]", COL_NUM, "%.4g", 0},
    {"r_rsun_lo", NULL, COL_NUM, NULL, 0},         {"r_rsun_hi", NULL, COL_NUM, NULL, 0},
    {"mass_msun", "M now", COL_NUM, "%.4f", 0},    {"mass_msun_lo", NULL, COL_NUM, NULL, 0},
    {"mass_msun_hi", NULL, COL_NUM, NULL, 0},      {"luminous_frac", NULL, COL_NUM, NULL, 0},
};

enum { O_MASS = 1, O_AGE, O_Z, O_AT, O_SAMPLES };
static const optdef forecast_opts[] = {{"mass", 'm', 1, O_MASS}, {"age", 'a', 1, O_AGE},         {"z", 0, 1, O_Z},
                                       {"at", 0, 1, O_AT},       {"samples", 'n', 1, O_SAMPLES}, {NULL, 0, 0, 0}};

typedef struct forecast_args {
    fitopts f;
    dlist at;
    double mass, age, z;
    long nsamp;
} forecast_args;

static int forecast_take(cli *c, void *ctx, int id, const char *val)
{
    forecast_args *a = ctx;
    switch (id) {
    case O_MASS:
        if (parse_number(val, &a->mass) != 0 || !(a->mass > 0))
            return cli_fail(c, CLI_EXIT_USAGE, "--mass: '%s' is not an initial mass > 0 (Msun)", val);
        return 0;
    case O_AGE:
        if (parse_age_yr(val, &a->age) != 0)
            return cli_fail(c, CLI_EXIT_USAGE, "--age: '%s' is not an age >= 0 (yr, kyr, Myr, Gyr)", val);
        return 0;
    case O_Z:
        if (parse_number(val, &a->z) != 0 || !(a->z > 0 && a->z < 1))
            return cli_fail(c, CLI_EXIT_USAGE, "--z: '%s' is not a metal mass fraction (0 < Z < 1)", val);
        return 0;
    case O_AT: return add_age_list(c, "--at", val, &a->at);
    case O_SAMPLES:
        if (parse_count(val, 1, 100000, &a->nsamp) != 0)
            return cli_fail(c, CLI_EXIT_USAGE, "--samples: '%s' is not a count between 1 and 100000", val);
        return 0;
    default: return fitopt_take(c, &a->f, id, val) < 0 ? CLI_EXIT_USAGE : 0;
    }
}

static const cmdopts forecast_cmdopts = {forecast_opts, fit_optdefs, ACCEPT_FORMAT, forecast_take,
                                         "see hrtrail forecast --help", 0};

/* The star: one exact sample (--mass, --age), or posterior draws of the star of the measurements. */
static int forecast_samples(cli *c, forecast_args *a, hrt_fit_model **m, hrt_fit_sample **smp, size_t *n)
{
    int rc;
    if (!isnan(a->mass)) {
        if (!isnan(a->z) && !isnan(a->f.obs.feh)) return cli_fail(c, CLI_EXIT_USAGE, "give --z or --feh, not both");
        if (isnan(a->z))
            a->z = hrt_grid_z_ref(c->grid) * (isnan(a->f.obs.feh) ? 1.0 : pow(10.0, a->f.obs.feh));
        if ((rc = cli_check_z(c, "the star's metallicity", a->z)) || (rc = cli_check_mass(c, "--mass", a->mass, a->z)))
            return rc;
        *n = 1;
        *smp = xcalloc(1, sizeof **smp);
        (*smp)[0].initial_mass_msun = a->mass;
        (*smp)[0].z = a->z;
        (*smp)[0].age_yr = a->age;
        return 0;
    }
    fitstar one = {NULL, 0, a->f.obs};
    if ((rc = fit_make_model(c, &a->f, &one, 1, m))) return rc;
    *n = (size_t)a->nsamp;
    *smp = xcalloc(*n, sizeof **smp);
    hrt_fit_result r;
    hrt_error err = {0, ""};
    int st = hrt_fit_star(*m, &a->f.obs, (uint64_t)a->f.seed, *n, *smp, &r, &err);
    return st != HRT_OK ? fit_failure(c, "the star", st, err.message) : 0;
}

/* The three tables of a forecast: keypoints ahead, phases ahead, states at the --at times. */
typedef struct forecast_tables {
    table *te, *tp, *ts;
} forecast_tables;

static table *phases_ahead(const hrt_forecast_result *r)
{
    table *tp = table_new(ph_cols, sizeof ph_cols / sizeof ph_cols[0]);
    /* phases to come in the order of their median start (ties: the order of HRT_PHASE_LIST) */
    int order[HRT_PHASE_N], no = 0;
    for (size_t i = 1; i < HRT_PHASE_N; i++) {
        int ph = hrt_phase_code(i);
        if (r->future[ph].prob > 0) order[no++] = ph;
    }
    for (int a = 1; a < no; a++)
        for (int b = a; b > 0 && r->future[order[b]].start_in_yr.median < r->future[order[b - 1]].start_in_yr.median; b--) {
            int tmp = order[b];
            order[b] = order[b - 1];
            order[b - 1] = tmp;
        }
    for (int k = 0; k < no; k++) {
        const hrt_forecast_phase *F = &r->future[order[k]];
        size_t row = table_add_row(tp);
        table_text(tp, row, 0, hrt_phase_key(order[k]));
        table_num(tp, row, 1, F->prob);
        table_num(tp, row, 2, F->start_in_yr.median);
        table_num(tp, row, 3, F->start_in_yr.lo);
        table_num(tp, row, 4, F->start_in_yr.hi);
        table_num(tp, row, 5, F->duration_yr.median);
    }
    return tp;
}

static void forecast_tables_make(forecast_tables *T, const hrt_forecast_result *r, const hrt_forecast_state *fs, size_t nat)
{
    T->te = table_new(ev_cols, sizeof ev_cols / sizeof ev_cols[0]);
    for (size_t k = 0; k < r->n_events; k++) {
        size_t row = table_add_row(T->te);
        table_text(T->te, row, 0, r->events[k].name);
        table_num(T->te, row, 1, r->events[k].prob);
        table_num(T->te, row, 2, r->events[k].in_yr.median);
        table_num(T->te, row, 3, r->events[k].in_yr.lo);
        table_num(T->te, row, 4, r->events[k].in_yr.hi);
    }
    T->tp = phases_ahead(r);
    T->ts = table_new(st_cols, sizeof st_cols / sizeof st_cols[0]);
    for (size_t k = 0; k < nat; k++) {
        const hrt_forecast_state *S = &fs[k];
        size_t row = table_add_row(T->ts);
        double v[] = {S->dt_yr, 0, S->phase_prob[S->phase], S->log_l_lsun.median, S->log_l_lsun.lo, S->log_l_lsun.hi,
                      S->teff_k.median, S->teff_k.lo, S->teff_k.hi, S->r_rsun.median, S->r_rsun.lo, S->r_rsun.hi,
                      S->mass_msun.median, S->mass_msun.lo, S->mass_msun.hi, S->luminous_frac};
        for (size_t q = 0; q < sizeof v / sizeof v[0]; q++)
            if (q != 1) table_num(T->ts, row, q, v[q]);
        table_text(T->ts, row, 1, hrt_phase_key(S->phase));
    }
}

static void forecast_json(const cli *c, const hrt_forecast_result *r, const forecast_tables *T, size_t n)
{
    jw w;
    jw_init(&w, stdout);
    jw_begin_object(&w, NULL);
    jw_str(&w, "grid", c->grid_used);
    jw_int(&w, "n_samples", (long)n);
    jw_str(&w, "phase_now", hrt_phase_key(r->phase_now));
    jw_num(&w, "phase_now_prob", r->phase_now_prob[r->phase_now]);
    jw_num(&w, "ms_prob", r->ms_prob);
    iv_json(&w, "ms_left_yr", r->ms_left_yr);
    iv_json(&w, "end_in_yr", r->end_in_yr);
    jw_str(&w, "remnant", hrt_remnant_key(r->remnant));
    jw_num(&w, "remnant_prob", r->remnant_prob[r->remnant]);
    iv_json(&w, "remnant_mass_msun", r->remnant_mass_msun);
    jw_table(&w, "keypoints", T->te);
    jw_table(&w, "phases", T->tp);
    jw_table(&w, "states", T->ts);
    jw_end_object(&w);
    jw_finish(&w);
}

static void forecast_text(const forecast_args *a, const hrt_forecast_result *r, const forecast_tables *T, size_t n)
{
    if (!isnan(a->mass))
        printf("Forecast of a star of %.4g Msun, Z %.4g, at %.4g Myr\n", a->mass, a->z, a->age / 1e6);
    else
        printf("Forecast from %zu posterior draws of the fitted star (seed %ld)\n", n, a->f.seed);
    printf("Now: %s (probability %.2f)\n", hrt_phase_name(r->phase_now), r->phase_now_prob[r->phase_now]);
    if (r->ms_prob > 0) {
        printf("  main sequence: probability %.2f\n", r->ms_prob);
        iv_text("main-sequence time left [Myr]", r->ms_left_yr, 1e-6);
    }
    iv_text("time to the end of the track [Myr]", r->end_in_yr, 1e-6);
    printf("Final remnant: %s (probability %.2f)\n", hrt_remnant_name(r->remnant), r->remnant_prob[r->remnant]);
    iv_text("remnant mass [Msun]", r->remnant_mass_msun, 1.0);
    printf("\nKeypoints ahead:\n");
    table_write_text(T->te, stdout, "  ");
    printf("\nPhases ahead:\n");
    table_write_text(T->tp, stdout, "  ");
    if (a->at.n) {
        printf("\nAt the times asked:\n");
        table_write_text(T->ts, stdout, "  ");
    }
}

static int forecast_run(cli *c, forecast_args *a)
{
    hrt_fit_model *m = NULL;
    hrt_fit_sample *smp = NULL;
    hrt_forecast_state *fs = NULL;
    hrt_forecast_result r;
    hrt_error err = {0, ""};
    size_t n = 0;
    int rc, exact = !isnan(a->mass);
    if (exact && (isnan(a->age) || !isnan(a->f.obs.teff_k)))
        return cli_fail(c, CLI_EXIT_USAGE, "give either --mass and --age (an exact star) or measurements (--teff ...), not both");
    if (!exact && isnan(a->f.obs.teff_k))
        return cli_fail(c, CLI_EXIT_USAGE, "give --mass and --age, or the measurements of a star (--teff, --teff-sigma, ...)");
    if ((rc = cli_open_grid(c)) == 0 && (rc = forecast_samples(c, a, &m, &smp, &n)) == 0) {
        fs = xcalloc(a->at.n ? a->at.n : 1, sizeof *fs);
        int st = hrt_forecast(c->grid, n, smp, a->at.n, a->at.v, fs, &r, &err);
        if (st != HRT_OK) rc = cli_fail(c, cli_exit_of_status(st), "%s", err.message);
    }
    if (rc == 0) {
        forecast_tables T;
        forecast_tables_make(&T, &r, fs, a->at.n);
        if (c->fmt == FMT_JSON)
            forecast_json(c, &r, &T, n);
        else if (c->fmt == FMT_CSV)
            table_write_csv(a->at.n ? T.ts : T.te, stdout); /* CSV carries one table: the states if times were asked */
        else
            forecast_text(a, &r, &T, n);
        table_free(T.te);
        table_free(T.tp);
        table_free(T.ts);
    }
    hrt_fit_model_free(m);
    free(smp);
    free(fs);
    return rc;
}

int cmd_forecast(cli *c, argparse *p)
{
    forecast_args a;
    memset(&a, 0, sizeof a);
    fitopts_init(&a.f);
    a.mass = a.age = a.z = NAN;
    a.nsamp = 400;
    int rc = cli_parse(c, p, &forecast_cmdopts, &a);
    if (rc == 0) rc = forecast_run(c, &a);
    dlist_free(&a.at);
    return rc;
}
