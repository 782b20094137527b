#!/bin/sh
# The default grid's generator on one of its metallicities (Z = 0.014), for a
# build that copies the grid instead of making it (-Ddefault_grid=PATH: the
# sanitizer builds of CI, tests/hardening/ci.sh).  The model and the builder
# run there on a seventh of the work, under the sanitizers, with leak
# detection on; the grid they make must check clean and give, at that
# metallicity, the tracks of the full grid the normal build made.  The error
# field is left out (--no-error-field: its leave-one-out, four types, took
# over 4 minutes under ASan): test_interp_error measures that metallicity of
# the copied grid afresh there and compares it with the stored field.
# Usage: gen_grid_small.sh GENERATOR HRTRAIL FULL_GRID
set -eu
gen=$1
cli=$2
full=$3
dir=$(mktemp -d "${TMPDIR:-/tmp}/hrt-gen-one-z-XXXXXX")
trap 'rm -rf "$dir"' EXIT
"$gen" "$dir/one.h5" --only-z 0.014 --no-error-field
"$cli" grid check --grid "$dir/one.h5"
for m in 0.15 1 2.1 15 60; do # each route and the helium-flash limit
    for g in one full; do
        grid=$dir/one.h5
        [ $g = full ] && grid=$full
        "$cli" track --grid "$grid" --mass $m --z 0.014 --eeps --csv > "$dir/$g-$m.csv"
    done
done
# the same rows; numbers within 1e-9 relative (the full grid reaches Z = 0.014
# through its [Fe/H] knots, the one-metallicity grid directly)
/usr/bin/python3 - "$dir" <<'PY'
import csv, glob, math, os, sys
d = sys.argv[1]
n = 0
for one in sorted(glob.glob(os.path.join(d, "one-*.csv"))):
    full = os.path.join(d, "full-" + os.path.basename(one)[len("one-"):])
    a, b = list(csv.reader(open(one))), list(csv.reader(open(full)))
    assert len(a) == len(b) and a[0] == b[0], "%s: %d rows, full grid %d" % (one, len(a), len(b))
    assert "log_l_lsun" in a[0] and len(a) > 100, "%s: %d rows of %s" % (one, len(a), a[0])
    for ra, rb in zip(a[1:], b[1:]):
        for name, x, y in zip(a[0], ra, rb):
            try:
                fx, fy = float(x), float(y)
            except ValueError:
                assert x == y, "%s %s: %r against %r" % (os.path.basename(one), name, x, y)
                continue
            ok = (math.isnan(fx) and math.isnan(fy)) or abs(fx - fy) <= 1e-9 * max(1.0, abs(fy))
            assert ok, "%s %s: %r on one metallicity, %r on the full grid" % (os.path.basename(one), name, x, y)
            n += 1
print("gen_grid_small: %d values on Z = 0.014 the same as the full grid's" % n)
PY
