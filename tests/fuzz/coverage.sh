#!/bin/sh
# Line coverage of the library reached by fuzz corpora (clang source-based
# coverage, llvm-cov).  Usage:
#   tests/fuzz/coverage.sh BUILD_DIR CORPUS_ROOT
# CORPUS_ROOT holds corpus-<target>/ directories (what run.sh leaves in its
# build directory); each target replays its corpus once.
set -eu
top=$(cd "$(dirname "$0")/../.." && pwd)
out=$1
root=$2
CC=${CC:-clang}
mkdir -p "$out/cobj"
sh "$top/tests/fuzz/version-header.sh" "$out"
deps_cflags=$(pkg-config --cflags gsl hdf5)
deps_libs="$(pkg-config --libs gsl hdf5) -lm -lpthread"
cflags="-std=c11 -g -O1 -fprofile-instr-generate -fcoverage-mapping -D_POSIX_C_SOURCE=200809L -I$top/include -I$top/lib -I$out $deps_cflags"
objs=""
for src in "$top"/lib/*/*.c; do
    o="$out/cobj/$(basename "$src" .c).o"
    $CC $cflags -DHRT_BUILDING_LIBRARY -DHRT_DATADIR=\"/nonexistent\" -c "$src" -o "$o"
    objs="$objs $o"
done
cli_objs=""
for src in util opts text; do
    $CC $cflags -c "$top/bindings/cli/$src.c" -o "$out/cobj/cli_$src.o"
    cli_objs="$cli_objs $out/cobj/cli_$src.o"
done
rm -f "$out"/cov-*.profraw
for t in fuzz_grid_file fuzz_grid_edit fuzz_cli_args fuzz_import; do
    [ -d "$root/corpus-$t" ] || continue
    extra=""
    [ "$t" = fuzz_cli_args ] && extra="$cli_objs"
    $CC $cflags -fsanitize=fuzzer "$top/tests/fuzz/$t.c" $extra $objs $deps_libs -o "$out/cov-$t"
    LLVM_PROFILE_FILE="$out/cov-$t.profraw" "$out/cov-$t" -runs=0 -close_fd_mask=3 -timeout=20 \
        "$root/corpus-$t" > /dev/null 2>&1 || true
done
llvm-profdata merge -sparse "$out"/cov-*.profraw -o "$out/cov.profdata"
first=$(ls "$out"/cov-fuzz_* | grep -v profraw | head -n 1)
others=$(ls "$out"/cov-fuzz_* | grep -v profraw | tail -n +2 | sed 's/^/-object /' | tr '\n' ' ')
llvm-cov report "$first" $others -instr-profile="$out/cov.profdata" "$top"/lib/*/*.c "$top/bindings/cli/util.c" "$top/bindings/cli/opts.c" "$top/bindings/cli/text.c"
