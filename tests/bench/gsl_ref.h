/* A straightforward C/GSL version of hrt_eval's query (gsl_ref.c), the
 * benchmark's same-run reference. */
#ifndef HRTRAIL_BENCH_GSL_REF_H
#define HRTRAIL_BENCH_GSL_REF_H
#include <stddef.h>

#include "hrtrail.h"

typedef struct gsl_ref gsl_ref;
/* The route with the most tracks at group iz; NULL if it has fewer than 3. */
gsl_ref *gsl_ref_new(const hrt_grid *g, size_t iz);
void gsl_ref_free(gsl_ref *r);
void gsl_ref_mass_range(const gsl_ref *r, double *lo, double *hi);
void gsl_ref_age_range(const gsl_ref *r, double m, double *lt0, double *lt1);
void gsl_ref_eval(const gsl_ref *r, size_t n, const double *mass, const double *age_yr, double *out);
/* Intervals between the route's tracks where log age blends towards
 * linear (lambda < 1 at one EEP or more), and the smallest lambda. */
size_t gsl_ref_n_blended(const gsl_ref *r, double *lambda_min);

/* How closely hrt_eval and the reference agree.  Both compute the same
 * documented method in double precision; they differ only in lambda, the
 * largest blend that keeps log age increasing: it is decided by EEP pairs
 * whose log ages differ by ~1e-8 dex (thermally pulsing AGB), where the
 * blended difference touches zero to rounding (1e-15), so each side's
 * lambda is good to ~1e-8 (0.2-4e-8 apart on the default grid), which
 * moves log age by <= 2e-10 and the steepest quantity (log g) by 1.2e-8
 * dex.  Tolerances: 5e-8 dex for the logarithmic quantities, 1e-9 of the
 * initial mass for the masses. */
#define GSL_REF_TOL_LOG 5e-8
#define GSL_REF_TOL_MASS 1e-9
/* Compare n states with the reference's out (gsl_ref_eval): the largest
 * difference of each of the 7 quantities (masses as fractions of the
 * initial mass) over the stars both answer, their number in *n_both, and
 * the number of stars beyond the tolerances (function value). */
size_t gsl_ref_compare(size_t n, const hrt_state *s, const double *out, double worst[7], size_t *n_both);
#endif
