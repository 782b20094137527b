/* The grid file's dataset names, units and meanings, by format version
 * (tracks/FORMAT.md).  Units are astropy unit strings: dex(...) for a log10
 * of a quantity in that unit. */
#include <stdlib.h>
#include <string.h>

#include "util/schema.h"

const trail_schema trail_schema_names = {
    .group_z = {"Z", "z", NULL, "metal mass fraction of the group"},
    .initial_mass = {"initial_mass", "initial_mass_msun", "solMass", "initial mass of each track"},
    .route = {"route", "route", NULL, "route of each track: index into routes/names"},
    .n_eep = {"n_eep", "n_eep", NULL, "number of valid EEPs of each track"},
    .remnant = {"remnant", "remnant", NULL, "remnant kind left after the last valid EEP (hrtrail code)"},
    .remnant_mass = {"remnant_mass", "remnant_mass_msun", "solMass", "mass of that remnant"},
    .boundary = {"route_boundary_mass", "route_boundary_mass_msun", "solMass",
                 "initial mass separating route b from route b+1"},
    .eep =
        {
            [TRAIL_F_LOG_AGE] = {"log_age", "log_age_yr", "dex(yr)", "log10 of the age since birth"},
            [TRAIL_F_LOG_L] = {"log_L", "log_l_lsun", "dex(solLum)", "log10 of the luminosity"},
            [TRAIL_F_LOG_TEFF] = {"log_Teff", "log_teff_k", "dex(K)", "log10 of the effective temperature"},
            [TRAIL_F_LOG_R] = {"log_R", "log_r_rsun", "dex(solRad)", "log10 of the radius"},
            [TRAIL_F_MASS] = {"mass", "mass_msun", "solMass", "current mass"},
            [TRAIL_F_HE_CORE] = {"he_core_mass", "he_core_mass_msun", "solMass", "helium core mass"},
            [TRAIL_F_CO_CORE] = {"co_core_mass", "co_core_mass_msun", "solMass", "carbon-oxygen core mass"},
        },
    .phase = {"phase", "phase", NULL, "phase from this EEP to the next (hrtrail code)"},
};

const char trail_known_keypoints[TRAIL_N_KNOWN_KEYPOINTS][16] = {
    "birthline",   "zams",      "tams",        "rgb_base",      "he_ignition", "cheb_start",
    "cheb_end",    "first_pulse", "agb_end",   "envelope_loss", "wd_onset",    "core_collapse",
};

int trail_keypoint_index(const char *name)
{
    for (int k = 0; k < TRAIL_N_KNOWN_KEYPOINTS; k++)
        if (strcmp(name, trail_known_keypoints[k]) == 0)
            return k;
    return -1;
}

void trail_route_clear(route_layout *L)
{
    free(L->name);
    for (size_t k = 0; L->kp_names && k < L->n_kp; k++)
        free(L->kp_names[k]);
    free(L->kp_names);
    free(L->kp_eep);
}

void trail_routes_free(route_layout *routes, size_t n)
{
    for (size_t r = 0; routes && r < n; r++)
        trail_route_clear(&routes[r]);
    free(routes);
}

void trail_attrs_free(attr_pair *attrs, size_t n)
{
    for (size_t a = 0; attrs && a < n; a++) {
        free(attrs[a].name);
        free(attrs[a].value);
    }
    free(attrs);
}

/* Names an extra quantity may not take: the standard quantities of the
 * vocabulary (tracks/FORMAT.md) and what the state and the CLI already name. */
static const char *const reserved_extra_names[] = {
    "initial_mass_msun", "z", "feh", "z_ref", "age_yr", "log_age_yr", "log_l_lsun", "l_lsun", "log_teff_k",
    "teff_k", "log_r_rsun", "r_rsun", "log_g_cgs", "mass_msun", "he_core_mass_msun", "co_core_mass_msun",
    "phase", "route", "remnant", "remnant_mass_msun", "eep", "flags", "status", "phase_fraction",
    "phase_start_yr", "phase_end_yr", "n_eep", "track"};

int trail_extra_name_ok(const char *name)
{
    if (!name || !(name[0] >= 'a' && name[0] <= 'z') || strlen(name) >= TRAIL_EXTRA_NAME_LEN)
        return 0;
    for (const char *p = name; *p; p++)
        if (!((*p >= 'a' && *p <= 'z') || (*p >= '0' && *p <= '9') || *p == '_'))
            return 0;
    for (size_t k = 0; k < sizeof reserved_extra_names / sizeof *reserved_extra_names; k++)
        if (strcmp(name, reserved_extra_names[k]) == 0)
            return 0;
    return 1;
}

int trail_extra_text_ok(const char *s)
{
    if (!s || strlen(s) >= TRAIL_EXTRA_TEXT_LEN)
        return 0;
    for (const char *p = s; *p; p++)
        if ((unsigned char)*p < 0x20 || (unsigned char)*p > 0x7e)
            return 0;
    return 1;
}
