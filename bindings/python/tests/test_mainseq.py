#!/usr/bin/python3
"""hrtrail.MainSequence (hrt_ms_*) from Python: every answer equal, bit for bit, to the
command line's (hrtrail mainseq --json, another path through the library), errors as
exceptions, astropy Quantities, and the grid keeping the object's lifetime.

Environment (meson test): HRTRAIL_LIB, HRTRAIL_GRID, HRTRAIL_CLI, PYTHONPATH.
"""
import math
import random
import subprocess
import unittest

import hrtrail

from fulltest import CLI, GRID, SEED, Base, cli_json, same

try:
    import astropy.units as u
except ImportError:  # pragma: no cover
    u = None

# record columns of hrtrail mainseq and the estimate's fields they come from (Teff and R as 10^log)
COLUMNS = {"teff_k": ("log_teff_k", True), "log_l_lsun": ("log_l_lsun", False), "r_rsun": ("log_r_rsun", True),
           "log_g_cgs": ("log_g_cgs", False), "mass_msun": ("mass_msun", False),
           "initial_mass_msun": ("initial_mass_msun", False), "age_yr": ("age_yr", False)}


def shown(x, linear):
    return 10.0 ** x if linear else x


class MainSequenceTest(Base):
    @classmethod
    def setUpClass(cls):
        super().setUpClass()
        cls.ms = hrtrail.MainSequence(cls.grid, age_max_yr=13.8e9)

    def compare(self, est, rec_estimate, rec_band, what):
        for col, (field, lin) in COLUMNS.items():
            v = getattr(est, field)
            for got, key in ((shown(v.median, lin), col), (shown(v.lo, lin), col + "_lo"),
                             (shown(v.hi, lin), col + "_hi")):
                self.assertTrue(same(got, rec_estimate[key]), "%s: %s %r != %r" % (what, key, got, rec_estimate[key]))
            for got, key in ((shown(v.band_lo, lin), col + "_lo"), (shown(v.band_hi, lin), col + "_hi")):
                self.assertTrue(same(got, rec_band[key]), "%s: band %s %r != %r" % (what, key, got, rec_band[key]))

    def test_teff_and_luminosity_agree_with_the_command_line(self):
        rnd = random.Random(SEED)
        for _ in range(4):
            teff, sig = rnd.uniform(3500, 20000), rnd.choice([0.0, 50.0, 200.0])
            doc, rc = cli_json("mainseq", "--teff", repr(teff), "--teff-sigma", repr(sig), "--age-max", "13.8Gyr")
            self.assertEqual(rc, 0)
            self.assertEqual([r["record"] for r in doc], ["estimate", "band"])
            self.compare(self.ms.from_teff(teff, sig), doc[0], doc[1], "Teff %r +- %r" % (teff, sig))
            log_l = rnd.uniform(-1.5, 4.0)
            doc, rc = cli_json("mainseq", "--log-l", repr(log_l), "--log-l-sigma", "0.03", "--age-max", "13.8Gyr")
            self.assertEqual(rc, 0)
            self.compare(self.ms.from_log_l(log_l, 0.03), doc[0], doc[1], "log L %r" % log_l)

    def test_distance_agrees_with_the_command_line(self):
        doc, rc = cli_json("mainseq", "--teff", "6100", "--teff-sigma", "80", "--mbol", "8.5", "--mbol-sigma", "0.05",
                           "--age-max", "13.8Gyr")
        self.assertEqual(rc, 0)
        d = self.ms.distance(6100, 80, mbol=8.5, mbol_sigma=0.05)
        for name in ("distance_pc", "parallax_mas"):
            iv = getattr(d, name)
            for got, key in ((iv.median, name), (iv.lo, name + "_lo"), (iv.hi, name + "_hi")):
                self.assertTrue(same(got, doc[0][key]), "%s %r != %r" % (key, got, doc[0][key]))
        self.assertTrue(d.distance_pc.lo < d.distance_pc.median < d.distance_pc.hi)
        # the same star given by its flux: the flux of m = 8.5 (IAU 2015 B2 zero point)
        f = hrtrail.flux_from_mbol(8.5)
        d2 = self.ms.distance(6100, 80, flux_w_m2=f, flux_sigma_w_m2=f * 0.4 * math.log(10) * 0.05)
        self.assertEqual(d2.distance_pc, d.distance_pc)

    def test_errors_and_ranges(self):
        lo, hi = self.ms.teff_range
        self.assertLess(lo, 3000)
        self.assertGreater(hi, 30000)
        l_lo, l_hi = self.ms.log_l_range
        self.assertLess(l_lo, l_hi)
        with self.assertRaises(hrtrail.HrtrailError) as cm:
            self.ms.from_teff(2 * hi)
        self.assertEqual(cm.exception.code, hrtrail.Status.NO_MATCH)
        with self.assertRaises(hrtrail.HrtrailError):
            self.ms.from_log_l(l_hi + 1)
        with self.assertRaises(hrtrail.InvalidInputError):
            self.ms.from_teff(-10)
        with self.assertRaises(hrtrail.InvalidInputError):
            self.ms.distance(5000, 50)  # neither flux nor magnitude
        with self.assertRaises(hrtrail.OutsideGridError):
            hrtrail.MainSequence(self.grid, z=0.9)
        with self.assertRaises(hrtrail.InvalidInputError):
            hrtrail.MainSequence(self.grid, n_ages=2)
        r = subprocess.run([CLI, "mainseq", "--grid", GRID, "--teff", repr(2 * hi), "--json"], capture_output=True,
                           text=True, timeout=300)
        self.assertEqual(r.returncode, 3)
        self.assertIn("no main-sequence star", r.stderr)

    def test_options(self):
        young = hrtrail.MainSequence(self.grid, feh=0.0, age_max_yr=1e8, imf_alpha=2.35)
        e = young.from_teff(6500)
        self.assertLessEqual(e.age_yr.hi, 1e8)
        self.assertEqual(e.status, hrtrail.Status.OK)
        self.assertIn("log_l_lsun_band_lo", e.as_dict())
        young.close()
        young.close()  # idempotent
        with self.assertRaises(ValueError):
            young.from_teff(6500)

    @unittest.skipIf(u is None, "astropy missing")
    def test_quantities(self):
        a = self.ms.from_teff(5770 * u.K, 60 * u.K)
        b = self.ms.from_teff(5770, 60)
        self.assertEqual(a.log_l_lsun, b.log_l_lsun)
        d = self.ms.distance(5.77 * u.kK, 0.06 * u.kK, flux_w_m2=1e-9 * u.W / u.m ** 2, flux_sigma_w_m2=1e-11)
        self.assertTrue(math.isfinite(d.distance_pc.median))


if __name__ == "__main__":
    unittest.main()
