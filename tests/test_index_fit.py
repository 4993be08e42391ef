"""Fits of index data: exponential and piecewise exponential.

Recovering parameters from seeded synthetic data is a SELF-CONSISTENCY check
(the data come from the model being fitted).  The uncertainties are checked
against outside estimates: scipy.optimize.curve_fit's covariance computed
independently in the test (its own optimiser, its own Jacobian, its own model
code), and the scatter of the fitted values over 200 seeded noise
realisations (Monte Carlo; Gaussian least-squares theory, common practice:
for a model linear near the optimum the scatter equals the covariance).
"""

import math
import os
import warnings

import numpy as np
import pytest
from scipy import stats
from scipy.optimize import curve_fit

from firnray.medium.index_fit import (
    IndexFit, exponential_model, fit_exponential_index, fit_piecewise_exponential_index,
    piecewise_exponential_model)

TRUE_EXP = {"n_deep": 1.78, "n_surface": 1.35, "scale_depth": 40.0}
Z = np.linspace(-150.0, 0.0, 76)
SIGMA = 0.002

TRUE_PW = {"n_surface": 1.33, "breaks": [-15.3], "n_deep": [1.70, 1.79],
           "scale_depth": [12.0, 45.0]}


def _exp_ref(z, n_deep, n_surface, scale_depth):
    """The exponential model written out independently of firnray."""
    return n_deep - (n_deep - n_surface) * np.exp(z / scale_depth)


def _piecewise_ref(z, n_surface, breaks, n_deep, scale_depth):
    """The piecewise exponential model point by point (a loop, no firnray code)."""
    out = np.empty(len(z))
    for i, zi in enumerate(z):
        top, n_top = 0.0, n_surface
        for k in range(len(n_deep)):
            bottom = breaks[k] if k < len(breaks) else -math.inf
            if zi >= bottom:
                out[i] = n_deep[k] - (n_deep[k] - n_top) * math.exp((zi - top) / scale_depth[k])
                break
            n_top = n_deep[k] - (n_deep[k] - n_top) * math.exp((bottom - top) / scale_depth[k])
            top = bottom
    return out


def _exp_data(seed):
    rng = np.random.default_rng(seed)
    return _exp_ref(Z, **TRUE_EXP) + rng.normal(0.0, SIGMA, Z.size)


def _pw_data(seed):
    rng = np.random.default_rng(seed)
    return _piecewise_ref(Z, **TRUE_PW) + rng.normal(0.0, SIGMA, Z.size)


# --------------------------------------------------------------------------- models

def test_models_against_written_out_formulas():
    np.testing.assert_allclose(exponential_model(Z, 1.78, 1.35, 40.0),
                               _exp_ref(Z, 1.78, 1.35, 40.0), rtol=0, atol=1e-15)
    z = np.concatenate([Z, [-15.3, -15.3 - 1e-9, -80.0, -400.0]])
    for params in (TRUE_PW, {"n_surface": 1.3, "breaks": [-10.0, -40.0],
                             "n_deep": [1.6, 1.75, 1.782], "scale_depth": [8.0, 20.0, 50.0]}):
        np.testing.assert_allclose(piecewise_exponential_model(z, **params),
                                   _piecewise_ref(z, **params), rtol=0, atol=1e-14)
    # continuity at a break (the definition of the model)
    left = piecewise_exponential_model(-15.3 + 1e-10, **TRUE_PW)
    right = piecewise_exponential_model(-15.3 - 1e-10, **TRUE_PW)
    assert abs(left - right) < 1e-10
    assert isinstance(piecewise_exponential_model(-3.0, **TRUE_PW), float)


# --------------------------------------------------------------------------- exponential

def test_exponential_fit_recovers_parameters():
    # self-consistency: data drawn from the model with seeded noise (seed 11)
    fit = fit_exponential_index(Z, _exp_data(11), sigma=SIGMA)
    assert isinstance(fit, IndexFit) and fit.converged
    assert fit.free == ("n_deep", "n_surface", "scale_depth") and fit.dof == Z.size - 3
    for name, true in TRUE_EXP.items():
        assert abs(fit.parameters[name] - true) < 4.0 * fit.uncertainties[name], name
    # chi^2 statistics (common practice): chi2 within the central 99.8 % of chi^2(dof)
    assert stats.chi2.ppf(0.001, fit.dof) < fit.chi2 < stats.chi2.ppf(0.999, fit.dof)
    np.testing.assert_allclose(fit.residuals, _exp_data(11) - fit.evaluate(Z), atol=1e-15)


@pytest.mark.parametrize("weighted", [True, False])
def test_exponential_covariance_matches_curve_fit(weighted):
    n = _exp_data(5)
    fit = fit_exponential_index(Z, n, sigma=SIGMA if weighted else None)
    # independent estimate: scipy.optimize.curve_fit (Levenberg-Marquardt, its own
    # finite-difference Jacobian) with absolute_sigma for measured errors, and the
    # reduced-chi^2 scaling (absolute_sigma=False) without them
    popt, pcov = curve_fit(_exp_ref, Z, n, p0=[1.7, 1.4, 30.0],
                           sigma=np.full(Z.size, SIGMA) if weighted else None,
                           absolute_sigma=weighted, xtol=1e-14, ftol=1e-14, maxfev=20000)
    ours = np.array([fit.parameters[p] for p in ("n_deep", "n_surface", "scale_depth")])
    np.testing.assert_allclose(ours, popt, rtol=1e-7)
    np.testing.assert_allclose(fit.covariance, pcov, rtol=1e-4, atol=0)
    assert fit.sigma_given is weighted


def test_exponential_uncertainties_match_monte_carlo_scatter():
    # independent estimate: the scatter of the fitted values over 200 seeded noise
    # realisations; the standard deviation of 200 draws has a relative standard error of
    # 1/sqrt(2*199) = 5 %, so 15 % (3 standard errors) is the tolerance; the mean pull is
    # within 3/sqrt(200) = 0.21 of zero (0.25 used)
    names = ("n_deep", "n_surface", "scale_depth")
    reference = fit_exponential_index(Z, _exp_ref(Z, **TRUE_EXP), sigma=SIGMA)
    values = np.array([[fit_exponential_index(Z, _exp_data(1000 + i), sigma=SIGMA)
                        .parameters[p] for p in names] for i in range(200)])
    predicted = np.array([reference.uncertainties[p] for p in names])
    scatter = values.std(axis=0, ddof=1)
    np.testing.assert_allclose(scatter, predicted, rtol=0.15)
    pulls = (values - np.array([TRUE_EXP[p] for p in names])) / predicted
    assert np.all(np.abs(pulls.mean(axis=0)) < 0.25)


def test_exponential_fit_with_fixed_deep_index():
    n = _exp_data(21)
    fit = fit_exponential_index(Z, n, sigma=SIGMA, n_deep=1.78)
    assert fit.free == ("n_surface", "scale_depth") and fit.fixed == ("n_deep",)
    assert fit.parameters["n_deep"] == 1.78 and fit.uncertainties["n_deep"] == 0.0
    assert fit.dof == Z.size - 2 and fit.covariance.shape == (2, 2)
    # independent estimate: curve_fit with n_deep held at 1.78
    popt, pcov = curve_fit(lambda z, ns, s: _exp_ref(z, 1.78, ns, s), Z, n, p0=[1.4, 30.0],
                           sigma=np.full(Z.size, SIGMA), absolute_sigma=True,
                           xtol=1e-14, ftol=1e-14)
    np.testing.assert_allclose([fit.parameters["n_surface"], fit.parameters["scale_depth"]],
                               popt, rtol=1e-7)
    np.testing.assert_allclose(fit.covariance, pcov, rtol=1e-4)


def test_exponential_profile_and_summary():
    fit = fit_exponential_index(Z, _exp_data(3), sigma=SIGMA)
    prof = fit.profile()
    assert prof.n_deep == fit.parameters["n_deep"]
    assert prof.scale_depth == fit.parameters["scale_depth"]
    np.testing.assert_allclose(prof.index(Z), fit.evaluate(Z), rtol=0, atol=1e-15)
    text = fit.summary()
    assert isinstance(text, str)
    for name in ("n_deep", "n_surface", "scale_depth", "chi2", "degrees of freedom"):
        assert name in text
    fixed = fit_exponential_index(Z, _exp_data(3), n_deep=1.78).summary()
    assert "(fixed)" in fixed and "unweighted" in fixed


# --------------------------------------------------------------------------- piecewise

PW_NAMES = ("n_surface", "n_deep_0", "n_deep_1", "scale_depth_0", "scale_depth_1")


def test_piecewise_fit_recovers_parameters():
    # self-consistency: data drawn from the model with seeded noise (seed 7)
    fit = fit_piecewise_exponential_index(Z, _pw_data(7), TRUE_PW["breaks"], sigma=SIGMA)
    assert fit.converged and fit.free == PW_NAMES and fit.dof == Z.size - 5
    true = dict(zip(PW_NAMES, [TRUE_PW["n_surface"], *TRUE_PW["n_deep"],
                               *TRUE_PW["scale_depth"]]))
    for name, value in true.items():
        assert abs(fit.parameters[name] - value) < 4.0 * fit.uncertainties[name], name
    assert fit.parameters["break_0"] == -15.3 and fit.fixed == ("break_0",)
    assert stats.chi2.ppf(0.001, fit.dof) < fit.chi2 < stats.chi2.ppf(0.999, fit.dof)


def test_piecewise_covariance_matches_curve_fit():
    n = _pw_data(8)
    fit = fit_piecewise_exponential_index(Z, n, TRUE_PW["breaks"], sigma=SIGMA)

    def model(z, ns, nd0, nd1, s0, s1):
        return _piecewise_ref(z, ns, TRUE_PW["breaks"], [nd0, nd1], [s0, s1])

    # independent estimate: curve_fit on the loop evaluator of this test
    popt, pcov = curve_fit(model, Z, n, p0=[1.34, 1.72, 1.78, 10.0, 40.0],
                           sigma=np.full(Z.size, SIGMA), absolute_sigma=True,
                           xtol=1e-14, ftol=1e-14, maxfev=50000)
    np.testing.assert_allclose([fit.parameters[p] for p in PW_NAMES], popt, rtol=1e-6)
    np.testing.assert_allclose(fit.covariance, pcov, rtol=1e-3)


def test_piecewise_uncertainties_match_monte_carlo_scatter():
    # as the exponential Monte Carlo check: 200 seeded realisations, 15 % on the scatter
    reference = fit_piecewise_exponential_index(Z, _piecewise_ref(Z, **TRUE_PW),
                                                TRUE_PW["breaks"], sigma=SIGMA)
    values = np.array([[fit_piecewise_exponential_index(Z, _pw_data(5000 + i),
                                                        TRUE_PW["breaks"], sigma=SIGMA)
                        .parameters[p] for p in PW_NAMES] for i in range(200)])
    predicted = np.array([reference.uncertainties[p] for p in PW_NAMES])
    np.testing.assert_allclose(values.std(axis=0, ddof=1), predicted, rtol=0.15)


def test_piecewise_fit_with_free_break():
    n = _pw_data(9)
    fit = fit_piecewise_exponential_index(Z, n, [-20.0], sigma=SIGMA, fit_breaks=True)
    assert fit.free == PW_NAMES + ("break_0",) and fit.dof == Z.size - 6
    # self-consistency: the break is recovered from a start 4.7 m away
    assert abs(fit.parameters["break_0"] - (-15.3)) < 4.0 * fit.uncertainties["break_0"]

    def model(z, ns, nd0, nd1, s0, s1, b):
        return _piecewise_ref(z, ns, [b], [nd0, nd1], [s0, s1])

    # independent estimate: curve_fit with the break HEIGHT as a parameter (firnray fits
    # gaps and maps the covariance back; this checks that map)
    popt, pcov = curve_fit(model, Z, n, p0=[fit.parameters[p] for p in fit.free],
                           sigma=np.full(Z.size, SIGMA), absolute_sigma=True,
                           xtol=1e-14, ftol=1e-14, maxfev=50000)
    np.testing.assert_allclose([fit.parameters[p] for p in fit.free], popt, rtol=1e-6)
    # entries that vanish in exact arithmetic (the free break decouples the deep piece
    # from the shallow one) are compared against the scale sigma_i sigma_j
    scale = np.sqrt(np.outer(np.diag(pcov), np.diag(pcov)))
    np.testing.assert_allclose(np.diag(fit.covariance), np.diag(pcov), rtol=1e-3)
    np.testing.assert_allclose(fit.covariance / scale, pcov / scale, rtol=0, atol=1e-3)


def test_piecewise_profile_matches_fit():
    general = pytest.importorskip("firnray.medium.general_profiles")
    fit = fit_piecewise_exponential_index(Z, _pw_data(4), TRUE_PW["breaks"], sigma=SIGMA)
    prof = fit.profile()
    assert isinstance(prof, general.PiecewiseExponentialProfile)
    np.testing.assert_allclose(prof.index(Z), fit.evaluate(Z), rtol=0, atol=1e-13)
    assert "break_0" in fit.summary() and "(fixed)" in fit.summary()


def test_three_pieces_and_no_break():
    params = {"n_surface": 1.3, "breaks": [-10.0, -40.0], "n_deep": [1.6, 1.75, 1.782],
              "scale_depth": [8.0, 20.0, 50.0]}
    rng = np.random.default_rng(2)
    z = np.linspace(-200.0, 0.0, 201)
    n = _piecewise_ref(z, **params) + rng.normal(0.0, 5e-4, z.size)
    fit = fit_piecewise_exponential_index(z, n, params["breaks"], sigma=5e-4)
    assert fit.dof == z.size - 7 and len(fit.breaks) == 2
    assert abs(fit.parameters["n_deep_2"] - 1.782) < 4 * fit.uncertainties["n_deep_2"]
    # no break: the same as the exponential fit
    single = fit_piecewise_exponential_index(Z, _exp_data(1), [], sigma=SIGMA)
    expo = fit_exponential_index(Z, _exp_data(1), sigma=SIGMA)
    assert single.parameters["scale_depth_0"] == pytest.approx(
        expo.parameters["scale_depth"], rel=1e-8)


# --------------------------------------------------------------------------- errors

@pytest.mark.parametrize("call,word", [
    (lambda: fit_exponential_index(Z, Z[:-1]), "n"),
    (lambda: fit_exponential_index(-Z, _exp_data(1)), "z"),
    (lambda: fit_exponential_index(Z, _exp_data(1), sigma=0.0), "sigma"),
    (lambda: fit_exponential_index(Z, _exp_data(1), sigma=np.ones(3)), "sigma"),
    (lambda: fit_exponential_index([0.0, -1.0, -2.0], [1.3, 1.4, 1.5]), "z"),
    (lambda: fit_exponential_index(Z, np.where(Z < -50, np.nan, 1.5)), "n"),
    (lambda: fit_exponential_index(Z, _exp_data(1), n_deep="deep"), "n_deep"),
    (lambda: fit_piecewise_exponential_index(Z, _pw_data(1), [-10.0, -5.0]), "breaks"),
    (lambda: fit_piecewise_exponential_index(Z, _pw_data(1), [5.0]), "breaks"),
    (lambda: fit_piecewise_exponential_index(Z, _pw_data(1), [-160.0]), "breaks"),
])
def test_bad_input_names_argument(call, word):
    with pytest.raises(ValueError, match=word):
        call()


def test_fit_never_prints(capsys):
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        fit_piecewise_exponential_index(Z, _pw_data(1), [-15.0], sigma=SIGMA).summary()
    out = capsys.readouterr()
    assert out.out == "" and out.err == ""


def test_unconstrained_parameters_warn():
    from firnray.errors import FirnrayWarning
    z = np.zeros(6)   # every datum at the surface: n_deep and scale_depth are free to drift
    with pytest.warns(FirnrayWarning, match="singular"):
        fit = fit_exponential_index(z, np.full(6, 1.35) + np.arange(6) * 1e-4)
    assert np.all(np.isinf(fit.covariance))


def test_demo_core_index_fits():
    # the invented Tallow Dome core through the Kovacs relation, fitted with two pieces
    # broken at the depth where the core passes 550 kg/m^3 (a usage check, not an
    # outside one: the fitted curve follows the core's index to within its scatter)
    from firnray.medium.firn_density import kovacs_index
    path = os.path.join(os.path.dirname(os.path.dirname(os.path.abspath(__file__))),
                        "firnray", "data", "cores", "tallow-dome-core.csv")
    rows = [line for line in open(path, encoding="utf-8") if not line.startswith("#")][1:]
    depth, rho = np.array([[float(v) for v in r.split(",")] for r in rows]).T
    n = kovacs_index(rho)
    one = fit_exponential_index(-depth, n)
    two = fit_piecewise_exponential_index(-depth, n, [-16.5])
    assert two.chi2 < one.chi2
    assert np.sqrt(np.mean(two.residuals ** 2)) < 0.01
