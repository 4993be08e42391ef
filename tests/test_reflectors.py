"""Reflecting layers: the layer-reflected ray against quadrature and the uniform image."""

import math

import mpmath as mp
import pytest

import firnray
from firnray.medium.reflectors import Reflector

PROF = firnray.load_profile("demo-dry-firn")
C = 0.299792458  # m/ns, SI definition


def _quad(b, z1, z2):
    """(X, c T) of a monotone piece by mpmath quadrature of dx/dz = b/w, c dt/dz = n^2/w
    (ray integrals in a stratified medium: common practice)."""
    with mp.workdps(30):
        n = lambda z: mp.mpf(1.78) - mp.mpf(0.43) * mp.e ** (mp.mpf(z) / 40)  # noqa: E731
        bb = mp.mpf(b)
        x = mp.quad(lambda z: bb / mp.sqrt(n(z) ** 2 - bb ** 2), [z1, z2])
        ct = mp.quad(lambda z: n(z) ** 2 / mp.sqrt(n(z) ** 2 - bb ** 2), [z1, z2])
        return float(x), float(ct)


@pytest.mark.parametrize("src,rcv,z_layer", [((0, -300), (800, -100), -500.0),
                                             ((0, -100), (800, -300), -500.0),
                                             ((0, -40), (1500, -150), -420.0),
                                             ((0, -200), (30, -210), -250.0)])
def test_layer_ray_against_quadrature(src, rcv, z_layer):
    rays = firnray.find_rays(PROF, src, rcv, reflectors=[Reflector(z_layer, amplitude=0.5)])
    layer = [r for r in rays if r.kind == "layer-reflected"]
    assert len(layer) == 1 and layer[0].bounce_z == z_layer
    ray = layer[0]
    x1, t1 = _quad(ray.invariant, z_layer, src[1])
    x2, t2 = _quad(ray.invariant, z_layer, rcv[1])
    assert x1 + x2 == pytest.approx(abs(rcv[0] - src[0]), abs=1e-6)
    assert (t1 + t2) / C == pytest.approx(ray.travel_time, abs=1e-3)
    assert ray.launch_zenith > 90.0 and ray.arrival_zenith < 90.0
    pts = ray.path(100)
    assert pts["z"].min() == pytest.approx(z_layer) and pts["x"][-1] == pytest.approx(abs(rcv[0]))
    assert [r.travel_time for r in rays] == sorted(r.travel_time for r in rays)


def test_uniform_image_and_default_off():
    uni = firnray.ExponentialProfile(1.78, 1.78, 40.0)
    ray = [r for r in firnray.find_rays(uni, (0, -300), (800, -100),
                                        reflectors=[Reflector(-500.0, n_below=9.0)])
           if r.kind == "layer-reflected"][0]
    image = math.hypot(800.0, 200.0 + 400.0)   # image of the receiver below the layer
    assert ray.path_length == pytest.approx(image, rel=1e-12)
    assert ray.travel_time == pytest.approx(1.78 * image / C, rel=1e-12)
    assert ray.equivalent_distance == pytest.approx(image, rel=1e-9)
    assert all(r.kind != "layer-reflected" for r in firnray.find_rays(PROF, (0, -300), (800, -100)))
    # a layer above a point gives no bounce
    assert all(r.kind != "layer-reflected" for r in firnray.find_rays(
        PROF, (0, -300), (800, -100), reflectors=[Reflector(-200.0, amplitude=1.0)]))


def test_batch_with_layers_matches_single():
    refl = [Reflector(-600.0, amplitude=0.3), Reflector(-900.0, n_below=9.0)]
    batch = firnray.find_rays_many(PROF, [(0, -300), (0, -700)], (900, -100), reflectors=refl)
    for i, src in enumerate([(0, -300), (0, -700)]):
        single = firnray.find_rays(PROF, src, (900, -100), reflectors=refl)
        assert [r.kind for r in batch[i]] == [r.kind for r in single]
        assert [r.reflector for r in batch[i]] == [r.reflector for r in single]
    assert list(batch.count) == [4, 3]


def test_reflector_checks():
    with pytest.raises(ValueError, match="z must be below"):
        Reflector(5.0, amplitude=0.5)
    with pytest.raises(ValueError, match="exactly one"):
        Reflector(-5.0)
    with pytest.raises(ValueError, match="amplitude"):
        Reflector(-5.0, amplitude=1.5)
    with pytest.raises(ValueError, match="reflectors"):
        firnray.find_rays(PROF, (0, -300), (800, -100), reflectors=[-500.0])
