"""Non-monotone profiles: throughput, rays missed against a dense scan, where the time goes.

    python benchmarks/nonmonotone.py [--pairs 20000] [--workers 2]

Profiles (invented, the ones of ``tests/test_ducts.py`` and
``tests/generators/reference_ducts.py``):

* "gaussian dip": n = 1.78 - 0.43 exp(z/40) - 0.04 exp(-((z+30)/3)^2), a
  ``FunctionProfile`` with a duct above a dip at 30 m depth;
* "lens table" (on ``--table-pairs`` pairs): samples every 0.25 m to 150 m of the same exponential with an
  ice lens (+0.025 at 12 m, 0.6 m wide), a density inversion (-0.02 at 45 m,
  2 m wide) and scatter of 4e-4 (seed 20261203), a ``TabulatedProfile``.

On the random in-ice geometry of ``batch_speed.py`` it prints pairs per second
with the closed-form exponential timed in the same run (the ratio), then the
rays found at the default scan against a scan of 64 intervals ("missed"),
and, on a few hundred pairs run uncompiled with counters, the leg
evaluations per pair by stage (scan samples, extremum searches, root
polishing, spreading).
"""

import argparse
import collections
import sys
import time
import warnings

import numba
import numpy as np

import firnray
from common import random_in_ice_pairs
from firnray.errors import FirnrayWarning
from firnray.rays import duct_solver as ds
from firnray.rays import exponential_solver as es
from firnray.rays.panel_blocks import solver_arrays
from firnray.rays.solve import duct_setup


def dip_profile():
    return firnray.FunctionProfile(
        lambda z: 1.78 - 0.43 * np.exp(z / 40.0) - 0.04 * np.exp(-((z + 30.0) / 3.0) ** 2))


def lens_table_profile():
    z = -np.arange(0.0, 150.0 + 1e-9, 0.25)
    r = np.random.default_rng(20261203).standard_normal(z.size)
    n = (1.78 - 0.43 * np.exp(z / 40.0) + 0.025 * np.exp(-((z + 12.0) / 0.6) ** 2)
         - 0.02 * np.exp(-((z + 45.0) / 2.0) ** 2) + 0.0004 * r)
    return firnray.TabulatedProfile(z, np.round(n, 6))


def rate(profile, src, rcv, workers):
    firnray.find_rays_many(profile, src[:500], rcv[:500], workers=workers)   # compile, warm
    t0 = time.perf_counter()
    rays = firnray.find_rays_many(profile, src, rcv, workers=workers)
    return src.shape[0] / (time.perf_counter() - t0), rays


def stage_counts(profile, src, rcv, n_pairs):
    """Leg evaluations per pair by the calling stage (kernels run uncompiled)."""
    counts = collections.Counter()
    compiled_legs = ds.legs
    saved = {}

    def counted(*args):
        counts[sys._getframe(1).f_code.co_name] += 1
        return compiled_legs(*args)

    names = ["family_f", "brent_root", "extremum", "solve_family", "solve_ice_duct", "add_ray",
             "spreading", "store_duct_ray", "combine", "breakpoints", "sample_piece"]
    try:
        for name in names:
            saved[name] = getattr(ds, name)
            setattr(ds, name, saved[name].py_func)
        saved["legs"] = ds.legs
        ds.legs = counted
        stage = {}

        def family_counted(*args):
            stage_name = sys._getframe(1).f_code.co_name
            before = counts["family_f"]
            out = saved["family_f"].py_func(*args)
            stage[stage_name] = stage.get(stage_name, 0) + counts["family_f"] - before
            return out

        ds.family_f = family_counted
        prof, aux = solver_arrays(profile.panels), duct_setup(profile.panels)
        scratch = np.zeros((6 + ds.scratch_rows(ds.SCAN), 200))
        for i in range(n_pairs):
            out = np.full((1, ds.MAX_SLOTS, es.N_COLS), np.nan)
            kinds = np.zeros((1, ds.MAX_SLOTS), np.int8)
            conv = np.zeros((1, ds.MAX_SLOTS), bool)
            ds.solve_ice_duct(out, kinds, conv, 0, prof, aux, abs(rcv[i][0] - src[i][0]),
                              src[i][1], rcv[i][1], ds.SCAN, scratch)
    finally:
        for name, fn in saved.items():
            setattr(ds, name, fn)
    scan = counts["solve_ice_duct"]
    rows = {"scan samples and topology": scan}
    for name in ("extremum", "brent_root", "spreading", "solve_ice_duct"):
        rows[{"extremum": "extremum searches", "brent_root": "root polishing",
              "spreading": "spreading (central difference)",
              "solve_ice_duct": "monotone families (ends)"}[name]] = stage.get(name, 0)
    rows["storing rays (full L, T)"] = counts["add_ray"]
    return {k: v / n_pairs for k, v in rows.items()}


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--pairs", type=int, default=20_000)
    parser.add_argument("--workers", type=int, default=min(2, numba.config.NUMBA_NUM_THREADS))
    parser.add_argument("--count-pairs", type=int, default=200)
    parser.add_argument("--table-pairs", type=int, default=1000,
                        help="pairs for the lens table (its scatter makes it slow)")
    args = parser.parse_args()
    warnings.simplefilter("ignore", FirnrayWarning)
    src, rcv = random_in_ice_pairs(args.pairs)
    print(f"{args.pairs} random in-ice pairs, {args.workers} worker thread(s)")
    base, _ = rate(firnray.ExponentialProfile(1.78, 1.35, 40.0), src, rcv, args.workers)
    print(f"{'exponential (closed form, baseline)':<36} {base:>10,.0f} pairs/s")
    for name, prof, n in (("gaussian dip (function)", dip_profile(), args.pairs),
                          ("lens table (0.25 m, scatter)", lens_table_profile(),
                           min(args.table_pairs, args.pairs))):
        src, rcv = random_in_ice_pairs(n)
        r, rays = rate(prof, src, rcv, args.workers)
        print(f"{name + f' ({n} pairs)':<36} {r:>10,.0f} pairs/s   ratio {r / base:7.4f}   "
              f"{int(rays.count.sum())} rays, at most {int(rays.count.max())} per pair, "
              f"{int((rays.kind == ds.DUCTED).sum())} ducted")
        dense = firnray.find_rays_many(prof, src, rcv, workers=args.workers, scan_points=64)
        fewer = int((rays.count < dense.count).sum())
        more = int((rays.count > dense.count).sum())
        print(f"{'':<36} default scan vs 64 intervals: {int(rays.count.sum())} vs "
              f"{int(dense.count.sum())} rays; {fewer} pairs with fewer, {more} with more")
        counts = stage_counts(prof, src, rcv, min(args.count_pairs, n))
        total = sum(counts.values())
        print(f"{'':<36} leg evaluations per pair ({min(args.count_pairs, n)} pairs): "
              f"{total:.1f}")
        for k, v in counts.items():
            print(f"{'':<40} {k:<34} {v:6.1f}")


if __name__ == "__main__":
    main()
