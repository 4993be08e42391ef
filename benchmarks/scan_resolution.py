"""How many rays of a measured (scattered) table the refracted-branch scan resolves.

    python benchmarks/scan_resolution.py [--pairs 20000]

The scatter of a measured density core gives the up-going family many narrow
extrema and clusters of rays (``docs/theory.md`` section 11.4).  On the random
in-ice geometry of ``batch_speed.py`` this compares ``find_rays_many`` on the
invented Tallow Dome core with 10 (the default), 16 and 32 scan intervals
against a 200-interval scan, and a smooth 0.5 m table (of the two-piece
exponential) at 10 and 32 intervals, and prints the pairs with fewer rays than
the dense scan and those left unlit.
"""

import argparse

import numpy as np

import firnray
from common import random_in_ice_pairs


def compare(name, profile, src, rcv, settings, dense):
    truth = firnray.find_rays_many(profile, src, rcv, scan_points=dense)
    for n in settings:
        r = firnray.find_rays_many(profile, src, rcv, scan_points=n)
        fewer = int((r.count < truth.count).sum())
        unlit = int(((r.count == 0) & (truth.count > 0)).sum())
        print(f"{name:<28} {n:>4} intervals: {r.count.sum():>7} rays of {truth.count.sum():>7}; "
              f"{fewer:>5} pairs with fewer rays than {dense} intervals, {unlit:>3} left unlit")


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--pairs", type=int, default=20_000)
    args = parser.parse_args()
    src, rcv = random_in_ice_pairs(args.pairs)
    two_piece = firnray.PiecewiseExponentialProfile(1.35, [-15.0], [1.78, 1.78], [9.0, 40.0])
    z = -np.arange(0.0, 200.25, 0.5)
    print(f"{args.pairs} random in-ice pairs")
    compare("0.5 m table (smooth)", firnray.TabulatedProfile(z, two_piece.index(z)), src, rcv,
            (10, 32), 200)
    compare("Tallow Dome core (scatter)", firnray.load_profile("tallow-dome-core"), src, rcv,
            (10, 16, 32), 200)


if __name__ == "__main__":
    main()
