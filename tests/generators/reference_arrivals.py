"""Independent high-precision arrival times at the demo station.

What it computes
----------------
For the demo station ``firnray/data/stations/tallow-dome-demo.yaml`` in the
demo profile (n_deep 1.78, n_surface 1.35, scale_depth 40 m, n_air 1) and six
invented source vertices in the ice around it, this script finds, for every
(vertex, antenna) pair, every ray that joins the vertex to the antenna
(kinds direct / refracted / reflected) with its travel time [ns], and the
arrival time emission_time + delay_ns + travel_time of a pulse emitted at
``EMISSION_TIME_NS`` = 1000 ns, where delay_ns is the cable and electronics
delay of the antenna.  Rays between two 3-D points depend only on their
horizontal distance sqrt(dx^2 + dy^2) and their two heights, so each pair is
reduced to that 2-D problem.

The vertices are chosen so that the data cover: all antennas lit (near and
far), the shallow antennas (z = -0.5 m) all in the shadow zone, the shallow
antennas split between lit and shadowed, and the upper deep antennas beyond
their direct horizon (no direct ray, only rays that rise above the antenna
and come back down to it).

How
---
Each pair is solved by ``ice_to_ice`` of ``reference_rays.py`` (next to this
file; test-side code, itself independent of firnray): tanh-sinh quadrature
of the ray integrals at ``mp.dps`` = 32 digits, a dense double-precision
scan of every ray family to place brackets, and safeguarded root refinement
in mpmath; every ray found is checked to hit the antenna.  Heights,
positions and delays are taken at their decimal values (1.78 means 1.78
exactly), the horizontal distance is formed in mpmath.

To save time, the interior extrema of the ray families (needed here only to
split the families into monotone pieces, not as results) are taken at the
location found by the double-precision scan instead of being refined to full
precision; X is still evaluated there at full precision.  This is exact for
the purpose as long as the target distance is not within a hair of an
extremum value, so every pair is checked afterwards: if its distance lies
within 1e-6 (relative) of any extremum value, the pair is solved again with
the full refinement.  In addition, a few pairs (``VERIFY_PAIRS``, or all of
them with ``--verify-all``) are solved again with the unmodified routine at
four times the scan density; the ray kinds must agree and the travel times
to 1e-(dps-8) relative, else the script stops.  The pairs are distributed
over worker processes; the result does not depend on their number.

This script shares no code with the firnray package: it imports nothing from
it (only the independent ``reference_rays.py``), and reads from the package
only the station and profile data files (YAML), the latter merely to check
that the profile parameters here are those of the demo profile.  It needs
only mpmath, numpy and pyyaml.

Output
------
``tests/data/reference_arrivals.json``: ``{"generator", "mp_dps",
"profile", "station_file", "emission_time_ns", "vertices"}`` where
``vertices`` is a list of ``{"vertex": [x, y, z], "arrivals": [...]}``, one
arrival record per antenna in station order: ``{"antenna": id,
"horizontal_distance": m, "rays": [{"kind", "travel_time",
"arrival_time"}, ...]}`` with the rays sorted by travel time (an empty list
in the shadow zone).  Lengths in m, times in ns, z is height (negative in
the ice).  Floats are the doubles nearest to the mpmath values.

Usage: python tests/generators/reference_arrivals.py [--output PATH]
       [--dps N] [--scan N] [--jobs N] [--verify-all]
"""

import argparse
import contextlib
import json
import multiprocessing
import os
import sys
import time

import mpmath
import yaml
from mpmath import mp, mpf

HERE = os.path.dirname(os.path.abspath(__file__))
REPO = os.path.dirname(os.path.dirname(HERE))
sys.path.insert(0, HERE)

import reference_rays as rays_ref  # noqa: E402  (independent test-side code)

STATION_FILE = "firnray/data/stations/tallow-dome-demo.yaml"
PROFILE_FILE = "firnray/data/profiles/demo-dry-firn.yaml"
DEFAULT_OUTPUT = os.path.join(REPO, "tests", "data", "reference_arrivals.json")

PROFILE = {"n_deep": 1.78, "n_surface": 1.35, "scale_depth": 40.0, "n_air": 1.0}
EMISSION_TIME_NS = 1000.0
DEFAULT_DPS = 32
DEFAULT_SCAN = 2000
EXTREMUM_MARGIN = mpf("1e-6")

# Invented source vertices [x, y, z] in m; horizontal distance from the
# station centre (20, 20) and what they are meant to show.
VERTICES = [
    [140.0, -60.0, -400.0],     # 144 m: close and steep, everything lit
    [-380.0, -420.0, -900.0],   # 595 m: mid range, everything lit
    [-1100.0, -900.0, -1000.0],  # 1449 m: shallow antennas in shadow
    [1415.0, 565.0, -250.0],    # 1498 m: upper deep antennas beyond the
                                #   direct horizon, shallow ones in shadow
    [700.0, 1150.0, -1500.0],   # 1319 m: deep and far, everything lit
    [-780.0, 20.0, -600.0],     # 800 m: one shallow antenna lit, two in shadow
]

# pairs (vertex index, antenna id) solved again with the unmodified routine
# at a denser scan: one of each situation
VERIFY_PAIRS = [
    (0, "S1"),        # lit, steep
    (2, "S3"),        # shadow zone
    (3, "A1-top"),    # beyond the direct horizon
    (3, "A1-mid"),    # direct ray again, below it
    (5, "S2"),        # lit shallow antenna next to the shadow
    (5, "S1"),        # shadowed one
]


def to_mp(value):
    """Decimal value of a YAML / Python number as an mpf."""
    return mpf(repr(float(value)))


@contextlib.contextmanager
def scan_located_extrema():
    """Let the family analysis keep the scan's extremum location.

    Inside the block, ``reference_rays.refine_extremum`` returns the
    double-precision location it is given, with X evaluated there at full
    precision, instead of iterating it to full precision.
    """
    full = rays_ref.refine_extremum

    def at_scan_location(func, p0, lo, hi, maximise):
        return p0, func(p0)

    rays_ref.refine_extremum = at_scan_location
    try:
        yield
    finally:
        rays_ref.refine_extremum = full


def horizontal_distance(vertex, antenna):
    dx = to_mp(antenna["position_m"][0]) - to_mp(vertex[0])
    dy = to_mp(antenna["position_m"][1]) - to_mp(vertex[1])
    return mp.sqrt(dx * dx + dy * dy)


def solve(medium, dist, z_src, z_ant, scan, fast):
    """All rays (kind, travel time as mpf) and the extremum values."""
    src = [mpf(0), z_src]
    rcv = [dist, z_ant]
    if fast:
        with scan_located_extrema():
            rays, info, _ = rays_ref.ice_to_ice(medium, src, rcv, scan)
    else:
        rays, info, _ = rays_ref.ice_to_ice(medium, src, rcv, scan)
    found = sorted(((r["kind"], r["travel_time"]) for r in rays),
                   key=lambda item: item[1])
    return found, info


def solve_pair(task):
    """Worker: rays of one (vertex, antenna) pair."""
    vi, antenna, vertex, scan, dps, verify = task
    mp.dps = dps
    medium = rays_ref.Medium(PROFILE)
    dist = horizontal_distance(vertex, antenna)
    z_src = to_mp(vertex[2])
    z_ant = to_mp(antenna["position_m"][2])
    t0 = time.time()
    found, info = solve(medium, dist, z_src, z_ant, scan, fast=True)
    near = [e for e in info["extrema"]
            if abs(dist - e["x"]) <= EXTREMUM_MARGIN * (1 + dist)]
    redone = bool(near)
    if redone:
        found, info = solve(medium, dist, z_src, z_ant, scan, fast=False)
    checked = None
    if verify:
        dense, _ = solve(medium, dist, z_src, z_ant, 4 * scan, fast=False)
        if [k for k, _ in dense] != [k for k, _ in found]:
            raise RuntimeError("vertex %d, antenna %s: rays %s with the dense scan, "
                               "%s otherwise" % (vi, antenna["id"],
                                                 [k for k, _ in dense],
                                                 [k for k, _ in found]))
        worst = mpf(0)
        for (_, t_a), (_, t_b) in zip(dense, found):
            worst = max(worst, abs(t_a - t_b) / t_a)
        if worst > mpf(10) ** (-(dps - 8)):
            raise RuntimeError("vertex %d, antenna %s: travel times differ by %s "
                               "(relative) from the dense scan"
                               % (vi, antenna["id"], mp.nstr(worst, 5)))
        checked = float(worst)
    delay = to_mp(antenna["delay_ns"])
    emission = to_mp(EMISSION_TIME_NS)
    record = {
        "antenna": antenna["id"],
        "horizontal_distance": float(dist),
        "rays": [{"kind": kind, "travel_time": float(t),
                  "arrival_time": float(emission + delay + t)}
                 for kind, t in found],
    }
    xh, xm = info["direct_horizon_x"], info["max_reach_x"]
    diag = {
        "seconds": time.time() - t0,
        "redone": redone,
        "verified": checked,
        "x_h": None if xh is None else float(xh),
        "x_max": None if xm is None else float(xm),
    }
    return vi, record, diag


def load_station():
    with open(os.path.join(REPO, STATION_FILE)) as fh:
        station = yaml.safe_load(fh)
    antennas = station["antennas"]
    ids = [a["id"] for a in antennas]
    if len(set(ids)) != len(ids):
        raise ValueError("duplicate antenna ids in %s" % STATION_FILE)
    for a in antennas:
        if not float(a["position_m"][2]) < 0:
            raise ValueError("antenna %s is not in the ice" % a["id"])
    return station, antennas


def check_profile_file():
    """The demo profile file must hold the parameters used here."""
    path = os.path.join(REPO, PROFILE_FILE)
    if not os.path.exists(path):
        return
    with open(path) as fh:
        params = yaml.safe_load(fh)["parameters"]
    there = {"n_deep": params["n_deep"], "n_surface": params["n_surface"],
             "scale_depth": params["scale_depth_m"], "n_air": params["n_air"]}
    if {k: float(v) for k, v in there.items()} != PROFILE:
        raise ValueError("%s no longer holds %s" % (PROFILE_FILE, PROFILE))


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--output", default=DEFAULT_OUTPUT)
    ap.add_argument("--dps", type=int, default=DEFAULT_DPS)
    ap.add_argument("--scan", type=int, default=DEFAULT_SCAN,
                    help="samples per ray family for the bracketing scan")
    ap.add_argument("--jobs", type=int, default=min(8, os.cpu_count() or 1),
                    help="worker processes")
    ap.add_argument("--verify-all", action="store_true",
                    help="check every pair against the dense scan, not a few")
    args = ap.parse_args(argv)
    if args.dps < 30:
        ap.error("--dps must be at least 30")
    mp.dps = args.dps
    station, antennas = load_station()
    if station.get("profile") != "demo-dry-firn":
        raise ValueError("station profile is %r, expected demo-dry-firn"
                         % station.get("profile"))
    check_profile_file()
    for v in VERTICES:
        if not v[2] < 0:
            raise ValueError("vertex %s is not in the ice" % v)
    tasks = []
    for vi, vertex in enumerate(VERTICES):
        for antenna in antennas:
            verify = args.verify_all or (vi, antenna["id"]) in VERIFY_PAIRS
            tasks.append((vi, antenna, vertex, args.scan, args.dps, verify))
    start = time.time()
    if args.jobs > 1:
        with multiprocessing.Pool(args.jobs) as pool:
            results = pool.map(solve_pair, tasks, chunksize=1)
    else:
        results = [solve_pair(t) for t in tasks]
    vertices = [{"vertex": [float(c) for c in v], "arrivals": []} for v in VERTICES]
    for (vi, record, diag), task in zip(results, tasks):
        vertices[vi]["arrivals"].append(record)
        d = record["horizontal_distance"]
        notes = []
        if diag["x_h"] is not None:
            notes.append("X_h %+.1f" % (d - diag["x_h"]))
        if diag["x_max"] is not None:
            notes.append("X_max %+.1f" % (d - diag["x_max"]))
        if diag["redone"]:
            notes.append("redone with refined extrema")
        if diag["verified"] is not None:
            notes.append("dense scan agrees (%.1e)" % diag["verified"])
        print("vertex %d %-7s X %8.2f m %5.1fs  %-40s %s"
              % (vi, record["antenna"], d, diag["seconds"],
                 ", ".join(r["kind"] for r in record["rays"]) or "shadow",
                 "; ".join(notes)), file=sys.stderr)
    print("total %.1fs with %d worker(s)" % (time.time() - start, args.jobs),
          file=sys.stderr)
    doc = {
        "generator": "tests/generators/reference_arrivals.py (mpmath %s; rays by "
                     "ice_to_ice of tests/generators/reference_rays.py: tanh-sinh "
                     "quadrature of the ray integrals, bracketed roots, %d scan "
                     "samples per family)" % (mpmath.__version__, args.scan),
        "mp_dps": args.dps,
        "profile": dict(PROFILE),
        "station_file": STATION_FILE,
        "emission_time_ns": EMISSION_TIME_NS,
        "vertices": vertices,
    }
    with open(args.output, "w") as fh:
        json.dump(doc, fh, indent=1)
        fh.write("\n")


if __name__ == "__main__":
    main()
