#!/usr/bin/python3
"""Write an hrtrail track grid (tracks/FORMAT.md, version 1) with h5py alone.

This is both a test helper and documentation: it is everything a program
needs to produce a grid the library opens.  Python API:

    write_grid(path, z_ref, routes, groups, attrs=None, strings="vlen")

routes  list of {"name", "keypoint_names", "segment_samples"}, in order of
        increasing initial mass.
groups  list of {"Z", "tracks", "route_boundary_mass" (optional)}, in
        increasing Z.  Each track is a dict with "initial_mass" (Msun),
        "route" (index), "remnant" (key such as "co_wd", or "none"),
        "remnant_mass" (Msun; NaN for "none") and, one value per valid EEP,
        "log_age" (log10 yr), "log_L", "log_Teff", "mass", "he_core_mass",
        "co_core_mass" and "phase" (keys such as "ms").  "log_R" is optional:
        it defaults to the Stefan-Boltzmann value from log_L and log_Teff.
strings "vlen" (variable-length UTF-8, as the library writes) or "fixed"
        (fixed-length ASCII); the reader accepts both.

Command line:
    write_grid_h5py.py SPEC.json OUT.h5   (SPEC holds {"z_ref", "routes", "groups", "attrs"})
    write_grid_h5py.py --demo OUT.h5 [--n-mass N] [--n-eep J] [--n-z K]
The demo grid is invented smooth data for tests and benchmarks, not physics.
"""
import argparse
import json
import sys

import h5py
import numpy as np

PHASE_KEYS = ["pre_ms", "ms", "subgiant", "rgb", "cheb", "eagb", "tpagb", "post_agb",
              "wd", "bsg", "rsg", "wr", "ns", "bh", "post_rgb"]
REMNANT_KEYS = ["none", "he_wd", "co_wd", "one_wd", "ns", "bh"]
TEFF_SUN_K = 5772.0  # nominal solar Teff, IAU 2015 Resolution B3
QUANTITIES = [("log_age", "log10 yr"), ("log_L", "log10 Lsun"), ("log_Teff", "log10 K"),
              ("log_R", "log10 Rsun"), ("mass", "Msun"), ("he_core_mass", "Msun"),
              ("co_core_mass", "Msun")]


def log_r_stefan_boltzmann(log_l, log_teff):
    """log10 R/Rsun from L = 4 pi R^2 sigma Teff^4 in nominal solar units."""
    return 0.5 * np.asarray(log_l) - 2.0 * (np.asarray(log_teff) - np.log10(TEFF_SUN_K))


def write_grid(path, z_ref, routes, groups, attrs=None, strings="vlen",
               phase_keys=PHASE_KEYS, remnant_keys=REMNANT_KEYS):
    sdt = h5py.string_dtype("utf-8") if strings == "vlen" else None

    def text_list(values):  # a 1-D string dataset's data
        return np.array(values, dtype=sdt) if sdt else np.array([v.encode("ascii") for v in values])

    def text(value):  # a scalar text attribute
        return value if sdt else np.bytes_(value.encode("ascii"))

    route_n_eep = [sum(r["segment_samples"]) + 1 for r in routes]
    n_eep_max = max(route_n_eep)
    with h5py.File(path, "w") as f:
        f.attrs["format"] = text("hrtrail-track-grid")
        f.attrs["format_version"] = np.int32(1)
        f.attrs["z_ref"] = np.float64(z_ref)
        for key, value in (attrs or {}).items():
            f.attrs[key] = text(value)
        f.create_dataset("phase_keys", data=text_list(phase_keys))
        f.create_dataset("remnant_keys", data=text_list(remnant_keys))
        rg = f.create_group("routes")
        rg.create_dataset("names", data=text_list([r["name"] for r in routes]))
        for r in routes:
            g = rg.create_group(r["name"])
            g.create_dataset("keypoint_names", data=text_list(r["keypoint_names"]))
            seg = np.asarray(r["segment_samples"], dtype="<i4")
            g.create_dataset("keypoint_eep", data=np.concatenate([[0], np.cumsum(seg)]).astype("<i4"))
            g.create_dataset("segment_samples", data=seg)
        mg = f.create_group("metallicity")
        for iz, grp in enumerate(groups):
            tracks = sorted(grp["tracks"], key=lambda t: t["initial_mass"])
            g = mg.create_group(str(iz))
            g.attrs["Z"] = np.float64(grp["Z"])
            m = np.array([t["initial_mass"] for t in tracks], dtype="<f8")
            route = np.array([t["route"] for t in tracks], dtype="<i4")
            n_eep = np.array([len(t["log_age"]) for t in tracks], dtype="<i4")
            bounds = grp.get("route_boundary_mass")
            if bounds is None:  # geometric mean of the last track of a route and the next track
                bounds = [np.sqrt(m[route <= b].max() * m[route > b].min()) for b in range(len(routes) - 1)]
            for name, data in (("initial_mass", m), ("remnant_mass",
                                [t["remnant_mass"] for t in tracks]), ("route_boundary_mass", bounds)):
                g.create_dataset(name, data=np.asarray(data, dtype="<f8").reshape(-1))
                g[name].attrs["units"] = text("Msun")
            g.create_dataset("route", data=route)
            g.create_dataset("n_eep", data=n_eep)
            g.create_dataset("remnant", data=np.array(
                [remnant_keys.index(t["remnant"]) for t in tracks], dtype="<i4"))
            for name, units in QUANTITIES:
                a = np.full((len(tracks), n_eep_max), np.nan)
                for i, t in enumerate(tracks):
                    v = t.get(name)
                    if v is None and name == "log_R":
                        v = log_r_stefan_boltzmann(t["log_L"], t["log_Teff"])
                    a[i, :n_eep[i]] = v
                g.create_dataset(name, data=a)
                g[name].attrs["units"] = text(units)
            ph = np.full((len(tracks), n_eep_max), -1, dtype="<i4")
            for i, t in enumerate(tracks):
                ph[i, :n_eep[i]] = [phase_keys.index(p) if isinstance(p, str) else p for p in t["phase"]]
            g.create_dataset("phase", data=ph)


def demo_grid(n_mass=40, n_eep=600, n_z=1):
    """Invented smooth tracks on one route "giant" (zams, tams, rgb_base, end), 0.8-8 Msun.

    Shapes only loosely resemble stars; use them for tests and benchmarks.
    """
    seg = [n_eep // 2, n_eep // 4, n_eep - 1 - n_eep // 2 - n_eep // 4]
    routes = [{"name": "giant", "keypoint_names": ["zams", "tams", "rgb_base", "end"],
               "segment_samples": seg}]
    s = np.linspace(0.0, 1.0, n_eep)  # position along the track
    phase = ["ms"] * seg[0] + ["subgiant"] * seg[1] + ["rgb"] * (seg[2] + 1)
    groups = []
    for iz in range(n_z):
        z = 0.004 * 2.0 ** iz
        tracks = []
        for m in np.geomspace(0.8, 8.0, n_mass):
            x, fe = np.log10(m), np.log10(z / 0.014)
            t_end = 10.0 - 2.5 * x + 0.05 * fe  # log10 of the lifetime, yr
            log_age = np.log10(10.0 ** (t_end - 2.5) + (10.0 ** t_end) * s ** 1.5)
            log_l = 4.0 * x + 0.2 * s + 2.0 * s ** 4 - 0.1 * fe
            log_teff = 3.76 + 0.55 * x - 0.35 * s ** 2 - 0.03 * fe
            tracks.append({"initial_mass": m, "route": 0, "remnant": "co_wd",
                           "remnant_mass": 0.5 + 0.1 * m, "log_age": log_age, "log_L": log_l,
                           "log_Teff": log_teff, "mass": m * (1.0 - 0.2 * s ** 6),
                           "he_core_mass": 0.1 * m * s, "co_core_mass": 0.02 * m * s ** 3,
                           "phase": phase})
        groups.append({"Z": z, "tracks": tracks})
    return {"z_ref": 0.014, "routes": routes, "groups": groups,
            "attrs": {"description": "invented demo grid (not physics)",
                      "created_by": "tests/ref/write_grid_h5py.py"}}


def main(argv=None):
    p = argparse.ArgumentParser(description="Write an hrtrail grid (tracks/FORMAT.md) with h5py.")
    p.add_argument("spec", nargs="?", help="JSON file with z_ref, routes, groups, attrs")
    p.add_argument("out", help="output HDF5 file")
    p.add_argument("--demo", action="store_true", help="write the invented demo grid instead")
    p.add_argument("--n-mass", type=int, default=40)
    p.add_argument("--n-eep", type=int, default=600)
    p.add_argument("--n-z", type=int, default=1)
    a = p.parse_args(argv)
    if a.demo == (a.spec is not None):
        p.error("give either SPEC.json or --demo")
    if a.demo:
        spec = demo_grid(a.n_mass, a.n_eep, a.n_z)
    else:
        with open(a.spec) as fh:
            spec = json.load(fh)
    write_grid(a.out, spec["z_ref"], spec["routes"], spec["groups"], spec.get("attrs"))
    return 0


if __name__ == "__main__":
    sys.exit(main())
