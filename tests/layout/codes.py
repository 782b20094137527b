#!/usr/bin/python3
"""One set of phase and remnant codes everywhere.

Walks every phase and remnant of the header's lists (HRT_PHASE_LIST,
HRT_REMNANT_LIST in include/hrtrail/core.h) and checks that the code, key and
name agree in: the library (hrt_phase_code/key/name through ctypes), the code
tables of tracks/FORMAT.md, the phases/ and remnants/ tables of the default
grid file (h5py), the command line (`hrtrail codes --csv`), the Python binding
(hrtrail.Phase, hrtrail.Remnant) and the Fortran module's parameters
(bindings/fortran/hrtrail.f90).  Both directions: nothing extra anywhere.

Usage: codes.py SOURCE_ROOT  (environment: HRTRAIL_LIB, HRTRAIL_GRID,
HRTRAIL_CLI, PYTHONPATH with bindings/python).  Exit 1 and one line per
disagreement.
"""
import csv
import ctypes
import io
import os
import re
import subprocess
import sys

import h5py  # Debian's python3-h5py

TOP = sys.argv[1]
bad = []


def check(cond, what):
    if not cond:
        bad.append(what)


def header_lists():
    text = open(os.path.join(TOP, "include", "hrtrail", "core.h")).read()
    out = {}
    for kind, macro in (("phase", "HRT_PHASE_LIST"), ("remnant", "HRT_REMNANT_LIST")):
        body = text.split("#define %s(X)" % macro, 1)[1].split("\n\n", 1)[0]
        out[kind] = [(name, int(code), key, label) for name, code, key, label in
                     re.findall(r'X\((\w+),\s*(\d+),\s*"([^"]*)",\s*"([^"]*)"\)', body)]
    return out


def format_md_tables():
    text = open(os.path.join(TOP, "tracks", "FORMAT.md")).read()
    codes = text.split("<!-- codes", 1)[1].split("<!-- end codes -->", 1)[0]
    phase_part, remnant_part = codes.split("| remnant code", 1)
    row = re.compile(r"^\| (\d+) \| `([a-z_]+)` \| ([^|]+?) \|", re.M)
    return {"phase": [(int(c), k, n.strip()) for c, k, n in row.findall(phase_part)],
            "remnant": [(int(c), k, n.strip()) for c, k, n in row.findall(remnant_part)]}


def library_lists():
    lib = ctypes.CDLL(os.environ["HRTRAIL_LIB"])
    out = {}
    for kind in ("phase", "remnant"):
        code_at = getattr(lib, "hrt_%s_code" % kind)
        code_at.restype, code_at.argtypes = ctypes.c_int, [ctypes.c_size_t]
        key, name = getattr(lib, "hrt_%s_key" % kind), getattr(lib, "hrt_%s_name" % kind)
        key.restype = name.restype = ctypes.c_char_p
        key.argtypes = name.argtypes = [ctypes.c_int]
        rows, i = [], 0
        while code_at(i) >= 0:
            c = code_at(i)
            rows.append((c, key(c).decode(), name(c).decode()))
            i += 1
        out[kind] = rows
    return out


def file_tables():
    with h5py.File(os.environ["HRTRAIL_GRID"], "r") as f:
        return {kind: [(int(c), k.decode() if isinstance(k, bytes) else k, n.decode() if isinstance(n, bytes) else n)
                       for c, k, n in zip(f[group]["code"][:], f[group]["key"][:], f[group]["name"][:])]
                for kind, group in (("phase", "phases"), ("remnant", "remnants"))}


def cli_tables():
    out = subprocess.run([os.environ["HRTRAIL_CLI"], "codes", "--csv"], capture_output=True, text=True, check=True)
    rows = list(csv.DictReader(io.StringIO(out.stdout)))
    res = {"phase": [], "remnant": []}
    for r in rows:
        res[r["kind"]].append((int(r["code"]), r["key"], r["name"]))
    return res


def python_enums():
    import hrtrail  # the binding, from PYTHONPATH
    return {"phase": [(int(p), p.key, p.label) for p in hrtrail.Phase],
            "remnant": [(int(r), r.key, r.label) for r in hrtrail.Remnant]}


def fortran_parameters():
    text = open(os.path.join(TOP, "bindings", "fortran", "hrtrail.f90")).read().replace("&\n", " ")
    out = {}
    for kind, prefix in (("phase", "HRT_PHASE_"), ("remnant", "HRT_REMNANT_")):
        out[kind] = {name: int(v) for name, v in re.findall(r"\b%s(\w+)\s*=\s*(\d+)" % prefix, text)
                     if name not in ("SLOTS", "N")}
    return out


def main():
    head = header_lists()
    check(len(head["phase"]) >= 16 and len(head["remnant"]) >= 6, "header: lists read")
    want = {k: [(c, key, label) for _, c, key, label in v] for k, v in head.items()}
    for kind in ("phase", "remnant"):
        codes = [c for c, _, _ in want[kind]]
        check(len(set(codes)) == len(codes), "header: %s codes unique" % kind)
        check(all(0 <= c < (64 if kind == "phase" else 32) for c in codes), "header: %s codes below SLOTS" % kind)
    surfaces = {"library": library_lists(), "FORMAT.md": format_md_tables(), "default grid file": file_tables(),
                "command line": cli_tables(), "Python binding": python_enums()}
    for where, got in surfaces.items():
        for kind in ("phase", "remnant"):
            g = sorted(got[kind])
            w = sorted(want[kind])
            if g != w:
                missing = [x for x in w if x not in g]
                extra = [x for x in g if x not in w]
                bad.append("%s disagrees with the header on %ss: missing %s, extra %s" % (where, kind, missing, extra))
    fort = fortran_parameters()
    for kind in ("phase", "remnant"):
        want_names = {name: c for name, c, _, _ in head[kind]}
        check(fort[kind] == want_names, "Fortran %s parameters %s differ from the header's %s" %
              (kind, sorted(fort[kind].items()), sorted(want_names.items())))
    for line in bad:
        print("codes: " + line)
    print("codes: %d phases and %d remnant kinds checked on %d surfaces and the Fortran module, %d disagreements"
          % (len(want["phase"]), len(want["remnant"]), len(surfaces), len(bad)))
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
