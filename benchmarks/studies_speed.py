"""Speed of the station studies, each against a baseline measured in the same run.

    python benchmarks/studies_speed.py

- shadow boundary for 1000 source heights (direct peak search) against
  bisecting the reach with the ray solver on a distance bracket (what one
  would do without the peak search), on 50 heights;
- a 1000 x 1000 D/R delay grid (distance x source height) on all cores;
- lookup-table interpolation (bilinear, numba) against
  scipy.interpolate.RegularGridInterpolator on the same table, with the
  interpolation error measured against the exact solver between the nodes.
"""

import tempfile
import time

import numpy as np
from scipy.interpolate import RegularGridInterpolator

import firnray

ANTENNA = -100.0


def bisected_boundary(prof, z, hi=20000.0):
    """Largest reach by bisection on 'has a ray' (the baseline)."""
    lo = 0.0
    for _ in range(50):
        mid = 0.5 * (lo + hi)
        if firnray.find_rays(prof, (0.0, z), (mid, ANTENNA)):
            lo = mid
        else:
            hi = mid
    return lo


def main():
    prof = firnray.load_profile("demo-dry-firn")
    z = np.linspace(-2000.0, -1.0, 1000)
    firnray.shadow_boundary(prof, ANTENNA, z[:5])
    t0 = time.perf_counter()
    boundary = firnray.shadow_boundary(prof, ANTENNA, z)
    t_shadow = time.perf_counter() - t0
    sub = z[::20]
    t0 = time.perf_counter()
    base = np.array([bisected_boundary(prof, zi, 2.0 * b + 10.0) for zi, b in zip(sub, boundary[::20])])
    t_base = (time.perf_counter() - t0) / len(sub) * len(z)
    worst = float(np.max(np.abs(base - boundary[::20])))
    print(f"shadow boundary, 1000 source heights: {t_shadow * 1e3:.2f} ms; bisection baseline "
          f"(extrapolated from {len(sub)} heights): {t_base:.1f} s; ratio {t_base / t_shadow:,.0f}x; "
          f"largest difference {worst:.2e} m")

    x = np.linspace(0.0, 3000.0, 1000)
    firnray.dr_delays(prof, ANTENNA, x[:10], z[:10])
    t0 = time.perf_counter()
    grid = firnray.dr_delays(prof, ANTENNA, x, z)
    t_grid = time.perf_counter() - t0
    print(f"D/R delay grid 1000 x 1000: {t_grid:.2f} s "
          f"({np.isfinite(grid.delay).mean() * 100:.0f} % of the points have two rays)")

    with tempfile.TemporaryDirectory() as folder:
        table = firnray.build_table(prof, ANTENNA, np.linspace(0.0, 3000.0, 601),
                                    np.linspace(-2000.0, 0.0, 401), folder,
                                    chunk_shape=(128, 128))
        err = table.interpolation_error(n_points=20000, seed=1)[("travel_time", 0)]
        rng = np.random.default_rng(0)
        n = 10_000_000
        qx, qz = rng.uniform(0.0, 3000.0, n), rng.uniform(-2000.0, 0.0, n)
        table.interpolate(qx[:10], qz[:10])
        t0 = time.perf_counter()
        table.interpolate(qx, qz)
        t_interp = time.perf_counter() - t0
        scipy_interp = RegularGridInterpolator((table.source_z, table.distance),
                                               table.data["travel_time"][:, :, 0],
                                               bounds_error=False)
        m = 1_000_000
        t0 = time.perf_counter()
        scipy_interp(np.column_stack([qz[:m], qx[:m]]))
        t_scipy = (time.perf_counter() - t0) * n / m
    print(f"table interpolation: {n / t_interp:,.0f} queries/s; scipy RegularGridInterpolator "
          f"{n / t_scipy:,.0f} queries/s; ratio {t_scipy / t_interp:.1f}x")
    print(f"  interpolation error of the first travel time on a 5 m x 5 m grid, measured "
          f"between the nodes: median {err['median'] * 1e3:.2f} ps, 99th percentile "
          f"{err['p99'] * 1e3:.1f} ps, max {err['max']:.3f} ns")


if __name__ == "__main__":
    main()
