#!/usr/bin/python3
"""An invented star-forming disc synthesised over MPI ranks with mpi4py, merged exactly.

    mpirun -np 3 python3 population_mpi4py.py [--stars N]

Each rank runs its share of the population's chunks into an hrtrail.Part; the parts
travel to rank 0 as their checksummed bytes (comm.gather pickles them) and merge there
in rank order.  Rank 0 checks the result against one process doing every chunk (the
same bits for any number of ranks) and prints the summary; exit status 1 if they differ.
"""
import argparse
import sys

from mpi4py import MPI

import hrtrail


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--stars", type=int, default=120000)
    a = ap.parse_args()
    comm = MPI.COMM_WORLD
    rank, size = comm.Get_rank(), comm.Get_size()
    # an exponentially declining star-formation rate (tau 3 Gyr) over 12 Gyr, [Fe/H] spread 0.15 dex
    pop = hrtrail.Population(a.stars, sfh=hrtrail.SFH.exponential(0, 1.2e10, 3e9),
                             zdist=hrtrail.ZDist.log_normal(0.012, 0.15, 0.002, 0.03), seed=77, chunk_size=10000)
    ages = [1.2e10]
    with hrtrail.Grid() as g:
        lo, hi = pop.n_chunks * rank // size, pop.n_chunks * (rank + 1) // size
        part = hrtrail.Part(pop, ages).run(g, range(lo, hi), threads=1)
        parts = comm.gather(part, root=0)
        if rank != 0:
            return 0
        whole = hrtrail.merge_parts(parts)
        single = hrtrail.Part(pop, ages).run(g)
    same = whole.complete and whole.to_bytes() == single.to_bytes()
    s = whole.summaries()[0]
    print("%d ranks: %d stars, %.4g Msun formed, %.4g Msun now, L %.4g Lsun; %s one process's summary"
          % (size, s.n_drawn, s.initial_mass_msun, s.mass_msun, s.l_lsun, "equal to" if same else "DIFFERENT from"))
    return 0 if same else 1


if __name__ == "__main__":
    rc = main()
    sys.exit(MPI.COMM_WORLD.allreduce(rc, op=MPI.MAX))
