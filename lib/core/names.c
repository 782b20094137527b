/* Texts of status codes, names and keys of enumerations, versions. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "core/core.h"

const char *hrt_strerror(int code)
{
    switch (code) {
#define HRT_ERROR_CASE_(name, value, text) \
    case value:                            \
        return text;
        HRT_ERROR_LIST(HRT_ERROR_CASE_)
#undef HRT_ERROR_CASE_
    default:
        return "unknown status code";
    }
}

const char *hrt_version(void) { return HRT_VERSION_STRING; }
int hrt_abi_version(void) { return HRT_ABI_VERSION; }
size_t hrt_state_size(void) { return sizeof(hrt_state); }

/* Phase names and keys: indexed by hrt_phase. */
static const char phase_names[HRT_PHASE_COUNT][48] = {
    "unknown",
    "pre-main sequence",
    "main sequence",
    "subgiant / Hertzsprung gap",
    "red giant branch",
    "core helium burning",
    "early asymptotic giant branch",
    "thermally pulsing asymptotic giant branch",
    "post-AGB",
    "white dwarf",
    "blue supergiant",
    "red supergiant",
    "Wolf-Rayet",
    "neutron star",
    "black hole",
    "post-RGB contraction",
};
static const char phase_keys[HRT_PHASE_COUNT][12] = {
    "unknown", "pre_ms", "ms", "subgiant", "rgb", "cheb", "eagb", "tpagb",
    "post_agb", "wd", "bsg", "rsg", "wr", "ns", "bh", "post_rgb",
};

const char *hrt_phase_name(int phase)
{
    return (phase >= 0 && phase < HRT_PHASE_COUNT) ? phase_names[phase] : "unknown";
}

const char *hrt_phase_key(int phase)
{
    return (phase >= 0 && phase < HRT_PHASE_COUNT) ? phase_keys[phase] : "unknown";
}

int hrt_phase_from_key(const char *key)
{
    if (!key)
        return HRT_PHASE_UNKNOWN;
    for (int p = 1; p < HRT_PHASE_COUNT; p++)
        if (strcmp(key, phase_keys[p]) == 0)
            return p;
    return HRT_PHASE_UNKNOWN;
}

static const char remnant_names[HRT_REMNANT_COUNT][32] = {
    "none", "helium white dwarf", "carbon-oxygen white dwarf", "oxygen-neon white dwarf",
    "neutron star", "black hole",
};
static const char remnant_keys[HRT_REMNANT_COUNT][8] = {
    "none", "he_wd", "co_wd", "one_wd", "ns", "bh",
};

const char *hrt_remnant_name(int r)
{
    return (r >= 0 && r < HRT_REMNANT_COUNT) ? remnant_names[r] : "unknown";
}

const char *hrt_remnant_key(int r)
{
    return (r >= 0 && r < HRT_REMNANT_COUNT) ? remnant_keys[r] : "unknown";
}

int hrt_remnant_from_key(const char *key)
{
    if (!key)
        return -1;
    for (int r = 0; r < HRT_REMNANT_COUNT; r++)
        if (strcmp(key, remnant_keys[r]) == 0)
            return r;
    return -1;
}

static const char interp_names[HRT_INTERP_COUNT][8] = {"steffen", "linear", "cspline", "akima"};

const char *hrt_interp_name(int interp)
{
    return (interp >= 0 && interp < HRT_INTERP_COUNT) ? interp_names[interp] : "unknown";
}

int hrt_interp_from_name(const char *name)
{
    if (!name)
        return -1;
    for (int i = 0; i < HRT_INTERP_COUNT; i++)
        if (strcmp(name, interp_names[i]) == 0)
            return i;
    return -1;
}
