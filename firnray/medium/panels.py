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
