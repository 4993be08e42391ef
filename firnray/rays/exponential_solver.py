"""Root finding for rays in an exponential profile: every ray between two points.

The horizontal distance of each ray family is a closed-form function of one
angle (``exponential_kernels``).  For two points in the ice, with z_hi the
shallower one, the elevation ``psi`` of the ray at z_hi parametrises

* the direct family: X_d(psi) falls monotonically from the direct horizon
  X_h = X_d(0) to 0 at psi = pi/2;
* the up-going family: X_u(0) = X_h, dX_u/dpsi(0) > 0, a single maximum (the
  largest reach X_max) at psi* in (0, psi_s], where psi_s is the ray that
  grazes the surface, then a monotone fall to 0 at psi = pi/2 (vertical
  bounce).  Refracted for psi < psi_s, reflected beyond.

So for a target distance X: X < X_h gives one direct and one up-going ray;
X_h <= X <= X_max gives two up-going rays (one each side of psi*); X > X_max
gives none (shadow zone).  Each root is polished by a Newton iteration on the
closed-form derivative, safeguarded by bisection inside its bracket.  The
single maximum is checked numerically by the tests on random geometries
(``tests/test_family_shape.py``).

One point in the air gives one transmitted ray, parametrised by its zenith
angle phi in the air; two points in the air give the straight ray and the one
reflected by the surface.  A uniform index (n_surface == n_deep) in the ice
is solved as straight lines with the image point for the bounce.

All functions are numba kernels; ``solve_pairs`` runs over pairs in parallel.
"""

import math

import numba
import numpy as np

from firnray.constants import SPEED_OF_LIGHT
from firnray.rays.bracketing import safeguarded_step
from firnray.rays.exponential_kernels import (
    KERNEL_OPTIONS,
    family_d,
    family_distance,
    family_sums,
    g_value,
    kernel,
    pair_state,
    segment_d,
    segment_extras,
    slope_factor,
    slowness_sq,
    turning_height,
)

#: Largest number of rays between two points in an exponential profile.
MAX_RAYS = 2

#: Kind codes used in the result arrays (see ``firnray.rays.results``).
DIRECT, REFRACTED, REFLECTED, TRANSMITTED, LAYER_REFLECTED = 0, 1, 2, 3, 4


HALF_PI = 0.5 * math.pi
MAX_ITER = 200

# Output columns of the float result array, per ray.
# COL_TURNING: the upper turning height (the lower one where there is no upper);
# COL_LOWER_TURNING: the lower turning height of a ray that turns below an end point
# (non-monotone profiles); COL_TURNS, COL_REFLECTIONS: numbers of turning points and
# of surface reflections; COL_FIRST_DOWN: 1 if the ray leaves the deeper end point
# downwards.
(COL_INVARIANT, COL_TIME, COL_LENGTH, COL_LAUNCH, COL_ARRIVAL, COL_TURNING, COL_SLOWNESS,
 COL_SPREAD, COL_LAYER, COL_LOWER_TURNING, COL_TURNS, COL_REFLECTIONS,
 COL_FIRST_DOWN) = range(13)
N_COLS = 13


@kernel
def transmitted_distance(phi, h, n_air, pair):
    """X [m] and dX/dphi [m/rad] of the air-ice ray at air zenith phi [rad].

    X = h tan(phi) + X_ice(b), b = n_air sin(phi); the ice part is the direct
    segment from the ice point up to the surface (``pair`` has the surface as
    its upper level), with vertical slowness p_s = sqrt(n_s^2 - b^2) there.
    """
    a = pair[0]
    n_s = pair[8]
    b = n_air * math.sin(phi)
    p = math.sqrt((n_s - b) * (n_s + b))
    q, sd, slope, w_lo, w0, code = family_d(False, b, p, pair)
    cphi = math.cos(phi)
    x = h * math.tan(phi) + b * sd / q
    dx_db = sd * a * a / (q * q * q) - b * slope / (q * p)
    return x, h / (cphi * cphi) + dx_db * n_air * cphi


@kernel
def layer_pack(a, delta, s, z_layer, z_lo, z_hi):
    """The 12 floats describing a layer bounce (same tuple type as ``pair_state``):
    (a, delta, s, z_layer, z_lo, z_hi, 0, ...)."""
    return (a, delta, s, z_layer, z_lo, z_hi, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0)


@kernel
def layer_family(psi, pack):
    """A ray from z_lo down to a reflecting layer at z_layer and up to z_hi.

    Two monotone pieces, z_layer -> z_hi and z_layer -> z_lo, share the
    invariant b = n_hi cos(psi) (psi the elevation of the ray at z_hi, where
    it arrives going up); each is a direct segment (``docs/theory.md``
    equations 2.5-2.8), so X = (b/q)(D_1 + D_2) and the slope adds the two
    pieces' terms as for the direct family.

    Returns
    -------
    x, dx_dpsi, q, sum_d, sum_ln_h, sum_dw, w_lo : float
    """
    a, delta, s, z_layer, z_lo, z_hi = pack[0], pack[1], pack[2], pack[3], pack[4], pack[5]
    p_hi = pair_state(a, delta, s, z_layer, z_hi)
    p_lo = pair_state(a, delta, s, z_layer, z_lo)
    u_l, n_l, u_hi, n_hi = p_hi[4], p_hi[5], p_hi[7], p_hi[8]
    u_lo, n_lo = p_lo[7], p_lo[8]
    b = n_hi * math.cos(psi)
    p = n_hi * math.sin(psi)
    q = math.sqrt(delta * u_hi * (a + n_hi) + p * p)
    w_l = math.sqrt(max(slowness_sq(delta, u_hi, n_hi, u_l, n_l, p), 0.0))
    w_lo = math.sqrt(max(slowness_sq(delta, u_hi, n_hi, u_lo, n_lo, p), 0.0))
    g_l = g_value(delta, q, u_l, n_l, w_l)
    g_hi = g_value(delta, q, u_hi, n_hi, p)
    g_lo = g_value(delta, q, u_lo, n_lo, w_lo)
    d1 = segment_d(a, s, q, z_hi - z_layer, p_hi[9], n_l, w_l, g_l, n_hi, p, g_hi)
    d2 = segment_d(a, s, q, z_lo - z_layer, p_lo[9], n_l, w_l, g_l, n_lo, w_lo, g_lo)
    k_l = slope_factor(delta, u_l, g_l)
    k_hi = slope_factor(delta, u_hi, g_hi)
    k_lo = slope_factor(delta, u_lo, g_lo)
    r_l = p / w_l if w_l > 0.0 else 1.0
    r_lo = p / w_lo if w_lo > 0.0 else 1.0
    pre = s * b / q
    slope = -pre * (k_hi - k_l * r_l) - pre * (k_lo * r_lo - k_l * r_l)
    sd = d1 + d2
    h1, dw1 = segment_extras(p_hi[9], n_l, w_l, n_hi, p)
    h2, dw2 = segment_extras(p_lo[9], n_l, w_l, n_lo, w_lo)
    x = b * sd / q
    dx = -p * a * a * sd / (q * q * q) + b * slope / q
    return x, dx, q, sd, h1 + h2, dw1 + dw2, w_lo


@kernel
def solve_layer_pair(out, kinds, conv, i, k, a, delta, s, x_target, z_src, z_rcv, z_layer,
                     layer_index):
    """The ray that bounces once off a horizontal reflector at z_layer below both
    points (both in the ice); stored in slot k.  Returns 1 if it exists, else 0."""
    swapped = z_src > z_rcv
    z_lo, z_hi = (z_rcv, z_src) if swapped else (z_src, z_rcv)
    if not z_layer < z_lo:
        return 0
    pack = layer_pack(a, delta, s, z_layer, z_lo, z_hi)
    if delta == 0.0:
        x_horizon = math.inf      # uniform index: straight lines reach any distance
    else:
        x_horizon = layer_family(0.0, pack)[0]
    if not x_target < x_horizon:
        return 0
    guess = math.atan2((z_hi - z_layer) + (z_lo - z_layer), x_target)
    lo_t = 0.0 if delta > 0.0 else 1e-300
    f_lo = x_horizon - x_target if delta > 0.0 else math.inf
    psi, ok = polish_root(3, x_target, lo_t, f_lo, HALF_PI, -x_target, guess, 0.0, 1.0, pack)
    x, dx, q, sd, sh, sw, w_lo = layer_family(psi, pack)
    n_hi = a - delta * math.exp(z_hi / s)
    n_lo = a - delta * math.exp(z_lo / s)
    b = n_hi * math.cos(psi)
    p = n_hi * math.sin(psi)
    length = s * sh + a * sd / q
    c_time = s * sw + a * s * sh + q * sd + b * x
    theta_lo = math.atan2(b, w_lo)            # at z_lo, the ray travels down then up
    theta_hi = HALF_PI - psi                  # arrives at z_hi going up
    if swapped:   # source at z_hi (leaves going down), receiver at z_lo (arrives going up)
        launch, arrival = math.pi - theta_hi, theta_lo
    else:         # source at z_lo (leaves going down), receiver at z_hi
        launch, arrival = math.pi - theta_lo, theta_hi
    spread = equivalent_distance(x, dx, w_lo, n_lo, n_hi, b, swapped, length)
    store_ray(out, kinds, conv, i, k, LAYER_REFLECTED, b, c_time, length, launch, arrival,
              math.nan, p, ok, spread)
    out[i, k, COL_LAYER] = layer_index
    return 1


@kernel
def evaluate(mode, t, h, n_air, pair):
    """Distance and slope of family ``mode`` (0 direct, 1 up-going, 2 transmitted,
    3 bounce off a reflecting layer; ``pair`` from :func:`layer_pack` then)."""
    if mode == 2:
        return transmitted_distance(t, h, n_air, pair)
    if mode == 3:
        x, dx, q, sd, sh, sw, w_lo = layer_family(t, pair)
        return x, dx
    return family_distance(mode == 1, t, pair)


@kernel
def polish_root(mode, x_target, t_a, f_a, t_b, f_b, t_start, h, n_air, pair):
    """Root of X(t) = x_target in the bracket [t_a, t_b] (f_a, f_b of opposite sign).

    Newton steps on the closed-form slope from ``t_start`` (the bracket's
    middle if it lies outside), replaced by bisection whenever a step would
    leave the bracket or fails to halve it.

    Returns
    -------
    t : float
        The root [rad].
    converged : bool
        True if |X(t) - x_target| <= 1e-12 (1 + x_target) or the bracket
        shrank to rounding.
    """
    if f_a == 0.0:
        return t_a, True
    if f_b == 0.0:
        return t_b, True
    # orient so that f(lo) < 0 < f(hi)
    if f_a < 0.0:
        lo, hi = t_a, t_b
    else:
        lo, hi = t_b, t_a
    tol = 1e-12 * (1.0 + x_target)
    t = t_start
    if not (t - lo) * (t - hi) < 0.0:
        t = 0.5 * (t_a + t_b)
    width_old = abs(t_b - t_a)
    width = width_old
    x, dx = evaluate(mode, t, h, n_air, pair)
    for _ in range(MAX_ITER):
        f = x - x_target
        if abs(f) <= tol:
            return t, True
        if f < 0.0:
            lo = t
        else:
            hi = t
        t_new = safeguarded_step(t, f, dx, lo, hi, width_old)
        width_old = width
        width = abs(t_new - t)
        if t_new == t or abs(hi - lo) <= 4e-16 * max(abs(lo), abs(hi)) + 1e-300:
            return t_new, True
        t = t_new
        x, dx = evaluate(mode, t, h, n_air, pair)
    return t, False


@kernel
def grazing_angle(pair):
    """Elevation psi_s [rad] at z_hi of the up-going ray that grazes the surface (b = n_s).

    p_s^2 = n_hi^2 - n_s^2 = -dn_hs (n_hi + n_s).
    """
    n_s = pair[0] - pair[1]
    return math.atan2(math.sqrt(max(-pair[11] * (pair[8] + n_s), 0.0)), n_s)


@kernel
def reach_bound(x_h, pair):
    """Upper bound [m] on the reach X_max of the up-going family.

    The up-going ray is the direct piece z_lo -> z_hi, whose reach is at most
    X_h (its integrand b/w grows with b <= n_hi), plus twice the piece from z_hi
    to its turning point (or the surface).  On that piece
    n - b >= delta u_hi (z_top - z)/s and n^2 - b^2 >= 2 b (n - b), so

        X_max <= X_h + 2 sqrt(2 n_hi s |z_hi| / (delta u_hi)).

    Used to skip the peak search for pairs far inside the shadow zone.
    """
    s, z_hi, u_hi, n_hi = pair[2], pair[6], pair[7], pair[8]
    return x_h + 2.0 * math.sqrt(2.0 * n_hi * s * (-z_hi) / (pair[1] * u_hi))


@kernel
def up_family_peak(pair):
    """Angle psi* [rad] and distance X_max [m] of the largest reach of the up-going family.

    dX_u/dpsi > 0 at psi = 0; if it is still >= 0 just below the surface-
    grazing angle psi_s, the maximum is the grazing ray itself (the reflected
    side falls with infinite slope); otherwise the zero of dX_u/dpsi in
    (0, psi_s) is found by the Illinois variant of regula falsi.
    """
    psi_s = grazing_angle(pair)
    t_b = psi_s * (1.0 - 1e-13)
    x_b, g_b = family_distance(True, t_b, pair)
    if g_b >= 0.0:
        x_s, g_s = family_distance(True, psi_s, pair)
        if x_s >= x_b:
            return psi_s, x_s
        return t_b, x_b
    t_a = 0.0
    x_a, g_a = family_distance(True, t_a, pair)
    side = 0
    t = t_a
    x = x_a
    for _ in range(MAX_ITER):
        t = (t_a * g_b - t_b * g_a) / (g_b - g_a)
        if not (t > t_a and t < t_b):
            t = 0.5 * (t_a + t_b)
        x, g = family_distance(True, t, pair)
        if g == 0.0 or (t_b - t_a) <= 1e-15 * t_b:
            break
        if g > 0.0:
            t_a, g_a = t, g
            if side == 1:
                g_b *= 0.5
            side = 1
        else:
            t_b, g_b = t, g
            if side == -1:
                g_a *= 0.5
            side = -1
        if (t_b - t_a) <= 1e-13 * t_b:
            break
    return t, x


@kernel
def clear_row(out, kinds, conv, i, x, zs, zr):
    """Empty row i (NaN, kind -1, not converged); True if its pair (horizontal
    distance x, heights zs, zr [m]) is finite and can be solved."""
    for k in range(out.shape[1]):
        for c in range(N_COLS):
            out[i, k, c] = math.nan
        kinds[i, k] = -1
        conv[i, k] = False
    return math.isfinite(x) and math.isfinite(zs) and math.isfinite(zr)


@kernel
def sort_by_time(out, kinds, conv, i, n):
    """Insertion sort of the first n rays of row i by travel time (stable: rays of
    equal time keep their order)."""
    for m in range(1, n):
        j = m
        while j > 0 and out[i, j, COL_TIME] < out[i, j - 1, COL_TIME]:
            for c in range(N_COLS):
                tmp = out[i, j, c]
                out[i, j, c] = out[i, j - 1, c]
                out[i, j - 1, c] = tmp
            kk = kinds[i, j]
            kinds[i, j] = kinds[i, j - 1]
            kinds[i, j - 1] = kk
            cc = conv[i, j]
            conv[i, j] = conv[i, j - 1]
            conv[i, j - 1] = cc
            j -= 1


@kernel
def store_ray(out, kinds, conv, i, k, code, b, c_time, length, launch, arrival,
              turning, slowness, converged, spread):
    out[i, k, COL_SPREAD] = spread
    out[i, k, COL_LAYER] = math.nan
    out[i, k, COL_INVARIANT] = b
    out[i, k, COL_TIME] = c_time / SPEED_OF_LIGHT
    out[i, k, COL_LENGTH] = length
    out[i, k, COL_LAUNCH] = math.degrees(launch)
    out[i, k, COL_ARRIVAL] = math.degrees(arrival)
    out[i, k, COL_TURNING] = turning
    out[i, k, COL_SLOWNESS] = slowness
    out[i, k, COL_LOWER_TURNING] = math.nan
    out[i, k, COL_TURNS] = 1.0 if code == REFRACTED else 0.0
    out[i, k, COL_REFLECTIONS] = 1.0 if code == REFLECTED else 0.0
    out[i, k, COL_FIRST_DOWN] = 0.0
    kinds[i, k] = code
    conv[i, k] = converged


@kernel
def equivalent_distance(x, dx_dpsi, w_lo, n_lo, n_hi, b, swapped, length):
    """Equivalent spreading distance R_eq [m] of a ray between two ice points.

    Energy in the ray tube of a point source (``docs/theory.md`` section 7):
    the power flux at the receiver is P / (4 pi R_eq^2) with
    R_eq^2 = X |dX/dtheta_0| |cos theta_r| / sin theta_0.  With the family
    parameter psi (elevation at z_hi, b = n_hi cos psi, p = n_hi sin psi) and
    dX/db = -(dX/dpsi)/p:

    * source at z_lo: R_eq^2 = X |dX/dpsi| w_lo n_lo / (n_hi b)
    * source at z_hi: R_eq^2 = X |dX/dpsi| w_lo n_hi / (n_lo b)

    Straight down or up (X = 0 or b = 0) the limit is the path length.
    """
    if x <= 0.0 or b <= 0.0:
        return length
    if swapped:
        r2 = x * abs(dx_dpsi) * w_lo * n_hi / (n_lo * b)
    else:
        r2 = x * abs(dx_dpsi) * w_lo * n_lo / (n_hi * b)
    return math.sqrt(r2)


@kernel
def store_ice_ray(out, kinds, conv, i, k, up, psi, converged, swapped, pair):
    """Evaluate the ray of a family at psi and write it to row i, slot k."""
    a, delta, s = pair[0], pair[1], pair[2]
    n_hi = pair[8]
    b = n_hi * math.cos(psi)
    p = n_hi * math.sin(psi)
    q, sd, sh, sw, slope, w_lo, code = family_sums(up, b, p, pair)
    x = b * sd / q
    length = s * sh + a * sd / q
    c_time = s * sw + a * s * sh + q * sd + b * x
    dx_dpsi = -p * a * a * sd / (q * q * q) + b * slope / q
    spread = equivalent_distance(x, dx_dpsi, w_lo, pair[5], pair[8], b, swapped, length)
    turning = math.nan
    if code == 1:
        turning = turning_height(a, delta, s, b, q)
    theta_lo = math.atan2(b, w_lo)
    if up:
        theta_hi = HALF_PI + psi
    else:
        theta_hi = HALF_PI - psi
    if swapped:
        launch, arrival = math.pi - theta_hi, math.pi - theta_lo
    else:
        launch, arrival = theta_lo, theta_hi
    store_ray(out, kinds, conv, i, k, code, b, c_time, length, launch, arrival,
              turning, p, converged, spread)


@kernel
def solve_uniform_ice(out, kinds, conv, i, n, x_target, z_src, z_rcv, mirror):
    """Straight rays in a uniform index n: the direct line and the image bounce.

    With ``mirror`` the heights given are the negated heights of two points in
    the air (the bounce is then off the surface from above) and the zenith
    angles are mirrored back.
    """
    k = 0
    for bounce in range(2):
        if bounce == 1 and (z_src >= 0.0 or z_rcv >= 0.0):
            break
        if bounce == 0:
            dz = z_rcv - z_src
        else:
            dz = -z_rcv - z_src  # image of the receiver above the surface
        length = math.hypot(x_target, dz)
        launch = math.atan2(x_target, dz)
        if bounce == 0:
            arrival = launch
        else:
            arrival = math.pi - launch
        code = DIRECT if bounce == 0 else REFLECTED
        if mirror:
            launch, arrival = math.pi - launch, math.pi - arrival
        store_ray(out, kinds, conv, i, k, code, n * x_target / length, n * length, length,
                  launch, arrival, math.nan, abs(n * dz / length), True, length)
        k += 1
    return k


@kernel
def solve_ice_pair(out, kinds, conv, i, a, delta, s, x_target, z_src, z_rcv):
    """Every ray between two points in the ice; returns their number."""
    if delta == 0.0:
        return solve_uniform_ice(out, kinds, conv, i, a, x_target, z_src, z_rcv, False)
    swapped = z_src > z_rcv
    if swapped:
        z_lo, z_hi = z_rcv, z_src
    else:
        z_lo, z_hi = z_src, z_rcv
    pair = pair_state(a, delta, s, z_lo, z_hi)
    x_h, g_h = family_distance(False, 0.0, pair)
    k = 0
    if x_target < x_h and z_lo < z_hi:
        # start from the elevation of the straight chord
        guess = math.atan2(z_hi - z_lo, x_target)
        psi, ok = polish_root(0, x_target, 0.0, x_h - x_target, HALF_PI, -x_target, guess,
                              0.0, 1.0, pair)
        store_ice_ray(out, kinds, conv, i, k, False, psi, ok, swapped, pair)
        k += 1
    if z_hi >= 0.0:
        return k
    if x_target < x_h:
        # start from the straight ray to the image of z_hi above the surface
        guess = math.atan2(-z_lo - z_hi, x_target)
        psi, ok = polish_root(1, x_target, 0.0, x_h - x_target, HALF_PI, -x_target, guess,
                              0.0, 1.0, pair)
        store_ice_ray(out, kinds, conv, i, k, True, psi, ok, swapped, pair)
        return k + 1
    if x_target > reach_bound(x_h, pair):
        return k  # beyond any up-going ray: shadow zone, no peak search needed
    psi_peak, x_max = up_family_peak(pair)
    f_peak = x_max - x_target
    if f_peak < 0.0:
        return k
    if f_peak <= 1e-12 * (1.0 + x_target):
        store_ice_ray(out, kinds, conv, i, k, True, psi_peak, True, swapped, pair)
        return k + 1
    psi, ok = polish_root(1, x_target, 0.0, x_h - x_target, psi_peak, f_peak, -1.0,
                          0.0, 1.0, pair)
    store_ice_ray(out, kinds, conv, i, k, True, psi, ok, swapped, pair)
    psi, ok = polish_root(1, x_target, psi_peak, f_peak, HALF_PI, -x_target, -1.0,
                          0.0, 1.0, pair)
    store_ice_ray(out, kinds, conv, i, k + 1, True, psi, ok, swapped, pair)
    return k + 2


@kernel
def solve_air_ice_pair(out, kinds, conv, i, a, delta, s, n_air, x_target, z_src, z_rcv):
    """The transmitted ray between a point in the air and one in the ice."""
    source_in_air = z_src > 0.0
    if source_in_air:
        h, z_lo = z_src, z_rcv
    else:
        h, z_lo = z_rcv, z_src
    pair = pair_state(a, delta, s, z_lo, 0.0)
    phi_top = math.atan2(x_target, h)
    x_top, g_top = transmitted_distance(phi_top, h, n_air, pair)
    phi, ok = polish_root(2, x_target, 0.0, -x_target, phi_top, x_top - x_target, -1.0,
                          h, n_air, pair)
    b = n_air * math.sin(phi)
    n_s = a - delta
    p = math.sqrt((n_s - b) * (n_s + b))
    q, sd, sh, sw, slope, w_lo, code = family_sums(False, b, p, pair)
    x_ice = b * sd / q
    air_length = h / math.cos(phi)
    length = s * sh + a * sd / q + air_length
    c_time = s * sw + a * s * sh + q * sd + b * x_ice + n_air * air_length
    theta_ice = math.atan2(b, w_lo)
    if source_in_air:
        launch, arrival = math.pi - phi, math.pi - theta_ice
    else:
        launch, arrival = theta_ice, phi
    x_all, dx_dphi = transmitted_distance(phi, h, n_air, pair)
    n_lo = pair[5]
    if source_in_air:
        # source zenith phi in the air; receiver cos(theta) = w_lo / n_lo
        r2 = x_all * abs(dx_dphi) * (w_lo / n_lo) / max(math.sin(phi), 1e-300)
    else:
        # source in the ice: d(theta_0) = db / w_lo, db = n_air cos(phi) dphi
        r2 = x_all * abs(dx_dphi) * w_lo * n_lo / (n_air * max(b, 1e-300))
    spread = math.sqrt(r2) if x_target > 0.0 else length
    store_ray(out, kinds, conv, i, 0, TRANSMITTED, b, c_time, length, launch, arrival,
              math.nan, p, ok, spread)
    return 1


@kernel
def solve_pair(out, kinds, conv, i, a, delta, s, n_air, x_target, z_src, z_rcv):
    """Every ray for pair i, written to ``out[i]``; returns their number."""
    if z_src > 0.0 and z_rcv > 0.0:
        return solve_uniform_ice(out, kinds, conv, i, n_air, x_target, -z_src, -z_rcv, True)
    if z_src > 0.0 or z_rcv > 0.0:
        return solve_air_ice_pair(out, kinds, conv, i, a, delta, s, n_air, x_target,
                                  z_src, z_rcv)
    return solve_ice_pair(out, kinds, conv, i, a, delta, s, x_target, z_src, z_rcv)


@kernel
def solve_row(i, a, delta, s, n_air, x_target, z_src, z_rcv, layers, out, kinds, conv, count):
    """Solve pair i (and its bounces off ``layers``) and order its rays by travel time."""
    x, zs, zr = x_target[i], z_src[i], z_rcv[i]
    if not clear_row(out, kinds, conv, i, x, zs, zr):
        count[i] = 0
        return
    n = solve_pair(out, kinds, conv, i, a, delta, s, n_air, x, zs, zr)
    if zs <= 0.0 and zr <= 0.0:
        for j in range(layers.shape[0]):
            n += solve_layer_pair(out, kinds, conv, i, n, a, delta, s, x, zs, zr,
                                  layers[j], float(j))
    count[i] = n
    sort_by_time(out, kinds, conv, i, n)


@numba.njit(parallel=True, **KERNEL_OPTIONS)
def solve_pairs(a, delta, s, n_air, x_target, z_src, z_rcv, layers, out, kinds, conv, count):
    """Solve every pair, in parallel over numba threads.

    Parameters
    ----------
    a, delta : float
        n_deep and n_deep - n_surface [1].
    s : float
        Scale depth [m].
    n_air : float
        Index above the surface [1].
    x_target, z_src, z_rcv : ndarray, shape (N,)
        Horizontal distance [m], source and receiver heights [m].  A row with
        a NaN is skipped (count 0).
    layers : ndarray, shape (L,)
        Heights of horizontal reflectors [m] (may be empty); a pair in the
        ice above a layer also gets the ray that bounces off it once.
    out : ndarray, shape (N, MAX_RAYS + L, N_COLS)
        Receives the ray quantities (NaN where there is no ray).
    kinds : ndarray of int8, shape (N, MAX_RAYS)
        Receives the kind codes (-1 where no ray).
    conv : ndarray of bool, shape (N, MAX_RAYS)
        Receives the convergence flags.
    count : ndarray of int64, shape (N,)
        Receives the number of rays per pair.
    """
    for i in numba.prange(x_target.shape[0]):
        solve_row(i, a, delta, s, n_air, x_target, z_src, z_rcv, layers, out, kinds, conv,
                  count)


@kernel
def solve_pairs_serial(a, delta, s, n_air, x_target, z_src, z_rcv, layers, out, kinds, conv,
                       count):
    """:func:`solve_pairs` on the calling thread only (cheaper for a few pairs)."""
    for i in range(x_target.shape[0]):
        solve_row(i, a, delta, s, n_air, x_target, z_src, z_rcv, layers, out, kinds, conv,
                  count)


#: No reflecting layers (the default).
NO_LAYERS = np.empty(0)


def allocate(n_pairs, n_layers=0):
    """Output arrays for ``solve_pairs``: (out, kinds, conv, count), uninitialised
    (every row is written by the kernel)."""
    k = MAX_RAYS + n_layers
    out = np.empty((n_pairs, k, N_COLS))
    kinds = np.empty((n_pairs, k), dtype=np.int8)
    conv = np.empty((n_pairs, k), dtype=np.bool_)
    count = np.empty(n_pairs, dtype=np.int64)
    return out, kinds, conv, count
