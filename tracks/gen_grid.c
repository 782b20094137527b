/*
 * hrtrail-gen-grid: writes hrtrail's default track grid.
 *
 *   gen_grid OUTPUT.h5 [--dump-raw DIR] [--only-z Z [--no-error-field]]
 *
 * Raw tracks come from the semi-analytic model in model.c (physics and
 * sources: tracks/MODEL.md); the library's grid builder puts them on EEPs
 * (hrt_builder_add_track, the same resampling the track import uses) and
 * writes the file atomically.  Output is deterministic: no time stamps, fixed
 * ordering.  With --dump-raw every raw track is also written to DIR as CSV.
 * With --only-z only the tracks of that one of the grid's metallicities are
 * made: the same code on a seventh of the work (the sanitizer builds of CI
 * run it so, without the error field, whose leave-one-out tests/test_interp_error
 * runs there on the same metallicity; they copy the full grid from the normal build).
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "hrtrail.h"
#include "model.h"
#include "structure.h"

/* Metallicities of the grid (metal mass fraction). */
static const double grid_z[] = {0.0001, 0.0003, 0.001, 0.004, 0.008, 0.014, 0.03};
#define N_Z (sizeof grid_z / sizeof grid_z[0])

/* Base initial masses, Msun: denser near the low-mass giant transition
 * (0.20-0.25), the helium-flash limit (1.8-2.4) and the route boundaries,
 * where tracks on both sides are added per metallicity. */
static const double base_masses[] = {
    0.08, 0.09, 0.10, 0.11, 0.12, 0.14, 0.16, 0.18, 0.19, 0.20, 0.2125, 0.225, 0.2375, 0.25, 0.27,
    0.30, 0.33, 0.36, 0.40, 0.43, 0.46, 0.565, 0.60, 0.65, 0.70, 0.75, 0.80, 0.85, 0.90, 0.95, 1.00,
    1.05, 1.10, 1.20, 1.30, 1.40, 1.50, 1.60, 1.70, 1.80, 1.90, 2.00, 2.10, 2.20, 2.30, 2.40, 2.50,
    2.60, 2.80, 3.00, 3.30, 3.60, 4.00, 4.50, 5.00, 5.50, 6.00, 6.50, 7.00, 7.50, 9.0, 10.0, 11.0,
    12.0, 13.0, 14.0, 15.0, 17.0, 20.0, 21.0, 22.0, 22.5, 23.0, 23.5, 24.0, 24.5, 25.0, 25.5, 26.0, 26.5, 27.0,
    27.5, 28.0, 29.0, 30.0, 32.5, 35.0, 40.0,
    45.0, 50.0, 60.0, 70.0, 80.0, 90.0, 100.0, 120.0, 150.0};
#define N_BASE (sizeof base_masses / sizeof base_masses[0])

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* Masses at metallicity z: the base list plus tracks at 0.1, 1, 3 and 6 % on both
 * sides of each route boundary; base masses closer than 1.5 % to an added
 * one are dropped.  Returns the count. */
static size_t masses_for_z(const gen_params *p, double z, double *out, size_t cap)
{
    double bnd[2];
    gen_route_boundaries(p, z, bnd);
    double added[16];
    size_t na = 0;
    /* 0.1 %: the library extrapolates a route's end track with the slopes
     * it stores (a flat stretch where ages may not be extrapolated), so the
     * tracks hug the boundary and the two routes meet without a visible step */
    static const double off[4] = {0.001, 0.01, 0.03, 0.06};
    for (int b = 0; b < 2; b++)
        for (int k = 0; k < 4; k++) {
            added[na++] = bnd[b] * (1.0 - off[k]);
            added[na++] = bnd[b] * (1.0 + off[k]);
        }
    size_t n = 0;
    for (size_t i = 0; i < N_BASE && n < cap; i++) {
        int keep = 1;
        for (size_t j = 0; j < na; j++)
            if (fabs(base_masses[i] / added[j] - 1.0) < 0.015)
                keep = 0;
        if (keep)
            out[n++] = base_masses[i];
    }
    for (size_t j = 0; j < na && n < cap; j++)
        out[n++] = round(added[j] * 1e4) / 1e4;
    qsort(out, n, sizeof *out, cmp_double);
    return n;
}

static int route_of(const double bnd[2], double m)
{
    if (m < bnd[0])
        return GEN_ROUTE_LOW;
    if (m < bnd[1])
        return GEN_ROUTE_GIANT;
    return GEN_ROUTE_SUPERGIANT;
}

/* Raw track as CSV.  Besides the model's own columns, the dump carries what
 * the import's keypoint detection reads (tracks/FORMAT.md, "Keypoint
 * criteria"), which the model does not compute: central_x and central_y
 * are PROXIES, not physics: central hydrogen falls linearly in age from
 * the model's initial X at the ZAMS to 0 at the TAMS; central helium
 * is 1 - Z - central_x until core helium burning starts (cheb_start) and
 * falls linearly in age to 0 at cheb_end.  The keypoint column names the
 * model's keypoints (the override the import honours). */
static int dump_raw(const char *dir, const gen_track *t, const hrt_route_spec *route)
{
    const char *const *keypoint = route->keypoint_names;
    char path[4096];
    snprintf(path, sizeof path, "%s/raw_z%.4f_m%08.4f.csv", dir, t->z, t->initial_mass);
    FILE *f = fopen(path, "w");
    if (!f)
        return -1;
    fprintf(f, "# initial_mass_msun=%.6g z=%.6g route=%d remnant=%d remnant_mass_msun=%.6g keypoints=", t->initial_mass,
            t->z, t->route, t->remnant, t->remnant_mass);
    for (size_t k = 0; k < t->n_kp; k++)
        fprintf(f, "%s%zu", k ? ";" : "", t->kp[k]);
    fprintf(f, "\nage_yr,log_l_lsun,log_teff_k,mass_msun,he_core_mass_msun,co_core_mass_msun,phase,central_x,"
               "central_y,keypoints\n");
    double x0 = gen_x_hydrogen(t->z);
    double t_zams = t->s[t->kp[0]].age_yr, t_tams = t->s[t->kp[1]].age_yr;
    double t_cheb_start = INFINITY, t_cheb_end = INFINITY;
    for (size_t k = 0; k < t->n_kp; k++) {
        if (!strcmp(keypoint[k], "zams"))
            t_zams = t->s[t->kp[k]].age_yr;
        if (!strcmp(keypoint[k], "tams"))
            t_tams = t->s[t->kp[k]].age_yr;
        if (!strcmp(keypoint[k], "cheb_start"))
            t_cheb_start = t->s[t->kp[k]].age_yr;
        if (!strcmp(keypoint[k], "cheb_end"))
            t_cheb_end = t->s[t->kp[k]].age_yr;
    }
    size_t k = 0;
    for (size_t i = 0; i < t->n; i++) {
        const gen_sample *s = &t->s[i];
        double age = s->age_yr;
        double xc = age <= t_zams ? x0 : age >= t_tams ? 0.0 : x0 * (t_tams - age) / (t_tams - t_zams);
        double yc = age <= t_cheb_start ? 1.0 - t->z - xc
                    : age >= t_cheb_end ? 0.0
                                        : (1.0 - t->z) * (t_cheb_end - age) / (t_cheb_end - t_cheb_start);
        const char *flag = "-";
        if (k < t->n_kp && t->kp[k] == i)
            flag = keypoint[k++];
        fprintf(f, "%.17g,%.10f,%.10f,%.10f,%.10f,%.10f,%d,%.10g,%.10g,%s\n", age, s->log_l_lsun, s->log_teff, s->mass,
                s->he_core, s->co_core, s->phase, xc, yc, flag);
    }
    return fclose(f) == 0 ? 0 : -1;
}

/* Columns of one raw track for the builder. */
typedef struct columns {
    double *log_age, *log_l, *log_teff, *mass, *he_core, *co_core;
    int *phase;
    double *extra; /* [GEN_N_STRUCT][n] structural quantities (structure.c) */
} columns;

static int add_track(hrt_builder *b, const gen_track *t, hrt_error *err)
{
    columns c;
    size_t n = t->n;
    c.log_age = malloc(n * sizeof(double));
    c.log_l = malloc(n * sizeof(double));
    c.log_teff = malloc(n * sizeof(double));
    c.mass = malloc(n * sizeof(double));
    c.he_core = malloc(n * sizeof(double));
    c.co_core = malloc(n * sizeof(double));
    c.phase = malloc(n * sizeof(int));
    c.extra = malloc(GEN_N_STRUCT * n * sizeof(double));
    int rc = HRT_E_NOMEM;
    if (c.log_age && c.log_l && c.log_teff && c.mass && c.he_core && c.co_core && c.phase && c.extra) {
        for (size_t i = 0; i < n; i++) {
            c.log_age[i] = log10(t->s[i].age_yr);
            c.log_l[i] = t->s[i].log_l_lsun;
            c.log_teff[i] = t->s[i].log_teff;
            c.mass[i] = t->s[i].mass;
            c.he_core[i] = t->s[i].he_core;
            c.co_core[i] = t->s[i].co_core;
            c.phase[i] = t->s[i].phase;
            double v[GEN_N_STRUCT];
            gen_structure(c.mass[i], c.he_core[i], c.log_l[i], c.log_teff[i], c.phase[i], v);
            for (int k = 0; k < GEN_N_STRUCT; k++)
                c.extra[k * n + i] = v[k];
        }
        const double *xcols[GEN_N_STRUCT];
        for (int k = 0; k < GEN_N_STRUCT; k++)
            xcols[k] = c.extra + k * n;
        hrt_track_data d = {
            .initial_mass_msun = t->initial_mass,
            .route = t->route,
            .remnant = t->remnant,
            .remnant_mass_msun = t->remnant_mass,
            .n = n,
            .log_age_yr = c.log_age,
            .log_l_lsun = c.log_l,
            .log_teff_k = c.log_teff,
            .log_r_rsun = NULL,
            .mass_msun = c.mass,
            .he_core_mass_msun = c.he_core,
            .co_core_mass_msun = c.co_core,
            .phase = c.phase,
            .n_keypoints = t->n_kp,
            .keypoint_sample = t->kp,
        };
        rc = hrt_builder_add_track_extra(b, t->z, &d, GEN_N_STRUCT, xcols, err);
    }
    free(c.extra);
    free(c.log_age);
    free(c.log_l);
    free(c.log_teff);
    free(c.mass);
    free(c.he_core);
    free(c.co_core);
    free(c.phase);
    return rc;
}

/* The route layout of the default grid (hrt_default_route): the model's
 * GEN_N_ROUTES routes, in its order. */
typedef struct layout {
    hrt_route_spec route[GEN_N_ROUTES];
    const char *keypoint_names[GEN_N_ROUTES][HRT_IMPORT_MAX_KP];
} layout;

static int default_layout(layout *lay)
{
    for (size_t r = 0; r < GEN_N_ROUTES; r++)
        if (hrt_default_route(r, &lay->route[r], lay->keypoint_names[r]) != HRT_OK)
            return -1;
    hrt_route_spec extra;
    const char *extra_names[HRT_IMPORT_MAX_KP];
    return hrt_default_route(GEN_N_ROUTES, &extra, extra_names) == HRT_OK ? -1 : 0;
}

static int usage(const char *prog)
{
    fprintf(stderr, "usage: %s OUTPUT.h5 [--dump-raw DIR] [--only-z Z [--no-error-field]]\n", prog);
    return 2;
}

/* The builder, with the grid's root attributes. */
static int start_grid(const layout *lay, const gen_params *p, hrt_builder **b, hrt_error *err)
{
    if (hrt_builder_new(GEN_N_ROUTES, lay->route, p->z_sun, b, err) != HRT_OK)
        return -1;
    /* Stored without shuffle and deflate (Fletcher-32 only): every open
     * inflates nothing then, which was most of its time (DEVELOPERS.md,
     * "Grid open"); the file is about twice as large. */
    if (hrt_builder_set_compression(*b, 0, err) != HRT_OK)
        return -1;
    for (int k = 0; k < GEN_N_STRUCT; k++)
        if (hrt_builder_declare_extra(*b, gen_struct_table[k].name, gen_struct_table[k].units,
                                      gen_struct_table[k].meaning, err) != HRT_OK ||
            hrt_builder_set_extra_single(*b, gen_struct_table[k].name, 1, err) != HRT_OK)
            return -1; /* single precision: far below their accuracy (MODEL.md), half the space */
    char version[64];
    snprintf(version, sizeof version, "hrtrail-gen-grid %s", HRT_VERSION_STRING);
    if (hrt_builder_set_attribute(*b, "created_by", version, err) != HRT_OK ||
        hrt_builder_set_attribute(*b, "source",
                                  "semi-analytic model from published relations (MODEL.md: tracks/ in "
                                  "the source, share/doc/hrtrail/ where installed); no evolution-code "
                                  "output used",
                                  err) != HRT_OK ||
        hrt_builder_set_attribute(*b, "description",
                                  "hrtrail default grid: 0.08-150 Msun, Z = 0.0001-0.03, zero-age main "
                                  "sequence to white-dwarf cooling onset or core collapse. A "
                                  "semi-analytic model for population-level work; accuracy in "
                                  "MODEL.md (tracks/ in the source, share/doc/hrtrail/ where installed); "
                                  "format and phase codes in FORMAT.md beside it.",
                                  err) != HRT_OK)
        return -1;
    return 0;
}

/* Every track of metallicity z into the builder (and the dump), then the
 * route boundaries.  Returns 0, or 1 after a message. */
static int add_metallicity(hrt_builder *b, const layout *lay, const gen_params *p, double z, const char *dump,
                           hrt_error *err)
{
    double bnd[2], masses[160];
    gen_route_boundaries(p, z, bnd);
    size_t nm = masses_for_z(p, z, masses, 160);
    int status = 0;
    for (size_t im = 0; im < nm && !status; im++) {
        gen_track t;
        char msg[256];
        int route = route_of(bnd, masses[im]);
        if (gen_track_compute(p, masses[im], z, route, &t, msg, sizeof msg)) {
            fprintf(stderr, "gen_grid: %s\n", msg);
            status = 1;
        } else if (t.n_kp != lay->route[route].n_keypoints) {
            fprintf(stderr, "gen_grid: M = %g, Z = %g: the model gives %zu keypoints, route '%s' has %zu\n",
                    masses[im], z, t.n_kp, lay->route[route].name, lay->route[route].n_keypoints);
            status = 1;
        } else if (dump && dump_raw(dump, &t, &lay->route[route])) {
            fprintf(stderr, "gen_grid: cannot write raw track to %s\n", dump);
            status = 1;
        } else if (add_track(b, &t, err) != HRT_OK) {
            fprintf(stderr, "gen_grid: M = %g, Z = %g: %s\n", masses[im], z, err->message);
            status = 1;
        }
        gen_track_free(&t);
    }
    if (!status && hrt_builder_set_route_boundaries(b, z, bnd, err) != HRT_OK) {
        fprintf(stderr, "gen_grid: %s\n", err->message);
        status = 1;
    }
    return status;
}

/* Measure the grid just written by leaving each track out, then each
 * interior metallicity group, for every interpolation type, and store both
 * error fields in it (FORMAT.md, accuracy/ and accuracy/across_z/):
 * hrt_state_interp_error reads them.  The mass direction is stored first:
 * storing it replaces accuracy/ whole. */
static int store_error_field(const char *out, hrt_error *err)
{
    int rc = HRT_OK;
    for (int across = 0; across <= 1 && rc == HRT_OK; across++) {
        hrt_grid *g = NULL;
        hrt_accuracy *acc = NULL;
        rc = hrt_grid_open(out, &g, err);
        if (rc == HRT_OK)
            rc = hrt_accuracy_new(&acc, err);
        if (rc == HRT_OK)
            rc = hrt_accuracy_set_across_z(acc, across, err);
        if (rc == HRT_OK)
            rc = hrt_accuracy_run(acc, g, err);
        hrt_grid_close(g);
        if (rc == HRT_OK)
            rc = hrt_accuracy_store(acc, out, err);
        hrt_accuracy_free(acc);
    }
    if (rc != HRT_OK)
        fprintf(stderr, "gen_grid: storing the error field: %s\n", err->message);
    return rc != HRT_OK;
}

/* The grid metallicity the text names (as printed by %g), or -1. */
static double grid_z_of(const char *text)
{
    for (size_t iz = 0; iz < N_Z; iz++) {
        char buf[32];
        snprintf(buf, sizeof buf, "%g", grid_z[iz]);
        if (!strcmp(buf, text))
            return grid_z[iz];
    }
    fprintf(stderr, "gen_grid: --only-z %s is not one of the grid's metallicities\n", text);
    return -1.0;
}

int main(int argc, char **argv)
{
    const char *out = NULL, *dump = NULL;
    double only_z = -1.0;
    int error_field = 1;
    for (int i = 1; i < argc; i++) {
        if (!strcmp(argv[i], "--dump-raw") && i + 1 < argc)
            dump = argv[++i];
        else if (!strcmp(argv[i], "--only-z") && i + 1 < argc) {
            if ((only_z = grid_z_of(argv[++i])) < 0)
                return usage(argv[0]);
        } else if (!strcmp(argv[i], "--no-error-field")) {
            error_field = 0;
        } else if (argv[i][0] != '-' && !out)
            out = argv[i];
        else
            return usage(argv[0]);
    }
    if (!out || (!error_field && only_z < 0)) /* the default grid always has its error field */
        return usage(argv[0]);

    gen_params p;
    gen_params_default(&p);
    layout lay;
    if (default_layout(&lay) != 0) {
        fprintf(stderr, "gen_grid: the library's default layout does not have the model's %d routes\n",
                GEN_N_ROUTES);
        return 1;
    }
    hrt_error err = {0};
    hrt_builder *b = NULL;
    if (start_grid(&lay, &p, &b, &err) != 0) {
        fprintf(stderr, "gen_grid: %s\n", err.message);
        hrt_builder_free(b);
        return 1;
    }
    int status = 0;
    for (size_t iz = 0; iz < N_Z && !status; iz++)
        if (only_z < 0 || grid_z[iz] == only_z)
            status = add_metallicity(b, &lay, &p, grid_z[iz], dump, &err);
    if (!status && hrt_builder_write(b, out, &err) != HRT_OK) {
        fprintf(stderr, "gen_grid: %s\n", err.message);
        status = 1;
    }
    hrt_builder_free(b);
    if (!status && error_field)
        status = store_error_field(out, &err);
    return status;
}
