/* The rules the values of a grid file obey, checked as the reader reads
 * them (grid_read.c): finite, ordered ages, plausible logs and masses,
 * cores nested in the star. */
#include <math.h>

#include "core/core.h"

/* One value of an EEP quantity inside a track's valid EEPs. */
int trail_check_eep_value(const char *where, const char *name, int q, const trail_file_group *gp, size_t i, size_t j,
                           size_t J, hrt_error *err)
{
    const double *row = gp->q[q] + i * J;
    double v = row[j];
    if (!isfinite(v))
        return trail_set_error(err, HRT_E_FORMAT, "%s/%s[%zu][%zu]: %g inside the track's valid EEPs", where, name, i,
                               j, v);
    if (q == TRAIL_F_LOG_AGE && j > 0 && !(v > row[j - 1]))
        return trail_set_error(err, HRT_E_FORMAT, "%s/%s[%zu][%zu]: %.17g does not exceed the previous EEP's %.17g",
                               where, name, i, j, v, row[j - 1]);
    if (TRAIL_F_IS_MASS(q) && v < 0.0)
        return trail_set_error(err, HRT_E_FORMAT, "%s/%s[%zu][%zu]: negative mass %g", where, name, i, j, v);
    /* Bounds far outside any star, so that the spline slopes and weights
     * cannot overflow to inf and NaN. */
    if (TRAIL_F_IS_MASS(q) && !(v <= TRAIL_MAX_MASS_FACTOR * gp->initial_mass[i]))
        return trail_set_error(err, HRT_E_FORMAT, "%s/%s[%zu][%zu]: %g Msun exceeds %g times the initial mass", where,
                               name, i, j, v, TRAIL_MAX_MASS_FACTOR);
    if (!TRAIL_F_IS_MASS(q) && !(fabs(v) <= TRAIL_MAX_LOG_ABS))
        return trail_set_error(err, HRT_E_FORMAT, "%s/%s[%zu][%zu]: %g is not a plausible log10 value", where, name, i,
                               j, v);
    return HRT_OK;
}

/* Cores nested in the star at every valid EEP (as the builder checks). */
int trail_check_nested_cores(const char *where, const trail_file *f, const trail_file_group *gp, hrt_error *err)
{
    const trail_schema *S = &trail_schema_names;
    size_t J = f->n_eep_max;
    for (size_t i = 0; i < gp->n_mass; i++)
        for (size_t j = 0; j < (size_t)gp->n_eep[i]; j++) {
            double m = gp->q[TRAIL_F_MASS][i * J + j], he = gp->q[TRAIL_F_HE_CORE][i * J + j],
                   co = gp->q[TRAIL_F_CO_CORE][i * J + j];
            if (he > m * (1.0 + TRAIL_CORE_REL_TOL))
                return trail_set_error(err, HRT_E_FORMAT, "%s/%s[%zu][%zu]: %g Msun exceeds the star's %g", where,
                                       trail_name_in(&S->eep[TRAIL_F_HE_CORE], f->version), i, j, he, m);
            if (co > he * (1.0 + TRAIL_CORE_REL_TOL))
                return trail_set_error(err, HRT_E_FORMAT, "%s/%s[%zu][%zu]: %g Msun exceeds the helium core's %g", where,
                                       trail_name_in(&S->eep[TRAIL_F_CO_CORE], f->version), i, j, co, he);
        }
    return HRT_OK;
}
