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

#include "cli.h"

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
    if (plo != HRT_PHASE_MS || phi == HRT_PHASE_MS) return -1;
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

int cmd_demo(cli *c, argparse *p)
{
    const char *val, *out = DEFAULT_SVG;
    int id, rc = 0;
    double z = CLUSTER_Z, age = CLUSTER_AGE_YR, m_to = NAN, lo, hi;
    member mem[8];
    size_t nm = 0, npts = 0;
    hrt_state *pts = NULL;
    table *t = NULL, *fates = NULL, *timetable = NULL;
    plot pl;
    char title[160], subtitle[512], agebuf[64], dtitle[160], dsub[300];
    char *density_out = NULL;
    hrt_pop_summary synth;
    plot dpl;

    memset(mem, 0, sizeof mem);
    plot_init(&pl);
    plot_init(&dpl);
    while ((id = next_option(c, p, demo_opts, 0, 1, &val)) != OPT_END) {
        if (id == OPT_ERROR) { rc = CLI_EXIT_USAGE; goto done; }
        if (id == OPT_POSITIONAL) {
            rc = cli_fail(c, CLI_EXIT_USAGE, "unexpected argument '%s' (the plot file is given with -o FILE)", val);
            goto done;
        }
        if (id == O_OUT) out = val;
    }
    if (c->want_help) { help_command("demo", stdout); goto done; }
    if ((rc = cli_open_grid(c)) || (rc = cli_check_z(c, "the " CLUSTER_NAME " cluster's metallicity", z))) goto done;
    if (hrt_grid_mass_range(c->grid, z, &lo, &hi) != HRT_OK || turnoff_mass(c, z, age, &m_to) != 0) {
        rc = cli_fail(c, CLI_EXIT_RANGE, "the grid does not span the main-sequence turnoff at %.3g Gyr and Z = %g", age / 1e9, z);
        goto done;
    }
    int st = isochrone_compute(c, age, z, &pts, &npts);
    if (st != HRT_OK) {
        rc = cli_star_failure(c, "cluster isochrone", st, NAN, z, age, NULL);
        goto done;
    }

    /* the members */
    static const double dwarfs[] = {0.85, 1.3};
    for (size_t i = 0; i < 2; i++)
        if (dwarfs[i] >= lo && dwarfs[i] < 0.95 * m_to) {
            mem[nm].mass = dwarfs[i];
            mem[nm++].why = "main-sequence dwarf";
        }
    mem[nm].mass = 0.98 * m_to;
    mem[nm++].why = "just below the turnoff";
    static const int rgb[] = {HRT_PHASE_RGB}, cheb[] = {HRT_PHASE_CHEB}, agb[] = {HRT_PHASE_EAGB, HRT_PHASE_TPAGB};
    const struct { const int *ph; size_t n; const char *why; } giants[] = {
        {rgb, 1, "red giant"}, {cheb, 1, "core helium burning giant"}, {agb, 2, "asymptotic giant branch star"}};
    for (size_t g = 0; g < 3; g++) {
        double m = isochrone_pick(pts, npts, giants[g].ph, giants[g].n);
        if (isfinite(m)) {
            mem[nm].mass = m;
            mem[nm++].why = giants[g].why;
        }
    }
    for (double m = 1.1 * m_to; m <= hi; m *= 1.02) {
        hrt_state s;
        if (phase_at(c, m, z, age, &s) == HRT_PHASE_WD) {
            mem[nm].mass = m;
            mem[nm++].why = "white dwarf";
            break;
        }
    }
    for (size_t i = 0; i < nm; i++) {
        char mt[32];
        snprintf(mem[i].name, sizeof mem[i].name, CLUSTER_NAME "-%zu", i + 1);
        snprintf(mt, sizeof mt, "%.17g", mem[i].mass);
        if (hrt_eval(c->grid, 1, &mem[i].mass, NULL, z, &age, &mem[i].now, NULL) != HRT_OK) {
            rc = cli_star_failure(c, mem[i].name, mem[i].now.status, mem[i].mass, z, age, NULL);
            goto done;
        }
        if ((rc = life_build(c, mt, mem[i].mass, z, &mem[i].L))) goto done;
    }

    /* the plot: members, their tracks, the cluster isochrone */
    for (size_t i = 0; i < nm; i++) {
        char label[64];
        if (mem[i].now.phase == HRT_PHASE_WD) continue; /* its track runs off the diagram's scale of interest */
        snprintf(label, sizeof label, "%.3g Msun", mem[i].mass);
        if ((rc = plot_add_track(c, &pl, mem[i].L.s, label))) goto done;
    }
    format_age(agebuf, sizeof agebuf, age);
    if ((st = plot_add_isochrone(c, &pl, age, z, agebuf)) != HRT_OK) {
        rc = cli_star_failure(c, "cluster isochrone", st, NAN, z, age, NULL);
        goto done;
    }
    for (size_t i = 0; i < nm; i++)
        if (isfinite(mem[i].now.log_teff_k) && isfinite(mem[i].now.log_l_lsun))
            plot_add_point(&pl, mem[i].now.log_teff_k, mem[i].now.log_l_lsun, mem[i].now.phase, mem[i].name);
    snprintf(title, sizeof title, "The %s cluster (invented): %s, Z = %g", CLUSTER_NAME, agebuf, z);
    snprintf(subtitle, sizeof subtitle, "members now, their tracks and the cluster isochrone; grid %s", c->grid_used);
    pl.title = title;
    pl.subtitle = subtitle;

    t = state_table_new(SC_NAME);
    fates = table_new(fate_cols, sizeof fate_cols / sizeof fate_cols[0]);
    for (size_t i = 0; i < nm; i++) {
        state_table_add(t, c, &mem[i].now, mem[i].name, NULL);
        size_t r = table_add_row(fates);
        table_text(fates, r, 0, mem[i].name);
        table_num(fates, r, 1, mem[i].mass);
        table_text(fates, r, 2, hrt_remnant_key(mem[i].L.remnant));
        table_text(fates, r, 3, hrt_remnant_name(mem[i].L.remnant));
        table_num(fates, r, 4, mem[i].L.remnant_mass);
        table_num(fates, r, 5, mem[i].L.end_age);
        table_num(fates, r, 6, mem[i].L.end_age - age);

    }
    /* the plot is written first: a failure to write it leaves stdout empty */
    if ((rc = plot_save(c, &pl, out))) goto done;

    /* the synthetic cluster: the whole cluster grown from an IMF with the population module */
    hrt_pop_spec spec;
    hrt_error perr;
    hrt_pop_spec_default(&spec);
    spec.n_stars = SYNTH_STARS;
    spec.seed = SYNTH_SEED;
    spec.zdist.z = z;
    if (hrt_imf_init(&spec.imf, HRT_IMF_KROUPA_2001, fmax(0.08, lo), fmin(100.0, hi), 0, &perr) != HRT_OK) {
        rc = cli_fail(c, CLI_EXIT_RANGE, "synthetic cluster: %s", perr.message);
        goto done;
    }
    static const hrt_pop_hr synth_hr = {3.3, 4.9, -5.0, 4.5, 64, 64};
    hrt_pop_summary_init(&synth, age, &synth_hr, NULL);
    if ((rc = pop_run_progress(c, &spec, 0, 1, &synth, 0))) goto done;
    if (strcmp(out, "-") != 0) {
        size_t ol = strlen(out);
        density_out = xmalloc(ol + 16);
        if (ol > 4 && strcmp(out + ol - 4, ".svg") == 0)
            snprintf(density_out, ol + 16, "%.*s-density.svg", (int)(ol - 4), out);
        else
            snprintf(density_out, ol + 16, "%s-density.svg", out);
        snprintf(dtitle, sizeof dtitle, "The %s cluster grown from an IMF: %d stars (invented)", CLUSTER_NAME, SYNTH_STARS);
        snprintf(dsub, sizeof dsub, "Kroupa 2001 IMF %.3g-%.3g Msun, one burst %s ago, Z = %g, seed %d", spec.imf.m_lo_msun,
                 spec.imf.m_hi_msun, agebuf, z, SYNTH_SEED);
        dpl.title = dtitle;
        dpl.subtitle = dsub;
        if ((st = plot_add_isochrone(c, &dpl, age, z, agebuf)) != HRT_OK) {
            rc = cli_star_failure(c, "cluster isochrone", st, NAN, z, age, NULL);
            goto done;
        }
        if ((rc = pop_write_density_svg(c, &dpl, &synth, density_out))) goto done;
    }

    if (c->fmt == FMT_CSV) {
        table_write_csv(t, stdout);
    } else if (c->fmt == FMT_JSON) {
        jw w;
        jw_init(&w, stdout);
        jw_begin_object(&w, NULL);
        jw_begin_object(&w, "cluster");
        jw_str(&w, "name", CLUSTER_NAME " (invented)");
        jw_num(&w, "age_yr", age);
        jw_num(&w, "z", z);
        jw_num(&w, "feh", cli_feh(c, z));
        jw_num(&w, "turnoff_mass_msun", m_to);
        jw_end_object(&w);
        jw_str(&w, "grid", c->grid_used);
        jw_str(&w, "interp", hrt_interp_name(c->interp));
        jw_table(&w, "members_now", t);
        table *lt = life_records_new(1);
        for (size_t i = 0; i < nm; i++) life_records_add(c, &mem[i].L, lt, mem[i].name);
        jw_table(&w, "members_life", lt);
        table_free(lt);
        jw_table(&w, "fates", fates);
        jw_begin_object(&w, "synthetic_cluster");
        jw_str(&w, "imf", hrt_imf_name(spec.imf.kind));
        jw_num(&w, "initial_mass_msun_lo", spec.imf.m_lo_msun);
        jw_num(&w, "initial_mass_msun_hi", spec.imf.m_hi_msun);
        jw_str(&w, "sfh", hrt_sfh_name(spec.sfh.kind));
        jw_int(&w, "stars", (long)spec.n_stars);
        jw_int(&w, "seed", (long)spec.seed);
        jw_begin_array(&w, "epochs");
        pop_json(&synth, &w, 0);
        jw_end_array(&w);
        jw_end_object(&w);
        jw_str(&w, "svg", out);
        if (density_out) jw_str(&w, "density_svg", density_out);
        jw_end_object(&w);
        jw_finish(&w);
    } else {
        printf("The %s cluster (an invented open cluster): age %s, Z = %g ([Fe/H] = %+.2f)\n", CLUSTER_NAME, agebuf, z,
               cli_feh(c, z));
        printf("grid: %s (%s interpolation)\n\n", c->grid_used, hrt_interp_name(c->interp));
        printf("Turnoff mass: %.4f Msun (the most massive star still burning hydrogen in its core)\n\n", m_to);
        printf("Members now\n");
        for (size_t i = 0; i < nm; i++) printf("  %-13s %s\n", mem[i].name, mem[i].why);
        putchar('\n');
        table_write_text(t, stdout, "  ");
        printf("  ");
        phase_footnote(stdout, t);
        col *tcols;
        char **theads;
        timetable = timetable_wide(mem, nm, &tcols, &theads);
        printf("\nTimetables: time spent in each phase ('-': never; 'hrtrail life --mass M --z %g' gives\n"
               "each star's keypoint ages and phase boundaries)\n", z);
        table_write_text(timetable, stdout, "  ");
        for (size_t k = 0; k < timetable->ncol; k++) free(theads[k]);
        table_free(timetable);
        timetable = NULL;
        free(theads);
        free(tcols);
        printf("\nFates (from now: negative = already a remnant)\n");
        table_write_text(fates, stdout, "  ");
        printf("\nThe whole cluster, grown with the population module: %d stars from the Kroupa (2001) IMF\n"
               "over %.3g-%.3g Msun, born in one burst %s ago (seed %d; 'hrtrail population --stars %d --age %gGyr\n"
               "--z %g --seed %d' gives the same numbers)\n",
               SYNTH_STARS, spec.imf.m_lo_msun, spec.imf.m_hi_msun, agebuf, SYNTH_SEED, SYNTH_STARS, age / 1e9, z, SYNTH_SEED);
        pop_print_text(&synth, stdout, "  ");
        printf("\nHR diagram written to %s (members, their tracks, the %s isochrone)\n", out, agebuf);
        if (density_out) printf("HR-diagram density of the synthetic cluster written to %s\n", density_out);
        printf("\nAccuracy: the answers are as good as the grid; the default grid is a semi-analytic model\n"
               "(tracks/MODEL.md), meant for population-level work, not precision stellar physics.\n");
    }
done:
    for (size_t i = 0; i < nm; i++) life_free(&mem[i].L);
    free(pts);
    table_free(t);
    table_free(fates);
    table_free(timetable);
    plot_free(&pl);
    plot_free(&dpl);
    free(density_out);
    return rc;
}
