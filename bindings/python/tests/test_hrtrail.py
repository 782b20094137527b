#!/usr/bin/python3
"""Tests of the Python binding (bindings/python/hrtrail).

The reference is the C library itself: tests/c_reference.c makes the same
calls straight from C and writes the raw hrt_state bytes, which must equal the
binding's output bit for bit (NaN payloads included).  Layouts are compared
with the C compiler's offsetof(); the ABI guard with stand-in libraries that
report another ABI number or struct size; library errors must arrive as
exceptions carrying the code and the library's message.

Environment (set by meson test): HRTRAIL_LIB, HRTRAIL_GRID (the default grid),
HRTRAIL_C_REFERENCE, HRTRAIL_FAKE_ABI_LIB, HRTRAIL_FAKE_SIZE_LIB,
HRTRAIL_HEADER (include/hrtrail/core.h: the X-macro lists of phases, remnants
and status codes), PYTHONPATH (bindings/python).  Field names are checked
against the vocabulary table of tracks/FORMAT.md (found beside this file).
"""
import ctypes
import ctypes.util
import os
import re
import struct
import subprocess
import sys
import tempfile
import unittest

import numpy as np

import hrtrail
from hrtrail import _clib

GRID = os.environ["HRTRAIL_GRID"]
C_REF = os.environ["HRTRAIL_C_REFERENCE"]
HEADER = os.environ["HRTRAIL_HEADER"]
FORMAT_MD = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "..", "tracks", "FORMAT.md")


def run_ref(*args):
    """Run the C reference; returns its stdout lines."""
    r = subprocess.run([C_REF] + [str(a) for a in args], capture_output=True, text=True, timeout=300)
    if r.returncode != 0:
        raise AssertionError("c_reference %s failed: %s" % (args, r.stderr))
    return r.stdout.splitlines()


def bits(x):
    """The 64 bits of a float (compares NaNs and signed zeros exactly)."""
    return struct.unpack("<Q", struct.pack("<d", x))[0]


def draw_stars(grid, n, seed):
    """Stars across the whole grid and beyond it: (mass_msun, z, age_yr) arrays.

    Log-uniform masses 0.08..150 Msun, metallicities half at grid groups and
    half between them, log-uniform ages 1e4..3e10 yr (pre-main sequence to long
    after the remnant forms), then the edge cases: grid masses exactly, NaN,
    infinite, negative and zero inputs, masses and metallicities out of range.
    """
    rng = np.random.default_rng(seed)
    zg = np.array(grid.z_values)
    zlo, zhi = grid.z_range
    m = 10.0 ** rng.uniform(np.log10(0.08), np.log10(150.0), n)
    z = np.where(rng.random(n) < 0.5, zg[rng.integers(0, zg.size, n)],
                 10.0 ** rng.uniform(np.log10(zlo), np.log10(zhi), n))
    a = 10.0 ** rng.uniform(4.0, np.log10(3e10), n)
    grid_masses = np.array(grid.masses(grid.n_z // 2))
    edge_m = list(grid_masses[::7]) + [np.nan, 1.0, 1.0, 1.0, 1.0, -1.0, 0.0, 500.0, 0.01, np.inf, 1.0, 1.0]
    edge_z = [zg[grid.n_z // 2]] * len(grid_masses[::7]) + [0.014, np.nan, 0.014, 0.014, 0.014, 0.014,
                                                           0.014, 0.014, 0.014, 0.014, 1.0, 1e-7]
    edge_a = [1e9] * len(grid_masses[::7]) + [1e9, 1e9, np.nan, -5.0, 0.0, 1e9, 1e9, 1e9, 1e9, 1e9, 1e9,
                                               np.inf]
    return (np.concatenate([m, edge_m]), np.concatenate([z, edge_z]), np.concatenate([a, edge_a]))


class Base(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.grid = hrtrail.Grid(GRID)
        cls.tmp = tempfile.TemporaryDirectory(prefix="hrtrail-pytest-")

    @classmethod
    def tearDownClass(cls):
        cls.grid.close()
        cls.tmp.cleanup()

    def path(self, name):
        return os.path.join(self.tmp.name, name)

    def assertSameBytes(self, states, path, what):
        """states (STATE_DTYPE array) equal the raw hrt_state file bit for bit; names the first difference."""
        with open(path, "rb") as f:
            ref = np.frombuffer(f.read(), dtype=hrtrail.STATE_DTYPE)
        self.assertEqual(states.shape, ref.shape, what)
        a = states.view(np.uint8).reshape(states.size, -1)
        b = ref.view(np.uint8).reshape(ref.size, -1)
        bad = np.flatnonzero((a != b).any(axis=1))
        if bad.size:
            i = bad[0]
            fields = [n for n in hrtrail.STATE_DTYPE.names
                      if states[i][n].tobytes() != ref[i][n].tobytes()]
            self.fail("%s: %d of %d states differ from C; first star %d, fields %s (python %s, C %s)" % (
                what, bad.size, states.size, i, fields, [states[i][f] for f in fields],
                [ref[i][f] for f in fields]))


class Layout(Base):
    """Struct layouts against the C compiler (offsetof/sizeof in c_reference layout)."""

    @classmethod
    def setUpClass(cls):
        super().setUpClass()
        cls.c = {}
        cls.sizes = {}
        for line in run_ref("layout"):
            w = line.split()
            if w[0] == "sizeof":
                cls.sizes[w[1]] = int(w[2])
            elif w[0].startswith("hrt_") and len(w) == 4:
                cls.c.setdefault(w[0], []).append((w[1], int(w[2]), int(w[3])))
            else:
                cls.sizes[w[0]] = int(w[1])

    def check_ctypes(self, cname, ctype):
        mine = [(n, getattr(ctype, n).offset, getattr(ctype, n).size) for n, _ in ctype._fields_]
        self.assertEqual(mine, self.c[cname], cname)
        self.assertEqual(ctypes.sizeof(ctype), self.sizes[cname], cname)

    def test_state_ctypes(self):
        self.check_ctypes("hrt_state", hrtrail.HrtState)

    def test_error_and_span_ctypes(self):
        self.check_ctypes("hrt_error", hrtrail.HrtError)
        self.check_ctypes("hrt_phase_span", hrtrail.HrtPhaseSpan)

    def test_state_numpy_dtype(self):
        d = hrtrail.STATE_DTYPE
        mine = [(n, d.fields[n][1], d.fields[n][0].itemsize) for n in d.names]
        self.assertEqual(mine, self.c["hrt_state"])
        self.assertEqual(d.itemsize, self.sizes["hrt_state"])

    def test_library_reports_the_same_size_and_abi(self):
        self.assertEqual(self.sizes["hrt_state_size"], self.sizes["hrt_state"])
        self.assertEqual(hrtrail.library_abi_version(), self.sizes["HRT_ABI_VERSION"])
        # The package's own number is reviewed by hand: it must be the header's.
        self.assertEqual(hrtrail.ABI_VERSION, self.sizes["HRT_ABI_VERSION"])


class AbiGuard(unittest.TestCase):
    """Importing against a library of another ABI or struct size must fail clearly."""

    def import_with(self, lib):
        env = dict(os.environ, HRTRAIL_LIB=lib)
        return subprocess.run([sys.executable, "-c", "import hrtrail"], env=env, capture_output=True,
                              text=True, timeout=60)

    def test_other_abi_number(self):
        r = self.import_with(os.environ["HRTRAIL_FAKE_ABI_LIB"])
        self.assertNotEqual(r.returncode, 0)
        self.assertIn("AbiMismatchError", r.stderr)
        self.assertIn("reports ABI 99", r.stderr)
        self.assertIn("written for ABI %d" % hrtrail.ABI_VERSION, r.stderr)

    def test_other_state_size(self):
        r = self.import_with(os.environ["HRTRAIL_FAKE_SIZE_LIB"])
        self.assertNotEqual(r.returncode, 0)
        self.assertIn("AbiMismatchError", r.stderr)
        self.assertIn("sizeof(hrt_state) = 208 bytes", r.stderr)

    def test_not_an_hrtrail_library(self):
        r = self.import_with(ctypes.util.find_library("c"))
        self.assertNotEqual(r.returncode, 0)
        self.assertIn("no hrt_abi_version()", r.stderr)

    def test_missing_library(self):
        r = self.import_with("/nonexistent/libhrtrail.so.1")
        self.assertNotEqual(r.returncode, 0)
        self.assertIn("cannot load libhrtrail", r.stderr)
        self.assertIn("HRTRAIL_LIB", r.stderr)

    def test_exception_is_an_import_error(self):
        self.assertTrue(issubclass(hrtrail.AbiMismatchError, ImportError))


class Enums(unittest.TestCase):
    """Enums against the header (HRTRAIL_HEADER: include/hrtrail/core.h) and the library's functions."""

    @classmethod
    def setUpClass(cls):
        with open(HEADER) as f:
            cls.header = f.read()

    def header_enum(self, prefix):
        return {m.group(1): int(m.group(2))
                for m in re.finditer(r"\b%s([A-Z_]+)\s*=\s*(\d+)" % prefix, self.header)}

    def header_number(self, pattern):
        m = re.search(pattern, self.header)
        self.assertIsNotNone(m, pattern)
        return int(m.group(1))

    def header_list(self, macro):
        """[(NAME, code, key, text)] of the X-macro list `macro` of the header: X(NAME, code, "key", "text")."""
        lines = self.header.splitlines()
        i = next(k for k, line in enumerate(lines) if line.startswith("#define %s(X)" % macro))
        body = []
        while lines[i].rstrip().endswith("\\"):
            i += 1
            body.append(lines[i])
        entries = [(n, int(c), k, t) for n, c, k, t in
                   re.findall(r'X\((\w+),\s*(-?\d+),\s*"([^"]*)",\s*"([^"]*)"\)', "\n".join(body))]
        self.assertGreater(len(entries), 1, macro)
        return entries

    def check_codes(self, enum, what, slots_attr):
        """enum (Phase or Remnant) against HRT_<WHAT>_LIST, HRT_<WHAT>_N, HRT_<WHAT>_SLOTS and the
        library's hrt_<what>_code/_key/_name/_from_key, in both directions."""
        W = what.upper()
        lib = _clib.lib
        code_fn, key_fn, name_fn, from_key = (getattr(lib, "hrt_%s_%s" % (what, f))
                                              for f in ("code", "key", "name", "from_key"))
        header = self.header_list("HRT_%s_LIST" % W)
        n = self.header_number(r"#define HRT_%s_N (\d+)" % W)
        slots = self.header_number(r"\bHRT_%s_SLOTS\s*=\s*(\d+)" % W)
        self.assertEqual(len(header), n, "HRT_%s_N counts HRT_%s_LIST" % (W, W))
        self.assertEqual(getattr(hrtrail.enums, slots_attr), slots)
        # header -> Python
        for name, code, key, text in header:
            self.assertIn(name, enum.__members__, "%s of HRT_%s_LIST is not in %s" % (name, W, enum.__name__))
            m = enum[name]
            self.assertEqual((int(m), m.key, m.label), (code, key, text), name)
            self.assertLess(code, slots, name)
        # Python -> header, in the list's order
        self.assertEqual([(m.name, int(m), m.key, m.label) for m in enum], header)
        # library -> Python: the i-th code, and every code below the slots the library names
        self.assertEqual([code_fn(i) for i in range(n)], [int(m) for m in enum])
        self.assertEqual(code_fn(n), -1)
        named = [c for c in range(slots) if from_key(key_fn(c)) == c]  # unlisted codes: key "unknown"
        self.assertEqual(named, sorted(int(m) for m in enum))
        # Python -> library
        for m in enum:
            self.assertEqual(key_fn(int(m)).decode(), m.key, m.name)
            self.assertEqual(name_fn(int(m)).decode(), m.label, m.name)
            self.assertEqual(from_key(m.key.encode()), int(m), m.name)

    def test_phase(self):
        self.check_codes(hrtrail.Phase, "phase", "_PHASE_SLOTS")
        # tracks/FORMAT.md "Phase and remnant codes": grouped by tens
        self.assertEqual((hrtrail.Phase.MS, hrtrail.Phase.RGB, hrtrail.Phase.CHEB), (11, 21, 30))
        self.assertEqual(hrtrail.Phase.MS.label, "main sequence")

    def test_remnant(self):
        self.check_codes(hrtrail.Remnant, "remnant", "_REMNANT_SLOTS")
        self.assertEqual((hrtrail.Remnant.NONE, hrtrail.Remnant.CO_WD, hrtrail.Remnant.BH), (0, 11, 30))

    def test_interp(self):
        self.assertEqual({p.name: int(p) for p in hrtrail.Interp}, self.header_enum("HRT_INTERP_"))
        for i in hrtrail.Interp:
            self.assertEqual(_clib.lib.hrt_interp_from_name(i.key.encode()), int(i))

    def test_status(self):
        h = {m.group(1): int(m.group(2))
             for m in re.finditer(r"X\(HRT_(?:E_)?([A-Z_]+), (\d+), \"", self.header)}
        self.assertEqual({s.name: int(s) for s in hrtrail.Status}, h)
        self.assertEqual(hrtrail.Status.MASS_RANGE.description, "initial mass outside the grid")

    def test_flags(self):
        h = {m.group(1): int(m.group(2), 16)
             for m in re.finditer(r"#define HRT_FLAG_([A-Z_]+) 0x([0-9a-fA-F]+)", self.header)}
        self.assertEqual({f.name: int(f) for f in hrtrail.Flag if f.name != "NONE"}, h)


class Vocabulary(unittest.TestCase):
    """Every field name the binding exposes is a name of tracks/FORMAT.md's vocabulary."""

    def test_field_names(self):
        with open(FORMAT_MD, encoding="utf-8") as f:
            block = f.read().split("<!-- vocabulary")[1].split("<!-- end vocabulary -->")[0]
        names = set(re.findall(r"^\|\s*`([a-z0-9_]+)`", block, re.M))
        self.assertIn("log_l_lsun", names)
        # struct_size and reserved: the C struct's own bookkeeping, not quantities
        dtype_names = [n for n in hrtrail.STATE_DTYPE.names if n not in ("struct_size", "reserved")]
        for what, fields in (("State", hrtrail.State.__slots__), ("STATE_DTYPE", dtype_names),
                             ("PhaseSpan", hrtrail.PhaseSpan._fields),
                             ("RemnantInfo", hrtrail.RemnantInfo._fields)):
            for n in fields:
                self.assertIn(n, names, "%s field %s is not in FORMAT.md's vocabulary" % (what, n))


class Evaluate(Base):
    """hrt_eval through the binding equals hrt_eval from C, bit for bit."""

    @classmethod
    def setUpClass(cls):
        super().setUpClass()
        cls.m, cls.z, cls.a = draw_stars(cls.grid, 20000, seed=20260101)
        np.column_stack([cls.m, cls.z, cls.a]).astype("<f8").tofile(os.path.join(cls.tmp.name, "in.bin"))
        cls.ref_out = os.path.join(cls.tmp.name, "ref")
        cls.ref_lines = run_ref("eval", GRID, os.path.join(cls.tmp.name, "in.bin"), cls.ref_out)

    def test_vectorised_z_array(self):
        st = self.grid.evaluate(self.m, self.a, self.z, errors="ignore")
        self.assertSameBytes(st, self.ref_out + ".zarr", "evaluate(z array)")
        # the mix really covers failures, pre-main-sequence stars, remnants and several routes
        self.assertGreater(np.count_nonzero(st["status"] != 0), 5)
        self.assertGreater(np.count_nonzero(st["phase"] == hrtrail.Phase.PRE_MS), 10)
        self.assertGreater(np.count_nonzero(st["flags"] & hrtrail.Flag.REMNANT), 100)
        self.assertEqual(set(st["route"][st["status"] == 0]), set(range(len(self.grid.routes))))

    def test_vectorised_scalar_z(self):
        st = self.grid.evaluate(self.m, self.a, float(self.z[0]), errors="ignore")
        self.assertSameBytes(st, self.ref_out + ".zall", "evaluate(scalar z)")

    def test_threads_give_the_same_bytes(self):
        st = self.grid.evaluate(self.m, self.a, self.z, errors="ignore", threads=3)
        self.assertSameBytes(st, self.ref_out + ".zarr", "evaluate(threads=3)")

    def test_out_buffer_is_filled_in_place(self):
        buf = np.zeros(self.m.size, dtype=hrtrail.STATE_DTYPE)
        st = self.grid.evaluate(self.m, self.a, self.z, out=buf, errors="ignore")
        self.assertIs(st, buf)
        self.assertSameBytes(buf, self.ref_out + ".zarr", "evaluate(out=)")

    def test_return_code_and_message_as_c(self):
        rc_c, msg_c = self.ref_lines[0].split(" ", 2)[1:]
        with self.assertRaises(hrtrail.HrtrailError) as cm:
            self.grid.evaluate(self.m, self.a, self.z)
        self.assertEqual(int(cm.exception.code), int(rc_c))
        self.assertEqual(cm.exception.message, "hrt_eval: " + msg_c)
        self.assertSameBytes(cm.exception.states, self.ref_out + ".zarr", "states attached to the error")
        with self.assertRaises(hrtrail.HrtrailError) as cm3:
            self.grid.evaluate(self.m, self.a, self.z, threads=3)
        self.assertEqual(cm3.exception.message, cm.exception.message)

    def test_scalar_state(self):
        with open(self.ref_out + ".zarr", "rb") as f:
            ref = np.frombuffer(f.read(), dtype=hrtrail.STATE_DTYPE)
        for i in list(range(0, self.m.size, 97)) + list(range(self.m.size - 25, self.m.size)):
            if ref[i]["status"] != 0:
                with self.assertRaises(hrtrail.HrtrailError) as cm:
                    self.grid.state(self.m[i], self.a[i], self.z[i])
                self.assertEqual(int(cm.exception.code), int(ref[i]["status"]))
                continue
            s = self.grid.state(self.m[i], self.a[i], self.z[i])
            r = hrtrail.State.from_record(ref[i])
            for name in hrtrail.State.__slots__:
                x, y = getattr(s, name), getattr(r, name)
                if isinstance(x, float):
                    self.assertEqual(bits(x), bits(y), "star %d field %s" % (i, name))
                else:
                    self.assertEqual(x, y, "star %d field %s" % (i, name))
            self.assertIsInstance(s.phase, hrtrail.Phase)
            self.assertIsInstance(s.remnant, hrtrail.Remnant)

    def test_shapes_broadcast(self):
        st = self.grid.evaluate(self.m[:12].reshape(3, 4), 1e9, 0.014, errors="ignore")
        self.assertEqual(st.shape, (3, 4))
        flat = self.grid.evaluate(self.m[:12], np.full(12, 1e9), 0.014, errors="ignore")
        self.assertEqual(st.reshape(-1).tobytes(), flat.tobytes())
        self.assertEqual(self.grid.evaluate(1.0, 1e9, 0.014).shape, ())
        self.assertEqual(self.grid.evaluate([], [], 0.014).shape, (0,))


class StarAndIsochrone(Base):
    """Star and isochrone through the binding equal the C calls bit for bit."""

    CASES = [(1.0, 0.014), (2.3, 0.004), (0.7, 0.0001), (12.0, 0.03), (45.0, 0.008), (0.3, 0.0021)]

    def test_star(self):
        for mass, z in self.CASES:
            with self.subTest(mass=mass, z=z):
                ages = np.concatenate([10.0 ** np.linspace(4, 10.5, 301), [0.0, 1e13]])
                ages.astype("<f8").tofile(self.path("ages.bin"))
                out = self.path("star")
                lines = run_ref("star", GRID, repr(mass), repr(z), self.path("ages.bin"), out)
                info = {l.split()[0]: l.split()[1:] for l in lines}
                self.assertEqual(info["new"][0], "0")
                s = self.grid.star(mass, z)
                # scalar ages: hrt_star_at, compared field by field
                with open(out + ".at", "rb") as f:
                    ref_at = np.frombuffer(f.read(), dtype=hrtrail.STATE_DTYPE)
                for i in range(0, ages.size, 10):
                    st = s.at(ages[i])
                    for name in hrtrail.State.__slots__:
                        x, y = getattr(st, name), ref_at[i][name]
                        if isinstance(x, float):
                            self.assertEqual(bits(x), bits(float(y)), "age %g field %s" % (ages[i], name))
                        else:
                            self.assertEqual(int(x), int(y), "age %g field %s" % (ages[i], name))
                # array of ages (one hrt_eval call) against hrt_star_at from C
                self.assertSameBytes(s.at(ages), out + ".at", "Star.at(array) %g Msun" % mass)
                self.assertSameBytes(s.track(), out + ".track", "Star.track() %g Msun" % mass)
                with open(out + ".phases", "rb") as f:
                    spans = np.frombuffer(f.read(), dtype=np.dtype(hrtrail.HrtPhaseSpan))
                ph = s.phases()
                self.assertEqual([(int(p.phase), bits(p.phase_start_yr), bits(p.phase_end_yr)) for p in ph],
                                 [(int(x["phase"]), bits(x["phase_start_yr"]), bits(x["phase_end_yr"])) for x in spans])
                kp = np.fromfile(out + ".keypoints", dtype="<f8")
                self.assertEqual([bits(v) for v in s.keypoints().values()], [bits(v) for v in kp])
                names = [l.split()[1] for l in lines if l.startswith("keypoint ")]
                self.assertEqual(list(s.keypoints()), names)
                self.assertEqual(s.route, int(info["route"][0]))
                self.assertEqual(bits(s.end_age_yr), bits(float.fromhex(info["end_age"][0])))
                kind, rm = s.remnant
                self.assertEqual(int(kind), int(info["remnant"][0]))
                self.assertEqual(bits(rm), bits(float.fromhex(info["remnant"][1])))
                s.close()

    def test_isochrone(self):
        for age, z in [(1e9, 0.014), (1.2e7, 0.004), (1.1e10, 0.0003), (3e8, 0.0057)]:
            with self.subTest(age=age, z=z):
                out = self.path("iso")
                lines = run_ref("isochrone", GRID, repr(age), repr(z), out)
                self.assertEqual(lines[0].split()[1], "0")
                iso = self.grid.isochrone(age, z)
                self.assertGreater(iso.size, 100)
                self.assertSameBytes(iso, out, "isochrone(%g yr, Z = %g)" % (age, z))

    def test_isochrone_phases(self):
        """phases / leave_out / max_dlog_l reach hrt_isochrone_with: what is asked is what comes back."""
        base = self.grid.isochrone(1e9, 0.014)
        phases = set(int(p) for p in base["phase"])
        self.assertNotIn(int(hrtrail.Phase.WD), phases)  # remnants left out by default
        ms = self.grid.isochrone(1e9, 0.014, phases=["ms"])
        self.assertEqual(set(int(p) for p in ms["phase"]), {int(hrtrail.Phase.MS)})
        # at 1 Gyr the lightest stars are still contracting: pre_ms below the main sequence's lowest mass
        pre = self.grid.isochrone(1e9, 0.014, phases=["pre_ms"])
        self.assertEqual(set(int(p) for p in pre["phase"]), {int(hrtrail.Phase.PRE_MS)})
        self.assertEqual(min(ms["initial_mass_msun"].min(), pre["initial_mass_msun"].min()),
                         base["initial_mass_msun"].min())
        self.assertLessEqual(pre["initial_mass_msun"].max(), ms["initial_mass_msun"].min() * (1 + 1e-9))
        no_pagb = self.grid.isochrone(1e9, 0.014, leave_out=[hrtrail.Phase.POST_AGB])
        self.assertEqual(set(int(p) for p in no_pagb["phase"]), phases - {int(hrtrail.Phase.POST_AGB)})
        with_wd = self.grid.isochrone(1e9, 0.014, phases=[p for p in hrtrail.Phase if p != hrtrail.Phase.UNKNOWN])
        self.assertIn(int(hrtrail.Phase.WD), set(int(p) for p in with_wd["phase"]))
        coarse = self.grid.isochrone(1e9, 0.014, max_dlog_l=0.2)
        self.assertLess(coarse.size, base.size)
        with self.assertRaises(hrtrail.InvalidInputError):
            self.grid.isochrone(1e9, 0.014, phases=["no_such_phase"])


class Units(Base):
    """Inputs in the library's units: astropy Quantities converted (astropy 5.2, Debian), plain numbers
    taken as Msun / yr / fraction, anything else refused; paths as str, bytes or PathLike, NUL refused."""

    def test_quantities_are_converted(self):
        import astropy.units as u  # reference: astropy's own unit conversions
        st = self.grid.state(1.0, 1 * u.Gyr, 0.014)
        self.assertEqual(st.age_yr, 1e9)  # not 1 yr
        self.assertEqual(self.grid.state(1 * u.Msun, 1e9, 0.014).initial_mass_msun, 1.0)
        ref = self.grid.evaluate([1.0, 2.0], [1e9, 2e9], 0.014)
        got = self.grid.evaluate([1.0, 2.0] * u.Msun, [1.0, 2.0] * u.Gyr, 0.014 * u.dimensionless_unscaled)
        self.assertEqual(ref.tobytes(), got.tobytes())
        self.assertEqual(self.grid.evaluate([1.0], [1 * u.Gyr], 0.014)["age_yr"][0], 1e9)  # a list of Quantities
        self.assertEqual(self.grid.evaluate([1.0], [1000 * u.Myr], 0.014).tobytes(),
                         self.grid.evaluate([1.0], [1e9], 0.014).tobytes())
        s = self.grid.star(1.0 * u.Msun, 0.014)
        self.assertEqual(s.at(4.57 * u.Gyr).age_yr, 4.57e9)
        self.assertEqual(len(self.grid.isochrone(1 * u.Gyr, 0.014)), len(self.grid.isochrone(1e9, 0.014)))

    def test_what_cannot_be_read_exactly_is_refused(self):
        import astropy.units as u
        for what, call in [("age in metres", lambda: self.grid.state(1.0, 1 * u.m, 0.014)),
                           ("age as text", lambda: self.grid.state(1.0, "1Gyr", 0.014)),
                           ("mass as a boolean", lambda: self.grid.state(True, 1e9, 0.014)),
                           ("z in kelvin", lambda: self.grid.evaluate([1.0], [1e9], 5 * u.K)),
                           ("ages as text", lambda: self.grid.evaluate([1.0], ["1e9"], 0.014)),
                           ("mass in seconds", lambda: self.grid.star(1 * u.s, 0.014)),
                           ("path with NUL", lambda: hrtrail.Grid(GRID + "\0.h5")),
                           ("path of another type", lambda: hrtrail.Grid(42))]:
            with self.subTest(what):
                with self.assertRaises(hrtrail.InvalidInputError):
                    call()

    def test_paths(self):
        self.assertEqual(hrtrail.Grid(os.fsencode(GRID)).path, GRID)
        import pathlib
        self.assertEqual(hrtrail.Grid(pathlib.Path(GRID)).path, GRID)


class Errors(Base):
    """Library errors as exceptions carrying the code and the library's message."""

    def test_missing_grid_file(self):
        with self.assertRaises(hrtrail.GridFileError) as cm:
            hrtrail.Grid("/nonexistent/grid.h5")
        self.assertEqual(cm.exception.code, hrtrail.Status.IO)
        self.assertIn("/nonexistent/grid.h5", cm.exception.message)
        self.assertIn("HRT_E_IO", str(cm.exception))

    def test_not_a_grid(self):
        p = self.path("bad.h5")
        with open(p, "wb") as f:
            f.write(b"not an HDF5 file at all\n" * 10)
        with self.assertRaises(hrtrail.GridFileError) as cm:
            hrtrail.Grid(p)
        self.assertIn(cm.exception.code, (hrtrail.Status.IO, hrtrail.Status.FORMAT))

    def test_unknown_interp(self):
        with self.assertRaises(ValueError):
            hrtrail.Grid(GRID, interp="quintic")
        with self.assertRaises(ValueError):
            hrtrail.Grid(GRID, interp=17)

    def test_interp_types_open(self):
        for it in hrtrail.Interp:
            with hrtrail.Grid(GRID, interp=it.key) as g:
                self.assertIs(g.interp, it)

    def test_outside_grid(self):
        with self.assertRaises(hrtrail.OutsideGridError) as cm:
            self.grid.state(500.0, 1e6, 0.014)
        self.assertEqual(cm.exception.code, hrtrail.Status.MASS_RANGE)
        self.assertIn("500", cm.exception.message)
        with self.assertRaises(hrtrail.OutsideGridError) as cm:
            self.grid.evaluate([1.0, 1.0], [1e9, 1e9], [0.014, 0.5])
        self.assertEqual(cm.exception.code, hrtrail.Status.Z_RANGE)
        self.assertIn("star 1", cm.exception.message)
        self.assertIsInstance(cm.exception, ValueError)
        with self.assertRaises(hrtrail.OutsideGridError):
            self.grid.star(0.001, 0.014)
        with self.assertRaises(hrtrail.OutsideGridError):
            self.grid.isochrone(1e9, 0.9)

    def test_invalid_input(self):
        for m, a in [(float("nan"), 1e9), (1.0, float("nan")), (1.0, -1.0), (-2.0, 1e9)]:
            with self.assertRaises(hrtrail.InvalidInputError) as cm:
                self.grid.state(m, a, 0.014)
            self.assertEqual(cm.exception.code, hrtrail.Status.DOMAIN)
        with self.assertRaises(hrtrail.InvalidInputError):
            self.grid.isochrone(0.0, 0.014)
        s = self.grid.star(1.0, 0.014)
        with self.assertRaises(hrtrail.InvalidInputError):
            s.at(-1.0)
        with self.assertRaises(hrtrail.InvalidInputError):
            self.grid.star(float("nan"), 0.014)

    def test_errors_ignore(self):
        st = self.grid.evaluate([1.0, 500.0, 1.0], [1e9, 1e9, -1.0], 0.014, errors="ignore")
        self.assertEqual(list(st["status"]), [hrtrail.Status.OK, hrtrail.Status.MASS_RANGE, hrtrail.Status.DOMAIN])
        self.assertTrue(np.isnan(st["log_l_lsun"][1]))
        with self.assertRaises(ValueError):
            self.grid.evaluate([1.0], [1e9], 0.014, errors="sometimes")

    def test_python_side_argument_errors(self):
        with self.assertRaises(ValueError):
            self.grid.evaluate([1.0, 2.0, 3.0], [1e9, 1e9], 0.014)
        with self.assertRaises(ValueError):
            self.grid.evaluate([1.0, 2.0], [1e9, 1e9], 0.014, out=np.empty(3, dtype=hrtrail.STATE_DTYPE))
        with self.assertRaises(ValueError):
            self.grid.evaluate([1.0, 2.0], [1e9, 1e9], 0.014, out=np.empty(2, dtype=np.float64))

    def test_closed_objects(self):
        g = hrtrail.Grid(GRID)
        s = g.star(1.0, 0.014)
        with g:
            pass
        self.assertTrue(g.closed)
        with self.assertRaises(ValueError):
            g.state(1.0, 1e9, 0.014)
        with self.assertRaises(ValueError):
            s.at(1e9)  # the grid took its stars with it
        g.close()  # idempotent

    def test_error_carries_code_and_message(self):
        e = hrtrail.HrtrailError(7, "initial mass 500 Msun is outside")
        self.assertIs(e.code, hrtrail.Status.MASS_RANGE)
        self.assertEqual(e.message, "initial mass 500 Msun is outside")
        self.assertEqual(hrtrail.HrtrailError(99, "future").code, 99)


class Grid(Base):
    """Grid accessors against the file's description through the library."""

    def test_description(self):
        g = self.grid
        self.assertEqual(len(g.z_values), g.n_z)
        self.assertEqual(list(g.z_values), sorted(g.z_values))
        self.assertEqual(g.z_range, (g.z_values[0], g.z_values[-1]))
        lo, hi = g.mass_range(g.z_values[0])
        self.assertEqual((lo, hi), (g.masses(0)[0], g.masses(0)[-1]))
        self.assertEqual(g.route_of(g.mass_range(0.014)[0], 0.014), 0)
        self.assertEqual(g.route_of(g.mass_range(0.014)[1], 0.014), len(g.routes) - 1)
        for m in (0.3, 1.0, 2.3, 9.0, 30.0):
            with g.star(m, 0.014) as s:
                self.assertEqual(g.route_of(m, 0.014), s.route)
        self.assertEqual(g.route_keypoints(0)[0], ("birthline", 0))  # the default grid models the pre-main sequence
        self.assertEqual(g.route_keypoints(0)[1][0], "zams")
        self.assertEqual(len(g.route_boundaries(0)), len(g.routes) - 1)
        self.assertGreater(g.memory_bytes, 1e6)
        self.assertIsNone(g.attribute("no-such-attribute"))
        with self.assertRaises(IndexError):
            g.masses(g.n_z)

    def test_default_grid_is_hrtrail_grid(self):
        self.assertEqual(hrtrail.default_grid_path(), GRID)  # HRTRAIL_GRID is set by meson test
        with hrtrail.Grid() as g:
            self.assertEqual(g.path, GRID)

    def test_version(self):
        self.assertRegex(hrtrail.__version__, r"^\d+\.\d+\.\d+")


def write_format_1(src, dst):
    """The grid src (format 2) in the layout of format version 1 (tracks/FORMAT.md, "Version
    history"): old dataset names, phase and remnant as indices into the key tables phase_keys and
    remnant_keys (here in reverse order of the codes, -1 beyond n_eep), group attribute Z."""
    import h5py
    old = {"initial_mass_msun": "initial_mass", "remnant_mass_msun": "remnant_mass",
           "route_boundary_mass_msun": "route_boundary_mass", "log_age_yr": "log_age", "log_l_lsun": "log_L",
           "log_teff_k": "log_Teff", "log_r_rsun": "log_R", "mass_msun": "mass",
           "he_core_mass_msun": "he_core_mass", "co_core_mass_msun": "co_core_mass"}
    with h5py.File(src, "r") as f, h5py.File(dst, "w") as o:
        for k, v in f.attrs.items():
            o.attrs[k] = v
        o.attrs["format_version"] = np.int32(1)
        f.copy("routes", o)
        index = {}
        for table, kind in (("phases", "phase"), ("remnants", "remnant")):
            codes = f[table + "/code"][()]
            keys = f[table + "/key"][()]
            keep = [i for i in range(codes.size)[::-1] if kind == "remnant" or codes[i] != 0]
            o.create_dataset(kind + "_keys", data=keys[keep])
            index[kind] = {int(codes[i]): j for j, i in enumerate(keep)}
        for iz, g in f["metallicity"].items():
            og = o.create_group("metallicity/" + iz)
            og.attrs["Z"] = g.attrs["z"]
            n_eep = g["n_eep"][()]
            for name, ds in g.items():
                if isinstance(ds, h5py.Group):
                    continue  # extra/: format 1 had no extra quantities
                data = ds[()]
                if name == "remnant":
                    data = np.array([index["remnant"][c] for c in data], dtype="<i4")
                elif name == "phase":
                    out = np.full(data.shape, -1, dtype="<i4")
                    for i, n in enumerate(n_eep):
                        out[i, :n] = [index["phase"][c] for c in data[i, :n]]
                    data = out
                og.create_dataset(old.get(name, name), data=data)


class Extras(Base):
    """The grid's extra quantities (hrt_grid_extra_*, hrt_state_extra, hrt_extra_at)."""

    def test_declared(self):
        q = self.grid.extra_quantities
        names = [x.name for x in q]
        self.assertEqual(names, sorted(names))
        self.assertIn("gyration_k2", names)
        self.assertEqual(dict((x.name, x.unit) for x in q)["envelope_mass_msun"], "solMass")

    def test_states_and_stars_agree(self):
        g = self.grid
        m, a = np.array([0.5, 1.0, 2.0, 8.0]), np.array([1e9, 4.6e9, 5e8, 2e7])
        st = g.evaluate(m, a, 0.014)
        got = g.extras_of(st, ["gyration_k2", "lambda_ce"])
        self.assertEqual(got["lambda_ce"].shape, m.shape)
        for i in range(m.size):
            one = g.extra(m[i], a[i], 0.014, ["gyration_k2", "lambda_ce"])
            self.assertEqual(one["gyration_k2"], got["gyration_k2"][i])  # the same interpolation, bit for bit
            self.assertEqual(one["lambda_ce"], got["lambda_ce"][i])
        # envelope mass: the state's M - M_He (to the single precision of the file and the interpolation)
        env = g.extras_of(st, "envelope_mass_msun")["envelope_mass_msun"]
        np.testing.assert_allclose(env, st["mass_msun"] - st["he_core_mass_msun"], rtol=1e-3)
        # a remnant has none
        self.assertTrue(np.isnan(g.extra(1.0, 13e9, 0.014, "gyration_k2")["gyration_k2"]))

    def test_unknown_name(self):
        with self.assertRaises(hrtrail.InvalidInputError):
            self.grid.extra(1.0, 1e9, 0.014, "no_such_quantity")

    def test_builder_and_importer(self):
        """Extras through the Python builder (a copy of log L) and the importer's settings."""
        routes = [hrtrail.RouteSpec("only", ("zams", "tams"), (30,))]
        with tempfile.TemporaryDirectory() as d:
            b = hrtrail.Builder(routes, 0.014)
            b.declare_extra("l_copy", "dex(solLum)", "log L again")
            b.declare_extra("l_single", "dex(solLum)", "log L in single precision", single=True)
            self.assertEqual(b.extra_count, 2)
            for m in (1.0, 1.4, 2.0):
                e = np.linspace(0.0, 1.0, 31)
                ll = 4.0 * np.log10(m) + 0.5 * e
                tr = dict(initial_mass_msun=m, route=0, log_age_yr=10.0 - 2.5 * np.log10(m) + 0.3 * e, log_l_lsun=ll,
                          log_teff_k=3.76 + 0.1 * np.log10(m) - 0.02 * e, mass_msun=np.full(31, m),
                          he_core_mass_msun=np.zeros(31), co_core_mass_msun=np.zeros(31),
                          phase=np.full(31, int(hrtrail.Phase.MS)), extra={"l_copy": ll, "l_single": ll})
                b.add_eep_track(0.014, tr)
            with self.assertRaises(hrtrail.InvalidInputError):
                b.add_eep_track(0.014, dict(tr, extra={"l_copy": ll}))  # a declared quantity missing
            path = os.path.join(d, "x.h5")
            b.write(path)
            b.close()
            with hrtrail.Grid(path) as g:
                st = g.evaluate([1.2, 1.7], [3e9, 5e8], 0.014)
                x = g.extras_of(st)
                np.testing.assert_allclose(x["l_copy"], st["log_l_lsun"], rtol=0, atol=1e-12)
                np.testing.assert_allclose(x["l_single"], st["log_l_lsun"], rtol=0, atol=1e-6)  # binary32
        imp = hrtrail.Importer()
        imp.add_extra("q_col", "Q", "erg", "a user's column")
        self.assertEqual(imp.n_extra, 1)
        imp.close()


class Upgrade(Base):
    """hrtrail.upgrade_grid (hrt_grid_upgrade) on the default grid written in format version 1."""

    def test_format_1_refused_then_upgraded(self):
        v1, new = self.path("v1.h5"), self.path("upgraded.h5")
        write_format_1(GRID, v1)
        with self.assertRaises(hrtrail.GridFileError) as cm:
            hrtrail.Grid(v1)
        self.assertEqual(cm.exception.code, hrtrail.Status.VERSION)
        self.assertIn("hrtrail grid upgrade", cm.exception.message)
        self.assertIsNone(hrtrail.upgrade_grid(v1, new))
        m, z, a = draw_stars(self.grid, 3000, seed=20260103)
        want = self.grid.evaluate(m, a, z, errors="ignore")
        with hrtrail.Grid(new) as g:
            got = g.evaluate(m, a, z, errors="ignore")
            self.assertIn("format_version 1", g.attribute("converted_from"))
            self.assertEqual(g.attribute("source"), self.grid.attribute("source"))
        self.assertEqual(got.tobytes(), want.tobytes(), "upgraded grid: other answers than the default grid")
        self.assertGreater(np.count_nonzero(want["status"] == 0), 2000)

    def test_errors(self):
        with self.assertRaises(hrtrail.GridFileError) as cm:
            hrtrail.upgrade_grid(self.path("missing.h5"), self.path("x.h5"))
        self.assertEqual(cm.exception.code, hrtrail.Status.IO)
        self.assertIn("missing.h5", cm.exception.message)
        self.assertFalse(os.path.exists(self.path("x.h5")))
        self.assertIn("hrt_grid_upgrade", hrtrail.upgrade_grid.__doc__)


class WithoutNumpy(unittest.TestCase):
    """The package works without NumPy: scalar calls and lists of State."""

    def test_lists(self):
        code = r"""
import sys
sys.modules["numpy"] = None
import hrtrail
g = hrtrail.Grid()
out = g.evaluate([1.0, 2.3, 500.0], [4.57e9, 8e8, 1e9], 0.014, errors="ignore")
print(" ".join(float.hex(s.log_l_lsun) for s in out), int(out[2].status))
print(float.hex(g.star(1.0, 0.014).at(1e9).log_teff_k), len(g.star(1.0, 0.014).track()))
try:
    g.isochrone(1e9, 0.014)
except RuntimeError as e:
    print("isochrone:", e)
"""
        r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
        self.assertEqual(r.returncode, 0, r.stderr)
        l1, l2, l3 = r.stdout.splitlines()
        with hrtrail.Grid(GRID) as g:
            st = g.evaluate([1.0, 2.3, 500.0], [4.57e9, 8e8, 1e9], 0.014, errors="ignore")
            s = g.star(1.0, 0.014)
            self.assertEqual(l1, " ".join(float.hex(float(x)) for x in st["log_l_lsun"]) + " 7")
            self.assertEqual(l2, "%s %d" % (float.hex(s.at(1e9).log_teff_k), len(s.track())))
        self.assertIn("needs NumPy", l3)


if __name__ == "__main__":
    unittest.main()
