"""Temperature profiles: Robin solution against solve_bvp, limits, tabulated/linear/cubic, errors."""

import math

import numpy as np
import pytest
from scipy.integrate import solve_bvp

from firnray.medium.temperature import (
    SECONDS_PER_YEAR, ColdPlateauCubicTemperature, LinearTemperature, RobinTemperature,
    TabulatedTemperature, cold_plateau_cubic_temperature, linear_temperature,
    robin_temperature, tabulated_temperature)


# --------------------------------------------------------------------------- Robin

def _bvp_robin(surface_c, accumulation_m_per_yr, flux, thickness, conductivity, diffusivity, z):
    """Independent numerical solution of the steady advection-diffusion ODE.

    κ T'' = w T' with w = -a (z + H)/H, T(0) = T_s, dT/dz(-H) = -G/k, solved with
    scipy.integrate.solve_bvp in the dimensionless form x = z/H, θ = (T - T_s) k/(G H):
    θ'' = -Pe (x + 1) θ', θ(0) = 0, θ'(-1) = -1, Pe = a H / κ.
    """
    pe = accumulation_m_per_yr / SECONDS_PER_YEAR * thickness / diffusivity

    def rhs(x, y):
        return np.vstack([y[1], -pe * (x + 1.0) * y[1]])

    def bc(ya, yb):
        return np.array([ya[1] + 1.0, yb[0]])

    x = np.linspace(-1.0, 0.0, 401)
    guess = np.vstack([-x, -np.ones_like(x)])
    sol = solve_bvp(rhs, bc, x, guess, tol=1e-11, max_nodes=200000)
    assert sol.success, sol.message
    scale = flux * thickness / conductivity
    return surface_c + scale * sol.sol(np.asarray(z) / thickness)[0], scale


@pytest.mark.parametrize("surface_c,acc,flux,thickness", [
    (-50.0, 0.08, 0.060, 2800.0),      # cold high plateau, low accumulation
    (-31.5, 0.24, 0.050, 3030.0),      # higher accumulation (erf/erfc branch switch)
    (-25.0, 1.50, 0.080, 1000.0),      # strong advection: large H/l (erfc branch)
    (-40.0, 0.001, 0.050, 3000.0),     # nearly conductive
])
def test_robin_matches_solve_bvp(surface_c, acc, flux, thickness):
    k, kappa = 2.1, 1.09e-6
    z = np.linspace(-thickness, 0.0, 57)
    ours = robin_temperature(z, surface_c, acc, flux, thickness, conductivity=k,
                             diffusivity=kappa)
    ref, scale = _bvp_robin(surface_c, acc, flux, thickness, k, kappa, z)
    # independent source: scipy.integrate.solve_bvp of the same ODE and boundary conditions;
    # 1e-6 relative to the warming scale G H / k
    assert np.max(np.abs(ours - ref)) <= 1e-6 * scale


def test_robin_boundary_conditions():
    k = 2.1
    prof = RobinTemperature(-45.0, 0.1, 0.06, 2500.0, conductivity=k)
    # surface condition of the model: T(0) = T_s exactly
    assert prof.temperature(0.0) == -45.0
    # basal condition: dT/dz = -G/k at the bed (one-sided finite difference, O(h^2))
    h = 0.01
    zb = -2500.0
    grad = (-3 * prof.temperature(zb) + 4 * prof.temperature(zb + h)
            - prof.temperature(zb + 2 * h)) / (2 * h)
    assert grad == pytest.approx(-0.06 / k, rel=1e-6)


def test_robin_zero_accumulation_is_linear():
    # closed-form limit a -> 0: T = T_s + (G/k)(-z), the pure conduction profile
    z = np.linspace(-3000.0, 0.0, 31)
    lin = linear_temperature(z, -50.0, 0.05 / 2.1)
    exact_zero = robin_temperature(z, -50.0, 0.0, 0.05, 3000.0)
    np.testing.assert_allclose(exact_zero, lin, rtol=0, atol=1e-12)
    # a tiny accumulation approaches the same limit: the first-order deviation is bounded
    # by (H/l)^2 = a H / (2 κ) times the warming scale G H / k (expansion of exp(-s²/l²))
    tiny = RobinTemperature(-50.0, 1e-9, 0.05, 3000.0)
    bound = (3000.0 / tiny.diffusion_length_m) ** 2 * (0.05 * 3000.0 / 2.1)
    assert bound < 1e-5
    np.testing.assert_allclose(tiny.temperature(z), lin, rtol=0, atol=bound)
    # deviation from the limit shrinks in proportion to a (first order in a; the
    # second-order correction is of relative size (H/l)^2 ≈ 4e-4 at a = 1e-5 m/yr)
    d1 = np.max(np.abs(robin_temperature(z, -50.0, 1e-5, 0.05, 3000.0) - lin))
    d2 = np.max(np.abs(robin_temperature(z, -50.0, 1e-6, 0.05, 3000.0) - lin))
    assert d1 / d2 == pytest.approx(10.0, rel=1e-3)


def test_robin_default_diffusivity_and_attributes():
    prof = RobinTemperature(-40.0, 0.1, 0.05, 2000.0)
    # default κ = k / (ρ c) with ρ = 917 kg/m^3, c = 2097 J/kg/K (values recalled from memory)
    assert prof.diffusivity == pytest.approx(2.1 / (917.0 * 2097.0))
    a = 0.1 / SECONDS_PER_YEAR
    assert prof.diffusion_length_m == pytest.approx(math.sqrt(2 * prof.diffusivity * 2000.0 / a))
    assert prof.z_min == -2000.0
    assert "RobinTemperature" in repr(prof)


@pytest.mark.parametrize("kwargs,word", [
    (dict(surface_c=float("nan")), "surface_c"),
    (dict(surface_c=-300.0), "surface_c"),
    (dict(accumulation_m_per_yr=-0.1), "accumulation_m_per_yr"),
    (dict(geothermal_flux_w_m2=-0.01), "geothermal_flux_w_m2"),
    (dict(thickness_m=0.0), "thickness_m"),
    (dict(thickness_m="deep"), "thickness_m"),
    (dict(conductivity=-2.0), "conductivity"),
    (dict(diffusivity=0.0), "diffusivity"),
])
def test_robin_bad_parameters(kwargs, word):
    base = dict(surface_c=-40.0, accumulation_m_per_yr=0.1, geothermal_flux_w_m2=0.05,
                thickness_m=2000.0)
    base.update(kwargs)
    with pytest.raises(ValueError, match=word):
        RobinTemperature(**base)


def test_robin_heights_outside_column():
    prof = RobinTemperature(-40.0, 0.1, 0.05, 2000.0)
    with pytest.raises(ValueError, match="z"):
        prof.temperature(-2000.5)
    with pytest.raises(ValueError, match="z"):
        prof.temperature(1.0)


# --------------------------------------------------------------------------- tabulated

def test_tabulated_interpolates_and_sorts():
    z = [0.0, -100.0, -1000.0]
    t = [-50.0, -49.0, -40.0]
    prof = TabulatedTemperature(z, t)            # decreasing heights are accepted
    assert prof.temperature(-50.0) == pytest.approx(-49.5)    # linear interpolation by hand
    assert prof.temperature(-550.0) == pytest.approx(-44.5)
    out = prof.temperature(np.array([[0.0, -1000.0]]))
    assert out.shape == (1, 2) and out[0, 1] == -40.0
    assert isinstance(prof.temperature(-10.0), float)
    assert tabulated_temperature(-100.0, z, t) == -49.0
    # same table given in increasing order gives the same profile
    prof2 = TabulatedTemperature(z[::-1], t[::-1])
    assert prof2.temperature(-550.0) == prof.temperature(-550.0)


def test_tabulated_outside_modes():
    prof = TabulatedTemperature([-10.0, -100.0], [-50.0, -48.0])
    with pytest.raises(ValueError, match="outside='hold'"):
        prof.temperature(-5.0)
    held = TabulatedTemperature([-10.0, -100.0], [-50.0, -48.0], outside="hold")
    assert held.temperature(-5.0) == -50.0 and held.temperature(-500.0) == -48.0
    with pytest.raises(ValueError, match="outside"):
        TabulatedTemperature([-10.0, -100.0], [-50.0, -48.0], outside="clip")


@pytest.mark.parametrize("z,t,word", [
    ([0.0, -100.0, -50.0], [-50.0, -49.0, -48.0], "monotone"),
    ([0.0, -100.0, -100.0], [-50.0, -49.0, -48.0], "monotone"),
    ([0.0, -100.0], [-50.0, float("nan")], "temperature_c"),
    ([0.0, float("nan")], [-50.0, -49.0], "z"),
    ([0.0, -100.0], [-50.0, -49.0, -48.0], "shape"),
    ([0.0], [-50.0], "at least 2"),
    ([10.0, -100.0], [-50.0, -49.0], "<= 0"),
    ([0.0, -100.0], [-50.0, -300.0], "absolute zero"),
    ("abc", [-50.0], "z"),
])
def test_tabulated_errors(z, t, word):
    with pytest.raises(ValueError, match=word):
        TabulatedTemperature(z, t)


# --------------------------------------------------------------------------- linear

def test_linear_values_and_sign():
    prof = LinearTemperature(-50.0, 0.016)
    # definition: T = surface + gradient * depth (depth = -z)
    assert prof.temperature(0.0) == -50.0
    assert prof.temperature(-2500.0) == pytest.approx(-10.0)
    z = np.array([0.0, -1250.0])
    np.testing.assert_allclose(prof.temperature(z), [-50.0, -30.0])
    assert prof(-1250.0) == pytest.approx(-30.0)
    assert linear_temperature(-100.0, -20.0, -0.01) == pytest.approx(-21.0)


@pytest.mark.parametrize("args,word", [
    ((float("inf"), 0.01), "surface_c"),
    (("cold", 0.01), "surface_c"),
    ((-50.0, float("nan")), "gradient_c_per_m"),
    ((-274.0, 0.01), "surface_c"),
])
def test_linear_errors(args, word):
    with pytest.raises(ValueError, match=word):
        LinearTemperature(*args)


@pytest.mark.parametrize("z", [1.0, float("nan"), [0.0, np.inf], "x"])
def test_bad_heights_name_z(z):
    with pytest.raises(ValueError, match="z"):
        LinearTemperature(-50.0, 0.01).temperature(z)


# --------------------------------------------------------------------------- cubic fit

def test_cold_plateau_cubic_published_values():
    # coefficients confirmed against the public web note that posts the fit; the note
    # also states that the fit gives -3.43 °C at 2800 m depth
    assert cold_plateau_cubic_temperature(-2800.0) == pytest.approx(-3.43, abs=0.01)
    assert cold_plateau_cubic_temperature(0.0) == pytest.approx(-51.0696)
    # direct evaluation of the polynomial with numpy.polyval (independent of the Horner form)
    d = np.array([0.0, 500.0, 1500.0, 2400.0])
    ref = np.polyval([1.83415e-09, -1.59061e-08, 0.00267687, -51.0696], d)
    np.testing.assert_allclose(cold_plateau_cubic_temperature(-d), ref, rtol=1e-13)
    prof = ColdPlateauCubicTemperature()
    # a cold site warms with depth (physical expectation for a heated bed)
    t = prof.temperature(-np.linspace(0.0, 2800.0, 50))
    assert np.all(np.diff(t) > 0)


def test_cold_plateau_cubic_range():
    with pytest.raises(ValueError, match="-2800"):
        cold_plateau_cubic_temperature(-2900.0)
    with pytest.raises(ValueError, match="<= 0"):
        cold_plateau_cubic_temperature(5.0)
