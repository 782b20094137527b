#!/usr/bin/python3
"""Python binding against the C library: the same work timed from both.

    bench_python.py [N] [--grid GRID] [--c-reference PATH] [--c-bench PATH] [--repeat R]
                    [--pop-stars N] [--fits N]

Environment as for the tests: HRTRAIL_LIB, HRTRAIL_GRID (or --grid) and
HRTRAIL_C_REFERENCE (or --c-reference: the build's
bindings/python/hrt-c-reference).  For example, from the source tree:

    HRTRAIL_LIB=build/lib/libhrtrail.so HRTRAIL_GRID=build/tracks/hrtrail-default-grid.h5 \\
    PYTHONPATH=bindings/python /usr/bin/python3 bindings/python/bench_python.py 1000000 \\
        --c-reference build/bindings/python/hrt-c-reference

N stars (default 1e6): log-uniform initial masses over the grid's range, log-
uniform ages from 1e6 yr to 1.3 times the star's end age (every phase, as a
population has), at one grid metallicity (the middle group: z passed as
z_all) and, second, at log-uniform metallicities between the groups (a z
array).  The C figure is the fastest of R calls of hrt_eval into one buffer by
the C program; the Python figures are the fastest of R calls of
Grid.evaluate, (a) with a new output array each call (the default use), (b)
into a reused array (out=, like for like with C), (c) the same on 2 threads.
The answers must be equal bit for bit (checked).  Figures only: nothing is
asserted about time.  Target: Python (b) within 1.5x of C.

With --c-bench (or HRTRAIL_C_BENCH: the build's bindings/python/hrt-c-bench),
also (d) a population of --pop-stars stars (default 2e6; Kroupa 2001 IMF over
the grid's masses at Z_ref, a burst, epochs 1e8, 1e9 and 1e10 yr) run by
Population.run against hrt_pop_run called from C, on 1 and 2 threads, and
(e) --fits stars (default 200, random stars of the grid observed in Teff and
log L or log g, some with [Fe/H]) fitted by FitModel.fit_many against
hrt_fit_star in a C loop, on the default model (its construction not timed);
both with the same answers checked.  Target: within 1.5x of C.  Each is
given in wall-clock time and in CPU time of the whole process (every
thread): on a shared, loaded machine the CPU ratio is the one to read.
"""
import argparse
import os
import subprocess
import sys
import tempfile
import time

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import hrtrail  # noqa: E402


def draw(grid, n, rng, random_z):
    zg = np.array(grid.z_values)
    zlo, zhi = grid.z_range
    z = 10.0 ** rng.uniform(np.log10(zlo), np.log10(zhi), n) if random_z else np.full(n, zg[zg.size // 2])
    lo, hi = grid.mass_range(zg[zg.size // 2])
    m = 10.0 ** rng.uniform(np.log10(lo), np.log10(hi), n)
    # end age of each star: the state far in the future starts its remnant phase
    far = grid.evaluate(m, np.full(n, 1e13), z, errors="ignore")["phase_start_yr"]
    tend = np.where(np.isfinite(far), far * 1.3, 2e10)
    a = 1e6 * (tend / 1e6) ** rng.random(n)
    return m, z, a


def best_of_process(repeat, fn):
    """Fastest wall-clock and fastest CPU time of the whole process (every thread), and the last result."""
    best, best_cpu, out = np.inf, np.inf, None
    for _ in range(repeat):
        t0, c0 = time.perf_counter(), time.process_time()
        out = fn()
        best = min(best, time.perf_counter() - t0)
        best_cpu = min(best_cpu, time.process_time() - c0)
    return best, best_cpu, out


def best_of(repeat, fn):
    """Fastest wall-clock and fastest CPU time of this thread over repeat calls, and the last result."""
    best, best_cpu, out = np.inf, np.inf, None
    for _ in range(repeat):
        t0, c0 = time.perf_counter(), time.thread_time()
        out = fn()
        best = min(best, time.perf_counter() - t0)
        best_cpu = min(best_cpu, time.thread_time() - c0)
    return best, best_cpu, out


def main(argv=None):
    p = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    p.add_argument("n", type=int, nargs="?", default=1000000)
    p.add_argument("--grid", default=os.environ.get("HRTRAIL_GRID"))
    p.add_argument("--c-reference", default=os.environ.get("HRTRAIL_C_REFERENCE"))
    p.add_argument("--repeat", type=int, default=5)
    p.add_argument("--seed", type=int, default=7)
    p.add_argument("--c-bench", default=os.environ.get("HRTRAIL_C_BENCH"))
    p.add_argument("--pop-stars", type=int, default=2000000)
    p.add_argument("--fits", type=int, default=200)
    a = p.parse_args(argv)
    if not a.grid or not a.c_reference:
        p.error("give --grid (or HRTRAIL_GRID) and --c-reference (or HRTRAIL_C_REFERENCE)")
    rng = np.random.default_rng(a.seed)
    with hrtrail.Grid(a.grid) as g, tempfile.TemporaryDirectory(prefix="hrtrail-bench-") as tmp:
        print("library %s, grid %s, %d stars, fastest of %d" % (hrtrail.library_path, a.grid, a.n, a.repeat))
        for label, random_z in (("one grid Z", False), ("random Z", True)):
            m, z, age = draw(g, a.n, rng, random_z)
            inp = os.path.join(tmp, "in.bin")
            np.column_stack([m, z, age]).astype("<f8").tofile(inp)
            zall = "-" if random_z else repr(float(z[0]))
            r = subprocess.run([a.c_reference, "time", a.grid, inp, str(a.repeat), zall],
                               capture_output=True, text=True, check=True)
            w = r.stdout.split()
            t_c, c_c = float(w[w.index("c_eval_s") + 1]), float(w[w.index("c_eval_cpu_s") + 1])
            zarg = z if random_z else float(z[0])
            t_new, c_new, st = best_of(a.repeat, lambda: g.evaluate(m, age, zarg, errors="ignore"))
            buf = np.empty(a.n, dtype=hrtrail.STATE_DTYPE)
            t_out, c_out, _ = best_of(a.repeat, lambda: g.evaluate(m, age, zarg, out=buf, errors="ignore"))
            t_thr, _, st2 = best_of(a.repeat, lambda: g.evaluate(m, age, zarg, out=buf, errors="ignore",
                                                                threads=2))
            ok = st["status"] == 0
            checksum = float(np.sum(np.where(np.isfinite(st["log_l_lsun"]) & ok, st["log_l_lsun"], 0.0)))
            c_checksum = float(w[w.index("checksum") + 1])
            same = (st.tobytes() == st2.tobytes() and int(w[w.index("answered") + 1]) == int(ok.sum())
                    and abs(checksum - c_checksum) <= 1e-9 * abs(c_checksum))
            print("%-11s C hrt_eval            %7.1f ns/star wall, %7.1f ns/star CPU"
                  % (label, 1e9 * t_c / a.n, 1e9 * c_c / a.n))
            print("%-11s Python, new array     %7.1f ns/star wall, %7.1f ns/star CPU  ratio to C %.2f wall, %.2f CPU"
                  % (label, 1e9 * t_new / a.n, 1e9 * c_new / a.n, t_new / t_c, c_new / c_c))
            print("%-11s Python, out= reused   %7.1f ns/star wall, %7.1f ns/star CPU  ratio to C %.2f wall, %.2f CPU"
                  " (target <= 1.5)" % (label, 1e9 * t_out / a.n, 1e9 * c_out / a.n, t_out / t_c, c_out / c_c))
            print("%-11s Python, 2 threads     %7.1f ns/star wall                        ratio to C %.2f wall"
                  % (label, 1e9 * t_thr / a.n, t_thr / t_c))
            print("%-11s answered %d of %d; same answers as C: %s (checksum of log L %.12g, C %.12g)"
                  % (label, ok.sum(), a.n, same, checksum, c_checksum))
            print("RESULT %s python_over_c_new %.3f python_over_c_out %.3f python_over_c_cpu_new %.3f "
                  "python_over_c_cpu_out %.3f python_2threads_over_c %.3f"
                  % (label.replace(" ", "_"), t_new / t_c, t_out / t_c, c_new / c_c, c_out / c_c, t_thr / t_c))
        if a.c_bench:
            bench_population(g, a)
            bench_fit(g, a, tmp, rng)
    return 0


def bench_population(g, a):
    """Population.run against hrt_pop_run in C: the same spec, the same summaries (l_lsun compared bit for bit)."""
    ages = [1e8, 1e9, 1e10]
    zr = g.z_ref
    lo, hi = g.mass_range(zr)
    pop = hrtrail.Population(a.pop_stars, imf=hrtrail.IMF("kroupa2001", lo, hi), z=zr, seed=a.seed,
                             chunk_size=65536)
    for threads in (1, 2):
        r = subprocess.run([a.c_bench, a.grid, "pop", str(a.pop_stars), str(a.seed), "65536", str(threads),
                            str(a.repeat)] + [repr(x) for x in ages], capture_output=True, text=True, check=True)
        w = r.stdout.split()
        t_c, c_c = float(w[w.index("c_pop_s") + 1]), float(w[w.index("c_pop_cpu_s") + 1])
        c_l = [float(w[i + 1]) for i, x in enumerate(w) if x == "l_lsun"]
        t_py, c_py, sums = best_of_process(a.repeat, lambda: pop.run(g, ages, threads=threads, hr=None))
        same = [s.l_lsun for s in sums] == c_l
        print("population %d stars x %d epochs, %d thread%s: C %.3f s wall %.3f s CPU, Python %.3f s wall %.3f s CPU, "
              "ratio %.3f wall %.3f CPU (target <= 1.5); same summaries: %s"
              % (a.pop_stars, len(ages), threads, "" if threads == 1 else "s", t_c, c_c, t_py, c_py, t_py / t_c,
                 c_py / c_c, same))
        print("RESULT population_%dthreads python_over_c %.3f python_over_c_cpu %.3f"
              % (threads, t_py / t_c, c_py / c_c))


def bench_fit(g, a, tmp, rng):
    """FitModel.fit_many against hrt_fit_star in a C loop over the same observations."""
    obs = []
    zlo, zhi = g.z_range
    while len(obs) < a.fits:
        z = 10 ** rng.uniform(np.log10(zlo), np.log10(zhi))
        lo, hi = g.mass_range(z)
        m = 10 ** rng.uniform(np.log10(max(lo, 0.7)), np.log10(min(hi, 30.0)))
        with g.star(m, z) as star:
            s = star.at(star.end_age_yr * rng.uniform(0.05, 0.95))
        if not (np.isfinite(s.log_teff_k) and np.isfinite(s.log_l_lsun)):
            continue
        d = {"teff_k": 10 ** s.log_teff_k, "teff_k_sigma": 80.0}
        if len(obs) % 2:
            d.update(log_l_lsun=s.log_l_lsun, log_l_lsun_sigma=0.05)
        else:
            d.update(log_g_cgs=s.log_g_cgs, log_g_cgs_sigma=0.1)
        if len(obs) % 3 == 0:
            d.update(feh=np.log10(z / g.z_ref), feh_sigma=0.1)
        obs.append(hrtrail.Observation(**d))
    path = os.path.join(tmp, "obs.bin")
    with open(path, "wb") as f:
        for o in obs:
            f.write(bytes(memoryview(o._c).cast("B")))
    r = subprocess.run([a.c_bench, a.grid, "fit", path, str(a.seed), str(a.repeat)], capture_output=True, text=True,
                       check=True)
    w = r.stdout.split()
    t_c, fitted, checksum = float(w[w.index("c_fit_s") + 1]), int(w[w.index("fitted") + 1]), \
        float(w[w.index("checksum") + 1])
    c_c = float(w[w.index("c_fit_cpu_s") + 1])
    model = hrtrail.FitModel(g)
    for threads in (1, 2):
        t_py, c_py, res = best_of_process(a.repeat, lambda: model.fit_many(obs, seed=a.seed, threads=threads,
                                                                         errors="ignore"))
        ok = [x for x in res if x.status == hrtrail.Status.OK]
        py_sum = 0.0
        for x in ok:
            py_sum += x.initial_mass_msun.median
        same = len(ok) == fitted and py_sum == checksum
        print("fit %d stars (%d fitted), %d thread%s: C (1 thread) %.1f ms/star wall %.1f CPU, Python %.1f ms/star "
              "wall %.1f CPU, ratio %.3f wall %.3f CPU%s; same results: %s"
              % (len(obs), fitted, threads, "" if threads == 1 else "s", 1e3 * t_c / len(obs), 1e3 * c_c / len(obs),
                 1e3 * t_py / len(obs), 1e3 * c_py / len(obs), t_py / t_c, c_py / c_c,
                 " (target <= 1.5)" if threads == 1 else "", same))
        print("RESULT fit_%dthreads python_over_c %.3f python_over_c_cpu %.3f" % (threads, t_py / t_c, c_py / c_c))


if __name__ == "__main__":
    sys.exit(main())
