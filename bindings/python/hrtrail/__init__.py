"""hrtrail: stellar evolution tracks from HDF5 grids, from Python.

A binding of libhrtrail (include/hrtrail.h) on the standard library's ctypes,
with NumPy used for whole-array calls when it is installed.

    import hrtrail
    with hrtrail.Grid() as g:                       # the default grid
        s = g.state(1.0, 4.57e9, z=0.014)           # one star: a State
        st = g.evaluate(masses, ages, z=0.014)      # many: STATE_DTYPE array
        iso = g.isochrone(1e9, z=0.014)
        star = g.star(2.0, 0.014)                   # one track, any age
        star.phases(), star.keypoints(), star.remnant
        st.to_pandas(), st.to_table()               # DataFrame; astropy QTable with units
        pop = hrtrail.Population(10**6, imf=hrtrail.IMF("kroupa2001", 0.08, 100), z=0.014)
        sums = pop.run(g, [1e9, 1e10])              # Summary per epoch (population.py)
        model = hrtrail.FitModel(g)                 # fitting (fit.py)
        r = model.fit(hrtrail.Observation(teff_k=5772, teff_k_sigma=50, log_l_lsun=0, log_l_lsun_sigma=0.02))
        hrtrail.forecast(g, r.samples, dt_yr=[1e8])
    hrtrail.upgrade_grid("old.h5", "new.h5")       # a grid of an older format version
    hrtrail.Importer(), hrtrail.Builder(...)       # building grids (build.py)

Names and units: fields are the vocabulary of tracks/FORMAT.md, units in the
names (initial_mass_msun, age_yr, log_l_lsun, log_teff_k, ...): masses in Msun,
ages in yr since birth, z the metal mass fraction, log = log10, L in nominal
Lsun, R in nominal Rsun, Teff in K, g in cm s^-2 (IAU 2015 Resolution B3).
Phases and remnants are hrtrail's codes (Phase, Remnant).  Library errors are
raised as HrtrailError subclasses carrying the status code and the library's
message.

The library is found through the environment variable HRTRAIL_LIB (a path),
else where meson installed it, else by its soname libhrtrail.so.1.  At import
the library's ABI number and sizeof(hrt_state) are checked against what this
package was written for (AbiMismatchError, an ImportError, otherwise).

Accuracy: the default grid is a semi-analytic model (tracks/MODEL.md) meant for
population-level work; the answers are as good as the grid.
"""
from ._clib import ABI_VERSION, AbiMismatchError, HrtError, HrtPhaseSpan, HrtState, lib as _lib
from ._clib import library_path, text as _text
from .core import STATE_DTYPE, ExtraQuantity, Grid, PhaseSpan, RemnantInfo, Star, State, States, upgrade_grid
from .core import collapse_remnant, wd_log_l, wd_radius_rsun
from .core import BC_V_TEFF_RANGE_K, Magnitudes, bc_v, magnitudes
from .enums import Flag, Interp, Phase, Remnant, Status, phase_from_key, remnant_from_key
from .errors import GridFileError, HrtrailError, InvalidInputError, OutsideGridError
from .population import DEFAULT_HR, IMF, SFH, HRBinning, Population, Summary, ZDist, max_threads, merge
from .parts import Catalogue, Part, merge_parts
from .fit import (SAMPLE_DTYPE, FitFlag, FitModel, FitResult, Forecast, Interval, Observation, distance_m,
                  flux_from_mbol, forecast)
from .mainseq import MainSequence, MsDistance, MsEstimate, MsValue
from .build import (accuracy, Builder, ImportReport, Importer, KeypointResult, RouteSpec, TrackReport, default_route,
                    default_routes, keypoints_find, keypoints_route)
from .convert import fits_to_pandas, samples_to_pandas, to_pandas, to_table

#: Version of the loaded library (hrt_version), e.g. "0.1.0".
__version__ = _text(_lib.hrt_version())


def library_abi_version():
    """ABI number reported by the loaded library (hrt_abi_version)."""
    return _lib.hrt_abi_version()


def default_grid_path():
    """Path of the grid Grid() opens: $HRTRAIL_GRID, else the installed default grid."""
    return _text(_lib.hrt_default_grid_path())


__all__ = [
    "ABI_VERSION", "AbiMismatchError", "Flag", "Grid", "GridFileError", "HrtError", "HrtPhaseSpan",
    "HrtState", "HrtrailError", "Interp", "InvalidInputError", "OutsideGridError", "Phase",
    "PhaseSpan", "Remnant", "RemnantInfo", "STATE_DTYPE", "Star", "State", "States", "Status",
    "default_grid_path", "library_abi_version", "library_path", "upgrade_grid", "wd_log_l",
    "wd_radius_rsun", "collapse_remnant", "phase_from_key", "remnant_from_key",
    "BC_V_TEFF_RANGE_K", "Magnitudes", "bc_v", "magnitudes",
    "DEFAULT_HR", "IMF", "SFH", "HRBinning", "Population", "Summary", "ZDist", "max_threads", "merge",
    "Catalogue", "Part", "merge_parts",
    "SAMPLE_DTYPE", "FitFlag", "FitModel", "FitResult", "Forecast", "Interval", "Observation", "distance_m",
    "flux_from_mbol", "forecast", "MainSequence", "MsDistance", "MsEstimate", "MsValue",
    "accuracy", "Builder", "ImportReport", "Importer", "KeypointResult", "RouteSpec", "TrackReport", "default_route",
    "default_routes", "keypoints_find", "keypoints_route", "ExtraQuantity",
    "fits_to_pandas", "samples_to_pandas", "to_pandas", "to_table",
]
