#!/usr/bin/python3
"""Write a small hrtrail track grid with h5py alone, following tracks/FORMAT.md (format 2).

The tracks are invented analytic curves (not stellar physics): they exist to
test the hrtrail command and to exercise every part of the file format that a
reader must honour (phase and remnant code tables in a non-library order,
three routes with their own keypoints, a truncated track without a remnant, a
different set of masses at each metallicity).  grid_content() gives the grid
independently of the file layout, so that tests can write it in another
format version too (tests/cli/test_upgrade.py writes format 1).

    make_test_grid.py OUT.h5 [--break ages|format|cores|thin]

--break writes a deliberately faulty grid:
  ages    log_age_yr not increasing inside a track (the library's validator must refuse it)
  format  a wrong 'format' attribute (refused by the validator)
  cores   CO core heavier than the helium core at two EEPs of two tracks
          (the validator refuses it: cores are nested in the star)
  thin    one supergiant track at the lower Z ('hrtrail grid check' reports the thin
          route; masses far from the track are refused)
"""
import argparse
import math

import h5py
import numpy as np

Z_REF = 0.014
LOG_TEFF_SUN = math.log10(5772.0)  # IAU 2015 Resolution B3 nominal solar Teff

# hrtrail's phase and remnant codes: tracks/FORMAT.md, "Phase and remnant codes" (the library
# refuses a file whose code for a key differs).  Listed in the file deliberately not in the
# library's order, and with keys the grid does not use.
PHASES = [  # (code, key, name)
    (21, "rgb", "red giant branch"), (11, "ms", "main sequence"), (30, "cheb", "core helium burning"),
    (20, "subgiant", "subgiant / Hertzsprung gap"), (31, "eagb", "early asymptotic giant branch"),
    (32, "tpagb", "thermally pulsing asymptotic giant branch"), (33, "post_agb", "post-AGB"),
    (50, "wd", "white dwarf"), (40, "bsg", "blue supergiant"), (41, "rsg", "red supergiant"),
    (10, "pre_ms", "pre-main sequence"), (42, "wr", "Wolf-Rayet"),
]
REMNANTS = [(11, "co_wd", "carbon-oxygen white dwarf"), (0, "none", "none"), (20, "ns", "neutron star"),
            (30, "bh", "black hole"), (12, "one_wd", "oxygen-neon white dwarf")]
PHASE_CODE = {k: c for c, k, _ in PHASES}
REMNANT_CODE = {k: c for c, k, _ in REMNANTS}

# Per-EEP quantities: (name in the file, units attribute), tracks/FORMAT.md "metallicity/<i>".
EEP_QUANTITIES = [("log_age_yr", "dex(yr)"), ("log_l_lsun", "dex(solLum)"), ("log_teff_k", "dex(K)"),
                  ("log_r_rsun", "dex(solRad)"), ("mass_msun", "solMass"), ("he_core_mass_msun", "solMass"),
                  ("co_core_mass_msun", "solMass")]

ROUTES = [
    # name, keypoints, EEPs per segment, phase of each segment, phase of the last EEP
    ("low_mass",
     ["zams", "tams", "rgb_base", "rgb_tip", "cheb_end", "first_pulse", "agb_end", "wd_start"],
     [8, 4, 6, 6, 4, 3, 3],
     ["ms", "subgiant", "rgb", "cheb", "eagb", "tpagb", "post_agb"], "wd"),
    ("giant",
     ["zams", "tams", "rgb_base", "he_ignition", "cheb_end", "first_pulse", "agb_end", "wd_start"],
     [8, 3, 4, 8, 4, 3, 3],
     ["ms", "subgiant", "rgb", "cheb", "eagb", "tpagb", "post_agb"], "wd"),
    ("supergiant",
     ["zams", "tams", "he_ignition", "cheb_end", "collapse"],
     [8, 3, 6, 3],
     ["ms", "bsg", "rsg", "rsg"], "rsg"),
]

# Metallicity groups: Z and the masses (Msun) of each route's tracks.
GROUPS = [
    (0.006, [[0.7, 0.9, 1.1, 1.4, 1.8], [2.4, 3.2, 4.5, 6.0], [10.0, 15.0, 25.0]]),
    (0.02, [[0.7, 0.9, 1.1, 1.4, 1.8, 2.1], [2.4, 3.2, 4.5, 6.0], [10.0, 15.0, 25.0, 40.0]]),
]
ROUTE_BOUNDARIES = [2.2, 8.0]
TRUNCATED_MASS = 0.7  # stops at its 4th keypoint, no remnant known


def keypoint_table(route, m, z):
    """(age_yr, log L, log Teff, mass, He core, CO core) at each keypoint, invented."""
    lm = math.log10(m)
    dz = math.log10(z / Z_REF)
    t_zams = 2e7 * m ** -2.0
    t_ms = 1e10 * m ** -2.5 * (z / Z_REF) ** 0.15
    l0 = 3.6 * lm - 0.1 - 0.05 * dz
    t0 = min(3.762 + 0.55 * lm, 4.7) + 0.01 * dz
    m_wd = 0.08 * m + 0.47
    if route == "supergiant":
        rows = [
            (t_zams, l0, t0, m, 0.0, 0.0),
            (t_ms, l0 + 0.3, t0 - 0.08, 0.97 * m, 0.2 * m, 0.0),
            (1.02 * t_ms, l0 + 0.45, 3.9, 0.9 * m, 0.3 * m, 0.0),
            (1.12 * t_ms, l0 + 0.55, 3.55, 0.75 * m, 0.35 * m, 0.2 * m),
            (1.125 * t_ms, l0 + 0.6, 3.54, 0.7 * m, 0.36 * m, 0.25 * m),
        ]
    else:
        tip = 3.2 if route == "low_mass" else l0 + 1.3
        rows = [
            (t_zams, l0, t0, m, 0.0, 0.0),
            (t_ms, l0 + 0.35, t0 - 0.03, m, 0.1 * m, 0.0),
            (1.08 * t_ms, l0 + 0.45, 3.68, m, 0.12 * m, 0.0),
            (1.20 * t_ms, tip, 3.58, 0.97 * m, 0.3, 0.0),
            (1.32 * t_ms, l0 + 0.8 if route == "giant" else 1.9, 3.66, 0.95 * m, 0.35, 0.3),
            (1.36 * t_ms, tip + 0.2, 3.56, 0.93 * m, m_wd - 0.05, 0.32),
            (1.37 * t_ms, tip + 0.5, 3.52, m_wd + 0.01, m_wd, m_wd - 0.02),
            (1.3705 * t_ms, 3.0, 4.9, m_wd, m_wd, m_wd - 0.01),
        ]
    return rows


def remnant_of(route, m):
    """(remnant key, remnant mass Msun) at the end of the track."""
    if route == "supergiant":
        return ("ns", 1.4) if m < 20 else ("bh", 0.25 * 0.7 * m)
    if m >= 6.0:
        return ("one_wd", 1.2)
    return ("co_wd", 0.08 * m + 0.47)


def eep_track(route_idx, m, z):
    """Columns of one track on its route's EEPs (linear between keypoints)."""
    name, kps, segs, seg_phases, last_phase = ROUTES[route_idx]
    rows = keypoint_table(name, m, z)
    cols = {k: [] for k in ("log_age", "log_L", "log_Teff", "mass", "he", "co", "phase")}  # phase as keys
    for k, nseg in enumerate(segs):
        a, b = rows[k], rows[k + 1]
        for j in range(nseg):
            f = j / nseg
            cols["log_age"].append((1 - f) * math.log10(a[0]) + f * math.log10(b[0]))
            cols["log_L"].append((1 - f) * a[1] + f * b[1])
            cols["log_Teff"].append((1 - f) * a[2] + f * b[2])
            cols["mass"].append((1 - f) * a[3] + f * b[3])
            cols["he"].append((1 - f) * a[4] + f * b[4])
            cols["co"].append((1 - f) * a[5] + f * b[5])
            cols["phase"].append(seg_phases[k])
    last = rows[-1]
    cols["log_age"].append(math.log10(last[0]))
    cols["log_L"].append(last[1])
    cols["log_Teff"].append(last[2])
    cols["mass"].append(last[3])
    cols["he"].append(last[4])
    cols["co"].append(last[5])
    cols["phase"].append(last_phase)
    n = len(cols["log_age"])
    remnant = remnant_of(name, m)
    if m == TRUNCATED_MASS:
        n = sum(segs[:3]) + 1  # ends at its 4th keypoint
        remnant = ("none", float("nan"))
    return cols, n, remnant


def grid_content(brk=None):
    """The grid as plain data: [(z, {quantity: [n_mass][n_eep_max] float64 array (NaN beyond n_eep)},
    initial masses, routes, n_eep, remnant keys, remnant masses, phase keys [n_mass][n_eep])], n_eep_max."""
    n_eep_max = max(sum(r[2]) + 1 for r in ROUTES)
    groups = []
    for iz, (z, route_masses) in enumerate(GROUPS):
        if brk == "thin" and iz == 0:  # one supergiant track left at the lower Z
            route_masses = route_masses[:2] + [[15.0]]
        tracks = [(r, m) for r, ms in enumerate(route_masses) for m in ms]
        nm = len(tracks)
        arr = {k: np.full((nm, n_eep_max), np.nan) for k, _ in EEP_QUANTITIES}
        n_eep = np.zeros(nm, dtype="<i4")
        remnant, remnant_mass, phases = [], np.full(nm, np.nan), []
        for i, (r, m) in enumerate(tracks):
            cols, n, (rkey, rmass) = eep_track(r, m, z)
            n_eep[i] = n
            remnant.append(rkey)
            remnant_mass[i] = rmass
            for key, col in (("log_age_yr", "log_age"), ("log_l_lsun", "log_L"), ("log_teff_k", "log_Teff"),
                             ("mass_msun", "mass"), ("he_core_mass_msun", "he"), ("co_core_mass_msun", "co")):
                arr[key][i, :n] = cols[col][:n]
            arr["log_r_rsun"][i, :n] = (0.5 * arr["log_l_lsun"][i, :n]
                                        - 2.0 * (arr["log_teff_k"][i, :n] - LOG_TEFF_SUN))
            phases.append(cols["phase"][:n])
        if brk == "ages" and iz == 1:
            arr["log_age_yr"][2, 5] = arr["log_age_yr"][2, 4]
        if brk == "cores":
            arr["co_core_mass_msun"][3 + iz, 20] = arr["he_core_mass_msun"][3 + iz, 20] + 0.1
        groups.append({"z": z, "q": arr, "initial_mass_msun": np.array([m for _, m in tracks], dtype="<f8"),
                       "route": np.array([r for r, _ in tracks], dtype="<i4"), "n_eep": n_eep,
                       "remnant": remnant, "remnant_mass_msun": remnant_mass, "phase": phases})
    return groups, n_eep_max


def write_routes(f, sdt):
    rg = f.create_group("routes")
    rg.create_dataset("names", data=np.array([r[0] for r in ROUTES], dtype=object), dtype=sdt)
    for name, kps, segs, _, _ in ROUTES:
        g = rg.create_group(name)
        g.create_dataset("keypoint_names", data=np.array(kps, dtype=object), dtype=sdt)
        g.create_dataset("keypoint_eep", data=np.concatenate([[0], np.cumsum(segs)]).astype("<i4"), fletcher32=True)
        g.create_dataset("segment_samples", data=np.array(segs, dtype="<i4"), fletcher32=True)


def write(path, brk=None):
    """The test grid in format 2 (tracks/FORMAT.md): float datasets float64, integers int32."""
    sdt = h5py.string_dtype("utf-8")
    groups, n_eep_max = grid_content(brk)
    with h5py.File(path, "w") as f:
        f.attrs["format"] = "hrtrail-track-grid" if brk != "format" else "some-other-format"
        f.attrs["format_version"] = np.int32(2)
        f.attrs["z_ref"] = np.float64(Z_REF)
        f.attrs["created_by"] = "tests/cli/make_test_grid.py"
        f.attrs["source"] = "invented analytic test tracks, not stellar physics"
        f.attrs["description"] = "small three-route test grid for the hrtrail command"
        for group, table in (("phases", PHASES), ("remnants", REMNANTS)):
            g = f.create_group(group)
            g.create_dataset("code", data=np.array([c for c, _, _ in table], dtype="<i4"), fletcher32=True)
            g.create_dataset("key", data=np.array([k for _, k, _ in table], dtype=object), dtype=sdt)
            g.create_dataset("name", data=np.array([n for _, _, n in table], dtype=object), dtype=sdt)
        write_routes(f, sdt)
        mg = f.create_group("metallicity")
        for iz, grp in enumerate(groups):
            g = mg.create_group(str(iz))
            g.attrs["z"] = np.float64(grp["z"])
            nm = len(grp["initial_mass_msun"])
            g.create_dataset("initial_mass_msun", data=grp["initial_mass_msun"], fletcher32=True).attrs["units"] = "solMass"
            g.create_dataset("route", data=grp["route"], fletcher32=True)
            g.create_dataset("n_eep", data=grp["n_eep"], fletcher32=True)
            g.create_dataset("remnant", data=np.array([REMNANT_CODE[k] for k in grp["remnant"]], dtype="<i4"), fletcher32=True)
            g.create_dataset("remnant_mass_msun", data=grp["remnant_mass_msun"], fletcher32=True).attrs["units"] = "solMass"
            g.create_dataset("route_boundary_mass_msun", data=np.array(ROUTE_BOUNDARIES, dtype="<f8"),
                             fletcher32=True).attrs["units"] = "solMass"
            for key, units in EEP_QUANTITIES:
                g.create_dataset(key, data=grp["q"][key].astype("<f8"), fletcher32=True).attrs["units"] = units
            phase = np.zeros((nm, n_eep_max), dtype="<i4")  # 0 (unknown) beyond n_eep
            for i, keys in enumerate(grp["phase"]):
                phase[i, :len(keys)] = [PHASE_CODE[k] for k in keys]
            g.create_dataset("phase", data=phase, fletcher32=True)


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("out")
    ap.add_argument("--break", dest="brk", choices=["ages", "format", "cores", "thin"])
    a = ap.parse_args()
    write(a.out, a.brk)


if __name__ == "__main__":
    main()
