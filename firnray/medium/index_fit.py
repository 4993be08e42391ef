"""Least-squares fits of refractive-index data n(z).

Index data (heights ``z`` [m], indices ``n`` [1] and optionally their 1-sigma
errors) come from density cores turned into an index, from borehole radar or
from any other measurement.  Two model families are fitted:

``fit_exponential_index``
    n(z) = n_deep - (n_deep - n_surface) exp(z / scale_depth), the form of
    ``firnray.medium.profiles.ExponentialProfile`` (``n_deep`` optionally
    fixed).
``fit_piecewise_exponential_index``
    a continuous stack of exponential pieces, the form of
    ``firnray.medium.profiles.PiecewiseExponentialProfile`` (break heights
    fixed by default, optionally fitted).

Both return an :class:`IndexFit`: best values, 1-sigma uncertainties and
covariance from the linearised least-squares problem, residuals, chi^2 and
degrees of freedom, the fitted profile and a readable summary.

Heights: 0 at the snow surface, negative in the firn (a depth d is z = -d);
every data height must be <= 0.
"""

import math
import warnings

import numpy as np

from firnray.errors import FirnrayWarning
from firnray.medium.general_profiles import PiecewiseExponentialProfile
from firnray.medium.profiles import ExponentialProfile

#: Parameter names of the exponential model, in the order of the covariance.
EXPONENTIAL_PARAMETERS = ("n_deep", "n_surface", "scale_depth")


# --------------------------------------------------------------------------- models

def exponential_model(z, n_deep, n_surface, scale_depth):
    """n(z) = n_deep - (n_deep - n_surface) exp(z / scale_depth) [1] for heights z <= 0 [m].

    Parameters
    ----------
    z : float or array_like
        Height [m], <= 0.
    n_deep, n_surface : float
        Deep and surface index [1].
    scale_depth : float
        e-folding depth [m], > 0.

    Returns
    -------
    float or ndarray
        Index [1], the shape of ``z``.
    """
    z = np.asarray(z, dtype=float)
    out = n_deep - (n_deep - n_surface) * np.exp(z / scale_depth)
    return float(out) if out.ndim == 0 else out


def piecewise_top_indices(n_surface, breaks, n_deep, scale_depth):
    """Index at the top of each piece of a continuous piecewise exponential profile [1].

    Parameters
    ----------
    n_surface : float
        Index at the surface, the top of piece 0 [1].
    breaks : array_like, shape (M-1,)
        Heights of the piece boundaries [m], strictly decreasing, all < 0.
    n_deep, scale_depth : array_like, shape (M,)
        Deep index [1] and e-folding depth [m] of each piece.

    Returns
    -------
    ndarray, shape (M,)
        n_top[0] = n_surface and n_top[k] = value of piece k-1 at breaks[k-1].
    """
    breaks = np.asarray(breaks, dtype=float)
    n_deep = np.asarray(n_deep, dtype=float)
    scale_depth = np.asarray(scale_depth, dtype=float)
    tops = np.concatenate(([0.0], breaks))
    n_top = np.empty(n_deep.shape[0])
    n_top[0] = n_surface
    for k in range(1, n_deep.shape[0]):
        n_top[k] = n_deep[k - 1] - (n_deep[k - 1] - n_top[k - 1]) * math.exp(
            (tops[k] - tops[k - 1]) / scale_depth[k - 1])
    return n_top


def piecewise_exponential_model(z, n_surface, breaks, n_deep, scale_depth):
    """Continuous piecewise exponential index profile [1] at heights z <= 0 [m].

    Piece 0 (0 >= z >= breaks[0]): n = n_deep[0] - (n_deep[0] - n_surface)
    exp(z / scale_depth[0]); piece k (breaks[k-1] > z >= breaks[k], the last
    piece reaching down without end): n = n_deep[k] - (n_deep[k] - n_top[k])
    exp((z - breaks[k-1]) / scale_depth[k]) with n_top[k] the value of piece
    k-1 at breaks[k-1] (:func:`piecewise_top_indices`).

    Parameters
    ----------
    z : float or array_like
        Height [m], <= 0.
    n_surface : float
        Index at the surface [1].
    breaks : array_like, shape (M-1,)
        Piece boundaries [m], strictly decreasing, < 0 (may be empty).
    n_deep, scale_depth : array_like, shape (M,)
        Deep index [1] and e-folding depth [m] > 0 of each piece.

    Returns
    -------
    float or ndarray
        Index [1], the shape of ``z``.
    """
    z_arr = np.asarray(z, dtype=float)
    breaks = np.asarray(breaks, dtype=float).reshape(-1)
    n_deep = np.asarray(n_deep, dtype=float).reshape(-1)
    scale_depth = np.asarray(scale_depth, dtype=float).reshape(-1)
    tops = np.concatenate(([0.0], breaks))
    n_top = piecewise_top_indices(n_surface, breaks, n_deep, scale_depth)
    # piece of each height: the number of breaks strictly above it (a break
    # belongs to the piece above it; the profile is continuous there anyway)
    k = np.searchsorted(-breaks, -z_arr, side="left")
    out = n_deep[k] - (n_deep[k] - n_top[k]) * np.exp((z_arr - tops[k]) / scale_depth[k])
    return float(out) if out.ndim == 0 else out


# --------------------------------------------------------------------------- checks

def _data(z, n, sigma):
    """Checked (z, n, sigma-or-None) as 1-D float arrays."""
    try:
        zs = np.asarray(z, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"z must be a 1-D array of heights [m], got {z!r}") from None
    try:
        ns = np.asarray(n, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"n must be a 1-D array of indices [1], got {n!r}") from None
    if zs.ndim != 1:
        raise ValueError(f"z must be a 1-D array of heights [m], got shape {zs.shape}")
    if ns.shape != zs.shape:
        raise ValueError(f"n must have the shape of z {zs.shape}, got shape {ns.shape}")
    if not np.all(np.isfinite(zs)):
        raise ValueError(f"z must hold finite heights [m], got {z!r}")
    if not np.all(np.isfinite(ns)):
        raise ValueError(f"n must hold finite indices (no NaN), got {n!r}")
    if np.any(zs > 0.0):
        raise ValueError(f"z must hold heights <= 0 m (in the firn; a depth d is z = -d), got "
                         f"a largest value of {float(np.max(zs))!r} m")
    if np.any(ns < 1.0):
        raise ValueError(f"n must hold indices >= 1, got a smallest value of "
                         f"{float(np.min(ns))!r}")
    if sigma is None:
        return zs, ns, None
    try:
        sg = np.broadcast_to(np.asarray(sigma, dtype=float), zs.shape).copy()
    except (TypeError, ValueError):
        raise ValueError(f"sigma must be a positive number or an array of the shape of z "
                         f"{zs.shape} [1], got {sigma!r}") from None
    if not np.all(np.isfinite(sg)) or np.any(sg <= 0.0):
        raise ValueError(f"sigma must hold finite values > 0 [1], got {sigma!r}")
    return zs, ns, sg


def _need_points(zs, free):
    if zs.size <= len(free):
        raise ValueError(f"z: {zs.size} data points cannot constrain {len(free)} free "
                         f"parameters {free} (need at least {len(free) + 1})")


# --------------------------------------------------------------------------- result

class IndexFit:
    """Result of a fit of index data: values, uncertainties, statistics, profile.

    Attributes
    ----------
    kind : str
        ``"exponential"`` or ``"piecewise exponential"``.
    parameters : dict
        Every model parameter by name, fitted or fixed (indices [1],
        scale depths and break heights [m]).
    uncertainties : dict
        1-sigma uncertainty of each parameter, same units; 0.0 for a fixed
        parameter.
    free : tuple of str
        The fitted parameters, in the order of ``covariance``.
    fixed : tuple of str
        The parameters held fixed.
    covariance : ndarray, shape (len(free), len(free))
        Covariance of the fitted parameters (units: products of theirs).
    correlation : ndarray
        The covariance normalised by the uncertainties.
    residuals : ndarray
        Data minus model at each height [1].
    chi2 : float
        Sum of squared normalised residuals ((n - model) / sigma)^2 when
        ``sigma`` was given; without ``sigma``, the plain sum of squared
        residuals [1].
    dof : int
        Degrees of freedom: data points minus free parameters.
    sigma_given : bool
        Whether the fit weighted the data with measured errors.
    converged : bool
        Whether the optimiser reported convergence.
    """

    def __init__(self, kind, parameters, uncertainties, free, covariance, residuals, chi2,
                 dof, sigma_given, converged, z, n):
        self.kind = kind
        self.parameters = dict(parameters)
        self.uncertainties = dict(uncertainties)
        self.free = tuple(free)
        self.fixed = tuple(name for name in self.parameters if name not in self.free)
        self.covariance = np.asarray(covariance, dtype=float)
        sig = np.sqrt(np.clip(np.diag(self.covariance), 0.0, None))
        with np.errstate(invalid="ignore", divide="ignore"):
            self.correlation = self.covariance / np.outer(sig, sig)
        self.residuals = np.asarray(residuals, dtype=float)
        self.chi2 = float(chi2)
        self.dof = int(dof)
        self.sigma_given = bool(sigma_given)
        self.converged = bool(converged)
        self.z = np.asarray(z, dtype=float)
        self.n = np.asarray(n, dtype=float)

    @property
    def reduced_chi2(self):
        """chi2 / dof [1] (without ``sigma``: the residual variance [1])."""
        return self.chi2 / self.dof

    @property
    def breaks(self):
        """Break heights of a piecewise fit [m] (empty for the exponential model)."""
        names = sorted((k for k in self.parameters if k.startswith("break_")),
                       key=lambda s: int(s.split("_")[1]))
        return np.array([self.parameters[k] for k in names])

    def _pieces(self):
        m = len(self.breaks) + 1
        return (self.parameters["n_surface"], self.breaks,
                np.array([self.parameters[f"n_deep_{k}"] for k in range(m)]),
                np.array([self.parameters[f"scale_depth_{k}"] for k in range(m)]))

    def evaluate(self, z):
        """The fitted model at heights ``z`` [m] (<= 0), index [1]."""
        p = self.parameters
        if self.kind == "exponential":
            return exponential_model(z, p["n_deep"], p["n_surface"], p["scale_depth"])
        return piecewise_exponential_model(z, *self._pieces())

    def profile(self, **kw):
        """The fitted profile.

        Parameters
        ----------
        **kw
            Passed to the profile class (``n_air``, ``z_min``, ``info``).

        Returns
        -------
        firnray.medium.profiles.ExponentialProfile or PiecewiseExponentialProfile

        Raises
        ------
        ValueError
            If the fitted values do not make a valid profile (for example a
            piece whose deep index lies below the index at its top).
        """
        p = self.parameters
        if self.kind == "exponential":
            return ExponentialProfile(p["n_deep"], p["n_surface"], p["scale_depth"], **kw)
        n_surface, breaks, n_deep, scale_depth = self._pieces()
        return PiecewiseExponentialProfile(n_surface, list(breaks), list(n_deep),
                                           list(scale_depth), **kw)

    def summary(self):
        """Readable multi-line text: the fit statistics, each parameter, the correlations."""
        weight = ("weighted by the given sigma" if self.sigma_given else
                  "unweighted; uncertainties scaled by the residual variance")
        lines = [f"{self.kind} index fit to {self.residuals.size} points ({weight})",
                 f"  chi2 = {self.chi2:.6g} for {self.dof} degrees of freedom "
                 f"(chi2/dof = {self.reduced_chi2:.4g})"
                 + ("" if self.converged else "  [optimiser did NOT converge]")]
        for name, value in self.parameters.items():
            unit = "m" if ("scale_depth" in name or name.startswith("break")) else "1"
            if name in self.free:
                lines.append(f"  {name:<14} = {value:.7g} +- {self.uncertainties[name]:.2g} "
                             f"[{unit}]")
            else:
                lines.append(f"  {name:<14} = {value:.7g} [{unit}] (fixed)")
        if len(self.free) > 1:
            pairs = [f"{self.free[i]}/{self.free[j]} {self.correlation[i, j]:+.3f}"
                     for i in range(len(self.free)) for j in range(i + 1, len(self.free))]
            lines.append("  correlations: " + ", ".join(pairs))
        return "\n".join(lines)

    def __repr__(self):
        vals = ", ".join(f"{k}={v:.6g}" for k, v in self.parameters.items())
        return f"IndexFit({self.kind}: {vals}; chi2={self.chi2:.4g}, dof={self.dof})"


# --------------------------------------------------------------------------- solver

def _solve(residual_fn, theta0, lower, upper, x_scale):
    """least_squares on normalised residuals; returns (theta, jacobian, converged)."""
    from scipy.optimize import least_squares   # imported on use: keeps `import firnray` fast

    sol = least_squares(residual_fn, theta0, bounds=(lower, upper), x_scale=x_scale,
                        method="trf", xtol=1e-14, ftol=1e-14, gtol=1e-14, max_nfev=20000)
    return sol.x, sol.jac, bool(sol.success)


def _covariance(jac, chi2, dof, sigma_given):
    """(J^T J)^-1 by SVD; scaled by chi2/dof without sigma; inf when singular."""
    _, s, vt = np.linalg.svd(jac, full_matrices=False)
    threshold = np.finfo(float).eps * max(jac.shape) * (s[0] if s.size else 0.0)
    if s.size == 0 or np.any(s <= threshold):
        warnings.warn("the fit does not constrain every free parameter (singular Jacobian); "
                      "their covariance is set to inf", FirnrayWarning, stacklevel=3)
        return np.full((jac.shape[1], jac.shape[1]), np.inf)
    cov = (vt.T / s ** 2) @ vt
    if not sigma_given:
        cov = cov * (chi2 / dof)
    return cov


def _finish(kind, names, fixed_values, theta, jac, converged, zs, ns, sg, model_fn,
            transform=None):
    """Build the IndexFit from the solution ``theta`` of the free ``names``."""
    if not converged:
        warnings.warn(f"the {kind} index fit did not converge; check the starting values "
                      f"and the data", FirnrayWarning, stacklevel=3)
    values = dict(zip(names, theta))
    values.update(fixed_values)
    res = ns - model_fn(values)
    norm = res / sg if sg is not None else res
    chi2 = float(norm @ norm)
    dof = zs.size - len(names)
    cov = _covariance(jac, chi2, dof, sg is not None)
    if transform is not None:
        names, values, cov = transform(names, values, cov)
    unc = {name: 0.0 for name in values}
    unc.update(zip(names, np.sqrt(np.clip(np.diag(cov), 0.0, None))))
    return values, unc, names, cov, res, chi2, dof


def _exponential_start(zs, ns, n_deep=None):
    """Rough starting values (n_deep, n_surface, scale_depth) from the data."""
    span = float(np.ptp(ns)) or 1e-3
    depth_span = float(np.ptp(zs)) or 1.0
    nd = float(np.max(ns) + 0.05 * span) if n_deep is None else float(n_deep)
    ns0 = float(ns[np.argmax(zs)])
    gap = nd - ns
    ok = gap > 1e-3 * span
    scale = depth_span / 3.0
    if np.count_nonzero(ok) >= 2 and np.ptp(zs[ok]) > 0:
        slope = np.polyfit(zs[ok], np.log(gap[ok]), 1)[0]
        if slope > 0 and math.isfinite(1.0 / slope):
            scale = float(np.clip(1.0 / slope, 1e-3 * depth_span, 1e3 * depth_span))
    return nd, ns0, scale


# --------------------------------------------------------------------------- fits

def fit_exponential_index(z, n, sigma=None, n_deep=None):
    """Fit an exponential profile to index data.

    Model: n(z) = n_deep - (n_deep - n_surface) exp(z / scale_depth), by
    nonlinear least squares (scipy.optimize.least_squares, trust-region
    reflective, scale_depth > 0).

    Parameters
    ----------
    z : array_like
        Heights of the data [m], 1-D, <= 0.
    n : array_like
        Measured index at ``z`` [1].
    sigma : float or array_like, optional
        1-sigma error of each index [1], > 0.  Without it the data are
        weighted equally and the uncertainties are scaled by the reduced
        chi^2 (the residual variance), as for an unknown common error.
    n_deep : float, optional
        Fix the deep index at this value [1] instead of fitting it.

    Returns
    -------
    IndexFit
        ``parameters`` n_deep, n_surface [1], scale_depth [m]; ``profile()``
        gives the :class:`firnray.medium.profiles.ExponentialProfile`.

    Raises
    ------
    ValueError
        For mismatched shapes, non-finite data, heights above the surface,
        non-positive sigma, or too few points (at least one more than the
        free parameters).

    Notes
    -----
    Uncertainties and covariance come from the Jacobian at the optimum,
    cov = (J^T J)^-1 of the sigma-normalised residuals (the linearised
    Gaussian error propagation of common practice); they describe the
    statistical errors only.  A fit that does not converge warns with
    :class:`firnray.errors.FirnrayWarning`.
    """
    zs, ns, sg = _data(z, n, sigma)
    fixed = {}
    if n_deep is not None:
        from firnray.checks import finite_float
        fixed["n_deep"] = finite_float("n_deep", n_deep)
    free = tuple(p for p in EXPONENTIAL_PARAMETERS if p not in fixed)
    _need_points(zs, free)
    nd0, ns0, s0 = _exponential_start(zs, ns, fixed.get("n_deep"))
    start = {"n_deep": nd0, "n_surface": ns0, "scale_depth": s0}
    weight = 1.0 / sg if sg is not None else 1.0

    def model(values):
        return exponential_model(zs, values["n_deep"], values["n_surface"],
                                 values["scale_depth"])

    def residuals(theta):
        values = dict(zip(free, theta))
        values.update(fixed)
        return (ns - model(values)) * weight

    lower = [0.0 if p == "scale_depth" else -np.inf for p in free]
    upper = [np.inf for p in free]
    x_scale = [s0 if p == "scale_depth" else 0.01 for p in free]
    theta, jac, ok = _solve(residuals, [start[p] for p in free], lower, upper, x_scale)
    values, unc, names, cov, res, chi2, dof = _finish(
        "exponential", free, fixed, theta, jac, ok, zs, ns, sg, model)
    ordered = {p: values[p] for p in EXPONENTIAL_PARAMETERS}
    return IndexFit("exponential", ordered, unc, names, cov, res, chi2, dof, sg is not None,
                    ok, zs, ns)


def fit_piecewise_exponential_index(z, n, breaks, sigma=None, fit_breaks=False):
    """Fit a continuous piecewise exponential profile to index data.

    Model (:func:`piecewise_exponential_model`): M pieces separated by the
    M-1 heights ``breaks``; piece k has its own deep index n_deep_k and
    e-folding depth scale_depth_k and starts at the value the piece above
    reaches at the break (continuous).  Parameters: n_surface, n_deep_0 ...
    n_deep_{M-1}, scale_depth_0 ... scale_depth_{M-1}, and with
    ``fit_breaks`` also break_0 ... break_{M-2}.

    Parameters
    ----------
    z : array_like
        Heights of the data [m], 1-D, <= 0.
    n : array_like
        Measured index at ``z`` [1].
    breaks : array_like
        Heights of the piece boundaries [m], strictly decreasing, all < 0
        and above the deepest datum (fixed, or starting values with
        ``fit_breaks``).
    sigma : float or array_like, optional
        1-sigma error of each index [1], > 0.  Without it the data are
        weighted equally and the uncertainties are scaled by the reduced
        chi^2 (the residual variance).
    fit_breaks : bool, optional
        Also fit the break heights (default False: fixed).

    Returns
    -------
    IndexFit
        ``parameters`` as above; ``profile()`` gives the
        :class:`firnray.medium.profiles.PiecewiseExponentialProfile`.

    Raises
    ------
    ValueError
        For bad data (as :func:`fit_exponential_index`), breaks that are not
        strictly decreasing below the surface and above the deepest datum,
        or too few points.

    Notes
    -----
    Starting values come from one exponential fitted to all the data.  With
    ``fit_breaks`` the breaks are fitted as positive gaps (0 - break_0,
    break_0 - break_1, ...), which keeps them ordered, and their covariance is
    transformed back to break heights (a linear map).  The model's slope is
    discontinuous across a break, so a fitted break is only as well defined
    as the kink the data show there.  Uncertainties: as
    :func:`fit_exponential_index`.
    """
    zs, ns, sg = _data(z, n, sigma)
    try:
        br = np.asarray(breaks, dtype=float).reshape(-1)
    except (TypeError, ValueError):
        raise ValueError(f"breaks must be a sequence of heights [m], got {breaks!r}") from None
    if not np.all(np.isfinite(br)):
        raise ValueError(f"breaks must hold finite heights [m], got {breaks!r}")
    if br.size and (np.any(br >= 0.0) or np.any(np.diff(br) >= 0.0)):
        raise ValueError(f"breaks must be strictly decreasing heights below the surface "
                         f"(all < 0 m), got {breaks!r}")
    if br.size and zs.size and br[-1] <= np.min(zs):
        raise ValueError(f"breaks must lie above the deepest datum ({float(np.min(zs))!r} m) "
                         f"so that every piece holds data, got {breaks!r}")
    m = br.size + 1
    names = (["n_surface"] + [f"n_deep_{k}" for k in range(m)]
             + [f"scale_depth_{k}" for k in range(m)])
    break_names = [f"break_{k}" for k in range(m - 1)]
    free = tuple(names + (break_names if fit_breaks else []))
    _need_points(zs, free)
    weight = 1.0 / sg if sg is not None else 1.0

    # starting values: one exponential through all the data
    start_fit = fit_exponential_index(zs, ns, sigma=sg)
    p0 = start_fit.parameters
    theta0 = ([p0["n_surface"]] + [p0["n_deep"]] * m + [p0["scale_depth"]] * m)
    lower = [-np.inf] * (1 + m) + [0.0] * m
    upper = [np.inf] * (1 + 2 * m)
    x_scale = [0.01] * (1 + m) + [p0["scale_depth"]] * m
    if fit_breaks:
        gaps = -np.diff(np.concatenate(([0.0], br)))
        theta0 += list(gaps)
        lower += [0.0] * (m - 1)
        upper += [np.inf] * (m - 1)
        x_scale += list(np.maximum(gaps, 1e-3))

    def unpack(theta):
        theta = np.asarray(theta, dtype=float)
        values = dict(zip(names, theta[:1 + 2 * m]))
        b = -np.cumsum(theta[1 + 2 * m:]) if fit_breaks else br
        values.update(zip(break_names, b))
        return values

    def model(values):
        return piecewise_exponential_model(
            zs, values["n_surface"], [values[b] for b in break_names],
            [values[f"n_deep_{k}"] for k in range(m)],
            [values[f"scale_depth_{k}"] for k in range(m)])

    def residuals(theta):
        return (ns - model(unpack(theta))) * weight

    theta, jac, ok = _solve(residuals, theta0, lower, upper, x_scale)
    values = unpack(theta)
    fixed = {} if fit_breaks else {b: values[b] for b in break_names}
    free_values = [values[nm] for nm in free]

    def to_breaks(fnames, vals, cov):
        if not fit_breaks or m == 1:
            return fnames, vals, cov
        # break_k = -(g_0 + ... + g_k): a linear map of the gap parameters
        t = np.eye(len(fnames))
        q = 1 + 2 * m
        for k in range(m - 1):
            t[q + k, q:q + k + 1] = -1.0
        return fnames, vals, t @ cov @ t.T

    values_out, unc, fnames, cov, res, chi2, dof = _finish(
        "piecewise exponential", free, fixed, free_values, jac, ok, zs, ns, sg,
        model, transform=to_breaks)
    ordered = {nm: values[nm] for nm in names + break_names}
    return IndexFit("piecewise exponential", ordered, unc, fnames, cov, res, chi2, dof,
                    sg is not None, ok, zs, ns)
