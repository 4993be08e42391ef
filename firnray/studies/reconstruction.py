"""Reconstruction validation: how well fitted source vertices match the true ones.

A vertex reconstruction (whatever fit produced it) gives, per event, a fitted
position and optionally a per-coordinate uncertainty.  Compared with the true
(simulated) positions this module gives, per coordinate x, y, z:

* the residuals ``fitted - true`` [m], their mean (bias), median, root mean
  square and two robust spreads: half the width of the central 68.27 %
  interval (called the *resolution*) and ``1.4826 * MAD``;
* with uncertainties: the pulls ``residual / sigma``, their mean and robust
  width, and the coverage, the fraction of events whose true position lies
  inside the quoted 1-sigma interval (``|pull| <= 1``), per coordinate and in
  three dimensions (``sum of pull**2 <= 3.5267``, the 68.27 % quantile of a
  chi-square with three degrees of freedom; valid for independent
  coordinates, that is a diagonal covariance).

For Gaussian residuals the resolution equals the standard deviation and a
correct uncertainty gives a pull width of 1 and coverages of 0.6827.

Vertex files are CSV (``read_vertex_csv`` / ``write_vertex_csv``)::

    # comment lines start with '#'
    event,x_true,y_true,z_true,x_fit,y_fit,z_fit,sigma_x,sigma_y,sigma_z
    ev-001,31.2,14.8,-240.0,32.9,13.1,-236.4,2.1,2.0,3.5
"""

import csv
import math
import os
import warnings

import numpy as np

from firnray.errors import FirnrayWarning

#: Probability content of a Gaussian +-1 sigma interval, erf(1/sqrt(2)) = 0.682689...
#: (the "68.27 %" of common practice).
GAUSS_1SIGMA = math.erf(1.0 / math.sqrt(2.0))

#: 68.27 % quantile of the chi-square distribution with 3 degrees of freedom
#: (3.5267...): the 3-D analogue of |pull| <= 1 for independent Gaussian coordinates.
#: Written out (= 2 gammaincinv(1.5, GAUSS_1SIGMA), checked against scipy.stats in the
#: tests) so that importing firnray does not load scipy.special.
CHI2_3DOF_1SIGMA = 3.5267403802617303

#: Factor turning the median absolute deviation into a Gaussian sigma (1 / 0.6745).
MAD_TO_SIGMA = 1.4826

COORDINATES = ("x", "y", "z")

REQUIRED_COLUMNS = ("event", "x_true", "y_true", "z_true", "x_fit", "y_fit", "z_fit")
SIGMA_COLUMNS = ("sigma_x", "sigma_y", "sigma_z")
_TRUE_COLUMNS = REQUIRED_COLUMNS[1:4]
_FIT_COLUMNS = REQUIRED_COLUMNS[4:7]


# ---------------------------------------------------------------------------
# robust statistics
# ---------------------------------------------------------------------------

def central_interval_half_width(values, coverage=GAUSS_1SIGMA, axis=None):
    """Half the width of the central interval holding a fraction ``coverage`` of the values.

    The interval runs from the ``(1 - coverage) / 2`` to the
    ``(1 + coverage) / 2`` quantile (linear interpolation between order
    statistics, numpy's default).  For Gaussian values and the default
    coverage it estimates the standard deviation, without being pulled by a
    few outliers.

    Parameters
    ----------
    values : array_like
        Values [any unit]; must be finite.
    coverage : float
        Fraction of the values inside the interval [1], 0 < coverage < 1;
        default 0.682689 (Gaussian 1 sigma).
    axis : int, optional
        Axis along which to compute; None flattens.

    Returns
    -------
    float or ndarray
        Half width [unit of ``values``]: a float when ``axis`` is None, else
        an array with ``axis`` removed.
    """
    coverage = _fraction("coverage", coverage)
    arr = _finite_array("values", values)
    if arr.size == 0:
        raise ValueError("values must hold at least one value, got an empty array")
    lo, hi = np.quantile(arr, [0.5 - coverage / 2.0, 0.5 + coverage / 2.0], axis=axis)
    half = 0.5 * (hi - lo)
    return float(half) if axis is None else np.asarray(half)


def mad_sigma(values, axis=None):
    """Gaussian-equivalent spread from the median absolute deviation: 1.4826 * MAD.

    Parameters
    ----------
    values : array_like
        Values [any unit]; must be finite.
    axis : int, optional
        Axis along which to compute; None flattens.

    Returns
    -------
    float or ndarray
        ``1.4826 * median(|values - median(values)|)`` [unit of ``values``];
        a float when ``axis`` is None.
    """
    arr = _finite_array("values", values)
    if arr.size == 0:
        raise ValueError("values must hold at least one value, got an empty array")
    med = np.median(arr, axis=axis, keepdims=True)
    out = MAD_TO_SIGMA * np.median(np.abs(arr - med), axis=axis)
    return float(out) if axis is None else np.asarray(out)


# ---------------------------------------------------------------------------
# samples and files
# ---------------------------------------------------------------------------

class VertexSample:
    """True and fitted vertex positions of N events, with optional uncertainties.

    Parameters
    ----------
    events : sequence of str or None
        Event names, one per row; None numbers the events ``"0"``, ``"1"``, ...
    true : array_like, shape (N, 3)
        True positions (x, y, z) [m]; finite.
    fitted : array_like, shape (N, 3)
        Fitted positions (x, y, z) [m]; finite.
    sigma : array_like, shape (N, 3), optional
        1-sigma uncertainties of the fitted coordinates [m]; finite and > 0.

    Attributes
    ----------
    events : list of str
        Event names.
    true, fitted : ndarray, shape (N, 3)
        Positions [m].
    sigma : ndarray, shape (N, 3), or None
        Uncertainties [m].
    """

    def __init__(self, events, true, fitted, sigma=None):
        self.true = _vertex_array("true", true)
        n = self.true.shape[0]
        self.fitted = _vertex_array("fitted", fitted, n)
        self.sigma = None if sigma is None else _sigma_array("sigma", sigma, n)
        if events is None:
            self.events = [str(i) for i in range(n)]
        else:
            if isinstance(events, str):
                raise ValueError(f"events must be a sequence of {n} event names, "
                                 f"got the single string {events!r}")
            try:
                self.events = [str(e) for e in events]
            except TypeError:
                raise ValueError(f"events must be a sequence of {n} event names, "
                                 f"got {events!r}") from None
            if len(self.events) != n:
                raise ValueError(f"events must hold one name per row of true ({n}), "
                                 f"got {len(self.events)} names")

    def __len__(self):
        return self.true.shape[0]

    def __repr__(self):
        with_sigma = "with" if self.sigma is not None else "without"
        return f"VertexSample({len(self)} events, {with_sigma} sigma)"


def read_vertex_csv(path):
    """Read a vertex file: true and fitted positions per event, optional uncertainties.

    The first line that is neither blank nor a comment (``#`` as its first
    non-blank character) is the header.  Columns, in any order:
    ``event, x_true, y_true, z_true, x_fit, y_fit, z_fit`` (required) and
    ``sigma_x, sigma_y, sigma_z`` (optional, all three or none), all
    positions and uncertainties in metres.

    Parameters
    ----------
    path : str or os.PathLike
        The CSV file.

    Returns
    -------
    VertexSample

    Raises
    ------
    ValueError
        Naming the file (and the line and column where one applies) for:
        no header, an unknown, repeated or missing column, a row with the
        wrong number of fields, an empty event name, a value that is not a
        finite number, an uncertainty <= 0, or a file without events.
    """
    name = os.fspath(path)
    header = None
    rows = []  # (line number, fields)
    with open(name, encoding="utf-8-sig", newline="") as fh:
        for lineno, raw in enumerate(fh, start=1):
            text = raw.strip()
            if not text or text.startswith("#"):
                continue
            fields = [f.strip() for f in next(csv.reader([text]))]
            if header is None:
                header = fields
                _check_header(name, lineno, header)
            else:
                rows.append((lineno, fields))
    if header is None:
        raise ValueError(f"{name}: no header line found; expected the columns "
                         f"{', '.join(REQUIRED_COLUMNS)} (optional {', '.join(SIGMA_COLUMNS)})")
    if not rows:
        raise ValueError(f"{name}: the file holds a header but no events")

    col = {c: i for i, c in enumerate(header)}
    has_sigma = SIGMA_COLUMNS[0] in col
    numeric = _TRUE_COLUMNS + _FIT_COLUMNS + (SIGMA_COLUMNS if has_sigma else ())
    events, values = [], np.empty((len(rows), len(numeric)))
    seen = {}
    for r, (lineno, fields) in enumerate(rows):
        if len(fields) != len(header):
            raise ValueError(f"{name}, line {lineno}: expected {len(header)} fields "
                             f"(as in the header), got {len(fields)}")
        event = fields[col["event"]]
        if not event:
            raise ValueError(f"{name}, line {lineno}, column 'event': empty event name")
        if event in seen:
            warnings.warn(f"{name}, line {lineno}: event {event!r} repeats "
                          f"(first seen on line {seen[event]})", FirnrayWarning, stacklevel=2)
        else:
            seen[event] = lineno
        events.append(event)
        for j, c in enumerate(numeric):
            text = fields[col[c]]
            try:
                v = float(text)
            except ValueError:
                v = math.nan
            if not math.isfinite(v):
                raise ValueError(f"{name}, line {lineno}, column {c!r}: expected a finite "
                                 f"number [m], got {text!r}")
            if c in SIGMA_COLUMNS and v <= 0.0:
                raise ValueError(f"{name}, line {lineno}, column {c!r}: expected an "
                                 f"uncertainty > 0 [m], got {text!r}")
            values[r, j] = v
    sigma = values[:, 6:9] if has_sigma else None
    return VertexSample(events, values[:, 0:3], values[:, 3:6], sigma)


def write_vertex_csv(sample, path, comment=None):
    """Write a ``VertexSample`` as a vertex file that ``read_vertex_csv`` reads back exactly.

    Parameters
    ----------
    sample : VertexSample
        The events to write.
    path : str or os.PathLike
        Output file (overwritten).
    comment : str, optional
        Text written first as ``#`` comment lines (one per line of text).

    Returns
    -------
    str
        The path written.
    """
    if not isinstance(sample, VertexSample):
        raise ValueError(f"sample must be a VertexSample, got {type(sample).__name__}")
    name = os.fspath(path)
    columns = list(REQUIRED_COLUMNS) + (list(SIGMA_COLUMNS) if sample.sigma is not None else [])
    with open(name, "w", encoding="utf-8", newline="") as fh:
        if comment:
            for line in str(comment).splitlines():
                fh.write(f"# {line}\n")
        writer = csv.writer(fh, lineterminator="\n")
        writer.writerow(columns)
        for i, event in enumerate(sample.events):
            numbers = list(sample.true[i]) + list(sample.fitted[i])
            if sample.sigma is not None:
                numbers += list(sample.sigma[i])
            writer.writerow([event] + [repr(float(v)) for v in numbers])
    return name


def _check_header(name, lineno, header):
    allowed = set(REQUIRED_COLUMNS) | set(SIGMA_COLUMNS)
    seen = set()
    for c in header:
        if c not in allowed:
            raise ValueError(f"{name}, line {lineno}: unknown column {c!r}; expected the "
                             f"columns {', '.join(REQUIRED_COLUMNS)} (optional "
                             f"{', '.join(SIGMA_COLUMNS)})")
        if c in seen:
            raise ValueError(f"{name}, line {lineno}: column {c!r} appears twice")
        seen.add(c)
    missing = [c for c in REQUIRED_COLUMNS if c not in seen]
    if missing:
        raise ValueError(f"{name}, line {lineno}: missing column(s) {', '.join(missing)}")
    given = [c for c in SIGMA_COLUMNS if c in seen]
    if given and len(given) != 3:
        lacking = [c for c in SIGMA_COLUMNS if c not in seen]
        raise ValueError(f"{name}, line {lineno}: uncertainty columns come all three or "
                         f"none; got {', '.join(given)} without {', '.join(lacking)}")


# ---------------------------------------------------------------------------
# validation
# ---------------------------------------------------------------------------

class ReconstructionReport:
    """Residuals, bias, resolution, pulls and coverage of a vertex reconstruction.

    Made by ``validate_reconstruction``.  Per-coordinate quantities are arrays
    of shape (3,) in the order x, y, z (``COORDINATES``).

    Attributes
    ----------
    n_events : int
        Number of events N.
    events : list of str or None
        Event names (from a ``VertexSample``), else None.
    residual : ndarray, shape (N, 3)
        ``fitted - true`` [m].
    bias : ndarray, shape (3,)
        Mean residual [m].
    bias_error : ndarray, shape (3,)
        Statistical uncertainty of the bias, sample standard deviation / sqrt(N) [m].
    median : ndarray, shape (3,)
        Median residual [m].
    resolution : ndarray, shape (3,)
        Half the width of the central 68.27 % interval of the residuals [m]
        (robust; equals sigma for Gaussian residuals).
    rms : ndarray, shape (3,)
        Root mean square of the residuals about zero [m] (includes the bias:
        ``rms**2 = std**2 + bias**2``).
    std : ndarray, shape (3,)
        Sample standard deviation of the residuals (about their mean) [m].
    mad_sigma : ndarray, shape (3,)
        ``1.4826 * median(|residual - median|)`` [m].
    horizontal_distance_error : ndarray, shape (N,)
        ``sqrt(dx**2 + dy**2)`` of the residuals [m].
    distance_error : ndarray, shape (N,)
        ``sqrt(dx**2 + dy**2 + dz**2)`` of the residuals [m].
    sigma : ndarray, shape (N, 3), or None
        Uncertainties used for the pulls [m].
    pull : ndarray, shape (N, 3), or None
        ``residual / sigma`` [1].
    pull_mean : ndarray, shape (3,), or None
        Mean pull [1].
    pull_width : ndarray, shape (3,), or None
        Half the width of the central 68.27 % interval of the pulls [1].
    coverage : ndarray, shape (3,), or None
        Fraction of events with ``|pull| <= 1`` [1] (0.6827 expected).
    coverage_3d : float or None
        Fraction of events with ``sum of pull**2 <= 3.5267`` [1] (0.6827
        expected when the coordinates' errors are independent Gaussians).
    coverage_expected : float
        0.682689 [1], the Gaussian 1-sigma content.
    coverage_error : float
        Binomial standard error of a coverage for N events,
        ``sqrt(p (1 - p) / N)`` with p = 0.6827 [1].
    """

    coordinates = COORDINATES

    def __init__(self, true, fitted, sigma, events):
        r = fitted - true
        n = r.shape[0]
        self.n_events = n
        self.events = events
        self.residual = r
        self.bias = r.mean(axis=0)
        self.std = r.std(axis=0, ddof=1)
        self.bias_error = self.std / math.sqrt(n)
        self.median = np.median(r, axis=0)
        self.resolution = central_interval_half_width(r, axis=0)
        self.rms = np.sqrt(np.mean(r ** 2, axis=0))
        self.mad_sigma = mad_sigma(r, axis=0)
        self.horizontal_distance_error = np.hypot(r[:, 0], r[:, 1])
        self.distance_error = np.sqrt(np.sum(r ** 2, axis=1))
        self.coverage_expected = GAUSS_1SIGMA
        self.coverage_error = math.sqrt(GAUSS_1SIGMA * (1.0 - GAUSS_1SIGMA) / n)
        self.sigma = sigma
        if sigma is None:
            self.pull = self.pull_mean = self.pull_width = self.coverage = None
            self.coverage_3d = None
        else:
            p = r / sigma
            self.pull = p
            self.pull_mean = p.mean(axis=0)
            self.pull_width = central_interval_half_width(p, axis=0)
            self.coverage = np.mean(np.abs(p) <= 1.0, axis=0)
            self.coverage_3d = float(np.mean(np.sum(p ** 2, axis=1) <= CHI2_3DOF_1SIGMA))

    @property
    def has_pulls(self):
        """True when uncertainties were given (pulls and coverage exist)."""
        return self.pull is not None

    def summary(self):
        """A readable table of the results.

        Returns
        -------
        list of str
            Lines of text (no newline characters); lengths in metres, pulls
            and coverages dimensionless.
        """
        w = 11
        head = f"{'':<30}" + "".join(f"{c:>{w}}" for c in COORDINATES)

        def row(label, values, fmt="{:.3f}"):
            return f"{label:<30}" + "".join(f"{fmt.format(float(v)):>{w}}" for v in values)

        lines = [f"vertex reconstruction: {self.n_events} events, residual = fitted - true",
                 head,
                 row("bias (mean) [m]", self.bias),
                 row("  stat. error of bias [m]", self.bias_error),
                 row("median [m]", self.median),
                 row("resolution (68.27 % / 2) [m]", self.resolution),
                 row("rms about zero [m]", self.rms),
                 row("standard deviation [m]", self.std),
                 row("1.4826 MAD [m]", self.mad_sigma)]
        if self.has_pulls:
            lines += [row("pull mean [1]", self.pull_mean),
                      row("pull width (68.27 % / 2) [1]", self.pull_width),
                      row("coverage |pull| <= 1 [1]", self.coverage),
                      f"expected coverage {self.coverage_expected:.4f} "
                      f"+- {self.coverage_error:.4f} (binomial standard error)",
                      f"3-D coverage (sum pull^2 <= {CHI2_3DOF_1SIGMA:.4f}): "
                      f"{self.coverage_3d:.4f}, expected {self.coverage_expected:.4f} "
                      f"+- {self.coverage_error:.4f} for independent coordinates"]
        else:
            lines.append("no uncertainties given: no pulls or coverage")
        h = self.horizontal_distance_error
        lines.append(f"horizontal distance error [m]: median {np.median(h):.3f}, "
                     f"68.27 % of events below {np.quantile(h, GAUSS_1SIGMA):.3f}")
        d = self.distance_error
        lines.append(f"3-D distance error [m]: median {np.median(d):.3f}, "
                     f"68.27 % of events below {np.quantile(d, GAUSS_1SIGMA):.3f}")
        return lines

    def as_dict(self, per_event=False):
        """The results as plain Python types, ready for ``json.dump``.

        Parameters
        ----------
        per_event : bool
            Also include the per-event arrays (events, residual, pull,
            horizontal and 3-D distance errors).

        Returns
        -------
        dict
            Per-coordinate values as ``{"x": ..., "y": ..., "z": ...}``
            (lengths [m], pulls and coverages [1]); pull quantities are None
            when no uncertainties were given.
        """
        def per_coord(values):
            return None if values is None else {c: float(v) for c, v in zip(COORDINATES, values)}

        h, d = self.horizontal_distance_error, self.distance_error
        out = {
            "n_events": int(self.n_events),
            "units": {"length": "m", "pull": "1", "coverage": "1"},
            "bias": per_coord(self.bias),
            "bias_error": per_coord(self.bias_error),
            "median": per_coord(self.median),
            "resolution": per_coord(self.resolution),
            "rms": per_coord(self.rms),
            "std": per_coord(self.std),
            "mad_sigma": per_coord(self.mad_sigma),
            "horizontal_distance_error": {
                "median": float(np.median(h)),
                "quantile_68": float(np.quantile(h, GAUSS_1SIGMA))},
            "distance_error": {
                "median": float(np.median(d)),
                "quantile_68": float(np.quantile(d, GAUSS_1SIGMA))},
            "pull_mean": per_coord(self.pull_mean),
            "pull_width": per_coord(self.pull_width),
            "coverage": per_coord(self.coverage),
            "coverage_3d": self.coverage_3d,
            "coverage_expected": float(self.coverage_expected),
            "coverage_error": float(self.coverage_error),
            "chi2_3dof_68": CHI2_3DOF_1SIGMA,
            "coverage_3d_assumes": "independent coordinates (diagonal covariance)",
        }
        if per_event:
            out["events"] = None if self.events is None else list(self.events)
            out["residual"] = self.residual.tolist()
            out["pull"] = None if self.pull is None else self.pull.tolist()
            out["horizontal_distance_error_per_event"] = h.tolist()
            out["distance_error_per_event"] = d.tolist()
        return out

    def __repr__(self):
        res = ", ".join(f"{c}={v:.3g}" for c, v in zip(COORDINATES, self.resolution))
        return f"ReconstructionReport({self.n_events} events, resolution [m]: {res})"


def validate_reconstruction(true, fitted=None, sigma=None):
    """Compare fitted vertices with the true ones: bias, resolution, pulls, coverage.

    Call either ``validate_reconstruction(true, fitted, sigma=None)`` with
    arrays or ``validate_reconstruction(sample)`` with a ``VertexSample``.

    Parameters
    ----------
    true : array_like, shape (N, 3), or VertexSample
        True positions (x, y, z) [m], finite; or a sample holding everything.
    fitted : array_like, shape (N, 3)
        Fitted positions [m], finite (omit when ``true`` is a VertexSample).
    sigma : float or array_like, shape (3,) or (N, 3), optional
        1-sigma uncertainties of the fitted coordinates [m], finite and > 0;
        a float or a (3,) row applies to every event.  Omit when ``true``
        is a VertexSample (its own ``sigma`` is used).

    Returns
    -------
    ReconstructionReport

    Notes
    -----
    At least two events are needed.  The 3-D coverage treats the three
    coordinates' errors as independent (the quoted sigmas are the diagonal
    of the covariance, correlations ignored).
    """
    if isinstance(true, VertexSample):
        if fitted is not None or sigma is not None:
            raise ValueError("fitted and sigma must be omitted when a VertexSample is given "
                             f"(got fitted={type(fitted).__name__}, "
                             f"sigma={type(sigma).__name__})")
        t, f, s, events = true.true, true.fitted, true.sigma, list(true.events)
    else:
        if fitted is None:
            raise ValueError("fitted must be given (an (N, 3) array of positions [m]) "
                             "unless true is a VertexSample")
        t = _vertex_array("true", true)
        f = _vertex_array("fitted", fitted, t.shape[0])
        s = None if sigma is None else _sigma_array("sigma", sigma, t.shape[0], broadcast=True)
        events = None
    if t.shape[0] < 2:
        raise ValueError(f"true must hold at least 2 events to measure a spread, "
                         f"got {t.shape[0]}")
    return ReconstructionReport(t, f, s, events)


# ---------------------------------------------------------------------------
# argument checks
# ---------------------------------------------------------------------------

def _fraction(name, value):
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a number between 0 and 1 (exclusive), "
                         f"got {value!r}") from None
    if not 0.0 < v < 1.0:
        raise ValueError(f"{name} must be a number between 0 and 1 (exclusive), got {value!r}")
    return v


def _finite_array(name, value):
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        text = repr(value)
        text = text if len(text) <= 80 else text[:77] + "..."
        raise ValueError(f"{name} must be an array of finite numbers, got {text}") from None
    if not np.all(np.isfinite(arr)):
        raise ValueError(f"{name} must hold finite numbers only, got "
                         f"{int(np.sum(~np.isfinite(arr)))} non-finite value(s)")
    return arr


def _vertex_array(name, value, n=None):
    arr = _finite_array(name, value)
    if arr.ndim != 2 or arr.shape[1] != 3:
        raise ValueError(f"{name} must have shape (N, 3) (x, y, z per event) [m], "
                         f"got shape {arr.shape}")
    if n is not None and arr.shape[0] != n:
        raise ValueError(f"{name} must have shape ({n}, 3) like true, got shape {arr.shape}")
    return arr


def _sigma_array(name, value, n, broadcast=False):
    arr = _finite_array(name, value)
    if broadcast and arr.shape in ((), (3,)):
        arr = np.broadcast_to(arr, (n, 3)).copy()
    if arr.shape != (n, 3):
        allowed = "a float, shape (3,) or " if broadcast else ""
        raise ValueError(f"{name} must have {allowed}shape ({n}, 3) [m], got shape {arr.shape}")
    if np.any(arr <= 0.0):
        raise ValueError(f"{name} must be > 0 [m] everywhere, got minimum {float(arr.min())!r}")
    return arr
