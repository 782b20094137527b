#!/usr/bin/python3
"""Grid files across the h5py / hrtrail boundary, checked against tracks/FORMAT.md.

(a) Grids written with h5py alone (write_grid_h5py.py) open in the library, which
    gives back at each track's mass, metallicity and EEP exactly what was written,
    whatever string kind (variable- or fixed-length) and integer width the file uses;
    files that break the rules of FORMAT.md are refused with the documented code.
(b) A grid written by the library (hrt_builder_* through ctypes) reads back in h5py
    (reference: h5py 3.7 on HDF5 1.10) with every attribute and dataset FORMAT.md
    lists, with the documented types and shapes and the values given to the builder;
    a raw track is resampled onto EEPs as FORMAT.md specifies (compared with an
    independent NumPy implementation of that specification).

The library is the shared object named by HRTRAIL_LIB.
"""
import ctypes
import os
import sys
import tempfile
import unittest

import h5py
import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import hrtrail_ctypes as H  # noqa: E402
import write_grid_h5py as W  # noqa: E402

HRT_E_FORMAT, HRT_E_VERSION, HRT_E_IO, HRT_E_INVALID = 4, 5, 3, 11
TOL_LOG = 1e-12     # absolute, dex: "equal to what was written" up to the last bits of log10/pow
TOL_REL = 1e-12     # relative, for masses and ages in yr
Z_REF = 0.014
ROUTES = [{"name": "low_mass", "keypoint_names": ["zams", "tams", "rgb_tip", "wd_start"],
           "segment_samples": [5, 4, 6]},
          {"name": "giant", "keypoint_names": ["zams", "tams", "rgb_base", "he_ignition", "end"],
           "segment_samples": [8, 3, 5, 7]}]
ROUTE_N_EEP = [sum(r["segment_samples"]) + 1 for r in ROUTES]
ROUTE_PHASES = [["ms", "subgiant", "rgb"], ["ms", "subgiant", "rgb", "cheb"]]
HRT_PHASE = {k: i + 1 for i, k in enumerate(W.PHASE_KEYS)}  # include/hrtrail.h enum order
HRT_REMNANT = {k: i for i, k in enumerate(W.REMNANT_KEYS)}


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
    return {"initial_mass": mass, "route": route,
            "remnant": "none" if truncated else ("he_wd" if mass < 0.9 else "co_wd"),
            "remnant_mass": np.nan if truncated else 0.4 + 0.1 * mass,
            "log_age": log_age, "log_L": 4.0 * x + 1.5 * s ** 3 + rng.normal(0, 0.01, n) - 0.1 * fe,
            "log_Teff": 3.7 + 0.2 * x - 0.1 * s ** 2 + rng.normal(0, 0.002, n),
            "log_R": 0.1 * x + s + rng.normal(0, 0.001, n),  # kept, not derived: any finite value
            "mass": mass * (1.0 - 0.1 * s ** 4), "he_core_mass": 0.12 * mass * s,
            "co_core_mass": 0.03 * mass * s ** 2, "phase": phase}


LOW_MASSES = [0.6, 0.7, 0.8, 0.9]
GIANT_MASSES = [1.2, 1.6, 2.1, 3.0, 4.5]


def h5py_spec():
    groups = []
    for iz, z in enumerate([0.006, 0.014]):
        tracks = [eep_track(m, 0, z, seed=iz * 100 + k) for k, m in enumerate(LOW_MASSES)]
        tracks += [eep_track(m, 1, z, seed=iz * 100 + 10 + k,
                             n_eep=17 if (iz, m) == (1, 4.5) else None)  # one truncated track
                   for k, m in enumerate(GIANT_MASSES)]
        groups.append({"Z": z, "tracks": tracks, "route_boundary_mass": [1.0 + 0.05 * iz]})
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
                z = grp["Z"]
                self.assertEqual(LIB.hrt_grid_z(g, iz), z)
                self.assertEqual(LIB.hrt_grid_route_boundary(g, iz, 0), grp["route_boundary_mass"][0])
                tracks = sorted(grp["tracks"], key=lambda t: t["initial_mass"])
                self.assertEqual(LIB.hrt_grid_n_masses(g, iz), len(tracks))
                for im, t in enumerate(tracks):
                    self.assertEqual(LIB.hrt_grid_mass(g, iz, im), t["initial_mass"])
                    self.assertEqual(LIB.hrt_grid_track_route(g, iz, im), t["route"])
                    self.assertEqual(LIB.hrt_grid_track_n_eep(g, iz, im), len(t["log_age"]))
                    self.check_track_values(g, z, t)
        finally:
            LIB.hrt_grid_close(g)

    def check_track_values(self, g, z, t):
        where = "Z=%g M=%g" % (z, t["initial_mass"])
        star, e = ctypes.c_void_p(), H.HrtError()
        rc = LIB.hrt_star_new(g, t["initial_mass"], z, ctypes.byref(star), ctypes.byref(e))
        self.assertEqual(rc, H.HRT_OK, "%s: %s" % (where, e.message.decode()))
        try:
            n = len(t["log_age"])
            self.assertEqual(LIB.hrt_star_n_eep(star), n, where)
            st = H.HrtState()
            for j in range(n):
                self.assertEqual(LIB.hrt_star_eep_state(star, j, ctypes.byref(st)), H.HRT_OK)
                w = "%s EEP %d" % (where, j)
                self.assertAlmostEqual(st.log_l, t["log_L"][j], delta=TOL_LOG, msg=w)
                self.assertAlmostEqual(st.log_teff_k, t["log_Teff"][j], delta=TOL_LOG, msg=w)
                for field, key in (("mass_msun", "mass"), ("he_core_msun", "he_core_mass"),
                                   ("co_core_msun", "co_core_mass")):
                    self.assertAlmostEqual(getattr(st, field), t[key][j],
                                           delta=TOL_REL * abs(t[key][j]) + 1e-300, msg=w + " " + key)
                self.assertAlmostEqual(st.age_yr / 10.0 ** t["log_age"][j], 1.0, delta=TOL_REL, msg=w)
                self.assertEqual(LIB.hrt_phase_key(st.phase).decode(), t["phase"][j], w)
                self.assertEqual(st.route, t["route"], w)
        finally:
            LIB.hrt_star_free(star)
        # the batch path at the ages of the interior EEPs gives the same values
        mid = np.arange(1, n - 1)
        rc, msg, sts = H.evaluate(LIB, g, np.full(mid.size, t["initial_mass"]),
                                  10.0 ** t["log_age"][mid], z)
        self.assertEqual(rc, H.HRT_OK, "%s: %s" % (where, msg))
        self.assertLess(np.max(np.abs(sts["log_l"] - t["log_L"][mid])), 1e-10, where)
        self.assertLess(np.max(np.abs(sts["eep"] - mid)), 1e-9, where)

    def test_vlen_utf8_strings(self):
        self.check_grid(self.write("vlen.h5"))

    def test_fixed_ascii_strings(self):
        self.check_grid(self.write("fixed.h5", strings="fixed"))

    def test_other_integer_and_float_types(self):
        """FORMAT.md: any integer or float type HDF5 can convert is accepted."""
        path = self.write("types.h5")
        with h5py.File(path, "r+") as f:
            for iz in ("0", "1"):
                grp = f["metallicity"][iz]
                for name, dtype in (("route", "<i8"), ("n_eep", ">i2"), ("remnant", "u1"), ("phase", "<i2")):
                    data = grp[name][()].astype(dtype)
                    del grp[name]
                    grp.create_dataset(name, data=data)
                data = grp["initial_mass"][()].astype(">f8")  # big-endian float64
                del grp["initial_mass"]
                grp.create_dataset("initial_mass", data=data)
            seg = f["routes/giant/segment_samples"][()].astype("<i8")
            del f["routes/giant/segment_samples"]
            f["routes/giant"].create_dataset("segment_samples", data=seg)
            f.attrs["format_version"] = np.int64(1)
            f.attrs["z_ref"] = np.float32(Z_REF)  # read as float64(float32(0.014))
        rc, msg = open_code(path)
        self.assertEqual(rc, H.HRT_OK, msg)

    def test_extra_objects_are_ignored(self):
        path = self.write("extra.h5")
        with h5py.File(path, "r+") as f:
            f.attrs["provenance"] = "extra attribute"
            f["metallicity/0"].create_dataset("my_column", data=np.zeros((9, 24)))
            f.create_group("notes").attrs["text"] = "extra group"
        self.check_grid(path)

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

        cases = [  # (what, edit, expected code, word the message must contain)
            ("newer format_version", set_attr("/", "format_version", np.int32(2)), HRT_E_VERSION, "format_version"),
            ("wrong format", set_attr("/", "format", "other-format"), HRT_E_FORMAT, "format"),
            ("z_ref <= 0", set_attr("/", "z_ref", 0.0), HRT_E_FORMAT, "z_ref"),
            ("unknown phase key", set_value("phase_keys", 3, "no_such_phase"), HRT_E_FORMAT, "phase_keys"),
            ("NaN inside the valid EEPs", set_value("metallicity/1/log_L", (2, 5), np.nan), HRT_E_FORMAT, "log_L"),
            ("infinity inside the valid EEPs", set_value("metallicity/0/mass", (6, 3), np.inf), HRT_E_FORMAT, "mass"),
            ("age not increasing", set_value("metallicity/0/log_age", (1, 4), 0.0), HRT_E_FORMAT, "log_age"),
            ("masses not increasing", set_value("metallicity/0/initial_mass", 3, 0.65), HRT_E_FORMAT, "initial_mass"),
            ("route decreasing", set_value("metallicity/0/route", 5, 0), HRT_E_FORMAT, "route"),
            ("route out of range", set_value("metallicity/0/route", 8, 2), HRT_E_FORMAT, "route"),
            ("n_eep below 2", set_value("metallicity/0/n_eep", 0, 1), HRT_E_FORMAT, "n_eep"),
            ("n_eep beyond its route", set_value("metallicity/0/n_eep", 0, ROUTE_N_EEP[0] + 1), HRT_E_FORMAT, "n_eep"),
            ("phase code out of range", set_value("metallicity/0/phase", (0, 0), 99), HRT_E_FORMAT, "phase"),
            ("remnant code out of range", set_value("metallicity/0/remnant", 0, 99), HRT_E_FORMAT, "remnant"),
            ("remnant mass NaN for a named remnant", set_value("metallicity/0/remnant_mass", 0, np.nan),
             HRT_E_FORMAT, "remnant_mass"),
            ("boundary inside a route's tracks", set_value("metallicity/0/route_boundary_mass", 0, 0.75),
             HRT_E_FORMAT, "route_boundary_mass"),
            ("missing dataset", delete("metallicity/1/co_core_mass"), HRT_E_FORMAT, "co_core_mass"),
            ("Z not increasing", set_attr("metallicity/1", "Z", 0.006), HRT_E_FORMAT, "Z"),
            ("segment counts disagree", set_value("routes/giant/segment_samples", 0, 7), HRT_E_FORMAT, "segment_samples"),
        ]
        for k, (what, edit, code, word) in enumerate(cases):
            with self.subTest(what):
                rc, msg = self.broken("bad%d.h5" % k, edit)
                self.assertEqual(rc, code, "%s: got %d (%s)" % (what, rc, msg))
                self.assertIn(word, msg, "%s: message does not name the culprit: %r" % (what, msg))

    def test_values_beyond_n_eep_are_not_read(self):
        path = self.write("padding.h5")
        with h5py.File(path, "r+") as f:  # garbage past the valid EEPs of the low-mass tracks
            a = f["metallicity/0/log_L"][()]
            a[:4, ROUTE_N_EEP[0]:] = np.inf
            f["metallicity/0/log_L"][...] = a
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
    arrays = {k: np.ascontiguousarray(t[k], dtype=np.float64)
              for k in ("log_age", "log_L", "log_Teff", "mass", "he_core_mass", "co_core_mass")}
    phase = (ctypes.c_int * len(t["phase"]))(*[HRT_PHASE[p] for p in t["phase"]])
    keep += list(arrays.values()) + [phase]
    td = H.HrtTrackData()
    td.initial_mass_msun, td.route = t["initial_mass"], t["route"]
    td.remnant, td.remnant_mass_msun = HRT_REMNANT[t["remnant"]], t["remnant_mass"]
    td.n = len(t["log_age"])
    td.log_age_yr, td.log_l, td.log_teff_k = (H.dptr(arrays[k]) for k in ("log_age", "log_L", "log_Teff"))
    td.log_r = None  # derived by the builder from L and Teff
    td.mass_msun, td.he_core_msun, td.co_core_msun = (
        H.dptr(arrays[k]) for k in ("mass", "he_core_mass", "co_core_mass"))
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
    return ({"initial_mass": mass, "route": 1, "remnant": "co_wd", "remnant_mass": 0.7,
             "log_age": np.log10(t_yr), "log_L": 1.5 + 2.0 * s ** 2 + 0.3 * np.sin(9 * s),
             "log_Teff": 3.95 - 0.4 * s + 0.05 * np.cos(13 * s), "mass": mass * (1 - 0.2 * s ** 3),
             "he_core_mass": 0.4 * s, "co_core_mass": 0.1 * s ** 2, "phase": phase}, keypoint_sample)


def resample_reference(t, keypoint_sample, segment_samples):
    """tracks/FORMAT.md "EEP resampling", implemented independently with NumPy."""
    t_yr = 10.0 ** t["log_age"]
    cols = {k: np.asarray(t[k], float) for k in ("log_age", "log_L", "log_Teff", "mass",
                                                 "he_core_mass", "co_core_mass")}
    out = {k: [] for k in cols}
    out["phase"] = []
    for k, n_k in enumerate(segment_samples[:len(keypoint_sample) - 1]):
        a, b = keypoint_sample[k], keypoint_sample[k + 1]
        f = (t_yr[a:b + 1] - t_yr[a]) / (t_yr[b] - t_yr[a])
        ds = np.sqrt((2.0 * np.diff(cols["log_Teff"][a:b + 1])) ** 2
                     + (1.0 * np.diff(cols["log_L"][a:b + 1])) ** 2 + (1.0 * np.diff(f)) ** 2)
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
                    assert rc == H.HRT_OK, (z, t["initial_mass"], e.message)
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
        self.assertEqual(int(a["format_version"]), 1)
        self.assertEqual(np.asarray(a["z_ref"]).dtype, np.float64)
        self.assertEqual(float(a["z_ref"]), Z_REF)
        self.assertTextAttribute(self.f, "description", "built by the round-trip test")
        self.assertTextAttribute(self.f, "source", "invented tracks")
        if "created_by" in a:
            self.assertTextAttribute(self.f, "created_by")
        phase_keys = self.text_list("phase_keys")
        self.assertTrue(set(phase_keys) <= set(W.PHASE_KEYS), phase_keys)
        self.assertEqual(len(set(phase_keys)), len(phase_keys))
        remnant_keys = self.text_list("remnant_keys")
        self.assertTrue(set(remnant_keys) <= set(W.REMNANT_KEYS), remnant_keys)
        for key in ("ms", "subgiant", "rgb", "cheb"):
            self.assertIn(key, phase_keys)
        for key in ("none", "he_wd", "co_wd"):
            self.assertIn(key, remnant_keys)

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
        zs = [float(self.f["metallicity"][n].attrs["Z"]) for n in names]
        self.assertEqual(zs, sorted(self.given))
        return "metallicity/%d" % zs.index(z)

    def test_metallicity_groups(self):
        n_eep_max = max(ROUTE_N_EEP)
        phase_keys = [self.assertText(v) for v in self.f["phase_keys"][()]]
        remnant_keys = [self.assertText(v) for v in self.f["remnant_keys"][()]]
        for z, tracks in self.given.items():
            with self.subTest(z=z):
                g = self.group(z)
                self.assertEqual(np.asarray(self.f[g].attrs["Z"]).dtype, np.float64)
                if z == 0.004:
                    tracks = tracks + [self.raw[0]]
                tracks = sorted(tracks, key=lambda t: t["initial_mass"])
                n = len(tracks)
                m = self.assertDataset(g + "/initial_mass", (n,), "<f8", "Msun")
                self.assertEqual(m.tolist(), [t["initial_mass"] for t in tracks])
                route = self.assertDataset(g + "/route", (n,), "<i4")
                self.assertEqual(route.tolist(), [t["route"] for t in tracks])
                n_eep = self.assertDataset(g + "/n_eep", (n,), "<i4")
                rem = self.assertDataset(g + "/remnant", (n,), "<i4")
                self.assertEqual([remnant_keys[c] for c in rem], [t["remnant"] for t in tracks])
                rm = self.assertDataset(g + "/remnant_mass", (n,), "<f8", "Msun")
                np.testing.assert_array_equal(rm, [t["remnant_mass"] for t in tracks])
                bm = self.assertDataset(g + "/route_boundary_mass", (len(ROUTES) - 1,), "<f8", "Msun")
                if z == 0.014:
                    self.assertEqual(bm.tolist(), self.boundary.tolist())
                else:  # hrtrail.h: geometric mean of the last track of one route and the first of the next
                    self.assertAlmostEqual(bm[0], np.sqrt(0.9 * 1.2), delta=1e-15)
                cols = {}
                for name, units in W.QUANTITIES:
                    cols[name] = self.assertDataset(g + "/" + name, (n, n_eep_max), "<f8", units)
                phase = self.assertDataset(g + "/phase", (n, n_eep_max), "<i4")
                for i, t in enumerate(tracks):
                    if t is self.raw[0]:
                        continue  # test_raw_track_resampling
                    k = len(t["log_age"])
                    self.assertEqual(n_eep[i], k)
                    for name in ("log_age", "log_L", "log_Teff", "mass", "he_core_mass", "co_core_mass"):
                        np.testing.assert_array_equal(cols[name][i, :k], t[name], err_msg=name)
                        self.assertTrue(np.all(np.isnan(cols[name][i, k:])), name + " padding is not NaN")
                    np.testing.assert_allclose(  # reference: Stefan-Boltzmann, Teff_sun 5772 K (IAU 2015 B3)
                        cols["log_R"][i, :k], W.log_r_stefan_boltzmann(t["log_L"], t["log_Teff"]),
                        rtol=0, atol=1e-12)
                    self.assertEqual([phase_keys[c] for c in phase[i, :k]], t["phase"])
                    self.assertTrue(np.all(phase[i, k:] == -1), "phase padding is not -1")

    def test_raw_track_resampling(self):
        raw, ks = self.raw
        g = self.group(0.004)
        i = self.f[g + "/initial_mass"][()].tolist().index(raw["initial_mass"])
        want = resample_reference(raw, ks, ROUTES[1]["segment_samples"])
        n = int(self.f[g + "/n_eep"][i])
        self.assertEqual(n, ROUTE_N_EEP[1])
        for name in ("log_age", "log_L", "log_Teff", "mass", "he_core_mass", "co_core_mass"):
            got = self.f[g + "/" + name][i, :n]
            np.testing.assert_allclose(got, want[name], rtol=0, atol=1e-12,
                                       err_msg=name + " (reference: FORMAT.md resampling in NumPy)")
        phase_keys = [self.assertText(v) for v in self.f["phase_keys"][()]]
        self.assertEqual([phase_keys[c] for c in self.f[g + "/phase"][i, :n]], want["phase"])

    def test_library_reopens_its_own_file(self):
        g = H.open_grid(LIB, self.path, "linear")
        try:
            self.assertEqual(LIB.hrt_grid_n_z(g), 2)
            self.assertEqual(LIB.hrt_grid_route_boundary(g, 1, 0), self.boundary[0])
            self.assertEqual(LIB.hrt_grid_attribute(g, b"source"), b"invented tracks")
        finally:
            LIB.hrt_grid_close(g)


if __name__ == "__main__":
    unittest.main(verbosity=2)
