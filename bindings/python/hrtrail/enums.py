"""Enumerations of hrtrail as Python enums.

Phase and Remnant are built from the loaded library itself, entry by entry of
its lists (HRT_PHASE_LIST, HRT_REMNANT_LIST of include/hrtrail/core.h, walked
with hrt_phase_code(i) / hrt_remnant_code(i)): values are hrtrail's own codes,
grouped by tens (tracks/FORMAT.md, "Phase and remnant codes": Phase.MS = 11,
Phase.RGB = 21, Remnant.CO_WD = 11, ...), member names the library's keys in
upper case (hrt_phase_key: "ms" -> Phase.MS), ``.key`` the key itself and
``.label`` the library's descriptive name (hrt_phase_name: "main sequence").
Interp is read from hrt_interp_name (0, 1, ... until "unknown").  Status mirrors
HRT_ERROR_LIST of the header (the tests check it, and the two lists above,
against the header); Flag mirrors the HRT_FLAG_* bits.
"""
import enum

from ._clib import lib, text

_MAX_SCAN = 256  # far more values than any of these enumerations will have
# HRT_PHASE_SLOTS and HRT_REMNANT_SLOTS of include/hrtrail/core.h: every code is below
# them, so a list cannot have more entries (the tests check the numbers against the header).
_PHASE_SLOTS = 64
_REMNANT_SLOTS = 32


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
    NO_EQUIVALENT = 16

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
    BEYOND_LAW = 0x10  #: an analytic remnant outside the range where its law holds (white dwarf above 0.1 or below 10^-4.5 Lsun); from magnitudes(): BC_V not fitted there


def _scan(key_fn):
    """(NAME, value) pairs of an enumeration numbered 0, 1, ..., read until the library says 'unknown'."""
    members = []
    for v in range(_MAX_SCAN):
        k = text(key_fn(v))
        if k == "unknown":
            break
        members.append((k.upper(), v))
    return members


def _listed(what, code_fn, key_fn, slots):
    """(NAME, code) pairs of a code list in the library's order: code_fn(i) for i = 0, 1, ...
    until it returns -1 (HRT_PHASE_N / HRT_REMNANT_N entries), NAME the key in upper case."""
    members = []
    for i in range(slots + 1):
        code = code_fn(i)
        if code < 0:
            return members
        if code >= slots:
            break
        members.append((text(key_fn(code)).upper(), code))
    raise ImportError("hrtrail: the library's %s list does not fit its %d slots: not the library "
                      "this package was written for" % (what, slots))


class _LabelledEnum(enum.IntEnum):
    """IntEnum whose members also carry the library's key and descriptive label."""

    @property
    def key(self):
        """The library's short key, as in CSV/JSON output and in the phases/ and remnants/ tables."""
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
Phase = _PhaseBase("Phase", _listed("phase", lib.hrt_phase_code, lib.hrt_phase_key, _PHASE_SLOTS),
                   module=__name__)
Phase.__doc__ = """Evolutionary phase (hrt_phase): hrtrail's phase codes, grouped by tens.

Values are the codes of HRT_PHASE_LIST (0 unknown; 1x hydrogen in the core, 2x
hydrogen-shell giants, 3x helium burning and the AGB, 4x massive stars after the
main sequence, 5x remnants); member names are the library's keys in upper case
(hrt_phase_key), ``.label`` its descriptive name (hrt_phase_name)."""
Remnant = _RemnantBase("Remnant", _listed("remnant", lib.hrt_remnant_code, lib.hrt_remnant_key,
                                          _REMNANT_SLOTS), module=__name__)
Remnant.__doc__ = """Kind of stellar remnant (hrt_remnant): hrtrail's remnant codes, grouped by tens.

Values are the codes of HRT_REMNANT_LIST (0 none, 1x white dwarfs, 20 neutron star,
30 black hole); member names are the library's keys in upper case (hrt_remnant_key),
``.label`` its descriptive name (hrt_remnant_name)."""
Interp = _InterpBase("Interp", _scan(lib.hrt_interp_name), module=__name__)
Interp.__doc__ = "Interpolation type across initial mass and [Fe/H] (hrt_interp)."


def phase_from_key(key):
    """Phase of a key such as 'rgb' (hrt_phase_from_key); ValueError for a key the library does not know."""
    code = lib.hrt_phase_from_key(key.encode())
    if code == 0 and key != "unknown":
        raise ValueError("%r is not a phase key (known: %s)" % (key, ", ".join(m.key for m in Phase)))
    return Phase(code)


def remnant_from_key(key):
    """Remnant of a key such as 'co_wd' (hrt_remnant_from_key); ValueError for a key the library does not know."""
    code = lib.hrt_remnant_from_key(key.encode())
    if code < 0:
        raise ValueError("%r is not a remnant key (known: %s)" % (key, ", ".join(m.key for m in Remnant)))
    return Remnant(code)


def as_interp(interp):
    """Interp member from an Interp, an int or a name such as 'steffen'."""
    if isinstance(interp, str):
        code = lib.hrt_interp_from_name(interp.lower().encode())
        if code >= 0:
            return Interp(code)
        else:
            raise ValueError("unknown interpolation type %r (known: %s)"
                             % (interp, ", ".join(m.key for m in Interp))) from None
    return Interp(interp)
