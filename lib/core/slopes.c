/* Knot slopes of the interpolation types (the cubic Hermite weights are
 * inline in core.h).
 *
 * Every cubic GSL type (steffen, akima, cspline) is a piecewise cubic fixed
 * by the values and the slopes at the knots, so an interpolant is stored as
 * (value, slope) pairs and evaluated as a cubic Hermite.  The slopes are
 * computed in closed form with the same formulas as GSL 2.7, across initial
 * mass at open time (trail_slopes_work, any number of knots) and across
 * [Fe/H] at query time (trail_slopes_local, stack scratch).  GSL's own
 * derivative at every knot (trail_slopes_gsl) is kept as the reference:
 * tests/test_core.c compares both with it on random data. */
#include <math.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_interp.h>

#include "core/core.h"

size_t trail_interp_min_size(int interp)
{
    switch (interp) {
    case HRT_INTERP_LINEAR:
        return 2;
    case HRT_INTERP_AKIMA:
        return 5;
    default: /* steffen, cspline */
        return 3;
    }
}

/* Slopes at the knots of a GSL interpolant: `obj` is a gsl_interp allocated
 * for the type trail_interp_effective(interp, n) and size n.  x strictly
 * increasing and y finite were validated by the caller, so no GSL_ERROR
 * path can be reached. */
int trail_slopes_gsl(size_t n, const double *x, const double *y, double *d, void *obj)
{
    gsl_interp *it = obj;
    if (gsl_interp_init(it, x, y, n) != GSL_SUCCESS)
        return HRT_E_INTERNAL;
    for (size_t i = 0; i < n; i++) {
        if (gsl_interp_eval_deriv_e(it, x, y, x[i], NULL, &d[i]) != GSL_SUCCESS)
            return HRT_E_INTERNAL;
    }
    return HRT_OK;
}

/* Steffen 1990 at every knot (trail_steffen_slope, core.h). */
static void slopes_steffen(size_t n, const double *x, const double *y, double *d)
{
    for (size_t i = 0; i < n; i++)
        d[i] = trail_steffen_slope(x, y, n, i);
}

/* Akima 1970 (J. ACM 17, 589) with the two extra secants at each end of
 * GSL's non-periodic gsl_interp_akima: m[-1] = 2 m0 - m1, m[-2] = 3 m0 - 2 m1. */
static void slopes_akima(size_t n, const double *x, const double *y, double *d, double *mm)
{
    double *m = mm + 2; /* mm: n + 2 secants and two more at each end */
    for (size_t i = 0; i + 1 < n; i++)
        m[i] = (y[i + 1] - y[i]) / (x[i + 1] - x[i]);
    m[-2] = 3.0 * m[0] - 2.0 * m[1];
    m[-1] = 2.0 * m[0] - m[1];
    m[n - 1] = 2.0 * m[n - 2] - m[n - 3];
    m[n] = 3.0 * m[n - 2] - 2.0 * m[n - 3];
    for (size_t k = 0; k < n; k++) {
        long i = (long)k;
        double ne = fabs(m[i + 1] - m[i]) + fabs(m[i - 1] - m[i - 2]);
        if (ne == 0.0) {
            d[k] = m[i];
        } else {
            double a = fabs(m[i - 1] - m[i - 2]) / ne;
            d[k] = (1.0 - a) * m[i - 1] + a * m[i];
        }
    }
}

/* Natural cubic spline (second derivative zero at both ends), as GSL's
 * gsl_interp_cspline: tridiagonal system for c = y''/2 at the knots. */
static void slopes_cspline(size_t n, const double *x, const double *y, double *d, double *work)
{
    double *c = work, *cp = work + n, *rp = work + 2 * n; /* work: 3 n */
    size_t sys = n - 2; /* interior knots */
    for (size_t k = 0; k < sys; k++) {
        size_t i = k + 1;
        double h0 = x[i] - x[i - 1], h1 = x[i + 1] - x[i];
        double diag = 2.0 * (h0 + h1);
        double rhs = 3.0 * ((y[i + 1] - y[i]) / h1 - (y[i] - y[i - 1]) / h0);
        double sub = h0, sup = h1;
        if (k == 0) {
            cp[k] = sup / diag;
            rp[k] = rhs / diag;
        } else {
            double den = diag - sub * cp[k - 1];
            cp[k] = sup / den;
            rp[k] = (rhs - sub * rp[k - 1]) / den;
        }
    }
    c[0] = 0.0;
    c[n - 1] = 0.0;
    for (size_t k = sys; k-- > 0;)
        c[k + 1] = rp[k] - (k + 1 < sys ? cp[k] * c[k + 2] : 0.0);
    for (size_t i = 0; i + 1 < n; i++) {
        double h = x[i + 1] - x[i];
        d[i] = (y[i + 1] - y[i]) / h - h * (c[i + 1] + 2.0 * c[i]) / 3.0;
    }
    double h = x[n - 1] - x[n - 2];
    d[n - 1] = (y[n - 1] - y[n - 2]) / h + h * (2.0 * c[n - 1] + c[n - 2]) / 3.0;
}

/* The type actually used for a run of n knots: runs too short for the
 * chosen type fall back to the next simpler one (akima -> steffen -> linear);
 * a 2-knot run is exactly linear. */
int trail_interp_effective(int interp, size_t n)
{
    if (n <= 2 || interp == HRT_INTERP_LINEAR)
        return HRT_INTERP_LINEAR;
    if (n < trail_interp_min_size(interp))
        return HRT_INTERP_STEFFEN;
    return interp;
}

/* Any n; work holds TRAIL_SLOPES_WORK(n) doubles. */
void trail_slopes_work(int interp, size_t n, const double *x, const double *y, double *d, double *work)
{
    if (n < 2) {
        if (n == 1)
            d[0] = 0.0;
        return;
    }
    switch (trail_interp_effective(interp, n)) {
    case HRT_INTERP_AKIMA:
        slopes_akima(n, x, y, d, work);
        break;
    case HRT_INTERP_CSPLINE:
        slopes_cspline(n, x, y, d, work);
        break;
    case HRT_INTERP_STEFFEN:
        slopes_steffen(n, x, y, d);
        break;
    default: /* secant of the interval to the right (left at the last knot) */
        for (size_t i = 0; i < n; i++) {
            size_t a = i + 1 < n ? i : i - 1;
            d[i] = (y[a + 1] - y[a]) / (x[a + 1] - x[a]);
        }
        break;
    }
}

/* n <= TRAIL_MAX_Z + 4 (stack scratch). */
void trail_slopes_local(int interp, size_t n, const double *x, const double *y, double *d)
{
    double work[TRAIL_SLOPES_WORK(TRAIL_MAX_Z + 4)];
    trail_slopes_work(interp, n, x, y, d, work);
}

