"""Bad rows and bad bytes of text tables (tracks/FORMAT.md, "Importing text tracks").

Usage: test_rows.py HRTRAIL_EXE

1. Lenient mode (--keep-going, hrt_import_set_lenient) drops bad ROWS, not
   whole tracks: a row with NaN, one with text in a numeric column, one
   with a field missing, one repeating the previous age and one with an
   unknown phase key are each dropped and listed (hrt_import_dropped_row:
   file:line:column and why; the JSON report counts them and its notes name
   their lines); the track is kept, with every other row.  A track left
   with fewer than 2 rows is dropped.  Strict mode still fails on the first.
2. A header of exactly 512 columns (the most a table may have) followed by a
   row of 513 fields: the message names the column where the extra field
   starts (it used to read one field past the array).
3. Invalid UTF-8 is binary data: lead bytes 0xf5-0xff and 0x80-0xc1,
   overlong forms, surrogates and code points beyond U+10FFFF are refused
   at their line and column, well-formed sequences accepted.  The
   reference is Python's strict UTF-8 decoder (bytes.decode), which follows
   the Unicode Standard's table of well-formed byte sequences.

The tracks are invented.
"""
import ctypes
import os
import re
import shutil
import sys
import tempfile

import importtest as it

EXE = os.path.abspath(sys.argv[1])
t = it.Checks("bad rows")
work = tempfile.mkdtemp(prefix="hrtrail-import-rows-")
HEAD = "age_Myr logL logTeff M stage kp\n"
MAP = "age_yr=age_Myr*Myr,log_l_lsun=logL,log_teff_k=logTeff,mass_msun=M,phase=stage,keypoints=kp," \
      "initial_mass_msun=1,z=0.014"


def good_rows(n=30):
    return ["%g %.4f %.4f 1.0 ms %s\n" % (10.0 + 100.0 * i, 0.01 * i, 3.76 - 0.001 * i,
                                          "zams" if i == 0 else "tams" if i == n - 1 else "-") for i in range(n)]


def with_field(row, k, value):
    """row with its field k replaced by value."""
    f = row.split()
    f[k] = value
    return " ".join(f) + "\n"


try:
    # ---- 1. lenient mode drops rows
    rows = good_rows()
    bad = {5: with_field(rows[5], 1, "nan"),             # NaN luminosity
           9: with_field(rows[9], 1, "bright"),          # text in a numeric column
           13: " ".join(rows[13].split()[:4]) + "\n",    # fields missing
           17: rows[16],                                 # the previous row again: its age repeats
           21: with_field(rows[21], 4, "giantish")}      # not a phase key
    for i, r in bad.items():
        rows[i] = r
    path = os.path.join(work, "track.dat")
    with open(path, "w") as f:
        f.write(HEAD + "".join(rows))
    lines = sorted(i + 2 for i in bad)  # file lines: the header is line 1
    rc, rep, err = it.run_import(EXE, ["--dry-run", "--force", "--map", MAP, path])
    first = re.search(re.escape(path) + r":(\d+):(\d+): (.*)", err)
    t.ok(rc == 4 and first is not None and int(first.group(1)) == lines[0],
         "strict: the first bad row fails the import at its line %d (%d: %s)" % (lines[0], rc, err.strip()))
    rc, rep, err = it.run_import(EXE, ["--dry-run", "--force", "--keep-going", "--json", "--map", MAP, path])
    t.ok(rc == 0 and rep is not None, "lenient: exit 0 (%d: %s)" % (rc, err.strip()))
    if rep:
        tr = rep["tracks"][0]
        t.ok(tr["result"] != "dropped" and tr["rows"] == 30 - len(bad) and tr["rows_dropped"] == len(bad),
             "lenient: the track is kept with %d rows, %d dropped (%s, %s, %s)" % (
                 30 - len(bad), len(bad), tr["result"], tr["rows"], tr["rows_dropped"]))
        t.ok(tr["notes"] and all(str(n) in tr["notes"] for n in lines), "the notes name every line dropped (%s)" % (
            tr["notes"]))
    # the library's report, row by row
    lib = it.load()
    codes = it.status_codes()
    imp, e = ctypes.c_void_p(), it.hc.HrtError()
    lib.hrt_import_new(ctypes.byref(imp), ctypes.byref(e))
    lib.hrt_import_map(imp, MAP.encode(), ctypes.byref(e))
    lib.hrt_import_set_lenient(imp, 1)
    lib.hrt_import_set_force(imp, 1)
    lib.hrt_import_add_file(imp, path.encode(), float("nan"), ctypes.byref(e))
    t.ok(lib.hrt_import_run(imp, None, ctypes.byref(e)) == 0, "library, lenient: run (%s)" % e.message)
    r, rr = it.TrackReport(), it.RowReport()
    lib.hrt_import_track(imp, 0, ctypes.byref(r))
    listed = []
    for k in range(r.n_rows_dropped):
        t.ok(lib.hrt_import_dropped_row(imp, 0, k, ctypes.byref(rr)) == 0, "dropped row %d reported" % k)
        listed.append((rr.line, rr.column, rr.code, rr.message.decode()))
    t.ok([x[0] for x in listed] == lines, "every dropped row listed by its line, in order (%s)" % listed)
    why = ["not finite", "not a number", "fields", "repeats the age", "not an hrtrail phase key"]
    t.ok(len(listed) == len(why) and all(
        x[3].startswith("%s:%d:%d: " % (path, x[0], x[1])) and w in x[3] and x[2] == codes["HRT_E_FORMAT"]
        for x, w in zip(listed, why)), "each as file:line:column: why (%s)" % [x[3] for x in listed])
    cols = [x[1] for x in listed]
    want = [rows[5].index("nan") + 1, rows[9].index("bright") + 1, len(rows[13].rstrip("\n")) + 1, 1,
            rows[21].index("giantish") + 1]
    t.ok(cols == want, "the columns point at the bad field (%s, want %s)" % (cols, want))
    t.ok(lib.hrt_import_dropped_row(imp, 0, r.n_rows_dropped, ctypes.byref(rr)) == codes["HRT_E_INVALID"],
         "past the last dropped row: HRT_E_INVALID")
    lib.hrt_import_free(imp)
    # a track with one good row left is dropped (the other, good one stays)
    worst = good_rows(4)
    worst[1] = with_field(worst[1], 1, "nan")
    worst[2] = with_field(worst[2], 2, "x")
    path = os.path.join(work, "few.dat")
    with open(path, "w") as f:
        f.write(HEAD + "".join(worst[:3]))
    rc, rep, err = it.run_import(EXE, ["--dry-run", "--force", "--keep-going", "--json", "--map", MAP, path])
    t.ok(rc == 4 and "1 data row after the header" in err and "bad rows are dropped" in err,
         "lenient: a track left with 1 row is dropped (%d: %s)" % (rc, err.strip()))

    # ---- 2. a header of 512 columns and a row of 513 fields
    names = ["age_Myr", "logL", "logTeff", "M"] + ["c%d" % k for k in range(508)]
    row = ["10", "0", "3.76", "1"] + ["0"] * 508
    text = ",".join(names) + "\n" + ",".join(row) + "\n" + ",".join(row + ["7"]) + "\n"
    path = os.path.join(work, "wide.dat")
    with open(path, "w") as f:
        f.write(text)
    want_col = len(",".join(row)) + 2  # the 513th field starts after the 512 and their comma
    m512 = MAP.replace(",phase=stage,keypoints=kp", "")
    rc, rep, err = it.run_import(EXE, ["--dry-run", "--force", "--map", m512, path])
    m = re.search(re.escape(path) + r":(\d+):(\d+): (.*)", err)
    t.ok(rc == 4 and m is not None and (int(m.group(1)), int(m.group(2))) == (3, want_col) and
         "513 fields" in m.group(3), "512 columns, a row of 513: line 3, column %d (%d: %s)" % (
             want_col, rc, err.strip()[-200:]))

    # ---- 3. invalid UTF-8
    seqs = [b"\xf5\x80\x80", b"\xf8\x80\x80\x80", b"\xff\x80\x80", b"\xc0\xaf", b"\xc1\xbf", b"\x80",
            b"\xe0\x80\xaf", b"\xed\xa0\x80", b"\xf0\x80\x80\xaf", b"\xf4\x90\x80\x80", b"\xe2\x82",
            b"\xc3\xa9", b"\xe2\x82\xac", b"\xf0\x9f\x98\x80", b"\xf4\x8f\xbf\xbf", b"\xed\x9f\xbf"]
    for s in seqs:
        try:
            s.decode("utf-8")
            valid = True
        except UnicodeDecodeError:
            valid = False
        body = (HEAD + "".join(good_rows())).encode()
        data = b"# note " + s + b" here\n" + body
        path = os.path.join(work, "utf8.dat")
        with open(path, "wb") as f:
            f.write(data)
        rc, rep, err = it.run_import(EXE, ["--dry-run", "--force", "--map", MAP, path])
        if valid:
            t.ok(rc == 0, "%s: well-formed UTF-8 accepted (%d: %s)" % (s.hex(), rc, err.strip()))
        else:
            m = re.search(re.escape(path) + r":(\d+):(\d+): (.*)", err)
            t.ok(rc == 4 and m is not None and int(m.group(1)) == 1 and int(m.group(2)) == 8 and
                 "binary data" in m.group(3), "%s: refused as binary data at 1:8 (%d: %s)" % (
                     s.hex(), rc, err.strip()))
finally:
    shutil.rmtree(work, True)
t.finish()
