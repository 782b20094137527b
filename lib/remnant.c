/* Analytic remnants: white dwarf mass-radius relation and Mestel cooling. */
#include <math.h>

#include "internal.h"

/* Eggleton's zero-temperature mass-radius relation, as quoted by Verbunt &
 * Rappaport (1988, ApJ 332, 193), eq. 5 [constants from memory]:
 *   R/Rsun = 0.0114 [(M/Mch)^(-2/3) - (M/Mch)^(2/3)]^(1/2)
 *            [1 + 3.5 (M/Mp)^(-2/3) + (Mp/M)^(-1)]^(-2/3)
 * with Mch = 1.44 and Mp = 0.00057 Msun.  It agrees with Nauenberg's
 * (1972, ApJ 175, 417) relation to 1-3 % and gives 0.0125 Rsun at 0.6 Msun. */
double hrt_wd_radius_rsun(double m)
{
    const double mch = 1.44, mp = 0.00057;
    if (!(m > 0.0 && m < mch))
        return NAN;
    double a = pow(m / mch, 2.0 / 3.0);
    double b = 1.0 + 3.5 * pow(m / mp, -2.0 / 3.0) + mp / m;
    return 0.0114 * sqrt(1.0 / a - a) * pow(b, -2.0 / 3.0);
}

/* Mean atomic mass number of the ions of each white-dwarf kind: helium 4;
 * carbon-oxygen 13.7 (equal masses of 12C and 16O, harmonic mean); oxygen-neon
 * 17.6 (60 % O, 40 % Ne by mass) [engineering choice]. */
static double wd_ion_a(int kind)
{
    switch (kind) {
    case HRT_REMNANT_HE_WD:
        return 4.0;
    case HRT_REMNANT_ONE_WD:
        return 17.6;
    default:
        return 13.7;
    }
}

/* Mestel (1952, MNRAS 112, 583) cooling, L proportional to M T_core^(7/2):
 *   t_cool = C (L^(-5/7) - L0^(-5/7)),  C = 6e6 yr (A/12)^-1 M^(5/7) (mu/2)^(-2/7)
 * with mu = 2 [normalisation from memory; other texts differ by about 1.5].
 * Inverted for L at a time dt after a luminosity L0. */
double hrt_wd_log_l(double m, int kind, double log_l0, double dt_yr)
{
    if (!(m > 0.0) || !isfinite(log_l0) || !(dt_yr >= 0.0))
        return NAN;
    double c = 6.0e6 * (12.0 / wd_ion_a(kind)) * pow(m, 5.0 / 7.0);
    double x = pow(10.0, -5.0 / 7.0 * log_l0) + dt_yr / c;
    return -7.0 / 5.0 * hrt_log10(x);
}
