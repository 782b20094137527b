#!/usr/bin/python3
"""hrtrail at: states of stars, compared with the library (ctypes), with the grid file (h5py) and with track/life."""
import math

import h5py

from clitest import (EXIT_OK, EXIT_RANGE, EXIT_USAGE, STATE_KEYS, Checks, Lib, json_number, make_grid, num,
                     parse_csv, read_records, run, same_number, tmpdir)

t = Checks("cli-at")
d = tmpdir()
grid = make_grid(d)
G = ["--grid", grid]
lib = Lib()
g = lib.open(grid)


def check_state_row(row, st, what, from_json=False):
    """Every number of a CSV/JSON row equals the library's state bit for bit (%.17g round-trips)."""
    for key in STATE_KEYS:
        v = json_number(row[key]) if from_json else num(row[key])
        want = getattr(st, key)
        if from_json and not math.isfinite(want):
            want = float("nan")  # JSON null: undefined or infinite
        t.ok(same_number(v, want), "%s: %s = %r, library %r" % (what, key, v, want))
    t.eq(row["phase"], lib.phase_key(st.phase), what + ": phase")
    t.eq(row["route"], g.route_name(st.route), what + ": route")
    t.eq(row["remnant"], lib.remnant_key(st.remnant), what + ": remnant")


# one star, CSV and JSON, against hrt_eval
masses, ages = [1.0, 2.3, 4.0, 12.0], [1e7, 8e8, 3e9]
z = 0.008
rc, out, err = run(["at"] + G + ["--mass", ",".join(map(str, masses)), "--z", str(z), "--age", "10Myr,800Myr,3Gyr",
                                 "--csv"])
t.eq(rc, EXIT_OK, "at --csv exit code (%s)" % err)
rows = parse_csv(out)
t.eq(len(rows), len(masses) * len(ages), "every mass at every age")
pairs = [(m, a) for m in masses for a in ages]
lib_states = g.eval([m for m, _ in pairs], [z] * len(pairs), [a for _, a in pairs])
for row, (m, a), st in zip(rows, pairs, lib_states):
    t.eq(st.status, 0, "library evaluates %g Msun at %g yr" % (m, a))
    check_state_row(row, st, "at %g Msun %g yr (csv)" % (m, a))

rc, out, err = run(["at"] + G + ["--mass", "2.3", "--z", "0.008", "--age", "800Myr", "--json"])
t.eq(rc, EXIT_OK, "at --json exit code")
doc = read_records(out)  # a list of records: pandas.read_json reads it as it is
st = g.eval([2.3], [0.008], [8e8])[0]
check_state_row(doc[0], st, "at 2.3 Msun 800 Myr (json)", from_json=True)
rc, out, err = run(["at"] + G + ["--mass", "1,2.3", "--z", "0.008", "--age", "800Myr,2Gyr", "--json"])
t.eq(len(read_records(out)), 4, "at --json: one record a star")

# the human table: units in the header, the phase explained
rc, out, err = run(["at"] + G + ["--mass", "2.3", "--z", "0.008", "--age", "800Myr"])
t.eq(rc, EXIT_OK, "table exit code")
head = out.splitlines()[0]
for unit in ("M_init [Msun]", "age [Myr]", "log L [Lsun]", "log Teff [K]", "log R [Rsun]", "log g [cm/s2]",
             "M now [Msun]", "He core [Msun]", "CO core [Msun]"):
    t.ok(unit in head, "table header has %r" % unit)
t.ok("%.4f" % st.log_l_lsun in out and "%.4f" % st.log_teff_k in out, "table shows log L and log Teff to 4 decimals")
t.ok("phases: %s = " % lib.phase_key(st.phase) in out, "table explains the phase key")

# ages with units all mean the same
outs = set()
for a in ("800Myr", "8e8", "0.8Gyr", "800000kyr", "800 Myr", "8e8yr"):
    rc, out, err = run(["at"] + G + ["--mass", "2.3", "--z", "0.008", "--age", a, "--csv"])
    outs.add(out)
t.eq(len(outs), 1, "800Myr, 8e8, 0.8Gyr, 800000kyr, '800 Myr' and 8e8yr give the same answer")

# --feh X is Z = Z_ref 10^X
rc, out1, _ = run(["at"] + G + ["--mass", "1.5", "--feh", "-0.2", "--age", "2Gyr", "--csv"])
zf = g.z_ref() * 10 ** -0.2
st = g.eval([1.5], [zf], [2e9])[0]
check_state_row(parse_csv(out1)[0], st, "at --feh -0.2")
# default Z: the grid's Z_ref
rc, out2, _ = run(["at"] + G + ["--mass", "1.5", "--age", "2Gyr", "--csv"])
t.ok(same_number(num(parse_csv(out2)[0]["z"]), g.z_ref()), "default Z is the grid's Z_ref")

# at a grid track's own mass and an EEP's own age, the answer is the grid file's value (h5py reads it)
with h5py.File(grid, "r") as f:
    grp = f["metallicity/1"]
    zg = float(grp.attrs["z"])
    im, j = 3, 10  # 1.4 Msun, a subgiant EEP
    mass = float(grp["initial_mass_msun"][im])
    age = 10 ** float(grp["log_age_yr"][im, j])
    # the file's datasets are named as the command's columns (the vocabulary of tracks/FORMAT.md)
    names = ("log_l_lsun", "log_teff_k", "mass_msun", "he_core_mass_msun", "co_core_mass_msun")
    want = {k: float(grp[k][im, j]) for k in names}
    codes = dict(zip(f["phases/code"][()], (k.decode() for k in f["phases/key"][()])))
    phase = codes[grp["phase"][im, j]]
rc, out, err = run(["at"] + G + ["--mass", repr(mass), "--z", repr(zg), "--age", repr(age), "--csv"])
row = parse_csv(out)[0]
for key in names:
    t.close(num(row[key]), want[key], 1e-9, "grid value %s of track %d EEP %d" % (key, im, j), abs_=1e-12)
t.eq(row["phase"], phase, "grid phase at track %d EEP %d" % (im, j))
t.close(num(row["eep"]), float(j), 1e-9, "EEP index at a grid EEP")

# before the ZAMS: not an error, phase pre_ms, flagged, nan quantities
rc, out, err = run(["at"] + G + ["--mass", "1", "--age", "1Myr", "--csv"])
row = parse_csv(out)[0]
t.eq(rc, EXIT_OK, "pre-ZAMS star is not an error")
t.eq(row["phase"], "pre_ms", "pre-ZAMS phase")
t.ok("not-modelled" in row["flags"] and math.isnan(num(row["log_l_lsun"])), "pre-ZAMS flag and nan luminosity")
# after the track: the remnant
rc, out, err = run(["at"] + G + ["--mass", "1", "--age", "20Gyr", "--json"])
s0 = read_records(out)[0]
t.eq((s0["phase"], s0["remnant"]), ("wd", "co_wd"), "1 Msun at 20 Gyr is a CO white dwarf")
t.ok("remnant" in s0["flags"], "remnant flag")

# CSV input: names, a feh column, units in the age column, standard input, comments
text = ("# invented survey\nname,initial_mass_msun,feh,age_yr\nAlpha,1.2,-0.1,2Gyr\n\"Beta, the second\",3.0,0.1,150Myr\n"
        "Gamma,15,0,5Myr\n")
rc, out, err = run(["at"] + G + ["--input", "-", "--csv"], stdin=text)
t.eq(rc, EXIT_OK, "at --input - exit code (%s)" % err)
rows = parse_csv(out)
t.eq([r["name"] for r in rows], ["Alpha", "Beta, the second", "Gamma"], "names carried through, quoting kept")
want = g.eval([1.2, 3.0, 15.0], [g.z_ref() * 10 ** x for x in (-0.1, 0.1, 0.0)], [2e9, 1.5e8, 5e6])
for r, st in zip(rows, want):
    check_state_row(r, st, "CSV input star " + r["name"])
# a column the file lacks comes from the option
rc, out, err = run(["at"] + G + ["--input", "-", "--age", "1Gyr", "--z", "0.02", "--csv"],
                   stdin="initial_mass_msun\n1\n2\n")
rows = parse_csv(out)
st = g.eval([1.0, 2.0], [0.02, 0.02], [1e9, 1e9])
t.ok(len(rows) == 2 and all(same_number(num(r["log_l_lsun"]), s.log_l_lsun) for r, s in zip(rows, st)),
     "CSV without age/z columns uses --age and --z")
# z and feh columns: one of them per line; a line with neither takes --z
text = "initial_mass_msun,age_yr,z,feh\n1,1e9,0.008,\n1,1e9,,0.1\n1,1e9,,\n"
rc, out, err = run(["at"] + G + ["--input", "-", "--z", "0.02", "--csv"], stdin=text)
t.eq(rc, EXIT_OK, "z and feh columns, one value per line: exit code (%s)" % err)
want = g.eval([1.0] * 3, [0.008, g.z_ref() * 10 ** 0.1, 0.02], [1e9] * 3)
for r, st in zip(parse_csv(out), want):
    check_state_row(r, st, "z or feh per line")
# the output of 'at --csv' reads back as input (its other columns are ignored)
rc, first, _ = run(["at"] + G + ["--mass", "1.1,3", "--z", "0.01", "--age", "300Myr", "--csv"])
rc, again, err = run(["at"] + G + ["--input", "-", "--csv"], stdin=first)
t.eq((rc, again), (EXIT_OK, first), "'at --csv' output read back by 'at --input' gives the same rows (%s)" % err)
# both z and feh on one line: refused, naming the file and line (exit code of bad input values)
rc, out, err = run(["at"] + G + ["--input", "-", "--csv"], stdin="initial_mass_msun,age_yr,z,feh\n1,1e9,0.01,\n1,1e9,0.01,0.1\n")
t.eq((rc, out), (EXIT_USAGE, ""), "z and feh on one line: exit code, nothing on stdout")
t.ok("standard input line 3" in err and "both z" in err and "feh" in err, "z and feh on one line: message %r" % err)
# old spellings of the columns (version 0.1) are refused with the expected names
for head, bad, want in (("mass,age_yr", "mass", "initial_mass_msun"), ("initial_mass_msun,age_yr,Z", "Z", "z"),
                        ("initial_mass_Msun,age_yr", "initial_mass_Msun", "initial_mass_msun"),
                        ("initial_mass_msun,age", "age", "age_yr")):
    rc, out, err = run(["at"] + G + ["--input", "-", "--csv"], stdin=head + "\n" + ",".join(["1"] * len(head.split(","))) + "\n")
    t.eq((rc, out), (EXIT_USAGE, ""), "old column %r: exit code, nothing on stdout" % bad)
    t.ok("'%s'" % bad in err and "'%s'" % want in err and "initial_mass_msun" in err and "age_yr" in err,
         "old column %r: message names it, today's name and the columns: %r" % (bad, err))
rc, out, err = run(["at"] + G + ["--input", "-", "--csv"], stdin="star_mass,age_yr\n1,1e9\n")
t.ok(rc == EXIT_USAGE and "initial_mass_msun" in err and "age_yr" in err and "z or feh" in err,
     "a required column missing: the message lists the expected names: %r" % err)

# --keep-going: every star printed, failures flagged, exit code of the first failure
rc, out, err = run(["at"] + G + ["--mass", "1,90,2", "--age", "1Gyr", "--keep-going", "--csv"])
rows = parse_csv(out)
t.eq(rc, EXIT_RANGE, "--keep-going exit code")
t.eq([r["status"] for r in rows][1] != "ok", True, "--keep-going marks the failed star")
t.eq([r["status"] for r in rows][0::2], ["ok", "ok"], "--keep-going keeps the good stars")
t.ok(math.isnan(num(rows[1]["log_l_lsun"])) and num(rows[1]["initial_mass_msun"]) == 90.0,
     "failed star: its inputs and nan values")
t.ok("--mass 90" in err, "--keep-going still says why")

# at agrees with track --ages and with life's timetable
rc, out, err = run(["track"] + G + ["--mass", "2.3", "--z", "0.008", "--ages", "10Myr,800Myr,3Gyr", "--csv"])
trows = parse_csv(out)
rc, out, err = run(["at"] + G + ["--mass", "2.3", "--z", "0.008", "--age", "10Myr,800Myr,3Gyr", "--csv"])
arows = parse_csv(out)
t.eq(trows, arows, "at and track --ages print identical rows (hrt_eval is hrt_star_at bit for bit)")
rc, out, err = run(["life"] + G + ["--mass", "2.3", "--z", "0.008", "--json"])
phases = [p for p in read_records(out) if p["record"] == "phase"]
for r in arows:
    a = num(r["age_yr"])
    inside = [p["key"] for p in phases
              if p["start_yr"] <= a < (p["end_yr"] if p["end_yr"] is not None else math.inf)]
    t.eq(inside, [r["phase"]], "the phase 'at' gives at %g yr is the one of life's timetable" % a)
    span = [p for p in phases if p["key"] == r["phase"]][0]
    t.ok(same_number(num(r["phase_start_yr"]), span["start_yr"]), "phase start agrees with life at %g yr" % a)

# --interp: the library opened with the same interpolation gives the same numbers
for name, code in (("linear", 1), ("cspline", 2), ("akima", 3)):
    rc, out, err = run(["at"] + G + ["--interp", name, "--mass", "1.25", "--z", "0.01", "--age", "2Gyr", "--csv"])
    gi = lib.open(grid, code)
    st = gi.eval([1.25], [0.01], [2e9])[0]
    check_state_row(parse_csv(out)[0], st, "at --interp " + name)
    gi.close()
rc, lin, _ = run(["at"] + G + ["--interp", "linear", "--mass", "1.25", "--z", "0.01", "--age", "2Gyr", "--csv"])
rc, ste, _ = run(["at"] + G + ["--mass", "1.25", "--z", "0.01", "--age", "2Gyr", "--csv"])
t.ok(lin != ste, "--interp linear differs from steffen between the tracks")
g.close()
t.finish()
