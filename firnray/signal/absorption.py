"""Absorption along a ray: the integral of ds / L(z, f) over its path in the ice.

With the field attenuation length L (E ∝ exp(-s/L)), the field amplitude
surviving a ray is exp(-A) with

    A(f) = ∫ ds / L(z, f) = Σ_pieces ∫ n(z) / (w(z) L(z, f)) dz        (theory 8.1)

over the monotone pieces of the ray (``Ray.pieces``), ds/dz = n/w.  On each
piece the substitution z = z2 - (z2 - z1)(1 - t)^2 removes the 1/sqrt
singularity of a turning point at z2 (and resolves a near-horizontal end),
and Gauss-Legendre quadrature in t does the rest.  Air legs do not absorb.

A ray in the ice of a non-monotone profile (``docs/theory.md`` 11.6) is the
sum of three legs taken several times: a = z_lo -> z_hi (1 + 2j times),
U = z_hi -> z_T (2 e_u + 2j times) and D = z_B -> z_lo (2 e_d + 2j times),
where e_u, e_d say whether it arrives at z_hi downwards and leaves z_lo
downwards, j counts its full crossings of the band and z_T, z_B are its
turning heights (z_T = 0 for surface reflections).  Each leg is summed by
adaptive composite Gauss-Legendre quadrature (intervals halved until a 16-point
rule and its two halves agree to 1e-11 of the leg), with the same
turning-point substitution at its turning end and breaks at every local
minimum of n inside it, where a nearly level ray has a sharp peak of 1/w.
"""

import math

import numpy as np

from firnray.checks import finite_float
from firnray.medium.panels import (CUBIC, EXPONENTIAL, evaluate_panels, index_turning_levels,
                                   panel_of)
from firnray.rays.solve import is_monotone

_NODES = {}


def _gauss(n):
    if n not in _NODES:
        x, w = np.polynomial.legendre.leggauss(n)
        _NODES[n] = (0.5 * (x + 1.0), 0.5 * w)
    return _NODES[n]


def _lengths(attenuation, z, frequencies):
    """L(z, f) [m] as an array (len(z), len(f)), from an object with .length or a callable."""
    zz = np.repeat(z[:, None], len(frequencies), axis=1)
    ff = np.repeat(frequencies[None, :], len(z), axis=0)
    if hasattr(attenuation, "length"):
        out = attenuation.length(zz, ff)
    elif callable(attenuation):
        out = attenuation(zz, ff)
    else:
        out = np.full(zz.shape, finite_float("attenuation", attenuation))
    out = np.broadcast_to(np.asarray(out, dtype=float), zz.shape)
    if not np.all(np.isfinite(out)) or np.any(out <= 0):
        raise ValueError("attenuation must give finite attenuation lengths > 0 m at every "
                         "height of the ray")
    return out


def absorption_exponent(ray, attenuation, frequencies, nodes=64):
    """Field absorption exponent A(f) = ∫ ds / L(z, f) along ``ray`` [1].

    Parameters
    ----------
    ray : Ray
        From ``firnray.find_rays``.
    attenuation : object with ``.length(z, frequency_mhz)``, callable ``L(z, f)``, or float
        Field attenuation length [m] (E ∝ exp(-s/L)) at height z [m] and
        frequency [MHz]; a number is a constant length.
    frequencies : float or array_like
        Frequencies [MHz].
    nodes : int, optional
        Gauss-Legendre nodes per monotone piece of the ray.

    Returns
    -------
    float or ndarray
        A(f) [1] (field e-folds); the field loss is 20 log10(e) A dB
        (= 8.686 A dB, the same number of dB as the power loss).
    """
    f = np.asarray(frequencies, dtype=float)
    flat = f.reshape(-1)
    if flat.size == 0 or not np.all(np.isfinite(flat)) or np.any(flat <= 0):
        raise ValueError(f"frequencies must be finite and > 0 MHz, got {frequencies!r}")
    if in_band(ray):
        total = np.zeros(flat.size)
        for leg, times in band_legs(ray):
            z, ds = leg_nodes(ray, *leg)
            if z.size:
                total += times * np.sum(ds[:, None] / _lengths(attenuation, z, flat), axis=0)
        total = total.reshape(f.shape)
        return float(total) if total.ndim == 0 else total
    t, wt = _gauss(int(nodes))
    total = np.zeros(flat.size)
    profile = ray._profile
    for z1, z2, _ in ray.pieces():
        z = z2 - (z2 - z1) * (1.0 - t) ** 2
        dz_dt = 2.0 * (z2 - z1) * (1.0 - t)
        n = profile.index(np.minimum(z, 0.0))
        w = ray.vertical_slowness(z)
        with np.errstate(divide="ignore", invalid="ignore"):
            ds_dt = np.where(w > 0, n * dz_dt / w, 0.0)
        lengths = _lengths(attenuation, z, flat)
        total += np.sum((wt * ds_dt)[:, None] / lengths, axis=0)
    total = total.reshape(f.shape)
    return float(total) if total.ndim == 0 else total


def in_band(ray):
    """Whether ``ray`` is a ray of the non-monotone solver (both ends in the ice of a
    non-monotone profile; kinds direct, refracted, reflected, ducted)."""
    prof = ray._profile
    return (ray.kind in ("direct", "refracted", "reflected", "ducted")
            and max(float(ray.source[2]), float(ray.receiver[2])) <= 0.0
            and not is_monotone(prof))


def band_families(ray):
    """The family (e_u, e_d, j) of a ray of the non-monotone solver (``docs/theory.md`` 11.6).

    Returns
    -------
    (int, int, int)
        e_u = 1 if the ray arrives at the upper end point going down, e_d = 1
        if it leaves the lower end point going down, j its full crossings of
        the band each way [1].
    """
    zs, zr = float(ray.source[2]), float(ray.receiver[2])
    if zs <= zr:    # the source is the lower end point
        e_d = int(ray.launch_zenith > 90.0)
        e_u = int(ray.arrival_zenith > 90.0)
    else:
        e_d = int(ray.arrival_zenith < 90.0)
        e_u = int(ray.launch_zenith < 90.0)
    if ray.lower_turning_z is None:
        return e_u, 0, 0
    if ray.surface_reflections > 0:
        j = ray.surface_reflections - e_u
    else:
        j = (ray.turning_points - e_u - e_d) // 2
    return e_u, e_d, max(j, 0)


def band_legs(ray):
    """The legs of a ray of the non-monotone solver and how often it runs each.

    Returns
    -------
    list of ((z1, z2, turning_at_z1, turning_at_z2), int)
        Heights [m] (z1 < z2) of each leg, whether the ray turns at either
        end, and the number of times [1] the ray runs along it.
    """
    zs, zr = float(ray.source[2]), float(ray.receiver[2])
    z_lo, z_hi = min(zs, zr), max(zs, zr)
    e_u, e_d, j = band_families(ray)
    legs = []
    if z_hi > z_lo:
        legs.append(((z_lo, z_hi, False, False), 1 + 2 * j))
    if e_u + j > 0:
        surface = ray.surface_reflections > 0
        z_top = 0.0 if surface else ray.turning_z
        if z_top > z_hi:
            legs.append(((z_hi, z_top, False, not surface), 2 * (e_u + j)))
    if e_d + j > 0 and ray.lower_turning_z is not None and ray.lower_turning_z < z_lo:
        legs.append(((ray.lower_turning_z, z_lo, True, False), 2 * (e_d + j)))
    return legs


#: Adaptive leg quadrature: 16-point rule, relative tolerance per interval, most halvings.
LEG_NODES = 16
LEG_TOLERANCE = 1e-11
LEG_ROUNDS = 48
#: Breaks at 10^-1 ... 10^-k of the leg (in t) from each local minimum of n and each
#: turning end: a ray passing a minimum nearly level has a peak of 1/w about
#: 1e-5 m wide there; closer to a turning end the rounding of z itself shows.
MINIMUM_BREAKS = 10
TURNING_BREAKS = 4


def leg_nodes(ray, z1, z2, turn_low, turn_high):
    """Quadrature nodes and path-length weights of one leg of a ray.

    Parameters
    ----------
    ray : Ray
    z1, z2 : float
        Ends of the leg [m], z1 < z2.
    turn_low, turn_high : bool
        Whether the ray turns at z1 or at z2; that end is moved to the
        nearest height where the panel index equals the invariant, so that
        the quadrature ends exactly where its own w = sqrt(n^2 - b^2)
        vanishes (a turning height off by d changes the length by about
        sqrt(d / |dn^2/dz|)).

    Returns
    -------
    z : ndarray
        Heights of the nodes [m].
    ds : ndarray
        Path length each node stands for [m]: sum(ds) is the leg's length,
        sum(ds * g(z)) the integral of g along it.
    """
    stack = ray._profile.panels
    b_ray = ray.invariant
    if turn_high:
        z2 = turning_height(stack, b_ray, z2, z1, up=True)
    if turn_low:
        z1 = turning_height(stack, b_ray, z1, z2, up=False)
    h = z2 - z1
    if not h > 0.0:
        return np.empty(0), np.empty(0)
    # heights as an offset from the turning end (exact), so that n(z) - b near a
    # turning point is formed without cancellation (``index_step``)
    if turn_high:
        z_ref = z2

        def offset(t):
            return -h * (1.0 - t) ** 2

        def slope(t):
            return 2.0 * h * (1.0 - t)

        def param(z):
            return 1.0 - np.sqrt((z2 - z) / h)
    elif turn_low:
        z_ref = z1

        def offset(t):
            return h * t ** 2

        def slope(t):
            return 2.0 * h * t

        def param(z):
            return np.sqrt((z - z1) / h)
    else:
        z_ref = None

        def offset(t):
            return z1 + h * t

        def slope(t):
            return np.full_like(t, h)

        def param(z):
            return (z - z1) / h
    minima = index_turning_levels(stack)[0]
    inside = minima[(minima > z1) & (minima < z2)]
    # breaks graded geometrically towards each turning end and each minimum, where
    # the integrand may peak on a scale far below the leg's
    grade = 10.0 ** -np.arange(1, MINIMUM_BREAKS + 1)
    marks = [param(inside)]
    for t_m in param(inside):
        marks += [t_m - grade, t_m + grade]
    if turn_low:
        marks.append(grade[:TURNING_BREAKS])
    if turn_high:
        marks.append(1.0 - grade[:TURNING_BREAKS])
    breaks = np.unique(np.clip(np.concatenate([[0.0, 1.0]] + marks), 0.0, 1.0))
    x, w = _gauss(LEG_NODES)
    # the index of the panels the solver used (a function profile's own function
    # differs by up to its tolerance, which matters where the ray is nearly level)

    def integrand(t):
        off = offset(t)
        if z_ref is None:
            z = off
            n = evaluate_panels(stack, np.minimum(z, 0.0))
            w2 = (n - b_ray) * (n + b_ray)
        else:   # n(z_ref) = b at the turning end
            z = z_ref + off
            n = evaluate_panels(stack, np.minimum(z, 0.0))
            w2 = index_step(stack, z_ref, off) * (n + b_ray)
        slow = np.sqrt(np.maximum(w2, 0.0))
        with np.errstate(divide="ignore", invalid="ignore"):
            return z, np.where(slow > 0, n * slope(t) / slow, 0.0)

    def rule(a, b):
        t = a[:, None] + (b - a)[:, None] * x[None, :]
        z, g = integrand(t)
        return z, g * (w[None, :] * (b - a)[:, None])

    lo, hi = breaks[:-1], breaks[1:]
    total = None
    done_z, done_ds = [], []
    for _ in range(LEG_ROUNDS):
        mid = 0.5 * (lo + hi)
        _, whole = rule(lo, hi)
        z_l, left = rule(lo, mid)
        z_r, right = rule(mid, hi)
        fine = left.sum(axis=1) + right.sum(axis=1)
        if total is None:
            total = max(abs(float(fine.sum())), 1e-300)
        ok = np.abs(whole.sum(axis=1) - fine) <= LEG_TOLERANCE * total
        done_z += [z_l[ok].ravel(), z_r[ok].ravel()]
        done_ds += [left[ok].ravel(), right[ok].ravel()]
        lo, hi = np.concatenate([lo[~ok], mid[~ok]]), np.concatenate([mid[~ok], hi[~ok]])
        if lo.size == 0:
            break
    else:   # keep the best estimate of what did not settle
        z_l, left = rule(lo, hi)
        done_z.append(z_l.ravel())
        done_ds.append(left.ravel())
    return np.concatenate(done_z), np.concatenate(done_ds)


def index_step(stack, z_ref, dz):
    """n(z_ref + dz) - n(z_ref) [1] of a panel stack, without cancellation for small ``dz``.

    Parameters
    ----------
    stack : PanelStack
    z_ref : float
        Reference height [m].
    dz : ndarray
        Offsets [m] (exact: not formed as a difference of heights).

    Returns
    -------
    ndarray
        The index difference [1]; within the panel of ``z_ref`` from the
        panel's closed form (exponential: ``expm1``; cubic: the divided
        difference), elsewhere as a plain difference.
    """
    dz = np.asarray(dz, dtype=float)
    z = np.minimum(z_ref + dz, 0.0)
    k0 = int(panel_of(stack, np.array([z_ref]))[0])
    n_ref = float(evaluate_panels(stack, np.array([z_ref]))[0])
    out = evaluate_panels(stack, z) - n_ref
    same = panel_of(stack, z) == k0
    if not np.any(same):
        return out
    c = stack.coef[k0]
    kind = stack.kind[k0]
    d = dz[same]
    if kind == EXPONENTIAL:
        a, scale, _, drop = c
        out[same] = -drop * math.exp((z_ref - stack.top[k0]) / scale) * np.expm1(d / scale)
    elif kind == CUBIC:
        height = stack.top[k0] - stack.bottom[k0]
        t0 = (z_ref - stack.bottom[k0]) / height
        dt = d / height
        t = t0 + dt
        out[same] = dt * (c[1] + c[2] * (t + t0) + c[3] * (t * t + t * t0 + t0 * t0))
    else:
        out[same] = 0.0
    return out


def turning_height(stack, b, z_guess, z_inside, up):
    """Height [m] where the panel index equals ``b``, nearest to ``z_guess`` on the band side.

    Parameters
    ----------
    stack : PanelStack
    b : float
        Snell invariant [1].
    z_guess : float
        Turning height reported by the solver [m].
    z_inside : float
        A height inside the band (n > b) on the side of the ray [m].
    up : bool
        True for an upper turning point (the band lies below it).

    Returns
    -------
    float
        The turning height [m] (``z_guess`` if no sign change is found
        within 1 m).
    """
    from scipy.optimize import brentq  # imported on use: keeps `import firnray` fast

    def f(z):
        return float(evaluate_panels(stack, np.array([min(z, 0.0)]))[0]) - b

    sign = 1.0 if up else -1.0       # direction out of the band
    inside = f(z_guess) > 0.0
    step = 1e-12 * max(1.0, abs(z_guess))
    a = z_guess
    while step < 1.0:
        c = a + (sign if inside else -sign) * step
        if (c - z_inside) * sign <= 0.0:        # reached the other end point
            c = z_inside
        if up and c > 0.0:
            c = 0.0
        if (f(c) > 0.0) != inside:
            lo, hi = sorted((a, c))
            return brentq(f, lo, hi, xtol=1e-15, rtol=8.9e-16)
        if c == z_inside or c == 0.0:
            break
        a = c
        step *= 4.0
    return z_guess


def band_path_length(ray):
    """Path length [m] of a ray of the non-monotone solver, summed by :func:`leg_nodes`
    (a check of the quadrature against ``Ray.path_length``)."""
    return math.fsum(times * float(np.sum(leg_nodes(ray, *leg)[1]))
                     for leg, times in band_legs(ray))
