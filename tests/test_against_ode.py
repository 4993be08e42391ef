"""Rays from the closed-form solver against scipy solve_ivp shooting.

Outside source: scipy.integrate.solve_ivp (DOP853) integrating the ray
equations (tests/raytrace_ode.py) from the launch direction that firnray
returns (its Snell invariant and up/down sense);
the ray must land on the receiver within 1 mm and its travel time agree
within 1 ps.
"""

import pytest

import firnray

from conftest import CASES, PROFILES
from raytrace_ode import make_index, shoot

LAND_TOL_M = 1e-3
TIME_TOL_NS = 1e-3


def _cases():
    for case in CASES:
        src, rcv = case["source"], case["receiver"]
        if src[0] == rcv[0]:
            continue  # vertical rays: nothing to land on in x
        yield pytest.param(case, id=case["name"])


@pytest.mark.parametrize("case", list(_cases()))
def test_ray_lands_on_receiver(case):
    prof = PROFILES[case["profile"]]
    rays = firnray.find_rays(prof, case["source"], case["receiver"])
    index = make_index(prof.n_deep, prof.n_surface, prof.scale_depth, prof.n_air)
    x_end = abs(case["receiver"][0] - case["source"][0])
    for ray in rays:
        bounce = ray.kind != "transmitted"
        hit = shoot(index, case["source"][1], ray.invariant, ray.launch_zenith < 90.0, x_end,
                    bounce=bounce)
        assert hit is not None, f"{ray.kind} ray never reached the receiver distance"
        z_end, t_end, l_end = hit
        assert abs(z_end - case["receiver"][1]) < LAND_TOL_M, ray
        assert abs(t_end - ray.travel_time) < TIME_TOL_NS, ray
        assert abs(l_end - ray.path_length) < LAND_TOL_M, ray
