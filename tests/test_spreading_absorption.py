"""Geometric spreading (equivalent distance) and the absorption integral."""

import math

import numpy as np
import pytest
from scipy.integrate import quad

import firnray
from firnray.signal.absorption import absorption_exponent

from raytrace_ode import make_index, reach_at_height

PROF = firnray.load_profile("demo-dry-firn")
UNIFORM = firnray.ExponentialProfile(1.78, 1.78, 40.0)


@pytest.mark.parametrize("src,rcv", [((0, -500), (700, -100)), ((0, -30), (10, -300)),
                                     ((0, 20), (300, 5))])
def test_uniform_equivalent_distance_is_path_length(src, rcv):
    """Closed-form limit (common practice): in a uniform medium a point source's
    flux falls as 1/L^2 along a straight (or image) path."""
    prof = UNIFORM if src[1] < 0 else PROF
    for ray in firnray.find_rays(prof, src, rcv):
        assert ray.equivalent_distance == pytest.approx(ray.path_length, rel=1e-12)


@pytest.mark.parametrize("src,rcv", [((0, -600), (1500, -100)), ((0, -300), (400, -60)),
                                     ((0, -800), (200, -150)), ((0, -100), (900, -400)),
                                     ((0, -200), (560, -60))])
def test_spreading_against_traced_reach(src, rcv):
    """Outside source: finite differences of the reach X(theta_0) of rays traced
    with scipy solve_ivp (tests/raytrace_ode.py), put into the ray-tube formula
    R^2 = X |dX/dtheta_0| |cos theta_r| / sin theta_0 (energy conservation in a
    ray tube: common practice)."""
    index = make_index(PROF.n_deep, PROF.n_surface, PROF.scale_depth)
    for ray in firnray.find_rays(PROF, src, rcv):
        descending = ray.arrival_zenith > 90.0
        h = 1e-4
        xs = [reach_at_height(index, src[1], ray.launch_zenith + d, rcv[1], descending)
              for d in (-h, h)]
        dx = (xs[1] - xs[0]) / math.radians(2 * h)
        x = rcv[0] - src[0]
        r2 = x * abs(dx) * abs(math.cos(math.radians(ray.arrival_zenith))) / math.sin(
            math.radians(ray.launch_zenith))
        assert ray.equivalent_distance == pytest.approx(math.sqrt(r2), rel=1e-5), ray


def test_spreading_reciprocity_relation():
    """R_eq(A -> B) / R_eq(B -> A) = n(A) / n(B): the ray-tube flux carries the
    index of each end (consequence of the formula, with reciprocity of the
    launch/arrival angles)."""
    a, b = (0.0, -700.0), (1200.0, -60.0)
    fwd = firnray.find_rays(PROF, a, b)
    back = firnray.find_rays(PROF, b, a)
    for f, r in zip(fwd, back):
        assert f.equivalent_distance / r.equivalent_distance == pytest.approx(
            PROF.index(a[1]) / PROF.index(b[1]), rel=1e-9)


def test_focusing_grows_towards_the_shadow_boundary():
    z_src, z_ant = -150.0, -60.0
    boundary = firnray.shadow_boundary(PROF, z_ant, z_src)
    near = firnray.find_rays(PROF, (0.0, z_src), (boundary * (1 - 1e-6), z_ant))
    far = firnray.find_rays(PROF, (0.0, z_src), (boundary * 0.5, z_ant))
    assert max(r.focusing for r in near) > 5 * max(r.focusing for r in far)


def test_absorption_integral_against_quadrature():
    """Outside source: scipy.integrate.quad of n/(w L) dz over each monotone
    piece, for a depth-varying attenuation length."""
    def length(z, f):
        return (900.0 + 0.6 * z) * (300.0 / f) ** 0.3

    for src, rcv in [((0, -600), (1500, -100)), ((0, -300), (100, -20)), ((0, -100), (200, 30)),
                     ((0, -800), (0.5, -100)), ((0, -200), (560, -60))]:
        for ray in firnray.find_rays(PROF, src, rcv):
            got = absorption_exponent(ray, length, [75.0, 300.0, 900.0])
            for k, f in enumerate((75.0, 300.0, 900.0)):
                ref = sum(quad(lambda z: PROF.index(z) / ray.vertical_slowness(z) / length(z, f),
                               z1, z2, limit=500, epsrel=1e-12, epsabs=0)[0]
                          for z1, z2, _ in ray.pieces())
                assert got[k] == pytest.approx(ref, rel=1e-6)


def test_absorption_with_unit_length_is_path_length_in_ice():
    for ray in firnray.find_rays(PROF, (0, -600), (1500, -100)):
        assert absorption_exponent(ray, 1.0, 100.0) == pytest.approx(ray.path_length, rel=1e-9)
    ray = firnray.find_rays(PROF, (0, -100), (200, 30))[0]
    air = 30.0 / math.cos(math.radians(ray.arrival_zenith))
    assert absorption_exponent(ray, 1.0, 100.0) == pytest.approx(ray.path_length - air, rel=1e-9)
    with pytest.raises(ValueError, match="frequencies"):
        absorption_exponent(ray, 1.0, -5.0)
