#!/usr/bin/python3
"""Write a small hrtrail track grid with h5py alone, following tracks/FORMAT.md.

The tracks are invented analytic curves (not stellar physics): they exist to
test the hrtrail command and to exercise every part of the file format that a
reader must honour (phase and remnant key tables in a non-library order, three
routes with their own keypoints, a truncated track without a remnant, a
different set of masses at each metallicity).

    make_test_grid.py OUT.h5 [--break ages|format|cores]

--break writes a deliberately faulty grid:
  ages    log_age not increasing inside a track (the library's validator must refuse it)
  format  a wrong 'format' attribute (refused by the validator)
  cores   CO core heavier than the helium core at two EEPs of two tracks
          (the validator accepts it; 'hrtrail grid check' must report both)
"""
import argparse
import math

import h5py
import numpy as np

Z_REF = 0.014
LOG_TEFF_SUN = math.log10(5772.0)  # IAU 2015 Resolution B3 nominal solar Teff

# Phase and remnant tables deliberately not in the library's enum order.
PHASE_KEYS = ["rgb", "ms", "cheb", "subgiant", "eagb", "tpagb", "post_agb", "wd", "bsg", "rsg"]
REMNANT_KEYS = ["co_wd", "none", "ns", "bh", "one_wd"]

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
    cols = {k: [] for k in ("log_age", "log_L", "log_Teff", "mass", "he", "co", "phase")}
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
            cols["phase"].append(PHASE_KEYS.index(seg_phases[k]))
    last = rows[-1]
    cols["log_age"].append(math.log10(last[0]))
    cols["log_L"].append(last[1])
    cols["log_Teff"].append(last[2])
    cols["mass"].append(last[3])
    cols["he"].append(last[4])
    cols["co"].append(last[5])
    cols["phase"].append(PHASE_KEYS.index(last_phase))
    n = len(cols["log_age"])
    remnant = remnant_of(name, m)
    if m == TRUNCATED_MASS:
        n = sum(segs[:3]) + 1  # ends at its 4th keypoint
        remnant = ("none", float("nan"))
    return cols, n, remnant


def write(path, brk=None):
    sdt = h5py.string_dtype("utf-8")
    n_eep_max = max(sum(r[2]) + 1 for r in ROUTES)
    with h5py.File(path, "w") as f:
        f.attrs["format"] = "hrtrail-track-grid" if brk != "format" else "some-other-format"
        f.attrs["format_version"] = np.int32(1)
        f.attrs["z_ref"] = Z_REF
        f.attrs["created_by"] = "tests/cli/make_test_grid.py"
        f.attrs["source"] = "invented analytic test tracks, not stellar physics"
        f.attrs["description"] = "small three-route test grid for the hrtrail command"
        f.create_dataset("phase_keys", data=np.array(PHASE_KEYS, dtype=object), dtype=sdt)
        f.create_dataset("remnant_keys", data=np.array(REMNANT_KEYS, dtype=object), dtype=sdt)
        rg = f.create_group("routes")
        rg.create_dataset("names", data=np.array([r[0] for r in ROUTES], dtype=object), dtype=sdt)
        for name, kps, segs, _, _ in ROUTES:
            g = rg.create_group(name)
            g.create_dataset("keypoint_names", data=np.array(kps, dtype=object), dtype=sdt)
            g.create_dataset("keypoint_eep", data=np.concatenate([[0], np.cumsum(segs)]).astype("<i4"))
            g.create_dataset("segment_samples", data=np.array(segs, dtype="<i4"))
        mg = f.create_group("metallicity")
        for iz, (z, route_masses) in enumerate(GROUPS):
            g = mg.create_group(str(iz))
            g.attrs["Z"] = z
            tracks = [(r, m) for r, ms in enumerate(route_masses) for m in ms]
            nm = len(tracks)
            arr = {k: np.full((nm, n_eep_max), np.nan) for k in
                   ("log_age", "log_L", "log_Teff", "log_R", "mass", "he_core_mass", "co_core_mass")}
            phase = np.full((nm, n_eep_max), -1, dtype="<i4")
            n_eep = np.zeros(nm, dtype="<i4")
            remnant = np.zeros(nm, dtype="<i4")
            remnant_mass = np.full(nm, np.nan)
            for i, (r, m) in enumerate(tracks):
                cols, n, (rkey, rmass) = eep_track(r, m, z)
                n_eep[i] = n
                remnant[i] = REMNANT_KEYS.index(rkey)
                remnant_mass[i] = rmass
                for key, col in (("log_age", "log_age"), ("log_L", "log_L"), ("log_Teff", "log_Teff"),
                                 ("mass", "mass"), ("he_core_mass", "he"), ("co_core_mass", "co")):
                    arr[key][i, :n] = cols[col][:n]
                arr["log_R"][i, :n] = (0.5 * arr["log_L"][i, :n]
                                       - 2.0 * (arr["log_Teff"][i, :n] - LOG_TEFF_SUN))
                phase[i, :n] = cols["phase"][:n]
            if brk == "ages" and iz == 1:
                arr["log_age"][2, 5] = arr["log_age"][2, 4]
            if brk == "cores":
                arr["co_core_mass"][3 + iz, 20] = arr["he_core_mass"][3 + iz, 20] + 0.1
            g.create_dataset("initial_mass", data=np.array([m for _, m in tracks])).attrs["units"] = "Msun"
            g.create_dataset("route", data=np.array([r for r, _ in tracks], dtype="<i4"))
            g.create_dataset("n_eep", data=n_eep)
            g.create_dataset("remnant", data=remnant)
            g.create_dataset("remnant_mass", data=remnant_mass).attrs["units"] = "Msun"
            g.create_dataset("route_boundary_mass", data=np.array(ROUTE_BOUNDARIES)).attrs["units"] = "Msun"
            units = {"log_age": "log10 yr", "log_L": "log10 Lsun", "log_Teff": "log10 K",
                     "log_R": "log10 Rsun", "mass": "Msun", "he_core_mass": "Msun", "co_core_mass": "Msun"}
            for key, a in arr.items():
                g.create_dataset(key, data=a).attrs["units"] = units[key]
            g.create_dataset("phase", data=phase)


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("out")
    ap.add_argument("--break", dest="brk", choices=["ages", "format", "cores"])
    a = ap.parse_args()
    write(a.out, a.brk)


if __name__ == "__main__":
    main()
