#!/usr/bin/python3
"""hrtrail population --catalogue: the stars read back (h5py for HDF5, csv for CSV) add up to the
summary the same run prints -- born and unborn stars, stars per phase and remnant kind, their
initial masses -- and the summary is the one a run without a catalogue gives; a chunk run's
catalogue holds exactly its chunks' stars.

test_cli_catalogue.py HRTRAIL_EXE GRID (needs h5py, Debian python3-h5py).
"""
import collections
import csv
import json
import os
import subprocess
import sys
import tempfile

import h5py
import numpy as np

exe, grid = os.path.abspath(sys.argv[1]), os.path.abspath(sys.argv[2])
env = dict(os.environ, HRTRAIL_GRID=grid)
failed = 0
d = tempfile.mkdtemp()


def check(ok, what):
    global failed
    print(("ok: " if ok else "FAIL: ") + what)
    failed += not ok


def run(args):
    p = subprocess.run([exe, "population"] + args, capture_output=True, text=True, env=env, cwd=d, timeout=600)
    if p.returncode:
        print(p.stderr)
    return p.returncode, p.stdout


def phase_keys():
    p = subprocess.run([exe, "codes", "--csv"], capture_output=True, text=True, env=env, check=True)
    rows = list(csv.DictReader(p.stdout.splitlines()))
    return rows


# a constant SFH: at 3 Gyr some stars are not yet born; two epochs
spec = ["--stars", "200000", "--seed", "5", "--sfh", "constant", "--sfh-from", "0", "--sfh-to", "4Gyr",
        "--age", "3Gyr,10Gyr", "--json"]
rc, plain = run(spec)
rc2, with_cat = run(spec + ["--catalogue", "stars.h5"])
check(rc == rc2 == 0 and plain == with_cat, "the summary with --catalogue is the summary without it, byte for byte")
doc = json.loads(with_cat)
with h5py.File(os.path.join(d, "stars.h5"), "r") as f:
    check(f["star"].chunks is not None and f["star"].compression == "gzip", "HDF5 columns chunked and deflated")
    cols = {k: f[k][()] for k in ("star", "population_age_yr", "birth_yr", "initial_mass_msun", "z", "age_yr",
                                  "status", "phase", "remnant", "mass_msun", "log_l_lsun")}
for ep in doc["epochs"]:
    T = ep["age_yr"]
    sel = cols["population_age_yr"] == T
    n = int(sel.sum())
    check(n == ep["drawn"] - ep["unborn"], "%g yr: %d rows = %d stars born" % (T, n, ep["drawn"] - ep["unborn"]))
    check(np.array_equal(np.sort(cols["star"][sel]), np.unique(cols["star"][sel])), "%g yr: each star once" % T)
    check(np.allclose(cols["age_yr"][sel], T - cols["birth_yr"][sel], rtol=0, atol=1e-6 * T),
          "%g yr: age = epoch - birth time for every row" % T)
    ok = sel & (cols["status"] == 0)
    check(int(ok.sum()) == ep["evaluated"], "%g yr: %d rows of status 0 = %d evaluated" % (T, ok.sum(), ep["evaluated"]))
    # stars per phase: the catalogue's phase codes counted, against the summary's rows by key
    by_key = collections.Counter()
    phase_code = {}
    for r in phase_keys():
        if r["kind"] == "phase":
            phase_code[int(r["code"])] = r["key"]
    for code, count in zip(*np.unique(cols["phase"][ok], return_counts=True)):
        by_key[phase_code.get(int(code), str(code))] += int(count)
    summary = {r["key"]: r["stars"] for r in ep["phases"]}
    check(dict(by_key) == summary, "%g yr: stars per phase equal the summary's %s" % (T, summary))
    m0 = float(cols["initial_mass_msun"][ok].sum())
    check(abs(m0 - ep["initial_mass_msun"]) <= 1e-9 * ep["initial_mass_msun"],
          "%g yr: initial mass %.10g = summary %.10g (sums rounded to 2^-32 Msun per star)" % (T, m0,
                                                                                               ep["initial_mass_msun"]))
    mass = float(cols["mass_msun"][ok].sum())
    check(abs(mass - ep["mass_msun"]) <= 1e-9 * ep["mass_msun"], "%g yr: mass now %.10g = %.10g" % (T, mass,
                                                                                                  ep["mass_msun"]))

# CSV catalogue of two chunks of a burst: their stars, and the same values as HDF5 to 10 digits
rc, _ = run(["--stars", "20000", "--chunk-size", "4000", "--age", "2Gyr", "--seed", "6", "--chunks", "1:2",
             "--save-summary", "p.part", "--catalogue", "two.csv"])
rc2, _ = run(["--stars", "20000", "--chunk-size", "4000", "--age", "2Gyr", "--seed", "6", "--catalogue", "all.h5"])
with open(os.path.join(d, "two.csv")) as f:
    rows = list(csv.DictReader(f))
with h5py.File(os.path.join(d, "all.h5"), "r") as f:
    star, m0 = f["star"][()], f["initial_mass_msun"][()]
ids = [int(r["star"]) for r in rows]
check(rc == rc2 == 0 and ids == list(range(4000, 12000)), "--chunks 1:2 writes stars 4000 to 11999, in order")
check(all(abs(float(r["initial_mass_msun"]) - m0[int(r["star"])]) <= 1e-9 * m0[int(r["star"])] for r in rows)
      and np.array_equal(star, np.arange(20000)), "the chunk run's stars are the whole run's (same masses)")
# output files (common practice for files a command replaces): a symbolic link is written through
# and stays, a FIFO is refused, a failed run leaves the old file, and no temporary is left beside
small = ["--stars", "500", "--age", "1Gyr", "--seed", "8", "--json"]
with open(os.path.join(d, "real.csv"), "w") as f:
    f.write("old\n")
os.symlink("real.csv", os.path.join(d, "link.csv"))
rc, _ = run(small + ["--catalogue", "link.csv"])
with open(os.path.join(d, "real.csv")) as f:
    first = f.readline()
check(rc == 0 and os.path.islink(os.path.join(d, "link.csv")) and first.startswith("star,"),
      "--catalogue through a symbolic link: the file it names is replaced, the link stays")
os.mkfifo(os.path.join(d, "fifo.csv"))
rc, _ = run(small + ["--catalogue", "fifo.csv"])
check(rc != 0, "--catalogue naming a FIFO is refused")
os.symlink("part.hps", os.path.join(d, "plink.hps"))
rc, _ = run(small + ["--part", "0/2", "--save-summary", "plink.hps"])
check(rc == 0 and os.path.islink(os.path.join(d, "plink.hps")) and os.path.getsize(os.path.join(d, "part.hps")) > 0,
      "--save-summary through a symbolic link: the file it names is written, the link stays")
with open(os.path.join(d, "kept.csv"), "w") as f:
    f.write("kept\n")
rc, _ = run(["--stars", "500", "--age", "1Gyr", "--imf", "no-such-imf", "--catalogue", "kept.csv"])
with open(os.path.join(d, "kept.csv")) as f:
    check(rc != 0 and f.read() == "kept\n", "a run refused before it starts leaves the old catalogue as it was")
left = [n for n in os.listdir(d) if ".tmp" in n]
check(not left, "no temporary file left beside the outputs %s" % left)
print("cli-population-catalogue: %s" % ("all passed" if not failed else "%d failures" % failed))
sys.exit(1 if failed else 0)
