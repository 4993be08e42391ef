"""Moment expansion of the ray integrals over blocks of cubic panels far from the ray's top.

Away from the top of a ray piece, w^2 = n^2 - b^2 varies little across a
block of ``BLOCK`` cubic panels compared with its size.  With
n_m^2 = (n_top^2 + n_bottom^2) / 2 over the block, A = n_m^2 - b^2 and
u(z) = n(z)^2 - n_m^2 (|u| <= u_max = (n_bottom^2 - n_top^2) / 2),
the binomial series (``docs/theory.md`` section 11.3)::

    (A + u)^(-1/2) = A^(-1/2) sum_j C_j (u / A)^j,   C_j = binom(-1/2, j)

gives, with the block moments U_j = int u^j dz and V_j = int n u^j dz,

    X = b A^(-1/2) sum_j C_j U_j / A^j
    L =   A^(-1/2) sum_j C_j V_j / A^j
    c T = A^(-1/2) sum_j C_j (n_m^2 U_j + U_(j+1)) / A^j

The series is used only where u_max / A <= ``RATIO``, so that the terms
beyond ``ORDER`` are below RATIO^(ORDER+1) ~ 1e-14 of the sum; elsewhere
the panels are integrated one by one by quadrature.  The moments are exact
integrals of polynomials (Gauss-Legendre with enough nodes), computed once
per profile.
"""

import weakref

import numpy as np

#: Cubic panels per block, on two levels: coarse blocks of COARSE panels made of
#: fine blocks of BLOCK panels.
BLOCK = 8
COARSE = 64
#: Highest power of u / A kept.
ORDER = 16
#: Largest u_max / A for which a block is summed by its moments.
RATIO = 0.15

_CACHE = weakref.WeakKeyDictionary()


def _moments(stack, first, size):
    """n_m [1], u_max [1] and the series coefficients, shape (3, ORDER + 1) [m]:
    C_j U_j, C_j V_j and C_j (n_m^2 U_j + U_(j+1)), of the block of ``size``
    panels from panel ``first``."""
    x, w = np.polynomial.legendre.leggauss(56)
    t = 0.5 * (x + 1.0)
    wt = 0.5 * w
    ks = np.arange(first, first + size)
    n_top = stack.n_top[first]
    c = stack.coef[ks]
    n = c[:, :1] + t * (c[:, 1:2] + t * (c[:, 2:3] + t * c[:, 3:4]))   # (size, nodes)
    n_bottom = c[-1, 0]
    n_m2 = 0.5 * (n_top ** 2 + n_bottom ** 2)
    u = n * n - n_m2
    h = (stack.top[ks] - stack.bottom[ks])[:, None]
    powers = u[None, :, :] ** np.arange(ORDER + 2)[:, None, None]
    U = np.sum(powers * (h * wt)[None], axis=(1, 2))
    V = np.sum(powers[:ORDER + 1] * (n * h * wt)[None], axis=(1, 2))
    coeff = np.cumprod(np.concatenate([[1.0], -(2.0 * np.arange(ORDER) + 1.0)
                                       / (2.0 * np.arange(ORDER) + 2.0)]))
    # series coefficients of X / b, L and c T in powers of 1/A (times A^(-1/2))
    series = np.vstack([coeff * U[:ORDER + 1], coeff * V, coeff * (n_m2 * U[:ORDER + 1] + U[1:])])
    return np.sqrt(n_m2), 0.5 * (n_bottom ** 2 - n_top ** 2), series


def _level(stack, size):
    m = len(stack)
    nb = max(m // size, 1)
    ok = np.zeros(nb, dtype=np.bool_)
    n_m = np.zeros(nb)
    u_max = np.zeros(nb)
    series = np.zeros((nb, 3, ORDER + 1))
    for j in range(m // size):
        first = j * size
        if np.all(stack.kind[first:first + size] == 1):
            ok[j] = True
            n_m[j], u_max[j], series[j] = _moments(stack, first, size)
    return ok, n_m, u_max, series


def solver_arrays(stack):
    """The tuple of arrays the panel solver reads for a ``PanelStack`` (cached).

    (top, bottom, kind, coef, n_top), the stack's own arrays, then for the
    fine blocks (BLOCK panels) and the coarse ones (COARSE panels), aligned on
    multiples of their size: whether the block is all cubic, n_m, u_max and
    the series coefficients (block, 3, ORDER + 1).
    """
    cached = _CACHE.get(stack)
    if cached is not None:
        return cached
    arrays = stack.arrays + _level(stack, BLOCK) + _level(stack, COARSE)
    _CACHE[stack] = arrays
    return arrays
