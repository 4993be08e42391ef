"""General profiles: piecewise exponential, tabulated and function profiles through the solver.

Outside references used here:
* ``scipy.interpolate.PchipInterpolator`` for the monotone cubic interpolant;
* the closed-form exponential solver (itself checked against mpmath in
  ``test_reference.py``) for the quadrature fallback on an exponential n(z);
* ``tests/raytrace_ode.py`` (scipy ``solve_ivp`` ray shooting, nothing shared
  with the solver) for where a reported ray lands;
* the mpmath references of ``tests/generators/reference_general.py`` live in
  ``test_general_reference.py``.
"""

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, Phase, given, settings
from hypothesis import strategies as st
from scipy.interpolate import PchipInterpolator

import firnray
from firnray.medium.general_profiles import PanelProfile, pchip_slopes
from raytrace_ode import shoot

EXP = firnray.ExponentialProfile(1.78, 1.35, 40.0)


def exp_function(z):
    return 1.78 - 0.43 * np.exp(z / 40.0)


FUNCTION_EXP = firnray.FunctionProfile(exp_function)
TWO_PIECE = firnray.PiecewiseExponentialProfile(1.35, [-15.0], [1.78, 1.78], [9.0, 40.0])


def random_pairs(n, seed):
    rng = np.random.default_rng(seed)
    src = np.column_stack([np.zeros(n), rng.uniform(-1500.0, 0.0, n)])
    rcv = np.column_stack([rng.uniform(0.0, 2000.0, n), rng.uniform(-200.0, 0.0, n)])
    return src, rcv


# ---------------------------------------------------------------- interpolant

def test_pchip_slopes_match_scipy():
    """Knot slopes and interpolated values equal scipy's PchipInterpolator (outside library)."""
    z = -np.array([0.0, 0.7, 2.0, 3.1, 7.0, 12.0, 30.0, 31.0, 80.0, 150.0])
    n = TWO_PIECE.index(z)
    ref = PchipInterpolator(z[::-1], n[::-1])
    np.testing.assert_allclose(pchip_slopes(z[::-1], n[::-1]), ref.derivative()(z[::-1]),
                               rtol=1e-12, atol=1e-15)
    tab = firnray.TabulatedProfile(z, n)
    zz = np.linspace(-150.0, 0.0, 3001)
    np.testing.assert_allclose(tab.index(zz), ref(zz), rtol=0, atol=2e-15)
    # held constant below the deepest sample and n_air above the surface
    assert tab.index(-400.0) == n[-1]
    assert tab.index(3.0) == 1.0


@pytest.mark.parametrize("z, n, match", [
    ([0.0, -1.0, -1.0], [1.3, 1.4, 1.5], r"rows 1 and 2 have the same height"),
    ([-0.5, -1.0, -2.0], [1.3, 1.4, 1.5], r"z\[0\] = -0\.5 m lies below the surface"),
    ([0.0, -1.0], [1.3, 1.4, 1.5], "same length"),
    ([0.0, -1.0, np.nan], [1.3, 1.4, 1.5], r"z\[2\] must be finite"),
    ([0.0, -1.0, -2.0], [0.9, 1.4, 1.5], r"n\[0\] = 0\.9 at z = 0\.0 m is below n_air"),
])
def test_tabulated_profile_rejects_bad_tables(z, n, match):
    # non-monotone tables are accepted: tests/test_nonmonotone_profiles.py
    with pytest.raises(ValueError, match=match):
        firnray.TabulatedProfile(z, n)


def test_piecewise_profile_is_continuous_with_a_kink():
    z = np.array([-15.0 + 1e-9, -15.0 - 1e-9])
    n = TWO_PIECE.index(z)
    assert abs(n[0] - n[1]) < 1e-10
    above = (TWO_PIECE.index(-14.999) - TWO_PIECE.index(-15.0)) / 0.001
    below = (TWO_PIECE.index(-15.0) - TWO_PIECE.index(-15.001)) / 0.001
    assert above < -0.008 and below > -0.0025      # slope jumps at the break


@pytest.mark.parametrize("kwargs, match", [
    (dict(breaks=[5.0]), "breaks"),
    (dict(breaks=[-20.0, -10.0]), "breaks"),
    (dict(n_deep=[1.78, 1.78]), "one value or 3"),
    (dict(scale_depth=[9.0, -1.0, 4.0]), "scale_depth"),
    (dict(n_deep=[1.78, 1.5, 1.78]), r"n_deep\[1\]"),
])
def test_piecewise_profile_rejects_bad_pieces(kwargs, match):
    args = dict(n_surface=1.35, breaks=[-10.0, -30.0], n_deep=1.78, scale_depth=[9.0, 30.0, 40.0])
    args.update(kwargs)
    with pytest.raises(ValueError, match=match):
        firnray.PiecewiseExponentialProfile(**args)


def test_function_profile_matches_its_function():
    zz = np.linspace(-5000.0, 0.0, 20001)
    np.testing.assert_allclose(firnray.medium.panels.evaluate_panels(FUNCTION_EXP.panels, zz),
                               exp_function(zz), rtol=0, atol=2e-10)
    assert FUNCTION_EXP.max_deviation <= FUNCTION_EXP.tolerance


@pytest.mark.parametrize("func, match", [
    (42, "callable"),
    (lambda z: 1.78 - 0.43 * np.exp(-z / 40.0), r"index must be >= n_air"),
    (lambda z: np.ones(3), "shape"),
    (lambda z: np.where(z < -10, np.nan, 1.5), "finite"),
])
def test_function_profile_rejects_bad_functions(func, match):
    with pytest.raises(ValueError, match=match):
        firnray.FunctionProfile(func)


def test_panel_profile_round_trip():
    stack = TWO_PIECE.panels
    again = PanelProfile(stack.top, stack.kind, stack.coef)
    zz = np.linspace(-300, 0, 101)
    np.testing.assert_array_equal(again.index(zz), TWO_PIECE.index(zz))


# ---------------------------------------------------- solver against the closed form

def test_quadrature_on_exponential_equals_closed_form():
    """The numerical fallback (cubic panels, quadrature) on an exponential n(z) agrees
    with the closed-form exponential solver within 1 ps, ray by ray."""
    src, rcv = random_pairs(3000, seed=11)
    a = firnray.find_rays_many(EXP, src, rcv)
    b = firnray.find_rays_many(FUNCTION_EXP, src, rcv)
    # pairs within 1 mm of the shadow edge may differ in count; there are none here
    np.testing.assert_array_equal(a.count, b.count)
    k = 2
    np.testing.assert_allclose(b.travel_time[:, :k], a.travel_time, rtol=0, atol=1e-3)
    np.testing.assert_allclose(b.launch_zenith[:, :k], a.launch_zenith, rtol=0, atol=1e-5)
    np.testing.assert_allclose(b.arrival_zenith[:, :k], a.arrival_zenith, rtol=0, atol=1e-5)
    np.testing.assert_allclose(b.path_length[:, :k], a.path_length, rtol=0, atol=1e-5)
    np.testing.assert_array_equal(b.kind[:, :k], a.kind)
    # spreading: finite differences of the quadrature against the analytic derivative;
    # 1e-4 relative is 0.001 dB of amplitude
    np.testing.assert_allclose(b.equivalent_distance[:, :k], a.equivalent_distance, rtol=1e-4)


def test_exponential_panel_equals_exponential_solver():
    """One exponential panel through the panel solver equals the exponential solver
    (same closed form, different root finder) within 1e-3 ps."""
    one = firnray.PiecewiseExponentialProfile(1.35, [], 1.78, 40.0)
    src, rcv = random_pairs(2000, seed=5)
    a = firnray.find_rays_many(EXP, src, rcv)
    b = firnray.find_rays_many(one, src, rcv)
    np.testing.assert_array_equal(a.count, b.count)
    np.testing.assert_allclose(b.travel_time[:, :2], a.travel_time, rtol=0, atol=1e-6)


def test_air_and_uniform_cases():
    tab = firnray.TabulatedProfile(-np.arange(0.0, 101.0, 1.0), EXP.index(-np.arange(0.0, 101.0)))
    # both points in the uniform ice below the table at one height: the straight ray
    rays = firnray.find_rays(tab, (0.0, -300.0), (500.0, -300.0))
    n = tab.index(-300.0)
    assert rays[0].kind == "direct"
    assert rays[0].travel_time == pytest.approx(n * 500.0 / 0.299792458, abs=1e-9)
    assert rays[0].launch_zenith == 90.0
    # both in the air: straight and surface-reflected, t = n_air L / c
    rays = firnray.find_rays(tab, (0.0, 30.0), (100.0, 10.0))
    assert [r.kind for r in rays] == ["direct", "reflected"]
    assert rays[0].travel_time == pytest.approx(math.hypot(100.0, 20.0) / 0.299792458)
    assert rays[1].travel_time == pytest.approx(math.hypot(100.0, 40.0) / 0.299792458)


# ------------------------------------------------------ interpolation error of a table

def test_table_sampled_at_half_metre_tracks_its_truth():
    """A piecewise-exponential truth sampled every 0.5 m: the table's travel times stay
    within 0.1 ns of the truth's over paths of about 1 km (the interpolation error)."""
    z = -np.arange(0.0, 400.5, 0.5)
    tab = firnray.TabulatedProfile(z, TWO_PIECE.index(z))
    src = np.array([[0.0, -350.0], [0.0, -390.0], [0.0, -60.0], [0.0, -150.0]])
    rcv = np.array([[900.0, -100.0], [700.0, -5.0], [1000.0, -40.0], [800.0, -150.0]])
    truth = firnray.find_rays_many(TWO_PIECE, src, rcv)
    table = firnray.find_rays_many(tab, src, rcv)
    np.testing.assert_array_equal(truth.count, table.count)
    assert np.nanmax(np.abs(table.travel_time[:, :2] - truth.travel_time[:, :2])) < 0.1


# ------------------------------------------------------------ property tests

@st.composite
def monotone_tables(draw):
    count = draw(st.integers(min_value=4, max_value=30))
    steps = draw(st.lists(st.floats(0.5, 12.0), min_size=count - 1, max_size=count - 1))
    rises = draw(st.lists(st.floats(0.05, 1.0), min_size=count - 1, max_size=count - 1))
    n_surface = draw(st.floats(1.25, 1.45))
    n_deep = draw(st.floats(1.70, 1.80))
    z = -np.concatenate([[0.0], np.cumsum(steps)])
    weights = np.asarray(rises) * np.exp(-np.arange(count - 1) / (count / 3.0))
    n = n_surface + (n_deep - n_surface) * np.concatenate([[0.0], np.cumsum(weights)]) / np.sum(weights)
    return z, n


def _pchip_index(tab):
    """n(z), dn/dz(z), n_air of a table from scipy's PchipInterpolator (outside library),
    constant below the deepest sample and continued as n(0) above the surface."""
    ref = PchipInterpolator(tab.z[::-1], tab.n[::-1])
    der = ref.derivative()
    z_bottom = tab.z[-1]

    def n(zz):
        return float(ref(min(max(zz, z_bottom), 0.0)))

    def dndz(zz):
        return 0.0 if zz > 0.0 or zz < z_bottom else float(der(zz))

    return n, dndz, 1.0


@settings(max_examples=10, deadline=None, suppress_health_check=[HealthCheck.too_slow],
          derandomize=True, phases=[Phase.explicit, Phase.generate])
@given(table=monotone_tables(), xs=st.floats(20.0, 400.0), zs=st.floats(-200.0, -1.0),
       zr=st.floats(-120.0, -1.0))
def test_random_tables_reciprocity_snell_and_landing(table, xs, zs, zr):
    """Random monotone tables: swapping source and receiver gives the same rays; the Snell
    invariant n sin(zenith) is the same at both ends; and a scipy ray shot from the source
    with the reported invariant lands on the receiver within 1 mm."""
    tab = firnray.TabulatedProfile(*table)
    forward = firnray.find_rays(tab, (0.0, zs), (xs, zr))
    backward = firnray.find_rays(tab, (xs, zr), (0.0, zs))
    assert len(forward) == len(backward)
    for f, b in zip(forward, backward):
        assert f.kind == b.kind
        assert f.travel_time == pytest.approx(b.travel_time, abs=1e-6)
        assert f.launch_zenith == pytest.approx(180.0 - b.arrival_zenith, abs=1e-7)
    index = _pchip_index(tab)
    for r in forward:
        n_src, n_rcv = tab.index(zs), tab.index(zr)
        assert n_src * math.sin(math.radians(r.launch_zenith)) == pytest.approx(r.invariant,
                                                                               abs=1e-12)
        assert n_rcv * math.sin(math.radians(r.arrival_zenith)) == pytest.approx(r.invariant,
                                                                                abs=1e-12)
        grazing_top = ((r.kind == "reflected" and tab.n_surface - r.invariant < 1e-3)
                       or (r.kind == "refracted" and r.turning_z > -0.5))
        if (r.kind == "direct" and r.arrival_zenith > 89.9) or r.invariant < 1e-3 or grazing_top:
            # grazing at the receiver or at the surface, or vertical: where the shot ray
            # lands is too sensitive to the integrator's error to test it
            continue
        landed = shoot(index, zs, r.invariant, r.launch_zenith < 90.0, xs, bounce=True,
                       max_step=5.0)
        assert landed is not None
        assert landed[0] == pytest.approx(zr, abs=1e-3)
        # the integrator steps over the knots, where dn/dz has kinks: 10 ps on its time
        assert landed[1] == pytest.approx(r.travel_time, abs=1e-2)


# ----------------------------------------------------------------- batch shape

def test_batch_matches_single_calls_for_a_table():
    z = -np.arange(0.0, 151.0, 1.0)
    tab = firnray.TabulatedProfile(z, TWO_PIECE.index(z))
    src, rcv = random_pairs(40, seed=3)
    batch = firnray.find_rays_many(tab, src, rcv)
    assert batch.travel_time.shape[1] >= 2
    for i in range(40):
        single = firnray.find_rays(tab, src[i], rcv[i])
        assert len(single) == batch.count[i]
        for k, r in enumerate(single):
            assert r.travel_time == batch.travel_time[i, k]
        assert np.all(np.isnan(batch.travel_time[i, len(single):]))


def test_shadow_boundary_of_a_table_separates_lit_and_dark():
    z = -np.arange(0.0, 201.0, 1.0)
    tab = firnray.TabulatedProfile(z, TWO_PIECE.index(z))
    heights = np.array([-20.0, -60.0, -150.0, -400.0])
    edge = firnray.shadow_boundary(tab, -100.0, heights)
    for zs, x in zip(heights, edge):
        assert firnray.find_rays(tab, (0.0, zs), (x * (1 - 1e-6), -100.0))
        assert not firnray.find_rays(tab, (0.0, zs), (x * (1 + 1e-6), -100.0))


def test_layer_reflection_in_a_table_matches_image_in_uniform_ice():
    """Below the table the ice is uniform: a bounce off a layer there, with both points
    below the table too, is the straight ray to the mirror image (common practice)."""
    z = -np.arange(0.0, 101.0, 1.0)
    tab = firnray.TabulatedProfile(z, TWO_PIECE.index(z))
    layer = firnray.Reflector(-900.0, amplitude=0.1)
    rays = firnray.find_rays(tab, (0.0, -300.0), (400.0, -500.0), reflectors=[layer])
    bounce = [r for r in rays if r.kind == "layer-reflected"][0]
    n = tab.index(-300.0)
    length = math.hypot(400.0, (-300.0 + 900.0) + (-500.0 + 900.0))
    assert bounce.travel_time == pytest.approx(n * length / 0.299792458, abs=1e-6)


def test_denser_scan_finds_clustered_rays_of_a_noisy_table():
    """The invented density core has scatter, so its up-going family has many small
    extrema and clusters of rays.  A denser scan finds more of them: more rays in
    all, every pair the default scan lights is lit, and every ray it reports
    is a ray (a scipy ray shot from the source with its invariant lands on the
    receiver within 1 mm)."""
    core = firnray.load_profile("tallow-dome-core")
    rng = np.random.default_rng(21)
    n = 3000
    src = np.column_stack([np.zeros(n), -rng.uniform(0.0, 2000.0, n)])
    rcv = np.column_stack([rng.uniform(0.0, 3000.0, n), -rng.uniform(0.0, 200.0, n)])
    coarse = firnray.find_rays_many(core, src, rcv)
    dense = firnray.find_rays_many(core, src, rcv, scan_points=40)
    assert dense.count.sum() > coarse.count.sum()
    assert np.all(dense.count[coarse.count > 0] > 0)
    assert np.all(dense.converged[dense.kind >= 0])
    index = _pchip_index(core)
    extra = np.flatnonzero(dense.count > coarse.count)[:3]
    assert extra.size
    for i in extra:
        for ray in dense[i]:
            if ray.kind == "reflected" and core.n_surface - ray.invariant < 1e-3:
                continue
            landed = shoot(index, src[i, 1], ray.invariant, ray.launch_zenith < 90.0,
                           rcv[i, 0], bounce=True, max_step=5.0)
            assert landed is not None and landed[0] == pytest.approx(rcv[i, 1], abs=1e-3)
    with pytest.raises(ValueError, match="scan_points"):
        firnray.find_rays_many(core, src[:2], rcv[:2], scan_points=2)


# ------------------------------------------------------ analytic dX/dpsi of the families

def _central_slope(mode, t, prof, geo, h):
    """Richardson-extrapolated central difference of X(t) (independent of the
    analytic derivative: only X is evaluated)."""
    from firnray.rays.panel_solver import family_x
    d1 = (family_x(mode, t + h, prof, geo) - family_x(mode, t - h, prof, geo)) / (2.0 * h)
    d2 = (family_x(mode, t + 0.5 * h, prof, geo) - family_x(mode, t - 0.5 * h, prof, geo)) / h
    return (4.0 * d2 - d1) / 3.0


@pytest.mark.parametrize("name", ["table", "two-piece", "core", "function"])
def test_analytic_family_slope_matches_finite_differences(name):
    """dX/dpsi of the direct and up-going families (closed form on exponential panels,
    quadrature and its integration by parts near the top on cubic panels, block
    series) equals a Richardson central difference of X within 2e-5 relative
    (or 1e-5 X per radian, near a stationary point; 2e-5 in the spreading factor is 2e-4 dB) wherever it is
    reported; it drives the Newton steps, the
    stationary points of the scan and the spreading factor."""
    from firnray.rays.panel_blocks import solver_arrays
    from firnray.rays.panel_kernels import index_at
    from firnray.rays.panel_solver import DIRECT_FAMILY, UP_FAMILY, family
    z = -np.arange(0.0, 200.25, 0.5)
    prof = {"table": firnray.TabulatedProfile(z, TWO_PIECE.index(z)), "two-piece": TWO_PIECE,
            "core": firnray.load_profile("tallow-dome-core"), "function": FUNCTION_EXP}[name]
    arr = solver_arrays(prof.panels)
    n_s = arr[4][0]
    rng = np.random.default_rng(3)
    checked = 0
    for _ in range(40):
        z_hi = -rng.uniform(2.0, 190.0)
        z_lo = z_hi - rng.uniform(1.0, 800.0)
        n_hi = index_at(arr, z_hi)
        geo = (n_hi, z_lo, z_hi, 0.0, 1.0, n_s, 0.0)
        psi_s = math.atan2(math.sqrt(max(n_hi * n_hi - n_s * n_s, 0.0)), n_s)
        for mode, t_max in ((DIRECT_FAMILY, 0.5 * math.pi), (UP_FAMILY, psi_s),
                            (UP_FAMILY, 0.5 * math.pi)):
            t_min = psi_s if t_max > psi_s and mode == UP_FAMILY else 0.0
            t = t_min + (t_max - t_min) * rng.uniform(0.05, 0.95)
            h = 1e-6          # [rad]: the scatter of the core shapes X(t) on scales of 1e-5 rad
            r = family(mode, t, arr, geo, False)
            x, slope = r[0], r[5]
            if not math.isfinite(slope):
                continue
            ref = _central_slope(mode, t, arr, geo, h)
            assert slope == pytest.approx(ref, rel=2e-5, abs=1e-5 * x), (mode, z_lo, z_hi, t)
            checked += 1
    assert checked >= 100


def test_block_series_segments_match_scipy_quadrature():
    """X, L, c T and dX/db of ray pieces through a 0.5 m table, summed over the
    dyadic blocks of panels by their moment series (``panel_blocks``), equal
    scipy ``quad`` of the same integrands on scipy's ``PchipInterpolator``
    (outside library; split at every knot) within 1e-11 relative."""
    from scipy.integrate import quad
    from firnray.rays.panel_blocks import solver_arrays
    from firnray.rays.panel_kernels import segment
    z = -np.arange(0.0, 200.25, 0.5)
    tab = firnray.TabulatedProfile(z, TWO_PIECE.index(z))
    arr = solver_arrays(tab.panels)
    pchip = PchipInterpolator(z[::-1], TWO_PIECE.index(z)[::-1])
    rng = np.random.default_rng(8)
    for _ in range(12):
        z_b = -rng.uniform(5.0, 120.0)
        z_a = z_b - rng.uniform(20.0, 75.0)
        n_b = float(pchip(z_b))
        b = n_b * rng.uniform(0.3, 0.995)          # no turning point in the piece
        n_ref, p = n_b, math.sqrt(n_b * n_b - b * b)
        knots = z[(z > z_a) & (z < z_b)]

        def integral(f):
            return quad(f, z_a, z_b, points=knots, limit=800, epsabs=0.0, epsrel=1e-13)[0]

        def w(zz):
            n = float(pchip(zz))
            return math.sqrt(n * n - b * b)

        ref = (integral(lambda zz: b / w(zz)), integral(lambda zz: float(pchip(zz)) / w(zz)),
               integral(lambda zz: float(pchip(zz)) ** 2 / w(zz)),
               integral(lambda zz: float(pchip(zz)) ** 2 / w(zz) ** 3))
        got = segment(arr, b, n_ref, p, z_a, z_b, False)
        np.testing.assert_allclose(got, ref, rtol=1e-11, err_msg=f"{z_a}, {z_b}, {b}")
