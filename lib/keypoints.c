/* hrtrail: keypoints (being written). */
#include "internal.h"
