#!/usr/bin/python3
"""Grid.remap and Grid.step (hrt_remap, hrt_step) from Python: a star without a mass change
follows its own track exactly, a changed star gets the new mass and moves its effective
initial mass in the direction of the change, refusals come as exceptions with their codes,
and what goes into the library is the state given (a State or a record of Grid.evaluate).

Environment (meson test): HRTRAIL_LIB, HRTRAIL_GRID, PYTHONPATH.
"""
import math
import os
import random
import unittest

import hrtrail


class RemapTest(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.grid = hrtrail.Grid(os.environ["HRTRAIL_GRID"])

    def test_no_change_is_own_track(self):
        rnd = random.Random(20)
        for _ in range(200):
            m = 0.5 * 100.0 ** rnd.random()
            s = self.grid.state(m, 1e5, 0.014)
            t = s.phase_start_yr + rnd.random() * (s.phase_end_yr - s.phase_start_yr)
            s = self.grid.state(m, t, 0.014)
            r = self.grid.remap(s, s.mass_msun)
            self.assertEqual(r.as_dict(), s.as_dict())
            dt = 0.01 * t
            nx, dtn = self.grid.step(s, dt, 0.0)
            self.assertEqual(nx.as_dict(), self.grid.state(m, t + dt, 0.014).as_dict())
            self.assertGreater(dtn, 0.0)

    def test_change(self):
        s = self.grid.state(2.0, 3e8, 0.014)
        self.assertEqual(s.phase, hrtrail.Phase.MS)
        for f in (0.8, 1.2):
            r = self.grid.remap(s, f * s.mass_msun)
            self.assertAlmostEqual(r.mass_msun, f * s.mass_msun, delta=1e-9 * s.mass_msun)
            self.assertGreater((r.initial_mass_msun - s.initial_mass_msun) * (f - 1.0), 0.0)
        # a record of Grid.evaluate goes in as well
        rec = self.grid.evaluate([2.0], [3e8], 0.014)[0]
        self.assertEqual(self.grid.remap(rec, 1.1 * s.mass_msun).as_dict(), self.grid.remap(s, 1.1 * s.mass_msun).as_dict())
        nx, dtn = self.grid.step(s, 1e6, 1e-8)
        ref = self.grid.state(2.0, 3e8 + 1e6, 0.014)
        self.assertAlmostEqual(nx.mass_msun, ref.mass_msun + 1e-2, delta=1e-9)
        self.assertLessEqual(dtn, 0.01 * nx.mass_msun / 1e-8 * (1 + 1e-12))

    def test_refusals(self):
        wd = self.grid.state(1.0, 2e10, 0.014)
        with self.assertRaises(hrtrail.HrtrailError) as cm:
            self.grid.remap(wd, 0.7)
        self.assertEqual(cm.exception.code, hrtrail.Status.NO_EQUIVALENT)
        self.assertIn("remnant", str(cm.exception))
        big = self.grid.state(140.0, 1e5, 0.014)
        with self.assertRaises(hrtrail.HrtrailError) as cm:
            self.grid.remap(big, 300.0)
        self.assertEqual(cm.exception.code, hrtrail.Status.MASS_RANGE)
        with self.assertRaises(hrtrail.HrtrailError) as cm:
            self.grid.step(wd, 1e6, -1e-9)
        self.assertEqual(cm.exception.code, hrtrail.Status.NO_EQUIVALENT)
        with self.assertRaises(hrtrail.HrtrailError) as cm:
            self.grid.remap(wd, math.nan)
        self.assertEqual(cm.exception.code, hrtrail.Status.DOMAIN)


if __name__ == "__main__":
    unittest.main()
