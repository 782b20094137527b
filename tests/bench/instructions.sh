#!/bin/sh
# Instructions per unit of work, counted by callgrind (valgrind), which the
# load of a shared machine does not move: hrt_eval per star at a grid Z and
# at random Z, hrt_star_at per call, hrt_isochrone per call, grid open per
# open.  Only the workload itself is counted (--toggle-collect).
#
#   instructions.sh BENCH GRID.h5 [REFERENCE_LIBDIR]
#
# BENCH is build/tests/bench/hrtrail-bench.  With REFERENCE_LIBDIR (a
# directory holding another build's libhrtrail.so.*), the same workloads
# are counted with that library too (LD_LIBRARY_PATH), for before/after.
set -e
bench=$1
grid=$2
ref=$3
count() { # LIBDIR KIND N FUNCTION
    out=$(mktemp)
    LD_LIBRARY_PATH=$1 valgrind --tool=callgrind --toggle-collect="$4" --callgrind-out-file="$out" \
        "$bench" --workload "$2" "$3" "$grid" > /dev/null 2> "$out.log"
    awk -v n="$3" '/Collected/ {printf "%.0f", $4 / n}' "$out.log"
    rm -f "$out" "$out.log"
}
printf '%-16s %14s' workload "instr/unit"
[ -n "$ref" ] && printf ' %16s %7s' "reference" "ratio"
printf '\n'
for w in "eval-grid-z 20000 workload" "eval-random-z 20000 workload" "star-at 100000 workload" \
         "isochrone 10 workload" "open 1 open_workload"; do
    set -- $w
    this=$(count "" "$1" "$2" "$3")
    printf '%-16s %14s' "$1" "$this"
    if [ -n "$ref" ]; then
        that=$(count "$ref" "$1" "$2" "$3")
        printf ' %16s %7.3f' "$that" "$(echo "$this / $that" | bc -l)"
    fi
    printf '\n'
done
