"""Turning heights and ray integrals in a non-monotone panel stack, compiled with numba.

Where the index is not monotone (density inversions, lenses, ducts) the part
of a ray with Snell invariant b lives in one band of heights where n(z) > b;
it turns where it meets the band's edges (``docs/theory.md`` section 11.6):

* the upper edge is the lowest height above the ray's shallower end point
  where n = b (:func:`crossing_up`), or the surface if there is none;
* the lower edge is the highest height below the deeper end point where
  n = b (:func:`crossing_down`), or none (the ray escapes into deep ice).

The horizontal distance, length and travel time of a leg between two heights
(:func:`leg`) are the integrals of ``panel_kernels``::

    X = int b / w dz,   L = int n / w dz,   c T = int n^2 / w dz,   w^2 = n^2 - b^2

summed by ``panel_kernels.segment`` (closed form, block series, quadrature)
except near three kinds of points where 1/w is singular or nearly so, which
get a substitution that makes the integrand smooth (:func:`cubic_special`):

* a turning point z_e at the bottom of a leg (w^2 ~ |dw^2/dz| (z - z_e)):
  z = z_e + v^2;
* a local minimum z_c of n inside a leg with w^2(z_c) small
  (w^2 ~ w_c^2 + n n'' (z - z_c)^2, the ray runs nearly level along the
  minimum): z = z_c +- delta sinh(s), delta = sqrt(w_c^2 / (n n''));
* the same where w^2 grows linearly away from the point: the turning-point
  substitution about the virtual height where w^2 would vanish.
"""

import math

import numpy as np

from firnray.rays.panel_kernels import (CUBIC, EXPONENTIAL, UNIFORM, find_panel, lean_kernel,
                                        panel_level, segment)

_x8, _w8 = np.polynomial.legendre.leggauss(8)
#: Gauss-Legendre rule of the substituted integrals.
NODES, WEIGHTS = _x8.copy(), _w8.copy()
#: Largest relative change of the substituted integrand across one part.
PART_CHANGE = 0.05
#: Most parts of one substituted integral.
MAX_PARTS = 400
#: A local minimum of n inside a leg gets its own substitution when its scale
#: delta = sqrt(w_c^2 / (n n'')) is below this many times its panel's height.
SOFT_SCALE = 1.0

TURNING, SOFT = 1, 2


@lean_kernel
def cubic_state(prof, k, z):
    """n [1], dn/dz [1/m] and d2n/dz2 [1/m^2] of cubic panel k at height z [m]."""
    top, bottom, coef = prof[0], prof[1], prof[3]
    h = top[k] - bottom[k]
    t = (z - bottom[k]) / h
    c0, c1, c2, c3 = coef[k, 0], coef[k, 1], coef[k, 2], coef[k, 3]
    return (c0 + t * (c1 + t * (c2 + t * c3)), (c1 + t * (2.0 * c2 + 3.0 * t * c3)) / h,
            (2.0 * c2 + 6.0 * t * c3) / (h * h))


@lean_kernel
def _cubic_root(c0, c1, c2, c3, b, ta, tb):
    """t in [ta, tb] (either order) where the cubic equals b, given that it is
    monotone there, above b at ta and at most b at tb (safeguarded Newton)."""
    lo, hi = ta, tb
    t = tb
    ga = c0 - b + ta * (c1 + ta * (c2 + ta * c3))
    gb = c0 - b + tb * (c1 + tb * (c2 + tb * c3))
    if ga != gb:
        t = ta + (tb - ta) * ga / (ga - gb)
    for _ in range(100):
        g = c0 - b + t * (c1 + t * (c2 + t * c3))
        if g == 0.0:
            return t
        if g > 0.0:
            lo = t
        else:
            hi = t
        dg = c1 + t * (2.0 * c2 + 3.0 * t * c3)
        t_new = t - g / dg if dg != 0.0 else 0.5 * (lo + hi)
        if not ((t_new - lo) * (t_new - hi) < 0.0):
            t_new = 0.5 * (lo + hi)
        if abs(t_new - t) <= 1e-16 * max(1.0, abs(t)):
            return t_new
        t = t_new
    return t


@lean_kernel
def crossing_in_panel(prof, k, b, z_from, z_to):
    """First height [m] going from z_from to z_to (inside panel k) where n = b,
    given n(z_from) > b; NaN if n stays above b."""
    top, bottom, kind, coef = prof[0], prof[1], prof[2], prof[3]
    kd = kind[k]
    if kd == UNIFORM:
        return z_from if coef[k, 0] <= b else math.nan
    if kd == EXPONENTIAL:
        a, s, d = coef[k, 0], coef[k, 1], coef[k, 3]
        n_to = a - d * math.exp((z_to - top[k]) / s)
        if n_to > b:
            return math.nan
        z = top[k] + s * math.log((a - b) / d)
        return min(max(z, min(z_from, z_to)), max(z_from, z_to))
    h = top[k] - bottom[k]
    c0, c1, c2, c3 = coef[k, 0], coef[k, 1], coef[k, 2], coef[k, 3]
    t_from = (z_from - bottom[k]) / h
    t_to = (z_to - bottom[k]) / h
    # stationary points of the cubic split [t_from, t_to] into monotone pieces
    qa, qb, qc = 3.0 * c3, 2.0 * c2, c1
    r1, r2 = math.nan, math.nan
    if qa != 0.0:
        disc = qb * qb - 4.0 * qa * qc
        if disc >= 0.0:
            q = -0.5 * (qb + math.copysign(math.sqrt(disc), qb))
            r1 = q / qa
            r2 = qc / q if q != 0.0 else math.nan
    elif qb != 0.0:
        r1 = -qc / qb
    up = t_to > t_from
    # order the interior stationary points along the direction of travel
    s1, s2 = r1, r2
    if (up and s2 < s1) or (not up and s2 > s1):
        s1, s2 = s2, s1
    t_a = t_from
    for j in range(3):
        if j == 0:
            t_b = s1
        elif j == 1:
            t_b = s2
        else:
            t_b = t_to
        if j < 2 and not ((t_b - t_from) * (t_b - t_to) < 0.0):
            continue
        g_b = c0 - b + t_b * (c1 + t_b * (c2 + t_b * c3))
        if g_b <= 0.0:
            t = _cubic_root(c0, c1, c2, c3, b, t_a, t_b)
            return bottom[k] + t * h
        t_a = t_b
    return math.nan


@lean_kernel
def crossing_up(prof, p_min, z_from, b):
    """Panel and height [m] of the lowest point above z_from where n = b
    (n > b at z_from); (-1, 0) if n stays above b up to the surface."""
    top = prof[0]
    k = find_panel(top, z_from)
    z_start = z_from
    while k >= 0:
        z_end = top[k]
        if z_end > z_start and p_min[k] <= b:
            z = crossing_in_panel(prof, k, b, z_start, z_end)
            if not math.isnan(z):
                return k, z
        z_start = max(z_start, z_end)
        k -= 1
    return -1, 0.0


@lean_kernel
def crossing_down(prof, p_min, z_from, b):
    """Panel and height [m] of the highest point below z_from where n = b
    (n > b at z_from); (-1, -inf) if n stays above b all the way down."""
    top, bottom = prof[0], prof[1]
    m = top.shape[0]
    k = find_panel(top, z_from)
    z_start = z_from
    while k < m:
        z_end = bottom[k]
        if z_start > z_end and p_min[k] <= b:
            if not math.isfinite(z_end):
                # the uniform panel below the last sample
                return k, z_start
            z = crossing_in_panel(prof, k, b, z_start, z_end)
            if not math.isnan(z):
                return k, z
        z_start = min(z_start, z_end)
        k += 1
    return -1, -math.inf


@lean_kernel
def _substituted(prof, k, b, z, jac):
    """Integrand factor jac / w [m] and n [1] at height z of cubic panel k."""
    n = cubic_state(prof, k, z)[0]
    w2 = (n - b) * (n + b)
    return jac / math.sqrt(max(w2, 1e-300)), n


@lean_kernel
def _map(mode, z_e, sigma, scale, shift, xi):
    """Height [m] and |dz/dxi| of the substitution ``mode`` at xi (u = |z - z_e|)."""
    if mode == 0:        # plain: u = xi
        return z_e + sigma * xi, 1.0
    if mode == 1:        # u = xi^2 - scale: a turning point at u = -scale
        return z_e + sigma * (xi * xi - scale), 2.0 * xi
    if mode == 2:        # u + shift = scale sinh(xi)
        return z_e + sigma * (scale * math.sinh(xi) - shift), scale * math.cosh(xi)
    # u + shift = scale cosh(xi)
    return z_e + sigma * (scale * math.cosh(xi) - shift), scale * math.sinh(xi)


@lean_kernel
def cubic_special(prof, k, b, z_e, z_f, end_mode):
    """X [m], L [m] and c T [m] from the special end z_e to z_f inside cubic panel k.

    With u = |z - z_e| and the local model w^2 = w_e^2 + s1 u + s2 u^2
    (w_e = 0 at a turning point, ``end_mode`` TURNING), completing the square
    U = u + s1 / (2 s2) gives w^2 = s2 (U^2 + D), and

    * D > 0 (the ray passes a minimum of w^2 nearly level): U = sqrt(D) sinh(xi),
    * D <= 0 (a turning point, real or just beyond z_e): U = sqrt(-D) cosh(xi),
    * s2 <= 0: the turning-point substitution u = v^2 - w_e^2 / s1,

    each of which makes (dz/dxi) / w smooth and bounded.  The substituted
    integrand is cut into equal parts so that it changes by at most
    ``PART_CHANGE`` across each, judged at five points.
    """
    length = abs(z_f - z_e)
    if length <= 0.0:
        return 0.0, 0.0, 0.0
    sigma = 1.0 if z_f > z_e else -1.0
    n_e, dn_e, d2n_e = cubic_state(prof, k, z_e)
    w2e = 0.0 if end_mode == TURNING else max((n_e - b) * (n_e + b), 0.0)
    s1 = 2.0 * n_e * dn_e * sigma          # d w^2 / du
    s2 = dn_e * dn_e + n_e * d2n_e         # (1/2) d2 w^2 / du^2
    mode = 0
    scale = 0.0
    shift = 0.0
    xi_a, xi_b = 0.0, length
    if s2 > 0.0 and s1 >= 0.0:
        shift = s1 / (2.0 * s2)
        dd = w2e / s2 - shift * shift
        if dd > 0.0:
            mode = 2
            scale = math.sqrt(dd)
            xi_a, xi_b = math.asinh(shift / scale), math.asinh((shift + length) / scale)
        elif shift > 0.0:
            mode = 3
            scale = math.sqrt(-dd)
            if scale > 0.0:
                xi_a = math.acosh(max(shift / scale, 1.0))
                xi_b = math.acosh((shift + length) / scale)
            else:
                mode = 0
    if mode == 0 and s1 > 0.0:
        mode = 1
        scale = w2e / s1
        xi_a, xi_b = math.sqrt(scale), math.sqrt(scale + length)
    # parts: the substituted factor |dz/dxi| / w at five points
    q_lo = math.inf
    q_hi = 0.0
    for j in range(5):
        frac = 0.02 + 0.245 * j
        xi = xi_a + (xi_b - xi_a) * frac
        z, jac = _map(mode, z_e, sigma, scale, shift, xi)
        q = _substituted(prof, k, b, z, jac)[0]
        q_lo = min(q_lo, q)
        q_hi = max(q_hi, q)
    change = (q_hi - q_lo) / q_lo if q_lo > 0.0 else 1e4
    parts = min(1 + int(change / PART_CHANGE), MAX_PARTS)
    width = (xi_b - xi_a) / parts
    half = 0.5 * width
    x = 0.0
    ln = 0.0
    ct = 0.0
    for part in range(parts):
        mid = xi_a + (part + 0.5) * width
        for j in range(NODES.shape[0]):
            xi = mid + half * NODES[j]
            z, jac = _map(mode, z_e, sigma, scale, shift, xi)
            f, n = _substituted(prof, k, b, z, jac * half * WEIGHTS[j])
            x += f
            ln += n * f
            ct += n * n * f
    return b * x, ln, ct


@lean_kernel
def panel_above(prof, z):
    """Panel k with bottom[k] <= z < top[k] (the panel just above a knot at z)."""
    top = prof[0]
    k = find_panel(top, z)
    if k > 0 and z >= top[k]:
        k -= 1
    return k


@lean_kernel
def _sub_leg(prof, b, n_ref, p, za, zb, low_mode, high_mode, full):
    """X, L, c T of the leg za -> zb whose ends are regular (0), turning points
    (TURNING) or soft minima (SOFT)."""
    top, bottom, kind = prof[0], prof[1], prof[2]
    x = 0.0
    ln = 0.0
    ct = 0.0
    lo_end = za
    hi_end = zb
    if low_mode != 0:
        k = panel_above(prof, za)
        if kind[k] == CUBIC:
            z_cut = min(top[k], zb)
            if high_mode != 0 and z_cut >= zb:
                z_cut = 0.5 * (za + zb)
            dx, dl, dt = cubic_special(prof, k, b, za, z_cut, low_mode)
            x += dx
            ln += dl
            ct += dt
            lo_end = z_cut
    if high_mode != 0 and hi_end > lo_end:
        k = find_panel(top, zb)
        if high_mode == TURNING and kind[k] != CUBIC:
            dx, dl, dt, dd = segment(prof, b, n_ref, p, lo_end, zb, True, False, full)
            return x + dx, ln + dl, ct + dt
        if kind[k] == CUBIC:
            z_cut = max(bottom[k], lo_end)
            dx, dl, dt = cubic_special(prof, k, b, zb, z_cut, high_mode)
            x += dx
            ln += dl
            ct += dt
            hi_end = z_cut
    if hi_end > lo_end:
        dx, dl, dt, dd = segment(prof, b, n_ref, p, lo_end, hi_end, False, False, full)
        x += dx
        ln += dl
        ct += dt
    return x, ln, ct


#: A leg ending at a turning point and shorter than this [m] is summed by its
#: leading term (w^2 linear in z across it).
THIN_LEG = 1e-7


@lean_kernel
def thin_turning_leg(prof, b, z_turn, height):
    """X [m], L [m], c T [m] of a leg of ``height`` [m] ending at the turning
    point z_turn: with w^2 = g |z - z_turn|, g = |d(n^2)/dz|, X = 2 b sqrt(height / g)."""
    n, dn = panel_level(prof, find_panel(prof[0], z_turn), z_turn)
    g = abs(2.0 * n * dn)
    if not g > 0.0:
        return 0.0, 0.0, 0.0
    r = 2.0 * math.sqrt(height / g)
    return b * r, n * r, n * n * r


@lean_kernel
def leg(prof, minima, b, n_ref, p, z1, z2, low_mode, high_mode, full=True):
    """X [m], L [m] and c T [m] of a ray leg from z1 up to z2 (monotone in z).

    ``low_mode`` / ``high_mode``: 0 for a regular end, TURNING where the leg
    ends at a turning point, SOFT where the ray is nearly level there.  The
    leg is also cut at every local minimum of n inside it that the ray passes
    nearly level (``SOFT_SCALE``); ``minima`` = (z, n, curvature, panel height)
    of the profile's local minima, highest first.  Without ``full`` only X is
    complete (the block series of ``segment`` skip L and c T).
    """
    if not z2 > z1:
        return 0.0, 0.0, 0.0
    if z2 - z1 < THIN_LEG:
        if high_mode == TURNING:
            return thin_turning_leg(prof, b, z2, z2 - z1)
        if low_mode == TURNING:
            return thin_turning_leg(prof, b, z1, z2 - z1)
    mz, mn, mcurv, mh = minima[0], minima[1], minima[2], minima[3]
    x = 0.0
    ln = 0.0
    ct = 0.0
    za = z1
    # minima are stored highest first: walk them from the bottom of the leg up
    for i in range(mz.shape[0] - 1, -1, -1):
        zc = mz[i]
        if zc <= z1:
            continue
        if zc >= z2:
            break
        w2c = (mn[i] - b) * (mn[i] + b)
        if not w2c < (SOFT_SCALE * mh[i]) ** 2 * mn[i] * mcurv[i]:
            continue
        dx, dl, dt = _sub_leg(prof, b, n_ref, p, za, zc, low_mode, SOFT, full)
        x += dx
        ln += dl
        ct += dt
        za = zc
        low_mode = SOFT
    dx, dl, dt = _sub_leg(prof, b, n_ref, p, za, z2, low_mode, high_mode, full)
    return x + dx, ln + dl, ct + dt
