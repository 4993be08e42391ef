"""Firn-profile fit from calibration-pulser D/R delays."""

import numpy as np
import pytest

import firnray
from firnray.studies.profile_fit import (PulserDelays, delay_chi2, fit_profile_to_delays,
                                         simulate_pulser_delays)
from firnray.studies.station import load_station

STATION = load_station("tallow-dome-demo")
TRUE = firnray.ExponentialProfile(1.78, 1.35, 40.0)


def _pulser_data(seed, sigma=0.5):
    pulsers, antennas = [], []
    for depth in np.arange(-20.0, -201.0, -20.0):
        for pos in STATION.positions:
            pulsers.append((300.0, 150.0, depth))
            antennas.append(pos)
    return simulate_pulser_delays(TRUE, pulsers, antennas, sigma, np.random.default_rng(seed))


def test_recovers_parameters_within_uncertainties():
    """Simulated delays (seeded 0.5 ns noise) with known parameters: the fit lands
    within 3 sigma of the truth, chi2/ndof near 1 (chi-square statistics: common
    practice), and a deliberately wrong profile is much worse."""
    data = _pulser_data(7)
    fit = fit_profile_to_delays(data, firnray.ExponentialProfile(1.78, 1.42, 52.0))
    assert fit.success
    truth = np.array([TRUE.n_surface, TRUE.scale_depth])
    assert np.all(np.abs(fit.values - truth) < 3 * fit.sigma)
    assert 0.6 < fit.chi2 / fit.ndof < 1.5
    assert -1.0 <= fit.correlation[0, 1] <= 1.0
    wrong = firnray.ExponentialProfile(1.78, 1.30, 35.0)
    assert delay_chi2(wrong, data) > fit.chi2 + 100.0
    assert delay_chi2(fit.profile, data) == pytest.approx(fit.chi2)
    assert any("scale_depth" in line for line in fit.summary())


def test_three_free_parameters_and_pulls():
    pulls = []
    for seed in range(6):
        fit = fit_profile_to_delays(_pulser_data(100 + seed, sigma=0.3), TRUE,
                                    free=("n_deep", "n_surface", "scale_depth"))
        truth = np.array([TRUE.n_deep, TRUE.n_surface, TRUE.scale_depth])
        pulls.append((fit.values - truth) / fit.sigma)
    assert np.all(np.abs(np.array(pulls)) < 4.0)


def test_bad_input():
    data = _pulser_data(1)
    with pytest.raises(ValueError, match="colour"):
        fit_profile_to_delays(data, TRUE, free=("colour",))
    with pytest.raises(ValueError, match="sigma"):
        PulserDelays([(0, 0, -10)], [(5, 0, -20)], [3.0], 0.0)
    with pytest.raises(ValueError, match="delay must be finite"):
        PulserDelays([(0, 0, -10)], [(5, 0, -20)], [float("nan")], 1.0)
    with pytest.raises(ValueError, match="cannot constrain"):
        fit_profile_to_delays(PulserDelays([(0, 0, -10)], [(5, 0, -20)], [3.0], 1.0), TRUE)
