"""Minimal ctypes mirror of include/hrtrail.h (ABI 2) for the reference tests.

The shared library is the one named by the environment variable HRTRAIL_LIB
(meson test sets it to the libhrtrail.so of the build tree).  Only what the
reference tests call is declared here.  Independent of the Python binding
(bindings/python), so that the two check each other.
"""
import ctypes
import os

import numpy as np

HRT_ABI_VERSION = 2
HRT_OK = 0
HRT_INTERP = {"steffen": 0, "linear": 1, "cspline": 2, "akima": 3}
HRT_FLAG_EXTRAPOLATED = 0x4
HRT_FLAG_NOT_MODELLED = 0x8


class HrtError(ctypes.Structure):
    _fields_ = [("code", ctypes.c_int), ("message", ctypes.c_char * 256)]


class HrtState(ctypes.Structure):
    """Field for field the hrt_state of include/hrtrail.h."""
    _fields_ = [("struct_size", ctypes.c_uint32), ("status", ctypes.c_int32),
                ("phase", ctypes.c_int32), ("route", ctypes.c_int32),
                ("remnant", ctypes.c_int32), ("flags", ctypes.c_int32)] + \
        [(name, ctypes.c_double) for name in (
            "initial_mass_msun", "z", "age_yr", "log_l_lsun", "log_teff_k", "log_r_rsun", "log_g_cgs",
            "mass_msun", "he_core_mass_msun", "co_core_mass_msun", "eep", "phase_fraction",
            "phase_start_yr", "phase_end_yr", "remnant_mass_msun")] + \
        [("reserved", ctypes.c_double * 7)]


class HrtRouteSpec(ctypes.Structure):
    _fields_ = [("name", ctypes.c_char_p), ("n_keypoints", ctypes.c_size_t),
                ("keypoint_names", ctypes.POINTER(ctypes.c_char_p)),
                ("segment_samples", ctypes.POINTER(ctypes.c_int))]


_DP = ctypes.POINTER(ctypes.c_double)


class HrtTrackData(ctypes.Structure):
    _fields_ = [("initial_mass_msun", ctypes.c_double), ("route", ctypes.c_int),
                ("remnant", ctypes.c_int), ("remnant_mass_msun", ctypes.c_double),
                ("n", ctypes.c_size_t), ("log_age_yr", _DP), ("log_l_lsun", _DP),
                ("log_teff_k", _DP), ("log_r_rsun", _DP), ("mass_msun", _DP),
                ("he_core_mass_msun", _DP), ("co_core_mass_msun", _DP),
                ("phase", ctypes.POINTER(ctypes.c_int)), ("n_keypoints", ctypes.c_size_t),
                ("keypoint_sample", ctypes.POINTER(ctypes.c_size_t))]


# numpy view of an array of HrtState (field names as in the header)
STATE_DTYPE = np.dtype(HrtState)


def load():
    """Load the library named by HRTRAIL_LIB and declare the prototypes used."""
    path = os.environ.get("HRTRAIL_LIB")
    if not path:
        raise RuntimeError("set HRTRAIL_LIB to the path of libhrtrail.so (meson test does)")
    lib = ctypes.CDLL(path)
    vp, sz, i, d, cp = ctypes.c_void_p, ctypes.c_size_t, ctypes.c_int, ctypes.c_double, ctypes.c_char_p
    err = ctypes.POINTER(HrtError)
    protos = {
        "hrt_state_size": (sz, []),
        "hrt_abi_version": (i, []),
        "hrt_phase_key": (cp, [i]),
        "hrt_phase_name": (cp, [i]),
        "hrt_phase_from_key": (i, [cp]),
        "hrt_phase_code": (i, [sz]),
        "hrt_remnant_key": (cp, [i]),
        "hrt_remnant_name": (cp, [i]),
        "hrt_remnant_from_key": (i, [cp]),
        "hrt_remnant_code": (i, [sz]),
        "hrt_grid_open_with": (i, [cp, i, ctypes.POINTER(vp), err]),
        "hrt_grid_close": (None, [vp]),
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
        "hrt_grid_keypoint_eep": (ctypes.c_long, [vp, sz, sz]),
        "hrt_grid_route_boundary": (d, [vp, sz, sz]),
        "hrt_grid_attribute": (cp, [vp, cp]),
        "hrt_eval": (i, [vp, sz, _DP, _DP, d, _DP, ctypes.POINTER(HrtState), err]),
        "hrt_star_new": (i, [vp, d, d, ctypes.POINTER(vp), err]),
        "hrt_star_free": (None, [vp]),
        "hrt_star_n_eep": (sz, [vp]),
        "hrt_star_eep_state": (i, [vp, sz, ctypes.POINTER(HrtState)]),
        "hrt_builder_new": (i, [sz, ctypes.POINTER(HrtRouteSpec), d, ctypes.POINTER(vp), err]),
        "hrt_builder_free": (None, [vp]),
        "hrt_builder_add_track": (i, [vp, d, ctypes.POINTER(HrtTrackData), err]),
        "hrt_builder_add_eep_track": (i, [vp, d, ctypes.POINTER(HrtTrackData), err]),
        "hrt_builder_set_route_boundaries": (i, [vp, d, _DP, err]),
        "hrt_builder_set_attribute": (i, [vp, cp, cp, err]),
        "hrt_builder_set_compression": (i, [vp, i, err]),
        "hrt_builder_write": (i, [vp, cp, err]),
        "hrt_grid_upgrade": (i, [cp, cp, err]),
        "hrt_grid_extra_count": (sz, [vp]),
        "hrt_grid_extra_name": (cp, [vp, sz]),
        "hrt_grid_extra_unit": (cp, [vp, sz]),
        "hrt_state_extra": (i, [vp, ctypes.POINTER(HrtState), sz, ctypes.POINTER(sz), _DP, err]),
    }
    for name, (res, args) in protos.items():
        fn = getattr(lib, name)
        fn.restype, fn.argtypes = res, args
    if lib.hrt_abi_version() != HRT_ABI_VERSION:
        raise RuntimeError("library ABI %d, this mirror is of ABI %d" % (lib.hrt_abi_version(), HRT_ABI_VERSION))
    if lib.hrt_state_size() != ctypes.sizeof(HrtState):
        raise RuntimeError("hrt_state is %d bytes in the library, %d in this mirror"
                           % (lib.hrt_state_size(), ctypes.sizeof(HrtState)))
    return lib


def dptr(a):
    """Pointer to the data of a C-contiguous float64 array (keep the array alive)."""
    assert a.dtype == np.float64 and a.flags.c_contiguous
    return a.ctypes.data_as(_DP)


def open_grid(lib, path, interp):
    """Open a grid; returns the handle or raises with the library's message."""
    g, e = ctypes.c_void_p(), HrtError()
    rc = lib.hrt_grid_open_with(str(path).encode(), HRT_INTERP.get(interp, interp),
                                ctypes.byref(g), ctypes.byref(e))
    if rc != HRT_OK:
        raise RuntimeError("hrt_grid_open_with(%s, %s): code %d: %s"
                           % (path, interp, rc, e.message.decode(errors="replace")))
    return g


def evaluate(lib, g, mass_msun, age_yr, z):
    """hrt_eval over whole arrays; z is one metallicity (z_all) or an array of them.

    Returns (code, error message, states as a numpy record array)."""
    m = np.ascontiguousarray(mass_msun, dtype=np.float64)
    a = np.ascontiguousarray(age_yr, dtype=np.float64)
    assert m.shape == a.shape and m.ndim == 1
    if np.ndim(z) == 0:
        zz, z_all = None, float(z)
    else:
        zz, z_all = np.ascontiguousarray(z, dtype=np.float64), 0.0
        assert zz.shape == m.shape
    out = (HrtState * m.size)()
    e = HrtError()
    rc = lib.hrt_eval(g, m.size, dptr(m), None if zz is None else dptr(zz), z_all, dptr(a), out,
                      ctypes.byref(e))
    states = np.frombuffer(out, dtype=STATE_DTYPE).copy()
    return rc, e.message.decode(errors="replace"), states
