"""Independent high-precision reference rays for the geometry catalogue.

What it computes
----------------
For every case of ``tests/cases/geometry.yaml`` this script finds every ray
that joins the source to the receiver in the profile of the case, and writes
for each ray its kind, Snell invariant ``b = n(z) sin(zenith)``, travel time
[ns], path length [m], launch and arrival zenith [deg] and turning height [m]
to ``tests/data/reference_rays.json``.  For two points in the ice it also
stores the direct-horizon distance X_h (the direct ray that arrives
horizontally at the shallower point) and the maximum horizontal reach X_max of
the up-going family (rays that rise above the shallower point, turn in the
firn or bounce off the surface, and come back down to it).

How
---
Everything is evaluated with mpmath at ``mp.dps`` = 32 significant digits.

* Ray integrals.  Over a monotone stretch of firn the horizontal distance,
  path length and travel time are X = int b/sqrt(n^2-b^2) dz,
  L = int n/sqrt(n^2-b^2) dz and T = (1/c) int n^2/sqrt(n^2-b^2) dz.  With
  the exponential profile n(z) = n_deep - (n_deep-n_surface) exp(z/h) each
  invariant b < n_deep has a (possibly virtual, i.e. above the surface)
  turning height z_t where the continued profile equals b.  Writing
  s = z_t - z one has exactly n - b = (n_deep - b)(1 - exp(-s/h)), so the
  difference n - b never suffers cancellation, and the substitution s = t^2
  turns the inverse-square-root turning-point singularity into a smooth,
  bounded integrand.  The integrals in t are evaluated with tanh-sinh
  quadrature (``mpmath.quad``), split at s = h, 4h, 16h, ...; the error
  estimate of every quadrature is checked.  Air stretches are straight lines
  added in closed form (time n_air * length / c); the uniform profile
  (n_surface == n_deep) is a piecewise straight-line problem and is done in
  closed form as well.

* Root finding.  Every family of rays is parametrised by an angle that makes
  its horizontal distance X smooth and (near the ends) linear in the
  parameter: the zenith at the shallower point for the direct rays and the
  refracted rays, the zenith at the surface for the surface-reflected rays,
  the zenith in the air for transmitted rays.  The up-going family is split
  at the grazing ray b = n_surface (turning exactly at the surface), where
  X(b) has a kink.  Each family is scanned densely, every interior extremum
  of the scanned X is located by golden-section search, and on every
  monotone piece a sign change of X - X_target is refined to full precision
  by a safeguarded Illinois (regula falsi) iteration that never leaves its
  bracket.  The refined rays are re-integrated and checked to hit the
  receiver.

This script shares no code with the firnray package: it imports nothing from
it and re-derives everything from the ray equations.  It only needs mpmath
and pyyaml.

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
    return mpf(repr(float(value))) if not isinstance(value, str) else mpf(value)


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

    def index(self, z):
        if z > 0:
            return self.n_air
        return self.n_deep - self.contrast * mp.exp(z / self.scale)

    def turning_height(self, b):
        """Height where the continued profile equals b (above 0 if b < n_s)."""
        return self.scale * mp.log((self.n_deep - b) / self.contrast)


# ---------------------------------------------------------------------------
# ray integrals over one monotone firn stretch
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


def firn_stretch(medium, b, z_bottom, z_top, full=True):
    """Integrals over z_bottom <= z <= z_top (<= 0) for invariant b.

    z_top None means: up to the turning height of b (which must then lie in
    the ice).  Returns (X, L, cT) with cT = c * travel time, or X alone if
    not full.  z_top must not lie above the turning height of b.
    """
    if z_top is not None and z_top == z_bottom:
        return (mpf(0), mpf(0), mpf(0)) if full else mpf(0)
    if medium.uniform:
        if z_top is None:
            raise ValueError("no turning point in a uniform medium")
        n = medium.n_deep
        root = mp.sqrt((n - b) * (n + b))
        dz = z_top - z_bottom
        if full:
            return (dz * b / root, dz * n / root, dz * n * n / root)
        return dz * b / root
    h = medium.scale
    nd = medium.n_deep

    def depth_below_turning(z):
        # s = z_t - z = h log((n_deep - b) / (n_deep - n(z))), written so that
        # b == n(z) gives exactly 0
        nz = medium.index(z)
        return h * mp.log1p((nz - b) / (nd - nz))

    if z_top is None:
        s_top = mpf(0)
    else:
        s_top = depth_below_turning(z_top)
        if s_top < 0:
            if s_top < -mpf(10) ** (-(mp.dps - 8)):
                raise ValueError("stretch reaches above the turning height")
            s_top = mpf(0)
    s_bot = depth_below_turning(z_bottom)
    t_lo = mp.sqrt(s_top)
    t_hi = mp.sqrt(s_bot)
    a = nd - b
    two_sqrt_h = 2 * mp.sqrt(h)

    def parts(t):
        u = t * t / h
        if u == 0:
            ratio = mpf(1)
        else:
            ratio = u / (-mp.expm1(-u))
        n = nd - a * mp.exp(-u)
        weight = two_sqrt_h * mp.sqrt(ratio / (a * (n + b)))
        return n, weight

    pts = _split_points(t_lo, t_hi, h)
    tol = mpf(10) ** (-(mp.dps - 6))

    def integrate(f, scale_of_result):
        val, err = mp.quad(f, pts, error=True, method="tanh-sinh")
        if err > tol * (abs(val) + scale_of_result):
            raise QuadratureError("tanh-sinh error estimate %s for %s" % (err, val))
        return val

    ref = mpf(1)  # absolute floor: 1e-26 m or ns is far below any need
    x = integrate(lambda t: b * parts(t)[1], ref)
    if not full:
        return x

    def f_len(t):
        n, w = parts(t)
        return n * w

    def f_time(t):
        n, w = parts(t)
        return n * n * w

    length = integrate(f_len, ref)
    ctime = integrate(f_time, ref)
    return (x, length, ctime)


# ---------------------------------------------------------------------------
# families of rays between two points in the ice
# ---------------------------------------------------------------------------

class IcePair:
    """Ray families between heights z_lo <= z_hi <= 0."""

    def __init__(self, medium, z_lo, z_hi):
        self.m = medium
        self.z_lo = z_lo
        self.z_hi = z_hi
        self.n_hi = medium.index(z_hi)
        self.equal = z_lo == z_hi
        ns = medium.n_surface
        # zenith at z_hi of the grazing ray (turning exactly at the surface)
        self.phi_graze = mp.asin(ns / self.n_hi) if self.n_hi > ns else mp.pi / 2

    # invariant from family parameters
    def b_from_hi_angle(self, phi):
        if phi == mp.pi / 2:
            return self.n_hi
        return self.n_hi * mp.sin(phi)

    def b_from_surface_angle(self, psi):
        if psi == mp.pi / 2:
            return self.m.n_surface
        return self.m.n_surface * mp.sin(psi)

    def top_of(self, b):
        """Top of the up-going ray: None (turning point in the firn) or 0."""
        if self.m.uniform or b <= self.m.n_surface:
            return mpf(0)
        return None

    def direct(self, b, full=False):
        return firn_stretch(self.m, b, self.z_lo, self.z_hi, full)

    def upgoing(self, b, full=False):
        top = self.top_of(b)
        first = firn_stretch(self.m, b, self.z_lo, top, full)
        second = firn_stretch(self.m, b, self.z_hi, top, full)
        if full:
            return tuple(p + q for p, q in zip(first, second))
        return first + second


# ---------------------------------------------------------------------------
# coarse double-precision scan (numpy): only used to place brackets
# ---------------------------------------------------------------------------

_GL_NODES, _GL_WEIGHTS = np.polynomial.legendre.leggauss(48)


def scan_stretch_x(medium, b, z_bottom, z_top):
    """Horizontal distance of firn stretches in double precision.

    b and z_top are arrays of equal shape, z_bottom a number.  Same
    substitution as firn_stretch, fixed Gauss-Legendre rule per sub-interval.
    Used only to bracket roots and extrema; every reported number is
    recomputed by firn_stretch.
    """
    b = np.asarray(b, dtype=float)
    z_top = np.broadcast_to(np.asarray(z_top, dtype=float), b.shape)
    zb = float(z_bottom)
    if medium.uniform:
        n = float(medium.n_deep)
        return (z_top - zb) * b / np.sqrt((n - b) * (n + b))
    h = float(medium.scale)
    nd = float(medium.n_deep)
    a = nd - b
    zt = h * np.log(a / float(medium.contrast))
    t_lo = np.sqrt(np.maximum(zt - z_top, 0.0))
    t_hi = np.sqrt(np.maximum(zt - zb, 0.0))
    cuts = [t_lo]
    for k in range(8):
        cuts.append(np.clip(np.sqrt(h * 4.0 ** k), t_lo, t_hi))
    cuts.append(t_hi)
    total = np.zeros_like(b)
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
# extremum and root refinement at full precision
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

    Repeated three-point parabola vertices with shrinking spacing; falls back
    to golden-section search if the parabola is not usable.
    """
    span = hi - lo
    p = p0
    for rel in ("1e-5", "1e-9", "1e-13", "1e-17"):
        d = mpf(rel) * span
        if p - d <= lo or p + d >= hi:
            break
        fm, f0, fp = func(p - d), func(p), func(p + d)
        curv = fp - 2 * f0 + fm
        if (maximise and curv >= 0) or (not maximise and curv <= 0):
            break
        step = d * (fm - fp) / (2 * curv)
        if abs(step) > 2 * d:
            break
        p = p + step
    else:
        return p, func(p)
    width = span * mpf(10) ** (-(mp.dps // 2 + 2))
    return golden_extremum(func, max(lo, p - span / 1000), min(hi, p + span / 1000),
                           maximise, width)


def illinois(func, a, fa, c, fc, tol):
    """Root of func in [a, c] with fa*fc < 0 (Illinois, kept in bracket)."""
    if fa == 0:
        return a
    if fc == 0:
        return c
    side = 0
    for _ in range(400):
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
    """One family of rays: parameter interval, b(param), X(b) (mp and numpy)."""

    def __init__(self, kind, p_start, p_end, b_of, b_of_np, x_of, x_of_np):
        self.kind = kind
        self.p_start, self.p_end = p_start, p_end
        self.b_of, self.b_of_np = b_of, b_of_np
        self.x_of, self.x_of_np = x_of, x_of_np

    def x(self, p):
        return self.x_of(self.b_of(p))

    def analyse(self, scan):
        """Scan; locate interior extrema; full-precision values at the nodes."""
        lo, hi = float(self.p_start), float(self.p_end)
        self.grid = np.linspace(lo, hi, scan + 1)
        self.grid_x = self.x_of_np(self.b_of_np(self.grid))
        if not np.all(np.isfinite(self.grid_x)):
            raise RuntimeError("scan produced non-finite values (%s)" % self.kind)
        diff = np.diff(self.grid_x)
        noise = 1e-11 * (1.0 + np.max(np.abs(self.grid_x)))
        signs = []
        for k, dv in enumerate(diff):
            signs.append(0 if abs(dv) < noise else (1 if dv > 0 else -1))
        ext = []  # (grid index, maximise)
        last = None
        last_k = None
        for k, sg in enumerate(signs):
            if sg == 0:
                continue
            if last is not None and sg != last:
                # extremum between grid nodes last_k + 1 .. k
                ext.append(((last_k + 1 + k) // 2, last > 0))
            last, last_k = sg, k
        self.extrema = []
        plo, phi = (self.p_start, self.p_end) if self.p_start < self.p_end \
            else (self.p_end, self.p_start)
        for k, maximise in ext:
            k0, k1 = max(k - 1, 0), min(k + 1, len(self.grid) - 1)
            a, c = self.grid[k0], self.grid[k1]
            if a > c:
                a, c = c, a
            # double-precision golden search for a starting point
            g = (5 ** 0.5 - 1) / 2
            x1, x2 = c - g * (c - a), a + g * (c - a)
            sgn = 1.0 if maximise else -1.0

            def fnp(p):
                return sgn * float(self.x_of_np(self.b_of_np(np.array([p])))[0])

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
            p, val = refine_extremum(self.x, mpf(0.5 * (x1 + x2)), plo, phi, maximise)
            self.extrema.append({"param": p, "b": self.b_of(p), "x": val,
                                 "type": "max" if maximise else "min"})
        self.extrema.sort(key=lambda e: e["param"], reverse=self.p_start > self.p_end)
        self.nodes = [(self.p_start, self.x(self.p_start))]
        self.nodes += [(e["param"], e["x"]) for e in self.extrema]
        self.nodes.append((self.p_end, self.x(self.p_end)))
        # verify the pieces are monotone on the scan grid
        for (pa, xa), (pc, xc) in zip(self.nodes[:-1], self.nodes[1:]):
            inside = [x for p, x in zip(self.grid, self.grid_x)
                      if min(pa, pc) < p < max(pa, pc)]
            seq = [float(xa)] + inside + [float(xc)]
            steps = np.diff(seq) * (1 if xc >= xa else -1)
            if np.any(steps < -1e-9 * (1 + max(abs(v) for v in seq))):
                raise RuntimeError("piece of %s family not monotone" % self.kind)
        return self

    def roots(self, target):
        """Parameters of all rays of this family with X = target."""
        found = []
        tol = abs(self.p_end - self.p_start) * mpf(10) ** (-(mp.dps - 4))
        f = lambda p: self.x(p) - target
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
            # tight starting bracket from the scan grid, checked at full precision
            a, fa2, c, fc2 = pa, fa, pc, fc
            inside = [(p, x) for p, x in zip(self.grid, self.grid_x)
                      if min(pa, pc) < p < max(pa, pc)]
            if pa > pc:
                inside.reverse()
            for (p1, x1), (p2, x2) in zip([(pa, xa)] + inside, inside + [(pc, xc)]):
                if (float(x1) - float(target)) * (float(x2) - float(target)) <= 0:
                    q1 = mpf(p1) if (p1 is not pa) else pa
                    q2 = mpf(p2) if (p2 is not pc) else pc
                    f1 = f(q1) if q1 is not pa else fa
                    f2 = f(q2) if q2 is not pc else fc
                    if f1 * f2 < 0:
                        a, fa2, c, fc2 = q1, f1, q2, f2
                    break
            found.append(illinois(f, a, fa2, c, fc2, tol))
        return found


def ice_families(pair):
    """The ray families between two ice heights, in the order of b."""
    m = pair.m
    ns_f, nhi_f = float(m.n_surface), float(pair.n_hi)
    zlo, zhi = pair.z_lo, pair.z_hi
    half_pi = mp.pi / 2

    def hi_angle_np(phi):
        return np.minimum(nhi_f * np.sin(phi), nhi_f)

    def surf_angle_np(psi):
        return np.minimum(ns_f * np.sin(psi), ns_f)

    def direct_np(b):
        return scan_stretch_x(m, b, zlo, np.full_like(b, float(zhi)))

    def up_np(b):
        if m.uniform:
            top = np.zeros_like(b)
        else:
            zt = float(m.scale) * np.log((float(m.n_deep) - b) / float(m.contrast))
            top = np.where(b > ns_f, np.minimum(zt, 0.0), 0.0)
        return scan_stretch_x(m, b, zlo, top) + scan_stretch_x(m, b, zhi, top)

    fams = []
    if not pair.equal:
        fams.append(Family("direct", mpf(0), half_pi, pair.b_from_hi_angle,
                           hi_angle_np, pair.direct, direct_np))
    if zhi < 0:
        if pair.n_hi > m.n_surface:
            fams.append(Family("refracted", half_pi, pair.phi_graze, pair.b_from_hi_angle,
                               hi_angle_np, pair.upgoing, up_np))
        fams.append(Family("reflected", half_pi, mpf(0), pair.b_from_surface_angle,
                           surf_angle_np, pair.upgoing, up_np))
    return fams


# ---------------------------------------------------------------------------
# ray records
# ---------------------------------------------------------------------------

def degrees(rad):
    return rad * 180 / mp.pi


def ray_record(kind, b, ctime, length, launch, arrival, turning):
    c = mpf(SPEED_OF_LIGHT)
    return {
        "kind": kind,
        "invariant": b,
        "travel_time": ctime / c,
        "path_length": length,
        "launch_zenith": launch,
        "arrival_zenith": arrival,
        "turning_z": turning,
    }


def up_angle(b, n):
    """Zenith of an up-going direction with invariant b at index n."""
    ratio = b / n
    if ratio > 1:
        ratio = mpf(1)
    return degrees(mp.asin(ratio))


def down_angle(b, n):
    return 180 - up_angle(b, n)


def ice_to_ice(medium, src, rcv, scan):
    dist = abs(rcv[0] - src[0])
    zs, zr = src[1], rcv[1]
    z_lo, z_hi = min(zs, zr), max(zs, zr)
    n_s, n_r = medium.index(zs), medium.index(zr)
    info = {"direct_horizon_x": None, "max_reach_x": None,
            "max_reach_invariant": None, "family_extrema": []}
    notes = []
    if medium.uniform:
        return uniform_ice_to_ice(medium, src, rcv, info, notes)
    if dist == 0 and zs == zr:
        raise ValueError("source and receiver coincide")
    pair = IcePair(medium, z_lo, z_hi)
    fams = [f.analyse(scan) for f in ice_families(pair)]
    info["direct_horizon_x"] = mpf(0) if pair.equal else pair.direct(pair.n_hi)
    found = []  # (kind, b)
    if dist == 0:
        found.append(("direct", mpf(0)))
        if z_hi < 0:
            found.append(("reflected", mpf(0)))
        notes.append("vertical geometry: straight up/down rays with b = 0")
    up_max = None
    for fam in fams:
        if dist > 0:
            for p in fam.roots(dist):
                found.append((fam.kind, fam.b_of(p)))
        for e in fam.extrema:
            info["family_extrema"].append(
                {"subfamily": fam.kind, "type": e["type"], "invariant": e["b"], "x": e["x"]})
        if fam.kind == "direct":
            if fam.extrema:
                notes.append("direct family not monotone (unexpected)")
            continue
        candidates = [(e["x"], e["b"]) for e in fam.extrema if e["type"] == "max"]
        candidates += [(x, fam.b_of(p)) for p, x in (fam.nodes[0], fam.nodes[-1])]
        for xv, bv in candidates:
            if up_max is None or xv > up_max[0]:
                up_max = (xv, bv)
    if up_max is not None:
        info["max_reach_x"] = up_max[0]
        info["max_reach_invariant"] = up_max[1]
        if up_max[1] == medium.n_surface:
            notes.append("the up-going family reaches farthest with the grazing ray "
                         "(b = n_surface, kink between refracted and reflected)")
    else:
        notes.append("point on the surface: only the direct family exists")
    n_max = sum(1 for e in info["family_extrema"] if e["type"] == "max")
    if n_max > 1:
        notes.append("up-going family has %d interior maxima" % n_max)
    # a root exactly at a family join would appear twice
    unique = []
    for kind, b in found:
        if any(k == kind and abs(b - bb) <= mpf(10) ** (-(mp.dps - 6)) for k, bb in unique):
            continue
        unique.append((kind, b))
    rays = []
    for kind, b in unique:
        if kind == "direct":
            x, length, ctime = pair.direct(b, full=True)
            turning = None
            if zr > zs:
                launch, arrival = up_angle(b, n_s), up_angle(b, n_r)
            else:
                launch, arrival = down_angle(b, n_s), down_angle(b, n_r)
        else:
            x, length, ctime = pair.upgoing(b, full=True)
            top = pair.top_of(b)
            if (kind == "refracted") != (top is None):
                raise RuntimeError("kind %s does not match the top of the ray" % kind)
            turning = None
            if kind == "refracted":
                turning = medium.turning_height(b)
                if not turning < 0:
                    raise RuntimeError("turning point not below the surface")
            launch, arrival = up_angle(b, n_s), down_angle(b, n_r)
        check_hit(x, dist)
        rays.append(ray_record(kind, b, ctime, length, launch, arrival, turning))
    return rays, info, notes


def check_hit(x, dist):
    if abs(x - dist) > mpf(10) ** (-(mp.dps - 10)) * (1 + dist):
        raise RuntimeError("refined ray misses the receiver: %s vs %s" % (x, dist))


def uniform_ice_to_ice(medium, src, rcv, info, notes):
    n = medium.n_deep
    dist = abs(rcv[0] - src[0])
    zs, zr = src[1], rcv[1]
    rays = []
    notes.append("uniform firn: straight rays, no direct horizon and no maximum reach")
    dz = zr - zs
    length = mp.sqrt(dist ** 2 + dz ** 2)
    zen = degrees(mp.atan2(dist, dz))
    b = n * dist / length
    rays.append(ray_record("direct", b, n * length, length, zen, zen, None))
    if max(zs, zr) < 0:
        dz_img = -(zs + zr)  # to the mirror image of the receiver
        length = mp.sqrt(dist ** 2 + dz_img ** 2)
        b = n * dist / length
        launch = degrees(mp.atan2(dist, dz_img))
        rays.append(ray_record("reflected", b, n * length, length, launch, 180 - launch, None))
    return rays, info, notes


# ---------------------------------------------------------------------------
# cases with a point in the air
# ---------------------------------------------------------------------------

def air_to_air(medium, src, rcv):
    na = medium.n_air
    dist = abs(rcv[0] - src[0])
    zs, zr = src[1], rcv[1]
    rays = []
    dz = zr - zs
    length = mp.sqrt(dist ** 2 + dz ** 2)
    zen = degrees(mp.atan2(dist, dz))
    rays.append(ray_record("direct", na * dist / length, na * length, length, zen, zen, None))
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
    if medium.n_air >= medium.n_surface:
        raise ValueError("transmission code assumes n_air < n_surface")

    def stretch(psi, full):
        b = na * mp.sin(psi)
        cosv = mp.cos(psi)
        air_len = z_air / cosv
        air_x = z_air * mp.tan(psi)
        if full:
            x, length, ctime = firn_stretch(medium, b, z_ice, mpf(0), True)
            return b, air_x + x, air_len + length, na * air_len + ctime
        return air_x + firn_stretch(medium, b, z_ice, mpf(0), False)

    if dist == 0:
        psi = mpf(0)
    else:
        hi = mp.atan2(dist, z_air)  # the air leg alone reaches dist there
        f_hi = stretch(hi, False) - dist
        tol = mpf(10) ** (-(mp.dps - 4))
        psi = illinois(lambda p: stretch(p, False) - dist, mpf(0), -dist, hi, f_hi, tol)
    b, x, length, ctime = stretch(psi, True)
    check_hit(x, dist)
    n_ice = medium.index(z_ice)
    if zs > 0:
        launch, arrival = 180 - degrees(psi), down_angle(b, n_ice)
    else:
        launch, arrival = up_angle(b, n_ice), degrees(psi)
    notes = ["one transmitted ray (X grows monotonically with the air zenith)"]
    return [ray_record("transmitted", b, ctime, length, launch, arrival, None)], notes


# ---------------------------------------------------------------------------
# driver
# ---------------------------------------------------------------------------

def describe(rays, info, dist, extra):
    notes = list(extra)
    kinds = [r["kind"] for r in rays]
    if not rays:
        notes.insert(0, "no ray: shadow zone")
    else:
        counts = []
        for k in ("direct", "refracted", "reflected", "transmitted"):
            if kinds.count(k):
                counts.append("%d %s" % (kinds.count(k), k))
        notes.insert(0, ", ".join(counts) + ("" if "direct" in kinds or
                                             "transmitted" in kinds else ", no direct"))
    xh, xm = info.get("direct_horizon_x"), info.get("max_reach_x")
    if xh is not None and dist > 0:
        if dist < xh:
            rel = "X below the direct horizon (X_h - X = %.3f m)" % float(xh - dist)
        else:
            rel = "X beyond the direct horizon (X - X_h = %.3f m)" % float(dist - xh)
        if xm is not None:
            if dist > xm:
                rel += ", beyond the maximum reach (X - X_max = %.3f m)" % float(dist - xm)
            else:
                rel += ", within the maximum reach (X_max - X = %.3f m)" % float(xm - dist)
        notes.append(rel)
    return "; ".join(notes)


def to_json_number(v):
    if v is None:
        return None
    return float(v)


def solve_case(case, profiles, scan):
    params = profiles[case["profile"]]
    medium = Medium(params)
    src = [to_mp(v) for v in case["source"]]
    rcv = [to_mp(v) for v in case["receiver"]]
    dist = abs(rcv[0] - src[0])
    info = {"direct_horizon_x": None, "max_reach_x": None,
            "max_reach_invariant": None, "family_extrema": []}
    if src[1] > 0 and rcv[1] > 0:
        rays, notes = air_to_air(medium, src, rcv)
    elif src[1] > 0 or rcv[1] > 0:
        rays, notes = air_and_ice(medium, src, rcv)
    else:
        rays, info, notes = ice_to_ice(medium, src, rcv, scan)
    rays.sort(key=lambda r: r["travel_time"])
    out = {
        "profile_key": case["profile"],
        "profile": dict(params),
        "source": [float(v) for v in case["source"]],
        "receiver": [float(v) for v in case["receiver"]],
        "direct_horizon_x": to_json_number(info["direct_horizon_x"]),
        "max_reach_x": to_json_number(info["max_reach_x"]),
        "max_reach_invariant": to_json_number(info["max_reach_invariant"]),
        "upgoing_extrema": [
            {"subfamily": e["subfamily"], "type": e["type"],
             "invariant": float(e["invariant"]), "x": float(e["x"])}
            for e in info["family_extrema"]],
        "notes": describe(rays, info, dist, notes),
        "rays": [{k: (r[k] if k == "kind" else to_json_number(r[k])) for k in
                  ("kind", "invariant", "travel_time", "path_length",
                   "launch_zenith", "arrival_zenith", "turning_z")} for r in rays],
    }
    return out


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--catalogue", default=DEFAULT_CATALOGUE)
    ap.add_argument("--output", default=DEFAULT_OUTPUT)
    ap.add_argument("--dps", type=int, default=DEFAULT_DPS)
    ap.add_argument("--scan", type=int, default=DEFAULT_SCAN,
                    help="samples per family for the bracketing scan")
    ap.add_argument("--only", nargs="*", help="compute only these cases, print, write nothing")
    args = ap.parse_args(argv)
    mp.dps = args.dps
    with open(args.catalogue) as fh:
        cat = yaml.safe_load(fh)
    profiles = cat["profiles"]
    results = {}
    start = time.time()
    for case in cat["cases"]:
        if args.only and case["name"] not in args.only:
            continue
        t0 = time.time()
        res = solve_case(case, profiles, args.scan)
        results[case["name"]] = res
        print("%-32s %5.1fs  %s" % (case["name"], time.time() - t0, res["notes"]),
              file=sys.stderr)
    print("total %.1fs" % (time.time() - start), file=sys.stderr)
    doc = {
        "generator": "tests/generators/reference_rays.py: mpmath %s, tanh-sinh "
                     "quadrature of the ray integrals, bracketed roots; "
                     "scan %d samples per family" % (mpmath.__version__, args.scan),
        "mp_dps": args.dps,
        "speed_of_light_m_per_ns": float(mpf(SPEED_OF_LIGHT)),
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
