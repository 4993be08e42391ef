"""Ray results: one ``Ray`` per path, and ``RaySet`` for a batch of pairs.

``RaySet`` holds (N, K) arrays, NaN-padded and sorted by travel time along K;
``RaySet[i]`` gives the list of ``Ray`` objects of pair i, the same list that
``find_rays`` returns for that pair.
"""

import math

import numpy as np

from firnray.medium.profiles import ExponentialProfile
from firnray.rays import exponential_kernels as ek
from firnray.rays import exponential_solver as es
from firnray.rays.duct_solver import DUCTED
from firnray.rays.panel_blocks import solver_arrays
from firnray.rays.panel_kernels import segment

#: Kind code -> name, as stored in ``RaySet.kind`` (-1 where there is no ray).
KIND_NAMES = {es.DIRECT: "direct", es.REFRACTED: "refracted", es.REFLECTED: "reflected",
              es.TRANSMITTED: "transmitted", es.LAYER_REFLECTED: "layer-reflected",
              DUCTED: "ducted"}
#: Kind name -> code.
KIND_CODES = {name: code for code, name in KIND_NAMES.items()}

PATH_DTYPE = np.dtype([("x", float), ("z", float)])


def _direction(zenith_deg, horizontal):
    theta = math.radians(zenith_deg)
    return np.array([math.sin(theta) * horizontal[0], math.sin(theta) * horizontal[1],
                     math.cos(theta)])


class Ray:
    """One ray between a source and a receiver.

    Attributes
    ----------
    kind : str
        "direct", "refracted" (one turning point), "reflected" (at least
        one surface reflection), "ducted" (two or more turning points and no
        surface reflection: a ray trapped in a duct of a non-monotone
        profile), "transmitted", or "layer-reflected" (off a configured
        ``Reflector``).
    invariant : float
        Snell invariant b = n(z) sin(zenith) [1].
    travel_time : float
        Travel time [ns].
    path_length : float
        Geometric length of the path [m].
    launch_zenith, arrival_zenith : float
        Zenith angle of the propagation direction at the source and at the
        receiver [deg] (0 = up, 90 = horizontal, 180 = down).
    turning_z : float or None
        Height of the (upper) turning point [m]; for a ray whose only
        turning points lie below both end points, their height; None for a
        ray without turning points.
    lower_turning_z : float or None
        Height of the lower turning points [m] of a ray that turns below the
        deeper end point (non-monotone profiles); None otherwise.
    turning_points : int
        Number of turning points (0 direct or reflected, 1 refracted, more in
        a duct).
    surface_reflections : int
        Number of reflections at the surface.
    converged : bool
        Whether the root finder met its tolerance.
    source, receiver : ndarray, shape (3,)
        End points (x, y, z) [m].
    equivalent_distance : float
        Geometric spreading as a distance [m]: the power flux of a point
        source at the receiver is P / (4 pi R^2) with R this distance (the
        straight-line distance in a uniform medium; smaller where the firn
        focuses rays).  See ``docs/theory.md`` section 7.
    reflector : Reflector or None
        The layer a "layer-reflected" ray bounced off.
    """

    @property
    def bounce_z(self):
        """Height of the bounce [m]: 0 for a surface reflection, the layer's
        height for a layer reflection, None otherwise."""
        if self.kind == "reflected":
            return 0.0
        if self.kind == "layer-reflected":
            return self.reflector.z
        return None

    __slots__ = ("kind", "invariant", "travel_time", "path_length", "launch_zenith",
                 "arrival_zenith", "turning_z", "converged", "source", "receiver",
                 "equivalent_distance", "reflector", "_profile", "_slowness",
                 "lower_turning_z", "turning_points", "surface_reflections", "_first_down")

    def __init__(self, profile, source, receiver, kind, invariant, travel_time, path_length,
                 launch_zenith, arrival_zenith, turning_z, converged, slowness,
                 equivalent_distance=math.nan, reflector=None, lower_turning_z=None,
                 turning_points=None, surface_reflections=None, first_down=False):
        self._profile = profile
        self.lower_turning_z = lower_turning_z
        self.turning_points = int(turning_points if turning_points is not None
                                  else kind == "refracted")
        self.surface_reflections = int(surface_reflections if surface_reflections is not None
                                       else kind == "reflected")
        self._first_down = bool(first_down)
        self.source = source
        self.receiver = receiver
        self.kind = kind
        self.invariant = invariant
        self.travel_time = travel_time
        self.path_length = path_length
        self.launch_zenith = launch_zenith
        self.arrival_zenith = arrival_zenith
        self.turning_z = turning_z
        self.converged = converged
        self._slowness = slowness
        self.equivalent_distance = equivalent_distance
        self.reflector = reflector

    def __repr__(self):
        turn = "None" if self.turning_z is None else f"{self.turning_z:.3f}"
        return (f"Ray(kind={self.kind!r}, travel_time={self.travel_time:.4f} ns, "
                f"launch_zenith={self.launch_zenith:.4f} deg, "
                f"arrival_zenith={self.arrival_zenith:.4f} deg, "
                f"path_length={self.path_length:.4f} m, turning_z={turn})")

    @property
    def straight_distance(self):
        """Straight-line distance between source and receiver [m]."""
        return float(np.linalg.norm(self.receiver - self.source))

    @property
    def focusing(self):
        """Amplitude focusing relative to straight-line 1/R: straight distance / R_eq [1]."""
        return self.straight_distance / self.equivalent_distance

    def pieces(self):
        """Monotone pieces of the ray in the ice, from the source side.

        Returns
        -------
        list of (z_low, z_high, ends_at_turning_point)
            Heights [m] bounding each piece where the ray moves monotonically
            in z below the surface; air legs are not included.
        """
        zs, zr = float(self.source[2]), float(self.receiver[2])
        if self.kind == "transmitted":
            z_ice = zs if zs <= 0.0 else zr
            return [(z_ice, 0.0, False)] if z_ice < 0.0 else []
        if zs > 0.0 and zr > 0.0:
            return []
        lo, hi = min(zs, zr), max(zs, zr)
        if self.kind == "direct":
            return [(lo, hi, False)]
        if self.kind == "layer-reflected":
            return [(self.reflector.z, zs, False), (self.reflector.z, zr, False)]
        top = self.turning_z if self.kind == "refracted" else 0.0
        turning = self.kind == "refracted"
        return [(lo, top, turning), (hi, top, turning)]

    def vertical_slowness(self, z):
        """w(z) = sqrt(n(z)^2 - b^2) along the ray at heights z [m] in the ice [1].

        Formed from the vertical slowness at the ray's reference level (no
        cancellation for near-horizontal rays); 0 at a turning point.
        """
        zz = np.asarray(z, dtype=float)
        if not isinstance(self._profile, ExponentialProfile):
            n = np.asarray(self._profile.index(np.minimum(zz, 0.0)), dtype=float)
            n_ref = self._reference_index()
            w2 = (n - n_ref) * (n + n_ref) + self._slowness ** 2
            out = np.sqrt(np.maximum(w2, 0.0))
            return float(out) if out.ndim == 0 else out
        a, delta, s, n_air = self._profile.parameters
        u = np.exp(np.minimum(zz, 0.0) / s)
        n = a - delta * u
        if self.kind == "transmitted":
            u_ref, n_ref = 1.0, a - delta
        elif delta == 0.0:
            u_ref, n_ref = 1.0, a
        else:
            z_hi = max(float(self.source[2]), float(self.receiver[2]))
            u_ref = math.exp(z_hi / s)
            n_ref = a - delta * u_ref
        w2 = delta * (u_ref - u) * (n + n_ref) + self._slowness ** 2
        out = np.sqrt(np.maximum(w2, 0.0))
        return float(out) if out.ndim == 0 else out

    def _reference_index(self):
        """Index at the level where the solver fixed the vertical slowness [1]: the
        surface for a transmitted ray, the shallower end point otherwise."""
        if self.kind == "transmitted":
            return float(self._profile.index(0.0))
        return float(self._profile.index(min(max(float(self.source[2]),
                                                 float(self.receiver[2])), 0.0)))

    def as_dict(self):
        """The ray's quantities as a plain dict (units as the attributes)."""
        return {"kind": self.kind, "travel_time": self.travel_time,
                "equivalent_distance": self.equivalent_distance,
                "path_length": self.path_length, "launch_zenith": self.launch_zenith,
                "arrival_zenith": self.arrival_zenith, "invariant": self.invariant,
                "turning_z": self.turning_z, "lower_turning_z": self.lower_turning_z,
                "turning_points": self.turning_points,
                "surface_reflections": self.surface_reflections, "converged": self.converged}

    def _horizontal(self):
        d = self.receiver[:2] - self.source[:2]
        dist = math.hypot(d[0], d[1])
        return (1.0, 0.0) if dist == 0.0 else (d[0] / dist, d[1] / dist)

    @property
    def launch_direction(self):
        """Unit propagation vector (x, y, z) at the source, in the caller's frame [1]."""
        return _direction(self.launch_zenith, self._horizontal())

    @property
    def arrival_direction(self):
        """Unit propagation vector (x, y, z) at the receiver, in the caller's frame [1]."""
        return _direction(self.arrival_zenith, self._horizontal())

    def path(self, n_points=200):
        """Points along the ray from the source to the receiver.

        Parameters
        ----------
        n_points : int, optional
            Number of points per segment (a segment ends at a turning point,
            at the surface or at an end point), >= 2; about half are evenly
            spaced in height, half crowd into the firn where the ray bends.

        Returns
        -------
        ndarray
            Structured array with fields ``x`` (horizontal distance from the
            source along the source-receiver direction) [m] and ``z``
            (height) [m].
        """
        if not isinstance(n_points, (int, np.integer)) or n_points < 2:
            raise ValueError(f"n_points must be an integer >= 2, got {n_points!r}")
        if not isinstance(self._profile, ExponentialProfile):
            if self.kind not in ("transmitted", "layer-reflected") and max(
                    self.source[2], self.receiver[2]) <= 0.0:
                from firnray.rays.solve import duct_setup
                if duct_setup(self._profile.panels) is not None:
                    return band_ray_path(self, int(n_points))
            return panel_ray_path(self, int(n_points))
        if self.kind == "layer-reflected":
            return _layer_path(self, int(n_points))
        return ray_path(self._profile, self.source, self.receiver, self.kind,
                        self.invariant, self._slowness, int(n_points))


def _segment_x(a, delta, s, b, q, ref, z1, z2, turning=False):
    """Horizontal distance [m] of the monotone piece z1 -> z2 (z1 < z2) at invariant b."""
    u_ref, n_ref, p_ref = ref
    return ek.partial_segment(a, delta, s, b, p_ref, u_ref, n_ref, z1, z2, turning)[0]


def _rising(z1, z2, n, towards_top, s):
    """Heights from z1 up to z2 for a path: about half evenly spaced in z and half
    evenly spaced in exp(z/s) (so the firn, where the ray bends, is resolved);
    with ``towards_top`` (a turning point at z2) both sets crowd towards z2."""
    t = np.linspace(0.0, 1.0, max(n - n // 2, 2))
    if towards_top:
        t = 1.0 - (1.0 - t) ** 2
    in_z = z1 + (z2 - z1) * t
    u1, u2 = math.exp(z1 / s), math.exp(z2 / s)
    in_u = s * np.log(u1 + (u2 - u1) * t[1:-1])
    zz = np.unique(np.concatenate([in_z, np.clip(in_u, z1, z2)]))
    zz[0], zz[-1] = z1, z2
    return zz


def _layer_path(ray, n_points):
    """Points of a layer-reflected ray: down from the source to the layer, up to the receiver."""
    a, delta, s, n_air = ray._profile.parameters
    zs, zr = float(ray.source[2]), float(ray.receiver[2])
    z_hi = max(zs, zr)
    u_hi = math.exp(z_hi / s)
    n_hi = a - delta * u_hi
    b, p = ray.invariant, ray._slowness
    q = math.sqrt(delta * u_hi * (a + n_hi) + p * p)
    ref = (u_hi, n_hi, p)
    zl = ray.reflector.z
    down = _rising(zl, zs, n_points, False, s)[::-1]
    x_down = np.array([_segment_x(a, delta, s, b, q, ref, zl, z) for z in down])
    x_bottom = x_down[0]
    x_down = x_bottom - x_down
    up = _rising(zl, zr, n_points, False, s)[1:]
    x_up = x_bottom + np.array([_segment_x(a, delta, s, b, q, ref, zl, z) for z in up])
    out = np.empty(len(down) + len(up), dtype=PATH_DTYPE)
    out["x"] = np.concatenate([x_down, x_up])
    out["z"] = np.concatenate([down, up])
    return out


def ray_path(profile, source, receiver, kind, b, p, n_points):
    """Points (x, z) of a ray; see :meth:`Ray.path`."""
    a, delta, s, n_air = profile.parameters
    zs, zr = float(source[2]), float(receiver[2])
    x_total = math.hypot(receiver[0] - source[0], receiver[1] - source[1])
    if kind == "transmitted":
        z_ice, h = (zr, zs) if zs > 0.0 else (zs, zr)
        if delta == 0.0 and z_ice == 0.0:
            zz = np.array([z_ice])
            xx = np.array([0.0])
        else:
            q = math.sqrt(delta * (a + a - delta) + p * p)
            ref = (1.0, a - delta, p)
            zz = _rising(z_ice, 0.0, n_points, False, s)
            xx = np.array([_segment_x(a, delta, s, b, q, ref, z_ice, z) for z in zz])
        x_surf = xx[-1]
        za = np.linspace(0.0, h, n_points)[1:]
        xa = x_surf + za * b / math.sqrt(n_air * n_air - b * b)
        xx, zz = np.concatenate([xx, xa]), np.concatenate([zz, za])
        forward = zs <= 0.0
    elif zs > 0.0 and zr > 0.0 or delta == 0.0:
        # straight lines (uniform medium, or both points in the air)
        if kind == "reflected":
            zm = 0.0
            frac = abs(zs) / (abs(zs) + abs(zr))
            xx = np.concatenate([np.linspace(0.0, frac * x_total, n_points),
                                 np.linspace(frac * x_total, x_total, n_points)[1:]])
            zz = np.concatenate([np.linspace(zs, zm, n_points), np.linspace(zm, zr, n_points)[1:]])
        else:
            xx = np.linspace(0.0, x_total, n_points)
            zz = np.linspace(zs, zr, n_points)
        out = np.empty(len(xx), dtype=PATH_DTYPE)
        out["x"], out["z"] = xx, zz
        return out
    elif kind == "layer-reflected":
        raise ValueError("pass the reflector: use Ray.path()")
    else:
        swapped = zs > zr
        z_lo, z_hi = (zr, zs) if swapped else (zs, zr)
        u_hi, n_hi = ek.level_state(a, delta, s, z_hi)
        q = math.sqrt(delta * u_hi * (a + n_hi) + p * p)
        ref = (u_hi, n_hi, p)
        if kind == "direct":
            zz = _rising(z_lo, z_hi, n_points, False, s)
            xx = np.array([_segment_x(a, delta, s, b, q, ref, z_lo, z) for z in zz])
        else:
            if kind == "refracted":
                z_top = ek.turning_height(a, delta, s, b, q)
                turn = True
            else:
                z_top = 0.0
                turn = False
            up = _rising(z_lo, z_top, n_points, turn, s)
            x_up = np.array([_segment_x(a, delta, s, b, q, ref, z_lo, z) for z in up[:-1]])
            x_top = _segment_x(a, delta, s, b, q, ref, z_lo, z_top, turning=turn)
            down = _rising(z_hi, z_top, n_points, turn, s)[::-1]
            x_dn = np.array([_segment_x(a, delta, s, b, q, ref, z, z_top, turning=turn)
                             for z in down[1:]])
            xx = np.concatenate([x_up, [x_top], x_top + x_dn])
            zz = np.concatenate([up[:-1], [z_top], down[1:]])
        forward = not swapped
    if not forward:
        xx = xx[-1] - xx[::-1]
        zz = zz[::-1]
    out = np.empty(len(xx), dtype=PATH_DTYPE)
    out["x"], out["z"] = xx, zz
    return out


def _assemble(xx, zz, forward):
    if not forward:
        xx = xx[-1] - xx[::-1]
        zz = zz[::-1]
    out = np.empty(len(xx), dtype=PATH_DTYPE)
    out["x"], out["z"] = xx, zz
    return out


#: Height scale [m] over which the path points of a general profile crowd into the firn.
PATH_FIRN_SCALE = 30.0


def panel_ray_path(ray, n_points):
    """Points (x, z) of a ray in a general (panel) profile; see :meth:`Ray.path`.

    Each point's horizontal distance is the ray integral X from the piece's
    lower end (``panel_kernels.segment``), with the reference level of the
    solver (the shallower point, or the surface for a transmitted ray).
    """
    prof = solver_arrays(ray._profile.panels)
    b, p = ray.invariant, ray._slowness
    n_ref = ray._reference_index()
    zs, zr = float(ray.source[2]), float(ray.receiver[2])
    x_total = math.hypot(*(ray.receiver[:2] - ray.source[:2]))
    n_air = ray._profile.n_air
    s = PATH_FIRN_SCALE

    def xs(z1, heights, turning=False, downward=False):
        if downward:   # distance from each height up to the top z1
            return np.array([segment(prof, b, n_ref, p, z, z1, turning)[0] for z in heights])
        return np.array([segment(prof, b, n_ref, p, z1, z, False)[0] for z in heights])

    if ray.kind == "transmitted":
        z_ice, h = (zr, zs) if zs > 0.0 else (zs, zr)
        zz = _rising(z_ice, 0.0, n_points, False, s) if z_ice < 0.0 else np.array([0.0])
        xx = xs(z_ice, zz)
        za = np.linspace(0.0, h, n_points)[1:]
        xa = xx[-1] + za * b / math.sqrt(n_air * n_air - b * b)
        return _assemble(np.concatenate([xx, xa]), np.concatenate([zz, za]), zs <= 0.0)
    if zs > 0.0 and zr > 0.0:
        return ray_path(ExponentialProfile(n_air + 1.0, n_air + 1.0, 1.0, n_air=n_air),
                        ray.source, ray.receiver, ray.kind, b, p, n_points)
    swapped = zs > zr
    z_lo, z_hi = (zr, zs) if swapped else (zs, zr)
    if ray.kind == "layer-reflected":
        zl = ray.reflector.z
        down = _rising(zl, zs, n_points, False, s)[::-1]    # from the source down to the layer
        x_down = xs(zl, down)                               # distance from each height to the bounce
        up = _rising(zl, zr, n_points, False, s)[1:]
        x_up = x_down[0] + xs(zl, up)
        return _assemble(np.concatenate([x_down[0] - x_down, x_up]),
                         np.concatenate([down, up]), True)
    if ray.kind == "direct":
        if z_lo == z_hi:   # horizontal straight ray in uniform ice
            xx = np.linspace(0.0, x_total, n_points)
            return _assemble(xx, np.full(n_points, z_lo), True)
        zz = _rising(z_lo, z_hi, n_points, False, s)
        return _assemble(xs(z_lo, zz), zz, not swapped)
    turn = ray.kind == "refracted"
    z_top = ray.turning_z if turn else 0.0
    up = _rising(z_lo, z_top, n_points, turn, s)
    x_up = xs(z_lo, up[:-1])
    x_top = segment(prof, b, n_ref, p, z_lo, z_top, turn)[0]
    down = _rising(z_hi, z_top, n_points, turn, s)[::-1]
    x_dn = xs(z_top, down[1:], turning=turn, downward=True)
    xx = np.concatenate([x_up, [x_top], x_top + x_dn])
    zz = np.concatenate([up[:-1], [z_top], down[1:]])
    return _assemble(xx, zz, not swapped)


def band_ray_path(ray, n_points):
    """Points (x, z) of a ray in a non-monotone profile: legs between the end
    points and the band's edges (``duct_solver``), in the order the ray runs."""
    from firnray.rays.duct_kernels import SOFT, TURNING, leg
    from firnray.rays.solve import duct_setup
    prof = solver_arrays(ray._profile.panels)
    minima = duct_setup(ray._profile.panels)[1]
    b, p = ray.invariant, ray._slowness
    n_ref = ray._reference_index()
    zs, zr = float(ray.source[2]), float(ray.receiver[2])
    swapped = zs > zr
    z_lo, z_hi = (zr, zs) if swapped else (zs, zr)
    x_total = math.hypot(*(ray.receiver[:2] - ray.source[:2]))
    if z_lo == z_hi and ray.turning_points + ray.surface_reflections == 0:
        return _assemble(np.linspace(0.0, x_total, n_points), np.full(n_points, z_lo), True)
    top_turning = ray.surface_reflections == 0 and ray.turning_z is not None and (
        ray.lower_turning_z is None or ray.turning_z != ray.lower_turning_z)
    z_top = 0.0 if ray.surface_reflections else (ray.turning_z if top_turning else None)
    z_bot = ray.lower_turning_z
    events = ray.turning_points + ray.surface_reflections
    s = PATH_FIRN_SCALE

    def rising(za, zb, low_turn, high_turn):
        zz = _rising(za, zb, n_points, high_turn, s)
        low = TURNING if low_turn else 0
        xx = np.array([leg(prof, minima, b, n_ref, p, za, z, low,
                           TURNING if (high_turn and z == zb) else 0)[0] for z in zz])
        return xx, zz

    xs, zs_out = [np.array([0.0])], [np.array([z_lo])]
    x0, here = 0.0, z_lo
    down = ray._first_down
    for k in range(events + 1):
        if k == events:
            target = z_hi
        else:
            target = z_bot if down else z_top
        if down:       # from here down to the target: the target may be a lower turning point
            xx, zz = rising(target, here, k < events, k > 0 and top_turning)
            xx = xx[-1] - xx[::-1]
            zz = zz[::-1]
        else:
            xx, zz = rising(here, target, k > 0, k < events and top_turning)
        xs.append(x0 + xx[1:])
        zs_out.append(zz[1:])
        x0 += xx[-1]
        here = target
        down = not down
    xx = np.concatenate(xs)
    zz = np.concatenate(zs_out)
    return _assemble(xx, zz, not swapped)


class RaySet:
    """Rays for N source-receiver pairs, as (N, K) arrays sorted by travel time.

    Attributes
    ----------
    travel_time : ndarray, shape (N, K)
        [ns], NaN where pair i has fewer than K rays.
    path_length : ndarray, shape (N, K)
        [m].
    launch_zenith, arrival_zenith : ndarray, shape (N, K)
        [deg].
    invariant : ndarray, shape (N, K)
        Snell invariant [1].
    turning_z : ndarray, shape (N, K)
        (Upper) turning height [m] (see ``Ray.turning_z``), NaN without one.
    lower_turning_z : ndarray, shape (N, K)
        Lower turning height [m] (see ``Ray.lower_turning_z``), NaN without one.
    turning_points, surface_reflections : ndarray, shape (N, K)
        Numbers of turning points and of surface reflections (NaN where there
        is no ray).
    equivalent_distance : ndarray, shape (N, K)
        Geometric spreading distance R_eq [m] (see ``Ray.equivalent_distance``).
    kind : ndarray of int8, shape (N, K)
        Kind codes (see ``kind_names``), -1 where there is no ray.
    kind_names : dict
        Code -> kind name.
    converged : ndarray of bool, shape (N, K)
        Root finder met its tolerance (False where there is no ray).
    count : ndarray of int, shape (N,)
        Number of rays per pair (0 in a shadow zone or for an invalid row).
    sources, receivers : ndarray, shape (N, 3)
        The pairs (x, y, z) [m].
    reflectors : list of Reflector
        The reflecting layers the rays were found with.
    """

    kind_names = KIND_NAMES

    def __init__(self, profile, sources, receivers, table, kinds, converged, count,
                 reflectors=()):
        self.profile = profile
        self.reflectors = list(reflectors)
        self.sources = sources
        self.receivers = receivers
        k = max(int(count.max()) if count.size else 0, 1)
        self._table = table[:, :k, :]
        self.kind = kinds[:, :k]
        self.converged = converged[:, :k]
        self.count = count
        self.invariant = self._table[:, :, es.COL_INVARIANT]
        self.travel_time = self._table[:, :, es.COL_TIME]
        self.path_length = self._table[:, :, es.COL_LENGTH]
        self.launch_zenith = self._table[:, :, es.COL_LAUNCH]
        self.arrival_zenith = self._table[:, :, es.COL_ARRIVAL]
        self.turning_z = self._table[:, :, es.COL_TURNING]
        self.equivalent_distance = self._table[:, :, es.COL_SPREAD]
        self.lower_turning_z = self._table[:, :, es.COL_LOWER_TURNING]
        self.turning_points = self._table[:, :, es.COL_TURNS]
        self.surface_reflections = self._table[:, :, es.COL_REFLECTIONS]

    def __len__(self):
        return self.count.shape[0]

    def __repr__(self):
        return f"RaySet(pairs={len(self)}, rays={int(self.count.sum())})"

    def kind_name(self, i, k):
        """Name of the kind of ray k of pair i ("" where there is none)."""
        return KIND_NAMES.get(int(self.kind[i, k]), "")

    def __getitem__(self, i):
        """The list of ``Ray`` objects of pair ``i``, sorted by travel time."""
        n = len(self)
        if not isinstance(i, (int, np.integer)) or not -n <= i < n:
            raise IndexError(f"pair index must be an integer in [-{n}, {n}), got {i!r}")
        i = int(i) % n
        rays = []
        for k in range(int(self.count[i])):
            row = self._table[i, k]
            turning = row[es.COL_TURNING]
            rays.append(Ray(self.profile, self.sources[i].copy(), self.receivers[i].copy(),
                            KIND_NAMES[int(self.kind[i, k])], float(row[es.COL_INVARIANT]),
                            float(row[es.COL_TIME]), float(row[es.COL_LENGTH]),
                            float(row[es.COL_LAUNCH]), float(row[es.COL_ARRIVAL]),
                            None if math.isnan(turning) else float(turning),
                            bool(self.converged[i, k]), float(row[es.COL_SLOWNESS]),
                            float(row[es.COL_SPREAD]),
                            None if math.isnan(row[es.COL_LAYER])
                            else self.reflectors[int(row[es.COL_LAYER])],
                            None if math.isnan(row[es.COL_LOWER_TURNING])
                            else float(row[es.COL_LOWER_TURNING]),
                            int(row[es.COL_TURNS]), int(row[es.COL_REFLECTIONS]),
                            bool(row[es.COL_FIRST_DOWN] > 0.0)))
        return rays
