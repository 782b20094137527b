#!/usr/bin/python3
"""hrtrail grid info / check: compared with the file (h5py); problems listed; progress only on a terminal.
(grid upgrade: tests/cli/test_upgrade.py.)"""
import os
import pty
import subprocess

import h5py

from clitest import EXE, EXIT_FILE, EXIT_OK, Checks, make_grid, parse_csv, parse_json, run, tmpdir

t = Checks("cli-grid")
d = tmpdir()
grid = make_grid(d)

# ---- info against the file itself
rc, out, err = run(["grid", "info", "--grid", grid, "--json"])
t.eq(rc, EXIT_OK, "grid info --json exit code (%s)" % err)
doc = parse_json(out)
with h5py.File(grid, "r") as f:
    zs = [float(f["metallicity/%d" % i].attrs["z"]) for i in range(len(f["metallicity"]))]
    masses = [list(map(float, f["metallicity/%d/initial_mass_msun" % i][:])) for i in range(len(zs))]
    routes = [x.decode() for x in f["routes/names"][:]]
    kps = {r: [x.decode() for x in f["routes/%s/keypoint_names" % r][:]] for r in routes}
    eeps = {r: list(map(int, f["routes/%s/keypoint_eep" % r][:])) for r in routes}
    attrs = {k: f.attrs[k] for k in ("description", "source", "created_by")}
    zref = float(f.attrs["z_ref"])
t.eq([m["z"] for m in doc["metallicities"]], zs, "info: metallicities")
t.eq([[x["initial_mass_msun"] for x in m["tracks"]] for m in doc["metallicities"]], masses, "info: masses")
t.eq([r["route"] for r in doc["routes"]], routes, "info: routes")
t.eq({r["route"]: [k["keypoint"] for k in r["keypoints"]] for r in doc["routes"]}, kps, "info: keypoint names")
t.eq({r["route"]: [k["eep"] for k in r["keypoints"]] for r in doc["routes"]}, eeps, "info: keypoint EEPs")
got = {a["attribute"]: a["value"] for a in doc["attributes"]}
t.eq({k: got.get(k) for k in attrs}, attrs, "info: provenance attributes")
t.eq(doc["z_ref"], zref, "info: z_ref")
t.eq(doc["file_bytes"], os.path.getsize(grid), "info: file size")
t.ok(doc["memory_bytes"] > 0, "info: memory size")
t.eq([m["route_boundary_mass_msun"] for m in doc["metallicities"]], [[2.2, 8.0]] * 2, "info: route boundaries")
t.eq([(m["initial_mass_msun_lo"], m["initial_mass_msun_hi"]) for m in doc["metallicities"]],
     [(0.7, 25.0), (0.7, 40.0)], "info: mass ranges")
rc, out, err = run(["grid", "info", grid, "--csv"])
rows = parse_csv(out)
t.eq(len(rows), sum(len(m) for m in masses), "info --csv: one row per track (FILE as an argument)")
t.eq(list(rows[0]), ["z", "feh", "initial_mass_msun", "route", "n_eep"], "info --csv columns")
rc, out, err = run(["grid", "info", "--grid", grid])
for w in ("grid file", grid, "MB on disk", "small three-route test grid", "Z_ref", "[Fe/H]", "low_mass",
          "zams@0", "route boundaries [Msun]", "0.7 0.9 1.1"):
    t.ok(w in out, "info table shows %r" % w)
rc2, out2, _ = run(["grid", "info"], env={"HRTRAIL_GRID": grid})
t.eq((rc2, out2), (rc, out), "HRTRAIL_GRID names the default grid")

# ---- check: a good grid
rc, out, err = run(["grid", "check", grid, "--json"])
doc = parse_json(out)
t.eq(rc, EXIT_OK, "check of a good grid: exit code (%s)" % err)
t.eq((doc["ok"], doc["validator_passed"], doc["problems"]), (True, True, []), "check of a good grid: no problems")
t.eq(doc["tracks_checked"], sum(len(m) for m in masses), "check: every track checked")
t.ok(doc["interpolated_stars_checked"] > 0 and doc["isochrones_checked"] == 16, "check: midpoints and isochrones")
t.eq(err, "", "check: nothing on stderr when stderr is not a terminal")

# ---- check: a grid the validator refuses: its message, group/dataset/index named
bad = make_grid(d, "ages")
rc, out, err = run(["grid", "check", bad])
t.eq(rc, EXIT_FILE, "check of an invalid grid: exit code")
t.ok("validator" in out and "metallicity/1/log_age_yr[2][5]" in out, "check prints the validator's problem: %r" % out)
t.ok("1 problem found" in err, "check: summary on stderr")
rc, out, err = run(["grid", "check", bad, "--csv"])
rows = parse_csv(out)
t.eq([r["where"] for r in rows], ["validator"], "check --csv: the validator's problem")

# ---- check: unphysical cores (a CO core heavier than the helium core) are refused by the validator
cores = make_grid(d, "cores")
rc, out, err = run(["grid", "check", cores, "--json"])
doc = parse_json(out)
t.eq(rc, EXIT_FILE, "check of a grid with nested-core faults: exit code")
t.eq(doc["validator_passed"], False, "the validator refuses a CO core heavier than the helium core")
t.ok(any("co_core_mass_msun" in p["problem"] and "exceeds the helium core" in p["problem"] for p in doc["problems"]),
     "the fault named by its dataset: %r" % doc["problems"])

# ---- check: a route with one track at a metallicity is reported, and masses far from it refused
thin = make_grid(d, "thin")
rc, out, err = run(["grid", "check", thin, "--json"])
doc = parse_json(out)
t.eq(rc, EXIT_FILE, "check of a grid with a thin route: exit code")
t.ok(any("Z = 0.006, route supergiant" in p["where"] and "thin route" in p["problem"] for p in doc["problems"]),
     "the thin route reported: %r" % doc["problems"])
rc, out, err = run(["at", "--grid", thin, "--mass", "9", "--z", "0.006", "--age", "1Myr", "--csv"])
t.ok(rc != EXIT_OK and "no track" in err, "9 Msun, 0.22 dex from the only supergiant track, refused: %r" % err)
rc, out, err = run(["at", "--grid", thin, "--mass", "12", "--z", "0.006", "--age", "1Myr", "--csv"])
rows = parse_csv(out)
t.ok(rc == EXIT_OK and len(rows) == 1 and "extrapolated" in rows[0]["flags"],
     "12 Msun, within half the gap to the next track, extrapolated and flagged")

# ---- progress on stderr: shown on a terminal, never otherwise
def stderr_on_terminal(args):
    """Run hrtrail with a pseudo-terminal as stderr; (process, what it wrote there)."""
    master, slave = pty.openpty()
    p = subprocess.Popen([EXE] + args, stdout=subprocess.PIPE, stderr=slave, stdin=subprocess.DEVNULL)
    os.close(slave)
    chunks = []
    while True:
        try:
            b = os.read(master, 4096)
        except OSError:
            break
        if not b:
            break
        chunks.append(b)
    p.wait()
    os.close(master)
    return p, b"".join(chunks).decode(errors="replace")


p, tty_err = stderr_on_terminal(["grid", "check", grid])
t.eq(p.returncode, EXIT_OK, "check with a terminal on stderr: exit code")
t.ok("checked" in tty_err and "/" in tty_err and "\r" in tty_err, "progress shown on a terminal: %r" % tty_err[:120])
rc, out, err = run(["grid", "check", grid])
t.ok("checked" not in err and err == "", "no progress when stderr is a pipe")

# ---- accuracy (leave one track out): CSV and JSON agree; the worst tracks are tracks of the grid;
# every type unless --interp names one; progress only on a terminal; errors
rc, out, err = run(["grid", "accuracy", grid, "--json", "-j", "2"])
t.eq(rc, EXIT_OK, "grid accuracy --json exit code (%s)" % err)
acc = parse_json(out)
t.ok(acc["seconds"] > 0 and acc["rows"], "accuracy --json: time and rows")
t.eq(sorted({r["interp"] for r in acc["rows"]}), ["akima", "cspline", "linear", "steffen"], "accuracy: every type")
all_masses = {(z, m) for z, ms in zip(zs, masses) for m in ms}
t.ok(all((r["log_l_worst_z"], r["log_l_worst_mass_msun"]) in all_masses for r in acc["rows"]),
     "accuracy: each worst track is a track of the grid")
t.ok(all(r["route"] in routes for r in acc["rows"]), "accuracy: routes named as in the file")
t.ok(all(r["log_teff_median_dex"] <= r["log_teff_p95_dex"] <= r["log_teff_max_dex"] for r in acc["rows"]),
     "accuracy: median <= 95th percentile <= max")
rc, out, err = run(["grid", "accuracy", "--grid", grid, "--csv", "--threads", "1"])
rows = parse_csv(out)
t.eq(len(rows), len(acc["rows"]), "accuracy --csv: as many rows as --json")
same_csv = all(str(r[k]) == str(j[k]) if isinstance(j[k], str) else
               (j[k] is None and r[k] in ("", "nan")) or float(r[k]) == float(j[k])
               for r, j in zip(rows, acc["rows"]) for k in j)
t.ok(same_csv, "accuracy --csv and --json give the same values (1 and 2 threads)")
rc, out, err = run(["grid", "accuracy", grid, "--interp", "linear"])
t.eq(rc, EXIT_OK, "accuracy table exit code (%s)" % err)
t.ok("linear, route low_mass" in out and "steffen" not in out and "time" in out and " s\n" in out,
     "accuracy table: one type, by route, with the time")
rc, out, err = run(["grid", "accuracy", grid, "--threads", "x"])
t.ok(rc != EXIT_OK and "--threads 'x'" in err, "accuracy: --threads must be a number (%s)" % err)
rc, out, err = run(["grid", "info", grid, "--threads", "2"])
t.ok(rc != EXIT_OK and "grid accuracy" in err, "--threads is refused by grid info (%s)" % err)
p, tty_err = stderr_on_terminal(["grid", "accuracy", grid, "--interp", "linear"])
t.ok(p.returncode == EXIT_OK and "tracks dropped and predicted" in tty_err and "\r" in tty_err,
     "accuracy progress shown on a terminal: %r" % tty_err[:120])
rc, out, err = run(["grid", "accuracy", grid, "--interp", "linear"])
t.ok(err == "", "accuracy: no progress when stderr is a pipe")
# across metallicity: this grid's two groups leave none between others to drop
rc, out, err = run(["grid", "accuracy", grid, "--across-z"])
t.ok(rc != EXIT_OK and "across metallicity" in err and "has 2" in err,
     "accuracy --across-z with two metallicities: refused, saying why (%s)" % err)
rc, out, err = run(["grid", "info", grid, "--across-z"])
t.ok(rc != EXIT_OK and "--across-z applies to 'hrtrail grid accuracy' only" in err, "--across-z refused by grid info")

# ---- --store: the error field written into the file (h5py reads it back), then --interp-error
rc, out, err = run(["at", "--grid", grid, "-m", "1.5", "-a", "100Myr", "--interp-error"])
t.ok(rc != EXIT_OK and "stores no interpolation error field" in err and "--store" in err,
     "--interp-error on a grid without a field: refused with the way out (%s)" % err)
rc, out, err = run(["grid", "info", grid, "--store"])
t.ok(rc != EXIT_OK and "--store applies to 'hrtrail grid accuracy' only" in err, "--store refused by grid info")
rc, out, err = run(["grid", "accuracy", grid, "--interp", "linear", "--csv", "--store"])
t.eq(rc, EXIT_OK, "accuracy --store exit code (%s)" % err)
t.ok("error field stored in" in err and grid in err, "accuracy --store says where (%s)" % err)
with h5py.File(grid, "r") as f:
    a = {k: f["accuracy/" + k][:] for k in ("interp", "eep_lo", "eep_hi", "z", "initial_mass_msun", "log_l_error",
                                            "log_teff_error", "log_age_error")}
    names = [x.decode() for x in f["accuracy/interp_names"][:]]
t.eq(sorted({names[k] for k in a["interp"]}), ["linear"], "stored field: the type measured only")
t.ok(len(a["z"]) > 0 and all((a[k] >= 0).all() for k in ("log_l_error", "log_teff_error", "log_age_error")) and
     (a["eep_hi"] > a["eep_lo"]).all(), "stored field: blocks with non-negative errors")
t.ok(all(abs(z - min(zs, key=lambda q: abs(q - z))) < 1e-12 * z for z in a["z"]) and
     all(m in [x for ms in masses for x in ms] for m in a["initial_mass_msun"]),
     "stored field: Z and masses are the grid's tracks")
rc, out, err = run(["at", "--grid", grid, "--interp", "linear", "-m", "1.5", "-a", "100Myr", "--interp-error", "--json"])
t.eq(rc, EXIT_OK, "at --interp-error exit code (%s)" % err)
st = parse_json(out)[0]
t.ok(all(st[k] >= 0 for k in ("err_log_l_dex", "err_log_teff_dex", "err_log_age_dex")), "at --interp-error: columns")
rc, out, err = run(["at", "--grid", grid, "-m", "1.5", "-a", "100Myr", "--interp-error"])
t.ok(rc != EXIT_OK and "steffen" in err, "--interp-error: only the types stored (%s)" % err)
rc, out, err = run(["track", "--grid", grid, "--interp", "linear", "-m", "1.5", "--interp-error", "--csv"])
rows = parse_csv(out)
t.ok(rc == EXIT_OK and "err_log_l_dex" in rows[0], "track --interp-error: columns (%s)" % err)
rc, out, err = run(["isochrone", "--grid", grid, "--interp", "linear", "-a", "1Gyr", "--interp-error", "--csv"])
rows = parse_csv(out)
t.ok(rc == EXIT_OK and "err_log_teff_dex" in rows[0], "isochrone --interp-error: columns (%s)" % err)
t.finish()
