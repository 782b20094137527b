#!/usr/bin/python3
"""Text from files that is not what it should be: invalid UTF-8 and terminal control characters in a
grid's attributes, in the names of a CSV and in the labels of a plot.

--json stays valid UTF-8 JSON (read here with Python's json module and its strict UTF-8 codec,
standard library), text meant for a terminal carries no control character (ESC, U+001B, starts
terminal commands, and so does CSI, U+009B: ECMA-48, from memory), and an SVG stays well-formed XML
(read with Python's xml.etree, standard library)."""
import json
import os
import subprocess
import xml.etree.ElementTree as ET

import h5py
import numpy as np

from clitest import EXE, EXIT_OK, EXIT_USAGE, Checks, make_grid, tmpdir

t = Checks("cli-hostile-text")
d = tmpdir()
grid = make_grid(d)
ESC, CSI = b"\x1b", "\u009b".encode()  # CSI as UTF-8: C2 9B
# isolated bytes that are not UTF-8 (each one a character of its own to every decoder): FF, FE, a lone
# continuation byte 80, and C0 (never a valid first byte)
HOSTILE = b"evil " + ESC + b"[31mred" + ESC + b"[0m \xff\xfe tail \x80\xc0 " + CSI + b"2J bell\x07 end"
with h5py.File(grid, "a") as f:
    f.attrs["description"] = np.bytes_(HOSTILE)  # a fixed-length byte string, as h5py writes bytes
    f.attrs["source"] = "fine text, caf\u00e9 \u2265 1"  # valid UTF-8 passes unchanged


def run_bytes(args, stdin=None):
    p = subprocess.run([EXE] + args, input=stdin, capture_output=True, timeout=600)
    return p.returncode, p.stdout, p.stderr


def utf8(b):
    try:
        return b.decode("utf-8")  # strict
    except UnicodeDecodeError:
        return None


def no_controls(b):
    """No C0 control but newline, no DEL, no C1 control (U+0080 to U+009F)."""
    return not any((ord(c) < 0x20 and c != "\n") or 0x7f <= ord(c) < 0xa0 for c in b.decode("utf-8", "replace"))


# ------------------------------------------------------------------ grid info --json
rc, out, err = run_bytes(["grid", "info", "--grid", grid, "--json"])
t.eq(rc, EXIT_OK, "grid info --json: exit code (%r)" % err)
text = utf8(out)
t.ok(text is not None, "grid info --json: valid UTF-8")
doc = None
try:
    doc = json.loads(text or "")
except ValueError as e:
    t.ok(False, "grid info --json: JSON (%s)" % e)
if doc is not None:
    attrs = {a["attribute"]: a["value"] for a in doc["attributes"]}
    # Python's decoder with errors="replace" puts U+FFFD for each of these isolated bytes
    t.eq(attrs.get("description"), HOSTILE.decode("utf-8", "replace"),
         "grid info --json: the description with U+FFFD for each byte that is not UTF-8, the rest exact")
    t.eq(attrs.get("source"), "fine text, caf\u00e9 \u2265 1", "grid info --json: valid UTF-8 unchanged")
t.ok(ESC not in out and 0x07 not in out and CSI not in out,
     "grid info --json: control characters escaped, none raw in the output")
t.ok(b"\\u001b" in out and b"\\u009b" in out and b"\\u0007" in out, "grid info --json: escaped as \\u00XX")

# ------------------------------------------------------------------ grid info, the text for a terminal
rc, out, err = run_bytes(["grid", "info", "--grid", grid])
t.eq(rc, EXIT_OK, "grid info: exit code (%r)" % err)
t.ok(utf8(out) is not None, "grid info: valid UTF-8")
t.ok(ESC not in out, "grid info: no ESC byte")
t.ok(CSI not in out and 0x07 not in out, "grid info: no CSI, no bell")
t.ok(no_controls(out), "grid info: no control character but newlines")
line = [ln for ln in (utf8(out) or "").splitlines() if ln.startswith("description")]
t.ok(len(line) == 1 and "\\x1b[31mred\\x1b[0m" in line[0] and "\\xff\\xfe" in line[0] and "\\u009b" in line[0],
     "grid info: the description with visible escapes (%r)" % line)
t.ok(any("not valid UTF-8" in ln and "description" in ln and "U+FFFD" in ln for ln in (utf8(out) or "").splitlines()),
     "grid info: says that the description is not valid UTF-8 and what --json makes of it")
t.ok("caf\u00e9 \u2265 1" in (utf8(out) or ""), "grid info: valid UTF-8 text shown as it is")

# ------------------------------------------------------------------ names from a CSV: table, JSON and messages
name = b"star " + ESC + b"]0;title" + b"\x07 " + ESC + b"[2J\xff"
csv = b"name,initial_mass_msun,age_yr\n" + name + b",1,1Gyr\nplain,2,1Gyr\n"
rc, out, err = run_bytes(["at", "--grid", grid, "--input", "-"], stdin=csv)
t.eq(rc, EXIT_OK, "at --input with a hostile name: exit code (%r)" % err)
t.ok(ESC not in out and 0x07 not in out and utf8(out) is not None, "at --input: the table has no ESC, no bell, is UTF-8")
t.ok(b"star \\x1b]0;title\\x07 \\x1b[2J\\xff" in out, "at --input: the name shown with visible escapes")
rc, out, err = run_bytes(["at", "--grid", grid, "--input", "-", "--json"], stdin=csv)
try:
    names = [r["name"] for r in json.loads(utf8(out) or "")]
except ValueError as e:
    names = "not UTF-8 JSON: %s" % e
t.eq(names, [name.decode("utf-8", "replace"), "plain"], "at --input --json: the names, as JSON")
bad = b"name,initial_mass_msun,age_yr\nA," + ESC + b"[31mheavy\xff,1Gyr\n"
rc, out, err = run_bytes(["at", "--grid", grid, "--input", "-"], stdin=bad)
t.eq(rc, EXIT_USAGE, "at --input with a hostile value: exit code")
t.ok(ESC not in err and err.count(b"\n") == 1 and utf8(err) is not None,
     "at --input with a hostile value: one line on stderr, no ESC, UTF-8 (%r)" % err)
t.ok(b"\\x1b[31mheavy\\xff" in err, "at --input with a hostile value: the value shown with visible escapes (%r)" % err)

# ------------------------------------------------------------------ labels of a plot: the SVG stays XML
pts = b"name,log_teff_k,log_l_lsun\n" + name + b",3.76,0.1\nA & B <c>,3.7,1\n"
svg = os.path.join(d, "points.svg")
rc, out, err = run_bytes(["plot", "--points", "-", "-o", svg, "--title", b"title \x1b[1m\xff"],
                         stdin=pts)
t.eq(rc, EXIT_OK, "plot of hostile labels: exit code (%r)" % err)
try:
    root = ET.parse(svg).getroot()
    texts = ["".join(e.itertext()) for e in root.iter("{http://www.w3.org/2000/svg}text")]
    t.ok(any("A & B <c>" in x for x in texts), "plot: the label with & and < read back")
    t.ok(any(x.startswith("star ") and "\ufffd" in x for x in texts), "plot: a byte that is not UTF-8 is U+FFFD")
    t.ok(not any("\x1b" in x or "\x07" in x for x in texts), "plot: no control character in the SVG's text")
except ET.ParseError as e:
    t.ok(False, "plot of hostile labels: the SVG is not well-formed XML (%s)" % e)
t.finish()
