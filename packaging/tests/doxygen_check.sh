#!/bin/sh
# Zero undocumented public symbols: Doxygen over the public headers with
# WARN_IF_UNDOCUMENTED (packaging/Doxyfile.in); every warning is printed and
# fails the test.  First a probe header with one undocumented function must
# give exactly one warning, so a check that sees nothing cannot pass.
# Usage: doxygen_check.sh DOXYFILE_IN SOURCE_ROOT BUILD_ROOT
# Exit 77 (skipped) when doxygen is not installed.
if ! command -v doxygen > /dev/null 2>&1; then
    echo "api-doc-complete: doxygen not installed (apt-get install doxygen): skipped"
    exit 77
fi
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
conf=$1
src=$2
build=$3
mkdir -p "$tmp/probe"
printf '/** @file */\nint hrt_probe_documented(void); /**< documented */\nint hrt_probe_bare(void);\n' \
    > "$tmp/probe/probe.h"
out=$tmp/p
mkdir -p "$out"
sed -e "s|@VERSION@|check|" -e "s|@OUTPUT@|$out|" -e "s|@INPUT@|$tmp/probe/probe.h|" -e "s|@STRIP@|$tmp/probe|" \
    -e "s|@INCLUDE_PATH@|$tmp/probe|" -e "s|@WARN_LOG@|$out/warnings.log|" "$conf" > "$out/Doxyfile"
doxygen "$out/Doxyfile" > "$out/doxygen.out" 2>&1
n=$(grep -c 'not documented' "$out/warnings.log")
if [ "$n" -ne 1 ] || ! grep -q hrt_probe_bare "$out/warnings.log"; then
    echo "api-doc-complete: the probe header gave $n warnings, expected 1 about hrt_probe_bare:"
    cat "$out/warnings.log"
    exit 1
fi
out=$tmp/h
mkdir -p "$out"
sed -e "s|@VERSION@|check|" -e "s|@OUTPUT@|$out|" -e "s|@INPUT@|$src/include/hrtrail.h $src/include/hrtrail|" \
    -e "s|@STRIP@|$src/include|" -e "s|@INCLUDE_PATH@|$src/include $build|" -e "s|@WARN_LOG@|$out/warnings.log|" \
    "$conf" > "$out/Doxyfile"
if ! doxygen "$out/Doxyfile" > "$out/doxygen.out" 2>&1; then
    cat "$out/doxygen.out"
    exit 1
fi
n=$(grep -c . "$out/warnings.log")
cat "$out/warnings.log"
echo "api-doc-complete: $n Doxygen warnings over the public headers ($(grep -c 'not documented' "$out/warnings.log") undocumented symbols)"
[ "$n" -eq 0 ]
