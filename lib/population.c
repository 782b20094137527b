/* hrtrail: population (being written). */
#include "internal.h"
