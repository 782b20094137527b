/* The rules the values of a grid file obey, checked as the reader reads
 * them (grid_read.c): finite, ordered ages, plausible logs and masses,
 * cores nested in the star, checksums on every numeric dataset. */
#include <math.h>
#include <stdio.h>

#include <hdf5.h>

#include "core/core.h"
#include "core/h5read.h"

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

/* Every valid EEP of track i (0 .. n_eep[i] - 1) of quantity q: the rules
 * of trail_check_eep_value in one pass, which words the first failure. */
int trail_check_eep_row(const char *where, const char *name, int q, const trail_file_group *gp, size_t i, size_t J,
                        hrt_error *err)
{
    const double *row = gp->q[q] + i * J;
    size_t n = (size_t)gp->n_eep[i];
    int ok = 1;
    double mass_max = TRAIL_MAX_MASS_FACTOR * gp->initial_mass[i];
    /* one branch-free loop per kind of quantity (they vectorise); NaN
     * fails every comparison: !(v >= lo && v <= hi) */
    if (TRAIL_F_IS_MASS(q)) {
        for (size_t j = 0; j < n; j++)
            ok &= (row[j] >= 0.0) & (row[j] <= mass_max); /* mass_max is finite: so is v */
    } else {
        for (size_t j = 0; j < n; j++)
            ok &= fabs(row[j]) <= TRAIL_MAX_LOG_ABS;
    }
    if (q == TRAIL_F_LOG_AGE)
        for (size_t j = 1; j < n; j++)
            ok &= row[j] > row[j - 1];
    for (size_t j = 0; !ok && j < n; j++) {
        int rc = trail_check_eep_value(where, name, q, gp, i, j, J, err);
        if (rc != HRT_OK)
            return rc;
    }
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

/* Format 2 stores every numeric dataset with a Fletcher-32 checksum, which
 * HDF5 verifies on each read: checked last, so that the other faults of a
 * file are named first. */
static int require_checksum(hid_t loc, const char *where, const char *name, hrt_error *err)
{
    if (trail_h5_link(loc, name) != 1 || trail_h5_has_checksum(loc, name))
        return HRT_OK; /* absent optional datasets were refused or skipped earlier */
    return trail_set_error(err, HRT_E_FORMAT,
                           "%s/%s: stored without a checksum (HDF5's Fletcher-32 filter), which format 2 requires", where,
                           name);
}

int trail_check_checksums(int64_t fh, const trail_file *f, hrt_error *err)
{
    const trail_schema *S = &trail_schema_names;
    const trail_name *per_track[] = {&S->initial_mass, &S->route, &S->n_eep, &S->remnant, &S->remnant_mass,
                                     &S->boundary, &S->phase};
    int rc = HRT_OK;
    for (size_t iz = 0; iz < f->n_z && rc == HRT_OK; iz++) {
        char where[64];
        snprintf(where, sizeof where, "metallicity/%zu", iz);
        hid_t gr = trail_h5_group(fh, where);
        for (size_t k = 0; k < sizeof per_track / sizeof per_track[0] && rc == HRT_OK; k++)
            rc = require_checksum(gr, where, per_track[k]->v2, err);
        for (int q = 0; q < TRAIL_NF && rc == HRT_OK; q++)
            rc = require_checksum(gr, where, S->eep[q].v2, err);
        if (gr >= 0)
            H5Gclose(gr);
    }
    for (size_t r = 0; r < f->n_routes && rc == HRT_OK; r++) {
        char where[96];
        snprintf(where, sizeof where, "routes/%s", f->routes[r].name);
        hid_t sub = trail_h5_group(fh, where);
        rc = require_checksum(sub, where, "keypoint_eep", err);
        if (rc == HRT_OK)
            rc = require_checksum(sub, where, "segment_samples", err);
        if (sub >= 0)
            H5Gclose(sub);
    }
    for (int t = 0; t < 2 && rc == HRT_OK; t++) {
        const char *group = t ? "remnants" : "phases";
        hid_t g = trail_h5_group(fh, group);
        rc = require_checksum(g, group, "code", err);
        if (g >= 0)
            H5Gclose(g);
    }
    return rc;
}
