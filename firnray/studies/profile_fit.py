"""Fitting the firn profile to calibration-pulser D/R delays.

A pulser lowered to known depths and seen by antennas at known positions
gives, per (pulser, antenna) pair, the delay between the first and second
pulse; the delay depends strongly on the firn (the second ray turns in it or
bounces off the surface).  ``fit_profile_to_delays`` fits the parameters of
an exponential profile by weighted least squares over the exact solver and
reports their uncertainties and correlations (from the Jacobian).
"""

import numpy as np

from firnray.medium.profiles import ExponentialProfile
from firnray.rays.solve import check_profile, find_rays_many

#: Parameters of an ExponentialProfile that can be fitted.
FIT_PARAMETERS = ("n_deep", "n_surface", "scale_depth")
#: Residual [sigma] for a pair that the trial profile puts in the shadow
#: (fewer than two rays).
NO_PAIR_PULL = 30.0


class PulserDelays:
    """Measured D/R delays of calibration pulses.

    Parameters
    ----------
    pulsers : array_like, shape (N, 3)
        Pulser positions (x, y, z) [m].
    antennas : array_like, shape (N, 3)
        Antenna positions (x, y, z) [m].
    delay : array_like, shape (N,)
        Measured second-minus-first delays [ns].
    sigma : array_like, shape (N,) or float
        Their uncertainties [ns], > 0.
    """

    def __init__(self, pulsers, antennas, delay, sigma):
        self.pulsers = np.asarray(pulsers, float).reshape(-1, 3)
        self.antennas = np.asarray(antennas, float).reshape(-1, 3)
        n = self.pulsers.shape[0]
        self.delay = np.asarray(delay, float).reshape(-1)
        self.sigma = np.broadcast_to(np.asarray(sigma, float), (n,)).copy()
        if self.antennas.shape[0] != n or self.delay.shape[0] != n:
            raise ValueError(f"pulsers, antennas and delay must have the same length, got "
                             f"{n}, {self.antennas.shape[0]}, {self.delay.shape[0]}")
        for name, arr in (("pulsers", self.pulsers), ("antennas", self.antennas),
                          ("delay", self.delay)):
            finite = np.isfinite(arr) if arr.ndim == 1 else np.isfinite(arr).all(axis=1)
            if not finite.all():
                raise ValueError(f"{name} must be finite [m or ns]; row {int(np.argmin(finite))} "
                                 f"is {arr[int(np.argmin(finite))]!r}")
        if not np.all(self.sigma > 0):
            raise ValueError(f"sigma must be > 0 ns, got {self.sigma[self.sigma <= 0][:3]!r}")

    def __len__(self):
        return self.delay.shape[0]


def predicted_delays(profile, data):
    """D/R delays [ns] of ``data``'s pairs in ``profile`` (NaN with fewer than two rays)."""
    rs = find_rays_many(profile, data.pulsers, data.antennas)
    t = rs.travel_time
    return t[:, 1] - t[:, 0] if t.shape[1] > 1 else np.full(len(data), np.nan)


def delay_chi2(profile, data):
    """chi^2 of ``data`` under ``profile``; a pair without two rays counts
    ``NO_PAIR_PULL``^2 (it cannot give the measured delay)."""
    res = (data.delay - predicted_delays(profile, data)) / data.sigma
    res = np.where(np.isfinite(res), res, NO_PAIR_PULL)
    return float(res @ res)


class ProfileFit:
    """Result of :func:`fit_profile_to_delays`.

    Attributes
    ----------
    profile : ExponentialProfile
        The best-fit profile.
    names : tuple of str
        The fitted parameters.
    values, sigma : ndarray
        Best values and 1-sigma uncertainties (units of each parameter:
        index [1], scale depth [m]).
    covariance, correlation : ndarray
        Their covariance and correlation matrices.
    chi2 : float
    ndof : int
    residuals : ndarray
        (measured - predicted) / sigma per pair.
    success : bool
    """

    def __init__(self, **kw):
        self.__dict__.update(kw)

    def summary(self):
        """Readable lines: each parameter with its uncertainty, then the correlations."""
        lines = [f"chi2 = {self.chi2:.2f} for {self.ndof} degrees of freedom"]
        for name, v, s in zip(self.names, self.values, self.sigma):
            rel = abs(s / v) if v else float("nan")
            lines.append(f"  {name:<12} = {v:.6g} +- {s:.2g}   (relative {rel:.1e})")
        if len(self.names) > 1:
            lines.append("  correlations: " + ", ".join(
                f"{self.names[i]}/{self.names[j]} {self.correlation[i, j]:+.3f}"
                for i in range(len(self.names)) for j in range(i + 1, len(self.names))))
        return lines


def fit_profile_to_delays(data, initial, free=("n_surface", "scale_depth")):
    """Fit exponential-profile parameters to measured D/R delays.

    Parameters
    ----------
    data : PulserDelays
    initial : ExponentialProfile
        Starting values; parameters not in ``free`` stay fixed.
    free : sequence of str
        Parameters to fit, from ``n_deep``, ``n_surface``, ``scale_depth``.

    Returns
    -------
    ProfileFit

    Raises
    ------
    ValueError
        For an unknown parameter name, fewer pairs than free parameters, or
        an invalid initial profile.
    """
    from scipy.optimize import least_squares  # imported on use: keeps `import firnray` fast

    check_profile(initial)
    free = tuple(free)
    for name in free:
        if name not in FIT_PARAMETERS:
            raise ValueError(f"free parameter {name!r} is not one of {FIT_PARAMETERS}")
    if not free or len(set(free)) != len(free):
        raise ValueError(f"free must name distinct parameters, got {free!r}")
    if len(data) <= len(free):
        raise ValueError(f"data: {len(data)} delays cannot constrain {len(free)} parameters")
    base = {"n_deep": initial.n_deep, "n_surface": initial.n_surface,
            "scale_depth": initial.scale_depth}

    def make(theta):
        values = dict(base)
        values.update(zip(free, theta))
        return ExponentialProfile(values["n_deep"], values["n_surface"], values["scale_depth"],
                                  n_air=initial.n_air, z_min=initial.z_min)

    def residuals(theta):
        try:
            prof = make(theta)
        except ValueError:
            return np.full(len(data), NO_PAIR_PULL)
        pred = predicted_delays(prof, data)
        res = (data.delay - pred) / data.sigma
        return np.where(np.isfinite(res), res, NO_PAIR_PULL)

    lo = {"n_deep": initial.n_air + 1e-6, "n_surface": initial.n_air + 1e-6,
          "scale_depth": 1e-3}
    hi = {"n_deep": 3.0, "n_surface": 3.0, "scale_depth": 1e4}
    theta0 = np.array([base[n] for n in free])
    scale = np.array([0.01 if n != "scale_depth" else 1.0 for n in free])
    sol = least_squares(residuals, theta0, x_scale=scale, diff_step=1e-7,
                        bounds=([lo[n] for n in free], [hi[n] for n in free]),
                        xtol=1e-12, ftol=1e-12, gtol=1e-12)
    jac = sol.jac
    try:
        cov = np.linalg.inv(jac.T @ jac)
    except np.linalg.LinAlgError:
        cov = np.full((len(free), len(free)), np.nan)
    sig = np.sqrt(np.clip(np.diag(cov), 0, None))
    with np.errstate(invalid="ignore", divide="ignore"):
        corr = cov / np.outer(sig, sig)
    res = residuals(sol.x)
    return ProfileFit(profile=make(sol.x), names=free, values=sol.x.copy(), sigma=sig,
                      covariance=cov, correlation=corr, chi2=float(res @ res),
                      ndof=int(len(data) - len(free)), residuals=res,
                      success=bool(sol.success and np.all(np.abs(res) < NO_PAIR_PULL)))


def simulate_pulser_delays(profile, pulsers, antennas, sigma, rng=None):
    """D/R delays of each (pulser, antenna) pair in ``profile`` with Gaussian noise.

    Pairs with fewer than two rays are dropped.

    Parameters
    ----------
    profile : ExponentialProfile
    pulsers, antennas : array_like, shape (N, 3)
        Positions [m].
    sigma : float
        Noise and stated uncertainty [ns].
    rng : numpy.random.Generator, optional

    Returns
    -------
    PulserDelays
    """
    p = np.asarray(pulsers, float).reshape(-1, 3)
    a = np.asarray(antennas, float).reshape(-1, 3)
    tmp = PulserDelays(p, a, np.zeros(len(p)), 1.0)
    d = predicted_delays(profile, tmp)
    keep = np.isfinite(d)
    noise = 0.0 if rng is None else rng.normal(0.0, sigma, keep.sum())
    return PulserDelays(p[keep], a[keep], d[keep] + noise, sigma)
