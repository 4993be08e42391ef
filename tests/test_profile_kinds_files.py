"""Profile files of every kind, and the ``firnray profile`` command."""

import json

import numpy as np
import pytest

import firnray
from firnray.errors import ProfileFileError
from firnray.faces.cli import main


def write(tmp_path, text, name="p.yaml"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return str(path)


HEAD = "firnray_profile: 1\nname: test\n"


def test_piecewise_file(tmp_path):
    path = write(tmp_path, HEAD + "kind: piecewise_exponential\nparameters:\n"
                 "  n_surface: 1.35\n  breaks_m: [-15.0]\n  n_deep: 1.78\n"
                 "  scale_depth_m: [9.0, 40.0]\n")
    prof = firnray.load_profile(path)
    ref = firnray.PiecewiseExponentialProfile(1.35, [-15.0], 1.78, [9.0, 40.0])
    assert isinstance(prof, firnray.PiecewiseExponentialProfile)
    np.testing.assert_array_equal(prof.index([-5.0, -50.0]), ref.index([-5.0, -50.0]))


def test_index_table_inline_and_csv(tmp_path):
    inline = write(tmp_path, HEAD + "kind: index_table\nparameters:\n"
                   "  depth_m: [0, 10, 30, 80]\n  n: [1.35, 1.5, 1.65, 1.77]\n")
    (tmp_path / "t.csv").write_text("# invented test table\ndepth_m,n\n0,1.35\n10,1.5\n"
                                    "30,1.65\n80,1.77\n", encoding="utf-8")
    from_csv = write(tmp_path, HEAD + "kind: index_table\nparameters:\n  csv: t.csv\n",
                     name="c.yaml")
    a, b = firnray.load_profile(inline), firnray.load_profile(from_csv)
    assert isinstance(a, firnray.TabulatedProfile)
    np.testing.assert_array_equal(a.index([-5.0, -40.0]), b.index([-5.0, -40.0]))


def test_density_table_and_densification_files(tmp_path):
    dens = write(tmp_path, HEAD + "kind: density_table\nparameters:\n"
                 "  depth_m: [0, 20, 60, 120]\n  density_kg_m3: [350, 550, 800, 910]\n"
                 "  relation: looyenga\n  ice_permittivity: 3.15\n")
    prof = firnray.load_profile(dens)
    assert prof.index(-120.0) == pytest.approx(firnray.looyenga_index(910.0), abs=1e-15)
    hl = write(tmp_path, HEAD + "kind: densification\nparameters:\n  model: herron_langway\n"
               "  temperature_c: -40\n  accumulation_m_we_per_yr: 0.05\n"
               "  surface_density_kg_m3: 350\n  bottom_depth_m: 150\n  spacing_m: 1.0\n",
               name="h.yaml")
    prof = firnray.load_profile(hl)
    want = firnray.kovacs_index(firnray.herron_langway_density(-75.0, -40.0, 0.05, 350.0))
    assert prof.index(-75.0) == pytest.approx(want, abs=1e-12)


@pytest.mark.parametrize("body, key", [
    ("kind: index_table\nparameters:\n  depth_m: [0, 10]\n", "parameters.n"),
    ("kind: index_table\nparameters:\n  depth_m: [0, 10]\n  n: [1.3, 1.4, 1.5]\n",
     "parameters.n"),
    ("kind: index_table\nparameters:\n  csv: missing.csv\n", "cannot read"),
    ("kind: density_table\nparameters:\n  depth_m: [0, 10]\n  density_kg_m3: [300, 400]\n"
     "  relation: magic\n", "parameters.relation"),
    ("kind: density_table\nparameters:\n  depth_m: [0, 10]\n  density_kg_m3: [300, 400]\n"
     "  ice_permittivity: 3.1\n", "parameters.ice_permittivity"),
    ("kind: densification\nparameters:\n  model: other\n  temperature_c: -40\n"
     "  accumulation_m_we_per_yr: 0.05\n  surface_density_kg_m3: 350\n", "parameters.model"),
    ("kind: piecewise_exponential\nparameters:\n  n_surface: 1.35\n  breaks_m: -15\n"
     "  n_deep: 1.78\n  scale_depth_m: 9\n", "parameters.breaks_m"),
    ("kind: index_table\nparameters:\n  depth_m: [0, 10]\n  n: [1.3, 1.4]\n  extra: 1\n",
     "parameters.extra"),
    ("kind: index_table\nparameters:\n  depth_m: [0, 10]\n  n: [1.5, 0.9]\n", "parameters.n[1]"),
])
def test_file_errors_name_file_and_key(tmp_path, body, key):
    path = write(tmp_path, HEAD + body)
    with pytest.raises(ProfileFileError) as err:
        firnray.load_profile(path)
    assert path in str(err.value) and key in str(err.value)


def test_csv_error_names_line_and_column(tmp_path):
    (tmp_path / "t.csv").write_text("depth_m,n\n0,1.35\n10,abc\n", encoding="utf-8")
    path = write(tmp_path, HEAD + "kind: index_table\nparameters:\n  csv: t.csv\n")
    with pytest.raises(ProfileFileError, match=r"t.csv: line 3: column 'n'"):
        firnray.load_profile(path)


def test_bundled_core_profile_is_invented_and_loads():
    prof = firnray.load_profile("tallow-dome-core")
    assert "INVENTED" in prof.info["description"]
    assert isinstance(prof, firnray.TabulatedProfile)
    assert 1.28 < prof.n_surface < 1.32 and prof.index(-120.0) > 1.76


def test_profile_command_prints_grid_fit_and_plot(tmp_path, capsys):
    png = tmp_path / "p.png"
    assert main(["profile", "tallow-dome-core", "--depth", "0:100:11", "--fit", "--json",
                 "--plot", str(png)]) == 0
    out = capsys.readouterr().out
    doc = json.loads(out[:out.rindex("}") + 1])
    prof = firnray.load_profile("tallow-dome-core")
    np.testing.assert_allclose(doc["n"], prof.index(-np.linspace(0, 100, 11)), rtol=0, atol=0)
    fit = firnray.fit_exponential_index(prof.z, prof.n)
    for name in ("n_deep", "n_surface", "scale_depth"):
        assert doc["fit"]["parameters"][name] == pytest.approx(fit.parameters[name], rel=1e-12)
        assert doc["fit"]["uncertainties"][name] > 0
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_profile_command_bad_input(capsys):
    assert main(["profile", "no-such-profile"]) == 2
    assert main(["profile", "demo-dry-firn", "--depth", "-5:10:3"]) == 2
