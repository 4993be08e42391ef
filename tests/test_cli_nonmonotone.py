"""Command line and figures with a non-monotone profile file (an invented index table with
a dip at 30 m depth): the shadow command reports the boundary of rays without a duct and
the cells lit only through the duct, its map marks them, the budget command shows the
caustic fields, and table commands report the ray slots.  Internal checks: the printed
numbers are those of the library calls."""

import json

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import pytest  # noqa: E402

import firnray  # noqa: E402
from firnray.faces import plots  # noqa: E402
from firnray.faces.cli import main  # noqa: E402

PNG = b"\x89PNG\r\n\x1a\n"


@pytest.fixture(scope="module")
def dip_file(tmp_path_factory):
    depth = np.arange(0.0, 121.0, 1.0)
    n = 1.78 - 0.43 * np.exp(-depth / 40.0) - 0.04 * np.exp(-((depth - 30.0) / 3.0) ** 2)
    path = tmp_path_factory.mktemp("profiles") / "dip.yaml"
    path.write_text("firnray_profile: 1\nname: invented-dip\nkind: index_table\n"
                    "parameters:\n"
                    f"  depth_m: [{', '.join(f'{d:g}' for d in depth)}]\n"
                    f"  n: [{', '.join(f'{v:.12f}' for v in n)}]\n")
    return str(path)


def test_shadow_command_marks_duct_only_cells(dip_file, tmp_path, capsys):
    png = tmp_path / "map.png"
    assert main(["shadow", "--profile", dip_file, "--antenna-z", "-25", "--source-z",
                 "-35:-15:5", "--distance", "0:1000:21", "--plot", str(png),
                 "--map-heights", "11"]) == 0
    out = capsys.readouterr().out
    assert "non-monotone index" in out and "only via a duct" in out
    assert png.read_bytes()[:8] == PNG
    prof = firnray.load_profile(dip_file)
    z = np.linspace(-35.0, -15.0, 5)
    boundary = firnray.shadow_boundary(prof, -25.0, z)
    imap = firnray.illumination_map(prof, -25.0, np.linspace(0.0, 1000.0, 21), z)
    assert imap.duct_only[2, -1]             # the source at -25 m, 1 km away
    row = next(line for line in out.splitlines() if line.strip().startswith("-25.00"))
    cells = row.split()
    assert cells[1] == f"{boundary[2]:.2f}" and cells[2] == "1000.00" and cells[3] == "1000.00"
    assert main(["shadow", "--profile", dip_file, "--antenna-z", "-25",
                 "--min-focusing", "-1"]) == 2


def test_shadow_map_draws_the_duct_only_cells():
    x = np.linspace(0.0, 100.0, 5)
    z = np.linspace(-30.0, -20.0, 4)
    lit = np.ones((4, 5), bool)
    lit[0, 3:] = False
    duct = np.zeros((4, 5), bool)
    duct[2, 2:] = True
    fig, ax = plt.subplots()
    assert plots.plot_shadow_map(x, z, lit, np.full(4, 50.0), ax=ax, duct_only=duct) is ax
    hatches = [h for c in ax.collections for h in (getattr(c, "hatches", None) or
                                                    [c.get_hatch()]) if h]
    assert "////" in hatches
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    assert "lit only through a duct" in labels and "boundary of rays without a duct" in labels
    plt.close(fig)


def test_budget_command_shows_caustic_fields(dip_file, capsys):
    assert main(["budget", "--profile", dip_file, "--source", "0,-24", "--receiver",
                 "300,-25", "--freq", "100,300", "--attenuation-length", "800"]) == 0
    out = capsys.readouterr().out
    assert "spreading derivative" in out and "turning point(s)" in out
    assert main(["budget", "--profile", dip_file, "--source", "0,-24", "--receiver",
                 "300,-25", "--json", "--attenuation-length", "800"]) == 0
    doc = json.loads(capsys.readouterr().out)
    kinds = [r["kind"] for r in doc["rays"]]
    assert "ducted" in kinds
    for r in doc["rays"]:
        assert {"near_caustic", "focusing_capped", "spreading_derivative_per_rad",
                "turning_points", "surface_reflections"} <= set(r)


def test_table_commands_report_slots(dip_file, tmp_path, capsys):
    folder = tmp_path / "t"
    assert main(["table", "build", str(folder), "--profile", dip_file, "--antenna-z", "-25",
                 "--source-z", "-27:-23:3", "--distance", "100:300:3", "--chunk", "2"]) == 0
    out = capsys.readouterr().out
    slots = firnray.open_table(folder).slots
    assert slots > 2 and f"{slots} ray slots" in out
    assert main(["table", "info", str(folder)]) == 0
    info = json.loads(capsys.readouterr().out)
    assert info["version"] == 2 and info["slots"] == slots and info["max_rays"] is None
    assert "lower_turning_z" in info["quantities"]


def test_rays_command_shows_turning_points_and_reflections(dip_file, capsys):
    """Internal check: the printed counts and lower turning heights are the library's."""
    assert main(["rays", "--profile", dip_file, "--source", "0,-25",
                 "--receiver", "200,-26"]) == 0
    out = capsys.readouterr().out
    assert "lower turn [m]" in out and "surface refl." in out
    rays = firnray.find_rays(firnray.load_profile(dip_file), (0.0, -25.0), (200.0, -26.0))
    rows = [line.split() for line in out.splitlines() if line.split()[:1]
            and line.split()[0] in ("direct", "refracted", "reflected", "ducted")]
    assert len(rows) == len(rays) and any(r.kind == "ducted" for r in rays)
    for row, ray in zip(rows, rays):
        assert row[0] == ray.kind
        assert int(row[-2]) == ray.turning_points and int(row[-1]) == ray.surface_reflections
    assert main(["rays", "--profile", dip_file, "--source", "0,-25", "--receiver", "200,-26",
                 "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert [r["turning_points"] for r in doc["rays"]] == [r.turning_points for r in rays]
