"""The main sequence as a calibration curve (hrt_ms_*): Teff <-> L, R, mass, log g, age, and distances.

    with hrtrail.Grid() as g:
        ms = hrtrail.MainSequence(g, z=0.014, age_max_yr=13.8e9)
        e = ms.from_teff(5770, 60)          # e.log_l_lsun.median, .lo, .hi, .band_lo, .band_hi
        ms.from_log_l(1.5, 0.05).log_teff_k
        ms.distance(5770, 60, mbol=9.9, mbol_sigma=0.05).distance_pc

The band is sampled once (400 initial masses x 96 ages along each main
sequence, ZAMS to TAMS; not the pre-main sequence); each model weighs
M^-imf_alpha dM x the time spent there (a population formed at a constant
rate), times a Gaussian in the measured quantity.  Each quantity comes as the
weighted median and 15.87/84.13 % points (band width and measurement error
together) and the band's ends at exactly the given value.  The default counts
the ages of today's stars, up to 13.8 Gyr; age_max_yr=math.inf counts every
main-sequence age, which on the default grid includes very-low-mass stars of
up to 1e13 yr, hotter and brighter late in their main sequence.
"""
import collections
import ctypes
import math
from typing import Optional, Union

from ._clib import HrtMsDistanceResult, HrtMsEstimate, HrtMsOptions, lib
from .core import _Owned
from .errors import InvalidInputError, check, new_error
from .enums import Status
from . import units as _u

Number = Union[int, float]

#: One quantity of an estimate: weighted median, 15.87/84.13 % points, and the band's ends.
MsValue = collections.namedtuple("MsValue", "median lo hi band_lo band_hi")
MsValue.__doc__ = ("One quantity of a main-sequence estimate (hrt_ms_value): weighted median, 15.87th (lo) and "
                   "84.13th (hi) percentiles, and the least and greatest value among models of exactly the given "
                   "value (band_lo, band_hi; NaN: none).")

MS_QUANTITIES = ("log_l_lsun", "log_teff_k", "log_r_rsun", "log_g_cgs", "mass_msun", "initial_mass_msun", "age_yr")


class MsEstimate:
    """The main-sequence star(s) of a given Teff or L (hrt_ms_estimate): status, n_models, z, and an MsValue
    for each of log_l_lsun, log_teff_k, log_r_rsun, log_g_cgs, mass_msun, initial_mass_msun, age_yr."""

    def __init__(self, c):
        self.status = Status(c.status)
        self.n_models = c.n_models
        self.z = c.z
        for n in MS_QUANTITIES:
            v = getattr(c, n)
            setattr(self, n, MsValue(v.median, v.lo, v.hi, v.band_lo, v.band_hi))

    def as_dict(self) -> dict:
        """The estimate as a flat dict: NAME (median), NAME_lo, NAME_hi, NAME_band_lo, NAME_band_hi."""
        d = {"status": int(self.status), "n_models": self.n_models, "z": self.z}
        for n in MS_QUANTITIES:
            v = getattr(self, n)
            d.update({n: v.median, n + "_lo": v.lo, n + "_hi": v.hi, n + "_band_lo": v.band_lo,
                      n + "_band_hi": v.band_hi})
        return d

    def __repr__(self):
        l_ = self.log_l_lsun
        return "MsEstimate(log_l_lsun=%.3f [%.3f, %.3f], Teff=%.0f K, n_models=%d)" % (
            l_.median, l_.lo, l_.hi, 10 ** self.log_teff_k.median, self.n_models)


#: A distance from the main sequence: distance_pc and parallax_mas as (median, lo, hi).
MsDistance = collections.namedtuple("MsDistance", "distance_pc parallax_mas n_models")
MsDistance.__doc__ = ("Spectroscopic parallax (hrt_ms_distance_result): distance_pc and parallax_mas as "
                      "hrtrail.Interval (median, lo, hi: 15.87/84.13 %), and the models that carry weight.")


class MainSequence(_Owned):
    """The main-sequence band of a grid at one metallicity (hrt_ms_new), sampled once, shared by any number of
    queries and threads.

    MainSequence(grid, z=None, feh=None, age_min_yr=None, age_max_yr=None, imf_alpha=None, n_masses=None,
                 n_ages=None)

    z or feh        metallicity (default: the grid's Z_ref); [Fe/H] = log10(z / z_ref)
    age_min_yr      youngest age counted, yr (default 0: each star's ZAMS)
    age_max_yr      oldest age counted, yr (default 13.8e9, today's stars; math.inf: to each star's TAMS)
    imf_alpha       mass prior dN/dM ~ M^-imf_alpha (default 0; 2.35: Salpeter 1955)
    n_masses, n_ages   sampling (default 400 x 96)
    Cost: about 25 ms on the default grid.  Raises OutsideGridError for a Z outside the grid,
    InvalidInputError for bad options, HrtrailError (NO_MATCH) when no star is on its main
    sequence within the ages.  The object keeps its grid open; Grid.close() closes it.
    """

    _what = "main sequence"

    def __init__(self, grid, z: Optional[Number] = None, feh: Optional[Number] = None,
                 age_min_yr: Optional[Number] = None, age_max_yr: Optional[Number] = None,
                 imf_alpha: Optional[Number] = None, n_masses: Optional[int] = None, n_ages: Optional[int] = None):
        self._h = None
        self.grid = grid
        if z is not None and feh is not None:
            raise InvalidInputError(Status.INVALID, "give z or feh, not both")
        zref = lib.hrt_grid_z_ref(grid._handle)
        self.z = zref * 10.0 ** float(feh) if feh is not None else zref if z is None else float(z)
        o = HrtMsOptions()
        lib.hrt_ms_options_default(ctypes.byref(o))
        for n, v, kind in (("age_min_yr", age_min_yr, "age"), ("age_max_yr", age_max_yr, "age"),
                           ("imf_alpha", imf_alpha, "fraction")):
            if v is not None:
                setattr(o, n, _u.value(v, kind, n))
        if n_masses is not None:
            o.n_masses = int(n_masses)
        if n_ages is not None:
            o.n_ages = int(n_ages)
        h = ctypes.c_void_p()
        e, pe = new_error()
        check(lib.hrt_ms_new(grid._handle, self.z, ctypes.byref(o), ctypes.byref(h), pe), e, "hrt_ms_new")
        self._h = h
        grid._stars.add(self)  # Grid.close() frees it first: it refers to the grid

    def _free(self, h):
        """Free the sampled band (close() or collection)."""
        lib.hrt_ms_free(h)

    @property
    def teff_range(self):
        """(lowest, highest) Teff of the sampled main sequence, K (hrt_ms_teff_range)."""
        lo, hi = ctypes.c_double(), ctypes.c_double()
        check(lib.hrt_ms_teff_range(self._handle, ctypes.byref(lo), ctypes.byref(hi)), None, "hrt_ms_teff_range")
        return lo.value, hi.value

    @property
    def log_l_range(self):
        """(lowest, highest) log10 L/Lsun of the sampled main sequence (hrt_ms_log_l_range)."""
        lo, hi = ctypes.c_double(), ctypes.c_double()
        check(lib.hrt_ms_log_l_range(self._handle, ctypes.byref(lo), ctypes.byref(hi)), None, "hrt_ms_log_l_range")
        return lo.value, hi.value

    def from_teff(self, teff_k: Number, teff_k_sigma: Number = 0.0) -> MsEstimate:
        """L, R, mass, log g and age of a main-sequence star of Teff teff_k +- teff_k_sigma, K (hrt_ms_from_teff).
        Raises HrtrailError (Status.NO_MATCH) when no main-sequence star of the grid has that Teff."""
        out = HrtMsEstimate()
        e, pe = new_error()
        check(lib.hrt_ms_from_teff(self._handle, _u.value(teff_k, "temperature", "teff_k"),
                                   _u.value(teff_k_sigma, "temperature", "teff_k_sigma"), ctypes.byref(out), pe),
              e, "hrt_ms_from_teff")
        return MsEstimate(out)

    def from_log_l(self, log_l_lsun: Number, log_l_sigma: Number = 0.0) -> MsEstimate:
        """The inverse: Teff (and the rest) of a main-sequence star of log10 L/Lsun +- log_l_sigma, dex
        (hrt_ms_from_log_l)."""
        out = HrtMsEstimate()
        e, pe = new_error()
        check(lib.hrt_ms_from_log_l(self._handle, float(log_l_lsun), float(log_l_sigma), ctypes.byref(out), pe),
              e, "hrt_ms_from_log_l")
        return MsEstimate(out)

    def distance(self, teff_k: Number, teff_k_sigma: Number = 0.0, flux_w_m2: Optional[Number] = None,
                 flux_sigma_w_m2: Number = 0.0, mbol: Optional[Number] = None, mbol_sigma: Number = 0.0) -> MsDistance:
        """Distance of a main-sequence star of Teff teff_k +- teff_k_sigma (K) from its bolometric flux (W m^-2)
        or its apparent bolometric magnitude (IAU 2015 B2 zero point) (hrt_ms_distance)."""
        from .fit import Interval
        if (flux_w_m2 is None) == (mbol is None):
            raise InvalidInputError(Status.INVALID, "give flux_w_m2 or mbol (one of them)")
        if mbol is not None:
            f = lib.hrt_fit_flux_from_mbol(float(mbol))
            fs = f * 0.4 * math.log(10.0) * float(mbol_sigma)
        else:
            f = _u.value(flux_w_m2, "flux", "flux_w_m2")
            fs = _u.value(flux_sigma_w_m2, "flux", "flux_sigma_w_m2")
        out = HrtMsDistanceResult()
        e, pe = new_error()
        check(lib.hrt_ms_distance(self._handle, _u.value(teff_k, "temperature", "teff_k"),
                                  _u.value(teff_k_sigma, "temperature", "teff_k_sigma"), f, fs, ctypes.byref(out), pe),
              e, "hrt_ms_distance")
        iv = lambda c: Interval(c.median, c.lo, c.hi)  # noqa: E731
        return MsDistance(iv(out.distance_pc), iv(out.parallax_mas), out.n_models)
