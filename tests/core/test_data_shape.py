"""The data's own shape and dependence, checked against scipy.stats, direct simulation and an integral equation."""

import math

import numpy as np
import pytest
from scipy import signal, stats

from sheettool.core.data_shape import (
    ar1_arl,
    data_shape_report,
    dependence_check,
    lag1_autocorrelation,
    shape_check,
)
from sheettool.core.shape_scheme import johnson_draws as _johnson_draws

KNOWN_ARL = 1.0 / (2.0 * stats.norm.sf(3.0))  # 370.4 for 3-sigma limits (common practice)


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_normal_readings_keep_the_normal_figure(seed):
    # Normal readings: the normal family wins on BIC (or a near-normal fit), ratio within 30%, no warning.
    rng = np.random.default_rng(seed)
    for values, n in ((rng.normal(25.0, 0.02, (25, 5)), 5), (rng.normal(25.0, 0.02, 100), 1)):
        check = shape_check(values, n, simulations=200_000)
        assert abs(check.ratio - 1.0) < 0.3
        assert not check.warnings


def test_strongly_lognormal_readings_are_warned():
    # Lognormal readings (log-sd 0.6): the beyond-3-sigma probability of the lognormal itself (scipy.stats) is far
    # above the normal 0.0027, and the check warns.
    rng = np.random.default_rng(8)
    for values, n in ((np.exp(rng.normal(0.0, 0.6, (25, 5))), 5), (np.exp(rng.normal(0.0, 0.6, 125)), 1)):
        check = shape_check(values, n, simulations=200_000)
        assert check.family != "normal"
        assert abs(check.ratio - 1.0) > 0.3
        assert check.warnings and "not normal" in check.warnings[0]
    true = stats.lognorm(0.6)
    m, s = true.mean(), true.std()
    assert 1.0 / (true.sf(m + 3 * s) + true.cdf(m - 3 * s)) < 0.7 * KNOWN_ARL


@pytest.mark.parametrize(("readings", "seed"), [(3000, 30), (100_000, 31)])
def test_individuals_arl_under_a_large_lognormal_sample_matches_the_lognormal(readings, seed):
    # Lognormal readings: the fitted shape's ARL for individuals is within 15% of the lognormal's own
    # (scipy.stats.lognorm, limits at its mean +/- 3 standard deviations); 100,000 readings are fitted on
    # 20,000 evenly spaced order statistics and must land as close.
    rng = np.random.default_rng(seed)
    check = shape_check(np.exp(rng.normal(0.0, 0.5, readings)), 1)
    true = stats.lognorm(0.5)
    m, s = true.mean(), true.std()
    assert check.arl_shape == pytest.approx(1.0 / (true.sf(m + 3 * s) + true.cdf(m - 3 * s)), rel=0.15)


def test_subgroup_means_arl_under_a_large_lognormal_sample_matches_direct_simulation():
    # Means of 5 lognormal readings simulated directly from the true lognormal (numpy reference, 2,000,000 means,
    # standard error about 2%); the fitted shape's figure within 15%.
    rng = np.random.default_rng(31)
    check = shape_check(np.exp(rng.normal(0.0, 0.5, 3000)), 5, simulations=500_000)
    true = stats.lognorm(0.5)
    means = np.exp(rng.normal(0.0, 0.5, (2_000_000, 5))).mean(axis=1)
    p = np.mean(np.abs(means - true.mean()) > 3 * true.std() / math.sqrt(5))
    assert check.arl_shape == pytest.approx(1.0 / p, rel=0.15)


@pytest.mark.parametrize(("name", "family", "params"), [
    ("Johnson SU", stats.johnsonsu, (-1.5, 1.8, 2.0, 0.7)),
    ("Johnson SB", stats.johnsonsb, (0.6, 1.1, -0.5, 3.0)),
])
def test_johnson_transforms_match_scipy(name, family, params):
    # The draws used for subgroup means follow scipy.stats' parametrization: quantiles within 1%.
    z = np.random.default_rng(4).standard_normal(400_000)
    draws = _johnson_draws(name, params, z)
    q = np.array([0.01, 0.1, 0.5, 0.9, 0.99])
    assert np.quantile(draws, q) == pytest.approx(family.ppf(q, *params), rel=0.01, abs=1e-3)


def test_lag1_autocorrelation_of_an_alternating_series():
    # x_t = (-1)^t of length N has mean 0 and r1 = -(N - 1) / N with the Box and Jenkins (1976) estimator.
    x = np.array([(-1.0) ** t for t in range(40)])
    assert lag1_autocorrelation(x) == pytest.approx(-39 / 40, abs=1e-12)


def _ar1_arl_by_integral_equation(phi: float, h: float, nodes: int = 200) -> float:
    """ARL of |X_t| > h for a stationary AR(1), unit marginal variance, from the run-length integral equation.

    L(x) = 1 + integral_{-h}^{h} L(y) f(y | x) dy with f the N(phi x, 1 - phi^2) density, solved by Nystrom on
    Gauss-Legendre nodes (as Crowder 1987 for the EWMA); the first point follows X_0 ~ N(0, 1).
    """
    t, w = np.polynomial.legendre.leggauss(nodes)
    y, wy = h * t, h * w
    sd = math.sqrt(1.0 - phi * phi)
    kernel = stats.norm.pdf(y[None, :], loc=phi * y[:, None], scale=sd) * wy[None, :]
    inner = np.linalg.solve(np.eye(nodes) - kernel, np.ones(nodes))  # L at the nodes
    # From X_0 ~ N(0, 1): L(X_0) = 1 + integral L(y) f(y | X_0) dy, and X_1 ~ N(0, 1) marginally.
    return float(1.0 + (stats.norm.pdf(y) * wy) @ inner)


@pytest.mark.parametrize(("phi", "h"), [(0.7, 3.0 * math.sqrt(0.3)), (0.5, 3.0), (-0.4, 3.0 * math.sqrt(1.4))])
def test_ar1_simulation_matches_the_integral_equation(phi, h):
    arl, se, censored = ar1_arl(phi, h, paths=5_000)
    assert not censored
    assert arl == pytest.approx(_ar1_arl_by_integral_equation(phi, h), abs=4 * se)


def test_ar1_with_no_dependence_gives_the_shewhart_figure():
    # phi = 0: independent points, ARL 370.4 (common practice), within four simulation standard errors.
    arl, se, _ = ar1_arl(0.0, 3.0, paths=5_000)
    assert arl == pytest.approx(KNOWN_ARL, abs=4 * se)


def test_autocorrelated_individuals_are_flagged():
    # AR(1) with phi = 0.7: r1 near 0.7, flagged beyond 2/sqrt(N) (Box and Jenkins 1976), and with moving-range
    # limits the in-control ARL is far below 370.4.
    rng = np.random.default_rng(70)
    x = signal.lfilter([1.0], [1.0, -0.7], rng.standard_normal(200))
    check = dependence_check(x, "moving-range")
    assert check.r1 == pytest.approx(0.7, abs=0.12)
    assert check.significant and check.warnings
    assert check.arl_ar1 < 0.2 * KNOWN_ARL
    assert check.half_width == pytest.approx(3.0 * math.sqrt(1.0 - check.phi))


@pytest.mark.parametrize("seed", [11, 12, 13])
def test_independent_points_are_not_flagged(seed):
    # Independent normal points: |r1| stays within 2/sqrt(N) (a 5% chance each otherwise; seeds fixed), no warning,
    # and with marginal limits the ARL is near 370.4.
    x = np.random.default_rng(seed).standard_normal(150)
    check = dependence_check(x, "marginal")
    assert not check.significant and not check.warnings
    assert check.arl_ar1 == pytest.approx(KNOWN_ARL, rel=0.2)


@pytest.mark.parametrize(("call", "word"), [
    (lambda: shape_check(np.ones(30)), "values"),
    (lambda: shape_check(np.arange(10.0)), "values"),
    (lambda: shape_check(np.arange(30.0), subgroup_size=0), "subgroup_size"),
    (lambda: dependence_check(np.arange(30.0), "range"), "limits_sigma"),
    (lambda: ar1_arl(1.0, 3.0), "phi"),
])
def test_bad_input_is_named(call, word):
    with pytest.raises(ValueError, match=word):
        call()


def test_report_collects_both_checks_for_subgroups():
    # A drifting process of subgroups of 5 (AR(1) means, phi 0.8) with normal readings: the dependence is flagged on
    # the subgroup means beyond 2/sqrt(N) (Box and Jenkins 1976), with limits from the means' own sigma.
    rng = np.random.default_rng(5)
    level = signal.lfilter([1.0], [1.0, -0.8], rng.standard_normal(60))
    report = data_shape_report(level[:, None] + rng.standard_normal((60, 5)), 5)
    assert report.dependence.limits_sigma == "marginal" and report.dependence.points == 60
    assert report.dependence.significant
    assert report.warnings == report.shape.warnings + report.dependence.warnings
