"""Inputs in the library's units.

Every number the binding passes to the library is in the units of the
vocabulary (tracks/FORMAT.md): masses in solar masses, ages in years, Z a
plain fraction (also [Fe/H], log g, log L: dex as plain numbers); Teff in
K, distances in pc, parallaxes in mas, fluxes in W m^-2, magnitudes in mag,
luminosities in W.  Plain numbers and NumPy arrays are taken as already in those
units.  An astropy Quantity (or a list of them) is converted to them, so
``1 * u.Gyr`` is 1e9 yr, never 1 yr; a quantity in a unit that cannot be
converted, and anything that is not a number (text, bytes, None, booleans),
is refused with InvalidInputError.  Paths may be str, bytes or os.PathLike;
a path with a NUL character is refused (C would cut it there).
"""
import numbers
import os

from .enums import Status
from .errors import InvalidInputError

try:
    import numpy as _np
except ImportError:  # pragma: no cover - NumPy is optional for the scalar API
    _np = None

# the library's unit of each kind of input, as astropy spells it
_UNITS = {"mass": "solMass", "age": "yr", "fraction": "", "temperature": "K", "distance": "pc",
          "parallax": "mas", "flux": "W / m2", "magnitude": "mag", "power": "W"}


def _has_unit(x):
    return hasattr(x, "unit") and hasattr(x, "to_value")


def _refuse(name, why):
    raise InvalidInputError(Status.DOMAIN, "%s: %s" % (name, why))


def _convert(x, kind, name):
    """An astropy Quantity (or a sequence of them) in the library's unit of kind."""
    import astropy.units as u  # present whenever a Quantity is
    try:
        q = x if _has_unit(x) else u.Quantity(list(x))
        return q.to_value(u.Unit(_UNITS[kind]))
    except (u.UnitConversionError, u.UnitsError, TypeError, ValueError) as exc:
        _refuse(name, "%s cannot be taken in %s (%s)" % (x, _UNITS[kind] or "a plain fraction", exc))


def _holds_quantity(x):
    return isinstance(x, (list, tuple)) and any(_has_unit(v) for v in x)


def value(x, kind, name):
    """One number (float) in the library's unit of kind ('mass', 'age', 'fraction')."""
    if _has_unit(x):
        x = _convert(x, kind, name)
        if _np is not None and _np.ndim(x) != 0:
            _refuse(name, "one value expected, got %d" % _np.size(x))
    if isinstance(x, bool) or (_np is not None and isinstance(x, _np.bool_)):
        _refuse(name, "a number expected, not %r" % (x,))
    if isinstance(x, numbers.Real) or (_np is not None and isinstance(x, _np.number) and _np.isrealobj(x)):
        return float(x)
    _refuse(name, "a number (in %s) or an astropy Quantity expected, not %r" % (_UNITS[kind] or "a plain fraction",
                                                                                  type(x).__name__))


def array(x, kind, name):
    """A C-contiguous float64 array in the library's unit of kind, 0-d included."""
    if _has_unit(x) or _holds_quantity(x):
        x = _convert(x, kind, name)
    a = _np.asarray(x)
    if a.dtype.kind not in "iuf":
        _refuse(name, "numbers (in %s) or astropy Quantities expected, not an array of %s"
                % (_UNITS[kind] or "plain fractions", a.dtype))
    return _np.asarray(a, dtype=_np.float64, order="C")


def path(p, name="path"):
    """A path as the bytes C receives: str, bytes or os.PathLike; NUL refused."""
    if isinstance(p, bytes):
        b = p
    elif isinstance(p, (str, os.PathLike)):
        b = os.fsencode(p)
    else:
        _refuse(name, "a path (str, bytes or os.PathLike) expected, not %s" % type(p).__name__)
    if b"\0" in b:
        _refuse(name, "a path with a NUL character cannot be passed to the library")
    return b
