"""Vertex prediction and fits: round trip with pulls, independent mpmath times,
bad input; stations from YAML."""

import json
import os

import numpy as np
import pytest

import firnray
from firnray.studies.station import Station, StationFileError, load_station
from firnray.studies.vertex import fit_vertex, predict_arrivals, simulate_arrivals

HERE = os.path.dirname(os.path.abspath(__file__))
PROF = firnray.load_profile("demo-dry-firn")
STATION = load_station("tallow-dome-demo")


def test_prediction_matches_find_rays_and_adds_delays():
    vertex = (650.0, -250.0, -700.0)
    pred = predict_arrivals(PROF, STATION, vertex, emission_time=1000.0)
    for a, ident in enumerate(STATION.ids):
        rays = firnray.find_rays(PROF, vertex, STATION.positions[a])
        assert pred.count[0, a] == len(rays)
        for k, r in enumerate(rays):
            assert pred.arrival_time[0, a, k] == pytest.approx(
                1000.0 + STATION.delays[a] + r.travel_time, abs=1e-9)
            assert pred.arrival_zenith[0, a, k] == pytest.approx(r.arrival_zenith, abs=1e-9)
        if len(rays) == 2:
            assert pred.dr_delay[0, a] == pytest.approx(rays[1].travel_time - rays[0].travel_time)
    many = predict_arrivals(PROF, STATION, np.array([vertex, (0.0, 900.0, -1200.0)]))
    assert many.arrival_time.shape == (2, len(STATION), 2)


def test_round_trip_pulls_and_coverage():
    """200 seeded events, 1 ns Gaussian noise (outside source: the pulls of a correct
    least-squares fit are standard normal; the 1-sigma interval holds 68.27 % of
    them; the tolerance is 3 binomial standard errors over 600 pulls)."""
    rng = np.random.default_rng(2026)
    pulls, inside = [], []
    n_events = 0
    while n_events < 200:
        r, phi = rng.uniform(250.0, 900.0), rng.uniform(0.0, 2 * np.pi)
        v = np.array([20.0 + r * np.cos(phi), 20.0 + r * np.sin(phi), rng.uniform(-1200.0, -300.0)])
        rows = simulate_arrivals(PROF, STATION, v, 500.0, sigma=1.0, rng=rng)
        if len(rows) < 12:
            continue
        fit = fit_vertex(PROF, STATION, rows, search_box=((v[0] - 400, v[0] + 400),
                                                          (v[1] - 400, v[1] + 400),
                                                          (max(v[2] - 400, -2000), -1.0)))
        assert fit.success
        p = (fit.vertex - v) / fit.sigma[:3]
        pulls.append(p)
        inside.extend(np.abs(p) <= 1.0)
        n_events += 1
    pulls = np.array(pulls)
    assert np.all(np.abs(pulls.mean(axis=0)) < 0.25)
    assert np.all(np.abs(pulls.std(axis=0) - 1.0) < 0.15)
    frac = np.mean(inside)
    se = np.sqrt(0.6827 * (1 - 0.6827) / len(inside))
    assert abs(frac - 0.6827) < 3 * se + 0.02


def test_fit_recovers_independent_mpmath_times():
    """Outside source: arrival times from tests/generators/reference_arrivals.py
    (mpmath quadrature at 32 digits, no firnray code).  Without added noise the
    fit must return the true vertex to well within its 1 ns-resolution."""
    with open(os.path.join(HERE, "data", "reference_arrivals.json"), encoding="utf-8") as fh:
        ref = json.load(fh)
    prof = firnray.ExponentialProfile(**ref["profile"])
    for item in ref["vertices"]:
        rows = [(a["antenna"], ray["arrival_time"], 1.0) for a in item["arrivals"]
                for ray in a["rays"]]
        if len(rows) < 5:
            continue
        v = np.array(item["vertex"])
        fit = fit_vertex(prof, STATION, rows)
        assert fit.chi2 < 1e-6
        assert np.all(np.abs(fit.vertex - v) < 0.01 * np.maximum(fit.sigma[:3], 1.0))
        assert fit.emission_time == pytest.approx(ref["emission_time_ns"], abs=1e-3)


def test_unknown_pulse_order_and_single_pulses():
    v = np.array([500.0, 400.0, -900.0])
    rows = simulate_arrivals(PROF, STATION, v, 0.0, sigma=0.5)
    rng = np.random.default_rng(1)
    rows = [rows[i] for i in rng.permutation(len(rows))]       # order carries no ray label
    single = [r for i, r in enumerate(rows) if i % 3]           # some antennas see one pulse
    fit = fit_vertex(PROF, STATION, single)
    assert np.linalg.norm(fit.vertex - v) < 0.1 and fit.chi2 < 1e-6


def test_bad_input():
    rows = simulate_arrivals(PROF, STATION, (500.0, 400.0, -900.0), 0.0, sigma=1.0)
    with pytest.raises(ValueError, match="not in station"):
        fit_vertex(PROF, STATION, rows + [("Z9", 10.0, 1.0)])
    with pytest.raises(ValueError, match="time"):
        fit_vertex(PROF, STATION, rows[:-1] + [(rows[-1][0], float("nan"), 1.0)])
    with pytest.raises(ValueError, match="sigma"):
        fit_vertex(PROF, STATION, rows[:-1] + [(rows[-1][0], 5.0, 0.0)])
    with pytest.raises(ValueError, match="at least 4"):
        fit_vertex(PROF, STATION, rows[:3])
    with pytest.raises(ValueError, match="antennas"):
        Station({})
    with pytest.raises(ValueError, match="finite"):
        Station({"a": (0.0, float("nan"), -5.0)})


def test_station_file_errors(tmp_path):
    f = tmp_path / "s.yaml"
    f.write_text("firnray_station: 1\nname: x\nantennas:\n  - {id: a, position_m: [0, 0]}\n")
    with pytest.raises(StationFileError) as err:
        load_station(f)
    assert str(f) in str(err.value) and "antennas[0].position_m" in str(err.value)
    f.write_text("firnray_station: 1\nname: x\nantennas: []\n")
    with pytest.raises(StationFileError, match="'antennas'"):
        load_station(f)
    f.write_text("firnray_station: 1\nname: x\ncolour: red\nantennas:\n"
                 "  - {id: a, position_m: [0, 0, -5]}\n")
    with pytest.raises(StationFileError, match="'colour'"):
        load_station(f)
    assert len(STATION) == 12 and STATION.delays[0] == 210.0 and STATION.groups[-1] == "surface"
