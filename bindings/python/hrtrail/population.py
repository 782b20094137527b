"""Populations: IMFs, star-formation histories, metallicity spreads, runs and summaries.

Everything here is the C library's (include/hrtrail/population.h); Python only
holds the parameters and hands them over.  Units: masses in Msun, times in yr
(SFH times since the population began; epochs are the population's age), Z the
metal mass fraction, [Fe/H] spreads in dex.  Inputs are plain numbers in those
units or astropy Quantities (converted); anything else raises InvalidInputError.

    imf = IMF("kroupa2001", 0.08, 100.0)
    pop = Population(1_000_000, imf=imf, sfh=SFH.constant(0, 1e10), zdist=ZDist.fixed(0.014), seed=7)
    sums = pop.run(grid, [1e9, 1e10], threads=0)        # one Summary per epoch
    sums[0].to_pandas()                                 # per phase: stars and sums
    a = pop.run(grid, [1e9], chunks=range(0, 8)); b = pop.run(grid, [1e9], chunks=range(8, pop.n_chunks))
    a[0].merge(b[0])                                    # exactly pop.run(grid, [1e9])[0], bit for bit

Summaries pickle as their bytes (so they travel to and from worker processes)
and merge exactly in any order.
"""
import collections
import ctypes
import numbers
from typing import Iterable, List, Optional, Sequence, Tuple, Union

from ._clib import HrtImf, HrtPopHr, HrtPopSpec, HrtPopSummary, HrtSfh, HrtZdist, POP_MAX_STATUS, lib, text
from .enums import Phase, Remnant, Status
from .errors import InvalidInputError, check, new_error
from . import units as _u

try:
    import numpy as _np
except ImportError:  # NumPy is needed by these calls, not by importing the package
    _np = None

Number = Union[float, int]

IMF_KINDS = {"salpeter1955": 0, "kroupa2001": 1, "chabrier2003": 2, "powerlaw": 3}
SFH_KINDS = {"burst": 0, "constant": 1, "exponential": 2, "table": 3}
ZDIST_KINDS = {"fixed": 0, "log_uniform": 1, "log_normal": 2}


def max_threads() -> int:
    """Threads run() and Grid.evaluate(threads=0) use: OpenMP's maximum, 1 without OpenMP (hrt_pop_max_threads)."""
    return lib.hrt_pop_max_threads()


def _kind(table, name, what, from_name):
    if isinstance(name, str):
        k = from_name(name.encode())
        if k < 0:
            raise InvalidInputError(Status.INVALID, "unknown %s %r (known: %s)" % (what, name, ", ".join(table)))
        return k
    if isinstance(name, int) and not isinstance(name, bool) and name in table.values():
        return name
    raise InvalidInputError(Status.INVALID, "%s must be one of %s, not %r" % (what, ", ".join(table), name))


class IMF:
    """An initial mass function between mass limits (hrt_imf).

    IMF(kind="kroupa2001", m_lo_msun=0.08, m_hi_msun=100.0, alpha=None)

    kind   "salpeter1955" (dN/dm ~ m^-2.35, Salpeter 1955), "kroupa2001" (broken power law,
           Kroupa 2001 eq. 2), "chabrier2003" (system IMF, Chabrier 2003 Table 1),
           "powerlaw" (dN/dm ~ m^-alpha); the library also accepts "salpeter", "kroupa", "chabrier"
    m_lo_msun, m_hi_msun   mass limits, Msun, 0 < lo < hi
    alpha  slope of "powerlaw" (required there, ignored otherwise)

    Normalised to one star over [m_lo, m_hi].  pdf, cdf and quantile take
    scalars or arrays and call the library for each value.  Raises
    InvalidInputError for an unknown kind or bad limits.
    """

    def __init__(self, kind: Union[str, int] = "kroupa2001", m_lo_msun: Number = 0.08, m_hi_msun: Number = 100.0,
                 alpha: Optional[Number] = None):
        k = _kind(IMF_KINDS, kind, "IMF", lib.hrt_imf_from_name)
        self._args = (k, _u.value(m_lo_msun, "mass", "m_lo_msun"), _u.value(m_hi_msun, "mass", "m_hi_msun"),
                      float("nan") if alpha is None else _u.value(alpha, "fraction", "alpha"))
        self._c = HrtImf()
        e, pe = new_error()
        check(lib.hrt_imf_init(ctypes.byref(self._c), *self._args, pe), e, "hrt_imf_init")
        self._p = ctypes.addressof(self._c)

    @classmethod
    def _from_c(cls, c):
        imf = cls.__new__(cls)
        imf._c = HrtImf.from_buffer_copy(c)
        imf._p = ctypes.addressof(imf._c)
        imf._args = (c.kind, c.m_lo_msun, c.m_hi_msun, c.alpha)
        return imf

    def __reduce__(self):
        k, lo, hi, alpha = self._args
        return (IMF, (k, lo, hi, None if alpha != alpha else alpha))

    @property
    def kind(self) -> str:
        """Name of the IMF (hrt_imf_name): salpeter1955, kroupa2001, chabrier2003 or powerlaw."""
        return text(lib.hrt_imf_name(self._c.kind))

    @property
    def m_lo_msun(self) -> float:
        """Lower mass limit, Msun."""
        return self._c.m_lo_msun

    @property
    def m_hi_msun(self) -> float:
        """Upper mass limit, Msun."""
        return self._c.m_hi_msun

    @property
    def alpha(self) -> Optional[float]:
        """Slope of a power law (dN/dm ~ m^-alpha); None for the published IMFs."""
        return self._c.alpha if self._c.kind == IMF_KINDS["powerlaw"] else None

    def _map(self, fn, x, kind, name):
        if _np is None or (_np.ndim(x) == 0 and not _u._holds_quantity(x)):
            return fn(self._p, _u.value(x, kind, name))
        a = _u.array(x, kind, name)
        p = self._p
        return _np.fromiter((fn(p, v) for v in a.ravel().tolist()), dtype=_np.float64, count=a.size).reshape(a.shape)

    def pdf(self, m_msun):
        """Normalised dN/dm, per Msun, at initial mass m (Msun); 0 outside the limits (hrt_imf_pdf)."""
        return self._map(lib.hrt_imf_pdf, m_msun, "mass", "m_msun")

    def cdf(self, m_msun):
        """Fraction of stars with initial mass <= m (Msun) (hrt_imf_cdf)."""
        return self._map(lib.hrt_imf_cdf, m_msun, "mass", "m_msun")

    def quantile(self, u):
        """Mass (Msun) below which a fraction u (0..1) of the stars lie: inverse of cdf (hrt_imf_quantile)."""
        return self._map(lib.hrt_imf_quantile, u, "fraction", "u")

    @property
    def mean_mass_msun(self) -> float:
        """Mean initial mass of a star drawn from the IMF, Msun (hrt_imf_mean_mass)."""
        return lib.hrt_imf_mean_mass(self._p)

    def __repr__(self):
        a = "" if self.alpha is None else ", alpha=%g" % self.alpha
        return "IMF(%r, %g, %g%s)" % (self.kind, self.m_lo_msun, self.m_hi_msun, a)


class SFH:
    """A star-formation history (hrt_sfh); times since the population began, yr.

    Made by the class methods burst(t_yr), constant(t_start_yr, t_end_yr),
    exponential(t_start_yr, t_end_yr, tau_yr) and table(t_yr, rate).
    """

    def __init__(self, kind: Union[str, int], t_start_yr: Number = 0.0, t_end_yr: Number = float("nan"),
                 tau_yr: Number = float("nan"), table_t_yr=None, table_rate=None):
        k = _kind(SFH_KINDS, kind, "SFH", lib.hrt_sfh_from_name)
        self._c = HrtSfh(kind=k, t_start_yr=_u.value(t_start_yr, "age", "t_start_yr"),
                         t_end_yr=_u.value(t_end_yr, "age", "t_end_yr"), tau_yr=_u.value(tau_yr, "age", "tau_yr"))
        self._t = self._r = None
        if table_t_yr is not None or table_rate is not None:
            self._t = _np.ascontiguousarray(_u.array(table_t_yr, "age", "table_t_yr"), dtype=_np.float64).ravel()
            self._r = _np.ascontiguousarray(_u.array(table_rate, "fraction", "table_rate"), dtype=_np.float64).ravel()
            if self._t.size != self._r.size:
                raise InvalidInputError(Status.INVALID, "SFH table: %d times but %d rates" % (self._t.size, self._r.size))
            self._c.n_table = self._t.size
            self._c.table_t_yr = self._t.ctypes.data_as(ctypes.POINTER(ctypes.c_double))
            self._c.table_rate = self._r.ctypes.data_as(ctypes.POINTER(ctypes.c_double))

    @classmethod
    def burst(cls, t_yr: Number = 0.0) -> "SFH":
        """Every star born at t_yr (yr since the population began)."""
        return cls("burst", t_yr)

    @classmethod
    def constant(cls, t_start_yr: Number, t_end_yr: Number) -> "SFH":
        """Constant rate over [t_start_yr, t_end_yr], yr."""
        return cls("constant", t_start_yr, t_end_yr)

    @classmethod
    def exponential(cls, t_start_yr: Number, t_end_yr: Number, tau_yr: Number) -> "SFH":
        """Rate ~ exp(-(t - t_start_yr) / tau_yr) over [t_start_yr, t_end_yr], yr."""
        return cls("exponential", t_start_yr, t_end_yr, tau_yr)

    @classmethod
    def table(cls, t_yr, rate) -> "SFH":
        """Rate linear between points: strictly increasing times (yr), rates >= 0 in any unit, not all zero."""
        return cls("table", table_t_yr=t_yr, table_rate=rate)

    def __reduce__(self):
        c = self._c
        return (SFH, (c.kind, c.t_start_yr, c.t_end_yr, c.tau_yr, self._t, self._r))

    @property
    def kind(self) -> str:
        """burst, constant, exponential or table (hrt_sfh_name)."""
        return text(lib.hrt_sfh_name(self._c.kind))

    def __repr__(self):
        c = self._c
        return "SFH(%r, t_start_yr=%g, t_end_yr=%g, tau_yr=%g%s)" % (
            self.kind, c.t_start_yr, c.t_end_yr, c.tau_yr, "" if self._t is None else ", %d points" % self._t.size)


class ZDist:
    """A metallicity distribution (hrt_zdist): fixed(z), log_uniform(z_lo, z_hi), log_normal(z, sigma_dex, z_lo, z_hi)."""

    def __init__(self, kind: Union[str, int], z: Number = float("nan"), z_lo: Number = float("nan"),
                 z_hi: Number = float("nan"), sigma_dex: Number = float("nan")):
        if isinstance(kind, str):
            if kind not in ZDIST_KINDS:
                raise InvalidInputError(Status.INVALID, "unknown metallicity distribution %r (known: %s)"
                                        % (kind, ", ".join(ZDIST_KINDS)))
            kind = ZDIST_KINDS[kind]
        self._c = HrtZdist(kind=int(kind), z=_u.value(z, "fraction", "z"), z_lo=_u.value(z_lo, "fraction", "z_lo"),
                           z_hi=_u.value(z_hi, "fraction", "z_hi"),
                           sigma_dex=_u.value(sigma_dex, "fraction", "sigma_dex"))

    @classmethod
    def fixed(cls, z: Number) -> "ZDist":
        """Every star has metal mass fraction z."""
        return cls("fixed", z)

    @classmethod
    def log_uniform(cls, z_lo: Number, z_hi: Number) -> "ZDist":
        """log10 Z uniform in [log10 z_lo, log10 z_hi] (uniform in [Fe/H])."""
        return cls("log_uniform", z_lo=z_lo, z_hi=z_hi)

    @classmethod
    def log_normal(cls, z: Number, sigma_dex: Number, z_lo: Number, z_hi: Number) -> "ZDist":
        """log10 Z normal around log10 z with spread sigma_dex (dex, = of [Fe/H]), truncated to [z_lo, z_hi]."""
        return cls("log_normal", z, z_lo, z_hi, sigma_dex)

    def __reduce__(self):
        c = self._c
        return (ZDist, (c.kind, c.z, c.z_lo, c.z_hi, c.sigma_dex))

    def __repr__(self):
        c = self._c
        name = {v: k for k, v in ZDIST_KINDS.items()}.get(c.kind, c.kind)
        return "ZDist(%r, z=%g, z_lo=%g, z_hi=%g, sigma_dex=%g)" % (name, c.z, c.z_lo, c.z_hi, c.sigma_dex)


HRBinning = collections.namedtuple("HRBinning", "log_teff_k_lo log_teff_k_hi log_l_lsun_lo log_l_lsun_hi nx ny")
HRBinning.__doc__ = """Binning of a summary's HR-diagram histogram (hrt_pop_hr): log10 Teff/K (x,
nx bins over [log_teff_k_lo, log_teff_k_hi]) by log10 L/Lsun (y, ny bins); nx * ny <= 10000."""
#: The binning of hrtrail population (the command line's default): 64 x 64 over 3.3-4.9 in log Teff, -5-6.5 in log L.
DEFAULT_HR = HRBinning(3.3, 4.9, -5.0, 6.5, 64, 64)


def _hr_c(hr):
    if hr is None:
        return None
    hr = HRBinning(*hr)
    for n in ("nx", "ny"):
        v = getattr(hr, n)
        if isinstance(v, bool) or not isinstance(v, numbers.Integral) or v < 0:
            raise InvalidInputError(Status.DOMAIN, "hr.%s: a whole number >= 0 expected, not %r" % (n, v))
    return HrtPopHr(*[_u.value(v, "fraction", "hr." + n) for n, v in zip(HRBinning._fields[:4], hr[:4])],
                    int(hr.nx), int(hr.ny))


class Summary:
    """Summary of a population at one epoch (hrt_pop_summary): counts and exact sums, no stars kept.

    Summary(age_yr, hr=DEFAULT_HR)    an empty summary at the population's age age_yr (yr);
                                      hr: HRBinning of the HR histogram, or None for none

    Counts and sums are integers in the library (sums in fixed point of 2^-32
    Msun or Lsun), so merge() is exact and independent of order.  Pickles as
    its bytes; == compares bytes.  Masses in Msun, luminosities in Lsun.
    """

    def __init__(self, age_yr: Number, hr: Optional[HRBinning] = DEFAULT_HR):
        self._c = HrtPopSummary()
        c_hr = _hr_c(hr)
        e, pe = new_error()
        check(lib.hrt_pop_summary_init(ctypes.byref(self._c), _u.value(age_yr, "age", "age_yr"),
                                       None if c_hr is None else ctypes.byref(c_hr), pe), e, "hrt_pop_summary_init")

    @classmethod
    def from_bytes(cls, b: bytes) -> "Summary":
        """A summary from its bytes (to_bytes(), another process or an MPI rank); merge() checks it."""
        if len(b) != ctypes.sizeof(HrtPopSummary):
            raise InvalidInputError(Status.INVALID, "a summary is %d bytes, not %d" % (ctypes.sizeof(HrtPopSummary), len(b)))
        s = cls.__new__(cls)
        s._c = HrtPopSummary.from_buffer_copy(b)
        return s

    def to_bytes(self) -> bytes:
        """The struct's bytes, as the library holds it."""
        return bytes(memoryview(self._c).cast("B"))

    def __reduce__(self):
        return (Summary.from_bytes, (self.to_bytes(),))

    def __eq__(self, other):
        return isinstance(other, Summary) and self.to_bytes() == other.to_bytes()

    __hash__ = None

    def copy(self) -> "Summary":
        """An independent copy."""
        return Summary.from_bytes(self.to_bytes())

    def merge(self, other: "Summary") -> "Summary":
        """Add other into this summary, exactly (hrt_pop_summary_merge); returns self.

        Raises InvalidInputError (this one unchanged) for another epoch or binning, or a damaged summary."""
        e, pe = new_error()
        check(lib.hrt_pop_summary_merge(ctypes.byref(self._c), ctypes.byref(other._c), pe), e, "hrt_pop_summary_merge")
        return self

    def __add__(self, other):
        return self.copy().merge(other)

    def add(self, states) -> "Summary":
        """Add evaluated states (a STATE_DTYPE array, e.g. from Grid.evaluate(..., errors="ignore")) as born
        stars (hrt_pop_summary_add); returns self.  InvalidInputError names a state that cannot be counted."""
        from .core import STATE_DTYPE
        st = _np.ascontiguousarray(states)
        if st.dtype != STATE_DTYPE:
            raise InvalidInputError(Status.INVALID, "states must be an array of STATE_DTYPE, not %s" % (st.dtype,))
        e, pe = new_error()
        check(lib.hrt_pop_summary_add(ctypes.byref(self._c), st.ctypes.data, st.size, pe), e, "hrt_pop_summary_add")
        return self

    def add_unborn(self, n: int) -> "Summary":
        """Count n stars drawn but not yet born at this epoch (hrt_pop_summary_add_unborn); returns self."""
        if isinstance(n, bool) or not isinstance(n, numbers.Integral) or n < 0:
            raise InvalidInputError(Status.DOMAIN, "n: a whole number >= 0 expected, not %r" % (n,))
        lib.hrt_pop_summary_add_unborn(ctypes.byref(self._c), int(n))
        return self

    # -- what it holds ------------------------------------------------------
    @staticmethod
    def _v(s):
        return lib.hrt_pop_sum_value(ctypes.byref(s))

    @property
    def age_yr(self) -> float:
        """Epoch: the population's age, yr."""
        return self._c.age_yr

    n_drawn = property(lambda self: self._c.n_drawn, doc="Stars drawn.")
    n_unborn = property(lambda self: self._c.n_unborn, doc="Stars born after the epoch (not evaluated).")
    n_evaluated = property(lambda self: self._c.n_evaluated, doc="Born stars evaluated without error.")
    hr_outside = property(lambda self: self._c.hr_outside, doc="Luminous stars outside the histogram's box.")
    ms_max_initial_mass_msun = property(lambda self: self._c.ms_max_initial_mass_msun,
                                        doc="Most massive star on the main sequence, Msun (0 if none).")
    evolved_min_initial_mass_msun = property(lambda self: self._c.evolved_min_initial_mass_msun,
                                             doc="Least massive star past the main sequence, Msun (+inf if none).")

    @property
    def n_failed(self) -> int:
        """Born stars the grid could not evaluate (outside it, ...)."""
        return self._c.n_drawn - self._c.n_unborn - self._c.n_evaluated

    @property
    def n_status(self) -> dict:
        """Born stars by hrt_eval status: {Status: count}, codes with no star left out."""
        out = {}
        for k in range(POP_MAX_STATUS):
            if self._c.n_status[k]:
                try:
                    out[Status(k)] = self._c.n_status[k]
                except ValueError:
                    out[k] = self._c.n_status[k]
        return out

    failed_initial_mass_msun = property(lambda self: Summary._v(self._c.failed_initial_mass_msun),
                                        doc="Initial mass of the stars that failed, Msun.")
    initial_mass_msun = property(lambda self: Summary._v(self._c.initial_mass_msun),
                                 doc="Initial mass of every evaluated star, Msun.")
    mass_msun = property(lambda self: Summary._v(self._c.mass_msun),
                         doc="Current mass in stars and remnants, Msun.")
    l_lsun = property(lambda self: Summary._v(self._c.l_lsun), doc="Integrated bolometric luminosity, Lsun.")

    @property
    def turnoff_mass_msun(self) -> float:
        """Main-sequence turnoff mass of a single burst at one Z, Msun (hrt_pop_turnoff_mass); NaN if undefined."""
        return lib.hrt_pop_turnoff_mass(ctypes.byref(self._c))

    @property
    def hr(self) -> Optional[HRBinning]:
        """The histogram's binning, or None."""
        h = self._c.hr
        return None if h.nx == 0 else HRBinning(h.log_teff_k_lo, h.log_teff_k_hi, h.log_l_lsun_lo, h.log_l_lsun_hi,
                                                   h.nx, h.ny)

    @property
    def hr_counts(self):
        """HR histogram counts as a (ny, nx) uint64 array: row iy (log L), column ix (log Teff)."""
        h = self._c.hr
        a = _np.ctypeslib.as_array(self._c.hr_count)[:h.nx * h.ny].copy()
        return a.reshape(int(h.ny), int(h.nx))

    def phases(self) -> List[dict]:
        """Per phase with stars: dicts of phase, stars, initial_mass_msun, mass_msun, l_lsun (sums)."""
        c, out = self._c, []
        for p in Phase:
            if c.n_phase[p]:
                out.append({"phase": p, "stars": c.n_phase[p],
                            "initial_mass_msun": self._v(c.phase_initial_mass_msun[p]),
                            "mass_msun": self._v(c.phase_mass_msun[p]), "l_lsun": self._v(c.phase_l_lsun[p])})
        return out

    def remnants(self) -> List[dict]:
        """Per remnant kind (NONE: stars that are no remnant): dicts of remnant, stars, mass_msun (sum)."""
        c = self._c
        return [{"remnant": r, "stars": c.n_remnant[r], "mass_msun": self._v(c.remnant_mass_msun[r])}
                for r in Remnant if c.n_remnant[r] or r != Remnant.NONE]

    def to_pandas(self, table: str = "phases"):
        """A table of the summary as a pandas DataFrame, one row per phase or remnant kind with stars.

        table="phases": age_yr, phase (a categorical of the phase keys), stars, initial_mass_msun,
        mass_msun, l_lsun (sums: Msun, Msun, Lsun); table="remnants": age_yr, remnant (a categorical
        of the remnant keys; none = not a remnant), stars, mass_msun (sum, Msun)."""
        from .convert import _summary_frame
        if table not in ("phases", "remnants"):
            raise ValueError("table is 'phases' or 'remnants', not %r" % (table,))
        return _summary_frame(self, table)

    def __repr__(self):
        return "<hrtrail.Summary at %.4g yr: %d drawn, %d unborn, %d evaluated>" % (
            self.age_yr, self.n_drawn, self.n_unborn, self.n_evaluated)


class Population:
    """A population specification (hrt_pop_spec): N stars from an IMF, an SFH and a metallicity distribution.

    Population(n_stars, imf=IMF(), sfh=SFH.burst(0), zdist=None, z=None, seed=1, chunk_size=65536)

    zdist  a ZDist; or give z (a metal mass fraction) for ZDist.fixed(z); neither: Z = 0.014
    seed   fixes every draw together with chunk_size (same seed, same stars, any thread count)

    The draws come in chunks of chunk_size stars, chunk k with its own random
    stream; run() over any split of the chunks gives summaries that merge to
    the same bits.  Raises InvalidInputError for an invalid specification.
    """

    def __init__(self, n_stars: int, imf: Optional[IMF] = None, sfh: Optional[SFH] = None,
                 zdist: Optional[ZDist] = None, z: Optional[Number] = None, seed: int = 1,
                 chunk_size: int = 65536):
        self.imf = IMF() if imf is None else imf
        self.sfh = SFH.burst(0.0) if sfh is None else sfh
        if zdist is not None and z is not None:
            raise InvalidInputError(Status.INVALID, "give zdist or z, not both")
        self.zdist = zdist if zdist is not None else ZDist.fixed(0.014 if z is None else z)
        for n, v in (("n_stars", n_stars), ("seed", seed), ("chunk_size", chunk_size)):
            if isinstance(v, bool) or not isinstance(v, numbers.Integral) or not 0 <= v < 2 ** 64:
                raise InvalidInputError(Status.DOMAIN, "%s: a whole number in [0, 2^64) expected, not %r" % (n, v))
        if not isinstance(self.imf, IMF) or not isinstance(self.sfh, SFH) or not isinstance(self.zdist, ZDist):
            raise InvalidInputError(Status.INVALID, "imf, sfh and zdist must be an IMF, an SFH and a ZDist")
        self._c = HrtPopSpec()
        lib.hrt_pop_spec_default(ctypes.byref(self._c))  # then every field set from the arguments
        self._c.imf, self._c.sfh, self._c.zdist = self.imf._c, self.sfh._c, self.zdist._c
        self._c.n_stars, self._c.seed, self._c.chunk_size = int(n_stars), int(seed), int(chunk_size)
        e, pe = new_error()
        check(lib.hrt_pop_spec_check(ctypes.byref(self._c), pe), e, "hrt_pop_spec_check")

    def __reduce__(self):
        c = self._c
        return (Population, (c.n_stars, self.imf, self.sfh, self.zdist, None, c.seed, c.chunk_size))

    n_stars = property(lambda self: self._c.n_stars, doc="Stars drawn.")
    seed = property(lambda self: self._c.seed, doc="Seed of the draws.")
    chunk_size = property(lambda self: self._c.chunk_size, doc="Stars per random stream.")

    @property
    def n_chunks(self) -> int:
        """Number of chunks, ceil(n_stars / chunk_size) (hrt_pop_n_chunks)."""
        return lib.hrt_pop_n_chunks(ctypes.byref(self._c))

    def draw(self, chunk: int) -> Tuple:
        """The stars of one chunk (hrt_pop_draw): (initial mass Msun, Z, birth time yr) as three arrays.

        These are exactly the stars run() evaluates.  InvalidInputError if chunk is out of range."""
        if isinstance(chunk, bool) or not isinstance(chunk, numbers.Integral) or chunk < 0:
            raise InvalidInputError(Status.INVALID, "chunk: a whole number >= 0 expected, not %r" % (chunk,))
        n = ctypes.c_size_t()
        cap = int(min(self._c.chunk_size, self._c.n_stars))
        m, z, t = _np.empty(cap), _np.empty(cap), _np.empty(cap)
        e, pe = new_error()
        check(lib.hrt_pop_draw(ctypes.byref(self._c), int(chunk), m.ctypes.data, z.ctypes.data, t.ctypes.data, cap,
                               ctypes.byref(n), pe), e, "hrt_pop_draw")
        k = n.value
        return m[:k], z[:k], t[:k]

    def run(self, grid, ages_yr, chunks: Optional[Union[range, Tuple[int, int]]] = None, threads: int = 0,
            hr: Optional[HRBinning] = DEFAULT_HR, into: Optional[Sequence[Summary]] = None) -> List[Summary]:
        """Draw, evaluate and summarise the population at each epoch (hrt_pop_run).

        grid     an open Grid
        ages_yr  the population's ages (yr), a number or a sequence: one Summary each
        chunks   the chunks to do: a range with step 1, or (first, count); default all
        threads  >= 1, or 0 for max_threads()
        hr       binning of the summaries' HR histogram (None: none)
        into     summaries to add to instead of new ones (one per age, same epochs)
        Returns the list of Summary.  Stars outside the grid are counted as failed,
        not raised.  Raises InvalidInputError / OutsideGridError as the library reports.
        """
        ages = _u.array(ages_yr, "age", "ages_yr").ravel()
        if chunks is None:
            first, count = 0, self.n_chunks
        elif isinstance(chunks, range):
            if chunks.step != 1:
                raise InvalidInputError(Status.INVALID, "chunks: a range with step 1 expected")
            first, count = chunks.start, max(0, len(chunks))
        else:
            first, count = chunks
        for n, v in (("first chunk", first), ("chunk count", count)):
            if isinstance(v, bool) or not isinstance(v, numbers.Integral) or not 0 <= v < 2 ** 64:
                raise InvalidInputError(Status.INVALID, "chunks: %s must be a whole number >= 0, not %r" % (n, v))
        if isinstance(threads, bool) or not isinstance(threads, numbers.Integral) or threads < 0:
            raise InvalidInputError(Status.DOMAIN, "threads: a whole number >= 0 expected, not %r" % (threads,))
        sums = [Summary(a, hr) for a in ages] if into is None else list(into)
        if len(sums) != ages.size:
            raise InvalidInputError(Status.INVALID, "into: %d summaries for %d ages" % (len(sums), ages.size))
        arr = (HrtPopSummary * len(sums))()
        for k, s in enumerate(sums):
            ctypes.memmove(ctypes.byref(arr[k]), ctypes.byref(s._c), ctypes.sizeof(HrtPopSummary))
        e, pe = new_error()
        check(lib.hrt_pop_run(grid._handle, ctypes.byref(self._c), int(first), int(count), int(threads), len(sums),
                              arr, pe), e, "hrt_pop_run")
        for k, s in enumerate(sums):
            ctypes.memmove(ctypes.byref(s._c), ctypes.byref(arr[k]), ctypes.sizeof(HrtPopSummary))
        return sums

    def __repr__(self):
        return "Population(%d, imf=%r, sfh=%r, zdist=%r, seed=%d, chunk_size=%d)" % (
            self.n_stars, self.imf, self.sfh, self.zdist, self.seed, self.chunk_size)


def merge(summaries: Iterable[Summary]) -> Summary:
    """One summary of many of the same epoch and binning, merged exactly (any order gives the same bits)."""
    it = iter(summaries)
    out = next(it).copy()
    for s in it:
        out.merge(s)
    return out
