"""The up-going family has a single maximum of reach (the solver relies on it).

Checked numerically (no outside source: a property of the closed form that
the root bracketing depends on) on random geometries by a dense scan of the
family parameter.
"""

import math

import numpy as np
import pytest

from firnray.rays import exponential_kernels as ek
from firnray.rays import exponential_solver as es

PROFILES = [(1.78, 1.35, 40.0), (1.78, 1.30, 15.0), (1.78, 1.45, 80.0), (1.78, 1.20, 25.0)]


@pytest.mark.parametrize("a,ns,s", PROFILES)
def test_single_maximum_and_peak_finder(a, ns, s):
    rng = np.random.default_rng(12345)
    delta = a - ns
    psis = (math.pi / 2) * np.linspace(0.0, 1.0, 1500) ** 3
    for _ in range(60):
        z1 = -rng.uniform(0.0, 2000.0) * rng.choice([1.0, 0.02])
        z2 = -rng.uniform(0.05, 200.0) * rng.choice([1.0, 0.01])
        zlo, zhi = min(z1, z2), max(z1, z2)
        pair = ek.pair_state(a, delta, s, zlo, zhi)
        xs = np.array([ek.family_distance(True, p, pair)[0] for p in psis])
        d = np.diff(xs)
        sign_changes = np.count_nonzero(np.diff(np.sign(d[np.abs(d) > 1e-9 * xs.max()])))
        assert sign_changes <= 1, (zlo, zhi)
        psi_peak, x_max = es.up_family_peak(pair)
        assert x_max >= xs.max() * (1 - 1e-12), (zlo, zhi)
        assert ek.family_distance(True, 0.0, pair)[1] > 0.0
        x_h = ek.family_distance(False, 0.0, pair)[0]
        assert es.reach_bound(x_h, pair) >= x_max
