/* The same-run reference kernel of the benchmark: the hrt_eval query
 * written the straightforward way in C with GSL, one gsl_interp (Steffen,
 * as the grid's default type) across log initial mass per EEP and quantity,
 * built once from the grid's own knots (hrt_star_eep_state at each track's
 * mass gives them exactly), and per star a bisection over the EEPs on the
 * interpolated log age, then the two bracketing EEPs' values blended
 * linearly in log age.  One route (the one with the most tracks) at one
 * metallicity group; no remnants, no phases, no extrapolation.  It prints
 * nothing and asserts nothing: bench.c times it beside hrt_eval on the same
 * stars. */
#include <math.h>
#include <stdlib.h>

#include <gsl/gsl_interp.h>

#include "gsl_ref.h"

enum { R_AGE, R_L, R_TEFF, R_MASS, R_HE, R_CO, R_NQ };

struct gsl_ref {
    size_t n, J;            /* tracks of the route, EEPs all of them reach */
    double *x;              /* [n] log10 initial mass */
    double *y;              /* [J][R_NQ][n] knot values */
    gsl_interp **it;        /* [J][R_NQ] */
    double lo, hi;          /* mass range */
};

static double *knots(gsl_ref *r, size_t j, int q) { return r->y + (j * R_NQ + (size_t)q) * r->n; }

gsl_ref *gsl_ref_new(const hrt_grid *g, size_t iz)
{
    double z = hrt_grid_z(g, iz);
    size_t nm = hrt_grid_n_masses(g, iz), best = 0, count[16] = {0};
    for (size_t i = 0; i < nm; i++) {
        int rt = hrt_grid_track_route(g, iz, i);
        if (rt >= 0 && rt < 16 && ++count[rt] > count[best])
            best = (size_t)rt;
    }
    gsl_ref *r = calloc(1, sizeof *r);
    if (!r || count[best] < 3)
        return free(r), NULL;
    r->n = count[best];
    r->x = malloc(r->n * sizeof(double));
    hrt_star **st = malloc(r->n * sizeof *st);
    size_t k = 0;
    r->J = (size_t)-1;
    for (size_t i = 0; i < nm; i++) {
        if (hrt_grid_track_route(g, iz, i) != (int)best)
            continue;
        double m = hrt_grid_mass(g, iz, i);
        r->x[k] = log10(m);
        if (hrt_star_new(g, m, z, &st[k], NULL) != HRT_OK)
            abort();
        size_t ne = hrt_star_n_eep(st[k]);
        r->J = ne < r->J ? ne : r->J;
        k++;
    }
    r->lo = pow(10.0, r->x[0]);
    r->hi = pow(10.0, r->x[r->n - 1]);
    r->y = malloc(r->J * R_NQ * r->n * sizeof(double));
    r->it = malloc(r->J * R_NQ * sizeof *r->it);
    for (size_t i = 0; i < r->n; i++) {
        for (size_t j = 0; j < r->J; j++) {
            hrt_state s;
            hrt_star_eep_state(st[i], j, &s);
            double m0 = hrt_star_mass(st[i]);
            knots(r, j, R_AGE)[i] = log10(s.age_yr);
            knots(r, j, R_L)[i] = s.log_l_lsun;
            knots(r, j, R_TEFF)[i] = s.log_teff_k;
            knots(r, j, R_MASS)[i] = s.mass_msun / m0;
            knots(r, j, R_HE)[i] = s.he_core_mass_msun / m0;
            knots(r, j, R_CO)[i] = s.co_core_mass_msun / m0;
        }
        hrt_star_free(st[i]);
    }
    free(st);
    for (size_t j = 0; j < r->J; j++)
        for (int q = 0; q < R_NQ; q++) {
            gsl_interp *it = gsl_interp_alloc(gsl_interp_steffen, r->n);
            gsl_interp_init(it, r->x, knots(r, j, q), r->n);
            r->it[j * R_NQ + (size_t)q] = it;
        }
    return r;
}

void gsl_ref_free(gsl_ref *r)
{
    if (!r)
        return;
    for (size_t k = 0; k < r->J * R_NQ; k++)
        gsl_interp_free(r->it[k]);
    free(r->it);
    free(r->y);
    free(r->x);
    free(r);
}

void gsl_ref_mass_range(const gsl_ref *r, double *lo, double *hi)
{
    *lo = r->lo;
    *hi = r->hi;
}

static double at(const gsl_ref *r, size_t j, int q, double x)
{
    return gsl_interp_eval(r->it[j * R_NQ + (size_t)q], r->x, knots((gsl_ref *)r, j, q), x, NULL);
}

/* log10 age range of the star of mass m (first and last common EEP). */
void gsl_ref_age_range(const gsl_ref *r, double m, double *lt0, double *lt1)
{
    double x = log10(m);
    *lt0 = at(r, 0, R_AGE, x);
    *lt1 = at(r, r->J - 1, R_AGE, x);
}

/* log L, log Teff, log R, log g, mass, He and CO core of each star
 * (NaN outside the route's tracks); out[7 * i + k]. */
void gsl_ref_eval(const gsl_ref *r, size_t n, const double *mass, const double *age_yr, double *out)
{
    for (size_t i = 0; i < n; i++) {
        double x = log10(mass[i]), lt = log10(age_yr[i]);
        double *o = out + 7 * i;
        size_t lo = 0, hi = r->J - 1;
        double alo = at(r, lo, R_AGE, x), ahi = at(r, hi, R_AGE, x);
        if (!(mass[i] >= r->lo && mass[i] <= r->hi && lt >= alo && lt < ahi)) {
            for (int k = 0; k < 7; k++)
                o[k] = NAN;
            continue;
        }
        while (hi - lo > 1) {
            size_t c = lo + (hi - lo) / 2;
            double ac = at(r, c, R_AGE, x);
            if (ac <= lt) {
                lo = c;
                alo = ac;
            } else {
                hi = c;
                ahi = ac;
            }
        }
        double f = (lt - alo) / (ahi - alo), v[R_NQ];
        for (int q = R_L; q < R_NQ; q++) {
            double v0 = at(r, lo, q, x), v1 = at(r, hi, q, x);
            v[q] = v0 + f * (v1 - v0);
        }
        double m0 = mass[i];
        /* Stefan-Boltzmann with IAU 2015 B3 nominal L and R and the nominal
         * solar Teff 5772 K (IAU 2015 B3), as the library */
        double log_r = 0.5 * v[R_L] - 2.0 * (v[R_TEFF] - log10(5772.0));
        /* log g = log(G M / R^2) with nominal GM_sun (IAU 2015 B3) */
        double log_g = log10(1.3271244e26 * v[R_MASS] * m0) - 2.0 * (log_r + log10(6.957e10));
        o[0] = v[R_L];
        o[1] = v[R_TEFF];
        o[2] = log_r;
        o[3] = log_g;
        o[4] = v[R_MASS] * m0;
        o[5] = v[R_HE] * m0;
        o[6] = v[R_CO] * m0;
    }
}
