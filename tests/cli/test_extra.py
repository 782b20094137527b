#!/usr/bin/python3
"""hrtrail at/track/isochrone --extra: the grid's extra quantities as columns, equal to the library's
hrt_extra_at (ctypes) bit for bit; unknown names and grids without extras refused."""
import ctypes

from clitest import EXIT_OK, EXIT_USAGE, EXTRA, Checks, HrtError, HrtState, Lib, make_grid, num, parse_csv, \
    read_records, run, same_number, tmpdir

t = Checks("cli-extra")
d = tmpdir()
default_grid = EXTRA[0]
G = ["--grid", default_grid]
lib = Lib()
g = lib.open(default_grid)
L = lib.L
_D = ctypes.c_double
L.hrt_grid_extra_count.argtypes = [ctypes.c_void_p]
L.hrt_grid_extra_count.restype = ctypes.c_size_t
L.hrt_grid_extra_index.argtypes = [ctypes.c_void_p, ctypes.c_char_p]
L.hrt_grid_extra_index.restype = ctypes.c_long
L.hrt_extra_at.argtypes = [ctypes.c_void_p, _D, _D, _D, ctypes.c_size_t, ctypes.POINTER(ctypes.c_size_t),
                           ctypes.POINTER(_D), ctypes.POINTER(HrtState), ctypes.POINTER(HrtError)]

names = ["gyration_k2", "lambda_ce", "conv_envelope_mass_msun"]
idx = (ctypes.c_size_t * 3)(*[L.hrt_grid_extra_index(g.g, n.encode()) for n in names])
t.ok(all(i >= 0 for i in idx), "the default grid has %s" % names)


def library_extras(m, z, age):
    out = (_D * 3)()
    L.hrt_extra_at(g.g, m, z, age, 3, idx, out, None, None)
    return list(out)


masses, ages, z = [0.3, 1.0, 2.5, 12.0], [3e7, 4.6e9], 0.006
rc, out, err = run(["at"] + G + ["--mass", ",".join(map(str, masses)), "--age", "30Myr,4.6Gyr", "--z", str(z),
                                 "--extra", ",".join(names), "--csv"])
t.eq(rc, EXIT_OK, "at --extra exit code (%s)" % err)
rows = parse_csv(out)
t.eq(len(rows), len(masses) * len(ages), "a row per star")
for row in rows:
    want = library_extras(num(row["initial_mass_msun"]), z, num(row["age_yr"]))
    for k, n in enumerate(names):
        t.ok(same_number(num(row[n]), want[k]), "at: %s of %s Msun at %s yr: %r, library %r"
             % (n, row["initial_mass_msun"], row["age_yr"], row[n], want[k]))

# JSON records carry the same keys; track and isochrone take the option too
rc, out, err = run(["track"] + G + ["--mass", "1.5", "--steps", "5", "--extra", "lambda_ce", "--json"])
t.eq(rc, EXIT_OK, "track --extra (%s)" % err)
recs = read_records(out)
t.ok(len(recs) == 5 and all("lambda_ce" in r for r in recs), "track --json has lambda_ce")
rc, out, err = run(["isochrone"] + G + ["--age", "1Gyr", "--extra", "gyration_k2", "--csv"])
t.eq(rc, EXIT_OK, "isochrone --extra (%s)" % err)
rows = parse_csv(out)
t.ok(len(rows) > 10 and all("gyration_k2" in r for r in rows), "isochrone --csv has gyration_k2")
rc, out, err = run(["at"] + G + ["--mass", "1", "--age", "1Gyr", "--extra", "gyration_k2"])
t.ok(rc == EXIT_OK and "gyration_k2" in out, "the table shows the column")

# refused: an unknown name (the message lists the grid's), a grid without extras
rc, out, err = run(["at"] + G + ["--mass", "1", "--age", "1Gyr", "--extra", "no_such"])
t.eq(rc, EXIT_USAGE, "unknown extra name")
t.ok("no_such" in err and "gyration_k2" in err, "the message names the grid's extras: " + err)
plain = make_grid(d)
rc, out, err = run(["at", "--grid", plain, "--mass", "1", "--age", "1Gyr", "--extra", "gyration_k2"])
t.eq(rc, EXIT_USAGE, "a grid without extras")
t.ok("has none" in err, "the message says the grid has none: " + err)
rc, out, err = run(["life", "--grid", plain, "--mass", "1", "--extra", "x"])
t.eq(rc, EXIT_USAGE, "life does not take --extra")
g.close()
t.finish()
