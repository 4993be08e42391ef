"""Time of one vertex fit for an 8-antenna station with both pulses at every antenna.

    python benchmarks/vertex_fit_speed.py [--events 20]

Uses the eight deep antennas of the bundled demo station, simulated arrival
times (1 ns Gaussian noise, seeded) for vertices 300-1200 m away, and prints
the mean and worst wall time per fit, against a baseline in the same run:
the same fit with scipy's finite-difference Jacobian instead of the
closed-form eikonal gradient (``fit_vertex(..., numeric_jacobian=True)``).
"""

import argparse
import time

import numpy as np

import firnray
from firnray.studies.station import Station, load_station
from firnray.studies.vertex import fit_vertex, simulate_arrivals


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--events", type=int, default=20)
    args = parser.parse_args()
    prof = firnray.load_profile("demo-dry-firn")
    full = load_station("tallow-dome-demo")
    keep = [i for i, g in enumerate(full.groups) if g != "surface"
            and not full.ids[i].endswith("-mid")]
    station = Station({full.ids[i]: full.positions[i] for i in keep},
                      delays={full.ids[i]: full.delays[i] for i in keep}, name="eight-deep")
    rng = np.random.default_rng(42)
    events = []
    while len(events) < args.events:
        r, phi = rng.uniform(300.0, 1200.0), rng.uniform(0.0, 2 * np.pi)
        v = (20.0 + r * np.cos(phi), 20.0 + r * np.sin(phi), rng.uniform(-1500.0, -400.0))
        rows = simulate_arrivals(prof, station, v, 1000.0, sigma=1.0, rng=rng)
        if len(rows) == 16:
            events.append((v, rows))
    fit_vertex(prof, station, events[0][1])  # warm-up (compilation, caches)
    for numeric in (False, True):
        times, errs = [], []
        for v, rows in events:
            t0 = time.perf_counter()
            fit = fit_vertex(prof, station, rows, numeric_jacobian=numeric)
            times.append(time.perf_counter() - t0)
            errs.append(np.linalg.norm(fit.vertex - np.array(v)))
        label = "finite-difference Jacobian (baseline)" if numeric else "eikonal Jacobian"
        print(f"{label}: {np.mean(times) * 1e3:.1f} ms per fit (worst {np.max(times) * 1e3:.1f} ms) "
              f"over {len(events)} fits; median vertex error {np.median(errs):.2f} m")
        if not numeric:
            mine = np.mean(times)
        else:
            print(f"speed-up of the closed-form Jacobian: {np.mean(times) / mine:.1f}x")


if __name__ == "__main__":
    main()
