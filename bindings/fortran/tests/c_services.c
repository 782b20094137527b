/* The C side of the Fortran test of populations, fits, forecasts, isochrone
 * options and routes (test_services.f90): the layout of every public struct
 * the module mirrors, as the C compiler sees it, and the same library calls
 * made straight from C into caller buffers, for bit-for-bit comparison. */
#include <math.h>
#include <stddef.h>
#include <string.h>

#include "hrtrail.h"

/* Every field of every struct the module mirrors (beyond hrt_state, hrt_error
 * and hrt_phase_span, which test_fortran.f90 checks): "type.field". */
#define FIELD_(t, f) {#t "." #f, offsetof(t, f), sizeof(((t *)0)->f)},
#define SERVICE_FIELDS(X)                                                                                   \
    X(hrt_isochrone_options, phases) X(hrt_isochrone_options, max_dlog_l) X(hrt_isochrone_options, reserved) \
    X(hrt_route_spec, name) X(hrt_route_spec, n_keypoints) X(hrt_route_spec, keypoint_names)               \
    X(hrt_route_spec, segment_samples)                                                                      \
    X(hrt_imf, kind) X(hrt_imf, n_seg) X(hrt_imf, m_lo_msun) X(hrt_imf, m_hi_msun) X(hrt_imf, alpha)       \
    X(hrt_imf, seg_lognormal) X(hrt_imf, seg_lo) X(hrt_imf, seg_hi) X(hrt_imf, seg_a) X(hrt_imf, seg_s)    \
    X(hrt_imf, seg_amp) X(hrt_imf, seg_c0) X(hrt_imf, seg_c1) X(hrt_imf, seg_cum) X(hrt_imf, norm)         \
    X(hrt_sfh, kind) X(hrt_sfh, reserved_) X(hrt_sfh, t_start_yr) X(hrt_sfh, t_end_yr) X(hrt_sfh, tau_yr)  \
    X(hrt_sfh, n_table) X(hrt_sfh, table_t_yr) X(hrt_sfh, table_rate)                                       \
    X(hrt_zdist, kind) X(hrt_zdist, reserved_) X(hrt_zdist, z) X(hrt_zdist, z_lo) X(hrt_zdist, z_hi)       \
    X(hrt_zdist, sigma_dex)                                                                                 \
    X(hrt_pop_spec, imf) X(hrt_pop_spec, sfh) X(hrt_pop_spec, zdist) X(hrt_pop_spec, n_stars)              \
    X(hrt_pop_spec, seed) X(hrt_pop_spec, chunk_size)                                                       \
    X(hrt_pop_sum, hi) X(hrt_pop_sum, lo)                                                                   \
    X(hrt_pop_hr, log_teff_k_lo) X(hrt_pop_hr, log_teff_k_hi) X(hrt_pop_hr, log_l_lsun_lo)                 \
    X(hrt_pop_hr, log_l_lsun_hi) X(hrt_pop_hr, nx) X(hrt_pop_hr, ny)                                        \
    X(hrt_pop_summary, struct_size) X(hrt_pop_summary, age_yr) X(hrt_pop_summary, n_drawn)                 \
    X(hrt_pop_summary, n_unborn) X(hrt_pop_summary, n_evaluated) X(hrt_pop_summary, n_status)              \
    X(hrt_pop_summary, failed_initial_mass_msun) X(hrt_pop_summary, n_phase)                               \
    X(hrt_pop_summary, phase_initial_mass_msun) X(hrt_pop_summary, phase_mass_msun)                        \
    X(hrt_pop_summary, phase_l_lsun) X(hrt_pop_summary, n_remnant) X(hrt_pop_summary, remnant_mass_msun)   \
    X(hrt_pop_summary, initial_mass_msun) X(hrt_pop_summary, mass_msun) X(hrt_pop_summary, l_lsun)         \
    X(hrt_pop_summary, ms_max_initial_mass_msun) X(hrt_pop_summary, evolved_min_initial_mass_msun)         \
    X(hrt_pop_summary, hr) X(hrt_pop_summary, hr_outside) X(hrt_pop_summary, hr_count)                     \
    X(hrt_fit_model_options, mass_prior) X(hrt_fit_model_options, reserved_)                               \
    X(hrt_fit_model_options, mass_min_msun) X(hrt_fit_model_options, mass_max_msun)                        \
    X(hrt_fit_model_options, age_max_yr) X(hrt_fit_model_options, feh_min) X(hrt_fit_model_options, feh_max) \
    X(hrt_fit_model_options, feh_step_dex) X(hrt_fit_model_options, log_mass_step_dex)                     \
    X(hrt_fit_obs, teff_k) X(hrt_fit_obs, teff_k_sigma) X(hrt_fit_obs, log_l_lsun)                         \
    X(hrt_fit_obs, log_l_lsun_sigma) X(hrt_fit_obs, feh) X(hrt_fit_obs, feh_sigma) X(hrt_fit_obs, log_g_cgs) \
    X(hrt_fit_obs, log_g_cgs_sigma) X(hrt_fit_obs, flux_w_m2) X(hrt_fit_obs, flux_w_m2_sigma)              \
    X(hrt_fit_obs, mbol) X(hrt_fit_obs, mbol_sigma) X(hrt_fit_obs, distance_pc)                            \
    X(hrt_fit_obs, distance_pc_sigma) X(hrt_fit_obs, parallax_mas) X(hrt_fit_obs, parallax_mas_sigma)      \
    X(hrt_fit_interval, median) X(hrt_fit_interval, lo) X(hrt_fit_interval, hi)                            \
    X(hrt_fit_sample, initial_mass_msun) X(hrt_fit_sample, z) X(hrt_fit_sample, age_yr)                    \
    X(hrt_fit_sample, log_l_lsun) X(hrt_fit_sample, log_teff_k) X(hrt_fit_sample, phase)                   \
    X(hrt_fit_sample, reserved_)                                                                            \
    X(hrt_fit_result, struct_size) X(hrt_fit_result, status) X(hrt_fit_result, flags)                      \
    X(hrt_fit_result, phase) X(hrt_fit_result, phase_second) X(hrt_fit_result, n_obs)                      \
    X(hrt_fit_result, initial_mass_msun) X(hrt_fit_result, age_yr) X(hrt_fit_result, feh)                  \
    X(hrt_fit_result, mass_msun) X(hrt_fit_result, r_rsun) X(hrt_fit_result, log_l_lsun)                   \
    X(hrt_fit_result, teff_k) X(hrt_fit_result, log_g_cgs) X(hrt_fit_result, distance_pc)                  \
    X(hrt_fit_result, phase_prob) X(hrt_fit_result, phase_mass_msun) X(hrt_fit_result, phase_age_yr)       \
    X(hrt_fit_result, chi2_min) X(hrt_fit_result, n_eff) X(hrt_fit_result, n_points)                       \
    X(hrt_fit_result, reserved)                                                                             \
    X(hrt_forecast_state, dt_yr) X(hrt_forecast_state, phase) X(hrt_forecast_state, reserved_)             \
    X(hrt_forecast_state, phase_prob) X(hrt_forecast_state, luminous_frac) X(hrt_forecast_state, log_l_lsun) \
    X(hrt_forecast_state, teff_k) X(hrt_forecast_state, r_rsun) X(hrt_forecast_state, mass_msun)           \
    X(hrt_forecast_event, name) X(hrt_forecast_event, prob) X(hrt_forecast_event, in_yr)                   \
    X(hrt_forecast_phase, prob) X(hrt_forecast_phase, start_in_yr) X(hrt_forecast_phase, duration_yr)      \
    X(hrt_forecast_result, struct_size) X(hrt_forecast_result, status) X(hrt_forecast_result, remnant)     \
    X(hrt_forecast_result, phase_now) X(hrt_forecast_result, n_samples)                                    \
    X(hrt_forecast_result, phase_now_prob) X(hrt_forecast_result, ms_prob)                                 \
    X(hrt_forecast_result, ms_left_yr) X(hrt_forecast_result, end_in_yr) X(hrt_forecast_result, future)    \
    X(hrt_forecast_result, n_events) X(hrt_forecast_result, events) X(hrt_forecast_result, remnant_prob)   \
    X(hrt_forecast_result, remnant_mass_msun) X(hrt_forecast_result, reserved)                           \
    X(hrt_ms_options, age_min_yr) X(hrt_ms_options, age_max_yr) X(hrt_ms_options, imf_alpha)                \
    X(hrt_ms_options, n_masses) X(hrt_ms_options, n_ages) X(hrt_ms_options, reserved)                       \
    X(hrt_ms_value, median) X(hrt_ms_value, lo) X(hrt_ms_value, hi) X(hrt_ms_value, band_lo)                \
    X(hrt_ms_value, band_hi) X(hrt_ms_estimate, status) X(hrt_ms_estimate, n_models) X(hrt_ms_estimate, z)  \
    X(hrt_ms_estimate, log_l_lsun) X(hrt_ms_estimate, log_teff_k) X(hrt_ms_estimate, log_r_rsun)            \
    X(hrt_ms_estimate, log_g_cgs) X(hrt_ms_estimate, mass_msun) X(hrt_ms_estimate, initial_mass_msun)       \
    X(hrt_ms_estimate, age_yr) X(hrt_ms_estimate, reserved) X(hrt_ms_distance_result, status)               \
    X(hrt_ms_distance_result, n_models) X(hrt_ms_distance_result, distance_pc)                              \
    X(hrt_ms_distance_result, parallax_mas) X(hrt_ms_distance_result, reserved)                             \
    X(hrt_import_track_report, file) X(hrt_import_track_report, status) X(hrt_import_track_report, line)  \
    X(hrt_import_track_report, column) X(hrt_import_track_report, message) X(hrt_import_track_report, notes) \
    X(hrt_import_track_report, initial_mass_msun) X(hrt_import_track_report, z)                         \
    X(hrt_import_track_report, route) X(hrt_import_track_report, truncated)                             \
    X(hrt_import_track_report, remnant) X(hrt_import_track_report, remnant_mass_msun)                   \
    X(hrt_import_track_report, n_rows) X(hrt_import_track_report, n_rows_dropped)                       \
    X(hrt_import_track_report, n_keypoints) X(hrt_import_track_report, keypoint_age_yr)                 \
    X(hrt_import_track_report, keypoint_line) X(hrt_import_track_report, keypoint_how)                  \
    X(hrt_import_track_report, missing)                                                                   \
    X(hrt_import_row_report, line) X(hrt_import_row_report, column) X(hrt_import_row_report, code)      \
    X(hrt_import_row_report, message)                                                                   \
    X(hrt_accuracy_row, interp) X(hrt_accuracy_row, route) X(hrt_accuracy_row, phase)                   \
    X(hrt_accuracy_row, n_points) X(hrt_accuracy_row, n_tracks) X(hrt_accuracy_row, median)             \
    X(hrt_accuracy_row, p95) X(hrt_accuracy_row, max) X(hrt_accuracy_row, worst_mass_msun)              \
    X(hrt_accuracy_row, worst_z) X(hrt_accuracy_row, worst_eep) X(hrt_accuracy_row, wd_mass_max_msun)   \
    X(hrt_interp_error, log_l_dex) X(hrt_interp_error, log_teff_dex) X(hrt_interp_error, log_age_dex)   \
    X(hrt_interp_error, n_tracks) X(hrt_interp_error, reserved)

static const struct {
    const char *name;
    size_t offset, size;
} fields[] = {SERVICE_FIELDS(FIELD_)};

#define SIZE_(t) {#t, sizeof(t)},
static const struct {
    const char *name;
    size_t size;
} types[] = {SIZE_(hrt_isochrone_options) SIZE_(hrt_route_spec) SIZE_(hrt_imf) SIZE_(hrt_sfh) SIZE_(hrt_zdist)
                 SIZE_(hrt_pop_spec) SIZE_(hrt_pop_sum) SIZE_(hrt_pop_hr) SIZE_(hrt_pop_summary)
                     SIZE_(hrt_fit_model_options) SIZE_(hrt_fit_obs) SIZE_(hrt_fit_interval) SIZE_(hrt_fit_sample)
                         SIZE_(hrt_fit_result) SIZE_(hrt_forecast_state) SIZE_(hrt_forecast_event)
                             SIZE_(hrt_forecast_phase) SIZE_(hrt_forecast_result)
                                 SIZE_(hrt_import_track_report) SIZE_(hrt_import_row_report)
                                     SIZE_(hrt_ms_options) SIZE_(hrt_ms_value) SIZE_(hrt_ms_estimate)
                                         SIZE_(hrt_ms_distance_result) SIZE_(hrt_accuracy_row)
                                             SIZE_(hrt_interp_error)};

/* The header's constants that the module writes by hand, by name. */
#define CONST_(c) {#c, (double)(c)},
static const struct {
    const char *name;
    double value;
} constants[] = {CONST_(HRT_IMF_SALPETER_1955) CONST_(HRT_IMF_KROUPA_2001) CONST_(HRT_IMF_CHABRIER_2003_SYSTEM)
                     CONST_(HRT_IMF_POWER_LAW) CONST_(HRT_SFH_BURST) CONST_(HRT_SFH_CONSTANT)
                         CONST_(HRT_SFH_EXPONENTIAL) CONST_(HRT_SFH_TABLE) CONST_(HRT_ZDIST_FIXED)
                             CONST_(HRT_ZDIST_LOG_UNIFORM) CONST_(HRT_ZDIST_LOG_NORMAL) CONST_(HRT_IMF_MAX_SEGMENTS)
                                 CONST_(HRT_POP_MAX_STATUS) CONST_(HRT_POP_HR_MAX_BINS) CONST_(HRT_CATALOGUE_CSV) CONST_(HRT_CATALOGUE_HDF5)
                                     CONST_(HRT_FIT_PRIOR_KROUPA_2001) CONST_(HRT_FIT_PRIOR_CHABRIER_2003)
                                         CONST_(HRT_FIT_PRIOR_LOG_FLAT) CONST_(HRT_FIT_MULTIMODAL)
                                             CONST_(HRT_FIT_MASS_EDGE) CONST_(HRT_FIT_AGE_LIMIT)
                                                 CONST_(HRT_FIT_FEH_EDGE) CONST_(HRT_FIT_POOR_MATCH)
                                                     CONST_(HRT_FIT_FEW_POINTS) CONST_(HRT_FIT_MULTIMODAL_PROB)
                                                         CONST_(HRT_FORECAST_MAX_EVENTS) CONST_(HRT_IMPORT_MAX_KP)
                                                             CONST_(HRT_ISOCHRONE_MAX_DLOG_L)
                                                                 CONST_(HRT_PHASES_REMNANT)
                                                                     CONST_(HRT_ACCURACY_NQ)};

int svc_n_constants(void);
int svc_constant(const char *name, double *value);

int svc_n_constants(void) { return (int)(sizeof constants / sizeof constants[0]); }

/* Value of a header constant by name (as a double: every one is exact in a double); -1 if not in the table. */
int svc_constant(const char *name, double *value)
{
    for (int i = 0; i < svc_n_constants(); i++)
        if (strcmp(constants[i].name, name) == 0) {
            *value = constants[i].value;
            return 0;
        }
    return -1;
}

int svc_n_fields(void);
int svc_field(const char *name, size_t *offset, size_t *size);
int svc_n_types(void);
int svc_type(const char *name, size_t *size);
int svc_imf_init(hrt_imf *imf, int kind, double lo, double hi, double alpha);
int svc_pop_draw(const hrt_pop_spec *spec, uint64_t chunk, size_t cap, double *m, double *z, double *t, size_t *n);
int svc_pop_run(const char *path, const hrt_pop_spec *spec, size_t n_ages, const double *ages, const hrt_pop_hr *hr,
                hrt_pop_summary *sums, char *msg);
int svc_pop_add(const char *path, double age, size_t n, const double *m, const double *z, const double *a,
                const hrt_pop_hr *hr, hrt_pop_summary *sum);
int svc_isochrone_with(const char *path, double age, double z, const hrt_isochrone_options *o, size_t cap,
                       hrt_state *out, size_t *n);
int svc_fit(const char *path, const hrt_fit_model_options *o, const hrt_fit_obs *obs, uint64_t seed,
            size_t n_samples, hrt_fit_sample *samples, hrt_fit_result *res, char *msg);
int svc_forecast(const char *path, size_t n, const hrt_fit_sample *samples, size_t n_times, const double *dt,
                 hrt_forecast_state *states, hrt_forecast_result *res, char *msg);
int svc_default_route(size_t r, char *name, size_t *n_keypoints, char *names, int *segments);

int svc_n_fields(void) { return (int)(sizeof fields / sizeof fields[0]); }
int svc_n_types(void) { return (int)(sizeof types / sizeof types[0]); }

/* Offset and size of "type.field" (NUL-terminated); -1 if the table does not have it. */
int svc_field(const char *name, size_t *offset, size_t *size)
{
    for (int i = 0; i < svc_n_fields(); i++)
        if (strcmp(fields[i].name, name) == 0) {
            *offset = fields[i].offset;
            *size = fields[i].size;
            return 0;
        }
    return -1;
}

/* sizeof a type by name; -1 if the table does not have it. */
int svc_type(const char *name, size_t *size)
{
    for (int i = 0; i < svc_n_types(); i++)
        if (strcmp(types[i].name, name) == 0) {
            *size = types[i].size;
            return 0;
        }
    return -1;
}

static void copy_message(char *msg, int rc, const hrt_error *err)
{
    memset(msg, 0, sizeof err->message);
    if (rc != HRT_OK)
        memcpy(msg, err->message, sizeof err->message);
}

int svc_imf_init(hrt_imf *imf, int kind, double lo, double hi, double alpha)
{
    memset(imf, 0, sizeof *imf);
    return hrt_imf_init(imf, kind, lo, hi, alpha, NULL);
}

int svc_pop_draw(const hrt_pop_spec *spec, uint64_t chunk, size_t cap, double *m, double *z, double *t, size_t *n)
{
    return hrt_pop_draw(spec, chunk, m, z, t, cap, n, NULL);
}

/* Every chunk of the population in one call on one thread, into n_ages fresh summaries. */
int svc_pop_run(const char *path, const hrt_pop_spec *spec, size_t n_ages, const double *ages, const hrt_pop_hr *hr,
                hrt_pop_summary *sums, char *msg)
{
    hrt_grid *g = NULL;
    hrt_error err;
    memset(&err, 0, sizeof err);
    int rc = hrt_grid_open(path, &g, &err);
    for (size_t i = 0; rc == HRT_OK && i < n_ages; i++) {
        memset(&sums[i], 0, sizeof sums[i]);
        rc = hrt_pop_summary_init(&sums[i], ages[i], hr, &err);
    }
    if (rc == HRT_OK)
        rc = hrt_pop_run(g, spec, 0, hrt_pop_n_chunks(spec), 1, n_ages, sums, &err);
    if (g)
        hrt_grid_close(g);
    copy_message(msg, rc, &err);
    return rc;
}

/* hrt_eval of n stars at one age (z per star) added to a fresh summary at that age. */
int svc_pop_add(const char *path, double age, size_t n, const double *m, const double *z, const double *a,
                const hrt_pop_hr *hr, hrt_pop_summary *sum)
{
    hrt_grid *g = NULL;
    hrt_state states[512];
    if (n > 512)
        return HRT_E_BUFFER;
    int rc = hrt_grid_open(path, &g, NULL);
    if (rc != HRT_OK)
        return rc;
    hrt_eval(g, n, m, z, 0.0, a, states, NULL);
    memset(sum, 0, sizeof *sum);
    rc = hrt_pop_summary_init(sum, age, hr, NULL);
    if (rc == HRT_OK)
        rc = hrt_pop_summary_add(sum, states, n, NULL);
    hrt_grid_close(g);
    return rc;
}

int svc_isochrone_with(const char *path, double age, double z, const hrt_isochrone_options *o, size_t cap,
                       hrt_state *out, size_t *n)
{
    hrt_grid *g = NULL;
    int rc = hrt_grid_open(path, &g, NULL);
    if (rc != HRT_OK)
        return rc;
    rc = hrt_isochrone_with(g, age, z, o, out, cap, n, NULL);
    hrt_grid_close(g);
    return rc;
}

/* A model of its own with options o, then one fit. */
int svc_fit(const char *path, const hrt_fit_model_options *o, const hrt_fit_obs *obs, uint64_t seed,
            size_t n_samples, hrt_fit_sample *samples, hrt_fit_result *res, char *msg)
{
    hrt_grid *g = NULL;
    hrt_fit_model *model = NULL;
    hrt_error err;
    memset(&err, 0, sizeof err);
    memset(res, 0, sizeof *res);
    if (n_samples)
        memset(samples, 0, n_samples * sizeof *samples);
    int rc = hrt_grid_open(path, &g, &err);
    if (rc == HRT_OK) {
        rc = hrt_fit_model_new(g, o, &model, &err);
        if (rc == HRT_OK)
            rc = hrt_fit_star(model, obs, seed, n_samples, n_samples ? samples : NULL, res, &err);
        hrt_fit_model_free(model);
        hrt_grid_close(g);
    }
    copy_message(msg, rc, &err);
    return rc;
}

int svc_forecast(const char *path, size_t n, const hrt_fit_sample *samples, size_t n_times, const double *dt,
                 hrt_forecast_state *states, hrt_forecast_result *res, char *msg)
{
    hrt_grid *g = NULL;
    hrt_error err;
    memset(&err, 0, sizeof err);
    memset(res, 0, sizeof *res);
    if (n_times)
        memset(states, 0, n_times * sizeof *states);
    int rc = hrt_grid_open(path, &g, &err);
    if (rc == HRT_OK) {
        rc = hrt_forecast(g, n, samples, n_times, n_times ? dt : NULL, n_times ? states : NULL, res, &err);
        hrt_grid_close(g);
    }
    copy_message(msg, rc, &err);
    return rc;
}

/* Route r of the default layout: name (64 bytes), keypoint names (HRT_IMPORT_MAX_KP x 32 bytes, each
 * NUL-terminated), segment EEP counts. */
int svc_default_route(size_t r, char *name, size_t *n_keypoints, char *names, int *segments)
{
    hrt_route_spec spec;
    const char *kp[HRT_IMPORT_MAX_KP];
    int rc = hrt_default_route(r, &spec, kp);
    if (rc != HRT_OK)
        return rc;
    memset(name, 0, 64);
    strncpy(name, spec.name, 63);
    *n_keypoints = spec.n_keypoints;
    memset(names, 0, HRT_IMPORT_MAX_KP * 32);
    for (size_t k = 0; k < spec.n_keypoints; k++) {
        strncpy(names + 32 * k, spec.keypoint_names[k], 31);
        if (k + 1 < spec.n_keypoints)
            segments[k] = spec.segment_samples[k];
    }
    return HRT_OK;
}

int svc_import(size_t n, const char *paths, size_t width, const char *map, const char *out,
               hrt_import_track_report *reports, char *msg);

/* Import n files (paths: n names of width bytes each, NUL-terminated) with a column map, forced
 * (routes may collapse), into out; the reports of every file (their file pointers cleared, which
 * point into this import) and the error message. */
int svc_import(size_t n, const char *paths, size_t width, const char *map, const char *out,
               hrt_import_track_report *reports, char *msg)
{
    hrt_import *imp = NULL;
    hrt_error err;
    memset(&err, 0, sizeof err);
    int rc = hrt_import_new(&imp, &err);
    if (rc == HRT_OK)
        rc = hrt_import_map(imp, map, &err);
    if (rc == HRT_OK)
        rc = hrt_import_set_force(imp, 1);
    if (rc == HRT_OK) /* the grid's own tracks start on the birthline */
        rc = hrt_import_set_pre_ms(imp, 1, &err);
    for (size_t i = 0; rc == HRT_OK && i < n; i++)
        rc = hrt_import_add_file(imp, paths + i * width, NAN, &err);
    if (rc == HRT_OK)
        rc = hrt_import_run(imp, out, &err);
    for (size_t i = 0; imp && i < n; i++) {
        memset(&reports[i], 0, sizeof reports[i]);
        hrt_import_track(imp, i, &reports[i]);
        reports[i].file = NULL;
    }
    hrt_import_free(imp);
    copy_message(msg, rc, &err);
    return rc;
}
