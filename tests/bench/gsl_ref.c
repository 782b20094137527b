/* The same-run reference kernel of the benchmark: the hrt_eval query
 * written the straightforward way in C with GSL, one gsl_interp (Steffen,
 * as the grid's default type) across log initial mass per EEP and quantity,
 * built once from the grid's own knots (hrt_star_eep_state at each track's
 * mass gives them exactly), and per star a bisection over the EEPs on the
 * interpolated log age, then the two bracketing EEPs' values blended
 * linearly in log age.  One route (the one with the most tracks) at one
 * metallicity group; no remnants, no phases, no extrapolation.
 *
 * Log age across mass follows the library's documented rule
 * (include/hrtrail/core.h, hrt_grid_open_with, note 3): in each interval
 * between two tracks it is lambda_j * (Steffen) + (1 - lambda_j) * (linear)
 * at EEP j, each lambda_j in [0, 1]: 1 unless a pair of consecutive EEPs
 * would not increase (by at least 1/1024 of the smaller of the two tracks'
 * steps there) at some mass of the interval, and then both lowered together
 * until every pair does (lambdas_of).  Without a blend (as
 * this file first was) the reference differed from hrt_eval by up to 0.066
 * dex in log L on 37 % of the benchmark's stars.  The lambdas are found
 * here independently of the library: the cubic pieces come from GSL's own
 * evaluation (value and derivative at the interval's ends), a pair's common
 * lambda is the minimum over the interval of the ratio at which the blend
 * of the two consecutive EEPs' age differences reaches the floor (GSL's Brent
 * minimiser), and a pair's increase under two different lambdas is tested
 * at the critical points GSL's quadratic solver gives, where the library
 * bisects on a positivity test of its own.  It prints nothing and asserts nothing: bench.c times it
 * beside hrt_eval on the same stars, and tests/test_reference_eval.c checks
 * that both agree. */
#include <math.h>
#include <stdlib.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_interp.h>
#include <gsl/gsl_min.h>
#include <gsl/gsl_poly.h>

#include "gsl_ref.h"

enum { R_AGE, R_L, R_TEFF, R_MASS, R_HE, R_CO, R_NQ };

struct gsl_ref {
    size_t n, J;            /* tracks of the route, EEPs all of them reach */
    double *x;              /* [n] log10 initial mass */
    double *y;              /* [J][R_NQ][n] knot values */
    gsl_interp **it;        /* [J][R_NQ] */
    double *lam;            /* [n - 1][J] log-age blend of each interval and EEP */
    double lo, hi;          /* mass range */
};

static double *knots(gsl_ref *r, size_t j, int q) { return r->y + (j * R_NQ + (size_t)q) * r->n; }

static double at(const gsl_ref *r, size_t j, int q, double x);

/* The documented floor (include/hrtrail/core.h, note 3): at every mass of
 * an interval, log age must rise from EEP j to j + 1 by at least this
 * fraction of the smaller of the two tracks' rises there. */
#define R_AGE_FLOOR (1.0 / 1024.0)

/* One interval [x0, x0 + h] and EEPs j, j + 1: the Steffen difference
 * D(t) = A_{j+1} - A_j of log age at x0 + t h, and its linear
 * interpolant L(t) (>= min of its ends > the floor f); ratio(t) is the
 * largest blend lambda with lambda D(t) + (1 - lambda) L(t) >= f (1 where
 * D(t) >= f). */
typedef struct lam_ctx {
    const gsl_ref *r;
    size_t j;
    double x0, h, l0, l1, f;
} lam_ctx;

static double lam_ratio(double t, void *p)
{
    const lam_ctx *c = p;
    double x = c->x0 + t * c->h;
    double d = at(c->r, c->j + 1, R_AGE, x) - at(c->r, c->j, R_AGE, x);
    double l = c->l0 + t * (c->l1 - c->l0);
    return d >= c->f ? 1.0 : (l - c->f) / (l - d);
}

/* lambda of interval i demanded by EEPs j, j + 1: the minimum of lam_ratio
 * over [0, 1].  D is a cubic (Steffen is piecewise cubic): where it is
 * positive at both ends and at its interior critical points (from GSL's
 * value and derivative at the ends) nothing is demanded; else the ratio is
 * sampled, with the critical points, and its minimum refined by GSL's
 * Brent minimiser. */
static double lam_pair(const gsl_ref *r, size_t i, size_t j, gsl_min_fminimizer *mn)
{
    lam_ctx c = {r, j, r->x[i], r->x[i + 1] - r->x[i], 0.0, 0.0, 0.0};
    double v[2], d[2];
    for (int e = 0; e < 2; e++) {
        double x = r->x[i + (size_t)e];
        const gsl_interp *a = r->it[j * R_NQ + R_AGE], *b = r->it[(j + 1) * R_NQ + R_AGE];
        v[e] = gsl_interp_eval(b, r->x, knots((gsl_ref *)r, j + 1, R_AGE), x, NULL) -
               gsl_interp_eval(a, r->x, knots((gsl_ref *)r, j, R_AGE), x, NULL);
        d[e] = c.h * (gsl_interp_eval_deriv(b, r->x, knots((gsl_ref *)r, j + 1, R_AGE), x, NULL) -
                      gsl_interp_eval_deriv(a, r->x, knots((gsl_ref *)r, j, R_AGE), x, NULL));
    }
    c.l0 = v[0];
    c.l1 = v[1];
    c.f = R_AGE_FLOOR * (v[0] < v[1] ? v[0] : v[1]);
    /* D(t) = v0 + d0 t + B t^2 + A t^3 (cubic Hermite); D'(t) = 0 */
    double A = 2.0 * (v[0] - v[1]) + d[0] + d[1], B = 3.0 * (v[1] - v[0]) - 2.0 * d[0] - d[1];
    double tc[4] = {0.0, 1.0, -1.0, -1.0};
    int nc = 2 + gsl_poly_solve_quadratic(3.0 * A, 2.0 * B, d[0], &tc[2], &tc[3]);
    double best = 1.0, tbest = 0.0;
    for (int k = 0; k < nc; k++)
        if (tc[k] >= 0.0 && tc[k] <= 1.0 && lam_ratio(tc[k], &c) < best) {
            best = lam_ratio(tc[k], &c);
            tbest = tc[k];
        }
    if (best >= 1.0)
        return 1.0;
    enum { NS = 256 };
    for (int k = 0; k <= NS; k++) {
        double f = lam_ratio((double)k / NS, &c);
        if (f < best) {
            best = f;
            tbest = (double)k / NS;
        }
    }
    double ta = tbest - 1.0 / NS, tb = tbest + 1.0 / NS;
    ta = ta < 0.0 ? 0.0 : ta;
    tb = tb > 1.0 ? 1.0 : tb;
    gsl_function F = {lam_ratio, &c};
    if (!(ta < tbest && tbest < tb && lam_ratio(ta, &c) > best && lam_ratio(tb, &c) > best))
        return best;
    if (gsl_min_fminimizer_set_with_values(mn, &F, tbest, best, ta, lam_ratio(ta, &c), tb, lam_ratio(tb, &c)) !=
        GSL_SUCCESS)
        return best;
    for (int it = 0; it < 100; it++) {
        gsl_min_fminimizer_iterate(mn);
        double a = gsl_min_fminimizer_x_lower(mn), b = gsl_min_fminimizer_x_upper(mn);
        if (gsl_min_test_interval(a, b, 1e-14, 0.0) == GSL_SUCCESS)
            break;
    }
    double f = gsl_min_fminimizer_f_minimum(mn);
    return f < best ? f : best;
}

/* Does log age increase from EEP j to j + 1 by more than the floor at
 * every mass of interval i when EEP j is blended with la and j + 1 with lb?  The difference is a
 * cubic in t (Steffen's pieces are cubic, the linear parts linear): its
 * value and derivative at the ends from GSL, its interior critical points
 * from gsl_poly_solve_quadratic. */
static int pair_pos(const gsl_ref *r, size_t i, size_t j, double la, double lb)
{
    double h = r->x[i + 1] - r->x[i], v[2], d[2];
    const double *ya = knots((gsl_ref *)r, j, R_AGE), *yb = knots((gsl_ref *)r, j + 1, R_AGE);
    double ca = (ya[i + 1] - ya[i]) / h, cb = (yb[i + 1] - yb[i]) / h;
    const gsl_interp *ia = r->it[j * R_NQ + R_AGE], *ib = r->it[(j + 1) * R_NQ + R_AGE];
    for (int e = 0; e < 2; e++) {
        double x = r->x[i + (size_t)e];
        v[e] = yb[i + (size_t)e] - ya[i + (size_t)e];
        d[e] = h * (lb * gsl_interp_eval_deriv(ib, r->x, yb, x, NULL) + (1.0 - lb) * cb -
                    la * gsl_interp_eval_deriv(ia, r->x, ya, x, NULL) - (1.0 - la) * ca);
    }
    if (!(v[0] > 0.0 && v[1] > 0.0))
        return 0;
    double f = R_AGE_FLOOR * (v[0] < v[1] ? v[0] : v[1]);
    double A = 2.0 * (v[0] - v[1]) + d[0] + d[1], B = 3.0 * (v[1] - v[0]) - 2.0 * d[0] - d[1];
    double tc[2];
    int nc = gsl_poly_solve_quadratic(3.0 * A, 2.0 * B, d[0], &tc[0], &tc[1]);
    for (int k = 0; k < nc; k++)
        if (tc[k] > 0.0 && tc[k] < 1.0 && !(v[0] + tc[k] * (d[0] + tc[k] * (B + tc[k] * A)) > f))
            return 0;
    return 1;
}

/* The per-EEP rule of the library (include/hrtrail/core.h, note 3):
 * every EEP's lambda starts at 1; a pass lowers both lambdas of each pair
 * that does not increase to the largest common value that makes it
 * increase (lam_pair, never above either); passes repeat until one changes
 * nothing, each going up the EEPs then down (after 256, one common lambda
 * for the interval); if a pair then fails with its final lambdas, the whole
 * interval is linear (lambda 0, which always passes). */
static void lambdas_of(gsl_ref *r, size_t i, double *lam, gsl_min_fminimizer *mn)
{
    for (size_t j = 0; j < r->J; j++)
        lam[j] = 1.0;
    int changed = 1;
    for (int pass = 0; changed && pass < 256; pass++) {
        changed = 0;
        for (size_t k = 0; k + 2 < 2 * r->J; k++) {
            size_t j = k + 1 < r->J ? k : 2 * r->J - 3 - k; /* up 0 .. J - 2, then down J - 2 .. 0 */
            if (pair_pos(r, i, j, lam[j], lam[j + 1]))
                continue;
            double c = lam[j] < lam[j + 1] ? lam[j] : lam[j + 1];
            double v = lam_pair(r, i, j, mn) * (1.0 - 1e-12); /* just inside the common bound */
            if (v < c) {
                lam[j] = lam[j + 1] = v;
                changed = 1;
            } else {
                lam[j] = lam[j + 1] = c;
            }
        }
    }
    if (changed) {
        double common = 1.0;
        for (size_t j = 0; j + 1 < r->J; j++) {
            double l = lam_pair(r, i, j, mn) * (1.0 - 1e-12);
            common = l < common ? l : common;
        }
        for (size_t j = 0; j < r->J; j++)
            lam[j] = common;
    }
    for (size_t j = 0; j + 1 < r->J; j++)
        if (!pair_pos(r, i, j, lam[j], lam[j + 1])) {
            for (size_t k = 0; k < r->J; k++)
                lam[k] = 0.0;
            break;
        }
}

static void lambdas(gsl_ref *r)
{
    gsl_min_fminimizer *mn = gsl_min_fminimizer_alloc(gsl_min_fminimizer_brent);
    for (size_t i = 0; i + 1 < r->n; i++)
        lambdas_of(r, i, r->lam + i * r->J, mn);
    gsl_min_fminimizer_free(mn);
}

/* Log age at EEP j at log mass x in interval i: the blend above. */
static double age_at(const gsl_ref *r, size_t i, size_t j, double x)
{
    double s = at(r, j, R_AGE, x), lam = r->lam[i * r->J + j];
    if (lam >= 1.0)
        return s;
    const double *y = knots((gsl_ref *)r, j, R_AGE);
    double t = (x - r->x[i]) / (r->x[i + 1] - r->x[i]);
    return lam * s + (1.0 - lam) * (y[i] + t * (y[i + 1] - y[i]));
}

/* The interval of log mass x (inside the tracks). */
static size_t interval_of(const gsl_ref *r, double x) { return gsl_interp_bsearch(r->x, x, 0, r->n - 1); }

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
    r->lam = malloc((r->n - 1) * r->J * sizeof(double));
    lambdas(r);
    return r;
}

void gsl_ref_free(gsl_ref *r)
{
    if (!r)
        return;
    for (size_t k = 0; k < r->J * R_NQ; k++)
        gsl_interp_free(r->it[k]);
    free(r->it);
    free(r->lam);
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
    size_t i = interval_of(r, x);
    *lt0 = age_at(r, i, 0, x);
    *lt1 = age_at(r, i, r->J - 1, x);
}

/* log L, log Teff, log R, log g, mass, He and CO core of each star
 * (NaN outside the route's tracks); out[7 * i + k]. */
void gsl_ref_eval(const gsl_ref *r, size_t n, const double *mass, const double *age_yr, double *out)
{
    for (size_t i = 0; i < n; i++) {
        double x = log10(mass[i]), lt = log10(age_yr[i]);
        double *o = out + 7 * i;
        size_t lo = 0, hi = r->J - 1;
        if (!(mass[i] >= r->lo && mass[i] <= r->hi)) {
            for (int k = 0; k < 7; k++)
                o[k] = NAN;
            continue;
        }
        size_t iv = interval_of(r, x);
        double alo = age_at(r, iv, lo, x), ahi = age_at(r, iv, hi, x);
        if (!(lt >= alo && lt < ahi)) {
            for (int k = 0; k < 7; k++)
                o[k] = NAN;
            continue;
        }
        while (hi - lo > 1) {
            size_t c = lo + (hi - lo) / 2;
            double ac = age_at(r, iv, c, x);
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

size_t gsl_ref_n_blended(const gsl_ref *r, double *lambda_min)
{
    size_t nb = 0;
    *lambda_min = 1.0;
    for (size_t i = 0; i + 1 < r->n; i++) {
        int any = 0;
        for (size_t j = 0; j < r->J; j++) {
            double l = r->lam[i * r->J + j];
            any |= l < 1.0;
            if (l < *lambda_min)
                *lambda_min = l;
        }
        nb += (size_t)any;
    }
    return nb;
}

size_t gsl_ref_compare(size_t n, const hrt_state *s, const double *out, double worst[7], size_t *n_both)
{
    size_t bad = 0;
    *n_both = 0;
    for (int k = 0; k < 7; k++)
        worst[k] = 0.0;
    for (size_t i = 0; i < n; i++) {
        const double *o = out + 7 * i;
        if (s[i].status != HRT_OK || !isfinite(o[0]))
            continue;
        ++*n_both;
        double v[7] = {s[i].log_l_lsun,       s[i].log_teff_k,  s[i].log_r_rsun,        s[i].log_g_cgs,
                       s[i].mass_msun,        s[i].he_core_mass_msun, s[i].co_core_mass_msun};
        int beyond = 0;
        for (int k = 0; k < 7; k++) {
            double d = fabs(v[k] - o[k]);
            if (k >= 4)
                d /= s[i].initial_mass_msun;
            if (!isnan(worst[k]) && !(d <= worst[k]))
                worst[k] = d; /* a NaN stays */
            beyond |= !(d <= (k >= 4 ? GSL_REF_TOL_MASS : GSL_REF_TOL_LOG));
        }
        bad += (size_t)beyond;
    }
    return bad;
}
