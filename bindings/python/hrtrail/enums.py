"""Enumerations of hrtrail as Python enums.

Phase, Remnant and Interp are built from the loaded library itself: member
names are the library's keys in upper case (hrt_phase_key: "ms" -> Phase.MS,
hrt_remnant_key, hrt_interp_name), values are the C enum values, and
``.label`` is the library's descriptive name (hrt_phase_name: "main
sequence").  Status mirrors HRT_ERROR_LIST of include/hrtrail.h (the tests
check it against the header); Flag mirrors the HRT_FLAG_* bits.
"""
import enum

from ._clib import lib, text

_MAX_SCAN = 256  # far more values than any of these enumerations will have


class Status(enum.IntEnum):
    """Status codes (HRT_OK and HRT_E_* of include/hrtrail.h)."""
    OK = 0
    NULL = 1
    NOMEM = 2
    IO = 3
    FORMAT = 4
    VERSION = 5
    DOMAIN = 6
    MASS_RANGE = 7
    Z_RANGE = 8
    AGE_RANGE = 9
    BUFFER = 10
    INVALID = 11
    NOT_FOUND = 12
    INTERNAL = 13
    NO_TRACK = 14
    NO_MATCH = 15

    @property
    def description(self):
        """The library's short description of the code (hrt_strerror)."""
        return text(lib.hrt_strerror(int(self)))


class Flag(enum.IntFlag):
    """Bits of the state's ``flags`` field (HRT_FLAG_*)."""
    NONE = 0
    DARK = 0x1          #: not luminous (neutron star, black hole): L and Teff are NaN
    REMNANT = 0x2       #: past the last EEP: the state is the analytic remnant
    EXTRAPOLATED = 0x4  #: mass slightly outside its route's tracks: linear extrapolation
    NOT_MODELLED = 0x8  #: before the zero-age main sequence: only phase and masses are set


def _scan(key_fn, first_unknown_ok):
    """(key, value) pairs of a C enumeration, read from the library until it says 'unknown'."""
    members = []
    for v in range(_MAX_SCAN):
        k = text(key_fn(v))
        if k == "unknown" and not (v == 0 and first_unknown_ok):
            break
        members.append((k.upper(), v))
    return members


class _LabelledEnum(enum.IntEnum):
    """IntEnum whose members also carry the library's key and descriptive label."""

    @property
    def key(self):
        """The library's short key, as stored in grid files."""
        return self.name.lower()


class _PhaseBase(_LabelledEnum):
    @property
    def label(self):
        """Descriptive name from the library (hrt_phase_name), e.g. 'red giant branch'."""
        return text(lib.hrt_phase_name(int(self)))


class _RemnantBase(_LabelledEnum):
    @property
    def label(self):
        """Descriptive name from the library (hrt_remnant_name)."""
        return text(lib.hrt_remnant_name(int(self)))


class _InterpBase(_LabelledEnum):
    @property
    def label(self):
        """Name of the interpolation type (hrt_interp_name)."""
        return text(lib.hrt_interp_name(int(self)))


# Phase 0 is the library's own "unknown" phase; remnant 0 is "none".
Phase = _PhaseBase("Phase", _scan(lib.hrt_phase_key, True), module=__name__)
Phase.__doc__ = "Evolutionary phase (hrt_phase): member names are the library's keys (hrt_phase_key)."
Remnant = _RemnantBase("Remnant", _scan(lib.hrt_remnant_key, False), module=__name__)
Remnant.__doc__ = "Kind of stellar remnant (hrt_remnant), named by hrt_remnant_key."
Interp = _InterpBase("Interp", _scan(lib.hrt_interp_name, False), module=__name__)
Interp.__doc__ = "Interpolation type across initial mass and [Fe/H] (hrt_interp)."


def as_interp(interp):
    """Interp member from an Interp, an int or a name such as 'steffen'."""
    if isinstance(interp, str):
        try:
            return Interp[interp.upper()]
        except KeyError:
            raise ValueError("unknown interpolation type %r (known: %s)"
                             % (interp, ", ".join(m.key for m in Interp))) from None
    return Interp(interp)
