"""Bad input raises ValueError naming the argument; results never print."""

import math

import numpy as np
import pytest

import firnray

PROF = firnray.load_profile("demo-dry-firn")


@pytest.mark.parametrize("src,rcv,word", [
    ((0.0, float("nan")), (10.0, -5.0), "source"),
    ((0.0, -5.0), (float("inf"), -5.0), "receiver"),
    ((0.0, -5.0), (0.0, -5.0), "differ"),
    ((0.0, -5.0), (1.0,), "receiver"),
    ((0.0, -9000.0), (1.0, -5.0), "valid range"),
    ("here", (1.0, -5.0), "source"),
])
def test_bad_points(src, rcv, word):
    with pytest.raises(ValueError, match=word):
        firnray.find_rays(PROF, src, rcv)


def test_bad_profile():
    with pytest.raises(ValueError, match="profile"):
        firnray.find_rays("demo", (0, -5), (1, -5))


def test_scalar_results_and_no_print(capsys):
    rays = firnray.find_rays(PROF, (0.0, -30.0), (2500.0, -20.0))
    assert rays == []
    rays = firnray.find_rays(PROF, (0.0, -600.0), (1500.0, -100.0))
    assert all(isinstance(r.travel_time, float) for r in rays)
    assert capsys.readouterr().out == ""


def test_directions_are_unit_vectors_in_caller_frame():
    rays = firnray.find_rays(PROF, (10.0, 20.0, -600.0), (10.0 + 300.0, 20.0 + 400.0, -100.0))
    for r in rays:
        d = r.launch_direction
        assert np.linalg.norm(d) == pytest.approx(1.0)
        assert d[0] / d[1] == pytest.approx(0.75)
        assert d[2] == pytest.approx(math.cos(math.radians(r.launch_zenith)))
    with pytest.raises(ValueError, match="n_points"):
        rays[0].path(1)
