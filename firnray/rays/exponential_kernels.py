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
def segment_terms(a, delta, s, b, q, z1, u1, n1, w1, z2, u2, n2, w2):
    """Closed-form pieces of a monotone segment from height z1 up to z2.

    Parameters
    ----------
    a, delta : float
        n_deep and n_deep - n_surface [1].
    s : float
        Scale depth [m].
    b, q : float
        Invariant and sqrt(a^2 - b^2) [1].
    z1, u1, n1, w1 : float
        Lower end: height [m], exp(z1/s) [1], index [1], vertical slowness [1].
    z2, u2, n2, w2 : float
        Upper end, same quantities.

    Returns
    -------
    d : float
        D = (z2 - z1) - s ln(G2/G1) [m].
    ln_h : float
        ln((n2 + w2) / (n1 + w1)) [1].
    dw : float
        w2 - w1 [1].
    """
    # n2 - n1 = -delta (u2 - u1) = -delta u1 expm1((z2 - z1)/s)
    dn = -delta * u1 * math.expm1((z2 - z1) / s)
    wsum = w1 + w2
    if wsum > 0.0:
        dw = dn * (n1 + n2) / wsum
    else:
        dw = 0.0
    g1 = g_value(delta, q, u1, n1, w1)
    dg = a * dn + q * dw
    if abs(dg) < 0.5 * g1:
        ln_g = math.log1p(dg / g1)
    else:
        ln_g = math.log(g_value(delta, q, u2, n2, w2) / g1)
    h1 = n1 + w1
    dh = dn + dw
    if abs(dh) < 0.5 * h1:
        ln_h = math.log1p(dh / h1)
    else:
        ln_h = math.log((n2 + w2) / h1)
    return (z2 - z1) - s * ln_g, ln_h, dw


@kernel
def turning_terms(a, delta, s, b, q, z1, u1, n1, w1):
    """Closed-form pieces of a segment from height z1 up to the turning point.

    The turning height z_t has n(z_t) = b, so u_t = (a - b)/delta; with
    n1 - b = w1^2/(n1 + b)::

        z_t - z1   = s ln(1 + w1^2 / ((n1 + b) delta u1))
        G1 - G_t   = a w1^2 / (n1 + b) + q w1,      G_t = b (a - b)
        H_t / H1   = b / (n1 + w1)

    Parameters and returns as :func:`segment_terms` (the upper end is the
    turning point, so ``dw = -w1``).
    """
    nb = n1 + b
    rise = s * math.log1p(w1 * w1 / (nb * delta * u1))
    g1 = g_value(delta, q, u1, n1, w1)
    dg = a * w1 * w1 / nb + q * w1
    if dg < 0.5 * g1:
        ln_g = math.log1p(-dg / g1)
    else:
        g_t = b * q * q / (a + b)
        ln_g = math.log(g_t / g1)
    ln_h = -math.log1p((w1 * w1 / nb + w1) / b)
    return rise - s * ln_g, ln_h, -w1


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
def family_sums(up, b, p, a, delta, s, z_lo, u_lo, n_lo, z_hi, u_hi, n_hi):
    """Summed segment terms of one ray family at invariant b.

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
    a, delta, s : float
        n_deep [1], n_deep - n_surface [1], scale depth [m].
    z_lo, u_lo, n_lo, z_hi, u_hi, n_hi : float
        Height [m], exp(z/s) [1] and index [1] of the lower and upper point.

    Returns
    -------
    q : float
        sqrt(a^2 - b^2) [1].
    sum_d, sum_ln_h, sum_dw : float
        Sums over the segments of D [m], ln H [1] and w2 - w1 [1].
    sum_slope : float
        Sum over the segments of -p dD/db [m].
    w_lo : float
        Vertical slowness at the lower point [1].
    code : int
        0 direct, 1 refracted, 2 reflected.
    """
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
        d, ln_h, dw = segment_terms(a, delta, s, b, q, z_lo, u_lo, n_lo, w_lo,
                                    z_hi, u_hi, n_hi, w_hi)
        slope = -pre * (k_hi - k_lo * r_lo)
        return q, d, ln_h, dw, slope, w_lo, 0
    n_s = a - delta
    w0_sq = slowness_sq(delta, u_hi, n_hi, 1.0, n_s, p)
    if w0_sq < 0.0:
        d1, h1, dw1 = turning_terms(a, delta, s, b, q, z_lo, u_lo, n_lo, w_lo)
        d2, h2, dw2 = turning_terms(a, delta, s, b, q, z_hi, u_hi, n_hi, w_hi)
        slope = pre * (k_lo * r_lo + k_hi) + 2.0 * s * p / b
        return q, d1 + d2, h1 + h2, dw1 + dw2, slope, w_lo, 1
    w0 = math.sqrt(w0_sq)
    d1, h1, dw1 = segment_terms(a, delta, s, b, q, z_lo, u_lo, n_lo, w_lo,
                                0.0, 1.0, n_s, w0)
    d2, h2, dw2 = segment_terms(a, delta, s, b, q, z_hi, u_hi, n_hi, w_hi,
                                0.0, 1.0, n_s, w0)
    g0 = g_value(delta, q, 1.0, n_s, w0)
    k0 = slope_factor(delta, 1.0, g0)
    r0 = p / w0 if w0 > 0.0 else math.inf
    slope = -pre * (2.0 * k0 * r0 - k_lo * r_lo - k_hi)
    return q, d1 + d2, h1 + h2, dw1 + dw2, slope, w_lo, 2


@kernel
def family_distance(up, psi, a, delta, s, z_lo, u_lo, n_lo, z_hi, u_hi, n_hi):
    """Horizontal distance X [m] and dX/dpsi [m/rad] of a family.

    ``psi`` [rad] is the elevation of the ray at the upper point,
    b = n_hi cos(psi), p = n_hi sin(psi);
    X = (b/q) sum D and dX/dpsi = -p dX/db = -p a^2 sum D / q^3 + (b/q) sum(-p D').
    """
    b = n_hi * math.cos(psi)
    p = n_hi * math.sin(psi)
    q, sd, sh, sw, slope, w_lo, code = family_sums(up, b, p, a, delta, s, z_lo, u_lo,
                                                   n_lo, z_hi, u_hi, n_hi)
    x = b * sd / q
    dx = -p * a * a * sd / (q * q * q) + b * slope / q
    return x, dx
