#!/usr/bin/python3
"""xarray opens every group of the default grid with named dimensions (no phony_dim_*).

Reference: Debian's python3-xarray (2023.01) with the h5netcdf engine (python3-h5netcdf)
and, where installed, the netcdf4 engine (python3-netcdf4, netCDF-C), which both read
HDF5 dimension scales as netCDF-4 dimensions.  Checked against tracks/FORMAT.md
("Dimensions") and against the values h5py reads: each group's dimensions and their
sizes, the coordinates (track and EEP indices, initial_mass_msun on the track
dimension, the codes of phases/ and remnants/), units and long_name carried into the
attributes, and a selection by dimension name equal to the h5py row.

Exit 77 (skipped) when xarray or both engines are missing.  Environment: HRTRAIL_GRID.
"""
import os
import sys
import unittest
import warnings

try:
    import xarray as xr
except ImportError:
    print("xarray is not installed (Debian: python3-xarray): skipped")
    sys.exit(77)
import h5py
import numpy as np

ENGINES = []
for _engine, _module in (("h5netcdf", "h5netcdf"), ("netcdf4", "netCDF4")):
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            __import__(_module)
        ENGINES.append(_engine)
    except ImportError:
        pass
if not ENGINES:
    print("no xarray engine for HDF5 (Debian: python3-h5netcdf or python3-netcdf4): skipped")
    sys.exit(77)

GRID = os.environ["HRTRAIL_GRID"]


def open_group(engine, group):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # netCDF4's numpy ABI notice, nothing about the file
        return xr.open_dataset(GRID, group=group, engine=engine)


class XarrayGroups(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.f = h5py.File(GRID, "r")
        cls.routes = list(cls.f["routes/names"].asstr()[()])

    @classmethod
    def tearDownClass(cls):
        cls.f.close()

    def groups(self):
        out = {None: {"route": len(self.routes)}, "routes": {"route": len(self.routes)}}
        for r in self.routes:
            k = len(self.f["routes"][r]["keypoint_names"])
            out["routes/" + r] = {"keypoint": k, "segment": k - 1}
        for t in ("phases", "remnants"):
            out[t] = {"code": len(self.f[t]["code"])}
        for name, g in self.f["metallicity"].items():
            out["metallicity/" + name] = {"track": g["log_age_yr"].shape[0], "eep": g["log_age_yr"].shape[1],
                                          "route_boundary": len(self.routes) - 1}
        return out

    def test_named_dimensions(self):
        for engine in ENGINES:
            for group, dims in self.groups().items():
                with self.subTest(engine=engine, group=group), open_group(engine, group) as ds:
                    self.assertFalse([d for d in ds.dims if str(d).startswith("phony_dim")], ds.dims)
                    self.assertEqual(dict(ds.sizes), dims)

    def test_metallicity_groups(self):
        for engine in ENGINES:
            for name, g in self.f["metallicity"].items():
                with self.subTest(engine=engine, group=name), open_group(engine, "metallicity/" + name) as ds:
                    self.assertEqual(ds["log_l_lsun"].dims, ("track", "eep"))
                    self.assertEqual(ds["phase"].dims, ("track", "eep"))
                    self.assertEqual(ds["route"].dims, ("track",))
                    self.assertEqual(ds["route_boundary_mass_msun"].dims, ("route_boundary",))
                    self.assertEqual(ds["initial_mass_msun"].dims, ("track",))
                    self.assertIn("initial_mass_msun", ds.coords)
                    np.testing.assert_array_equal(ds["initial_mass_msun"].values, g["initial_mass_msun"][()])
                    np.testing.assert_array_equal(ds["eep"].values, np.arange(g["log_age_yr"].shape[1]))
                    np.testing.assert_array_equal(ds["track"].values, np.arange(g["log_age_yr"].shape[0]))
                    self.assertEqual(ds["log_teff_k"].attrs["units"], "dex(K)")
                    self.assertEqual(ds["log_teff_k"].attrs["long_name"], g["log_teff_k"].attrs["long_name"])
                    self.assertEqual(ds.attrs["z"], g.attrs["z"])
                    i = g["log_age_yr"].shape[0] // 2
                    row = ds["log_l_lsun"].sel(track=i).values
                    np.testing.assert_array_equal(row, g["log_l_lsun"][i])  # NaN padding included
                    self.assertEqual(float(ds["log_l_lsun"].sel(track=i)["initial_mass_msun"]),
                                     g["initial_mass_msun"][i])

    def test_code_tables(self):
        for engine in ENGINES:
            for t in ("phases", "remnants"):
                with self.subTest(engine=engine, table=t), open_group(engine, t) as ds:
                    codes = self.f[t]["code"][()]
                    np.testing.assert_array_equal(ds["code"].values, codes)
                    keys = list(self.f[t]["key"].asstr()[()])
                    self.assertEqual([str(ds["key"].sel(code=c).values) for c in codes], keys)


if __name__ == "__main__":
    unittest.main(verbosity=2)
