#!/usr/bin/python3
"""Bad inputs: each gives one clear line on stderr naming the argument or file, its exit code, and nothing on stdout."""
import os

from clitest import EXIT_FILE, EXIT_RANGE, EXIT_USAGE, Checks, make_grid, run, tmpdir

t = Checks("cli-errors")
d = tmpdir()
grid = make_grid(d)
bad_ages = make_grid(d, "ages")
bad_format = make_grid(d, "format")
G = ["--grid", grid]

cases = [
    # (arguments, exit code, words the message must contain)
    (["frobnicate"], EXIT_USAGE, ["unknown command 'frobnicate'", "at, track"]),
    (["at", "--mass"], EXIT_USAGE, ["--mass", "needs a value"]),
    (["mainseq"] + G, EXIT_USAGE, ["--teff", "--log-l"]),
    (["mainseq"] + G + ["--teff", "5000,abc"], EXIT_USAGE, ["--teff", "'abc'", "positive"]),
    (["mainseq"] + G + ["--teff", "5000", "--teff-sigma", "-3"], EXIT_USAGE, ["--teff-sigma", "non-negative"]),
    (["mainseq"] + G + ["--teff", "5000", "--flux", "1e-9", "--mbol", "5"], EXIT_USAGE, ["--flux or --mbol"]),
    (["mainseq"] + G + ["--log-l", "0", "--mbol", "5"], EXIT_USAGE, ["needs --teff"]),
    (["mainseq"] + G + ["--teff", "900000"], EXIT_RANGE, ["Teff 900000 K", "no main-sequence star", "spans"]),
    (["mainseq"] + G + ["--log-l", "0", "--age-min", "2Gyr", "--age-max", "1Gyr"], EXIT_USAGE,
     ["--age-max", "above --age-min"]),
    (["at", "--mass", "--age", "1Gyr"], EXIT_USAGE, ["--mass", "needs a value"]),
    (["at", "--bogus", "1"], EXIT_USAGE, ["unknown option '--bogus'", "hrtrail at --help"]),
    (["at"] + G + ["--mass", "-1", "--age", "1Gyr"], EXIT_USAGE, ["--mass '-1'", "positive"]),
    (["at"] + G + ["--mass", "abc", "--age", "1Gyr"], EXIT_USAGE, ["--mass 'abc'", "not a number"]),
    (["at"] + G + ["--mass", "500", "--age", "1Gyr"], EXIT_RANGE, ["--mass 500", "outside the grid", "allowed 0.7 to"]),
    (["at"] + G + ["--mass", "0.1", "--z", "0.006", "--age", "1Gyr"], EXIT_RANGE,
     ["--mass 0.1", "allowed 0.7 to 25 Msun"]),
    (["at"] + G + ["--mass", "1", "--age", "8OOMyr"], EXIT_USAGE, ["--age '8OOMyr'", "not an age", "Myr", "Gyr"]),
    (["at"] + G + ["--mass", "1", "--age", "1 Gigayear"], EXIT_USAGE, ["--age '1 Gigayear'", "not an age"]),
    (["at"] + G + ["--mass", "1", "--age", "-5Myr"], EXIT_USAGE, ["--age '-5Myr'", "negative"]),
    (["at"] + G + ["--mass", "1", "--age", "inf"], EXIT_USAGE, ["--age 'inf'"]),
    (["at"] + G + ["--mass", "0.7", "--age", "100Gyr"], EXIT_RANGE, ["--age 100Gyr", "past the end of its track"]),
    (["at"] + G + ["--mass", "1", "--z", "0.5", "--age", "1Gyr"], EXIT_RANGE,
     ["--z 0.5", "outside the grid", "allowed Z 0.006 to 0.02"]),
    (["at"] + G + ["--mass", "1", "--z", "2", "--age", "1Gyr"], EXIT_USAGE, ["--z '2'", "0 < Z < 1"]),
    (["at"] + G + ["--mass", "1", "--feh", "1.5", "--age", "1Gyr"], EXIT_RANGE, ["--feh 1.5", "[Fe/H]"]),
    (["at"] + G + ["--mass", "1", "--z", "0.01", "--feh", "0", "--age", "1Gyr"], EXIT_USAGE, ["--z or --feh"]),
    (["at"] + G + ["--mass", "1", "--age", "1Gyr", "--interp", "cubic"], EXIT_USAGE,
     ["--interp 'cubic'", "steffen, linear, cspline, akima"]),
    (["at", "--grid", os.path.join(d, "missing.h5"), "--mass", "1", "--age", "1Gyr"], EXIT_FILE,
     ["missing.h5", "No such file"]),
    (["at", "--grid", d, "--mass", "1", "--age", "1Gyr"], EXIT_FILE, ["is a directory"]),
    (["at", "--grid", bad_ages, "--mass", "1", "--age", "1Gyr"], EXIT_FILE, ["grid-ages.h5", "metallicity/1/log_age"]),
    (["at", "--grid", bad_format, "--mass", "1", "--age", "1Gyr"], EXIT_FILE, ["grid-format.h5", "format"]),
    (["at"] + G + ["--input", os.path.join(d, "nope.csv")], EXIT_FILE, ["nope.csv"]),
    (["at"] + G + ["--age", "1Gyr"], EXIT_USAGE, ["--mass"]),
    (["track"] + G + ["--mass", "1", "--steps", "1"], EXIT_USAGE, ["--steps '1'"]),
    (["track"] + G + ["--mass", "1,2"], EXIT_USAGE, ["exactly one --mass"]),
    (["track"] + G + ["--mass", "1", "--steps", "5", "--ages", "1Gyr"], EXIT_USAGE, ["choose one"]),
    (["track"] + G + ["--mass", "0.7", "--ages", "1Gyr,200Gyr"], EXIT_RANGE, ["--ages 200Gyr", "past the end"]),
    (["track"] + G + ["--mass", "60"], EXIT_RANGE, ["--mass 60", "allowed"]),
    (["isochrone"] + G, EXIT_USAGE, ["--age"]),
    (["isochrone"] + G + ["--age", "0"], EXIT_USAGE, ["--age 0", "> 0"]),
    (["isochrone"] + G + ["--age", "1Gyr", "--z", "0.001"], EXIT_RANGE, ["--z 0.001", "allowed Z"]),
    (["life"] + G + ["--mass", "0"], EXIT_USAGE, ["--mass '0'", "positive"]),
    (["life"] + G + ["--mass", "100"], EXIT_RANGE, ["--mass 100", "allowed"]),
    (["plot"] + G, EXIT_USAGE, ["nothing to draw"]),
    (["plot"] + G + ["--track", "1", "--csv"], EXIT_USAGE, ["unknown option '--csv'"]),
    (["plot"] + G + ["--track", "1", "--log-l", "3"], EXIT_USAGE, ["--log-l '3'", "LO,HI"]),
    (["plot"] + G + ["--track", "1", "-o", os.path.join(d, "no-such-dir", "x.svg")], EXIT_FILE,
     ["no-such-dir/x.svg"]),
    (["grid", "inspect"], EXIT_USAGE, ["unknown action 'inspect'"]),
    (["grid"], EXIT_USAGE, ["grid info", "grid check", "grid upgrade"]),
    (["grid", "upgrade", grid], EXIT_USAGE, ["OLD NEW"]),
    (["grid", "upgrade", os.path.join(d, "missing.h5"), os.path.join(d, "new.h5")], EXIT_FILE, ["missing.h5"]),
    (["grid", "upgrade", d, os.path.join(d, "new.h5")], EXIT_FILE, ["is a directory"]),
    (["grid", "upgrade", bad_format, os.path.join(d, "new.h5")], EXIT_FILE, ["format"]),
    (["grid", "upgrade", grid, os.path.join(d, "no-such-dir", "new.h5")], EXIT_FILE, ["no-such-dir"]),
    (["grid", "upgrade", grid, os.path.join(d, "new.h5"), "--json"], EXIT_USAGE, ["--json"]),
    (["grid", "upgrade", "--grid", grid, grid, os.path.join(d, "new.h5")], EXIT_USAGE, ["--grid"]),
    (["grid", "info", os.path.join(d, "missing.h5")], EXIT_FILE, ["missing.h5"]),
    (["grid", "check", os.path.join(d, "missing.h5")], EXIT_FILE, ["missing.h5"]),
    (["demo", "--grid", bad_ages], EXIT_FILE, ["metallicity/1/log_age"]),
    (["demo", "extra"], EXIT_USAGE, ["unexpected argument 'extra'"]),
]
for args, code, words in cases:
    rc, out, err = run(args)
    name = " ".join(a.replace(d, "TMP") for a in args)
    t.eq(rc, code, "exit code of: hrtrail %s" % name)
    t.eq(out, "", "nothing on stdout for: hrtrail %s" % name)
    t.eq(err.count("\n"), 1, "one line on stderr for: hrtrail %s (%r)" % (name, err))
    t.ok(err.startswith("hrtrail"), "message starts with the program name: %r" % err)
    for w in words:
        t.ok(w in err, "message of 'hrtrail %s' mentions %r: %r" % (name, w, err))

# bad CSV input: line and column named
csvfile = os.path.join(d, "stars.csv")
with open(csvfile, "w") as f:
    f.write("name,initial_mass_msun,age_yr\nA,1.0,1Gyr\nB,heavy,1Gyr\n")
rc, out, err = run(["at"] + G + ["--input", csvfile])
t.eq(rc, EXIT_USAGE, "bad CSV mass: exit code")
t.eq(out, "", "bad CSV mass: nothing on stdout")
t.ok("line 3" in err and "'initial_mass_msun'" in err and "'heavy'" in err,
     "bad CSV mass: names line and column: %r" % err)
with open(csvfile, "w") as f:
    f.write("name,initial_mass_msun,age_yr\nA,1.0,1Gyr\nB,90,1Gyr\n")
rc, out, err = run(["at"] + G + ["--input", csvfile])
t.eq(rc, EXIT_RANGE, "CSV star outside the grid: exit code")
t.ok("line 3" in err and "outside the grid" in err, "CSV star outside the grid: message %r" % err)
t.eq(out, "", "CSV star outside the grid: nothing on stdout")
with open(csvfile, "w") as f:
    f.write("name,initial_mass_msun,age_yr\nA,1.0\n")
rc, out, err = run(["at"] + G + ["--input", csvfile])
t.eq(rc, EXIT_FILE, "ragged CSV: exit code")
t.ok("line 2" in err and "2 fields" in err, "ragged CSV: message %r" % err)
t.finish()
