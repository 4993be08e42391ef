"""The signal budget: each factor against its definition, for every ray kind."""

import math
import warnings

import numpy as np
import pytest

import firnray
from firnray.medium.reflectors import Reflector
from firnray.signal.budget import polarisation_basis, signal_budget, signal_budget_many
from firnray.signal.fresnel import fresnel

PROF = firnray.load_profile("demo-dry-firn")
UNIFORM = firnray.ExponentialProfile(1.78, 1.78, 40.0)
F = [100.0, 300.0, 900.0]


def test_uniform_direct_budget_is_free_space_plus_absorption():
    """Closed form (common practice): flux falls as 1/R^2 and the field as
    exp(-R/L) along a straight ray in uniform ice; no interface, no Fresnel."""
    ray = firnray.find_rays(UNIFORM, (0, -500), (700, -100))[0]
    bud = signal_budget(ray, F, 800.0)
    r = math.hypot(700, 400)
    assert bud.spreading_db == pytest.approx(20 * math.log10(r), rel=1e-12)
    assert np.allclose(bud.attenuation_db, 20 * math.log10(math.e) * r / 800.0, rtol=1e-9)
    assert bud.fresnel_db_s == 0.0 and bud.interaction == "none"
    assert np.allclose(abs(bud.field_factor_s), math.exp(-r / 800.0) / r, rtol=1e-9)
    assert np.allclose(bud.total_db_p, bud.attenuation_db + bud.spreading_db)


def test_surface_bounce_total_internal_reflection_and_partial():
    """Beyond the critical angle (n_air/n_surface) the bounce loses no power
    (|r| = 1); a steep bounce loses R < 1 (Fresnel, Hecht, Optics, ch. 4)."""
    shallow = [r for r in firnray.find_rays(PROF, (0, -300), (600, -100))
               if r.kind == "reflected"]
    steep = [r for r in firnray.find_rays(PROF, (0, -800), (50, -100)) if r.kind == "reflected"]
    assert shallow and shallow[0].invariant > PROF.n_air    # beyond the critical angle
    tir = signal_budget(shallow[0], F, 1000.0)
    assert tir.total_internal_reflection and tir.fresnel_db_s == pytest.approx(0.0, abs=1e-9)
    part = signal_budget(steep[0], F, 1000.0)
    inc = math.degrees(math.asin(steep[0].invariant / PROF.n_surface))
    coeff = fresnel(PROF.n_surface, 1.0, inc)
    assert part.fresnel_db_s == pytest.approx(-10 * math.log10(coeff.R_s))
    assert part.fresnel_db_p == pytest.approx(-10 * math.log10(coeff.R_p))
    assert np.allclose(part.field_factor_s / abs(part.field_factor_s),
                       coeff.r_s / abs(coeff.r_s))


def test_transmitted_ray_uses_power_transmission():
    ray = firnray.find_rays(PROF, (0, 30), (200, -100))[0]
    bud = signal_budget(ray, F, 1000.0)
    inc = math.degrees(math.asin(ray.invariant / PROF.n_air))
    coeff = fresnel(PROF.n_air, PROF.n_surface, inc)
    assert bud.interaction == "transmission"
    assert bud.fresnel_db_p == pytest.approx(-10 * math.log10(coeff.T_p))
    # the air leg does not absorb
    ice = ray.path_length - 30.0 / math.cos(math.radians(180.0 - ray.launch_zenith))
    assert bud.absorption[0] == pytest.approx(ice / 1000.0, rel=1e-9)


def test_layer_reflection_factor():
    refl = Reflector(-500.0, amplitude=-0.4)
    ray = [r for r in firnray.find_rays(PROF, (0, -300), (800, -100), reflectors=[refl])
           if r.kind == "layer-reflected"][0]
    bud = signal_budget(ray, F, 1000.0)
    assert bud.fresnel_db_s == pytest.approx(-20 * math.log10(0.4))
    assert np.all(np.real(bud.field_factor_p) < 0)
    water = Reflector(-500.0, n_below=9.0)
    ray = [r for r in firnray.find_rays(PROF, (0, -300), (800, -100), reflectors=[water])
           if r.kind == "layer-reflected"][0]
    bud = signal_budget(ray, F, 1000.0)
    assert 0.0 < bud.fresnel_db_s < 3.0   # a strong contrast reflects most power


def test_caustic_is_capped_and_flagged():
    z_src, z_ant = -150.0, -60.0
    x = firnray.shadow_boundary(PROF, z_ant, z_src) * (1 - 1e-9)
    rays = firnray.find_rays(PROF, (0, z_src), (x, z_ant))
    with pytest.warns(firnray.FirnrayWarning, match="caustic"):
        buds = [signal_budget(r, F, 1000.0, focusing_cap=3.0) for r in rays]
    assert any(b.near_caustic for b in buds)
    assert all(np.isfinite(b.total_db_s).all() and b.focusing <= 3.0 + 1e-12 for b in buds)


def test_basis_is_orthonormal_and_batch_matches_single():
    ray = firnray.find_rays(PROF, (10.0, 5.0, -600.0), (300.0, 400.0, -100.0))[1]
    basis = polarisation_basis(ray)
    for key in ("p_launch", "p_arrival"):
        assert np.dot(basis["s"], basis[key]) == pytest.approx(0.0, abs=1e-12)
        assert np.linalg.norm(basis[key]) == pytest.approx(1.0)
    assert np.dot(basis["p_launch"], ray.launch_direction) == pytest.approx(0.0, abs=1e-12)
    batch = firnray.find_rays_many(PROF, [(0, -600), (0, -300), (0, -30)], (1500, -100))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        many = signal_budget_many(batch, F, 900.0)
    for i in range(3):
        for k, ray in enumerate(batch[i]):
            single = signal_budget(ray, F, 900.0)
            assert np.allclose(many["total_db_s"][i, k], single.total_db_s)
    assert np.isnan(many["total_db_s"][2]).all()
