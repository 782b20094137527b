"""Shared helpers of the hrtrail command tests (run by meson test with /usr/bin/python3).

Usage of every test script:  test_X.py HRTRAIL_EXE LIBHRTRAIL_SO [DEFAULT_GRID]
(the paths may also come from the environment variables HRTRAIL_CLI and HRTRAIL_LIB).

The library's own answers, to compare the command with, come through a small
ctypes mirror of include/hrtrail.h declared here.
"""
import atexit
import csv
import ctypes
import io
import json
import math
import os
import shutil
import struct
import subprocess
import sys
import tempfile
import zlib

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, HERE)
import make_test_grid  # noqa: E402

EXE = os.path.abspath(sys.argv[1] if len(sys.argv) > 1 else os.environ.get("HRTRAIL_CLI", "hrtrail"))
LIB = os.path.abspath(sys.argv[2] if len(sys.argv) > 2 else os.environ.get("HRTRAIL_LIB", ""))
EXTRA = [os.path.abspath(a) for a in sys.argv[3:]]

# exit codes documented in hrtrail --help
EXIT_OK, EXIT_INTERNAL, EXIT_USAGE, EXIT_RANGE, EXIT_FILE = 0, 1, 2, 3, 4


class Checks:
    """Counts checks; prints every failure and a closing 'N passed, N failed' line."""

    def __init__(self, name):
        self.name = name
        self.passed = 0
        self.failed = 0

    def ok(self, cond, what):
        if cond:
            self.passed += 1
        else:
            self.failed += 1
            print("FAIL: " + what, flush=True)
        return cond

    def eq(self, got, want, what):
        return self.ok(got == want, "%s: got %r, want %r" % (what, got, want))

    def close(self, got, want, rel, what, abs_=0.0):
        good = (isinstance(got, float) and isinstance(want, float) and
                ((math.isnan(got) and math.isnan(want)) or abs(got - want) <= max(rel * abs(want), abs_)))
        return self.ok(good, "%s: got %r, want %r (rel tol %g)" % (what, got, want, rel))

    def finish(self):
        print("%s: %d passed, %d failed" % (self.name, self.passed, self.failed))
        sys.exit(1 if self.failed or not self.passed else 0)


def run(args, stdin=None, env=None, cwd=None):
    """Run the command; returns (exit code, stdout, stderr)."""
    e = dict(os.environ)
    if env:
        e.update(env)
    p = subprocess.run([EXE] + list(args), input=stdin, capture_output=True, text=True, env=e, cwd=cwd,
                       timeout=600)
    return p.returncode, p.stdout, p.stderr


def tmpdir():
    """A fresh directory, removed when the test ends."""
    path = tempfile.mkdtemp(prefix="hrtrail-cli-test-")
    atexit.register(shutil.rmtree, path, True)
    return path


def make_grid(directory, brk=None, name=None):
    path = os.path.join(directory, name or ("grid-%s.h5" % (brk or "good")))
    make_test_grid.write(path, brk)
    return path


def parse_csv(text):
    return list(csv.DictReader(io.StringIO(text)))


def num(s):
    """A number written by the command (nan, inf included)."""
    return float(s)


def parse_json(text):
    return json.loads(text)


def read_records(text):
    """A JSON table: a list of flat records (objects whose values are numbers, strings or null), the form
    pandas.read_json reads as it is (tests/cli/test_vocabulary.py reads every table with pandas).  Raises
    otherwise; returns the records as Python's json module reads them (numbers bit for bit)."""
    doc = json.loads(text)
    if not isinstance(doc, list) or not all(isinstance(r, dict) for r in doc):
        raise ValueError("not a list of records")
    if any(isinstance(v, (list, dict)) for r in doc for v in r.values()):
        raise ValueError("records are not flat")
    if any(list(r) != list(doc[0]) for r in doc):
        raise ValueError("records with different fields")
    return doc


# ---------------------------------------------------------------- the library through ctypes

class HrtError(ctypes.Structure):
    _fields_ = [("code", ctypes.c_int), ("message", ctypes.c_char * 256)]


class HrtState(ctypes.Structure):
    """Field for field hrt_state of include/hrtrail.h."""
    _fields_ = [("struct_size", ctypes.c_uint32), ("status", ctypes.c_int32), ("phase", ctypes.c_int32),
                ("route", ctypes.c_int32), ("remnant", ctypes.c_int32), ("flags", ctypes.c_int32)] + \
        [(n, ctypes.c_double) for n in (
            "initial_mass_msun", "z", "age_yr", "log_l_lsun", "log_teff_k", "log_r_rsun", "log_g_cgs", "mass_msun",
            "he_core_mass_msun", "co_core_mass_msun", "eep", "phase_fraction", "phase_start_yr", "phase_end_yr",
            "remnant_mass_msun")] + [("reserved", ctypes.c_double * 7)]


class HrtPhaseSpan(ctypes.Structure):
    _fields_ = [("phase", ctypes.c_int32), ("reserved_", ctypes.c_int32), ("phase_start_yr", ctypes.c_double),
                ("phase_end_yr", ctypes.c_double)]


# numeric fields of a state: the C struct's field names are the command's CSV/JSON names (the vocabulary
# of tracks/FORMAT.md)
STATE_KEYS = ["initial_mass_msun", "z", "age_yr", "log_l_lsun", "log_teff_k", "log_r_rsun", "log_g_cgs", "mass_msun",
              "he_core_mass_msun", "co_core_mass_msun", "eep", "phase_fraction", "phase_start_yr", "phase_end_yr",
              "remnant_mass_msun"]

_D = ctypes.c_double
_P = ctypes.c_void_p


class Lib:
    def __init__(self, path=LIB):
        L = ctypes.CDLL(path)
        self.L = L
        L.hrt_grid_open_with.argtypes = [ctypes.c_char_p, ctypes.c_int, ctypes.POINTER(_P), ctypes.POINTER(HrtError)]
        L.hrt_grid_close.argtypes = [_P]
        L.hrt_grid_z_ref.argtypes = [_P]
        L.hrt_grid_z_ref.restype = _D
        L.hrt_grid_route_name.argtypes = [_P, ctypes.c_size_t]
        L.hrt_grid_route_name.restype = ctypes.c_char_p
        L.hrt_phase_key.restype = ctypes.c_char_p
        L.hrt_phase_key.argtypes = [ctypes.c_int]
        L.hrt_phase_code.restype = ctypes.c_int
        L.hrt_phase_code.argtypes = [ctypes.c_size_t]
        L.hrt_remnant_code.restype = ctypes.c_int
        L.hrt_remnant_code.argtypes = [ctypes.c_size_t]
        L.hrt_remnant_key.restype = ctypes.c_char_p
        L.hrt_remnant_key.argtypes = [ctypes.c_int]
        L.hrt_eval.argtypes = [_P, ctypes.c_size_t, ctypes.POINTER(_D), ctypes.POINTER(_D), _D, ctypes.POINTER(_D),
                               ctypes.POINTER(HrtState), ctypes.POINTER(HrtError)]
        L.hrt_star_new.argtypes = [_P, _D, _D, ctypes.POINTER(_P), ctypes.POINTER(HrtError)]
        L.hrt_star_free.argtypes = [_P]
        L.hrt_star_at.argtypes = [_P, _D, ctypes.POINTER(HrtState)]
        L.hrt_star_n_eep.argtypes = [_P]
        L.hrt_star_n_eep.restype = ctypes.c_size_t
        L.hrt_star_eep_state.argtypes = [_P, ctypes.c_size_t, ctypes.POINTER(HrtState)]
        L.hrt_star_n_keypoints.argtypes = [_P]
        L.hrt_star_n_keypoints.restype = ctypes.c_size_t
        L.hrt_star_keypoint_name.argtypes = [_P, ctypes.c_size_t]
        L.hrt_star_keypoint_name.restype = ctypes.c_char_p
        L.hrt_star_keypoint_age.argtypes = [_P, ctypes.c_size_t, ctypes.POINTER(_D)]
        L.hrt_star_end_age.argtypes = [_P]
        L.hrt_star_end_age.restype = _D
        L.hrt_star_remnant.argtypes = [_P, ctypes.POINTER(ctypes.c_int), ctypes.POINTER(_D)]
        L.hrt_star_phases.argtypes = [_P, ctypes.POINTER(HrtPhaseSpan), ctypes.c_size_t,
                                      ctypes.POINTER(ctypes.c_size_t)]
        L.hrt_isochrone.argtypes = [_P, _D, _D, ctypes.POINTER(HrtState), ctypes.c_size_t,
                                    ctypes.POINTER(ctypes.c_size_t), ctypes.POINTER(HrtError)]
        L.hrt_state_size.restype = ctypes.c_size_t
        assert L.hrt_state_size() == ctypes.sizeof(HrtState), "hrt_state mirror out of date"

    def phase_key(self, p):
        return self.L.hrt_phase_key(p).decode()

    def remnant_key(self, r):
        return self.L.hrt_remnant_key(r).decode()

    def phase_keys(self):
        """Every phase key of the library (HRT_PHASE_LIST, unknown included)."""
        out, i = [], 0
        while self.L.hrt_phase_code(i) >= 0:
            out.append(self.phase_key(self.L.hrt_phase_code(i)))
            i += 1
        return out

    def remnant_keys(self):
        out, i = [], 0
        while self.L.hrt_remnant_code(i) >= 0:
            out.append(self.remnant_key(self.L.hrt_remnant_code(i)))
            i += 1
        return out

    def open(self, path, interp=0):
        g = _P()
        err = HrtError()
        rc = self.L.hrt_grid_open_with(path.encode(), interp, ctypes.byref(g), ctypes.byref(err))
        if rc:
            raise RuntimeError("hrt_grid_open_with(%s): %s" % (path, err.message.decode()))
        return Grid(self, g)


class Grid:
    def __init__(self, lib, g):
        self.lib, self.g, self.L = lib, g, lib.L

    def close(self):
        self.L.hrt_grid_close(self.g)

    def z_ref(self):
        return self.L.hrt_grid_z_ref(self.g)

    def route_name(self, r):
        return self.L.hrt_grid_route_name(self.g, r).decode()

    def eval(self, masses, zs, ages):
        n = len(masses)
        m = (_D * n)(*masses)
        z = (_D * n)(*zs)
        a = (_D * n)(*ages)
        out = (HrtState * n)()
        self.L.hrt_eval(self.g, n, m, z, 0.0, a, out, None)
        return list(out)

    def star(self, mass, z):
        s = _P()
        err = HrtError()
        rc = self.L.hrt_star_new(self.g, mass, z, ctypes.byref(s), ctypes.byref(err))
        if rc:
            raise RuntimeError("hrt_star_new: " + err.message.decode())
        return Star(self, s)

    def isochrone(self, age, z):
        n = ctypes.c_size_t(0)
        cap = 4096
        out = (HrtState * cap)()
        rc = self.L.hrt_isochrone(self.g, age, z, out, cap, ctypes.byref(n), None)
        if rc:
            raise RuntimeError("hrt_isochrone: %d" % rc)
        return list(out)[:n.value]


class Star:
    def __init__(self, grid, s):
        self.grid, self.s, self.L = grid, s, grid.L

    def free(self):
        self.L.hrt_star_free(self.s)

    def at(self, age):
        st = HrtState()
        rc = self.L.hrt_star_at(self.s, age, ctypes.byref(st))
        return rc, st

    def eep_states(self):
        out = []
        for j in range(self.L.hrt_star_n_eep(self.s)):
            st = HrtState()
            self.L.hrt_star_eep_state(self.s, j, ctypes.byref(st))
            out.append(st)
        return out

    def keypoints(self):
        out = []
        for k in range(self.L.hrt_star_n_keypoints(self.s)):
            a = _D()
            self.L.hrt_star_keypoint_age(self.s, k, ctypes.byref(a))
            out.append((self.L.hrt_star_keypoint_name(self.s, k).decode(), a.value))
        return out

    def phases(self):
        sp = (HrtPhaseSpan * 64)()
        n = ctypes.c_size_t(0)
        self.L.hrt_star_phases(self.s, sp, 64, ctypes.byref(n))
        return [(x.phase, x.phase_start_yr, x.phase_end_yr) for x in list(sp)[:n.value]]

    def remnant(self):
        k = ctypes.c_int()
        m = _D()
        self.L.hrt_star_remnant(self.s, ctypes.byref(k), ctypes.byref(m))
        return k.value, m.value

    def end_age(self):
        return self.L.hrt_star_end_age(self.s)


def same_number(a, b):
    """Exactly equal, NaN equal to NaN (the command's %.17g must read back bit for bit)."""
    return (math.isnan(a) and math.isnan(b)) or a == b


def json_number(v):
    """JSON null means undefined or infinite; compare as NaN (undefined) for finite checks."""
    return float("nan") if v is None else float(v)


# ---------------------------------------------------------------- PNG pixels (zlib from the stdlib)

def read_png(path):
    """Decode an 8-bit RGB or RGBA, non-interlaced PNG: returns (width, height, rows of (r, g, b, a))."""
    with open(path, "rb") as f:
        data = f.read()
    if data[:8] != b"\x89PNG\r\n\x1a\n":
        raise ValueError("not a PNG")
    pos, idat, w = 8, b"", None
    while pos < len(data):
        n, = struct.unpack(">I", data[pos:pos + 4])
        kind = data[pos + 4:pos + 8]
        body = data[pos + 8:pos + 8 + n]
        pos += 12 + n
        if kind == b"IHDR":
            w, h, depth, ctype, _, _, interlace = struct.unpack(">IIBBBBB", body)
            if depth != 8 or ctype not in (2, 6) or interlace:
                raise ValueError("unsupported PNG layout")
        elif kind == b"IDAT":
            idat += body
        elif kind == b"IEND":
            break
    bpp = 4 if ctype == 6 else 3
    raw = zlib.decompress(idat)
    stride = w * bpp
    rows, prev = [], bytearray(stride)
    for y in range(h):
        ft = raw[y * (stride + 1)]
        line = bytearray(raw[y * (stride + 1) + 1:(y + 1) * (stride + 1)])
        for i in range(stride):
            a = line[i - bpp] if i >= bpp else 0
            b = prev[i]
            c = prev[i - bpp] if i >= bpp else 0
            if ft == 1:
                line[i] = (line[i] + a) & 255
            elif ft == 2:
                line[i] = (line[i] + b) & 255
            elif ft == 3:
                line[i] = (line[i] + (a + b) // 2) & 255
            elif ft == 4:
                p = a + b - c
                pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
                line[i] = (line[i] + (a if pa <= pb and pa <= pc else b if pb <= pc else c)) & 255
        rows.append([tuple(line[x * bpp:x * bpp + bpp]) + ((255,) if bpp == 3 else ()) for x in range(w)])
        prev = line
    return w, h, rows
