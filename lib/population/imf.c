/* hrtrail: initial mass functions as segments (power laws and a
 * log-normal) between mass limits: density, cumulative fraction, quantile
 * and mean mass, each in closed form. */
#include <math.h>
#include <string.h>

#include <gsl/gsl_cdf.h>

#include "util/util.h"
#include "population/sampling.h"

#define SQRT_2PI 2.506628274631000502

/* Salpeter (1955, ApJ 121, 161): dN/dm ~ m^-2.35. */
#define SALPETER_ALPHA 2.35
/* Kroupa (2001, MNRAS 322, 231), eq. 2: alpha = 0.3 below 0.08 Msun, 1.3 for
 * 0.08-0.5 Msun, 2.3 above 0.5 Msun. */
#define KROUPA_ALPHA0 0.3
#define KROUPA_ALPHA1 1.3
#define KROUPA_ALPHA2 2.3
#define KROUPA_M1 0.08
#define KROUPA_M2 0.5
/* Chabrier (2003, PASP 115, 763), Table 1, system IMF of the Galactic disc:
 * dN/dlog m = 0.086 exp(-(log m - log 0.22)^2 / (2 0.57^2)) for m <= 1 Msun,
 * dN/dlog m = A m^-1.3 above, A from continuity at 1 Msun (the paper's
 * 4.43e-2).  Parameters as recalled from the paper (from memory). */
#define CHABRIER_AMP 0.086
#define CHABRIER_MC 0.22
#define CHABRIER_SIGMA 0.57
#define CHABRIER_X 1.3
#define CHABRIER_MBREAK 1.0
/* The largest |alpha| of a power-law IMF hrt_imf_init accepts. */
#define IMF_ALPHA_MAX 20.0

/* Number in [a, b] of dN/dm = amp m^-alpha (a > 0): stable near alpha = 1. */
static double pl_integral(double amp, double alpha, double a, double b)
{
    double beta = 1.0 - alpha, L = log(b / a);
    if (beta == 0.0)
        return amp * L;
    return amp * pow(a, beta) * expm1(beta * L) / beta;
}

/* Number in [a, b] of dN/dlog10 m = amp exp(-(log m - mu)^2 / (2 s^2)). */
static double ln_integral(double amp, double mu, double s, double a, double b)
{
    return amp * s * SQRT_2PI *
           (gsl_cdf_ugaussian_P((log10(b) - mu) / s) - gsl_cdf_ugaussian_P((log10(a) - mu) / s));
}

static double seg_number(const hrt_imf *f, int k, double a, double b)
{
    if (!(b > a))
        return 0.0;
    return f->seg_lognormal[k] ? ln_integral(f->seg_amp[k], f->seg_a[k], f->seg_s[k], a, b)
                               : pl_integral(f->seg_amp[k], f->seg_a[k], a, b);
}

/* Append the part of the segment [lo, hi) inside the IMF's limits. */
static void add_segment(hrt_imf *f, int lognormal, double lo, double hi, double a, double s, double amp)
{
    double l = fmax(lo, f->m_lo_msun), h = fmin(hi, f->m_hi_msun);
    if (!(h > l) || f->n_seg >= HRT_IMF_MAX_SEGMENTS)
        return;
    int k = f->n_seg++;
    f->seg_lognormal[k] = lognormal;
    f->seg_lo[k] = l;
    f->seg_hi[k] = h;
    f->seg_a[k] = a;
    f->seg_s[k] = s;
    f->seg_amp[k] = amp;
    if (lognormal) {
        f->seg_c0[k] = gsl_cdf_ugaussian_P((log10(l) - a) / s);
        f->seg_c1[k] = gsl_cdf_ugaussian_P((log10(h) - a) / s);
    } else {
        f->seg_c0[k] = 1.0 - a;
        f->seg_c1[k] = f->seg_c0[k] == 0.0 ? log(h / l) : expm1(f->seg_c0[k] * log(h / l));
    }
}

/* The segments of an IMF kind, cut to the limits already in f. */
static void add_segments(hrt_imf *f, int kind, double alpha)
{
    switch (kind) {
    case HRT_IMF_SALPETER_1955:
        add_segment(f, 0, 0.0, INFINITY, SALPETER_ALPHA, 0.0, 1.0);
        break;
    case HRT_IMF_POWER_LAW:
        add_segment(f, 0, 0.0, INFINITY, alpha, 0.0, 1.0);
        break;
    case HRT_IMF_KROUPA_2001: {
        double a0 = 1.0, a1 = a0 * pow(KROUPA_M1, KROUPA_ALPHA1 - KROUPA_ALPHA0);
        double a2 = a1 * pow(KROUPA_M2, KROUPA_ALPHA2 - KROUPA_ALPHA1);
        add_segment(f, 0, 0.0, KROUPA_M1, KROUPA_ALPHA0, 0.0, a0);
        add_segment(f, 0, KROUPA_M1, KROUPA_M2, KROUPA_ALPHA1, 0.0, a1);
        add_segment(f, 0, KROUPA_M2, INFINITY, KROUPA_ALPHA2, 0.0, a2);
        break;
    }
    default: { /* Chabrier 2003 system IMF */
        double mu = log10(CHABRIER_MC), dx = log10(CHABRIER_MBREAK) - mu;
        double ah = CHABRIER_AMP * exp(-dx * dx / (2.0 * CHABRIER_SIGMA * CHABRIER_SIGMA));
        /* dN/dlog m = ah m^-x is dN/dm = (ah / ln 10) m^-(x + 1) */
        add_segment(f, 1, 0.0, CHABRIER_MBREAK, mu, CHABRIER_SIGMA, CHABRIER_AMP);
        add_segment(f, 0, CHABRIER_MBREAK, INFINITY, CHABRIER_X + 1.0, 0.0,
                    ah * pow(CHABRIER_MBREAK, CHABRIER_X) / TRAIL_LN10);
        break;
    }
    }
}

int hrt_imf_init(hrt_imf *imf, int kind, double m_lo_msun, double m_hi_msun, double alpha, hrt_error *err)
{
    if (!imf)
        return trail_set_error(err, HRT_E_NULL, "hrt_imf_init: imf is NULL");
    memset(imf, 0, sizeof *imf);
    if (kind < 0 || kind >= HRT_IMF_COUNT)
        return trail_set_error(err, HRT_E_INVALID, "unknown IMF kind %d", kind);
    if (!isfinite(m_lo_msun) || !isfinite(m_hi_msun) || !(m_lo_msun > 0.0) || !(m_hi_msun > m_lo_msun))
        return trail_set_error(err, HRT_E_DOMAIN, "IMF mass limits %g .. %g Msun: need 0 < low < high, finite",
                               m_lo_msun, m_hi_msun);
    if (kind == HRT_IMF_POWER_LAW && !(isfinite(alpha) && fabs(alpha) <= IMF_ALPHA_MAX))
        return trail_set_error(err, HRT_E_DOMAIN, "power-law IMF slope alpha = %g: need a finite |alpha| <= %g", alpha,
                               IMF_ALPHA_MAX);
    imf->kind = kind;
    imf->m_lo_msun = m_lo_msun;
    imf->m_hi_msun = m_hi_msun;
    imf->alpha = kind == HRT_IMF_POWER_LAW ? alpha : NAN;
    add_segments(imf, kind, alpha);
    double tot = 0.0, part[HRT_IMF_MAX_SEGMENTS];
    for (int k = 0; k < imf->n_seg; k++) {
        part[k] = seg_number(imf, k, imf->seg_lo[k], imf->seg_hi[k]);
        tot += part[k];
    }
    if (imf->n_seg == 0 || !(tot > 0.0) || !isfinite(tot)) {
        int n = imf->n_seg;
        memset(imf, 0, sizeof *imf);
        return trail_set_error(err, HRT_E_DOMAIN, "IMF %s over %g .. %g Msun has no finite positive number of stars (%d segments)",
                               hrt_imf_name(kind), m_lo_msun, m_hi_msun, n);
    }
    imf->norm = tot;
    double c = 0.0;
    for (int k = 0; k < imf->n_seg; k++) {
        imf->seg_cum[k] = c / tot;
        c += part[k];
    }
    imf->seg_cum[imf->n_seg] = 1.0;
    return trail_set_error(err, HRT_OK, NULL);
}

int trail_imf_is_set(const hrt_imf *f)
{
    return f && f->n_seg > 0 && f->n_seg <= HRT_IMF_MAX_SEGMENTS && f->norm > 0.0;
}

/* The segment that holds mass m (the last for masses beyond it). */
static int segment_of(const hrt_imf *f, double m)
{
    int k = 0;
    while (k + 1 < f->n_seg && m >= f->seg_hi[k])
        k++;
    return k;
}

double hrt_imf_pdf(const hrt_imf *f, double m)
{
    if (!trail_imf_is_set(f) || isnan(m))
        return NAN;
    if (m < f->m_lo_msun || m > f->m_hi_msun)
        return 0.0;
    int k = segment_of(f, m);
    double d;
    if (f->seg_lognormal[k]) {
        double x = (log10(m) - f->seg_a[k]) / f->seg_s[k];
        d = f->seg_amp[k] * exp(-0.5 * x * x) / (m * TRAIL_LN10);
    } else {
        d = f->seg_amp[k] * pow(m, -f->seg_a[k]);
    }
    return d / f->norm;
}

double hrt_imf_cdf(const hrt_imf *f, double m)
{
    if (!trail_imf_is_set(f) || isnan(m))
        return NAN;
    if (m <= f->m_lo_msun)
        return 0.0;
    if (m >= f->m_hi_msun)
        return 1.0;
    int k = segment_of(f, m);
    double v = f->seg_cum[k] + seg_number(f, k, f->seg_lo[k], m) / f->norm;
    return v < 0.0 ? 0.0 : v > 1.0 ? 1.0 : v;
}

/* Mass at fraction v (0..1) of the stars of segment k. */
static inline double seg_quantile(const hrt_imf *f, int k, double v)
{
    double lo = f->seg_lo[k], m;
    if (f->seg_lognormal[k]) {
        double p = f->seg_c0[k] + v * (f->seg_c1[k] - f->seg_c0[k]);
        m = trail_exp10(f->seg_a[k] + f->seg_s[k] * gsl_cdf_ugaussian_Pinv(p));
    } else if (f->seg_c0[k] == 0.0) {
        m = lo * exp(v * f->seg_c1[k]);
    } else {
        m = lo * exp(log1p(v * f->seg_c1[k]) / f->seg_c0[k]);
    }
    return m < lo ? lo : m > f->seg_hi[k] ? f->seg_hi[k] : m;
}

double hrt_imf_quantile(const hrt_imf *f, double u)
{
    if (!trail_imf_is_set(f) || !(u >= 0.0 && u <= 1.0))
        return NAN;
    int k = 0;
    while (k + 1 < f->n_seg && u >= f->seg_cum[k + 1])
        k++;
    double w = f->seg_cum[k + 1] - f->seg_cum[k];
    double v = w > 0.0 ? (u - f->seg_cum[k]) / w : 0.0;
    return seg_quantile(f, k, v < 0.0 ? 0.0 : v > 1.0 ? 1.0 : v);
}

double hrt_imf_mean_mass(const hrt_imf *f)
{
    if (!trail_imf_is_set(f))
        return NAN;
    double s = 0.0;
    for (int k = 0; k < f->n_seg; k++) {
        double a = f->seg_lo[k], b = f->seg_hi[k];
        if (f->seg_lognormal[k]) {
            /* integral of m dN/dm = amp * int 10^x exp(-(x-mu)^2/2s^2) dx */
            double mu = f->seg_a[k], sg = f->seg_s[k], sh = sg * TRAIL_LN10;
            double za = (log10(a) - mu) / sg - sh, zb = (log10(b) - mu) / sg - sh;
            s += f->seg_amp[k] * sg * SQRT_2PI * exp(mu * TRAIL_LN10 + 0.5 * sh * sh) *
                 (gsl_cdf_ugaussian_P(zb) - gsl_cdf_ugaussian_P(za));
        } else {
            s += pl_integral(f->seg_amp[k], f->seg_a[k] - 1.0, a, b);
        }
    }
    return s / f->norm;
}
