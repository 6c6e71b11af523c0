"""The cost of estimated limits, checked by simulation of base periods and by the known-parameter limit."""

import math

import numpy as np
import pytest
from scipy import stats

from sheettool.core.constants import c4, d2
from sheettool.core.estimated_limits import (
    adjusted_factor,
    carl_distribution,
    estimated_limits_report,
    exceedance,
    subgroups_needed,
)
from sheettool.core.sigma import sigma_estimator

KNOWN_ARL = 1.0 / (2.0 * stats.norm.sf(3.0))  # 370.4 for 3-sigma limits (common practice)


def _c4_any(k: int) -> float:
    """c4 for any sample size k (gamma-function form, as sheettool.core.constants for k <= 100)."""
    return math.sqrt(2.0 / (k - 1)) * math.exp(math.lgamma(k / 2) - math.lgamma((k - 1) / 2))


def simulated_carl(m: int, n: int, sigma_method: str, samples: int, seed: int, L: float = 3.0) -> np.ndarray:
    """CARL of `samples` simulated base periods of m subgroups of n from N(0, 1), limits set as a chart sets them."""
    rng = np.random.default_rng(seed)
    if n == 1:
        x = rng.standard_normal((samples, m))
        mu = x.mean(axis=1)
        sigma = np.abs(np.diff(x, axis=1)).mean(axis=1) / d2(2)
    else:
        x = rng.standard_normal((samples, m, n))
        mu = x.mean(axis=(1, 2))
        if sigma_method == "range":
            sigma = np.ptp(x, axis=2).mean(axis=1) / d2(n)
        elif sigma_method == "s-bar":
            sigma = x.std(axis=2, ddof=1).mean(axis=1) / c4(n)
        else:
            sigma = np.sqrt(x.var(axis=2, ddof=1).mean(axis=1)) / _c4_any(m * (n - 1) + 1)
    a = mu * math.sqrt(n)  # center offset in standard errors of a plotted point
    p = stats.norm.sf(L * sigma - a) + stats.norm.sf(L * sigma + a)
    return 1.0 / p


@pytest.mark.parametrize("sigma_method", ["range", "s-bar", "pooled"])
def test_xbar_carl_distribution_matches_simulation(sigma_method):
    # 20,000 simulated base periods of 25 subgroups of 5 (numpy reference). The simulation's own standard error
    # is about 1% for the mean and 1-2% for the percentiles, the chi approximation adds under 1%: within 4%.
    carl = simulated_carl(25, 5, sigma_method, 20_000, seed=25)
    dist = carl_distribution(25, 5, sigma_method)
    assert dist.mean == pytest.approx(carl.mean(), rel=0.04)
    assert dist.sd == pytest.approx(carl.std(), rel=0.08)
    assert dist.p10 == pytest.approx(np.percentile(carl, 10), rel=0.04)
    assert dist.p50 == pytest.approx(np.percentile(carl, 50), rel=0.04)


def test_individuals_carl_distribution_matches_simulation():
    # 20,000 simulated base periods of 100 individuals, sigma from the moving ranges (numpy reference).
    carl = simulated_carl(100, 1, "moving-range", 20_000, seed=100)
    dist = carl_distribution(100, 1, "moving-range")
    assert dist.mean == pytest.approx(carl.mean(), rel=0.05)
    assert dist.p10 == pytest.approx(np.percentile(carl, 10), rel=0.04)
    assert dist.p50 == pytest.approx(np.percentile(carl, 50), rel=0.04)


def test_individuals_from_25_points_have_an_unbounded_mean_but_matching_percentiles():
    # With 24 moving ranges the zig-zag base period (alternating differences) makes sigma_hat's upper tail too
    # heavy for E[1/p] to exist; the simulated mean is then dominated by a few base periods while the
    # percentiles stay stable (numpy reference).
    carl = simulated_carl(25, 1, "moving-range", 20_000, seed=24)
    dist = carl_distribution(25, 1, "moving-range")
    assert math.isinf(dist.mean) and dist.notes
    assert carl.max() > 50 * np.median(carl)
    assert dist.p10 == pytest.approx(np.percentile(carl, 10), rel=0.05)
    assert dist.p50 == pytest.approx(np.percentile(carl, 50), rel=0.05)


def test_pooled_sigma_distribution_is_the_exact_chi_square():
    # pooled variance * m(n-1) ~ chi-square with m(n-1) degrees of freedom (common practice; scipy.stats.chi2).
    est = sigma_estimator(25, 5, "pooled")
    w = np.array([0.9, 1.0, 1.1])
    nu = 100
    expected = stats.chi2.cdf(nu * (w * _c4_any(nu + 1)) ** 2, nu)
    assert est.exact
    assert est.cdf(w) == pytest.approx(expected, abs=1e-12)


@pytest.mark.parametrize(("m", "n", "sigma_method", "rel"),
                         [(25, 5, "range", 0.01), (10, 3, "s-bar", 0.01), (25, 1, "moving-range", 0.03)])
def test_sigma_estimators_have_the_simulated_mean_variance_and_quantiles(m, n, sigma_method, rel):
    # 200,000 simulated base periods (numpy reference): the scaled chi carries the exact mean 1 and variance of
    # sigma_hat (for moving ranges including their neighbour covariance), within the simulation's 1% on the variance;
    # its quantiles (the approximate part, Patnaik 1950) within 1%, or 3% for the correlated moving ranges, whose
    # sum is less chi-like in its tails.
    rng = np.random.default_rng(m * n)
    if n == 1:
        w = np.abs(np.diff(rng.standard_normal((200_000, m)), axis=1)).mean(axis=1) / d2(2)
    elif sigma_method == "range":
        w = np.ptp(rng.standard_normal((200_000, m, n)), axis=2).mean(axis=1) / d2(n)
    else:
        w = rng.standard_normal((200_000, m, n)).std(axis=2, ddof=1).mean(axis=1) / c4(n)
    est = sigma_estimator(m, n, sigma_method)
    model = stats.chi(est.nu, scale=est.scale / math.sqrt(est.nu))
    assert model.mean() == pytest.approx(1.0, abs=1e-9)
    assert model.var() == pytest.approx(w.var(), rel=0.02)
    for q in (0.01, 0.1, 0.5, 0.9, 0.99):
        assert est.ppf(q) == pytest.approx(np.quantile(w, q), rel=rel)


def test_estimated_limits_cost_is_the_known_fact_for_25_subgroups_of_5():
    # Jensen et al. (2006) review, after Quesenberry (1993) and Chen (1997) (recalled from memory, qualitative): with
    # limits from 25 subgroups of 5 the average in-control ARL is above the known-parameter 370.4, while the
    # conditional ARL is widely spread, a tenth of the base periods giving well under 370.
    dist = carl_distribution(25, 5, "range")
    assert dist.mean > KNOWN_ARL
    assert dist.p10 < 0.5 * KNOWN_ARL
    assert dist.p50 < KNOWN_ARL < dist.p50 + dist.sd


def test_many_subgroups_recover_the_known_parameter_arl_and_factor():
    # As m grows the estimates converge: CARL -> 370.4 and the adjusted factor -> 3 (common practice), the
    # spread shrinking like 1 / sqrt(m) (the estimators' standard errors do), so four times the subgroups halve it.
    dist = carl_distribution(1_000_000, 5, "range")
    assert dist.mean == pytest.approx(KNOWN_ARL, rel=1e-3)
    assert dist.p50 == pytest.approx(KNOWN_ARL, rel=1e-3)
    assert dist.p10 == pytest.approx(KNOWN_ARL, rel=6e-3)
    assert adjusted_factor(1_000_000, 5, "range").factor == pytest.approx(3.0, abs=2e-3)
    gap = [KNOWN_ARL - carl_distribution(m, 5, "range").p10 for m in (10_000, 40_000)]
    assert gap[1] / gap[0] == pytest.approx(0.5, abs=0.05)


@pytest.mark.parametrize(("m", "n", "sigma_method"), [(25, 5, "range"), (50, 1, "moving-range")])
def test_adjusted_factor_meets_the_criterion_in_simulation(m, n, sigma_method):
    # Limits at the adjusted factor: 90% of 20,000 simulated base periods give CARL >= 370.4 (exceedance criterion of
    # Goedhart, Schoonhoven and Does 2017). Binomial standard error 0.002; the approximation adds about 0.005.
    factor = adjusted_factor(m, n, sigma_method, target=KNOWN_ARL, exceed=0.9).factor
    carl = simulated_carl(m, n, sigma_method, 20_000, seed=m + n, L=factor)
    assert np.mean(carl >= KNOWN_ARL) == pytest.approx(0.9, abs=0.012)
    assert factor > 3.0


def test_subgroups_needed_meets_the_criterion_at_the_fewest_subgroups():
    # With a 20% tolerance (Goedhart, Schoonhoven and Does 2017: in-control ARL at least 0.8 x 370.4 with 90%
    # probability) the search returns the first m meeting it; checked against 4,000 simulated base periods.
    needed = subgroups_needed(5, "range", tolerance=0.2)
    m = needed.subgroups
    assert m is not None and needed.reachable
    floor = 0.8 * KNOWN_ARL
    assert exceedance(floor, m, 5, "range") >= 0.9 > exceedance(floor, m - 1, 5, "range")
    carl = simulated_carl(m, 5, "range", 4_000, seed=7)
    assert np.mean(carl >= floor) == pytest.approx(0.9, abs=0.015)


def test_no_number_of_subgroups_reaches_the_known_parameter_arl_itself():
    # 3-sigma limits give 370.398 at best (common practice), so 90% sure of 370.4 cannot be reached by adding data.
    needed = subgroups_needed(5, "range", target=370.4)
    assert not needed.reachable and needed.subgroups is None


def test_report_sentence_carries_the_figures():
    report = estimated_limits_report(25, 5, "range", tolerance=0.1)
    assert report.low_arl == pytest.approx(report.distribution.p10, rel=1e-6)
    assert f"fewer than {report.distribution.p10:.0f}" in report.sentence
    assert f"{report.needed.subgroups} subgroups" in report.sentence
    assert f"{report.adjusted.factor:.2f}" in report.sentence
    assert "one set of limits in ten" in report.sentence
    assert report.probability_meeting < 0.9


@pytest.mark.parametrize(("kwargs", "word"), [
    (dict(m=25, n=5, sigma_method="median"), "sigma_method"),
    (dict(m=1, n=5, sigma_method="range"), "m "),
    (dict(m=25, n=1, sigma_method="range"), "n "),
    (dict(m=25, n=5, sigma_method="moving-range"), "n must be 1"),
    (dict(m=25, n=5, sigma_method="range", exceed=1.0), "exceed"),
    (dict(m=25, n=5, sigma_method="range", target=0.5), "target"),
])
def test_bad_parameters_are_named(kwargs, word):
    with pytest.raises(ValueError, match=word):
        estimated_limits_report(**kwargs)


def test_the_moving_range_models_stated_error_holds():
    # The method notes say the scaled-chi model of MR-bar puts the median CARL about 2% too high from 50 points and
    # the 10th percentile about 1% too low: checked against 100,000 simulated base periods (numpy reference; the
    # simulation's own standard error is about 0.4% on the median).
    carl = simulated_carl(50, 1, "moving-range", 100_000, seed=50)
    dist = carl_distribution(50, 1, "moving-range")
    assert 0.005 < dist.p50 / np.median(carl) - 1 < 0.035
    assert -0.03 < dist.p10 / np.percentile(carl, 10) - 1 < 0.005
    assert "2% from 50" in dist.method
