"""The command line: table, JSON, exit code 2 on bad input."""

import json
import subprocess
import sys

import pytest

import firnray
from firnray.faces.cli import main


def test_rays_table(capsys):
    assert main(["rays", "--source", "0,-600", "--receiver", "1500,-100"]) == 0
    out = capsys.readouterr().out
    assert "direct" in out and "refracted" in out and "time [ns]" in out


def test_rays_json_matches_library(capsys):
    assert main(["rays", "--source", "0,-600", "--receiver", "1500,-100", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    rays = firnray.find_rays(firnray.load_profile(), (0, -600), (1500, -100))
    assert [r["travel_time"] for r in doc["rays"]] == [r.travel_time for r in rays]


@pytest.mark.parametrize("argv", [
    ["rays", "--source", "0,x", "--receiver", "1,-2"],
    ["rays", "--source", "0,-5", "--receiver", "0,-5"],
    ["rays", "--source", "0,-5", "--receiver", "1,-2", "--profile", "nowhere"],
    ["rays", "--source", "0,-5"],
    ["frobnicate"],
])
def test_bad_input_exit_code_2(argv, capsys):
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert err.startswith("firnray: error:") and err.count("\n") == 1


def test_console_script_runs():
    out = subprocess.run([sys.executable, "-m", "firnray.faces.cli", "profiles"],
                         capture_output=True, text=True, check=True).stdout
    assert "demo-dry-firn" in out
