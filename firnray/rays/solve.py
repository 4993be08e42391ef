"""The two entry points of the ray layer: ``find_rays`` and ``find_rays_many``.

Both run the same compiled solver, chosen by the profile: the closed form of
``exponential_solver`` for an ``ExponentialProfile``, the panel solver of
``panel_solver`` (closed form on exponential panels, quadrature on the
others) for every other profile; ``find_rays`` is ``find_rays_many`` on one
pair.
"""

import warnings
import weakref

import numba
import numpy as np

from firnray.checks import point, points
from firnray.errors import FirnrayWarning
from firnray.medium.panels import index_turning_levels
from firnray.medium.profiles import ExponentialProfile, IndexProfile
from firnray.medium.reflectors import Reflector
from firnray.rays import exponential_solver as es
from firnray.rays import duct_solver as ds
from firnray.rays import panel_solver as ps
from firnray.rays.panel_blocks import solver_arrays
from firnray.rays.results import RaySet


#: Batches smaller than this run on the calling thread (thread start-up costs more).
SERIAL_BELOW = 64


def check_profile(profile):
    if not isinstance(profile, IndexProfile):
        raise ValueError(f"profile must be an index profile (for example "
                         f"firnray.ExponentialProfile or firnray.load_profile(...)), "
                         f"got {profile!r}")
    if getattr(profile, "panels", None) is None:
        raise ValueError(f"profile kind {type(profile).__name__} does not describe itself "
                         f"as panels (firnray.medium.panels); expected one of firnray's "
                         f"profile classes")


def _check_workers(workers):
    if workers is None:
        return numba.config.NUMBA_NUM_THREADS
    if (not isinstance(workers, (int, np.integer)) or isinstance(workers, bool)
            or not 1 <= workers <= numba.config.NUMBA_NUM_THREADS):
        raise ValueError(f"workers must be an integer from 1 to "
                         f"{numba.config.NUMBA_NUM_THREADS} (the cores numba may use), "
                         f"got {workers!r}")
    return int(workers)


def check_scan_points(scan_points):
    """``scan_points`` as an int from 4 to 1000, or None (the default)."""
    if scan_points is None:
        return None
    if (not isinstance(scan_points, (int, np.integer)) or isinstance(scan_points, bool)
            or not 4 <= scan_points <= 1000):
        raise ValueError(f"scan_points must be an integer from 4 to 1000, got {scan_points!r}")
    return int(scan_points)


def _layers(reflectors):
    if reflectors is None:
        return [], es.NO_LAYERS
    items = list(reflectors)
    for i, r in enumerate(items):
        if not isinstance(r, Reflector):
            raise ValueError(f"reflectors[{i}] must be a firnray.Reflector, got {r!r}")
    return items, np.array([r.z for r in items], dtype=float)


_DUCT_CACHE = weakref.WeakKeyDictionary()


def duct_setup(stack):
    """None for a monotone panel stack, else the arrays of ``duct_solver`` (cached)."""
    try:
        return _DUCT_CACHE[stack]
    except KeyError:
        pass
    monotone = index_turning_levels(stack)[2]
    setup = None if monotone else ds.duct_arrays(stack)
    _DUCT_CACHE[stack] = setup
    return setup


def is_monotone(profile):
    """Whether the index of ``profile`` never decreases with depth (the fast solver)."""
    return isinstance(profile, ExponentialProfile) or duct_setup(profile.panels) is None


def run_solver(profile, x, zs, zr, layers=es.NO_LAYERS, n_threads=None, scan_points=None):
    """Run the compiled solver that suits ``profile`` on flat arrays.

    Parameters
    ----------
    profile : IndexProfile
    x, zs, zr : ndarray, shape (N,)
        Horizontal distances, source and receiver heights [m] (NaN rows give
        no ray).
    layers : ndarray, shape (L,)
        Reflector heights [m].
    n_threads : int, optional
        Threads to use (default: all numba may use); batches below
        ``SERIAL_BELOW`` run on the calling thread.
    scan_points : int, optional
        Scan intervals of the refracted branch for a general profile
        (default ``panel_solver.SCAN``).

    Returns
    -------
    table, kinds, conv, count : ndarray
        (N, K, N_COLS) ray quantities, (N, K) kind codes and convergence flags,
        (N,) ray counts (columns of ``exponential_solver``).  The panel solver
        keeps K = max(2, most rays of any pair) columns.
    """
    n_threads = numba.config.NUMBA_NUM_THREADS if n_threads is None else n_threads
    serial = n_threads == 1 or x.shape[0] < SERIAL_BELOW
    duct = None if isinstance(profile, ExponentialProfile) else duct_setup(profile.panels)
    if duct is not None:
        table, kinds, conv, count = ds.allocate(x.shape[0], ds.MAX_SLOTS + len(layers))
        args = (solver_arrays(profile.panels), duct, profile.n_air)
        solver = ds.solve_pairs_duct_serial if serial else ds.solve_pairs_duct
        n_scan = ds.SCAN if scan_points is None else scan_points
        x = np.ascontiguousarray(x, dtype=float)
        zs = np.ascontiguousarray(zs, dtype=float)
        zr = np.ascontiguousarray(zr, dtype=float)
        previous = numba.get_num_threads()
        if not serial:
            numba.set_num_threads(n_threads)
        try:
            solver(*args, x, zs, zr, np.ascontiguousarray(layers, dtype=float), table, kinds,
                   conv, count, n_scan)
        finally:
            numba.set_num_threads(previous)
        if count.size and int(count.max()) > table.shape[1]:
            warnings.warn(f"{int((count > table.shape[1]).sum())} pair(s) have more than "
                          f"{table.shape[1]} rays; the latest are left out",
                          FirnrayWarning, stacklevel=4)
            count = np.minimum(count, table.shape[1])
        keep = max(2, int(count.max()) if count.size else 0)
        table, kinds, conv = (np.ascontiguousarray(a[:, :keep]) for a in (table, kinds, conv))
        return table, kinds, conv, count
    if isinstance(profile, ExponentialProfile):
        table, kinds, conv, count = es.allocate(x.shape[0], len(layers))
        args = profile.parameters
        solver = es.solve_pairs_serial if serial else es.solve_pairs
    else:
        table, kinds, conv, count = ps.allocate(x.shape[0], len(layers))
        args = (solver_arrays(profile.panels), profile.n_air)
        solver = ps.solve_pairs_serial if serial else ps.solve_pairs
        n_scan = ps.SCAN if scan_points is None else scan_points
    x = np.ascontiguousarray(x, dtype=float)
    zs = np.ascontiguousarray(zs, dtype=float)
    zr = np.ascontiguousarray(zr, dtype=float)
    extra = () if isinstance(profile, ExponentialProfile) else (n_scan,)
    if serial:
        solver(*args, x, zs, zr, layers, table, kinds, conv, count, *extra)
    else:
        previous = numba.get_num_threads()
        numba.set_num_threads(n_threads)
        try:
            solver(*args, x, zs, zr, layers, table, kinds, conv, count, *extra)
        finally:
            numba.set_num_threads(previous)
    if not isinstance(profile, ExponentialProfile):
        keep = max(2, int(count.max()) if count.size else 0)
        table, kinds, conv = (np.ascontiguousarray(a[:, :keep]) for a in (table, kinds, conv))
    return table, kinds, conv, count


def solve_arrays(profile, sources, receivers, workers=None, reflectors=None, scan_points=None):
    """Run the solver on (N, 3) arrays of sources and receivers; returns a RaySet.

    Rows with a NaN, coincident points or a point below the profile's valid
    range give no ray (count 0); the last two emit one ``FirnrayWarning``.
    """
    n_threads = _check_workers(workers)
    x = np.hypot(receivers[:, 0] - sources[:, 0], receivers[:, 1] - sources[:, 1])
    zs = np.ascontiguousarray(sources[:, 2])
    zr = np.ascontiguousarray(receivers[:, 2])
    with np.errstate(invalid="ignore"):
        same = (x == 0.0) & (zs == zr)
        below = (zs < profile.z_min) | (zr < profile.z_min)
    bad = same | below
    if bad.any():
        x = np.where(bad, np.nan, x)
        warnings.warn(f"{int(same.sum())} pair(s) with coincident source and receiver and "
                      f"{int(below.sum())} with a point below the profile's valid range "
                      f"(z >= {profile.z_min} m) give no ray", FirnrayWarning, stacklevel=3)
    items, layers = _layers(reflectors)
    if np.any(layers < profile.z_min):
        raise ValueError(f"reflectors lie below the profile's valid range (z >= {profile.z_min} m)")
    table, kinds, conv, count = run_solver(profile, x, zs, zr, layers, n_threads,
                                           check_scan_points(scan_points))
    if not np.all(conv | (kinds < 0)):
        warnings.warn("the root finder did not meet its tolerance for some rays; "
                      "see RaySet.converged", FirnrayWarning, stacklevel=3)
    return RaySet(profile, sources, receivers, table, kinds, conv, count, items)


def find_rays_many(profile, sources, receivers, workers=None, reflectors=None,
                   scan_points=None):
    """Every ray for each of N source-receiver pairs.

    Parameters
    ----------
    profile : IndexProfile
        The index profile (``ExponentialProfile`` or ``load_profile(...)``).
    sources, receivers : array_like, shape (N, 2) or (N, 3), or one point
        Points (x, z) or (x, y, z) [m]; one of the two may be a single point,
        broadcast against the other.  Rows with a NaN give no ray.
    workers : int, optional
        Number of threads (default: all cores numba may use).
    reflectors : sequence of Reflector, optional
        Horizontal reflecting layers; each pair in the ice above a layer also
        gets the ray that bounces off it once (kind "layer-reflected").  Off
        by default.
    scan_points : int, optional
        General profiles only (4 to 1000): for a monotone profile the number
        of intervals (default 10) at which the refracted branch of the
        up-going family is scanned for extra extrema (``docs/theory.md``
        section 11.4; a measured table with scatter can give clusters of
        extra rays that only a denser scan resolves); for a non-monotone
        profile the Chebyshev intervals of each piece of the Snell invariant
        (default 12, section 11.6).

    Returns
    -------
    RaySet
        (N, K) arrays, NaN-padded, sorted by travel time along K; K is as
        many slots as the pair with most rays needs (a non-monotone profile
        keeps up to 64 rays per pair and warns if a pair has more).  Rays
        carry their numbers of turning points and surface reflections; in a
        non-monotone profile rays that turn two or more times without a
        surface reflection are of kind "ducted".

    Raises
    ------
    ValueError
        For a wrong array shape, mismatched lengths, an invalid profile or
        ``workers``.
    """
    check_profile(profile)
    src, _ = points("sources", sources)
    rcv, _ = points("receivers", receivers)
    if src.shape[0] != rcv.shape[0]:
        if src.shape[0] == 1:
            src = np.repeat(src, rcv.shape[0], axis=0)
        elif rcv.shape[0] == 1:
            rcv = np.repeat(rcv, src.shape[0], axis=0)
        else:
            raise ValueError(f"sources and receivers must have the same number of rows or "
                             f"one of them a single point; got {src.shape[0]} and "
                             f"{rcv.shape[0]}")
    return solve_arrays(profile, src, rcv, workers, reflectors, scan_points)


def find_rays(profile, source, receiver, reflectors=None, scan_points=None):
    """Every ray from ``source`` to ``receiver``, sorted by travel time.

    Parameters
    ----------
    profile : IndexProfile
        The index profile (``ExponentialProfile`` or ``load_profile(...)``).
    source, receiver : sequence of float
        Points (x, z) or (x, y, z) [m]; z is height (negative in the ice).
    reflectors : sequence of Reflector, optional
        Horizontal reflecting layers (see :func:`find_rays_many`).
    scan_points : int, optional
        Scan resolution for general profiles (see :func:`find_rays_many`).

    Returns
    -------
    list of Ray
        Empty when the receiver lies in the shadow zone of the source.

    Raises
    ------
    ValueError
        For non-finite coordinates, coincident points, a point below the
        profile's valid range, or an invalid profile.
    """
    check_profile(profile)
    src, _ = point("source", source)
    rcv, _ = point("receiver", receiver)
    if np.array_equal(src, rcv):
        raise ValueError(f"source and receiver must differ, both are {tuple(source)!r}")
    profile.check_height("source", src[2])
    profile.check_height("receiver", rcv[2])
    return solve_arrays(profile, src[None, :], rcv[None, :], workers=1,
                        reflectors=reflectors, scan_points=scan_points)[0]
