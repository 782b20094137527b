#!/usr/bin/python3
"""Option syntax (GNU getopt_long, glibc; from memory): a long option by any unique prefix, its value
as --opt=value or --opt value; short options bundled (-kj4) and with their value attached (-m1);
'--' ends the options; an ambiguous prefix is refused, naming what it may be."""
import os

from clitest import EXIT_FILE, EXIT_OK, EXIT_USAGE, Checks, make_grid, run, tmpdir

t = Checks("cli-options")
d = tmpdir()
grid = make_grid(d)
G = ["--grid", grid]

# the same question asked in every spelling gives the same answer
ref = run(["at"] + G + ["--keep-going", "--mass", "1,2", "--age", "1Gyr", "--csv"])
t.eq(ref[0], EXIT_OK, "reference run (%s)" % ref[2])
spellings = [
    ["at", "--grid=" + grid, "--keep-going", "--mass=1,2", "--age=1Gyr", "--csv"],  # --opt=value
    ["at"] + G + ["-k", "-m", "1,2", "-a", "1Gyr", "--csv"],  # short options, values apart
    ["at"] + G + ["-km1,2", "-a1Gyr", "--csv"],  # bundled, values attached
    ["at"] + G + ["-km", "1,2", "-a", "1Gyr", "--csv"],  # bundled, the last one's value apart
    ["at"] + G + ["--keep", "--ma", "1,2", "--ag=1Gyr", "--cs"],  # unique prefixes
    ["at", "--gr", grid, "--keep-going", "--mass", "1,2", "--age", "1Gyr", "--csv"],
    ["--gr", grid, "at", "--keep-going", "--mass", "1,2", "--age", "1Gyr", "--csv"],  # before the command
]
for args in spellings:
    rc, out, err = run(args)
    t.eq((rc, out, err), ref, "'hrtrail %s' is the reference run" % " ".join(a.replace(d, "TMP") for a in args))

# a value that starts with '-' (a negative [Fe/H]) is taken as the value of the option before it
r1 = run(["at"] + G + ["--mass", "1", "--age", "1Gyr", "--feh", "-0.2", "--json"])
r2 = run(["at"] + G + ["--mass", "1", "--age", "1Gyr", "--feh=-0.2", "--json"])
t.ok(r1[0] == EXIT_OK and r1 == r2, "--feh -0.2 is --feh=-0.2 (%s)" % r1[2])

# '--' ends the options: what follows is an argument even if it looks like an option
rc, out, err = run(["at"] + G + ["--mass", "1", "--age", "1Gyr", "--", "--csv"])
t.ok(rc == EXIT_USAGE and "unexpected argument '--csv'" in err and out == "", "-- ends the options (%s)" % err)
rc, out, err = run(["grid", "info", "--", "--json"], env={"HRTRAIL_GRID": grid})
t.ok(rc == EXIT_FILE and "'--json'" in err and out == "", "after --, --json is the grid file of grid info (%s)" % err)
rc, out, err = run(["grid", "info", "--csv", "--", grid])
t.ok(rc == EXIT_OK and out.startswith("z,feh,"), "grid info -- FILE: the file after -- (%s)" % err)
# a file whose name starts with '-' reaches import after '--'
tracks = os.path.join(d, "tracks")
os.mkdir(tracks)
rc, out, err = run(["track"] + G + ["--mass", "1", "--csv"])
with open(os.path.join(tracks, "-m1.csv"), "w") as f:
    f.write(out)
rc, out, err = run(["import", "--dry-run", "--force", "--map", "initial_mass_msun=initial_mass_msun,z=z", "--json", "--",
                    "-m1.csv"],
                   cwd=tracks)
t.ok(rc == EXIT_OK and '"-m1.csv"' in out, "import -- -m1.csv: the file named like an option is read (%s)" % err)

# refusals: one line, exit 2, what was wrong
cases = [
    (["population"] + G + ["--s", "10", "--age", "1Gyr"], ["'--s' is ambiguous", "--stars", "--sfh", "--seed"]),
    (["at"] + G + ["--mass", "--age", "1Gyr"], ["option --mass needs a value"]),
    (["at"] + G + ["-m"], ["option -m needs a value"]),
    (["at"] + G + ["--age"], ["option --age needs a value"]),
    (["at"] + G + ["--csv=yes"], ["option --csv takes no value"]),
    (["at"] + G + ["--cs=yes"], ["option --csv takes no value"]),
    (["at"] + G + ["-kx"], ["unknown option '-x'", "hrtrail at --help"]),
    (["at"] + G + ["--massive", "1"], ["unknown option '--massive'"]),
    (["--bogus", "at"], ["unknown option '--bogus'", "hrtrail --help"]),
    (["--csv", "at"], ["unknown option '--csv'"]),  # the output format belongs to the command
]
for args, words in cases:
    rc, out, err = run(args)
    name = " ".join(a.replace(d, "TMP") for a in args)
    t.eq(rc, EXIT_USAGE, "exit code of 'hrtrail %s'" % name)
    t.eq(out, "", "nothing on stdout for 'hrtrail %s'" % name)
    t.eq(err.count("\n"), 1, "one line on stderr for 'hrtrail %s' (%r)" % (name, err))
    for w in words:
        t.ok(w in err, "'hrtrail %s' says %r: %r" % (name, w, err))

# an exact name wins over the longer names it begins (population: --z, --z-range, --z-uniform)
rc, out, err = run(["population"] + G + ["--stars", "100", "--age", "1Gyr", "--z", "0.014", "--json"])
t.ok(rc == EXIT_OK and '"z": 0.014' in out, "--z is --z, not ambiguous with --z-range (%s)" % err)
# -oFILE, -o FILE and --output=FILE write the same file
outs = []
for spell in (["-o" + os.path.join(d, "a.svg")], ["-o", os.path.join(d, "b.svg")], ["--out=" + os.path.join(d, "c.svg")]):
    rc, out, err = run(["plot"] + G + ["--track", "1"] + spell)
    t.eq(rc, EXIT_OK, "plot %s (%s)" % (spell[0][:6], err))
for n in "abc":
    path = os.path.join(d, n + ".svg")
    outs.append(open(path, "rb").read() if os.path.exists(path) else b"")
t.ok(outs[0] == outs[1] == outs[2] and outs[0].startswith(b"<?xml"), "-oFILE, -o FILE and --out=FILE: the same SVG")
# --help anywhere among the options, short or long, abbreviated
for args in (["track", "-h"], ["track", "--he"], ["track", "--mass", "1", "--help"], ["--help", "track"]):
    rc, out, err = run(args)
    t.ok(rc == EXIT_OK and out.startswith("Usage: hrtrail track"), "%s: the help of track" % " ".join(args))
t.finish()
