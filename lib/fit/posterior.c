/* hrtrail: the posterior of an observed star over (initial mass, age,
 * [Fe/H]): weights of the lattice points the likelihood found, their
 * weighted quantiles, flags, posterior draws and the HR-diagram distance. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>

#include "util/util.h"
#include "fit/intervals.h"
#include "fit/lattice.h"
#include "fit/posterior.h"

#define N_DIST_DRAWS 4000  /* draws for the distance interval (Monte Carlo error about 1 %) */
#define HIST_BINS 2048     /* bins of the quantile histograms */
#define HIST_SLOTS (HIST_BINS + 4) /* second differences a histogram keeps (two past each end) */
/* A result is flagged HRT_FIT_AGE_LIMIT when its age interval reaches this
 * fraction of age_max_yr, and HRT_FIT_FEW_POINTS below this many effective points. */
#define AGE_LIMIT_FRACTION 0.95
#define FEW_POINTS_N_EFF 20.0
/* The age of a posterior draw is searched on the grid's own track until its
 * fractional EEP is within DRAW_EEP_TOL of the lattice point's, or the
 * bracket is DRAW_LOG_AGE_TOL dex wide (a few ulps of a log age), in at
 * most DRAW_SEARCH_MAX steps of each stage. */
#define DRAW_EEP_TOL 1e-9
#define DRAW_LOG_AGE_TOL 1e-14
#define DRAW_SEARCH_MAX 64

/* ------------------------------------------------------------------ quantiles */

/* Weighted quantiles of boxes [v - h, v + h] of weight w (ages: [t_lo, t_hi]):
 * each box spreads its weight evenly; the cumulative distribution is built
 * exactly on the bin edges of a histogram and inverted linearly.  Every
 * histogram of a star is filled in one pass over the points. */
typedef struct hist {
    int quantity; /* PQ_*, or PQ_AGE */
    double xmin, xmax, inv_width, weight;
    double *second_diff; /* HIST_SLOTS second differences of the cumulative weight at the bin edges */
} hist;

static inline void box_of(const trail_fit_point *P, int q, double *x0, double *x1)
{
    if (q == PQ_AGE) {
        *x0 = P->age_lo_yr;
        *x1 = P->age_hi_yr;
    } else {
        *x0 = P->value[q] - P->half[q];
        *x1 = P->value[q] + P->half[q];
    }
}

static void hist_open(hist *H, int quantity)
{
    H->quantity = quantity;
    H->xmin = INFINITY;
    H->xmax = -INFINITY;
    H->weight = 0.0;
}

/* Widen the range of histogram H (of quantity q) to the box of point P. */
static inline void hist_range_of(hist *H, int q, const trail_fit_point *P)
{
    double x0, x1;
    box_of(P, q, &x0, &x1);
    if (x0 < H->xmin) H->xmin = x0;
    if (x1 > H->xmax) H->xmax = x1;
}

/* Clear the histogram of a quantity once its range is known. */
static void hist_start(hist *H, double *second_diff)
{
    H->second_diff = second_diff;
    memset(H->second_diff, 0, HIST_SLOTS * sizeof *H->second_diff);
    H->inv_width = H->xmax > H->xmin ? HIST_BINS / (H->xmax - H->xmin) : 0.0;
}

/* Add the boxes [x0, x1] of weight w of one point to the histogram's second
 * differences (E, xmin, inv_width: the histogram's, held in registers by
 * the callers).  Every bin index lies in [0, HIST_BINS]: int conversions,
 * which give the same indices and fractions as size_t ones at a fraction
 * of the instructions. */
static inline void hist_add_box(double *E, double xmin, double inv_width, double x0, double x1, double w)
{
    double u0 = (x0 - xmin) * inv_width, u1 = (x1 - xmin) * inv_width;
    if (u1 - u0 < 1e-6) { /* a point: a narrow box */
        u0 -= 5e-7;
        u1 += 5e-7;
        if (u0 < 0) { u1 -= u0; u0 = 0; }
    }
    if (u0 < 0) u0 = 0;
    if (u1 > HIST_BINS) u1 = HIST_BINS;
    double s = w / (u1 - u0);
    /* ramp s max(0, e - u0) minus ramp s max(0, e - u1), as second differences */
    int i0 = (int)u0, i1 = (int)u1;
    double p0 = u0 - (double)i0, p1 = u1 - (double)i1;
    E[i0 + 1] += s * (1.0 - p0);
    E[i0 + 2] += s * p0;
    E[i1 + 1] -= s * (1.0 - p1);
    E[i1 + 2] -= s * p1;
}

/* Fill a histogram with the n points of p, in their order (only those of
 * phase `phase` when it is not negative); one loop per quantity, so that
 * the histogram's fields and the quantity stay in registers. */
static void hist_fill(const hist *H, const trail_fit_point *p, size_t n, int phase)
{
    if (H->inv_width == 0.0)
        return;
    double *E = H->second_diff, xmin = H->xmin, inv = H->inv_width;
    int q = H->quantity;
    if (q == PQ_AGE) {
        for (size_t i = 0; i < n; i++)
            if (phase < 0 || p[i].phase == phase)
                hist_add_box(E, xmin, inv, p[i].age_lo_yr, p[i].age_hi_yr, p[i].weight);
        return;
    }
    for (size_t i = 0; i < n; i++)
        if (phase < 0 || p[i].phase == phase)
            hist_add_box(E, xmin, inv, p[i].value[q] - p[i].half[q], p[i].value[q] + p[i].half[q], p[i].weight);
}

static hrt_fit_interval interval_of(const double lo_median_hi[3])
{
    hrt_fit_interval r = {lo_median_hi[1], lo_median_hi[0], lo_median_hi[2]};
    return r;
}

/* Median and 15.87/84.13 % points of a filled histogram. */
static hrt_fit_interval hist_interval(const hist *H)
{
    hrt_fit_interval out = trail_fit_no_interval();
    if (!(H->weight > 0.0))
        return out;
    if (H->inv_width == 0.0) {
        out.median = out.lo = out.hi = H->xmin;
        return out;
    }
    const double *E = H->second_diff, d = (H->xmax - H->xmin) / HIST_BINS;
    /* cumulative weight C(e) at the edges e = 0..HIST_BINS, from its second differences */
    double dC = 0.0, C = 0.0, prev = 0.0;
    double targets[3] = {TRAIL_FIT_P_LO * H->weight, 0.5 * H->weight, TRAIL_FIT_P_HI * H->weight};
    double o[3] = {H->xmax, H->xmax, H->xmax};
    int t = 0;
    for (size_t e = 0; e <= HIST_BINS + 1 && t < 3; e++) {
        dC += E[e];
        prev = C;
        C += dC;
        while (t < 3 && C >= targets[t]) {
            double f = C > prev ? (targets[t] - prev) / (C - prev) : 0.0;
            double edge = e == 0 ? 0.0 : (double)e - 1.0 + f;
            o[t++] = H->xmin + edge * d;
        }
    }
    return interval_of(o);
}

hrt_fit_interval trail_fit_sample_quantiles(double *v, size_t n)
{
    if (n == 0)
        return trail_fit_no_interval();
    qsort(v, n, sizeof *v, trail_cmp_double);
    double p[3] = {TRAIL_FIT_P_LO, 0.5, TRAIL_FIT_P_HI}, o[3];
    for (int k = 0; k < 3; k++) {
        double x = p[k] * (double)(n - 1);
        size_t i = (size_t)floor(x);
        double f = x - (double)i;
        o[k] = i + 1 < n ? v[i] + f * (v[i + 1] - v[i]) : v[n - 1];
        if (i + 1 < n && isinf(v[i + 1]))
            o[k] = f > 0 ? v[i + 1] : v[i];
    }
    return interval_of(o);
}

/* 10^x of each point of an interval (log10 quantities reported linearly). */
static hrt_fit_interval exp10_interval(hrt_fit_interval x)
{
    hrt_fit_interval r = {pow(10.0, x.median), pow(10.0, x.lo), pow(10.0, x.hi)};
    return r;
}

/* ------------------------------------------------------------------ weights */

/* Quantities summarised over all points, in the order of their histograms. */
static const int all_point_quantities[] = {PQ_LOG_INITIAL_MASS, PQ_AGE, PQ_FEH, PQ_MASS, PQ_LOG_R, PQ_LOG_L, PQ_TEFF, PQ_LOG_G};
#define N_ALL_POINTS (int)(sizeof all_point_quantities / sizeof all_point_quantities[0])
/* ... then initial mass and age within the most probable phase, and within the second. */
#define N_HISTS (N_ALL_POINTS + 4)

/* The histograms of a star: over all points, and initial mass and age within each phase. */
typedef struct hists {
    hist all[N_HISTS];
    hist phase[HRT_PHASE_SLOTS][2];
} hists;

/* Sums over the weighted points. */
typedef struct weights {
    double sum_w, sum_w2, chi2_min; /* sum_w2: of the squared weights */
    size_t n_weighted;           /* points with a positive weight */
} weights;

/* Weights of the points, dropping those far above the best chi^2 (relative
 * weight < 4e-6) and those without prior weight; the histograms' ranges. */
static int weigh_points(trail_fit_points *S, hists *H, weights *w, hrt_error *err)
{
    for (int k = 0; k < N_ALL_POINTS; k++)
        hist_open(&H->all[k], all_point_quantities[k]);
    for (int p = 0; p < HRT_PHASE_SLOTS; p++) {
        hist_open(&H->phase[p][0], PQ_LOG_INITIAL_MASS);
        hist_open(&H->phase[p][1], PQ_AGE);
    }
    double sum_w = 0.0, sum_w2 = 0.0, chi2min = INFINITY;
    size_t np = 0, kept = 0;
    for (size_t i = 0; i < S->n; i++)
        if (S->p[i].chi2 < chi2min && S->p[i].prior > 0) chi2min = S->p[i].chi2;
    for (size_t i = 0; i < S->n; i++) {
        trail_fit_point *P = &S->p[i];
        if (!(P->prior > 0) || P->chi2 > chi2min + TRAIL_FIT_CUT_CHI2)
            continue;
        P->weight = P->prior * exp(-0.5 * (P->chi2 - chi2min));
        if (!(P->phase >= 0 && P->phase < HRT_PHASE_SLOTS))
            P->phase = HRT_PHASE_UNKNOWN;
        sum_w += P->weight;
        sum_w2 += P->weight * P->weight;
        np += P->weight > 0;
        hist *M = &H->phase[P->phase][0];
        hist_range_of(M, PQ_LOG_INITIAL_MASS, P);
        M->weight += P->weight;
        hist_range_of(&H->phase[P->phase][1], PQ_AGE, P);
        if (kept != i)
            S->p[kept] = *P;
        kept++;
    }
    S->n = kept;
    /* the ranges over all points, one quantity at a time in the points'
     * order (the same comparisons in the same order); every weight is the
     * same sum as sum_w, a phase's age histogram that of its mass */
    for (int k = 0; k < N_ALL_POINTS; k++) {
        for (size_t i = 0; i < kept; i++)
            hist_range_of(&H->all[k], all_point_quantities[k], &S->p[i]);
        H->all[k].weight = sum_w;
    }
    for (int p = 0; p < HRT_PHASE_SLOTS; p++)
        H->phase[p][1].weight = H->phase[p][0].weight;
    w->sum_w = sum_w;
    w->sum_w2 = sum_w2;
    w->chi2_min = chi2min;
    w->n_weighted = np;
    if (!(sum_w > 0.0) || !isfinite(sum_w))
        return trail_set_error(err, HRT_E_NO_MATCH,
                               "hrt_fit_star: the models near the observation have no prior weight (ages beyond age_max_yr?)");
    return HRT_OK;
}

/* ------------------------------------------------------------------ summary */

/* Phase probabilities, and the two most probable phases (the second
 * HRT_PHASE_UNKNOWN if no other phase has weight). */
static void set_phases(hrt_fit_result *res, const hists *H, double sum_w)
{
    for (int p = 0; p < HRT_PHASE_SLOTS; p++)
        res->phase_prob[p] = H->phase[p][0].weight / sum_w;
    int p1 = trail_fit_argmax(res->phase_prob, HRT_PHASE_SLOTS), p2 = 0;
    for (int p = 1; p < HRT_PHASE_SLOTS; p++)
        if (p != p1 && (p2 == p1 || p2 == 0 || res->phase_prob[p] > res->phase_prob[p2]) && res->phase_prob[p] > 0)
            p2 = p;
    if (p2 == p1 || !(res->phase_prob[p2] > 0)) p2 = HRT_PHASE_UNKNOWN;
    res->phase = p1;
    res->phase_second = p2;
}

/* Fill the histograms (the phases' in H->all after the N_ALL_POINTS of all points,
 * at first_of[s] for phase s of the result, -1 if none) and read their intervals. */
static void set_intervals(hrt_fit_result *res, hists *H, const trail_fit_points *S, double *scratch)
{
    int nh = N_ALL_POINTS;
    int phase_of[2] = {res->phase, res->phase_second}, first_of[2] = {-1, -1};
    for (int s = 0; s < 2; s++)
        if (phase_of[s] != HRT_PHASE_UNKNOWN) {
            first_of[s] = nh;
            H->all[nh++] = H->phase[phase_of[s]][0];
            H->all[nh++] = H->phase[phase_of[s]][1];
        }
    for (int k = 0; k < nh; k++)
        hist_start(&H->all[k], scratch + (size_t)k * HIST_SLOTS);
    /* each histogram its own array, filled in the points' order */
    for (int k = 0; k < N_ALL_POINTS; k++)
        hist_fill(&H->all[k], S->p, S->n, -1);
    for (int s = 0; s < 2; s++)
        if (first_of[s] >= 0) {
            hist_fill(&H->all[first_of[s]], S->p, S->n, phase_of[s]);
            hist_fill(&H->all[first_of[s] + 1], S->p, S->n, phase_of[s]);
        }
    const hist *A = H->all;
    res->initial_mass_msun = exp10_interval(hist_interval(&A[0]));
    res->age_yr = hist_interval(&A[1]);
    res->feh = hist_interval(&A[2]);
    res->mass_msun = hist_interval(&A[3]);
    res->r_rsun = exp10_interval(hist_interval(&A[4]));
    res->log_l_lsun = hist_interval(&A[5]);
    res->teff_k = hist_interval(&A[6]);
    res->log_g_cgs = hist_interval(&A[7]);
    for (int s = 0; s < 2; s++) {
        res->phase_mass_msun[s] = first_of[s] >= 0 ? exp10_interval(hist_interval(&A[first_of[s]])) : trail_fit_no_interval();
        res->phase_age_yr[s] = first_of[s] >= 0 ? hist_interval(&A[first_of[s] + 1]) : trail_fit_no_interval();
    }
}

/* chi^2 at its 99.73 % point for 1..4 degrees of freedom (SciPy scipy.stats.chi2.ppf(0.9973, k)). */
static const double chi2_3sigma[5] = {0.0, 9.0, 11.83, 14.16, 16.25};

static void set_flags(hrt_fit_result *res, const hrt_fit_model *m, int n_obs)
{
    if (res->phase_second != HRT_PHASE_UNKNOWN && res->phase_prob[res->phase_second] >= HRT_FIT_MULTIMODAL_PROB)
        res->flags |= HRT_FIT_MULTIMODAL;
    double mstep = pow(10.0, m->o.log_mass_step_dex);
    if (res->initial_mass_msun.lo < m->o.mass_min_msun * mstep || res->initial_mass_msun.hi > m->o.mass_max_msun / mstep)
        res->flags |= HRT_FIT_MASS_EDGE;
    if (res->age_yr.hi > AGE_LIMIT_FRACTION * m->o.age_max_yr)
        res->flags |= HRT_FIT_AGE_LIMIT;
    if (m->n_feh > 1 && (res->feh.lo < m->o.feh_min + 0.5 * m->feh_step || res->feh.hi > m->o.feh_max - 0.5 * m->feh_step))
        res->flags |= HRT_FIT_FEH_EDGE;
    int dof = n_obs < 1 ? 1 : n_obs > 4 ? 4 : n_obs;
    if (res->chi2_min > chi2_3sigma[dof])
        res->flags |= HRT_FIT_POOR_MATCH;
    if (res->n_eff < FEW_POINTS_N_EFF)
        res->flags |= HRT_FIT_FEW_POINTS;
}

/* ------------------------------------------------------------------ draws */

/* A seeded Mersenne Twister without gsl_rng_alloc (whose failure would reach
 * GSL's handler): its state lives in the caller's memory of gsl_rng_mt19937->size bytes. */
static void rng_open(gsl_rng *R, void *state, uint64_t seed)
{
    R->type = gsl_rng_mt19937;
    R->state = state;
    gsl_rng_set(R, (unsigned long)(seed ^ (seed >> 32)));
}

/* A point drawn by weight: the one whose cumulative weight range holds a uniform draw. */
static const trail_fit_point *draw_point(const trail_fit_points *S, const double *cum, gsl_rng *R)
{
    double u = gsl_rng_uniform(R) * cum[S->n - 1];
    size_t lo = 0, hi = S->n - 1;
    while (lo < hi) {
        size_t mid = (lo + hi) / 2;
        if (cum[mid] > u)
            hi = mid;
        else
            lo = mid + 1;
    }
    return &S->p[lo];
}

/* A value of quantity q drawn uniformly inside a point's box. */
static double draw_in_box(const trail_fit_point *P, int q, gsl_rng *R)
{
    return P->value[q] + (2.0 * gsl_rng_uniform(R) - 1.0) * P->half[q];
}

/* Value of lattice quantity q at position f between the cell's lighter
 * nodes a (EEP j, then j + 1) and heavier nodes c, and log-age fraction fe
 * of the EEP interval: bilinear, as the likelihood interpolates a sub-cell. */
static double cell_value(const hrt_fit_model *m, size_t a, size_t c, double f, double fe, int q)
{
    const float *A0 = m->node_value + a * LQ_COUNT, *A1 = A0 + LQ_COUNT;
    const float *C0 = m->node_value + c * LQ_COUNT, *C1 = C0 + LQ_COUNT;
    double e0 = A0[q] + f * ((double)C0[q] - A0[q]), e1 = A1[q] + f * ((double)C1[q] - A1[q]);
    return e0 + fe * (e1 - e0);
}

/* Fractional EEP of the star (mass, z) at log age lt on the grid's own
 * interpolated track (hrt_eval): -1 before the track begins, +inf past its
 * end, NaN if the grid cannot evaluate the star. */
static double eep_at(const hrt_grid *g, double mass, double z, double lt)
{
    double age = trail_exp10(lt);
    hrt_state s;
    int rc = hrt_eval(g, 1, &mass, &z, 0.0, &age, &s, NULL);
    if (rc == HRT_E_AGE_RANGE)
        return INFINITY;
    if (rc != HRT_OK)
        return NAN;
    if (s.flags & HRT_FLAG_NOT_MODELLED)
        return -1.0;
    return s.flags & HRT_FLAG_REMNANT ? INFINITY : s.eep;
}

/* The log age at which the grid's star (mass, z) reaches fractional EEP
 * target, starting from the lattice's guess lt (dlt: the lattice's log-age
 * span of one EEP there).  Across the mass between two lattice tracks their
 * log ages are interpolated linearly, the grid's own track is not: in fast
 * phases the difference spans many EEPs.  The EEP is continuous,
 * increasing and linear in log age within each EEP interval, so the target
 * is bracketed by steps that double, then found by regula falsi (Illinois
 * variant), exact once both ends lie in the target's interval.  The
 * lattice's guess stands when the star cannot be evaluated or the target
 * lies beyond its track. */
static double log_age_at_eep(const hrt_grid *g, double mass, double z, double target, double lt, double dlt)
{
    double a = lt, ea = eep_at(g, mass, z, lt);
    if (isnan(ea) || fabs(ea - target) <= DRAW_EEP_TOL)
        return lt;
    double dir = ea < target ? 1.0 : -1.0;
    double step = dir * dlt * (isfinite(ea) && ea >= 0.0 ? fabs(target - ea) + 1.0 : 1.0);
    double b = a, eb = ea;
    int k = 0;
    for (; k < DRAW_SEARCH_MAX && (eb - target) * dir < 0.0; k++, step *= 2.0) {
        a = b;
        ea = eb;
        b = a + step;
        eb = eep_at(g, mass, z, b);
        if (isnan(eb))
            return lt;
    }
    if (k == DRAW_SEARCH_MAX)
        return lt;
    if (a > b) { /* order the bracket: E(a) < target <= E(b) */
        double t = a, te = ea;
        a = b, ea = eb, b = t, eb = te;
    }
    double wa = 1.0, wb = 1.0; /* Illinois: halve the weight of an end kept twice */
    int kept = 0;
    for (k = 0; k < DRAW_SEARCH_MAX && b - a > DRAW_LOG_AGE_TOL; k++) {
        int finite = isfinite(ea) && ea >= 0.0 && isfinite(eb);
        double da = wa * (target - ea), db = wb * (eb - target);
        double x = finite && da + db > 0.0 ? a + (b - a) * da / (da + db) : 0.5 * (a + b);
        if (!(x > a && x < b))
            x = 0.5 * (a + b);
        double ex = eep_at(g, mass, z, x);
        if (isnan(ex))
            return lt;
        if (fabs(ex - target) <= DRAW_EEP_TOL)
            return x;
        if (ex < target) {
            a = x, ea = ex, wa = 1.0;
            wb = kept < 0 ? 0.5 * wb : 1.0;
            kept = -1;
        } else {
            b = x, eb = ex, wb = 1.0;
            wa = kept > 0 ? 0.5 * wa : 1.0;
            kept = 1;
        }
    }
    return ea >= 0.0 ? a : b;
}

/* One posterior draw inside sub-cell P: a position f across the mass
 * between its tracks (uniform in log mass over the sub-cell's row) and a
 * log-age fraction fe of the EEP interval (uniform in age over the
 * sub-cell's span at that mass); log L and log Teff at that (log mass, fe)
 * are the ones the likelihood interpolates there, the phase is the
 * sub-cell's (so the draws' phases are a sample of phase_prob), and the age
 * is the one at which the grid's star of that mass is at that point of its
 * EEP interval. */
static void draw_in_cell(const hrt_fit_model *m, const trail_fit_point *P, gsl_rng *R, hrt_fit_sample *o)
{
    const trail_fit_track *A = &m->track[P->track], *C = A + 1;
    size_t a = A->first_node + (size_t)P->eep, c = C->first_node + (size_t)P->eep;
    double f = ((double)P->i_mass + gsl_rng_uniform(R)) / (double)P->n_mass;
    double la0 = m->log_age[a] + f * (m->log_age[c] - m->log_age[a]);
    double la1 = m->log_age[a + 1] + f * (m->log_age[c + 1] - m->log_age[a + 1]);
    double dla = la1 - la0; /* > 0: log age increases along every track */
    double t_lo = trail_exp10(la0 + P->f_eep_lo * dla), t_hi = trail_exp10(la0 + P->f_eep_hi * dla);
    double age = t_lo + gsl_rng_uniform(R) * (t_hi - t_lo);
    double fe = (log10(age) - la0) / dla;
    fe = fe < P->f_eep_lo ? P->f_eep_lo : fe > P->f_eep_hi ? P->f_eep_hi : fe;
    memset(o, 0, sizeof *o);
    o->initial_mass_msun = trail_exp10(A->log_m + f * (C->log_m - A->log_m));
    o->z = m->z[P->feh_node];
    double lt = log_age_at_eep(m->g, o->initial_mass_msun, o->z, P->eep + fe, la0 + fe * dla, dla);
    o->age_yr = trail_exp10(lt);
    o->log_l_lsun = cell_value(m, a, c, f, fe, LQ_LOG_L);
    o->log_teff_k = cell_value(m, a, c, f, fe, LQ_LOG_TEFF);
    o->phase = P->phase; /* the phase the posterior counted the sub-cell in */
}

static void draw_samples(const hrt_fit_model *m, const trail_fit_points *S, const double *cum, gsl_rng *R, size_t n,
                         hrt_fit_sample *samples)
{
    for (size_t i = 0; i < n; i++)
        draw_in_cell(m, draw_point(S, cum, R), R, &samples[i]);
}

/* d = sqrt(L / (4 pi F)): L from the posterior, F from its Gaussian error. */
static hrt_fit_interval distance_interval(const trail_fit_obs *F, const trail_fit_points *S, const double *cum, gsl_rng *R,
                                          double *dist)
{
    for (size_t i = 0; i < N_DIST_DRAWS; i++) {
        const trail_fit_point *P = draw_point(S, cum, R);
        double ll = draw_in_box(P, PQ_LOG_L, R);
        double lf = F->log_flux + gsl_ran_gaussian(R, F->log_flux_sigma);
        dist[i] = hrt_fit_distance_m(HRT_LSUN_W * pow(10.0, ll), pow(10.0, lf)) / HRT_PC_M;
    }
    return trail_fit_sample_quantiles(dist, N_DIST_DRAWS);
}

/* Everything the result reports about the points S found. */
static int summarise(const hrt_fit_model *m, const trail_fit_obs *F, trail_fit_points *S, uint64_t seed, size_t n_samples,
                     hrt_fit_sample *samples, hrt_fit_result *res, hrt_error *err)
{
    hists H;
    weights w;
    int rc = weigh_points(S, &H, &w, err);
    if (rc != HRT_OK)
        return rc;
    /* one block of scratch: histograms, cumulative weights, distance draws, random state */
    size_t n_values = N_HISTS * HIST_SLOTS + S->n + (F->hr_distance ? N_DIST_DRAWS : 0);
    size_t n_rng = (gsl_rng_mt19937->size + sizeof(double) - 1) / sizeof(double);
    double *scratch = malloc((n_values + n_rng) * sizeof *scratch);
    if (!scratch)
        return trail_set_error(err, HRT_E_NOMEM, "hrt_fit_star: out of memory");
    double *cum = scratch + N_HISTS * HIST_SLOTS, *dist = cum + S->n;
    gsl_rng R;
    rng_open(&R, scratch + n_values, seed);
    res->n_obs = F->n_obs;
    res->chi2_min = w.chi2_min;
    res->n_eff = w.sum_w * w.sum_w / w.sum_w2;
    res->n_points = (double)w.n_weighted;
    set_phases(res, &H, w.sum_w);
    set_intervals(res, &H, S, scratch);
    set_flags(res, m, F->n_obs);
    double c = 0.0;
    for (size_t i = 0; i < S->n; i++) {
        c += S->p[i].weight;
        cum[i] = c;
    }
    draw_samples(m, S, cum, &R, n_samples, samples);
    res->distance_pc = F->hr_distance ? distance_interval(F, S, cum, &R, dist) : trail_fit_no_interval();
    free(scratch);
    return HRT_OK;
}

/* Start a scan of the lattice into S: empty, with what is known of the best point. */
static int scan(const hrt_fit_model *m, const trail_fit_obs *F, trail_fit_points *S, int best_only, double best_dev,
                double chi2_best, hrt_error *err)
{
    S->n = 0;
    S->best_only = best_only;
    S->best_dev = best_dev;
    S->chi2_best = chi2_best;
    return trail_fit_scan_lattice(m, F, S, err);
}

/* The weighted sub-cells of the observation F, into S.  Where the grid
 * stores an interpolation error, it is taken at the best point and added
 * to F's errors (trail_fit_add_interp_error), and the lattice is scanned
 * with the widened errors when they changed.  The best point alone is
 * found first by a cheap best-only scan; the full scan then starts knowing
 * the least chi^2 (when that point has prior weight, so that the summary's
 * least chi^2 is the same), which prunes from the start exactly the points
 * the summary drops (chi^2 more than TRAIL_FIT_CUT_CHI2 above it): the same
 * points, in the same order, as one full scan (two when the errors were
 * widened) without that knowledge.  A best-only scan that fails is
 * repeated as a full one, for its message. */
static int find_points(const hrt_fit_model *m, trail_fit_obs *F, trail_fit_points *S, hrt_error *err)
{
    const trail_fit_obs F0 = *F;
    int rc = scan(m, F, S, 1, INFINITY, INFINITY, err);
    if (rc != HRT_OK)
        return rc == HRT_E_NOMEM ? rc : scan(m, F, S, 0, INFINITY, INFINITY, err);
    double e_interp[2];
    if (trail_fit_add_interp_error(m, F, S, e_interp)) {
        rc = scan(m, F, S, 1, INFINITY, INFINITY, err); /* the best point with the widened errors */
        if (rc != HRT_OK)
            return rc == HRT_E_NOMEM ? rc : scan(m, F, S, 0, INFINITY, INFINITY, err);
    } else {
        *F = F0; /* the errors as measured (trail_fit_add_interp_error may have widened them by less than 1e-3) */
    }
    if (!(S->n == 1 && S->p[0].prior > 0))
        return scan(m, F, S, 0, INFINITY, INFINITY, err);
    return scan(m, F, S, 0, S->best_dev, S->p[0].chi2, err);
}

int hrt_fit_star(const hrt_fit_model *m, const hrt_fit_obs *obs, uint64_t seed, size_t n_samples,
                 hrt_fit_sample *samples, hrt_fit_result *res, hrt_error *err)
{
    if (!m || !obs || !res || (n_samples > 0 && !samples))
        return trail_set_error(err, HRT_E_NULL, "hrt_fit_star: %s is NULL",
                               !m ? "model" : !obs ? "obs" : !res ? "res" : "samples");
    memset(res, 0, sizeof *res);
    res->struct_size = sizeof *res;
    trail_fit_obs F;
    int rc = trail_fit_obs_prepare(m, obs, &F, err);
    if (rc != HRT_OK)
        return trail_fit_finish(&res->status, rc, err);
    trail_fit_points S = {NULL, 0, 0, INFINITY, INFINITY, 0};
    rc = find_points(m, &F, &S, err);
    if (rc == HRT_OK)
        rc = summarise(m, &F, &S, seed, n_samples, samples, res, err);
    free(S.p);
    return trail_fit_finish(&res->status, rc, err);
}
