"""Independent high-precision reference rays for three non-exponential profiles.

What it computes
----------------
For three index profiles n(z) of the firn (z = height [m], negative in the
ice, n_air = 1 exactly above z = 0) and twelve geometries each (plus one
where the profile allows four rays), this script
finds every ray between a source and a receiver and writes, for each ray,
its kind, Snell invariant b = n(z) sin(zenith), travel time [ns], path
length [m], launch and arrival zenith [deg] (of the propagation direction:
0 = up, 90 = horizontal, 180 = down) and turning height [m] (refracted rays
only) to ``tests/data/reference_general.json``.  For two points in the ice
it also stores the direct-horizon distance X_h (reach of the direct ray that
arrives horizontally at the upper point) and the maximum reach X_max of the
up-going family (rays that rise above the upper point, turn in the firn or
bounce off the surface, and come down to it), with the nodes of that family
(ends, profile breaks, interior extrema).

Profiles (all with n_air = 1.0 above z = 0)
-------------------------------------------
``two-piece-exponential``
    0 >= z >= -15: n = 1.78 - (1.78 - 1.35) exp(z / 9.0);
    z < -15: n = 1.78 - (1.78 - n_b) exp((z + 15) / 40.0), n_b = n(-15) of
    the upper piece (n continuous, dn/dz jumps at z = -15).
``pchip-table``
    samples z_k = 0, -2, ..., -150 (76), n_k = the two-piece profile above
    evaluated in double precision; interpolant: the monotone piecewise cubic
    Hermite interpolant of Fritsch & Carlson (1980, SIAM J. Numer. Anal. 17,
    238-246) as built by ``scipy.interpolate.PchipInterpolator`` from the
    samples in increasing z.  Its piecewise-cubic coefficients ``.c`` and
    breakpoints ``.x`` (doubles) are evaluated exactly in mpmath; the value
    at a breakpoint is that of the cubic above it (scipy's right-open
    intervals in increasing z).  Below z = -150 n is constant, n(-150).
``smooth-function``
    n = 1.78 - 0.38 exp(z / 30.0) - 0.07 exp(z / 4.0) for z <= 0.
Decimal constants (1.78, 9.0, -15, ...) are taken at their decimal values.

Geometries: see ``CASES`` below (source and receiver (x, z) [m]).  Three are
made by the script: ``near-shadow`` (source at z = -100, receiver at z = -5,
X = 0.995 X_max of that depth pair rounded down to 1 cm, i.e. 0.5 % inside
the shadow edge on the lit side; see ``near_shadow_case``), ``multi-ray``
(only for a profile whose refracted family at equal depths -20 m has an
interior minimum followed by a maximum: X = the mean of the two reaches,
where four refracted rays arrive; see ``multi_ray_case``), and ``shadow``
must come out without any ray (checked: X beyond X_h and X_max).

How
---
Everything reported is computed with mpmath at ``mp.dps`` = 30.

* Ray integrals.  Over a monotone stretch z_bot <= z <= z_top the ray of
  invariant b has X = int b / sqrt(n^2 - b^2) dz, L = int n / sqrt(n^2 -
  b^2) dz, c T = int n^2 / sqrt(n^2 - b^2) dz (c = 0.299792458 m/ns).  The
  substitution z = z_top - t^2 removes the inverse-square-root singularity
  at a turning point (and makes a near-horizontal end benign).  The
  quantity q = n(z) - b is never formed by subtracting two nearly equal
  numbers: it is carried from q(z_top) = e_top (given exactly by the ray
  parameter: 0 at a turning point, 2 n sin^2((pi/2 - zenith)/2) at an end
  with known zenith) and increased piece by piece by the rise
  n(z_a - u) - n(z_a) >= 0 of the profile below a point z_a, written for
  each kind of piece without cancellation (exponential pieces:
  A exp((z_a - z0)/h) (-expm1(-u/h)); cubic pieces: the exact Taylor
  polynomial at z_a).  The quadrature is split at every breakpoint of the
  profile (z = -15; every 2 m table breakpoint and z = -150), on each
  piece it is an adaptive Gauss-Legendre rule (16 and 32 nodes computed at
  the working precision; the interval is bisected until the two agree to
  1e-20 relative, so that the 32-node value is good to far below 1e-25).
  Air stretches are straight and added in closed form.
* Ray families between two ice points z_lo <= z_hi <= 0.  Direct rays by
  their zenith phi at z_hi (X grows monotonically with b = n(z_hi) sin phi,
  every integrand does).  Refracted rays by their turning height z_t,
  z_hi <= z_t <= 0, split at every breakpoint of the profile and on each
  piece [z_a, z_b] parametrised by w with z_t = z_a + (z_b - z_a) w^2, so
  that X is smooth at the lower end (where a ray first reaches into the
  piece above a breakpoint X has a (z_t - z_a)^(1/2) term if dn/dz jumps
  there, as at z = -15 of the two-piece profile, a cusp of X(z_t), and a
  (z_t - z_a)^(3/2) term at the C^1 table breakpoints).  Breaks of dn/dz
  are nodes of the family; at a table breakpoint X is C^1 and its
  double-precision value suffices ("soft" node) unless a root is near.
  In the table profile n is constant below -150; where the horizon ray
  b = n(z_hi) runs along that constant stretch
  (z_hi <= -150 and z_lo < z_hi) X_h is infinite, and the refracted family
  starts at z_t = -150 with X -> infinity (scanned on a geometric grid in w
  from ``W_MIN``); both are then stored as null (status "infinite").
  Reflected rays by their zenith psi at the surface, b = n(0) sin psi
  (monotone in b as well).  Transmitted rays (one point in the air) by the
  zenith in the air (monotone).
* Root finding.  Each branch is scanned densely in double precision (a
  vectorised version of the same integrals with adaptive 8/16-node
  Gauss-Legendre, used only to place brackets and locate extrema).  Every
  interior extremum of the scan is refined in mpmath (golden section in
  double, then Newton steps on central differences in mpmath); a possible
  extremum hiding in the first or last scan cell is looked for by one-sided
  differences.  Between consecutive nodes (branch ends, breaks, extrema) the
  scan must be monotone; every sign change of X - X_target is narrowed in
  double, checked in mpmath and refined by a bracketed Illinois iteration in
  mpmath.  Every ray found is integrated again and must hit the receiver to
  1e-15 m.
* Self-checks (the script stops if one fails).  For every ray: Fermat's
  relation dT/dX = b / c along its family (central differences in mpmath,
  1e-10 relative); c T between n_min L and n_max L; an independent shooting
  of the ray through the Hamiltonian ray equations
  dx/dtau = b, dz/dtau = p_z, dp_z/dtau = n dn/dz, dT/dtau = n^2 / c
  (scipy ``solve_ivp``, DOP853, rtol 1e-12, surface bounce as an event; air
  legs straight) from the source with the stored invariant and launch
  direction, which must reach the receiver's x at its z to ``ODE_TOL_M`` =
  1e-5 m and take the stored time to ``ODE_TOL_NS`` = 1e-5 ns (seen: at
  most about 2e-6).
  Reciprocity: for ``RECIPROCITY_CASES`` source and receiver are swapped and
  solved again (same b, T, L; launch and arrival zenith exchanged and
  mirrored); ``<profile>/air-to-ice`` and ``<profile>/ice-to-air`` are mirror
  images of each other and must agree likewise.  Precision: for
  ``PRECISION_CASES`` all rays are solved again at 40 digits and must agree
  to 1e-24 relative.

Output
------
``{"generator", "mp_dps", "speed_of_light", "units", "profiles", "cases"}``;
``profiles`` holds the full definitions (for the table: samples, scipy
breakpoints and coefficients); each case ``"<profile>/<geometry>"`` holds
``profile``, ``source``, ``receiver``, ``direct_horizon_x`` and
``max_reach_x`` with ``direct_horizon_status`` / ``max_reach_status``
("finite", "infinite" (stored as null), "none" (stored as null: no such
ray, i.e. a point in the air, or a point on the surface for X_max)),
``max_reach_invariant``, ``max_reach_turning_z``, ``upgoing_nodes`` (nodes
of the refracted family in turning height: "horizon" (z_t = z_hi, reach
X_h), "max" / "min" (interior extrema), "break" (z = -15 of the two-piece
profile), "grazing" (z_t = 0, the join with the reflected rays, whose reach
grows monotonically up to it) and "divergent" (first scan point of a family
whose reach grows without bound, x null)), ``notes`` and ``rays`` sorted by
travel time, each ``{"kind", "invariant", "travel_time_ns",
"path_length_m", "launch_zenith_deg", "arrival_zenith_deg",
"turning_z_m"}``.  Floats are the doubles nearest to the mpmath values
(written with repr, i.e. 17 significant digits at most).

This script shares no code with the firnray package and imports nothing from
it; it needs numpy, scipy and mpmath.  It runs the cases on ``--jobs``
worker processes (default 2); the result does not depend on their number.

Usage: python tests/generators/reference_general.py [--output PATH]
       [--jobs N] [--scan N] [--only NAME ...] [--no-checks]
"""

import argparse
import json
import math
import multiprocessing
import os
import sys
import time

import mpmath
import numpy as np
import scipy
from mpmath import mp, mpf
from scipy.integrate import solve_ivp
from scipy.interpolate import PchipInterpolator

HERE = os.path.dirname(os.path.abspath(__file__))
REPO = os.path.dirname(os.path.dirname(HERE))
DEFAULT_OUTPUT = os.path.join(REPO, "tests", "data", "reference_general.json")

DPS = 30
SPEED_OF_LIGHT = "0.299792458"  # m/ns
DEFAULT_SCAN = 2000             # scan samples per branch
W_MIN = 1e-5                    # start of the geometric scan of a divergent branch
HORIZON_GAP = 1e-9              # pi/2 - phi at the end of a direct branch with X_h = inf
NEAR_SHADOW_FRACTION = 0.995    # X = 0.995 X_max for the near-shadow geometry
NEAR_SHADOW_DEPTHS = (-100.0, -5.0)
MULTI_RAY_DEPTHS = (-20.0, -20.0)
PROFILE_NAMES = ("two-piece-exponential", "pchip-table", "smooth-function")

# geometry name -> (source, receiver) [m]; near-shadow is filled in per profile
CASES = [
    ("deep-to-shallow", (0.0, -600.0), (1500.0, -100.0)),
    ("deep-to-antenna-near", (0.0, -300.0), (300.0, -150.0)),
    ("shallow-pair", (0.0, -30.0), (250.0, -20.0)),
    ("shallow-pair-far", (0.0, -60.0), (700.0, -40.0)),
    ("equal-depth", (0.0, -50.0), (400.0, -50.0)),
    ("steep", (0.0, -1000.0), (100.0, -10.0)),
    ("surface-receiver", (0.0, -200.0), (600.0, 0.0)),
    ("near-shadow", None, None),
    ("shadow", (0.0, -20.0), (2000.0, -20.0)),
    ("air-to-ice", (0.0, 20.0), (150.0, -80.0)),
    ("ice-to-air", (0.0, -80.0), (150.0, 20.0)),
    ("deep-both-below-table", (0.0, -400.0), (500.0, -300.0)),
    ("multi-ray", None, None),   # only where the refracted family has a min-max pair
]
RECIPROCITY_CASES = ("deep-to-shallow", "shallow-pair-far", "near-shadow", "steep")
PRECISION_CASES = ("deep-to-shallow", "near-shadow")

N_LO, N_HI = 16, 32              # Gauss-Legendre pair in mpmath
ACCEPT_MP = "1e-20"              # |G32 - G16| accepted, relative
F_LO, F_HI = 8, 16               # Gauss-Legendre pair of the double scan
ACCEPT_F = 1e-9
ODE_TOL_M = 1e-5                 # agreement of the shooting check [m]
ODE_TOL_NS = 1e-5                # [ns]


class ReferenceError(RuntimeError):
    pass


def dec(value):
    """Decimal value of a number as an mpf (1.78 means 1.78 exactly)."""
    return mpf(repr(float(value)))


def degrees(rad):
    return rad * 180 / mp.pi


# ---------------------------------------------------------------------------
# profile pieces: n(z), and the rise n(z_a - u) - n(z_a) >= 0 without
# cancellation, in mpmath and (vectorised) in double precision
# ---------------------------------------------------------------------------

class ExpSumPiece:
    """n(z) = n_deep - sum_i A_i exp((z - z0_i) / h_i) on one piece."""

    def __init__(self, n_deep, terms):
        self.n_deep = n_deep
        self.terms = terms
        self.n_deep_f = float(n_deep)
        self.terms_f = [(float(a), float(z0), float(h)) for a, z0, h in terms]

    def n(self, z):
        s = mpf(0)
        for a, z0, h in self.terms:
            s += a * mp.exp((z - z0) / h)
        return self.n_deep - s

    def rise(self, z_a):
        coefs = [(a * mp.exp((z_a - z0) / h), 1 / h) for a, z0, h in self.terms]
        if len(coefs) == 1:
            (c0, k0), = coefs
            return lambda u: -c0 * mp.expm1(-u * k0)

        def rise(u):
            s = mpf(0)
            for c, k in coefs:
                s -= c * mp.expm1(-u * k)
            return s
        return rise

    def n_f(self, z):
        return self.n_deep_f - sum(a * np.exp((z - z0) / h) for a, z0, h in self.terms_f)

    def dn_f(self, z):
        return -sum(a / h * np.exp((z - z0) / h) for a, z0, h in self.terms_f)

    def rise_f(self, z_a, u):
        return sum(a * np.exp((z_a - z0) / h) * -np.expm1(-u / h)
                   for a, z0, h in self.terms_f)


class CubicPiece:
    """n(z) = ((c0 x + c1) x + c2) x + c3, x = z - z_left (one PPoly piece)."""

    def __init__(self, coeffs, z_left):
        self.c = [mpf(float(v)) for v in coeffs]  # exact binary values
        self.z_left = mpf(float(z_left))
        self.cf = [float(v) for v in coeffs]
        self.z_left_f = float(z_left)

    def n(self, z):
        c0, c1, c2, c3 = self.c
        x = z - self.z_left
        return ((c0 * x + c1) * x + c2) * x + c3

    def rise(self, z_a):
        c0, c1, c2, _ = self.c
        x = z_a - self.z_left
        d1 = (3 * c0 * x + 2 * c1) * x + c2   # dn/dz at z_a
        d2h = 3 * c0 * x + c1                 # (d2n/dz2) / 2 at z_a
        return lambda u: u * (-d1 + u * (d2h - u * c0))

    def n_f(self, z):
        c0, c1, c2, c3 = self.cf
        x = z - self.z_left_f
        return ((c0 * x + c1) * x + c2) * x + c3

    def dn_f(self, z):
        c0, c1, c2, _ = self.cf
        x = z - self.z_left_f
        return (3 * c0 * x + 2 * c1) * x + c2

    def rise_f(self, z_a, u):
        c0, c1, c2, _ = self.cf
        x = z_a - self.z_left_f
        d1 = (3 * c0 * x + 2 * c1) * x + c2
        d2h = 3 * c0 * x + c1
        return u * (-d1 + u * (d2h - u * c0))


class Profile:
    """Monotone n(z) for z <= 0 made of pieces between breakpoints ``knots``.

    ``knots`` descend; piece j lies between knots[j] (below) and knots[j-1]
    (above; 0 for j = 0), the last piece extends to any depth.  At a knot n
    is the value of the piece above it.  ``kinks`` are the knots where dn/dz
    jumps (nodes of the refracted family); below ``flat_top`` n is constant.
    """

    def __init__(self, name, knots, pieces, kinks, flat_top, definition):
        self.name = name
        self.knots = [mpf(k) for k in knots]
        self.knots_f = np.array([float(k) for k in knots])
        self.neg_knots_f = -self.knots_f
        self.knot_index = {k: i for i, k in enumerate(self.knots)}
        self.pieces = pieces
        self.kinks = [mpf(k) for k in kinks]
        self.flat_top = None if flat_top is None else mpf(flat_top)
        self.definition = definition
        if len(pieces) != len(knots) + 1:
            raise ValueError("need one piece more than knots")
        # n(piece below) - n(piece above) at each knot (0 for continuous n)
        self.jumps = [pieces[i + 1].n(k) - pieces[i].n(k)
                      for i, k in enumerate(self.knots)]
        self.n_surface = self.n(mpf(0))
        self.n_surface_f = float(self.n_surface)

    def piece_at(self, z):
        return sum(1 for k in self.knots if k > z)

    def piece_below(self, z):
        return sum(1 for k in self.knots if k >= z)

    def n(self, z):
        if z > 0:
            return mpf(1)
        return self.pieces[self.piece_at(z)].n(z)

    def _index_f(self, z):
        return np.searchsorted(self.neg_knots_f, -np.asarray(z, dtype=float), side="left")

    def n_f(self, z):
        z = np.asarray(z, dtype=float)
        idx = self._index_f(z)
        out = np.empty_like(z)
        for j in np.unique(idx):
            sel = idx == j
            out[sel] = self.pieces[j].n_f(z[sel])
        return out

    def n_dn_scalar(self, z):
        """n and dn/dz at one height z <= 0 in double precision (ODE check)."""
        if z > 0:
            return 1.0, 0.0
        j = int(np.searchsorted(self.neg_knots_f, -z, side="left"))
        p = self.pieces[j]
        return float(p.n_f(z)), float(p.dn_f(z))


def two_piece_double(z):
    """The two-piece profile in double precision (defines the table samples)."""
    if z >= -15.0:
        return 1.78 - (1.78 - 1.35) * math.exp(z / 9.0)
    n_b = 1.78 - (1.78 - 1.35) * math.exp(-15.0 / 9.0)
    return 1.78 - (1.78 - n_b) * math.exp((z + 15.0) / 40.0)


def build_profiles():
    n_deep, n_s = dec(1.78), dec(1.35)
    # two-piece exponential
    top = ExpSumPiece(n_deep, [(n_deep - n_s, mpf(0), dec(9.0))])
    n_b = top.n(dec(-15))
    low = ExpSumPiece(n_deep, [(n_deep - n_b, dec(-15), dec(40.0))])
    two = Profile("two-piece-exponential", [-15], [top, low], [-15], None, {
        "type": "piecewise-exponential",
        "n_air": 1.0,
        "n_surface": 1.35,
        "n_deep": 1.78,
        "break_z": -15.0,
        "pieces": [
            {"z_top": 0.0, "z_bottom": -15.0, "scale_depth": 9.0,
             "formula": "n = 1.78 - (1.78 - 1.35) * exp(z / 9.0)"},
            {"z_top": -15.0, "z_bottom": None, "scale_depth": 40.0, "n_b": float(n_b),
             "formula": "n = 1.78 - (1.78 - n_b) * exp((z + 15) / 40.0), "
                        "n_b = n(-15) of the upper piece"},
        ],
        "continuity": "n continuous, dn/dz jumps at z = -15",
    })
    # pchip table
    z_desc = [float(-2 * k) for k in range(76)]  # 0.0, -2.0, ..., -150.0
    n_desc = [two_piece_double(z) for z in z_desc]
    z_inc = np.array(z_desc[::-1])
    n_inc = np.array(n_desc[::-1])
    interp = PchipInterpolator(z_inc, n_inc)
    cc, xx = interp.c, interp.x
    if cc.shape != (4, 75) or not np.array_equal(xx, z_inc):
        raise ReferenceError("unexpected PchipInterpolator layout")
    pieces = []
    for j in range(75):            # descending: piece j = scipy interval 74 - j
        i = 74 - j
        pieces.append(CubicPiece(cc[:, i], xx[i]))
    pieces.append(CubicPiece([0.0, 0.0, 0.0, n_inc[0]], -150.0))  # constant below
    table = Profile("pchip-table", z_desc[1:], pieces, [-150], -150, {
        "type": "pchip-table",
        "n_air": 1.0,
        "z": z_desc,
        "n": n_desc,
        "sample_definition": "n_k = two-piece-exponential at z_k, double precision",
        "interpolant": "scipy.interpolate.PchipInterpolator(z increasing, n) "
                       "(Fritsch & Carlson 1980, SIAM J. Numer. Anal. 17, 238-246); "
                       "piece i on [x_i, x_i+1): n = c[0,i] t^3 + c[1,i] t^2 + "
                       "c[2,i] t + c[3,i], t = z - x_i",
        "ppoly_x": [float(v) for v in xx],
        "ppoly_c": [[float(v) for v in row] for row in cc],
        "below_table": "n constant = n(-150) for z < -150",
        "scipy_version": scipy.__version__,
    })
    # smooth function
    smooth_piece = ExpSumPiece(n_deep, [(dec(0.38), mpf(0), dec(30.0)),
                                        (dec(0.07), mpf(0), dec(4.0))])
    smooth = Profile("smooth-function", [], [smooth_piece], [], None, {
        "type": "function",
        "n_air": 1.0,
        "n_surface": 1.33,
        "formula": "n = 1.78 - 0.38 * exp(z / 30.0) - 0.07 * exp(z / 4.0), z <= 0",
    })
    profs = {p.name: p for p in (two, table, smooth)}
    table.definition["max_abs_jump_between_cubics"] = float(max(abs(j) for j in table.jumps))
    return profs


# ---------------------------------------------------------------------------
# quadrature
# ---------------------------------------------------------------------------

_RULES = {}


def gl_rule_mp(npts):
    """Gauss-Legendre nodes and weights on [-1, 1] at the working precision."""
    guesses, _ = np.polynomial.legendre.leggauss(npts)
    nodes, weights = [], []
    with mp.extradps(20):
        tiny = mpf(10) ** (-(mp.dps - 4))
        for g in guesses:
            x = mpf(float(g))
            for _ in range(60):
                p_prev, p = mpf(1), x
                for k in range(2, npts + 1):
                    p_prev, p = p, ((2 * k - 1) * x * p - (k - 1) * p_prev) / k
                dp = npts * (x * p - p_prev) / (x * x - 1)
                dx = p / dp
                x -= dx
                if abs(dx) < tiny:
                    break
            p_prev, p = mpf(1), x
            for k in range(2, npts + 1):
                p_prev, p = p, ((2 * k - 1) * x * p - (k - 1) * p_prev) / k
            dp = npts * (x * p - p_prev) / (x * x - 1)
            nodes.append(x)
            weights.append(2 / ((1 - x * x) * dp * dp))
    return [+v for v in nodes], [+v for v in weights]


def rules_mp():
    key = mp.dps
    if key not in _RULES:
        _RULES[key] = (gl_rule_mp(N_LO), gl_rule_mp(N_HI))
    return _RULES[key]


def _gl3(f, mid, half, nodes, weights):
    s0 = s1 = s2 = mpf(0)
    for x, w in zip(nodes, weights):
        v0, v1, v2 = f(mid + half * x)
        s0 += w * v0
        s1 += w * v1
        s2 += w * v2
    return s0 * half, s1 * half, s2 * half


def integrate3(f, a, c):
    """Adaptive Gauss-Legendre integral of the 3-vector f over [a, c]."""
    (xl, wl), (xh, wh) = rules_mp()
    accept = mpf(ACCEPT_MP)
    tot = [mpf(0), mpf(0), mpf(0)]
    stack = [(a, c, 0)]
    while stack:
        lo, hi, depth = stack.pop()
        half = (hi - lo) / 2
        mid = lo + half
        gl = _gl3(f, mid, half, xl, wl)
        gh = _gl3(f, mid, half, xh, wh)
        err = max(abs(gh[i] - gl[i]) for i in range(3))
        if err <= accept * (1 + abs(gh[2])):
            for i in range(3):
                tot[i] += gh[i]
        elif depth >= 90:
            raise ReferenceError("quadrature does not converge on [%s, %s]" % (lo, hi))
        else:
            stack.append((lo, mid, depth + 1))
            stack.append((mid, hi, depth + 1))
    return tot


def stretch(prof, z_bot, z_top, e_top, b):
    """Ray integrals over z_bot <= z <= z_top (<= 0) for invariant b.

    e_top = n(z_top) - b >= 0.  Returns ((X, L, cT), q_bot) with
    q_bot = n(z_bot) - b.
    """
    if z_top == z_bot:
        return (mpf(0), mpf(0), mpf(0)), e_top
    if z_bot > z_top or z_top > 0:
        raise ReferenceError("bad stretch %s .. %s" % (z_bot, z_top))
    zs = [z_top] + [k for k in prof.knots if z_bot < k < z_top] + [z_bot]
    q = e_top
    tot = [mpf(0), mpf(0), mpf(0)]
    two_b = 2 * b
    for z_a, z_b in zip(zs[:-1], zs[1:]):
        ki = prof.knot_index.get(z_a)
        if ki is not None:
            q = q + prof.jumps[ki]
        if q < 0:
            raise ReferenceError("n(z) < b at z = %s (q = %s)" % (z_a, q))
        rise = prof.pieces[prof.piece_below(z_a)].rise(z_a)
        s_a = z_top - z_a
        q_a = q

        def f(t, s_a=s_a, q_a=q_a, rise=rise):
            qq = q_a + rise(t * t - s_a)
            n = b + qq
            g = 2 * t / mp.sqrt(qq * (two_b + qq))
            return b * g, n * g, n * n * g

        vals = integrate3(f, mp.sqrt(s_a), mp.sqrt(z_top - z_b))
        for i in range(3):
            tot[i] += vals[i]
        q = q + rise(z_a - z_b)
    return tuple(tot), q


_XL_F, _WL_F = np.polynomial.legendre.leggauss(F_LO)
_XH_F, _WH_F = np.polynomial.legendre.leggauss(F_HI)


def _segment_x_f(piece, zt, za, zb, qa, b):
    """Double-precision X over one piece for many rays (adaptive GL)."""
    sa = zt - za
    lo = np.sqrt(sa)
    hi = np.sqrt(zt - zb)
    out = np.zeros(len(zt))
    idx = np.arange(len(zt))
    for _ in range(120):
        half = 0.5 * (hi - lo)
        mid = lo + half
        s_a, q_a, z_a, bb = sa[idx, None], qa[idx, None], za[idx, None], b[idx, None]

        def rule(xs, ws):
            t = mid[:, None] + half[:, None] * xs
            u = np.maximum(t * t - s_a, 0.0)
            q = q_a + piece.rise_f(z_a, u)
            return half * np.sum(ws * 2.0 * t * bb / np.sqrt(q * (2.0 * bb + q)), axis=1)

        g_lo, g_hi = rule(_XL_F, _WL_F), rule(_XH_F, _WH_F)
        ok = np.abs(g_hi - g_lo) <= ACCEPT_F * (1.0 + np.abs(g_hi))
        np.add.at(out, idx[ok], g_hi[ok])
        if ok.all():
            return out
        bad = ~ok
        idx = np.concatenate([idx[bad], idx[bad]])
        lo, hi = (np.concatenate([lo[bad], mid[bad]]),
                  np.concatenate([mid[bad], hi[bad]]))
    raise ReferenceError("double quadrature does not converge")


def stretch_x_f(prof, z_bot, z_top, e_top, b):
    """X over z_bot <= z <= z_top for arrays of rays, double precision."""
    z_top = np.asarray(z_top, dtype=float)
    m = z_top.shape[0]
    z_bot = np.broadcast_to(np.asarray(z_bot, dtype=float), (m,))
    e_top = np.broadcast_to(np.asarray(e_top, dtype=float), (m,))
    b = np.broadcast_to(np.asarray(b, dtype=float), (m,))
    cols = [z_top] + [np.clip(k, z_bot, z_top) for k in prof.knots_f] + [z_bot]
    x = np.zeros(m)
    q = e_top.copy()
    for k in range(len(cols) - 1):
        za, zb = cols[k], cols[k + 1]
        live = zb < za
        if not live.any():
            continue
        i = np.nonzero(live)[0]
        piece = prof.pieces[k]
        x[i] += _segment_x_f(piece, z_top[i], za[i], zb[i], q[i], b[i])
        q[i] += piece.rise_f(za[i], za[i] - zb[i])
    return x


# ---------------------------------------------------------------------------
# ray families
# ---------------------------------------------------------------------------

def gap_from_zenith(n, zen):
    """n - n sin(zen) without cancellation."""
    return 2 * n * mp.sin((mp.pi / 2 - zen) / 2) ** 2


def gap_from_zenith_f(n, zen):
    return 2.0 * n * np.sin((np.pi / 2 - zen) / 2) ** 2


class Branch:
    """Rays of one kind along a parameter p in [p_lo, p_hi] (X(p) smooth)."""

    def __init__(self, kind, label, p_lo, p_hi, grid, x_f, ray_mp, divergent_lo=False,
                 soft_ends=(False, False)):
        self.kind = kind
        self.soft_ends = soft_ends
        self.label = label
        self.p_lo, self.p_hi = mpf(p_lo), mpf(p_hi)
        self.grid = np.asarray(grid, dtype=float)
        self._x_f = x_f
        self.ray_mp = ray_mp
        self.divergent_lo = divergent_lo

    def x_f(self, p):
        return self._x_f(np.atleast_1d(np.asarray(p, dtype=float)))

    def x(self, p):
        return self.ray_mp(p)["x"]

    # -- scan and extrema ---------------------------------------------------
    def analyse(self):
        g = self.grid
        xs = self.x_f(g)
        if not np.all(np.isfinite(xs)):
            raise ReferenceError("scan of %s gives non-finite values" % self.label)
        self.grid_x = xs
        d = np.diff(xs)
        noise = 1e-11 * (1.0 + np.maximum(np.abs(xs[:-1]), np.abs(xs[1:])))
        sg = np.where(np.abs(d) < noise, 0, np.sign(d)).astype(int)
        cells = []  # (left index, right index, maximise) of a bracket of an extremum
        last, last_k = 0, None
        for k, s in enumerate(sg):
            if s == 0:
                continue
            if last != 0 and s != last:
                cells.append((last_k, k + 1, last > 0))
            last, last_k = s, k
        # extremum hidden in the first or last cell: one-sided slope at the end
        for end in (0, len(g) - 1):
            if end == 0 and self.divergent_lo:
                continue
            inner = 1 if end == 0 else len(g) - 2
            step = (g[inner] - g[end]) * 1e-3
            x_end = xs[end]
            x_near = float(self.x_f(g[end] + step)[0])
            s_end = np.sign(x_near - x_end) if abs(x_near - x_end) > 1e-12 * (1 + abs(x_end)) else 0
            s_cell = np.sign(xs[inner] - x_end)
            if s_end != 0 and s_cell != 0 and s_end != s_cell:
                lo_i, hi_i = (0, 1) if end == 0 else (len(g) - 2, len(g) - 1)
                cells.append((lo_i, hi_i, s_end > 0))
        self.extrema = []
        for lo_i, hi_i, maximise in cells:
            p, xv = self._refine_extremum(g[lo_i], g[hi_i], maximise)
            self.extrema.append({"param": p, "x": xv, "type": "max" if maximise else "min"})
        self.extrema.sort(key=lambda e: e["param"])
        # ends: a soft end (a table breakpoint of the refracted family, where X
        # is smooth) keeps its double-precision value unless a root is near it
        if self.divergent_lo:
            first = (mpf(float(g[0])), self.x(mpf(float(g[0]))), "divergent-end")
        elif self.soft_ends[0]:
            first = (self.p_lo, mpf(float(xs[0])), "soft")
        else:
            first = (self.p_lo, self.x(self.p_lo), "end")
        if self.soft_ends[1]:
            last = (self.p_hi, mpf(float(xs[-1])), "soft")
        else:
            last = (self.p_hi, self.x(self.p_hi), "end")
        self.nodes = [first] + [(e["param"], e["x"], e["type"]) for e in self.extrema] + [last]
        for (pa, xa, _), (pc, xc, _) in zip(self.nodes[:-1], self.nodes[1:]):
            inside = [x for p, x in zip(g, xs) if float(pa) < p < float(pc)]
            seq = np.array([float(xa)] + inside + [float(xc)])
            steps = np.diff(seq) * (1 if xc >= xa else -1)
            bound = 1e-9 * (1.0 + np.abs(seq[1:]))
            if np.any(steps < -bound):
                raise ReferenceError("%s not monotone between nodes" % self.label)
        return self

    def _refine_extremum(self, a, c, maximise):
        sgn = 1.0 if maximise else -1.0
        gr = (5 ** 0.5 - 1) / 2
        f = lambda p: sgn * float(self.x_f(p)[0])  # noqa: E731
        x1, x2 = c - gr * (c - a), a + gr * (c - a)
        f1, f2 = f(x1), f(x2)
        for _ in range(70):
            if f1 >= f2:
                c, x2, f2 = x2, x1, f1
                x1 = c - gr * (c - a)
                f1 = f(x1)
            else:
                a, x1, f1 = x1, x2, f2
                x2 = a + gr * (c - a)
                f2 = f(x2)
        p = mpf(0.5 * (x1 + x2))
        span = self.p_hi - self.p_lo
        lo, hi = self.p_lo, self.p_hi
        for h in ("1e-6", "1e-9", "1e-11", "1e-11", "1e-11", "1e-11"):
            h = mpf(h)
            h = h * span
            if p - h <= lo or p + h >= hi:
                raise ReferenceError("extremum of %s at the branch end" % self.label)
            fm, f0, fp = self.x(p - h), self.x(p), self.x(p + h)
            curv = fp - 2 * f0 + fm
            if (curv >= 0) == maximise:
                raise ReferenceError("extremum of %s: wrong curvature" % self.label)
            step = h * (fm - fp) / (2 * curv)
            p = p + step
            if abs(step) < mpf("1e-18") * span:
                break
        else:
            raise ReferenceError("extremum of %s does not converge" % self.label)
        return p, self.x(p)

    # -- roots ----------------------------------------------------------------
    def roots(self, target):
        found = []
        g, xs = self.grid, self.grid_x
        tf = float(target)
        f = lambda p: self.x(p) - target  # noqa: E731
        near = mpf("1e-7") * (1 + abs(target))
        nodes = []
        for p, xv, typ in self.nodes:
            if typ == "soft" and abs(xv - target) < near:
                xv, typ = self.x(p), "end"
            nodes.append((p, xv, typ))
        for (pa, xa, _), (pc, xc, _) in zip(nodes[:-1], nodes[1:]):
            fa, fc = xa - target, xc - target
            if fa == 0 or fc == 0:
                raise ReferenceError("target exactly at a node of %s" % self.label)
            if (fa > 0) == (fc > 0):
                continue
            ps = [float(pa)] + [p for p in g if float(pa) < p < float(pc)] + [float(pc)]
            xv = [float(xa)] + [x for p, x in zip(g, xs) if float(pa) < p < float(pc)] + [float(xc)]
            brackets = []
            for k in range(len(ps) - 1):
                if (xv[k] - tf) * (xv[k + 1] - tf) <= 0:
                    brackets.append((ps[k], ps[k + 1]))
                    break
            # narrow in double precision
            a, c = brackets[-1]
            for _ in range(4):
                sub = np.linspace(a, c, 33)
                sx = self.x_f(sub) - tf
                k = np.nonzero(np.sign(sx[:-1]) != np.sign(sx[1:]))[0]
                if len(k) != 1:
                    break
                a, c = sub[k[0]], sub[k[0] + 1]
                brackets.append((a, c))
            for a, c in list(reversed(brackets)) + [(float(pa), float(pc))]:
                ma = pa if a == float(pa) else mpf(a)
                mc = pc if c == float(pc) else mpf(c)
                fa_, fc_ = f(ma), f(mc)
                if (fa_ > 0) != (fc_ > 0):
                    break
            else:
                raise ReferenceError("no verified bracket in %s" % self.label)
            found.append(illinois(f, ma, fa_, mc, fc_, (self.p_hi - self.p_lo) * mpf("1e-27")))
        return found


def illinois(f, a, fa, c, fc, tol):
    """Root of f in [a, c] with f(a) f(c) < 0 (Illinois, kept in bracket)."""
    side = 0
    for _ in range(300):
        p = (a * fc - c * fa) / (fc - fa)
        lo, hi = (a, c) if a < c else (c, a)
        if not lo < p < hi:
            p = (a + c) / 2
        fp = f(p)
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
    raise ReferenceError("Illinois iteration does not converge")


class IcePair:
    """Ray families between two points in the ice (z_lo <= z_hi <= 0)."""

    def __init__(self, prof, z_lo, z_hi, scan):
        self.prof = prof
        self.z_lo, self.z_hi = z_lo, z_hi
        self.zf_lo, self.zf_hi = float(z_lo), float(z_hi)
        self.n_hi = prof.n(z_hi)
        self.n_hi_f = float(self.n_hi)
        self.scan = scan
        flat = prof.flat_top
        # horizon ray b = n(z_hi) runs along a constant stretch of n: X_h infinite
        self.horizon_infinite = flat is not None and z_hi <= flat and z_lo < z_hi
        self.z_start = z_hi
        self.refr_divergent = False
        if flat is not None and z_hi <= flat:
            self.z_start = flat
            self.refr_divergent = z_lo < flat

    # --- mp rays ---
    def direct(self, phi):
        b = self.n_hi * mp.sin(phi)
        e = gap_from_zenith(self.n_hi, phi)
        ints, q_lo = stretch(self.prof, self.z_lo, self.z_hi, e, b)
        return {"b": b, "x": ints[0], "length": ints[1], "ctime": ints[2],
                "q_lo": q_lo, "q_hi": e, "turning": None, "top": self.z_hi}

    def upgoing(self, z_top, e_top, b):
        i1, q_lo = stretch(self.prof, self.z_lo, z_top, e_top, b)
        i2, q_hi = stretch(self.prof, self.z_hi, z_top, e_top, b)
        return {"b": b, "x": i1[0] + i2[0], "length": i1[1] + i2[1],
                "ctime": i1[2] + i2[2], "q_lo": q_lo, "q_hi": q_hi, "top": z_top}

    def refracted(self, z_t):
        ray = self.upgoing(z_t, mpf(0), self.prof.n(z_t))
        ray["turning"] = z_t
        return ray

    def reflected(self, psi):
        ns = self.prof.n_surface
        ray = self.upgoing(mpf(0), gap_from_zenith(ns, psi), ns * mp.sin(psi))
        ray["turning"] = None
        return ray

    # --- double versions for the scan ---
    def direct_f(self, phi):
        b = self.n_hi_f * np.sin(phi)
        e = gap_from_zenith_f(self.n_hi_f, phi)
        return stretch_x_f(self.prof, self.zf_lo, np.full_like(phi, self.zf_hi), e, b)

    def upgoing_f(self, z_top, e_top, b):
        return (stretch_x_f(self.prof, self.zf_lo, z_top, e_top, b)
                + stretch_x_f(self.prof, self.zf_hi, z_top, e_top, b))

    def refracted_f(self, z_t):
        return self.upgoing_f(z_t, np.zeros_like(z_t), self.prof.n_f(z_t))

    def reflected_f(self, psi):
        ns = self.prof.n_surface_f
        return self.upgoing_f(np.zeros_like(psi), gap_from_zenith_f(ns, psi), ns * np.sin(psi))

    def branches(self):
        out = []
        half_pi = mp.pi / 2
        n = self.scan
        if self.z_lo < self.z_hi:
            if self.horizon_infinite:
                p_hi = half_pi - mpf(HORIZON_GAP)
                grid = np.concatenate([np.linspace(0.0, float(p_hi) - 1e-3, n),
                                       float(half_pi) - np.geomspace(1e-3, HORIZON_GAP, 60)])
            else:
                p_hi = half_pi
                grid = np.linspace(0.0, np.pi / 2, n + 1)
            out.append(Branch("direct", "direct", 0, p_hi, grid, self.direct_f, self.direct))
        if self.z_hi < 0:
            # split at every breakpoint; a break of dn/dz is a hard node (X has a
            # square-root cusp there), a table breakpoint (n in C^1) a soft one
            nodes = ([self.z_start] + sorted(k for k in self.prof.knots if self.z_start < k < 0)
                     + [mpf(0)])
            hard = [True] + [k in self.prof.kinks for k in nodes[1:-1]] + [True]
            per_piece = max(80, n // (len(nodes) - 1))
            for i, (za, zb) in enumerate(zip(nodes[:-1], nodes[1:])):
                divergent = self.refr_divergent and i == 0
                soft = (not hard[i], not hard[i + 1])
                zaf, zbf = float(za), float(zb)

                def zt_mp(w, za=za, zb=zb):
                    return za + (zb - za) * w * w

                def x_f(w, zaf=zaf, zbf=zbf):
                    return self.refracted_f(zaf + (zbf - zaf) * w * w)

                def ray(w, zt_mp=zt_mp):
                    return self.refracted(zt_mp(w))

                if divergent:
                    w0 = W_MIN
                    while float(x_f(np.array([w0]))[0]) < 1e5:
                        w0 /= 10
                    grid = np.concatenate([np.geomspace(w0, 0.05, 400)[:-1],
                                           np.linspace(0.05, 1.0, per_piece)])
                    br = Branch("refracted", "refracted[%g,%g]" % (zaf, zbf), w0, 1, grid,
                                x_f, ray, divergent_lo=True, soft_ends=soft)
                else:
                    br = Branch("refracted", "refracted[%g,%g]" % (zaf, zbf), 0, 1,
                                np.linspace(0.0, 1.0, per_piece + 1), x_f, ray,
                                soft_ends=soft)
                br.zt_mp = zt_mp
                out.append(br)
            out.append(Branch("reflected", "reflected", 0, half_pi,
                              np.linspace(0.0, np.pi / 2, n + 1), self.reflected_f,
                              self.reflected))
        return out


# ---------------------------------------------------------------------------
# cases
# ---------------------------------------------------------------------------

def up_zenith(b, q):
    """Zenith [deg] of the up-going direction where n - b = q."""
    return degrees(mp.atan2(b, mp.sqrt(q * (2 * b + q))))


def record(kind, b, ctime, length, launch, arrival, turning, x):
    return {"kind": kind, "invariant": b, "travel_time_ns": ctime / mpf(SPEED_OF_LIGHT),
            "path_length_m": length, "launch_zenith_deg": launch,
            "arrival_zenith_deg": arrival, "turning_z_m": turning, "x": x}


def ice_to_ice(prof, src, rcv, scan):
    dist = abs(rcv[0] - src[0])
    zs, zr = src[1], rcv[1]
    if dist == 0:
        raise ReferenceError("vertical geometry not covered")
    z_lo, z_hi = min(zs, zr), max(zs, zr)
    pair = IcePair(prof, z_lo, z_hi, scan)
    info = {"direct_horizon_x": None, "direct_horizon_status": "finite",
            "max_reach_x": None, "max_reach_status": "finite",
            "max_reach_invariant": None, "max_reach_turning_z": None,
            "upgoing_nodes": [], "notes": []}
    if z_lo == z_hi:
        info["direct_horizon_x"] = mpf(0)
        info["notes"].append("equal depths: no direct family, X_h = 0")
    elif pair.horizon_infinite:
        info["direct_horizon_status"] = "infinite"
        info["notes"].append("X_h infinite: the horizon ray b = n(z_hi) runs along the "
                             "constant-index stretch below the table")
    else:
        info["direct_horizon_x"] = pair.direct(mp.pi / 2)["x"]
    branches = [br.analyse() for br in pair.branches()]
    found = []
    best = None
    soft_max = mpf(0)
    for br in branches:
        for p in br.roots(dist):
            found.append((br, p))
        if br.kind == "direct":
            if br.extrema:
                raise ReferenceError("direct family not monotone")
            continue
        if br.kind == "reflected":
            if br.extrema:
                raise ReferenceError("reflected family not monotone")
            continue
        for p, xv, typ in br.nodes:
            zt = br.zt_mp(p)
            if typ == "soft":
                soft_max = max(soft_max, xv)
                continue
            node = {"type": typ, "turning_z": zt, "invariant": prof.n(zt), "x": xv}
            if typ == "end":
                if zt == 0:
                    node["type"] = "grazing"
                elif zt == z_hi:
                    node["type"] = "horizon"
                else:
                    node["type"] = "break"
            if typ == "divergent-end":
                node["type"] = "divergent (X -> inf as z_t -> %s)" % float(pair.z_start)
                node["x"] = None
            if not any(n_["turning_z"] == zt for n_ in info["upgoing_nodes"]):
                info["upgoing_nodes"].append(node)
            if node["x"] is not None and (best is None or xv > best[0]):
                best = (xv, zt)
    if z_hi == 0:
        info["max_reach_status"] = "none"
        info["notes"].append("receiver or source on the surface: no up-going family")
    elif pair.refr_divergent:
        info["max_reach_status"] = "infinite"
        info["notes"].append("X_max infinite: refracted rays turning just above z = -150 "
                             "run nearly horizontally along the constant-index stretch")
    else:
        if soft_max > best[0] * (1 + mpf("1e-9")):
            raise ReferenceError("a table breakpoint lies above the maximum reach")
        info["max_reach_x"] = best[0]
        info["max_reach_turning_z"] = best[1]
        info["max_reach_invariant"] = prof.n(best[1])
    n_ext = sum(len(br.extrema) for br in branches if br.kind == "refracted")
    if n_ext:
        info["notes"].append("refracted family has %d interior extrema" % n_ext)
    rays = []
    for br, p in found:
        ray = br.ray_mp(p)
        b = ray["b"]
        if abs(ray["x"] - dist) > mpf("1e-15"):
            raise ReferenceError("ray misses the receiver by %s" % (ray["x"] - dist))
        q_src = ray["q_lo"] if zs == z_lo else ray["q_hi"]
        q_rcv = ray["q_hi"] if zs == z_lo else ray["q_lo"]
        if zs == zr:
            q_src = q_rcv = ray["q_lo"]
        if br.kind == "direct":
            if zs < zr:
                launch, arrival = up_zenith(b, q_src), up_zenith(b, q_rcv)
            else:
                launch, arrival = 180 - up_zenith(b, q_src), 180 - up_zenith(b, q_rcv)
        else:
            launch, arrival = up_zenith(b, q_src), 180 - up_zenith(b, q_rcv)
        rays.append(record(br.kind, b, ray["ctime"], ray["length"], launch, arrival,
                           ray["turning"], ray["x"]))
        rays[-1]["_q_src"] = q_src
        rays[-1]["_branch"] = (br, p)
    return rays, info


def air_and_ice(prof, src, rcv, scan):
    dist = abs(rcv[0] - src[0])
    zs, zr = src[1], rcv[1]
    z_air, z_ice = (zs, zr) if zs > 0 else (zr, zs)
    ns = prof.n_surface
    zf_air, zf_ice = float(z_air), float(z_ice)

    def ray(psi):
        b = mp.sin(psi)
        ints, q_ice = stretch(prof, z_ice, mpf(0), ns - b, b)
        air_len = z_air / mp.cos(psi)
        return {"b": b, "x": ints[0] + z_air * mp.tan(psi), "length": ints[1] + air_len,
                "ctime": ints[2] + air_len, "q_ice": q_ice, "psi": psi}

    def x_f(psi):
        b = np.sin(psi)
        return zf_air * np.tan(psi) + stretch_x_f(prof, zf_ice, np.zeros_like(psi),
                                                   prof.n_surface_f - b, b)

    p_hi = mp.atan2(dist, z_air)  # the air leg alone reaches dist there
    br = Branch("transmitted", "transmitted", 0, p_hi,
                np.linspace(0.0, float(p_hi), scan + 1), x_f, ray).analyse()
    if br.extrema:
        raise ReferenceError("transmitted family not monotone")
    roots = br.roots(dist)
    if len(roots) != 1:
        raise ReferenceError("expected one transmitted ray, found %d" % len(roots))
    r = ray(roots[0])
    if abs(r["x"] - dist) > mpf("1e-15"):
        raise ReferenceError("transmitted ray misses the receiver")
    up_ice = up_zenith(r["b"], r["q_ice"])
    if zs > 0:
        launch, arrival = 180 - degrees(r["psi"]), 180 - up_ice
    else:
        launch, arrival = up_ice, degrees(r["psi"])
    rec = record("transmitted", r["b"], r["ctime"], r["length"], launch, arrival, None, r["x"])
    rec["_branch"] = (br, roots[0])
    rec["_q_src"] = r["q_ice"] if zs <= 0 else None
    info = {"direct_horizon_x": None, "direct_horizon_status": "none",
            "max_reach_x": None, "max_reach_status": "none",
            "max_reach_invariant": None, "max_reach_turning_z": None,
            "upgoing_nodes": [],
            "notes": ["one point in the air: a single transmitted ray (X grows "
                      "monotonically with the zenith in the air)"]}
    return [rec], info


def solve(prof, src, rcv, scan):
    if src[1] > 0 and rcv[1] > 0:
        raise ReferenceError("air-to-air not covered")
    if src[1] > 0 or rcv[1] > 0:
        rays, info = air_and_ice(prof, src, rcv, scan)
    else:
        rays, info = ice_to_ice(prof, src, rcv, scan)
    rays.sort(key=lambda r: r["travel_time_ns"])
    return rays, info


def near_shadow_case(prof, scan):
    """Receiver 0.5 % inside the shadow edge X_max of the depth pair."""
    z_src, z_rcv = (dec(v) for v in NEAR_SHADOW_DEPTHS)
    _, info = ice_to_ice(prof, [mpf(0), z_src], [mpf(1), z_rcv], scan)
    x_max = info["max_reach_x"]
    x = math.floor(float(x_max) * NEAR_SHADOW_FRACTION * 100.0) / 100.0
    note = ("near-shadow geometry: source depth %g m, receiver depth %g m, receiver at "
            "X = floor(%.3f X_max, 0.01 m) = %.2f m, X_max = %.6f m, "
            "(X_max - X) / X_max = %.5f"
            % (NEAR_SHADOW_DEPTHS[0], NEAR_SHADOW_DEPTHS[1], NEAR_SHADOW_FRACTION, x,
               float(x_max), float((x_max - dec(x)) / x_max)))
    return (0.0, NEAR_SHADOW_DEPTHS[0]), (x, NEAR_SHADOW_DEPTHS[1]), note


def multi_ray_case(prof, scan):
    """Between an interior minimum and the next maximum of the refracted family.

    For the depth pair ``MULTI_RAY_DEPTHS`` the receiver is put at the mean of
    the two extremal reaches (rounded to 1 mm), where four refracted rays
    arrive; None if the family has no such pair.
    """
    z_src, z_rcv = (dec(v) for v in MULTI_RAY_DEPTHS)
    _, info = ice_to_ice(prof, [mpf(0), z_src], [mpf(1), z_rcv], scan)
    nodes = sorted((n_ for n_ in info["upgoing_nodes"] if n_["type"] in ("min", "max")),
                   key=lambda n_: n_["turning_z"])
    for lo, hi in zip(nodes[:-1], nodes[1:]):
        if lo["type"] == "min" and hi["type"] == "max":
            x = round(float((lo["x"] + hi["x"]) / 2), 3)
            note = ("multi-ray geometry: depths %g m and %g m, receiver at X = %.3f m, the mean "
                    "of the refracted family's interior minimum (%.6f m, z_t = %.4f m) and "
                    "maximum (%.6f m, z_t = %.4f m)"
                    % (MULTI_RAY_DEPTHS[0], MULTI_RAY_DEPTHS[1], x, float(lo["x"]),
                       float(lo["turning_z"]), float(hi["x"]), float(hi["turning_z"])))
            return (0.0, MULTI_RAY_DEPTHS[0]), (x, MULTI_RAY_DEPTHS[1]), note
    return None


# ---------------------------------------------------------------------------
# self-checks
# ---------------------------------------------------------------------------

def check_fermat(rec):
    """dT/dX = b / c along the ray's family (central differences)."""
    br, p = rec["_branch"]
    h = (br.p_hi - br.p_lo) * mpf("1e-9")
    lo, hi = br.ray_mp(p - h), br.ray_mp(p + h)
    ratio = (hi["ctime"] - lo["ctime"]) / (hi["x"] - lo["x"])
    if abs(ratio - rec["invariant"]) > mpf("1e-10") * rec["invariant"] + mpf("1e-14"):
        raise ReferenceError("Fermat check fails: dcT/dX = %s, b = %s"
                             % (ratio, rec["invariant"]))


def check_bounds(prof, rec):
    length, ctime = rec["path_length_m"], rec["travel_time_ns"] * mpf(SPEED_OF_LIGHT)
    n_min = mpf(1) if rec["kind"] == "transmitted" else min(prof.n_surface, mpf("1.33"))
    if not (n_min * length <= ctime <= mpf("1.78") * length):
        raise ReferenceError("c T outside [n_min L, n_max L]")


def check_ode(prof, src, rcv, rec):
    """Shoot the ray with the stored launch direction through the ray equations."""
    c = float(mpf(SPEED_OF_LIGHT))
    xs, zs = float(src[0]), float(src[1])
    xr, zr = float(rcv[0]), float(rcv[1])
    sign = 1.0 if xr >= xs else -1.0
    zen = math.radians(float(rec["launch_zenith_deg"]))
    b = float(rec["invariant"])
    # start: straight air leg in closed form down to the surface
    t0 = 0.0
    x0, z0 = xs, zs
    if zs <= 0:
        q = rec["_q_src"]
        pz0 = float(mp.sqrt(q * (2 * rec["invariant"] + q)))
        pz0 = pz0 if zen < math.pi / 2 else -pz0
    if zs > 0:
        x0 = xs + sign * zs * math.tan(math.pi - zen)
        t0 = zs / math.cos(math.pi - zen) / c
        z0 = 0.0
        n_s = prof.n_surface_f
        pz0 = -math.sqrt((n_s - b) * (n_s + b))

    def rhs(_, y):
        n, dn = prof.n_dn_scalar(min(y[1], 0.0))
        return [sign * b, y[2], n * dn, n * n / c]

    def reach(_, y):
        return (y[0] - xr) * sign

    reach.terminal = True

    def surface(_, y):
        return y[1]

    surface.terminal = True
    surface.direction = 1
    y = [x0, z0, pz0, t0]
    tau = 0.0
    to_air = zr > 0
    for _ in range(3):
        sol = solve_ivp(rhs, (tau, tau + 1e5), y, method="DOP853", rtol=1e-12,
                        atol=1e-10, events=[reach, surface])
        if sol.t_events[0].size:
            yend = sol.y_events[0][0]
            break
        if not sol.t_events[1].size:
            raise ReferenceError("ODE ray neither reaches the receiver nor the surface")
        ys = sol.y_events[1][0]
        if to_air:
            psi = math.asin(b)
            x_surf, t_surf = ys[0], ys[3]
            yend = [x_surf + sign * zr * math.tan(psi), zr,
                    0.0, t_surf + zr / math.cos(psi) / c]
            break
        if rec["kind"] != "reflected":
            raise ReferenceError("ODE ray of kind %s hits the surface" % rec["kind"])
        tau = sol.t_events[1][0]
        y = [ys[0], -1e-13, -ys[2], ys[3]]
    else:
        raise ReferenceError("ODE ray bounces too often")
    dz = abs(yend[1] - zr)
    dt = abs(yend[3] - float(rec["travel_time_ns"]))
    dx = abs(yend[0] - xr)
    if dz > ODE_TOL_M or dt > ODE_TOL_NS or dx > ODE_TOL_M:
        raise ReferenceError("ODE shooting disagrees: dx = %.3g m, dz = %.3g m, dt = %.3g ns"
                             % (dx, dz, dt))
    return max(dz, dx), dt


def check_swapped(rays, rays_sw, label):
    if len(rays) != len(rays_sw):
        raise ReferenceError("%s: swapped geometry has %d rays, not %d"
                             % (label, len(rays_sw), len(rays)))
    tol = mpf("1e-22")
    for r, s in zip(rays, rays_sw):
        ok = (r["kind"] == s["kind"]
              and abs(r["invariant"] - s["invariant"]) <= tol
              and abs(r["travel_time_ns"] - s["travel_time_ns"]) <= tol * r["travel_time_ns"]
              and abs(r["path_length_m"] - s["path_length_m"]) <= tol * r["path_length_m"]
              and abs(r["launch_zenith_deg"] - (180 - s["arrival_zenith_deg"])) <= mpf("1e-20")
              and abs(r["arrival_zenith_deg"] - (180 - s["launch_zenith_deg"])) <= mpf("1e-20"))
        if not ok:
            raise ReferenceError("%s: reciprocity check fails" % label)


# ---------------------------------------------------------------------------
# driver
# ---------------------------------------------------------------------------

_PROFILES = None


def _init_worker():
    global _PROFILES
    mp.dps = DPS
    _PROFILES = build_profiles()


def num(v):
    return None if v is None else float(v)


def describe(rays, info, dist):
    kinds = [r["kind"] for r in rays]
    if not rays:
        head = "no ray (shadow zone)"
    else:
        head = ", ".join("%d %s" % (kinds.count(k), k) for k in
                         ("direct", "refracted", "reflected", "transmitted") if kinds.count(k))
    out = [head] + info["notes"]
    xh, xm = info["direct_horizon_x"], info["max_reach_x"]
    if xh is not None and xh > 0:
        out.append("X %s the direct horizon (X - X_h = %.4f m)"
                   % ("below" if dist < xh else "beyond", float(dist - xh)))
    if xm is not None:
        out.append("X %s the maximum reach (X - X_max = %.4f m)"
                   % ("within" if dist <= xm else "beyond", float(dist - xm)))
    return "; ".join(out)


def run_case(job):
    """Solve one case; returns (key, result dict, log line, check summary)."""
    pname, cname, src_f, rcv_f, scan, checks = job
    prof = _PROFILES[pname]
    t0 = time.time()
    extra_notes = []
    if cname == "near-shadow":
        src_f, rcv_f, note = near_shadow_case(prof, scan)
        extra_notes.append(note)
    if cname == "multi-ray":
        made = multi_ray_case(prof, scan)
        if made is None:
            return None
        src_f, rcv_f, note = made
        extra_notes.append(note)
    src = [dec(v) for v in src_f]
    rcv = [dec(v) for v in rcv_f]
    dist = abs(rcv[0] - src[0])
    rays, info = solve(prof, src, rcv, scan)
    info["notes"] = extra_notes + info["notes"]
    if cname == "shadow":
        if rays:
            raise ReferenceError("shadow geometry is lit")
        if not (info["max_reach_x"] < dist and info["direct_horizon_x"] < dist):
            raise ReferenceError("shadow geometry within reach")
        info["notes"].append("verified dark: X beyond X_max and X_h, no root in any family")
    ice_pair = src[1] <= 0 and rcv[1] <= 0
    n_up = sum(1 for r in rays if r["kind"] in ("refracted", "reflected"))
    if ice_pair and n_up > 2:
        info["notes"].append("%d up-going rays" % n_up)
    summary = {"ode_max_dz": 0.0, "ode_max_dt": 0.0, "checks": []}
    if checks:
        for r in rays:
            check_fermat(r)
            check_bounds(prof, r)
            dz, dt = check_ode(prof, src, rcv, r)
            summary["ode_max_dz"] = max(summary["ode_max_dz"], dz)
            summary["ode_max_dt"] = max(summary["ode_max_dt"], dt)
        summary["checks"].append("fermat+bounds+ode")
        if cname in RECIPROCITY_CASES:
            rays_sw, _ = solve(prof, rcv, src, scan)
            check_swapped(rays, rays_sw, pname + "/" + cname)
            summary["checks"].append("reciprocity")
        if cname in PRECISION_CASES:
            with mp.workdps(40):
                rays_hp, _ = solve(prof, src, rcv, scan)
                for r, s in zip(rays, rays_hp):
                    for key in ("travel_time_ns", "path_length_m", "invariant"):
                        if abs(r[key] - s[key]) > mpf("1e-24") * abs(s[key]):
                            raise ReferenceError("precision check fails for %s" % key)
            summary["checks"].append("precision-40")
    keys = ("kind", "invariant", "travel_time_ns", "path_length_m",
            "launch_zenith_deg", "arrival_zenith_deg", "turning_z_m")
    result = {
        "profile": pname,
        "source": [float(v) for v in src_f],
        "receiver": [float(v) for v in rcv_f],
        "direct_horizon_x": num(info["direct_horizon_x"]),
        "direct_horizon_status": info["direct_horizon_status"],
        "max_reach_x": num(info["max_reach_x"]),
        "max_reach_status": info["max_reach_status"],
        "max_reach_invariant": num(info["max_reach_invariant"]),
        "max_reach_turning_z": num(info["max_reach_turning_z"]),
        "upgoing_nodes": [{"type": n_["type"], "turning_z": num(n_["turning_z"]),
                           "invariant": num(n_["invariant"]), "x": num(n_["x"])}
                          for n_ in info["upgoing_nodes"]],
        "notes": describe(rays, info, dist),
        "rays": [{k: (r[k] if k == "kind" else num(r[k])) for k in keys} for r in rays],
    }
    key = pname + "/" + cname
    line = "%-46s %6.1fs  %s" % (key, time.time() - t0, result["notes"])
    return key, result, line, summary


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--output", default=DEFAULT_OUTPUT)
    ap.add_argument("--jobs", type=int, default=2)
    ap.add_argument("--scan", type=int, default=DEFAULT_SCAN)
    ap.add_argument("--only", nargs="*", help="case keys to compute and print (writes nothing)")
    ap.add_argument("--no-checks", action="store_true", help="skip the self-checks")
    args = ap.parse_args(argv)
    jobs = []
    for pname in PROFILE_NAMES:
        for cname, s, r in CASES:
            key = pname + "/" + cname
            if args.only and key not in args.only:
                continue
            jobs.append((pname, cname, s, r, args.scan, not args.no_checks))
    start = time.time()
    _init_worker()
    results = {}

    def collect(outputs):
        for item in outputs:
            if item is None:
                continue
            key, res, line, summary = item
            results[key] = res
            print(line, file=sys.stderr)
            print("    checks: %s; ODE max |dz| %.2g m, max |dT| %.2g ns"
                  % (", ".join(summary["checks"]) or "none", summary["ode_max_dz"],
                     summary["ode_max_dt"]), file=sys.stderr, flush=True)

    if args.jobs > 1:
        with multiprocessing.Pool(args.jobs, initializer=_init_worker) as pool:
            collect(pool.imap(run_case, jobs, chunksize=1))
    else:
        collect(run_case(j) for j in jobs)
    results = {key: results[key] for key in
               (j[0] + "/" + j[1] for j in jobs) if key in results}  # catalogue order
    # mirror pair: air-to-ice and ice-to-air are mirror images of each other
    for pname in PROFILE_NAMES:
        a, b = results.get(pname + "/air-to-ice"), results.get(pname + "/ice-to-air")
        if a and b and not args.no_checks:
            ra, rb = a["rays"][0], b["rays"][0]
            if not (abs(ra["invariant"] - rb["invariant"]) <= 1e-15
                    and abs(ra["travel_time_ns"] - rb["travel_time_ns"])
                    <= 1e-12 * ra["travel_time_ns"]
                    and abs(ra["launch_zenith_deg"] - (180 - rb["arrival_zenith_deg"])) < 1e-10
                    and abs(ra["arrival_zenith_deg"] - (180 - rb["launch_zenith_deg"])) < 1e-10):
                raise ReferenceError("%s: air-to-ice and ice-to-air disagree" % pname)
    print("total %.1fs" % (time.time() - start), file=sys.stderr)
    if args.only:
        json.dump(results, sys.stdout, indent=1)
        print()
        return
    profs = _PROFILES
    doc = {
        "generator": "tests/generators/reference_general.py",
        "generator_details": "mpmath %s, numpy %s, scipy %s; adaptive %d/%d-node "
                             "Gauss-Legendre quadrature of the ray integrals in "
                             "z = z_top - t^2, bracketed roots, %d scan samples per branch"
                             % (mpmath.__version__, np.__version__, scipy.__version__,
                                N_LO, N_HI, args.scan),
        "mp_dps": DPS,
        "speed_of_light": float(mpf(SPEED_OF_LIGHT)),
        "units": {"x": "m", "z": "m (height, negative in the ice)", "travel_time_ns": "ns",
                  "path_length_m": "m",
                  "zenith": "deg, of the propagation direction (0 = up, 180 = down)"},
        "profiles": {name: profs[name].definition for name in PROFILE_NAMES},
        "cases": results,
    }
    with open(args.output, "w") as fh:
        json.dump(doc, fh, indent=1)
        fh.write("\n")


if __name__ == "__main__":
    main()
