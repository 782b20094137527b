/* Magnitudes of a state: M_bol from L (IAU 2015 Resolution B2), the
 * bolometric correction in V of Flower (1996) as reprinted by Torres (2010),
 * M_V, and the apparent V magnitude for a distance and an extinction. */
#include <math.h>

#include "util/util.h"

/* Flower (1996, ApJ 469, 355) BC_V = sum_k c_k (log Teff)^k, with the
 * coefficients of Torres (2010, AJ 140, 1158, Table 1), which reprints them
 * because the original table was misprinted.  Transcribed from copies of
 * that table (several independent transcriptions agree digit for digit),
 * not read from the journal page itself.  Pieces: log Teff < 3.70,
 * 3.70 <= log Teff < 3.90, log Teff >= 3.90. */
static const double bc_cool[4] = {-0.190537291496456e+05, 0.155144866764412e+05, -0.421278819301717e+04,
                                  0.381476328422343e+03};
static const double bc_mid[5] = {-0.370510203809015e+05, 0.385672629965804e+05, -0.150651486316025e+05,
                                 0.261724637119416e+04, -0.170623810323864e+03};
static const double bc_hot[6] = {-0.118115450538963e+06, 0.137145973583929e+06, -0.636233812100225e+05,
                                 0.147412923562646e+05, -0.170587278406872e+04, 0.788731721804990e+02};

static double horner(const double *c, int n, double x)
{
    double y = c[n - 1];
    for (int k = n - 2; k >= 0; k--)
        y = y * x + c[k];
    return y;
}

double hrt_bc_v(double lt)
{
    if (!isfinite(lt))
        return NAN;
    if (lt < 3.70)
        return horner(bc_cool, 4, lt);
    if (lt < 3.90)
        return horner(bc_mid, 5, lt);
    return horner(bc_hot, 6, lt);
}

/* Whether Flower's relation was calibrated on stars like s (finite Teff). */
static int bc_holds(const hrt_state *s)
{
    const double lo = log10(HRT_BC_V_TEFF_MIN_K), hi = log10(HRT_BC_V_TEFF_MAX_K);
    return !(s->flags & HRT_FLAG_REMNANT) && s->log_teff_k >= lo && s->log_teff_k <= hi;
}

static void put(double *a, size_t i, double v)
{
    if (a)
        a[i] = v;
}

int hrt_magnitudes(size_t n, const hrt_state *states, double distance_pc, double a_v_mag, double *abs_mbol,
                   double *bc_v, double *abs_mv, double *mv, int32_t *flags, hrt_error *err)
{
    if (n > 0 && !states)
        return trail_set_error(err, HRT_E_NULL, "hrt_magnitudes: states is NULL with n = %zu", n);
    if (mv && !(isfinite(distance_pc) && distance_pc > 0.0))
        return trail_set_error(err, HRT_E_DOMAIN, "hrt_magnitudes: distance_pc = %g is not a finite positive "
                                                  "distance", distance_pc);
    if (mv && !(isfinite(a_v_mag) && a_v_mag >= 0.0))
        return trail_set_error(err, HRT_E_DOMAIN, "hrt_magnitudes: a_v_mag = %g is not a finite extinction >= 0",
                               a_v_mag);
    /* distance modulus 5 log10(d / 10 pc), plus the extinction */
    const double dm = mv ? 5.0 * log10(distance_pc / 10.0) + a_v_mag : 0.0;
    for (size_t i = 0; i < n; i++) {
        const hrt_state *s = &states[i];
        const int ok = s->status == HRT_OK;
        const double mb = ok && isfinite(s->log_l_lsun) ? TRAIL_MBOL_SUN - 2.5 * s->log_l_lsun : NAN;
        const double bc = ok && isfinite(s->log_l_lsun) ? hrt_bc_v(s->log_teff_k) : NAN;
        const double av = mb - bc; /* NaN when either is */
        put(abs_mbol, i, mb);
        put(bc_v, i, bc);
        put(abs_mv, i, av);
        put(mv, i, av + dm);
        if (flags)
            flags[i] = !ok ? 0 : s->flags | (isfinite(bc) && !bc_holds(s) ? HRT_FLAG_BEYOND_LAW : 0);
    }
    return trail_set_error(err, HRT_OK, NULL);
}
