/* Preparing a grid for queries, from the file as read (trail_file): the
 * value/slope layout across log initial mass (slopes as GSL's), route track
 * ranges, phase runs, log age tables and monotonicity guards for log age. */
#define _DEFAULT_SOURCE /* madvise() and MADV_HUGEPAGE (Linux) */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>

#include "core/core.h"

/* The knot tables are tens of MB written once at open: on Linux, ask for
 * transparent huge pages over the 2 MiB-aligned part of each, so that
 * filling them takes a page fault per 2 MiB instead of one per 4 KiB (most
 * of the open time of a large grid on a virtual machine).  Only a hint:
 * where huge pages are not available nothing changes; the advice stays
 * with the memory after it is freed, which is harmless. */
#define HUGE_PAGE_BYTES ((uintptr_t)2 << 20)
static void advise_huge(void *p, size_t bytes)
{
#ifdef MADV_HUGEPAGE
    uintptr_t lo = ((uintptr_t)p + HUGE_PAGE_BYTES - 1) & ~(HUGE_PAGE_BYTES - 1);
    uintptr_t hi = ((uintptr_t)p + bytes) & ~(HUGE_PAGE_BYTES - 1);
    if (p && hi > lo)
        (void)madvise((void *)lo, hi - lo, MADV_HUGEPAGE);
#else
    (void)p;
    (void)bytes;
#endif
}

/* Slopes of one run of knots with the grid's type, in closed form with
 * GSL 2.7's formulas (slopes.c; tests/test_core.c checks them against GSL's
 * derivative at every knot). */
static int run_slopes(int interp, double *work, size_t n, const double *x, const double *y, double *d)
{
    trail_slopes_work(interp, n, x, y, d, work);
    return HRT_OK;
}

/* Is the cubic Hermite p(t) with end values p0, p1 > 0 and end slopes
 * s0, s1 (already multiplied by the interval width) above lo_bound (>= 0) on
 * the whole of [0, 1]?  Its ends and its interior critical points decide. */
static int hermite_above(double p0, double p1, double s0, double s1, double lo_bound)
{
    if (!(p0 > lo_bound && p1 > lo_bound))
        return 0;
    double a = 2.0 * (p0 - p1) + s0 + s1, b = 3.0 * (p1 - p0) - 2.0 * s0 - s1, c = s0;
    /* p'(t) = 3a t^2 + 2b t + c */
    double roots[2];
    int nr = 0;
    if (fabs(a) < 1e-300) {
        if (fabs(b) > 1e-300)
            roots[nr++] = -c / (2.0 * b);
    } else {
        double disc = 4.0 * b * b - 12.0 * a * c;
        if (disc >= 0.0) {
            double sq = sqrt(disc);
            roots[nr++] = (-2.0 * b - sq) / (6.0 * a);
            roots[nr++] = (-2.0 * b + sq) / (6.0 * a);
        }
    }
    for (int k = 0; k < nr; k++) {
        double t = roots[k];
        if (t > 0.0 && t < 1.0) {
            double p = ((a * t + b) * t + c) * t + p0;
            if (!(p > lo_bound))
                return 0;
        }
    }
    return 1;
}

static const int from_file[NQ] = {[Q_AGE] = TRAIL_F_LOG_AGE, [Q_L] = TRAIL_F_LOG_L, [Q_TEFF] = TRAIL_F_LOG_TEFF,
                                  [Q_MASS] = TRAIL_F_MASS,   [Q_HE] = TRAIL_F_HE_CORE, [Q_CO] = TRAIL_F_CO_CORE};

/* Types whose slope at a knot depends on its two neighbours alone
 * (steffen, linear): their knots are filled along each track's EEPs by
 * local_knots; the others (akima, cspline) per run of knots. */
static int slopes_are_local(int interp) { return interp == HRT_INTERP_STEFFEN || interp == HRT_INTERP_LINEAR; }

/* Value and slope across log mass of quantity q at every knot, track by
 * track along its EEPs (contiguous in the file's rows).  At EEP j track i
 * has a neighbour on a side when that track is of its route and reaches
 * EEP j, so its run of trail_eep_runs holds it; with both, the run has 3
 * or more knots and the slope is Steffen's at an interior knot (linear: the
 * secant to the right); with one, the secant to it (a run's end, or a run
 * of 2, linear); with none (a run of 1), 0.  The same operations on the
 * same values as trail_slopes_work on the runs, so the same bits. */
static void local_knots(const hrt_grid *g, const trail_file_group *fg, zgroup *gp, int q)
{
    size_t nm = gp->n_mass, J = g->n_eep_max;
    const double *col = fg->q[from_file[q]], *x = gp->logm;
    for (size_t i = 0; i < nm; i++) {
        size_t ne = (size_t)gp->n_eep[i];
        int has_l = i > 0 && gp->route[i - 1] == gp->route[i], has_r = i + 1 < nm && gp->route[i + 1] == gp->route[i];
        size_t nl = has_l && (size_t)gp->n_eep[i - 1] < ne ? (size_t)gp->n_eep[i - 1] : has_l ? ne : 0;
        size_t nr = has_r && (size_t)gp->n_eep[i + 1] < ne ? (size_t)gp->n_eep[i + 1] : has_r ? ne : 0;
        const double *yc = col + i * J, *yl = has_l ? yc - J : yc, *yr = has_r ? yc + J : yc;
        /* knot values: masses as fractions of the track's initial mass */
        double fl = 1.0, fc = 1.0, fr = 1.0;
        int frac = q >= Q_MASS;
        if (frac) {
            fc = gp->mass[i];
            fl = has_l ? gp->mass[i - 1] : fc;
            fr = has_r ? gp->mass[i + 1] : fc;
        }
        double xs[3] = {has_l ? x[i - 1] : x[i], x[i], has_r ? x[i + 1] : x[i]};
        size_t both = nl < nr ? nl : nr;
        int lin = g->interp == HRT_INTERP_LINEAR;
        for (size_t j = 0; j < ne; j++) {
            double ys[3] = {frac ? yl[j] / fl : yl[j], frac ? yc[j] / fc : yc[j], frac ? yr[j] / fr : yr[j]};
            double *k = trail_knot(gp, j, i, q), d;
            if (j < both)
                d = lin ? (ys[2] - ys[1]) / (xs[2] - xs[1]) : trail_steffen_slope(xs, ys, 3, 1);
            else if (j < nr)
                d = (ys[2] - ys[1]) / (xs[2] - xs[1]);
            else if (j < nl)
                d = (ys[1] - ys[0]) / (xs[1] - xs[0]);
            else
                d = 0.0;
            k[0] = ys[1];
            k[1] = d;
        }
    }
}

/* The group's prepared arrays, filled with what the file holds: masses
 * and their logs, routes, remnants, values at every knot (masses as
 * fractions of the initial mass, so a star without mass loss keeps its mass
 * exactly), phases.  Slopes follow in prepare_group (with local_knots here
 * for steffen and linear). */
static int fill_group(const hrt_grid *g, const trail_file_group *fg, zgroup *gp, size_t *bytes)
{
    size_t nm = fg->n_mass, J = g->n_eep_max, R = g->n_routes;
    gp->z = fg->z;
    gp->feh = trail_log10(fg->z / g->z_ref);
    gp->n_mass = nm;
    gp->mass = malloc(nm * sizeof(double));
    gp->logm = calloc(nm + 1, sizeof(double));
    gp->route = malloc(nm * sizeof(int));
    gp->n_eep = malloc(nm * sizeof(int));
    gp->remnant = malloc(nm * sizeof(int));
    gp->remnant_knots = calloc(2 * (nm + 1), sizeof(double));
    gp->boundary = malloc((R > 1 ? R - 1 : 1) * sizeof(double));
    gp->knots = calloc((size_t)NQ * J * (nm + 1) * 2, sizeof(double));
    gp->phase = calloc(nm * J, 1);
    gp->runs = calloc(nm * J * 2, sizeof(int32_t));
    gp->age_tab = calloc(nm * TRAIL_AGE_TAB, sizeof(uint16_t));
    gp->age_tab_x = calloc(nm * 2, sizeof(double));
    gp->age_dx_max = calloc(2 * (nm + 1), sizeof(double));
    gp->age_interval = calloc(nm * J * 4, sizeof(double));
    if (!gp->mass || !gp->logm || !gp->route || !gp->n_eep || !gp->remnant || !gp->remnant_knots || !gp->boundary ||
        !gp->knots || !gp->phase || !gp->runs || !gp->age_tab || !gp->age_tab_x || !gp->age_dx_max ||
        !gp->age_interval)
        return HRT_E_NOMEM;
    advise_huge(gp->knots, (size_t)NQ * J * (nm + 1) * 2 * sizeof(double));
    advise_huge(gp->age_interval, nm * J * 4 * sizeof(double));
    *bytes += (size_t)NQ * J * (nm + 1) * 2 * sizeof(double) +
              nm * J * (1 + 2 * sizeof(int32_t) + 4 * sizeof(double)) + nm * TRAIL_AGE_TAB * sizeof(uint16_t);
    memcpy(gp->mass, fg->initial_mass, nm * sizeof(double));
    memcpy(gp->route, fg->route, nm * sizeof(int));
    memcpy(gp->n_eep, fg->n_eep, nm * sizeof(int));
    memcpy(gp->remnant, fg->remnant, nm * sizeof(int));
    memcpy(gp->phase, fg->phase, nm * J);
    if (R > 1)
        memcpy(gp->boundary, fg->boundary, (R - 1) * sizeof(double));
    for (size_t i = 0; i < nm; i++)
        gp->logm[i] = trail_log10(gp->mass[i]);
    gp->logm[nm] = gp->logm[nm - 1] + 1.0; /* padding, never a knot */
    /* 0, not NaN, for a track without remnant: a query at a neighbour's
     * mass gives it weight 0, and 0 * NaN would be NaN. */
    for (size_t i = 0; i < nm; i++)
        gp->remnant_knots[2 * i] = gp->remnant[i] != HRT_REMNANT_NONE ? fg->remnant_mass[i] : 0.0;
    for (int q = 0; q < NQ; q++) {
        if (slopes_are_local(g->interp)) {
            local_knots(g, fg, gp, q);
            continue;
        }
        for (size_t i = 0; i < nm; i++)
            for (size_t j = 0; j < (size_t)gp->n_eep[i]; j++) {
                double v = fg->q[from_file[q]][i * J + j];
                *trail_knot(gp, j, i, q) = q >= Q_MASS ? v / gp->mass[i] : v;
            }
    }
    return HRT_OK;
}

/* Scratch of the slope computations: one run of knots. */
typedef struct run_buf {
    double *work; /* TRAIL_SLOPES_WORK(n) */
    double *x, *y, *d;
} run_buf;

/* Tracks [route_lo, route_hi) of each route. */
static void route_ranges(const hrt_grid *g, zgroup *gp)
{
    size_t nm = gp->n_mass;
    for (size_t r = 0; r < g->n_routes; r++) {
        size_t lo = nm, hi = nm;
        for (size_t i = 0; i < nm; i++) {
            if ((size_t)gp->route[i] == r) {
                if (lo == nm)
                    lo = i;
                hi = i + 1;
            }
        }
        if (lo == nm)
            lo = hi = 0;
        gp->route_lo[r] = lo;
        gp->route_hi[r] = hi;
    }
}

int trail_eep_runs(const hrt_grid *g, const zgroup *gp, size_t j, int (*fn)(void *ctx, size_t a, size_t n), void *ctx)
{
    for (size_t r = 0; r < g->n_routes; r++) {
        size_t i = gp->route_lo[r];
        while (i < gp->route_hi[r]) {
            if ((size_t)gp->n_eep[i] <= j) {
                i++;
                continue;
            }
            size_t a = i;
            while (i < gp->route_hi[r] && (size_t)gp->n_eep[i] > j)
                i++;
            int rc = fn(ctx, a, i - a);
            if (rc != HRT_OK)
                return rc;
        }
    }
    return HRT_OK;
}

typedef struct knot_run {
    const hrt_grid *g;
    zgroup *gp;
    int qty;
    size_t j;
    run_buf *rb;
} knot_run;

static int knot_run_slopes(void *ctx, size_t a, size_t n)
{
    knot_run *c = ctx;
    run_buf *rb = c->rb;
    for (size_t k = 0; k < n; k++) {
        rb->x[k] = c->gp->logm[a + k];
        rb->y[k] = trail_knot(c->gp, c->j, a + k, c->qty)[0];
    }
    int rc = run_slopes(c->g->interp, rb->work, n, rb->x, rb->y, rb->d);
    if (rc != HRT_OK)
        return rc;
    for (size_t k = 0; k < n; k++)
        trail_knot(c->gp, c->j, a + k, c->qty)[1] = rb->d[k];
    return HRT_OK;
}

/* Slopes across log mass of quantity qty at EEP j, over runs of
 * consecutive tracks of one route that all reach the EEP. */
static int knot_slopes_at(const hrt_grid *g, zgroup *gp, int qty, size_t j, run_buf *rb)
{
    knot_run c = {g, gp, qty, j, rb};
    return trail_eep_runs(g, gp, j, knot_run_slopes, &c);
}

/* Remnant masses: slopes over runs of consecutive tracks of one route with
 * remnants of the same family. */
static int remnant_slopes(const hrt_grid *g, zgroup *gp, run_buf *rb)
{
    for (size_t r = 0; r < g->n_routes; r++) {
        size_t i = gp->route_lo[r];
        while (i < gp->route_hi[r]) {
            size_t a = i;
            while (i < gp->route_hi[r] && trail_remnant_family(gp->remnant[i]) == trail_remnant_family(gp->remnant[a]))
                i++;
            if (gp->remnant[a] == HRT_REMNANT_NONE)
                continue;
            size_t n = i - a;
            for (size_t k = 0; k < n; k++) {
                rb->x[k] = gp->logm[a + k];
                rb->y[k] = gp->remnant_knots[2 * (a + k)];
            }
            int rc = run_slopes(g->interp, rb->work, n, rb->x, rb->y, rb->d);
            if (rc != HRT_OK)
                return rc;
            for (size_t k = 0; k < n; k++)
                gp->remnant_knots[2 * (a + k) + 1] = rb->d[k];
        }
    }
    return HRT_OK;
}

/* Log age of tracks i and i + 1 (value, slope) contiguous along EEPs, for
 * the age search of a star between them (after the slopes). */
static void age_intervals(const hrt_grid *g, zgroup *gp)
{
    size_t J = g->n_eep_max;
    for (size_t i = 0; i < gp->n_mass; i++) {
        for (size_t j = 0; j < J; j++) {
            const double *p = trail_knot(gp, j, i, Q_AGE);
            double *a = gp->age_interval + (i * J + j) * 4;
            a[0] = p[0];
            a[1] = p[1];
            a[2] = p[2 * NQ];
            a[3] = p[2 * NQ + 1];
        }
    }
}

/* Phase runs of track i: for each EEP the first EEP of its run of one
 * phase and the first EEP after it. */
static void phase_runs(const hrt_grid *g, zgroup *gp, size_t i)
{
    size_t J = g->n_eep_max;
    int ne = gp->n_eep[i];
    const int8_t *ph = gp->phase + i * J;
    int32_t *ru = gp->runs + i * J * 2;
    int j = 0;
    while (j < ne - 1) {
        int a = j;
        while (j < ne - 1 && ph[j] == ph[a])
            j++;
        for (int k = a; k < j; k++) {
            ru[2 * k] = a;
            ru[2 * k + 1] = j;
        }
    }
    ru[2 * (ne - 1)] = ru[2 * (ne - 1) + 1] = ne - 1;
}

/* Log age -> EEP table of track i: a starting point for the EEP search. */
static void age_table(const hrt_grid *g, zgroup *gp, size_t i)
{
    size_t J = g->n_eep_max;
    int ne = gp->n_eep[i];
    const double *at = gp->age_interval + i * J * 4; /* track i's log age: at[4 * j] */
    double a0 = at[0], per_dex = TRAIL_AGE_TAB / (at[4 * (ne - 1)] - at[0]);
    gp->age_tab_x[2 * i] = a0;
    gp->age_tab_x[2 * i + 1] = per_dex;
    int e = 0;
    for (int k = 0; k < TRAIL_AGE_TAB; k++) {
        double lt = a0 + k / per_dex;
        while (e + 1 < ne - 1 && at[4 * (e + 1)] <= lt)
            e++;
        gp->age_tab[i * TRAIL_AGE_TAB + (size_t)k] = (uint16_t)e;
    }
}

/* Log age across interval (i, i + 1) must increase with EEP for every mass
 * inside it.  Each EEP j has its own blend lambda_j in [0, 1], stored in its
 * slopes across the interval: d <- lambda_j d + (1 - lambda_j) sec_j at both
 * tracks (sec_j its secant across the interval; age_slope).  A cubic
 * Hermite with both slopes equal to the secant is the linear interpolant,
 * and the Hermite is linear in its slopes, so the stored interpolant at EEP
 * j is exactly lambda_j (chosen type) + (1 - lambda_j) (linear): a convex
 * mix that keeps the knot values, and the query path only ever sees
 * ordinary slopes.
 *
 * Why consecutive EEPs stay increasing (a proof, not a hope).  The
 * difference D(t) of EEPs j + 1 and j at t = (x - x_i) / h in [0, 1] is
 * itself a cubic Hermite: end values p0, p1 (the two tracks' age steps, > 0:
 * the reader refuses tracks whose ages do not increase) and end slopes the
 * differences of the blended slopes.  pair_ok() accepts a pair only if D
 * stays above the floor kappa min(p0, p1) (kappa = TRAIL_AGE_FLOOR) on the
 * whole of [0, 1] (hermite_above: ends and interior critical points).
 *  1. With both lambdas 0 (linear at both EEPs) D(t) = (1 - t) p0 + t p1 >=
 *     min(p0, p1) > the floor: linear always passes.
 *  2. With a common lambda v, D_v(t) = v D_1(t) + (1 - v) D_0(t) is affine
 *     in v at each t, so min_t D_v is concave in v (a minimum of affine
 *     functions) and above the floor at v = 0 (1.): the v that pass form an
 *     interval [0, v*], and bisection on it (pair_common) finds a verified
 *     member within 2^-40 of v*.
 *  3. The rule: every lambda starts at 1; a pass visits each consecutive
 *     pair and, where pair_ok() fails with its current lambdas, lowers both
 *     to the largest common value (2.) not above either.  Lowering a pair
 *     can break its neighbour (with unequal lambdas D is not a convex mix),
 *     hence passes up and down the EEPs until one changes nothing (at most
 *     TRAIL_AGE_PASSES; lambdas only decrease).  If that limit is reached
 *     the interval takes one common lambda, the smallest any pair demands,
 *     which every pair accepts by 2.
 *  4. Whatever 3. ended with, every pair is checked once more with the
 *     final lambdas (age_verified); if one fails, which 3. never leaves in
 *     exact arithmetic, every lambda of the interval becomes 0, which passes
 *     by 1.  So the stored slopes always satisfy pair_ok() at every pair.
 * Floating point: the query evaluates each EEP's Hermite separately with
 * the same weights; each sum is off by a few ulp of the log age (~1e-15
 * dex), far below the floor (2^-10 of the smaller age step, which the
 * default grid keeps above 1e-9 dex), so the computed ages increase
 * strictly too.  Without the floor a bisected lambda leaves D as low as
 * ~1e-12 of the step at its dip, where rounding can make two ages equal
 * (as an early version did at 0.542 Msun, group 0).  tests/test_age_blend.c
 * sweeps thousands of masses per interval of several grids and all types. */
#define TRAIL_AGE_PASSES 256
#define TRAIL_AGE_FLOOR (1.0 / 1024.0)

/* The blended slope: lam d + (1 - lam) sec, stored and checked alike. */
static inline double age_slope(double d, double sec, double lam) { return lam * d + (1.0 - lam) * sec; }

static int pair_ok(const double *a0, const double *a1, double h, double l0, double l1)
{
    double p0 = a1[0] - a0[0], p1 = a1[2] - a0[2];
    double c0 = (a0[2] - a0[0]) / h, c1 = (a1[2] - a1[0]) / h; /* secants of EEPs j, j + 1 */
    double s0 = h * (age_slope(a1[1], c1, l1) - age_slope(a0[1], c0, l0));
    double s1 = h * (age_slope(a1[3], c1, l1) - age_slope(a0[3], c0, l0));
    return hermite_above(p0, p1, s0, s1, TRAIL_AGE_FLOOR * (p0 < p1 ? p0 : p1));
}

/* Largest v in [0, hi] (to 2^-40) with pair_ok(v, v); 0 passes always. */
static double pair_common(const double *a0, const double *a1, double h, double hi)
{
    if (pair_ok(a0, a1, h, hi, hi))
        return hi;
    double lo = 0.0;
    for (int it = 0; it < 40; it++) {
        double mid = 0.5 * (lo + hi);
        if (pair_ok(a0, a1, h, mid, mid))
            lo = mid;
        else
            hi = mid;
    }
    return lo;
}

/* Lower the lambdas of pair j if it does not increase: 1 if it did. */
static int age_fix(const double *a, int j, double h, double *lam)
{
    const double *a0 = a + 4 * j, *a1 = a0 + 4;
    if (pair_ok(a0, a1, h, lam[j], lam[j + 1]))
        return 0;
    double v = pair_common(a0, a1, h, lam[j] < lam[j + 1] ? lam[j] : lam[j + 1]);
    lam[j] = lam[j + 1] = v;
    return 1;
}

/* One pass of the rule above over EEPs [0, ne), up then down (a lowered
 * lambda can break the pair below it): 1 if a lambda changed. */
static int age_pass(const double *a, int ne, double h, double *lam)
{
    int changed = 0;
    for (int j = 0; j + 1 < ne; j++)
        changed |= age_fix(a, j, h, lam);
    for (int j = ne - 2; j >= 0; j--)
        changed |= age_fix(a, j, h, lam);
    return changed;
}

/* Step 4 of the proof above: 1 if every pair passes with lam. */
static int age_verified(const double *a, int ne, double h, const double *lam)
{
    for (int j = 0; j + 1 < ne; j++)
        if (!pair_ok(a + 4 * j, a + 4 * j + 4, h, lam[j], lam[j + 1]))
            return 0;
    return 1;
}

/* The lambdas of interval i (lam: scratch of n_eep_max), stored in its
 * log-age slopes (age_interval). */
static void age_blend(const hrt_grid *g, zgroup *gp, size_t i, double *lam)
{
    if (g->interp == HRT_INTERP_LINEAR || gp->route[i] != gp->route[i + 1])
        return;
    size_t J = g->n_eep_max;
    double h = gp->logm[i + 1] - gp->logm[i];
    int ne = gp->n_eep[i] < gp->n_eep[i + 1] ? gp->n_eep[i] : gp->n_eep[i + 1];
    double *a = gp->age_interval + i * J * 4;
    for (int j = 0; j < ne; j++)
        lam[j] = 1.0;
    int pass = 0;
    while (age_pass(a, ne, h, lam) && ++pass < TRAIL_AGE_PASSES)
        ;
    if (pass == TRAIL_AGE_PASSES) {
        double common = 1.0;
        for (int j = 0; j + 1 < ne; j++)
            common = pair_common(a + 4 * j, a + 4 * j + 4, h, common);
        for (int j = 0; j < ne; j++)
            lam[j] = common;
    }
    if (!age_verified(a, ne, h, lam))
        for (int j = 0; j < ne; j++)
            lam[j] = 0.0;
    for (int j = 0; j < ne; j++) {
        double *p = a + 4 * j, sec = (p[2] - p[0]) / h;
        p[1] = age_slope(p[1], sec, lam[j]);
        p[3] = age_slope(p[3], sec, lam[j]);
    }
}

/* Extrapolation beyond a route's end track k: y_j + d_j dx must keep
 * increasing with j; |dx| is kept to half the largest step that does.  The
 * slopes are the ones extrapolation uses (eval.c mass_ctx): below track k
 * its left-end slopes in interval k, above it its right-end slopes in
 * interval k - 1 (both blended by age_blend). */
static void extrapolation_limits(const hrt_grid *g, zgroup *gp, size_t k)
{
    size_t J = g->n_eep_max;
    const double *lo = gp->age_interval + k * J * 4;                     /* value a[0], slope a[1] */
    const double *hi = k > 0 ? gp->age_interval + (k - 1) * J * 4 + 2 : lo; /* value, slope at k */
    double up = INFINITY, dn = INFINITY;
    for (int j = 0; j + 1 < gp->n_eep[k]; j++) {
        double dy = lo[4 * j + 4] - lo[4 * j];
        double dd = lo[4 * j + 5] - lo[4 * j + 1], du = hi[4 * j + 5] - hi[4 * j + 1];
        if (du < 0.0 && dy / -du < up)
            up = dy / -du;
        if (dd > 0.0 && dy / dd < dn)
            dn = dy / dd;
    }
    gp->age_dx_max[2 * k] = 0.5 * dn;
    gp->age_dx_max[2 * k + 1] = 0.5 * up;
}

/* The log mass -> track table (zgroup.mass_bin): TRAIL_MASS_BINS bins per
 * track over the group's span. */
#define TRAIL_MASS_BINS 4
static int mass_bins(zgroup *gp)
{
    size_t nm = gp->n_mass;
    if (nm < 2)
        return HRT_OK; /* n_mass_bin = 0: no interval to find */
    size_t nb = TRAIL_MASS_BINS * nm;
    gp->mass_bin = malloc(nb * sizeof *gp->mass_bin);
    if (!gp->mass_bin)
        return HRT_E_NOMEM;
    const double *lm = gp->logm;
    double per_dex = (double)nb / (lm[nm - 1] - lm[0]);
    size_t i = 0;
    for (size_t k = 0; k < nb; k++) {
        double start = lm[0] + (double)k / per_dex;
        while (i + 1 < nm && lm[i + 1] <= start)
            i++;
        gp->mass_bin[k] = (uint32_t)i;
    }
    gp->n_mass_bin = nb;
    gp->mass_bin_x[0] = lm[0];
    gp->mass_bin_x[1] = per_dex;
    return HRT_OK;
}

static int prepare_group(const hrt_grid *g, zgroup *gp, run_buf *rb)
{
    if (mass_bins(gp) != HRT_OK)
        return HRT_E_NOMEM;
    route_ranges(g, gp);
    for (int qty = 0; qty < NQ && !slopes_are_local(g->interp); qty++) /* else filled by local_knots */
        for (size_t j = 0; j < g->n_eep_max; j++) {
            int rc = knot_slopes_at(g, gp, qty, j, rb);
            if (rc != HRT_OK)
                return rc;
        }
    int rc = remnant_slopes(g, gp, rb);
    if (rc != HRT_OK)
        return rc;
    age_intervals(g, gp);
    double *lam = malloc(g->n_eep_max * sizeof(double));
    if (!lam)
        return HRT_E_NOMEM;
    for (size_t i = 0; i + 1 < gp->n_mass; i++)
        age_blend(g, gp, i, lam);
    free(lam);
    for (size_t i = 0; i < gp->n_mass; i++) {
        phase_runs(g, gp, i);
        age_table(g, gp, i);
        extrapolation_limits(g, gp, i);
    }
    return HRT_OK;
}

/* Move the file's routes and attributes into the grid (f keeps none). */
static void take_layout(hrt_grid *g, trail_file *f)
{
    g->z_ref = f->z_ref;
    g->n_routes = f->n_routes;
    g->routes = f->routes;
    g->n_eep_max = f->n_eep_max;
    g->n_attrs = f->n_attrs;
    g->attrs = f->attrs;
    f->n_routes = f->n_attrs = 0;
    f->routes = NULL;
    f->attrs = NULL;
}

int trail_grid_prepare(hrt_grid *g, trail_file *f, hrt_error *err)
{
    take_layout(g, f);
    g->grp = calloc(f->n_z, sizeof *g->grp);
    if (!g->grp)
        return trail_set_error(err, HRT_E_NOMEM, "out of memory preparing the grid");
    g->n_z = f->n_z;
    size_t maxn = 0;
    for (size_t iz = 0; iz < g->n_z; iz++) {
        if (fill_group(g, &f->grp[iz], &g->grp[iz], &g->bytes) != HRT_OK)
            return trail_set_error(err, HRT_E_NOMEM, "metallicity/%zu: out of memory for %zu tracks", iz,
                                   f->grp[iz].n_mass);
        if (g->grp[iz].n_mass > maxn)
            maxn = g->grp[iz].n_mass;
    }
    double *x = malloc((3 * (maxn + 1) + TRAIL_SLOPES_WORK(maxn)) * sizeof(double));
    if (!x)
        return trail_set_error(err, HRT_E_NOMEM, "out of memory preparing the grid");
    int rc = HRT_OK;
    for (size_t iz = 0; iz < g->n_z && rc == HRT_OK; iz++) {
        run_buf rb = {x + 3 * (maxn + 1), x, x + maxn + 1, x + 2 * (maxn + 1)};
        rc = prepare_group(g, &g->grp[iz], &rb);
        if (rc != HRT_OK)
            trail_set_error(err, rc, "metallicity/%zu: cannot prepare the group (%s)", iz, hrt_strerror(rc));
    }
    free(x);
    return rc;
}

void trail_grid_free_contents(hrt_grid *g)
{
    for (size_t iz = 0; iz < g->n_z; iz++) {
        zgroup *gp = &g->grp[iz];
        free(gp->mass);
        free(gp->logm);
        free(gp->route);
        free(gp->n_eep);
        free(gp->remnant);
        free(gp->remnant_knots);
        free(gp->boundary);
        free(gp->knots);
        free(gp->phase);
        free(gp->runs);
        free(gp->age_tab);
        free(gp->age_tab_x);
        free(gp->age_dx_max);
        free(gp->age_interval);
        free(gp->mass_bin);
    }
    free(g->grp);
    trail_routes_free(g->routes, g->n_routes);
    trail_attrs_free(g->attrs, g->n_attrs);
}
