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

from firnray.rays.panel_blocks import ORDER, RATIO
from firnray.rays.exponential_kernels import (KERNEL_OPTIONS, segment_d, slope_factor, segment_extras, turning_d,
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
COARSE_RATIO = 0.4
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
    """Closed-form X [m], L [m], c T [m] and dX/db [m] of the part z1 -> z2 of a ray
    in exponential panel k (``exponential_kernels``, equations 2.4-2.10 of the
    theory); with ``to_turning`` the part ends at the turning point.

    dX/db = a^2 D / q^3 + (b / q) dD/db with dD/db = (s b / q)(k_2 / w_2 - k_1 / w_1),
    or -(s b / q) k_1 / w_1 - s / b for a part ending at its turning point
    (k = 2 + (a - n)^2 / G, ``exponential_kernels.slope_factor``).
    """
    top, bottom, kind, coef, n_top = prof[0], prof[1], prof[2], prof[3], prof[4]
    a, s, d = coef[k, 0], coef[k, 1], coef[k, 3]
    q = math.sqrt((a - b) * (a + b))
    e1 = d * math.exp((z1 - top[k]) / s)
    n1 = a - e1
    w1 = slowness(n1, n_ref, p)
    g1 = n1 * e1 + w1 * w1 + q * w1
    k1 = slope_factor(1.0, e1, g1)
    if to_turning:
        dd = turning_d(s, 1.0, b, q, e1, n1, w1)
        ln_h, dw = turning_extras(b, n1, w1)
        dd_db = -(s * b / q) * k1 / w1 - s / b if w1 > 0.0 else -math.inf
    else:
        e2 = d * math.exp((z2 - top[k]) / s)
        n2 = a - e2
        w2 = slowness(n2, n_ref, p)
        g2 = n2 * e2 + w2 * w2 + q * w2
        dn = -e1 * math.expm1((z2 - z1) / s)
        dd = segment_d(a, s, q, z2 - z1, dn, n1, w1, g1, n2, w2, g2)
        ln_h, dw = segment_extras(dn, n1, w1, n2, w2)
        k2 = slope_factor(1.0, e2, g2)
        if w1 > 0.0 and w2 > 0.0:
            dd_db = (s * b / q) * (k2 / w2 - k1 / w1)
        else:
            dd_db = math.inf
    x = b * dd / q
    dx_db = a * a * dd / (q * q * q) + (b / q) * dd_db
    return x, s * ln_h + a * dd / q, s * dw + a * s * ln_h + q * dd + b * x, dx_db


@lean_kernel
def cubic_piece(prof, k, b, n_ref, p, z1, z2, z_s, nodes, weights, part_change, to_turning):
    """X [m], L [m], c T [m] and dX/db [m] of the part z1 -> z2 of a ray in cubic
    panel k by Gauss-Legendre quadrature, in v = sqrt(z_s - z) when z_s is finite.

    dX/db: far from z_s the integral of n^2 / w^3; near z_s (w^2 changes by more
    than a quarter across the piece), where that integrand is too singular,
    its integration by parts with
    F = n^2, F' = dF/dz, G = -1/F' (``docs/theory.md`` section 11.5)::

        dX/db = X / b + 2 b^2 (G_2 / w_2 - G_1 / w_1) - 2 b^2 int (F'' / F'^2) / w dz

    whose integrand has the 1/w singularity the substitution removes; the
    term at z_2 drops when the part ends at its turning point (``to_turning``).
    Where dF/dz nearly vanishes in such a panel (it changes more than 50-fold
    across it) the derivative is NaN and the solver falls back to secant steps
    and finite differences.

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
    # integrate dX/db by parts only where n^2 / w^3 is too singular to integrate
    # directly: where w^2 changes by more than a quarter across the piece (far from
    # the singularity the direct integral is better conditioned)
    w_small = min(w1, w2)
    by_parts = sub and (w_small <= 0.0 or abs(w1 - w2) > 0.25 * w_small)
    derivative_ok = True
    if by_parts:
        # the integrand of the integration by parts also follows F'' / F'^2:
        # cut finer where dF/dz changes across the piece
        # (judged at both ends and where dn/dt, a quadratic in t, has its extremum)
        fp1 = abs(n1 * (c1 + t1 * (2.0 * c2 + 3.0 * t1 * c3)))
        fp2 = abs(n2 * (c1 + t2 * (2.0 * c2 + 3.0 * t2 * c3)))
        small = min(fp1, fp2)
        large = max(fp1, fp2)
        if c3 != 0.0:
            t_e = -c2 / (3.0 * c3)
            if (t_e - t1) * (t_e - t2) < 0.0:
                n_e = c0 + t_e * (c1 + t_e * (c2 + t_e * c3))
                fp_e = abs(n_e * (c1 + t_e * (2.0 * c2 + 3.0 * t_e * c3)))
                small = min(small, fp_e)
                large = max(large, fp_e)
        fp_change = (large - small) / small if small > 0.0 else math.inf
        if fp_change > 50.0:     # dF/dz nearly vanishes in the panel: no derivative here
            by_parts = False
            derivative_ok = False
        else:
            change = max(change, fp_change)
    parts = 1 + int(min(change, 1e4) / part_change)
    width = (v2 - v1) / parts
    half = 0.5 * width
    inv_h2 = inv_h * inv_h
    x = 0.0
    ln = 0.0
    ct = 0.0
    dsum = 0.0
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
            if by_parts:
                dn = (c1 + t * (2.0 * c2 + 3.0 * t * c3)) * inv_h
                d2n = (2.0 * c2 + 6.0 * t * c3) * inv_h2
                f1 = 2.0 * n * dn
                dsum += 2.0 * (dn * dn + n * d2n) / (f1 * f1) * inv
            else:
                dsum += n * n * inv / wsq
    x_over_b = x
    x *= b
    if by_parts:
        dn1 = (c1 + t1 * (2.0 * c2 + 3.0 * t1 * c3)) * inv_h
        dx_db = x_over_b - 2.0 * b * b * dsum
        w1r = math.sqrt(max(w1, 1e-300))
        dx_db -= 2.0 * b * b * (-1.0 / (2.0 * n1 * dn1)) / w1r
        if not to_turning:
            dn2 = (c1 + t2 * (2.0 * c2 + 3.0 * t2 * c3)) * inv_h
            w2r = math.sqrt(max(w2, 1e-300))
            dx_db += 2.0 * b * b * (-1.0 / (2.0 * n2 * dn2)) / w2r
    else:
        dx_db = dsum if derivative_ok else math.nan
    return x, ln, ct, dx_db


@lean_kernel
def block_series(n_m, u_max, series, b, n_ref, p, ratio, cutoff, full):
    """X [m], L [m], c T [m] and dX/db [m] over one block by its moment series
    (``panel_blocks``: n_m, u_max and the series coefficients), and whether the
    series applies (u_max / A <= ratio).  Terms stop once (u_max / A)^j < cutoff.
    Without ``full`` only X and dX/db are summed (L and c T are returned as 0)."""
    big_a = (n_m - n_ref) * (n_m + n_ref) + p * p
    if not big_a > 0.0 or u_max > ratio * big_a:
        return 0.0, 0.0, 0.0, 0.0, False
    r = 1.0 / big_a
    rho = u_max * r
    last = 0
    bound = rho
    while bound >= cutoff and last < ORDER:
        bound *= rho
        last += 1
    sx = series[0, last]
    sd = series[3, last]
    sl = 0.0
    st = 0.0
    if full:
        sl = series[1, last]
        st = series[2, last]
        for i in range(last - 1, -1, -1):
            sx = sx * r + series[0, i]
            sl = sl * r + series[1, i]
            st = st * r + series[2, i]
            sd = sd * r + series[3, i]
    else:
        for i in range(last - 1, -1, -1):
            sx = sx * r + series[0, i]
            sd = sd * r + series[3, i]
    scale = 1.0 / math.sqrt(big_a)
    return b * sx * scale, sl * scale, st * scale, (sx + 2.0 * b * b * r * sd) * scale, True


@lean_kernel
def segment(prof, b, n_ref, p, z_a, z_b, to_turning, coarse=False, full=True):
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
    full : bool, optional
        Also L and c T; without it (root finding) the block series sum only X
        and dX/db, and L and c T of those blocks are left out.

    Returns
    -------
    x, length, c_time : float
        Infinite if the ray runs horizontally in a uniform panel.
    dx_db : float
        dX/db [m] at fixed end heights (at a moving turning point for
        ``to_turning``).
    """
    top, bottom, kind, coef, n_top = prof[0], prof[1], prof[2], prof[3], prof[4]
    if not z_b > z_a:
        return 0.0, 0.0, 0.0, 0.0
    if coarse:
        bulk_nodes, bulk_weights = NODES_COARSE, WEIGHTS_COARSE
        top_nodes, top_weights = NODES_BULK, WEIGHTS_BULK
        part_change, ratio, cutoff = COARSE_PART_CHANGE, COARSE_RATIO, 1e-7
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
    dxb = 0.0
    m = top.shape[0]
    k = k_top
    offset, ok, n_mid, u_max, series = prof[5], prof[6], prof[7], prof[8], prof[9]
    top_level = offset.shape[0] - 2
    while k < m:
        if k != k_top and kind[k] == CUBIC:
            # the largest aligned block below k that lies inside the piece and
            # passes the series test (panel_blocks): level l needs k % 2^l == 0
            level = 0
            while level < top_level and (k >> (level + 1)) << (level + 1) == k:
                level += 1
            used = False
            last = k
            while level >= 0:
                last = k + (1 << level) - 1
                if last < m and bottom[last] >= z_a:
                    j = offset[level] + (k >> level)
                    if ok[j]:
                        dx, dl, dt, dd, used = block_series(n_mid[j], u_max[j], series[j], b,
                                                            n_ref, p, ratio, cutoff, full)
                        if used:
                            break
                level -= 1
            if used:
                x += dx
                ln += dl
                ct += dt
                dxb += dd
                if bottom[last] <= z_a:
                    break
                k = last + 1
                continue
        z2 = min(z_b, top[k])
        z1 = max(z_a, bottom[k])
        if z2 > z1:
            kd = kind[k]
            if kd == EXPONENTIAL:
                dx, dl, dt, dd = exponential_piece(prof, k, b, n_ref, p, z1, z2,
                                                   to_turning and k == k_top)
            elif kd == CUBIC:
                if k == k_top:
                    dx, dl, dt, dd = cubic_piece(prof, k, b, n_ref, p, z1, z2, z_s, top_nodes,
                                                 top_weights, part_change, to_turning)
                else:
                    dx, dl, dt, dd = cubic_piece(prof, k, b, n_ref, p, z1, z2, z_s, bulk_nodes,
                                                 bulk_weights, part_change, False)
            else:
                n = coef[k, 0]
                w = slowness(n, n_ref, p)
                dz = z2 - z1
                if w > 0.0:
                    dx, dl, dt = dz * b / w, dz * n / w, dz * n * n / w
                    dd = dz * n * n / (w * w * w)
                else:
                    dx, dl, dt, dd = math.inf, math.inf, math.inf, math.inf
            x += dx
            ln += dl
            ct += dt
            dxb += dd
        if bottom[k] <= z_a:
            break
        k += 1
    return x, ln, ct, dxb
