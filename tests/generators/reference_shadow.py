"""Independent high-precision shadow boundaries (largest horizontal reach).

What it computes
----------------
For an antenna at height z_ant and a source at height z_src (both z <= 0, in
an exponential firn profile n(z) = n_deep - (n_deep - n_surface) exp(z/h))
the largest horizontal distance any ray between them reaches: the shadow
boundary.  With z_lo <= z_hi the lower and upper of the two heights it stores

* ``direct_horizon_x`` X_h: reach of the direct ray that arrives horizontally
  at the upper point (Snell invariant b = n(z_hi)); 0 for equal heights.
* ``max_reach_x`` X_max: the largest reach of the up-going family (rays that
  leave the lower point upward, pass above the upper point, turn in the firn
  or bounce off the surface and come down to it), with the invariant of that
  ray (``max_reach_invariant``), whether it is the surface-grazing ray
  b = n_surface (``max_at_grazing``, a kink of the family) and which
  sub-family it belongs to (``max_reach_kind``: refracted, reflected or
  grazing).  Null when the upper point is on the surface (no up-going family).
* ``shadow_boundary_x`` = max(X_h, X_max), i.e. X_max for two points in the
  ice (X_max > X_h always) and X_h for a point on the surface.
* ``double_resolvable``: false where (n_deep - n_surface) exp(z_lo/h) < 1e-13,
  i.e. where n(z_lo) cannot be told from n_deep in double precision; the
  values stored are still the full-precision ones.

How
---
A ray is labelled by its gap a = n_deep - b (which keeps all its digits where
b is close to n_deep) and by its turning height z_t = h log(a / (n_deep -
n_surface)) (above the surface, i.e. virtual, for reflected rays).

* Closed form (used to locate extrema).  With u = (n_deep - n_surface)
  exp(z/h) and w^2 = a - u one has n - b = w^2 and n + b = 2b + w^2, and the
  horizontal distance over a monotone stretch integrates to
  X = K (G(z_bottom) - G(z_top)) with K = 2 h b / sqrt(a (n_deep + b)),
  G = artanh(y), y = w sqrt(n_deep + b) / (sqrt(a) sqrt(w^2 + 2b)).  G is
  evaluated as log1p(y) - log(1 - y^2) / 2 with
  1 - y^2 = 2 b u / (a (w^2 + 2 b)) taken in logarithmic form and
  w^2 = -a expm1((z - z_t)/h), so nothing cancels.  The up-going reach is
  X_u = K (G(z_lo) + G(z_hi) - 2 G(z_top)), z_top = z_t (G = 0) for refracted
  and 0 for reflected rays.
* Parameters.  Refracted rays by tau = sqrt((z_t - z_hi) / (-z_hi)) in [0, 1]
  (tau = 0: the ray turns at z_hi, its reach is X_h; tau = 1: grazing ray),
  reflected rays by their zenith psi at the surface in [0, pi/2]
  (a = n_deep - n_surface sin psi).  In both X_u is smooth and, at the ends,
  linear in the parameter; the kink at the grazing ray is the join.
* Maximisation.  Each sub-family is scanned on a dense grid in double
  precision (numpy, same closed form); every interior local maximum of the
  scan is refined at full precision by a bracketed Illinois iteration on the
  derivative dX_u/dparameter computed by ``mpmath.diff``.  At the grazing end
  of the refracted sub-family the one-sided derivative decides whether a
  maximum hides in the last grid cell.  The candidates (interior maxima, the
  grazing ray, the tau = 0 ray) are compared and the largest kept.
* Independent check.  Every reported distance is recomputed by tanh-sinh
  quadrature (``mpmath.quad``) of dx/dz = b / sqrt(n^2 - b^2) in the
  variable s = z_t - z (with s = t^2 near the turning point), which uses no
  part of the closed form, and must agree with it to 1e-(dps-8) relative.
  For an interior maximum the quadrature is also evaluated at p* +- delta and
  the vertex of the parabola through the three values must lie within
  1e-14 (of the parameter range) of p*; for a maximum at the grazing ray the
  quadrature values just inside both sub-families must be lower.
  The stored numbers are the quadrature values, rounded to the nearest double.

This script shares no code with the firnray package: it imports nothing from
it (nor from the other generators) and re-derives everything from the ray
equations.  It needs only mpmath and numpy.

Output: ``tests/data/reference_shadow.json`` with ``generator``, ``mp_dps``,
``units``, ``profiles``, ``antenna_z``, ``source_z``, ``self_checks`` (worst
closed-form / quadrature disagreement, worst stationarity offset) and
``cases``, a list of records with the fields above plus ``name``,
``profile``, ``antenna_z``, ``source_z``, ``direct_horizon_invariant`` and
``upgoing_local_maxima`` (number of interior maxima of the up-going family).

Usage: python tests/generators/reference_shadow.py [--output PATH] [--dps N]
       [--scan N]
"""

import argparse
import json
import os
import sys
import time

import mpmath
import numpy as np
from mpmath import mp, mpf

HERE = os.path.dirname(os.path.abspath(__file__))
REPO = os.path.dirname(os.path.dirname(HERE))
DEFAULT_OUTPUT = os.path.join(REPO, "tests", "data", "reference_shadow.json")

PROFILES = {
    "demo": {"n_deep": 1.78, "n_surface": 1.35, "scale_depth": 40.0},
    "steep": {"n_deep": 1.78, "n_surface": 1.30, "scale_depth": 15.0},
}
ANTENNA_Z = [-200.0, -100.0, -40.0, -5.0, -0.5, 0.0]
SOURCE_Z = [-2000.0, -1000.0, -600.0, -300.0, -150.0, -80.0, -40.0, -20.0,
            -10.0, -3.0, -1.0, -0.2]
RESOLVABLE_LIMIT = 1e-13
DEFAULT_DPS = 32
DEFAULT_SCAN = 4000


class CheckFailed(RuntimeError):
    pass


def exact(value):
    """mpf of the decimal value of a float (1.78 means 1.78 exactly)."""
    return mpf(repr(float(value)))


def rel_tol(margin):
    return mpf(10) ** (-(mp.dps - margin))


class Firn:
    """Exponential profile and its ray reaches, in mpmath and in numpy."""

    def __init__(self, params):
        self.nd = exact(params["n_deep"])
        self.ns = exact(params["n_surface"])
        self.h = exact(params["scale_depth"])
        self.c = self.nd - self.ns
        if not (self.c > 0 and self.h > 0):
            raise ValueError("need n_deep > n_surface and scale_depth > 0")
        self.f_nd, self.f_ns = float(self.nd), float(self.ns)
        self.f_h, self.f_c = float(self.h), float(self.c)

    # --- ray labels -------------------------------------------------------

    def refracted_ray(self, tau, z_hi):
        """(a, z_t) of the refracted ray with parameter tau (mpmath)."""
        zt = z_hi * (1 - tau * tau)
        return self.c * mp.exp(zt / self.h), zt

    def reflected_ray(self, psi):
        """(a, z_t) of the reflected ray with surface zenith psi (mpmath)."""
        a_minus_c = 2 * self.ns * mp.sin((mp.pi / 2 - psi) / 2) ** 2
        return self.c + a_minus_c, self.h * mp.log1p(a_minus_c / self.c)

    def refracted_ray_np(self, tau, z_hi):
        zt = z_hi * (1.0 - tau * tau)
        return self.f_c * np.exp(zt / self.f_h), zt

    def reflected_ray_np(self, psi):
        a_minus_c = 2.0 * self.f_ns * np.sin((np.pi / 2 - psi) / 2) ** 2
        return self.f_c + a_minus_c, self.f_h * np.log1p(a_minus_c / self.f_c)

    # --- closed form ------------------------------------------------------

    def g_term(self, a, zt, z):
        """artanh(y) at height z <= z_t for the ray (a, z_t)."""
        if z == zt:
            return mpf(0)
        b = self.nd - a
        w2 = -a * mp.expm1((z - zt) / self.h)
        y = mp.sqrt(w2 * (self.nd + b) / (a * (w2 + 2 * b)))
        log_one_minus_y2 = (z - zt) / self.h + mp.log(2 * b / (w2 + 2 * b))
        return mp.log1p(y) - log_one_minus_y2 / 2

    def k_factor(self, a):
        b = self.nd - a
        return 2 * self.h * b / mp.sqrt(a * (self.nd + b))

    def reach_closed(self, a, zt, z_lo, z_hi, turning=False):
        """Closed-form reach of the up-going ray (a, z_t) from z_lo to z_hi.

        turning: continue the refracted formula (top at z_t) to z_t > 0, so
        that derivatives at the grazing end are one-sided.
        """
        b = self.nd - a
        if b == 0:
            return mpf(0)
        top = mpf(0) if (zt >= 0 and not turning) else zt
        g = self.g_term(a, zt, z_lo) + self.g_term(a, zt, z_hi) - 2 * self.g_term(a, zt, top)
        return self.k_factor(a) * g

    def horizon_closed(self, z_lo, z_hi):
        """Closed-form X_h: direct ray from z_lo, horizontal at z_hi."""
        a = self.c * mp.exp(z_hi / self.h)
        return self.k_factor(a) * self.g_term(a, z_hi, z_lo)

    def g_term_np(self, a, zt, z):
        b = self.f_nd - a
        w2 = -a * np.expm1((z - zt) / self.f_h)
        with np.errstate(divide="ignore", invalid="ignore"):
            y = np.sqrt(w2 * (self.f_nd + b) / (a * (w2 + 2.0 * b)))
            l1y2 = (z - zt) / self.f_h + np.log(2.0 * b / (w2 + 2.0 * b))
            g = np.log1p(y) - 0.5 * l1y2
        return np.where(z == zt, 0.0, g)

    def reach_closed_np(self, a, zt, z_lo, z_hi):
        b = self.f_nd - a
        top = np.where(zt >= 0.0, 0.0, zt)
        with np.errstate(divide="ignore", invalid="ignore"):
            k = 2.0 * self.f_h * b / np.sqrt(a * (self.f_nd + b))
            x = k * (self.g_term_np(a, zt, z_lo) + self.g_term_np(a, zt, z_hi)
                     - 2.0 * self.g_term_np(a, zt, top))
        return np.where(b == 0.0, 0.0, x)

    # --- quadrature (independent of the closed form) ----------------------

    def stretch_quad(self, a, zt, z_bot, z_top):
        """int_{z_bot}^{z_top} b / sqrt(n^2 - b^2) dz by tanh-sinh, z_top <= z_t."""
        b = self.nd - a
        h = self.h
        s_lo = zt - z_top
        s_hi = zt - z_bot
        if s_lo < 0 or s_hi < s_lo:
            raise ValueError("bad stretch")
        if s_hi == s_lo:
            return mpf(0)

        def q_of(s):
            return -mp.expm1(-s / h)  # (n - b) / a

        def f_s(s):  # integrand in s = z_t - z
            q = q_of(s)
            return b / mp.sqrt(a * q * (2 * b + a * q))

        def f_t(t):  # s = t^2 near the turning point, ds = 2 t dt
            s = t * t
            q = q_of(s)
            ratio = h if s == 0 else s / q
            return 2 * b * mp.sqrt(ratio / (a * (2 * b + a * q)))

        tol = rel_tol(6)
        total = mpf(0)
        pieces = []
        if s_lo < h:
            pieces.append((f_t, [mp.sqrt(s_lo), mp.sqrt(min(s_hi, h))]))
        if s_hi > h:
            pts = [max(s_lo, h)]
            edge = 2 * h
            while edge < s_hi:
                if edge > pts[0]:
                    pts.append(edge)
                edge *= 2
            pts.append(s_hi)
            pieces.append((f_s, pts))
        for func, pts in pieces:
            val, err = mp.quad(func, pts, error=True, method="tanh-sinh")
            if err > tol * (abs(val) + 1):
                raise CheckFailed("quadrature error %s for %s" % (err, val))
            total += val
        return total

    def reach_quad(self, a, zt, z_lo, z_hi):
        if self.nd - a == 0:
            return mpf(0)
        top = mpf(0) if zt >= 0 else zt
        return self.stretch_quad(a, zt, z_lo, top) + self.stretch_quad(a, zt, z_hi, top)

    def horizon_quad(self, z_lo, z_hi):
        a = self.c * mp.exp(z_hi / self.h)
        return self.stretch_quad(a, z_hi, z_lo, z_hi)


# ---------------------------------------------------------------------------
# the maximisation
# ---------------------------------------------------------------------------

def illinois_root(func, lo, f_lo, hi, f_hi, tol):
    """Root of func in [lo, hi] with f_lo * f_hi < 0, never leaving the bracket."""
    side = 0
    p = (lo + hi) / 2
    for _ in range(400):
        p = (lo * f_hi - hi * f_lo) / (f_hi - f_lo)
        if not (lo < p < hi):
            p = (lo + hi) / 2
        fp = func(p)
        if fp == 0:
            return p
        if (fp > 0) == (f_hi > 0):
            hi, f_hi = p, fp
            if side == -1:
                f_lo /= 2
            side = -1
        else:
            lo, f_lo = p, fp
            if side == 1:
                f_hi /= 2
            side = 1
        if hi - lo <= tol:
            return p
    raise CheckFailed("Illinois iteration did not converge")


class SubFamily:
    """Up-going sub-family: parameter range, ray label, closed form, quadrature."""

    def __init__(self, kind, firn, z_lo, z_hi, p_lo, p_hi, ray, ray_np):
        self.kind = kind
        self.firn = firn
        self.z_lo, self.z_hi = z_lo, z_hi
        self.f_lo, self.f_hi = float(z_lo), float(z_hi)
        self.p_lo, self.p_hi = p_lo, p_hi
        self.ray, self.ray_np = ray, ray_np

    def x(self, p):
        a, zt = self.ray(p)
        return self.firn.reach_closed(a, zt, self.z_lo, self.z_hi,
                                      turning=self.kind == "refracted")

    def x_quad(self, p):
        a, zt = self.ray(p)
        return self.firn.reach_quad(a, zt, self.z_lo, self.z_hi)

    def dx(self, p):
        return mp.diff(self.x, p)

    def scan(self, n):
        self.grid = np.linspace(float(self.p_lo), float(self.p_hi), n + 1)
        a, zt = self.ray_np(self.grid)
        self.grid_x = self.firn.reach_closed_np(a, zt, self.f_lo, self.f_hi)
        if not np.all(np.isfinite(self.grid_x)):
            raise CheckFailed("non-finite scan values (%s)" % self.kind)

    def interior_maxima(self):
        """Full-precision interior maxima (param, x) of this sub-family."""
        gx = self.grid_x
        span = self.p_hi - self.p_lo
        noise = 1e-12 * (1.0 + np.abs(gx).max())
        diff = np.diff(gx)
        signs = np.where(np.abs(diff) <= noise, 0, np.sign(diff)).astype(int)
        brackets = []
        last, last_k = 0, None
        for k, sg in enumerate(signs):
            if sg == 0:
                continue
            if last > 0 and sg < 0:
                # rise ends at grid point last_k + 1, fall starts at k
                brackets.append((max(last_k, 0), min(k + 1, len(gx) - 1)))
            last, last_k = sg, k
        # a maximum hidden in the last cell before the grazing end
        if self.kind == "refracted" and last >= 0:
            if self.dx(self.p_hi) < 0:
                brackets.append((len(gx) - 2, len(gx) - 1))
        found = []
        tol = span * rel_tol(4)
        for i, j in brackets:
            lo, hi = mpf(self.grid[i]), mpf(self.grid[j])
            if j == len(gx) - 1:
                hi = self.p_hi
            d_lo, d_hi = self.dx(lo), self.dx(hi)
            widen = 0
            while not (d_lo > 0 > d_hi):
                widen += 1
                if widen > 4:
                    raise CheckFailed("no derivative sign change around a "
                                      "scanned maximum (%s)" % self.kind)
                i, j = max(i - 1, 0), min(j + 1, len(gx) - 1)
                lo, hi = mpf(self.grid[i]), mpf(self.grid[j])
                if j == len(gx) - 1:
                    hi = self.p_hi
                d_lo, d_hi = self.dx(lo), self.dx(hi)
            p = illinois_root(self.dx, lo, d_lo, hi, d_hi, tol)
            found.append((p, self.x(p)))
        return found


def relative(u, v):
    return abs(u - v) / max(abs(v), mpf(1))


class Checks:
    def __init__(self):
        self.worst_closed_vs_quad = mpf(0)
        self.worst_stationarity = mpf(0)
        self.evaluations = 0

    def agree(self, closed, quad, what):
        r = relative(quad, closed)
        self.evaluations += 1
        self.worst_closed_vs_quad = max(self.worst_closed_vs_quad, r)
        if r > rel_tol(8):
            raise CheckFailed("closed form %s and quadrature %s disagree (%s)"
                              % (closed, quad, what))
        return quad


def solve_pair(firn, z_ant, z_src, scan, checks):
    z_lo, z_hi = min(z_ant, z_src), max(z_ant, z_src)
    rec = {}
    equal = z_lo == z_hi
    if equal:
        x_h = mpf(0)
    else:
        x_h = checks.agree(firn.horizon_closed(z_lo, z_hi), firn.horizon_quad(z_lo, z_hi),
                           "direct horizon")
    rec["direct_horizon_x"] = x_h
    rec["direct_horizon_invariant"] = firn.nd - firn.c * mp.exp(z_hi / firn.h)
    rec["double_resolvable"] = bool(float(firn.c * mp.exp(z_lo / firn.h)) >= RESOLVABLE_LIMIT)
    if z_hi == 0:
        rec.update(max_reach_x=None, max_reach_invariant=None, max_at_grazing=None,
                   max_reach_kind=None, upgoing_local_maxima=None,
                   shadow_boundary_x=x_h)
        return rec

    refr = SubFamily("refracted", firn, z_lo, z_hi, mpf(0), mpf(1),
                     lambda t: firn.refracted_ray(t, z_hi),
                     lambda t: firn.refracted_ray_np(t, float(z_hi)))
    refl = SubFamily("reflected", firn, z_lo, z_hi, mpf(0), mp.pi / 2,
                     firn.reflected_ray, firn.reflected_ray_np)
    candidates = []  # (x, a, kind, family, param)
    n_local = 0
    for fam in (refr, refl):
        fam.scan(scan)
        for p, xv in fam.interior_maxima():
            n_local += 1
            a, _ = fam.ray(p)
            candidates.append((xv, a, fam.kind, fam, p))
    # the grazing ray (join of the two sub-families) and the tau = 0 ray
    a_g, zt_g = firn.c, mpf(0)
    x_graze = firn.reach_closed(a_g, zt_g, z_lo, z_hi)
    x_graze_refl = refl.x(refl.p_hi)
    if relative(x_graze_refl, x_graze) > rel_tol(8):
        raise CheckFailed("sub-families do not join at the grazing ray")
    candidates.append((x_graze, a_g, "grazing", None, None))
    a0, zt0 = firn.refracted_ray(mpf(0), z_hi)
    candidates.append((firn.reach_closed(a0, zt0, z_lo, z_hi), a0, "turning_at_upper_point",
                       None, None))
    candidates.sort(key=lambda c: c[0], reverse=True)
    x_cf, a_best, kind, fam, p = candidates[0]
    if kind == "turning_at_upper_point":
        raise CheckFailed("maximum at the ray turning at the upper point (unexpected)")

    if kind == "grazing":
        x_q = checks.agree(x_cf, firn.reach_quad(a_g, zt_g, z_lo, z_hi), "grazing ray")
        for sub in (refr, refl):
            delta = (sub.p_hi - sub.p_lo) * mpf("1e-6")
            inside = sub.x_quad(sub.p_hi - delta)
            if not inside < x_q:
                raise CheckFailed("grazing maximum not above the %s ray next to it"
                                  % sub.kind)
    else:
        x_q = checks.agree(x_cf, fam.x_quad(p), "interior maximum")
        span = fam.p_hi - fam.p_lo
        delta = span * mpf("1e-9")
        if p - delta <= fam.p_lo or p + delta >= fam.p_hi:
            raise CheckFailed("interior maximum at the edge of its sub-family")
        xm, xp = fam.x_quad(p - delta), fam.x_quad(p + delta)
        curv = (xp - 2 * x_q + xm) / delta ** 2
        slope = (xp - xm) / (2 * delta)
        if not curv < 0:
            raise CheckFailed("quadrature not concave at the maximum")
        offset = abs(slope / curv) / span
        checks.worst_stationarity = max(checks.worst_stationarity, offset)
        if offset > mpf("1e-14"):
            raise CheckFailed("quadrature stationary point %s away from the "
                              "closed-form one" % offset)
        # the grazing value, checked by quadrature too (it lost the comparison)
        checks.agree(x_graze, firn.reach_quad(a_g, zt_g, z_lo, z_hi), "grazing ray")
    if not x_q > x_h:
        raise CheckFailed("X_max not above X_h")
    rec.update(max_reach_x=x_q, max_reach_invariant=firn.nd - a_best,
               max_at_grazing=(kind == "grazing"), max_reach_kind=kind,
               upgoing_local_maxima=n_local, shadow_boundary_x=x_q)
    return rec


def as_json(v):
    if isinstance(v, mpmath.mpf):
        return float(v)
    return v


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--output", default=DEFAULT_OUTPUT)
    ap.add_argument("--dps", type=int, default=DEFAULT_DPS)
    ap.add_argument("--scan", type=int, default=DEFAULT_SCAN,
                    help="grid cells per up-going sub-family for the scan")
    args = ap.parse_args(argv)
    if args.dps < 30:
        ap.error("--dps must be at least 30")
    mp.dps = args.dps
    checks = Checks()
    cases = []
    start = time.time()
    for key, params in PROFILES.items():
        firn = Firn(params)
        for z_ant in ANTENNA_Z:
            for z_src in SOURCE_Z:
                t0 = time.time()
                rec = solve_pair(firn, exact(z_ant), exact(z_src), args.scan, checks)
                out = {"name": "%s/antenna%g/source%g" % (key, z_ant, z_src),
                       "profile": key, "antenna_z": z_ant, "source_z": z_src}
                for field in ("max_reach_x", "direct_horizon_x", "max_at_grazing",
                              "max_reach_invariant", "max_reach_kind",
                              "shadow_boundary_x", "direct_horizon_invariant",
                              "upgoing_local_maxima", "double_resolvable"):
                    out[field] = as_json(rec[field])
                cases.append(out)
                print("%-32s %5.2fs  X_h=%-22r X_max=%-22r %s" % (
                    out["name"], time.time() - t0, out["direct_horizon_x"],
                    out["max_reach_x"], out["max_reach_kind"]), file=sys.stderr)
    elapsed = time.time() - start
    print("%d cases, total %.1fs; worst closed-form/quadrature relative difference "
          "%s, worst stationarity offset %s" % (
              len(cases), elapsed, mpmath.nstr(checks.worst_closed_vs_quad, 3),
              mpmath.nstr(checks.worst_stationarity, 3)), file=sys.stderr)
    doc = {
        "generator": "tests/generators/reference_shadow.py (mpmath %s, %d digits; "
                     "closed-form scan of %d cells per sub-family, maxima refined "
                     "on mpmath.diff derivative, every value recomputed by "
                     "tanh-sinh quadrature)" % (mpmath.__version__, args.dps, args.scan),
        "mp_dps": args.dps,
        "units": {"x": "m", "z": "m, height (0 at the surface, negative in the ice)",
                  "invariant": "b = n(z) sin(zenith)"},
        "profiles": PROFILES,
        "antenna_z": ANTENNA_Z,
        "source_z": SOURCE_Z,
        "double_resolvable_limit": RESOLVABLE_LIMIT,
        "self_checks": {
            "worst_relative_closed_form_vs_quadrature": float(checks.worst_closed_vs_quad),
            "worst_stationarity_offset": float(checks.worst_stationarity),
            "quadrature_comparisons": checks.evaluations,
        },
        "cases": cases,
    }
    with open(args.output, "w") as fh:
        json.dump(doc, fh, indent=1)
        fh.write("\n")


if __name__ == "__main__":
    main()
