#!/usr/bin/python3
"""HR diagram of a synthetic star cluster, from Python.

    hr_cluster.py [--out hr_cluster.png] [--n 3000] [--age-yr 6.5e8] [--z 0.008] [--grid GRID]

The scenario is invented: the young open cluster "Amberfall", 650 Myr old at
Z = 0.008, 3000 members drawn by the library from the Kroupa (2001, MNRAS 322,
231) initial mass function (hrtrail.Population: hrt_imf_init and hrt_pop_draw,
seeded, so the same seed gives the same members in C, Python or the command
line).  All members are evaluated in one call of hrt_eval through the
binding; the census by phase comes from the library's population summary of
the same stars (hrt_pop_run); the script prints it and, when
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


def draw_members(pop):
    """Initial masses (Msun) of every member, as the library draws them (hrt_pop_draw, chunk by chunk)."""
    return np.concatenate([pop.draw(k)[0] for k in range(pop.n_chunks)])


def main(argv=None):
    p = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    p.add_argument("--out", default="hr_cluster.png", help="PNG to write (when matplotlib is present)")
    p.add_argument("--n", type=int, default=3000, help="number of members")
    p.add_argument("--age-yr", type=float, default=6.5e8)
    p.add_argument("--z", type=float, default=0.008)
    p.add_argument("--grid", default=None, help="grid file (default: the installed default grid)")
    p.add_argument("--seed", type=int, default=2026)
    a = p.parse_args(argv)

    with hrtrail.Grid(a.grid) as g:
        lo, hi = g.mass_range(a.z)
        imf = hrtrail.IMF("kroupa2001", max(lo, 0.1), min(hi, 20.0))
        pop = hrtrail.Population(a.n, imf=imf, sfh=hrtrail.SFH.burst(0.0), z=a.z, seed=a.seed)
        mass = draw_members(pop)
        st = g.evaluate(mass, np.full(a.n, a.age_yr), a.z)        # one hrt_eval call, no loop
        summary = pop.run(g, [a.age_yr], threads=1)[0]            # the library's census of the same stars
        iso = g.isochrone(a.age_yr, a.z)
    census = collections.Counter(int(p) for p in st["phase"])
    print("Amberfall (invented cluster): %d members, age %.3g yr, Z = %g" % (a.n, a.age_yr, a.z))
    for row in summary.phases():
        print("  %-34s %5d" % (row["phase"].label, row["stars"]))
    if {int(r["phase"]): r["stars"] for r in summary.phases()} != dict(census):
        print("the summary and the evaluated members disagree", file=sys.stderr)
        return 1
    print("  main-sequence turnoff %.4g Msun (hrt_pop_turnoff_mass)" % summary.turnoff_mass_msun)
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
