"""Ray integrals through a stack of panels (``firnray.medium.panels``), compiled with numba.

A ray with Snell invariant b, carried by its vertical slowness p at a
reference level where the index is n_ref (b^2 = n_ref^2 - p^2), has at every
height the vertical slowness ``w^2 = (n - n_ref)(n + n_ref) + p^2``.  Over a
monotone piece of the ray from z_a up to z_b (``docs/theory.md`` section 11)::

    X = int b / w dz,     L = int n / w dz,     c T = int n^2 / w dz

summed panel by panel:

* exponential panels in closed form (the formulas of ``exponential_kernels``,
  written in the panel's local height z - top, which leaves them unchanged);
* uniform panels as straight lines (w constant);
* cubic panels by Gauss-Legendre quadrature.  Near a turning point z_t
  (w -> 0) the integrands diverge like 1/sqrt(z_t - z); the substitution
  ``z = z_s - v^2`` (dz = -2 v dv) with z_s = z_t makes them smooth and
  bounded in v, so a fixed rule converges fast without step tuning.  A piece
  that does not turn but is nearly horizontal at its top z_b gets the same
  substitution about the virtual turning height
  ``z_s = z_b + w_b^2 / (2 n_b |dn/dz|_b)`` where w^2, extrapolated
  linearly, would vanish.

Panel arguments (``prof``) are the tuple ``PanelStack.arrays``:
(top, bottom, kind, coef, n_top).
"""

import math

import numpy as np

from firnray.rays.exponential_kernels import (kernel, segment_d, segment_extras, turning_d,
                                              turning_extras)

EXPONENTIAL, CUBIC, UNIFORM = 0, 1, 2

_x4, _w4 = np.polynomial.legendre.leggauss(4)
_x8, _w8 = np.polynomial.legendre.leggauss(8)
#: Gauss-Legendre rule for cubic panels away from the top of a piece.
NODES_BULK, WEIGHTS_BULK = _x4.copy(), _w4.copy()
#: Rule for the cubic panel at the top of a piece (turning point or near-grazing).
NODES_TOP, WEIGHTS_TOP = _x8.copy(), _w8.copy()


@kernel
def find_panel(top, z):
    """Index k of the panel with top[k] >= z > top[k+1] (0 for z >= 0)."""
    if z >= top[0]:
        return 0
    lo = 0
    hi = top.shape[0] - 1
    while lo < hi:
        mid = (lo + hi + 1) // 2
        if top[mid] >= z:
            lo = mid
        else:
            hi = mid - 1
    return lo


@kernel
def panel_level(prof, k, z):
    """Index n [1] and slope dn/dz [1/m] at height z [m] inside panel k."""
    top, bottom, kind, coef, n_top = prof
    kd = kind[k]
    if kd == EXPONENTIAL:
        e = coef[k, 3] * math.exp((z - top[k]) / coef[k, 1])
        return coef[k, 0] - e, -e / coef[k, 1]
    if kd == CUBIC:
        h = top[k] - bottom[k]
        t = (z - bottom[k]) / h
        c0, c1, c2, c3 = coef[k, 0], coef[k, 1], coef[k, 2], coef[k, 3]
        return c0 + t * (c1 + t * (c2 + t * c3)), (c1 + t * (2.0 * c2 + 3.0 * t * c3)) / h
    return coef[k, 0], 0.0


@kernel
def index_at(prof, z):
    """Index n(z) [1] at a height z <= 0 [m]."""
    return panel_level(prof, find_panel(prof[0], z), z)[0]


@kernel
def turning_point(prof, b):
    """Panel k and height z_t [m] where n(z_t) = b; k = -1 if b <= n(0) (no turning
    point below the surface)."""
    top, bottom, kind, coef, n_top = prof
    if b <= n_top[0]:
        return -1, 0.0
    lo = 0
    hi = n_top.shape[0] - 1
    while lo < hi:            # the deepest panel whose top index is <= b
        mid = (lo + hi + 1) // 2
        if n_top[mid] <= b:
            lo = mid
        else:
            hi = mid - 1
    k = lo
    kd = kind[k]
    if kd == EXPONENTIAL:
        z_t = top[k] + coef[k, 1] * math.log((coef[k, 0] - b) / coef[k, 3])
        return k, min(max(z_t, bottom[k]), top[k])
    if kd == UNIFORM:
        return k, top[k]
    # cubic: c(t) - b falls from c0 - b >= 0 at t = 0 to n_top - b <= 0 at t = 1
    c0, c1, c2, c3 = coef[k, 0], coef[k, 1], coef[k, 2], coef[k, 3]
    g_lo = c0 - b
    g_hi = n_top[k] - b
    t_lo, t_hi = 0.0, 1.0
    t = g_lo / (g_lo - g_hi) if g_lo != g_hi else 0.5
    for _ in range(60):
        g = c0 - b + t * (c1 + t * (c2 + t * c3))
        if g == 0.0:
            break
        if g > 0.0:
            t_lo = t
        else:
            t_hi = t
        dg = c1 + t * (2.0 * c2 + 3.0 * t * c3)
        t_new = t - g / dg if dg != 0.0 else -1.0
        if not (t_new > t_lo and t_new < t_hi):
            t_new = 0.5 * (t_lo + t_hi)
        if abs(t_new - t) <= 1e-16:
            t = t_new
            break
        t = t_new
    return k, bottom[k] + t * (top[k] - bottom[k])


@kernel
def slowness(n, n_ref, p):
    """Vertical slowness w = sqrt((n - n_ref)(n + n_ref) + p^2) [1], 0 if negative."""
    w2 = (n - n_ref) * (n + n_ref) + p * p
    return math.sqrt(w2) if w2 > 0.0 else 0.0


@kernel
def exponential_piece(prof, k, b, n_ref, p, z1, z2, to_turning):
    """Closed-form X [m], L [m], c T [m] of the part z1 -> z2 of a ray in exponential
    panel k (``exponential_kernels``, equations 2.4-2.8 of the theory); with
    ``to_turning`` the part ends at the turning point."""
    top, bottom, kind, coef, n_top = prof
    a, s, d = coef[k, 0], coef[k, 1], coef[k, 3]
    q = math.sqrt((a - b) * (a + b))
    e1 = d * math.exp((z1 - top[k]) / s)
    n1 = a - e1
    w1 = slowness(n1, n_ref, p)
    if to_turning:
        dd = turning_d(s, 1.0, b, q, e1, n1, w1)
        ln_h, dw = turning_extras(b, n1, w1)
    else:
        e2 = d * math.exp((z2 - top[k]) / s)
        n2 = a - e2
        w2 = slowness(n2, n_ref, p)
        g1 = n1 * e1 + w1 * w1 + q * w1
        g2 = n2 * e2 + w2 * w2 + q * w2
        dn = -e1 * math.expm1((z2 - z1) / s)
        dd = segment_d(a, s, q, z2 - z1, dn, n1, w1, g1, n2, w2, g2)
        ln_h, dw = segment_extras(dn, n1, w1, n2, w2)
    x = b * dd / q
    return x, s * ln_h + a * dd / q, s * dw + a * s * ln_h + q * dd + b * x


@kernel
def cubic_piece(prof, k, b, n_ref, p, z1, z2, z_s, nodes, weights):
    """X [m], L [m], c T [m] of the part z1 -> z2 of a ray in cubic panel k by
    Gauss-Legendre quadrature, in v = sqrt(z_s - z) when z_s is finite."""
    top, bottom, kind, coef, n_top = prof
    h = top[k] - bottom[k]
    c0, c1, c2, c3 = coef[k, 0], coef[k, 1], coef[k, 2], coef[k, 3]
    sub = math.isfinite(z_s)
    if sub:
        v1 = math.sqrt(max(z_s - z2, 0.0))
        v2 = math.sqrt(max(z_s - z1, 0.0))
    else:
        v1, v2 = z1, z2
    mid = 0.5 * (v1 + v2)
    half = 0.5 * (v2 - v1)
    x = 0.0
    ln = 0.0
    ct = 0.0
    for j in range(nodes.shape[0]):
        v = mid + half * nodes[j]
        if sub:
            z = z_s - v * v
            jac = 2.0 * v * half * weights[j]
        else:
            z = v
            jac = half * weights[j]
        t = (z - bottom[k]) / h
        n = c0 + t * (c1 + t * (c2 + t * c3))
        w2 = (n - n_ref) * (n + n_ref) + p * p
        inv = jac / math.sqrt(w2) if w2 > 0.0 else math.inf
        x += b * inv
        ln += n * inv
        ct += n * n * inv
    return x, ln, ct


@kernel
def segment(prof, b, n_ref, p, z_a, z_b, to_turning):
    """X [m], L [m] and c T [m] of the monotone piece of a ray from z_a up to z_b.

    Parameters
    ----------
    prof : tuple
        ``PanelStack.arrays``.
    b : float
        Snell invariant [1].
    n_ref, p : float
        Index and vertical slowness at the ray's reference level [1].
    z_a, z_b : float
        Lower and upper height of the piece, z_a <= z_b <= 0 [m].
    to_turning : bool
        The piece ends at the ray's turning point z_b (n(z_b) = b).

    Returns
    -------
    x, length, c_time : float
        Infinite if the ray runs horizontally in a uniform panel.
    """
    top, bottom, kind, coef, n_top = prof
    if not z_b > z_a:
        return 0.0, 0.0, 0.0
    k_top = find_panel(top, z_b)
    z_s = math.inf
    if to_turning:
        z_s = z_b
    elif kind[k_top] == CUBIC:
        n_b, dn_b = panel_level(prof, k_top, z_b)
        if dn_b < 0.0:
            w2 = (n_b - n_ref) * (n_b + n_ref) + p * p
            cand = z_b + max(w2, 0.0) / (2.0 * n_b * -dn_b)
            if cand - z_b < 4.0 * (z_b - z_a) + 1.0:
                z_s = cand
    x = 0.0
    ln = 0.0
    ct = 0.0
    m = top.shape[0]
    k = k_top
    while k < m:
        z2 = min(z_b, top[k])
        z1 = max(z_a, bottom[k])
        if z2 > z1:
            kd = kind[k]
            if kd == EXPONENTIAL:
                dx, dl, dt = exponential_piece(prof, k, b, n_ref, p, z1, z2,
                                               to_turning and k == k_top)
            elif kd == CUBIC:
                if k == k_top:
                    dx, dl, dt = cubic_piece(prof, k, b, n_ref, p, z1, z2, z_s, NODES_TOP,
                                             WEIGHTS_TOP)
                else:
                    dx, dl, dt = cubic_piece(prof, k, b, n_ref, p, z1, z2, z_s, NODES_BULK,
                                             WEIGHTS_BULK)
            else:
                n = coef[k, 0]
                w = slowness(n, n_ref, p)
                dz = z2 - z1
                if w > 0.0:
                    dx, dl, dt = dz * b / w, dz * n / w, dz * n * n / w
                else:
                    dx, dl, dt = math.inf, math.inf, math.inf
            x += dx
            ln += dl
            ct += dt
        if bottom[k] <= z_a:
            break
        k += 1
    return x, ln, ct
