"""The phase column in keypoint detection (tracks/FORMAT.md, "Keypoint criteria").

Usage: test_phase_column.py HRTRAIL_EXE

1. Every keypoint has a phase-column marker or estimate: invented low-mass,
   giant and supergiant tracks with a phase column but no centre
   composition (no central_x, central_y) must each land on their own route
   with every keypoint found (a giant's cheb_start from the phase column),
   the route boundaries must separate the routes, and an import whose
   giants could not be told from low-mass stars would be refused.
2. The phase column outranks the physical criteria: a giant whose subgiant
   branch already cools slowly as it brightens (-dlog Teff/dlog L = 0.05,
   as on some 0.85-0.9 Msun tracks) meets the luminosity/temperature
   criterion of rgb_base right after the TAMS; with a phase column, rgb_base
   is the first `rgb` sample.

The tracks are invented (no outside source: the test checks the criteria as
documented).  Tolerances: one sample spacing around the designed age (the
criteria resolve no better), absolute.
"""
import os
import shutil
import sys
import tempfile

import importtest as it

EXE = os.path.abspath(sys.argv[1])
t = it.Checks("phase column")
work = tempfile.mkdtemp(prefix="hrtrail-import-phase-")


def tolerance(rows, age):
    """One sample spacing around the designed age (Myr), absolute."""
    ages = [r[0] for r in rows]
    i = min(range(len(ages)), key=lambda j: abs(ages[j] - age))
    return max(ages[min(i + 1, len(ages) - 1)] - ages[i], ages[i] - ages[max(i - 1, 0)]) * 1.0001


try:
    # 1. phase column, no centre composition
    d1 = os.path.join(work, "phase_only")
    os.mkdir(d1)
    made = {}
    for k, (builder, m) in enumerate([(it.low_mass, 0.3), (it.low_mass, 0.35), (it.giant, 1.2), (it.giant, 1.6),
                                      (it.giant, 3.0), (it.supergiant, 15.0), (it.supergiant, 20.0)]):
        rows, kp, route, phases = builder(100 + k, m=m)
        name = "star_M%g.txt" % m
        it.write_table(os.path.join(d1, name), rows, it.COLUMNS[:6], {"stage": phases})
        made[name] = (rows, kp, route, m)
    mapping = it.MAP + " phase=stage z=0.02 pattern=star_M{mass}.txt"
    rc, rep, err = it.run_import(EXE, ["--dry-run", "--json", "--map", mapping, d1])
    t.ok(rc == 0, "phase column only: import exits 0 (%d: %s)" % (rc, err.strip()[-400:]))
    by = {os.path.basename(x["file"]): x for x in (rep or {"tracks": []})["tracks"]}
    for name, (rows, kp, route, m) in sorted(made.items()):
        x = by.get(name)
        t.ok(x is not None and x["route"] == route and x["result"] == "ok",
             "%s: route %s, complete (got %s)" % (name, route, x and (x["route"], x["result"], x["notes"])))
        if not x:
            continue
        found = {k["keypoint"]: (k["age_yr"] / 1e6, k["found_by"]) for k in x["keypoints"]}
        for key, age in kp.items():
            got, how = found.get(key, (float("nan"), None))
            tol = tolerance(rows, age)
            t.ok(abs(got - age) <= tol, "%s: %s at %.6g Myr, designed %.6g (tolerance %.3g, found by %s)" % (
                name, key, got, age, tol, how))
            if key == "cheb_start":
                t.ok(how == "phase", "%s: cheb_start found by the phase column (%s)" % (name, how))
    if rep:
        b = rep["metallicities"][0]["route_boundary_mass_msun"]
        # geometric means of the neighbouring tracks of two routes (FORMAT.md), relative 1e-9
        t.ok(abs(b[0] / (0.35 * 1.2) ** 0.5 - 1) < 1e-9 and abs(b[1] / (3.0 * 15.0) ** 0.5 - 1) < 1e-9,
             "route boundaries between the routes (%s)" % b)

    # 2. the phase column outranks the luminosity/temperature criterion of rgb_base
    d2 = os.path.join(work, "slow_subgiant")
    os.mkdir(d2)
    rows, kp, route, phases = it.giant(7, m=0.87, sub_slope=0.05)
    it.write_table(os.path.join(d2, "star_M0.87.txt"), rows, it.COLUMNS, {"stage": phases})
    first_rgb = next(r[0] for r, p in zip(rows, phases) if p == "rgb")
    full = it.MAP + " central_x=xc central_y=yc z=0.02 pattern=star_M{mass}.txt"
    for with_phase in (True, False):
        extra = " phase=stage" if with_phase else ""
        # one track: the other routes are empty, which the import refuses unless forced
        rc, rep, err = it.run_import(EXE, ["--dry-run", "--force", "--json", "--map", full + extra, d2])
        t.ok(rc == 0, "slow subgiant: import exits 0 (%d: %s)" % (rc, err.strip()[-300:]))
        if not rep:
            continue
        k = {x["keypoint"]: x for x in rep["tracks"][0]["keypoints"]}.get("rgb_base")
        got = k["age_yr"] / 1e6 if k else float("nan")
        if with_phase:
            t.ok(k is not None and k["found_by"] == "phase" and abs(got - first_rgb) < 1e-9 * first_rgb,
                 "slow subgiant with a phase column: rgb_base at the first rgb sample %.6g Myr (got %.6g, %s)" % (
                     first_rgb, got, k and k["found_by"]))
        else:
            # without it the criterion fires on the subgiant branch: the case the phase column settles
            t.ok(k is not None and k["found_by"] == "columns" and got < kp["tams"] + 0.2 * (kp["rgb_base"] - kp["tams"]),
                 "slow subgiant without a phase column: rgb_base by the criterion, early (%.6g Myr)" % got)
finally:
    shutil.rmtree(work, True)
t.finish()
