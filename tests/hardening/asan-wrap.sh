#!/bin/sh
# meson test --wrapper for the ASan+UBSan build: Debian's Python is not
# built with ASan, so a Python test that loads the sanitized library through
# ctypes needs the ASan runtime preloaded; leak detection is off for it
# (the interpreter's own allocations at exit are not ours).  Every other
# test runs unchanged, with leak detection on.
case $(basename "$1") in
python*)
    LD_PRELOAD=$(${CC:-cc} -print-file-name=libasan.so)
    export LD_PRELOAD
    ASAN_OPTIONS="${ASAN_OPTIONS:-}:detect_leaks=0"
    export ASAN_OPTIONS
    ;;
esac
exec "$@"
