"""Fresnel coefficients (firnray.signal.fresnel) against outside sources.

Outside sources:
- the ``tmm`` package (PyPI, transfer-matrix method): ``tmm.coh_tmm`` for two
  semi-infinite media returns the complex Fresnel ``r``, ``t`` and the powers
  ``R``, ``T``.  Its convention maps onto ours as the identity: same formulas
  (r_p = (n2 cos i - n1 cos t)/(n2 cos i + n1 cos t), so r_p = -r_s at normal
  incidence in both), same exp(-i omega t) time dependence and the same
  decaying root cos(theta_t) = +i sqrt(sin^2 theta_t - 1) past the critical
  angle; the comparison is therefore made on the complex numbers directly.
- Hecht, Optics, 4th ed., ch. 4: 4 % normal-incidence reflectance of n = 1.5
  glass from air, Brewster angle tan(theta_B) = n2/n1 with theta_B + theta_t =
  90 deg, critical angle sin(theta_c) = n2/n1, |r| = 1 past it.
- Energy conservation R + T = 1 and Snell's law (common practice).
"""

import math

import numpy as np
import pytest
import tmm

from firnray.signal.fresnel import FresnelCoefficients, brewster_angle, critical_angle, fresnel

AIR, FIRN, ICE_LOW, ICE = 1.0, 1.35, 1.35, 1.78
#: (n1, n2): air -> firn/ice, ice -> air, firn -> ice, ice -> firn.
PAIRS = [(AIR, ICE_LOW), (AIR, ICE), (ICE_LOW, AIR), (ICE, AIR), (FIRN, ICE), (ICE, FIRN)]
ANGLES = np.linspace(0.0, 89.9, 200)


def _tmm(pol, n1, n2, angle_deg):
    """tmm.coh_tmm for two half-spaces (the wavelength is irrelevant there)."""
    return tmm.coh_tmm(pol, [n1, n2], [np.inf, np.inf], math.radians(angle_deg), 1.0)


def _critical(n1, n2):
    return math.degrees(math.asin(n2 / n1)) if n1 > n2 else 90.0


@pytest.mark.parametrize("n1,n2", PAIRS)
def test_against_tmm_below_critical_angle(n1, n2):
    """Source: tmm.coh_tmm; |r|, |t|, R, T and the complex r, t within 1e-9."""
    got = fresnel(n1, n2, ANGLES)
    below = ANGLES < _critical(n1, n2) - 1e-6
    assert np.count_nonzero(below) > 20
    for k in np.flatnonzero(below):
        for pol in "sp":
            ref = _tmm(pol, n1, n2, ANGLES[k])
            r = getattr(got, f"r_{pol}")[k]
            t = getattr(got, f"t_{pol}")[k]
            assert abs(r) == pytest.approx(abs(ref["r"]), abs=1e-9)   # tmm
            assert abs(t) == pytest.approx(abs(ref["t"]), abs=1e-9)   # tmm
            assert abs(r - ref["r"]) < 1e-9                           # tmm, same sign convention
            assert abs(t - ref["t"]) < 1e-9                           # tmm, same sign convention
            assert getattr(got, f"R_{pol}")[k] == pytest.approx(ref["R"], abs=1e-9)  # tmm
            assert getattr(got, f"T_{pol}")[k] == pytest.approx(ref["T"], abs=1e-9)  # tmm
    assert not np.any(got.total_internal_reflection[below])
    # tmm's transmitted angle (th_list[1]) agrees with ours below the critical angle.
    for k in np.flatnonzero(below)[::10]:
        th_t = _tmm("s", n1, n2, ANGLES[k])["th_list"][1]
        assert got.transmission_angle[k] == pytest.approx(math.degrees(th_t.real), abs=1e-9)


@pytest.mark.parametrize("n1,n2", [p for p in PAIRS if p[0] > p[1]])
def test_against_tmm_past_critical_angle(n1, n2):
    """Source: tmm.coh_tmm (complex r, same convention); Hecht, Optics, ch. 4: |r| = 1, T = 0."""
    got = fresnel(n1, n2, ANGLES)
    above = ANGLES > _critical(n1, n2) + 1e-6
    assert np.count_nonzero(above) > 20
    assert np.all(got.total_internal_reflection[above])
    assert np.all(np.isnan(got.transmission_angle[above]))
    for pol in "sp":
        r = getattr(got, f"r_{pol}")[above]
        assert np.max(np.abs(np.abs(r) - 1.0)) < 1e-12                  # Hecht, Optics, ch. 4
        assert np.all(getattr(got, f"T_{pol}")[above] == 0.0)          # Hecht, Optics, ch. 4
        assert np.max(np.abs(getattr(got, f"R_{pol}")[above] - 1.0)) < 1e-12
        for k, angle in zip(np.flatnonzero(above), ANGLES[above]):
            ref = _tmm(pol, n1, n2, angle)
            r_k = getattr(got, f"r_{pol}")[k]
            t_k = getattr(got, f"t_{pol}")[k]
            # tmm: same phase of r (identity mapping; wrapped difference) and same complex t
            phase_diff = np.angle(r_k * np.conj(ref["r"]))
            assert abs(phase_diff) < 1e-9
            assert abs(t_k - ref["t"]) < 1e-9
            assert ref["T"] < 1e-12                                   # tmm: no power through
    # Decaying root: Im(n2 cos theta_t) > 0 (exp(-i omega t)), read back from t_s:
    # t_s = 2 n1 cos_i / (n1 cos_i + n2 cos_t)  =>  n2 cos_t = 2 n1 cos_i / t_s - n1 cos_i.
    cos_i = np.cos(np.radians(ANGLES[above]))
    n2_cos_t = 2 * n1 * cos_i / got.t_s[above] - n1 * cos_i
    assert np.all(n2_cos_t.imag > 0)
    assert np.max(np.abs(n2_cos_t.real)) < 1e-9


def test_phase_past_critical_angle_closed_form():
    """Source: Hecht, Optics, ch. 4 (phase of r under total internal reflection).

    With kappa = sqrt(sin^2 theta_t - 1): r_s = exp(-2 i arctan(n2 kappa / (n1 cos i))),
    r_p = exp(-2 i arctan(n1 kappa / (n2 cos i))) in our (and tmm's) convention.
    """
    n1, n2 = ICE, AIR
    angles = np.linspace(36.0, 89.0, 50)
    got = fresnel(n1, n2, angles)
    cos_i = np.cos(np.radians(angles))
    kappa = np.sqrt((n1 * np.sin(np.radians(angles)) / n2) ** 2 - 1.0)
    want_s = np.exp(-2j * np.arctan(n2 * kappa / (n1 * cos_i)))
    want_p = np.exp(-2j * np.arctan(n1 * kappa / (n2 * cos_i)))
    assert np.max(np.abs(got.r_s - want_s)) < 1e-12
    assert np.max(np.abs(got.r_p - want_p)) < 1e-12


@pytest.mark.parametrize("n1,n2", PAIRS + [(1.0, 1.5), (1.5, 1.0), (1.3, 1.3)])
def test_energy_conservation(n1, n2):
    """Source: energy conservation (common practice): R + T = 1 with the n cos(theta) factor."""
    angles = np.concatenate([ANGLES, np.linspace(0.0, 89.999, 1001)])
    got = fresnel(n1, n2, angles)
    assert np.max(np.abs(got.R_s + got.T_s - 1.0)) < 1e-12
    assert np.max(np.abs(got.R_p + got.T_p - 1.0)) < 1e-12


@pytest.mark.parametrize("n1,n2", PAIRS + [(1.0, 1.5)])
def test_brewster_angle(n1, n2):
    """Source: Hecht, Optics, ch. 4: tan(theta_B) = n2/n1, R_p = 0, theta_B + theta_t = 90 deg."""
    theta_b = brewster_angle(n1, n2)
    assert theta_b == pytest.approx(math.degrees(math.atan(n2 / n1)), abs=1e-12)  # Hecht, ch. 4
    got = fresnel(n1, n2, theta_b)
    assert got.R_p < 1e-24                                                  # Hecht, ch. 4
    assert got.R_s > 1e-4
    assert theta_b + got.transmission_angle == pytest.approx(90.0, abs=1e-9)  # Hecht, ch. 4
    assert _tmm("p", n1, n2, theta_b)["R"] < 1e-24                           # tmm


@pytest.mark.parametrize("n1,n2", [(ICE, AIR), (ICE_LOW, AIR), (ICE, FIRN), (1.5, 1.0)])
def test_critical_angle(n1, n2):
    """Source: Hecht, Optics, ch. 4: sin(theta_c) = n2/n1; tmm: T > 0 just below, T ~ 0 above."""
    theta_c = critical_angle(n1, n2)
    assert theta_c == pytest.approx(math.degrees(math.asin(n2 / n1)), abs=1e-12)  # Hecht, ch. 4
    below, above = fresnel(n1, n2, [theta_c - 1e-3, theta_c + 1e-3]).T_s
    assert below > 0.0 and above == 0.0
    assert _tmm("s", n1, n2, theta_c - 1e-3)["T"] > 1e-3                       # tmm
    assert _tmm("s", n1, n2, theta_c + 1e-3)["T"] < 1e-12                      # tmm
    flags = fresnel(n1, n2, [theta_c - 1e-3, theta_c + 1e-3]).total_internal_reflection
    assert flags.tolist() == [False, True]
    assert brewster_angle(n1, n2) < theta_c


def test_critical_angle_absent_and_broadcast():
    """No total internal reflection when n1 <= n2 (Hecht, Optics, ch. 4): NaN."""
    assert math.isnan(critical_angle(1.0, 1.78))
    assert math.isnan(critical_angle(1.35, 1.35))
    out = critical_angle(np.array([[1.78], [1.0]]), np.array([1.0, 1.35]))
    assert out.shape == (2, 2)
    assert out[0, 0] == pytest.approx(math.degrees(math.asin(1 / 1.78)), abs=1e-12)
    assert out[0, 1] == pytest.approx(math.degrees(math.asin(1.35 / 1.78)), abs=1e-12)
    assert np.all(np.isnan(out[1]))
    assert brewster_angle([1.0, 1.78], 1.35).shape == (2,)


def test_hecht_four_percent():
    """Source: Hecht, Optics, ch. 4: air -> glass (n = 1.5) at normal incidence reflects 4 %."""
    got = fresnel(1.0, 1.5, 0.0)
    assert got.R_s == pytest.approx(0.04, abs=1e-15)   # Hecht, Optics, ch. 4
    assert got.R_p == pytest.approx(0.04, abs=1e-15)   # Hecht, Optics, ch. 4
    assert got.T_s == pytest.approx(0.96, abs=1e-15)
    assert got.T_p == pytest.approx(0.96, abs=1e-15)
    # Convention at normal incidence (ours and tmm's): r_s = -0.2, r_p = +0.2, t = 0.8.
    assert got.r_s == pytest.approx(-0.2, abs=1e-15)
    assert got.r_p == pytest.approx(0.2, abs=1e-15)
    assert got.r_p == pytest.approx(_tmm("p", 1.0, 1.5, 0.0)["r"], abs=1e-15)  # tmm
    assert got.r_s == pytest.approx(_tmm("s", 1.0, 1.5, 0.0)["r"], abs=1e-15)  # tmm
    assert got.t_s == pytest.approx(0.8, abs=1e-15)
    assert got.t_p == pytest.approx(0.8, abs=1e-15)


def test_snell_law():
    """Source: Snell's law (common practice): n1 sin(theta_i) = n2 sin(theta_t)."""
    got = fresnel(ICE, FIRN, ANGLES)
    ok = ~got.total_internal_reflection
    lhs = ICE * np.sin(np.radians(ANGLES[ok]))
    rhs = FIRN * np.sin(np.radians(got.transmission_angle[ok]))
    assert np.max(np.abs(lhs - rhs)) < 1e-12


def test_identical_media_pass_everything():
    """Common practice: no boundary when n1 = n2: r = 0, t = 1, theta_t = theta_i."""
    got = fresnel(1.5, 1.5, ANGLES)
    assert np.max(np.abs(got.r_s)) < 1e-15 and np.max(np.abs(got.r_p)) < 1e-15
    assert np.max(np.abs(got.t_s - 1)) < 1e-15 and np.max(np.abs(got.t_p - 1)) < 1e-15
    assert np.max(np.abs(got.transmission_angle - ANGLES)) < 1e-9


def test_scalar_in_scalar_out():
    got = fresnel(1.0, 1.78, 30.0)
    assert isinstance(got, FresnelCoefficients)
    for name in ("r_s", "r_p", "t_s", "t_p"):
        assert type(getattr(got, name)) is complex
    for name in ("R_s", "R_p", "T_s", "T_p", "transmission_angle"):
        assert type(getattr(got, name)) is float
    assert got.total_internal_reflection is False
    tir = fresnel(1.78, 1.0, 60.0)
    assert tir.total_internal_reflection is True and math.isnan(tir.transmission_angle)
    assert type(critical_angle(1.78, 1.0)) is float
    assert type(brewster_angle(1.0, 1.78)) is float


def test_broadcasting_matches_scalar_calls():
    n1 = np.array([1.0, 1.78, 1.35])[:, None, None]
    n2 = np.array([1.35, 1.0])[None, :, None]
    angles = np.array([0.0, 20.0, 45.0, 70.0])
    got = fresnel(n1, n2, angles)
    assert got.r_s.shape == (3, 2, 4) and got.total_internal_reflection.shape == (3, 2, 4)
    assert got.r_s.dtype == complex and got.total_internal_reflection.dtype == bool
    for i in range(3):
        for j in range(2):
            for k in range(4):
                one = fresnel(float(n1[i, 0, 0]), float(n2[0, j, 0]), float(angles[k]))
                for name in ("r_s", "r_p", "t_s", "t_p", "R_s", "R_p", "T_s", "T_p"):
                    assert getattr(got, name)[i, j, k] == getattr(one, name)
                assert got.total_internal_reflection[i, j, k] == one.total_internal_reflection
    # lists are accepted like arrays
    assert fresnel([1.0, 1.0], 1.78, [10.0, 20.0]).R_s.shape == (2,)


@pytest.mark.parametrize("bad", [90.0, 90.5, -1e-9, -10.0, float("nan"), float("inf"),
                                 [10.0, 95.0], np.array([0.0, float("nan")]), "thirty", 30j])
def test_bad_incidence_raises(bad):
    with pytest.raises(ValueError, match="incidence"):
        fresnel(1.0, 1.78, bad)


@pytest.mark.parametrize("argument", ["n1", "n2"])
@pytest.mark.parametrize("bad", [0.0, -1.35, float("nan"), float("inf"), [1.0, -1.0],
                                 1.78 + 0.01j, None])
def test_bad_index_raises(argument, bad):
    kwargs = {"n1": 1.0, "n2": 1.78, "incidence": 30.0, argument: bad}
    with pytest.raises(ValueError, match=argument):
        fresnel(**kwargs)
    with pytest.raises(ValueError, match=argument):
        critical_angle(**{k: v for k, v in kwargs.items() if k != "incidence"})
    with pytest.raises(ValueError, match=argument):
        brewster_angle(**{k: v for k, v in kwargs.items() if k != "incidence"})


def test_error_message_names_value_and_expectation():
    with pytest.raises(ValueError, match=r"incidence must be an angle in \[0, 90\) \[deg\], "
                                         r"got 95\.0 \(at index \(1,\)\)"):
        fresnel(1.0, 1.78, [10.0, 95.0])
    with pytest.raises(ValueError,
                       match=r"n2 must be a finite refractive index > 0 \[1\], got -2\.0"):
        fresnel(1.0, -2.0, 10.0)
