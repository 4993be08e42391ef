"""Vertex checks: predicted arrivals at a station and least-squares vertex fits.

A vertex (x, y, z) emitting at time t0 reaches antenna a along ray k at
t0 + delay_a + T_k(vertex -> antenna a).  ``predict_arrivals`` gives every
such pulse; ``fit_vertex`` finds (x, y, z, t0) from measured pulses whose
ray (first or second) need not be known: at each antenna the measured pulses
are matched to the predicted rays (two pulses: in time order; one pulse: the
nearer predicted ray).  A coarse grid of candidate vertices, with t0 solved
exactly for each, seeds several local fits (scipy ``least_squares``), so the
D/R ambiguity and mirror solutions do not trap the fit; fits whose best and
second-best distinct minima are close in chi^2 are flagged.
"""

import math

import numpy as np

from firnray.checks import finite_float
from firnray.constants import SPEED_OF_LIGHT
from firnray.rays import exponential_solver as es
from firnray.rays.solve import check_profile, find_rays_many, run_solver
from firnray.rays.results import KIND_NAMES

#: Residual [sigma] given to a measured pulse for which the vertex has no ray.
MISSING_RAY_PULL = 30.0


def _vertices(name, value):
    arr = np.asarray(value, dtype=float)
    if arr.ndim == 1:
        arr = arr[None, :]
    if arr.ndim != 2 or arr.shape[1] != 3:
        raise ValueError(f"{name} must be a point (x, y, z) or an array of shape (V, 3) [m], "
                         f"got shape {arr.shape}")
    return arr


class ArrivalPrediction:
    """Every predicted pulse at every antenna for V vertices.

    Attributes
    ----------
    antenna_ids : list of str
    arrival_time : ndarray, shape (V, A, K)
        emission time + antenna delay + travel time [ns] of every ray, in time
        order (K = 2, or more where a pair has more rays: a non-monotone
        profile with a duct, a table with scatter); NaN where no ray.
    travel_time, arrival_zenith, launch_zenith : ndarray, shape (V, A, K)
        [ns], [deg], [deg].
    arrival_azimuth : ndarray, shape (V, A)
        Azimuth of the horizontal propagation direction at the antenna,
        counter-clockwise from +x [deg] (NaN straight above or below).
    kind : ndarray of int8, shape (V, A, K)
        Kind codes (``kind_names``), -1 where no ray.
    count : ndarray, shape (V, A)
    dr_delay : ndarray, shape (V, A)
        Second minus first arrival [ns] (NaN with fewer than two rays).
    """

    kind_names = KIND_NAMES

    def __init__(self, station, vertices, emission_time, rayset):
        v, a = vertices.shape[0], len(station)
        self.antenna_ids = list(station.ids)
        self.vertices = vertices

        k = max(2, rayset.travel_time.shape[1])

        def pad(arr, fill):
            out = np.full((v * a, k), fill, dtype=arr.dtype)
            out[:, :arr.shape[1]] = arr
            return out.reshape(v, a, k)

        self.travel_time = pad(rayset.travel_time, np.nan)
        self.arrival_zenith = pad(rayset.arrival_zenith, np.nan)
        self.launch_zenith = pad(rayset.launch_zenith, np.nan)
        self.kind = pad(rayset.kind, -1)
        self.count = rayset.count.reshape(v, a)
        self.arrival_time = (self.travel_time + emission_time
                             + station.delays[None, :, None])
        d = station.positions[None, :, :2] - vertices[:, None, :2]
        with np.errstate(invalid="ignore"):
            az = np.degrees(np.arctan2(d[..., 1], d[..., 0]))
        self.arrival_azimuth = np.where(np.hypot(d[..., 0], d[..., 1]) > 0, az, np.nan)
        self.dr_delay = self.travel_time[:, :, 1] - self.travel_time[:, :, 0]

    def rows(self, i=0):
        """Readable rows (antenna, ray, kind, arrival time [ns], zenith [deg]) of vertex i."""
        out = []
        for a, ident in enumerate(self.antenna_ids):
            for k in range(int(self.count[i, a])):
                out.append((ident, k, KIND_NAMES[int(self.kind[i, a, k])],
                            float(self.arrival_time[i, a, k]),
                            float(self.arrival_zenith[i, a, k])))
        return out


def predict_arrivals(profile, station, vertices, emission_time=0.0):
    """Every pulse at every antenna of ``station`` from each vertex.

    Parameters
    ----------
    profile : IndexProfile
    station : Station
    vertices : array_like, shape (3,) or (V, 3)
        Source positions (x, y, z) [m].
    emission_time : float, optional
        Emission time [ns] added to every arrival.

    Returns
    -------
    ArrivalPrediction
    """
    check_profile(profile)
    verts = _vertices("vertices", vertices)
    t0 = finite_float("emission_time", emission_time)
    a = len(station)
    src = np.repeat(verts, a, axis=0)
    rcv = np.tile(station.positions, (verts.shape[0], 1))
    return ArrivalPrediction(station, verts, t0, find_rays_many(profile, src, rcv))


class _Model:
    """Travel times from one vertex to the antennas that saw pulses (fast path)."""

    def __init__(self, profile, positions):
        self.profile = profile
        self.index = profile.index
        self.positions = positions

    def times(self, vertices, with_slowness=False):
        """Travel times [ns], shape (V, A, 2), NaN where no ray; with ``with_slowness``
        also the gradient of each travel time with respect to the vertex
        position [ns/m], shape (V, A, 2, 3)."""
        v = vertices.shape[0]
        a = len(self.positions)
        dx = self.positions[None, :, 0] - vertices[:, None, 0]
        dy = self.positions[None, :, 1] - vertices[:, None, 1]
        x = np.hypot(dx, dy).reshape(-1)
        zs = np.repeat(vertices[:, 2], a)
        zr = np.tile(self.positions[:, 2], v)
        same = (x == 0.0) & (zs == zr)
        x[same] = np.nan
        table, kinds, conv, count = run_solver(self.profile, x, zs, zr,
                                               n_threads=1 if v * a < 256 else None)
        table = table[:, :2]      # the two earliest pulses
        times = table[:, :, es.COL_TIME].reshape(v, a, 2).copy()
        if not with_slowness:
            return times
        # Eikonal: the gradient of T with respect to the source point is minus the
        # slowness vector n * (launch direction) / c there; its horizontal part
        # is b / c along the source -> antenna direction.
        b = table[:, :, es.COL_INVARIANT].reshape(v, a, 2)
        theta = np.radians(table[:, :, es.COL_LAUNCH].reshape(v, a, 2))
        n_src = b / np.where(np.sin(theta) == 0.0, 1.0, np.sin(theta))
        n_src = np.where(np.sin(theta) == 0.0,
                         self.index(vertices[:, 2])[:, None, None], n_src)
        dist = x.reshape(v, a)
        with np.errstate(invalid="ignore", divide="ignore"):
            ex = np.where(dist > 0, dx / dist, 0.0)
            ey = np.where(dist > 0, dy / dist, 0.0)
        grad = np.empty((v, a, 2, 3))
        grad[..., 0] = -(b * ex[:, :, None]) / SPEED_OF_LIGHT
        grad[..., 1] = -(b * ey[:, :, None]) / SPEED_OF_LIGHT
        grad[..., 2] = -(n_src * np.cos(theta)) / SPEED_OF_LIGHT
        return times, grad


class _Data:
    """Measured pulses grouped by antenna, as flat arrays (one entry per pulse)."""

    def __init__(self, station, arrivals):
        rows = list(arrivals)
        if not rows:
            raise ValueError("arrivals must hold at least one (antenna_id, time [ns], "
                             "sigma [ns]) row")
        by_antenna = {}
        for i, row in enumerate(rows):
            try:
                ident, t, s = row
            except (TypeError, ValueError):
                raise ValueError(f"arrivals[{i}] must be (antenna_id, time [ns], sigma [ns]), "
                                 f"got {row!r}") from None
            a = station.index(ident)
            t = finite_float(f"arrivals[{i}] time", t)
            s = finite_float(f"arrivals[{i}] sigma", s)
            if s <= 0:
                raise ValueError(f"arrivals[{i}] sigma must be > 0 ns, got {s!r}")
            by_antenna.setdefault(a, []).append((t, s))
        self.antennas = sorted(by_antenna)
        slot, pulse_k, n_at, times, sigmas, ids = [], [], [], [], [], []
        for i, a in enumerate(self.antennas):
            p = sorted(by_antenna[a])
            if len(p) > 2:
                raise ValueError(f"antenna {station.ids[a]!r} has {len(p)} pulses; at most two "
                                 f"(direct and refracted/reflected) can reach one antenna")
            for k, (t, s) in enumerate(p):
                slot.append(i)
                pulse_k.append(k)
                n_at.append(len(p))
                times.append(t)
                sigmas.append(s)
                ids.append(station.ids[a])
        self.slot = np.array(slot)          # index into the used antennas
        self.pulse_k = np.array(pulse_k)    # 0 or 1: order of the pulse at its antenna
        self.two = np.array(n_at) == 2      # its antenna saw two pulses
        self.times = np.array(times)
        self.sigmas = np.array(sigmas)
        self.ids = ids
        self.n = len(times)
        self.delays = station.delays[self.antennas]
        self.positions = station.positions[self.antennas]


def _match(data, travel, t0):
    """Normalised residuals (V, N) and matched ray index (V, N) for V vertices.

    travel: (V, A_used, 2) travel times [ns]; t0: (V,) emission times [ns].
    An antenna with two pulses and two rays matches them in time order; a
    single pulse takes the nearer ray; a pulse without a ray gets the residual
    ``MISSING_RAY_PULL``.
    """
    pred = travel[:, data.slot, :] + data.delays[data.slot][None, :, None] + t0[:, None, None]
    both = np.all(np.isfinite(pred), axis=2)                       # (V, N)
    t = data.times[None, :]
    diff = np.where(np.isfinite(pred), t[:, :, None] - pred, np.inf)
    nearest = np.argmin(np.abs(diff), axis=2)                      # (V, N)
    in_order = data.two[None, :] & both
    ray = np.where(in_order, data.pulse_k[None, :], nearest)
    lone_second = data.two[None, :] & ~both & (data.pulse_k[None, :] == 1)
    d = np.take_along_axis(diff, ray[:, :, None], axis=2)[:, :, 0]
    missing = ~np.isfinite(d) | lone_second
    res = np.where(missing, MISSING_RAY_PULL, d / data.sigmas[None, :])
    return res, np.where(missing, -1, ray)


def _best_t0(data, travel):
    """Emission times [ns], shape (V,), minimising chi^2 for fixed travel times.

    Start from the earliest pulse at each antenna matched to the first ray,
    then refine once with the matched residuals (weighted means).
    """
    w = 1.0 / data.sigmas ** 2
    first = travel[:, data.slot, 0] + data.delays[data.slot][None, :]
    use = (data.pulse_k == 0)[None, :] & np.isfinite(first)
    terms = np.where(use, data.times[None, :] - first, 0.0)
    wsum = np.sum(np.where(use, w[None, :], 0.0), axis=1)
    t0 = np.where(wsum > 0, np.sum(terms * w[None, :], axis=1) / np.where(wsum > 0, wsum, 1),
                  0.0)
    res, ray = _match(data, travel, t0)
    good = ray >= 0
    wg = np.where(good, w[None, :], 0.0)
    shift = np.sum(wg * res * data.sigmas[None, :], axis=1) / np.maximum(np.sum(wg, axis=1),
                                                                         1e-300)
    return t0 + shift


class VertexFit:
    """Result of :func:`fit_vertex`.

    Attributes
    ----------
    vertex : ndarray, shape (3,)
        Fitted (x, y, z) [m].
    emission_time : float
        Fitted emission time [ns].
    covariance : ndarray, shape (4, 4)
        Covariance of (x, y, z [m], t0 [ns]) from the Jacobian, (J^T J)^-1.
    sigma : ndarray, shape (4,)
        Square roots of its diagonal.
    chi2 : float
    ndof : int
        Number of pulses minus 4.
    residuals : ndarray, shape (N,)
        (measured - predicted) / sigma per pulse, in the order of the antennas
        then of time (``antenna_ids`` names the antenna of each).
    ray_index : ndarray of int, shape (N,)
        Which predicted ray (0 first, 1 second, -1 none) each pulse was matched to.
    multiple_minima : bool
        True if a distinct local minimum lies within ``delta_chi2`` of the best.
    alternatives : list of (vertex, emission_time, chi2)
        The other local minima found, best first.
    success : bool
        The local optimiser converged and every pulse has a ray.
    """

    def __init__(self, **kw):
        self.__dict__.update(kw)

    def __repr__(self):
        x, y, z = self.vertex
        return (f"VertexFit(vertex=({x:.2f}, {y:.2f}, {z:.2f}) m, emission_time="
                f"{self.emission_time:.3f} ns, chi2={self.chi2:.2f}, ndof={self.ndof}, "
                f"multiple_minima={self.multiple_minima})")


def _default_box(station, profile):
    c = station.centre
    low = max(profile.z_min, -2500.0)
    return ((c[0] - 2000.0, c[0] + 2000.0), (c[1] - 2000.0, c[1] + 2000.0), (low, -1.0))


def fit_vertex(profile, station, arrivals, search_box=None, grid=(9, 9, 8), starts=3,
               delta_chi2=4.0, numeric_jacobian=False):
    """Fit vertex position and emission time to measured pulse arrival times.

    Parameters
    ----------
    profile : IndexProfile
    station : Station
    arrivals : sequence of (antenna_id, time [ns], sigma [ns])
        Measured pulses; an antenna may appear twice (one row per pulse).
    search_box : ((x0, x1), (y0, y1), (z0, z1)), optional
        Region of the seed grid [m] (default: 2 km around the station centre,
        from 2.5 km deep to 1 m below the surface).
    grid : (int, int, int), optional
        Seed-grid points along x, y, z.
    starts : int, optional
        Number of best, mutually distant seeds refined by local fits.
    delta_chi2 : float, optional
        A second distinct minimum within this chi^2 of the best sets
        ``multiple_minima``.
    numeric_jacobian : bool, optional
        Use finite differences instead of the closed-form Jacobian (the
        eikonal gradient of each travel time, minus the slowness vector at
        the source); for benchmarks and checks.

    Returns
    -------
    VertexFit

    Raises
    ------
    ValueError
        For an antenna id the station lacks, a NaN time, a sigma <= 0, more
        than two pulses at one antenna, fewer than 4 pulses, or a bad box.
    """
    from scipy.optimize import least_squares  # imported on use: keeps `import firnray` fast

    check_profile(profile)
    data = _Data(station, arrivals)
    if data.n < 4:
        raise ValueError(f"arrivals: a vertex and an emission time need at least 4 pulses, "
                         f"got {data.n}")
    box = _default_box(station, profile) if search_box is None else search_box
    try:
        (x0, x1), (y0, y1), (z0, z1) = box
    except (TypeError, ValueError):
        raise ValueError(f"search_box must be ((x0, x1), (y0, y1), (z0, z1)) [m], "
                         f"got {box!r}") from None
    if not (x0 < x1 and y0 < y1 and z0 < z1 <= 0.0):
        raise ValueError(f"search_box must have increasing ranges and z1 <= 0, got {box!r}")
    model = _Model(profile, data.positions)
    gx, gy, gz = (np.linspace(lo, hi, n) for (lo, hi), n in zip(box, grid))
    cand = np.array(np.meshgrid(gx, gy, gz, indexing="ij")).reshape(3, -1).T
    travel = model.times(cand)
    t0s = _best_t0(data, travel)
    res_all, _ = _match(data, travel, t0s)
    chi2 = np.sum(res_all ** 2, axis=1)
    order = np.argsort(chi2)
    cell = np.array([(hi - lo) / max(n - 1, 1) for (lo, hi), n in zip(box, grid)])
    seeds = []
    for i in order:
        if all(np.any(np.abs(cand[i] - cand[j]) > 1.5 * cell) for j in seeds):
            seeds.append(i)
        if len(seeds) == starts:
            break

    cache = {}

    def evaluate(theta):
        key = theta.tobytes()
        if key not in cache:
            cache.clear()
            travel, grad = model.times(theta[None, :3], with_slowness=True)
            res, ray = _match(data, travel, theta[3:4])
            jac = np.zeros((data.n, 4))
            ok = ray[0] >= 0
            g = grad[0, data.slot, np.where(ok, ray[0], 0), :]
            jac[ok, :3] = -g[ok] / data.sigmas[ok, None]
            jac[ok, 3] = -1.0 / data.sigmas[ok]
            cache[key] = (res[0], jac)
        return cache[key]

    scale = np.array([cell[0], cell[1], cell[2], 100.0])
    lower = np.array([-np.inf, -np.inf, profile.z_min, -np.inf])
    upper = np.array([np.inf, np.inf, 0.0, np.inf])
    fits = []
    for i in seeds:
        theta0 = np.concatenate([cand[i], [t0s[i]]])
        theta0[2] = min(theta0[2], -1e-3)
        jac = "2-point" if numeric_jacobian else (lambda th: evaluate(th)[1])
        sol = least_squares(lambda th: evaluate(th)[0], theta0, jac=jac,
                            x_scale=scale, bounds=(lower, upper), method="trf",
                            xtol=1e-10, ftol=1e-10, gtol=1e-10, max_nfev=200)
        fits.append(sol)
    fits.sort(key=lambda s: float(s.fun @ s.fun))
    best = fits[0]
    res, ray = _match(data, model.times(best.x[None, :3]), best.x[3:4])
    res, ray = res[0], ray[0]
    jac = best.jac
    try:
        cov = np.linalg.inv(jac.T @ jac)
    except np.linalg.LinAlgError:
        cov = np.full((4, 4), np.nan)
    sig = np.sqrt(np.clip(np.diag(cov), 0, None))
    alternatives = []
    for s in fits[1:]:
        dist = np.abs(s.x[:3] - best.x[:3])
        if np.all(dist <= np.maximum(3.0 * sig[:3], 1e-3)) or any(
                np.all(np.abs(s.x[:3] - v) <= np.maximum(3.0 * sig[:3], 1e-3))
                for v, _, _ in alternatives):
            continue  # the same minimum reached from another seed
        alternatives.append((s.x[:3].copy(), float(s.x[3]), float(s.fun @ s.fun)))
    chi2_best = float(res @ res)
    multiple = any(c - chi2_best < delta_chi2 for _, _, c in alternatives)
    return VertexFit(vertex=best.x[:3].copy(), emission_time=float(best.x[3]), covariance=cov,
                     sigma=sig, chi2=chi2_best, ndof=int(data.n - 4), residuals=res,
                     ray_index=ray, multiple_minima=bool(multiple), alternatives=alternatives,
                     success=bool(best.success and np.all(ray >= 0)),
                     antenna_ids=list(data.ids))


def simulate_arrivals(profile, station, vertex, emission_time=0.0, sigma=1.0, rng=None,
                      antennas=None, pulses=2):
    """Arrival rows (antenna_id, time, sigma) for a vertex, with Gaussian noise.

    At each antenna the ``pulses`` earliest rays give a row each (two by
    default: the pair :func:`fit_vertex` matches; a duct in a non-monotone
    profile can bring many more).

    Parameters
    ----------
    profile : IndexProfile
    station : Station
    vertex : (x, y, z) [m]
    emission_time : float
        [ns].
    sigma : float
        Timing uncertainty [ns] (the noise drawn and the sigma reported).
    rng : numpy.random.Generator, optional
        Noise source (no noise if None).
    antennas : sequence of str, optional
        Restrict to these antennas.
    pulses : int or None, optional
        Earliest rays kept per antenna (default 2); None keeps every ray.

    Returns
    -------
    list of (str, float, float)
    """
    if pulses is not None and (not isinstance(pulses, (int, np.integer))
                               or isinstance(pulses, bool) or pulses < 1):
        raise ValueError(f"pulses must be None or an integer >= 1, got {pulses!r}")
    pred = predict_arrivals(profile, station, vertex, emission_time)
    rows = []
    for ident, k, kind, t, zen in pred.rows(0):
        if antennas is not None and ident not in antennas:
            continue
        if pulses is not None and k >= pulses:
            continue
        noise = 0.0 if rng is None else float(rng.normal(0.0, sigma))
        rows.append((ident, t + noise, float(sigma)))
    if not math.isfinite(sigma) or sigma <= 0:
        raise ValueError(f"sigma must be a positive timing uncertainty [ns], got {sigma!r}")
    return rows
