#!/usr/bin/python3
"""hrtrail grid upgrade: a format-1 grid, written here with h5py as the format-1 writer of hrtrail 0.1 did
(tracks/FORMAT.md, "Version history"), is refused by the other commands with a message naming the upgrade,
and once converted answers exactly as the same grid written directly in format 2 (tests/cli/make_test_grid.py).
"""
import os

import h5py
import numpy as np

import make_test_grid as M
from clitest import EXIT_FILE, EXIT_OK, Checks, make_grid, parse_csv, run, tmpdir

t = Checks("cli-upgrade")
d = tmpdir()

# Format 1: phases and remnants as indices into key tables (in an order of the file's own), the
# datasets' old names, group attribute Z, units as free text (not checked by the version-1 reader).
V1_PHASE_KEYS = ["rgb", "ms", "cheb", "subgiant", "eagb", "tpagb", "post_agb", "wd", "bsg", "rsg"]
V1_REMNANT_KEYS = ["co_wd", "none", "ns", "bh", "one_wd"]
V1_NAMES = {"log_age_yr": ("log_age", "log10 yr"), "log_l_lsun": ("log_L", "log10 Lsun"),
            "log_teff_k": ("log_Teff", "log10 K"), "log_r_rsun": ("log_R", "log10 Rsun"),
            "mass_msun": ("mass", "Msun"), "he_core_mass_msun": ("he_core_mass", "Msun"),
            "co_core_mass_msun": ("co_core_mass", "Msun")}


def write_v1(path, phase_keys=V1_PHASE_KEYS):
    sdt = h5py.string_dtype("utf-8")
    groups, n_eep_max = M.grid_content()
    with h5py.File(path, "w") as f:
        f.attrs["format"] = "hrtrail-track-grid"
        f.attrs["format_version"] = np.int32(1)
        f.attrs["z_ref"] = M.Z_REF
        f.attrs["created_by"] = "tests/cli/test_upgrade.py (format 1)"
        f.attrs["description"] = "small three-route test grid for the hrtrail command, format 1"
        f.create_dataset("phase_keys", data=np.array(phase_keys, dtype=object), dtype=sdt)
        f.create_dataset("remnant_keys", data=np.array(V1_REMNANT_KEYS, dtype=object), dtype=sdt)
        M.write_routes(f, sdt)
        mg = f.create_group("metallicity")
        for iz, grp in enumerate(groups):
            g = mg.create_group(str(iz))
            g.attrs["Z"] = grp["z"]
            nm = len(grp["initial_mass_msun"])
            g.create_dataset("initial_mass", data=grp["initial_mass_msun"]).attrs["units"] = "Msun"
            g.create_dataset("route", data=grp["route"])
            g.create_dataset("n_eep", data=grp["n_eep"])
            g.create_dataset("remnant", data=np.array([V1_REMNANT_KEYS.index(k) for k in grp["remnant"]], dtype="<i4"))
            g.create_dataset("remnant_mass", data=grp["remnant_mass_msun"]).attrs["units"] = "Msun"
            g.create_dataset("route_boundary_mass", data=np.array(M.ROUTE_BOUNDARIES)).attrs["units"] = "Msun"
            for key, (old, units) in V1_NAMES.items():
                g.create_dataset(old, data=grp["q"][key]).attrs["units"] = units
            phase = np.full((nm, n_eep_max), -1, dtype="<i4")  # the old writer left -1 beyond n_eep
            for i, keys in enumerate(grp["phase"]):
                phase[i, :len(keys)] = [phase_keys.index(k) for k in keys]
            g.create_dataset("phase", data=phase)


old = os.path.join(d, "grid-v1.h5")
write_v1(old)
direct = make_grid(d)  # the same grid, format 2
new = os.path.join(d, "grid-upgraded.h5")

# ---- a format-1 file is refused with the library's message, which names the upgrade
for args in (["grid", "info", old], ["grid", "check", old], ["grid", "info", old, "--json"],
             ["at", "--grid", old, "--mass", "1", "--age", "1Gyr"]):
    rc, out, err = run(args)
    what = " ".join(a.replace(d, "TMP") for a in args)
    t.eq((rc, out), (EXIT_FILE, ""), "%s: exit code of a file problem, nothing on stdout" % what)
    t.ok("format_version 1" in err and "hrtrail grid upgrade" in err and old in err and err.count("\n") == 1,
         "%s: one line naming the file, its version and the upgrade: %r" % (what, err))

# ---- the conversion
rc, out, err = run(["grid", "upgrade", old, new])
t.eq((rc, err), (EXIT_OK, ""), "grid upgrade: exit code, nothing on stderr")
n_tracks = sum(len(ms) for _, rm in M.GROUPS for ms in rm)
t.eq(out.count("\n"), 1, "grid upgrade prints one line: %r" % out)
for w in (old, new, "grid format 1", "grid format 2", "%d tracks" % n_tracks, "%d metallicities" % len(M.GROUPS),
          "%d routes" % len(M.ROUTES)):
    t.ok(w in out, "the line says %r: %r" % (w, out))
rc, out, err = run(["grid", "info", new])
t.eq(rc, EXIT_OK, "the converted grid opens (%s)" % err)

# ---- the converted file holds the format-2 layout, the values bit for bit (h5py reads both)
with h5py.File(new, "r") as a, h5py.File(direct, "r") as b:
    t.eq(int(a.attrs["format_version"]), 2, "converted: format_version 2")
    t.ok("converted_from" in a.attrs and "1" in str(a.attrs["converted_from"]), "converted: converted_from says so")
    t.eq(a.attrs["description"], "small three-route test grid for the hrtrail command, format 1",
         "converted: the provenance attributes are kept")
    codes = {k.decode(): int(c) for c, k in zip(a["phases/code"][()], a["phases/key"][()])}
    t.eq({k: codes[k] for k in M.PHASE_CODE if k in codes}, {k: c for k, c in M.PHASE_CODE.items() if k in codes},
         "converted: phase codes are hrtrail's (tracks/FORMAT.md)")
    for iz in range(len(M.GROUPS)):
        ga, gb = a["metallicity/%d" % iz], b["metallicity/%d" % iz]
        t.eq(float(ga.attrs["z"]), float(gb.attrs["z"]), "group %d: attribute z" % iz)
        ne = gb["n_eep"][()]
        t.ok(np.array_equal(ga["n_eep"][()], ne), "group %d: n_eep" % iz)
        for name in ("initial_mass_msun", "route", "remnant", "route_boundary_mass_msun"):
            t.ok(np.array_equal(ga[name][()], gb[name][()]), "group %d: %s" % (iz, name))
            t.eq(ga[name].attrs.get("units"), gb[name].attrs.get("units"), "group %d: units of %s" % (iz, name))
        t.ok(np.array_equal(ga["remnant_mass_msun"][()], gb["remnant_mass_msun"][()], equal_nan=True),
             "group %d: remnant_mass_msun" % iz)
        for name in list(V1_NAMES) + ["phase"]:
            same = all(np.array_equal(ga[name][i, :n], gb[name][i, :n]) for i, n in enumerate(ne))
            t.ok(same, "group %d: %s equal bit for bit within the valid EEPs" % (iz, name))
            t.eq(ga[name].dtype.kind, gb[name].dtype.kind, "group %d: %s of the same kind" % (iz, name))
            t.eq(ga[name].attrs.get("units"), gb[name].attrs.get("units"), "group %d: units of %s" % (iz, name))

# ---- the converted grid answers as the grid written in format 2, bit for bit
masses = "0.7,0.8,1,1.25,1.4,2,2.3,3,5,6,9,12,20,25"
ages = "1Myr,30Myr,300Myr,1Gyr,2.5Gyr,8Gyr,30Gyr"
for z in ("0.006", "0.01", "0.02"):
    args = ["at", "--mass", masses, "--age", ages, "--z", z, "--keep-going", "--csv"]
    ra, out_a, _ = run(args + ["--grid", new])
    rb, out_b, _ = run(args + ["--grid", direct])
    t.eq(ra, rb, "at --z %s: the same exit code" % z)
    t.ok(len(parse_csv(out_b)) == 14 * 7, "at --z %s: every star printed" % z)
    t.ok(out_a == out_b, "at --z %s on the converted grid equals the format-2 grid, bit for bit in CSV" % z)
for args in (["isochrone", "--age", "100Myr,1Gyr,5Gyr", "--z", "0.012", "--csv"],
             ["life", "--mass", "0.7,1,3,15,25", "--z", "0.006", "--csv"],
             ["track", "--mass", "2.3", "--z", "0.008", "--csv"]):
    ra, out_a, _ = run(args + ["--grid", new])
    rb, out_b, _ = run(args + ["--grid", direct])
    t.ok(ra == rb == EXIT_OK and out_a == out_b and out_a, "%s: converted and format-2 grid agree" % args[0])

# ---- in place (NEW is OLD): allowed, the file is replaced when complete
inplace = os.path.join(d, "grid-inplace.h5")
write_v1(inplace)
rc, out, err = run(["grid", "upgrade", inplace, inplace])
t.eq(rc, EXIT_OK, "upgrade in place: exit code (%s)" % err)
ra, out_a, _ = run(["at", "--grid", inplace, "--mass", masses, "--age", "1Gyr", "--csv"])
rb, out_b, _ = run(["at", "--grid", direct, "--mass", masses, "--age", "1Gyr", "--csv"])
t.ok(ra == EXIT_OK and out_a == out_b, "upgraded in place: the same answers")

# ---- a format-1 file the conversion cannot read: the library's message, nothing written
bad = os.path.join(d, "grid-v1-bad.h5")
write_v1(bad, phase_keys=V1_PHASE_KEYS + ["red_clump"])  # a phase key hrtrail does not know
out_path = os.path.join(d, "grid-bad-upgraded.h5")
rc, out, err = run(["grid", "upgrade", bad, out_path])
t.eq((rc, out), (EXIT_FILE, ""), "unreadable format-1 file: exit code, nothing on stdout")
t.ok("phase_keys" in err and "red_clump" in err, "unreadable format-1 file: the message names the table: %r" % err)
t.ok(not os.path.exists(out_path) and not [x for x in os.listdir(d) if ".tmp" in x],
     "unreadable format-1 file: nothing written, no temporary file left")
t.finish()
