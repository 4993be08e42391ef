"""Rays from a grid of source points to one antenna (shared by the grid studies)."""

import numpy as np

from firnray.rays.solve import find_rays_many


def rays_to_antenna(profile, antenna_z, distance, source_z, workers=None):
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
    return find_rays_many(profile, src, rcv, workers=workers)
