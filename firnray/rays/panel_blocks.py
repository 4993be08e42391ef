"""Moment expansion of the ray integrals over aligned blocks of cubic panels.

Away from the top of a ray piece, w^2 = n^2 - b^2 varies little across a
block of cubic panels compared with its size.  With
n_m^2 = (n_top^2 + n_bottom^2) / 2 over the block, A = n_m^2 - b^2 and
u(z) = n(z)^2 - n_m^2 (|u| <= u_max = (n_bottom^2 - n_top^2) / 2),
the binomial series (``docs/theory.md`` section 11.3)::

    (A + u)^(-1/2) = A^(-1/2) sum_j C_j (u / A)^j,   C_j = binom(-1/2, j)

gives, with the block moments U_j = int u^j dz and V_j = int n u^j dz,

    X = b A^(-1/2) sum_j C_j U_j / A^j
    L =   A^(-1/2) sum_j C_j V_j / A^j
    c T = A^(-1/2) sum_j C_j (n_m^2 U_j + U_(j+1)) / A^j
    dX/db = X / b + (2 b^2 / A) A^(-1/2) sum_j (j + 1/2) C_j U_j / A^j

The blocks form a dyadic hierarchy: on level l a block holds 2^l panels and
starts at a multiple of 2^l, for l = 0 (single panels) up to the level whose
block covers the whole stack.  A ray piece is summed from its top downwards
by the largest aligned block that lies inside the piece and passes the
series test u_max / A <= ratio (``RATIO`` for exact evaluations), so blocks
grow geometrically away from the top where A is small and a piece through
M panels takes O(log M) series instead of M quadratures.  Terms beyond
``ORDER`` are below RATIO^(ORDER+1) ~ 1e-13 of the sum.  The moments are
exact integrals of polynomials (Gauss-Legendre with enough nodes), computed
once per profile and cached.
"""

import weakref

import numpy as np

from firnray.medium.panels import panel_index_range

#: Highest power of u / A kept.
ORDER = 24
#: Largest u_max / A for which a block is summed by its moments (exact evaluations).
RATIO = 0.3
#: Gauss-Legendre nodes per panel for the moments: exact for polynomials of degree
#: 2 * NODES - 1 >= 6 (ORDER + 1) + 3 (u^(ORDER+1) times n, u of degree 6 in t).
NODES = 3 * ORDER + 8

_CACHE = weakref.WeakKeyDictionary()


def _series_coefficients():
    """C_j = binom(-1/2, j) for j = 0 .. ORDER."""
    j = np.arange(ORDER)
    return np.cumprod(np.concatenate([[1.0], -(2.0 * j + 1.0) / (2.0 * j + 2.0)]))


def _panel_nodes(stack):
    """Index n at the Gauss-Legendre nodes of every panel, shape (M, NODES), and
    the weights times the panel heights [m] (zero for non-cubic panels)."""
    x, w = np.polynomial.legendre.leggauss(NODES)
    t = 0.5 * (x + 1.0)
    c = stack.coef
    n = c[:, :1] + t * (c[:, 1:2] + t * (c[:, 2:3] + t * c[:, 3:4]))
    h = stack.top - stack.bottom
    cubic = stack.kind == 1
    h = np.where(cubic & np.isfinite(h), h, 0.0)
    return np.where(cubic[:, None], n, 0.0), h[:, None] * (0.5 * w)[None, :]


def _level(stack, n_nodes, weights, level):
    """ok, n_m [1], u_max [1] and series (blocks, 4, ORDER + 1) [m] of the blocks of
    2^level panels."""
    size = 1 << level
    m = len(stack)
    nb = max(m // size, 1)
    used = nb * size if m >= size else 0
    ok = np.zeros(nb, dtype=np.bool_)
    n_m = np.zeros(nb)
    u_max = np.zeros(nb)
    series = np.zeros((nb, 4, ORDER + 1))
    if used == 0:
        return ok, n_m, u_max, series
    kinds = stack.kind[:used].reshape(nb, size)
    ok[:] = np.all(kinds == 1, axis=1)
    if not ok.any():
        return ok, n_m, u_max, series
    # the index range of each block (non-monotone blocks included): n_m^2 is the
    # middle of [min n^2, max n^2] and |u| <= u_max over the block
    p_lo, p_hi = panel_index_range(stack)
    n_low = p_lo[:used].reshape(nb, size).min(axis=1)
    n_high = p_hi[:used].reshape(nb, size).max(axis=1)
    n_high = np.where(ok, n_high, n_low)
    n_m2 = 0.5 * (n_low ** 2 + n_high ** 2)
    nn = n_nodes[:used].reshape(nb, size * n_nodes.shape[1])
    ww = weights[:used].reshape(nb, size * n_nodes.shape[1])
    u = nn * nn - n_m2[:, None]
    U = np.empty((nb, ORDER + 2))
    V = np.empty((nb, ORDER + 1))
    power = ww.copy()                 # weights times u^j
    for j in range(ORDER + 2):
        U[:, j] = power.sum(axis=1)
        if j <= ORDER:
            V[:, j] = (power * nn).sum(axis=1)
        power *= u
    coeff = _series_coefficients()
    j = np.arange(ORDER + 1)
    series[:, 0] = coeff * U[:, :ORDER + 1]
    series[:, 1] = coeff * V
    series[:, 2] = coeff * (n_m2[:, None] * U[:, :ORDER + 1] + U[:, 1:])
    series[:, 3] = (j + 0.5) * coeff * U[:, :ORDER + 1]
    n_m[:] = np.sqrt(n_m2)
    u_max[:] = 0.5 * (n_high ** 2 - n_low ** 2)
    series[~ok] = 0.0
    return ok, n_m, u_max, series


def solver_arrays(stack):
    """The tuple of arrays the panel solver reads for a ``PanelStack`` (cached).

    (top, bottom, kind, coef, n_top), the stack's own arrays, then the block
    hierarchy: ``offset`` (int64, levels + 1), where the blocks of level l
    start in the flat block arrays (block i of level l, panels i 2^l to
    (i + 1) 2^l - 1, is entry offset[l] + i), and per block whether it is all
    cubic, n_m [1], u_max [1] and the series coefficients (block, 4, ORDER + 1).
    """
    cached = _CACHE.get(stack)
    if cached is not None:
        return cached
    m = len(stack)
    levels = max(m - 1, 0).bit_length() + 1      # the top level covers the stack
    n_nodes, weights = _panel_nodes(stack)
    parts = [_level(stack, n_nodes, weights, level) for level in range(levels)]
    offset = np.zeros(levels + 1, dtype=np.int64)
    offset[1:] = np.cumsum([p[0].shape[0] for p in parts])
    ok = np.concatenate([p[0] for p in parts])
    n_m = np.concatenate([p[1] for p in parts])
    u_max = np.concatenate([p[2] for p in parts])
    series = np.ascontiguousarray(np.concatenate([p[3] for p in parts]))
    arrays = stack.arrays + (offset, ok, n_m, u_max, series)
    _CACHE[stack] = arrays
    return arrays
