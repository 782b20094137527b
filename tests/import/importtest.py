"""Helpers of the import tests: checks, running `hrtrail import`, invented
tracks with known keypoint ages, and a ctypes mirror of the import part of
include/hrtrail/build.h (over tests/ref/hrtrail_ctypes.py, the reference
tests' own mirror).  Debian's /usr/bin/python3 with numpy and h5py.
"""
import ctypes
import json
import math
import os
import random
import re
import subprocess
import sys

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "ref"))
import hrtrail_ctypes as hc  # noqa: E402  (the reference tests' mirror)

TSUN = math.log10(5772.0)  # log10 of the nominal solar Teff, K (IAU 2015 B3, from memory)


class Checks:
    """Counts checks; every failure is printed and makes finish() exit 1."""

    def __init__(self, name):
        self.name, self.passed, self.fails = name, 0, []

    def ok(self, cond, what):
        if cond:
            self.passed += 1
        else:
            self.fails.append(what)
            print("FAIL: " + what, flush=True)
        return bool(cond)

    def finish(self):
        print("%s: %d passed, %d failed" % (self.name, self.passed, len(self.fails)))
        sys.exit(1 if self.fails or not self.passed else 0)


def run_import(exe, args):
    """hrtrail import ARGS: (exit code, the JSON report or None, standard error)."""
    p = subprocess.run([exe, "import"] + list(args), capture_output=True, text=True)
    rep = None
    if p.returncode == 0 and "--json" in args:
        rep = json.loads(p.stdout)
    return p.returncode, rep, p.stderr


# ---- invented tracks ------------------------------------------------------------
# Each builder returns (rows, keypoint ages, route, phases): rows of
# [age_Myr, log L, log Teff, M, M_He, M_CO, X_c, Y_c], the designed age (Myr)
# of every keypoint, the designed route, and the phase key of every row.

def piece(rng, rows, t0, t1, n, f):
    """n unevenly spaced samples in (t0, t1], t1 included; f(u) gives the columns at fraction u."""
    us = sorted(rng.random() for _ in range(n - 1)) + [1.0]
    for u in us:
        rows.append([t0 + (t1 - t0) * u] + list(f(u)))


def lin(a, b, u):
    return a + (b - a) * u


def log_teff(logl, logr):
    return TSUN + 0.25 * logl - 0.5 * logr


def phases_of(rows, kp, keys):
    """Phase of each row: keys[k] from keypoint k's age on (pre_ms before the first)."""
    names = list(kp)
    out = []
    for r in rows:
        ph = "pre_ms"
        for name in names:
            if r[0] >= kp[name] - 1e-12 * kp[name]:
                ph = keys[name]
        out.append(ph)
    return out


def giant(seed, m=1.6, sub_slope=None):
    """A 1.6 Msun-like track with all nine keypoints of the giant route.

    sub_slope: if given, the subgiant branch brightens 0.2 dex while cooling
    with -dlog Teff/dlog L = sub_slope (a slow, giant-like climb right after
    the TAMS, as on some 0.85-0.9 Msun tracks) instead of crossing at constant L."""
    rng = random.Random(seed)
    rows, kp = [], {}
    piece(rng, rows, 0.5, 30.0, 40, lambda u: (lin(1.2, 0.5, u), lin(3.70, 3.86, u), m, 0, 0, 0.70, 0.28))
    kp["zams"] = 30.0
    piece(rng, rows, 30.0, 1500.0, 300, lambda u: (lin(0.5, 0.9, u), lin(3.86, 3.84, u), m, 0.1 * u * u, 0,
                                                 0.70 * (1 - u), 0.28 + 0.70 * u))
    kp["tams"] = 1500.0
    if sub_slope is None:
        piece(rng, rows, 1500.0, 1600.0, 120, lambda u: (lin(0.9, 1.1, u), lin(3.84, 3.70, u), m, lin(0.1, 0.2, u),
                                                       0, 0, 0.98))
    else:
        piece(rng, rows, 1500.0, 1600.0, 120, lambda u: (lin(0.9, 1.1, u), 3.84 - sub_slope * 0.2 * u, m,
                                                       lin(0.1, 0.2, u), 0, 0, 0.98))
    kp["rgb_base"] = 1600.0
    t_rgb = rows[-1][2]
    piece(rng, rows, 1600.0, 1700.0, 200, lambda u: (lin(1.1, 3.3, u), t_rgb - 0.06 * 2.2 * u, lin(m, m - 0.1, u),
                                                   lin(0.2, 0.47, u), 0, 0, 0.98))
    kp["he_ignition"] = 1700.0
    piece(rng, rows, 1700.0, 1702.0, 60, lambda u: (lin(3.3, 1.7, u), lin(t_rgb - 0.132, 3.68, u), m - 0.1, 0.47, 0,
                                                  0, 0.98))
    kp["cheb_start"] = 1702.0
    piece(rng, rows, 1702.0, 1802.0, 300, lambda u: (lin(1.7, 1.9, u), 3.68, m - 0.1, lin(0.47, 0.5, u), 0.15 * u,
                                                   0, 0.98 * (1 - u)))
    kp["cheb_end"] = 1802.0
    piece(rng, rows, 1802.0, 1812.0, 100, lambda u: (lin(1.9, 3.0, u), lin(3.68, 3.60, u), m - 0.1,
                                                   lin(0.5, 0.55, u), lin(0.15, 0.40, u) if u < 1 else 0.98 * 0.55,
                                                   0, 0))
    kp["first_pulse"] = 1812.0
    piece(rng, rows, 1812.0, 1814.0, 40, lambda u: (lin(3.0, 3.6, u), lin(3.60, 3.55, u), lin(m - 0.1, 0.58, u),
                                                  lin(0.55, 0.575, u), 0.98 * lin(0.55, 0.575, u), 0, 0))
    kp["agb_end"] = 1814.0
    lr0 = 0.5 * 3.6 - 2 * (3.55 - TSUN)
    piece(rng, rows, 1814.0, 1814.02, 30, lambda u: (3.6, log_teff(3.6, lin(lr0, -1.2, u)), 0.58, 0.58, 0.57, 0, 0))
    piece(rng, rows, 1814.02, 1814.2, 40, lambda u: (lin(3.6, 1.0, u), log_teff(lin(3.6, 1.0, u), lin(-1.2, -1.9, u)),
                                                   0.58, 0.58, 0.57, 0, 0))
    kp["wd_onset"] = 1814.2
    piece(rng, rows, 1814.2, 1900.0, 30, lambda u: (lin(1.0, -1.0, u), log_teff(lin(1.0, -1.0, u), -1.9), 0.58,
                                                  0.58, 0.57, 0, 0))
    keys = {"zams": "ms", "tams": "subgiant", "rgb_base": "rgb", "he_ignition": "cheb", "cheb_start": "cheb",
            "cheb_end": "eagb", "first_pulse": "tpagb", "agb_end": "post_agb", "wd_onset": "wd"}
    return rows, kp, "giant", phases_of(rows, kp, keys)


def low_mass(seed, m=0.3):
    """A 0.3 Msun-like track: MS, a giant branch without helium ignition, envelope loss, helium white dwarf."""
    rng = random.Random(seed)
    rows, kp = [], {}
    piece(rng, rows, 1.0, 200.0, 30, lambda u: (lin(-1.0, -1.8, u), lin(3.50, 3.53, u), m, 0, 0, 0.72, 0.266))
    kp["zams"] = 200.0
    piece(rng, rows, 200.0, 80000.0, 300, lambda u: (lin(-1.8, -1.5, u), 3.53, m, 0.25 * u, 0, 0.72 * (1 - u),
                                                   0.266 + 0.72 * u))
    kp["tams"] = 80000.0
    piece(rng, rows, 80000.0, 81000.0, 300, lambda u: (lin(-1.5, 1.0, u), lin(3.53, 3.55, u), lin(m, 0.2, u),
                                                     lin(0.25, 0.198, u) if u < 1 else 0.198, 0, 0, 0.986))
    kp["envelope_loss"] = 81000.0
    lr0 = 0.5 * 1.0 - 2 * (3.55 - TSUN)
    piece(rng, rows, 81000.0, 81100.0, 80, lambda u: (lin(1.0, 0.0, u), log_teff(lin(1.0, 0.0, u), lin(lr0, -1.6, u)),
                                                    0.2, 0.2, 0, 0, 0.986))
    kp["wd_onset"] = 81100.0
    piece(rng, rows, 81100.0, 81200.0, 40, lambda u: (lin(0.0, -1.0, u), log_teff(lin(0.0, -1.0, u), -1.6), 0.2, 0.2,
                                                    0, 0, 0.986))
    keys = {"zams": "ms", "tams": "rgb", "envelope_loss": "post_rgb", "wd_onset": "wd"}
    return rows, kp, "low_mass", phases_of(rows, kp, keys)


def supergiant(seed, m=20.0):
    """A 20 Msun-like track: MS, crossing, core helium burning, late stages, collapse of an extended star."""
    rng = random.Random(seed)
    rows, kp = [], {}
    piece(rng, rows, 0.01, 0.1, 20, lambda u: (lin(4.9, 4.7, u), lin(4.40, 4.53, u), m, 0, 0, 0.70, 0.28))
    kp["zams"] = 0.1
    piece(rng, rows, 0.1, 9.0, 300, lambda u: (lin(4.7, 5.0, u), lin(4.53, 4.45, u), lin(m, m - 1, u), 4 * u, 0,
                                             0.70 * (1 - u), 0.28 + 0.70 * u))
    kp["tams"] = 9.0
    piece(rng, rows, 9.0, 9.05, 100, lambda u: (lin(5.0, 5.1, u), lin(4.45, 3.60, u), m - 1, 4, 0, 0, 0.98))
    kp["cheb_start"] = 9.05
    piece(rng, rows, 9.05, 10.0, 300, lambda u: (lin(5.1, 5.2, u), 3.58, lin(m - 1, m - 5, u), lin(4, 6, u), 3.5 * u,
                                               0, 0.98 * (1 - u)))
    kp["cheb_end"] = 10.0
    piece(rng, rows, 10.0, 10.01, 50, lambda u: (lin(5.2, 5.3, u), 3.57, m - 5, 6, lin(3.5, 4.0, u), 0, 0))
    kp["core_collapse"] = 10.01
    keys = {"zams": "ms", "tams": "subgiant", "cheb_start": "rsg", "cheb_end": "rsg", "core_collapse": "bh"}
    return rows, kp, "supergiant", phases_of(rows, kp, keys)


COLUMNS = ["time_Myr", "log_lum", "log_te", "m", "mhe", "mco", "xc", "yc"]
MAP = ("age_yr=time_Myr*Myr log_l_lsun=log_lum log_teff_k=log_te mass_msun=m he_core_mass_msun=mhe "
       "co_core_mass_msun=mco")


def write_table(path, rows, columns=COLUMNS, extra=None):
    """A blank-separated table of the given columns (a subset of COLUMNS) and extra {name: values}."""
    idx = [COLUMNS.index(c) for c in columns]
    extra = extra or {}
    with open(path, "w") as f:
        f.write("# invented track\n" + " ".join(columns + list(extra)) + "\n")
        for i, r in enumerate(rows):
            f.write(" ".join(["%.17g" % r[j] if j == 0 else "%.12g" % r[j] for j in idx] +
                             [str(v[i]) for v in extra.values()]) + "\n")


# ---- ctypes: the import part of build.h --------------------------------------------

class KpColumns(ctypes.Structure):
    _DP = ctypes.POINTER(ctypes.c_double)
    _fields_ = [("n", ctypes.c_size_t), ("age_yr", _DP), ("log_l_lsun", _DP), ("log_teff_k", _DP),
                ("mass_msun", _DP), ("central_x", _DP), ("central_y", _DP), ("he_core_mass_msun", _DP),
                ("co_core_mass_msun", _DP), ("phase", ctypes.POINTER(ctypes.c_int)),
                ("flag", ctypes.POINTER(ctypes.c_char_p))]


class KpResult(ctypes.Structure):
    _fields_ = [("n_found", ctypes.c_size_t), ("sample", ctypes.c_size_t * 32), ("how", ctypes.c_int * 32),
                ("why", ctypes.c_char * 192)]


class TrackReport(ctypes.Structure):
    _fields_ = [("file", ctypes.c_char_p), ("status", ctypes.c_int), ("line", ctypes.c_long),
                ("column", ctypes.c_long), ("message", ctypes.c_char * 320), ("notes", ctypes.c_char * 320),
                ("initial_mass_msun", ctypes.c_double), ("z", ctypes.c_double), ("route", ctypes.c_int),
                ("truncated", ctypes.c_int), ("remnant", ctypes.c_int), ("remnant_mass_msun", ctypes.c_double),
                ("n_rows", ctypes.c_size_t), ("n_rows_dropped", ctypes.c_size_t), ("n_keypoints", ctypes.c_size_t),
                ("keypoint_age_yr", ctypes.c_double * 32), ("keypoint_line", ctypes.c_long * 32),
                ("keypoint_how", ctypes.c_int * 32), ("missing", ctypes.c_char * 192)]


class RowReport(ctypes.Structure):
    _fields_ = [("line", ctypes.c_long), ("column", ctypes.c_long), ("code", ctypes.c_int),
                ("message", ctypes.c_char * 320)]


def load():
    """The library (HRTRAIL_LIB) with the builder's and the import's prototypes declared."""
    lib = hc.load()
    vp, sz, i, d, cp = ctypes.c_void_p, ctypes.c_size_t, ctypes.c_int, ctypes.c_double, ctypes.c_char_p
    err = ctypes.POINTER(hc.HrtError)
    protos = {
        "hrt_strerror": (cp, [i]),
        "hrt_keypoints_find": (i, [ctypes.POINTER(KpColumns), ctypes.POINTER(hc.HrtRouteSpec),
                                   ctypes.POINTER(KpResult), err]),
        "hrt_keypoints_route": (i, [ctypes.POINTER(KpColumns), sz, ctypes.POINTER(hc.HrtRouteSpec),
                                    ctypes.POINTER(i), ctypes.POINTER(ctypes.c_uint), ctypes.POINTER(KpResult), err]),
        "hrt_default_route": (i, [sz, ctypes.POINTER(hc.HrtRouteSpec), ctypes.POINTER(cp)]),
        "hrt_import_new": (i, [ctypes.POINTER(vp), err]),
        "hrt_import_free": (None, [vp]),
        "hrt_import_map": (i, [vp, cp, err]),
        "hrt_import_map_file": (i, [vp, cp, err]),
        "hrt_import_set_routes": (i, [vp, sz, ctypes.POINTER(hc.HrtRouteSpec), err]),
        "hrt_import_set_z_ref": (i, [vp, d, err]),
        "hrt_import_set_lenient": (i, [vp, i]),
        "hrt_import_set_force": (i, [vp, i]),
        "hrt_import_set_route_boundaries": (i, [vp, d, sz, ctypes.POINTER(d), err]),
        "hrt_import_add_file": (i, [vp, cp, d, err]),
        "hrt_import_run": (i, [vp, cp, err]),
        "hrt_import_n_tracks": (sz, [vp]),
        "hrt_import_track": (i, [vp, sz, ctypes.POINTER(TrackReport)]),
        "hrt_import_dropped_row": (i, [vp, sz, sz, ctypes.POINTER(RowReport)]),
        "hrt_import_n_routes": (sz, [vp]),
        "hrt_import_route_name": (cp, [vp, sz]),
        "hrt_import_route_n_keypoints": (sz, [vp, sz]),
        "hrt_import_keypoint_name": (cp, [vp, sz, sz]),
        "hrt_import_n_z": (sz, [vp]),
        "hrt_import_z": (d, [vp, sz]),
        "hrt_import_route_boundary": (d, [vp, sz, sz]),
    }
    for name, (res, args) in protos.items():
        fn = getattr(lib, name, None)  # a library without one fails where the test calls it
        if fn is not None:
            fn.restype, fn.argtypes = res, args
    return lib


def status_codes():
    """Status codes by name (HRT_OK, HRT_E_NULL, ...), read from the header's HRT_ERROR_LIST."""
    header = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "include", "hrtrail", "core.h")
    return {k: int(v) for k, v in re.findall(r"X\((HRT_\w+),\s*(-?\d+),", open(header).read())}
