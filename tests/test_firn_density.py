"""Firn density -> index relations and the Herron & Langway (1980) densification model.

Outside checks: the published Kovacs, Gow & Morey (1995) number at the ice
density (coefficient recalled from memory), Looyenga's (1965) formula at its
end points, and an independent scipy ``solve_ivp`` integration of the Herron
& Langway rate equations in time (the closed form under test is their
solution in depth).  No worked example of the Herron & Langway paper could be
confirmed here (only its abstract was readable), so none is asserted.
"""

import math
import os

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from firnray.medium.firn_density import (
    HL_CRITICAL_DENSITY, ICE_DENSITY, RELATIONS, density_to_index, herron_langway_critical_depth,
    herron_langway_density, herron_langway_profile, herron_langway_rate_constants,
    index_profile_from_density, kovacs_index, looyenga_index)

CORE = os.path.join(os.path.dirname(os.path.dirname(os.path.abspath(__file__))),
                    "firnray", "data", "cores", "tallow-dome-core.csv")


def _profile_classes_available():
    from firnray.medium import profiles
    if hasattr(profiles, "TabulatedProfile"):
        return True
    try:
        from firnray.medium import general_profiles  # noqa: F401
    except ImportError:
        return False
    return True


needs_tabulated = pytest.mark.skipif(not _profile_classes_available(),
                                     reason="TabulatedProfile not available yet")


# --------------------------------------------------------------------------- density -> index

def test_kovacs_at_ice_density():
    # Kovacs, Gow & Morey (1995), Cold Reg. Sci. Technol. 23, 245-256: n = 1 + 0.845 rho
    # [g/cm^3], i.e. n = 1.775 for solid ice of 0.917 g/cm^3 (coefficient recalled from
    # memory, the paper's text not confirmed); tolerance 1e-3 on the quoted three decimals
    assert kovacs_index(917.0) == pytest.approx(1.775, abs=1e-3)
    # the straight line itself (definition): slope 0.845e-3 per kg/m^3, n = 1 at density 0
    rho = np.array([0.0, 300.0, 550.0, 917.0])
    np.testing.assert_allclose(kovacs_index(rho), 1.0 + 0.845e-3 * rho, rtol=0, atol=1e-15)
    assert isinstance(kovacs_index(400.0), float)
    assert kovacs_index(rho).shape == rho.shape


@pytest.mark.parametrize("eps_ice", [3.15, 3.17, 3.19])
def test_looyenga_end_points(eps_ice):
    # Looyenga (1965), Physica 31, 401-406: eps^(1/3) = v eps_ice^(1/3) + (1 - v); at v = 1
    # the mixture is pure ice, n = sqrt(eps_ice): it returns the ice permittivity it was
    # given (to rounding, 1e-12); at v = 0 pure air, n = 1
    assert looyenga_index(ICE_DENSITY, ice_permittivity=eps_ice) == pytest.approx(
        math.sqrt(eps_ice), abs=1e-12)
    assert looyenga_index(850.0, ice_permittivity=eps_ice, ice_density=850.0) == pytest.approx(
        math.sqrt(eps_ice), abs=1e-12)
    assert looyenga_index(0.0, ice_permittivity=eps_ice) == pytest.approx(1.0, abs=1e-15)


def test_looyenga_against_its_formula_in_mpmath():
    # the mixing formula evaluated independently at 30 digits (mpmath)
    import mpmath
    mpmath.mp.dps = 30
    for rho in (120.0, 350.0, 550.0, 780.0):
        v = mpmath.mpf(rho) / 917
        ref = (v * mpmath.cbrt(mpmath.mpf("3.15")) + (1 - v)) ** mpmath.mpf(1.5)
        assert looyenga_index(rho) == pytest.approx(float(ref), rel=1e-14)


def test_looyenga_and_kovacs_agree_for_firn():
    # common practice: both relations are used for dry polar firn and give nearly the same
    # index; over 300-917 kg/m^3 they differ by at most 0.0184 (largest near 450 kg/m^3),
    # so the assertion uses 0.02
    rho = np.linspace(300.0, 917.0, 2000)
    diff = np.abs(kovacs_index(rho) - looyenga_index(rho))
    assert np.max(diff) < 0.02
    assert diff[-1] < 1e-3   # both give the index of solid ice (1.775) at 917 kg/m^3


def test_density_to_index_selects_by_name():
    rho = np.array([350.0, 600.0])
    np.testing.assert_array_equal(density_to_index(rho), kovacs_index(rho))
    np.testing.assert_array_equal(density_to_index(rho, "looyenga", ice_permittivity=3.17),
                                  looyenga_index(rho, ice_permittivity=3.17))
    assert set(RELATIONS) == {"kovacs", "looyenga"}
    with pytest.raises(ValueError, match="relation.*kovacs.*looyenga"):
        density_to_index(rho, "maxwell")
    with pytest.raises(ValueError, match="ice_permittivity"):
        density_to_index(rho, "kovacs", ice_permittivity=3.15)
    with pytest.raises(ValueError, match="colour"):
        density_to_index(rho, "looyenga", colour="blue")


@pytest.mark.parametrize("call,word", [
    (lambda: kovacs_index(-1.0), "density"),
    (lambda: kovacs_index(1200.0), "density"),
    (lambda: kovacs_index([300.0, float("nan")]), "density"),
    (lambda: kovacs_index("dense"), "density"),
    (lambda: looyenga_index(300.0, ice_permittivity=0.5), "ice_permittivity"),
    (lambda: looyenga_index(300.0, ice_density=0.0), "ice_density"),
    (lambda: herron_langway_density(1.0, -30.0, 0.1, 350.0), "z"),
    (lambda: herron_langway_density(-1.0, 5.0, 0.1, 350.0), "temperature"),
    (lambda: herron_langway_density(-1.0, -300.0, 0.1, 350.0), "temperature"),
    (lambda: herron_langway_density(-1.0, -30.0, 0.0, 350.0), "accumulation"),
    (lambda: herron_langway_density(-1.0, -30.0, 0.1, 950.0), "surface_density"),
    (lambda: herron_langway_density(-1.0, -30.0, 0.1, 350.0, ice_density=500.0), "ice_density"),
    (lambda: herron_langway_critical_depth(-30.0, -5.0), "surface_density"),
    (lambda: herron_langway_profile(-30.0, 0.1, 350.0, z_bottom=10.0), "z_bottom"),
    (lambda: herron_langway_profile(-30.0, 0.1, 350.0, spacing=0.0), "spacing"),
])
def test_bad_input_names_argument(call, word):
    with pytest.raises(ValueError, match=word):
        call()


# --------------------------------------------------------------------------- Herron & Langway

R_GAS = 8.314


def _rates(temperature_c):
    """k0, k1 written out from the formulas of Herron & Langway (1980), quoted from memory."""
    t = temperature_c + 273.15
    return 11.0 * math.exp(-10160.0 / (R_GAS * t)), 575.0 * math.exp(-21400.0 / (R_GAS * t))


def _integrate_rate_equations(temperature_c, accumulation, surface_density, t_end):
    """Independent reference: a firn parcel integrated in TIME with scipy solve_ivp.

    Rate equations of Herron & Langway (1980) (densities in Mg/m^3, A in m w.e./yr):
    stage 1 d rho/dt = k0 A (rho_i - rho), stage 2 d rho/dt = k1 sqrt(A) (rho_i - rho),
    and the parcel sinks at dh/dt = A rho_w / rho (steady state, rho_w = 1 Mg/m^3).
    Stage 1 is stopped by an event at rho = 0.55 and stage 2 restarted there.
    Returns (times [yr], h(t) [m], rho(t) [Mg/m^3], h at the 0.55 crossing [m]).
    """
    k0, k1 = _rates(temperature_c)
    rho_i, rho_c = 0.917, 0.55

    def stage(k):
        return lambda t, y: [accumulation / y[1], k * (rho_i - y[1])]

    def crossing(t, y):
        return y[1] - rho_c
    crossing.terminal = True

    opts = dict(method="DOP853", rtol=1e-10, atol=1e-13, dense_output=True)
    rho0 = surface_density / 1000.0
    pieces = []
    t0, y0, h_c = 0.0, [0.0, rho0], 0.0
    if rho0 < rho_c:
        s1 = solve_ivp(stage(k0 * accumulation), (0.0, t_end), y0, events=crossing, **opts)
        assert s1.status == 1, "stage 1 must end at the critical density"
        t0 = float(s1.t_events[0][0])
        y0 = s1.y_events[0][0]
        h_c = float(y0[0])
        pieces.append((s1, 0.0, t0))
    s2 = solve_ivp(stage(k1 * math.sqrt(accumulation)), (t0, t_end), y0, **opts)
    assert s2.success
    pieces.append((s2, t0, t_end))
    ts, hs, rhos = [], [], []
    for sol, a, b in pieces:
        t = np.linspace(a, b, 400)
        y = sol.sol(t)
        ts.append(t)
        hs.append(y[0])
        rhos.append(y[1])
    return np.concatenate(ts), np.concatenate(hs), np.concatenate(rhos), h_c


SITES = [  # invented site parameters spanning polar conditions
    (-55.0, 0.025, 320.0),    # cold high plateau, very low accumulation
    (-40.0, 0.045, 350.0),    # the Tallow Dome demo site
    (-30.0, 0.20, 380.0),     # warmer, wetter
    (-18.0, 0.60, 420.0),     # warm coastal dome
    (-25.0, 0.30, 600.0),     # surface already above 550 kg/m^3 (stage 2 from the surface)
]


@pytest.mark.parametrize("temperature,accumulation,surface_density", SITES)
def test_herron_langway_against_integrated_rate_equations(temperature, accumulation,
                                                          surface_density):
    t, h, rho_ref, h_c = _integrate_rate_equations(temperature, accumulation, surface_density,
                                                   t_end=3000.0)
    ours = herron_langway_density(-h, temperature, accumulation, surface_density)
    # independent reference: scipy solve_ivp (DOP853, rtol 1e-10) of the rate equations in
    # time; the closed form is their exact solution in depth, so 1e-8 relative suffices
    np.testing.assert_allclose(ours, rho_ref * 1000.0, rtol=1e-8)
    # critical depth: the event where the integrated parcel reaches 0.55 Mg/m^3
    assert herron_langway_critical_depth(temperature, surface_density) == pytest.approx(
        h_c, rel=1e-8, abs=1e-8)


def test_rate_constants_match_the_formulas():
    # Arrhenius forms of Herron & Langway (1980) as written out in this test (from memory)
    for temp in (-50.0, -30.0, -10.0):
        k0, k1 = herron_langway_rate_constants(temp)
        assert (k0, k1) == pytest.approx(_rates(temp), rel=1e-14)
    k0, k1 = herron_langway_rate_constants(np.array([-50.0, -10.0]))
    assert k0.shape == (2,) and k1[1] > k1[0]


def test_herron_langway_limits_and_shapes():
    # definition of the model: the surface density at z = 0, 550 kg/m^3 at the critical
    # depth, the ice density far below, monotone in between
    hc = herron_langway_critical_depth(-35.0, 360.0)
    assert herron_langway_density(0.0, -35.0, 0.1, 360.0) == pytest.approx(360.0, rel=1e-14)
    assert herron_langway_density(-hc, -35.0, 0.1, 360.0) == pytest.approx(
        HL_CRITICAL_DENSITY, rel=1e-12)
    assert herron_langway_density(-3000.0, -35.0, 0.1, 360.0) == pytest.approx(917.0, rel=1e-9)
    z = -np.linspace(0.0, 300.0, 601)
    rho = herron_langway_density(z, -35.0, 0.1, 360.0)
    assert rho.shape == z.shape and np.all(np.diff(rho) > 0)
    # stage 1 does not depend on accumulation (its rate in time is proportional to A)
    above = z[z > -hc]
    np.testing.assert_allclose(herron_langway_density(above, -35.0, 0.01, 360.0),
                               herron_langway_density(above, -35.0, 1.0, 360.0), rtol=1e-14)
    # broadcasting over site parameters
    grid = herron_langway_density(-50.0, np.array([-40.0, -30.0]), 0.1, 350.0)
    assert grid.shape == (2,) and grid[1] > grid[0]
    assert isinstance(herron_langway_density(-10.0, -30.0, 0.1, 350.0), float)
    assert herron_langway_critical_depth(-30.0, 600.0) == 0.0


# --------------------------------------------------------------------------- profiles

@needs_tabulated
def test_herron_langway_profile_samples_the_model():
    prof = herron_langway_profile(-40.0, 0.045, 350.0, z_bottom=-150.25, spacing=0.5)
    assert prof.z[0] == 0.0 and prof.z[-1] == -150.25
    assert np.allclose(np.diff(prof.z)[:-1], -0.5)
    np.testing.assert_allclose(prof.n, kovacs_index(herron_langway_density(prof.z, -40.0,
                                                                           0.045, 350.0)),
                               rtol=0, atol=1e-15)
    assert prof.index(0.0) == pytest.approx(kovacs_index(350.0), abs=1e-15)
    assert "Herron" in prof.info["citation"]
    loo = herron_langway_profile(-40.0, 0.045, 350.0, relation="looyenga",
                                 ice_permittivity=3.17)
    assert loo.n[-1] < math.sqrt(3.17)
    # deep enough for the density to reach the ice density in double precision: the
    # index then stays constant (tests/test_nonmonotone_profiles.py checks the value)
    deep = herron_langway_profile(-20.0, 0.03, 350.0, z_bottom=-4000.0)
    assert deep.n[-1] == deep.n[-2] == deep.index(-4500.0)


def _read_core():
    with open(CORE, encoding="utf-8") as fh:
        rows = [line.strip() for line in fh if line.strip() and not line.startswith("#")]
    assert rows[0] == "depth_m,density_kg_m3"
    data = np.array([[float(v) for v in row.split(",")] for row in rows[1:]])
    return data[:, 0], data[:, 1]


def test_demo_core_is_invented_and_well_formed():
    with open(CORE, encoding="utf-8") as fh:
        head = fh.readline()
    assert head.startswith("#") and "INVENTED" in head and "Tallow Dome" in head
    depth, rho = _read_core()
    assert depth[0] == 0.0 and depth[-1] == 120.0
    steps = np.diff(depth)
    assert np.all(steps[depth[:-1] < 60.0] == 1.0) and np.all(steps[depth[:-1] >= 60.0] == 2.0)
    assert np.all(np.diff(rho) > 0.0)
    assert 330.0 < rho[0] < 370.0 and 895.0 < rho[-1] < 917.0
    # the stage-1/stage-2 change of slope near 550 kg/m^3, 15-20 m down
    cross = depth[np.searchsorted(rho, 550.0)]
    assert 15.0 <= cross <= 20.0
    slope_above = np.polyfit(depth[(depth >= 5) & (depth <= 14)],
                             np.log(rho / (917.0 - rho))[(depth >= 5) & (depth <= 14)], 1)[0]
    slope_below = np.polyfit(depth[(depth >= 25) & (depth <= 60)],
                             np.log(rho / (917.0 - rho))[(depth >= 25) & (depth <= 60)], 1)[0]
    assert slope_below < 0.8 * slope_above


@needs_tabulated
def test_index_profile_from_core():
    depth, rho = _read_core()
    prof = index_profile_from_density(-depth, rho, info={"name": "tallow-dome-core"})
    np.testing.assert_allclose(prof.index(-depth), kovacs_index(rho), rtol=0, atol=1e-12)
    assert prof.info["name"] == "tallow-dome-core"
    assert prof.info["density_relation"] == "kovacs"
    # a density inversion is accepted: the index follows it
    inv = index_profile_from_density([0.0, -1.0, -2.0], [400.0, 390.0, 420.0])
    np.testing.assert_allclose(inv.n, kovacs_index(np.array([400.0, 390.0, 420.0])),
                               rtol=0, atol=1e-15)
    with pytest.raises(ValueError, match="density"):
        index_profile_from_density([0.0, -1.0, -2.0], [400.0, 410.0])
