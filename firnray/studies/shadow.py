"""Shadow zones: where rays reach an antenna, and the largest distance they reach.

For two points in graded (monotone) firn the farthest-reaching ray is the
maximum of the up-going family (``docs/theory.md`` section 4), found directly
by the closed-form peak search of the solver, not by scanning a grid: beyond
it the antenna is in the shadow of the source.  With a point on the surface
only the direct family exists and the boundary is the direct horizon.
Sources in the air (transmitted rays) and uniform ice have no shadow zone
(infinite boundary).  A general monotone (panel) profile uses the
scan-and-refine search of ``panel_solver.max_reach``.

Where the index falls with depth somewhere (``docs/theory.md`` sections 11.6
and 13) lit places need not form one interval of distance, a duct can carry
pulses far into what a smooth profile calls shadow, and rays can run along an
index minimum for any distance with vanishing amplitude.  There
:func:`illumination_map` sorts each grid cell into shadow, lit, or lit only by
rays guided by a duct, counting a ray only if its amplitude focusing is at
least ``min_focusing``; :func:`shadow_boundary` gives the largest distance
reached by rays without a duct, from a distance scan refined by bisection.
"""

import math
import warnings

import numba
import numpy as np

from firnray.checks import finite_float
from firnray.errors import FirnrayWarning
from firnray.rays import exponential_kernels as ek
from firnray.rays import exponential_solver as es
from firnray.medium.profiles import ExponentialProfile
from firnray.rays import panel_solver as ps
from firnray.rays.panel_blocks import solver_arrays
from firnray.rays.duct_solver import MAX_SLOTS
from firnray.rays.solve import check_profile, check_scan_points, find_rays_many, is_monotone
from firnray.studies.grid import (MIN_FOCUSING, check_min_focusing, counted_rays, guided_rays,
                                  ray_focusing, rays_to_antenna)


@ek.kernel
def boundary_one(a, delta, s, antenna_z, source_z):
    """Largest reach [m] of any ray between heights antenna_z and source_z [m]."""
    if antenna_z > 0.0 or source_z > 0.0 or delta == 0.0:
        return math.inf
    z_lo = min(antenna_z, source_z)
    z_hi = max(antenna_z, source_z)
    pair = ek.pair_state(a, delta, s, z_lo, z_hi)
    x_h = ek.family_distance(False, 0.0, pair)[0]
    if z_hi >= 0.0:
        return x_h
    return max(x_h, es.up_family_peak(pair)[1])


@numba.njit(parallel=True, **ek.KERNEL_OPTIONS)
def boundary_many(a, delta, s, antenna_z, source_z, out):
    """:func:`boundary_one` for every source height, in parallel."""
    for i in numba.prange(source_z.shape[0]):
        z = source_z[i]
        out[i] = boundary_one(a, delta, s, antenna_z, z) if math.isfinite(z) else math.nan


#: Category codes of :class:`IlluminationMap`.
SHADOW, LIT, DUCT_ONLY = 0, 1, 2
#: Category code -> name.
CATEGORY_NAMES = {SHADOW: "shadow", LIT: "lit", DUCT_ONLY: "duct only"}
#: Default upper end [m] and spacing [m] of the distance scan of a non-monotone profile.
SCAN_DISTANCE = 10_000.0
SCAN_STEP = 25.0
#: The scan first covers this many steps, then doubles its range while rays reach its far half.
FIRST_SCAN_STEPS = 20
#: Bisection of a non-monotone shadow boundary stops below this bracket [m].
BOUNDARY_TOLERANCE = 1e-6


def _source_heights(profile, source_z):
    z = np.asarray(source_z, dtype=float)
    flat = np.ascontiguousarray(z.reshape(-1))
    if np.any(flat < profile.z_min):
        raise ValueError(f"source_z has heights below the profile's valid range "
                         f"(z >= {profile.z_min} m): min {np.nanmin(flat)!r}")
    return z, flat


def _unguided_lit(profile, antenna_z, source_z, distance, min_focusing, scan_points, workers):
    """Whether a counted ray without a duct joins each (source height, distance) pair."""
    src = np.column_stack([np.zeros(distance.size), source_z])
    rcv = np.column_stack([distance, np.full(distance.size, antenna_z)])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FirnrayWarning)
        rs = find_rays_many(profile, src, rcv, workers=workers, scan_points=scan_points)
    return np.any(counted_rays(rs, min_focusing) & ~guided_rays(rs), axis=1)


def _check_scan(max_distance, distance_step):
    top = finite_float("max_distance", max_distance)
    if top <= 0.0:
        raise ValueError(f"max_distance must be > 0 m, got {max_distance!r}")
    step = finite_float("distance_step", distance_step)
    if not 0.0 < step <= top:
        raise ValueError(f"distance_step must be > 0 m and at most max_distance ({top} m), "
                         f"got {distance_step!r}")
    return top, step


def unguided_reach(profile, antenna_z, source_z, min_focusing=MIN_FOCUSING,
                   max_distance=SCAN_DISTANCE, distance_step=SCAN_STEP, scan_points=None,
                   workers=None):
    """Largest distance at which a ray without a duct joins source and antenna, by scan and bisection.

    Distances every ``distance_step`` (the first at 1 mm) are solved for
    every source height at once, first up to D = 20 steps; while a counted
    ray without a duct (see :func:`illumination_map`) joins the points in
    the far half of [0, D], the scan goes on to 2 D (at most
    ``max_distance``).  After the last lit distance, the bracket to the next
    scanned one is bisected on the same test down to ``BOUNDARY_TOLERANCE``
    (1e-6 m).  So a lit stretch is missed if it is narrower than one step,
    or if it lies beyond an unlit gap at least as long as the lit reach
    before it.  Any profile can be given; :func:`shadow_boundary` uses this
    for non-monotone profiles.

    Parameters
    ----------
    profile : IndexProfile
    antenna_z : float
        Antenna height [m].
    source_z : ndarray, shape (n,)
        Finite source heights in the ice [m].
    min_focusing : float
        Threshold on the amplitude focusing factor [1].
    max_distance : float
        Farthest distance scanned [m].
    distance_step : float
        Spacing of the scan [m].
    scan_points : int, optional
        Solver scan resolution (see ``find_rays_many``).
    workers : int, optional
        Threads for the solver.

    Returns
    -------
    ndarray, shape (n,)
        The largest distance [m] found lit (within 1e-6 m of where the
        rays without a duct stop); ``inf`` where the scan reaches
        ``max_distance`` still lit.
    """
    source_z = np.asarray(source_z, dtype=float).reshape(-1)
    n = source_z.size
    last = np.full(n, -1.0)            # last lit scanned distance (-1: none yet)
    scanned = np.zeros(n)              # far end of the scan so far
    active = np.arange(n)
    reach = min(FIRST_SCAN_STEPS * distance_step, max_distance)
    start = 0.0
    while active.size:
        k0 = int(round(start / distance_step))
        k1 = int(math.floor(reach / distance_step + 1e-9))
        x = distance_step * np.arange(k0, k1 + 1, dtype=float)
        if start == 0.0:
            x[0] = min(1e-3, 0.1 * distance_step)
        if x[-1] < reach:
            x = np.append(x, reach)
        m = active.size
        lit = _unguided_lit(profile, antenna_z, np.repeat(source_z[active], x.size),
                            np.tile(x, m), min_focusing, scan_points,
                            workers).reshape(m, x.size)
        far = np.where(lit.any(axis=1), x[x.size - 1 - np.argmax(lit[:, ::-1], axis=1)], -1.0)
        last[active] = np.maximum(last[active], far)
        scanned[active] = reach
        if reach >= max_distance:
            break
        active = active[last[active] > 0.5 * reach]
        start, reach = x[-1], min(2.0 * reach, max_distance)
    out = np.zeros(n)
    out[last >= max_distance] = math.inf
    open_ = np.flatnonzero((last > 0.0) & (last < max_distance))
    lo = last[open_].copy()
    hi = np.minimum(lo + distance_step, scanned[open_])
    for _ in range(64):
        todo = hi - lo > BOUNDARY_TOLERANCE
        if not todo.any():
            break
        mid = 0.5 * (lo + hi)
        idx = np.flatnonzero(todo)
        ok = _unguided_lit(profile, antenna_z, source_z[open_[idx]], mid[idx], min_focusing,
                           scan_points, workers)
        lo[idx[ok]] = mid[idx[ok]]
        hi[idx[~ok]] = mid[idx[~ok]]
    out[open_] = lo
    return out


def shadow_boundary(profile, antenna_z, source_z, scan_points=None, min_focusing=MIN_FOCUSING,
                    max_distance=SCAN_DISTANCE, distance_step=SCAN_STEP, workers=None):
    """Largest horizontal distance at which a ray connects source and antenna.

    Monotone profiles: the largest reach of any ray, found by the solver's
    peak search (exact to the solver's precision); the ``min_focusing`` and
    scan arguments are not used.  Non-monotone profiles (index falling with
    depth somewhere): the largest distance at which a ray *without a duct*
    (no turning point below the deeper end: direct, refracted at one upper
    turning point, or reflected once at the surface, the families of
    monotone firn) with amplitude focusing >= ``min_focusing`` joins the
    points, from a distance scan every ``distance_step`` (extended while
    rays reach the far half of what was scanned, up to ``max_distance``)
    refined by bisection to 1e-6 m (:func:`unguided_reach`).
    Beyond it a source may still be lit by rays guided by a duct, or by
    stretches of rays without one that the scan does not resolve; use
    :func:`illumination_map` for the whole picture.

    Parameters
    ----------
    profile : IndexProfile
        The index profile.
    antenna_z : float
        Antenna height [m] (negative in the ice).
    source_z : float or array_like
        Source heights [m].
    scan_points : int, optional
        General profiles only: solver scan intervals (see ``find_rays_many``).
    min_focusing : float, optional
        Non-monotone profiles: rays with an amplitude focusing factor below
        this are not counted [1] (default 1e-3; see :func:`illumination_map`).
    max_distance : float, optional
        Non-monotone profiles: farthest distance scanned [m] (default 10 km).
    distance_step : float, optional
        Non-monotone profiles: spacing of the distance scan [m] (default
        25 m); a lit stretch narrower than this beyond the last lit scanned
        distance is missed.
    workers : int, optional
        Non-monotone profiles: threads for the solver.

    Returns
    -------
    float or ndarray
        The shadow boundary [m] for each source height: sources farther away
        than this are in the shadow zone (of rays without a duct, for a
        non-monotone profile).  ``inf`` where there is no shadow (a point in
        the air, a uniform index) or, for a non-monotone profile, where rays
        without a duct still join the points at ``max_distance``; NaN for a
        NaN height.
    """
    check_profile(profile)
    antenna_z = finite_float("antenna_z", antenna_z)
    profile.check_height("antenna", antenna_z)
    z, flat = _source_heights(profile, source_z)
    out = np.empty_like(flat)
    if isinstance(profile, ExponentialProfile):
        a, delta, s, _ = profile.parameters
        boundary_many(a, delta, s, antenna_z, flat, out)
    elif is_monotone(profile):
        n_scan = check_scan_points(scan_points)
        ps.max_reach_many(solver_arrays(profile.panels), antenna_z, flat, out,
                          ps.SCAN if n_scan is None else n_scan)
    else:
        n_scan = check_scan_points(scan_points)
        min_focusing = check_min_focusing(min_focusing)
        top, step = _check_scan(max_distance, distance_step)
        out[:] = np.nan
        finite = np.isfinite(flat)
        out[finite & ((flat > 0.0) | (antenna_z > 0.0))] = math.inf
        ice = np.flatnonzero(finite & (flat <= 0.0) & (antenna_z <= 0.0))
        if ice.size:
            out[ice] = unguided_reach(profile, antenna_z, flat[ice], min_focusing, top, step,
                                      n_scan, workers)
    out = out.reshape(z.shape)
    return float(out) if out.ndim == 0 else out


class IlluminationMap:
    """Which rays reach an antenna from each cell of a (source height x distance) grid.

    Attributes
    ----------
    distance : ndarray, shape (nx,)
        Horizontal distances from the antenna [m].
    source_z : ndarray, shape (nz,)
        Source heights [m].
    antenna_z : float
        Antenna height [m].
    category : ndarray of int8, shape (nz, nx)
        ``SHADOW`` (0: no counted ray), ``LIT`` (1: at least one counted ray
        without a duct) or ``DUCT_ONLY`` (2: every counted ray is guided by
        a duct); ``category_names`` maps them.  The cell at the antenna
        itself counts as lit.
    rays : ndarray of int, shape (nz, nx)
        Number of counted rays [1].
    guided : ndarray of int, shape (nz, nx)
        Number of counted rays guided by a duct [1].
    strongest_focusing : ndarray, shape (nz, nx)
        Largest amplitude focusing factor of the cell's rays [1] (NaN without
        a ray with a known spreading distance).
    truncated : ndarray of bool, shape (nz, nx)
        The pair has as many rays as the solver keeps (64), perhaps more:
        the cell is judged on the earliest 64 and, if none of them counts,
        marked ``DUCT_ONLY`` (only ducts give so many rays).
    min_focusing : float
        The threshold used [1].
    """

    category_names = CATEGORY_NAMES
    SHADOW, LIT, DUCT_ONLY = SHADOW, LIT, DUCT_ONLY

    def __init__(self, distance, source_z, antenna_z, rayset, min_focusing):
        nz, nx = len(source_z), len(distance)
        self.distance = distance
        self.source_z = source_z
        self.antenna_z = antenna_z
        self.min_focusing = min_focusing
        counted = counted_rays(rayset, min_focusing)
        guided = guided_rays(rayset) & counted
        self.rays = counted.sum(axis=1).reshape(nz, nx)
        self.guided = guided.sum(axis=1).reshape(nz, nx)
        foc = ray_focusing(rayset)
        strongest = np.max(np.where(np.isnan(foc), -np.inf, foc), axis=1).reshape(nz, nx)
        self.strongest_focusing = np.where(np.isfinite(strongest), strongest, np.nan)
        self.truncated = (rayset.count >= MAX_SLOTS).reshape(nz, nx)
        cat = np.full((nz, nx), SHADOW, dtype=np.int8)
        cat[(self.rays > 0) | self.truncated] = DUCT_ONLY
        cat[self.rays > self.guided] = LIT
        cat[np.ix_(source_z == antenna_z, distance == 0.0)] = LIT   # the antenna itself
        self.category = cat

    @property
    def lit(self):
        """ndarray of bool, shape (nz, nx): True where any counted ray reaches the antenna."""
        return self.category != SHADOW

    @property
    def duct_only(self):
        """ndarray of bool, shape (nz, nx): True where only rays guided by a duct reach it."""
        return self.category == DUCT_ONLY

    def farthest_lit(self):
        """Largest grid distance [m] lit per source height (NaN where no cell is lit).

        Returns
        -------
        ndarray, shape (nz,)
        """
        lit = self.lit
        idx = lit.shape[1] - 1 - np.argmax(lit[:, ::-1], axis=1)
        return np.where(lit.any(axis=1), self.distance[idx], np.nan)


def _grid_axes(distance, source_z):
    x = np.asarray(distance, dtype=float)
    if x.ndim != 1 or x.size == 0 or np.any(~np.isfinite(x)) or np.any(x < 0):
        raise ValueError(f"distance must be a 1-D array of finite distances >= 0 m, got "
                         f"shape {x.shape}")
    z = np.asarray(source_z, dtype=float)
    if z.ndim != 1 or z.size == 0 or np.any(~np.isfinite(z)):
        raise ValueError(f"source_z must be a 1-D array of finite heights [m], got "
                         f"shape {z.shape}")
    return x, z


def illumination_map(profile, antenna_z, distance, source_z, min_focusing=MIN_FOCUSING,
                     workers=None, scan_points=None):
    """Shadow, lit, or lit only through a duct: each cell of a (source height x distance) grid.

    Every grid point is solved (``find_rays_many``).  A ray is *counted* if
    its amplitude focusing factor (straight distance / ``equivalent_distance``,
    ``Ray.focusing``) is at least ``min_focusing``: near the invariant of a
    local minimum of n a ray can run nearly level along the minimum for any
    distance (``docs/theory.md`` 11.6), and its amplitude falls exponentially
    with that distance, so without a threshold such rays would make a shadow
    zone look lit.  The default 1e-3 is 60 dB below spherical spreading over
    the same straight distance: in monotone firn no ray comes near it (the
    weakest rays of the bundled profiles, on 0-4 km grids, have about 9e-3),
    while rays along a minimum fall below it within a few hundred metres of
    running along it.  A ray whose spreading distance is unknown (NaN)
    is counted.  A counted ray that turns upwards below the deeper end point
    (``Ray.lower_turning_z`` not None: kind "ducted", and "refracted" or
    "reflected" rays that turn back up at a dip) is *guided by a duct*; such
    rays do not exist in monotone firn.

    Parameters
    ----------
    profile : IndexProfile
        Any profile (for a monotone one the map holds only ``SHADOW`` and ``LIT``).
    antenna_z : float
        Antenna height [m].
    distance : array_like, shape (nx,)
        Horizontal distances from the antenna [m], >= 0.
    source_z : array_like, shape (nz,)
        Source heights [m].
    min_focusing : float, optional
        Threshold on the amplitude focusing factor [1]; 0 counts every ray.
    workers : int, optional
        Threads for the solver.
    scan_points : int, optional
        Solver scan resolution for general profiles (see ``find_rays_many``).

    Returns
    -------
    IlluminationMap
        ``category`` (nz, nx): ``SHADOW``, ``LIT`` (a counted ray without a
        duct) or ``DUCT_ONLY``; counts of rays, the strongest focusing and a
        flag for pairs with more rays than the solver keeps.

    Raises
    ------
    ValueError
        For a bad axis, antenna height, profile or ``min_focusing``.
    """
    check_profile(profile)
    antenna_z = finite_float("antenna_z", antenna_z)
    profile.check_height("antenna", antenna_z)
    x, z = _grid_axes(distance, source_z)
    _source_heights(profile, z)
    min_focusing = check_min_focusing(min_focusing)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FirnrayWarning)
        rs = rays_to_antenna(profile, antenna_z, x, z, workers,
                             check_scan_points(scan_points))
    out = IlluminationMap(x, z, antenna_z, rs, min_focusing)
    if out.truncated.any():
        warnings.warn(f"{int(out.truncated.sum())} grid point(s) have more rays than the "
                      f"solver keeps ({MAX_SLOTS}); judged on the earliest "
                      f"(IlluminationMap.truncated)", FirnrayWarning, stacklevel=2)
    return out


def reachability_map(profile, antenna_z, distance, source_z, min_focusing=MIN_FOCUSING):
    """Which grid points any ray reaches from the antenna.

    For a monotone profile a point is reached if it lies within the shadow
    boundary of its height; for a non-monotone one if
    :func:`illumination_map` finds a counted ray (with or without a duct),
    so lit points need not form one interval of distance.

    Parameters
    ----------
    profile : IndexProfile
    antenna_z : float
        Antenna height [m].
    distance : array_like, shape (nx,)
        Horizontal distances from the antenna [m], >= 0.
    source_z : array_like, shape (nz,)
        Source heights [m].
    min_focusing : float, optional
        Non-monotone profiles: threshold on the amplitude focusing factor
        [1] (see :func:`illumination_map`).

    Returns
    -------
    reachable : ndarray of bool, shape (nz, nx)
        True where at least one (counted) ray connects the point and the antenna.
    boundary : ndarray, shape (nz,)
        The shadow boundary [m] per source height (:func:`shadow_boundary`).
    """
    x = np.asarray(distance, dtype=float)
    if x.ndim != 1 or np.any(~np.isfinite(x)) or np.any(x < 0):
        raise ValueError(f"distance must be a 1-D array of finite distances >= 0 m, got "
                         f"shape {x.shape}")
    check_profile(profile)
    z = np.asarray(source_z, float)
    if not is_monotone(profile):
        imap = illumination_map(profile, antenna_z, x, z.reshape(-1), min_focusing)
        boundary = np.asarray(shadow_boundary(profile, antenna_z, z, min_focusing=min_focusing))
        return imap.lit, boundary.reshape(-1)
    boundary = np.asarray(shadow_boundary(profile, antenna_z, z))
    boundary = boundary.reshape(-1)
    return x[None, :] <= boundary[:, None], boundary
