"""What the tests of the whole Python binding share (test_full.py, test_full_fit.py):
the environment meson gives them, the command line as a second path to every
answer, and a base class holding the default grid."""
import json
import math
import os
import subprocess
import tempfile
import unittest

import hrtrail

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.join(HERE, "..", "..", "..")
GRID = os.environ["HRTRAIL_GRID"]
CLI = os.environ["HRTRAIL_CLI"]
SEED = int(os.environ.get("HRTRAIL_TEST_SEED", "20261205"))

try:
    import pandas as pd
except ImportError:  # pragma: no cover
    pd = None


def read(path):
    with open(path) as f:
        return f.read()


def cli_json(*args):
    r = subprocess.run([CLI] + [str(a) for a in args] + ["--grid", GRID, "--json"], capture_output=True, text=True,
                       timeout=600)
    if r.returncode not in (0, 3):
        raise AssertionError("hrtrail %s failed (%d): %s" % (" ".join(map(str, args)), r.returncode, r.stderr))
    return json.loads(r.stdout), r.returncode


def same(a, b):
    """Equal bit for bit as doubles; JSON null (the command line's NaN and infinities) matches any non-finite."""
    if a is None or b is None:
        other = b if a is None else a
        return other is None or not math.isfinite(float(other))
    a, b = float(a), float(b)
    return (a == b) or (a != a and b != b)


class Base(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.grid = hrtrail.Grid(GRID)
        cls.tmp = tempfile.TemporaryDirectory(prefix="hrtrail-pyfull-")

    @classmethod
    def tearDownClass(cls):
        cls.grid.close()
        cls.tmp.cleanup()
