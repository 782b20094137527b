#!/usr/bin/python3
"""The library's layers, checked from the #include lines (DEVELOPERS.md, "Layers").

lib/util        errors, constants, fast math, the file schema: includes hrtrail.h only
lib/core        reading, preparing and querying a grid: may include core/, util/
lib/build       building grids            } may include util/ and their own folder,
lib/population  populations               } never core/ (the prepared layout)
lib/fit         fitting and forecasting   } and never another service's folder
bindings/cli    the command: the public header and its own headers only

The public headers layer the same way: core.h includes no other part,
build.h and population.h include core.h, fit.h includes core.h and
population.h.  Exit status 1 and one line per breach.
"""
import os
import re
import sys

TOP = sys.argv[1] if len(sys.argv) > 1 else os.path.join(os.path.dirname(__file__), "..", "..")
INCLUDE = re.compile(r'^\s*#\s*include\s+"([^"]+)"', re.M)

ALLOWED = {  # folder -> the quoted includes it may use (prefixes)
    "lib/util": ("hrtrail.h", "util/"),
    "lib/core": ("hrtrail.h", "util/", "core/"),
    "lib/build": ("hrtrail.h", "util/", "build/"),
    "lib/population": ("hrtrail.h", "util/", "population/"),
    "lib/fit": ("hrtrail.h", "util/", "fit/"),
    "bindings/cli": ("hrtrail.h", "cli.h", "fitcli.h", "pop.h"),
}
PUBLIC = {  # public part -> the other parts it may include
    "core.h": (),
    "build.h": ("hrtrail/core.h",),
    "population.h": ("hrtrail/core.h",),
    "fit.h": ("hrtrail/core.h", "hrtrail/population.h"),
}


def includes(path):
    with open(path, encoding="utf-8") as f:
        return INCLUDE.findall(f.read())


def main():
    bad = []
    top = os.path.abspath(TOP)
    seen = set()
    for folder, allowed in ALLOWED.items():
        d = os.path.join(top, folder)
        if not os.path.isdir(d):
            bad.append("%s: folder missing" % folder)
            continue
        for name in sorted(os.listdir(d)):
            if not name.endswith((".c", ".h")):
                continue
            seen.add(os.path.join(folder, name))
            for inc in includes(os.path.join(d, name)):
                if not inc.startswith(allowed):
                    bad.append("%s/%s includes \"%s\" (allowed: %s)" % (folder, name, inc, ", ".join(allowed)))
    # every source file of the library lives in one of the layer folders
    for root, _, files in os.walk(os.path.join(top, "lib")):
        for name in files:
            rel = os.path.relpath(os.path.join(root, name), top)
            if name.endswith((".c", ".h")) and rel not in seen:
                bad.append("%s: not in a layer folder" % rel)
    pub = os.path.join(top, "include", "hrtrail")
    for name, allowed in PUBLIC.items():
        for inc in includes(os.path.join(pub, name)):
            if inc.startswith("hrtrail/") and inc not in allowed:
                bad.append("include/hrtrail/%s includes \"%s\" (allowed: %s)" % (name, inc, ", ".join(allowed) or "none"))
    umbrella = includes(os.path.join(top, "include", "hrtrail.h"))
    for name in PUBLIC:
        if "hrtrail/" + name not in umbrella:
            bad.append("include/hrtrail.h does not include hrtrail/%s" % name)
    for line in bad:
        print("layers: " + line)
    print("layers: %d files checked, %d breaches" % (len(seen), len(bad)))
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
