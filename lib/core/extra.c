/* Extra per-EEP quantities of a grid (tracks/FORMAT.md, "Extra
 * quantities"): their knots across log initial mass, prepared with the
 * grid's interpolation type exactly as the standard quantities are (the
 * closed-form slopes of slopes.c over the runs of consecutive tracks of one
 * route that reach the EEP, trail_eep_runs), and the queries that
 * interpolate them at a star's state: the mass weights of the state's
 * (initial mass, Z) context, the [Fe/H] rule of the standard quantities,
 * and linear in the EEP fraction the state's age gives, which is how log L
 * is interpolated.  They live in their own arrays (zgroup.xknots), so
 * hrt_eval and hrt_star_at, which never read them, cost the same with or
 * without extras. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "core/core.h"

/* ---- preparation ------------------------------------------------------------ */

/* Value (p[0]) and slope (p[1]) of extra k at EEP j, track i. */
static inline double *xknot(const hrt_grid *g, const zgroup *gp, size_t j, size_t i, size_t k)
{
    return gp->xknots + ((j * (gp->n_mass + 1) + i) * g->n_extra + k) * 2;
}

/* Scratch for one run of knots: abscissae, values, slopes and the
 * closed-form slopes' work space (TRAIL_SLOPES_WORK). */
typedef struct xrun {
    double *x, *y, *d, *work;
} xrun;

typedef struct xrun_ctx {
    const hrt_grid *g;
    zgroup *gp;
    size_t k, j;
    xrun *rb;
} xrun_ctx;

/* Slopes of extra k over one run of tracks a..a+n-1 at EEP j: the same
 * closed-form slopes of the grid's type as the standard quantities. */
static int xrun_slopes(void *ctx, size_t a, size_t n)
{
    xrun_ctx *c = ctx;
    xrun *rb = c->rb;
    for (size_t t = 0; t < n; t++) {
        rb->x[t] = c->gp->logm[a + t];
        rb->y[t] = xknot(c->g, c->gp, c->j, a + t, c->k)[0];
    }
    trail_slopes_work(c->g->interp, n, rb->x, rb->y, rb->d, rb->work);
    for (size_t t = 0; t < n; t++)
        xknot(c->g, c->gp, c->j, a + t, c->k)[1] = rb->d[t];
    return HRT_OK;
}

static int prepare_group(const hrt_grid *g, zgroup *gp, const double *raw, xrun *rb)
{
    size_t nm = gp->n_mass, J = g->n_eep_max, nx = g->n_extra;
    size_t cells = J * (nm + 1) * nx * 2;
    gp->xknots = calloc(cells, sizeof(double));
    if (!gp->xknots)
        return HRT_E_NOMEM;
    for (size_t k = 0; k < nx; k++)
        for (size_t i = 0; i < nm; i++)
            for (size_t j = 0; j < (size_t)gp->n_eep[i]; j++)
                xknot(g, gp, j, i, k)[0] = raw[(k * nm + i) * J + j];
    for (size_t k = 0; k < nx; k++)
        for (size_t j = 0; j < J; j++) {
            xrun_ctx c = {g, gp, k, j, rb};
            int rc = trail_eep_runs(g, gp, j, xrun_slopes, &c);
            if (rc != HRT_OK)
                return rc;
        }
    return HRT_OK;
}

/* Every group's knots from extra_raw (which is freed); on failure nothing
 * changes (a later query tries again). */
static int prepare_all(hrt_grid *g)
{
    size_t maxn = 1;
    for (size_t iz = 0; iz < g->n_z; iz++)
        maxn = g->grp[iz].n_mass > maxn ? g->grp[iz].n_mass : maxn;
    xrun rb = {0};
    rb.x = malloc((3 * (maxn + 1) + TRAIL_SLOPES_WORK(maxn)) * sizeof(double));
    int rc = rb.x ? HRT_OK : HRT_E_NOMEM;
    if (rc == HRT_OK) {
        rb.y = rb.x + maxn + 1;
        rb.d = rb.y + maxn + 1;
        rb.work = rb.d + maxn + 1;
    }
    for (size_t iz = 0; iz < g->n_z && rc == HRT_OK; iz++)
        rc = prepare_group(g, &g->grp[iz], g->extra_raw[iz], &rb);
    free(rb.x);
    for (size_t iz = 0; iz < g->n_z; iz++) {
        if (rc != HRT_OK) {
            free(g->grp[iz].xknots);
            g->grp[iz].xknots = NULL;
        } else {
            free(g->extra_raw[iz]);
            g->extra_raw[iz] = NULL;
        }
    }
    return rc;
}

/* The extras' knots, prepared by the first query that needs them (the
 * grid was allocated writable by hrt_grid_open: only the const of the
 * caller's pointer is cast away). */
static int extra_ready(const hrt_grid *cg, hrt_error *err)
{
    hrt_grid *g = (hrt_grid *)cg;
    if (atomic_load_explicit(&g->extra_ready, memory_order_acquire))
        return HRT_OK;
    int rc = HRT_OK;
    pthread_mutex_lock(&g->extra_lock);
    if (!atomic_load_explicit(&g->extra_ready, memory_order_relaxed)) {
        rc = prepare_all(g);
        if (rc == HRT_OK)
            atomic_store_explicit(&g->extra_ready, 1, memory_order_release);
    }
    pthread_mutex_unlock(&g->extra_lock);
    return rc == HRT_OK ? HRT_OK
                        : trail_set_error(err, rc, "cannot prepare the extra quantities (%s)", hrt_strerror(rc));
}

int trail_extra_prepare(hrt_grid *g, trail_file *f, hrt_error *err)
{
    atomic_init(&g->extra_ready, 0);
    if (f->n_extra == 0)
        return HRT_OK;
    g->extra_raw = calloc(g->n_z, sizeof *g->extra_raw);
    if (!g->extra_raw || pthread_mutex_init(&g->extra_lock, NULL) != 0)
        return trail_set_error(err, HRT_E_NOMEM, "out of memory for the extra quantities");
    g->extra_lock_init = 1;
    g->n_extra = f->n_extra;
    g->extra = f->extra; /* taken: f keeps none */
    f->extra = NULL;
    f->n_extra = 0;
    g->bytes += g->n_extra * sizeof *g->extra;
    for (size_t iz = 0; iz < g->n_z; iz++) {
        g->extra_raw[iz] = f->grp[iz].x;
        f->grp[iz].x = NULL;
        /* what the prepared knots will hold (value and slope of each) */
        g->bytes += g->n_eep_max * (g->grp[iz].n_mass + 1) * g->n_extra * 2 * sizeof(double);
    }
    return HRT_OK;
}

void trail_extra_free(hrt_grid *g)
{
    for (size_t iz = 0; g->grp && iz < g->n_z; iz++) {
        free(g->grp[iz].xknots);
        g->grp[iz].xknots = NULL;
        if (g->extra_raw)
            free(g->extra_raw[iz]);
    }
    free(g->extra_raw);
    g->extra_raw = NULL;
    if (g->extra_lock_init)
        pthread_mutex_destroy(&g->extra_lock);
    g->extra_lock_init = 0;
    free(g->extra);
    g->extra = NULL;
    g->n_extra = 0;
}

/* ---- accessors ---------------------------------------------------------------- */

size_t hrt_grid_extra_count(const hrt_grid *g) { return g ? g->n_extra : 0; }

const char *hrt_grid_extra_name(const hrt_grid *g, size_t k)
{
    return g && k < g->n_extra ? g->extra[k].name : NULL;
}

const char *hrt_grid_extra_unit(const hrt_grid *g, size_t k)
{
    return g && k < g->n_extra ? g->extra[k].units : NULL;
}

const char *hrt_grid_extra_meaning(const hrt_grid *g, size_t k)
{
    return g && k < g->n_extra ? g->extra[k].meaning : NULL;
}

long hrt_grid_extra_index(const hrt_grid *g, const char *name)
{
    if (!g || !name)
        return -1;
    for (size_t k = 0; k < g->n_extra; k++)
        if (strcmp(g->extra[k].name, name) == 0)
            return (long)k;
    return -1;
}

/* ---- queries ------------------------------------------------------------------ */

/* Extra k at EEP j in group gi of the stencil (the mass Hermite). */
static inline double group_xvalue(const qctx *q, size_t gi, size_t k, int j)
{
    const mctx *m = &q->m[gi];
    const double *p = xknot(q->g, m->gp, (size_t)j, m->i, k);
    const double *w = m->w_val;
    size_t next = 2 * q->g->n_extra; /* the next track's pair */
    return w[0] * p[0] + w[1] * p[1] + w[2] * p[next] + w[3] * p[next + 1];
}

/* Extra k at EEP j across [Fe/H]: the rule trail_q_value applies to every
 * standard quantity but log age. */
static double xvalue(const qctx *q, size_t k, int j)
{
    size_t g0 = q->zp.g0;
    if (q->zp.single)
        return group_xvalue(q, g0, k, j);
    double tz = q->zp.t_feh;
    int zt = trail_z_type(q->g);
    if (zt == HRT_INTERP_LINEAR || q->g_hi - q->g_lo < 2)
        return (1.0 - tz) * group_xvalue(q, g0, k, j) + tz * group_xvalue(q, g0 + 1, k, j);
    double ys[TRAIL_MAX_Z];
    size_t n = q->g_hi - q->g_lo + 1, a = g0 - q->g_lo;
    for (size_t t = 0; t < n; t++)
        ys[t] = group_xvalue(q, q->g_lo + t, k, j);
    double d0, d1;
    if (zt == HRT_INTERP_STEFFEN) {
        d0 = trail_steffen_slope(q->feh_stencil, ys, n, a);
        d1 = trail_steffen_slope(q->feh_stencil, ys, n, a + 1);
    } else {
        double ds[TRAIL_MAX_Z];
        trail_slopes_local(zt, n, q->feh_stencil, ys, ds);
        d0 = ds[a];
        d1 = ds[a + 1];
    }
    const double *w = q->w_feh;
    return w[0] * ys[a] + w[1] * d0 + w[2] * ys[a + 1] + w[3] * d1;
}

static int check_request(const hrt_grid *g, size_t n, const size_t *idx, const double *out, const char *who,
                         hrt_error *err)
{
    if (!g || (n > 0 && !out))
        return trail_set_error(err, HRT_E_NULL, "%s: %s is NULL", who, !g ? "grid" : "out");
    if (!idx && n > g->n_extra)
        return trail_set_error(err, HRT_E_INVALID, "%s: %zu quantities asked, the grid has %zu extra quantities",
                               who, n, g->n_extra);
    for (size_t t = 0; idx && t < n; t++)
        if (idx[t] >= g->n_extra)
            return trail_set_error(err, HRT_E_INVALID, "%s: idx[%zu] = %zu, the grid has %zu extra quantities", who, t,
                                   idx[t], g->n_extra);
    return HRT_OK;
}

int hrt_state_extra(const hrt_grid *g, const hrt_state *s, size_t n, const size_t *idx, double *out, hrt_error *err)
{
    int rc = check_request(g, n, idx, out, "hrt_state_extra", err);
    if (rc != HRT_OK)
        return rc;
    if (!s)
        return trail_set_error(err, HRT_E_NULL, "hrt_state_extra: state is NULL");
    for (size_t t = 0; t < n; t++)
        out[t] = NAN;
    /* not modelled (before the first EEP), a remnant, or a failed star */
    if (s->status != HRT_OK || !isfinite(s->eep) || n == 0)
        return trail_set_error(err, HRT_OK, NULL);
    rc = extra_ready(g, err);
    if (rc != HRT_OK)
        return rc;
    qctx q;
    rc = trail_qctx_init(g, s->initial_mass_msun, s->z, &q, err);
    if (rc != HRT_OK)
        return rc;
    double jf = floor(s->eep);
    if (!(s->eep >= 0.0 && jf <= (double)(q.n_eep - 1)))
        return trail_set_error(err, HRT_E_INVALID, "hrt_state_extra: EEP %g is not on this star's track (0..%d)",
                               s->eep, q.n_eep - 1);
    int j = (int)jf;
    double f = s->eep - jf;
    if (j == q.n_eep - 1)
        f = 0.0;
    for (size_t t = 0; t < n; t++) {
        size_t k = idx ? idx[t] : t;
        double v0 = xvalue(&q, k, j);
        out[t] = f == 0.0 ? v0 : v0 + f * (xvalue(&q, k, j + 1) - v0);
    }
    return trail_set_error(err, HRT_OK, NULL);
}

int hrt_extra_at(const hrt_grid *g, double mass_msun, double z, double age_yr, size_t n, const size_t *idx,
                 double *out, hrt_state *state, hrt_error *err)
{
    int rc = check_request(g, n, idx, out, "hrt_extra_at", err);
    if (rc != HRT_OK)
        return rc;
    hrt_state s;
    rc = hrt_eval(g, 1, &mass_msun, NULL, z, &age_yr, &s, err);
    if (state)
        *state = s;
    if (rc != HRT_OK) {
        for (size_t t = 0; t < n; t++)
            out[t] = NAN;
        return rc;
    }
    return hrt_state_extra(g, &s, n, idx, out, err);
}
