"""ctypes mirror of include/hrtrail.h and the loading of libhrtrail.

Everything that depends on the C ABI lives here: the structures (field for
field the C ones), the prototypes, the search for the shared library and the
ABI guard that refuses a library this package was not written for.
"""
import ctypes
import ctypes.util
import os

# The ABI this package was written for (HRT_ABI_VERSION of include/hrtrail.h).
# It is deliberately not generated from the build: when the header's ABI number
# changes, this file must be reviewed and the number changed by hand.
ABI_VERSION = 2

_DP = ctypes.POINTER(ctypes.c_double)


class HrtError(ctypes.Structure):
    """struct hrt_error: the code and a specific message."""
    _fields_ = [("code", ctypes.c_int), ("message", ctypes.c_char * 256)]


# Field names and C types of struct hrt_state, in declaration order.
STATE_FIELDS = [("struct_size", ctypes.c_uint32), ("status", ctypes.c_int32),
                ("phase", ctypes.c_int32), ("route", ctypes.c_int32),
                ("remnant", ctypes.c_int32), ("flags", ctypes.c_int32)] + \
    [(name, ctypes.c_double) for name in (
        "initial_mass_msun", "z", "age_yr", "log_l_lsun", "log_teff_k", "log_r_rsun", "log_g_cgs",
        "mass_msun", "he_core_mass_msun", "co_core_mass_msun", "eep", "phase_fraction",
        "phase_start_yr", "phase_end_yr", "remnant_mass_msun")] + \
    [("reserved", ctypes.c_double * 7)]


class HrtState(ctypes.Structure):
    """struct hrt_state, field for field (see State for the documented version)."""
    _fields_ = STATE_FIELDS


class HrtPhaseSpan(ctypes.Structure):
    """struct hrt_phase_span."""
    _fields_ = [("phase", ctypes.c_int32), ("reserved_", ctypes.c_int32),
                ("phase_start_yr", ctypes.c_double), ("phase_end_yr", ctypes.c_double)]


class HrtIsochroneOptions(ctypes.Structure):
    """struct hrt_isochrone_options."""
    _fields_ = [("phases", ctypes.c_uint64), ("max_dlog_l", ctypes.c_double), ("reserved", ctypes.c_double * 6)]


class AbiMismatchError(ImportError):
    """The shared library found is not the one this package was written for."""


def _candidates():
    """Library names or paths to try, in order."""
    env = os.environ.get("HRTRAIL_LIB")
    if env:
        return [env]  # explicit choice: no silent fallback to another copy
    # The soname on the loader's path (LD_LIBRARY_PATH, ldconfig), as a C program finds it;
    # then where meson installed it (when ldconfig has not been run for that directory).
    out = ["libhrtrail.so.%d" % ABI_VERSION]
    try:
        from . import _install  # written by meson at configure time, installed with the package
        out.append(os.path.join(_install.LIBDIR, "libhrtrail.so.%d" % ABI_VERSION))
    except ImportError:
        pass
    found = ctypes.util.find_library("hrtrail")
    if found:
        out.append(found)
    return out


def _open_library():
    tried = []
    for name in _candidates():
        try:
            return ctypes.CDLL(name), name
        except OSError as e:
            tried.append("%s (%s)" % (name, e))
    raise ImportError("hrtrail: cannot load libhrtrail; tried: " + "; ".join(tried) +
                      ". Install the library (meson install, then ldconfig) or set HRTRAIL_LIB "
                      "to the path of libhrtrail.so.%d." % ABI_VERSION)


def _check_abi(lib, name):
    """The ABI guard: the library's ABI number and sizeof(hrt_state) must be ours."""
    try:
        abi_fn, size_fn = lib.hrt_abi_version, lib.hrt_state_size
    except AttributeError:
        raise AbiMismatchError("hrtrail: %s has no hrt_abi_version()/hrt_state_size(): "
                               "not an hrtrail library of ABI %d" % (name, ABI_VERSION)) from None
    abi_fn.restype, abi_fn.argtypes = ctypes.c_int, []
    size_fn.restype, size_fn.argtypes = ctypes.c_size_t, []
    abi, size = abi_fn(), size_fn()
    if abi != ABI_VERSION or size != ctypes.sizeof(HrtState):
        raise AbiMismatchError(
            "hrtrail: library %s reports ABI %d and sizeof(hrt_state) = %d bytes; this Python "
            "package was written for ABI %d and %d bytes. Install matching versions of the "
            "library and the package." % (name, abi, size, ABI_VERSION, ctypes.sizeof(HrtState)))


def _declare(lib):
    vp, sz, i, d, cp, lg = (ctypes.c_void_p, ctypes.c_size_t, ctypes.c_int, ctypes.c_double,
                            ctypes.c_char_p, ctypes.c_long)
    err = ctypes.POINTER(HrtError)
    pvp, pd, pi, psz = ctypes.POINTER(vp), _DP, ctypes.POINTER(i), ctypes.POINTER(sz)
    protos = {
        "hrt_strerror": (cp, [i]),
        "hrt_version": (cp, []),
        "hrt_phase_name": (cp, [i]),
        "hrt_phase_key": (cp, [i]),
        "hrt_phase_from_key": (i, [cp]),
        "hrt_phase_code": (i, [sz]),
        "hrt_remnant_name": (cp, [i]),
        "hrt_remnant_key": (cp, [i]),
        "hrt_remnant_from_key": (i, [cp]),
        "hrt_remnant_code": (i, [sz]),
        "hrt_interp_name": (cp, [i]),
        "hrt_interp_from_name": (i, [cp]),
        "hrt_grid_open_with": (i, [cp, i, pvp, err]),
        "hrt_grid_close": (None, [vp]),
        "hrt_grid_upgrade": (i, [cp, cp, err]),
        "hrt_default_grid_path": (cp, []),
        "hrt_grid_interp": (i, [vp]),
        "hrt_grid_n_z": (sz, [vp]),
        "hrt_grid_z": (d, [vp, sz]),
        "hrt_grid_z_ref": (d, [vp]),
        "hrt_grid_n_masses": (sz, [vp, sz]),
        "hrt_grid_mass": (d, [vp, sz, sz]),
        "hrt_grid_track_route": (i, [vp, sz, sz]),
        "hrt_grid_track_n_eep": (sz, [vp, sz, sz]),
        "hrt_grid_n_routes": (sz, [vp]),
        "hrt_grid_route_name": (cp, [vp, sz]),
        "hrt_grid_route_n_eep": (sz, [vp, sz]),
        "hrt_grid_route_n_keypoints": (sz, [vp, sz]),
        "hrt_grid_keypoint_name": (cp, [vp, sz, sz]),
        "hrt_grid_keypoint_eep": (lg, [vp, sz, sz]),
        "hrt_grid_route_boundary": (d, [vp, sz, sz]),
        "hrt_grid_attribute": (cp, [vp, cp]),
        "hrt_grid_memory_bytes": (sz, [vp]),
        "hrt_grid_mass_range": (i, [vp, d, pd, pd]),
        "hrt_grid_z_range": (i, [vp, pd, pd]),
        "hrt_grid_route_of": (i, [vp, d, d, pi]),
        # Arrays go in as plain addresses (c_void_p): no per-call conversion.
        "hrt_eval": (i, [vp, sz, vp, vp, d, vp, vp, err]),
        "hrt_star_new": (i, [vp, d, d, pvp, err]),
        "hrt_star_free": (None, [vp]),
        "hrt_star_at": (i, [vp, d, vp]),
        "hrt_star_n_eep": (sz, [vp]),
        "hrt_star_eep_state": (i, [vp, sz, vp]),
        "hrt_star_route": (i, [vp]),
        "hrt_star_mass": (d, [vp]),
        "hrt_star_z": (d, [vp]),
        "hrt_star_n_keypoints": (sz, [vp]),
        "hrt_star_keypoint_name": (cp, [vp, sz]),
        "hrt_star_keypoint_age": (i, [vp, sz, pd]),
        "hrt_star_end_age": (d, [vp]),
        "hrt_star_remnant": (i, [vp, pi, pd]),
        "hrt_star_phases": (i, [vp, ctypes.POINTER(HrtPhaseSpan), sz, psz]),
        "hrt_isochrone": (i, [vp, d, d, vp, sz, psz, err]),
        "hrt_isochrone_options_default": (None, [ctypes.POINTER(HrtIsochroneOptions)]),
        "hrt_isochrone_with": (i, [vp, d, d, ctypes.POINTER(HrtIsochroneOptions), vp, sz, psz, err]),
        "hrt_wd_radius_rsun": (d, [d]),
        "hrt_wd_log_l": (d, [d, i, d, d]),
    }
    for fname, (res, args) in protos.items():
        fn = getattr(lib, fname)
        fn.restype, fn.argtypes = res, args


def load():
    """Find, check and declare libhrtrail; returns (CDLL, the name it was loaded by)."""
    lib, name = _open_library()
    _check_abi(lib, name)
    _declare(lib)
    return lib, name


lib, library_path = load()


def text(b):
    """A C string returned by the library as str (None stays None)."""
    return None if b is None else b.decode("utf-8", errors="replace")
