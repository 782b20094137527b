/*
 * Stars whose mass changes: hrt_remap and hrt_step on the default grid.
 *
 * What must hold (tracks/MODEL.md, "Stars whose mass changes"):
 *  - a star that neither gains nor loses mass follows its own track exactly
 *    (remap to the same mass; steps with no mass change), bit for bit with
 *    hrt_eval;
 *  - the equivalent point has the new mass; the effective initial mass moves
 *    in the direction of the mass change; the core that places a star after
 *    the main sequence is continuous across the remap; a tiny change moves
 *    the point by a tiny amount;
 *  - rejuvenation: a star with a convective core that gains mass is placed
 *    less far through its main sequence; a radiative core keeps its fraction;
 *  - every refusal is a specific code with a message;
 *  - threads give the same bits as one thread.
 * Thousands of random stars (fixed seed, so a failure can be replayed),
 * besides named cases.  No outside reference values are compared here.
 */
#include <check.h>
#include <math.h>
#include <pthread.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "hrtrail.h"

#include "default_grid.h"

/* Relative tolerance of the new current mass and of the matched core
 * (absolute in Msun below 1): the search's own convergence (1e-12) plus
 * rounding of the interpolation. */
#define MASS_TOL 1e-9
#define CORE_TOL 1e-9

/* xorshift64*: a fixed, portable stream of doubles in [0, 1). */
static double rnd(uint64_t *s)
{
    *s ^= *s >> 12;
    *s ^= *s << 25;
    *s ^= *s >> 27;
    return (double)((*s * 0x2545F4914F6CDD1DULL) >> 11) * 0x1.0p-53;
}

static hrt_grid *G;
static void setup(void) { G = open_grid(); }
static void teardown(void) { hrt_grid_close(G); }

/* A random luminous star of the grid: initial mass log-uniform in [lo, hi],
 * Z log-uniform over the grid, age uniform inside one of its phases (ms with
 * probability p_ms, else any later luminous phase). */
static hrt_state random_star(uint64_t *seed, double lo, double hi, double p_ms)
{
    double zlo, zhi;
    hrt_grid_z_range(G, &zlo, &zhi);
    for (;;) {
        double m = lo * pow(hi / lo, rnd(seed)), z = zlo * pow(zhi / zlo, rnd(seed));
        hrt_star *st = NULL;
        if (hrt_star_new(G, m, z, &st, NULL) != HRT_OK)
            continue;
        hrt_phase_span sp[32];
        size_t n = 0;
        hrt_star_phases(st, sp, 32, &n);
        hrt_star_free(st);
        int want_ms = rnd(seed) < p_ms;
        size_t pick = n;
        for (int tries = 0; tries < 20 && pick == n; tries++) {
            size_t k = (size_t)(rnd(seed) * (double)n);
            int ph = sp[k].phase;
            int ok = want_ms ? ph == HRT_PHASE_MS : (ph / 10 >= 2 && ph / 10 <= 4);
            if (ok && isfinite(sp[k].phase_end_yr))
                pick = k;
        }
        if (pick == n)
            continue;
        double age = sp[pick].phase_start_yr + rnd(seed) * (sp[pick].phase_end_yr - sp[pick].phase_start_yr);
        hrt_state s;
        if (hrt_eval(G, 1, &m, &z, 0.0, &age, &s, NULL) == HRT_OK && !(s.flags & HRT_FLAG_REMNANT) &&
            s.phase != HRT_PHASE_PRE_MS)
            return s;
    }
}

static hrt_state eval1(double m, double z, double age)
{
    hrt_state s;
    hrt_error e;
    int rc = hrt_eval(G, 1, &m, &z, 0.0, &age, &s, &e);
    ck_assert_msg(rc == HRT_OK, "hrt_eval(%g, %g, %g): %s", m, z, age, e.message);
    return s;
}

/* ------------------------------------------------------------------------ */
START_TEST(same_mass_is_own_point)
{
    uint64_t seed = 0x5eed0001;
    for (int i = 0; i < 1000; i++) {
        hrt_state s = random_star(&seed, 0.1, 120.0, 0.5), out;
        hrt_error e;
        int rc = hrt_remap(G, &s, s.mass_msun, &out, &e);
        ck_assert_msg(rc == HRT_OK, "star %d (%g Msun, Z %g, %g yr): %s", i, s.initial_mass_msun, s.z, s.age_yr,
                      e.message);
        ck_assert_msg(!memcmp(&s, &out, sizeof s), "star %d: remap to its own mass moved it", i);
    }
}
END_TEST

/* Steps with no mass change, of the sizes hrt_step proposes and of random
 * sizes, land exactly where hrt_eval puts the star at the summed age. */
START_TEST(step_without_change_follows_track)
{
    uint64_t seed = 0x5eed0002;
    long steps = 0;
    for (int i = 0; i < 150; i++) {
        hrt_state s = random_star(&seed, 0.6, 100.0, 0.5);
        for (int k = 0; k < 40; k++) {
            hrt_state nx;
            double dtn;
            hrt_error e;
            double dt = k % 2 ? rnd(&seed) * 0.01 * s.age_yr : s.age_yr * 1e-3;
            int rc = hrt_step(G, &s, dt, 0.0, &nx, &dtn, &e);
            if (rc == HRT_E_AGE_RANGE)
                break;
            ck_assert_msg(rc == HRT_OK, "%s", e.message);
            hrt_state ref = eval1(s.initial_mass_msun, s.z, s.age_yr + dt);
            ck_assert_msg(!memcmp(&ref, &nx, sizeof ref), "step %d of star %d left the track", k, i);
            ck_assert_msg(dtn > 0.0 && isfinite(dtn), "proposed step %g", dtn);
            if (isfinite(nx.phase_end_yr))
                ck_assert_msg(nx.age_yr + dtn <= nx.phase_end_yr * (1 + 1e-12),
                              "proposed step crosses the end of the phase");
            s = nx;
            steps++;
        }
    }
    printf("step_without_change: %ld steps, all bit-identical to hrt_eval\n", steps);
}
END_TEST

/* Stepping with the proposed steps walks from the ZAMS through every phase
 * boundary (landing on each) in a bounded number of steps. */
START_TEST(proposed_steps_reach_the_end)
{
    const double masses[] = {0.8, 1.0, 2.0, 5.0, 15.0, 40.0};
    for (size_t i = 0; i < sizeof masses / sizeof *masses; i++) {
        hrt_star *st = new_star(G, masses[i], Z_SUN);
        double end = hrt_star_end_age(st);
        hrt_phase_span sp[32];
        size_t n = 0;
        hrt_star_phases(st, sp, 32, &n);
        hrt_star_free(st);
        hrt_state s = eval1(masses[i], Z_SUN, sp[1].phase_start_yr);
        int k = 0, landed = 0;
        while (s.age_yr < end && k < 20000) {
            double dtn;
            hrt_error e;
            ck_assert_int_eq(hrt_step(G, &s, 0.0, 0.0, &s, &dtn, &e), HRT_OK);
            hrt_state nx;
            ck_assert_msg(hrt_step(G, &s, dtn, 0.0, &nx, NULL, &e) == HRT_OK, "%s", e.message);
            for (size_t p = 1; p < n; p++)
                landed += nx.age_yr == sp[p].phase_start_yr;
            s = nx;
            k++;
        }
        ck_assert_msg(s.age_yr >= end, "%g Msun: %d steps did not reach the end", masses[i], k);
        /* at most 1/HRT_STEP_PHASE_FRACTION steps per phase, plus landings */
        ck_assert_msg(k <= (int)(n * (1.0 / HRT_STEP_PHASE_FRACTION + 2)), "%g Msun: %d steps", masses[i], k);
        ck_assert_msg(landed >= 1, "%g Msun: no step landed on a phase boundary", masses[i]);
        printf("%5.1f Msun: %d proposed steps from the ZAMS to the end, %d landed on phase starts\n", masses[i],
               k, landed);
    }
}
END_TEST

/* Random gains and losses: mass matched, direction kept, core continuous. */
static void check_change(const hrt_state *s, double factor, long *ok, long *refused, int i)
{
    hrt_state out;
    hrt_error e;
    double m1 = s->mass_msun * factor;
    int rc = hrt_remap(G, s, m1, &out, &e);
    if (rc != HRT_OK) {
        ck_assert_msg(rc == HRT_E_NO_EQUIVALENT || rc == HRT_E_MASS_RANGE, "star %d: unexpected code %d: %s", i, rc,
                      e.message);
        ck_assert_msg(e.code == rc && strlen(e.message) > 20, "star %d: no message", i);
        if (getenv("REMAP_VERBOSE"))
            printf("%s %g: %s\n", hrt_phase_key(s->phase), factor, e.message);
        (*refused)++;
        return;
    }
    (*ok)++;
    ck_assert_msg(fabs(out.mass_msun - m1) <= MASS_TOL * m1, "star %d: mass %.15g, wanted %.15g", i, out.mass_msun,
                  m1);
    ck_assert_msg((out.initial_mass_msun - s->initial_mass_msun) * (factor - 1.0) > 0.0,
                  "star %d (%s, %g Msun): initial mass %g -> %g for a mass factor %g", i, hrt_phase_key(s->phase),
                  s->initial_mass_msun, s->initial_mass_msun, out.initial_mass_msun, factor);
    ck_assert_int_eq(out.status, HRT_OK);
    ck_assert_double_eq(out.z, s->z);
    if (s->phase != HRT_PHASE_MS) {
        ck_assert_int_eq(out.phase, s->phase);
        int co = s->phase / 10 == 3 && s->co_core_mass_msun > 0.0;
        double c0 = co ? s->co_core_mass_msun : s->he_core_mass_msun;
        double c1 = co ? out.co_core_mass_msun : out.he_core_mass_msun;
        ck_assert_msg(fabs(c1 - c0) <= CORE_TOL * fmax(1.0, c0), "star %d (%s): core %.12g -> %.12g", i,
                      hrt_phase_key(s->phase), c0, c1);
    }
}

START_TEST(random_changes)
{
    uint64_t seed = 0x5eed0003;
    long ok[2] = {0, 0}, refused[2] = {0, 0};
    for (int i = 0; i < 2000; i++) {
        int ms = i % 2 == 0;
        hrt_state s = random_star(&seed, 0.1, 100.0, ms ? 1.0 : 0.0);
        double factor = exp((rnd(&seed) - 0.5) * 0.4); /* -18 % to +22 % */
        check_change(&s, factor, &ok[ms], &refused[ms], i);
    }
    printf("random changes: main sequence %ld remapped, %ld refused; later phases %ld remapped, %ld refused\n",
           ok[1], refused[1], ok[0], refused[0]);
    /* the main sequence of the default grid is continuous in mass: every
     * change inside the grid has an equivalent point */
    ck_assert_msg(refused[1] * 50 <= ok[1], "main sequence: %ld refused of %ld", refused[1], ok[1] + refused[1]);
    ck_assert_msg(ok[0] > 300, "later phases: only %ld remapped", ok[0]);
}
END_TEST

/* A tiny change moves the point by a tiny amount (no jump at zero change). */
START_TEST(tiny_change_is_continuous)
{
    uint64_t seed = 0x5eed0004;
    int n_checked = 0;
    double worst_age = 0.0;
    for (int i = 0; i < 600; i++) {
        hrt_state s = random_star(&seed, 0.1, 100.0, 0.5), out;
        double eps = (i % 2 ? 1.0 : -1.0) * 1e-7;
        if (hrt_remap(G, &s, s.mass_msun * (1.0 + eps), &out, NULL) != HRT_OK)
            continue;
        n_checked++;
        ck_assert_msg(fabs(out.initial_mass_msun / s.initial_mass_msun - 1.0) < 1e-4, "star %d: %g -> %g", i,
                      s.initial_mass_msun, out.initial_mass_msun);
        /* the place in the phase, not the age: a star's whole age moves
         * with its initial mass.  Where the envelope is thin (post-RGB,
         * post-AGB, stripped stars) the envelope's mass is what places the
         * star in its phase, and an envelope 1e-7 heavier is another place:
         * checked only with an envelope of at least 10 % of the mass. */
        if (s.phase != HRT_PHASE_MS && s.mass_msun - s.he_core_mass_msun < 0.1 * s.mass_msun)
            continue;
        double da = fabs(out.phase_fraction - s.phase_fraction);
        worst_age = fmax(worst_age, da);
        ck_assert_msg(da < 2e-2, "star %d (%s): phase fraction %.9g -> %.9g", i, hrt_phase_key(s.phase),
                      s.phase_fraction, out.phase_fraction);
    }
    printf("tiny changes: %d stars, largest shift %.2e of the phase\n", n_checked, worst_age);
    ck_assert_int_gt(n_checked, 400);
}
END_TEST

/* Rejuvenation: a mixed (convective) core that gains mass is placed less far
 * through the main sequence; a radiative core keeps what it burnt. */
START_TEST(rejuvenation)
{
    /* 3 Msun, half-way through the main sequence, gains 50 % */
    hrt_star *st = new_star(G, 3.0, Z_SUN);
    hrt_phase_span sp[32];
    size_t n = 0;
    hrt_star_phases(st, sp, 32, &n);
    hrt_star_free(st);
    ck_assert_int_eq(sp[1].phase, HRT_PHASE_MS);
    hrt_state s = eval1(3.0, Z_SUN, 0.5 * (sp[1].phase_start_yr + sp[1].phase_end_yr)), out;
    ck_assert_int_eq(hrt_remap(G, &s, 1.5 * s.mass_msun, &out, NULL), HRT_OK);
    /* mixed core: the fraction of the main sequence falls */
    ck_assert_msg(out.phase_fraction < s.phase_fraction - 0.05, "convective core: %g -> %g", s.phase_fraction,
                  out.phase_fraction);
    /* radiative core (0.8 Msun, half-way): the fraction stays within the
     * difference of energy and age fractions between neighbouring tracks */
    st = new_star(G, 0.8, Z_SUN);
    hrt_star_phases(st, sp, 32, &n);
    hrt_star_free(st);
    hrt_state r = eval1(0.8, Z_SUN, 0.5 * (sp[1].phase_start_yr + sp[1].phase_end_yr)), rout;
    ck_assert_int_eq(hrt_remap(G, &r, 0.9, &rout, NULL), HRT_OK);
    ck_assert_msg(fabs(rout.phase_fraction - r.phase_fraction) < 0.02, "radiative core: %g -> %g", r.phase_fraction,
                  rout.phase_fraction);
    printf("rejuvenation: 3 -> 4.5 Msun at half its main sequence: fraction %.3f -> %.3f; 0.8 -> 0.9 Msun: %.3f -> "
           "%.3f\n",
           s.phase_fraction, out.phase_fraction, r.phase_fraction, rout.phase_fraction);
}
END_TEST

/* The fraction of its main-sequence energy a star has radiated at age_yr,
 * and its core at the end of the main sequence, recomputed from the public
 * track (hrt_star_eep_state): trapezoids of L over age between EEPs, the
 * part-interval with L linear in age (tracks/MODEL.md). */
static void burnt_and_core(double m0, double z, double age_yr, double *burnt, double *core)
{
    hrt_star *st = new_star(G, m0, z);
    size_t n = hrt_star_n_eep(st), js = n, je = n;
    hrt_state a, b;
    for (size_t j = 0; j < n; j++) {
        ck_assert_int_eq(hrt_star_eep_state(st, j, &a), HRT_OK);
        if (js == n && a.phase == HRT_PHASE_MS)
            js = j;
        else if (js < n && a.phase != HRT_PHASE_MS) {
            je = j;
            break;
        }
    }
    ck_assert(js < je && je < n);
    double total = 0.0, upto = 0.0;
    for (size_t j = js; j < je; j++) {
        hrt_star_eep_state(st, j, &a);
        hrt_star_eep_state(st, j + 1, &b);
        double h = b.age_yr - a.age_yr, l0 = pow(10.0, a.log_l_lsun), l1 = pow(10.0, b.log_l_lsun);
        double e = h * 0.5 * (l0 + l1);
        if (age_yr >= b.age_yr)
            upto += e;
        else if (age_yr > a.age_yr) {
            double s = age_yr - a.age_yr;
            upto += s * (l0 + 0.5 * (l1 - l0) * s / h);
        }
        total += e;
    }
    hrt_star_eep_state(st, je, &b);
    *core = b.he_core_mass_msun;
    *burnt = upto / total;
    hrt_star_free(st);
}

static double mixed_weight(double m)
{
    double lm = log10(m);
    return 1.0 / (1.0 + exp((lm - log10(HRT_REMAP_FULLY_CONVECTIVE_MSUN)) / HRT_REMAP_BLEND_DEX)) +
           1.0 / (1.0 + exp(-(lm - log10(HRT_REMAP_CONVECTIVE_CORE_MSUN)) / HRT_REMAP_BLEND_DEX));
}

/* The derivation holds: the hydrogen burnt is conserved where matter mixes
 * into a growing core (f1 Q1 = f0 Q0), the fraction is kept otherwise. */
START_TEST(hydrogen_burnt_is_conserved)
{
    uint64_t seed = 0x5eed0007;
    double worst = 0.0, rejuvenated = 0.0;
    int n = 0;
    for (int i = 0; i < 60; i++) {
        hrt_state s = random_star(&seed, i % 2 ? 0.4 : 2.0, i % 2 ? 1.0 : 40.0, 1.0), out;
        double factor = exp((rnd(&seed) - 0.4) * 0.5);
        if (hrt_remap(G, &s, factor * s.mass_msun, &out, NULL) != HRT_OK || out.phase != HRT_PHASE_MS)
            continue;
        double f0, q0, f1, q1;
        burnt_and_core(s.initial_mass_msun, s.z, s.age_yr, &f0, &q0);
        burnt_and_core(out.initial_mass_msun, out.z, out.age_yr, &f1, &q1);
        double w = mixed_weight(out.initial_mass_msun);
        double want = f0 * (1.0 - w + w * (q1 > q0 ? q0 / q1 : 1.0));
        worst = fmax(worst, fabs(f1 - want));
        rejuvenated = fmax(rejuvenated, f0 - f1);
        n++;
        ck_assert_msg(fabs(f1 - want) < 1e-6, "star %d (%g -> %g Msun): burnt %.9f -> %.9f, derivation %.9f", i,
                      s.initial_mass_msun, out.initial_mass_msun, f0, f1, want);
    }
    printf("hydrogen burnt: %d stars, largest departure from the derivation %.1e, largest rejuvenation %.3f\n", n,
           worst, rejuvenated);
    ck_assert_int_gt(n, 40);
    ck_assert_msg(rejuvenated > 0.05, "no star was rejuvenated");
}
END_TEST

static void expect_refusal(const hrt_state *s, double m1, int code, const char *what)
{
    hrt_state out;
    hrt_error e;
    int rc = hrt_remap(G, s, m1, &out, &e);
    ck_assert_msg(rc == code, "%s: code %d (%s), wanted %d", what, rc, e.message, code);
    ck_assert_int_eq(e.code, code);
    ck_assert_msg(strlen(e.message) > 15, "%s: message '%s'", what, e.message);
    printf("refused, %s: %s\n", what, e.message);
}

START_TEST(refusals)
{
    hrt_state s = eval1(1.0, Z_SUN, 5e9);
    expect_refusal(&s, NAN, HRT_E_DOMAIN, "NaN mass");
    expect_refusal(&s, -1.0, HRT_E_DOMAIN, "negative mass");
    ck_assert_int_eq(hrt_remap(NULL, &s, 1.0, &s, NULL), HRT_E_NULL);
    ck_assert_int_eq(hrt_remap(G, NULL, 1.0, &s, NULL), HRT_E_NULL);
    ck_assert_int_eq(hrt_remap(G, &s, 1.0, NULL, NULL), HRT_E_NULL);
    hrt_state bad = s;
    bad.status = HRT_E_AGE_RANGE;
    expect_refusal(&bad, 1.1, HRT_E_INVALID, "failed state");
    /* a white dwarf */
    hrt_state wd = eval1(1.0, Z_SUN, 2e10);
    ck_assert(wd.flags & HRT_FLAG_REMNANT);
    expect_refusal(&wd, 0.7, HRT_E_NO_EQUIVALENT, "white dwarf");
    /* before the first EEP */
    hrt_state young = eval1(1.0, Z_SUN, 10.0);
    expect_refusal(&young, 1.1, HRT_E_NO_EQUIVALENT, "not modelled");
    /* a red giant stripped to below its helium core */
    hrt_star *st = new_star(G, 1.0, Z_SUN);
    hrt_phase_span sp[32];
    size_t n = 0;
    hrt_star_phases(st, sp, 32, &n);
    hrt_star_free(st);
    double t_rgb = NAN;
    for (size_t k = 0; k < n; k++)
        if (sp[k].phase == HRT_PHASE_RGB)
            t_rgb = 0.5 * (sp[k].phase_start_yr + sp[k].phase_end_yr);
    hrt_state rg = eval1(1.0, Z_SUN, t_rgb);
    ck_assert_int_eq(rg.phase, HRT_PHASE_RGB);
    expect_refusal(&rg, 0.9 * rg.he_core_mass_msun, HRT_E_NO_EQUIVALENT, "stripped core");
    /* a main-sequence star pushed beyond the heaviest track */
    double lo, hi;
    hrt_grid_mass_range(G, Z_SUN, &lo, &hi);
    hrt_state big = eval1(0.9 * hi, Z_SUN, 1e5);
    ck_assert_int_eq(big.phase, HRT_PHASE_MS);
    expect_refusal(&big, 1.5 * hi, HRT_E_MASS_RANGE, "beyond the grid");
    hrt_state small = eval1(0.15, Z_SUN, 1e10);
    ck_assert_int_eq(small.phase, HRT_PHASE_MS);
    expect_refusal(&small, 0.5 * lo, HRT_E_MASS_RANGE, "below the grid");
    /* stepping: a remnant may not change mass, a mass may not vanish */
    double dtn;
    hrt_state nx;
    ck_assert_int_eq(hrt_step(G, &wd, 1e6, -1e-8, &nx, &dtn, NULL), HRT_E_NO_EQUIVALENT);
    ck_assert_int_eq(nx.status, HRT_E_NO_EQUIVALENT);
    ck_assert_int_eq(hrt_step(G, &wd, 1e6, 0.0, &nx, &dtn, NULL), HRT_OK);
    ck_assert_int_eq(hrt_step(G, &s, 1e6, -1e-5, &nx, &dtn, NULL), HRT_E_DOMAIN);
    ck_assert_int_eq(hrt_step(G, &s, -1.0, 0.0, &nx, &dtn, NULL), HRT_E_DOMAIN);
    ck_assert_int_eq(hrt_step(G, &s, 1.0, NAN, &nx, &dtn, NULL), HRT_E_DOMAIN);
    ck_assert_int_eq(hrt_step(G, &bad, 1.0, 0.0, &nx, &dtn, NULL), HRT_E_INVALID);
    ck_assert_int_eq(hrt_step(G, NULL, 1.0, 0.0, &nx, &dtn, NULL), HRT_E_NULL);
}
END_TEST

/* Stepping with a mass change: the mass is the track's plus the change. */
START_TEST(step_with_change)
{
    uint64_t seed = 0x5eed0005;
    long ok = 0, refused = 0;
    for (int i = 0; i < 300; i++) {
        hrt_state s = random_star(&seed, 0.3, 60.0, 0.7);
        double mdot = (rnd(&seed) - 0.5) * 1e-9 * s.mass_msun / (s.phase_end_yr - s.phase_start_yr) * 1e9;
        hrt_state nx;
        double dtn;
        hrt_error e;
        double dt = 0.01 * (s.phase_end_yr - s.phase_start_yr);
        hrt_state track = eval1(s.initial_mass_msun, s.z, s.age_yr + dt);
        int rc = hrt_step(G, &s, dt, mdot, &nx, &dtn, &e);
        if (rc != HRT_OK) {
            ck_assert_msg(rc == HRT_E_NO_EQUIVALENT || rc == HRT_E_MASS_RANGE, "%d: %s", rc, e.message);
            refused++;
            continue;
        }
        ok++;
        double want = track.mass_msun + mdot * dt;
        ck_assert_msg(fabs(nx.mass_msun - want) <= MASS_TOL * want, "mass %.15g, wanted %.15g", nx.mass_msun, want);
        ck_assert_msg(dtn > 0.0 && dtn <= HRT_STEP_MASS_FRACTION * nx.mass_msun / fabs(mdot) * (1 + 1e-12),
                      "proposed step %g", dtn);
    }
    printf("steps with a mass change: %ld done, %ld refused\n", ok, refused);
    ck_assert_int_gt(ok, 240);
}
END_TEST

/* ------------------------------------------------------------------------ */
#define N_THREAD_CASES 200
typedef struct job {
    hrt_state in[N_THREAD_CASES], out[N_THREAD_CASES];
    double factor[N_THREAD_CASES];
    int rc[N_THREAD_CASES];
} job;

static void run_job(job *j)
{
    for (int i = 0; i < N_THREAD_CASES; i++) {
        double dtn;
        if (i % 2)
            j->rc[i] = hrt_remap(G, &j->in[i], j->in[i].mass_msun * j->factor[i], &j->out[i], NULL);
        else
            j->rc[i] = hrt_step(G, &j->in[i], 1e-3 * j->in[i].age_yr,
                                (j->factor[i] - 1.0) * j->in[i].mass_msun / j->in[i].age_yr, &j->out[i], &dtn, NULL);
    }
}

static void *thread_main(void *p)
{
    run_job(p);
    return NULL;
}

START_TEST(threads_agree)
{
    uint64_t seed = 0x5eed0006;
    static job ref, par[4];
    for (int i = 0; i < N_THREAD_CASES; i++) {
        ref.in[i] = random_star(&seed, 0.3, 80.0, 0.5);
        ref.factor[i] = exp((rnd(&seed) - 0.5) * 0.2);
    }
    run_job(&ref);
    pthread_t th[4];
    for (int t = 0; t < 4; t++) {
        memcpy(par[t].in, ref.in, sizeof ref.in);
        memcpy(par[t].factor, ref.factor, sizeof ref.factor);
        ck_assert_int_eq(pthread_create(&th[t], NULL, thread_main, &par[t]), 0);
    }
    for (int t = 0; t < 4; t++) {
        pthread_join(th[t], NULL);
        for (int i = 0; i < N_THREAD_CASES; i++) {
            ck_assert_int_eq(par[t].rc[i], ref.rc[i]);
            ck_assert_msg(!memcmp(&par[t].out[i], &ref.out[i], sizeof ref.out[i]), "thread %d case %d differs", t, i);
        }
    }
}
END_TEST

int main(void)
{
    Suite *s = suite_create("remap");
    TCase *tc = tcase_create("remap");
    tcase_add_checked_fixture(tc, setup, teardown);
    tcase_set_timeout(tc, 300);
    tcase_add_test(tc, same_mass_is_own_point);
    tcase_add_test(tc, step_without_change_follows_track);
    tcase_add_test(tc, proposed_steps_reach_the_end);
    tcase_add_test(tc, random_changes);
    tcase_add_test(tc, tiny_change_is_continuous);
    tcase_add_test(tc, rejuvenation);
    tcase_add_test(tc, hydrogen_burnt_is_conserved);
    tcase_add_test(tc, refusals);
    tcase_add_test(tc, step_with_change);
    tcase_add_test(tc, threads_agree);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int nf = srunner_ntests_failed(sr);
    srunner_free(sr);
    return nf == 0 ? 0 : 1;
}
