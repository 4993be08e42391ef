"""Independent high-precision reference rays for the geometry catalogue.

What it computes
----------------
For every case of ``tests/cases/geometry.yaml`` this script finds every ray
that joins the source to the receiver in the profile of the case, and writes
for each ray its kind, Snell invariant ``b = n(z) sin(zenith)``, travel time
[ns], path length [m], launch and arrival zenith [deg] and turning height [m]
to ``tests/data/reference_rays.json``.  For two points in the ice it also
stores the direct-horizon distance X_h (the direct ray that arrives
horizontally at the shallower point) and the maximum horizontal reach X_max
of the up-going family (rays that rise above the shallower point, turn in the
firn or bounce off the surface, and come back down to it), with the interior
extrema of that family.

How
---
Everything reported is evaluated with mpmath at ``mp.dps`` = 32 digits.

* Invariant.  A ray is carried by its gap a = n_deep - b rather than by b
  itself: for deep points n_deep - n(z) = (n_deep - n_surface) exp(z/h) is
  far below the resolution of b, while a keeps all its digits.

* Ray integrals.  Over a monotone stretch of firn the horizontal distance,
  path length and travel time are X = int b/sqrt(n^2-b^2) dz,
  L = int n/sqrt(n^2-b^2) dz and T = (1/c) int n^2/sqrt(n^2-b^2) dz.  With
  n(z) = n_deep - (n_deep - n_surface) exp(z/h) every ray has a (possibly
  virtual, i.e. above the surface) turning height z_t = h log(a/(n_deep -
  n_surface)).  With s = z_t - z one has exactly n - b = a (1 - exp(-s/h)),
  so n - b suffers no cancellation, and the substitution s = t^2 turns the
  inverse-square-root turning-point singularity into a smooth bounded
  integrand.  The t integrals are evaluated by tanh-sinh quadrature
  (``mpmath.quad``), split at s = h, 4h, 16h, ...; the error estimate of
  every quadrature is checked.  Air stretches are straight lines added in
  closed form (time n_air * length / c).  The uniform profile
  (n_surface == n_deep) has straight rays only and is done in closed form.

* Root finding.  Each family of rays is parametrised so that its horizontal
  distance X is smooth and, near the ends, linear in the parameter: direct
  rays by the zenith at the shallower point, refracted rays by
  sigma = sqrt(1 - z_t / z_hi) (turning height z_t between the shallower
  point z_hi and the surface), surface-reflected rays by the zenith at the
  surface, transmitted rays by the zenith in the air.  The up-going family is
  thereby split at the grazing ray b = n_surface, where X has a kink.  Each
  family is scanned densely (a double-precision Gauss-Legendre version of
  the same integrals, used only to place brackets), every interior extremum
  of the scan is refined to full precision, and on every monotone piece
  between extrema a sign change of X - X_target is refined by a safeguarded
  Illinois (regula falsi) iteration with mpmath, which never leaves its
  bracket.  Each ray found is integrated again and checked to hit the
  receiver.

Output
------
``{"generator", "mp_dps", "speed_of_light", "units", "cases": {name: case}}``
where each case holds the profile (``profile_key``, ``profile``), ``source``,
``receiver``, ``direct_horizon_x`` and ``max_reach_x`` (null unless both
points are in graded ice; X_h = 0 for equal depths, X_max null when a point
lies on the surface), ``max_reach_invariant`` (b of the farthest up-going
ray; n_surface when that is the grazing ray), ``upgoing_extrema`` (interior
extrema of the refracted / reflected sub-families), ``notes`` and ``rays``
sorted by travel time, each with kind, invariant, travel_time, path_length,
launch_zenith, arrival_zenith and turning_z (null unless refracted).  Floats
are the doubles nearest to the mpmath values.

This script shares no code with the firnray package: it imports nothing from
it and re-derives everything from the ray equations.  It needs only mpmath,
numpy and pyyaml.

Usage: python tests/generators/reference_rays.py [--catalogue PATH]
       [--output PATH] [--dps N] [--scan N] [--only NAME ...]
"""

import argparse
import json
import os
import sys
import time

import mpmath
import numpy as np
import yaml
from mpmath import mp, mpf

HERE = os.path.dirname(os.path.abspath(__file__))
REPO = os.path.dirname(os.path.dirname(HERE))
DEFAULT_CATALOGUE = os.path.join(REPO, "tests", "cases", "geometry.yaml")
DEFAULT_OUTPUT = os.path.join(REPO, "tests", "data", "reference_rays.json")

SPEED_OF_LIGHT = "0.299792458"  # m/ns
DEFAULT_DPS = 32
DEFAULT_SCAN = 2000


class QuadratureError(RuntimeError):
    pass


def to_mp(value):
    """Decimal value of a YAML number as an mpf (1.78 means 1.78 exactly)."""
    return mpf(repr(float(value)))


def eps_tol(margin):
    return mpf(10) ** (-(mp.dps - margin))


class Medium:
    """Exponential firn profile below z = 0, constant index above."""

    def __init__(self, params):
        self.n_deep = to_mp(params["n_deep"])
        self.n_surface = to_mp(params["n_surface"])
        self.scale = to_mp(params["scale_depth"])
        self.n_air = to_mp(params["n_air"])
        self.contrast = self.n_deep - self.n_surface
        self.uniform = self.contrast == 0
        if self.contrast < 0 or self.scale <= 0:
            raise ValueError("profile must have n_deep >= n_surface, scale > 0")
        if self.n_air >= self.n_surface:
            raise ValueError("n_air must be below n_surface")

    def gap_at(self, z):
        """n_deep - n(z) for z <= 0, without cancellation."""
        return self.contrast * mp.exp(z / self.scale)

    def index(self, z):
        if z > 0:
            return self.n_air
        return self.n_deep - self.gap_at(z)

    def turning_height(self, a):
        """Height where the continued profile equals b = n_deep - a."""
        return self.scale * mp.log(a / self.contrast)


# ---------------------------------------------------------------------------
# ray integrals over one monotone firn stretch (full precision)
# ---------------------------------------------------------------------------

def _split_points(t_lo, t_hi, scale):
    pts = [t_lo]
    k = 1
    while True:
        t = mp.sqrt(k * scale)
        if t >= t_hi:
            break
        if t > t_lo:
            pts.append(t)
        k *= 4
    pts.append(t_hi)
    return pts


def firn_stretch(medium, a, z_bottom, z_top, full=True):
    """Integrals over z_bottom <= z <= z_top (<= 0) for the ray of gap a.

    a = n_deep - b.  z_top None means: up to the turning height of the ray
    (which must lie in the ice).  Returns (X, L, cT), cT = c * travel time,
    or X alone if not full.
    """
    if z_top is not None and z_top == z_bottom:
        return (mpf(0), mpf(0), mpf(0)) if full else mpf(0)
    nd = medium.n_deep
    b = nd - a
    if medium.uniform:
        if z_top is None:
            raise ValueError("no turning point in a uniform medium")
        n = nd
        root = mp.sqrt(a * (n + b))
        dz = z_top - z_bottom
        if full:
            return (dz * b / root, dz * n / root, dz * n * n / root)
        return dz * b / root
    h = medium.scale

    def depth_below_turning(z):
        # s = z_t - z = h log(a / (n_deep - n(z))); exactly 0 when b == n(z)
        return h * mp.log(a / medium.gap_at(z))

    if z_top is None:
        s_top = mpf(0)
    else:
        s_top = depth_below_turning(z_top)
        if s_top < 0:
            if s_top < -eps_tol(8):
                raise ValueError("stretch reaches above the turning height")
            s_top = mpf(0)
    s_bot = depth_below_turning(z_bottom)
    t_lo = mp.sqrt(s_top)
    t_hi = mp.sqrt(s_bot)
    two_sqrt_h = 2 * mp.sqrt(h)

    def parts(t):
        # dz = 2 t dt and n - b = a (1 - exp(-u)), u = t^2 / h
        u = t * t / h
        ratio = mpf(1) if u == 0 else u / (-mp.expm1(-u))
        n = nd - a * mp.exp(-u)
        weight = two_sqrt_h * mp.sqrt(ratio / (a * (n + b)))
        return n, weight

    pts = _split_points(t_lo, t_hi, h)
    tol = eps_tol(6)

    def integrate(f):
        val, err = mp.quad(f, pts, error=True, method="tanh-sinh")
        # relative, with an absolute floor of 1e-26 (m or m of light path)
        if err > tol * (abs(val) + 1):
            raise QuadratureError("tanh-sinh error estimate %s for %s" % (err, val))
        return val

    x = integrate(lambda t: b * parts(t)[1])
    if not full:
        return x

    def f_len(t):
        n, w = parts(t)
        return n * w

    def f_time(t):
        n, w = parts(t)
        return n * n * w

    return (x, integrate(f_len), integrate(f_time))


# ---------------------------------------------------------------------------
# the same horizontal distance in double precision, for the bracketing scan
# ---------------------------------------------------------------------------

_GL_NODES, _GL_WEIGHTS = np.polynomial.legendre.leggauss(48)


def scan_stretch_x(medium, a, z_bottom, z_top):
    """Horizontal distance of firn stretches in double precision.

    a (gaps) and z_top (tops; NaN for "up to the turning point") are arrays
    of equal shape, z_bottom a number.  Same substitution as firn_stretch
    with a fixed Gauss-Legendre rule per sub-interval.  Only used to bracket
    roots and extrema; every reported number comes from firn_stretch.
    """
    a = np.asarray(a, dtype=float)
    z_top = np.broadcast_to(np.asarray(z_top, dtype=float), a.shape)
    zb = float(z_bottom)
    nd = float(medium.n_deep)
    b = nd - a
    if medium.uniform:
        return (z_top - zb) * b / np.sqrt(a * (nd + b))
    h = float(medium.scale)
    contrast = float(medium.contrast)
    to_turn = np.isnan(z_top)
    safe_top = np.where(to_turn, zb, z_top)
    s_top = np.where(to_turn, 0.0,
                     h * np.log(a / (contrast * np.exp(safe_top / h))))
    s_bot = h * np.log(a / (contrast * np.exp(zb / h)))
    t_lo = np.sqrt(np.maximum(s_top, 0.0))
    t_hi = np.sqrt(np.maximum(s_bot, 0.0))
    cuts = [t_lo]
    for k in range(9):
        cuts.append(np.clip(np.sqrt(h * 4.0 ** k), t_lo, t_hi))
    cuts.append(t_hi)
    total = np.zeros_like(a)
    for lo, hi in zip(cuts[:-1], cuts[1:]):
        half = 0.5 * (hi - lo)
        mid = 0.5 * (hi + lo)
        t = mid[..., None] + half[..., None] * _GL_NODES
        u = t * t / h
        with np.errstate(invalid="ignore", divide="ignore"):
            ratio = np.where(u > 0, u / -np.expm1(-u), 1.0)
        n = nd - a[..., None] * np.exp(-u)
        w = 2.0 * np.sqrt(h) * np.sqrt(ratio / (a[..., None] * (n + b[..., None])))
        total += half * np.sum(_GL_WEIGHTS * b[..., None] * w, axis=-1)
    return np.where(zb == z_top, 0.0, total)


# ---------------------------------------------------------------------------
# two points in the ice
# ---------------------------------------------------------------------------

class IcePair:
    """Ray families between heights z_lo <= z_hi <= 0 (graded profile)."""

    def __init__(self, medium, z_lo, z_hi):
        self.m = medium
        self.z_lo = z_lo
        self.z_hi = z_hi
        self.equal = z_lo == z_hi
        self.n_hi = medium.index(z_hi)
        self.a_hi = medium.gap_at(z_hi)

    def top_of(self, a):
        """Top of the up-going ray: None (turning point in the firn) or 0."""
        return None if a < self.m.contrast else mpf(0)

    def direct(self, a, full=False):
        return firn_stretch(self.m, a, self.z_lo, self.z_hi, full)

    def upgoing(self, a, full=False):
        top = self.top_of(a)
        first = firn_stretch(self.m, a, self.z_lo, top, full)
        second = firn_stretch(self.m, a, self.z_hi, top, full)
        if full:
            return tuple(p + q for p, q in zip(first, second))
        return first + second

    # double-precision versions for the scan
    def direct_np(self, a):
        return scan_stretch_x(self.m, a, self.z_lo, np.full_like(a, float(self.z_hi)))

    def upgoing_np(self, a):
        top = np.where(a < float(self.m.contrast), np.nan, 0.0)
        return (scan_stretch_x(self.m, a, self.z_lo, top)
                + scan_stretch_x(self.m, a, self.z_hi, top))

    def families(self):
        """Ray families, up-going ones ordered from b = n(z_hi) towards b = 0."""
        m = self.m
        half_pi = mp.pi / 2
        a_hi, n_hi, ns, contrast = self.a_hi, self.n_hi, m.n_surface, m.contrast
        fa_hi, fn_hi, fns = float(a_hi), float(n_hi), float(ns)
        fcontrast, fh, fz_hi = float(contrast), float(m.scale), float(self.z_hi)

        # direct: zenith phi at z_hi; a = a_hi + n_hi (1 - sin phi)
        def direct_gap(phi):
            return a_hi + 2 * n_hi * mp.sin((half_pi - phi) / 2) ** 2

        def direct_gap_np(phi):
            return fa_hi + 2 * fn_hi * np.sin((np.pi / 2 - phi) / 2) ** 2

        # refracted: turning height z_t = z_hi (1 - sigma^2)
        def refr_gap(sigma):
            return contrast * mp.exp(self.z_hi * (1 - sigma * sigma) / m.scale)

        def refr_gap_np(sigma):
            return fcontrast * np.exp(fz_hi * (1 - sigma * sigma) / fh)

        # reflected: zenith psi at the surface; a = contrast + n_s (1 - sin psi)
        def refl_gap(psi):
            return contrast + 2 * ns * mp.sin((half_pi - psi) / 2) ** 2

        def refl_gap_np(psi):
            return fcontrast + 2 * fns * np.sin((np.pi / 2 - psi) / 2) ** 2

        fams = []
        if not self.equal:
            fams.append(Family("direct", mpf(0), half_pi, direct_gap, direct_gap_np,
                               self.direct, self.direct_np))
        if self.z_hi < 0:
            fams.append(Family("refracted", mpf(0), mpf(1), refr_gap, refr_gap_np,
                               self.upgoing, self.upgoing_np))
            fams.append(Family("reflected", half_pi, mpf(0), refl_gap, refl_gap_np,
                               self.upgoing, self.upgoing_np))
        return fams


# ---------------------------------------------------------------------------
# extremum and root refinement
# ---------------------------------------------------------------------------

def golden_extremum(func, a, c, maximise, width):
    """Golden-section search on [a, c] (a < c); returns (p, f(p))."""
    sign = 1 if maximise else -1
    g = (mp.sqrt(5) - 1) / 2
    x1 = c - g * (c - a)
    x2 = a + g * (c - a)
    f1 = sign * func(x1)
    f2 = sign * func(x2)
    while c - a > width:
        if f1 >= f2:
            c, x2, f2 = x2, x1, f1
            x1 = c - g * (c - a)
            f1 = sign * func(x1)
        else:
            a, x1, f1 = x1, x2, f2
            x2 = a + g * (c - a)
            f2 = sign * func(x2)
    if f1 >= f2:
        return x1, sign * f1
    return x2, sign * f2


def refine_extremum(func, p0, lo, hi, maximise):
    """Full-precision extremum of a smooth func near p0, inside [lo, hi].

    Vertices of three-point parabolas whose spacing shrinks with the step
    (quadratic convergence) down to 1e-12 of the interval, where the second
    difference is still far above the rounding noise; golden-section search
    if a parabola is not usable.
    """
    span = hi - lo
    p = p0
    d = mpf("1e-5") * span
    d_min = mpf("1e-12") * span
    ok = False
    for _ in range(30):
        if p - d <= lo or p + d >= hi:
            break
        fm, f0, fp = func(p - d), func(p), func(p + d)
        curv = fp - 2 * f0 + fm
        if (maximise and curv >= 0) or (not maximise and curv <= 0):
            break
        step = d * (fm - fp) / (2 * curv)
        if abs(step) > 4 * d:
            break
        p = p + step
        if d == d_min and abs(step) <= mpf("1e-3") * d_min:
            ok = True
            break
        d = max(d_min, min(d / 10, 10 * abs(step)))
    if ok:
        return p, func(p)
    width = span * mpf(10) ** (-(mp.dps // 2 + 2))
    return golden_extremum(func, max(lo, p - span / 1000), min(hi, p + span / 1000),
                           maximise, width)


def illinois(func, a, fa, c, fc, tol):
    """Root of func in [a, c] with fa * fc < 0 (Illinois, kept in bracket)."""
    if fa == 0:
        return a
    if fc == 0:
        return c
    side = 0
    for _ in range(500):
        p = (a * fc - c * fa) / (fc - fa)
        lo, hi = (a, c) if a < c else (c, a)
        if not (lo < p < hi):
            p = (a + c) / 2
        fp = func(p)
        if fp == 0:
            return p
        if (fp > 0) == (fc > 0):
            c, fc = p, fp
            if side == -1:
                fa /= 2
            side = -1
        else:
            a, fa = p, fp
            if side == 1:
                fc /= 2
            side = 1
        if abs(c - a) <= tol:
            return p
    raise RuntimeError("Illinois iteration did not converge")


class Family:
    """One family of rays: parameter interval, gap(param), X(gap)."""

    def __init__(self, kind, p_start, p_end, gap, gap_np, x_of, x_of_np):
        self.kind = kind
        self.p_start, self.p_end = p_start, p_end
        self.gap, self.gap_np = gap, gap_np
        self.x_of, self.x_of_np = x_of, x_of_np

    def x(self, p):
        return self.x_of(self.gap(p))

    def x_np(self, p):
        return self.x_of_np(self.gap_np(np.asarray(p, dtype=float)))

    def analyse(self, scan):
        """Scan, locate and refine interior extrema, value the piece ends."""
        self.grid = np.linspace(float(self.p_start), float(self.p_end), scan + 1)
        self.grid_x = self.x_np(self.grid)
        if not np.all(np.isfinite(self.grid_x)):
            raise RuntimeError("scan produced non-finite values (%s)" % self.kind)
        diff = np.diff(self.grid_x)
        noise = 1e-11 * (1.0 + np.maximum(np.abs(self.grid_x[:-1]),
                                          np.abs(self.grid_x[1:])))
        signs = np.where(np.abs(diff) < noise, 0, np.sign(diff)).astype(int)
        ext = []  # (grid index of the extremum sample, maximise)
        last, last_k = 0, None
        for k, sg in enumerate(signs):
            if sg == 0:
                continue
            if last != 0 and sg != last:
                ext.append(((last_k + 1 + k) // 2, last > 0))
            last, last_k = sg, k
        lo, hi = sorted((self.p_start, self.p_end))
        self.extrema = []
        for k, maximise in ext:
            c0 = self.grid[max(k - 1, 0)]
            c1 = self.grid[min(k + 1, len(self.grid) - 1)]
            a, c = min(c0, c1), max(c0, c1)
            sgn = 1.0 if maximise else -1.0

            def fnp(p):
                return sgn * float(self.x_np(np.array([p]))[0])

            g = (5 ** 0.5 - 1) / 2
            x1, x2 = c - g * (c - a), a + g * (c - a)
            f1, f2 = fnp(x1), fnp(x2)
            for _ in range(60):
                if f1 >= f2:
                    c, x2, f2 = x2, x1, f1
                    x1 = c - g * (c - a)
                    f1 = fnp(x1)
                else:
                    a, x1, f1 = x1, x2, f2
                    x2 = a + g * (c - a)
                    f2 = fnp(x2)
            p, val = refine_extremum(self.x, mpf(0.5 * (x1 + x2)), lo, hi, maximise)
            self.extrema.append({"param": p, "gap": self.gap(p), "x": val,
                                 "type": "max" if maximise else "min"})
        self.extrema.sort(key=lambda e: e["param"], reverse=self.p_start > self.p_end)
        self.nodes = [(self.p_start, self.x(self.p_start))]
        self.nodes += [(e["param"], e["x"]) for e in self.extrema]
        self.nodes.append((self.p_end, self.x(self.p_end)))
        # the pieces between the nodes must be monotone on the scan grid
        for (pa, xa), (pc, xc) in zip(self.nodes[:-1], self.nodes[1:]):
            seq = [float(xa)] + self._inside(pa, pc) + [float(xc)]
            steps = np.diff(seq) * (1 if xc >= xa else -1)
            bound = 1e-9 * (1.0 + np.maximum(np.abs(seq[:-1]), np.abs(seq[1:])))
            if np.any(steps < -bound):
                raise RuntimeError("piece of the %s family not monotone" % self.kind)
        return self

    def _inside(self, pa, pc, with_params=False):
        """Scan samples strictly between pa and pc, in the order pa -> pc."""
        lo, hi = float(min(pa, pc)), float(max(pa, pc))
        sel = [(p, x) for p, x in zip(self.grid, self.grid_x) if lo < p < hi]
        sel.sort(key=lambda item: item[0], reverse=pa > pc)
        return sel if with_params else [x for _, x in sel]

    def roots(self, target):
        """Parameters of all rays of this family with X = target."""
        found = []
        tol = abs(self.p_end - self.p_start) * eps_tol(4)
        f = lambda p: self.x(p) - target
        ftarget = float(target)
        for (pa, xa), (pc, xc) in zip(self.nodes[:-1], self.nodes[1:]):
            fa, fc = xa - target, xc - target
            if fa == 0:
                if not found or found[-1] != pa:
                    found.append(pa)
                continue
            if fc == 0:
                found.append(pc)
                continue
            if fa * fc > 0:
                continue
            # tight starting bracket from the scan grid, checked in mpmath
            a, fa_, c, fc_ = pa, fa, pc, fc
            samples = self._inside(pa, pc, with_params=True)
            prev = None
            for p, x in samples:
                if (x - ftarget) * float(fa) <= 0:
                    q = mpf(p)
                    fq = f(q)
                    if fq * fa < 0:
                        c, fc_ = q, fq
                    if prev is not None:
                        fp = f(prev)
                        if fp * fc_ < 0:
                            a, fa_ = prev, fp
                    break
                prev = mpf(p)
            found.append(illinois(f, a, fa_, c, fc_, tol))
        return found


# ---------------------------------------------------------------------------
# ray records
# ---------------------------------------------------------------------------

def degrees(rad):
    return rad * 180 / mp.pi


def ray_record(kind, b, ctime, length, launch, arrival, turning):
    return {
        "kind": kind,
        "invariant": b,
        "travel_time": ctime / mpf(SPEED_OF_LIGHT),
        "path_length": length,
        "launch_zenith": launch,
        "arrival_zenith": arrival,
        "turning_z": turning,
    }


def ice_up_zenith(medium, a, z):
    """Zenith [deg] of the up-going direction of the ray of gap a at z <= 0."""
    a_z = medium.gap_at(z)
    b = medium.n_deep - a
    n = medium.n_deep - a_z
    d = a - a_z  # n(z) - b
    if d < 0:
        if d < -eps_tol(8):
            raise RuntimeError("ray does not reach height %s" % z)
        d = mpf(0)
    return degrees(mp.atan2(b, mp.sqrt(d * (n + b))))


def check_hit(x, dist):
    if abs(x - dist) > eps_tol(10) * (1 + dist):
        raise RuntimeError("refined ray misses the receiver: %s vs %s" % (x, dist))


def ice_to_ice(medium, src, rcv, scan):
    dist = abs(rcv[0] - src[0])
    zs, zr = src[1], rcv[1]
    z_lo, z_hi = min(zs, zr), max(zs, zr)
    info = {"direct_horizon_x": None, "max_reach_x": None,
            "max_reach_invariant": None, "extrema": []}
    notes = []
    if dist == 0 and zs == zr:
        raise ValueError("source and receiver coincide")
    if medium.uniform:
        return uniform_ice_to_ice(medium, src, rcv, info, notes)
    pair = IcePair(medium, z_lo, z_hi)
    fams = [f.analyse(scan) for f in pair.families()]
    if pair.equal:
        notes.append("equal depths: no direct family (X_h = 0)")
    info["direct_horizon_x"] = mpf(0) if pair.equal else pair.direct(pair.a_hi)
    found = []  # (kind, gap)
    if dist == 0:
        found.append(("direct", medium.n_deep))
        if z_hi < 0:
            found.append(("reflected", medium.n_deep))
        notes.append("vertical: straight up/down rays with b = 0")
    up_max = None
    for fam in fams:
        if dist > 0:
            for p in fam.roots(dist):
                found.append((fam.kind, fam.gap(p)))
        for e in fam.extrema:
            info["extrema"].append({"subfamily": fam.kind, "type": e["type"],
                                    "invariant": medium.n_deep - e["gap"], "x": e["x"]})
        if fam.kind == "direct":
            if fam.extrema:
                notes.append("direct family not monotone (unexpected)")
            continue
        candidates = [(e["x"], e["gap"]) for e in fam.extrema if e["type"] == "max"]
        candidates += [(x, fam.gap(p)) for p, x in (fam.nodes[0], fam.nodes[-1])]
        for xv, av in candidates:
            if up_max is None or xv > up_max[0]:
                up_max = (xv, av)
    if up_max is not None:
        info["max_reach_x"] = up_max[0]
        info["max_reach_invariant"] = medium.n_deep - up_max[1]
        if up_max[1] == medium.contrast:
            notes.append("maximum reach at the grazing ray b = n_surface (kink "
                         "between refracted and reflected rays)")
        n_max = sum(1 for e in info["extrema"] if e["type"] == "max")
        if n_max > 1:
            notes.append("up-going family has %d interior maxima" % n_max)
    else:
        notes.append("point on the surface: only the direct family exists")
    rays = []
    seen = []
    for kind, a in found:
        # a root exactly at a family join would be found twice
        if any(k == kind and abs(a - aa) <= eps_tol(6) for k, aa in seen):
            continue
        seen.append((kind, a))
        b = medium.n_deep - a
        if kind == "direct":
            x, length, ctime = pair.direct(a, full=True)
            up_s, up_r = ice_up_zenith(medium, a, zs), ice_up_zenith(medium, a, zr)
            if zr > zs:
                launch, arrival = up_s, up_r
            else:
                launch, arrival = 180 - up_s, 180 - up_r
            turning = None
        else:
            x, length, ctime = pair.upgoing(a, full=True)
            top = pair.top_of(a)
            if (kind == "refracted") != (top is None):
                raise RuntimeError("kind %s does not match the top of the ray" % kind)
            turning = None
            if kind == "refracted":
                turning = medium.turning_height(a)
                if not turning < 0:
                    raise RuntimeError("turning point not below the surface")
            launch = ice_up_zenith(medium, a, zs)
            arrival = 180 - ice_up_zenith(medium, a, zr)
        check_hit(x, dist)
        rays.append(ray_record(kind, b, ctime, length, launch, arrival, turning))
    return rays, info, notes


def uniform_ice_to_ice(medium, src, rcv, info, notes):
    n = medium.n_deep
    dist = abs(rcv[0] - src[0])
    zs, zr = src[1], rcv[1]
    notes.append("uniform firn: straight rays; no direct horizon, no maximum reach")
    dz = zr - zs
    length = mp.sqrt(dist ** 2 + dz ** 2)
    zen = degrees(mp.atan2(dist, dz))
    rays = [ray_record("direct", n * dist / length, n * length, length, zen, zen, None)]
    if max(zs, zr) < 0:
        dz_img = -(zs + zr)  # towards the mirror image of the receiver
        length = mp.sqrt(dist ** 2 + dz_img ** 2)
        launch = degrees(mp.atan2(dist, dz_img))
        rays.append(ray_record("reflected", n * dist / length, n * length, length,
                               launch, 180 - launch, None))
    return rays, info, notes


# ---------------------------------------------------------------------------
# cases with a point in the air
# ---------------------------------------------------------------------------

def air_to_air(medium, src, rcv):
    na = medium.n_air
    dist = abs(rcv[0] - src[0])
    zs, zr = src[1], rcv[1]
    dz = zr - zs
    length = mp.sqrt(dist ** 2 + dz ** 2)
    zen = degrees(mp.atan2(dist, dz))
    rays = [ray_record("direct", na * dist / length, na * length, length, zen, zen, None)]
    dz_img = -(zs + zr)
    length = mp.sqrt(dist ** 2 + dz_img ** 2)
    launch = degrees(mp.atan2(dist, dz_img))
    rays.append(ray_record("reflected", na * dist / length, na * length, length,
                           launch, 180 - launch, None))
    return rays, ["air to air: straight direct ray and specular surface reflection"]


def air_and_ice(medium, src, rcv):
    na = medium.n_air
    dist = abs(rcv[0] - src[0])
    zs, zr = src[1], rcv[1]
    z_air, z_ice = (zs, zr) if zs > 0 else (zr, zs)

    def through(psi, full):
        b = na * mp.sin(psi)
        a = medium.n_deep - b
        air_len = z_air / mp.cos(psi)
        air_x = z_air * mp.tan(psi)
        if full:
            x, length, ctime = firn_stretch(medium, a, z_ice, mpf(0), True)
            return a, air_x + x, air_len + length, na * air_len + ctime
        return air_x + firn_stretch(medium, a, z_ice, mpf(0), False)

    if dist == 0:
        psi = mpf(0)
    else:
        hi = mp.atan2(dist, z_air)  # the air leg alone reaches dist there
        f_hi = through(hi, False) - dist
        psi = illinois(lambda p: through(p, False) - dist, mpf(0), -dist, hi, f_hi,
                       eps_tol(4))
    a, x, length, ctime = through(psi, True)
    check_hit(x, dist)
    up_ice = ice_up_zenith(medium, a, z_ice)
    if zs > 0:
        launch, arrival = 180 - degrees(psi), 180 - up_ice
    else:
        launch, arrival = up_ice, degrees(psi)
    notes = ["transmitted ray only (X grows monotonically with the air zenith)"]
    b = medium.n_deep - a
    return [ray_record("transmitted", b, ctime, length, launch, arrival, None)], notes


# ---------------------------------------------------------------------------
# driver
# ---------------------------------------------------------------------------

def describe(rays, info, dist, extra):
    kinds = [r["kind"] for r in rays]
    if not rays:
        head = "no ray (shadow zone)"
    else:
        parts = ["%d %s" % (kinds.count(k), k) for k in
                 ("direct", "refracted", "reflected", "transmitted") if kinds.count(k)]
        head = ", ".join(parts)
        if "direct" not in kinds and "transmitted" not in kinds:
            head += ", no direct"
    notes = [head] + list(extra)
    xh, xm = info.get("direct_horizon_x"), info.get("max_reach_x")
    if xh is not None and xm is not None and dist > 0:
        if dist < xh:
            rel = "X below the direct horizon (X_h - X = %.3f m)" % float(xh - dist)
        else:
            rel = "X beyond the direct horizon (X - X_h = %.3f m)" % float(dist - xh)
        if dist > xm:
            rel += ", beyond the maximum reach (X - X_max = %.3f m)" % float(dist - xm)
        else:
            rel += ", within the maximum reach (X_max - X = %.3f m)" % float(xm - dist)
        notes.append(rel)
    elif xh is not None and dist > 0:
        side = "below" if dist < xh else "beyond"
        notes.append("X %s the direct horizon (|X - X_h| = %.3f m)"
                     % (side, abs(float(dist - xh))))
    return "; ".join(notes)


def num(v):
    return None if v is None else float(v)


def solve_case(case, profiles, scan):
    params = profiles[case["profile"]]
    medium = Medium(params)
    src = [to_mp(v) for v in case["source"]]
    rcv = [to_mp(v) for v in case["receiver"]]
    dist = abs(rcv[0] - src[0])
    info = {"direct_horizon_x": None, "max_reach_x": None,
            "max_reach_invariant": None, "extrema": []}
    if src[1] > 0 and rcv[1] > 0:
        rays, notes = air_to_air(medium, src, rcv)
    elif src[1] > 0 or rcv[1] > 0:
        rays, notes = air_and_ice(medium, src, rcv)
    else:
        rays, info, notes = ice_to_ice(medium, src, rcv, scan)
    rays.sort(key=lambda r: r["travel_time"])
    keys = ("kind", "invariant", "travel_time", "path_length",
            "launch_zenith", "arrival_zenith", "turning_z")
    return {
        "profile_key": case["profile"],
        "profile": {k: float(v) for k, v in params.items()},
        "source": [float(v) for v in case["source"]],
        "receiver": [float(v) for v in case["receiver"]],
        "direct_horizon_x": num(info["direct_horizon_x"]),
        "max_reach_x": num(info["max_reach_x"]),
        "max_reach_invariant": num(info["max_reach_invariant"]),
        "upgoing_extrema": [{"subfamily": e["subfamily"], "type": e["type"],
                             "invariant": num(e["invariant"]), "x": num(e["x"])}
                            for e in info["extrema"]],
        "notes": describe(rays, info, dist, notes),
        "rays": [{k: (r[k] if k == "kind" else num(r[k])) for k in keys} for r in rays],
    }


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--catalogue", default=DEFAULT_CATALOGUE)
    ap.add_argument("--output", default=DEFAULT_OUTPUT)
    ap.add_argument("--dps", type=int, default=DEFAULT_DPS)
    ap.add_argument("--scan", type=int, default=DEFAULT_SCAN,
                    help="samples per family for the bracketing scan")
    ap.add_argument("--only", nargs="*",
                    help="compute only these cases and print them (writes nothing)")
    args = ap.parse_args(argv)
    if args.dps < 30:
        ap.error("--dps must be at least 30")
    mp.dps = args.dps
    with open(args.catalogue) as fh:
        cat = yaml.safe_load(fh)
    profiles = cat["profiles"]
    results = {}
    start = time.time()
    for case in cat["cases"]:
        if args.only and case["name"] not in args.only:
            continue
        if case["name"] in results:
            raise ValueError("duplicate case name %s" % case["name"])
        t0 = time.time()
        res = solve_case(case, profiles, args.scan)
        results[case["name"]] = res
        print("%-34s %5.1fs  %s" % (case["name"], time.time() - t0, res["notes"]),
              file=sys.stderr)
    print("total %.1fs" % (time.time() - start), file=sys.stderr)
    doc = {
        "generator": "tests/generators/reference_rays.py (mpmath %s; tanh-sinh "
                     "quadrature of the ray integrals, bracketed roots, %d scan "
                     "samples per family)" % (mpmath.__version__, args.scan),
        "mp_dps": args.dps,
        "speed_of_light": float(mpf(SPEED_OF_LIGHT)),
        "units": {"x": "m", "z": "m", "travel_time": "ns", "path_length": "m",
                  "zenith": "deg, of the propagation direction (0 = up)"},
        "cases": results,
    }
    if args.only:
        json.dump(results, sys.stdout, indent=1)
        print()
        return
    with open(args.output, "w") as fh:
        json.dump(doc, fh, indent=1)
        fh.write("\n")


if __name__ == "__main__":
    main()
