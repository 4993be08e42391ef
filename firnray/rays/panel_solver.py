"""Every ray between two points in a general monotone profile (panel stack).

The families and their parameters are those of ``exponential_solver``: for
two points in the ice, with z_hi the shallower, the elevation psi of the ray
at z_hi gives b = n_hi cos(psi), p = n_hi sin(psi), and

* the direct family X_d(psi) falls monotonically from X_h = X_d(0) (infinite
  when z_hi lies in a uniform panel) to 0 at psi = pi/2;
* the up-going family X_u(psi) = X_d(psi) + 2 X(z_hi -> top) starts at X_h,
  is refracted for psi < psi_s (b > n_surface) and reflected beyond, where it
  falls monotonically to 0 (every piece is a direct piece, whose X grows with b).

Unlike the single exponential, a general profile (a kink in dn/dz at a break,
a measured table) need not give the refracted branch a single maximum.  It is
therefore scanned at ``SCAN`` values of psi (by default; ``scan_points`` of
``find_rays_many``) crowding towards both ends, with the cheaper integrals and
their slope dX/dpsi; where the sampled slope changes sign around a maximum
below the target distance (or a minimum above it) the zero of the exact slope
is found, and where no slope is known the sampled values select Brent's
golden-section/parabolic search instead.  A sign change of X - x_target
between neighbouring points of the refined scan is a root, polished by
Newton steps on the analytic dX/dpsi (secant steps where it is not known)
inside its bracket, with the safeguard of ``bracketing.safeguarded_step``.
The same analytic dX/dpsi gives the spreading factor; a central difference
of X stands in where it is not known.

One point in the air gives the transmitted ray (parameter: the zenith phi in
the air); two points in the air are solved as straight lines.
"""

import math

import numba
import numpy as np

from firnray.constants import SPEED_OF_LIGHT
from firnray.rays import exponential_solver as es
from firnray.rays.bracketing import brent_min_step, brent_min_update, safeguarded_step
from firnray.rays.exponential_kernels import KERNEL_OPTIONS
from firnray.rays.panel_kernels import (UNIFORM, find_panel, index_at, lean_kernel, panel_level, segment,
                                        slowness, turning_point)

HALF_PI = 0.5 * math.pi
#: Number of scan intervals of the refracted branch of the up-going family.
#: Default number of scan intervals of the refracted branch.
SCAN = 10
#: Most up-going rays kept per pair (the direct ray comes on top).
MAX_UP = 5
#: Slots per pair: the direct ray and MAX_UP up-going rays.
MAX_RAYS = 1 + MAX_UP
MAX_ITER = 200
#: A coarse scan value (about 1e-6 relative) farther than this fraction of
#: 1 m + x_target from the target has a certain sign; nearer ones are re-evaluated.
COARSE_TRUST = 1e-4

# families (mode codes of ``family``)
DIRECT_FAMILY, UP_FAMILY, AIR_FAMILY, LAYER_FAMILY = 0, 1, 2, 3


@lean_kernel
def family(mode, t, prof, geo, coarse=False, full=True):
    """X [m], L [m], c T [m], top height [m], kind code and dX/dt [m/rad] of family
    ``mode`` at t [rad].

    ``geo`` = (n_hi, z_lo, z_hi, h, n_air, n_s, z_layer): index at z_hi, the
    two heights, for the transmitted family the height h of the air point
    and the indices of air and surface, for the layer family the reflector.
    With ``coarse`` the integrals are the cheaper ones of the scans; without
    ``full`` L and c T are incomplete (root finding needs X and dX/dt only).  In the
    ice b = n_hi cos t, so dX/dt = -p dX/db; in the air b = n_air sin t.
    """
    n_hi, z_lo, z_hi, h, n_air, n_s, z_layer = geo
    if mode == AIR_FAMILY:
        b = n_air * math.sin(t)
        p = math.sqrt(max((n_s - b) * (n_s + b), 0.0))
        x, ln, ct, dxb = segment(prof, b, n_s, p, z_lo, 0.0, False, coarse, full)
        c = math.cos(t)
        air = h / c
        return (x + h * math.tan(t), ln + air, ct + n_air * air, 0.0, es.TRANSMITTED,
                h / (c * c) + n_air * c * dxb)
    b = n_hi * math.cos(t)
    p = n_hi * math.sin(t)
    if mode == LAYER_FAMILY:
        x1, l1, t1, d1 = segment(prof, b, n_hi, p, z_layer, z_hi, False, coarse, full)
        x2, l2, t2, d2 = segment(prof, b, n_hi, p, z_layer, z_lo, False, coarse, full)
        return x1 + x2, l1 + l2, t1 + t2, z_layer, es.LAYER_REFLECTED, -p * (d1 + d2)
    x1, l1, t1, d1 = segment(prof, b, n_hi, p, z_lo, z_hi, False, coarse, full)
    if mode == DIRECT_FAMILY:
        return x1, l1, t1, z_hi, es.DIRECT, -p * d1
    k_t, z_t = turning_point(prof, b)
    if k_t < 0:
        x2, l2, t2, d2 = segment(prof, b, n_hi, p, z_hi, 0.0, False, coarse, full)
        return (x1 + 2.0 * x2, l1 + 2.0 * l2, t1 + 2.0 * t2, 0.0, es.REFLECTED,
                -p * (d1 + 2.0 * d2))
    z_t = max(z_t, z_hi)
    x2, l2, t2, d2 = segment(prof, b, n_hi, p, z_hi, z_t, True, coarse, full)
    return (x1 + 2.0 * x2, l1 + 2.0 * l2, t1 + 2.0 * t2, z_t, es.REFRACTED,
            -p * (d1 + 2.0 * d2))


@lean_kernel
def family_x(mode, t, prof, geo):
    """Horizontal distance X(t) [m] of family ``mode``."""
    return family(mode, t, prof, geo, False, False)[0]


@lean_kernel
def family_xd(mode, t, prof, geo):
    """X(t) [m] and dX/dt [m/rad] of family ``mode``."""
    r = family(mode, t, prof, geo, False, False)
    return r[0], r[5]


@lean_kernel
def find_root(mode, x_target, t_a, f_a, t_b, f_b, prof, geo, t_start=math.nan):
    """Root t [rad] of X(t) = x_target in [t_a, t_b] (f = X - x_target of opposite
    signs at the ends, possibly infinite), from ``t_start`` if it lies inside
    (else from the secant of the ends).

    Newton steps on the analytic dX/dt, secant steps where it is not available
    (NaN), both with the safeguard of ``bracketing.safeguarded_step``.
    Returns (t, converged) as ``exponential_solver.polish_root``.
    """
    if f_a == 0.0:
        return t_a, True
    if f_b == 0.0:
        return t_b, True
    if f_a < 0.0:
        lo, hi = t_a, t_b
    else:
        lo, hi = t_b, t_a
    tol = 1e-12 * (1.0 + x_target)
    if math.isfinite(f_a) and math.isfinite(f_b):
        t = t_a - f_a * (t_b - t_a) / (f_b - f_a)
        t_prev, f_prev = (t_a, f_a) if abs(f_a) < abs(f_b) else (t_b, f_b)
    else:
        t = 0.5 * (t_a + t_b)
        t_prev, f_prev = (t_a, f_a) if math.isfinite(f_a) else (t_b, f_b)
    if (t_start - lo) * (t_start - hi) < 0.0:
        t = t_start
    if not (t - lo) * (t - hi) < 0.0:
        t = 0.5 * (t_a + t_b)
    width_old = abs(t_b - t_a)
    width = width_old
    x, dx = family_xd(mode, t, prof, geo)
    f = x - x_target
    for _ in range(MAX_ITER):
        if abs(f) <= tol:
            return t, True
        if f < 0.0:
            lo = t
        else:
            hi = t
        if math.isfinite(dx) and dx != 0.0:
            slope = dx
        else:
            slope = (f - f_prev) / (t - t_prev) if t != t_prev else math.nan
        t_new = safeguarded_step(t, f, slope, lo, hi, width_old)
        width_old = width
        width = abs(t_new - t)
        if t_new == t or abs(hi - lo) <= 4e-16 * max(abs(lo), abs(hi)) + 1e-300:
            return t_new, True
        t_prev, f_prev = t, f
        t = t_new
        x, dx = family_xd(mode, t, prof, geo)
        f = x - x_target
    return t, False


@lean_kernel
def direct_start(x_target, x_h, dz):
    """Starting elevation [rad] for the direct family: the root of the model
    X(psi) = dz cos(psi) / sqrt(sin(psi)^2 + e^2), e = dz / x_h, exact for
    uniform ice (e = 0) and right at both ends (X(0) = x_h, X(pi/2) = 0)."""
    r = x_target / dz
    e = dz / x_h if math.isfinite(x_h) else 0.0
    s2 = (1.0 - r * r * e * e) / (1.0 + r * r)
    return math.asin(math.sqrt(min(max(s2, 0.0), 1.0)))


@lean_kernel
def extremum(sign, t_a, t_b, t_best, f_best, stop_at, prof, geo, x_target):
    """Brent's golden-section/parabolic search for the extremum of the up-going
    family in [t_a, t_b]: the maximum of X for sign = 1, the minimum for -1.

    Starts from the interior sample (t_best, f_best) (f = X - x_target) and
    stops early once sign * f > stop_at (the extremum is known to cross the
    target).  Returns (t, f) at the extremum found.
    """
    a, bb = t_a, t_b
    x = w = v = t_best
    fx = fw = fv = -sign * f_best          # minimise g = -sign * f
    d = 0.0
    e = 0.0
    for _ in range(MAX_ITER):
        m = 0.5 * (a + bb)
        tol1 = 1e-10 * abs(x) + 1e-13
        tol2 = 2.0 * tol1
        if abs(x - m) <= tol2 - 0.5 * (bb - a) or -fx > stop_at:
            break
        u, d, e = brent_min_step(x, w, v, fx, fw, fv, a, bb, d, e, tol1)
        fu = -sign * (family_x(UP_FAMILY, u, prof, geo) - x_target)
        x, w, v, fx, fw, fv, a, bb = brent_min_update(u, fu, x, w, v, fx, fw, fv, a, bb)
    return x, -sign * fx


@lean_kernel
def slope_at(mode, t, t_min, t_max, prof, geo):
    """dX/dt [m/rad] at t by Richardson-extrapolated central differences.

    The step is 1e-5 of t (at least 1e-6 rad) but at most 1/20 of the
    distance to the ends of the branch [t_min, t_max] holding t: next to the
    grazing ray X grows like a square root of the distance, and there the
    extrapolation (4 D(h/2) - D(h)) / 3 cancels the leading error term.
    """
    dist = min(t - t_min, t_max - t)
    h = min(1e-5 * max(abs(t), 0.1), 0.05 * dist)
    if not h > 1e-13:          # at a branch end: one-sided from inside
        h = 1e-7 * max(abs(t), 0.1)
        sign = 1.0 if t - t_min < t_max - t else -1.0
        x0 = family_x(mode, t, prof, geo)
        return (family_x(mode, t + sign * h, prof, geo) - x0) / (sign * h)
    d1 = (family_x(mode, t + h, prof, geo) - family_x(mode, t - h, prof, geo)) / (2.0 * h)
    if h >= 1e-5 * max(abs(t), 0.1):   # far from the branch ends: central difference
        return d1
    d2 = (family_x(mode, t + 0.5 * h, prof, geo) - family_x(mode, t - 0.5 * h, prof, geo)) / h
    return (4.0 * d2 - d1) / 3.0


@lean_kernel
def store_general(out, kinds, conv, i, k, mode, t, ok, swapped, t_min, t_max, prof, geo):
    """Evaluate the ray of family ``mode`` at t and write it to row i, slot k; the
    spreading derivative stays inside the branch [t_min, t_max] holding t."""
    n_hi, z_lo, z_hi, h, n_air, n_s, z_layer = geo
    x, length, c_time, z_top, code, dx = family(mode, t, prof, geo, False, True)
    if not math.isfinite(dx):
        dx = slope_at(mode, t, t_min, t_max, prof, geo)
    n_lo = index_at(prof, z_lo)
    if mode == AIR_FAMILY:
        b = n_air * math.sin(t)
        p = math.sqrt(max((n_s - b) * (n_s + b), 0.0))
        w_lo = slowness(n_lo, n_s, p)
        theta_ice = math.atan2(b, w_lo)
        if swapped:      # source in the air
            launch, arrival = math.pi - t, math.pi - theta_ice
            r2 = x * abs(dx) * (w_lo / n_lo) / max(math.sin(t), 1e-300)
        else:
            launch, arrival = theta_ice, t
            r2 = x * abs(dx) * w_lo * n_lo / (n_air * max(b, 1e-300))
        spread = math.sqrt(r2) if x > 0.0 else length
        es.store_ray(out, kinds, conv, i, k, code, b, c_time, length, launch, arrival,
                     math.nan, p, ok, spread)
        return
    b = n_hi * math.cos(t)
    p = n_hi * math.sin(t)
    w_lo = slowness(n_lo, n_hi, p)
    theta_lo = math.atan2(b, w_lo)
    if mode == LAYER_FAMILY:
        theta_hi = HALF_PI - t
        if swapped:
            launch, arrival = math.pi - theta_hi, theta_lo
        else:
            launch, arrival = math.pi - theta_lo, theta_hi
    else:
        theta_hi = HALF_PI + t if mode == UP_FAMILY else HALF_PI - t
        if swapped:
            launch, arrival = math.pi - theta_hi, math.pi - theta_lo
        else:
            launch, arrival = theta_lo, theta_hi
    spread = es.equivalent_distance(x, dx, w_lo, n_lo, n_hi, b, swapped, length)
    turning = z_top if code == es.REFRACTED else math.nan
    es.store_ray(out, kinds, conv, i, k, code, b, c_time, length, launch, arrival,
                 turning, p, ok, spread)


@lean_kernel
def horizontal_straight(out, kinds, conv, i, k, n, x_target):
    """The horizontal straight ray between two points at one height in uniform ice."""
    es.store_ray(out, kinds, conv, i, k, es.DIRECT, n, n * x_target, x_target, HALF_PI,
                 HALF_PI, math.nan, 0.0, True, x_target)


@lean_kernel
def scan_point(j, psi_s, n_scan):
    """Scan point j of the refracted branch [rad]: Chebyshev spacing on [0, psi_s],
    dense at both ends (the largest reach lies near 0 for deep pairs and near
    the grazing ray psi_s for shallow ones)."""
    return 0.5 * psi_s * (1.0 - math.cos(math.pi * j / n_scan))


@lean_kernel
def stationary_point(t_a, d_a, t_b, d_b, prof, geo, x_target, sign):
    """Zero of dX/dt of the up-going family between t_a and t_b (slopes d_a, d_b of
    opposite signs) by the Illinois variant of regula falsi on the exact slope;
    returns (t, X(t) - x_target).

    ``sign`` = 1 for a maximum below the target, -1 for a minimum above it.  The
    search stops early once sign (X - x_target) > 0 (the point found then
    shows the crossings on both sides), and once the bracket width times the
    larger end slope is below 1e-9 (1 m + x_target).  It does not stop on a
    bound of how far the extremum lies from the target: the scatter of a
    measured table makes narrow spikes of X(t) (rays ducted along a nearly
    uniform layer) that no such bound sees.
    """
    side = 0
    t = t_a
    x = 0.0
    flat = 1e-9 * (1.0 + abs(x_target))     # [m]
    slope_a, slope_b = d_a, d_b             # the true end slopes (d_a, d_b get halved)
    for _ in range(MAX_ITER):
        t = (t_a * d_b - t_b * d_a) / (d_b - d_a)
        if not (t > min(t_a, t_b) and t < max(t_a, t_b)):
            t = 0.5 * (t_a + t_b)
        x, d = family_xd(UP_FAMILY, t, prof, geo)
        if d == 0.0 or not math.isfinite(d) or sign * (x - x_target) > 0.0:
            break
        if (d > 0.0) == (d_a > 0.0):
            t_a, d_a, slope_a = t, d, d
            if side == 1:
                d_b *= 0.5
            side = 1
        else:
            t_b, d_b, slope_b = t, d, d
            if side == -1:
                d_a *= 0.5
            side = -1
        if abs(t_b - t_a) * max(abs(slope_a), abs(slope_b)) <= flat:
            break
    return t, x - x_target


@lean_kernel
def up_family_scan(prof, geo, x_target, x_h, psi_s, ts, fs, extra_t, extra_f, exact, ds):
    """Scan of the refracted branch, refined at extrema; fills ts, fs (length >=
    2 n_scan + 2) and returns the number of points, in increasing t.

    The scan (cheap integrals, with the slope dX/dt) finds each extremum that
    could hide crossings of the target: an interval whose end slopes change
    sign around a maximum below the target (or a minimum above it) is refined
    by the zero of the exact slope; the first interval (slope unknown at t = 0),
    the last (the slope is infinite at the grazing ray) and the neighbours of a
    sample without a slope (NaN, where dn/dz nearly vanishes near the ray's
    top) by Brent's search on X when the sampled values point to an extremum
    there.  Each refined extremum joins the scan, so that a hidden crossing
    shows as a sign change.
    """
    n_scan = (ts.shape[0] - 4) // 2        # scan intervals: the scratch rows hold 2 n_scan + 4
    ts[0] = 0.0
    fs[0] = x_h - x_target
    ds[0] = math.nan
    exact[0] = 1.0
    for j in range(1, n_scan + 1):
        ts[j] = scan_point(j, psi_s, n_scan)
        r = family(UP_FAMILY, ts[j], prof, geo, True, False)
        fs[j] = r[0] - x_target
        ds[j] = r[5]
        exact[j] = 0.0
    m = n_scan + 1
    n_extra = 0
    for i in range(1, n_scan + 1):
        fa, fb = fs[i - 1], fs[i]
        da, db = ds[i - 1], ds[i]
        found = False
        if math.isfinite(da) and math.isfinite(db) and ((da > 0.0 > db and fa < 0.0 and fb < 0.0)
                                                      or (da < 0.0 < db and fa > 0.0 and fb > 0.0)):
            make_exact(i - 1, ts, fs, ds, exact, prof, geo, x_target)
            make_exact(i, ts, fs, ds, exact, prof, geo, x_target)
            da_exact, db_exact = ds[i - 1], ds[i]
            if (math.isfinite(da_exact) and math.isfinite(db_exact)
                    and (da_exact > 0.0) != (db_exact > 0.0)):
                t_e, f_e = stationary_point(ts[i - 1], da_exact, ts[i], db_exact, prof, geo,
                                            x_target, 1 if fa < 0.0 else -1)
                found = True
        elif (i == 1 and fa < 0.0 and fb < 0.0 and not db > 0.0) or (
                i == n_scan and fa < 0.0 and fb < 0.0 and not da < 0.0):
            # a maximum may lie inside an end interval
            t0 = 0.5 * (ts[i - 1] + ts[i])
            f_start = family_x(UP_FAMILY, t0, prof, geo) - x_target
            t_e, f_e = extremum(1, ts[i - 1], ts[i], t0, f_start, 0.0, prof, geo, x_target)
            found = True
        if found and n_extra < extra_t.shape[0]:
            extra_t[n_extra] = t_e
            extra_f[n_extra] = f_e
            n_extra += 1
    for j in range(1, n_scan):
        if math.isfinite(ds[j]) or n_extra >= extra_t.shape[0]:
            continue
        # no slope at this sample (dn/dz nearly vanishes near the ray's top): the
        # sampled values tell a maximum below the target or a minimum above it
        f0, f1, f2 = fs[j - 1], fs[j], fs[j + 1]
        if f1 >= f0 and f1 >= f2 and f1 < 0.0:
            sign = 1
        elif f1 <= f0 and f1 <= f2 and f1 > 0.0:
            sign = -1
        else:
            continue
        make_exact(j, ts, fs, ds, exact, prof, geo, x_target)
        t_e, f_e = extremum(sign, ts[j - 1], ts[j + 1], ts[j], fs[j], 0.0, prof, geo, x_target)
        extra_t[n_extra] = t_e
        extra_f[n_extra] = f_e
        n_extra += 1
    for j in range(n_extra):
        m = insert_point(ts, fs, ds, exact, m, extra_t[j], extra_f[j])
    return m


@lean_kernel
def insert_point(ts, fs, ds, exact, m, t, f):
    """Insert the exact extremum (t, f) (slope 0) into the sorted scan of m points;
    returns m + 1."""
    if m >= ts.shape[0]:
        return m
    j = m
    while j > 0 and ts[j - 1] > t:
        ts[j] = ts[j - 1]
        fs[j] = fs[j - 1]
        ds[j] = ds[j - 1]
        exact[j] = exact[j - 1]
        j -= 1
    ts[j] = t
    fs[j] = f
    ds[j] = 0.0
    exact[j] = 1.0
    return m + 1


@lean_kernel
def make_exact(j, ts, fs, ds, exact, prof, geo, x_target):
    """Replace a coarse scan value and slope by the exact ones (once per point)."""
    if exact[j] == 0.0:
        x, d = family_xd(UP_FAMILY, ts[j], prof, geo)
        fs[j] = x - x_target
        ds[j] = d
        exact[j] = 1.0


@lean_kernel
def solve_ice(out, kinds, conv, i, prof, x_target, z_src, z_rcv, scratch):
    """Every ray between two points in the ice; returns their number."""
    swapped = z_src > z_rcv
    z_lo, z_hi = (z_rcv, z_src) if swapped else (z_src, z_rcv)
    k_hi = find_panel(prof[0], z_hi)
    n_hi = panel_level(prof, k_hi, z_hi)[0]
    n_s = prof[4][0]
    geo = (n_hi, z_lo, z_hi, 0.0, 1.0, n_s, 0.0)
    uniform_hi = prof[2][k_hi] == UNIFORM and z_hi < prof[0][k_hi]
    k = 0
    if z_lo == z_hi:
        x_h = math.inf if uniform_hi else 0.0
        if uniform_hi:
            horizontal_straight(out, kinds, conv, i, k, n_hi, x_target)
            k += 1
    else:
        x_h = family_x(DIRECT_FAMILY, 0.0, prof, geo)
        if not math.isfinite(x_h):
            x_h = math.inf
        if x_target < x_h:
            t, ok = find_root(DIRECT_FAMILY, x_target, 0.0, x_h - x_target, HALF_PI, -x_target,
                              prof, geo, direct_start(x_target, x_h, z_hi - z_lo))
            store_general(out, kinds, conv, i, k, DIRECT_FAMILY, t, ok, swapped, 0.0, HALF_PI, prof,
                          geo)
            k += 1
    if z_hi >= 0.0:
        return k
    psi_s = math.atan2(math.sqrt(max((n_hi - n_s) * (n_hi + n_s), 0.0)), n_s)
    ts, fs, extra_t, extra_f, exact, ds = (scratch[0], scratch[1], scratch[2], scratch[3],
                                           scratch[4], scratch[5])
    m = 1
    ts[0] = 0.0
    fs[0] = x_h - x_target
    if psi_s > 0.0:
        m = up_family_scan(prof, geo, x_target, x_h, psi_s, ts, fs, extra_t, extra_f, exact, ds)
    else:
        fs[0] = family_x(UP_FAMILY, 0.0, prof, geo) - x_target
    n_up = 0
    trust = COARSE_TRUST * (1.0 + x_target)
    for j in range(1, m):
        if n_up >= MAX_UP:
            break
        fa, fb = fs[j - 1], fs[j]
        if fb == 0.0 or (fa > 0.0 and fb < 0.0) or (fa < 0.0 and fb > 0.0):
            # a crossing in the coarse scan: confirm it with exact values at the ends
            # whose coarse value is too close to the target to trust its sign
            if abs(fa) < trust:
                make_exact(j - 1, ts, fs, ds, exact, prof, geo, x_target)
            if abs(fb) < trust:
                make_exact(j, ts, fs, ds, exact, prof, geo, x_target)
            fa, fb = fs[j - 1], fs[j]
        if fb == 0.0 or (fa > 0.0 and fb < 0.0) or (fa < 0.0 and fb > 0.0):
            t, ok = find_root(UP_FAMILY, x_target, ts[j - 1], fa, ts[j], fb, prof, geo)
            store_general(out, kinds, conv, i, k, UP_FAMILY, t, ok, swapped, 0.0, psi_s, prof,
                          geo)
            k += 1
            n_up += 1
    if psi_s > 0.0 and abs(fs[m - 1]) < trust:
        make_exact(m - 1, ts, fs, ds, exact, prof, geo, x_target)
    f_s = fs[m - 1]
    if f_s > 0.0 and n_up < MAX_UP:        # reflected branch: monotone down to -x at pi/2
        t, ok = find_root(UP_FAMILY, x_target, ts[m - 1], f_s, HALF_PI, -x_target, prof, geo)
        store_general(out, kinds, conv, i, k, UP_FAMILY, t, ok, swapped, psi_s, HALF_PI, prof,
                      geo)
        k += 1
    return k


@lean_kernel
def solve_air_ice(out, kinds, conv, i, prof, n_air, x_target, z_src, z_rcv):
    """The transmitted ray between a point in the air and one in the ice."""
    source_in_air = z_src > 0.0
    h, z_ice = (z_src, z_rcv) if source_in_air else (z_rcv, z_src)
    geo = (prof[4][0], z_ice, 0.0, h, n_air, prof[4][0], 0.0)
    phi_top = math.atan2(x_target, h)
    f_top = family_x(AIR_FAMILY, phi_top, prof, geo) - x_target
    t, ok = find_root(AIR_FAMILY, x_target, 0.0, -x_target, phi_top, f_top, prof, geo)
    store_general(out, kinds, conv, i, 0, AIR_FAMILY, t, ok, source_in_air, 0.0, HALF_PI, prof,
                  geo)
    return 1


@lean_kernel
def solve_layer(out, kinds, conv, i, k, prof, x_target, z_src, z_rcv, z_layer, layer_index):
    """The ray bouncing once off a reflector at z_layer below both ice points."""
    swapped = z_src > z_rcv
    z_lo, z_hi = (z_rcv, z_src) if swapped else (z_src, z_rcv)
    if not z_layer < z_lo:
        return 0
    n_hi = index_at(prof, z_hi)
    geo = (n_hi, z_lo, z_hi, 0.0, 1.0, prof[4][0], z_layer)
    x_h = family_x(LAYER_FAMILY, 0.0, prof, geo)
    if not math.isfinite(x_h):
        x_h = math.inf
    if not x_target < x_h:
        return 0
    t, ok = find_root(LAYER_FAMILY, x_target, 0.0, x_h - x_target, HALF_PI, -x_target, prof, geo)
    store_general(out, kinds, conv, i, k, LAYER_FAMILY, t, ok, swapped, 0.0, HALF_PI, prof,
                  geo)
    out[i, k, es.COL_LAYER] = layer_index
    return 1


@lean_kernel
def solve_row(i, prof, n_air, x_target, z_src, z_rcv, layers, out, kinds, conv, count, scratch):
    """Solve pair i (and its bounces off ``layers``) and order its rays by travel time."""
    x, zs, zr = x_target[i], z_src[i], z_rcv[i]
    if not es.clear_row(out, kinds, conv, i, x, zs, zr):
        count[i] = 0
        return
    if zs > 0.0 and zr > 0.0:
        n = es.solve_uniform_ice(out, kinds, conv, i, n_air, x, -zs, -zr, True)
    elif zs > 0.0 or zr > 0.0:
        n = solve_air_ice(out, kinds, conv, i, prof, n_air, x, zs, zr)
    else:
        n = solve_ice(out, kinds, conv, i, prof, x, zs, zr, scratch)
        for j in range(layers.shape[0]):
            n += solve_layer(out, kinds, conv, i, n, prof, x, zs, zr, layers[j], float(j))
    count[i] = n
    es.sort_by_time(out, kinds, conv, i, n)


#: Rows per parallel chunk (each chunk allocates its scratch space once).
CHUNK = 64


@numba.njit(parallel=True, **KERNEL_OPTIONS)
def solve_pairs(prof, n_air, x_target, z_src, z_rcv, layers, out, kinds, conv, count, n_scan):
    """Solve every pair in parallel (arguments as ``exponential_solver.solve_pairs``,
    with the arrays of ``panel_blocks.solver_arrays`` in place of the exponential
    parameters, and ``n_scan`` scan intervals of the refracted branch)."""
    n = x_target.shape[0]
    n_chunks = (n + CHUNK - 1) // CHUNK
    for c in numba.prange(n_chunks):
        scratch = np.empty((6, 2 * n_scan + 4))
        for i in range(c * CHUNK, min(n, (c + 1) * CHUNK)):
            solve_row(i, prof, n_air, x_target, z_src, z_rcv, layers, out, kinds, conv, count,
                      scratch)


@numba.njit(**KERNEL_OPTIONS)
def solve_pairs_serial(prof, n_air, x_target, z_src, z_rcv, layers, out, kinds, conv, count,
                       n_scan):
    """:func:`solve_pairs` on the calling thread."""
    scratch = np.empty((6, 2 * n_scan + 4))
    for i in range(x_target.shape[0]):
        solve_row(i, prof, n_air, x_target, z_src, z_rcv, layers, out, kinds, conv, count,
                  scratch)


@lean_kernel
def max_reach(prof, z_lo, z_hi, scratch):
    """Largest horizontal distance [m] at which any ray joins heights z_lo <= z_hi < 0."""
    n_hi = index_at(prof, z_hi)
    n_s = prof[4][0]
    geo = (n_hi, z_lo, z_hi, 0.0, 1.0, n_s, 0.0)
    if z_lo == z_hi:
        k_hi = find_panel(prof[0], z_hi)
        if prof[2][k_hi] == UNIFORM and z_hi < prof[0][k_hi]:
            return math.inf
        x_h = 0.0
    else:
        x_h = family_x(DIRECT_FAMILY, 0.0, prof, geo)
    if not math.isfinite(x_h):
        return math.inf
    psi_s = math.atan2(math.sqrt(max((n_hi - n_s) * (n_hi + n_s), 0.0)), n_s)
    best = x_h
    if psi_s <= 0.0:
        return best
    ts, xs = scratch[0], scratch[1]
    n_scan = ts.shape[0] - 1               # scan intervals: the scratch rows hold n_scan + 1
    ts[0] = 0.0
    xs[0] = x_h
    for j in range(1, n_scan + 1):
        ts[j] = scan_point(j, psi_s, n_scan)
        xs[j] = family_x(UP_FAMILY, ts[j], prof, geo)
    for j in range(n_scan + 1):
        left = xs[j - 1] if j > 0 else -math.inf
        right = xs[j + 1] if j < n_scan else -math.inf
        if xs[j] >= left and xs[j] >= right:
            t_a = ts[max(j - 1, 0)]
            t_b = ts[min(j + 1, n_scan)]
            if j == 0 or j == n_scan:
                t0 = 0.5 * (ts[0] + ts[1]) if j == 0 else 0.5 * (ts[n_scan - 1] + ts[n_scan])
                f0 = family_x(UP_FAMILY, t0, prof, geo)
            else:
                t0, f0 = ts[j], xs[j]
            t_e, f_e = extremum(1, t_a, t_b, t0, f0, math.inf, prof, geo, 0.0)
            best = max(best, f_e, xs[j])
    return best


@numba.njit(parallel=True, **KERNEL_OPTIONS)
def max_reach_many(prof, antenna_z, source_z, out, n_scan):
    """:func:`max_reach` for an antenna height and many source heights (NaN -> NaN),
    with ``n_scan`` scan intervals."""
    n = source_z.shape[0]
    for c in numba.prange((n + CHUNK - 1) // CHUNK):
        scratch = np.empty((2, n_scan + 1))
        for i in range(c * CHUNK, min(n, (c + 1) * CHUNK)):
            z = source_z[i]
            if not math.isfinite(z):
                out[i] = math.nan
            elif z > 0.0 or antenna_z > 0.0:
                out[i] = math.inf
            else:
                out[i] = max_reach(prof, min(z, antenna_z), max(z, antenna_z), scratch)


def allocate(n_pairs, n_layers=0):
    """Output arrays for :func:`solve_pairs` (see ``exponential_solver.allocate``)."""
    k = MAX_RAYS + n_layers
    return (np.empty((n_pairs, k, es.N_COLS)), np.empty((n_pairs, k), dtype=np.int8),
            np.empty((n_pairs, k), dtype=np.bool_), np.empty(n_pairs, dtype=np.int64))
