/*
 * hrtrail demo: the main job on the default grid, in an invented scenario.
 *
 * The Marrowind cluster is invented: an open cluster of age 1.2 Gyr and
 * Z = 0.014.  Two of its members are main-sequence dwarfs of fixed masses;
 * the others are placed by the model itself so that every stage of a
 * cluster of this age is shown: one just below the turnoff, giants taken
 * from the cluster isochrone (red giant branch, core helium burning,
 * asymptotic giant branch), and a white dwarf, the lightest star that has
 * already become one.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "cli.h"
#include "pop.h"

#define CLUSTER_NAME "Marrowind"
#define CLUSTER_AGE_YR 1.2e9
#define CLUSTER_Z 0.014
#define DEFAULT_SVG "marrowind-hr.svg"
/* The synthetic cluster: stars drawn from the Kroupa (2001) IMF, one burst. */
#define SYNTH_STARS 40000
#define SYNTH_SEED 1202

enum { O_OUT = 1 };
static const optdef demo_opts[] = {{"output", 'o', 1, O_OUT}, {NULL, 0, 0, 0}};

typedef struct member {
    char name[32];
    const char *why;
    double mass;
    hrt_state now;
    life L;
} member;

static int phase_at(const cli *c, double m, double z, double age, hrt_state *st)
{
    int r = hrt_eval(c->grid, 1, &m, NULL, z, &age, st, NULL);
    return r == HRT_OK ? st->phase : -1;
}

/* Largest initial mass still burning hydrogen in its core at age (bisection on the phase). */
static int turnoff_mass(const cli *c, double z, double age, double *m_to)
{
    double lo, hi;
    hrt_state st;
    if (hrt_grid_mass_range(c->grid, z, &lo, &hi) != HRT_OK) return -1;
    int plo = phase_at(c, lo, z, age, &st), phi = phase_at(c, hi, z, age, &st);
    if ((plo != HRT_PHASE_MS && plo != HRT_PHASE_PRE_MS) || phi == HRT_PHASE_MS) return -1;
    for (int i = 0; i < 200 && hi / lo - 1 > 1e-13; i++) {
        double mid = sqrt(lo * hi);
        int ph = phase_at(c, mid, z, age, &st);
        if (ph == HRT_PHASE_MS || ph == HRT_PHASE_PRE_MS)
            lo = mid;
        else
            hi = mid;
    }
    *m_to = lo;
    return 0;
}

/* Mass of the middle isochrone point in one of the phases (or NaN). */
static double isochrone_pick(const hrt_state *pts, size_t n, const int *phases, size_t nph)
{
    size_t cnt = 0, k, seen = 0;
    for (k = 0; k < n; k++)
        for (size_t q = 0; q < nph; q++)
            if (pts[k].phase == phases[q]) cnt++;
    if (!cnt) return NAN;
    for (k = 0; k < n; k++)
        for (size_t q = 0; q < nph; q++)
            if (pts[k].phase == phases[q] && seen++ == cnt / 2) return pts[k].initial_mass_msun;
    return NAN;
}

static const col fate_cols[] = {
    {"name", "star", COL_TEXT, NULL, 0},
    {"initial_mass_msun", "M_init [Msun]", COL_NUM, "%.4g", 0},
    {"remnant", NULL, COL_TEXT, NULL, 0},
    {NULL, "fate", COL_TEXT, NULL, 0}, /* the remnant's name, for people */
    {"remnant_mass_msun", "remnant [Msun]", COL_NUM, "%.3g", 0},
    {"end_age_yr", "from age [Myr]", COL_NUM, "%.6g", 1e-6},
    {"end_in_yr", "from now [Myr]", COL_NUM, "%+.6g", 1e-6},
};

/*
 * The members' timetables side by side: one row per member, the time spent in
 * each phase that any member passes through (the star's pre-main-sequence
 * contraction and its remnant stage excluded), and the age at which it
 * becomes its remnant.
 */
static table *timetable_wide(const member *mem, size_t nm, col **cols_out, char ***heads_out)
{
    int used[HRT_PHASE_SLOTS] = {0};
    size_t nc = 0, np = 0;
    for (size_t i = 0; i < nm; i++)
        for (size_t k = 0; k < mem[i].L.ph->nrow; k++) {
            int ph = hrt_phase_from_key(mem[i].L.ph->text[k * mem[i].L.ph->ncol]);
            if (ph > HRT_PHASE_PRE_MS && ph < HRT_PHASE_SLOTS && isfinite(mem[i].L.ph->num[k * mem[i].L.ph->ncol + 3])) used[ph] = 1;
        }
    for (int ph = 0; ph < HRT_PHASE_SLOTS; ph++) np += (size_t)used[ph];
    col *cols = xcalloc(np + 2, sizeof *cols);
    char **heads = xcalloc(np + 2, sizeof *heads);
    cols[nc++] = (col){"name", "star", COL_TEXT, NULL, 0};
    for (size_t i = 0; i < HRT_PHASE_N; i++) { /* in the order of HRT_PHASE_LIST */
        int ph = hrt_phase_code(i);
        if (!used[ph]) continue;
        heads[nc] = xmalloc(48);
        snprintf(heads[nc], 48, "%s [Myr]", hrt_phase_key(ph));
        cols[nc] = (col){hrt_phase_key(ph), heads[nc], COL_NUM, "%.4g", 1e-6};
        nc++;
    }
    cols[nc++] = (col){"remnant_from_age_yr", "remnant from [Myr]", COL_NUM, "%.6g", 1e-6};
    table *t = table_new(cols, nc);
    for (size_t i = 0; i < nm; i++) {
        size_t r = table_add_row(t);
        table_text(t, r, 0, mem[i].name);
        for (size_t k = 0; k < mem[i].L.ph->nrow; k++) {
            const table *ph = mem[i].L.ph;
            int p = hrt_phase_from_key(ph->text[k * ph->ncol]);
            for (size_t c = 1; c + 1 < nc; c++)
                if (!strcmp(cols[c].key, hrt_phase_key(p)) && isfinite(ph->num[k * ph->ncol + 3])) {
                    double d = ph->num[k * ph->ncol + 4];
                    double prev = t->num[r * nc + c];
                    table_num(t, r, c, isnan(prev) ? d : prev + d);
                }
        }
        table_num(t, r, nc - 1, mem[i].L.end_age);
    }
    *cols_out = cols;
    *heads_out = heads;
    return t;
}

/* Everything the demo computes, and what it frees. */
typedef struct demo {
    const char *out;     /* -o FILE */
    char *density_out;   /* the synthetic cluster's SVG beside it, or NULL */
    double z, age, m_to, lo, hi;
    char agebuf[64];
    member mem[8];
    size_t nm;
    hrt_state *pts;      /* the cluster isochrone */
    size_t npts;
    table *t, *fates;
    hrt_pop_spec spec;   /* the synthetic cluster */
    hrt_pop_summary synth;
} demo;

static int demo_take(cli *c, void *ctx, int id, const char *val)
{
    (void)c;
    if (id == O_OUT) ((demo *)ctx)->out = val;
    return 0;
}

static const cmdopts demo_cmdopts = {demo_opts, NULL, ACCEPT_FORMAT, demo_take, "the plot file is given with -o FILE", 0};

/* The members: dwarfs of fixed mass, one just below the turnoff, giants from the isochrone, a white dwarf. */
static void demo_pick_members(const cli *c, demo *d)
{
    static const double dwarfs[] = {0.85, 1.3};
    static const int rgb[] = {HRT_PHASE_RGB}, cheb[] = {HRT_PHASE_CHEB}, agb[] = {HRT_PHASE_EAGB, HRT_PHASE_TPAGB};
    const struct { const int *ph; size_t n; const char *why; } giants[] = {
        {rgb, 1, "red giant"}, {cheb, 1, "core helium burning giant"}, {agb, 2, "asymptotic giant branch star"}};
    member *mem = d->mem;
    for (size_t i = 0; i < 2; i++)
        if (dwarfs[i] >= d->lo && dwarfs[i] < 0.95 * d->m_to) {
            mem[d->nm].mass = dwarfs[i];
            mem[d->nm++].why = "main-sequence dwarf";
        }
    mem[d->nm].mass = 0.98 * d->m_to;
    mem[d->nm++].why = "just below the turnoff";
    for (size_t g = 0; g < 3; g++) {
        double m = isochrone_pick(d->pts, d->npts, giants[g].ph, giants[g].n);
        if (isfinite(m)) {
            mem[d->nm].mass = m;
            mem[d->nm++].why = giants[g].why;
        }
    }
    for (double m = 1.1 * d->m_to; m <= d->hi; m *= 1.02) {
        hrt_state s;
        if (phase_at(c, m, d->z, d->age, &s) == HRT_PHASE_WD) {
            mem[d->nm].mass = m;
            mem[d->nm++].why = "white dwarf";
            break;
        }
    }
}

/* The cluster: its turnoff, its isochrone, its members now and their lives. */
static int demo_members(cli *c, demo *d)
{
    int rc;
    if ((rc = cli_open_grid(c)) || (rc = cli_check_z(c, "the " CLUSTER_NAME " cluster's metallicity", d->z))) return rc;
    if (hrt_grid_mass_range(c->grid, d->z, &d->lo, &d->hi) != HRT_OK || turnoff_mass(c, d->z, d->age, &d->m_to) != 0)
        return cli_fail(c, CLI_EXIT_RANGE, "the grid does not span the main-sequence turnoff at %.3g Gyr and Z = %g",
                        d->age / 1e9, d->z);
    int st = isochrone_compute(c, d->age, d->z, &d->pts, &d->npts);
    if (st != HRT_OK) return cli_star_failure(c, "cluster isochrone", st, NAN, d->z, d->age, NULL);
    demo_pick_members(c, d);
    for (size_t i = 0; i < d->nm; i++) {
        member *m = &d->mem[i];
        char mt[32];
        snprintf(m->name, sizeof m->name, CLUSTER_NAME "-%zu", i + 1);
        snprintf(mt, sizeof mt, "%.17g", m->mass);
        if (hrt_eval(c->grid, 1, &m->mass, NULL, d->z, &d->age, &m->now, NULL) != HRT_OK)
            return cli_star_failure(c, m->name, m->now.status, m->mass, d->z, d->age, NULL);
        if ((rc = life_build(c, mt, m->mass, d->z, &m->L))) return rc;
    }
    return 0;
}

/* The plot: members, their tracks, the cluster isochrone; written before anything is printed, so
 * that a failure to write it leaves standard output empty. */
static int demo_plot(cli *c, demo *d)
{
    char title[160], subtitle[512];
    plot pl;
    int rc = 0, st;
    plot_init(&pl);
    for (size_t i = 0; i < d->nm && rc == 0; i++) {
        char label[64];
        if (d->mem[i].now.phase == HRT_PHASE_WD) continue; /* its track runs off the diagram's scale of interest */
        snprintf(label, sizeof label, "%.3g Msun", d->mem[i].mass);
        rc = plot_add_track(c, &pl, d->mem[i].L.s, label);
    }
    if (rc == 0 && (st = plot_add_isochrone(c, &pl, d->age, d->z, d->agebuf)) != HRT_OK)
        rc = cli_star_failure(c, "cluster isochrone", st, NAN, d->z, d->age, NULL);
    for (size_t i = 0; i < d->nm; i++) {
        const hrt_state *now = &d->mem[i].now;
        if (isfinite(now->log_teff_k) && isfinite(now->log_l_lsun))
            plot_add_point(&pl, now->log_teff_k, now->log_l_lsun, now->phase, d->mem[i].name);
    }
    snprintf(title, sizeof title, "The %s cluster (invented): %s, Z = %g", CLUSTER_NAME, d->agebuf, d->z);
    snprintf(subtitle, sizeof subtitle, "members now, their tracks and the cluster isochrone; grid %s", c->grid_used);
    pl.title = title;
    pl.subtitle = subtitle;
    if (rc == 0) rc = plot_save(c, &pl, d->out);
    plot_free(&pl);
    return rc;
}

/* The members' states now and their fates. */
static void demo_tables(const cli *c, demo *d)
{
    d->t = state_table_new(SC_NAME);
    d->fates = table_new(fate_cols, sizeof fate_cols / sizeof fate_cols[0]);
    for (size_t i = 0; i < d->nm; i++) {
        const member *m = &d->mem[i];
        state_table_add(d->t, c, &m->now, m->name, NULL);
        size_t r = table_add_row(d->fates);
        table_text(d->fates, r, 0, m->name);
        table_num(d->fates, r, 1, m->mass);
        table_text(d->fates, r, 2, hrt_remnant_key(m->L.remnant));
        table_text(d->fates, r, 3, hrt_remnant_name(m->L.remnant));
        table_num(d->fates, r, 4, m->L.remnant_mass);
        table_num(d->fates, r, 5, m->L.end_age);
        table_num(d->fates, r, 6, m->L.end_age - d->age);
    }
}

/* Where the density SVG goes: beside FILE (FILE less .svg, then -density.svg); none when FILE is
 * written in place (standard output, a device such as /dev/null, a FIFO): no name beside it. */
static char *density_path(const char *out)
{
    struct stat st;
    size_t ol = strlen(out);
    if (strcmp(out, "-") == 0 || (stat(out, &st) == 0 && (S_ISCHR(st.st_mode) || S_ISBLK(st.st_mode) || S_ISFIFO(st.st_mode))))
        return NULL;
    char *p = xmalloc(ol + 16);
    if (ol > 4 && strcmp(out + ol - 4, ".svg") == 0)
        snprintf(p, ol + 16, "%.*s-density.svg", (int)(ol - 4), out);
    else
        snprintf(p, ol + 16, "%s-density.svg", out);
    return p;
}

/* The synthetic cluster: the whole cluster grown from an IMF with the population module, and its
 * HR-diagram density beside the plot. */
static int demo_synthetic(cli *c, demo *d)
{
    static const hrt_pop_hr synth_hr = {3.3, 4.9, -5.0, 4.5, 64, 64};
    hrt_error perr;
    char dtitle[160], dsub[300];
    int rc, st;
    hrt_pop_spec_default(&d->spec);
    d->spec.n_stars = SYNTH_STARS;
    d->spec.seed = SYNTH_SEED;
    d->spec.zdist.z = d->z;
    if (hrt_imf_init(&d->spec.imf, HRT_IMF_KROUPA_2001, fmax(0.08, d->lo), fmin(100.0, d->hi), 0, &perr) != HRT_OK)
        return cli_fail(c, CLI_EXIT_RANGE, "synthetic cluster: %s", perr.message);
    hrt_pop_summary_init(&d->synth, d->age, &synth_hr, NULL);
    if ((rc = pop_run_progress(c, &d->spec, 0, 1, &d->synth, 0))) return rc;
    if (!(d->density_out = density_path(d->out))) return 0;
    plot dpl;
    plot_init(&dpl);
    snprintf(dtitle, sizeof dtitle, "The %s cluster grown from an IMF: %d stars (invented)", CLUSTER_NAME, SYNTH_STARS);
    snprintf(dsub, sizeof dsub, "Kroupa 2001 IMF %.3g-%.3g Msun, one burst %s ago, Z = %g, seed %d", d->spec.imf.m_lo_msun,
             d->spec.imf.m_hi_msun, d->agebuf, d->z, SYNTH_SEED);
    dpl.title = dtitle;
    dpl.subtitle = dsub;
    if ((st = plot_add_isochrone(c, &dpl, d->age, d->z, d->agebuf)) != HRT_OK)
        rc = cli_star_failure(c, "cluster isochrone", st, NAN, d->z, d->age, NULL);
    else
        rc = pop_write_density_svg(c, &dpl, &d->synth, d->density_out);
    plot_free(&dpl);
    return rc;
}

static void demo_json(const cli *c, const demo *d)
{
    jw w;
    jw_init(&w, stdout);
    jw_begin_object(&w, NULL);
    jw_begin_object(&w, "cluster");
    jw_str(&w, "name", CLUSTER_NAME " (invented)");
    jw_num(&w, "age_yr", d->age);
    jw_num(&w, "z", d->z);
    jw_num(&w, "feh", cli_feh(c, d->z));
    jw_num(&w, "turnoff_mass_msun", d->m_to);
    jw_end_object(&w);
    jw_str(&w, "grid", c->grid_used);
    jw_str(&w, "interp", hrt_interp_name(c->interp));
    jw_table(&w, "members_now", d->t);
    table *lt = life_records_new(1);
    for (size_t i = 0; i < d->nm; i++) life_records_add(c, &d->mem[i].L, lt, d->mem[i].name);
    jw_table(&w, "members_life", lt);
    table_free(lt);
    jw_table(&w, "fates", d->fates);
    jw_begin_object(&w, "synthetic_cluster");
    jw_str(&w, "imf", hrt_imf_name(d->spec.imf.kind));
    jw_num(&w, "initial_mass_msun_lo", d->spec.imf.m_lo_msun);
    jw_num(&w, "initial_mass_msun_hi", d->spec.imf.m_hi_msun);
    jw_str(&w, "sfh", hrt_sfh_name(d->spec.sfh.kind));
    jw_int(&w, "stars", (long)d->spec.n_stars);
    jw_int(&w, "seed", (long)d->spec.seed);
    jw_begin_array(&w, "epochs");
    pop_json(&d->synth, &w, 0);
    jw_end_array(&w);
    jw_end_object(&w);
    jw_str(&w, "svg", d->out);
    if (d->density_out) jw_str(&w, "density_svg", d->density_out);
    jw_end_object(&w);
    jw_finish(&w);
}

static void demo_text(const cli *c, const demo *d)
{
    printf("The %s cluster (an invented open cluster): age %s, Z = %g ([Fe/H] = %+.2f)\n", CLUSTER_NAME, d->agebuf, d->z,
           cli_feh(c, d->z));
    printf("grid: %s (%s interpolation)\n\n", c->grid_used, hrt_interp_name(c->interp));
    printf("Turnoff mass: %.4f Msun (the most massive star still burning hydrogen in its core)\n\n", d->m_to);
    printf("Members now\n");
    for (size_t i = 0; i < d->nm; i++) printf("  %-13s %s\n", d->mem[i].name, d->mem[i].why);
    putchar('\n');
    table_write_text(d->t, stdout, "  ");
    printf("  ");
    phase_footnote(stdout, d->t);
    col *tcols;
    char **theads;
    table *timetable = timetable_wide(d->mem, d->nm, &tcols, &theads);
    printf("\nTimetables: time spent in each phase ('-': never; 'hrtrail life --mass M --z %g' gives\n"
           "each star's keypoint ages and phase boundaries)\n", d->z);
    table_write_text(timetable, stdout, "  ");
    for (size_t k = 0; k < timetable->ncol; k++) free(theads[k]);
    table_free(timetable);
    free(theads);
    free(tcols);
    printf("\nFates (from now: negative = already a remnant)\n");
    table_write_text(d->fates, stdout, "  ");
    printf("\nThe whole cluster, grown with the population module: %d stars from the Kroupa (2001) IMF\n"
           "over %.3g-%.3g Msun, born in one burst %s ago (seed %d; 'hrtrail population --stars %d --age %gGyr\n"
           "--z %g --seed %d' gives the same numbers)\n",
           SYNTH_STARS, d->spec.imf.m_lo_msun, d->spec.imf.m_hi_msun, d->agebuf, SYNTH_SEED, SYNTH_STARS, d->age / 1e9, d->z,
           SYNTH_SEED);
    pop_print_text(&d->synth, stdout, "  ");
    printf("\nHR diagram written to %s (members, their tracks, the %s isochrone)\n", d->out, d->agebuf);
    if (d->density_out) printf("HR-diagram density of the synthetic cluster written to %s\n", d->density_out);
    printf("\nAccuracy: the answers are as good as the grid; the default grid is a semi-analytic model\n"
           "(tracks/MODEL.md), meant for population-level work, not precision stellar physics.\n");
}

int cmd_demo(cli *c, argparse *p)
{
    demo d;
    memset(&d, 0, sizeof d);
    d.out = DEFAULT_SVG;
    d.z = CLUSTER_Z;
    d.age = CLUSTER_AGE_YR;
    d.m_to = NAN;
    format_age(d.agebuf, sizeof d.agebuf, d.age);
    int rc = cli_parse(c, p, &demo_cmdopts, &d);
    if (rc == 0) rc = pop_check_out(c, d.out); /* -o - with --csv/--json would mix two documents */
    if (rc == 0 && (rc = demo_members(c, &d)) == 0 && (rc = demo_plot(c, &d)) == 0) {
        demo_tables(c, &d);
        rc = demo_synthetic(c, &d);
    }
    if (rc == 0 && c->fmt == FMT_CSV)
        table_write_csv(d.t, stdout);
    else if (rc == 0 && c->fmt == FMT_JSON)
        demo_json(c, &d);
    else if (rc == 0 && strcmp(d.out, "-") != 0) /* -o -: the SVG alone on standard output */
        demo_text(c, &d);
    for (size_t i = 0; i < d.nm; i++) life_free(&d.mem[i].L);
    free(d.pts);
    table_free(d.t);
    table_free(d.fates);
    free(d.density_out);
    return rc;
}
