/*
 * hrtrail-gen-grid: writes hrtrail's default track grid.
 *
 *   gen_grid OUTPUT.h5 [--dump-raw DIR]
 *
 * Raw tracks come from the semi-analytic model in model.c (physics and
 * sources: tracks/MODEL.md); the library's grid builder puts them on EEPs
 * (hrt_builder_add_track, the same resampling the track import uses) and
 * writes the file atomically.  Output is deterministic: no time stamps, fixed
 * ordering.  With --dump-raw every raw track is also written to DIR as CSV.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "hrtrail.h"
#include "model.h"

/* Metallicities of the grid (metal mass fraction). */
static const double grid_z[] = {0.0001, 0.0003, 0.001, 0.004, 0.008, 0.014, 0.03};
#define N_Z (sizeof grid_z / sizeof grid_z[0])

/* Base initial masses, Msun: denser near the low-mass giant transition
 * (0.20-0.25), the helium-flash limit (1.8-2.4) and the route boundaries,
 * where tracks on both sides are added per metallicity. */
static const double base_masses[] = {
    0.08, 0.09, 0.10, 0.11, 0.12, 0.14, 0.16, 0.18, 0.19, 0.20, 0.2125, 0.225, 0.2375, 0.25, 0.27,
    0.30, 0.33, 0.36, 0.40, 0.43, 0.46, 0.60, 0.65, 0.70, 0.75, 0.80, 0.85, 0.90, 0.95, 1.00,
    1.05, 1.10, 1.20, 1.30, 1.40, 1.50, 1.60, 1.70, 1.80, 1.90, 2.00, 2.10, 2.20, 2.30, 2.40, 2.50,
    2.60, 2.80, 3.00, 3.30, 3.60, 4.00, 4.50, 5.00, 5.50, 6.00, 6.50, 7.00, 7.50, 9.0, 10.0, 11.0,
    12.0, 13.0, 14.0, 15.0, 17.0, 20.0, 22.0, 23.0, 24.0, 25.0, 26.0, 27.0, 28.0, 30.0, 32.5, 35.0, 40.0, 45.0, 50.0, 60.0, 70.0, 80.0,
    90.0, 100.0, 120.0, 150.0};
#define N_BASE (sizeof base_masses / sizeof base_masses[0])

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* Masses at metallicity z: the base list plus tracks at 1, 3 and 6 % on both
 * sides of each route boundary; base masses closer than 1.5 % to an added
 * one are dropped.  Returns the count. */
static size_t masses_for_z(const gen_params *p, double z, double *out, size_t cap)
{
    double bnd[2];
    gen_route_boundaries(p, z, bnd);
    double added[12];
    size_t na = 0;
    static const double off[3] = {0.01, 0.03, 0.06};
    for (int b = 0; b < 2; b++)
        for (int k = 0; k < 3; k++) {
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
 * X = 1 - (0.245 + 1.5 Z) - Z at the ZAMS to 0 at the TAMS; central helium
 * is 1 - Z - central_x until core helium burning starts (cheb_start) and
 * falls linearly in age to 0 at cheb_end.  The keypoint column names the
 * model's keypoints (the override the import honours). */
static int dump_raw(const char *dir, const gen_track *t)
{
    static const char *const kp_low[] = GEN_LOW_KEYPOINTS;
    static const char *const kp_giant[] = GEN_GIANT_KEYPOINTS;
    static const char *const kp_sg[] = GEN_SG_KEYPOINTS;
    const char *const *kpn = t->route == GEN_ROUTE_LOW ? kp_low : t->route == GEN_ROUTE_GIANT ? kp_giant : kp_sg;
    char path[4096];
    snprintf(path, sizeof path, "%s/raw_z%.4f_m%08.4f.csv", dir, t->z, t->initial_mass);
    FILE *f = fopen(path, "w");
    if (!f)
        return -1;
    fprintf(f, "# initial_mass_msun=%.6g z=%.6g route=%d remnant=%d remnant_mass_msun=%.6g keypoints=", t->initial_mass,
            t->z, t->route, t->remnant, t->remnant_mass);
    for (size_t k = 0; k < t->n_kp; k++)
        fprintf(f, "%s%zu", k ? ";" : "", t->kp[k]);
    fprintf(f, "\nage_yr,log_l_lsun,log_teff_k,mass_msun,he_core_mass_msun,co_core_mass_msun,phase,central_x,central_y,keypoints\n");
    double x0 = 1.0 - (0.245 + 1.5 * t->z) - t->z;
    double t_zams = t->s[t->kp[0]].age_yr, t_tams = t->s[t->kp[1]].age_yr;
    double t_cs = INFINITY, t_ce = INFINITY;
    for (size_t k = 0; k < t->n_kp; k++) {
        if (!strcmp(kpn[k], "cheb_start"))
            t_cs = t->s[t->kp[k]].age_yr;
        if (!strcmp(kpn[k], "cheb_end"))
            t_ce = t->s[t->kp[k]].age_yr;
    }
    size_t k = 0;
    for (size_t i = 0; i < t->n; i++) {
        const gen_sample *s = &t->s[i];
        double a = s->age_yr;
        double xc = a <= t_zams ? x0 : a >= t_tams ? 0.0 : x0 * (t_tams - a) / (t_tams - t_zams);
        double yc = a <= t_cs ? 1.0 - t->z - xc : a >= t_ce ? 0.0 : (1.0 - t->z) * (t_ce - a) / (t_ce - t_cs);
        const char *flag = "-";
        if (k < t->n_kp && t->kp[k] == i)
            flag = kpn[k++];
        fprintf(f, "%.17g,%.10f,%.10f,%.10f,%.10f,%.10f,%d,%.10g,%.10g,%s\n", a, s->log_l_lsun, s->log_teff, s->mass,
                s->he_core, s->co_core, s->phase, xc, yc, flag);
    }
    return fclose(f) == 0 ? 0 : -1;
}

/* Columns of one raw track for the builder. */
typedef struct columns {
    double *age, *l, *t, *m, *he, *co;
    int *ph;
} columns;

static int add_track(hrt_builder *b, const gen_track *t, hrt_error *err)
{
    columns c;
    size_t n = t->n;
    c.age = malloc(n * sizeof(double));
    c.l = malloc(n * sizeof(double));
    c.t = malloc(n * sizeof(double));
    c.m = malloc(n * sizeof(double));
    c.he = malloc(n * sizeof(double));
    c.co = malloc(n * sizeof(double));
    c.ph = malloc(n * sizeof(int));
    int rc = HRT_E_NOMEM;
    if (c.age && c.l && c.t && c.m && c.he && c.co && c.ph) {
        for (size_t i = 0; i < n; i++) {
            c.age[i] = log10(t->s[i].age_yr);
            c.l[i] = t->s[i].log_l_lsun;
            c.t[i] = t->s[i].log_teff;
            c.m[i] = t->s[i].mass;
            c.he[i] = t->s[i].he_core;
            c.co[i] = t->s[i].co_core;
            c.ph[i] = t->s[i].phase;
        }
        hrt_track_data d = {
            .initial_mass_msun = t->initial_mass,
            .route = t->route,
            .remnant = t->remnant,
            .remnant_mass_msun = t->remnant_mass,
            .n = n,
            .log_age_yr = c.age,
            .log_l_lsun = c.l,
            .log_teff_k = c.t,
            .log_r_rsun = NULL,
            .mass_msun = c.m,
            .he_core_mass_msun = c.he,
            .co_core_mass_msun = c.co,
            .phase = c.ph,
            .n_keypoints = t->n_kp,
            .keypoint_sample = t->kp,
        };
        rc = hrt_builder_add_track(b, t->z, &d, err);
    }
    free(c.age);
    free(c.l);
    free(c.t);
    free(c.m);
    free(c.he);
    free(c.co);
    free(c.ph);
    return rc;
}

int main(int argc, char **argv)
{
    const char *out = NULL, *dump = NULL;
    for (int i = 1; i < argc; i++) {
        if (!strcmp(argv[i], "--dump-raw") && i + 1 < argc)
            dump = argv[++i];
        else if (argv[i][0] != '-' && !out)
            out = argv[i];
        else {
            fprintf(stderr, "usage: %s OUTPUT.h5 [--dump-raw DIR]\n", argv[0]);
            return 2;
        }
    }
    if (!out) {
        fprintf(stderr, "usage: %s OUTPUT.h5 [--dump-raw DIR]\n", argv[0]);
        return 2;
    }

    gen_params p;
    gen_params_default(&p);

    static const char *const kp_low[] = GEN_LOW_KEYPOINTS;
    static const int seg_low[] = GEN_LOW_SEGMENTS;
    static const char *const kp_giant[] = GEN_GIANT_KEYPOINTS;
    static const int seg_giant[] = GEN_GIANT_SEGMENTS;
    static const char *const kp_sg[] = GEN_SG_KEYPOINTS;
    static const int seg_sg[] = GEN_SG_SEGMENTS;
    const hrt_route_spec routes[GEN_N_ROUTES] = {
        {"low_mass", GEN_LOW_NKP, kp_low, seg_low},
        {"giant", GEN_GIANT_NKP, kp_giant, seg_giant},
        {"supergiant", GEN_SG_NKP, kp_sg, seg_sg},
    };

    hrt_error err = {0};
    hrt_builder *b = NULL;
    if (hrt_builder_new(GEN_N_ROUTES, routes, p.z_sun, &b, &err) != HRT_OK) {
        fprintf(stderr, "gen_grid: %s\n", err.message);
        return 1;
    }
    int status = 0;
    char version[64];
    snprintf(version, sizeof version, "hrtrail-gen-grid %s", HRT_VERSION_STRING);
    if (hrt_builder_set_attribute(b, "created_by", version, &err) != HRT_OK ||
        hrt_builder_set_attribute(b, "source",
                                  "semi-analytic model from published relations (tracks/MODEL.md); no "
                                  "evolution-code output used",
                                  &err) != HRT_OK ||
        hrt_builder_set_attribute(b, "description",
                                  "hrtrail default grid: 0.08-150 Msun, Z = 0.0001-0.03, zero-age main "
                                  "sequence to white-dwarf cooling onset or core collapse. A "
                                  "semi-analytic model for population-level work; accuracy in "
                                  "tracks/MODEL.md.",
                                  &err) != HRT_OK) {
        fprintf(stderr, "gen_grid: %s\n", err.message);
        hrt_builder_free(b);
        return 1;
    }

    size_t n_tracks = 0;
    for (size_t iz = 0; iz < N_Z && !status; iz++) {
        double z = grid_z[iz], bnd[2], masses[160];
        gen_route_boundaries(&p, z, bnd);
        size_t nm = masses_for_z(&p, z, masses, 160);
        for (size_t im = 0; im < nm && !status; im++) {
            gen_track t;
            char msg[256];
            if (gen_track_compute(&p, masses[im], z, route_of(bnd, masses[im]), &t, msg, sizeof msg)) {
                fprintf(stderr, "gen_grid: %s\n", msg);
                status = 1;
            } else if (dump && dump_raw(dump, &t)) {
                fprintf(stderr, "gen_grid: cannot write raw track to %s\n", dump);
                status = 1;
            } else if (add_track(b, &t, &err) != HRT_OK) {
                fprintf(stderr, "gen_grid: M = %g, Z = %g: %s\n", masses[im], z, err.message);
                status = 1;
            }
            n_tracks++;
            gen_track_free(&t);
        }
        if (!status && hrt_builder_set_route_boundaries(b, z, bnd, &err) != HRT_OK) {
            fprintf(stderr, "gen_grid: %s\n", err.message);
            status = 1;
        }
    }
    if (!status && hrt_builder_write(b, out, &err) != HRT_OK) {
        fprintf(stderr, "gen_grid: %s\n", err.message);
        status = 1;
    }
    hrt_builder_free(b);
    (void)n_tracks;
    return status;
}
