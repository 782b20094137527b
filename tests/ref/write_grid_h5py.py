#!/usr/bin/python3
"""Write an hrtrail track grid (tracks/FORMAT.md, version 2) with h5py alone.

This is both a test helper and documentation: it is everything a program
needs to produce a grid the library opens.  Python API:

    write_grid(path, z_ref, routes, groups, attrs=None, strings="vlen")

routes  list of {"name", "keypoint_names", "segment_samples"}, in order of
        increasing initial mass.
groups  list of {"z", "tracks", "route_boundary_mass_msun" (optional)}, in
        increasing z.  Each track is a dict named in the vocabulary of
        FORMAT.md: "initial_mass_msun", "route" (index), "remnant" (key such
        as "co_wd", or "none"), "remnant_mass_msun" (NaN for "none") and, one
        value per valid EEP, "log_age_yr", "log_l_lsun", "log_teff_k",
        "mass_msun", "he_core_mass_msun", "co_core_mass_msun" and "phase"
        (keys such as "ms", or hrtrail codes).  "log_r_rsun" is optional: it
        defaults to the Stefan-Boltzmann value from log_l_lsun and log_teff_k.
strings "vlen" (variable-length UTF-8, as the library writes) or "fixed"
        (fixed-length ASCII); the reader accepts both.

write_grid_v1(...) takes the same arguments and writes the same grid in the
layout of format version 1 (old dataset names, phase_keys/remnant_keys index
tables, group attribute Z), which the library only converts
(hrt_grid_upgrade); it exists to test that conversion.

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

# FORMAT.md "Phase and remnant codes": (code, key, name), hrtrail's own codes.
PHASES = [(0, "unknown", "unknown"), (10, "pre_ms", "pre-main sequence"), (11, "ms", "main sequence"),
          (20, "subgiant", "subgiant / Hertzsprung gap"), (21, "rgb", "red giant branch"),
          (22, "post_rgb", "post-RGB contraction"), (30, "cheb", "core helium burning"),
          (31, "eagb", "early asymptotic giant branch"),
          (32, "tpagb", "thermally pulsing asymptotic giant branch"), (33, "post_agb", "post-AGB"),
          (40, "bsg", "blue supergiant"), (41, "rsg", "red supergiant"), (42, "wr", "Wolf-Rayet"),
          (50, "wd", "white dwarf"), (51, "ns", "neutron star"), (52, "bh", "black hole")]
REMNANTS = [(0, "none", "none"), (10, "he_wd", "helium white dwarf"),
            (11, "co_wd", "carbon-oxygen white dwarf"), (12, "one_wd", "oxygen-neon white dwarf"),
            (20, "ns", "neutron star"), (30, "bh", "black hole")]
PHASE_CODE = {key: code for code, key, _ in PHASES}
REMNANT_CODE = {key: code for code, key, _ in REMNANTS}
TEFF_SUN_K = 5772.0  # nominal solar Teff, IAU 2015 Resolution B3
# FORMAT.md "metallicity/<i>": the EEP datasets and their units (astropy unit strings)
QUANTITIES = [("log_age_yr", "dex(yr)"), ("log_l_lsun", "dex(solLum)"), ("log_teff_k", "dex(K)"),
              ("log_r_rsun", "dex(solRad)"), ("mass_msun", "solMass"), ("he_core_mass_msun", "solMass"),
              ("co_core_mass_msun", "solMass")]
# units of every float dataset of a metallicity group
UNITS = dict(QUANTITIES, initial_mass_msun="solMass", remnant_mass_msun="solMass",
             route_boundary_mass_msun="solMass")

# Format version 1 (FORMAT.md "Version history"): old names and units, key tables
V1_NAMES = {"initial_mass_msun": "initial_mass", "remnant_mass_msun": "remnant_mass",
            "route_boundary_mass_msun": "route_boundary_mass", "log_age_yr": "log_age",
            "log_l_lsun": "log_L", "log_teff_k": "log_Teff", "log_r_rsun": "log_R", "mass_msun": "mass",
            "he_core_mass_msun": "he_core_mass", "co_core_mass_msun": "co_core_mass"}
V1_UNITS = {"log_age_yr": "log10 yr", "log_l_lsun": "log10 Lsun", "log_teff_k": "log10 K",
            "log_r_rsun": "log10 Rsun"}  # every other float dataset: "Msun"
V1_PHASE_KEYS = ["pre_ms", "ms", "subgiant", "rgb", "cheb", "eagb", "tpagb", "post_agb",
                 "wd", "bsg", "rsg", "wr", "ns", "bh", "post_rgb"]
V1_REMNANT_KEYS = ["none", "he_wd", "co_wd", "one_wd", "ns", "bh"]


def log_r_stefan_boltzmann(log_l, log_teff):
    """log10 R/Rsun from L = 4 pi R^2 sigma Teff^4 in nominal solar units."""
    return 0.5 * np.asarray(log_l) - 2.0 * (np.asarray(log_teff) - np.log10(TEFF_SUN_K))


def _strings(strings):
    """(text_list, text): 1-D string data and scalar text attributes of the chosen kind."""
    sdt = h5py.string_dtype("utf-8") if strings == "vlen" else None

    def text_list(values):
        return np.array(values, dtype=sdt) if sdt else np.array([v.encode("ascii") for v in values])

    def text(value):
        return value if sdt else np.bytes_(value.encode("ascii"))
    return text_list, text


def _write_routes(f, routes, text_list, checksum):
    rg = f.create_group("routes")
    rg.create_dataset("names", data=text_list([r["name"] for r in routes]))
    for r in routes:
        g = rg.create_group(r["name"])
        g.create_dataset("keypoint_names", data=text_list(r["keypoint_names"]))
        seg = np.asarray(r["segment_samples"], dtype="<i4")
        g.create_dataset("keypoint_eep", data=np.concatenate([[0], np.cumsum(seg)]).astype("<i4"), **checksum)
        g.create_dataset("segment_samples", data=seg, **checksum)
    return max(sum(r["segment_samples"]) + 1 for r in routes)


def _group_columns(grp, n_routes, n_eep_max):
    """The datasets of one metallicity group by vocabulary name (phases as hrtrail codes, 0 padded)."""
    tracks = sorted(grp["tracks"], key=lambda t: t["initial_mass_msun"])
    m = np.array([t["initial_mass_msun"] for t in tracks], dtype="<f8")
    route = np.array([t["route"] for t in tracks], dtype="<i4")
    n_eep = np.array([len(t["log_age_yr"]) for t in tracks], dtype="<i4")
    bounds = grp.get("route_boundary_mass_msun")
    if bounds is None:  # geometric mean of the last track of a route and the next track
        bounds = [np.sqrt(m[route <= b].max() * m[route > b].min()) for b in range(n_routes - 1)]
    cols = {"initial_mass_msun": m, "route": route, "n_eep": n_eep,
            "remnant": np.array([REMNANT_CODE[t["remnant"]] for t in tracks], dtype="<i4"),
            "remnant_mass_msun": np.array([t["remnant_mass_msun"] for t in tracks], dtype="<f8"),
            "route_boundary_mass_msun": np.asarray(bounds, dtype="<f8").reshape(-1)}
    for name, _ in QUANTITIES:
        a = np.full((len(tracks), n_eep_max), np.nan)
        for i, t in enumerate(tracks):
            v = t.get(name)
            if v is None and name == "log_r_rsun":
                v = log_r_stefan_boltzmann(t["log_l_lsun"], t["log_teff_k"])
            a[i, :n_eep[i]] = v
        cols[name] = a
    ph = np.zeros((len(tracks), n_eep_max), dtype="<i4")  # FORMAT.md: phase 0 beyond n_eep
    for i, t in enumerate(tracks):
        ph[i, :n_eep[i]] = [PHASE_CODE[p] if isinstance(p, str) else p for p in t["phase"]]
    cols["phase"] = ph
    return cols


# FORMAT.md: every numeric dataset of format 2 carries HDF5's Fletcher-32 checksum.
CHECKSUM = {"fletcher32": True}


def write_grid(path, z_ref, routes, groups, attrs=None, strings="vlen"):
    """Write a grid in format version 2 (tracks/FORMAT.md)."""
    text_list, text = _strings(strings)
    with h5py.File(path, "w") as f:
        f.attrs["format"] = text("hrtrail-track-grid")
        f.attrs["format_version"] = np.int32(2)
        f.attrs["z_ref"] = np.float64(z_ref)
        for key, value in (attrs or {}).items():
            f.attrs[key] = text(value)
        for group, table in (("phases", PHASES), ("remnants", REMNANTS)):
            g = f.create_group(group)
            g.create_dataset("code", data=np.array([c for c, _, _ in table], dtype="<i4"), **CHECKSUM)
            g.create_dataset("key", data=text_list([k for _, k, _ in table]))
            g.create_dataset("name", data=text_list([n for _, _, n in table]))
        n_eep_max = _write_routes(f, routes, text_list, CHECKSUM)
        mg = f.create_group("metallicity")
        for iz, grp in enumerate(groups):
            g = mg.create_group(str(iz))
            g.attrs["z"] = np.float64(grp["z"])
            for name, data in _group_columns(grp, len(routes), n_eep_max).items():
                g.create_dataset(name, data=data, **CHECKSUM)
                if name in UNITS:
                    g[name].attrs["units"] = text(UNITS[name])


def write_grid_v1(path, z_ref, routes, groups, attrs=None, strings="vlen"):
    """Write the same grid as write_grid() in the layout of format version 1 (FORMAT.md "Version
    history"): old dataset names and units, phase and remnant stored as indices into the root
    tables phase_keys and remnant_keys (-1 beyond n_eep), group attribute Z."""
    text_list, text = _strings(strings)
    phase_key = {code: key for code, key, _ in PHASES}
    remnant_key = {code: key for code, key, _ in REMNANTS}
    with h5py.File(path, "w") as f:
        f.attrs["format"] = text("hrtrail-track-grid")
        f.attrs["format_version"] = np.int32(1)
        f.attrs["z_ref"] = np.float64(z_ref)
        for key, value in (attrs or {}).items():
            f.attrs[key] = text(value)
        f.create_dataset("phase_keys", data=text_list(V1_PHASE_KEYS))
        f.create_dataset("remnant_keys", data=text_list(V1_REMNANT_KEYS))
        n_eep_max = _write_routes(f, routes, text_list, {})  # format 1 had no checksums
        mg = f.create_group("metallicity")
        for iz, grp in enumerate(groups):
            g = mg.create_group(str(iz))
            g.attrs["Z"] = np.float64(grp["z"])
            cols = _group_columns(grp, len(routes), n_eep_max)
            cols["remnant"] = np.array([V1_REMNANT_KEYS.index(remnant_key[c]) for c in cols["remnant"]],
                                       dtype="<i4")
            ph = np.full(cols["phase"].shape, -1, dtype="<i4")
            for i, n in enumerate(cols["n_eep"]):
                ph[i, :n] = [V1_PHASE_KEYS.index(phase_key[c]) for c in cols["phase"][i, :n]]
            cols["phase"] = ph
            for name, data in cols.items():
                old = V1_NAMES.get(name, name)
                g.create_dataset(old, data=data)
                if name in UNITS:
                    g[old].attrs["units"] = text(V1_UNITS.get(name, "Msun"))


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
            tracks.append({"initial_mass_msun": m, "route": 0, "remnant": "co_wd",
                           "remnant_mass_msun": 0.5 + 0.1 * m, "log_age_yr": log_age, "log_l_lsun": log_l,
                           "log_teff_k": log_teff, "mass_msun": m * (1.0 - 0.2 * s ** 6),
                           "he_core_mass_msun": 0.1 * m * s, "co_core_mass_msun": 0.02 * m * s ** 3,
                           "phase": phase})
        groups.append({"z": z, "tracks": tracks})
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
