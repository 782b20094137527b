/* hrtrail: summaries of a population at one epoch: counts and fixed-point
 * sums, so that partial summaries merge exactly in any order. */
#include <math.h>
#include <string.h>

#include "util/util.h"

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

static int check_hr(const hrt_pop_hr *hr, hrt_error *err)
{
    if (hr->nx == 0 || hr->ny == 0 || hr->nx > HRT_POP_HR_MAX_BINS || hr->ny > HRT_POP_HR_MAX_BINS ||
        hr->nx * hr->ny > HRT_POP_HR_MAX_BINS)
        return trail_set_error(err, HRT_E_INVALID, "HR histogram of %llu x %llu bins: need nx, ny >= 1 and nx * ny <= %d",
                               (unsigned long long)hr->nx, (unsigned long long)hr->ny, HRT_POP_HR_MAX_BINS);
    if (!isfinite(hr->log_teff_k_lo) || !isfinite(hr->log_teff_k_hi) || !(hr->log_teff_k_hi > hr->log_teff_k_lo) ||
        !isfinite(hr->log_l_lsun_lo) || !isfinite(hr->log_l_lsun_hi) || !(hr->log_l_lsun_hi > hr->log_l_lsun_lo))
        return trail_set_error(err, HRT_E_DOMAIN, "HR histogram ranges log Teff %g .. %g, log L %g .. %g: need finite "
                                                  "low < high", hr->log_teff_k_lo, hr->log_teff_k_hi, hr->log_l_lsun_lo, hr->log_l_lsun_hi);
    return HRT_OK;
}

int hrt_pop_summary_init(hrt_pop_summary *s, double age_yr, const hrt_pop_hr *hr, hrt_error *err)
{
    if (!s)
        return trail_set_error(err, HRT_E_NULL, "hrt_pop_summary_init: summary is NULL");
    if (!isfinite(age_yr) || age_yr < 0.0)
        return trail_set_error(err, HRT_E_DOMAIN, "epoch %g yr: need a finite age >= 0", age_yr);
    if (hr && (hr->nx || hr->ny)) {
        int rc = check_hr(hr, err);
        if (rc != HRT_OK)
            return rc;
    }
    memset(s, 0, sizeof *s);
    s->struct_size = sizeof *s;
    s->age_yr = age_yr;
    s->evolved_min_initial_mass_msun = INFINITY;
    if (hr && hr->nx && hr->ny)
        s->hr = *hr;
    return HRT_OK;
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
    s->n_status[code >= 0 && code < HRT_POP_MAX_STATUS ? code : HRT_E_INTERNAL]++;
    double m0 = st->initial_mass_msun;
    if (code != HRT_OK) {
        fix_add(&s->failed_initial_mass_msun, m0);
        return;
    }
    s->n_evaluated++;
    int p = st->phase >= 0 && st->phase < HRT_PHASE_SLOTS ? st->phase : HRT_PHASE_UNKNOWN;
    double l = isfinite(st->log_l_lsun) ? trail_exp10(st->log_l_lsun) : 0.0;
    s->n_phase[p]++;
    fix_add(&s->phase_initial_mass_msun[p], m0);
    fix_add(&s->phase_mass_msun[p], st->mass_msun);
    fix_add(&s->phase_l_lsun[p], l);
    int r = (st->flags & HRT_FLAG_REMNANT) && st->remnant > 0 && st->remnant < HRT_REMNANT_SLOTS ? st->remnant : 0;
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

int hrt_pop_summary_add(hrt_pop_summary *s, const hrt_state *states, size_t n, hrt_error *err)
{
    if (!s || (!states && n))
        return trail_set_error(err, HRT_E_NULL, "hrt_pop_summary_add: %s is NULL", !s ? "summary" : "states");
    double bx = 0.0, by = 0.0;
    if (s->hr.nx) {
        bx = (double)s->hr.nx / (s->hr.log_teff_k_hi - s->hr.log_teff_k_lo);
        by = (double)s->hr.ny / (s->hr.log_l_lsun_hi - s->hr.log_l_lsun_lo);
    }
    for (size_t i = 0; i < n; i++)
        summary_add_one(s, &states[i], bx, by);
    return HRT_OK;
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
    if (d->struct_size != sizeof *d || s->struct_size != sizeof *s)
        return trail_set_error(err, HRT_E_INVALID, "summary not initialised (struct_size %llu, %llu; expected %zu)",
                               (unsigned long long)d->struct_size, (unsigned long long)s->struct_size, sizeof *d);
    if (memcmp(&d->age_yr, &s->age_yr, sizeof d->age_yr) != 0)
        return trail_set_error(err, HRT_E_INVALID, "summaries of different epochs (%.17g and %.17g yr) do not merge",
                               d->age_yr, s->age_yr);
    if (memcmp(&d->hr, &s->hr, sizeof d->hr) != 0)
        return trail_set_error(err, HRT_E_INVALID, "summaries with different HR-histogram binning do not merge");
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
    return HRT_OK;
}

double hrt_pop_turnoff_mass(const hrt_pop_summary *s)
{
    if (!s || !(s->ms_max_initial_mass_msun > 0.0) || !isfinite(s->evolved_min_initial_mass_msun))
        return NAN;
    return sqrt(s->ms_max_initial_mass_msun * s->evolved_min_initial_mass_msun);
}
