/* hrtrail: import (being written). */
#include "internal.h"
