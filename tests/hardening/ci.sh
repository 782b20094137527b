#!/bin/sh
# The hardening stage of CI (.ci/run runs it after the README commands,
# with the normal build in build/): the whole test suite under ASan+UBSan,
# the thread test under TSan, valgrind memcheck over the C test programs,
# and every fuzz target for a bounded time.  Prints the time of each part.
# Usage: tests/hardening/ci.sh [FUZZ_SECONDS_PER_TARGET]
set -eu
cd "$(dirname "$0")/../.."
top=$(pwd)
fuzz_secs=${1:-45}
t_start=$(date +%s)
t_last=$t_start
lap() {
    now=$(date +%s)
    echo "ci-hardening: $1 took $((now - t_last)) s"
    t_last=$now
}

# Warnings are errors in the normal build (CFLAGS=-Werror from .ci/run); the
# sanitizer builds inline differently and GCC then warns where it does not
# otherwise (format-truncation), so they are built without -Werror.
unset CFLAGS
# 1. ASan + UBSan over the whole meson test suite, less the slow ones (suite
#    slow-sanitized): the tests that build many fitting models (15 minutes
#    under the sanitizers; the fit library itself is covered by the 'fit'
#    Check suite), the default grid's leave-one-out and the import round trip
#    of its raw tracks (the builder and the import are covered by the import
#    suite), pip into a virtual environment.
#    Also slow-sanitized: the command's population parts, catalogue and MPI
#    tests (their library calls run here in population-parts and
#    mpi-population).  The default grid is not generated again here (its
#    leave-one-out error field costs ~50 s of CPU per metallicity under ASan,
#    and it was made twice: the grid and its reproducibility copy): the
#    sanitizer builds copy the normal build's (-Ddefault_grid).  Under the
#    sanitizers instead: the generator's model and builder on one metallicity,
#    compared with that grid (gen_grid_one_z), and the leave-one-out and its
#    store on that metallicity of the copied grid (interp_error).
grid=$top/build/tracks/hrtrail-default-grid.h5
[ -f "$grid" ] || { echo "ci-hardening: no $grid: build the normal build first"; exit 1; }
if [ -d build-asan ]; then
    meson configure build-asan -Ddefault_grid="$grid" > /dev/null
else
    meson setup build-asan -Db_sanitize=address,undefined -Db_lundef=false -Ddefault_grid="$grid" > build-asan.log
fi
ninja -C build-asan > /dev/null
ASAN_OPTIONS=detect_leaks=1 UBSAN_OPTIONS=halt_on_error=1:print_stacktrace=1 \
    meson test -C build-asan --print-errorlogs --timeout-multiplier 4 --no-suite slow-sanitized \
    --wrapper "$top/tests/hardening/asan-wrap.sh"
lap "ASan+UBSan test suite"

# 2. TSan: eight threads on one grid, also the default grid.
[ -d build-tsan ] || meson setup build-tsan -Db_sanitize=thread -Db_lundef=false -Ddefault_grid="$grid" > build-tsan.log
ninja -C build-tsan tests/hardening/test_threads > /dev/null
TSAN_OPTIONS=halt_on_error=1 build-tsan/tests/hardening/test_threads build/tracks/hrtrail-default-grid.h5
lap "TSan thread test"

# 3. valgrind memcheck over the C test programs of the normal build, one at a
#    time (a background run once ended without a word; sequential is plain).
vg="valgrind --error-exitcode=99 --leak-check=full --errors-for-leak-kinds=definite,indirect --show-leak-kinds=definite,indirect -q"
mkdir -p build/valgrind
run_vg() { # name, program and arguments
    name=$1
    shift
    rc=0
    CK_DEFAULT_TIMEOUT=3000 HRTRAIL_GRID=$grid $vg "$@" > "build/valgrind/$name.log" 2>&1 || rc=$?
    if [ $rc -eq 0 ]; then
        echo "ci-hardening: valgrind $name: no errors, no leaks"
    else
        echo "ci-hardening: valgrind $name FAILED (exit $rc)"
        tail -n 60 "build/valgrind/$name.log"
        return 1
    fi
}
fails=0
run_vg core build/tests/test_core || fails=1
run_vg threads build/tests/hardening/test_threads || fails=1
run_vg alloc build/tests/hardening/test_alloc || fails=1
run_vg faults build/tests/hardening/test_faults || fails=1
run_vg badinput build/tests/hardening/test_badinput || fails=1
# the default grid's leave-one-out (test_default_grid) is the same library code
# on a hundred times more tracks: 20+ minutes under valgrind; the accuracy
# test runs that code (builder, scratch grids, threads) on exact-answer grids
run_vg accuracy build/tests/test_accuracy || fails=1
[ $fails -eq 0 ] || exit 1
lap "valgrind memcheck"

# 4. Fuzzing, each target for a bounded time.  Random exploration must not
#    make CI flaky: what it finds is printed with its reproducer (commit it to
#    tests/fuzz/corpus/ to make it a regression) but does not fail this stage;
#    the committed corpora, replayed afterwards, do: that part is repeatable.
if sh tests/fuzz/run.sh "$fuzz_secs" "$top/build-fuzz"; then
    echo "ci-hardening: fuzzing found nothing new"
else
    echo "ci-hardening: WARNING: fuzzing found a new problem; reproducers in build-fuzz/crashes/ (see above)"
fi
for t in fuzz_grid_file fuzz_grid_edit fuzz_cli_args fuzz_import; do
    if [ ! -x "build-fuzz/$t" ]; then
        # a target that no longer builds is a failure, not a skipped stage
        echo "ci-hardening: $t was not built (see the fuzz build output above)"
        exit 1
    fi
    if ASAN_OPTIONS=detect_leaks=1:allocator_may_return_null=1 UBSAN_OPTIONS=halt_on_error=1:print_stacktrace=1 \
        "build-fuzz/$t" tests/fuzz/corpus/$t/* > "build-fuzz/$t-replay.log" 2>&1; then
        echo "ci-hardening: $t: committed corpus replayed clean ($(ls tests/fuzz/corpus/$t | wc -l) inputs)"
    else
        echo "ci-hardening: $t: committed corpus FAILS"
        tail -n 40 "build-fuzz/$t-replay.log"
        exit 1
    fi
done
lap "fuzzing"
echo "ci-hardening: all stages passed in $(( $(date +%s) - t_start )) s"
