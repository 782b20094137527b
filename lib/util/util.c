/* Error reporting and small helpers shared by every layer (util.h). */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "util/util.h"

int trail_set_error(hrt_error *err, int code, const char *fmt, ...)
{
    if (err) {
        err->code = code;
        if (fmt) {
            va_list ap;
            va_start(ap, fmt);
            vsnprintf(err->message, sizeof err->message, fmt, ap);
            va_end(ap);
        } else {
            snprintf(err->message, sizeof err->message, "%s", hrt_strerror(code));
        }
    }
    return code;
}

char *trail_strdup(const char *s)
{
    size_t n = strlen(s) + 1;
    char *d = malloc(n);
    if (d)
        memcpy(d, s, n);
    return d;
}

int trail_cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    if (isnan(x) || isnan(y))
        return isnan(x) - isnan(y);
    return (x > y) - (x < y);
}

double trail_log_r_from(double log_l, double log_teff)
{
    /* L/Lsun = (R/Rsun)^2 (Teff/Teff_sun)^4 with the nominal solar values,
     * which satisfy the Stefan-Boltzmann law to 2e-6 (IAU 2015 B3). */
    return 0.5 * log_l - 2.0 * (log_teff - TRAIL_LOG_TEFF_SUN);
}

double trail_log_g_from(double mass_msun, double log_r)
{
    return TRAIL_LOG_G_SUN_CGS + trail_log10(mass_msun) - 2.0 * log_r;
}
