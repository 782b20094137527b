#!/usr/bin/python3
"""hrtrail population and the demo's synthetic cluster: outputs agree with each other, with the
thread count changed, and with their own totals; the density SVG holds the histogram.

test_cli_population.py HRTRAIL_EXE GRID
"""
import csv
import io
import json
import os
import subprocess
import sys
import tempfile

exe, grid = os.path.abspath(sys.argv[1]), os.path.abspath(sys.argv[2])
env = dict(os.environ, HRTRAIL_GRID=grid)
failed = 0


def check(ok, what):
    global failed
    print(("ok: " if ok else "FAIL: ") + what)
    failed += not ok


def run(args, cwd=None):
    p = subprocess.run([exe] + args, capture_output=True, text=True, env=env, cwd=cwd, timeout=600)
    return p.returncode, p.stdout, p.stderr


d = tempfile.mkdtemp()
svg = os.path.join(d, "pop.svg")
base = ["population", "--stars", "200000", "--age", "1Gyr,8Gyr", "--seed", "77"]
rc, out, err = run(base + ["--json", "-o", svg, "--threads", "1"])
check(rc == 0 and err == "", "population --json exit 0, nothing on stderr (no terminal: no progress): %r" % err[:200])
doc = json.loads(out)
ep = doc["epochs"]
check([e["age_yr"] for e in ep] == [1e9, 8e9], "one summary per age")
for e in ep:
    ph = sum(r["stars"] for r in e["phases"])
    rem = sum(r["stars"] for r in e["remnants"] if r["record"] == "remnant")
    check(ph == e["evaluated"] == rem == 200000, "phases and remnant kinds partition the stars at %g yr" % e["age_yr"])
    L = sum(r["l_lsun"] for r in e["phases"])
    # relative tolerance 1e-12: the sums are exact in fixed point, each rounded once to double (common practice)
    check(abs(L / e["l_lsun"] - 1) < 1e-12, "luminosity per phase adds up to the integrated one")
    h = e["hr_histogram"]
    check(sum(map(sum, h["counts"])) + h["outside"] == sum(r["stars"] for r in e["phases"] if r["key"] not in ("ns", "bh")),
          "histogram holds every luminous star")
wd = [next(r["stars"] for r in e["phases"] if r["key"] == "wd") for e in ep]
check(wd[1] > wd[0], "more white dwarfs at 8 Gyr than at 1 Gyr: %r" % wd)
check(ep[1]["turnoff_mass_msun"] < ep[0]["turnoff_mass_msun"], "turnoff mass falls with age")
# phase and remnant keys are hrtrail's (tracks/FORMAT.md, "Phase and remnant codes"); 'none': not a remnant
phase_keys = {"unknown", "pre_ms", "ms", "subgiant", "rgb", "post_rgb", "cheb", "eagb", "tpagb", "post_agb", "bsg",
              "rsg", "wr", "wd", "ns", "bh"}
remnant_keys = {"none", "he_wd", "co_wd", "one_wd", "ns", "bh"}
check(all(r["key"] in phase_keys for e in ep for r in e["phases"]), "phase records use phase keys")
check(all(r["key"] in remnant_keys for e in ep for r in e["remnants"] if r["record"] == "remnant") and
      all(r["stars"] > 0 for e in ep for r in e["remnants"] if r["key"] == "none"),
      "remnant records use remnant keys; 'none' counts the stars that are no remnant")
check(doc["population"]["z"] == 0.014 and "Z" not in doc["population"], "population: z, never Z")
rc2, out2, _ = run(base + ["--json", "-o", svg, "--threads", "2"])
check(rc2 == 0 and out2 == out, "2 threads give the same JSON as 1")
x = subprocess.run(["xmllint", "--noout", svg], capture_output=True)
check(x.returncode == 0, "density SVG well-formed")
s = open(svg).read()
import re  # noqa: E402
counts = [int(c) for c in re.findall(r'class="density" data-count="(\d+)"', s)]
check(sum(counts) == sum(map(sum, ep[0]["hr_histogram"]["counts"])), "density SVG bins hold the first age's histogram")
check('class="isochrone"' in s, "a single burst's density SVG shows its isochrone")
# -o names the density SVG whatever the summary's format: with --json the JSON goes to standard
# output alone and names the SVG file; '-o -' puts the SVG alone on standard output, and is refused
# with --csv or --json (two documents in one stream)
check(doc.get("svg") == svg and out.lstrip().startswith("{"), "--json -o FILE: JSON on stdout, naming the SVG -o wrote")
small = ["population", "--stars", "2000", "--age", "1Gyr", "--threads", "1"]
rc, out, err = run(small + ["-o", "-"])
x = subprocess.run(["xmllint", "--noout", "-"], input=out, capture_output=True, text=True)
check(rc == 0 and out.lstrip().startswith("<") and out.rstrip().endswith("</svg>") and x.returncode == 0,
      "-o -: the SVG alone on stdout, well-formed (no summary after it): %r" % out[-80:])
for fmt in ("--json", "--csv"):
    for args in (small + [fmt, "-o", "-"], ["population", "merge", fmt, "-o", "-", os.path.join(d, "no-such.part")]):
        rc, out, err = run(args)
        check(rc == 2 and out == "" and "-o -" in err, "%s -o -: usage error, nothing on stdout: %r" % (args[1], err))

rc, out, err = run(base + ["--csv"])
rows = list(csv.DictReader(io.StringIO(out)))
check(rc == 0 and {r["record"] for r in rows} == {"phase", "remnant"}, "CSV rows of phases and remnants")
check(sum(float(r["stars"]) for r in rows if r["record"] == "phase" and float(r["age_yr"]) == 1e9) == 200000,
      "CSV phase counts add up")

# composite population with stars outside the grid (brown dwarfs)
rc, out, err = run(["population", "-n", "50000", "--age", "5Gyr", "--sfh", "exponential", "--tau", "2Gyr",
                    "--sfh-to", "10Gyr", "--feh-spread", "0.3", "--mass-range", "0.02,100", "--imf", "chabrier2003",
                    "--json"])
e = json.loads(out)["epochs"][0]
fails = [r for r in e["remnants"] if r["record"] == "failed"]
check(rc == 0 and e["unborn"] > 0 and fails and fails[0]["stars"] == e["drawn"] - e["unborn"] - e["evaluated"],
      "exponential SFH at 5 of 10 Gyr leaves stars unborn; brown dwarfs counted as outside the grid")

# the demo's synthetic cluster is 'hrtrail population' with the same settings
rc, out, err = run(["demo", "--json", "-o", os.path.join(d, "demo.svg")], cwd=d)
dm = json.loads(out)
sc = dm["synthetic_cluster"]
check(rc == 0 and os.path.exists(os.path.join(d, "demo-density.svg")), "demo writes the density SVG")
rc, out, err = run(["population", "--stars", str(sc["stars"]), "--age", "1.2Gyr", "--z", "0.014", "--seed",
                    str(sc["seed"]), "--json"])
pe = json.loads(out)["epochs"][0]
check(pe["phases"] == sc["epochs"][0]["phases"] and pe["remnants"] == sc["epochs"][0]["remnants"],
      "demo's synthetic cluster equals hrtrail population with its settings")
check(any(r["key"] == "wd" for r in pe["phases"]) and any(r["key"] == "rgb" for r in pe["phases"]),
      "the synthetic cluster has giants and white dwarfs")

# usage errors
for args in (["population", "--age", "1Gyr"], ["population", "-n", "10"], ["population", "-n", "10", "--age", "1Gyr",
             "--imf", "nonsense"], ["population", "-n", "1.5", "--age", "1Gyr"],
             ["population", "-n", "10", "--age", "1Gyr", "--imf", "powerlaw"]):
    rc, out, err = run(args)
    check(rc == 2 and out == "" and err.startswith("hrtrail population:"), "usage error %r: exit 2, message" % args[1:])
print("cli-population: %s" % ("all passed" if not failed else "%d failed" % failed))
sys.exit(1 if failed else 0)
