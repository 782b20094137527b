#!/usr/bin/python3
"""One vocabulary: the names of tracks/FORMAT.md's vocabulary table and the names
the library's surfaces actually use are the same set.

- HDF5: every dataset and attribute name of a metallicity group of the default
  grid (as the library's writer wrote it) and the root attribute z_ref is a
  name of the table, with the table's unit in its `units` attribute; every name
  the table places in HDF5 is in the file.
- Python: every field name the binding exposes (STATE_DTYPE, State, PhaseSpan,
  RemnantInfo) is a name of the table; every name the table places in Python is
  exposed.
- Import: every name the table places in import is a key the importer accepts
  (`hrtrail import --dry-run --map KEY=...` does not call it unknown).
- The command line is checked both ways by tests/cli/test_vocabulary.py.

Usage: vocabulary.py SOURCE_ROOT (environment: HRTRAIL_GRID, HRTRAIL_CLI,
HRTRAIL_LIB, PYTHONPATH with bindings/python).  Exit 1 and a line per breach.
"""
import os
import re
import subprocess
import sys
import tempfile

import h5py  # Debian's python3-h5py

TOP = sys.argv[1]
bad = []


def table():
    text = open(os.path.join(TOP, "tracks", "FORMAT.md")).read()
    block = text.split("<!-- vocabulary", 1)[1].split("<!-- end vocabulary -->", 1)[0]
    rows = {}
    block = block.split("| field", 1)[0]  # the table of quantities (the other fields are the command's)
    for line in block.splitlines():
        cells = [c.strip() for c in line.strip().strip("|").split("|")] if line.startswith("| `") else None
        if not cells or len(cells) < 4:
            continue
        m = re.fullmatch(r"`([a-z0-9_]+)`", cells[0])
        if not m:
            continue
        units = re.fullmatch(r"`([^`]+)`", cells[2])
        rows[m.group(1)] = {"units": units.group(1) if units else None,
                            "where": {w.strip() for w in cells[3].split(",")}}
    return rows


def base(n, names):
    for suffix in ("_sigma", "_lo", "_hi"):
        if n not in names and n.endswith(suffix) and n[: -len(suffix)] in names:
            return n[: -len(suffix)]
    return n


def hdf5_names():
    names = {}
    with h5py.File(os.environ["HRTRAIL_GRID"], "r") as f:
        names["z_ref"] = None
        for g in f["metallicity"].values():
            for k in g.attrs:
                names[k] = None
            for k, ds in g.items():
                if isinstance(ds, h5py.Group):  # extra/: the default grid's extra quantities are names too
                    for kx, dx in ds.items():
                        u = dx.attrs.get("units")
                        u = u.decode() if isinstance(u, bytes) else u
                        names[kx] = u if u else None  # "" is dimensionless
                    continue
                u = ds.attrs.get("units")
                names[k] = u.decode() if isinstance(u, bytes) else u
    return names


def python_names():
    import hrtrail  # the binding
    names = set(hrtrail.STATE_DTYPE.names) - {"struct_size", "reserved"}
    names |= set(hrtrail.PhaseSpan._fields) | set(hrtrail.RemnantInfo._fields)
    names |= {n for n in vars(hrtrail.State).get("__slots__", ())}
    return names


def import_accepts(key):
    with tempfile.TemporaryDirectory() as d:
        track = os.path.join(d, "t.csv")
        with open(track, "w") as f:
            f.write("a,b\n1,2\n")
        out = subprocess.run([os.environ["HRTRAIL_CLI"], "import", "--dry-run", "-o", os.path.join(d, "g.h5"),
                              "--map", "%s=a" % key, track], capture_output=True, text=True)
        return "unknown map key" not in out.stderr


def main():
    rows = table()
    if len(rows) < 30:
        bad.append("FORMAT.md: vocabulary table not read (%d rows)" % len(rows))
    h5 = hdf5_names()
    structural = {"route", "n_eep", "remnant", "phase"}  # codes and counts: in the table, no units
    for n, units in h5.items():
        if n not in rows:
            bad.append("HDF5 name %s is not in FORMAT.md's vocabulary" % n)
        elif rows[n]["units"] != units and not (units is None and rows[n]["units"] is None):
            bad.append("HDF5 %s carries units %r, FORMAT.md says %r" % (n, units, rows[n]["units"]))
    for n, r in rows.items():
        if "HDF5" in " ".join(r["where"]) and n not in h5 and n not in structural:
            bad.append("FORMAT.md places %s in HDF5, the default grid has no such name" % n)
    py = python_names()
    for n in py:
        if base(n, rows) not in rows:
            bad.append("Python field %s is not in FORMAT.md's vocabulary" % n)
    for n, r in rows.items():
        if "Python" in r["where"] and n not in py:
            bad.append("FORMAT.md places %s in Python, the binding exposes no such field" % n)
    for n, r in rows.items():
        if "import" in r["where"] and not import_accepts(n):
            bad.append("FORMAT.md places %s in import, the importer does not accept it as a map key" % n)
    for line in bad:
        print("vocabulary: " + line)
    print("vocabulary: %d names of FORMAT.md, %d HDF5 names, %d Python fields checked, %d breaches"
          % (len(rows), len(h5), len(py), len(bad)))
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
