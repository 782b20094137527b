#!/bin/sh
# Build the libFuzzer targets with clang (ASan + UBSan) and run each for a
# bounded time on a copy of its committed seed corpus.
#
# Usage: tests/fuzz/run.sh [SECONDS_PER_TARGET [BUILD_DIR [TARGET...]]]
#   defaults: 45 s, build-fuzz/ at the top of the tree, every target.
# Prints, per target: executions, coverage (libFuzzer's cov/ft counters),
# corpus size, and any crash (the input is kept in BUILD_DIR/crashes/).
# Exit status: 0 when no target found a problem.
set -eu
top=$(cd "$(dirname "$0")/../.." && pwd)
secs=${1:-45}
out=${2:-$top/build-fuzz}
shift 2 2>/dev/null || shift $# 2>/dev/null || true
targets=${*:-"fuzz_grid_file fuzz_grid_edit fuzz_cli_args fuzz_import"}
CC=${CC:-clang}
command -v "$CC" >/dev/null || { echo "fuzz: $CC not found (apt-get install clang libclang-rt-14-dev)"; exit 1; }

mkdir -p "$out/obj" "$out/crashes"
sh "$top/tests/fuzz/version-header.sh" "$out"

deps_cflags=$(pkg-config --cflags gsl hdf5)
# hdf5_hl: HDF5's high-level library (dimension scales), not in Debian's hdf5.pc
deps_libs="-lhdf5_hl $(pkg-config --libs gsl hdf5 zlib) -lm -lpthread"
san="-fsanitize=address,undefined -fno-sanitize-recover=undefined -fno-omit-frame-pointer"
cflags="-std=c11 -g -O1 $san -D_POSIX_C_SOURCE=200809L -I$top/include -I$top/lib -I$out $deps_cflags"

echo "fuzz: building into $out"
objs=""
for src in "$top"/lib/*/*.c; do
    # named by layer and file: lib/core/names.c and lib/population/names.c are two files
    o="$out/obj/lib_$(basename "$(dirname "$src")")_$(basename "$src" .c).o"
    $CC $cflags -fsanitize=fuzzer-no-link -DHRT_BUILDING_LIBRARY -DHRT_DATADIR=\"/nonexistent\" -c "$src" -o "$o"
    objs="$objs $o"
done
cli_objs=""
for src in util opts text; do
    $CC $cflags -fsanitize=fuzzer-no-link -c "$top/bindings/cli/$src.c" -o "$out/obj/cli_$src.o"
    cli_objs="$cli_objs $out/obj/cli_$src.o"
done
for t in fuzz_grid_file fuzz_grid_edit fuzz_cli_args fuzz_import; do
    extra=""
    [ "$t" = fuzz_cli_args ] && extra="$cli_objs"
    $CC $cflags -fsanitize=fuzzer "$top/tests/fuzz/$t.c" $extra $objs $deps_libs -o "$out/$t"
done
$CC $cflags "$top/tests/fuzz/mkseed.c" $objs $deps_libs -o "$out/mkseed"

status=0
summary=""
for t in $targets; do
    work="$out/corpus-$t"
    rm -rf "$work"
    mkdir -p "$work"
    seeds="$top/tests/fuzz/corpus/$t"
    [ -d "$seeds" ] && cp "$seeds"/* "$work"/ 2>/dev/null || true
    case $t in
        # 128 KiB: the smallest grid of the current layout (chunked, compressed,
        # checksummed: corpus/fuzz_grid_file/one_z.h5, mkseed OUT 1) is 103 KiB
        fuzz_grid_file) opts="-max_len=131072" ;;
        fuzz_import) opts="-max_len=16384" ;;
        *) opts="-max_len=4096" ;;
    esac
    # HDF5 itself (Debian's build, not instrumented) can hang or crash on a
    # hostile file.  Such a stop is kept (crashes/hdf5-*) and counted, and
    # fuzzing goes on for the time left; any stop in hrtrail's code, a
    # property that fails, or a memory error fails the run.
    log="$out/$t.log"
    echo "fuzz: $t for $secs s"
    left=$secs
    execs=0
    hdf5=0
    rc=0
    while [ "$left" -gt 0 ]; do
        t0=$(date +%s)
        set +e
        ASAN_OPTIONS=${ASAN_OPTIONS:-detect_leaks=1:allocator_may_return_null=1} \
        UBSAN_OPTIONS=halt_on_error=1:print_stacktrace=1 \
            "$out/$t" $opts -max_total_time="$left" -timeout=10 -rss_limit_mb=4096 -malloc_limit_mb=4096 \
            -print_final_stats=1 -close_fd_mask=1 -artifact_prefix="$out/crashes/$t-" "$work" > "$log" 2>&1
        rc=$?
        set -e
        n=$(sed -n 's/^stat::number_of_executed_units: *//p' "$log" | tail -n 1)
        [ -z "$n" ] && n=$(grep -Eo '^#[0-9]+' "$log" | tail -n 1 | tr -d '#')
        execs=$((execs + ${n:-0}))
        left=$((left - ($(date +%s) - t0)))
        [ $rc -eq 0 ] && break
        # The first stack frame outside the sanitizer and fuzzer runtimes and libc.
        first=$(grep -E '^ *#[0-9]+ 0x' "$log" | grep -Ev '__sanitizer|__asan|__ubsan|__interceptor| in (malloc|calloc|realloc|free|strdup|memcpy|memmove|memset) |fuzzer::|libFuzzer|libc\.so|libc_start|/libclang_rt|in _start|in main |in raise|in abort|in __GI_|sigaction|in _?_?kill|pthread_kill' | head -n 1)
        art=$(sed -n 's/.*Test unit written to \(.*\)$/\1/p' "$log" | tail -n 1)
        # A leak report: HDF5's own when every leaked block was allocated by HDF5.
        if grep -q 'LeakSanitizer: detected memory leaks' "$log"; then
            ours=$(awk '/^(Direct|Indirect) leak/ {blk = 1; next}
                blk && /^ *#[0-9]+ 0x/ { if ($0 ~ / in (malloc|calloc|realloc|strdup|__interceptor)/) next;
                                         if ($0 !~ /libhdf5/) bad = 1; blk = 0 }
                END {print bad + 0}' "$log")
            [ "$ours" = 0 ] && first="leak allocated inside libhdf5"
        fi
        # A memory error inside HDF5 on memory HDF5 allocated is HDF5's own too.
        if echo "$first" | grep -q 'libhdf5' && grep -q 'allocated by thread' "$log"; then
            owner=$(sed -n '/allocated by thread/,/^$/p' "$log" | grep -E '^ *#[0-9]+ 0x' |
                grep -Ev ' in (malloc|calloc|realloc|strdup|__interceptor)|__asan|__sanitizer' | head -n 1)
            echo "$owner" | grep -q 'libhdf5' && first="$first (memory of libhdf5)"
        fi
        if echo "$first" | grep -q 'libhdf5' && { echo "$first" | grep -q 'memory of libhdf5' || ! grep -Eq 'AddressSanitizer: (heap|stack|global)-buffer|use-after|double-free|property failed|runtime error' "$log"; }; then
            hdf5=$((hdf5 + 1))
            kind=$(grep -Eo 'libFuzzer: [a-z -]+|AddressSanitizer: [A-Za-z-]+' "$log" | head -n 1)
            echo "fuzz: $t: stop inside HDF5 ($kind) at:$first"
            [ -n "$art" ] && [ -f "$art" ] && mv "$art" "$out/crashes/hdf5-$(basename "$art")"
            cp "$log" "$out/crashes/hdf5-$t-$hdf5.log"
            rc=0
            [ $hdf5 -ge 20 ] && break
            continue
        fi
        break
    done
    cov=$(grep -Eo 'cov: [0-9]+ ft: [0-9]+' "$log" | tail -n 1)
    units=$(ls "$work" | wc -l)
    line="$t: $execs executions in $secs s, ${cov:-no coverage line}, corpus $units inputs, $hdf5 stops inside HDF5"
    if [ $rc -ne 0 ]; then
        line="$line, FAILED (exit $rc; see $log)"
        grep -E "ERROR|SUMMARY|property failed|fuzz: state|Test unit written|^ *#[0-9]+ 0x" "$log" | head -n 30 || true
        status=1
    fi
    echo "fuzz: $line"
    summary="$summary$line
"
done
printf '%s' "$summary" > "$out/summary.txt"
exit $status
