"""Profiles: construction checks, index values, the YAML format and its errors."""

import math

import numpy as np
import pytest

import firnray
from firnray.medium.profiles import exponential_index


def test_index_values_and_air():
    prof = firnray.ExponentialProfile(1.78, 1.35, 40.0)
    # definition of the profile (closed form): n(0) = n_surface, n(-inf) = n_deep
    assert prof.index(0.0) == pytest.approx(1.35)
    assert prof.index(-40.0) == pytest.approx(1.78 - 0.43 / math.e)
    assert prof.index(-4000.0) == pytest.approx(1.78)
    assert prof.index(10.0) == 1.0
    z = np.array([-100.0, -1.0, 0.0, 5.0])
    out = prof.index(z)
    assert out.shape == z.shape and out[-1] == 1.0
    assert isinstance(prof.index(-3.0), float)


@pytest.mark.parametrize("kwargs,word", [
    (dict(n_deep=1.78, n_surface=1.35, scale_depth=0.0), "scale_depth"),
    (dict(n_deep=1.78, n_surface=1.35, scale_depth=-3.0), "scale_depth"),
    (dict(n_deep=1.30, n_surface=1.35, scale_depth=40.0), "n_deep"),
    (dict(n_deep=1.78, n_surface=0.9, scale_depth=40.0), "n_surface"),
    (dict(n_deep=1.78, n_surface=1.35, scale_depth=40.0, n_air=0.5), "n_air"),
    (dict(n_deep=float("nan"), n_surface=1.35, scale_depth=40.0), "n_deep"),
    (dict(n_deep=1.78, n_surface=1.35, scale_depth=float("inf")), "scale_depth"),
    (dict(n_deep="abc", n_surface=1.35, scale_depth=40.0), "n_deep"),
])
def test_invalid_profile_names_argument(kwargs, word):
    with pytest.raises(ValueError, match=word):
        firnray.ExponentialProfile(**kwargs)


def test_bundled_profiles_load_with_citations():
    names = firnray.bundled_profiles()
    assert "demo-dry-firn" in names and len(names) >= 3
    for name in names:
        prof = firnray.load_profile(name)
        assert prof.info["name"] == name
        assert prof.info["source"]["citation"]
        assert 1.0 < prof.n_surface < prof.n_deep < 1.8


def test_load_from_path(tmp_path):
    f = tmp_path / "p.yaml"
    f.write_text("firnray_profile: 1\nname: t\nkind: exponential\n"
                 "parameters: {n_deep: 1.78, n_surface: 1.4, scale_depth_m: 30}\n"
                 "valid_range_m: [-1000, 0]\n")
    prof = firnray.load_profile(f)
    assert prof.scale_depth == 30.0 and prof.z_min == -1000.0


@pytest.mark.parametrize("body,key", [
    ("firnray_profile: 1\nname: t\nkind: exponential\nparameters: {n_deep: 1.78, n_surface: 1.4}\n",
     "parameters.scale_depth_m"),
    ("firnray_profile: 1\nname: t\nkind: spline\nparameters: {}\n", "kind"),
    ("firnray_profile: 1\nname: t\nkind: exponential\nparameters: {n_deep: 1.78, "
     "n_surface: 1.4, scale_depth_m: 30, colour: 3}\n", "parameters.colour"),
    ("firnray_profile: 1\nname: t\nkind: exponential\nparameters: {n_deep: 1.78, "
     "n_surface: 1.4, scale_depth_m: fast}\n", "parameters.scale_depth_m"),
    ("firnray_profile: 2\nname: t\nkind: exponential\nparameters: {}\n", "firnray_profile"),
    ("firnray_profile: 1\nname: t\nkind: exponential\nextra: 1\nparameters: {}\n", "extra"),
    ("firnray_profile: 1\nname: t\nkind: exponential\nparameters: {n_deep: 1.78, "
     "n_surface: 1.4, scale_depth_m: 30}\nvalid_range_m: [0, -10]\n", "valid_range_m"),
    ("firnray_profile: 1\nname: t\nkind: exponential\nparameters: {n_deep: 1.2, "
     "n_surface: 1.4, scale_depth_m: 30}\n", "parameters"),
])
def test_yaml_errors_name_file_and_key(tmp_path, body, key):
    f = tmp_path / "bad.yaml"
    f.write_text(body)
    with pytest.raises(ValueError) as err:
        firnray.load_profile(f)
    assert str(f) in str(err.value) and f"'{key}'" in str(err.value)


def test_missing_profile_and_bad_yaml(tmp_path):
    with pytest.raises(ValueError, match="no bundled profile"):
        firnray.load_profile("no-such-profile")
    f = tmp_path / "broken.yaml"
    f.write_text("a: [1, 2\n")
    with pytest.raises(ValueError, match="not valid YAML"):
        firnray.load_profile(f)


def test_function_form_matches_class():
    z = np.linspace(-300, 0, 7)
    assert np.array_equal(exponential_index(z, 1.78, 1.35, 40.0),
                          firnray.ExponentialProfile(1.78, 1.35, 40.0).index(z))
