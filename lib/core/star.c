/* One star: its interpolated track built once, then any age in O(log n_eep). */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "core/core.h"

struct hrt_star {
    qctx q;
    int n;            /* EEPs */
    double *age;      /* [n] log10 age/yr at each EEP */
    double *age_yr;   /* [n] the same in yr */
    double *val;      /* [n][NQS] log L, log Teff, mass, He core, CO core */
    int8_t *phase;    /* [n] */
    int32_t *runs;    /* [n][2] first EEP of the phase run containing j, first EEP after it */
    int remnant;
    double remnant_mass;
    uint16_t tab[TRAIL_STAR_TAB + 1]; /* log age -> EEP table (trail_track_arrays.tab) */
    double tab_x[2];
    trail_wd_fixed wd; /* the white dwarf's fixed parts (remnant.c) */
};

/* The star's log age -> EEP table: for the start of each of TRAIL_STAR_TAB
 * bins (uniform in log age over the track, and its end), the last EEP
 * j <= n - 2 at or below it.  Only where the search of an age starts. */
static void star_table(hrt_star *s)
{
    int n = s->n;
    const double *a = s->age;
    double a0 = a[0], per_dex = TRAIL_STAR_TAB / (a[n - 1] - a[0]);
    s->tab_x[0] = a0;
    s->tab_x[1] = per_dex;
    int e = 0;
    for (int k = 0; k <= TRAIL_STAR_TAB; k++) {
        double lt = a0 + k / per_dex;
        while (e + 1 <= n - 2 && a[e + 1] <= lt)
            e++;
        s->tab[k] = (uint16_t)e;
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
    if (!s->age || !s->age_yr || !s->val || !s->phase || !s->runs) {
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
    *star = s;
    if (err)
        trail_set_error(err, HRT_OK, NULL);
    return HRT_OK;
}

int hrt_star_at(const hrt_star *s, double age_yr, hrt_state *out)
{
    if (!s || !out)
        return HRT_E_NULL;
    trail_track_arrays S = {s->age, s->age_yr, s->val, s->phase, s->runs, s->tab, {s->tab_x[0], s->tab_x[1]}, &s->wd};
    return trail_state_at_generic(&s->q, &S, s->remnant, s->remnant_mass, age_yr, out);
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
