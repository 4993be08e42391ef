"""D/R delays: the time between the first and the second pulse, and its inverse.

A source seen by one antenna along two rays (direct then refracted or
surface-reflected, or two up-going rays beyond the direct horizon) gives a
pulse pair whose delay grows with the source's distance below the firn; the
inverse lookup turns a measured delay into a horizontal distance.

The two pulses are the two earliest rays whose amplitude focusing is at least
``min_focusing`` (default 1e-3, as in the shadow studies: in monotone firn
every ray passes, while in a non-monotone profile rays that run along an
index minimum carry no signal, ``firnray.studies.grid``).  In a non-monotone
profile either pulse may be guided by a duct (``DelayGrid.second_kind`` says
which kind it is), and the delay jumps where the pair of earliest rays
changes; :func:`distance_from_delay` keeps only true solutions, not the
brackets around such a jump.
"""

import numpy as np

from firnray.checks import finite_float
from firnray.rays.results import KIND_NAMES
from firnray.rays.solve import check_profile
from firnray.studies.grid import (MIN_FOCUSING, check_min_focusing, counted_rays,
                                  earliest_counted, guided_rays, rays_to_antenna)
from firnray.studies.shadow import SCAN_DISTANCE, shadow_boundary

#: A bracket of the delay inversion whose ends miss the measured delay by more
#: than this [ns] straddles a jump of the delay (the pulse pair changes), not a root.
JUMP_TOLERANCE = 1e-3


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
    first_guided, second_guided : ndarray of bool, shape (nz, nx)
        Whether the pulse came along a ray guided by a duct (a lower turning
        point; non-monotone profiles only).
    count : ndarray, shape (nz, nx)
        Number of counted rays (focusing >= ``min_focusing``).
    min_focusing : float
        The threshold on the amplitude focusing factor used [1].
    """

    kind_names = KIND_NAMES

    def __init__(self, distance, source_z, antenna_z, rayset, min_focusing=MIN_FOCUSING):
        nz, nx = len(source_z), len(distance)
        self.distance = distance
        self.source_z = source_z
        self.antenna_z = antenna_z
        self.min_focusing = min_focusing
        counted = counted_rays(rayset, min_focusing)
        slots, present = earliest_counted(rayset, counted, 2)
        t = np.take_along_axis(rayset.travel_time, slots, axis=1)
        k = np.take_along_axis(rayset.kind, slots, axis=1)
        g = np.take_along_axis(guided_rays(rayset), slots, axis=1)
        t = np.where(present, t, np.nan)
        k = np.where(present, k, -1).astype(np.int8)
        self.first_time = t[:, 0].reshape(nz, nx)
        self.second_time = t[:, 1].reshape(nz, nx)
        self.first_kind = k[:, 0].reshape(nz, nx)
        self.second_kind = k[:, 1].reshape(nz, nx)
        self.first_guided = (g[:, 0] & present[:, 0]).reshape(nz, nx)
        self.second_guided = (g[:, 1] & present[:, 1]).reshape(nz, nx)
        self.count = counted.sum(axis=1).reshape(nz, nx)
        self.delay = self.second_time - self.first_time


def _grid_axes(distance, source_z):
    x = np.asarray(distance, dtype=float).reshape(-1)
    z = np.asarray(source_z, dtype=float).reshape(-1)
    if x.size == 0 or np.any(~np.isfinite(x)) or np.any(x < 0):
        raise ValueError(f"distance must hold finite horizontal distances >= 0 m, got {x!r}")
    if z.size == 0 or np.any(~np.isfinite(z)):
        raise ValueError(f"source_z must hold finite heights [m], got {z!r}")
    return x, z


def dr_delays(profile, antenna_z, distance, source_z, workers=None, min_focusing=MIN_FOCUSING):
    """D/R delay on a (source height x distance) grid for one antenna.

    Parameters
    ----------
    profile : IndexProfile
        Any profile; in a non-monotone one either pulse may be guided by a
        duct (see the module notes).
    antenna_z : float
        Antenna height [m].
    distance : array_like, shape (nx,)
        Horizontal distances from the antenna [m].
    source_z : array_like, shape (nz,)
        Source heights [m].
    workers : int, optional
        Threads for the solver (default: all cores).
    min_focusing : float, optional
        Rays with an amplitude focusing factor below this are not pulses [1]
        (default 1e-3; 0 takes the two earliest rays whatever their amplitude).

    Returns
    -------
    DelayGrid
    """
    antenna_z = finite_float("antenna_z", antenna_z)
    min_focusing = check_min_focusing(min_focusing)
    x, z = _grid_axes(distance, source_z)
    return DelayGrid(x, z, antenna_z, rays_to_antenna(profile, antenna_z, x, z, workers),
                     min_focusing)


def _delay_at(profile, antenna_z, source_z, x, min_focusing=MIN_FOCUSING):
    rs = rays_to_antenna(profile, antenna_z, np.atleast_1d(x), [source_z])
    slots, present = earliest_counted(rs, counted_rays(rs, min_focusing), 2)
    t = np.take_along_axis(rs.travel_time, slots, axis=1)
    return np.where(present.all(axis=1), t[:, 1] - t[:, 0], np.nan)


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
                        max_distance=None, min_focusing=MIN_FOCUSING):
    """Horizontal distance(s) at which a source at height ``source_z`` gives ``delay``.

    The delay is evaluated on ``scan_points`` distances from 0 to the shadow
    boundary (or ``max_distance``); each sign change of delay - measured is
    refined by bisection on the exact solver to 1e-9 m.  A bracket whose ends
    still miss the measured delay by more than ``JUMP_TOLERANCE`` (1 ps)
    straddles a jump of the delay, where the pair of earliest rays changes
    (non-monotone profiles), and is not a solution.

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
        Upper end of the scan [m] (default: the shadow boundary, at most 10
        km; for a non-monotone profile the boundary of rays without a duct,
        so pass ``max_distance`` to invert delays of pulses guided farther
        by a duct).
    min_focusing : float, optional
        Rays with an amplitude focusing factor below this are not pulses [1]
        (see :func:`dr_delays`).

    Returns
    -------
    DelayInversion
    """
    check_profile(profile)
    antenna_z = finite_float("antenna_z", antenna_z)
    min_focusing = check_min_focusing(min_focusing)
    if max_distance is not None:
        max_distance = finite_float("max_distance", max_distance)
        if max_distance <= 0.0:
            raise ValueError(f"max_distance must be > 0 m, got {max_distance!r}")
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
            top = min(float(shadow_boundary(profile, antenna_z, zi, min_focusing=min_focusing)),
                      SCAN_DISTANCE)
        if not top > 0.0:
            solutions.append(np.array([]))
            continue
        x = np.linspace(0.0, top, scan_points)
        x[0] = min(1e-3, top * 1e-6)
        f = _delay_at(profile, antenna_z, zi, x, min_focusing) - di
        ok = np.isfinite(f[:-1]) & np.isfinite(f[1:])
        idx = np.nonzero(ok & (np.sign(f[:-1]) != np.sign(f[1:])))[0]
        lo, hi = x[idx].copy(), x[idx + 1].copy()
        f_lo, f_hi = f[idx].copy(), f[idx + 1].copy()
        for _ in range(60):
            if lo.size == 0 or np.max(hi - lo) < 1e-9:
                break
            mid = 0.5 * (lo + hi)
            fm = _delay_at(profile, antenna_z, zi, mid, min_focusing) - di
            left = np.sign(fm) == np.sign(f_lo)
            lo = np.where(left, mid, lo)
            f_lo = np.where(left, fm, f_lo)
            hi = np.where(left, hi, mid)
            f_hi = np.where(left, f_hi, fm)
        # a NaN inside a bracket (the pair breaks up) or a jump of the delay is no root
        root = (np.isfinite(f_lo) & np.isfinite(f_hi)
                & (np.maximum(np.abs(f_lo), np.abs(f_hi)) <= JUMP_TOLERANCE))
        solutions.append(np.sort(0.5 * (lo + hi)[root]))
    return DelayInversion(solutions)
