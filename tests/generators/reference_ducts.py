"""Independent reference: every ray between two points in two non-monotone profiles.

What it computes
----------------
For two index profiles n(z) whose index is not monotone in depth (z = height
[m], 0 at the snow surface, negative in the ice; n = 1 in the air above
z = 0) and a catalogue of source/receiver geometries (``CASES``), this script
finds, by brute-force ray shooting, every ray from the source (0, z_s) to the
receiver (x_r, z_r) that stays in the ice: direct rays, rays that turn once
or many times (rays trapped in a duct oscillate between two turning
heights) and rays reflected at the surface (k_z -> -k_z; the transmitted
part of the wave is not followed).  For each ray it writes the launch and
arrival zenith [deg] of the propagation direction (0 = up, 90 = horizontal,
180 = down), the Snell invariant b = n sin(zenith), the travel time [ns],
the path length [m], the numbers of turning points and of surface
reflections and the landing miss [m] to ``tests/data/reference_ducts.json``.

Profiles
--------
``gaussian-dip`` (function)
    n(z) = 1.78 - 0.43 exp(z/40) - 0.04 exp(-((z + 30)/3)^2), z <= 0.  The
    Gaussian dip makes a local maximum of n near z = -25.9 m and a local
    minimum near z = -29.4 m: a duct above the dip, a barrier for rays from
    below.
``lens-table`` (table)
    samples z_k = 0, -0.25, ..., -150 (601, in this order),
    n_k = 1.78 - 0.43 exp(z_k/40) + 0.025 exp(-((z_k + 12)/0.6)^2)
          - 0.02 exp(-((z_k + 45)/2)^2) + 0.0004 r_k,
    r = numpy.random.default_rng(20261203).standard_normal(601), rounded to
    6 decimals (the samples are stored in the output).  Between samples
    n(z) = scipy.interpolate.PchipInterpolator(z increasing, n) (the monotone
    cubic Hermite interpolant of Fritsch & Carlson 1980, SIAM J. Numer. Anal.
    17, 238-246); below z = -150 n is constant, n(-150).  The noise makes
    many small local extrema below about z = -35 m (PCHIP puts each extremum
    on a sample); the lens makes a duct around z = -12 m, the inversion a
    barrier around z = -44.5 m.

Ray equations (outside source)
------------------------------
Geometric optics in Hamiltonian form (e.g. Born & Wolf, Principles of
Optics, section 3.2): with the slowness vector k = n * direction and s the
path length,

    dx/ds = k_x/n,  dz/ds = k_z/n,  dk_x/ds = 0,  dk_z/ds = dn/dz,  dt/ds = n/c,

c = 0.299792458 m/ns.  k_x = b is the Snell invariant.

Method
------
1. Scan.  Rays leave the source with k_z = k (the parameter of the scan,
   k = n(z_s) cos(zenith), b = sqrt(n(z_s)^2 - k^2)) over a dense set of
   launch directions: a grid uniform in zenith over 0.1 .. 179.9 deg
   (``COARSE_STEP``), a finer uniform grid within 12 deg of the horizontal
   (``FINE_STEP``), and log-dense grids (``LOG_PER_DECADE``) in
   |b - b_crit| / b_crit from 1e-2 down to 1e-12 on both sides, up and down,
   around every *critical invariant* b_crit of the geometry, in |k| near the
   horizontal launch and in |b - n(0)| near the surface-grazing ray.  Every
   ray is integrated to x = x_r and z(x_r) - z_r is recorded.  A critical
   invariant is the index at a local minimum z_m of n that a ray between the
   two points can graze (n(z_m) is the minimum of n over the hull of z_s,
   z_r and z_m): the distance a ray runs along z_m grows like
   log(1/|b - b_crit|) from either side, so z(x_r) varies on a logarithmic
   scale in b there.  z(x_r) is a continuous function of the launch
   direction (smooth ray equations; a grazing surface reflection joins the
   turning rays continuously), so every sign change of z(x_r) - z_r between
   neighbouring samples brackets a ray.  A ray going down below both points
   whose invariant is smaller than n everywhere below it can never turn
   again; it is stopped there (its z(x_r) is below z_r).
   The scan has its own vectorised integrator in x (dz/dx = k_z/b,
   dk_z/dx = n dn/dz / b, dt/dx = n^2/(c b), ds/dx = n/b: the same equations
   with ds = n/b dx): the Dormand-Prince 8(5,3) pair (the coefficients of
   scipy's DOP853) with step-size control per ray, error norm and controller
   as in scipy (rtol = atol = ``SCAN_TOL``), steps aimed at the table
   breakpoints and at the surface so that no step straddles a break of
   d2n/dz2 or the jump of dn/dz that a ray reflected at z = 0 sees (the
   reflected state is the mirror image z -> -z, k_z -> -k_z).
2. Density check.  The scan is repeated with every grid refined by 2 (the
   samples of a level are a subset of the next) until the number of sign
   changes stops changing (``MIN_LEVELS`` .. ``MAX_LEVELS`` + 1 levels); the
   counts per level are stored.
3. Polish.  The brackets of the last level are narrowed together with the
   scan integrator (Illinois regula falsi), then each ray is shot with
   ``scipy.integrate.solve_ivp`` (DOP853, rtol ``FINAL_RTOL``, atol
   ``FINAL_ATOL``, max_step ``FINAL_MAX_STEP`` m of path, in s) piece by
   piece: a terminal event stops the integration where the ray leaves the
   smooth piece of n(z) it is in (a table breakpoint; the surface, where
   k_z -> -k_z) and it restarts in the next piece with that piece's own
   polynomial, so no step straddles a break of d2n/dz2; arrival is a
   terminal event on x = x_r; turning points are the zeros of k_z.  The
   launch parameter is refined on this shooting by secant steps and, if
   needed, Brent's method (``scipy.optimize.brentq``) inside the scan
   bracket until the ray lands within ``LANDING_TOL`` (or as close as the
   double-precision launch parameter allows near a critical invariant).  A
   ray is reported if it lands within ``ACCEPT_MISS``; every reported number
   comes from this solve_ivp shooting.  Otherwise the bracket is listed
   under ``unconfirmed_sign_changes`` (this happens where the two
   neighbouring samples straddle b_crit itself: a ray exists there, with
   |b - b_crit| / b_crit below about 1e-12, which double precision cannot
   resolve).
4. Checks.  For every ray: the largest deviation of n(z) sin(zenith) from b
   at the solver's steps (``invariant_max_deviation``); the travel time of
   the same launch through the scan integrator (another parametrisation and
   step sequence), both moved to the receiver to first order
   (dT = k_z dz / c at fixed x), difference stored as ``time_check_ns``.
   For ``RECIPROCITY_CASES`` source and receiver are swapped and solved
   again: the same number of rays and the same travel times
   (``checks.reciprocity``).  Per case ``critical`` lists the critical
   invariants with, for each side and launch direction, the ray at the
   smallest sampled |b - b_crit| (1e-12 relative): whether it reaches the
   critical depth before x_r, whether it is still there at x_r, and
   ``odd_rays_beyond_scan`` (it has left the critical depth again and the
   sign of z(x_r) - z_r differs from that of z_m - z_r, its limit as
   b -> b_crit: an odd number of rays lie closer to b_crit than the scan).
   Rays closer to b_crit than about 1e-10 relative are found where the
   integration error of b (about 1e-14) is small against |b - b_crit|, but
   their number is not guaranteed: the list of a case is complete for
   |b - b_crit| / b_crit >= ``RESOLVED_REL`` (stored per case as
   ``complete_above_relative_distance``; per ray ``within_resolved_range``).

Output
------
``{"generator", "created", "versions", "method", "ray_equations",
"speed_of_light", "units", "integration", "scan", "profiles", "cases"}``;
each case ``"<dip|table>/<geometry>"`` holds ``profile``, ``source``,
``receiver``, ``n_rays``, ``scan_levels`` ([{"level", "samples",
"sign_changes"}]), ``critical`` (see above),
``smallest_relative_distance_to_critical`` (over the rays; null without a
critical invariant), ``complete_above_relative_distance``,
``unconfirmed_sign_changes``, ``checks``, ``runtime_s`` and ``rays``
sorted by travel time, each with ``launch_zenith_deg``,
``arrival_zenith_deg``, ``invariant``, ``travel_time_ns``,
``path_length_m``, ``n_turning_points``, ``n_surface_reflections``,
``landing_miss_m`` (z(x_r) - z_r of the shot ray),
``invariant_max_deviation``, ``time_check_ns``, ``check_landing_miss_m``,
``relative_distance_to_critical``, ``critical_z`` (nearest critical
invariant of the case, null if none) and ``within_resolved_range``.

This script shares no code with the firnray package and imports nothing from
it; it needs numpy and scipy.  It runs the cases on ``--jobs`` worker
processes (default 2); the result does not depend on their number.

Usage: python tests/generators/reference_ducts.py [--output PATH] [--jobs N]
       [--only NAME ...] [--levels-max N]
"""

import argparse
import datetime
import json
import math
import multiprocessing
import os
import sys
import time

import numpy as np
import scipy
from scipy.integrate import solve_ivp
from scipy.integrate._ivp import dop853_coefficients as dop
from scipy.interpolate import PchipInterpolator
from scipy.optimize import brentq

HERE = os.path.dirname(os.path.abspath(__file__))
REPO = os.path.dirname(os.path.dirname(HERE))
DEFAULT_OUTPUT = os.path.join(REPO, "tests", "data", "reference_ducts.json")

C_LIGHT = 0.299792458            # m/ns (SI definition)

# scan integrator
SCAN_TOL = 1e-13                 # rtol = atol of the vectorised DOP853 in x
SCAN_MAX_STEP = 4.0              # [m of x]
# scan grids (level 0; level L divides the steps by 2^L)
THETA_MIN = 0.1                  # [deg] the scan covers THETA_MIN .. 180 - THETA_MIN
COARSE_STEP = 0.05               # [deg]
FINE_HALF_WIDTH = 12.0           # [deg] around the horizontal
FINE_STEP = 0.005                # [deg]
LOG_PER_DECADE = 16              # log-dense samples per decade
CRIT_REL_RANGE = (1e-12, 1e-2)   # |b - b_crit| / b_crit
RESOLVED_REL = 1e-10             # the list is complete for larger |b - b_crit| / b_crit
HORIZ_RANGE = (1e-12, 1e-2)      # |k| / n(z_s) near the horizontal launch
GRAZE_REL_RANGE = (1e-12, 1e-2)  # |b - n(0)| / n(0) near the grazing ray
MIN_LEVELS = 2
MAX_LEVELS = 3

# final shooting with solve_ivp
FINAL_RTOL = 1e-13
FINAL_ATOL = 1e-14
FINAL_MAX_STEP = 2.0             # [m of path]
LANDING_TOL = 1e-7               # [m] aim of the polish
ACCEPT_MISS = 1e-5               # [m] a shot landing farther is not reported as a ray

# geometry name -> (profile, source z, receiver x, receiver z); source at x = 0
CASES = [
    ("dip/both-in-duct-50m", "gaussian-dip", -25.0, 50.0, -26.0),
    ("dip/both-in-duct-200m", "gaussian-dip", -25.0, 200.0, -26.0),
    ("dip/both-in-duct-600m", "gaussian-dip", -25.0, 600.0, -26.0),
    ("dip/equal-depth-in-duct-250m", "gaussian-dip", -27.0, 250.0, -27.0),
    ("dip/duct-to-below-dip-300m", "gaussian-dip", -26.0, 300.0, -45.0),
    ("dip/below-dip-100m", "gaussian-dip", -60.0, 100.0, -40.0),
    ("dip/below-dip-400m", "gaussian-dip", -60.0, 400.0, -40.0),
    ("dip/equal-depth-below-dip-150m", "gaussian-dip", -35.0, 150.0, -35.0),
    ("dip/shallow-to-duct-100m", "gaussian-dip", -10.0, 100.0, -24.0),
    ("dip/deep-to-antenna-300m", "gaussian-dip", -300.0, 300.0, -10.0),
    ("dip/deep-to-antenna-450m", "gaussian-dip", -300.0, 450.0, -10.0),
    ("dip/deep-to-antenna-1000m-shadow", "gaussian-dip", -300.0, 1000.0, -5.0),
    ("table/both-in-lens-100m", "lens-table", -12.1, 100.0, -12.4),
    ("table/both-in-lens-400m", "lens-table", -12.1, 400.0, -12.4),
    ("table/antenna-to-lens-80m", "lens-table", -5.0, 80.0, -12.2),
    ("table/lens-to-below-100m", "lens-table", -12.2, 100.0, -20.3),
    ("table/equal-depth-below-lens-90m", "lens-table", -14.1, 90.0, -14.1),
    ("table/above-inversion-200m", "lens-table", -38.1, 200.0, -40.6),
    ("table/across-inversion-250m", "lens-table", -40.6, 250.0, -47.1),
    ("table/below-inversion-150m", "lens-table", -55.1, 150.0, -47.1),
    ("table/deep-to-antenna-300m", "lens-table", -300.0, 300.0, -5.0),
    ("table/deep-to-lens-400m", "lens-table", -300.0, 400.0, -12.2),
    ("table/mid-to-antenna-300m", "lens-table", -100.0, 300.0, -20.0),
]
RECIPROCITY_CASES = ("dip/below-dip-100m", "dip/duct-to-below-dip-300m",
                     "table/lens-to-below-100m", "table/deep-to-antenna-300m")


class ReferenceError(RuntimeError):
    pass


# ---------------------------------------------------------------------------
# profiles
# ---------------------------------------------------------------------------

class DipProfile:
    """n = 1.78 - 0.43 exp(z/40) - 0.04 exp(-((z + 30)/3)^2) (formula used above 0 too)."""

    name = "gaussian-dip"

    def __init__(self):
        self.knots = np.array([0.0])
        zz = np.linspace(-400.0, 0.0, 400001)
        _, d = self.n_dn(zz)
        ext = []
        for i in np.nonzero(np.sign(d[:-1]) != np.sign(d[1:]))[0]:
            zr = brentq(lambda z: self.n_dn1(z)[1], zz[i], zz[i + 1], xtol=1e-14)
            ext.append(zr)
        self.extrema_z = sorted(ext)
        self.minima = []
        self.maxima = []
        for zr in self.extrema_z:
            curv = self.d2n(zr)
            item = {"z": zr, "n": self.n_dn1(zr)[0], "d2n_below": curv, "d2n_above": curv}
            (self.minima if curv > 0 else self.maxima).append(item)
        self.floor_z = min(self.extrema_z)
        self.definition = {
            "type": "function",
            "formula": "n(z) = 1.78 - 0.43*exp(z/40) - 0.04*exp(-((z + 30)/3)**2), z <= 0",
            "n_air": 1.0,
            "local_minima": [{"z": m["z"], "n": m["n"], "d2n_dz2": m["d2n_below"]}
                             for m in self.minima],
            "local_maxima": [{"z": m["z"], "n": m["n"], "d2n_dz2": m["d2n_below"]}
                             for m in self.maxima],
        }

    @staticmethod
    def n_dn(z):
        e = np.exp(z / 40.0)
        u = (z + 30.0) / 3.0
        g = np.exp(-u * u)
        return 1.78 - 0.43 * e - 0.04 * g, -0.43 / 40.0 * e + 0.04 * 2.0 * u / 3.0 * g

    def piece(self, z, kz):
        """(lo, hi, n_dn) of the smooth piece the ray at z moving with k_z is in."""
        return -math.inf, 0.0, self.n_dn1

    @staticmethod
    def n_dn1(z):
        e = math.exp(z / 40.0)
        u = (z + 30.0) / 3.0
        g = math.exp(-u * u)
        return 1.78 - 0.43 * e - 0.04 * g, -0.43 / 40.0 * e + 0.04 * 2.0 * u / 3.0 * g

    @staticmethod
    def d2n(z):
        e = math.exp(z / 40.0)
        u = (z + 30.0) / 3.0
        g = math.exp(-u * u)
        return -0.43 / 1600.0 * e + 0.04 * (2.0 / 9.0) * g * (1.0 - 2.0 * u * u)


def table_samples():
    z = np.linspace(0.0, -150.0, 601)
    r = np.random.default_rng(20261203).standard_normal(len(z))
    n = (1.78 - 0.43 * np.exp(z / 40.0) + 0.025 * np.exp(-((z + 12.0) / 0.6) ** 2)
         - 0.02 * np.exp(-((z + 45.0) / 2.0) ** 2) + 0.0004 * r)
    return z, np.round(n, 6)


class TableProfile:
    """PCHIP through the samples (increasing z); constant below -150; the last
    cubic continued above z = 0 (only ever evaluated there inside a step that
    ends at the surface)."""

    name = "lens-table"

    def __init__(self):
        z, n = table_samples()
        self.z_samples, self.n_samples = z, n
        zi, ni = z[::-1].copy(), n[::-1].copy()
        interp = PchipInterpolator(zi, ni)
        self.interp = interp
        self.x = np.asarray(interp.x, dtype=float)
        self.c = np.asarray(interp.c, dtype=float)        # (4, 600)
        if self.c.shape != (4, 600) or not np.array_equal(self.x, zi):
            raise ReferenceError("unexpected PchipInterpolator layout")
        self.c0, self.c1, self.c2, self.c3 = (self.c[i].copy() for i in range(4))
        self.cl = [tuple(float(v) for v in self.c[:, i]) for i in range(600)]
        self.xl = [float(v) for v in self.x]
        self.n_floor = float(ni[0])
        self.knots = zi.copy()                               # -150 .. 0
        if np.any(np.diff(ni) == 0):
            raise ReferenceError("equal neighbouring samples: flat pieces not handled")
        mins, maxs = [], []
        for j in range(1, 600):
            if ni[j] < ni[j - 1] and ni[j] < ni[j + 1]:
                mins.append(j)
            elif ni[j] > ni[j - 1] and ni[j] > ni[j + 1]:
                maxs.append(j)
        self.extrema_z = sorted(float(zi[j]) for j in mins + maxs)
        self.minima = [self._extremum(j) for j in mins]
        self.maxima = [self._extremum(j) for j in maxs]
        self.floor_z = min(self.extrema_z)
        # the end slope at -150 (PCHIP end formula) against 0 below: n' jumps there
        self.definition = {
            "type": "table",
            "z": [float(v) for v in z],
            "n": [float(v) for v in n],
            "sample_definition": "n_k = 1.78 - 0.43*exp(z_k/40) + 0.025*exp(-((z_k + 12)/0.6)**2)"
                                 " - 0.02*exp(-((z_k + 45)/2)**2) + 0.0004*r_k, "
                                 "r = numpy.random.default_rng(20261203).standard_normal(601), "
                                 "z_k = 0, -0.25, ..., -150 in this order; rounded to 6 decimals",
            "interpolant": "scipy.interpolate.PchipInterpolator(z increasing, n increasing-z "
                           "order) (Fritsch & Carlson 1980, SIAM J. Numer. Anal. 17, 238-246)",
            "below_table": "n constant = n(-150) for z < -150",
            "n_air": 1.0,
            "n_local_minima": len(self.minima),
            "n_local_maxima": len(self.maxima),
            "shallowest_local_minima": [{"z": m["z"], "n": m["n"]} for m in self.minima[::-1][:6]],
            "pchip_slope_at_minus_150": float(interp(-150.0, 1)),
        }

    def _extremum(self, j):
        # n'' just above the sample (piece j, t = 0) and just below it (piece j-1, t = 0.25)
        above = 2.0 * self.c[1, j]
        t = 0.25
        below = 6.0 * self.c[0, j - 1] * t + 2.0 * self.c[1, j - 1]
        return {"z": float(self.x[j]), "n": float(self.c[3, j]), "d2n_below": float(below),
                "d2n_above": float(above)}

    def n_dn(self, z):
        z = np.asarray(z, dtype=float)
        i = np.clip(np.floor((z + 150.0) * 4.0), 0, 599).astype(np.intp)
        t = z - self.x[i]
        c0, c1, c2, c3 = self.c0[i], self.c1[i], self.c2[i], self.c3[i]
        n = ((c0 * t + c1) * t + c2) * t + c3
        dn = (3.0 * c0 * t + 2.0 * c1) * t + c2
        deep = z < -150.0
        if deep.any():
            n = np.where(deep, self.n_floor, n)
            dn = np.where(deep, 0.0, dn)
        return n, dn

    def piece(self, z, kz):
        """(lo, hi, n_dn) of the smooth piece the ray at z moving with k_z is in
        (on a breakpoint: the piece it enters); each cubic is continued beyond
        its ends by its own polynomial."""
        if z < -150.0 or (z == -150.0 and kz < 0):
            nf = self.n_floor
            return -math.inf, -150.0, lambda zz: (nf, 0.0)
        i = int(np.searchsorted(self.x, z, side="right")) - 1
        i = min(max(i, 0), 599)
        if z == self.xl[i] and kz < 0 and i > 0:
            i -= 1
        c0, c1, c2, c3 = self.cl[i]
        xi = self.xl[i]

        def n_dn(zz):
            t = zz - xi
            return ((c0 * t + c1) * t + c2) * t + c3, (3.0 * c0 * t + 2.0 * c1) * t + c2
        return self.xl[i], self.xl[i + 1], n_dn

    def n_dn1(self, z):
        if z < -150.0:
            return self.n_floor, 0.0
        i = int((z + 150.0) * 4.0)
        if i > 599:
            i = 599
        t = z - self.xl[i]
        c0, c1, c2, c3 = self.cl[i]
        return ((c0 * t + c1) * t + c2) * t + c3, (3.0 * c0 * t + 2.0 * c1) * t + c2


def n_of(prof, z):
    return prof.n_dn1(z)[0]


def min_below_factory(prof):
    """m(z) = min of n over (-inf, z] (vectorised): n is monotone between its
    extrema and does not decrease with depth below the deepest one, so the
    minimum is n(z) or the value at a local minimum below z."""
    zm = np.array(sorted(m["z"] for m in prof.minima))
    nm = np.array([n_of(prof, z) for z in zm])
    run = np.minimum.accumulate(nm) if nm.size else nm

    def m_of(z):
        n, _ = prof.n_dn(z)
        if not zm.size:
            return n
        j = np.searchsorted(zm, z, side="left")
        lower = np.where(j > 0, run[np.maximum(j - 1, 0)], np.inf)
        return np.minimum(n, lower)
    return m_of


def min_over(prof, lo, hi):
    """Minimum of n over lo <= z <= hi (n is monotone between its extrema)."""
    cand = [lo, hi] + [z for z in prof.extrema_z if lo < z < hi]
    return min(n_of(prof, z) for z in cand)


def critical_invariants(prof, zs, zr):
    """Local minima of n a ray between the two heights can graze."""
    out = []
    ns = n_of(prof, zs)
    for m in prof.minima:
        lo, hi = min(zs, zr, m["z"]), max(zs, zr, m["z"])
        if m["n"] <= min_over(prof, lo, hi) and m["n"] < ns:
            out.append(m)
    return out


# ---------------------------------------------------------------------------
# vectorised scan integrator (x as the independent variable)
# ---------------------------------------------------------------------------

NS = dop.N_STAGES
A_ = dop.A[:NS, :NS]
B_ = dop.B
C_ = dop.C[:NS]
E3_ = dop.E3
E5_ = dop.E5


def _rhs(prof, y, b):
    """d(zeta, kappa[, t, s])/dx in the unfolded picture: the height zeta > 0
    stands for the mirror image of the ray reflected at the surface
    (n(zeta) = n(-|zeta|))."""
    zeta, kap = y[0], y[1]
    up = zeta > 0.0
    n, dn = prof.n_dn(-np.abs(zeta))
    dn = np.where(up, -dn, dn)
    if y.shape[0] == 2:
        return np.stack([kap / b, n * dn / b])
    return np.stack([kap / b, n * dn / b, n * n / (C_LIGHT * b), n / b])


def land_many(prof, zs, xr, zr, k, floor_z, tol=SCAN_TOL, max_step=SCAN_MAX_STEP,
              full=False):
    """z(x_r) - z_r for rays leaving (0, zs) with k_z = k (arrays).

    A ray going down below ``floor_z`` (below both points) whose invariant is
    smaller than n everywhere below it can never turn again; it is stopped,
    its value is its height there minus the drop of a straight continuation
    to x_r (the true value is lower still).
    With ``full`` the travel time and path length are integrated too
    (dt/dx = n^2/(c b), ds/dx = n/b) and (value, k_z, t, s) at x_r returned.
    """
    k = np.asarray(k, dtype=float)
    m = k.size
    ns = n_of(prof, zs)
    b = np.sqrt((ns - k) * (ns + k))
    x = np.zeros(m)
    dim = 4 if full else 2
    y = np.zeros((dim, m))
    y[0] = zs
    y[1] = k
    out = np.full(m, np.nan)
    final = np.full((dim, m), np.nan)
    h = np.minimum(1e-3 * np.maximum(b, 1e-3), max_step)
    knots = prof.knots
    m_below = min_below_factory(prof)
    act = np.arange(m)
    f = _rhs(prof, y, b)
    rejected = np.zeros(m, dtype=bool)
    K = np.empty((NS + 1, dim, m))
    it = 0
    while act.size:
        it += 1
        if it > 2000000:
            raise ReferenceError("scan integrator does not finish")
        ya, fa, ba, xa, ha = y[:, act], f[:, act], b[act], x[act], h[act]
        # aim the step at the next breakpoint in the direction of motion
        z0 = ya[0]
        zp = fa[0]
        zpp = fa[1] / ba
        above = np.searchsorted(knots, z0, side="right")
        below = np.searchsorted(knots, z0, side="left") - 1
        tgt = np.where(zp > 0, knots[np.minimum(above, knots.size - 1)],
                       knots[np.maximum(below, 0)])
        valid = np.where(zp > 0, above < knots.size, below >= 0)
        dz = tgt - z0
        # smallest positive root of zpp/2 h^2 + zp h - dz = 0
        disc = zp * zp + 2.0 * zpp * dz
        with np.errstate(invalid="ignore", divide="ignore"):
            sq = np.sqrt(np.maximum(disc, 0.0))
            hk = np.where(np.abs(zpp) * np.abs(dz) < 1e-12 * zp * zp + 1e-300,
                          dz / zp, 2.0 * dz / (zp + np.sign(zp) * sq))
        hit = valid & (disc >= 0) & (hk > 0) & np.isfinite(hk)
        hk = hk * (1.0 + 1e-9) + 1e-12
        hs = np.minimum(ha, xr - xa)
        aim = hit & (hk < hs)
        hs = np.where(aim, hk, hs)
        last = hs >= xr - xa
        hs = np.where(last, xr - xa, hs)
        # one DOP853 step for every active ray
        Ka = K[:, :, :act.size]
        Ka[0] = fa
        for s in range(1, NS):
            dy = np.tensordot(A_[s, :s], Ka[:s], axes=(0, 0)) * hs
            Ka[s] = _rhs(prof, ya + dy, ba)
        ynew = ya + hs * np.tensordot(B_, Ka[:-1], axes=(0, 0))
        fnew = _rhs(prof, ynew, ba)
        Ka[-1] = fnew
        scale = tol + np.maximum(np.abs(ya), np.abs(ynew)) * tol
        e5 = np.tensordot(E5_, Ka, axes=(0, 0)) / scale
        e3 = np.tensordot(E3_, Ka, axes=(0, 0)) / scale
        e5n = np.sum(e5 * e5, axis=0)
        e3n = np.sum(e3 * e3, axis=0)
        den = e5n + 0.01 * e3n
        with np.errstate(invalid="ignore", divide="ignore"):
            err = np.where(den > 0, hs * e5n / np.sqrt(den * dim), 0.0)
        ok = err < 1.0
        with np.errstate(divide="ignore"):
            grow = np.where(err == 0, 10.0, np.minimum(10.0, 0.9 * err ** (-1.0 / 8.0)))
            shrink = np.maximum(0.2, 0.9 * err ** (-1.0 / 8.0))
        grow = np.where(rejected[act], np.minimum(1.0, grow), grow)
        # a step cut short to hit a breakpoint keeps the proposed length
        base = np.where(aim | last, np.maximum(ha, hs), hs)
        hnext = np.where(ok, np.minimum(base * grow, max_step), hs * shrink)
        h[act] = hnext
        rejected[act] = ~ok
        acc = act[ok]
        if acc.size:
            yn = ynew[:, ok]
            fn = fnew[:, ok]
            # keep zeta <= 0: reflect at the surface (mirror image of the state)
            refl = (yn[0] > 0.0) | ((yn[0] > -1e-12) & (yn[1] > 0.0))
            if refl.any():
                yn[0, refl] = -np.abs(yn[0, refl])
                yn[1, refl] = -yn[1, refl]
                fn[:, refl] = _rhs(prof, yn[:, refl], b[acc][refl])
            y[:, acc] = yn
            f[:, acc] = fn
            x[acc] = np.where(last[ok], xr, x[acc] + hs[ok])
            done = last[ok]
            # stopped: going down below every extremum and both points
            stop = (~done) & (yn[1] < 0) & (yn[0] < floor_z)
            if stop.any():
                cand = np.nonzero(stop)[0]
                stop[cand] = b[acc[cand]] < m_below(yn[0, cand])
            if done.any():
                out[acc[done]] = yn[0, done] - zr
                final[:, acc[done]] = yn[:, done]
            if stop.any():
                idx = acc[stop]
                out[idx] = yn[0, stop] - zr + (xr - x[idx]) * yn[1, stop] / b[idx]
            fin = np.zeros(act.size, dtype=bool)
            fin[np.nonzero(ok)[0][done | stop]] = True
            act = act[~fin]
    if full:
        return out, final[1], final[2], final[3]
    return out


# ---------------------------------------------------------------------------
# final shooting with solve_ivp (path length s as the independent variable)
# ---------------------------------------------------------------------------

def shoot(prof, zs, xr, zr, k, rtol=FINAL_RTOL, atol=FINAL_ATOL, max_step=FINAL_MAX_STEP,
          watch_z=None):
    """Integrate the ray with k_z = k at the source to x = x_r (solve_ivp).

    The integration runs piece by piece: it stops (terminal event) where the
    ray leaves the smooth piece of n(z) it is in (a table breakpoint, or the
    surface, where k_z -> -k_z) and restarts in the next one, so that no step
    straddles a break of d2n/dz2.  Returns a dict with z, k_z, t, s at x_r,
    the numbers of turning points (zeros of k_z) and reflections, the largest
    |n sin(zenith) - b| at the solver's steps and, if ``watch_z`` is given,
    the smallest |z - watch_z| met before x_r.
    """
    ns = n_of(prof, zs)
    b = math.sqrt((ns - k) * (ns + k))
    box = {}

    def rhs(s, y):
        n, dn = box["f"](y[1])
        return [b / n, y[2] / n, dn, n / C_LIGHT]

    def reach(s, y):
        return y[0] - xr
    reach.terminal = True
    reach.direction = 1

    def leave_top(s, y):
        return box["hi"] - y[1]
    leave_top.terminal = True
    leave_top.direction = -1

    def leave_bottom(s, y):
        return y[1] - box["lo"] if box["lo"] > -math.inf else 1.0
    leave_bottom.terminal = True
    leave_bottom.direction = -1

    def turning(s, y):
        return y[2]

    state = [0.0, float(zs), float(k), 0.0]
    s0 = 0.0
    n_refl = 0
    n_turn = 0
    dev = 0.0
    watch = math.inf
    s_end_max = 50.0 * xr + 5000.0
    first = None
    for _ in range(2000000):
        lo, hi, fn = prof.piece(state[1], state[2])
        box["lo"], box["hi"], box["f"] = lo, hi, fn
        sol = solve_ivp(rhs, (s0, s_end_max), state, method="DOP853", rtol=rtol, atol=atol,
                        max_step=max_step, first_step=first,
                        events=[reach, leave_top, leave_bottom, turning])
        if sol.status == -1:
            raise ReferenceError("solve_ivp failed: %s" % sol.message)
        zz, kk = sol.y[1], sol.y[2]
        nn, _ = prof.n_dn(zz)
        dev = max(dev, float(np.max(np.abs(nn * b / np.sqrt(b * b + kk * kk) - b))))
        if watch_z is not None:
            watch = min(watch, float(np.min(np.abs(zz - watch_z))))
        if sol.t.size >= 3:
            first = min(float(sol.t[-2] - sol.t[-3]), max_step)
        t_turn = sol.t_events[3]
        if sol.t_events[0].size:
            ye = sol.y_events[0][0]
            s_end = float(sol.t_events[0][0])
            n_turn += int(np.sum(t_turn < s_end))
            return {"b": b, "k0": float(k), "z": float(ye[1]), "kz": float(ye[2]),
                    "t": float(ye[3]), "s": s_end, "n_turn": n_turn, "n_refl": n_refl,
                    "dev": dev, "watch": watch}
        for ev in (1, 2):
            if sol.t_events[ev].size:
                break
        else:
            raise ReferenceError("ray with k = %r reaches neither x_r nor the surface" % k)
        ye = sol.y_events[ev][0].copy()
        s0 = float(sol.t_events[ev][0])
        n_turn += int(np.sum(t_turn < s0))
        top = ev == 1
        if top and hi == 0.0:
            n_refl += 1
            ye[1] = 0.0
            ye[2] = -abs(ye[2])
        elif top:
            ye[1] = hi
            ye[2] = abs(ye[2])
        else:
            ye[1] = lo
            ye[2] = -abs(ye[2])
        state = list(ye)
    raise ReferenceError("too many pieces")


# ---------------------------------------------------------------------------
# scan grids
# ---------------------------------------------------------------------------

def log_grid(lo, hi, per_decade):
    a, c = math.log10(lo), math.log10(hi)
    num = int(round((c - a) * per_decade)) + 1
    return np.logspace(a, c, num)


def scan_params(prof, zs, zr, crit, level):
    """Launch parameters k (initial k_z), sorted from straight up to straight down."""
    ns = n_of(prof, zs)
    f = 2 ** level
    pd = LOG_PER_DECADE * f
    parts = []
    th = np.arange(THETA_MIN, 180.0 - THETA_MIN + 1e-9, COARSE_STEP / f)
    parts.append(ns * np.cos(np.radians(th)))
    th = np.arange(90.0 - FINE_HALF_WIDTH, 90.0 + FINE_HALF_WIDTH + 1e-9, FINE_STEP / f)
    parts.append(ns * np.cos(np.radians(th)))
    kk = ns * log_grid(*HORIZ_RANGE, pd)
    parts += [kk, -kk, np.zeros(1)]

    def around(bc):
        rel = log_grid(*CRIT_REL_RANGE, pd)
        for bb in (bc * (1.0 - rel), bc * (1.0 + rel)):
            bb = bb[bb < ns]
            kz = np.sqrt((ns - bb) * (ns + bb))
            parts.extend([kz, -kz])

    for m in crit:
        around(m["n"])
    n0 = n_of(prof, 0.0)
    if n0 < ns:
        rel = log_grid(*GRAZE_REL_RANGE, pd)
        for bb in (n0 * (1.0 - rel), n0 * (1.0 + rel)):
            bb = bb[bb < ns]
            kz = np.sqrt((ns - bb) * (ns + bb))
            parts.extend([kz, -kz])
    k = np.unique(np.concatenate(parts))
    k = k[(k > -ns) & (k < ns)]
    return k[::-1]


# ---------------------------------------------------------------------------
# root finding
# ---------------------------------------------------------------------------

def sign_changes(k, v):
    s = np.where(v >= 0, 1, -1)
    idx = np.nonzero(s[:-1] != s[1:])[0]
    return [(k[i], v[i], k[i + 1], v[i + 1]) for i in idx]


def illinois_many(prof, zs, xr, zr, floor_z, brackets, rounds=25):
    """Narrow all brackets together with the scan integrator."""
    if not brackets:
        return []
    a = np.array([br[0] for br in brackets])
    fa = np.array([br[1] for br in brackets])
    c = np.array([br[2] for br in brackets])
    fc = np.array([br[3] for br in brackets])
    side = np.zeros(len(a), dtype=int)
    act = np.ones(len(a), dtype=bool)
    for _ in range(rounds):
        idx = np.nonzero(act)[0]
        if not idx.size:
            break
        aa, cc, ffa, ffc = a[idx], c[idx], fa[idx], fc[idx]
        with np.errstate(invalid="ignore", divide="ignore"):
            p = (aa * ffc - cc * ffa) / (ffc - ffa)
        lo, hi = np.minimum(aa, cc), np.maximum(aa, cc)
        bad = ~((p > lo) & (p < hi)) | ~np.isfinite(p)
        p = np.where(bad, 0.5 * (aa + cc), p)
        fp = land_many(prof, zs, xr, zr, p, floor_z)
        same_c = (fp >= 0) == (ffc >= 0)
        for j, i in enumerate(idx):
            if same_c[j]:
                c[i], fc[i] = p[j], fp[j]
                if side[i] == -1:
                    fa[i] *= 0.5
                side[i] = -1
            else:
                a[i], fa[i] = p[j], fp[j]
                if side[i] == 1:
                    fc[i] *= 0.5
                side[i] = 1
            width = abs(c[i] - a[i])
            if width <= 1e-14 * max(abs(a[i]), 1e-3) or abs(fp[j]) < 1e-7:
                act[i] = False
    return [(a[i], fa[i], c[i], fc[i]) for i in range(len(a))]


def polish(prof, zs, xr, zr, narrow, outer, cache):
    """Refine one ray with the solve_ivp shooting.

    Start at the end of the narrowed scan bracket nearer to the receiver,
    take secant steps on the solve_ivp landing (the first with the slope of
    the scan bracket); if that does not land within ``LANDING_TOL``, Brent's
    method on a bracket of solve_ivp landings (searched outward from the
    best point, inside the scan bracket ``outer``).  Returns the shot ray
    that lands nearest to the receiver.
    """
    olo, ohi = outer

    def f(k):
        k = float(min(max(k, olo), ohi))
        if k not in cache:
            cache[k] = shoot(prof, zs, xr, zr, k)
        return cache[k]["z"] - zr

    def best():
        return cache[min(cache, key=lambda kk: abs(cache[kk]["z"] - zr))]

    a, fa_s, c, fc_s = narrow
    k0 = a if abs(fa_s) <= abs(fc_s) else c
    g0 = f(k0)
    if abs(g0) <= LANDING_TOL:
        return best()
    slope = (fc_s - fa_s) / (c - a) if c != a else 0.0
    if not np.isfinite(slope) or slope == 0.0:
        h = 1e-9 * max(abs(k0), 1e-3)
        slope = (f(k0 + h) - g0) / h if f(k0 + h) != g0 else 0.0
    kp, gp = k0, g0
    if slope:
        k1 = k0 - g0 / slope
        for _ in range(8):
            g1 = f(k1)
            if abs(g1) <= LANDING_TOL or g1 == gp:
                break
            k2 = k1 - g1 * (k1 - kp) / (g1 - gp)
            k2 = min(max(k2, olo), ohi)
            if k2 == k1:
                break
            kp, gp, k1 = k1, g1, k2
    rec = best()
    if abs(rec["z"] - zr) <= LANDING_TOL:
        return rec
    # bracket of solve_ivp landings around the best point, then Brent
    mid = rec["k0"]
    ks = sorted(cache)
    pair = None
    for u, v in zip(ks[:-1], ks[1:]):
        if (cache[u]["z"] >= zr) != (cache[v]["z"] >= zr):
            if pair is None or abs(v - u) < abs(pair[1] - pair[0]):
                pair = (u, v)
    half = 4e-16 * max(abs(mid), 1e-3)
    while pair is None:
        lo, hi = max(olo, mid - half), min(ohi, mid + half)
        if (f(lo) >= 0) != (f(hi) >= 0):
            pair = (float(min(max(lo, olo), ohi)), float(min(max(hi, olo), ohi)))
            break
        if lo == olo and hi == ohi:
            return None
        half *= 16.0
    try:
        brentq(f, pair[0], pair[1], xtol=1e-300, rtol=8.9e-16, maxiter=60)
    except RuntimeError:
        pass
    return best()


# ---------------------------------------------------------------------------
# one case
# ---------------------------------------------------------------------------

_PROFILES = {}


def profiles():
    if not _PROFILES:
        for p in (DipProfile(), TableProfile()):
            _PROFILES[p.name] = p
    return _PROFILES


def find_rays(prof, zs, xr, zr, max_levels=MAX_LEVELS, log=None):
    """Every ray from (0, zs) to (xr, zr); returns (records, scan info)."""
    crit = critical_invariants(prof, zs, zr)
    floor_z = min(zs, zr) - 1e-6
    values = {}
    levels = []
    counts = []
    tic = time.time()
    for level in range(max_levels + 1):
        k = scan_params(prof, zs, zr, crit, level)
        new = np.array([kk for kk in k if kk not in values])
        if new.size:
            v = land_many(prof, zs, xr, zr, new, floor_z)
            values.update(zip(new.tolist(), v.tolist()))
        vals = np.array([values[kk] for kk in k.tolist()])
        if np.any(~np.isfinite(vals)):
            raise ReferenceError("scan produced non-finite values")
        br = sign_changes(k, vals)
        levels.append({"level": level, "samples": int(k.size), "sign_changes": len(br)})
        counts.append(len(br))
        if log:
            log("    level %d: %d samples, %d sign changes (%.1fs)"
                % (level, k.size, len(br), time.time() - tic))
        if level + 1 >= MIN_LEVELS and len(counts) >= 2 and counts[-1] == counts[-2]:
            break
    narrow = illinois_many(prof, zs, xr, zr, floor_z, br)
    if log:
        log("    brackets narrowed (%.1fs)" % (time.time() - tic))
    rays = []
    failures = []
    ns = n_of(prof, zs)
    for (ka, va, kc, vc), nb in zip(br, narrow):
        cache = {}
        rec = polish(prof, zs, xr, zr, nb, (min(ka, kc), max(ka, kc)), cache)
        if log:
            log("    ray k0 = %.17g: %d shots, miss %.2e m"
                % (rec["k0"] if rec else nb[0], len(cache), rec["z"] - zr if rec else math.nan))
        if rec is None or abs(rec["z"] - zr) > ACCEPT_MISS:
            # a sign change of the scan that the solve_ivp shooting does not
            # reproduce inside its bracket, or not to ACCEPT_MISS
            bb = [math.sqrt((ns - q) * (ns + q)) for q in (ka, kc)]
            item = {"launch_zenith_deg": [zenith_deg(bb[0], ka), zenith_deg(bb[1], kc)],
                    "invariant": bb, "scan_values_m": [va, vc],
                    "best_landing_miss_m": None if rec is None else rec["z"] - zr}
            if crit:
                mm = min(crit, key=lambda m: abs(bb[0] - m["n"]))
                item["relative_distance_to_critical"] = abs(bb[0] - mm["n"]) / mm["n"]
                item["critical_z"] = mm["z"]
            failures.append(item)
            continue
        rays.append(rec)
    # the same ray from two brackets (a root exactly on a sample)
    uniq = []
    for r in sorted(rays, key=lambda r: -r["k0"]):
        if uniq and abs(uniq[-1]["k0"] - r["k0"]) <= 1e-15 * max(1.0, abs(r["k0"])):
            continue
        uniq.append(r)
    return uniq, {"levels": levels, "critical": crit, "failures": failures,
                  "floor_z": floor_z, "values": values}


def zenith_deg(b, kz):
    return math.degrees(math.atan2(b, kz))


def critical_diagnostics(prof, zs, xr, zr, crit):
    """The rays at the smallest sampled |b - b_crit| on each side and direction."""
    out = []
    ns = n_of(prof, zs)
    rel = CRIT_REL_RANGE[0]
    for m in crit:
        bc = m["n"]
        item = {"z": m["z"], "invariant": bc, "d2n_below": m["d2n_below"],
                "d2n_above": m["d2n_above"], "smallest_sampled_relative_distance": rel,
                "edges": []}
        for label, bb in (("b below b_crit", bc * (1.0 - rel)),
                          ("b above b_crit", bc * (1.0 + rel))):
            if bb >= ns:
                continue
            kz = math.sqrt((ns - bb) * (ns + bb))
            for direction, k in (("up", kz), ("down", -kz)):
                r = shoot(prof, zs, xr, zr, k, watch_z=m["z"])
                reached = r["watch"] < 1e-3
                lingering = abs(r["z"] - m["z"]) < 1e-3
                odd = bool(reached and not lingering
                           and (r["z"] - zr >= 0) != (m["z"] - zr >= 0))
                item["edges"].append({
                    "side": label, "launch": direction,
                    "z_at_receiver_x": r["z"],
                    "reaches_critical_depth": bool(reached),
                    "still_at_critical_depth_at_receiver_x": bool(lingering),
                    "odd_rays_beyond_scan": odd})
        out.append(item)
    return out


def solve_case(job):
    name, pname, zs, xr, zr, max_levels = job
    prof = profiles()[pname]
    t0 = time.time()
    lines = []

    def log(msg):
        lines.append(msg)

    rays, info = find_rays(prof, zs, xr, zr, max_levels=max_levels, log=log)
    crit = info["critical"]
    recs = []
    # the same rays through the scan integrator (x as the variable, aimed steps)
    k_all = np.array([r["k0"] for r in rays])
    if rays:
        v2, kz2, t2s, s2 = land_many(prof, zs, xr, zr, k_all, info["floor_z"], full=True)
    for j, r in enumerate(rays):
        b = r["b"]
        # both travel times moved to the receiver to first order: dT = k_z dz / c
        t1 = r["t"] + r["kz"] * (zr - r["z"]) / C_LIGHT
        t2 = t2s[j] - kz2[j] * v2[j] / C_LIGHT
        near = None
        if crit:
            m = min(crit, key=lambda m: abs(b - m["n"]))
            near = (abs(b - m["n"]) / m["n"], m["z"])
        recs.append({
            "launch_zenith_deg": zenith_deg(b, r["k0"]),
            "arrival_zenith_deg": zenith_deg(b, r["kz"]),
            "invariant": b,
            "travel_time_ns": r["t"],
            "path_length_m": r["s"],
            "n_turning_points": r["n_turn"],
            "n_surface_reflections": r["n_refl"],
            "landing_miss_m": r["z"] - zr,
            "invariant_max_deviation": r["dev"],
            "time_check_ns": float(t2 - t1) if np.isfinite(t2 - t1) else None,
            "check_landing_miss_m": float(v2[j]) if np.isfinite(t2 - t1) else None,
            "relative_distance_to_critical": None if near is None else near[0],
            "critical_z": None if near is None else near[1],
            "within_resolved_range": near is None or near[0] >= RESOLVED_REL,
        })
    recs.sort(key=lambda r: (r["travel_time_ns"], r["launch_zenith_deg"]))
    result = {
        "profile": pname,
        "source": [0.0, zs],
        "receiver": [xr, zr],
        "n_rays": len(recs),
        "scan_levels": info["levels"],
        "complete_above_relative_distance": RESOLVED_REL if crit else None,
        "unconfirmed_sign_changes": info["failures"],
        "critical": critical_diagnostics(prof, zs, xr, zr, crit),
        "smallest_relative_distance_to_critical": (
            min(r["relative_distance_to_critical"] for r in recs) if crit and recs else None),
        "rays": recs,
    }
    checks = {
        "max_landing_miss_m": max((abs(r["landing_miss_m"]) for r in recs), default=0.0),
        "max_invariant_deviation": max((r["invariant_max_deviation"] for r in recs), default=0.0),
        "max_abs_time_check_ns": max((abs(r["time_check_ns"]) for r in recs
                                      if r["time_check_ns"] is not None), default=0.0),
    }
    if name in RECIPROCITY_CASES:
        back, _ = find_rays(prof, zr, xr, zs, max_levels=max_levels)
        tb = sorted(r["t"] for r in back)
        ta = sorted(r["travel_time_ns"] for r in recs)
        checks["reciprocity"] = {
            "n_rays_swapped": len(tb),
            "max_abs_time_difference_ns": (max(abs(p - q) for p, q in zip(ta, tb))
                                           if len(ta) == len(tb) and ta else None)}
    result["checks"] = checks
    result["runtime_s"] = round(time.time() - t0, 1)
    return name, result, lines


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--output", default=DEFAULT_OUTPUT)
    ap.add_argument("--jobs", type=int, default=2)
    ap.add_argument("--only", nargs="*", help="case names to compute (prints, writes nothing)")
    ap.add_argument("--levels-max", type=int, default=MAX_LEVELS)
    args = ap.parse_args(argv)
    jobs = [(name, p, zs, xr, zr, args.levels_max) for name, p, zs, xr, zr in CASES
            if not args.only or name in args.only]
    start = time.time()
    results = {}

    def collect(item):
        name, res, lines = item
        results[name] = res
        print("%-40s %6.1fs  %3d rays  levels %s  criticals %d  max|miss| %.1e m  "
              "max|dT check| %.1e ns%s"
              % (name, res["runtime_s"], res["n_rays"],
                 "/".join(str(lv["sign_changes"]) for lv in res["scan_levels"]),
                 len(res["critical"]), res["checks"]["max_landing_miss_m"],
                 res["checks"]["max_abs_time_check_ns"],
                 ("  reciprocity %s" % res["checks"]["reciprocity"])
                 if "reciprocity" in res["checks"] else ""), flush=True)
        for line in lines:
            print(line, flush=True)

    if args.jobs > 1:
        with multiprocessing.Pool(args.jobs) as pool:
            for item in pool.imap_unordered(solve_case, jobs, chunksize=1):
                collect(item)
    else:
        for job in jobs:
            collect(solve_case(job))
    print("total %.1fs" % (time.time() - start), flush=True)
    results = {name: results[name] for name, *_ in CASES if name in results}
    if args.only:
        json.dump(results, sys.stdout, indent=1)
        print()
        return
    profs = profiles()
    doc = {
        "generator": "tests/generators/reference_ducts.py",
        "created": datetime.date.today().isoformat(),
        "versions": {"numpy": np.__version__, "scipy": scipy.__version__},
        "method": ("brute-force shooting: dense scan of the launch direction (vectorised "
                   "DOP853 in x), sign changes of z(x_r) - z_r bracket the rays, each "
                   "polished by Brent's method on scipy.integrate.solve_ivp (DOP853, in "
                   "path length s) until it lands within the landing tolerance; the scan "
                   "is refined by 2 until the count of sign changes stops changing"),
        "ray_equations": ("dx/ds = k_x/n, dz/ds = k_z/n, dk_x/ds = 0, dk_z/ds = dn/dz, "
                          "dt/ds = n/c (Born & Wolf, Principles of Optics, sec. 3.2); "
                          "surface z = 0: k_z -> -k_z (reflected ray only)"),
        "speed_of_light": C_LIGHT,
        "units": {"x, z": "m (z height, negative in the ice)", "travel_time_ns": "ns",
                  "path_length_m": "m",
                  "zenith": "deg, of the propagation direction (0 = up, 180 = down)"},
        "integration": {
            "final": {"method": "scipy.integrate.solve_ivp DOP853", "rtol": FINAL_RTOL,
                      "atol": FINAL_ATOL, "max_step_m": FINAL_MAX_STEP,
                      "landing_tolerance_m": LANDING_TOL},
            "check": {"method": "the scan integrator (x as the variable) with t and s "
                                "integrated too, at the stored launch parameter; both times "
                                "moved to the receiver by k_z dz / c"},
            "scan": {"method": "DOP853 tableau (scipy coefficients), per-ray step control, "
                               "x as the independent variable, steps aimed at breakpoints",
                     "rtol": SCAN_TOL, "atol": SCAN_TOL, "max_step_m": SCAN_MAX_STEP},
        },
        "scan": {"zenith_range_deg": [THETA_MIN, 180.0 - THETA_MIN],
                 "coarse_step_deg_level0": COARSE_STEP,
                 "fine_step_deg_level0": FINE_STEP,
                 "fine_half_width_deg": FINE_HALF_WIDTH,
                 "log_samples_per_decade_level0": LOG_PER_DECADE,
                 "critical_relative_range": list(CRIT_REL_RANGE),
                 "horizontal_relative_range": list(HORIZ_RANGE),
                 "grazing_relative_range": list(GRAZE_REL_RANGE),
                 "levels": "level L divides every step by 2^L; at least %d levels, at most %d"
                           % (MIN_LEVELS, args.levels_max + 1)},
        "profiles": {name: p.definition for name, p in profs.items()},
        "cases": results,
    }
    with open(args.output, "w") as fh:
        json.dump(doc, fh, indent=1, allow_nan=False)
        fh.write("\n")
    print("wrote %s" % args.output, flush=True)


if __name__ == "__main__":
    main()
