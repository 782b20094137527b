"""Bad track files: each gives a message with file, line and column, exit
status 4, and no output file (hrtrail import; exit codes as in hrtrail --help).

Usage: test_bad_files.py HRTRAIL_EXE
"""
import os
import re
import shutil
import subprocess
import sys
import tempfile

EXE = os.path.abspath(sys.argv[1])
work = tempfile.mkdtemp(prefix="hrtrail-import-bad-")
fails = []
passed = 0


def check(cond, what):
    global passed
    if cond:
        passed += 1
    else:
        fails.append(what)
        print("FAIL: " + what, flush=True)


HEAD = "age_Myr logL logTeff M\n"
GOOD = "".join("%g %g %g 1.0\n" % (10.0 + 100.0 * i, 0.1 * i, 3.76 - 0.001 * i) for i in range(6))
MAP = "age_yr=age_Myr*Myr,log_l_lsun=logL,log_teff_k=logTeff,mass_msun=M,initial_mass_msun=1,z=0.014"
# (name, file content, extra map, expected line, expected column, words in the message)
cases = [
    ("truncated", HEAD + GOOD + "710 0.6\n", MAP, 8, 8, "fields"),
    ("text", HEAD + GOOD.replace("0.3 3.757", "abc 3.757"), MAP, 5, 5, "not a number"),
    ("duplicate", HEAD + GOOD + "510 0.7 3.75 1.0\n", MAP, 8, 1, "repeats"),
    ("decreasing", HEAD + GOOD + "300 0.7 3.75 1.0\n", MAP, 8, 1, "less than"),
    ("missing_column", "age_Myr logL M\n" + "10 0 1\n20 0.1 1\n", MAP.replace(",log_teff_k=logTeff", ""), 1, 1,
     "log_teff_k"),
    ("empty", "", MAP, 1, 1, "empty"),
    ("binary", HEAD + "10 0 3.76 1.0\n" + "\x00\x01\x7fELF\x02", MAP, 3, 1, "binary"),
    ("absent_column", HEAD + GOOD, MAP.replace("logL", "LUMINOSITY"), 1, 1, "LUMINOSITY"),
    ("nan", HEAD + GOOD + "610 nan 3.75 1.0\n", MAP, 8, 5, "not finite"),
]
try:
    for name, text, mapping, line, col, words in cases:
        path = os.path.join(work, name + ".dat")
        with open(path, "wb") as f:
            f.write(text.encode("latin-1"))
        good = os.path.join(work, "good.dat")
        with open(good, "w") as f:
            f.write(HEAD + GOOD)
        out = os.path.join(work, name + ".h5")
        p = subprocess.run([EXE, "import", "-o", out, "--map", mapping, good, path], capture_output=True, text=True)
        check(p.returncode == 4, "%s: exit status 4 (got %d: %s)" % (name, p.returncode, p.stderr.strip()))
        m = re.search(re.escape(path) + r":(\d+):(\d+): (.*)", p.stderr)
        check(m is not None, "%s: message names file:line:column (%s)" % (name, p.stderr.strip()))
        if m:
            check((int(m.group(1)), int(m.group(2))) == (line, col), "%s: at %s:%s, want %d:%d (%s)" % (
                name, m.group(1), m.group(2), line, col, m.group(3)))
            check(words in m.group(3), "%s: message says '%s' (%s)" % (name, words, m.group(3)))
        check(not os.path.exists(out), "%s: no output file" % name)
        check(p.stdout == "", "%s: nothing on standard output" % name)
        check(not [x for x in os.listdir(work) if ".tmp" in x], "%s: no temporary file left" % name)
    # an existing grid is left as it was by a failed import
    out = os.path.join(work, "keep.h5")
    with open(out, "w") as f:
        f.write("previous")
    p = subprocess.run([EXE, "import", "-o", out, "--map", MAP, os.path.join(work, "text.dat")], capture_output=True,
                       text=True)
    check(p.returncode == 4 and open(out).read() == "previous", "a failed import leaves an existing file intact")
    # lenient mode: the bad tracks are dropped and reported, the rest written
    p = subprocess.run([EXE, "import", "--keep-going", "--dry-run", "--json", "--map", MAP, os.path.join(work, "good.dat"),
                        os.path.join(work, "text.dat")], capture_output=True, text=True)
    check(p.returncode in (0, 4), "--keep-going runs (%d: %s)" % (p.returncode, p.stderr))
    # the map itself: unknown key, bad unit, the keys of version 0.1 (age, L, Teff, Z, center_h1 ...)
    for bad in ("colour=B_V", "age_yr=t*fortnight", "l_lsun=lum*Myr", "age=t*Myr", "L=lum", "Z=0.014",
                "center_h1=Xc"):
        p = subprocess.run([EXE, "import", "-o", os.path.join(work, "x.h5"), "--map", bad, os.path.join(work, "good.dat")],
                           capture_output=True, text=True)
        check(p.returncode == 2 and bad.split("=")[0] in p.stderr, "map '%s' refused with exit 2 (%d: %s)" % (
            bad, p.returncode, p.stderr.strip()))
finally:
    shutil.rmtree(work, True)
print("import bad files: %d passed, %d failed" % (passed, len(fails)))
sys.exit(1 if fails or not passed else 0)
