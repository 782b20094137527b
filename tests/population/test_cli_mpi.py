#!/usr/bin/python3
"""hrtrail population under mpirun -np 1, 2 and 3 writes the same JSON and SVG bytes as one
process, for a burst, a constant star-formation history and a metallicity spread; a rank that
fails ends the whole job with one message and a non-zero exit.

test_cli_mpi.py HRTRAIL_EXE GRID: exit 77 (skipped) when mpirun is not installed. As root (CI),
Open MPI needs OMPI_ALLOW_RUN_AS_ROOT and its confirmation; --oversubscribe lets 3 ranks share
2 cores.
"""
import os
import shutil
import subprocess
import sys
import tempfile

exe, grid = os.path.abspath(sys.argv[1]), os.path.abspath(sys.argv[2])
mpirun = shutil.which("mpirun")
if not mpirun:
    print("mpirun not found: skipped")
    sys.exit(77)
env = dict(os.environ, HRTRAIL_GRID=grid, OMPI_ALLOW_RUN_AS_ROOT="1", OMPI_ALLOW_RUN_AS_ROOT_CONFIRM="1",
           OMPI_MCA_rmaps_base_oversubscribe="1")
failed = 0


def check(ok, what):
    global failed
    print(("ok: " if ok else "FAIL: ") + what)
    failed += not ok


def run(np, args, cwd):
    os.makedirs(cwd, exist_ok=True)
    cmd = ([mpirun, "--oversubscribe", "-np", str(np)] if np else []) + [exe, "population"] + args
    p = subprocess.run(cmd, capture_output=True, text=True, env=env, cwd=cwd, timeout=300)
    svg = b""
    if os.path.exists(os.path.join(cwd, "pop.svg")):
        with open(os.path.join(cwd, "pop.svg"), "rb") as f:
            svg = f.read()
    return p.returncode, p.stdout, p.stderr, svg


d = tempfile.mkdtemp()
scenarios = {  # 10 chunks of 3000 stars: a rank gets 3 or 4 of them
    "burst": ["--age", "1Gyr,6Gyr"],
    "constant": ["--sfh", "constant", "--sfh-from", "0", "--sfh-to", "8Gyr", "--age", "8Gyr"],
    "feh-spread": ["--feh-spread", "0.25", "--age", "4Gyr"],
}
for name, spec in scenarios.items():
    args = ["--stars", "30000", "--chunk-size", "3000", "--seed", "99", "--json", "-o", "pop.svg"] + spec
    rc, serial, err, serial_svg = run(0, args, os.path.join(d, name, "serial"))
    check(rc == 0 and b"<svg" in serial_svg[:400],
          "%s: serial run exit 0 and an SVG %s" % (name, err[:200]))
    for np in (1, 2, 3):
        rc, out, err, svg = run(np, args + ["--threads", "1"], os.path.join(d, name, "np%d" % np))
        check(rc == 0 and out == serial and svg == serial_svg,
              "%s: mpirun -np %d: JSON and SVG byte-identical to the serial run (exit %d) %s" % (name, np, rc, err[:300]))

# a rank that fails: rank 1 cannot create its catalogue file (a directory is in the way)
w = os.path.join(d, "failing")
os.makedirs(os.path.join(w, "cat.rank1.csv"))
rc, out, err, _ = run(2, ["--stars", "30000", "--chunk-size", "3000", "--age", "1Gyr", "--catalogue", "cat.csv"], w)
lines = [l for l in err.splitlines() if l.startswith("hrtrail population")]
check(rc != 0 and len(lines) == 1 and "cat.rank1.csv" in lines[0] and out == "",
      "a failing rank ends the job: exit %d, one message %r, no output" % (rc, err[:400]))
# the comparison can fail: another seed gives other bytes
rc, other, err, _ = run(0, ["--stars", "30000", "--chunk-size", "3000", "--seed", "98", "--json"] + scenarios["burst"],
                        os.path.join(d, "other"))
rc0, first, _, _ = run(0, ["--stars", "30000", "--chunk-size", "3000", "--seed", "99", "--json"] + scenarios["burst"],
                       os.path.join(d, "first"))
check(rc == 0 and rc0 == 0 and other != first, "another seed gives another result")
print("cli-population-mpi: %s" % ("all identical" if not failed else "%d failures" % failed))
sys.exit(1 if failed else 0)
