#!/bin/sh
# find_package(hrtrail) from a staging install: a CMake project
# (cmake_consumer/) builds the C program against hrtrail::hrtrail and
# hrtrail::hrtrail_static, the C++ layer, and the Fortran module against
# hrtrail::fortran; all run; a version the package does not have is refused.
# Usage: install_cmake.sh SOURCE_ROOT BUILD_ROOT.  Exit 77 (skipped) without cmake.
src=$1
if ! command -v cmake > /dev/null 2>&1; then
    echo "install-cmake: cmake not installed (apt-get install cmake): skipped"
    exit 77
fi
build=$2
. "$src/packaging/tests/stage.sh"
cmake -S "$src/packaging/tests/cmake_consumer" -B "$tmp/cmake" -DCMAKE_PREFIX_PATH="$prefix" \
    -DCMAKE_BUILD_TYPE=Release > "$tmp/configure.log" 2>&1
st=$?
[ $st -eq 0 ] || cat "$tmp/configure.log"
check $st "cmake configures with find_package(hrtrail 0.2)"
cmake --build "$tmp/cmake" > "$tmp/build.log" 2>&1
st=$?
[ $st -eq 0 ] || cat "$tmp/build.log"
check $st "cmake builds the consumers"
"$tmp/cmake/consumer" > "$tmp/shared.out"
check $? "C consumer (hrtrail::hrtrail) runs"
"$tmp/cmake/consumer_static" > "$tmp/static.out"
check $? "C consumer (hrtrail::hrtrail_static) runs"
readelf -d "$tmp/cmake/consumer_static" | grep -q 'libhrtrail\.so'
[ $? -ne 0 ]
check $? "hrtrail::hrtrail_static does not need libhrtrail.so"
cmp -s "$tmp/shared.out" "$tmp/static.out"
check $? "both print the same numbers"
"$tmp/cmake/consumer_cxx" > "$tmp/cxx.out"
check $? "C++ consumer runs: $(tail -n 1 "$tmp/cxx.out")"
if [ -x "$tmp/cmake/consumer_f" ]; then
    "$tmp/cmake/consumer_f" > "$tmp/f.out"
    check $? "Fortran consumer (hrtrail::fortran) runs: $(cat "$tmp/f.out")"
    n_c=$(sed -n 's/^population: \([0-9]*\) evaluated.*/\1/p' "$tmp/shared.out")
    n_f=$(sed -n 's/^population: \([0-9]*\) evaluated.*/\1/p' "$tmp/f.out")
    [ -n "$n_c" ] && [ "$n_c" = "$n_f" ]
    check $? "Fortran and C count the same stars evaluated ($n_c, $n_f)"
else
    grep -q 'FORTRAN_COMPILER ""' "$(find "$stage" -name hrtrailConfig.cmake)"
    check $? "no Fortran consumer: the package has no Fortran module"
fi
cmake -S "$src/packaging/tests/cmake_consumer" -B "$tmp/cmake99" -DCMAKE_PREFIX_PATH="$prefix" \
    -DHRTRAIL_WANT=99.0 > "$tmp/configure99.log" 2>&1
[ $? -ne 0 ] && grep -q 'compatible with requested version "99.0"' "$tmp/configure99.log"
check $? "find_package(hrtrail 99.0) is refused by the version file"
exit $fail
