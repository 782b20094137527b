/* hrtrail: the likelihood of an observation over the lattice: cells near it
 * are found through the bounding boxes, subdivided, and each sub-cell
 * within the cuts becomes a point with its chi^2 and prior. */
#include <math.h>
#include <stdint.h>

#include "util/util.h"
#include "fit/lattice.h"
#include "fit/posterior.h"

/* Largest step of a sub-cell, in sigma of each measured observable, and the
 * most subdivisions of a cell along each of its two directions. */
#define SUB_STEP_SIGMA 0.5
#define SUB_MAX 64

static inline float absf(float x) { return x < 0 ? -x : x; }
static inline float min4f(float a, float b, float c, float d)
{
    float x = a < b ? a : b, y = c < d ? c : d;
    return x < y ? x : y;
}
static inline float max4f(float a, float b, float c, float d)
{
    float x = a > b ? a : b, y = c > d ? c : d;
    return x > y ? x : y;
}

/* Squared distance of v from [lo, hi] in units of 1/inv. */
static inline double out_sq(double v, double lo, double hi, double inv)
{
    double r = v < lo ? (lo - v) * inv : v > hi ? (v - hi) * inv : 0.0;
    return r * r;
}

/* A lower bound of chi^2 (without [Fe/H]) over every position whose lattice
 * quantities lie in the box lo[LQ_N_OBSERVED], hi[LQ_N_OBSERVED].  For Teff,
 * with x the distance in log Teff from the measured value, 10^x - 1 >= x ln 10
 * above it and 1 - 10^-x >= x ln 10 / (1 + x ln 10) below it. */
static inline double box_chi2(const trail_fit_obs *F, const float *lo, const float *hi)
{
    double c = 0.0, x;
    if ((x = (double)lo[LQ_LOG_TEFF] - F->log_teff) > 0.0) {
        x *= F->inv_sigma_log_teff;
        c = x * x;
    } else if ((x = F->log_teff - (double)hi[LQ_LOG_TEFF]) > 0.0) {
        x = x * F->inv_sigma_log_teff / (1.0 + TRAIL_LN10 * x);
        c = x * x;
    }
    if (F->log_l.given) c += out_sq(F->log_l.value, lo[LQ_LOG_L], hi[LQ_LOG_L], F->inv_sigma_log_l);
    if (F->log_g.given) c += out_sq(F->log_g.value, lo[LQ_LOG_G], hi[LQ_LOG_G], F->inv_sigma_log_g);
    return c;
}

/* chi^2 above which a lower bound rules a box out: TRAIL_FIT_CUT_CHI2 above
 * the best so far, or (best-only scans) the best itself.  A bound is
 * computed in floating point from float corners, the values inside the box
 * in double: BOUND_SLACK (relative, far above the rounding of either)
 * keeps the bound a true one. */
#define BOUND_SLACK 1e-9
static inline double chi2_cut(const trail_fit_points *S)
{
    double c = S->best_only ? S->chi2_best : S->chi2_best + TRAIL_FIT_CUT_CHI2;
    return c + BOUND_SLACK * (1.0 + fabs(c));
}

/* 1 if no position inside the box can be kept: outside the
 * TRAIL_FIT_CUT_SIGMA window in one observable, or (once a point within
 * TRAIL_FIT_MATCH_SIGMA has been found, so that the match test is decided)
 * with chi^2 beyond TRAIL_FIT_CUT_CHI2 above the best point so far, which
 * can only fall: such points would be dropped at the end. */
static inline int box_out(const trail_fit_obs *F, const trail_fit_points *S, const float *lo, const float *hi,
                          double chi2_feh)
{
    if (hi[LQ_LOG_TEFF] < F->log_teff_lo || lo[LQ_LOG_TEFF] > F->log_teff_hi)
        return 1;
    if (F->log_l.given && (hi[LQ_LOG_L] < F->log_l_lo || lo[LQ_LOG_L] > F->log_l_hi))
        return 1;
    if (F->log_g.given && (hi[LQ_LOG_G] < F->log_g_lo || lo[LQ_LOG_G] > F->log_g_hi))
        return 1;
    return S->best_dev <= TRAIL_FIT_MATCH_SIGMA && chi2_feh + box_chi2(F, lo, hi) > chi2_cut(S);
}

/* The cell between the lighter track A and the heavier C (the next one) and
 * EEPs j, j + 1, at one [Fe/H] node. */
typedef struct cell {
    const hrt_fit_model *m;
    const trail_fit_obs *F;
    const trail_fit_track *A, *C;
    int j;
    double feh_weight, feh, chi2_feh; /* chi2_feh: the [Fe/H] residual squared (0 if not measured) */
    const float *lighter0, *lighter1, *heavier0, *heavier1; /* nodes of A and C at EEPs j and j + 1 */
    double log_age_lighter0, log_age_lighter1, log_age_heavier0, log_age_heavier1;
    int n_mass, n_eep;                /* subdivisions along the mass and along the EEP interval */
    double dlog_mass;                 /* log mass from A to C */
    float half_mass_extent[LQ_COUNT]; /* half-extents along the mass direction, the same for every sub-cell */
} cell;

/* One row of sub-cells: a mass between A and C, along the EEP interval. */
typedef struct cell_row {
    int i_mass;                  /* the row's index along the mass */
    double f_mass;               /* position between A (0) and C (1) */
    double log_age0, log_age1;   /* log ages at the row's two EEP edges */
    float edge0[LQ_COUNT], edge1[LQ_COUNT]; /* the row's two EEP edges */
    double log_mass;
    double prior_rate;           /* prior per unit age, once a point needs it (-1 before) */
    double age_ratio;            /* t_hi / t_lo of a sub-cell, with prior_rate */
    double half_eep;             /* half a sub-cell's step in the EEP fraction */
    double dlog_teff, dlog_age;  /* from edge0 to edge1 */
    float half_extent[LQ_COUNT]; /* half-extents of a sub-cell of this row */
} cell_row;

/* Largest change along the mass (*across) and along the EEPs (*along) of a
 * lattice quantity q of the cell, in units of 1/inv. */
static void cell_spread(const cell *c, int q, double inv, double *across, double *along)
{
    double a = fmax(fabs(c->lighter0[q] - c->heavier0[q]), fabs(c->lighter1[q] - c->heavier1[q])) * inv;
    double b = fmax(fabs(c->lighter0[q] - c->lighter1[q]), fabs(c->heavier0[q] - c->heavier1[q])) * inv;
    *across = fmax(*across, a);
    *along = fmax(*along, b);
}

/* Subdivisions: steps of at most SUB_STEP_SIGMA sigma in every measured quantity. */
static void subdivide(cell *c)
{
    const trail_fit_obs *F = c->F;
    double across = fmax(fabs(c->lighter0[LQ_LOG_TEFF] - c->heavier0[LQ_LOG_TEFF]),
                         fabs(c->lighter1[LQ_LOG_TEFF] - c->heavier1[LQ_LOG_TEFF])) * F->inv_sigma_log_teff;
    double along = fmax(fabs(c->lighter0[LQ_LOG_TEFF] - c->lighter1[LQ_LOG_TEFF]),
                        fabs(c->heavier0[LQ_LOG_TEFF] - c->heavier1[LQ_LOG_TEFF])) * F->inv_sigma_log_teff;
    if (F->log_l.given)
        cell_spread(c, LQ_LOG_L, F->inv_sigma_log_l, &across, &along);
    if (F->log_g.given)
        cell_spread(c, LQ_LOG_G, F->inv_sigma_log_g, &across, &along);
    int na = (int)ceil(across / SUB_STEP_SIGMA), nb = (int)ceil(along / SUB_STEP_SIGMA);
    if (na < 1) na = 1;
    if (nb < 1) nb = 1;
    if (na > SUB_MAX) na = SUB_MAX;
    if (nb > SUB_MAX) nb = SUB_MAX;
    c->n_mass = na;
    c->n_eep = nb;
    for (int q = 0; q < LQ_COUNT; q++)
        c->half_mass_extent[q] = 0.5f * (absf(c->heavier0[q] - c->lighter0[q]) + absf(c->heavier1[q] - c->lighter1[q])) /
                                 (float)na;
}

/* Row i_mass of the cell; 0 if none of its sub-cells can be kept. */
static int start_row(const cell *c, const trail_fit_points *S, int i_mass, cell_row *r)
{
    double amax = c->m->log_age_max;
    double fa = (i_mass + 0.5) / c->n_mass;
    double A0 = c->log_age_lighter0 + fa * (c->log_age_heavier0 - c->log_age_lighter0);
    double A1 = c->log_age_lighter1 + fa * (c->log_age_heavier1 - c->log_age_lighter1);
    if (!(A1 > A0) || A0 >= amax)
        return 0;
    for (int q = 0; q < LQ_COUNT; q++) {
        r->edge0[q] = (float)(c->lighter0[q] + fa * (c->heavier0[q] - c->lighter0[q]));
        r->edge1[q] = (float)(c->lighter1[q] + fa * (c->heavier1[q] - c->lighter1[q]));
    }
    /* the row's sub-cells lie on the segment edge0-edge1: its box may rule them all out */
    float row_min[LQ_N_OBSERVED], row_max[LQ_N_OBSERVED];
    for (int q = 0; q < LQ_N_OBSERVED; q++) {
        row_min[q] = r->edge0[q] < r->edge1[q] ? r->edge0[q] : r->edge1[q];
        row_max[q] = r->edge0[q] < r->edge1[q] ? r->edge1[q] : r->edge0[q];
    }
    if (box_out(c->F, S, row_min, row_max, c->chi2_feh))
        return 0;
    r->i_mass = i_mass;
    r->f_mass = fa;
    r->log_age0 = A0;
    r->log_age1 = A1;
    r->log_mass = c->A->log_m + fa * c->dlog_mass;
    r->prior_rate = -1.0;
    r->age_ratio = 0.0;
    double eep_frac_max = A1 > amax ? (amax - A0) / (A1 - A0) : 1.0; /* the age prior ends at age_max_yr */
    r->half_eep = 0.5 * eep_frac_max / c->n_eep;
    r->dlog_teff = r->edge1[LQ_LOG_TEFF] - r->edge0[LQ_LOG_TEFF];
    r->dlog_age = A1 - A0;
    for (int q = 0; q < LQ_COUNT; q++)
        r->half_extent[q] = 0.5f * (c->half_mass_extent[q] + absf(r->edge1[q] - r->edge0[q]) * (float)r->half_eep * 2.0f);
    return 1;
}

/* chi^2 of log L, log g and [Fe/H] at a sub-cell, and in *dev the largest
 * |residual| / sigma among them ([Fe/H] counts only in *dev). */
static inline double chi2_without_teff(const cell *c, double log_l, double log_g, double *dev)
{
    const trail_fit_obs *F = c->F;
    double r, chi2 = c->chi2_feh;
    *dev = 0.0;
    if (F->log_l.given) {
        r = (log_l - F->log_l.value) * F->inv_sigma_log_l;
        chi2 += r * r;
        *dev = fabs(r);
    }
    if (F->log_g.given) {
        r = (log_g - F->log_g.value) * F->inv_sigma_log_g;
        chi2 += r * r;
        if (fabs(r) > *dev) *dev = fabs(r);
    }
    if (F->feh.given) {
        r = (c->feh - F->feh.value) / F->feh.sigma;
        if (fabs(r) > *dev) *dev = fabs(r);
    }
    return chi2;
}

/* Store the sub-cell at EEP fraction f_eep of row r. */
static void store_point(const cell *c, cell_row *r, double f_eep, double log_l, double log_g, double log_teff,
                        double teff, double chi2, trail_fit_point *P)
{
    const trail_fit_track *A = c->A, *C = c->C;
    double hb = r->half_eep, dlm = c->dlog_mass;
    int na = c->n_mass;
    if (r->prior_rate < 0.0) {
        r->prior_rate = exp(A->log_prior + r->f_mass * (C->log_prior - A->log_prior)) * dlm / na * c->feh_weight;
        r->age_ratio = exp(TRAIL_LN10 * 2.0 * hb * r->dlog_age);
    }
    P->age_lo_yr = exp(TRAIL_LN10 * (r->log_age0 + (f_eep - hb) * r->dlog_age));
    P->age_hi_yr = P->age_lo_yr * r->age_ratio;
    P->prior = r->prior_rate * (P->age_hi_yr - P->age_lo_yr);
    P->chi2 = chi2;
    P->phase = (r->f_mass < 0.5 ? c->m->phase[A->first_node + (size_t)c->j] : c->m->phase[C->first_node + (size_t)c->j]);
    P->feh_node = (uint16_t)A->feh_node;
    P->track = (uint32_t)(A - c->m->track);
    P->eep = c->j;
    P->f_eep_lo = (float)(f_eep - hb);
    P->f_eep_hi = (float)(f_eep + hb);
    P->i_mass = (uint8_t)r->i_mass;
    P->n_mass = (uint8_t)na;
    const float *e0 = r->edge0, *e1 = r->edge1, *hq = r->half_extent;
    P->value[PQ_LOG_INITIAL_MASS] = (float)r->log_mass;
    P->half[PQ_LOG_INITIAL_MASS] = (float)(0.5 * dlm / na);
    P->value[PQ_FEH] = (float)c->feh;
    P->half[PQ_FEH] = (float)(0.5 * c->m->feh_step);
    P->value[PQ_MASS] = e0[LQ_MASS] + (float)f_eep * (e1[LQ_MASS] - e0[LQ_MASS]);
    P->half[PQ_MASS] = hq[LQ_MASS];
    P->value[PQ_LOG_L] = (float)log_l;
    P->half[PQ_LOG_L] = hq[LQ_LOG_L];
    P->value[PQ_TEFF] = (float)teff;
    P->half[PQ_TEFF] = hq[LQ_LOG_TEFF] * (float)(teff * TRAIL_LN10);
    P->value[PQ_LOG_G] = (float)log_g;
    P->half[PQ_LOG_G] = hq[LQ_LOG_G];
    P->value[PQ_LOG_R] = (float)trail_log_r_from(log_l, log_teff);
    P->half[PQ_LOG_R] = 0.5f * hq[LQ_LOG_L] + 2.0f * hq[LQ_LOG_TEFF];
}

/* The sub-cells of row r within the cuts; -1 when out of memory. */
static int visit_row(const cell *c, cell_row *r, trail_fit_points *S)
{
    const trail_fit_obs *F = c->F;
    const float *e0 = r->edge0, *e1 = r->edge1;
    /* once the match test is decided, sub-cells whose log L, log g and
     * [Fe/H] alone put them beyond the chi^2 cut are passed over before
     * their Teff (an exponential) is computed */
    double cut = S->best_dev > TRAIL_FIT_MATCH_SIGMA ? INFINITY
                 : S->best_only                      ? S->chi2_best
                                                     : S->chi2_best + TRAIL_FIT_CUT_CHI2;
    for (int ib = 0; ib < c->n_eep; ib++) {
        double fb = (2 * ib + 1) * r->half_eep;
        double log_l = e0[LQ_LOG_L] + fb * (e1[LQ_LOG_L] - e0[LQ_LOG_L]);
        double log_g = e0[LQ_LOG_G] + fb * (e1[LQ_LOG_G] - e0[LQ_LOG_G]);
        double dev, chi2 = chi2_without_teff(c, log_l, log_g, &dev);
        double log_teff = e0[LQ_LOG_TEFF] + fb * r->dlog_teff;
        if (dev > TRAIL_FIT_CUT_SIGMA || chi2 > cut || log_teff < F->log_teff_lo || log_teff > F->log_teff_hi)
            continue;
        double teff = exp(TRAIL_LN10 * log_teff);
        double rt = (teff - F->teff.value) / F->teff.sigma;
        chi2 += rt * rt;
        if (fabs(rt) > dev) dev = fabs(rt);
        if (dev > TRAIL_FIT_CUT_SIGMA)
            continue;
        if (dev < S->best_dev) S->best_dev = dev;
        if (S->best_only) { /* p[0]: the first point of least chi^2 */
            if (chi2 < S->chi2_best) {
                S->chi2_best = chi2;
                store_point(c, r, fb, log_l, log_g, log_teff, teff, chi2, &S->p[0]);
                S->n = 1;
            }
            continue;
        }
        if (chi2 > S->chi2_best + TRAIL_FIT_CUT_CHI2)
            continue;
        if (chi2 < S->chi2_best) S->chi2_best = chi2;
        if (S->n == S->cap && trail_fit_grow((void **)&S->p, &S->cap, S->n + 1, sizeof *S->p))
            return -1;
        store_point(c, r, fb, log_l, log_g, log_teff, teff, chi2, &S->p[S->n++]);
    }
    return 0;
}

/* Visit cell j between tracks A and C (= A + 1) at node k; -1 when out of memory. */
static int visit_cell(const hrt_fit_model *m, const trail_fit_obs *F, const trail_fit_track *A, int j, size_t k,
                      double chi2_feh, trail_fit_points *S)
{
    cell c;
    c.m = m;
    c.F = F;
    c.A = A;
    c.C = A + 1;
    c.j = j;
    c.lighter0 = m->node_value + (A->first_node + (size_t)j) * LQ_COUNT;
    c.lighter1 = c.lighter0 + LQ_COUNT;
    c.heavier0 = m->node_value + (c.C->first_node + (size_t)j) * LQ_COUNT;
    c.heavier1 = c.heavier0 + LQ_COUNT;
    float lo[LQ_N_OBSERVED], hi[LQ_N_OBSERVED];
    for (int q = 0; q < LQ_N_OBSERVED; q++) {
        lo[q] = min4f(c.lighter0[q], c.lighter1[q], c.heavier0[q], c.heavier1[q]);
        hi[q] = max4f(c.lighter0[q], c.lighter1[q], c.heavier0[q], c.heavier1[q]);
    }
    if (box_out(F, S, lo, hi, chi2_feh))
        return 0;
    c.log_age_lighter0 = m->log_age[A->first_node + (size_t)j];
    c.log_age_lighter1 = m->log_age[A->first_node + (size_t)j + 1];
    c.log_age_heavier0 = m->log_age[c.C->first_node + (size_t)j];
    c.log_age_heavier1 = m->log_age[c.C->first_node + (size_t)j + 1];
    if (c.log_age_lighter0 >= m->log_age_max && c.log_age_heavier0 >= m->log_age_max)
        return 0;
    c.feh_weight = m->feh_weight[k];
    c.feh = m->feh[k];
    c.chi2_feh = chi2_feh;
    c.dlog_mass = c.C->log_m - A->log_m;
    subdivide(&c);
    for (int ia = 0; ia < c.n_mass; ia++) {
        cell_row r;
        if (start_row(&c, S, ia, &r) && visit_row(&c, &r, S))
            return -1;
    }
    return 0;
}

/* The cells between track A and the next, block by block, skipping the
 * blocks (and blocks of blocks) whose bounding box is out; -1 when out of memory. */
static int scan_track_pair(const hrt_fit_model *m, const trail_fit_obs *F, const trail_fit_track *A, size_t k,
                           double chi2_feh, trail_fit_points *S)
{
    size_t nblk = ((size_t)A->n_cell + TRAIL_FIT_BOX_CELLS - 1) / TRAIL_FIT_BOX_CELLS;
    for (size_t b = 0; b < nblk; b++) {
        if (b % TRAIL_FIT_SUPERBOX_BOXES == 0) {
            const float *sbox = m->superbox + (A->first_superbox + b / TRAIL_FIT_SUPERBOX_BOXES) * 2 * LQ_N_OBSERVED;
            if (box_out(F, S, sbox, sbox + LQ_N_OBSERVED, chi2_feh)) {
                b += TRAIL_FIT_SUPERBOX_BOXES - 1;
                continue;
            }
        }
        const float *box = m->box + (A->first_box + b) * 2 * LQ_N_OBSERVED;
        if (box_out(F, S, box, box + LQ_N_OBSERVED, chi2_feh))
            continue;
        int j1 = (int)((b + 1) * TRAIL_FIT_BOX_CELLS);
        if (j1 > A->n_cell) j1 = A->n_cell;
        for (int j = (int)(b * TRAIL_FIT_BOX_CELLS); j < j1; j++)
            if (visit_cell(m, F, A, j, k, chi2_feh, S))
                return -1;
    }
    return 0;
}

/* [Fe/H] node visited at step i: the one nearest the measured [Fe/H] first,
 * then outwards (so the best chi^2 is found early and prunes the rest);
 * in order when [Fe/H] is not measured.  SIZE_MAX: no node at this step. */
static size_t node_at(const hrt_fit_model *m, const trail_fit_obs *F, size_t i)
{
    if (!F->feh.given || m->n_feh < 2)
        return i < m->n_feh ? i : SIZE_MAX;
    double x = (F->feh.value - m->feh[0]) / m->feh_step;
    size_t k0 = x <= 0 ? 0 : x >= (double)(m->n_feh - 1) ? m->n_feh - 1 : (size_t)floor(x + 0.5);
    size_t d = (i + 1) / 2;
    if (i % 2 == 1)
        return k0 + d < m->n_feh ? k0 + d : SIZE_MAX;
    return d <= k0 ? k0 - d : SIZE_MAX;
}

int trail_fit_scan_lattice(const hrt_fit_model *m, const trail_fit_obs *F, trail_fit_points *S, hrt_error *err)
{
    if (S->best_only && trail_fit_grow((void **)&S->p, &S->cap, 1, sizeof *S->p))
        return trail_set_error(err, HRT_E_NOMEM, "hrt_fit_star: out of memory");
    for (size_t step = 0; step < 2 * m->n_feh; step++) {
        size_t k = node_at(m, F, step);
        if (k == SIZE_MAX)
            continue;
        double chi2_feh = 0.0;
        if (F->feh.given) {
            double r = (m->feh[k] - F->feh.value) / F->feh.sigma;
            if (fabs(r) > TRAIL_FIT_CUT_SIGMA)
                continue;
            chi2_feh = r * r;
        }
        for (size_t t = m->first_track[k]; t + 1 < m->first_track[k + 1]; t++)
            if (m->track[t].first_box != SIZE_MAX && scan_track_pair(m, F, &m->track[t], k, chi2_feh, S))
                return trail_set_error(err, HRT_E_NOMEM, "hrt_fit_star: out of memory");
    }
    if (S->n == 0 || S->best_dev > TRAIL_FIT_MATCH_SIGMA)
        return trail_set_error(err, HRT_E_NO_MATCH,
                               "hrt_fit_star: no model of the grid lies within %g sigma of every measured quantity "
                               "(closest: %.3g sigma; Teff %g K%s)",
                               TRAIL_FIT_MATCH_SIGMA, S->n ? S->best_dev : INFINITY, F->teff.value,
                               F->log_l.given ? ", with the luminosity given" : "");
    return HRT_OK;
}

/* ------------------------------------------------------------------------
 * The grid's own interpolation error, added to the measurement errors
 * ------------------------------------------------------------------------ */
/* sigma^2 + e^2, and whether that changes sigma by more than a part in 1e3. */
static int widen(double *sigma, double e)
{
    double s = sqrt(*sigma * *sigma + e * e);
    int changed = s > *sigma * (1.0 + 1e-3);
    *sigma = s;
    return changed;
}

int trail_fit_add_interp_error(const hrt_fit_model *m, trail_fit_obs *F, const trail_fit_points *S, double e[2])
{
    e[0] = e[1] = 0.0;
    if (!hrt_grid_has_interp_error(m->g) || S->n == 0)
        return 0;
    size_t best = 0;
    for (size_t i = 1; i < S->n; i++)
        if (S->p[i].chi2 < S->p[best].chi2)
            best = i;
    const trail_fit_point *P = &S->p[best];
    double mass = exp(TRAIL_LN10 * (double)P->value[PQ_LOG_INITIAL_MASS]), z = m->z[P->feh_node];
    double age = sqrt(P->age_lo_yr * P->age_hi_yr);
    hrt_state st;
    hrt_interp_error ie;
    if (hrt_eval(m->g, 1, &mass, &z, 0.0, &age, &st, NULL) != HRT_OK ||
        hrt_state_interp_error(m->g, &st, &ie, NULL) != HRT_OK)
        return 0;
    e[0] = ie.log_l_dex, e[1] = ie.log_teff_dex;
    /* Teff in K; log g = log M + 4 log Teff - log L + const: both errors, added linearly (an upper estimate) */
    int changed = widen(&F->teff.sigma, F->teff.value * TRAIL_LN10 * ie.log_teff_dex);
    if (F->log_l.given)
        changed |= widen(&F->log_l.sigma, ie.log_l_dex);
    if (F->log_g.given)
        changed |= widen(&F->log_g.sigma, ie.log_l_dex + 4.0 * ie.log_teff_dex);
    if (!changed)
        return 0;
    const trail_fit_measured *L = &F->log_l, *G = &F->log_g;
    double tl = F->teff.value - TRAIL_FIT_CUT_SIGMA * F->teff.sigma, th = F->teff.value + TRAIL_FIT_CUT_SIGMA * F->teff.sigma;
    F->log_teff_lo = tl > 1.0 ? log10(tl) : -INFINITY;
    F->log_teff_hi = log10(th);
    F->inv_sigma_log_teff = F->teff.value * TRAIL_LN10 / F->teff.sigma;
    F->log_l_lo = L->given ? L->value - TRAIL_FIT_CUT_SIGMA * L->sigma : -INFINITY;
    F->log_l_hi = L->given ? L->value + TRAIL_FIT_CUT_SIGMA * L->sigma : INFINITY;
    F->inv_sigma_log_l = L->given ? 1.0 / L->sigma : 0.0;
    F->log_g_lo = G->given ? G->value - TRAIL_FIT_CUT_SIGMA * G->sigma : -INFINITY;
    F->log_g_hi = G->given ? G->value + TRAIL_FIT_CUT_SIGMA * G->sigma : INFINITY;
    F->inv_sigma_log_g = G->given ? 1.0 / G->sigma : 0.0;
    return 1;
}
