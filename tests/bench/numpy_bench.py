#!/usr/bin/python3
"""The hrtrail query, written the straightforward way with NumPy/SciPy, timed.

    numpy_bench.py GRID.h5 N [--group I] [--seed S] [--queries FILE | --write-queries FILE]

Last lines (for tests/bench/bench.c, which prints the ratio):
    RESULT numpy_ns_per_star <ns> numpy_eval_s <s> n <N> variant <faster> group <i> z <Z>
    RESULT scipy_ns_per_star <ns> scipy_eval_s <s> n <N> variant scipy

For N random (initial mass, age) stars at one metallicity group of GRID.h5
(tracks/FORMAT.md) it does what hrt_eval does, vectorised over the batch:

  1. route of each star from the group's route-boundary masses;
  2. at every EEP of the route, a SciPy PchipInterpolator across x = log10(initial
     mass) through that route's tracks (log age, log L, log Teff, current mass,
     He and CO core masses);
  3. per star, the EEP interval [j, j+1] whose interpolated log ages bracket
     log10(age), then every quantity blended linearly by the fraction in log age;
     log R from L and Teff (Stefan-Boltzmann, IAU 2015 B3 nominal units) and log g.

Two variants are timed, both vectorised over the whole batch (no Python loop per
star; the batch is cut into chunks, whose size is scanned and NumPy's best used,
unless --chunk fixes it):
  scipy   PchipInterpolator.__call__ at all EEPs of every star, then the bracket by
          comparison along the EEP axis (the plainest use of SciPy);
  bisect  the same PCHIP pieces (PchipInterpolator.c) gathered per star with fancy
          indexing: a vectorised bisection in log age, then only the two bracketing
          EEPs evaluated (hand-vectorised NumPy).
The printed ns per star cover step 1-3 only: reading the file (h5py) and building the
interpolators are timed and printed separately.  The two variants must agree (their
largest difference is printed) and the number of stars without an answer is printed.

Queries: log10 mass uniform within the tracks of a route (routes drawn in proportion
to their span in log mass), log age uniform between the first and the last EEP common
to the route's tracks, linearly interpolated in log mass and pulled 2 % inside.
--write-queries FILE stores them (N rows of float64 mass_msun, age_yr, little-endian,
no header) so that another program (tests/bench/bench.c) can time the same stars;
--queries FILE reads such a file instead of drawing.

With --hrtrail-lib PATH (or HRTRAIL_LIB in the environment) the same stars are also
given to hrt_eval of that libhrtrail.so through ctypes (one call per chunk of 65536,
into a preallocated buffer, so the binding's cost is negligible), and the like-for-like
ratios are printed.

PCHIP is not hrtrail's default kernel (Steffen 1990); the cost per star is the same
kind (one monotone cubic Hermite across mass per quantity and EEP), so the comparison
is of implementations, not of kernels.
"""
import argparse
import ctypes
import os
import sys
import time

import h5py
import numpy as np
from scipy.interpolate import PchipInterpolator

TEFF_SUN_K = 5772.0      # IAU 2015 Resolution B3
GM_SUN = 1.3271244e20    # m^3 s^-2, IAU 2015 Resolution B3
RSUN_M = 6.957e8         # IAU 2015 Resolution B3
COLUMNS = ["log_age_yr", "log_l_lsun", "log_teff_k", "mass_msun", "he_core_mass_msun", "co_core_mass_msun"]


def read_group(path, group):
    with h5py.File(path, "r") as f:
        g = f["metallicity"][str(group)]
        d = {name: g[name][()] for name in COLUMNS + ["initial_mass_msun", "route", "n_eep",
                                                       "route_boundary_mass_msun"]}
        d["z"] = float(g.attrs["z"])
        d["route_names"] = [n.decode() if isinstance(n, bytes) else n for n in f["routes/names"][()]]
    return d


class Route:
    """PCHIP across log10 initial mass at every EEP common to the route's tracks."""

    def __init__(self, d, r):
        sel = np.flatnonzero(d["route"] == r)
        self.x = np.log10(d["initial_mass_msun"][sel])
        self.n_eep = int(d["n_eep"][sel].min())
        y = np.stack([d[c][sel, :self.n_eep] for c in COLUMNS], axis=-1)  # [mass][eep][column]
        self.pchip = PchipInterpolator(self.x, y, axis=0, extrapolate=False)
        # c[k, interval, eep, column] -> [interval][eep][column][k] for per-star gathers
        self.coef = np.ascontiguousarray(np.moveaxis(self.pchip.c, 0, -1))
        self.coef_age = np.ascontiguousarray(self.coef[:, :, 0, :])  # [interval][eep][k]
        self.la_first = d["log_age_yr"][sel, 0]
        self.la_last = d["log_age_yr"][sel, self.n_eep - 1]


def finish(la_t, lo_vals, hi_vals, la_lo, la_hi):
    """Blend the two bracketing EEPs by the fraction in log age; derive log R and log g."""
    f = ((la_t - la_lo) / (la_hi - la_lo))[:, None]
    v = (1.0 - f) * lo_vals + f * hi_vals  # columns 1.. of COLUMNS
    log_l, log_teff, mass = v[:, 0], v[:, 1], v[:, 2]
    log_r = 0.5 * log_l - 2.0 * (log_teff - np.log10(TEFF_SUN_K))
    log_g = np.log10(GM_SUN * mass / (10.0 ** log_r * RSUN_M) ** 2 * 100.0)
    return np.column_stack([v, log_r, log_g])


def eval_scipy(rt, x, la_t):
    """Plain SciPy: every EEP of every star, then pick the bracket."""
    allv = rt.pchip(x)                      # [star][eep][column]
    la = allv[:, :, 0]
    j = np.sum(la <= la_t[:, None], axis=1) - 1
    ok = (j >= 0) & (j < rt.n_eep - 1)
    j = np.clip(j, 0, rt.n_eep - 2)
    k = np.arange(x.size)
    out = finish(la_t, allv[k, j, 1:], allv[k, j + 1, 1:], la[k, j], la[k, j + 1])
    out[~ok] = np.nan
    return out


def eval_bisect(rt, x, la_t):
    """Hand-vectorised: gather the PCHIP pieces of each star, bisect in log age."""
    i = np.clip(np.searchsorted(rt.x, x, side="right") - 1, 0, rt.x.size - 2)
    dx = x - rt.x[i]
    dx2 = dx[:, None]

    def age_at(j):                          # interpolated log age of each star at its EEP j
        c = rt.coef_age[i, j]               # [star][k], polynomial in dx
        return ((c[:, 0] * dx + c[:, 1]) * dx + c[:, 2]) * dx + c[:, 3]

    def all_at(j):                          # every column of each star at its EEP j
        c = rt.coef[i, j]                   # [star][column][k]
        return ((c[..., 0] * dx2 + c[..., 1]) * dx2 + c[..., 2]) * dx2 + c[..., 3]

    lo = np.zeros(x.size, dtype=np.intp)
    hi = np.full(x.size, rt.n_eep - 1, dtype=np.intp)
    ok = (age_at(lo) <= la_t) & (la_t < age_at(hi))
    while True:
        open_ = hi - lo > 1
        if not open_.any():
            break
        mid = (lo + hi) // 2
        below = age_at(mid) <= la_t
        lo = np.where(open_ & below, mid, lo)
        hi = np.where(open_ & ~below, mid, hi)
    a, b = all_at(lo), all_at(lo + 1)       # [star][column]
    out = finish(la_t, a[:, 1:], b[:, 1:], a[:, 0], b[:, 0])
    out[~ok] = np.nan
    return out


def evaluate(routes, bounds, mass, age, kernel, chunk):
    out = np.full((mass.size, len(COLUMNS) + 1), np.nan)
    route = np.searchsorted(bounds, mass)    # boundary b separates route b from route b+1
    x, la_t = np.log10(mass), np.log10(age)
    for r, rt in enumerate(routes):
        if rt is None:
            continue
        idx = np.flatnonzero(route == r)
        for s in range(0, idx.size, chunk):
            k = idx[s:s + chunk]
            out[k] = kernel(rt, x[k], la_t[k])
    return out


def draw_queries(routes, n, rng):
    live = [r for r, rt in enumerate(routes) if rt is not None]
    span = np.array([np.ptp(routes[r].x) for r in live])
    which = rng.choice(len(live), size=n, p=span / span.sum())
    mass, age = np.empty(n), np.empty(n)
    for w, r in enumerate(live):
        rt, k = routes[r], np.flatnonzero(which == w)
        x = rng.uniform(rt.x[0], rt.x[-1], k.size)
        lo, hi = np.interp(x, rt.x, rt.la_first), np.interp(x, rt.x, rt.la_last)
        pad = 0.02 * (hi - lo)
        mass[k], age[k] = 10.0 ** x, 10.0 ** rng.uniform(lo + pad, hi - pad)
    return mass, age


def time_hrtrail(lib_path, grid, z, mass, age, repeat, chunk=65536):
    """hrt_eval on the same stars (ctypes mirror of tests/ref/hrtrail_ctypes.py)."""
    sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "ref"))
    os.environ["HRTRAIL_LIB"] = lib_path
    import hrtrail_ctypes as H
    lib = H.load()
    g = H.open_grid(lib, grid, "steffen")
    m, a = np.ascontiguousarray(mass), np.ascontiguousarray(age)
    out = (H.HrtState * m.size)()
    err = H.HrtError()
    size = ctypes.sizeof(H.HrtState)
    best = np.inf
    try:
        for _ in range(repeat):
            t0 = time.perf_counter()
            for s in range(0, m.size, chunk):
                k = min(chunk, m.size - s)
                lib.hrt_eval(g, k, H.dptr(m[s:]), None, z, H.dptr(a[s:]),
                             ctypes.cast(ctypes.addressof(out) + s * size, ctypes.POINTER(H.HrtState)),
                             ctypes.byref(err))
            best = min(best, time.perf_counter() - t0)
    finally:
        lib.hrt_grid_close(g)
    return best, np.frombuffer(out, dtype=H.STATE_DTYPE)


# Chunk sizes scanned for the NumPy variants: too small a chunk pays Python's
# per-call overhead, too large a one leaves the cache; the fastest is used, so
# that the comparison is against NumPy at its best on this machine.
CHUNK_SCAN = (256, 1024, 4096, 16384, 65536)


def timed(fn, repeat):
    """Thread CPU time of fn() (min and median of repeat runs) and its last result."""
    times, res = [], None
    for _ in range(repeat):
        t0 = time.thread_time()
        res = fn()
        times.append(time.thread_time() - t0)
    times.sort()
    return times[0], times[len(times) // 2], res


def main(argv=None):
    p = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    p.add_argument("grid")
    p.add_argument("n", type=int)
    p.add_argument("--group", type=int, default=None,
                   help="metallicity group index (default: the middle one, n_z // 2, as bench.c)")
    p.add_argument("--seed", type=int, default=1)
    p.add_argument("--chunk", type=int, default=None,
                   help="stars per vectorised chunk (default: scan %s and use NumPy's best)"
                   % ",".join(str(c) for c in CHUNK_SCAN))
    p.add_argument("--repeat", type=int, default=3, help="timed runs; the fastest is reported")
    p.add_argument("--hrtrail-lib", default=os.environ.get("HRTRAIL_LIB"),
                   help="also time hrt_eval of this libhrtrail.so on the same stars")
    q = p.add_mutually_exclusive_group()
    q.add_argument("--queries", help="read (mass_msun, age_yr) float64 pairs from this file")
    q.add_argument("--write-queries", help="write the drawn queries to this file")
    a = p.parse_args(argv)

    if a.group is None:
        with h5py.File(a.grid, "r") as f:
            a.group = len(f["metallicity"]) // 2
    t0 = time.perf_counter()
    d = read_group(a.grid, a.group)
    t_read = time.perf_counter() - t0
    t0 = time.perf_counter()
    routes = [Route(d, r) if np.count_nonzero(d["route"] == r) >= 2 else None
              for r in range(len(d["route_names"]))]
    t_setup = time.perf_counter() - t0

    if a.queries:
        qa = np.fromfile(a.queries, dtype="<f8").reshape(-1, 2)[:a.n]
        mass, age = qa[:, 0].copy(), qa[:, 1].copy()
    else:
        mass, age = draw_queries(routes, a.n, np.random.default_rng(a.seed))
        if a.write_queries:
            np.column_stack([mass, age]).astype("<f8").tofile(a.write_queries)
    n = mass.size
    bounds = np.asarray(d["route_boundary_mass_msun"], dtype=float)

    print("grid %s group %d Z %.6g tracks %d routes %s eeps %s" % (
        a.grid, a.group, d["z"], d["initial_mass_msun"].size,
        ",".join(d["route_names"]), ",".join(str(rt.n_eep if rt else 0) for rt in routes)))
    print("queries %d seed %d quantities %d (%s + log_r_rsun, log_g_cgs)" % (
        n, a.seed, len(COLUMNS) + 1, ", ".join(COLUMNS[1:])))
    print("read_s %.6f (h5py, one group; excluded)" % t_read)
    print("setup_s %.6f (PchipInterpolator for every route; excluded)" % t_setup)
    # NumPy's best chunk size for the hand-vectorised variant (thread CPU time)
    chunks = (a.chunk,) if a.chunk else CHUNK_SCAN
    scan = {}
    for c in chunks:
        scan[c] = timed(lambda: evaluate(routes, bounds, mass, age, eval_bisect, c), a.repeat)[:2]
        print("chunk_scan bisect chunk %d ns_per_star min %.1f median %.1f" % (
            c, 1e9 * scan[c][0] / n, 1e9 * scan[c][1] / n))
    chunk = min(scan, key=lambda c: scan[c][0])
    print("best chunk %d" % chunk)
    results, best, median = {}, {}, {}
    for name, kernel in (("bisect", eval_bisect), ("scipy", eval_scipy)):
        best[name], median[name], results[name] = timed(
            lambda: evaluate(routes, bounds, mass, age, kernel, chunk), a.repeat)
        print("eval_s %s %.6f ns_per_star %s %.1f median %.1f (thread CPU, %d runs, chunk %d)" % (
            name, best[name], name, 1e9 * best[name] / n, 1e9 * median[name] / n, a.repeat, chunk))
    r1, r2 = results["bisect"], results["scipy"]
    both = np.isfinite(r1).all(axis=1) & np.isfinite(r2).all(axis=1)
    print("no_answer %d of %d; agreement of the two variants: max |diff| %.3g" % (
        n - np.count_nonzero(both), n, np.max(np.abs(r1[both] - r2[both])) if both.any() else np.nan))
    print("checksum mean log_L %.12g" % np.mean(r1[both, 0]))
    # The headline figure is the faster NumPy variant: a ratio against the slower
    # one would flatter the C library.
    name = min(best, key=best.get)
    print("RESULT numpy_ns_per_star %.1f numpy_eval_s %.6f n %d variant %s group %d z %.17g chunk %d" % (
        1e9 * best[name] / n, best[name], n, name, a.group, d["z"], chunk))
    print("RESULT scipy_ns_per_star %.1f scipy_eval_s %.6f n %d variant scipy" % (
        1e9 * best["scipy"] / n, best["scipy"], n))
    if a.hrtrail_lib:
        t_lib, st = time_hrtrail(a.hrtrail_lib, a.grid, d["z"], mass, age, a.repeat)
        ok = st["status"] == 0
        diff = np.abs(st["log_l_lsun"][ok & both] - r1[ok & both, 0])
        print("hrtrail (Steffen kernel) on the same stars: %d answered; |log_L - PCHIP| median %.2g max %.2g"
              " (different kernels: not an error)" % (np.count_nonzero(ok), np.median(diff), diff.max()))
        print("RESULT hrtrail_ns_per_star %.1f ratio_vs_%s %.2f ratio_vs_scipy %.2f" % (
            1e9 * t_lib / n, name, best[name] / t_lib, best["scipy"] / t_lib))
    return 0 if both.any() else 1


if __name__ == "__main__":
    sys.exit(main())
