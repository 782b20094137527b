/* Shared pieces of the fuzz targets: a small valid grid made with the
 * library's own builder, and checks every answer of an opened grid must
 * pass whatever the file held. */
#ifndef HRTRAIL_FUZZ_COMMON_H
#define HRTRAIL_FUZZ_COMMON_H

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "hrtrail.h"

/* A crash (caught by libFuzzer with its input saved) when a property fails. */
#define FUZZ_REQUIRE(cond)                                                                                 \
    do {                                                                                                   \
        if (!(cond)) {                                                                                     \
            fprintf(stderr, "fuzz: property failed: %s (%s:%d)\n", #cond, __FILE__, __LINE__);           \
            __builtin_trap();                                                                              \
        }                                                                                                  \
    } while (0)

/* nz (1 or 2) metallicities, two routes (7 and 5 EEPs), five tracks each. */
static int fuzz_small_grid_nz(const char *path, int nz)
{
    const char *kp_a[] = {"zams", "tams", "end"}, *kp_b[] = {"zams", "end"};
    int seg_a[] = {3, 3}, seg_b[] = {4};
    hrt_route_spec routes[2] = {{"lower", 3, kp_a, seg_a}, {"upper", 2, kp_b, seg_b}};
    hrt_builder *b = NULL;
    int rc = hrt_builder_new(2, routes, 0.014, &b, NULL);
    for (int iz = 0; iz < nz && rc == HRT_OK; iz++) {
        double z = iz ? 0.02 : 0.004;
        for (int k = 0; k < 5 && rc == HRT_OK; k++) {
            int r = k < 3, n = r ? 7 : 5;
            double M = r ? 0.8 + 0.5 * k : 4.0 + 3.0 * (k - 3);
            double age[7], l[7], t[7], m[7], he[7], co[7];
            int ph[7];
            for (int j = 0; j < n; j++) {
                double e = (double)j / (n - 1);
                age[j] = 10.0 - 2.5 * log10(M) + 0.5 * e + 0.05 * iz;
                l[j] = 3.5 * log10(M) + e - 0.1 * iz;
                t[j] = 3.7 + 0.15 * log10(M) - 0.05 * e;
                m[j] = M * (1.0 - 0.1 * e);
                he[j] = 0.1 * M * e;
                co[j] = 0.02 * M * e * e;
                ph[j] = e < 0.5 ? HRT_PHASE_MS : (r ? HRT_PHASE_RGB : HRT_PHASE_RSG);
            }
            hrt_track_data td = {M, r ? 0 : 1, r ? HRT_REMNANT_CO_WD : HRT_REMNANT_BH, r ? 0.5 + 0.05 * k : 3.0 + k,
                                 (size_t)n, age, l, t, NULL, m, he, co, ph, 0, NULL};
            rc = hrt_builder_add_eep_track(b, z, &td, NULL);
        }
    }
    if (rc == HRT_OK)
        rc = hrt_builder_set_attribute(b, "description", "fuzz seed grid", NULL);
    if (rc == HRT_OK)
        rc = hrt_builder_write(b, path, NULL);
    hrt_builder_free(b);
    return rc;
}

static inline int fuzz_small_grid(const char *path) { return fuzz_small_grid_nz(path, 2); }

static int fuzz_known_code(int rc) { return rc >= HRT_OK && rc < HRT_STATUS_COUNT_; }

static void fuzz_print_state(const hrt_state *s)
{
    fprintf(stderr, "fuzz: state M=%.17g Z=%.17g age=%.17g status=%d phase=%d route=%d flags=%#x log_l=%g log_teff=%g "
            "log_r=%g mass=%g eep=%g\n", s->initial_mass_msun, s->z, s->age_yr, s->status, s->phase, s->route,
            (unsigned)s->flags, s->log_l_lsun, s->log_teff_k, s->log_r_rsun, s->mass_msun, s->eep);
}

#define FUZZ_REQUIRE_STATE(cond, s)                                                                         \
    do {                                                                                                    \
        if (!(cond))                                                                                        \
            fuzz_print_state(s);                                                                            \
        FUZZ_REQUIRE(cond);                                                                                 \
    } while (0)

static void fuzz_check_state(const hrt_state *s, int rc)
{
    FUZZ_REQUIRE(fuzz_known_code(rc) && s->status == rc);
    FUZZ_REQUIRE(s->struct_size == sizeof *s);
    if (rc != HRT_OK || (s->flags & (HRT_FLAG_DARK | HRT_FLAG_NOT_MODELLED)))
        return;
    /* A good answer is a number and its phase is a phase. */
    FUZZ_REQUIRE_STATE(s->phase > HRT_PHASE_UNKNOWN && s->phase < HRT_PHASE_SLOTS &&
                           hrt_phase_from_key(hrt_phase_key(s->phase)) == s->phase, s);
    FUZZ_REQUIRE_STATE(!isnan(s->log_l_lsun) && !isnan(s->log_teff_k) && !isnan(s->log_r_rsun), s);
    FUZZ_REQUIRE_STATE(!isnan(s->mass_msun), s);
    /* and the remnant it will leave is a remnant kind */
    FUZZ_REQUIRE_STATE(s->remnant >= 0 && s->remnant < HRT_REMNANT_SLOTS &&
                           hrt_remnant_from_key(hrt_remnant_key(s->remnant)) == s->remnant, s);
}

/* Ask an opened grid everything, at masses, metallicities and ages taken
 * from its own tables and around them: nothing may crash, every code must
 * be defined, every good state must hold numbers. */
static void fuzz_exercise(const hrt_grid *g, unsigned seed)
{
    size_t nz = hrt_grid_n_z(g), nr = hrt_grid_n_routes(g);
    FUZZ_REQUIRE(nz >= 1 && nr >= 1);
    for (size_t r = 0; r < nr; r++) {
        FUZZ_REQUIRE(hrt_grid_route_name(g, r) != NULL);
        for (size_t k = 0; k < hrt_grid_route_n_keypoints(g, r); k++)
            FUZZ_REQUIRE(hrt_grid_keypoint_name(g, r, k) != NULL);
    }
    double zlo, zhi;
    FUZZ_REQUIRE(hrt_grid_z_range(g, &zlo, &zhi) == HRT_OK && zlo <= zhi);
    const double zf[4] = {0.0, 0.37, 0.5, 1.0};
    for (int kz = 0; kz < 4; kz++) {
        double z = zlo * pow(zhi / zlo, zf[(kz + seed) % 4]);
        double mlo, mhi;
        if (hrt_grid_mass_range(g, z, &mlo, &mhi) != HRT_OK)
            continue;
        for (int km = 0; km <= 6; km++) {
            double m = mlo * pow(mhi / mlo, km / 6.0);
            hrt_star *s = NULL;
            hrt_error e;
            int rc = hrt_star_new(g, m, z, &s, &e);
            FUZZ_REQUIRE(fuzz_known_code(rc) && (rc == HRT_OK) == (s != NULL));
            if (s) {
                size_t n = hrt_star_n_eep(s), np = 0;
                for (size_t j = 0; j < n; j++) {
                    hrt_state st;
                    fuzz_check_state(&st, hrt_star_eep_state(s, j, &st));
                }
                double end = hrt_star_end_age(s);
                const double ages[5] = {0.0, 1e6, 1e9, end * 0.999, end * 2.0};
                for (int ka = 0; ka < 5; ka++) {
                    hrt_state st, sb;
                    double a = isfinite(ages[ka]) ? ages[ka] : 1e9;
                    int r1 = hrt_star_at(s, a, &st);
                    fuzz_check_state(&st, r1);
                    int r2 = hrt_eval(g, 1, &m, &z, 0.0, &a, &sb, NULL);
                    FUZZ_REQUIRE(r1 == r2 && memcmp(&st, &sb, sizeof st) == 0); /* one answer, two paths */
                }
                hrt_phase_span sp[64];
                FUZZ_REQUIRE(fuzz_known_code(hrt_star_phases(s, sp, 64, &np)));
                for (size_t k = 0; k < hrt_star_n_keypoints(s); k++) {
                    double a;
                    FUZZ_REQUIRE(hrt_star_keypoint_age(s, k, &a) == HRT_OK);
                }
                hrt_star_free(s);
            }
        }
        size_t n = 0;
        int rc = hrt_isochrone(g, 1e9, z, NULL, 0, &n, NULL);
        FUZZ_REQUIRE(rc == HRT_OK || rc == HRT_E_BUFFER || fuzz_known_code(rc));
        if (n > 0 && n < 100000) {
            hrt_state *iso = malloc(n * sizeof *iso);
            size_t n2 = 0;
            if (iso && hrt_isochrone(g, 1e9, z, iso, n, &n2, NULL) == HRT_OK)
                for (size_t k = 0; k < n2; k++)
                    fuzz_check_state(&iso[k], iso[k].status);
            free(iso);
        }
    }
}

#endif
