#!/usr/bin/python3
"""hrtrail track, isochrone and life compared with the library (ctypes) and with each other."""
import math

from clitest import (EXIT_OK, STATE_KEYS, Checks, Lib, json_number, make_grid, num, parse_csv, read_records, run,
                     same_number, tmpdir)

t = Checks("cli-track-isochrone-life")
d = tmpdir()
grid = make_grid(d)
G = ["--grid", grid]
lib = Lib()
g = lib.open(grid)


def rows_equal_states(rows, states, what):
    t.eq(len(rows), len(states), what + ": number of rows")
    for i, (r, st) in enumerate(zip(rows, states)):
        bad = [k for k in STATE_KEYS if not same_number(num(r[k]), getattr(st, k))]
        t.ok(not bad, "%s row %d: %s differ from the library" % (what, i, bad))
        t.eq(r["phase"], lib.phase_key(st.phase), "%s row %d phase" % (what, i))


# ---- track at EEPs (the default)
s = g.star(2.3, 0.008)
rc, out, err = run(["track"] + G + ["--mass", "2.3", "--z", "0.008", "--csv"])
t.eq(rc, EXIT_OK, "track --csv exit code (%s)" % err)
rows = parse_csv(out)
rows_equal_states(rows, s.eep_states(), "track at EEPs")
rc, out2, _ = run(["track"] + G + ["--mass", "2.3", "--z", "0.008", "--eeps", "--csv"])
t.eq(out2, out, "--eeps is the default")

# ---- evenly in log age
rc, out, err = run(["track"] + G + ["--mass", "2.3", "--z", "0.008", "--steps", "25", "--json"])
states = read_records(out)  # a list of records, as pandas.read_json reads it
zams, end = s.eep_states()[0].age_yr, s.end_age()
t.eq(len(states), 25, "--steps 25 gives 25 rows")
t.ok(same_number(states[0]["age_yr"], zams) and same_number(states[-1]["age_yr"], end),
     "--steps runs from the ZAMS to the end of the track")
la = [math.log10(x["age_yr"]) for x in states]
steps = [b - a for a, b in zip(la, la[1:])]
t.ok(max(steps) - min(steps) < 1e-9, "--steps are even in log age")
t.eq({(x["route"], x["remnant"]) for x in states}, {(g.route_name(s.eep_states()[0].route),
                                                      lib.remnant_key(s.remnant()[0]))},
     "track JSON: route and remnant")
for x in states[::6]:
    rc_, st = s.at(x["age_yr"])
    t.ok(same_number(x["log_l_lsun"], st.log_l_lsun) and same_number(x["log_teff_k"], st.log_teff_k),
         "track --steps state at %g yr is hrt_star_at's" % x["age_yr"])
rc, out2, err = run(["track"] + G + ["--mass", "2.3", "--z", "0.008", "--steps", "25", "--csv"])
csv_rows = parse_csv(out2)
t.eq([list(x) for x in states[:1]], [list(r) for r in csv_rows[:1]], "JSON records and CSV rows: the same names")
t.ok(all(same_number(json_number(x[k]), num(r[k])) or not math.isfinite(num(r[k]))
         for x, r in zip(states, csv_rows) for k in STATE_KEYS), "JSON records and CSV rows: the same numbers")
rc, out, err = run(["track"] + G + ["--mass", "2.3", "--z", "0.008", "--steps", "4", "--from", "100Myr", "--to",
                                    "2Gyr", "--csv"])
ages = [num(r["age_yr"]) for r in parse_csv(out)]
t.ok(len(ages) == 4 and ages[0] == 1e8 and ages[-1] == 2e9, "--from/--to bound --steps: %r" % ages)
t.close(ages[1], 10 ** (8 + math.log10(20) / 3), 1e-12, "--steps interior age")

# ---- at given ages, past the end too (the remnant)
rc, out, err = run(["track"] + G + ["--mass", "2.3", "--z", "0.008", "--ages", "5Myr,1Gyr,5Gyr", "--csv"])
rows = parse_csv(out)
rows_equal_states(rows, [s.at(a)[1] for a in (5e6, 1e9, 5e9)], "track --ages")
t.eq(rows[-1]["phase"], "wd", "past the track's end the star is its remnant")

# ---- EEP rows restricted by --from/--to
rc, out, err = run(["track"] + G + ["--mass", "2.3", "--z", "0.008", "--from", "1Gyr", "--to", "1.4Gyr", "--csv"])
rows = parse_csv(out)
want = [x for x in s.eep_states() if 1e9 <= x.age_yr <= 1.4e9]
rows_equal_states(rows, want, "EEPs between --from and --to")
t.ok(len(rows) > 0, "some EEPs lie between 1 and 1.4 Gyr")

# ---- human table names the star
rc, out, err = run(["track"] + G + ["--mass", "2.3", "--z", "0.008"])
t.ok(out.startswith("Track of 2.3 Msun at Z = 0.008") and "route giant" in out, "track table title")
s.free()

# ---- isochrones
for age, z in ((1e9, 0.014), (1e8, 0.006)):
    rc, out, err = run(["isochrone"] + G + ["--age", repr(age), "--z", repr(z), "--csv"])
    t.eq(rc, EXIT_OK, "isochrone exit code")
    rows_equal_states(parse_csv(out), g.isochrone(age, z), "isochrone %g yr Z %g" % (age, z))
rc, out, err = run(["isochrone"] + G + ["--age", "100Myr,1Gyr", "--json"])
pts = read_records(out)
n1, n2 = len(g.isochrone(1e8, g.z_ref())), len(g.isochrone(1e9, g.z_ref()))
t.eq(len(pts), n1 + n2, "two isochrones: all points of both")
t.eq(sorted(set(p["age_yr"] for p in pts)), [1e8, 1e9], "age_yr tells the isochrones apart")
# every isochrone point is the star of that mass at that age: 'at' agrees
sample = pts[::7]
masses = ",".join(repr(p["initial_mass_msun"]) for p in sample)
rc, out, err = run(["at"] + G + ["--mass", masses, "--age", "100Myr", "--json"])
at_rows = read_records(out)
for p, r in zip([p for p in sample], at_rows):
    if p["age_yr"] != 1e8:
        continue
    # absolute tolerance 1e-6 dex: the isochrone's mass is a root found numerically (common practice)
    t.close(r["log_l_lsun"], p["log_l_lsun"], 1e-6, "isochrone point %g Msun vs at" % p["initial_mass_msun"],
            abs_=1e-6)

# ---- what an isochrone holds: every modelled mass alive, dense main sequence, phases chosen
rc, out, err = run(["isochrone"] + G + ["--age", "3Gyr", "--z", "0.02", "--csv"])
iso = parse_csv(out)
lo_mass = min(num(r["initial_mass_msun"]) for r in iso)
t.ok(abs(lo_mass - 0.7) < 1e-9, "3 Gyr isochrone starts at the grid's lowest mass, 0.7 Msun: %g" % lo_mass)
ms = [(num(r["initial_mass_msun"]), num(r["log_l_lsun"])) for r in iso if r["phase"] == "ms"]
steps = [abs(b[1] - a[1]) for a, b in zip(ms, ms[1:])]
t.ok(len(ms) > 10 and max(steps) <= 0.02 + 1e-12, "main-sequence neighbours within 0.02 dex in log L (largest "
     "%.4f over %d points)" % (max(steps), len(ms)))
t.ok(all(num(b["initial_mass_msun"]) > num(a["initial_mass_msun"]) for a, b in zip(iso, iso[1:])
         if a["route"] == b["route"]),
     "ordered by initial mass within a route")
t.ok(not any(r["phase"] in ("wd", "ns", "bh") for r in iso), "remnants left out by default")
rc, out, err = run(["isochrone"] + G + ["--age", "3Gyr", "--z", "0.02", "--csv", "--phases", "luminous,remnants"])
with_rem = parse_csv(out)
t.ok(any(r["phase"] == "wd" for r in with_rem) and len(with_rem) > len(iso),
     "--phases luminous,remnants adds the white dwarfs")
rc, out, err = run(["isochrone"] + G + ["--age", "3Gyr", "--z", "0.02", "--csv", "--leave-out", "post_agb,tpagb"])
left = parse_csv(out)
t.ok(not any(r["phase"] in ("post_agb", "tpagb") for r in left) and any(r["phase"] == "rgb" for r in left),
     "--leave-out post_agb,tpagb removes those phases only")
rc, out, err = run(["isochrone"] + G + ["--age", "3Gyr", "--phases", "ms,foo"])
t.ok(rc != EXIT_OK and "'foo' is not a phase key" in err, "an unknown phase key refused: %r" % err.strip())

# ---- life: keypoints, phases, remnant
for m, z in ((2.3, 0.008), (1.0, 0.02), (15.0, 0.014), (0.7, 0.006)):
    s = g.star(m, z)
    rc, out, err = run(["life"] + G + ["--mass", repr(m), "--z", repr(z), "--json"])
    t.eq(rc, EXIT_OK, "life exit code for %g Msun" % m)
    recs = read_records(out)  # one record per keypoint, phase and remnant
    kp = [(k["key"], k["start_yr"]) for k in recs if k["record"] == "keypoint"]
    want = [(n, None if math.isnan(a) else a) for n, a in s.keypoints()]
    t.eq(kp, want, "life keypoints of %g Msun" % m)
    phases = [p for p in recs if p["record"] == "phase"]
    ph = [(p["key"], p["start_yr"], p["end_yr"]) for p in phases]
    wantp = [(lib.phase_key(p), a, None if math.isinf(b) else b) for p, a, b in s.phases()]
    t.eq(ph, wantp, "life phases of %g Msun" % m)
    for p in phases:
        if p["end_yr"] is not None:
            t.ok(same_number(p["duration_yr"], p["end_yr"] - p["start_yr"]), "duration = end - start")
    rem = [r for r in recs if r["record"] == "remnant"]
    t.eq(len(rem), 1, "life: one remnant record")
    kind, rm = s.remnant()
    t.eq(rem[0]["key"], lib.remnant_key(kind), "life remnant kind of %g Msun" % m)
    t.ok(same_number(json_number(rem[0]["remnant_mass_msun"]), rm), "life remnant mass of %g Msun" % m)
    t.ok(same_number(rem[0]["start_yr"], s.end_age()), "life remnant from the end of the track")
    t.eq({r["route"] for r in recs}, {g.route_name(s.eep_states()[0].route)}, "life route of %g Msun" % m)
    t.eq({(r["initial_mass_msun"], r["z"]) for r in recs}, {(m, z)}, "life records name the star")
    rc, out2, err = run(["life"] + G + ["--mass", repr(m), "--z", repr(z), "--csv"])
    rows = parse_csv(out2)
    t.eq([(r["record"], r["key"]) for r in rows], [(x["record"], x["key"]) for x in recs],
         "life --csv has the records of --json")
    t.eq(list(rows[0]), list(recs[0]), "life --csv and --json: the same names")
    s.free()
# known routes and fates of the test grid (make_test_grid.py: boundaries 2.2 and 8 Msun)
rc, out, err = run(["life"] + G + ["--mass", "1,3,15,25", "--z", "0.006", "--csv"])
rows = parse_csv(out)
routes = {num(r["initial_mass_msun"]): r["route"] for r in rows}
t.eq(routes, {1.0: "low_mass", 3.0: "giant", 15.0: "supergiant", 25.0: "supergiant"}, "routes by mass")
fates = {num(r["initial_mass_msun"]): r["key"] for r in rows if r["record"] == "remnant"}
t.eq(fates, {1.0: "co_wd", 3.0: "co_wd", 15.0: "ns", 25.0: "bh"}, "fates by mass")
t.eq(set(r["record"] for r in rows), {"keypoint", "phase", "remnant"}, "life CSV records")
# the truncated 0.7 Msun track: remnant not known
rc, out, err = run(["life"] + G + ["--mass", "0.7"])
t.ok("Fate: unknown" in out and "rgb_tip" in out, "life of a truncated track says the fate is unknown")
rc, out, err = run(["life"] + G + ["--mass", "2.3", "--z", "0.008"])
for w in ("Life of a 2.3 Msun star at Z = 0.008", "route giant", "Keypoints", "age [Myr]", "Phases",
          "duration [Myr]", "main sequence", "Fate: carbon-oxygen white dwarf of"):
    t.ok(w in out, "life table shows %r" % w)
g.close()
t.finish()
