#include "synth.h"

#include <math.h>
#include <stdlib.h>

#define Z_REF 0.02

double synth_feh(double z) { return log10(z / Z_REF); }

double synth_z(const synth_spec *s, int iz)
{
    /* Z from 0.001 to 0.03, evenly in [Fe/H]. */
    double y0 = log10(0.001 / Z_REF), y1 = log10(0.03 / Z_REF);
    double y = s->n_z > 1 ? y0 + (y1 - y0) * iz / (s->n_z - 1) : log10(0.014 / Z_REF);
    return Z_REF * pow(10.0, y);
}

double synth_log_age(int route, double x, double e, double y)
{
    /* Increasing in e; decreasing with mass; linear in [Fe/H]. */
    return (route ? 9.3 : 9.6) - 2.5 * x + 1.2 * e + 0.4 * e * e + 0.1 * y + 0.05 * sin(2.0 * x);
}

double synth_log_l(int route, double x, double e, double y)
{
    return (route ? 0.3 : 0.1) + 3.5 * x + 0.3 * x * x + sin(2.0 * e) + 0.2 * x * e - 0.1 * y + 0.05 * y * y;
}

double synth_log_teff(int route, double x, double e, double y)
{
    return 3.76 + (route ? 0.02 : 0.0) + 0.4 * x - 0.2 * e + 0.05 * sin(3.0 * x) + 0.02 * y - 0.01 * y * y;
}

double synth_mass(int route, double x, double e, double y)
{
    (void)route;
    return pow(10.0, x) * (1.0 - 0.2 * e * (1.0 + 0.1 * y));
}

double synth_remnant_mass(int route, double x, double y) { return (route ? 0.6 : 0.4) + 0.1 * x + 0.01 * y; }

int synth_phase(int route, int j, int n_eep)
{
    double e = (double)j / (n_eep - 1);
    if (route == 0)
        return e < 0.4 ? HRT_PHASE_MS : HRT_PHASE_RGB;
    return e < 25.0 / 60.0 ? HRT_PHASE_MS : e < 50.0 / 60.0 ? HRT_PHASE_RGB : HRT_PHASE_CHEB;
}

int synth_write(const synth_spec *s, const char *path, hrt_error *err)
{
    const char *kp0[] = {"start", "turn", "end"};
    const char *kp1[] = {"start", "turn", "ignite", "end"};
    int seg0[] = {20 * s->seg_scale, 30 * s->seg_scale};
    int seg1[] = {25 * s->seg_scale, 25 * s->seg_scale, 10 * s->seg_scale};
    hrt_route_spec routes[2] = {{"low", 3, kp0, seg0}, {"high", 4, kp1, seg1}};
    int nj[2] = {50 * s->seg_scale + 1, 60 * s->seg_scale + 1};
    hrt_builder *b;
    int rc = hrt_builder_new(2, routes, Z_REF, &b, err);
    if (rc)
        return rc;
    hrt_builder_set_attribute(b, "description", "synthetic test grid (known functions)", NULL);
    int nmax = nj[1];
    double *age = malloc(7 * nmax * sizeof(double));
    int *ph = malloc(nmax * sizeof(int));
    for (int iz = 0; iz < s->n_z && rc == 0; iz++) {
        double z = synth_z(s, iz), y = synth_feh(z);
        for (int route = 0; route < 2 && rc == 0; route++) {
            int n = route ? s->n_high : s->n_low;
            double lo = route ? log10(s->mass_b) + 0.02 : log10(s->mass_lo);
            double hi = route ? log10(s->mass_hi) : log10(s->mass_b) - 0.02;
            for (int i = 0; i < n && rc == 0; i++) {
                double u = n > 1 ? (double)i / (n - 1) : 0.0;
                if (s->jitter && i > 0 && i < n - 1)
                    u += 0.3 / (n - 1) * sin(7.0 * i + iz);
                double x = lo + (hi - lo) * u;
                int J = nj[route];
                double *la = age, *ll = age + nmax, *lt = age + 2 * nmax, *m = age + 3 * nmax;
                double *he = age + 4 * nmax, *co = age + 5 * nmax;
                for (int j = 0; j < J; j++) {
                    double e = (double)j / (J - 1);
                    la[j] = synth_log_age(route, x, e, y);
                    ll[j] = synth_log_l(route, x, e, y);
                    lt[j] = synth_log_teff(route, x, e, y);
                    m[j] = synth_mass(route, x, e, y);
                    he[j] = 0.1 * pow(10.0, x) * e;
                    co[j] = 0.05 * pow(10.0, x) * e * e;
                    ph[j] = synth_phase(route, j, J);
                }
                hrt_track_data t = {pow(10.0, x), route, route ? HRT_REMNANT_CO_WD : HRT_REMNANT_HE_WD,
                                    synth_remnant_mass(route, x, y), (size_t)J, la, ll, lt, NULL, m, he, co, ph,
                                    0, NULL};
                rc = hrt_builder_add_eep_track(b, z, &t, err);
            }
        }
        double bnd = s->mass_b;
        if (rc == 0)
            rc = hrt_builder_set_route_boundaries(b, z, &bnd, err);
    }
    if (rc == 0)
        rc = hrt_builder_write(b, path, err);
    free(age);
    free(ph);
    hrt_builder_free(b);
    return rc;
}
