"""A profile as a stack of horizontal panels, the form the ray solver reads.

Every index profile of firnray can describe itself as panels ``k = 0 .. M-1``
stacked from the surface down: panel ``k`` spans heights
``bottom[k] < z <= top[k]`` with ``top[0] = 0``, ``top[k+1] = bottom[k]`` and
the last ``bottom = -inf``.  Inside a panel ``n(z)`` has one of three forms
(``coef`` holds four numbers per panel)::

    EXPONENTIAL  n = a - d exp((z - top) / s)          coef = (a, s, n_top, d),  d = a - n_top
    CUBIC        n = c0 + c1 t + c2 t^2 + c3 t^3,      t = (z - bottom) / (top - bottom)
    UNIFORM      n = c0

The ray solver integrates exponential panels in closed form, cubic panels by
quadrature and uniform panels as straight lines (``docs/theory.md`` section 11).
"""

import numpy as np

#: Index changes [1] below this count as flat when telling monotone profiles and
#: local minima (above the 1e-10 default deviation of a function profile's panels,
#: whose Hermite fit wiggles by about that much in deep ice).
FLAT_TOLERANCE = 1e-9

#: Panel kind codes.
EXPONENTIAL, CUBIC, UNIFORM = 0, 1, 2


class PanelStack:
    """Arrays describing a profile panel by panel (see the module docstring).

    Attributes
    ----------
    top, bottom : ndarray, shape (M,)
        Heights bounding each panel [m]; ``bottom[-1] = -inf``.
    kind : ndarray of int64, shape (M,)
        Panel kind codes.
    coef : ndarray, shape (M, 4)
        Panel coefficients.
    n_top : ndarray, shape (M,)
        Index at the top of each panel [1] (non-decreasing with k).
    """

    def __init__(self, top, bottom, kind, coef):
        self.top = np.ascontiguousarray(top, dtype=float)
        self.bottom = np.ascontiguousarray(bottom, dtype=float)
        self.kind = np.ascontiguousarray(kind, dtype=np.int64)
        self.coef = np.ascontiguousarray(np.reshape(coef, (-1, 4)), dtype=float)
        self.n_top = evaluate_panels(self, self.top)

    def __len__(self):
        return self.top.shape[0]

    @property
    def arrays(self):
        """(top, bottom, kind, coef, n_top), the arguments of the solver kernels."""
        return self.top, self.bottom, self.kind, self.coef, self.n_top


def panel_of(stack, z):
    """Index of the panel holding each height ``z`` [m] (top[k] >= z > bottom[k])."""
    # tops descend; count the panels whose top is >= z, minus one
    k = np.searchsorted(-stack.top, -np.asarray(z, dtype=float), side="right") - 1
    return np.clip(k, 0, len(stack) - 1)


def evaluate_panels(stack, z):
    """Index n(z) [1] of a panel stack at heights ``z`` <= 0 [m] (array in, array out)."""
    zz = np.asarray(z, dtype=float)
    k = panel_of(stack, zz)
    c = stack.coef[k]
    kind = stack.kind[k]
    top = stack.top[k]
    bottom = stack.bottom[k]
    out = np.empty(zz.shape)
    exp = kind == EXPONENTIAL
    if np.any(exp):
        ce = c[exp]
        out[exp] = ce[..., 0] - ce[..., 3] * np.exp((zz[exp] - top[exp]) / ce[..., 1])
    cub = kind == CUBIC
    if np.any(cub):
        cc = c[cub]
        t = (zz[cub] - bottom[cub]) / (top[cub] - bottom[cub])
        out[cub] = cc[..., 0] + t * (cc[..., 1] + t * (cc[..., 2] + t * cc[..., 3]))
    uni = kind == UNIFORM
    out[uni] = c[uni][..., 0]
    return out


def hermite_coefficients(z, n, slope):
    """Power-basis coefficients of the cubic Hermite pieces through (z, n, dn/dz).

    Parameters
    ----------
    z : ndarray, shape (K,)
        Knot heights, strictly decreasing [m].
    n : ndarray, shape (K,)
        Index at the knots [1].
    slope : ndarray, shape (K,)
        dn/dz at the knots [1/m].

    Returns
    -------
    ndarray, shape (K-1, 4)
        (c0, c1, c2, c3) of each panel between knots k and k+1, in
        t = (z - z[k+1]) / (z[k] - z[k+1]): c0 = n_b, c1 = h d_b,
        c2 = 3 (n_t - n_b) - 2 h d_b - h d_t, c3 = 2 (n_b - n_t) + h d_b + h d_t
        (b: bottom, t: top, h = z[k] - z[k+1]).
    """
    h = z[:-1] - z[1:]
    n_t, n_b = n[:-1], n[1:]
    d_t, d_b = h * slope[:-1], h * slope[1:]
    return np.column_stack([n_b, d_b, 3.0 * (n_t - n_b) - 2.0 * d_b - d_t,
                            2.0 * (n_b - n_t) + d_b + d_t])


def _cubic_critical_points(coef):
    """Interior stationary points t in (0, 1) of each cubic c0 + c1 t + c2 t^2 + c3 t^3.

    Returns an (M, 2) array of t values (NaN where there is none)."""
    c1, c2, c3 = coef[:, 1], coef[:, 2], coef[:, 3]
    out = np.full((coef.shape[0], 2), np.nan)
    qa, qb, qc = 3.0 * c3, 2.0 * c2, c1
    with np.errstate(divide="ignore", invalid="ignore"):
        disc = qb * qb - 4.0 * qa * qc
        sq = np.sqrt(np.maximum(disc, 0.0))
        # stable quadratic roots; the linear case where qa vanishes
        q = -0.5 * (qb + np.copysign(sq, qb))
        r1 = np.where(qa != 0.0, q / qa, np.where(qb != 0.0, -qc / qb, np.nan))
        r2 = np.where((qa != 0.0) & (q != 0.0), qc / q, np.nan)
    for j, r in enumerate((r1, r2)):
        ok = (disc >= 0.0) & (r > 0.0) & (r < 1.0)
        out[:, j] = np.where(ok, r, np.nan)
    return out


def index_turning_levels(stack):
    """Points where the index of a panel stack is stationary, and whether it is monotone.

    Between consecutive knots and interior stationary points of the cubic
    panels n(z) is monotone, so the local minima of n are the local minima
    of that sequence of points (a run of equal values counts as one).

    Parameters
    ----------
    stack : PanelStack

    Returns
    -------
    minima_z : ndarray
        Heights of the local minima of n below the surface [m], highest
        first (for a flat run, its top).
    minima_n : ndarray
        The index there [1].
    monotone : bool
        True if n never decreases with depth.
    """
    tops = stack.top
    cubic = stack.kind == CUBIC
    crit = _cubic_critical_points(stack.coef)
    h = stack.top - stack.bottom
    zc = np.where(cubic[:, None], stack.bottom[:, None] + crit * h[:, None], np.nan)
    z_all = np.concatenate([tops, zc[np.isfinite(zc)]])
    # the bottom of the last finite panel as well (the stack continues uniformly below)
    finite_bottom = stack.bottom[np.isfinite(stack.bottom)]
    z_all = np.unique(np.concatenate([z_all, finite_bottom]))[::-1]
    n_all = evaluate_panels(stack, z_all)
    # decreases below FLAT_TOLERANCE are rounding (or a panel fit's wiggle) of a flat stretch
    monotone = bool(np.all(np.diff(n_all) >= -FLAT_TOLERANCE))
    # collapse runs of equal values, then keep the points lower than both neighbours
    keep = np.concatenate([[True], np.abs(np.diff(n_all)) > FLAT_TOLERANCE])
    zs, ns = z_all[keep], n_all[keep]
    if ns.size < 3:
        return np.empty(0), np.empty(0), monotone
    lower = (ns[1:-1] < ns[:-2]) & (ns[1:-1] < ns[2:])
    idx = np.flatnonzero(lower) + 1
    return zs[idx].copy(), ns[idx].copy(), monotone


def panel_index_range(stack):
    """Smallest and largest index [1] of each panel (over its whole height range).

    Exact for every panel kind: the extremes of a cubic lie at its ends or at
    its interior stationary points; an exponential or uniform panel is
    monotone (the last panel, reaching to -inf, is uniform).
    """
    m = len(stack)
    c = stack.coef
    t_top = np.ones(m)
    n_top = stack.n_top
    n_bottom = np.where(stack.kind == CUBIC, c[:, 0],
                        np.where(stack.kind == UNIFORM, c[:, 0], np.nan))
    exp = stack.kind == EXPONENTIAL
    if np.any(exp):
        finite = exp & np.isfinite(stack.bottom)
        n_bottom = np.where(finite, c[:, 0] - c[:, 3] * np.exp((np.where(finite, stack.bottom, 0.0)
                                                                - stack.top) / np.where(exp, c[:, 1], 1.0)),
                            n_bottom)
        n_bottom = np.where(exp & ~np.isfinite(stack.bottom), c[:, 0], n_bottom)
    lo = np.minimum(n_top, n_bottom)
    hi = np.maximum(n_top, n_bottom)
    crit = _cubic_critical_points(c)
    cubic = stack.kind == CUBIC
    for j in range(2):
        t = crit[:, j]
        ok = cubic & np.isfinite(t)
        tt = np.where(ok, t, 0.0)
        val = c[:, 0] + tt * (c[:, 1] + tt * (c[:, 2] + tt * c[:, 3]))
        lo = np.where(ok, np.minimum(lo, val), lo)
        hi = np.where(ok, np.maximum(hi, val), hi)
    del t_top
    return lo, hi
