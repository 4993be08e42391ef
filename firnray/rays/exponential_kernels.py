"""Closed-form ray integrals in an exponential firn profile, compiled with numba.

Profile (``docs/theory.md`` section 2)::

    n(z) = a - Delta * u,      u = exp(z / s),      Delta = a - n_surface

with ``a = n_deep`` and ``s = scale_depth``; ``z`` is height [m], negative in
the ice.  A ray with Snell invariant ``b = n sin(zenith)`` has, with
``w(z) = sqrt(n^2 - b^2)`` (the vertical slowness) and ``q = sqrt(a^2 - b^2)``,
on every monotone segment z1 -> z2 (``docs/theory.md`` equations 2.4-2.8)::

    G(z)  = a n - b^2 + q w  = n Delta u + w^2 + q w
    D     = (z2 - z1) - s ln(G2 / G1)
    X     = (b / q) D                                     horizontal distance [m]
    L     = s ln((n2 + w2) / (n1 + w1)) + (a / q) D       path length [m]
    tau   = s (w2 - w1) + a s ln((n2 + w2) / (n1 + w1)) + q D
    c T   = tau + b X                                     travel time x c [m]

and a segment that ends at its turning point (w = 0, n = b) uses
``G_t = b (a - b)``, ``H_t = b``, ``w_t = 0``.  ``dX/db`` follows from
``dG/db = -(b / (q w)) (2 + (Delta u)^2 / G)`` (equation 2.10).

Every function here is a plain Python function of floats made into a numba
kernel by :func:`kernel`; the readable statement is the function body itself,
and ``f.py_func`` runs it uncompiled (the tests run both).  All differences of
nearly equal quantities are formed analytically (``expm1``, ``log1p``,
``n_i - n_j = -Delta (u_i - u_j)``) so that deep points, where ``n`` is
indistinguishable from ``a`` in floating point, keep full precision.
"""

import math

import numba

#: Options shared by every compiled kernel: cached on disk, no Python objects.
KERNEL_OPTIONS = dict(cache=True, nogil=True, fastmath=False, error_model="numpy")


def kernel(func):
    """Compile ``func`` with numba (cached); the original stays as ``.py_func``."""
    return numba.njit(**KERNEL_OPTIONS)(func)


@kernel
def level_state(a, delta, s, z):
    """Index quantities at one height.

    Parameters
    ----------
    a : float
        Deep index n_deep [1].
    delta : float
        n_deep - n_surface [1].
    s : float
        Scale depth [m].
    z : float
        Height, <= 0 [m].

    Returns
    -------
    u : float
        exp(z / s) [1].
    n : float
        Index n(z) = a - delta * u [1].
    """
    u = math.exp(z / s)
    return u, a - delta * u


@kernel
def slowness_sq(delta, u_hi, n_hi, u_i, n_i, p):
    """Squared vertical slowness w_i^2 = n_i^2 - b^2 at level i [1].

    The invariant is fixed through the vertical slowness ``p`` at the
    reference level ``hi`` (b^2 = n_hi^2 - p^2), so that::

        w_i^2 = (n_i - n_hi)(n_i + n_hi) + p^2 = delta (u_hi - u_i)(n_i + n_hi) + p^2

    which has no cancellation when b is close to n_i.
    """
    return delta * (u_hi - u_i) * (n_i + n_hi) + p * p


@kernel
def g_value(delta, q, u, n, w):
    """G = a n - b^2 + q w, written as n delta u + w^2 + q w (all terms >= 0) [1]."""
    return n * delta * u + w * w + q * w


@kernel
def pair_state(a, delta, s, z_lo, z_hi):
    """Quantities of a pair of heights that do not depend on the ray.

    Parameters
    ----------
    a, delta : float
        n_deep and n_deep - n_surface [1].
    s : float
        Scale depth [m].
    z_lo, z_hi : float
        Lower and upper height, z_lo <= z_hi <= 0 [m].

    Returns
    -------
    tuple of 12 floats
        (a, delta, s, z_lo, u_lo, n_lo, z_hi, u_hi, n_hi, dn_lh, dn_ls, dn_hs)
        with u = exp(z/s) [1], n the index [1] and the index differences
        dn_lh = n_hi - n_lo, dn_ls = n_s - n_lo, dn_hs = n_s - n_hi [1]
        formed without cancellation (``expm1``).
    """
    u_lo, n_lo = level_state(a, delta, s, z_lo)
    u_hi, n_hi = level_state(a, delta, s, z_hi)
    dn_lh = -delta * u_lo * math.expm1((z_hi - z_lo) / s)
    dn_ls = delta * math.expm1(z_lo / s)
    dn_hs = delta * math.expm1(z_hi / s)
    return (a, delta, s, z_lo, u_lo, n_lo, z_hi, u_hi, n_hi, dn_lh, dn_ls, dn_hs)


@kernel
def segment_d(a, s, q, dz, dn, n1, w1, g1, n2, w2, g2):
    """D = dz - s ln(G2/G1) of a monotone segment from level 1 up to level 2 [m].

    With dn = n2 - n1 and w2 - w1 = dn (n1 + n2) / (w1 + w2),
    G2 - G1 = a dn + q (w2 - w1), so ln(G2/G1) = log1p((G2 - G1)/G1) keeps
    full precision for short or deep segments.

    Parameters
    ----------
    a : float
        n_deep [1].
    s : float
        Scale depth [m].
    q : float
        sqrt(a^2 - b^2) [1].
    dz, dn : float
        z2 - z1 [m] and n2 - n1 [1].
    n1, w1, g1, n2, w2, g2 : float
        Index, vertical slowness and G at each end [1].
    """
    wsum = w1 + w2
    dw = dn * (n1 + n2) / wsum if wsum > 0.0 else 0.0
    dg = a * dn + q * dw
    if abs(dg) < 0.5 * g1:
        return dz - s * math.log1p(dg / g1)
    return dz - s * math.log(g2 / g1)


@kernel
def turning_d(s, delta, b, q, u1, n1, w1):
    """D of a segment from level 1 up to its turning point (n = b) [m].

    With u_t = (a - b)/delta and G_t = b (a - b)::

        D_t = (z_t - z1) - s ln(G_t / G1) = s ln(G1 / (b delta u1))
            = s log1p(w1^2 / (b (n1 + b)) + w1 (w1 + q) / (b delta u1))

    (using G1 = n1 delta u1 + w1^2 + q w1 and n1 - b = w1^2 / (n1 + b)).
    """
    return s * math.log1p(w1 * w1 / (b * (n1 + b)) + w1 * (w1 + q) / (b * delta * u1))


@kernel
def segment_extras(dn, n1, w1, n2, w2):
    """ln((n2 + w2)/(n1 + w1)) [1] and w2 - w1 [1] of a monotone segment."""
    wsum = w1 + w2
    dw = dn * (n1 + n2) / wsum if wsum > 0.0 else 0.0
    h1 = n1 + w1
    dh = dn + dw
    if abs(dh) < 0.5 * h1:
        return math.log1p(dh / h1), dw
    return math.log((n2 + w2) / h1), dw


@kernel
def turning_extras(b, n1, w1):
    """ln(b/(n1 + w1)) [1] and -w1 [1] of a segment ending at its turning point."""
    return -math.log1p((w1 * w1 / (n1 + b) + w1) / b), -w1


@kernel
def turning_height(a, delta, s, b, q):
    """Height z_t [m] where n(z_t) = b: z_t = s ln(q^2 / ((a + b) delta))."""
    return s * math.log(q * q / ((a + b) * delta))


@kernel
def slope_factor(delta, u, g):
    """k = 2 + (delta u)^2 / G, so that d ln G / db = -b k / (q w) [1]."""
    du = delta * u
    return 2.0 + du * du / g


@kernel
def family_d(up, b, p, pair):
    """Summed D of the segments of one ray family, and its slope.

    Parameters
    ----------
    up : bool
        False: the direct family (monotone from z_lo up to z_hi).  True: the
        up-going family (from z_lo up past z_hi to a turning point or the
        surface, then down to z_hi).
    b : float
        Snell invariant [1].
    p : float
        Vertical slowness sqrt(n_hi^2 - b^2) at the upper point, >= 0 [1]; it
        is passed separately so that near-horizontal rays keep full precision.
    pair : tuple
        From :func:`pair_state`.

    Returns
    -------
    q : float
        sqrt(a^2 - b^2) [1].
    sum_d : float
        Sum over the segments of D [m].
    sum_slope : float
        Sum over the segments of -p dD/db [m] (dG/db from equation 2.10).
    w_lo, w_top : float
        Vertical slowness at the lower point and at the surface (reflected
        rays; 0 otherwise) [1].
    code : int
        0 direct, 1 refracted, 2 reflected.
    """
    a, delta, s, z_lo, u_lo, n_lo, z_hi, u_hi, n_hi, dn_lh, dn_ls, dn_hs = pair
    q = math.sqrt(delta * u_hi * (a + n_hi) + p * p)
    w_lo = math.sqrt(max(slowness_sq(delta, u_hi, n_hi, u_lo, n_lo, p), 0.0))
    w_hi = p
    g_lo = g_value(delta, q, u_lo, n_lo, w_lo)
    g_hi = g_value(delta, q, u_hi, n_hi, w_hi)
    k_lo = slope_factor(delta, u_lo, g_lo)
    k_hi = slope_factor(delta, u_hi, g_hi)
    r_lo = p / w_lo if w_lo > 0.0 else 1.0
    pre = s * b / q
    if not up:
        d = segment_d(a, s, q, z_hi - z_lo, dn_lh, n_lo, w_lo, g_lo, n_hi, w_hi, g_hi)
        return q, d, -pre * (k_hi - k_lo * r_lo), w_lo, 0.0, 0
    n_s = a - delta
    w0_sq = slowness_sq(delta, u_hi, n_hi, 1.0, n_s, p)
    if w0_sq < 0.0:
        d = (turning_d(s, delta, b, q, u_lo, n_lo, w_lo)
             + turning_d(s, delta, b, q, u_hi, n_hi, w_hi))
        return q, d, pre * (k_lo * r_lo + k_hi) + 2.0 * s * p / b, w_lo, 0.0, 1
    w0 = math.sqrt(w0_sq)
    g0 = g_value(delta, q, 1.0, n_s, w0)
    d = (segment_d(a, s, q, -z_lo, dn_ls, n_lo, w_lo, g_lo, n_s, w0, g0)
         + segment_d(a, s, q, -z_hi, dn_hs, n_hi, w_hi, g_hi, n_s, w0, g0))
    k0 = slope_factor(delta, 1.0, g0)
    r0 = p / w0 if w0 > 0.0 else math.inf
    return q, d, -pre * (2.0 * k0 * r0 - k_lo * r_lo - k_hi), w_lo, w0, 2


@kernel
def family_sums(up, b, p, pair):
    """Every summed segment term of one ray family at invariant b.

    Returns
    -------
    q : float
        sqrt(a^2 - b^2) [1].
    sum_d, sum_ln_h, sum_dw : float
        Sums over the segments of D [m], ln H [1] and w2 - w1 [1], from which
        X = (b/q) sum_d, L = s sum_ln_h + (a/q) sum_d and
        c T = s sum_dw + a s sum_ln_h + q sum_d + b X.
    sum_slope : float
        Sum over the segments of -p dD/db [m].
    w_lo : float
        Vertical slowness at the lower point [1].
    code : int
        0 direct, 1 refracted, 2 reflected.
    """
    a, delta, s, z_lo, u_lo, n_lo, z_hi, u_hi, n_hi, dn_lh, dn_ls, dn_hs = pair
    q, d, slope, w_lo, w0, code = family_d(up, b, p, pair)
    if code == 0:
        h, dw = segment_extras(dn_lh, n_lo, w_lo, n_hi, p)
    elif code == 1:
        h1, dw1 = turning_extras(b, n_lo, w_lo)
        h2, dw2 = turning_extras(b, n_hi, p)
        h, dw = h1 + h2, dw1 + dw2
    else:
        n_s = a - delta
        h1, dw1 = segment_extras(dn_ls, n_lo, w_lo, n_s, w0)
        h2, dw2 = segment_extras(dn_hs, n_hi, p, n_s, w0)
        h, dw = h1 + h2, dw1 + dw2
    return q, d, h, dw, slope, w_lo, code


@kernel
def family_distance(up, psi, pair):
    """Horizontal distance X [m] and dX/dpsi [m/rad] of a family.

    ``psi`` [rad] is the elevation of the ray at the upper point,
    b = n_hi cos(psi), p = n_hi sin(psi);
    X = (b/q) sum D and dX/dpsi = -p dX/db = -p a^2 sum D / q^3 + (b/q) sum(-p D').
    """
    n_hi = pair[8]
    b = n_hi * math.cos(psi)
    p = n_hi * math.sin(psi)
    q, sd, slope, w_lo, w0, code = family_d(up, b, p, pair)
    x = b * sd / q
    dx = -p * pair[0] * pair[0] * sd / (q * q * q) + b * slope / q
    return x, dx


@kernel
def partial_segment(a, delta, s, b, p_ref, u_ref, n_ref, z1, z2, to_turning):
    """X [m], L [m] and c T [m] of one monotone piece of a ray, from z1 up to z2.

    The invariant is fixed by ``b`` and the vertical slowness ``p_ref`` at a
    reference level (u_ref, n_ref) of the ray.  With ``to_turning`` the piece
    ends at the turning point (``z2`` is ignored).  Used for the points of a
    ray's path and by the tests.
    """
    q = math.sqrt(delta * u_ref * (a + n_ref) + p_ref * p_ref)
    u1, n1 = level_state(a, delta, s, z1)
    w1 = math.sqrt(max(slowness_sq(delta, u_ref, n_ref, u1, n1, p_ref), 0.0))
    g1 = g_value(delta, q, u1, n1, w1)
    if to_turning:
        d = turning_d(s, delta, b, q, u1, n1, w1)
        ln_h, dw = turning_extras(b, n1, w1)
    else:
        u2, n2 = level_state(a, delta, s, z2)
        w2 = math.sqrt(max(slowness_sq(delta, u_ref, n_ref, u2, n2, p_ref), 0.0))
        g2 = g_value(delta, q, u2, n2, w2)
        dn = -delta * u1 * math.expm1((z2 - z1) / s)
        d = segment_d(a, s, q, z2 - z1, dn, n1, w1, g1, n2, w2, g2)
        ln_h, dw = segment_extras(dn, n1, w1, n2, w2)
    x = b * d / q
    return x, s * ln_h + a * d / q, s * dw + a * s * ln_h + q * d + b * x
