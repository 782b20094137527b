/*
 * The core's private header: the prepared layout of an open grid and the
 * query context.  Only lib/core/ includes it; the other layers (build,
 * population, fit) see a grid through the public API alone (the layering
 * test in tests/layers.py enforces this).
 */
#ifndef HRTRAIL_LIB_CORE_H
#define HRTRAIL_LIB_CORE_H

#include <pthread.h>
#include <stdarg.h>
#include <stdatomic.h>
#include <stddef.h>
#include <math.h>
#include <stdint.h>

#include "hrtrail.h"
#include "util/schema.h"
#include "util/util.h"

/* Quantities interpolated across mass and [Fe/H] at fixed EEP, in the order
 * they are stored in hrt_grid.  R is not among them: it follows from L and
 * Teff by the Stefan-Boltzmann law, so every state is consistent. */
enum { Q_AGE = 0, Q_L, Q_TEFF, Q_MASS, Q_HE, Q_CO, NQ };
/* Q_MASS, Q_HE and Q_CO are stored and interpolated as fractions of the
 * initial mass. */
#define NQS (NQ - 1) /* quantities other than log age */

/* bins of the per-track log age -> EEP table */
#define TRAIL_AGE_TAB 256


typedef struct zgroup {
    double z, feh;
    size_t n_mass;
    double *mass;          /* [n_mass] initial masses, Msun */
    double *logm;          /* [n_mass + 1] log10 of them (padded) */
    int *route;            /* [n_mass] */
    int *n_eep;            /* [n_mass] valid EEPs */
    int *remnant;          /* [n_mass] hrt_remnant */
    double *remnant_knots;    /* [n_mass + 1][2] remnant mass value and slope across log mass */
    double *boundary;      /* [n_routes - 1] route-boundary masses, Msun */
    size_t route_lo[TRAIL_MAX_ROUTES], route_hi[TRAIL_MAX_ROUTES]; /* tracks [lo, hi) of each route */
    /* [n_eep_max][n_mass + 1][NQ][2]: value and slope across log mass of
     * every quantity at each knot; one query reads the 2 x NQ x 2 contiguous
     * doubles of its interval at each EEP it touches.  See trail_knot(). */
    double *knots;
    int8_t *phase;         /* [n_mass][n_eep_max] hrt_phase of the interval from EEP j */
    int32_t *runs;         /* [n_mass][n_eep_max][2] first EEP of the phase run containing j,
                            * first EEP after it */
    uint16_t *age_tab;     /* [n_mass][TRAIL_AGE_TAB] EEP at the start of each log-age bin */
    double *age_tab_x;     /* [n_mass][2] first log age and bins per dex of the table */
    /* [n_mass][n_eep_max][4]: log age value and slope of track i and of
     * track i + 1 at each EEP (the slopes blended towards the interval's
     * secant per EEP so that log age increases with EEP at every mass of
     * the interval: grid_prep.c, age_blend), contiguous along EEPs, so that the age search
     * of a star between them walks through neighbouring memory. */
    double *age_interval;
    double *age_dx_max;    /* [n_mass][2] largest log-mass step below / above a track for which
                            * extrapolated log age stays increasing in EEP */
    /* [n_eep_max][n_mass + 1][n_extra][2]: value and slope across log mass
     * of every extra quantity (extra.c), apart from the standard knots so
     * that queries without extras never touch them; NULL without extras. */
    double *xknots;
    /* Log mass -> track table, a starting point for the interval search:
     * bin k (of n_mass_bin, uniform in log mass from logm[0], mass_bin_x =
     * {logm[0], bins per dex}) holds the last track at or below its start. */
    uint32_t *mass_bin;
    size_t n_mass_bin;
    double mass_bin_x[2];
} zgroup;


struct hrt_grid {
    int interp;
    double z_ref;
    size_t n_z;
    zgroup *grp;
    size_t n_routes;
    route_layout *routes;
    size_t n_eep_max;
    size_t n_attrs;
    attr_pair *attrs;
    size_t bytes;
    size_t n_extra;           /* extra per-EEP quantities (extra.c) */
    trail_extra_decl *extra;  /* [n_extra] their names, units, meanings */
    /* The extras' knots are prepared on their first query (extra.c), so that
     * opening a grid costs their slopes only for those who ask: until then
     * extra_raw[iz] holds the file's values [n_extra][n_mass][n_eep_max].
     * extra_ready is set (release) once every group's xknots is filled,
     * under extra_lock; the only part of an open grid that changes. */
    double **extra_raw;
    pthread_mutex_t extra_lock;
    int extra_lock_init;
    atomic_int extra_ready;
    struct trail_errfield *errf; /* stored leave-one-out error field of the grid's type, or NULL (interp_error.c) */
};

typedef struct trail_errfield trail_errfield;
/* Read the optional group accuracy/ of the file into g->errf (interp_error.c). */
int trail_errfield_read(const char *path, hrt_grid *g, hrt_error *err);
void trail_errfield_free(trail_errfield *ef);

/* Mass context inside one metallicity group: which interval, which weights. */
typedef struct mctx {
    const zgroup *gp;
    size_t i;       /* left knot of the interval (i + 1 is always addressable) */
    size_t near;    /* track nearest in log mass (for phases and remnant kinds) */
    double w_val[4]; /* weights of y_i, d_i, y_{i+1}, d_{i+1} (values, slopes of the two knots) */
    double w_age[4]; /* the same for log age (blended towards linear where needed, grid_prep.c) */
    int n_eep;      /* EEPs both knots reach */
    int extrapolated;
    int interior;   /* strictly between two knots of the route (not an end) */
    double extrap_dex;   /* log mass beyond the route's end track (0 inside) */
    double extrap_limit; /* how far extrapolation may reach there (extrap_limit in eval.c) */
} mctx;

/* Extrapolation beyond a route's end track reaches at most this many times
 * the spacing to the route's next track (eval.c, extrap_limit): enough for
 * the boundaries a metallicity between two groups places between their
 * tracks (up to 1.35 spacings on the default grid), far from a whole route. */
#define TRAIL_EXTRAP_SPACINGS 2.0

#include "core/place.h"

/* Everything a query needs once (mass, Z) is known. */
typedef struct qctx {
    const hrt_grid *g;
    double mass, z;
    int route;
    trail_zplace zp;       /* placement of z */
    size_t g_lo, g_hi;     /* stencil of groups [g_lo, g_hi] */
    double feh_stencil[TRAIL_MAX_Z]; /* [Fe/H] of the stencil groups */
    double w_feh[4];       /* Hermite weights across [Fe/H] in [g0, g0 + 1] */
    mctx m[TRAIL_MAX_Z];   /* indexed by group; set for groups g_lo .. g_hi */
    int n_eep;             /* EEPs of the interpolated star */
    int flags;
} qctx;

/* Steffen (1990, A&A 239, 443, eq. 11) slope at knot k of n, with one-sided
 * secants at the ends, as GSL's gsl_interp_steffen: used for the slopes
 * across mass at open (slopes.c) and across [Fe/H] at query time (eval.c). */
static inline double trail_steffen_slope(const double *x, const double *y, size_t n, size_t k)
{
    if (k == 0)
        return (y[1] - y[0]) / (x[1] - x[0]);
    if (k == n - 1)
        return (y[n - 1] - y[n - 2]) / (x[n - 1] - x[n - 2]);
    double h_right = x[k + 1] - x[k], h_left = x[k] - x[k - 1];
    double s_right = (y[k + 1] - y[k]) / h_right, s_left = (y[k] - y[k - 1]) / h_left;
    double p = (s_left * h_right + s_right * h_left) / (h_left + h_right);
    double m = fabs(s_left) < fabs(s_right) ? fabs(s_left) : fabs(s_right);
    if (0.5 * fabs(p) < m)
        m = 0.5 * fabs(p);
    return ((s_left < 0.0 ? -1.0 : 1.0) + (s_right < 0.0 ? -1.0 : 1.0)) * m;
}

/* slopes.c: knot slopes of each interpolation type, computed with the same
 * formulas as GSL's types (checked against GSL by tests/test_core.c). */
size_t trail_interp_min_size(int interp);
int trail_interp_effective(int interp, size_t n);
/* Interpolation type across [Fe/H]: the grid's, or simpler with few groups. */
static inline int trail_z_type(const hrt_grid *g) { return trail_interp_effective(g->interp, g->n_z); }
int trail_slopes_gsl(size_t n, const double *x, const double *y, double *d, void *gsl_interp_obj);
/* Runs of consecutive tracks of one route of gp that all reach EEP j (the
 * runs over which slopes across mass are taken): fn(ctx, a, n) for tracks
 * a..a+n-1, in route order; stops at, and returns, the first code not HRT_OK. */
int trail_eep_runs(const hrt_grid *g, const zgroup *gp, size_t j, int (*fn)(void *ctx, size_t a, size_t n), void *ctx);
void trail_slopes_local(int interp, size_t n, const double *x, const double *y, double *d);
/* Scratch of trail_slopes_work for n knots (akima: n + 4, cspline: 3 n). */
#define TRAIL_SLOPES_WORK(n) (3 * (size_t)(n) + 8)
void trail_slopes_work(int interp, size_t n, const double *x, const double *y, double *d, double *work);
/* Weights of the cubic Hermite form on [x0, x1] at x (values and slopes at
 * both knots), or of the line for HRT_INTERP_LINEAR.  Inline: the batch
 * kernel computes them for every star. */
static inline void trail_hermite_weights(int interp, double x0, double x1, double x, double w[4])
{
    double h = x1 - x0, t = (x - x0) / h;
    if (interp == HRT_INTERP_LINEAR) {
        w[0] = 1.0 - t;
        w[1] = 0.0;
        w[2] = t;
        w[3] = 0.0;
        return;
    }
    double u = 1.0 - t;
    w[0] = (1.0 + 2.0 * t) * u * u;
    w[1] = t * u * u * h;
    w[2] = t * t * (3.0 - 2.0 * t);
    w[3] = -t * t * u * h;
}

/* grid_read.c: trail_file_read, with the code for a file that does not
 * exist (HRT_E_NOT_FOUND for the default grid, else HRT_E_IO). */
int trail_file_read_code(const char *path, int oldest, int missing_code, trail_file *f, hrt_error *err);

/* grid_extra_read.c: the extra per-EEP quantities of a file (fh: the open
 * file, an HDF5 hid_t), and their release (trail_file_free calls it). */
int trail_file_read_extras(int64_t fh, trail_file *f, hrt_error *err);
void trail_file_free_extras(trail_file *f);

/* grid_check.c: the rules of a file's values, as the reader reads them */
int trail_check_eep_value(const char *where, const char *name, int q, const trail_file_group *gp, size_t i, size_t j,
                          size_t J, hrt_error *err);
int trail_check_eep_row(const char *where, const char *name, int q, const trail_file_group *gp, size_t i, size_t J,
                        hrt_error *err);
int trail_check_nested_cores(const char *where, const trail_file *f, const trail_file_group *gp, hrt_error *err);
/* Format 2: every numeric dataset stored with a checksum (fh: the open file, an HDF5 hid_t). */
int trail_check_checksums(int64_t fh, const trail_file *f, hrt_error *err);

/* grid_prep.c */
/* Prepare an open grid from the file as read; takes f's routes and
 * attributes (f is freed by the caller). */
int trail_grid_prepare(hrt_grid *g, trail_file *f, hrt_error *err);
void trail_grid_free_contents(hrt_grid *g);

/* extra.c: the extra quantities' knots (taken from f after
 * trail_grid_prepare) and their release. */
int trail_extra_prepare(hrt_grid *g, trail_file *f, hrt_error *err);
void trail_extra_free(hrt_grid *g);

/* eval.c: query contexts */
int trail_qctx_init(const hrt_grid *g, double mass, double z, qctx *q, hrt_error *err);
/* place.c: the message of a bracketing group k that cannot place q's mass */
int trail_no_track(const qctx *q, size_t k, hrt_error *err);
/* eval.c: stars order[0 .. n - 1] (all in turn if order is NULL), hrt_eval's
 * answers and message; batch.c: hrt_eval, which chooses the order. */
int trail_eval_run(const hrt_grid *g, size_t n, const uint32_t *order, const double *mass_msun, const double *z,
                   double z_all, const double *age_yr, hrt_state *out, hrt_error *err);
/* lockstep.c: hrt_eval's kernel for bucketed stars (z non-NULL); HRT_OK or
 * the first failure's code, the states of every star written. */
int trail_eval_lockstep(const hrt_grid *g, size_t n, const double *mass_msun, const double *z, const double *age_yr,
                        hrt_state *out);
/* lockstep_z.c: the same for stars between grid metallicities (lockstep.c
 * hands it the runs of such stars). */
int trail_eval_lockstep_z(const hrt_grid *g, size_t n, const double *mass_msun, const double *z, const double *age_yr,
                          hrt_state *out);
int trail_qctx_z(const hrt_grid *g, double z, qctx *q, hrt_error *err);
void trail_qctx_copy_z(qctx *dst, const qctx *src);
int trail_mass_ctx(const hrt_grid *g, const zgroup *gp, int route, double log_mass, mctx *m);
void trail_interval_weights(const hrt_grid *g, mctx *m, double log_mass);

/* eval.c: values, phases, remnants and states from a context */
double trail_q_value(const qctx *q, int quantity, int j);
void trail_q_values(const qctx *q, int j, double v[NQS]);
int trail_q_phase(const qctx *q, int j);
void trail_q_phase_run(const qctx *q, int j, int *js, int *je);
void trail_q_remnant(const qctx *q, int *kind, double *mass_msun);
void trail_state_clear(hrt_state *s, double mass, double z, double age_yr);
void trail_state_from_values(hrt_state *s, const double v0[NQS], const double v1[NQS], double f);
/* The parts of a white dwarf's state that do not change with its age
 * (remnant.c, trail_wd_fixed_init): a star's remnant computes them once.
 * ok = 0 where hrt_wd_log_l has no answer (the state then takes the
 * general path, with the same result). */
typedef struct trail_wd_fixed {
    int ok;
    double x0, c;       /* Mestel cooling: L^(-5/7) at the track's end, the time scale */
    double log_r, log_g; /* the radius and surface gravity of the mass */
} trail_wd_fixed;
/* Bins of a star's log age -> EEP table (star.c, trail_track_arrays.tab). */
#define TRAIL_STAR_TAB 512
/* A star's stored track (star.c), as the state code reads it. */
typedef struct trail_track_arrays {
    const double *age;     /* [n] log10 age/yr */
    const double *age_yr;  /* [n] age/yr (trail_exp10 of age) */
    const double *val;     /* [n][NQS] */
    const int8_t *phase;   /* [n] */
    const int32_t *runs;   /* [n][2] */
    /* [TRAIL_STAR_TAB + 1]: largest EEP j <= n - 2 whose log age is at or
     * below the start of bin k (uniform in log age from tab_x[0], tab_x[1]
     * bins per dex): where the search of an age starts; NULL: none */
    const uint16_t *tab;
    double tab_x[2];
    const trail_wd_fixed *wd; /* the white dwarf's fixed parts, or NULL */
} trail_track_arrays;
/* Where the search of log age lt (A(0) <= lt < A(n - 1)) on S starts: the
 * EEPs [*lo, *lo + *len] of its bin in S->tab, moved outwards where rounding
 * at the bin's edges needs it, so that A(*lo) <= lt < A(*lo + *len). */
static inline void trail_star_bracket(const trail_track_arrays *S, int n, double lt, int *lo, int *len)
{
    const double *a = S->age;
    double kf = (lt - S->tab_x[0]) * S->tab_x[1];
    int k = kf > 0.0 ? (kf < TRAIL_STAR_TAB - 1 ? (int)kf : TRAIL_STAR_TAB - 1) : 0;
    int l = S->tab[k], h = S->tab[k + 1] + 1;
    while (l > 0 && a[l] > lt)
        l--;
    while (h < n - 1 && a[h] <= lt)
        h++;
    *lo = l;
    *len = h - l;
}
/* State at age_yr from the stored track S, or from the grid when S is NULL. */
int trail_state_at_generic(const qctx *q, const trail_track_arrays *S, int kind, double rmass, double age_yr,
                         hrt_state *s);
/* remnant.c; wd: the white dwarf's fixed parts (trail_wd_fixed_init), or NULL */
void trail_state_remnant(hrt_state *s, int kind, double rem_mass, double log_l_last, double t_last_yr,
                         const trail_wd_fixed *wd);
void trail_wd_fixed_init(trail_wd_fixed *w, int kind, double rem_mass, double log_l_last);

/* Value (p[0]) and slope (p[1]) of quantity q at EEP j, track i; the next
 * track's pair is at p + 2 * NQ. */
static inline double *trail_knot(const zgroup *gp, size_t j, size_t i, int q)
{
    return gp->knots + ((j * (gp->n_mass + 1) + i) * NQ + (size_t)q) * 2;
}

#endif
