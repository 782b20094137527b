"""Grids, stars, batch evaluation and isochrones.

Units (as in include/hrtrail.h): masses in solar masses (Msun), ages in
years since the star's birth (yr), Z the metal mass fraction, log = log10,
L in nominal solar luminosities, R in nominal solar radii, Teff in K, g in
cm s^-2.

Accuracy: answers are as good as the grid.  The default grid is a
semi-analytic model built from published relations (tracks/MODEL.md), meant
for population-level work, not precision stellar physics.
"""
import collections
import ctypes
import numbers
import os
import weakref
from typing import Any, Iterable, List, Optional, Sequence, Tuple, Union

from ._clib import HrtInterpError, HrtIsochroneOptions, HrtPhaseSpan, HrtState, lib, text
from .enums import Flag, Phase, Remnant, Status, as_interp, phase_from_key
from . import units as _u
from .errors import InvalidInputError, check, error_for, new_error

try:
    import numpy as _np
except ImportError:  # NumPy is optional: scalar calls work without it
    _np = None

#: NumPy dtype of hrt_state, field for field (names, offsets, itemsize 200 bytes).
#: Arrays of this dtype are handed to the library as they are: no per-star copy.
STATE_DTYPE = _np.dtype(HrtState) if _np is not None else None

if _np is not None:
    class States(_np.ndarray):
        """A NumPy array of STATE_DTYPE (what Grid.evaluate, Grid.isochrone and Star.track return),
        with conversions: to_pandas() (a DataFrame, phase and remnant as categoricals) and
        to_table() (an astropy QTable with units).  Otherwise a plain ndarray: fields by name
        (states["log_l_lsun"]), slicing, the library's own bytes."""

        def to_pandas(self):
            """A pandas DataFrame (hrtrail.to_pandas)."""
            from .convert import to_pandas
            return to_pandas(self)

        def to_table(self):
            """An astropy QTable with units (hrtrail.to_table)."""
            from .convert import to_table
            return to_table(self)
else:  # pragma: no cover
    States = None


def _states(a):
    return a.view(States) if States is not None and isinstance(a, _np.ndarray) else a

_STATE_SIZE = ctypes.sizeof(HrtState)

#: a number in the library's units, or an astropy Quantity converted to them
Num = Any
#: a number, a sequence or a NumPy array (or Quantities) in the library's units
ArrayArg = Union[float, Sequence[float], Any]
#: a path: str, bytes or os.PathLike
PathArg = Union[str, bytes, "os.PathLike[str]"]
_FLOAT_FIELDS = [n for n, t in HrtState._fields_ if t is ctypes.c_double]

PhaseSpan = collections.namedtuple("PhaseSpan", "phase phase_start_yr phase_end_yr")
PhaseSpan.__doc__ = """One phase of a star's life, [phase_start_yr, phase_end_yr) (struct hrt_phase_span).

phase           Phase
phase_start_yr  age at which the phase begins, yr
phase_end_yr    age at which it ends, yr (+inf for a remnant that lasts forever)"""

RemnantInfo = collections.namedtuple("RemnantInfo", "remnant remnant_mass_msun")
RemnantInfo.__doc__ = """Final remnant of a star.

remnant            Remnant (its kind)
remnant_mass_msun  its mass, Msun (NaN if unknown)"""


def _need_numpy(what):
    if _np is None:
        raise RuntimeError("hrtrail: %s needs NumPy (Debian package python3-numpy)" % what)


class State:
    """State of one star at one age (struct hrt_state as a Python object).

    Attributes (the vocabulary of tracks/FORMAT.md, units in the names, as in the C struct):
      status             Status of this star (OK or the HRT_E_* code)
      phase              Phase (hrtrail's code, e.g. Phase.MS = 11)
      route              index of the route in the grid (Grid.routes), -1 if none
      remnant            Remnant: the kind of remnant this star will leave (or is)
      flags              Flag bits (DARK, REMNANT, EXTRAPOLATED, NOT_MODELLED, BEYOND_LAW)
      initial_mass_msun  initial mass, Msun
      z                  metal mass fraction
      age_yr             age since birth, yr
      log_l_lsun         log10 L/Lsun (NaN if dark)
      log_teff_k         log10 Teff/K (NaN if dark)
      log_r_rsun         log10 R/Rsun (from L and Teff by the Stefan-Boltzmann law)
      log_g_cgs          log10 g / (cm s^-2)
      mass_msun          current mass, Msun
      he_core_mass_msun  helium core mass, Msun
      co_core_mass_msun  carbon-oxygen core mass, Msun
      eep                fractional EEP index on the route (NaN for remnants, pre-MS)
      phase_fraction     0..1 through the current phase in age (NaN if open-ended)
      phase_start_yr     age at which the current phase began, yr
      phase_end_yr       age at which the current phase ends, yr (+inf if never)
      remnant_mass_msun  mass of the final remnant, Msun (NaN if unknown)
    """
    __slots__ = ["status", "phase", "route", "remnant", "flags"] + _FLOAT_FIELDS

    @classmethod
    def _from(cls, get):
        s = cls.__new__(cls)
        st = int(get("status"))
        try:
            s.status = Status(st)
        except ValueError:
            s.status = st
        p = int(get("phase"))
        s.phase = Phase(p) if p in Phase._value2member_map_ else p
        s.route = int(get("route"))
        r = int(get("remnant"))
        s.remnant = Remnant(r) if r in Remnant._value2member_map_ else r
        s.flags = Flag(int(get("flags")))
        for n in _FLOAT_FIELDS:
            setattr(s, n, float(get(n)))
        return s

    @classmethod
    def from_c(cls, st):
        """From a ctypes HrtState."""
        return cls._from(lambda n: getattr(st, n))

    @classmethod
    def from_record(cls, rec):
        """From one element of a STATE_DTYPE array (e.g. grid.evaluate(...)[i])."""
        return cls._from(lambda n: rec[n])

    @property
    def teff_k(self):
        """Effective temperature, K."""
        return 10.0 ** self.log_teff_k

    @property
    def l_lsun(self):
        """Luminosity, Lsun."""
        return 10.0 ** self.log_l_lsun

    @property
    def r_rsun(self):
        """Radius, Rsun."""
        return 10.0 ** self.log_r_rsun

    def as_dict(self):
        """All fields as a dict."""
        return {n: getattr(self, n) for n in self.__slots__}

    def __repr__(self):
        ph = self.phase.key if isinstance(self.phase, Phase) else self.phase
        return ("State(initial_mass_msun=%.6g, z=%.6g, age_yr=%.6g, phase=%s, log_l_lsun=%.4f, "
                "log_teff_k=%.4f, mass_msun=%.4f, status=%s)" % (
                    self.initial_mass_msun, self.z, self.age_yr, ph, self.log_l_lsun, self.log_teff_k,
                    self.mass_msun, getattr(self.status, "name", self.status)))


ExtraQuantity = collections.namedtuple("ExtraQuantity", "name unit meaning")
ExtraQuantity.__doc__ = "An extra per-EEP quantity of a grid: its name, astropy unit string and meaning."


def _as_f8(a):
    """C-contiguous float64 array of a's shape, 0-d included (no copy when a already is one)."""
    return _np.asarray(a, dtype=_np.float64, order="C")


def _phase_mask(phases):
    """A bit mask of phases given as Phase members, codes or keys (HRT_PHASE_BIT)."""
    mask = 0
    for p in phases:
        try:
            code = phase_from_key(p) if isinstance(p, str) else Phase(int(p))
        except (KeyError, ValueError, AttributeError):
            raise InvalidInputError(Status.INVALID, "%r is not a phase (a Phase, its code or its key)" % (p,)) \
                from None
        mask |= 1 << int(code)
    return mask


class _Owned:
    """A C handle (self._h) owned by a Python object: close(), context manager, freed when collected."""
    _h = None
    _what = "object"

    def _free(self, h):
        raise NotImplementedError

    def close(self):
        """Free the C object. Idempotent."""
        if self._h is not None:
            h, self._h = self._h, None
            self._free(h)

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()

    def __del__(self):
        try:
            self.close()
        except Exception:
            pass

    @property
    def _handle(self):
        if self._h is None:
            raise ValueError("hrtrail: the %s is closed" % self._what)
        return self._h

    @property
    def closed(self):
        """True once close() was called."""
        return self._h is None


class Grid(_Owned):
    """An opened track grid (hrt_grid): immutable, shareable across threads.

    Grid()                       the default grid (HRTRAIL_GRID, else the installed one)
    Grid(path, interp="akima")   a grid file (tracks/FORMAT.md); interp is the
                                 interpolation across initial mass and [Fe/H]:
                                 "steffen" (default), "linear", "cspline", "akima"

    Use as a context manager, or call close().  Raises GridFileError (missing,
    unreadable or invalid file) or InvalidInputError (unknown interp).
    """

    def __init__(self, path: Optional[PathArg] = None, interp: Union[str, int] = "steffen"):
        self._h = None
        self._stars = weakref.WeakSet()
        it = as_interp(interp)
        h = ctypes.c_void_p()
        e, pe = new_error()
        cpath = None if path is None else _u.path(path)
        if it == 0:  # hrt_grid_open is hrt_grid_open_with(path, HRT_INTERP_STEFFEN, ...)
            check(lib.hrt_grid_open(cpath, ctypes.byref(h), pe), e, "opening grid")
        else:
            check(lib.hrt_grid_open_with(cpath, int(it), ctypes.byref(h), pe), e, "opening grid")
        self._h = h
        self.path = os.fsdecode(cpath) if path is not None else text(lib.hrt_default_grid_path())
        """Path of the grid file."""

    _what = "grid"

    def __reduce__(self):
        """A grid pickles as its path and interpolation type: unpickling opens the file again
        (in a worker process, say), so the file must be readable there."""
        return (Grid, (self.path, self.interp.key))

    def _free(self, h):
        """Every Star made from the grid goes first (close() frees both)."""
        for s in list(self._stars):
            s.close()
        lib.hrt_grid_close(h)

    # -- description ------------------------------------------------------
    @property
    def interp(self):
        """Interpolation type the grid was opened with (Interp)."""
        return as_interp(lib.hrt_grid_interp(self._handle))

    @property
    def n_z(self):
        """Number of metallicity groups."""
        return lib.hrt_grid_n_z(self._handle)

    @property
    def z_values(self):
        """Metal mass fractions of the groups, ascending (tuple of float)."""
        h = self._handle
        return tuple(lib.hrt_grid_z(h, i) for i in range(lib.hrt_grid_n_z(h)))

    @property
    def z_ref(self):
        """Reference metallicity Z_ref of [Fe/H] = log10(Z / Z_ref)."""
        return lib.hrt_grid_z_ref(self._handle)

    @property
    def z_range(self):
        """(lowest, highest) metal mass fraction covered."""
        lo, hi = ctypes.c_double(), ctypes.c_double()
        check(lib.hrt_grid_z_range(self._handle, ctypes.byref(lo), ctypes.byref(hi)), None, "z_range")
        return lo.value, hi.value

    def mass_range(self, z: Num) -> Tuple[float, float]:
        """(lowest, highest) initial mass covered at metallicity z, Msun."""
        lo, hi = ctypes.c_double(), ctypes.c_double()
        check(lib.hrt_grid_mass_range(self._handle, _u.value(z, "fraction", "z"), ctypes.byref(lo), ctypes.byref(hi)),
              None, "mass_range(Z = %r)" % (z,))
        return lo.value, hi.value

    @property
    def routes(self):
        """Route names in the order of their indices (state.route)."""
        h = self._handle
        return tuple(text(lib.hrt_grid_route_name(h, r)) for r in range(lib.hrt_grid_n_routes(h)))

    def route_of(self, mass_msun: Num, z: Num) -> int:
        """Index of the route a star of initial mass (Msun) and metallicity z follows."""
        r = ctypes.c_int()
        check(lib.hrt_grid_route_of(self._handle, _u.value(mass_msun, "mass", "mass_msun"), _u.value(z, "fraction", "z"),
                                    ctypes.byref(r)), None,
              "route_of(%r Msun, Z = %r)" % (mass_msun, z))
        return r.value

    def route_keypoints(self, route: Union[int, str]) -> List[Tuple[str, int]]:
        """Keypoints of a route (index or name) as a list of (name, EEP index)."""
        h = self._handle
        r = self.routes.index(route) if isinstance(route, str) else int(route)
        return [(text(lib.hrt_grid_keypoint_name(h, r, k)), lib.hrt_grid_keypoint_eep(h, r, k))
                for k in range(lib.hrt_grid_route_n_keypoints(h, r))]

    def masses(self, iz: int) -> Tuple[float, ...]:
        """Initial masses (Msun, ascending) of the tracks of group iz (tuple)."""
        h = self._handle
        if not 0 <= iz < lib.hrt_grid_n_z(h):
            raise IndexError("metallicity group %d out of range" % iz)
        return tuple(lib.hrt_grid_mass(h, iz, i) for i in range(lib.hrt_grid_n_masses(h, iz)))

    def route_boundaries(self, iz: int) -> Tuple[float, ...]:
        """Route-boundary masses of group iz, Msun: boundary b separates route b from b+1."""
        h = self._handle
        return tuple(lib.hrt_grid_route_boundary(h, iz, b) for b in range(lib.hrt_grid_n_routes(h) - 1))

    def boundary_at(self, z: Num, b: int) -> float:
        """Route-boundary mass b (Msun) at metallicity z: stars above it follow route b + 1 (hrt_grid_boundary_at)."""
        m = ctypes.c_double()
        e = lib.hrt_grid_boundary_at(self._handle, _u.value(z, "fraction", "z"), int(b), ctypes.byref(m))
        check(e, None, "hrt_grid_boundary_at(Z = %r, %d)" % (z, b))
        return m.value

    def tracks(self, iz: int) -> List[Tuple[float, int, int]]:
        """Tracks of metallicity group iz: list of (initial mass Msun, route index, number of valid EEPs)."""
        h = self._handle
        if not 0 <= iz < lib.hrt_grid_n_z(h):
            raise IndexError("metallicity group %d out of range" % iz)
        return [(lib.hrt_grid_mass(h, iz, i), lib.hrt_grid_track_route(h, iz, i), lib.hrt_grid_track_n_eep(h, iz, i))
                for i in range(lib.hrt_grid_n_masses(h, iz))]

    def route_n_eep(self, route: Union[int, str]) -> int:
        """Number of EEPs in the layout of a route (index or name)."""
        r = self.routes.index(route) if isinstance(route, str) else int(route)
        return lib.hrt_grid_route_n_eep(self._handle, r)

    def attribute(self, name: str) -> Optional[str]:
        """A text root attribute of the file ('description', 'source', ...), or None."""
        return text(lib.hrt_grid_attribute(self._handle, name.encode()))

    @property
    def memory_bytes(self):
        """Bytes of memory held by the opened grid."""
        return lib.hrt_grid_memory_bytes(self._handle)

    # -- extra quantities ---------------------------------------------------
    @property
    def extra_quantities(self) -> Tuple["ExtraQuantity", ...]:
        """The grid's extra per-EEP quantities (tracks/FORMAT.md, "Extra quantities"), in name order:
        ExtraQuantity(name, unit, meaning), unit an astropy unit string ("" dimensionless)."""
        h = self._handle
        return tuple(ExtraQuantity(text(lib.hrt_grid_extra_name(h, k)), text(lib.hrt_grid_extra_unit(h, k)),
                                   text(lib.hrt_grid_extra_meaning(h, k)))
                     for k in range(lib.hrt_grid_extra_count(h)))

    def _extra_indices(self, names):
        h = self._handle
        if names is None:
            names = [q.name for q in self.extra_quantities]
        elif isinstance(names, str):
            names = [names]
        idx = []
        for n in names:
            k = lib.hrt_grid_extra_index(h, str(n).encode())
            if k < 0:
                have = ", ".join(q.name for q in self.extra_quantities) or "none"
                raise InvalidInputError(Status.INVALID, "the grid has no extra quantity %r (it has: %s)" % (n, have))
            idx.append(k)
        return list(names), (ctypes.c_size_t * max(len(idx), 1))(*idx)

    def extra(self, mass_msun: Num, age_yr: Num, z: Num, names=None) -> dict:
        """Extra quantities of one star (hrt_extra_at) of initial mass mass_msun (Msun), age age_yr (yr since
        birth) and metal mass fraction z: {name: value}, NaN before the track's first EEP and for remnants.
        names: a name, a list of names, or None for all of them."""
        names, idx = self._extra_indices(names)
        out = (ctypes.c_double * max(len(names), 1))()
        e, pe = new_error()
        rc = lib.hrt_extra_at(self._handle, _u.value(mass_msun, "mass", "mass_msun"), _u.value(z, "fraction", "z"),
                              _u.value(age_yr, "age", "age_yr"), len(names), idx, ctypes.addressof(out), None, pe)
        check(rc, e, "hrt_extra_at")
        return {n: out[k] for k, n in enumerate(names)}

    def extras_of(self, states, names=None) -> dict:
        """Extra quantities of the states evaluate(), isochrone() or Star.at() returned (a NumPy array of
        STATE_DTYPE), interpolated as log L is (hrt_state_extra): {name: array of the states' shape}."""
        _need_numpy("Grid.extras_of")
        names, idx = self._extra_indices(names)
        st = _np.ascontiguousarray(states)
        if st.dtype != STATE_DTYPE:
            raise ValueError("states must be an array of STATE_DTYPE")
        flat = st.reshape(-1)
        vals = _np.empty((flat.size, max(len(names), 1)))
        e, pe = new_error()
        base, step, row = flat.ctypes.data, flat.dtype.itemsize, vals.strides[0]
        for i in range(flat.size):
            rc = lib.hrt_state_extra(self._handle, base + i * step, len(names), idx, vals.ctypes.data + i * row, pe)
            if rc not in (0, Status.MASS_RANGE, Status.Z_RANGE, Status.NO_TRACK, Status.DOMAIN):
                check(rc, e, "hrt_state_extra")
            if rc != 0:
                vals[i, :] = _np.nan
        return {n: vals[:, k].reshape(st.shape).copy() for k, n in enumerate(names)}

    def __repr__(self):
        if self._h is None:
            return "<hrtrail.Grid closed>"
        return "<hrtrail.Grid %s: %d metallicities, routes %s, %s>" % (
            self.path, self.n_z, ",".join(self.routes), self.interp.key)

    # -- interpolation error (the stored leave-one-out field) --------------
    @property
    def has_interp_error(self) -> bool:
        """True if the grid file stores an interpolation error field for this grid's type
        (hrt_grid_has_interp_error; add one with hrtrail.accuracy(path, store=True))."""
        return bool(lib.hrt_grid_has_interp_error(self._handle))

    def interp_error(self, states):
        """Estimated interpolation error of states of this grid (hrt_state_interp_error).

        states: a State (returns a dict with log_l_dex, log_teff_dex, log_age_dex and
        n_tracks; raises if there is no estimate), or a STATE_DTYPE array (evaluate,
        Star.at, Star.eep_states, isochrones: returns a structured array of the same
        shape with those fields, NaN and 0 where there is none: remnants, failed states).

        The statistic: the largest leave-one-out |error| (dex, at the same EEP) of the
        two measured tracks either side of the state's mass, in the block of at most
        10 EEPs holding its EEP, in the metallicity groups either side of its Z; between
        groups, plus the stored error across metallicity (accuracy(..., across_z=True,
        store=True)) of the bracketing groups' tracks nearest its mass.  An upper
        estimate, not a 1-sigma error (include/hrtrail/core.h, tracks/MODEL.md).
        """
        def one(addr, raise_on_error):
            out = HrtInterpError()
            e, pe = new_error()
            rc = lib.hrt_state_interp_error(self._handle, addr, ctypes.byref(out), pe)
            if raise_on_error:
                check(rc, e, "hrt_state_interp_error")
            return out
        if isinstance(states, State):
            c = HrtState()
            c.struct_size = _STATE_SIZE
            for name in State.__slots__:
                setattr(c, name, getattr(states, name))
            r = one(ctypes.addressof(c), True)
            return {"log_l_dex": r.log_l_dex, "log_teff_dex": r.log_teff_dex, "log_age_dex": r.log_age_dex,
                    "n_tracks": int(r.n_tracks)}
        arr = _np.ascontiguousarray(states, dtype=STATE_DTYPE)
        res = _np.empty(arr.shape, dtype=[("log_l_dex", "f8"), ("log_teff_dex", "f8"), ("log_age_dex", "f8"),
                                          ("n_tracks", "i4")])
        flat, rflat = arr.reshape(-1), res.reshape(-1)
        base = flat.ctypes.data
        for i in range(flat.size):
            r = one(base + i * _STATE_SIZE, False)
            rflat[i] = (r.log_l_dex, r.log_teff_dex, r.log_age_dex, r.n_tracks)
        return res

    # -- evaluation -------------------------------------------------------
    def state(self, mass_msun: Num, age_yr: Num, z: Num) -> "State":
        """State (a State object) of one star of initial mass (Msun) and metallicity z at age_yr (yr).

        Raises OutsideGridError or InvalidInputError as the library reports.
        """
        m = ctypes.c_double(_u.value(mass_msun, "mass", "mass_msun"))
        a = ctypes.c_double(_u.value(age_yr, "age", "age_yr"))
        out = HrtState()
        e, pe = new_error()
        rc = lib.hrt_eval(self._handle, 1, ctypes.addressof(m), None, _u.value(z, "fraction", "z"), ctypes.addressof(a),
                          ctypes.addressof(out), pe)
        check(rc, e, "hrt_eval")
        return State.from_c(out)

    def evaluate(self, mass_msun: ArrayArg, age_yr: ArrayArg, z: ArrayArg, out=None, errors: str = "raise",
                 threads: int = 1):
        """States of many unrelated stars in one call of hrt_eval (no Python loop).

        mass_msun  initial masses, Msun (array-like)
        age_yr     ages since birth, yr (array-like)
        z          metal mass fraction: a scalar (all stars) or an array
        The three broadcast against each other.
        out        optional preallocated C-contiguous array of STATE_DTYPE with the
                   broadcast shape, reused instead of a new one
        errors     "raise": raise the first failing star's error (message names its
                   index; the states are attached as exc.states); "ignore": return
                   anyway, each star's code in states["status"] (failed stars NaN)
        threads    threads of the library's hrt_eval_parallel (0: as many as OpenMP
                   offers, hrtrail.max_threads()); 1 (default) is hrt_eval itself.
                   The states, code and message are identical bit for bit.
        Returns a NumPy structured array of STATE_DTYPE: the library's output
        itself, fields as in State (states["log_l_lsun"], states["phase"], ...).
        Without NumPy, sequences are accepted and a list of State is returned.
        """
        if errors not in ("raise", "ignore"):
            raise ValueError("errors must be 'raise' or 'ignore', not %r" % (errors,))
        if _np is None:
            return self._evaluate_plain(mass_msun, age_yr, z, errors)
        h = self._handle
        mass_msun = _u.array(mass_msun, "mass", "mass_msun")
        age_yr = _u.array(age_yr, "age", "age_yr")
        z = _u.array(z, "fraction", "z")
        z_is_scalar = _np.ndim(z) == 0
        if z_is_scalar:
            m, a = _np.broadcast_arrays(_as_f8(mass_msun), _as_f8(age_yr))
            zz, z_all = None, float(z)
        else:
            m, a, zz = _np.broadcast_arrays(_as_f8(mass_msun), _as_f8(age_yr), _as_f8(z))
            z_all = 0.0
            zz = _as_f8(zz)
        m, a = _as_f8(m), _as_f8(a)
        if out is None:
            out = _np.empty(m.shape, dtype=STATE_DTYPE).view(States)
        else:
            if (not isinstance(out, _np.ndarray) or out.dtype != STATE_DTYPE or out.shape != m.shape
                    or not out.flags.c_contiguous or not out.flags.writeable):
                raise ValueError("out must be a writable C-contiguous array of STATE_DTYPE, shape %s"
                                 % (m.shape,))
        n = m.size
        pm, pa, po = m.ctypes.data, a.ctypes.data, out.ctypes.data
        pz = zz.ctypes.data if zz is not None else None
        if isinstance(threads, bool) or not isinstance(threads, numbers.Integral) or threads < 0:
            raise InvalidInputError(Status.DOMAIN, "threads: a whole number >= 0 expected, not %r" % (threads,))
        e, pe = new_error()
        if threads == 1:
            rc = lib.hrt_eval(h, n, pm, pz, z_all, pa, po, pe)
        else:
            rc = lib.hrt_eval_parallel(h, n, pm, pz, z_all, pa, po, int(threads), pe)
        failures = [(rc, e)]
        rc, e = failures[0] if failures else (0, None)
        if rc != 0 and errors == "raise":
            try:
                check(rc, e, "hrt_eval")
            except Exception as exc:
                exc.states = out
                raise
        return out

    def _evaluate_plain(self, mass_msun, age_yr, z, errors):
        m = [_u.value(x, "mass", "mass_msun") for x in mass_msun]
        a = [_u.value(x, "age", "age_yr") for x in age_yr]
        if len(m) != len(a):
            raise ValueError("mass_msun and age_yr differ in length")
        n = len(m)
        cm, ca = (ctypes.c_double * n)(*m), (ctypes.c_double * n)(*a)
        if not isinstance(z, (list, tuple)):
            cz, z_all = None, _u.value(z, "fraction", "z")
        else:
            zl = [_u.value(x, "fraction", "z") for x in z]
            if len(zl) != n:
                raise ValueError("z differs in length from mass_msun")
            cz, z_all = (ctypes.c_double * n)(*zl), 0.0
        out = (HrtState * n)()
        e, pe = new_error()
        rc = lib.hrt_eval(self._handle, n, ctypes.addressof(cm), None if cz is None else ctypes.addressof(cz),
                          z_all, ctypes.addressof(ca), ctypes.addressof(out), pe)
        states = [State.from_c(s) for s in out]
        if rc != 0 and errors == "raise":
            exc = error_for(rc, "hrt_eval: " + e.message.decode("utf-8", errors="replace"))
            exc.states = states
            raise exc
        return states

    def isochrone(self, age_yr: Num, z: Num, phases: Optional[Iterable] = None, leave_out: Iterable = (),
                  max_dlog_l: Optional[Num] = None):
        """The isochrone at age_yr (yr, > 0) and metallicity z.

        Every initial mass alive and modelled at that age: one point at each EEP
        the age falls on, the ends of each route's masses, and between
        neighbours of one phase as many masses as keep log L steps within
        max_dlog_l (dex; default 0.02).  phases: the phases to include, as
        Phase members or keys (default: every phase of a luminous star, no
        remnants); leave_out: phases to remove.  Returns a STATE_DTYPE array
        ordered by route, then initial mass.  Raises OutsideGridError (Z out of
        range) or InvalidInputError (age not positive and finite, unknown phase).
        """
        _need_numpy("Grid.isochrone")
        h = self._handle
        opt = HrtIsochroneOptions()
        lib.hrt_isochrone_options_default(ctypes.byref(opt))
        if phases is not None:
            opt.phases = _phase_mask(phases)
        opt.phases &= ~_phase_mask(leave_out)
        if max_dlog_l is not None:
            opt.max_dlog_l = _u.value(max_dlog_l, "fraction", "max_dlog_l")
        defaults = phases is None and not leave_out and max_dlog_l is None
        age, zz = _u.value(age_yr, "age", "age_yr"), _u.value(z, "fraction", "z")
        cap = 4096
        n = ctypes.c_size_t()
        while True:
            out = _np.empty(cap, dtype=STATE_DTYPE)
            e, pe = new_error()
            if defaults:  # hrt_isochrone is hrt_isochrone_with(..., NULL, ...)
                rc = lib.hrt_isochrone(h, age, zz, out.ctypes.data, cap, ctypes.byref(n), pe)
            else:
                rc = lib.hrt_isochrone_with(h, age, zz, ctypes.byref(opt), out.ctypes.data, cap, ctypes.byref(n), pe)
            if rc == Status.BUFFER and n.value > cap:
                cap = n.value
                continue
            check(rc, e, "hrt_isochrone")
            return _states(out[:n.value].copy() if n.value < cap else out)

    def accuracy(self, interp=None, threads: int = 0, progress=None, z=None, store: bool = False,
                 across_z: bool = False) -> List[dict]:
        """Leave-one-out interpolation accuracy of this grid: hrtrail.accuracy(self, ...)."""
        from .build import accuracy
        return accuracy(self, interp=interp, threads=threads, progress=progress, z=z, store=store,
                        across_z=across_z)

    def star(self, mass_msun: Num, z: Num) -> "Star":
        """Star of initial mass (Msun) and metallicity z on this grid (see Star)."""
        return Star(self, mass_msun, z)

    # -- stars whose mass changes ------------------------------------------
    def remap(self, state: "State", new_mass_msun: Num) -> "State":
        """The point of the track family from which a star continues after its current mass changed
        (hrt_remap): a State whose initial_mass_msun is the effective initial mass and age_yr the
        effective age; its mass_msun is new_mass_msun, the current mass after the change (Msun).

        state is a State from this grid (Grid.state, Grid.evaluate, Star.at, Grid.step, Grid.remap).
        Raises HrtrailError with Status.NO_EQUIVALENT where the grid holds no equivalent point (a
        remnant, a stripped core, a star before its first EEP, no track with the star's core in its
        phase at that mass), OutsideGridError (MASS_RANGE) where the equivalent initial mass lies
        outside the grid.  Method and limits: tracks/MODEL.md, "Stars whose mass changes".
        """
        out = HrtState()
        e, pe = new_error()
        rc = lib.hrt_remap(self._handle, ctypes.byref(_state_to_c(state)),
                           _u.value(new_mass_msun, "mass", "new_mass_msun"), ctypes.byref(out), pe)
        check(rc, e, "hrt_remap")
        return State.from_c(out)

    def step(self, state: "State", dt_yr: Num, mdot_msun_yr: Num = 0.0) -> Tuple["State", float]:
        """Advance a star by dt_yr along its track while its mass changes at mdot_msun_yr (Msun/yr,
        > 0 gained) on top of its own wind (hrt_step).  Returns (the new State, the largest next step
        in yr).  With mdot_msun_yr = 0 the star follows its own track exactly.  Raises as remap().
        """
        out = HrtState()
        dtn = ctypes.c_double()
        e, pe = new_error()
        rc = lib.hrt_step(self._handle, ctypes.byref(_state_to_c(state)), _u.value(dt_yr, "age", "dt_yr"),
                          float(mdot_msun_yr), ctypes.byref(out), ctypes.byref(dtn), pe)
        check(rc, e, "hrt_step")
        return State.from_c(out), dtn.value


def _state_to_c(state) -> HrtState:
    """A State (or a record of Grid.evaluate) as the C struct the library reads."""
    if not isinstance(state, State):
        state = State.from_record(state)
    c = HrtState()
    c.struct_size = ctypes.sizeof(HrtState)
    for n in ("status", "phase", "route", "remnant", "flags"):
        setattr(c, n, int(getattr(state, n)))
    for n in _FLOAT_FIELDS:
        setattr(c, n, float(getattr(state, n)))
    return c


class Star(_Owned):
    """One star: its track interpolated once (hrt_star), then asked any age.

    Star(grid, mass_msun, z)  initial mass in Msun, Z the metal mass fraction.
    Raises OutsideGridError / InvalidInputError.  The star keeps its grid
    alive; Grid.close() also closes its stars.  One thread at a time.
    """

    def __init__(self, grid: Grid, mass_msun: Num, z: Num):
        self._h = None
        self.grid = grid
        h = ctypes.c_void_p()
        e, pe = new_error()
        check(lib.hrt_star_new(grid._handle, _u.value(mass_msun, "mass", "mass_msun"), _u.value(z, "fraction", "z"),
                               ctypes.byref(h), pe), e,
              "hrt_star_new(%r Msun, Z = %r)" % (mass_msun, z))
        self._h = h
        grid._stars.add(self)

    _what = "star (or its grid)"

    def _free(self, h):
        lib.hrt_star_free(h)

    @property
    def initial_mass_msun(self):
        """Initial mass, Msun."""
        return lib.hrt_star_mass(self._handle)

    @property
    def z(self):
        """Metal mass fraction."""
        return lib.hrt_star_z(self._handle)

    @property
    def route(self):
        """Index of the star's route (Grid.routes)."""
        return lib.hrt_star_route(self._handle)

    @property
    def route_name(self):
        """Name of the star's route."""
        return text(lib.hrt_grid_route_name(self.grid._handle, self.route))

    @property
    def end_age_yr(self):
        """Age of the last EEP, yr: white dwarf cooling onset or core collapse (or end of a truncated track)."""
        return lib.hrt_star_end_age(self._handle)

    @property
    def remnant(self):
        """Final remnant: RemnantInfo(remnant=Remnant, remnant_mass_msun)."""
        k, m = ctypes.c_int(), ctypes.c_double()
        check(lib.hrt_star_remnant(self._handle, ctypes.byref(k), ctypes.byref(m)), None, "hrt_star_remnant")
        return RemnantInfo(Remnant(k.value), m.value)

    def at(self, age_yr: ArrayArg):
        """State at age_yr (yr since birth).

        A scalar age gives a State (hrt_star_at); an array of ages gives a
        STATE_DTYPE array from one hrt_eval call at the star's mass and Z,
        which the library guarantees identical bit for bit.  Raises
        InvalidInputError (NaN or negative age) or OutsideGridError (past a
        truncated track with no known remnant).
        """
        if _np is None or (_np.ndim(age_yr) == 0 and not _u._holds_quantity(age_yr)):
            out = HrtState()
            check(lib.hrt_star_at(self._handle, _u.value(age_yr, "age", "age_yr"), ctypes.addressof(out)), None,
                  "hrt_star_at(%r yr)" % (age_yr,))
            return State.from_c(out)
        a = _u.array(age_yr, "age", "age_yr")
        return self.grid.evaluate(_np.full(a.shape, self.initial_mass_msun), a, self.z)

    def track(self):
        """The star's interpolated track: its state at every EEP (STATE_DTYPE array, or list of State)."""
        h = self._handle
        n = lib.hrt_star_n_eep(h)
        if _np is None:
            out = (HrtState * n)()
            for j in range(n):
                check(lib.hrt_star_eep_state(h, j, ctypes.addressof(out[j])), None, "hrt_star_eep_state")
            return [State.from_c(s) for s in out]
        out = _np.empty(n, dtype=STATE_DTYPE)
        base = out.ctypes.data
        for j in range(n):  # one call per EEP: a few hundred at most
            check(lib.hrt_star_eep_state(h, j, base + j * _STATE_SIZE), None, "hrt_star_eep_state(%d)" % j)
        return _states(out)

    def phases(self) -> List[PhaseSpan]:
        """The star's timetable: list of PhaseSpan(phase, phase_start_yr, phase_end_yr), remnant included."""
        h = self._handle
        n = ctypes.c_size_t()
        cap = 32
        while True:
            spans = (HrtPhaseSpan * cap)()
            rc = lib.hrt_star_phases(h, spans, cap, ctypes.byref(n))
            if rc == Status.BUFFER and n.value > cap:
                cap = n.value
                continue
            check(rc, None, "hrt_star_phases")
            return [PhaseSpan(Phase(s.phase) if s.phase in Phase._value2member_map_ else s.phase,
                              s.phase_start_yr, s.phase_end_yr) for s in spans[:n.value]]

    def keypoints(self) -> "collections.OrderedDict[str, float]":
        """Ages (yr) of the keypoints of the star's route, as an ordered dict {name: age_yr} (NaN if not reached)."""
        h = self._handle
        out = collections.OrderedDict()
        age = ctypes.c_double()
        for k in range(lib.hrt_star_n_keypoints(h)):
            check(lib.hrt_star_keypoint_age(h, k, ctypes.byref(age)), None, "hrt_star_keypoint_age")
            out[text(lib.hrt_star_keypoint_name(h, k))] = age.value
        return out

    def __repr__(self):
        if self._h is None:
            return "<hrtrail.Star closed>"
        return "<hrtrail.Star %.6g Msun, Z = %.6g, route %s>" % (self.initial_mass_msun, self.z,
                                                                  self.route_name)


def wd_radius_rsun(mass_msun: Num) -> float:
    """White dwarf radius (Rsun) at mass (Msun), zero-temperature mass-radius relation
    of Eggleton (quoted by Verbunt & Rappaport 1988, ApJ 332, 193); NaN outside (0, 1.44)."""
    return lib.hrt_wd_radius_rsun(_u.value(mass_msun, "mass", "mass_msun"))


def wd_log_l(mass_msun: Num, kind: int, log_l0: Num, dt_yr: Num) -> float:
    """log10 L/Lsun of a white dwarf of mass (Msun) and kind (Remnant HE_WD/CO_WD/ONE_WD)
    dt_yr years after cooling began at log10 L/Lsun = log_l0, by Mestel's (1952, MNRAS 112,
    583) law; accurate to a factor of about 1.5 in age between 1e-4.5 and 1e-1 Lsun."""
    return lib.hrt_wd_log_l(_u.value(mass_msun, "mass", "mass_msun"), int(kind), _u.value(log_l0, "fraction", "log_l0"),
                            _u.value(dt_yr, "age", "dt_yr"))


def collapse_remnant(co_core_mass_msun: Num, final_mass_msun: Num) -> RemnantInfo:
    """Remnant of core collapse from the final CO core and total masses (Msun): RemnantInfo(Remnant.NS or
    Remnant.BH, gravitational mass Msun) by the "delayed" prescription of Fryer et al. (2012, ApJ 749, 91) as
    hrt_collapse_remnant applies it (good to a factor of about 2 for black holes).  InvalidInputError for
    masses not finite, negative, or a core heavier than the star."""
    k, m = ctypes.c_int(), ctypes.c_double()
    check(lib.hrt_collapse_remnant(_u.value(co_core_mass_msun, "mass", "co_core_mass_msun"),
                                   _u.value(final_mass_msun, "mass", "final_mass_msun"), ctypes.byref(k),
                                   ctypes.byref(m)), None, "hrt_collapse_remnant")
    return RemnantInfo(Remnant(k.value), m.value)


#: Teff range (K) of the stars Flower's (1996) bolometric corrections were fitted to (HRT_BC_V_TEFF_MIN_K/MAX_K).
BC_V_TEFF_RANGE_K = (2900.0, 52500.0)

Magnitudes = collections.namedtuple("Magnitudes", "abs_mbol bc_v abs_mv mv flags")
Magnitudes.__doc__ = """Magnitudes of states (hrt_magnitudes); NumPy arrays of the states' shape.

abs_mbol  absolute bolometric magnitude, M_bol = 4.74 - 2.5 log10 L/Lsun (IAU 2015 B2)
bc_v      bolometric correction in V, BC_V (Flower 1996 with the coefficients of Torres 2010), mag
abs_mv    absolute V magnitude, M_V = M_bol - BC_V
mv        apparent V magnitude, M_V + 5 log10(distance_pc / 10) + A_V (NaN without a distance)
flags     the states' Flag bits, with Flag.BEYOND_LAW where BC_V was not fitted (Teff outside
          BC_V_TEFF_RANGE_K, or a remnant); 0 for a state whose status is not OK"""


def bc_v(log_teff_k: Num) -> float:
    """Bolometric correction in Johnson V, BC_V = M_bol - M_V (mag), at log10 Teff/K (hrt_bc_v): the
    polynomials of Flower (1996, ApJ 469, 355) with the coefficients reprinted by Torres (2010, AJ 140,
    1158).  Fitted to stars of 2900-52500 K (BC_V_TEFF_RANGE_K); within about 0.06 mag of the mean B3-K5
    dwarfs of Pecaut & Mamajek (2013), 0.2 mag or more off for M dwarfs; outside the range the
    polynomial is returned but is no bolometric correction.  NaN for a non-finite argument."""
    return lib.hrt_bc_v(_u.value(log_teff_k, "fraction", "log_teff_k"))


def magnitudes(states, distance_pc: Optional[Num] = None, a_v_mag: Num = 0.0) -> Magnitudes:
    """Bolometric and V magnitudes of states (hrt_magnitudes): a STATE_DTYPE array (Grid.evaluate,
    Grid.isochrone, Star.track), one of its records, or a State.

    distance_pc  distance (pc, > 0; or an astropy Quantity) for the apparent magnitude mv; None: mv is NaN
    a_v_mag      extinction A_V (mag, >= 0), added to mv

    Returns Magnitudes (arrays of the states' shape).  States without a finite L and Teff, or whose
    status is not OK, get NaN.  InvalidInputError for a distance not finite and positive or A_V < 0."""
    _need_numpy("magnitudes")
    if isinstance(states, State):
        a = _np.zeros((), dtype=STATE_DTYPE)
        for n in State.__slots__:
            a[n] = int(getattr(states, n)) if n in ("status", "phase", "route", "remnant", "flags") else \
                getattr(states, n)
        a["struct_size"] = _STATE_SIZE
    else:
        a = _np.asarray(states)
        if a.dtype != STATE_DTYPE:
            raise InvalidInputError(Status.DOMAIN, "magnitudes: states must be a STATE_DTYPE array or a State, "
                                    "not %r" % (a.dtype if isinstance(states, _np.ndarray) else type(states).__name__))
    a = _np.require(a, requirements="C")  # keeps a 0-d array 0-d
    n = a.size
    mb, bc, ma, mv = (_np.empty(a.shape) for _ in range(4))
    fl = _np.empty(a.shape, dtype=_np.int32)
    d = _u.value(distance_pc, "distance", "distance_pc") if distance_pc is not None else 10.0
    av = _u.value(a_v_mag, "magnitude", "a_v_mag")
    e, pe = new_error()
    check(lib.hrt_magnitudes(n, a.ctypes.data if n else None, d, av, mb.ctypes.data, bc.ctypes.data,
                             ma.ctypes.data, mv.ctypes.data if distance_pc is not None else None, fl.ctypes.data, pe),
          e, "hrt_magnitudes")
    if distance_pc is None:
        mv.fill(_np.nan)
    return Magnitudes(mb, bc, ma, mv, fl)


def upgrade_grid(old_path: PathArg, new_path: PathArg) -> None:
    """Convert a grid file of an older format version to the current one (hrt_grid_upgrade).

    old_path  a grid file of format version 1 up to the library's (tracks/FORMAT.md)
    new_path  where the converted grid is written; written under a temporary name
              and renamed when complete, so it may be old_path itself

    Grid(path) refuses a file of an older version (GridFileError with code
    Status.VERSION, whose message names this conversion); the converted file
    has the datasets of today's vocabulary and hrtrail's phase and remnant
    codes, with every value copied bit for bit, so it gives the same answers.
    Root text attributes are kept and 'converted_from' records the conversion.
    Raises GridFileError (missing, unreadable or invalid file, newer version,
    unwritable destination).
    """
    e, pe = new_error()
    check(lib.hrt_grid_upgrade(_u.path(old_path, "old_path"), _u.path(new_path, "new_path"), pe), e,
          "hrt_grid_upgrade(%s -> %s)" % (old_path, new_path))
