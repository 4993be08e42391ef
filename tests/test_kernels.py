"""Closed-form segment integrals against mpmath quadrature, compiled against uncompiled.

Outside source: the ray integrals X = ∫ b/w dz, L = ∫ n/w dz, cT = ∫ n²/w dz
(w = sqrt(n² - b²); standard ray theory in a horizontally stratified medium)
evaluated by mpmath tanh-sinh quadrature at 30 digits, with the substitution
z = z_t - t² removing the turning-point singularity.
"""

import math

import mpmath as mp
import numpy as np
import pytest

from firnray.rays import exponential_kernels as ek

A, NS, S = 1.78, 1.35, 40.0
DELTA = A - NS


def n_mp(z):
    return mp.mpf(A) - mp.mpf(DELTA) * mp.e ** (mp.mpf(z) / S)


def quad_segment(b, z1, z2, turning=False):
    """(X, L, cT) [m] by quadrature from z1 up to z2 (z2 the turning point if turning)."""
    with mp.workdps(30):
        b = mp.mpf(b)
        if turning:
            zt = S * mp.log((A - b) / mp.mpf(DELTA))
            top = mp.sqrt(zt - z1)

            def integ(power):
                return mp.quad(lambda t: 2 * t * n_mp(zt - t * t) ** power
                               / mp.sqrt(abs(n_mp(zt - t * t) ** 2 - b * b)), [0, top])
            return float(b * integ(0)), float(integ(1)), float(integ(2))

        def integ(power):
            return mp.quad(lambda z: n_mp(z) ** power / mp.sqrt(n_mp(z) ** 2 - b * b), [z1, z2])
        return float(b * integ(0)), float(integ(1)), float(integ(2))


def closed_segment(compiled, b, p_ref, z_ref, z1, z2=None):
    fn = ek.partial_segment if compiled else ek.partial_segment.py_func
    u_ref, n_ref = ek.level_state.py_func(A, DELTA, S, z_ref)
    if z2 is None:
        return fn(A, DELTA, S, b, p_ref, u_ref, n_ref, z1, 0.0, True)
    return fn(A, DELTA, S, b, p_ref, u_ref, n_ref, z1, z2, False)


SEGMENTS = [  # (z1, z2, elevation at z2 [rad])
    (-600.0, -100.0, 0.3), (-600.0, -100.0, 1e-4), (-50.0, -0.2, 0.9),
    (-1500.0, -1400.0, 0.05), (-30.0, -29.0, 0.2), (-300.0, 0.0, 0.6),
]


@pytest.mark.parametrize("z1,z2,psi", SEGMENTS)
@pytest.mark.parametrize("compiled", [False, True])
def test_segment_against_quadrature(z1, z2, psi, compiled):
    u2, n2 = ek.level_state.py_func(A, DELTA, S, z2)
    b, p = n2 * math.cos(psi), n2 * math.sin(psi)
    x, length, ct = closed_segment(compiled, b, p, z2, z1, z2)
    xq, lq, ctq = quad_segment(b, z1, z2)
    assert x == pytest.approx(xq, rel=1e-10, abs=1e-9)
    assert length == pytest.approx(lq, rel=1e-10, abs=1e-9)
    assert ct == pytest.approx(ctq, rel=1e-10, abs=1e-9)


@pytest.mark.parametrize("z1,b", [(-600.0, 1.70), (-100.0, 1.36), (-20.0, 1.50),
                                  (-5.0, 1.40), (-1000.0, 1.7799)])
@pytest.mark.parametrize("compiled", [False, True])
def test_turning_segment_against_quadrature(z1, b, compiled):
    u1, n1 = ek.level_state.py_func(A, DELTA, S, z1)
    p = math.sqrt(n1 * n1 - b * b)
    x, length, ct = closed_segment(compiled, b, p, z1, z1)
    xq, lq, ctq = quad_segment(b, z1, None, turning=True)
    assert x == pytest.approx(xq, rel=1e-10)
    assert length == pytest.approx(lq, rel=1e-10)
    assert ct == pytest.approx(ctq, rel=1e-10)


@pytest.mark.parametrize("up", [False, True])
@pytest.mark.parametrize("psi", [1e-6, 0.02, 0.3, 0.69, 0.72, 1.2, 1.5])
def test_slope_against_central_difference(up, psi):
    """dX/dpsi from the closed-form derivative vs a mpmath-precision central difference."""
    zlo, zhi = -600.0, -100.0
    pair = ek.pair_state(A, DELTA, S, zlo, zhi)
    x, dx = ek.family_distance(up, psi, pair)
    x_py, dx_py = ek.family_distance.py_func(up, psi, pair)
    assert x == x_py and dx == pytest.approx(dx_py, rel=1e-14)
    h = min(1e-6, 0.5 * psi)
    xp, _ = ek.family_distance(up, psi + h, pair)
    xm, _ = ek.family_distance(up, psi - h, pair)
    assert dx == pytest.approx((xp - xm) / (2 * h), rel=1e-5)


def test_deep_segment_keeps_precision():
    """At -2000 m n(z) equals n_deep to 1e-22: the segment must still be exact.

    Closed-form expectation (common practice: a uniform medium gives straight
    lines): with the index constant to 1e-22 the segment is a straight line.
    """
    z1, z2, psi = -2100.0, -2000.0, 0.01
    u2, n2 = ek.level_state(A, DELTA, S, z2)
    b, p = n2 * math.cos(psi), n2 * math.sin(psi)
    x, length, ct = closed_segment(True, b, p, z2, z1, z2)
    assert x == pytest.approx(100.0 / math.tan(psi), rel=1e-12)
    assert length == pytest.approx(100.0 / math.sin(psi), rel=1e-12)
    assert ct == pytest.approx(A * 100.0 / math.sin(psi), rel=1e-12)
