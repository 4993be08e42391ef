"""Closed-form limit: a uniform index gives straight lines, t = n L / c.

Outside source: elementary geometry (common practice): in a uniform medium
rays are straight; the surface bounce follows the image point mirrored in
z = 0; travel time t = n L / c with c = 0.299792458 m/ns (SI definition).
"""

import math

import numpy as np
import pytest

import firnray

C = 0.299792458
N = 1.78
UNIFORM = firnray.ExponentialProfile(N, N, 40.0)


@pytest.mark.parametrize("src,rcv", [((0, -500), (700, -100)), ((0, -100), (250, -100)),
                                     ((0, -30), (10, -300)), ((5, -2), (5, -60)),
                                     ((0, 0, -100), (30, 40, -20))])
def test_straight_lines_and_image_bounce(src, rcv):
    rays = firnray.find_rays(UNIFORM, src, rcv)
    s, r = np.array(src, float), np.array(rcv, float)
    horiz = float(np.linalg.norm(r[:-1] - s[:-1]))
    dz = r[-1] - s[-1]
    direct = math.hypot(horiz, dz)
    image = math.hypot(horiz, r[-1] + s[-1])
    assert [ray.kind for ray in rays] == ["direct", "reflected"]
    assert rays[0].path_length == pytest.approx(direct, rel=1e-13)
    assert rays[0].travel_time == pytest.approx(N * direct / C, rel=1e-13)
    assert rays[1].path_length == pytest.approx(image, rel=1e-13)
    assert rays[1].travel_time == pytest.approx(N * image / C, rel=1e-13)
    assert rays[0].launch_zenith == pytest.approx(math.degrees(math.atan2(horiz, dz)), abs=1e-9)
    assert rays[0].invariant == pytest.approx(N * horiz / direct, rel=1e-12)


def test_nearly_uniform_profile_approaches_straight_lines():
    """A graded profile with a tiny contrast converges to the uniform answer."""
    prof = firnray.ExponentialProfile(N, N - 1e-9, 40.0)
    rays = firnray.find_rays(prof, (0, -500), (700, -100))
    direct = math.hypot(700, 400)
    assert rays[0].kind == "direct"
    assert rays[0].travel_time == pytest.approx(N * direct / C, abs=1e-3)


def test_air_rays_are_straight():
    prof = firnray.load_profile("demo-dry-firn")
    rays = firnray.find_rays(prof, (0, 20), (300, 5))
    assert [r.kind for r in rays] == ["direct", "reflected"]
    assert rays[0].travel_time == pytest.approx(math.hypot(300, 15) / C, rel=1e-13)
    assert rays[1].travel_time == pytest.approx(math.hypot(300, 25) / C, rel=1e-13)
    assert rays[1].arrival_zenith < 90.0 < rays[1].launch_zenith
