/* hrtrail: fit (being written). */
#include "internal.h"
