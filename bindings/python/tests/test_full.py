#!/usr/bin/python3
"""The whole library from Python: every public function reached, and every result
equal to what another path through the library gives.

The other path is the command line (bindings/cli, which calls the C library
directly and prints doubles with 17 significant digits, so JSON values compare
bit for bit) or the library's own building blocks (a population run against
draw + evaluate + summary_add; a chunked run against the whole).  No value of
the default grid is written here: every expected value comes from the other
path, on random cases (seeded; a failure prints the case).

Environment (meson test): HRTRAIL_LIB, HRTRAIL_GRID, HRTRAIL_CLI (the hrtrail
command), HRTRAIL_STRUCT_LAYOUT (tests/struct_layout.c built), PYTHONPATH.
"""
import concurrent.futures
import ctypes
import json
import math
import multiprocessing
import os
import pickle
import random
import re
import shutil
import subprocess
import tempfile
import unittest

import numpy as np

import hrtrail
from hrtrail import _clib

from fulltest import CLI, GRID, HERE, ROOT, SEED, Base, cli_json, pd, read, same  # noqa: F401

LAYOUT = os.environ["HRTRAIL_STRUCT_LAYOUT"]
try:
    import astropy.units as u
    from astropy.table import QTable
except ImportError:  # pragma: no cover
    u = None


# ---------------------------------------------------------------------------- coverage and layout
def header_functions():
    names = set()
    for part in ("core", "build", "population", "fit"):
        src = read(os.path.join(ROOT, "include", "hrtrail", part + ".h"))
        names |= set(re.findall(r"HRT_API\s+[\w\s\*]*?\b(hrt_\w+)\s*\(", src))
    return names


class Coverage(unittest.TestCase):
    def test_every_public_function_is_declared_and_called(self):
        funcs = header_functions()
        self.assertGreater(len(funcs), 100)
        pkg = os.path.join(HERE, "..", "hrtrail")
        clib = read(os.path.join(pkg, "_clib.py"))
        # the ABI guard calls these two through getattr in _check_abi
        called = {"hrt_abi_version", "hrt_state_size"}
        for f in os.listdir(pkg):
            if f.endswith(".py") and f != "_clib.py":
                called |= set(re.findall(r"lib\.(hrt_\w+)", read(os.path.join(pkg, f))))
        declared = set(re.findall(r'"(hrt_\w+)": \(', clib)) | {"hrt_abi_version", "hrt_state_size"}
        self.assertEqual(sorted(funcs - declared), [], "public functions without a ctypes prototype")
        self.assertEqual(sorted(funcs - called), [], "public functions no Python call reaches")
        print("\n  %d of %d public functions reached from Python" % (len(funcs & called), len(funcs)))

    def test_meson_installs_every_module(self):
        with open(os.path.join(HERE, "..", "meson.build")) as f:
            listed = set(re.findall(r"'hrtrail/([\w.]+)'", f.read()))
        present = {f for f in os.listdir(os.path.join(HERE, "..", "hrtrail")) if f.endswith(".py") or f == "py.typed"}
        self.assertEqual(sorted(present - listed), [])

    def test_pyproject_version_is_the_library_version(self):
        with open(os.path.join(HERE, "..", "pyproject.toml")) as f:
            v = re.search(r'^version = "([^"]+)"', f.read(), re.M).group(1)
        self.assertEqual(v, hrtrail.__version__)

    def test_struct_layouts_match_the_compiler(self):
        out = subprocess.run([LAYOUT], capture_output=True, text=True, check=True).stdout.split("\n")
        cls = {name.lower().replace("_", ""): getattr(_clib, name) for name in dir(_clib)
               if name.startswith("Hrt") and isinstance(getattr(_clib, name), type)}
        n = 0
        for line in out:
            if not line:
                continue
            ctype, field, val = line.split()
            py = cls[ctype.replace("_", "")]
            if field == "-":
                self.assertEqual(ctypes.sizeof(py), int(val), "sizeof(%s)" % ctype)
            else:
                self.assertEqual(getattr(py, field).offset, int(val), "offsetof(%s, %s)" % (ctype, field))
            n += 1
        self.assertGreater(n, 200)

    def test_readme_python_example_runs(self):
        text = read(os.path.join(ROOT, "README.md"))
        block = re.search(r"## From Python.*?```python\n(.*?)```", text, re.S).group(1)
        ns = {}
        exec(compile(block, "README.md (From Python)", "exec"), ns)
        self.assertEqual(len(ns["sums"]), 2)
        self.assertEqual(ns["r"].status, hrtrail.Status.OK)

    def test_help_documents_every_public_call(self):
        missing = []
        for name in hrtrail.__all__:
            obj = getattr(hrtrail, name)
            if callable(obj) and not (obj.__doc__ or "").strip():
                missing.append(name)
            if isinstance(obj, type) and obj.__module__.startswith("hrtrail"):
                for attr, v in vars(obj).items():
                    if not attr.startswith("_") and (callable(v) or isinstance(v, property)) \
                            and not (getattr(v, "__doc__", "") or "").strip():
                        missing.append(name + "." + attr)
        self.assertEqual(missing, [])
        self.assertTrue(os.path.exists(os.path.join(HERE, "..", "hrtrail", "py.typed")))

    def public_callables(self):
        for name in hrtrail.__all__:
            obj = getattr(hrtrail, name)
            if isinstance(obj, type) and obj.__module__.startswith("hrtrail"):
                for attr, v in vars(obj).items():
                    if callable(v) and (not attr.startswith("_") or attr == "__init__"):
                        yield "%s.%s" % (name, attr), v, obj
            elif callable(obj) and getattr(obj, "__module__", "").startswith("hrtrail"):
                yield name, obj, None

    def test_help_gives_the_unit_of_every_argument(self):
        """An argument named with a unit (mass_msun, age_yr, teff_k, ...) has that unit in its help text
        (the call's docstring, or its class's for a constructor)."""
        import inspect
        unit_of = {"_msun": "Msun", "_yr": "yr", "_k": "K", "_pc": "pc", "_mas": "mas", "_w_m2": "W m^-2",
                   "_dex": "dex", "_w": "W"}
        missing = []
        for name, fn, cls in self.public_callables():
            try:
                params = inspect.signature(fn).parameters
            except (TypeError, ValueError):
                continue
            doc = (fn.__doc__ or "") + ((cls.__doc__ or "") if cls is not None else "")
            for p in params:
                for suffix, unit in unit_of.items():
                    if p.endswith(suffix) and unit not in doc:
                        missing.append("%s(%s): %s" % (name, p, unit))
        self.assertEqual(missing, [])

    def test_type_hints_resolve(self):
        import typing
        n = 0
        for name, fn, _ in self.public_callables():
            if getattr(fn, "__annotations__", None):
                typing.get_type_hints(fn)  # a NameError here is a broken hint
                n += 1
        self.assertGreater(n, 40)


# ---------------------------------------------------------------------------- populations
def random_population(rng, grid):
    """A random specification and the matching `hrtrail population` options."""
    zlo, zhi = grid.z_range
    imf = rng.choice(["salpeter1955", "kroupa2001", "chabrier2003", "powerlaw"])
    lo = 10 ** rng.uniform(math.log10(0.08), math.log10(0.8))
    hi = 10 ** rng.uniform(math.log10(5.0), math.log10(150.0))  # beyond the grid sometimes: failures counted
    alpha = round(rng.uniform(1.3, 3.0), 3) if imf == "powerlaw" else None
    sfh = rng.choice(["burst", "constant", "exponential"])
    ages = sorted(round(10 ** rng.uniform(7.5, 10.1), -4) for _ in range(rng.randint(1, 3)))
    t0 = round(rng.uniform(0, 5e7), -3)
    args = ["--imf", imf, "--mass-range", "%r,%r" % (lo, hi), "--sfh", sfh, "--sfh-from", repr(t0)]
    if alpha is not None:
        args += ["--alpha", repr(alpha)]
    if sfh == "burst":
        sp = hrtrail.SFH.burst(t0)
    else:
        t1 = ages[-1]
        args += ["--sfh-to", repr(t1)]
        if sfh == "constant":
            sp = hrtrail.SFH.constant(t0, t1)
        else:
            tau = round(10 ** rng.uniform(8, 9.5), -3)
            args += ["--tau", repr(tau)]
            sp = hrtrail.SFH.exponential(t0, t1, tau)
    zk = rng.choice(["fixed", "log_uniform", "log_normal"])
    z = 10 ** rng.uniform(math.log10(zlo), math.log10(zhi))
    if zk == "fixed":
        zd = hrtrail.ZDist.fixed(z)
        args += ["--z", repr(z)]
    elif zk == "log_uniform":
        zd = hrtrail.ZDist.log_uniform(zlo, zhi)
        args += ["--z", repr(z), "--z-uniform", "--z-range", "%r,%r" % (zlo, zhi)]
    else:
        s = round(rng.uniform(0.05, 0.5), 3)
        zd = hrtrail.ZDist.log_normal(z, s, zlo, zhi)
        args += ["--z", repr(z), "--feh-spread", repr(s), "--z-range", "%r,%r" % (zlo, zhi)]
    n = rng.randint(1000, 30000)
    seed = rng.randint(0, 2 ** 40)
    args += ["--stars", str(n), "--seed", str(seed), "--age", ",".join(repr(a) for a in ages)]
    pop = hrtrail.Population(n, imf=hrtrail.IMF(imf, lo, hi, alpha), sfh=sp, zdist=zd, seed=seed)
    return pop, ages, args


class Magnitudes(Base):
    """hrtrail.magnitudes and bc_v against the command line (at --vmag --distance --av) on random stars,
    bit for bit, and against the definitions; the Sun against IAU 2015 B2 and Torres (2010)."""

    def test_random_states_match_the_command_line(self):
        rng = random.Random(SEED + 7)
        n = 300
        mass = [10 ** rng.uniform(-0.9, 1.6) for _ in range(n)]
        age = [10 ** rng.uniform(6.0, 10.1) for _ in range(n)]
        z = [rng.choice([0.001, 0.004, 0.014, 0.02]) for _ in range(n)]
        d, av = 10 ** rng.uniform(0.5, 4.5), rng.uniform(0.0, 2.0)
        st = self.grid.evaluate(mass, age, z, errors="ignore")
        m = hrtrail.magnitudes(st, distance_pc=d, a_v_mag=av)
        csv = os.path.join(self.tmp.name, "mag-stars.csv")
        with open(csv, "w") as f:
            f.write("initial_mass_msun,age_yr,z\n")
            for i in range(n):
                f.write("%r,%r,%r\n" % (mass[i], age[i], z[i]))
        doc, _ = cli_json("at", "--input", csv, "--keep-going", "--vmag", "--distance", repr(d), "--av", repr(av))
        self.assertEqual(len(doc), n)
        finite = 0
        for i, rec in enumerate(doc):
            for key, col in (("abs_mbol", m.abs_mbol), ("bc_v", m.bc_v), ("abs_mv", m.abs_mv), ("mv", m.mv)):
                self.assertTrue(same(rec[key], col[i]), "star %d (%r Msun, %r yr, Z %r): %s CLI %r, Python %r"
                                % (i, mass[i], age[i], z[i], key, rec[key], col[i]))
            self.assertEqual("bc-uncalibrated" in rec["flags"], bool(m.flags[i] & hrtrail.Flag.BEYOND_LAW)
                             and math.isfinite(m.bc_v[i]), "star %d flags %r" % (i, rec["flags"]))
            if math.isfinite(m.abs_mv[i]):
                finite += 1
                # the definitions (header of hrt_magnitudes): exact to rounding
                self.assertAlmostEqual(m.abs_mbol[i], 4.739995933919459 - 2.5 * st["log_l_lsun"][i], delta=1e-12)
                self.assertEqual(m.bc_v[i], hrtrail.bc_v(st["log_teff_k"][i]))
                self.assertAlmostEqual(m.abs_mv[i], m.abs_mbol[i] - m.bc_v[i], delta=1e-12)
                self.assertAlmostEqual(m.mv[i], m.abs_mv[i] + 5 * math.log10(d / 10) + av, delta=1e-9)
                lo, hi = (math.log10(t) for t in hrtrail.BC_V_TEFF_RANGE_K)
                outside = not lo <= st["log_teff_k"][i] <= hi or st["flags"][i] & hrtrail.Flag.REMNANT
                self.assertEqual(bool(m.flags[i] & hrtrail.Flag.BEYOND_LAW), bool(outside))
        self.assertGreater(finite, n // 2)

    def test_sun_and_arguments(self):
        sun = np.zeros((), dtype=hrtrail.STATE_DTYPE)
        sun["log_l_lsun"], sun["log_teff_k"] = 0.0, math.log10(5772.0)
        m = hrtrail.magnitudes(sun, distance_pc=10.0)
        self.assertAlmostEqual(float(m.abs_mbol), 4.74, delta=1e-4)  # IAU 2015 Resolution B2
        # Torres (2010, AJ 140, 1158) [read: abstract] V_sun = -26.76 +- 0.03, i.e. M_V,sun = 4.81 +- 0.03
        self.assertAlmostEqual(float(m.abs_mv), -26.76 + 31.572, delta=0.03)
        self.assertEqual(float(m.mv), float(m.abs_mv))
        self.assertTrue(math.isnan(float(hrtrail.magnitudes(sun).mv)))
        for bad in ({"distance_pc": -1.0}, {"distance_pc": 0.0}, {"distance_pc": 10.0, "a_v_mag": -0.5}):
            with self.assertRaises(hrtrail.InvalidInputError):
                hrtrail.magnitudes(sun, **bad)
        with self.assertRaises(hrtrail.InvalidInputError):
            hrtrail.magnitudes(np.zeros(3))
        if u is not None:  # astropy distances
            self.assertEqual(float(hrtrail.magnitudes(sun, distance_pc=1 * u.kpc).mv), float(m.abs_mv) + 10.0)


class Populations(Base):
    def test_equal_to_the_command_line_on_random_cases(self):
        rng = random.Random(SEED)
        for case in range(14):
            pop, ages, args = random_population(rng, self.grid)
            with self.subTest(case=case, args=" ".join(args)):
                doc, _ = cli_json("population", *args, "--threads", 2)
                sums = pop.run(self.grid, ages, threads=rng.choice([0, 1, 3]))
                self.assertTrue(same(doc["population"]["imf_mean_mass_msun"], pop.imf.mean_mass_msun))
                for s, e in zip(sums, doc["epochs"]):
                    self.assertTrue(same(e["age_yr"], s.age_yr))
                    self.assertEqual((e["drawn"], e["unborn"], e["evaluated"]), (s.n_drawn, s.n_unborn, s.n_evaluated))
                    for k in ("failed_initial_mass_msun", "initial_mass_msun", "mass_msun", "l_lsun",
                              "turnoff_mass_msun", "evolved_min_initial_mass_msun"):
                        self.assertTrue(same(e[k], getattr(s, k)), "%s: %r vs %r" % (k, e[k], getattr(s, k)))
                    ms = s.ms_max_initial_mass_msun
                    self.assertTrue(same(e["ms_max_initial_mass_msun"], ms if ms > 0 else None))
                    rows = {r["key"]: r for r in e["phases"]}
                    py_rows = {p["phase"].key: p for p in s.phases()}
                    self.assertEqual(sorted(rows), sorted(py_rows))
                    for key, r in rows.items():
                        p = py_rows[key]
                        self.assertEqual(r["stars"], p["stars"])
                        for k in ("initial_mass_msun", "mass_msun", "l_lsun"):
                            self.assertTrue(same(r[k], p[k]), "%s %s" % (key, k))
                    rem = {r["key"]: r for r in e["remnants"] if r["record"] == "remnant"}
                    for p in s.remnants():
                        self.assertEqual(rem[p["remnant"].key]["stars"], p["stars"])
                        self.assertTrue(same(rem[p["remnant"].key]["mass_msun"], p["mass_msun"]))
                    counts = np.array(e["hr"]["counts"], dtype=np.uint64) if "hr" in e else None
                    if counts is not None:
                        self.assertTrue(np.array_equal(counts, s.hr_counts))

    def test_chunk_ranges_merge_to_the_whole_run(self):
        rng = random.Random(SEED + 1)
        for case in range(6):
            pop, ages, _ = random_population(rng, self.grid)
            pop = hrtrail.Population(pop.n_stars, pop.imf, pop.sfh, pop.zdist, seed=pop.seed,
                                     chunk_size=rng.randint(200, 3000))
            whole = pop.run(self.grid, ages)
            cuts = sorted(rng.sample(range(1, pop.n_chunks), min(3, pop.n_chunks - 1))) if pop.n_chunks > 1 else []
            bounds = [0] + cuts + [pop.n_chunks]
            parts = [pop.run(self.grid, ages, chunks=range(bounds[i], bounds[i + 1]), threads=1)
                     for i in range(len(bounds) - 1)]
            rng.shuffle(parts)
            for k in range(len(ages)):
                merged = hrtrail.merge(p[k] for p in parts)
                self.assertEqual(merged.to_bytes(), whole[k].to_bytes(), "case %d epoch %d" % (case, k))
                self.assertEqual(pickle.loads(pickle.dumps(merged)), whole[k])

    def test_run_is_draw_evaluate_and_add(self):
        """hrt_pop_run against its parts called from Python: hrt_pop_draw, hrt_eval, hrt_pop_summary_add."""
        rng = random.Random(SEED + 2)
        for case in range(4):
            pop, ages, _ = random_population(rng, self.grid)
            pop = hrtrail.Population(min(pop.n_stars, 8000), pop.imf, pop.sfh, pop.zdist, seed=pop.seed,
                                     chunk_size=1500)
            whole = pop.run(self.grid, ages)
            for k, age in enumerate(ages):
                s = hrtrail.Summary(age)
                for c in range(pop.n_chunks):
                    m, z, t = pop.draw(c)
                    born = t <= age
                    st = self.grid.evaluate(m[born], age - t[born], z[born], errors="ignore")
                    s.add(st)
                    s.add_unborn(int((~born).sum()))
                self.assertEqual(s, whole[k], "case %d epoch %d" % (case, k))

    def test_imf_against_scipy_integration(self):
        """pdf integrates to cdf (scipy.integrate.quad, a Debian reference library); quantile inverts cdf."""
        from scipy.integrate import quad
        for kind, alpha in (("salpeter1955", None), ("kroupa2001", None), ("chabrier2003", None), ("powerlaw", 1.7)):
            imf = hrtrail.IMF(kind, 0.1, 60.0, alpha)
            for m in (0.2, 0.5, 1.0, 3.0, 20.0):
                val, _ = quad(lambda x: float(imf.pdf(x)), 0.1, m, points=[0.5, 1.0], limit=200)
                self.assertAlmostEqual(val, float(imf.cdf(m)), delta=1e-7)
            uu = np.linspace(0.01, 0.99, 25)
            np.testing.assert_allclose(imf.cdf(imf.quantile(uu)), uu, rtol=1e-10)
            self.assertEqual(pickle.loads(pickle.dumps(imf)).quantile(0.3), imf.quantile(0.3))

    def test_sfh_table_population(self):
        t = np.array([0.0, 2e9, 5e9, 8e9])
        r = np.array([0.0, 3.0, 1.0, 0.5])
        csv = os.path.join(self.tmp.name, "sfh.csv")
        with open(csv, "w") as f:
            f.write("t_yr,rate\n" + "".join("%r,%r\n" % (a, b) for a, b in zip(t, r)))
        doc, _ = cli_json("population", "--stars", 5000, "--age", "9e9", "--sfh", "table", "--sfh-table", csv,
                          "--z", 0.014, "--mass-range", "0.5,8", "--seed", 5)
        pop = hrtrail.Population(5000, hrtrail.IMF("kroupa2001", 0.5, 8), hrtrail.SFH.table(t, r), z=0.014, seed=5)
        s = pop.run(self.grid, 9e9)[0]
        e = doc["epochs"][0]
        self.assertEqual((e["unborn"], e["evaluated"]), (s.n_unborn, s.n_evaluated))
        self.assertTrue(same(e["l_lsun"], s.l_lsun))

    def test_eval_parallel_is_eval(self):
        rng = np.random.default_rng(SEED)
        n = 20000
        m = 10 ** rng.uniform(-1.2, 2.0, n)
        a = 10 ** rng.uniform(5, 10.4, n)
        z = 10 ** rng.uniform(np.log10(self.grid.z_range[0]), np.log10(self.grid.z_range[1]), n)
        m[12345] = np.nan
        ref = self.grid.evaluate(m, a, z, errors="ignore")
        for t in (0, 2, 3, 7):
            out = self.grid.evaluate(m, a, z, errors="ignore", threads=t)
            self.assertEqual(out.tobytes(), ref.tobytes())
            with self.assertRaises(hrtrail.HrtrailError) as c1:
                self.grid.evaluate(m, a, z, threads=t)
            with self.assertRaises(hrtrail.HrtrailError) as c2:
                self.grid.evaluate(m, a, z, threads=1)
            self.assertEqual(c1.exception.message, c2.exception.message)
            self.assertEqual(c1.exception.states.tobytes(), ref.tobytes())
        self.assertGreaterEqual(hrtrail.max_threads(), 1)


# ---------------------------------------------------------------------------- conversions and units
@unittest.skipIf(pd is None or u is None, "pandas or astropy missing (Debian python3-pandas, python3-astropy)")
class Conversions(Base):
    def states(self):
        rng = np.random.default_rng(SEED)
        m = 10 ** rng.uniform(-1, 2, 500)
        a = 10 ** rng.uniform(6, 10.3, 500)
        return self.grid.evaluate(m, a, 0.014, errors="ignore")

    def test_to_pandas(self):
        st = self.states()
        df = st.to_pandas()
        self.assertNotIn("reserved", df.columns)
        self.assertNotIn("struct_size", df.columns)
        self.assertEqual(str(df["phase"].dtype), "category")
        self.assertEqual(str(df["remnant"].dtype), "category")
        self.assertEqual(list(df["phase"].cat.categories), [p.key for p in hrtrail.Phase])
        self.assertEqual(list(df["phase"].astype(str)), [hrtrail.Phase(int(p)).key for p in st["phase"]])
        for n in ("log_l_lsun", "log_teff_k", "mass_msun", "phase_start_yr", "phase_end_yr", "age_yr"):
            self.assertEqual(df[n].to_numpy().tobytes(), np.ascontiguousarray(st[n]).tobytes())
        fmt = read(os.path.join(ROOT, "tracks", "FORMAT.md"))
        for n in df.columns:
            if n not in ("status", "phase", "route", "remnant", "flags", "z", "eep"):
                self.assertIn(n, fmt, "column %s is not in the vocabulary of tracks/FORMAT.md" % n)

    def test_to_table_units(self):
        st = self.states()
        t = st.to_table()
        self.assertIsInstance(t, QTable)
        self.assertNotIn("reserved", t.colnames)
        self.assertEqual(t["mass_msun"].unit, u.solMass)
        self.assertEqual(t["age_yr"].unit, u.yr)
        ok = np.isfinite(st["log_l_lsun"])
        # astropy's solLum is the IAU 2015 Resolution B3 nominal luminosity, 3.828e26 W (as hrtrail's)
        np.testing.assert_allclose(t["log_l_lsun"][ok].physical.to_value(u.W), 10 ** st["log_l_lsun"][ok] * 3.828e26,
                                   rtol=1e-12)
        np.testing.assert_allclose(t["log_teff_k"][ok].physical.to_value(u.K), 10 ** st["log_teff_k"][ok], rtol=1e-12)
        self.assertEqual(list(t["phase"]), [hrtrail.Phase(int(p)).key for p in st["phase"]])

    def test_quantities_in_every_new_call(self):
        g = self.grid
        a = g.evaluate(np.array([1.0, 2.0]) * u.Msun, np.array([1.0, 0.5]) * u.Gyr, 0.014)
        b = g.evaluate([1.0, 2.0], [1e9, 5e8], 0.014)
        self.assertEqual(a.tobytes(), b.tobytes())
        self.assertEqual(hrtrail.IMF("kroupa2001", 80 * u.g / u.kg * u.Msun, 100 * u.Msun).m_lo_msun, 0.08)
        p1 = hrtrail.Population(3000, sfh=hrtrail.SFH.constant(0 * u.yr, 2 * u.Gyr), z=0.014, seed=2)
        p2 = hrtrail.Population(3000, sfh=hrtrail.SFH.constant(0, 2e9), z=0.014, seed=2)
        self.assertEqual(p1.run(g, 1 * u.Gyr)[0], p2.run(g, 1e9)[0])
        o1 = hrtrail.Observation(teff_k=5.772 * u.kK, teff_k_sigma=50 * u.K, distance_pc=0.1 * u.kpc,
                                 parallax_mas=0.01 * u.arcsec, flux_w_m2=1e-9 * u.W / u.m ** 2)
        self.assertAlmostEqual(o1.teff_k, 5772.0, delta=1e-9)
        self.assertAlmostEqual(o1.distance_pc, 100.0, delta=1e-12)
        self.assertAlmostEqual(o1.parallax_mas, 10.0, delta=1e-12)
        f1 = hrtrail.forecast(g, initial_mass_msun=1 * u.Msun, z=0.014, age_yr=4 * u.Gyr, dt_yr=[10 * u.Myr])
        f2 = hrtrail.forecast(g, initial_mass_msun=1.0, z=0.014, age_yr=4e9, dt_yr=[1e7])
        self.assertEqual(f1.ms_left_yr, f2.ms_left_yr)
        self.assertEqual(g.boundary_at(0.014, 0), g.boundary_at(0.014 * u.one, 0))
        for bad in (lambda: hrtrail.IMF("kroupa2001", 0.1 * u.m, 10),
                    lambda: hrtrail.SFH.burst("1 Gyr"),
                    lambda: hrtrail.Observation(teff_k=5772 * u.s),
                    lambda: hrtrail.Observation(teff_k=None, distance_pc="far"),
                    lambda: hrtrail.forecast(g, initial_mass_msun=1.0, z=0.014, age_yr=4 * u.kg),
                    lambda: hrtrail.Population(10, z=True),
                    lambda: hrtrail.Summary(1 * u.m)):
            with self.assertRaises(hrtrail.InvalidInputError):
                bad()

    def test_summary_and_samples_frames(self):
        s = hrtrail.Population(5000, z=0.014, seed=9).run(self.grid, 1e9)[0]
        df = s.to_pandas()
        self.assertEqual(df["stars"].sum(), s.n_evaluated)
        self.assertEqual(str(df["phase"].dtype), "category")
        rem = s.to_pandas("remnants")
        self.assertEqual(rem["stars"].sum(), s.n_evaluated)
        self.assertEqual(str(rem["remnant"].dtype), "category")
        f = hrtrail.forecast(self.grid, initial_mass_msun=2.0, z=0.014, age_yr=5e8, dt_yr=[0.0, 1e8])
        fd = f.to_pandas()
        self.assertEqual(list(fd["dt_yr"]), [0.0, 1e8])
        self.assertEqual(fd["phase"].iloc[0], f.phase_now.key)
        self.assertEqual(fd["log_l_lsun_lo"].iloc[1], f.states[1]["log_l_lsun"].lo)


# ---------------------------------------------------------------------------- pickling into processes
def _worker_eval(grid, m, a, z):
    return grid.evaluate(m, a, z, errors="ignore").tobytes()


def _worker_run(grid, pop, age, first, count):
    return pop.run(grid, [age], chunks=(first, count), threads=1)[0]


class Pickling(Base):
    def test_grid_into_a_process_pool(self):
        g2 = pickle.loads(pickle.dumps(self.grid))
        self.assertEqual(g2.path, self.grid.path)
        self.assertEqual(g2.interp, self.grid.interp)
        ga = hrtrail.Grid(GRID, interp="akima")
        self.assertEqual(pickle.loads(pickle.dumps(ga)).interp, hrtrail.Interp.AKIMA)
        rng = np.random.default_rng(SEED)
        m, a = 10 ** rng.uniform(-1, 2, 3000), 10 ** rng.uniform(6, 10, 3000)
        ctx = multiprocessing.get_context("spawn")  # a fresh interpreter: the grid is opened there from its path
        with concurrent.futures.ProcessPoolExecutor(2, mp_context=ctx) as ex:
            parts = list(ex.map(_worker_eval, [ga] * 3, np.array_split(m, 3), np.array_split(a, 3), [0.01] * 3))
            self.assertEqual(b"".join(parts), ga.evaluate(m, a, 0.01, errors="ignore").tobytes())
            pop = hrtrail.Population(20000, z=0.008, seed=4, chunk_size=2000)
            futs = [ex.submit(_worker_run, self.grid, pop, 2e9, k, 2) for k in range(0, pop.n_chunks, 2)]
            merged = hrtrail.merge(f.result() for f in futs)
        self.assertEqual(merged, pop.run(self.grid, [2e9])[0])
        ga.close()

    def test_grid_in_dask_processes(self):
        try:
            import dask
        except ImportError:
            self.skipTest("dask missing (Debian python3-dask)")
        pop = hrtrail.Population(12000, z=0.006, seed=8, chunk_size=1500)
        parts = [dask.delayed(_worker_run)(self.grid, pop, 1e9, k, 2) for k in range(0, pop.n_chunks, 2)]
        got = dask.compute(*parts, scheduler="processes", num_workers=2)
        self.assertEqual(hrtrail.merge(got), pop.run(self.grid, [1e9])[0])


class Accuracy(unittest.TestCase):
    """hrtrail.accuracy / Grid.accuracy (hrt_accuracy_run) against 'hrtrail grid accuracy' --json and --csv
    on the command-line tests' small invented grid (tests/cli/make_test_grid.py)."""

    @classmethod
    def setUpClass(cls):
        cls.tmp = tempfile.TemporaryDirectory()
        cls.path = os.path.join(cls.tmp.name, "small.h5")
        subprocess.run(["/usr/bin/python3", os.path.join(ROOT, "tests", "cli", "make_test_grid.py"), cls.path],
                       check=True)

    @classmethod
    def tearDownClass(cls):
        cls.tmp.cleanup()

    def test_same_as_the_command_line(self):
        calls = []
        with hrtrail.Grid(self.path) as g:
            rows = g.accuracy(threads=2, progress=lambda done, total: calls.append((done, total)))
        self.assertTrue(calls and calls[-1][0] == calls[-1][1] == len(calls))
        r = subprocess.run([CLI, "grid", "accuracy", self.path, "--json"], capture_output=True, text=True, check=True)
        doc = json.loads(r.stdout)
        self.assertGreater(doc["seconds"], 0)
        self.assertEqual(len(doc["rows"]), len(rows))
        for a, b in zip(rows, doc["rows"]):
            self.assertEqual(list(a), list(b))
            for k in a:
                self.assertTrue(a[k] == b[k] if isinstance(a[k], str) else same(a[k], b[k]), (k, a[k], b[k]))
        r = subprocess.run([CLI, "grid", "accuracy", self.path, "--csv", "--interp", "cspline"], capture_output=True,
                           text=True, check=True)
        csv_rows = list(__import__("csv").DictReader(r.stdout.splitlines()))
        one = hrtrail.accuracy(self.path, interp="cspline", threads=1)
        self.assertEqual(len(csv_rows), len(one))
        self.assertEqual(json.dumps([a for a in rows if a["interp"] == "cspline"]), json.dumps(one))  # NaN == NaN here
        for a, b in zip(one, csv_rows):
            for k in a:
                if isinstance(a[k], str):
                    self.assertEqual(a[k], b[k], k)
                else:
                    self.assertTrue(same(a[k], float(b[k]) if b[k] not in ("", "nan") else None), (k, a[k], b[k]))
        for a in rows:
            self.assertLessEqual(a["log_l_median_dex"], a["log_l_p95_dex"])
            self.assertLessEqual(a["log_l_p95_dex"], a["log_l_max_dex"])

    def test_errors(self):
        with self.assertRaises(ValueError):
            hrtrail.accuracy(self.path, interp="quintic")
        with self.assertRaises(hrtrail.InvalidInputError) as cm:
            hrtrail.accuracy(self.path, threads=-1)
        self.assertIn("threads", str(cm.exception))
        with self.assertRaises(hrtrail.OutsideGridError):
            hrtrail.accuracy(self.path, z=0.5)
        with self.assertRaises(hrtrail.InvalidInputError) as cm:  # two metallicities: none between others
            hrtrail.accuracy(self.path, across_z=True)
        self.assertIn("across metallicity", str(cm.exception))

    def test_one_metallicity(self):
        with hrtrail.Grid(self.path) as g:
            z0 = g.z_values[0]
            rows = g.accuracy(interp="linear", z=z0)
        self.assertTrue(rows)
        for a in rows:
            for q in ("log_l", "log_teff", "log_age"):
                self.assertEqual(a[q + "_worst_z"], z0)

    def test_store_and_interp_error(self):
        """accuracy(store=True) writes the error field; Grid.interp_error reads it back, the same as
        'hrtrail at --interp-error' for a State and for a STATE_DTYPE array."""
        path = os.path.join(self.tmp.name, "stored.h5")
        shutil.copyfile(self.path, path)
        with hrtrail.Grid(path, interp="linear") as g:
            self.assertFalse(g.has_interp_error)
            st = g.state(1.5, 1e8, g.z_values[0])
            with self.assertRaises(hrtrail.InvalidInputError) as cm:
                g.interp_error(st)
            self.assertIn("no error field", str(cm.exception))
            g.accuracy(interp="linear", store=True)
        with hrtrail.Grid(path, interp="linear") as g:
            self.assertTrue(g.has_interp_error)
            st = g.state(1.5, 1e8, g.z_values[0])
            one = g.interp_error(st)
            self.assertGreaterEqual(one["n_tracks"], 1)
            many = g.interp_error(g.evaluate([1.5, 1.5], [1e8, 1e13], g.z_values[0], errors="ignore"))
        self.assertEqual(many.shape, (2,))
        self.assertEqual(many[0]["log_l_dex"], one["log_l_dex"])
        self.assertTrue(math.isnan(many[1]["log_l_dex"]) and many[1]["n_tracks"] == 0)  # a remnant: no estimate
        r = subprocess.run([CLI, "at", "--grid", path, "--interp", "linear", "-m", "1.5", "-a", "1e8",
                            "--z", repr(st.z), "--interp-error", "--json"], capture_output=True, text=True, check=True)
        rec = json.loads(r.stdout)[0]
        for k in ("log_l_dex", "log_teff_dex", "log_age_dex"):
            self.assertEqual(rec["err_" + k], one[k], k)


if __name__ == "__main__":
    unittest.main()
