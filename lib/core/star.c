/* One star: its interpolated track built once, then any age in O(log n_eep). */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "core/core.h"

/* One interval (j, j + 1) of the track as hrt_star_at reads it: every
 * number a state between the two EEPs needs, in 96 contiguous bytes.  The
 * numbers are the ones the general path (eval.c, state_on_track) computes
 * from the arrays below, so both give the same state to the bit. */
typedef struct star_seg {
    double v[NQS];  /* values at EEP j */
    double dv[NQS]; /* values at EEP j + 1 minus them */
    double t0, t1;  /* ages (yr) at the start and end of the phase run containing j */
} star_seg;

struct hrt_star {
    qctx q;
    int n;            /* EEPs */
    double *age;      /* [n] log10 age/yr at each EEP */
    double *age_yr;   /* [n] the same in yr */
    double *val;      /* [n][NQS] log L, log Teff, mass, He core, CO core */
    int8_t *phase;    /* [n] */
    int32_t *runs;    /* [n][2] first EEP of the phase run containing j, first EEP after it */
    star_seg *seg;    /* [n - 1] */
    int remnant;
    double remnant_mass;
    uint16_t tab[TRAIL_STAR_TAB + 1]; /* log age -> EEP table (trail_track_arrays.tab) */
    trail_wd_fixed wd; /* the white dwarf's fixed parts (remnant.c) */
    trail_track_arrays S; /* the arrays above, as the general path reads them */
};

/* The star's log age -> EEP table: for the start of each of TRAIL_STAR_TAB
 * bins (uniform in log age over the track, and its end), the last EEP
 * j <= n - 2 at or below it.  Only where the search of an age starts. */
static void star_table(hrt_star *s)
{
    int n = s->n;
    const double *a = s->age;
    double a0 = a[0], per_dex = TRAIL_STAR_TAB / (a[n - 1] - a[0]);
    s->S.tab_x[0] = a0;
    s->S.tab_x[1] = per_dex;
    int e = 0;
    for (int k = 0; k <= TRAIL_STAR_TAB; k++) {
        double lt = a0 + k / per_dex;
        while (e + 1 <= n - 2 && a[e + 1] <= lt)
            e++;
        s->tab[k] = (uint16_t)e;
    }
}

/* The interval records hrt_star_at reads (star_seg), from the arrays. */
static void star_segments(hrt_star *s)
{
    for (int j = 0; j + 1 < s->n; j++) {
        star_seg *g = &s->seg[j];
        const double *v0 = s->val + (size_t)j * NQS, *v1 = v0 + NQS;
        for (int k = 0; k < NQS; k++) {
            g->v[k] = v0[k];
            g->dv[k] = v1[k] - v0[k];
        }
        g->t0 = s->age_yr[s->runs[2 * j]];
        g->t1 = s->age_yr[s->runs[2 * j + 1]];
    }
}

void hrt_star_free(hrt_star *s)
{
    if (!s)
        return;
    free(s->age);
    free(s->age_yr);
    free(s->val);
    free(s->phase);
    free(s->runs);
    free(s->seg);
    free(s);
}

int hrt_star_new(const hrt_grid *g, double mass_msun, double z, hrt_star **star, hrt_error *err)
{
    if (!g || !star)
        return trail_set_error(err, HRT_E_NULL, "hrt_star_new: %s is NULL", !g ? "grid" : "star");
    *star = NULL;
    hrt_star *s = calloc(1, sizeof *s);
    if (!s)
        return trail_set_error(err, HRT_E_NOMEM, "hrt_star_new: out of memory");
    int rc = trail_qctx_init(g, mass_msun, z, &s->q, err);
    if (rc != HRT_OK) {
        hrt_star_free(s);
        return rc;
    }
    int n = s->q.n_eep;
    s->n = n;
    s->age = malloc((size_t)n * sizeof(double));
    s->age_yr = malloc((size_t)n * sizeof(double));
    s->val = malloc((size_t)n * NQS * sizeof(double));
    s->phase = malloc((size_t)n);
    s->runs = malloc((size_t)n * 2 * sizeof(int32_t));
    s->seg = malloc((size_t)(n > 1 ? n - 1 : 1) * sizeof *s->seg);
    if (!s->age || !s->age_yr || !s->val || !s->phase || !s->runs || !s->seg) {
        hrt_star_free(s);
        return trail_set_error(err, HRT_E_NOMEM, "hrt_star_new: out of memory for %d EEPs", n);
    }
    for (int j = 0; j < n; j++) {
        s->age[j] = trail_q_value(&s->q, Q_AGE, j);
        s->age_yr[j] = trail_exp10(s->age[j]);
        trail_q_values(&s->q, j, s->val + (size_t)j * NQS);
        s->phase[j] = (int8_t)trail_q_phase(&s->q, j);
        int js, je;
        trail_q_phase_run(&s->q, j, &js, &je);
        s->runs[2 * j] = js;
        s->runs[2 * j + 1] = je;
    }
    trail_q_remnant(&s->q, &s->remnant, &s->remnant_mass);
    star_table(s);
    trail_wd_fixed_init(&s->wd, s->remnant, s->remnant_mass, s->val[(size_t)(n - 1) * NQS + (Q_L - 1)]);
    star_segments(s);
    s->S = (trail_track_arrays){s->age, s->age_yr, s->val, s->phase, s->runs, s->tab, {s->S.tab_x[0], s->S.tab_x[1]}, &s->wd};
    *star = s;
    if (err)
        trail_set_error(err, HRT_OK, NULL);
    return HRT_OK;
}

/* The state at age_yr (log10 lt) between the first and last EEP: the
 * general path's numbers (eval.c, state_on_track with a stored track), from
 * the interval's record, every field stored once. */
static inline void star_on_track(const hrt_star *s, double age_yr, double lt, hrt_state *out)
{
    const double *a = s->age;
    int lo, len;
    trail_star_bracket(&s->S, s->n, lt, &lo, &len);
    while (len > 2) { /* branch-free bisection, as find_eep */
        int half = len / 2;
        lo = a[lo + half] <= lt ? lo + half : lo;
        len -= half;
    }
    /* the last step without a branch on len, which random ages mispredict:
     * at len == 1, A(lo + 1) > lt already */
    lo += a[lo + 1] <= lt;
    double aj = a[lo], aj1 = a[lo + 1];
    double f = aj1 > aj ? (lt - aj) / (aj1 - aj) : 0.0;
    const star_seg *g = &s->seg[lo];
    double v[NQS];
    if (f == 0.0) { /* v itself, as trail_state_from_values */
        v[0] = g->v[0], v[1] = g->v[1], v[2] = g->v[2], v[3] = g->v[3], v[4] = g->v[4];
    } else {
        v[0] = g->v[0] + f * g->dv[0];
        v[1] = g->v[1] + f * g->dv[1];
        v[2] = g->v[2] + f * g->dv[2];
        v[3] = g->v[3] + f * g->dv[3];
        v[4] = g->v[4] + f * g->dv[4];
    }
    double m0 = s->q.mass; /* masses are stored as fractions of it */
    double mass = m0 * v[Q_MASS - 1], he = m0 * v[Q_HE - 1], co = m0 * v[Q_CO - 1];
    he = he < mass ? he : mass; /* a core is never heavier than what contains it */
    double log_r = trail_log_r_from(v[Q_L - 1], v[Q_TEFF - 1]);
    double t0 = g->t0, t1 = g->t1, span = t1 - t0;
    double pf = span > 0.0 ? (age_yr - t0) / span : 0.0;
    out->struct_size = (uint32_t)sizeof *out;
    out->status = HRT_OK;
    out->phase = s->phase[lo];
    out->route = s->q.route;
    out->remnant = s->remnant;
    out->flags = s->q.flags;
    out->initial_mass_msun = m0;
    out->z = s->q.z;
    out->age_yr = age_yr;
    out->log_l_lsun = v[Q_L - 1];
    out->log_teff_k = v[Q_TEFF - 1];
    out->log_r_rsun = log_r;
    out->log_g_cgs = trail_log_g_from(mass, log_r);
    out->mass_msun = mass;
    out->he_core_mass_msun = he;
    out->co_core_mass_msun = co < he ? co : he;
    out->eep = lo + f;
    out->phase_fraction = pf < 0.0 ? 0.0 : (pf > 1.0 ? 1.0 : pf);
    out->phase_start_yr = t0;
    out->phase_end_yr = t1;
    out->remnant_mass_msun = s->remnant_mass;
    memset(out->reserved, 0, sizeof out->reserved);
}

int hrt_star_at(const hrt_star *s, double age_yr, hrt_state *out)
{
    if (!s || !out)
        return HRT_E_NULL;
    if (age_yr > 0.0 && age_yr < INFINITY) {
        double lt = trail_log10(age_yr);
        if (lt >= s->age[0] && lt < s->age[s->n - 1]) {
            star_on_track(s, age_yr, lt, out);
            return HRT_OK;
        }
    }
    /* before the first EEP, past the last, or not an age: the general path */
    return trail_state_at_generic(&s->q, &s->S, s->remnant, s->remnant_mass, age_yr, out);
}

size_t hrt_star_n_eep(const hrt_star *s) { return s ? (size_t)s->n : 0; }
int hrt_star_route(const hrt_star *s) { return s ? s->q.route : -1; }
double hrt_star_mass(const hrt_star *s) { return s ? s->q.mass : NAN; }
double hrt_star_z(const hrt_star *s) { return s ? s->q.z : NAN; }
double hrt_star_end_age(const hrt_star *s) { return s ? (s->age_yr[s->n - 1]) : NAN; }

int hrt_star_eep_state(const hrt_star *s, size_t j, hrt_state *out)
{
    if (!s || !out)
        return HRT_E_NULL;
    if (j >= (size_t)s->n)
        return HRT_E_INVALID;
    trail_state_clear(out, s->q.mass, s->q.z, (s->age_yr[j]));
    out->route = s->q.route;
    out->flags = s->q.flags;
    out->remnant = s->remnant;
    out->remnant_mass_msun = s->remnant_mass;
    const double *v = s->val + j * NQS;
    trail_state_from_values(out, v, v, 0.0);
    out->eep = (double)j;
    /* The last EEP of a track ending in core collapse is the star just
     * before it: luminous, in the phase it ends in, not under the name of
     * the dark remnant hrt_star_at gives from that age on.  (A track ending
     * at the white dwarf's onset is a white dwarf there, and says so.) */
    size_t jp = j;
    if (j + 1 == (size_t)s->n && j > 0 && (s->phase[j] == HRT_PHASE_NS || s->phase[j] == HRT_PHASE_BH))
        jp = j - 1;
    out->phase = s->phase[jp];
    out->phase_start_yr = (s->age_yr[s->runs[2 * jp]]);
    out->phase_end_yr = (s->age_yr[s->runs[2 * jp + 1]]);
    double span = out->phase_end_yr - out->phase_start_yr;
    out->phase_fraction = span > 0.0 ? (out->age_yr - out->phase_start_yr) / span : 0.0;
    return HRT_OK;
}

static const route_layout *star_route(const hrt_star *s) { return &s->q.g->routes[s->q.route]; }

size_t hrt_star_n_keypoints(const hrt_star *s) { return s ? star_route(s)->n_kp : 0; }

const char *hrt_star_keypoint_name(const hrt_star *s, size_t k)
{
    if (!s || k >= star_route(s)->n_kp)
        return NULL;
    return star_route(s)->kp_names[k];
}

int hrt_star_keypoint_age(const hrt_star *s, size_t k, double *age_yr)
{
    if (!s || !age_yr)
        return HRT_E_NULL;
    const route_layout *L = star_route(s);
    if (k >= L->n_kp)
        return HRT_E_INVALID;
    long j = L->kp_eep[k];
    *age_yr = j < s->n ? (s->age_yr[j]) : NAN;
    return HRT_OK;
}

int hrt_star_remnant(const hrt_star *s, int *kind, double *mass_msun)
{
    if (!s || !kind || !mass_msun)
        return HRT_E_NULL;
    *kind = s->remnant;
    *mass_msun = s->remnant_mass;
    return HRT_OK;
}

static int remnant_phase(int kind)
{
    switch (kind) {
    case HRT_REMNANT_NS:
        return HRT_PHASE_NS;
    case HRT_REMNANT_BH:
        return HRT_PHASE_BH;
    case HRT_REMNANT_NONE:
        return HRT_PHASE_UNKNOWN;
    default:
        return HRT_PHASE_WD;
    }
}

int hrt_star_phases(const hrt_star *s, hrt_phase_span *spans, size_t cap, size_t *n)
{
    if (!s || !n || (cap > 0 && !spans))
        return HRT_E_NULL;
    size_t k = 0;
#define PUSH(ph, a, b)                                \
    do {                                              \
        if (k < cap) {                                \
            spans[k].phase = (ph);                    \
            spans[k].reserved_ = 0;                   \
            spans[k].phase_start_yr = (a);                  \
            spans[k].phase_end_yr = (b);                    \
        }                                             \
        k++;                                          \
    } while (0)
    /* Before the first EEP the star is not modelled (pre_ms); a grid whose
     * tracks start on the birthline continues that span to the ZAMS. */
    if (s->phase[0] != HRT_PHASE_PRE_MS)
        PUSH(HRT_PHASE_PRE_MS, 0.0, (s->age_yr[0]));
    int j = 0;
    while (j < s->n - 1) {
        int je = s->runs[2 * j + 1];
        PUSH(s->phase[j], (j == 0 && s->phase[0] == HRT_PHASE_PRE_MS ? 0.0 : s->age_yr[j]), (s->age_yr[je]));
        j = je > j ? je : j + 1;
    }
    if (s->remnant != HRT_REMNANT_NONE)
        PUSH(remnant_phase(s->remnant), (s->age_yr[s->n - 1]), INFINITY);
#undef PUSH
    *n = k;
    return k <= cap ? HRT_OK : HRT_E_BUFFER;
}
