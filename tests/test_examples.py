"""Every script in examples/ runs (quick mode)."""

import os
import runpy
import sys

import pytest

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
EXAMPLES = sorted(f for f in os.listdir(os.path.join(ROOT, "examples")) if f.endswith(".py"))


@pytest.mark.parametrize("name", EXAMPLES)
def test_example_runs(name, monkeypatch, capsys):
    monkeypatch.setattr(sys, "argv", [name, "--quick"])
    runpy.run_path(os.path.join(ROOT, "examples", name), run_name="__main__")
    assert capsys.readouterr().out.strip()


@pytest.mark.parametrize("name", EXAMPLES)
def test_example_writes_its_figure(name, monkeypatch, capsys, tmp_path):
    png = tmp_path / "figure.png"
    monkeypatch.setattr(sys, "argv", [name, "--quick", "--plot", str(png)])
    monkeypatch.setenv("MPLBACKEND", "Agg")
    runpy.run_path(os.path.join(ROOT, "examples", name), run_name="__main__")
    with open(png, "rb") as fh:
        assert fh.read(8) == b"\x89PNG\r\n\x1a\n"
    import matplotlib.pyplot as plt
    plt.close("all")
