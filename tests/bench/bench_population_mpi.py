#!/usr/bin/python3
"""Benchmark of hrtrail population beyond one process: prints figures, checks nothing.

bench_population_mpi.py HRTRAIL_EXE [--grid GRID] [--stars N] [--big N] [--catalogue N]

  stars per second (per epoch) for 1 and 2 MPI ranks by 1 and 2 threads, wall clock of the
      whole command (grid opening and MPI start included), N stars (default 4e6);
  memory per rank: the largest resident set of each rank, for 1e6 stars and for --big
      stars (default 1e7; 1e8 takes about 100 CPU seconds): bounded if the two agree;
  catalogue write throughput: --catalogue N stars (default 1e6) to HDF5 and CSV, rows per
      second and MB per second, against the same run without a catalogue.
As root, Open MPI needs OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1 (set here).
"""
import argparse
import os
import shutil
import subprocess
import sys
import tempfile
import time

# Run under mpirun, this script measures one rank: it runs the command and prints its peak memory.
if len(sys.argv) > 1 and sys.argv[1] == "--measure-rank":
    import resource
    rc = subprocess.run(sys.argv[2:], stdout=subprocess.DEVNULL).returncode
    rank = os.environ.get("OMPI_COMM_WORLD_RANK", os.environ.get("PMI_RANK", "0"))
    print("rank %s maxrss_kb %d" % (rank, resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss), flush=True)
    sys.exit(rc)

ap = argparse.ArgumentParser(description="hrtrail population: ranks, threads, memory, catalogue throughput")
ap.add_argument("exe")
ap.add_argument("--grid", default=os.environ.get("HRTRAIL_GRID"))
ap.add_argument("--stars", type=float, default=4e6)
ap.add_argument("--big", type=float, default=1e7)
ap.add_argument("--catalogue", type=float, default=1e6)
a = ap.parse_args()
exe = os.path.abspath(a.exe)
env = dict(os.environ, OMPI_ALLOW_RUN_AS_ROOT="1", OMPI_ALLOW_RUN_AS_ROOT_CONFIRM="1",
           OMPI_MCA_rmaps_base_oversubscribe="1")
if a.grid:
    env["HRTRAIL_GRID"] = os.path.abspath(a.grid)
mpirun = shutil.which("mpirun")
work = tempfile.mkdtemp()


def timed(cmd):
    t0 = time.monotonic()
    p = subprocess.run(cmd, capture_output=True, text=True, env=env, cwd=work)
    dt = time.monotonic() - t0
    if p.returncode:
        sys.exit("failed: %s\n%s" % (" ".join(cmd), p.stderr))
    return dt, p.stdout


def launch(ranks, args):
    """Under mpirun; Open MPI binds each rank to one core unless told not to, which would keep a rank's threads on it."""
    return [mpirun, "--oversubscribe", "--bind-to", "none", "-np", str(ranks), exe] + args


pop = ["population", "--age", "10Gyr", "--seed", "11", "--csv"]
print("hrtrail population, %d cores; one epoch; wall clock of the whole command" % os.cpu_count())
print("\nstars per second, %.3g stars:" % a.stars)
print("  %-16s %10s %14s" % ("ranks x threads", "seconds", "stars/s"))
dt, _ = timed([exe] + pop + ["--stars", "%d" % a.stars, "--threads", "1"])
print("  %-16s %10.2f %14.4g" % ("1 x 1 (no MPI)", dt, a.stars / dt))
for ranks in (1, 2):
    if not mpirun:
        break
    for threads in (1, 2):
        dt, _ = timed(launch(ranks, pop + ["--stars", "%d" % a.stars, "--threads", str(threads)]))
        print("  %-16s %10.2f %14.4g" % ("%d x %d" % (ranks, threads), dt, a.stars / dt))

print("\nmemory per rank (largest resident set), 1 thread per rank:")
for n in (1e6, a.big):
    for ranks in ((1, 2) if mpirun else (1,)):
        cmd = ([mpirun, "--oversubscribe", "-np", str(ranks)] if mpirun else []) + [
            "/usr/bin/python3", os.path.abspath(__file__), "--measure-rank", exe] + pop + ["--stars", "%d" % n,
                                                                                        "--threads", "1"]
        dt, out = timed(cmd)
        kb = sorted(int(l.split()[-1]) for l in out.splitlines() if "maxrss_kb" in l)
        print("  %.3g stars, %d rank%s: %s MB per rank (%.1f s)" % (n, ranks, "s" if ranks > 1 else " ",
                                                                   ", ".join("%.1f" % (k / 1024) for k in kb), dt))

print("\ncatalogue write throughput, %.3g stars, 1 rank, 2 threads:" % a.catalogue)
base = pop + ["--stars", "%d" % a.catalogue, "--threads", "2"]
dt0, _ = timed([exe] + base)
print("  %-10s %8.2f s" % ("none", dt0))
for ext in ("h5", "csv"):
    path = os.path.join(work, "stars." + ext)
    dt, _ = timed([exe] + base + ["--catalogue", path])
    mb = os.path.getsize(path) / 1e6
    print("  %-10s %8.2f s  %12.4g rows/s  %7.1f MB  %7.1f MB/s (of file; %.2f s more than without)"
          % (ext, dt, a.catalogue / dt, mb, mb / dt, dt - dt0))
    os.remove(path)
