"""Optional smoothing of measured samples before they become a profile.

Smoothing is never applied behind the caller's back: a profile smooths its
samples only when given ``smoothing_window`` and then records the window in
its ``info``.  The one smoother here is a running mean of the samples joined
by straight lines (:func:`smooth_samples`); it works on irregular spacing
because it averages the joined curve over a window in metres, not a number
of neighbouring samples.
"""

import numpy as np

from firnray.checks import positive_float


def smooth_samples(z, values, window):
    """Running mean over a window in metres of samples at irregular heights.

    The samples are joined by straight lines (linear interpolation between
    neighbouring heights); the smoothed value at each sample height z_i is
    the mean of that joined curve over [z_i - h_i, z_i + h_i], computed
    exactly (the integral of a piecewise-linear function), with
    h_i = min(window / 2, z_i - z_lowest, z_highest - z_i).

    Parameters
    ----------
    z : array_like, shape (K,)
        Sample heights [m], finite and distinct, in any order.
    values : array_like, shape (K,)
        Sample values [any unit], finite.
    window : float
        Full width of the running mean [m], > 0.

    Returns
    -------
    ndarray, shape (K,)
        Smoothed values [unit of ``values``], in the order of the input.

    Raises
    ------
    ValueError
        If the arrays are not 1-D of one length >= 1, hold a non-finite value
        or a repeated height, or ``window`` is not a finite number > 0; the
        message names the argument and the row.

    Notes
    -----
    Edge handling: near the shallowest and deepest samples the window
    shrinks symmetrically so that it stays inside the sampled range, so the
    two end samples keep their values and a linear trend passes through
    unchanged everywhere (no bias at the ends, at the price of less
    smoothing there).  In the interior, on a uniform grid of spacing dz with
    ``window`` = 2 m dz (m a whole number), the result equals the discrete
    running mean with weights (1/2, 1, ..., 1, 1/2) / (2 m) over 2 m + 1
    samples (the trapezoid rule is exact for a piecewise-linear curve).
    """
    zz = np.asarray(z, dtype=float)
    vv = np.asarray(values, dtype=float)
    if zz.ndim != 1 or vv.shape != zz.shape or zz.size < 1:
        raise ValueError(f"z and values must be 1-D arrays of the same length >= 1, got shapes "
                         f"{zz.shape} and {vv.shape}")
    for name, arr in (("z", zz), ("values", vv)):
        bad = np.flatnonzero(~np.isfinite(arr))
        if bad.size:
            raise ValueError(f"{name}[{bad[0]}] must be finite, got {float(arr[bad[0]])!r}")
    width = positive_float("window", window)
    order = np.argsort(zz, kind="stable")
    x, y = zz[order], vv[order]
    same = np.flatnonzero(np.diff(x) == 0.0)
    if same.size:
        i, j = sorted((int(order[same[0]]), int(order[same[0] + 1])))
        raise ValueError(f"z must hold distinct heights: z[{i}] and z[{j}] are both "
                         f"{float(zz[i])!r} m")
    if x.size == 1:
        return vv.copy()
    # integrate about a central value: the cumulative sums stay small
    ref = float(np.median(y))
    y = y - ref
    dx = np.diff(x)
    slope = np.diff(y) / dx
    cum = np.concatenate([[0.0], np.cumsum(0.5 * (y[:-1] + y[1:]) * dx)])

    def integral(t):
        k = np.clip(np.searchsorted(x, t, side="right") - 1, 0, x.size - 2)
        u = t - x[k]
        return cum[k] + u * (y[k] + 0.5 * slope[k] * u)

    half = np.minimum(0.5 * width, np.minimum(x - x[0], x[-1] - x))
    out = y.copy()
    wide = half > 0.0
    out[wide] = (integral(x[wide] + half[wide]) - integral(x[wide] - half[wide])) / (
        2.0 * half[wide])
    result = np.empty_like(out)
    result[order] = out + ref
    return result
