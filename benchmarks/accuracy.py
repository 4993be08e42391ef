"""Worst errors of find_rays and find_rays_many against the mpmath reference.

    python benchmarks/accuracy.py

Reads tests/data/reference_rays.json (independent mpmath quadrature, see
tests/generators/reference_rays.py) and prints, per quantity, the largest
absolute difference over every ray of every catalogue case.
"""

import json
import os

import numpy as np

import firnray
from common import ROOT

QUANTITIES = [("travel_time", "ps", 1e3), ("launch_zenith", "deg", 1.0),
              ("arrival_zenith", "deg", 1.0), ("path_length", "mm", 1e3),
              ("invariant", "", 1.0)]


def main():
    with open(os.path.join(ROOT, "tests", "data", "reference_rays.json")) as fh:
        ref = json.load(fh)
    worst = {q: (0.0, "") for q, _, _ in QUANTITIES}
    n_rays = 0
    mismatched = []
    for name, case in ref["cases"].items():
        prof = firnray.ExponentialProfile(**case["profile"])
        single = firnray.find_rays(prof, case["source"], case["receiver"])
        batch = firnray.find_rays_many(prof, np.array([case["source"]]),
                                       np.array([case["receiver"]]))[0]
        for rays in (single, batch):
            if [r.kind for r in rays] != [r["kind"] for r in case["rays"]]:
                mismatched.append(name)
                continue
            for got, want in zip(rays, case["rays"]):
                n_rays += 1
                for q, _, _ in QUANTITIES:
                    err = abs(getattr(got, q) - want[q])
                    if err > worst[q][0]:
                        worst[q] = (err, name)
    print(f"{len(ref['cases'])} cases, {n_rays // 2} rays (each via find_rays and "
          f"find_rays_many); kind/count mismatches: {mismatched or 'none'}")
    for q, unit, scale in QUANTITIES:
        err, name = worst[q]
        print(f"  worst {q:<15} {err * scale:.3e} {unit:<4} ({name})")


if __name__ == "__main__":
    main()
