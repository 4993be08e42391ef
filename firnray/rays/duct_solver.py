"""Every ray between two points in a non-monotone profile (inversions, lenses, ducts).

Parametrised by its Snell invariant b, a ray between z_lo <= z_hi (both in
the ice) lives in the band of heights around them where n > b, which needs
b < b_max = min of n over [z_lo, z_hi].  Three legs make up every such ray
(``docs/theory.md`` section 11.6):

    a(b) = X(z_lo -> z_hi),   U(b) = X(z_hi -> top),   D(b) = X(bottom -> z_lo)

with top the upper turning height or the surface (a reflection) and bottom
the lower turning height (none when the ray escapes into deep ice).  A ray
that leaves z_lo downwards if e_d = 1 (upwards if 0), arrives at z_hi
downwards if e_u = 1, and crosses the whole band j more times in each
direction has

    X = a + 2 e_u U + 2 e_d D + j P,    P = 2 (a + U + D),

with j + e_u events at the top and j + e_d turning points at the bottom
(only e_d = 0, j = 0 without a bottom).  The same sums give its length and
travel time.

The band's edges jump where b passes the value of a local minimum of n that
is lower than everything between it and the end points (a "record"
minimum); there the legs diverge logarithmically (the ray runs along the
minimum).  The solver splits (0, b_max) at these values, samples each piece
of b densely (Chebyshev points, plus points approaching each divergent end
geometrically down to a relative distance of 1e-13), and for each family
finds every sign change of X - x; a sampled extremum of X - x on the wrong
side of zero is refined by Brent's search, so that a pair of close roots
between samples shows.  Roots are polished by Brent's method on b.
"""

import math

import numba
import numpy as np

from firnray.constants import SPEED_OF_LIGHT
from firnray.rays import exponential_solver as es
from firnray.rays.bracketing import brent_min_step, brent_min_update
from firnray.rays.duct_kernels import SOFT, TURNING, crossing_down, crossing_up, leg
from firnray.rays.exponential_kernels import KERNEL_OPTIONS
from firnray.rays.panel_kernels import UNIFORM, find_panel, index_at, lean_kernel
from firnray.rays.panel_solver import horizontal_straight, solve_air_ice

#: An end point where w^2 < NEAR_LEVEL n^2 (within about 6 degrees of level) is a soft end.
NEAR_LEVEL = 0.01
#: Default number of Chebyshev scan intervals per piece of b.
SCAN = 12
#: Geometric scan points towards each divergent end of a piece (1e-2 to 1e-13 of
#: its width; near such an end X ~ -C log|b - b_c| grows monotonically).
LOG_STEPS = 6
#: Default most rays kept per pair.
MAX_SLOTS = 64
#: Kind code of a ray with two or more turning points and no surface reflection.
DUCTED = 5
MAX_ITER = 100


@lean_kernel
def legs(prof, aux, b, z_lo, z_hi, n_hi, state, need=2, full=True):
    """Fill ``state`` with the legs at invariant b: a only (need 0), a and U
    (1), or all three (2); without ``full`` only the X columns are complete.

    state[0:3] = a (X, L, c T), [3:6] = U, [6:9] = D, [9] upper edge height
    [m] (0 for the surface), [10] 1 if the top is the surface, [11] lower
    turning height [m] (-inf if none), [12] 1 if there is a bottom.
    """
    p_min, minima = aux[0], aux[1]
    p = math.sqrt(max((n_hi - b) * (n_hi + b), 0.0))
    n_lo = index_at(prof, z_lo)
    # an end point the ray passes nearly level gets the substitution of a soft end
    soft_lo = SOFT if (n_lo - b) * (n_lo + b) < NEAR_LEVEL * n_lo * n_lo else 0
    soft_hi = SOFT if p * p < NEAR_LEVEL * n_hi * n_hi else 0
    r = leg(prof, minima, b, n_hi, p, z_lo, z_hi, soft_lo, soft_hi, full)
    state[0], state[1], state[2] = r[0], r[1], r[2]
    if need == 0:
        return
    k_t, z_t = crossing_up(prof, p_min, z_hi, b)
    if k_t < 0:
        r = leg(prof, minima, b, n_hi, p, z_hi, 0.0, 0, 0, full)
        state[9] = 0.0
        state[10] = 1.0
    else:
        r = leg(prof, minima, b, n_hi, p, z_hi, z_t, 0, TURNING, full)
        state[9] = z_t
        state[10] = 0.0
    state[3], state[4], state[5] = r[0], r[1], r[2]
    if need == 1:
        return
    k_b, z_b = crossing_down(prof, p_min, z_lo, b)
    if k_b < 0:
        state[6], state[7], state[8] = math.inf, math.inf, math.inf
        state[11] = -math.inf
        state[12] = 0.0
    else:
        r = leg(prof, minima, b, n_hi, p, z_b, z_lo, TURNING, soft_lo, full)
        state[6], state[7], state[8] = r[0], r[1], r[2]
        state[11] = z_b
        state[12] = 1.0


@lean_kernel
def combine(state, col, e_u, e_d, j):
    """a + 2 e_u U + 2 e_d D + j P of column col (0: X, 1: L, 2: c T)."""
    # legs a family does not use are not read (they may not have been evaluated)
    total = state[col]
    if e_u > 0:
        total += 2.0 * state[3 + col]
    if e_d > 0:
        total += 2.0 * state[6 + col]
    if j > 0:
        total += 2.0 * j * (state[col] + state[3 + col] + state[6 + col])
    return total


@lean_kernel
def family_f(prof, aux, geo, b, e_u, e_d, j, state):
    """X - x_target [m] of family (e_u, e_d, j) at b."""
    z_lo, z_hi, n_hi, x_target, z_layer = geo
    if e_u < 0:          # the ray that bounces off a reflector at z_layer
        layer_legs(prof, aux, b, z_lo, z_hi, n_hi, z_layer, state, False)
        return state[0] - x_target
    need = 2 if (e_d > 0 or j > 0) else (1 if e_u > 0 else 0)
    legs(prof, aux, b, z_lo, z_hi, n_hi, state, need, False)
    return combine(state, 0, e_u, e_d, j) - x_target


@lean_kernel
def layer_legs(prof, aux, b, z_lo, z_hi, n_hi, z_layer, state, full):
    """state[0:3] = X, L, c T of the ray down from z_lo to a reflector at
    z_layer < z_lo and back up to z_hi (two legs with fixed ends, b below the
    least index between z_layer and z_hi)."""
    minima = aux[1]
    p = math.sqrt(max((n_hi - b) * (n_hi + b), 0.0))
    r1 = leg(prof, minima, b, n_hi, p, z_layer, z_lo, 0, 0, full)
    r2 = leg(prof, minima, b, n_hi, p, z_layer, z_hi, 0, 0, full)
    state[0], state[1], state[2] = r1[0] + r2[0], r1[1] + r2[1], r1[2] + r2[2]


@lean_kernel
def solve_layer_duct(out, kinds, conv, i, k, prof, aux, x_target, z_src, z_rcv, z_layer,
                     layer_index, state, state2):
    """The ray that bounces once off a reflector at z_layer below both points.

    Its two legs have fixed ends, so X grows with b on (0, b_L), b_L the least
    index between z_layer and the shallower point: one root at most.  Returns
    the number of rays added (0 or 1)."""
    swapped = z_src > z_rcv
    z_lo, z_hi = (z_rcv, z_src) if swapped else (z_src, z_rcv)
    if not z_layer < z_lo:
        return 0
    minima = aux[1]
    mz, mn = minima[0], minima[1]
    n_hi = index_at(prof, z_hi)
    b_l = min(n_hi, index_at(prof, z_layer))
    b_l = min(b_l, index_at(prof, z_lo))
    for m in range(mz.shape[0]):
        if z_layer < mz[m] < z_hi:
            b_l = min(b_l, mn[m])
    geo = (z_lo, z_hi, n_hi, x_target, z_layer)
    b_end = b_l * (1.0 - 1e-13)
    f_end = family_f(prof, aux, geo, b_end, -1, 0, 0, state)
    if not f_end >= 0.0:
        return 0
    b, ok = brent_root(prof, aux, geo, -1, 0, 0, 0.0, -x_target, b_end, f_end, state)
    if k >= out.shape[1]:
        return 1
    layer_legs(prof, aux, b, z_lo, z_hi, n_hi, z_layer, state, True)
    n_lo = index_at(prof, z_lo)
    th_lo = math.atan2(b, math.sqrt(max((n_lo - b) * (n_lo + b), 0.0)))
    th_hi = math.atan2(b, math.sqrt(max((n_hi - b) * (n_hi + b), 0.0)))
    # down from the source, up to the receiver
    launch, arrival = (math.pi - th_hi, th_lo) if swapped else (math.pi - th_lo, th_hi)
    es.store_ray(out, kinds, conv, i, k, es.LAYER_REFLECTED, b, state[2], state[1], launch,
                 arrival, math.nan, math.sqrt(max((n_hi - b) * (n_hi + b), 0.0)), ok, state[1])
    out[i, k, es.COL_LAYER] = layer_index
    out[i, k, es.COL_SPREAD] = spreading(prof, aux, geo, b, -1, 0, 0, 0.0, b_l, state[0],
                                         state[1], swapped, state2)
    return 1


@lean_kernel
def brent_root(prof, aux, geo, e_u, e_d, j, b_a, f_a, b_b, f_b, state):
    """Root of family (e_u, e_d, j) in [b_a, b_b] (f of opposite signs) by
    Brent's method; returns (b, converged)."""
    tol_f = 1e-10 * (1.0 + geo[3])
    a, fa, bb, fb = b_a, f_a, b_b, f_b
    c, fc = a, fa
    d = bb - a
    e = d
    for _ in range(MAX_ITER):
        if (fb > 0.0) == (fc > 0.0):
            c, fc = a, fa
            d = bb - a
            e = d
        if abs(fc) < abs(fb):
            a, fa = bb, fb
            bb, fb = c, fc
            c, fc = a, fa
        tol = 2e-16 * abs(bb) + 1e-300
        m = 0.5 * (c - bb)
        if abs(fb) <= tol_f or fb == 0.0:
            return bb, True
        if abs(m) <= tol:
            # b is resolved to double precision: a landing miss of up to
            # LANDING_LIMIT (about 1 ps of travel time) is what b can give
            return bb, abs(fb) <= LANDING_LIMIT
        if abs(e) >= tol and abs(fa) > abs(fb) and math.isfinite(fa):
            s = fb / fa
            if a == c:
                pp = 2.0 * m * s
                q = 1.0 - s
            else:
                q = fa / fc
                r = fb / fc
                pp = s * (2.0 * m * q * (q - r) - (bb - a) * (r - 1.0))
                q = (q - 1.0) * (r - 1.0) * (s - 1.0)
            if pp > 0.0:
                q = -q
            else:
                pp = -pp
            if 2.0 * pp < min(3.0 * m * q - abs(tol * q), abs(e * q)):
                e = d
                d = pp / q
            else:
                d = m
                e = m
        else:
            d = m
            e = m
        a, fa = bb, fb
        bb = bb + d if abs(d) > tol else bb + math.copysign(tol, m)
        fb = family_f(prof, aux, geo, bb, e_u, e_d, j, state)
        if not math.isfinite(fb):
            fb = 1e300
    return bb, False


@lean_kernel
def extremum(prof, aux, geo, e_u, e_d, j, sign, t_a, t_b, t0, f0, state):
    """Brent's search for the maximum (sign = 1) or minimum (-1) of family
    (e_u, e_d, j) in [t_a, t_b] from the interior sample (t0, f0); stops once
    the extremum crosses zero.  Returns (t, f)."""
    a, bb = t_a, t_b
    x = w = v = t0
    fx = fw = fv = -sign * f0
    d = 0.0
    e = 0.0
    evaluations = 0
    for _ in range(MAX_ITER):
        m = 0.5 * (a + bb)
        tol1 = 1e-11 * abs(x) + 1e-15
        tol2 = 2.0 * tol1
        if abs(x - m) <= tol2 - 0.5 * (bb - a) or fx < 0.0:
            break
        if x != w and w != v and x != v:
            # the parabola through the three best points: once its vertex lies
            # on the wrong side by more than ten times its distance from the best
            # value, the extremum cannot cross zero
            r1 = (x - w) * (fx - fv)
            q1 = (x - v) * (fx - fw)
            den = 2.0 * (q1 - r1)
            if den != 0.0:
                t_v = x - ((x - v) * q1 - (x - w) * r1) / den
                if (t_v - a) * (t_v - bb) < 0.0:
                    # vertex value of the parabola
                    c2 = ((fw - fx) / (w - x) - (fv - fx) / (v - x)) / (w - v)
                    f_v = fx - c2 * (t_v - x) ** 2 if c2 != 0.0 else fx
                    if f_v > 0.0 and fx - f_v < 0.1 * f_v and evaluations >= 4:
                        break
        evaluations += 1
        u, d, e = brent_min_step(x, w, v, fx, fw, fv, a, bb, d, e, tol1)
        fu = -sign * family_f(prof, aux, geo, u, e_u, e_d, j, state)
        x, w, v, fx, fw, fv, a, bb = brent_min_update(u, fu, x, w, v, fx, fw, fv, a, bb)
    return x, -sign * fx


@lean_kernel
def breakpoints(prof, aux, z_lo, z_hi, n_lo, n_hi, vals, div):
    """Values of b where the band's edges change, in (0, b_max], sorted, with a
    flag for ends where the legs diverge; returns their number (vals[0] = 0)."""
    minima = aux[1]
    mz, mn = minima[0], minima[1]
    n_s = prof[4][0]
    # b_max: the least index between the end points
    b_max = min(n_lo, n_hi)
    interior = False
    for i in range(mz.shape[0]):
        if mz[i] < z_hi and mz[i] > z_lo and mn[i] < b_max:
            b_max = mn[i]
            interior = True
    m = 0
    vals[m] = 0.0
    div[m] = 0.0
    m += 1
    cap = vals.shape[0] - 1
    # records of the running minimum going up from z_hi, then down from z_lo
    run = n_hi
    for i in range(mz.shape[0] - 1, -1, -1):
        if mz[i] > z_hi and mz[i] < 0.0 and mn[i] < run:
            run = mn[i]
            if run < b_max and m < cap:
                vals[m] = run
                div[m] = 1.0
                m += 1
    if n_s < run and n_s < b_max and m < cap:
        vals[m] = n_s
        div[m] = 0.0
        m += 1
    run = n_lo
    for i in range(mz.shape[0]):
        if mz[i] < z_lo and mn[i] < run:
            run = mn[i]
            if run < b_max and m < cap:
                vals[m] = run
                div[m] = 1.0
                m += 1
    n_deep = prof[3][prof[0].shape[0] - 1, 0]
    if n_deep < run and n_deep < b_max and m < cap:
        vals[m] = n_deep
        div[m] = 1.0
        m += 1
    vals[m] = b_max
    div[m] = 1.0 if interior else 0.0
    m += 1
    # insertion sort, merging equal values
    for i in range(1, m):
        j = i
        while j > 0 and vals[j] < vals[j - 1]:
            vals[j], vals[j - 1] = vals[j - 1], vals[j]
            div[j], div[j - 1] = div[j - 1], div[j]
            j -= 1
    out = 1
    for i in range(1, m):
        if vals[i] > vals[out - 1]:
            vals[out] = vals[i]
            div[out] = div[i]
            out += 1
        else:
            div[out - 1] = max(div[out - 1], div[i])
    return out


@lean_kernel
def log_offset(i):
    """Relative distance of geometric scan point i from a divergent end: from
    1e-2 down to 1e-13 in LOG_STEPS equal steps of log10."""
    return 10.0 ** (-2.0 - 11.0 * i / (LOG_STEPS - 1))


@lean_kernel
def sample_piece(b_a, b_b, div_a, div_b, n_scan, bs, feat_n, z_top_hi, z_top_lo, z_bot_lo, z_bot_hi, feat_z):
    """Scan points of the piece (b_a, b_b): Chebyshev points inside, the ends
    approached to 1e-13 of the width (geometrically towards divergent ends),
    and the index at every inflection point of n (``feat_z``, ``feat_n``)
    that a turning point crosses in the piece (upper turning heights in
    [z_top_lo, z_top_hi], lower ones in [z_bot_lo, z_bot_hi]): where the
    turning point sits at a local minimum of |dn/dz| the family has a narrow
    peak (a measured table's scatter makes many), and a sample at its centre
    shows it.  Returns their number, in increasing b."""
    width = b_b - b_a
    m = 0
    floor_a = max(1e-13 * width, 4e-16 * b_a)
    floor_b = max(1e-13 * width, 4e-16 * b_b)
    if b_a == 0.0:
        bs[m] = 0.0
        m += 1
    elif div_a > 0.0:
        for i in range(LOG_STEPS):
            bs[m] = b_a + max(log_offset(i) * width, floor_a)
            m += 1
    else:
        bs[m] = b_a + floor_a
        m += 1
    for i in range(1, n_scan):
        bs[m] = b_a + 0.5 * width * (1.0 - math.cos(math.pi * i / n_scan))
        m += 1
    if div_b > 0.0:
        for i in range(LOG_STEPS):
            bs[m] = b_b - max(log_offset(i) * width, floor_b)
            m += 1
    else:
        bs[m] = b_b - floor_b
        m += 1
    # inflection points crossed by a turning point (as many as the scratch holds)
    cap = bs.shape[0]
    for i in range(feat_z.shape[0]):
        if m >= cap:
            break
        z = feat_z[i]
        if (z_top_lo <= z <= z_top_hi) or (z_bot_lo <= z <= z_bot_hi):
            if b_a < feat_n[i] < b_b:
                bs[m] = feat_n[i]
                m += 1
    # the geometric and inflection points may pass the Chebyshev points: sort
    for i in range(1, m):
        j = i
        while j > 0 and bs[j] < bs[j - 1]:
            bs[j], bs[j - 1] = bs[j - 1], bs[j]
            j -= 1
    return m


@lean_kernel
def store_duct_ray(out, kinds, conv, i, k, prof, geo, b, e_u, e_d, j, ok, swapped, b_a, b_b,
                   state, state2):
    """Evaluate family (e_u, e_d, j) at its root b and write row i, slot k."""
    z_lo, z_hi, n_hi, x_target, z_layer = geo
    x = combine(state, 0, e_u, e_d, j)
    length = combine(state, 1, e_u, e_d, j)
    c_time = combine(state, 2, e_u, e_d, j)
    surface = state[10] > 0.0
    z_top = state[9]
    z_bot = state[11]
    top_events = j + e_u
    bottom_turns = j + e_d if state[12] > 0.0 else 0
    turns = bottom_turns + (0 if surface else top_events)
    reflections = top_events if surface else 0
    if reflections > 0:
        code = es.REFLECTED
    elif turns == 0:
        code = es.DIRECT
    elif turns == 1:
        code = es.REFRACTED
    else:
        code = DUCTED
    n_lo = index_at(prof, z_lo)
    w_lo = math.sqrt(max((n_lo - b) * (n_lo + b), 0.0))
    w_hi = math.sqrt(max((n_hi - b) * (n_hi + b), 0.0))
    th_lo = math.atan2(b, w_lo)
    th_hi = math.atan2(b, w_hi)
    dir_lo = math.pi - th_lo if e_d == 1 else th_lo      # leaving z_lo
    dir_hi = math.pi - th_hi if e_u == 1 else th_hi      # arriving at z_hi
    if swapped:
        launch, arrival = math.pi - dir_hi, math.pi - dir_lo
    else:
        launch, arrival = dir_lo, dir_hi
    p_hi = w_hi
    upper = z_top if (top_events > 0 and not surface) else math.nan
    lower = z_bot if bottom_turns > 0 else math.nan
    turning = upper if not math.isnan(upper) else lower
    es.store_ray(out, kinds, conv, i, k, code, b, c_time, length, launch, arrival, turning,
                 p_hi, ok, length)
    out[i, k, es.COL_LOWER_TURNING] = lower
    out[i, k, es.COL_TURNS] = turns
    out[i, k, es.COL_REFLECTIONS] = reflections
    out[i, k, es.COL_FIRST_DOWN] = e_d
    return x


@lean_kernel
def spreading(prof, aux, geo, b, e_u, e_d, j, b_a, b_b, x, length, swapped, state2):
    """Equivalent spreading distance R_eq [m] from a central difference of X(b)."""
    z_lo, z_hi, n_hi, x_target, z_layer = geo
    if not x > 0.0 or not b > 0.0:
        return length
    h = 1e-7 * max(b, 1e-3)
    h = min(h, 0.25 * (b - b_a), 0.25 * (b_b - b))
    if not h > 0.0:
        return math.nan
    f1 = family_f(prof, aux, geo, b + h, e_u, e_d, j, state2)
    f0 = family_f(prof, aux, geo, b - h, e_u, e_d, j, state2)
    dx_db = (f1 - f0) / (2.0 * h)
    n_lo = index_at(prof, z_lo)
    w_lo = math.sqrt(max((n_lo - b) * (n_lo + b), 0.0))
    w_hi = math.sqrt(max((n_hi - b) * (n_hi + b), 0.0))
    # R^2 = X |dX/db| w_source (w_receiver / n_receiver) (n_source / b)
    if swapped:
        r2 = x * abs(dx_db) * w_hi * (w_lo / n_lo) * (n_hi / b)
    else:
        r2 = x * abs(dx_db) * w_lo * (w_hi / n_hi) * (n_lo / b)
    return math.sqrt(r2)


#: Largest landing miss [m] accepted where b is resolved to double precision
#: (rays running far along an index minimum); about 1 ps of travel time.
LANDING_LIMIT = 2e-4
#: A root that does not converge within this relative distance of a divergent
#: end of its piece is a ray running along an index minimum farther than double
#: precision in b can resolve; it is left out (``docs/theory.md`` section 11.6).
UNRESOLVED = 1e-9


@lean_kernel
def add_ray(out, kinds, conv, i, k, prof, aux, geo, b, e_u, e_d, j, ok, swapped, b_a, b_b,
            state, state2):
    """Store one root (if a slot is free) and return the new count."""
    if not ok and min(b - b_a, b_b - b) < UNRESOLVED * b:
        return k
    if k >= out.shape[1]:
        return k + 1
    legs(prof, aux, b, geo[0], geo[1], geo[2], state, 2, True)
    x = store_duct_ray(out, kinds, conv, i, k, prof, geo, b, e_u, e_d, j, ok, swapped, b_a,
                       b_b, state, state2)
    length = out[i, k, es.COL_LENGTH]
    out[i, k, es.COL_SPREAD] = spreading(prof, aux, geo, b, e_u, e_d, j, b_a, b_b, x, length,
                                         swapped, state2)
    return k + 1


@lean_kernel
def hidden_pair(out, kinds, conv, i, k, prof, aux, geo, e_u, e_d, j, swapped, sign, t_a, f_a,
                t_b, f_b, t0, f0, b_a, b_b, state, state2):
    """Brent's extremum search in [t_a, t_b] from (t0, f0); if the extremum
    crosses zero, store the root on each side of it.  Returns the new count."""
    t_e, f_e = extremum(prof, aux, geo, e_u, e_d, j, sign, t_a, t_b, t0, f0, state)
    if sign * f_e > 0.0:
        b1, ok1 = brent_root(prof, aux, geo, e_u, e_d, j, t_a, f_a, t_e, f_e, state)
        k = add_ray(out, kinds, conv, i, k, prof, aux, geo, b1, e_u, e_d, j, ok1, swapped, b_a,
                    b_b, state, state2)
        b2, ok2 = brent_root(prof, aux, geo, e_u, e_d, j, t_e, f_e, t_b, f_b, state)
        k = add_ray(out, kinds, conv, i, k, prof, aux, geo, b2, e_u, e_d, j, ok2, swapped, b_a,
                    b_b, state, state2)
    return k


@lean_kernel
def solve_family(out, kinds, conv, i, k, prof, aux, geo, e_u, e_d, j, swapped, bs, sv, m,
                 b_a, b_b, div_a, div_b, fs, state, state2):
    """Every root of family (e_u, e_d, j) among the m samples bs (legs in sv);
    returns the new ray count.

    Besides the sign changes and the sampled extrema on the wrong side of
    zero, the first and last scan intervals are searched for an extremum
    when the piece's end there is not divergent: at the least index between
    the end points (b_max) the leg to the top turning point shrinks like
    sqrt(b_max - b), so X turns just before the end, between the last
    samples (the largest reach of the family often lies there)."""
    x_target = geo[3]
    for s in range(m):
        fs[s] = combine(sv[s], 0, e_u, e_d, j) - x_target
        if math.isnan(fs[s]):
            fs[s] = math.inf
    for s in range(1, m):
        fa, fb = fs[s - 1], fs[s]
        if (fa < 0.0 and fb >= 0.0) or (fa > 0.0 and fb <= 0.0):
            if fb == 0.0:
                b_root, ok = bs[s], True
            else:
                b_root, ok = brent_root(prof, aux, geo, e_u, e_d, j, bs[s - 1], fa, bs[s], fb,
                                        state)
            k = add_ray(out, kinds, conv, i, k, prof, aux, geo, b_root, e_u, e_d, j, ok, swapped,
                        b_a, b_b, state, state2)
        elif s + 1 < m:
            fc = fs[s + 1]
            # a sampled extremum on the wrong side of zero may hide two roots
            sign = 0
            if fb >= fa and fb >= fc and fb < 0.0 and fa < 0.0 and fc < 0.0:
                sign = 1
            elif fb <= fa and fb <= fc and fb > 0.0 and fa > 0.0 and fc > 0.0:
                sign = -1
            if sign != 0 and math.isfinite(fa) and math.isfinite(fc):
                t_e, f_e = extremum(prof, aux, geo, e_u, e_d, j, sign, bs[s - 1], bs[s + 1],
                                    bs[s], fb, state)
                if sign * f_e > 0.0:
                    lo_b, lo_f = (bs[s - 1], fa) if t_e < bs[s] else (bs[s], fb)
                    hi_b, hi_f = (bs[s], fb) if t_e < bs[s] else (bs[s + 1], fc)
                    b1, ok1 = brent_root(prof, aux, geo, e_u, e_d, j, lo_b, lo_f, t_e, f_e, state)
                    k = add_ray(out, kinds, conv, i, k, prof, aux, geo, b1, e_u, e_d, j, ok1,
                                swapped, b_a, b_b, state, state2)
                    b2, ok2 = brent_root(prof, aux, geo, e_u, e_d, j, t_e, f_e, hi_b, hi_f, state)
                    k = add_ray(out, kinds, conv, i, k, prof, aux, geo, b2, e_u, e_d, j, ok2,
                                swapped, b_a, b_b, state, state2)
    # the end intervals at non-divergent ends (b = 0 excluded: X = 0 there)
    for end in range(2):
        if m < 2:
            break
        if end == 0:
            if div_a > 0.0 or bs[0] == 0.0:
                continue
            s0, s1 = 0, 1
        else:
            if div_b > 0.0:
                continue
            s0, s1 = m - 2, m - 1
        fa, fb = fs[s0], fs[s1]
        if not (math.isfinite(fa) and math.isfinite(fb)):
            continue
        sign = 1 if (fa < 0.0 and fb < 0.0) else (-1 if (fa > 0.0 and fb > 0.0) else 0)
        # only where the samples head towards the end (else the interior sample
        # next to it is a sampled extremum, searched above)
        toward = (fb - fa) if end == 1 else (fa - fb)
        if sign != 0 and sign * toward > 0.0:
            t0 = 0.5 * (bs[s0] + bs[s1])
            f0 = family_f(prof, aux, geo, t0, e_u, e_d, j, state)
            if sign * f0 > 0.0:
                b1, ok1 = brent_root(prof, aux, geo, e_u, e_d, j, bs[s0], fa, t0, f0, state)
                k = add_ray(out, kinds, conv, i, k, prof, aux, geo, b1, e_u, e_d, j, ok1,
                            swapped, b_a, b_b, state, state2)
                b2, ok2 = brent_root(prof, aux, geo, e_u, e_d, j, t0, f0, bs[s1], fb, state)
                k = add_ray(out, kinds, conv, i, k, prof, aux, geo, b2, e_u, e_d, j, ok2,
                            swapped, b_a, b_b, state, state2)
            elif sign * (f0 - fa) > 0.0 and sign * (f0 - fb) > 0.0:
                k = hidden_pair(out, kinds, conv, i, k, prof, aux, geo, e_u, e_d, j, swapped,
                                sign, bs[s0], fa, bs[s1], fb, t0, f0, b_a, b_b, state, state2)
    return k


@lean_kernel
def solve_ice_duct(out, kinds, conv, i, prof, aux, x_target, z_src, z_rcv, n_scan, scratch):
    """Every ray between two points in the ice of a non-monotone profile;
    returns their number (which may exceed the slots)."""
    swapped = z_src > z_rcv
    z_lo, z_hi = (z_rcv, z_src) if swapped else (z_src, z_rcv)
    n_hi = index_at(prof, z_hi)
    n_lo = index_at(prof, z_lo)
    geo = (z_lo, z_hi, n_hi, x_target, math.nan)
    vals, div, bs, fs = scratch[0], scratch[1], scratch[2], scratch[3]
    state, state2 = scratch[4], scratch[5]
    sv = scratch[6:]
    nb = breakpoints(prof, aux, z_lo, z_hi, n_lo, n_hi, vals, div)
    k = 0
    at_surface = z_hi >= 0.0
    top = prof[0]
    k_hi = find_panel(top, z_hi)
    if z_lo == z_hi and prof[2][k_hi] == UNIFORM and z_hi < top[k_hi]:
        horizontal_straight(out, kinds, conv, i, k, n_hi, x_target)
        k += 1
    # the direct family a(b) grows with b on all of (0, b_max) (a leg with fixed
    # ends: dX/db = int n^2 / w^3 dz > 0), so it has one root at most
    b_max = vals[nb - 1]
    if z_lo < z_hi and b_max > 0.0:
        b_end = b_max - max(1e-13 * b_max, 4e-16 * b_max)
        f_end = family_f(prof, aux, geo, b_end, 0, 0, 0, state)
        if f_end >= 0.0:
            b_root, ok = brent_root(prof, aux, geo, 0, 0, 0, 0.0, -x_target, b_end, f_end, state)
            k = add_ray(out, kinds, conv, i, k, prof, aux, geo, b_root, 0, 0, 0, ok, swapped, 0.0,
                        b_max, state, state2)
    if at_surface:
        return k
    for piece in range(nb - 1):
        b_a, b_b = vals[piece], vals[piece + 1]
        if not b_b > b_a:
            continue
        legs(prof, aux, 0.5 * (b_a + b_b), z_lo, z_hi, n_hi, state, 2, False)
        surface_top = state[10] > 0.0
        has_bottom = state[12] > 0.0
        if surface_top and not has_bottom:
            # the up-going family reflected at the surface: fixed-end legs only, so
            # it grows with b too: its ends decide
            lo = b_a if b_a == 0.0 else b_a + max(1e-13 * (b_b - b_a), 4e-16 * b_a)
            hi = b_b - max(1e-13 * (b_b - b_a), 4e-16 * b_b)
            f_lo = -x_target if lo == 0.0 else family_f(prof, aux, geo, lo, 1, 0, 0, state)
            f_hi = family_f(prof, aux, geo, hi, 1, 0, 0, state)
            if (f_lo < 0.0) != (f_hi < 0.0):
                b_root, ok = brent_root(prof, aux, geo, 1, 0, 0, lo, f_lo, hi, f_hi, state)
                k = add_ray(out, kinds, conv, i, k, prof, aux, geo, b_root, 1, 0, 0, ok, swapped,
                            b_a, b_b, state, state2)
            continue
        # heights the turning points sweep across the piece
        lo_b = b_a if b_a == 0.0 else b_a + max(1e-13 * (b_b - b_a), 4e-16 * b_a)
        legs(prof, aux, lo_b, z_lo, z_hi, n_hi, state2, 2 if has_bottom else 1, False)
        zt_a, zb_a = state2[9], state2[11]
        legs(prof, aux, b_b - max(1e-13 * (b_b - b_a), 4e-16 * b_b), z_lo, z_hi, n_hi, state2,
             2 if has_bottom else 1, False)
        zt_b, zb_b = state2[9], state2[11]
        if surface_top:
            zt_a, zt_b = 1.0, 1.0           # no upper turning point: nothing to add
        if not has_bottom:
            zb_a, zb_b = 1.0, 1.0
        m = sample_piece(b_a, b_b, div[piece], div[piece + 1], n_scan, bs, aux[2][1],
                         max(zt_a, zt_b), min(zt_a, zt_b), min(zb_a, zb_b), max(zb_a, zb_b),
                         aux[2][0])
        p_min_sample = math.inf
        for s in range(m):
            legs(prof, aux, bs[s], z_lo, z_hi, n_hi, sv[s], 2 if has_bottom else 1, False)
            if has_bottom and sv[s][12] > 0.0:
                period = 2.0 * (sv[s][0] + sv[s][3] + sv[s][6])
                if period < p_min_sample:
                    p_min_sample = period
        if not has_bottom:
            k = solve_family(out, kinds, conv, i, k, prof, aux, geo, 1, 0, 0, swapped, bs, sv, m,
                             b_a, b_b, div[piece], div[piece + 1], fs, state, state2)
            continue
        j_max = int(x_target / p_min_sample) + 1 if p_min_sample > 0.0 else 0
        for j in range(j_max + 1):
            for e_d in range(2):
                for e_u in range(2):
                    if e_u == 0 and e_d == 0 and j == 0:
                        continue          # the direct family, solved above
                    k = solve_family(out, kinds, conv, i, k, prof, aux, geo, e_u, e_d, j,
                                     swapped, bs, sv, m, b_a, b_b, div[piece], div[piece + 1],
                                     fs, state, state2)
    return k


@lean_kernel
def solve_row_duct(i, prof, aux, n_air, x_target, z_src, z_rcv, layers, out, kinds, conv, count,
                   n_scan, scratch):
    """Solve pair i and order its rays by travel time."""
    n_slots = out.shape[1]
    x, zs, zr = x_target[i], z_src[i], z_rcv[i]
    if not es.clear_row(out, kinds, conv, i, x, zs, zr):
        count[i] = 0
        return
    if zs > 0.0 and zr > 0.0:
        n = es.solve_uniform_ice(out, kinds, conv, i, n_air, x, -zs, -zr, True)
    elif zs > 0.0 or zr > 0.0:
        n = solve_air_ice(out, kinds, conv, i, prof, n_air, x, zs, zr)
    else:
        n = solve_ice_duct(out, kinds, conv, i, prof, aux, x, zs, zr, n_scan, scratch)
        for j in range(layers.shape[0]):
            n += solve_layer_duct(out, kinds, conv, i, n, prof, aux, x, zs, zr, layers[j],
                                  float(j), scratch[4], scratch[5])
    count[i] = n
    n = min(n, n_slots)
    es.sort_by_time(out, kinds, conv, i, n)


CHUNK = 16


#: Most inflection-point samples added to one piece of b.
MAX_FEATURE_SAMPLES = 400


def scratch_rows(n_scan):
    """Rows of the per-thread scratch space for sample legs: the most samples of one piece."""
    return n_scan + 2 * LOG_STEPS + 4 + MAX_FEATURE_SAMPLES


@numba.njit(parallel=True, **KERNEL_OPTIONS)
def solve_pairs_duct(prof, aux, n_air, x_target, z_src, z_rcv, layers, out, kinds, conv, count,
                     n_scan):
    """Solve every pair in parallel (see :func:`solve_row_duct`)."""
    n = x_target.shape[0]
    n_chunks = (n + CHUNK - 1) // CHUNK
    rows = n_scan + 2 * LOG_STEPS + 4 + MAX_FEATURE_SAMPLES
    width = max(rows, aux[1][0].shape[0] + 4)
    # the parallel loop takes arrays, not a tuple of arrays: unpack and rebuild
    p_min, minima, features = aux
    mz, mn, mc, mh = minima
    fz, fn = features
    for c in numba.prange(n_chunks):
        scratch = np.full((6 + rows, max(width, 13)), np.nan)
        aux_c = (p_min, (mz, mn, mc, mh), (fz, fn))
        for i in range(c * CHUNK, min(n, (c + 1) * CHUNK)):
            solve_row_duct(i, prof, aux_c, n_air, x_target, z_src, z_rcv, layers, out, kinds, conv,
                           count, n_scan, scratch)


@numba.njit(**KERNEL_OPTIONS)
def solve_pairs_duct_serial(prof, aux, n_air, x_target, z_src, z_rcv, layers, out, kinds, conv,
                            count, n_scan):
    """:func:`solve_pairs_duct` on the calling thread."""
    rows = n_scan + 2 * LOG_STEPS + 4 + MAX_FEATURE_SAMPLES
    width = max(rows, aux[1][0].shape[0] + 4)
    scratch = np.full((6 + rows, max(width, 13)), np.nan)
    for i in range(x_target.shape[0]):
        solve_row_duct(i, prof, aux, n_air, x_target, z_src, z_rcv, layers, out, kinds, conv,
                       count, n_scan, scratch)


def duct_arrays(stack):
    """(p_min, minima, features) for the kernels: the least index of each panel, the
    local minima of n as (z [m], n [1], d2n/dz2 [1/m^2], panel height [m]),
    highest first."""
    from firnray.medium.panels import index_turning_levels, panel_index_range, panel_of
    p_min, _ = panel_index_range(stack)
    mz, mn, _ = index_turning_levels(stack)
    curv = np.zeros_like(mz)
    hh = np.zeros_like(mz)
    from firnray.medium.panels import evaluate_panels
    for i, z in enumerate(mz):
        k = int(panel_of(stack, np.array([z]))[0])
        h = stack.top[k] - stack.bottom[k]
        if not np.isfinite(h):
            h = 1.0
        # the panel just above a knot as well
        k_up = max(k - 1, 0) if z == stack.top[k] else k
        h = max(h, stack.top[k_up] - stack.bottom[k_up]) if np.isfinite(stack.bottom[k_up]) else h
        eps = 1e-3 * h
        zz = np.array([min(z + eps, 0.0), z, z - eps])
        nn = evaluate_panels(stack, zz)
        curv[i] = max((nn[0] + nn[2] - 2.0 * nn[1]) / eps ** 2, 1e-12)
        hh[i] = h
    minima = (np.ascontiguousarray(mz), np.ascontiguousarray(mn), curv, hh)
    fz = inflection_heights(stack)
    features = (np.ascontiguousarray(fz), np.ascontiguousarray(evaluate_panels(stack, fz)))
    return np.ascontiguousarray(p_min), minima, features


def inflection_heights(stack):
    """Heights [m] where d2n/dz2 changes sign: inside cubic panels (t = -c2 / (3 c3))
    and at knots where it jumps across zero; highest first."""
    from firnray.medium.panels import CUBIC
    cubic = stack.kind == CUBIC
    c = stack.coef
    h = stack.top - stack.bottom
    with np.errstate(divide="ignore", invalid="ignore"):
        t = -c[:, 2] / (3.0 * c[:, 3])
    inside = cubic & np.isfinite(t) & (t > 0.0) & (t < 1.0) & np.isfinite(h)
    z_in = stack.bottom[inside] + t[inside] * h[inside]
    # second derivative at the bottom and top of each cubic panel (per t^2; the sign is what counts)
    d2_bottom = np.where(cubic, 2.0 * c[:, 2], 0.0)
    d2_top = np.where(cubic, 2.0 * c[:, 2] + 6.0 * c[:, 3], 0.0)
    # knot between panel k (above) and k + 1 (below): bottom of k, top of k + 1
    flips = (d2_bottom[:-1] * d2_top[1:] < 0.0) & cubic[:-1] & cubic[1:]
    z_knot = stack.bottom[:-1][flips]
    return np.unique(np.concatenate([z_in, z_knot]))[::-1]


def allocate(n_pairs, slots=MAX_SLOTS):
    """Output arrays for :func:`solve_pairs_duct`."""
    return (np.empty((n_pairs, slots, es.N_COLS)), np.empty((n_pairs, slots), dtype=np.int8),
            np.empty((n_pairs, slots), dtype=np.bool_), np.empty(n_pairs, dtype=np.int64))
