/* hrtrail: the fitting lattice of a grid (hrt_fit_model): the mass prior,
 * interpolated tracks at evenly spaced [Fe/H] nodes and log-mass steps, and
 * bounding boxes of the cells between neighbouring tracks. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "util/util.h"
#include "fit/lattice.h"

/* The defaults hrt_fit_model_options documents. */
#define DEFAULT_AGE_MAX_YR 13.8e9
#define DEFAULT_FEH_STEP_DEX 0.1
#define DEFAULT_LOG_MASS_STEP_DEX 0.02
/* dN/dM ~ M^-1: uniform in log M. */
#define LOG_FLAT_ALPHA 1.0
/* The finest [Fe/H] and log-mass steps, and the coarsest log-mass step, a
 * lattice may have. */
#define FEH_STEP_MIN_DEX 0.005
#define LOG_MASS_STEP_MIN_DEX 0.001
#define LOG_MASS_STEP_MAX_DEX 0.2
/* Room for rounding: in the [Fe/H] limits (dex) and in a count of steps... */
#define FEH_ROUNDING_DEX 1e-9
#define STEPS_ROUNDING 1e-9
/* ... and, relative, in the mass limits. */
#define MASS_ROUNDING_REL 1e-12
/* Halvings of a route edge's bracket: 60 shrink any mass range below a double's resolution. */

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

/* The mass prior as an IMF of the population layer (lib/population, where
 * the published parameters stand beside their references): Kroupa (2001),
 * Chabrier (2003) system IMF, and log-flat as the power law dN/dM ~ M^-1. */
static int prior_imf(const hrt_fit_model_options *o, hrt_imf *imf, hrt_error *err)
{
    int kind = o->mass_prior == HRT_FIT_PRIOR_KROUPA_2001     ? HRT_IMF_KROUPA_2001
               : o->mass_prior == HRT_FIT_PRIOR_CHABRIER_2003 ? HRT_IMF_CHABRIER_2003_SYSTEM
                                                              : HRT_IMF_POWER_LAW;
    hrt_error e;
    int rc = hrt_imf_init(imf, kind, o->mass_min_msun, o->mass_max_msun, LOG_FLAT_ALPHA, &e);
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
    o->age_max_yr = DEFAULT_AGE_MAX_YR;
    o->feh_min = NAN;
    o->feh_max = NAN;
    o->feh_step_dex = DEFAULT_FEH_STEP_DEX;
    o->log_mass_step_dex = DEFAULT_LOG_MASS_STEP_DEX;
}

void hrt_fit_model_free(hrt_fit_model *m)
{
    if (!m)
        return;
    free(m->feh);
    free(m->z);
    free(m->feh_weight);
    free(m->first_track);
    free(m->track);
    free(m->log_age);
    free(m->node_value);
    free(m->phase);
    free(m->box);
    free(m->superbox);
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

size_t hrt_fit_model_n_feh(const hrt_fit_model *m) { return m ? m->n_feh : 0; }

double hrt_fit_model_feh(const hrt_fit_model *m, size_t k) { return m && k < m->n_feh ? m->feh[k] : NAN; }

int trail_fit_grow(void **p, size_t *cap, size_t need, size_t elem)
{
    if (need <= *cap)
        return 0;
    size_t nc = *cap ? *cap : 1024;
    while (nc < need)
        nc *= 2;
    void *q = realloc(*p, nc * elem);
    if (!q)
        return -1;
    *p = q;
    *cap = nc;
    return 0;
}

static int out_of_memory(hrt_error *err) { return trail_set_error(err, HRT_E_NOMEM, "hrt_fit_model_new: out of memory"); }

typedef struct lattice_build {
    hrt_fit_model *m;
    hrt_imf imf; /* the mass prior */
    /* capacities, one per array: each grows geometrically and only when full
     * (a realloc per track copied the whole lattice each time) */
    size_t cap_tracks, cap_age, cap_values, cap_phase;
} lattice_build;

static int reserve_track(lattice_build *B, size_t n)
{
    hrt_fit_model *m = B->m;
    size_t need = m->n_nodes + n;
    if (trail_fit_grow((void **)&m->track, &B->cap_tracks, m->n_tracks + 1, sizeof *m->track) ||
        trail_fit_grow((void **)&m->log_age, &B->cap_age, need, sizeof *m->log_age) ||
        trail_fit_grow((void **)&m->node_value, &B->cap_values, need, LQ_COUNT * sizeof *m->node_value) ||
        trail_fit_grow((void **)&m->phase, &B->cap_phase, need, sizeof *m->phase))
        return -1;
    return 0;
}

/* Add the lattice track of mass (Msun) at node k; skipped silently if the grid cannot make it. */
static int add_track(lattice_build *B, size_t k, double mass, int want_route, hrt_error *err)
{
    hrt_fit_model *m = B->m;
    hrt_star *s = NULL;
    int rs = hrt_star_new(m->g, mass, m->z[k], &s, NULL);
    if (rs == HRT_E_NOMEM) /* not "outside the grid": the lattice would silently lose a track */
        return out_of_memory(err);
    if (rs != HRT_OK)
        return HRT_OK;
    if (hrt_star_route(s) != want_route) {
        hrt_star_free(s);
        return HRT_OK;
    }
    size_t n = hrt_star_n_eep(s);
    if (reserve_track(B, n)) {
        hrt_star_free(s);
        return out_of_memory(err);
    }
    trail_fit_track *t = &m->track[m->n_tracks++];
    t->log_m = log10(mass);
    t->log_prior = log_prior_dlogm(&B->imf, mass);
    t->route = want_route;
    t->n_eep = (int)n;
    t->feh_node = k;
    t->first_node = m->n_nodes;
    t->first_box = SIZE_MAX;
    for (size_t j = 0; j < n; j++) {
        hrt_state st;
        hrt_star_eep_state(s, j, &st);
        size_t i = m->n_nodes + j;
        m->log_age[i] = log10(st.age_yr);
        float *v = m->node_value + i * LQ_COUNT;
        v[LQ_LOG_TEFF] = (float)st.log_teff_k;
        v[LQ_LOG_L] = (float)st.log_l_lsun;
        v[LQ_LOG_G] = (float)st.log_g_cgs;
        v[LQ_MASS] = (float)st.mass_msun;
        m->phase[i] = (int8_t)st.phase;
        if (st.log_teff_k < m->log_teff_range[0]) m->log_teff_range[0] = st.log_teff_k;
        if (st.log_teff_k > m->log_teff_range[1]) m->log_teff_range[1] = st.log_teff_k;
    }
    m->n_nodes += n;
    hrt_star_free(s);
    return HRT_OK;
}

/* [Fe/H] limits: the grid's range where not given; held inside it. */
static int check_feh_limits(const hrt_grid *g, hrt_fit_model_options *o, hrt_error *err)
{
    double zlo, zhi;
    hrt_grid_z_range(g, &zlo, &zhi);
    double zref = hrt_grid_z_ref(g);
    double flo = log10(zlo / zref), fhi = log10(zhi / zref);
    if (isnan(o->feh_min)) o->feh_min = flo;
    if (isnan(o->feh_max)) o->feh_max = fhi;
    if (!isfinite(o->feh_min) || !isfinite(o->feh_max))
        return trail_set_error(err, HRT_E_DOMAIN, "hrt_fit_model_new: [Fe/H] limits must be finite");
    if (o->feh_min > o->feh_max)
        return trail_set_error(err, HRT_E_INVALID, "hrt_fit_model_new: feh_min %g > feh_max %g", o->feh_min, o->feh_max);
    if (o->feh_min < flo - FEH_ROUNDING_DEX || o->feh_max > fhi + FEH_ROUNDING_DEX)
        return trail_set_error(err, HRT_E_Z_RANGE, "hrt_fit_model_new: [Fe/H] range [%g, %g] outside the grid's [%g, %g]",
                               o->feh_min, o->feh_max, flo, fhi);
    if (o->feh_min < flo) o->feh_min = flo;
    if (o->feh_max > fhi) o->feh_max = fhi;
    return HRT_OK;
}

/* Mass limits: the widest range of the grid's metallicities where not given. */
static int check_mass_limits(const hrt_grid *g, hrt_fit_model_options *o, hrt_error *err)
{
    double mlo = INFINITY, mhi = -INFINITY;
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
    if (o->mass_min_msun < mlo * (1 - MASS_ROUNDING_REL) || o->mass_max_msun > mhi * (1 + MASS_ROUNDING_REL))
        return trail_set_error(err, HRT_E_MASS_RANGE, "hrt_fit_model_new: mass range [%g, %g] Msun outside the grid's [%g, %g]",
                               o->mass_min_msun, o->mass_max_msun, mlo, mhi);
    return HRT_OK;
}

static int check_opts(const hrt_grid *g, hrt_fit_model_options *o, hrt_error *err)
{
    if (o->mass_prior < 0 || o->mass_prior >= HRT_FIT_PRIOR_COUNT)
        return trail_set_error(err, HRT_E_INVALID, "hrt_fit_model_new: unknown mass prior %d", (int)o->mass_prior);
    int rc = check_feh_limits(g, o, err);
    if (rc != HRT_OK)
        return rc;
    if (!(o->feh_step_dex > 0) || !isfinite(o->feh_step_dex) || !(o->log_mass_step_dex > 0) ||
        !isfinite(o->log_mass_step_dex) || !(o->age_max_yr > 0) || !isfinite(o->age_max_yr))
        return trail_set_error(err, HRT_E_DOMAIN,
                               "hrt_fit_model_new: feh_step_dex, log_mass_step_dex and age_max_yr must be finite and > 0");
    if (o->feh_step_dex < FEH_STEP_MIN_DEX || o->log_mass_step_dex < LOG_MASS_STEP_MIN_DEX ||
        o->log_mass_step_dex > LOG_MASS_STEP_MAX_DEX)
        return trail_set_error(err, HRT_E_INVALID, "hrt_fit_model_new: feh_step_dex >= %g and %g <= log_mass_step_dex <= %g are required",
                               FEH_STEP_MIN_DEX, LOG_MASS_STEP_MIN_DEX, LOG_MASS_STEP_MAX_DEX);
    return check_mass_limits(g, o, err);
}

/* [Fe/H] nodes: evenly spaced, both ends included; trapezoid weights. */
static int place_feh_nodes(hrt_fit_model *m, hrt_error *err)
{
    const hrt_fit_model_options *o = &m->o;
    double span = o->feh_max - o->feh_min;
    size_t nz = span > 0 ? (size_t)ceil(span / o->feh_step_dex - STEPS_ROUNDING) + 1 : 1;
    m->n_feh = nz;
    m->feh = malloc(nz * sizeof(double));
    m->z = malloc(nz * sizeof(double));
    m->feh_weight = malloc(nz * sizeof(double));
    m->first_track = malloc((nz + 1) * sizeof(size_t));
    if (!m->feh || !m->z || !m->feh_weight || !m->first_track)
        return out_of_memory(err);
    double zref = hrt_grid_z_ref(m->g), zlo, zhi;
    hrt_grid_z_range(m->g, &zlo, &zhi);
    for (size_t k = 0; k < nz; k++) {
        m->feh[k] = nz > 1 ? o->feh_min + span * (double)k / (double)(nz - 1) : o->feh_min;
        m->z[k] = zref * pow(10.0, m->feh[k]);
        if (m->z[k] < zlo) m->z[k] = zlo; /* rounding at the ends */
        if (m->z[k] > zhi) m->z[k] = zhi;
        m->feh_weight[k] = (nz > 1 && (k == 0 || k == nz - 1)) ? 0.5 : 1.0;
    }
    m->feh_step = nz > 1 ? span / (double)(nz - 1) : 0.0;
    return HRT_OK;
}

/* Tracks of one route at node k: evenly spaced in log mass over [m_lo, m_hi], both ends included. */
static int add_route_tracks(lattice_build *B, size_t k, int route, double m_lo, double m_hi, hrt_error *err)
{
    double la0 = log10(m_lo), la1 = log10(m_hi);
    size_t nm = (size_t)ceil((la1 - la0) / B->m->o.log_mass_step_dex - STEPS_ROUNDING) + 1;
    if (nm < 2) nm = 2;
    int rc = HRT_OK;
    for (size_t i = 0; i < nm && rc == HRT_OK; i++)
        rc = add_track(B, k, pow(10.0, la0 + (la1 - la0) * (double)i / (double)(nm - 1)), route, err);
    return rc;
}

/* The tracks of node k, route by route: each route's segment of the mass
 * range inside the prior's limits gets its own tracks, ending at its edges. */
static int add_node_tracks(lattice_build *B, size_t k, hrt_error *err)
{
    hrt_fit_model *m = B->m;
    const hrt_grid *g = m->g;
    double z = m->z[k], lo, hi;
    m->first_track[k] = m->n_tracks;
    if (hrt_grid_mass_range(g, z, &lo, &hi) != HRT_OK)
        return HRT_OK;
    if (lo < m->o.mass_min_msun) lo = m->o.mass_min_msun;
    if (hi > m->o.mass_max_msun) hi = m->o.mass_max_msun;
    if (lo >= hi)
        return HRT_OK;
    int route_lo = 0, route_hi = 0;
    if (hrt_grid_route_of(g, lo, z, &route_lo) != HRT_OK || hrt_grid_route_of(g, hi, z, &route_hi) != HRT_OK)
        return HRT_OK; /* cannot happen inside the mass range; nothing to add if it did */
    int rc = HRT_OK;
    double seg_lo = lo;
    for (int r = route_lo; r <= route_hi && seg_lo < hi && rc == HRT_OK; r++) {
        /* route r ends at its boundary (the core's rule, hrt_grid_boundary_at);
         * the next route starts just above it */
        double seg_hi = hi, next_lo = hi;
        if (r < route_hi && hrt_grid_boundary_at(g, z, (size_t)r, &seg_hi) == HRT_OK)
            next_lo = nextafter(seg_hi, INFINITY);
        rc = add_route_tracks(B, k, r, seg_lo, seg_hi, err);
        seg_lo = next_lo;
    }
    return rc;
}

/* Boxes [first, first + n) of the cells between tracks A and C. */
static void fill_boxes(hrt_fit_model *m, const trail_fit_track *A, const trail_fit_track *C, size_t first, size_t n)
{
    for (size_t b = 0; b < n; b++) {
        float *box = m->box + (first + b) * 2 * LQ_N_OBSERVED;
        for (int q = 0; q < LQ_N_OBSERVED; q++) {
            box[q] = INFINITY;
            box[LQ_N_OBSERVED + q] = -INFINITY;
        }
        size_t j1 = (b + 1) * TRAIL_FIT_BOX_CELLS;
        if (j1 > (size_t)A->n_cell) j1 = (size_t)A->n_cell;
        for (size_t j = b * TRAIL_FIT_BOX_CELLS; j <= j1; j++)
            for (int side = 0; side < 2; side++) {
                const float *v = m->node_value + ((side ? C->first_node : A->first_node) + j) * LQ_COUNT;
                for (int q = 0; q < LQ_N_OBSERVED; q++) {
                    if (v[q] < box[q]) box[q] = v[q];
                    if (v[q] > box[LQ_N_OBSERVED + q]) box[LQ_N_OBSERVED + q] = v[q];
                }
            }
    }
}

/* Second-level boxes from the n boxes at first: unions of TRAIL_FIT_SUPERBOX_BOXES each. */
static void fill_superboxes(hrt_fit_model *m, size_t first, size_t n)
{
    for (size_t b = 0; b < n; b++) {
        const float *box = m->box + (first + b) * 2 * LQ_N_OBSERVED;
        float *sbox = m->superbox + (m->n_superboxes + b / TRAIL_FIT_SUPERBOX_BOXES) * 2 * LQ_N_OBSERVED;
        int opens = b % TRAIL_FIT_SUPERBOX_BOXES == 0;
        for (int q = 0; q < LQ_N_OBSERVED; q++) {
            if (opens || box[q] < sbox[q]) sbox[q] = box[q];
            if (opens || box[LQ_N_OBSERVED + q] > sbox[LQ_N_OBSERVED + q]) sbox[LQ_N_OBSERVED + q] = box[LQ_N_OBSERVED + q];
        }
    }
}

/* Bounding boxes of the cells between neighbouring tracks of one route and node. */
static int add_cell_boxes(hrt_fit_model *m, hrt_error *err)
{
    size_t nb = 0, cap_boxes = 0, cap_superboxes = 0;
    for (size_t t = 0; t + 1 < m->n_tracks; t++) {
        trail_fit_track *A = &m->track[t], *C = &m->track[t + 1];
        if (A->feh_node != C->feh_node || A->route != C->route)
            continue;
        int ncell = (A->n_eep < C->n_eep ? A->n_eep : C->n_eep) - 1;
        if (ncell < 1)
            continue;
        size_t nblk = ((size_t)ncell + TRAIL_FIT_BOX_CELLS - 1) / TRAIL_FIT_BOX_CELLS;
        if (trail_fit_grow((void **)&m->box, &cap_boxes, nb + nblk, sizeof(float) * 2 * LQ_N_OBSERVED))
            return out_of_memory(err);
        A->first_box = nb;
        A->n_cell = ncell;
        fill_boxes(m, A, C, nb, nblk);
        size_t nsb = (nblk + TRAIL_FIT_SUPERBOX_BOXES - 1) / TRAIL_FIT_SUPERBOX_BOXES;
        if (trail_fit_grow((void **)&m->superbox, &cap_superboxes, m->n_superboxes + nsb, sizeof(float) * 2 * LQ_N_OBSERVED))
            return out_of_memory(err);
        A->first_superbox = m->n_superboxes;
        fill_superboxes(m, nb, nblk);
        m->n_superboxes += nsb;
        nb += nblk;
    }
    m->n_boxes = nb;
    return HRT_OK;
}

/* The lattice: [Fe/H] nodes, their tracks, the cells' boxes. */
static int build_lattice(hrt_fit_model *m, hrt_error *err)
{
    int rc = place_feh_nodes(m, err);
    if (rc != HRT_OK)
        return rc;
    lattice_build B = {.m = m};
    rc = prior_imf(&m->o, &B.imf, err);
    for (size_t k = 0; k < m->n_feh && rc == HRT_OK; k++)
        rc = add_node_tracks(&B, k, err);
    if (rc != HRT_OK)
        return rc;
    m->first_track[m->n_feh] = m->n_tracks;
    rc = add_cell_boxes(m, err);
    if (rc == HRT_OK && m->n_boxes == 0)
        rc = trail_set_error(err, HRT_E_INVALID, "hrt_fit_model_new: no pair of lattice tracks in the chosen ranges");
    return rc;
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
        return out_of_memory(err);
    m->g = g;
    m->o = o;
    m->log_age_max = log10(o.age_max_yr);
    m->log_teff_range[0] = INFINITY;
    m->log_teff_range[1] = -INFINITY;
    rc = build_lattice(m, err);
    if (rc != HRT_OK) {
        hrt_fit_model_free(m);
        return rc;
    }
    m->bytes = sizeof *m + m->n_feh * (3 * sizeof(double) + sizeof(size_t)) + m->n_tracks * sizeof(trail_fit_track) +
               m->n_nodes * (sizeof(double) + LQ_COUNT * sizeof(float) + 1) +
               (m->n_boxes + m->n_superboxes) * 2 * LQ_N_OBSERVED * sizeof(float);
    *model = m;
    if (err)
        trail_set_error(err, HRT_OK, NULL);
    return HRT_OK;
}
