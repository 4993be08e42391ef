"""Shadow zones, reachability, D/R delays, lookup tables and vertex fits in a non-monotone
profile: exponential firn with a Gaussian index dip of 0.04 at 30 m depth, 3 m wide
(invented), which makes a duct above the dip.

Checks (each names its outside source or says it is internal):

* a cell lit only through the duct, far beyond the smooth profile's shadow
  boundary: its ray lands on the antenna and keeps its travel time when shot
  by the independent solve_ivp integrator of ``tests/raytrace_ode.py`` (ray
  equations of geometric optics, Born & Wolf, Principles of Optics, section
  3.2), while the smooth profile (no dip) has no ray there;
* a cell whose only rays are weaker than the focusing threshold: the focusing
  of its ray from the variational ray-tube shooting of ``tests/ray_tube_ode.py``
  is below the threshold too;
* the boundary of rays without a duct, for points above the dip, against the
  largest reach of the direct and up-going families computed with scipy's
  ``quad`` on the analytic index (the integral of section 1 of
  ``docs/theory.md``, independent of the panel solver);
* the boundary of rays without a duct set by the focusing threshold: the
  ray-tube focusing brackets the threshold across it;
* the D/R delay in the duct against the times of the same two rays shot by
  solve_ivp;
* internal: categories against direct ``find_rays`` calls, the delay
  inversion round trip, table nodes against ``find_rays_many``, a format
  version 1 table still opens, a vertex round trip.
"""

import math
import os
import shutil
import sys
import warnings

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import brentq, minimize_scalar

import firnray
from firnray.rays.solve import is_monotone
from firnray.studies import shadow, tables
from firnray.studies.delays import JUMP_TOLERANCE, _delay_at
from firnray.studies.grid import counted_rays, guided_rays, ray_focusing

sys.path.insert(0, os.path.dirname(__file__))
from raytrace_ode import shoot  # noqa: E402
from ray_tube_ode import shoot_tube, tube_focusing  # noqa: E402

A, DROP, SCALE, DIP_DEPTH, DIP_SIZE, DIP_WIDTH = 1.78, 0.43, 40.0, -30.0, 0.04, 3.0


def dip_index(z):
    """Exponential firn with a Gaussian index dip (invented) [1]."""
    return A - DROP * np.exp(z / SCALE) - DIP_SIZE * np.exp(-((z - DIP_DEPTH) / DIP_WIDTH) ** 2)


def n_ode(z):
    z = min(z, 0.0)
    return A - DROP * math.exp(z / SCALE) - DIP_SIZE * math.exp(-((z - DIP_DEPTH) / DIP_WIDTH) ** 2)


def dn_ode(z):
    if z > 0.0:
        return 0.0
    g = math.exp(-((z - DIP_DEPTH) / DIP_WIDTH) ** 2)
    return -DROP / SCALE * math.exp(z / SCALE) + DIP_SIZE * g * 2.0 * (z - DIP_DEPTH) / DIP_WIDTH ** 2


def d2n_ode(z):
    if z > 0.0:
        return 0.0
    g = math.exp(-((z - DIP_DEPTH) / DIP_WIDTH) ** 2)
    u = (z - DIP_DEPTH) / DIP_WIDTH
    return (-DROP / SCALE ** 2 * math.exp(z / SCALE)
            + DIP_SIZE * g * 2.0 / DIP_WIDTH ** 2 * (1.0 - 2.0 * u * u))


DIP = firnray.FunctionProfile(dip_index)
SMOOTH = firnray.FunctionProfile(lambda z: A - DROP * np.exp(z / SCALE))
ODE_INDEX = (n_ode, dn_ode, 1.0)
ANTENNA = -25.0          # in the duct above the dip
X = np.linspace(0.0, 1200.0, 13)
Z = np.array([-40.0, -31.0, -27.0, -25.0, -23.0, -20.0])


@pytest.fixture(scope="module")
def imap():
    return firnray.illumination_map(DIP, ANTENNA, X, Z)


def test_profiles_are_routed_as_expected():
    assert not is_monotone(DIP)
    assert is_monotone(SMOOTH)


def test_categories_agree_with_direct_solutions(imap):
    """Internal: each cell's category from its own find_rays call."""
    assert imap.category.shape == (Z.size, X.size)
    assert set(np.unique(imap.category)) == {shadow.SHADOW, shadow.LIT, shadow.DUCT_ONLY}
    for iz in range(Z.size):
        for ix in (1, 4, 12):
            rays = firnray.find_rays(DIP, (0.0, Z[iz]), (X[ix], ANTENNA))
            strong = [r for r in rays if r.focusing >= 1e-3]
            unguided = [r for r in strong if r.lower_turning_z is None]
            want = (shadow.SHADOW if not strong else
                    shadow.LIT if unguided else shadow.DUCT_ONLY)
            assert imap.category[iz, ix] == want, (Z[iz], X[ix])
            assert imap.rays[iz, ix] == len(strong)
    assert imap.category[list(Z).index(ANTENNA), 0] == shadow.LIT   # the antenna itself
    np.testing.assert_array_equal(imap.lit, imap.category != shadow.SHADOW)


def test_duct_lights_far_beyond_the_smooth_shadow_boundary(imap):
    """Outside (solve_ivp shooting): the ray of a duct-only cell 1.2 km away lands on
    the antenna with its time; the smooth profile has no ray at all there."""
    iz = list(Z).index(-23.0)
    assert imap.category[iz, -1] == shadow.DUCT_ONLY
    smooth_edge = firnray.shadow_boundary(SMOOTH, ANTENNA, -23.0)
    assert smooth_edge < 200.0 and X[-1] > 5 * smooth_edge
    assert firnray.find_rays(SMOOTH, (0.0, -23.0), (X[-1], ANTENNA)) == []
    rays = firnray.find_rays(DIP, (0.0, -23.0), (X[-1], ANTENNA))
    best = max(rays, key=lambda r: r.focusing)
    assert best.kind == "ducted" and best.turning_points > 10 and best.focusing > 1.0
    z_end, t_end, _ = shoot(ODE_INDEX, -23.0, best.invariant, best.launch_zenith < 90.0,
                            X[-1], rtol=1e-11, atol=1e-11, max_step=0.5)
    # landing 1 mm, time 5 ps (ODE accuracy, as in tests/test_ducts.py)
    assert abs(z_end - ANTENNA) < 1e-3
    assert abs(t_end - best.travel_time) < 5e-3


def test_rays_below_the_focusing_threshold_do_not_light_a_cell():
    """Outside (ray-tube shooting): a ray that skims the dip's minimum 700 m away has
    an amplitude focusing below 1e-3, and the cell is shadow unless every ray counts."""
    src, rcv = (0.0, -200.0), (700.0, ANTENNA)
    rays = firnray.find_rays(DIP, src, rcv)
    assert rays and all(r.lower_turning_z is None for r in rays)
    assert max(r.focusing for r in rays) < 1e-3
    dark = firnray.illumination_map(DIP, ANTENNA, [700.0], [-200.0])
    assert dark.category[0, 0] == shadow.SHADOW
    lit = firnray.illumination_map(DIP, ANTENNA, [700.0], [-200.0], min_focusing=0.0)
    assert lit.category[0, 0] == shadow.LIT
    for ray in rays:
        got = shoot_tube(n_ode, dn_ode, d2n_ode, src[1], ray.invariant,
                         ray.launch_zenith < 90.0, rcv[0])
        foc, _ = tube_focusing(n_ode, src[1], rcv, ray.invariant, ray.launch_zenith,
                               ray.arrival_zenith, got["dX_db"])
        # such a ray is ill-conditioned (X ~ -log|b - b_c|, theory 11.6): the two
        # focusing values agree only in order of magnitude, both far below 1e-3
        assert 0.1 < foc / ray.focusing < 10.0
        assert foc < 1e-3


def _families_reach(z_lo, z_hi):
    """Largest reach [m] of the direct and up-going families between two heights above
    the dip, by scipy quad on the analytic index (turning point removed by z = z_T - u^2)."""
    def x_leg(b, z1, z2):          # z = z2 - u^2: bounded also as b -> n(z2)
        return quad(lambda u: 2 * u * b / math.sqrt(max(n_ode(z2 - u * u) ** 2 - b * b,
                                                        1e-300)),
                    0.0, math.sqrt(z2 - z1), epsabs=1e-10, epsrel=1e-11, limit=400)[0]

    def x_to_top(b, z1):
        if b <= n_ode(0.0):         # reflected at the surface
            return quad(lambda u: 2 * u * b / math.sqrt(max(n_ode(-u * u) ** 2 - b * b, 1e-300)),
                        0.0, math.sqrt(-z1), epsabs=1e-10, epsrel=1e-11, limit=400)[0]
        z_top = brentq(lambda z: n_ode(z) - b, z1, 0.0, xtol=1e-15)
        span = math.sqrt(z_top - z1)
        return quad(lambda u: 2 * u * b / math.sqrt(max(n_ode(z_top - u * u) ** 2 - b * b,
                                                        1e-300)),
                    0.0, span, epsabs=1e-10, epsrel=1e-11, limit=400)[0]

    b_top = n_ode(z_hi)

    def up_family(b):
        return x_leg(b, z_lo, z_hi) + 2.0 * x_to_top(b, z_hi)

    direct_horizon = x_leg(b_top, z_lo, z_hi)     # arrives horizontally at z_hi
    best = minimize_scalar(lambda b: -up_family(b), bounds=(0.5, b_top * (1 - 1e-12)),
                           method="bounded", options={"xatol": 1e-12})
    return max(direct_horizon, -best.fun)


def test_boundary_above_the_dip_matches_quadrature():
    """Outside (scipy quad on the analytic index): the largest reach of the families of
    rays without a duct between two points above the dip."""
    got = firnray.shadow_boundary(DIP, -20.0, -8.0)
    want = _families_reach(-20.0, -8.0)
    # 1e-3 m: bisection to 1e-6 m on where the solver still finds the two rays that
    # merge at the caustic, plus the panels' deviation from the function (1e-10)
    assert got == pytest.approx(want, abs=1e-3)


def test_boundary_set_by_the_focusing_threshold():
    """Outside (ray-tube shooting): across the boundary of a deep source the focusing of
    the ray without a duct falls through 1e-3; inside it the cell is lit, outside dark."""
    edge = firnray.shadow_boundary(DIP, ANTENNA, -200.0)
    smooth = firnray.shadow_boundary(SMOOTH, ANTENNA, -200.0)
    assert edge > smooth + 100.0      # rays skim the dip's minimum before they fade
    foc = []
    for x in (edge - 2.0, edge + 2.0):
        rays = [r for r in firnray.find_rays(DIP, (0.0, -200.0), (x, ANTENNA))
                if r.lower_turning_z is None]
        best = max(rays, key=lambda r: r.focusing)
        got = shoot_tube(n_ode, dn_ode, d2n_ode, -200.0, best.invariant,
                         best.launch_zenith < 90.0, x)
        foc.append(tube_focusing(n_ode, -200.0, (x, ANTENNA), best.invariant,
                                 best.launch_zenith, best.arrival_zenith, got["dX_db"])[0])
    assert foc[0] > 1e-3 > foc[1]


def test_boundary_special_heights_and_errors():
    out = firnray.shadow_boundary(DIP, ANTENNA, np.array([5.0, np.nan, -20.0]))
    assert out[0] == np.inf and np.isnan(out[1]) and np.isfinite(out[2])
    assert isinstance(firnray.shadow_boundary(DIP, ANTENNA, -20.0), float)
    # a short scan range that the rays outlast gives inf
    assert firnray.shadow_boundary(DIP, ANTENNA, -20.0, max_distance=50.0,
                                   distance_step=10.0) == np.inf
    with pytest.raises(ValueError, match="min_focusing"):
        firnray.shadow_boundary(DIP, ANTENNA, -20.0, min_focusing=-1.0)
    with pytest.raises(ValueError, match="distance_step"):
        firnray.shadow_boundary(DIP, ANTENNA, -20.0, distance_step=0.0)
    with pytest.raises(ValueError, match="max_distance"):
        firnray.shadow_boundary(DIP, ANTENNA, -20.0, max_distance=float("nan"))
    with pytest.raises(ValueError, match="source_z"):
        firnray.illumination_map(DIP, ANTENNA, [10.0], [[-20.0]])
    with pytest.raises(ValueError, match="distance"):
        firnray.illumination_map(DIP, ANTENNA, [-10.0], [-20.0])


def test_reachability_map_of_a_non_monotone_profile(imap):
    reach, boundary = firnray.reachability_map(DIP, ANTENNA, X, Z)
    np.testing.assert_array_equal(reach, imap.lit)
    np.testing.assert_array_equal(boundary, firnray.shadow_boundary(DIP, ANTENNA, Z))
    # lit far beyond the boundary: not one interval of distance per height
    iz = list(Z).index(-23.0)
    assert reach[iz, -1] and X[-1] > boundary[iz]


def test_dr_delay_in_the_duct_against_shot_rays():
    """Outside (solve_ivp shooting): the delay of the first two rays of the duct with an
    amplitude focusing of at least 0.05 (the weaker earlier ones skim the dip's
    minimum, where the shot rays are ill-conditioned)."""
    grid = firnray.dr_delays(DIP, ANTENNA, [300.0], [-24.0], min_focusing=0.05)
    rays = [r for r in firnray.find_rays(DIP, (0.0, -24.0), (300.0, ANTENNA))
            if r.focusing >= 0.05]
    assert grid.count[0, 0] == len(rays) >= 2
    first, second = rays[:2]
    assert grid.first_kind[0, 0] == firnray.KIND_CODES["ducted"] == firnray.KIND_CODES[first.kind]
    assert grid.first_guided[0, 0] and grid.second_guided[0, 0]
    times = []
    for ray in (first, second):
        z_end, t_end, _ = shoot(ODE_INDEX, -24.0, ray.invariant, ray.launch_zenith < 90.0,
                                300.0, rtol=1e-11, atol=1e-11, max_step=0.5)
        assert abs(z_end - ANTENNA) < 1e-3
        times.append(t_end)
    # 10 ps: two ODE times of 5 ps each
    assert grid.delay[0, 0] == pytest.approx(times[1] - times[0], abs=1e-2)
    # the default threshold (1e-3) counts the weaker rays too: earlier pulses
    default = firnray.dr_delays(DIP, ANTENNA, [300.0], [-24.0])
    assert default.count[0, 0] > grid.count[0, 0]
    assert default.first_time[0, 0] < grid.first_time[0, 0]
    # a refracted ray that turns back up at the dip's upper edge: guided by the duct
    assert default.first_kind[0, 0] == firnray.KIND_CODES["refracted"]
    assert default.first_guided[0, 0]


def test_delay_inversion_finds_the_distance_and_no_jumps():
    """Internal round trip; every solution reproduces the delay (no bracket around a
    jump of the delay, where the pair of earliest rays changes)."""
    x_true = 120.0
    delay = float(_delay_at(DIP, ANTENNA, -24.0, np.array([x_true]))[0])
    inv = firnray.distance_from_delay(DIP, ANTENNA, -24.0, delay, scan_points=200,
                                      max_distance=400.0)
    sols = inv.solutions[0]
    assert np.min(np.abs(sols - x_true)) < 1e-6
    back = _delay_at(DIP, ANTENNA, -24.0, sols)
    assert np.all(np.abs(back - delay) <= JUMP_TOLERANCE)
    # the raw scan does cross jumps of the delay in this range
    x = np.linspace(1e-3, 400.0, 200)
    f = _delay_at(DIP, ANTENNA, -24.0, x)
    assert np.nanmax(np.abs(np.diff(f))) > 0.5
    # default range: the boundary of rays without a duct
    near = firnray.distance_from_delay(DIP, ANTENNA, -24.0, delay, scan_points=100)
    assert np.min(np.abs(near.solutions[0] - x_true)) < 1e-6


def test_table_keeps_every_ray_of_the_duct(tmp_path):
    """Internal: nodes equal find_rays_many in every slot; max_rays caps the slots."""
    x = np.linspace(100.0, 400.0, 4)
    z = np.linspace(-27.0, -23.0, 3)
    table = firnray.build_table(DIP, ANTENNA, x, z, tmp_path / "duct", chunk_shape=(2, 3))
    xx, zz = np.meshgrid(x, z)
    exact = firnray.find_rays_many(DIP, np.column_stack([np.zeros(xx.size), zz.ravel()]),
                                   np.column_stack([xx.ravel(), np.full(xx.size, ANTENNA)]))
    k = exact.travel_time.shape[1]
    assert table.slots == k > 2
    np.testing.assert_array_equal(table.data["count"].ravel(), exact.count)
    for q in ("travel_time", "turning_points", "lower_turning_z", "equivalent_distance"):
        np.testing.assert_array_equal(table.data[q].reshape(-1, k), getattr(exact, q))
    iz, ix = np.unravel_index(np.argmax(table.data["count"]), table.data["count"].shape)
    assert table.interpolate(x[ix], z[iz], "travel_time", k - 1) == pytest.approx(
        table.data["travel_time"][iz, ix, k - 1], rel=1e-14)
    with pytest.raises(ValueError, match="ray"):
        table.interpolate(x[1], z[1], "travel_time", k)
    reopened = firnray.open_table(tmp_path / "duct")
    assert reopened.slots == k and reopened.provenance["version"] == tables.VERSION
    capped = firnray.build_table(DIP, ANTENNA, x, z, tmp_path / "capped", chunk_shape=(2, 3),
                                 max_rays=3)
    assert capped.slots == 3
    np.testing.assert_array_equal(capped.data["count"], table.data["count"])
    np.testing.assert_array_equal(capped.data["kind"], table.data["kind"][:, :, :3])
    with pytest.raises(ValueError, match="max_rays"):
        firnray.build_table(DIP, ANTENNA, x, z, tmp_path / "bad", max_rays=0)
    with pytest.raises(firnray.TableError, match="different table"):
        firnray.build_table(DIP, ANTENNA, x, z, tmp_path / "capped", chunk_shape=(2, 3),
                            max_rays=4)


def test_version_1_table_still_opens(tmp_path):
    """Internal: a table written in format version 1 (two fixed slots) opens and
    interpolates; its nodes are the rays the solver finds today; a build into its
    folder is refused."""
    folder = os.path.join(os.path.dirname(__file__), "data", "lookup_table_v1")
    table = firnray.open_table(folder)
    assert table.provenance["version"] == 1 and table.slots == 2
    assert table.quantities == tables.FLOAT_QUANTITIES_V1
    xx, zz = np.meshgrid(table.distance, table.source_z)
    exact = firnray.find_rays_many(table.profile,
                                   np.column_stack([np.zeros(xx.size), zz.ravel()]),
                                   np.column_stack([xx.ravel(), np.full(xx.size, -80.0)]))
    np.testing.assert_allclose(table.data["travel_time"].reshape(-1, 2), exact.travel_time,
                               rtol=1e-12)
    assert table.interpolate(300.0, -180.0) == pytest.approx(
        table.data["travel_time"][1, 1, 0], rel=1e-14)
    with pytest.raises(ValueError, match="lower_turning_z"):
        table.interpolate(300.0, -180.0, "lower_turning_z")
    copy = tmp_path / "v1"
    shutil.copytree(folder, copy)
    with pytest.raises(firnray.TableError, match="format version 1"):
        firnray.build_table(table.profile, -80.0, table.distance, table.source_z, copy,
                            chunk_shape=(2, 3))


def test_vertex_round_trip_in_a_non_monotone_profile():
    """Internal: pulses simulated with the dip profile fit back to their vertex."""
    station = firnray.Station({"shallow-a": (0.0, 0.0, -24.0), "shallow-b": (30.0, 0.0, -26.0),
                               "mid": (0.0, 30.0, -45.0), "deep-a": (30.0, 30.0, -60.0),
                               "deep-b": (15.0, -20.0, -80.0)}, name="invented-dip-station")
    vertex = np.array([140.0, 70.0, -50.0])
    pred = firnray.predict_arrivals(DIP, station, vertex, 100.0)
    assert pred.arrival_time.shape[2] >= 2
    rows = firnray.simulate_arrivals(DIP, station, vertex, 100.0, sigma=0.5)
    assert all(sum(1 for r in rows if r[0] == a) <= 2 for a in station.ids)
    with pytest.raises(ValueError, match="pulses"):
        firnray.simulate_arrivals(DIP, station, vertex, 100.0, pulses=0)
    fit = firnray.fit_vertex(DIP, station, rows, search_box=((60.0, 220.0), (0.0, 140.0),
                                                             (-90.0, -30.0)),
                             grid=(5, 5, 4), starts=2)
    assert fit.success
    np.testing.assert_allclose(fit.vertex, vertex, atol=1e-3)
    assert fit.emission_time == pytest.approx(100.0, abs=1e-4)
    assert fit.chi2 < 1e-6


def test_predictions_keep_every_ray_of_a_duct():
    station = firnray.Station({"in-duct": (0.0, 0.0, -25.0)})
    pred = firnray.predict_arrivals(DIP, station, (300.0, 0.0, -24.0))
    rays = firnray.find_rays(DIP, (0.0, -24.0), (300.0, -25.0))
    assert pred.count[0, 0] == len(rays) > 2
    np.testing.assert_allclose(pred.travel_time[0, 0, :len(rays)],
                               [r.travel_time for r in rays], rtol=1e-12)
    assert len(pred.rows(0)) == len(rays)


def test_focusing_helpers_match_ray_objects():
    """Internal: the RaySet arrays the studies use agree with the Ray attributes."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", firnray.FirnrayWarning)
        rs = firnray.find_rays_many(DIP, (0.0, -24.0), np.array([[300.0, -25.0],
                                                                 [100.0, -60.0]]))
    foc = ray_focusing(rs)
    counted = counted_rays(rs)
    guided = guided_rays(rs)
    for i in range(len(rs)):
        for k, ray in enumerate(rs[i]):
            assert foc[i, k] == pytest.approx(ray.focusing, rel=1e-14)
            assert counted[i, k] == (ray.focusing >= 1e-3)
            assert guided[i, k] == (ray.lower_turning_z is not None)


def test_guide_example_of_a_duct_at_the_demo_site():
    """Internal: the numbers quoted in docs/guide.md (Shadow zones and ducts in
    non-monotone firn) for the invented layer at the invented demo site."""
    demo = firnray.load_profile("demo-dry-firn")
    lens = firnray.FunctionProfile(
        lambda z: demo.index(z) - 0.04 * np.exp(-((z + 30.0) / 3.0) ** 2))
    assert firnray.shadow_boundary(demo, -25.0, -24.0) == pytest.approx(162.7, abs=0.05)
    assert firnray.find_rays(demo, (0.0, -24.0), (2000.0, -25.0)) == []
    rays = firnray.find_rays(lens, (0.0, -24.0), (2000.0, -25.0))
    assert len(rays) == 39 and {r.kind for r in rays} == {"ducted"}
    best = max(rays, key=lambda r: r.focusing)
    assert best.turning_points == 29
    assert best.focusing == pytest.approx(3.34, abs=0.005)
    assert best.travel_time == pytest.approx(10329.6, abs=0.05)
    assert best.lower_turning_z == pytest.approx(-27.71, abs=0.005)
    assert best.turning_z == pytest.approx(-23.86, abs=0.005)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", firnray.FirnrayWarning)
        bud = firnray.signal_budget(best, [200.0], 800.0)
    assert bud.total_db_s[0] == pytest.approx(77.3, abs=0.05)
    assert bud.spreading_db == pytest.approx(55.5, abs=0.05)
    assert bud.attenuation_db[0] == pytest.approx(21.8, abs=0.05)
    imap = firnray.illumination_map(lens, -25.0, [150.0, 2000.0], [-29.0, -23.0, -22.0])
    np.testing.assert_array_equal(imap.duct_only[:, 1], [True, True, False])
    np.testing.assert_array_equal(imap.farthest_lit(), [2000.0, 2000.0, 150.0])
