#!/bin/sh
# Regenerates the figures tracks/MODEL.md shows (tracks/figures/*.svg) from
# the default grid with the command-line tool: tracks of 0.8-85 Msun and
# isochrones of 10 Myr-12 Gyr at two metallicities.
#
#   sh tracks/make_figures.sh BUILD_DIR      (after ninja -C BUILD_DIR)
#
# The SVGs name the grid they were drawn from; they are text and diff well.
set -eu
build=${1:-build}
top=$(cd "$(dirname "$0")/.." && pwd)
hrt="$build/bindings/cli/hrtrail"
grid="$build/tracks/hrtrail-default-grid.h5"
out="$top/tracks/figures"
mkdir -p "$out"
for z in 0.014 0.001; do
    "$hrt" --grid "$grid" plot --z "$z" --track 0.8,1,1.5,2,3,5,9,15,25,40,60,85 \
        --title "Default grid: tracks, Z = $z" -o "$out/tracks_z$z.svg"
    "$hrt" --grid "$grid" plot --z "$z" --isochrone 10Myr,30Myr,100Myr,300Myr,1Gyr,3Gyr,12Gyr \
        --title "Default grid: isochrones, Z = $z" -o "$out/isochrones_z$z.svg"
done
echo "figures written to $out"
