"""Plots return their axes and write valid PNG files; the study commands run."""

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import pytest  # noqa: E402

import firnray  # noqa: E402
from firnray.faces import plots  # noqa: E402
from firnray.faces.cli import main  # noqa: E402

PNG = b"\x89PNG\r\n\x1a\n"
PROF = firnray.load_profile("demo-dry-firn")


def test_plot_functions_take_and_return_axes(tmp_path):
    fig, (ax1, ax2, ax3, ax4) = plt.subplots(1, 4)
    rays = firnray.find_rays(PROF, (0.0, -300.0), (900.0, -100.0))
    got, prof_ax = plots.plot_rays(PROF, rays, ax=ax1, profile_ax=ax2)
    assert got is ax1 and prof_ax is ax2 and len(ax1.lines) >= 2
    x, z = np.linspace(0, 2000, 50), np.linspace(-800, -1, 40)
    reach, boundary = firnray.reachability_map(PROF, -100.0, x, z)
    assert plots.plot_shadow_map(x, z, reach, boundary, ax=ax3, antenna_z=-100.0) is ax3
    grid = firnray.dr_delays(PROF, -100.0, x, z)
    assert plots.plot_delay_contours(grid, ax=ax4) is ax4
    fig.savefig(tmp_path / "f.png")
    assert (tmp_path / "f.png").read_bytes()[:8] == PNG
    plt.close("all")


def test_shadow_and_delay_commands(tmp_path, capsys):
    png = tmp_path / "map.png"
    assert main(["shadow", "--antenna-z", "-100", "--source-z", "-1000:-10:5",
                 "--distance", "0:3000:60", "--plot", str(png)]) == 0
    out = capsys.readouterr().out
    assert "shadow boundary" in out and png.read_bytes()[:8] == PNG
    value = firnray.shadow_boundary(PROF, -100.0, -1000.0)
    assert f"{value:.2f}" in out
    png = tmp_path / "dr.png"
    assert main(["delays", "--antenna-z", "-100", "--distance", "0:2000:21",
                 "--source-z", "-1500:-200:14", "--plot", str(png)]) == 0
    assert png.read_bytes()[:8] == PNG
    assert main(["delays", "--antenna-z", "-100", "--invert", "150", "--at-z", "-600"]) == 0
    assert "distance" in capsys.readouterr().out


def test_table_commands(tmp_path, capsys):
    folder = tmp_path / "t"
    assert main(["table", "build", str(folder), "--antenna-z", "-100",
                 "--source-z", "-500:-10:11", "--distance", "0:1000:11", "--chunk", "4"]) == 0
    assert "interpolation error" in capsys.readouterr().out
    assert main(["table", "info", str(folder)]) == 0
    assert '"firnray-lookup-table"' in capsys.readouterr().out
    assert main(["table", "info", str(tmp_path)]) == 2


@pytest.mark.parametrize("argv", [["shadow", "--antenna-z", "-100", "--source-z", "1:2"],
                                  ["delays", "--antenna-z", "-100", "--invert", "5"],
                                  ["vertex", "predict", "--vertex", "1,2,-300",
                                   "--profile", "nowhere"]])
def test_study_commands_bad_input(argv, capsys):
    assert main(argv) == 2
    assert capsys.readouterr().err.startswith("firnray: error:")


@pytest.mark.parametrize("name", firnray.bundled_profiles())
def test_study_commands_on_every_bundled_profile(name, tmp_path, capsys):
    assert main(["shadow", "--profile", name, "--antenna-z", "-60", "--source-z",
                 "-400:-5:4"]) == 0
    assert main(["delays", "--profile", name, "--antenna-z", "-60", "--distance", "0:800:5",
                 "--source-z", "-400:-100:4"]) == 0
    assert main(["table", "build", str(tmp_path / name), "--profile", name, "--antenna-z", "-60",
                 "--distance", "0:800:9", "--source-z", "-400:-5:9", "--chunk", "5"]) == 0
    assert capsys.readouterr().out.count("\n") > 10


DEMO = "firnray/data/examples"


def test_vertex_and_profile_fit_commands(tmp_path, capsys):
    import os
    root = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
    demo = os.path.join(root, DEMO)
    assert main(["vertex", "predict", "--vertex", "640,-310,-820", "--json"]) == 0
    doc = __import__("json").loads(capsys.readouterr().out)
    assert len(doc["pulses"]) >= 12
    png = tmp_path / "res.png"
    assert main(["vertex", "fit", "--times", os.path.join(demo, "demo-arrivals.csv"),
                 "--plot", str(png)]) == 0
    out = capsys.readouterr().out
    assert "chi2" in out and png.read_bytes()[:8] == PNG
    # the demo file was simulated for (640, -310, -820) m with 1 ns noise
    fit_line = [line for line in out.splitlines() if line.strip().startswith("x [m]")][0]
    assert abs(float(fit_line.split()[2]) - 640.0) < 40.0
    png = tmp_path / "val.png"
    assert main(["vertex", "validate", "--csv", os.path.join(demo, "demo-vertex-fits.csv"),
                 "--plot", str(png)]) == 0
    assert "resolution" in capsys.readouterr().out and png.read_bytes()[:8] == PNG
    assert main(["profile-fit", "--delays", os.path.join(demo, "demo-pulser-delays.csv"),
                 "--json"]) == 0
    fitdoc = __import__("json").loads(capsys.readouterr().out)
    assert abs(fitdoc["parameters"]["scale_depth"] - 40.0) < 3 * fitdoc["sigma"]["scale_depth"]


def test_vertex_fit_bad_timing_file(tmp_path, capsys):
    f = tmp_path / "t.csv"
    f.write_text("antenna,time_ns,sigma_ns\nA1-top,100.0,1.0\nZZ-9,200.0,1.0\n"
                 "A1-mid,nan,1.0\nA1-bot,5,1\n")
    assert main(["vertex", "fit", "--times", str(f)]) == 2
    err = capsys.readouterr().err
    assert "line 4" in err and "time_ns" in err
    f.write_text("antenna,time_ns,sigma_ns\nA1-top,100.0,1.0\nZZ-9,200.0,1.0\n"
                 "A1-mid,120,1.0\nA1-bot,5,1\n")
    assert main(["vertex", "fit", "--times", str(f)]) == 2
    assert "ZZ-9" in capsys.readouterr().err


def test_budget_command(capsys):
    assert main(["budget", "--source", "0,-300", "--receiver", "600,-100",
                 "--freq", "100,300"]) == 0
    out = capsys.readouterr().out
    assert "reflected ray" in out and "total s [dB]" in out
    assert main(["budget", "--source", "0,30", "--receiver", "200,-100", "--freq", "150",
                 "--attenuation-length", "900", "--json"]) == 0
    doc = __import__("json").loads(capsys.readouterr().out)
    ray = doc["rays"][0]
    assert ray["kind"] == "transmitted" and ray["fresnel_db_p"] > 0
    assert main(["budget", "--source", "0,-300", "--receiver", "600,-100", "--freq", "x"]) == 2
