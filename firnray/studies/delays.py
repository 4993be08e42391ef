"""D/R delays: the time between the first and the second pulse, and its inverse.

A source seen by one antenna along two rays (direct then refracted or
surface-reflected, or two up-going rays beyond the direct horizon) gives a
pulse pair whose delay grows with the source's distance below the firn; the
inverse lookup turns a measured delay into a horizontal distance.
"""

import numpy as np

from firnray.checks import finite_float
from firnray.rays.results import KIND_NAMES
from firnray.studies.grid import rays_to_antenna
from firnray.studies.shadow import shadow_boundary


class DelayGrid:
    """D/R delays on a grid of horizontal distances and source heights.

    Attributes
    ----------
    distance : ndarray, shape (nx,)
        Horizontal distances from the antenna [m].
    source_z : ndarray, shape (nz,)
        Source heights [m].
    antenna_z : float
        Antenna height [m].
    delay : ndarray, shape (nz, nx)
        Second minus first arrival time [ns]; NaN where fewer than two rays.
    first_time, second_time : ndarray, shape (nz, nx)
        Arrival times [ns] of the two pulses (NaN where absent).
    first_kind, second_kind : ndarray of int8, shape (nz, nx)
        Kind codes of the two pulses (-1 where absent); ``kind_names`` maps them.
    count : ndarray, shape (nz, nx)
        Number of rays.
    """

    kind_names = KIND_NAMES

    def __init__(self, distance, source_z, antenna_z, rayset):
        nz, nx = len(source_z), len(distance)
        self.distance = distance
        self.source_z = source_z
        self.antenna_z = antenna_z
        t = rayset.travel_time
        k = rayset.kind
        self.first_time = t[:, 0].reshape(nz, nx)
        self.second_time = (t[:, 1] if t.shape[1] > 1 else np.full(t.shape[0], np.nan)).reshape(nz, nx)
        self.first_kind = k[:, 0].reshape(nz, nx)
        self.second_kind = (k[:, 1] if k.shape[1] > 1
                            else np.full(k.shape[0], -1, np.int8)).reshape(nz, nx)
        self.count = rayset.count.reshape(nz, nx)
        self.delay = self.second_time - self.first_time


def _grid_axes(distance, source_z):
    x = np.asarray(distance, dtype=float).reshape(-1)
    z = np.asarray(source_z, dtype=float).reshape(-1)
    if x.size == 0 or np.any(~np.isfinite(x)) or np.any(x < 0):
        raise ValueError(f"distance must hold finite horizontal distances >= 0 m, got {x!r}")
    if z.size == 0 or np.any(~np.isfinite(z)):
        raise ValueError(f"source_z must hold finite heights [m], got {z!r}")
    return x, z


def dr_delays(profile, antenna_z, distance, source_z, workers=None):
    """D/R delay on a (source height x distance) grid for one antenna.

    Parameters
    ----------
    profile : IndexProfile
    antenna_z : float
        Antenna height [m].
    distance : array_like, shape (nx,)
        Horizontal distances from the antenna [m].
    source_z : array_like, shape (nz,)
        Source heights [m].
    workers : int, optional
        Threads for the solver (default: all cores).

    Returns
    -------
    DelayGrid
    """
    antenna_z = finite_float("antenna_z", antenna_z)
    x, z = _grid_axes(distance, source_z)
    return DelayGrid(x, z, antenna_z, rays_to_antenna(profile, antenna_z, x, z, workers))


def _delay_at(profile, antenna_z, source_z, x):
    t = rays_to_antenna(profile, antenna_z, x, [source_z]).travel_time
    return t[:, 1] - t[:, 0] if t.shape[1] > 1 else np.full(len(x), np.nan)


class DelayInversion:
    """Distances reconstructed from measured D/R delays.

    Attributes
    ----------
    distance : ndarray, shape (N,)
        The nearest horizontal distance [m] giving the measured delay at
        that source height; NaN where none does.
    ambiguous : ndarray of bool, shape (N,)
        True where more than one distance gives the same delay.
    solutions : list of ndarray
        Every distance [m] found for each row, sorted.
    """

    def __init__(self, solutions):
        self.solutions = solutions
        self.distance = np.array([s[0] if len(s) else np.nan for s in solutions])
        self.ambiguous = np.array([len(s) > 1 for s in solutions])


def distance_from_delay(profile, antenna_z, source_z, delay, scan_points=2000,
                        max_distance=None):
    """Horizontal distance(s) at which a source at height ``source_z`` gives ``delay``.

    The delay is evaluated on ``scan_points`` distances from 0 to the shadow
    boundary (or ``max_distance``); each sign change of delay - measured is
    refined by bisection on the exact solver to 1e-9 m.

    Parameters
    ----------
    profile : IndexProfile
    antenna_z : float
        Antenna height [m].
    source_z : float or array_like, shape (N,)
        Source heights [m] (broadcast against ``delay``).
    delay : float or array_like, shape (N,)
        Measured second-minus-first delays [ns].
    scan_points : int, optional
        Distances in the scan that brackets the solutions.
    max_distance : float, optional
        Upper end of the scan [m] (default: the shadow boundary, at most 10 km).

    Returns
    -------
    DelayInversion
    """
    antenna_z = finite_float("antenna_z", antenna_z)
    z, d = np.broadcast_arrays(np.asarray(source_z, float).reshape(-1),
                               np.asarray(delay, float).reshape(-1))
    if not isinstance(scan_points, (int, np.integer)) or scan_points < 10:
        raise ValueError(f"scan_points must be an integer >= 10, got {scan_points!r}")
    solutions = []
    for zi, di in zip(z, d):
        if not (np.isfinite(zi) and np.isfinite(di)):
            solutions.append(np.array([]))
            continue
        top = max_distance
        if top is None:
            top = min(float(shadow_boundary(profile, antenna_z, zi)), 10_000.0)
        x = np.linspace(0.0, top, scan_points)
        x[0] = min(1e-3, top * 1e-6)
        f = _delay_at(profile, antenna_z, zi, x) - di
        ok = np.isfinite(f[:-1]) & np.isfinite(f[1:])
        idx = np.nonzero(ok & (np.sign(f[:-1]) != np.sign(f[1:])))[0]
        lo, hi = x[idx].copy(), x[idx + 1].copy()
        f_lo = f[idx].copy()
        for _ in range(60):
            mid = 0.5 * (lo + hi)
            fm = _delay_at(profile, antenna_z, zi, mid) - di
            left = np.sign(fm) == np.sign(f_lo)
            lo = np.where(left, mid, lo)
            f_lo = np.where(left, fm, f_lo)
            hi = np.where(left, hi, mid)
            if lo.size == 0 or np.max(hi - lo) < 1e-9:
                break
        solutions.append(np.sort(0.5 * (lo + hi)))
    return DelayInversion(solutions)
