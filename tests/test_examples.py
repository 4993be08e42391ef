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
