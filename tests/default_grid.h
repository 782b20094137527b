/*
 * Helpers shared by the checks of the default grid (test_default_grid.c,
 * test_default_grid_ms.c): open the grid, build a star, read its keypoints
 * and states, each failing the check with the library's message.
 */
#ifndef HRTRAIL_TEST_DEFAULT_GRID_H
#define HRTRAIL_TEST_DEFAULT_GRID_H

#include <check.h>
#include <math.h>
#include <string.h>

#include "hrtrail.h"

#define Z_SUN 0.014 /* Asplund et al. (2009, ARA&A 47, 481), from memory */
#define LOG_TSUN log10(HRT_TEFF_SUN_K)

static inline hrt_grid *open_grid(void)
{
    hrt_grid *g = NULL;
    hrt_error err = {0};
    int rc = hrt_grid_open(NULL, &g, &err);
    ck_assert_msg(rc == HRT_OK, "hrt_grid_open(NULL): %s (%s)", err.message, hrt_default_grid_path());
    return g;
}

static inline hrt_star *new_star(const hrt_grid *g, double m, double z)
{
    hrt_star *s = NULL;
    hrt_error err = {0};
    int rc = hrt_star_new(g, m, z, &s, &err);
    ck_assert_msg(rc == HRT_OK, "hrt_star_new(%g, %g): %s", m, z, err.message);
    return s;
}

static inline int keypoint_index(const hrt_star *s, const char *name)
{
    for (size_t k = 0; k < hrt_star_n_keypoints(s); k++)
        if (!strcmp(hrt_star_keypoint_name(s, k), name))
            return (int)k;
    ck_abort_msg("keypoint %s not in the star's route", name);
    return -1;
}

static inline double keypoint_age(const hrt_star *s, const char *name)
{
    double a = NAN;
    ck_assert_int_eq(hrt_star_keypoint_age(s, (size_t)keypoint_index(s, name), &a), HRT_OK);
    return a;
}

static inline hrt_state state_at(const hrt_star *s, double age)
{
    hrt_state st;
    int rc = hrt_star_at(s, age, &st);
    ck_assert_msg(rc == HRT_OK, "hrt_star_at(%g yr): %s", age, hrt_strerror(rc));
    return st;
}

/* State at a keypoint's own EEP. */
static inline hrt_state state_at_keypoint(const hrt_grid *g, const hrt_star *s, const char *name)
{
    long j = hrt_grid_keypoint_eep(g, (size_t)hrt_star_route(s), (size_t)keypoint_index(s, name));
    hrt_state st;
    ck_assert_int_eq(hrt_star_eep_state(s, (size_t)j, &st), HRT_OK);
    return st;
}

static inline int has_phase(const hrt_star *s, int phase)
{
    hrt_phase_span sp[64];
    size_t n = 0;
    ck_assert_int_eq(hrt_star_phases(s, sp, 64, &n), HRT_OK);
    for (size_t i = 0; i < n; i++)
        if (sp[i].phase == phase)
            return 1;
    return 0;
}

#endif
