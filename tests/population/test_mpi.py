#!/usr/bin/python3
"""The MPI example over 2 and 3 ranks gives the same summary bytes as one process doing every chunk.

test_mpi.py MPI_POPULATION_EXE GRID: runs the example with mpirun (as root: --allow-run-as-root
--oversubscribe) and compares its standard output (counts, luminosity, mass and a digest of the whole
summary of each epoch) with the serial run. Exit 77 (skipped) when mpirun is not installed.
"""
import os
import shutil
import subprocess
import sys

exe, grid = os.path.abspath(sys.argv[1]), os.path.abspath(sys.argv[2])
mpirun = shutil.which("mpirun")
if not mpirun:
    print("mpirun not found: skipped")
    sys.exit(77)
env = dict(os.environ, HRTRAIL_GRID=grid, OMPI_MCA_rmaps_base_oversubscribe="1")
common = ["--stars", "600000", "--seed", "4242"]


def run(np, extra):
    cmd = [mpirun, "--allow-run-as-root", "--oversubscribe", "-np", str(np), exe] + common + extra
    p = subprocess.run(cmd, capture_output=True, text=True, env=env, timeout=600)
    if p.returncode != 0:
        print("FAIL: %s exited %d\n%s\n%s" % (" ".join(cmd), p.returncode, p.stdout, p.stderr))
        sys.exit(1)
    print("$ %s\n%s%s" % (" ".join(cmd), p.stdout, p.stderr))
    return p.stdout


failed = 0
serial = run(1, ["--serial"])
lines = serial.strip().split("\n")
if len(lines) != 3 or "digest" not in lines[1] or "digest" not in lines[2]:
    print("FAIL: unexpected serial output")
    failed += 1
for np, extra in ((2, []), (3, []), (2, ["--threads", "2"])):
    out = run(np, extra)
    if out == serial:
        print("ok: %d ranks %s: identical to the serial run" % (np, " ".join(extra)))
    else:
        print("FAIL: %d ranks %s differ from the serial run" % (np, " ".join(extra)))
        failed += 1
# a different seed must change the result (the comparison can fail)
other = subprocess.run([mpirun, "--allow-run-as-root", "--oversubscribe", "-np", "1", exe, "--stars", "600000",
                        "--seed", "4243", "--serial"], capture_output=True, text=True, env=env, timeout=600).stdout
if other == serial:
    print("FAIL: another seed gave the same output")
    failed += 1
print("mpi-population: %s" % ("all identical" if not failed else "%d failures" % failed))
sys.exit(1 if failed else 0)
