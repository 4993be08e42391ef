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
