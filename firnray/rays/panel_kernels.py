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

Panel arguments (``prof``) are the tuple of ``panel_blocks.solver_arrays``:
(top, bottom, kind, coef, n_top) and the block moments of ``panel_blocks``,
which replace the quadrature of blocks of cubic panels far below the top of
a piece by a converging series.
"""

import math

import numba
import numpy as np

from firnray.rays.panel_blocks import BLOCK, COARSE, ORDER, RATIO
from firnray.rays.exponential_kernels import (KERNEL_OPTIONS, segment_d, segment_extras, turning_d,
                                              turning_extras)

EXPONENTIAL, CUBIC, UNIFORM = 0, 1, 2

def lean_kernel(func):
    """A kernel compiled without numba's reference counting (``_nrt=False``).

    The panel arrays travel as a tuple through several levels of calls; with
    reference counting every call increments and decrements each array's
    count (atomic operations shared between threads), which cost more than
    the integrals themselves.  None of these kernels allocates memory.
    """
    return numba.njit(_nrt=False, **KERNEL_OPTIONS)(func)


_x4, _w4 = np.polynomial.legendre.leggauss(3)
_x8, _w8 = np.polynomial.legendre.leggauss(8)
#: Gauss-Legendre rule for cubic panels away from the top of a piece.
NODES_BULK, WEIGHTS_BULK = _x4.copy(), _w4.copy()
#: Largest relative change of the integrand's smooth factor across one quadrature part.
PART_CHANGE = 0.03
#: Coarse evaluations (scans): 2 nodes per part, larger parts, a looser block series.
_x2, _w2 = np.polynomial.legendre.leggauss(2)
NODES_COARSE, WEIGHTS_COARSE = _x2.copy(), _w2.copy()
COARSE_PART_CHANGE = 0.25
COARSE_RATIO = 0.3
#: Rule for the cubic panel at the top of a piece (turning point or near-grazing).
NODES_TOP, WEIGHTS_TOP = _x8.copy(), _w8.copy()


@lean_kernel
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


@lean_kernel
def panel_level(prof, k, z):
    """Index n [1] and slope dn/dz [1/m] at height z [m] inside panel k."""
    top, bottom, kind, coef, n_top = prof[0], prof[1], prof[2], prof[3], prof[4]
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


@lean_kernel
def index_at(prof, z):
    """Index n(z) [1] at a height z <= 0 [m]."""
    return panel_level(prof, find_panel(prof[0], z), z)[0]


@lean_kernel
def turning_point(prof, b):
    """Panel k and height z_t [m] where n(z_t) = b; k = -1 if b <= n(0) (no turning
    point below the surface)."""
    top, bottom, kind, coef, n_top = prof[0], prof[1], prof[2], prof[3], prof[4]
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


@lean_kernel
def slowness(n, n_ref, p):
    """Vertical slowness w = sqrt((n - n_ref)(n + n_ref) + p^2) [1], 0 if negative."""
    w2 = (n - n_ref) * (n + n_ref) + p * p
    return math.sqrt(w2) if w2 > 0.0 else 0.0


@lean_kernel
def exponential_piece(prof, k, b, n_ref, p, z1, z2, to_turning):
    """Closed-form X [m], L [m], c T [m] of the part z1 -> z2 of a ray in exponential
    panel k (``exponential_kernels``, equations 2.4-2.8 of the theory); with
    ``to_turning`` the part ends at the turning point."""
    top, bottom, kind, coef, n_top = prof[0], prof[1], prof[2], prof[3], prof[4]
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


@lean_kernel
def cubic_piece(prof, k, b, n_ref, p, z1, z2, z_s, nodes, weights, part_change):
    """X [m], L [m], c T [m] of the part z1 -> z2 of a ray in cubic panel k by
    Gauss-Legendre quadrature, in v = sqrt(z_s - z) when z_s is finite.

    The piece is cut into equal parts (in v, or in z) so that on each the
    integrand changes little: without the substitution the relative change
    of w^2 across a part, with it the relative change of w^2 / (z_s - z)
    (which the substitution makes constant where w^2 is linear in z), both
    judged from the ends and the middle of the piece, stay below ``part_change`` (``PART_CHANGE``, or ``COARSE_PART_CHANGE`` for the
    scans); the error of the fixed rule then stays small whatever the panel
    length.
    """
    top, bottom, kind, coef, n_top = prof[0], prof[1], prof[2], prof[3], prof[4]
    h = top[k] - bottom[k]
    c0, c1, c2, c3 = coef[k, 0], coef[k, 1], coef[k, 2], coef[k, 3]
    inv_h = 1.0 / h
    pp = p * p
    sub = math.isfinite(z_s)
    zm = 0.5 * (z1 + z2)
    t1 = (z1 - bottom[k]) * inv_h
    t2 = (z2 - bottom[k]) * inv_h
    tm = (zm - bottom[k]) * inv_h
    n1 = c0 + t1 * (c1 + t1 * (c2 + t1 * c3))
    n2 = c0 + t2 * (c1 + t2 * (c2 + t2 * c3))
    nm = c0 + tm * (c1 + tm * (c2 + tm * c3))
    w1 = (n1 - n_ref) * (n1 + n_ref) + pp
    w2 = (n2 - n_ref) * (n2 + n_ref) + pp
    wm = (nm - n_ref) * (nm + n_ref) + pp
    if sub:
        v1 = math.sqrt(max(z_s - z2, 0.0))
        v2 = math.sqrt(max(z_s - z1, 0.0))
        g1 = w1 / (z_s - z1)
        gm = wm / (z_s - zm)
        if z_s - z2 > 1e-9 * (z_s - z1):
            g2 = w2 / (z_s - z2)
        else:                      # the turning point: the slope of w^2 there
            g2 = -2.0 * n2 * (c1 + t2 * (2.0 * c2 + 3.0 * t2 * c3)) * inv_h
    else:
        v1, v2 = z1, z2
        g1, gm, g2 = w1, wm, w2
    g_lo = min(g1, min(gm, g2))
    g_hi = max(g1, max(gm, g2))
    change = (g_hi - g_lo) / g_lo if g_lo > 0.0 else 1e4
    parts = 1 + int(min(change, 1e4) / part_change)
    width = (v2 - v1) / parts
    half = 0.5 * width
    x = 0.0
    ln = 0.0
    ct = 0.0
    for part in range(parts):
        mid = v1 + (part + 0.5) * width
        for j in range(nodes.shape[0]):
            v = mid + half * nodes[j]
            z = z_s - v * v if sub else v
            jac = (2.0 * v * half if sub else half) * weights[j]
            t = (z - bottom[k]) * inv_h
            n = c0 + t * (c1 + t * (c2 + t * c3))
            wsq = max((n - n_ref) * (n + n_ref) + pp, 1e-300)
            inv = jac / math.sqrt(wsq)
            x += inv
            ln += n * inv
            ct += n * n * inv
    x *= b
    return x, ln, ct


@lean_kernel
def block_series(n_m, u_max, series, b, n_ref, p, ratio, cutoff):
    """X [m], L [m], c T [m] over one block by its moment series (``panel_blocks``:
    n_m, u_max and the series coefficients), and whether the series applies
    (u_max / A <= ratio).  Terms stop once (u_max / A)^j < cutoff."""
    big_a = (n_m - n_ref) * (n_m + n_ref) + p * p
    if not big_a > 0.0 or u_max > ratio * big_a:
        return 0.0, 0.0, 0.0, False
    r = 1.0 / big_a
    rho = u_max * r
    last = 0
    bound = rho
    while bound >= cutoff and last < ORDER:
        bound *= rho
        last += 1
    sx = series[0, last]
    sl = series[1, last]
    st = series[2, last]
    for i in range(last - 1, -1, -1):
        sx = sx * r + series[0, i]
        sl = sl * r + series[1, i]
        st = st * r + series[2, i]
    scale = 1.0 / math.sqrt(big_a)
    return b * sx * scale, sl * scale, st * scale, True


@lean_kernel
def segment(prof, b, n_ref, p, z_a, z_b, to_turning, coarse=False):
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
    coarse : bool, optional
        A cheaper evaluation, good to about 1e-6 relative, for scans that only
        place brackets (fewer nodes and parts, a looser series).

    Returns
    -------
    x, length, c_time : float
        Infinite if the ray runs horizontally in a uniform panel.
    """
    top, bottom, kind, coef, n_top = prof[0], prof[1], prof[2], prof[3], prof[4]
    if not z_b > z_a:
        return 0.0, 0.0, 0.0
    if coarse:
        bulk_nodes, bulk_weights = NODES_COARSE, WEIGHTS_COARSE
        top_nodes, top_weights = NODES_BULK, WEIGHTS_BULK
        part_change, ratio, cutoff = COARSE_PART_CHANGE, COARSE_RATIO, 1e-9
    else:
        bulk_nodes, bulk_weights = NODES_BULK, WEIGHTS_BULK
        top_nodes, top_weights = NODES_TOP, WEIGHTS_TOP
        part_change, ratio, cutoff = PART_CHANGE, RATIO, 1e-17
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
        if k % BLOCK == 0 and k != k_top:
            used = False
            size = COARSE
            last = k + COARSE - 1
            if (k % COARSE == 0 and last < m and prof[9][k // COARSE] and top[k] <= z_b
                    and bottom[last] >= z_a):
                dx, dl, dt, used = block_series(prof[10][k // COARSE], prof[11][k // COARSE],
                                                prof[12][k // COARSE], b, n_ref, p, ratio, cutoff)
            if not used:
                size = BLOCK
                last = k + BLOCK - 1
                if last < m and prof[5][k // BLOCK] and top[k] <= z_b and bottom[last] >= z_a:
                    dx, dl, dt, used = block_series(prof[6][k // BLOCK], prof[7][k // BLOCK],
                                                    prof[8][k // BLOCK], b, n_ref, p, ratio,
                                                    cutoff)
            if used:
                x += dx
                ln += dl
                ct += dt
                if bottom[last] <= z_a:
                    break
                k += size
                continue
        z2 = min(z_b, top[k])
        z1 = max(z_a, bottom[k])
        if z2 > z1:
            kd = kind[k]
            if kd == EXPONENTIAL:
                dx, dl, dt = exponential_piece(prof, k, b, n_ref, p, z1, z2,
                                               to_turning and k == k_top)
            elif kd == CUBIC:
                if k == k_top:
                    dx, dl, dt = cubic_piece(prof, k, b, n_ref, p, z1, z2, z_s, top_nodes,
                                             top_weights, part_change)
                else:
                    dx, dl, dt = cubic_piece(prof, k, b, n_ref, p, z1, z2, z_s, bulk_nodes,
                                             bulk_weights, part_change)
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
