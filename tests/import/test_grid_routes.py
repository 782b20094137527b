"""Routes and route boundaries of an imported grid (tracks/FORMAT.md, "Importing text tracks").

Usage: test_grid_routes.py HRTRAIL_EXE

1. Collapsed routes are refused unless forced: an import whose tracks all
   follow one route while the layout has three, or in which a route has no
   track at one metallicity, fails (exit 4, nothing written) with a message
   naming the metallicity and the empty route; --force writes it.
2. Route boundaries given by the user (--route-boundaries [Z:]M1,M2, and
   hrt_import_set_route_boundaries) replace the geometric-mean rule, per
   metallicity or for all, are written to the grid (read back with h5py),
   and are checked against the tracks (a boundary that does not separate
   the routes, a wrong count, or a metallicity no track has: refused).
3. A metallicity whose every track is refused by the EEP resampling is
   dropped in lenient mode and the rest written (it used to fail with
   "route boundaries set but no tracks").
4. Index accessors of the report: any index out of range, (size_t)-1
   included, gives NaN, NULL, 0 or HRT_E_INVALID (ctypes; it used to read
   past the boundary table).

The tracks are invented; the expected boundaries are the geometric means of
FORMAT.md or the values given (relative 1e-12: the file stores doubles).
"""
import ctypes
import math
import os
import shutil
import sys
import tempfile

import h5py

import importtest as it

EXE = os.path.abspath(sys.argv[1])
t = it.Checks("grid routes")
work = tempfile.mkdtemp(prefix="hrtrail-import-routes-")
MAP = it.MAP + " keypoints=kp pattern=star_Z{z}_M{mass}.txt"
SET = [(it.low_mass, 0.3), (it.giant, 1.6), (it.giant, 2.5), (it.supergiant, 20.0)]


def make(d, z, members, seed=1, coarse=False):
    """Tables of the given (builder, mass) at metallicity z in directory d (created), with the designed
    keypoints flagged (this test is about routes, not detection)."""
    os.makedirs(d, exist_ok=True)
    for k, (builder, m) in enumerate(members):
        rows, kp, route, phases = builder(seed + k, m=m)
        if coarse:
            # a main sequence of two samples a rounding apart (relative 1e-14, a few units in the last place
            # of log age): its 150 EEPs cannot have increasing ages, and the EEP resampling refuses the track
            tams = next(r for r in rows if r[0] == kp["tams"])
            rows = [r for r in rows if r[0] <= kp["zams"]] + [[kp["zams"] * (1 + 1e-14)] + tams[1:]] + \
                [r for r in rows if r[0] > kp["tams"]]
            kp = dict(kp, tams=rows[[r[0] for r in rows].index(kp["zams"]) + 1][0])
        flags = [next((name for name, a in kp.items() if a == r[0]), "-") for r in rows]
        it.write_table(os.path.join(d, "star_Z%g_M%g.txt" % (z, m)), rows, extra={"kp": flags})


def grid_boundaries(path):
    with h5py.File(path, "r") as f:
        return {float(g.attrs["z"]): list(g["route_boundary_mass_msun"][()]) for g in f["metallicity"].values()}


def close(a, b, rel=1e-12):
    return len(a) == len(b) and all(abs(x / y - 1) <= rel for x, y in zip(a, b))


try:
    # ---- 1. collapsed routes
    low = os.path.join(work, "low")
    make(low, 0.02, [(it.low_mass, 0.3), (it.low_mass, 0.35)])
    out = os.path.join(work, "low.h5")
    rc, rep, err = it.run_import(EXE, ["-o", out, "--map", MAP, low])
    t.ok(rc == 4 and "route 'giant' has no track" in err and "2 of the 2 tracks follow 'low_mass'" in err and
         "Z = 0.02" in err and "--force" in err, "all tracks on one route: refused, saying why (%d: %s)" % (rc, err))
    t.ok(not os.path.exists(out), "all tracks on one route: nothing written")
    rc, rep, err = it.run_import(EXE, ["-o", out, "--force", "--json", "--map", MAP, low])
    t.ok(rc == 0 and os.path.exists(out), "all tracks on one route, --force: written (%d: %s)" % (rc, err))
    two = os.path.join(work, "two_z")
    make(two, 0.02, SET)
    make(two, 0.004, SET[:3])  # no supergiant at Z = 0.004
    rc, rep, err = it.run_import(EXE, ["--dry-run", "--map", MAP, two])
    t.ok(rc == 4 and "Z = 0.004: route 'supergiant' has no track" in err,
         "a route without a track at one metallicity: refused, naming Z and route (%d: %s)" % (rc, err))
    rc, rep, err = it.run_import(EXE, ["--dry-run", "--force", "--json", "--map", MAP, two])
    t.ok(rc == 0 and len(rep["metallicities"]) == 2, "the same, --force: accepted (%d: %s)" % (rc, err))

    # ---- 2. route boundaries given by the user
    full = os.path.join(work, "full")
    make(full, 0.02, SET)
    make(full, 0.004, SET, seed=11)
    out = os.path.join(work, "full.h5")
    rc, rep, err = it.run_import(EXE, ["-o", out, "--json", "--map", MAP, full])
    t.ok(rc == 0, "full grid: exit 0 (%s)" % err)
    rule = [math.sqrt(0.3 * 1.6), math.sqrt(2.5 * 20.0)]
    if rc == 0:
        got = grid_boundaries(out)
        t.ok(all(close(v, rule) for v in got.values()), "without a setting, the geometric means %s (%s)" % (rule, got))
    rc, rep, err = it.run_import(EXE, ["-o", out, "--json", "--map", MAP, "--route-boundaries", "0.5,9",
                                       "--route-boundaries", "0.004:0.45,8.5", full])
    t.ok(rc == 0, "--route-boundaries: exit 0 (%s)" % err)
    if rc == 0:
        got = grid_boundaries(out)
        t.ok(close(got.get(0.02, []), [0.5, 9.0]) and close(got.get(0.004, []), [0.45, 8.5]),
             "the boundaries given are written: all Z 0.5, 9; Z = 0.004 its own 0.45, 8.5 (%s)" % got)
        rb = {m["z"]: m["route_boundary_mass_msun"] for m in rep["metallicities"]}
        t.ok(close(rb.get(0.02, []), [0.5, 9.0]) and close(rb.get(0.004, []), [0.45, 8.5]),
             "and reported (%s)" % rb)
    bad = [("2,9", "does not separate", "M1.6.txt"),  # the 1.6 Msun giant lies below 2
           ("0.5,1.0", "does not separate", "M1.6"),
           ("0.5", "1 masses given", "need 2"),
           ("0.03:0.5,9", "Z = 0.03", "no track")]
    for arg, w1, w2 in bad:
        rc, rep, err = it.run_import(EXE, ["--dry-run", "--map", MAP, "--route-boundaries", arg, full])
        t.ok(rc == 4 and w1 in err and w2 in err, "--route-boundaries %s: refused with '%s' (%d: %s)" % (
            arg, w1, rc, err.strip()))
    for arg in ("0.5,-1", "x:0.5,9", "9,0.5"):
        rc, rep, err = it.run_import(EXE, ["--dry-run", "--map", MAP, "--route-boundaries", arg, full])
        t.ok(rc == 2 and "--route-boundaries" in err, "--route-boundaries %s: a usage error (%d: %s)" % (
            arg, rc, err.strip()))

    # ---- 3. a metallicity whose every track the resampling refuses, in lenient mode
    mixed = os.path.join(work, "mixed")
    make(mixed, 0.02, SET)
    make(mixed, 0.004, SET, seed=21, coarse=True)
    out = os.path.join(work, "mixed.h5")
    rc, rep, err = it.run_import(EXE, ["-o", out, "--keep-going", "--json", "--map", MAP, mixed])
    t.ok(rc == 0 and os.path.exists(out), "lenient, every track of Z = 0.004 refused: the rest written (%d: %s)" % (
        rc, err.strip()))
    if rc == 0:
        zs = sorted(grid_boundaries(out))
        t.ok(zs == [0.02], "only Z = 0.02 in the grid (%s)" % zs)
        refused = [x for x in rep["tracks"] if x["z"] == 0.004]
        t.ok(len(refused) == 4 and all(x["result"] == "dropped" and "EEP resampling refused" in x["message"]
                                       for x in refused), "the refused tracks reported (%s)" % [
            x["message"] for x in refused])
    rc, rep, err = it.run_import(EXE, ["-o", out + "2", "--map", MAP, mixed])
    t.ok(rc == 4 and "EEP resampling refused" in err and not os.path.exists(out + "2"),
         "strict: the refusal fails the import (%d: %s)" % (rc, err.strip()[-200:]))

    # ---- 4. index accessors (ctypes)
    lib = it.load()
    big = ctypes.c_size_t(-1).value  # (size_t)-1
    imp = ctypes.c_void_p()
    e = it.hc.HrtError()
    t.ok(lib.hrt_import_new(ctypes.byref(imp), ctypes.byref(e)) == 0, "hrt_import_new")
    t.ok(math.isnan(lib.hrt_import_route_boundary(imp, 0, 0)) and math.isnan(lib.hrt_import_z(imp, 0)) and
         lib.hrt_import_n_z(imp) == 0, "before a run: NaN and 0")
    lib.hrt_import_map(imp, MAP.encode(), ctypes.byref(e))
    for name in sorted(os.listdir(full)):
        lib.hrt_import_add_file(imp, os.path.join(full, name).encode(), float("nan"), ctypes.byref(e))
    t.ok(lib.hrt_import_run(imp, None, ctypes.byref(e)) == 0, "run (%s)" % e.message)
    nz, nr = lib.hrt_import_n_z(imp), lib.hrt_import_n_routes(imp)
    t.ok(nz == 2 and nr == 3, "2 metallicities, 3 routes")
    t.ok(all(math.isfinite(lib.hrt_import_route_boundary(imp, iz, b)) for iz in range(nz) for b in range(nr - 1)),
         "every boundary in range is finite")
    oob = [(0, nr - 1), (0, nr), (0, big), (0, big - 1), (nz, 0), (big, 0), (big, big), (64, 0)]
    vals = [lib.hrt_import_route_boundary(imp, iz, b) for iz, b in oob]
    t.ok(all(math.isnan(v) for v in vals), "hrt_import_route_boundary out of range: NaN (%s)" % vals)
    t.ok(math.isnan(lib.hrt_import_z(imp, nz)) and math.isnan(lib.hrt_import_z(imp, big)), "hrt_import_z: NaN")
    t.ok(lib.hrt_import_route_name(imp, nr) is None and lib.hrt_import_route_name(imp, big) is None and
         lib.hrt_import_route_n_keypoints(imp, big) == 0 and lib.hrt_import_keypoint_name(imp, 0, big) is None and
         lib.hrt_import_keypoint_name(imp, big, 0) is None, "route and keypoint accessors: NULL, 0")
    r, rr = it.TrackReport(), it.RowReport()
    codes = it.status_codes()
    t.ok(lib.hrt_import_track(imp, big, ctypes.byref(r)) == codes["HRT_E_INVALID"] and
         lib.hrt_import_dropped_row(imp, 0, big, ctypes.byref(rr)) == codes["HRT_E_INVALID"] and
         lib.hrt_import_dropped_row(imp, big, 0, ctypes.byref(rr)) == codes["HRT_E_INVALID"] and
         lib.hrt_import_dropped_row(imp, 0, 0, ctypes.byref(rr)) == codes["HRT_E_INVALID"],
         "track and dropped-row reports out of range: HRT_E_INVALID")
    t.ok(math.isnan(lib.hrt_import_route_boundary(None, 0, 0)) and lib.hrt_import_n_z(None) == 0 and
         lib.hrt_import_track(None, 0, ctypes.byref(r)) == codes["HRT_E_NULL"], "NULL import")
    lib.hrt_import_free(imp)
finally:
    shutil.rmtree(work, True)
t.finish()
