/*
 * hrtrail: stellar evolution tracks from HDF5 grids, interpolated between
 * masses, metallicities and ages on equivalent evolutionary points (EEPs).
 *
 * Copyright (C) 2026 the hrtrail authors.  GPL-3.0-or-later.
 *
 * The one header users include.  The API comes in four layers, one header
 * each, read in this order:
 *   hrtrail/core.h        conventions, constants, status codes, the state of
 *                         a star; opening a grid; batches (hrt_eval), one
 *                         star (hrt_star_*), isochrones, remnant physics
 *   hrtrail/build.h       writing grids: EEP resampling (hrt_builder_*),
 *                         keypoints (hrt_keypoints_*), importing text tracks
 *                         (hrt_import_*)
 *   hrtrail/population.h  IMFs, star-formation histories, metallicity
 *                         spreads, population runs and mergeable summaries
 *   hrtrail/fit.h         the posterior of an observed star (hrt_fit_*) and
 *                         its future (hrt_forecast)
 */
#ifndef HRTRAIL_H
#define HRTRAIL_H

#include "hrtrail/core.h"
#include "hrtrail/build.h"
#include "hrtrail/population.h"
#include "hrtrail/fit.h"

#endif /* HRTRAIL_H */
