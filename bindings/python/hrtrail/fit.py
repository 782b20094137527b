"""Fitting an observed star and forecasting its future (include/hrtrail/fit.h).

    model = FitModel(grid)                                 # the lattice, once per grid (about 0.5 s)
    obs = Observation(teff_k=4700, teff_k_sigma=80, log_l_lsun=1.7, log_l_lsun_sigma=0.05)
    r = model.fit(obs, n_samples=400, seed=3)              # a FitResult
    r.age_yr.median, r.phase, r.samples["initial_mass_msun"]
    f = forecast(grid, r.samples, dt_yr=[1e7, 1e8])         # a Forecast
    model.fit_many([obs, ...], threads=2)                  # many stars, library threads in parallel

Units: Teff in K, log L in dex of nominal Lsun, [Fe/H] in dex, log g in dex
of cm s^-2, flux in W m^-2, m_bol in magnitudes (IAU 2015 B2 scale), distance
in pc, parallax in mas, masses in Msun, ages and times in yr.  Plain numbers
are taken in those units; astropy Quantities are converted (Teff 5.772 kK is
5772 K); anything else raises InvalidInputError.  Intervals are the median
and the 15.87th/84.13th percentiles.  The answers are statistical intervals
on the grid's tracks; the default grid's systematic errors come on top.
"""
import collections
import concurrent.futures
import ctypes
import numbers
import enum
from typing import List, Optional, Sequence, Union

try:
    import numpy as _np
except ImportError:  # NumPy is needed by these calls, not by importing the package
    _np = None

from ._clib import (FIT_OBS_QUANTITIES, FIT_RESULT_INTERVALS, HrtFitModelOptions, HrtFitObs, HrtFitResult,
                    HrtFitSample, HrtForecastResult, HrtForecastState, lib, text)
from .enums import Phase, Remnant, Status
from .core import _Owned
from .errors import InvalidInputError, check, error_for, new_error
from . import units as _u

Number = Union[float, int]

Interval = collections.namedtuple("Interval", "median lo hi")
Interval.__doc__ = "A posterior summary (hrt_fit_interval): median and the 15.87th (lo) and 84.13th (hi) percentiles."

#: NumPy dtype of a posterior draw (struct hrt_fit_sample), field for field.
SAMPLE_DTYPE = _np.dtype(HrtFitSample) if _np is not None else None
#: Names of the mass priors (hrt_fit_mass_prior_name).
MASS_PRIORS = ("kroupa2001", "chabrier2003", "log-flat")

# the unit kind (units.py) of each measured quantity
_OBS_KIND = {"teff_k": "temperature", "log_l_lsun": "fraction", "feh": "fraction", "log_g_cgs": "fraction",
             "flux_w_m2": "flux", "mbol": "magnitude", "distance_pc": "distance", "parallax_mas": "parallax"}


class FitFlag(enum.IntFlag):
    """Bits of FitResult.flags (HRT_FIT_*)."""
    NONE = 0
    MULTIMODAL = 0x1   #: a second phase holds >= 10 % of the posterior
    MASS_EDGE = 0x2    #: the mass interval reaches a limit of the mass prior
    AGE_LIMIT = 0x4    #: the age interval reaches age_max_yr: the prior decides
    FEH_EDGE = 0x8     #: the [Fe/H] interval reaches the edge of the lattice
    POOR_MATCH = 0x10  #: the best model is more than 3 sigma away
    FEW_POINTS = 0x20  #: fewer than 20 effective lattice points: coarse intervals


def _iv(c):
    return Interval(c.median, c.lo, c.hi)


def _phase(p):
    return Phase(p) if p in Phase._value2member_map_ else p


class Observation:
    """What was measured of one star (hrt_fit_obs); unmeasured quantities are NaN.

    Observation(teff_k=..., teff_k_sigma=..., log_l_lsun=..., log_l_lsun_sigma=..., feh=..., feh_sigma=...,
                log_g_cgs=..., log_g_cgs_sigma=..., flux_w_m2=..., flux_w_m2_sigma=..., mbol=..., mbol_sigma=...,
                distance_pc=..., distance_pc_sigma=..., parallax_mas=..., parallax_mas_sigma=...)

    teff_k (K) is required by a fit; give each value with its 1-sigma error.
    Luminosity from one of: log_l_lsun (dex); a bolometric flux (flux_w_m2 in
    W m^-2, or mbol in mag) with distance_pc (pc) or parallax_mas (mas); or
    nothing.  The library checks the combination when fitting.
    """
    __slots__ = ("_c",)
    FIELDS = tuple(n + s for n in FIT_OBS_QUANTITIES for s in ("", "_sigma"))

    def __init__(self, **values):
        self._c = HrtFitObs()
        lib.hrt_fit_obs_init(ctypes.byref(self._c))
        for k, v in values.items():
            if k not in self.FIELDS:
                raise InvalidInputError(Status.INVALID, "Observation: unknown quantity %r (known: %s)"
                                        % (k, ", ".join(self.FIELDS)))
            if v is not None:
                setattr(self._c, k, _u.value(v, _OBS_KIND[k.replace("_sigma", "")], k))

    def __getattr__(self, name):
        if name in Observation.FIELDS:
            return getattr(self._c, name)
        raise AttributeError(name)

    def as_dict(self) -> dict:
        """Every field (NaN: not measured)."""
        return {n: getattr(self._c, n) for n in self.FIELDS}

    def __reduce__(self):
        return (_observation, (self.as_dict(),))

    def __repr__(self):
        return "Observation(%s)" % ", ".join("%s=%g" % (k, v) for k, v in self.as_dict().items() if v == v)


def _observation(d):
    return Observation(**d)


class FitResult:
    """The posterior of one star (hrt_fit_result), and its draws.

    Attributes:
      status              Status (OK, or the failure's code when fit_many(errors="ignore"))
      flags               FitFlag bits
      phase, phase_second most and second most probable Phase (UNKNOWN if none)
      n_obs               measured quantities used
      initial_mass_msun, age_yr, feh, mass_msun, r_rsun, log_l_lsun, teff_k, log_g_cgs, distance_pc
                          Interval(median, lo, hi) in Msun, yr, dex, Msun, Rsun, dex, K, dex, pc
                          (distance_pc NaN unless a flux without a distance was given)
      phase_prob          {Phase: posterior probability}, phases with weight
      phase_mass_msun, phase_age_yr   (Interval within phase, Interval within phase_second)
      chi2_min, n_eff, n_points
      samples             posterior draws, an array of SAMPLE_DTYPE (initial_mass_msun, z, age_yr,
                          log_l_lsun, log_teff_k, phase)
    """

    def __init__(self, c: HrtFitResult, samples):
        try:
            self.status = Status(c.status)
        except ValueError:
            self.status = c.status
        self.flags = FitFlag(c.flags)
        self.phase = _phase(c.phase)
        self.phase_second = _phase(c.phase_second)
        self.n_obs = c.n_obs
        for n in FIT_RESULT_INTERVALS:
            setattr(self, n, _iv(getattr(c, n)))
        self.phase_prob = {_phase(p): c.phase_prob[p] for p in range(len(c.phase_prob)) if c.phase_prob[p] > 0}
        self.phase_mass_msun = (_iv(c.phase_mass_msun[0]), _iv(c.phase_mass_msun[1]))
        self.phase_age_yr = (_iv(c.phase_age_yr[0]), _iv(c.phase_age_yr[1]))
        self.chi2_min, self.n_eff, self.n_points = c.chi2_min, c.n_eff, c.n_points
        self.samples = samples

    def as_dict(self) -> dict:
        """Flat dict in the command line's names: each interval as NAME, NAME_lo, NAME_hi; phase keys."""
        d = {"status": getattr(self.status, "name", self.status)}
        for n in FIT_RESULT_INTERVALS:
            iv = getattr(self, n)
            d[n], d[n + "_lo"], d[n + "_hi"] = iv.median, iv.lo, iv.hi
        d["phase"] = getattr(self.phase, "key", self.phase)
        d["phase_prob"] = self.phase_prob.get(self.phase, 0.0)
        d["phase_second"] = getattr(self.phase_second, "key", self.phase_second)
        d["phase_second_prob"] = self.phase_prob.get(self.phase_second, 0.0) if self.phase_second else 0.0
        d["flags"] = int(self.flags)
        d["n_obs"], d["chi2_min"], d["n_eff"], d["n_points"] = self.n_obs, self.chi2_min, self.n_eff, self.n_points
        return d

    def __repr__(self):
        return ("<hrtrail.FitResult %s: initial mass %.4g (+%.3g -%.3g) Msun, age %.4g yr, phase %s>" % (
            getattr(self.status, "name", self.status), self.initial_mass_msun.median,
            self.initial_mass_msun.hi - self.initial_mass_msun.median,
            self.initial_mass_msun.median - self.initial_mass_msun.lo, self.age_yr.median,
            getattr(self.phase, "key", self.phase)))


class FitModel(_Owned):
    """The fitting lattice of a grid (hrt_fit_model): prepared once, shared by any number of fits and threads.

    FitModel(grid, mass_prior="kroupa2001", mass_min_msun=None, mass_max_msun=None, age_max_yr=None,
             feh_min=None, feh_max=None, feh_step_dex=None, log_mass_step_dex=None)

    mass_prior           "kroupa2001", "chabrier2003" or "log-flat" (dN/dM of the initial mass)
    mass_min/max_msun    limits of the mass prior, Msun (default: the grid's)
    age_max_yr           age prior uniform in [0, age_max_yr], yr (default 13.8e9)
    feh_min, feh_max     [Fe/H] range of the lattice, dex (default: the grid's)
    feh_step_dex         [Fe/H] node spacing, dex (default 0.1)
    log_mass_step_dex    lattice spacing in log10 initial mass, dex (default 0.02)
    None takes the library's default.  Cost: about 0.5 s and 40 MB on the
    default grid with the defaults.  The model keeps its grid open.  Raises
    InvalidInputError / OutsideGridError as hrt_fit_model_new reports.
    Grid.close() also closes the model.
    """

    def __init__(self, grid, mass_prior: Union[str, int] = "kroupa2001", mass_min_msun: Optional[Number] = None,
                 mass_max_msun: Optional[Number] = None, age_max_yr: Optional[Number] = None,
                 feh_min: Optional[Number] = None, feh_max: Optional[Number] = None,
                 feh_step_dex: Optional[Number] = None, log_mass_step_dex: Optional[Number] = None):
        self._h = None
        self.grid = grid
        o = HrtFitModelOptions()
        lib.hrt_fit_model_options_default(ctypes.byref(o))
        if isinstance(mass_prior, str):
            p = lib.hrt_fit_mass_prior_from_name(mass_prior.encode())
            if p < 0:
                raise InvalidInputError(Status.INVALID, "unknown mass prior %r (known: %s)"
                                        % (mass_prior, ", ".join(MASS_PRIORS)))
            mass_prior = p
        o.mass_prior = int(mass_prior)
        for n, v, kind in (("mass_min_msun", mass_min_msun, "mass"), ("mass_max_msun", mass_max_msun, "mass"),
                           ("age_max_yr", age_max_yr, "age"), ("feh_min", feh_min, "fraction"),
                           ("feh_max", feh_max, "fraction"), ("feh_step_dex", feh_step_dex, "fraction"),
                           ("log_mass_step_dex", log_mass_step_dex, "fraction")):
            if v is not None:
                setattr(o, n, _u.value(v, kind, n))
        h = ctypes.c_void_p()
        e, pe = new_error()
        check(lib.hrt_fit_model_new(grid._handle, ctypes.byref(o), ctypes.byref(h), pe), e, "hrt_fit_model_new")
        self._h = h
        grid._stars.add(self)  # Grid.close() frees the model first: it refers to the grid

    _what = "fit model"

    def _free(self, h):
        """Free the lattice (close() or collection)."""
        lib.hrt_fit_model_free(h)

    @property
    def options(self) -> dict:
        """The options the model was made with, defaults filled in (hrt_fit_model_get_options)."""
        o = HrtFitModelOptions()
        check(lib.hrt_fit_model_get_options(self._handle, ctypes.byref(o)), None, "hrt_fit_model_get_options")
        d = {n: getattr(o, n) for n, _ in HrtFitModelOptions._fields_ if n != "reserved_"}
        d["mass_prior"] = text(lib.hrt_fit_mass_prior_name(o.mass_prior))
        return d

    def __reduce__(self):
        """Pickles as its grid and options: the lattice is rebuilt where it is unpickled."""
        o = self.options
        return (_reduce_model, (self.grid, o.pop("mass_prior"), o))

    @property
    def memory_bytes(self) -> int:
        """Bytes held by the lattice (hrt_fit_model_memory_bytes)."""
        return lib.hrt_fit_model_memory_bytes(self._handle)

    @property
    def feh_nodes(self):
        """[Fe/H] of the lattice's nodes, dex (array)."""
        h = self._handle
        return _np.array([lib.hrt_fit_model_feh(h, k) for k in range(lib.hrt_fit_model_n_feh(h))])

    def _fit(self, obs, seed, n_samples):
        if not isinstance(obs, Observation):
            raise InvalidInputError(Status.INVALID, "an Observation expected, not %s" % type(obs).__name__)
        if isinstance(seed, bool) or not isinstance(seed, numbers.Integral) or not 0 <= seed < 2 ** 64:
            raise InvalidInputError(Status.DOMAIN, "seed: a whole number in [0, 2^64) expected, not %r" % (seed,))
        if isinstance(n_samples, bool) or not isinstance(n_samples, numbers.Integral) or n_samples < 0:
            raise InvalidInputError(Status.DOMAIN, "n_samples: a whole number >= 0 expected, not %r" % (n_samples,))
        res = HrtFitResult()
        samples = _np.zeros(int(n_samples), dtype=SAMPLE_DTYPE)
        e, pe = new_error()
        rc = lib.hrt_fit_star(self._handle, ctypes.byref(obs._c), int(seed), int(n_samples),
                              samples.ctypes.data if n_samples else None, ctypes.byref(res), pe)
        return rc, e, FitResult(res, samples)

    def fit(self, obs: Observation, seed: int = 1, n_samples: int = 0) -> FitResult:
        """The posterior of one observed star (hrt_fit_star).

        seed       seed of the random draws (samples, distance interval); same seed, same result
        n_samples  posterior draws wanted (FitResult.samples)
        Raises InvalidInputError (bad sigma, no Teff, luminosity twice, ...) or
        HrtrailError with Status.NO_MATCH (no model near the observation).
        """
        rc, e, r = self._fit(obs, seed, n_samples)
        check(rc, e, "hrt_fit_star")
        return r

    def fit_many(self, observations: Sequence[Observation], seed: int = 1, n_samples: int = 0, threads: int = 1,
                 errors: str = "raise") -> List[FitResult]:
        """fit() of many stars, on `threads` threads (the library's fits run outside the GIL).

        Each star uses the same seed (as the command line's --input).  errors:
        "raise" raises the first failing star's error (its index in the message);
        "ignore" returns every result, a failed one with its status set.
        """
        if errors not in ("raise", "ignore"):
            raise ValueError("errors must be 'raise' or 'ignore', not %r" % (errors,))
        obs = list(observations)

        def one(i):
            return self._fit(obs[i], seed, n_samples)

        if threads <= 1:
            out = [one(i) for i in range(len(obs))]
        else:
            with concurrent.futures.ThreadPoolExecutor(int(threads)) as ex:
                out = list(ex.map(one, range(len(obs))))
        results = []
        for i, (rc, e, r) in enumerate(out):
            if rc != 0:
                if errors == "raise":
                    raise error_for(rc, "hrt_fit_star (star %d): %s" % (i, e.message.decode("utf-8", "replace")))
                r.status = Status(rc) if rc in Status._value2member_map_ else rc
            results.append(r)
        return results

    def __repr__(self):
        return "<hrtrail.FitModel %d [Fe/H] nodes, %.1f MB>" % (len(self.feh_nodes), self.memory_bytes / 1e6)


def _reduce_model(grid, mass_prior, opts):
    return FitModel(grid, mass_prior, **opts)


ForecastEvent = collections.namedtuple("ForecastEvent", "name prob in_yr")
ForecastEvent.__doc__ = "A keypoint still to come: its name, the fraction of samples with it ahead, Interval of the time until it (yr)."
ForecastPhase = collections.namedtuple("ForecastPhase", "phase prob start_in_yr duration_yr")
ForecastPhase.__doc__ = "A phase still to come: Phase, fraction of samples entering it, Interval until it begins and of its duration (yr)."


class Forecast:
    """The future of a star over its samples (hrt_forecast_result and the states at the times asked).

    phase_now, phase_now_prob ({Phase: p}), ms_prob, ms_left_yr (Interval, yr), end_in_yr (Interval, yr),
    future (list of ForecastPhase), events (list of ForecastEvent, soonest first), remnant (Remnant),
    remnant_prob ({Remnant: p}), remnant_mass_msun (Interval, Msun), n_samples, and
    states: one dict per time asked with dt_yr, phase, phase_prob, luminous_frac and
    Intervals log_l_lsun (dex), teff_k (K), r_rsun (Rsun), mass_msun (Msun).
    """

    def __init__(self, c: HrtForecastResult, states):
        self.n_samples = c.n_samples
        self.phase_now = _phase(c.phase_now)
        self.phase_now_prob = {_phase(p): c.phase_now_prob[p] for p in range(len(c.phase_now_prob))
                               if c.phase_now_prob[p] > 0}
        self.ms_prob = c.ms_prob
        self.ms_left_yr, self.end_in_yr = _iv(c.ms_left_yr), _iv(c.end_in_yr)
        self.future = [ForecastPhase(_phase(p), c.future[p].prob, _iv(c.future[p].start_in_yr),
                                     _iv(c.future[p].duration_yr)) for p in range(len(c.future)) if c.future[p].prob > 0]
        self.events = [ForecastEvent(c.events[k].name.decode(), c.events[k].prob, _iv(c.events[k].in_yr))
                       for k in range(c.n_events)]
        self.remnant = Remnant(c.remnant) if c.remnant in Remnant._value2member_map_ else c.remnant
        self.remnant_prob = {Remnant(r): c.remnant_prob[r] for r in Remnant if c.remnant_prob[r] > 0}
        self.remnant_mass_msun = _iv(c.remnant_mass_msun)
        self.states = [{"dt_yr": s.dt_yr, "phase": _phase(s.phase),
                        "phase_prob": {_phase(p): s.phase_prob[p] for p in range(len(s.phase_prob)) if s.phase_prob[p] > 0},
                        "luminous_frac": s.luminous_frac, "log_l_lsun": _iv(s.log_l_lsun), "teff_k": _iv(s.teff_k),
                        "r_rsun": _iv(s.r_rsun), "mass_msun": _iv(s.mass_msun)} for s in states]

    def to_pandas(self):
        """The states at the times asked as a pandas DataFrame (hrtrail.convert.forecast_to_pandas)."""
        from .convert import forecast_to_pandas
        return forecast_to_pandas(self)

    def __repr__(self):
        return "<hrtrail.Forecast now %s, remnant %s, %d events>" % (
            getattr(self.phase_now, "key", self.phase_now), getattr(self.remnant, "key", self.remnant), len(self.events))


def forecast(grid, samples=None, dt_yr=(), initial_mass_msun=None, z=None, age_yr=None) -> Forecast:
    """The future of a star (hrt_forecast): from posterior draws or one exact star.

    samples   an array of SAMPLE_DTYPE (FitResult.samples); only initial_mass_msun, z and age_yr are read
    or initial_mass_msun (Msun), z, age_yr (yr): one exact star (scalars or equal-length arrays)
    dt_yr     future times from now, yr (>= 0): Forecast.states holds the star at each
    Raises InvalidInputError / OutsideGridError naming the sample the grid does not cover.
    """
    if samples is None:
        if initial_mass_msun is None or z is None or age_yr is None:
            raise InvalidInputError(Status.INVALID, "forecast: give samples, or initial_mass_msun, z and age_yr")
        m = _u.array(initial_mass_msun, "mass", "initial_mass_msun").ravel()
        zz = _u.array(z, "fraction", "z").ravel()
        a = _u.array(age_yr, "age", "age_yr").ravel()
        m, zz, a = _np.broadcast_arrays(m, zz, a)
        samples = _np.zeros(m.size, dtype=SAMPLE_DTYPE)
        samples["initial_mass_msun"], samples["z"], samples["age_yr"] = m, zz, a
    else:
        samples = _np.ascontiguousarray(samples)
        if samples.dtype != SAMPLE_DTYPE:
            raise InvalidInputError(Status.INVALID, "samples must be an array of SAMPLE_DTYPE, not %s" % (samples.dtype,))
    dt = _u.array(dt_yr, "age", "dt_yr").ravel()
    states = (HrtForecastState * max(1, dt.size))()
    res = HrtForecastResult()
    e, pe = new_error()
    check(lib.hrt_forecast(grid._handle, samples.size, samples.ctypes.data, dt.size, dt.ctypes.data if dt.size else None,
                           states, ctypes.byref(res), pe), e, "hrt_forecast")
    return Forecast(res, states[:dt.size])


def distance_m(l_w: Number, flux_w_m2: Number) -> float:
    """Distance (m) at which luminosity l_w (W) gives bolometric flux flux_w_m2 (W m^-2): sqrt(L / (4 pi F))
    (hrt_fit_distance_m, the inverse-square law); NaN for non-positive or non-finite arguments."""
    return lib.hrt_fit_distance_m(_u.value(l_w, "power", "l_w"), _u.value(flux_w_m2, "flux", "flux_w_m2"))


def flux_from_mbol(mbol: Number) -> float:
    """Bolometric flux (W m^-2) of an apparent bolometric magnitude on the IAU 2015 Resolution B2 scale
    (hrt_fit_flux_from_mbol)."""
    return lib.hrt_fit_flux_from_mbol(_u.value(mbol, "magnitude", "mbol"))
