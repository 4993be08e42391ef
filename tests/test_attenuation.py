"""Attenuation: Arrhenius conductivity, conversion to a field length, models, dB, errors.

Conventions under test: L is the FIELD attenuation length, E ∝ exp(-s/L).
"""

import math

import numpy as np
import pytest
import scipy.constants as sc
from scipy.integrate import quad

from firnray.medium.attenuation import (
    PURE_ICE_ACTIVATION_EV, CL_MOLAR_CONDUCTIVITY, H_MOLAR_CONDUCTIVITY, REFERENCE_TEMPERATURE_C,
    PURE_ICE_SIGMA, ArrheniusAttenuation, AttenuationModel, CallableAttenuation,
    ConstantAttenuation, TabulatedAttenuation, arrhenius_conductivity, as_attenuation,
    conductivity_to_field_attenuation_length, depth_averaged_length, field_loss_db,
    power_loss_db)
from firnray.medium.temperature import (ColdPlateauCubicTemperature, LinearTemperature,
                                        RobinTemperature)

KB_EV = sc.physical_constants["Boltzmann constant in eV/K"][0]


# --------------------------------------------------------------------------- Arrhenius

def test_reference_temperature_reproduces_cited_pure_value():
    # MacGregor et al. (2007) table (values recalled from memory, not confirmed):
    # at T = T_r the pure term is σ_pure = 9.2 µS/m exactly
    assert REFERENCE_TEMPERATURE_C == pytest.approx(251.0 - 273.15)
    assert PURE_ICE_SIGMA == 9.2e-6
    sigma = arrhenius_conductivity(REFERENCE_TEMPERATURE_C, h_molar=0.0, cl_molar=0.0)
    assert sigma == pytest.approx(9.2e-6, rel=1e-14)
    # and with impurities every exponential is 1: σ = σ_pure + μ_H [H+] + μ_Cl [Cl-]
    sigma = arrhenius_conductivity(REFERENCE_TEMPERATURE_C, h_molar=1.3e-6, cl_molar=4.2e-6)
    assert sigma == pytest.approx(9.2e-6 + 3.2 * 1.3e-6 + 0.43 * 4.2e-6, rel=1e-14)


def test_arrhenius_against_direct_formula_with_scipy_constants():
    # independent evaluation of the published formula with scipy.constants' k_B [eV/K]
    t = np.array([-60.0, -45.0, -30.0, -5.0])
    tk, tr = t + 273.15, 251.0
    ref = (9.2e-6 * np.exp(0.51 / KB_EV * (1 / tr - 1 / tk))
           + 3.2 * 2e-6 * np.exp(0.20 / KB_EV * (1 / tr - 1 / tk))
           + 0.43 * 1e-6 * np.exp(0.19 / KB_EV * (1 / tr - 1 / tk)))
    np.testing.assert_allclose(arrhenius_conductivity(t, 2e-6, 1e-6), ref, rtol=1e-12)


def test_arrhenius_recovers_activation_energy():
    # Arrhenius law: ln(σ1/σ2) = (E/k_B)(1/T2 - 1/T1) for the pure term alone
    s1 = arrhenius_conductivity(-20.0, 0.0, 0.0)
    s2 = arrhenius_conductivity(-50.0, 0.0, 0.0)
    e = math.log(s1 / s2) * KB_EV / (1 / 223.15 - 1 / 253.15)
    assert e == pytest.approx(PURE_ICE_ACTIVATION_EV, rel=1e-9)


def test_arrhenius_increases_with_temperature():
    t = np.linspace(-70.0, 0.0, 141)
    for h, cl in ((0.0, 0.0), (1.3e-6, 4.2e-6), (5e-6, 0.0), (0.0, 5e-6)):
        assert np.all(np.diff(arrhenius_conductivity(t, h, cl)) > 0)


def test_impurity_terms_add_linearly():
    t = np.array([-50.0, -30.0, -10.0])
    base = arrhenius_conductivity(t, 0.0, 0.0)
    h1 = arrhenius_conductivity(t, 1e-6, 0.0) - base
    h3 = arrhenius_conductivity(t, 3e-6, 0.0) - base
    c2 = arrhenius_conductivity(t, 0.0, 2e-6) - base
    both = arrhenius_conductivity(t, 3e-6, 2e-6) - base
    # the model is linear in each concentration and the terms are additive
    np.testing.assert_allclose(h3, 3 * h1, rtol=1e-12)
    np.testing.assert_allclose(both, h3 + c2, rtol=1e-12)
    # at T_r the molar terms are the cited molar conductivities (recalled from memory)
    assert (arrhenius_conductivity(REFERENCE_TEMPERATURE_C, 1e-6, 0.0)
            - PURE_ICE_SIGMA) == pytest.approx(H_MOLAR_CONDUCTIVITY * 1e-6, rel=1e-9)
    assert (arrhenius_conductivity(REFERENCE_TEMPERATURE_C, 0.0, 1e-6)
            - PURE_ICE_SIGMA) == pytest.approx(CL_MOLAR_CONDUCTIVITY * 1e-6, rel=1e-9)


def test_arrhenius_shapes():
    assert isinstance(arrhenius_conductivity(-30.0), float)
    out = arrhenius_conductivity(np.full((2, 3), -30.0), h_molar=np.array([1e-6, 2e-6, 3e-6]))
    assert out.shape == (2, 3)


@pytest.mark.parametrize("kwargs,word", [
    (dict(temperature_c=5.0), "temperature_c"),
    (dict(temperature_c=-300.0), "temperature_c"),
    (dict(temperature_c=float("nan")), "temperature_c"),
    (dict(temperature_c="cold"), "temperature_c"),
    (dict(temperature_c=-30.0, h_molar=-1e-6), "h_molar"),
    (dict(temperature_c=-30.0, cl_molar=np.nan), "cl_molar"),
    (dict(temperature_c=-30.0, sigma_pure=-1.0), "sigma_pure"),
    (dict(temperature_c=-30.0, e_h_ev="x"), "e_h_ev"),
    (dict(temperature_c=-30.0, reference_c=-400.0), "reference_c"),
])
def test_arrhenius_errors(kwargs, word):
    with pytest.raises(ValueError, match=word):
        arrhenius_conductivity(**kwargs)


# --------------------------------------------------------------------------- conversion

def test_conversion_against_scipy_constants():
    # L = 2 ε0 c √ε' / σ computed directly with scipy.constants (ε0 may differ by one
    # CODATA revision, < 1e-9 relative)
    sigma = np.array([1e-6, 1e-5, 3e-5])
    ref = 2 * sc.epsilon_0 * sc.c * np.sqrt(3.15) / sigma
    np.testing.assert_allclose(conductivity_to_field_attenuation_length(sigma), ref, rtol=1e-8)
    # power attenuation coefficient α_P = σ / (ε0 c √ε') and L = 2 / α_P
    alpha_p = 1e-5 / (sc.epsilon_0 * sc.c * math.sqrt(3.0))
    assert conductivity_to_field_attenuation_length(1e-5, 3.0) == pytest.approx(2 / alpha_p,
                                                                               rel=1e-8)


def test_conversion_is_low_loss_limit_of_exact_wave_number():
    # independent: exact complex wave number k = (ω/c) sqrt(ε' - i σ/(ω ε0)); field decays
    # as exp(-Im(k) s); the low-loss length differs by O((σ/ωε0ε')^2) ≈ 1e-7 here
    sigma, eps, f = 1e-5, 3.15, 100e6
    w = 2 * math.pi * f
    k = w / sc.c * np.sqrt(eps - 1j * sigma / (w * sc.epsilon_0))
    exact = 1.0 / abs(k.imag)
    assert conductivity_to_field_attenuation_length(sigma, eps) == pytest.approx(exact, rel=1e-6)


@pytest.mark.parametrize("args,word", [
    ((0.0,), "sigma_s_per_m"), ((-1e-6,), "sigma_s_per_m"), ((np.nan,), "sigma_s_per_m"),
    ((1e-5, 0.5), "permittivity"), ((1e-5, "ice"), "permittivity"),
])
def test_conversion_errors(args, word):
    with pytest.raises(ValueError, match=word):
        conductivity_to_field_attenuation_length(*args)


# --------------------------------------------------------------------------- dB

def test_field_and_power_db_are_the_same_number():
    # one field e-fold: 20 log10(e) = 8.686 dB; the power falls by e^2: 10 log10(e^2), equal
    assert field_loss_db(1000.0, 1000.0) == pytest.approx(20 * math.log10(math.e), rel=1e-14)
    assert power_loss_db(1000.0, 1000.0) == pytest.approx(10 * math.log10(math.e ** 2),
                                                          rel=1e-14)
    s = np.array([0.0, 250.0, 3000.0])
    L = np.array([500.0, 800.0, 1200.0])
    # direct: field ratio E/E0 = exp(-s/L), power ratio = its square
    np.testing.assert_allclose(field_loss_db(s, L), -20 * np.log10(np.exp(-s / L)),
                               rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(power_loss_db(s, L), -10 * np.log10(np.exp(-s / L) ** 2),
                               rtol=1e-12, atol=1e-12)
    assert field_loss_db(100.0, np.inf) == 0.0
    assert isinstance(field_loss_db(1.0, 2.0), float)


@pytest.mark.parametrize("args,word", [
    ((-1.0, 100.0), "path_length_m"), ((np.nan, 100.0), "path_length_m"),
    ((1.0, 0.0), "attenuation_length_m"), ((1.0, -5.0), "attenuation_length_m"),
    ((1.0, np.nan), "attenuation_length_m"),
])
def test_db_errors(args, word):
    with pytest.raises(ValueError, match=word):
        field_loss_db(*args)
    with pytest.raises(ValueError, match=word):
        power_loss_db(*args)


# --------------------------------------------------------------------------- models

def test_constant_model():
    m = ConstantAttenuation(1200.0)
    assert m.length(-100.0, 300.0) == 1200.0
    out = m.length(np.array([-1.0, -2.0, 5.0]), 150.0)
    assert out.shape == (3,) and np.all(out == 1200.0)
    assert m.length(-1.0, np.array([[100.0], [200.0]])).shape == (2, 1)
    for bad in (0.0, -3.0, np.inf, "long"):
        with pytest.raises(ValueError, match="length_m"):
            ConstantAttenuation(bad)


def test_tabulated_model_in_depth():
    m = TabulatedAttenuation([0.0, -1000.0, -2000.0], [2000.0, 1500.0, 500.0])
    assert m.length(-500.0, 300.0) == pytest.approx(1750.0)      # linear interpolation by hand
    np.testing.assert_allclose(m.length(np.array([-1500.0, 0.0]), 50.0), [1000.0, 2000.0])
    assert m.length(3.0, 100.0) == 2000.0                        # above the surface: z = 0
    with pytest.raises(ValueError, match="outside='hold'"):
        m.length(-2500.0, 100.0)
    held = TabulatedAttenuation([0.0, -1000.0], [2000.0, 1500.0], outside="hold")
    assert held.length(-5000.0, 100.0) == 1500.0


def test_tabulated_model_with_frequency_axis():
    z = [-1000.0, 0.0]
    f = [100.0, 300.0]
    table = [[1000.0, 800.0],    # z = -1000
             [2000.0, 1600.0]]   # z = 0
    m = TabulatedAttenuation(z, table, frequency_mhz=f)
    # bilinear interpolation by hand at the cell centre and along the edges
    assert m.length(-500.0, 200.0) == pytest.approx((1000 + 800 + 2000 + 1600) / 4)
    assert m.length(0.0, 200.0) == pytest.approx(1800.0)
    assert m.length(-1000.0, 300.0) == pytest.approx(800.0)
    out = m.length(np.array([[-1000.0], [0.0]]), np.array([100.0, 300.0]))
    np.testing.assert_allclose(out, table)
    with pytest.raises(ValueError, match="frequency_mhz"):
        m.length(-10.0, 400.0)
    # decreasing axes are accepted and give the same model
    m2 = TabulatedAttenuation(z[::-1], np.array(table)[::-1, ::-1], frequency_mhz=f[::-1])
    assert m2.length(-250.0, 150.0) == pytest.approx(m.length(-250.0, 150.0))


@pytest.mark.parametrize("kwargs,word", [
    (dict(z=[0.0, -10.0, -5.0], length_m=[1.0, 2.0, 3.0]), "monotone"),
    (dict(z=[0.0, -10.0], length_m=[1.0, -2.0]), "length_m"),
    (dict(z=[0.0, -10.0], length_m=[1.0, np.nan]), "length_m"),
    (dict(z=[0.0, -10.0], length_m=[1.0, 2.0, 3.0]), "shape"),
    (dict(z=[0.0, -10.0], length_m=[[1.0, 2.0], [3.0, 4.0]], frequency_mhz=[1.0, 2.0, 3.0]),
     "shape"),
    (dict(z=[0.0, -10.0], length_m=[[1.0, 2.0], [3.0, 4.0]], frequency_mhz=[0.0, 2.0]),
     "frequency_mhz"),
    (dict(z=[0.0], length_m=[1.0]), "at least 2"),
    (dict(z=[0.0, -10.0], length_m=[1.0, 2.0], outside="extrapolate"), "outside"),
])
def test_tabulated_errors(kwargs, word):
    with pytest.raises(ValueError, match=word):
        TabulatedAttenuation(**kwargs)


def test_callable_model_and_checks():
    m = CallableAttenuation(lambda z, f: 1000.0 + 0.1 * z - f)
    assert m.length(-100.0, 200.0) == pytest.approx(790.0)
    out = m.length(np.array([-100.0, -200.0]), np.array([[100.0], [200.0]]))
    assert out.shape == (2, 2)
    assert CallableAttenuation(lambda z, f: 500.0).length(np.zeros(4), 100.0).shape == (4,)
    with pytest.raises(ValueError, match="func"):
        CallableAttenuation(lambda z, f: -1.0 + 0 * z).length(-1.0, 100.0)
    with pytest.raises(ValueError, match="func"):
        CallableAttenuation(lambda z, f: np.ones(7)).length(np.zeros(3), 100.0)
    with pytest.raises(ValueError, match="func"):
        CallableAttenuation(42)


def test_as_attenuation_accepts_every_form():
    const = as_attenuation(800)
    assert isinstance(const, ConstantAttenuation) and const.length(-1.0, 1.0) == 800.0
    model = ConstantAttenuation(900.0)
    assert as_attenuation(model) is model

    class Foreign:
        def length(self, z, frequency_mhz):
            return 700.0 + 0.0 * np.asarray(z)

    wrapped = as_attenuation(Foreign())
    assert isinstance(wrapped, AttenuationModel) and wrapped.length(-1.0, 1.0) == 700.0
    func = as_attenuation(lambda z, f: 650.0 + 0 * z)
    assert isinstance(func, CallableAttenuation)
    assert as_attenuation(np.float64(600.0)).length(-5.0, 10.0) == 600.0
    for bad in ("500", None, True, -5.0, [1.0, 2.0]):
        with pytest.raises(ValueError):
            as_attenuation(bad)


@pytest.mark.parametrize("z,f,word", [
    (np.nan, 100.0, "z"), ("deep", 100.0, "z"), (-1.0, 0.0, "frequency_mhz"),
    (-1.0, -100.0, "frequency_mhz"), (-1.0, np.inf, "frequency_mhz"),
    (np.zeros(3), np.ones(4), "broadcast"),
])
def test_length_argument_errors(z, f, word):
    for m in (ConstantAttenuation(1.0), ArrheniusAttenuation(-40.0)):
        with pytest.raises(ValueError, match=word):
            m.length(z, f)


# --------------------------------------------------------------------------- Arrhenius model

def test_arrhenius_model_composes_conductivity_and_conversion():
    prof = LinearTemperature(-50.0, 0.016)
    m = ArrheniusAttenuation(prof, h_molar=2e-6, cl_molar=1e-6)
    z = np.array([0.0, -800.0, -2000.0])
    sigma = arrhenius_conductivity(prof.temperature(z), 2e-6, 1e-6)
    ref = 2 * sc.epsilon_0 * sc.c * math.sqrt(3.15) / sigma     # independent constants
    np.testing.assert_allclose(m.length(z, 300.0), ref, rtol=1e-8)
    np.testing.assert_allclose(m.conductivity(z), sigma, rtol=1e-14)
    # warmer ice below: the length falls with depth (heights listed downwards)
    assert np.all(np.diff(m.length(-np.linspace(0, 2500, 30), 300.0)) < 0)
    # scalar in, scalar out; arrays broadcast
    assert isinstance(m.length(-100.0, 300.0), float)
    assert m.length(np.zeros((2, 1)), np.array([100.0, 200.0, 300.0])).shape == (2, 3)
    # no frequency dependence by default
    assert m.length(-100.0, 50.0) == m.length(-100.0, 900.0)
    # above the surface: evaluated at z = 0
    assert m.length(10.0, 300.0) == m.length(0.0, 300.0)


def test_arrhenius_model_forms_of_temperature_and_chemistry():
    uniform = ArrheniusAttenuation(-30.0)
    assert uniform.length(-500.0, 100.0) == pytest.approx(
        conductivity_to_field_attenuation_length(arrhenius_conductivity(-30.0)))
    func = ArrheniusAttenuation(lambda z: -50.0 - 0.0 * z, h_molar=lambda z: 1e-6 + 0 * z,
                                cl_molar=0.0)
    assert func.length(-10.0, 100.0) == pytest.approx(
        conductivity_to_field_attenuation_length(arrhenius_conductivity(-50.0, 1e-6, 0.0)))
    tuned = ArrheniusAttenuation(-30.0, sigma_pure=1.5e-5)
    assert tuned.length(-1.0, 1.0) < uniform.length(-1.0, 1.0)


def test_arrhenius_frequency_scaling():
    base = ArrheniusAttenuation(-40.0)
    scaled = ArrheniusAttenuation(-40.0, frequency_scaling=0.5, reference_mhz=200.0)
    # definition of the empirical option: L(f) = L(f_ref) (f / f_ref)^(-p)
    assert scaled.length(-10.0, 200.0) == pytest.approx(base.length(-10.0, 200.0), rel=1e-14)
    assert scaled.length(-10.0, 800.0) == pytest.approx(base.length(-10.0, 800.0) * 0.5,
                                                        rel=1e-14)


@pytest.mark.parametrize("kwargs,word", [
    (dict(temperature_profile="cold"), "temperature_profile"),
    (dict(temperature_profile=-30.0, h_molar=-1.0), "h_molar"),
    (dict(temperature_profile=-30.0, cl_molar=[1e-6, 2e-6]), "cl_molar"),
    (dict(temperature_profile=-30.0, permittivity=0.9), "permittivity"),
    (dict(temperature_profile=-30.0, frequency_scaling=np.nan), "frequency_scaling"),
    (dict(temperature_profile=-30.0, reference_mhz=0.0), "reference_mhz"),
    (dict(temperature_profile=-30.0, sigma_puer=1e-5), "unknown"),
])
def test_arrhenius_model_errors(kwargs, word):
    with pytest.raises(ValueError, match=word):
        ArrheniusAttenuation(**kwargs)


def test_arrhenius_model_passes_temperature_errors_on():
    # a profile that is too warm (above 0 °C) is refused by the conductivity model
    with pytest.raises(ValueError, match="temperature_c"):
        ArrheniusAttenuation(LinearTemperature(-5.0, 0.01)).length(-1000.0, 100.0)


# --------------------------------------------------------------------------- averages vs field data

def test_depth_average_against_quad():
    m = ArrheniusAttenuation(ColdPlateauCubicTemperature())
    # independent: scipy.integrate.quad of dz / L(z) over the column
    integral, _ = quad(lambda z: 1.0 / m.length(z, 300.0), -1500.0, 0.0, epsabs=0,
                       epsrel=1e-12)
    assert depth_averaged_length(m, 0.0, -1500.0, 300.0) == pytest.approx(1500.0 / integral,
                                                                          rel=1e-10)
    # a constant length averages to itself; arrays of frequencies give arrays
    np.testing.assert_allclose(depth_averaged_length(700.0, -10.0, -900.0, [100.0, 200.0]),
                               [700.0, 700.0])
    with pytest.raises(ValueError, match="z_bottom"):
        depth_averaged_length(700.0, -10.0, -5.0, 100.0)
    with pytest.raises(ValueError, match="z_top"):
        depth_averaged_length(700.0, 5.0, -5.0, 100.0)
    with pytest.raises(ValueError, match="nodes"):
        depth_averaged_length(700.0, 0.0, -5.0, 100.0, nodes=1)


def test_summit_like_column_matches_bulk_field_measurement():
    """Modelled bulk field length of a warm-plateau (Greenland summit-like) column.

    Published: Avva, J. et al. (2015), Journal of Glaciology 61(229), 1005–1011:
    depth-averaged FIELD attenuation length 947 (+92/-85) m at 75 MHz over the bulk ice
    (value and field definition confirmed against the abstract; volume and pages not
    checked).  Column: Robin profile with surface -31.5 °C,
    accumulation 0.24 m/yr ice, geothermal flux 0.05 W/m², thickness 3030 m, averaged
    over the whole column (site values recalled from memory, not confirmed); default
    (recalled) chemistry.  Tolerance: a factor 1.5 either way, because the chemistry
    is not the site's and the pure-ice conductivity alone is uncertain by tens of per cent.
    """
    column = RobinTemperature(-31.5, 0.24, 0.05, 3030.0)
    modelled = depth_averaged_length(ArrheniusAttenuation(column), 0.0, -3030.0, 75.0)
    assert 947.0 / 1.5 <= modelled <= 947.0 * 1.5


def test_cold_plateau_column_against_published_lower_bound():
    """Modelled field length over the top 1.5 km of a cold high-plateau site.

    Published: Barwick, S. et al. (2005), Journal of Glaciology 51(173), 231–238: average
    FIELD attenuation length over the upper 1500 m of about 1660 (+255/-120) m for
    200–700 MHz at a cold high-plateau site (number, volume and pages recalled from
    memory, not confirmed;
    the abstract confirms the field-amplitude definition and that a bed reflectivity was
    assumed "conservatively", which makes the published length a LOWER estimate: a
    reflectivity below 1 would mean less loss in the ice).  The model (cubic borehole fit,
    default chemistry) gives about 2x the published value; the test asks for the model
    not to fall below the published value by more than a factor 1.5 and not to exceed
    it by more than a factor 2.5 (uncertain chemistry of the site, pure-ice conductivity
    and the reflectivity assumption).
    """
    m = ArrheniusAttenuation(ColdPlateauCubicTemperature())
    modelled = depth_averaged_length(m, 0.0, -1500.0, 300.0)
    assert 1660.0 / 1.5 <= modelled <= 1660.0 * 2.5
    # a colder column is more transparent than the warmer Summit-like column above
    assert modelled > depth_averaged_length(ArrheniusAttenuation(
        RobinTemperature(-31.5, 0.24, 0.05, 3030.0)), 0.0, -1500.0, 300.0)
