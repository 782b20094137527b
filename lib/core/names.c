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

/* Phases and remnant kinds in the order of their lists (HRT_PHASE_LIST,
 * HRT_REMNANT_LIST): code, key, text. */
typedef struct code_entry {
    int code;
    char key[12];
    char text[48];
} code_entry;

#define CODE_ENTRY_(name, code, key, text) {code, key, text},
static const code_entry phases[] = {HRT_PHASE_LIST(CODE_ENTRY_)};
static const code_entry remnants[] = {HRT_REMNANT_LIST(CODE_ENTRY_)};
#undef CODE_ENTRY_
_Static_assert(sizeof phases / sizeof phases[0] == HRT_PHASE_N, "HRT_PHASE_N must count HRT_PHASE_LIST");
_Static_assert(sizeof remnants / sizeof remnants[0] == HRT_REMNANT_N, "HRT_REMNANT_N must count HRT_REMNANT_LIST");

static const code_entry *by_code(const code_entry *t, size_t n, int code)
{
    for (size_t i = 0; i < n; i++)
        if (t[i].code == code)
            return &t[i];
    return NULL;
}

static const code_entry *by_key(const code_entry *t, size_t n, const char *key)
{
    if (key)
        for (size_t i = 0; i < n; i++)
            if (strcmp(key, t[i].key) == 0)
                return &t[i];
    return NULL;
}

const char *hrt_phase_name(int phase)
{
    const code_entry *e = by_code(phases, HRT_PHASE_N, phase);
    return e ? e->text : "unknown";
}

const char *hrt_phase_key(int phase)
{
    const code_entry *e = by_code(phases, HRT_PHASE_N, phase);
    return e ? e->key : "unknown";
}

int hrt_phase_from_key(const char *key)
{
    const code_entry *e = by_key(phases, HRT_PHASE_N, key);
    return e ? e->code : HRT_PHASE_UNKNOWN;
}

int hrt_phase_code(size_t i) { return i < HRT_PHASE_N ? phases[i].code : -1; }

const char *hrt_remnant_name(int r)
{
    const code_entry *e = by_code(remnants, HRT_REMNANT_N, r);
    return e ? e->text : "unknown";
}

const char *hrt_remnant_key(int r)
{
    const code_entry *e = by_code(remnants, HRT_REMNANT_N, r);
    return e ? e->key : "unknown";
}

int hrt_remnant_from_key(const char *key)
{
    const code_entry *e = by_key(remnants, HRT_REMNANT_N, key);
    return e ? e->code : -1;
}

int hrt_remnant_code(size_t i) { return i < HRT_REMNANT_N ? remnants[i].code : -1; }

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
