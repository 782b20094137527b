/*
 * An invented pair of stars, "the twins of the lantern nebula": a donor of
 * 1.5 Msun and an accretor of 1.0 Msun at Z = 0.014, in a circular orbit
 * chosen so that the donor fills its Roche lobe part-way through its main
 * sequence.  Both stars are advanced with hrt_step(): the donor loses what
 * overflows its lobe, the accretor gains all of it (conservative transfer),
 * and the orbit follows from the masses.  A toy, not a binary-evolution
 * code: no tides, no magnetic braking, no winds taken from the orbit, no
 * common envelope; the point is to show the stepping API.
 *
 *   Roche lobe: r_L / a = 0.49 q^(2/3) / (0.6 q^(2/3) + ln(1 + q^(1/3))),
 *   q = M_donor / M_accretor (Eggleton 1983, ApJ 268, 368, eq. 2; better
 *   than 1 % for all q).
 *   Conservative transfer keeps the orbital angular momentum, J^2 is
 *   proportional to M1^2 M2^2 a / (M1 + M2), so a M1^2 M2^2 is constant
 *   (common practice: textbook two-body mechanics).
 *   Transfer rate (crude, our choice): while the donor's radius R exceeds
 *   r_L, it loses M / t_KH times (R - r_L) / (0.01 r_L), at most M / t_KH,
 *   with t_KH = G M^2 / (R L) its Kelvin-Helmholtz time: thermal-time-scale
 *   transfer, throttled by how far the star overfills its lobe.
 *
 * Usage: binary_transfer [GRID]   (default: the default grid)
 * Prints a table every so often and a summary; exit status 0 when the run
 * ends as expected (the donor leaves the main sequence, or the grid refuses
 * an equivalent point and says why).
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include "hrtrail.h"

#define Z 0.014

/* Kelvin-Helmholtz time G M^2 / (R L), yr, of a star of m Msun, log R/Rsun
 * and log L/Lsun (solar mass = (GM)sun / G: IAU 2015 B3 and CODATA 2018). */
static double t_kh_yr(double m, double log_r, double log_l)
{
    double msun_kg = HRT_GM_SUN / HRT_G_SI;
    return HRT_GM_SUN * msun_kg * m * m / (HRT_RSUN_M * HRT_LSUN_W * pow(10.0, log_r + log_l)) / HRT_YEAR_S;
}

/* Eggleton's (1983) Roche-lobe radius over the separation. */
static double roche_fraction(double q)
{
    double q3 = cbrt(q), q23 = q3 * q3;
    return 0.49 * q23 / (0.6 * q23 + log(1.0 + q3));
}

static int fail(const char *what, const hrt_error *e)
{
    fprintf(stderr, "binary_transfer: %s: %s\n", what, e->message);
    return 1;
}

int main(int argc, char **argv)
{
    hrt_grid *g = NULL;
    hrt_error e;
    if (hrt_grid_open(argc > 1 ? argv[1] : NULL, &g, &e) != HRT_OK)
        return fail("open", &e);
    double m_d0 = 1.5, m_a0 = 1.0, t0 = 5e7;
    hrt_state d, a;
    if (hrt_eval(g, 1, &m_d0, NULL, Z, &t0, &d, &e) != HRT_OK || hrt_eval(g, 1, &m_a0, NULL, Z, &t0, &a, &e) != HRT_OK)
        return fail("start", &e);
    /* the orbit: the donor fills its lobe at 70 % of its main sequence */
    double t_fill = d.phase_start_yr + 0.7 * (d.phase_end_yr - d.phase_start_yr);
    hrt_state at_fill;
    if (hrt_eval(g, 1, &m_d0, NULL, Z, &t_fill, &at_fill, &e) != HRT_OK)
        return fail("orbit", &e);
    double sep = pow(10.0, at_fill.log_r_rsun) / roche_fraction(m_d0 / m_a0); /* Rsun */
    double j_const = sep * m_d0 * m_d0 * m_a0 * m_a0;
    printf("the twins of the lantern nebula: donor %.2f Msun, accretor %.2f Msun, Z = %.3f, separation %.3f Rsun\n",
           m_d0, m_a0, Z, sep);
    printf("%12s %8s %8s %8s %8s %8s %9s %9s %11s\n", "age_yr", "M_d", "M_a", "M0eff_d", "M0eff_a", "a_Rsun",
           "R_d/r_L", "ms_frac_a", "mdot_Msun_yr");
    double transferred = 0.0, dt = 1e5, mdot = 0.0;
    long steps = 0, transfer_steps = 0;
    int rc = HRT_OK;
    double next_print = 0.0;
    while (d.phase == HRT_PHASE_MS && steps < 200000) {
        double m_d = d.mass_msun, m_a = a.mass_msun;
        sep = j_const / (m_d * m_d * m_a * m_a);
        double r_l = roche_fraction(m_d / m_a) * sep, r_d = pow(10.0, d.log_r_rsun);
        double over = (r_d - r_l) / (0.01 * r_l);
        double t_kh = t_kh_yr(m_d, d.log_r_rsun, d.log_l_lsun);
        mdot = over > 0.0 ? -m_d / t_kh * (over < 1.0 ? over : 1.0) : 0.0;
        /* the step: what both stars proposed (hrt_step), and, while mass
         * flows, short enough that the overflow, which reacts to the mass
         * moved (R / r_L by about 2 dM / M, "over" by 200 dM / M), changes
         * by at most about 0.2 per step */
        if (mdot != 0.0 && dt > 1e-3 * m_d / -mdot)
            dt = 1e-3 * m_d / -mdot;
        if (d.age_yr >= next_print) {
            printf("%12.5e %8.4f %8.4f %8.4f %8.4f %8.3f %9.4f %9.4f %11.3e\n", d.age_yr, m_d, m_a,
                   d.initial_mass_msun, a.initial_mass_msun, sep, r_d / r_l, a.phase_fraction, mdot);
            next_print = d.age_yr + 0.05 * (d.phase_end_yr - d.phase_start_yr);
        }
        hrt_state dn, an;
        double dt_d, dt_a;
        rc = hrt_step(g, &d, dt, mdot, &dn, &dt_d, &e);
        if (rc != HRT_OK)
            break;
        rc = hrt_step(g, &a, dt, -mdot, &an, &dt_a, &e);
        if (rc != HRT_OK)
            break;
        transferred += -mdot * dt;
        transfer_steps += mdot != 0.0;
        d = dn;
        a = an;
        steps++;
        dt = dt_d < dt_a ? dt_d : dt_a;
    }
    if (rc != HRT_OK && rc != HRT_E_NO_EQUIVALENT && rc != HRT_E_MASS_RANGE)
        return fail("step", &e);
    if (rc != HRT_OK)
        printf("the grid has no equivalent point, the run stops: %s\n", e.message);
    printf("after %ld steps (%ld transferring): donor %.4f Msun (phase %s, effective initial %.4f Msun), accretor "
           "%.4f Msun (phase %s, effective initial %.4f Msun, %.3f of its main sequence), %.4f Msun transferred\n",
           steps, transfer_steps, d.mass_msun, hrt_phase_key(d.phase), d.initial_mass_msun, a.mass_msun,
           hrt_phase_key(a.phase), a.initial_mass_msun, a.phase_fraction, transferred);
    printf("total mass %.5f Msun at the start, %.5f Msun now (the difference is the two stars' own winds)\n",
           m_d0 + m_a0, d.mass_msun + a.mass_msun);
    int ok = transferred > 0.01 && a.mass_msun > m_a0 && d.mass_msun < m_d0;
    printf("%s\n", ok ? "mass transfer: done" : "mass transfer: did not happen");
    hrt_grid_close(g);
    return ok ? 0 : 1;
}
