/*
 * Populations: IMF sampling against the published IMFs, star-formation
 * histories and metallicity draws, reproducible streams, exact merging,
 * thread-count invariance, single-burst physics on the default grid, and
 * memory that does not grow with the number of stars.
 *
 * The grid is the default one (meson test sets HRTRAIL_GRID).  Each check
 * against an outside source names it; "from memory" marks a published value
 * recalled, not re-read; "common practice" a fact of the trade.  Statistical
 * checks use fixed seeds and bounds of 4-5 standard errors, so they fail only
 * when the sampler or the physics is wrong (or once in ~10^4-10^6 seeds).
 */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_integration.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_sort.h>

#include "hrtrail.h"

static hrt_grid *open_grid(void)
{
    hrt_grid *g = NULL;
    hrt_error err = {0};
    int rc = hrt_grid_open(NULL, &g, &err);
    ck_assert_msg(rc == HRT_OK, "hrt_grid_open(NULL): %s (%s)", err.message, hrt_default_grid_path());
    return g;
}

static hrt_pop_spec make_spec(int imf, double lo, double hi, uint64_t n, uint64_t seed)
{
    hrt_pop_spec s;
    hrt_error err = {0};
    hrt_pop_spec_default(&s);
    ck_assert_msg(hrt_imf_init(&s.imf, imf, lo, hi, 2.0, &err) == HRT_OK, "%s", err.message);
    s.n_stars = n;
    s.seed = seed;
    return s;
}

/* All stars of a spec via hrt_pop_draw (any of the arrays may be NULL). */
static void draw_all(const hrt_pop_spec *s, double *m, double *z, double *t)
{
    uint64_t nc = hrt_pop_n_chunks(s);
    size_t off = 0;
    for (uint64_t c = 0; c < nc; c++) {
        size_t n = 0;
        hrt_error err = {0};
        int rc = hrt_pop_draw(s, c, m ? m + off : NULL, z ? z + off : NULL, t ? t + off : NULL, (size_t)s->chunk_size,
                              &n, &err);
        ck_assert_msg(rc == HRT_OK, "draw chunk %llu: %s", (unsigned long long)c, err.message);
        off += n;
    }
    ck_assert_uint_eq(off, s->n_stars);
}

/* ------------------------------------------------ IMFs written independently */

/* Unnormalised dN/dm of the IMFs as the papers give them, written here
 * without the library's segment machinery. */
typedef struct imf_ref {
    int kind;
} imf_ref;

static double ref_dndm(double m, void *p)
{
    int kind = ((imf_ref *)p)->kind;
    switch (kind) {
    case HRT_IMF_SALPETER_1955: /* Salpeter (1955, ApJ 121, 161): xi(m) ~ m^-2.35 */
        return pow(m, -2.35);
    case HRT_IMF_KROUPA_2001: /* Kroupa (2001, MNRAS 322, 231) eq. 2, continuous at 0.08 and 0.5 */
        if (m < 0.08) return pow(m / 0.08, -0.3);
        if (m < 0.5) return pow(m / 0.08, -1.3);
        return pow(0.5 / 0.08, -1.3) * pow(m / 0.5, -2.3);
    default: { /* Chabrier (2003, PASP 115, 763) Table 1 system IMF (parameters from memory) */
        double x = log10(m) - log10(0.22);
        double below = 0.086 * exp(-x * x / (2 * 0.57 * 0.57)); /* dN/dlog m */
        if (m <= 1.0) return below / (m * log(10.0));
        double x1 = -log10(0.22), a = 0.086 * exp(-x1 * x1 / (2 * 0.57 * 0.57));
        return a * pow(m, -1.3) / (m * log(10.0));
    }
    }
}

static double ref_m_dndm(double m, void *p) { return m * ref_dndm(m, p); }

static double integrate(double (*f)(double, void *), imf_ref *r, double a, double b)
{
    gsl_integration_workspace *w = gsl_integration_workspace_alloc(2000);
    gsl_function F = {f, r};
    double v = 0, e = 0;
    /* break points of the IMFs as extra points of the quadrature */
    double pts[6];
    size_t np = 0;
    pts[np++] = a;
    const double br[] = {0.08, 0.5, 1.0};
    for (int k = 0; k < 3; k++)
        if (br[k] > a && br[k] < b) pts[np++] = br[k];
    pts[np++] = b;
    ck_assert_int_eq(gsl_integration_qagp(&F, pts, np, 0, 1e-12, 2000, w, &v, &e), 0);
    gsl_integration_workspace_free(w);
    return v;
}

/* hrt_imf_pdf/cdf/mean against the papers' formulas integrated by GSL (QAGP). */
START_TEST(test_imf_against_formulas)
{
    const int kinds[] = {HRT_IMF_SALPETER_1955, HRT_IMF_KROUPA_2001, HRT_IMF_CHABRIER_2003_SYSTEM};
    const double lims[][2] = {{0.1, 100}, {0.01, 150}, {0.03, 120}};
    for (int i = 0; i < 3; i++) {
        hrt_imf f;
        imf_ref r = {kinds[i]};
        double a = lims[i][0], b = lims[i][1];
        ck_assert_int_eq(hrt_imf_init(&f, kinds[i], a, b, 0, NULL), HRT_OK);
        double tot = integrate(ref_dndm, &r, a, b);
        const double ms[] = {0.02, 0.05, 0.08, 0.2, 0.5, 0.9, 1.0, 1.5, 8, 40, 99};
        for (size_t k = 0; k < sizeof ms / sizeof ms[0]; k++) {
            double m = ms[k];
            if (m <= a || m >= b) continue;
            double c = integrate(ref_dndm, &r, a, m) / tot;
            ck_assert_msg(fabs(hrt_imf_cdf(&f, m) - c) < 1e-9, "%s cdf(%g) = %.12g, GSL integral %.12g",
                          hrt_imf_name(kinds[i]), m, hrt_imf_cdf(&f, m), c);
            double p = ref_dndm(m, &r) / tot;
            ck_assert_msg(fabs(hrt_imf_pdf(&f, m) / p - 1) < 1e-9, "%s pdf(%g)", hrt_imf_name(kinds[i]), m);
            double q = hrt_imf_quantile(&f, c);
            ck_assert_msg(fabs(q / m - 1) < 1e-8, "%s quantile(cdf(%g)) = %.12g", hrt_imf_name(kinds[i]), m, q);
        }
        double mean = integrate(ref_m_dndm, &r, a, b) / tot;
        ck_assert_msg(fabs(hrt_imf_mean_mass(&f) / mean - 1) < 1e-9, "%s mean mass %.12g, GSL %.12g",
                      hrt_imf_name(kinds[i]), hrt_imf_mean_mass(&f), mean);
        printf("%-13s %g-%g Msun: mean mass %.5f Msun (GSL integral %.5f)\n", hrt_imf_name(kinds[i]), a, b,
               hrt_imf_mean_mass(&f), mean);
        ck_assert(hrt_imf_pdf(&f, a * 0.99) == 0.0 && hrt_imf_cdf(&f, b * 1.01) == 1.0);
    }
}
END_TEST

/* Maximum-likelihood slope of dN/dm ~ m^-alpha truncated to [a, b], and its
 * standard error from the Fisher information (moments of y = ln(m/a) under
 * density ~ exp(beta y) on [0, L], beta = 1 - alpha, in closed form). */
static void ey_var(double beta, double L, double *e, double *v)
{
    if (fabs(beta * L) < 1e-6) {
        *e = L / 2;
        *v = L * L / 12;
        return;
    }
    double q = exp(-beta * L);
    *e = L / (1 - q) - 1 / beta;
    *v = 1 / (beta * beta) - L * L * q / ((1 - q) * (1 - q));
}

static void fit_slope(const double *m, size_t n, double a, double b, double *alpha, double *sigma, size_t *used)
{
    double s = 0;
    size_t k = 0;
    for (size_t i = 0; i < n; i++)
        if (m[i] >= a && m[i] < b) {
            s += log(m[i] / a);
            k++;
        }
    double ybar = s / (double)k, L = log(b / a), lo = -20, hi = 20, e, v;
    for (int it = 0; it < 200; it++) {
        double mid = 0.5 * (lo + hi);
        ey_var(mid, L, &e, &v);
        if (e < ybar) lo = mid; else hi = mid;
    }
    double beta = 0.5 * (lo + hi);
    ey_var(beta, L, &e, &v);
    *alpha = 1 - beta;
    *sigma = 1 / sqrt((double)k * v);
    *used = k;
}

static void check_slope(const char *what, const double *m, size_t n, double a, double b, double truth)
{
    double al, sg;
    size_t k;
    fit_slope(m, n, a, b, &al, &sg, &k);
    printf("%s: slope over %g-%g Msun from %zu stars: %.4f +- %.4f (published %.2f, %.1f sigma)\n", what, a, b, k, al, sg,
           truth, (al - truth) / sg);
    ck_assert_msg(fabs(al - truth) < 4 * sg, "%s slope %g +- %g, published %g", what, al, sg, truth);
}

/* Fraction of the sample in [a, b) against the GSL integral of the formula (binomial, 4 sigma). */
static void check_fraction(const char *what, const double *m, size_t n, double a, double b, imf_ref *r, double lo,
                           double hi)
{
    size_t k = 0;
    for (size_t i = 0; i < n; i++) k += m[i] >= a && m[i] < b;
    double p = integrate(ref_dndm, r, a, b) / integrate(ref_dndm, r, lo, hi), f = (double)k / (double)n;
    double se = sqrt(p * (1 - p) / (double)n);
    printf("%s: fraction in %g-%g Msun %.5f, expected %.5f +- %.5f\n", what, a, b, f, p, se);
    ck_assert_msg(fabs(f - p) < 4 * se, "%s fraction %g, expected %g", what, f, p);
}

#define N_IMF 2000000

START_TEST(test_imf_slopes_recovered)
{
    double *m = malloc(N_IMF * sizeof *m);
    /* Salpeter (1955, ApJ 121, 161): alpha = 2.35 */
    hrt_pop_spec s = make_spec(HRT_IMF_SALPETER_1955, 0.1, 100, N_IMF, 11);
    draw_all(&s, m, NULL, NULL);
    check_slope("Salpeter 1955", m, N_IMF, 0.1, 100, 2.35);
    /* Kroupa (2001, MNRAS 322, 231) eq. 2: 0.3 / 1.3 / 2.3, breaks 0.08 and 0.5 Msun */
    s = make_spec(HRT_IMF_KROUPA_2001, 0.01, 100, N_IMF, 12);
    draw_all(&s, m, NULL, NULL);
    check_slope("Kroupa 2001", m, N_IMF, 0.01, 0.08, 0.3);
    check_slope("Kroupa 2001", m, N_IMF, 0.08, 0.5, 1.3);
    check_slope("Kroupa 2001", m, N_IMF, 0.5, 100, 2.3);
    imf_ref rk = {HRT_IMF_KROUPA_2001};
    check_fraction("Kroupa 2001", m, N_IMF, 0.01, 0.08, &rk, 0.01, 100);
    check_fraction("Kroupa 2001", m, N_IMF, 0.5, 100, &rk, 0.01, 100);
    /* Chabrier (2003, PASP 115, 763) system IMF: dN/dlog m ~ m^-1.3 above 1 Msun (dN/dm slope 2.3);
     * below, log m normal with mean log 0.22, sigma 0.57 dex, truncated to [log m_lo, 0] */
    s = make_spec(HRT_IMF_CHABRIER_2003_SYSTEM, 0.01, 100, N_IMF, 13);
    draw_all(&s, m, NULL, NULL);
    check_slope("Chabrier 2003", m, N_IMF, 1.0, 100, 2.3);
    imf_ref rc = {HRT_IMF_CHABRIER_2003_SYSTEM};
    check_fraction("Chabrier 2003", m, N_IMF, 1.0, 100, &rc, 0.01, 100);
    double sx = 0, sxx = 0;
    size_t k = 0;
    for (size_t i = 0; i < N_IMF; i++)
        if (m[i] < 1.0) {
            double x = log10(m[i]);
            sx += x;
            sxx += x * x;
            k++;
        }
    double mean = sx / (double)k, var = sxx / (double)k - mean * mean;
    /* moments of the truncated normal (GSL's Gaussian pdf and cdf) */
    double mu = log10(0.22), sg = 0.57, za = (log10(0.01) - mu) / sg, zb = (0 - mu) / sg;
    double Z = gsl_cdf_ugaussian_P(zb) - gsl_cdf_ugaussian_P(za), pa = gsl_ran_ugaussian_pdf(za), pb = gsl_ran_ugaussian_pdf(zb);
    double tmean = mu + sg * (pa - pb) / Z;
    double tvar = sg * sg * (1 + (za * pa - zb * pb) / Z - ((pa - pb) / Z) * ((pa - pb) / Z));
    double se_m = sqrt(tvar / (double)k), se_v = tvar * sqrt(2.0 / (double)k);
    printf("Chabrier 2003 below 1 Msun (%zu stars): mean log m %.5f (expected %.5f +- %.5f), variance %.5f (expected %.5f +- %.5f)\n",
           k, mean, tmean, se_m, var, tvar, se_v);
    ck_assert(fabs(mean - tmean) < 4 * se_m);
    ck_assert(fabs(var - tvar) < 5 * se_v);
    free(m);
}
END_TEST

/* Kolmogorov-Smirnov distance of a sample from hrt_imf_cdf (which
 * test_imf_against_formulas ties to the papers): D < 1.95 / sqrt(n) is the
 * 0.1% critical value (common practice). */
START_TEST(test_imf_ks)
{
    const int kinds[] = {HRT_IMF_SALPETER_1955, HRT_IMF_KROUPA_2001, HRT_IMF_CHABRIER_2003_SYSTEM, HRT_IMF_POWER_LAW};
    size_t n = 200000;
    double *m = malloc(n * sizeof *m);
    for (int i = 0; i < 4; i++) {
        hrt_pop_spec s = make_spec(kinds[i], 0.08, 120, n, 100 + (uint64_t)i);
        s.chunk_size = 7777;
        draw_all(&s, m, NULL, NULL);
        gsl_sort(m, 1, n);
        double d = 0;
        for (size_t k = 0; k < n; k++) {
            double c = hrt_imf_cdf(&s.imf, m[k]);
            d = fmax(d, fmax(fabs(c - (double)k / n), fabs(c - (double)(k + 1) / n)));
        }
        printf("%s: KS distance %.5f (0.1%% critical %.5f)\n", hrt_imf_name(kinds[i]), d, 1.95 / sqrt((double)n));
        ck_assert(d < 1.95 / sqrt((double)n));
    }
    free(m);
}
END_TEST

/* ------------------------------------------------ SFHs and metallicities */

static void check_born_fraction(const char *what, const double *t, size_t n, double T, double p)
{
    size_t k = 0;
    for (size_t i = 0; i < n; i++) k += t[i] <= T;
    double f = (double)k / (double)n, se = sqrt(p * (1 - p) / (double)n) + 1e-12;
    printf("%s: born by %g yr %.5f, expected %.5f +- %.5f\n", what, T, f, p, se);
    ck_assert_msg(fabs(f - p) < 4.5 * se, "%s: %g vs %g", what, f, p);
}

START_TEST(test_sfh_and_z_draws)
{
    size_t n = 400000;
    double *t = malloc(n * sizeof *t), *z = malloc(n * sizeof *z);
    hrt_pop_spec s = make_spec(HRT_IMF_KROUPA_2001, 0.08, 100, n, 5);
    s.sfh.kind = HRT_SFH_CONSTANT;
    s.sfh.t_start_yr = 1e9;
    s.sfh.t_end_yr = 11e9;
    draw_all(&s, NULL, NULL, t);
    check_born_fraction("constant", t, n, 3.5e9, 0.25);
    /* exponential: born by T is (1 - e^-(T-t0)/tau) / (1 - e^-(t1-t0)/tau) */
    s.sfh.kind = HRT_SFH_EXPONENTIAL;
    s.sfh.t_start_yr = 0;
    s.sfh.t_end_yr = 12e9;
    s.sfh.tau_yr = 3e9;
    draw_all(&s, NULL, NULL, t);
    check_born_fraction("exponential", t, n, 2e9, -expm1(-2.0 / 3) / -expm1(-4.0));
    check_born_fraction("exponential", t, n, 9e9, -expm1(-3.0) / -expm1(-4.0));
    for (size_t i = 0; i < n; i++) ck_assert(t[i] >= 0 && t[i] <= 12e9);
    /* table: a triangle 0 -> 1 -> 0 over 0..2 Gyr: a quarter of the area by 0.707 Gyr */
    const double tt[] = {0, 1e9, 2e9}, rr[] = {0, 1, 0};
    s.sfh.kind = HRT_SFH_TABLE;
    s.sfh.n_table = 3;
    s.sfh.table_t_yr = tt;
    s.sfh.table_rate = rr;
    draw_all(&s, NULL, NULL, t);
    check_born_fraction("table", t, n, 1e9 * sqrt(0.5), 0.25);
    check_born_fraction("table", t, n, 1e9, 0.5);
    check_born_fraction("table", t, n, 1.5e9, 0.875);
    /* metallicity: log-uniform and truncated log-normal */
    s.sfh.kind = HRT_SFH_BURST;
    s.zdist.kind = HRT_ZDIST_LOG_UNIFORM;
    s.zdist.z_lo = 0.001;
    s.zdist.z_hi = 0.03;
    draw_all(&s, NULL, z, NULL);
    double sx = 0;
    for (size_t i = 0; i < n; i++) {
        ck_assert(z[i] >= 0.001 && z[i] <= 0.03);
        sx += log10(z[i]);
    }
    double mid = 0.5 * (log10(0.001) + log10(0.03)), se = (log10(0.03) - log10(0.001)) / sqrt(12.0 * n);
    ck_assert_msg(fabs(sx / n - mid) < 4 * se, "log-uniform Z: mean log Z %g, expected %g", sx / n, mid);
    s.zdist.kind = HRT_ZDIST_LOG_NORMAL;
    s.zdist.z = 0.01;
    s.zdist.sigma_dex = 0.3;
    draw_all(&s, NULL, z, NULL);
    sx = 0;
    for (size_t i = 0; i < n; i++) sx += log10(z[i]);
    double mu = -2, sg = 0.3, za = (log10(0.001) - mu) / sg, zb = (log10(0.03) - mu) / sg;
    double Z = gsl_cdf_ugaussian_P(zb) - gsl_cdf_ugaussian_P(za);
    double tmean = mu + sg * (gsl_ran_ugaussian_pdf(za) - gsl_ran_ugaussian_pdf(zb)) / Z;
    printf("log-normal Z: mean log Z %.5f, truncated-normal mean %.5f\n", sx / n, tmean);
    ck_assert(fabs(sx / n - tmean) < 4 * sg / sqrt((double)n));
    free(t);
    free(z);
}
END_TEST

START_TEST(test_streams_reproducible)
{
    size_t n = 50000;
    double *a = malloc(n * sizeof *a), *b = malloc(n * sizeof *b);
    hrt_pop_spec s = make_spec(HRT_IMF_KROUPA_2001, 0.08, 100, n, 42);
    s.chunk_size = 1000;
    draw_all(&s, a, NULL, NULL);
    draw_all(&s, b, NULL, NULL);
    ck_assert(memcmp(a, b, n * sizeof *a) == 0);
    /* another seed: other stars */
    s.seed = 43;
    draw_all(&s, b, NULL, NULL);
    size_t same = 0;
    for (size_t i = 0; i < n; i++) same += a[i] == b[i];
    ck_assert_uint_lt(same, 10);
    /* chunks are distinct streams */
    same = 0;
    for (size_t i = 0; i < 1000; i++) same += a[i] == a[1000 + i];
    ck_assert_uint_lt(same, 5);
    /* a chunk alone is the same as that chunk within the whole */
    s.seed = 42;
    size_t k = 0;
    ck_assert_int_eq(hrt_pop_draw(&s, 17, b, NULL, NULL, 1000, &k, NULL), HRT_OK);
    ck_assert_uint_eq(k, 1000);
    ck_assert(memcmp(a + 17000, b, 1000 * sizeof *a) == 0);
    /* buffer too small, chunk out of range */
    ck_assert_int_eq(hrt_pop_draw(&s, 0, b, NULL, NULL, 999, &k, NULL), HRT_E_BUFFER);
    ck_assert_int_eq(hrt_pop_draw(&s, 50, b, NULL, NULL, 1000, &k, NULL), HRT_E_INVALID);
    free(a);
    free(b);
}
END_TEST

/* --------------------------------------------------------- summaries */

static const hrt_pop_hr HR = {3.3, 4.9, -5.0, 6.5, 48, 40};

static void init_sums(hrt_pop_summary *s, const double *ages, size_t n)
{
    for (size_t i = 0; i < n; i++) ck_assert_int_eq(hrt_pop_summary_init(&s[i], ages[i], &HR, NULL), HRT_OK);
}

static hrt_pop_spec composite_spec(uint64_t n)
{
    hrt_pop_spec s = make_spec(HRT_IMF_KROUPA_2001, 0.08, 100, n, 2026);
    s.chunk_size = 20000;
    s.sfh.kind = HRT_SFH_CONSTANT;
    s.sfh.t_start_yr = 0;
    s.sfh.t_end_yr = 10e9;
    s.zdist.kind = HRT_ZDIST_LOG_NORMAL;
    s.zdist.z = 0.008;
    s.zdist.z_lo = 0.0002;
    s.zdist.z_hi = 0.03;
    s.zdist.sigma_dex = 0.4;
    return s;
}

/* Every thread count, and every split of the chunks merged in any order,
 * gives the same summary bytes. */
START_TEST(test_thread_and_split_invariance)
{
    hrt_grid *g = open_grid();
    const double ages[] = {1e8, 3e9, 1e10};
    hrt_pop_spec s = composite_spec(300000);
    hrt_pop_summary *ref = malloc(3 * sizeof *ref), *x = malloc(3 * sizeof *x), *p = malloc(9 * sizeof *p);
    hrt_error err = {0};
    init_sums(ref, ages, 3);
    ck_assert_int_eq(hrt_pop_run(g, &s, 0, UINT64_MAX, 1, 3, ref, &err), HRT_OK);
    ck_assert_uint_eq(ref[1].n_drawn, 300000);
    printf("threads available: %d\n", hrt_pop_max_threads());
    for (int nt = 2; nt <= 5; nt++) {
        init_sums(x, ages, 3);
        ck_assert_int_eq(hrt_pop_run(g, &s, 0, UINT64_MAX, nt, 3, x, &err), HRT_OK);
        ck_assert_msg(memcmp(ref, x, 3 * sizeof *x) == 0, "%d threads differ from 1", nt);
    }
    /* splits [0,4) [4,9) [9,15), merged in two orders */
    const uint64_t cut[] = {0, 4, 9, 15};
    for (int k = 0; k < 3; k++) {
        init_sums(p + 3 * k, ages, 3);
        ck_assert_int_eq(hrt_pop_run(g, &s, cut[k], cut[k + 1] - cut[k], 2, 3, p + 3 * k, &err), HRT_OK);
    }
    const int orders[2][3] = {{0, 1, 2}, {2, 0, 1}};
    for (int o = 0; o < 2; o++) {
        init_sums(x, ages, 3);
        for (int k = 0; k < 3; k++)
            for (int e = 0; e < 3; e++)
                ck_assert_int_eq(hrt_pop_summary_merge(&x[e], &p[3 * orders[o][k] + e], NULL), HRT_OK);
        ck_assert_msg(memcmp(ref, x, 3 * sizeof *x) == 0, "split merged in order %d differs", o);
    }
    /* merging refuses other epochs and binnings, leaving dst alone */
    memcpy(x, ref, sizeof *x);
    ck_assert_int_eq(hrt_pop_summary_merge(&x[0], &ref[1], &err), HRT_E_INVALID);
    ck_assert(memcmp(x, ref, sizeof *x) == 0);
    hrt_pop_summary_init(&x[2], 1e8, NULL, NULL);
    ck_assert_int_eq(hrt_pop_summary_merge(&x[2], &ref[0], &err), HRT_E_INVALID);
    free(ref);
    free(x);
    free(p);
    hrt_grid_close(g);
}
END_TEST

/* The summary of hrt_pop_run against a recount of the same stars by hand
 * (hrt_pop_draw + hrt_eval), and its internal totals. */
START_TEST(test_summary_recount)
{
    hrt_grid *g = open_grid();
    hrt_pop_spec s = composite_spec(60000);
    s.imf.m_lo_msun = 0; /* re-initialise below with brown dwarfs outside the grid */
    ck_assert_int_eq(hrt_imf_init(&s.imf, HRT_IMF_KROUPA_2001, 0.02, 120, 0, NULL), HRT_OK);
    const double T = 6e9;
    hrt_pop_summary sum;
    init_sums(&sum, &T, 1);
    ck_assert_int_eq(hrt_pop_run(g, &s, 0, UINT64_MAX, 0, 1, &sum, NULL), HRT_OK);
    size_t n = (size_t)s.n_stars;
    double *m = malloc(n * sizeof *m), *z = malloc(n * sizeof *z), *t = malloc(n * sizeof *t), *a = malloc(n * sizeof *a);
    hrt_state *st = malloc(n * sizeof *st);
    draw_all(&s, m, z, t);
    size_t nb = 0;
    for (size_t i = 0; i < n; i++)
        if (t[i] <= T) {
            m[nb] = m[i];
            z[nb] = z[i];
            a[nb] = T - t[i];
            nb++;
        }
    hrt_eval(g, nb, m, z, 0, a, st, NULL);
    uint64_t nph[HRT_PHASE_SLOTS] = {0}, nfail = 0, nrange = 0, nlum = 0, nwd = 0;
    long double L = 0, M0 = 0;
    for (size_t i = 0; i < nb; i++) {
        if (st[i].status != HRT_OK) {
            nfail++;
            nrange += st[i].status == HRT_E_MASS_RANGE;
            continue;
        }
        nph[st[i].phase]++;
        nwd += st[i].remnant >= HRT_REMNANT_HE_WD && st[i].remnant <= HRT_REMNANT_ONE_WD && (st[i].flags & HRT_FLAG_REMNANT);
        if (isfinite(st[i].log_l_lsun) && isfinite(st[i].log_teff_k)) nlum++;
        if (isfinite(st[i].log_l_lsun)) L += powl(10.0L, st[i].log_l_lsun);
        M0 += st[i].initial_mass_msun;
    }
    ck_assert_uint_eq(sum.n_drawn, n);
    ck_assert_uint_eq(sum.n_unborn, n - nb);
    ck_assert_uint_eq(sum.n_evaluated, nb - nfail);
    ck_assert_uint_eq(sum.n_status[HRT_E_MASS_RANGE], nrange);
    ck_assert_uint_gt(nrange, 0); /* the brown dwarfs below the grid's 0.08 Msun */
    for (int p = 0; p < HRT_PHASE_SLOTS; p++) ck_assert_uint_eq(sum.n_phase[p], nph[p]);
    ck_assert_uint_eq(sum.n_remnant[HRT_REMNANT_HE_WD] + sum.n_remnant[HRT_REMNANT_CO_WD] + sum.n_remnant[HRT_REMNANT_ONE_WD], nwd);
    ck_assert_uint_eq(sum.n_phase[HRT_PHASE_WD], nwd);
    double lv = hrt_pop_sum_value(&sum.l_lsun), mv = hrt_pop_sum_value(&sum.initial_mass_msun);
    ck_assert_msg(fabs(lv / (double)L - 1) < 1e-9, "L %.12g vs recount %.12Lg", lv, L);
    ck_assert_msg(fabs(mv / (double)M0 - 1) < 1e-9, "M %.12g vs recount %.12Lg", mv, M0);
    /* totals: phases and remnant kinds partition the evaluated stars, exactly in fixed point */
    uint64_t c1 = 0, c2 = 0, hist = sum.hr_outside;
    hrt_pop_sum lsum = {0, 0};
    for (int p = 0; p < HRT_PHASE_SLOTS; p++) {
        c1 += sum.n_phase[p];
        uint64_t lo = lsum.lo + sum.phase_l_lsun[p].lo;
        lsum.hi += sum.phase_l_lsun[p].hi + (lo < lsum.lo);
        lsum.lo = lo;
    }
    for (int r = 0; r < HRT_REMNANT_SLOTS; r++) c2 += sum.n_remnant[r];
    for (uint64_t k = 0; k < HR.nx * HR.ny; k++) hist += sum.hr_count[k];
    ck_assert_uint_eq(c1, sum.n_evaluated);
    ck_assert_uint_eq(c2, sum.n_evaluated);
    ck_assert_uint_eq(hist, nlum);
    ck_assert(lsum.hi == sum.l_lsun.hi && lsum.lo == sum.l_lsun.lo);
    /* hrt_eval_parallel is hrt_eval, bit for bit, failures and message included */
    hrt_state *st2 = malloc(nb * sizeof *st2);
    hrt_error e1 = {0}, e2 = {0};
    m[nb / 2 + 777] = 300; /* a late failure after the brown dwarfs' */
    int r1 = hrt_eval(g, nb, m, z, 0, a, st, &e1);
    for (int nt = 1; nt <= 4; nt++) {
        memset(st2, 0xab, nb * sizeof *st2);
        int r2 = hrt_eval_parallel(g, nb, m, z, 0, a, st2, nt, &e2);
        ck_assert_int_eq(r1, r2);
        ck_assert_str_eq(e1.message, e2.message);
        ck_assert(memcmp(st, st2, nb * sizeof *st) == 0);
    }
    free(st2);
    free(m);
    free(z);
    free(t);
    free(a);
    free(st);
    hrt_grid_close(g);
}
END_TEST

/* ----------------------------------------------- single-burst physics */

static double keypoint_age(const hrt_grid *g, double m, const char *name)
{
    hrt_star *s = NULL;
    ck_assert_int_eq(hrt_star_new(g, m, 0.014, &s, NULL), HRT_OK);
    double a = NAN;
    for (size_t k = 0; k < hrt_star_n_keypoints(s); k++)
        if (!strcmp(hrt_star_keypoint_name(s, k), name)) hrt_star_keypoint_age(s, k, &a);
    if (!strcmp(name, "end")) a = hrt_star_end_age(s);
    hrt_star_free(s);
    return a;
}

/* Mass whose keypoint age equals age (ages fall with mass), by bisection in log mass. */
static double mass_at_keypoint_age(const hrt_grid *g, const char *name, double age, double lo, double hi)
{
    for (int i = 0; i < 100 && hi / lo - 1 > 1e-12; i++) {
        double mid = sqrt(lo * hi);
        if (keypoint_age(g, mid, name) > age) lo = mid; else hi = mid;
    }
    return sqrt(lo * hi);
}

static int remnant_of(const hrt_grid *g, double m)
{
    hrt_star *s = NULL;
    int kind = -1;
    double rm;
    ck_assert_int_eq(hrt_star_new(g, m, 0.014, &s, NULL), HRT_OK);
    hrt_star_remnant(s, &kind, &rm);
    hrt_star_free(s);
    return kind;
}

#define N_BURST 1000000

START_TEST(test_single_burst_ages)
{
    hrt_grid *g = open_grid();
    const double ages[] = {0.5e9, 1e9, 2e9, 4e9, 8e9, 12e9};
    enum { NA = 6 };
    hrt_pop_spec s = make_spec(HRT_IMF_KROUPA_2001, 0.08, 100, N_BURST, 7);
    hrt_pop_summary *sum = malloc(NA * sizeof *sum);
    init_sums(sum, ages, NA);
    ck_assert_int_eq(hrt_pop_run(g, &s, 0, UINT64_MAX, 0, NA, sum, NULL), HRT_OK);
    /* heaviest white-dwarf progenitor of the grid at Z = 0.014 */
    double lo = 3, hi = 20;
    ck_assert(remnant_of(g, lo) == HRT_REMNANT_CO_WD && remnant_of(g, hi) >= HRT_REMNANT_NS);
    for (int i = 0; i < 80; i++) {
        double mid = 0.5 * (lo + hi);
        int k = remnant_of(g, mid);
        if (k >= HRT_REMNANT_HE_WD && k <= HRT_REMNANT_ONE_WD) lo = mid; else hi = mid;
    }
    double m_wd_max = lo;
    double lx[NA], ly[NA];
    for (int i = 0; i < NA; i++) {
        const hrt_pop_summary *x = &sum[i];
        double to = hrt_pop_turnoff_mass(x);
        uint64_t nwd = x->n_phase[HRT_PHASE_WD];
        /* the grid's own lifetimes: the main sequence ends at the 'tams' keypoint,
         * white-dwarf cooling starts at the end of the track */
        double m_tams = mass_at_keypoint_age(g, "tams", ages[i], 0.3, 60);
        double m_end = mass_at_keypoint_age(g, "end", ages[i], 0.3, 60);
        double p = hrt_imf_cdf(&s.imf, m_wd_max) - hrt_imf_cdf(&s.imf, m_end);
        double expect = p * N_BURST, se = sqrt(N_BURST * p * (1 - p));
        /* t_MS ~ 10 Gyr (M / Msun)^-2.5 (common practice, from memory; good to some 20-30%) */
        double m_scaling = pow(ages[i] / 1e10, -1 / 2.5);
        printf("burst %5.1f Gyr: turnoff %.4f Msun (MS up to %.5f, evolved from %.5f; tams mass %.5f; "
               "scaling law %.3f), WD %llu (expected %.0f +- %.0f), L %.5g Lsun, M/L %.3f\n",
               ages[i] / 1e9, to, x->ms_max_initial_mass_msun, x->evolved_min_initial_mass_msun, m_tams, m_scaling,
               (unsigned long long)nwd, expect, se, hrt_pop_sum_value(&x->l_lsun),
               hrt_pop_sum_value(&x->mass_msun) / hrt_pop_sum_value(&x->l_lsun));
        ck_assert_msg(x->ms_max_initial_mass_msun <= m_tams * (1 + 1e-9) &&
                          x->evolved_min_initial_mass_msun >= m_tams * (1 - 1e-9),
                      "turnoff bracket [%.7g, %.7g] excludes the tams mass %.7g", x->ms_max_initial_mass_msun,
                      x->evolved_min_initial_mass_msun, m_tams);
        ck_assert_msg(fabs(to / m_scaling - 1) < 0.25, "turnoff %g vs scaling-law %g", to, m_scaling);
        ck_assert_msg(fabs((double)nwd - expect) < 5 * se + 1, "WD count %llu, expected %g", (unsigned long long)nwd, expect);
        if (i > 0) {
            ck_assert_uint_gt(nwd, sum[i - 1].n_phase[HRT_PHASE_WD]);
            ck_assert(to < hrt_pop_turnoff_mass(&sum[i - 1]));
        }
        lx[i] = log10(ages[i]);
        ly[i] = log10(hrt_pop_sum_value(&x->l_lsun));
    }
    /* Integrated luminosity of an old burst fades as a power law of age,
     * L ~ t^-0.8 .. t^-1 (common practice; the slope from memory of
     * simple-stellar-population models).  Least squares over 2-12 Gyr. */
    double sx = 0, sy = 0, sxx = 0, sxy = 0;
    int k = 0;
    for (int i = 2; i < NA; i++, k++) {
        sx += lx[i];
        sy += ly[i];
        sxx += lx[i] * lx[i];
        sxy += lx[i] * ly[i];
    }
    double slope = (k * sxy - sx * sy) / (k * sxx - sx * sx);
    printf("integrated luminosity 2-12 Gyr: L ~ t^%.3f\n", slope);
    ck_assert_msg(slope < -0.7 && slope > -1.1, "fading slope %g outside -1.1 .. -0.7", slope);
    free(sum);
    hrt_grid_close(g);
}
END_TEST

/* Memory does not grow with the number of stars: peak RSS after 1e5 and
 * after 3e6 more stars differ by far less than 3e6 stars would need (24 MB
 * for one double each). */
#if defined(__SANITIZE_ADDRESS__)
#define HRT_TEST_ASAN 1
#elif defined(__has_feature)
#if __has_feature(address_sanitizer)
#define HRT_TEST_ASAN 1
#endif
#endif
#ifndef HRT_TEST_ASAN
#define HRT_TEST_ASAN 0
#endif

static long max_rss_kb(void)
{
    struct rusage ru;
    getrusage(RUSAGE_SELF, &ru);
    return ru.ru_maxrss;
}

START_TEST(test_memory_streamed)
{
    hrt_grid *g = open_grid();
    const double T = 5e9;
    hrt_pop_summary *sum = malloc(sizeof *sum);
    hrt_pop_spec s = make_spec(HRT_IMF_KROUPA_2001, 0.08, 100, 100000, 3);
    init_sums(sum, &T, 1);
    ck_assert_int_eq(hrt_pop_run(g, &s, 0, UINT64_MAX, 0, 1, sum, NULL), HRT_OK);
    long r0 = max_rss_kb();
    s.n_stars = 3000000;
    init_sums(sum, &T, 1);
    ck_assert_int_eq(hrt_pop_run(g, &s, 0, UINT64_MAX, 0, 1, sum, NULL), HRT_OK);
    long r1 = max_rss_kb();
    printf("peak RSS after 1e5 stars %ld kB, after 3e6 stars %ld kB: %+.3f bytes per extra star\n", r0, r1,
           (double)(r1 - r0) * 1024.0 / 2.9e6);
#if HRT_TEST_ASAN
    /* AddressSanitizer keeps freed blocks in quarantine (256 MB by default)
     * instead of reusing them, so the batch's per-call scratch shows as
     * growth here (31 MB; none with ASAN_OPTIONS=quarantine_size_mb=0);
     * the normal build checks the bound. */
    (void)r0;
    (void)r1;
#else
    ck_assert_int_lt(r1 - r0, 4096);
#endif
    free(sum);
    hrt_grid_close(g);
}
END_TEST

START_TEST(test_bad_input)
{
    hrt_imf f;
    hrt_error err = {0};
    ck_assert_int_eq(hrt_imf_init(NULL, 0, 0.1, 1, 0, &err), HRT_E_NULL);
    ck_assert_int_eq(hrt_imf_init(&f, 9, 0.1, 1, 0, &err), HRT_E_INVALID);
    ck_assert_int_eq(hrt_imf_init(&f, 0, 1, 0.1, 0, &err), HRT_E_DOMAIN);
    ck_assert_int_eq(hrt_imf_init(&f, 0, -1, 1, 0, &err), HRT_E_DOMAIN);
    ck_assert_int_eq(hrt_imf_init(&f, HRT_IMF_POWER_LAW, 0.1, 1, NAN, &err), HRT_E_DOMAIN);
    ck_assert(isnan(hrt_imf_quantile(&f, 0.5))); /* failed init leaves an unusable IMF */
    ck_assert_int_eq(hrt_imf_init(&f, HRT_IMF_POWER_LAW, 0.1, 1, 1.0, &err), HRT_OK); /* alpha = 1: log-uniform */
    ck_assert(fabs(hrt_imf_quantile(&f, 0.5) - sqrt(0.1)) < 1e-12);
    ck_assert_int_eq(hrt_imf_from_name("kroupa2001"), HRT_IMF_KROUPA_2001);
    ck_assert_int_eq(hrt_imf_from_name("chabrier"), HRT_IMF_CHABRIER_2003_SYSTEM);
    ck_assert_int_eq(hrt_imf_from_name("nonsense"), -1);
    ck_assert_str_eq(hrt_imf_name(HRT_IMF_SALPETER_1955), "salpeter1955");
    ck_assert_int_eq(hrt_sfh_from_name("exponential"), HRT_SFH_EXPONENTIAL);
    hrt_pop_spec s;
    hrt_pop_spec_default(&s);
    ck_assert_int_eq(hrt_pop_spec_check(&s, &err), HRT_OK);
    s.chunk_size = 0;
    ck_assert_int_eq(hrt_pop_spec_check(&s, &err), HRT_E_INVALID);
    hrt_pop_spec_default(&s);
    s.sfh.kind = HRT_SFH_CONSTANT;
    s.sfh.t_end_yr = -1;
    ck_assert_int_eq(hrt_pop_spec_check(&s, &err), HRT_E_DOMAIN);
    s.sfh.kind = HRT_SFH_TABLE;
    ck_assert_int_eq(hrt_pop_spec_check(&s, &err), HRT_E_NULL);
    const double tt[] = {0, 1, 1}, rr[] = {1, 1, 1}, r0[] = {0, 0, 0};
    s.sfh.table_t_yr = tt;
    s.sfh.table_rate = rr;
    s.sfh.n_table = 3;
    ck_assert_int_eq(hrt_pop_spec_check(&s, &err), HRT_E_DOMAIN); /* times not increasing */
    s.sfh.n_table = 2;
    ck_assert_int_eq(hrt_pop_spec_check(&s, &err), HRT_OK);
    s.sfh.table_rate = r0;
    ck_assert_int_eq(hrt_pop_spec_check(&s, &err), HRT_E_DOMAIN);
    hrt_pop_spec_default(&s);
    s.zdist.kind = HRT_ZDIST_LOG_NORMAL;
    s.zdist.z_lo = 0.001;
    s.zdist.z_hi = 0.002;
    s.zdist.sigma_dex = 0.01;
    ck_assert_int_eq(hrt_pop_spec_check(&s, &err), HRT_E_DOMAIN); /* no probability inside */
    ck_assert_uint_eq(hrt_pop_n_chunks(&s), 0);
    hrt_pop_summary *x = malloc(sizeof *x);
    hrt_pop_hr hr = {3, 4, -1, 1, 200, 200};
    ck_assert_int_eq(hrt_pop_summary_init(x, 1e9, &hr, &err), HRT_E_INVALID);
    hr.nx = hr.ny = 10;
    hr.log_l_lsun_hi = -2;
    ck_assert_int_eq(hrt_pop_summary_init(x, 1e9, &hr, &err), HRT_E_DOMAIN);
    ck_assert_int_eq(hrt_pop_summary_init(x, -1, NULL, &err), HRT_E_DOMAIN);
    ck_assert_int_eq(hrt_pop_summary_init(x, 1e9, NULL, &err), HRT_OK);
    ck_assert(isnan(hrt_pop_turnoff_mass(x)));
    hrt_grid *g = open_grid();
    hrt_pop_spec_default(&s);
    s.n_stars = 10;
    memset(x, 0, sizeof *x);
    ck_assert_int_eq(hrt_pop_run(g, &s, 0, 1, 1, 1, x, &err), HRT_E_INVALID); /* summary not initialised */
    ck_assert_int_eq(hrt_pop_run(g, &s, 0, 1, 1, 0, x, &err), HRT_E_INVALID);
    ck_assert_int_eq(hrt_pop_run(NULL, &s, 0, 1, 1, 1, x, &err), HRT_E_NULL);
    free(x);
    hrt_grid_close(g);
}
END_TEST

/* ---------------------------------------- summaries received as bytes */

/* A summary in a buffer with room after it: a merge or an add that trusted
 * a corrupt binning would write into the room (and be caught by its return
 * code) rather than into someone else's memory. */
#define SLACK_BINS 20000

static hrt_pop_summary *summary_with_slack(void)
{
    hrt_pop_summary *s = calloc(1, sizeof *s + SLACK_BINS * sizeof(uint64_t));
    ck_assert_ptr_nonnull(s);
    return s;
}

/* A valid summary of a few evaluated stars (every HR bin of the last row reachable). */
static void small_summary(const hrt_grid *g, hrt_pop_summary *s)
{
    ck_assert_int_eq(hrt_pop_summary_init(s, 1e9, &HR, NULL), HRT_OK);
    double m[] = {0.5, 1.0, 2.0, 5.0, 30.0, 200.0}, a[] = {1e9, 1e9, 1e9, 1e9, 1e9, 1e9};
    hrt_state st[6];
    hrt_eval(g, 6, m, NULL, 0.014, a, st, NULL);
    ck_assert_int_eq(hrt_pop_summary_add(s, st, 6, NULL), HRT_OK);
}

/* Each corruption of the bytes of a summary, applied to src alone, dst
 * alone, or both (so that dst and src still agree on the field, which the
 * epoch and binning comparisons alone would let through). */
typedef void (*corrupt_fn)(hrt_pop_summary *s);
static void bad_size(hrt_pop_summary *s) { s->struct_size = sizeof *s + 8; }
static void no_size(hrt_pop_summary *s) { s->struct_size = 0; }
static void bins_over(hrt_pop_summary *s) { s->hr.nx = 101, s->hr.ny = 100; }   /* 10100 > 10000 bins */
static void bins_wrap(hrt_pop_summary *s) { s->hr.nx = s->hr.ny = (uint64_t)1 << 32; } /* nx * ny wraps to 0 */
static void bins_half(hrt_pop_summary *s) { s->hr.nx = 0, s->hr.ny = 7; }
static void bins_huge(hrt_pop_summary *s) { s->hr.nx = UINT64_MAX, s->hr.ny = 1; }
static void bins_none_ranged(hrt_pop_summary *s) { s->hr.nx = s->hr.ny = 0; } /* ranges kept */
static void range_nan(hrt_pop_summary *s) { s->hr.log_teff_k_lo = NAN; }
static void range_inf(hrt_pop_summary *s) { s->hr.log_l_lsun_hi = INFINITY; }
static void range_empty(hrt_pop_summary *s) { s->hr.log_l_lsun_hi = s->hr.log_l_lsun_lo; }
static void epoch_nan(hrt_pop_summary *s) { s->age_yr = NAN; }
static void epoch_negative(hrt_pop_summary *s) { s->age_yr = -1e9; }
static void epoch_inf(hrt_pop_summary *s) { s->age_yr = INFINITY; }
static void extremum_nan(hrt_pop_summary *s) { s->evolved_min_initial_mass_msun = NAN; }
static void extremum_negative(hrt_pop_summary *s) { s->ms_max_initial_mass_msun = -1; }

static const struct {
    const char *name;
    corrupt_fn f;
} corruptions[] = {
    {"101 x 100 bins", bins_over},  {"2^32 x 2^32 bins", bins_wrap}, {"0 x 7 bins", bins_half},
    {"2^64-1 x 1 bins", bins_huge}, {"0 x 0 bins with ranges", bins_none_ranged},
    {"struct_size + 8", bad_size},  {"struct_size 0", no_size},
    {"NaN range", range_nan},       {"infinite range", range_inf},  {"empty range", range_empty},
    {"NaN epoch", epoch_nan},       {"negative epoch", epoch_negative}, {"infinite epoch", epoch_inf},
    {"NaN extremum", extremum_nan}, {"negative extremum", extremum_negative},
};

START_TEST(test_merge_refuses_bad_bytes)
{
    hrt_grid *g = open_grid();
    hrt_pop_summary *good = summary_with_slack(), *d = summary_with_slack(), *s = summary_with_slack();
    hrt_pop_summary *before = summary_with_slack();
    small_summary(g, good);
    const size_t bytes = sizeof *good + SLACK_BINS * sizeof(uint64_t);
    for (size_t c = 0; c < sizeof corruptions / sizeof corruptions[0]; c++)
        for (int which = 3; which >= 1; which--) { /* 3: both, 2: dst, 1: src */
            memcpy(d, good, bytes);
            memcpy(s, good, bytes);
            if (which & 1) corruptions[c].f(s);
            if (which & 2) corruptions[c].f(d);
            memcpy(before, d, bytes);
            hrt_error err = {HRT_OK, "untouched"};
            int rc = hrt_pop_summary_merge(d, s, &err);
            ck_assert_msg(rc == HRT_E_INVALID, "merge with %s in %s: %s (%d), expected HRT_E_INVALID", corruptions[c].name,
                          which == 1 ? "src" : which == 2 ? "dst" : "both", hrt_strerror(rc), rc);
            ck_assert_int_eq(err.code, HRT_E_INVALID);
            ck_assert_msg(strstr(err.message, which == 2 ? "dst" : which == 1 ? "src" : "dst") != NULL,
                          "the message names the summary at fault: %s", err.message);
            ck_assert_msg(memcmp(d, before, bytes) == 0, "merge with %s changed dst (or memory after it)", corruptions[c].name);
        }
    /* the control: the same merge of good bytes succeeds and doubles the counts */
    memcpy(d, good, bytes);
    ck_assert_int_eq(hrt_pop_summary_merge(d, good, NULL), HRT_OK);
    ck_assert_uint_eq(d->n_drawn, 2 * good->n_drawn);
    free(good);
    free(d);
    free(s);
    free(before);
    hrt_grid_close(g);
}
END_TEST

START_TEST(test_add_refuses_bad_codes)
{
    hrt_grid *g = open_grid();
    hrt_pop_summary *good = summary_with_slack(), *x = summary_with_slack(), *before = summary_with_slack();
    small_summary(g, good);
    const size_t bytes = sizeof *good + SLACK_BINS * sizeof(uint64_t);
    /* a luminous star in the top-right corner of a histogram said to have 101 x 100 bins */
    double m = 1.0, a = 4.6e9;
    hrt_state st;
    ck_assert_int_eq(hrt_eval(g, 1, &m, NULL, 0.014, &a, &st, NULL), HRT_OK);
    for (size_t c = 0; c < sizeof corruptions / sizeof corruptions[0]; c++) {
        memcpy(x, good, bytes);
        corruptions[c].f(x);
        if (x->hr.nx == 101) { /* put the star in bin (100, 99), past the 10000 bins */
            x->hr.log_teff_k_lo = st.log_teff_k - 100.5 * (x->hr.log_teff_k_hi - x->hr.log_teff_k_lo) / 101;
            x->hr.log_l_lsun_lo = st.log_l_lsun - 99.5 * (x->hr.log_l_lsun_hi - x->hr.log_l_lsun_lo) / 100;
        }
        memcpy(before, x, bytes);
        hrt_error err = {HRT_OK, "untouched"};
        ck_assert_msg(hrt_pop_summary_add(x, &st, 1, &err) == HRT_E_INVALID, "add to a summary with %s accepted",
                      corruptions[c].name);
        ck_assert_msg(strstr(err.message, "hrt_pop_summary_add") != NULL, "%s", err.message);
        ck_assert_msg(memcmp(x, before, bytes) == 0, "add to a summary with %s changed it", corruptions[c].name);
    }
    /* states with codes outside the lists; the summary is unchanged */
    const struct {
        const char *field;
        int32_t status, phase, remnant;
    } bad[] = {{"status", 77, HRT_PHASE_MS, 0}, {"status", -2, HRT_PHASE_MS, 0}, {"phase", HRT_OK, 99, 0},
               {"phase", HRT_OK, -1, 0},     {"phase", HRT_OK, 12, 0},         {"remnant", HRT_OK, HRT_PHASE_WD, 40},
               {"remnant", HRT_OK, HRT_PHASE_WD, -5}, {"remnant", HRT_OK, HRT_PHASE_WD, 13}};
    for (size_t k = 0; k < sizeof bad / sizeof bad[0]; k++) {
        hrt_state two[2] = {st, st};
        two[1].status = bad[k].status;
        two[1].phase = bad[k].phase;
        two[1].remnant = bad[k].remnant;
        two[1].flags |= HRT_FLAG_REMNANT;
        memcpy(x, good, bytes);
        hrt_error err = {HRT_OK, "untouched"};
        ck_assert_msg(hrt_pop_summary_add(x, two, 2, &err) == HRT_E_INVALID, "a state with %s %d/%d/%d accepted",
                      bad[k].field, bad[k].status, bad[k].phase, bad[k].remnant);
        ck_assert_msg(strstr(err.message, "state 1") && strstr(err.message, bad[k].field), "%s", err.message);
        ck_assert(memcmp(x, good, bytes) == 0);
    }
    /* a failed star's phase and remnant are not counted, so not checked */
    hrt_state failed = st;
    failed.status = HRT_E_MASS_RANGE;
    failed.phase = 99;
    memcpy(x, good, bytes);
    ck_assert_int_eq(hrt_pop_summary_add(x, &failed, 1, NULL), HRT_OK);
    ck_assert_uint_eq(x->n_status[HRT_E_MASS_RANGE], good->n_status[HRT_E_MASS_RANGE] + 1);
    /* a run refuses summaries it would have to trust */
    hrt_pop_spec spec;
    hrt_pop_spec_default(&spec);
    spec.n_stars = 100;
    memcpy(x, good, bytes);
    bins_over(x);
    memcpy(before, x, bytes);
    hrt_error err = {HRT_OK, "untouched"};
    ck_assert_int_eq(hrt_pop_run(g, &spec, 0, 1, 1, 1, x, &err), HRT_E_INVALID);
    ck_assert_msg(strstr(err.message, "summary 0") != NULL, "%s", err.message);
    ck_assert(memcmp(x, before, bytes) == 0);
    free(good);
    free(x);
    free(before);
    hrt_grid_close(g);
}
END_TEST

/* Every population function that takes an hrt_error reports success in it. */
#define STALE(err) ((err) = (hrt_error){HRT_E_INTERNAL, "stale message"})
#define ASSERT_SUCCESS(call, err)                                                                                        \
    do {                                                                                                                 \
        STALE(err);                                                                                                      \
        ck_assert_int_eq((call), HRT_OK);                                                                                \
        ck_assert_msg((err).code == HRT_OK && strcmp((err).message, "success") == 0, "%s left %d '%s'", #call,          \
                      (err).code, (err).message);                                                                        \
    } while (0)

START_TEST(test_errors_cleared_on_success)
{
    hrt_grid *g = open_grid();
    hrt_error err;
    hrt_pop_spec spec;
    hrt_pop_spec_default(&spec);
    spec.n_stars = 3000;
    spec.chunk_size = 1000;
    ASSERT_SUCCESS(hrt_imf_init(&spec.imf, HRT_IMF_SALPETER_1955, 0.1, 50, 0, &err), err);
    ASSERT_SUCCESS(hrt_pop_spec_check(&spec, &err), err);
    double m[1000], z[1000], t[1000];
    size_t n = 0;
    ASSERT_SUCCESS(hrt_pop_draw(&spec, 1, m, z, t, 1000, &n, &err), err);
    hrt_pop_summary *a = malloc(sizeof *a), *b = malloc(sizeof *b);
    ASSERT_SUCCESS(hrt_pop_summary_init(a, 1e9, &HR, &err), err);
    ASSERT_SUCCESS(hrt_pop_summary_init(b, 1e9, &HR, &err), err);
    enum { N_PAR = 10000 }; /* more than one block: the parallel path */
    double *pm = malloc(N_PAR * sizeof *pm), *pa = malloc(N_PAR * sizeof *pa);
    hrt_state *st = malloc(N_PAR * sizeof *st);
    for (int i = 0; i < N_PAR; i++) {
        pm[i] = 0.1 + 0.005 * i;
        pa[i] = 1e9;
    }
    ASSERT_SUCCESS(hrt_eval_parallel(g, N_PAR, pm, NULL, 0.014, pa, st, 2, &err), err);
    ASSERT_SUCCESS(hrt_eval_parallel(g, 10, pm, NULL, 0.014, pa, st, 1, &err), err);
    ASSERT_SUCCESS(hrt_pop_summary_add(a, st, 100, &err), err);
    ASSERT_SUCCESS(hrt_pop_summary_add(a, st, 0, &err), err);
    ASSERT_SUCCESS(hrt_pop_summary_merge(b, a, &err), err);
    ASSERT_SUCCESS(hrt_pop_run(g, &spec, 0, 2, 2, 1, a, &err), err);
    ASSERT_SUCCESS(hrt_pop_run(g, &spec, 7, 2, 1, 1, a, &err), err); /* no chunk left there: nothing to do */
    free(pm);
    free(pa);
    free(st);
    free(a);
    free(b);
    hrt_grid_close(g);
}
END_TEST

static Suite *suite(void)
{
    Suite *s = suite_create("population");
    TCase *t = tcase_create("population");
    tcase_set_timeout(t, 600);
    tcase_add_test(t, test_imf_against_formulas);
    tcase_add_test(t, test_imf_slopes_recovered);
    tcase_add_test(t, test_imf_ks);
    tcase_add_test(t, test_sfh_and_z_draws);
    tcase_add_test(t, test_streams_reproducible);
    tcase_add_test(t, test_thread_and_split_invariance);
    tcase_add_test(t, test_summary_recount);
    tcase_add_test(t, test_single_burst_ages);
    tcase_add_test(t, test_memory_streamed);
    tcase_add_test(t, test_bad_input);
    tcase_add_test(t, test_merge_refuses_bad_bytes);
    tcase_add_test(t, test_add_refuses_bad_codes);
    tcase_add_test(t, test_errors_cleared_on_success);
    suite_add_tcase(s, t);
    return s;
}

int main(void)
{
    setvbuf(stdout, NULL, _IONBF, 0);
    SRunner *sr = srunner_create(suite());
    srunner_run_all(sr, CK_VERBOSE);
    int nf = srunner_ntests_failed(sr);
    srunner_free(sr);
    return nf ? EXIT_FAILURE : EXIT_SUCCESS;
}
