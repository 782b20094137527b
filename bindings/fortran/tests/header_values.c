/* The header's compile-time constants as the C compiler sees them, for the
 * Fortran test to compare with the module's parameters (which are written by
 * hand): 0 HRT_ABI_VERSION, 1 HRT_PHASE_N, 2 HRT_PHASE_SLOTS, 3 HRT_REMNANT_N,
 * 4 HRT_REMNANT_SLOTS; -1 for anything else. */
#include "hrtrail.h"

int ref_header_value(int which);

int ref_header_value(int which)
{
    switch (which) {
    case 0: return HRT_ABI_VERSION;
    case 1: return HRT_PHASE_N;
    case 2: return HRT_PHASE_SLOTS;
    case 3: return HRT_REMNANT_N;
    case 4: return HRT_REMNANT_SLOTS;
    default: return -1;
    }
}
