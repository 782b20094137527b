#!/bin/sh
# Write the hrtrail_version.h meson would generate (same numbers, from
# meson.build) to $1/hrtrail_version.h, for builds outside meson.
set -eu
top=$(cd "$(dirname "$0")/../.." && pwd)
ver=$(sed -n "s/^ *version : '\([0-9.]*\)'.*/\1/p" "$top/meson.build" | head -n 1)
abi=$(sed -n 's/^abi_version = \([0-9]*\).*/\1/p' "$top/meson.build")
fmt=$(sed -n 's/^format_version = \([0-9]*\).*/\1/p' "$top/meson.build")
sed -e "s/@HRT_VERSION_MAJOR@/${ver%%.*}/" -e "s/@HRT_VERSION_MINOR@/$(echo "$ver" | cut -d. -f2)/" \
    -e "s/@HRT_VERSION_PATCH@/${ver##*.}/" -e "s/@HRT_VERSION_STRING@/\"$ver\"/" \
    -e "s/@HRT_ABI_VERSION@/$abi/" -e "s/@HRT_FORMAT_VERSION@/$fmt/" \
    "$top/include/hrtrail_version.h.in" > "$1/hrtrail_version.h"
