"""Reconstruction validation: recovered bias and spread, pulls, coverage, vertex CSV files, plots.

Every sample is drawn from a seeded numpy generator, so every test is
deterministic.  Tolerances are multiples of the estimator's standard error
for the sample size (derivations beside each test); with a fixed seed a
test either always passes or always fails, and a 5-standard-error band
means a fresh seed would fail with probability below 1e-6 (3 standard
errors: 0.3 %).
"""

import json
import math

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import pytest  # noqa: E402
import scipy.stats  # noqa: E402
from hypothesis import given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402
from hypothesis.extra.numpy import arrays  # noqa: E402

from firnray.errors import FirnrayWarning  # noqa: E402
from firnray.faces import plots  # noqa: E402
from firnray.studies import reconstruction as rec  # noqa: E402
from firnray.studies.reconstruction import (  # noqa: E402
    CHI2_3DOF_1SIGMA,
    GAUSS_1SIGMA,
    ReconstructionReport,
    VertexSample,
    central_interval_half_width,
    mad_sigma,
    read_vertex_csv,
    validate_reconstruction,
    write_vertex_csv,
)

PNG = b"\x89PNG\r\n\x1a\n"
STATION = np.array([20.0, 20.0, -170.0])
BIAS = np.array([0.5, -1.0, 2.0])        # [m]
SIGMA = np.array([2.0, 3.0, 5.0])        # [m]
N_BIG = 20000
P_LO, P_HI = 0.5 - GAUSS_1SIGMA / 2, 0.5 + GAUSS_1SIGMA / 2


def assert_within(got, expect, tol):
    """|got - expect| <= tol element by element (tol may differ per coordinate)."""
    got, expect, tol = np.broadcast_arrays(np.asarray(got, float), np.asarray(expect, float),
                                           np.asarray(tol, float))
    bad = np.abs(got - expect) > tol
    assert not np.any(bad), f"got {got}, expected {expect} +- {tol}"


def gaussian_sample(n, seed, bias=BIAS, sigma=SIGMA):
    """True vertices scattered around the invented station, fits = true + bias + N(0, sigma)."""
    rng = np.random.default_rng(seed)
    true = STATION + rng.uniform(-150.0, 150.0, (n, 3))
    fitted = true + bias + rng.normal(size=(n, 3)) * sigma
    return true, fitted


def heteroscedastic_sample(n, seed, sigma_scale=1.0):
    """Per-event sigma in [1, 6] m; residuals drawn with it; the sigma returned is x scale."""
    rng = np.random.default_rng(seed)
    true = STATION + rng.uniform(-150.0, 150.0, (n, 3))
    sigma = rng.uniform(1.0, 6.0, (n, 3))
    fitted = true + rng.normal(size=(n, 3)) * sigma
    return true, fitted, sigma * sigma_scale


def half_width_standard_error(sigma, n):
    """Asymptotic standard error of the central-68.27 % half width for Gaussian data.

    Sample quantiles q_a, q_b (a < b) of a density f are asymptotically normal
    with cov = a (1 - b) / (n f(q_a) f(q_b)) (the large-sample theory of order
    statistics: common practice).  For the half width (q_b - q_a) / 2 at
    a, b = 0.1587, 0.8413 and f(+-sigma) = phi(1) / sigma this gives
    about 0.96 sigma / sqrt(n).
    """
    f = scipy.stats.norm.pdf(1.0) / sigma
    var_q = P_LO * P_HI / (n * f * f)
    cov = P_LO * P_LO / (n * f * f)
    return 0.5 * math.sqrt(2 * var_q - 2 * cov)


# ---------------------------------------------------------------------------
# constants and the quantile helpers
# ---------------------------------------------------------------------------

def test_constants_against_scipy():
    # Gaussian 1-sigma content and the chi-square(3) quantile: scipy.stats as the reference.
    assert GAUSS_1SIGMA == pytest.approx(scipy.stats.norm.cdf(1) - scipy.stats.norm.cdf(-1),
                                         rel=1e-14)
    assert GAUSS_1SIGMA == pytest.approx(0.6827, abs=5e-5)          # the quoted 68.27 %
    assert CHI2_3DOF_1SIGMA == pytest.approx(scipy.stats.chi2.ppf(GAUSS_1SIGMA, 3), rel=1e-12)
    assert CHI2_3DOF_1SIGMA == pytest.approx(3.5267, abs=5e-5)      # the value in the brief


def test_half_width_matches_numpy_percentile_and_scipy_scoreatpercentile():
    # Independent references: numpy.percentile and scipy.stats.scoreatpercentile (both linear).
    x = np.random.default_rng(1).standard_t(3, 501)
    ref_np = 0.5 * (np.percentile(x, 100 * P_HI) - np.percentile(x, 100 * P_LO))
    ref_sp = 0.5 * (scipy.stats.scoreatpercentile(x, 100 * P_HI)
                    - scipy.stats.scoreatpercentile(x, 100 * P_LO))
    got = central_interval_half_width(x)
    assert isinstance(got, float)
    assert got == pytest.approx(ref_np, rel=1e-12)
    assert got == pytest.approx(ref_sp, rel=1e-12)
    # other coverages, e.g. the central 90 %
    ref90 = 0.5 * (np.percentile(x, 95) - np.percentile(x, 5))
    assert central_interval_half_width(x, coverage=0.9) == pytest.approx(ref90, rel=1e-12)


def test_half_width_axis_gives_array_and_exact_small_case():
    # 0..100: linear quantiles at 15.87 % and 84.13 % are 15.87 and 84.13 -> half width 34.13.
    x = np.arange(101.0)
    assert central_interval_half_width(x) == pytest.approx(100 * GAUSS_1SIGMA / 2, rel=1e-12)
    two = np.column_stack([x, 2 * x])
    got = central_interval_half_width(two, axis=0)
    assert isinstance(got, np.ndarray) and got.shape == (2,)
    np.testing.assert_allclose(got, [100 * GAUSS_1SIGMA / 2, 100 * GAUSS_1SIGMA], rtol=1e-12)


def test_half_width_of_a_gaussian_is_sigma():
    # For N(0, sigma) the half width estimates sigma (scipy.stats.norm.ppf(0.8413) = 1);
    # tolerance: 5 asymptotic standard errors (half_width_standard_error).
    sigma, n = 3.0, 100000
    x = np.random.default_rng(2).normal(0.0, sigma, n)
    assert scipy.stats.norm.ppf(P_HI) == pytest.approx(1.0, rel=1e-12)
    assert central_interval_half_width(x) == pytest.approx(
        sigma, abs=5 * half_width_standard_error(sigma, n))


def test_mad_sigma_against_scipy():
    # scipy.stats.median_abs_deviation(scale="normal") uses 1/Phi^-1(3/4) = 1.482602...; we use
    # the conventional 1.4826, so they agree to 2e-6 relative.
    x = np.random.default_rng(3).laplace(1.0, 2.0, 999)
    ref = scipy.stats.median_abs_deviation(x, scale="normal")
    assert mad_sigma(x) == pytest.approx(ref, rel=2e-6)
    assert isinstance(mad_sigma(x), float)


@settings(derandomize=True, max_examples=60, deadline=None)
@given(arrays(float, st.integers(2, 60), elements=st.floats(-1e3, 1e3)),
       st.floats(-1e3, 1e3), st.floats(0.01, 100.0))
def test_half_width_is_shift_invariant_and_scales(x, shift, scale):
    # Properties of any quantile-based spread: unchanged by a shift, proportional to |scale|,
    # and never more than half the full range.
    base = central_interval_half_width(x)
    tol = 1e-9 * (1.0 + np.max(np.abs(x)) + abs(shift)) * max(1.0, scale)
    assert central_interval_half_width(x + shift) == pytest.approx(base, abs=tol)
    assert central_interval_half_width(-scale * x) == pytest.approx(scale * base, abs=tol)
    assert 0.0 <= base <= 0.5 * (np.max(x) - np.min(x)) + tol


def test_quantile_helpers_reject_bad_input():
    with pytest.raises(ValueError, match="coverage"):
        central_interval_half_width([1.0, 2.0], coverage=1.5)
    with pytest.raises(ValueError, match="values"):
        central_interval_half_width([1.0, np.nan])
    with pytest.raises(ValueError, match="values"):
        mad_sigma([])


# ---------------------------------------------------------------------------
# bias and resolution from Gaussian samples
# ---------------------------------------------------------------------------

def test_gaussian_bias_and_spreads_recovered():
    true, fitted = gaussian_sample(N_BIG, seed=10)
    report = validate_reconstruction(true, fitted)
    assert isinstance(report, ReconstructionReport)
    assert report.residual.shape == (N_BIG, 3)
    np.testing.assert_allclose(report.residual, fitted - true)
    # mean: standard error sigma / sqrt(N); 5 of them
    assert_within(report.bias, BIAS, 5 * SIGMA / math.sqrt(N_BIG))
    # median of a Gaussian: standard error sqrt(pi / 2) sigma / sqrt(N) (order statistics)
    assert_within(report.median, BIAS, 5 * math.sqrt(math.pi / 2) * SIGMA / math.sqrt(N_BIG))
    # robust resolution: 5 asymptotic standard errors of the half width
    for j in range(3):
        assert report.resolution[j] == pytest.approx(
            SIGMA[j], abs=5 * half_width_standard_error(SIGMA[j], N_BIG))
    # standard deviation: standard error sigma / sqrt(2N)
    assert_within(report.std, SIGMA, 5 * SIGMA / math.sqrt(2 * N_BIG))
    # rms about zero -> sqrt(sigma^2 + b^2); mean(r^2) has variance (2 s^4 + 4 b^2 s^2) / N,
    # and the delta method divides its standard error by 2 rms
    expect_rms = np.sqrt(SIGMA ** 2 + BIAS ** 2)
    var_mean_square = (2 * SIGMA ** 4 + 4 * BIAS ** 2 * SIGMA ** 2) / N_BIG
    se_rms = np.sqrt(var_mean_square) / (2 * expect_rms)
    assert_within(report.rms, expect_rms, 5 * se_rms)
    # MAD sigma: asymptotic efficiency 0.3675 relative to the standard deviation (robust-
    # statistics textbooks) -> standard error sigma / sqrt(2 N 0.3675) = 1.166 sigma / sqrt(N)
    assert_within(report.mad_sigma, SIGMA, 5 * SIGMA / math.sqrt(2 * N_BIG * 0.3675))
    # the statistical error of the bias it reports is sigma / sqrt(N) (to 5 % at this N)
    np.testing.assert_allclose(report.bias_error, SIGMA / math.sqrt(N_BIG), rtol=0.05)
    assert not report.has_pulls and report.pull is None and report.coverage_3d is None


def test_resolution_is_robust_to_outliers_and_rms_is_not():
    true, fitted = gaussian_sample(2000, seed=11, bias=np.zeros(3), sigma=np.full(3, 2.0))
    fitted[:20] += 500.0  # 1 % failed fits, far away
    report = validate_reconstruction(true, fitted)
    assert np.all(report.resolution < 2.3) and np.all(report.mad_sigma < 2.3)
    assert np.all(report.rms > 40.0)


def test_horizontal_and_3d_distance_error():
    true = np.zeros((2, 3))
    fitted = np.array([[3.0, 4.0, 12.0], [-6.0, 8.0, 0.0]])  # 3-4-5 and 6-8-10 triangles
    report = validate_reconstruction(true, fitted)
    np.testing.assert_allclose(report.horizontal_distance_error, [5.0, 10.0])
    np.testing.assert_allclose(report.distance_error, [13.0, 10.0])
    assert report.horizontal_distance_error.shape == (2,)


# ---------------------------------------------------------------------------
# pulls and coverage
# ---------------------------------------------------------------------------

def test_pulls_of_correct_sigma_have_unit_width_and_nominal_coverage():
    n = N_BIG
    true, fitted, sigma = heteroscedastic_sample(n, seed=20)
    report = validate_reconstruction(true, fitted, sigma)
    assert report.has_pulls and report.pull.shape == (n, 3)
    np.testing.assert_allclose(report.pull, (fitted - true) / sigma)
    # pulls are N(0, 1): mean within 5 / sqrt(N), width within 5 half-width standard errors
    np.testing.assert_allclose(report.pull_mean, 0.0, atol=5 / math.sqrt(n))
    np.testing.assert_allclose(report.pull_width, 1.0, atol=5 * half_width_standard_error(1.0, n))
    # coverage: binomial with p = 0.6827, standard error sqrt(p (1 - p) / N); 3 of them
    se = math.sqrt(GAUSS_1SIGMA * (1 - GAUSS_1SIGMA) / n)
    assert report.coverage_error == pytest.approx(se)
    np.testing.assert_allclose(report.coverage, GAUSS_1SIGMA, atol=3 * se)
    # 3-D: sum of three squared independent unit Gaussians is chi-square(3)
    assert report.coverage_3d == pytest.approx(GAUSS_1SIGMA, abs=3 * se)


def test_small_sample_coverage_within_binomial_errors():
    # 200 events: the binomial standard error is 0.033; 3 of them still hold.
    n = 200
    true, fitted, sigma = heteroscedastic_sample(n, seed=21)
    report = validate_reconstruction(true, fitted, sigma)
    se = math.sqrt(GAUSS_1SIGMA * (1 - GAUSS_1SIGMA) / n)
    np.testing.assert_allclose(report.coverage, GAUSS_1SIGMA, atol=3 * se)
    assert report.coverage_3d == pytest.approx(GAUSS_1SIGMA, abs=3 * se)


def test_wrong_sigma_shows_in_pulls_and_coverage():
    # Quoted sigma twice too large: pull width 0.5, coverage P(|g| <= 2) = 0.954 (scipy.stats).
    n = 5000
    true, fitted, sigma = heteroscedastic_sample(n, seed=22, sigma_scale=2.0)
    report = validate_reconstruction(true, fitted, sigma)
    expect = scipy.stats.norm.cdf(2) - scipy.stats.norm.cdf(-2)
    se = math.sqrt(expect * (1 - expect) / n)
    np.testing.assert_allclose(report.coverage, expect, atol=3 * se)
    np.testing.assert_allclose(report.pull_width, 0.5, atol=5 * half_width_standard_error(0.5, n))
    expect_3d = scipy.stats.chi2.cdf(4 * CHI2_3DOF_1SIGMA, 3)
    assert report.coverage_3d == pytest.approx(expect_3d, abs=3 * math.sqrt(
        expect_3d * (1 - expect_3d) / n))


def test_sigma_may_be_a_float_or_a_row():
    true, fitted = gaussian_sample(100, seed=23)
    full = validate_reconstruction(true, fitted, np.broadcast_to(SIGMA, (100, 3)))
    row = validate_reconstruction(true, fitted, SIGMA)
    np.testing.assert_array_equal(full.pull, row.pull)
    one = validate_reconstruction(true, fitted, 2.0)
    np.testing.assert_allclose(one.pull, (fitted - true) / 2.0)


# ---------------------------------------------------------------------------
# argument checks
# ---------------------------------------------------------------------------

@pytest.mark.parametrize("kwargs, word", [
    (dict(true=np.zeros((5, 2)), fitted=np.zeros((5, 2))), "true"),
    (dict(true=np.zeros((5, 3)), fitted=np.zeros((4, 3))), "fitted"),
    (dict(true=np.zeros((5, 3)), fitted=np.zeros((5, 3)), sigma=np.ones((5, 2))), "sigma"),
    (dict(true=np.zeros((5, 3)), fitted=np.zeros((5, 3)), sigma=-1.0), "sigma"),
    (dict(true=np.zeros((1, 3)), fitted=np.zeros((1, 3))), "at least 2"),
    (dict(true=np.zeros((5, 3)), fitted=np.full((5, 3), np.nan)), "fitted"),
    (dict(true=np.zeros((5, 3))), "fitted"),
])
def test_validate_names_the_bad_argument(kwargs, word):
    with pytest.raises(ValueError, match=word):
        validate_reconstruction(**kwargs)


def test_vertex_sample_checks_shapes():
    with pytest.raises(ValueError, match="true"):
        VertexSample(["a"], np.zeros(3), np.zeros(3))
    with pytest.raises(ValueError, match="fitted"):
        VertexSample(["a", "b"], np.zeros((2, 3)), np.zeros((3, 3)))
    with pytest.raises(ValueError, match="sigma"):
        VertexSample(["a", "b"], np.zeros((2, 3)), np.zeros((2, 3)), np.ones(3))
    with pytest.raises(ValueError, match="events"):
        VertexSample(["a"], np.zeros((2, 3)), np.zeros((2, 3)))
    sample = VertexSample(None, np.zeros((2, 3)), np.ones((2, 3)))
    assert sample.events == ["0", "1"] and len(sample) == 2 and sample.sigma is None
    with pytest.raises(ValueError, match="fitted and sigma must be omitted"):
        validate_reconstruction(sample, np.ones((2, 3)))


# ---------------------------------------------------------------------------
# report output
# ---------------------------------------------------------------------------

def test_summary_and_as_dict():
    true, fitted, sigma = heteroscedastic_sample(300, seed=30)
    report = validate_reconstruction(VertexSample([f"e{i}" for i in range(300)], true, fitted,
                                                  sigma))
    lines = report.summary()
    assert isinstance(lines, list) and all(isinstance(s, str) and "\n" not in s for s in lines)
    text = "\n".join(lines)
    for word in ("bias", "resolution", "pull width", "coverage", "independent", "horizontal"):
        assert word in text
    d = report.as_dict(per_event=True)
    back = json.loads(json.dumps(d))  # plain types only
    assert back["n_events"] == 300
    assert back["resolution"]["z"] == pytest.approx(report.resolution[2])
    assert back["coverage_3d"] == pytest.approx(report.coverage_3d)
    assert back["events"][0] == "e0" and len(back["residual"]) == 300
    bare = validate_reconstruction(true, fitted).as_dict()
    json.dumps(bare)
    assert bare["pull_width"] is None and "residual" not in bare
    assert "no uncertainties" in "\n".join(validate_reconstruction(true, fitted).summary())


# ---------------------------------------------------------------------------
# CSV files
# ---------------------------------------------------------------------------

HEADER = "event,x_true,y_true,z_true,x_fit,y_fit,z_fit"


def test_csv_round_trip(tmp_path):
    true, fitted, sigma = heteroscedastic_sample(40, seed=40)
    events = [f"ev-{i:03d}" for i in range(40)]
    path = write_vertex_csv(VertexSample(events, true, fitted, sigma), tmp_path / "v.csv",
                            comment="invented round-trip sample\nsecond comment line")
    text = (tmp_path / "v.csv").read_text()
    assert text.startswith("# invented round-trip sample\n# second comment line\n")
    back = read_vertex_csv(path)
    assert back.events == events
    np.testing.assert_array_equal(back.true, true)      # repr() floats round-trip exactly
    np.testing.assert_array_equal(back.fitted, fitted)
    np.testing.assert_array_equal(back.sigma, sigma)
    a = validate_reconstruction(back)
    b = validate_reconstruction(true, fitted, sigma)
    np.testing.assert_array_equal(a.resolution, b.resolution)
    assert a.coverage_3d == b.coverage_3d and a.events == events


def test_csv_without_sigma_any_column_order_comments_and_blanks(tmp_path):
    p = tmp_path / "v.csv"
    p.write_text("# invented\n\n  # indented comment\n"
                 "z_fit, y_fit, x_fit, event, x_true, y_true, z_true\n"
                 "-101, 2, 1, a, 0, 0, -100\n"
                 "# between rows\n"
                 "-99, -2, -1, b, 0, 0, -100\n")
    s = read_vertex_csv(str(p))
    assert s.sigma is None and s.events == ["a", "b"]
    np.testing.assert_array_equal(s.fitted, [[1, 2, -101], [-1, -2, -99]])
    np.testing.assert_array_equal(validate_reconstruction(s).bias, [0.0, 0.0, 0.0])


def test_csv_unknown_column_names_file_and_column(tmp_path):
    p = tmp_path / "extra.csv"
    p.write_text(HEADER + ",energy\na,0,0,0,1,1,1,5\n")
    with pytest.raises(ValueError, match=r"extra\.csv.*line 1.*unknown column 'energy'"):
        read_vertex_csv(p)


def test_csv_bad_number_names_file_line_and_column(tmp_path):
    p = tmp_path / "bad.csv"
    p.write_text("# invented\n" + HEADER + "\na,0,0,0,1,1,1\nb,0,0,zero,1,1,1\n")
    with pytest.raises(ValueError, match=r"bad\.csv, line 4, column 'z_true'.*'zero'"):
        read_vertex_csv(p)


def test_csv_nan_value_rejected(tmp_path):
    p = tmp_path / "nan.csv"
    p.write_text(HEADER + ",sigma_x,sigma_y,sigma_z\na,0,0,0,1,1,1,1,1,nan\n")
    with pytest.raises(ValueError, match=r"nan\.csv, line 2, column 'sigma_z'"):
        read_vertex_csv(p)


@pytest.mark.parametrize("content, pattern", [
    ("# only comments\n", "no header"),
    (HEADER + "\n", "no events"),
    ("event,x_true,y_true,z_true,x_fit,y_fit\n", "missing column.*z_fit"),
    (HEADER + ",x_fit\n", "'x_fit' appears twice"),
    (HEADER + ",sigma_x\n", "all three or none"),
    (HEADER + "\na,0,0,0,1,1\n", "line 2: expected 7 fields"),
    (HEADER + ",sigma_x,sigma_y,sigma_z\na,0,0,0,1,1,1,1,0,1\n",
     "line 2, column 'sigma_y'.*> 0"),
    (HEADER + "\n,0,0,0,1,1,1\n", "line 2, column 'event'"),
])
def test_csv_other_errors(tmp_path, content, pattern):
    p = tmp_path / "f.csv"
    p.write_text(content)
    with pytest.raises(ValueError, match=pattern):
        read_vertex_csv(p)


def test_csv_repeated_event_warns(tmp_path):
    p = tmp_path / "rep.csv"
    p.write_text(HEADER + "\na,0,0,0,1,1,1\na,0,0,0,2,2,2\n")
    with pytest.warns(FirnrayWarning, match="line 3.*'a' repeats"):
        s = read_vertex_csv(p)
    assert len(s) == 2


def test_demo_csv_is_invented_and_plausible():
    import os
    path = os.path.join(os.path.dirname(rec.__file__), os.pardir, "data", "examples",
                        "demo-vertex-fits.csv")
    with open(path, encoding="utf-8") as fh:
        assert "invented" in fh.readline().lower()
    s = read_vertex_csv(path)
    assert 40 <= len(s) <= 60 and s.sigma is not None
    horizontal = np.hypot(*(s.true[:, :2] - STATION[:2]).T)
    assert np.all(horizontal < 300.0) and np.all(s.true[:, 2] < 0.0)
    report = validate_reconstruction(s)
    assert np.all((report.resolution > 0.5) & (report.resolution < 10.0))  # "a few metres"
    # 50 events: coverage within 3 binomial standard errors (0.066 each) of 0.6827
    np.testing.assert_allclose(report.coverage, GAUSS_1SIGMA, atol=3 * report.coverage_error)


# ---------------------------------------------------------------------------
# plots
# ---------------------------------------------------------------------------

def test_plots_return_axes_and_write_png(tmp_path):
    true, fitted, sigma = heteroscedastic_sample(500, seed=50)
    report = validate_reconstruction(true, fitted, sigma)
    fig, (ax1, ax2, ax3) = plt.subplots(1, 3, figsize=(15, 4))
    assert plots.plot_vertex_residuals(report, ax=ax1) is ax1
    assert len(ax1.patches) == 3 and len(ax1.get_legend().get_texts()) == 3
    assert plots.plot_pulls(report, ax=ax2) is ax2
    assert len(ax2.lines) == 1  # the unit Gaussian
    rng = np.random.default_rng(51)
    ids = ["A1-top", "A1-bot", "B1-top", "S1"]
    res = [rng.normal(0.0, 1.5, 30), rng.normal(0.5, 1.0, 25), np.array([np.nan, 0.2]),
           np.array([])]
    assert plots.plot_timing_residuals(ids, res, ax=ax3) is ax3
    assert [t.get_text() for t in ax3.get_xticklabels()] == ids
    fig.savefig(tmp_path / "reco.png")
    assert (tmp_path / "reco.png").read_bytes()[:8] == PNG
    plt.close("all")


def test_plots_make_their_own_figure(tmp_path):
    true, fitted, sigma = heteroscedastic_sample(100, seed=52)
    report = validate_reconstruction(true, fitted, sigma)
    for i, ax in enumerate([plots.plot_vertex_residuals(report), plots.plot_pulls(report),
                            plots.plot_timing_residuals(["a", "b"], [[1.0, -1.0], [0.5]])]):
        assert ax is not None
        ax.figure.savefig(tmp_path / f"p{i}.png")
        assert (tmp_path / f"p{i}.png").read_bytes()[:8] == PNG
    plt.close("all")


def test_plot_input_errors():
    true, fitted = gaussian_sample(50, seed=53)
    with pytest.raises(ValueError, match="report must be .*sigma"):
        plots.plot_pulls(validate_reconstruction(true, fitted))
    with pytest.raises(ValueError, match="residuals_ns must hold one array per antenna"):
        plots.plot_timing_residuals(["a", "b"], [[1.0]])
    with pytest.raises(ValueError, match="bins"):
        plots.plot_vertex_residuals(validate_reconstruction(true, fitted), bins=0)
    plt.close("all")
