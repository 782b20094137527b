#!/usr/bin/python3
"""The default grid's file as h5py sees it, and compressed against uncompressed storage.

(a) Self-description (tracks/FORMAT.md, "Storage" and "Dimensions"), read with h5py 3.7
    on HDF5 1.10 (Debian's python3-h5py): every dataset has a non-empty `long_name`;
    every axis of every dataset that is not itself a dimension scale has one HDF5
    dimension scale attached, of the name FORMAT.md gives; the scales hold what
    FORMAT.md says (indices 0..n-1; in phases/ and remnants/ the codes); the per-track
    and per-EEP datasets name `initial_mass_msun` as their coordinate; every `units`
    attribute parses with astropy 5.2 (astropy.units.Unit), `dex(X)` as the log10 of a
    quantity in X; numeric datasets are checksummed (Fletcher-32) in chunks of at most
    1 MiB, the tracks with no other filter, the error fields (accuracy/) shuffled and
    deflated.
(b) The same grid written twice through the library's builder (hrt_builder_* through
    ctypes), deflated (the default) and uncompressed (hrt_builder_set_compression 0):
    h5py reads the same arrays from both, and hrt_eval gives bit-identical states on
    20,000 random stars (random mass, metallicity and age) from both and from the
    default grid itself.  The sizes of the three files are printed.

Environment: HRTRAIL_LIB (the shared library), HRTRAIL_GRID (the default grid).
"""
import ctypes
import os
import sys
import tempfile
import unittest

import astropy.units
import h5py
import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import hrtrail_ctypes as H  # noqa: E402

GRID = os.environ["HRTRAIL_GRID"]
LIB = H.load()
MAX_CHUNK_BYTES = 1 << 20  # FORMAT.md, "Storage"

# FORMAT.md, "Dimensions": the scale of each dimension, by dataset.
PER_TRACK = ["initial_mass_msun", "route", "n_eep", "remnant", "remnant_mass_msun"]
PER_EEP = ["log_age_yr", "log_l_lsun", "log_teff_k", "log_r_rsun", "mass_msun", "he_core_mass_msun",
           "co_core_mass_msun", "phase"]


def expected_dims(path):
    parts = path.strip("/").split("/")
    name = parts[-1]
    if parts[0] == "metallicity":
        if name in PER_TRACK:
            return ("track",)
        if name in PER_EEP or (len(parts) == 4 and parts[2] == "extra"):  # FORMAT.md, "Extra quantities"
            return ("track", "eep")
        if name == "route_boundary_mass_msun":
            return ("route_boundary",)
    if parts[0] in ("phases", "remnants") and name in ("key", "name"):
        return ("code",)
    if parts == ["routes", "names"]:
        return ("route",)
    if parts[0] == "accuracy":  # the optional stored error fields (FORMAT.md, "accuracy/", "accuracy/across_z/")
        return ("interp_code",) if name == "interp_names" else ("block",)
    if parts[0] == "routes" and name in ("keypoint_names", "keypoint_eep"):
        return ("keypoint",)
    if parts[0] == "routes" and name == "segment_samples":
        return ("segment",)
    return None


def datasets(f):
    out = []
    f.visititems(lambda name, obj: out.append(name) if isinstance(obj, h5py.Dataset) else None)
    return out


class SelfDescribing(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.f = h5py.File(GRID, "r")

    @classmethod
    def tearDownClass(cls):
        cls.f.close()

    def test_long_names(self):
        for name in datasets(self.f):
            ln = self.f[name].attrs.get("long_name")
            self.assertIsInstance(ln, str, name)
            self.assertTrue(ln.strip(), name)

    def test_dimension_scales(self):
        scales = 0
        for name in datasets(self.f):
            ds = self.f[name]
            if h5py.h5ds.is_scale(ds.id):
                scales += 1
                label = ds.attrs["NAME"]
                label = label.decode() if isinstance(label, bytes) else str(label)
                self.assertEqual(label, name.split("/")[-1], name)
                values = ds[()].tolist()
                if name == "phases/code":  # the library's own codes, in its order
                    self.assertEqual(values, [LIB.hrt_phase_code(i) for i in range(len(values))])
                elif name == "remnants/code":
                    self.assertEqual(values, [LIB.hrt_remnant_code(i) for i in range(len(values))])
                else:
                    self.assertEqual(values, list(range(ds.shape[0])), name)
                continue
            want = expected_dims(name)
            self.assertIsNotNone(want, "%s: a dataset FORMAT.md does not list" % name)
            got = []
            for k in range(ds.ndim):
                self.assertEqual(len(ds.dims[k]), 1, "%s axis %d: %d scales" % (name, k, len(ds.dims[k])))
                scale = ds.dims[k][0]
                self.assertEqual(scale.shape[0], ds.shape[k], name)
                got.append(scale.name.split("/")[-1])
            self.assertEqual(tuple(got), want, name)
        n_groups = len(self.f["metallicity"])
        n_routes = len(self.f["routes/names"])
        # track, eep, route_boundary per group; keypoint, segment per route; route; 2 code tables;
        # block and interp_code of the stored error field, and of the one across metallicity
        self.assertEqual(scales, 3 * n_groups + 2 * n_routes + 1 + 2 + 2 * ("accuracy" in self.f)
                         + 2 * ("accuracy/across_z" in self.f))

    def test_coordinates(self):
        for g in self.f["metallicity"].values():
            for name in PER_TRACK[1:] + PER_EEP:
                self.assertEqual(g[name].attrs["coordinates"], "initial_mass_msun", g[name].name)
            self.assertNotIn("coordinates", g["initial_mass_msun"].attrs)

    def test_units_parse_with_astropy(self):
        seen = {}
        for name in datasets(self.f):
            u = self.f[name].attrs.get("units")
            if u is None:
                continue
            unit = astropy.units.Unit(u)  # raises on a string astropy cannot parse
            seen[u] = unit
            if u.startswith("dex("):
                self.assertIsInstance(unit, astropy.units.function.logarithmic.DexUnit, u)
                self.assertEqual(unit.physical_unit, astropy.units.Unit(u[4:-1]), u)
        # the units of the schema (FORMAT.md's vocabulary table), as astropy reads them
        self.assertEqual(seen["solMass"], astropy.units.solMass)
        self.assertEqual(seen["dex(solLum)"].physical_unit, astropy.units.solLum)
        self.assertEqual(seen["dex(K)"].physical_unit, astropy.units.K)
        self.assertEqual(seen["dex(yr)"].physical_unit, astropy.units.yr)
        self.assertEqual(seen["dex(solRad)"].physical_unit, astropy.units.solRad)

    def test_filters(self):
        for name in datasets(self.f):
            ds = self.f[name]
            if ds.dtype.kind not in "fi":
                continue
            self.assertTrue(ds.fletcher32, name)
            if name.startswith("accuracy/"):  # the error fields stay deflated (FORMAT.md, "Storage")
                self.assertEqual(ds.compression, "gzip", name)
                self.assertTrue(ds.shuffle, name)
            else:  # the tracks: Fletcher-32 alone, so that opening inflates nothing
                self.assertIsNone(ds.compression, name)
                self.assertFalse(ds.shuffle, name)
            self.assertLessEqual(int(np.prod(ds.chunks)) * ds.dtype.itemsize, MAX_CHUNK_BYTES, name)


def rebuild(path, level):
    """The default grid written again through the builder at deflate level `level`."""
    e = H.HrtError()
    keep = []
    with h5py.File(GRID, "r") as f:
        names = [n for n in f["routes/names"].asstr()[()]]
        specs = (H.HrtRouteSpec * len(names))()
        for r, n in enumerate(names):
            kp = [k.encode() for k in f["routes"][n]["keypoint_names"].asstr()[()]]
            seg = np.ascontiguousarray(f["routes"][n]["segment_samples"][()], dtype=np.intc)
            kpa = (ctypes.c_char_p * len(kp))(*kp)
            keep += [n.encode(), kpa, seg]
            specs[r] = H.HrtRouteSpec(keep[-3], len(kp), kpa, seg.ctypes.data_as(ctypes.POINTER(ctypes.c_int)))
        b = ctypes.c_void_p()
        assert LIB.hrt_builder_new(len(names), specs, float(f.attrs["z_ref"]), ctypes.byref(b),
                                   ctypes.byref(e)) == H.HRT_OK, e.message
        try:
            assert LIB.hrt_builder_set_compression(b, level, ctypes.byref(e)) == H.HRT_OK, e.message
            for g in f["metallicity"].values():
                z = float(g.attrs["z"])
                cols = {k: g[k][()] for k in PER_TRACK + PER_EEP + ["route_boundary_mass_msun"]}
                for i in range(len(cols["initial_mass_msun"])):
                    n = int(cols["n_eep"][i])
                    arr = {k: np.ascontiguousarray(cols[k][i, :n], dtype=np.float64) for k in PER_EEP[:-1]}
                    ph = np.ascontiguousarray(cols["phase"][i, :n], dtype=np.intc)
                    t = H.HrtTrackData(float(cols["initial_mass_msun"][i]), int(cols["route"][i]),
                                       int(cols["remnant"][i]), float(cols["remnant_mass_msun"][i]), n,
                                       *[H.dptr(arr[k]) for k in PER_EEP[:-1]],
                                       ph.ctypes.data_as(ctypes.POINTER(ctypes.c_int)), 0, None)
                    assert LIB.hrt_builder_add_eep_track(b, z, ctypes.byref(t), ctypes.byref(e)) == H.HRT_OK, \
                        e.message
                bnd = np.ascontiguousarray(cols["route_boundary_mass_msun"], dtype=np.float64)
                assert LIB.hrt_builder_set_route_boundaries(b, z, H.dptr(bnd), ctypes.byref(e)) == H.HRT_OK, \
                    e.message
            for k, v in f.attrs.items():
                if isinstance(v, str) and k not in ("format",):
                    assert LIB.hrt_builder_set_attribute(b, k.encode(), v.encode(), ctypes.byref(e)) == H.HRT_OK
            assert LIB.hrt_builder_write(b, path.encode(), ctypes.byref(e)) == H.HRT_OK, e.message
        finally:
            LIB.hrt_builder_free(b)


def random_stars(g, n, seed):
    """Random stars: log-uniform Z within the grid, mass log-uniform within the grid's range at the
    lowest and highest Z (some fall outside at other Z: refused alike), log-uniform age 1e5..3e10 yr."""
    rng = np.random.default_rng(seed)
    nz = LIB.hrt_grid_n_z(g)
    zlo, zhi = LIB.hrt_grid_z(g, 0), LIB.hrt_grid_z(g, nz - 1)
    masses = [LIB.hrt_grid_mass(g, iz, k) for iz in range(nz) for k in range(LIB.hrt_grid_n_masses(g, iz))]
    z = np.exp(rng.uniform(np.log(zlo), np.log(zhi), n))
    m = np.exp(rng.uniform(np.log(min(masses)), np.log(max(masses)), n))
    age = 10.0 ** rng.uniform(5.0, np.log10(3e10), n)
    return m, age, z


class CompressedAgainstUncompressed(unittest.TestCase):
    def test_same_answers(self):
        with tempfile.TemporaryDirectory() as d:
            packed, plain = os.path.join(d, "deflated.h5"), os.path.join(d, "plain.h5")
            rebuild(packed, 4)
            rebuild(plain, 0)
            sizes = {p: os.path.getsize(p) for p in (GRID, packed, plain)}
            print("\ngrid file sizes: uncompressed %.2f MB, deflated (level 4) %.2f MB (%.1f %%), default grid "
                  "%.2f MB" % (sizes[plain] / 1e6, sizes[packed] / 1e6, 100.0 * sizes[packed] / sizes[plain],
                               sizes[GRID] / 1e6), file=sys.stderr)
            self.assertLess(sizes[packed], 0.7 * sizes[plain])
            with h5py.File(plain, "r") as fp, h5py.File(packed, "r") as fc:
                for name in datasets(fp):
                    a, c = fp[name], fc[name]
                    if a.dtype.kind in "fi":
                        self.assertIsNone(a.compression, name)
                        self.assertTrue(a.fletcher32, name)
                        self.assertEqual(c.compression, "gzip", name)
                        # same values, NaN padding included (bit for bit)
                        self.assertEqual(a[()].tobytes(), c[()].tobytes(), name)
            grids = [H.open_grid(LIB, p, "steffen") for p in (plain, packed, GRID)]
            try:
                m, age, z = random_stars(grids[0], 20000, 20261205)
                out = [H.evaluate(LIB, g, m, age, z) for g in grids]
                ok = out[0][2]["status"] == 0
                self.assertGreater(ok.sum(), 10000)  # most stars answered, so the comparison means something
                for rc, msg, states in out[1:]:
                    self.assertEqual(rc, out[0][0])
                    self.assertEqual(states.tobytes(), out[0][2].tobytes())
            finally:
                for g in grids:
                    LIB.hrt_grid_close(g)


if __name__ == "__main__":
    unittest.main(verbosity=2)
