/* hrtrail: the names of IMF and star-formation-history kinds. */
#include <string.h>

#include "hrtrail.h"

typedef struct kind_name {
    int kind;
    char name[16];
} kind_name;

/* The first HRT_IMF_COUNT entries are in kind order (hrt_imf_name indexes
 * them); the short names after them are accepted as input only. */
static const kind_name imf_names[] = {
    {HRT_IMF_SALPETER_1955, "salpeter1955"}, {HRT_IMF_KROUPA_2001, "kroupa2001"},
    {HRT_IMF_CHABRIER_2003_SYSTEM, "chabrier2003"}, {HRT_IMF_POWER_LAW, "powerlaw"},
    {HRT_IMF_SALPETER_1955, "salpeter"}, {HRT_IMF_KROUPA_2001, "kroupa"},
    {HRT_IMF_CHABRIER_2003_SYSTEM, "chabrier"}, {HRT_IMF_POWER_LAW, "power-law"},
};

/* In kind order. */
static const kind_name sfh_names[] = {
    {HRT_SFH_BURST, "burst"}, {HRT_SFH_CONSTANT, "constant"}, {HRT_SFH_EXPONENTIAL, "exponential"},
    {HRT_SFH_TABLE, "table"},
};

static int kind_from_name(const kind_name *table, size_t n, const char *name)
{
    if (!name)
        return -1;
    for (size_t i = 0; i < n; i++)
        if (strcmp(name, table[i].name) == 0)
            return table[i].kind;
    return -1;
}

const char *hrt_imf_name(int kind)
{
    return kind >= 0 && kind < HRT_IMF_COUNT ? imf_names[kind].name : "unknown";
}

int hrt_imf_from_name(const char *name) { return kind_from_name(imf_names, sizeof imf_names / sizeof imf_names[0], name); }

const char *hrt_sfh_name(int kind) { return kind >= 0 && kind < HRT_SFH_COUNT ? sfh_names[kind].name : "unknown"; }

int hrt_sfh_from_name(const char *name) { return kind_from_name(sfh_names, sizeof sfh_names / sizeof sfh_names[0], name); }
