/* hrtrail: summaries of a population at one epoch: counts and fixed-point
 * sums, so that partial summaries merge exactly in any order. */
#include <math.h>
#include <string.h>

#include "util/util.h"
#include "population/sampling.h"

#define FIX_SCALE 4294967296.0 /* 2^32 units per Msun or Lsun */
#define TWO_POW_64 18446744073709551616.0
/* One value adds at most this many units: below 2^64 (about 1.845e19), so the conversion is defined. */
#define FIX_UNITS_MAX 1.8e19

static inline void fix_add_units(hrt_pop_sum *s, uint64_t q)
{
    s->lo += q;
    s->hi += s->lo < q;
}

/* Add v >= 0, rounded once to 2^-32; NaN, negative and zero add nothing. */
static inline void fix_add(hrt_pop_sum *s, double v)
{
    if (!(v > 0.0))
        return;
    double x = v * FIX_SCALE;
    fix_add_units(s, x >= FIX_UNITS_MAX ? (uint64_t)FIX_UNITS_MAX : (uint64_t)(x + 0.5));
}

static inline void fix_merge(hrt_pop_sum *d, const hrt_pop_sum *s)
{
    fix_add_units(d, s->lo);
    d->hi += s->hi;
}

double hrt_pop_sum_value(const hrt_pop_sum *s)
{
    if (!s)
        return NAN;
    return ((double)s->hi * TWO_POW_64 + (double)s->lo) / FIX_SCALE;
}

/* The phase codes and remnant kinds of the lists, as bit masks. */
#define PHASE_BIT_(name, code, key, text) | HRT_PHASE_BIT(code)
#define REMNANT_BIT_(name, code, key, text) | ((uint32_t)1 << (code))
static const uint64_t phase_codes = 0 HRT_PHASE_LIST(PHASE_BIT_);
static const uint32_t remnant_codes = 0 HRT_REMNANT_LIST(REMNANT_BIT_);
#undef PHASE_BIT_
#undef REMNANT_BIT_

static inline int is_phase_code(int32_t p) { return p >= 0 && p < HRT_PHASE_SLOTS && (phase_codes >> p & 1); }
static inline int is_remnant_code(int32_t r) { return r >= 0 && r < HRT_REMNANT_SLOTS && (remnant_codes >> r & 1); }

/* A binning with nx, ny >= 1, nx * ny <= HRT_POP_HR_MAX_BINS (each factor
 * checked first, so the product cannot wrap) and finite ranges, low < high;
 * range_code for bad ranges.  who names the function and the summary. */
static int check_hr(const hrt_pop_hr *hr, const char *who, int range_code, hrt_error *err)
{
    if (hr->nx == 0 || hr->ny == 0 || hr->nx > HRT_POP_HR_MAX_BINS || hr->ny > HRT_POP_HR_MAX_BINS ||
        hr->nx * hr->ny > HRT_POP_HR_MAX_BINS)
        return trail_set_error(err, HRT_E_INVALID, "%s: HR histogram of %llu x %llu bins: need nx, ny >= 1 and nx * ny <= %d",
                               who, (unsigned long long)hr->nx, (unsigned long long)hr->ny, HRT_POP_HR_MAX_BINS);
    if (!isfinite(hr->log_teff_k_lo) || !isfinite(hr->log_teff_k_hi) || !(hr->log_teff_k_hi > hr->log_teff_k_lo) ||
        !isfinite(hr->log_l_lsun_lo) || !isfinite(hr->log_l_lsun_hi) || !(hr->log_l_lsun_hi > hr->log_l_lsun_lo))
        return trail_set_error(err, range_code, "%s: HR histogram ranges log Teff %g .. %g, log L %g .. %g: need finite "
                                                "low < high", who, hr->log_teff_k_lo, hr->log_teff_k_hi, hr->log_l_lsun_lo,
                               hr->log_l_lsun_hi);
    return HRT_OK;
}

/* Every field of a summary that adding or merging relies on, before any
 * memory is touched: a summary may arrive as bytes (from another process or
 * rank).  Its size, a finite epoch >= 0, a binning that is either none
 * (0 x 0, every field zero, as hrt_pop_summary_init leaves it: a run's
 * partial summaries must merge into it) or valid, and extrema a summary can
 * hold (the largest main-sequence mass >= 0, the smallest evolved one not
 * NaN). */
int trail_pop_summary_check(const hrt_pop_summary *s, const char *who, hrt_error *err)
{
    if (s->struct_size != sizeof *s)
        return trail_set_error(err, HRT_E_INVALID, "%s: not an initialised summary (struct_size %llu, expected %zu; "
                                                   "use hrt_pop_summary_init)", who, (unsigned long long)s->struct_size,
                               sizeof *s);
    if (!isfinite(s->age_yr) || s->age_yr < 0.0)
        return trail_set_error(err, HRT_E_INVALID, "%s: epoch %g yr: need a finite age >= 0", who, s->age_yr);
    const hrt_pop_hr none = {0};
    if (s->hr.nx || s->hr.ny) {
        int rc = check_hr(&s->hr, who, HRT_E_INVALID, err);
        if (rc != HRT_OK)
            return rc;
    } else if (memcmp(&s->hr, &none, sizeof none) != 0) {
        return trail_set_error(err, HRT_E_INVALID, "%s: no HR histogram (0 x 0 bins) but ranges log Teff %g .. %g, log L "
                                                   "%g .. %g set", who, s->hr.log_teff_k_lo, s->hr.log_teff_k_hi,
                               s->hr.log_l_lsun_lo, s->hr.log_l_lsun_hi);
    }
    if (!(s->ms_max_initial_mass_msun >= 0.0) || isnan(s->evolved_min_initial_mass_msun))
        return trail_set_error(err, HRT_E_INVALID, "%s: extrema %g (main sequence, largest) and %g Msun (evolved, smallest) "
                                                   "no summary can hold", who, s->ms_max_initial_mass_msun,
                               s->evolved_min_initial_mass_msun);
    return HRT_OK;
}

int hrt_pop_summary_init(hrt_pop_summary *s, double age_yr, const hrt_pop_hr *hr, hrt_error *err)
{
    if (!s)
        return trail_set_error(err, HRT_E_NULL, "hrt_pop_summary_init: summary is NULL");
    if (!isfinite(age_yr) || age_yr < 0.0)
        return trail_set_error(err, HRT_E_DOMAIN, "hrt_pop_summary_init: epoch %g yr: need a finite age >= 0", age_yr);
    if (hr && (hr->nx || hr->ny)) {
        int rc = check_hr(hr, "hrt_pop_summary_init", HRT_E_DOMAIN, err);
        if (rc != HRT_OK)
            return rc;
    }
    memset(s, 0, sizeof *s);
    s->struct_size = sizeof *s;
    s->age_yr = age_yr;
    s->evolved_min_initial_mass_msun = INFINITY;
    if (hr && hr->nx && hr->ny)
        s->hr = *hr;
    return trail_set_error(err, HRT_OK, NULL);
}

static inline int evolved_phase(int p) { return p != HRT_PHASE_UNKNOWN && p != HRT_PHASE_PRE_MS && p != HRT_PHASE_MS; }

/* Count a luminous star in the HR histogram (bx, by: bins per dex). */
static void count_in_hr(hrt_pop_summary *s, const hrt_state *st, double bx, double by)
{
    double fx = (st->log_teff_k - s->hr.log_teff_k_lo) * bx, fy = (st->log_l_lsun - s->hr.log_l_lsun_lo) * by;
    if (fx >= 0.0 && fy >= 0.0 && fx < (double)s->hr.nx && fy < (double)s->hr.ny)
        s->hr_count[(uint64_t)fy * s->hr.nx + (uint64_t)fx]++;
    else
        s->hr_outside++;
}

static void summary_add_one(hrt_pop_summary *s, const hrt_state *st, double bx, double by)
{
    s->n_drawn++;
    int code = st->status;
    s->n_status[code]++;
    double m0 = st->initial_mass_msun;
    if (code != HRT_OK) {
        fix_add(&s->failed_initial_mass_msun, m0);
        return;
    }
    s->n_evaluated++;
    int p = st->phase;
    double l = isfinite(st->log_l_lsun) ? trail_exp10(st->log_l_lsun) : 0.0;
    s->n_phase[p]++;
    fix_add(&s->phase_initial_mass_msun[p], m0);
    fix_add(&s->phase_mass_msun[p], st->mass_msun);
    fix_add(&s->phase_l_lsun[p], l);
    int r = (st->flags & HRT_FLAG_REMNANT) ? st->remnant : 0;
    s->n_remnant[r]++;
    fix_add(&s->remnant_mass_msun[r], st->mass_msun);
    fix_add(&s->initial_mass_msun, m0);
    fix_add(&s->mass_msun, st->mass_msun);
    fix_add(&s->l_lsun, l);
    if (p == HRT_PHASE_MS && m0 > s->ms_max_initial_mass_msun)
        s->ms_max_initial_mass_msun = m0;
    if (evolved_phase(p) && m0 < s->evolved_min_initial_mass_msun)
        s->evolved_min_initial_mass_msun = m0;
    if (s->hr.nx && isfinite(st->log_l_lsun) && isfinite(st->log_teff_k))
        count_in_hr(s, st, bx, by);
}

/* The codes a summary counts states by: a status of the list, and for a
 * state evaluated without error (the only ones whose phase and remnant are
 * counted) a phase and a remnant kind of the lists. */
static int check_states(const hrt_state *states, size_t n, hrt_error *err)
{
    for (size_t i = 0; i < n; i++) {
        const hrt_state *st = &states[i];
        if (st->status < 0 || st->status >= HRT_STATUS_COUNT_)
            return trail_set_error(err, HRT_E_INVALID, "hrt_pop_summary_add: state %zu: status %d is not a status code", i,
                                   (int)st->status);
        if (st->status == HRT_OK && !is_phase_code(st->phase))
            return trail_set_error(err, HRT_E_INVALID, "hrt_pop_summary_add: state %zu: phase %d is not a phase code", i,
                                   (int)st->phase);
        if (st->status == HRT_OK && !is_remnant_code(st->remnant))
            return trail_set_error(err, HRT_E_INVALID, "hrt_pop_summary_add: state %zu: remnant %d is not a remnant kind",
                                   i, (int)st->remnant);
    }
    return HRT_OK;
}

int hrt_pop_summary_add(hrt_pop_summary *s, const hrt_state *states, size_t n, hrt_error *err)
{
    if (!s || (!states && n))
        return trail_set_error(err, HRT_E_NULL, "hrt_pop_summary_add: %s is NULL", !s ? "summary" : "states");
    int rc = trail_pop_summary_check(s, "hrt_pop_summary_add", err);
    if (rc == HRT_OK)
        rc = check_states(states, n, err);
    if (rc != HRT_OK)
        return rc;
    double bx = 0.0, by = 0.0;
    if (s->hr.nx) {
        bx = (double)s->hr.nx / (s->hr.log_teff_k_hi - s->hr.log_teff_k_lo);
        by = (double)s->hr.ny / (s->hr.log_l_lsun_hi - s->hr.log_l_lsun_lo);
    }
    for (size_t i = 0; i < n; i++)
        summary_add_one(s, &states[i], bx, by);
    return trail_set_error(err, HRT_OK, NULL);
}

void hrt_pop_summary_add_unborn(hrt_pop_summary *s, uint64_t n)
{
    if (!s)
        return;
    s->n_drawn += n;
    s->n_unborn += n;
}

int hrt_pop_summary_merge(hrt_pop_summary *d, const hrt_pop_summary *s, hrt_error *err)
{
    if (!d || !s)
        return trail_set_error(err, HRT_E_NULL, "hrt_pop_summary_merge: %s is NULL", !d ? "dst" : "src");
    int rc = trail_pop_summary_check(d, "hrt_pop_summary_merge: dst", err);
    if (rc == HRT_OK)
        rc = trail_pop_summary_check(s, "hrt_pop_summary_merge: src", err);
    if (rc != HRT_OK)
        return rc;
    if (memcmp(&d->age_yr, &s->age_yr, sizeof d->age_yr) != 0)
        return trail_set_error(err, HRT_E_INVALID, "hrt_pop_summary_merge: summaries of different epochs (%.17g and %.17g "
                                                   "yr) do not merge", d->age_yr, s->age_yr);
    if (memcmp(&d->hr, &s->hr, sizeof d->hr) != 0)
        return trail_set_error(err, HRT_E_INVALID,
                               "hrt_pop_summary_merge: summaries with different HR-histogram binning do not merge");
    d->n_drawn += s->n_drawn;
    d->n_unborn += s->n_unborn;
    d->n_evaluated += s->n_evaluated;
    for (int k = 0; k < HRT_POP_MAX_STATUS; k++)
        d->n_status[k] += s->n_status[k];
    fix_merge(&d->failed_initial_mass_msun, &s->failed_initial_mass_msun);
    for (int k = 0; k < HRT_PHASE_SLOTS; k++) {
        d->n_phase[k] += s->n_phase[k];
        fix_merge(&d->phase_initial_mass_msun[k], &s->phase_initial_mass_msun[k]);
        fix_merge(&d->phase_mass_msun[k], &s->phase_mass_msun[k]);
        fix_merge(&d->phase_l_lsun[k], &s->phase_l_lsun[k]);
    }
    for (int k = 0; k < HRT_REMNANT_SLOTS; k++) {
        d->n_remnant[k] += s->n_remnant[k];
        fix_merge(&d->remnant_mass_msun[k], &s->remnant_mass_msun[k]);
    }
    fix_merge(&d->initial_mass_msun, &s->initial_mass_msun);
    fix_merge(&d->mass_msun, &s->mass_msun);
    fix_merge(&d->l_lsun, &s->l_lsun);
    if (s->ms_max_initial_mass_msun > d->ms_max_initial_mass_msun)
        d->ms_max_initial_mass_msun = s->ms_max_initial_mass_msun;
    if (s->evolved_min_initial_mass_msun < d->evolved_min_initial_mass_msun)
        d->evolved_min_initial_mass_msun = s->evolved_min_initial_mass_msun;
    d->hr_outside += s->hr_outside;
    uint64_t nb = d->hr.nx * d->hr.ny;
    for (uint64_t k = 0; k < nb; k++)
        d->hr_count[k] += s->hr_count[k];
    return trail_set_error(err, HRT_OK, NULL);
}

double hrt_pop_turnoff_mass(const hrt_pop_summary *s)
{
    if (!s || !(s->ms_max_initial_mass_msun > 0.0) || !isfinite(s->evolved_min_initial_mass_msun))
        return NAN;
    return sqrt(s->ms_max_initial_mass_msun * s->evolved_min_initial_mass_msun);
}
