/*
 * Worked example, set in an invented survey: the Lantern Deep Survey (invented)
 * has measured five stars of its field "LD-7" (invented values): effective
 * temperature, luminosity or bolometric flux, [Fe/H].  For each star we ask
 * the grid for its mass, age and phase, its HR-diagram distance where only the
 * flux is known, and its future over the next 2 Gyr.
 *
 *   ./fit_survey [GRID.h5]
 */
#include <math.h>
#include <stdio.h>

#include "hrtrail.h"

typedef struct target {
    const char *name;
    double teff_k, teff_k_sigma, log_l_lsun, log_l_lsun_sigma, feh, feh_sigma, log_g_cgs, log_g_cgs_sigma, flux_w_m2,
        flux_w_m2_sigma;
} target;

int main(int argc, char **argv)
{
    static const target field[] = {
        {"LD7-001", 5840, 60, 0.08, 0.02, 0.05, 0.07, NAN, NAN, NAN, NAN},
        {"LD7-002", 6350, 90, 0.62, 0.03, -0.15, 0.08, NAN, NAN, NAN, NAN},
        {"LD7-003", 4650, 80, 1.65, 0.05, 0.0, 0.1, NAN, NAN, NAN, NAN},
        {"LD7-004", 5200, 70, NAN, NAN, -0.3, 0.1, 3.6, 0.1, 3.1e-12, 6e-14},
        {"LD7-005", 9800, 250, 1.62, 0.05, 0.1, 0.1, NAN, NAN, NAN, NAN},
    };
    hrt_grid *g = NULL;
    hrt_fit_model *m = NULL;
    hrt_error err;
    if (hrt_grid_open(argc > 1 ? argv[1] : NULL, &g, &err) != HRT_OK ||
        hrt_fit_model_new(g, NULL, &m, &err) != HRT_OK) {
        fprintf(stderr, "fit_survey: %s\n", err.message);
        hrt_grid_close(g);
        return 1;
    }
    printf("Lantern Deep Survey, field LD-7 (invented): masses, ages and futures\n\n");
    for (size_t i = 0; i < sizeof field / sizeof field[0]; i++) {
        const target *t = &field[i];
        hrt_fit_obs o;
        hrt_fit_obs_init(&o);
        o.teff_k = t->teff_k, o.teff_k_sigma = t->teff_k_sigma;
        o.log_l_lsun = t->log_l_lsun, o.log_l_lsun_sigma = t->log_l_lsun_sigma;
        o.feh = t->feh, o.feh_sigma = t->feh_sigma;
        o.log_g_cgs = t->log_g_cgs, o.log_g_cgs_sigma = t->log_g_cgs_sigma;
        o.flux_w_m2 = t->flux_w_m2, o.flux_w_m2_sigma = t->flux_w_m2_sigma;
        hrt_fit_sample draws[300];
        hrt_fit_result r;
        if (hrt_fit_star(m, &o, 2026 + i, 300, draws, &r, &err) != HRT_OK) {
            printf("%s: no fit (%s)\n\n", t->name, err.message);
            continue;
        }
        printf("%s  Teff %.0f K: M = %.2f (+%.2f -%.2f) Msun, age %.2f (+%.2f -%.2f) Gyr, %s (P %.2f)%s\n", t->name,
               t->teff_k, r.initial_mass_msun.median, r.initial_mass_msun.hi - r.initial_mass_msun.median,
               r.initial_mass_msun.median - r.initial_mass_msun.lo, r.age_yr.median / 1e9,
               (r.age_yr.hi - r.age_yr.median) / 1e9, (r.age_yr.median - r.age_yr.lo) / 1e9, hrt_phase_name(r.phase),
               r.phase_prob[r.phase], r.flags & HRT_FIT_MULTIMODAL ? "  [two phases fit]" : "");
        if (r.flags & HRT_FIT_MULTIMODAL)
            printf("         or %s (P %.2f)\n", hrt_phase_name(r.phase_second), r.phase_prob[r.phase_second]);
        if (!isnan(r.distance_pc.median))
            printf("         HR-diagram distance %.0f pc (%.0f-%.0f)\n", r.distance_pc.median, r.distance_pc.lo,
                   r.distance_pc.hi);
        double dt[2] = {1e7, 2e9};
        hrt_forecast_state fs[2];
        hrt_forecast_result f;
        if (hrt_forecast(g, 300, draws, 2, dt, fs, &f, &err) != HRT_OK) {
            printf("         no forecast (%s)\n\n", err.message);
            continue;
        }
        if (f.ms_prob > 0.5)
            printf("         main sequence for another %.2f Gyr (%.2f-%.2f)\n", f.ms_left_yr.median / 1e9,
                   f.ms_left_yr.lo / 1e9, f.ms_left_yr.hi / 1e9);
        for (size_t k = 0; k < f.n_events; k++)
            if (f.events[k].prob >= 0.5) { /* the soonest keypoint most draws still have ahead */
                printf("         next: %s in %.3g Myr\n", f.events[k].name, f.events[k].in_yr.median / 1e6);
                break;
            }
        printf("         in 2 Gyr: %s (P %.2f); it ends as a %s of %.2f Msun\n\n", hrt_phase_name(fs[1].phase),
               fs[1].phase_prob[fs[1].phase], hrt_remnant_name(f.remnant), f.remnant_mass_msun.median);
    }
    printf("Intervals are 16th-84th percentiles and statistical only: the default grid is a\n"
           "semi-analytic model, so its systematic errors come on top.\n");
    hrt_fit_model_free(m);
    hrt_grid_close(g);
    return 0;
}
