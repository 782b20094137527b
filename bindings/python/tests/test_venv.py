#!/usr/bin/python3
"""pip install of the Python package into a fresh virtual environment, then use it.

Copies bindings/python to a temporary directory (pip writes build files beside
the sources), makes a venv with Debian's python3-venv (--system-site-packages,
for NumPy), installs with pip from it using Debian's setuptools
(--no-build-isolation --no-index: no network), and in the venv's interpreter
imports hrtrail (which must come from the venv, with its py.typed), runs a
population and prints its summary's bytes, which must equal the same run made
here from the source tree.  The library is the build's (HRTRAIL_LIB), as an
installed one would be found by its soname.

Exit 77 (skipped, for meson) with a message when python3-venv, pip or
setuptools is missing: apt-get install python3-venv python3-setuptools python3-pip.
"""
import os
import shutil
import subprocess
import sys
import tempfile

HERE = os.path.dirname(os.path.abspath(__file__))
SRC = os.path.normpath(os.path.join(HERE, ".."))

CHILD = r"""
import sys, os, hrtrail
assert os.path.realpath(hrtrail.__file__).startswith(os.path.realpath(sys.prefix)), hrtrail.__file__
assert os.path.exists(os.path.join(os.path.dirname(hrtrail.__file__), "py.typed"))
g = hrtrail.Grid()
pop = hrtrail.Population(20000, imf=hrtrail.IMF("kroupa2001", 0.1, 60.0), sfh=hrtrail.SFH.constant(0, 3e9),
                         z=0.01, seed=77, chunk_size=4000)
s = pop.run(g, [1e9, 3e9], threads=2)
sys.stdout.write("".join(x.to_bytes().hex() + "\n" for x in s))
"""


def skip(why):
    print("SKIP: " + why + " (Debian: apt-get install python3-venv python3-setuptools python3-pip)")
    sys.exit(77)


def main():
    try:
        import ensurepip  # noqa: F401  (Debian's python3-venv provides it)
        import venv  # noqa: F401
    except ImportError:
        skip("python3-venv is not installed")
    try:
        import setuptools  # noqa: F401
    except ImportError:
        skip("python3-setuptools is not installed")
    with tempfile.TemporaryDirectory(prefix="hrtrail-venv-") as tmp:
        src = os.path.join(tmp, "src")
        shutil.copytree(SRC, src, ignore=shutil.ignore_patterns("tests", "__pycache__", "build", "*.egg-info"))
        env_dir = os.path.join(tmp, "env")
        r = subprocess.run(["/usr/bin/python3", "-m", "venv", "--system-site-packages", env_dir],
                           capture_output=True, text=True)
        if r.returncode != 0:
            if "ensurepip" in r.stderr or "pip" in r.stderr:
                skip("the venv has no pip: " + r.stderr.strip().splitlines()[-1])
            print(r.stdout, r.stderr)
            return 1
        py = os.path.join(env_dir, "bin", "python")
        env = dict(os.environ)
        env.pop("PYTHONPATH", None)  # the package must come from the venv, not the source tree
        env["PIP_DISABLE_PIP_VERSION_CHECK"] = "1"
        r = subprocess.run([py, "-m", "pip", "install", "--no-build-isolation", "--no-index", src],
                           capture_output=True, text=True, env=env, cwd=tmp)
        if r.returncode != 0:
            print("pip install failed:\n" + r.stdout + r.stderr)
            return 1
        print(r.stdout.strip().splitlines()[-1])
        r = subprocess.run([py, "-c", CHILD], capture_output=True, text=True, env=env, cwd=tmp)
        if r.returncode != 0:
            print("the installed package failed:\n" + r.stdout + r.stderr)
            return 1
        got = r.stdout.split()
    sys.path.insert(0, SRC)
    import hrtrail
    g = hrtrail.Grid()
    pop = hrtrail.Population(20000, imf=hrtrail.IMF("kroupa2001", 0.1, 60.0), sfh=hrtrail.SFH.constant(0, 3e9),
                             z=0.01, seed=77, chunk_size=4000)
    want = [x.to_bytes().hex() for x in pop.run(g, [1e9, 3e9], threads=1)]
    if got != want:
        print("FAIL: the venv's population differs from the source tree's")
        return 1
    print("ok: pip install into a fresh venv, import, population run equal bit for bit (%d epochs)" % len(want))
    return 0


if __name__ == "__main__":
    sys.exit(main())
