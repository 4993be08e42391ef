"""Every catalogue case against the independent mpmath reference.

Outside source: tests/data/reference_rays.json, written by
tests/generators/reference_rays.py, which integrates the ray equations with
mpmath tanh-sinh quadrature at 32 digits and finds each ray by bracketing; it
shares no code with firnray.  Tolerances (per quantity): travel time 1 ps,
angles 1e-4 deg, path length 1 mm, invariant 1e-9, turning height 1 mm;
kinds and number of rays exact.
"""

import json
import os

import pytest

import firnray
from firnray.rays import exponential_kernels as ek
from firnray.rays import exponential_solver as es

HERE = os.path.dirname(os.path.abspath(__file__))
with open(os.path.join(HERE, "data", "reference_rays.json"), encoding="utf-8") as fh:
    REFERENCE = json.load(fh)

TOL = {"travel_time": 1e-3, "launch_zenith": 1e-4, "arrival_zenith": 1e-4,
       "path_length": 1e-3, "invariant": 1e-9}


def _profile(case):
    return firnray.ExponentialProfile(**case["profile"])


@pytest.mark.parametrize("name", sorted(REFERENCE["cases"]))
def test_case_against_reference(name):
    case = REFERENCE["cases"][name]
    rays = firnray.find_rays(_profile(case), case["source"], case["receiver"])
    ref = case["rays"]
    assert [r.kind for r in rays] == [r["kind"] for r in ref]
    for got, want in zip(rays, ref):
        assert got.converged
        for key, tol in TOL.items():
            assert abs(getattr(got, key) - want[key]) <= tol, (key, getattr(got, key), want[key])
        if want["turning_z"] is None:
            assert got.turning_z is None
        else:
            assert abs(got.turning_z - want["turning_z"]) <= 1e-3


@pytest.mark.parametrize("name", sorted(REFERENCE["cases"]))
def test_horizon_and_max_reach_against_reference(name):
    """Direct horizon X_h and largest reach X_max of the up-going family.

    At depths where n(z) equals n_deep in double precision (deep_far) the
    reference carries more digits than a double solver can; those are checked
    to 1e-6 relative, the others to 1 mm.
    """
    case = REFERENCE["cases"][name]
    if case["direct_horizon_x"] is None:
        return
    prof = _profile(case)
    if prof.n_deep == prof.n_surface:
        return
    z1, z2 = case["source"][1], case["receiver"][1]
    pair = ek.pair_state(*prof.parameters[:3], min(z1, z2), max(z1, z2))
    x_h = ek.family_distance(False, 0.0, pair)[0]
    tol = 1e-3 + 1e-6 * case["direct_horizon_x"] * (min(z1, z2) < -1000.0)
    assert abs(x_h - case["direct_horizon_x"]) <= tol
    if case["max_reach_x"] is not None:
        x_max = es.up_family_peak(pair)[1]
        tol = 1e-3 + 1e-6 * case["max_reach_x"] * (min(z1, z2) < -1000.0)
        assert abs(x_max - case["max_reach_x"]) <= tol
