/* hrtrail: the posterior of an observed star over (initial mass, age, [Fe/H])
 * on a lattice of interpolated tracks, and its HR-diagram distance. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>

#include "util/util.h"
#include "fit/lattice.h"

#define PI 3.14159265358979323846
#define BLK 8              /* EEP intervals per bounding box */
#define SBLK 8             /* bounding boxes per box of the second level */
#define SUB_STEP 0.5       /* largest step of a sub-cell, in sigma of each observable */
#define SUB_MAX 64         /* subdivisions of a cell per direction at most */
#define CUT_SIGMA 6.0      /* sub-cells farther than this in any observable are skipped */
#define CUT_CHI2 25.0      /* ... and those with chi^2 this much above the best so far */
#define MATCH_SIGMA 5.0    /* at least one point must be this close in every observable */
#define N_DIST_DRAWS 4000  /* draws for the distance interval */
#define HIST_BINS 2048     /* bins of the quantile histograms */
#define P_LO 0.158655253931457 /* Phi(-1) */
#define P_HI 0.841344746068543 /* Phi(+1) */

/* ------------------------------------------------------------------ priors */

static const char prior_names[HRT_FIT_PRIOR_COUNT][16] = {"kroupa2001", "chabrier2003", "log-flat"};

const char *hrt_fit_mass_prior_name(int p)
{
    return p >= 0 && p < HRT_FIT_PRIOR_COUNT ? prior_names[p] : NULL;
}

int hrt_fit_mass_prior_from_name(const char *name)
{
    if (!name)
        return -1;
    for (int p = 0; p < HRT_FIT_PRIOR_COUNT; p++)
        if (strcmp(name, prior_names[p]) == 0)
            return p;
    return -1;
}

/* The mass prior as an IMF of the population module (lib/population.c, where
 * the published parameters stand beside their references): Kroupa (2001),
 * Chabrier (2003) system IMF, and log-flat as the power law dN/dM ~ M^-1. */
static int prior_imf(const hrt_fit_model_options *o, hrt_imf *imf, hrt_error *err)
{
    int kind = o->mass_prior == HRT_FIT_PRIOR_KROUPA_2001     ? HRT_IMF_KROUPA_2001
               : o->mass_prior == HRT_FIT_PRIOR_CHABRIER_2003 ? HRT_IMF_CHABRIER_2003_SYSTEM
                                                              : HRT_IMF_POWER_LAW;
    hrt_error e;
    int rc = hrt_imf_init(imf, kind, o->mass_min_msun, o->mass_max_msun, 1.0, &e);
    return rc == HRT_OK ? rc : trail_set_error(err, rc, "hrt_fit_model_new: mass prior: %s", e.message);
}

/* ln dN/dlog10 M of the prior at m (up to a constant); m is held inside the
 * prior's limits, which the lattice's end tracks may miss by a rounding. */
static double log_prior_dlogm(const hrt_imf *imf, double m)
{
    m = m < imf->m_lo_msun ? imf->m_lo_msun : m > imf->m_hi_msun ? imf->m_hi_msun : m;
    return log(m * hrt_imf_pdf(imf, m));
}

/* ------------------------------------------------------------------ model */

void hrt_fit_model_options_default(hrt_fit_model_options *o)
{
    if (!o)
        return;
    memset(o, 0, sizeof *o);
    o->mass_prior = HRT_FIT_PRIOR_KROUPA_2001;
    o->mass_min_msun = NAN;
    o->mass_max_msun = NAN;
    o->age_max_yr = 13.8e9;
    o->feh_min = NAN;
    o->feh_max = NAN;
    o->feh_step_dex = 0.1;
    o->log_mass_step_dex = 0.02;
}

void hrt_fit_model_free(hrt_fit_model *m)
{
    if (!m)
        return;
    free(m->feh);
    free(m->z);
    free(m->wz);
    free(m->z_first);
    free(m->tr);
    free(m->la);
    free(m->q);
    free(m->ph);
    free(m->bb);
    free(m->sbb);
    free(m);
}

size_t hrt_fit_model_memory_bytes(const hrt_fit_model *m) { return m ? m->bytes : 0; }

int hrt_fit_model_get_options(const hrt_fit_model *m, hrt_fit_model_options *o)
{
    if (!m || !o)
        return HRT_E_NULL;
    *o = m->o;
    return HRT_OK;
}

size_t hrt_fit_model_n_feh(const hrt_fit_model *m) { return m ? m->n_z : 0; }

double hrt_fit_model_feh(const hrt_fit_model *m, size_t k) { return m && k < m->n_z ? m->feh[k] : NAN; }

/* Grow an array of elements of size sz to hold at least need. */
static int grow(void **p, size_t *cap, size_t need, size_t sz)
{
    if (need <= *cap)
        return 0;
    size_t nc = *cap ? *cap : 1024;
    while (nc < need)
        nc *= 2;
    void *q = realloc(*p, nc * sz);
    if (!q)
        return -1;
    *p = q;
    *cap = nc;
    return 0;
}

/* Initial mass where the route changes from <= b to > b at metallicity z,
 * by bisection in log mass between lo and hi: *below and *above bracket it. */
static void route_edge(const hrt_grid *g, double z, int b, double lo, double hi, double *below, double *above)
{
    double a = log10(lo), c = log10(hi);
    for (int it = 0; it < 60; it++) {
        double mid = 0.5 * (a + c);
        int r;
        if (hrt_grid_route_of(g, pow(10.0, mid), z, &r) != HRT_OK || r <= b)
            a = mid;
        else
            c = mid;
    }
    *below = pow(10.0, a);
    *above = pow(10.0, c);
}

typedef struct build {
    hrt_fit_model *m;
    hrt_imf imf; /* the mass prior */
    size_t cap_tr, cap_nodes;
} build;

/* Add the lattice track of mass (Msun) at node k; skipped silently if the grid cannot make it. */
static int add_track(build *B, size_t k, double mass, int want_route, hrt_error *err)
{
    hrt_fit_model *m = B->m;
    hrt_star *s = NULL;
    int rs = hrt_star_new(m->g, mass, m->z[k], &s, NULL);
    if (rs == HRT_E_NOMEM) /* not "outside the grid": the lattice would silently lose a track */
        return trail_set_error(err, HRT_E_NOMEM, "hrt_fit_model_new: out of memory");
    if (rs != HRT_OK)
        return HRT_OK;
    if (hrt_star_route(s) != want_route) {
        hrt_star_free(s);
        return HRT_OK;
    }
    size_t n = hrt_star_n_eep(s);
    if (grow((void **)&m->tr, &B->cap_tr, m->n_tracks + 1, sizeof *m->tr) ||
        grow((void **)&m->la, &B->cap_nodes, m->n_nodes + n, sizeof *m->la)) {
        hrt_star_free(s);
        return trail_set_error(err, HRT_E_NOMEM, "hrt_fit_model_new: out of memory");
    }
    /* q and ph follow la's capacity */
    float *q = realloc(m->q, B->cap_nodes * FQ * sizeof *q);
    if (q)
        m->q = q;
    int8_t *ph = q ? realloc(m->ph, B->cap_nodes) : NULL;
    if (ph)
        m->ph = ph;
    if (!q || !ph) {
        hrt_star_free(s);
        return trail_set_error(err, HRT_E_NOMEM, "hrt_fit_model_new: out of memory");
    }
    ftrack *t = &m->tr[m->n_tracks++];
    t->log_m = log10(mass);
    t->log_prior = log_prior_dlogm(&B->imf, mass);
    t->route = want_route;
    t->n_eep = (int)n;
    t->kz = k;
    t->off = m->n_nodes;
    t->boff = SIZE_MAX;
    for (size_t j = 0; j < n; j++) {
        hrt_state st;
        hrt_star_eep_state(s, j, &st);
        size_t i = m->n_nodes + j;
        m->la[i] = log10(st.age_yr);
        float *v = m->q + i * FQ;
        v[FQ_LT] = (float)st.log_teff_k;
        v[FQ_LL] = (float)st.log_l_lsun;
        v[FQ_LG] = (float)st.log_g_cgs;
        v[FQ_M] = (float)st.mass_msun;
        m->ph[i] = (int8_t)st.phase;
        if (st.log_teff_k < m->lt_range[0]) m->lt_range[0] = st.log_teff_k;
        if (st.log_teff_k > m->lt_range[1]) m->lt_range[1] = st.log_teff_k;
    }
    m->n_nodes += n;
    hrt_star_free(s);
    return HRT_OK;
}

static int check_opts(const hrt_grid *g, hrt_fit_model_options *o, hrt_error *err)
{
    double zlo, zhi, mlo, mhi;
    hrt_grid_z_range(g, &zlo, &zhi);
    double zref = hrt_grid_z_ref(g);
    double flo = log10(zlo / zref), fhi = log10(zhi / zref);
    if (o->mass_prior < 0 || o->mass_prior >= HRT_FIT_PRIOR_COUNT)
        return trail_set_error(err, HRT_E_INVALID, "hrt_fit_model_new: unknown mass prior %d", (int)o->mass_prior);
    if (isnan(o->feh_min)) o->feh_min = flo;
    if (isnan(o->feh_max)) o->feh_max = fhi;
    if (!isfinite(o->feh_min) || !isfinite(o->feh_max))
        return trail_set_error(err, HRT_E_DOMAIN, "hrt_fit_model_new: [Fe/H] limits must be finite");
    if (o->feh_min > o->feh_max)
        return trail_set_error(err, HRT_E_INVALID, "hrt_fit_model_new: feh_min %g > feh_max %g", o->feh_min, o->feh_max);
    if (o->feh_min < flo - 1e-9 || o->feh_max > fhi + 1e-9)
        return trail_set_error(err, HRT_E_Z_RANGE, "hrt_fit_model_new: [Fe/H] range [%g, %g] outside the grid's [%g, %g]",
                             o->feh_min, o->feh_max, flo, fhi);
    if (o->feh_min < flo) o->feh_min = flo;
    if (o->feh_max > fhi) o->feh_max = fhi;
    if (!(o->feh_step_dex > 0) || !isfinite(o->feh_step_dex) || !(o->log_mass_step_dex > 0) ||
        !isfinite(o->log_mass_step_dex) || !(o->age_max_yr > 0) || !isfinite(o->age_max_yr))
        return trail_set_error(err, HRT_E_DOMAIN,
                             "hrt_fit_model_new: feh_step_dex, log_mass_step_dex and age_max_yr must be finite and > 0");
    if (o->feh_step_dex < 0.005 || o->log_mass_step_dex < 0.001 || o->log_mass_step_dex > 0.2)
        return trail_set_error(err, HRT_E_INVALID,
                             "hrt_fit_model_new: feh_step_dex >= 0.005 and 0.001 <= log_mass_step_dex <= 0.2 are required");
    /* mass limits: the widest range of the chosen metallicities */
    mlo = INFINITY;
    mhi = -INFINITY;
    for (size_t iz = 0; iz < hrt_grid_n_z(g); iz++) {
        double a, b;
        if (hrt_grid_mass_range(g, hrt_grid_z(g, iz), &a, &b) == HRT_OK) {
            if (a < mlo) mlo = a;
            if (b > mhi) mhi = b;
        }
    }
    if (isnan(o->mass_min_msun)) o->mass_min_msun = mlo;
    if (isnan(o->mass_max_msun)) o->mass_max_msun = mhi;
    if (!(o->mass_min_msun > 0) || !isfinite(o->mass_max_msun))
        return trail_set_error(err, HRT_E_DOMAIN, "hrt_fit_model_new: mass limits must be finite and > 0");
    if (o->mass_min_msun >= o->mass_max_msun)
        return trail_set_error(err, HRT_E_INVALID, "hrt_fit_model_new: mass_min_msun %g >= mass_max_msun %g",
                             o->mass_min_msun, o->mass_max_msun);
    if (o->mass_min_msun < mlo * (1 - 1e-12) || o->mass_max_msun > mhi * (1 + 1e-12))
        return trail_set_error(err, HRT_E_MASS_RANGE, "hrt_fit_model_new: mass range [%g, %g] Msun outside the grid's [%g, %g]",
                             o->mass_min_msun, o->mass_max_msun, mlo, mhi);
    return HRT_OK;
}

int hrt_fit_model_new(const hrt_grid *g, const hrt_fit_model_options *opt, hrt_fit_model **model, hrt_error *err)
{
    if (!g || !model)
        return trail_set_error(err, HRT_E_NULL, "hrt_fit_model_new: %s is NULL", !g ? "grid" : "model");
    *model = NULL;
    hrt_fit_model_options o;
    if (opt)
        o = *opt;
    else
        hrt_fit_model_options_default(&o);
    int rc = check_opts(g, &o, err);
    if (rc != HRT_OK)
        return rc;
    hrt_fit_model *m = calloc(1, sizeof *m);
    if (!m)
        return trail_set_error(err, HRT_E_NOMEM, "hrt_fit_model_new: out of memory");
    m->g = g;
    m->o = o;
    m->log_age_max = log10(o.age_max_yr);
    m->lt_range[0] = INFINITY;
    m->lt_range[1] = -INFINITY;
    /* [Fe/H] nodes: evenly spaced, both ends included; trapezoid weights */
    double span = o.feh_max - o.feh_min;
    size_t nz = span > 0 ? (size_t)ceil(span / o.feh_step_dex - 1e-9) + 1 : 1;
    m->n_z = nz;
    m->feh = malloc(nz * sizeof(double));
    m->z = malloc(nz * sizeof(double));
    m->wz = malloc(nz * sizeof(double));
    m->z_first = malloc((nz + 1) * sizeof(size_t));
    if (!m->feh || !m->z || !m->wz || !m->z_first) {
        hrt_fit_model_free(m);
        return trail_set_error(err, HRT_E_NOMEM, "hrt_fit_model_new: out of memory");
    }
    double zref = hrt_grid_z_ref(g), zlo, zhi;
    hrt_grid_z_range(g, &zlo, &zhi);
    for (size_t k = 0; k < nz; k++) {
        m->feh[k] = nz > 1 ? o.feh_min + span * (double)k / (double)(nz - 1) : o.feh_min;
        m->z[k] = zref * pow(10.0, m->feh[k]);
        if (m->z[k] < zlo) m->z[k] = zlo; /* rounding at the ends */
        if (m->z[k] > zhi) m->z[k] = zhi;
        m->wz[k] = (nz > 1 && (k == 0 || k == nz - 1)) ? 0.5 : 1.0;
    }
    m->dfeh = nz > 1 ? span / (double)(nz - 1) : 0.0;
    build B = {m, {0}, 0, 0};
    rc = prior_imf(&o, &B.imf, err);
    size_t nr = hrt_grid_n_routes(g);
    for (size_t k = 0; k < nz && rc == HRT_OK; k++) {
        m->z_first[k] = m->n_tracks;
        double lo, hi;
        if (hrt_grid_mass_range(g, m->z[k], &lo, &hi) != HRT_OK)
            continue;
        if (lo < o.mass_min_msun) lo = o.mass_min_msun;
        if (hi > o.mass_max_msun) hi = o.mass_max_msun;
        if (lo >= hi)
            continue;
        /* route segments [seg_lo, seg_hi] inside [lo, hi] */
        double a = lo;
        int r0;
        hrt_grid_route_of(g, lo, m->z[k], &r0);
        for (int r = r0; r < (int)nr && a < hi && rc == HRT_OK; r++) {
            double b = hi, next = hi;
            int rh;
            hrt_grid_route_of(g, hi, m->z[k], &rh);
            if (r < rh)
                route_edge(g, m->z[k], r, a, hi, &b, &next);
            double la0 = log10(a), la1 = log10(b);
            size_t nm = (size_t)ceil((la1 - la0) / o.log_mass_step_dex - 1e-9) + 1;
            if (nm < 2) nm = 2;
            for (size_t i = 0; i < nm && rc == HRT_OK; i++)
                rc = add_track(&B, k, pow(10.0, la0 + (la1 - la0) * (double)i / (double)(nm - 1)), r, err);
            a = next;
        }
    }
    if (rc == HRT_OK) {
        m->z_first[nz] = m->n_tracks;
        /* bounding boxes of the cells between neighbouring tracks of one route and node */
        size_t nb = 0, cap_b = 0, cap_sb = 0;
        for (size_t t = 0; t + 1 < m->n_tracks && rc == HRT_OK; t++) {
            ftrack *A = &m->tr[t], *C = &m->tr[t + 1];
            if (A->kz != C->kz || A->route != C->route)
                continue;
            int ncell = (A->n_eep < C->n_eep ? A->n_eep : C->n_eep) - 1;
            if (ncell < 1)
                continue;
            size_t nblk = ((size_t)ncell + BLK - 1) / BLK;
            if (grow((void **)&m->bb, &cap_b, nb + nblk, sizeof(float) * 2 * FQ_OBS)) {
                rc = trail_set_error(err, HRT_E_NOMEM, "hrt_fit_model_new: out of memory");
                break;
            }
            A->boff = nb;
            A->n_cell = ncell;
            for (size_t b = 0; b < nblk; b++) {
                float *box = m->bb + (nb + b) * 2 * FQ_OBS;
                for (int qq = 0; qq < FQ_OBS; qq++) {
                    box[qq] = INFINITY;
                    box[FQ_OBS + qq] = -INFINITY;
                }
                size_t j1 = (b + 1) * BLK;
                if (j1 > (size_t)ncell) j1 = (size_t)ncell;
                for (size_t j = b * BLK; j <= j1; j++)
                    for (int side = 0; side < 2; side++) {
                        const float *v = m->q + ((side ? C->off : A->off) + j) * FQ;
                        for (int qq = 0; qq < FQ_OBS; qq++) {
                            if (v[qq] < box[qq]) box[qq] = v[qq];
                            if (v[qq] > box[FQ_OBS + qq]) box[FQ_OBS + qq] = v[qq];
                        }
                    }
            }
            /* boxes of SBLK blocks each, unions of theirs */
            size_t nsb = (nblk + SBLK - 1) / SBLK;
            if (grow((void **)&m->sbb, &cap_sb, m->n_sblocks + nsb, sizeof(float) * 2 * FQ_OBS)) {
                rc = trail_set_error(err, HRT_E_NOMEM, "hrt_fit_model_new: out of memory");
                break;
            }
            A->sboff = m->n_sblocks;
            for (size_t b = 0; b < nblk; b++) {
                const float *box = m->bb + (nb + b) * 2 * FQ_OBS;
                float *sbox = m->sbb + (m->n_sblocks + b / SBLK) * 2 * FQ_OBS;
                for (int qq = 0; qq < FQ_OBS; qq++) {
                    if (b % SBLK == 0 || box[qq] < sbox[qq]) sbox[qq] = box[qq];
                    if (b % SBLK == 0 || box[FQ_OBS + qq] > sbox[FQ_OBS + qq]) sbox[FQ_OBS + qq] = box[FQ_OBS + qq];
                }
            }
            m->n_sblocks += nsb;
            nb += nblk;
        }
        m->n_blocks = nb;
    }
    if (rc == HRT_OK && m->n_blocks == 0)
        rc = trail_set_error(err, HRT_E_INVALID, "hrt_fit_model_new: no pair of lattice tracks in the chosen ranges");
    if (rc != HRT_OK) {
        hrt_fit_model_free(m);
        return rc;
    }
    m->bytes = sizeof *m + m->n_z * (3 * sizeof(double) + sizeof(size_t)) + m->n_tracks * sizeof(ftrack) +
               m->n_nodes * (sizeof(double) + FQ * sizeof(float) + 1) + (m->n_blocks + m->n_sblocks) * 2 * FQ_OBS * sizeof(float);
    *model = m;
    if (err)
        trail_set_error(err, HRT_OK, NULL);
    return HRT_OK;
}

/* ------------------------------------------------------------------ distance */

double hrt_fit_distance_m(double l_w, double flux_w_m2)
{
    if (!(l_w > 0) || !(flux_w_m2 > 0) || !isfinite(l_w) || !isfinite(flux_w_m2))
        return NAN;
    return sqrt(l_w / (4.0 * PI * flux_w_m2));
}

double hrt_fit_flux_from_mbol(double mbol)
{
    if (!isfinite(mbol))
        return NAN;
    double d10 = 10.0 * HRT_PC_M;
    return HRT_MBOL_ZERO_POINT_W / (4.0 * PI * d10 * d10) * pow(10.0, -0.4 * mbol);
}

void hrt_fit_obs_init(hrt_fit_obs *o)
{
    if (!o)
        return;
    double *d = (double *)o;
    for (size_t i = 0; i < sizeof *o / sizeof(double); i++)
        d[i] = NAN;
}

/* ------------------------------------------------------------------ one star */

/* A measured quantity in the likelihood. */
typedef struct meas {
    int on;
    double v, s; /* value, sigma (in the quantity's own units) */
} meas;

typedef struct fobs {
    meas lt;      /* Teff in K (compared with 10^log Teff) */
    double lt_log; /* log10 of the measured Teff */
    meas ll, lg;  /* log L, log g */
    meas feh;
    double lt_lo, lt_hi, ll_lo, ll_hi, lg_lo, lg_hi; /* search window in the lattice quantities */
    double inv_lt, inv_ll, inv_lg;                   /* 1 / sigma in the lattice quantities (log Teff in dex) */
    int have_flux;                                   /* flux without a distance: HR-diagram distance wanted */
    double log_flux, log_flux_sigma;                 /* log10 F/(W m^-2) */
    int n_obs;
} fobs;

static int bad_pair(double v, double s) { return isnan(v) != isnan(s); }

static int obs_prepare(const hrt_fit_model *m, const hrt_fit_obs *o, fobs *F, hrt_error *err)
{
    memset(F, 0, sizeof *F);
    const char *names[] = {"teff", "log_l", "feh", "log_g", "flux", "mbol", "distance", "parallax"};
    const double *d = (const double *)o;
    for (int i = 0; i < 8; i++) {
        double v = d[2 * i], s = d[2 * i + 1];
        if (bad_pair(v, s))
            return trail_set_error(err, HRT_E_DOMAIN, "hrt_fit_star: %s given without its sigma, or sigma without the value",
                                 names[i]);
        if (!isnan(v) && (!isfinite(v) || !isfinite(s)))
            return trail_set_error(err, HRT_E_DOMAIN, "hrt_fit_star: %s or its sigma is infinite", names[i]);
        if (!isnan(s) && !(s > 0))
            return trail_set_error(err, HRT_E_DOMAIN, "hrt_fit_star: sigma of %s is %g; it must be > 0", names[i], s);
    }
    if (isnan(o->teff_k))
        return trail_set_error(err, HRT_E_INVALID, "hrt_fit_star: no Teff given (teff_k is required)");
    if (!(o->teff_k > 0))
        return trail_set_error(err, HRT_E_DOMAIN, "hrt_fit_star: Teff %g K must be > 0", o->teff_k);
    if (!isnan(o->flux_w_m2) && !(o->flux_w_m2 > 0))
        return trail_set_error(err, HRT_E_DOMAIN, "hrt_fit_star: flux %g W/m^2 must be > 0", o->flux_w_m2);
    if (!isnan(o->distance_pc) && !(o->distance_pc > 0))
        return trail_set_error(err, HRT_E_DOMAIN, "hrt_fit_star: distance %g pc must be > 0", o->distance_pc);
    if (!isnan(o->parallax_mas) && !(o->parallax_mas > 0))
        return trail_set_error(err, HRT_E_DOMAIN, "hrt_fit_star: parallax %g mas must be > 0", o->parallax_mas);
    if (!isnan(o->flux_w_m2) && !isnan(o->mbol))
        return trail_set_error(err, HRT_E_INVALID, "hrt_fit_star: give a flux or an apparent bolometric magnitude, not both");
    if (!isnan(o->distance_pc) && !isnan(o->parallax_mas))
        return trail_set_error(err, HRT_E_INVALID, "hrt_fit_star: give a distance or a parallax, not both");
    if (!isnan(o->parallax_mas) && o->parallax_mas_sigma > 0.2 * o->parallax_mas)
        return trail_set_error(err, HRT_E_INVALID,
                             "hrt_fit_star: parallax %g +- %g mas is too uncertain to invert (sigma/parallax > 0.2)",
                             o->parallax_mas, o->parallax_mas_sigma);
    int have_flux = !isnan(o->flux_w_m2) || !isnan(o->mbol);
    int have_dist = !isnan(o->distance_pc) || !isnan(o->parallax_mas);
    if (have_dist && !have_flux)
        return trail_set_error(err, HRT_E_INVALID, "hrt_fit_star: a distance or parallax needs a bolometric flux or magnitude");
    if (have_flux) {
        if (!isnan(o->flux_w_m2)) {
            F->log_flux = log10(o->flux_w_m2);
            F->log_flux_sigma = o->flux_w_m2_sigma / (o->flux_w_m2 * TRAIL_LN10);
        } else {
            F->log_flux = log10(hrt_fit_flux_from_mbol(o->mbol));
            F->log_flux_sigma = 0.4 * o->mbol_sigma;
        }
    }
    F->ll.on = !isnan(o->log_l_lsun);
    F->ll.v = o->log_l_lsun;
    F->ll.s = o->log_l_lsun_sigma;
    if (have_dist) {
        if (F->ll.on)
            return trail_set_error(err, HRT_E_INVALID, "hrt_fit_star: luminosity given twice (log L and flux with distance)");
        double d_pc = !isnan(o->distance_pc) ? o->distance_pc : 1000.0 / o->parallax_mas;
        double sd = !isnan(o->distance_pc) ? o->distance_pc_sigma / o->distance_pc : o->parallax_mas_sigma / o->parallax_mas;
        double dm = d_pc * HRT_PC_M;
        F->ll.on = 1;
        F->ll.v = log10(4.0 * PI * dm * dm / HRT_LSUN_W) + F->log_flux;
        F->ll.s = sqrt(F->log_flux_sigma * F->log_flux_sigma + 4.0 * sd * sd / (TRAIL_LN10 * TRAIL_LN10));
    } else {
        F->have_flux = have_flux;
    }
    F->lt.on = 1;
    F->lt.v = o->teff_k;
    F->lt.s = o->teff_k_sigma;
    F->lt_log = log10(o->teff_k);
    F->lg.on = !isnan(o->log_g_cgs);
    F->lg.v = o->log_g_cgs;
    F->lg.s = o->log_g_cgs_sigma;
    F->feh.on = !isnan(o->feh);
    F->feh.v = o->feh;
    F->feh.s = o->feh_sigma;
    F->n_obs = F->lt.on + F->ll.on + F->lg.on + F->feh.on;
    /* search window in the lattice quantities */
    double tl = o->teff_k - CUT_SIGMA * o->teff_k_sigma, th = o->teff_k + CUT_SIGMA * o->teff_k_sigma;
    F->lt_lo = tl > 1.0 ? log10(tl) : -INFINITY;
    F->lt_hi = log10(th);
    F->inv_lt = o->teff_k * TRAIL_LN10 / o->teff_k_sigma;
    double ml = o->teff_k - MATCH_SIGMA * o->teff_k_sigma, mh = o->teff_k + MATCH_SIGMA * o->teff_k_sigma;
    if (log10(mh) < m->lt_range[0] || (ml > 0 && log10(ml) > m->lt_range[1]))
        return trail_set_error(err, HRT_E_NO_MATCH,
                             "hrt_fit_star: Teff %g +- %g K is outside every track of the grid (the tracks span %.0f-%.0f K)",
                             o->teff_k, o->teff_k_sigma, pow(10.0, m->lt_range[0]), pow(10.0, m->lt_range[1]));
    F->ll_lo = F->ll.on ? F->ll.v - CUT_SIGMA * F->ll.s : -INFINITY;
    F->ll_hi = F->ll.on ? F->ll.v + CUT_SIGMA * F->ll.s : INFINITY;
    F->inv_ll = F->ll.on ? 1.0 / F->ll.s : 0.0;
    F->lg_lo = F->lg.on ? F->lg.v - CUT_SIGMA * F->lg.s : -INFINITY;
    F->lg_hi = F->lg.on ? F->lg.v + CUT_SIGMA * F->lg.s : INFINITY;
    F->inv_lg = F->lg.on ? 1.0 / F->lg.s : 0.0;
    return HRT_OK;
}

/* A weighted sub-cell of the lattice. */
typedef struct fpt {
    double prior, chi2, w;
    double t_lo, t_hi;  /* its age span, yr */
    float v[NV], h[NV]; /* value and half-extent of each reported quantity */
    int8_t phase;
    uint16_t kz;
} fpt;

typedef struct fscratch {
    fpt *p;
    size_t n, cap;
    double best_dev;  /* smallest over points of the largest |residual| / sigma */
    double chi2_best; /* smallest chi^2 so far */
} fscratch;

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
 * quantities lie in the box lo[FQ_OBS], hi[FQ_OBS].  For Teff, with x the
 * distance in log Teff from the measured value, 10^x - 1 >= x ln 10 above it
 * and 1 - 10^-x >= x ln 10 / (1 + x ln 10) below it. */
static inline double box_chi2(const fobs *F, const float *lo, const float *hi)
{
    double c = 0.0, x;
    if ((x = (double)lo[FQ_LT] - F->lt_log) > 0.0) {
        x *= F->inv_lt;
        c = x * x;
    } else if ((x = F->lt_log - (double)hi[FQ_LT]) > 0.0) {
        x = x * F->inv_lt / (1.0 + TRAIL_LN10 * x);
        c = x * x;
    }
    if (F->ll.on) c += out_sq(F->ll.v, lo[FQ_LL], hi[FQ_LL], F->inv_ll);
    if (F->lg.on) c += out_sq(F->lg.v, lo[FQ_LG], hi[FQ_LG], F->inv_lg);
    return c;
}

/* 1 if no position inside the box can be kept: outside the CUT_SIGMA window
 * in one observable, or (once a point within MATCH_SIGMA has been found, so
 * that the match test is decided) with chi^2 beyond CUT_CHI2 above the best
 * point so far, which can only fall: such points would be dropped at the end. */
static inline int box_out(const fobs *F, const fscratch *S, const float *lo, const float *hi, double chi2_feh)
{
    if (hi[FQ_LT] < F->lt_lo || lo[FQ_LT] > F->lt_hi)
        return 1;
    if (F->ll.on && (hi[FQ_LL] < F->ll_lo || lo[FQ_LL] > F->ll_hi))
        return 1;
    if (F->lg.on && (hi[FQ_LG] < F->lg_lo || lo[FQ_LG] > F->lg_hi))
        return 1;
    return S->best_dev <= MATCH_SIGMA && chi2_feh + box_chi2(F, lo, hi) > S->chi2_best + CUT_CHI2;
}

/* Visit the cell between tracks A (t) and C (t + 1) and EEPs j, j + 1 at
 * [Fe/H] feh, whose residual squared is chi2_feh (0 if not measured). */
static int visit_cell(const hrt_fit_model *m, const fobs *F, const ftrack *A, const ftrack *C, int j, double wz,
                      double feh, double chi2_feh, fscratch *S)
{
    const float *a0 = m->q + (A->off + (size_t)j) * FQ, *a1 = a0 + FQ;
    const float *c0 = m->q + (C->off + (size_t)j) * FQ, *c1 = c0 + FQ;
    float lo[FQ_OBS], hi[FQ_OBS];
    for (int qq = 0; qq < FQ_OBS; qq++) {
        lo[qq] = min4f(a0[qq], a1[qq], c0[qq], c1[qq]);
        hi[qq] = max4f(a0[qq], a1[qq], c0[qq], c1[qq]);
    }
    if (box_out(F, S, lo, hi, chi2_feh))
        return 0;
    double la00 = m->la[A->off + (size_t)j], la01 = m->la[A->off + (size_t)j + 1];
    double la10 = m->la[C->off + (size_t)j], la11 = m->la[C->off + (size_t)j + 1];
    double amax = m->log_age_max;
    if (la00 >= amax && la10 >= amax)
        return 0;
    /* subdivisions: steps of at most SUB_STEP sigma in every measured quantity */
    double sa = fmax(fabs(a0[FQ_LT] - c0[FQ_LT]), fabs(a1[FQ_LT] - c1[FQ_LT])) * F->inv_lt;
    double sb = fmax(fabs(a0[FQ_LT] - a1[FQ_LT]), fabs(c0[FQ_LT] - c1[FQ_LT])) * F->inv_lt;
    if (F->ll.on) {
        sa = fmax(sa, fmax(fabs(a0[FQ_LL] - c0[FQ_LL]), fabs(a1[FQ_LL] - c1[FQ_LL])) * F->inv_ll);
        sb = fmax(sb, fmax(fabs(a0[FQ_LL] - a1[FQ_LL]), fabs(c0[FQ_LL] - c1[FQ_LL])) * F->inv_ll);
    }
    if (F->lg.on) {
        sa = fmax(sa, fmax(fabs(a0[FQ_LG] - c0[FQ_LG]), fabs(a1[FQ_LG] - c1[FQ_LG])) * F->inv_lg);
        sb = fmax(sb, fmax(fabs(a0[FQ_LG] - a1[FQ_LG]), fabs(c0[FQ_LG] - c1[FQ_LG])) * F->inv_lg);
    }
    int na = (int)ceil(sa / SUB_STEP), nb = (int)ceil(sb / SUB_STEP);
    if (na < 1) na = 1;
    if (nb < 1) nb = 1;
    if (na > SUB_MAX) na = SUB_MAX;
    if (nb > SUB_MAX) nb = SUB_MAX;
    double dlm = C->log_m - A->log_m;
    /* half-extents along the mass direction: the same for every sub-cell */
    float gm[FQ];
    for (int qq = 0; qq < FQ; qq++)
        gm[qq] = 0.5f * (absf(c0[qq] - a0[qq]) + absf(c1[qq] - a1[qq])) / (float)na;
    for (int ia = 0; ia < na; ia++) {
        double fa = (ia + 0.5) / na;
        double A0 = la00 + fa * (la10 - la00), A1 = la01 + fa * (la11 - la01);
        if (!(A1 > A0) || A0 >= amax)
            continue;
        float e0[FQ], e1[FQ]; /* the two EEP edges at this mass */
        for (int qq = 0; qq < FQ; qq++) {
            e0[qq] = (float)(a0[qq] + fa * (c0[qq] - a0[qq]));
            e1[qq] = (float)(a1[qq] + fa * (c1[qq] - a1[qq]));
        }
        /* the row's sub-cells lie on the segment e0-e1: its box may rule them all out */
        float rlo[FQ_OBS], rhi[FQ_OBS];
        for (int qq = 0; qq < FQ_OBS; qq++) {
            rlo[qq] = e0[qq] < e1[qq] ? e0[qq] : e1[qq];
            rhi[qq] = e0[qq] < e1[qq] ? e1[qq] : e0[qq];
        }
        if (box_out(F, S, rlo, rhi, chi2_feh))
            continue;
        double lm = A->log_m + fa * dlm, pm = -1.0; /* pm: prior per unit age, when a point needs it */
        double fhi = A1 > amax ? (amax - A0) / (A1 - A0) : 1.0;
        double hb = 0.5 * fhi / nb; /* half-step in the EEP fraction */
        double dlt = e1[FQ_LT] - e0[FQ_LT], dla = A1 - A0, t_step = 0.0;
        float hq[FQ];                 /* half-extents of a sub-cell of this row */
        for (int qq = 0; qq < FQ; qq++)
            hq[qq] = 0.5f * (gm[qq] + absf(e1[qq] - e0[qq]) * (float)hb * 2.0f);
        /* once the match test is decided, sub-cells whose log L, log g and
         * [Fe/H] alone put them beyond the chi^2 cut are passed over before
         * their Teff (an exponential) is computed */
        double cut = S->best_dev <= MATCH_SIGMA ? S->chi2_best + CUT_CHI2 : INFINITY;
        for (int ib = 0; ib < nb; ib++) {
            double fb = (2 * ib + 1) * hb;
            double r, dev = 0.0, chi2 = chi2_feh;
            double ll = e0[FQ_LL] + fb * (e1[FQ_LL] - e0[FQ_LL]);
            double lg = e0[FQ_LG] + fb * (e1[FQ_LG] - e0[FQ_LG]);
            if (F->ll.on) {
                r = (ll - F->ll.v) * F->inv_ll;
                chi2 += r * r;
                dev = fabs(r);
            }
            if (F->lg.on) {
                r = (lg - F->lg.v) * F->inv_lg;
                chi2 += r * r;
                if (fabs(r) > dev) dev = fabs(r);
            }
            if (F->feh.on) {
                r = (feh - F->feh.v) / F->feh.s;
                if (fabs(r) > dev) dev = fabs(r);
            }
            double lt = e0[FQ_LT] + fb * dlt;
            if (dev > CUT_SIGMA || chi2 > cut || lt < F->lt_lo || lt > F->lt_hi)
                continue;
            double teff = exp(TRAIL_LN10 * lt);
            r = (teff - F->lt.v) / F->lt.s;
            chi2 += r * r;
            if (fabs(r) > dev) dev = fabs(r);
            if (dev > CUT_SIGMA)
                continue;
            if (dev < S->best_dev) S->best_dev = dev;
            if (chi2 > S->chi2_best + CUT_CHI2)
                continue;
            if (chi2 < S->chi2_best) S->chi2_best = chi2;
            if (S->n == S->cap && grow((void **)&S->p, &S->cap, S->n + 1, sizeof *S->p))
                return -1;
            if (pm < 0.0) {
                pm = exp(A->log_prior + fa * (C->log_prior - A->log_prior)) * dlm / na * wz;
                t_step = exp(TRAIL_LN10 * 2.0 * hb * dla);
            }
            fpt *P = &S->p[S->n++];
            P->t_lo = exp(TRAIL_LN10 * (A0 + (fb - hb) * dla));
            P->t_hi = P->t_lo * t_step;
            P->prior = pm * (P->t_hi - P->t_lo);
            P->chi2 = chi2;
            P->phase = (fa < 0.5 ? m->ph[A->off + (size_t)j] : m->ph[C->off + (size_t)j]);
            P->kz = (uint16_t)A->kz;
            P->v[V_LOGM] = (float)lm;
            P->h[V_LOGM] = (float)(0.5 * dlm / na);
            P->v[V_FEH] = (float)feh;
            P->h[V_FEH] = (float)(0.5 * m->dfeh);
            P->v[V_MASS] = e0[FQ_M] + (float)fb * (e1[FQ_M] - e0[FQ_M]);
            P->h[V_MASS] = hq[FQ_M];
            P->v[V_LOGL] = (float)ll;
            P->h[V_LOGL] = hq[FQ_LL];
            P->v[V_TEFF] = (float)teff;
            P->h[V_TEFF] = hq[FQ_LT] * (float)(teff * TRAIL_LN10);
            P->v[V_LOGG] = (float)lg;
            P->h[V_LOGG] = hq[FQ_LG];
            P->v[V_LOGR] = (float)trail_log_r_from(ll, lt);
            P->h[V_LOGR] = 0.5f * hq[FQ_LL] + 2.0f * hq[FQ_LT];
        }
    }
    return 0;
}

/* ------------------------------------------------------------------ quantiles */

/* Weighted quantiles of boxes [v - h, v + h] of weight w (ages: [t_lo, t_hi]):
 * each box spreads its weight evenly; the cumulative distribution is built
 * exactly on the bin edges of a histogram and inverted linearly.  Every
 * histogram of a star is filled in one pass over the points. */
typedef struct fhist {
    int q;        /* V_* quantity, or V_AGE */
    int phase;    /* points of this phase only; -1: all */
    double xmin, xmax, inv_d, W;
    double *E;    /* HIST_BINS + 4 second differences */
} fhist;

static inline void box_of(const fpt *P, int q, double *x0, double *x1)
{
    if (q == V_AGE) {
        *x0 = P->t_lo;
        *x1 = P->t_hi;
    } else {
        *x0 = P->v[q] - P->h[q];
        *x1 = P->v[q] + P->h[q];
    }
}

static inline void hist_range(fhist *H, const fpt *P)
{
    double x0, x1;
    box_of(P, H->q, &x0, &x1);
    if (x0 < H->xmin) H->xmin = x0;
    if (x1 > H->xmax) H->xmax = x1;
    H->W += P->w;
}

/* Clear the histogram of a quantity once its range is known. */
static void hist_start(fhist *H)
{
    memset(H->E, 0, (HIST_BINS + 4) * sizeof *H->E);
    H->inv_d = H->xmax > H->xmin ? HIST_BINS / (H->xmax - H->xmin) : 0.0;
}

static inline void hist_add(fhist *H, const fpt *P)
{
    if (H->inv_d == 0.0)
        return;
    double x0, x1, *E = H->E;
    box_of(P, H->q, &x0, &x1);
    double u0 = (x0 - H->xmin) * H->inv_d, u1 = (x1 - H->xmin) * H->inv_d;
    if (u1 - u0 < 1e-6) { /* a point: a narrow box */
        u0 -= 5e-7;
        u1 += 5e-7;
        if (u0 < 0) { u1 -= u0; u0 = 0; }
    }
    if (u0 < 0) u0 = 0;
    if (u1 > HIST_BINS) u1 = HIST_BINS;
    double s = P->w / (u1 - u0);
    /* ramp s max(0, e - u0) minus ramp s max(0, e - u1), as second differences */
    size_t i0 = (size_t)u0, i1 = (size_t)u1;
    double p0 = u0 - (double)i0, p1 = u1 - (double)i1;
    E[i0 + 1] += s * (1.0 - p0);
    E[i0 + 2] += s * p0;
    E[i1 + 1] -= s * (1.0 - p1);
    E[i1 + 2] -= s * p1;
}

/* Median and 15.87/84.13 % points of a filled histogram. */
static hrt_fit_interval hist_interval(const fhist *H)
{
    hrt_fit_interval out = {NAN, NAN, NAN};
    if (!(H->W > 0.0))
        return out;
    if (H->inv_d == 0.0) {
        out.median = out.lo = out.hi = H->xmin;
        return out;
    }
    const double *E = H->E, d = (H->xmax - H->xmin) / HIST_BINS;
    /* cumulative weight C(e) at the edges e = 0..HIST_BINS */
    double D = 0.0, Cv = 0.0, prev = 0.0;
    double targets[3] = {P_LO * H->W, 0.5 * H->W, P_HI * H->W}, o[3] = {H->xmax, H->xmax, H->xmax};
    int t = 0;
    for (size_t e = 0; e <= HIST_BINS + 1 && t < 3; e++) {
        D += E[e];
        prev = Cv;
        Cv += D;
        while (t < 3 && Cv >= targets[t]) {
            double f = Cv > prev ? (targets[t] - prev) / (Cv - prev) : 0.0;
            double edge = e == 0 ? 0.0 : (double)e - 1.0 + f;
            o[t++] = H->xmin + edge * d;
        }
    }
    out.lo = o[0];
    out.median = o[1];
    out.hi = o[2];
    return out;
}

/* Quantiles of n values (sorted in place), linear between order statistics. */
hrt_fit_interval trail_fit_sample_quantiles(double *v, size_t n)
{
    hrt_fit_interval r = {NAN, NAN, NAN};
    if (n == 0)
        return r;
    qsort(v, n, sizeof *v, trail_cmp_double);
    double p[3] = {0.5, P_LO, P_HI}, o[3];
    for (int k = 0; k < 3; k++) {
        double x = p[k] * (double)(n - 1);
        size_t i = (size_t)floor(x);
        double f = x - (double)i;
        o[k] = i + 1 < n ? v[i] + f * (v[i + 1] - v[i]) : v[n - 1];
        if (i + 1 < n && isinf(v[i + 1]))
            o[k] = f > 0 ? v[i + 1] : v[i];
    }
    r.median = o[0];
    r.lo = o[1];
    r.hi = o[2];
    return r;
}

/* A seeded Mersenne Twister without gsl_rng_alloc (whose failure would reach
 * GSL's handler): its state lives in caller's memory of gsl_rng_mt19937->size bytes. */
typedef struct frng {
    gsl_rng r;
} frng;

static void rng_open(frng *R, void *state, uint64_t seed)
{
    R->r.type = gsl_rng_mt19937;
    R->r.state = state;
    gsl_rng_set(&R->r, (unsigned long)(seed ^ (seed >> 32)));
}

/* Index of the point whose cumulative weight range holds u. */
static size_t pick(const double *cum, size_t n, double u)
{
    size_t lo = 0, hi = n - 1;
    while (lo < hi) {
        size_t mid = (lo + hi) / 2;
        if (cum[mid] > u)
            hi = mid;
        else
            lo = mid + 1;
    }
    return lo;
}

/* chi^2 at its 99.73 % point for 1..4 degrees of freedom (SciPy scipy.stats.chi2.ppf(0.9973, k)). */
static const double chi2_3sigma[5] = {0.0, 9.0, 11.83, 14.16, 16.25};

/* 10^x of each point of an interval (log10 quantities reported linearly). */
static hrt_fit_interval exp10_interval(hrt_fit_interval x)
{
    hrt_fit_interval r = {pow(10.0, x.median), pow(10.0, x.lo), pow(10.0, x.hi)};
    return r;
}

/* [Fe/H] node visited at step i: the one nearest the measured [Fe/H] first,
 * then outwards (so the best chi^2 is found early and prunes the rest);
 * in order when [Fe/H] is not measured.  SIZE_MAX: no node at this step. */
static size_t node_at(const hrt_fit_model *m, const fobs *F, size_t i)
{
    if (!F->feh.on || m->n_z < 2)
        return i < m->n_z ? i : SIZE_MAX;
    double x = (F->feh.v - m->feh[0]) / m->dfeh;
    size_t k0 = x <= 0 ? 0 : x >= (double)(m->n_z - 1) ? m->n_z - 1 : (size_t)floor(x + 0.5);
    size_t d = (i + 1) / 2;
    if (i % 2 == 1)
        return k0 + d < m->n_z ? k0 + d : SIZE_MAX;
    return d <= k0 ? k0 - d : SIZE_MAX;
}

/* Quantities summarised over all points, in the order of their histograms. */
static const int q_all[8] = {V_LOGM, V_AGE, V_FEH, V_MASS, V_LOGR, V_LOGL, V_TEFF, V_LOGG};

int hrt_fit_star(const hrt_fit_model *m, const hrt_fit_obs *obs, uint64_t seed, size_t n_samples,
                 hrt_fit_sample *samples, hrt_fit_result *res, hrt_error *err)
{
    if (!m || !obs || !res || (n_samples > 0 && !samples))
        return trail_set_error(err, HRT_E_NULL, "hrt_fit_star: %s is NULL",
                             !m ? "model" : !obs ? "obs" : !res ? "res" : "samples");
    memset(res, 0, sizeof *res);
    res->struct_size = sizeof *res;
    fobs F;
    int rc = obs_prepare(m, obs, &F, err);
    if (rc != HRT_OK) {
        res->status = rc;
        return rc;
    }
    fscratch S = {NULL, 0, 0, INFINITY, INFINITY};
    for (size_t step = 0; step < 2 * m->n_z && rc == HRT_OK; step++) {
        size_t k = node_at(m, &F, step);
        if (k == SIZE_MAX)
            continue;
        double wz = m->wz[k], chi2_feh = 0.0;
        if (F.feh.on) {
            double r = (m->feh[k] - F.feh.v) / F.feh.s;
            if (fabs(r) > CUT_SIGMA)
                continue;
            chi2_feh = r * r;
        }
        for (size_t t = m->z_first[k]; t + 1 < m->z_first[k + 1] && rc == HRT_OK; t++) {
            const ftrack *A = &m->tr[t], *C = &m->tr[t + 1];
            if (A->boff == SIZE_MAX)
                continue;
            size_t nblk = ((size_t)A->n_cell + BLK - 1) / BLK;
            for (size_t b = 0; b < nblk && rc == HRT_OK; b++) {
                if (b % SBLK == 0) {
                    const float *sbox = m->sbb + (A->sboff + b / SBLK) * 2 * FQ_OBS;
                    if (box_out(&F, &S, sbox, sbox + FQ_OBS, chi2_feh)) {
                        b += SBLK - 1;
                        continue;
                    }
                }
                const float *box = m->bb + (A->boff + b) * 2 * FQ_OBS;
                if (box_out(&F, &S, box, box + FQ_OBS, chi2_feh))
                    continue;
                int j1 = (int)((b + 1) * BLK);
                if (j1 > A->n_cell) j1 = A->n_cell;
                for (int j = (int)(b * BLK); j < j1; j++)
                    if (visit_cell(m, &F, A, C, j, wz, m->feh[k], chi2_feh, &S)) {
                        rc = trail_set_error(err, HRT_E_NOMEM, "hrt_fit_star: out of memory");
                        break;
                    }
            }
        }
    }
    if (rc == HRT_OK && (S.n == 0 || S.best_dev > MATCH_SIGMA))
        rc = trail_set_error(err, HRT_E_NO_MATCH,
                           "hrt_fit_star: no model of the grid lies within %g sigma of every measured quantity "
                           "(closest: %.3g sigma; Teff %g K%s)",
                           MATCH_SIGMA, S.n ? S.best_dev : INFINITY, obs->teff_k,
                           F.ll.on ? ", with the luminosity given" : "");
    /* weights, and the ranges of the histograms: H[0..7] over all points
     * (q_all), PH[phase] initial mass and age within each phase */
    fhist H[12], PH[HRT_PHASE_SLOTS][2];
    for (int k = 0; k < 8; k++) {
        H[k].q = q_all[k];
        H[k].phase = -1;
    }
    for (int p = 0; p < HRT_PHASE_SLOTS; p++) {
        PH[p][0].q = V_LOGM;
        PH[p][1].q = V_AGE;
        PH[p][0].phase = PH[p][1].phase = p;
    }
    for (int k = 0; k < 8; k++) {
        H[k].xmin = INFINITY;
        H[k].xmax = -INFINITY;
        H[k].W = 0.0;
    }
    for (int p = 0; p < HRT_PHASE_SLOTS; p++)
        for (int s = 0; s < 2; s++) {
            PH[p][s].xmin = INFINITY;
            PH[p][s].xmax = -INFINITY;
            PH[p][s].W = 0.0;
        }
    double W = 0.0, W2 = 0.0, chi2min = INFINITY;
    size_t np = 0;
    if (rc == HRT_OK) {
        for (size_t i = 0; i < S.n; i++)
            if (S.p[i].chi2 < chi2min && S.p[i].prior > 0) chi2min = S.p[i].chi2;
        /* points far above the best chi^2 are dropped (relative weight < 4e-6) */
        size_t kept = 0;
        for (size_t i = 0; i < S.n; i++) {
            fpt *P = &S.p[i];
            if (!(P->prior > 0) || P->chi2 > chi2min + CUT_CHI2)
                continue;
            P->w = P->prior * exp(-0.5 * (P->chi2 - chi2min));
            if (!(P->phase >= 0 && P->phase < HRT_PHASE_SLOTS))
                P->phase = HRT_PHASE_UNKNOWN;
            W += P->w;
            W2 += P->w * P->w;
            np += P->w > 0;
            for (int k = 0; k < 8; k++)
                hist_range(&H[k], P);
            hist_range(&PH[P->phase][0], P);
            hist_range(&PH[P->phase][1], P);
            S.p[kept++] = *P;
        }
        S.n = kept;
        if (!(W > 0.0) || !isfinite(W))
            rc = trail_set_error(err, HRT_E_NO_MATCH,
                               "hrt_fit_star: the models near the observation have no prior weight (ages beyond age_max_yr?)");
    }
    /* one block of scratch: histograms, cumulative weights, distance draws, random state */
    double *E = NULL, *cum = NULL, *dist = NULL;
    frng R;
    if (rc == HRT_OK) {
        size_t nd = 12 * (HIST_BINS + 4) + S.n + (F.have_flux ? N_DIST_DRAWS : 0);
        size_t rs = (gsl_rng_mt19937->size + sizeof(double) - 1) / sizeof(double);
        E = malloc((nd + rs) * sizeof *E);
        if (!E)
            rc = trail_set_error(err, HRT_E_NOMEM, "hrt_fit_star: out of memory");
        else {
            cum = E + 12 * (HIST_BINS + 4);
            dist = cum + S.n;
            rng_open(&R, E + nd, seed);
        }
    }
    if (rc == HRT_OK) {
        res->n_obs = F.n_obs;
        res->chi2_min = chi2min;
        res->n_eff = W * W / W2;
        res->n_points = (double)np;
        for (int p = 0; p < HRT_PHASE_SLOTS; p++)
            res->phase_prob[p] = PH[p][0].W / W;
        /* the two most probable phases */
        int p1 = 0, p2 = 0;
        for (int p = 1; p < HRT_PHASE_SLOTS; p++)
            if (res->phase_prob[p] > res->phase_prob[p1]) p1 = p;
        for (int p = 1; p < HRT_PHASE_SLOTS; p++)
            if (p != p1 && (p2 == p1 || p2 == 0 || res->phase_prob[p] > res->phase_prob[p2]) && res->phase_prob[p] > 0)
                p2 = p;
        if (p2 == p1 || !(res->phase_prob[p2] > 0)) p2 = HRT_PHASE_UNKNOWN;
        res->phase = p1;
        res->phase_second = p2;
        /* H[8], H[9]: within the first phase; H[10], H[11]: within the second */
        int nh = 8;
        int ph_of[2] = {p1, p2}, ph_h[2] = {-1, -1};
        for (int s = 0; s < 2; s++)
            if (ph_of[s] != HRT_PHASE_UNKNOWN) {
                ph_h[s] = nh;
                H[nh++] = PH[ph_of[s]][0];
                H[nh++] = PH[ph_of[s]][1];
            }
        for (int k = 0; k < nh; k++) {
            H[k].E = E + (size_t)k * (HIST_BINS + 4);
            hist_start(&H[k]);
        }
        for (size_t i = 0; i < S.n; i++) {
            const fpt *P = &S.p[i];
            for (int k = 0; k < 8; k++)
                hist_add(&H[k], P);
            for (int s = 0; s < 2; s++)
                if (ph_h[s] >= 0 && P->phase == ph_of[s]) {
                    hist_add(&H[ph_h[s]], P);
                    hist_add(&H[ph_h[s] + 1], P);
                }
        }
        res->initial_mass_msun = exp10_interval(hist_interval(&H[0]));
        res->age_yr = hist_interval(&H[1]);
        res->feh = hist_interval(&H[2]);
        res->mass_msun = hist_interval(&H[3]);
        res->r_rsun = exp10_interval(hist_interval(&H[4]));
        res->log_l_lsun = hist_interval(&H[5]);
        res->teff_k = hist_interval(&H[6]);
        res->log_g_cgs = hist_interval(&H[7]);
        for (int s = 0; s < 2; s++) {
            hrt_fit_interval nanint = {NAN, NAN, NAN};
            res->phase_mass_msun[s] = ph_h[s] >= 0 ? exp10_interval(hist_interval(&H[ph_h[s]])) : nanint;
            res->phase_age_yr[s] = ph_h[s] >= 0 ? hist_interval(&H[ph_h[s] + 1]) : nanint;
        }
        /* flags */
        if (p2 != HRT_PHASE_UNKNOWN && res->phase_prob[p2] >= HRT_FIT_MULTIMODAL_PROB)
            res->flags |= HRT_FIT_MULTIMODAL;
        double mstep = pow(10.0, m->o.log_mass_step_dex);
        if (res->initial_mass_msun.lo < m->o.mass_min_msun * mstep || res->initial_mass_msun.hi > m->o.mass_max_msun / mstep)
            res->flags |= HRT_FIT_MASS_EDGE;
        if (res->age_yr.hi > 0.95 * m->o.age_max_yr)
            res->flags |= HRT_FIT_AGE_LIMIT;
        if (m->n_z > 1 && (res->feh.lo < m->o.feh_min + 0.5 * m->dfeh || res->feh.hi > m->o.feh_max - 0.5 * m->dfeh))
            res->flags |= HRT_FIT_FEH_EDGE;
        int dof = F.n_obs < 1 ? 1 : F.n_obs > 4 ? 4 : F.n_obs;
        if (chi2min > chi2_3sigma[dof])
            res->flags |= HRT_FIT_POOR_MATCH;
        if (res->n_eff < 20.0)
            res->flags |= HRT_FIT_FEW_POINTS;
        /* draws */
        double c = 0.0;
        for (size_t i = 0; i < S.n; i++) {
            c += S.p[i].w;
            cum[i] = c;
        }
        for (size_t i = 0; i < n_samples; i++) {
            const fpt *P = &S.p[pick(cum, S.n, gsl_rng_uniform(&R.r) * c)];
            hrt_fit_sample *o = &samples[i];
            memset(o, 0, sizeof *o);
            o->initial_mass_msun = pow(10.0, P->v[V_LOGM] + (2.0 * gsl_rng_uniform(&R.r) - 1.0) * P->h[V_LOGM]);
            o->age_yr = P->t_lo + gsl_rng_uniform(&R.r) * (P->t_hi - P->t_lo);
            o->z = m->z[P->kz];
            o->log_l_lsun = P->v[V_LOGL];
            o->log_teff_k = log10(P->v[V_TEFF]);
            o->phase = P->phase;
        }
        hrt_fit_interval nanint = {NAN, NAN, NAN};
        res->distance_pc = nanint;
        if (F.have_flux) {
            /* d = sqrt(L / (4 pi F)): L from the posterior, F from its Gaussian error */
            for (size_t i = 0; i < N_DIST_DRAWS; i++) {
                const fpt *P = &S.p[pick(cum, S.n, gsl_rng_uniform(&R.r) * c)];
                double ll = P->v[V_LOGL] + (2.0 * gsl_rng_uniform(&R.r) - 1.0) * P->h[V_LOGL];
                double lf = F.log_flux + gsl_ran_gaussian(&R.r, F.log_flux_sigma);
                dist[i] = hrt_fit_distance_m(HRT_LSUN_W * pow(10.0, ll), pow(10.0, lf)) / HRT_PC_M;
            }
            res->distance_pc = trail_fit_sample_quantiles(dist, N_DIST_DRAWS);
        }
    }
    free(E);
    free(S.p);
    res->status = rc;
    if (rc == HRT_OK && err)
        trail_set_error(err, HRT_OK, NULL);
    return rc;
}
