#!/usr/bin/python3
"""hrtrail fit and hrtrail forecast on the default grid, against the library's own answers.

Usage: test_cli_fit.py HRTRAIL_EXE LIBHRTRAIL_SO DEFAULT_GRID

Every number the command writes in CSV or JSON (%.17g) must equal, bit for bit,
what hrt_fit_star() and hrt_forecast() return through ctypes for the same
model options, seed and observation.  Bad inputs must give their message on
standard error, the documented exit code and nothing on standard output.
The observed stars are invented (an invented survey field).
"""
import ctypes
import math
import os
import sys

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "cli"))
from clitest import (EXIT_FILE, EXIT_OK, EXIT_RANGE, EXIT_USAGE, EXTRA, Checks, HrtError, Lib, json_number,  # noqa: E402
                     num, parse_csv, parse_json, read_records, run, same_number, tmpdir)

_D = ctypes.c_double
_P = ctypes.c_void_p
PHASES, REMNANTS, MAX_EVENTS = 64, 32, 24  # HRT_PHASE_SLOTS, HRT_REMNANT_SLOTS, HRT_FORECAST_MAX_EVENTS

# hrt_fit_obs, in the order of its fields: (value, sigma) pairs; the field names are the command's CSV
# columns (the vocabulary of tracks/FORMAT.md)
OBS_FIELDS = ["teff_k", "teff_k_sigma", "log_l_lsun", "log_l_lsun_sigma", "feh", "feh_sigma", "log_g_cgs",
              "log_g_cgs_sigma", "flux_w_m2", "flux_w_m2_sigma", "mbol", "mbol_sigma", "distance_pc",
              "distance_pc_sigma", "parallax_mas", "parallax_mas_sigma"]
# option of the command for each field (the same order)
OBS_OPTS = ["teff", "teff-sigma", "log-l", "log-l-sigma", "feh", "feh-sigma", "logg", "logg-sigma", "flux",
            "flux-sigma", "mbol", "mbol-sigma", "distance", "distance-sigma", "parallax", "parallax-sigma"]
OBS_COLS = list(OBS_FIELDS)


class Obs(ctypes.Structure):
    _fields_ = [(n, _D) for n in OBS_FIELDS]


class ModelOptions(ctypes.Structure):
    _fields_ = [("mass_prior", ctypes.c_int32), ("reserved_", ctypes.c_int32)] + [(n, _D) for n in (
        "mass_min_msun", "mass_max_msun", "age_max_yr", "feh_min", "feh_max", "feh_step_dex", "log_mass_step_dex")]


class Interval(ctypes.Structure):
    _fields_ = [("median", _D), ("lo", _D), ("hi", _D)]


class FitResult(ctypes.Structure):
    _fields_ = [("struct_size", ctypes.c_uint32), ("status", ctypes.c_int32), ("flags", ctypes.c_int32),
                ("phase", ctypes.c_int32), ("phase_second", ctypes.c_int32), ("n_obs", ctypes.c_int32)] + \
        [(n, Interval) for n in ("initial_mass_msun", "age_yr", "feh", "mass_msun", "r_rsun", "log_l_lsun", "teff_k",
                                 "log_g_cgs", "distance_pc")] + \
        [("phase_prob", _D * PHASES), ("phase_mass_msun", Interval * 2), ("phase_age_yr", Interval * 2),
         ("chi2_min", _D), ("n_eff", _D), ("n_points", _D), ("reserved", _D * 8)]


class Sample(ctypes.Structure):
    _fields_ = [(n, _D) for n in ("initial_mass_msun", "z", "age_yr", "log_l_lsun", "log_teff_k")] + \
        [("phase", ctypes.c_int32), ("reserved_", ctypes.c_int32)]


class FcState(ctypes.Structure):
    _fields_ = [("dt_yr", _D), ("phase", ctypes.c_int32), ("reserved_", ctypes.c_int32), ("phase_prob", _D * PHASES),
                ("luminous_frac", _D), ("log_l_lsun", Interval), ("teff_k", Interval), ("r_rsun", Interval),
                ("mass_msun", Interval)]


class FcEvent(ctypes.Structure):
    _fields_ = [("name", ctypes.c_char * 32), ("prob", _D), ("in_yr", Interval)]


class FcPhase(ctypes.Structure):
    _fields_ = [("prob", _D), ("start_in_yr", Interval), ("duration_yr", Interval)]


class FcResult(ctypes.Structure):
    _fields_ = [("struct_size", ctypes.c_uint32), ("status", ctypes.c_int32), ("remnant", ctypes.c_int32),
                ("phase_now", ctypes.c_int32), ("n_samples", _D), ("phase_now_prob", _D * PHASES), ("ms_prob", _D),
                ("ms_left_yr", Interval), ("end_in_yr", Interval), ("future", FcPhase * PHASES),
                ("n_events", ctypes.c_size_t), ("events", FcEvent * MAX_EVENTS), ("remnant_prob", _D * REMNANTS),
                ("remnant_mass_msun", Interval), ("reserved", _D * 8)]


t = Checks("cli-fit")
GRID = EXTRA[0]
G = ["--grid", GRID]
lib = Lib()
L = lib.L
L.hrt_fit_model_options_default.argtypes = [ctypes.POINTER(ModelOptions)]
L.hrt_fit_model_new.argtypes = [_P, ctypes.POINTER(ModelOptions), ctypes.POINTER(_P), ctypes.POINTER(HrtError)]
L.hrt_fit_model_free.argtypes = [_P]
L.hrt_fit_obs_init.argtypes = [ctypes.POINTER(Obs)]
L.hrt_fit_star.argtypes = [_P, ctypes.POINTER(Obs), ctypes.c_uint64, ctypes.c_size_t, ctypes.POINTER(Sample),
                           ctypes.POINTER(FitResult), ctypes.POINTER(HrtError)]
L.hrt_fit_mass_prior_from_name.argtypes = [ctypes.c_char_p]
L.hrt_forecast.argtypes = [_P, ctypes.c_size_t, ctypes.POINTER(Sample), ctypes.c_size_t, ctypes.POINTER(_D),
                           ctypes.POINTER(FcState), ctypes.POINTER(FcResult), ctypes.POINTER(HrtError)]
L.hrt_grid_z_range.argtypes = [_P, ctypes.POINTER(_D), ctypes.POINTER(_D)]
L.hrt_grid_z_range.restype = ctypes.c_int
L.hrt_strerror.argtypes = [ctypes.c_int]
L.hrt_strerror.restype = ctypes.c_char_p
g = lib.open(GRID)

FLAG_NAMES = [(0x1, "multimodal"), (0x2, "mass-edge"), (0x4, "age-limit"), (0x8, "feh-edge"), (0x10, "poor-match"),
              (0x20, "few-points")]  # HRT_FIT_* bits of include/hrtrail.h


def obs_of(values):
    """hrt_fit_obs from {field: value} (others NaN)."""
    o = Obs()
    L.hrt_fit_obs_init(ctypes.byref(o))
    for k, v in values.items():
        setattr(o, k, v)
    return o


def model_options(stars, prior="kroupa2001"):
    """The options the command builds its model with (bindings/cli/cmd_fit.c, fit_make_model)."""
    mo = ModelOptions()
    L.hrt_fit_model_options_default(ctypes.byref(mo))
    mo.mass_prior = L.hrt_fit_mass_prior_from_name(prior.encode())
    if stars and all(not math.isnan(s.feh) and s.feh_sigma > 0 for s in stars):
        lo = min(s.feh - 5.0 * s.feh_sigma for s in stars)
        hi = max(s.feh + 5.0 * s.feh_sigma for s in stars)
        zlo, zhi = _D(), _D()
        L.hrt_grid_z_range(g.g, ctypes.byref(zlo), ctypes.byref(zhi))
        flo, fhi = math.log10(zlo.value / g.z_ref()), math.log10(zhi.value / g.z_ref())
        st = mo.feh_step_dex
        mo.feh_min = max(flo, flo + math.floor((lo - flo) / st) * st)
        mo.feh_max = min(fhi, flo + math.ceil((hi - flo) / st) * st)
        if mo.feh_max <= mo.feh_min:
            if mo.feh_min >= fhi:
                mo.feh_min = max(flo, fhi - st)
            else:
                mo.feh_max = min(fhi, mo.feh_min + st)
    return mo


def lib_fit(stars, seed=1, n_samples=0, prior="kroupa2001"):
    """[(rc, result, samples)] of the library for the stars, on the command's model."""
    mo = model_options(stars, prior)
    m = _P()
    err = HrtError()
    rc = L.hrt_fit_model_new(g.g, ctypes.byref(mo), ctypes.byref(m), ctypes.byref(err))
    assert rc == 0, err.message
    out = []
    for s in stars:
        r = FitResult()
        smp = (Sample * max(n_samples, 1))()
        rc = L.hrt_fit_star(m, ctypes.byref(s), seed, n_samples, smp, ctypes.byref(r), ctypes.byref(err))
        t.eq(r.struct_size, ctypes.sizeof(FitResult), "hrt_fit_result mirror has the library's size")
        out.append((rc, r, smp))
    L.hrt_fit_model_free(m)
    return out


def flags_text(fl):
    return " ".join(name for bit, name in FLAG_NAMES if fl & bit)


# intervals of hrt_fit_result: the field's name is the column of the median, NAME_lo and NAME_hi the others
RESULT_COLS = ["initial_mass_msun", "age_yr", "feh", "mass_msun", "r_rsun", "log_l_lsun", "teff_k", "log_g_cgs",
               "distance_pc"]


def check_fit_row(row, rc, r, what, from_json=False):
    """A row of the command's CSV or JSON against the library's result (bit for bit)."""
    get = (lambda k: json_number(row[k])) if from_json else (lambda k: num(row[k]))
    t.eq(row["status"], "ok" if rc == 0 else L.hrt_strerror(rc).decode(), what + ": status")
    for field in RESULT_COLS:
        iv = getattr(r, field)
        for part, key in (("median", field), ("lo", field + "_lo"), ("hi", field + "_hi")):
            want = getattr(iv, part) if rc == 0 else float("nan")
            if from_json and not math.isfinite(want):
                want = float("nan")
            t.ok(same_number(get(key), want), "%s: %s = %r, library %r" % (what, key, get(key), want))
    if rc == 0:
        t.eq(row["phase"], lib.phase_key(r.phase), what + ": phase")
        t.ok(same_number(get("phase_prob"), r.phase_prob[r.phase]), what + ": phase_prob")
        want2 = lib.phase_key(r.phase_second) if r.phase_second else ""
        t.eq(row["phase_second"], want2, what + ": second phase")
        if r.phase_second:
            t.ok(same_number(get("phase_second_prob"), r.phase_prob[r.phase_second]), what + ": phase_second_prob")
        t.ok(same_number(get("chi2_min"), r.chi2_min), what + ": chi2_min")
    t.eq(row["flags"], flags_text(r.flags), what + ": notes")


def opts_of(values):
    args = []
    for field, opt in zip(OBS_FIELDS, OBS_OPTS):
        if field in values:
            args += ["--" + opt, repr(values[field])]
    return args


def fails_cleanly(args, code, words, what, stdin=None):
    """Exit code, a message naming the problem on stderr, nothing on stdout."""
    rc, out, err = run(args, stdin=stdin)
    t.eq(rc, code, what + ": exit code (stderr %r)" % err)
    t.eq(out, "", what + ": nothing on standard output")
    for w in words:
        t.ok(w in err, "%s: message %r names %r" % (what, err.strip(), w))


# ------------------------------------------------------------------ one star from options

SUN = {"teff_k": 5772.0, "teff_k_sigma": 50.0, "log_l_lsun": 0.0, "log_l_lsun_sigma": 0.01, "feh": 0.0,
       "feh_sigma": 0.05}
lib_sun = lib_fit([obs_of(SUN)])[0]
t.eq(lib_sun[0], 0, "library fits the nominal Sun")
rc, out, err = run(["fit"] + G + opts_of(SUN) + ["--csv"])
t.eq(rc, EXIT_OK, "fit --csv exit code (%s)" % err)
rows = parse_csv(out)
t.eq(len(rows), 1, "one star, one row")
if rows:
    check_fit_row(rows[0], lib_sun[0], lib_sun[1], "Sun (csv)")
    t.eq(rows[0]["phase"], "ms", "the Sun is on the main sequence")

rc, out, err = run(["fit"] + G + opts_of(SUN) + ["--json"])
t.eq(rc, EXIT_OK, "fit --json exit code (%s)" % err)
doc = read_records(out)  # a list of records, as pandas.read_json reads it
t.eq(len(doc), 1, "fit --json: one record for one star")
t.eq(list(doc[0]), list(rows[0]) if rows else None, "fit --json records have the names of the CSV columns")
check_fit_row(doc[0], lib_sun[0], lib_sun[1], "Sun (json)", from_json=True)

# the text answer for one star shows the same medians, rounded
rc, out, err = run(["fit"] + G + opts_of(SUN))
t.eq(rc, EXIT_OK, "fit (text) exit code")
t.ok("%.4f" % lib_sun[1].initial_mass_msun.median in out, "text shows the initial mass to 4 decimals")
t.ok("semi-analytic" in out, "text says how accurate the grid is")

# another prior and a seed: still the library's answer
K_GIANT = {"teff_k": 4840.0, "teff_k_sigma": 80.0, "log_l_lsun": 1.65, "log_l_lsun_sigma": 0.05, "feh": 0.0,
           "feh_sigma": 0.1}
for prior in ("chabrier2003", "log-flat"):
    want = lib_fit([obs_of(K_GIANT)], seed=9, prior=prior)[0]
    rc, out, err = run(["fit"] + G + opts_of(K_GIANT) + ["--prior", prior, "--seed", "9", "--csv"])
    t.eq(rc, EXIT_OK, "fit --prior %s exit code (%s)" % (prior, err))
    check_fit_row(parse_csv(out)[0], want[0], want[1], "clump giant, prior %s" % prior)
    t.ok("multimodal" in parse_csv(out)[0]["flags"], "clump giant flagged multimodal (%s)" % prior)

# ------------------------------------------------------------------ a catalogue in, CSV and JSON out

d = tmpdir()
CATALOGUE = [  # name, then values (NaN: empty cell); an invented survey field
    ("QF-01", SUN),
    ("QF-02", {"teff_k": 6350.0, "teff_k_sigma": 90.0, "log_l_lsun": 0.62, "log_l_lsun_sigma": 0.03, "feh": -0.15,
               "feh_sigma": 0.08}),
    ("QF-03", K_GIANT),
    ("QF-04", {"teff_k": 5200.0, "teff_k_sigma": 70.0, "feh": -0.3, "feh_sigma": 0.1, "log_g_cgs": 3.6,
               "log_g_cgs_sigma": 0.1, "flux_w_m2": 3.1e-12, "flux_w_m2_sigma": 6e-14}),
]
cols = ["name"] + [c for c, f in zip(OBS_COLS, OBS_FIELDS) if any(f in v for _, v in CATALOGUE)]
fields = {c: f for c, f in zip(OBS_COLS, OBS_FIELDS)}
lines = [",".join(cols)]
for name, v in CATALOGUE:
    lines.append(",".join([name] + [repr(v[fields[c]]) if fields[c] in v else "" for c in cols[1:]]))
cat_text = "\n".join(lines) + "\n"
cat = os.path.join(d, "field.csv")
with open(cat, "w") as f:
    f.write(cat_text)
want = lib_fit([obs_of(v) for _, v in CATALOGUE])
rc, out, err = run(["fit"] + G + ["--input", cat, "--csv"])
t.eq(rc, EXIT_OK, "fit --input --csv exit code (%s)" % err)
rows = parse_csv(out)
t.eq([r["name"] for r in rows], [n for n, _ in CATALOGUE], "one row a star, in the file's order, named")
for row, (name, _), (lrc, r, _s) in zip(rows, CATALOGUE, want):
    check_fit_row(row, lrc, r, "catalogue %s (csv)" % name)
if len(rows) == 4:
    dist = num(rows[3]["distance_pc"])
    t.ok(math.isfinite(dist) and dist > 0, "flux without a distance gives an HR-diagram distance")
    t.ok(math.isnan(num(rows[0]["distance_pc"])), "no flux, no distance")

rc, out2, err = run(["fit"] + G + ["--input", "-", "--csv"], stdin=cat_text)
t.eq(rc, EXIT_OK, "catalogue on standard input")
t.eq(out2, out, "standard input gives the same CSV as the file")

rc, out, err = run(["fit"] + G + ["--input", cat, "--json"])
t.eq(rc, EXIT_OK, "fit --input --json exit code (%s)" % err)
stars = read_records(out)
t.eq(len(stars), 4, "JSON has every star")
for row, (name, _), (lrc, r, _s) in zip(stars, CATALOGUE, want):
    t.eq(row["name"], name, "JSON star name")
    check_fit_row(row, lrc, r, "catalogue %s (json)" % name, from_json=True)

# a star the grid cannot match, with --keep-going: its row says so, the others are fitted
bad_cat = cat_text + "QF-05," + ",".join(["800", "30"] + [""] * (len(cols) - 3)) + "\n"
# the fifth star has no [Fe/H]: the model spans the grid's whole [Fe/H] range
want5 = lib_fit([obs_of(v) for _, v in CATALOGUE] + [obs_of({"teff_k": 800.0, "teff_k_sigma": 30.0})])
t.ok(want5[4][0] != 0, "the library cannot match an 800 K star")
rc, out, err = run(["fit"] + G + ["--input", "-", "--keep-going", "--csv"], stdin=bad_cat)
t.eq(rc, EXIT_RANGE, "--keep-going: exit code of the worst star (outside the grid)")
rows = parse_csv(out)
t.eq(len(rows), 5, "--keep-going: every star has a row")
if len(rows) == 5:
    for row, (lrc, r, _s) in zip(rows, want5):
        check_fit_row(row, lrc, r, "--keep-going: star %s" % row["name"])
    t.ok(rows[0]["initial_mass_msun"] != parse_csv(out2)[0]["initial_mass_msun"],
         "the model follows the catalogue: a star without [Fe/H] widens it")
t.ok("line 6" in err and "QF-05" in err, "--keep-going names the line and star that failed (%r)" % err.strip())

# ------------------------------------------------------------------ bad inputs of fit

fails_cleanly(["fit"] + G + ["--teff", "5772", "--teff-sigma", "-50"], EXIT_USAGE, ["sigma"], "negative sigma")
fails_cleanly(["fit"] + G + ["--teff", "800", "--teff-sigma", "30"], EXIT_RANGE, ["outside every track"],
              "Teff outside every track")
fails_cleanly(["fit"] + G + ["--teff", "5772", "--teff-sigma", "50", "--log-l", "-3", "--log-l-sigma", "0.05"],
              EXIT_RANGE, ["5 sigma"], "nothing within 5 sigma")
fails_cleanly(["fit"] + G + ["--teff", "hot", "--teff-sigma", "50"], EXIT_USAGE, ["--teff", "hot"], "non-number")
fails_cleanly(["fit"] + G + ["--teff", "5772", "--teff-sigma", "50", "--prior", "salpeter"], EXIT_USAGE,
              ["salpeter"], "unknown prior")
fails_cleanly(["fit"] + G, EXIT_USAGE, ["--teff"], "no measurements")
fails_cleanly(["fit"] + G + ["--input", os.path.join(d, "missing.csv")], EXIT_FILE, ["missing.csv"], "missing file")
fails_cleanly(["fit"] + G + ["--input", "-"], EXIT_USAGE, ["teff_k", "teff_k_sigma", "parallax_mas_sigma"],
              "catalogue without a teff_k column: the expected columns named", stdin="name,log_l_lsun\nA,1.0\n")
fails_cleanly(["fit"] + G + ["--input", "-"], EXIT_USAGE, ["line 3", "teff_k_sigma", "abc"],
              "bad number in the catalogue", stdin="name,teff_k,teff_k_sigma\nA,5772,50\nB,5000,abc\n")
fails_cleanly(["fit"] + G + ["--input", "-"], EXIT_RANGE, ["line 2", "outside every track"],
              "unmatched star without --keep-going", stdin="name,teff_k,teff_k_sigma\nA,800,30\n")
# the columns of version 0.1 are refused, naming today's
for old, new in (("teff", "teff_k"), ("logg", "log_g_cgs"), ("flux_sigma", "flux_w_m2_sigma"), ("Teff_K", "teff_k")):
    fails_cleanly(["fit"] + G + ["--input", "-"], EXIT_USAGE, ["'%s'" % old, "'%s'" % new, "log_l_lsun_sigma"],
                  "catalogue column %s" % old, stdin="name,%s\nA,5772\n" % old)
fails_cleanly(["fit"] + G + opts_of(SUN) + ["--distance", "10", "--distance-sigma", "1"], EXIT_USAGE,
              ["distance"], "a distance without a flux")

# ------------------------------------------------------------------ forecast of an exact star


def lib_forecast(samples, times):
    n = len(samples)
    arr = (Sample * n)(*samples)
    dt = (_D * max(len(times), 1))(*times)
    st = (FcState * max(len(times), 1))()
    r = FcResult()
    err = HrtError()
    rc = L.hrt_forecast(g.g, n, arr, len(times), dt, st, ctypes.byref(r), ctypes.byref(err))
    t.eq(r.struct_size, ctypes.sizeof(FcResult), "hrt_forecast_result mirror has the library's size")
    return rc, r, list(st)[:len(times)]


def check_iv(doc, name, iv, what):
    """An interval written as NAME (median), NAME_lo and NAME_hi."""
    for part, key in (("median", name), ("lo", name + "_lo"), ("hi", name + "_hi")):
        want = getattr(iv, part)
        t.ok(same_number(json_number(doc[key]), want if math.isfinite(want) else float("nan")),
             "%s: %s = %r, library %r" % (what, key, doc[key], want))


def check_forecast(doc, r, states, what):
    t.eq(doc["phase_now"], lib.phase_key(r.phase_now), what + ": phase now")
    t.ok(same_number(json_number(doc["ms_prob"]), r.ms_prob), what + ": ms_prob")
    check_iv(doc, "ms_left_yr", r.ms_left_yr, what + ": ms_left_yr")
    check_iv(doc, "end_in_yr", r.end_in_yr, what + ": end_in_yr")
    check_iv(doc, "remnant_mass_msun", r.remnant_mass_msun, what + ": remnant mass")
    t.eq(doc["remnant"], lib.remnant_key(r.remnant), what + ": remnant")
    t.eq([k["keypoint"] for k in doc["keypoints"]], [r.events[k].name.decode() for k in range(r.n_events)],
         what + ": keypoints ahead")
    for k, row in enumerate(doc["keypoints"][:r.n_events]):
        t.ok(same_number(json_number(row["in_yr"]), r.events[k].in_yr.median), what + ": keypoint %d time" % k)
    t.eq(len(doc["states"]), len(states), what + ": a state a time asked")
    for row, s in zip(doc["states"], states):
        t.ok(same_number(json_number(row["dt_yr"]), s.dt_yr), what + ": state time")
        t.eq(row["phase"], lib.phase_key(s.phase), what + ": state phase")
        for name in ("log_l_lsun", "teff_k", "r_rsun", "mass_msun"):
            check_iv(row, name, getattr(s, name), what + ": state " + name)


sun_now = Sample(1.0, 0.014, 4.57e9, 0.0, 0.0, 0, 0)
lrc, lr, lst = lib_forecast([sun_now], [1e9, 8e9])
t.eq(lrc, 0, "library forecasts the Sun")
rc, out, err = run(["forecast"] + G + ["--mass", "1", "--z", "0.014", "--age", "4.57Gyr", "--at", "1Gyr,8Gyr",
                                       "--json"])
t.eq(rc, EXIT_OK, "forecast --json exit code (%s)" % err)
doc = parse_json(out)
t.eq(doc["n_samples"], 1, "an exact star is one sample")
check_forecast(doc, lr, lst, "forecast of the Sun")
t.eq(doc["states"][1]["phase"] if len(doc["states"]) > 1 else None, "wd", "8 Gyr on, the Sun is a white dwarf")

rc, out, err = run(["forecast"] + G + ["--mass", "1", "--z", "0.014", "--age", "4.57Gyr", "--at", "1Gyr,8Gyr",
                                       "--csv"])
t.eq(rc, EXIT_OK, "forecast --csv exit code")
rows = parse_csv(out)
t.eq(len(rows), 2, "forecast CSV: a row a time asked")
for row, s in zip(rows, lst):
    t.ok(same_number(num(row["dt_yr"]), s.dt_yr) and same_number(num(row["mass_msun"]), s.mass_msun.median),
         "forecast CSV state at %g yr" % s.dt_yr)
rc, out, err = run(["forecast"] + G + ["--mass", "1", "--z", "0.014", "--age", "4.57Gyr", "--csv"])
rows = parse_csv(out)
t.eq([r_["keypoint"] for r_ in rows], [lr.events[k].name.decode() for k in range(lr.n_events)],
     "forecast CSV without times: the keypoints ahead")

# ------------------------------------------------------------------ forecast of a fitted star

(frc, fres, fsmp), = lib_fit([obs_of(SUN)], seed=5, n_samples=200)
t.eq(frc, 0, "library fits the Sun with 200 draws")
lrc, lr, lst = lib_forecast(list(fsmp), [2e9])
rc, out, err = run(["forecast"] + G + opts_of(SUN) + ["--samples", "200", "--seed", "5", "--at", "2Gyr", "--json"])
t.eq(rc, EXIT_OK, "forecast from measurements exit code (%s)" % err)
doc = parse_json(out)
t.eq(doc["n_samples"], 200, "forecast uses the draws asked for")
check_forecast(doc, lr, lst, "forecast of the fitted Sun")

# ------------------------------------------------------------------ bad inputs of forecast

fails_cleanly(["forecast"] + G + ["--mass", "1"], EXIT_USAGE, ["--age"], "mass without age")
fails_cleanly(["forecast"] + G + ["--mass", "500", "--age", "1Myr"], EXIT_RANGE, ["500"], "mass outside the grid")
fails_cleanly(["forecast"] + G + ["--mass", "1", "--age", "1Gyr", "--at", "-1Gyr"], EXIT_USAGE, ["--at"],
              "negative future time")
fails_cleanly(["forecast"] + G + ["--mass", "1", "--age", "1Gyr", "--teff", "5772", "--teff-sigma", "50"],
              EXIT_USAGE, ["not both"], "exact star and measurements")
fails_cleanly(["forecast"] + G + ["--teff", "800", "--teff-sigma", "30"], EXIT_RANGE, ["outside every track"],
              "forecast of a star outside every track")
fails_cleanly(["forecast"] + G + ["--mass", "1", "--age", "1Gyr", "--samples", "0"], EXIT_USAGE, ["--samples"],
              "zero samples")

g.close()
t.finish()
