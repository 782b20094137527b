#!/usr/bin/python3
"""One vocabulary: every field name the command writes in CSV or JSON is a name of the vocabulary section of
tracks/FORMAT.md (names derived with _sigma, _lo, _hi count as their base name), every name documented there
for the command line is written by some command, and every phase and remnant key the command writes is one of
FORMAT.md's code tables.  JSON tables are lists of flat records that pandas reads as they are.

The vocabulary section is read from the file itself: its table of quantities (rows whose "where" column says
CLI: written by the command; CLI input: only read from input files) and its table of the other fields of the
command's records (every one written by some command).
"""
import io
import json
import os
import re

import pandas  # Debian's python3-pandas

from clitest import EXIT_OK, EXIT_RANGE, Checks, make_grid, run, tmpdir

t = Checks("cli-vocabulary")
d = tmpdir()
grid = make_grid(d)
cores = make_grid(d, "cores")  # grid check reports problems on it
G = ["--grid", grid]
FORMAT_MD = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "tracks", "FORMAT.md")
text = open(FORMAT_MD).read()

# ---------------------------------------------------------------- the documented names

section = text.split("<!-- vocabulary", 1)[1].split("<!-- end vocabulary -->", 1)[0]
quantities, others, where = set(), set(), {}
table = None
for line in section.splitlines():
    cells = [c.strip() for c in line.strip().strip("|").split("|")] if line.startswith("|") else None
    if not cells:
        table = None
        continue
    if cells[0] in ("name", "field"):  # a table's header
        table = quantities if cells[0] == "name" else others
        continue
    m = re.fullmatch(r"`([a-z0-9_]+)`", cells[0])
    if table is None or not m:
        continue
    table.add(m.group(1))
    where[m.group(1)] = [w.strip() for w in cells[-1].split(",")]
t.ok(len(quantities) > 30 and len(others) > 20, "FORMAT.md: both vocabulary tables read (%d quantities, %d other "
     "fields)" % (len(quantities), len(others)))
t.eq(quantities & others, set(), "FORMAT.md: no name in both tables")
documented = quantities | others
written_by_cli = {n for n in quantities if "CLI" in where[n]} | others
codes = text.split("<!-- codes", 1)[1].split("<!-- end codes -->", 1)[0]
phase_keys = set(re.findall(r"^\| \d+ \| `([a-z_]+)` \|.*\|.*\|", codes.split("| remnant code")[0], re.M))
remnant_keys = set(re.findall(r"^\| \d+ \| `([a-z_]+)` \|", codes.split("| remnant code")[1], re.M))
t.ok("ms" in phase_keys and "co_wd" in remnant_keys, "FORMAT.md: code tables read")


def base_name(n):
    """A derived name (NAME_sigma, NAME_lo, NAME_hi) counts as its base name when only that is documented."""
    if n in documented:
        return n
    m = re.fullmatch(r"(.+)_(sigma|lo|hi)", n)
    return m.group(1) if m and m.group(1) in documented else n


# ---------------------------------------------------------------- what the commands write

emitted = {}  # name -> commands writing it
keys_seen = []  # (command, field, value) of every phase or remnant key


def note(cmd, name):
    emitted.setdefault(name, set()).add(cmd)


def keys_of_record(cmd, rec):
    """Phase and remnant keys among a record's values."""
    for f in ("phase", "phase_second", "phase_now"):
        if isinstance(rec.get(f), str) and rec[f]:
            keys_seen.append((cmd, f, rec[f], "phase"))
    if isinstance(rec.get("remnant"), str) and rec["remnant"]:
        keys_seen.append((cmd, "remnant", rec["remnant"], "remnant"))
    if rec.get("record") in ("phase", "remnant") and rec.get("key"):
        keys_seen.append((cmd, "key", rec["key"], rec["record"]))


def walk(cmd, v, path):
    """Every key of a JSON document; every list of objects must be a table of flat records."""
    if isinstance(v, dict):
        for k, x in v.items():
            note(cmd, k)
            walk(cmd, x, path + "." + k)
        keys_of_record(cmd, v)
    elif isinstance(v, list):
        if v and all(isinstance(x, dict) for x in v):
            flat = all(not isinstance(y, dict) and not (isinstance(y, list) and y and isinstance(y[0], dict))
                       for x in v for y in x.values())
            if flat:
                frame = pandas.DataFrame.from_records(v)
                t.ok(len(frame) == len(v), "%s: JSON table %s reads as a DataFrame" % (cmd, path))
        for x in v:
            walk(cmd, x, path + "[]")


def csv_run(cmd, args, want_rc=EXIT_OK):
    rc, out, err = run(args + ["--csv"])
    t.eq(rc, want_rc, "%s --csv: exit code (%s)" % (cmd, err.strip()))
    frame = pandas.read_csv(io.StringIO(out), keep_default_na=False)
    t.ok(len(frame) > 0, "%s --csv: rows" % cmd)
    for c in frame.columns:
        note(cmd, c)
    for rec in frame.to_dict("records"):
        keys_of_record(cmd, rec)


def json_run(cmd, args, table=False, want_rc=EXIT_OK):
    rc, out, err = run(args + ["--json"])
    t.eq(rc, want_rc, "%s --json: exit code (%s)" % (cmd, err.strip()))
    doc = json.loads(out)
    if table:  # one table: a list of records, read by pandas.read_json as it is
        t.ok(isinstance(doc, list) and doc and all(isinstance(r, dict) for r in doc), "%s --json: a list of records" % cmd)
        frame = pandas.read_json(io.StringIO(out), orient="records")
        t.eq(list(frame.columns), list(doc[0]), "%s --json: pandas.read_json reads its columns" % cmd)
        t.eq(len(frame), len(doc), "%s --json: pandas.read_json reads every record" % cmd)
    walk(cmd, doc, cmd)


def both(cmd, args, table=False, want_rc=EXIT_OK):
    csv_run(cmd, args, want_rc)
    json_run(cmd, args, table, want_rc)


stars = "name,initial_mass_msun,age_yr,z\nA,1,4Gyr,0.01\nB,3,200Myr,0.02\nC,90,1Gyr,0.01\n"
for args in (["--mass", "0.7,2.3,15", "--age", "1Myr,800Myr,5Gyr,100Gyr"], ["--input", "-"]):
    for fmt in ("--csv", "--json"):
        rc, out, err = run(["at"] + G + args + ["--keep-going", fmt], stdin=stars)
        t.eq(rc, EXIT_RANGE, "at %s --keep-going: exit code of the failed star" % fmt)
        if fmt == "--csv":
            frame = pandas.read_csv(io.StringIO(out), keep_default_na=False)
            for c in frame.columns:
                note("at", c)
            for rec in frame.to_dict("records"):
                keys_of_record("at", rec)
        else:
            t.ok(len(pandas.read_json(io.StringIO(out), orient="records")) > 0, "at --json: pandas.read_json")
            walk("at", json.loads(out), "at")
both("track", ["track"] + G + ["--mass", "2.3", "--z", "0.008", "--ages", "10Myr,1Gyr,3Gyr"], table=True)
both("isochrone", ["isochrone"] + G + ["--age", "100Myr,1Gyr"], table=True)
both("isochrone --distance", ["isochrone"] + G + ["--age", "1Gyr", "--distance", "500", "--av", "0.2"], table=True)
both("life", ["life"] + G + ["--mass", "1,15"], table=True)
both("codes", ["codes"], table=True)
both("grid info", ["grid", "info", grid])
both("grid check", ["grid", "check", cores], want_rc=4)
both("population", ["population"] + G + ["--stars", "3000", "--age", "1Gyr,10Gyr", "--feh-spread", "0.1",
                                         "-o", os.path.join(d, "pop.svg")])
star = ["--teff", "5700", "--teff-sigma", "80", "--log-l", "0.1", "--log-l-sigma", "0.05"]
both("fit", ["fit"] + G + star, table=True)
catalogue = "name,teff_k,teff_k_sigma,log_l_lsun,log_l_lsun_sigma\nQF-1,5700,80,0.1,0.05\nQF-2,4800,80,1.5,0.05\n"
rc, out, err = run(["fit"] + G + ["--input", "-", "--json"], stdin=catalogue)
t.eq(rc, EXIT_OK, "fit --input --json: exit code (%s)" % err.strip())
walk("fit", json.loads(out), "fit")
both("mainseq", ["mainseq"] + G + ["--teff", "5800,9000", "--teff-sigma", "80", "--mbol", "7.5", "--mbol-sigma", "0.05"],
     table=True)
both("mainseq", ["mainseq"] + G + ["--log-l", "0.5", "--log-l-sigma", "0.05", "--age-max", "10Gyr"], table=True)
both("forecast", ["forecast"] + G + ["--mass", "1.1", "--age", "2Gyr", "--at", "100Myr,6Gyr"])
csv_run("forecast", ["forecast"] + G + ["--mass", "1.1", "--age", "2Gyr"])  # without --at: the keypoints ahead
both("demo", ["demo"] + G + ["-o", os.path.join(d, "demo.svg")])

# import: two tracks in the vocabulary's own columns (no map needed but the mass and Z) and a broken one
tracks = os.path.join(d, "tracks")
os.mkdir(tracks)
for m in (1.0, 1.2):
    rows = []
    for i in range(40):  # invented: a main sequence, a subgiant branch, a contraction and a white dwarf
        ph = "ms" if i < 20 else "subgiant" if i < 28 else "post_rgb" if i < 34 else "wd"
        kp = {0: "zams", 20: "tams", 28: "envelope_loss", 34: "wd_onset"}.get(i, "-")
        age = 1e7 * m ** -2 * (1 + i) ** 2.5
        logl = 0.2 * i / 20 if i < 28 else 0.4 - 0.4 * (i - 28) if i < 34 else -2.0 - 0.1 * (i - 34)
        logt = 3.76 - 0.005 * min(i, 28) + (0.05 * (i - 28) if i >= 28 else 0)
        mass = m if i < 20 else m - 0.02 * (min(i, 34) - 19) * m
        rows.append("%.9g %.6f %.6f %.6f %s %s" % (age, logl, logt, mass, ph, kp))
    with open(os.path.join(tracks, "track_%.1f.txt" % m), "w") as f:
        f.write("age_yr log_l_lsun log_teff_k mass_msun phase keypoints\n" + "\n".join(rows) + "\n")
with open(os.path.join(tracks, "track_1.4.txt"), "w") as f:
    f.write("age_yr log_l_lsun log_teff_k mass_msun phase keypoints\n1e7 0.1 3.76 1.4 ms zams\n2e7 abc 3.76 1.4 ms -\n")
imp = ["import", "--dry-run", "--keep-going", "--force", "--z", "0.014", "--map", "pattern=track_{mass}.txt", tracks]
both("import", imp)

# ---------------------------------------------------------------- the comparisons

undocumented = sorted(n for n in emitted if base_name(n) not in documented)
t.eq(undocumented, [], "every field name written is documented in FORMAT.md's vocabulary (%s)" % {
    n: sorted(emitted[n]) for n in undocumented})
written = {base_name(n) for n in emitted}
never = sorted(written_by_cli - written)
t.eq(never, [], "every name FORMAT.md documents for the command line is written by some command")
upper = sorted(n for n in emitted if n != n.lower())
t.eq(upper, [], "no field name with capitals (z, never Z)")
t.ok(len(keys_seen) > 50, "phase and remnant keys seen (%d)" % len(keys_seen))
bad = sorted({(f, v) for _, f, v, kind in keys_seen
              if v not in (phase_keys if kind == "phase" else remnant_keys)})
t.eq(bad, [], "every phase and remnant key written is one of FORMAT.md's code tables")
t.ok({v for _, _, v, kind in keys_seen if kind == "remnant"} >= {"co_wd", "ns", "none"},
     "remnant keys of white dwarfs, neutron stars and none seen")
t.finish()
