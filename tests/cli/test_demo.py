#!/usr/bin/python3
"""hrtrail demo: prints its tables and writes its plot; its turnoff mass and members agree with the library.

test_demo.py HRTRAIL_EXE LIBHRTRAIL_SO [GRID]: without GRID the demo runs on the small h5py test grid
(--grid); with GRID (the default grid) it runs exactly as a user types it, 'hrtrail demo', with
HRTRAIL_GRID naming that grid.
"""
import os
import subprocess

from clitest import EXIT_OK, EXIT_USAGE, EXTRA, Checks, Lib, make_grid, parse_csv, parse_json, run, tmpdir

t = Checks("cli-demo")
d = tmpdir()
if EXTRA:
    grid = os.path.abspath(EXTRA[0])
    env, args = {"HRTRAIL_GRID": grid}, []
else:
    grid = make_grid(d)
    env, args = {}, ["--grid", grid]
lib = Lib()
g = lib.open(grid)

rc, out, err = run(["demo"] + args, env=env, cwd=d)
t.eq(rc, EXIT_OK, "demo exit code (%s)" % err)
t.eq(err, "", "demo: nothing on stderr")
svg = os.path.join(d, "marrowind-hr.svg")
t.ok(os.path.exists(svg), "demo writes marrowind-hr.svg in the current directory")
for w in ("Marrowind cluster (an invented open cluster)", "age 1.2 Gyr", "Z = 0.014", "Turnoff mass:", "Msun",
          "Members now", "Timetables", "Fates", "white dwarf", "HR diagram written to marrowind-hr.svg",
          "semi-analytic"):
    t.ok(w in out, "demo prints %r" % w)
x = subprocess.run(["xmllint", "--noout", svg], capture_output=True, text=True)
t.eq(x.returncode, 0, "demo SVG is well-formed")
png = os.path.join(d, "demo.png")
t.eq(subprocess.run(["rsvg-convert", "-o", png, svg]).returncode, 0, "demo SVG renders")

rc, out, err = run(["demo", "--json", "-o", os.path.join(d, "demo2.svg")] + args, env=env, cwd=d)
doc = parse_json(out)
cl = doc["cluster"]
t.eq((cl["age_yr"], cl["z"]), (1.2e9, 0.014), "demo cluster age and metallicity")
m_to = cl["turnoff_mass_msun"]
below, above = g.eval([m_to * 0.999, m_to * 1.001], [0.014] * 2, [1.2e9] * 2)
t.ok(lib.phase_key(below.phase) == "ms" and lib.phase_key(above.phase) != "ms",
     "turnoff mass %.6g: 0.1%% below is on the main sequence (%s), above is not (%s)" % (
         m_to, lib.phase_key(below.phase), lib.phase_key(above.phase)))
members = doc["members_now"]
t.ok(len(members) >= 5, "a handful of members (%d)" % len(members))
phases = [m["phase"] for m in members]
t.ok("ms" in phases and "wd" in phases and any(p in phases for p in ("rgb", "cheb", "eagb", "tpagb")),
     "members span the main sequence, giants and a white dwarf: %r" % phases)
states = g.eval([m["initial_mass_msun"] for m in members], [0.014] * len(members), [1.2e9] * len(members))
for m, st in zip(members, states):
    t.ok(m["phase"] == lib.phase_key(st.phase) and (m["log_l_lsun"] is None or m["log_l_lsun"] == st.log_l_lsun),
         "member %s now is the library's state" % m["name"])
life = doc["members_life"]  # the records of hrtrail life, with the member's name
t.eq([x["name"] for x in life if x["record"] == "remnant"], [m["name"] for m in members], "a timetable per member")
t.eq([f["name"] for f in doc["fates"]], [m["name"] for m in members], "a fate per member")
for f in doc["fates"]:
    rem = [x for x in life if x["name"] == f["name"] and x["record"] == "remnant"][0]
    t.eq(f["remnant"], rem["key"], "fate of %s agrees with its timetable" % f["name"])
    t.eq(f["end_age_yr"], rem["start_yr"], "fate of %s: when, as in its timetable" % f["name"])
rc, out, err = run(["demo", "--csv", "-o", os.path.join(d, "demo3.svg")] + args, env=env, cwd=d)
t.eq([r["name"] for r in parse_csv(out)], [m["name"] for m in members], "demo --csv: the members")
# -o -: the SVG alone on standard output (a report after it would break the SVG); with --csv or
# --json two documents would share standard output, so the command refuses before any work.
rc, out, err = run(["demo", "-o", "-"] + args, env=env, cwd=d)
t.eq(rc, EXIT_OK, "demo -o - exit code (%s)" % err)
t.ok(out.startswith("<?xml") and out.rstrip().endswith("</svg>"), "demo -o -: standard output is the SVG alone")
x = subprocess.run(["xmllint", "--noout", "-"], input=out, capture_output=True, text=True)
t.eq(x.returncode, 0, "demo -o -: the SVG on standard output is well-formed")
for fmt in ("--csv", "--json"):
    rc, out, err = run(["demo", fmt, "-o", "-"] + args, env=env, cwd=d)
    t.ok(rc == EXIT_USAGE and out == "" and "-o -" in err, "demo %s -o - refused (%d, %r)" % (fmt, rc, err))
g.close()
t.finish()
