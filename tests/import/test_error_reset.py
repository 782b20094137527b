"""Every build-layer function that takes an hrt_error leaves HRT_OK and
"success" in it when it succeeds (include/hrtrail/core.h: "it never keeps
an earlier call's failure").

Usage: test_error_reset.py

Each function is called successfully (ctypes, through HRTRAIL_LIB) with an
hrt_error filled beforehand with a failure (code HRT_E_INTERNAL, message
"stale failure"); afterwards it must hold HRT_OK and "success" (the text of
hrt_strerror(HRT_OK)).  The grid and tracks are invented.
"""
import ctypes
import os
import shutil
import tempfile

import numpy as np

import importtest as it

t = it.Checks("error reset")
lib = it.load()
codes = it.status_codes()
work = tempfile.mkdtemp(prefix="hrtrail-error-reset-")
SUCCESS = lib.hrt_strerror(codes["HRT_OK"]).decode()


def stale():
    e = it.hc.HrtError()
    e.code = codes["HRT_E_INTERNAL"]
    e.message = b"stale failure"
    return e


def call(name, fn, *args):
    """fn(*args, &err) with a stale err: must return HRT_OK and reset err."""
    e = stale()
    rc = fn(*args, ctypes.byref(e))
    msg = e.message.decode()
    t.ok(rc == codes["HRT_OK"] and e.code == codes["HRT_OK"] and msg == SUCCESS,
         "%s: returns %d, leaves code %d and '%s' (want 0, 0, '%s')" % (name, rc, e.code, msg, SUCCESS))


try:
    # ---- the builder, and the upgrade of what it wrote
    names = (ctypes.c_char_p * 2)(b"zams", b"tams")
    seg = (ctypes.c_int * 1)(10)
    spec = it.hc.HrtRouteSpec(b"main", 2, names, seg)
    b = ctypes.c_void_p()
    call("hrt_builder_new", lib.hrt_builder_new, 1, ctypes.byref(spec), 0.014, ctypes.byref(b))
    n = 6
    cols = [np.ascontiguousarray(x, dtype=np.float64) for x in (
        np.log10(np.linspace(1e8, 6e8, n)), np.linspace(0, 0.1, n), np.full(n, 3.76), np.ones(n), np.zeros(n))]
    ph = (ctypes.c_int * n)(*[11] * n)
    kps = (ctypes.c_size_t * 2)(0, n - 1)
    raw = it.hc.HrtTrackData(1.0, 0, 0, float("nan"), n, *[it.hc.dptr(cols[k]) for k in (0, 1, 2)], None,
                             it.hc.dptr(cols[3]), it.hc.dptr(cols[4]), it.hc.dptr(cols[4]), ph, 2, kps)
    call("hrt_builder_add_track", lib.hrt_builder_add_track, b, 0.014, ctypes.byref(raw))
    m = 11
    eep = [np.ascontiguousarray(x, dtype=np.float64) for x in (
        np.log10(np.linspace(1e8, 6e8, m)), np.linspace(0, 0.1, m), np.full(m, 3.76), np.full(m, 1.2), np.zeros(m))]
    ph2 = (ctypes.c_int * m)(*[11] * m)
    on_eeps = it.hc.HrtTrackData(1.2, 0, 0, float("nan"), m, *[it.hc.dptr(eep[k]) for k in (0, 1, 2)], None,
                                 it.hc.dptr(eep[3]), it.hc.dptr(eep[4]), it.hc.dptr(eep[4]), ph2, 0, None)
    call("hrt_builder_add_eep_track", lib.hrt_builder_add_eep_track, b, 0.014, ctypes.byref(on_eeps))
    none = (ctypes.c_double * 1)(1.0)  # one route: no boundary is read
    call("hrt_builder_set_route_boundaries", lib.hrt_builder_set_route_boundaries, b, 0.014, none)
    call("hrt_builder_set_attribute (new)", lib.hrt_builder_set_attribute, b, b"note", b"invented")
    call("hrt_builder_set_attribute (replaced)", lib.hrt_builder_set_attribute, b, b"note", b"invented again")
    grid = os.path.join(work, "g.h5").encode()
    call("hrt_builder_write", lib.hrt_builder_write, b, grid)
    lib.hrt_builder_free(b)
    call("hrt_grid_upgrade", lib.hrt_grid_upgrade, grid, os.path.join(work, "g2.h5").encode())

    # ---- keypoints
    age = np.ascontiguousarray([1e6, 1e8, 2e8, 3e8])
    logl = np.ascontiguousarray([0.0, 0.0, 0.1, 0.2])
    logte = np.ascontiguousarray([3.76, 3.76, 3.75, 3.74])
    kph = (ctypes.c_int * 4)(10, 11, 11, 20)
    c = it.KpColumns(4, it.hc.dptr(age), it.hc.dptr(logl), it.hc.dptr(logte), None, None, None, None, None, kph,
                     None)
    res = it.KpResult()
    call("hrt_keypoints_find", lib.hrt_keypoints_find, ctypes.byref(c), ctypes.byref(spec), ctypes.byref(res))
    route, cand = ctypes.c_int(), ctypes.c_uint()
    call("hrt_keypoints_route", lib.hrt_keypoints_route, ctypes.byref(c), 1, ctypes.byref(spec), ctypes.byref(route),
         ctypes.byref(cand), ctypes.byref(res))

    # ---- the import
    track = os.path.join(work, "star_M1.txt")
    with open(track, "w") as f:
        f.write("age_Myr logL logTeff kp\n1 0 3.76 zams\n200 0.05 3.758 -\n900 0.1 3.755 -\n5000 0.3 3.74 tams\n")
    mapfile = os.path.join(work, "map.txt")
    with open(mapfile, "w") as f:
        f.write("age_yr=age_Myr*Myr log_l_lsun=logL log_teff_k=logTeff keypoints=kp\n")
    imp = ctypes.c_void_p()
    call("hrt_import_new", lib.hrt_import_new, ctypes.byref(imp))
    call("hrt_import_map", lib.hrt_import_map, imp, b"initial_mass_msun=1 z=0.014")
    call("hrt_import_map_file", lib.hrt_import_map_file, imp, mapfile.encode())
    call("hrt_import_set_routes", lib.hrt_import_set_routes, imp, 1, ctypes.byref(spec))
    call("hrt_import_set_z_ref", lib.hrt_import_set_z_ref, imp, 0.015)
    call("hrt_import_set_route_boundaries", lib.hrt_import_set_route_boundaries, imp, float("nan"), 0, None)
    call("hrt_import_add_file", lib.hrt_import_add_file, imp, track.encode(), float("nan"))
    call("hrt_import_run", lib.hrt_import_run, imp, os.path.join(work, "imported.h5").encode())
    lib.hrt_import_free(imp)
finally:
    shutil.rmtree(work, True)
t.finish()
