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
 * documented method in double precision; they differ only in the lambdas
 * of the log-age blend, each side finding them its own way.  When the rule
 * asked only that log age increase, a lambda was decided where the blended
 * difference of two EEPs touched zero to rounding (1e-15 against steps of
 * ~1e-8 dex on the thermally pulsing AGB), so each side's lambda was good
 * to ~1e-8 and the two agreed to 4.2e-9 dex in log L and 1.2e-8 in log g.
 * With the floor (a rise of 1/1024 of the tracks' smaller step) the
 * lambdas are well conditioned: on the default grid (December 2026) the
 * largest differences are 5.6e-13 dex in log L and 1.3e-12 in log g.  The
 * tolerances stay where they were: 5e-8 dex for the logarithmic
 * quantities, 1e-9 of the initial mass for the masses. */
#define GSL_REF_TOL_LOG 5e-8
#define GSL_REF_TOL_MASS 1e-9
/* Compare n states with the reference's out (gsl_ref_eval): the largest
 * difference of each of the 7 quantities (masses as fractions of the
 * initial mass) over the stars both answer, their number in *n_both, and
 * the number of stars beyond the tolerances (function value). */
size_t gsl_ref_compare(size_t n, const hrt_state *s, const double *out, double worst[7], size_t *n_both);
#endif
