#!/usr/bin/python3
"""An invented survey field synthesised by four worker processes, merged exactly.

Each worker (multiprocessing) opens the grid, runs a quarter of the population's chunks
into an hrtrail.Part and sends it back (parts pickle as their checksummed bytes).  The
parent merges them in a shuffled order and checks the result against one process doing
every chunk: the summaries are equal bit for bit.  It saves the merged part (a file that
`hrtrail population merge` reads) and writes the stars of one chunk to a catalogue.

population_parts.py [--stars N] [--workers K] [--out DIR]
"""
import argparse
import multiprocessing
import os
import random
import sys
import tempfile

import numpy as np

import hrtrail

AGES = [2e9, 9e9]  # the field's ages, yr


def field(n_stars):
    """The population: constant star formation over 10 Gyr, [Fe/H] spread 0.2 dex around Z = 0.01."""
    return hrtrail.Population(n_stars, sfh=hrtrail.SFH.constant(0, 1e10),
                              zdist=hrtrail.ZDist.log_normal(0.01, 0.2, 0.002, 0.03), seed=2026, chunk_size=20000)


def work(args):
    """One worker: part k of n of the population's chunks."""
    pop, k, n = args
    with hrtrail.Grid() as g:
        lo, hi = pop.n_chunks * k // n, pop.n_chunks * (k + 1) // n
        return hrtrail.Part(pop, AGES).run(g, range(lo, hi), threads=1)


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--stars", type=int, default=200000)
    ap.add_argument("--workers", type=int, default=4)
    ap.add_argument("--out", default=tempfile.mkdtemp())
    a = ap.parse_args()
    pop = field(a.stars)
    with multiprocessing.Pool(min(a.workers, 2)) as pool:
        parts = pool.map(work, [(pop, k, a.workers) for k in range(a.workers)])
    random.Random(1).shuffle(parts)  # any order merges to the same bits
    whole = hrtrail.merge_parts(parts)
    with hrtrail.Grid() as g:
        single = hrtrail.Part(pop, AGES).run(g)
        same = whole.complete and whole.summaries() == single.summaries() and whole.to_bytes() == single.to_bytes()
        print("%d workers, %d chunks: merged summaries %s one process's" % (a.workers, whole.n_chunks,
                                                                           "equal" if same else "DIFFER from"))
        for s in whole.summaries():
            print("  at %.3g Gyr: %d stars born, %.4g Msun in stars and remnants, L %.4g Lsun, %d white dwarfs"
                  % (s.age_yr / 1e9, s.n_drawn - s.n_unborn, s.mass_msun, s.l_lsun,
                     sum(r["stars"] for r in s.remnants() if r["remnant"].name.endswith("WD"))))
        path = os.path.join(a.out, "field.part")
        whole.save(path)
        print("merged part saved to %s (hrtrail population merge %s --csv)" % (path, path))
        # the stars of chunk 0 at the last epoch, to a catalogue
        m, z, t = pop.draw(0)
        born = t <= AGES[-1]
        st = g.evaluate(m[born], AGES[-1] - t[born], z[born], errors="ignore")
        cat_path = os.path.join(a.out, "field-chunk0.h5")
        with hrtrail.Catalogue(cat_path) as cat:
            cat.add(AGES[-1], np.flatnonzero(born), t[born], st)
        print("catalogue of chunk 0: %d stars in %s" % (cat.rows, cat_path))
        # a part of another seed is refused
        try:
            whole.merge(hrtrail.Part(hrtrail.Population(a.stars, seed=1), AGES))
            refused = False
        except hrtrail.InvalidInputError as e:
            refused = "different populations" in str(e)
        print("a part of another population: %s" % ("refused" if refused else "NOT refused"))
    return 0 if same and refused and cat.rows == int(born.sum()) else 1


if __name__ == "__main__":
    sys.exit(main())
