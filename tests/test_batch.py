"""find_rays_many: same rays as find_rays, NaN padding, shapes, broadcasting."""

import math
import warnings

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis.extra import numpy as hnp
from hypothesis import strategies as st

import firnray
from firnray.rays import exponential_kernels as ek
from firnray.rays import exponential_solver as es

from conftest import CASES, PROFILES

PROF = firnray.ExponentialProfile(1.78, 1.35, 40.0)


def _assert_same(batch_rays, single_rays):
    assert [r.kind for r in batch_rays] == [r.kind for r in single_rays]
    for b, s in zip(batch_rays, single_rays):
        assert abs(b.travel_time - s.travel_time) <= 1e-3
        for name in ("path_length", "launch_zenith", "arrival_zenith", "invariant"):
            assert getattr(b, name) == pytest.approx(getattr(s, name), abs=1e-9)


@pytest.mark.parametrize("profile_key", sorted(PROFILES))
def test_catalogue_batch_equals_single(profile_key):
    cases = [c for c in CASES if c["profile"] == profile_key]
    prof = PROFILES[profile_key]
    src = np.array([c["source"] for c in cases], float)
    rcv = np.array([c["receiver"] for c in cases], float)
    batch = firnray.find_rays_many(prof, src, rcv)
    assert batch.travel_time.shape[0] == len(cases)
    for i, c in enumerate(cases):
        single = firnray.find_rays(prof, c["source"], c["receiver"])
        assert batch.count[i] == len(single)
        _assert_same(batch[i], single)


@settings(max_examples=50, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.large_base_example, HealthCheck.too_slow])
@given(hnp.arrays(float, (200,), elements=st.floats(-2000.0, 30.0)),
       hnp.arrays(float, (200,), elements=st.floats(-200.0, 10.0)),
       hnp.arrays(float, (200,), elements=st.floats(0.0, 3000.0)))
def test_hypothesis_pairs_batch_equals_single(z_src, z_rcv, x):
    """50 examples x 200 pairs = 10^4 pairs drawn by hypothesis."""
    arr = np.column_stack([z_src, z_rcv, x])
    keep = ~((arr[:, 2] == 0.0) & (arr[:, 0] == arr[:, 1]))
    arr = arr[keep]
    src = np.column_stack([np.zeros(len(arr)), arr[:, 0]])
    rcv = np.column_stack([arr[:, 2], arr[:, 1]])
    batch = firnray.find_rays_many(PROF, src, rcv)
    for i in range(len(arr)):
        _assert_same(batch[i], firnray.find_rays(PROF, src[i], rcv[i]))
    # sorted by time, NaN padded
    t = batch.travel_time
    if t.shape[1] == 2:
        two = batch.count == 2
        assert np.all(t[two, 0] <= t[two, 1])
    assert np.all(np.isnan(t[batch.count == 0]))


def test_nan_rows_give_empty_rows_not_errors():
    src = np.array([[0.0, -600.0], [np.nan, -10.0], [0.0, -600.0]])
    rcv = np.array([[1500.0, -100.0], [100.0, -100.0], [1500.0, np.nan]])
    batch = firnray.find_rays_many(PROF, src, rcv)
    assert list(batch.count) == [2, 0, 0]
    assert np.all(np.isnan(batch.travel_time[1:])) and np.all(batch.kind[1:] == -1)
    assert batch[1] == []


def test_invalid_rows_warn_and_give_no_ray():
    src = np.array([[0.0, -600.0], [0.0, -9000.0], [5.0, -50.0]])
    rcv = np.array([[1500.0, -100.0], [100.0, -100.0], [5.0, -50.0]])
    with pytest.warns(firnray.FirnrayWarning, match="give no ray"):
        batch = firnray.find_rays_many(PROF, src, rcv)
    assert list(batch.count) == [2, 0, 0]


@pytest.mark.parametrize("bad", [np.zeros((4, 4)), np.zeros((2, 2, 2)), np.zeros(5)])
def test_wrong_shape_names_expected_shape(bad):
    with pytest.raises(ValueError, match=r"\(N, 2\) or \(N, 3\)"):
        firnray.find_rays_many(PROF, bad, np.zeros((4, 2)) - 1)


def test_mismatched_lengths_and_workers():
    with pytest.raises(ValueError, match="same number of rows"):
        firnray.find_rays_many(PROF, np.zeros((3, 2)) - 5, np.zeros((4, 2)) - 1)
    with pytest.raises(ValueError, match="workers"):
        firnray.find_rays_many(PROF, (0, -5), (10, -5), workers=0)


def test_broadcast_single_point_and_3d():
    rng = np.random.default_rng(7)
    rcv = np.column_stack([rng.uniform(-500, 500, 50), rng.uniform(-500, 500, 50),
                           -rng.uniform(1, 200, 50)])
    batch = firnray.find_rays_many(PROF, (0.0, 0.0, -400.0), rcv, workers=1)
    assert len(batch) == 50
    for i in range(50):
        _assert_same(batch[i], firnray.find_rays(PROF, (0.0, 0.0, -400.0), rcv[i]))
    assert batch.kind_names[0] == "direct"


def test_kernels_compiled_equal_uncompiled():
    """The pure-Python statement of each kernel gives the compiled result."""
    pair = ek.pair_state(1.78, 0.43, 40.0, -600.0, -100.0)
    assert ek.pair_state.py_func(1.78, 0.43, 40.0, -600.0, -100.0) == pair
    for up in (False, True):
        for psi in (1e-8, 0.01, 0.4, 0.7, 1.3):
            b, p = pair[8] * math.cos(psi), pair[8] * math.sin(psi)
            c = ek.family_sums(up, b, p, pair)
            py = ek.family_sums.py_func(up, b, p, pair)
            assert np.allclose(c, py, rtol=1e-14, atol=0)
    assert es.up_family_peak(pair) == pytest.approx(es.up_family_peak.py_func(pair), rel=1e-12)
