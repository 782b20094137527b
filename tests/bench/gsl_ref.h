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
#endif
