"""Measured, non-monotone firn in every profile kind: tables, densities, functions, panels,
profile files and the optional smoothing.

Only the profiles are tested here (n(z), the panels, the errors); no ray results in
non-monotone profiles.

Outside references used here:
* ``scipy.interpolate.PchipInterpolator`` (the shape-preserving cubic of Fritsch &
  Carlson 1980 with the Fritsch & Butland 1984 interior slopes) for the interpolant;
* ``scipy.integrate.quad`` of ``numpy.interp`` and ``numpy.convolve`` for the
  running mean, and a small example worked by hand;
* the Kovacs, Gow & Morey (1995) relation n = 1 + 0.845 rho [g/cm^3], written out
  here, for the density tables;
* a dense evaluation of the callable itself for the panels of a ``FunctionProfile``.
"""

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.interpolate import PchipInterpolator

import firnray
from firnray.errors import ProfileFileError
from firnray.medium.general_profiles import PanelProfile, SampleError, pchip_slopes
from firnray.medium.panels import evaluate_panels
from firnray.medium.smoothing import smooth_samples

#: an invented measured-style table (surface first): a dense wind crust at 3 m, an
#: inversion from 8 to 14 m, an ice lens at 22 m, irregular spacing, and deep ice
#: repeating one value from 60 m down
Z_TABLE = -np.array([0.0, 1.0, 3.0, 4.5, 8.0, 11.0, 14.0, 18.0, 22.0, 23.0, 30.0, 45.0,
                     60.0, 70.0, 85.0, 100.0])
N_TABLE = np.array([1.33, 1.36, 1.43, 1.40, 1.48, 1.46, 1.45, 1.52, 1.64, 1.55, 1.60, 1.70,
                    1.775, 1.775, 1.775, 1.775])


def kovacs(rho):
    """Kovacs, Gow & Morey (1995): n = 1 + 0.845 rho, rho in g/cm^3 (written out here)."""
    return 1.0 + 0.845 * np.asarray(rho) / 1000.0


def scipy_table(z, n):
    """scipy's PCHIP through the samples (outside library), sorted ascending as it needs."""
    order = np.argsort(z)
    return PchipInterpolator(np.asarray(z)[order], np.asarray(n)[order])


# ------------------------------------------------------------------ bad tables, one by one

BAD_TABLES = {
    "one_row": (dict(z=[0.0], n=[1.35]), "z", "2 or more distinct heights"),
    "one_height_repeated": (dict(z=[0.0, 0.0], n=[1.35, 1.35]), "z",
                            "2 or more distinct heights"),
    "shapes_differ": (dict(z=[0.0, -1.0], n=[1.35, 1.4, 1.5]), "z", "same length"),
    "two_dimensional": (dict(z=[[0.0, -1.0]], n=[[1.3, 1.4]]), "z", "1-D"),
    "not_numbers": (dict(z=[0.0, -1.0], n=[1.3, "dense"]), "n",
                    "n must be a 1-D array of numbers"),
    "nan_height": (dict(z=[0.0, -1.0, np.nan], n=[1.3, 1.4, 1.5]), "z",
                   r"z\[2\] must be finite, got nan"),
    "inf_height": (dict(z=[0.0, -np.inf, -2.0], n=[1.3, 1.4, 1.5]), "z",
                   r"z\[1\] must be finite, got -inf"),
    "nan_index": (dict(z=[0.0, -1.0, -2.0], n=[1.3, np.nan, 1.5]), "n",
                  r"n\[1\] must be finite, got nan"),
    "inf_index": (dict(z=[0.0, -1.0, -2.0], n=[1.3, 1.4, np.inf]), "n",
                  r"n\[2\] must be finite, got inf"),
    "height_above_surface": (dict(z=[0.0, -1.0, 2.5], n=[1.3, 1.4, 1.5]), "z",
                             r"z\[2\] = 2\.5 m lies above the surface"),
    "index_below_n_air": (dict(z=[0.0, -1.0, -2.0], n=[1.3, 0.95, 1.5]), "n",
                          r"n\[1\] = 0\.95 at z = -1\.0 m is below n_air \(1\.0\)"),
    "index_below_given_n_air": (dict(z=[0.0, -1.0, -2.0], n=[1.3, 1.4, 1.5], n_air=1.35),
                                "n", r"n\[0\] = 1\.3 at z = 0\.0 m is below n_air \(1\.35\)"),
    "same_height_two_values": (dict(z=[0.0, -5.0, -10.0, -5.0], n=[1.3, 1.4, 1.5, 1.45]),
                               "z", r"rows 1 and 3 have the same height z = -5\.0 m but "
                                    r"different values n\[1\] = 1\.4 and n\[3\] = 1\.45"),
    "shallowest_below_surface": (dict(z=[-2.0, -5.0, -10.0], n=[1.3, 1.4, 1.5]), "z",
                                 r"shallowest sample z\[0\] = -2\.0 m lies below the surface"
                                 r".*extend_to_surface=True"),
    "deeper_than_z_min": (dict(z=[0.0, -5.0, -120.0], n=[1.3, 1.4, 1.5], z_min=-100.0), "z",
                          r"z\[2\] = -120\.0 m lies below z_min"),
    "smoothing_window_zero": (dict(z=[0.0, -5.0], n=[1.3, 1.4], smoothing_window=0.0), None,
                              "smoothing_window must be > 0"),
}


@pytest.mark.parametrize("case", sorted(BAD_TABLES))
def test_bad_table_is_refused_naming_argument_row_and_value(case):
    kwargs, argument, match = BAD_TABLES[case]
    with pytest.raises(ValueError, match=match) as err:
        firnray.TabulatedProfile(**kwargs)
    if argument is not None:
        assert isinstance(err.value, SampleError) and err.value.argument == argument


def test_rows_are_named_in_the_callers_order_after_sorting():
    # deepest first: the bad row is row 3 of what the caller passed
    z = [-30.0, -20.0, -10.0, 0.0]
    with pytest.raises(SampleError, match=r"n\[3\] = 0\.9 at z = 0\.0 m") as err:
        firnray.TabulatedProfile(z, [1.6, 1.5, 1.4, 0.9])
    assert err.value.rows == (3,)
    with pytest.raises(SampleError, match=r"rows 0 and 2 .* z = -30\.0 m") as err:
        firnray.TabulatedProfile([-30.0, 0.0, -30.0], [1.6, 1.3, 1.7])
    assert err.value.rows == (0, 2)


# ------------------------------------------------------------ what tables now accept

def test_inversions_lenses_and_constant_runs_are_accepted():
    tab = firnray.TabulatedProfile(Z_TABLE, N_TABLE)
    np.testing.assert_array_equal(tab.z, Z_TABLE)
    np.testing.assert_array_equal(tab.index(Z_TABLE), N_TABLE)
    assert tab.n_surface == 1.33 and tab.n_deep == 1.775
    assert tab.index(1.0) == 1.0                     # n_air above the surface
    # n == n_air is allowed (n >= n_air), at the surface too
    firnray.TabulatedProfile([0.0, -10.0], [1.0, 1.5])


def test_deepest_first_and_shuffled_tables_equal_the_surface_first_table():
    ref = firnray.TabulatedProfile(Z_TABLE, N_TABLE)
    zz = np.linspace(-150.0, 0.0, 3001)
    rng = np.random.default_rng(4)
    for order in (np.arange(Z_TABLE.size)[::-1], rng.permutation(Z_TABLE.size)):
        other = firnray.TabulatedProfile(Z_TABLE[order], N_TABLE[order])
        np.testing.assert_array_equal(other.z, ref.z)
        np.testing.assert_array_equal(other.n, ref.n)
        np.testing.assert_array_equal(other.index(zz), ref.index(zz))
        np.testing.assert_array_equal(other.panels.coef, ref.panels.coef)
        assert other == ref


def test_exact_duplicate_rows_are_dropped():
    z = np.concatenate([Z_TABLE, Z_TABLE[[2, 9, 15]]])
    n = np.concatenate([N_TABLE, N_TABLE[[2, 9, 15]]])
    tab = firnray.TabulatedProfile(z, n)
    ref = firnray.TabulatedProfile(Z_TABLE, N_TABLE)
    np.testing.assert_array_equal(tab.z, ref.z)
    assert tab == ref


def test_pchip_of_non_monotone_data_equals_scipy():
    """Knot slopes and values between the knots of a table with inversions, a lens, a
    constant deep run and irregular spacing equal scipy's PchipInterpolator (outside
    library) within 1e-13."""
    ref = scipy_table(Z_TABLE, N_TABLE)
    tab = firnray.TabulatedProfile(Z_TABLE[::-1], N_TABLE[::-1])
    np.testing.assert_allclose(tab.slopes, ref.derivative()(Z_TABLE), rtol=0, atol=1e-13)
    np.testing.assert_allclose(pchip_slopes(Z_TABLE[::-1], N_TABLE[::-1]),
                               ref.derivative()(Z_TABLE[::-1]), rtol=0, atol=1e-13)
    zz = np.linspace(Z_TABLE[-1], 0.0, 20001)
    np.testing.assert_allclose(tab.index(zz), ref(zz), rtol=0, atol=1e-13)
    np.testing.assert_allclose(evaluate_panels(tab.panels, zz), ref(zz), rtol=0, atol=1e-13)


def test_random_non_monotone_tables_equal_scipy():
    rng = np.random.default_rng(17)
    for _ in range(20):
        count = int(rng.integers(3, 40))
        z = -np.concatenate([[0.0], np.cumsum(rng.uniform(0.1, 8.0, count - 1))])
        n = rng.uniform(1.3, 1.78, count)
        n[rng.uniform(size=count) < 0.2] = 1.6            # repeated values here and there
        ref = scipy_table(z, n)
        tab = firnray.TabulatedProfile(z, n)
        zz = np.linspace(z[-1], 0.0, 4001)
        np.testing.assert_allclose(tab.index(zz), ref(zz), rtol=0, atol=1e-13)


def test_no_overshoot_between_samples():
    """Zero slope at the extrema of the data (Fritsch & Carlson 1980): between two
    neighbouring samples the interpolant stays within their range."""
    tab = firnray.TabulatedProfile(Z_TABLE, N_TABLE)
    for k in range(Z_TABLE.size - 1):
        zz = np.linspace(Z_TABLE[k + 1], Z_TABLE[k], 401)
        n = tab.index(zz)
        lo, hi = sorted((N_TABLE[k], N_TABLE[k + 1]))
        assert np.all(n >= lo - 1e-15) and np.all(n <= hi + 1e-15), k


def test_constant_deep_run_stays_constant():
    tab = firnray.TabulatedProfile(Z_TABLE, N_TABLE)
    zz = np.linspace(-3000.0, -60.0, 5001)
    assert np.all(tab.index(zz) == 1.775)
    np.testing.assert_array_equal(tab.slopes[Z_TABLE <= -60.0], 0.0)
    assert tab.n_deep == 1.775


def test_extend_to_surface_holds_the_shallowest_value():
    z, n = Z_TABLE[2:], N_TABLE[2:]                  # shallowest sample 3 m down
    with pytest.raises(ValueError, match="extend_to_surface"):
        firnray.TabulatedProfile(z, n)
    tab = firnray.TabulatedProfile(z, n, extend_to_surface=True)
    np.testing.assert_array_equal(tab.index(np.linspace(-3.0, 0.0, 31)), n[0])
    assert tab.n_surface == n[0] and tab.index(0.5) == 1.0
    assert tab.info["extended_to_surface_from_m"] == -3.0
    zz = np.linspace(z[-1], z[0], 2001)
    np.testing.assert_allclose(tab.index(zz), scipy_table(z, n)(zz), rtol=0, atol=1e-13)
    # a table that starts at the surface is unchanged by the keyword
    plain = firnray.TabulatedProfile(Z_TABLE, N_TABLE)
    assert firnray.TabulatedProfile(Z_TABLE, N_TABLE, extend_to_surface=True) == plain


def test_panel_profile_round_trips_a_non_monotone_stack():
    tab = firnray.TabulatedProfile(Z_TABLE, N_TABLE)
    again = PanelProfile(tab.panels.top, tab.panels.kind, tab.panels.coef)
    zz = np.linspace(-200.0, 0.0, 2001)
    np.testing.assert_array_equal(again.index(zz), tab.index(zz))
    ext = firnray.TabulatedProfile(Z_TABLE[2:], N_TABLE[2:], extend_to_surface=True)
    again = PanelProfile(ext.panels.top, ext.panels.kind, ext.panels.coef)
    np.testing.assert_array_equal(again.index(zz), ext.index(zz))


def test_panel_profile_refuses_an_index_below_n_air():
    # one cubic panel from 0 to -10 m: n = 1.3 at both ends, 1.3 - 0.75 t (1 - t) ... dips
    # to 1.3 - 0.1875 = 1.1125 at t = 1/2 (z = -5 m); with n_air = 1.2 it is refused
    coef = [[1.3, -0.75, 0.75, 0.0], [1.3, 0.0, 0.0, 0.0]]
    with pytest.raises(ValueError, match=r"n_air \(1\.2\).*panel 0 reaches 1\.1125 at "
                                         r"z = -5\.0 m"):
        PanelProfile([0.0, -10.0], [1, 2], coef, n_air=1.2)
    PanelProfile([0.0, -10.0], [1, 2], coef, n_air=1.1)


# ------------------------------------------------------------------ densities

RHO_CORE = np.array([340.0, 380.0, 450.0, 420.0, 500.0, 560.0, 540.0, 610.0, 760.0, 700.0,
                     830.0, 917.0, 917.0, 917.0])
Z_CORE = -np.array([0.0, 2.0, 5.0, 6.0, 10.0, 15.0, 17.0, 22.0, 30.0, 31.0, 50.0, 80.0,
                    100.0, 120.0])


def test_density_inversions_give_the_index_of_each_sample():
    prof = firnray.index_profile_from_density(Z_CORE, RHO_CORE)
    np.testing.assert_allclose(prof.index(Z_CORE), kovacs(RHO_CORE), rtol=0, atol=1e-15)
    zz = np.linspace(-120.0, 0.0, 4001)
    np.testing.assert_allclose(prof.index(zz), scipy_table(Z_CORE, kovacs(RHO_CORE))(zz),
                               rtol=0, atol=1e-13)
    # deepest-first, with exact duplicate rows, gives the same profile
    z = np.concatenate([Z_CORE[::-1], Z_CORE[:2]])
    rho = np.concatenate([RHO_CORE[::-1], RHO_CORE[:2]])
    assert firnray.index_profile_from_density(z, rho) == prof
    looyenga = firnray.index_profile_from_density(Z_CORE, RHO_CORE, relation="looyenga")
    np.testing.assert_allclose(looyenga.index(Z_CORE), firnray.looyenga_index(RHO_CORE),
                               rtol=0, atol=1e-15)


@pytest.mark.parametrize("z, rho, kwargs, match", [
    ([0.0, -5.0, -5.0], [340.0, 400.0, 410.0], {},
     r"rows 1 and 2 .* density\[1\] = 400\.0 kg/m\^3 and density\[2\] = 410\.0 kg/m\^3"),
    ([0.0, -5.0, -8.0], [340.0, np.nan, 410.0], {}, r"density\[1\] must be finite"),
    ([0.0, -5.0, -8.0], [340.0, 1200.0, 410.0], {}, r"density\[1\] = 1200\.0 kg/m\^3 at "
                                                    r"z = -5\.0 m is outside \[0, 1000"),
    ([0.0, -5.0, -8.0], [0.0, 300.0, 410.0], dict(n_air=1.0003),
     r"density\[0\] = 0\.0 kg/m\^3 at z = 0\.0 m gives n = 1\.0, below n_air"),
    ([-1.0, -5.0, -8.0], [340.0, 400.0, 410.0], {}, "extend_to_surface=True"),
    ([0.0, 5.0, -8.0], [340.0, 400.0, 410.0], {}, r"z\[1\] = 5\.0 m lies above the surface"),
    ([0.0], [340.0], {}, "2 or more distinct heights"),
])
def test_bad_density_tables_name_the_row(z, rho, kwargs, match):
    with pytest.raises(ValueError, match=match):
        firnray.index_profile_from_density(z, rho, **kwargs)


def test_density_table_extends_to_the_surface():
    prof = firnray.index_profile_from_density(Z_CORE[1:], RHO_CORE[1:], extend_to_surface=True)
    assert prof.index(0.0) == pytest.approx(kovacs(RHO_CORE[1]), abs=1e-15)


def test_herron_langway_deep_column_reaches_ice_and_stays_constant():
    """Deep enough for the Herron & Langway density to equal the ice density in double
    precision: the index is then constant, at the Kovacs value for 917 kg/m^3."""
    prof = firnray.herron_langway_profile(-20.0, 0.03, 350.0, z_bottom=-4000.0, spacing=2.0)
    deep = prof.z < -2000.0
    np.testing.assert_array_equal(prof.n[deep], prof.n[-1])
    assert prof.n[-1] == pytest.approx(kovacs(917.0), abs=1e-12)
    assert np.all(prof.index(np.linspace(-4500.0, -2000.0, 501)) == prof.n[-1])


def test_herron_langway_z_bottom_below_z_min_is_refused():
    with pytest.raises(ValueError, match=r"z_bottom must be >= z_min \(-1000\.0 m\)"):
        firnray.herron_langway_profile(-20.0, 0.03, 350.0, z_bottom=-1200.0, z_min=-1000.0)


def test_piecewise_exponential_stays_monotone_and_points_to_the_general_kinds():
    with pytest.raises(ValueError, match=r"n_deep\[1\].*TabulatedProfile or a FunctionProfile"):
        firnray.PiecewiseExponentialProfile(1.35, [-10.0], [1.78, 1.5], [9.0, 30.0])


# ------------------------------------------------------------------ functions

def dip_function(z):
    """An exponential firn with a narrow Gaussian dip (a 4 % inversion 3 m wide) at 30 m."""
    return 1.78 - 0.43 * np.exp(z / 40.0) - 0.04 * np.exp(-((z + 30.0) / 3.0) ** 2)


def deep_dip_function(z):
    """A 2 m wide dip 1000 m down, between the initial knots of the panel refinement."""
    return 1.78 - 0.43 * np.exp(z / 40.0) - 0.04 * np.exp(-((z + 1000.0) / 2.0) ** 2)


@pytest.mark.parametrize("func", [dip_function, deep_dip_function])
def test_function_profile_with_a_narrow_dip_converges(func):
    """The panels match the callable within the tolerance on a dense grid (0.25 mm
    spacing around the dip, 2.5 mm over the whole range), compared with the callable
    itself."""
    prof = firnray.FunctionProfile(func)
    assert prof.max_deviation <= prof.tolerance
    centre = -30.0 if func is dip_function else -1000.0
    for zz in (np.linspace(-5000.0, 0.0, 2_000_001), np.linspace(centre - 15, centre + 15,
                                                                  120_001)):
        dev = np.max(np.abs(evaluate_panels(prof.panels, zz) - func(zz)))
        assert dev <= 1.05 * prof.tolerance
    assert prof.index(centre) == func(np.array(centre))


def test_probe_grid_is_what_finds_a_deep_narrow_dip():
    """Without the probe grid (one probe spacing spanning the whole range) the dip 1000 m
    down falls between the check points and the panels miss it: the dense comparison
    of the previous test is sensitive to it."""
    coarse = firnray.FunctionProfile(deep_dip_function, probe_spacing=5000.0)
    zz = np.linspace(-1010.0, -990.0, 20001)
    assert np.max(np.abs(evaluate_panels(coarse.panels, zz) - deep_dip_function(zz))) > 0.01


def test_function_profile_accepts_rising_and_falling_index():
    prof = firnray.FunctionProfile(lambda z: 1.6 + 0.1 * np.sin(z / 7.0), z_min=-300.0)
    zz = np.linspace(-300.0, 0.0, 30001)
    np.testing.assert_allclose(evaluate_panels(prof.panels, zz), 1.6 + 0.1 * np.sin(zz / 7.0),
                               rtol=0, atol=1.05 * prof.tolerance)


def fails_deep(z):
    if np.any(z < -1234.5):
        raise RuntimeError("no data below 1234.5 m")
    return 1.78 - 0.43 * np.exp(z / 40.0)


@pytest.mark.parametrize("func, match", [
    (lambda z: 1.3 - 0.5 * np.exp(-((z + 50.0) / 5.0) ** 2),
     r"index must be >= n_air \(1\.0\) everywhere, got 0\.9\d* at z = -4\d\.\d+ m"),
    (lambda z: np.where(z < -10.0, np.inf, 1.5), r"index returned inf at z = -10\.5 m"),
    (fails_deep, r"RuntimeError: no data below 1234\.5 m \(first failing at z = -1235\.0 m\)"),
    (lambda z: np.ones(3), "shape"),
    (42, "callable"),
])
def test_function_profile_refusals(func, match):
    with pytest.raises(ValueError, match=match):
        firnray.FunctionProfile(func)


def test_function_profile_scalar_only_callable_is_told_to_vectorise():
    import math

    def scalar_only(z):
        return [1.78 - 0.43 * math.exp(v / 40.0) for v in z] if len(z) == 1 else 1 / 0

    with pytest.raises(ValueError, match="vectorised"):
        firnray.FunctionProfile(scalar_only)
    with pytest.raises(ValueError, match="probe_spacing"):
        firnray.FunctionProfile(dip_function, probe_spacing=-1.0)


# ------------------------------------------------------------------ smoothing

def test_smoothing_small_example_by_hand():
    """A single spike of 1 at z = -2 m on samples 1 m apart, window 2 m.  At -2 m the
    window [-3, -1] holds the whole triangle of area 1: mean 1/2.  At -1 m the window
    [-2, 0] holds half of it (area 1/2): mean 1/4; likewise at -3 m.  The end samples
    (the window shrinks to nothing there) keep their values."""
    z = np.array([0.0, -1.0, -2.0, -3.0, -4.0])
    out = smooth_samples(z, [0.0, 0.0, 1.0, 0.0, 0.0], 2.0)
    np.testing.assert_allclose(out, [0.0, 0.25, 0.5, 0.25, 0.0], rtol=0, atol=1e-15)
    # window 4 m at -2 m: half width min(2, 2, 2) = 2, the triangle (area 1) over 4 m
    out = smooth_samples(z, [0.0, 0.0, 1.0, 0.0, 0.0], 4.0)
    assert out[2] == pytest.approx(0.25, abs=1e-15)


def test_smoothing_equals_discrete_running_mean_on_a_uniform_grid():
    """On a uniform grid (dz = 0.25 m) with window 2 m dz, the interior values equal
    numpy.convolve with the trapezoid weights (1/2, 1, ..., 1, 1/2) / (2 m)."""
    rng = np.random.default_rng(9)
    dz, m = 0.25, 6
    z = -dz * np.arange(400)
    v = 1.5 + 0.05 * rng.standard_normal(z.size)
    out = smooth_samples(z, v, 2 * m * dz)
    weights = np.ones(2 * m + 1)
    weights[[0, -1]] = 0.5
    ref = np.convolve(v, weights / (2 * m), mode="valid")
    np.testing.assert_allclose(out[m:-m], ref, rtol=0, atol=1e-13)


def test_smoothing_on_irregular_spacing_equals_quadrature():
    """Irregular heights, edges included: each value equals scipy quad of numpy.interp
    (summed between the samples) over the symmetric window shrunk to the sampled range
    (the documented definition), within 1e-13 relative."""
    rng = np.random.default_rng(12)
    z = -np.concatenate([[0.0], np.cumsum(rng.uniform(0.05, 3.0, 60))])
    v = 1.3 + 0.4 * (1 - np.exp(z / 30.0)) + 0.03 * rng.standard_normal(z.size)
    window = 5.0
    out = smooth_samples(z, v, window)
    x, y = z[::-1], v[::-1]
    for i, zi in enumerate(z):
        h = min(window / 2, zi - z[-1], z[0] - zi)
        if h == 0.0:
            assert out[i] == v[i]
            continue
        cuts = np.concatenate([[zi - h], x[(x > zi - h) & (x < zi + h)], [zi + h]])
        ref = sum(quad(lambda t: np.interp(t, x, y), a, b)[0]
                  for a, b in zip(cuts[:-1], cuts[1:])) / (2 * h)
        assert out[i] == pytest.approx(ref, rel=1e-13), i


def test_smoothing_keeps_linear_trends_and_input_order():
    rng = np.random.default_rng(2)
    z = -np.sort(rng.uniform(0.0, 100.0, 50))
    line = 1.4 + 0.003 * (-z)
    np.testing.assert_allclose(smooth_samples(z, line, 7.0), line, rtol=0, atol=1e-13)
    v = rng.uniform(1.3, 1.8, z.size)
    perm = rng.permutation(z.size)
    np.testing.assert_array_equal(smooth_samples(z[perm], v[perm], 3.0),
                                  smooth_samples(z, v, 3.0)[perm])


@pytest.mark.parametrize("z, v, window, match", [
    ([0.0, -1.0], [1.0, 2.0], 0.0, "window must be > 0"),
    ([0.0, -1.0], [1.0, 2.0], np.nan, "window must be a finite number"),
    ([0.0, -1.0], [1.0, np.nan], 1.0, r"values\[1\] must be finite"),
    ([0.0, -1.0, -1.0], [1.0, 2.0, 2.0], 1.0, r"z\[1\] and z\[2\] are both -1\.0 m"),
    ([0.0, -1.0], [1.0, 2.0, 3.0], 1.0, "same length"),
])
def test_smoothing_refusals(z, v, window, match):
    with pytest.raises(ValueError, match=match):
        smooth_samples(z, v, window)


def test_smoothing_in_profiles_is_explicit_and_recorded():
    plain = firnray.TabulatedProfile(Z_TABLE, N_TABLE)
    assert "smoothing" not in plain.info
    np.testing.assert_array_equal(plain.n, plain.n_unsmoothed)
    tab = firnray.TabulatedProfile(Z_TABLE[::-1], N_TABLE[::-1], smoothing_window=4.0)
    np.testing.assert_array_equal(tab.n, smooth_samples(Z_TABLE, N_TABLE, 4.0))
    np.testing.assert_array_equal(tab.n_unsmoothed, N_TABLE)
    assert tab.info["smoothing"]["window_m"] == 4.0
    assert tab.info["smoothing"]["quantity"] == "index"
    zz = np.linspace(-100.0, 0.0, 2001)
    np.testing.assert_allclose(tab.index(zz), scipy_table(Z_TABLE, tab.n)(zz), rtol=0,
                               atol=1e-13)
    dens = firnray.index_profile_from_density(Z_CORE, RHO_CORE, smoothing_window=3.0)
    np.testing.assert_allclose(dens.n, kovacs(smooth_samples(Z_CORE, RHO_CORE, 3.0)),
                               rtol=0, atol=1e-15)
    assert dens.info["smoothing"]["quantity"] == "density"
    assert dens.info["smoothing"]["window_m"] == 3.0
    assert "smoothing" not in firnray.index_profile_from_density(Z_CORE, RHO_CORE).info


# ------------------------------------------------------------------ profile files

HEAD = "firnray_profile: 1\nname: test\n"


def write(tmp_path, text, name="p.yaml"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return str(path)


def yaml_list(values):
    return "[" + ", ".join(repr(float(v)) for v in values) + "]"


def test_non_monotone_index_table_file_deepest_first(tmp_path):
    path = write(tmp_path, HEAD + "kind: index_table\nparameters:\n"
                 f"  depth_m: {yaml_list(-Z_TABLE[::-1])}\n  n: {yaml_list(N_TABLE[::-1])}\n")
    assert firnray.load_profile(path) == firnray.TabulatedProfile(Z_TABLE, N_TABLE)


def test_density_table_file_with_new_keys(tmp_path):
    rows = "\n".join(f"{-z},{r}" for z, r in zip(Z_CORE[1:], RHO_CORE[1:]))
    (tmp_path / "core.csv").write_text("# invented\ndepth_m,density_kg_m3\n" + rows + "\n",
                                       encoding="utf-8")
    path = write(tmp_path, HEAD + "kind: density_table\nparameters:\n  csv: core.csv\n"
                 "  extend_to_surface: true\n  smoothing_window_m: 3.0\n")
    prof = firnray.load_profile(path)
    want = firnray.index_profile_from_density(Z_CORE[1:], RHO_CORE[1:], extend_to_surface=True,
                                              smoothing_window=3.0)
    np.testing.assert_array_equal(prof.panels.coef, want.panels.coef)
    assert prof.info["smoothing"]["window_m"] == 3.0
    assert prof.index(0.0) == prof.n[0]


INDEX = "kind: index_table\nparameters:\n"
BAD_FILES = {
    "negative_depth": (INDEX + "  depth_m: [0, 5, -2]\n  n: [1.3, 1.4, 1.5]\n",
                       "parameters.depth_m[2]", r"above the surface"),
    "same_depth_two_values": (INDEX + "  depth_m: [0, 5, 10, 5]\n  n: [1.3, 1.4, 1.5, 1.45]\n",
                              "parameters.depth_m[3]", r"rows 1 and 3"),
    "index_below_n_air": (INDEX + "  depth_m: [0, 5, 10]\n  n: [1.3, 0.9, 1.5]\n",
                          "parameters.n[1]", r"below n_air"),
    "nan_index": (INDEX + "  depth_m: [0, 5, 10]\n  n: [1.3, .nan, 1.5]\n",
                  "parameters.n[1]", r"must be finite"),
    "one_row": (INDEX + "  depth_m: [0]\n  n: [1.3]\n", "parameters.depth_m",
                "2 or more distinct heights"),
    "surface_gap": (INDEX + "  depth_m: [2, 5]\n  n: [1.3, 1.4]\n", "parameters.depth_m[0]",
                    r"set parameters\.extend_to_surface: true"),
    "extend_not_boolean": (INDEX + "  depth_m: [2, 5]\n  n: [1.3, 1.4]\n"
                           "  extend_to_surface: maybe\n", "parameters.extend_to_surface",
                           "true or false"),
    "window_negative": (INDEX + "  depth_m: [0, 5]\n  n: [1.3, 1.4]\n"
                        "  smoothing_window_m: -1\n", "parameters.smoothing_window_m",
                        "> 0 m"),
    "unknown_key": (INDEX + "  depth_m: [0, 5]\n  n: [1.3, 1.4]\n  smoothing_window: 2\n",
                    "parameters.smoothing_window", "unknown parameter"),
    "density_duplicate": ("kind: density_table\nparameters:\n  depth_m: [0, 5, 5]\n"
                          "  density_kg_m3: [340, 400, 410]\n", "parameters.depth_m[2]",
                          r"density\[1\] = 400\.0 kg/m\^3 and density\[2\] = 410\.0"),
    "density_out_of_range": ("kind: density_table\nparameters:\n  depth_m: [0, 5, 9]\n"
                             "  density_kg_m3: [340, 1400, 410]\n",
                             "parameters.density_kg_m3[1]", "outside"),
}


@pytest.mark.parametrize("case", sorted(BAD_FILES))
def test_bad_table_files_name_file_key_and_row(tmp_path, case):
    body, key, match = BAD_FILES[case]
    path = write(tmp_path, HEAD + body)
    with pytest.raises(ProfileFileError, match=match) as err:
        firnray.load_profile(path)
    assert str(err.value).startswith(f"{path}: key '{key}'")


def test_bad_csv_row_names_the_line(tmp_path):
    (tmp_path / "t.csv").write_text("# invented\ndepth_m,n\n0,1.35\n10,1.5\n-3,1.6\n",
                                    encoding="utf-8")
    path = write(tmp_path, HEAD + INDEX + "  csv: t.csv\n")
    with pytest.raises(ProfileFileError, match=r"key 'parameters\.csv': .*t\.csv: line 5: "
                                               r"column 'depth_m': z\[2\] = 3\.0 m lies above"):
        firnray.load_profile(path)
