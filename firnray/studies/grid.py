"""Rays from a grid of source points to one antenna, and which of them count (shared by
the grid studies).

In a non-monotone profile (``docs/theory.md`` sections 11.6 and 13) two facts
matter to every study built on a grid of rays:

* a ray that turns upwards somewhere below the deeper of its end points (it
  has a lower turning point) exists only because the index falls with depth
  there: it is *guided* by a duct.  Every other ray (direct, refracted at one
  upper turning point, reflected once at the surface) belongs to the
  families that monotone firn has as well;
* near the invariant of a local minimum of n a ray can run nearly level along
  the minimum for any distance, with an amplitude that falls exponentially
  with that distance.  Such rays solve the ray equations but carry no signal;
  a study counts a ray only if its amplitude focusing (straight distance over
  the spreading distance R_eq, ``Ray.focusing``) is at least a threshold.
"""

import numpy as np

from firnray.checks import finite_float
from firnray.rays.solve import find_rays_many

#: Default threshold on the amplitude focusing factor [1] below which a ray is not counted.
MIN_FOCUSING = 1e-3


def rays_to_antenna(profile, antenna_z, distance, source_z, workers=None, scan_points=None):
    """Every ray from each (source height, distance) grid point to an antenna.

    Parameters
    ----------
    profile : IndexProfile
    antenna_z : float
        Antenna height [m].
    distance : ndarray, shape (nx,)
        Horizontal distances from the antenna [m].
    source_z : ndarray, shape (nz,)
        Source heights [m].
    workers : int, optional
        Threads for the solver.
    scan_points : int, optional
        Scan resolution for general profiles (see ``find_rays_many``).

    Returns
    -------
    RaySet
        nz * nx pairs in row-major (source height, distance) order; the grid
        point at the antenna itself gives no ray (rather than an error).
    """
    xx, zz = np.meshgrid(distance, source_z)
    src = np.column_stack([np.zeros(xx.size), zz.reshape(-1)])
    rcv = np.column_stack([xx.reshape(-1), np.full(xx.size, antenna_z)])
    src[(rcv[:, 0] == 0.0) & (src[:, 1] == antenna_z), 1] = np.nan
    return find_rays_many(profile, src, rcv, workers=workers, scan_points=scan_points)


def check_min_focusing(value):
    """``min_focusing`` as a float >= 0 [1]; raises ``ValueError`` naming it otherwise."""
    out = finite_float("min_focusing", value)
    if out < 0.0:
        raise ValueError(f"min_focusing must be an amplitude focusing factor >= 0 (0 counts "
                         f"every ray), got {value!r}")
    return out


def ray_focusing(rayset):
    """Amplitude focusing factor of every ray of a RaySet [1].

    Parameters
    ----------
    rayset : RaySet

    Returns
    -------
    ndarray, shape (N, K)
        Straight-line distance between the pair's points over the ray's
        spreading distance R_eq [1] (``Ray.focusing``); NaN where there is no
        ray or R_eq is unknown.
    """
    straight = np.linalg.norm(rayset.receivers - rayset.sources, axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = straight[:, None] / rayset.equivalent_distance
    return np.where(rayset.kind >= 0, out, np.nan)


def counted_rays(rayset, min_focusing=MIN_FOCUSING):
    """Which rays of a RaySet carry signal: they exist and their focusing is >= ``min_focusing``.

    Parameters
    ----------
    rayset : RaySet
    min_focusing : float, optional
        Threshold on the amplitude focusing factor [1]; 0 counts every ray.
        A ray whose spreading distance is unknown (NaN) is counted.

    Returns
    -------
    ndarray of bool, shape (N, K)
    """
    foc = ray_focusing(rayset)
    with np.errstate(invalid="ignore"):
        strong = (foc >= min_focusing) | np.isnan(foc)
    return (rayset.kind >= 0) & strong


def guided_rays(rayset):
    """Which rays of a RaySet are guided by a duct (they turn upwards below the deeper point).

    Returns
    -------
    ndarray of bool, shape (N, K)
        True for rays with a lower turning point (``Ray.lower_turning_z`` not
        None): kind "ducted", and "refracted" or "reflected" rays that turn
        back up at a dip; such rays do not exist in monotone firn.
    """
    return (rayset.kind >= 0) & np.isfinite(rayset.lower_turning_z)


def earliest_counted(rayset, mask, n):
    """Slot indices of the ``n`` earliest rays of each pair among those in ``mask``.

    Parameters
    ----------
    rayset : RaySet
    mask : ndarray of bool, shape (N, K)
        Rays to choose from.
    n : int
        How many per pair.

    Returns
    -------
    slots : ndarray of int, shape (N, n)
        Slot index of each chosen ray (0 where there is none).
    present : ndarray of bool, shape (N, n)
        Whether that ray exists.
    """
    t = np.where(mask, rayset.travel_time, np.inf)
    order = np.argsort(t, axis=1, kind="stable")
    slots = np.zeros((t.shape[0], n), dtype=int)
    present = np.zeros((t.shape[0], n), dtype=bool)
    m = min(n, t.shape[1])
    slots[:, :m] = order[:, :m]
    present[:, :m] = np.take_along_axis(mask, order[:, :m], axis=1)
    return slots, present
