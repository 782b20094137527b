/*
 * The one private header every layer of the library may include besides the
 * public hrtrail.h: error reporting, derived constants, fast logarithms,
 * small physics helpers.  Nothing here knows the prepared grid layout (that
 * is lib/core/core.h, for the core only).  Private names start with trail_
 * (functions) or TRAIL_ (macros); hrt_/HRT_ is the public API.
 */
#ifndef HRTRAIL_LIB_UTIL_H
#define HRTRAIL_LIB_UTIL_H

#include <math.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>

#include "hrtrail.h"

/* ln 10 and its inverse (log10 e). */
#define TRAIL_LN10 2.302585092994045684
#define TRAIL_LOG10E 0.43429448190325182765

/* log10 g of the Sun in cgs from the nominal (GM)sun and Rsun (IAU 2015 B3). */
#define TRAIL_LOG_G_SUN_CGS 4.438067627303133
/* log10 of the nominal solar Teff, 5772 K (IAU 2015 B3). */
#define TRAIL_LOG_TEFF_SUN 3.7613263224214566

/* Absolute bolometric magnitude of the nominal Sun, -2.5 log10(Lsun / L0)
 * with L0 = HRT_MBOL_ZERO_POINT_W (IAU 2015 B2) and Lsun = HRT_LSUN_W (B3):
 * 4.7399959..., the "4.74" of Resolution B2. */
#define TRAIL_MBOL_SUN 4.739995933919459

/* Upper end of the white dwarf mass-radius relation hrt_wd_radius_rsun()
 * uses (Eggleton's, with M_ch = 1.44 Msun): no white dwarf of this mass or
 * more can be described, so none is written, read or extrapolated to. */
#define TRAIL_WD_MASS_MAX_MSUN 1.44

/* Fill err (when given) with code and a printf-style message (NULL fmt: the
 * code's own text); returns code. */
int trail_set_error(hrt_error *err, int code, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 3, 4)))
#endif
    ;
/* strdup (not in C11); NULL when out of memory. */
char *trail_strdup(const char *s);
/* Output files are replaced whole, never edited in place: written to a
 * private temporary beside the file and renamed over it.
 * trail_replace_target: the file path names, links resolved (realpath: a
 * rename must replace the file, not the link), which must exist as a regular
 * file (a FIFO, device or directory is refused); *target is malloc'ed, *mode
 * gets its permission bits.  trail_temp_beside: a new file "PATH.tmp-XXXXXX"
 * (mkstemp: unpredictable, O_EXCL, so no planted link is followed), *tmp
 * malloc'ed, *fd open for writing.  who prefixes the messages ("" for none). */
int trail_replace_target(const char *path, const char *who, char **target, unsigned *mode, hrt_error *err);
int trail_temp_beside(const char *path, const char *who, char **tmp, int *fd, hrt_error *err);
/* n bytes as the new contents of target (a name trail_replace_target gave):
 * through trail_temp_beside, with the given mode, to the disk (fsync), then
 * renamed over it; after a failure target is as it was and the temporary is
 * removed. */
int trail_write_replace(const char *target, const char *who, const void *bytes, size_t n, unsigned mode,
                        hrt_error *err);
/* qsort comparison of doubles, ascending (NaN last). */
int trail_cmp_double(const void *a, const void *b);

/* log10 through the natural logarithm: about half the cost of libm's
 * log10, within an ulp of it.  Used wherever a query computes a log10, and
 * for the grid's knots, so a query at a track's mass lands on its knot. */
static inline double trail_log10(double x) { return log(x) * TRAIL_LOG10E; }

/* 10^x: every age conversion goes through this one function, so the star
 * and batch paths agree to the bit. */
static inline double trail_exp10(double x) { return exp(x * TRAIL_LN10); }

/* log10 R/Rsun from log10 L/Lsun and log10 Teff/K (Stefan-Boltzmann law with
 * the nominal solar values), and log10 g/(cm s^-2) from mass and log R.
 * Inline: every state computes both. */
static inline double trail_log_r_from(double log_l, double log_teff)
{
    /* L/Lsun = (R/Rsun)^2 (Teff/Teff_sun)^4 with the nominal solar values,
     * which satisfy the Stefan-Boltzmann law to 2e-6 (IAU 2015 B3). */
    return 0.5 * log_l - 2.0 * (log_teff - TRAIL_LOG_TEFF_SUN);
}
static inline double trail_log_g_from(double mass_msun, double log_r)
{
    return TRAIL_LOG_G_SUN_CGS + trail_log10(mass_msun) - 2.0 * log_r;
}

/* Remnant masses are interpolated between tracks of one family: all white
 * dwarfs (helium, CO, ONe) form one, so the mass is continuous where the
 * composition changes; neutron stars and black holes are each their own.
 * The family is the tens of the remnant code (HRT_REMNANT_LIST). */
static inline int trail_remnant_family(int kind) { return kind / 10; }
static inline int trail_remnant_is_wd(int kind) { return kind / 10 == HRT_REMNANT_CO_WD / 10; }

#endif
