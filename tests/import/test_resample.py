"""EEP resampling on tracks with spikes and thermal-pulse oscillations
(tracks/FORMAT.md, "EEP resampling"), and the builder's messages.

Usage: test_resample.py HRTRAIL_EXE

A raw track is imported twice, clean and damaged, with its keypoints
flagged (so only the resampling differs), and the two grids are compared
EEP by EEP (h5py):

1. a red giant branch (rgb_base to he_ignition, 120 EEPs) with a +2 dex
   spike in log L over three rows: the EEPs outside the spike must be those
   of the clean track (they used to be 0.8 dex off, most of the segment's
   EEPs spent on the spike), and no more EEPs may fall inside it than on
   the clean track (those carry the spike: the resampler edits no data);
2. a thermally pulsing AGB (first_pulse to agb_end, 80 EEPs) with a dip of
   0.6 dex in log L for 2 rows every 12: the share of EEPs inside the dips
   must be the clean track's share there (the dips used to take 85 % of
   them), and the EEPs outside the dips those of the clean track;
3. a spike below the threshold (0.15 dex, which the resampler keeps) takes
   at most the share of EEPs the documented bound allows.

The builder's messages (ctypes): a track of more than 10,000,000 points is
told "at most", not "at least"; a NULL keypoint_sample is named as such.

The tracks are invented.  Tolerances are absolute, in dex, and stated with
each check; the measured values are printed.
"""
import ctypes
import os
import random
import shutil
import sys
import tempfile

import h5py
import numpy as np

import importtest as it

EXE = os.path.abspath(sys.argv[1])
t = it.Checks("resample")
work = tempfile.mkdtemp(prefix="hrtrail-import-resample-")
MAP = ("age_yr=age_Myr*Myr log_l_lsun=logL log_teff_k=logTeff keypoints=kp initial_mass_msun=1.6 z=0.02")


def track(t0, t1, n, l0, l1, te0, te1, seed):
    """n rows unevenly spaced in age over [t0, t1] (Myr), log L and log Teff linear in age."""
    rng = random.Random(seed)
    u = np.array([0.0] + sorted(rng.random() for _ in range(n - 2)) + [1.0])
    return t0 + (t1 - t0) * u, l0 + (l1 - l0) * u, te0 + (te1 - te0) * u


def imported(name, route, kp0, kp1, age, logl, logte):
    """Import one track on a one-route layout; the EEPs (log age, log L) of its grid."""
    d = os.path.join(work, name)
    os.mkdir(d)
    with open(os.path.join(d, "track.dat"), "w") as f:
        f.write("age_Myr logL logTeff kp\n")
        for i in range(len(age)):
            flag = kp0 if i == 0 else kp1 if i == len(age) - 1 else "-"
            f.write("%.17g %.17g %.17g %s\n" % (age[i], logl[i], logte[i], flag))
    routes = os.path.join(d, "routes.txt")
    with open(routes, "w") as f:
        f.write(route + "\n")
    out = os.path.join(work, name + ".h5")
    rc, rep, err = it.run_import(EXE, ["-o", out, "--routes", routes, "--map", MAP, os.path.join(d, "track.dat")])
    t.ok(rc == 0, "%s: imported (%d: %s)" % (name, rc, err.strip()))
    if rc != 0:
        return None
    with h5py.File(out, "r") as f:
        g = f["metallicity/0"]
        n = int(g["n_eep"][0])
        return 10.0 ** g["log_age_yr"][0, :n] / 1e6, g["log_l_lsun"][0, :n]


def inside(ages, intervals):
    """Which EEP ages fall strictly inside one of the (lo, hi) intervals."""
    return np.array([any(lo < a < hi for lo, hi in intervals) for a in ages])


try:
    # ---- 1. a +2 dex spike over three rows of the red giant branch
    route = "rgb: rgb_base 120 he_ignition"
    age, logl, logte = track(1600.0, 1700.0, 200, 1.1, 3.3, 3.70, 3.568, 5)
    spiky = logl.copy()
    spiky[100:103] += 2.0
    clean = imported("rgb_clean", route, "rgb_base", "he_ignition", age, logl, logte)
    spike = imported("rgb_spike", route, "rgb_base", "he_ignition", age, spiky, logte)
    if clean and spike:
        where = [(age[99], age[103])]  # the spike's rows lie strictly between these two clean ones
        on, on_clean = inside(spike[0], where), inside(clean[0], where)
        off_err = float(np.max(np.abs(spike[1][~on] - clean[1][~on])))
        print("rgb spike +2 dex over 3 rows: |log L - clean| off the spike %.3g dex; %d of %d EEPs inside it, %d on "
              "the clean track (largest error there %.3g dex)" % (off_err, on.sum(), len(on), on_clean.sum(),
                                                                 np.max(np.abs(spike[1] - clean[1]))))
        # absolute 1e-9 dex (rounding): the despiked track is the clean one where the clean track is linear in
        # age, as this one is (FORMAT.md), so the EEPs off the spike are the clean track's
        t.ok(off_err < 1e-9, "rgb spike: EEPs off the spike those of the clean track (%.3g)" % off_err)
        t.ok(on.sum() <= on_clean.sum(), "rgb spike: no more EEPs inside the spike than on the clean track (%d, %d)"
             % (on.sum(), on_clean.sum()))

    # ---- 2. thermal pulses: a 0.6 dex dip for 2 rows in every 12
    route = "agb: first_pulse 80 agb_end"
    age, logl, logte = track(1812.0, 1814.0, 240, 3.0, 3.6, 3.60, 3.55, 9)
    dips = [i for i in range(1, 239) if i % 12 in (5, 6)]
    pulsed = logl.copy()
    pulsed[dips] -= 0.6
    clean = imported("agb_clean", route, "first_pulse", "agb_end", age, logl, logte)
    pulse = imported("agb_pulses", route, "first_pulse", "agb_end", age, pulsed, logte)
    if clean and pulse:
        where = [(age[i - 1], age[i + 2]) for i in dips if i % 12 == 5]
        share_clean = inside(clean[0], where).mean()
        on = inside(pulse[0], where)
        off_err = float(np.max(np.abs(pulse[1][~on] - clean[1][~on])))
        print("thermal pulses: share of EEPs inside the dips %.3f (clean track %.3f); |log L - clean| off the "
              "dips %.3g dex" % (on.mean(), share_clean, off_err))
        # absolute: at most one EEP (1/81 of them) more than on the clean track inside the dips
        t.ok(on.mean() <= share_clean + 1.0 / 81, "pulses: the dips take no more EEPs than on the clean track "
             "(%.3f vs %.3f)" % (on.mean(), share_clean))
        # absolute 1e-9 dex (rounding): the despiked track is the clean one (linear in age)
        t.ok(off_err < 1e-9, "pulses: EEPs off the dips those of the clean track (%.3g)" % off_err)

    # ---- 3. a spike below the threshold: kept, its share of EEPs bounded
    route = "rgb: rgb_base 120 he_ignition"
    age, logl, logte = track(1600.0, 1700.0, 200, 1.1, 3.3, 3.70, 3.568, 5)
    small = logl.copy()
    small[100:103] += 0.15
    clean = imported("rgb_clean2", route, "rgb_base", "he_ignition", age, logl, logte)
    low = imported("rgb_small", route, "rgb_base", "he_ignition", age, small, logte)
    if clean and low:
        on = inside(low[0], [(age[99], age[103])])
        # the bound of FORMAT.md: a kept excursion of height h lengthens the segment by at most 2 h, so it takes
        # at most n_eep * 2 h / D + 1 EEPs more than the clean track there (D: the segment's clean distance)
        d_clean = np.sum(np.sqrt(np.diff(2.0 * logte) ** 2 + np.diff(logl) ** 2 + np.diff((age - age[0]) /
                                                                                       (age[-1] - age[0])) ** 2))
        bound = 120 * 2 * 0.15 / d_clean + 1 + inside(clean[0], [(age[99], age[103])]).sum()
        print("spike of 0.15 dex (kept): %d EEPs inside it, bound %.1f" % (on.sum(), bound))
        t.ok(on.sum() <= bound, "small spike: %d EEPs inside, at most %.1f" % (on.sum(), bound))

    # ---- the builder's messages
    lib = it.load()
    codes = it.status_codes()
    names = (ctypes.c_char_p * 2)(b"zams", b"tams")
    seg = (ctypes.c_int * 1)(10)
    spec = it.hc.HrtRouteSpec(b"main", 2, names, seg)
    b, e = ctypes.c_void_p(), it.hc.HrtError()
    lib.hrt_builder_new(1, ctypes.byref(spec), 0.014, ctypes.byref(b), ctypes.byref(e))
    n = 6
    arr = [np.ascontiguousarray(x, dtype=np.float64) for x in (
        np.log10(np.linspace(1e8, 6e8, n)), np.linspace(0, 0.1, n), np.full(n, 3.76), np.ones(n), np.zeros(n))]
    ph = (ctypes.c_int * n)(*[11] * n)
    kps = (ctypes.c_size_t * 2)(0, n - 1)
    d = it.hc.HrtTrackData(1.0, 0, 0, float("nan"), n, it.hc.dptr(arr[0]), it.hc.dptr(arr[1]), it.hc.dptr(arr[2]),
                           None, it.hc.dptr(arr[3]), it.hc.dptr(arr[4]), it.hc.dptr(arr[4]), ph, 2, kps)
    d.n = 10000001  # checked before any column is read
    rc = lib.hrt_builder_add_track(b, 0.014, ctypes.byref(d), ctypes.byref(e))
    msg = e.message.decode()
    t.ok(rc == codes["HRT_E_INVALID"] and "at most 10000000" in msg and "at least" not in msg,
         "a track of 10,000,001 points: 'at most' (%d: %s)" % (rc, msg))
    d.n, d.keypoint_sample = n, None
    rc = lib.hrt_builder_add_track(b, 0.014, ctypes.byref(d), ctypes.byref(e))
    msg = e.message.decode()
    t.ok(rc == codes["HRT_E_NULL"] and "keypoint_sample is NULL" in msg and "needs" not in msg.split(":")[1][:12],
         "keypoint_sample NULL: named as such (%d: %s)" % (rc, msg))
    d.keypoint_sample = kps
    t.ok(lib.hrt_builder_add_track(b, 0.014, ctypes.byref(d), ctypes.byref(e)) == 0, "the same track is accepted")
    lib.hrt_builder_free(b)
finally:
    shutil.rmtree(work, True)
t.finish()
