/* Private: what the fit (lib/fit/posterior.c) and the forecast
 * (lib/fit/forecast.c) report alike: intervals of a posterior, the most
 * probable phase, and the status their result structs record. */
#ifndef HRTRAIL_LIB_FIT_INTERVALS_H
#define HRTRAIL_LIB_FIT_INTERVALS_H

#include <math.h>
#include <stddef.h>

#include "hrtrail.h"
#include "util/util.h"

/* The central 68.27 % interval: Phi(-1) and Phi(+1) of the unit normal. */
#define TRAIL_FIT_P_LO 0.158655253931457
#define TRAIL_FIT_P_HI 0.841344746068543

/* Median and 15.87/84.13 % quantiles of n values (sorts v in place), linear
 * between order statistics; all NaN when n is 0. */
hrt_fit_interval trail_fit_sample_quantiles(double *v, size_t n);

/* The interval of nothing: every point NaN. */
static inline hrt_fit_interval trail_fit_no_interval(void)
{
    hrt_fit_interval r = {NAN, NAN, NAN};
    return r;
}

/* Index of the largest of p[0..n-1], the first of equals: the most
 * probable phase (or remnant) of a result. */
static inline int trail_fit_argmax(const double *p, int n)
{
    int b = 0;
    for (int i = 1; i < n; i++)
        if (p[i] > p[b])
            b = i;
    return b;
}

/* Record rc as the status of a result and return it; success clears err. */
static inline int trail_fit_finish(int32_t *status, int rc, hrt_error *err)
{
    *status = rc;
    if (rc == HRT_OK && err)
        trail_set_error(err, HRT_OK, NULL);
    return rc;
}

#endif
