"""Estimated limits judged for the whole scheme (rules and spread chart), against the 3-sigma closed form and a
simulation of the whole scheme with limits estimated from simulated base periods."""

import numpy as np
import pytest
from scipy import stats

from sheettool.core import scheme_limits
from sheettool.core.estimated_limits import carl_distribution
from sheettool.core.rules import parse_rules
from sheettool.core.runlength.scheme import Scheme
from sheettool.core.scheme_limits import scheme_estimated_limits
from sheettool.core.sigma import SigmaMethod

D2, D3 = 2.3259, 0.8641  # n = 5 (Harter 1960 tables; recalled from memory)


def test_the_grid_reproduces_the_three_sigma_closed_form():
    # X-bar alone with 3-sigma limits: the grid used for whole schemes against the closed form of
    # core/estimated_limits (checked there against Jensen et al. 2006): mean, 10th and 50th percentiles
    grid = scheme_limits._grid(tuple(parse_rules("beyond-limits")), None, 5, SigmaMethod.RANGE, 29, 3.0)
    exact = carl_distribution(29, 5, "range")
    assert grid.moment(1) == pytest.approx(exact.mean, rel=1e-4)
    assert grid.quantile(0.1) == pytest.approx(exact.p10, rel=1e-3)
    assert grid.quantile(0.5) == pytest.approx(exact.p50, rel=1e-3)


def test_known_parameters_give_the_schemes_own_arl():
    # X-bar and R, n = 5, 3-sigma: a point signals when the mean is beyond 3 sigma or the range beyond (d2 + 3 d3)
    # sigma, independently (common practice): known ARL = 1 / (1 - (1 - p_mean)(1 - p_range)), about 137; the R
    # chart's tail by simulation of 2 million ranges (seeded), an independent computation.
    report = scheme_estimated_limits(Scheme("xbar-r", rules=tuple(parse_rules("beyond-limits")), n=5), 29, "range",
                                     target=133.3, tolerance=0.1)
    ranges = np.ptp(np.random.default_rng(1).standard_normal((2_000_000, 5)), axis=1)
    p_range = np.mean(ranges > D2 + 3 * D3)
    p_mean = 2 * stats.norm.sf(3.0)
    assert report.distribution.known_arl == pytest.approx(1 / (1 - (1 - p_mean) * (1 - p_range)), rel=0.02)
    assert "R chart" in report.scheme and "R chart" in report.method
    # the scheme's own figures are far below those of X-bar alone (318 at the median for these 29 subgroups)
    assert report.distribution.p50 < 0.5 * carl_distribution(29, 5, "range").p50


def _simulated_mean_run_length(runs: int, m: int, seed: int) -> tuple[float, float]:
    """Average run length of X-bar (zones rules) with its R chart, limits from a fresh base period each run.

    Written independently of the engine: base periods of m subgroups of 5, mu_hat the grand mean, sigma_hat R-bar / d2;
    then subgroups until a signal: a mean beyond 3 estimated standard errors, 2 of 3 beyond 2 on one side, 4 of 5
    beyond 1 on one side, 8 in a row on one side, or a range above R-bar (1 + 3 d3 / d2). Horizon 3000 points."""
    rng = np.random.default_rng(seed)
    base = rng.standard_normal((runs, m, 5))
    mu = base.mean(axis=(1, 2))
    rbar = np.ptp(base, axis=2).mean(axis=1)
    se = rbar / D2 / np.sqrt(5)
    horizon = 3000
    first = np.full(runs, horizon, dtype=float)
    for chunk in range(0, runs, 250):
        rows = slice(chunk, min(chunk + 250, runs))
        x = rng.standard_normal((first[rows].size, horizon, 5))
        z = (x.mean(axis=2) - mu[rows, None]) / se[rows, None]
        hit = (np.abs(z) > 3) | (np.ptp(x, axis=2) > rbar[rows, None] * (1 + 3 * D3 / D2))
        for sign in (1, -1):
            for k, w, level in ((2, 3, 2.0), (4, 5, 1.0), (8, 8, 0.0)):
                flag = sign * z > level
                c = np.cumsum(flag, axis=1)
                count = c - np.concatenate([np.zeros((c.shape[0], w)), c[:, :-w]], axis=1)
                hit |= count >= k
        done = hit.any(axis=1)
        first[rows] = np.where(done, np.argmax(hit, axis=1) + 1, horizon)
    return float(first.mean()), float(first.std(ddof=1) / np.sqrt(runs))


@pytest.mark.slow
def test_whole_scheme_average_matches_a_simulation_with_estimated_limits():
    # The unconditional in-control ARL E[CARL] of the whole scheme (X-bar with zones rules and the R chart, limits
    # from 29 subgroups of 5) against the simulated average run length, within 4 standard errors.
    report = scheme_estimated_limits(Scheme("xbar-r", rules=tuple(parse_rules("zones")), n=5), 29, "range",
                                     target=133.3, tolerance=0.1)
    mean, se = _simulated_mean_run_length(3000, 29, seed=13)
    assert report.distribution.mean == pytest.approx(mean, abs=4 * se)
    assert report.distribution.p10 < report.distribution.p50 < report.distribution.known_arl
    # the adjusted factor gives the exceedance wanted: P(CARL >= floor) = 0.9 at that factor
    grid = scheme_limits._grid(tuple(parse_rules("zones")), "range", 5, SigmaMethod.RANGE, 29,
                               round(report.adjusted.factor, 6))
    assert 1 - grid.below(report.floor) == pytest.approx(0.9, abs=2e-3)


def test_a_target_no_factor_can_reach_still_gives_the_distribution():
    # Eight points in a row on one side of the center line: for a fair coin the expected wait for a run of 8 alike is
    # 2^8 - 1 = 255 points (Feller 1968, success runs; tests/reference/published-values.md), whatever the limit
    # factor, so a scheme holding that rule can never reach an in-control ARL of 333; the distribution is still
    # reported and the factor is left out (NaN).
    scheme = Scheme("individuals", rules=tuple(parse_rules("zones")), n=1)
    report = scheme_estimated_limits(scheme, 25, "moving-range", target=333.4)
    assert report.distribution.known_arl < 2**8 - 1
    assert np.isnan(report.adjusted.factor)
    assert 0 < report.distribution.p10 < report.distribution.p50 < 2**8 - 1
    assert "no limit factor up to 8" in report.sentence and "known mean and sigma" in report.sentence
