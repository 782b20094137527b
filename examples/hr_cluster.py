#!/usr/bin/python3
"""HR diagram of a synthetic star cluster, from Python.

    hr_cluster.py [--out hr_cluster.png] [--n 3000] [--age-yr 6.5e8] [--z 0.008] [--grid GRID]

The scenario is invented: the young open cluster "Amberfall", 650 Myr old at
Z = 0.008, 3000 members drawn from a two-part power-law initial mass function
(slope -1.3 below 0.5 Msun and -2.3 above, in dN/dM; common practice since
Kroupa 2001, MNRAS 322, 231).  All members are evaluated in one call of
hrt_eval through the binding; the script prints the census by phase and, when
matplotlib (Debian python3-matplotlib) is installed, draws the HR diagram
(log Teff decreasing to the right, log L up), coloured by phase, over the
isochrone of the same age.  Without matplotlib it prints the census only.

Accuracy: the default grid is a semi-analytic model meant for population-level
work, so the diagram is illustrative (see tracks/MODEL.md).
"""
import argparse
import collections
import sys

import numpy as np

import hrtrail


def draw_masses(rng, n, lo, hi):
    """Initial masses (Msun) from dN/dM ~ M^-1.3 (M < 0.5) and M^-2.3 (M >= 0.5), continuous at 0.5."""
    edges, slopes = [lo, 0.5, hi], [-1.3, -2.3]
    # weight of each segment: integral of the (continuous) density over it
    k = [1.0, 0.5 ** (slopes[0] - slopes[1])]
    w = [k[i] * (edges[i + 1] ** (slopes[i] + 1) - edges[i] ** (slopes[i] + 1)) / (slopes[i] + 1) for i in range(2)]
    seg = rng.choice(2, size=n, p=np.array(w) / sum(w))
    u = rng.random(n)
    out = np.empty(n)
    for i in range(2):
        s, a, b = slopes[i] + 1, edges[i], edges[i + 1]
        j = seg == i
        out[j] = (a ** s + u[j] * (b ** s - a ** s)) ** (1.0 / s)  # inverse CDF of a power law
    return out


def main(argv=None):
    p = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    p.add_argument("--out", default="hr_cluster.png", help="PNG to write (when matplotlib is present)")
    p.add_argument("--n", type=int, default=3000, help="number of members")
    p.add_argument("--age-yr", type=float, default=6.5e8)
    p.add_argument("--z", type=float, default=0.008)
    p.add_argument("--grid", default=None, help="grid file (default: the installed default grid)")
    p.add_argument("--seed", type=int, default=2026)
    a = p.parse_args(argv)

    rng = np.random.default_rng(a.seed)
    with hrtrail.Grid(a.grid) as g:
        lo, hi = g.mass_range(a.z)
        mass = draw_masses(rng, a.n, max(lo, 0.1), min(hi, 20.0))
        st = g.evaluate(mass, np.full(a.n, a.age_yr), a.z)        # one hrt_eval call, no loop
        iso = g.isochrone(a.age_yr, a.z)
    census = collections.Counter(int(p) for p in st["phase"])
    print("Amberfall (invented cluster): %d members, age %.3g yr, Z = %g" % (a.n, a.age_yr, a.z))
    for ph, count in sorted(census.items()):
        print("  %-34s %5d" % (hrtrail.Phase(ph).label, count))
    luminous = np.isfinite(st["log_l_lsun"]) & np.isfinite(st["log_teff_k"])
    turnoff = st[luminous & (st["phase"] == hrtrail.Phase.MS)]
    if turnoff.size:
        k = np.argmax(turnoff["initial_mass_msun"])
        print("  most massive main-sequence member: %.3f Msun, log L = %.3f, Teff = %.0f K"
              % (turnoff["initial_mass_msun"][k], turnoff["log_l_lsun"][k], 10 ** turnoff["log_teff_k"][k]))
    try:
        import matplotlib
        matplotlib.use("Agg")
        import matplotlib.pyplot as plt
    except ImportError:
        print("matplotlib is not installed (Debian: python3-matplotlib): no plot drawn")
        return 0
    fig, ax = plt.subplots(figsize=(6.4, 6.0))
    ok = np.isfinite(iso["log_l_lsun"]) & np.isfinite(iso["log_teff_k"])
    for k, r in enumerate(np.unique(iso["route"])):  # one line per route: they are separate loci
        sel = ok & (iso["route"] == r)
        ax.plot(iso["log_teff_k"][sel], iso["log_l_lsun"][sel], "-", color="0.7", lw=1,
                label="isochrone" if k == 0 else None, zorder=1)
    for ph in sorted(census):
        sel = luminous & (st["phase"] == ph)
        if sel.any():
            ax.scatter(st["log_teff_k"][sel], st["log_l_lsun"][sel], s=6, label=hrtrail.Phase(ph).label, zorder=2)
    ax.invert_xaxis()
    ax.set_xlabel("log10 Teff / K")
    ax.set_ylabel("log10 L / Lsun")
    ax.set_title("Amberfall (invented), %.3g yr, Z = %g" % (a.age_yr, a.z))
    ax.legend(fontsize=7, loc="lower left")
    fig.tight_layout()
    fig.savefig(a.out, dpi=120)
    print("HR diagram written to %s" % a.out)
    return 0


if __name__ == "__main__":
    sys.exit(main())
