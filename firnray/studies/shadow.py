"""Shadow zones: the largest horizontal distance any ray reaches from a source to an antenna.

For two points in graded firn the farthest-reaching ray is the maximum of the
up-going family (``docs/theory.md`` section 4), found directly by the
closed-form peak search of the solver, not by scanning a grid: beyond it the
antenna is in the shadow of the source.  With a point on the surface only
the direct family exists and the boundary is the direct horizon.  Sources in
the air (transmitted rays) and uniform ice have no shadow zone (infinite
boundary).  A general (panel) profile uses the scan-and-refine search of
``panel_solver.max_reach``.
"""

import math

import numba
import numpy as np

from firnray.checks import finite_float
from firnray.rays import exponential_kernels as ek
from firnray.rays import exponential_solver as es
from firnray.medium.profiles import ExponentialProfile
from firnray.rays import panel_solver as ps
from firnray.rays.panel_blocks import solver_arrays
from firnray.rays.solve import check_profile, check_scan_points


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


def shadow_boundary(profile, antenna_z, source_z, scan_points=None):
    """Largest horizontal distance at which any ray connects source and antenna.

    Parameters
    ----------
    profile : IndexProfile
        The index profile.
    antenna_z : float
        Antenna height [m] (negative in the ice).
    source_z : float or array_like
        Source heights [m].
    scan_points : int, optional
        General profiles only: scan intervals of the up-going family (see
        ``find_rays_many``).

    Returns
    -------
    float or ndarray
        The shadow boundary [m] for each source height: sources farther away
        than this are in the shadow zone.  ``inf`` where there is no shadow
        (a point in the air, or a uniform index); NaN for a NaN height.
    """
    check_profile(profile)
    antenna_z = finite_float("antenna_z", antenna_z)
    profile.check_height("antenna", antenna_z)
    z = np.asarray(source_z, dtype=float)
    flat = np.ascontiguousarray(z.reshape(-1))
    if np.any(flat < profile.z_min):
        raise ValueError(f"source_z has heights below the profile's valid range "
                         f"(z >= {profile.z_min} m): min {np.nanmin(flat)!r}")
    out = np.empty_like(flat)
    if isinstance(profile, ExponentialProfile):
        a, delta, s, _ = profile.parameters
        boundary_many(a, delta, s, antenna_z, flat, out)
    else:
        n_scan = check_scan_points(scan_points)
        ps.max_reach_many(solver_arrays(profile.panels), antenna_z, flat, out,
                          ps.SCAN if n_scan is None else n_scan)
    out = out.reshape(z.shape)
    return float(out) if out.ndim == 0 else out


def reachability_map(profile, antenna_z, distance, source_z):
    """Which grid points any ray reaches from the antenna.

    Parameters
    ----------
    profile : IndexProfile
    antenna_z : float
        Antenna height [m].
    distance : array_like, shape (nx,)
        Horizontal distances from the antenna [m], >= 0.
    source_z : array_like, shape (nz,)
        Source heights [m].

    Returns
    -------
    reachable : ndarray of bool, shape (nz, nx)
        True where at least one ray connects the point and the antenna.
    boundary : ndarray, shape (nz,)
        The shadow boundary [m] per source height.
    """
    x = np.asarray(distance, dtype=float)
    if x.ndim != 1 or np.any(~np.isfinite(x)) or np.any(x < 0):
        raise ValueError(f"distance must be a 1-D array of finite distances >= 0 m, got "
                         f"shape {x.shape}")
    boundary = np.asarray(shadow_boundary(profile, antenna_z, np.asarray(source_z, float)))
    boundary = boundary.reshape(-1)
    return x[None, :] <= boundary[:, None], boundary
