"""Signal budgets of rays in non-monotone profiles: ducted rays, caustics, surface ducts.

Checks (each names its outside source or says it is internal):

* the absorption exponent of ducted rays, for a constant and for a
  depth-dependent attenuation length, against the integral of ds / L along
  the same ray shot by solve_ivp (``tests/ray_tube_ode.py``: ray equations of
  geometric optics, Born & Wolf, Principles of Optics, section 3.2);
* the focusing and the relative spreading derivative |dX/dtheta_0| / X of
  ducted rays against the variational ray-tube shooting of the same file;
* near a fold caustic of a ducted family, the spreading derivative vanishes
  as the square root of the distance to the caustic and the focusing grows as
  its -1/4 power (the fold-caustic asymptotics of geometrical optics, X(b)
  quadratic about its extremum; common practice), and the budget flags the
  rays, through the cap or through the derivative alone;
* internal: the quadrature of the legs reproduces the solver's path length;
  a ray reflected m times at the surface takes the Fresnel factor m times.
"""

import math
import os
import sys
import warnings

import numpy as np
import pytest

import firnray
from firnray.signal import absorption
from firnray.signal.budget import CAUSTIC_DERIVATIVE, signal_budget, spreading_derivative

sys.path.insert(0, os.path.dirname(__file__))
from ray_tube_ode import shoot_tube, tube_focusing  # noqa: E402
from test_studies_nonmonotone import DIP, d2n_ode, dn_ode, n_ode  # noqa: E402

SOURCE_Z, ANTENNA_Z = -24.0, -25.0     # both in the duct above the dip


def _rays(x, src=SOURCE_Z, rcv=ANTENNA_Z, min_focusing=0.05):
    return [r for r in firnray.find_rays(DIP, (0.0, src), (x, rcv)) if r.focusing >= min_focusing]


def _attenuation(z, f):
    """Invented field attenuation length [m], shorter in warmer deep ice."""
    return (900.0 + 4.0 * z) * (200.0 / f) ** 0.3


def test_leg_quadrature_reproduces_the_path_length():
    """Internal: the legs (a, U, D with their multiplicities) summed by the adaptive
    quadrature give the solver's path length."""
    for x, src, rcv in ((300.0, SOURCE_Z, ANTENNA_Z), (150.0, -25.5, -25.5),
                        (100.0, -60.0, -40.0), (500.0, -300.0, -10.0)):
        for ray in _rays(x, src, rcv, min_focusing=1e-3):
            assert absorption.in_band(ray)
            assert absorption.band_path_length(ray) == pytest.approx(ray.path_length, rel=1e-8)


@pytest.mark.parametrize("x", [300.0, 941.5])
def test_absorption_of_ducted_rays_against_shot_rays(x):
    """Outside (solve_ivp shooting): A = integral of ds / L along the ray."""
    rays = [r for r in _rays(x) if r.kind == "ducted"]
    assert rays
    for ray in rays:
        got = shoot_tube(n_ode, dn_ode, d2n_ode, SOURCE_Z, ray.invariant,
                         ray.launch_zenith < 90.0, x, attenuation=lambda z: _attenuation(z, 200.0))
        assert abs(got["z"] - ANTENNA_Z) < 1e-4     # landing: ODE accuracy over ~1 km
        a_const = absorption.absorption_exponent(ray, 750.0, 200.0)
        a_depth = absorption.absorption_exponent(ray, _attenuation, 200.0)
        # 1e-6 relative: ODE accuracy (its landing error moves the end of the path)
        assert a_const == pytest.approx(got["length"] / 750.0, rel=1e-6)
        assert a_depth == pytest.approx(got["absorption"], rel=1e-6)


def test_focusing_and_spreading_derivative_against_the_ray_tube():
    """Outside (variational ray-tube shooting): focusing and |dX/dtheta_0| / X of the
    ducted rays 941.5 m away, including the two that are near a caustic (weaker rays
    skim the dip's minimum, where the profile's panels and the function differ enough
    to matter, theory 11.6)."""
    rays = _rays(941.5, min_focusing=0.09)
    assert sum(r.kind == "ducted" for r in rays) >= 6
    for ray in rays:
        got = shoot_tube(n_ode, dn_ode, d2n_ode, SOURCE_Z, ray.invariant,
                         ray.launch_zenith < 90.0, 941.5)
        foc, deriv = tube_focusing(n_ode, SOURCE_Z, (941.5, ANTENNA_Z), ray.invariant,
                                   ray.launch_zenith, ray.arrival_zenith, got["dX_db"])
        # 1e-4: the solver takes dX/db by a central difference (theory 11.6)
        assert ray.focusing == pytest.approx(foc, rel=1e-4)
        assert spreading_derivative(ray) == pytest.approx(deriv, rel=1e-4)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", firnray.FirnrayWarning)
            bud = signal_budget(ray, [100.0, 300.0], _attenuation)
        assert np.all(np.isfinite(bud.total_db_s)) and np.isfinite(bud.focusing)
        assert bud.interaction == "none" and bud.interactions == 0


def _caustic():
    """Distance [m] where the two rays of the 13-turn family appear (a fold caustic),
    by bisection on the number of such rays."""
    def count(x):
        return sum(r.turning_points == 13
                   for r in firnray.find_rays(DIP, (0.0, SOURCE_Z), (x, ANTENNA_Z)))
    lo, hi = 940.0, 941.5
    assert count(lo) == 1 and count(hi) == 3
    while hi - lo > 1e-7:
        mid = 0.5 * (lo + hi)
        lo, hi = (lo, mid) if count(mid) == 3 else (mid, hi)
    return hi


def test_rays_near_a_caustic_are_flagged():
    """Outside (fold-caustic asymptotics): the pair born at the caustic has a spreading
    derivative ~ sqrt(x - x_c) and a focusing ~ (x - x_c)^(-1/4); the budget flags
    them through the focusing cap, and through the derivative alone when the cap is
    out of reach; the third ray of the family, far from its caustic, is not flagged."""
    x_c = _caustic()
    pairs = {}
    for d in (1e-2, 1e-3):
        rays = [r for r in firnray.find_rays(DIP, (0.0, SOURCE_Z), (x_c + d, ANTENNA_Z))
                if r.turning_points == 13]
        assert len(rays) == 3
        far = min(rays, key=lambda r: r.invariant)
        pair = [r for r in rays if r is not far]
        pairs[d] = pair
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", firnray.FirnrayWarning)
            bud_far = signal_budget(far, 200.0, _attenuation)
            capped = [signal_budget(r, 200.0, _attenuation) for r in pair]
            loose = [signal_budget(r, 200.0, _attenuation, focusing_cap=1e6) for r in pair]
        assert not bud_far.near_caustic and bud_far.spreading_derivative > 1.0
        for b in capped:
            assert b.near_caustic and b.focusing_capped and b.focusing == pytest.approx(10.0)
        for b in loose:
            assert b.near_caustic and not b.focusing_capped
            assert b.spreading_derivative < CAUSTIC_DERIVATIVE
        assert any("caustic" in str(w.message) for w in caught)
    for k in range(2):
        g1, g2 = (spreading_derivative(pairs[d][k]) for d in (1e-2, 1e-3))
        f1, f2 = (pairs[d][k].focusing for d in (1e-2, 1e-3))
        # 2 %: the asymptotic laws hold to first order in the distance to the caustic
        assert g1 / g2 == pytest.approx(math.sqrt(10.0), rel=2e-2)
        assert f2 / f1 == pytest.approx(10.0 ** 0.25, rel=2e-2)


def test_budget_many_reports_the_caustic_fields():
    rs = firnray.find_rays_many(DIP, (0.0, SOURCE_Z), np.array([[300.0, ANTENNA_Z]]))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", firnray.FirnrayWarning)
        out = firnray.signal_budget_many(rs, [200.0], 800.0)
    n = int(rs.count[0])
    assert np.all(np.isfinite(out["spreading_derivative"][0, :n]))
    for k, ray in enumerate(rs[0]):
        assert out["spreading_derivative"][0, k] == pytest.approx(spreading_derivative(ray))
        assert out["focusing_capped"][0, k] == (ray.focusing > 10.0)


CRUST = firnray.FunctionProfile(lambda z: 1.78 - 0.43 * np.exp(z / 40.0)
                                + 0.1 * np.exp(-(z / 1.5) ** 2))


def test_rays_reflected_several_times_in_a_surface_duct():
    """Internal: under a dense surface crust (invented) rays bounce between the surface
    and a turning point below; each reflection takes the Fresnel factor once
    (total internal reflection: 0 dB, the phase m times)."""
    rays = [r for r in firnray.find_rays(CRUST, (0.0, -0.3), (60.0, -0.5))
            if r.surface_reflections >= 2]
    assert rays
    for ray in rays:
        m = ray.surface_reflections
        single = firnray.fresnel(CRUST.n_surface, CRUST.n_air,
                                 math.degrees(math.asin(ray.invariant / CRUST.n_surface)))
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", firnray.FirnrayWarning)
            bud = signal_budget(ray, 200.0, 800.0)
        assert bud.interactions == m and bud.total_internal_reflection
        assert bud.fresnel_db_s == pytest.approx(0.0, abs=1e-9)
        phase = np.angle(bud.field_factor_s[0] / abs(bud.field_factor_s[0]))
        want = np.angle(complex(single.r_s) ** m)
        assert phase == pytest.approx(want, abs=1e-9)
        assert absorption.band_path_length(ray) == pytest.approx(ray.path_length, rel=1e-8)
