/* Private declarations shared by the library's translation units (not installed). */
#ifndef HRTRAIL_INTERNAL_H
#define HRTRAIL_INTERNAL_H

#include <stdarg.h>
#include <stddef.h>
#include <math.h>
#include <stdint.h>

#include "hrtrail.h"

/* Quantities interpolated across mass and [Fe/H] at fixed EEP, in the order
 * they are stored in hrt_grid.  R is not among them: it follows from L and
 * Teff by the Stefan-Boltzmann law, so every state is consistent. */
enum { Q_AGE = 0, Q_L, Q_TEFF, Q_MASS, Q_HE, Q_CO, NQ };
/* Q_MASS, Q_HE and Q_CO are stored and interpolated as fractions of the
 * initial mass. */
#define NQS (NQ - 1) /* quantities other than log age */

/* Largest numbers the fixed-size scratch arrays on the stack allow. */
#define HRT_MAX_ROUTES 8
#define HRT_MAX_Z 64
#define HRT_MAX_EEP 65535 /* EEPs per route (search tables hold 16-bit indices) */
#define HRT_AGE_TAB 256   /* bins of the per-track log age -> EEP table */

typedef struct route_layout {
    char *name;
    size_t n_kp;
    char **kp_names;
    long *kp_eep;  /* [n_kp], kp_eep[0] = 0, kp_eep[n_kp-1] = n_eep-1 */
    size_t n_eep;
} route_layout;

typedef struct zgroup {
    double z, feh;
    size_t n_mass;
    double *mass;          /* [n_mass] initial masses, Msun */
    double *logm;          /* [n_mass + 1] log10 of them (padded) */
    int *route;            /* [n_mass] */
    int *n_eep;            /* [n_mass] valid EEPs */
    int *remnant;          /* [n_mass] hrt_remnant */
    double *remnant_hv;    /* [n_mass + 1][2] remnant mass value and slope across log mass */
    double *boundary;      /* [n_routes - 1] route-boundary masses, Msun */
    size_t route_lo[HRT_MAX_ROUTES], route_hi[HRT_MAX_ROUTES]; /* tracks [lo, hi) of each route */
    /* [n_eep_max][n_mass + 1][NQ][2]: value and slope across log mass of
     * every quantity at each knot; one query reads the 2 x NQ x 2 contiguous
     * doubles of its interval at each EEP it touches.  See hrt_hv(). */
    double *hv;
    int8_t *phase;         /* [n_mass][n_eep_max] hrt_phase of the interval from EEP j */
    int32_t *runs;         /* [n_mass][n_eep_max][2] first EEP of the phase run containing j,
                            * first EEP after it */
    uint16_t *age_tab;     /* [n_mass][HRT_AGE_TAB] EEP at the start of each log-age bin */
    double *age_tab_x;     /* [n_mass][2] first log age and bins per dex of the table */
    /* [n_mass] interval (i, i+1): log age is interpolated with the weights
     * lambda * (chosen type) + (1 - lambda) * (linear), lambda the largest
     * value in [0, 1] for which log age increases with EEP at every mass of
     * the interval (1 almost everywhere). */
    double *age_lambda;
    /* [n_mass][n_eep_max][4]: log age value and slope of track i and of
     * track i + 1 at each EEP, contiguous along EEPs, so that the age search
     * of a star between them walks through neighbouring memory. */
    double *age_iv;
    double *age_dx_max;    /* [n_mass][2] largest log-mass step below / above a track for which
                            * extrapolated log age stays increasing in EEP */
} zgroup;

typedef struct attr_pair {
    char *name, *value;
} attr_pair;

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
};

/* Mass context inside one metallicity group: which interval, which weights. */
typedef struct mctx {
    const zgroup *gp;
    size_t i;       /* left knot of the interval (i + 1 is always addressable) */
    size_t near;    /* track nearest in log mass (for phases and remnant kinds) */
    double w[4];    /* weights of y_i, d_i, y_{i+1}, d_{i+1} */
    double wa[4];   /* weights for log age (linear where cubic is not monotone) */
    int n_eep;      /* EEPs both knots reach */
    int extrapolated;
    int interior;   /* strictly between two knots of the route (not an end) */
} mctx;

/* Everything a query needs once (mass, Z) is known. */
typedef struct qctx {
    const hrt_grid *g;
    double mass, z, feh;
    int route;
    size_t g_lo, g_hi;     /* stencil of groups [g_lo, g_hi] */
    size_t g0;             /* left bracketing group; g0 + 1 used when tz > 0 */
    double tz, hz;         /* fraction and width in [Fe/H] */
    int single;            /* the metallicity of one group: no Z interpolation */
    size_t g_near;         /* group nearest in [Fe/H] */
    double zx[HRT_MAX_Z];  /* [Fe/H] of the stencil groups */
    double zw[4];          /* Hermite weights across [Fe/H] in [g0, g0 + 1] */
    mctx m[HRT_MAX_Z];     /* indexed by group - g_lo */
    int n_eep;             /* EEPs of the interpolated star */
    int flags;
} qctx;

/* Remnant masses are interpolated between tracks of one family: all white
 * dwarfs (helium, CO, ONe) form one, so the mass is continuous where the
 * composition changes; neutron stars and black holes are each their own. */
static inline int hrt_remnant_family(int kind)
{
    return (kind == HRT_REMNANT_HE_WD || kind == HRT_REMNANT_CO_WD || kind == HRT_REMNANT_ONE_WD)
               ? HRT_REMNANT_CO_WD
               : kind;
}

/* Plausibility bounds the reader enforces and the builder too, so that
 * anything the library writes it can read back: log10 values within
 * +-HRT_MAX_LOG_ABS, current, core and remnant masses at most
 * HRT_MAX_MASS_FACTOR times the initial mass. */
#define HRT_MAX_LOG_ABS 100.0
#define HRT_MAX_MASS_FACTOR 2.0

/* errors.c */
int hrt_set_error(hrt_error *err, int code, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 3, 4)))
#endif
    ;
char *hrt_strdup(const char *s);

/* slopes.c: knot slopes of each interpolation type, computed with the same
 * formulas as GSL's types (checked against GSL by tests/test_slopes.c). */
size_t hrt_interp_min_size(int interp);
int hrt_interp_effective(int interp, size_t n);
int hrt_slopes_gsl(size_t n, const double *x, const double *y, double *d, void *gsl_interp_obj);
void hrt_slopes_local(int interp, size_t n, const double *x, const double *y, double *d);
void hrt_hermite_weights(int interp, double x0, double x1, double x, double w[4]);

/* grid_read.c / grid_prep.c */
int hrt_grid_read(const char *path, hrt_grid *g, hrt_error *err);
int hrt_grid_prepare(hrt_grid *g, hrt_error *err);
void hrt_grid_free_contents(hrt_grid *g);

/* eval.c */
int hrt_qctx_init(const hrt_grid *g, double mass, double z, qctx *q, hrt_error *err);
int hrt_mass_ctx(const hrt_grid *g, const zgroup *gp, int route, double log_mass, mctx *m);
double hrt_q_value(const qctx *q, int quantity, int j);
void hrt_q_values(const qctx *q, int j, double v[NQS]);
int hrt_q_phase(const qctx *q, int j);
void hrt_q_phase_run(const qctx *q, int j, int *js, int *je);
void hrt_q_remnant(const qctx *q, int *kind, double *mass_msun);
int hrt_bracket(const double *a, int n, double x); /* largest j with a[j] <= x, -1 if none */
void hrt_state_clear(hrt_state *s, double mass, double z, double age_yr);
void hrt_state_finish(hrt_state *s);
void hrt_state_from_values(hrt_state *s, const double v0[NQS], const double v1[NQS], double f);
/* A star's stored track (star.c), as the state code reads it. */
typedef struct hrt_track_arrays {
    const double *age;     /* [n] log10 age/yr */
    const double *age_yr;  /* [n] age/yr (hrt_exp10 of age) */
    const double *val;     /* [n][NQS] */
    const int8_t *phase;   /* [n] */
    const int32_t *runs;   /* [n][2] */
} hrt_track_arrays;
/* State at age_yr from the stored track S, or from the grid when S is NULL. */
int hrt_state_at_generic(const qctx *q, const hrt_track_arrays *S, int kind, double rmass, double age_yr,
                         hrt_state *s);
void hrt_state_remnant(hrt_state *s, int kind, double rem_mass, double log_l_last, double t_last_yr);

/* Value (p[0]) and slope (p[1]) of quantity q at EEP j, track i; the next
 * track's pair is at p + 2 * NQ. */
static inline double *hrt_hv(const zgroup *gp, size_t j, size_t i, int q)
{
    return gp->hv + ((j * (gp->n_mass + 1) + i) * NQ + (size_t)q) * 2;
}

/* log10 through the natural logarithm: about half the cost of libm's
 * log10, within an ulp of it.  Used wherever a query computes a log10, and
 * for the grid's knots, so a query at a track's mass lands on its knot. */
static inline double hrt_log10(double x) { return log(x) * 0.43429448190325182765; }

/* 10^x: every age conversion goes through this one function, so the star
 * and batch paths agree to the bit. */
static inline double hrt_exp10(double x) { return exp(x * 2.302585092994045684); }

/* Physics helpers */
double hrt_log_r_from(double log_l, double log_teff);
double hrt_log_g_from(double mass_msun, double log_r);

#endif
