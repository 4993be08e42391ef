"""Throughput of find_rays_many against a solve_ivp shooting baseline, in one run.

    python benchmarks/batch_speed.py [--pairs 1000000] [--baseline-pairs 8] [--workers N]

Prints pairs per second of firnray on random in-ice pairs (after a warm-up),
the peak memory of the batch, the time per pair of the baseline that a
practitioner would write (scipy solve_ivp ray shooting with a bracketing root
finder on the launch angle) on a small subset, the speed-up ratio, and the
largest travel-time difference between the two on that subset.
"""

import argparse
import math
import resource
import time
import tracemalloc

import numpy as np
from scipy.optimize import brentq

import firnray
from common import random_in_ice_pairs
from raytrace_ode import make_index, shoot


def baseline_rays(index, source_z, x_end, receiver_z, n_scan=60):
    """Every ray by shooting: scan the launch angle, bracket the miss, brentq.

    Returns the sorted travel times [ns] of the rays found.
    """
    n_src = index[0](source_z)

    def miss(zenith_deg):
        theta = math.radians(zenith_deg)
        hit = shoot(index, source_z, n_src * math.sin(theta), theta < math.pi / 2, x_end,
                    rtol=1e-10, atol=1e-10, max_step=20.0)
        return (math.nan, math.nan) if hit is None else (hit[0] - receiver_z, hit[1])

    angles = np.linspace(0.5, 179.5, n_scan)
    values = [miss(a)[0] for a in angles]
    times = []
    for a0, a1, m0, m1 in zip(angles[:-1], angles[1:], values[:-1], values[1:]):
        if np.isfinite(m0) and np.isfinite(m1) and m0 * m1 < 0:
            root = brentq(lambda a: miss(a)[0], a0, a1, xtol=1e-11)
            times.append(miss(root)[1])
    return sorted(times)


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--pairs", type=int, default=1_000_000)
    parser.add_argument("--baseline-pairs", type=int, default=8)
    parser.add_argument("--workers", type=int, default=None)
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()

    prof = firnray.load_profile("demo-dry-firn")
    src, rcv = random_in_ice_pairs(args.pairs)
    firnray.find_rays_many(prof, src[:1000], rcv[:1000], workers=args.workers)  # warm-up
    best = math.inf
    for _ in range(args.repeat):
        t0 = time.perf_counter()
        batch = firnray.find_rays_many(prof, src, rcv, workers=args.workers)
        best = min(best, time.perf_counter() - t0)
    rate = args.pairs / best
    peak_mib = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    tracemalloc.start()
    batch = firnray.find_rays_many(prof, src, rcv, workers=args.workers)
    call_mib = tracemalloc.get_traced_memory()[1] / 2**20
    tracemalloc.stop()
    counts = np.bincount(batch.count, minlength=3)
    ok = batch.converged[batch.kind >= 0].all()
    print(f"firnray find_rays_many: {args.pairs} pairs in {best:.3f} s = {rate:,.0f} pairs/s "
          f"(workers={args.workers or 'all'}); rays per pair 0/1/2: {counts.tolist()}; "
          f"all converged: {bool(ok)}")
    print(f"memory: {call_mib:.0f} MiB allocated at peak by one call (tracemalloc); "
          f"peak resident memory of this process {peak_mib:.0f} MiB")

    index = make_index(prof.n_deep, prof.n_surface, prof.scale_depth, prof.n_air)
    sub = slice(0, args.baseline_pairs)
    t0 = time.perf_counter()
    base = [baseline_rays(index, s[1], r[0], r[1]) for s, r in zip(src[sub], rcv[sub])]
    base_per_pair = (time.perf_counter() - t0) / args.baseline_pairs
    t0 = time.perf_counter()
    mine = firnray.find_rays_many(prof, src[sub], rcv[sub])
    subset_per_pair = (time.perf_counter() - t0) / args.baseline_pairs
    worst = 0.0
    missing = 0
    for i, times in enumerate(base):
        got = mine.travel_time[i, :mine.count[i]]
        if len(times) != len(got):
            missing += 1
            continue
        if times:
            worst = max(worst, float(np.max(np.abs(np.array(times) - got))))
    print(f"baseline (solve_ivp shooting + brentq): {base_per_pair * 1e3:.1f} ms per pair "
          f"on {args.baseline_pairs} pairs; ray counts differ on {missing}; "
          f"largest time difference {worst * 1e3:.3f} ps")
    print(f"speed-up over the baseline: {base_per_pair * rate:,.0f}x (batch rate); "
          f"{base_per_pair / subset_per_pair:,.0f}x on the same {args.baseline_pairs} pairs alone")


if __name__ == "__main__":
    main()
