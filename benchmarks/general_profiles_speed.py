"""Throughput of find_rays_many for every profile kind, against the exponential closed form.

    python benchmarks/general_profiles_speed.py [--pairs 200000] [--workers 2]

On the random in-ice geometry of ``batch_speed.py`` (sources 0-2000 m deep,
antennas 0-200 m deep, 0-3 km apart) it times, after a warm-up run that
compiles the kernels, the closed-form ``ExponentialProfile`` (the baseline,
measured in the same run) and then

* a two-piece ``PiecewiseExponentialProfile`` (closed form panel by panel);
* a ``TabulatedProfile`` of that profile sampled every 0.5 m down to 200 m
  (400 cubic panels, quadrature and block moment series);
* the bundled invented Tallow Dome density core (91 samples to 120 m);
* a ``FunctionProfile`` of a two-term exponential;

and prints pairs per second and the ratio to the closed form.  The issue's
target is >= 50,000 pairs/s for a tabulated profile on 2 cores.
"""

import argparse
import time

import numba
import numpy as np

import firnray
from common import random_in_ice_pairs


def rate(profile, src, rcv, workers):
    firnray.find_rays_many(profile, src[:2000], rcv[:2000], workers=workers)   # compile, warm
    best = np.inf
    for _ in range(2):
        t0 = time.perf_counter()
        firnray.find_rays_many(profile, src, rcv, workers=workers)
        best = min(best, time.perf_counter() - t0)
    return src.shape[0] / best


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--pairs", type=int, default=200_000)
    parser.add_argument("--workers", type=int, default=min(2, numba.config.NUMBA_NUM_THREADS))
    args = parser.parse_args()
    src, rcv = random_in_ice_pairs(args.pairs)
    two_piece = firnray.PiecewiseExponentialProfile(1.35, [-15.0], [1.78, 1.78], [9.0, 40.0])
    z = -np.arange(0.0, 200.25, 0.5)
    profiles = [
        ("exponential (closed form, baseline)", firnray.ExponentialProfile(1.78, 1.35, 40.0)),
        ("piecewise exponential, 2 pieces", two_piece),
        ("tabulated, 0.5 m samples to 200 m", firnray.TabulatedProfile(z, two_piece.index(z))),
        ("tabulated, Tallow Dome density core", firnray.load_profile("tallow-dome-core")),
        ("function, two exponentials",
         firnray.FunctionProfile(lambda z: 1.78 - 0.38 * np.exp(z / 30.0) - 0.07 * np.exp(z / 4.0))),
    ]
    print(f"{args.pairs} random in-ice pairs, {args.workers} worker thread(s)")
    base = None
    for name, prof in profiles:
        r = rate(prof, src, rcv, args.workers)
        base = r if base is None else base
        print(f"{name:<40} {r:>12,.0f} pairs/s   ratio to closed form {r / base:6.3f}")


if __name__ == "__main__":
    main()
