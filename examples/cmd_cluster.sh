#!/bin/sh
# A magnitude-temperature diagram (apparent V against log Teff) of an invented cluster with
# the hrtrail command.
#
#   cmd_cluster.sh [OUT.svg]      (default: cmd_cluster.svg; HRTRAIL_GRID or the installed grid)
#
# The scenario is invented: the open cluster "Amberfall", 650 Myr old at Z = 0.008, seen at
# 540 pc through A_V = 0.22 mag of dust.  Its 160 members have initial masses from 0.35 to
# 4 Msun spread by Salpeter's (1955, ApJ 121, 161) slope, dN/dm ~ m^-2.35, through its inverse
# distribution function at the points of a golden-ratio sequence (deterministic, no random
# generator, so the figure is the same on every machine).  'hrtrail at' gives their states
# with their magnitudes (M_bol on the IAU 2015 B2 scale, BC_V of Flower 1996 with the
# coefficients of Torres 2010); 'hrtrail plot --y mv' draws them over the cluster isochrone.
#
# Accuracy: the default grid is a semi-analytic model for population-level work, and BC_V is
# good to about 0.06 mag for B3-K5 dwarfs (0.2 mag or more off for M dwarfs): the diagram is
# illustrative.
set -eu
HRTRAIL=${HRTRAIL:-hrtrail}
out=${1:-cmd_cluster.svg}
members=$(mktemp)
trap 'rm -f "$members"' EXIT

awk 'BEGIN {
    lo = 0.35; hi = 4.0; a = -1.35; phi = 0.6180339887498949
    print "initial_mass_msun,age_yr"
    for (k = 1; k <= 160; k++) {
        u = k * phi - int(k * phi)
        m = (lo ^ a + u * (hi ^ a - lo ^ a)) ^ (1 / a)
        printf "%.6f,650Myr\n", m
    }
}' | "$HRTRAIL" at --input - --z 0.008 --distance 540 --av 0.22 --csv > "$members"

# the brightest members, as the table the plot is drawn from gives them
echo "brightest members of Amberfall (V at 540 pc, A_V = 0.22):"
sort -t, -k22,22g "$members" | head -n 4 | cut -d, -f1,4,19-22

"$HRTRAIL" plot --points - --isochrone 650Myr --z 0.008 --y mv --distance 540 --av 0.22 \
    --title "Amberfall (invented): V against log Teff, 650 Myr, Z = 0.008, 540 pc, A_V = 0.22" -o "$out" < "$members"
echo "wrote $out"
