#!/bin/sh
# Programs built against a staging install the ways README.md says:
#   C with pkg-config (shared library), C with pkg-config --static against
#   libhrtrail.a, Fortran with hrtrail-fortran.pc (shared and static), Fortran
#   with the module rebuilt from its installed source; and the installed
#   documentation.  Every build of the same program must print the same text.
# Usage: install_pkgconfig.sh SOURCE_ROOT BUILD_ROOT
src=$1
build=$2
. "$src/packaging/tests/stage.sh"
cc=${CC:-cc}
fc=${FC:-gfortran}
# C, shared
$cc -o "$tmp/c_shared" "$src/packaging/tests/consumer.c" $(pkg-config --cflags --libs hrtrail)
check $? "C program built with pkg-config --cflags --libs hrtrail"
"$tmp/c_shared" > "$tmp/c_shared.out"
check $? "it runs on the staged library and grid"
# C, static hrtrail: libhrtrail.a first, then what pkg-config --static says it needs
# (--as-needed: the -lhrtrail that pkg-config repeats finds nothing left to link)
$cc -o "$tmp/c_static" "$src/packaging/tests/consumer.c" $(pkg-config --cflags hrtrail) -Wl,--as-needed \
    -Wl,-Bstatic -lhrtrail -Wl,-Bdynamic $(pkg-config --static --libs hrtrail)
check $? "C program linked with libhrtrail.a and pkg-config --static --libs hrtrail"
readelf -d "$tmp/c_static" | grep -q 'libhrtrail\.so'
[ $? -ne 0 ]
check $? "the static build does not need libhrtrail.so"
"$tmp/c_static" > "$tmp/c_static.out"
check $? "the static build runs"
cmp -s "$tmp/c_shared.out" "$tmp/c_static.out"
check $? "static and shared builds print the same numbers"
grep -q '^population: [1-9]' "$tmp/c_shared.out"
check $? "the population was evaluated: $(tail -n 1 "$tmp/c_shared.out")"
# Fortran
if command -v "$fc" > /dev/null 2>&1 && pkg-config --exists hrtrail-fortran; then
    pkg-config --cflags hrtrail-fortran | grep -q hdf5
    check $((1 - $?)) "hrtrail-fortran.pc gives no HDF5 directory (with HDF5's .mod files) to --cflags: $(pkg-config --cflags hrtrail-fortran)"
    tag=$(pkg-config --variable=fortran_compiler hrtrail-fortran)
    [ -f "$(pkg-config --variable=includedir hrtrail-fortran)/hrtrail/fortran/$tag/hrtrail.mod" ]
    check $? "hrtrail.mod installed in include/hrtrail/fortran/$tag"
    ex=$src/examples/evolve_stars.f90
    (cd "$tmp" && $fc -o f_shared "$ex" $(pkg-config --cflags --libs hrtrail-fortran))
    check $? "Fortran program built with pkg-config --cflags --libs hrtrail-fortran"
    "$tmp/f_shared" "$grid" > "$tmp/f_shared.out"
    check $? "it runs"
    (cd "$tmp" && $fc -o f_static "$ex" $(pkg-config --cflags hrtrail-fortran) -Wl,--as-needed \
        -Wl,-Bstatic -lhrtrail_fortran -lhrtrail -Wl,-Bdynamic $(pkg-config --static --libs hrtrail-fortran))
    check $? "Fortran program linked with libhrtrail_fortran.a, libhrtrail.a and pkg-config --static"
    readelf -d "$tmp/f_static" | grep -q 'libhrtrail'
    [ $? -ne 0 ]
    check $? "the static Fortran build needs neither shared hrtrail library"
    "$tmp/f_static" "$grid" > "$tmp/f_static.out"
    cmp -s "$tmp/f_shared.out" "$tmp/f_static.out"
    check $? "static and shared Fortran builds print the same"
    # the module rebuilt from its installed source, as another compiler would
    mkdir -p "$tmp/mod"
    (cd "$tmp" && $fc -c -J mod -o mod/hrtrail.o "$(pkg-config --variable=fortran_module_source hrtrail-fortran)" &&
        $fc -o f_rebuilt -I mod "$ex" mod/hrtrail.o $(pkg-config --libs hrtrail))
    check $? "Fortran program with the module compiled from include/hrtrail/fortran/hrtrail.f90"
    "$tmp/f_rebuilt" "$grid" > "$tmp/f_rebuilt.out"
    cmp -s "$tmp/f_shared.out" "$tmp/f_rebuilt.out"
    check $? "it prints what the installed module's build prints"
    grep -q 'Lantern Field 3' "$tmp/f_shared.out"
    check $? "the Fortran example's output"
else
    echo "no Fortran compiler or no hrtrail-fortran.pc: Fortran part not run"
fi
# documentation
doc=$prefix/share/doc/hrtrail
for f in FORMAT.md MODEL.md README.md examples/evolve_stars.f90 examples/fit_survey.c examples/star_timeline.cpp; do
    [ -s "$doc/$f" ]
    check $? "share/doc/hrtrail/$f installed"
done
if command -v doxygen > /dev/null 2>&1; then
    [ -s "$doc/html/index.html" ] && [ -s "$doc/html/core_8h.html" ]
    check $? "the API reference installed in share/doc/hrtrail/html"
fi
grep -q 'share/doc/hrtrail' "$(pkg-config --variable=includedir hrtrail)/hrtrail.h"
check $? "the installed hrtrail.h names share/doc/hrtrail"
grep -aq 'share/doc/hrtrail' "$grid"
check $? "the installed default grid's attributes name share/doc/hrtrail"
exit $fail
