"""Index profiles beyond one exponential: piecewise exponential, tabulated, any function.

All three are monotone (n rises with depth), give ``n_air`` above the surface
and describe themselves to the ray solver as a :class:`~firnray.medium.panels.PanelStack`:

* ``PiecewiseExponentialProfile``: exponential pieces joined continuously at
  break heights, each panel solved in closed form;
* ``TabulatedProfile``: samples (z, n) joined by the monotone piecewise cubic
  Hermite interpolant of Fritsch & Carlson, held constant below the deepest
  sample; cubic panels, solved by quadrature;
* ``FunctionProfile``: any vectorised callable n(z), represented by cubic
  Hermite panels refined until they match the callable to ``tolerance``;
  solved by quadrature.
"""

import hashlib
import math

import numpy as np

from firnray.checks import finite_float
from firnray.medium.panels import (CUBIC, EXPONENTIAL, UNIFORM, PanelStack, evaluate_panels,
                                   hermite_coefficients)
from firnray.medium.profiles import DEFAULT_Z_MIN, IndexProfile


def _check_air(n_air, z_min):
    n_air = finite_float("n_air", n_air)
    if n_air < 1.0:
        raise ValueError(f"n_air must be >= 1, got {n_air!r}")
    z_min = finite_float("z_min", z_min)
    if not z_min < 0.0:
        raise ValueError(f"z_min must be below the surface (< 0 m), got {z_min!r}")
    return n_air, z_min


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
                                 f"({n_top!r}) so that n rises with depth, got {deep[k]!r}")
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
    """Index samples joined by a monotone cubic interpolant (rays by quadrature).

    Parameters
    ----------
    z : array_like, shape (K,)
        Sample heights [m], strictly decreasing from 0 (the first sample is the
        surface), K >= 2.
    n : array_like, shape (K,)
        Index at each sample [1], strictly increasing with depth, n[0] > n_air.
    n_air : float, optional
        Index above the surface [1] (default 1.0).
    z_min : float, optional
        Lowest valid height [m] (default -5000 m); below the deepest sample
        the index stays at ``n[-1]``.
    info : dict, optional
        Name, description and source of the samples.

    Notes
    -----
    Between samples the index follows the piecewise cubic Hermite interpolant
    with the knot slopes of :func:`pchip_slopes` (continuous n and dn/dz,
    monotone, no overshoot).  Below the deepest sample n is held at its last
    value, so dn/dz jumps to zero there.
    """

    def __init__(self, z, n, n_air=1.0, z_min=DEFAULT_Z_MIN, info=None):
        self.n_air, self.z_min = _check_air(n_air, z_min)
        zz = np.asarray(z, dtype=float)
        nn = np.asarray(n, dtype=float)
        if zz.ndim != 1 or nn.ndim != 1 or zz.size != nn.size or zz.size < 2:
            raise ValueError(f"z and n must be 1-D arrays of the same length >= 2, got shapes "
                             f"{zz.shape} and {nn.shape}")
        for name, arr in (("z", zz), ("n", nn)):
            bad = np.flatnonzero(~np.isfinite(arr))
            if bad.size:
                raise ValueError(f"{name}[{bad[0]}] must be finite, got {arr[bad[0]]!r}")
        if zz[0] != 0.0:
            raise ValueError(f"z[0] must be 0 (the first sample is the surface), got {zz[0]!r}")
        step = np.flatnonzero(np.diff(zz) >= 0.0)
        if step.size:
            k = step[0] + 1
            raise ValueError(f"z must be strictly decreasing (depths sorted from the surface "
                             f"down): z[{k}] = {zz[k]!r} is not below z[{k - 1}] = {zz[k - 1]!r}")
        rise = np.flatnonzero(np.diff(nn) <= 0.0)
        if rise.size:
            k = rise[0] + 1
            raise ValueError(f"n must be strictly increasing with depth: n[{k}] = {nn[k]!r} at "
                             f"z = {zz[k]!r} m is not above n[{k - 1}] = {nn[k - 1]!r}")
        if not nn[0] > self.n_air:
            raise ValueError(f"n[0] (the surface index) must be greater than n_air "
                             f"({self.n_air}), got {nn[0]!r}")
        if zz[-1] < self.z_min:
            raise ValueError(f"the deepest sample z[-1] = {zz[-1]!r} m lies below z_min "
                             f"({self.z_min} m)")
        self.z = zz.copy()
        self.n = nn.copy()
        slopes = pchip_slopes(zz[::-1], nn[::-1])[::-1]
        coef = np.vstack([hermite_coefficients(zz, nn, slopes), [[nn[-1], 0.0, 0.0, 0.0]]])
        kind = np.concatenate([np.full(zz.size - 1, CUBIC), [UNIFORM]])
        self.slopes = slopes
        self.panels = PanelStack(zz, np.concatenate([zz[1:], [-np.inf]]), kind, coef)
        self.info = dict(info or {})

    def __repr__(self):
        digest = hashlib.sha256(self.z.tobytes() + self.n.tobytes()).hexdigest()[:12]
        return (f"TabulatedProfile({self.z.size} samples from z = 0 to {float(self.z[-1])!r} m, "
                f"n = {float(self.n[0])!r} .. {float(self.n[-1])!r}, n_air={self.n_air!r}, "
                f"z_min={self.z_min!r}, samples sha256 {digest})")


#: Default largest deviation of the panel representation from the callable [1].
FUNCTION_TOLERANCE = 1e-10
#: Most panels a FunctionProfile may use.
MAX_FUNCTION_PANELS = 20000


class FunctionProfile(_PanelProfile):
    """Any monotone index function n(z) (rays by quadrature).

    Parameters
    ----------
    index : callable
        Maps an array of heights z <= 0 [m] to an array of indices [1] of the
        same shape; n must not decrease with depth and must exceed n_air.
    n_air : float, optional
        Index above the surface [1] (default 1.0).
    z_min : float, optional
        Lowest valid height [m] (default -5000 m).
    tolerance : float, optional
        Largest allowed deviation [1] of the solver's representation from
        ``index`` (default 1e-10).
    info : dict, optional
        Name and description.

    Notes
    -----
    The solver cannot call Python inside its compiled loops, so the function
    is represented by cubic Hermite panels: knot values from ``index``, knot
    slopes by a fourth-order finite difference, panels halved until the cubic
    matches ``index`` at t = 1/4, 1/2, 3/4 of every panel within
    ``tolerance`` (``max_deviation`` holds the largest deviation seen).
    ``index(z)`` of this object calls the function itself.

    Raises
    ------
    ValueError
        If ``index`` is not callable, returns the wrong shape or non-finite
        values, decreases with depth, or cannot be represented within
        ``tolerance`` by MAX_FUNCTION_PANELS panels.
    """

    def __init__(self, index, n_air=1.0, z_min=DEFAULT_Z_MIN, tolerance=FUNCTION_TOLERANCE,
                 info=None):
        if not callable(index):
            raise ValueError(f"index must be a callable mapping heights [m] to indices, "
                             f"got {index!r}")
        self.n_air, self.z_min = _check_air(n_air, z_min)
        tol = finite_float("tolerance", tolerance)
        if not tol > 0.0:
            raise ValueError(f"tolerance must be > 0, got {tolerance!r}")
        self.function = index
        self.tolerance = tol
        knots = self._initial_knots()
        for _ in range(60):
            n, slope = self._values(knots)
            coef = hermite_coefficients(knots, n, slope)
            t = np.array([0.25, 0.5, 0.75])
            zc = knots[1:, None] + (knots[:-1] - knots[1:])[:, None] * t[None, :]
            cubic = coef[:, :1] + t * (coef[:, 1:2] + t * (coef[:, 2:3] + t * coef[:, 3:4]))
            truth = self._call(zc.ravel()).reshape(zc.shape)
            self._check_monotone(np.concatenate([knots, zc.ravel()]),
                                 np.concatenate([n, truth.ravel()]))
            err = np.max(np.abs(cubic - truth), axis=1)
            bad = err > tol
            if not bad.any():
                break
            if knots.size + bad.sum() > MAX_FUNCTION_PANELS:
                worst = int(np.argmax(err))
                raise ValueError(f"index cannot be represented within tolerance {tol!r} by "
                                 f"{MAX_FUNCTION_PANELS} panels (deviation {err[worst]:.3g} near "
                                 f"z = {knots[worst]:.6g} m); is it smooth and monotone?")
            mid = 0.5 * (knots[:-1] + knots[1:])[bad]
            knots = np.sort(np.concatenate([knots, mid]))[::-1]
        else:
            raise ValueError(f"index cannot be represented within tolerance {tol!r}")
        self.max_deviation = float(err.max())
        if not n[0] > self.n_air:
            raise ValueError(f"index(0) must be greater than n_air ({self.n_air}), got {n[0]!r}")
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

    def _call(self, z):
        try:
            out = np.asarray(self.function(np.asarray(z, dtype=float)), dtype=float)
        except Exception as err:
            raise ValueError(f"index raised {type(err).__name__}: {err}") from err
        if out.shape != np.shape(z):
            raise ValueError(f"index must return an array of the shape of its input "
                             f"{np.shape(z)}, got {out.shape}")
        bad = np.flatnonzero(~np.isfinite(out))
        if bad.size:
            raise ValueError(f"index returned {out.flat[bad[0]]!r} at z = "
                             f"{np.ravel(z)[bad[0]]!r} m; expected a finite index")
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

    def _check_monotone(self, z, n):
        order = np.argsort(-z)
        zs, ns = z[order], n[order]
        drop = np.flatnonzero(np.diff(ns) < -1e-12)
        if drop.size:
            k = drop[0]
            raise ValueError(f"index must not decrease with depth: n({zs[k + 1]:.6g} m) = "
                             f"{ns[k + 1]!r} < n({zs[k]:.6g} m) = {ns[k]!r}")

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
        if np.any(np.diff(self.panels.n_top) < -1e-12):
            raise ValueError("the panels must give an index that does not decrease with depth")
        self.info = dict(info or {})

    def __repr__(self):
        return (f"PanelProfile({len(self.panels)} panels, n_air={self.n_air!r}, "
                f"z_min={self.z_min!r})")
