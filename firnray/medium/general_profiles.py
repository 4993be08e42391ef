"""Index profiles beyond one exponential: piecewise exponential, tabulated, any function.

Each gives ``n_air`` above the surface and describes itself to the ray solver
as a :class:`~firnray.medium.panels.PanelStack`:

* ``PiecewiseExponentialProfile``: exponential pieces joined continuously at
  break heights, each rising with depth, each panel solved in closed form;
* ``TabulatedProfile``: samples (z, n) of any finite index >= n_air (density
  inversions, lenses and constant runs included) joined by the piecewise
  cubic Hermite interpolant of Fritsch & Carlson, held constant below the
  deepest sample; cubic panels, solved by quadrature;
* ``FunctionProfile``: any vectorised callable n(z) >= n_air, represented by
  cubic Hermite panels refined until they match the callable to
  ``tolerance``; solved by quadrature.
"""

import hashlib
import math

import numpy as np

from firnray.checks import finite_float, positive_float
from firnray.medium.panels import (CUBIC, EXPONENTIAL, UNIFORM, PanelStack, evaluate_panels,
                                   hermite_coefficients)
from firnray.medium.profiles import DEFAULT_Z_MIN, IndexProfile
from firnray.medium.smoothing import smooth_samples


def _check_air(n_air, z_min):
    n_air = finite_float("n_air", n_air)
    if n_air < 1.0:
        raise ValueError(f"n_air must be >= 1, got {n_air!r}")
    z_min = finite_float("z_min", z_min)
    if not z_min < 0.0:
        raise ValueError(f"z_min must be below the surface (< 0 m), got {z_min!r}")
    return n_air, z_min


class SampleError(ValueError):
    """A table of samples was refused; the message names the argument, row and value.

    Attributes
    ----------
    argument : str
        The argument at fault (``"z"``, or the name of the values, such as
        ``"n"`` or ``"density"``).
    rows : tuple of int
        The rows concerned, as indices into the caller's arrays (empty when
        the fault is not in one row: ``"shape"``, ``"too_few"``).
    reason : str
        A short code: ``"shape"``, ``"too_few"``, ``"not_finite"``,
        ``"above_surface"``, ``"duplicate"``, ``"surface_gap"``,
        ``"below_z_min"`` or ``"out_of_range"``.
    """

    def __init__(self, message, argument, rows=(), reason=""):
        super().__init__(message)
        self.argument = argument
        self.rows = tuple(int(r) for r in rows)
        self.reason = reason


def table_samples(z, values, value_name="n", value_unit="", z_min=DEFAULT_Z_MIN,
                  extend_to_surface=False):
    """Checked table samples sorted by height, surface first, exact duplicates dropped.

    Parameters
    ----------
    z : array_like, shape (K,)
        Sample heights [m], in any order, all <= 0.
    values : array_like, shape (K,)
        Sample values [``value_unit``].
    value_name : str, optional
        Name of ``values`` in error messages.
    value_unit : str, optional
        Unit of ``values`` in error messages (for example ``" kg/m^3"``).
    z_min : float, optional
        Lowest valid height [m]; a deeper sample is refused.
    extend_to_surface : bool, optional
        Accept a shallowest sample below the surface (z < 0); otherwise refused.

    Returns
    -------
    z_sorted : ndarray
        Distinct heights, strictly decreasing [m].
    values_sorted : ndarray
        Values at those heights [``value_unit``].
    rows : ndarray of int
        Row of the caller's arrays each sorted sample comes from.

    Raises
    ------
    SampleError
        (a ``ValueError``) for arrays of different shape or fewer than two
        distinct heights, a non-finite value, a height above the surface,
        one height with two different values, a shallowest sample below the
        surface without ``extend_to_surface``, or a sample below ``z_min``;
        the message names the argument, the row (index in the caller's
        order) and the value.
    """
    v, u = value_name, value_unit
    arrays = []
    for name, arr in (("z", z), (v, values)):
        try:
            arrays.append(np.asarray(arr, dtype=float))
        except (TypeError, ValueError):
            raise SampleError(f"{name} must be a 1-D array of numbers, got {arr!r}", name,
                              reason="shape") from None
    zz = arrays[0] + 0.0        # + 0.0: a height of -0.0 reads 0.0
    vv = arrays[1]
    if zz.ndim != 1 or vv.ndim != 1 or zz.size != vv.size:
        raise SampleError(f"z and {v} must be 1-D arrays of the same length, got shapes "
                          f"{zz.shape} and {vv.shape}", "z", reason="shape")
    for name, arr in (("z", zz), (v, vv)):
        bad = np.flatnonzero(~np.isfinite(arr))
        if bad.size:
            k = int(bad[0])
            raise SampleError(f"{name}[{k}] must be finite, got {float(arr[k])!r} (row {k}: "
                              f"z = {float(zz[k])!r} m, {v} = {float(vv[k])!r}{u})", name, [k],
                              "not_finite")
    above = np.flatnonzero(zz > 0.0)
    if above.size:
        k = int(above[0])
        raise SampleError(f"z[{k}] = {float(zz[k])!r} m lies above the surface (a depth of "
                          f"{float(-zz[k])!r} m); expected heights <= 0 m (0 is the snow "
                          f"surface, a depth d is z = -d)", "z", [k], "above_surface")
    order = np.argsort(-zz, kind="stable")
    zs, vs = zz[order], vv[order]
    same = np.flatnonzero(np.diff(zs) == 0.0)
    differ = same[vs[same] != vs[same + 1]]
    if differ.size:
        i, j = sorted((int(order[differ[0]]), int(order[differ[0] + 1])))
        raise SampleError(f"rows {i} and {j} have the same height z = {float(zz[i])!r} m but "
                          f"different values {v}[{i}] = {float(vv[i])!r}{u} and {v}[{j}] = "
                          f"{float(vv[j])!r}{u}; expected one value per height (exact duplicate "
                          f"rows are dropped)", "z", [i, j], "duplicate")
    keep = np.concatenate([[True], np.diff(zs) != 0.0])
    zs, vs, rows = zs[keep], vs[keep], order[keep]
    if zs.size < 2:
        raise SampleError(f"z and {v} need samples at 2 or more distinct heights, got "
                          f"{zs.size} (z = {zs.tolist()!r} m)", "z", (), "too_few")
    if zs[0] < 0.0 and not extend_to_surface:
        k = int(rows[0])
        raise SampleError(f"the shallowest sample z[{k}] = {float(zs[0])!r} m lies below the "
                          f"surface; expected a sample at z = 0, or pass "
                          f"extend_to_surface=True to hold {v}[{k}] = {float(vs[0])!r}{u} constant "
                          f"up to the surface", "z", [k], "surface_gap")
    if zs[-1] < z_min:
        k = int(rows[-1])
        raise SampleError(f"the deepest sample z[{k}] = {float(zs[-1])!r} m lies below z_min "
                          f"({z_min} m); expected heights >= z_min", "z", [k], "below_z_min")
    return zs, vs, rows


class _PanelProfile(IndexProfile):
    """Shared behaviour of the profiles described by a panel stack."""

    panels = None

    def index(self, z):
        """Refractive index at height ``z`` [m] (scalar or array) [1]."""
        zz = np.asarray(z, dtype=float)
        n = evaluate_panels(self.panels, np.minimum(zz, 0.0))
        n = np.where(zz > 0.0, self.n_air, n)
        return float(n) if n.ndim == 0 else n

    @property
    def n_surface(self):
        """Index at the snow surface [1]."""
        return float(self.panels.n_top[0])

    @property
    def n_deep(self):
        """Index at the profile's lowest valid height [1]."""
        return float(self.index(self.z_min))

    def __eq__(self, other):
        return type(other) is type(self) and repr(self) == repr(other)

    def __hash__(self):
        return hash(repr(self))


def piecewise_exponential_index(z, n_surface, breaks, n_deep, scale_depth, n_air=1.0):
    """Index of exponential pieces joined continuously at break heights.

    Piece 0 spans 0 >= z >= breaks[0] with
    n = n_deep[0] - (n_deep[0] - n_surface) exp(z / scale_depth[0]); piece k
    spans breaks[k-1] >= z >= breaks[k] with
    n = n_deep[k] - (n_deep[k] - n_k) exp((z - breaks[k-1]) / scale_depth[k]),
    n_k the value of piece k-1 at breaks[k-1] (``docs/theory.md`` section 11).
    Two-stage exponential fits of firn density (a shallow stage above the
    550 kg/m^3 critical density, a deep stage below it) have this form.

    Parameters
    ----------
    z : float or array_like
        Height [m].
    n_surface : float
        Index at the surface [1].
    breaks : sequence of float
        Heights of the boundaries between pieces, strictly decreasing, < 0 [m].
    n_deep, scale_depth : sequence of float
        Asymptotic index [1] and e-folding depth [m] of each piece
        (``len(breaks) + 1`` values).
    n_air : float, optional
        Index above the surface [1].

    Returns
    -------
    float or ndarray
        n(z) [1].
    """
    prof = PiecewiseExponentialProfile(n_surface, breaks, n_deep, scale_depth, n_air=n_air)
    return prof.index(z)


class PiecewiseExponentialProfile(_PanelProfile):
    """Exponential pieces joined continuously at break heights (closed-form rays).

    Parameters
    ----------
    n_surface : float
        Index at the surface [1], > n_air.
    breaks : sequence of float
        Heights of the boundaries between pieces [m], strictly decreasing, all
        < 0 and > z_min (may be empty: one exponential).
    n_deep : float or sequence of float
        Asymptotic index of each piece [1] (one value for all, or
        ``len(breaks) + 1``); each must be >= the index at the top of its piece.
    scale_depth : float or sequence of float
        e-folding depth of each piece [m], > 0.
    n_air : float, optional
        Index above the surface [1] (default 1.0).
    z_min : float, optional
        Lowest valid height [m] (default -5000 m).
    info : dict, optional
        Name, description and citation.

    Notes
    -----
    Piece k is n = n_deep[k] - (n_deep[k] - n_k) exp((z - z_k) / scale_depth[k])
    with z_k its top (0 or breaks[k-1]) and n_k the index there, so n is
    continuous and its slope may jump at a break.  A published fit given as
    n = A_k - B_k exp(z / s_k) per piece maps to n_deep = A_k, scale_depth = s_k
    and n_surface = A_0 - B_0; its B_k for k > 0 are then fixed by continuity.
    """

    def __init__(self, n_surface, breaks, n_deep, scale_depth, n_air=1.0,
                 z_min=DEFAULT_Z_MIN, info=None):
        self.n_air, self.z_min = _check_air(n_air, z_min)
        n_s = finite_float("n_surface", n_surface)
        if not n_s > self.n_air:
            raise ValueError(f"n_surface must be greater than n_air ({self.n_air}), "
                             f"got {n_surface!r}")
        brk = np.atleast_1d(np.asarray(breaks, dtype=float)) if np.size(breaks) else np.empty(0)
        if brk.ndim != 1 or not np.all(np.isfinite(brk)):
            raise ValueError(f"breaks must be a 1-D sequence of finite heights [m], got {breaks!r}")
        if np.any(brk >= 0.0) or np.any(np.diff(brk) >= 0.0) or np.any(brk <= self.z_min):
            raise ValueError(f"breaks must be strictly decreasing heights below the surface "
                             f"(0 > breaks > z_min = {self.z_min}), got {list(brk)!r}")
        m = brk.size + 1
        deep = self._per_piece("n_deep", n_deep, m)
        scale = self._per_piece("scale_depth", scale_depth, m)
        if np.any(scale <= 0.0):
            raise ValueError(f"scale_depth must be > 0 for every piece, got {list(scale)!r}")
        tops = np.concatenate([[0.0], brk])
        bottoms = np.concatenate([brk, [-np.inf]])
        coef = np.empty((m, 4))
        kind = np.empty(m, dtype=np.int64)
        n_top = n_s
        for k in range(m):
            if not deep[k] >= n_top * (1.0 - 1e-15):
                raise ValueError(f"n_deep[{k}] must be >= the index at the top of piece {k} "
                                 f"({n_top!r}) so that n rises with depth in every piece, got "
                                 f"{deep[k]!r}; firn whose index falls with depth somewhere "
                                 f"(inversions, lenses) goes in a TabulatedProfile or a "
                                 f"FunctionProfile")
            d = max(deep[k] - n_top, 0.0)
            coef[k] = (deep[k], scale[k], n_top, d)
            kind[k] = EXPONENTIAL if d > 0.0 else UNIFORM
            if kind[k] == UNIFORM:
                coef[k] = (n_top, 0.0, 0.0, 0.0)
            if k + 1 < m:
                n_top = deep[k] - d * math.exp((brk[k] - tops[k]) / scale[k])
        self.breaks = tuple(float(v) for v in brk)
        self.n_deep_pieces = tuple(float(v) for v in deep)
        self.scale_depths = tuple(float(v) for v in scale)
        self._n_surface = n_s
        self.panels = PanelStack(tops, bottoms, kind, coef)
        self.info = dict(info or {})

    @staticmethod
    def _per_piece(name, value, m):
        arr = np.atleast_1d(np.asarray(value, dtype=float))
        if arr.ndim != 1 or not np.all(np.isfinite(arr)):
            raise ValueError(f"{name} must be a finite number or a sequence of them, got {value!r}")
        if arr.size == 1:
            arr = np.repeat(arr, m)
        if arr.size != m:
            raise ValueError(f"{name} needs one value or {m} (one per piece, len(breaks) + 1), "
                             f"got {arr.size}")
        return arr

    def __repr__(self):
        return (f"PiecewiseExponentialProfile(n_surface={self._n_surface!r}, "
                f"breaks={list(self.breaks)!r}, n_deep={list(self.n_deep_pieces)!r}, "
                f"scale_depth={list(self.scale_depths)!r}, n_air={self.n_air!r}, "
                f"z_min={self.z_min!r})")


def pchip_slopes(x, y):
    """Knot derivatives of the monotone piecewise cubic Hermite interpolant.

    Fritsch, F. N. & Carlson, R. E. (1980), SIAM J. Numer. Anal. 17(2),
    238-246, with the weighted harmonic mean of Fritsch & Butland (1984),
    SIAM J. Sci. Stat. Comput. 5(2), 300-304, at interior knots and the
    shape-preserving three-point formula at the ends (the choice of
    ``scipy.interpolate.PchipInterpolator``, against which the tests check it).

    Parameters
    ----------
    x : ndarray, shape (K,)
        Strictly increasing abscissae.
    y : ndarray, shape (K,)
        Values.

    Returns
    -------
    ndarray, shape (K,)
        dy/dx at the knots; zero where the data have a local extremum.
    """
    h = np.diff(x)
    m = np.diff(y) / h
    if x.size == 2:
        return np.array([m[0], m[0]])
    d = np.zeros_like(y)
    w1 = 2.0 * h[1:] + h[:-1]
    w2 = h[1:] + 2.0 * h[:-1]
    same = (np.sign(m[1:]) == np.sign(m[:-1])) & (m[1:] != 0.0) & (m[:-1] != 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        mean = (w1 + w2) / (w1 / m[:-1] + w2 / m[1:])
    d[1:-1] = np.where(same, mean, 0.0)

    def edge(h0, h1, m0, m1):
        e = ((2.0 * h0 + h1) * m0 - h0 * m1) / (h0 + h1)
        if np.sign(e) != np.sign(m0):
            return 0.0
        if np.sign(m0) != np.sign(m1) and abs(e) > abs(3.0 * m0):
            return 3.0 * m0
        return e

    d[0] = edge(h[0], h[1], m[0], m[1])
    d[-1] = edge(h[-1], h[-2], m[-1], m[-2])
    return d


class TabulatedProfile(_PanelProfile):
    """Index samples joined by a shape-preserving cubic interpolant (rays by quadrature).

    Any finite index n >= n_air is accepted: n may rise and fall with depth
    (density inversions, dense lenses) or stay constant over a run of
    samples (deep ice repeating one value).

    Parameters
    ----------
    z : array_like, shape (K,)
        Sample heights [m], <= 0, in any order: surface-first and
        deepest-first tables give the same profile, because the samples are
        sorted by height (descending) internally.  Rows repeated exactly
        (same z, same n) are dropped; one height with two different values is
        refused.  At least 2 distinct heights.
    n : array_like, shape (K,)
        Index at each sample [1], finite, >= n_air.
    n_air : float, optional
        Index above the surface [1] (default 1.0).
    z_min : float, optional
        Lowest valid height [m] (default -5000 m); below the deepest sample
        the index stays at its value there.
    info : dict, optional
        Name, description and source of the samples.
    extend_to_surface : bool, optional
        If the shallowest sample lies below the surface (z < 0): False
        (default) refuses the table; True holds the shallowest value constant
        from that sample up to z = 0 (one uniform panel on top).
    smoothing_window : float or None, optional
        Full width [m] of a running mean applied to the index samples before
        interpolation (:func:`firnray.medium.smoothing.smooth_samples`), or
        None (default) for no smoothing.  When given, ``info`` records it
        under ``"smoothing"`` and ``n_unsmoothed`` keeps the samples as given.

    Attributes
    ----------
    z : ndarray
        The distinct sample heights, surface first [m].
    n : ndarray
        The index the interpolant passes through at ``z`` (smoothed when
        ``smoothing_window`` is given) [1].
    n_unsmoothed : ndarray
        The index samples at ``z`` as given [1].
    slopes : ndarray
        dn/dz at the samples [1/m].

    Raises
    ------
    ValueError
        (``SampleError``) for one row, arrays of different shape, NaN or inf
        anywhere, a height above the surface (z > 0), an index below
        ``n_air``, one height with two different indices, a shallowest sample
        below the surface without ``extend_to_surface``, or a sample below
        ``z_min``; the message names the argument, the row (index in the
        caller's order) and the value.

    Notes
    -----
    Between samples the index follows the piecewise cubic Hermite interpolant
    with the knot slopes of :func:`pchip_slopes`, the interpolant of scipy's
    ``PchipInterpolator``: n and dn/dz are continuous, and the slope is zero
    at every local extremum of the data (and on each side of a constant
    run), so the curve never overshoots the samples: between two samples it
    stays within their range, and an inversion in the data is an inversion of
    the same depth in the profile, no deeper.  Below the deepest sample n is
    held at its last value, so dn/dz jumps to zero there.
    """

    def __init__(self, z, n, n_air=1.0, z_min=DEFAULT_Z_MIN, info=None,
                 extend_to_surface=False, smoothing_window=None):
        self.n_air, self.z_min = _check_air(n_air, z_min)
        zs, ns, rows = table_samples(z, n, "n", "", self.z_min, bool(extend_to_surface))
        low = np.flatnonzero(ns < self.n_air)
        if low.size:
            k = int(rows[low[0]])
            raise SampleError(f"n[{k}] = {float(ns[low[0]])!r} at z = {float(zs[low[0]])!r} m is "
                              f"below n_air "
                              f"({self.n_air}); expected n >= n_air", "n", [k], "out_of_range")
        info = dict(info or {})
        self.n_unsmoothed = ns.copy()
        if smoothing_window is not None:
            window = positive_float("smoothing_window", smoothing_window)
            ns = smooth_samples(zs, ns, window)
            info["smoothing"] = {"window_m": window, "quantity": "index",
                                 "method": "running mean of the linearly joined samples"}
        self.z = zs
        self.n = ns
        self.extend_to_surface = bool(extend_to_surface)
        slopes = pchip_slopes(zs[::-1], ns[::-1])[::-1]
        coef = np.vstack([hermite_coefficients(zs, ns, slopes), [[ns[-1], 0.0, 0.0, 0.0]]])
        kind = np.concatenate([np.full(zs.size - 1, CUBIC), [UNIFORM]])
        top = zs
        if zs[0] < 0.0:
            # the shallowest value held constant up to the surface
            coef = np.vstack([[[ns[0], 0.0, 0.0, 0.0]], coef])
            kind = np.concatenate([[UNIFORM], kind])
            top = np.concatenate([[0.0], zs])
            info.setdefault("extended_to_surface_from_m", float(zs[0]))
        self.slopes = slopes
        self.panels = PanelStack(top, np.concatenate([top[1:], [-np.inf]]), kind, coef)
        self.info = info

    def __repr__(self):
        digest = hashlib.sha256(self.z.tobytes() + self.n.tobytes()).hexdigest()[:12]
        return (f"TabulatedProfile({self.z.size} samples from z = {float(self.z[0])!r} to "
                f"{float(self.z[-1])!r} m, n = {float(np.min(self.n))!r} .. "
                f"{float(np.max(self.n))!r}, n_air={self.n_air!r}, z_min={self.z_min!r}, "
                f"samples sha256 {digest})")


#: Default largest deviation of the panel representation from the callable [1].
FUNCTION_TOLERANCE = 1e-10
#: Most panels a FunctionProfile may use.
MAX_FUNCTION_PANELS = 20000
#: Default spacing of the probe grid on which a FunctionProfile checks its panels [m].
FUNCTION_PROBE_SPACING = 0.5
#: Most probe points a FunctionProfile may use.
MAX_FUNCTION_PROBES = 2_000_000


class FunctionProfile(_PanelProfile):
    """Any index function n(z) >= n_air, monotone or not (rays by quadrature).

    Parameters
    ----------
    index : callable
        Maps an array of heights z <= 0 [m] to an array of indices [1] of the
        same shape; n must be finite and >= n_air.  It may rise and fall with
        depth.
    n_air : float, optional
        Index above the surface [1] (default 1.0).
    z_min : float, optional
        Lowest valid height [m] (default -5000 m).
    tolerance : float, optional
        Largest allowed deviation [1] of the solver's representation from
        ``index`` (default 1e-10).
    info : dict, optional
        Name and description.
    probe_spacing : float, optional
        Spacing [m] of the uniform grid from 0 to ``z_min`` on which the
        panels are also compared with ``index`` (default 0.5 m): features of
        n(z) narrower than about this spacing may be missed.

    Notes
    -----
    The solver cannot call Python inside its compiled loops, so the function
    is represented by cubic Hermite panels: knot values from ``index``, knot
    slopes by a fourth-order finite difference.  The function is first
    evaluated on the probe grid; every panel is then halved until the cubic
    matches ``index`` within ``tolerance`` at t = 1/4, 1/2, 3/4 of the panel
    and at every probe point inside it (``max_deviation`` holds the largest
    deviation seen), so a narrow dip or bump between the initial knots is
    found and resolved.  ``index(z)`` of this object calls the function
    itself.

    Raises
    ------
    ValueError
        If ``index`` is not callable, raises (the message names the first
        height where it fails, when a height-by-height retry finds one),
        returns the wrong shape, non-finite values or values below ``n_air``
        (the height is named), or cannot be represented within ``tolerance``
        by MAX_FUNCTION_PANELS panels.
    """

    def __init__(self, index, n_air=1.0, z_min=DEFAULT_Z_MIN, tolerance=FUNCTION_TOLERANCE,
                 info=None, probe_spacing=FUNCTION_PROBE_SPACING):
        if not callable(index):
            raise ValueError(f"index must be a callable mapping heights [m] to indices, "
                             f"got {index!r}")
        self.n_air, self.z_min = _check_air(n_air, z_min)
        tol = finite_float("tolerance", tolerance)
        if not tol > 0.0:
            raise ValueError(f"tolerance must be > 0, got {tolerance!r}")
        spacing = positive_float("probe_spacing", probe_spacing)
        count = int(math.ceil(-self.z_min / spacing)) + 1
        if count > MAX_FUNCTION_PROBES:
            raise ValueError(f"probe_spacing = {probe_spacing!r} m needs {count} probe points "
                             f"down to z_min = {self.z_min} m; expected at most "
                             f"{MAX_FUNCTION_PROBES} (a larger spacing or a shallower z_min)")
        self.function = index
        self.tolerance = tol
        self.probe_spacing = spacing
        z_probe = np.maximum(-spacing * np.arange(count), self.z_min)
        n_probe = self._call(z_probe)
        self._check_air_index(z_probe, n_probe)
        knots = self._initial_knots()
        t = np.array([0.25, 0.5, 0.75])
        for _ in range(60):
            n, slope = self._values(knots)
            coef = hermite_coefficients(knots, n, slope)
            zc = knots[1:, None] + (knots[:-1] - knots[1:])[:, None] * t[None, :]
            cubic = coef[:, :1] + t * (coef[:, 1:2] + t * (coef[:, 2:3] + t * coef[:, 3:4]))
            truth = self._call(zc.ravel()).reshape(zc.shape)
            self._check_air_index(np.concatenate([knots, zc.ravel()]),
                                  np.concatenate([n, truth.ravel()]))
            err = np.max(np.abs(cubic - truth), axis=1)
            # the probe points inside each panel (top[k] >= z > top[k+1])
            k = np.clip(np.searchsorted(-knots, -z_probe, side="right") - 1, 0, knots.size - 2)
            tp = (z_probe - knots[k + 1]) / (knots[k] - knots[k + 1])
            c = coef[k]
            probe_err = np.abs(c[:, 0] + tp * (c[:, 1] + tp * (c[:, 2] + tp * c[:, 3]))
                               - n_probe)
            np.maximum.at(err, k, probe_err)
            bad = err > tol
            if not bad.any():
                break
            if knots.size + bad.sum() > MAX_FUNCTION_PANELS:
                worst = int(np.argmax(err))
                raise ValueError(f"index cannot be represented within tolerance {tol!r} by "
                                 f"{MAX_FUNCTION_PANELS} panels (deviation {err[worst]:.3g} near "
                                 f"z = {knots[worst]:.6g} m); is it smooth?")
            mid = 0.5 * (knots[:-1] + knots[1:])[bad]
            knots = np.sort(np.concatenate([knots, mid]))[::-1]
        else:
            raise ValueError(f"index cannot be represented within tolerance {tol!r}")
        self.max_deviation = float(err.max())
        bottoms = np.concatenate([knots[1:], [-np.inf]])
        # below z_min (never used by a ray) the index stays at its value there
        self.panels = PanelStack(np.concatenate([knots[:-1], [knots[-1]]]), bottoms,
                                 np.concatenate([np.full(knots.size - 1, CUBIC), [UNIFORM]]),
                                 np.vstack([coef, [[n[-1], 0.0, 0.0, 0.0]]]))
        self.info = dict(info or {})

    def _initial_knots(self):
        shallow = -np.arange(0.0, min(200.0, -self.z_min), 2.0)
        deep = -np.geomspace(200.0, -self.z_min, 12) if -self.z_min > 200.0 else np.empty(0)
        return np.unique(np.concatenate([shallow, deep, [self.z_min]]))[::-1]

    def _first_failure(self, z):
        """The first height [m] at which the function raises when called alone, or None."""
        for value in np.ravel(z):
            try:
                self.function(np.array([value]))
            except Exception:
                return float(value)
        return None

    def _call(self, z):
        try:
            out = np.asarray(self.function(np.asarray(z, dtype=float)), dtype=float)
        except Exception as err:
            where = self._first_failure(z)
            at = (f"first failing at z = {where!r} m" if where is not None else
                  "no single height fails alone: is it vectorised over an array of heights?")
            raise ValueError(f"index raised {type(err).__name__}: {err} ({at})") from err
        if out.shape != np.shape(z):
            raise ValueError(f"index must return an array of the shape of its input "
                             f"{np.shape(z)}, got {out.shape}")
        bad = np.flatnonzero(~np.isfinite(out))
        if bad.size:
            raise ValueError(f"index returned {float(out.flat[bad[0]])!r} at z = "
                             f"{float(np.ravel(z)[bad[0]])!r} m; expected a finite index")
        return out

    def _values(self, knots):
        h = 1e-3
        n = self._call(knots)
        # fourth-order differences, one-sided downwards within 2h of the surface
        central = knots < -2.0 * h
        zc = knots[central]
        slope = np.empty_like(knots)
        f = self._call(np.concatenate([zc + 2 * h, zc + h, zc - h, zc - 2 * h])).reshape(4, -1)
        slope[central] = (-f[0] + 8.0 * f[1] - 8.0 * f[2] + f[3]) / (12.0 * h)
        zt = knots[~central]
        g = self._call(np.concatenate([zt - k * h for k in range(1, 5)])).reshape(4, -1)
        n0 = n[~central]
        # d/dz from samples at z, z-h, ..., z-4h
        slope[~central] = (25.0 * n0 - 48.0 * g[0] + 36.0 * g[1] - 16.0 * g[2]
                           + 3.0 * g[3]) / (12.0 * h)
        return n, slope

    def _check_air_index(self, z, n):
        low = np.flatnonzero(n < self.n_air)
        if low.size:
            k = low[np.argmax(z[low])]
            raise ValueError(f"index must be >= n_air ({self.n_air}) everywhere, got "
                             f"{float(n[k])!r} at z = {float(z[k])!r} m")

    def index(self, z):
        """Refractive index at height ``z`` [m] from the function (scalar or array) [1]."""
        zz = np.asarray(z, dtype=float)
        n = np.where(zz > 0.0, self.n_air,
                     self._call(np.minimum(zz, 0.0).ravel()).reshape(zz.shape))
        return float(n) if n.ndim == 0 else n

    def __repr__(self):
        name = getattr(self.function, "__name__", type(self.function).__name__)
        return (f"FunctionProfile({name}, {len(self.panels)} panels, n_air={self.n_air!r}, "
                f"z_min={self.z_min!r}, tolerance={self.tolerance!r})")


class PanelProfile(_PanelProfile):
    """A profile given directly as its panel stack (as stored in lookup tables).

    The stack may describe any finite index >= n_air, monotone or not.

    Parameters
    ----------
    top : array_like, shape (M,)
        Panel tops [m], strictly decreasing from 0; panel k reaches down to
        top[k+1] (the last to -inf).
    kind : array_like of int, shape (M,)
        Panel kinds (``firnray.medium.panels``).
    coef : array_like, shape (M, 4)
        Panel coefficients.
    n_air : float, optional
        Index above the surface [1].
    z_min : float, optional
        Lowest valid height [m].
    info : dict, optional
        Metadata.

    Raises
    ------
    ValueError
        For tops that do not start at 0 or do not decrease strictly, an
        unknown kind code, coefficients of the wrong shape or not finite, or
        a panel whose index falls below ``n_air`` (its lowest value, at an
        end or at an interior extremum of a cubic, is checked).
    """

    def __init__(self, top, kind, coef, n_air=1.0, z_min=DEFAULT_Z_MIN, info=None):
        self.n_air, self.z_min = _check_air(n_air, z_min)
        t = np.asarray(top, dtype=float)
        if t.ndim != 1 or t.size < 1 or t[0] != 0.0 or np.any(np.diff(t) >= 0.0):
            raise ValueError(f"top must be strictly decreasing panel tops from 0 m, got {top!r}")
        k = np.asarray(kind, dtype=np.int64)
        if k.shape != t.shape or not np.all(np.isin(k, (EXPONENTIAL, CUBIC, UNIFORM))):
            raise ValueError(f"kind must hold one code (0, 1 or 2) per panel, got {kind!r}")
        c = np.asarray(coef, dtype=float)
        if c.shape != (t.size, 4) or not np.all(np.isfinite(c)):
            raise ValueError(f"coef must be a finite ({t.size}, 4) array, got shape {c.shape}")
        self.panels = PanelStack(t, np.concatenate([t[1:], [-np.inf]]), k, c)
        z_low, n_low = _panel_minima(self.panels)
        below = np.flatnonzero(n_low < self.n_air)
        if below.size:
            j = int(below[0])
            raise ValueError(f"the panels must give an index >= n_air ({self.n_air}); panel {j} "
                             f"reaches {float(n_low[j])!r} at z = {float(z_low[j])!r} m")
        self.info = dict(info or {})

    def __repr__(self):
        return (f"PanelProfile({len(self.panels)} panels, n_air={self.n_air!r}, "
                f"z_min={self.z_min!r})")


def _panel_minima(stack):
    """Lowest index of each panel [1] and a height where it is reached [m].

    Exponential and uniform panels are monotone, so their ends bound them
    (the limit ``a`` for an exponential panel reaching to -inf); a cubic
    panel is also checked at the interior zeros of its derivative.
    """
    top, bottom, kind, coef = stack.top, stack.bottom, stack.kind, stack.coef
    z_best = top.copy()
    n_best = stack.n_top.copy()
    for j in range(top.size):
        val, z_at = n_best[j], z_best[j]
        if kind[j] == EXPONENTIAL:
            a, s, _, d = coef[j]
            if np.isfinite(bottom[j]):
                val, z_at = a - d * math.exp((bottom[j] - top[j]) / s), bottom[j]
            else:
                val, z_at = a, -np.inf
        elif kind[j] == CUBIC and np.isfinite(bottom[j]):
            c0, c1, c2, c3 = coef[j]
            cand = [0.0]
            if c3 != 0.0:
                disc = 4.0 * c2 * c2 - 12.0 * c3 * c1
                if disc >= 0.0:
                    r = math.sqrt(disc)
                    cand += [(-2.0 * c2 + r) / (6.0 * c3), (-2.0 * c2 - r) / (6.0 * c3)]
            elif c2 != 0.0:
                cand.append(-c1 / (2.0 * c2))
            cand = [u for u in cand if 0.0 <= u <= 1.0]
            vals = [c0 + u * (c1 + u * (c2 + u * c3)) for u in cand]
            i = int(np.argmin(vals))
            val, z_at = vals[i], bottom[j] + cand[i] * (top[j] - bottom[j])
        if val < n_best[j]:
            n_best[j], z_best[j] = val, z_at
    return z_best, n_best
