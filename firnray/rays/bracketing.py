"""The safeguarded step shared by every root finder of the ray solvers.

Both solvers (closed-form exponential and general panel profiles) keep a
bracket [lo, hi] around a root of X(t) - x_target and take, at each
iteration, the Newton step (exponential: analytic slope) or the secant step
(general profiles: slope from the last two iterates) when it stays inside the
bracket and at least halves the step before last; otherwise they bisect.
"""

import math

from firnray.rays.exponential_kernels import kernel


@kernel
def safeguarded_step(t, f, slope, lo, hi, width_old):
    """Next iterate t_new [rad] of a bracketed root search.

    Parameters
    ----------
    t, f : float
        Current iterate [rad] and X(t) - x_target [m].
    slope : float
        dX/dt at t, or a secant estimate [m/rad]; NaN or 0 forces bisection.
    lo, hi : float
        Bracket ends [rad], already updated with (t, f).
    width_old : float
        Length of the step before last [rad].

    Returns
    -------
    float
        t - f / slope if that lies strictly inside (lo, hi) and
        |f / slope| < width_old / 2, else (lo + hi) / 2.
    """
    if slope != 0.0 and math.isfinite(slope):
        step = f / slope
        t_new = t - step
        if (t_new - lo) * (t_new - hi) < 0.0 and abs(step) < 0.5 * width_old:
            return t_new
    return 0.5 * (lo + hi)


#: Golden-section fraction of Brent's minimisation.
GOLDEN = 0.3819660112501051


@kernel
def brent_min_step(x, w, v, fx, fw, fv, a, bb, d, e, tol1):
    """Next trial point of Brent's minimisation (Brent 1973, Algorithms for
    Minimization without Derivatives, chapter 5): the parabolic step through
    the three best points (x, w, v) where it is acceptable, else a
    golden-section step into the larger part of [a, bb].

    Returns
    -------
    u, d, e : float
        The trial point, the step taken and the step before it [units of x].
    """
    m = 0.5 * (a + bb)
    tol2 = 2.0 * tol1
    parabolic = False
    if abs(e) > tol1:
        r = (x - w) * (fx - fv)
        q = (x - v) * (fx - fw)
        pp = (x - v) * q - (x - w) * r
        q = 2.0 * (q - r)
        if q > 0.0:
            pp = -pp
        q = abs(q)
        if abs(pp) < abs(0.5 * q * e) and pp > q * (a - x) and pp < q * (bb - x):
            e = d
            d = pp / q
            u = x + d
            if u - a < tol2 or bb - u < tol2:
                d = tol1 if x < m else -tol1
            parabolic = True
    if not parabolic:
        e = (bb - x) if x < m else (a - x)
        d = GOLDEN * e
    u = x + d if abs(d) >= tol1 else x + (tol1 if d > 0 else -tol1)
    return u, d, e


@kernel
def brent_min_update(u, fu, x, w, v, fx, fw, fv, a, bb):
    """Brent's bookkeeping after evaluating the trial point u: the bracket
    [a, bb] and the three best points; returns (x, w, v, fx, fw, fv, a, bb)."""
    if fu <= fx:
        if u < x:
            bb = x
        else:
            a = x
        v, fv = w, fw
        w, fw = x, fx
        x, fx = u, fu
    else:
        if u < x:
            a = u
        else:
            bb = u
        if fu <= fw or w == x:
            v, fv = w, fw
            w, fw = u, fu
        elif fu <= fv or v == x or v == w:
            v, fv = u, fu
    return x, w, v, fx, fw, fv, a, bb
