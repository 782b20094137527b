#!/usr/bin/python3
"""Grid files across the h5py / hrtrail boundary, checked against tracks/FORMAT.md.

(a) Grids written with h5py alone (write_grid_h5py.py, format version 2) open in the
    library, which gives back at each track's mass, metallicity and EEP exactly what
    was written, whatever string kind (variable- or fixed-length) and integer width
    the file uses; files that break the rules of FORMAT.md (wrong units, floating-point
    data stored as integers, phase codes other than the library's, ...) are refused
    with the documented code and a message naming the dataset.
(b) A grid written by the library (hrt_builder_* through ctypes) reads back in h5py
    (reference: h5py 3.7 on HDF5 1.10) with every attribute and dataset FORMAT.md
    lists, with the documented types, shapes and units (parsed by astropy 5.2
    astropy.units.Unit and compared with FORMAT.md's vocabulary table), the library's
    phase and remnant code tables and the values given to the builder; a raw track is
    resampled onto EEPs as FORMAT.md specifies (compared with an independent NumPy
    implementation of that specification).
(c) The same grid written in the layout of format version 1 is refused by
    hrt_grid_open (HRT_E_VERSION, naming the conversion); converted by
    hrt_grid_upgrade it holds the same data as the grid written directly in format 2
    and gives bit-identical hrt_eval answers on thousands of random stars.

The library is the shared object named by HRTRAIL_LIB.
"""
import ctypes
import os
import re
import sys
import tempfile
import unittest

import astropy.units
import h5py
import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import hrtrail_ctypes as H  # noqa: E402
import write_grid_h5py as W  # noqa: E402

HRT_E_FORMAT, HRT_E_VERSION, HRT_E_IO, HRT_E_INVALID = 4, 5, 3, 11
HRT_FLAG_REMNANT, HRT_FLAG_NOT_MODELLED = 0x2, 0x8
TOL_LOG = 1e-12     # absolute, dex: "equal to what was written" up to the last bits of log10/pow
TOL_REL = 1e-12     # relative, for masses and ages in yr
Z_REF = 0.014
FORMAT_MD = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "tracks", "FORMAT.md")
ROUTES = [{"name": "low_mass", "keypoint_names": ["zams", "tams", "rgb_tip", "wd_start"],
           "segment_samples": [5, 4, 6]},
          {"name": "giant", "keypoint_names": ["zams", "tams", "rgb_base", "he_ignition", "end"],
           "segment_samples": [8, 3, 5, 7]}]
ROUTE_N_EEP = [sum(r["segment_samples"]) + 1 for r in ROUTES]
ROUTE_PHASES = [["ms", "subgiant", "rgb"], ["ms", "subgiant", "rgb", "cheb"]]
HRT_PHASE = W.PHASE_CODE      # key -> hrtrail code (checked against the library by CodeTables)
HRT_REMNANT = W.REMNANT_CODE
EEP_COLUMNS = ("log_age_yr", "log_l_lsun", "log_teff_k", "mass_msun", "he_core_mass_msun", "co_core_mass_msun")


def format_md_units():
    """{name: astropy unit string or None} from the vocabulary table of tracks/FORMAT.md."""
    with open(FORMAT_MD, encoding="utf-8") as f:
        text = f.read()
    block = text.split("<!-- vocabulary")[1].split("<!-- end vocabulary -->")[0]
    units = {}
    for line in block.splitlines():
        m = re.match(r"\|\s*`([a-z0-9_]+)`\s*\|[^|]*\|\s*(?:`([^`]*)`|\(none\))\s*\|", line)
        if m:
            units[m.group(1)] = m.group(2)
    assert len(units) > 20, "FORMAT.md vocabulary table not found"
    return units


def library_list(code_fn, key_fn, name_fn):
    """[(code, key, name)] of a code list of the library, in its order (hrt_*_code until -1)."""
    out = []
    for i in range(256):
        c = code_fn(i)
        if c < 0:
            return out
        out.append((c, key_fn(c).decode(), name_fn(c).decode()))
    raise AssertionError("code list does not end")


def eep_track(mass, route, z, n_eep=None, seed=0):
    """Invented, smooth, valid track on the EEPs of a route (test data, not physics)."""
    rng = np.random.default_rng(seed)
    n_route = ROUTE_N_EEP[route]
    n = n_route if n_eep is None else n_eep
    s = np.arange(n) / (n_route - 1)
    x, fe = np.log10(mass), np.log10(z / Z_REF)
    log_age = 10.0 - 2.5 * x + np.log10(0.05 + s + 0.1 * s ** 2) + 0.01 * fe
    seg = np.repeat(np.arange(len(ROUTES[route]["segment_samples"])), ROUTES[route]["segment_samples"])
    seg = np.append(seg, seg[-1])[:n]
    phase = [ROUTE_PHASES[route][k] for k in seg]
    truncated = n < n_route
    return {"initial_mass_msun": mass, "route": route,
            "remnant": "none" if truncated else ("he_wd" if mass < 0.9 else "co_wd"),
            "remnant_mass_msun": np.nan if truncated else 0.4 + 0.1 * mass,
            "log_age_yr": log_age, "log_l_lsun": 4.0 * x + 1.5 * s ** 3 + rng.normal(0, 0.01, n) - 0.1 * fe,
            "log_teff_k": 3.7 + 0.2 * x - 0.1 * s ** 2 + rng.normal(0, 0.002, n),
            "log_r_rsun": 0.1 * x + s + rng.normal(0, 0.001, n),  # kept, not derived: any finite value
            "mass_msun": mass * (1.0 - 0.1 * s ** 4), "he_core_mass_msun": 0.12 * mass * s,
            "co_core_mass_msun": 0.03 * mass * s ** 2, "phase": phase}


LOW_MASSES = [0.6, 0.7, 0.8, 0.9]
GIANT_MASSES = [1.2, 1.6, 2.1, 3.0, 4.5]


def h5py_spec():
    groups = []
    for iz, z in enumerate([0.006, 0.014]):
        tracks = [eep_track(m, 0, z, seed=iz * 100 + k) for k, m in enumerate(LOW_MASSES)]
        tracks += [eep_track(m, 1, z, seed=iz * 100 + 10 + k,
                             n_eep=17 if (iz, m) == (1, 4.5) else None)  # one truncated track
                   for k, m in enumerate(GIANT_MASSES)]
        groups.append({"z": z, "tracks": tracks, "route_boundary_mass_msun": [1.0 + 0.05 * iz]})
    return groups


def setUpModule():
    global LIB, TMP
    LIB = H.load()
    TMP = tempfile.TemporaryDirectory(prefix="hrtrail-rt-")


def tearDownModule():
    TMP.cleanup()


def open_code(path, interp="steffen"):
    g, e = ctypes.c_void_p(), H.HrtError()
    rc = LIB.hrt_grid_open_with(str(path).encode(), H.HRT_INTERP[interp], ctypes.byref(g), ctypes.byref(e))
    if rc == H.HRT_OK:
        LIB.hrt_grid_close(g)
    return rc, e.message.decode(errors="replace")


def retype(f, name, dtype):
    """Store dataset name again with another type, keeping its attributes (units)."""
    attrs = dict(f[name].attrs)
    with np.errstate(invalid="ignore"):  # NaN padding beyond n_eep has no integer value
        data = f[name][()].astype(dtype)
    del f[name]
    f.create_dataset(name, data=data, fletcher32=True)  # FORMAT.md: checksums required
    for k, v in attrs.items():
        f[name].attrs[k] = v


class CodeTables(unittest.TestCase):
    """The tables write_grid_h5py.py copies from FORMAT.md against the library and FORMAT.md."""

    def test_phase_and_remnant_codes_are_the_librarys(self):
        self.assertEqual(W.PHASES, library_list(LIB.hrt_phase_code, LIB.hrt_phase_key, LIB.hrt_phase_name))
        self.assertEqual(W.REMNANTS, library_list(LIB.hrt_remnant_code, LIB.hrt_remnant_key,
                                                  LIB.hrt_remnant_name))
        for code, key, _ in W.PHASES:
            self.assertEqual(LIB.hrt_phase_from_key(key.encode()), code, key)
        for code, key, _ in W.REMNANTS:
            self.assertEqual(LIB.hrt_remnant_from_key(key.encode()), code, key)

    def test_writer_units_are_format_md(self):
        fmt = format_md_units()
        for name, units in W.UNITS.items():
            self.assertEqual(units, fmt[name], name)


class H5pyWrittenGrid(unittest.TestCase):
    """(a) h5py writes, the library reads."""

    def write(self, name, **kw):
        path = os.path.join(TMP.name, name)
        W.write_grid(path, Z_REF, ROUTES, self.groups, attrs={
            "description": "round-trip test grid", "source": "invented", "created_by": "h5py"}, **kw)
        return path

    def setUp(self):
        self.groups = h5py_spec()

    def check_grid(self, path):
        g = H.open_grid(LIB, path, "steffen")
        try:
            self.assertEqual(LIB.hrt_grid_n_z(g), 2)
            self.assertEqual(LIB.hrt_grid_z_ref(g), Z_REF)
            self.assertEqual(LIB.hrt_grid_attribute(g, b"description"), b"round-trip test grid")
            self.assertEqual(LIB.hrt_grid_attribute(g, b"source"), b"invented")
            self.assertIsNone(LIB.hrt_grid_attribute(g, b"no_such_attribute"))
            self.assertEqual(LIB.hrt_grid_n_routes(g), 2)
            for r, spec in enumerate(ROUTES):
                self.assertEqual(LIB.hrt_grid_route_name(g, r).decode(), spec["name"])
                self.assertEqual(LIB.hrt_grid_route_n_eep(g, r), ROUTE_N_EEP[r])
                self.assertEqual(LIB.hrt_grid_route_n_keypoints(g, r), len(spec["keypoint_names"]))
                kp = np.concatenate([[0], np.cumsum(spec["segment_samples"])])
                for k, name in enumerate(spec["keypoint_names"]):
                    self.assertEqual(LIB.hrt_grid_keypoint_name(g, r, k).decode(), name)
                    self.assertEqual(LIB.hrt_grid_keypoint_eep(g, r, k), kp[k])
            for iz, grp in enumerate(self.groups):
                z = grp["z"]
                self.assertEqual(LIB.hrt_grid_z(g, iz), z)
                self.assertEqual(LIB.hrt_grid_route_boundary(g, iz, 0), grp["route_boundary_mass_msun"][0])
                tracks = sorted(grp["tracks"], key=lambda t: t["initial_mass_msun"])
                self.assertEqual(LIB.hrt_grid_n_masses(g, iz), len(tracks))
                for im, t in enumerate(tracks):
                    self.assertEqual(LIB.hrt_grid_mass(g, iz, im), t["initial_mass_msun"])
                    self.assertEqual(LIB.hrt_grid_track_route(g, iz, im), t["route"])
                    self.assertEqual(LIB.hrt_grid_track_n_eep(g, iz, im), len(t["log_age_yr"]))
                    self.check_track_values(g, z, t)
        finally:
            LIB.hrt_grid_close(g)

    def check_track_values(self, g, z, t):
        where = "z=%g M=%g" % (z, t["initial_mass_msun"])
        star, e = ctypes.c_void_p(), H.HrtError()
        rc = LIB.hrt_star_new(g, t["initial_mass_msun"], z, ctypes.byref(star), ctypes.byref(e))
        self.assertEqual(rc, H.HRT_OK, "%s: %s" % (where, e.message.decode()))
        try:
            n = len(t["log_age_yr"])
            self.assertEqual(LIB.hrt_star_n_eep(star), n, where)
            st = H.HrtState()
            for j in range(n):
                self.assertEqual(LIB.hrt_star_eep_state(star, j, ctypes.byref(st)), H.HRT_OK)
                w = "%s EEP %d" % (where, j)
                self.assertAlmostEqual(st.log_l_lsun, t["log_l_lsun"][j], delta=TOL_LOG, msg=w)
                self.assertAlmostEqual(st.log_teff_k, t["log_teff_k"][j], delta=TOL_LOG, msg=w)
                for name in ("mass_msun", "he_core_mass_msun", "co_core_mass_msun"):
                    self.assertAlmostEqual(getattr(st, name), t[name][j],
                                           delta=TOL_REL * abs(t[name][j]) + 1e-300, msg=w + " " + name)
                self.assertAlmostEqual(st.age_yr / 10.0 ** t["log_age_yr"][j], 1.0, delta=TOL_REL, msg=w)
                self.assertEqual(st.phase, HRT_PHASE[t["phase"][j]], w)
                self.assertEqual(LIB.hrt_phase_key(st.phase).decode(), t["phase"][j], w)
                self.assertEqual(st.route, t["route"], w)
                self.assertEqual(st.remnant, HRT_REMNANT[t["remnant"]], w)
        finally:
            LIB.hrt_star_free(star)
        # the batch path at the ages of the interior EEPs gives the same values
        mid = np.arange(1, n - 1)
        rc, msg, sts = H.evaluate(LIB, g, np.full(mid.size, t["initial_mass_msun"]),
                                  10.0 ** t["log_age_yr"][mid], z)
        self.assertEqual(rc, H.HRT_OK, "%s: %s" % (where, msg))
        self.assertLess(np.max(np.abs(sts["log_l_lsun"] - t["log_l_lsun"][mid])), 1e-10, where)
        self.assertLess(np.max(np.abs(sts["eep"] - mid)), 1e-9, where)

    def test_vlen_utf8_strings(self):
        self.check_grid(self.write("vlen.h5"))

    def test_fixed_ascii_strings(self):
        self.check_grid(self.write("fixed.h5", strings="fixed"))

    def test_other_integer_and_float_types(self):
        """FORMAT.md: integers of any width, floating point of any kind HDF5 converts, are accepted."""
        path = self.write("types.h5")
        with h5py.File(path, "r+") as f:
            for iz in ("0", "1"):
                for name, dtype in (("route", "<i8"), ("n_eep", ">i2"), ("remnant", "u1"), ("phase", "<i2")):
                    retype(f, "metallicity/%s/%s" % (iz, name), dtype)
                retype(f, "metallicity/%s/initial_mass_msun" % iz, ">f8")  # big-endian float64
            retype(f, "routes/giant/segment_samples", "<i8")
            retype(f, "phases/code", "<i2")
            f.attrs["format_version"] = np.int64(2)
            f.attrs["z_ref"] = np.float32(Z_REF)  # read as float64(float32(0.014))
        rc, msg = open_code(path)
        self.assertEqual(rc, H.HRT_OK, msg)

    def test_extra_objects_are_ignored(self):
        path = self.write("extra.h5")
        with h5py.File(path, "r+") as f:
            f.attrs["provenance"] = "extra attribute"
            f["metallicity/0"].create_dataset("my_column", data=np.zeros((9, 24)))
            f["metallicity/0/log_l_lsun"].attrs["long_name"] = "log10 of the luminosity"
            f.create_group("notes").attrs["text"] = "extra group"
        self.check_grid(path)

    def test_extra_quantities_written_with_h5py(self):
        """FORMAT.md "Extra quantities" written by h5py alone: metallicity/<i>/extra/<name>, [track][eep],
        NaN beyond n_eep, units and long_name, checksummed; the library reads them back and interpolates
        them as log L: at a track's own EEPs the file's values."""
        path = self.write("extras.h5")
        with h5py.File(path, "r+") as f:
            for grp in f["metallicity"].values():
                x = grp.create_group("extra")
                ds = x.create_dataset("l_twice", data=2.0 * grp["log_l_lsun"][()], fletcher32=True)
                ds.attrs["units"] = "dex(solLum)"
                ds.attrs["long_name"] = "twice log L"
        g = H.open_grid(LIB, path, "steffen")
        try:
            self.assertEqual(LIB.hrt_grid_extra_count(g), 1)
            self.assertEqual(LIB.hrt_grid_extra_name(g, 0), b"l_twice")
            self.assertEqual(LIB.hrt_grid_extra_unit(g, 0), b"dex(solLum)")
            z = self.groups[0]["z"]
            t = sorted(self.groups[0]["tracks"], key=lambda t: t["initial_mass_msun"])[1]
            star, e = ctypes.c_void_p(), H.HrtError()
            self.assertEqual(LIB.hrt_star_new(g, t["initial_mass_msun"], z, ctypes.byref(star), ctypes.byref(e)), 0)
            try:
                st, v = H.HrtState(), ctypes.c_double()
                for j in range(LIB.hrt_star_n_eep(star)):
                    LIB.hrt_star_eep_state(star, j, ctypes.byref(st))
                    self.assertEqual(LIB.hrt_state_extra(g, ctypes.byref(st), 1, None, ctypes.byref(v), None), 0)
                    self.assertAlmostEqual(v.value, 2.0 * t["log_l_lsun"][j], delta=1e-12)
            finally:
                LIB.hrt_star_free(star)
        finally:
            LIB.hrt_grid_close(g)

    def broken(self, name, edit):
        path = self.write(name)
        with h5py.File(path, "r+") as f:
            edit(f)
        return open_code(path)

    def test_refuses_what_format_md_forbids(self):
        def set_value(ds, index, value):
            return lambda f: f[ds].__setitem__(index, value)

        def delete(ds):
            return lambda f: f.__delitem__(ds)

        def set_attr(obj, name, value):
            return lambda f: f[obj].attrs.__setitem__(name, value)

        def del_attr(obj, name):
            return lambda f: f[obj].attrs.__delitem__(name)

        def as_type(ds, dtype):
            return lambda f: retype(f, ds, dtype)

        def swap_codes(group, a, b):
            def edit(f):
                c = f[group + "/code"][()]
                c[[a, b]] = c[[b, a]]
                f[group + "/code"][...] = c
            return edit

        cases = [  # (what, edit, expected code, word the message must contain)
            ("newer format_version", set_attr("/", "format_version", np.int32(3)), HRT_E_VERSION, "format_version"),
            ("format_version 1", set_attr("/", "format_version", np.int32(1)), HRT_E_VERSION, "grid upgrade"),
            ("wrong format", set_attr("/", "format", "other-format"), HRT_E_FORMAT, "format"),
            ("z_ref <= 0", set_attr("/", "z_ref", 0.0), HRT_E_FORMAT, "z_ref"),
            ("unknown phase key", set_value("phases/key", 3, "no_such_phase"), HRT_E_FORMAT, "phases/code[3]"),
            # phase and remnant codes other than the library's (FORMAT.md "Phase and remnant codes")
            ("phase code of no phase", set_value("phases/code", 2, 12), HRT_E_FORMAT, "phases/code[2]"),
            ("two phase codes swapped", swap_codes("phases", 3, 4), HRT_E_FORMAT, "phases/code[3]"),
            ("phase code of another phase", set_value("phases/code", 6, 31), HRT_E_FORMAT, "phases/code[6]"),
            ("remnant code of another kind", set_value("remnants/code", 2, 10), HRT_E_FORMAT, "remnants/code[2]"),
            ("phase table missing", delete("phases"), HRT_E_FORMAT, "phases"),
            # units (FORMAT.md: the astropy string of the table, checked on reading)
            ("format-1 units", set_attr("metallicity/0/log_l_lsun", "units", "log10 Lsun"), HRT_E_FORMAT,
             "metallicity/0/log_l_lsun"),
            ("units of another quantity", set_attr("metallicity/1/mass_msun", "units", "solLum"), HRT_E_FORMAT,
             "metallicity/1/mass_msun"),
            ("log units of another quantity", set_attr("metallicity/0/log_teff_k", "units", "dex(solLum)"),
             HRT_E_FORMAT, "metallicity/0/log_teff_k"),
            ("linear units on a log quantity", set_attr("metallicity/1/log_age_yr", "units", "yr"), HRT_E_FORMAT,
             "metallicity/1/log_age_yr"),
            ("units missing", del_attr("metallicity/0/route_boundary_mass_msun", "units"), HRT_E_FORMAT,
             "metallicity/0/route_boundary_mass_msun"),
            # floating-point data stored as integers (FORMAT.md "Conventions")
            ("log_teff_k as integers", as_type("metallicity/0/log_teff_k", "<i4"), HRT_E_FORMAT,
             "metallicity/0/log_teff_k"),
            ("initial masses as integers", as_type("metallicity/1/initial_mass_msun", "<i8"), HRT_E_FORMAT,
             "metallicity/1/initial_mass_msun"),
            ("remnant masses as integers", as_type("metallicity/0/remnant_mass_msun", "u2"), HRT_E_FORMAT,
             "metallicity/0/remnant_mass_msun"),
            ("codes as floating point", as_type("metallicity/0/phase", "<f8"), HRT_E_FORMAT, "metallicity/0/phase"),
            # values
            ("NaN inside the valid EEPs", set_value("metallicity/1/log_l_lsun", (2, 5), np.nan), HRT_E_FORMAT,
             "log_l_lsun"),
            ("infinity inside the valid EEPs", set_value("metallicity/0/mass_msun", (6, 3), np.inf), HRT_E_FORMAT,
             "mass_msun"),
            ("age not increasing", set_value("metallicity/0/log_age_yr", (1, 4), 0.0), HRT_E_FORMAT, "log_age_yr"),
            ("masses not increasing", set_value("metallicity/0/initial_mass_msun", 3, 0.65), HRT_E_FORMAT,
             "initial_mass_msun"),
            ("route decreasing", set_value("metallicity/0/route", 5, 0), HRT_E_FORMAT, "route"),
            ("route out of range", set_value("metallicity/0/route", 8, 2), HRT_E_FORMAT, "route"),
            ("n_eep below 2", set_value("metallicity/0/n_eep", 0, 1), HRT_E_FORMAT, "n_eep"),
            ("n_eep beyond its route", set_value("metallicity/0/n_eep", 0, ROUTE_N_EEP[0] + 1), HRT_E_FORMAT,
             "n_eep"),
            ("phase code out of range", set_value("metallicity/0/phase", (0, 0), 99), HRT_E_FORMAT, "phase"),
            ("phase code not in the file's table", set_value("metallicity/0/phase", (0, 0), 13), HRT_E_FORMAT,
             "metallicity/0/phase"),
            ("remnant code out of range", set_value("metallicity/0/remnant", 0, 99), HRT_E_FORMAT, "remnant"),
            ("remnant index of format 1", set_value("metallicity/0/remnant", 0, 1), HRT_E_FORMAT, "remnant"),
            ("remnant mass NaN for a named remnant", set_value("metallicity/0/remnant_mass_msun", 0, np.nan),
             HRT_E_FORMAT, "remnant_mass_msun"),
            ("boundary inside a route's tracks", set_value("metallicity/0/route_boundary_mass_msun", 0, 0.75),
             HRT_E_FORMAT, "route_boundary_mass_msun"),
            ("missing dataset", delete("metallicity/1/co_core_mass_msun"), HRT_E_FORMAT, "co_core_mass_msun"),
            ("z not increasing", set_attr("metallicity/1", "z", 0.006), HRT_E_FORMAT, "z"),
            ("segment counts disagree", set_value("routes/giant/segment_samples", 0, 7), HRT_E_FORMAT,
             "segment_samples"),
        ]
        for k, (what, edit, code, word) in enumerate(cases):
            with self.subTest(what):
                rc, msg = self.broken("bad%d.h5" % k, edit)
                self.assertEqual(rc, code, "%s: got %d (%s)" % (what, rc, msg))
                self.assertIn(word, msg, "%s: message does not name the culprit: %r" % (what, msg))

    def test_checksums_required_and_verified(self):
        """FORMAT.md: every numeric dataset carries a Fletcher-32 checksum that HDF5 verifies on reading."""
        path = self.write("no-checksum.h5")
        with h5py.File(path, "r+") as f:
            g = f["metallicity/0"]
            data, attrs = g["mass_msun"][()], dict(g["mass_msun"].attrs)
            del g["mass_msun"]
            g.create_dataset("mass_msun", data=data)  # same values, no checksum
            for k, v in attrs.items():
                g["mass_msun"].attrs[k] = v
        rc, msg = open_code(path)
        self.assertEqual(rc, HRT_E_FORMAT, msg)
        self.assertIn("metallicity/0/mass_msun", msg)
        self.assertIn("checksum", msg)
        # one flipped bit inside the stored data of a checksummed dataset
        path = self.write("flipped.h5")
        with h5py.File(path, "r") as f:
            offset = f["metallicity/0/log_l_lsun"].id.get_chunk_info(0).byte_offset
        with open(path, "r+b") as raw:
            raw.seek(offset + 100)
            byte = raw.read(1)
            raw.seek(offset + 100)
            raw.write(bytes([byte[0] ^ 0x10]))
        rc, msg = open_code(path)
        self.assertEqual(rc, HRT_E_FORMAT, msg)
        self.assertIn("metallicity/0/log_l_lsun", msg)

    def test_values_beyond_n_eep_are_not_read(self):
        path = self.write("padding.h5")
        with h5py.File(path, "r+") as f:  # garbage past the valid EEPs of the low-mass tracks
            a = f["metallicity/0/log_l_lsun"][()]
            a[:4, ROUTE_N_EEP[0]:] = np.inf
            f["metallicity/0/log_l_lsun"][...] = a
            p = f["metallicity/0/phase"][()]
            p[:4, ROUTE_N_EEP[0]:] = 12345
            f["metallicity/0/phase"][...] = p
        self.check_grid(path)

    def test_missing_file(self):
        rc, msg = open_code(os.path.join(TMP.name, "does-not-exist.h5"))
        self.assertEqual(rc, HRT_E_IO, msg)


# ---------------------------------------------------------------------------
# (b) the library writes, h5py reads
# ---------------------------------------------------------------------------
def route_specs(keep):
    specs = (H.HrtRouteSpec * len(ROUTES))()
    for r, spec in enumerate(ROUTES):
        names = (ctypes.c_char_p * len(spec["keypoint_names"]))(*[n.encode() for n in spec["keypoint_names"]])
        seg = (ctypes.c_int * len(spec["segment_samples"]))(*spec["segment_samples"])
        name = spec["name"].encode()
        keep += [name, names, seg]
        specs[r] = H.HrtRouteSpec(name, len(spec["keypoint_names"]), names, seg)
    return specs


def track_struct(t, keep, keypoint_sample=None):
    arrays = {k: np.ascontiguousarray(t[k], dtype=np.float64) for k in EEP_COLUMNS}
    phase = (ctypes.c_int * len(t["phase"]))(*[HRT_PHASE[p] for p in t["phase"]])
    keep += list(arrays.values()) + [phase]
    td = H.HrtTrackData()
    td.initial_mass_msun, td.route = t["initial_mass_msun"], t["route"]
    td.remnant, td.remnant_mass_msun = HRT_REMNANT[t["remnant"]], t["remnant_mass_msun"]
    td.n = len(t["log_age_yr"])
    for k in EEP_COLUMNS:  # the struct's fields have the vocabulary names too
        setattr(td, k, H.dptr(arrays[k]))
    td.log_r_rsun = None  # derived by the builder from L and Teff
    td.phase = phase
    if keypoint_sample is not None:
        ks = (ctypes.c_size_t * len(keypoint_sample))(*keypoint_sample)
        keep.append(ks)
        td.n_keypoints, td.keypoint_sample = len(keypoint_sample), ks
    return td


def raw_track(mass, seed=3):
    """A raw giant-route track: uneven samples in age, every keypoint reached (invented data)."""
    rng = np.random.default_rng(seed)
    n = 61
    u = np.sort(np.concatenate([[0.0, 1.0], rng.uniform(0.0, 1.0, n - 2)]))
    t_yr = 1e7 + 4e8 * u ** 1.3
    keypoint_sample = [0, 20, 31, 45, n - 1]
    s = np.arange(n) / (n - 1)
    phase = [["ms", "subgiant", "rgb", "cheb"][min(np.searchsorted(keypoint_sample, i, side="right") - 1, 3)]
             for i in range(n)]
    return ({"initial_mass_msun": mass, "route": 1, "remnant": "co_wd", "remnant_mass_msun": 0.7,
             "log_age_yr": np.log10(t_yr), "log_l_lsun": 1.5 + 2.0 * s ** 2 + 0.3 * np.sin(9 * s),
             "log_teff_k": 3.95 - 0.4 * s + 0.05 * np.cos(13 * s), "mass_msun": mass * (1 - 0.2 * s ** 3),
             "he_core_mass_msun": 0.4 * s, "co_core_mass_msun": 0.1 * s ** 2, "phase": phase},
            keypoint_sample)


def resample_reference(t, keypoint_sample, segment_samples):
    """tracks/FORMAT.md "EEP resampling", implemented independently with NumPy."""
    t_yr = 10.0 ** t["log_age_yr"]
    cols = {k: np.asarray(t[k], float) for k in EEP_COLUMNS}
    out = {k: [] for k in cols}
    out["phase"] = []
    for k, n_k in enumerate(segment_samples[:len(keypoint_sample) - 1]):
        a, b = keypoint_sample[k], keypoint_sample[k + 1]
        f = (t_yr[a:b + 1] - t_yr[a]) / (t_yr[b] - t_yr[a])
        ds = np.sqrt((2.0 * np.diff(cols["log_teff_k"][a:b + 1])) ** 2
                     + (1.0 * np.diff(cols["log_l_lsun"][a:b + 1])) ** 2 + (1.0 * np.diff(f)) ** 2)
        dist = np.concatenate([[0.0], np.cumsum(ds)])
        targets = dist[-1] * np.arange(n_k) / n_k
        for key, col in cols.items():
            out[key].extend(np.interp(targets, dist, col[a:b + 1]))
        at_or_before = a + np.searchsorted(dist, targets, side="right") - 1
        out["phase"].extend(t["phase"][i] for i in at_or_before)
    last = keypoint_sample[-1]
    for key, col in cols.items():
        out[key].append(col[last])
    out["phase"].append(t["phase"][last])
    return {k: (np.array(v) if k != "phase" else v) for k, v in out.items()}


class LibraryWrittenGrid(unittest.TestCase):
    """(b) the library writes (hrt_builder_*), h5py reads."""

    @classmethod
    def setUpClass(cls):
        cls.dir = os.path.join(TMP.name, "builder")
        os.mkdir(cls.dir)
        cls.path = os.path.join(cls.dir, "built.h5")
        cls.given = {}
        keep = []
        b, e = ctypes.c_void_p(), H.HrtError()
        rc = LIB.hrt_builder_new(len(ROUTES), route_specs(keep), Z_REF, ctypes.byref(b), ctypes.byref(e))
        assert rc == H.HRT_OK, e.message
        try:
            for iz, z in enumerate([0.014, 0.004]):  # added out of Z order on purpose
                masses = [2.1, 0.7, 4.5, 0.6, 1.2, 0.9, 3.0, 0.8, 1.6]  # out of mass order too
                tracks = [eep_track(m, 0 if m < 1 else 1, z, seed=int(10 * m) + iz,
                                    n_eep=14 if (m, iz) == (0.9, 1) else None) for m in masses]
                for t in tracks:
                    rc = LIB.hrt_builder_add_eep_track(b, z, ctypes.byref(track_struct(t, keep)), ctypes.byref(e))
                    assert rc == H.HRT_OK, (z, t["initial_mass_msun"], e.message)
                cls.given[z] = tracks
            raw, ks = raw_track(2.6)
            rc = LIB.hrt_builder_add_track(b, 0.004, ctypes.byref(track_struct(raw, keep, ks)), ctypes.byref(e))
            assert rc == H.HRT_OK, e.message
            cls.raw = (raw, ks)
            cls.boundary = np.array([1.05])
            rc = LIB.hrt_builder_set_route_boundaries(b, 0.014, H.dptr(cls.boundary), ctypes.byref(e))
            assert rc == H.HRT_OK, e.message
            for k, v in (("description", "built by the round-trip test"), ("source", "invented tracks")):
                assert LIB.hrt_builder_set_attribute(b, k.encode(), v.encode(), ctypes.byref(e)) == H.HRT_OK
            cls.write_rc = LIB.hrt_builder_write(b, cls.path.encode(), ctypes.byref(e))
            cls.write_msg = e.message.decode()
            # a failing write leaves no temporary file and no file behind
            cls.bad_rc = LIB.hrt_builder_write(b, os.path.join(cls.dir, "no-dir", "x.h5").encode(),
                                               ctypes.byref(e))
        finally:
            LIB.hrt_builder_free(b)

    def setUp(self):
        self.assertEqual(self.write_rc, H.HRT_OK, self.write_msg)
        self.f = h5py.File(self.path, "r")
        self.units = format_md_units()

    def tearDown(self):
        self.f.close()

    def assertText(self, value, want=None):
        """A string read by h5py (vlen str, or bytes of a fixed-length string)."""
        if isinstance(value, bytes):
            value = value.decode("utf-8")
        self.assertIsInstance(value, str)
        if want is not None:
            self.assertEqual(value, want)
        return value

    def assertVlenUtf8(self, h5type, what):
        self.assertIsInstance(h5type, h5py.h5t.TypeStringID, what)
        self.assertTrue(h5type.is_variable_str() and h5type.get_cset() == h5py.h5t.CSET_UTF8,
                        "%s: FORMAT.md says the library writes variable-length UTF-8" % what)

    def assertTextAttribute(self, obj, name, want=None):
        """A scalar string attribute (FORMAT.md "text attribute")."""
        aid = obj.attrs.get_id(name)
        self.assertEqual(aid.shape, (), name + " is not scalar")
        self.assertVlenUtf8(aid.get_type(), "attribute " + name)
        return self.assertText(obj.attrs[name], want)

    def assertDataset(self, name, shape, dtype, units=None):
        ds = self.f[name]
        self.assertIsInstance(ds, h5py.Dataset, name)
        self.assertEqual(ds.shape, shape, name)
        self.assertEqual(ds.dtype, np.dtype(dtype), name)
        if units is not None:
            self.assertTextAttribute(ds, "units", units)
        return ds[()]

    def text_list(self, name, n=None):
        ds = self.f[name]
        self.assertEqual(ds.ndim, 1, name)
        if n is not None:
            self.assertEqual(ds.shape, (n,), name)
        self.assertVlenUtf8(ds.id.get_type(), name)
        return [self.assertText(v) for v in ds[()]]

    def test_write_is_atomic(self):
        self.assertEqual(sorted(os.listdir(self.dir)), ["built.h5"], "temporary files left behind")
        self.assertEqual(self.bad_rc, HRT_E_IO)

    def test_root(self):
        a = self.f.attrs
        self.assertTextAttribute(self.f, "format", "hrtrail-track-grid")
        self.assertEqual(np.asarray(a["format_version"]).shape, ())
        self.assertIn(np.asarray(a["format_version"]).dtype.kind, "iu")
        self.assertEqual(int(a["format_version"]), 2)
        self.assertEqual(np.asarray(a["z_ref"]).dtype, np.float64)
        self.assertEqual(float(a["z_ref"]), Z_REF)
        self.assertTextAttribute(self.f, "description", "built by the round-trip test")
        self.assertTextAttribute(self.f, "source", "invented tracks")
        if "created_by" in a:
            self.assertTextAttribute(self.f, "created_by")
        for old in ("phase_keys", "remnant_keys"):
            self.assertNotIn(old, self.f, "a format-1 table in a format-2 file")

    def code_table(self, group):
        """[(code, key, name)] of phases/ or remnants/ as h5py reads it."""
        n = self.f[group + "/code"].shape[0]
        codes = self.assertDataset(group + "/code", (n,), "<i4")
        return list(zip(codes.tolist(), self.text_list(group + "/key", n), self.text_list(group + "/name", n)))

    def test_code_tables_are_the_librarys(self):
        """phases/ and remnants/ list exactly the library's codes, keys and names, in its order."""
        self.assertEqual(self.code_table("phases"),
                         library_list(LIB.hrt_phase_code, LIB.hrt_phase_key, LIB.hrt_phase_name))
        self.assertEqual(self.code_table("remnants"),
                         library_list(LIB.hrt_remnant_code, LIB.hrt_remnant_key, LIB.hrt_remnant_name))
        for code, key, _ in self.code_table("phases"):  # and back: key -> code
            self.assertEqual(LIB.hrt_phase_from_key(key.encode()), code, key)
        for code, key, _ in self.code_table("remnants"):
            self.assertEqual(LIB.hrt_remnant_from_key(key.encode()), code, key)

    def test_units_are_format_md_astropy_strings(self):
        """Every float dataset carries units: FORMAT.md's string for its name, parsed by astropy 5.2."""
        seen = []

        def visit(name, obj):
            if isinstance(obj, h5py.Dataset) and obj.dtype.kind == "f":
                seen.append(name)
                base = name.rsplit("/", 1)[-1]
                self.assertIn(base, self.units, name + " is not a name of FORMAT.md's vocabulary")
                want = self.units[base]
                self.assertIsNotNone(want, name + ": FORMAT.md gives it no unit")
                got = self.assertTextAttribute(obj, "units", want)
                unit = astropy.units.Unit(got)  # reference: astropy 5.2 unit parser
                self.assertEqual(unit, astropy.units.Unit(want), name)
                if base.startswith("log_"):  # dex of the unit of the linear quantity (FORMAT.md)
                    self.assertIsInstance(unit, astropy.units.DexUnit, name)
                    self.assertEqual(unit.physical_unit, astropy.units.Unit(self.units[base[4:]]), name)
            elif isinstance(obj, h5py.Dataset) and obj.dtype.kind in "iu":
                self.assertNotIn("units", obj.attrs, name + ": codes and counts have no unit")
        self.f.visititems(visit)
        self.assertEqual(len(seen), 10 * len(self.given), seen)

    def test_routes(self):
        self.assertEqual(self.text_list("routes/names", len(ROUTES)), [r["name"] for r in ROUTES])
        for spec in ROUTES:
            base = "routes/" + spec["name"]
            K = len(spec["keypoint_names"])
            self.assertEqual(self.text_list(base + "/keypoint_names", K), spec["keypoint_names"])
            kp = self.assertDataset(base + "/keypoint_eep", (K,), "<i4")
            seg = self.assertDataset(base + "/segment_samples", (K - 1,), "<i4")
            self.assertEqual(kp.tolist(), [0] + np.cumsum(spec["segment_samples"]).tolist())
            self.assertEqual(seg.tolist(), spec["segment_samples"])

    def group(self, z):
        names = sorted(self.f["metallicity"].keys(), key=int)
        self.assertEqual(names, [str(i) for i in range(len(names))])
        zs = [float(self.f["metallicity"][n].attrs["z"]) for n in names]
        self.assertEqual(zs, sorted(self.given))
        return "metallicity/%d" % zs.index(z)

    def test_metallicity_groups(self):
        n_eep_max = max(ROUTE_N_EEP)
        for z, tracks in self.given.items():
            with self.subTest(z=z):
                g = self.group(z)
                self.assertEqual(np.asarray(self.f[g].attrs["z"]).dtype, np.float64)
                self.assertNotIn("Z", self.f[g].attrs)
                if z == 0.004:
                    tracks = tracks + [self.raw[0]]
                tracks = sorted(tracks, key=lambda t: t["initial_mass_msun"])
                n = len(tracks)
                u = self.units
                m = self.assertDataset(g + "/initial_mass_msun", (n,), "<f8", u["initial_mass_msun"])
                self.assertEqual(m.tolist(), [t["initial_mass_msun"] for t in tracks])
                route = self.assertDataset(g + "/route", (n,), "<i4")
                self.assertEqual(route.tolist(), [t["route"] for t in tracks])
                n_eep = self.assertDataset(g + "/n_eep", (n,), "<i4")
                rem = self.assertDataset(g + "/remnant", (n,), "<i4")
                self.assertEqual([LIB.hrt_remnant_key(int(c)).decode() for c in rem], [t["remnant"] for t in tracks])
                rm = self.assertDataset(g + "/remnant_mass_msun", (n,), "<f8", u["remnant_mass_msun"])
                np.testing.assert_array_equal(rm, [t["remnant_mass_msun"] for t in tracks])
                bm = self.assertDataset(g + "/route_boundary_mass_msun", (len(ROUTES) - 1,), "<f8",
                                        u["route_boundary_mass_msun"])
                if z == 0.014:
                    self.assertEqual(bm.tolist(), self.boundary.tolist())
                else:  # hrtrail.h: geometric mean of the last track of one route and the first of the next
                    self.assertAlmostEqual(bm[0], np.sqrt(0.9 * 1.2), delta=1e-15)
                cols = {}
                for name in EEP_COLUMNS + ("log_r_rsun",):
                    cols[name] = self.assertDataset(g + "/" + name, (n, n_eep_max), "<f8", u[name])
                phase = self.assertDataset(g + "/phase", (n, n_eep_max), "<i4")
                for i, t in enumerate(tracks):
                    if t is self.raw[0]:
                        continue  # test_raw_track_resampling
                    k = len(t["log_age_yr"])
                    self.assertEqual(n_eep[i], k)
                    for name in EEP_COLUMNS:
                        np.testing.assert_array_equal(cols[name][i, :k], t[name], err_msg=name)
                        self.assertTrue(np.all(np.isnan(cols[name][i, k:])), name + " padding is not NaN")
                    np.testing.assert_allclose(  # reference: Stefan-Boltzmann, Teff_sun 5772 K (IAU 2015 B3)
                        cols["log_r_rsun"][i, :k], W.log_r_stefan_boltzmann(t["log_l_lsun"], t["log_teff_k"]),
                        rtol=0, atol=1e-12)
                    # hrtrail's codes (FORMAT.md "Phase and remnant codes"), 0 beyond n_eep
                    self.assertEqual(phase[i, :k].tolist(), [HRT_PHASE[p] for p in t["phase"]])
                    self.assertEqual([LIB.hrt_phase_key(int(c)).decode() for c in phase[i, :k]], t["phase"])
                    self.assertTrue(np.all(phase[i, k:] == 0), "phase padding is not 0")

    def test_raw_track_resampling(self):
        raw, ks = self.raw
        g = self.group(0.004)
        i = self.f[g + "/initial_mass_msun"][()].tolist().index(raw["initial_mass_msun"])
        want = resample_reference(raw, ks, ROUTES[1]["segment_samples"])
        n = int(self.f[g + "/n_eep"][i])
        self.assertEqual(n, ROUTE_N_EEP[1])
        for name in EEP_COLUMNS:
            got = self.f[g + "/" + name][i, :n]
            np.testing.assert_allclose(got, want[name], rtol=0, atol=1e-12,
                                       err_msg=name + " (reference: FORMAT.md resampling in NumPy)")
        self.assertEqual(self.f[g + "/phase"][i, :n].tolist(), [HRT_PHASE[p] for p in want["phase"]])

    def test_library_reopens_its_own_file(self):
        g = H.open_grid(LIB, self.path, "linear")
        try:
            self.assertEqual(LIB.hrt_grid_n_z(g), 2)
            self.assertEqual(LIB.hrt_grid_route_boundary(g, 1, 0), self.boundary[0])
            self.assertEqual(LIB.hrt_grid_attribute(g, b"source"), b"invented tracks")
        finally:
            LIB.hrt_grid_close(g)


# ---------------------------------------------------------------------------
# (c) format version 1 and hrt_grid_upgrade
# ---------------------------------------------------------------------------
class Upgrade(unittest.TestCase):
    """(c) format version 1: refused on open, converted by hrt_grid_upgrade to the format-2 grid."""

    N_STARS = 4000

    @classmethod
    def setUpClass(cls):
        cls.dir = os.path.join(TMP.name, "upgrade")
        os.mkdir(cls.dir)
        groups = h5py_spec()
        attrs = {"description": "upgrade test grid", "source": "invented"}
        cls.v1 = os.path.join(cls.dir, "v1.h5")
        cls.v2 = os.path.join(cls.dir, "v2.h5")
        cls.up = os.path.join(cls.dir, "upgraded.h5")
        W.write_grid_v1(cls.v1, Z_REF, ROUTES, groups, attrs=attrs)
        W.write_grid(cls.v2, Z_REF, ROUTES, groups, attrs=attrs)
        e = H.HrtError()
        cls.upgrade_rc = LIB.hrt_grid_upgrade(cls.v1.encode(), cls.up.encode(), ctypes.byref(e))
        cls.upgrade_msg = e.message.decode(errors="replace")

    def setUp(self):
        self.assertEqual(self.upgrade_rc, H.HRT_OK, self.upgrade_msg)

    def test_format_1_is_refused_naming_the_upgrade(self):
        rc, msg = open_code(self.v1)
        self.assertEqual(rc, HRT_E_VERSION, msg)
        self.assertIn("hrtrail grid upgrade", msg)
        self.assertIn("hrt_grid_upgrade", msg)
        rc, msg = open_code(self.v2)
        self.assertEqual(rc, H.HRT_OK, msg)

    def test_upgraded_file_holds_the_format_2_data(self):
        with h5py.File(self.v2, "r") as want, h5py.File(self.up, "r") as got:
            self.assertEqual(int(got.attrs["format_version"]), 2)
            self.assertIn("converted_from", got.attrs)
            for name in ("description", "source"):
                self.assertEqual(got.attrs[name], want.attrs[name])
            for table in ("phases", "remnants"):
                for ds in ("code", "key", "name"):
                    self.assertEqual(list(got[table + "/" + ds][()]), list(want[table + "/" + ds][()]),
                                     table + "/" + ds)
            for iz in ("0", "1"):
                g, w = got["metallicity/" + iz], want["metallicity/" + iz]
                self.assertEqual(float(g.attrs["z"]), float(w.attrs["z"]))
                for name in w:
                    a, b = g[name][()], w[name][()]
                    self.assertEqual(a.dtype, b.dtype, name)
                    # bit for bit, NaN padding included
                    self.assertEqual(a.tobytes(), b.tobytes(), "metallicity/%s/%s" % (iz, name))
                    self.assertEqual(g[name].attrs.get("units"), w[name].attrs.get("units"), name)

    def test_same_answers_bit_for_bit(self):
        rng = np.random.default_rng(20260102)
        n = self.N_STARS
        # beyond the grid on every side: masses 0.6-4.5 Msun, Z 0.006-0.014, ages ~1e7-4e10 yr
        m = 10.0 ** rng.uniform(np.log10(0.55), np.log10(5.0), n)
        z = 10.0 ** rng.uniform(np.log10(0.0055), np.log10(0.015), n)
        a = 10.0 ** rng.uniform(6.0, 11.5, n)
        out = {}
        for label, path in (("format 2", self.v2), ("upgraded", self.up)):
            g = H.open_grid(LIB, path, "steffen")
            try:
                out[label] = H.evaluate(LIB, g, m, a, z)
            finally:
                LIB.hrt_grid_close(g)
        (rc2, msg2, s2), (rcu, msgu, su) = out["format 2"], out["upgraded"]
        self.assertEqual((rcu, msgu), (rc2, msg2))
        # every byte of every hrt_state (NaN payloads and status included)
        bad = np.flatnonzero((s2.view(np.uint8).reshape(n, -1) != su.view(np.uint8).reshape(n, -1)).any(axis=1))
        self.assertEqual(bad.size, 0, "%d of %d states differ, first star %d"
                         % (bad.size, n, bad[0] if bad.size else -1))
        # the sample reaches every kind of answer
        ok = s2["status"] == H.HRT_OK
        self.assertGreater(np.count_nonzero(ok), n // 2)
        self.assertGreater(np.count_nonzero(~ok), 50)
        self.assertGreater(np.count_nonzero(s2["flags"][ok] & HRT_FLAG_REMNANT), 50)
        self.assertGreater(np.count_nonzero(s2["flags"][ok] & HRT_FLAG_NOT_MODELLED), 50)
        self.assertEqual(set(s2["route"][ok]), {0, 1})
        self.assertGreaterEqual(len(set(s2["phase"][ok])), 5)

    def test_upgrade_errors(self):
        e = H.HrtError()
        rc = LIB.hrt_grid_upgrade(os.path.join(self.dir, "none.h5").encode(),
                                  os.path.join(self.dir, "x.h5").encode(), ctypes.byref(e))
        self.assertEqual(rc, HRT_E_IO, e.message)
        bad = os.path.join(self.dir, "bad_v1.h5")
        W.write_grid_v1(bad, Z_REF, ROUTES, h5py_spec())
        with h5py.File(bad, "r+") as f:
            f["phase_keys"][2] = "no_such_phase"
        rc = LIB.hrt_grid_upgrade(bad.encode(), os.path.join(self.dir, "x.h5").encode(), ctypes.byref(e))
        self.assertEqual(rc, HRT_E_FORMAT, e.message)
        self.assertIn("phase_keys", e.message.decode())
        self.assertFalse(os.path.exists(os.path.join(self.dir, "x.h5")))

if __name__ == "__main__":
    unittest.main(verbosity=2)
